"""Render one documentation picture of the Blender add-on (default docs/images/addon_render.png).

Runs with Blender's Python module (bpy 5.0.1, Python 3.11), headless::

    /work/venv-bpy/bin/python tools/render_docs_image.py [--model workshop_portal] [--out docs/images/addon_render.png]

It builds the extension zip with tools/build_addon.py, installs it into a
throw-away Blender user folder (HOME points at a temporary folder), and then
does what a user does in the panel: load the sample IFC model, analyse,
colour the members by one internal force (My unless ``--quantity``) of one
combination and draw its diagram. tools/render_docs_images.py runs it for
every sample pictured in docs/images/. The Workbench renderer writes the PNG.
"""
from __future__ import annotations

import argparse
import importlib.util
import os
import pathlib
import shutil
import sys
import tempfile

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _build_zip(out_dir: pathlib.Path) -> pathlib.Path:
    spec = importlib.util.spec_from_file_location("plumbframe_build_addon", ROOT / "tools" / "build_addon.py")
    tool = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(tool)
    (path,) = tool.build([tool.host_platform()], output=out_dir / "plumbframe.zip")
    return path


def _frame_camera(bpy, scene, objects, direction=(0.45, -1.0, 0.32)) -> None:
    import numpy as np

    pts = []
    for obj in objects:
        if obj.type in {"MESH", "FONT", "CURVE"}:
            pts += [obj.matrix_world @ __import__("mathutils").Vector(c) for c in obj.bound_box]
    P = np.array([tuple(p) for p in pts])
    lo, hi = P.min(axis=0), P.max(axis=0)
    centre = (lo + hi) / 2
    d = np.array(direction, float)
    d /= np.linalg.norm(d)
    size = float(np.linalg.norm(hi - lo))
    cam_data = bpy.data.cameras.new("PF docs camera")
    cam_data.type = "ORTHO"
    cam = bpy.data.objects.new("PF docs camera", cam_data)
    scene.collection.objects.link(cam)
    cam.location = tuple(centre + d * size * 2.0)
    look = -d
    # rotation that points the camera's -Z at `look`, with +Y up as far as possible
    from mathutils import Vector

    cam.rotation_euler = Vector(tuple(look)).to_track_quat("-Z", "Y").to_euler()
    # fit: project the points on the camera's right/up axes
    right = np.cross(look, [0.0, 0.0, 1.0])
    right /= np.linalg.norm(right)
    up = np.cross(right, look)
    w = np.ptp(P @ right)
    h = np.ptp(P @ up)
    aspect = scene.render.resolution_x / scene.render.resolution_y
    cam_data.ortho_scale = 1.08 * max(w, h * aspect)
    cam_data.clip_end = size * 10
    scene.camera = cam


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--model", default="workshop_portal", help="sample model name (sample_models/<name>.ifc)")
    parser.add_argument("--case", default="", help="load case or combination (default: the first combination)")
    parser.add_argument("--out", type=pathlib.Path, default=ROOT / "docs" / "images" / "addon_render.png")
    parser.add_argument("--zip", type=pathlib.Path, help="use this extension zip instead of building one")
    parser.add_argument("--plane", default="AUTO", choices=("AUTO", "PLANE", "SPACE"), help="frame type")
    parser.add_argument("--size", default="1400x900", help="resolution WxH")
    parser.add_argument("--quantity", default="My", help="member colours and diagram (N, Vy, Vz, T, My, Mz)")
    args = parser.parse_args(argv)

    work = pathlib.Path(tempfile.mkdtemp(prefix="pf-render-"))
    os.environ["HOME"] = str(work / "home")
    os.environ["XDG_CONFIG_HOME"] = str(work / "home" / ".config")
    try:
        zip_path = args.zip or _build_zip(work)
        import bpy

        bpy.ops.wm.read_homefile(use_empty=True)
        bpy.ops.extensions.package_install_files(filepath=str(zip_path), repo="user_default", enable_on_install=True)
        scene = bpy.context.scene
        settings = scene.plumbframe
        settings.ifc_path = str(ROOT / "sample_models" / f"{args.model}.ifc")
        settings.plane = args.plane
        bpy.ops.plumbframe.load_ifc()
        bpy.ops.plumbframe.analyze()
        results = sys.modules["bl_ext.user_default.plumbframe"].engine.session(scene).results
        combos = [name for name, cr in results.cases.items() if cr.kind == "combination"]
        settings.case = args.case or (combos or list(results.cases))[0]
        settings.colour_quantity = args.quantity
        settings.diagram_quantity = args.quantity
        bpy.ops.plumbframe.colour_members()
        bpy.ops.plumbframe.draw_diagrams()

        w, h = (int(v) for v in args.size.lower().split("x"))
        scene.render.resolution_x, scene.render.resolution_y = w, h
        scene.render.resolution_percentage = 100
        scene.render.engine = "BLENDER_WORKBENCH"
        shading = scene.display.shading
        shading.light = "STUDIO"
        shading.color_type = "VERTEX"
        shading.show_shadows = False
        shading.show_cavity = False
        world = bpy.data.worlds.new("PF docs world")
        world.color = (0.96, 0.96, 0.95)
        scene.world = world
        scene.render.film_transparent = False
        scene.view_settings.view_transform = "Standard"
        # the camera looks along the view the add-on placed its labels in: the frame's plane (turned a little
        # for depth) or the axonometric view of a space frame
        views = sys.modules["bl_ext.user_default.plumbframe"].engine.engine("report.views")
        view = views.drawing_view(results.frame)
        direction = view.n if not view.in_plane else view.n + 0.3 * views.axonometric().n
        _frame_camera(bpy, scene, [o for o in scene.objects], direction=tuple(direction))
        args.out.parent.mkdir(parents=True, exist_ok=True)
        scene.render.filepath = str(args.out)
        scene.render.image_settings.file_format = "PNG"
        bpy.ops.render.render(write_still=True)
        print(args.out)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
