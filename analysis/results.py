"""Results of an analysis: displacements, reactions, member forces, diagrams, envelopes.

All values SI. Displacements ``(n,6)`` and reactions ``(n,6)`` are in global
axes; reactions are the forces the supports (and springs) exert on the
structure. ``end_forces (m,2,6)`` are the forces the nodes exert on each
member end, in member axes. Internal forces along a member follow the
positive-face rule (see `analysis.stiffness.elements`): N > 0 tension.
"""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import Diagnostic
from .model import ACTION_NAMES, DOF_NAMES, REACTION_NAMES, AnalysisOptions, Frame, member_ends
from .stiffness.loads import _GAUSS_W, _GAUSS_X, CaseLoads, MemberLoading, internal_forces

if TYPE_CHECKING:
    from .stiffness.dofs import DofSystem

__all__ = ["CaseResult", "Results", "MemberDiagram", "SCHEMA", "member_properties"]

SCHEMA = "plumbframe.results/1"


def member_properties(frame: Frame, k: int) -> dict:
    """The ``material`` and ``section`` entries of member ``k`` in the results JSON (SI, with their sources), and
    ``end_springs`` (N*m/rad per end and action) where the member has semi-rigid ends."""
    return _member_property_entries(frame, np.array([k]))[0]


def _member_property_entries(frame: Frame, ks: np.ndarray) -> list[dict]:
    """`member_properties` of the members ``ks``, their numbers read from whole columns."""
    ks = np.asarray(ks, dtype=np.intp)
    E, G, rho, A, Iy, Iz, J = (np.asarray(a, float)[ks].tolist() for a in
                               (frame.E, frame.G, frame.density, frame.A, frame.Iy, frame.Iz, frame.J))
    out = []
    for n, k in enumerate(ks.tolist()):
        entry = {
            "material": {"name": frame.material_names[k], "E": E[n], "G": G[n], "density": rho[n],
                         "source": frame.material_sources[k]},
            "section": {"name": frame.section_names[k], "A": A[n], "Iy": Iy[n], "Iz": Iz[n], "J": J[n],
                        "source": frame.section_sources[k]},
        }
        out.append(entry)
    sprung: list[int] = np.flatnonzero(frame.end_springs[ks].any(axis=(1, 2))).tolist() if len(ks) else []
    for n in sprung:
        springs = frame.end_springs[ks[n]]
        out[n]["end_springs"] = {end: {ACTION_NAMES[c]: float(springs[e, c]) for c in range(6) if springs[e, c] > 0}
                                 for e, end in enumerate(("i", "j")) if springs[e].any()}
    return out


@dataclass
class CaseResult:
    """One load case or combination."""

    name: str
    kind: str  # 'case' | 'combination'
    displacements: np.ndarray  # (n,6)
    reactions: np.ndarray  # (n,6)
    end_forces: np.ndarray  # (m,2,6) nodes on member, member axes
    end_displacements: np.ndarray  # (m,12) member-end displacements in member axes
    loads: CaseLoads
    factors: tuple[tuple[str, float], ...] = ()
    equilibrium_residual: float = math.nan
    # second order: the IFC members' diagrams come from their subdivided solution (n_stations -> diagrams)
    diagrams: Callable[[int], list[MemberDiagram]] | None = field(default=None, repr=False)

    @classmethod
    def combine(cls, name: str, parts: list[tuple["CaseResult", float]], frame: Frame) -> "CaseResult":
        n, m = frame.n_nodes, frame.n_members
        disp = np.zeros((n, 6))
        reac = np.zeros((n, 6))
        ef = np.zeros((m, 2, 6))
        ed = np.zeros((m, 12))
        loads = CaseLoads(nodal=np.zeros((n, 6)), uniform=np.zeros((m, 3)), generic={})
        for part, f in parts:
            disp += f * part.displacements
            reac += f * part.reactions
            ef += f * part.end_forces
            ed += f * part.end_displacements
            loads.scaled_add(part.loads, f)
        return cls(name=name, kind="combination", displacements=disp, reactions=reac, end_forces=ef,
                   end_displacements=ed, loads=loads, factors=tuple((p.name, f) for p, f in parts))


