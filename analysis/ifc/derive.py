"""Route 2 of the IFC reader: an analytical frame derived from physical elements only.

`derive_frame` turns the ``IfcBeam``, ``IfcColumn`` and ``IfcMember``
elements of a file (with their standard-case subtypes and their type objects)
into a `Frame`, for files that carry no structural analysis model.

What is derived, and by which rule (each rule is also reported in the notes)
-----------------------------------------------------------------------------
Selection
    `analysis.ifc.selection`: by default the beams, columns and members
    whose ``LoadBearing`` (``Pset_BeamCommon``/``ColumnCommon``/
    ``MemberCommon``, occurrence or type) is not false, less the
    predefined types that are not frame members (``MULLION``,
    ``STRINGER``, ``STIFFENING_RIB`` members, ``CORNICE`` beams,
    ``PILASTER`` columns) and the parts of railings, stairs, ramps, curtain
    walls, windows, doors, shading devices and furniture; ``select`` /
    ``exclude`` selector queries say otherwise.
Left out, not aborted
    A selected element that cannot become a member (no usable axis or
    body, zero length or shorter than the tolerance, an exact duplicate of
    another element) and every element of a group of members that touches
    no supported node are left out: each is reported (entity, GlobalId,
    reason) in the diagnostics and counted in the notes. With ``strict``
    they are one error naming every one of them.
Axis
    From the element's ``Axis`` representation (an ``IfcPolyline``,
    ``IfcIndexedPolyCurve`` or a trimmed ``IfcLine``: its first and last
    points), else from its ``Body``: the first ``IfcExtrudedAreaSolid`` found
    (through ``IfcMappedItem`` and the first operand of boolean results),
    along its ``ExtrudedDirection`` in its ``Position``, ``Depth`` long.
    Both go to world coordinates through the placement chain
    (`analysis.ifc.placement`).
    Any other body (``IfcFacetedBrep``, ``IfcTriangulatedFaceSet``,
    ``IfcPolygonalFaceSet``, mapped items and booleans of those, ...) goes
    through the geometry kernel in one pass (`analysis.ifc.bodies`): the
    axis is the body's principal direction through the centroid of its
    section at mid-length, from end to end of the body; an ``Axis`` curve
    along it keeps its ends, moved onto that centroid line. An axis (curve
    or extrusion) shorter than its section depth is suspect (a body
    extruded across the member): it is reported and the body's principal
    direction is used instead.
Centroid line
    The analytical axis is the line of the profile's centroid. The body is
    already placed around the axis by the profile usage's ``CardinalPoint``,
    so a line read from the body runs through the extruded profile's
    centroid. The ``Axis`` curve runs through the cardinal point, so it is
    shifted by (centroid - cardinal point) in the profile plane. Cardinal
    points (IFC ``IfcCardinalPointReference``): 1-9 the corners, edge
    mid-points and centre of the profile's bounding box (bottom/mid/top
    along the profile y axis; "left" is the profile's +x side, as the
    profile is seen looking along the extrusion), 10 the centroid, 11-14
    bounding-box edges in line with the centroid, 15-19 the shear centre
    (taken at the centroid, with a note, for profiles that are not doubly
    symmetric).
Local axes
    Member x from the axis start to its end; member local z along the
    profile's y axis (profile x, y = local y, z of the analytical member, so
    a physical beam extruded along its local z has analytical x, y, z =
    element z, x, y); ``Frame.ref`` holds that direction. A profile with a
    product of inertia (L, Z shapes) is turned to its principal axes with
    ``Frame.roll``.
Nodes
    End points closer than ``merge_tolerance`` merge into one node (placed
    at a column end where one takes part, so column lines stay straight).
    A member is split where another member's end lands on its span
    (perpendicular distance within the tolerance). An end that touches
    nothing but lies within the joint's snap distance of another member's
    node or centre line is snapped to that node (or to a node on that
    centre line) and keeps its true position through a rigid offset
    (``Frame.offsets``); each such end is reported. The snap distance
    follows the sections meeting there: half the sum of the two members'
    section sizes (bounding-box depth or width; the distance at which
    their faces touch, so never less than half the larger depth), plus the
    tolerance. A beam stopping at a column face, a brace stopping at a
    gusset plate on a chord, a joist resting on a wall plate below it
    reach the axis they frame into. Ends of several members landing
    within the tolerance of one point of a centre line (beams framing into
    a column from both sides) share one node there. Two members whose spans
    cross within touching distance (half the sum of their sizes plus the
    tolerance; purlins on rafters, a plate on joists, X-braces) are joined
    there: one node where the centre lines meet, or a node on the lower
    member's line that the upper member (split there too) reaches through
    a rigid offset; each such crossing is reported.
Members on one line
    Two or more elements that end up joining the same two nodes
    (back-to-back angles, double studs, paired mullions, twin stringers)
    become one analytical member with the summed section: E·A, E·I and
    G·J added (no composite action is assumed; a stiffer built-up section
    needs its own profile in the file), the density weighted so the weight
    is the sum of theirs, the axis on their stiffness-weighted mean line
    through the end offsets; each merge is reported. Elements of the same
    class and section whose ends coincide within 1 mm (or the tolerance,
    if smaller) are the same element twice: the second is left out as a
    duplicate.
Supports
    ``support_level`` (m) given: every node at that level, 'fixed' unless
    ``defaults.support == 'pinned'``. ``supports`` (selector queries with
    'fixed' or 'pinned') given: the lowest end(s) of each frame element the
    query finds, and every member end bearing on any other element it finds.
    Otherwise, the documented default: (a) every node at the lowest column
    bottom ('fixed' unless ``defaults.support``); (b) every member end
    bearing on an ``IfcWall``, ``IfcSlab``, ``IfcFooting`` or ``IfcPile``
    below it — the underside of its section (half its vertical extent below
    the centroid) within the tolerance of an upward-facing face of that
    element's body (``ifcopenshell.geom``), or the end built into the body
    of a wall, footing or pile (a beam in a wall pocket; a beam or member
    inside a slab's body, a rafter in a roof build-up, is not held by it,
    a column foot cast into a slab is) — or a column connected to a
    footing by ``IfcRelConnectsElements``: column bottoms as in (a), beam
    and member ends pinned; a wall or slab that itself rests on other frame
    members (a deck on beams, a wall on a transfer beam: a downward face of
    its body on their sections' tops) hands its load on to them and is no
    support, unless it also rests on a wall, footing or pile (a floor slab on
    beams and walls); beams and members that are no steeper than 45 degrees also bear
    along their spans on walls, footings and piles (sampled every 20 mm): a
    contact up to 1 m long (or four section sizes) inside the span is one
    pinned bearing at its middle (a rafter over a wall, a ridge beam on a
    gable wall), a longer one (a wall plate on a wall) is pinned at both of
    its ends and at every node of the member within it, the member split
    there; (c) when (a) and (b) find nothing (a roof grid,
    a truss or a deck without bearings in the file), the nodes at the
    model's lowest elevation, pinned. Which rule supported how many nodes
    is reported.
End releases
    The file's declared connections come first:
    ``IfcRelConnectsWithRealizingElements.ConnectionType`` labels meaning a
    pin ("pin", "hinge", "simple", "shear", "flexible") or a rigid joint
    ("rigid", "fixed", "moment", "welded", "continuous") set the end of the
    related element (or the relating one, whichever ends there). Otherwise
    the documented defaults: beam to column rigid (``defaults.beam_column``
    'rigid' | 'pinned'); a beam end framing into another beam's span with
    no column there pinned, My and Mz released (``defaults.secondary_beams``
    'pinned' | 'rigid'). ``IfcMember`` elements (``defaults.members``
    'auto' | 'truss' | 'frame', default 'auto'): with 'auto', a member is a
    pin-ended axial bar (truss) when it is a diagonal between two joints: both
    ends meet another element or a support, nothing lands on its span, and
    no other element continues it in line at either end; a member of a
    framing type (``STUD``, ``PLATE``, ``POST``, ``PURLIN``, ``RAFTER``,
    ``COLLAR``, ``CHORD``, ``MULLION``, ``STRINGER``, ``ARCH_SEGMENT`` or a
    user-defined type naming a joist, stud, plate, rafter, purlin, post,
    transom, girt or nogging), and every other member, is a frame member with
    rigid ends. The choice and its reason are reported per element.
Sections and materials
    Through `analysis.ifc.materials` and `analysis.ifc.sections` (a body's
    swept profile when the element has no profile usage), converted with
    `analysis.units`. A body that is not an extrusion and has no profile
    usage gives its section from the cut at mid-length (A, principal
    second moments, J and shear areas: `analysis.ifc.polygon_section`;
    source "body geometry"); local z is its strong principal axis.
Loads
    Load case "Self-weight" (acceleration (0, 0, -1) g) when the materials
    have a density. Area loads only from the user's table ``area_loads``:
    rows (storey name or elevation in m, load case name, pressure in Pa,
    acting downwards) spread over the horizontal ``IfcBeam`` segments of
    that floor (centre line within half the section depth plus the
    tolerance of the level) as one-way slabs: the slab spans between the
    beams of the direction whose beams lie closer together, and each of
    those beams carries the strip halfway to its nearest overlapping
    parallel neighbour on either side (an edge beam only the inner half).
    No load value and no combination is invented; structural load groups
    in a file without an analysis model are ignored with a note.
Ids
    Member ids are the element ``Name`` when it is unique among the
    elements read, else the ``GlobalId``; split members get "<id>/1",
    "<id>/2", ...; ``member_sources`` hold GlobalIds and ``member_labels``
    the entity labels. Nodes are "N1", "N2", ... sorted by z, then y, then x.
"""
from __future__ import annotations

import logging
import math
from collections import Counter, defaultdict
from collections.abc import Hashable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import numpy.typing as npt

from ..errors import Diagnostic, IfcInputError, PlacementError, entity_label
from ..model import Frame, LineLoad, LoadCase
from .placement import PlacementCache, axis_placement_matrix, transformation_operator_matrix
from .selection import LeftOut, left_out_message, parse_supports, reason_kind, select_frame_elements

__all__ = ["derive_frame", "derive_frame_details", "Derivation", "ELEMENT_TYPES", "CONNECTION_WORDS"]

logger = logging.getLogger(__name__)

FloatArray = npt.NDArray[np.float64]

#: IFC classes read as linear structural elements (subtypes included).
ELEMENT_TYPES = ("IfcColumn", "IfcBeam", "IfcMember")
_KIND = {"IfcColumn": "column", "IfcBeam": "beam", "IfcMember": "member"}
_PRIORITY = {"column": 0, "beam": 1, "member": 2}

#: words in a declared connection type and the fixity they mean (checked in this order).
CONNECTION_WORDS = (
    ("semi", None),
    ("pin", "pinned"), ("hinge", "pinned"), ("simple", "pinned"), ("shear", "pinned"),
    ("flexible", "pinned"), ("articulated", "pinned"),
    ("rigid", "rigid"), ("fixed", "rigid"), ("moment", "rigid"), ("welded", "rigid"), ("continuous", "rigid"),
)

_LIST_LIMIT = 40  # names listed in one note before "and N more"
_SAME_PLACE = 0.001  # m: two elements of one class and section whose ends are this close are one element twice
_SEAT = 1.0  # m: a contact along a span up to this long (or four section sizes) is one bearing point
_SPAN_STEP = 0.02  # m: sample spacing along spans when looking for bearing
_STEEPEST_SPAN_BEARING = math.sin(math.radians(45.0))  # members steeper than this bear only at their ends


# --------------------------------------------------------------------------- options
def _option(defaults: Any, name: str, fallback: Any, allowed: Sequence[str] | None = None) -> Any:
    if defaults is None:
        value = None
    elif isinstance(defaults, Mapping):
        value = defaults.get(name)
    else:
        value = getattr(defaults, name, None)
    if value is None:
        return fallback
    if allowed is not None and value not in allowed:
        raise ValueError(f"defaults.{name} = {value!r} is not one of {', '.join(allowed)}")
    return value


class _MaterialDefaults:
    """Adapter giving element_material attribute access to dict-like defaults."""

    def __init__(self, defaults: Any) -> None:
        self._d = defaults

    def __getattr__(self, name: str) -> Any:
        return _option(self._d, name, None)


def _names(items: Sequence[str]) -> str:
    items = list(items)
    if len(items) <= _LIST_LIMIT:
        return ", ".join(items)
    return ", ".join(items[:_LIST_LIMIT]) + f" and {len(items) - _LIST_LIMIT} more"


# --------------------------------------------------------------------------- geometry reading
@dataclass(slots=True)
class _Element:
    entity: Any
    eid: int
    cls: str
    kind: str
    name: str
    gid: str
    label: str
    placement: Any
    p0: FloatArray | None = None  # local centroid-line ends (file units), after cardinal shift
    p1: FloatArray | None = None
    yaxis: FloatArray | None = None  # local profile y direction (None: default orientation)
    source: str = ""
    profile: Any = None
    cardinal: int | None = None
    usage: Any = None
    body_profile: Any = None
    axis_raw: tuple | None = None  # (p0, p1, plane (3,3) or None) from 'Axis'
    body: tuple | None = None  # (M (4,4) local, depth vector, profile)
    shape: Any = None  # analysis.ifc.bodies.BodyAxis when the line or section comes from the body's geometry
    shape_line: tuple | None = None  # (p0, p1, z or None) of `shape` in element coordinates, file units
    note: str = ""
    left_out: str | None = None  # the reason, once `_Deriver._leave_out` has set it aside


def _floats(values: Iterable[float]) -> npt.NDArray[np.float64]:
    return np.fromiter(values, dtype=np.float64)


def _curve_end_points(curve) -> tuple[np.ndarray, np.ndarray] | None:
    """First and last point of an axis curve (file units, representation coordinates)."""
    kind = curve.is_a()
    if kind == "IfcPolyline":
        pts = curve.get_argument(0)
        if len(pts) < 2:
            return None
        a, b = pts[0].get_argument(0), pts[-1].get_argument(0)
    elif kind == "IfcIndexedPolyCurve":
        coords = curve.get_argument(0).get_argument(0)
        segments = curve.get_argument(1)
        if segments:
            first = segments[0].wrappedValue if hasattr(segments[0], "wrappedValue") else segments[0][0]
            last = segments[-1].wrappedValue if hasattr(segments[-1], "wrappedValue") else segments[-1][0]
            a, b = coords[first[0] - 1], coords[last[-1] - 1]
        else:
            if len(coords) < 2:
                return None
            a, b = coords[0], coords[-1]
    elif kind == "IfcTrimmedCurve" and curve.BasisCurve.is_a("IfcLine"):
        line = curve.BasisCurve
        origin = np.array(line.Pnt.Coordinates, dtype=float)
        vec = line.Dir
        d = np.array(vec.Orientation.DirectionRatios, dtype=float)
        d = d / np.linalg.norm(d) * float(vec.Magnitude)
        ends = []
        for trims in (curve.Trim1, curve.Trim2):
            point = next((t for t in trims if hasattr(t, "is_a") and t.is_a("IfcCartesianPoint")), None)
            if point is not None:
                ends.append(np.array(point.Coordinates, dtype=float))
            else:
                trim = next((t for t in trims if not hasattr(t, "is_a") or not t.is_a("IfcCartesianPoint")), None)
                value: Any = getattr(trim, "wrappedValue", trim)  # an IfcParameterValue
                par = float(value)
                ends.append(origin + par * d)
        a, b = ends
        if not curve.SenseAgreement:
            a, b = b, a
    elif kind == "IfcCompositeCurve" and curve.Segments:
        first = _curve_end_points(curve.Segments[0].ParentCurve)
        last = _curve_end_points(curve.Segments[-1].ParentCurve)
        if first is None or last is None:
            return None
        return first[0], last[1]
    else:
        return None
    a = np.array(tuple(a) + (0.0,) * (3 - len(a)), dtype=float)
    b = np.array(tuple(b) + (0.0,) * (3 - len(b)), dtype=float)
    return a, b


