"""Direct-stiffness analysis of a `Frame`: assemble once, factor once, solve all cases.

Flow: number the unknowns (`dofs.build_dofs`) → batched member matrices
``(m,12,12)`` (or ``(m,24,24)`` with own end rotations) → one COO→CSR
scatter → eliminate supports and exact constraints (``x = T q + x0``) →
factor the reduced matrix once → solve every load case as one block →
recover reactions, constraint forces and member end forces. Combinations
are superpositions of case results.
"""
from __future__ import annotations

import dataclasses
import logging
import time

import numpy as np
import scipy.sparse as sp

from ..collector import pauses_collector
from ..errors import Diagnostic, ModelError, UnstableStructureError
from ..model import DOF_NAMES, AnalysisOptions, Frame, member_axes, member_lengths
from .dofs import DofSystem, axially_rigid, build_dofs
from .elements import compliances, condense, end_transformation, local_stiffness
from .loads import CaseLoads, case_loads, generic_fixed_end_forces, uniform_fixed_end_forces
from .solvers import SingularStiffness, factorize

__all__ = ["analyze", "assemble", "Assembly", "find_mechanisms", "describe_mechanism"]

log = logging.getLogger(__name__)


class Assembly:
    """Member matrices and the global stiffness of a frame under a `DofSystem`."""

    def __init__(self, frame: Frame, dofs: DofSystem, options: AnalysisOptions):
        self.frame, self.dofs, self.options = frame, dofs, options
        m, n = frame.n_members, frame.n_nodes
        self.R = member_axes(frame) if m else np.zeros((0, 3, 3))
        self.L = member_lengths(frame) if m else np.zeros(0)
        self.Te = end_transformation(self.R, frame.offsets)
        shear = options.shear
        # truss bars: bending and torsion are released (condensed) below, so any positive
        # stand-in for I and J gives the same axial-only matrix; A² keeps the units
        stand_in = np.where(frame.truss, frame.A**2, 0.0)
        Iy = np.where(frame.truss, stand_in, frame.Iy)
        Iz = np.where(frame.truss, stand_in, frame.Iz)
        J = np.where(frame.truss, stand_in, frame.J)
        G = np.where(frame.truss & ~(frame.G > 0), frame.E, frame.G)
        Avy, Avz = (frame.Avy, frame.Avz) if shear else (None, None)
        self.k = local_stiffness(self.L, frame.E, G, frame.A, Iy, Iz, J, Avy, Avz)
        # the same constants as the matrix, so fixed-end forces of bars under transverse loads exist
        self.compliance = compliances(frame.E, G, frame.A, Iy, Iz, J, Avy, Avz)
        self.released = dofs.condensed.reshape(m, 12)
        self.kc, self.condense_loads, self._recover = condense(self.k, self.released)
        self.N6 = 6 * n
        self.hinge_slots = dofs.hinge_dof.reshape(m, 12)  # x index or -1
        self.n_joint_x = dofs.n_x - dofs.n_hinges
        self.n_ext = self.N6 + dofs.n_hinges
        self.x_ext = self._x_to_ext()
        self._element_map: tuple[np.ndarray, np.ndarray] | None = None
        self.K_full = self._assemble()

    def _x_to_ext(self) -> np.ndarray:
        """ext index (0..6n-1 joint components, 6n.. own end rotations) of every unknown x."""
        d = self.dofs
        x_ext = np.empty(d.n_x, dtype=np.int64)
        nd = d.node_dof.reshape(-1)
        sel = nd >= 0
        x_ext[nd[sel]] = np.flatnonzero(sel)
        h = d.hinge_dof.reshape(-1)
        hs = h[h >= 0]
        x_ext[hs] = self.N6 + (hs - self.n_joint_x)
        return x_ext

    def element_map(self):
        """(A (m,12,w), idx (m,w)): local end displacements = A @ ext values at idx (built once)."""
        if self._element_map is None:
            self._element_map = self._build_element_map()
        return self._element_map

    def _build_element_map(self):
        m = self.frame.n_members
        i, j = self.frame.members[:, 0].astype(np.int64), self.frame.members[:, 1].astype(np.int64)
        comp = np.arange(6)
        idx_nodes = np.concatenate([6 * i[:, None] + comp, 6 * j[:, None] + comp], axis=1)
        if self.dofs.n_hinges == 0:
            return self.Te, idx_nodes
        A = np.zeros((m, 12, 24))
        A[:, :, :12] = self.Te
        hs = self.hinge_slots
        kept = hs >= 0
        rows, slots = np.nonzero(kept)
        A[rows, slots, 12 + slots] = 1.0
        idx_h = np.where(kept, self.N6 + (hs - self.n_joint_x), -1)
        return A, np.concatenate([idx_nodes, idx_h], axis=1)

    def _assemble(self) -> sp.csr_array:
        A, idx = self.element_map()
        Ke = np.swapaxes(A, 1, 2) @ self.kc @ A  # (m,w,w)
        w = idx.shape[1]
        r = np.broadcast_to(idx[:, :, None], (idx.shape[0], w, w)).ravel()
        c = np.broadcast_to(idx[:, None, :], (idx.shape[0], w, w)).ravel()
        v = Ke.ravel()
        keep = (r >= 0) & (c >= 0) & (v != 0.0)
        r, c, v = r[keep], c[keep], v[keep]
        sr, sc, sv = self._end_spring_entries()
        if sv.size:
            r, c, v = np.concatenate([r, sr]), np.concatenate([c, sc]), np.concatenate([v, sv])
        return sp.coo_array((v, (r, c)), shape=(self.n_ext, self.n_ext)).tocsr()

    def _end_spring_entries(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(rows, cols, values) of the semi-rigid end springs. A kept end slot's own unknown is the end's
        rotation relative to its joint (`element_map`: joint part plus own part), so a spring k there stores
        k/2 θ_own²: one diagonal entry per sprung end."""
        hinge = self.dofs.hinge_dof
        k_all = self.frame.end_springs
        mk, end, slot = np.nonzero((k_all > 0) & (hinge >= 0))
        h = self.N6 + (hinge[mk, end, slot] - self.n_joint_x)  # ext index of the end's own rotation
        return h, h, k_all[mk, end, slot]


def assemble(frame: Frame, options: AnalysisOptions | None = None) -> tuple[DofSystem, Assembly]:
    options = options or AnalysisOptions()
    dofs = build_dofs(frame, options)
    return dofs, Assembly(frame, dofs, options)


def reduced_stiffness(asm: Assembly) -> tuple[sp.csr_array, sp.csr_array, np.ndarray]:
    """(K_xx with springs, K_q = Tᵀ K_xx T, spring diagonal over x)."""
    d = asm.dofs
    K = asm.K_full
    xe = asm.x_ext
    Kxx = K[xe][:, xe]
    springs = np.zeros(d.n_x)
    joint = xe < asm.N6
    springs[joint] = asm.frame.springs.reshape(-1)[xe[joint]]
    if springs.any():
        Kxx = (Kxx + sp.diags_array(springs)).tocsr()
    T = d.T
    Kq = Kxx if d.rank == 0 and T.shape[0] == T.shape[1] else (T.T @ Kxx @ T).tocsr()
    return sp.csr_array(Kxx), sp.csr_array(Kq), springs


@pauses_collector
def analyze(frame: Frame, options: AnalysisOptions | None = None, *, progress=None, keep: dict | None = None):
    """Analyse every load case and combination of ``frame``.

    Parameters
    ----------
    frame : the analytical model (SI units).
    options : the idealisation and solver; defaults to `AnalysisOptions()`.
    progress : optional callable(step: str) told about each long step.
    keep : optional dict that receives the assembly, the reduced stiffness and its factor
        (``asm``, ``dofs``, ``Kq``, ``Kxx``, ``springs``, ``factor``) for reuse.

    Returns
    -------
    analysis.results.Results

    Raises
    ------
    UnstableStructureError
        The structure is a mechanism; the message names the free nodes and
        directions.
    ModelError
        The model is inconsistent (e.g. a settlement that contradicts a
        rigid constraint).

    Notes
    -----
    With ``options.plane`` left at None, a frame whose nodes and loads all
    lie in one world plane but which is a mechanism only out of that plane
    (a portal on pinned bases, say) is analysed as a plane frame, with a
    warning in the diagnostics; ``plane=False`` insists on the space frame.
    """
    options = options or AnalysisOptions()
    if options.second_order or options.buckling or options.modes:
        from .extended import extended_analysis

        first = dataclasses.replace(options, second_order=False, buckling=0, modes=0)
        kept: dict = {} if keep is None else keep
        res = analyze(frame, first, progress=progress, keep=kept)
        res.options = dataclasses.replace(res.options, second_order=options.second_order, buckling=options.buckling,
                                          modes=options.modes, mass=options.mass, subdivisions=options.subdivisions)
        return extended_analysis(res, progress, kept)
    if options.plane is None:
        try:
            return _analyze(frame, options, progress, keep)
        except UnstableStructureError as exc:
            from .dofs import in_plane_problem

            if in_plane_problem(frame) is None:
                raise
            plane_options = dataclasses.replace(options, plane=True)
            try:
                res = _analyze(frame, plane_options, progress, keep)
            except UnstableStructureError:
                raise exc from None
            res.diagnostics = (Diagnostic(
                "warning", None,
                "the frame is a mechanism out of its own plane (" + "; ".join(exc.mechanisms[:1]) + "); its "
                "nodes and loads all lie in one plane, so it was analysed as a plane frame: brace it out of "
                "plane or check that a plane analysis is what you mean"),) + tuple(res.diagnostics)
            return res
    return _analyze(frame, options, progress, keep)


def _analyze(frame: Frame, options: AnalysisOptions, progress=None, keep: dict | None = None):
    """The analysis proper; ``keep``, when given, receives the assembly and the factor for reuse."""
    from ..results import CaseResult, Results

    say = progress or (lambda step: None)
    timings: dict[str, float] = {}
    t0 = time.perf_counter()
    say("numbering unknowns")
    dofs = build_dofs(frame, options)
    say("assembling")
    asm = Assembly(frame, dofs, options)
    Kxx, Kq, springs = reduced_stiffness(asm)
    timings["assembly"] = time.perf_counter() - t0
    diagnostics: list[Diagnostic] = []

    cases = list(frame.load_cases)
    loads = [case_loads(frame, c, asm.R, asm.L) for c in cases]
    F_ext, u_r, fef = _load_vectors(asm, cases, loads, diagnostics)

    t1 = time.perf_counter()
    say("factorising")
    try:
        factor = factorize(Kq, options.solver)
    except SingularStiffness:
        modes = find_mechanisms(asm, Kq)
        texts = [describe_mechanism(asm, mode) for mode in modes] or ["the stiffness matrix is singular"]
        count = len(modes) or 1
        raise UnstableStructureError(
            f"the structure is unstable ({count} independent mechanism{'s' if count != 1 else ''}): " + "; ".join(texts),
            mechanisms=tuple(texts)) from None
    if keep is not None:
        keep.update(dofs=dofs, asm=asm, Kxx=Kxx, Kq=Kq, springs=springs, factor=factor)
    say("solving")
    xe = asm.x_ext
    nc = len(cases)
    x0 = dofs.particular(u_r)
    r_ext = np.flatnonzero(dofs.restrained.reshape(-1))
    K = asm.K_full
    rhs = F_ext[xe] - K[xe][:, r_ext] @ u_r[r_ext] - Kxx @ x0
    T = dofs.T
    q = factor.solve(T.T @ rhs) if nc else np.zeros((Kq.shape[0], 0))
    q = q.reshape(Kq.shape[0], nc)
    x = T @ q + x0
    timings["solve"] = time.perf_counter() - t1

    say("recovering forces")
    u_ext = np.zeros((asm.n_ext, nc))
    u_ext[xe] = x
    u_ext[r_ext] = u_r[r_ext]
    lam = _constraint_forces(asm, F_ext, u_ext, springs, x)
    reactions = _reactions(asm, F_ext, u_ext, lam)
    end_forces, end_disp = _end_forces(asm, u_ext, fef, lam)
    _chord_rotations_of_bars(asm, end_disp)
    disp = u_ext[: asm.N6].reshape(frame.n_nodes, 6, nc)
    _fill_unattached_rotations(asm, disp, end_disp)

    results: dict[str, CaseResult] = {}
    for c, case in enumerate(cases):
        results[case.name] = CaseResult(
            name=case.name, kind="case", displacements=disp[:, :, c].copy(),
            reactions=reactions[:, :, c].copy(), end_forces=end_forces[:, :, c].reshape(-1, 2, 6).copy(),
            end_displacements=end_disp[:, :, c].copy(), loads=loads[c], factors=((case.name, 1.0),))
    for combo in frame.combinations:
        results[combo.name] = CaseResult.combine(combo.name, [(results[n], f) for n, f in combo.factors], frame)
    timings["total"] = time.perf_counter() - t0
    if axially_rigid(frame, options).any():
        if dofs.redundant_rows:
            diagnostics.append(Diagnostic("warning", None,
                                          "some axially rigid members form a redundant set: their axial forces are "
                                          "not determined by the rigid idealisation; the values shown are the "
                                          "smallest forces in equilibrium"))
    res = Results(frame=frame, options=options, dofs=dofs, R=asm.R, L=asm.L, cases=results,
                  diagnostics=tuple(diagnostics), solver=factor.name, n_unknowns=int(Kq.shape[0]),
                  timings=timings)
    res.check_equilibrium()
    return res


def _load_vectors(asm: Assembly, cases, loads: list[CaseLoads], diagnostics):
    frame, dofs = asm.frame, asm.dofs
    m, n, nc = frame.n_members, frame.n_nodes, len(cases)
    fef = np.zeros((m, 12, nc))
    for c, ld in enumerate(loads):
        if np.any(ld.uniform):
            fef[:, :, c] += uniform_fixed_end_forces(ld.uniform, asm.L)
        for k, loading in ld.generic.items():
            fef[k, :, c] += generic_fixed_end_forces(loading, asm.L[k], asm.compliance[k], asm.options.shear)
        if ld.thermal is not None and np.any(ld.thermal):
            # a member held at both ends against its free thermal strain α ΔT: N = -E A α ΔT
            heated = np.flatnonzero(ld.thermal)
            rigid = axially_rigid(frame, asm.options)[heated]
            if rigid.any():
                k = int(heated[np.argmax(rigid)])
                raise ModelError(f"load case {cases[c].name!r}: member {frame.member_labels[k]} is axially rigid and "
                                 "cannot take a temperature change (analyse it extensible)")
            push = frame.E[heated] * frame.A[heated] * frame.alpha[heated] * ld.thermal[heated]
            fef[heated, 0, c] += push
            fef[heated, 6, c] -= push
    # truss members: only axial terms of the fixed-end forces stay after condensation
    fef_c = asm.condense_loads(fef)
    A, idx = asm.element_map()
    F_ext = np.zeros((asm.n_ext, nc))
    contrib = -np.swapaxes(A, 1, 2) @ fef_c  # (m,w,nc)
    keep = idx >= 0
    for c in range(nc):
        np.add.at(F_ext[:, c], idx[keep], contrib[:, :, c][keep])
        F_ext[: asm.N6, c] += loads[c].nodal.reshape(-1)
    u_r = np.zeros((asm.N6, nc))
    for c, case in enumerate(cases):
        for s in case.settlements:
            k = frame.node_index(s.node)
            comp = DOF_NAMES.index(s.dof)
            if comp in dofs.active:
                u_r[6 * k + comp, c] = s.value
    # loads that the analysis cannot carry
    active = np.zeros(6, bool)
    active[list(dofs.active)] = True
    nodal = F_ext[: asm.N6].reshape(n, 6, nc)
    if dofs.plane_axis is not None:
        outside = np.abs(nodal[:, ~active, :]).max() if nc and nodal.size else 0.0
        if outside > 1e-9 * max(np.abs(nodal).max() if nodal.size else 0.0, 1e-300):
            diagnostics.append(Diagnostic("warning", None,
                                          "loads acting out of the plane of a plane analysis are ignored"))
    scale = max(np.abs(F_ext).max(), 1e-300) if F_ext.size else 1.0
    for node, comp in dofs.unattached:
        if nc and np.abs(nodal[node, comp]).max() > 1e-9 * scale:
            raise UnstableStructureError(
                f"node {frame.node_labels[node]} carries a moment about {'XYZ'[comp - 3]} but every member "
                f"meets it through a hinge, so nothing resists it",
                mechanisms=(f"node {frame.node_labels[node]} turns about {'XYZ'[comp - 3]} freely",))
    return F_ext, u_r, fef


def _constraint_forces(asm: Assembly, F_ext, u_ext, springs, x) -> np.ndarray:
    """Multipliers λ (rows, nc) of the exact constraints: Cᵀλ = F - K u - k_s u on the unknowns."""
    d = asm.dofs
    nc = F_ext.shape[1]
    lam = np.zeros((d.C.shape[0], nc))
    if d.C.shape[0] == 0:
        return lam
    xe = asm.x_ext
    res = F_ext[xe] - asm.K_full[xe] @ u_ext - springs[:, None] * x
    C = d.C
    if d.direct:
        # a direct row alone touches its pivot column: λ = residual there / pivot
        rows1, slaves1, pivots1, _ = d.direct
        lam[rows1] = res[slaves1] / pivots1[:, None]
        res = res - C[rows1].T @ lam[rows1]
    for ridx, cidx in d.groups:
        M = C[ridx][:, cidx].toarray()
        lam[ridx] = np.linalg.lstsq(M.T, res[cidx], rcond=None)[0]
    return lam


def _reactions(asm: Assembly, F_ext, u_ext, lam) -> np.ndarray:
    frame, d = asm.frame, asm.dofs
    n, nc = frame.n_nodes, F_ext.shape[1]
    r = np.zeros((asm.N6, nc))
    rr = np.flatnonzero(d.restrained.reshape(-1))
    r[rr] = asm.K_full[rr] @ u_ext - F_ext[rr]
    if d.C_r.shape[0]:
        r[rr] += (d.C_r.T @ lam)[rr]
    springs = frame.springs.reshape(-1)
    sp_idx = np.flatnonzero(springs > 0)
    r[sp_idx] -= springs[sp_idx, None] * u_ext[sp_idx]
    held = [k for k, row in enumerate(d.rows) if row.kind == "support"]
    if held:  # an inclined support's reaction is the force of its constraint rows, -Cᵀλ
        c = d.C[held].tocoo()
        np.add.at(r, asm.x_ext[c.col], -c.data[:, None] * lam[held][c.row])
    return r.reshape(n, 6, nc)


def _end_forces(asm: Assembly, u_ext, fef, lam):
    """Member end forces (m,12,nc) in member axes (nodes on member) and end displacements."""
    A, idx = asm.element_map()
    vals = np.where(idx[:, :, None] >= 0, u_ext[np.maximum(idx, 0)], 0.0)  # (m,w,nc)
    d = A @ vals  # (m,12,nc)
    d = asm._recover(d, fef)
    f = asm.k @ d + fef
    rows = asm.dofs.rows
    for r, row in enumerate(rows):
        if row.kind == "axial":
            k = asm.frame.member_index(row.owner)
            f[k, 0, :] -= lam[r]
            f[k, 6, :] += lam[r]
    return f, d


def _chord_rotations_of_bars(asm: Assembly, end_disp) -> None:
    """Axial-only bars have no bending stiffness: their end rotations are those of the chord."""
    bars = np.flatnonzero(asm.frame.truss)
    if bars.size == 0:
        return
    d = end_disp[bars]  # (b,12,nc)
    L = asm.L[bars][:, None]
    rz = (d[:, 7] - d[:, 1]) / L
    ry = -(d[:, 8] - d[:, 2]) / L
    d[:, 5], d[:, 11] = rz, rz
    d[:, 4], d[:, 10] = ry, ry
    d[:, 3], d[:, 9] = 0.0, 0.0
    end_disp[bars] = d


def _fill_unattached_rotations(asm: Assembly, disp, end_disp) -> None:
    """A joint rotation no member attaches to is reported as the first hinged member end's rotation."""
    frame = asm.frame
    if not asm.dofs.unattached:
        return
    ends: dict[int, tuple[int, int]] = {}
    for k, (i, j) in enumerate(frame.members):
        ends.setdefault(int(i), (k, 0))
        ends.setdefault(int(j), (k, 1))
    for node, comp in asm.dofs.unattached:
        k, end = ends[node]
        rot_local = end_disp[k, 6 * end + 3: 6 * end + 6]  # (3,nc)
        disp[node, comp] = (asm.R[k].T @ rot_local)[comp - 3]


def find_mechanisms(asm: Assembly, Kq, limit: int = 6) -> list[np.ndarray]:
    """Independent zero-stiffness modes of the reduced system, as x vectors (n_x,)."""
    import scipy.linalg

    n = Kq.shape[0]
    diag = Kq.diagonal()
    zero = np.flatnonzero(diag <= 0)
    safe = np.where(diag > 0, diag, 1.0)
    s = 1.0 / np.sqrt(safe)
    Ks = sp.diags_array(s) @ Kq @ sp.diags_array(s)
    modes_q: list[np.ndarray] = []
    for z in zero[:limit]:
        e = np.zeros(n)
        e[z] = 1.0
        modes_q.append(e)
    if len(modes_q) < limit:
        if n <= 3000:
            w, V = scipy.linalg.eigh(Ks.toarray())
            small = np.flatnonzero(w < 1e-9 * max(w.max(), 1.0))
            cand = [V[:, k] * s for k in small]
        else:
            # block inverse iteration: a single-vector Lanczos stalls on many exactly zero eigenvalues
            from ..indeterminacy import block_null_space

            w, V, _ = block_null_space(Ks, most=limit + zero.size + 2)
            # the factorisation failed, so these are what made it fail: modes softer than the shift
            # (condensation round-off leaves true mechanisms of a large model at ~1e-9, not at 0)
            small = np.flatnonzero(w < 1e-6)
            cand = [V[:, k] * s for k in small]
        for v in cand:
            if zero.size:
                v = v.copy()
                v[zero] = 0.0
                if np.linalg.norm(v) < 1e-12:
                    continue
            modes_q.append(v)
            if len(modes_q) >= limit:
                break
    return [asm.dofs.T @ v for v in modes_q]


def describe_mechanism(asm: Assembly, x: np.ndarray) -> str:
    """Plain words for one mechanism mode: which nodes move how, and what they hang on."""
    frame, d = asm.frame, asm.dofs
    n = frame.n_nodes
    u = np.zeros(asm.n_ext)
    u[asm.x_ext] = x
    size = max(float(np.ptp(frame.nodes, axis=0).max()) if n else 1.0, 1.0)
    nodal = u[: asm.N6].reshape(n, 6).copy()
    nodal[:, 3:] *= size
    mag = np.abs(nodal)
    top = mag.max()
    if top == 0:
        hinge = np.flatnonzero(np.abs(u[asm.N6:]) > 0)
        return "a hinged member end turns freely" if hinge.size else "a free motion"
    words = []
    moving = np.argwhere(mag > 0.2 * top)
    by_node: dict[int, list[str]] = {}
    for node, comp in moving:
        axis = "XYZ"[comp % 3]
        by_node.setdefault(int(node), []).append(f"translate in {axis}" if comp < 3 else f"rotate about {axis}")
    # nodes that translate first (largest first), then nodes that only turn
    trans = np.abs(nodal[:, :3]).max(axis=1)
    order = sorted(by_node, key=lambda k: (not bool(trans[k] > 0.2 * top), -float(mag[k].max())))
    by_node = {k: by_node[k] for k in order}
    for node, what in list(by_node.items())[:4]:
        attached = [frame.member_labels[k] for k in np.flatnonzero((frame.members == node).any(axis=1))]
        pinned = [frame.member_labels[k] for k in np.flatnonzero((frame.members == node).any(axis=1))
                  if frame.truss[k] or frame.releases[k, :, 4:6].any()]
        text = f"node {frame.node_labels[node]} can {' and '.join(dict.fromkeys(what))} with no resistance"
        if attached:
            text += f" (members {', '.join(attached)}"
            if pinned and len(pinned) == len(attached):
                text += ", all pinned or axial-only"
            text += ")"
        else:
            text += " (no member holds it)"
        if not d.restrained[node].any():
            text += ", no support holds it"
        words.append(text)
    if len(by_node) > 4:
        words.append(f"and {len(by_node) - 4} more nodes move with them")
    return "; ".join(words)
