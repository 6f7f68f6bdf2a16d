"""Single members and continuous beams against handbook closed forms."""
from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose

from analysis import (AnalysisOptions, Combination, FrameBuilder, LineLoad, LoadCase, Material, NodalLoad,
                      PointLoad, Section, analyze)

E, G = 210e9, 81e9
SEC = Section("S", A=1e-2, Iy=2e-4, Iz=5e-5, J=1e-5, Avy=4e-3, Avz=6e-3)
MAT = Material("M", E=E, G=G, density=7850.0)
EI = E * SEC.Iy


def beam(L=6.0, n=1, left="fixed", right=None, mid_supports=(), case=None, plane=None):
    b = FrameBuilder()
    xs = np.linspace(0.0, L, n + 1)
    for k, x in enumerate(xs):
        support = None
        if k == 0:
            support = left
        elif k == n:
            support = right
        elif k in mid_supports:
            support = "ux uy uz rx" if k else None
        b.add_node(f"N{k}", (x, 0.0, 0.0), support=support)
    for k in range(n):
        b.add_member(f"B{k}", f"N{k}", f"N{k + 1}", SEC, MAT)
    if case is not None:
        b.add_case(case)
    return b


def run(b, **opts):
    return analyze(b.build(), AnalysisOptions(**opts))


def test_cantilever_tip_load():
    # Roark's Formulas for Stress and Strain, Table 8.1 case 1a (cantilever, end load) — from memory:
    # δ = P L³ / (3 E I), θ = P L² / (2 E I), M_root = P L
    L, P = 4.0, 12e3
    b = beam(L, case=LoadCase("P", nodal=(NodalLoad("N1", (0, 0, -P, 0, 0, 0)),)))
    r = run(b)
    d = r.cases["P"].displacements[1]
    assert_allclose(d[2], -P * L**3 / (3 * EI), rtol=1e-12)
    assert_allclose(d[4], P * L**2 / (2 * EI), rtol=1e-12)  # θy = -dw/dx > 0 for a downward tip
    dg = r.diagram("P", "B0")
    assert_allclose(dg["My"][0], P * L, rtol=1e-12)  # hogging: +z fibres stretched
    assert_allclose(dg["Vz"], -P, rtol=1e-12)  # positive-face rule: dMy/dx = Vz
    assert_allclose(r.cases["P"].reactions[0, 2], P, rtol=1e-12)


def test_cantilever_uniform_load_and_shear_deformation():
    # Roark, Table 8.1 case 2a (cantilever, uniform load) — from memory: δ = w L⁴ / (8 E I);
    # shear deformation adds w L² / (2 G A_v) (Timoshenko beam theory, common practice, no source)
    L, w = 3.0, 8e3
    b = beam(L, case=LoadCase("w", member=(LineLoad("B0", "z", -w, axes="global"),)))
    assert_allclose(run(b).cases["w"].displacements[1, 2], -w * L**4 / (8 * EI), rtol=1e-12)
    shear = run(b, shear=True)
    assert_allclose(shear.cases["w"].displacements[1, 2], -w * L**4 / (8 * EI) - w * L**2 / (2 * G * SEC.Avz), rtol=1e-12)
    dz = shear.diagram("w", "B0")["dz"]
    assert_allclose(dz[-1], shear.cases["w"].displacements[1, 2], rtol=1e-12)


def test_fixed_fixed_uniform_load():
    # Roark, Table 8.1 case 2e (both ends fixed, uniform load) — from memory:
    # M_end = -w L²/12 (hogging), M_mid = w L²/24, δ_mid = w L⁴ / (384 E I)
    L, w = 8.0, 10e3
    b = beam(L, left="fixed", right="fixed", case=LoadCase("w", member=(LineLoad("B0", "z", -w, axes="global"),)))
    r = run(b)
    dg = r.diagram("w", "B0")
    s = dg.stations
    assert_allclose(dg["My"][0], w * L**2 / 12, rtol=1e-10)
    assert_allclose(dg["My"][-1], w * L**2 / 12, rtol=1e-10)
    mid = np.argmin(np.abs(s - L / 2))
    assert_allclose(dg["My"][mid], -w * L**2 / 24, rtol=1e-10)
    assert_allclose(dg["dz"][mid], -w * L**4 / (384 * EI), rtol=1e-10)