@dataclass(frozen=True)
class MemberDiagram:
    """Internal forces and deflections along one member (member axes)."""

    stations: np.ndarray  # (s,) m from end i
    forces: np.ndarray  # (s,6) N, Vy, Vz, T, My, Mz
    deflections: np.ndarray  # (s,2) dy, dz (axis deflection incl. nodal displacements)

    def __getitem__(self, key: str) -> np.ndarray:
        if key in ACTION_NAMES:
            return self.forces[:, ACTION_NAMES.index(key)]
        if key in ("dy", "dz"):
            return self.deflections[:, ("dy", "dz").index(key)]
        raise KeyError(key)


@dataclass(frozen=True)
class DiagramBlock:
    """Every member's diagram of one case end to end, in member order (`Results.diagram_block`).

    Member k's stations are ``stations[starts[k]:starts[k] + sizes[k]]``, and
    the same rows of ``forces`` and ``deflections`` are its values there.
    """

    sizes: np.ndarray  # (m,) stations per member
    starts: np.ndarray  # (m,) first row of each member
    stations: np.ndarray  # (S,)
    forces: np.ndarray  # (S,6)
    deflections: np.ndarray  # (S,2)


def join_diagrams(diagrams: Sequence[MemberDiagram]) -> DiagramBlock:
    """Diagrams end to end as one `DiagramBlock`, in the order given."""
    sizes = np.array([len(dg.stations) for dg in diagrams], dtype=np.int64)
    return DiagramBlock(
        sizes=sizes, starts=np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64),
        stations=np.concatenate([dg.stations for dg in diagrams]) if len(diagrams) else np.zeros(0),
        forces=np.concatenate([dg.forces for dg in diagrams]) if len(diagrams) else np.zeros((0, 6)),
        deflections=np.concatenate([dg.deflections for dg in diagrams]) if len(diagrams) else np.zeros((0, 2)))


class _BlockDiagrams:
    """The members' diagrams of a `DiagramBlock`, made when first asked for (a sequence like the list).

    Most of a large model's diagrams are only ever read through the block
    (writer, JSON, envelopes); the per-member objects cost a tenth of a second
    per case and 28,000 members.
    """

    __slots__ = ("block", "_made")

    def __init__(self, block: DiagramBlock) -> None:
        self.block = block
        self._made: dict[int, MemberDiagram] = {}

    def __len__(self) -> int:
        return len(self.block.sizes)

    def __getitem__(self, k: int) -> MemberDiagram:
        if not -len(self) <= k < len(self):
            raise IndexError(k)
        k %= len(self)  # a negative index names the same member (and its one object)
        dg = self._made.get(k)
        if dg is None:
            b = self.block
            a = int(b.starts[k])
            rows = slice(a, a + int(b.sizes[k]))
            dg = self._made[k] = MemberDiagram(stations=b.stations[rows], forces=b.forces[rows],
                                               deflections=b.deflections[rows])
        return dg


