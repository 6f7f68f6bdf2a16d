"""analysis.ifc.bodies and analysis.ifc.polygon_section: member axis and section from any body.

Small files are built here entity by entity (IFC2X3, IFC4, IFC4X3) with bodies
that are not plain extrusions — an I-section as an IfcTriangulatedFaceSet, a
hollow rectangle as an IfcFacetedBrep and as an IfcPolygonalFaceSet, a mapped
item with a rotation and an offset, a clipped extrusion, a beam extruded
across the member — and the derived axes and section values are checked
against hand geometry and the section formulas named beside each check.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

import ifcopenshell
import ifcopenshell.guid

from analysis.errors import IfcInputError
from analysis.ifc.bodies import BodyMesh, body_axes, mesh_axes
from analysis.ifc.derive import derive_frame_details
from analysis.ifc.polygon_section import polygon_section, torsion_constant

# I-section (m): overall width b, depth h, flange tf, web tw (no fillets)
B, H, TF, TW = 0.16, 0.30, 0.012, 0.0075
# hollow rectangle (m): outer width b, outer depth h, wall t
RB, RH, RT = 0.10, 0.20, 0.006


def _i_outline(b=B, h=H, tf=TF, tw=TW):
    """The I-section's 12 corners, counter-clockwise, and a triangulation of it (index triples)."""
    pts = [(-b / 2, -h / 2), (b / 2, -h / 2), (b / 2, -h / 2 + tf), (tw / 2, -h / 2 + tf), (tw / 2, h / 2 - tf),
           (b / 2, h / 2 - tf), (b / 2, h / 2), (-b / 2, h / 2), (-b / 2, h / 2 - tf), (-tw / 2, h / 2 - tf),
           (-tw / 2, -h / 2 + tf), (-b / 2, -h / 2 + tf)]
    cap = [(0, 1, 2), (0, 2, 3), (0, 3, 10), (0, 10, 11), (10, 3, 4), (10, 4, 9), (4, 5, 6), (4, 6, 9), (9, 6, 7), (9, 7, 8)]
    return np.array(pts), cap


def _i_exact(b=B, h=H, tf=TF, tw=TW):
    """A, Iy (major), Iz of the I-section from its rectangles (parallel-axis theorem, common practice, no source)."""
    hw = h - 2 * tf
    A = 2 * b * tf + hw * tw
    Iy = (b * h**3 - (b - tw) * hw**3) / 12.0
    Iz = (2 * tf * b**3 + hw * tw**3) / 12.0
    return A, Iy, Iz


def _rect_k(a, b):
    """Roark's Formulas for Stress and Strain (7th ed.), Table 10.7, solid rectangle, K = a b³ (1/3 − 0.21 b/a (1 − b⁴/12a⁴))
    with a ≥ b the full sides — from memory."""
    a, b = max(a, b), min(a, b)
    return a * b**3 * (1.0 / 3.0 - 0.21 * b / a * (1.0 - b**4 / (12.0 * a**4)))


def _i_torsion(b=B, h=H, tf=TF, tw=TW):
    """J of an I-section without fillets: two flange rectangles, the web between them and the two web-flange
    junctions, alpha D⁴ with r = 0 (El Darwish & Johnston, ASCE J. Struct. Div. 1965, as quoted in Roark's Table 10.7
    — from memory)."""
    alpha = -0.042 + 0.2204 * tw / tf - 0.0725 * (tw / tf) ** 2
    D = (tf**2 + tw**2 / 4.0) / tf
    return 2 * _rect_k(b, tf) + _rect_k(h - 2 * tf, tw) + 2 * alpha * D**4


def _bredt(b=RB, h=RH, t=RT):
    """Thin-walled closed section, Bredt's formula J = 4 Am² t / pm on the wall's mid-line — from memory."""
    am = (b - t) * (h - t)
    pm = 2 * ((b - t) + (h - t))
    return 4 * am**2 * t / pm


def _saint_venant_rectangle(a, b):
    """Solid rectangle, Saint-Venant's series (Timoshenko & Goodier, Theory of Elasticity, §109 — from memory)."""
    a, b = max(a, b), min(a, b)
    s = sum(math.tanh(n * math.pi * a / (2 * b)) / n**5 for n in range(1, 61, 2))
    return a * b**3 / 3.0 * (1.0 - 192.0 / math.pi**5 * (b / a) * s)


