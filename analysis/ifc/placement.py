"""World transforms of IFC object placements, fast enough for large building models.

``ifcopenshell.util.placement.get_local_placement`` walks the whole chain of
``IfcLocalPlacement`` for every element. Building models share a handful of
parent placements (site, building, storeys) among thousands of elements, so
here the parents are computed once and cached by entity id, and the elements'
own placements are read from their raw attributes and turned into matrices
in one batch with numpy.

All matrices are ``(4, 4)`` homogeneous transforms in the file's length
unit, mapping local coordinates to world coordinates: ``X_world = M @ [x, 1]``.
Their rotation columns are the local x, y and z axes in world components.

Notes
-----
The axis construction follows IFC's ``IfcBuildAxes``/``IfcFirstProjAxis``
rule for ``IfcAxis2Placement3D``: z is ``Axis`` (default global Z); x is
``RefDirection`` (default global X) made normal to z; y = z x x.
``IfcGridPlacement`` (every schema) is resolved from its grid: the
location is the intersection of the two grid axes (offset as
IfcVirtualGridIntersection says), in the coordinate system of the IfcGrid
the axes belong to. ``IfcLinearPlacement`` (IFC4X3) is taken from its
``CartesianPosition``; one without it is a `PlacementError`, as is a cycle.
"""
from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import numpy.typing as npt

from ..errors import PlacementError

__all__ = [
    "PlacementCache",
    "grid_placement_matrix",
    "placement_parent",
    "axis_placement_matrix",
    "axis_placement_matrices",
    "transformation_operator_matrix",
    "world_matrices",
]

FloatArray = npt.NDArray[np.float64]

_Z = (0.0, 0.0, 1.0)
_X = (1.0, 0.0, 0.0)


def _ratios(direction, size: int = 3) -> tuple[float, ...] | None:
    """Direction ratios of an IfcDirection padded to ``size`` (or None)."""
    if direction is None:
        return None
    r = direction.get_argument(0)
    if len(r) < size:
        r = tuple(r) + (0.0,) * (size - len(r))
    return tuple(r)


def _point(point, size: int = 3) -> tuple[float, ...]:
    """Coordinates of an IfcCartesianPoint padded to ``size``."""
    if point is None:
        return (0.0,) * size
    if not point.is_a("IfcCartesianPoint"):
        raise ValueError(f"#{point.id()} {point.is_a()}: only IfcCartesianPoint locations are supported")
    c = point.get_argument(0)
    if len(c) < size:
        c = tuple(c) + (0.0,) * (size - len(c))
    return tuple(c)


def _frames_from_axes(loc: FloatArray, z: FloatArray, x: FloatArray) -> FloatArray:
    """Batched homogeneous matrices ``(k,4,4)`` from origins, z and x-hint vectors ``(k,3)``."""
    k = loc.shape[0]
    z = z / np.linalg.norm(z, axis=1)[:, None]
    x = x - np.sum(x * z, axis=1)[:, None] * z
    n = np.linalg.norm(x, axis=1)
    bad = n < 1e-12
    if bad.any():  # RefDirection parallel to Axis: take the first global axis not parallel to z
        alt = np.where(np.abs(z[bad, 0:1]) < 0.9, [[1.0, 0.0, 0.0]], [[0.0, 1.0, 0.0]])
        alt = alt - np.sum(alt * z[bad], axis=1)[:, None] * z[bad]
        x[bad] = alt
        n[bad] = np.linalg.norm(alt, axis=1)
    x = x / n[:, None]
    y = np.cross(z, x)
    M = np.zeros((k, 4, 4))
    M[:, :3, 0] = x
    M[:, :3, 1] = y
    M[:, :3, 2] = z
    M[:, :3, 3] = loc
    M[:, 3, 3] = 1.0
    return M


def _axis_placement_raw(placement) -> tuple[tuple, tuple, tuple]:
    """(location, z, x-hint) of an IfcAxis2Placement3D/2D or IfcAxis1Placement as 3-tuples."""
    if placement is None:
        return (0.0, 0.0, 0.0), _Z, _X
    kind = placement.is_a()
    if kind == "IfcAxis2Placement3D":
        loc = _point(placement.get_argument(0))
        z = _ratios(placement.get_argument(1)) or _Z
        x = _ratios(placement.get_argument(2)) or _X
        return loc, z, x
    if kind == "IfcAxis2Placement2D":
        loc = _point(placement.get_argument(0))
        x = _ratios(placement.get_argument(1)) or _X
        return loc, _Z, x
    if kind == "IfcAxis1Placement":
        loc = _point(placement.get_argument(0))
        z = _ratios(placement.get_argument(1)) or _Z
        return loc, z, _X
    raise ValueError(f"#{placement.id()} {kind}: not an axis placement")


