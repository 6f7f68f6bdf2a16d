"""Uniform temperature changes of members.

References (common practice, no source): a bar of axial stiffness E A held between rigid supports and
heated by ΔT carries N = -E A α ΔT; free at one end it lengthens by α ΔT L and carries nothing; held by a
spring k it carries N = -α ΔT L / (L / (E A) + 1 / k) (the bar and the spring in series); the coefficient
of steel 12e-6 /K (EN 1993-1-1, 3.2.6 — from memory).
"""
from __future__ import annotations

import numpy as np
import pytest

from analysis import AnalysisOptions, FrameBuilder, LoadCase, Material, Section, analyze
from analysis.errors import ModelError
from analysis.model import Combination, TemperatureLoad

E, A, ALPHA, L, DT = 210e9, 53.8e-4, 12e-6, 6.0, 30.0
SEC = Section("IPE 300", A=A, Iy=8356e-8, Iz=604e-8, J=20.1e-8)
STEEL = Material("S355", E=E, G=81e9, alpha=ALPHA)


def bar(end_b="fixed", spring=None, material=STEEL, **member):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (L, 0, 0), support=end_b, springs={"ux": spring} if spring else None)
    b.add_member("M", "A", "B", SEC, material, **member)
    b.add_case(LoadCase("T", temperature=(TemperatureLoad("M", DT),)))
    b.add_combination(Combination("1.5 T", (("T", 1.5),)))
    return b.build()


@pytest.mark.parametrize("plane", [False, True], ids=["space", "plane"])
def test_restrained_bar(plane):
    res = analyze(bar(), AnalysisOptions(plane=plane))
    N = res.diagram("T", 0).forces[:, 0]
    assert np.allclose(N, -E * A * ALPHA * DT, rtol=1e-12)
    r = res.case("T").reactions
    assert r[0, 0] == pytest.approx(E * A * ALPHA * DT, rel=1e-12) and r[1, 0] == pytest.approx(-E * A * ALPHA * DT)
    assert res.case("T").equilibrium_residual < 1e-12
    assert np.allclose(res.diagram("1.5 T", 0).forces[:, 0], -1.5 * E * A * ALPHA * DT, rtol=1e-12)
    assert np.allclose(res.diagram("T", 0).forces[:, 1:], 0.0, atol=1e-6)  # no shear, no moment


def test_free_end_lengthens():
    res = analyze(bar(end_b="uy uz rx"))
    assert res.case("T").displacements[1, 0] == pytest.approx(ALPHA * DT * L, rel=1e-12)
    assert np.allclose(res.diagram("T", 0).forces[:, 0], 0.0, atol=1e-6)


def test_bar_against_a_spring():
    k = 50e6
    res = analyze(bar(end_b="uy uz rx ry rz", spring=k))
    expected = -ALPHA * DT * L / (L / (E * A) + 1 / k)
    assert res.diagram("T", 0).forces[0, 0] == pytest.approx(expected, rel=1e-12)


def test_second_order_keeps_the_straight_bar():
    res = analyze(bar(), AnalysisOptions(second_order=True))
    assert np.allclose(res.diagram("T", 0).forces[:, 0], -E * A * ALPHA * DT, rtol=1e-9)


def test_no_coefficient_or_a_rigid_bar_is_an_error():
    with pytest.raises(ModelError, match=r"member M has a temperature change but its material 'S355' no coefficient"):
        bar(material=Material("S355", E=E, G=81e9))
    with pytest.raises(ModelError, match=r"member M is axially rigid and cannot take a temperature change"):
        analyze(bar(inextensible=True))
