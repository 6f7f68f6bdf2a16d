"""Geometric stiffness of straight members from their axial force, batched over members.

Local end-displacement order as in `elements`: ``u1 v1 w1 θx1 θy1 θz1 u2 … θz2``.
N > 0 is tension (stiffening), N < 0 compression (softening).

The frame-member matrix is the consistent one of the cubic (Hermite)
deflection shape, in each bending plane

    N / (30 L) · [[36, 3L, -36, 3L], [3L, 4L², -3L, -L²], [-36, -3L, 36, -3L], [3L, -L², -3L, 4L²]]

(signs of the rotation couplings follow θy = -dw/dx in the x-z plane); an
axial-only bar has the string matrix N/L on its transverse translations.
Only the flexural (P-Δ and P-δ) terms are included: the torsional Wagner
term N·Ip/A is left out, as the frame model has no warping stiffness and
flexural-torsional or lateral-torsional buckling of single members is a
member check, not a frame analysis.

References
----------
Przemieniecki, Theory of Matrix Structural Analysis, ch. 15 (geometric
stiffness of a beam element) — from memory; the same matrix follows from
∫ N w'(x)² dx / 2 with the cubic shape functions (checked with sympy in
tests/unit/test_geometric.py).
"""
from __future__ import annotations

import numpy as np

__all__ = ["geometric_stiffness"]


def geometric_stiffness(L, N, truss=None) -> np.ndarray:
    """Geometric stiffness ``(m,12,12)`` in member axes for axial forces ``N (m,)`` (N, tension > 0).

    Parameters
    ----------
    L : (m,) member lengths, m.
    N : (m,) axial forces, N (constant along each member).
    truss : (m,) bool, axial-only bars (string matrix on translations), optional.
    """
    L = np.asarray(L, float)
    N = np.asarray(N, float)
    m = L.shape[0]
    kg = np.zeros((m, 12, 12))
    c = N / (30.0 * L)
    _plane(kg, (1, 5, 7, 11), c, L, 1.0)
    _plane(kg, (2, 4, 8, 10), c, L, -1.0)
    if truss is not None and np.any(truss):
        t = np.flatnonzero(np.asarray(truss, bool))
        kg[t] = 0.0
        s = N[t] / L[t]
        for a, b in ((1, 7), (2, 8)):
            kg[t, a, a] = kg[t, b, b] = s
            kg[t, a, b] = kg[t, b, a] = -s
    return kg


def _plane(kg, idx, c, L, s) -> None:
    a, b, d, e = idx
    entries = {
        (a, a): 36.0, (a, b): s * 3 * L, (a, d): -36.0, (a, e): s * 3 * L,
        (b, b): 4 * L**2, (b, d): -s * 3 * L, (b, e): -L**2,
        (d, d): 36.0, (d, e): -s * 3 * L,
        (e, e): 4 * L**2,
    }
    for (r, q), v in entries.items():
        kg[:, r, q] = c * v
        kg[:, q, r] = c * v
