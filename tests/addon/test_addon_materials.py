"""The add-on's material map field: the same TOML file as ``--materials``, passed through to the reader."""
from __future__ import annotations

import pathlib

import pytest

pytestmark = pytest.mark.addon

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"


def test_material_map_chosen_in_the_addon(bpy_clean, tmp_path):
    bpy = bpy_clean
    import ifcopenshell

    # the workshop portal with its material renamed to a word no grade table knows, and no values
    f = ifcopenshell.open(str(SAMPLES / "workshop_portal.ifc"))
    for mat in f.by_type("IfcMaterial"):
        mat.Name, mat.Category = "Solid", None
    for props in f.by_type("IfcMaterialProperties"):
        f.remove(props)
    path = tmp_path / "solid.ifc"
    f.write(str(path))
    settings = bpy.context.scene.plumbframe
    # without a map: the one unknown-material report, as the operator's error
    with pytest.raises(RuntimeError, match=r"'Solid': 6 elements"):
        bpy.ops.plumbframe.load_ifc(filepath=str(path))
    assert not bpy.data.objects  # nothing half-drawn
    (tmp_path / "materials.toml").write_text('[materials]\n"Solid" = "S355"\n')
    settings.materials_path = str(tmp_path / "materials.toml")
    assert bpy.ops.plumbframe.load_ifc(filepath=str(path)) == {"FINISHED"}
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    # a map that is wrong is an error naming the file and the entry
    (tmp_path / "materials.toml").write_text('[materials]\n"Solid" = "S999"\n')
    with pytest.raises(RuntimeError, match=r"materials.toml: \[materials\] 'Solid'"):
        bpy.ops.plumbframe.load_ifc(filepath=str(path))


def test_section_map_chosen_in_the_addon(bpy_clean, addon, tmp_path):
    # the same TOML file as --sections: a named entry replaces the sample's profile on those members
    bpy = bpy_clean
    scene = bpy.context.scene
    settings = scene.plumbframe
    assert bpy.ops.plumbframe.load_ifc(filepath=str(SAMPLES / "workshop_portal.ifc")) == {"FINISHED"}
    plain = addon.engine.session(scene).frame
    target = plain.section_names[0]
    (tmp_path / "sections.toml").write_text(
        f'[sections]\n"{target}" = {{ A = "53.8 cm2", Iy = "8356 cm4", Iz = "604 cm4", J = "20.1 cm4" }}\n')
    settings.sections_path = str(tmp_path / "sections.toml")
    assert bpy.ops.plumbframe.load_ifc(filepath=str(SAMPLES / "workshop_portal.ifc")) == {"FINISHED"}
    frame = addon.engine.session(scene).frame
    mapped = [k for k in range(frame.n_members) if frame.section_sources[k] == "user map"]
    assert mapped == [k for k in range(plain.n_members) if plain.section_names[k] == target]
    assert all(abs(frame.A[k] - 53.8e-4) < 1e-12 for k in mapped)
    assert bpy.ops.plumbframe.analyze() == {"FINISHED"}
    (tmp_path / "sections.toml").write_text('default = { A = "0 cm2", Iy = 1.0, Iz = 1.0, J = 1.0 }\n')
    with pytest.raises(RuntimeError, match=r"sections.toml: default: A must be > 0"):
        bpy.ops.plumbframe.load_ifc(filepath=str(SAMPLES / "workshop_portal.ifc"))