class Model:
    """A tiny physical model in metres; every element of material S355 (grade table) and placed by ``placement``."""

    def __init__(self, schema="IFC4", mm=False):
        self.f = f = ifcopenshell.file(schema=schema)
        self.schema = schema
        self.scale = 1000.0 if mm else 1.0  # file length units per metre (triangulated_i and placements only)
        units = [f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI" if mm else None, Name="METRE"),
                 f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Name="NEWTON"),
                 f.create_entity("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
                 f.create_entity("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM")]
        self.ctx = f.create_entity("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3,
                                   Precision=1e-6, WorldCoordinateSystem=self.axis2())
        self.body_ctx = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Body",
                                        ContextType="Model", ParentContext=self.ctx, TargetView="MODEL_VIEW")
        f.create_entity("IfcProject", GlobalId=ifcopenshell.guid.new(), Name="bodies", RepresentationContexts=[self.ctx],
                        UnitsInContext=f.create_entity("IfcUnitAssignment", Units=units))
        self.material = f.create_entity("IfcMaterial", Name="S355")
        self.elements = []

    def pt(self, c):
        return self.f.create_entity("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def dir(self, v):
        return self.f.create_entity("IfcDirection", DirectionRatios=[float(x) for x in v])

    def axis2(self, origin=(0.0, 0.0, 0.0), axis=None, ref=None):
        return self.f.create_entity("IfcAxis2Placement3D", Location=self.pt(origin),
                                    Axis=self.dir(axis) if axis is not None else None,
                                    RefDirection=self.dir(ref) if ref is not None else None)

    def element(self, item, *, cls="IfcBeam", name="B1", origin=(1.0, 2.0, 3.0), axis=(0.0, 0.0, 1.0), ref=(0.0, 1.0, 0.0),
                rep_type="Brep", material=None, axis_curve=None):
        f = self.f
        reps = [f.create_entity("IfcShapeRepresentation", ContextOfItems=self.body_ctx, RepresentationIdentifier="Body",
                                RepresentationType=rep_type, Items=[item])]
        if axis_curve is not None:
            line = f.create_entity("IfcPolyline", Points=[self.pt(c) for c in axis_curve])
            reps.append(f.create_entity("IfcShapeRepresentation", ContextOfItems=self.body_ctx, RepresentationIdentifier="Axis",
                                        RepresentationType="Curve3D", Items=[line]))
        placement = f.create_entity("IfcLocalPlacement",
                                    RelativePlacement=self.axis2([c * self.scale for c in origin], axis, ref))
        e = f.create_entity(cls, GlobalId=ifcopenshell.guid.new(), Name=name, ObjectPlacement=placement,
                            Representation=f.create_entity("IfcProductDefinitionShape", Representations=reps))
        f.create_entity("IfcRelAssociatesMaterial", GlobalId=ifcopenshell.guid.new(), RelatedObjects=[e],
                        RelatingMaterial=material or self.material)
        self.elements.append(e)
        return e

    # ---- bodies, in element coordinates: member along local +x from 0 to L, section in local (y, z)
    @staticmethod
    def _prism(loops, L):
        """Vertices and faces (index lists with the outward normal they must have) of a prism of the section loops."""
        verts, faces = [], []
        for loop in loops:
            n0 = len(verts)
            n = len(loop)
            verts += [(0.0, y, z) for y, z in loop] + [(L, y, z) for y, z in loop]
            for i in range(n):
                j = (i + 1) % n
                a, b = np.asarray(loop[i]), np.asarray(loop[j])
                out = np.array([0.0, b[1] - a[1], -(b[0] - a[0])])  # right of a→b: outward for a CCW loop
                faces.append(([n0 + i, n0 + j, n0 + n + j, n0 + n + i], out))
        return verts, faces

    @staticmethod
    def _oriented(verts, idx, normal):
        p = np.array([verts[i] for i in idx])
        newell = np.cross(p - p.mean(axis=0), np.roll(p, -1, axis=0) - p.mean(axis=0)).sum(axis=0)
        return list(idx) if newell @ normal > 0 else list(idx)[::-1]

    def triangulated_i(self, L):
        pts, cap = _i_outline()
        pts, L = pts * self.scale, L * self.scale
        verts, sides = self._prism([pts], L)
        n = len(pts)
        tris = []
        for quad, out in sides:
            for t in ([quad[0], quad[1], quad[2]], [quad[0], quad[2], quad[3]]):
                tris.append(self._oriented(verts, t, out))
        for t in cap:
            tris.append(self._oriented(verts, t, np.array([-1.0, 0, 0])))
            tris.append(self._oriented(verts, [i + n for i in t], np.array([1.0, 0, 0])))
        coords = self.f.create_entity("IfcCartesianPointList3D", CoordList=[list(map(float, v)) for v in verts])
        return self.f.create_entity("IfcTriangulatedFaceSet", Coordinates=coords, Closed=True,
                                    CoordIndex=[[i + 1 for i in t] for t in tris])

    def _hollow_loops(self):
        outer = [(-RB / 2, -RH / 2), (RB / 2, -RH / 2), (RB / 2, RH / 2), (-RB / 2, RH / 2)]
        bi, hi = RB / 2 - RT, RH / 2 - RT
        inner_cw = [(-bi, -hi), (-bi, hi), (bi, hi), (bi, -hi)]  # clockwise: its "outward" is into the hole
        return outer, inner_cw

    def brep_hollow(self, L):
        f = self.f
        outer, inner = self._hollow_loops()
        verts, sides = self._prism([outer, inner], L)
        pts = [self.pt(v) for v in verts]

        def loop(idx):
            return f.create_entity("IfcPolyLoop", Polygon=[pts[i] for i in idx])

        faces = [f.create_entity("IfcFace", Bounds=[f.create_entity("IfcFaceOuterBound", Bound=loop(self._oriented(verts, q, out)),
                                                                    Orientation=True)]) for q, out in sides]
        for x, off, normal in ((0.0, 0, -1.0), (L, 4, 1.0)):
            o = self._oriented(verts, [off + i for i in range(4)], np.array([normal, 0, 0]))
            h = self._oriented(verts, [8 + off + i for i in range(4)], np.array([-normal, 0, 0]))
            faces.append(f.create_entity("IfcFace", Bounds=[f.create_entity("IfcFaceOuterBound", Bound=loop(o), Orientation=True),
                                                            f.create_entity("IfcFaceBound", Bound=loop(h), Orientation=True)]))
        return f.create_entity("IfcFacetedBrep", Outer=f.create_entity("IfcClosedShell", CfsFaces=faces))

    def polygonal_hollow(self, L):
        f = self.f
        outer, inner = self._hollow_loops()
        verts, sides = self._prism([outer, inner], L)
        faces = [f.create_entity("IfcIndexedPolygonalFace", CoordIndex=[i + 1 for i in self._oriented(verts, q, out)])
                 for q, out in sides]
        for off, normal in ((0, -1.0), (4, 1.0)):
            o = self._oriented(verts, [off + i for i in range(4)], np.array([normal, 0, 0]))
            h = self._oriented(verts, [8 + off + i for i in range(4)], np.array([-normal, 0, 0]))
            faces.append(f.create_entity("IfcIndexedPolygonalFaceWithVoids", CoordIndex=[i + 1 for i in o],
                                         InnerCoordIndices=[[i + 1 for i in h]]))
        coords = f.create_entity("IfcCartesianPointList3D", CoordList=[list(map(float, v)) for v in verts])
        return f.create_entity("IfcPolygonalFaceSet", Coordinates=coords, Closed=True, Faces=faces)

    def extrusion(self, xdim, ydim, depth, position=None, direction=(0.0, 0.0, 1.0)):
        f = self.f
        prof = f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", ProfileName=f"R{xdim}x{ydim}",
                               Position=f.create_entity("IfcAxis2Placement2D", Location=self.pt((0.0, 0.0))), XDim=xdim, YDim=ydim)
        return f.create_entity("IfcExtrudedAreaSolid", SweptArea=prof, Position=position or self.axis2(),
                               ExtrudedDirection=self.dir(direction), Depth=depth)

    def mapped(self, item, origin_placement, target):
        f = self.f
        rep = f.create_entity("IfcShapeRepresentation", ContextOfItems=self.body_ctx, RepresentationIdentifier="Body",
                              RepresentationType="Brep", Items=[item])
        rmap = f.create_entity("IfcRepresentationMap", MappingOrigin=origin_placement, MappedRepresentation=rep)
        return f.create_entity("IfcMappedItem", MappingSource=rmap, MappingTarget=target)


