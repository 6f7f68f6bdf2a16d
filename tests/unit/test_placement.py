"""Object placements: local chains (deep, cyclic), grid placements, linear placements.

Expected positions follow from the IFC definitions of IfcLocalPlacement, IfcGridPlacement and
IfcVirtualGridIntersection (buildingSMART IFC 4.3 documentation, 8.7.3.12 and 8.7.3.16): the grid
intersection of two straight axes, offsets normal to each axis (positive to the left of its direction),
the third offset along the grid's z; all in the coordinate system of the IfcGrid.
"""
from __future__ import annotations

import ifcopenshell
import numpy as np
import pytest

from analysis.errors import PlacementError
from analysis.ifc.placement import PlacementCache, grid_placement_matrix, placement_parent

SCHEMAS = ["IFC2X3", "IFC4", "IFC4X3"]


def _axis2(f, origin=(0.0, 0.0, 0.0), z=None, x=None):
    return f.create_entity("IfcAxis2Placement3D", Location=f.create_entity("IfcCartesianPoint", Coordinates=origin),
                           Axis=f.create_entity("IfcDirection", DirectionRatios=z) if z else None,
                           RefDirection=f.create_entity("IfcDirection", DirectionRatios=x) if x else None)


def _local(f, rel_to, origin=(0.0, 0.0, 0.0), **kw):
    return f.create_entity("IfcLocalPlacement", PlacementRelTo=rel_to, RelativePlacement=_axis2(f, origin, **kw))


def test_deep_chain_is_resolved_without_recursion():
    # 5,000 nested placements, each 1 m further along x: the leaf sits at x = 5,000 m
    f = ifcopenshell.file(schema="IFC4")
    p = None
    for _ in range(5000):
        p = _local(f, p, (1.0, 0.0, 0.0))
    M = PlacementCache().matrix(p)
    np.testing.assert_allclose(M[:3, 3], (5000.0, 0.0, 0.0))
    np.testing.assert_allclose(M[:3, :3], np.eye(3))


def test_rotated_parent_turns_the_child():
    f = ifcopenshell.file(schema="IFC4")
    parent = _local(f, None, (10.0, 0.0, 0.0), z=(0.0, 0.0, 1.0), x=(0.0, 1.0, 0.0))  # local x = world y
    child = _local(f, parent, (2.0, 0.0, 0.0))
    M = PlacementCache().matrix(child)
    np.testing.assert_allclose(M[:3, 3], (10.0, 2.0, 0.0), atol=1e-12)


@pytest.mark.parametrize("length", [1, 2, 3])
def test_cycles_are_named(length):
    f = ifcopenshell.file(schema="IFC4")
    ps = [_local(f, None) for _ in range(length)]
    for a, b in zip(ps, ps[1:] + ps[:1]):
        a.PlacementRelTo = b
    with pytest.raises(PlacementError, match=r"runs in a circle") as err:
        PlacementCache().matrix(ps[0])
    for p in ps:
        assert f"#{p.id()} IfcLocalPlacement" in str(err.value)
    # the batch path of the physical reader meets the same check
    with pytest.raises(PlacementError):
        PlacementCache().batch(ps)


def _grid(f, schema, placement, u_lines, v_lines):
    """An IfcGrid with straight polyline axes given as ((x0, y0), (x1, y1)) pairs, in grid coordinates."""
    def axis(tag, a, b, same_sense=True):
        curve = f.create_entity("IfcPolyline", Points=[f.create_entity("IfcCartesianPoint", Coordinates=a),
                                                       f.create_entity("IfcCartesianPoint", Coordinates=b)])
        return f.create_entity("IfcGridAxis", AxisTag=tag, AxisCurve=curve, SameSense=same_sense)

    u = [axis(f"U{i}", *line) for i, line in enumerate(u_lines)]
    v = [axis(f"V{i}", *line) for i, line in enumerate(v_lines)]
    kwargs = dict(GlobalId=ifcopenshell.guid.new(), Name="grid", ObjectPlacement=placement, UAxes=u, VAxes=v)
    grid = f.create_entity("IfcGrid", **kwargs)
    return grid, u, v


