"""Kinematic and static indeterminacy, redundant constraints and mechanisms of a frame.

The counts are exact linear algebra on the same numbering of unknowns the
stiffness solver uses (`analysis.stiffness.dofs.build_dofs`), so the kinematic
count is, by construction, the size of the system the solver solves.

Kinematic indeterminacy (independent joint displacements)
---------------------------------------------------------
::

    kinematic = joints * dof_per_joint + releases - restraints - constraints - reductions

joints
    every node of the frame.
dof_per_joint
    3 in a plane analysis (two translations in the plane and the rotation
    about its normal), 6 in space.
releases
    own end rotations of rotational end releases (My, Mz) of frame members
    (truss members excluded): a hinged member end turns on its own, so each
    released bending rotation adds one unknown. In a plane analysis only the
    release of the in-plane bending moment counts.
restraints
    support components held rigidly (in the analysed components). Elastic
    supports (springs) restrain nothing for this count.
constraints
    the rank of the exact constraint rows (axially rigid members, rigid bodies,
    floor diaphragms) after the supports are applied: the number of
    *independent* constraints. A row that repeats what supports or earlier
    rows already fix is a redundant constraint: it is listed
    (``redundant_constraints`` = rows - rank) and explained, never counted.
reductions
    components that are not unknowns: joint rotations nothing attaches to
    (the rotations of pin-jointed truss joints, of joints where every member
    is hinged), own end rotations condensed out, and rotations at pinned ends
    condensed with ``AnalysisOptions.condense_pinned``.

The JSON ``terms`` block holds exactly these keys (plus
``redundant_constraints``); ``releases`` is an addition to the first version
of the contract.

Joint by joint
--------------
`Indeterminacy.joints` splits the same count by joint, as a hand calculation
does: at every joint ::

    DOF + releases - restrained - eliminated - reduced = unknowns + own rotations

where ``eliminated`` are the components an independent exact constraint takes
away (each independent constraint takes exactly one; which one follows the rule
of `ATTRIBUTION_RULE`, the choice the solver's elimination makes) and
``reduced`` the components that are no unknowns (rotations nothing attaches to,
pinned ends condensed, own end rotations condensed). Summed over the joints the
columns are the terms above and the right-hand side is the kinematic count.

Static indeterminacy (number of redundants)
-------------------------------------------
From the ranks of the equilibrium matrix ``B`` (equations x force unknowns):
states of self-stress ``s = unknowns - rank(B)`` and mechanisms
``m = equations - rank(B)``, hence ::

    static = s = m + member_forces + reactions + constraint_forces - equations

member_forces
    independent end forces of each member: 3 per plane-frame member, 6 per
    space-frame member, less the end actions its releases set to zero (the
    rank of the released rows of the member's end-force map, so a release
    repeated at both ends is not counted twice); a truss member carries 1.
reactions
    restraints + springs: an elastic support carries a reaction, so for the
    static count it is a redundant like a rigid support.
constraint_forces
    one force per rigid-body or diaphragm constraint row (the axial force of
    an axially rigid member is already a member force), so the static count
    does not depend on the inextensible idealisation.
equations
    joints * dof_per_joint - joint rotations nothing attaches to.

The mechanisms ``m`` are the displacement modes with no constraint and no
stiffness: the null space of the reduced stiffness. It is computed from the
geometry alone (the zero-deformation conditions of every member, spring,
support and constraint) after collapsing every cluster of rigidly connected
members and rigid bodies to one rigid body, so a building of moment frames
reduces to a few dozen unknowns. A condition that leaves a single unknown
free fixes it (a supported cluster, then whatever hangs on it, in turn);
what remains falls apart into small connected blocks, each ranked densely
(an SVD), so a model of hundreds of loose cleats, plates and pin-jointed
parts is counted in seconds. When a block stays larger than `DENSE_LIMIT`
the reduced stiffness is factorised instead, and only a failed
factorisation leads to an eigenvalue count, per connected block of the
stiffness, dense up to `DENSE_LIMIT` unknowns; a bigger block is asked for
at most `MAX_SPARSE_NULL` zero eigenvalues, and a count that reaches that
bound is said to be a lower bound in the notes. For a pin-jointed truss the result satisfies
the extended Maxwell rule ``s - m = b + r - 2j`` (plane) or ``b + r - 3j``
(space).

References
----------
The counting rules and the equilibrium-matrix ranks: S. Pellegrino and
C. R. Calladine, "Matrix analysis of statically and kinematically
indeterminate frameworks", Int. J. Solids Structures 22 (1986) 409-428
(from memory). The displacement-method count of joint displacements with
axially rigid members: Kassimali, "Matrix Analysis of Structures", and
Hibbeler, "Structural Analysis" (from memory).
"""
from __future__ import annotations

import logging
import time
import types
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, cast

import numpy as np
import scipy.linalg
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .collector import pauses_collector
from .model import AnalysisOptions, Frame, member_axes, member_lengths

if TYPE_CHECKING:
    from .stiffness.analyze import Assembly

__all__ = ["Indeterminacy", "indeterminacy", "TERM_KEYS", "JointCount", "Elimination", "ATTRIBUTION_RULE"]

log = logging.getLogger(__name__)

#: keys of the ``terms`` block, in order
TERM_KEYS = ("joints", "dof_per_joint", "releases", "restraints", "constraints", "redundant_constraints", "reductions")

RANK_TOL = 1e-9  # relative singular-value tolerance of the geometric rank
DENSE_LIMIT = 2500  # largest group of reduced unknowns ranked densely
MAX_EXPLAINED = 200  # redundant constraints explained one by one
MAX_MODES = 6  # mechanisms described one by one
MAX_SPARSE_NULL = 2048  # most zero eigenvalues sought in one big block of the stiffness (then: a lower bound)

_AXIS = "XYZ"


@dataclass(frozen=True)
class Indeterminacy:
    """The counts of one frame under one idealisation (see the module docstring).

    Attributes
    ----------
    kinematic : independent joint displacements (== unknowns of the solver).
    static : number of redundants (states of self-stress).
    mechanisms : independent mechanisms (0 for a stable structure).
    terms : the kinematic terms, keys `TERM_KEYS`.
    static_terms : member_forces, reactions, springs, constraint_forces, equations, mechanisms.
    notes : plain-language notes (formula with numbers, reductions, redundant
        constraints, mechanisms, springs).
    redundant : one explanation per redundant constraint.
    mechanism_descriptions : one description per mechanism (at most a few).
    timing : seconds per step.
    """

    kinematic: int
    static: int
    mechanisms: int
    terms: dict
    notes: tuple[str, ...] = ()
    redundant: tuple[str, ...] = ()
    mechanism_descriptions: tuple[str, ...] = ()
    static_terms: dict = field(default_factory=dict)
    timing: dict = field(default_factory=dict)
    _joint_data: object = field(default=None, repr=False, compare=False)

    @property
    def joints(self) -> tuple["JointCount", ...]:
        """The count joint by joint (`JointCount`, one per node, in the frame's order; built on first use)."""
        cached = self.__dict__.get("_joints")
        if cached is None:
            data = self._joint_data
            cached = _build_joint_counts(data) if isinstance(data, _JointData) else ()
            object.__setattr__(self, "_joints", cached)
        return cached

    @property
    def stable(self) -> bool:
        return self.mechanisms == 0

    def to_dict(self, joints: bool = True) -> dict:
        """The ``indeterminacy`` block of the results JSON (ARCHITECTURE.md); ``joints=False`` leaves out the
        joint-by-joint rows (for the summaries that read only the counts)."""
        out = {
            "kinematic": int(self.kinematic),
            "static": int(self.static),
            "mechanisms": int(self.mechanisms),
            "terms": {k: int(self.terms[k]) for k in TERM_KEYS},
            "notes": list(self.notes),
        }
        if joints:
            out["joints"] = {j.node_id: j.to_dict() for j in self.joints}
        return out

    def format_joint_table(self, width: int = 100) -> str:
        """The count joint by joint as fixed-width text (``plumbframe check --by-joint``)."""
        return format_joint_table(self, width)

    def joint_lines(self) -> list[str]:
        """The count joint by joint as short lines (one per joint, then the totals), for narrow panels."""
        out = [j.short() for j in self.joints]
        s = joint_totals(self.joints)
        out.append(f"total: {s['dof']} DOF + {s['releases']} released - {s['restraints']} restrained - "
                   f"{s['constraints']} eliminated - {s['reductions']} not unknowns = {s['kinematic']} unknowns "
                   f"(kinematic {self.kinematic})")
        return out

    def format_table(self, width: int = 78) -> str:
        """A fixed-width table of the terms, followed by the notes."""
        t, s = self.terms, self.static_terms
        kind = "plane" if t["dof_per_joint"] == 3 else "space"
        lines = [f"Indeterminacy ({kind} frame, {t['dof_per_joint']} DOF per joint)", ""]

        def row(sign: str, text: str, value) -> None:
            lines.append(f"  {sign:1} {text:<52}{value:>10}")

        row("", f"joints x DOF per joint ({t['joints']} x {t['dof_per_joint']})", t["joints"] * t["dof_per_joint"])
        row("+", "releases (own end rotations of hinged and semi-rigid ends)", t["releases"])
        row("-", "restraints (support components)", t["restraints"])
        row("-", "constraints (independent)", t["constraints"])
        row("-", "reductions (rotations that are not unknowns)", t["reductions"])
        lines.append("  " + "-" * 62)
        row("=", "kinematic indeterminacy", self.kinematic)
        row("", "redundant constraints (not counted)", t["redundant_constraints"])
        lines.append("")
        if s:
            row("", "member forces", s["member_forces"])
            row("+", "reactions (restraints)", s["reactions"])
            row("+", "spring reactions", s["springs"])
            row("+", "constraint forces (rigid bodies, diaphragms)", s["constraint_forces"])
            row("-", "equilibrium equations", s["equations"])
            row("+", "mechanisms", self.mechanisms)
            lines.append("  " + "-" * 62)
        row("=", "static indeterminacy (redundants)", self.static)
        row("", "mechanisms", self.mechanisms)
        lines.append("")
        lines.append("Stable." if self.stable else "UNSTABLE: the structure is a mechanism.")
        if self.notes:
            lines.append("")
            lines.append("Notes:")
            import textwrap

            for note in self.notes:
                lines += textwrap.wrap(note, width=width, initial_indent="  - ", subsequent_indent="    ")
        return "\n".join(lines)


