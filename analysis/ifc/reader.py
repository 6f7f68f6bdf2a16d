"""Read an IFC file into an analytical `Frame`: the entry point `read_ifc`.

Two routes:

1. The file holds one or more ``IfcStructuralAnalysisModel``: the one asked
   for (by Name or GlobalId, default the first) is read as it stands
   (``route='structural'``, this module).
2. Otherwise the frame is derived from the physical beams, columns and
   members (``route='physical'``, `analysis.ifc.derive`).

Route 1 rules (IFC4 / IFC4X3 text of the IfcStructuralAnalysisDomain, and
IFC2X3 where it differs)
--------------------------------------------------------------------------
Geometry
    Node = ``IfcStructuralPointConnection``; its ``IfcVertexPoint`` is given
    in the connection's ``ObjectPlacement`` (else the model's
    ``SharedPlacement``), and is taken to world coordinates through the
    placement chain. Member = ``IfcStructuralCurveMember`` whose reference
    ``IfcEdge`` runs from end i (``EdgeStart``) to end j (``EdgeEnd``); each
    end is matched to the point connection of one of the member's
    ``IfcRelConnectsStructuralMember`` (the same vertex entity, else the
    connection at that point, else — for ``IfcRelConnectsWithEccentricity``
    — the nearest connection). Where the member end and the node differ,
    the difference is a rigid offset (eccentric connection), reported.
    Local z follows ``Axis`` (given in the member's placement axes), roll 0.
    IFC2X3 has no ``Axis``: the frame's default orientation is used, turned
    by ``IfcRelAssociatesProfileProperties.ProfileOrientation`` when given.
Supports
    ``IfcStructuralPointConnection.AppliedCondition`` (an
    ``IfcBoundaryNodeCondition``): IFC4+ ``TRUE`` fixed, ``FALSE`` or unset
    free, a stiffness value an elastic spring (``IfcLinearStiffnessMeasure`` /
    ``IfcRotationalStiffnessMeasure``, converted to SI). IFC2X3 numbers:
    ``-1`` means rigid (the IFC2X3 convention, dropped in IFC4), ``0`` or
    unset free, a positive value a spring. Conditions given in a
    ``ConditionCoordinateSystem`` are turned to global axes when that system
    is an axis permutation; otherwise the support is inclined: its rigid
    restraints become exact constraints along its own axes
    (`analysis.model.InclinedSupport`; springs along inclined axes are an
    error).
Member-end releases
    ``IfcRelConnectsStructuralMember.AppliedCondition``: its values are in
    the ``ConditionCoordinateSystem`` relative to the member's local axes,
    or in the member's local axes when that is unset (IFC4 use definition
    of IfcRelConnectsStructuralMember). So X, Y, Z translations and
    rotations map to N, Vy, Vz, T, My, Mz. ``FALSE`` (IFC2X3: ``0``)
    releases the end action; ``TRUE``, unset or ``-1`` (IFC2X3) keeps it
    rigid. A finite rotational stiffness about the member's local y or z
    is a semi-rigid end: a spring of that stiffness between the member end
    and its joint (`Frame.end_springs`); a finite stiffness in a
    translation or in torsion is an error.
Member types
    PIN_JOINED_MEMBER, TENSION_MEMBER, COMPRESSION_MEMBER and CABLE become
    axial-only bars; tension- or compression-only behaviour is reported as
    not modelled by a linear analysis.
Sections
    From the member's material profile (`materials.element_profile`),
    properties by `sections.section_properties`, overridden by
    ``Pset_ProfileMechanical`` values where the file gives them. A
    ``CardinalPoint`` other than 10 (centroid) puts the centroidal axis off
    the reference line: both ends get the same rigid offset along local y, z
    (``yp``/``xp`` of the profile: bottom = min yp, left = min xp).
Loads
    Load groups of the analysis model's ``LoadedBy`` (else every load
    group): LOAD_CASE groups (and ``IfcStructuralLoadCase``) become load
    cases, named by their Name, with ``SelfWeightCoefficients`` as the
    self-weight (in the model's global axes). Actions of LOAD_GROUP groups
    nested in a case belong to the case. LOAD_COMBINATION groups become
    combinations:
    * IFC4+: factor of each case = ``IfcRelAssignsToGroupByFactor.Factor``
      (1 for a plain assignment) times the combination's ``Coefficient``;
      a case's own ``Coefficient`` scales the case's actions (not its self
      weight), as the IFC4 IfcStructuralLoadCase text says.
    * IFC2X3 (no factor relation): factor of each case = the product of the
      ``Coefficient`` of the groups from the combination down to the case
      (LOAD_COMBINATION_GROUP and the case itself); the case's actions are
      then not scaled by its own Coefficient (it is its factor in the
      combination).
    Point actions with ``IfcStructuralLoadSingleForce`` on a connection are
    nodal loads, on a member point loads at the projection of their vertex;
    ``IfcStructuralLoadSingleDisplacement`` on a connection gives settlements
    (only of restrained components). Curve actions (IFC2X3
    ``IfcStructuralLinearAction``) with ``IfcStructuralLoadLinearForce`` are
    line loads: CONST uniform, LINEAR / POLYGONAL piecewise linear from the
    ``IfcStructuralLoadConfiguration`` locations; SINUS and PARABOLA are
    approximated by 16 linear pieces (reported); DISCRETE, a configuration
    of ``IfcStructuralLoadSingleForce`` values at its locations, gives point
    loads there; ``IfcStructuralLoadTemperature`` with a DeltaTConstant is a
    uniform temperature change of the member (α from the material's
    ``ThermalExpansionCoefficient``, else its family's code value; a
    difference across the section is an error). GLOBAL_COORDS are the
    analysis model's axes; PROJECTED_LENGTH maps to projected line loads.
Link to physical elements
    ``IfcRelAssignsToProduct`` in either direction: ``IfcModel.physical``
    maps member id -> GlobalId of the physical element.
"""
from __future__ import annotations

import logging
import math
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from ..collector import pauses_collector
from ..errors import AnalysisError, Diagnostic, IfcInputError, entity_label
from ..model import (
    ACTION_NAMES,
    DOF_NAMES,
    Combination,
    Frame,
    FrameBuilder,
    LineLoad,
    LoadCase,
    Material,
    NodalLoad,
    PointLoad,
    Section,
    Settlement,
    TemperatureLoad,
)
from .placement import PlacementCache

if TYPE_CHECKING:
    from ..units import UnitScales
    from .material_map import MaterialMap
    from .section_map import SectionMap
    from .sections import SectionProperties

__all__ = ["IfcModel", "ReaderDefaults", "read_ifc"]

Entity = Any  # an ifcopenshell.entity_instance (ifcopenshell ships no type information)
Vec3 = npt.NDArray[np.float64]  # (3,) float64
Mat = npt.NDArray[np.float64]  # (3, 3) or (4, 4) float64

logger = logging.getLogger(__name__)

_TRUSS_TYPES = {"PIN_JOINED_MEMBER", "TENSION_MEMBER", "COMPRESSION_MEMBER", "CABLE"}
_ONE_WAY_TYPES = {"TENSION_MEMBER": "tension-only", "COMPRESSION_MEMBER": "compression-only", "CABLE": "tension-only (cable)"}
_CURVE_SEGMENTS = 16  # linear pieces for SINUS / PARABOLA curve actions
_NO_OFFSET = np.zeros(3)  # (3,) the zero offset, shared and read-only: ``offset is _NO_OFFSET`` tests for it
_NO_OFFSET.flags.writeable = False

# Positions of attributes read for every member (``entity[i]`` skips the name look-up of ``entity.Name``).
# The same in IFC2X3, IFC4 and IFC4X3 (checked against the schemas); Axis is looked up per schema.
_PRODUCT_PLACEMENT = 5  # IfcProduct.ObjectPlacement
_PRODUCT_REPRESENTATION = 6  # IfcProduct.Representation
_PRODUCT_SHAPE_REPRESENTATIONS = 2  # IfcProductRepresentation.Representations
_REPRESENTATION_ITEMS = 3  # IfcRepresentation.Items
_EDGE_START, _EDGE_END = 0, 1  # IfcEdge.EdgeStart, EdgeEnd
_VERTEX_GEOMETRY = 0  # IfcVertexPoint.VertexGeometry
_POINT_COORDINATES = 0  # IfcCartesianPoint.Coordinates
_MEMBER_TYPE = 7  # IfcStructuralCurveMember.PredefinedType
_REL_MEMBER, _REL_CONNECTION, _REL_CONDITION = 4, 5, 6  # IfcRelConnectsStructuralMember
_GLOBAL_ID, _ROOT_NAME = 0, 2  # IfcRoot.GlobalId, Name
_ACTIVITY_LOAD, _ACTIVITY_AXES = 7, 8  # IfcStructuralActivity.AppliedLoad, GlobalOrLocal
_ACTIVITY_ITEM, _ACTIVITY_ACTIVITY = 4, 5  # IfcRelConnectsStructuralActivity.RelatingElement, RelatedStructuralActivity


# --------------------------------------------------------------------------- public types
@dataclass(frozen=True, slots=True)
class ReaderDefaults:
    """Values the user gives for what the file does not say (SI units).

    Used only where the file lacks the value, and every use is reported per
    element in the diagnostics. ``None`` means "no default": the missing
    value is then an error naming the element.

    Attributes
    ----------
    E, G : float or None
        Young's and shear modulus, Pa.
    poisson : float or None
        Poisson's ratio (gives G = E / (2 (1 + nu)) when G is missing).
    density : float or None
        Mass density, kg/m3.
    section : Section or None
        Section for members without a profile (m2, m4).
    materials : analysis.ifc.material_map.MaterialMap or None
        The user's material map (``--materials FILE.toml``): material names,
        IFC classes and elements without material to grades or values.
    sections : analysis.ifc.section_map.SectionMap or None
        The user's section map (``--sections FILE.toml``): sections by name,
        replacing the file's, and its default (used where ``section`` is None).
    """

    E: float | None = None
    G: float | None = None
    poisson: float | None = None
    density: float | None = None
    section: Section | None = None
    materials: MaterialMap | None = None
    sections: Any = None  # analysis.ifc.section_map.SectionMap: sections by element, type or profile name


@dataclass
class IfcModel:
    """What `read_ifc` returns: the frame plus everything said about how it was read."""

    frame: Frame
    diagnostics: list[Diagnostic]
    route: str  # 'structural' | 'physical'
    schema: str
    analysis_models: list[tuple[str, str]]
    path: str
    units: UnitScales
    notes: list[str] = field(default_factory=list)
    physical: dict[str, str] = field(default_factory=dict)
    plane: bool = False  # the analysis model declares in-plane 2D loading (IN_PLANE_LOADING_2D)
    source_stamp: Any = None  # analysis.ifc.source.SourceStamp of the bytes read (the writer checks it)
    left_out: list = field(default_factory=list)  # route 2: analysis.ifc.selection.LeftOut per element set aside
    # the opened file, lent to the first `write_results` of this model (which changes it and lets it go),
    # so that the writer need not parse the source again; None once taken
    ifc_file: Any = field(default=None, repr=False, compare=False)


@dataclass(frozen=True, slots=True)
class _ActionKind:
    """Facts about an action class: its kind and the positions of two attributes (None: not in the schema)."""

    point: bool  # an IfcStructuralPointAction
    curve: bool  # an IfcStructuralCurveAction (IFC2X3: IfcStructuralLinearAction)
    varying: bool  # an IFC2X3 IfcStructuralLinearActionVarying
    projected: int | None  # ProjectedOrTrue
    predefined: int | None  # PredefinedType


def _argument(entity: Entity, index: int | None) -> Any:
    """The attribute at ``index`` (see `_attribute_index`), None where the class has no such attribute."""
    return None if index is None else entity.get_argument(index)


class _ImpliedConnection:
    """Stands in for an IfcRelConnectsStructuralMember that the file leaves out (a rigid joint)."""

    AppliedCondition = None
    ConditionCoordinateSystem = None

    def __init__(self, connection):
        self.RelatedStructuralConnection = connection

    def is_a(self, _name: str) -> bool:
        return False


