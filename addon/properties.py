"""Scene settings of plumbframe: one property group, ``scene.plumbframe``.

Operators read these settings, so a script drives the add-on the same way
the panel does::

    scene.plumbframe.ifc_path = "/path/model.ifc"
    bpy.ops.plumbframe.load_ifc()
    scene.plumbframe.colour_quantity = "My"
    bpy.ops.plumbframe.colour_members()
"""
from __future__ import annotations

import bpy
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty, StringProperty

__all__ = ["PLUMBFRAME_PG_settings", "FORCE_ITEMS", "COLOUR_ITEMS", "register_pointer", "unregister_pointer"]

FORCE_ITEMS = (
    ("N", "N", "Axial force (tension positive)"),
    ("Vy", "Vy", "Shear force along the member's local y"),
    ("Vz", "Vz", "Shear force along the member's local z"),
    ("T", "T", "Torsional moment"),
    ("My", "My", "Bending moment about local y (bending in the member's x-z plane)"),
    ("Mz", "Mz", "Bending moment about local z (bending in the member's x-y plane)"),
)
COLOUR_ITEMS = FORCE_ITEMS + (("DISPLACEMENT", "Displacement", "Translation of the member axis"),)

# Blender keeps only pointers to the strings of dynamic enum items: hold them here.
_ITEM_CACHE: dict[str, list] = {}


def _list_items(key: str, scene_key: str, empty: str):
    def items(self, context):
        scene = context.scene if context is not None else None
        names = list(scene.get(scene_key, ())) if scene is not None else []
        out = [(str(n), str(n), "") for n in names] or [("NONE", empty, "")]
        _ITEM_CACHE[key] = out
        return out

    return items


def _model_items(self, context):
    scene = context.scene if context is not None else None
    models = list(scene.get("pf_analysis_models", ())) if scene is not None else []
    out = [("AUTO", "Automatic", "Let the reader choose the analysis model (or derive one from the physical elements)")]
    for entry in models:
        name, guid = str(entry[0]), str(entry[1])
        out.append((guid, name or guid, f"IfcStructuralAnalysisModel {guid}"))
    _ITEM_CACHE["models"] = out
    return out