def _derive(model):
    d = derive_frame_details(model.f)
    return d.frame, d.diagnostics, d.notes, d.left_out


# --------------------------------------------------------------------------- polygon sections
def test_polygon_rectangle_against_saint_venant():
    b, h = 0.2, 0.5
    s = polygon_section([np.array([[0, 0], [b, 0], [b, h], [0, h]])])
    assert s.A == pytest.approx(b * h, rel=1e-12)
    assert s.Iy == pytest.approx(b * h**3 / 12, rel=1e-12)  # the deep axis is local z: Iy = b h³/12
    assert s.Iz == pytest.approx(h * b**3 / 12, rel=1e-12)
    np.testing.assert_allclose(np.abs(s.z_axis), [0.0, 1.0], atol=1e-12)
    assert s.J == pytest.approx(_saint_venant_rectangle(b, h), rel=2e-4)
    # Zhuravskii's parabolic shear stress gives the shear coefficient 5/6 of a rectangle (Timoshenko & Gere — from memory)
    assert s.Avz == pytest.approx(5 / 6 * b * h, rel=2e-3)
    assert s.Avy == pytest.approx(5 / 6 * b * h, rel=2e-3)


def test_polygon_circle_and_separate_parts():
    r, n = 0.05, 256
    t = np.linspace(0, 2 * np.pi, n, endpoint=False)
    circle = np.c_[r * np.cos(t), r * np.sin(t)]
    # circle: J = Ip = π r⁴ / 2, the warping function is zero (Timoshenko & Goodier §104 — from memory); the 256-gon's
    # polar moment lies below it by about (2π/n)²/3 = 2e-4
    assert torsion_constant([circle]) == pytest.approx(math.pi * r**4 / 2, rel=1e-3)
    one = np.array([[0, 0], [0.05, 0], [0.05, 0.2], [0, 0.2]])
    two = polygon_section([one, one + [0.3, 0.0]])
    assert two.J == pytest.approx(2 * torsion_constant([one]), rel=2e-4)  # separate parts: J adds up (to the mesh)
    assert two.A == pytest.approx(0.02, rel=1e-12)