class _ImpliedNode:
    """Stands in for an IfcStructuralPointConnection the file leaves out at member ends (joined by position)."""

    AppliedCondition = None
    ConditionCoordinateSystem = None

    def __init__(self, key: int, name: str, point: Vec3):
        self._key = key  # negative: never an entity id
        self.Name = name
        self.point = point
        self.label = f"{name} at ({', '.join(f'{v:.4g}' for v in point)}) m"

    def id(self) -> int:
        return self._key

    def is_a(self, name: str | None = None):
        return "IfcStructuralPointConnection" if name is None else name in (
            "IfcStructuralPointConnection", "IfcStructuralConnection", "IfcStructuralItem")

    def get_argument(self, index: int) -> Any:
        return self.Name if index == _ROOT_NAME else None


class _ConnectionIndex:
    """Point connections found by position: a KD-tree over their world points, built once.

    ``first_within`` gives the same connection as scanning the list in order
    for the first one within the tolerance, in O(log n) per query.
    """

    def __init__(self, connections: list[Entity], points: list[Vec3]) -> None:
        from scipy.spatial import cKDTree

        self.connections = connections
        self.points: npt.NDArray[np.float64] = np.array(points, dtype=float).reshape(-1, 3)
        self.tree = cKDTree(self.points) if connections else None

    def first_within(self, point: Vec3, tol: float, taken: set[int]) -> Entity | None:
        if self.tree is None:
            return None
        # a slightly larger radius for the tree, then the exact test of the list scan
        candidates = sorted(self.tree.query_ball_point(point, tol * (1.0 + 1e-9) + 1e-300))
        for i in candidates:
            conn = self.connections[i]
            if conn.id() in taken:
                continue
            if float(np.linalg.norm(self.points[i] - point)) <= tol:
                return conn
        return None


# --------------------------------------------------------------------------- entry point
@pauses_collector
def read_ifc(path, *, model: str | None = None, merge_tolerance: float = 0.01, support_level: float | None = None,
             defaults: ReaderDefaults | Mapping[str, Any] | None = None, area_loads=None, select: str | None = None,
             exclude: str | None = None, supports: Sequence[str] = (), strict: bool = False,
             members: str | None = None, materials: Any = None, sections: Any = None, progress=None) -> IfcModel:
    """Read an IFC2X3 / IFC4 / IFC4X3 file into an analytical frame (SI units).

    Parameters
    ----------
    path : str or os.PathLike
        The IFC file.
    model : str, optional
        Name or GlobalId of the IfcStructuralAnalysisModel to read (default: the first).
    merge_tolerance : float
        Route 2 only: distance (m) within which element ends are one node.
    support_level : float, optional
        Route 2 only: elevation (m) of the supports (default: see derive).
    defaults : ReaderDefaults or mapping, optional
        Material and section values to use where the file has none.
    area_loads : optional
        Route 2 only: the user's area load table (see derive).
    select, exclude, supports, strict, members : optional
        Route 2 only: which elements make the frame (selector queries), the
        elements whose lowest ends are supported (``"QUERY[:fixed|pinned]"``),
        whether an element left out is an error, and how ``IfcMember``
        elements are idealised ('auto' | 'truss' | 'frame'); see
        `analysis.ifc.derive.derive_frame_details`.
    materials : str, os.PathLike or MaterialMap, optional
        The user's material map (a TOML file, see `analysis.ifc.material_map`):
        both routes. Replaces ``defaults.materials``.
    sections : str, os.PathLike or SectionMap, optional
        The user's section map (a TOML file, see `analysis.ifc.section_map`):
        both routes. Replaces ``defaults.sections``; its default section
        serves where ``defaults.section`` is None.

    Returns
    -------
    IfcModel

    Raises
    ------
    IfcInputError
        The file is missing or not IFC, the requested model does not exist,
        or an entity lacks what the analysis needs (the message names it);
        a file the parser found broken (dangling references, wrong
        attribute types) that the reader stumbles on: the message names the
        defects (`analysis.ifc.source.broken_file_guard`).
    """
    from .source import broken_file_guard  # a failure on a file the parser found broken names the defects

    return broken_file_guard(_read_ifc, os.fspath(path))(
        path, model=model, merge_tolerance=merge_tolerance, support_level=support_level, defaults=defaults,
        area_loads=area_loads, select=select, exclude=exclude, supports=supports, strict=strict, members=members,
        materials=materials, sections=sections, progress=progress)


def _read_ifc(path, *, model: str | None = None, merge_tolerance: float = 0.01, support_level: float | None = None,
             defaults: ReaderDefaults | Mapping[str, Any] | None = None, area_loads=None, select: str | None = None,
             exclude: str | None = None, supports: Sequence[str] = (), strict: bool = False,
             members: str | None = None, materials: Any = None, sections: Any = None, progress=None) -> IfcModel:
    path = os.fspath(path)
    if isinstance(defaults, Mapping):
        defaults = ReaderDefaults(**defaults)
    if sections is not None:
        import dataclasses

        from .section_map import SectionMap, load_section_map

        if not isinstance(sections, SectionMap):
            sections = load_section_map(sections)
        base = defaults or ReaderDefaults()
        defaults = dataclasses.replace(base, sections=sections,
                                       section=base.section if base.section is not None else sections.default)
    if materials is not None:
        import dataclasses

        from .material_map import MaterialMap, load_material_map

        if not isinstance(materials, MaterialMap):
            materials = load_material_map(materials)
        defaults = dataclasses.replace(defaults or ReaderDefaults(), materials=materials)
    source = _open(path)
    ifc_file = source.file
    from ..units import unit_scales

    scales = unit_scales(ifc_file)
    schema = ifc_file.schema
    # An analytical model that an earlier plumbframe run derived from the physical elements (the writer
    # tags it) is derived again from those elements, so that edits to them count, unless asked for.
    models = [m for m in ifc_file.by_type("IfcStructuralAnalysisModel")
              if model is not None or m.Description != "plumbframe derived analytical model"]
    listed = [(str(m.Name or ""), str(m.GlobalId)) for m in models]
    notes: list[str] = []
    if not models:
        if model is not None:
            raise IfcInputError(f"{path}: no IfcStructuralAnalysisModel in the file (asked for {model!r})")
        try:
            from .derive import derive_frame_details
        except ImportError:
            raise IfcInputError(f"{path}: no structural analysis model and physical derivation unavailable") from None
        derived = derive_frame_details(
            ifc_file, scales=scales, merge_tolerance=merge_tolerance, support_level=support_level,
            defaults=defaults, area_loads=area_loads, select=select, exclude=exclude, supports=supports,
            strict=strict, members=members)
        frame, diagnostics, derive_notes = derived.frame, derived.diagnostics, derived.notes
        physical = {mid: src for mid, src in zip(frame.member_ids, frame.member_sources) if src}
        frame, axial_notes = _axial_properties(ifc_file, frame, physical)
        notes += axial_notes
        source.diagnostics.extend(_check_magnitudes(frame, path))
        _unit_notes(scales, notes)
        return IfcModel(frame=frame, diagnostics=source.diagnostics + list(diagnostics), route="physical", schema=schema,
                        analysis_models=[], path=path, units=scales, notes=notes + list(derive_notes), physical=physical,
                        source_stamp=source.stamp, left_out=list(derived.left_out), ifc_file=ifc_file)

    chosen = _choose_model(models, model, path)
    if len(models) > 1:
        notes.append(f"The file holds {len(models)} structural analysis models ("
                     + ", ".join(f"'{n}' {g}" for n, g in listed) + f"); read {entity_label(chosen)}.")
    else:
        notes.append(f"Read the structural analysis model {entity_label(chosen)}.")
    reader = _StructuralReader(ifc_file, chosen, scales, defaults)
    reader.progress = progress  # optional callable(step: str): members read so far
    frame = reader.read()
    frame, axial_notes = _axial_properties(ifc_file, frame, reader.physical)
    source.diagnostics.extend(_check_magnitudes(frame, path))
    plane = str(getattr(chosen, "PredefinedType", None) or "") == "IN_PLANE_LOADING_2D"
    if plane:
        notes.append(f"{entity_label(chosen)} declares in-plane 2D loading: analysed as a plane frame in its own "
                     "plane unless a space analysis is asked for.")
    _unit_notes(scales, notes)
    return IfcModel(frame=frame, diagnostics=source.diagnostics + reader.diagnostics, route="structural", schema=schema,
                    analysis_models=listed, path=path, units=scales, notes=notes + reader.notes + axial_notes,
                    physical=reader.physical, plane=plane, source_stamp=source.stamp, ifc_file=ifc_file)


def _unit_notes(scales, notes: list[str]) -> None:
    """Warn for the undeclared unit types the model's values were read in; note all undeclared ones first."""
    from ..units import derived_units_note, warn_derived_in_use

    warn_derived_in_use(scales)
    note = derived_units_note(scales)
    if note:
        notes.insert(0, note)


def _axial_properties(ifc_file, frame: Frame, physical: dict) -> tuple[Frame, list[str]]:
    """The members' own PF_Idealisation.AxiallyRigid values (`analysis.ifc.idealisation`)."""
    from .idealisation import apply_axial_properties

    return apply_axial_properties(ifc_file, frame, physical)


def _check_magnitudes(frame: Frame, path: str) -> list[Diagnostic]:
    """Every number finite and representable (`analysis.magnitudes`), as an IfcInputError naming the element."""
    from ..errors import ModelError
    from ..magnitudes import check_magnitudes, plausibility_warnings

    try:
        check_magnitudes(frame)
    except ModelError as exc:
        raise IfcInputError(f"{path}: {exc}") from None
    return plausibility_warnings(frame)


def _open(path: str):
    """The opened source (`analysis.ifc.source.open_source`): file, stamp and the parser's findings."""
    from .source import open_source

    return open_source(path)


def _choose_model(models, wanted: str | None, path: str):
    if wanted is None:
        return models[0]
    for m in models:
        if m.GlobalId == wanted or (m.Name or "") == wanted:
            return m
    names = ", ".join(f"'{m.Name}' ({m.GlobalId})" for m in models)
    raise IfcInputError(f"{path}: no structural analysis model named {wanted!r}; the file holds {names}")


# --------------------------------------------------------------------------- helpers
def _unwrap(value: Any) -> Any:
    return getattr(value, "wrappedValue", value)


def _as_list(value) -> list:
    if value is None:
        return []
    if isinstance(value, (list, tuple)):
        return list(value)
    return [value]


def _axis2placement_matrix(axis_placement) -> np.ndarray:
    if axis_placement is None:
        return np.eye(4)
    import ifcopenshell.util.placement as ifc_placement

    return np.asarray(ifc_placement.get_axis2placement(axis_placement), dtype=float)


def _permutation(R: Mat) -> npt.NDArray[np.intp] | None:
    """For a rotation that only permutes/flips axes: index of the global axis of each local axis."""
    A = np.abs(R)
    if not np.allclose(A, np.round(A), atol=1e-9):
        return None
    idx = np.argmax(A, axis=0)
    if sorted(idx.tolist()) != [0, 1, 2]:
        return None
    return idx


def _direction(d) -> np.ndarray:
    r = [float(v) for v in d.DirectionRatios]
    return np.array((r + [0.0, 0.0, 0.0])[:3])


def _default_ref(ex: np.ndarray) -> np.ndarray:
    """The frame's default reference vector (see analysis.model.member_axes)."""
    return np.array([-1.0, 0.0, 0.0]) if abs(ex[2]) > 1.0 - 1e-9 else np.array([0.0, 0.0, 1.0])


def _local_axes(ex: Vec3, ref: Vec3 | None, roll: float = 0.0) -> Mat | None:
    """Rows x, y, z of member axes (same rule as analysis.model.member_axes)."""
    r = _default_ref(ex) if ref is None else ref
    ez = r - np.dot(r, ex) * ex
    n = np.linalg.norm(ez)
    if n < 1e-9:
        return None  # caller reports
    ez = ez / n
    ey = _cross(ez, ex)
    if roll:
        c, s = math.cos(roll), math.sin(roll)
        ey, ez = c * ey + s * ez, -s * ey + c * ez
    return np.stack([ex, ey, ez])