class PLUMBFRAME_PG_settings(bpy.types.PropertyGroup):
    """plumbframe settings of one scene."""

    ifc_path: StringProperty(name="IFC file", description="The IFC building model to analyse",
                             subtype="FILE_PATH", default="")
    analysis_model: EnumProperty(name="Analysis model", description="Which structural analysis model of the file to use",
                                 items=_model_items)
    merge_tolerance: FloatProperty(name="Merge tolerance", description="Member ends closer than this share one node",
                                   default=0.01, min=0.0, soft_max=0.1, unit="LENGTH", precision=3)
    materials_path: StringProperty(name="Material map", description="TOML file naming what the IFC materials are "
                                   "(names or globs to grades or values, a fallback per IFC class, a default for "
                                   "elements without material)", subtype="FILE_PATH", default="")
    sections_path: StringProperty(name="Section map", description="TOML file giving sections (A, Iy, Iz, J) by "
                                  "element, type or profile name, replacing the file's, and a default for members "
                                  "without a profile", subtype="FILE_PATH", default="")
    select_query: StringProperty(name="Select", default="",
                                 description="Elements that make the frame, as an ifcopenshell selector query "
                                             "(empty: load-bearing beams, columns and members)")
    exclude_query: StringProperty(name="Exclude", default="",
                                  description="Elements left out of the frame, as an ifcopenshell selector query")
    supports_query: StringProperty(name="Supports", default="",
                                   description="Elements whose lowest ends are supported, QUERY[:fixed|pinned]; "
                                               "several separated by ';' (empty: the documented default)")
    members_as: EnumProperty(name="Members", description="How IfcMember elements are idealised",
                             items=(("auto", "Automatic", "Diagonals between two joints are pin-ended bars, studs and "
                                                          "continuous members frame members"),
                                    ("frame", "Frame members", "Every IfcMember has rigid ends"),
                                    ("truss", "Truss bars", "Every IfcMember is a pin-ended axial bar")),
                             default="auto")
    strict: BoolProperty(name="Strict", default=False,
                         description="An element that cannot become a member is an error instead of being left out")
    plane: EnumProperty(name="Frame type", description="How the frame is idealised",
                        items=(("AUTO", "Automatic", "Space frame, or a plane frame when the model is one"),
                               ("PLANE", "Plane frame", "Analyse in the frame's own plane (3 unknowns per joint)"),
                               ("SPACE", "Space frame", "Six unknowns per joint")),
                        default="AUTO")
    inextensible: BoolProperty(name="Axially rigid members", default=False,
                               description="Treat every frame member as axially rigid")
    condense_pinned: BoolProperty(name="Condense pinned ends", default=False,
                                  description="Reduce the rotations at pinned member ends out of the unknowns")
    shear: BoolProperty(name="Shear deformation", default=False,
                        description="Include shear deformation where sections give shear areas")
    theory: EnumProperty(name="Theory", description="First- or second-order analysis of the load cases",
                         items=(("FIRST", "First order", "Linear elastic, first order"),
                                ("SECOND", "Second order", "P-Delta and P-delta: every load case and combination "
                                                           "analysed to second order as its own load set")),
                         default="FIRST")
    buckling_count: IntProperty(name="Critical factors", default=0, min=0, soft_max=20,
                                description="How many elastic critical load factors to compute per combination "
                                            "(per load case without combinations); 0: none")
    modes_count: IntProperty(name="Natural modes", default=0, min=0, soft_max=30,
                             description="How many natural modes to compute; 0: none")
    mass_cases: StringProperty(name="Mass from", default="",
                               description="Load cases whose gravity loads / g add mass to the modes, "
                                           "CASE[=FACTOR] separated by ';' (members' own mass is always in)")
    shape_kind: EnumProperty(name="Shape", description="Which kind of shape to draw",
                             items=(("BUCKLING", "Buckling", "A buckling mode of the shown combination"),
                                    ("MODE", "Natural mode", "A natural mode of vibration")),
                             default="BUCKLING")
    shape_index: IntProperty(name="Number", default=1, min=1, description="Which mode, lowest first")
    shape_scale: FloatProperty(name="Shape scale", default=0.0, min=0.0, unit="LENGTH",
                               description="Length of the largest translation as drawn; 0: one eighth of the model")
    case: EnumProperty(name="Load case", description="Load case or combination to show",
                       items=_list_items("cases", "pf_cases", "(analyse first)"))
    colour_quantity: EnumProperty(name="Colour by", description="Quantity that colours the members",
                                  items=COLOUR_ITEMS, default="My")
    diagram_quantity: EnumProperty(name="Diagram", description="Internal force drawn along the members",
                                   items=FORCE_ITEMS, default="My")
    deformed_scale: FloatProperty(name="Scale", default=0.0, min=0.0, soft_max=1000.0,
                                  description="Displacement magnification; 0 draws the largest displacement "
                                              "as one twentieth of the model size")
    diagram_scale: FloatProperty(name="Diagram scale", default=0.0, min=0.0,
                                 description="Metres of diagram per unit of force (N or N*m); 0 draws the largest "
                                             "value as one tenth of the model size")
    governing_scope: EnumProperty(name="Search", description="Where to look for the governing value",
                                  items=(("CASE", "Shown case", "Only the load case or combination shown"),
                                         ("ALL", "All cases", "Every load case and combination")),
                                  default="CASE")
    output_path: StringProperty(name="Results IFC", description="New IFC file to write the results to",
                                subtype="FILE_PATH", default="")


def register_pointer() -> None:
    bpy.types.Scene.plumbframe = PointerProperty(type=PLUMBFRAME_PG_settings)


def unregister_pointer() -> None:
    del bpy.types.Scene.plumbframe
