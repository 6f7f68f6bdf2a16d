"""plumbframe's operators: each reads the scene settings, makes one engine call and draws.

Every operator works from Python as from the panel, e.g.
``bpy.ops.plumbframe.load_ifc(filepath="model.ifc")`` then
``bpy.ops.plumbframe.analyze()``. Errors about the user's model arrive from
the engine as `AnalysisError` (naming the IFC entity); they are reported as
ERROR and the operator is cancelled, which a script sees as a RuntimeError
carrying the same message.
"""
from __future__ import annotations

import os
import types

import bpy
from bpy.props import BoolProperty, StringProperty

from . import drawing, readout
from .engine import analysis_error, drop_session, engine, session

__all__ = ["OPERATORS"]

CAUTION = ("Results are an aid to a qualified engineer: design to the local code "
           "and review by a licensed engineer remain required.")


def _settings(context):
    return context.scene.plumbframe


def _options(settings, model=None):
    plane = {"AUTO": None, "PLANE": True, "SPACE": False}[settings.plane]
    if plane is None and getattr(model, "plane", False):
        plane = True  # the analysis model declares in-plane 2D loading
    return engine("model").AnalysisOptions(plane=plane, inextensible=settings.inextensible,
                                           condense_pinned=settings.condense_pinned, shear=settings.shear,
                                           second_order=settings.theory == "SECOND",
                                           buckling=settings.buckling_count, modes=settings.modes_count,
                                           mass=_mass_cases(settings.mass_cases))


def _mass_cases(text: str) -> tuple[tuple[str, float], ...]:
    """'G dead; Q=0.3' -> (('G dead', 1.0), ('Q', 0.3)); the engine checks the names."""
    out = []
    for part in (p.strip() for p in text.split(";")):
        if not part:
            continue
        name, _, factor = part.rpartition("=") if "=" in part else (part, "", "1")
        try:
            value = float(factor)
        except ValueError:
            value, name = 1.0, part
        out.append((name.strip(), value))
    return tuple(out)


def _scene_options(context):
    """The idealisation chosen in the panel, for the model loaded in this scene."""
    return _options(_settings(context), getattr(session(context.scene, create=False), "model", None))


def _relay(op, diagnostics) -> None:
    levels = {"error": "ERROR", "warning": "WARNING"}
    for d in diagnostics or ():
        op.report({levels.get(getattr(d, "level", "info"), "INFO")}, getattr(d, "message", str(d)))


def _need_frame(op, context):
    s = session(context.scene, create=False)
    if s is None or s.frame is None:
        op.report({"ERROR"}, "No frame loaded: read an IFC file first (plumbframe.load_ifc)")
        return None
    return s


def _need_results(op, context):
    s = _need_frame(op, context)
    if s is None:
        return None
    if s.results is None:
        op.report({"ERROR"}, "No results: analyse the frame first (plumbframe.analyze)")
        return None
    return s


def _shown_case(op, context, s) -> str | None:
    case = _settings(context).case
    if case not in s.results.cases:
        if not s.results.cases:
            op.report({"ERROR"}, "The model has no load case")
            return None
        case = next(iter(s.results.cases))
    return case


class PLUMBFRAME_OT_load_ifc(bpy.types.Operator):
    """Read an IFC building model and draw its analytical frame"""

    bl_idname = "plumbframe.load_ifc"
    bl_label = "Load IFC"
    bl_options = {"REGISTER", "UNDO"}

    filepath: StringProperty(name="IFC file", subtype="FILE_PATH", default="", options={"SKIP_SAVE"})
    filter_glob: StringProperty(default="*.ifc", options={"HIDDEN"})

    def invoke(self, context, event):
        if not (self.filepath or _settings(context).ifc_path):
            context.window_manager.fileselect_add(self)
            return {"RUNNING_MODAL"}
        return self.execute(context)

    def execute(self, context):
        settings = _settings(context)
        path = bpy.path.abspath(self.filepath or settings.ifc_path)
        if not path or not os.path.isfile(path):
            self.report({"ERROR"}, f"IFC file not found: {path or '(none chosen)'}")
            return {"CANCELLED"}
        model_choice = settings.analysis_model if settings.ifc_path == path else "AUTO"
        reader = engine("ifc.reader")
        try:
            model = reader.read_ifc(path, model=None if model_choice in ("AUTO", "") else model_choice,
                                    merge_tolerance=settings.merge_tolerance,
                                    select=settings.select_query or None, exclude=settings.exclude_query or None,
                                    supports=[q.strip() for q in settings.supports_query.split(";") if q.strip()],
                                    members=settings.members_as, strict=settings.strict,
                                    materials=bpy.path.abspath(settings.materials_path) if settings.materials_path else None,
                                    sections=bpy.path.abspath(settings.sections_path) if settings.sections_path else None)
        except analysis_error() as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        scene = context.scene
        drop_session(scene)
        s = session(scene)
        s.path, s.model, s.frame = path, model, model.frame
        for key in ("pf_cases", "pf_check", "pf_check_joints", "pf_analysis"):
            scene.pop(key, None)
        scene["pf_source_file"] = path
        scene["pf_analysis_models"] = [[str(n or ""), str(g)] for n, g in (model.analysis_models or ())]
        scene["pf_route"] = str(getattr(model, "route", ""))
        scene["pf_notes"] = [str(n) for n in (model.notes or ())]
        scene["pf_diagnostics"] = [str(d) for d in (model.diagnostics or ())]
        settings.ifc_path = path
        counts = drawing.draw_frame(scene, model.frame)
        drawing.shade_viewports(context)
        _relay(self, model.diagnostics)
        self.report({"INFO"}, f"{os.path.basename(path)}: {counts['members']} members, {counts['nodes']} nodes, "
                              f"{counts['supports']} supports, {len(model.frame.load_cases)} load cases")
        return {"FINISHED"}