_MATRIX_CACHE: dict[tuple, FloatArray] = {}


def axis_placement_matrix(placement) -> FloatArray:
    """``(4,4)`` matrix of one IfcAxis2Placement3D/2D (None: identity), read-only.

    Matrices are cached by the placement's values, so the many identical
    placements of a building model (extrusion positions, mapping origins)
    cost one dictionary look-up each.
    """
    if placement is None:
        return _EYE
    key = _axis_placement_raw(placement)
    M = _MATRIX_CACHE.get(key)
    if M is None:
        if len(_MATRIX_CACHE) > 100_000:
            _MATRIX_CACHE.clear()
        M = _frames_from_axes(np.array([key[0]], dtype=float), np.array([key[1]], dtype=float),
                              np.array([key[2]], dtype=float))[0]
        M.flags.writeable = False
        _MATRIX_CACHE[key] = M
    return M


def axis_placement_matrices(placements: Sequence) -> FloatArray:
    """``(k,4,4)`` matrices of IfcAxis2Placement3D/2D entities (None rows: identity)."""
    k = len(placements)
    if k == 0:
        return np.zeros((0, 4, 4))
    raw = [_axis_placement_raw(p) for p in placements]
    loc = np.array([r[0] for r in raw], dtype=float)
    z = np.array([r[1] for r in raw], dtype=float)
    x = np.array([r[2] for r in raw], dtype=float)
    return _frames_from_axes(loc, z, x)


def transformation_operator_matrix(op) -> FloatArray:
    """``(4,4)`` matrix of an IfcCartesianTransformationOperator2D/3D (uniform or non-uniform).

    IFC's ``IfcBaseAxis`` rule: z = Axis3 (default Z), x = Axis1 made normal
    to z, y = z x x; the columns are then scaled by Scale (Scale2, Scale3).
    """
    if op is None:
        return np.eye(4)
    axis1 = _ratios(op.Axis1) or _X
    axis3 = _ratios(getattr(op, "Axis3", None)) if hasattr(op, "Axis3") else None
    M = _frames_from_axes(np.array([_point(op.LocalOrigin)], dtype=float), np.array([axis3 or _Z], dtype=float),
                          np.array([axis1], dtype=float))[0]
    s1 = float(op.Scale) if op.Scale is not None else 1.0
    s2 = float(getattr(op, "Scale2", None) or s1) if hasattr(op, "Scale2") else s1
    s3 = float(getattr(op, "Scale3", None) or s1) if hasattr(op, "Scale3") else s1
    M[:3, 0] *= s1
    M[:3, 1] *= s2
    M[:3, 2] *= s3
    return M


