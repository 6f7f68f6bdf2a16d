"""Hinges, springs, settlements, offsets, trusses, rigid bodies and diaphragms against outside references."""
from __future__ import annotations

import numpy as np
import pytest
import sympy as sy
from numpy.testing import assert_allclose

from analysis import (AnalysisOptions, Diaphragm, FrameBuilder, LineLoad, LoadCase, Material, ModelError, NodalLoad,
                      PointLoad, RigidBody, Section, Settlement, UnstableStructureError, analyze)

E = 210e9
SEC = Section("S", A=1e-2, Iy=2e-4, Iz=6e-5, J=1e-5)
MAT = Material("M", E=E, G=80e9)
EI = E * SEC.Iy


def test_gerber_beam_with_internal_hinge_against_sympy_beam():
    # sympy.physics.continuum_mechanics.beam.Beam with apply_rotation_hinge as the outside reference
    from sympy.physics.continuum_mechanics.beam import Beam

    L, a, w = 10.0, 4.0, 5e3
    bm = Beam(L, E, SEC.Iy)
    r0 = bm.apply_support(0, "fixed")
    bm.apply_rotation_hinge(a)
    r1 = bm.apply_support(L, "roller")
    bm.apply_load(w, 0, 0, end=L)
    bm.solve_for_reaction_loads(*r0, r1)
    moment = sy.lambdify(sy.symbols("x"), bm.bending_moment())

    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("H", (a, 0, 0))
    b.add_node("C", (L, 0, 0), support="uz")
    b.add_member("AH", "A", "H", SEC, MAT)
    b.add_member("HC", "H", "C", SEC, MAT, release_i="My")
    b.add_case(LoadCase("w", member=(LineLoad("AH", "z", -w, axes="global"), LineLoad("HC", "z", -w, axes="global"))))
    for condense in (False, True):
        r = analyze(b.build(), AnalysisOptions(plane=True, condense_pinned=condense))
        R = r.cases["w"].reactions
        assert_allclose(R[0, 2], -float(bm.reaction_loads[r0[0]]), rtol=1e-10)
        assert_allclose(R[2, 2], -float(bm.reaction_loads[r1]), rtol=1e-10)
        for member, x0 in (("AH", 0.0), ("HC", a)):
            dg = r.diagram("w", member)
            for s, My in zip(dg.stations, dg["My"]):
                expect = float(moment(x0 + s))
                if np.isfinite(expect):  # sympy's singularity terms are infinite at the hinge and supports
                    assert_allclose(My, -expect, atol=1e-8 * w * L**2)
        # unknowns: A fixed; H: ux, uz, ry + own rotation of HC's hinged end; C: ux, ry. Condensed: HC's own
        # end rotation, AH's end rotation at H (no moment reaches it: a pinned end) and C's rotation go
        assert r.n_unknowns == (3 if condense else 6)


def test_spring_prop_against_compatibility_solved_by_sympy():
    # cantilever propped by a spring k at the tip, uniform load w: compatibility
    # w L⁴/(8EI) - R L³/(3EI) = R/k (Roark, Table 8.1 case 2a and 1a superposed — from memory), solved by sympy
    L, w, k = 5.0, 6e3, 2e6
    R = sy.symbols("R")
    (Rs,) = sy.solve(sy.Eq(w * L**4 / (8 * EI) - R * L**3 / (3 * EI), R / k), R)
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0), springs={"uz": k})
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_case(LoadCase("w", member=(LineLoad("AB", "z", -w, axes="global"),)))
    r = analyze(b.build(), AnalysisOptions(plane=True))
    cr = r.cases["w"]
    assert_allclose(cr.reactions[1, 2], float(Rs), rtol=1e-10)  # the spring pushes up
    assert_allclose(cr.displacements[1, 2], -float(Rs) / k, rtol=1e-10)
    assert cr.equilibrium_residual < 1e-12


def test_settlement_of_fixed_end():
    # fixed-fixed beam, one end settles by Δ: end moments 6EIΔ/L², shear 12EIΔ/L³
    # (Roark, Table 8.1 case 6e — from memory)
    L, d = 6.0, -0.01
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0), support="fixed")
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_case(LoadCase("s", settlements=(Settlement("B", "uz", d),)))
    r = analyze(b.build())
    cr = r.cases["s"]
    assert_allclose(cr.displacements[1, 2], d)
    assert_allclose(abs(cr.reactions[0, 2]), 12 * EI * abs(d) / L**3, rtol=1e-10)
    assert_allclose(abs(cr.reactions[0, 4]), 6 * EI * abs(d) / L**2, rtol=1e-10)
    dg = r.diagram("s", "AB")
    assert_allclose(dg["dz"][-1], d, rtol=1e-12)


def test_settlement_must_act_on_a_support():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (3, 0, 0))
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_case(LoadCase("s", settlements=(Settlement("B", "uz", 0.01),)))
    with pytest.raises(ModelError, match="no support restrains"):
        b.build()


