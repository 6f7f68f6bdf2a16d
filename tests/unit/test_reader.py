"""analysis.ifc.reader: route 1 (structural analysis models) and the entry point.

Small IFC files are built here with ``create_entity`` for IFC2X3, IFC4 and
IFC4X3, and checked against hand values (coordinates, closed-form section
constants, unit conversion) and against statics on the engine's results.
"""
from __future__ import annotations

import pathlib

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.guid  # noqa: E402

from analysis import analyze  # noqa: E402
from analysis.errors import IfcInputError  # noqa: E402
from analysis.ifc.reader import IfcModel, ReaderDefaults, read_ifc  # noqa: E402
from analysis.model import STANDARD_GRAVITY, Section  # noqa: E402

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"
SCHEMAS = ["IFC2X3", "IFC4", "IFC4X3_ADD2"]
ENTITY = r"#\d+ Ifc\w+"

# Rectangle 0.2 (xp -> local y) x 0.4 (yp -> local z), m
B, H = 0.2, 0.4
E_STEEL, G_STEEL, RHO = 210e9, 81e9, 7850.0


class Model:
    """A tiny structural analysis model built entity by entity (file units: m, kN unless told)."""

    def __init__(self, schema: str, length: str = "METRE", force_prefix: str | None = "KILO"):
        self.f = f = ifcopenshell.file(schema=schema)
        self.schema = schema
        self.is2x3 = schema == "IFC2X3"
        self.L = 1000.0 if length == "MILLIMETRE" else 1.0  # file units per metre
        self.F = 1e-3 if force_prefix == "KILO" else 1.0  # file units per newton
        units = [
            f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI" if length == "MILLIMETRE" else None, Name="METRE"),
            f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Prefix=force_prefix, Name="NEWTON"),
            f.create_entity("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
            f.create_entity("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM"),
        ]
        self.ctx = f.create_entity("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3,
                                   Precision=1e-6, WorldCoordinateSystem=self.axis2())
        f.create_entity("IfcProject", GlobalId=self.gid(), Name="test", RepresentationContexts=[self.ctx],
                        UnitsInContext=f.create_entity("IfcUnitAssignment", Units=units))
        self.placement = f.create_entity("IfcLocalPlacement", RelativePlacement=self.axis2())
        kwargs = dict(GlobalId=self.gid(), Name="Model A", PredefinedType="LOADING_3D")
        if not self.is2x3:
            kwargs["SharedPlacement"] = self.placement
        self.model = f.create_entity("IfcStructuralAnalysisModel", **kwargs)
        self.items = []
        self.nodes = {}
        self.vertices = {}
        self.members = {}
        self.groups = []
        self.material = None

    # -- basics
    @staticmethod
    def gid() -> str:
        return ifcopenshell.guid.new()

    def axis2(self, origin=(0.0, 0.0, 0.0), axis=None, ref=None):
        f = self.f
        return f.create_entity("IfcAxis2Placement3D", Location=f.create_entity("IfcCartesianPoint", Coordinates=origin),
                               Axis=f.create_entity("IfcDirection", DirectionRatios=axis) if axis else None,
                               RefDirection=f.create_entity("IfcDirection", DirectionRatios=ref) if ref else None)

    def topo(self, items, kind):
        return self.f.create_entity("IfcProductDefinitionShape", Representations=[self.f.create_entity(
            "IfcTopologyRepresentation", ContextOfItems=self.ctx, RepresentationIdentifier="Reference",
            RepresentationType=kind, Items=items)])

    def condition(self, name, values):
        """values: 6 items, True fixed / False free / number spring (file units)."""
        f = self.f
        if self.is2x3:
            conv = [(-1.0 if v is True else 0.0 if v is False else float(v)) for v in values]
            return f.create_entity("IfcBoundaryNodeCondition", name, *conv)
        out = []
        for k, v in enumerate(values):
            if isinstance(v, bool):
                out.append(f.create_entity("IfcBoolean", v))
            else:
                out.append(f.create_entity("IfcLinearStiffnessMeasure" if k < 3 else "IfcRotationalStiffnessMeasure", float(v)))
        return f.create_entity("IfcBoundaryNodeCondition", name, *out)

    # -- items
    def node(self, name, xyz_m, support=None, ccs=None):
        f = self.f
        v = f.create_entity("IfcVertexPoint", VertexGeometry=f.create_entity(
            "IfcCartesianPoint", Coordinates=[c * self.L for c in xyz_m]))
        kwargs = dict(GlobalId=self.gid(), Name=name, ObjectPlacement=self.placement,
                      Representation=self.topo([v], "Vertex"),
                      AppliedCondition=self.condition(f"{name} support", support) if support is not None else None)
        if ccs is not None:
            kwargs["ConditionCoordinateSystem"] = ccs
        c = f.create_entity("IfcStructuralPointConnection", **kwargs)
        self.nodes[name], self.vertices[name] = c, v
        self.items.append(c)
        return c

    def steel(self, with_density=True, with_modulus=True):
        f = self.f
        mat = f.create_entity("IfcMaterial", Name="Steel")
        E = E_STEEL * self.F / self.L**2  # kN/m2 or N/mm2 ...
        G = G_STEEL * self.F / self.L**2
        rho = RHO / self.L**3  # kg per file volume unit
        if self.is2x3:
            if with_modulus:
                f.create_entity("IfcMechanicalMaterialProperties", Material=mat, YoungModulus=E, ShearModulus=G, PoissonRatio=0.3)
            if with_density:
                f.create_entity("IfcGeneralMaterialProperties", Material=mat, MassDensity=rho)
            return mat

        def prop(name, measure, value):
            return f.create_entity("IfcPropertySingleValue", Name=name, NominalValue=f.create_entity(measure, value))

        if with_modulus:
            f.create_entity("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat, Properties=[
                prop("YoungModulus", "IfcModulusOfElasticityMeasure", E), prop("ShearModulus", "IfcModulusOfElasticityMeasure", G)])
        if with_density:
            f.create_entity("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
                            Properties=[prop("MassDensity", "IfcMassDensityMeasure", rho)])
        return mat

    def rectangle(self):
        f = self.f
        pos = f.create_entity("IfcAxis2Placement2D", Location=f.create_entity("IfcCartesianPoint", Coordinates=(0.0, 0.0)))
        return f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", ProfileName="R200x400", Position=pos,
                               XDim=B * self.L, YDim=H * self.L)

    def associate(self, members, material, profile, cardinal=10):
        f = self.f
        if self.is2x3:
            f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=members, RelatingMaterial=material)
            if profile is not None:
                props = f.create_entity("IfcGeneralProfileProperties", ProfileName=profile.ProfileName, ProfileDefinition=profile)
                f.create_entity("IfcRelAssociatesProfileProperties", GlobalId=self.gid(), RelatedObjects=members,
                                RelatingProfileProperties=props)
            return
        if profile is None:
            f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=members, RelatingMaterial=material)
            return
        mp = f.create_entity("IfcMaterialProfile", Material=material, Profile=profile)
        mps = f.create_entity("IfcMaterialProfileSet", MaterialProfiles=[mp])
        usage = f.create_entity("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=cardinal)
        f.create_entity("IfcRelAssociatesMaterial", GlobalId=self.gid(), RelatedObjects=members, RelatingMaterial=usage)

    def member(self, name, a, b, predefined="RIGID_JOINED_MEMBER", axis=(0.0, 0.0, 1.0), conditions=(None, None),
               edge=True, connect=(True, True)):
        f = self.f
        kwargs = dict(GlobalId=self.gid(), Name=name, ObjectPlacement=self.placement, PredefinedType=predefined)
        if edge:
            kwargs["Representation"] = self.topo([f.create_entity("IfcEdge", EdgeStart=self.vertices[a], EdgeEnd=self.vertices[b])], "Edge")
        if not self.is2x3:
            kwargs["Axis"] = f.create_entity("IfcDirection", DirectionRatios=axis)
        m = f.create_entity("IfcStructuralCurveMember", **kwargs)
        for node, cond, yes in zip((a, b), conditions, connect):
            if yes:
                f.create_entity("IfcRelConnectsStructuralMember", GlobalId=self.gid(), RelatingStructuralMember=m,
                                RelatedStructuralConnection=self.nodes[node],
                                AppliedCondition=self.condition(f"{name}-{node}", cond) if cond is not None else None)
        self.members[name] = m
        self.items.append(m)
        return m

    # -- loads
    def case(self, name, self_weight=None, coefficient=1.0):
        kwargs = dict(GlobalId=self.gid(), Name=name, PredefinedType="LOAD_CASE", ActionType="PERMANENT_G",
                      ActionSource="DEAD_LOAD_G", Coefficient=coefficient)
        if self.is2x3:
            g = self.f.create_entity("IfcStructuralLoadGroup", **kwargs)
        else:
            g = self.f.create_entity("IfcStructuralLoadCase", SelfWeightCoefficients=self_weight, **kwargs)
        self.groups.append(g)
        return g

    def combination(self, name, terms, coefficient=1.0):
        f = self.f
        combo = f.create_entity("IfcStructuralLoadGroup", GlobalId=self.gid(), Name=name, PredefinedType="LOAD_COMBINATION",
                                ActionType="NOTDEFINED", ActionSource="NOTDEFINED", Coefficient=coefficient)
        for factor, cases in terms:
            if self.is2x3:
                f.create_entity("IfcRelAssignsToGroup", GlobalId=self.gid(), RelatedObjects=cases, RelatingGroup=combo)
            else:
                f.create_entity("IfcRelAssignsToGroupByFactor", GlobalId=self.gid(), RelatedObjects=cases,
                                RelatingGroup=combo, Factor=factor)
        self.groups.append(combo)
        return combo

    def _act(self, group, action, item):
        f = self.f
        f.create_entity("IfcRelConnectsStructuralActivity", GlobalId=self.gid(), RelatingElement=item,
                        RelatedStructuralActivity=action)
        f.create_entity("IfcRelAssignsToGroup", GlobalId=self.gid(), RelatedObjects=[action], RelatingGroup=group)
        return action

    def nodal_force(self, group, node, force_n=(0, 0, 0), moment_nm=(0, 0, 0)):
        f = self.f
        load = f.create_entity("IfcStructuralLoadSingleForce", Name="F",
                               ForceX=force_n[0] * self.F, ForceY=force_n[1] * self.F, ForceZ=force_n[2] * self.F,
                               MomentX=moment_nm[0] * self.F * self.L, MomentY=moment_nm[1] * self.F * self.L,
                               MomentZ=moment_nm[2] * self.F * self.L)
        a = f.create_entity("IfcStructuralPointAction", GlobalId=self.gid(), Name="F", AppliedLoad=load,
                            GlobalOrLocal="GLOBAL_COORDS", DestabilizingLoad=False)
        return self._act(group, a, self.nodes[node])

    def displacement(self, group, node, uz_m):
        f = self.f
        load = f.create_entity("IfcStructuralLoadSingleDisplacement", Name="u", DisplacementZ=uz_m * self.L)
        a = f.create_entity("IfcStructuralPointAction", GlobalId=self.gid(), Name="u", AppliedLoad=load,
                            GlobalOrLocal="GLOBAL_COORDS", DestabilizingLoad=False)
        return self._act(group, a, self.nodes[node])

    def member_point_force(self, group, member, xyz_m, fz_n, local=False):
        f = self.f
        load = f.create_entity("IfcStructuralLoadSingleForce", Name="P", ForceZ=fz_n * self.F)
        v = f.create_entity("IfcVertexPoint", VertexGeometry=f.create_entity(
            "IfcCartesianPoint", Coordinates=[c * self.L for c in xyz_m]))
        a = f.create_entity("IfcStructuralPointAction", GlobalId=self.gid(), Name="P", AppliedLoad=load,
                            ObjectPlacement=self.placement, Representation=self.topo([v], "Vertex"),
                            GlobalOrLocal="LOCAL_COORDS" if local else "GLOBAL_COORDS", DestabilizingLoad=False)
        return self._act(group, a, self.members[member])

    def line_load(self, group, member, qz_n_per_m, projected=False):
        f = self.f
        load = f.create_entity("IfcStructuralLoadLinearForce", Name="q", LinearForceZ=qz_n_per_m * self.F / self.L)
        kwargs = dict(GlobalId=self.gid(), Name="q", AppliedLoad=load, GlobalOrLocal="GLOBAL_COORDS",
                      DestabilizingLoad=False, ProjectedOrTrue="PROJECTED_LENGTH" if projected else "TRUE_LENGTH")
        if self.is2x3:
            a = f.create_entity("IfcStructuralLinearAction", **kwargs)
        else:
            a = f.create_entity("IfcStructuralCurveAction", PredefinedType="CONST", **kwargs)
        return self._act(group, a, self.members[member])

    def polygonal_load(self, group, member, samples):
        """samples: [(location m, qz N/m), ...] (IFC4+ only)."""
        f = self.f
        values = [f.create_entity("IfcStructuralLoadLinearForce", LinearForceZ=q * self.F / self.L) for _, q in samples]
        load = f.create_entity("IfcStructuralLoadConfiguration", Name="poly", Values=values,
                               Locations=[[s * self.L] for s, _ in samples])
        a = f.create_entity("IfcStructuralCurveAction", GlobalId=self.gid(), Name="poly", AppliedLoad=load,
                            GlobalOrLocal="GLOBAL_COORDS", DestabilizingLoad=False, ProjectedOrTrue="TRUE_LENGTH",
                            PredefinedType="LINEAR" if len(samples) == 2 else "POLYGONAL")
        return self._act(group, a, self.members[member])

    def discrete_load(self, group, member, points, reverse=False):
        """points: [(location m along the action, Fz N), ...]: a DISCRETE curve action (IFC4+ only)."""
        f = self.f
        values = [f.create_entity("IfcStructuralLoadSingleForce", ForceZ=fz * self.F) for _, fz in points]
        load = f.create_entity("IfcStructuralLoadConfiguration", Name="discrete", Values=values,
                               Locations=[[s * self.L] for s, _ in points])
        a = f.create_entity("IfcStructuralCurveAction", GlobalId=self.gid(), Name="discrete", AppliedLoad=load,
                            GlobalOrLocal="GLOBAL_COORDS", DestabilizingLoad=False, ProjectedOrTrue="TRUE_LENGTH",
                            PredefinedType="DISCRETE")
        return self._act(group, a, self.members[member])

    def temperature_load(self, group, member, delta_t, delta_tz=None):
        f = self.f
        names = ("DeltaT_Constant", "DeltaT_Z") if self.is2x3 else ("DeltaTConstant", "DeltaTZ")
        load = f.create_entity("IfcStructuralLoadTemperature", Name="heat", **{names[0]: delta_t, names[1]: delta_tz})
        kwargs = dict(GlobalId=self.gid(), Name="heat", AppliedLoad=load, GlobalOrLocal="LOCAL_COORDS",
                      DestabilizingLoad=False)
        if self.is2x3:
            a = f.create_entity("IfcStructuralLinearAction", ProjectedOrTrue="TRUE_LENGTH", **kwargs)
        else:
            a = f.create_entity("IfcStructuralCurveAction", PredefinedType="CONST", ProjectedOrTrue="TRUE_LENGTH",
                                **kwargs)
        return self._act(group, a, self.members[member])

    def write(self, path) -> str:
        f = self.f
        f.create_entity("IfcRelAssignsToGroup", GlobalId=self.gid(), RelatedObjects=self.items, RelatingGroup=self.model)
        if self.groups:
            self.model.LoadedBy = self.groups
        f.write(str(path))
        return str(path)


def cantilever(schema, tmp_path, *, length="METRE", force_prefix="KILO", **kw):
    """N1 fixed at the origin, N2 free at (4, 0, 0); one rectangle member B1; tip load -10 kN."""
    m = Model(schema, length, force_prefix)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    b1 = m.member("B1", "N1", "N2", **kw)
    m.associate([b1], m.steel(), m.rectangle())
    g = m.case("G", self_weight=None)
    m.nodal_force(g, "N2", force_n=(0.0, 0.0, -10000.0))
    return m, g


# --------------------------------------------------------------------------- basics
@pytest.mark.parametrize("schema", SCHEMAS)
def test_cantilever_geometry_section_material_and_loads(schema, tmp_path):
    m, _ = cantilever(schema, tmp_path)
    result = read_ifc(m.write(tmp_path / "c.ifc"))
    assert isinstance(result, IfcModel)
    assert result.route == "structural"
    assert result.schema == m.f.schema
    assert result.analysis_models == [("Model A", m.model.GlobalId)]
    fr = result.frame
    assert fr.node_ids == ("N1", "N2") and fr.member_ids == ("B1",)
    np.testing.assert_allclose(fr.nodes, [[0, 0, 0], [4, 0, 0]], atol=1e-12)
    assert fr.restraints[0].all() and not fr.restraints[1].any()
    # rectangle b x h: A = b h, Iy = b h^3 / 12 (about local y = profile x), Iz = h b^3 / 12 (common practice, no source)
    np.testing.assert_allclose(fr.A, [B * H], rtol=1e-12)
    np.testing.assert_allclose(fr.Iy, [B * H**3 / 12], rtol=1e-12)
    np.testing.assert_allclose(fr.Iz, [H * B**3 / 12], rtol=1e-12)
    np.testing.assert_allclose(fr.E, [E_STEEL], rtol=1e-12)
    np.testing.assert_allclose(fr.G, [G_STEEL], rtol=1e-12)
    np.testing.assert_allclose(fr.density, [RHO], rtol=1e-12)
    (case,) = fr.load_cases
    assert case.name == "G"
    (load,) = case.nodal
    np.testing.assert_allclose(load.values, (0, 0, -10000.0, 0, 0, 0), rtol=1e-12)  # 10 kN in the file
    assert fr.node_sources[0] == m.nodes["N1"].GlobalId
    assert fr.member_labels[0].startswith(f"#{m.members['B1'].id()} IfcStructuralCurveMember 'B1'")


@pytest.mark.parametrize("schema", SCHEMAS)
def test_cantilever_tip_deflection(schema, tmp_path):
    m, _ = cantilever(schema, tmp_path)
    fr = read_ifc(m.write(tmp_path / "c.ifc")).frame
    res = analyze(fr)
    P, L, EI = 10000.0, 4.0, E_STEEL * B * H**3 / 12
    # cantilever tip deflection P L^3 / (3 E I) (Gere & Timoshenko, Mechanics of Materials, table of beam deflections — from memory)
    uz = res.case("G").displacements[1, 2]
    assert uz == pytest.approx(-P * L**3 / (3 * EI), rel=1e-9)
    # statics: the support carries the load (common practice, no source)
    assert res.case("G").reactions[0, 2] == pytest.approx(P, rel=1e-12)
    assert res.case("G").reactions[0, 4] == pytest.approx(-P * L, rel=1e-12) or res.case("G").reactions[0, 4] == pytest.approx(P * L, rel=1e-12)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_mm_kn_file_gives_si(schema, tmp_path):
    si, _ = cantilever(schema, tmp_path)
    mm, _ = cantilever(schema, tmp_path, length="MILLIMETRE", force_prefix="KILO")
    a = read_ifc(si.write(tmp_path / "si.ifc")).frame
    b = read_ifc(mm.write(tmp_path / "mm.ifc")).frame
    for key in ("nodes", "A", "Iy", "Iz", "J", "E", "G", "density"):
        np.testing.assert_allclose(getattr(b, key), getattr(a, key), rtol=1e-9, atol=1e-15, err_msg=key)
    np.testing.assert_allclose(b.load_cases[0].nodal[0].values, a.load_cases[0].nodal[0].values, rtol=1e-9)


# --------------------------------------------------------------------------- supports and releases
@pytest.mark.parametrize("schema", SCHEMAS)
def test_springs_and_releases(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, False, True])
    m.node("N2", (6.0, 0.0, 0.0), support=[False, True, 2000.0, True, False, False])  # kN/m spring in z
    m.node("N3", (3.0, 0.0, 0.0))
    b1 = m.member("B1", "N1", "N3", conditions=(None, [True, True, True, True, False, True]))
    b2 = m.member("B2", "N3", "N2")
    m.associate([b1, b2], m.steel(), m.rectangle())
    fr = read_ifc(m.write(tmp_path / "s.ifc")).frame
    k = fr.node_index("N2")
    assert fr.restraints[k].tolist() == [False, True, False, True, False, False]
    assert fr.springs[k, 2] == pytest.approx(2000.0 * 1000.0)  # kN/m -> N/m
    assert fr.releases[fr.member_index("B1"), 1].tolist() == [False, False, False, False, True, False]  # My at end j
    assert not fr.releases[fr.member_index("B2")].any()