def _grid_placement(f, schema, location, ref=None, rel_to=None):
    kwargs = dict(PlacementLocation=location, PlacementRefDirection=ref)
    if schema == "IFC4X3":
        kwargs["PlacementRelTo"] = rel_to
    return f.create_entity("IfcGridPlacement", **kwargs)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_grid_placement_at_an_intersection_with_offsets(schema):
    f = ifcopenshell.file(schema=schema)
    gp = _local(f, None, (100.0, 50.0, 3.0))  # the grid itself sits at (100, 50, 3)
    grid, u, v = _grid(f, schema, gp, [((0.0, 0.0), (30.0, 0.0)), ((0.0, 6.0), (30.0, 6.0))],
                       [((0.0, -5.0), (0.0, 20.0)), ((7.5, -5.0), (7.5, 20.0))])
    # U1 (y = 6, along +x) and V1 (x = 7.5, along +y); offsets: 0.5 to the left of U1 (towards +y),
    # 0.25 to the left of V1 (towards -x), 1.2 up
    vgi = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[u[1], v[1]], OffsetDistances=[0.5, 0.25, 1.2])
    p = _grid_placement(f, schema, vgi, rel_to=gp)
    assert placement_parent(p) == gp
    M = PlacementCache().matrix(p)
    np.testing.assert_allclose(M[:3, 3], (100.0 + 7.25, 50.0 + 6.5, 3.0 + 1.2), atol=1e-12)
    # no reference direction: x along the first axis (U1, +x); z the grid's z
    np.testing.assert_allclose(M[:3, 0], (1.0, 0.0, 0.0), atol=1e-12)
    np.testing.assert_allclose(M[:3, 2], (0.0, 0.0, 1.0), atol=1e-12)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_grid_placement_direction_towards_a_second_intersection(schema):
    f = ifcopenshell.file(schema=schema)
    grid, u, v = _grid(f, schema, _local(f, None), [((0.0, 0.0), (10.0, 0.0)), ((0.0, 4.0), (10.0, 4.0))],
                       [((0.0, -1.0), (0.0, 10.0)), ((3.0, -1.0), (3.0, 10.0))])
    at = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[u[0], v[0]], OffsetDistances=[0.0, 0.0])
    towards = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[u[1], v[1]], OffsetDistances=[0.0, 0.0])
    M = grid_placement_matrix(_grid_placement(f, schema, at, towards))
    np.testing.assert_allclose(M[:3, 3], (0.0, 0.0, 0.0), atol=1e-12)
    np.testing.assert_allclose(M[:3, 0], np.array([3.0, 4.0, 0.0]) / 5.0, atol=1e-12)  # 3-4-5 triangle


def test_grid_axis_against_its_sense_flips_the_offset():
    f = ifcopenshell.file(schema="IFC4")
    grid, u, v = _grid(f, "IFC4", _local(f, None), [((0.0, 0.0), (10.0, 0.0))], [((2.0, -1.0), (2.0, 10.0))])
    u[0].SameSense = False  # U0 now runs along -x: its left is -y
    vgi = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[u[0], v[0]], OffsetDistances=[1.0, 0.0])
    M = grid_placement_matrix(_grid_placement(f, "IFC4", vgi))
    np.testing.assert_allclose(M[:3, 3], (2.0, -1.0, 0.0), atol=1e-12)
    np.testing.assert_allclose(M[:3, 0], (-1.0, 0.0, 0.0), atol=1e-12)


def test_parallel_grid_axes_are_an_error():
    f = ifcopenshell.file(schema="IFC4")
    grid, u, v = _grid(f, "IFC4", _local(f, None), [((0.0, 0.0), (10.0, 0.0)), ((0.0, 3.0), (10.0, 3.0))], [])
    vgi = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[u[0], u[1]], OffsetDistances=[0.0, 0.0])
    with pytest.raises(PlacementError, match="parallel"):
        PlacementCache().matrix(_grid_placement(f, "IFC4", vgi))


def test_grid_axes_without_a_grid_are_an_error():
    f = ifcopenshell.file(schema="IFC4")
    curve = f.create_entity("IfcPolyline", Points=[f.create_entity("IfcCartesianPoint", Coordinates=(0.0, 0.0)),
                                                   f.create_entity("IfcCartesianPoint", Coordinates=(1.0, 0.0))])
    a = f.create_entity("IfcGridAxis", AxisTag="A", AxisCurve=curve, SameSense=True)
    b = f.create_entity("IfcGridAxis", AxisTag="B", AxisCurve=curve, SameSense=True)
    vgi = f.create_entity("IfcVirtualGridIntersection", IntersectingAxes=[a, b], OffsetDistances=[0.0, 0.0])
    p = _grid_placement(f, "IFC4", vgi)
    with pytest.raises(PlacementError, match=rf"#{p.id()} IfcGridPlacement.*no IfcGrid"):
        PlacementCache().matrix(p)


def test_linear_placement_uses_its_cartesian_position():
    f = ifcopenshell.file(schema="IFC4X3")
    base = _local(f, None, (5.0, 0.0, 0.0))
    lp = f.create_entity("IfcLinearPlacement", PlacementRelTo=base, CartesianPosition=_axis2(f, (1.0, 2.0, 3.0)))
    M = PlacementCache().matrix(lp)
    np.testing.assert_allclose(M[:3, 3], (6.0, 2.0, 3.0))
    bare = f.create_entity("IfcLinearPlacement", PlacementRelTo=base)
    with pytest.raises(PlacementError, match=rf"#{bare.id()} IfcLinearPlacement.*CartesianPosition"):
        PlacementCache().matrix(bare)
