"""The same frame, written once as a structural analysis model and once as physical elements,
reads to the same `Frame` and gives the same results.

The frame: four columns 4 m high on a 6 m x 5 m grid, fixed at their bases,
four edge beams rigidly joined to the column heads, and one diagonal brace
(a pin-ended bar). Both files are built here entity by entity.
"""
from __future__ import annotations

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.guid  # noqa: E402

from analysis import analyze  # noqa: E402
from analysis.ifc.reader import read_ifc  # noqa: E402
from analysis.model import LoadCase, NodalLoad  # noqa: E402

E, G, RHO = 210e9, 81e9, 7850.0
COLUMNS = [(0.0, 0.0), (6.0, 0.0), (0.0, 5.0), (6.0, 5.0)]
H = 4.0
SECTIONS = {"column": (0.3, 0.3), "beam": (0.2, 0.4), "brace": (0.08, 0.08)}


def _members():
    """(name, kind, p0, p1, profile y direction) for every member of the frame."""
    out = []
    for i, (x, y) in enumerate(COLUMNS):
        out.append((f"C{i + 1}", "column", (x, y, 0.0), (x, y, H), (0.0, 1.0, 0.0)))
    beams = [((0, 0), (6, 0)), ((0, 5), (6, 5)), ((0, 0), (0, 5)), ((6, 0), (6, 5))]
    for i, (a, b) in enumerate(beams):
        out.append((f"B{i + 1}", "beam", (a[0], a[1], H), (b[0], b[1], H), (0.0, 0.0, 1.0)))
    out.append(("BR1", "brace", (0.0, 0.0, 0.0), (6.0, 0.0, H), (0.0, 0.0, 1.0)))
    return out