def test_polygon_i_and_hollow_against_formulas():
    pts, _ = _i_outline()
    s = polygon_section([pts])
    A, Iy, Iz = _i_exact()
    assert (s.A, s.Iy, s.Iz) == pytest.approx((A, Iy, Iz), rel=1e-12)
    assert s.J == pytest.approx(_i_torsion(), rel=0.03)
    assert s.Avz == pytest.approx(H * TW, rel=0.1)  # about the web area (common practice, no source)
    outer = np.array([[-RB / 2, -RH / 2], [RB / 2, -RH / 2], [RB / 2, RH / 2], [-RB / 2, RH / 2]])
    inner = outer * [(RB - 2 * RT) / RB, (RH - 2 * RT) / RH]
    s = polygon_section([outer, inner])  # the hole's orientation does not matter
    assert s.A == pytest.approx(RB * RH - (RB - 2 * RT) * (RH - 2 * RT), rel=1e-12)
    assert s.Iy == pytest.approx((RB * RH**3 - (RB - 2 * RT) * (RH - 2 * RT) ** 3) / 12, rel=1e-12)
    # Bredt is a thin-wall value: the sharp-cornered thick wall is a few per cent stiffer
    assert 1.0 <= s.J / _bredt() <= 1.04


# --------------------------------------------------------------------------- bodies through the kernel
@pytest.mark.parametrize("schema,mm", [("IFC4", False), ("IFC4", True), ("IFC4X3_ADD2", False)])
def test_triangulated_i_section(schema, mm):
    m = Model(schema, mm=mm)
    L = 4.0
    e = m.element(m.triangulated_i(L), rep_type="Tessellation")
    axes, failed = body_axes(m.f, [e])
    assert not failed
    ax = axes[e.id()]
    # local x -> world +y (placement RefDirection), local y -> world -x, local z -> world z; origin (1, 2, 3)
    np.testing.assert_allclose(ax.start, [1.0, 2.0, 3.0], atol=1e-9)
    np.testing.assert_allclose(ax.end, [1.0, 2.0 + L, 3.0], atol=1e-9)
    np.testing.assert_allclose(ax.z, [0.0, 0.0, 1.0], atol=1e-9)  # the strong axis: depth along world z
    A, Iy, Iz = _i_exact()
    assert (ax.A, ax.Iy, ax.Iz) == pytest.approx((A, Iy, Iz), rel=1e-9)
    assert ax.J == pytest.approx(_i_torsion(), rel=0.03)
    assert ax.depth == pytest.approx(H) and ax.width == pytest.approx(B)
    assert ax.volume == pytest.approx(A * L, rel=1e-9) and ax.prismatic

    frame, diags, notes, left = _derive(m)
    assert not left
    np.testing.assert_allclose(sorted(map(tuple, frame.nodes)), [(1.0, 2.0, 3.0), (1.0, 2.0 + L, 3.0)], atol=1e-9)
    assert frame.A[0] == pytest.approx(A, rel=1e-9)
    assert frame.Iy[0] == pytest.approx(Iy, rel=1e-9) and frame.Iz[0] == pytest.approx(Iz, rel=1e-9)
    assert frame.J[0] == pytest.approx(ax.J)
    np.testing.assert_allclose(frame.ref[0], [0.0, 0.0, 1.0], atol=1e-9)
    assert frame.section_sources[0] == "body geometry"
    assert any("body geometry" in n for n in notes)