def _cross(a: Vec3, b: Vec3) -> Vec3:
    """``np.cross`` of two 3-vectors (the same arithmetic, without its per-call overhead)."""
    a0, a1, a2 = a.tolist()
    b0, b1, b2 = b.tolist()
    return np.array([a1 * b2 - a2 * b1, a2 * b0 - a0 * b2, a0 * b1 - a1 * b0])


def _norm(v: Vec3) -> float:
    """Euclidean length of a 3-vector (for tolerance tests)."""
    x, y, z = v.tolist()
    return math.sqrt(x * x + y * y + z * z)


def _attribute_index(ifc_file: Any, entity: str, attribute: str) -> int | None:
    """Position of an entity's attribute in the file's schema, or None where the schema lacks it."""
    import ifcopenshell.ifcopenshell_wrapper as wrapper

    declaration: Any = wrapper.schema_by_name(ifc_file.schema_identifier).declaration_by_name(entity)  # an entity
    index = declaration.attribute_index(attribute)
    return None if index < 0 else int(index)


def _unique_ids(entities: list[Entity]) -> dict[int, str]:
    """Entity id -> Name where present and unique among ``entities``, else GlobalId."""
    names = [(e, e.get_argument(_ROOT_NAME)) for e in entities]  # every item is an IfcRoot
    counts: dict[str, int] = {}
    for _, name in names:
        if name:
            counts[name] = counts.get(name, 0) + 1
    ids = {}
    for e, name in names:
        ids[e.id()] = name if name and counts[name] == 1 else str(e.get_argument(_GLOBAL_ID))
    return ids


