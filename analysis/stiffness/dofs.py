"""The unknowns of a frame under an idealisation: numbering, supports, constraints.

Shared by the solver and the indeterminacy count, so the count always equals
the number of unknowns the solver solves for.

Unknowns ``x`` are (1) the free joint components (3 per joint in a plane
analysis, 6 in space) less those no member end, spring or support attaches
to (the rotation of a joint where every member is hinged, or of a truss
joint), and (2) one own rotation per rotational end release (My, Mz) of a
frame member, unless such rotations are condensed out. Exact constraints
``C x + C_r u_r = 0`` (axially rigid members, rigid bodies, diaphragms) are
eliminated: ``x = T q + x0`` with ``q`` the independent unknowns. The
elimination is done per connected group of constraints with a rank-revealing
QR factorisation (column pivoting), on columns where rotations are scaled by
the model's size so the rank tolerance is geometric.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ..errors import ModelError
from ..model import DOF_NAMES, AnalysisOptions, Diaphragm, Frame, RigidBody, member_axes

__all__ = ["DofSystem", "ConstraintRow", "build_dofs", "plane_of", "in_plane_problem", "axially_rigid"]

log = logging.getLogger(__name__)

RANK_TOL = 1e-9


@dataclass(frozen=True, slots=True)
class ConstraintRow:
    """One exact constraint equation, with who imposes it, in words."""

    kind: str  # 'axial', 'rigid body', 'diaphragm', 'support' (inclined), 'unattached'
    owner: str  # member id or group name
    label: str  # "axial constraint of member B3"
    nodes: tuple[int, ...]


@dataclass
class DofSystem:
    """Numbering of unknowns and the constraint elimination (see module docstring)."""

    frame: Frame
    options: AnalysisOptions
    plane_axis: int | None  # normal of the analysis plane (0, 1, 2) or None in space
    active: tuple[int, ...]  # global components analysed per joint
    node_dof: np.ndarray  # (n,6) index into x, -1 when not an unknown
    hinge_dof: np.ndarray  # (m,2,6) index into x of own end rotations, -1 none
    condensed: np.ndarray  # (m,2,6) bool, released end actions condensed in the element
    auto_released: np.ndarray  # (m,2,6) bool, rotations condensed at pinned ends (option)
    restrained: np.ndarray  # (n,6) bool, active restrained components
    unattached: list[tuple[int, int]]  # (node, comp) rotations nothing attaches to
    skew_unattached: list  # (node, unit vector) joint rotation directions nothing attaches to, not along an axis
    n_x: int
    C: sp.csr_array  # constraint rows over x
    C_r: sp.csr_array  # constraint rows over restrained components (n*6 columns)
    rows: list[ConstraintRow]
    rank: int
    redundant_rows: list[int]
    T: sp.csr_array  # (n_x, n_q)
    groups: list = field(default_factory=list)  # (row idx, x idx) per connected group of the dense stage
    direct: tuple = ()  # (rows, slaves, pivots, A) of rows eliminated through a column of their own
    slave_rhs: list = field(default_factory=list)  # (slave idx, W (r, rows), row idx) per group
    consistency: list = field(default_factory=list)  # (row idx, Z (k, rows)) redundant combos
    # (n_x,) the constraint row that eliminates each unknown (-1: an independent unknown, a column of T)
    slave_row: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    # (n_x,) joint of each unknown (the member end's joint for own end rotations) and its component
    # (0..5; 6 + slot for an own end rotation)
    x_node: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    x_comp: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    # rows of `rows` that are independent restraints of inclined supports (counted as restraints, not in rank)
    support_rows: list[int] = field(default_factory=list)

    @property
    def n_q(self) -> int:
        return self.T.shape[1]

    @property
    def dof_per_joint(self) -> int:
        return len(self.active)

    @property
    def n_hinges(self) -> int:
        return int((self.hinge_dof >= 0).sum())

    def particular(self, u_r: np.ndarray) -> np.ndarray:
        """x0 ``(n_x, c)`` satisfying the constraints for prescribed support values ``u_r (n*6, c)``."""
        c = u_r.shape[1]
        x0 = np.zeros((self.n_x, c))
        if not (self.slave_rhs or self.consistency) or not np.any(u_r):
            return x0
        rhs = self.C_r @ u_r  # (rows, c)
        for row_idx, Z in self.consistency:
            bad = Z @ rhs[row_idx]
            scale = max(np.abs(rhs).max(), 1e-300)
            if np.abs(bad).max() > 1e-8 * scale:
                labels = ", ".join(self.rows[r].label for r in row_idx[:4])
                raise ModelError(f"prescribed support displacements contradict the rigid constraints ({labels})")
        for slaves, W, row_idx in self.slave_rhs:
            x0[slaves] = W @ rhs[row_idx]
        if self.direct:
            rows1, slaves1, pivots1, A = self.direct
            x0 = A @ x0
            x0[slaves1] -= rhs[rows1] / pivots1[:, None]
        return x0


def plane_of(frame: Frame) -> int | None:
    """The world axis (0, 1, 2) normal to the plane all nodes lie in, or None."""
    if frame.n_nodes == 0:
        return None
    span = np.ptp(frame.nodes, axis=0)
    size = max(float(span.max()), 1.0)
    flat = np.flatnonzero(span <= 1e-9 * size)
    if flat.size == 0:
        return None
    if flat.size == 1:
        return int(flat[0])
    # a line of nodes: the plane holding the member reference vectors (beams along X: XZ)
    axis = int(np.argmax(span))
    return 1 if axis in (0, 2) else 0


def in_plane_problem(frame: Frame) -> int | None:
    """The world axis normal to the frame's plane when geometry and every load lie in that plane.

    Nodes in one world coordinate plane, every force in it and every moment
    about its normal (nodal loads, member loads in global or member axes,
    self-weight, settlements); None otherwise.
    """
    axis = plane_of(frame)
    if axis is None:
        return None
    out_force = np.zeros(3, bool)
    out_force[axis] = True
    out_moment = ~out_force
    R = member_axes(frame) if frame.n_members else np.zeros((0, 3, 3))
    index = frame._member_lookup()
    for case in frame.load_cases:
        if abs(case.self_weight[axis]) > 0:
            return None
        for nload in case.nodal:
            v = np.asarray(nload.values, float)
            if np.any(v[:3][out_force] != 0) or np.any(v[3:][out_moment] != 0):
                return None
        for load in case.member:
            d = np.zeros(3)
            d["xyz".index(load.direction)] = 1.0
            g = d if load.axes == "global" else R[index[load.member]].T @ d
            moment = getattr(load, "moment", False)
            if (abs(g[axis]) > 1e-9) != moment or (moment and np.any(np.abs(g[out_moment]) > 1e-9)):
                return None
        for s in case.settlements:
            c = DOF_NAMES.index(s.dof)
            if (c < 3 and c == axis) or (c >= 3 and c - 3 != axis):
                return None
    return axis


def build_dofs(frame: Frame, options: AnalysisOptions) -> DofSystem:
    """Number the unknowns of ``frame`` and eliminate its exact constraints."""
    n, m = frame.n_nodes, frame.n_members
    plane_axis = None
    if options.plane:
        plane_axis = plane_of(frame)
        if plane_axis is None:
            raise ModelError("plane analysis asked for, but the nodes do not lie in one world coordinate plane (XY, XZ or YZ)")
    active = _active_components(plane_axis)
    act_mask = np.zeros(6, bool)
    act_mask[list(active)] = True

    restrained = frame.restraints & act_mask
    _check_connected_nodes(frame)

    R = member_axes(frame) if m else np.zeros((0, 3, 3))
    # releases: truss members release bending at both ends and torsion at end j
    rel = frame.releases.copy()
    rel[frame.truss, :, 4:6] = True
    rel[frame.truss, 1, 3] = True
    user_rot = frame.releases[:, :, 4:6] & ~frame.truss[:, None, None]
    auto = np.zeros((m, 2, 6), bool)
    if options.condense_pinned:
        auto = _pinned_end_releases(frame, R, rel, restrained, act_mask)
        auto &= ~(frame.end_springs > 0)  # a semi-rigid end is not pinned: its spring ties it to the joint
        rel |= auto
    # a plane analysis only sees in-plane actions: out-of-plane releases are irrelevant
    condensed = rel.copy()
    hinge = np.full((m, 2, 6), -1, dtype=np.int64)
    keep_hinge = np.zeros((m, 2, 6), bool)
    if not options.condense_pinned:
        keep_hinge[:, :, 4:6] = user_rot
    # a semi-rigid end turns on its own against its spring (never condensed: the spring ties it to the joint)
    keep_hinge[:, :, 4:6] |= (frame.end_springs[:, :, 4:6] > 0) & ~frame.truss[:, None, None]
    if plane_axis is not None:
        keep_hinge &= _in_plane_rotation_mask(R, plane_axis)[:, None, :]
    condensed &= ~keep_hinge

    unattached = _unattached_rotations(frame, R, rel, restrained, act_mask)
    node_dof = np.full((n, 6), -1, dtype=np.int64)
    free = np.zeros((n, 6), bool)
    free[:, list(active)] = True
    free &= ~restrained
    for k, c in unattached:
        free[k, c] = False
    node_dof[free] = np.arange(int(free.sum()))
    n_x = int(free.sum())
    hinge[keep_hinge] = n_x + np.arange(int(keep_hinge.sum()))
    n_x += int(keep_hinge.sum())

    skew = _skew_unattached(frame, R, rel, restrained, act_mask, unattached)
    rows, C_full = _constraint_rows(frame, R, options, plane_axis, skew)
    C, C_r = _split_columns(C_full, node_dof, restrained, n_x)
    C, C_r, rows = _drop_empty(C, C_r, rows, C_full)
    scale = _column_scale(frame, node_dof, hinge, n_x)
    x_node, x_comp = _unknown_owners(frame, node_dof, hinge, n_x)
    T, rank, redundant, slave_rhs, consistency, groups, direct, slave_row = _eliminate(C, scale, n_x, x_node, x_comp)
    # rows pinning a skew unattached rotation are reductions, not constraints; the rows of inclined supports
    # that hold something are restraints (`support_rows`)
    rank -= len(skew)
    redundant_set = set(redundant)
    support_rows = [r for r, row in enumerate(rows) if row.kind == "support" and r not in redundant_set]
    rank -= len(support_rows)
    return DofSystem(frame=frame, options=options, plane_axis=plane_axis, active=active, node_dof=node_dof,
                     hinge_dof=hinge, condensed=condensed, auto_released=auto, restrained=restrained,
                     unattached=unattached, skew_unattached=skew, n_x=n_x, C=C, C_r=C_r, rows=rows, rank=rank,
                     redundant_rows=redundant, T=T, groups=groups, slave_rhs=slave_rhs, consistency=consistency,
                     direct=direct, slave_row=slave_row, x_node=x_node, x_comp=x_comp, support_rows=support_rows)


def _unknown_owners(frame: Frame, node_dof: np.ndarray, hinge: np.ndarray, n_x: int):
    """(x_node, x_comp) of every unknown: its joint and component (6 + slot for own end rotations)."""
    x_node = np.full(n_x, -1, dtype=np.int64)
    x_comp = np.full(n_x, -1, dtype=np.int64)
    k, c = np.nonzero(node_dof >= 0)
    x_node[node_dof[k, c]] = k
    x_comp[node_dof[k, c]] = c
    mk, end, slot = np.nonzero(hinge >= 0)
    x_node[hinge[mk, end, slot]] = frame.members[mk, end]
    x_comp[hinge[mk, end, slot]] = 6 + slot
    return x_node, x_comp


#: a component is a candidate for elimination by a constraint when the constraint moves it at least
#: this fraction of the most it moves any candidate (threshold pivoting: bounded growth)
PIVOT_THRESHOLD = 0.5


def _pivot_key(mag: np.ndarray, best: np.ndarray, node: np.ndarray, comp: np.ndarray) -> tuple:
    """Sort keys (last = primary, for `np.lexsort`) of candidate pivots, smaller = chosen first.

    The rule, in words: each independent constraint removes one unknown.
    Of its candidate components (those it moves at least half as much as
    the most; in the direct stage only the components no other constraint
    touches), it removes one of the joint that comes last in the model's
    list of joints; at that joint a translation before a rotation, and the
    component it moves most, ties going to ux, uy, uz (rx, ry, rz) in that
    order. Magnitudes are compared to nine significant digits, so
    round-off never decides. ``indeterminacy.ATTRIBUTION_RULE`` says the
    same for the user.
    """
    q = np.round(mag / np.where(best > 0, best, 1.0) * 1e9)
    return (comp, -q, comp >= 3, -node)


def _candidates(mag: np.ndarray, best: np.ndarray) -> np.ndarray:
    return mag >= PIVOT_THRESHOLD * (1.0 - 1e-6) * best


def _choose_slaves(M: np.ndarray, node: np.ndarray, comp: np.ndarray) -> np.ndarray:
    """Column of each row of ``M`` (independent rows, in order) that the row eliminates.

    Gaussian elimination row by row with threshold pivoting and the choice
    of `_pivot_key`; only the rows below that touch the pivot column are
    updated, so the work follows the coupling of the group.
    """
    W = M.copy()
    rk, nc = W.shape
    chosen = np.empty(rk, dtype=np.int64)
    avail = np.ones(nc, bool)
    for t in range(rk):
        row = W[t]
        mag = np.where(avail, np.abs(row), 0.0)
        best = mag.max()
        cand = np.flatnonzero(_candidates(mag, best) & (mag > 0))
        keys = _pivot_key(mag[cand], np.full(cand.size, best), node[cand], comp[cand])
        c = int(cand[np.lexsort(keys)[0]])
        chosen[t] = c
        avail[c] = False
        below = t + 1 + np.flatnonzero(W[t + 1:, c] != 0.0)
        if below.size:
            W[below] -= np.outer(W[below, c] / row[c], row)
            W[below, c] = 0.0
    return chosen


def axially_rigid(frame: Frame, options: AnalysisOptions) -> np.ndarray:
    """(m,) True for the members held at constant length by an exact constraint.

    A member is axially rigid when its own property says so
    (``Frame.inextensible``), or when ``options.inextensible`` asks for it
    and its own property does not keep it extensible (``Frame.extensible``):
    the option covers every member, pin-jointed truss bars included. A
    member whose axial force is released carries no axial force to make
    rigid, so it never is.
    """
    rigid = frame.inextensible.copy()
    if options.inextensible:
        rigid |= ~frame.extensible
    if frame.n_members:
        rigid &= ~frame.releases[:, :, 0].any(axis=1)
    return rigid


def _active_components(plane_axis: int | None) -> tuple[int, ...]:
    if plane_axis is None:
        return tuple(range(6))
    inplane = [a for a in range(3) if a != plane_axis]
    return (inplane[0], inplane[1], 3 + plane_axis)


def _in_plane_rotation_mask(R: np.ndarray, plane_axis: int) -> np.ndarray:
    """(m,6) True for the member-axis rotation components that turn about the plane normal."""
    mask = np.zeros((R.shape[0], 6), bool)
    mask[:, 3:6] = np.abs(R[:, :, plane_axis]) > 1e-6
    return mask


def _check_connected_nodes(frame: Frame) -> None:
    used = np.zeros(frame.n_nodes, bool)
    used[frame.members.ravel()] = True
    groups: tuple[RigidBody | Diaphragm, ...] = (*frame.rigid_bodies, *frame.diaphragms)
    for group in groups:
        for node in group.nodes:
            used[frame.node_index(node)] = True
    if not used.all():
        k = int(np.argmin(used))
        raise ModelError(f"node {frame.node_labels[k]} is connected to no member")


def _end_rotation_rows(R: np.ndarray, rel: np.ndarray, member: int, end: int) -> list[np.ndarray]:
    """Global directions of joint rotation that a member end is rigidly attached to."""
    return [R[member, a] for a in range(3) if not rel[member, end, 3 + a]]


def _loose_joints(frame, rel):
    """Joints no member end holds in every rotation, outside rigid groups, and the ends at each joint.

    Returns the releases with the torsion of axial bars released at both
    ends (a bar holds no joint rotation), the candidate joints, and
    ``{joint: [(member, end), ...]}``.
    """
    n = frame.n_nodes
    rel = rel.copy()
    rel[frame.truss, :, 3] = True
    full = ~rel[:, :, 3:6].any(axis=2)  # (m,2) ends attached in all three rotations
    held = np.zeros(n, bool)
    np.logical_or.at(held, frame.members[:, 0], full[:, 0])
    np.logical_or.at(held, frame.members[:, 1], full[:, 1])
    for group in (*frame.rigid_bodies, *frame.diaphragms):
        for node in group.nodes:
            held[frame.node_index(node)] = True
    candidates = np.flatnonzero(~held)
    ends_at: dict[int, list[tuple[int, int]]] = {}
    if candidates.size:
        for k, (i, j) in enumerate(frame.members):
            for end, node in ((0, int(i)), (1, int(j))):
                ends_at.setdefault(node, []).append((k, end))
    return rel, candidates, ends_at


def _unattached_rotations(frame, R, rel, restrained, act_mask) -> list[tuple[int, int]]:
    """Joint rotation components with no member end, spring or support attached."""
    rel, candidates, ends_at = _loose_joints(frame, rel)
    out: list[tuple[int, int]] = []
    rot_active = [c for c in range(3, 6) if act_mask[c]]
    for node in candidates:
        dirs = []
        for k, end in ends_at.get(int(node), []):
            dirs += _end_rotation_rows(R, rel, k, end)
        for c in rot_active:
            if restrained[node, c] or frame.springs[node, c] > 0:
                e = np.zeros(3)
                e[c - 3] = 1.0
                dirs.append(e)
        free_c = [c for c in rot_active if not restrained[node, c]]
        if not free_c:
            continue
        D = np.array(dirs).reshape(-1, 3)[:, [c - 3 for c in free_c]]
        if D.shape[0] == 0:
            out += [(int(node), c) for c in free_c]
            continue
        # components whose unit direction is orthogonal to every attached direction
        for idx, c in enumerate(free_c):
            if np.all(np.abs(D[:, idx]) < 1e-9):
                out.append((int(node), c))
    return out


def _pinned_end_releases(frame, R, rel, restrained, act_mask) -> np.ndarray:
    """Rotations to condense at pinned member ends (the ``condense_pinned`` option).

    A joint rotation counts as a pinned end when exactly one member end is
    rigidly attached to it, nothing else (spring, support, other member,
    rigid group) holds it, no load case puts a moment on the joint, and the
    joint is held in translation (a support) or has other, hinged members.
    """
    n, m = frame.n_nodes, frame.n_members
    auto = np.zeros((m, 2, 6), bool)
    full = ~rel[:, :, 3:6].any(axis=2)
    count = np.zeros(n, int)
    np.add.at(count, frame.members[:, 0], full[:, 0])
    np.add.at(count, frame.members[:, 1], full[:, 1])
    degree = np.bincount(frame.members.ravel(), minlength=n)
    moment_loaded = np.zeros(n, bool)
    for case in frame.load_cases:
        for load in case.nodal:
            if np.any(np.asarray(load.values[3:]) != 0):
                moment_loaded[frame.node_index(load.node)] = True
    grouped = np.zeros(n, bool)
    for group in (*frame.rigid_bodies, *frame.diaphragms):
        for node in group.nodes:
            grouped[frame.node_index(node)] = True
    rot = [c for c in range(3, 6) if act_mask[c]]
    held = restrained[:, :3].any(axis=1)
    rot_free = ~(restrained[:, rot] | (frame.springs[:, rot] > 0)).any(axis=1)
    pinned = (count == 1) & rot_free & ~moment_loaded & ~grouped & (held | (degree > 1))
    for k, (i, j) in enumerate(frame.members):
        for end, node in ((0, i), (1, j)):
            if pinned[node] and full[k, end]:
                auto[k, end, 4:6] = True
    return auto


def _skew_unattached(frame, R, rel, restrained, act_mask, axis_aligned) -> list[tuple[int, np.ndarray]]:
    """Joint rotation directions nothing attaches to that do not lie along a world axis.

    At a joint held only by one skew member through torsion (its bending
    released), the free rotation directions are normal to that member.
    """
    if frame.n_members == 0:
        return []
    rot_active = [c for c in range(3, 6) if act_mask[c]]
    if len(rot_active) < 3:  # a plane analysis has one rotation: the axis check is exact
        return []
    rel, candidates, ends_at = _loose_joints(frame, rel)
    if candidates.size == 0:
        return []
    dropped = {(n, c) for n, c in axis_aligned}
    out = []
    for node in candidates:
        free_c = [c for c in rot_active if not restrained[node, c] and (int(node), c) not in dropped]
        if not free_c:
            continue
        dirs = []
        for k, end in ends_at.get(int(node), []):
            dirs += _end_rotation_rows(R, rel, k, end)
        for c in rot_active:
            if restrained[node, c] or frame.springs[node, c] > 0 or (int(node), c) in dropped:
                e = np.zeros(3)
                e[c - 3] = 1.0
                dirs.append(e)
        D = np.array(dirs).reshape(-1, 3)
        if D.shape[0] == 0:
            continue
        null = scipy.linalg.null_space(D, rcond=1e-9)
        for v in null.T:
            out.append((int(node), v / np.linalg.norm(v)))
    return out


def _constraint_rows(frame: Frame, R, options: AnalysisOptions, plane_axis, skew=()):
    """All exact constraint rows over the global components (n*6 columns).

    Rows pinning skew unattached joint rotations (zero-stiffness directions,
    any value is exact) come first.
    """
    n = frame.n_nodes
    data: list[tuple[int, int, float]] = []
    rows: list[ConstraintRow] = []

    def add(coeffs: dict[tuple[int, int], float], row: ConstraintRow) -> None:
        r = len(rows)
        rows.append(row)
        for (node, comp), v in coeffs.items():
            if v != 0.0:
                data.append((r, 6 * node + comp, v))

    for node, vec in skew:
        add({(node, 3 + c): float(vec[c]) for c in range(3)},
            ConstraintRow("unattached", frame.node_ids[node],
                          f"joint {frame.node_labels[node]} turns freely about ({vec[0]:.3f}, {vec[1]:.3f}, {vec[2]:.3f}): "
                          "no member end is attached in that direction", (node,)))

    for sup in frame.inclined_supports:
        node = frame.node_index(sup.node)
        Q = np.asarray(sup.axes, float)
        for c in range(6):
            if sup.restrained[c]:
                base, d = (0, Q[c]) if c < 3 else (3, Q[c - 3])
                add({(node, base + q): float(d[q]) for q in range(3)},
                    ConstraintRow("support", sup.node,
                                  f"inclined support of node {frame.node_labels[node]} holds "
                                  f"{'u' if c < 3 else 'r'}{'xyz'[c % 3]} along its own axis "
                                  f"({d[0]:.3f}, {d[1]:.3f}, {d[2]:.3f})", (node,)))

    def cross_matrix(o):
        return np.array([[0, -o[2], o[1]], [o[2], 0, -o[0]], [-o[1], o[0], 0]])

    axial = axially_rigid(frame, options)
    for k in np.flatnonzero(axial):
        i, j = frame.members[k]
        e = R[k, 0]
        coeffs: dict[tuple[int, int], float] = {}
        for node, sign, o in ((j, 1.0, frame.offsets[k, 1]), (i, -1.0, frame.offsets[k, 0])):
            # e · (u - S(o) θ)
            rot = -(e @ cross_matrix(o))
            for c in range(3):
                coeffs[(int(node), c)] = coeffs.get((int(node), c), 0.0) + sign * e[c]
                coeffs[(int(node), 3 + c)] = coeffs.get((int(node), 3 + c), 0.0) + sign * rot[c]
        add(coeffs, ConstraintRow("axial", frame.member_ids[k], f"axial constraint of member {frame.member_labels[k]}",
                                  (int(i), int(j))))

    for body in frame.rigid_bodies:
        idx = [frame.node_index(x) for x in dict.fromkeys(body.nodes)]
        mnode = idx[0]
        for node in idx[1:]:
            d = frame.nodes[node] - frame.nodes[mnode]
            S = cross_matrix(d)
            for c in range(3):  # u_k - u_m + S(d) θ_m = 0
                coeffs = {(node, c): 1.0, (mnode, c): -1.0}
                for q in range(3):
                    coeffs[(mnode, 3 + q)] = S[c, q]
                add(coeffs, ConstraintRow("rigid body", body.name,
                                          f"rigid body {body.name!r} ties {DOF_NAMES[c]} of node {frame.node_labels[node]} to node {frame.node_labels[mnode]}",
                                          (mnode, node)))
            for c in range(3):
                add({(node, 3 + c): 1.0, (mnode, 3 + c): -1.0},
                    ConstraintRow("rigid body", body.name,
                                  f"rigid body {body.name!r} ties {DOF_NAMES[3 + c]} of node {frame.node_labels[node]} to node {frame.node_labels[mnode]}",
                                  (mnode, node)))

    for dia in frame.diaphragms:
        nvec = np.asarray(dia.normal, float)
        nvec = nvec / np.linalg.norm(nvec)
        t1 = np.cross(nvec, [1.0, 0, 0] if abs(nvec[0]) < 0.9 else [0, 1.0, 0])
        t1 /= np.linalg.norm(t1)
        t2 = np.cross(nvec, t1)
        idx = [frame.node_index(x) for x in dict.fromkeys(dia.nodes)]
        mnode = idx[0]
        for node in idx[1:]:
            d = frame.nodes[node] - frame.nodes[mnode]
            nxd = np.cross(nvec, d)
            for t, tname in ((t1, "in-plane translation 1"), (t2, "in-plane translation 2")):
                # t · (u_k - u_m - (θ_m · n) (n × d)) = 0
                coeffs = {}
                for c in range(3):
                    coeffs[(node, c)] = coeffs.get((node, c), 0.0) + t[c]
                    coeffs[(mnode, c)] = coeffs.get((mnode, c), 0.0) - t[c]
                    coeffs[(mnode, 3 + c)] = coeffs.get((mnode, 3 + c), 0.0) - (t @ nxd) * nvec[c]
                add(coeffs, ConstraintRow("diaphragm", dia.name,
                                          f"diaphragm {dia.name!r} ties the {tname} of node {frame.node_labels[node]} to node {frame.node_labels[mnode]}",
                                          (mnode, node)))
            coeffs = {}
            for c in range(3):
                coeffs[(node, 3 + c)] = nvec[c]
                coeffs[(mnode, 3 + c)] = -nvec[c]
            add(coeffs, ConstraintRow("diaphragm", dia.name,
                                      f"diaphragm {dia.name!r} ties the in-plane rotation of node {frame.node_labels[node]} to node {frame.node_labels[mnode]}",
                                      (mnode, node)))
    if data:
        r_arr, c_arr, v_arr = (np.array(x) for x in zip(*data))
    else:
        r_arr = c_arr = np.zeros(0, int)
        v_arr = np.zeros(0)
    C_full = sp.coo_array((v_arr, (r_arr, c_arr)), shape=(len(rows), 6 * n)).tocsr()
    return rows, C_full


def _split_columns(C_full, node_dof, restrained, n_x):
    """Constraint rows on unknowns ``x`` and on restrained components."""
    col_map = node_dof.reshape(-1)
    C_coo = C_full.tocoo()
    to_x = col_map[C_coo.col]
    keep = to_x >= 0
    C = sp.coo_array((C_coo.data[keep], (C_coo.row[keep], to_x[keep])), shape=(C_full.shape[0], n_x)).tocsr()
    rmask = restrained.reshape(-1)[C_coo.col]
    C_r = sp.coo_array((C_coo.data[rmask], (C_coo.row[rmask], C_coo.col[rmask])), shape=C_full.shape).tocsr()
    return C, C_r


def _drop_empty(C, C_r, rows, C_full):
    """Drop rows that vanish on the analysed components (out-of-plane rows of a plane analysis).

    A row is kept when it touches an unknown or a restrained component;
    rows that only involve components outside the analysis are not
    constraints of this idealisation.
    """
    touched = (np.abs(C).sum(axis=1) > 0) | (np.abs(C_r).sum(axis=1) > 0)
    touched = np.asarray(touched).reshape(-1)
    if touched.all():
        return C, C_r, rows
    keep = np.flatnonzero(touched)
    return C[keep], C_r[keep], [rows[k] for k in keep]


def _column_scale(frame, node_dof, hinge, n_x) -> np.ndarray:
    """Column scale: 1 for translations, 1/size for rotations (geometric rank tolerance)."""
    size = max(float(np.ptp(frame.nodes, axis=0).max()) if frame.n_nodes else 1.0, 1e-3)
    scale = np.ones(n_x)
    rot = node_dof[:, 3:6]
    scale[rot[rot >= 0]] = 1.0 / size
    scale[hinge[hinge >= 0]] = 1.0 / size
    return scale


def _eliminate(C: sp.csr_array, scale: np.ndarray, n_x: int, x_node: np.ndarray, x_comp: np.ndarray):
    """Rank-revealing elimination of the constraint rows ``C x = 0``.

    Two stages. (1) Direct: a row with a column no other row touches (a
    diaphragm or rigid-body row for a follower node, an axial row of a
    member whose end no other constraint moves) is independent of all the
    others and eliminates that column by itself: ``x_s = -Σ c_j x_j / c_s``.
    (2) Dense: the remaining rows, per connected group: rows that depend on
    earlier rows of their group are redundant; each independent row
    eliminates one column, chosen by Gaussian elimination with threshold
    pivoting (`_choose_slaves`), and the slaves are solved for by a QR
    factorisation of their columns (rotation-scaled). ``T = A T₂``.

    In both stages the component a row eliminates follows one rule
    (`_pivot_key`), so the attribution of eliminated components to
    constraints and joints is reproducible.

    Returns T (x = T q), the rank, the redundant row indices, the data for
    particular solutions of prescribed support displacements, the dense
    groups, the direct-stage data and, per unknown, the row eliminating it
    (-1 for the independent ones).
    """
    r = C.shape[0]
    slave_row = np.full(n_x, -1, dtype=np.int64)
    if r == 0 or C.nnz == 0:
        return sp.identity(n_x, format="csr"), 0, list(range(r)) if r else [], [], [], [], (), slave_row
    C = C.tocsr()
    C.sum_duplicates()
    Cs = (C @ sp.diags_array(scale)).tocsr()
    rows1, slaves1, pivots1 = _direct_rows(C, Cs, x_node, x_comp)
    is_slave = np.zeros(n_x, bool)
    is_slave[slaves1] = True
    slave_row[slaves1] = rows1
    rest = np.setdiff1d(np.arange(r), rows1)
    t_rows, t_cols, t_vals = [], [], []  # entries of stage-2 slave rows of T over master columns
    rank = len(rows1)
    redundant: list[int] = []
    slave_rhs, consistency, groups = [], [], []
    if rest.size:
        Cs2 = Cs[rest]
        coo = Cs2.tocoo()
        r2 = rest.size
        g = sp.coo_array((np.ones(coo.nnz), (coo.row, r2 + coo.col)), shape=(r2 + n_x, r2 + n_x))
        ncomp, labels = connected_components(g, directed=False)
        row_lab = labels[:r2]
        used = np.zeros(n_x, bool)
        used[coo.col] = True
        col_lab = np.where(used, labels[r2:], -1)
        order = np.argsort(row_lab, kind="stable")
        bounds = np.searchsorted(row_lab[order], np.arange(ncomp + 1))
        cols_sorted = np.argsort(col_lab, kind="stable")
        cl = col_lab[cols_sorted]
        cbounds = np.searchsorted(cl, np.arange(ncomp + 1))
        for comp in range(ncomp):
            local = order[bounds[comp]:bounds[comp + 1]]
            if local.size == 0:
                continue
            ridx = rest[local]
            cidx = cols_sorted[cbounds[comp]:cbounds[comp + 1]]
            cidx = cidx[col_lab[cidx] == comp]
            if cidx.size == 0:
                # rows on restrained components only (e.g. an axially rigid member between two
                # supports): nothing left to constrain; they must hold for prescribed values
                redundant += [int(k) for k in ridx]
                consistency.append((ridx, np.eye(ridx.size)))
                continue
            M = Cs[ridx][:, cidx].toarray()
            groups.append((ridx, cidx))
            # independent rows in their given order (a row depending on earlier ones is redundant)
            indep = _independent_rows(M)
            indep_set = set(indep)
            redundant += [int(ridx[k]) for k in range(len(ridx)) if k not in indep_set]
            Mi = M[indep]
            rk = len(indep)
            rank += rk
            Q, R11, R12, piv = _slave_factor(Mi, x_node[cidx], x_comp[cidx])
            S = -scipy.linalg.solve_triangular(R11, R12)  # scaled slaves in terms of scaled masters
            sl = cidx[piv[:rk]]
            ms = cidx[piv[rk:]]
            is_slave[sl] = True
            slave_row[sl] = ridx[indep]
            # unscale (x = D y): x_s = D_s S D_m⁻¹ x_m
            Su = S * (scale[sl][:, None] / scale[ms][None, :])
            ii, jj = np.nonzero(np.abs(Su) > 1e-14)
            t_rows += list(sl[ii])
            t_cols += list(ms[jj])
            t_vals += list(Su[ii, jj])
            # particular solution: C_s x_s = -C_r u_r  =>  x_s = W (C_r u_r)
            Winv = scipy.linalg.solve_triangular(R11, Q.T)
            W = -(Winv * scale[sl][:, None])
            slave_rhs.append((sl, W, ridx[indep]))
            if len(indep) < len(ridx):
                # combinations of the group's rows that vanish on x must vanish on the right side too
                consistency.append((ridx, _dependencies(M, indep, Q, R11, piv[:rk])))
    masters = np.flatnonzero(~is_slave)
    qcol = np.full(n_x, -1)
    qcol[masters] = np.arange(masters.size)
    t_cols_a = np.array(t_cols, dtype=np.int64)
    T2 = sp.coo_array((np.concatenate([np.ones(masters.size), np.array(t_vals, float)]),
                       (np.concatenate([masters, np.array(t_rows, dtype=np.int64)]),
                        np.concatenate([qcol[masters], qcol[t_cols_a]]))),
                      shape=(n_x, masters.size)).tocsr()
    direct: tuple  # (rows, slaves, pivots, map) of the directly solved rows, or ()
    if rows1.size:
        A = _direct_map(C, rows1, slaves1, pivots1, n_x)
        T = (A @ T2).tocsr()
        direct = (rows1, slaves1, pivots1, A)
    else:
        T, direct = T2, ()
    return T, rank, sorted(redundant), slave_rhs, consistency, groups, direct, slave_row


def _dependencies(M: np.ndarray, indep: list[int], Q: np.ndarray, R11: np.ndarray, sl: np.ndarray) -> np.ndarray:
    """(k, rows) unit rows z with z M = 0: each redundant row less its combination of the independent ones.

    A redundant row m lies in the span of the independent rows Mi, m = aᵀ Mi;
    on the slave columns Mi[:, sl] = Q R11 is square and regular, so
    a = Q R11⁻ᵀ m[sl].
    """
    red = np.setdiff1d(np.arange(M.shape[0]), indep)
    A = Q @ scipy.linalg.solve_triangular(R11, M[red][:, sl].T, trans="T")  # (rk, k)
    Z = np.zeros((red.size, M.shape[0]))
    Z[np.arange(red.size), red] = 1.0
    Z[:, indep] = -A.T
    return Z / np.linalg.norm(Z, axis=1)[:, None]


def _slave_factor(Mi: np.ndarray, node: np.ndarray, comp: np.ndarray):
    """(Q, R11, R12, column order) of ``Mi[:, order] = Q [R11 R12]``, slaves first.

    The slaves are the columns `_choose_slaves` picks; should they give an
    ill-conditioned R11 (not met in practice), the column-pivoted QR
    decides instead.
    """
    rk = Mi.shape[0]
    chosen = _choose_slaves(Mi, node, comp)
    rest = np.setdiff1d(np.arange(Mi.shape[1]), chosen)
    piv = np.concatenate([chosen, rest])
    Q, R11 = scipy.linalg.qr(Mi[:, chosen], mode="economic")
    d = np.abs(np.diag(R11))
    if d.min() < 1e-10 * d.max():  # pragma: no cover - a safety net
        Q, Rq, piv = scipy.linalg.qr(Mi, mode="economic", pivoting=True)
        return Q, Rq[:rk, :rk], Rq[:rk, rk:], piv
    return Q, R11, Q.T @ Mi[:, rest], piv


def _direct_rows(C: sp.csr_array, Cs: sp.csr_array, x_node: np.ndarray, x_comp: np.ndarray):
    """Rows with a column of their own (touched by no other row), and that column as pivot.

    A row qualifies when an own column's scaled coefficient is not small
    against the row (|c| >= 0.1 max |row|). Its pivot is chosen among its
    own columns by `_pivot_key` (at least half the largest own coefficient).
    """
    coo = Cs.tocoo()
    col_count = np.bincount(coo.col, minlength=Cs.shape[1])
    own = col_count[coo.col] == 1
    mag = np.abs(coo.data)
    row_max = np.zeros(Cs.shape[0])
    np.maximum.at(row_max, coo.row, mag)
    ok = own & (mag >= 0.1 * row_max[coo.row]) & (mag > 0)
    if not ok.any():
        return np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0)
    rr, cc, vv = coo.row[ok], coo.col[ok], mag[ok]
    best = np.zeros(Cs.shape[0])
    np.maximum.at(best, rr, vv)
    cand = _candidates(vv, best[rr])
    rr, cc, vv = rr[cand], cc[cand], vv[cand]
    # per row, the first own column by the pivot rule
    order = np.lexsort(_pivot_key(vv, best[rr], x_node[cc], x_comp[cc]) + (rr,))
    rr, cc = rr[order], cc[order]
    first = np.concatenate([[True], rr[1:] != rr[:-1]])
    rows1, slaves1 = rr[first].astype(np.int64), cc[first].astype(np.int64)
    pivots1 = np.asarray(C[rows1, slaves1]).reshape(-1)
    return rows1, slaves1, pivots1


def _direct_map(C: sp.csr_array, rows1, slaves1, pivots1, n_x: int) -> sp.csr_array:
    """A (n_x, n_x): identity on the other unknowns, x_s = -Σ c_j x_j / c_s on direct slaves."""
    sub = C[rows1].tocoo()
    keep = sub.col != slaves1[sub.row]
    vals = -sub.data[keep] / pivots1[sub.row[keep]]
    others = np.setdiff1d(np.arange(n_x), slaves1)
    rows = np.concatenate([others, slaves1[sub.row[keep]]])
    cols = np.concatenate([others, sub.col[keep]])
    data = np.concatenate([np.ones(others.size), vals])
    return sp.coo_array((data, (rows, cols)), shape=(n_x, n_x)).tocsr()


def _independent_rows(M: np.ndarray, block: int = 64) -> list[int]:
    """Rows of M independent of the rows before them (greedy Gram-Schmidt, each projection done twice).

    A row is independent when what is left of it after taking out the span
    of the independent rows before it is not small against the row (relative
    ``RANK_TOL``) nor against the largest row. Rows are taken in blocks: the
    basis found so far is projected out of a whole block at once (matrix
    products), then the rows of the block are decided one by one.
    """
    r, nc = M.shape
    norms = np.linalg.norm(M, axis=1)
    ref = max(float(norms.max()) if r else 0.0, 1e-300)
    B = np.empty((min(r, nc), nc))  # orthonormal rows spanning the independent rows so far
    nb = 0
    indep: list[int] = []
    for s0 in range(0, r, block):
        V = M[s0:s0 + block].copy()
        if nb:
            for _ in range(2):
                V -= (V @ B[:nb].T) @ B[:nb]
        nb0 = nb
        for t in range(V.shape[0]):
            v = V[t]
            if nb > nb0:
                for _ in range(2):
                    v = v - (B[nb0:nb] @ v) @ B[nb0:nb]
            nv = float(np.linalg.norm(v))
            k = s0 + t
            if nv > RANK_TOL * max(float(norms[k]), ref * 1e-3) and nv > 1e-12 * ref and nb < B.shape[0]:
                B[nb] = v / nv
                nb += 1
                indep.append(k)
    return indep
