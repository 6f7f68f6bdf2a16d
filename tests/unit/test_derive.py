"""analysis.ifc.derive: the analytical frame derived from physical elements (route 2).

Small files are built here entity by entity for IFC2X3, IFC4 and IFC4X3 and
checked against hand geometry (coordinates, cardinal-point shifts, offsets),
closed-form section constants and statics on the engine's results.
"""
from __future__ import annotations

import math
import pathlib

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.guid  # noqa: E402

from analysis import analyze  # noqa: E402
from analysis.errors import IfcInputError  # noqa: E402
from analysis.ifc.derive import derive_frame  # noqa: E402
from analysis.ifc.placement import world_matrices  # noqa: E402
from analysis.model import STANDARD_GRAVITY  # noqa: E402
from analysis.units import unit_scales  # noqa: E402

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"
SCHEMAS = ["IFC2X3", "IFC4", "IFC4X3_ADD2"]
E_STEEL, G_STEEL, RHO = 210e9, 81e9, 7850.0
COL = (0.3, 0.3)  # rectangle b (profile x) x h (profile y), m
BEAM = (0.2, 0.4)


def _unit(v):
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v)


class Physical:
    """A tiny physical model: linear elements with an Axis curve and an extruded Body (file in m/kN or mm/kN)."""

    def __init__(self, schema="IFC4", mm=False):
        self.f = f = ifcopenshell.file(schema=schema)
        self.is2x3 = schema == "IFC2X3"
        self.L = 1000.0 if mm else 1.0  # file length units per metre
        self.F = 1e-3  # kN per N
        units = [
            f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI" if mm else None, Name="METRE"),
            f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Prefix="KILO", Name="NEWTON"),
            f.create_entity("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
            f.create_entity("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM"),
        ]
        self.ctx = f.create_entity("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3,
                                   Precision=1e-6, WorldCoordinateSystem=self.axis2())
        self.ctx_axis = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Axis", ContextType="Model",
                                        ParentContext=self.ctx, TargetView="GRAPH_VIEW")
        self.ctx_body = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model",
                                        ParentContext=self.ctx, TargetView="MODEL_VIEW")
        self.project = f.create_entity("IfcProject", GlobalId=self.gid(), Name="derive test", RepresentationContexts=[self.ctx],
                                       UnitsInContext=f.create_entity("IfcUnitAssignment", Units=units))
        self.site_pl = f.create_entity("IfcLocalPlacement", RelativePlacement=self.axis2((1.0 * self.L, 0.0, 0.0)))
        self.storeys = {}
        self.material = self.steel()

    @staticmethod
    def gid():
        return ifcopenshell.guid.new()

    def pt(self, c):
        return self.f.create_entity("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def axis2(self, origin=(0.0, 0.0, 0.0), axis=None, ref=None):
        f = self.f
        return f.create_entity("IfcAxis2Placement3D", Location=self.pt(origin),
                               Axis=f.create_entity("IfcDirection", DirectionRatios=[float(v) for v in axis]) if axis is not None else None,
                               RefDirection=f.create_entity("IfcDirection", DirectionRatios=[float(v) for v in ref]) if ref is not None else None)

    def storey(self, name, z_m):
        """A storey placed at z under a site placement shifted by +1 m in x (so the placement chain matters)."""
        pl = self.f.create_entity("IfcLocalPlacement", PlacementRelTo=self.site_pl, RelativePlacement=self.axis2((-1.0 * self.L, 0.0, z_m * self.L)))
        s = self.f.create_entity("IfcBuildingStorey", GlobalId=self.gid(), Name=name, ObjectPlacement=pl, Elevation=z_m * self.L)
        self.storeys[name] = (s, pl, z_m)
        return s

    def steel(self, density=True):
        f = self.f
        mat = f.create_entity("IfcMaterial", Name="Steel")
        E, G, rho = E_STEEL * self.F / self.L**2, G_STEEL * self.F / self.L**2, RHO / self.L**3
        if self.is2x3:
            f.create_entity("IfcMechanicalMaterialProperties", Material=mat, YoungModulus=E, ShearModulus=G, PoissonRatio=0.3)
            if density:
                f.create_entity("IfcGeneralMaterialProperties", Material=mat, MassDensity=rho)
            return mat

        def prop(name, measure, value):
            return f.create_entity("IfcPropertySingleValue", Name=name, NominalValue=f.create_entity(measure, value))

        f.create_entity("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat, Properties=[
            prop("YoungModulus", "IfcModulusOfElasticityMeasure", E), prop("ShearModulus", "IfcModulusOfElasticityMeasure", G)])
        if density:
            f.create_entity("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
                            Properties=[prop("MassDensity", "IfcMassDensityMeasure", rho)])
        return mat

    def rectangle(self, b, h, position=(0.0, 0.0)):
        f = self.f
        pos = f.create_entity("IfcAxis2Placement2D", Location=self.pt([v * self.L for v in position]))
        return f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", ProfileName=f"R{b}x{h}", Position=pos,
                               XDim=b * self.L, YDim=h * self.L)

    def element(self, cls, name, p0, p1, dims, *, cardinal=None, up=None, axis=True, body=True, predefined=None,
                storey=None, material=True, profile=None):
        """A linear element from p0 to p1 (m). Local z along it, local y = the profile's y = ``up`` made normal.

        ``cardinal`` (IFC4+: written in the profile usage; IFC2X3: geometry only) places the Axis through
        that cardinal point of the rectangle: the body's profile is shifted so.
        """
        f = self.f
        p0, p1 = np.asarray(p0, float), np.asarray(p1, float)
        z = _unit(p1 - p0)
        if up is None:
            up = (0.0, 1.0, 0.0) if abs(z[2]) > 0.999 else (0.0, 0.0, 1.0)
        y = _unit(np.asarray(up, float) - np.dot(up, z) * z)
        x = np.cross(y, z)
        length = float(np.linalg.norm(p1 - p0))
        if storey is not None:
            _, parent, zs = self.storeys[storey]
            origin = p0 - (0.0, 0.0, zs)
        else:
            parent, origin = None, p0
        pl = f.create_entity("IfcLocalPlacement", PlacementRelTo=parent, RelativePlacement=self.axis2(origin * self.L, z, x))
        b, h = dims
        card = {None: (0, 0), 10: (0, 0), 5: (0, 0), 8: (0, h / 2), 1: (b / 2, -h / 2), 2: (0, -h / 2)}[cardinal]
        prof = profile if profile is not None else self.rectangle(b, h, position=(-card[0], -card[1]))
        reps = []
        if axis:
            reps.append(f.create_entity("IfcShapeRepresentation", ContextOfItems=self.ctx_axis, RepresentationIdentifier="Axis",
                                        RepresentationType="Curve3D", Items=[f.create_entity(
                                            "IfcPolyline", Points=[self.pt((0, 0, 0)), self.pt((0, 0, length * self.L))])]))
        if body:
            solid = f.create_entity("IfcExtrudedAreaSolid", SweptArea=prof, Position=self.axis2(),
                                    ExtrudedDirection=f.create_entity("IfcDirection", DirectionRatios=[0.0, 0.0, 1.0]), Depth=length * self.L)
            reps.append(f.create_entity("IfcShapeRepresentation", ContextOfItems=self.ctx_body, RepresentationIdentifier="Body",
                                        RepresentationType="SweptSolid", Items=[solid]))
        kwargs = dict(GlobalId=self.gid(), Name=name, ObjectPlacement=pl,
                      Representation=f.create_entity("IfcProductDefinitionShape", Representations=reps) if reps else None)
        if predefined and not self.is2x3:
            kwargs["PredefinedType"] = predefined
        e = f.create_entity(cls, **kwargs)
        if material:
            self.associate([e], prof, cardinal)
        return e

    def associate(self, elements, profile, cardinal=None):
        f = self.f
        if self.is2x3:
            f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=elements, RelatingMaterial=self.material)
            props = f.create_entity("IfcGeneralProfileProperties", ProfileName=profile.ProfileName, ProfileDefinition=profile)
            f.create_entity("IfcRelAssociatesProfileProperties", GlobalId=self.gid(), RelatedObjects=elements,
                            RelatingProfileProperties=props)
            return
        mp = f.create_entity("IfcMaterialProfile", Material=self.material, Profile=profile)
        mps = f.create_entity("IfcMaterialProfileSet", MaterialProfiles=[mp])
        usage = f.create_entity("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=cardinal or 5)
        f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=elements, RelatingMaterial=usage)

    def derive(self, **kw):
        return derive_frame(self.f, scales=unit_scales(self.f), **kw)


