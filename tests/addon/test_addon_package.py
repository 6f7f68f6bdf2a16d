"""The extension zip, its installation the way a user does it, registration and unregistration."""
from __future__ import annotations

import pathlib
import sys
import tomllib
import zipfile

import pytest

MODULE = "bl_ext.user_default.plumbframe"

pytestmark = pytest.mark.addon

OPERATORS = ("load_ifc", "check", "analyze", "show_deformed", "show_shape", "colour_members", "draw_diagrams",
             "select_governing", "write_ifc", "clear")


def test_zip_layout(addon_zip):
    with zipfile.ZipFile(addon_zip) as zf:
        names = set(zf.namelist())
        manifest = tomllib.loads(zf.read("blender_manifest.toml").decode())
    assert {"__init__.py", "operators.py", "panels.py", "properties.py", "drawing.py"} <= names
    assert "analysis/__init__.py" in names and "analysis/results.py" in names  # the engine, bundled
    assert not any("__pycache__" in n for n in names)
    assert manifest["id"] == "plumbframe" and manifest["type"] == "add-on"
    wheels = [pathlib.PurePosixPath(w).name for w in manifest["wheels"]]
    for w in manifest["wheels"]:
        assert w.lstrip("./") in names
    dists = {w.split("-")[0].lower() for w in wheels}
    assert {"ifcopenshell", "scipy"} <= dists
    assert "numpy" not in dists  # Blender ships numpy (1.26 in 5.0)
    assert all("cp311" in w or "py3" in w for w in wheels)


def test_installed_as_extension(blender, addon, engine):
    bpy = blender
    assert addon.__name__ == MODULE
    assert engine.__name__ == f"{MODULE}.analysis"  # the bundled engine, not a checkout on sys.path
    site = pathlib.Path(bpy.utils.user_resource("EXTENSIONS")) / ".local" / "lib" / "python3.11" / "site-packages"
    assert (site / "ifcopenshell").is_dir() and (site / "scipy").is_dir()  # wheels installed by Blender
    import numpy

    assert numpy.__version__.startswith("1.")  # the engine runs on Blender's numpy 1.x


def test_operators_have_one_line_tooltips(bpy_clean):
    bpy = bpy_clean
    for name in OPERATORS:
        rna = getattr(bpy.ops.plumbframe, name).get_rna_type()
        assert rna.identifier == f"PLUMBFRAME_OT_{name}"
        assert rna.description and "\n" not in rna.description, name


def test_panels_in_our_tab(bpy_clean, addon):
    bpy = bpy_clean
    for cls in addon.panels.PANELS:
        assert cls.__name__.startswith("PLUMBFRAME_PT_")
        assert cls.bl_category == "Plumbframe" and cls.bl_space_type == "VIEW_3D"
        assert getattr(bpy.types, cls.__name__) is not None
    assert "qualified engineer" in addon.operators.CAUTION


def test_unregister_and_enable_again(bpy_clean, addon):
    bpy = bpy_clean
    import addon_utils

    addon_utils.disable(MODULE)
    try:
        assert not hasattr(bpy.types.Scene, "plumbframe")
        for cls in addon.classes:
            assert not hasattr(bpy.types, cls.__name__), cls.__name__
    finally:
        addon_utils.enable(MODULE, default_set=True)
    assert hasattr(bpy.types.Scene, "plumbframe")
    assert bpy.ops.plumbframe.analyze.get_rna_type().identifier == "PLUMBFRAME_OT_analyze"
    assert MODULE in sys.modules