# --------------------------------------------------------------------------- main
@pauses_collector
def indeterminacy(frame: Frame, options: AnalysisOptions | None = None, *, mechanism_method: str = "auto") -> Indeterminacy:
    """Count the kinematic and static indeterminacy and the mechanisms of ``frame``.

    Parameters
    ----------
    frame : the analytical model.
    options : the idealisation (``plane``, ``inextensible``, ``condense_pinned``);
        the same options give the same unknowns as `analysis.analyze`.
    mechanism_method : 'auto' (geometric rank after collapsing rigid clusters,
        falling back to the stiffness), 'geometry' or 'stiffness'.

    Returns
    -------
    Indeterminacy

    Raises
    ------
    ModelError
        The model is inconsistent (e.g. ``plane`` asked for a frame that is
        not plane).

    Notes
    -----
    Formulas in the module docstring. Cost: the constraint elimination of
    `build_dofs` (per connected group of constraint rows) plus a rank on the
    reduced geometric system, linear in the model size for frames whose
    members are mostly moment-connected.

    Examples
    --------
    >>> from analysis.model import FrameBuilder, Section, Material, AnalysisOptions
    >>> b = FrameBuilder()
    >>> s, m = Section("s", A=1e-2, Iy=1e-4, Iz=1e-4, J=1e-5), Material("m", E=2e11)
    >>> for k, x in enumerate((0.0, 4.0, 8.0)):
    ...     _ = b.add_node(f"N{k}", (x, 0, 0), support="pinned" if k == 0 else "uz")
    >>> _ = b.add_member("B1", "N0", "N1", s, m); _ = b.add_member("B2", "N1", "N2", s, m)
    >>> r = indeterminacy(b.build(), AnalysisOptions(plane=True))
    >>> r.kinematic, r.static, r.mechanisms
    (5, 1, 0)
    """
    from .stiffness.dofs import build_dofs

    if mechanism_method not in ("auto", "geometry", "stiffness"):
        raise ValueError(f"mechanism_method {mechanism_method!r} is not one of auto, geometry, stiffness")
    options = options or AnalysisOptions()
    timing: dict[str, float] = {}
    t0 = time.perf_counter()
    dofs = build_dofs(frame, options)
    timing["dofs"] = time.perf_counter() - t0

    R = member_axes(frame) if frame.n_members else np.zeros((0, 3, 3))
    terms, reduction_parts = _kinematic_terms(frame, dofs, R)
    kinematic = (terms["joints"] * terms["dof_per_joint"] + terms["releases"] - terms["restraints"]
                 - terms["constraints"] - terms["reductions"])
    if kinematic != dofs.n_q:  # pragma: no cover - would be a bookkeeping error
        log.error("kinematic count %d differs from the solver's unknowns %d", kinematic, dofs.n_q)

    t1 = time.perf_counter()
    m, modes, method, complete = _mechanisms(frame, dofs, R, mechanism_method)
    timing["mechanisms"] = time.perf_counter() - t1

    static_terms = _static_terms(frame, dofs, R, reduction_parts["unattached"])
    static_terms["mechanisms"] = m
    static = (m + static_terms["member_forces"] + static_terms["reactions"] + static_terms["springs"]
              + static_terms["constraint_forces"] - static_terms["equations"])

    t2 = time.perf_counter()
    redundant = tuple(_explain_redundant(frame, dofs))
    descriptions = tuple(_describe_modes(frame, dofs, modes))
    timing["explanations"] = time.perf_counter() - t2

    notes = _notes(terms, reduction_parts, kinematic, static, m, static_terms, redundant, descriptions, dofs)
    if not complete:
        notes.append(f"the mechanism count {m} is a lower bound (so is the static count): a connected part of "
                     f"more than {DENSE_LIMIT} unknowns had {MAX_SPARSE_NULL} or more zero-stiffness modes, "
                     f"the count stops there rather than run for hours")
    t3 = time.perf_counter()
    joint_data = _joint_data(frame, dofs, R, terms)
    timing["joints"] = time.perf_counter() - t3
    timing["total"] = time.perf_counter() - t0
    log.debug("indeterminacy: kinematic %d, static %d, mechanisms %d (%s) in %.3f s",
              kinematic, static, m, method, timing["total"])
    return Indeterminacy(kinematic=int(kinematic), static=int(static), mechanisms=int(m), terms=terms,
                         notes=tuple(notes), redundant=redundant, mechanism_descriptions=descriptions,
                         static_terms=static_terms, timing=timing, _joint_data=joint_data)


# --------------------------------------------------------------------------- kinematic terms
def _kinematic_terms(frame: Frame, dofs, R: np.ndarray) -> tuple[dict, dict]:
    releases = int(_own_rotation_ends(frame, dofs, R).sum())
    unattached_all = len(dofs.unattached) + len(dofs.skew_unattached)
    unattached_phys = len(_physical_unattached(frame, dofs, R))
    condensed_own = releases - dofs.n_hinges
    terms = {
        "joints": frame.n_nodes,
        "dof_per_joint": dofs.dof_per_joint,
        "releases": releases,
        "restraints": int(dofs.restrained.sum()) + len(dofs.support_rows),
        "constraints": int(dofs.rank),
        "redundant_constraints": int(len(dofs.redundant_rows)),
        "reductions": int(unattached_all + condensed_own),
    }
    parts = {"unattached": unattached_phys, "pinned_condensed": unattached_all - unattached_phys,
             "own_condensed": condensed_own}
    return terms, parts


def _own_rotation_ends(frame: Frame, dofs, R: np.ndarray) -> np.ndarray:
    """(m,2,2) member-end bending rotations (My, Mz) that are unknowns of their own: released (hinged) ends
    and semi-rigid ends (a spring to the joint), in the analysis' plane where it has one."""
    from .stiffness.dofs import _in_plane_rotation_mask

    own = (frame.releases[:, :, 4:6] | (frame.end_springs[:, :, 4:6] > 0)) & ~frame.truss[:, None, None]
    if dofs.plane_axis is not None and frame.n_members:
        own = own & _in_plane_rotation_mask(R, dofs.plane_axis)[:, None, 4:6]
    return own


def _physical_unattached(frame: Frame, dofs, R: np.ndarray) -> list:
    """Joint rotations nothing attaches to (axis-aligned and skew), without the ``condense_pinned`` device."""
    if not dofs.auto_released.any():
        return list(dofs.unattached) + list(dofs.skew_unattached)
    from .stiffness.dofs import _skew_unattached, _unattached_rotations

    rel = frame.releases.copy()
    rel[frame.truss, :, 4:6] = True
    rel[frame.truss, 1, 3] = True
    act = np.zeros(6, bool)
    act[list(dofs.active)] = True
    aligned = _unattached_rotations(frame, R, rel, dofs.restrained, act)
    return aligned + _skew_unattached(frame, R, rel, dofs.restrained, act, aligned)


# --------------------------------------------------------------------------- member end-force maps
def _end_force_map(L: float = 1.0) -> np.ndarray:
    """(12,6): end actions (nodes on member, member axes) from the end-i actions, by equilibrium.

    F_j = -F_i, M_j = -M_i + L e_x x F_i.
    """
    A = np.zeros((12, 6))
    A[:6, :6] = np.eye(6)
    A[6:9, :3] = -np.eye(3)
    A[9:12, 3:6] = -np.eye(3)
    A[10, 2] = -L  # (e_x x F)_y = -F_z
    A[11, 1] = L  # (e_x x F)_z = F_y
    return A


def _full_releases(frame: Frame) -> np.ndarray:
    rel = frame.releases.copy()
    rel[frame.truss, :, 4:6] = True
    rel[frame.truss, 1, 3] = True
    return rel