@pytest.mark.parametrize("schema", SCHEMAS)
def test_semi_rigid_member_end(schema, tmp_path):
    # a finite rotational stiffness in a member end's AppliedCondition is a spring between end and joint:
    # the cantilever's tip then deflects P L^3 / (3 E I) + P L^2 / k (superposition, common practice, no source)
    m, g = cantilever(schema, tmp_path)
    k_file = 5000.0  # kN*m/rad
    rel = next(r for r in m.f.by_type("IfcRelConnectsStructuralMember")
               if r.RelatedStructuralConnection == m.nodes["N1"])
    rel.AppliedCondition = m.condition("semi-rigid", [True, True, True, True, k_file, True])
    fr = read_ifc(m.write(tmp_path / "semi.ifc")).frame
    k = fr.end_springs[0, 0, 4]
    assert k == pytest.approx(k_file * 1000.0) and not fr.releases.any()
    res = analyze(fr)
    I = fr.Iy[0]
    uz = res.case("G").displacements[fr.node_index("N2"), 2]
    assert uz == pytest.approx(-(1e4 * 4.0**3 / (3 * E_STEEL * I) + 1e4 * 4.0**2 / k), rel=1e-9)


def test_semi_rigid_end_in_a_translation_is_refused(tmp_path):
    m, g = cantilever("IFC4", tmp_path)
    rel = next(r for r in m.f.by_type("IfcRelConnectsStructuralMember")
               if r.RelatedStructuralConnection == m.nodes["N1"])
    rel.AppliedCondition = m.condition("soft", [True, 300.0, True, True, True, True])
    with pytest.raises(IfcInputError, match=r"semi-rigid member end in Vy .*only rotational springs"):
        read_ifc(m.write(tmp_path / "soft.ifc"))


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_condition_coordinate_system_permutation_and_inclined(schema, tmp_path):
    m = Model(schema)
    # local x = global Z, local z = global -X ... an axis permutation: restrain local x only -> global uz
    ccs = m.axis2(axis=(-1.0, 0.0, 0.0), ref=(0.0, 0.0, 1.0))
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0), support=[True, False, False, False, False, False], ccs=ccs)
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle())
    fr = read_ifc(m.write(tmp_path / "p.ifc")).frame
    assert fr.restraints[1].tolist() == [False, False, True, False, False, False]

    m2 = Model(schema)
    inclined = m2.axis2(axis=(0.0, 0.0, 1.0), ref=(1.0, 1.0, 0.0))
    m2.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    n2 = m2.node("N2", (4.0, 0.0, 0.0), support=[True, False, False, False, False, False], ccs=inclined)
    b1 = m2.member("B1", "N1", "N2")
    m2.associate([b1], m2.steel(), m2.rectangle())
    fr = read_ifc(m2.write(tmp_path / "i.ifc")).frame
    (sup,) = fr.inclined_supports
    assert sup.node == "N2" and sup.restrained == (True, False, False, False, False, False)
    assert np.allclose(sup.axes[0], np.array([1.0, 1.0, 0.0]) / np.sqrt(2.0))  # its x: the RefDirection
    assert not fr.restraints[fr.node_index("N2")].any() and fr.supported[fr.node_index("N2")]

    m3 = Model(schema)
    m3.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    n2 = m3.node("N2", (4.0, 0.0, 0.0), support=[500.0, False, False, False, False, False],
                 ccs=m3.axis2(axis=(0.0, 0.0, 1.0), ref=(1.0, 1.0, 0.0)))
    m3.associate([m3.member("B1", "N1", "N2")], m3.steel(), m3.rectangle())
    with pytest.raises(IfcInputError, match=rf"#{n2.id()} IfcStructuralPointConnection 'N2'.*elastic support .*inclined"):
        read_ifc(m3.write(tmp_path / "s.ifc"))


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_inclined_roller_through_the_writer(schema, tmp_path):
    # a roller on a plane inclined at 30 degrees (its support axes: z the plane's normal): the reaction pushes
    # along the normal, so with the vertical w L / 2 comes a horizontal w L / 2 tan 30 (statics, common
    # practice, no source); the results IFC carries it on the point connection, in world axes
    import math

    from analysis.ifc.writer import write_results

    a = math.radians(30.0)
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, False, True])
    m.node("N2", (6.0, 0.0, 0.0), support=[False, True, True, False, False, False],
           ccs=m.axis2(axis=(math.sin(a), 0.0, math.cos(a)), ref=(math.cos(a), 0.0, -math.sin(a))))
    m.associate([m.member("B1", "N1", "N2")], m.steel(), m.rectangle())
    g = m.case("G")
    m.line_load(g, "B1", -4000.0)
    src = m.write(tmp_path / "roller.ifc")
    model = read_ifc(src)
    res = analyze(model.frame)
    r = res.case("G").reactions[model.frame.node_index("N2")]
    assert r[2] == pytest.approx(12000.0, rel=1e-9) and r[0] == pytest.approx(12000.0 * math.tan(a), rel=1e-9)
    out = tmp_path / "roller.results.ifc"
    write_results(src, out, model, res)
    f = ifcopenshell.open(str(out))
    conn = next(c for c in f.by_type("IfcStructuralPointConnection") if c.Name == "N2")
    forces = [rel.RelatedStructuralActivity.AppliedLoad for rel in conn.AssignedStructuralActivity
              if rel.RelatedStructuralActivity.AppliedLoad.is_a("IfcStructuralLoadSingleForce")]
    assert len(forces) == 1
    assert forces[0].ForceX * m.F ** -1 == pytest.approx(12000.0 * math.tan(a), rel=1e-9)
    assert forces[0].ForceZ * m.F ** -1 == pytest.approx(12000.0, rel=1e-9)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_pin_joined_members_are_trusses_and_one_way_members_reported(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, True, True])
    m.node("N2", (3.0, 0.0, 4.0), support=[True, True, True, True, True, True])
    m.node("N3", (3.0, 0.0, 0.0))
    a = m.member("A", "N1", "N3", predefined="PIN_JOINED_MEMBER")
    t = m.member("T", "N2", "N3", predefined="TENSION_MEMBER", axis=(1.0, 0.0, 0.0))
    m.associate([a, t], m.steel(), m.rectangle())
    result = read_ifc(m.write(tmp_path / "t.ifc"))
    assert result.frame.truss.tolist() == [True, True]
    assert any("tension-only" in d.message and d.entity_id == t.id() for d in result.diagnostics)


