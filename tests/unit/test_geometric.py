"""Geometric stiffness and consistent mass of one member against sympy, and the interior elimination.

Both matrices are integrals with the member's shape functions (linear axially, cubic Hermite in
bending): K_g = ∫ N φ'ᵢ φ'ⱼ dx, M = ∫ μ φᵢ φⱼ dx (energy definitions, from memory), integrated here
independently with sympy. The interior elimination must give back the first-order reduced stiffness
exactly (static condensation of the pieces is exact for prismatic members).
"""
from __future__ import annotations

import numpy as np
import pytest
import sympy as sy
from numpy.testing import assert_allclose

from analysis import (AnalysisOptions, Diaphragm, FrameBuilder, LoadCase, Material, NodalLoad, RigidBody, Section,
                      analyze)
from analysis.stiffness.geometric import geometric_stiffness
from analysis.stiffness.mass import consistent_mass


def _hermite(L):
    x = sy.symbols("x")
    t = x / L
    # v = N1 v1 + N2 θ1 + N3 v2 + N4 θ2 with θ = dv/dx
    return x, [1 - 3 * t**2 + 2 * t**3, L * (t - 2 * t**2 + t**3), 3 * t**2 - 2 * t**3, L * (t**3 - t**2)]


def _plane_matrices(Lv, Nv, mu):
    L = sy.Rational(Lv)
    x, H = _hermite(L)
    kg = sy.Matrix(4, 4, lambda i, j: sy.integrate(Nv * sy.diff(H[i], x) * sy.diff(H[j], x), (x, 0, L)))
    m = sy.Matrix(4, 4, lambda i, j: sy.integrate(mu * H[i] * H[j], (x, 0, L)))
    return np.array(kg, float), np.array(m, float)


def test_geometric_and_mass_match_the_shape_function_integrals():
    L, N, mu = 3, -250.0, 40.0
    kg4, m4 = _plane_matrices(L, N, mu)
    kg = geometric_stiffness(np.array([3.0]), np.array([N]))[0]
    M = consistent_mass(np.array([3.0]), np.array([mu]))[0]
    xy = [1, 5, 7, 11]  # v, θz: θz = dv/dx
    assert_allclose(kg[np.ix_(xy, xy)], kg4, rtol=1e-12, atol=1e-9)
    assert_allclose(M[np.ix_(xy, xy)], m4, rtol=1e-12, atol=1e-9)
    xz = [2, 4, 8, 10]  # w, θy: θy = -dw/dx
    flip = np.diag([1.0, -1.0, 1.0, -1.0])
    assert_allclose(kg[np.ix_(xz, xz)], flip @ kg4 @ flip, rtol=1e-12, atol=1e-9)
    assert_allclose(M[np.ix_(xz, xz)], flip @ m4 @ flip, rtol=1e-12, atol=1e-9)
    # axial: linear shape functions
    assert_allclose(M[np.ix_([0, 6], [0, 6])], mu * L / 6 * np.array([[2, 1], [1, 2]]), rtol=1e-12)
    assert np.all(kg[0] == 0)


@pytest.mark.parametrize("plane", [False, True])
def test_interior_elimination_gives_back_the_first_order_stiffness(plane):
    from analysis.stiffness.interior import InteriorModel

    steel = Material("s", E=210e9, G=81e9, density=7850)
    sec = Section("s", A=5e-3, Iy=8e-5, Iz=2e-5, J=1e-6, Avy=2e-3, Avz=3e-3)
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 3))
    b.add_node("C", (5, 0, 3))
    b.add_node("D", (5, 0, 0), support="fixed" if not plane else "pinned")
    b.add_node("E", (2.5, 0, 4.5))
    b.add_member("AB", "A", "B", sec, steel, offset_j=(0, 0, -0.2))
    b.add_member("BC", "B", "C", sec, steel, release_j="My Mz", roll=0.3 if not plane else 0.0)
    b.add_member("DC", "D", "C", sec, steel, inextensible=True)
    b.add_member("BE", "B", "E", sec, steel, truss=True)
    b.add_member("EC", "E", "C", sec, steel, truss=True)
    b.spring("B", "ux", 1e6)
    if not plane:
        b.support("E", "uy")
    b.add_case(LoadCase("H", nodal=(NodalLoad("B", (1e4, 0, -1e5, 0, 0, 0)), NodalLoad("C", (0, 0, -1e5, 0, 0, 0)))))
    frame = b.build()
    for opts in (AnalysisOptions(plane=plane, shear=True), AnalysisOptions(plane=plane, condense_pinned=True)):
        kept: dict = {}
        analyze(frame, opts, keep=kept)
        model = InteriorModel(frame, opts, kept, parts=4)
        nq = model.n_qo
        Kzz = model.Kq[nq:, nq:].toarray()
        S = model.Kq[:nq, :nq].toarray() - model.K_qz.toarray() @ np.linalg.solve(Kzz, model.K_zq.toarray())
        Kq = kept["Kq"].toarray()
        assert_allclose(S, Kq, rtol=1e-8, atol=1e-8 * np.abs(Kq).max())
        # and the solve through the first-order factor is the solve with the subdivided matrix
        rhs = np.random.default_rng(1).normal(size=model.n_q)
        assert_allclose(model.Kq @ model.solve(rhs), rhs, rtol=1e-8, atol=1e-8 * np.abs(rhs).max())


def test_rigid_groups_stay_exact_in_the_eigenproblems():
    """A diaphragm portal: the buckling factor does not depend on the subdivision's unknowns."""
    steel = Material("s", E=210e9, G=81e9, density=7850)
    col = Section("c", A=5e-3, Iy=8e-5, Iz=8e-5, J=1e-6)
    b = FrameBuilder()
    for k, (x, y) in enumerate(((0, 0), (5, 0), (5, 4), (0, 4))):
        b.add_node(f"F{k}", (x, y, 0), support="fixed")
        b.add_node(f"T{k}", (x, y, 3.5))
        b.add_member(f"C{k}", f"F{k}", f"T{k}", col, steel)
    b.add_diaphragm(Diaphragm("roof", tuple(f"T{k}" for k in range(4))))
    b.add_rigid_body(RigidBody("cap", ("T0", "T1")))
    b.add_case(LoadCase("G", nodal=tuple(NodalLoad(f"T{k}", (0, 0, -1e5, 0, 0, 0)) for k in range(4))))
    res = analyze(b.build(), AnalysisOptions(buckling=1))
    # four fixed-base columns tied at the top by the diaphragm (it holds no rotation about X or Y): they sway
    # together as cantilevers, P_cr = π²EI/(2L)² each (Euler, K = 2)
    assert_allclose(res.buckling["G"][0].factor * 1e5, np.pi**2 * 210e9 * 8e-5 / (2 * 3.5) ** 2, rtol=5e-3)