def _member_force_counts(frame: Frame, R: np.ndarray, plane_axis: int | None) -> np.ndarray:
    """(m,) independent end forces each member carries, after its releases."""
    m = frame.n_members
    if m == 0:
        return np.zeros(0, int)
    rel = _full_releases(frame).reshape(m, 12)
    A = _end_force_map()
    if plane_axis is None:
        keys = rel
        base = 6
    else:
        nloc = np.round(R[:, :, plane_axis], 9)
        keys = np.concatenate([rel.astype(float), nloc], axis=1)
        base = 3
    if plane_axis is None:  # twelve flags: one integer per member, distinct rows found on those (faster)
        codes = rel.astype(np.int64) @ (np.int64(1) << np.arange(12, dtype=np.int64))
        _, first, inverse = np.unique(codes, return_index=True, return_inverse=True)
        uniq = keys[first]
    else:
        uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    counts = np.empty(len(uniq), int)
    for u, key in enumerate(uniq):
        released = key[:12].astype(bool)
        if plane_axis is None:
            Ak = A
        else:
            n_loc = key[12:15]
            ex = np.array([1.0, 0.0, 0.0])
            t = np.cross(n_loc, ex)
            P = np.zeros((6, 3))
            P[:3, 0], P[:3, 1], P[3:, 2] = ex, t, n_loc
            Ak = A @ P
        rows = Ak[released]
        rk = np.linalg.matrix_rank(rows, tol=1e-9) if rows.size else 0
        counts[u] = base - rk
    out = counts[inverse]
    out[frame.truss] = 1
    return out


# --------------------------------------------------------------------------- static terms
def _static_terms(frame: Frame, dofs, R: np.ndarray, unattached_phys: int) -> dict:
    act = np.zeros(6, bool)
    act[list(dofs.active)] = True
    springs = int(((frame.springs > 0) & act[None, :] & ~dofs.restrained).sum())
    return {
        "member_forces": int(_member_force_counts(frame, R, dofs.plane_axis).sum()),
        "reactions": int(dofs.restrained.sum()) + sum(1 for row in dofs.rows if row.kind == "support"),
        "springs": springs,
        "constraint_forces": int(sum(1 for row in dofs.rows if row.kind not in ("axial", "unattached", "support"))),
        "equations": int(frame.n_nodes * dofs.dof_per_joint - unattached_phys),
    }


# --------------------------------------------------------------------------- mechanisms
def _mechanisms(frame: Frame, dofs, R: np.ndarray, method: str):
    """(count, a few mode vectors over x, method used)."""
    if method in ("auto", "geometry"):
        res = _geometric_mechanisms(frame, dofs, R, force=(method == "geometry"))
        if res is not None:
            return res[0], res[1], "geometry", True
    count, modes, complete = _stiffness_mechanisms(frame, dofs)
    return count, modes, "stiffness", complete


def _stiffness_mechanisms(frame: Frame, dofs):
    """Nullity of the reduced stiffness: factorise first, count zero eigenvalues only on failure."""
    from .stiffness.analyze import Assembly, reduced_stiffness
    from .stiffness.solvers import SingularStiffness, factorize

    asm = Assembly(frame, dofs, dofs.options)
    # condensation leaves round-off (about 1e-16 of the member's stiffness) where released actions
    # cancel exactly; on a component only such members touch it would hide a mechanism
    kc = asm.kc
    big = np.abs(kc).reshape(kc.shape[0], -1).max(axis=1) if kc.shape[0] else np.zeros(0)
    kc[np.abs(kc) < 1e-10 * big[:, None, None]] = 0.0
    asm.K_full = asm._assemble()
    Kxx, Kq, _ = reduced_stiffness(asm)
    # the same round-off appears where the constraint elimination (Tᵀ K T) cancels large terms
    Kq = sp.csr_array(Kq, copy=True)
    Kq.data[np.abs(Kq.data) < 1e-12 * (np.abs(Kxx.data).max() if Kxx.nnz else 0.0)] = 0.0
    Kq.eliminate_zeros()
    n = Kq.shape[0]
    if n == 0:
        return 0, [], True
    try:
        factorize(Kq, dofs.options.solver)
        return 0, [], True
    except SingularStiffness:
        pass
    V, complete = _stiffness_null_space(Kq)
    modes = [dofs.T @ V[:, k] for k in range(min(V.shape[1], MAX_MODES))]
    if not complete:
        log.warning("mechanism count is a lower bound: a connected block of more than %d unknowns had %d or "
                    "more zero-stiffness modes", DENSE_LIMIT, MAX_SPARSE_NULL)
    return int(V.shape[1]), modes, complete


def _stiffness_null_space(Kq) -> tuple[np.ndarray, bool]:
    """(basis (n, m) of the null space of the PSD matrix Kq, complete).

    Jacobi scaled, split into the connected blocks of its sparsity pattern
    (a loose part is its own block); a block of up to `DENSE_LIMIT` unknowns
    is ranked densely (eigh), a bigger one by block inverse iteration
    (`block_null_space`) seeking at most `MAX_SPARSE_NULL` zero eigenvalues. ``complete`` is False when a big
    block still had that many zero eigenvalues: the count is then a lower bound.
    """
    n = Kq.shape[0]
    diag = Kq.diagonal()
    zero = np.flatnonzero(diag <= 0)
    live = np.flatnonzero(diag > 0)
    s = 1.0 / np.sqrt(diag[live])
    Ks = sp.csr_array(sp.diags_array(s) @ Kq[live][:, live] @ sp.diags_array(s))
    cols = []
    for z in zero:
        e = np.zeros(n)
        e[z] = 1.0
        cols.append(e)
    complete = True
    nl = live.size
    ncomp, lab = connected_components(Ks, directed=False) if nl else (0, np.zeros(0, np.int64))
    order = np.argsort(lab, kind="stable")
    bounds = np.searchsorted(lab[order], np.arange(ncomp + 1))
    for comp in range(ncomp):
        idx = order[bounds[comp]:bounds[comp + 1]]
        Kc = Ks[idx][:, idx]
        if idx.size <= DENSE_LIMIT:
            w, V = scipy.linalg.eigh(Kc.toarray())
            small = np.flatnonzero(w < RANK_TOL * max(w.max(), 1.0))
        else:
            w, V, found_all = block_null_space(Kc)
            small = np.flatnonzero(w < RANK_TOL)
            complete = complete and found_all
        for j in small:
            v = np.zeros(n)
            v[live[idx]] = V[:, j] * s[idx]
            cols.append(v)
    return np.array(cols).T.reshape(n, -1), complete