class PLUMBFRAME_OT_check(bpy.types.Operator):
    """Count the frame's indeterminacy and check whether it is stable"""

    bl_idname = "plumbframe.check"
    bl_label = "Check"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_frame(self, context)
        if s is None:
            return {"CANCELLED"}
        try:
            ind = engine("indeterminacy").indeterminacy(s.frame, _scene_options(context))
        except analysis_error() as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        s.indeterminacy = ind
        scene = context.scene
        scene["pf_check"] = ind.to_dict()
        scene["pf_check_joints"] = ind.joint_lines()
        for line in ind.format_table().splitlines():
            if line.strip():
                self.report({"INFO"}, line)
        if ind.mechanisms:
            shapes = _mechanism_shapes(ind, s.frame, _scene_options(context))
            for k, (motion, text) in enumerate(shapes):
                drawing.draw_mechanism(scene, s.frame, motion, index=k, text=text)
            self.report({"WARNING"}, f"unstable: {ind.mechanisms} independent mechanism(s)"
                                     + (f", drawn in '{drawing.ROLES['deformed']}'" if shapes else ""))
        else:
            drawing.clear_role(scene, "deformed")
            self.report({"INFO"}, f"stable; statically indeterminate to degree {ind.static}")
        return {"FINISHED"}


def _mechanism_shapes(ind, frame, options) -> list[tuple[object, str]]:
    """(nodal motion (n,6), description) of each mechanism the count found.

    Uses the modes the count carries (``mechanism_modes``) when it has them,
    else asks the stiffness module's public `find_mechanisms` for them.
    """
    import numpy as np

    texts = list(getattr(ind, "mechanism_descriptions", ()) or ())
    modes = list(getattr(ind, "mechanism_modes", ()) or ())
    if not modes:
        stiffness = engine("stiffness.analyze")
        dofs, asm = stiffness.assemble(frame, options)
        _, Kq, _ = stiffness.reduced_stiffness(asm)
        for x in stiffness.find_mechanisms(asm, Kq, limit=max(1, min(int(ind.mechanisms), 6))):
            u = np.zeros(asm.n_ext)
            u[asm.x_ext] = x
            modes.append(u[: asm.N6].reshape(frame.n_nodes, 6))
    return [(m, texts[k] if k < len(texts) else "") for k, m in enumerate(modes)]


class PLUMBFRAME_OT_analyze(bpy.types.Operator):
    """Analyse every load case and combination of the loaded frame"""

    bl_idname = "plumbframe.analyze"
    bl_label = "Analyse"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_frame(self, context)
        if s is None:
            return {"CANCELLED"}
        wm = context.window_manager
        steps = ["numbering unknowns", "assembling", "factorising", "solving", "recovering forces"]
        done = []

        def progress(step: str) -> None:
            done.append(step)
            wm.progress_update(min(len(done), len(steps)))
            self.report({"INFO"}, f"analysis: {step}")

        options = _scene_options(context)
        wm.progress_begin(0, len(steps))
        try:
            results = engine().analyze(s.frame, options, progress=progress)
        except analysis_error() as exc:
            if isinstance(exc, engine("errors").UnstableStructureError):
                count = types.SimpleNamespace(mechanisms=max(1, len(exc.mechanisms)),
                                              mechanism_descriptions=exc.mechanisms)
                for k, (motion, text) in enumerate(_mechanism_shapes(count, s.frame, options)):
                    drawing.draw_mechanism(context.scene, s.frame, motion, index=k, text=text)
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        finally:
            wm.progress_end()
        s.results, s.options = results, options
        scene = context.scene
        drawing.store_results(scene, results)
        worst = max((cr.equilibrium_residual for cr in results.cases.values()), default=0.0)
        scene["pf_analysis"] = {"unknowns": int(results.n_unknowns), "solver": str(results.solver),
                                "dimension": int(results.dimension), "equilibrium_residual": float(worst),
                                "cases": len(results.cases)}
        drawing.store_stability(scene, results)
        settings = _settings(context)
        if results.cases and settings.case not in results.cases:
            settings.case = next(iter(results.cases))
        _relay(self, results.diagnostics)
        self.report({"INFO"}, f"analysed {len(results.cases)} load cases and combinations, "
                              f"{results.n_unknowns} unknowns ({results.solver}); largest equilibrium "
                              f"residual {worst:.1e}")
        return {"FINISHED"}