# --------------------------------------------------------------------------- loads
@pytest.mark.parametrize("schema", SCHEMAS)
def test_line_load_point_load_and_combinations(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, False, False])
    m.node("N2", (5.0, 0.0, 0.0), support=[False, True, True, False, False, False])
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle())
    g = m.case("G", self_weight=(0.0, 0.0, -1.0))
    q = m.case("Q", coefficient=1.0)
    m.line_load(g, "B1", -4000.0)
    m.member_point_force(q, "B1", (2.0, 0.0, 0.0), -6000.0)
    if m.is2x3:
        # IFC2X3: the factor is the Coefficient of the case in the combination
        g.Coefficient, q.Coefficient = 1.35, 1.5
        m.combination("ULS", [(None, [g, q])])
    else:
        m.combination("ULS", [(1.35, [g]), (1.5, [q])])
    fr = read_ifc(m.write(tmp_path / "l.ifc")).frame
    G, Q = fr.load_cases
    (w,) = G.member
    assert (w.member, w.direction, w.axes, w.w1, w.w2, w.start, w.end) == ("B1", "z", "global", -4000.0, -4000.0, 0.0, 5.0)
    (p,) = Q.member
    assert (p.direction, p.value, p.position) == ("z", pytest.approx(-6000.0), pytest.approx(2.0))
    assert G.self_weight == ((0.0, 0.0, 0.0) if m.is2x3 else (0.0, 0.0, -1.0))
    (combo,) = fr.combinations
    assert dict(combo.factors) == pytest.approx({"G": 1.35, "Q": 1.5})
    # statics of the simply supported beam under the ULS combination (common practice, no source)
    res = analyze(fr)
    weight = 0.0 if m.is2x3 else RHO * STANDARD_GRAVITY * B * H * 5.0
    total = 1.35 * (4000.0 * 5.0 + weight) + 1.5 * 6000.0
    assert res.case("ULS").reactions[:, 2].sum() == pytest.approx(total, rel=1e-9)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_polygonal_load_configuration(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, False, False])
    m.node("N2", (6.0, 0.0, 0.0), support=[False, True, True, False, False, False])
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle())
    g = m.case("G")
    m.polygonal_load(g, "B1", [(0.0, 0.0), (3.0, -2000.0), (6.0, 0.0)])
    fr = read_ifc(m.write(tmp_path / "poly.ifc")).frame
    loads = fr.load_cases[0].member
    assert [(l.start, l.end, l.w1, l.w2) for l in loads] == [(0.0, 3.0, 0.0, -2000.0), (3.0, 6.0, -2000.0, 0.0)]
    res = analyze(fr)
    # triangle load: resultant = 1/2 * 6 m * 2 kN/m = 6 kN, split equally by symmetry (common practice, no source)
    np.testing.assert_allclose(res.case("G").reactions[:, 2], [3000.0, 3000.0], rtol=1e-9)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_discrete_curve_action_is_its_point_loads(schema, tmp_path):
    # two equal loads P at the third points of a simply supported span: reactions P, moment P L / 3 between
    # them (statics, common practice, no source); the same as two point actions, to rounding
    L, P = 6.0, -9000.0

    def model(discrete: bool):
        m = Model(schema)
        m.node("N1", (0.0, 0.0, 0.0), support=[True, True, True, True, False, False])
        m.node("N2", (L, 0.0, 0.0), support=[False, True, True, False, False, False])
        m.associate([m.member("B1", "N1", "N2")], m.steel(), m.rectangle())
        g = m.case("G")
        if discrete:
            m.discrete_load(g, "B1", [(L / 3, P), (2 * L / 3, P)])
        else:
            m.member_point_force(g, "B1", (L / 3, 0.0, 0.0), P)
            m.member_point_force(g, "B1", (2 * L / 3, 0.0, 0.0), P)
        return read_ifc(m.write(tmp_path / f"d{int(discrete)}.ifc")).frame

    fr = model(True)
    loads = fr.load_cases[0].member
    assert [(l.direction, l.position) for l in loads] == [("z", pytest.approx(2.0)), ("z", pytest.approx(4.0))]
    res = analyze(fr)
    np.testing.assert_allclose(res.case("G").reactions[:, 2], [-P, -P], rtol=1e-9)
    dg = res.diagram("G", 0)
    middle = (dg.stations > L / 3 + 1e-9) & (dg.stations < 2 * L / 3 - 1e-9)
    bending = np.abs(dg.forces[:, 4:6]).max(axis=1)
    np.testing.assert_allclose(bending[middle], abs(P) * L / 3, rtol=1e-9)
    ref = analyze(model(False))
    np.testing.assert_allclose(res.case("G").displacements, ref.case("G").displacements, rtol=1e-12, atol=1e-15)