@dataclass
class Results:
    """Everything one analysis produced (see module docstring)."""

    frame: Frame
    options: AnalysisOptions
    dofs: DofSystem
    R: np.ndarray
    L: np.ndarray
    cases: dict[str, CaseResult]
    diagnostics: tuple[Diagnostic, ...] = ()
    solver: str = ""
    n_unknowns: int = 0
    timings: dict = field(default_factory=dict)
    _diagram_cache: dict = field(default_factory=dict, repr=False)
    # beyond first order (analysis.stiffness.extended; JSON keys in analysis.stiffness.extended_json)
    theory: str = "first-order"
    first_order_cases: dict[str, CaseResult] | None = None
    buckling: dict | None = None
    modes: list | None = None
    mass: Any = None

    # ------------------------------------------------------------------ basics
    @property
    def dimension(self) -> int:
        return 2 if self.dofs.plane_axis is not None else 3

    @property
    def active_components(self) -> tuple[int, ...]:
        return self.dofs.active

    def case(self, name: str) -> CaseResult:
        try:
            return self.cases[name]
        except KeyError:
            raise KeyError(f"no load case or combination named {name!r}; have {', '.join(self.cases)}") from None

    # ------------------------------------------------------------------ diagrams
    def diagram(self, case: str, member: str | int, n_stations: int | None = None) -> MemberDiagram:
        """Internal forces and deflections along a member, exact at load points and extremes."""
        k = member if isinstance(member, (int, np.integer)) else self.frame.member_index(member)
        n_st = n_stations or self.options.stations
        key = (case, n_st)
        if key not in self._diagram_cache:
            diagrams, block = self._case_diagrams(self.case(case), n_st)
            self._diagram_cache[key] = diagrams
            if block is not None:
                self._diagram_cache[("block", case, n_st)] = block
        return self._diagram_cache[key][int(k)]

    def diagram_block(self, case: str) -> DiagramBlock:
        """Every member's `diagram` of a case (default stations) as one block of arrays (cached).

        Where every member is loaded uniformly the batched closed forms made
        the block already; otherwise the members' diagrams are joined.
        """
        n_st = self.options.stations
        key = ("block", case, n_st)
        hit = self._diagram_cache.get(key)
        if hit is None:
            m = self.frame.n_members
            if m:
                self.diagram(case, 0)  # every member's diagram, and the block where the closed forms made one
            hit = self._diagram_cache.get(key)
            if hit is None:
                hit = self._diagram_cache[key] = join_diagrams([self.diagram(case, k) for k in range(m)])
        return hit

    def warm_diagrams(self) -> None:
        """Compute every member's diagram of every case now (they are cached), e.g. before a fork."""
        if self.frame.n_members:
            for name in self.cases:
                self.diagram(name, 0)

    def _case_diagrams(self, cr: CaseResult, n_st: int) -> tuple[list[MemberDiagram], DiagramBlock | None]:
        """All members of one case: batched closed forms where loads are uniform, quadrature elsewhere; and
        the `DiagramBlock` where the batch covers every member."""
        if cr.diagrams is not None:
            return cr.diagrams(n_st), None
        m = self.frame.n_members
        out: list[MemberDiagram | None] = [None] * m
        generic = [k for k, ld in cr.loads.generic.items() if not ld.empty]
        uniform = np.setdiff1d(np.arange(m), np.array(generic, dtype=int))
        if uniform.size == m and m:  # every member batched: its diagrams are views of the block, made when asked
            block = _uniform_diagrams(self, cr, uniform, n_st, views=False)[1]
            return _BlockDiagrams(block), block  # type: ignore[return-value]  # a sequence like the list
        if uniform.size:
            diagrams, _ = _uniform_diagrams(self, cr, uniform, n_st)
            for k, dg in zip(uniform, diagrams):
                out[k] = dg
        for k in generic:
            out[k] = self._diagram(cr, k, n_st)
        # every slot is filled: uniform and generic cover 0..m-1
        return out, None  # type: ignore[return-value]

    def _diagram(self, cr: CaseResult, k: int, n_st: int) -> MemberDiagram:
        L = float(self.L[k])
        loading = cr.loads.loading(k, L)
        f_i = cr.end_forces[k, 0]
        d = cr.end_displacements[k]
        C = _compliances(self, np.array([k]))[0]
        breaks = loading.breakpoints(L)
        base = np.unique(np.concatenate([np.linspace(0.0, L, n_st), breaks]))
        extra = _extreme_points(loading, f_i, d, C, breaks, L)
        stations = np.unique(np.concatenate([base, extra]))
        stations = stations[np.concatenate([[True], np.diff(stations) > 1e-7 * max(L, 1.0)])]
        # a concentrated load: both sides of the jump; station values just after the load
        forces = internal_forces(loading, f_i, stations)
        point_pos = loading.point_positions()
        if point_pos:
            left = np.array([s for s in stations if any(abs(s - a) < 1e-12 * max(L, 1) for a in point_pos) and s > 0])
            if left.size:
                before = internal_forces(loading, f_i, left, before=True)
                stations = np.concatenate([stations, left])
                forces = np.concatenate([forces, before])
                order = np.lexsort((np.concatenate([np.ones(len(stations) - left.size), np.zeros(left.size)]), stations))
                stations, forces = stations[order], forces[order]
        defl = _deflections(loading, f_i, d, C, stations, L)
        return MemberDiagram(stations=stations, forces=forces, deflections=defl)

    # ------------------------------------------------------------------ envelopes
    def envelopes(self) -> dict[str, dict[str, list[float]]]:
        """Per member and action: [min, max] over all cases and combinations."""
        if not self.cases:
            return {mid: {} for mid in self.frame.member_ids}
        ranges = [self.force_ranges(name) for name in self.cases]
        lo = np.minimum.reduce([r[0] for r in ranges]).tolist()
        hi = np.maximum.reduce([r[1] for r in ranges]).tolist()
        return {mid: {a: [lo[k][i], hi[k][i]] for i, a in enumerate(ACTION_NAMES)}
                for k, mid in enumerate(self.frame.member_ids)}

    def force_ranges(self, case: str) -> tuple[np.ndarray, np.ndarray]:
        """Smallest and largest N, Vy, Vz, T, My, Mz of every member over its stations: two (m,6) arrays (cached)."""
        key = ("ranges", case)
        hit = self._diagram_cache.get(key)
        if hit is None:
            m = self.frame.n_members
            if m == 0:
                return np.zeros((0, 6)), np.zeros((0, 6))
            blk = self.diagram_block(case)
            F, starts = blk.forces, blk.starts
            hit = (np.minimum.reduceat(F, starts, axis=0), np.maximum.reduceat(F, starts, axis=0))
            self._diagram_cache[key] = hit
        return hit

    def axis_deflections(self, case: str) -> tuple[np.ndarray, np.ndarray]:
        """Per member (m,): the largest distance of its deflected axis from the chord between its displaced
        ends, and the largest deflection (both from dy, dz at the stations; cached)."""
        key = ("deflections", case)
        hit = self._diagram_cache.get(key)
        if hit is None:
            m = self.frame.n_members
            if m == 0:
                return np.zeros(0), np.zeros(0)
            blk = self.diagram_block(case)
            sizes, starts, S, D = blk.sizes, blk.starts, blk.stations, blk.deflections
            owner = np.repeat(np.arange(m), sizes)
            L = np.asarray(self.L, float)
            ok = L > 0
            with np.errstate(divide="ignore", invalid="ignore"):
                t = S / L[owner]
            first, last = D[starts], D[starts + sizes - 1]
            chord = first[owner] * (1 - t)[:, None] + last[owner] * t[:, None]
            rel = np.maximum.reduceat(np.linalg.norm(D - chord, axis=1), starts)
            total = np.maximum.reduceat(np.linalg.norm(D, axis=1), starts)
            hit = (np.where(ok, rel, 0.0), np.where(ok, total, 0.0))
            self._diagram_cache[key] = hit
        return hit

    # ------------------------------------------------------------------ checks
    def check_equilibrium(self) -> None:
        """Compute each case's relative equilibrium residual |Σ loads + Σ reactions| / Σ|loads|."""
        frame = self.frame
        xi, xj = member_ends(frame) if frame.n_members else (np.zeros((0, 3)), np.zeros((0, 3)))
        size = max(float(np.ptp(frame.nodes, axis=0).max()) if frame.n_nodes else 1.0, 1.0)
        active = np.zeros(6, bool)
        active[list(self.dofs.active)] = True
        for cr in self.cases.values():
            F = np.zeros(3)
            M = np.zeros(3)
            scale = 0.0
            nodal = cr.loads.nodal * active
            F += nodal[:, :3].sum(axis=0)
            M += nodal[:, 3:].sum(axis=0) + np.cross(frame.nodes, nodal[:, :3]).sum(axis=0)
            scale += np.abs(nodal[:, :3]).sum() + np.abs(nodal[:, 3:]).sum() / size
            # uniform full-length loads, all members at once: total q L at mid-length
            q = cr.loads.uniform
            if q.size and np.any(q):
                Fg = np.einsum("mji,mj->mi", self.R, q) * self.L[:, None]
                F += Fg.sum(axis=0)
                M += np.cross((xi + xj) / 2, Fg).sum(axis=0)
                scale += np.abs(Fg).sum()
            for k, extra in cr.loads.generic.items():
                if extra.empty:
                    continue
                tot = extra.total(float(self.L[k]))  # about end j, member axes
                Fg = self.R[k].T @ tot[:3]
                Mg = self.R[k].T @ tot[3:] + np.cross(xj[k], Fg)
                F += Fg
                M += Mg
                scale += np.abs(Fg).sum() + np.abs(Mg).sum() / size
            r = cr.reactions
            F += r[:, :3].sum(axis=0)
            M += r[:, 3:].sum(axis=0) + np.cross(frame.nodes, r[:, :3]).sum(axis=0)
            scale += np.abs(r[:, :3]).sum() + np.abs(r[:, 3:]).sum() / size
            # a plane analysis balances only its in-plane components
            resid = np.concatenate([F, M / size]) * active
            cr.equilibrium_residual = float(np.abs(resid).max() / scale) if scale > 0 else 0.0

    # ------------------------------------------------------------------ export
    def to_dict(self, indeterminacy: dict | None = None, include_cases: bool = True, arrays: bool = False) -> dict:
        """The ``plumbframe.results/1`` document (see ARCHITECTURE.md).

        ``arrays=True`` leaves the member stations and values as numpy arrays
        (for a JSON writer that serialises them directly, `analysis.jsonio`).
        """
        frame = self.frame
        comps = self._reported_components()
        doc: dict = {
            "schema": SCHEMA,
            "units": {"length": "m", "force": "N", "moment": "N*m", "angle": "rad"},
            "dimension": self.dimension,
            "nodes": {nid: {"xyz": xyz, "source": src}
                      for nid, xyz, src in zip(frame.node_ids, frame.nodes.tolist(), frame.node_sources)},
            "members": {mid: {"nodes": [frame.node_ids[i], frame.node_ids[j]], "length": length,
                              "source": frame.member_sources[k], **props}
                        for k, (mid, (i, j), length, props) in enumerate(zip(
                            frame.member_ids, frame.members.tolist(), np.asarray(self.L, float).tolist(),
                            _member_property_entries(frame, np.arange(frame.n_members))))},
        }
        if indeterminacy is not None:
            doc["indeterminacy"] = indeterminacy
        if include_cases:
            doc["cases"] = {name: self._case_dict(cr, comps, arrays) for name, cr in self.cases.items()}
            doc["envelopes"] = self.envelopes()
        from .stiffness.extended_json import extended_keys
        doc.update(extended_keys(self))
        return doc

    def _reported_components(self) -> list[int]:
        return sorted(self.dofs.active)

    def _case_dict(self, cr: CaseResult, comps: list[int], arrays: bool = False) -> dict:
        frame = self.frame
        supported = np.flatnonzero(frame.supported)
        members: dict = {}
        keys = ("stations", *ACTION_NAMES, "dy", "dz")
        if frame.n_members:
            # one (9, S) block of every station: stations, six forces, two deflections; a member's entries are
            # the rows of its columns (each row slice contiguous, as orjson wants it)
            blk = self.diagram_block(cr.name)
            block = np.ascontiguousarray(np.vstack([blk.stations[None, :], blk.forces.T, blk.deflections.T]))
            bounds = np.concatenate([blk.starts, [len(blk.stations)]]).tolist()
            for k, mid in enumerate(frame.member_ids):
                part = block[:, bounds[k]:bounds[k + 1]]
                members[mid] = dict(zip(keys, part if arrays else part.tolist()))
        dof_names = [DOF_NAMES[c] for c in comps]
        return {
            "kind": cr.kind,
            "displacements": {nid: dict(zip(dof_names, row))
                              for nid, row in zip(frame.node_ids, cr.displacements[:, comps].tolist())},
            "reactions": {frame.node_ids[i]: {REACTION_NAMES[c]: float(cr.reactions[i, c]) for c in comps}
                          for i in supported},
            "members": members,
            "equilibrium_residual": float(cr.equilibrium_residual),
        }


