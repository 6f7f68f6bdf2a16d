"""The report's stability and dynamics section: critical factors with their meaning, amplification, modes."""
from __future__ import annotations

import math
import types

import pytest

from analysis import AnalysisOptions, Combination, FrameBuilder, LoadCase, NodalLoad, analyze
from analysis.report.html import build_report
from analysis.report.stability import verdict


def _portal(steel, ipe300, load):
    b = FrameBuilder(name="portal")
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 4))
    b.add_node("C", (6, 0, 4))
    b.add_node("D", (6, 0, 0), support="fixed")
    b.add_member("c1", "A", "B", ipe300, steel)
    b.add_member("b", "B", "C", ipe300, steel)
    b.add_member("c2", "D", "C", ipe300, steel)
    b.add_case(LoadCase("G", nodal=(NodalLoad("B", (0, 0, -load, 0, 0, 0)), NodalLoad("C", (0, 0, -load, 0, 0, 0)))))
    b.add_case(LoadCase("W", nodal=(NodalLoad("B", (5e3, 0, 0, 0, 0, 0)),)))
    b.add_combination(Combination("ULS", (("G", 1.35), ("W", 1.5))))
    return b.build()


def _model(frame):
    return types.SimpleNamespace(frame=frame, route="structural", schema="IFC4", path="/x/p.ifc", notes=[],
                                 diagnostics=[])


def test_verdicts_follow_the_thresholds():
    assert "acceptable" in verdict(12.0)
    assert "1/(1 − 1/α_cr) = 1.250" in verdict(5.0)
    assert "second-order analysis required" in verdict(2.0)
    assert "cannot carry" in verdict(0.9)
    assert "no buckling" in verdict(math.inf)


def test_section_with_factors_amplification_and_modes(steel, ipe300):
    frame = _portal(steel, ipe300, 400e3)
    res = analyze(frame, AnalysisOptions(plane=True, second_order=True, buckling=2, modes=3, mass=(("G", 1.0),)))
    text = build_report(_model(frame), res, plots=True)
    assert "id='stability'" in text and "Elastic critical load factors" in text
    assert "EN 1993-1-1" in text and "α_cr ≥ 10" in text
    assert "Second-order amplification" in text and "Natural modes" in text
    alpha = res.buckling["ULS"][0].factor
    assert f"{alpha:.3f}" in text
    assert f"{res.modes[0].frequency:.4f}" in text
    # one figure each (its caption is also the image's alt text)
    assert text.count("buckling mode, α_cr") == 2 and text.count("Mode 1: f =") == 2


def test_first_order_report_has_no_such_section(steel, ipe300):
    frame = _portal(steel, ipe300, 100e3)
    text = build_report(_model(frame), analyze(frame, AnalysisOptions(plane=True)), plots=False)
    assert "id='stability'" not in text