def test_discrete_curve_action_errors_name_the_action(tmp_path):
    m = Model("IFC4")
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    m.associate([m.member("B1", "N1", "N2")], m.steel(), m.rectangle())
    g = m.case("G")
    m.discrete_load(g, "B1", [(1.0, -1000.0), (5.0, -1000.0)])  # the second point lies beyond the member
    with pytest.raises(IfcInputError, match=r"IfcStructuralCurveAction 'discrete'.*location 5 m lies beyond"):
        read_ifc(m.write(tmp_path / "beyond.ifc"))


def fixed_beam(schema):
    """B1 from N1 (0, 0, 0) to N2 (5, 0, 0), both ends fixed; steel rectangle."""
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (5.0, 0.0, 0.0), support=[True] * 6)
    m.associate([m.member("B1", "N1", "N2")], m.steel(), m.rectangle())
    return m


@pytest.mark.parametrize("schema", SCHEMAS)
def test_temperature_change_of_a_restrained_beam(schema, tmp_path):
    # a beam between two fixed supports heated by 30 K carries N = -E A alpha dT (common practice, no
    # source); the material's name says steel, so alpha is steel's 12e-6 /K (EN 1993-1-1, 3.2.6 — from memory)
    m = fixed_beam(schema)
    m.temperature_load(m.case("T"), "B1", 30.0)
    model = read_ifc(m.write(tmp_path / "t.ifc"))
    fr = model.frame
    assert fr.alpha[0] == pytest.approx(12e-6)
    assert any("Thermal expansion" in n and "steel default" in n for n in model.notes)
    res = analyze(fr)
    assert res.diagram("T", 0).forces[0, 0] == pytest.approx(-E_STEEL * B * H * 12e-6 * 30.0, rel=1e-9)


