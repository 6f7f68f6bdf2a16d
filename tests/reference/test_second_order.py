"""Second-order (P-Δ and P-δ) analysis against the beam-column closed forms, one member per column/beam.

Sources (Timoshenko & Gere, Theory of Elastic Stability, ch. 1 — from memory), k = √(P/EI):
cantilever under axial compression P and tip shear H: tip deflection δ = H (tan kL − kL) / (P k),
base moment H L + P δ; pinned beam-column under compression P and uniform load w: midspan moment
M = (w/k²)(sec(kL/2) − 1); under tension the same forms with k → ik (tanh, sech): the member is stiffer.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from analysis import (AnalysisOptions, Combination, FrameBuilder, LineLoad, LoadCase, Material, NodalLoad,
                      Section, UnstableStructureError, analyze)

E = 210e9
I = 8356e-8
A = 53.8e-4
L = 5.0
RTOL = 5e-3
MAT = Material("steel", E=E, G=81e9, density=7850.0)
SEC = Section("col", A=A, Iy=I, Iz=I, J=1e-6)
PE = math.pi**2 * E * I / L**2


def cantilever(P: float, H: float):
    b = FrameBuilder()
    b.add_node("B", (0, 0, 0), support="fixed")
    b.add_node("T", (0, 0, L))
    b.add_member("C", "B", "T", SEC, MAT)
    b.add_case(LoadCase("axial", nodal=(NodalLoad("T", (0, 0, -P, 0, 0, 0)),)))
    b.add_case(LoadCase("lateral", nodal=(NodalLoad("T", (H, 0, 0, 0, 0, 0)),)))
    b.add_combination(Combination("both", (("axial", 1.0), ("lateral", 1.0))))
    return b.build()


@pytest.mark.parametrize("ratio", [0.05, 0.15, 0.2])
def test_cantilever_axial_and_tip_shear(ratio):
    P, H = ratio * PE, 2.0e3  # critical load of the cantilever is PE/4
    res = analyze(cantilever(P, H), AnalysisOptions(second_order=True))
    assert res.theory == "second-order"
    k = math.sqrt(P / (E * I))
    delta = H * (math.tan(k * L) - k * L) / (P * k)
    cr = res.cases["both"]
    top = res.frame.node_index("T")
    assert_allclose(cr.displacements[top, 0], delta, rtol=RTOL)
    # base moment from the member diagram (P-Δ included): |M| = H L + P δ at the fixed end
    dg = res.diagram("both", "C")
    M = np.hypot(dg["My"], dg["Mz"])
    assert_allclose(M[0], H * L + P * delta, rtol=RTOL)
    assert_allclose(abs(cr.reactions[res.frame.node_index("B"), 4]), H * L + P * delta, rtol=RTOL)
    # first-order results are kept beside
    assert_allclose(res.first_order_cases["both"].displacements[top, 0], H * L**3 / (3 * E * I), rtol=1e-9)


def test_combination_is_its_own_load_set_not_a_sum():
    P, H = 0.15 * PE, 2.0e3
    res = analyze(cantilever(P, H), AnalysisOptions(second_order=True))
    top = res.frame.node_index("T")
    summed = res.cases["axial"].displacements[top, 0] + res.cases["lateral"].displacements[top, 0]
    assert_allclose(summed, H * L**3 / (3 * E * I), rtol=1e-6)  # each alone is (nearly) first order
    # the same loads as one case
    b = cantilever(P, H)
    one = b.replace(load_cases=(LoadCase("summed", nodal=(NodalLoad("T", (H, 0, -P, 0, 0, 0)),)),), combinations=())
    res1 = analyze(one, AnalysisOptions(second_order=True))
    assert_allclose(res.cases["both"].displacements, res1.cases["summed"].displacements, rtol=1e-9, atol=1e-15)
    assert res.cases["both"].displacements[top, 0] > 1.3 * summed


def beam_column(P: float, w: float, n_stations: int = 11):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="ux uy uz rx")
    b.add_node("B", (L, 0, 0), support="uy uz")
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_case(LoadCase("w", nodal=(NodalLoad("B", (-P, 0, 0, 0, 0, 0)),),
                        member=(LineLoad("AB", "z", -w, axes="global"),)))
    return b.build()


@pytest.mark.parametrize("ratio", [0.3, 0.6, -0.6])
def test_pinned_beam_column_midspan_moment(ratio):
    """Compression (ratio > 0): sec; tension (ratio < 0): the moment is smaller (tension stiffening)."""
    P, w = ratio * PE, 10e3
    res = analyze(beam_column(P, w), AnalysisOptions(second_order=True))
    dg = res.diagram("w", "AB")
    mid = int(np.argmin(np.abs(dg.stations - L / 2)))
    assert dg.stations[mid] == pytest.approx(L / 2)
    k = math.sqrt(abs(P) / (E * I))
    if P > 0:
        expected = w / k**2 * (1 / math.cos(k * L / 2) - 1)
    else:
        expected = w / k**2 * (1 - 1 / math.cosh(k * L / 2))
    assert_allclose(abs(dg["My"][mid]), expected, rtol=RTOL)
    first = w * L**2 / 8
    assert (abs(dg["My"][mid]) > first) == (P > 0)
    # midspan deflection: 5wL⁴/384EI amplified (or reduced); the closed form of the beam-column
    u = k * L / 2
    if P > 0:
        d_exact = w / (P * k**2) * (1 / math.cos(u) - 1) - w * L**2 / (8 * P)
    else:
        d_exact = -(w / (abs(P) * k**2) * (1 / math.cosh(u) - 1) + w * L**2 / (8 * abs(P)))
    assert_allclose(abs(dg["dz"][mid]), abs(d_exact), rtol=RTOL)


def test_past_the_critical_load_stops_and_names_the_load_set():
    frame = cantilever(0.3 * PE, 1.0e3)  # cantilever critical load PE/4
    with pytest.raises(UnstableStructureError, match=r"case 'axial'.*α_cr = 0\.83"):
        analyze(frame, AnalysisOptions(second_order=True))


def test_second_order_results_serialise_with_theory():
    res = analyze(cantilever(0.1 * PE, 1.0e3), AnalysisOptions(second_order=True))
    doc = res.to_dict()
    assert doc["theory"] == "second-order"
    assert set(doc["cases"]) == {"axial", "lateral", "both"}
    assert doc["cases"]["both"]["kind"] == "combination"
    first = analyze(cantilever(0.1 * PE, 1.0e3)).to_dict()
    assert first["theory"] == "first-order"


def test_both_solution_routes_agree():
    """On the first-order factor (conjugate gradients) or with its own factorisation: the same answer.

    ``condense_pinned`` makes the engine take the route with its own factorisation (nothing is pinned here,
    so the idealisation is the same)."""
    frame = cantilever(0.15 * PE, 2.0e3)
    a = analyze(frame, AnalysisOptions(second_order=True))
    b = analyze(frame, AnalysisOptions(second_order=True, condense_pinned=True))
    for name in ("axial", "lateral", "both"):
        assert_allclose(a.cases[name].displacements, b.cases[name].displacements, rtol=1e-8, atol=1e-14)
        assert_allclose(a.cases[name].end_forces, b.cases[name].end_forces, rtol=1e-7, atol=1e-6)


def test_axially_rigid_columns_sway_portal():
    """Axially rigid members (their axial force a constraint force): the sway is amplified by about
    1/(1 − 1/α_cr) (common practice, no source), within a few percent for a portal."""
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 4.0))
    b.add_node("C", (6.0, 0, 4.0))
    b.add_node("D", (6.0, 0, 0), support="fixed")
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_member("BC", "B", "C", SEC, MAT)
    b.add_member("DC", "D", "C", SEC, MAT)
    b.add_case(LoadCase("G", nodal=(NodalLoad("B", (5e3, 0, -1.5e6, 0, 0, 0)), NodalLoad("C", (0, 0, -1.5e6, 0, 0, 0)))))
    frame = b.build()
    res = analyze(frame, AnalysisOptions(second_order=True, buckling=1, inextensible=True, plane=True))
    alpha = res.buckling["G"][0].factor
    assert 2 < alpha < 10
    top = res.frame.node_index("B")
    ratio = res.cases["G"].displacements[top, 0] / res.first_order_cases["G"].displacements[top, 0]
    assert ratio == pytest.approx(1 / (1 - 1 / alpha), rel=0.05)
    # equilibrium of the columns' axial forces with the vertical loads (constraint forces)
    N = [res.diagram("G", m)["N"][0] for m in ("AB", "DC")]
    assert sum(N) == pytest.approx(-3.0e6, rel=1e-6)


def test_pinned_beam_column_central_point_load():
    """Midspan moment (Q / 2k) tan(kL/2) under compression P and a central point load Q
    (Timoshenko & Gere, ch. 1 — from memory); the load sits on a piece boundary and inside one."""
    from analysis import PointLoad

    P, Q = 0.5 * PE, 20e3
    k = math.sqrt(P / (E * I))
    for at in (0.5, 0.55):
        b = FrameBuilder()
        b.add_node("A", (0, 0, 0), support="ux uy uz rx")
        b.add_node("B", (L, 0, 0), support="uy uz")
        b.add_member("AB", "A", "B", SEC, MAT)
        b.add_case(LoadCase("Q", nodal=(NodalLoad("B", (-P, 0, 0, 0, 0, 0)),),
                            member=(PointLoad("AB", "z", -Q, at, axes="global", relative=True),)))
        res = analyze(b.build(), AnalysisOptions(second_order=True))
        dg = res.diagram("Q", "AB")
        a = at * L
        if at == 0.5:
            expected = Q / (2 * k) * math.tan(k * L / 2)
        else:  # load at a from A: moment under the load Q sin(k(L−a)) sin(ka) / (k sin kL) (same source)
            expected = Q * math.sin(k * (L - a)) * math.sin(k * a) / (k * math.sin(k * L))
        under = np.abs(dg.stations - a) < 1e-9
        assert under.any()
        assert_allclose(np.abs(dg["My"][under]).max(), expected, rtol=RTOL)