class PLUMBFRAME_OT_show_deformed(bpy.types.Operator):
    """Draw the deformed shape of the shown load case, magnified by the scale"""

    bl_idname = "plumbframe.show_deformed"
    bl_label = "Deformed Shape"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_results(self, context)
        case = _shown_case(self, context, s) if s else None
        if case is None:
            return {"CANCELLED"}
        obj, scale = drawing.draw_deformed(context.scene, s.results, case, _settings(context).deformed_scale)
        self.report({"INFO"}, f"{case}: largest displacement "
                              f"{readout.format_value('DISPLACEMENT', obj['pf_max_displacement'])}, drawn {scale:.4g}x")
        return {"FINISHED"}


class PLUMBFRAME_OT_show_shape(bpy.types.Operator):
    """Draw the chosen buckling mode of the shown combination, or natural mode, at the shape scale"""

    bl_idname = "plumbframe.show_shape"
    bl_label = "Show Shape"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_results(self, context)
        if s is None:
            return {"CANCELLED"}
        settings = _settings(context)
        k = settings.shape_index - 1
        if settings.shape_kind == "BUCKLING":
            buckling = getattr(s.results, "buckling", None) or {}
            case = settings.case if settings.case in buckling else next(iter(buckling), None)
            found = buckling.get(case, []) if case is not None else []
            if k >= len(found):
                self.report({"ERROR"}, f"No buckling mode {k + 1} for {case or 'any load set'}: set 'Critical "
                                       f"factors' and analyse again" if case else "No critical factors: set "
                                       "'Critical factors' above 0 and analyse again")
                return {"CANCELLED"}
            mode = found[k]
            label = f"{case}: buckling mode {k + 1}, critical factor {mode.factor:.4g}"
        else:
            modes = getattr(s.results, "modes", None) or []
            if k >= len(modes):
                self.report({"ERROR"}, f"No natural mode {k + 1}: set 'Natural modes' and analyse again")
                return {"CANCELLED"}
            mode = modes[k]
            label = f"natural mode {k + 1}: {mode.frequency:.4g} Hz, period {mode.period:.4g} s"
        obj, scale = drawing.draw_shape(context.scene, s.frame, mode.along, settings.shape_scale, label)
        self.report({"INFO"}, f"{label} (largest translation drawn {scale:.3g} m)")
        return {"FINISHED"}


class PLUMBFRAME_OT_colour_members(bpy.types.Operator):
    """Colour the members by the chosen quantity and draw a legend"""

    bl_idname = "plumbframe.colour_members"
    bl_label = "Colour Members"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_results(self, context)
        case = _shown_case(self, context, s) if s else None
        if case is None:
            return {"CANCELLED"}
        quantity = _settings(context).colour_quantity
        vmin, vmax = drawing.colour_members(context.scene, s.results, case, quantity)
        drawing.shade_viewports(context)
        self.report({"INFO"}, f"{case}: {quantity} from {readout.format_value(quantity, vmin)} "
                              f"to {readout.format_value(quantity, vmax)}")
        return {"FINISHED"}


class PLUMBFRAME_OT_draw_diagrams(bpy.types.Operator):
    """Draw the chosen internal-force diagram on every member"""

    bl_idname = "plumbframe.draw_diagrams"
    bl_label = "Draw Diagrams"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_results(self, context)
        case = _shown_case(self, context, s) if s else None
        if case is None:
            return {"CANCELLED"}
        settings = _settings(context)
        obj, scale = drawing.draw_diagram(context.scene, s.results, case, settings.diagram_quantity,
                                          settings.diagram_scale)
        self.report({"INFO"}, f"{case}: {settings.diagram_quantity} diagram, largest "
                              f"{readout.format_value(settings.diagram_quantity, obj['pf_peak'])}")
        return {"FINISHED"}