class _File:
    def __init__(self, schema):
        self.f = f = ifcopenshell.file(schema=schema)
        units = [
            f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Name="METRE"),
            f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Name="NEWTON"),
            f.create_entity("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
            f.create_entity("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM"),
        ]
        self.ctx = f.create_entity("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3,
                                   Precision=1e-6, WorldCoordinateSystem=self.axis2())
        f.create_entity("IfcProject", GlobalId=self.gid(), Name="equivalence", RepresentationContexts=[self.ctx],
                        UnitsInContext=f.create_entity("IfcUnitAssignment", Units=units))
        mat = f.create_entity("IfcMaterial", Name="Steel")

        def prop(name, measure, value):
            return f.create_entity("IfcPropertySingleValue", Name=name, NominalValue=f.create_entity(measure, value))

        f.create_entity("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat, Properties=[
            prop("YoungModulus", "IfcModulusOfElasticityMeasure", E), prop("ShearModulus", "IfcModulusOfElasticityMeasure", G)])
        f.create_entity("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
                        Properties=[prop("MassDensity", "IfcMassDensityMeasure", RHO)])
        self.usages = {}
        for kind, (b, h) in SECTIONS.items():
            prof = f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", ProfileName=kind, XDim=b, YDim=h)
            mp = f.create_entity("IfcMaterialProfile", Material=mat, Profile=prof)
            mps = f.create_entity("IfcMaterialProfileSet", MaterialProfiles=[mp])
            self.usages[kind] = (f.create_entity("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=10), prof)

    @staticmethod
    def gid():
        return ifcopenshell.guid.new()

    def pt(self, c):
        return self.f.create_entity("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def dir(self, d):
        return self.f.create_entity("IfcDirection", DirectionRatios=[float(v) for v in d])

    def axis2(self, origin=(0.0, 0.0, 0.0), axis=None, ref=None):
        return self.f.create_entity("IfcAxis2Placement3D", Location=self.pt(origin),
                                    Axis=self.dir(axis) if axis is not None else None,
                                    RefDirection=self.dir(ref) if ref is not None else None)

    def associate(self, kind, elements):
        self.f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=elements,
                             RelatingMaterial=self.usages[kind][0])


def structural_file(schema, path):
    """Route 1: IfcStructuralAnalysisModel with point connections, curve members and a self-weight load case."""
    m = _File(schema)
    f = m.f
    placement = f.create_entity("IfcLocalPlacement", RelativePlacement=m.axis2())
    model = f.create_entity("IfcStructuralAnalysisModel", GlobalId=m.gid(), Name="Frame", PredefinedType="LOADING_3D",
                            SharedPlacement=placement)
    items, vertices, nodes = [], {}, {}

    def topo(its, kind):
        return f.create_entity("IfcProductDefinitionShape", Representations=[f.create_entity(
            "IfcTopologyRepresentation", ContextOfItems=m.ctx, RepresentationIdentifier="Reference",
            RepresentationType=kind, Items=its)])

    fixed = f.create_entity("IfcBoundaryNodeCondition", "fixed", *[f.create_entity("IfcBoolean", True)] * 6)

    def node(xyz):
        key = tuple(round(c, 9) for c in xyz)
        if key not in nodes:
            v = f.create_entity("IfcVertexPoint", VertexGeometry=m.pt(xyz))
            c = f.create_entity("IfcStructuralPointConnection", GlobalId=m.gid(), Name=f"P{len(nodes) + 1}",
                                ObjectPlacement=placement, Representation=topo([v], "Vertex"),
                                AppliedCondition=fixed if xyz[2] == 0.0 else None)
            nodes[key], vertices[key] = c, v
            items.append(c)
        return key

    by_kind = {}
    for name, kind, p0, p1, up in _members():
        a, b = node(p0), node(p1)
        mem = f.create_entity("IfcStructuralCurveMember", GlobalId=m.gid(), Name=name, ObjectPlacement=placement,
                              PredefinedType="PIN_JOINED_MEMBER" if kind == "brace" else "RIGID_JOINED_MEMBER",
                              Representation=topo([f.create_entity("IfcEdge", EdgeStart=vertices[a], EdgeEnd=vertices[b])], "Edge"),
                              Axis=m.dir(up))
        for key in (a, b):
            f.create_entity("IfcRelConnectsStructuralMember", GlobalId=m.gid(), RelatingStructuralMember=mem,
                            RelatedStructuralConnection=nodes[key])
        items.append(mem)
        by_kind.setdefault(kind, []).append(mem)
    for kind, mems in by_kind.items():
        m.associate(kind, mems)
    case = f.create_entity("IfcStructuralLoadCase", GlobalId=m.gid(), Name="Self-weight", PredefinedType="LOAD_CASE",
                           ActionType="PERMANENT_G", ActionSource="DEAD_LOAD_G", Coefficient=1.0,
                           SelfWeightCoefficients=[0.0, 0.0, -1.0])
    f.create_entity("IfcRelAssignsToGroup", GlobalId=m.gid(), RelatedObjects=items, RelatingGroup=model)
    model.LoadedBy = [case]
    f.write(str(path))
    return str(path)


def physical_file(schema, path):
    """Route 2: IfcColumn / IfcBeam / IfcMember with Axis curves and extruded bodies, no analysis model."""
    m = _File(schema)
    f = m.f
    axis_ctx = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Axis", ContextType="Model",
                               ParentContext=m.ctx, TargetView="GRAPH_VIEW")
    body_ctx = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model",
                               ParentContext=m.ctx, TargetView="MODEL_VIEW")
    by_kind = {}
    cls = {"column": "IfcColumn", "beam": "IfcBeam", "brace": "IfcMember"}
    for name, kind, p0, p1, up in _members():
        p0, p1, up = (np.asarray(v, float) for v in (p0, p1, up))
        z = (p1 - p0) / np.linalg.norm(p1 - p0)
        y = up - up @ z * z
        y /= np.linalg.norm(y)
        x = np.cross(y, z)
        length = float(np.linalg.norm(p1 - p0))
        pl = f.create_entity("IfcLocalPlacement", RelativePlacement=m.axis2(p0, z, x))
        axis = f.create_entity("IfcShapeRepresentation", ContextOfItems=axis_ctx, RepresentationIdentifier="Axis",
                               RepresentationType="Curve3D",
                               Items=[f.create_entity("IfcPolyline", Points=[m.pt((0, 0, 0)), m.pt((0, 0, length))])])
        body = f.create_entity("IfcShapeRepresentation", ContextOfItems=body_ctx, RepresentationIdentifier="Body",
                               RepresentationType="SweptSolid", Items=[f.create_entity(
                                   "IfcExtrudedAreaSolid", SweptArea=m.usages[kind][1], Position=m.axis2(),
                                   ExtrudedDirection=m.dir((0, 0, 1)), Depth=length)])
        e = f.create_entity(cls[kind], GlobalId=m.gid(), Name=name, ObjectPlacement=pl,
                            Representation=f.create_entity("IfcProductDefinitionShape", Representations=[axis, body]),
                            PredefinedType={"column": "COLUMN", "beam": "BEAM", "brace": "BRACE"}[kind])
        by_kind.setdefault(kind, []).append(e)
    for kind, els in by_kind.items():
        m.associate(kind, els)
    f.write(str(path))
    return str(path)