def _first_extrusion(item, M: np.ndarray, notes: list[str]):
    """(item-to-element matrix, extrusion) of the first extruded solid inside ``item``, or None."""
    kind = item.is_a()
    if kind in ("IfcExtrudedAreaSolid", "IfcExtrudedAreaSolidTapered"):
        return M, item
    if kind == "IfcMappedItem":
        source, target = item.get_argument(0), item.get_argument(1)
        origin = axis_placement_matrix(source.get_argument(0))
        Mt = M @ transformation_operator_matrix(target) @ origin
        notes.append("mapped representation")
        for sub in source.get_argument(1).get_argument(3):
            found = _first_extrusion(sub, Mt, notes)
            if found is not None:
                return found
        return None
    if kind in ("IfcBooleanClippingResult", "IfcBooleanResult"):
        notes.append(f"first operand of {kind}")
        first = item.get_argument(1)
        return _first_extrusion(first, M, notes) if hasattr(first, "is_a") else None
    return None


def _read_representation(el: _Element) -> str | None:
    """Fill ``el.axis_raw``/``el.body`` from the element's representations; returns the body's class if unusable."""
    shape = el.entity.get_argument(6)
    if shape is None:
        return None
    axis_rep = body_rep = None
    for rep in shape.get_argument(2):
        ident = rep.get_argument(1)
        if ident == "Axis" and axis_rep is None:
            axis_rep = rep
        elif ident == "Body" and body_rep is None:
            body_rep = rep
    unusable = None
    if body_rep is not None:
        notes: list[str] = []
        for item in body_rep.get_argument(3):
            found = _first_extrusion(item, _EYE4, notes)
            if found is not None:
                M, solid = found
                pos = solid.get_argument(1)
                if pos is not None:
                    M = M @ axis_placement_matrix(pos)
                dx, dy, dz = solid.get_argument(2).get_argument(0)
                scale = float(solid.get_argument(3)) / math.sqrt(dx * dx + dy * dy + dz * dz)
                el.body = (M, np.array((dx * scale, dy * scale, dz * scale)), solid.get_argument(0))
                el.body_profile = solid.get_argument(0)
                if notes:
                    el.note = "body read from the " + " and ".join(dict.fromkeys(notes)) + " (first extrusion taken)"
                break
        else:
            items = body_rep.get_argument(3)
            unusable = items[0].is_a() if items else "an empty body"
    if axis_rep is not None:
        for item in axis_rep.get_argument(3):
            ends = _curve_end_points(item)
            if ends is not None:
                el.axis_raw = ends
                break
    return unusable


# --------------------------------------------------------------------------- sections
@dataclass(slots=True)
class _SectionInfo:
    name: str
    A: float
    Iy: float
    Iz: float
    J: float
    Avy: float
    Avz: float
    roll: float
    centroid: np.ndarray  # (2,) profile underlying coords, file units
    box: tuple[float, float, float, float]  # xmin, xmax, ymin, ymax (file units)
    symmetric: bool
    size: float  # largest bounding-box dimension, m
    source: str = "file"  # where the values came from (Frame.section_sources: 'file', 'default', 'body geometry')


def _profile_box(profile, props) -> tuple[tuple[float, float, float, float], bool]:
    """Bounding box of a profile in its underlying coordinates (file units) and whether it is exact."""
    def g(*names: str) -> float | None:
        return next((float(getattr(profile, n)) for n in names if hasattr(profile, n) and getattr(profile, n) is not None), None)

    def need(*names: str) -> float:  # section_properties has already checked these dimensions
        v = g(*names)
        if v is None:
            raise TypeError(f"{names[0]} is missing")
        return v

    kind = profile.is_a()
    w = d = None
    if kind in ("IfcIShapeProfileDef",):
        w, d = g("OverallWidth"), g("OverallDepth")
    elif kind == "IfcAsymmetricIShapeProfileDef":
        w = max(g("BottomFlangeWidth", "OverallWidth") or 0.0, g("TopFlangeWidth") or 0.0)
        d = g("OverallDepth")
    elif kind in ("IfcRectangleProfileDef", "IfcRoundedRectangleProfileDef", "IfcRectangleHollowProfileDef"):
        w, d = g("XDim"), g("YDim")
    elif kind in ("IfcCircleProfileDef", "IfcCircleHollowProfileDef"):
        w = d = 2.0 * need("Radius")
    elif kind == "IfcEllipseProfileDef":
        w, d = 2.0 * need("SemiAxis1"), 2.0 * need("SemiAxis2")
    elif kind == "IfcLShapeProfileDef":
        d = g("Depth")
        w = g("Width") or d
    elif kind in ("IfcUShapeProfileDef", "IfcTShapeProfileDef"):
        w, d = g("FlangeWidth"), g("Depth")
    elif kind == "IfcCShapeProfileDef":
        w, d = g("Width"), g("Depth")
    elif kind == "IfcZShapeProfileDef":
        w, d = 2.0 * need("FlangeWidth") - need("WebThickness"), g("Depth")
    elif kind == "IfcTrapeziumProfileDef":
        bx, tx, off = need("BottomXDim"), need("TopXDim"), g("TopXOffset") or 0.0
        lo, hi = min(0.0, off), max(bx, off + tx)
        w, d = hi - lo, g("YDim")
    if w is not None and d is not None:
        corners = np.array([[-w / 2, -d / 2], [w / 2, -d / 2], [w / 2, d / 2], [-w / 2, d / 2]])
        position = getattr(profile, "Position", None)
        if position is not None:  # the profile's own 2D placement
            M = axis_placement_matrix(position)
            corners = corners @ M[:2, :2].T + M[:2, 3]
        return (corners[:, 0].min(), corners[:, 0].max(), corners[:, 1].min(), corners[:, 1].max()), True
    if kind == "IfcArbitraryClosedProfileDef" or kind == "IfcArbitraryProfileDefWithVoids":
        curve = profile.OuterCurve
        pts = None
        if curve.is_a("IfcPolyline"):
            pts = np.array([p.Coordinates[:2] for p in curve.Points], dtype=float)
        elif curve.is_a("IfcIndexedPolyCurve"):
            pts = np.array([c[:2] for c in curve.Points.CoordList], dtype=float)
        if pts is not None and len(pts):
            return (pts[:, 0].min(), pts[:, 0].max(), pts[:, 1].min(), pts[:, 1].max()), True
    # unknown extent: a square box around the centroid from the radius of gyration
    r = math.sqrt(3.0 * max(props.Iy, props.Iz) / props.A) if props.A > 0 else 0.0
    return (props.cy - r, props.cy + r, props.cz - r, props.cz + r), False


def _section_info(ifc_file, profile, usage, scales, label: str, eid: int) -> _SectionInfo:
    from ..units import section_to_si
    from .materials import profile_mechanical_values
    from .sections import PSET_FIELD_UNITS, section_from_pset, section_properties

    try:
        props = section_properties(profile, angle_scale=scales.angle)
    except IfcInputError as exc:
        raise IfcInputError(f"{label}: profile {exc}", eid) from None
    box, _exact = _profile_box(profile, props)
    si = section_to_si(props, scales.length)
    overrides = section_from_pset(profile_mechanical_values(ifc_file, profile, usage))
    if overrides:
        si = replace(si, **{k: v * getattr(scales, PSET_FIELD_UNITS[k]) for k, v in overrides.items()})
    Iy, Iz, Iyz, roll = si.Iy, si.Iz, si.Iyz, 0.0
    if abs(Iyz) > 1e-9 * (Iy + Iz):  # principal axes (Mohr's circle, common practice, no source)
        roll = 0.5 * math.atan2(-2.0 * Iyz, Iy - Iz)
        c2, s2 = math.cos(2 * roll), math.sin(2 * roll)
        Iy_p = 0.5 * (Iy + Iz) + 0.5 * (Iy - Iz) * c2 - Iyz * s2
        Iy, Iz = Iy_p, Iy + Iz - Iy_p
    symmetric = abs(props.cy - 0.5 * (box[0] + box[1])) < 1e-9 * max(1.0, box[1] - box[0]) and \
        abs(props.cz - 0.5 * (box[2] + box[3])) < 1e-9 * max(1.0, box[3] - box[2])
    name = str(si.name or getattr(profile, "ProfileName", None) or f"#{profile.id()}")
    size = max(box[1] - box[0], box[3] - box[2]) * scales.length
    return _SectionInfo(name, si.A, Iy, Iz, si.J, si.Avy, si.Avz, roll, np.array([props.cy, props.cz]), box,
                        symmetric, size)


def _cardinal_point(sec: _SectionInfo, cp: int | None) -> tuple[np.ndarray, str | None]:
    """Position of a cardinal point in profile coordinates, and a note when approximated."""
    if cp is None or cp == 10:
        return sec.centroid, None
    xmin, xmax, ymin, ymax = sec.box
    cx, cy = sec.centroid
    left, right, mid_x = xmax, xmin, 0.5 * (xmin + xmax)  # "left" is the profile's +x side
    bottom, top, mid_y = ymin, ymax, 0.5 * (ymin + ymax)
    table = {
        1: (left, bottom), 2: (mid_x, bottom), 3: (right, bottom),
        4: (left, mid_y), 5: (mid_x, mid_y), 6: (right, mid_y),
        7: (left, top), 8: (mid_x, top), 9: (right, top),
        11: (cx, bottom), 12: (left, cy), 13: (right, cy), 14: (cx, top),
        15: (cx, cy), 16: (cx, bottom), 17: (left, cy), 18: (right, cy), 19: (cx, top),
    }
    if cp not in table:
        return sec.centroid, f"cardinal point {cp} is not one IFC defines; the centroid is used"
    note = None
    if cp >= 15 and not sec.symmetric:
        note = f"cardinal point {cp} (shear centre) taken at the centroid"
    return np.array(table[cp], dtype=float), note