def test_named_profile_refines_the_body_section():
    """A profile set usage gives the section (its fillets and J formula); the axis still comes from the body."""
    m = Model("IFC4")
    f = m.f
    L = 4.0
    profile = f.create_entity("IfcIShapeProfileDef", ProfileType="AREA", ProfileName="I300 test", OverallWidth=B,
                              OverallDepth=H, WebThickness=TW, FlangeThickness=TF, FilletRadius=0.015)
    pset = f.create_entity("IfcMaterialProfileSet", MaterialProfiles=[
        f.create_entity("IfcMaterialProfile", Material=m.material, Profile=profile)])
    usage = f.create_entity("IfcMaterialProfileSetUsage", ForProfileSet=pset, CardinalPoint=5)
    m.element(m.triangulated_i(L), rep_type="Tessellation", material=usage)
    frame, diags, notes, left = _derive(m)
    assert not left
    A, Iy, Iz = _i_exact()
    fillets = 4 * (1 - math.pi / 4) * 0.015**2  # four square-minus-quarter-disc fillets (common practice, no source)
    assert frame.A[0] == pytest.approx(A + fillets, rel=1e-9)
    assert frame.Iy[0] > Iy and frame.Iz[0] > Iz
    np.testing.assert_allclose(sorted(map(tuple, frame.nodes)), [(1.0, 2.0, 3.0), (1.0, 2.0 + L, 3.0)], atol=1e-9)
    np.testing.assert_allclose(frame.ref[0], [0.0, 0.0, 1.0], atol=1e-9)
    assert frame.section_sources[0] == "file" and frame.section_names[0] == "I300 test"


@pytest.mark.parametrize("schema,kind", [("IFC2X3", "brep"), ("IFC4", "brep"), ("IFC4", "polygonal")])
def test_hollow_rectangle(schema, kind):
    m = Model(schema)
    L = 3.0
    body = m.brep_hollow(L) if kind == "brep" else m.polygonal_hollow(L)
    # a column: local x -> world z (Axis = (1,0,0) for z', RefDirection (0,0,1) for x' ... built directly below)
    e = m.element(body, cls="IfcColumn", name="C1", origin=(5.0, 6.0, 0.0), axis=(0.0, -1.0, 0.0), ref=(0.0, 0.0, 1.0))
    axes, failed = body_axes(m.f, [e])
    assert not failed
    ax = axes[e.id()]
    np.testing.assert_allclose(ax.start, [5.0, 6.0, 0.0], atol=1e-9)  # upwards for a vertical member
    np.testing.assert_allclose(ax.end, [5.0, 6.0, L], atol=1e-9)
    A = RB * RH - (RB - 2 * RT) * (RH - 2 * RT)
    Iy = (RB * RH**3 - (RB - 2 * RT) * (RH - 2 * RT) ** 3) / 12
    Iz = (RH * RB**3 - (RH - 2 * RT) * (RB - 2 * RT) ** 3) / 12
    assert (ax.A, ax.Iy, ax.Iz) == pytest.approx((A, Iy, Iz), rel=1e-9)
    assert 1.0 <= ax.J / _bredt() <= 1.04  # Bredt (thin wall) a little below the thick sharp-cornered wall
    # the deep side of the section (local z, RH) lies along local z' of the placement: world (0, -1, 0) up to sign
    np.testing.assert_allclose(np.abs(ax.z), [0.0, 1.0, 0.0], atol=1e-9)

    frame, diags, notes, left = _derive(m)
    assert not left
    assert frame.A[0] == pytest.approx(A, rel=1e-9) and frame.J[0] == pytest.approx(ax.J)
    assert frame.section_sources[0] == "body geometry"