def _by_position(frame):
    return {tuple(np.round(x, 9)): k for k, x in enumerate(frame.nodes)}


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_structural_and_physical_routes_agree(schema, tmp_path):
    one = read_ifc(structural_file(schema, tmp_path / "structural.ifc"))
    two = read_ifc(physical_file(schema, tmp_path / "physical.ifc"))
    assert one.route == "structural" and two.route == "physical"
    a, b = one.frame, two.frame
    pa, pb = _by_position(a), _by_position(b)
    assert set(pa) == set(pb)
    node_map = np.array([pb[key] for key in sorted(pa, key=pa.get)])  # a's node k -> b's node
    np.testing.assert_array_equal(b.restraints[node_map], a.restraints)
    assert set(a.member_ids) == set(b.member_ids)
    for mid in a.member_ids:
        i, j = a.member_index(mid), b.member_index(mid)
        assert tuple(node_map[a.members[i]]) == tuple(b.members[j]), mid
        for key in ("A", "Iy", "Iz", "J", "Avy", "Avz", "E", "G", "density", "roll"):
            np.testing.assert_allclose(getattr(b, key)[j], getattr(a, key)[i], rtol=1e-12, atol=1e-15, err_msg=f"{mid} {key}")
        assert b.truss[j] == a.truss[i], mid
        if not a.truss[i]:
            np.testing.assert_array_equal(b.releases[j], a.releases[i], err_msg=mid)
        np.testing.assert_allclose(b.offsets[j], a.offsets[i], atol=1e-12)
    # local axes: the same member_axes
    from analysis.model import member_axes

    Ra, Rb = member_axes(a), member_axes(b)
    order = [b.member_index(mid) for mid in a.member_ids]
    np.testing.assert_allclose(Rb[order], Ra, atol=1e-12)

    # the same results: self-weight from the files plus the same lateral force at the head of C1
    head = (0.0, 0.0, H)
    wind_a = LoadCase("Wind", nodal=(NodalLoad(a.node_ids[pa[head]], (10e3, 5e3, 0, 0, 0, 0)),))
    wind_b = LoadCase("Wind", nodal=(NodalLoad(b.node_ids[pb[head]], (10e3, 5e3, 0, 0, 0, 0)),))
    assert [c.name for c in a.load_cases] == [c.name for c in b.load_cases] == ["Self-weight"]
    ra = analyze(a.replace(load_cases=a.load_cases + (wind_a,)))
    rb = analyze(b.replace(load_cases=b.load_cases + (wind_b,)))
    for name in ("Self-weight", "Wind"):
        ua, ub = ra.cases[name].displacements, rb.cases[name].displacements
        scale = np.abs(ua).max()
        assert scale > 0
        np.testing.assert_allclose(ub[node_map], ua, rtol=1e-9, atol=1e-9 * scale, err_msg=name)
        np.testing.assert_allclose(rb.cases[name].reactions[node_map], ra.cases[name].reactions, rtol=1e-9,
                                   atol=1e-9 * np.abs(ra.cases[name].reactions).max(), err_msg=name)