class PlacementCache:
    """World matrices of object placements with cached parents.

    ``matrix(p)`` gives one world matrix (cached by id); ``batch(ps)`` gives
    ``(k,4,4)`` for many leaf placements, reading each leaf's raw attributes
    once and composing with the cached parents in one numpy product.
    """

    def __init__(self) -> None:
        self._world: dict[int, FloatArray] = {}

    def matrix(self, placement) -> FloatArray:
        """World matrix ``(4,4)`` of an IfcObjectPlacement (None: identity).

        The chain of parents is walked without recursion (a chain thousands
        deep is fine), and a placement that is, through its parents, relative
        to itself is a `PlacementError` naming the cycle.

        Raises
        ------
        PlacementError
            A cycle, or a placement that cannot be resolved (see `placement_parent`).
        """
        if placement is None:
            return np.eye(4)
        M = self._world.get(placement.id())
        if M is not None:
            return M
        chain: list = []
        on_chain: dict[int, int] = {}
        p = placement
        while p is not None and p.id() not in self._world:
            pid = p.id()
            if pid in on_chain:
                loop = chain[on_chain[pid]:] + [p]
                raise PlacementError(f"{_label(placement)}: its placement chain runs in a circle ("
                                     + " -> ".join(_label(q) for q in loop) + ")", pid)
            on_chain[pid] = len(chain)
            chain.append(p)
            p = placement_parent(p)
        for q in reversed(chain):  # from the outermost placement in
            parent = placement_parent(q)
            base = self._world[parent.id()] if parent is not None else _EYE
            self._world[q.id()] = base @ self._local(q)
        return self._world[placement.id()]

    def _local(self, placement) -> FloatArray:
        """The matrix of ``placement`` relative to its `placement_parent` (file length units)."""
        kind = placement.is_a()
        if kind == "IfcLocalPlacement":
            return axis_placement_matrix(placement.get_argument(1))
        if kind == "IfcGridPlacement":
            return grid_placement_matrix(placement)
        if kind == "IfcLinearPlacement":
            cartesian = getattr(placement, "CartesianPosition", None)
            if cartesian is not None:
                return axis_placement_matrix(cartesian)
            raise PlacementError(f"{_label(placement)}: a placement by distance along an alignment without its "
                                 "CartesianPosition is not supported; export the model with Cartesian positions "
                                 "(or local placements)", placement.id())
        raise PlacementError(f"{_label(placement)}: object placements of this kind are not supported", placement.id())

    def batch(self, placements: Sequence) -> FloatArray:
        """World matrices ``(k,4,4)`` of many placements (typically one per element)."""
        k = len(placements)
        out = np.empty((k, 4, 4))
        out[:] = np.eye(4)
        rows: list[int] = []
        parents: list[FloatArray] = []
        raws: list[tuple] = []
        for i, p in enumerate(placements):
            if p is None:
                continue
            cached = self._world.get(p.id())
            if cached is not None:
                out[i] = cached
                continue
            if p.is_a() != "IfcLocalPlacement":
                out[i] = self.matrix(p)
                continue
            parent = p.get_argument(0)
            rel = p.get_argument(1)
            if rel is None or rel.is_a() != "IfcAxis2Placement3D":
                out[i] = self.matrix(p)
                continue
            loc = rel.get_argument(0)
            if loc is None or loc.is_a() != "IfcCartesianPoint":
                out[i] = self.matrix(p)
                continue
            rows.append(i)
            parents.append(self.matrix(parent) if parent is not None else _EYE)
            c = loc.get_argument(0)
            a = rel.get_argument(1)
            r = rel.get_argument(2)
            raws.append((c if len(c) == 3 else tuple(c) + (0.0,) * (3 - len(c)),
                         a.get_argument(0) if a is not None else _Z,
                         r.get_argument(0) if r is not None else _X))
        if rows:
            loc = np.array([q[0] for q in raws], dtype=float)
            z = np.array([q[1] for q in raws], dtype=float)
            x = np.array([q[2] for q in raws], dtype=float)
            local = _frames_from_axes(loc, z, x)
            out[rows] = np.matmul(np.stack(parents), local)
        return out


_EYE = np.eye(4)
_EYE.flags.writeable = False


def world_matrices(placements: Sequence) -> FloatArray:
    """World matrices ``(k,4,4)`` of object placements, parents cached (file length units).

    Examples
    --------
    >>> world_matrices([None]).shape
    (1, 4, 4)
    """
    return PlacementCache().batch(placements)


# --------------------------------------------------------------------------- parents and grids
def _label(entity) -> str:
    from ..errors import entity_label

    try:
        return entity_label(entity)
    except Exception:  # not an entity: the caller's text stays readable
        return repr(entity)


def placement_parent(placement):
    """The placement ``placement`` is relative to (None: the world).

    IfcLocalPlacement and IfcLinearPlacement: ``PlacementRelTo``;
    IfcGridPlacement: the placement of the IfcGrid its axes belong to (its
    location is given in the grid's coordinate system).
    """
    kind = placement.is_a()
    if kind == "IfcGridPlacement":
        return _grid_of(placement).ObjectPlacement
    if kind in ("IfcLocalPlacement", "IfcLinearPlacement"):
        return placement.get_argument(0)
    return getattr(placement, "PlacementRelTo", None)


def _grid_of(placement):
    intersection = placement.PlacementLocation
    axes = list(getattr(intersection, "IntersectingAxes", None) or ())
    for axis in axes:
        for inverse in ("PartOfU", "PartOfV", "PartOfW"):
            grids = getattr(axis, inverse, None) or ()
            for grid in grids:
                return grid
    raise PlacementError(f"{_label(placement)}: its grid axes belong to no IfcGrid, so the grid placement has no "
                         "coordinate system", placement.id())


