"""Inclined supports: restraints along a support's own axes, turned against the world axes.

References (statics and counting, common practice, no source):
* a simply supported beam of span L under a uniform load w, on a pin at A and a roller at B on a plane
  inclined at α: the roller pushes along the plane's normal, so its vertical reaction w L / 2 comes with a
  horizontal one w L / 2 · tan α, which the pin takes back;
* the same roller turned by any angle in the beam's own plane leaves the bending moments of the simple span
  (w L² / 8 at midspan) as long as the roller is not parallel to the beam;
* a roller parallel to the beam's axis leaves it free to slide: a mechanism;
* each inclined restraint is one restraint in the count.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from analysis import AnalysisOptions, FrameBuilder, LoadCase, Material, Section, analyze
from analysis.errors import ModelError, UnstableStructureError
from analysis.indeterminacy import indeterminacy
from analysis.model import LineLoad

SEC = Section("IPE 300", A=53.8e-4, Iy=8356e-8, Iz=604e-8, J=20.1e-8)
MAT = Material("S355", E=210e9, G=81e9)
L, W = 6.0, -10e3


def beam(alpha_deg: float, *, pin="ux uy uz rx rz"):
    a = math.radians(alpha_deg)
    normal = (math.sin(a), 0.0, math.cos(a))
    along = (math.cos(a), 0.0, -math.sin(a))
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support=pin)
    b.add_node("B", (L, 0, 0))
    b.inclined_support("B", (along, (0.0, 1.0, 0.0), normal), "uy uz")  # holds y and the plane's normal
    b.add_member("M", "A", "B", SEC, MAT, ref=(0, 0, 1))
    b.add_case(LoadCase("q", member=(LineLoad("M", "z", W, W),)))
    return b.build()


@pytest.mark.parametrize("alpha", [0.0, 15.0, 30.0, 60.0])
@pytest.mark.parametrize("plane", [False, True], ids=["space", "plane"])
def test_roller_on_an_inclined_plane(alpha, plane):
    res = analyze(beam(alpha), AnalysisOptions(plane=plane))
    cr = res.case("q")
    vertical = abs(W) * L / 2
    horizontal = vertical * math.tan(math.radians(alpha))
    assert cr.reactions[1, 2] == pytest.approx(vertical, rel=1e-9)
    assert cr.reactions[1, 0] == pytest.approx(horizontal, rel=1e-9, abs=1e-6)
    assert cr.reactions[0, 2] == pytest.approx(vertical, rel=1e-9)
    assert cr.reactions[0, 0] == pytest.approx(-horizontal, rel=1e-9, abs=1e-6)
    assert cr.equilibrium_residual < 1e-9
    # the roller's reaction is normal to its plane: nothing along it
    a = math.radians(alpha)
    along = np.array([math.cos(a), 0.0, -math.sin(a)])
    assert abs(cr.reactions[1, :3] @ along) < 1e-6 * vertical
    dg = res.diagram("q", 0)
    mid = np.argmin(np.abs(dg.stations - L / 2))
    assert abs(dg.forces[mid, 4]) == pytest.approx(abs(W) * L**2 / 8, rel=1e-9)
    # the displacement at B is along the plane only
    u_b = cr.displacements[1, :3]
    assert abs(u_b @ np.array([math.sin(a), 0.0, math.cos(a)])) < 1e-12


def test_each_inclined_restraint_counts_once():
    frame = beam(30.0)
    ind = indeterminacy(frame)
    assert ind.terms["restraints"] == 5 + 2 and ind.terms["constraints"] == 0
    assert ind.kinematic == 12 - 7 and ind.mechanisms == 0
    plane = indeterminacy(frame, AnalysisOptions(plane=True))
    assert plane.kinematic == 6 - 3 and plane.static == 0  # pin (2) + roller (1) on a plane beam: determinate


def test_a_roller_along_the_beam_is_a_mechanism():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="uy uz rx rz")  # nothing holds x
    b.add_node("B", (L, 0, 0))
    b.inclined_support("B", ((0.0, 0.0, 1.0), (0.0, 1.0, 0.0), (1.0, 0.0, 0.0)), "ux uy")  # holds z and y only
    b.add_member("M", "A", "B", SEC, MAT, ref=(0, 0, 1))
    b.add_case(LoadCase("q", member=(LineLoad("M", "z", W, W),)))
    frame = b.build()
    assert indeterminacy(frame).mechanisms == 1
    with pytest.raises(UnstableStructureError):
        analyze(frame)


def test_bad_inclined_supports_are_model_errors():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.inclined_support("A", ((1, 0, 0), (0, 1, 0), (0, 0, 1)), "uz")
    b.add_node("B", (L, 0, 0))
    b.add_member("M", "A", "B", SEC, MAT)
    with pytest.raises(ModelError, match="inclined support and restraints"):
        b.build()
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0))
    b.inclined_support("B", ((1, 0, 0), (0, 1, 0), (0, 1, 1)), "uz")
    b.add_member("M", "A", "B", SEC, MAT)
    with pytest.raises(ModelError, match="not three orthogonal unit vectors"):
        b.build()


def test_json_and_ifc_carry_the_inclined_reaction(tmp_path):
    from analysis.results import SCHEMA

    res = analyze(beam(30.0))
    doc = res.to_dict()
    assert doc["schema"] == SCHEMA and "B" in doc["cases"]["q"]["reactions"]
    assert doc["cases"]["q"]["reactions"]["B"]["fz"] == pytest.approx(abs(W) * L / 2, rel=1e-9)


def test_axes_given_to_a_few_digits_are_made_orthonormal():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="ux uy uz rx rz")
    b.add_node("B", (L, 0, 0))
    b.inclined_support("B", ((0.866, 0, -0.5), (0, 1, 0), (0.5, 0, 0.866)), "uy uz")
    b.add_member("M", "A", "B", SEC, MAT, ref=(0, 0, 1))
    b.add_case(LoadCase("q", member=(LineLoad("M", "z", W, W),)))
    frame = b.build()
    Q = np.asarray(frame.inclined_supports[0].axes)
    assert np.allclose(Q @ Q.T, np.eye(3), atol=1e-12) and np.allclose(Q, beam(30.0).inclined_supports[0].axes,
                                                                          atol=1e-3)
    r = analyze(frame).case("q").reactions[1]
    assert r[2] == pytest.approx(abs(W) * L / 2, rel=1e-9)


def test_the_report_names_the_inclined_support(tmp_path):
    import types

    from analysis.report import write_report

    frame = beam(30.0)
    model = types.SimpleNamespace(frame=frame, route="api", notes=[], diagnostics=[], path="beam", schema="-",
                                  units=None)
    write_report(str(tmp_path / "r.html"), model, analyze(frame))
    assert "inclined: uy uz along its own axes (its z: 0.500, 0.000, 0.866)" in (tmp_path / "r.html").read_text()


def test_second_order_keeps_the_inclined_support():
    # the subdivided frame of the second-order analysis holds B by the same inclined roller: the vertical
    # reaction stays w L / 2 to within the small second-order change (statics, common practice, no source)
    first = analyze(beam(30.0)).case("q").reactions[1]
    second = analyze(beam(30.0), AnalysisOptions(second_order=True)).case("q").reactions[1]
    assert second[2] == pytest.approx(first[2], rel=1e-3) and second[0] == pytest.approx(first[0], rel=1e-3)
