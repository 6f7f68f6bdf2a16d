"""Route 2 of the IFC reader: an analytical frame derived from physical elements only.

`derive_frame` turns the ``IfcBeam``, ``IfcColumn`` and ``IfcMember``
elements of a file (with their standard-case subtypes and their type objects)
into a `Frame`, for files that carry no structural analysis model.

What is derived, and by which rule (each rule is also reported in the notes)
-----------------------------------------------------------------------------
Axis
    From the element's ``Axis`` representation (an ``IfcPolyline``,
    ``IfcIndexedPolyCurve`` or a trimmed ``IfcLine``: its first and last
    points), else from its ``Body``: the first ``IfcExtrudedAreaSolid`` found
    (through ``IfcMappedItem`` and the first operand of boolean results),
    along its ``ExtrudedDirection`` in its ``Position``, ``Depth`` long.
    Both go to world coordinates through the placement chain
    (`analysis.ifc.placement`).
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
    nothing but lies within half the section size (plus the tolerance) of
    another member's node or centre line is snapped to that node (or to a
    new node on that centre line) and keeps its true position through a
    rigid offset (``Frame.offsets``); each such end is reported.
Supports
    Every node at the support level (``support_level`` in m; default the
    lowest column bottom) and every column bottom standing on an
    ``IfcFooting`` (connected by ``IfcRelConnectsElements``, or within the
    tolerance of the footing's top face) gets a support, 'fixed' unless
    ``defaults.support == 'pinned'``.
End releases
    The file's declared connections come first:
    ``IfcRelConnectsWithRealizingElements.ConnectionType`` labels meaning a
    pin ("pin", "hinge", "simple", "shear", "flexible") or a rigid joint
    ("rigid", "fixed", "moment", "welded", "continuous") set the end of the
    related element (or the relating one, whichever ends there). Otherwise
    the documented defaults: beam to column rigid (``defaults.beam_column``
    'rigid' | 'pinned'); a beam end framing into another beam's span with
    no column there pinned, My and Mz released (``defaults.secondary_beams``
    'pinned' | 'rigid'); every ``IfcMember`` a pin-ended axial bar, truss
    (``defaults.members`` 'truss' | 'frame').
Sections and materials
    Through `analysis.ifc.materials` and `analysis.ifc.sections` (a body's
    swept profile when the element has no profile usage), converted with
    `analysis.units`.
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

from ..errors import Diagnostic, IfcInputError, entity_label
from ..model import Frame, LineLoad, LoadCase
from .placement import PlacementCache, axis_placement_matrix, transformation_operator_matrix

__all__ = ["derive_frame", "ELEMENT_TYPES", "CONNECTION_WORDS"]

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
    note: str = ""


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


def _connection_fixity(label: str | None) -> str | None:
    if not label:
        return None
    text = str(label).lower()
    for word, fixity in CONNECTION_WORDS:
        if word in text:
            return fixity
    return None


# --------------------------------------------------------------------------- main entry
def derive_frame(ifc_file, *, scales=None, merge_tolerance: float = 0.01, support_level: float | None = None,
                 defaults: Any = None, area_loads: Sequence[tuple] | None = None,
                 ) -> tuple[Frame, list[Diagnostic], list[str]]:
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
        ('truss' | 'frame'), the material defaults ``E``, ``G``,
        ``poisson``, ``density`` (SI) and ``section`` (a `Section`) used
        where the file gives none (e.g. `analysis.ifc.reader.ReaderDefaults`).
    area_loads : sequence of (storey, case, pressure), optional
        Storey name (or elevation in m), load case name and pressure in Pa
        (downwards) spread over that floor's beams (module docstring).

    Returns
    -------
    (Frame, list[Diagnostic], list[str])
        The frame in SI units, per-element findings, and plain-language notes
        on what was derived and which defaults were applied.

    Raises
    ------
    IfcInputError
        An element without a usable axis or body, of zero length, with an
        unknown profile or without material (and no default); an unknown
        storey in ``area_loads``. The message names the entity.
    """
    return _Deriver(ifc_file, scales, merge_tolerance, support_level, defaults, area_loads).run()


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
    diagnostics: list[Diagnostic] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def __post_init__(self) -> None:
        if self.scales is None:
            from ..units import unit_scales

            self.scales = unit_scales(self.ifc_file)
        if not (self.tol >= 0 and math.isfinite(self.tol)):
            raise ValueError(f"merge_tolerance must be a finite number >= 0, got {self.tol!r}")
        self.support_kind = _option(self.defaults, "support", "fixed", ("fixed", "pinned"))
        self.beam_column = _option(self.defaults, "beam_column", "rigid", ("rigid", "pinned"))
        self.secondary = _option(self.defaults, "secondary_beams", "pinned", ("pinned", "rigid"))
        self.members_as = _option(self.defaults, "members", "truss", ("truss", "frame"))
        self.placements = PlacementCache()
        self._card_cache: dict = {}

    # ------------------------------------------------------------------ run
    def run(self) -> tuple[Frame, list[Diagnostic], list[str]]:
        elements = self._collect()
        if not elements:
            raise IfcInputError("the file has no IfcBeam, IfcColumn or IfcMember elements (and no structural analysis model)")
        self._geometry(elements)
        self._properties(elements)
        frame = self._topology(elements)
        return frame, self.diagnostics, self.notes

    # ------------------------------------------------------------------ elements
    def _collect(self) -> list[_Element]:
        f = self.ifc_file
        elements: list[_Element] = []
        seen: set[int] = set()
        for base in ELEMENT_TYPES:
            kind = _KIND[base]
            for e in f.by_type(base):
                eid = e.id()
                if eid in seen:
                    continue
                seen.add(eid)
                cls = e.is_a()
                name = e.get_argument(2) or ""
                label = f"#{eid} {cls} '{name}'" if name else f"#{eid} {cls}"
                elements.append(_Element(e, eid, cls, kind, name, e.get_argument(0), label, e.get_argument(5)))
        elements.sort(key=lambda el: el.eid)
        # other physical elements are not read: say which
        try:
            others = Counter(e.is_a() for e in f.by_type("IfcElement") if e.id() not in seen)
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
        for el in elements:
            unusable = _read_representation(el)
            if el.axis_raw is None and el.body is None:
                why = f"its Body is {unusable}, not an extruded solid" if unusable else "it has neither"
                raise IfcInputError(f"{el.label}: no 'Axis' curve and no 'Body' extrusion to derive the analytical axis from ({why})", el.eid)
        self.world = self.placements.batch([el.placement for el in elements])

    # ------------------------------------------------------------------ sections, materials, axes
    def _properties(self, elements: list[_Element]) -> None:
        from .materials import element_material, element_profile

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
        typed: dict[int, int] = {}
        for rel in f.by_type("IfcRelDefinesByType"):
            t = rel.RelatingType.id()
            for o in rel.RelatedObjects:
                typed[o.id()] = t

        mat_defaults = _MaterialDefaults(self.defaults) if self.defaults is not None else None
        groups: dict[tuple, tuple] = {}
        sections: dict[tuple, _SectionInfo] = {}
        mat_cache: dict = {}
        m = len(elements)
        self.sec: list[_SectionInfo] = [None] * m  # type: ignore[list-item]
        self.mat: list = [None] * m
        self.truss = np.zeros(m, dtype=bool)
        for k, el in enumerate(elements):
            truss = el.kind == "member" and self.members_as == "truss"
            self.truss[k] = truss
            own = assoc.get(el.eid)
            t = typed.get(el.eid)
            key = (own, t if own is None else None, truss)
            hit = groups.get(key)
            if hit is None:
                profile, cardinal, usage = element_profile(f, el.entity)
                material, diags = element_material(f, el.entity, scales, mat_defaults, need_density=False,
                                                   need_shear=not truss, cache=mat_cache)
                hit = (profile, cardinal, usage, material, diags, el.label)
                groups[key] = hit
                self.diagnostics.extend(diags)
            else:
                if hit[4]:
                    self.diagnostics.extend(Diagnostic(d.level, el.eid, d.message.replace(hit[5], el.label)) for d in hit[4])
            profile, cardinal, usage, material, _, _ = hit
            if profile is None:
                profile = el.body_profile
                if profile is None:
                    default_section = _option(self.defaults, "section", None)
                    if default_section is None:
                        raise IfcInputError(f"{el.label}: no profile (no material profile set and no extruded body) to take the section from", el.eid)
                    self.sec[k], self.mat[k] = self._default_section(default_section), material
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
            self.sec[k] = sec
            self.mat[k] = material
            self._centroid_line(el, sec)

    @staticmethod
    def _default_section(section) -> _SectionInfo:
        """A user-given `Section` (SI) as section info: centred, size from the radius of gyration."""
        size = 2.0 * math.sqrt(3.0 * max(section.Iy, section.Iz) / section.A) if section.A > 0 else 0.0
        return _SectionInfo(section.name, section.A, section.Iy, section.Iz, section.J, section.Avy, section.Avz, 0.0,
                            np.zeros(2), (0.0, 0.0, 0.0, 0.0), True, size)

    def _centroid_line(self, el: _Element, sec: _SectionInfo) -> None:
        """Local (element coordinates, file units) centroid-line ends and profile y direction."""
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
    def _topology(self, elements: list[_Element]) -> Frame:
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
        for k in np.flatnonzero(lengths <= 1e-9 * scale).tolist():
            raise IfcInputError(f"{elements[k].label}: zero length (its analytical axis starts and ends at the same point)", elements[k].eid)
        ref = np.full((m, 3), np.nan)
        has_y = np.array([el.yaxis is not None for el in elements])
        if has_y.any():
            Y = np.array([el.yaxis for el in elements if el.yaxis is not None])
            ref[has_y] = np.einsum("kij,kj->ki", R[has_y], Y)
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
            raise IfcInputError(f"{elements[k].label}: shorter ({lengths[k] * 1000:.3g} mm) than the merge tolerance: both ends merge into one node", elements[k].eid)

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
        free = np.flatnonzero((degree == 1) & ~on_span)
        new_points: list[np.ndarray] = []
        eccentric = []
        if len(free):
            # braces first, then beams, then columns: a column end is the last to move
            first_end = np.full(node_count, -1, dtype=np.int64)
            first_end[end_node[::-1]] = np.arange(2 * m)[::-1]
            free = free[np.argsort(-kinds[end_elem[first_end[free]]], kind="stable")]
            rmax = float(half.max()) + tol
            near = ntree.query_ball_point(P[free], r=rmax)
            moved_away: set[int] = set()
            received: set[int] = set()
            for node, cands in zip(free, near):
                if node in received:
                    continue
                e = int(first_end[node])
                k, end = int(end_elem[e]), int(e >= m)
                best = None
                for c in cands:
                    if c == node or c in elem_nodes[k] or c in moved_away or degree[c] == 0 and not on_span[c]:
                        continue
                    d = float(np.linalg.norm(P[c] - P[node]))
                    if d <= node_half[c] + tol and (best is None or d < best[0]):
                        best = (d, c)
                target = None
                if best is not None:
                    target = best[1]
                else:
                    # the centre line of another member within its half size
                    lines = self._nearest_line(A, B, lengths, half, P[node], k, tol)
                    if lines is not None:
                        s, tv, d = lines
                        new_points.append(A[s] + tv * (B[s] - A[s]))
                        target = node_count + len(new_points) - 1
                        landings[s].append((tv, target))
                if target is None:
                    continue
                moved_away.add(int(node))
                received.add(int(target))
                pos = P[node]
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
                              f"tolerance but within half its section size) were joined to the centre-line node by rigid offsets: "
                              + _names(sorted({elements[k].label for k, *_ in eccentric})) + ".")
        same = elem_nodes[:, 0] == elem_nodes[:, 1]
        for k in np.flatnonzero(same).tolist():
            raise IfcInputError(f"{elements[k].label}: both ends join the same node", elements[k].eid)

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
        nodes = P[order]
        n = len(nodes)
        node_ids = tuple(f"N{i + 1}" for i in range(n))
        members = new_index[seg_nodes_a]
        elem_nodes_new = new_index[elem_nodes]

        # -- 7. supports ----------------------------------------------------------
        restraints = self._supports(elements, elem_nodes_new, nodes, A, B)

        # -- 8. member arrays -----------------------------------------------------
        names = Counter(el.name for el in elements if el.name)
        base_ids = [el.name if el.name and names[el.name] == 1 else el.gid for el in elements]
        member_ids = []
        member_labels = []
        for k, (s, ns) in zip(seg_elem, seg_index):
            member_ids.append(base_ids[k] if ns == 1 else f"{base_ids[k]}/{s}")
            member_labels.append(elements[k].label if ns == 1 else f"{elements[k].label} segment {s} of {ns}")
        pair_keys = np.sort(members, axis=1)
        _, first, counts = np.unique(pair_keys, axis=0, return_index=True, return_counts=True)
        if (counts > 1).any():
            row = pair_keys[first[np.argmax(counts > 1)]]
            dup = np.flatnonzero((pair_keys == row).all(axis=1))
            k0 = seg_elem[dup[0]]
            raise IfcInputError(f"{elements[k0].label}: joins the same two nodes as "
                                f"{', '.join(member_labels[d] for d in dup[1:])} (duplicate members)", elements[k0].eid)
        secs = [self.sec[k] for k in seg_elem]
        mats = [self.mat[k] for k in seg_elem]
        s_count = len(seg_elem)
        rel = np.zeros((s_count, 2, 6), dtype=bool)
        off = np.zeros((s_count, 2, 3))
        first_seg = np.array([s == 1 for s, _ in seg_index])
        last_seg = np.array([s == ns for s, ns in seg_index])
        rel[first_seg, 0] = releases[seg_elem_a[first_seg], 0]
        rel[last_seg, 1] = releases[seg_elem_a[last_seg], 1]
        off[first_seg, 0] = offsets[seg_elem_a[first_seg], 0]
        off[last_seg, 1] = offsets[seg_elem_a[last_seg], 1]
        truss = self.truss[seg_elem_a]
        rel[truss] = False

        loads = self._loads(elements, seg_elem_a, members, nodes, member_ids, mats)
        frame = Frame(
            node_ids=node_ids,
            nodes=nodes,
            member_ids=tuple(member_ids),
            members=members.astype(np.int32),
            A=_floats(s.A for s in secs), Iy=_floats(s.Iy for s in secs), Iz=_floats(s.Iz for s in secs),
            J=_floats(s.J for s in secs), Avy=_floats(s.Avy for s in secs), Avz=_floats(s.Avz for s in secs),
            E=_floats(mt.E for mt in mats), G=_floats(mt.shear_modulus for mt in mats),
            density=_floats(mt.density for mt in mats),
            ref=ref[seg_elem_a] if s_count else np.zeros((0, 3)),
            roll=_floats(s.roll for s in secs),
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
            section_names=tuple(s.name for s in secs),
            material_names=tuple(mt.name for mt in mats),
            name=self._project_name(),
        )
        self.notes.append(f"Analytical frame: {n} nodes, {s_count} members from {m} elements.")
        return frame

    def _project_name(self) -> str:
        projects = self.ifc_file.by_type("IfcProject")
        return str(projects[0].Name or "") if projects else ""

    def _nearest_line(self, A, B, lengths, half, x, k, tol):
        """(element, t, distance) of the nearest other centre line within its half size + tol of ``x``."""
        if getattr(self, "_mid_tree", None) is None:
            from scipy.spatial import cKDTree

            self._mid_tree = cKDTree(0.5 * (A + B))
            self._mid_reach = float((0.5 * lengths + half).max()) + tol
        cand = np.array(self._mid_tree.query_ball_point(x, r=self._mid_reach), dtype=np.int64)
        cand = cand[cand != k]
        if len(cand) == 0:
            return None
        d = B[cand] - A[cand]
        tv = np.clip(np.sum((x - A[cand]) * d, axis=1) / lengths[cand] ** 2, 0.0, 1.0)
        dist = np.linalg.norm(A[cand] + tv[:, None] * d - x, axis=1)
        ok = (dist <= half[cand] + tol) & (tv * lengths[cand] > tol) & ((1 - tv) * lengths[cand] > tol)
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
    def _supports(self, elements, elem_nodes, nodes, A, B) -> np.ndarray:
        tol = self.tol
        n = len(nodes)
        restraints = np.zeros((n, 6), dtype=bool)
        cols = [k for k, el in enumerate(elements) if el.kind == "column"]
        bottoms = {}
        for k in cols:
            end = 0 if A[k, 2] <= B[k, 2] else 1
            bottoms[k] = int(elem_nodes[k, end])
        if self.support_level is not None:
            level = float(self.support_level)
            how = f"the support level given ({level:.4g} m)"
        elif bottoms:
            level = float(min(nodes[v, 2] for v in bottoms.values()))
            how = f"the lowest column bottom ({level:.4g} m)"
        else:
            level = float(nodes[:, 2].min())
            how = f"the lowest node ({level:.4g} m; the model has no columns)"
        at_level = set(np.flatnonzero(np.abs(nodes[:, 2] - level) <= max(tol, 1e-9)).tolist())
        on_footing = self._footing_nodes(elements, bottoms, nodes)
        supported = sorted(at_level | on_footing)
        comps = slice(0, 6) if self.support_kind == "fixed" else slice(0, 3)
        restraints[supported, comps] = True
        extra = on_footing - at_level
        self.notes.append(
            f"Supports ({self.support_kind}, the documented default unless changed): {len(at_level)} nodes at {how}"
            + (f", and {len(extra)} further column bottoms standing on footings" if extra else "")
            + (f"; {len(on_footing)} column bottoms stand on IfcFooting elements" if on_footing else "") + ".")
        if not supported:
            self.notes.append("No node was supported: the frame is free in space.")
        return restraints

    def _footing_nodes(self, elements, bottoms: dict[int, int], nodes) -> set[int]:
        f = self.ifc_file
        footings = f.by_type("IfcFooting")
        if not footings or not bottoms:
            return set()
        L = self.scales.length
        index = {el.eid: k for k, el in enumerate(elements)}
        fids = {ft.id() for ft in footings}
        found: set[int] = set()
        for rel in f.by_type("IfcRelConnectsElements"):
            a, b = rel.RelatingElement, rel.RelatedElement
            if a is None or b is None:
                continue
            for x, y in ((a, b), (b, a)):
                if x.id() in fids and y.id() in index and index[y.id()] in bottoms:
                    found.add(bottoms[index[y.id()]])
        # geometry: the top face of the footing's extrusion
        tops = []
        W = self.placements.batch([ft.ObjectPlacement for ft in footings])
        for ft, M in zip(footings, W):
            el = _Element(ft, ft.id(), ft.is_a(), "footing", "", "", "", None)
            if _read_representation(el) is not None or el.body is None:
                continue
            Mb, d, profile = el.body
            Mw = M @ Mb
            base = Mw[:3, 3] * L
            top = base + Mw[:3, :3] @ d * L
            try:
                from .sections import section_properties

                box, _ = _profile_box(profile, section_properties(profile))
            except Exception:  # a footing profile we cannot size: its placement point only
                box = (0.0, 0.0, 0.0, 0.0)
            corners = np.array([[box[0], box[2], 0], [box[1], box[2], 0], [box[1], box[3], 0], [box[0], box[3], 0]])
            upper = top if top[2] >= base[2] else base
            shift = upper - base
            pts = (corners @ Mw[:3, :3].T) * L + base + shift
            tops.append((float(upper[2]), pts[:, :2].min(axis=0), pts[:, :2].max(axis=0)))
        for k, node in bottoms.items():
            x = nodes[node]
            for ztop, lo, hi in tops:
                if abs(x[2] - ztop) <= self.tol and np.all(x[:2] >= lo - self.tol) and np.all(x[:2] <= hi + self.tol):
                    found.add(node)
                    break
        return found

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