def _uniform_diagrams(res: "Results", cr: CaseResult, ks: np.ndarray, n_st: int,
                      views: bool = True) -> tuple[list[MemberDiagram], DiagramBlock]:
    """Diagrams of members loaded by uniform full-length loads only, batched over members.

    With end forces f (nodes on member, member axes) and a uniform load q the
    internal forces are polynomials in s (positive-face rule):
    N = -f_x - q_x s, Vy = -f_y - q_y s, Vz = -f_z - q_z s, T = -m_x,
    My = -m_y - f_z s - q_z s²/2, Mz = -m_z + f_y s + q_y s²/2,
    and the deflections integrate them twice (see `_deflections`). Stations
    are an even grid plus the points where a shear force vanishes (moment
    extremes, exact) and where a slope vanishes (deflection extremes, found
    by bisection to machine precision).
    """
    L = res.L[ks]
    f = cr.end_forces[ks, 0]  # (g,6)
    q = cr.loads.uniform[ks]  # (g,3)
    d = cr.end_displacements[ks]  # (g,12)
    C = _compliances(res, ks)
    g = ks.size
    # polynomial coefficients (constant, s, s²) of the six actions
    P = np.zeros((g, 6, 3))
    P[:, 0, 0], P[:, 0, 1] = -f[:, 0], -q[:, 0]
    P[:, 1, 0], P[:, 1, 1] = -f[:, 1], -q[:, 1]
    P[:, 2, 0], P[:, 2, 1] = -f[:, 2], -q[:, 2]
    P[:, 3, 0] = -f[:, 3]
    P[:, 4, 0], P[:, 4, 1], P[:, 4, 2] = -f[:, 4], -f[:, 2], -q[:, 2] / 2
    P[:, 5, 0], P[:, 5, 1], P[:, 5, 2] = -f[:, 5], f[:, 1], q[:, 1] / 2

    def slope_cubic(comp):  # dv/ds (comp 0) or dw/ds (comp 1) as c0 + c1 s + c2 s² + c3 s³: (4, g) coefficients
        if comp == 0:  # dv/ds = d5 + C5 ∫Mz + C1 Vy
            return np.array([d[:, 5] + C[:, 1] * P[:, 1, 0], C[:, 5] * P[:, 5, 0] + C[:, 1] * P[:, 1, 1],
                             C[:, 5] * P[:, 5, 1] / 2, C[:, 5] * P[:, 5, 2] / 3])
        # dw/ds = -d4 - C4 ∫My + C2 Vz
        return np.array([-d[:, 4] + C[:, 2] * P[:, 2, 0], -C[:, 4] * P[:, 4, 0] + C[:, 2] * P[:, 2, 1],
                         -C[:, 4] * P[:, 4, 1] / 2, -C[:, 4] * P[:, 4, 2] / 3])

    grid = np.linspace(0.0, 1.0, n_st)[None, :] * L[:, None]
    extra = []
    for i in (1, 2):  # shear zero: linear
        with np.errstate(divide="ignore", invalid="ignore"):
            s0 = -P[:, i, 0] / P[:, i, 1]
        ok = np.isfinite(s0) & (s0 > 1e-9 * L) & (s0 < L * (1 - 1e-9))
        extra.append(np.where(ok, s0, np.nan))
    fine = np.linspace(0.0, 1.0, 4 * n_st + 1)[None, :] * L[:, None]
    for comp in (0, 1):
        c0, c1, c2, c3 = slope_cubic(comp)
        val = ((c3[:, None] * fine + c2[:, None]) * fine + c1[:, None]) * fine + c0[:, None]  # Horner's rule
        scale = np.abs(val).max(axis=1, keepdims=True) + 1e-300
        sign = np.sign(np.where(np.abs(val) <= 1e-13 * scale, 0.0, val))
        change = (sign[:, :-1] * sign[:, 1:]) < 0
        rows, cols = np.nonzero(change)
        if rows.size:
            a, b = fine[rows, cols], fine[rows, cols + 1]
            fa = val[rows, cols]
            c0, c1, c2, c3 = c0[rows], c1[rows], c2[rows], c3[rows]
            positive = fa > 0
            for _ in range(60):
                mid = (a + b) / 2
                fm = ((c3 * mid + c2) * mid + c1) * mid + c0
                left = (fm > 0) == positive  # the same sign as at a (fa is never 0: a sign change brackets it)
                np.copyto(a, mid, where=left)
                np.copyto(b, mid, where=~left)
            # the roots of each row side by side (np.nonzero lists them row by row): as few columns as needed
            pos = np.arange(rows.size) - np.searchsorted(rows, rows, side="left")
            roots = np.full((g, int(pos.max()) + 1), np.nan)
            roots[rows, pos] = (a + b) / 2
            extra.append(roots)
    stations = np.concatenate([grid] + [e.reshape(g, -1) for e in extra], axis=1)
    stations = np.sort(stations, axis=1)  # NaN last
    valid = ~np.isnan(stations)
    stations = stations[:, :int(valid.sum(axis=1).max())]  # no column of NaN only
    valid = valid[:, :stations.shape[1]]
    s = np.nan_to_num(stations)
    F = P[:, :, 0, None] + P[:, :, 1, None] * s[:, None, :] + P[:, :, 2, None] * s[:, None, :] ** 2  # (g,6,k)
    v = (d[:, 1, None] + d[:, 5, None] * s
         + C[:, 5, None] * (P[:, 5, 0, None] * s**2 / 2 + P[:, 5, 1, None] * s**3 / 6 + P[:, 5, 2, None] * s**4 / 12)
         + C[:, 1, None] * (P[:, 1, 0, None] * s + P[:, 1, 1, None] * s**2 / 2))
    w = (d[:, 2, None] - d[:, 4, None] * s
         - C[:, 4, None] * (P[:, 4, 0, None] * s**2 / 2 + P[:, 4, 1, None] * s**3 / 6 + P[:, 4, 2, None] * s**4 / 12)
         + C[:, 2, None] * (P[:, 2, 0, None] * s + P[:, 2, 1, None] * s**2 / 2))
    # valid stations come first in each row (sorted, NaN last): keep those beyond the previous by 1e-7 L
    keep = valid.copy()
    keep[:, 1:] &= np.diff(stations, axis=1) > 1e-7 * np.maximum(L, 1.0)[:, None]
    counts = keep.sum(axis=1)
    bounds = np.concatenate([[0], np.cumsum(counts)]).tolist()
    st_all = stations[keep]
    F_all = np.ascontiguousarray(F.transpose(0, 2, 1)[keep])  # (S,6)
    D_all = np.stack([v[keep], w[keep]], axis=1)  # (S,2)
    # each member's diagram: views of the block's rows (``views=False``: the block only)
    diagrams = [MemberDiagram(stations=st_all[a:b], forces=F_all[a:b], deflections=D_all[a:b])
                for a, b in zip(bounds[:-1], bounds[1:])] if views else []
    sizes = counts.astype(np.int64)
    return diagrams, DiagramBlock(sizes=sizes, starts=np.asarray(bounds[:-1], dtype=np.int64), stations=st_all,
                                  forces=F_all, deflections=D_all)