def test_temperature_gradient_is_refused(tmp_path):
    m = fixed_beam("IFC4")
    m.temperature_load(m.case("T"), "B1", 10.0, delta_tz=20.0)
    with pytest.raises(IfcInputError, match=r"IfcStructuralCurveAction 'heat'.*DeltaTZ.*not supported"):
        read_ifc(m.write(tmp_path / "g.ifc"))


@pytest.mark.parametrize("schema", SCHEMAS)
def test_settlement_and_its_error(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0), support=[False, False, True, False, False, False])
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle())
    g = m.case("S")
    m.displacement(g, "N2", -0.01)
    fr = read_ifc(m.write(tmp_path / "u.ifc")).frame
    (s,) = fr.load_cases[0].settlements
    assert (s.node, s.dof, s.value) == ("N2", "uz", pytest.approx(-0.01))

    m2 = Model(schema)
    m2.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m2.node("N2", (4.0, 0.0, 0.0))
    b1 = m2.member("B1", "N1", "N2")
    m2.associate([b1], m2.steel(), m2.rectangle())
    a = m2.displacement(m2.case("S"), "N2", -0.01)
    with pytest.raises(IfcInputError, match=rf"#{a.id()} IfcStructuralPointAction.*does not restrain uz"):
        read_ifc(m2.write(tmp_path / "u2.ifc"))