def _axis_line(owner, axis) -> tuple[FloatArray, FloatArray]:
    """Point and unit tangent ``(2,)`` of a straight grid axis (sense as the axis says)."""
    curve = axis.AxisCurve
    pts: list[tuple[float, ...]] = []
    c = curve
    if c.is_a("IfcTrimmedCurve"):
        c = c.BasisCurve
    if c.is_a("IfcPolyline"):
        pts = [tuple(p.Coordinates) for p in c.Points]
        if len(pts) > 2:
            a, b = np.array(pts[0][:2], dtype=float), np.array(pts[-1][:2], dtype=float)
            mids = np.array([q[:2] for q in pts[1:-1]], dtype=float)
            d = b - a
            n = float(np.linalg.norm(d))
            off = np.abs((mids - a) @ np.array([-d[1], d[0]])) / max(n, 1e-300)
            if n == 0 or off.max() > 1e-9 * max(n, 1.0):
                raise PlacementError(f"{_label(owner)}: grid axis {axis.AxisTag!r} (#{axis.id()}) is a bent "
                                     "polyline; only straight grid axes are supported", owner.id())
        if len(pts) < 2:
            raise PlacementError(f"{_label(owner)}: grid axis {axis.AxisTag!r} (#{axis.id()}) has fewer than two "
                                 "points", owner.id())
        a, b = np.array(pts[0][:2], dtype=float), np.array(pts[-1][:2], dtype=float)
        t = b - a
        if c is not curve and not getattr(curve, "SenseAgreement", True):
            t = -t
    elif c.is_a("IfcLine"):
        a = np.array(tuple(c.Pnt.Coordinates)[:2], dtype=float)
        t = np.array(tuple(c.Dir.Orientation.DirectionRatios)[:2], dtype=float)
        if c is not curve and not getattr(curve, "SenseAgreement", True):
            t = -t
    else:
        raise PlacementError(f"{_label(owner)}: grid axis {axis.AxisTag!r} (#{axis.id()}) is a {c.is_a()}; only "
                             "straight grid axes (IfcPolyline, IfcLine) are supported", owner.id())
    n = float(np.linalg.norm(t))
    if not math.isfinite(n) or n == 0.0:
        raise PlacementError(f"{_label(owner)}: grid axis {axis.AxisTag!r} (#{axis.id()}) has zero length", owner.id())
    t = t / n
    if getattr(axis, "SameSense", True) is False:
        t = -t
    return a, t


def _intersection(owner, vgi) -> tuple[FloatArray, FloatArray]:
    """Point ``(3,)`` in grid coordinates and the first axis' tangent ``(2,)`` of an IfcVirtualGridIntersection.

    IFC: OffsetDistances[1] and [2] offset the two axes normal to themselves,
    positive to the left of the axis' tangent (90 degrees counter-clockwise);
    [3] lifts the point along the grid's z axis.
    """
    axes = list(vgi.IntersectingAxes or ())
    if len(axes) != 2:
        raise PlacementError(f"{_label(owner)}: the grid intersection #{vgi.id()} names {len(axes)} axes, not 2",
                             owner.id())
    offsets = [float(v) for v in (vgi.OffsetDistances or ())] + [0.0, 0.0, 0.0]
    (p1, t1), (p2, t2) = _axis_line(owner, axes[0]), _axis_line(owner, axes[1])
    q1 = p1 + offsets[0] * np.array([-t1[1], t1[0]])
    q2 = p2 + offsets[1] * np.array([-t2[1], t2[0]])
    A = np.column_stack([t1, -t2])
    if abs(float(np.linalg.det(A))) < 1e-12:
        raise PlacementError(f"{_label(owner)}: grid axes {axes[0].AxisTag!r} and {axes[1].AxisTag!r} are parallel "
                             "and do not intersect", owner.id())
    s = np.linalg.solve(A, q2 - q1)
    xy = q1 + s[0] * t1
    return np.array([xy[0], xy[1], offsets[2]]), t1


def grid_placement_matrix(placement) -> FloatArray:
    """``(4,4)`` matrix of an IfcGridPlacement in the coordinate system of its IfcGrid.

    x follows PlacementRefDirection: unset, the first axis' tangent; an
    IfcDirection, that direction; a second IfcVirtualGridIntersection, from
    the location towards it. z is the grid's z (IFC: the xy plane of the
    placement is the grid's xy plane).
    """
    loc, tangent = _intersection(placement, placement.PlacementLocation)
    ref = placement.PlacementRefDirection
    if ref is None:
        x = np.array([tangent[0], tangent[1], 0.0])
    elif ref.is_a("IfcDirection"):
        r = list(ref.DirectionRatios) + [0.0, 0.0]
        x = np.array([float(r[0]), float(r[1]), 0.0])
    else:
        other, _ = _intersection(placement, ref)
        x = other - loc
        x[2] = 0.0
    if float(np.linalg.norm(x)) < 1e-12:
        raise PlacementError(f"{_label(placement)}: PlacementRefDirection gives no direction in the grid's plane",
                             placement.id())
    return _frames_from_axes(loc[None, :], np.array([[0.0, 0.0, 1.0]]), x[None, :])[0]