# --------------------------------------------------------------------------- route 1
class _StructuralReader:
    """Route 1: one IfcStructuralAnalysisModel -> Frame. Steps in `read`."""

    progress: Any = None  # optional callable(step: str), told the members read so far

    def __init__(self, ifc_file: Any, model: Entity, scales: UnitScales, defaults: ReaderDefaults | None) -> None:
        self.f = ifc_file
        self.model = model
        self.s = scales
        self.defaults = defaults
        self.is2x3 = ifc_file.schema == "IFC2X3"
        self._axis_index = None if self.is2x3 else _attribute_index(ifc_file, "IfcStructuralCurveMember", "Axis")
        self._condition_index = _attribute_index(ifc_file, "IfcStructuralPointConnection", "AppliedCondition")
        self.diagnostics: list[Diagnostic] = []
        self.notes: list[str] = []
        self.physical: dict[str, str] = {}
        self._placement_cache = PlacementCache()
        shared = getattr(model, "SharedPlacement", None)
        self.shared = self._placement_cache.matrix(shared) if shared is not None else None
        # per-entity look-ups, computed once (profiles, materials, conditions and loads are shared)
        self._vertices: dict[int, Any] = {}
        self._vertex_ids: dict[int, int | None] = {}
        self._points: dict[int, Vec3] = {}
        self._vertex_world: dict[tuple[int, int], Vec3] = {}
        self._references: dict[tuple[int, int], Vec3] = {}
        self._point_kinds: dict[int, bool] = {}
        self._axes_cache: dict[tuple[bytes, bytes, float], Mat | None] = {}
        self._parallel: dict[tuple[bytes, bytes], bool] = {}  # (direction, reference) -> Axis parallel to it
        self._relating_material: dict[int, int] = {}
        self._last_key: tuple[int, tuple[int, ...] | None] = (-1, None)
        self._section_map: SectionMap | None = defaults.sections if defaults is not None else None
        self._mapped: dict[str, int] = {}  # section map key -> members it gave the section
        self._heated: set[str] = set()  # members a temperature change acts on
        self._materials: dict[tuple[Any, ...], Material] = {}
        self._profiles: dict[tuple[int, ...], tuple[Entity | None, int | None, Entity | None]] = {}
        self._sections: dict[tuple[int, int | None], tuple[Section, SectionProperties, list[str]]] = {}
        self._boxes: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self._cardinal_shifts: dict[tuple[int, int, int], tuple[np.ndarray, bool]] = {}  # (shift, negligible)
        self._line_forces: dict[int, np.ndarray] = {}
        self._scaled_forces: dict[tuple[bytes, float, bool], list[float]] = {}  # see _member_action
        self._load_classes: dict[str, tuple[bool, bool]] = {}
        self._conditions: dict[int, tuple[list[bool], list[float], list[Any]]] = {}
        self._connection_index: _ConnectionIndex | None = None
        self._implied_nodes: list[_ImpliedNode] = []
        self._implied_cells: dict[tuple[int, int, int], list[_ImpliedNode]] = {}
        self._implied_by_vertex: dict[int, _ImpliedNode] = {}
        self._implied_ends = 0
        self._member_relations: dict[int, list[tuple[Entity, Entity]]] | None = None
        self._action_kinds: dict[str, _ActionKind] = {}
        self._group_contents: dict[int, list[tuple[Entity, float]]] = {}
        self._activity_items: dict[int, Any] | None = None
        self._physical_links: tuple[dict[int, Any], dict[int, Any]] | None = None
        self._material_links: dict[int, list[Any]] | None = None
        self._profile_links: dict[int, list[Any]] | None = None

    # -- small utilities
    def warn(self, entity, message: str, level: str = "warning") -> None:
        eid = entity.id() if entity is not None else None
        text = f"{entity_label(entity)}: {message}" if entity is not None else message
        self.diagnostics.append(Diagnostic(level, eid, text))

    def fail(self, entity, message: str) -> IfcInputError:
        return IfcInputError(f"{entity_label(entity)}: {message}", entity.id())

    def placement_of(self, item) -> np.ndarray:
        """World matrix of an item's frame: its ObjectPlacement, else the model's SharedPlacement."""
        pl = item.get_argument(_PRODUCT_PLACEMENT)  # every structural item and action is an IfcProduct
        if pl is None:
            return self.shared if self.shared is not None else np.eye(4)
        return self._placement_cache.matrix(pl)

    @property
    def global_rotation(self) -> np.ndarray:
        """Rotation of the model's 'global' axes (SharedPlacement) in world axes."""
        return self.shared[:3, :3] if self.shared is not None else np.eye(3)

    def world_point(self, item: Entity, coords: Any) -> Vec3:
        """World position (m) of coordinates given in an item's frame (see `placement_of`)."""
        return self._to_world(self.placement_of(item), coords)

    def _to_world(self, M: Mat, coords: Any) -> Vec3:
        c = [float(v) for v in coords] + [0.0, 0.0, 0.0]
        local = np.array(c[:3] + [1.0])
        return (M @ local)[:3] * self.s.length

    def _frame_of(self, item: Entity) -> tuple[int, Mat]:
        """(key, world matrix) of an item's frame (see `placement_of`); the key is the placement's id, 0 for none."""
        pl = item.get_argument(_PRODUCT_PLACEMENT)  # every structural item and action is an IfcProduct
        if pl is None:
            return 0, self.shared if self.shared is not None else np.eye(4)
        return pl.id(), self._placement_cache.matrix(pl)

    def _vertex_points(self, frame: tuple[int, Mat], vertices: tuple[Entity, ...]) -> list[Vec3]:
        """World positions (m) of IfcVertexPoints given in an item's frame, cached per (placement, vertex)."""
        pkey, M = frame
        out = []
        for v in vertices:
            key = (pkey, v.id())
            point = self._vertex_world.get(key)
            if point is None:
                geometry = v.get_argument(_VERTEX_GEOMETRY)
                coords = geometry.get_argument(_POINT_COORDINATES)
                limit = 1e8 / self.s.length
                # NaN fails every comparison and infinity the bound: finite and within the bound, in one test
                if len(coords) != 3 or not (abs(coords[0]) < limit and abs(coords[1]) < limit and abs(coords[2]) < limit):
                    self._bad_point(v, geometry, coords)
                point = self._to_world(M, coords)
                point.flags.writeable = False  # shared by every item that names the vertex
                self._vertex_world[key] = point
            out.append(point)
        return out

    def _coincident_nodes(self, conn_list: list) -> None:
        """Warn about distinct nodes within 1 mm of each other: members meeting there are not joined."""
        if len(conn_list) < 2:
            return
        from scipy.spatial import cKDTree

        pts = np.array([self.node_xyz[c.id()] for c in conn_list], dtype=float)
        pairs = sorted(cKDTree(pts).query_pairs(r=1e-3))
        for a, b in pairs[:5]:
            d = float(np.linalg.norm(pts[a] - pts[b]))
            ca, cb = conn_list[a], conn_list[b]
            la = ca.label if isinstance(ca, _ImpliedNode) else entity_label(ca)
            lb = cb.label if isinstance(cb, _ImpliedNode) else entity_label(cb)
            self.warn(None, f"{la} and {lb} are {d * 1e3:.3g} mm apart but are two nodes: the members meeting there "
                            "are not connected to each other (join them in one point connection if they should be)")
        if len(pairs) > 5:
            self.warn(None, f"{len(pairs) - 5} more pairs of nodes within 1 mm of each other")

    def _bad_point(self, vertex: Entity, geometry: Entity, coords: Any) -> None:
        """A vertex point of the analysis model that cannot be a 3-D node: error, unless a 2-D model pads it."""
        text = ", ".join(f"{float(c):g}" for c in coords)
        if len(coords) != 3:
            if len(coords) == 2 and "2D" in str(getattr(self.model, "PredefinedType", "") or ""):
                return  # a model declared 2-D: z = 0 is meant
            raise IfcInputError(f"{entity_label(geometry)} (the point of vertex #{vertex.id()}): {len(coords)} "
                                f"coordinates ({text}) where the 3-D analysis model needs 3; a missing coordinate "
                                "would silently be read as 0", geometry.id())
        raise IfcInputError(f"{entity_label(geometry)} (the point of vertex #{vertex.id()}): coordinates ({text}) "
                            "are not finite or beyond 1e8 m", geometry.id())

    # -- main
    def read(self) -> Frame:
        members, connections = self._items()
        self._connections = connections
        if not members:
            raise self.fail(self.model, "the structural analysis model has no IfcStructuralCurveMember")
        self.member_ids = _unique_ids(members)
        self.node_ids = {}
        say = self.progress or (lambda step: None)
        ends = {}
        for n, m in enumerate(members):
            if n % 5000 == 0:
                say(f"reading: member ends, {n:,} of {len(members):,} members")
            ends[m.id()] = self._member_ends(m)
        used = {}
        for end in ends.values():  # the members' order
            for rel, conn in end["conns"]:
                used[conn.id()] = conn
        for c in connections:
            if c.id() not in used:
                supported = _argument(c, self._condition_index) is not None
                self.warn(c, "point connection that no curve member of the model touches: left out"
                             + (", and with it its support condition (the frame does not rest on it)" if supported else ""))
        listed = {c.id() for c in connections}
        conn_list = [c for c in connections if c.id() in used] + [c for cid, c in used.items() if cid not in listed]
        self.node_ids = _unique_ids(conn_list)
        self.node_xyz = {c.id(): self._connection_point(c) for c in conn_list}
        self._coincident_nodes(conn_list)

        b = FrameBuilder(name=str(self.model.Name or self.model.GlobalId))
        self.builder = b
        for c in conn_list:
            if isinstance(c, _ImpliedNode):
                b.add_node(self.node_ids[c.id()], c.point.tolist(), source=None, label=c.label)
                continue
            b.add_node(self.node_ids[c.id()], self.node_xyz[c.id()].tolist(), source=str(c.get_argument(_GLOBAL_ID)), label=entity_label(c))
            self._support(c)
        if self._implied_nodes:
            self.warn(None, f"{self._implied_ends} member ends have no IfcStructuralPointConnection (nor a relation to "
                            f"one): joined by position into {len(self._implied_nodes)} rigid joints without supports "
                            f"({', '.join(n.Name for n in self._implied_nodes[:5])}"
                            + (" ..." if len(self._implied_nodes) > 5 else "") + ")")
        self.cases = self._load_structure()
        need_density = any(any(v != 0 for v in case["self_weight"]) for case in self.cases.values())
        self.member_info: dict[int, dict] = {}
        material_cache: dict = {}
        for m in members:  # every member's material first: one report names every material that stays unknown
            self._material(m, need_density, str(m.get_argument(_MEMBER_TYPE) or "NOTDEFINED") in _TRUSS_TYPES, material_cache)
        material_cache["resolver"].raise_unknown()
        if material_cache["resolver"].summary():
            self.notes.append(material_cache["resolver"].summary())
        self._check_sections(members)
        for n, m in enumerate(members):
            if n % 5000 == 0:
                say(f"reading: sections and axes, {n:,} of {len(members):,} members")
            self._member(m, ends[m.id()], need_density, material_cache)
        if self._mapped and self._section_map is not None:
            self.notes.append(self._section_map.note(self._mapped, "member"))
        say(f"reading: loads on {len(members):,} members")
        self._loads()
        self._thermal_coefficients()
        try:
            return b.build()
        except AnalysisError as exc:
            raise IfcInputError(f"{entity_label(self.model)}: {exc}", getattr(exc, "entity_id", None) or self.model.id()) from None

    # -- items of the model
    def _items(self):
        members, connections = [], []
        seen = set()
        kinds: dict[str, str] = {}  # class name -> what it is to the frame, found once per class
        for rel in _as_list(getattr(self.model, "IsGroupedBy", None)):
            for obj in rel.RelatedObjects or ():
                oid = obj.id()
                if oid in seen:
                    continue
                seen.add(oid)
                cls = obj.is_a()
                kind = kinds.get(cls)
                if kind is None:
                    if obj.is_a("IfcStructuralCurveMember"):
                        kind = "varying" if obj.is_a("IfcStructuralCurveMemberVarying") else "member"
                    elif obj.is_a("IfcStructuralPointConnection"):
                        kind = "connection"
                    else:
                        kind = "item" if obj.is_a("IfcStructuralItem") else "other"
                    kinds[cls] = kind
                if kind == "member":
                    members.append(obj)
                elif kind == "varying":
                    self.warn(obj, "varying curve member read with the section at its start")
                    members.append(obj)
                elif kind == "connection":
                    connections.append(obj)
                elif kind == "item":
                    self.warn(obj, f"{cls} is not supported by a frame analysis: ignored")
        return members, connections

    def _connection_point(self, conn: Entity) -> Vec3:
        """World position (m) of a point connection's vertex (cached; do not modify)."""
        key = conn.id()
        point = self._points.get(key)
        if point is None:
            vertex = self._vertex_of(conn)
            if vertex is None:
                raise self.fail(conn, "no vertex point (topology representation 'Reference' with an IfcVertexPoint)")
            point = self._vertex_points(self._frame_of(conn), (vertex,))[0]
            self._points[key] = point
        return point

    def _vertex_of(self, item: Entity) -> Entity | None:
        key = item.id()
        if key in self._vertices:
            return self._vertices[key]
        found = None
        rep = item.get_argument(_PRODUCT_REPRESENTATION)
        for r in (rep.get_argument(_PRODUCT_SHAPE_REPRESENTATIONS) or ()) if rep is not None else ():
            for it in r.get_argument(_REPRESENTATION_ITEMS) or ():
                if it.is_a() == "IfcVertexPoint" and it.get_argument(_VERTEX_GEOMETRY) is not None:  # no subtypes
                    found = it
                    break
            if found is not None:
                break
        self._vertices[key] = found
        return found

    def _vertex_id(self, item: Entity) -> int | None:
        """Entity id of `_vertex_of` (cached per item)."""
        key = item.id()
        found = self._vertex_ids.get(key, -1)
        if found == -1:
            vertex = self._vertex_of(item)
            found = self._vertex_ids[key] = vertex.id() if vertex is not None else None
        return found

    def _edge_of(self, member: Entity) -> tuple[Entity, Entity, Entity] | None:
        """(edge, start vertex, end vertex) of an item's topology representation, or None."""
        rep = member.get_argument(_PRODUCT_REPRESENTATION)
        for r in (rep.get_argument(_PRODUCT_SHAPE_REPRESENTATIONS) or ()) if rep is not None else ():
            for it in r.get_argument(_REPRESENTATION_ITEMS) or ():
                if it.is_a() in ("IfcEdge", "IfcEdgeCurve"):  # the common case, without the subtype tests
                    return it, it.get_argument(_EDGE_START), it.get_argument(_EDGE_END)
                if it.is_a("IfcOrientedEdge"):
                    base = it.EdgeElement
                    start, end = (base.EdgeStart, base.EdgeEnd) if it.Orientation else (base.EdgeEnd, base.EdgeStart)
                    return base, start, end
                if it.is_a("IfcEdge"):
                    return it, it.EdgeStart, it.EdgeEnd
        return None

    def _implied_node(self, vertex: Entity, point: Vec3) -> _ImpliedNode:
        """The joint at a member end without a point connection: one per vertex entity or position (1e-6 relative)."""
        node = self._implied_by_vertex.get(vertex.id())
        if node is None:
            tol = 1e-6 * max(1.0, float(np.abs(point).max()))
            fx, fy, fz = (int(v) for v in np.floor(point / tol))
            cell = (fx, fy, fz)
            for dx in (-1, 0, 1):
                for dy in (-1, 0, 1):
                    for dz in (-1, 0, 1):
                        for other in self._implied_cells.get((cell[0] + dx, cell[1] + dy, cell[2] + dz), ()):
                            if node is None and float(np.linalg.norm(other.point - point)) <= tol:
                                node = other
            if node is None:
                n = len(self._implied_nodes) + 1
                node = _ImpliedNode(-n, f"J{n}-implied", np.array(point, dtype=float))
                self._implied_nodes.append(node)
                self._implied_cells.setdefault(cell, []).append(node)
                self._points[node.id()] = node.point
            self._implied_by_vertex[vertex.id()] = node
        self._implied_ends += 1
        return node

    def _connection_at(self, point: Vec3, tol: float, taken: set[int]) -> Entity | None:
        """The first point connection of the model (in the model's order) within ``tol`` (m) of ``point``."""
        if self._connection_index is None:
            with_vertex = [c for c in self._connections if self._vertex_of(c) is not None]
            self._connection_index = _ConnectionIndex(with_vertex, [self._connection_point(c) for c in with_vertex])
        return self._connection_index.first_within(point, tol, taken)

    def _point_relations(self, member: Entity) -> list[tuple[Entity, Entity]]:
        """(relation, its point connection) pairs of a member, in the order of its ConnectedBy.

        From one pass over every IfcRelConnectsStructuralMember (file order,
        which is the order of the inverse attribute) instead of one inverse
        look-up per member.
        """
        if self._member_relations is None:
            found: dict[int, list[tuple[Entity, Entity]]] = {}
            kinds = self._point_kinds  # connection id -> a point connection (subtypes included)
            for r in self.f.by_type("IfcRelConnectsStructuralMember"):
                relating, conn = r.get_argument(_REL_MEMBER), r.get_argument(_REL_CONNECTION)
                if relating is None or conn is None:
                    continue
                cid = conn.id()
                point = kinds.get(cid)
                if point is None:
                    point = kinds[cid] = bool(conn.is_a("IfcStructuralPointConnection"))
                if point:
                    key = relating.id()
                    pairs = found.get(key)
                    if pairs is None:
                        found[key] = [(r, conn)]
                    else:
                        pairs.append((r, conn))
            self._member_relations = found
        return self._member_relations.get(member.id(), [])

    def _member_ends(self, member: Entity) -> dict[str, Any]:
        """End points (world, m) and the connection and relation at each end."""
        found = self._edge_of(member)
        if found is None:
            raise self.fail(member, "no edge topology (topology representation with an IfcEdge): the member has no axis")
        edge, v_start, v_end = found
        # IfcVertexPoint has no subtypes: the class name is enough
        if v_start is None or v_end is None or v_start.is_a() != "IfcVertexPoint" or v_end.is_a() != "IfcVertexPoint":
            raise self.fail(member, "edge without start and end vertex points")
        if edge.is_a("IfcEdgeCurve") and edge.EdgeGeometry is not None:
            geom = edge.EdgeGeometry
            straight = geom.is_a("IfcLine") or (geom.is_a("IfcPolyline") and len(geom.Points) == 2)
            if not straight:
                self.warn(member, f"edge geometry {geom.is_a()} is read as the straight chord between its end points")
        frame = self._frame_of(member)
        p = self._vertex_points(frame, (v_start, v_end))
        # (relation, its point connection) pairs, in the order of the member's ConnectedBy
        point_rels = self._point_relations(member)
        vertex_ids = [self._vertex_id(conn) for _, conn in point_rels]
        if len(point_rels) == 2:
            # the common member: two relations, to the point connections whose vertices are its edge's ends;
            # what the general search below finds for it, without the search
            vs, ve = v_start.id(), v_end.id()
            a, b = vertex_ids
            if vs != ve and ((a == vs and b == ve) or (a == ve and b == vs)):
                (rel_i, conn_i), (rel_j, conn_j) = point_rels if a == vs else point_rels[::-1]
                chord = math.dist(p[0].tolist(), p[1].tolist())  # m
                if conn_i.id() != conn_j.id() and chord > 1e-9 * max(1.0, max(map(abs, p[0].tolist()))):
                    return {"points": p, "rels": [rel_i, rel_j], "conns": [(rel_i, conn_i), (rel_j, conn_j)],
                            "frame": frame, "chord": chord}
        # index into point_rels of the relation chosen at each end (None: not yet, -1: implied by position)
        chosen: list[int | None] = [None, None]
        conns: list[Entity | None] = [None, None]
        for k, v in enumerate((v_start, v_end)):
            # 1. the same vertex entity; 2. the eccentricity's vertex on the member; 3. the point within tolerance
            vid = v.id()
            for n, (r, conn) in enumerate(point_rels):
                if vertex_ids[n] == vid:
                    chosen[k], conns[k] = n, conn
                    break
            if chosen[k] is None:
                for n, (r, conn) in enumerate(point_rels):
                    if r.is_a("IfcRelConnectsWithEccentricity") and r.ConnectionConstraint is not None:
                        on_member = getattr(r.ConnectionConstraint, "PointOnRelatingElement", None)
                        if on_member is not None and on_member.id() in (vid, getattr(v, "VertexGeometry", v).id()):
                            chosen[k], conns[k] = n, conn
                            break
        chord = math.dist(p[0].tolist(), p[1].tolist())  # m
        L_tol = 1e-6 * max(1.0, chord)
        for k in (0, 1):
            if chosen[k] is None:
                best, best_d = None, math.inf
                for n, (r, conn) in enumerate(point_rels):
                    if n in chosen:
                        continue
                    d = float(np.linalg.norm(self._connection_point(conn) - p[k]))
                    if d < best_d:
                        best, best_d = n, d
                if best is not None and (best_d <= L_tol or point_rels[best][0].is_a("IfcRelConnectsWithEccentricity")):
                    chosen[k], conns[k] = best, point_rels[best][1]
        rels: list[Any] = [None, None]
        for k in (0, 1):
            index = chosen[k]
            if index is not None:
                rels[k] = point_rels[index][0]
                continue
            # no relation: a point connection of the model at the same place still joins it (noted)
            taken = {c.id() for c in conns if c is not None}
            found = self._connection_at(p[k], max(L_tol, 1e-6), taken)
            if found is not None:
                chosen[k], conns[k], rels[k] = -1, found, _ImpliedConnection(found)
                self.warn(member, f"end {'ij'[k]} joins {entity_label(found)} by position: no "
                                  "IfcRelConnectsStructuralMember relates them (taken as a rigid joint)", "info")
        for k in (0, 1):
            if conns[k] is None:  # no point connection there at all: a joint by position (issue noted once)
                node = self._implied_node((v_start, v_end)[k], p[k])
                conns[k], rels[k] = node, _ImpliedConnection(node)
        conn_i, conn_j = conns
        if conn_i is None or conn_j is None:
            which = "start (end i)" if conn_i is None else "end (end j)"
            raise self.fail(member, f"no IfcStructuralPointConnection at the {which} of its edge (IfcRelConnectsStructuralMember missing)")
        if conn_i.id() == conn_j.id():
            raise self.fail(member, "both ends connect to the same point connection")
        extra = [conn for n, (_, conn) in enumerate(point_rels) if n not in chosen]
        if extra:
            names = ", ".join(entity_label(conn) for conn in extra)
            raise self.fail(member, f"connected to point connections between its ends ({names}): split the member at them")
        if chord <= 1e-9 * max(1.0, max(map(abs, p[0].tolist()))):  # the largest |coordinate| of end i
            raise self.fail(member, "zero length (edge start and end at the same point)")
        return {"points": p, "rels": rels, "conns": [(rels[0], conn_i), (rels[1], conn_j)], "frame": frame,
                "chord": chord}

    # -- supports
    def _condition_flags(self, cond: Entity | None, owner: Entity, what: str) -> tuple[list[bool], list[float], list[Any]]:
        """(fixed[6], springs_si[6], raw values[6]) of an IfcBoundaryNodeCondition, in its own axes.

        Cached per condition entity when reading it reported nothing (reports
        name the owner, so those are repeated for each owner).
        """
        if cond is None:
            return [False] * 6, [0.0] * 6, [None] * 6
        found = self._conditions.get(cond.id())
        if found is not None:
            return list(found[0]), list(found[1]), list(found[2])
        reported = len(self.diagnostics)
        fixed, springs, raw_values = self._read_condition(cond, owner, what)
        if len(self.diagnostics) == reported:
            self._conditions[cond.id()] = (list(fixed), list(springs), list(raw_values))
        return fixed, springs, raw_values

    def _read_condition(self, cond: Entity, owner: Entity, what: str) -> tuple[list[bool], list[float], list[Any]]:
        fixed = [False] * 6
        springs = [0.0] * 6
        if not cond.is_a("IfcBoundaryNodeCondition"):
            self.warn(owner, f"{what} {cond.is_a()} is not a node condition: ignored")
            return fixed, springs, [None] * 6
        names_4 = ("TranslationalStiffnessX", "TranslationalStiffnessY", "TranslationalStiffnessZ",
                   "RotationalStiffnessX", "RotationalStiffnessY", "RotationalStiffnessZ")
        names_2x3 = ("LinearStiffnessX", "LinearStiffnessY", "LinearStiffnessZ",
                     "RotationalStiffnessX", "RotationalStiffnessY", "RotationalStiffnessZ")
        raw_values = []
        for k in range(6):
            name = names_2x3[k] if self.is2x3 else names_4[k]
            raw = getattr(cond, name, None)
            raw_values.append(raw)
            if raw is None:
                continue
            value = _unwrap(raw)
            if isinstance(value, bool) or (hasattr(raw, "is_a") and raw.is_a("IfcBoolean")):
                fixed[k] = bool(value)
                continue
            try:
                number = float(value)
            except (TypeError, ValueError):
                self.warn(owner, f"{what} {name} = {value!r} is not understood: taken as free")
                continue
            if number == -1.0:
                if not self.is2x3:
                    self.warn(owner, f"{what} {name} = -1 is the IFC2X3 code for a rigid component (IFC4 uses TRUE): taken as fixed")
                fixed[k] = True
            elif number == 0.0:
                pass
            elif number < 0 or not math.isfinite(number):
                raise self.fail(owner, f"{what} {name} = {number!r}: negative or infinite stiffness is not supported")
            else:
                scale = self.s.linear_stiffness if k < 3 else self.s.rotational_stiffness
                springs[k] = number * scale
        return fixed, springs, raw_values

    def _support(self, conn) -> None:
        cond = _argument(conn, self._condition_index)
        if cond is None:
            return
        fixed, springs, _ = self._condition_flags(cond, conn, "support condition")
        if not any(fixed) and not any(springs):
            return
        R = self.placement_of(conn)[:3, :3]
        ccs = getattr(conn, "ConditionCoordinateSystem", None)
        if ccs is not None:
            R = R @ _axis2placement_matrix(ccs)[:3, :3]
        perm = _permutation(R)
        node = self.node_ids[conn.id()]
        if perm is None:  # an inclined support: exact constraints along its own axes
            if any(springs):
                raise self.fail(conn, "elastic support (finite stiffness) in an inclined ConditionCoordinateSystem: "
                                      "only rigid restraints are supported along inclined axes")
            held = [DOF_NAMES[c] for c in range(6) if fixed[c]]
            self.builder.inclined_support(node, R.T.tolist(), held, source=str(conn.get_argument(_GLOBAL_ID)))
            self.warn(conn, "inclined support: " + " ".join(held) + " held along its own axes (x "
                      + ", ".join(f"({a:.4g}, {b:.4g}, {c:.4g})" for a, b, c in R.T.tolist()) + " for x, y, z)", "info")
            return
        comps = []
        for k in range(3):
            g = int(perm[k])
            for base in (0, 3):
                if fixed[base + k]:
                    comps.append(DOF_NAMES[base + g])
                if springs[base + k]:
                    self.builder.spring(node, DOF_NAMES[base + g], springs[base + k])
        if comps:
            self.builder.support(node, comps)
        if not np.allclose(R, np.eye(3), atol=1e-12) and (comps or any(springs)):
            self.warn(conn, "support condition turned from its own axes to the global axes", "info")

    # -- members
    def _member(self, member, ends: dict, need_density: bool, material_cache: dict) -> None:
        member_id = member.id()
        mid = self.member_ids[member_id]
        label = entity_label(member)
        predefined = str(member.get_argument(_MEMBER_TYPE) or "NOTDEFINED")
        truss = predefined in _TRUSS_TYPES
        if predefined in _ONE_WAY_TYPES:
            self.warn(member, f"{predefined}: {_ONE_WAY_TYPES[predefined]} behaviour is not modelled by a linear analysis; the member is an axial bar carrying both tension and compression")
        material = self._material(member, need_density, truss, material_cache)

        # axes
        p_i, p_j = ends["points"]
        chord = ends["chord"]
        ex = (p_j - p_i) / chord
        ref = None
        roll = 0.0
        axis = member.get_argument(self._axis_index) if self._axis_index is not None else None
        if axis is not None:
            ref = self._reference(ends["frame"], axis)
            key = (ex.tobytes(), ref.tobytes())  # members of a regular frame repeat a few directions
            parallel = self._parallel.get(key)
            if parallel is None:
                parallel = self._parallel[key] = _norm(_cross(ref, ex)) < 1e-9 * max(_norm(ref), 1e-300)
            if parallel:
                raise self.fail(member, "Axis is parallel to the member's reference edge")
        profile, cardinal, usage = self._profile(member)
        if axis is None and usage is not None and usage.is_a("IfcRelAssociatesProfileProperties"):
            angle = _unwrap(getattr(usage, "ProfileOrientation", None))
            if angle:
                roll = float(angle) * self.s.angle
                self.warn(member, f"no Axis (IFC2X3): default orientation turned by ProfileOrientation {roll:.6g} rad", "info")
        axes = self._axes(ex, ref, roll)

        # section
        offset = _NO_OFFSET
        mapped = self._mapped_section(member, profile)
        if profile is None:
            if mapped is not None:
                section = mapped
            elif self.defaults is None or self.defaults.section is None:
                raise self.fail(member, "no profile (IfcMaterialProfileSetUsage or profile properties) and no default "
                                        "section given (a section map gives one: --sections FILE.toml)")
            else:
                import dataclasses

                smap = self.defaults.sections
                source = "user map" if smap is not None and self.defaults.section is smap.default else "default"
                section = dataclasses.replace(self.defaults.section, source=source)
                self.warn(member, f"no profile in the file: default section '{section.name}' used")
        else:
            section, props_si, pset = self._section(member, profile, usage)
            if mapped is not None:
                section = mapped  # the file's profile still places the axis (cardinal point)
            elif pset:
                self.warn(member, "Pset_ProfileMechanical values used for " + ", ".join(pset), "info")
            if mapped is None and abs(props_si.Iyz) > 1e-6 * math.sqrt(max(props_si.Iy * props_si.Iz, 0.0)) and not truss:
                self.warn(member, f"profile {entity_label(profile)} is not symmetric (Iyz = {props_si.Iyz:.4g} m4): bending is analysed about the profile axes, the product of inertia is neglected")
            offset = self._cardinal_offset(member, profile, cardinal, props_si, axes)

        # releases
        releases: list[list[str]] = [[], []]
        end_springs: list[dict[str, float]] = [{}, {}]
        for k, rel in enumerate(ends["rels"]):
            cond = rel.AppliedCondition if isinstance(rel, _ImpliedConnection) else rel.get_argument(_REL_CONDITION)
            if cond is None:
                continue
            fixed, springs, raw = self._condition_flags(cond, rel, "end condition")
            released_local = [raw[c] is not None and not fixed[c] and springs[c] == 0.0 for c in range(6)]
            ccs = getattr(rel, "ConditionCoordinateSystem", None)
            perm: npt.NDArray[np.intp] = np.arange(3)
            if ccs is not None:
                turned = _permutation(_axis2placement_matrix(ccs)[:3, :3])
                if turned is None:
                    raise self.fail(rel, "end condition in an inclined ConditionCoordinateSystem is not supported")
                perm = turned
            for c in range(3):
                for base in (0, 3):
                    action = ACTION_NAMES[base + int(perm[c])]
                    if released_local[base + c]:
                        releases[k].append(action)
                    elif springs[base + c] > 0 and not truss:
                        if action not in ("My", "Mz"):
                            raise self.fail(rel, f"semi-rigid member end in {action} (finite stiffness in AppliedCondition): "
                                                 "only rotational springs about the member's local y and z (My, Mz) "
                                                 "are supported")
                        end_springs[k][action] = float(springs[base + c])
            if truss and releases[k]:
                releases[k] = []  # an axial bar has no end moments or shears to release
        if any(end_springs):
            self.warn(member, "semi-rigid end" + ("s" if all(end_springs) else "") + ": " + "; ".join(
                f"end {'ij'[k]} " + ", ".join(f"{a} {v:.6g} N*m/rad" for a, v in sp_.items())
                for k, sp_ in enumerate(end_springs) if sp_), "info")

        # ends, offsets
        (_, conn_i), (_, conn_j) = ends["conns"]
        ci, cj = conn_i.id(), conn_j.id()
        node_i, node_j = self.node_xyz[ci], self.node_xyz[cj]
        if p_i is node_i and p_j is node_j and offset is _NO_OFFSET:
            # the common case: both ends are their connections' own vertex points, no eccentricity: what
            # the general branch below gives, without its small-array arithmetic
            off_i = off_j = _NO_OFFSET
            start = node_i + _NO_OFFSET
            length = chord
        else:
            off_i, off_j, start, length = self._end_offsets(member, ends, node_i, node_j, offset, chord)

        self.builder.add_member(
            mid, self.node_ids[ci], self.node_ids[cj], section, material,
            ref=tuple(ref.tolist()) if ref is not None else None, roll=roll, truss=truss,
            release_i=releases[0], release_j=releases[1], offset_i=tuple(off_i.tolist()), offset_j=tuple(off_j.tolist()),
            source=str(member.get_argument(_GLOBAL_ID)), label=label, spring_i=end_springs[0] or None,
            spring_j=end_springs[1] or None)
        self.member_info[member_id] = {"id": mid, "start": start, "axes": axes, "length": length}
        phys = self._physical(member)
        if phys is not None:
            self.physical[mid] = str(phys.GlobalId)

    def _section_names(self, member: Entity, profile: Entity | None) -> list[str | None]:
        """What a section map entry may name: the member's Name and ObjectType, its profile's ProfileName and
        the Name of the physical element it stands for."""
        phys = self._physical(member)
        return [member.Name, getattr(member, "ObjectType", None), getattr(profile, "ProfileName", None),
                getattr(phys, "Name", None)]

    def _mapped_section(self, member: Entity, profile: Entity | None, *, count: bool = True) -> Section | None:
        """The section the user's section map gives the member (counted for the reader's note), or None."""
        smap = self._section_map
        if smap is None or not smap.names:
            return None
        hit = smap.for_names(self._section_names(member, profile))
        if hit is None:
            return None
        if count:
            self._mapped[hit[0]] = self._mapped.get(hit[0], 0) + 1
        return hit[1]

    def _check_sections(self, members: list[Entity]) -> None:
        """One message naming every member left without a section (no profile, no map entry, no default)."""
        if self.defaults is not None and self.defaults.section is not None:
            return
        missing = [m for m in members if self._profile(m)[0] is None and self._mapped_section(m, None, count=False) is None]
        if not missing:
            return
        from .section_map import section_snippet

        names: dict[str, int] = {}
        for m in missing:
            name = str(m.Name or m.GlobalId)
            names[name] = names.get(name, 0) + 1
        examples = "; ".join(entity_label(m) for m in missing[:3]) + (" ..." if len(missing) > 3 else "")
        raise IfcInputError(
            f"{len(missing)} of {len(members)} curve members have no profile (no IfcMaterialProfileSetUsage or profile "
            f"properties) and no section was given for them: {examples}. Give their sections in a section map, "
            "--sections FILE.toml, for instance (fill in the values):\n\n" + section_snippet(sorted(names.items())),
            missing[0].id())

    def _end_offsets(self, member: Entity, ends: dict, node_i: Vec3, node_j: Vec3, offset: Vec3,
                     chord: float) -> tuple[Vec3, Vec3, Vec3, float]:
        """(offset_i, offset_j, start, length) of a member whose ends lie off its nodes or off its axis (m)."""
        p_i, p_j = ends["points"]
        d_i, d_j = p_i - node_i, p_j - node_j
        off_i = d_i + offset
        off_j = d_j + offset
        tol = 1e-9 * max(1.0, chord)
        for k, (off, rel) in enumerate(((d_i, ends["rels"][0]), (d_j, ends["rels"][1]))):
            if off.any() and np.linalg.norm(off) > tol:
                kind = "eccentric connection" if rel.is_a("IfcRelConnectsWithEccentricity") else "member end away from its connection"
                self.warn(member, f"{kind} at end {'ij'[k]}: rigid offset {tuple(round(float(v), 9) for v in off)} m")
        off_i[np.abs(off_i) < tol] = 0.0
        off_j[np.abs(off_j) < tol] = 0.0
        start = node_i + off_i
        length = float(np.linalg.norm((node_j + off_j) - start))
        if length <= tol:
            raise self.fail(member, "zero length")
        return off_i, off_j, start, length

    def _associations(self, rel_type: str) -> dict[int, list[Entity]]:
        """Element id -> the ``rel_type`` associations naming it, from one pass over the relations."""
        out: dict[int, list[Entity]] = {}
        for rel in self.f.by_type(rel_type):
            for obj in rel.RelatedObjects or ():
                out.setdefault(obj.id(), []).append(rel)
        return out

    def _axes(self, ex: Vec3, ref: Vec3 | None, roll: float) -> Mat | None:
        """`_local_axes`, cached per (direction, reference, roll): a regular frame repeats a few of them."""
        key = (ex.tobytes(), ref.tobytes() if ref is not None else b"", roll)  # bytes: -0.0 and 0.0 stay apart
        if key in self._axes_cache:
            return self._axes_cache[key]
        axes = _local_axes(ex, ref, roll)
        if axes is not None:
            axes.flags.writeable = False
        self._axes_cache[key] = axes
        return axes

    def _reference(self, frame: tuple[int, Mat], axis: Entity) -> Vec3:
        """A member's Axis (given in its placement axes) in world axes, cached per (placement, direction)."""
        key = (frame[0], axis.id())
        ref = self._references.get(key)
        if ref is None:
            ref = frame[1][:3, :3] @ _direction(axis)
            ref.flags.writeable = False
            self._references[key] = ref
        return ref

    def _shared_key(self, member: Entity) -> tuple[int, ...] | None:
        """Ids of the association entities that alone decide a member's material and profile, or None.

        A member with exactly one material association of its own (IFC2X3:
        and exactly one profile-properties association) gets the material and
        profile of that association's definition, whichever member it is.
        """
        if self._material_links is None:
            self._material_links = self._associations("IfcRelAssociatesMaterial")
            self._profile_links = self._associations("IfcRelAssociatesProfileProperties") if self.is2x3 else {}
        member_id = member.id()
        if self._last_key[0] == member_id:
            return self._last_key[1]
        key: tuple[int, ...] | None = None
        own = self._material_links.get(member_id, [])
        if len(own) == 1:
            rel = own[0]
            definition = self._relating_material.get(rel.id())
            if definition is None:
                relating = rel.RelatingMaterial
                definition = self._relating_material[rel.id()] = relating.id() if relating is not None else 0
            if definition == 0:  # no material named: the member's own error or default, not shared
                key = None
            elif not self.is2x3:
                key = (definition,)
            else:
                own_profile = (self._profile_links or {}).get(member_id, [])
                key = (definition, own_profile[0].id()) if len(own_profile) == 1 else None
        self._last_key = (member_id, key)
        return key

    def _material(self, member: Entity, need_density: bool, truss: bool, material_cache: dict[Any, Any]) -> Material:
        """The member's material (SI), once per member; members with the same association share the work.

        A material that stays unknown is recorded by the resolver in ``material_cache['resolver']``
        (its ``raise_unknown`` reports them all); the member then gets a placeholder.
        """
        done = material_cache.setdefault("members", {})
        member_id = member.id()
        found = done.get(member_id)
        if found is not None:
            return found
        resolver = material_cache.get("resolver")
        if resolver is None:
            from .materials import MaterialResolver

            resolver = material_cache["resolver"] = MaterialResolver(self.f, self.s, self.defaults)
        material, diags = resolver.material(member, need_density=need_density, need_shear=not truss,
                                            key=self._shared_key(member))
        self.diagnostics.extend(diags)
        if material is None:  # unknown: reported with all the others before the frame is built
            material = Material("unknown", E=1.0, G=1.0)
        done[member_id] = material
        return material

    def _profile(self, member: Entity) -> tuple[Entity | None, int | None, Entity | None]:
        """(profile, cardinal point, usage) of a member, shared between members with the same association."""
        key = self._shared_key(member)
        if key is not None:
            found = self._profiles.get(key)
            if found is not None:
                return found
        from .materials import element_profile

        found = element_profile(self.f, member)
        if key is not None:
            self._profiles[key] = found
        return found

    def _section(self, member: Entity, profile: Entity, usage: Entity | None) -> tuple[Section, SectionProperties, list[str]]:
        """Section (SI), its properties (SI) and the Pset_ProfileMechanical names used, cached per profile and usage."""
        key = (profile.id(), usage.id() if usage is not None else None)
        found = self._sections.get(key)
        if found is not None:
            return found
        import dataclasses

        from ..units import section_to_si
        from .materials import profile_mechanical_values
        from .sections import PSET_FIELD_UNITS, section_from_pset, section_properties

        try:
            props = section_properties(profile, angle_scale=self.s.angle)
        except IfcInputError as exc:
            raise IfcInputError(f"{entity_label(member)}: {exc}", member.id()) from None
        pset = section_from_pset(profile_mechanical_values(self.f, profile, usage))
        props_si = section_to_si(props, self.s.length)
        if pset:
            props_si = dataclasses.replace(props_si, **{k: v * getattr(self.s, PSET_FIELD_UNITS[k]) for k, v in pset.items()})
        name = props_si.name or str(getattr(profile, "ProfileName", None) or f"#{profile.id()}")
        section = Section(name, A=props_si.A, Iy=props_si.Iy, Iz=props_si.Iz, J=props_si.J,
                          Avy=props_si.Avy, Avz=props_si.Avz)
        found = (section, props_si, sorted(pset))
        self._sections[key] = found
        return found

    def _cardinal_offset(self, member, profile, cardinal, props_si, axes) -> np.ndarray:
        """Global offset of the centroidal axis from the reference line for an eccentric insertion."""
        if cardinal is None or cardinal == 10:
            return _NO_OFFSET
        if axes is None:
            return _NO_OFFSET
        if cardinal in (15, 16, 17, 18, 19):
            self.warn(member, f"CardinalPoint {cardinal} refers to the shear centre: the centroid is used in its place")
        key = (profile.id(), cardinal, id(props_si))  # props_si: cached per profile and usage, kept alive
        found = self._cardinal_shifts.get(key)
        if found is None:
            shift = self._cardinal_shift(member, profile, cardinal, props_si)
            found = self._cardinal_shifts[key] = (shift, bool(np.linalg.norm(shift) <= 1e-12))
        d, centred = found
        if centred:
            return _NO_OFFSET
        offset = d[0] * axes[1] + d[1] * axes[2]
        self.warn(member, f"eccentric insertion (CardinalPoint {cardinal}): centroidal axis offset by y = {d[0]:.6g} m, z = {d[1]:.6g} m from the reference line (rigid offsets at both ends)")
        return offset

    def _cardinal_shift(self, member, profile, cardinal, props_si) -> np.ndarray:
        """(2,) centroid relative to the reference line (y, z) = (xp, yp) in m, for a CardinalPoint."""
        c = np.array([props_si.cy, props_si.cz])
        lo, hi = self._profile_box(profile)
        mid = 0.5 * (lo + hi)
        table = {
            1: (lo[0], lo[1]), 2: (mid[0], lo[1]), 3: (hi[0], lo[1]),
            4: (lo[0], mid[1]), 5: (mid[0], mid[1]), 6: (hi[0], mid[1]),
            7: (lo[0], hi[1]), 8: (mid[0], hi[1]), 9: (hi[0], hi[1]),
            11: (c[0], lo[1]), 12: (lo[0], c[1]), 13: (hi[0], c[1]), 14: (c[0], hi[1]),
            15: (c[0], c[1]), 16: (c[0], lo[1]), 17: (lo[0], c[1]), 18: (hi[0], c[1]), 19: (c[0], hi[1]),
        }
        if cardinal not in table:
            raise self.fail(member, f"CardinalPoint {cardinal} is not one of 1..19")
        point = np.array(table[cardinal])
        d: np.ndarray = c - point  # centroid relative to the reference line, in (y, z) = (xp, yp)
        d.flags.writeable = False
        return d

    def _profile_box(self, profile: Entity) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
        """Bounding box (m) of the profile in its underlying x, y axes, from ifcopenshell's triangulation (cached)."""
        found = self._boxes.get(profile.id())
        if found is not None:
            return found
        import ifcopenshell.geom

        try:
            shape = ifcopenshell.geom.create_shape(ifcopenshell.geom.settings(), profile)
            if not isinstance(shape, ifcopenshell.ifcopenshell_wrapper.triangulation):
                raise TypeError(f"the geometry kernel gave a {type(shape).__name__}, not a triangulation")
            v = np.asarray(shape.verts, dtype=float).reshape(-1, 3)[:, :2]
        except Exception as exc:  # geometry kernel cannot build it
            raise IfcInputError(f"{entity_label(profile)}: cannot build its outline for the cardinal point ({exc})", profile.id()) from None
        found = (v.min(axis=0), v.max(axis=0))
        self._boxes[profile.id()] = found
        return found

    def _physical(self, member: Entity) -> Entity | None:
        """The physical element a member is assigned to (IfcRelAssignsToProduct, either direction), or None.

        The member's own assignment (HasAssignments) wins over an element
        that lists it (ReferencedBy); the maps come from one pass over the
        relations, in file order.
        """
        if self._physical_links is None:
            assigned: dict[int, Entity] = {}
            referenced: dict[int, Entity] = {}
            for rel in self.f.by_type("IfcRelAssignsToProduct"):
                prod = rel.RelatingProduct
                if prod is None:
                    continue
                objects = rel.RelatedObjects or ()
                if prod.is_a("IfcElement"):
                    for obj in objects:
                        assigned.setdefault(obj.id(), prod)
                element = next((obj for obj in objects if obj.is_a("IfcElement")), None)
                if element is not None:
                    referenced.setdefault(prod.id(), element)
            self._physical_links = (assigned, referenced)
        assigned, referenced = self._physical_links
        key = member.id()
        found = assigned.get(key)
        return found if found is not None else referenced.get(key)

    # -- load groups
    def _groups(self) -> list:
        groups = _as_list(getattr(self.model, "LoadedBy", None))
        if groups:
            return groups
        everything = list(self.f.by_type("IfcStructuralLoadGroup"))
        mine = []
        for g in everything:
            used_in = _as_list(getattr(g, "LoadGroupFor", None))
            if not used_in or any(m.id() == self.model.id() for m in used_in):
                mine.append(g)
        if mine:
            self.notes.append("The analysis model lists no load groups (LoadedBy): every load group of the file not tied to another model is read.")
        return mine

    @staticmethod
    def _kind(group) -> str:
        if group.is_a("IfcStructuralLoadCase"):
            return "LOAD_CASE"
        return str(getattr(group, "PredefinedType", None) or "NOTDEFINED")

    def _contents(self, group):
        """(related object, factor of its assignment) pairs of a group (cached per group; do not modify)."""
        found = self._group_contents.get(group.id())
        if found is not None:
            return found
        out = []
        for rel in _as_list(getattr(group, "IsGroupedBy", None)):
            factor = float(rel.Factor) if rel.is_a("IfcRelAssignsToGroupByFactor") and rel.Factor is not None else 1.0
            for obj in rel.RelatedObjects or ():
                out.append((obj, factor))
        self._group_contents[group.id()] = out
        return out

    def _coefficient(self, group) -> float:
        c = getattr(group, "Coefficient", None)
        return 1.0 if c is None else float(c)

    def _case_actions(self, group, factor: float, depth: int = 0) -> list:
        out = []
        for obj, f in self._contents(group):
            if obj.is_a("IfcStructuralAction"):
                out.append((obj, factor * f))
            elif obj.is_a("IfcStructuralLoadGroup") and depth < 10:
                kind = self._kind(obj)
                if kind in ("LOAD_CASE", "LOAD_COMBINATION"):
                    self.warn(group, f"contains {entity_label(obj)} of type {kind}: ignored inside a load case")
                    continue
                out.extend(self._case_actions(obj, factor * f * self._coefficient(obj), depth + 1))
        return out

    def _load_structure(self) -> dict:
        groups = self._groups()
        cases: dict[int, dict] = {}
        combos = []
        names: dict[str, int] = {}
        nested_groups = set()
        for g in groups:
            for obj, _ in self._contents(g):
                if obj.is_a("IfcStructuralLoadGroup"):
                    nested_groups.add(obj.id())
        self._check_dangling(groups)
        for g in groups:
            kind = self._kind(g)
            if kind == "LOAD_CASE":
                cases[g.id()] = {"group": g}
            elif kind == "LOAD_COMBINATION":
                combos.append(g)
            elif kind in ("LOAD_GROUP", "NOTDEFINED", "USERDEFINED") and g.id() not in nested_groups:
                if any(o.is_a("IfcStructuralAction") for o, _ in self._contents(g)):
                    self.warn(g, f"load group of type {kind} outside any load case: read as a load case", "info")
                    cases[g.id()] = {"group": g}
        for cid, case in cases.items():
            g = case["group"]
            name = str(g.Name or g.GlobalId)
            if name in names:
                name = f"{name} (#{g.id()})"
            names[name] = cid
            case["name"] = name
            coef = self._coefficient(g)
            scale = 1.0 if self.is2x3 else coef
            if not self.is2x3 and coef != 1.0:
                self.warn(g, f"Coefficient {coef:g}: the actions of the load case are multiplied by it (not its self weight)", "info")
            case["actions"] = self._case_actions(g, scale)
            sw = getattr(g, "SelfWeightCoefficients", None) if g.is_a("IfcStructuralLoadCase") else None
            if sw:
                v = self.global_rotation @ np.array([float(x) for x in sw], dtype=float)
                case["self_weight"] = tuple(float(x) for x in v)
            else:
                case["self_weight"] = (0.0, 0.0, 0.0)
        if self.is2x3 and cases:
            self.notes.append("IFC2X3: no IfcStructuralLoadCase, so no self-weight coefficients; combination factors are the Coefficient of the load case (and of any LOAD_COMBINATION_GROUP) in the combination.")
        self.combinations = []
        for g in combos:
            factors: dict[str, float] = {}
            self._combination_terms(g, self._coefficient(g), cases, factors, 0)
            name = str(g.Name or g.GlobalId)
            if name in names:
                name = f"{name} (#{g.id()})"
            names[name] = g.id()
            if not factors:
                self.warn(g, "load combination without load cases: ignored")
                continue
            self.combinations.append(Combination(name, tuple(factors.items()), source=str(g.GlobalId)))
        return cases

    def _check_dangling(self, groups) -> None:
        """A load group whose assignment names an entity missing from the file would lose a term or an action."""
        from .source import dangling_references

        dangling = dangling_references(self.f)
        if not dangling:
            return
        for g in groups:
            for rel in _as_list(getattr(g, "IsGroupedBy", None)):
                missing = dangling.get(rel.id())
                if missing:
                    what = "combination" if self._kind(g) == "LOAD_COMBINATION" else "load group"
                    factor = f" (factor {float(rel.Factor):g})" if rel.is_a("IfcRelAssignsToGroupByFactor") and rel.Factor is not None else ""
                    raise self.fail(g, f"the {what}'s assignment {entity_label(rel)}{factor} refers to "
                                       + ", ".join(f"#{i}" for i in missing) + ", which is not in the file: the "
                                       f"{what} would be incomplete; fix the reference")

    def _combination_terms(self, group, factor: float, cases: dict, out: dict, depth: int) -> None:
        for obj, f in self._contents(group):
            if not obj.is_a("IfcStructuralLoadGroup"):
                raise self.fail(group, f"term {entity_label(obj)} (factor {factor * f:g}) is not a load case: a "
                                       "combination combines load cases; remove the term or point it at a case")
            if obj.id() in cases:
                term = factor * f * (self._coefficient(obj) if self.is2x3 else 1.0)
                name = cases[obj.id()]["name"]
                out[name] = out.get(name, 0.0) + term
            elif self._kind(obj) == "LOAD_COMBINATION_GROUP" and depth < 10:
                self._combination_terms(obj, factor * f * self._coefficient(obj), cases, out, depth + 1)
            elif obj.is_a("IfcStructuralLoadGroup") and self._kind(obj) == "LOAD_CASE":
                self.warn(group, f"load case {entity_label(obj)} is not a load case of the analysis model: left out of the combination")
            else:
                self.warn(group, f"{entity_label(obj)} ({self._kind(obj)}) in a combination: ignored")

    # -- actions
    def _loads(self) -> None:
        member_by_entity = self.member_info
        node_ids = self.node_ids
        in_case = set()
        for case in self.cases.values():
            nodal, settlements = [], []
            member_loads: list[PointLoad | LineLoad] = []
            heat: list[TemperatureLoad] = []
            for action, factor in case["actions"]:
                in_case.add(action.id())
                item = self._acted_on(action)
                if item is None:
                    self.warn(action, "action not connected to a structural item: ignored")
                    continue
                if item.id() in member_by_entity:
                    for ld in self._member_action(action, item, factor):
                        (heat if isinstance(ld, TemperatureLoad) else member_loads).append(ld)
                elif item.id() in node_ids:
                    n, s = self._node_action(action, item, factor)
                    nodal.extend(n)
                    settlements.extend(s)
                else:
                    self.warn(action, f"acts on {entity_label(item)}, which is not a member or node of the frame: ignored")
            self.builder.add_case(LoadCase(case["name"], nodal=tuple(nodal), member=tuple(member_loads),
                                           settlements=tuple(settlements), self_weight=case["self_weight"],
                                           source=str(case["group"].GlobalId), temperature=tuple(heat)))
        for combo in self.combinations:
            self.builder.add_combination(combo)
        for action in self.f.by_type("IfcStructuralAction"):
            if action.id() in in_case:
                continue
            item = self._acted_on(action)
            if item is not None and (item.id() in member_by_entity or item.id() in node_ids):
                self.warn(action, "action in no load case of the model: ignored")

    def _acted_on(self, action: Entity) -> Entity | None:
        """The structural item of an action's first IfcRelConnectsStructuralActivity (AssignedToStructuralItem)."""
        if self._activity_items is None:
            items: dict[int, Entity] = {}
            for rel in self.f.by_type("IfcRelConnectsStructuralActivity"):
                activity = rel.get_argument(_ACTIVITY_ACTIVITY)
                if activity is not None and activity.id() not in items:
                    items[activity.id()] = rel.get_argument(_ACTIVITY_ITEM)
            self._activity_items = items
        return self._activity_items.get(action.id())

    def _node_action(self, action, conn, factor: float):
        load = action.AppliedLoad
        node = self.node_ids[conn.id()]
        gl = str(getattr(action, "GlobalOrLocal", None) or "GLOBAL_COORDS")
        if gl == "LOCAL_COORDS":
            R = self.placement_of(conn)[:3, :3]
            ccs = getattr(conn, "ConditionCoordinateSystem", None)
            if ccs is not None:
                R = R @ _axis2placement_matrix(ccs)[:3, :3]
        else:
            R = self.global_rotation
        if not action.is_a("IfcStructuralPointAction"):
            self.warn(action, f"{action.is_a()} on a point connection is not supported: ignored")
            return [], []
        if load is None:
            return [], []
        if load.is_a("IfcStructuralLoadSingleForce"):
            F = np.array([float(getattr(load, f"Force{a}", None) or 0.0) for a in "XYZ"]) * self.s.force
            M = np.array([float(getattr(load, f"Moment{a}", None) or 0.0) for a in "XYZ"])
            M = M * self.s.moment if M.any() else M  # the moment unit counts as used only where a moment is given
            if load.is_a("IfcStructuralLoadSingleForceWarping") and getattr(load, "WarpingMoment", None):
                self.warn(action, "warping moment ignored (no warping degree of freedom)")
            fx, fy, fz, mx, my, mz = (np.concatenate([R @ F, R @ M]) * factor).tolist()
            return [NodalLoad(node, (fx, fy, fz, mx, my, mz), source=str(action.GlobalId))], []
        if load.is_a("IfcStructuralLoadSingleDisplacement"):
            u = np.array([float(getattr(load, f"Displacement{a}", None) or 0.0) for a in "XYZ"]) * self.s.length
            r = np.array([float(getattr(load, f"RotationalDisplacementR{a}", None) or 0.0) for a in "XYZ"]) * self.s.angle
            values = np.concatenate([R @ u, R @ r]) * factor
            out = []
            k_node = list(self.builder._nodes[node]["restraint"])
            for k, v in enumerate(values):
                if abs(v) <= 0.0:
                    continue
                if not k_node[k]:
                    raise self.fail(action, f"prescribed displacement {DOF_NAMES[k]} of {entity_label(conn)}, whose support does not restrain {DOF_NAMES[k]}")
                out.append(Settlement(node, DOF_NAMES[k], float(v), source=str(action.GlobalId)))
            return [], out
        self.warn(action, f"load {load.is_a()} on a point connection is not supported: ignored")
        return [], []

    def _member_action(self, action, member, factor: float) -> list:
        info = self.member_info[member.id()]
        mid, L, axes = info["id"], info["length"], info["axes"]
        load = action.get_argument(_ACTIVITY_LOAD)
        gl = str(action.get_argument(_ACTIVITY_AXES) or "GLOBAL_COORDS")
        local = gl == "LOCAL_COORDS"
        R = np.eye(3) if local else self.global_rotation
        src = str(action.get_argument(_GLOBAL_ID))
        if load is None:
            return []
        kinds = self._action_kind(action)
        if kinds.point:
            if not load.is_a("IfcStructuralLoadSingleForce"):
                self.warn(action, f"load {load.is_a()} on a curve member is not supported: ignored")
                return []
            vertex = self._vertex_of(action)
            if vertex is None:
                raise self.fail(action, f"point action on {entity_label(member)} without a vertex giving its position")
            pt = self.world_point(action, vertex.VertexGeometry.Coordinates)
            pos = float(np.dot(pt - info["start"], axes[0]))
            dist = np.linalg.norm(pt - (info["start"] + pos * axes[0]))
            if pos < -1e-6 * L or pos > L * (1 + 1e-6) or dist > 1e-3 * L + 1e-6:
                raise self.fail(action, f"point action lies off {entity_label(member)} (at {pos:.6g} m along it, {dist:.3g} m away)")
            pos = min(max(pos, 0.0), L)
            return self._point_loads(mid, load, pos, R, factor, "local" if local else "global", src)
        if not kinds.curve:
            self.warn(action, f"{action.is_a()} on a curve member is not supported: ignored")
            return []
        temperature, configuration = self._load_class(load)
        if temperature:
            return [self._temperature(action, mid, load, factor, src)]
        if kinds.varying:
            raise self.fail(action, "IFC2X3 varying linear actions are not supported")
        projected = str(_argument(action, kinds.projected) or "TRUE_LENGTH") == "PROJECTED_LENGTH"
        if projected and local:
            raise self.fail(action, "PROJECTED_LENGTH with LOCAL_COORDS is not valid (IFC rule ProjectedIsGlobal)")
        kind = str(_argument(action, kinds.predefined) or "CONST")
        extent = self._action_extent(action, member, info)
        if kind == "DISCRETE":
            return self._discrete_loads(action, member, mid, load, extent, R, factor, "local" if local else "global",
                                        src)
        samples = self._curve_samples(action, load, kind, extent, configuration)
        out = []
        axes_name = "local" if local else "global"
        for (s0, v0), (s1, v1) in zip(samples[:-1], samples[1:]):
            if s1 - s0 <= 1e-12 * max(L, 1.0):
                continue
            if v0 is v1:  # a constant piece: the same vector, turned and factored, for every action with it
                key = (v0.tobytes(), factor, local)
                w0 = self._scaled_forces.get(key)
                if w0 is None:
                    w0 = self._scaled_forces[key] = (R @ v0 * factor).tolist()
                w1 = w0
            else:
                w0, w1 = (R @ v0 * factor).tolist(), (R @ v1 * factor).tolist()
            for k, a in enumerate("xyz"):
                if w0[k] or w1[k]:
                    out.append(LineLoad(mid, a, w0[k], w1[k], start=float(max(s0, 0.0)), end=float(min(s1, L)),
                                        axes=axes_name, projected=projected, source=src))
        return out

    def _load_class(self, load: Entity) -> tuple[bool, bool]:
        """(a temperature load, a load configuration) for a load's class, found once per class."""
        cls = load.is_a()
        found = self._load_classes.get(cls)
        if found is None:
            found = self._load_classes[cls] = (bool(load.is_a("IfcStructuralLoadTemperature")),
                                               bool(load.is_a("IfcStructuralLoadConfiguration")))
        return found

    def _temperature(self, action: Entity, mid: str, load: Entity, factor: float, src: str) -> TemperatureLoad:
        """A uniform temperature change of the whole member (IfcStructuralLoadTemperature.DeltaTConstant)."""
        names = ("DeltaT_Constant", "DeltaT_Y", "DeltaT_Z") if self.is2x3 else ("DeltaTConstant", "DeltaTY", "DeltaTZ")
        for name in names[1:]:
            if float(_unwrap(getattr(load, name, None)) or 0.0):
                raise self.fail(action, f"temperature difference across the section ({name}) is not supported: "
                                        f"only a uniform temperature change ({names[0]})")
        delta = float(_unwrap(getattr(load, names[0], None)) or 0.0) * self.s.temperature_difference
        self._heated.add(mid)
        return TemperatureLoad(mid, delta * factor, source=src)

    def _thermal_coefficients(self) -> None:
        """The coefficient of thermal expansion of every member a temperature change acts on (noted)."""
        from .materials import thermal_expansion

        if not self._heated:
            return
        by_id = {mid: eid for eid, mid in self.member_ids.items()}
        used: dict[str, int] = {}
        for mid in sorted(self._heated):
            found = thermal_expansion(self.f, self.f.by_id(by_id[mid]), self.s.temperature_difference)
            if found is None:
                continue  # the frame's check names the member and its material
            self.builder.thermal_expansion(mid, found[0])
            key = f"{found[0]:.3g}/K from the {found[1]}"
            used[key] = used.get(key, 0) + 1
        if used:
            self.notes.append("Thermal expansion of the members under temperature changes: "
                              + "; ".join(f"{k}: {n} member{'s' if n != 1 else ''}" for k, n in used.items()))

    def _point_loads(self, mid: str, load: Entity, pos: float, R: Mat, factor: float, axes_name: str,
                     src: str) -> list[PointLoad | LineLoad]:
        """The point loads of an IfcStructuralLoadSingleForce at ``pos`` (m from end i) of member ``mid``."""
        F = R @ np.array([float(getattr(load, f"Force{a}", None) or 0.0) for a in "XYZ"]) * self.s.force * factor
        M = R @ np.array([float(getattr(load, f"Moment{a}", None) or 0.0) for a in "XYZ"]) * factor
        M = M * self.s.moment if M.any() else M
        out: list[PointLoad | LineLoad] = []
        for k, a in enumerate("xyz"):
            if F[k]:
                out.append(PointLoad(mid, a, float(F[k]), pos, axes=axes_name, source=src))
            if M[k]:
                out.append(PointLoad(mid, a, float(M[k]), pos, axes=axes_name, moment=True, source=src))
        return out

    def _discrete_loads(self, action: Entity, member: Entity, mid: str, load: Entity, extent: tuple[float, float],
                        R: Mat, factor: float, axes_name: str, src: str) -> list[PointLoad | LineLoad]:
        """A DISCRETE curve action: the single forces of its IfcStructuralLoadConfiguration at its locations
        (measured along the action from its start), each a point load on the member."""
        if not load.is_a("IfcStructuralLoadConfiguration"):
            raise self.fail(action, "DISCRETE curve action whose load is not an IfcStructuralLoadConfiguration "
                                    "(IFC: discrete load points at given locations)")
        values = list(load.Values or ())
        locations = list(load.Locations or ())
        if not values or len(locations) != len(values):
            raise self.fail(action, "DISCRETE curve action: its load configuration needs one location per value "
                                    f"(has {len(values)} values, {len(locations)} locations)")
        if not all(v.is_a("IfcStructuralLoadSingleForce") for v in values):
            kinds = ", ".join(sorted({v.is_a() for v in values}))
            raise self.fail(action, f"DISCRETE curve action with {kinds} values: discrete load points are "
                                    "IfcStructuralLoadSingleForce")
        a, b = extent
        span = abs(b - a)
        out: list[PointLoad | LineLoad] = []
        for value, loc in zip(values, locations):
            d = float(_as_list(loc)[0]) * self.s.length
            if d < -1e-9 * max(span, 1.0) or d > span * (1 + 1e-9) + 1e-12:
                raise self.fail(action, f"DISCRETE curve action: location {d:.6g} m lies beyond the action's "
                                        f"extent on {entity_label(member)} ({span:.6g} m)")
            pos = min(max(a - d if b < a else a + d, 0.0), max(a, b))
            out += self._point_loads(mid, value, pos, R, factor, axes_name, src)
        return out

    def _action_kind(self, action: Entity) -> _ActionKind:
        """What `_member_action` asks of an action's class, found once per class."""
        cls = action.is_a()
        found = self._action_kinds.get(cls)
        if found is None:
            found = self._action_kinds[cls] = _ActionKind(
                point=bool(action.is_a("IfcStructuralPointAction")),
                curve=bool(action.is_a("IfcStructuralCurveAction") or action.is_a("IfcStructuralLinearAction")),
                varying=bool(action.is_a("IfcStructuralLinearActionVarying")),
                projected=_attribute_index(self.f, cls, "ProjectedOrTrue"),
                predefined=_attribute_index(self.f, cls, "PredefinedType"))
        return found

    def _linear_force(self, action: Entity, value: Entity) -> Vec3:
        """SI linear-force vector of an IfcStructuralLoadLinearForce (cached per load; do not modify)."""
        found = self._line_forces.get(value.id())
        if found is not None:
            return found
        if not value.is_a("IfcStructuralLoadLinearForce"):
            raise self.fail(action, f"curve action with {value.is_a()} is not supported (linear forces only)")
        moments = [float(getattr(value, f"LinearMoment{a}", None) or 0.0) for a in "XYZ"]
        if any(moments):
            raise self.fail(action, "distributed moments (LinearMomentX/Y/Z) are not supported")
        found = np.array([float(getattr(value, f"LinearForce{a}", None) or 0.0) for a in "XYZ"]) * self.s.linear_force
        self._line_forces[value.id()] = found
        return found

    def _action_extent(self, action, member, info) -> tuple[float, float]:
        """Start and end (m from end i) of a curve action: the whole member, or its own edge."""
        L = info["length"]
        found = self._edge_of(action)
        if found is None:
            return 0.0, L
        _, v0, v1 = found
        pts = [self.world_point(action, v.VertexGeometry.Coordinates) for v in (v0, v1)]
        s = [float(np.dot(p - info["start"], info["axes"][0])) for p in pts]
        if min(s) < -1e-6 * L or max(s) > L * (1 + 1e-6):
            raise self.fail(action, f"curve action extends beyond {entity_label(member)}")
        return min(max(s[0], 0.0), L), min(max(s[1], 0.0), L)

    def _curve_samples(self, action, load, kind: str, extent, configuration: bool) -> list:
        """(position m from end i, SI linear-force vector in the load's axes) samples, ascending.

        ``configuration``: whether ``load`` is an IfcStructuralLoadConfiguration (`_load_class`).
        """
        a, b = extent
        reverse = b < a
        if configuration:
            values = list(load.Values or ())
            locations = list(load.Locations or ())
            if kind in ("SINUS", "PARABOLA", "CONST"):
                raise self.fail(action, f"{kind} curve action with an IfcStructuralLoadConfiguration (not valid IFC)")
            if len(values) < 2:
                raise self.fail(action, "load configuration with fewer than two values")
            if locations and len(locations) != len(values):
                raise self.fail(action, "load configuration with as many locations as values required (ValidListSize)")
            if not locations:
                locs = np.linspace(0.0, abs(b - a), len(values))
            else:
                locs = np.array([float(_as_list(loc)[0]) for loc in locations]) * self.s.length
            if np.any(np.diff(locs) < 0):
                raise self.fail(action, "load configuration locations are not in ascending order")
            vecs = [self._linear_force(action, v) for v in values]
            pos = (a - locs) if reverse else (a + locs)
            pairs = list(zip(pos.tolist(), vecs))
            return sorted(pairs, key=lambda t: t[0])
        v = self._linear_force(action, load)
        lo, hi = min(a, b), max(a, b)
        if kind in ("SINUS", "PARABOLA"):
            self.warn(action, f"{kind} distribution approximated by {_CURVE_SEGMENTS} linear pieces")
            t = np.linspace(0.0, 1.0, _CURVE_SEGMENTS + 1)
            shape = np.sin(np.pi * t) if kind == "SINUS" else 4.0 * t * (1.0 - t)
            return [(lo + ti * (hi - lo), v * si) for ti, si in zip(t, shape)]
        if kind not in ("CONST", "NOTDEFINED", "USERDEFINED"):
            raise self.fail(action, f"{kind} curve action needs an IfcStructuralLoadConfiguration")
        if kind != "CONST" and not self.is2x3:
            self.warn(action, f"PredefinedType {kind} with a single load value: read as constant", "info")
        return [(lo, v), (hi, v)]