# --------------------------------------------------------------------------- topology helpers
def _union_find_clusters(n: int, pairs: np.ndarray) -> np.ndarray:
    from scipy.sparse import coo_array
    from scipy.sparse.csgraph import connected_components

    if len(pairs) == 0:
        return np.arange(n)
    g = coo_array((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    _, labels = connected_components(g, directed=False)
    return labels


def _points_near_segments(tree, A: np.ndarray, B: np.ndarray, radius: np.ndarray, pts: np.ndarray):
    """Candidate (segment, point) pairs with perpendicular distance and parameter.

    Returns arrays ``seg, pt, t, dist`` for every point within ``radius`` of
    the segment's supporting line and with projection inside ``[0, 1]``.
    """
    mid = 0.5 * (A + B)
    L = np.linalg.norm(B - A, axis=1)
    lists = tree.query_ball_point(mid, r=0.5 * L + radius, return_sorted=False)
    counts = np.fromiter((len(x) for x in lists), dtype=np.int64, count=len(lists))
    if counts.sum() == 0:
        z = np.zeros(0, dtype=np.int64)
        return z, z, np.zeros(0), np.zeros(0)
    seg = np.repeat(np.arange(len(A)), counts)
    pt = np.fromiter((i for x in lists for i in x), dtype=np.int64, count=int(counts.sum()))
    d = B[seg] - A[seg]
    t = np.sum((pts[pt] - A[seg]) * d, axis=1) / np.maximum(L[seg] ** 2, 1e-300)
    foot = A[seg] + t[:, None] * d
    dist = np.linalg.norm(pts[pt] - foot, axis=1)
    keep = (t >= 0.0) & (t <= 1.0) & (dist <= radius[seg])
    return seg[keep], pt[keep], t[keep], dist[keep]


def _same_node_pairs(members: np.ndarray) -> list[list[int]]:
    """Groups (in segment order) of segments joining the same two nodes, either way round."""
    if len(members) < 2:
        return []
    keys = np.sort(members, axis=1)
    _, inverse, counts = np.unique(keys, axis=0, return_inverse=True, return_counts=True)
    inverse = inverse.ravel()
    if not (counts > 1).any():
        return []
    groups: dict[int, list[int]] = defaultdict(list)
    for s in np.flatnonzero(counts[inverse] > 1).tolist():
        groups[int(inverse[s])].append(s)
    return sorted(groups.values())


#: IfcMember predefined types (and words of user-defined types) that frame (rigid-ended) or brace (bars).
_FRAMING_TYPES = ("STUD", "PLATE", "POST", "PURLIN", "RAFTER", "COLLAR", "CHORD", "MULLION", "STRINGER",
                  "ARCH_SEGMENT", "STIFFENING_RIB")
_FRAMING_WORDS = ("joist", "stud", "plate", "rafter", "purlin", "post", "transom", "girt", "nogging", "noggin",
                  "chord", "mullion", "lintel", "header", "sill", "rail")
_BRACING_TYPES = ("BRACE", "STRUT", "TIEBAR", "SUSPENDER", "STAY_CABLE", "SUSPENSION_CABLE", "STRUCTURALCABLE")
_BRACING_WORDS = ("brace", "bracing", "strut", "diagonal", "tie")


def _member_role(entity) -> tuple[str, str] | None:
    """('frame' | 'bar', the type named) from an IfcMember's predefined type, or None when it says neither."""
    import ifcopenshell.util.element as ue

    try:
        pt = ue.get_predefined_type(entity)
    except Exception:  # no predefined type attribute and no type object
        return None
    if not pt:
        return None
    text = str(pt)
    up = text.upper()
    if up in _FRAMING_TYPES:
        return "frame", up
    if up in _BRACING_TYPES:
        return "bar", up
    low = text.lower()
    words = set("".join(ch if ch.isalpha() else " " for ch in low).split())
    if any(w in words or any(x.startswith(w) for x in words) for w in _FRAMING_WORDS):
        return "frame", repr(text)
    if any(w in words for w in _BRACING_WORDS):
        return "bar", repr(text)
    return None


def _connection_fixity(label: str | None) -> str | None:
    if not label:
        return None
    text = str(label).lower()
    for word, fixity in CONNECTION_WORDS:
        if word in text:
            return fixity
    return None


# --------------------------------------------------------------------------- main entry
@dataclass
class Derivation:
    """What `derive_frame_details` returns: the frame and everything said about deriving it."""

    frame: Frame
    diagnostics: list[Diagnostic]
    notes: list[str]
    left_out: list[LeftOut]


def derive_frame_details(ifc_file, *, scales=None, merge_tolerance: float = 0.01, support_level: float | None = None,
                         defaults: Any = None, area_loads: Sequence[tuple] | None = None, select: str | None = None,
                         exclude: str | None = None, supports: Sequence[str] = (), strict: bool = False,
                         members: str | None = None) -> Derivation:
    """`derive_frame`, also returning the elements left out (`analysis.ifc.selection.LeftOut`).

    ``select``/``exclude`` are selector queries (`analysis.ifc.selection`),
    ``supports`` a sequence of ``"QUERY[:fixed|pinned]"`` texts, ``strict``
    turns every element left out into one `IfcInputError` naming them all,
    ``members`` ('auto' | 'truss' | 'frame') overrides ``defaults.members``.
    The other parameters are those of `derive_frame`.
    """
    d = _Deriver(ifc_file, scales, merge_tolerance, support_level, defaults, area_loads,
                 select=select, exclude=exclude, support_queries=tuple(supports), strict=strict, members=members)
    frame, diagnostics, notes = d.run()
    return Derivation(frame, diagnostics, notes, list(d.left_out))


def derive_frame(ifc_file, *, scales=None, merge_tolerance: float = 0.01, support_level: float | None = None,
                 defaults: Any = None, area_loads: Sequence[tuple] | None = None, select: str | None = None,
                 exclude: str | None = None, supports: Sequence[str] = (), strict: bool = False,
                 members: str | None = None) -> tuple[Frame, list[Diagnostic], list[str]]:
    """Derive the analytical frame of a file's physical beams, columns and members.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
        An IFC2X3, IFC4 or IFC4X3 file.
    scales : analysis.units.UnitScales, optional
        The file's unit scales (default: `analysis.units.unit_scales` of the file).
    merge_tolerance : float
        Distance in m below which end points merge and ends count as landing
        on a member's span (default 10 mm).
    support_level : float, optional
        Elevation (m, world Z) of the supported nodes; default the lowest
        column bottom.
    defaults : mapping or object, optional
        ``support`` ('fixed' | 'pinned'), ``beam_column`` ('rigid' |
        'pinned'), ``secondary_beams`` ('pinned' | 'rigid'), ``members``
        ('auto' | 'truss' | 'frame'), the material defaults ``E``, ``G``,
        ``poisson``, ``density`` (SI) and ``section`` (a `Section`) used
        where the file gives none (e.g. `analysis.ifc.reader.ReaderDefaults`).
    area_loads : sequence of (storey, case, pressure), optional
        Storey name (or elevation in m), load case name and pressure in Pa
        (downwards) spread over that floor's beams (module docstring).
    select, exclude : str, optional
        Selector queries (ifcopenshell syntax) replacing the default
        selection / removing elements from it (`analysis.ifc.selection`).
    supports : sequence of str
        ``"QUERY[:fixed|pinned]"``: the elements whose lowest ends are
        supported (module docstring, Supports); replaces the default rule.
    strict : bool
        Every element left out (module docstring) is an error instead.
    members : str, optional
        'auto' | 'truss' | 'frame': the ``IfcMember`` idealisation (overrides
        ``defaults.members``; module docstring, End releases).

    Returns
    -------
    (Frame, list[Diagnostic], list[str])
        The frame in SI units, per-element findings (each element left out is
        a warning), and plain-language notes on what was derived and which
        defaults were applied.

    Raises
    ------
    IfcInputError
        No element can become a member; with ``strict`` any element left
        out; an element with an unknown profile or without material (and no
        default); an invalid selector query; an unknown storey in
        ``area_loads``. The message names the entity.
    """
    return _Deriver(ifc_file, scales, merge_tolerance, support_level, defaults, area_loads, select=select,
                    exclude=exclude, support_queries=tuple(supports), strict=strict, members=members).run()


_EYE4 = np.eye(4)
_EYE4.flags.writeable = False


@dataclass
class _Deriver:
    ifc_file: Any
    scales: Any
    tol: float
    support_level: float | None
    defaults: Any
    area_loads: Sequence[tuple] | None
    select: str | None = None
    exclude: str | None = None
    support_queries: tuple[str, ...] = ()
    strict: bool = False
    members: str | None = None
    diagnostics: list[Diagnostic] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    left_out: list[LeftOut] = field(default_factory=list)

    def __post_init__(self) -> None:
        if self.scales is None:
            from ..units import unit_scales

            self.scales = unit_scales(self.ifc_file)
        if not (self.tol >= 0 and math.isfinite(self.tol)):
            raise ValueError(f"merge_tolerance must be a finite number >= 0, got {self.tol!r}")
        self.support_kind = _option(self.defaults, "support", "fixed", ("fixed", "pinned"))
        self.beam_column = _option(self.defaults, "beam_column", "rigid", ("rigid", "pinned"))
        self.secondary = _option(self.defaults, "secondary_beams", "pinned", ("pinned", "rigid"))
        self.members_as = _option({"members": self.members} if self.members else self.defaults, "members", "auto",
                                  ("auto", "truss", "frame"))
        self.support_specs = [parse_supports(s, self.support_kind) for s in self.support_queries]
        self.placements = PlacementCache()
        self._card_cache: dict = {}
        self._rescue: set[int] = set()  # element ids of groups found loose: their joints may snap in the next pass
        self._profile_sizes: dict[int, float] = {}  # extruded profile id -> largest extent (file units)

    # ------------------------------------------------------------------ run
    def run(self) -> tuple[Frame, list[Diagnostic], list[str]]:
        elements = self._collect()
        if not elements:
            if self.select:
                raise IfcInputError(f"--select {self.select!r} finds no element to derive the frame from")
            raise IfcInputError("the file has no load-bearing IfcBeam, IfcColumn or IfcMember elements to derive the frame "
                                "from (and no structural analysis model)" + (f" ({self.notes[-1]})" if self.notes else "")
                                + "; to analyse elements anyway, name them with --select, e.g. --select "
                                "\"IfcBeam, IfcColumn, IfcMember\"")
        self._geometry(elements)
        elements = self._keep(elements)
        self._properties(elements)
        elements = self._keep(elements)
        frame = None
        while frame is None:
            if not elements:
                self._report_left_out()
                raise IfcInputError("no element can become a member of the analytical frame: "
                                    + "; ".join(str(x) for x in self.left_out[:_LIST_LIMIT])
                                    + (f" and {len(self.left_out) - _LIST_LIMIT} more" if len(self.left_out) > _LIST_LIMIT else ""),
                                    self.left_out[0].entity_id if self.left_out else None)
            mark = (len(self.notes), len(self.diagnostics))
            self._mid_tree = None
            frame = self._topology(elements)
            if frame is None:  # elements were left out: derive the topology again without them
                del self.notes[mark[0]:]
                del self.diagnostics[mark[1]:]
                elements = self._keep(elements)
        self._report_left_out()
        return frame, self.diagnostics, self.notes

    # ------------------------------------------------------------------ left out
    def _leave_out(self, el: _Element, reason: str) -> None:
        """Set ``el`` aside: it cannot become a member (``reason`` starts with its kind, e.g. "no usable body: …").

        Any step may call this; `run` drops the element (`_keep`) after the
        step, and `_report_left_out` reports it (or, with ``strict``, raises).
        """
        if el.left_out is None:
            el.left_out = reason
            self.left_out.append(LeftOut(el.eid, el.cls, el.name, el.gid, reason))

    def _keep(self, elements: list[_Element]) -> list[_Element]:
        """``elements`` without those left out, and the per-element arrays kept on self filtered alike."""
        mask = [el.left_out is None for el in elements]
        if all(mask):
            return elements
        keep = np.flatnonzero(mask)
        for attr in ("world", "truss"):
            value = getattr(self, attr, None)
            if value is not None and len(value) == len(elements):
                setattr(self, attr, value[keep])
        for attr in ("sec", "mat"):
            value = getattr(self, attr, None)
            if value is not None and len(value) == len(elements):
                setattr(self, attr, [value[k] for k in keep])
        return [el for el in elements if el.left_out is None]

    def _report_left_out(self) -> None:
        if not self.left_out:
            return
        if self.strict:
            first = self.left_out[0]
            raise IfcInputError(left_out_message(self.left_out), first.entity_id)
        kinds = Counter(reason_kind(x.reason) for x in self.left_out)
        self.notes.append(f"Left out of the analytical frame: {len(self.left_out)} elements ("
                          + ", ".join(f"{v} {k}" for k, v in sorted(kinds.items())) + "); each is listed in the warnings.")
        for x in self.left_out:
            self.diagnostics.append(Diagnostic("warning", x.entity_id, f"{x.label} ({x.global_id}): left out — {x.reason}"))

    # ------------------------------------------------------------------ elements
    def _collect(self) -> list[_Element]:
        f = self.ifc_file
        elements: list[_Element] = []
        chosen, notes = select_frame_elements(f, select=self.select, exclude=self.exclude)
        self.notes.extend(notes)
        seen: set[int] = set()
        for e in chosen:
            eid = e.id()
            seen.add(eid)
            cls = e.is_a()
            # IfcColumn and IfcPile stand (column), IfcMember (member), every other class is read as a beam
            kind = next((_KIND[b] for b in ELEMENT_TYPES if e.is_a(b)), "column" if e.is_a("IfcPile") else "beam")
            name = e.get_argument(2) or ""
            label = f"#{eid} {cls} '{name}'" if name else f"#{eid} {cls}"
            placement = getattr(e, "ObjectPlacement", None)
            elements.append(_Element(e, eid, cls, kind, name, e.get_argument(0), label, placement))
        elements.sort(key=lambda el: el.eid)
        if not elements:
            return elements
        # other physical elements are not read: say which
        try:
            others = Counter(e.is_a() for e in f.by_type("IfcElement")
                             if e.id() not in seen and not any(e.is_a(b) for b in ELEMENT_TYPES))
        except RuntimeError:  # schema without IfcElement: nothing to report
            others = Counter()
        skipped = {k: v for k, v in others.items() if not k.startswith("IfcOpening") and k != "IfcFooting"}
        counts = Counter(el.cls for el in elements)
        self.notes.append("Physical elements read as members: " + ", ".join(f"{v} {k}" for k, v in sorted(counts.items())) + ".")
        if skipped:
            self.notes.append("Not part of the analytical frame (skipped): " + ", ".join(f"{v} {k}" for k, v in sorted(skipped.items())) + ".")
        if f.by_type("IfcStructuralLoadGroup"):
            self.notes.append("The file has structural load groups but no structural analysis model: they are ignored "
                              "(loads here are the self-weight and the area-load table only).")
        return elements

    # ------------------------------------------------------------------ geometry
    def _geometry(self, elements: list[_Element]) -> None:
        unusable: dict[int, str] = {}
        for el in elements:
            kind = _read_representation(el)
            if kind is not None:
                unusable[el.eid] = kind
        for el in elements:  # an element placed where no position can be found is left out, not fatal
            if el.placement is not None:
                try:
                    self.placements.matrix(el.placement)
                except PlacementError as exc:
                    self._leave_out(el, f"unresolvable placement: {exc}")
                    el.placement = None
        self.world = self.placements.batch([el.placement for el in elements])
        failed = self._body_geometry(elements, unusable)
        for el in elements:
            if el.axis_raw is None and el.body is None and el.shape is None:
                kind = unusable.get(el.eid)
                why = (f"its Body ({kind}) gives none: {failed[el.eid]}" if el.eid in failed
                       else f"its Body is {kind}" if kind else "it has neither")
                self._leave_out(el, f"no usable body: no 'Axis' curve and no body to derive the analytical axis from ({why})")

    def _body_geometry(self, elements: list[_Element], unusable: dict[int, str]) -> dict[int, str]:
        """Axis and section from the body's geometry (`analysis.ifc.bodies`), in one kernel pass.

        For elements whose body is not an extruded solid, and for those whose
        axis (``Axis`` curve or extrusion) is shorter than their section depth
        (suspect: a body extruded across the member), which are reported; the
        body's principal direction replaces a suspect axis when the body is
        at least `SUSPECT_LENGTH_RATIO` times longer along it than both the
        suspect axis and the section cut across it (else the body is a
        block, no longer in any direction, and the axis is kept).
        Sets ``el.shape`` and ``el.shape_line``; returns the reasons of the
        elements the kernel gave nothing for.
        """
        from .bodies import SUSPECT_LENGTH_RATIO, body_axes

        L = self.scales.length
        need: list[int] = []
        suspect: dict[int, tuple[str, float]] = {}
        for k, el in enumerate(elements):
            if el.left_out is not None:
                continue
            if el.body is None and el.eid in unusable and unusable[el.eid] != "an empty body":
                need.append(k)
                continue
            short = self._suspect_length(el)
            if short is not None:
                need.append(k)
                suspect[k] = short
        if not need:
            return {}
        axes, failed = body_axes(self.ifc_file, [elements[k].entity for k in need])
        for k in need:
            el = elements[k]
            shape = axes.get(el.eid)
            if shape is None:
                if k in suspect:
                    self.diagnostics.append(Diagnostic("warning", el.eid, f"{el.label}: {suspect[k][0]}; its body's geometry "
                                                       f"cannot replace it ({failed.get(el.eid, 'no result')}): it is kept"))
                continue
            if k not in suspect and el.axis_raw is not None:
                a, b = el.axis_raw
                length = float(np.linalg.norm(np.asarray(b) - np.asarray(a))) * L
                if length < max(shape.depth, shape.width):
                    suspect[k] = (f"its 'Axis' is {length * 1000:.4g} mm long, shorter than its section depth "
                                  f"({max(shape.depth, shape.width) * 1000:.4g} mm): suspect", length)
            if k in suspect:
                why, given = suspect[k]
                if shape.length < SUSPECT_LENGTH_RATIO * max(given, shape.depth, shape.width):
                    self.diagnostics.append(Diagnostic(
                        "warning", el.eid, f"{el.label}: {why}; its body is no longer in any other direction (at most "
                        f"{shape.length * 1000:.4g} mm): the axis is kept"))
                    if el.body is not None:  # the extrusion stays the source of axis and section
                        continue
                else:
                    self.diagnostics.append(Diagnostic(
                        "warning", el.eid, f"{el.label}: {why}; the axis is taken from the body's principal direction "
                        f"instead ({shape.length * 1000:.5g} mm long)"))
                    el.axis_raw = None
                    el.body = None
                    el.body_profile = None  # the extruded profile is not the member's section
            el.shape = shape
            W = self.world[k]
            Rinv = np.linalg.inv(W[:3, :3])
            p0 = Rinv @ (shape.start / L - W[:3, 3])
            p1 = Rinv @ (shape.end / L - W[:3, 3])
            z = None
            if shape.z is not None:
                z = Rinv @ shape.z
                z /= np.linalg.norm(z)
            el.shape_line = (p0, p1, z)
            if shape.notes:
                el.note = (el.note + "; " if el.note else "") + "; ".join(shape.notes)
        if axes:
            self.notes.append(f"Axes and sections of {len(axes)} elements derived from their body geometry (principal "
                              "direction of the body, section cut at mid-length).")
        return failed

    def _suspect_length(self, el: _Element) -> tuple[str, float] | None:
        """Why the element's axis (Axis curve or body extrusion) is suspect — shorter than its extruded profile's
        size — and its length in m."""
        if el.body is None or el.body_profile is None:
            return None
        profile = el.body_profile
        size = self._profile_sizes.get(profile.id())
        if size is None:
            from .sections import section_properties

            try:
                box, _ = _profile_box(profile, section_properties(profile, angle_scale=self.scales.angle))
                size = max(box[1] - box[0], box[3] - box[2])
            except (IfcInputError, TypeError, ValueError, AttributeError):  # a profile we cannot size: no check
                size = 0.0
            self._profile_sizes[profile.id()] = size
        if el.axis_raw is not None:
            a, b = el.axis_raw
            length, what = float(np.linalg.norm(np.asarray(b) - np.asarray(a))), "'Axis'"
        else:
            length, what = float(np.linalg.norm(el.body[1])), "body extrusion"
        if not 0 < size or length >= size:
            return None
        L = self.scales.length
        return (f"its {what} is {length * L * 1000:.4g} mm long, shorter than its section depth ({size * L * 1000:.4g} mm): "
                "suspect (a body extruded across the member?)", length * L)

    # ------------------------------------------------------------------ sections, materials, axes
    def _properties(self, elements: list[_Element]) -> None:
        from .materials import element_profile

        f, scales = self.ifc_file, self.scales
        assoc: dict[int, Hashable] = {}  # element id -> what decides its material and profile
        for rel in f.by_type("IfcRelAssociatesMaterial"):
            d = rel.RelatingMaterial
            key = d.id()
            if d.is_a("IfcMaterialProfileSetUsage"):
                cp = d.CardinalPoint
                key = ("usage", d.ForProfileSet.id(), int(getattr(cp, "wrappedValue", cp) or 0))
            for o in rel.RelatedObjects:
                assoc[o.id()] = key
        if f.schema == "IFC2X3":
            for rel in f.by_type("IfcRelAssociatesProfileProperties"):
                for o in rel.RelatedObjects:
                    assoc[o.id()] = (assoc.get(o.id()), "pp", rel.id())
        from .selection import _types

        typed = {eid: t.id() for eid, t in _types(f).items() if t is not None}  # element id -> its type's id

        groups: dict[tuple, tuple] = {}
        sections: dict[tuple, _SectionInfo] = {}
        m = len(elements)
        self.sec: list[_SectionInfo] = [None] * m  # type: ignore[list-item]
        self.mat: list = self._materials(elements, assoc, typed)
        self.truss = np.zeros(m, dtype=bool)
        for k, el in enumerate(elements):
            # a member may become an axial bar ('truss', or 'auto' decided with the topology): no shear modulus needed
            truss = el.kind == "member" and self.members_as != "frame"
            self.truss[k] = el.kind == "member" and self.members_as == "truss"
            own = assoc.get(el.eid)
            t = typed.get(el.eid)
            key = (own, t if own is None else None, truss)
            hit = groups.get(key)
            if hit is None:
                hit = element_profile(f, el.entity)
                groups[key] = hit
            profile, cardinal, usage = hit
            material = self.mat[k]
            if profile is None:
                profile = el.body_profile
                if profile is None and el.shape is not None:
                    self.sec[k] = self._body_section(el, typed.get(el.eid))
                    self._centroid_line(el, self.sec[k])
                    continue
                if profile is None:
                    default_section = _option(self.defaults, "section", None)
                    if default_section is None:
                        raise IfcInputError(f"{el.label}: no profile (no material profile set and no extruded body) to take the section from", el.eid)
                    self.sec[k], self.mat[k] = self._default_section(default_section), material
                    if default_section.source == "user map":
                        self.sec[k].source = "user map"
                    el.cardinal = cardinal
                    self.diagnostics.append(Diagnostic("warning", el.eid, f"{el.label}: no profile; the default section {default_section.name!r} is used"))
                    self._centroid_line(el, self.sec[k])
                    continue
            el.profile, el.cardinal, el.usage = profile, cardinal, usage
            skey = (profile.id(), usage.id() if usage is not None and usage.is_a("IfcRelAssociatesProfileProperties") else None)
            sec = sections.get(skey)
            if sec is None:
                sec = _section_info(f, profile, usage, scales, el.label, el.eid)
                sections[skey] = sec
            if el.shape is not None:
                sec = self._profile_on_body(el, sec)
            self.sec[k] = sec
            self.mat[k] = material
            self._centroid_line(el, sec)
        self._apply_section_map(elements, typed)

    def _apply_section_map(self, elements: list[_Element], typed: dict[int, int]) -> None:
        """The user's section map (`analysis.ifc.section_map`): an entry naming the element, its type, its
        ObjectType or its profile replaces the section's constants; where it lies (centroid, extent) stays."""
        smap = _option(self.defaults, "sections", None)
        if smap is None or not smap.names:
            return
        used: dict[str, int] = {}
        for k, el in enumerate(elements):
            type_name = self.ifc_file.by_id(typed[el.eid]).Name if el.eid in typed else None
            profile = el.profile if el.profile is not None else el.body_profile
            hit = smap.for_names([el.entity.Name, type_name, getattr(el.entity, "ObjectType", None),
                                  getattr(profile, "ProfileName", None)])
            if hit is None:
                continue
            key, given = hit
            self.sec[k] = replace(self.sec[k], name=given.name, A=given.A, Iy=given.Iy, Iz=given.Iz,
                                              J=given.J, Avy=given.Avy, Avz=given.Avz, source="user map")
            used[key] = used.get(key, 0) + 1
        if used:
            self.notes.append(smap.note(used, "element"))

    def _materials(self, elements: list[_Element], assoc: dict[int, Hashable], typed: dict[int, int]) -> list:
        """Every element's `Material`, or the one report naming every material that stays unknown.

        Elements with the same material association (or type) share the work;
        see `analysis.ifc.materials.MaterialResolver` for where each value comes from.
        """
        from .materials import MaterialResolver

        mat_defaults = _MaterialDefaults(self.defaults) if self.defaults is not None else None
        resolver = MaterialResolver(self.ifc_file, self.scales, mat_defaults)
        out = []
        for el in elements:
            # a member may become an axial bar ('truss', or 'auto' decided with the topology): no shear modulus needed
            truss = el.kind == "member" and self.members_as != "frame"
            own = assoc.get(el.eid)
            material, diags = resolver.material(el.entity, need_density=False, need_shear=not truss,
                                                key=(own, typed.get(el.eid) if own is None else None))
            self.diagnostics.extend(diags)
            out.append(material)
        resolver.raise_unknown()
        if resolver.summary():
            self.notes.append(resolver.summary())
        return out

    @staticmethod
    def _default_section(section) -> _SectionInfo:
        """A user-given `Section` (SI) as section info: centred, size from the radius of gyration."""
        size = 2.0 * math.sqrt(3.0 * max(section.Iy, section.Iz) / section.A) if section.A > 0 else 0.0
        return _SectionInfo(section.name, section.A, section.Iy, section.Iz, section.J, section.Avy, section.Avz, 0.0,
                            np.zeros(2), (0.0, 0.0, 0.0, 0.0), True, size, source="default")

    def _body_section(self, el: _Element, type_id: int | None) -> _SectionInfo:
        """The section cut from the element's body (`analysis.ifc.bodies`), named after its type where it has one."""
        shape = el.shape
        name = ""
        if type_id is not None:
            name = self.ifc_file.by_id(type_id).Name or ""
        name = name or getattr(el.entity, "ObjectType", None) or "body section"
        half_w, half_d = 0.5 * shape.width / self.scales.length, 0.5 * shape.depth / self.scales.length
        return _SectionInfo(str(name), shape.A, shape.Iy, shape.Iz, shape.J, shape.Avy, shape.Avz, 0.0, np.zeros(2),
                            (-half_w, half_w, -half_d, half_d), False, max(shape.depth, shape.width), source="body geometry")

    def _profile_on_body(self, el: _Element, sec: _SectionInfo) -> _SectionInfo:
        """A named profile's values on a body-derived axis: local z is the body's strong axis, so the larger
        principal value is Iy; a profile whose area is far from the body's cut is reported."""
        shape = el.shape
        if abs(sec.A - shape.A) > 0.1 * shape.A:
            self.diagnostics.append(Diagnostic(
                "warning", el.eid, f"{el.label}: its profile {sec.name!r} has A = {sec.A * 1e4:.4g} cm², its body's section "
                f"{shape.A * 1e4:.4g} cm²; the profile's values are used"))
        if sec.Iy >= sec.Iz and sec.roll == 0.0:
            return sec
        return replace(sec, Iy=max(sec.Iy, sec.Iz), Iz=min(sec.Iy, sec.Iz), roll=0.0,
                       Avy=sec.Avz if sec.Iy < sec.Iz else sec.Avy, Avz=sec.Avy if sec.Iy < sec.Iz else sec.Avz)

    def _body_line(self, el: _Element) -> None:
        """Centroid line from the body's geometry; an ``Axis`` curve along it keeps its ends, projected onto it."""
        line = el.shape_line
        if line is None:  # only called for elements with a body line
            raise ValueError(f"{el.label}: no body line")
        p0, p1, z = line
        el.yaxis = None if z is None else z.copy()
        if el.axis_raw is None:
            el.source = "Body geometry"
            el.p0, el.p1 = p0, p1
            return
        a, b = (np.asarray(x, dtype=float) for x in el.axis_raw)
        d = (p1 - p0) / np.linalg.norm(p1 - p0)
        da = (b - a) / np.linalg.norm(b - a)
        el.source = "Axis"
        if abs(float(d @ da)) < math.cos(math.radians(2.0)):
            el.p0, el.p1 = a, b
            el.note = (el.note + "; " if el.note else "") + (
                f"its 'Axis' is {math.degrees(math.acos(min(1.0, abs(float(d @ da))))):.3g}° off the body's principal "
                "direction: the Axis is used as it is")
            return
        el.p0, el.p1 = p0 + ((a - p0) @ d) * d, p0 + ((b - p0) @ d) * d
        shift = float(np.linalg.norm(el.p0 - a)) * self.scales.length
        if shift > 1e-6:
            el.note = (el.note + "; " if el.note else "") + \
                f"its 'Axis' is moved {shift * 1000:.4g} mm onto the centroid line of its body"

    def _centroid_line(self, el: _Element, sec: _SectionInfo) -> None:
        """Local (element coordinates, file units) centroid-line ends and profile y direction."""
        if el.shape_line is not None:
            self._body_line(el)
            return
        if el.axis_raw is not None:
            a, b = el.axis_raw
            el.source = "Axis"
            if el.body is not None:
                plane = el.body[0][:3, :3]
            else:
                d = b - a
                n = np.linalg.norm(d)
                plane = np.eye(3) if n > 0 and abs(d[2]) / n > 1 - 1e-9 else None
            if plane is not None:
                ckey = (id(sec), el.cardinal)
                hit = self._card_cache.get(ckey)
                if hit is None:
                    card, note = _cardinal_point(sec, el.cardinal)
                    hit = self._card_cache[ckey] = (sec.centroid - card, note)
                shift2, note = hit
                if note:
                    el.note = (el.note + "; " if el.note else "") + note
                shift = plane[:, 0] * shift2[0] + plane[:, 1] * shift2[1]
                el.p0, el.p1 = a + shift, b + shift
                el.yaxis = plane[:, 1].copy()
                if el.cardinal not in (None, 5, 10) and np.any(np.abs(shift2) > 0):
                    el.note = (el.note + "; " if el.note else "") + f"axis shifted from cardinal point {el.cardinal} to the centroid"
            else:
                el.p0, el.p1 = a, b
                el.yaxis = None
                if el.cardinal not in (None, 5, 10):
                    el.note = (el.note + "; " if el.note else "") + \
                        f"cardinal point {el.cardinal} ignored: the axis is not along the element's local z and there is no body"
        else:
            if el.body is None:  # _placements has already required an Axis or a Body
                raise IfcInputError(f"{el.label}: no 'Axis' curve and no 'Body' extrusion to derive the analytical axis from", el.eid)
            M, d, _ = el.body
            el.source = "Body"
            c = M[:3, :3] @ np.array([sec.centroid[0], sec.centroid[1], 0.0]) + M[:3, 3]
            el.p0, el.p1 = c, c + M[:3, :3] @ d
            el.yaxis = M[:3, 1].copy()

    # ------------------------------------------------------------------ topology
    def _topology(self, elements: list[_Element]) -> Frame | None:
        """The frame of ``elements``, or None when some were left out (`run` then derives it again without them)."""
        from scipy.spatial import cKDTree

        tol = self.tol
        L = self.scales.length
        m = len(elements)
        W = self.world
        R, t = W[:, :3, :3], W[:, :3, 3]
        p0 = np.array([el.p0 for el in elements])
        p1 = np.array([el.p1 for el in elements])
        A = (np.einsum("kij,kj->ki", R, p0) + t) * L
        B = (np.einsum("kij,kj->ki", R, p1) + t) * L
        lengths = np.linalg.norm(B - A, axis=1)
        scale = max(float(np.ptp(np.vstack([A, B]), axis=0).max()), 1.0)
        zero = np.flatnonzero(~(lengths > 1e-9 * scale))  # NaN lengths (unresolvable geometry) too
        for k in zero.tolist():
            self._leave_out(elements[k], "zero length: its analytical axis starts and ends at the same point")
        if len(zero):
            return None
        ref = np.full((m, 3), np.nan)
        has_y = np.array([el.yaxis is not None for el in elements])
        if has_y.any():
            Y = np.array([el.yaxis for el in elements if el.yaxis is not None])
            ref[has_y] = np.einsum("kij,kj->ki", R[has_y], Y)
        self._world_ref = ref
        ex = (B - A) / lengths[:, None]
        par = np.abs(np.sum(np.nan_to_num(ref) * ex, axis=1)) > (1 - 1e-9) * np.linalg.norm(np.nan_to_num(ref), axis=1)
        ref[has_y & par] = np.nan
        for k in range(m):
            if elements[k].note:
                self.diagnostics.append(Diagnostic("info", elements[k].eid, f"{elements[k].label}: {elements[k].note}"))
        kinds = np.array([_PRIORITY[el.kind] for el in elements])
        size = np.array([s.size for s in self.sec])
        half = 0.5 * size

        # -- 1. merge end points ------------------------------------------------
        X = np.vstack([A, B])  # end e: element e % m, end e // m
        end_elem = np.tile(np.arange(m), 2)
        prio = np.concatenate([kinds, kinds]) * (2 * m + 1) + np.arange(2 * m)
        tree = cKDTree(X)
        pairs = tree.query_pairs(r=tol, output_type="ndarray") if tol > 0 else np.zeros((0, 2), dtype=int)
        if tol == 0:
            _, first, inv = np.unique(X, axis=0, return_index=True, return_inverse=True)
            cluster = inv.ravel()
        else:
            cluster = _union_find_clusters(2 * m, pairs)
        ncl = int(cluster.max()) + 1
        rep = np.full(ncl, -1, dtype=np.int64)
        order = np.argsort(prio)  # best first
        rep_order = order[::-1]
        rep[cluster[rep_order]] = rep_order  # last write wins: the best-priority end
        P = X[rep]  # node positions
        end_node = cluster.copy()
        gap = np.linalg.norm(X - P[end_node], axis=1)
        moved = gap > 1e-9 * scale
        if moved.any():
            nodes_moved = len(np.unique(end_node[moved]))
            self.notes.append(
                f"{int(moved.sum())} member ends were within the merge tolerance ({tol * 1000:.3g} mm) of another end and were "
                f"merged into {nodes_moved} nodes (largest gap closed {gap.max() * 1000:.3g} mm); nodes sit on column ends where a column takes part.")
            for e in np.flatnonzero(moved & (gap > 1e-6)).tolist():
                el = elements[end_elem[e]]
                self.diagnostics.append(Diagnostic("info", el.eid, f"{el.label}: {'start' if e < m else 'end'} moved {gap[e] * 1000:.3g} mm to merge with a node"))
        node_count = ncl
        elem_nodes = np.stack([end_node[:m], end_node[m:]], axis=1)
        same = elem_nodes[:, 0] == elem_nodes[:, 1]
        for k in np.flatnonzero(same).tolist():
            self._leave_out(elements[k], f"zero length: shorter ({lengths[k] * 1000:.3g} mm) than the merge tolerance, "
                                         "both ends merge into one node")
        if same.any():
            return None

        # -- 2. ends landing on other members' spans ----------------------------
        ntree = cKDTree(P)
        seg, pt, tt, dist = _points_near_segments(ntree, A, B, np.full(m, tol), P)
        own = (elem_nodes[seg, 0] == pt) | (elem_nodes[seg, 1] == pt)
        inner = (tt * lengths[seg] > tol) & ((1 - tt) * lengths[seg] > tol)
        keep = ~own & inner
        landings: dict[int, list[tuple[float, int]]] = defaultdict(list)
        for s, p, tv in zip(seg[keep], pt[keep], tt[keep]):
            landings[int(s)].append((float(tv), int(p)))

        # -- 3. eccentric free ends ---------------------------------------------
        degree = np.bincount(end_node, minlength=node_count)
        on_span = np.zeros(node_count, dtype=bool)
        if keep.any():
            on_span[pt[keep]] = True
        offsets = np.zeros((m, 2, 3))
        node_half = np.zeros(node_count)
        np.maximum.at(node_half, end_node, np.concatenate([half, half]))
        # joints of a group found loose in an earlier pass may move too (all their ends), towards another group
        resc = np.array([el.eid in self._rescue for el in elements], dtype=bool)
        rescue_any = np.zeros(node_count, dtype=bool)
        if resc.any():
            rescue_any[end_node[np.concatenate([resc, resc])]] = True
        free = np.flatnonzero(((degree == 1) | rescue_any) & ~on_span)
        new_points: list[np.ndarray] = []
        eccentric = []
        if len(free):
            # braces first, then beams, then columns: a column end is the last to move
            first_end = np.full(node_count, -1, dtype=np.int64)
            first_end[end_node[::-1]] = np.arange(2 * m)[::-1]
            free = free[np.argsort(-kinds[end_elem[first_end[free]]], kind="stable")]
            rmax = 2.0 * float(half.max()) + tol
            near = ntree.query_ball_point(P[free], r=rmax)
            moved_away: set[int] = set()
            received: set[int] = set()
            moved_mask = np.zeros(node_count, dtype=bool)  # the same as arrays over the existing nodes
            received_mask = np.zeros(node_count, dtype=bool)
            for node, cands in zip(free, near):
                if node in received:
                    continue
                e = int(first_end[node])
                k, end = int(end_elem[e]), int(e >= m)
                joint = bool(rescue_any[node] and degree[node] > 1)  # a whole joint of a loose group
                own = node_half[node] if joint else half[k]
                best = None
                loose = None  # the nearest other free end: taken only when no joint and no centre line is in reach
                ca = np.asarray(cands, dtype=np.int64)
                if len(ca):
                    ok_c = (ca != node) & (ca != elem_nodes[k, 0]) & (ca != elem_nodes[k, 1]) & ((degree[ca] > 0) | on_span[ca])
                    ok_c &= ~moved_mask[ca]
                    if rescue_any[node]:
                        ok_c &= ~rescue_any[ca]  # a loose group reaches for another group, not for itself
                    ca = ca[ok_c]
                if len(ca):
                    dc = np.linalg.norm(P[ca] - P[node], axis=1)
                    # snap distance at this joint: half the sum of the section sizes meeting (their faces touch), plus the tolerance
                    reach_c = dc <= node_half[ca] + own + tol
                    is_joint = (degree[ca] > 1) | on_span[ca]
                    is_joint |= received_mask[ca]
                    for pick, store in ((reach_c & is_joint, "best"), (reach_c & ~is_joint, "loose")):
                        if pick.any():
                            j_ = int(np.flatnonzero(pick)[np.argmin(dc[pick])])
                            if store == "best":
                                best = (float(dc[j_]), int(ca[j_]))
                            else:
                                loose = (float(dc[j_]), int(ca[j_]))
                target = None
                if best is not None:
                    target = best[1]
                else:
                    # the centre line of another member within the snap distance
                    lines = self._nearest_line(A, B, lengths, half, P[node], k, tol, own_half=own,
                                               exclude=resc if rescue_any[node] else None)
                    if lines is None and loose is not None:
                        target = loose[1]
                    if lines is not None:
                        s, tv, d = lines
                        point = A[s] + tv * (B[s] - A[s])
                        # another end already snapped within the tolerance of this point of that centre line
                        # (beams framing into a column from both sides): one node for both
                        target = next((p for _, p in landings[s] if np.linalg.norm(
                            (P[p] if p < node_count else new_points[p - node_count]) - point) <= tol), None)
                        if target is None:
                            new_points.append(point)
                            target = node_count + len(new_points) - 1
                            landings[s].append((tv, target))
                if target is None:
                    continue
                moved_away.add(int(node))
                received.add(int(target))
                moved_mask[node] = True
                if target < node_count:
                    received_mask[target] = True
                pos = P[node]
                if joint:
                    for e_ in np.flatnonzero(end_node == node).tolist():
                        eccentric.append((int(end_elem[e_]), int(e_ >= m), target, pos))
                else:
                    eccentric.append((k, end, target, pos))
        if new_points:
            P = np.vstack([P, np.array(new_points)])
            node_count = len(P)
        for k, end, target, pos in eccentric:
            offsets[k, end] = pos - P[target]
            elem_nodes[k, end] = target
            el = elements[k]
            self.diagnostics.append(Diagnostic(
                "info", el.eid,
                f"{el.label}: {'start' if end == 0 else 'end'} is {np.linalg.norm(offsets[k, end]) * 1000:.4g} mm off the "
                f"connected member's centre line; joined to the node there by a rigid offset "
                f"({', '.join(f'{v:.4g}' for v in offsets[k, end])}) m"))
        if eccentric:
            self.notes.append(f"{len(eccentric)} eccentric member ends (off the connected member's centre line by more than the "
                              f"tolerance but within the snap distance) were joined to the centre-line node by rigid offsets: "
                              + _names(sorted({elements[k].label for k, *_ in eccentric})) + ".")

        # -- 3b. members crossing where they touch ---------------------------------
        P, node_count, link_offsets = self._crossings(elements, A, B, lengths, half, kinds, P, node_count, landings, elem_nodes)
        # nodes made by different rules at one point (within the tolerance) are one node
        link_offsets = self._merge_coincident(P, elem_nodes, landings, link_offsets, tol)
        same = elem_nodes[:, 0] == elem_nodes[:, 1]
        for k in np.flatnonzero(same).tolist():
            self._leave_out(elements[k], "zero length: both ends join the same node once eccentric ends are joined")
        if same.any():
            return None

        # -- 3c. where members bear on walls, slabs, footings, piles (a node where one bears along its span)
        P, node_count = self._find_bearings(elements, A, B, lengths, P, node_count, landings, elem_nodes)

        # -- 4. segments ----------------------------------------------------------
        seg_elem: list[int] = []
        seg_nodes: list[tuple[int, int]] = []
        seg_index: list[tuple[int, int]] = []  # (segment number, of how many)
        interior: dict[int, set[int]] = defaultdict(set)  # node -> elements passing through
        split_names = []
        for k in range(m):
            chain = [int(elem_nodes[k, 0])]
            stops = sorted(landings.get(k, ()))
            for tv, p in stops:
                if p != chain[-1] and p != elem_nodes[k, 1] and p not in chain:
                    chain.append(p)
                    interior[p].add(k)
            chain.append(int(elem_nodes[k, 1]))
            n_seg = len(chain) - 1
            if n_seg > 1:
                split_names.append(f"{elements[k].label} into {n_seg}")
            for s in range(n_seg):
                seg_elem.append(k)
                seg_nodes.append((chain[s], chain[s + 1]))
                seg_index.append((s + 1, n_seg))
        if split_names:
            self.notes.append(f"{len(split_names)} members were split where other members land on their span: {_names(split_names)}.")
        seg_elem_a = np.array(seg_elem, dtype=np.int64)
        seg_nodes_a = np.array(seg_nodes, dtype=np.int64).reshape(-1, 2)

        # -- 5. releases ------------------------------------------------------------
        releases = self._releases(elements, elem_nodes, interior, P, A, B)

        # -- 6. compact and order nodes ------------------------------------------
        used = np.zeros(node_count, dtype=bool)
        used[seg_nodes_a.ravel()] = True
        idx_used = np.flatnonzero(used)
        Pr = np.round(P[idx_used], 6)
        order = idx_used[np.lexsort((Pr[:, 0], Pr[:, 1], Pr[:, 2]))]
        new_index = np.full(node_count, -1, dtype=np.int64)
        new_index[order] = np.arange(len(order))
        self._renumber = new_index
        self._passing = {int(new_index[p]): ks for p, ks in interior.items()}  # node -> elements running through it
        nodes = P[order]
        n = len(nodes)
        node_ids = tuple(f"N{i + 1}" for i in range(n))
        members = new_index[seg_nodes_a]
        elem_nodes_new = new_index[elem_nodes]

        # -- 7. supports, loose parts, member idealisation -------------------------
        seg_dz = np.zeros((len(seg_elem), 2))  # rigid-offset z at the element ends of each segment
        seg_first = np.array([s == 1 for s, _ in seg_index], dtype=bool)
        seg_last = np.array([s == ns for s, ns in seg_index], dtype=bool)
        seg_dz[seg_first, 0] = offsets[seg_elem_a[seg_first], 0, 2]
        seg_dz[seg_last, 1] = offsets[seg_elem_a[seg_last], 1, 2]
        restraints = self._supports(elements, elem_nodes_new, nodes, A, B, members, seg_elem_a, seg_dz)
        if self._loose_parts(elements, seg_elem_a, members, restraints):
            return None
        self._member_idealisation(elements, seg_elem_a, members, restraints, A, B, lengths)

        # -- 8. member arrays -----------------------------------------------------
        names = Counter(el.name for el in elements if el.name)
        base_ids = [el.name if el.name and names[el.name] == 1 else el.gid for el in elements]
        member_ids = []
        member_labels = []
        for k, (s, ns) in zip(seg_elem, seg_index):
            member_ids.append(base_ids[k] if ns == 1 else f"{base_ids[k]}/{s}")
            member_labels.append(elements[k].label if ns == 1 else f"{elements[k].label} segment {s} of {ns}")
        secs = [self.sec[k] for k in seg_elem]
        mats = [self.mat[k] for k in seg_elem]
        s_count = len(seg_elem)
        rel = np.zeros((s_count, 2, 6), dtype=bool)
        off = np.zeros((s_count, 2, 3))
        first_seg = np.array([s == 1 for s, _ in seg_index], dtype=bool)
        last_seg = np.array([s == ns for s, ns in seg_index], dtype=bool)
        rel[first_seg, 0] = releases[seg_elem_a[first_seg], 0]
        rel[last_seg, 1] = releases[seg_elem_a[last_seg], 1]
        off[first_seg, 0] = offsets[seg_elem_a[first_seg], 0]
        off[last_seg, 1] = offsets[seg_elem_a[last_seg], 1]
        if link_offsets:  # a member crossing over another: its segments meet the node on the other's line
            for s in range(s_count):
                for e_ in (0, 1):
                    vec = link_offsets.get((int(seg_elem_a[s]), int(seg_nodes_a[s, e_])))
                    if vec is not None:
                        off[s, e_] = vec
        truss = self.truss[seg_elem_a]
        rel[truss] = False
        arrays = {
            "A": _floats(s.A for s in secs), "Iy": _floats(s.Iy for s in secs), "Iz": _floats(s.Iz for s in secs),
            "J": _floats(s.J for s in secs), "Avy": _floats(s.Avy for s in secs), "Avz": _floats(s.Avz for s in secs),
            "E": _floats(mt.E for mt in mats), "G": _floats(mt.shear_modulus for mt in mats),
            "density": _floats(mt.density for mt in mats), "roll": _floats(s.roll for s in secs),
        }
        section_names = [s.name for s in secs]
        material_names = [mt.name for mt in mats]
        section_sources = [s.source for s in secs]  # Frame.section_sources (a merged member keeps its first's)
        seg_ref = ref[seg_elem_a] if s_count else np.zeros((0, 3))

        # -- 9. elements on one line: duplicates left out, pairs merged ------------
        groups = _same_node_pairs(members)
        if groups:
            if self._duplicates(groups, elements, seg_elem_a, seg_index, A, B):
                return None
            keep = self._merge_on_one_line(groups, elements, seg_elem_a, members, arrays, off, truss, member_ids,
                                           member_labels, section_names, material_names)
            members, seg_elem_a, rel, off, truss, seg_ref = (members[keep], seg_elem_a[keep], rel[keep], off[keep],
                                                            truss[keep], seg_ref[keep])
            arrays = {key: v[keep] for key, v in arrays.items()}
            seg_elem = [seg_elem[i] for i in np.flatnonzero(keep)]
            member_ids = [member_ids[i] for i in np.flatnonzero(keep)]
            member_labels = [member_labels[i] for i in np.flatnonzero(keep)]
            section_names = [section_names[i] for i in np.flatnonzero(keep)]
            material_names = [material_names[i] for i in np.flatnonzero(keep)]
            section_sources = [section_sources[i] for i in np.flatnonzero(keep)]
            mats = [mats[i] for i in np.flatnonzero(keep)]
            s_count = len(seg_elem)

        loads = self._loads(elements, seg_elem_a, members, nodes, member_ids, mats)
        frame = Frame(
            node_ids=node_ids,
            nodes=nodes,
            member_ids=tuple(member_ids),
            members=members.astype(np.int32),
            A=arrays["A"], Iy=arrays["Iy"], Iz=arrays["Iz"], J=arrays["J"], Avy=arrays["Avy"], Avz=arrays["Avz"],
            E=arrays["E"], G=arrays["G"], density=arrays["density"],
            ref=seg_ref,
            roll=arrays["roll"],
            truss=truss,
            releases=rel,
            offsets=off,
            inextensible=np.zeros(s_count, dtype=bool),
            restraints=restraints,
            springs=np.zeros((n, 6)),
            load_cases=loads,
            node_sources=(None,) * n,
            member_sources=tuple(elements[k].gid for k in seg_elem),
            node_labels=node_ids,
            member_labels=tuple(member_labels),
            section_names=tuple(section_names),
            material_names=tuple(material_names),
            section_sources=tuple(section_sources),
            material_sources=tuple(mt.source for mt in mats),
            name=self._project_name(),
        )
        self.notes.append(f"Analytical frame: {n} nodes, {s_count} members from {m} elements.")
        return frame

    def _project_name(self) -> str:
        projects = self.ifc_file.by_type("IfcProject")
        return str(projects[0].Name or "") if projects else ""

    @staticmethod
    def _merge_coincident(P, elem_nodes, landings, links, tol):
        """Renumber nodes closer than ``tol`` to the oldest of them (in place); returns the offsets renumbered.

        The positions are kept as they are (the gap, below the tolerance, is closed as when end points
        merge); a crossing's rigid offset is changed to keep the upper member's true position.
        """
        if tol <= 0 or len(P) < 2:
            return links
        from scipy.spatial import cKDTree

        pairs = cKDTree(P).query_pairs(r=tol, output_type="ndarray")
        if len(pairs) == 0:
            return links
        labels = _union_find_clusters(len(P), pairs)
        rep = np.full(int(labels.max()) + 1, len(P), dtype=np.int64)
        np.minimum.at(rep, labels, np.arange(len(P)))
        remap = rep[labels]
        elem_nodes[:] = remap[elem_nodes]
        for k, stops in landings.items():
            landings[k] = [(tv, int(remap[p])) for tv, p in stops]
        return {(k, int(remap[p])): vec + P[p] - P[remap[p]] for (k, p), vec in links.items()}

    def _crossings(self, elements, A, B, lengths, half, kinds, P, node_count, landings, elem_nodes):
        """Join members whose spans cross within touching distance (purlins on rafters, plates on joists, X-braces).

        Two centre lines whose closest points lie inside both spans (farther than the other's half size plus
        the tolerance from either end) and closer than half the sum of the section sizes plus the tolerance
        touch there. Closer than the tolerance they share one new node where they meet; otherwise the node is
        on the line of the member below (a column before a beam before a member at equal height) and the
        other member, split there too, reaches it through a rigid offset. Returns the node positions, their
        count and the offsets {(element, node): vector}.
        """
        from scipy.spatial import cKDTree

        tol = self.tol
        m = len(elements)
        links: dict[tuple[int, int], np.ndarray] = {}
        if m < 2:
            return P, node_count, links
        reach = 2.0 * float(half.max()) + tol
        step = max(reach, float(np.median(lengths)) / 4.0, 1e-3)
        counts = np.maximum(1, np.ceil(lengths / step).astype(np.int64))
        owner = np.repeat(np.arange(m), counts + 1)
        frac = np.concatenate([np.linspace(0.0, 1.0, c + 1) for c in counts])
        pts = A[owner] + frac[:, None] * (B - A)[owner]
        spacing = lengths / counts  # sample spacing per element
        tree = cKDTree(pts)
        # two crossing lines' nearest samples lie up to half of each one's spacing from the crossing
        pairs = tree.query_pairs(r=reach + float(spacing.max()) * 1.01 + tol, output_type="ndarray")
        if len(pairs) == 0:
            return P, node_count, links
        oa, ob = owner[pairs[:, 0]], owner[pairs[:, 1]]
        # the pair's own reach: their half sizes and half their sample spacings
        gap = np.linalg.norm(pts[pairs[:, 0]] - pts[pairs[:, 1]], axis=1)
        near = (oa != ob) & (gap <= half[oa] + half[ob] + tol + 0.5 * (spacing[oa] + spacing[ob]) * 1.01)
        if not near.any():
            return P, node_count, links
        key = np.unique(np.minimum(oa[near], ob[near]) * m + np.maximum(oa[near], ob[near]))
        i, j = key // m, key % m
        # closest points of two lines (common practice, no source): a + s u, b + t v
        u, v = B[i] - A[i], B[j] - A[j]
        w0 = A[i] - A[j]
        aa, bb, cc = np.sum(u * u, 1), np.sum(u * v, 1), np.sum(v * v, 1)
        dd, ee = np.sum(u * w0, 1), np.sum(v * w0, 1)
        den = aa * cc - bb * bb
        ok = den > 1e-12 * aa * cc  # not parallel (parallel pairs are elements on one line)
        with np.errstate(divide="ignore", invalid="ignore"):
            s = np.where(ok, (bb * ee - cc * dd) / np.where(ok, den, 1.0), 0.0)
            t = np.where(ok, (aa * ee - bb * dd) / np.where(ok, den, 1.0), 0.0)
        pi = A[i] + s[:, None] * u
        pj = A[j] + t[:, None] * v
        dist = np.linalg.norm(pi - pj, axis=1)
        li, lj = lengths[i], lengths[j]
        inside_i = (s * li > half[j] + tol) & ((1 - s) * li > half[j] + tol)
        inside_j = (t * lj > half[i] + tol) & ((1 - t) * lj > half[i] + tol)
        touch = ok & inside_i & inside_j & (dist <= half[i] + half[j] + tol)
        if not touch.any():
            return P, node_count, links
        ends = [set(map(int, elem_nodes[k])) for k in range(m)]
        new_points: list[np.ndarray] = []
        joined: list[str] = []

        def node_near(k: int, point: np.ndarray) -> int | None:
            """A node already on element k's line within the tolerance of ``point`` (several members crossing there)."""
            for _, p_ in landings[k]:
                if np.linalg.norm((P[p_] if p_ < node_count else new_points[p_ - node_count]) - point) <= tol:
                    return p_
            return None

        def new_node(point: np.ndarray) -> int:
            new_points.append(point)
            return node_count + len(new_points) - 1

        for n_ in np.flatnonzero(touch).tolist():
            a, b = int(i[n_]), int(j[n_])
            if ends[a] & ends[b]:
                continue  # already joined at an end
            if dist[n_] <= tol:
                point = 0.5 * (pi[n_] + pj[n_])
                p = node_near(a, point)
                p = node_near(b, point) if p is None else p
                p = new_node(point) if p is None else p
                for k_, tk in ((a, float(s[n_])), (b, float(t[n_]))):
                    if all(q != p for _, q in landings[k_]) and not any(
                            abs(tq - tk) * lengths[k_] <= tol for tq, _ in landings[k_]):
                        landings[k_].append((tk, p))
                joined.append(f"{elements[a].label} and {elements[b].label} where they cross")
                continue
            # the node on the supporting member: the lower one, else the higher-priority class
            lower_first = (pi[n_, 2] < pj[n_, 2] - tol) or (abs(pi[n_, 2] - pj[n_, 2]) <= tol and kinds[a] <= kinds[b])
            base, over = (a, b) if lower_first else (b, a)
            pb, po = (pi[n_], pj[n_]) if lower_first else (pj[n_], pi[n_])
            tb, to = (float(s[n_]), float(t[n_])) if lower_first else (float(t[n_]), float(s[n_]))
            p = node_near(base, pb)
            if p is None:
                p = new_node(pb)
                landings[base].append((tb, p))
            if (over, p) in links or any(q == p for _, q in landings[over]):
                continue
            if any(abs(tq - to) * lengths[over] <= tol for tq, _ in landings[over]):
                continue  # already joined within the tolerance of this point (no zero-length piece)
            pos = P[p] if p < node_count else new_points[p - node_count]
            landings[over].append((to, p))
            links[(over, p)] = po - pos
            joined.append(f"{elements[over].label} on {elements[base].label} ({dist[n_] * 1000:.4g} mm apart)")
            self.diagnostics.append(Diagnostic("info", elements[over].eid,
                                               f"{elements[over].label}: crosses {elements[base].label} "
                                               f"{dist[n_] * 1000:.4g} mm from its centre line (their sections touch): joined "
                                               "to a node on it by a rigid offset"))
        if new_points:
            P = np.vstack([P, np.array(new_points)])
            node_count = len(P)
            self.notes.append(f"{len(joined)} crossings of members whose sections touch were joined (a node where the centre "
                              "lines meet, or on the supporting member's line with a rigid offset to the one above): "
                              + _names(joined) + ".")
        return P, node_count, links

    def _nearest_line(self, A, B, lengths, half, x, k, tol, own_half=None, exclude=None):
        """(element, t, distance) of the nearest other centre line within the snap distance of ``x``.

        The snap distance is half the other member's size plus ``own_half`` (default element k's half
        size) plus ``tol``; elements where ``exclude`` is true are not considered.
        """
        if getattr(self, "_mid_tree", None) is None:
            from scipy.spatial import cKDTree

            # points along every centre line, no farther apart than the largest snap distance
            step = max(2.0 * float(half.max()) + tol, float(np.median(lengths)) / 4.0, 1e-3)
            counts = np.maximum(1, np.ceil(lengths / step).astype(np.int64))
            self._mid_owner = np.repeat(np.arange(len(A)), counts + 1)
            frac = np.concatenate([np.linspace(0.0, 1.0, c + 1) for c in counts])
            self._mid_tree = cKDTree(A[self._mid_owner] + frac[:, None] * (B - A)[self._mid_owner])
            self._mid_reach = float(half.max()) + tol + 0.5 * float((lengths / counts).max()) * 1.01
        reach = self._mid_reach + (half[k] if own_half is None else own_half)
        cand = np.unique(self._mid_owner[np.asarray(self._mid_tree.query_ball_point(x, r=reach), dtype=np.int64)])
        cand = cand[cand != k]
        if exclude is not None:
            cand = cand[~exclude[cand]]
        if len(cand) == 0:
            return None
        d = B[cand] - A[cand]
        tv = np.clip(np.sum((x - A[cand]) * d, axis=1) / lengths[cand] ** 2, 0.0, 1.0)
        dist = np.linalg.norm(A[cand] + tv[:, None] * d - x, axis=1)
        # snap distance: half the sum of the two section sizes (their faces touch), plus the tolerance
        ok = (dist <= half[cand] + (half[k] if own_half is None else own_half) + tol) & (tv * lengths[cand] > tol) & ((1 - tv) * lengths[cand] > tol)
        if not ok.any():
            return None
        j = int(np.flatnonzero(ok)[np.argmin(dist[ok])])
        return int(cand[j]), float(tv[j]), float(dist[j])

    # ------------------------------------------------------------------ releases
    def _releases(self, elements, elem_nodes, interior, P, A, B) -> np.ndarray:
        m = len(elements)
        rel = np.zeros((m, 2, 6), dtype=bool)
        kinds = [el.kind for el in elements]
        node_has_column: set[int] = set()
        for k, kind in enumerate(kinds):
            if kind == "column":
                node_has_column.update(int(v) for v in elem_nodes[k])
        for p, ks in interior.items():
            if any(kinds[k] == "column" for k in ks):
                node_has_column.add(p)
        declared = self._declared_connections(elements, elem_nodes, P, A, B)
        applied: dict[str, list[str]] = defaultdict(list)
        for k, el in enumerate(elements):
            if el.kind == "member":
                if self.truss[k]:
                    applied["members taken as pin-ended axial bars (truss)"].append(el.label)
                continue
            if el.kind != "beam":
                continue
            for end in (0, 1):
                node = int(elem_nodes[k, end])
                fix = declared.get((k, end))
                if fix is not None:
                    if fix == "pinned":
                        rel[k, end, 4:6] = True
                    applied[f"beam ends set {fix} by the file's declared connections"].append(f"{el.label} {'start' if end == 0 else 'end'}")
                    continue
                if node in node_has_column:
                    if self.beam_column == "pinned":
                        rel[k, end, 4:6] = True
                    applied[f"beam-to-column ends {'pinned' if self.beam_column == 'pinned' else 'rigid'} (default)"].append(
                        f"{el.label} {'start' if end == 0 else 'end'}")
                elif any(kinds[j] == "beam" for j in interior.get(node, ())):
                    if self.secondary == "pinned":
                        rel[k, end, 4:6] = True
                    applied[f"beam ends framing into another beam's span {self.secondary} (default, My and Mz released)" if self.secondary == "pinned"
                            else "beam ends framing into another beam's span rigid (default)"].append(f"{el.label} {'start' if end == 0 else 'end'}")
        for rule, who in applied.items():
            self.notes.append(f"End conditions — {rule}: {len(who)}: {_names(who)}.")
            if "declared" in rule or "framing into" in rule:
                for w in who:
                    eid = int(w[1:].split(" ", 1)[0])
                    self.diagnostics.append(Diagnostic("info", eid, f"{w}: {rule}"))
        return rel

    def _declared_connections(self, elements, elem_nodes, P, A, B) -> dict[tuple[int, int], str]:
        """(element index, end) -> 'pinned' | 'rigid' from the file's declared connections."""
        f = self.ifc_file
        index = {el.eid: k for k, el in enumerate(elements)}
        out: dict[tuple[int, int], str] = {}
        unknown = 0
        try:
            rels = f.by_type("IfcRelConnectsElements")
        except RuntimeError:
            rels = ()
        for rel in rels:
            a, b = rel.RelatingElement, rel.RelatedElement
            if a is None or b is None or a.id() not in index or b.id() not in index:
                continue
            fix = _connection_fixity(getattr(rel, "ConnectionType", None)) if rel.is_a("IfcRelConnectsWithRealizingElements") else None
            if fix is None:
                unknown += 1
                continue
            ka, kb = index[a.id()], index[b.id()]
            for k, other, kind_attr in ((kb, ka, "RelatedConnectionType"), (ka, kb, "RelatingConnectionType")):
                end = None
                ct = getattr(rel, kind_attr, None) if rel.is_a("IfcRelConnectsPathElements") else None
                if ct in ("ATSTART", "ATEND"):
                    end = 0 if ct == "ATSTART" else 1
                else:
                    d = B[other] - A[other]
                    L2 = float(d @ d)
                    best = None
                    for e_ in (0, 1):
                        x = P[elem_nodes[k, e_]]
                        tv = min(max(float((x - A[other]) @ d) / L2, 0.0), 1.0)
                        dist = float(np.linalg.norm(A[other] + tv * d - x))
                        if dist <= 0.5 * self.sec[other].size + self.tol and (best is None or dist < best[0]):
                            best = (dist, e_)
                    end = best[1] if best is not None else None
                if end is not None:
                    out[(k, end)] = fix
                    break
        if unknown:
            self.notes.append(f"{unknown} connections between members are declared in the file without a fixity this reader "
                              "understands; the default end conditions apply to them.")
        return out

    # ------------------------------------------------------------------ supports
    def _supports(self, elements, elem_nodes, nodes, A, B, members=None, seg_elem=None, seg_dz=None) -> np.ndarray:
        """Restraints (n, 6) by the rules of the module docstring (Supports); each rule used is noted."""
        tol = self.tol
        n = len(nodes)
        restraints = np.zeros((n, 6), dtype=bool)
        comps = {"fixed": slice(0, 6), "pinned": slice(0, 3)}
        self._held_spans: list[tuple[int, int]] = []  # (node, element) where an element bears along its span
        cols = [k for k, el in enumerate(elements) if el.kind == "column"]
        bottoms = {}
        for k in cols:
            end = 0 if A[k, 2] <= B[k, 2] else 1
            bottoms[k] = int(elem_nodes[k, end])
        if self.support_level is not None:
            level = float(self.support_level)
            at_level = np.flatnonzero(np.abs(nodes[:, 2] - level) <= max(tol, 1e-9))
            restraints[at_level, comps[self.support_kind]] = True
            self.notes.append(f"Supports ({self.support_kind}): {len(at_level)} nodes at the support level given ({level:.4g} m).")
            return restraints
        if self.support_specs:
            return self._queried_supports(elements, elem_nodes, nodes, A, B, restraints, comps)
        parts: list[str] = []
        # (a) the lowest column bottom
        if bottoms:
            level = float(min(nodes[v, 2] for v in bottoms.values()))
            at_level = np.flatnonzero(np.abs(nodes[:, 2] - level) <= max(tol, 1e-9))
            restraints[at_level, comps[self.support_kind]] = True
            parts.append(f"{len(at_level)} nodes at the lowest column bottom ({level:.4g} m), {self.support_kind}")
        # (b) ends bearing on walls, slabs, footings, piles, spans on walls, footings, piles; columns connected to footings
        before = restraints.any(axis=1).copy()
        by_class = self._bearing_supports(elements, elem_nodes, None, restraints, comps, None, bottoms)
        for k, node in bottoms.items():
            if self._footing_connected(elements[k]) and not restraints[node].all():
                restraints[node, comps[self.support_kind]] = True
                by_class["IfcFooting (connected)"] = by_class.get("IfcFooting (connected)", 0) + 1
        if by_class:
            parts.append(f"{int((restraints.any(axis=1) & ~before).sum())} further nodes where member ends bear on "
                         + ", ".join(f"{v} {c}" for c, v in sorted(by_class.items()))
                         + f" (column bottoms {self.support_kind}, beam and member ends pinned)")
        # (c) nothing found: the lowest nodes, pinned
        if not restraints.any():
            # the lowest elevation of the members' undersides (members of different depths sitting on one
            # ground); every node whose underside lies there within the tolerance
            under = nodes[:, 2].copy()
            if members is not None and seg_elem is not None and len(members):
                below = np.array([self._underside(k, A, B) for k in range(len(elements))])
                dz = seg_dz if seg_dz is not None else np.zeros((len(members), 2))
                # the members' true ends (node plus rigid offset) less the depth of their undersides
                np.minimum.at(under, members[:, 0], nodes[members[:, 0], 2] + dz[:, 0] - below[seg_elem])
                np.minimum.at(under, members[:, 1], nodes[members[:, 1], 2] + dz[:, 1] - below[seg_elem])
            level = float(under.min())
            at_level = np.flatnonzero(np.abs(under - level) <= max(tol, 1e-9))
            restraints[at_level, comps["pinned"]] = True
            parts.append(f"no column and no member end bearing on a wall, slab, footing or pile: the {len(at_level)} nodes "
                         f"whose members' undersides lie at the model's lowest elevation ({level:.4g} m), pinned")
        fixed = restraints.all(axis=1)
        pinned = restraints.any(axis=1) & ~fixed
        kinds = " and ".join(k for k, c in (("fixed", fixed), ("pinned", pinned)) if c.any())
        forks = self._fork_supports(elements, elem_nodes, A, B, restraints, self._held_spans)
        if forks:
            parts.append(f"{forks} pinned bearings of members along a global axis also hold the member's twist "
                         "(fork supports)")
        self.notes.append(f"Supports ({kinds}, the documented default; --supports or a support level say otherwise): "
                          + "; ".join(parts) + ".")
        return restraints

    def _fork_supports(self, elements, elem_nodes, A, B, restraints, through=()) -> int:
        """At a pinned node where the horizontal members ending there all run along one global axis X or Y, hold their twist.

        A beam or a wall plate resting on a bearing cannot roll over it (a fork support, common practice, no
        source); without this, a beam pinned at both ends would turn freely about its own axis. A node where
        a member bears along its span (``through``: (node, element) pairs) counts as its end when no other
        element meets it there. Vertical
        members meeting there (studs on a sole plate) turn with the joint. Restraints are in world axes, so
        horizontal members off the X and Y directions (by more than about 1 degree), or inclined members at
        the node, give no fork.
        """
        pinned = restraints[:, :3].all(axis=1) & ~restraints[:, 3:].any(axis=1)
        if not pinned.any():
            return 0
        d = B - A
        d = d / np.linalg.norm(d, axis=1)[:, None]
        seen: dict[int, set[int]] = defaultdict(set)
        for k in range(len(elements)):
            for e_ in (0, 1):
                v = int(elem_nodes[k, e_])
                if not pinned[v]:
                    continue
                if abs(d[k, 2]) > 0.9998:
                    seen[v].add(-2)  # a vertical member: turns with the joint
                elif abs(d[k, 2]) > 0.02:
                    seen[v].add(-1)  # an inclined member: no fork here
                elif abs(d[k, 0]) > 0.9998:
                    seen[v].add(3)
                elif abs(d[k, 1]) > 0.9998:
                    seen[v].add(4)
                else:
                    seen[v].add(-1)
        ends = set(seen)
        for v, k in through:
            if pinned[v] and v not in ends and self._passing.get(v) == {k} and abs(d[k, 2]) <= 0.02:
                seen[v].add(3 if abs(d[k, 0]) > 0.9998 else 4 if abs(d[k, 1]) > 0.9998 else -1)
        count = 0
        for v, axes in seen.items():
            axes = axes - {-2}
            if len(axes) == 1 and -1 not in axes:
                restraints[v, next(iter(axes))] = True
                count += 1
        return count

    def _support_query(self, query: str) -> list:
        """The elements a ``--supports`` query finds (asked once per derivation)."""
        cache = self.__dict__.setdefault("_support_found", {})
        if query not in cache:
            from .selection import _query

            found = sorted(_query(self.ifc_file, query, "--supports"), key=lambda e: e.id())
            if not found:
                raise IfcInputError(f"--supports {query!r}: the query finds no element")
            cache[query] = found
        return cache[query]

    def _queried_supports(self, elements, elem_nodes, nodes, A, B, restraints, comps) -> np.ndarray:
        index = {el.eid: k for k, el in enumerate(elements)}
        parts = []
        for i, (query, kind) in enumerate(self.support_specs):
            found = self._support_query(query)
            own = [index[e.id()] for e in found if e.id() in index]
            others = [e for e in found if e.id() not in index]
            count = 0
            for k in own:
                za, zb = A[k, 2], B[k, 2]
                ends = (0, 1) if abs(za - zb) <= self.tol else ((0,) if za < zb else (1,))
                for e_ in ends:
                    restraints[int(elem_nodes[k, e_]), comps[kind]] = True
                    count += 1
            by_class = self._bearing_supports(elements, elem_nodes, i, restraints, comps, kind, {}) if others else {}
            parts.append(f"--supports {query!r} ({kind}): {count} lowest ends of {len(own)} frame elements"
                         + (", and member ends bearing on " + ", ".join(f"{v} {c}" for c, v in sorted(by_class.items()))
                            if by_class else (f"; {len(others)} other elements found, no member end bears on them" if others else "")))
        forks = self._fork_supports(elements, elem_nodes, A, B, restraints, self._held_spans)
        self.notes.append("Supports as asked: " + "; ".join(parts)
                          + (f"; {forks} pinned bearings of members along a global axis also hold their twist (fork "
                             "supports)" if forks else "") + ".")
        return restraints

    def _underside(self, k: int, A, B) -> float:
        """Depth (m) of element k's section underside below its centroid line (0 for a vertical member)."""
        sec = self.sec[k]
        d = B[k] - A[k]
        L = float(np.linalg.norm(d))
        ex = d / L if L > 0 else np.array([1.0, 0.0, 0.0])
        if abs(ex[2]) > 1 - 1e-6:
            return 0.0
        box = np.array(sec.box, dtype=float)
        if not np.any(box):
            return 0.5 * sec.size
        ref = self._world_ref[k]
        if ref is None or not np.all(np.isfinite(ref)):
            ref = np.array([0.0, 0.0, 1.0])
        ez = ref - (ref @ ex) * ex
        nz = float(np.linalg.norm(ez))
        if nz < 1e-9:
            return 0.5 * sec.size
        ez = ez / nz
        ey = np.cross(ez, ex)
        L_f = self.scales.length
        c = sec.centroid
        xs = (box[[0, 1, 1, 0]] - c[0]) * L_f
        ys = (box[[2, 2, 3, 3]] - c[1]) * L_f
        zc = xs * ey[2] + ys * ez[2]
        return float(max(0.0, -zc.min()))

    def _bearer_sets(self, elements) -> list[tuple[Any, list, str | None, tuple[str, ...] | None]]:
        """What members may bear on: (key, elements, support kind or None for the default, classes a span may
        bear on, None for all of them); nothing with a support level."""
        if self.support_level is not None:
            return []
        frame_ids = {el.eid for el in elements}
        if self.support_specs:
            return [(i, [e for e in self._support_query(query) if e.id() not in frame_ids], kind, None)
                    for i, (query, kind) in enumerate(self.support_specs)]
        from .bearing import BEARING_CLASSES, SPAN_BEARING_CLASSES

        bearers = [e for c in BEARING_CLASSES for e in self.ifc_file.by_type(c) if e.id() not in frame_ids]
        return [(None, bearers, None, SPAN_BEARING_CLASSES)]

    def _triangles(self, bearers) -> dict[int, FloatArray]:
        """Body triangles of ``bearers`` (built once per derivation, whatever the passes)."""
        from .bearing import body_triangles

        cache: dict[int, FloatArray | None] = self.__dict__.setdefault("_tri_cache", {})
        missing = [e for e in bearers if e.id() not in cache]
        if missing:
            built = body_triangles(self.ifc_file, missing)
            for e in missing:
                cache[e.id()] = built.get(e.id())
        return {e.id(): t for e in bearers if (t := cache[e.id()]) is not None}

    def _find_bearings(self, elements, A, B, lengths, P, node_count, landings, elem_nodes):
        """Where members bear on walls, slabs, footings and piles (or the ``--supports`` elements).

        Ends bear as `analysis.ifc.bearing.bearing_hits` finds; a member that is not a column and slopes
        less than 45 degrees bears along its span where `analysis.ifc.bearing.span_runs` finds a run of
        contact: a short run (up to `_SEAT` or four section sizes) inside the span gives a node at its
        middle (a rafter over a wall, a ridge beam on a gable wall), a short run at an end is that end's
        own bearing, and a longer run (a wall plate on a wall) gives a node at each of its ends inside
        the span and holds every node of the member within it. Only walls, footings and piles hold what is
        built into their bodies. New nodes are appended to ``P`` and landed on their members; the findings
        are kept per bearer set for `_bearing_supports`. Walls and slabs resting on other frame members are
        dropped (`_carried`) unless they also rest on a wall, footing or pile (`analysis.ifc.bearing.rests_on`).
        Returns ``(P, node_count)``.
        """
        from .bearing import SPAN_BEARING_CLASSES, bearing_hits, rests_on, span_runs

        self._bearings: dict[Any, tuple[list, list]] = {}
        tol = self.tol
        m = len(elements)
        sets = self._bearer_sets(elements)
        if not sets:
            return P, node_count
        under_k = np.array([self._underside(k, A, B) for k in range(m)])
        slope = np.abs((B - A)[:, 2]) / lengths
        spanning = [k for k, el in enumerate(elements) if el.kind != "column" and slope[k] <= _STEEPEST_SPAN_BEARING]
        ends = [(k, e_) for k in range(m) for e_ in (0, 1)]
        pts = np.empty((len(ends), 2, 3))
        for i, (k, e_) in enumerate(ends):
            p, q = (A[k], B[k]) if e_ == 0 else (B[k], A[k])
            pts[i, 0] = p
            pts[i, 1] = p + (q - p) / lengths[k] * min(tol, 0.25 * lengths[k])  # an end flush with a face still bears
        below = under_k[[k for k, _ in ends]]
        lower = (B[:, 2] < A[:, 2]).astype(int)  # which end of each element is its foot
        column_ends = np.array([elements[k].kind == "column" and e_ == lower[k] for k, e_ in ends], dtype=bool)
        new_points: list[np.ndarray] = []

        def node_at(k: int, tv: float) -> int:
            if tv * lengths[k] <= tol:
                return int(elem_nodes[k, 0])
            if (1.0 - tv) * lengths[k] <= tol:
                return int(elem_nodes[k, 1])
            point = A[k] + tv * (B[k] - A[k])
            for _, p_ in landings[k]:
                if np.linalg.norm((P[p_] if p_ < node_count else new_points[p_ - node_count]) - point) <= tol:
                    return p_
            new_points.append(point)
            landings[k].append((tv, node_count + len(new_points) - 1))
            return node_count + len(new_points) - 1

        for key, bearers, kind, span_classes in sets:
            end_hits: list[tuple[int, int, int]] = []
            span_hits: list[tuple[int, int, int, float]] = []  # member, node, bearer, m from its start
            self._bearings[key] = (end_hits, span_hits)
            tris = self._triangles(bearers)
            if not tris:
                continue
            # a beam or member inside a slab's body (a rafter in a roof build-up, a beam cast into a deck) does
            # not bear on it: only a wall, footing or pile holds what is built into it; a column foot cast into
            # a slab (a raft) is held by it
            embeds = {eid for eid in tris if not self.ifc_file.by_id(eid).is_a("IfcSlab")}
            hit = bearing_hits(tris, pts, below, tol, embeds)
            if column_ends.any():
                hit[column_ends] = bearing_hits(tris, pts[column_ends], below[column_ends], tol)
            span_tris = tris if span_classes is None else {
                eid: t for eid, t in tris.items() if any(self.ifc_file.by_id(eid).is_a(c) for c in span_classes)}
            runs = span_runs(span_tris, A, B, under_k, tol, spanning, _SPAN_STEP, embeds)
            if kind is None and ((hit >= 0).any() or runs):
                # a wall or slab that itself rests on frame members (a slab on beams, a wall on a transfer beam)
                # hands its load on to them: it is no support
                on: dict[int, set[int]] = defaultdict(set)  # bearing element -> the members bearing on it
                for i in np.flatnonzero(hit >= 0).tolist():
                    on[int(hit[i])].add(ends[i][0])
                for k, _, _, eid in runs:
                    on[eid].add(k)
                carried = self._carried(tris, on, A, B, lengths, under_k)
                # one that also rests on a wall, footing or pile below it (a floor slab on walls and beams) still
                # carries what stands on it down to them
                grounded = {c for c in carried if rests_on(tris[c], {
                    e: t for e, t in tris.items() if e != c and any(self.ifc_file.by_id(e).is_a(k)
                                                                    for k in SPAN_BEARING_CLASSES)}, tol)}
                if grounded:
                    carried -= grounded
                    self.notes.append(f"{len(grounded)} walls or slabs rest on frame members but also on walls, footings or "
                                      "piles, so they stay supports: "
                                      + _names([entity_label(self.ifc_file.by_id(c)) for c in sorted(grounded)]) + ".")
                if carried:
                    hit[np.isin(hit, np.fromiter(carried, dtype=np.int64))] = -1
                    runs = [r for r in runs if r[3] not in carried]
                    self.notes.append(f"{len(carried)} walls or slabs that members bear on rest on frame members "
                                      "themselves, so they are no supports: "
                                      + _names([entity_label(self.ifc_file.by_id(c)) for c in sorted(carried)]) + ".")
            end_hits.extend((ends[i][0], ends[i][1], int(hit[i])) for i in np.flatnonzero(hit >= 0).tolist())
            for k, t0, t1, eid in runs:
                reach = (tol + _SPAN_STEP) / lengths[k]  # a run this close to an end starts at the end
                at_start, at_end = t0 <= reach, t1 >= 1.0 - reach
                if (t1 - t0) * lengths[k] <= max(_SEAT, 4.0 * self.sec[k].size):
                    if at_start or at_end:
                        continue  # the end's own bearing
                    span_hits.append((k, node_at(k, 0.5 * (t0 + t1)), eid, 0.5 * (t0 + t1) * float(lengths[k])))
                    continue
                held = [(tv, node_at(k, tv)) for tv, edge in ((t0, at_start), (t1, at_end)) if not edge]
                held += [(tv, p_) for tv, p_ in landings[k] if t0 <= tv <= t1]
                for tv, p_ in sorted(set(held)):
                    span_hits.append((k, p_, eid, tv * float(lengths[k])))
        if new_points:
            P = np.vstack([P, np.array(new_points)])
            node_count = len(P)
        return P, node_count

    def _bearing_supports(self, elements, elem_nodes, key, restraints, comps, kind, bottoms) -> dict[str, int]:
        """Support what `_find_bearings` found for bearer set ``key``; returns counts per bearing class."""
        end_hits, span_hits = self._bearings.get(key, ([], []))
        self._held_spans.extend((int(self._renumber[p_]), k) for k, p_, _, _ in span_hits)
        counts: dict[str, int] = {}
        bottom_nodes = set(bottoms.values())

        def base(eid: int) -> tuple[Any, str]:
            bearer = self.ifc_file.by_id(eid)
            return bearer, next((c for c in ("IfcWall", "IfcSlab", "IfcFooting", "IfcPile") if bearer.is_a(c)), bearer.is_a())

        for k, e_, eid in end_hits:
            node = int(elem_nodes[k, e_])
            if kind is not None:
                how = kind
            else:
                how = self.support_kind if (elements[k].kind == "column" and node in bottom_nodes) else "pinned"
            if how == "pinned" and restraints[node, :3].all():
                continue
            restraints[node, comps[how]] = True
            bearer, cls = base(eid)
            counts[cls] = counts.get(cls, 0) + 1
            self.diagnostics.append(Diagnostic("info", elements[k].eid, f"{elements[k].label} {'start' if e_ == 0 else 'end'} "
                                               f"bears on {entity_label(bearer)}: supported ({how})"))
        for k, p_, eid, at in span_hits:
            node = int(self._renumber[p_])
            how = kind or "pinned"
            if how == "pinned" and restraints[node, :3].all():
                continue
            restraints[node, comps[how]] = True
            bearer, cls = base(eid)
            counts[cls + " (along a span)"] = counts.get(cls + " (along a span)", 0) + 1
            self.diagnostics.append(Diagnostic(
                "info", elements[k].eid, f"{elements[k].label} bears on {entity_label(bearer)} "
                f"{at:.3g} m from its start: supported there ({how})"))
        return counts

    def _carried(self, tris, on: dict[int, set[int]], A, B, L, above) -> set[int]:
        """Which bearing elements rest on frame members other than those bearing on them (points every 0.5 m or so)."""
        from .bearing import carried_by

        n = np.clip(np.ceil(L / 0.5).astype(np.int64) + 1, 2, 41)
        owner = np.repeat(np.arange(len(A)), n)
        frac = np.concatenate([np.linspace(0.0, 1.0, c) for c in n])
        pts = (A[owner] + frac[:, None] * (B - A)[owner])[:, None, :]
        top = np.asarray(above, dtype=float)[owner]
        out: set[int] = set()
        for eid, members_on in on.items():
            if eid not in tris:
                continue
            use = ~np.isin(owner, np.fromiter(members_on, dtype=np.int64))
            if use.any() and carried_by({eid: tris[eid]}, pts[use], top[use], self.tol):
                out.add(eid)
        return out

    def _footing_connected(self, el: _Element) -> bool:
        if getattr(self, "_footing_links", None) is None:
            links: set[int] = set()
            fids = {ft.id() for ft in self.ifc_file.by_type("IfcFooting")}
            if fids:
                for rel in self.ifc_file.by_type("IfcRelConnectsElements"):
                    a, b = rel.RelatingElement, rel.RelatedElement
                    if a is None or b is None:
                        continue
                    if a.id() in fids:
                        links.add(b.id())
                    if b.id() in fids:
                        links.add(a.id())
            self._footing_links = links
        return el.eid in self._footing_links

    # ------------------------------------------------------------------ loose parts, member idealisation, pairs
    def _loose_parts(self, elements, seg_elem, members, restraints) -> bool:
        """Leave out every element of a connected group with no supported node; True if any was."""
        from scipy.sparse import coo_array
        from scipy.sparse.csgraph import connected_components

        n = len(restraints)
        supported = restraints.any(axis=1)
        if not supported.any():  # nothing to measure loose parts against: the analysis reports the mechanism
            self.notes.append("No node was supported: the frame is free in space (name the supports with "
                              "--supports QUERY[:fixed|pinned] or a support level).")
            return False
        g = coo_array((np.ones(len(members)), (members[:, 0], members[:, 1])), shape=(n, n))
        ncomp, label = connected_components(g, directed=False)
        if ncomp == 1:
            return False
        held = np.zeros(ncomp, dtype=bool)
        held[label[supported]] = True
        loose_seg = ~held[label[members[:, 0]]]
        if not loose_seg.any():
            return False
        loose_elems = sorted(set(seg_elem[loose_seg].tolist()))
        fresh = {elements[k].eid for k in loose_elems} - self._rescue
        if fresh:  # once: let their joints reach for a supported group, then derive again
            self._rescue |= fresh
            return True
        sizes = Counter(int(label[members[s, 0]]) for s in np.flatnonzero(loose_seg))
        group_of = {int(seg_elem[s]): int(label[members[s, 0]]) for s in np.flatnonzero(loose_seg)}
        for k in loose_elems:
            size = sizes[group_of[k]]
            self._leave_out(elements[k], "connected to no support: " + (
                "a loose element touching no supported node" if size == 1 else
                f"part of a group of {size} members touching no supported node"))
        return True

    def _member_idealisation(self, elements, seg_elem, members, restraints, A, B, lengths) -> None:
        """Decide per IfcMember: pin-ended axial bar or frame member (module docstring, End releases)."""
        idx = [k for k, el in enumerate(elements) if el.kind == "member"]
        if not idx:
            return
        if self.members_as != "auto":
            self.truss[idx] = self.members_as == "truss"
            what = "pin-ended axial bars (truss)" if self.members_as == "truss" else "frame members (rigid ends)"
            for k in idx:
                self.diagnostics.append(Diagnostic("info", elements[k].eid, f"{elements[k].label}: {what} (--members {self.members_as})"))
            return
        at_node: dict[int, set[int]] = defaultdict(set)
        n_seg = Counter(seg_elem.tolist())
        for s in range(len(members)):
            at_node[int(members[s, 0])].add(int(seg_elem[s]))
            at_node[int(members[s, 1])].add(int(seg_elem[s]))
        ends_of: dict[int, list[int]] = defaultdict(list)
        for s in range(len(members)):
            ends_of[int(seg_elem[s])] += [int(members[s, 0]), int(members[s, 1])]
        ex = (B - A) / lengths[:, None]
        cos_inline = math.cos(math.radians(5.0))
        bars: list[str] = []
        frames: list[str] = []
        for k in idx:
            el = elements[k]
            word = _member_role(el.entity)
            if word is not None and word[0] == "frame":
                why = f"a {word[1]} (framing member)"
                bar = False
            elif n_seg[k] > 1:
                why = f"continuous through {n_seg[k] - 1} joint(s) along its span"
                bar = False
            else:
                nodes_k = ends_of[k]
                first, last = nodes_k[0], nodes_k[-1]
                free = [v for v in (first, last) if not (at_node[v] - {k}) and not restraints[v].any()]
                inline = None
                for v in (first, last):
                    for j in at_node[v] - {k}:
                        if abs(float(ex[j] @ ex[k])) > cos_inline:
                            inline = (v, j)
                            break
                    if inline:
                        break
                if free:
                    why, bar = "an end meets no other element (not a bar between two joints)", False
                elif inline is not None:
                    why, bar = f"continued in line by {elements[inline[1]].label}", False
                else:
                    why, bar = "a bar between two joints" + (f" ({word[1]})" if word is not None else ""), True
            self.truss[k] = bar
            (bars if bar else frames).append(el.label)
            self.diagnostics.append(Diagnostic("info", el.eid, f"{el.label}: {'pin-ended axial bar (truss)' if bar else 'frame member (rigid ends)'}: {why}"))
        self.notes.append(f"IfcMember idealisation (--members auto): {len(bars)} pin-ended axial bars (bars between two "
                          f"joints), {len(frames)} frame members (framing types, continuous or free-ended members); "
                          "the reason per element is in the diagnostics.")

    def _duplicates(self, groups, elements, seg_elem, seg_index, A, B) -> bool:
        """Leave out elements that repeat another element (same class, section and line); True if any."""
        found = False
        for g in groups:
            k0 = int(seg_elem[g[0]])
            for s in g[1:]:
                k = int(seg_elem[s])
                if k == k0 or elements[k].left_out is not None:
                    continue
                if seg_index[s][1] != 1 or seg_index[g[0]][1] != 1 or elements[k].cls != elements[k0].cls:
                    continue
                if self.sec[k].name != self.sec[k0].name or not math.isclose(self.sec[k].A, self.sec[k0].A, rel_tol=1e-6):
                    continue
                same = max(np.linalg.norm(A[k] - A[k0]), np.linalg.norm(B[k] - B[k0]))
                flip = max(np.linalg.norm(A[k] - B[k0]), np.linalg.norm(B[k] - A[k0]))
                if min(same, flip) <= min(self.tol, _SAME_PLACE):
                    self._leave_out(elements[k], f"duplicate: the same class, section and line (within "
                                                 f"{min(self.tol, _SAME_PLACE) * 1000:.3g} mm) as {elements[k0].label}")
                    found = True
        return found

    def _merge_on_one_line(self, groups, elements, seg_elem, members, arrays, off, truss, member_ids, member_labels,
                           section_names, material_names) -> np.ndarray:
        """Merge the segments joining the same two nodes into the first of each group; returns the keep mask."""
        keep = np.ones(len(members), dtype=bool)
        merged = []
        for g in groups:
            f0 = g[0]
            E0, G0 = arrays["E"][f0], arrays["G"][f0]
            EA = GJ = EIy = EIz = EAvy = EAvz = mass = 0.0
            off_sum = np.zeros((2, 3))
            for s in g:
                flip = members[s, 0] != members[f0, 0]
                E, G = arrays["E"][s], arrays["G"][s]
                EA += E * arrays["A"][s]
                EIy += E * arrays["Iy"][s]
                EIz += E * arrays["Iz"][s]
                GJ += G * arrays["J"][s]
                EAvy += G * arrays["Avy"][s]
                EAvz += G * arrays["Avz"][s]
                mass += arrays["density"][s] * arrays["A"][s]
                o = off[s, ::-1] if flip else off[s]
                off_sum += E * arrays["A"][s] * o
            A_sum = EA / E0
            arrays["A"][f0], arrays["Iy"][f0], arrays["Iz"][f0] = A_sum, EIy / E0, EIz / E0
            arrays["J"][f0], arrays["Avy"][f0], arrays["Avz"][f0] = GJ / G0, EAvy / G0, EAvz / G0
            arrays["density"][f0] = mass / A_sum if A_sum > 0 else 0.0
            off[f0] = off_sum / EA if EA > 0 else off[f0]
            truss[f0] = bool(all(truss[s] for s in g))
            others = [member_labels[s] for s in g[1:]]
            names = list(dict.fromkeys(section_names[s] for s in g))
            section_names[f0] = " + ".join(section_names[s] for s in g) if len(names) > 1 or len(g) > 1 else section_names[f0]
            mats = list(dict.fromkeys(material_names[s] for s in g))
            material_names[f0] = " + ".join(mats) if len(mats) > 1 else material_names[f0]
            member_labels[f0] = member_labels[f0] + " merged with " + ", ".join(others)
            keep[g[1:]] = False
            merged.append(member_ids[f0])
            text = (f"on one line with {', '.join(others)}: merged into one analytical member {member_ids[f0]!r} with the "
                    "summed section (E·A, E·I, G·J added, no composite action assumed)")
            for s in g:
                k = int(seg_elem[s])
                self.diagnostics.append(Diagnostic("info", elements[k].eid, f"{elements[k].label}: " + (
                    text if s == f0 else f"on one line with {member_labels[f0].split(' merged with ')[0]}: merged into "
                    f"the analytical member {member_ids[f0]!r} with the summed section")))
        self.notes.append(f"{len(groups)} groups of elements on one line (joining the same two nodes: paired angles, double "
                          f"studs, twin members) were each merged into one analytical member with the summed section: "
                          + _names(merged) + ".")
        return keep

    # ------------------------------------------------------------------ loads
    def _loads(self, elements, seg_elem, members, nodes, member_ids, mats) -> tuple[LoadCase, ...]:
        cases: list[LoadCase] = []
        if any(mt.density > 0 for mt in mats):
            cases.append(LoadCase("Self-weight", self_weight=(0.0, 0.0, -1.0)))
            self.notes.append('Load case "Self-weight": the members\' weight from their material densities, acting down (-Z).')
        else:
            self.notes.append("No material gives a density: no self-weight load case.")
        if not self.area_loads:
            self.notes.append("No area loads were given: the program does not invent floor loads.")
            return tuple(cases)
        by_case: dict[str, list[LineLoad]] = {}
        for row in self.area_loads:
            if len(row) != 3:
                raise ValueError(f"area load {row!r}: expected (storey name or elevation in m, load case name, pressure in Pa)")
            storey, case_name, pressure = row
            level, storey_label = self._level(storey)
            loads = self._tributary(elements, seg_elem, members, nodes, member_ids, level, float(pressure), storey_label, case_name)
            by_case.setdefault(str(case_name), []).extend(loads)
        for name, loads in by_case.items():
            if name == "Self-weight":
                raise ValueError('area load case name "Self-weight" is reserved for the self-weight case')
            cases.append(LoadCase(name, member=tuple(loads)))
        return tuple(cases)

    def _level(self, storey) -> tuple[float, str]:
        if isinstance(storey, (int, float)) and not isinstance(storey, bool):
            return float(storey), f"level {float(storey):.4g} m"
        storeys = [s for s in self.ifc_file.by_type("IfcBuildingStorey") if s.Name == storey]
        if not storeys:
            known = ", ".join(repr(s.Name) for s in self.ifc_file.by_type("IfcBuildingStorey"))
            raise IfcInputError(f"area load: the file has no IfcBuildingStorey named {storey!r} (storeys: {known or 'none'})")
        s = storeys[0]
        if s.ObjectPlacement is not None:
            z = float(self.placements.matrix(s.ObjectPlacement)[2, 3]) * self.scales.length
        else:
            z = float(s.Elevation or 0.0) * self.scales.length
        return z, f"{entity_label(s)} (level {z:.4g} m)"

    def _tributary(self, elements, seg_elem, members, nodes, member_ids, level, pressure, storey_label, case_name) -> list[LineLoad]:
        tol = self.tol
        XA, XB = nodes[members[:, 0]], nodes[members[:, 1]]
        is_beam = np.array([elements[k].kind == "beam" for k in seg_elem], dtype=bool)
        half = np.array([0.5 * self.sec[k].size for k in seg_elem])
        zmid = 0.5 * (XA[:, 2] + XB[:, 2])
        flat = np.abs(XA[:, 2] - XB[:, 2]) <= tol
        sel = np.flatnonzero(is_beam & flat & (np.abs(zmid - level) <= half + tol))
        if len(sel) == 0:
            raise IfcInputError(f"area load on {storey_label}: no horizontal IfcBeam lies at that level to carry it")
        d = XB[sel, :2] - XA[sel, :2]
        Ls = np.linalg.norm(d, axis=1)
        u = d / Ls[:, None]
        ang = np.mod(np.degrees(np.arctan2(u[:, 1], u[:, 0])), 180.0)
        bucket = np.round(ang).astype(int) % 180
        totals: dict[int, float] = {}
        for b_, l_ in zip(bucket, Ls):
            totals[int(b_)] = totals.get(int(b_), 0.0) + float(l_)
        # the two directions with the most beam length (ties in first-seen order)
        groups = [b_ for b_, _ in sorted(totals.items(), key=lambda t: t[1], reverse=True)[:2]]

        def widths(members_in: np.ndarray) -> tuple[np.ndarray, float]:
            uu = u[members_in[0]]
            normal = np.array([-uu[1], uu[0]])
            pa, pb = XA[sel[members_in], :2], XB[sel[members_in], :2]
            off = pa @ normal
            s0, s1 = np.minimum(pa @ uu, pb @ uu), np.maximum(pa @ uu, pb @ uu)
            dd = off[None, :] - off[:, None]  # j relative to i
            overlap = (np.minimum(s1[:, None], s1[None, :]) - np.maximum(s0[:, None], s0[None, :])) > tol
            side_pos = np.where(overlap & (dd > tol), dd, np.inf).min(axis=1)
            side_neg = np.where(overlap & (dd < -tol), -dd, np.inf).min(axis=1)
            spacing = np.minimum(side_pos, side_neg)
            w = 0.5 * (np.where(np.isfinite(side_pos), side_pos, 0.0) + np.where(np.isfinite(side_neg), side_neg, 0.0))
            med = float(np.median(spacing[np.isfinite(spacing)])) if np.isfinite(spacing).any() else math.inf
            return w, med

        choice = None
        for g in groups:
            members_in = np.flatnonzero(bucket == g)
            w, med = widths(members_in)
            if choice is None or med < choice[2] - tol:
                choice = (g, members_in, med, w)
        if choice is None:
            raise IfcInputError(f"area load on {storey_label}: no horizontal IfcBeam lies at that level to carry it")
        g, members_in, med, w = choice
        if not np.isfinite(med):
            raise IfcInputError(f"area load on {storey_label}: the beams at that level have no parallel neighbours to span between")
        loads = []
        total = 0.0
        for i, wi in zip(members_in, w):
            if wi <= 0:
                continue
            s = int(sel[i])
            loads.append(LineLoad(member_ids[s], "z", -pressure * wi, axes="global", source=None))
            total += pressure * wi * Ls[i]
        self.notes.append(
            f"Area load {pressure:.6g} Pa of case {case_name!r} on {storey_label}: one-way slabs spanning between the "
            f"{len(members_in)} beam segments at {g}° in plan (their spacing, median {med:.4g} m, is the shorter); each carries "
            f"half the distance to its nearest parallel neighbour on either side; total {total / 1000:.6g} kN.")
        return loads
