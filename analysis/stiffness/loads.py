"""Member loads in member axes: fixed-end forces and internal-force functions.

A member's loading is a set of linearly varying line loads, concentrated
forces and concentrated moments, all in member axes. The fixed-end forces of
any such loading come from the flexibility method on the member clamped at
end i: the end-j displacement is an integral of curvature and strain, which is
polynomial between load points, so Gauss-Legendre quadrature per segment is
exact. Uniform full-length loads, the common case, take a closed form batched
over all members.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..model import STANDARD_GRAVITY, Frame, LineLoad, LoadCase, PointLoad, load_positions

__all__ = ["MemberLoading", "CaseLoads", "case_loads", "uniform_fixed_end_forces", "generic_fixed_end_forces"]

_AXIS = {"x": 0, "y": 1, "z": 2}
_GAUSS_X, _GAUSS_W = np.polynomial.legendre.leggauss(5)  # exact to degree 9


@dataclass
class MemberLoading:
    """Loads on one member, member axes (N/m, N, N*m; positions in m from end i)."""

    lines: list[tuple[float, float, np.ndarray, np.ndarray]] = field(default_factory=list)
    forces: list[tuple[float, np.ndarray]] = field(default_factory=list)
    moments: list[tuple[float, np.ndarray]] = field(default_factory=list)

    def add(self, other: "MemberLoading", factor: float = 1.0) -> None:
        self.lines += [(a, b, factor * qa, factor * qb) for a, b, qa, qb in other.lines]
        self.forces += [(a, factor * p) for a, p in other.forces]
        self.moments += [(a, factor * p) for a, p in other.moments]

    def breakpoints(self, L: float) -> np.ndarray:
        pts = [0.0, L]
        for a, b, _, _ in self.lines:
            pts += [a, b]
        pts += [a for a, _ in self.forces] + [a for a, _ in self.moments]
        return np.unique(np.clip(np.array(pts), 0.0, L))

    def point_positions(self) -> list[float]:
        return [a for a, _ in self.forces] + [a for a, _ in self.moments]

    def resultant(self, s, before: bool = False) -> np.ndarray:
        """G(s) ``(len(s),6)``: force and moment about the point s of all loads on [0, s].

        Concentrated loads exactly at s are included (the value just after
        the load), or left out with ``before=True`` (the value just before).
        """
        s = np.atleast_1d(np.asarray(s, float))
        out = np.zeros((s.size, 6))
        for a, b, qa, qb in self.lines:
            u = np.clip(s, a, b) - a
            if b > a:
                k = (qb - qa) / (b - a)
            else:
                continue
            F = np.outer(u, qa) + np.outer(u**2 / 2, k)
            lever = np.outer(a - s, 1.0)[:, 0]
            mom_int = lever[:, None] * F + np.outer(u**2 / 2, qa) + np.outer(u**3 / 3, k)
            out[:, :3] += F
            out[:, 3:] += _ex_cross(mom_int)
        for a, p in self.forces:
            on = ((s > a) if before else (s >= a))[:, None]
            out[:, :3] += on * p
            out[:, 3:] += on * _ex_cross(np.outer(a - s, 1.0) * p)
        for a, mvec in self.moments:
            out[:, 3:] += ((s > a) if before else (s >= a))[:, None] * mvec
        return out

    def total(self, L: float) -> np.ndarray:
        """Resultant force and moment about end j of all loads."""
        return self.resultant(np.array([L]))[0]

    @property
    def empty(self) -> bool:
        return not (self.lines or self.forces or self.moments)


def _ex_cross(v: np.ndarray) -> np.ndarray:
    """e_x × v for rows of v: (0, -vz, vy)."""
    out = np.zeros_like(v)
    out[:, 1] = -v[:, 2]
    out[:, 2] = v[:, 1]
    return out


def internal_forces(loading: MemberLoading | None, f_i: np.ndarray, s: np.ndarray, before: bool = False) -> np.ndarray:
    """Internal forces ``(len(s),6)`` N, Vy, Vz, T, My, Mz at s from the end-i forces ``f_i``.

    Positive-face convention: the action of the part beyond s on the part [0, s].
    """
    s = np.atleast_1d(np.asarray(s, float))
    R = -np.tile(f_i, (s.size, 1))
    R[:, 4] -= s * f_i[2]
    R[:, 5] += s * f_i[1]
    if loading is not None and not loading.empty:
        R -= loading.resultant(s, before)
    return R


def _flex_rows(L, s, C, shear):
    """H(s) C: map from internal forces at s to the rate of end-j displacement, (len(s),6,6)."""
    n = s.size
    H = np.zeros((n, 6, 6))
    H[:, 0, 0] = C[0]
    H[:, 3, 3] = C[3]
    H[:, 4, 4] = C[4]
    H[:, 5, 5] = C[5]
    H[:, 1, 5] = (L - s) * C[5]
    H[:, 2, 4] = -(L - s) * C[4]
    if shear:
        H[:, 1, 1] = C[1]
        H[:, 2, 2] = C[2]
    return H


def _gauss_points(breaks):
    a, b = breaks[:-1], breaks[1:]
    keep = b > a
    a, b = a[keep], b[keep]
    mid, half = (a + b) / 2, (b - a) / 2
    x = (mid[:, None] + half[:, None] * _GAUSS_X[None, :]).ravel()
    w = (half[:, None] * _GAUSS_W[None, :]).ravel()
    return x, w


def generic_fixed_end_forces(loading: MemberLoading, L: float, C: np.ndarray, shear: bool) -> np.ndarray:
    """Fixed-end forces ``(12,)`` (nodes on member) of a clamped-clamped member.

    ``C`` holds the compliances (1/EA, 1/GAvy, 1/GAvz, 1/GJ, 1/EIy, 1/EIz).
    """
    x, w = _gauss_points(loading.breakpoints(L))
    HC = _flex_rows(L, x, C, shear)
    # R(s) = -A(s) f_i - G(s)
    A = np.zeros((x.size, 6, 6))
    A[:, np.arange(6), np.arange(6)] = 1.0
    A[:, 4, 2] = x
    A[:, 5, 1] = -x
    G = loading.resultant(x)
    lhs = np.einsum("n,nij,njk->ik", w, HC, A)
    rhs = -np.einsum("n,nij,nj->i", w, HC, G)
    f_i = np.linalg.solve(lhs, rhs)
    return np.concatenate([f_i, _end_j_forces(loading, f_i, L)])


def _end_j_forces(loading: MemberLoading, f_i: np.ndarray, L: float) -> np.ndarray:
    """End-j forces (nodes on member) from equilibrium of the whole member."""
    R = internal_forces(loading, f_i, np.array([L]))[0]
    return R  # the action beyond L on the member is the node's force at j


def uniform_fixed_end_forces(q: np.ndarray, L: np.ndarray) -> np.ndarray:
    """Fixed-end forces ``(m,12)`` of uniform full-length loads ``q (m,3)`` in member axes.

    Closed form (any beam handbook; symmetric loading, so shear deformation
    does not change it): end forces -qL/2, end moments ∓qL²/12.
    """
    f = np.zeros((q.shape[0], 12))
    half = -q * L[:, None] / 2
    f[:, 0:3] = half
    f[:, 6:9] = half
    m = q * (L**2 / 12)[:, None]
    f[:, 5] = -m[:, 1]
    f[:, 11] = m[:, 1]
    f[:, 4] = m[:, 2]
    f[:, 10] = -m[:, 2]
    return f


@dataclass
class CaseLoads:
    """One load case's loads: nodal (n,6) global, uniform member loads (m,3) local, and the rest."""

    nodal: np.ndarray
    uniform: np.ndarray
    generic: dict[int, MemberLoading]
    thermal: np.ndarray | None = None  # (m,) uniform temperature change, K (None: none)

    def loading(self, k: int, L: float) -> MemberLoading:
        """Everything on member k as one `MemberLoading` (uniform part included)."""
        out = MemberLoading()
        q = self.uniform[k]
        if np.any(q):
            out.lines.append((0.0, L, q.copy(), q.copy()))
        if k in self.generic:
            out.add(self.generic[k])
        return out

    def scaled_add(self, other: "CaseLoads", factor: float) -> None:
        self.nodal += factor * other.nodal
        self.uniform += factor * other.uniform
        if other.thermal is not None:
            self.thermal = (self.thermal if self.thermal is not None else 0.0) + factor * other.thermal
        for k, ld in other.generic.items():
            self.generic.setdefault(k, MemberLoading()).add(ld, factor)


