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
