"""Member stiffness, transformation and load vectors, batched over members.

Local end-displacement order (12): ``u1 v1 w1 θx1 θy1 θz1 u2 v2 w2 θx2 θy2 θz2``
and the matching end forces ``N V_y V_z T M_y M_z`` at each end, as forces
the nodes exert on the member (member-end sign convention).

Sign convention of internal forces along a member (positive-face rule, right
handed): N > 0 is tension, My > 0 stretches the +z fibres, Mz > 0 stretches
the -y fibres; dw/dx = -θy + γz, dv/dx = θz + γy.
"""
from __future__ import annotations

import numpy as np

__all__ = [
    "compliances",
    "local_stiffness",
    "end_transformation",
    "condense",
]


def compliances(E, G, A, Iy, Iz, J, Avy=None, Avz=None) -> np.ndarray:
    """Compliances ``(m,6)`` per unit length: 1/EA, 1/GAvy, 1/GAvz, 1/GJ, 1/EIy, 1/EIz.

    A zero or missing property (no shear area, a bar without bending
    constants) gives a zero compliance: rigid in that action.
    """

    def inv(x):
        x = np.asarray(x, float)
        with np.errstate(divide="ignore"):
            return np.where(x > 0, 1.0 / np.where(x > 0, x, 1.0), 0.0)

    zero = np.zeros_like(np.asarray(A, float))
    return np.stack([inv(E * A), inv(G * Avy) if Avy is not None else zero,
                     inv(G * Avz) if Avz is not None else zero, inv(G * J), inv(E * Iy), inv(E * Iz)], axis=1)


def local_stiffness(L, E, G, A, Iy, Iz, J, Avy=None, Avz=None):
    """Local stiffness matrices ``(m,12,12)`` of straight prismatic members.

    Euler-Bernoulli bending; with shear areas ``Avy``/``Avz`` > 0 the
    Timoshenko correction ``Φ = 12 E I / (G A_v L²)`` is included.

    References
    ----------
    The 3D frame element stiffness matrix with shear deformation, as in
    Przemieniecki, Theory of Matrix Structural Analysis, ch. 5 (from memory).
    """
    L = np.asarray(L, float)
    m = L.shape[0]
    k = np.zeros((m, 12, 12))

    def phi(I, Av):
        if Av is None:
            return np.zeros(m)
        Av = np.asarray(Av, float)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.where(Av > 0, 12.0 * E * I / (G * np.where(Av > 0, Av, 1.0) * L**2), 0.0)
        return out

    ea = E * A / L
    gj = G * J / L
    k[:, 0, 0] = k[:, 6, 6] = ea
    k[:, 0, 6] = k[:, 6, 0] = -ea
    k[:, 3, 3] = k[:, 9, 9] = gj
    k[:, 3, 9] = k[:, 9, 3] = -gj

    # bending in the x-y plane: v, θz (indices 1, 5, 7, 11)
    py = phi(Iz, Avy)
    c = E * Iz / ((1.0 + py) * L**3)
    _bending(k, (1, 5, 7, 11), c, L, py, sign=1.0)
    # bending in the x-z plane: w, θy (indices 2, 4, 8, 10); θy = -dw/dx
    pz = phi(Iy, Avz)
    c = E * Iy / ((1.0 + pz) * L**3)
    _bending(k, (2, 4, 8, 10), c, L, pz, sign=-1.0)
    return k


def _bending(k, idx, c, L, p, sign):
    a, b, d, e = idx
    s = sign
    entries = {
        (a, a): 12.0, (a, b): s * 6 * L, (a, d): -12.0, (a, e): s * 6 * L,
        (b, b): (4.0 + p) * L**2, (b, d): -s * 6 * L, (b, e): (2.0 - p) * L**2,
        (d, d): 12.0, (d, e): -s * 6 * L,
        (e, e): (4.0 + p) * L**2,
    }
    for (r, q), v in entries.items():
        k[:, r, q] = c * v
        k[:, q, r] = c * v


def end_transformation(R, offsets):
    """Transformation ``(m,12,12)`` from global node displacements to local end displacements.

    Parameters
    ----------
    R : (m,3,3) rotation, rows are local axes in global components.
    offsets : (m,2,3) rigid links from node to member end, global, m.

    Notes
    -----
    A member end on a rigid link moves as ``u_end = u_node + θ × o``, so the
    6x6 block per end is ``[[I, -S(o)], [0, I]]`` with ``S(o) v = o × v``,
    then rotated to member axes.
    """
    m = R.shape[0]
    T = np.zeros((m, 12, 12))
    for end in (0, 1):
        o = offsets[:, end]
        S = np.zeros((m, 3, 3))
        S[:, 0, 1], S[:, 0, 2] = -o[:, 2], o[:, 1]
        S[:, 1, 0], S[:, 1, 2] = o[:, 2], -o[:, 0]
        S[:, 2, 0], S[:, 2, 1] = -o[:, 1], o[:, 0]
        r0 = 6 * end
        T[:, r0:r0 + 3, r0:r0 + 3] = R
        T[:, r0:r0 + 3, r0 + 3:r0 + 6] = -R @ S
        T[:, r0 + 3:r0 + 6, r0 + 3:r0 + 6] = R
    return T


def condense(k, released):
    """Static condensation of released end actions.

    Parameters
    ----------
    k : (m,12,12) local stiffness.
    released : (m,12) bool, end actions that are zero.

    Returns
    -------
    k_c : (m,12,12) with released rows/columns zero.
    condense_loads : callable(fef (m,12,c)) -> (m,12,c) condensed fixed-end forces.
    recover : callable(d (m,12,c) local end displacements without the
        released components, fef) -> (m,12,c) full local end displacements.

    Notes
    -----
    ``k* = k_rr - k_rc k_cc⁻¹ k_cr``, ``f* = f_r - k_rc k_cc⁻¹ f_c``; members
    are grouped by release pattern so each group is one batched solve, and
    the groups are kept for the loads and the recovery.
    """
    k_c = k.copy()
    patterns, inverse = np.unique(released, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    groups = []
    for p, pattern in enumerate(patterns):
        if not pattern.any():
            continue
        rows = np.flatnonzero(inverse == p)
        c = np.flatnonzero(pattern)
        r = np.flatnonzero(~pattern)
        kk = k[rows]
        kcc = kk[:, c[:, None], c]
        kcr = kk[:, c[:, None], r]
        X = np.linalg.solve(kcc, kcr)  # kcc⁻¹ kcr, (g,nc,nr)
        kc = np.zeros_like(kk)
        kc[:, r[:, None], r] = kk[:, r[:, None], r] - np.swapaxes(kcr, 1, 2) @ X
        k_c[rows] = kc
        groups.append((rows, c, r, kcc, kcr))

    def condense_loads(fef):
        fef_c = fef.copy()
        if not fef.shape[2]:
            return fef_c
        for rows, c, r, kcc, kcr in groups:
            ff = fef[rows]
            y = np.linalg.solve(kcc, ff[:, c, :])  # kcc⁻¹ f_c
            out = np.zeros_like(ff)
            out[:, r, :] = ff[:, r, :] - np.swapaxes(kcr, 1, 2) @ y
            fef_c[rows] = out
        return fef_c

    def recover(d, fef_full):
        d = d.copy()
        for rows, c, r, kcc, kcr in groups:
            rhs = kcr @ d[rows][:, r, :]
            if fef_full.shape[2]:
                rhs = rhs + fef_full[rows][:, c, :]
            d[rows[:, None], c[None, :], :] = -np.linalg.solve(kcc, rhs)
        return d

    return k_c, condense_loads, recover