def portal(schema="IFC4", mm=False, beam_end=(6.0, 0.0, 4.0), **kw):
    m = Physical(schema, mm)
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 4), COL)
    m.element("IfcColumn", "C2", (6, 0, 0), (6, 0, 4), COL)
    m.element("IfcBeam", "B1", (0, 0, 4), beam_end, BEAM, **kw)
    return m


def re_match(pattern, text):
    import re

    return re.search(pattern, text) is not None


def node_at(frame, xyz, atol=1e-9):
    d = np.linalg.norm(frame.nodes - np.asarray(xyz, float), axis=1)
    k = int(np.argmin(d))
    assert d[k] <= atol, f"no node at {xyz}: nearest {frame.nodes[k]}"
    return k


# --------------------------------------------------------------------------- placement
def test_placement_matches_ifcopenshell_util():
    import ifcopenshell.util.placement as up

    m = portal()
    m.storey("L1", 3.0)
    m.element("IfcBeam", "S", (0, 0, 3), (0, 6, 3.5), BEAM, storey="L1", up=(0.3, 0.1, 1.0))
    els = m.f.by_type("IfcBeam") + m.f.by_type("IfcColumn")
    got = world_matrices([e.ObjectPlacement for e in els] + [None])
    ref = np.array([up.get_local_placement(e.ObjectPlacement) for e in els] + [np.eye(4)])
    np.testing.assert_allclose(got, ref, atol=1e-12)  # ifcopenshell's own placement utility as the reference