def _compliances(res: "Results", ks: np.ndarray) -> np.ndarray:
    """Compliances of members ``ks`` for their deflection lines: axial bars stay straight."""
    from .stiffness.elements import compliances

    f = res.frame
    shear = res.options.shear
    C = compliances(f.E[ks], f.G[ks], f.A[ks], f.Iy[ks], f.Iz[ks], f.J[ks],
                    f.Avy[ks] if shear else None, f.Avz[ks] if shear else None)
    C[f.truss[ks], 4:6] = 0.0
    return C


def _segment_poly_roots(fun, a: float, b: float, degree: int) -> list[float]:
    """Real roots in (a, b) of a polynomial of ``degree`` given as a callable on arrays."""
    if b - a <= 0:
        return []
    x = np.linspace(a, b, degree + 1)
    y = fun(x)
    if np.allclose(y, 0.0, atol=1e-12 * max(np.abs(y).max(), 1e-300)):
        return []
    t = (x - a) / (b - a)
    coef = np.polyfit(t, y, degree)
    roots = np.roots(coef)
    real = roots[np.abs(roots.imag) < 1e-9].real
    inside = real[(real > 1e-9) & (real < 1 - 1e-9)]
    return list(a + inside * (b - a))


def _extreme_points(loading: MemberLoading, f_i, d, C, breaks, L) -> np.ndarray:
    """Where a shear force or a slope vanishes inside a segment (bending-moment and deflection extremes)."""
    pts: list[float] = []
    for a, b in zip(breaks[:-1], breaks[1:]):
        for comp in (1, 2):  # V is at most quadratic between load points
            pts += _segment_poly_roots(lambda s, c=comp: internal_forces(loading, f_i, s)[:, c], a, b, 2)
        for comp in (0, 1):  # slopes are at most quartic (cubic moments integrated)
            pts += _segment_poly_roots(lambda s, c=comp: _slopes(loading, f_i, d, C, s, L)[:, c], a, b, 4)
    return np.array(pts)