def test_propped_cantilever_uniform_load_extremes_are_exact():
    # Roark, Table 8.1 case 2c (fixed, simply supported, uniform load) — from memory:
    # R_prop = 3wL/8, M_fixed = wL²/8, largest sagging moment 9wL²/128 at 5L/8 from the fixed end,
    # largest deflection wL⁴/(185 E I) at 0.4215 L from the prop
    L, w = 6.0, 5e3
    b = beam(L, left="fixed", right="ux uy uz rx", case=LoadCase("w", member=(LineLoad("B0", "z", -w, axes="global"),)))
    r = run(b)
    assert_allclose(r.cases["w"].reactions[1, 2], 3 * w * L / 8, rtol=1e-10)
    dg = r.diagram("w", "B0")
    assert_allclose(dg["My"][0], w * L**2 / 8, rtol=1e-10)
    assert_allclose(dg["My"].min(), -9 * w * L**2 / 128, rtol=1e-10)
    assert np.any(np.isclose(dg.stations, 5 * L / 8, rtol=1e-9))
    # exact: δmax = wL⁴/(48 (1+√33)... ) numerically 0.005416 wL⁴/EI at x = 0.5785 L from the fixed end
    assert_allclose(dg["dz"].min(), -0.0054161 * w * L**4 / EI, rtol=1e-4)


def test_simply_supported_midspan_point_load_on_member():
    # Roark, Table 8.1 case 1e (simply supported, centre load) — from memory: δ = P L³ / (48 E I), M = P L / 4
    L, P = 5.0, 20e3
    b = beam(L, left="ux uy uz rx", right="uy uz", case=LoadCase("P", member=(PointLoad("B0", "z", -P, 0.5, relative=True),)))
    r = run(b)
    dg = r.diagram("P", "B0")
    mid = np.isclose(dg.stations, L / 2)
    assert mid.sum() == 2  # both sides of the jump in shear
    assert_allclose(dg["My"][mid], -P * L / 4, rtol=1e-12)
    assert_allclose(dg["dz"][mid], -P * L**3 / (48 * EI), rtol=1e-12)
    assert_allclose(sorted(dg["Vz"][mid]), [-P / 2, P / 2], rtol=1e-12)


def test_two_span_continuous_beam():
    # Two equal spans under uniform load (any beam handbook, e.g. the AISC Manual beam diagrams, case 29 —
    # from memory): middle reaction 10wL/8, end reactions 3wL/8, support moment -wL²/8
    L, w = 5.0, 7e3
    b = FrameBuilder()
    for k, x in enumerate((0.0, L, 2 * L)):
        b.add_node(f"N{k}", (x, 0, 0), support="ux uy uz rx" if k == 0 else "uy uz")
    b.add_member("B0", "N0", "N1", SEC, MAT)
    b.add_member("B1", "N1", "N2", SEC, MAT)
    b.add_case(LoadCase("w", member=tuple(LineLoad(m, "z", -w, axes="global") for m in ("B0", "B1"))))
    r = analyze(b.build())
    Rz = r.cases["w"].reactions[:, 2]
    assert_allclose(Rz, [3 * w * L / 8, 10 * w * L / 8, 3 * w * L / 8], rtol=1e-10)
    assert_allclose(r.diagram("w", "B0")["My"][-1], w * L**2 / 8, rtol=1e-10)


def test_space_cantilever_biaxial_load_and_torque():
    # Roark, Table 8.1 case 1a in both principal planes, and Table 10.1 (torsion of a bar: θ = T L / (G J))
    # — from memory
    L, Py, Pz, Tx = 3.0, 2e3, -5e3, 800.0
    b = beam(L, case=LoadCase("P", nodal=(NodalLoad("N1", (0, Py, Pz, Tx, 0, 0)),)))
    r = run(b)
    d = r.cases["P"].displacements[1]
    assert_allclose(d[1], Py * L**3 / (3 * E * SEC.Iz), rtol=1e-12)
    assert_allclose(d[2], Pz * L**3 / (3 * E * SEC.Iy), rtol=1e-12)
    assert_allclose(d[3], Tx * L / (G * SEC.J), rtol=1e-12)
    dg = r.diagram("P", "B0")
    assert_allclose(dg["T"], Tx, rtol=1e-12)
    assert_allclose(dg["Mz"][0], Py * L, rtol=1e-12)  # bends towards +y: the -y fibres at the root stretch
    assert_allclose(dg["My"][0], -Pz * L, rtol=1e-12)