# --------------------------------------------------------------------------- portal
@pytest.mark.parametrize("schema", SCHEMAS)
def test_portal_coordinates_supports_releases(schema):
    m = portal(schema)
    frame, diags, notes = m.derive()
    np.testing.assert_allclose(frame.nodes, [[0, 0, 0], [6, 0, 0], [0, 0, 4], [6, 0, 4]], atol=1e-12)
    assert frame.node_ids == ("N1", "N2", "N3", "N4")
    assert set(frame.member_ids) == {"C1", "C2", "B1"}
    k = frame.member_index("B1")
    assert tuple(frame.members[k]) == (2, 3)
    np.testing.assert_allclose(frame.ref[k], [0, 0, 1], atol=1e-12)  # profile y (depth) vertical
    assert frame.restraints[:2].all() and not frame.restraints[2:].any()
    assert not frame.releases.any() and not frame.truss.any()
    b, h = BEAM
    # rectangle: A = b h, Iy = b h^3/12 about local y = profile x (common practice, no source)
    np.testing.assert_allclose(frame.A[k], b * h, rtol=1e-12)
    np.testing.assert_allclose(frame.Iy[k], b * h**3 / 12, rtol=1e-12)
    np.testing.assert_allclose(frame.Iz[k], h * b**3 / 12, rtol=1e-12)
    np.testing.assert_allclose(frame.E, E_STEEL, rtol=1e-12)
    np.testing.assert_allclose(frame.density, RHO, rtol=1e-12)
    assert frame.member_sources[k] == m.f.by_type("IfcBeam")[0].GlobalId
    assert frame.member_labels[k].startswith("#") and "IfcBeam 'B1'" in frame.member_labels[k]
    assert [c.name for c in frame.load_cases] == ["Self-weight"]
    assert any("Supports (fixed" in n for n in notes)
    # statics: the supports carry the whole weight rho g sum(A L) (common practice, no source)
    res = analyze(frame)
    cr = res.case("Self-weight") if hasattr(res, "case") else res.cases["Self-weight"]
    weight = RHO * STANDARD_GRAVITY * (2 * COL[0] * COL[1] * 4 + b * h * 6)
    np.testing.assert_allclose(cr.reactions[:, 2].sum(), weight, rtol=1e-9)


