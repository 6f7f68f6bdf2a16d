"""Headless tests of the Blender extension, run with Blender's Python module (bpy 5.0.1).

Without bpy these tests are not collected at all (the engine-only venv), unless
PLUMBFRAME_REQUIRE_BPY=1 is set: then a missing bpy stops the run with an
error, so a CI run cannot pass by skipping them.

The session fixture builds the extension zip with tools/build_addon.py,
points HOME (and XDG_CONFIG_HOME) at a temporary folder before bpy is
imported (bpy writes to $HOME/.config/blender/5.0), and installs the zip the
way a user would: ``bpy.ops.extensions.package_install_files``. bpy can be
imported only once per process, so each test starts from
``bpy.ops.wm.read_homefile(use_empty=True)`` instead.
"""
from __future__ import annotations

import importlib.util
import os
import pathlib
import shutil
import sys
import tempfile

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]
HAVE_BPY = importlib.util.find_spec("bpy") is not None
REQUIRE_BPY = os.environ.get("PLUMBFRAME_REQUIRE_BPY") == "1"

if not HAVE_BPY:
    if REQUIRE_BPY:
        pytest.exit(
            "PLUMBFRAME_REQUIRE_BPY=1 but Blender's Python module cannot be imported: install it with "
            "`python3.11 -m venv /work/venv-bpy && /work/venv-bpy/bin/pip install bpy==5.0.1 ifcopenshell scipy "
            "pytest matplotlib` and run the add-on tests with that interpreter",
            returncode=1,
        )
    collect_ignore_glob = ["test_*.py"]

EXTENSION_ID = "plumbframe"
REPO = "user_default"
MODULE = f"bl_ext.{REPO}.{EXTENSION_ID}"
SAMPLES = ROOT / "sample_models"


def _load_build_tool():
    spec = importlib.util.spec_from_file_location("plumbframe_build_addon", ROOT / "tools" / "build_addon.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="session")
def addon_zip(tmp_path_factory) -> pathlib.Path:
    """The extension zip, built exactly as a release would be (wheels cached in build/)."""
    tool = _load_build_tool()
    out = tmp_path_factory.mktemp("dist") / "plumbframe.zip"
    (path,) = tool.build([tool.host_platform()], output=out)
    return path


@pytest.fixture(scope="session")
def blender(addon_zip, tmp_path_factory):
    """bpy with the extension installed and enabled from the zip; yields the bpy module."""
    home = pathlib.Path(tempfile.mkdtemp(prefix="pf-blender-home-"))
    saved = {k: os.environ.get(k) for k in ("HOME", "XDG_CONFIG_HOME")}
    os.environ["HOME"] = str(home)
    os.environ["XDG_CONFIG_HOME"] = str(home / ".config")
    import bpy

    bpy.ops.wm.read_homefile(use_empty=True)
    result = bpy.ops.extensions.package_install_files(filepath=str(addon_zip), repo=REPO, enable_on_install=True)
    assert result == {"FINISHED"}, result
    assert MODULE in sys.modules, f"{MODULE} was not enabled"
    yield bpy
    for key, value in saved.items():
        if value is None:
            os.environ.pop(key, None)
        else:
            os.environ[key] = value
    shutil.rmtree(home, ignore_errors=True)


@pytest.fixture
def bpy_clean(blender):
    """A fresh, empty scene with the extension still enabled."""
    bpy = blender
    bpy.ops.wm.read_homefile(use_empty=True)
    assert hasattr(bpy.types.Scene, "plumbframe"), "the extension lost its registration on read_homefile"
    return bpy


@pytest.fixture
def addon(blender):
    """The installed extension's package (bl_ext.user_default.plumbframe)."""
    return sys.modules[MODULE]


@pytest.fixture
def engine(addon):
    """The engine bundled inside the extension (``<extension>.analysis``)."""
    return addon.engine.engine()


@pytest.fixture
def use_frame(addon, blender):
    """A function doing what load_ifc does after reading: keep a frame in the scene's session and draw it
    (returns the drawing's counts)."""

    def use(frame):
        scene = blender.context.scene
        s = addon.engine.session(scene)
        s.frame, s.path = frame, ""
        return addon.drawing.draw_frame(scene, frame)

    return use
