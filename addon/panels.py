"""plumbframe's sidebar panels in the 3D viewport (tab "Plumbframe")."""
from __future__ import annotations

import bpy

from .operators import CAUTION

__all__ = ["PANELS"]

TAB = "Plumbframe"


class _Base:
    bl_space_type = "VIEW_3D"
    bl_region_type = "UI"
    bl_category = TAB


def _wrapped(layout, text: str, width: int = 44) -> None:
    col = layout.column(align=True)
    line = ""
    for word in text.split():
        if len(line) + len(word) + 1 > width and line:
            col.label(text=line)
            line = word
        else:
            line = f"{line} {word}".strip()
    if line:
        col.label(text=line)


class PLUMBFRAME_PT_model(_Base, bpy.types.Panel):
    bl_label = "Frame Analysis"

    def draw(self, context):
        layout = self.layout
        settings = context.scene.plumbframe
        box = layout.box()
        box.label(text="Caution", icon="ERROR")
        _wrapped(box, CAUTION)
        layout.prop(settings, "ifc_path")
        layout.prop(settings, "analysis_model")
        col = layout.column(align=True)
        col.prop(settings, "merge_tolerance")
        col.prop(settings, "materials_path")
        col.prop(settings, "sections_path")
        col.prop(settings, "select_query")
        col.prop(settings, "exclude_query")
        col.prop(settings, "supports_query")
        col.prop(settings, "members_as")
        col.prop(settings, "strict")
        col.prop(settings, "plane")
        col.prop(settings, "inextensible")
        col.prop(settings, "condense_pinned")
        col.prop(settings, "shear")
        row = layout.row(align=True)
        row.operator("plumbframe.load_ifc", icon="FILE_FOLDER")
        row.operator("plumbframe.clear", text="", icon="TRASH")
        scene = context.scene
        if "pf_source_file" in scene:
            layout.label(text=f"Route: {scene.get('pf_route', '')}")
            for text in list(scene.get("pf_diagnostics", ()))[:6]:
                _wrapped(layout, str(text))


class PLUMBFRAME_PT_check(_Base, bpy.types.Panel):
    bl_label = "Indeterminacy and Stability"
    bl_parent_id = "PLUMBFRAME_PT_model"

    def draw(self, context):
        layout = self.layout
        layout.operator("plumbframe.check", icon="CHECKMARK")
        doc = context.scene.get("pf_check")
        if doc is None:
            return
        doc = doc.to_dict() if hasattr(doc, "to_dict") else dict(doc)
        mech = int(doc.get("mechanisms", 0))
        row = layout.row()
        row.label(text="Stable" if mech == 0 else f"Unstable: {mech} mechanism(s)",
                  icon="CHECKMARK" if mech == 0 else "ERROR")
        grid = layout.grid_flow(columns=2, even_columns=True, align=True)
        grid.label(text="Kinematic")
        grid.label(text=str(doc.get("kinematic", "")))
        grid.label(text="Static")
        grid.label(text=str(doc.get("static", "")))
        for key, value in dict(doc.get("terms", {})).items():
            grid.label(text=key.replace("_", " ").capitalize())
            grid.label(text=str(value))
        for note in list(doc.get("notes", ()))[:8]:
            _wrapped(layout, str(note))


class PLUMBFRAME_PT_check_joints(_Base, bpy.types.Panel):
    bl_label = "Joint by Joint"
    bl_parent_id = "PLUMBFRAME_PT_check"
    bl_options = {"DEFAULT_CLOSED"}

    #: joints listed in the panel (the command line's check --by-joint lists every one)
    LIMIT = 60

    @classmethod
    def poll(cls, context):
        return "pf_check_joints" in context.scene

    def draw(self, context):
        layout = self.layout
        lines = [str(x) for x in context.scene["pf_check_joints"]]
        rows, total = lines[:-1], lines[-1:]
        for text in rows[: self.LIMIT]:
            _wrapped(layout, text)
        if len(rows) > self.LIMIT:
            layout.label(text=f"... and {len(rows) - self.LIMIT} more joints (plumbframe check --by-joint)")
        for text in total:
            box = layout.box()
            _wrapped(box, text)