def test_mm_file_gives_the_same_frame_as_m_file():
    a, _, _ = portal("IFC4").derive()
    b, _, _ = portal("IFC4", mm=True).derive()
    np.testing.assert_allclose(b.nodes, a.nodes, rtol=1e-12, atol=1e-12)
    for key in ("A", "Iy", "Iz", "J", "E", "G", "density"):
        np.testing.assert_allclose(getattr(b, key), getattr(a, key), rtol=1e-9, err_msg=key)


def test_support_options():
    m = portal()
    fr, _, notes = m.derive(defaults={"support": "pinned"})
    assert fr.restraints[:2, :3].all() and not fr.restraints[:, 3:].any()
    fr, _, _ = m.derive(support_level=4.0)
    assert fr.restraints[2:].all() and not fr.restraints[:2].any()


# --------------------------------------------------------------------------- merging, splitting, eccentricity
def test_end_within_tolerance_merges_and_beyond_becomes_an_offset():
    m = portal(beam_end=(5.995, 0.0, 4.0))  # 5 mm short of the column axis
    fr, diags, notes = m.derive()
    assert fr.n_nodes == 4
    k = fr.member_index("B1")
    np.testing.assert_allclose(fr.nodes[fr.members[k, 1]], [6, 0, 4], atol=1e-12)  # the node stays on the column
    assert not fr.offsets.any()
    assert any("merged" in n for n in notes)
    # a 1 mm tolerance: the end is eccentric (5 mm < half the column size), joined by a rigid offset
    fr, diags, notes = m.derive(merge_tolerance=0.001)
    assert fr.n_nodes == 4
    k = fr.member_index("B1")
    np.testing.assert_allclose(fr.offsets[k, 1], [-0.005, 0, 0], atol=1e-12)
    np.testing.assert_allclose(fr.lengths[k], 5.995, rtol=1e-12)
    assert any("rigid offset" in d.message and "'B1'" in d.message for d in diags)


def test_beam_at_column_face_gets_offset_to_column_node():
    m = Physical()
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 4), COL)
    m.element("IfcColumn", "C2", (6, 0, 0), (6, 0, 4), COL)
    m.element("IfcBeam", "B1", (0.15, 0, 4), (5.85, 0, 4), BEAM)  # between the column faces
    fr, diags, notes = m.derive()
    assert fr.n_nodes == 4 and fr.n_members == 3
    k = fr.member_index("B1")
    np.testing.assert_allclose(fr.offsets[k], [[0.15, 0, 0], [-0.15, 0, 0]], atol=1e-12)
    assert sum("rigid offset" in d.message for d in diags) == 2
    assert any("eccentric" in n for n in notes)


def test_beam_landing_on_column_span_splits_it():
    m = Physical()
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 8), COL)
    m.element("IfcColumn", "C2", (6, 0, 0), (6, 0, 8), COL)
    m.element("IfcBeam", "B1", (0.005, 0, 4), (6, 0, 4.004), BEAM)
    fr, diags, notes = m.derive()
    assert set(fr.member_ids) == {"C1/1", "C1/2", "C2/1", "C2/2", "B1"}
    np.testing.assert_allclose(fr.lengths[[fr.member_index("C1/1"), fr.member_index("C1/2")]], [4, 4], atol=0.01)
    assert fr.member_sources[fr.member_index("C1/2")] == m.f.by_type("IfcColumn")[0].GlobalId
    assert "segment 2 of 2" in fr.member_labels[fr.member_index("C1/2")]


