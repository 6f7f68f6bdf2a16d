"""Operators on frames built by hand, checked against closed forms."""
from __future__ import annotations

import pytest

pytestmark = pytest.mark.addon

E, I, P, L = 210e9, 8356e-8, 10e3, 3.0  # steel, IPE 300 about its strong axis (from memory), 10 kN, 3 m


def _cantilever(engine):
    """A cantilever along +X, fixed at A, split at mid-length, tip load P down (-Z) at B."""
    b = engine.FrameBuilder(name="cantilever")
    steel = engine.Material("steel", E=E, G=81e9)
    sec = engine.Section("IPE 300", A=53.8e-4, Iy=I, Iz=603.8e-8, J=20.1e-8)
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("M", (L / 2, 0, 0))
    b.add_node("B", (L, 0, 0))
    b.add_member("root", "A", "M", sec, steel)
    b.add_member("tip", "M", "B", sec, steel)
    b.add_case(engine.LoadCase("P", nodal=(engine.NodalLoad("B", (0, 0, -P, 0, 0, 0)),)))
    b.add_combination(engine.Combination("1.5P", (("P", 1.5),)))
    return b.build()


def test_frame_objects_and_properties(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    counts = use_frame(_cantilever(engine))
    assert counts["members"] == 2 and counts["nodes"] == 3 and counts["supports"] == 1
    root = bpy.data.objects["PF member root"]
    assert root["pf_kind"] == "member" and list(root["pf_nodes"]) == ["A", "M"]
    assert root["pf_length"] == pytest.approx(L / 2)
    support = bpy.data.objects["PF support A"]
    assert support["pf_support"] == "fixed" and support["pf_restraints"] == "ux uy uz rx ry rz"
    coll = addon.drawing.root_collection(bpy.context.scene)
    assert {c["pf_role"] for c in coll.children} == set(addon.drawing.ROLES)


def test_analyse_show_colour_diagram_governing(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    frame = _cantilever(engine)
    use_frame(frame)
    scene = bpy.context.scene
    settings = scene.plumbframe
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    assert list(scene["pf_cases"]) == ["P", "1.5P"]
    assert scene["pf_analysis"]["equilibrium_residual"] < 1e-9

    # results as custom properties: root moment P*L (statics), hogging stretches the top (+z) fibres,
    # so My > 0 by the engine's sign rule; reaction at A pushes up with P
    root = bpy.data.objects["PF member root"]
    assert root["pf_results"]["P"]["My"][0] == pytest.approx(P * L, rel=1e-9)
    assert root["pf_envelope"]["My"][1] == pytest.approx(1.5 * P * L, rel=1e-9)
    node_a = bpy.data.objects["PF node A"]
    assert node_a["pf_reactions"]["P"]["fz"] == pytest.approx(P, rel=1e-9)

    # deformed shape: tip deflection P L^3 / 3EI (cantilever with end load, any strength-of-materials handbook)
    settings.case = "P"
    assert bpy.ops.plumbframe.show_deformed() == {"FINISHED"}
    deformed = bpy.data.objects["PF deformed P"]
    assert deformed["pf_max_displacement"] == pytest.approx(P * L**3 / (3 * E * I), rel=1e-6)
    assert deformed["pf_scale"] > 1  # automatic magnification of a few millimetres
    settings.deformed_scale = 10.0
    bpy.ops.plumbframe.show_deformed()
    assert bpy.data.objects["PF deformed P"]["pf_scale"] == 10.0
    zs = [v.co.z for v in bpy.data.objects["PF deformed P"].data.vertices]
    tube = addon.drawing._sizes(frame)
    assert min(zs) == pytest.approx(-10.0 * P * L**3 / (3 * E * I) - 0.8 * tube["radius"], rel=1e-3)

    # colour by My with a legend spanning -PL..PL
    settings.colour_quantity = "My"
    assert bpy.ops.plumbframe.colour_members() == {"FINISHED"}
    legend = bpy.data.objects["PF legend"]
    assert list(legend["pf_range"]) == pytest.approx([-P * L, P * L])
    assert root.data.color_attributes.get("pf_colour") is not None
    assert "pf_value" in root.data.attributes
    texts = [o["pf_text"] for o in addon.drawing.role_collection(scene, "legend").objects if "pf_text" in o]
    assert "30 kN·m" in texts and "-30 kN·m" in texts

    # My diagram as geometry; its largest ordinate is P*L
    settings.diagram_quantity = "My"
    assert bpy.ops.plumbframe.draw_diagrams() == {"FINISHED"}
    diagram = bpy.data.objects["PF diagram My P"]
    assert diagram["pf_peak"] == pytest.approx(P * L, rel=1e-9)
    assert len(diagram.data.polygons) >= 2
    # value labels as the report places them (analysis.report.views.diagram_labels): the support's P L and
    # the joint's P L/2 once (two members meet there with the same value), the free end's zero left out
    labels = [o for o in addon.drawing.role_collection(scene, "diagrams").objects if o.get("pf_kind") == "diagram value"]
    values = sorted(round(abs(o["pf_value"])) for o in labels)
    assert values == [round(P * L / 2), round(P * L)]
    assert {o["pf_text"] for o in labels} == {"30 kN·m", "15 kN·m"} or {o["pf_text"] for o in labels} == {
        "-30 kN·m", "-15 kN·m"}

    # governing member: the root member, at the support
    assert bpy.ops.plumbframe.select_governing() == {"FINISHED"}
    assert bpy.context.view_layer.objects.active == root and root.select_get()
    gov = scene["pf_governing"]
    assert gov["member"] == "root" and gov["station"] == pytest.approx(0.0)
    assert gov["value"] == pytest.approx(P * L, rel=1e-9)
    settings.governing_scope = "ALL"
    bpy.ops.plumbframe.select_governing()
    assert scene["pf_governing"]["case"] == "1.5P"

    # displacement colouring: largest at the tip
    settings.colour_quantity = "DISPLACEMENT"
    bpy.ops.plumbframe.colour_members()
    assert bpy.data.objects["PF legend"]["pf_range"][1] == pytest.approx(P * L**3 / (3 * E * I), rel=1e-6)


def test_errors_arrive_as_runtime_errors(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    with pytest.raises(RuntimeError, match="No frame loaded"):
        bpy.ops.plumbframe.analyze()
    # a cantilever on a pin is a mechanism: the engine's message reaches the caller
    b = engine.FrameBuilder()
    steel = engine.Material("steel", E=E, G=81e9)
    sec = engine.Section("s", A=1e-3, Iy=1e-6, Iz=1e-6, J=1e-7)
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("B", (2, 0, 0))
    b.add_member("m", "A", "B", sec, steel)
    b.add_case(engine.LoadCase("P", nodal=(engine.NodalLoad("B", (0, 0, -1e3, 0, 0, 0)),)))
    use_frame(b.build())
    with pytest.raises(RuntimeError, match="unstable"):
        bpy.ops.plumbframe.analyze()
    with pytest.raises(RuntimeError, match="No results"):
        bpy.ops.plumbframe.show_deformed()


def test_clear_removes_everything(bpy_clean, addon, engine, use_frame):
    bpy = bpy_clean
    use_frame(_cantilever(engine))
    bpy.ops.plumbframe.analyze()
    assert bpy.ops.plumbframe.clear() == {"FINISHED"}
    assert not [o for o in bpy.data.objects if o.name.startswith("PF ")]
    assert "pf_cases" not in bpy.context.scene
