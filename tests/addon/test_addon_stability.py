"""The add-on's second-order, buckling and modes glue on a column built by hand (closed forms in the engine tests).

Euler's fixed–free column, P_cr = π²EI/(4L²) (Timoshenko & Gere, ch. 2 — from memory); a cantilever's first
frequency ω = 1.8751² √(EI/(μL⁴)) (Blevins, table 8-1 — from memory).
"""
from __future__ import annotations

import math

import pytest

pytestmark = pytest.mark.addon

E, I, A, L, RHO = 210e9, 8356e-8, 53.8e-4, 4.0, 7850.0
P = 1e5


def _column(engine):
    b = engine.FrameBuilder(name="column")
    steel = engine.Material("steel", E=E, G=81e9, density=RHO)
    sec = engine.Section("col", A=A, Iy=I, Iz=I, J=1e-5)
    b.add_node("B", (0, 0, 0), support="fixed")
    b.add_node("T", (0, 0, L))
    b.add_member("C", "B", "T", sec, steel)
    b.add_case(engine.LoadCase("P", nodal=(engine.NodalLoad("T", (1e3, 0, -P, 0, 0, 0)),)))
    b.add_combination(engine.Combination("1.5P", (("P", 1.5),)))
    return b.build()


def test_second_order_buckling_modes_and_shape(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    use_frame(_column(engine))
    scene = bpy.context.scene
    settings = scene.plumbframe
    settings.theory = "SECOND"
    settings.buckling_count = 2
    settings.modes_count = 2
    settings.mass_cases = ""
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    doc = scene["pf_stability"].to_dict()
    assert doc["theory"] == "second-order"
    pcr = math.pi**2 * E * I / (4 * L**2)
    assert doc["buckling"]["1.5P"][0] == pytest.approx(pcr / (1.5 * P), rel=5e-3)
    omega = 1.8751**2 * math.sqrt(E * I / (RHO * A * L**4))
    assert list(doc["modes"]["frequency"])[0] == pytest.approx(omega / (2 * math.pi), rel=5e-3)
    assert len(doc["modes"]["mass_x"]) == 2
    settings.case = "1.5P"
    settings.shape_kind = "BUCKLING"
    settings.shape_index = 1
    assert bpy.ops.plumbframe.show_shape() == {"FINISHED"}
    obj = bpy.data.objects["PF shape"]
    assert obj["pf_kind"] == "shape" and "critical factor" in obj["pf_description"]
    settings.shape_kind = "MODE"
    settings.shape_index = 2
    assert bpy.ops.plumbframe.show_shape() == {"FINISHED"}
    settings.shape_index = 5
    with pytest.raises(RuntimeError, match="No natural mode 5"):
        bpy.ops.plumbframe.show_shape()


def test_unknown_mass_case_is_reported(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    use_frame(_column(engine))
    settings = bpy.context.scene.plumbframe
    settings.modes_count = 1
    settings.mass_cases = "nonsense=2"
    with pytest.raises(RuntimeError, match="'nonsense' does not exist"):
        bpy.ops.plumbframe.analyze()