def test_secondary_beam_splits_primaries_and_is_pinned():
    m = Physical()
    for i, x in enumerate((0, 6)):
        for j, y in enumerate((0, 5)):
            m.element("IfcColumn", f"C{i}{j}", (x, y, 0), (x, y, 4), COL)
    m.element("IfcBeam", "P1", (0, 0, 4), (6, 0, 4), BEAM)
    m.element("IfcBeam", "P2", (0, 5, 4), (6, 5, 4), BEAM)
    m.element("IfcBeam", "S", (3, 0, 4), (3, 5, 4), BEAM)
    fr, diags, notes = m.derive()
    assert {"P1/1", "P1/2", "P2/1", "P2/2", "S"} <= set(fr.member_ids)
    s = fr.member_index("S")
    assert fr.releases[s, :, 4:6].all() and not fr.releases[s, :, :4].any()
    for pid in ("P1/1", "P1/2", "P2/1", "P2/2"):
        assert not fr.releases[fr.member_index(pid)].any()
    assert any("split" in n for n in notes) and any("framing into another beam" in n for n in notes)
    fr2, _, _ = m.derive(defaults={"secondary_beams": "rigid"})
    assert not fr2.releases.any()
    # the secondary beam, pinned at both ends, hands half its weight to each primary:
    # the vertical reactions still sum to the total weight (statics, common practice, no source)
    res = analyze(fr)
    cr = res.cases["Self-weight"] if hasattr(res, "cases") else res.case("Self-weight")
    total = RHO * STANDARD_GRAVITY * float(np.sum(fr.A * fr.lengths))
    np.testing.assert_allclose(cr.reactions[:, 2].sum(), total, rtol=1e-9)


def test_braces_are_axial_bars_and_declared_pin_connection_is_honoured():
    m = portal()
    brace = m.element("IfcMember", "BR", (0, 0, 0), (6, 0, 4), (0.1, 0.1), predefined="BRACE")
    fr, _, notes = m.derive()
    assert fr.truss[fr.member_index("BR")] and fr.truss.sum() == 1
    fr, _, _ = m.derive(defaults={"members": "frame"})
    assert not fr.truss.any()
    col = m.f.by_type("IfcColumn")[1]
    beam = m.f.by_type("IfcBeam")[0]
    m.f.create_entity("IfcRelConnectsWithRealizingElements", GlobalId=m.gid(), RelatingElement=col, RelatedElement=beam,
                      RealizingElements=[], ConnectionType="pinned end plate")
    fr, diags, notes = m.derive()
    k = fr.member_index("B1")
    assert fr.releases[k, 1, 4:6].all() and not fr.releases[k, 0].any()
    assert any("declared connections" in n for n in notes)
    assert brace.id()


# --------------------------------------------------------------------------- cardinal points and axes
@pytest.mark.parametrize("source", ["axis", "body"])
def test_cardinal_point_top_centre_puts_centroid_half_depth_below_axis(source):
    m = Physical()
    m.element("IfcBeam", "B1", (0, 0, 4), (6, 0, 4), BEAM, cardinal=8, axis=source == "axis", body=True)
    # with an Axis, the usage's 8 says the curve runs through the top centre; the body alone is placed so already
    fr, _, _ = m.derive(support_level=-1.0)
    # geometry by hand: top-centre insertion, centroid h/2 below (IFC IfcCardinalPointReference 8)
    np.testing.assert_allclose(fr.nodes, [[0, 0, 4 - BEAM[1] / 2], [6, 0, 4 - BEAM[1] / 2]], atol=1e-12)


def test_cardinal_point_from_axis_only_and_bottom_left():
    m = Physical("IFC4")
    # bottom left: "left" is the profile's +x (IfcCardinalPointReference), here local x = world +Y for a beam along X
    m.element("IfcBeam", "B1", (0, 0, 4), (6, 0, 4), BEAM, cardinal=1, body=False)
    fr, _, _ = m.derive(support_level=-1.0)
    b, h = BEAM
    np.testing.assert_allclose(fr.nodes, [[0, -b / 2, 4 + h / 2], [6, -b / 2, 4 + h / 2]], atol=1e-12)


def test_body_only_column_with_rotated_profile():
    m = Physical("IFC4X3_ADD2")
    m.element("IfcColumn", "C1", (2, 3, 0), (2, 3, 3), COL, axis=False, up=(1.0, 0.0, 0.0))
    fr, _, _ = m.derive()
    np.testing.assert_allclose(fr.nodes, [[2, 3, 0], [2, 3, 3]], atol=1e-12)
    np.testing.assert_allclose(fr.ref[0], [1, 0, 0], atol=1e-12)