def case_loads(frame: Frame, case: LoadCase, R: np.ndarray, L: np.ndarray) -> CaseLoads:
    """Collect a load case in member axes. ``R (m,3,3)`` member axes, ``L (m,)`` lengths."""
    nodes = frame._node_lookup()
    members = frame._member_lookup()
    nodal = np.zeros((frame.n_nodes, 6))
    for nload in case.nodal:
        nodal[nodes[nload.node]] += np.asarray(nload.values, float)
    uniform = np.zeros((frame.n_members, 3))
    sw = np.asarray(case.self_weight, float)
    if np.any(sw):
        w = frame.density * frame.A * STANDARD_GRAVITY  # N/m
        uniform += np.einsum("mij,j->mi", R, sw) * w[:, None]
    generic: dict[int, MemberLoading] = {}
    for load in case.member:
        k = members[load.member]
        Rk, Lk = R[k], L[k]
        direction = np.zeros(3)
        direction[_AXIS[load.direction]] = 1.0
        local = direction if load.axes == "local" else Rk @ direction
        if isinstance(load, LineLoad):
            a, b = load_positions(load, Lk)
            w1 = load.w1
            w2 = load.w1 if load.w2 is None else load.w2
            if load.axes == "global" and load.projected:
                factor = np.sqrt(max(0.0, 1.0 - float(Rk[0] @ direction) ** 2))
                w1, w2 = w1 * factor, w2 * factor
            if w1 == w2 and a <= 1e-12 * Lk and b >= Lk * (1 - 1e-12):
                uniform[k] += local * w1
            elif b > a:
                generic.setdefault(k, MemberLoading()).lines.append((a, b, local * w1, local * w2))
        elif isinstance(load, PointLoad):
            (a,) = load_positions(load, Lk)
            target = generic.setdefault(k, MemberLoading())
            (target.moments if load.moment else target.forces).append((a, local * load.value))
    thermal = None
    if case.temperature:
        thermal = np.zeros(frame.n_members)
        for t in case.temperature:
            thermal[members[t.member]] += t.delta
    return CaseLoads(nodal=nodal, uniform=uniform, generic=generic, thermal=thermal)