# --------------------------------------------------------------------------- sections, eccentricity, links
@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_cardinal_point_gives_rigid_offsets(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle(), cardinal=8)  # top centre on the reference line
    result = read_ifc(m.write(tmp_path / "cp.ifc"))
    fr = result.frame
    # local z = global Z (Axis), the centroid lies h/2 below the top: offset (0, 0, -h/2) at both ends
    np.testing.assert_allclose(fr.offsets[0], [[0, 0, -H / 2], [0, 0, -H / 2]], atol=1e-9)
    assert any("CardinalPoint 8" in d.message for d in result.diagnostics)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
@pytest.mark.parametrize("direction", ["physical->analytical", "analytical->physical"])
def test_link_to_physical_element(schema, direction, tmp_path):
    m, _ = cantilever(schema, tmp_path)
    beam = m.f.create_entity("IfcBeam", GlobalId=m.gid(), Name="Beam 1")
    if direction == "physical->analytical":
        m.f.create_entity("IfcRelAssignsToProduct", GlobalId=m.gid(), RelatedObjects=[m.members["B1"]], RelatingProduct=beam)
    else:
        m.f.create_entity("IfcRelAssignsToProduct", GlobalId=m.gid(), RelatedObjects=[beam], RelatingProduct=m.members["B1"])
    assert read_ifc(m.write(tmp_path / "p.ifc")).physical == {"B1": beam.GlobalId}


