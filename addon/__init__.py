"""plumbframe for Blender: analyse the frame of an IFC building model and see the results.

A thin layer over the `analysis` engine (bundled inside the extension by
tools/build_addon.py): the operators read the scene settings
(``scene.plumbframe``), make one engine call and draw the outcome in a
collection of their own. Nothing here computes structural results.

Results are an aid to a qualified engineer: design to the local code and
review by a licensed engineer remain required.
"""
from __future__ import annotations

import bpy

from . import engine, operators, panels, properties

classes = (
    properties.PLUMBFRAME_PG_settings,
    *operators.OPERATORS,
    *panels.PANELS,
)


def register() -> None:
    for cls in classes:
        bpy.utils.register_class(cls)
    properties.register_pointer()


def unregister() -> None:
    properties.unregister_pointer()
    for cls in reversed(classes):
        bpy.utils.unregister_class(cls)
    engine.clear_sessions()