class PLUMBFRAME_PT_results(_Base, bpy.types.Panel):
    bl_label = "Analysis and Results"
    bl_parent_id = "PLUMBFRAME_PT_model"

    def draw(self, context):
        layout = self.layout
        settings = context.scene.plumbframe
        layout.operator("plumbframe.analyze", icon="PLAY")
        info = context.scene.get("pf_analysis")
        if info is not None:
            layout.label(text=f"{info['cases']} cases, {info['unknowns']} unknowns, "
                              f"residual {info['equilibrium_residual']:.1e}")
        layout.prop(settings, "case")
        row = layout.row(align=True)
        row.prop(settings, "deformed_scale")
        row.operator("plumbframe.show_deformed", text="Deformed", icon="MOD_SIMPLEDEFORM")
        row = layout.row(align=True)
        row.prop(settings, "colour_quantity", text="")
        row.operator("plumbframe.colour_members", text="Colour", icon="COLOR")
        row = layout.row(align=True)
        row.prop(settings, "diagram_quantity", text="")
        row.prop(settings, "diagram_scale", text="Scale")
        row.operator("plumbframe.draw_diagrams", text="Diagram", icon="FCURVE")
        row = layout.row(align=True)
        row.prop(settings, "governing_scope", text="")
        row.operator("plumbframe.select_governing", text="Governing", icon="RESTRICT_SELECT_OFF")
        gov = context.scene.get("pf_governing")
        if gov is not None:
            layout.label(text=f"{gov['member']}: {gov['quantity']} {gov['value']:.4g} ({gov['case']})")


class PLUMBFRAME_PT_export(_Base, bpy.types.Panel):
    bl_label = "Write Results"
    bl_parent_id = "PLUMBFRAME_PT_model"

    def draw(self, context):
        layout = self.layout
        layout.prop(context.scene.plumbframe, "output_path")
        layout.operator("plumbframe.write_ifc", icon="EXPORT")
        written = context.scene.get("pf_written")
        if written:
            _wrapped(layout, f"Last written: {written}")
        _wrapped(layout, CAUTION)


class PLUMBFRAME_PT_stability(_Base, bpy.types.Panel):
    bl_label = "Second Order, Buckling and Modes"
    bl_parent_id = "PLUMBFRAME_PT_model"
    bl_options = {"DEFAULT_CLOSED"}

    def draw(self, context):
        layout = self.layout
        settings = context.scene.plumbframe
        col = layout.column(align=True)
        col.prop(settings, "theory")
        col.prop(settings, "buckling_count")
        col.prop(settings, "modes_count")
        col.prop(settings, "mass_cases")
        layout.label(text="Set these, then Analyse")
        doc = context.scene.get("pf_stability")
        if doc is None:
            return
        doc = doc.to_dict() if hasattr(doc, "to_dict") else dict(doc)
        layout.label(text=f"Theory: {doc.get('theory', '')}")
        buckling = dict(doc.get("buckling", {}))
        if buckling:
            box = layout.box()
            box.label(text="Critical load factors (10 or more: first order acceptable)")
            for name, factors in list(buckling.items())[:12]:
                box.label(text=f"{name}: " + ", ".join(f"{float(a):.3g}" for a in list(factors)[:6]))
        modes = dict(doc.get("modes", {}))
        freqs = [float(f) for f in modes.get("frequency", ())]
        if freqs:
            box = layout.box()
            box.label(text=f"Natural modes (mass {float(doc.get('mass', 0.0)):.4g} kg)")
            mx, my, mz = (list(modes.get(f"mass_{a}", ())) for a in "xyz")
            for k, f in enumerate(freqs[:12]):
                box.label(text=f"{k + 1}: {f:.4g} Hz  x {float(mx[k]):.2f} y {float(my[k]):.2f} z {float(mz[k]):.2f}")
        if buckling or freqs:
            row = layout.row(align=True)
            row.prop(settings, "shape_kind", text="")
            row.prop(settings, "shape_index")
            layout.prop(settings, "shape_scale")
            layout.operator("plumbframe.show_shape", icon="MOD_WAVE")


PANELS = (PLUMBFRAME_PT_model, PLUMBFRAME_PT_check, PLUMBFRAME_PT_check_joints, PLUMBFRAME_PT_results,
          PLUMBFRAME_PT_stability, PLUMBFRAME_PT_export)