def _rot_z(deg):
    c, s = math.cos(math.radians(deg)), math.sin(math.radians(deg))
    return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1.0]])


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
@pytest.mark.parametrize("inner", ["extrusion", "brep"])
def test_mapped_item_with_rotation_and_offset(schema, inner):
    """World point = placement ∘ target operator ∘ mapping origin applied to the mapped body (IFC: the MappingOrigin
    is transformed by the MappingTarget)."""
    m = Model(schema)
    L = 2.5
    if inner == "extrusion":
        # a 0.2 x 0.4 rectangle extruded along local x (profile plane y'z'): position Axis = x, RefDirection = y
        item = m.extrusion(0.2, 0.4, L, position=m.axis2((0.0, 0.0, 0.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)))
        A, Iy = 0.2 * 0.4, 0.2 * 0.4**3 / 12
    else:
        item = m.brep_hollow(L)
        A, Iy = RB * RH - (RB - 2 * RT) * (RH - 2 * RT), (RB * RH**3 - (RB - 2 * RT) * (RH - 2 * RT) ** 3) / 12
    origin = m.axis2((0.5, 0.0, 0.0))  # the map's origin, 0.5 along x
    f = m.f
    target = f.create_entity("IfcCartesianTransformationOperator3D", Axis1=m.dir((0.0, 1.0, 0.0)), Axis2=m.dir((-1.0, 0.0, 0.0)),
                             LocalOrigin=m.pt((0.3, 0.4, 0.7)), Scale=1.0, Axis3=m.dir((0.0, 0.0, 1.0)))
    e = m.element(m.mapped(item, origin, target), origin=(10.0, 0.0, 0.0), axis=None, ref=None, rep_type="MappedRepresentation")
    # by hand: body point p -> p + (0.5, 0, 0) -> rotate +90° about z -> + (0.3, 0.4, 0.7) -> + (10, 0, 0)
    R = _rot_z(90.0)
    start = R @ (np.array([0.0, 0.0, 0.0]) + [0.5, 0, 0]) + [0.3, 0.4, 0.7] + [10.0, 0.0, 0.0]
    end = R @ (np.array([L, 0.0, 0.0]) + [0.5, 0, 0]) + [0.3, 0.4, 0.7] + [10.0, 0.0, 0.0]
    frame, diags, notes, left = _derive(m)
    assert not left
    np.testing.assert_allclose(sorted(map(tuple, frame.nodes)), sorted([tuple(start), tuple(end)]), atol=1e-9)
    assert frame.A[0] == pytest.approx(A, rel=1e-9) and frame.Iy[0] == pytest.approx(Iy, rel=1e-9)
    np.testing.assert_allclose(np.abs(frame.ref[0]), [0.0, 0.0, 1.0], atol=1e-9)  # the deep side stays vertical
    expected = "file" if inner == "extrusion" else "body geometry"
    assert frame.section_sources[0] == expected


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_clipped_extrusion_reads_its_first_operand(schema):
    m = Model(schema)
    f = m.f
    L = 3.0
    solid = m.extrusion(0.2, 0.4, L, position=m.axis2((0.0, 0.0, 0.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)))
    plane = f.create_entity("IfcPlane", Position=m.axis2((2.9, 0.0, 0.0), (1.0, 0.0, 1.0), (0.0, 1.0, 0.0)))
    half = f.create_entity("IfcHalfSpaceSolid", BaseSurface=plane, AgreementFlag=False)
    clip = f.create_entity("IfcBooleanClippingResult", Operator="DIFFERENCE", FirstOperand=solid, SecondOperand=half)
    m.element(clip, origin=(0.0, 0.0, 0.0), axis=None, ref=None, rep_type="Clipping")
    frame, diags, notes, left = _derive(m)
    assert not left
    np.testing.assert_allclose(sorted(map(tuple, frame.nodes)), [(0.0, 0.0, 0.0), (L, 0.0, 0.0)], atol=1e-9)
    assert frame.A[0] == pytest.approx(0.08) and frame.Iy[0] == pytest.approx(0.2 * 0.4**3 / 12)
    assert any("first operand of IfcBooleanClippingResult" in d.message for d in diags)


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_beam_extruded_across_the_member(schema):
    """A 4 m beam 0.2 wide and 0.5 deep modelled as its 4 x 0.5 elevation extruded 0.2 across it (issue: 71 mm axis)."""
    m = Model(schema)
    L, b, h = 4.0, 0.2, 0.5
    # elevation in the local x'z' plane (profile x along world x, profile y along world z), extruded along world y
    item = m.extrusion(L, h, b, position=m.axis2((L / 2, -b / 2, 0.0), (0.0, 1.0, 0.0), (1.0, 0.0, 0.0)))
    e = m.element(item, origin=(0.0, 0.0, 0.0), axis=None, ref=None, rep_type="SweptSolid")
    frame, diags, notes, left = _derive(m)
    assert not left
    warn = [d for d in diags if d.level == "warning" and "shorter than its section depth" in d.message]
    assert warn and warn[0].entity_id == e.id() and f"#{e.id()} IfcBeam 'B1'" in warn[0].message
    np.testing.assert_allclose(sorted(map(tuple, frame.nodes)), [(0.0, 0.0, 0.0), (L, 0.0, 0.0)], atol=1e-9)
    assert frame.A[0] == pytest.approx(b * h, rel=1e-9)
    assert frame.Iy[0] == pytest.approx(b * h**3 / 12, rel=1e-9)  # strong axis: depth along z
    assert frame.Iz[0] == pytest.approx(h * b**3 / 12, rel=1e-9)
    assert frame.J[0] == pytest.approx(_saint_venant_rectangle(b, h), rel=1e-3)
    np.testing.assert_allclose(frame.ref[0], [0.0, 0.0, 1.0], atol=1e-9)
    assert frame.section_sources[0] == "body geometry"