def test_defaults_used_and_reported(tmp_path):
    m = Model("IFC4")
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(with_modulus=False, with_density=False), None)
    path = m.write(tmp_path / "d.ifc")
    with pytest.raises(IfcInputError, match=rf"#{b1.id()} IfcStructuralCurveMember 'B1'"):
        read_ifc(path)
    sec = Section("default", A=0.01, Iy=1e-4, Iz=1e-4, J=1e-4)
    result = read_ifc(path, defaults=ReaderDefaults(E=200e9, poisson=0.3, section=sec))
    assert result.frame.E[0] == 200e9 and result.frame.A[0] == 0.01
    texts = [d.message for d in result.diagnostics if d.entity_id == b1.id()]
    assert any("default E" in t for t in texts) and any("default section" in t for t in texts)


# --------------------------------------------------------------------------- model choice
def test_several_models_choose_by_name_or_globalid(tmp_path):
    m, _ = cantilever("IFC4", tmp_path)
    other = m.f.create_entity("IfcStructuralAnalysisModel", GlobalId=m.gid(), Name="Model B", PredefinedType="LOADING_3D")
    path = m.write(tmp_path / "two.ifc")
    first = read_ifc(path)
    assert first.analysis_models == [("Model A", m.model.GlobalId), ("Model B", other.GlobalId)]
    assert first.frame.name == "Model A"
    assert read_ifc(path, model=m.model.GlobalId).frame.name == "Model A"
    with pytest.raises(IfcInputError, match=rf"#{other.id()} IfcStructuralAnalysisModel 'Model B'.*no IfcStructuralCurveMember"):
        read_ifc(path, model="Model B")
    with pytest.raises(IfcInputError, match="no structural analysis model named 'Model C'"):
        read_ifc(path, model="Model C")


# --------------------------------------------------------------------------- errors naming the entity
def test_missing_file_and_not_ifc(tmp_path):
    with pytest.raises(IfcInputError, match="does not exist"):
        read_ifc(tmp_path / "nothing.ifc")
    bad = tmp_path / "notes.ifc"
    bad.write_text("this is not a model\n")
    with pytest.raises(IfcInputError, match="not an IFC file"):
        read_ifc(bad)
    broken = tmp_path / "broken.ifc"
    broken.write_text("ISO-10303-21;\nHEADER;\nnonsense\n")
    with pytest.raises(IfcInputError, match="broken.ifc"):
        read_ifc(broken)


@pytest.mark.parametrize("schema", SCHEMAS)
# (an end without any point connection is no longer an error: it becomes a joint by position, see
# tests/roundtrip/test_bad_input.py)
@pytest.mark.parametrize("fault", ["no edge", "zero length", "no material", "no profile", "unknown profile"])
def test_errors_name_the_entity(schema, fault, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (0.0, 0.0, 0.0) if fault == "zero length" else (4.0, 0.0, 0.0))
    kwargs = {}
    if fault == "no edge":
        kwargs["edge"] = False
    if fault == "missing end connection":
        kwargs["connect"] = (True, False)
        m.items.remove(m.nodes["N2"])  # and no point connection of the model lies at that end
    b1 = m.member("B1", "N1", "N2", **kwargs)
    if fault == "no material":
        pass
    elif fault == "no profile":
        m.associate([b1], m.steel(), None)
    elif fault == "unknown profile":
        f = m.f
        curve = f.create_entity("IfcPolyline", Points=[f.create_entity("IfcCartesianPoint", Coordinates=c) for c in ((0.0, 0.0), (0.1, 0.0))])
        m.associate([b1], m.steel(), f.create_entity("IfcArbitraryOpenProfileDef", ProfileType="CURVE", ProfileName="odd", Curve=curve))
    else:
        m.associate([b1], m.steel(), m.rectangle())
    with pytest.raises(IfcInputError, match=rf"#{b1.id()} IfcStructuralCurveMember 'B1'") as info:
        read_ifc(m.write(tmp_path / "e.ifc"))
    assert info.value.entity_id == b1.id()


@pytest.mark.parametrize("schema", SCHEMAS)
def test_end_without_relation_joins_the_connection_at_its_position(schema, tmp_path):
    # a file that leaves out IfcRelConnectsStructuralMember at the free end still reads: the point
    # connection at that position is the node (a rigid joint), and the reader says so
    m, _ = cantilever(schema, tmp_path, connect=(True, False))
    result = read_ifc(m.write(tmp_path / "c.ifc"))
    assert result.frame.node_ids == ("N1", "N2")
    assert any("by position" in d.message for d in result.diagnostics)
    P, L, EI = 10000.0, 4.0, E_STEEL * B * H**3 / 12
    # cantilever tip deflection P L^3 / (3 E I) (Gere & Timoshenko, Mechanics of Materials — from memory)
    assert analyze(result.frame).case("G").displacements[1, 2] == pytest.approx(-P * L**3 / (3 * EI), rel=1e-9)


# --------------------------------------------------------------------------- sample models
@pytest.mark.parametrize("name", ["workshop_portal", "workshop_portal_mm", "roof_truss", "unstable_frame"])
def test_sample_models_read(name):
    result = read_ifc(SAMPLES / f"{name}.ifc")
    assert result.route == "structural"
    assert result.frame.n_members > 0 and result.frame.load_cases