def test_angle_profile_turns_to_principal_axes():
    m = Physical("IFC4")
    f = m.f
    angle = f.create_entity("IfcLShapeProfileDef", ProfileType="AREA", ProfileName="L100x100x10", Depth=0.1, Width=0.1, Thickness=0.01)
    m.element("IfcBeam", "A", (0, 0, 1), (3, 0, 1), (0.1, 0.1), profile=angle)
    fr, _, _ = m.derive(support_level=1.0)
    # equal-leg angle: principal axes at 45 degrees to the legs (common practice, no source)
    assert math.isclose(abs(fr.roll[0]), math.pi / 4, rel_tol=1e-9)
    assert fr.Iy[0] != pytest.approx(fr.Iz[0])


# --------------------------------------------------------------------------- loads
def test_area_load_tributary_widths_and_total():
    m = Physical()
    m.storey("Level 1", 4.0)
    xs, ys = (0, 6, 12), (0, 5)
    for x in xs:
        for y in ys:
            m.element("IfcColumn", f"C{x}{y}", (x, y, 0), (x, y, 4), COL)
    for y in ys:
        m.element("IfcBeam", f"X{y}a", (0, y, 4), (6, y, 4), BEAM, storey="Level 1")
        m.element("IfcBeam", f"X{y}b", (6, y, 4), (12, y, 4), BEAM, storey="Level 1")
    for x in xs:
        m.element("IfcBeam", f"Y{x}", (x, 0, 4), (x, 5, 4), BEAM, storey="Level 1")
    fr, _, notes = m.derive(area_loads=[("Level 1", "Floor", 2000.0)])
    case = fr.case("Floor")
    # beams along X are 5 m apart, along Y 6 m apart: the slab spans the shorter way, onto the X beams,
    # each carrying half of the 5 m span: w = 2 kPa * 2.5 m = 5 kN/m (one-way tributary rule, common practice, no source)
    loaded = {ld.member: ld.w1 for ld in case.member}
    assert set(loaded) == {"X0a", "X0b", "X5a", "X5b"}
    np.testing.assert_allclose(list(loaded.values()), -5000.0, rtol=1e-12)
    res = analyze(fr.replace(load_cases=(case,)))
    cr = res.cases["Floor"] if hasattr(res, "cases") else res.case("Floor")
    np.testing.assert_allclose(cr.reactions[:, 2].sum(), 2000.0 * 12 * 5, rtol=1e-9)  # statics: p times floor area
    same, _, _ = m.derive(area_loads=[(4.0, "Floor", 2000.0)])
    assert same.case("Floor") == case
    with pytest.raises(IfcInputError, match="Level 9"):
        m.derive(area_loads=[("Level 9", "Floor", 1.0)])


def test_structural_load_groups_without_model_are_ignored_with_a_note():
    m = portal()
    m.f.create_entity("IfcStructuralLoadGroup", GlobalId=m.gid(), Name="G", PredefinedType="LOAD_CASE",
                      ActionType="PERMANENT_G", ActionSource="DEAD_LOAD_G")
    fr, _, notes = m.derive()
    assert [c.name for c in fr.load_cases] == ["Self-weight"]
    assert any("load groups" in n for n in notes)


# --------------------------------------------------------------------------- errors
def test_missing_axis_and_body():
    m = portal()
    m.element("IfcBeam", "Ghost", (0, 0, 2), (6, 0, 2), BEAM, axis=False, body=False)
    fr, diags, notes = m.derive()  # left out, not aborted
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    assert any(re_match(r"#\d+ IfcBeam 'Ghost' \(.+\): left out — no usable body: no 'Axis'", d.message) for d in diags)
    assert any("Left out of the analytical frame: 1 elements (1 no usable body)" in n for n in notes)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcBeam 'Ghost'.*no 'Axis'"):
        m.derive(strict=True)


def test_zero_length_element():
    m = portal()
    e = m.element("IfcBeam", "Dot", (0, 0, 2), (1, 0, 2), BEAM, body=False)
    e.Representation.Representations[0].Items[0].Points = [m.pt((0, 0, 0)), m.pt((0, 0, 0))]
    fr, diags, _ = m.derive()
    assert "Dot" not in fr.member_ids and fr.n_members == 3
    assert any("'Dot'" in d.message and "left out — zero length" in d.message for d in diags)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcBeam 'Dot'.*zero length"):
        m.derive(strict=True)