class PLUMBFRAME_OT_select_governing(bpy.types.Operator):
    """Select the member with the largest value of the chosen quantity"""

    bl_idname = "plumbframe.select_governing"
    bl_label = "Select Governing Member"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = _need_results(self, context)
        case = _shown_case(self, context, s) if s else None
        if case is None:
            return {"CANCELLED"}
        settings = _settings(context)
        quantity = settings.colour_quantity
        cases = list(s.results.cases) if settings.governing_scope == "ALL" else [case]
        found = readout.governing(s.results, quantity, cases)
        if found is None:
            self.report({"ERROR"}, "The frame has no members")
            return {"CANCELLED"}
        mid, value, station, where = found
        obj = drawing.member_objects(context.scene).get(mid)
        if obj is None:
            self.report({"ERROR"}, f"member {mid} is not drawn: load the IFC file again")
            return {"CANCELLED"}
        for other in context.scene.objects:
            other.select_set(False)
        obj.select_set(True)
        context.view_layer.objects.active = obj
        context.scene["pf_governing"] = {"member": mid, "quantity": quantity, "value": value,
                                         "station": station, "case": where}
        label = obj.get("pf_label", mid)
        self.report({"INFO"}, f"{label}: {quantity} = {readout.format_value(quantity, value)} "
                              f"at {station:.3f} m from end i, {where}")
        return {"FINISHED"}


class PLUMBFRAME_OT_write_ifc(bpy.types.Operator):
    """Write the results into a new IFC file (never over the model that was read)"""

    bl_idname = "plumbframe.write_ifc"
    bl_label = "Write Results IFC"
    bl_options = {"REGISTER"}

    filepath: StringProperty(name="Results IFC", subtype="FILE_PATH", default="", options={"SKIP_SAVE"})
    filter_glob: StringProperty(default="*.ifc", options={"HIDDEN"})
    check_existing: BoolProperty(default=True, options={"HIDDEN"})
    overwrite: BoolProperty(name="Replace existing file", default=False, options={"SKIP_SAVE"},
                            description="Replace a results file that already exists (never the model that was read)")

    def invoke(self, context, event):
        s = session(context.scene, create=False)
        if not self.filepath:
            self.filepath = _settings(context).output_path or _default_output(s.path if s else "")
        context.window_manager.fileselect_add(self)
        return {"RUNNING_MODAL"}

    def execute(self, context):
        s = _need_results(self, context)
        if s is None:
            return {"CANCELLED"}
        out = bpy.path.abspath(self.filepath or _settings(context).output_path or _default_output(s.path))
        if not out.lower().endswith(".ifc"):
            out += ".ifc"
        if os.path.exists(out) and os.path.samefile(out, s.path):
            self.report({"ERROR"}, f"{out} is the model that was read: choose another file name")
            return {"CANCELLED"}
        if os.path.exists(out) and not self.overwrite:
            self.report({"ERROR"}, f"{out} already exists: choose another name or tick 'Replace existing file'")
            return {"CANCELLED"}
        if not os.path.isdir(os.path.dirname(out) or "."):
            self.report({"ERROR"}, f"folder {os.path.dirname(out)} does not exist")
            return {"CANCELLED"}
        try:
            summary = engine("ifc.writer").write_results(s.path, out, s.model, s.results, s.indeterminacy)
        except analysis_error() as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        _settings(context).output_path = out
        context.scene["pf_written"] = out
        for note in getattr(summary, "notes", ()) or ():
            self.report({"INFO"}, str(note))
        self.report({"INFO"}, f"results written to {out}: {getattr(summary, 'result_groups', 0)} result groups, "
                              f"{getattr(summary, 'point_reactions', 0) + getattr(summary, 'curve_reactions', 0)} "
                              f"reactions, {getattr(summary, 'property_sets', 0)} property sets")
        return {"FINISHED"}


def _default_output(path: str) -> str:
    if not path:
        return "//results.ifc"
    stem, _ = os.path.splitext(path)
    return stem + ".results.ifc"


class PLUMBFRAME_OT_clear(bpy.types.Operator):
    """Remove plumbframe's objects and results from the scene"""

    bl_idname = "plumbframe.clear"
    bl_label = "Clear"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        scene = context.scene
        drawing.clear_all(scene)
        drop_session(scene)
        for key in ("pf_cases", "pf_check", "pf_check_joints", "pf_analysis", "pf_stability", "pf_governing", "pf_written",
                    "pf_source_file", "pf_analysis_models", "pf_notes", "pf_diagnostics", "pf_route"):
            scene.pop(key, None)
        return {"FINISHED"}


OPERATORS = (
    PLUMBFRAME_OT_load_ifc,
    PLUMBFRAME_OT_check,
    PLUMBFRAME_OT_analyze,
    PLUMBFRAME_OT_show_deformed,
    PLUMBFRAME_OT_show_shape,
    PLUMBFRAME_OT_colour_members,
    PLUMBFRAME_OT_draw_diagrams,
    PLUMBFRAME_OT_select_governing,
    PLUMBFRAME_OT_write_ifc,
    PLUMBFRAME_OT_clear,
)