def test_workshop_portal_hand_values_and_statics():
    result = read_ifc(SAMPLES / "workshop_portal.ifc")
    fr = result.frame
    assert fr.node_ids == ("N1", "N2", "N3", "N4", "N5", "N6")
    np.testing.assert_allclose(fr.nodes[fr.node_index("N6")], [8.0, 0.0, 7.5])
    assert fr.restraints[:2].all() and not fr.restraints[2:].any()
    assert [c.name for c in fr.load_cases] == ["G dead", "Q imposed", "W wind"]
    assert dict(fr.combinations[1].factors) == pytest.approx({"G dead": 1.35, "W wind": 1.5, "Q imposed": 1.05})
    assert set(result.physical) == set(fr.member_ids)
    res = analyze(fr)
    # statics: total vertical reaction = line loads + self weight (common practice, no source)
    weight = float(np.sum(fr.density * fr.A * fr.lengths)) * STANDARD_GRAVITY
    assert res.case("G dead").reactions[:, 2].sum() == pytest.approx(15000.0 * 8 + 10000.0 * 8 + weight, rel=1e-9)
    # wind: horizontal reactions balance 8 kN + 5 kN
    assert res.case("W wind").reactions[:, 0].sum() == pytest.approx(-13000.0, rel=1e-9)


@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4", "IFC4X3_ADD2"])
def test_eccentric_connection_gives_rigid_offset(schema, tmp_path):
    m = Model(schema)
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    f = m.f
    # the member's reference edge runs 0.3 m above the nodes; IfcRelConnectsWithEccentricity at both ends
    ends = [f.create_entity("IfcVertexPoint", VertexGeometry=f.create_entity("IfcCartesianPoint", Coordinates=(x, 0.0, 0.3)))
            for x in (0.0, 4.0)]
    kwargs = dict(GlobalId=m.gid(), Name="B1", ObjectPlacement=m.placement, PredefinedType="RIGID_JOINED_MEMBER",
                  Representation=m.topo([f.create_entity("IfcEdge", EdgeStart=ends[0], EdgeEnd=ends[1])], "Edge"))
    if not m.is2x3:
        kwargs["Axis"] = f.create_entity("IfcDirection", DirectionRatios=(0.0, 0.0, 1.0))
    b1 = f.create_entity("IfcStructuralCurveMember", **kwargs)
    m.items.append(b1)
    for node, v in zip(("N1", "N2"), ends):
        geom = f.create_entity("IfcConnectionPointGeometry", PointOnRelatingElement=v, PointOnRelatedElement=m.vertices[node])
        f.create_entity("IfcRelConnectsWithEccentricity", GlobalId=m.gid(), RelatingStructuralMember=b1,
                        RelatedStructuralConnection=m.nodes[node], ConnectionConstraint=geom)
    m.associate([b1], m.steel(), m.rectangle())
    result = read_ifc(m.write(tmp_path / "ecc.ifc"))
    np.testing.assert_allclose(result.frame.offsets[0], [[0, 0, 0.3], [0, 0, 0.3]], atol=1e-12)
    assert any("eccentric connection" in d.message for d in result.diagnostics)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3_ADD2"])
def test_shared_placement_moves_nodes(schema, tmp_path):
    m, _ = cantilever(schema, tmp_path)
    # the model's global system sits at (10, 5, 2) in world, turned 90 degrees about Z
    moved = m.f.create_entity("IfcLocalPlacement", RelativePlacement=m.axis2((10.0, 5.0, 2.0), (0.0, 0.0, 1.0), (0.0, 1.0, 0.0)))
    m.model.SharedPlacement = moved
    for item in m.items:
        item.ObjectPlacement = moved
    fr = read_ifc(m.write(tmp_path / "sp.ifc")).frame
    # local (4, 0, 0) -> world (10, 5 + 4, 2) (rotation of axes, common practice, no source)
    np.testing.assert_allclose(fr.nodes, [[10.0, 5.0, 2.0], [10.0, 9.0, 2.0]], atol=1e-12)


def test_ifc2x3_combination_group_coefficients(tmp_path):
    m = Model("IFC2X3")
    m.node("N1", (0.0, 0.0, 0.0), support=[True] * 6)
    m.node("N2", (4.0, 0.0, 0.0))
    b1 = m.member("B1", "N1", "N2")
    m.associate([b1], m.steel(), m.rectangle())
    g = m.case("G")
    m.nodal_force(g, "N2", force_n=(0.0, 0.0, -1000.0))
    f = m.f
    combo_group = f.create_entity("IfcStructuralLoadGroup", GlobalId=m.gid(), Name="1.35 G", PredefinedType="LOAD_COMBINATION_GROUP",
                                  ActionType="NOTDEFINED", ActionSource="NOTDEFINED", Coefficient=1.35)
    f.create_entity("IfcRelAssignsToGroup", GlobalId=m.gid(), RelatedObjects=[g], RelatingGroup=combo_group)
    combo = m.combination("ULS", [(None, [combo_group])])
    fr = read_ifc(m.write(tmp_path / "cg.ifc")).frame
    assert combo.Name == "ULS"
    assert dict(fr.combinations[0].factors) == pytest.approx({"G": 1.35})


def test_broken_file_is_named_when_read_directly(tmp_path):
    # the add-on and library callers call read_ifc itself: a dangling reference the reader stumbles on is an
    # IfcInputError naming the defect, as on the command line, not a raw AttributeError
    import re

    from analysis.samples import write_sample

    path = tmp_path / "W.ifc"
    write_sample("workshop_portal", str(path))
    text = path.read_text()
    m = re.search(r"^(#\d+)=IFCVERTEXPOINT\((#\d+)\);$", text, re.M)
    assert m
    broken = tmp_path / "broken.ifc"
    broken.write_text(text.replace(m.group(0), f"{m.group(1)}=IFCVERTEXPOINT(#99999);", 1))
    with pytest.raises(IfcInputError, match=rf"file is broken: .*{m.group(1)} IfcVertexPoint: VertexGeometry refers to "
                                            r"#99999, which is not in the file"):
        read_ifc(broken)