def test_open_surface_is_left_out_with_its_reason():
    m = Model("IFC4")
    good = m.element(m.triangulated_i(4.0), rep_type="Tessellation")
    coords = m.f.create_entity("IfcCartesianPointList3D", CoordList=[[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]])
    sheet = m.f.create_entity("IfcTriangulatedFaceSet", Coordinates=coords, Closed=False, CoordIndex=[[1, 2, 3]])
    bad = m.element(sheet, name="B2", origin=(1.0, 2.0, 3.0), rep_type="Tessellation")
    axes, failed = body_axes(m.f, [good, bad])
    assert good.id() in axes and bad.id() in failed and "closed" in failed[bad.id()]
    frame, diags, notes, left = _derive(m)
    assert [x.entity_id for x in left] == [bad.id()]
    assert "no usable body" in left[0].reason and "closed" in left[0].reason


def test_mesh_axes_batch_matches_single():
    """The batched analysis gives each mesh what it gives alone (no mixing between elements)."""
    rng = np.random.default_rng(7)
    meshes = []
    for k in range(5):
        R, _ = np.linalg.qr(rng.normal(size=(3, 3)))
        b, h, L = 0.1 + 0.05 * k, 0.3, 2.0 + k
        box = np.array([[x, y, z] for x in (0, L) for y in (-b / 2, b / 2) for z in (-h / 2, h / 2)])
        faces = np.array([[0, 1, 3], [0, 3, 2], [4, 6, 7], [4, 7, 5], [0, 4, 5], [0, 5, 1],
                          [2, 3, 7], [2, 7, 6], [0, 2, 6], [0, 6, 4], [1, 5, 7], [1, 7, 3]])
        meshes.append(BodyMesh(k, box @ R.T + rng.normal(size=3), faces))
    together, _ = mesh_axes(meshes)
    for mesh in meshes:
        alone, _ = mesh_axes([mesh])
        a, b = together[mesh.element_id], alone[mesh.element_id]
        np.testing.assert_allclose([a.A, a.Iy, a.Iz, a.J], [b.A, b.Iy, b.Iz, b.J], rtol=1e-12)
        np.testing.assert_allclose(np.sort([a.start, a.end], axis=0), np.sort([b.start, b.end], axis=0), atol=1e-12)
    for k, mesh in enumerate(meshes):
        b, h, L = 0.1 + 0.05 * k, 0.3, 2.0 + k
        ax = together[k]
        assert ax.length == pytest.approx(L, rel=1e-12)
        assert (ax.A, ax.Iy, ax.Iz) == pytest.approx((b * h, b * h**3 / 12, h * b**3 / 12), rel=1e-9)


def test_errors_are_not_raised_for_kernel_failures():
    """A body the kernel cannot build is a failure with a reason, not an exception."""
    m = Model("IFC4")
    coords = m.f.create_entity("IfcCartesianPointList3D", CoordList=[[0.0, 0.0, 0.0]])
    broken = m.f.create_entity("IfcTriangulatedFaceSet", Coordinates=coords, Closed=True, CoordIndex=[[1, 1, 1]])
    e = m.element(broken, rep_type="Tessellation")
    axes, failed = body_axes(m.f, [e])
    assert not axes and e.id() in failed
    with pytest.raises(IfcInputError, match=r"#\d+"):
        derive_frame_details(m.f, strict=True)