def test_rigid_end_offset_equals_a_rigid_stub():
    # a rigid link is kinematically a rigid body: offsets and rigid bodies must agree (common practice, no source)
    L, e, P = 4.0, 0.3, 1e4
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L + e, 0, 0))
    b.add_member("AB", "A", "B", SEC, MAT, offset_j=(-e, 0, 0))
    b.add_case(LoadCase("P", nodal=(NodalLoad("B", (0, 0, -P, 0, 0, 0)),)))
    r1 = analyze(b.build())
    b2 = FrameBuilder()
    b2.add_node("A", (0, 0, 0), support="fixed")
    b2.add_node("M", (L, 0, 0))
    b2.add_node("B", (L + e, 0, 0))
    b2.add_member("AM", "A", "M", SEC, MAT)
    b2.add_rigid_body(RigidBody("stub", ("M", "B")))
    b2.add_case(LoadCase("P", nodal=(NodalLoad("B", (0, 0, -P, 0, 0, 0)),)))
    r2 = analyze(b2.build())
    assert_allclose(r1.cases["P"].displacements[1], r2.cases["P"].displacements[2], rtol=1e-12, atol=1e-18)
    # tip deflection: cantilever deflection plus rotation times the lever (Roark 8.1 case 1a + 3a — from memory)
    theta = P * L**2 / (2 * EI) + P * e * L / EI
    delta = P * L**3 / (3 * EI) + P * e * L**2 / (2 * EI) + theta * e
    assert_allclose(r1.cases["P"].displacements[1, 2], -delta, rtol=1e-12)


def test_pin_jointed_truss_member_forces_by_the_method_of_joints():
    # a symmetric triangular truss, apex load P: member forces by the method of joints
    # (statics, common practice, no source): rafters -P/(2 sin α), tie +P/(2 tan α)
    span, rise, P = 8.0, 3.0, 4e4
    b = FrameBuilder()
    b.add_node("L", (0, 0, 0), support="ux uy uz")
    b.add_node("T", (span / 2, 0, rise))
    b.add_node("R", (span, 0, 0), support="uy uz")
    bar = Section("bar", A=2e-3)
    for mid, i, j in (("LT", "L", "T"), ("TR", "T", "R"), ("LR", "L", "R")):
        b.add_member(mid, i, j, bar, MAT, truss=True)
    b.add_case(LoadCase("P", nodal=(NodalLoad("T", (0, 0, -P, 0, 0, 0)),)))
    r = analyze(b.build(), AnalysisOptions(plane=True))
    alpha = np.arctan2(rise, span / 2)
    assert_allclose(r.diagram("P", "LT")["N"], -P / (2 * np.sin(alpha)), rtol=1e-12)
    assert_allclose(r.diagram("P", "LR")["N"], P / (2 * np.tan(alpha)), rtol=1e-12)
    assert r.n_unknowns == 2 * 3 - 3  # 2 DOF per truss joint in the plane minus 3 restraints


def test_diaphragm_makes_floor_translate_and_rotate_rigidly():
    # four columns under a rigid floor, torsion by an eccentric load: floor nodes move as one rigid plane
    # body (kinematics of a rigid body, common practice, no source)
    b = FrameBuilder()
    pts = [(0, 0), (6, 0), (6, 4), (0, 4)]
    for k, (x, y) in enumerate(pts):
        b.add_node(f"B{k}", (x, y, 0), support="fixed")
        b.add_node(f"T{k}", (x, y, 3.5))
        b.add_member(f"C{k}", f"B{k}", f"T{k}", SEC, MAT)
    b.add_diaphragm(Diaphragm("floor", tuple(f"T{k}" for k in range(4))))
    b.add_case(LoadCase("H", nodal=(NodalLoad("T1", (0, 1e4, 0, 0, 0, 0)),)))
    r = analyze(b.build())
    u = r.cases["H"].displacements
    top = [1, 3, 5, 7]
    rz = u[top, 5]
    assert_allclose(rz, rz[0], rtol=1e-10)
    for k, (x, y) in zip(top, pts):
        assert_allclose(u[k, 0], u[top[0], 0] - rz[0] * (y - 0), rtol=1e-9, atol=1e-15)
        assert_allclose(u[k, 1], u[top[0], 1] + rz[0] * (x - 0), rtol=1e-9, atol=1e-15)
    # independent unknowns: 4 tops x 6 - 9 diaphragm constraints = 15
    assert r.n_unknowns == 15
    assert r.cases["H"].equilibrium_residual < 1e-10


def test_mechanism_is_named():
    # a portal pinned at the bases and at both beam ends sways freely (common practice, no source)
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("B", (0, 0, 4))
    b.add_node("C", (5, 0, 4))
    b.add_node("D", (5, 0, 0), support="pinned")
    b.add_member("AB", "A", "B", SEC, MAT, release_i="pinned")
    b.add_member("BC", "B", "C", SEC, MAT, release_i="pinned", release_j="pinned")
    b.add_member("DC", "D", "C", SEC, MAT)
    b.add_case(LoadCase("H", nodal=(NodalLoad("B", (1e4, 0, 0, 0, 0, 0)),)))
    with pytest.raises(UnstableStructureError, match=r"node [BC] can translate in X"):
        analyze(b.build(), AnalysisOptions(plane=True))