def test_unknown_profile():
    m = portal()
    f = m.f
    odd = f.create_entity("IfcArbitraryOpenProfileDef", ProfileType="CURVE", ProfileName="open",
                          Curve=f.create_entity("IfcPolyline", Points=[m.pt((0.0, 0.0)), m.pt((0.1, 0.0))]))
    m.element("IfcBeam", "Odd", (0, 0, 2), (6, 0, 2), BEAM, profile=odd)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcBeam 'Odd'"):
        m.derive()


def test_missing_material_unless_default():
    m = portal()
    m.element("IfcBeam", "Bare", (0, 0, 2), (6, 0, 2), BEAM, material=False)
    # no material at all: the documented default for the class (structural steel S235), with a warning
    fr, diags, _ = m.derive()
    k = fr.member_index("Bare")
    assert (fr.E[k], fr.material_sources[k], fr.material_names[k]) == (210e9, "default", "S235")
    assert any(d.level == "warning" and "'Bare'" in d.message and "no material" in d.message for d in diags)
    fr, diags, _ = m.derive(defaults={"E": 200e9, "G": 80e9, "density": 7800.0})
    k = fr.member_index("Bare")
    assert fr.E[k] == 200e9
    assert any("'Bare'" in d.message for d in diags)


def test_missing_profile_unless_default_section():
    from analysis.model import Section

    m = portal()
    e = m.element("IfcBeam", "Line", (0, 0, 2), (6, 0, 2), BEAM, body=False, material=False)
    m.f.create_entity("IfcRelAssociatesMaterial", GlobalId=m.gid(), RelatedObjects=[e], RelatingMaterial=m.material)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcBeam 'Line': no profile"):
        m.derive()
    sec = Section("given", A=0.01, Iy=2e-4, Iz=1e-4, J=5e-5)
    fr, diags, _ = m.derive(defaults={"section": sec})
    k = fr.member_index("Line")
    assert (fr.A[k], fr.Iy[k], fr.section_names[k]) == (0.01, 2e-4, "given")
    assert any("default section" in d.message for d in diags)


def test_duplicate_names_fall_back_to_global_ids():
    m = portal()
    twin = m.element("IfcBeam", "B1", (0, 0, 2), (6, 0, 2), BEAM)
    fr, _, _ = m.derive()
    assert twin.GlobalId in fr.member_ids and "B1" not in fr.member_ids


# --------------------------------------------------------------------------- the sample model
def test_braced_office_sample():
    path = SAMPLES / "braced_office.ifc"
    if not path.exists():
        pytest.skip("sample_models/braced_office.ifc not generated")
    f = ifcopenshell.open(str(path))
    fr, diags, notes = derive_frame(f, scales=unit_scales(f), area_loads=[("Level 1", "Office", 3000.0)])
    # 4 x 3 column lines on 4 levels = 48 nodes, plus the two mid-span landings of the secondary beam
    assert fr.n_nodes == 50
    assert fr.n_members == 106 + 2
    split = sorted(i for i in fr.member_ids if "/" in i)
    assert split == ["BX-BC1-L1/1", "BX-BC1-L1/2", "BX-BC2-L1/1", "BX-BC2-L1/2"]
    np.testing.assert_allclose(fr.lengths[[fr.member_index(i) for i in split]], 3.0, rtol=1e-12)
    s = fr.member_index("BS-BC12-L1")
    assert fr.releases[s, :, 4:6].all()
    # the beam stopping 5 mm short of column D2 reaches the column's node at (18, 7.5, 7.2)
    k = fr.member_index("BY-D12-L2")
    np.testing.assert_allclose(fr.nodes[fr.members[k, 1]], [18.0, 7.5, 7.2], atol=1e-9)
    assert any("5 mm" in d.message and "BY-D12-L2" in d.message for d in diags)
    assert fr.truss.sum() == 18
    assert fr.restraints.all(axis=1).sum() == 12
    res = analyze(fr)
    cr = res.cases["Office"] if hasattr(res, "cases") else res.case("Office")
    # statics: the floor area 18 m x 15 m at 3 kPa reaches the supports (common practice, no source)
    np.testing.assert_allclose(cr.reactions[:, 2].sum(), 3000.0 * 18 * 15, rtol=1e-9)