def test_short_block_keeps_its_axis():
    """A stub 150 mm long with a 200 mm deep section is reported, but no other direction of it is longer: kept."""
    m = Model("IFC4")
    item = m.extrusion(0.1, 0.2, 0.15, position=m.axis2((0.0, 0.0, 0.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)))
    e = m.element(item, origin=(0.0, 0.0, 0.0), axis=None, ref=None, rep_type="SweptSolid")
    m.element(m.extrusion(0.1, 0.2, 3.0, position=m.axis2((0.15, 0.0, 0.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0))),
              name="B2", origin=(0.0, 0.0, 0.0), axis=None, ref=None, rep_type="SweptSolid")
    frame, diags, notes, left = _derive(m)
    warn = [d for d in diags if d.entity_id == e.id() and "shorter than its section depth" in d.message]
    assert warn and "the axis is kept" in warn[0].message
    assert frame.section_sources[0] == "file"
    np.testing.assert_allclose(frame.nodes[:, 1:], 0.0, atol=1e-9)  # both along world x
    np.testing.assert_allclose(sorted(frame.nodes[:, 0]), [0.0, 0.15, 3.15], atol=1e-9)


def _i_mesh(L):
    """The I-section prism as a world mesh along +x (consistently outward triangles)."""
    m = Model("IFC4")
    fs = m.triangulated_i(L)
    V = np.array(fs.Coordinates.CoordList, dtype=float)
    F = np.array(fs.CoordIndex, dtype=np.int64) - 1
    return V, F


def test_inconsistent_winding_and_open_ends():
    """A closed mesh with randomly flipped triangles, and the same prism without its end caps, give the same section."""
    L = 3.0
    V, F = _i_mesh(L)
    rng = np.random.default_rng(3)
    flip = rng.random(len(F)) < 0.5
    F_mixed = np.where(flip[:, None], F[:, ::-1], F)
    caps = np.abs(np.cross(V[F[:, 1]] - V[F[:, 0]], V[F[:, 2]] - V[F[:, 0]])[:, 0]) > 1e-12  # normals along x
    axes, failed = mesh_axes([BodyMesh(1, V, F_mixed), BodyMesh(2, V, F[~caps])])
    assert not failed
    A, Iy, Iz = _i_exact()
    for k in (1, 2):
        ax = axes[k]
        assert (ax.A, ax.Iy, ax.Iz) == pytest.approx((A, Iy, Iz), rel=1e-9)
        assert ax.J == pytest.approx(_i_torsion(), rel=0.03)
        np.testing.assert_allclose(sorted([ax.start[0], ax.end[0]]), [0.0, L], atol=1e-9)
        np.testing.assert_allclose(ax.start[1:], 0.0, atol=1e-9)
        np.testing.assert_allclose(ax.z, [0.0, 0.0, 1.0], atol=1e-9)
        assert any("not a closed" in n for n in ax.notes)


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_axis_curve_with_a_brep_body(schema):
    """An Axis along the body keeps its ends, moved onto the body's centroid line; an Axis shorter than the section
    depth of a clearly longer body gives way to the body's principal direction."""
    m = Model(schema)
    L = 3.0
    # element coordinates: the body runs along local x from 0 to L; the Axis runs 50 mm off it (a cardinal point)
    # and 0.2 m short at the far end
    near = m.element(m.brep_hollow(L), name="B1", origin=(0.0, 0.0, 0.0), axis=None, ref=None,
                     axis_curve=[(0.0, 0.0, 0.05), (L - 0.2, 0.0, 0.05)])
    m.element(m.brep_hollow(L), name="B2", origin=(0.0, 5.0, 0.0), axis=None, ref=None,
              axis_curve=[(1.0, 0.0, 0.0), (1.1, 0.0, 0.0)])
    frame, diags, notes, left = _derive(m)
    assert not left
    got = sorted(map(tuple, np.round(frame.nodes, 9)))
    assert (0.0, 0.0, 0.0) in got and (L - 0.2, 0.0, 0.0) in got  # B1: the Axis' extent on the centroid line
    assert (0.0, 5.0, 0.0) in got and (L, 5.0, 0.0) in got  # B2: the body's own extent
    assert any(d.entity_id == near.id() and "moved 50 mm onto the centroid line" in d.message for d in diags)
    assert any("'Axis' is 100 mm long, shorter than its section depth" in d.message and "instead" in d.message
               for d in diags)
    assert list(frame.section_sources) == ["body geometry", "body geometry"]