def test_partial_trapezoidal_load_against_sympy_beam():
    # sympy.physics.continuum_mechanics.beam.Beam as the outside reference (singularity functions)
    import sympy
    from sympy.physics.continuum_mechanics.beam import Beam

    L, a, c, w1, w2 = 7.0, 1.5, 5.0, 4e3, 10e3
    b = beam(L, left="ux uy uz rx", right="uy uz",
             case=LoadCase("t", member=(LineLoad("B0", "z", -w1, -w2, start=a, end=c, axes="global"),)))
    r = run(b)
    dg = r.diagram("t", "B0")

    x = sympy.symbols("x")
    R1, R2 = sympy.symbols("R1 R2")
    bm = Beam(L, E, SEC.Iy)
    bm.apply_load(R1, 0, -1)
    bm.apply_load(R2, L, -1)
    slope = (w2 - w1) / (c - a)
    # downward load = positive value in sympy's convention (load acts in -y of the beam)
    bm.apply_load(w1, a, 0, end=c)
    bm.apply_load(slope, a, 1, end=c)
    bm.bc_deflection = [(0, 0), (L, 0)]
    bm.solve_for_reaction_loads(R1, R2)
    reac = bm.reaction_loads
    assert_allclose(r.cases["t"].reactions[0, 2], -float(reac[R1]), rtol=1e-9)
    moment = sympy.lambdify(x, bm.bending_moment())
    deflection = sympy.lambdify(x, bm.deflection())
    for s, My, dz in zip(dg.stations, dg["My"], dg["dz"]):
        # sympy's sagging moment is positive; ours stretches +z fibres when positive
        assert_allclose(My, -float(moment(s)), atol=1e-6 * abs(w2) * L**2)
        assert_allclose(dz, -float(deflection(s)), atol=1e-9 * w2 * L**4 / EI)


def test_combination_is_the_factored_sum():
    # superposition of linear results (common practice, no source)
    L = 4.0
    b = beam(L, case=LoadCase("A", nodal=(NodalLoad("N1", (0, 0, -1e3, 0, 0, 0)),)))
    b.add_case(LoadCase("B", member=(LineLoad("B0", "z", -2e3, axes="global"),)))
    b.add_combination(Combination("C", (("A", 1.35), ("B", 1.5))))
    r = run(b)
    c, A, B = (r.cases[k] for k in "CAB")
    assert_allclose(c.displacements, 1.35 * A.displacements + 1.5 * B.displacements, rtol=1e-12, atol=1e-18)
    assert_allclose(r.diagram("C", "B0")["My"][0], 1.35 * 1e3 * L + 1.5 * 2e3 * L**2 / 2, rtol=1e-12)
    assert c.equilibrium_residual < 1e-12


def test_batched_uniform_diagrams_equal_the_quadrature_path():
    # two independent evaluations of the same diagrams: closed-form polynomials vs Gauss quadrature
    from analysis.results import _uniform_diagrams

    b = beam(6.0, left="fixed", right="uy uz", case=LoadCase("w", member=(LineLoad("B0", "z", -9e3, axes="global"),
                                                                          LineLoad("B0", "y", 2e3))))
    for opts in ({}, {"shear": True}):
        r = run(b, **opts)
        cr = r.cases["w"]
        fast = _uniform_diagrams(r, cr, np.array([0]), 11)[0][0]  # (diagrams, block): the first diagram
        slow = r._diagram(cr, 0, 11)
        assert_allclose(fast.stations, slow.stations, atol=1e-9)
        assert_allclose(fast.forces, slow.forces, atol=1e-6 * np.abs(slow.forces).max())
        assert_allclose(fast.deflections, slow.deflections, atol=1e-9 * np.abs(slow.deflections).max())


