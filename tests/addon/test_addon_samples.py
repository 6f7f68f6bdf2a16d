"""Every operator on the bundled sample models, through the installed extension."""
from __future__ import annotations

import hashlib
import importlib
import pathlib
import shutil

import pytest

pytestmark = pytest.mark.addon

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"


def _load(bpy, name: str, plane: str = "AUTO", tmp_path: pathlib.Path | None = None) -> pathlib.Path:
    path = SAMPLES / f"{name}.ifc"
    if tmp_path is not None:  # work on a copy so that writing beside it never touches the repository
        path = pathlib.Path(shutil.copy(path, tmp_path / path.name))
    settings = bpy.context.scene.plumbframe
    settings.plane = plane
    assert bpy.ops.plumbframe.load_ifc(filepath=str(path)) == {"FINISHED"}
    return path


def _digest(path: pathlib.Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_workshop_portal_whole_job(bpy_clean, addon, engine, tmp_path):
    bpy = bpy_clean
    scene = bpy.context.scene
    src = _load(bpy, "workshop_portal", plane="PLANE", tmp_path=tmp_path)
    before = _digest(src)
    assert scene["pf_route"] == "structural"
    assert len(scene["pf_analysis_models"]) == 1
    members = addon.drawing.member_objects(scene)
    assert len(members) == 6
    assert all(obj["pf_source"] for obj in members.values())  # GlobalIds of the IFC members
    assert len(addon.drawing.role_collection(scene, "supports").objects) == 2

    # two closed rings of rigid joints with fixed bases: 3 redundants per ring in a plane frame
    # (common practice, no source); kinematic: 4 free joints x 3
    assert bpy.ops.plumbframe.check() == {"FINISHED"}
    check = scene["pf_check"]
    assert (check["static"], check["kinematic"], check["mechanisms"]) == (6, 12, 0)

    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    cases = list(scene["pf_cases"])
    assert cases[:3] == ["G dead", "Q imposed", "W wind"] and len(cases) == 6
    # the add-on shows exactly what the engine computes on its own
    model = importlib.import_module(engine.__name__ + ".ifc.reader").read_ifc(str(src))
    direct = engine.analyze(model.frame, engine.AnalysisOptions(plane=True))
    for mid, obj in members.items():
        for case in cases:
            dg = direct.diagram(case, mid)
            assert list(obj["pf_results"][case]["My"]) == pytest.approx(list(dg["My"]), abs=1e-6)

    for case in cases:
        scene.plumbframe.case = case
        assert bpy.ops.plumbframe.show_deformed() == {"FINISHED"}
    scene.plumbframe.case = "ULS 1"
    for q in ("N", "Vz", "My", "DISPLACEMENT"):
        scene.plumbframe.colour_quantity = q
        assert bpy.ops.plumbframe.colour_members() == {"FINISHED"}
        assert bpy.ops.plumbframe.select_governing() == {"FINISHED"}
        assert bpy.context.view_layer.objects.active["pf_id"] == scene["pf_governing"]["member"]
    for q in ("N", "Vz", "My"):
        scene.plumbframe.diagram_quantity = q
        assert bpy.ops.plumbframe.draw_diagrams() == {"FINISHED"}
    assert bpy.data.objects["PF diagram My ULS 1"]["pf_peak"] > 0

    # results back into a new IFC; the input is never overwritten
    out = tmp_path / "portal.results.ifc"
    assert bpy.ops.plumbframe.write_ifc(filepath=str(out)) == {"FINISHED"}
    assert scene["pf_written"] == str(out)
    import ifcopenshell

    written = ifcopenshell.open(str(out))
    groups = written.by_type("IfcStructuralResultGroup")
    assert len(groups) >= len(cases)
    assert any(p.Name.startswith("PF_") for p in written.by_type("IfcPropertySet"))
    with pytest.raises(RuntimeError, match="already exists"):
        bpy.ops.plumbframe.write_ifc(filepath=str(out))
    assert bpy.ops.plumbframe.write_ifc(filepath=str(out), overwrite=True) == {"FINISHED"}
    with pytest.raises(RuntimeError, match="model that was read"):
        bpy.ops.plumbframe.write_ifc(filepath=str(src), overwrite=True)
    assert _digest(src) == before


def test_roof_truss_plane_and_space(bpy_clean):
    bpy = bpy_clean
    scene = bpy.context.scene
    _load(bpy, "roof_truss", plane="PLANE")
    bpy.ops.plumbframe.check()
    # pin-jointed plane truss: m + r = 2j makes it statically determinate (common practice, no source)
    assert (scene["pf_check"]["static"], scene["pf_check"]["mechanisms"]) == (0, 0)
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    scene.plumbframe.colour_quantity = "N"
    assert bpy.ops.plumbframe.colour_members() == {"FINISHED"}
    assert bpy.ops.plumbframe.select_governing() == {"FINISHED"}
    # as a space structure the pin-jointed truss can move out of its plane
    scene.plumbframe.plane = "SPACE"
    with pytest.raises(RuntimeError, match=r"unstable.*#\d+ IfcStructuralPointConnection"):
        bpy.ops.plumbframe.analyze()


def test_unstable_frame_shows_its_mechanism(bpy_clean, addon):
    bpy = bpy_clean
    scene = bpy.context.scene
    _load(bpy, "unstable_frame", plane="PLANE")
    assert bpy.ops.plumbframe.check() == {"FINISHED"}
    assert scene["pf_check"]["mechanisms"] == 1  # the in-plane sway of the sample's description
    shapes = [o for o in addon.drawing.role_collection(scene, "deformed").objects if o.get("pf_kind") == "mechanism"]
    assert len(shapes) == 1 and len(shapes[0].data.vertices) > 0
    # the mechanism: the beam's nodes sway sideways (X), the column bases stay put
    sway = [v.co.x for v in shapes[0].data.vertices]
    nodes_x = [o.location.x for o in addon.drawing.role_collection(scene, "nodes").objects]
    assert max(sway) - min(sway) > 1.05 * (max(nodes_x) - min(nodes_x))
    bpy.ops.plumbframe.clear()
    _load(bpy, "unstable_frame", plane="PLANE")
    with pytest.raises(RuntimeError, match=r"unstable.*#\d+ IfcStructuralPointConnection"):
        bpy.ops.plumbframe.analyze()
    # analysing it directly also leaves the mechanism drawn
    assert [o for o in addon.drawing.role_collection(scene, "deformed").objects if o.get("pf_kind") == "mechanism"]


def test_braced_office_physical_route(bpy_clean, addon):
    bpy = bpy_clean
    scene = bpy.context.scene
    _load(bpy, "braced_office")
    assert scene["pf_route"] == "physical"
    assert len(addon.drawing.member_objects(scene)) > 50
    assert bpy.ops.plumbframe.check() == {"FINISHED"}
    assert scene["pf_check"]["mechanisms"] == 0
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    scene.plumbframe.colour_quantity = "DISPLACEMENT"
    assert bpy.ops.plumbframe.colour_members() == {"FINISHED"}
    assert bpy.ops.plumbframe.draw_diagrams() == {"FINISHED"}


def test_bad_input_names_the_entity(bpy_clean, tmp_path):
    bpy = bpy_clean
    import ifcopenshell

    f = ifcopenshell.open(str(SAMPLES / "workshop_portal.ifc"))
    member = f.by_type("IfcStructuralCurveMember")[0]
    for rel in f.by_type("IfcRelAssociatesMaterial"):
        if member in rel.RelatedObjects:
            rel.RelatedObjects = [o for o in rel.RelatedObjects if o != member]
    bad = tmp_path / "no_material.ifc"
    f.write(str(bad))
    with pytest.raises(RuntimeError, match=rf"#{member.id()} IfcStructuralCurveMember '{member.Name}'"):
        bpy.ops.plumbframe.load_ifc(filepath=str(bad))
    assert not bpy.data.objects  # nothing half-drawn
    with pytest.raises(RuntimeError, match="not found"):
        bpy.ops.plumbframe.load_ifc(filepath=str(tmp_path / "missing.ifc"))