def _cumulative(loading, f_i, C, s_sorted, L):
    """Cumulative integrals over [0, s] of κz, s·κz, γy and κy, s·κy, γz at sorted stations."""
    breaks = np.unique(np.concatenate([loading.breakpoints(L), s_sorted]))
    a, b = breaks[:-1], breaks[1:]
    mid, half = (a + b) / 2, (b - a) / 2
    x = mid[:, None] + half[:, None] * _GAUSS_X[None, :]
    w = half[:, None] * _GAUSS_W[None, :]
    F = internal_forces(loading, f_i, x.ravel()).reshape(x.shape + (6,))
    kz = F[..., 5] * C[5]
    ky = F[..., 4] * C[4]
    gy = F[..., 1] * C[1]
    gz = F[..., 2] * C[2]
    seg = np.stack([(w * kz).sum(1), (w * x * kz).sum(1), (w * gy).sum(1),
                    (w * ky).sum(1), (w * x * ky).sum(1), (w * gz).sum(1)], axis=1)
    cum = np.vstack([np.zeros(6), np.cumsum(seg, axis=0)])
    pos = np.searchsorted(breaks, s_sorted)
    return cum[pos]


def _slopes(loading, f_i, d, C, s, L):
    """dv/ds and dw/ds at s."""
    s = np.atleast_1d(np.asarray(s, float))
    order = np.argsort(s)
    cum = _cumulative(loading, f_i, C, s[order], L)
    F = internal_forces(loading, f_i, s[order])
    dv = d[5] + cum[:, 0] + F[:, 1] * C[1]
    dw = -d[4] - cum[:, 3] + F[:, 2] * C[2]
    out = np.empty((s.size, 2))
    out[order] = np.stack([dv, dw], axis=1)
    return out


def _deflections(loading, f_i, d, C, s, L) -> np.ndarray:
    """Local deflections v (dy) and w (dz) of the member axis at s (incl. end displacements).

    v(s) = v_i + θz_i s + ∫(s-t) κz dt + ∫ γy dt,  w(s) = w_i - θy_i s - ∫(s-t) κy dt + ∫ γz dt.
    """
    order = np.argsort(s, kind="stable")
    ss = s[order]
    cum = _cumulative(loading, f_i, C, ss, L)
    v = d[1] + d[5] * ss + ss * cum[:, 0] - cum[:, 1] + cum[:, 2]
    w = d[2] - d[4] * ss - (ss * cum[:, 3] - cum[:, 4]) + cum[:, 5]
    out = np.empty((s.size, 2))
    out[order] = np.stack([v, w], axis=1)
    return out
