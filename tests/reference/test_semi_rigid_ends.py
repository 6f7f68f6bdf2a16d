"""Semi-rigid member ends: a rotational spring between a member end and its joint.

References, all closed forms:
* cantilever on a rotational spring under a tip load: the beam's own P L³/(3 E I) plus the rigid turn of
  the spring, P L · L / k (superposition, common practice, no source);
* a beam with equal end springs into rigid supports under a uniform load: the end moment
  (w L²/12) / (1 + 2 E I / (k L)) (slope-deflection with the spring rotation M / k at each end — from memory;
  k → ∞ gives the fixed-end moment, k → 0 the simple span);
* a column on a rotational spring at its base, free at its top: the lowest critical load P = β² E I with
  βL tan(βL) = k L / (E I) (the elastically restrained cantilever column — from memory), solved with scipy;
* the count: each semi-rigid end is one unknown of its own, as a hinge is (common practice, no source).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

from analysis import AnalysisOptions, FrameBuilder, LoadCase, Material, NodalLoad, Section, analyze
from analysis.errors import ModelError
from analysis.indeterminacy import indeterminacy
from analysis.model import LineLoad

E, I, L = 210e9, 8356e-8, 4.0
SEC = Section("IPE 300", A=53.8e-4, Iy=I, Iz=604e-8, J=20.1e-8)
MAT = Material("S355", E=E, G=81e9, density=7850.0)


def cantilever(k: float, P: float = 10e3):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0))
    b.add_member("M", "A", "B", SEC, MAT, ref=(0, 0, 1), spring_i={"My": k})
    b.add_case(LoadCase("tip", nodal=(NodalLoad("B", (0, 0, -P, 0, 0, 0)),)))
    return b.build()


@pytest.mark.parametrize("k", [1e5, 5e6, 1e9])
@pytest.mark.parametrize("plane", [False, True], ids=["space", "plane"])
def test_cantilever_on_a_spring(k, plane):
    P = 10e3
    res = analyze(cantilever(k, P), AnalysisOptions(plane=plane))
    cr = res.case("tip")
    uz = cr.displacements[1, 2]
    assert uz == pytest.approx(-(P * L**3 / (3 * E * I) + P * L * L / k), rel=1e-9)
    # the spring carries the whole base moment; the joint itself does not turn (it is fixed)
    assert cr.reactions[0, 4] == pytest.approx(-P * L, rel=1e-9) or cr.reactions[0, 4] == pytest.approx(P * L, rel=1e-9)
    assert abs(cr.end_forces[0, 0, 4]) == pytest.approx(P * L, rel=1e-9)
    dg = res.diagram("tip", 0)
    assert dg.deflections[-1, 1] == pytest.approx(uz, rel=1e-9)  # dz at the tip is the tip displacement
    assert cr.equilibrium_residual < 1e-9


@pytest.mark.parametrize("k", [2e6, 2e7, 2e8])
def test_uniformly_loaded_beam_with_spring_ends(k):
    w = -12e3  # N/m, down
    span = 6.0
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (span, 0, 0), support="fixed")
    b.add_member("M", "A", "B", SEC, MAT, ref=(0, 0, 1), spring_i={"My": k}, spring_j={"My": k})
    b.add_case(LoadCase("q", member=(LineLoad("M", "z", w, w),)))
    res = analyze(b.build())
    end_moment = abs(w) * span**2 / 12 / (1 + 2 * E * I / (k * span))
    f = res.case("q").end_forces[0]
    assert abs(f[0, 4]) == pytest.approx(end_moment, rel=1e-9)
    assert abs(f[1, 4]) == pytest.approx(end_moment, rel=1e-9)
    dg = res.diagram("q", 0)
    mid = np.argmin(np.abs(dg.stations - span / 2))
    assert abs(dg.forces[mid, 4]) == pytest.approx(abs(w) * span**2 / 8 - end_moment, rel=1e-9)


def test_column_on_a_base_spring_buckles_at_the_restrained_cantilever_load():
    k = 3 * E * I / L  # a spring as stiff as the column's own 3EI/L
    P = 1e5
    b = FrameBuilder()
    b.add_node("B", (0, 0, 0), support="fixed")
    b.add_node("T", (0, 0, L))
    b.add_member("C", "B", "T", Section("col", A=53.8e-4, Iy=I, Iz=4 * I, J=1e-6), MAT,
                 spring_i={"My": k, "Mz": 1e12})
    b.add_case(LoadCase("P", nodal=(NodalLoad("T", (0, 0, -P, 0, 0, 0)),)))
    res = analyze(b.build(), AnalysisOptions(buckling=1))
    ratio = k * L / (E * I)
    bl = scipy.optimize.brentq(lambda x: x * math.tan(x) - ratio, 1e-6, math.pi / 2 - 1e-9)
    p_cr = bl**2 * E * I / L**2
    assert res.buckling["P"][0].factor == pytest.approx(p_cr / P, rel=5e-3)


def test_a_semi_rigid_end_is_one_unknown_of_its_own():
    frame = cantilever(5e6)
    space, plane = indeterminacy(frame), indeterminacy(frame, AnalysisOptions(plane=True))
    assert space.kinematic == 2 * 6 - 6 + 1 and space.terms["releases"] == 1
    assert plane.kinematic == 2 * 3 - 3 + 1
    assert space.static == indeterminacy(cantilever(5e6).replace(end_springs=np.zeros((1, 2, 6)))).static
    assert space.mechanisms == 0  # the spring holds the end's own rotation
    # condensing pinned ends out does not touch a semi-rigid end: the same answer
    a = analyze(frame).case("tip").displacements
    b = analyze(frame, AnalysisOptions(condense_pinned=True)).case("tip").displacements
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("spring,message", [
    ({"N": 1e6}, "only My and Mz"),
    ({"My": -1.0}, "finite number >= 0"),
])
def test_bad_springs_are_model_errors(spring, message):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0))
    with pytest.raises(ModelError, match=message):
        b.add_member("M", "A", "B", SEC, MAT, spring_i=spring)
        b.build()


def test_released_and_sprung_at_once_is_an_error():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0))
    b.add_member("M", "A", "B", SEC, MAT, release_i="My", spring_i={"My": 1e6})
    with pytest.raises(ModelError, match="both released and sprung"):
        b.build()