@pytest.mark.parametrize("mutate, message", [
    (lambda b: b.add_member("BAD", "A", "A", SEC, MAT), "both ends"),
    (lambda b: b.add_member("DUP", "B", "A", SEC, MAT), "duplicate"),
    (lambda b: b.add_member("NEG", "A", "C", Section("neg", A=-1.0, Iy=1, Iz=1, J=1), MAT), "area"),
    (lambda b: b.add_member("NAN", "A", "C", Section("nan", A=1.0, Iy=float("nan"), Iz=1, J=1), MAT), "Iy"),
    (lambda b: b.add_case(LoadCase("x", member=(LineLoad("nope", "z", 1.0),))), "missing member"),
    (lambda b: b.add_case(LoadCase("x", nodal=(NodalLoad("nope", (1, 0, 0, 0, 0, 0)),))), "missing node"),
    (lambda b: b.add_case(LoadCase("x", member=(LineLoad("AB", "z", 1.0, start=0, end=99),))), "outside"),
])
def test_validation_errors(mutate, message):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (3, 0, 0))
    b.add_node("C", (3, 3, 0))
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_member("BC", "B", "C", SEC, MAT)
    with pytest.raises(ModelError, match=message):
        mutate(b)
        b.build()


def test_axial_bar_under_its_own_weight_deflects_along_its_chord():
    # an axial-only bar carries no bending: its axis stays straight between its end nodes
    # (definition of a pin-jointed bar, common practice, no source)
    b = FrameBuilder()
    b.add_node("L", (0, 0, 0), support="ux uy uz")
    b.add_node("T", (3, 0, 2))
    b.add_node("R", (6, 0, 0), support="uy uz")
    bar = Section("bar", A=2e-3)
    heavy = Material("steel", E=E, G=80e9, density=7850.0)
    for mid, i, j in (("LT", "L", "T"), ("TR", "T", "R"), ("LR", "L", "R")):
        b.add_member(mid, i, j, bar, heavy, truss=True)
    b.add_case(LoadCase("g", self_weight=(0, 0, -1)))
    r = analyze(b.build(), AnalysisOptions(plane=True))
    u = r.cases["g"].displacements
    dg = r.diagram("g", "LT")
    k = r.frame.member_index("LT")
    Rk = r.R[k]
    wi, wj = (Rk @ u[0, :3])[2], (Rk @ u[1, :3])[2]
    s, L = dg.stations, r.L[k]
    assert_allclose(dg["dz"], wi + (wj - wi) * s / L, atol=1e-12)


def test_skew_member_hinged_alone_at_a_joint_is_not_a_mechanism():
    # a joint held by one inclined member whose bending is released there turns freely about the two
    # directions normal to the member: those rotations are not unknowns (statics of a hinge, common
    # practice, no source); the joint itself is held by the member acting as a cantilever
    from analysis.indeterminacy import indeterminacy

    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("N", (2.0, 1.5, 3.0))
    b.add_node("B", (4.0, -1.0, 0), support="pinned")
    b.add_member("AN", "A", "N", SEC, MAT, release_j="My Mz")
    b.add_member("BN", "B", "N", Section("bar", A=1e-3), MAT, truss=True)
    b.add_case(LoadCase("P", nodal=(NodalLoad("N", (3e3, -2e3, -5e3, 0, 0, 0)),)))
    frame = b.build()
    r = analyze(frame)
    ind = indeterminacy(frame)
    # 3 joints x 6 + 2 own end rotations (AN hinged at N) - 9 restraints - 5 reductions
    assert ind.kinematic == r.n_unknowns == 6 * 3 + 2 - 9 - 5
    assert ind.terms["reductions"] == 2 + 3  # two skew directions at N, three rotations of the bar's pin support
    assert r.cases["P"].equilibrium_residual < 1e-10
    # the hinge carries no bending moment
    dg = r.diagram("P", "AN")
    assert_allclose(dg["My"][-1], 0.0, atol=1e-6)
    assert_allclose(dg["Mz"][-1], 0.0, atol=1e-6)


def test_point_load_on_an_axial_bar_without_bending_constants():
    # a bar given only its area carries a transverse load as a simply supported span: its ends take
    # P b / L and P a / L (statics, common practice, no source)
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("B", (4, 0, 0), support="uy uz")
    b.add_node("C", (2, 0, 2))
    bar = Section("bar", A=1e-3)
    for mid, i, j in (("AB", "A", "B"), ("AC", "A", "C"), ("CB", "C", "B")):
        b.add_member(mid, i, j, bar, MAT, truss=True)
    b.add_case(LoadCase("p", member=(PointLoad("AB", "z", -1000.0, 1.0),)))
    r = analyze(b.build(), AnalysisOptions(plane=True))
    assert_allclose(r.cases["p"].reactions[[0, 1], 2], [750.0, 250.0], rtol=1e-10)
    assert r.cases["p"].equilibrium_residual < 1e-12