def test_projected_global_load_on_a_rafter():
    # a snow load per horizontal (projected) length on an inclined simply supported rafter: the vertical
    # reactions are w * (horizontal span) / 2 each (statics, common practice, no source)
    span, rise, w = 6.0, 2.5, 3e3
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="ux uy uz rx")
    b.add_node("B", (span, 0, rise), support="uy uz")
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_case(LoadCase("s", member=(LineLoad("AB", "z", -w, axes="global", projected=True),)))
    r = analyze(b.build(), AnalysisOptions(plane=True))
    assert_allclose(r.cases["s"].reactions[:, 2], [w * span / 2, w * span / 2], rtol=1e-10)
    # the same load per true length gives w * L / 2
    b2 = FrameBuilder()
    b2.add_node("A", (0, 0, 0), support="ux uy uz rx")
    b2.add_node("B", (span, 0, rise), support="uy uz")
    b2.add_member("AB", "A", "B", SEC, MAT)
    b2.add_case(LoadCase("s", member=(LineLoad("AB", "z", -w, axes="global"),)))
    L = np.hypot(span, rise)
    assert_allclose(analyze(b2.build(), AnalysisOptions(plane=True)).cases["s"].reactions[:, 2], [w * L / 2] * 2, rtol=1e-10)


def test_concentrated_moment_on_a_simply_supported_beam():
    # Roark, Table 8.1 case 3e (simply supported, intermediate couple) — from memory: reactions ±M0/L,
    # moment jumps by M0 at the load point
    L, a, M0 = 6.0, 2.0, 12e3
    b = beam(L, left="ux uy uz rx", right="uy uz",
             case=LoadCase("m", member=(PointLoad("B0", "y", M0, a, moment=True),)))
    r = run(b)
    assert_allclose(abs(r.cases["m"].reactions[0, 2]), M0 / L, rtol=1e-12)
    dg = r.diagram("m", "B0")
    at = np.flatnonzero(np.isclose(dg.stations, a))
    assert at.size == 2
    assert_allclose(abs(dg["My"][at[1]] - dg["My"][at[0]]), M0, rtol=1e-12)


def test_diagram_block_is_the_members_diagrams_end_to_end():
    # The block the writer, the JSON and the envelopes read (Results.diagram_block) against the members'
    # own diagrams: made by the batched closed forms (uniform loads only) and joined where a point load
    # sends one member down the general path. Consistency of two paths, common practice, no source.
    uniform = LoadCase("w", member=tuple(LineLoad(f"B{k}", "z", -4e3, axes="global") for k in range(3)))
    mixed = LoadCase("p", member=(LineLoad("B0", "z", -4e3, axes="global"), PointLoad("B1", "z", -9e3, 0.3, relative=True)))
    for case in (uniform, mixed):
        r = run(beam(12.0, n=3, left="fixed", right="uy uz", mid_supports=(1,), case=case))
        blk = r.diagram_block(case.name)
        diagrams = [r.diagram(case.name, k) for k in range(3)]
        assert blk.sizes.tolist() == [len(dg.stations) for dg in diagrams]
        for k, dg in enumerate(diagrams):
            rows = slice(int(blk.starts[k]), int(blk.starts[k] + blk.sizes[k]))
            assert np.array_equal(blk.stations[rows], dg.stations)
            assert np.array_equal(blk.forces[rows], dg.forces)
            assert np.array_equal(blk.deflections[rows], dg.deflections)


def test_diagrams_of_a_batched_case_are_made_when_asked_for():
    # Where every member is batched, Results.diagram hands out views of the block made on first use: the
    # same numbers as the batch's own per-member list, any index a list takes, IndexError beyond.
    # Consistency of two paths, common practice, no source.
    import pytest

    from analysis.results import _uniform_diagrams

    case = LoadCase("w", member=tuple(LineLoad(f"B{k}", "z", -4e3, axes="global") for k in range(3)))
    r = run(beam(12.0, n=3, left="fixed", right="uy uz", case=case))
    listed, _ = _uniform_diagrams(r, r.cases["w"], np.arange(3), r.options.stations)
    r.diagram("w", 0)
    lazy = r._diagram_cache[("w", r.options.stations)]
    assert len(lazy) == 3 and lazy[-1] is lazy[2] and lazy[-1] is lazy[-1] and r.diagram("w", 1) is lazy[1]
    for dg, ref in zip((lazy[k] for k in range(3)), listed):
        assert np.array_equal(dg.stations, ref.stations) and np.array_equal(dg.forces, ref.forces)
        assert np.array_equal(dg.deflections, ref.deflections)
    with pytest.raises(IndexError):
        lazy[3]