def block_null_space(K, shift: float = 1e-6, sweeps: int = 6, most: int | None = None
                     ) -> tuple[np.ndarray, np.ndarray, bool]:
    """(Ritz values, Ritz vectors, complete) of the smallest eigenvalues of the unit-diagonal PSD ``K``.

    Block inverse iteration on one factorisation of ``K + shift I``: a null
    space of many exactly equal (zero) eigenvalues is found as a whole, where
    a single-vector Krylov method sees one direction of it per start vector
    and stalls. Each sweep damps a mode of eigenvalue λ by shift / (λ +
    shift) against the zero modes. The block starts at 16 columns and doubles
    while every Ritz value is zero, up to ``most`` (default `MAX_SPARSE_NULL`,
    less for a block that would pass ~240 MB; then ``complete`` is False: the
    count is a lower bound). The Ritz values come in ascending order.
    """
    import scipy.sparse.linalg as spla

    n = K.shape[0]
    # SuperLU with a symmetric ordering: K + shift I is SPD but nearly singular, which the pivot checks of
    # the solvers' Cholesky paths reject
    F = spla.splu(sp.csc_matrix(K + sp.diags_array(np.full(n, shift))), permc_spec="MMD_AT_PLUS_A",
                  diag_pivot_thresh=0.0, options={"SymmetricMode": True})
    rng = np.random.default_rng(0)
    b = 16
    most = max(1, min(most or MAX_SPARSE_NULL, max(16, int(3e7) // max(n, 1))))  # a block of at most ~240 MB
    while True:
        b = min(b, n, most)
        X = np.linalg.qr(rng.standard_normal((n, b)))[0]
        for _ in range(sweeps):
            X = np.linalg.qr(F.solve(X))[0]
        H = X.T @ (K @ X)
        w, Y = np.linalg.eigh(0.5 * (H + H.T))
        zero = int((w < RANK_TOL).sum())
        if zero < b or b >= n:
            return w, X @ Y, True
        if b >= most:
            return w, X @ Y, False
        b *= 2


def _skew(d: np.ndarray) -> np.ndarray:
    return np.array([[0, -d[2], d[1]], [d[2], 0, -d[0]], [-d[1], d[0], 0]])


def _geometric_mechanisms(frame: Frame, dofs, R: np.ndarray, force: bool = False):
    """Mechanisms from the zero-deformation conditions, rigid clusters collapsed.

    Returns (count, modes over x) or None when the reduced problem stays
    too large to rank densely (unless ``force``).
    """

    n, m = frame.n_nodes, frame.n_members
    N6 = 6 * n
    n_h = dofs.n_hinges
    n_joint_x = dofs.n_x - n_h
    n_ext = N6 + n_h
    active = np.zeros(6, bool)
    active[list(dofs.active)] = True
    size = max(float(np.ptp(frame.nodes, axis=0).max()) if n else 1.0, 1e-3)

    # -- rigid members: no released action that the analysis sees, no own rotation
    cond = dofs.condensed.reshape(m, 12) if m else np.zeros((0, 12), bool)
    hs = dofs.hinge_dof.reshape(m, 12) if m else np.zeros((0, 12), int)
    seen = _seen_actions(R, dofs.plane_axis)  # (m,12) actions the analysis carries
    rigid = ~frame.truss & ~(cond & seen).any(axis=1) & ~(hs >= 0).any(axis=1)

    # -- clusters of nodes moving as one rigid body in a zero-energy motion
    ei = list(frame.members[rigid, 0])
    ej = list(frame.members[rigid, 1])
    for body in frame.rigid_bodies:
        idx = [frame.node_index(x) for x in dict.fromkeys(body.nodes)]
        ei += [idx[0]] * (len(idx) - 1)
        ej += idx[1:]
    g = sp.coo_array((np.ones(len(ei)), (np.array(ei, int), np.array(ej, int))), shape=(n, n))
    _, lab = connected_components(g, directed=False)
    sizes = np.bincount(lab, minlength=lab.max() + 1 if n else 0)
    in_cluster = sizes[lab] > 1

    # -- reduced columns: per cluster the master's active components; singletons' free
    #    components; own end rotations
    act = np.array(list(dofs.active), dtype=np.int64)
    rows_p: list[np.ndarray] = []
    cols_p: list[np.ndarray] = []
    vals_p: list[np.ndarray] = []
    rot_p: list[np.ndarray] = []
    ks = np.flatnonzero(in_cluster)
    nc = 0
    if ks.size:
        # clusters numbered in the order of their first node; each gets the master's active components
        labels, first = np.unique(lab[ks], return_index=True)
        order = np.argsort(first, kind="stable")
        rank = np.empty(len(labels), dtype=np.int64)
        rank[order] = np.arange(len(labels))
        which = rank[np.searchsorted(labels, lab[ks])]  # each cluster node's cluster, by first appearance
        mk = ks[first[order]][which]  # its master node
        c0 = which * act.size  # the master's first column
        nc = len(labels) * act.size
        rot_p.append(np.tile(act >= 3, len(labels)))
        # a node of the cluster moves with the master: translation u_m + theta_m x d, rotation theta_m
        d = frame.nodes[ks] - frame.nodes[mk]
        S = np.zeros((ks.size, 6, 6))
        S[:, np.arange(6), np.arange(6)] = 1.0
        S[:, 0, 4], S[:, 0, 5] = d[:, 2], -d[:, 1]  # -skew(d) in the upper right block
        S[:, 1, 3], S[:, 1, 5] = -d[:, 2], d[:, 0]
        S[:, 2, 3], S[:, 2, 4] = d[:, 1], -d[:, 0]
        sub = S[:, act[:, None], act[None, :]]
        kk, r, q = np.nonzero(np.abs(sub) > 0)
        rows_p.append(6 * ks[kk] + act[r])
        cols_p.append(c0[kk] + q)
        vals_p.append(sub[kk, r, q])
    single = ~in_cluster
    nd = dofs.node_dof.copy()
    nd[~single] = -1
    fr = np.argwhere(nd >= 0)
    rows_p.append(6 * fr[:, 0] + fr[:, 1])
    cols_p.append(nc + np.arange(len(fr)))
    vals_p.append(np.ones(len(fr)))
    rot_p.append(fr[:, 1] >= 3)
    nc += len(fr)
    h = dofs.hinge_dof.reshape(-1)
    hk = h[h >= 0]
    rows_p.append(N6 + (hk - n_joint_x))
    cols_p.append(nc + np.arange(hk.size))
    vals_p.append(np.ones(hk.size))
    rot_p.append(np.ones(hk.size, bool))
    nc += hk.size
    col_is_rot = np.concatenate(rot_p)  # (nc,) bool
    Tc = sp.coo_array((np.concatenate(vals_p).astype(float),
                       (np.concatenate(rows_p).astype(np.int64), np.concatenate(cols_p).astype(np.int64))),
                      shape=(n_ext, nc)).tocsr()
    if nc == 0:
        return 0, []

    # -- rows over ext: members (non-rigid), springs, restraints of cluster nodes, constraints
    blocks = []
    nonrigid = np.flatnonzero(~rigid)
    if nonrigid.size:
        blocks.append(_member_rows(frame, dofs, R, nonrigid, N6, n_joint_x, n_ext))
    spring = (frame.springs > 0) & active[None, :] & ~dofs.restrained
    held = dofs.restrained & in_cluster[:, None]
    for mask in (spring, held):
        held_idx = np.flatnonzero(mask.reshape(-1))
        if held_idx.size:
            blocks.append(sp.coo_array((np.ones(held_idx.size), (np.arange(held_idx.size), held_idx)),
                                       shape=(held_idx.size, n_ext)).tocsr())
    # semi-rigid ends: the spring's deformation is the end's own rotation, zero in a mechanism
    sprung = (frame.end_springs > 0) & (dofs.hinge_dof >= 0) if m else np.zeros((0, 2, 6), bool)
    if sprung.any():
        sk = N6 + (dofs.hinge_dof[sprung] - n_joint_x)
        blocks.append(sp.coo_array((np.ones(sk.size), (np.arange(sk.size), sk)), shape=(sk.size, n_ext)).tocsr())
    if dofs.C.shape[0]:
        Cx = dofs.C.tocoo()
        x_ext = _x_to_ext(dofs, N6, n_joint_x)
        Cext = sp.coo_array((Cx.data, (Cx.row, x_ext[Cx.col])), shape=(dofs.C.shape[0], n_ext)).tocsr()
        Cr = dofs.C_r.tocoo()
        Cext = Cext + sp.coo_array((Cr.data, (Cr.row, Cr.col)), shape=(dofs.C.shape[0], n_ext)).tocsr()
        blocks.append(Cext)
    if not blocks:
        M = sp.csr_array((0, nc))
    else:
        Mext = sp.vstack(blocks).tocsr()
        rn = np.asarray(abs(Mext).max(axis=1).todense()).reshape(-1)
        rn[rn == 0] = 1.0
        Mext = sp.diags_array(1.0 / rn) @ Mext
        cs = np.where(np.array(col_is_rot, bool), 1.0 / size, 1.0)
        M = (Mext @ Tc @ sp.diags_array(cs)).tocsr()
        M.data[np.abs(M.data) < 1e-11] = 0.0
        M.eliminate_zeros()
        keep = np.flatnonzero(np.diff(M.indptr) > 0)
        M = M[keep]
    return _nullity(M, Tc, dofs, N6, n_joint_x, size, col_is_rot, force)


def _seen_actions(R: np.ndarray, plane_axis: int | None) -> np.ndarray:
    """(m,12) True for the member end actions a plane (or space) analysis carries."""
    m = R.shape[0]
    if plane_axis is None:
        return np.ones((m, 12), bool)
    comp = np.abs(R[:, :, plane_axis])  # (m,3) local axis vs plane normal
    force_in = comp < 1 - 1e-9
    moment_in = comp > 1e-9
    one = np.concatenate([force_in, moment_in], axis=1)
    return np.concatenate([one, one], axis=1)


def _x_to_ext(dofs, N6: int, n_joint_x: int) -> np.ndarray:
    x_ext = np.empty(dofs.n_x, dtype=np.int64)
    nd = dofs.node_dof.reshape(-1)
    sel = nd >= 0
    x_ext[nd[sel]] = np.flatnonzero(sel)
    h = dofs.hinge_dof.reshape(-1)
    hs = h[h >= 0]
    x_ext[hs] = N6 + (hs - n_joint_x)
    return x_ext


def _member_rows(frame: Frame, dofs, R, members: np.ndarray, N6: int, n_joint_x: int, n_ext: int):
    """Zero-deformation rows (over ext) of the given members, grouped by release pattern."""
    from .stiffness.elements import end_transformation

    L = member_lengths(frame)[members]
    Te = end_transformation(R[members], frame.offsets[members])  # (g,12,12)
    cond = dofs.condensed.reshape(-1, 12)[members]
    if frame.truss[members].any():  # truss: only the axial force is carried
        tr = frame.truss[members]
        cond[tr] = True
        cond[tr, 0] = cond[tr, 6] = False
    hs = dofs.hinge_dof.reshape(-1, 12)[members]
    i = frame.members[members, 0].astype(np.int64)
    j = frame.members[members, 1].astype(np.int64)
    comp = np.arange(6)
    idx = np.concatenate([6 * i[:, None] + comp, 6 * j[:, None] + comp], axis=1)  # (g,12)
    hidx = np.where(hs >= 0, N6 + (hs - n_joint_x), -1)
    A1 = _end_force_map(1.0)
    dscale = np.array([1, 1, 1, 0, 0, 0, 1, 1, 1, 0, 0, 0], float)
    uniq, inverse = np.unique(cond, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    rr, cc, vv = [], [], []
    r0 = 0
    for u, pattern in enumerate(uniq):
        sel = np.flatnonzero(inverse == u)
        rows = A1[pattern]
        N = scipy.linalg.null_space(rows) if rows.size else np.eye(6)
        if N.shape[1] == 0:
            continue
        W1 = (A1 @ N).T  # (p,12) in member axes, for L = 1
        p = W1.shape[0]
        D = np.where(dscale[None, :] > 0, 1.0 / L[sel, None], 1.0)  # (g,12)
        W = W1[None, :, :] * D[:, None, :]  # (g,p,12)
        Wn = W @ Te[sel]  # (g,p,12) over node comps
        g = sel.size
        rows_idx = r0 + np.arange(g * p).reshape(g, p)
        rr.append(np.repeat(rows_idx[:, :, None], 12, axis=2).ravel())
        cc.append(np.broadcast_to(idx[sel][:, None, :], (g, p, 12)).ravel())
        vv.append(Wn.ravel())
        kept = hidx[sel] >= 0
        if kept.any():  # own end rotations: the local rotation adds the hinge's own rotation
            gk, slot = np.nonzero(kept)
            for q in range(p):
                rr.append(rows_idx[gk, q])
                cc.append(hidx[sel][gk, slot])
                vv.append(W[gk, q, slot])
        r0 += g * p
    if not rr:
        return sp.csr_array((0, n_ext))
    r = np.concatenate(rr)
    c = np.concatenate(cc)
    v = np.concatenate(vv)
    keep = v != 0
    return sp.coo_array((v[keep], (r[keep], c[keep])), shape=(r0, n_ext)).tocsr()


def _nullity(M: sp.csr_array, Tc, dofs, N6, n_joint_x, size, col_is_rot, force):
    """Null space dimension of M (rows x reduced columns) per connected block; a few modes.

    Rows that hold a single column still free fix it (`_peel_fixed`); what
    they leave splits into far smaller blocks, each ranked densely.
    """
    nc = M.shape[1]
    rows_left, cols_left = _peel_fixed(M)
    M = M[rows_left][:, cols_left]
    r, nk = M.shape
    coo = M.tocoo()
    g = sp.coo_array((np.ones(coo.nnz), (coo.row, r + coo.col)), shape=(r + nk, r + nk))
    ncomp, lab = connected_components(g, directed=False)
    row_lab, col_lab = lab[:r], lab[r:]
    col_order = np.argsort(col_lab, kind="stable")
    cb = np.searchsorted(col_lab[col_order], np.arange(ncomp + 1))
    row_order = np.argsort(row_lab, kind="stable")
    rb = np.searchsorted(row_lab[row_order], np.arange(ncomp + 1))
    if not force:
        biggest = int(np.diff(cb).max()) if ncomp else 0
        if biggest > DENSE_LIMIT:
            return None
    count = 0
    modes_red: list[np.ndarray] = []
    for comp in range(ncomp):
        cidx = col_order[cb[comp]:cb[comp + 1]]
        if cidx.size == 0:
            continue
        ridx = row_order[rb[comp]:rb[comp + 1]]
        if ridx.size == 0:
            null = np.eye(cidx.size)
        else:
            B = M[ridx][:, cidx].toarray()
            null = _dense_null(B)
        if null.shape[1]:
            count += null.shape[1]
            if len(modes_red) < MAX_MODES:
                null = _localise(null)
                for q in range(min(null.shape[1], MAX_MODES - len(modes_red))):
                    v = np.zeros(nc)
                    v[cols_left[cidx]] = null[:, q]
                    modes_red.append(v)
    cs = np.where(np.array(col_is_rot, bool), 1.0 / size, 1.0)
    x_ext = _x_to_ext(dofs, N6, n_joint_x)
    modes = [(Tc @ (cs * v))[x_ext] for v in modes_red]
    return count, modes


def _peel_fixed(M: sp.csr_array, rel: float = 1e-6) -> tuple[np.ndarray, np.ndarray]:
    """(rows, columns) of M left after fixing, in turn, every column a row holds alone.

    A zero-deformation row whose only nonzero on the columns still free is
    that column (its coefficient at least ``rel``; the rows come scaled to a
    largest coefficient of 1) holds that column at zero in every mechanism, so
    the column and the row leave the problem without changing its nullity
    (exact: the null space of M is the null space of what is left, padded
    with zeros). A support-held joint, a member end tied to it, and so on
    along a chain leave the big block one by one. Each pass fixes at least one
    column or stops, so there are at most ``columns`` passes.
    """
    r, nc = M.shape
    if r == 0 or nc == 0:
        return np.arange(r), np.arange(nc)
    A = sp.csr_array(abs(M))
    A.eliminate_zeros()
    rows_of = sp.csc_array(A)  # column -> rows
    live_c = np.ones(nc, bool)
    live_r = np.ones(r, bool)
    count = np.diff(A.indptr).astype(np.int64)  # nonzeros on free columns per row
    colsum = A.astype(bool).astype(np.float64) @ np.arange(nc, dtype=np.float64)  # their column indices, summed
    valsum = A @ np.ones(nc)  # their coefficients, summed
    for _ in range(nc + 1):
        single = np.flatnonzero(live_r & (count == 1) & (valsum >= rel))
        if single.size == 0:
            break
        cols = np.unique(np.rint(colsum[single]).astype(np.int64))
        live_r[single] = False
        live_c[cols] = False
        sub = rows_of[:, cols].tocoo()
        np.subtract.at(count, sub.row, 1)
        np.subtract.at(colsum, sub.row, cols[sub.col].astype(np.float64))
        np.subtract.at(valsum, sub.row, sub.data)
    rows = np.flatnonzero(live_r & (count > 0))  # a row on fixed columns only says nothing more
    return rows, np.flatnonzero(live_c)


QR_NULL_MIN = 600  # blocks with more columns than this are ranked by QR with column pivoting, not by the SVD


def _dense_null(B: np.ndarray) -> np.ndarray:
    """Null space basis (cols, k) of B: the SVD (tall blocks reduced by QR first), or for a block wider than
    `QR_NULL_MIN` columns a QR factorisation with column pivoting, several times cheaper."""
    rows, cols = B.shape
    if cols > QR_NULL_MIN and rows:
        return _pivoted_qr_null(B)
    if rows > 2 * cols:
        Rr: np.ndarray | None = None
        step = max(4 * cols, 256)
        for s0 in range(0, rows, step):
            chunk = B[s0:s0 + step] if Rr is None else np.vstack([Rr, B[s0:s0 + step]])
            Rr = scipy.linalg.qr(chunk, mode="r")[0][: min(chunk.shape)]
        assert Rr is not None  # rows > 2 * cols >= 0, so the loop ran at least once
        B = Rr
    _, sv, Vt = np.linalg.svd(B, full_matrices=True)
    top = sv.max() if sv.size else 0.0
    rank = int((sv > RANK_TOL * max(top, 1e-300)).sum()) if top > 0 else 0
    return Vt[rank:].T


def _pivoted_qr_null(B: np.ndarray) -> np.ndarray:
    """Null space basis (cols, k) of B from B P = Q R with column pivoting (Businger-Golub).

    The pivoting keeps |R_kk| non-increasing, so the rank is the number of
    diagonal entries above ``RANK_TOL`` times the first (the largest column
    norm, within a factor sqrt(cols) of the largest singular value); with
    R = [R11 R12] the null space is P [-R11⁻¹ R12; I], returned orthonormal.
    A tall block is reduced to its triangle by a plain QR first (blocked,
    faster than pivoting over every row; Q is orthogonal, so the null space
    is the same).
    """
    rows, cols = B.shape
    if rows > cols:  # a tall block: first its triangle (same null space), which the pivoting then ranks
        B = scipy.linalg.qr(B, mode="r")[0][:cols]
    R, piv = scipy.linalg.qr(B, mode="r", pivoting=True)
    d = np.abs(np.diag(R))
    top = float(d[0]) if d.size else 0.0
    rank = int((d > RANK_TOL * max(top, 1e-300)).sum()) if top > 0 else 0
    if rank == cols:
        return np.zeros((cols, 0))
    X = scipy.linalg.solve_triangular(R[:rank, :rank], R[:rank, rank:]) if rank else np.zeros((0, cols))
    N = np.zeros((cols, cols - rank))
    N[piv[:rank]] = -X
    N[piv[rank:], np.arange(cols - rank)] = 1.0
    return scipy.linalg.qr(N, mode="economic")[0]


def _localise(N: np.ndarray) -> np.ndarray:
    """A basis of the same space where each mode has its own pivot component (readable modes)."""
    if N.shape[1] <= 1:
        return N
    _, _, piv = scipy.linalg.qr(N.T, pivoting=True)
    P = piv[: N.shape[1]]
    try:
        return N @ np.linalg.inv(N[P])
    except np.linalg.LinAlgError:  # pragma: no cover
        return N


def _describe_modes(frame: Frame, dofs, modes: list[np.ndarray]) -> list[str]:
    from .stiffness.analyze import describe_mechanism

    if not modes:
        return []
    N6 = 6 * frame.n_nodes
    n_joint_x = dofs.n_x - dofs.n_hinges
    asm = types.SimpleNamespace(frame=frame, dofs=dofs, N6=N6, n_ext=N6 + dofs.n_hinges,
                                x_ext=_x_to_ext(dofs, N6, n_joint_x))
    out = []
    for x in modes:
        text = _rigid_motion_text(frame, dofs, asm, x)
        # asm is a stand-in carrying the fields describe_mechanism reads (frame, dofs, N6, n_ext, x_ext)
        out.append(text or describe_mechanism(cast("Assembly", asm), x))
    return out


def _rigid_motion_text(frame, dofs, asm, x) -> str | None:
    """'the whole structure can move as a rigid body ...' when the mode is one."""
    n = frame.n_nodes
    u = np.zeros(asm.n_ext)
    u[asm.x_ext] = x
    nodal = u[: asm.N6].reshape(n, 6)
    moving = np.abs(nodal).max(axis=1) > 1e-9 * max(np.abs(nodal).max(), 1e-300)
    if not moving.all() or n < 2:
        return None
    # fit a rigid motion to the node translations and rotations
    rows, rhs = [], []
    for k in range(n):
        S = np.zeros((6, 6))
        S[:3, :3] = np.eye(3)
        S[:3, 3:] = -_skew(frame.nodes[k])
        S[3:, 3:] = np.eye(3)
        for c in dofs.active:
            if dofs.node_dof[k, c] >= 0:
                rows.append(S[c])
                rhs.append(nodal[k, c])
    if not rows:
        return None
    A = np.array(rows)
    b = np.array(rhs)
    sol = np.linalg.lstsq(A, b, rcond=None)[0]
    if np.linalg.norm(A @ sol - b) > 1e-6 * np.linalg.norm(b):
        return None
    t, w = sol[:3], sol[3:]
    parts = []
    if np.linalg.norm(t) > 1e-9 * np.linalg.norm(sol) and np.linalg.norm(w) < 1e-9 * max(float(np.linalg.norm(t)), 1e-300):
        direction = ", ".join(f"{_AXIS[a]}" for a in range(3) if abs(t[a]) > 0.2 * np.abs(t).max())
        parts.append(f"slide in {direction}")
    else:
        axis = ", ".join(f"{_AXIS[a]}" for a in range(3) if abs(w[a]) > 0.2 * np.abs(w).max())
        parts.append(f"turn about an axis along {axis}")
    return (f"the whole structure can {parts[0]} as a rigid body: the supports do not hold it "
            f"in that direction")


# --------------------------------------------------------------------------- explanations
_DIR_WORDS = {0: "in X", 1: "in Y", 2: "in Z", 3: "in rotation about X", 4: "in rotation about Y",
              5: "in rotation about Z"}


def _explain_redundant(frame: Frame, dofs) -> list[str]:
    """One sentence per redundant constraint row, naming what it duplicates."""
    red = list(dofs.redundant_rows)
    if not red:
        return []
    red_set = set(red)
    group_of: dict[int, int] = {}
    for gi, (ridx, _) in enumerate(dofs.groups):
        for r in ridx:
            group_of[int(r)] = gi
    from .stiffness.dofs import _column_scale

    scale = _column_scale(frame, dofs.node_dof, dofs.hinge_dof, dofs.n_x)
    C_r = dofs.C_r.tocsr()
    C_r_t = C_r.T.tocsc()
    out = []
    explained = red[:MAX_EXPLAINED]
    combos = _redundant_combinations(dofs, scale, explained, red_set, group_of)
    for r in explained:
        row = dofs.rows[r]
        coeffs = combos.get(r, [])
        own = C_r_t[:, [r]].toarray().reshape(-1)
        w = np.zeros(C_r.shape[0])
        for q, a in coeffs:
            w[q] -= a
        resid = own + C_r_t @ w  # the row less its combination, on the restrained components
        ref = max(float(np.abs(own).max(initial=0.0)), float(np.abs(resid).max(initial=0.0)), 1e-300)
        supports = np.flatnonzero(np.abs(resid) > 1e-8 * ref)
        out.append(_sentence(frame, dofs, row, [dofs.rows[q] for q, _ in coeffs], supports))
    if len(red) > MAX_EXPLAINED:
        out.append(f"... and {len(red) - MAX_EXPLAINED} more redundant constraints")
    return out


def _redundant_combinations(dofs, scale, rows, red_set, group_of) -> dict[int, list[tuple[int, float]]]:
    """Per redundant row, the earlier independent rows of its group it is a combination of.

    The independent rows of a group are a basis of its rows, and each
    redundant row depends on independent rows before it only (that is how
    they were told apart), so one least-squares solve per group, with all
    its redundant rows as right-hand sides, gives every combination.
    """
    by_group: dict[int, list[int]] = {}
    for r in rows:
        if r in group_of:
            by_group.setdefault(group_of[r], []).append(r)
    out: dict[int, list[tuple[int, float]]] = {}
    # the elimination's own dependencies (rows: a redundant row less its combination of independent ones)
    deps = {int(ridx[0]): Z for ridx, Z in dofs.consistency if len(ridx)}
    for gi, reds in by_group.items():
        ridx, cidx = dofs.groups[gi]
        M = dofs.C[ridx][:, cidx].toarray() * scale[cidx][None, :]
        indep = np.array([k for k in range(len(ridx)) if int(ridx[k]) not in red_set], dtype=np.int64)
        pos = np.array([int(np.flatnonzero(ridx == r)[0]) for r in reds], dtype=np.int64)
        if indep.size == 0:
            continue
        Z = deps.get(int(ridx[0]))
        all_red = np.setdiff1d(np.arange(len(ridx)), indep)
        if Z is not None and Z.shape == (all_red.size, len(ridx)):
            at = np.searchsorted(all_red, pos)
            A = (-Z[at][:, indep] / Z[at, pos][:, None]).T  # (indep, reds)
        else:  # pragma: no cover - the elimination always records them
            A = np.linalg.lstsq(M[indep].T, M[pos].T, rcond=None)[0]
        base = np.linalg.norm(M[indep], axis=1)
        for q, (r, p) in enumerate(zip(reds, pos)):
            a = A[:, q]
            ref = max(float(np.linalg.norm(M[p])), 1e-300)
            keep = (indep < p) & (base * np.abs(a) > 1e-8 * ref)
            out[r] = [(int(ridx[k]), float(v)) for k, v in zip(indep[keep], a[keep])]
    return out


def _sentence(frame: Frame, dofs, row, others, supports: np.ndarray) -> str:
    parts = []
    by_node: dict[int, list[int]] = {}
    for s in supports:
        by_node.setdefault(int(s) // 6, []).append(int(s) % 6)
    for node, comps in by_node.items():
        kind = _support_kind(dofs, node)
        parts.append(f"the {kind}support of node {frame.node_labels[node]} (holding it {_held_words(dofs, comps)})")
    for o in others:
        if o.kind == "axial":
            k = frame.member_index(o.owner)
            parts.append(f"member {frame.member_labels[k]} (axially rigid)")
        else:
            parts.append(f"the {o.label}")
    if not parts:
        return f"the {row.label} adds nothing: it constrains nothing the analysis keeps as an unknown"
    nodes = [frame.node_labels[k] for k in dict.fromkeys(row.nodes)]
    what = "node " + nodes[0] if len(nodes) == 1 else "nodes " + " and ".join(nodes)
    how = "the movement of " + what + " along it" if row.kind == "axial" else "the relative movement of " + what
    return f"the {row.label} adds nothing: {how} is already fixed by {_join(parts)}"


def _support_kind(dofs, node: int) -> str:
    held = dofs.restrained[node]
    act = list(dofs.active)
    trans = [c for c in act if c < 3]
    rot = [c for c in act if c >= 3]
    nt = int(held[trans].sum())
    nr = int(held[rot].sum())
    if nt == len(trans) and nr == len(rot):
        return "fixed "
    if nt == len(trans) and nr == 0:
        return "pin "
    if nr == 0 and 0 < nt < len(trans):
        return "roller "
    return ""


def _held_words(dofs, comps: list[int]) -> str:
    words = []
    for c in comps:
        if dofs.plane_axis is not None and c < 3:
            vertical = c == 2 or (dofs.plane_axis == 2 and c == 1)
            words.append("vertically" if vertical else "horizontally")
        else:
            words.append(_DIR_WORDS[c])
    return " and ".join(words)


def _join(parts: list[str]) -> str:
    if len(parts) == 1:
        return parts[0]
    return ", ".join(parts[:-1]) + " and " + parts[-1]


# --------------------------------------------------------------------------- notes
def _notes(terms, parts, kinematic, static, m, st, redundant, descriptions, dofs) -> list[str]:
    t = terms
    notes = [
        (f"kinematic = joints x DOF per joint + releases - restraints - constraints - reductions = "
         f"{t['joints']} x {t['dof_per_joint']} + {t['releases']} - {t['restraints']} - {t['constraints']} - "
         f"{t['reductions']} = {kinematic}"),
    ]
    red = []
    if parts["unattached"]:
        red.append(f"{parts['unattached']} joint rotations nothing attaches to (pin-jointed truss joints, "
                   f"joints where every member is hinged)")
    if parts["own_condensed"]:
        red.append(f"{parts['own_condensed']} own end rotations of hinged member ends condensed out")
    if parts["pinned_condensed"]:
        red.append(f"{parts['pinned_condensed']} rotations at pinned ends condensed out")
    if red:
        notes.append("reductions: " + "; ".join(red))
    if t["releases"]:
        notes.append(f"releases: {t['releases']} hinged or semi-rigid member ends turn on their own (one unknown each)")
    rigid_note = _rigid_note(dofs.frame, dofs.options)
    if rigid_note:
        notes.append(rigid_note)
    if t["redundant_constraints"]:
        notes.append(f"{t['redundant_constraints']} constraints are redundant and not counted:")
        notes += redundant
    notes.append(
        f"static = mechanisms + member forces + reactions + spring reactions + constraint forces - equations = "
        f"{m} + {st['member_forces']} + {st['reactions']} + {st['springs']} + {st['constraint_forces']} - "
        f"{st['equations']} = {static}")
    if st["springs"]:
        notes.append(f"{st['springs']} spring supports carry a reaction, so they count as redundants in the "
                     f"static count; they restrain nothing in the kinematic count")
    if m:
        notes.append(f"the structure is unstable: {m} independent mechanism{'s' if m != 1 else ''}")
        notes += descriptions
        if m > len(descriptions):
            notes.append(f"... and {m - len(descriptions)} more mechanisms")
    return notes


def _id_list(frame: Frame, members: np.ndarray, limit: int = 10) -> str:
    ids = [frame.member_ids[k] for k in members[:limit]]
    more = f" and {members.size - limit} more" if members.size > limit else ""
    return ", ".join(ids) + more


def _kinds(frame: Frame, members: np.ndarray) -> str:
    bars = int(frame.truss[members].sum())
    others = int(members.size - bars)
    words = []
    if bars:
        words.append(f"{bars} truss bar{'s' if bars != 1 else ''}")
    if others:
        words.append(f"{others} frame member{'s' if others != 1 else ''}")
    return ", ".join(words)


def _rigid_note(frame: Frame, options: AnalysisOptions) -> str | None:
    """Which members are axially rigid and why: the idealisation, their own property, or neither."""
    from .stiffness.dofs import axially_rigid

    m = frame.n_members
    if m == 0:
        return None
    rigid = axially_rigid(frame, options)
    if not (rigid.any() or options.inextensible):
        return None
    released = frame.releases[:, :, 0].any(axis=1)
    own = np.flatnonzero(frame.inextensible & rigid)
    parts = []
    if options.inextensible:
        by_option = np.flatnonzero(rigid & ~frame.inextensible)
        if by_option.size == m:
            parts.append(f"every member ({m}: {_kinds(frame, by_option)}) by the inextensible idealisation")
        elif by_option.size:
            parts.append(f"{by_option.size} of {m} members ({_kinds(frame, by_option)}) by the inextensible "
                         f"idealisation")
        else:
            parts.append("no member by the inextensible idealisation")
    if own.size:
        parts.append(f"{own.size} member{'s' if own.size != 1 else ''} by {'their' if own.size != 1 else 'its'} own "
                     f"property ({_id_list(frame, own)})")
    if options.inextensible:
        kept = np.flatnonzero(frame.extensible)
        if kept.size:
            parts.append(f"kept extensible by their own property: {_id_list(frame, kept)}")
        free = np.flatnonzero(released & ~frame.extensible)
        if free.size:
            parts.append(f"not rigid, their axial force is released: {_id_list(frame, free)}")
    return "axially rigid: " + "; ".join(parts)


# --------------------------------------------------------------------------- joint by joint
#: how the eliminated components are attributed, in words (printed under the joint table)
ATTRIBUTION_RULE = (
    "Each independent constraint takes away one unknown, in two steps. (1) A constraint that alone moves some "
    "components (no other constraint touches them) takes one of those: a rigid body or diaphragm takes its other "
    "nodes' components and writes them in terms of its first node; a rigid member whose one end nothing else "
    "ties takes a component of that end. (2) The other constraints are taken in turn (rigid members in the "
    "model's order, then rigid bodies, then diaphragms), each from what the ones before it left. In both steps, "
    "of the candidate components the constraint moves at least half as much as the most, it takes one of the "
    "joint that comes last in the model's list of joints; at that joint a translation before a rotation, the "
    "one moved most first, ties in the order ux, uy, uz. What it takes is written in terms of the remaining "
    "unknowns. A constraint that repeats others takes nothing: it is redundant (listed in the notes).")

# classes of a joint component in the by-joint count
_INACTIVE, _UNKNOWN, _RESTRAINED, _ELIMINATED, _FREE, _PINNED, _SKEW = range(7)
_REDUCED_WHY = {_FREE: "nothing attaches to it", _PINNED: "pinned end, condensed out",
                _SKEW: "turns freely (no member end holds it)"}


@dataclass(frozen=True)
class Elimination:
    """One joint component removed from the unknowns by an exact constraint.

    ``by`` is the member id, rigid-body or diaphragm name; ``kind`` 'axial',
    'rigid body' or 'diaphragm'; ``constraint`` the constraint in words;
    ``expressed_in`` the independent unknowns it is written in terms of, as
    ``(node id, (components...))`` pairs (empty: fixed, through the
    constraint, by the supports).
    """

    component: str
    by: str
    kind: str
    constraint: str
    expressed_in: tuple[tuple[str, tuple[str, ...]], ...]

    def text(self) -> str:
        what = {"axial": f"member {self.by} (axially rigid)", "rigid body": f"rigid body {self.by!r}",
                "diaphragm": f"diaphragm {self.by!r}"}.get(self.kind, self.by)
        if not self.expressed_in:
            return f"{self.component} by {what} held by the supports through it"
        terms = " and ".join(f"{node} {' '.join(comps)}" for node, comps in self.expressed_in)
        return f"{self.component} by {what} in terms of {terms}"


@dataclass(frozen=True)
class JointCount:
    """The count at one joint: ``dof + releases - restrained - eliminated - reduced = unknowns + own rotations``."""

    node_id: str
    label: str
    source: str | None
    components: tuple[str, ...]  # the analysed components of every joint
    unknowns: tuple[str, ...]
    restrained: tuple[str, ...]
    support: str  # 'fixed support', 'pin support', 'roller support', 'support' or ''
    eliminated: tuple[Elimination, ...]
    reduced: tuple[tuple[str, str], ...]  # (component or 'own rotation', why)
    releases: int  # released bending rotations of member ends here
    own_rotations: int  # of those, the ones that are unknowns
    own_members: tuple[str, ...] = ()  # member ids whose hinged end here has its own rotation
    entity: str = ""  # the IFC entity in words: the node's label, or the members meeting at a derived joint

    @property
    def count(self) -> int:
        """Independent unknowns at this joint."""
        return len(self.unknowns) + self.own_rotations

    def to_dict(self) -> dict:
        """The joint's entry of ``indeterminacy.joints`` (ARCHITECTURE.md)."""
        return {"unknowns": list(self.unknowns), "restrained": list(self.restrained),
                "eliminated": [{"component": e.component, "by": e.by} for e in self.eliminated],
                "own_rotations": int(self.own_rotations)}

    def short(self) -> str:
        """One short line: the unknowns, then what the support, constraints and reductions take."""
        parts = [f"{self.node_id}: " + (" ".join(self.unknowns) or "no unknowns")
                 + (f" + {self.own_rotations} own rotation{'s' if self.own_rotations != 1 else ''}"
                    if self.own_rotations else "")]
        if self.restrained:
            parts.append(f"held {' '.join(self.restrained)} ({self.support or 'support'})")
        if self.eliminated:
            parts.append("eliminated " + ", ".join(f"{e.component} by {e.by}" for e in self.eliminated))
        if self.reduced:
            parts.append(f"{len(self.reduced)} not unknowns")
        return "; ".join(parts)

    def details(self) -> str:
        """The joint's components in words."""
        parts = []
        if self.unknowns:
            parts.append("unknowns " + " ".join(self.unknowns))
        if self.own_rotations:
            parts.append(f"+ {self.own_rotations} own rotation{'s' if self.own_rotations != 1 else ''} of hinged or "
                         f"semi-rigid end{'s' if self.own_rotations != 1 else ''} ({', '.join(self.own_members)})")
        if self.restrained:
            parts.append(f"restrained {' '.join(self.restrained)} by its {self.support or 'support'}")
        if self.eliminated:
            parts.append("eliminated " + ", ".join(e.text() for e in self.eliminated))
        whys: dict[str, list[str]] = {}
        for comp, why in self.reduced:
            whys.setdefault(why, []).append(comp)
        for why, comps in whys.items():
            if comps[0] == "own rotation":
                parts.append(f"{len(comps)} own rotation{'s' if len(comps) != 1 else ''} of hinged ends condensed out")
            else:
                parts.append(f"not unknowns {' '.join(comps)}: {why}")
        return "; ".join(parts) or "nothing"


@dataclass(frozen=True)
class _JointData:
    """The by-joint classification as arrays (cheap to keep; `JointCount` objects are built on demand)."""

    frame: Frame
    active: tuple[int, ...]
    cls: np.ndarray  # (n,6) class of each component (_INACTIVE ...)
    by_row: np.ndarray  # (n,6) constraint row eliminating the component, -1
    rows: tuple  # ConstraintRow per row
    expr_ptr: np.ndarray  # (n*6+1,) CSR pointer over components into expr_node / expr_comp
    expr_node: np.ndarray
    expr_comp: np.ndarray
    releases: np.ndarray  # (n,)
    own: np.ndarray  # (n,)
    own_members: dict  # node -> [member id, ...]
    support: tuple[str, ...]  # per node
    terms: dict
    meeting: dict  # node -> member labels meeting there (joints derived from physical elements only)


def _joint_data(frame: Frame, dofs, R: np.ndarray, terms: dict) -> _JointData:
    """Classify every joint component (vectorised; linear in the model size)."""
    n, m = frame.n_nodes, frame.n_members
    active = tuple(dofs.active)
    cls = np.full((n, 6), _INACTIVE, dtype=np.int8)
    cls[:, list(active)] = _UNKNOWN
    cls[dofs.restrained] = _RESTRAINED
    by_row = np.full((n, 6), -1, dtype=np.int64)
    # joint rotations that are not unknowns: nothing attaches, or pinned ends condensed
    phys = {(int(k), int(c)) for k, c in _physical_unattached_aligned(frame, dofs, R)}
    for k, c in dofs.unattached:
        cls[k, c] = _FREE if (k, c) in phys else _PINNED
    # eliminated components: the constraint row each slave belongs to
    sr = dofs.slave_row
    slaves = np.flatnonzero(sr >= 0) if sr.size else np.zeros(0, np.int64)
    is_joint = dofs.x_comp[slaves] < 6
    slaves = slaves[is_joint]
    kinds = np.array([row.kind == "unattached" for row in dofs.rows], bool)
    inclined = np.array([row.kind == "support" for row in dofs.rows], bool)
    sk, sc = dofs.x_node[slaves], dofs.x_comp[slaves]
    skew = kinds[sr[slaves]] if slaves.size else np.zeros(0, bool)
    held = inclined[sr[slaves]] if slaves.size else np.zeros(0, bool)  # held by an inclined support
    cls[sk, sc] = np.where(skew, _SKEW, np.where(held, _RESTRAINED, _ELIMINATED))
    by_row[sk, sc] = sr[slaves]
    # what each eliminated component is written in: the independent unknowns in its row of T
    T = dofs.T.tocoo()
    masters = np.flatnonzero(sr < 0) if sr.size else np.arange(dofs.n_x)
    sel = (sr[T.row] >= 0) & (np.abs(T.data) > 1e-12) if sr.size else np.zeros(T.nnz, bool)
    trow, tmaster = T.row[sel], masters[T.col[sel]]
    key = 6 * dofs.x_node[trow] + dofs.x_comp[trow]  # the slave's joint component
    order = np.lexsort((dofs.x_comp[tmaster], dofs.x_node[tmaster], key))
    key, tmaster = key[order], tmaster[order]
    ptr = np.searchsorted(key, np.arange(6 * n + 1))
    # releases and own rotations per joint
    releases = np.zeros(n, np.int64)
    own = np.zeros(n, np.int64)
    own_members: dict[int, list[str]] = {}
    if m:
        user_rot = _own_rotation_ends(frame, dofs, R)
        kept = (dofs.hinge_dof >= 0).sum(axis=2)
        for end in (0, 1):
            np.add.at(releases, frame.members[:, end], user_rot[:, end].sum(axis=1))
            np.add.at(own, frame.members[:, end], kept[:, end])
        hinged_members, hinged_ends = np.nonzero(kept > 0)
        for k, e in zip(hinged_members.tolist(), hinged_ends.tolist()):
            own_members.setdefault(int(frame.members[k, e]), []).append(frame.member_ids[k])
    support = tuple(_support_words(dofs, k) for k in range(n))
    meeting: dict[int, list[str]] = {}
    if m and any(src is None for src in frame.node_sources):
        for k, (i, j) in enumerate(frame.members.tolist()):
            for node in (i, j):
                if frame.node_sources[node] is None:
                    meeting.setdefault(node, []).append(frame.member_labels[k])
    return _JointData(meeting=meeting, frame=frame, active=active, cls=cls, by_row=by_row, rows=tuple(dofs.rows), expr_ptr=ptr,
                      expr_node=dofs.x_node[tmaster], expr_comp=dofs.x_comp[tmaster], releases=releases, own=own,
                      own_members=own_members, support=support, terms=dict(terms))


def _physical_unattached_aligned(frame: Frame, dofs, R: np.ndarray) -> list:
    """Axis-aligned joint rotations nothing attaches to, without the ``condense_pinned`` device."""
    if not dofs.auto_released.any():
        return list(dofs.unattached)
    return [x for x in _physical_unattached(frame, dofs, R) if isinstance(x[1], (int, np.integer))]


def _support_words(dofs, node: int) -> str:
    if not dofs.restrained[node].any():
        return ""
    return f"{_support_kind(dofs, node)}support"


def _comp_name(c: int) -> str:
    from .model import DOF_NAMES

    return DOF_NAMES[c] if c < 6 else "own rotation"


def _build_joint_counts(d: _JointData) -> tuple[JointCount, ...]:
    frame = d.frame
    active = list(d.active)
    names = tuple(_comp_name(c) for c in active)
    kinds_of = d.cls[:, active].tolist() if frame.n_nodes else []  # (n, active) as Python ints
    all_unknown = [_UNKNOWN] * len(active)
    releases, own = np.asarray(d.releases).tolist(), np.asarray(d.own).tolist()
    out = []
    for k in range(frame.n_nodes):
        unknowns, restrained, eliminated, reduced = [], [], [], []
        kinds = kinds_of[k]
        if kinds == all_unknown:  # the common joint: every component an unknown
            unknowns = list(names)
            kinds = []
        for c, name, kind in zip(active, names, kinds):
            if kind == _UNKNOWN:
                unknowns.append(name)
            elif kind == _RESTRAINED:
                restrained.append(name)
            elif kind == _ELIMINATED:
                row = d.rows[int(d.by_row[k, c])]
                lo, hi = d.expr_ptr[6 * k + c], d.expr_ptr[6 * k + c + 1]
                groups: dict[str, list[str]] = {}
                for node, comp in zip(d.expr_node[lo:hi].tolist(), d.expr_comp[lo:hi].tolist()):
                    groups.setdefault(frame.node_ids[node], []).append(_comp_name(comp))
                eliminated.append(Elimination(name, row.owner, row.kind, row.label,
                                              tuple((nid, tuple(cs)) for nid, cs in groups.items())))
            else:
                reduced.append((name, _REDUCED_WHY[kind]))
        condensed_own = int(releases[k] - own[k])
        reduced += [("own rotation", "hinged member end, condensed out")] * condensed_own
        label = frame.node_labels[k]
        source = frame.node_sources[k]
        if source is None and k in d.meeting:
            meet = list(dict.fromkeys(d.meeting[k]))
            more = f" and {len(meet) - 3} more" if len(meet) > 3 else ""
            entity = f"{label}: where {', '.join(meet[:3])}{more} meet"
        elif source and source not in label:
            entity = f"{label} (source {source})"
        else:
            entity = label
        out.append(JointCount(node_id=frame.node_ids[k], label=label, source=source, components=names,
                              unknowns=tuple(unknowns), restrained=tuple(restrained), support=d.support[k],
                              eliminated=tuple(eliminated), reduced=tuple(reduced), releases=int(releases[k]),
                              own_rotations=int(own[k]),
                              own_members=tuple(dict.fromkeys(d.own_members.get(k, ()))), entity=entity))
    return tuple(out)


def joint_totals(joints: tuple[JointCount, ...]) -> dict:
    """The by-joint columns added up: the same keys as `TERM_KEYS`' sum plus ``kinematic``."""
    dof = len(joints[0].components) if joints else 0
    return {"joints": len(joints), "dof": dof * len(joints), "releases": sum(j.releases for j in joints),
            "restraints": sum(len(j.restrained) for j in joints),
            "constraints": sum(len(j.eliminated) for j in joints),
            "reductions": sum(len(j.reduced) for j in joints),
            "kinematic": sum(j.count for j in joints)}


def format_joint_table(ind: Indeterminacy, width: int = 100) -> str:
    """Fixed-width joint-by-joint table: one row per joint, its components in words, and the totals."""
    import textwrap

    joints = ind.joints
    t = ind.terms
    comps = ", ".join(joints[0].components) if joints else ""
    kind = "plane" if t["dof_per_joint"] == 3 else "space"
    lines = [f"Joint by joint ({kind} frame: {comps} at every joint)", "",
             f"  {'joint':<14}{'DOF':>5}{'+rel':>6}{'-sup':>6}{'-con':>6}{'-red':>6}{'=unk':>6}   IFC entity"]
    rule = "  " + "-" * (width - 4)
    lines.append(rule)
    for j in joints:
        lines.append(f"  {j.node_id:<14}{len(j.components):>5}{j.releases:>6}{len(j.restrained):>6}"
                     f"{len(j.eliminated):>6}{len(j.reduced):>6}{j.count:>6}   {j.entity}")
        lines += textwrap.wrap(j.details(), width=width, initial_indent=" " * 6, subsequent_indent=" " * 8)
    lines.append(rule)
    s = joint_totals(joints)
    lines.append(f"  {'total':<14}{s['dof']:>5}{s['releases']:>6}{s['restraints']:>6}{s['constraints']:>6}"
                 f"{s['reductions']:>6}{s['kinematic']:>6}   {s['joints']} joints")
    lines.append(f"  = joints x DOF per joint + releases - restraints - constraints - reductions = "
                 f"{t['joints']} x {t['dof_per_joint']} + {t['releases']} - {t['restraints']} - {t['constraints']} - "
                 f"{t['reductions']} = {ind.kinematic} (kinematic indeterminacy)")
    if t["redundant_constraints"]:
        lines.append(f"  {t['redundant_constraints']} redundant constraints take nothing away (see the notes)")
    lines.append("")
    lines += textwrap.wrap(ATTRIBUTION_RULE, width=width, initial_indent="  ", subsequent_indent="  ")
    return "\n".join(lines)
