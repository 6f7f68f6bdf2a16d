"""Consistent mass of straight members, batched over members.

Local order as in `elements`. A frame member of mass ``mu`` per length (kg/m)
takes linear shape functions for the axial and torsional motion and the
cubic (Hermite) shape of its deflection in each bending plane:

    axial, torsion:  mu L / 6 · [[2, 1], [1, 2]]   (torsion with the polar mass ρ·Ip per length)
    bending:         mu L / 420 · [[156, 22L, 54, -13L], [22L, 4L², 13L, -3L²],
                                   [54, 13L, 156, -22L], [-13L, -3L², -22L, 4L²]]

(rotation couplings change sign in the x-z plane, θy = -dw/dx). Rotary
inertia of the cross-section is left out (slender members). An axial-only bar
moves as a straight line: mu L / 6 · [[2, 1], [1, 2]] in each direction.

References
----------
Przemieniecki, Theory of Matrix Structural Analysis, ch. 11 (consistent mass
matrix of a beam element) — from memory; it is ∫ mu Nᵢ Nⱼ dx with the same
shape functions (checked in tests/unit/test_geometric.py).
"""
from __future__ import annotations

import numpy as np

__all__ = ["consistent_mass"]


def consistent_mass(L, mu, polar=None, truss=None) -> np.ndarray:
    """Consistent mass ``(m,12,12)`` in member axes.

    Parameters
    ----------
    L : (m,) lengths, m.
    mu : (m,) mass per length, kg/m.
    polar : (m,) polar mass moment per length ρ·(Iy + Iz), kg·m, optional.
    truss : (m,) bool, axial-only bars, optional.
    """
    L = np.asarray(L, float)
    mu = np.asarray(mu, float)
    m = L.shape[0]
    M = np.zeros((m, 12, 12))
    lin = mu * L / 6.0
    _pair(M, 0, 6, lin)
    if polar is not None:
        _pair(M, 3, 9, np.asarray(polar, float) * L / 6.0)
    c = mu * L / 420.0
    _plane(M, (1, 5, 7, 11), c, L, 1.0)
    _plane(M, (2, 4, 8, 10), c, L, -1.0)
    if truss is not None and np.any(truss):
        t = np.flatnonzero(np.asarray(truss, bool))
        M[t] = 0.0
        for a, b in ((0, 6), (1, 7), (2, 8)):
            _pair(M, a, b, lin, rows=t)
    return M


def _pair(M, a, b, v, rows=None) -> None:
    r = slice(None) if rows is None else rows
    vv = v if rows is None else v[rows]
    M[r, a, a] = M[r, b, b] = 2.0 * vv
    M[r, a, b] = M[r, b, a] = vv


def _plane(M, idx, c, L, s) -> None:
    a, b, d, e = idx
    entries = {
        (a, a): 156.0, (a, b): s * 22 * L, (a, d): 54.0, (a, e): -s * 13 * L,
        (b, b): 4 * L**2, (b, d): s * 13 * L, (b, e): -3 * L**2,
        (d, d): 156.0, (d, e): -s * 22 * L,
        (e, e): 4 * L**2,
    }
    for (r, q), v in entries.items():
        M[:, r, q] = c * v
        M[:, q, r] = c * v
