"""Write the plumbframe sample IFC models.

Each sample is an invented building, built entity by entity with
``ifcopenshell.file.create_entity`` so that the output is deterministic:
GlobalIds are derived from names (uuid5), the owner history (IFC2X3 only)
carries a fixed creation date and the STEP header has a fixed time stamp.
Regenerating a sample therefore gives a byte-identical file.

Run ``python sample_models/generate.py`` to rewrite every ``<name>.ifc`` next
to this script; ``write_sample(name, path)`` writes one sample elsewhere.
``sample_models/README.md`` describes the scenarios and the conventions a
reader can rely on.
"""

from __future__ import annotations

import math
import pathlib
import sys
import uuid
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import ifcopenshell
import ifcopenshell.guid

__all__ = ["SAMPLES", "SAMPLE_SCHEMAS", "build_sample", "write_sample", "build_frame", "main"]

SAMPLES: dict[str, str] = {
    "workshop_portal": (
        "IFC4, m/N/Pa. Two-storey single-bay portal frame (x = 0 and 8 m, floors at z = 4.0 "
        "and 7.5 m, fixed bases) as a structural analysis model with linked physical "
        "IfcColumn/IfcBeam; load cases G, Q, W and three combinations."
    ),
    "braced_office": (
        "IFC4, mm/kN/MPa. Physical elements only: 3 x 2 bay, 3-storey braced steel office "
        "frame on pad footings, with a secondary beam framing into the mid-span of two "
        "primary beams and one beam end stopping 5 mm short of its column axis."
    ),
    "roof_truss": (
        "IFC4X3, m/N/Pa. Pin-jointed pitched Pratt roof truss (12 m span, 2 m rise, 6 panels) "
        "in the XZ plane as an in-plane structural analysis model; pin + roller supports; "
        "point loads at the top-chord nodes; one combination."
    ),
    "unstable_frame": (
        "IFC2X3, m/N/Pa. Single-bay portal with in-plane pinned column bases and a beam "
        "hinged at both ends: an in-plane sway mechanism; one horizontal point load; "
        "IFC2X3 numeric boundary conditions (-1 fixed, 0 free)."
    ),
    "workshop_portal_mm": (
        "IFC4, mm/kN/MPa. The workshop_portal model with every value in millimetre and "
        "kilonewton based units, for unit round-trip tests."
    ),
}

#: Schema each committed sample is written in.
SAMPLE_SCHEMAS: dict[str, str] = {
    "workshop_portal": "IFC4",
    "braced_office": "IFC4",
    "roof_truss": "IFC4X3",
    "unstable_frame": "IFC2X3",
    "workshop_portal_mm": "IFC4",
}

_GUID_NAMESPACE = uuid.UUID("5f0c5a1e-3d52-4b59-9d1e-706c756d6266")
_TIME_STAMP = "2026-01-01T00:00:00"
#: 2026-01-01T00:00:00Z, used as IfcOwnerHistory.CreationDate where the schema needs one.
_CREATION_DATE = 1767225600
_APP = "plumbframe sample_models/generate.py"

Vec3 = tuple[float, float, float]


# --------------------------------------------------------------------------- helpers


def _sub(a: Sequence[float], b: Sequence[float]) -> Vec3:
    return (a[0] - b[0], a[1] - b[1], a[2] - b[2])


def _dot(a: Sequence[float], b: Sequence[float]) -> float:
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _cross(a: Sequence[float], b: Sequence[float]) -> Vec3:
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def _unit(a: Sequence[float]) -> Vec3:
    n = math.sqrt(_dot(a, a))
    return (a[0] / n, a[1] / n, a[2] / n)


def _clean(v: Sequence[float]) -> tuple[float, ...]:
    """Round direction ratios so that e.g. -0.9999999999999999 is written as -1."""
    return tuple(float(round(c, 12)) + 0.0 for c in v)


def member_axes(p0: Sequence[float], p1: Sequence[float]) -> tuple[Vec3, Vec3, Vec3, Vec3]:
    """Local axes used for every member in the samples.

    Returns ``(x, axis, y, z)``: x along the member from ``p0`` to ``p1``;
    ``axis`` the value written to IfcStructuralCurveMember.Axis -- (0,0,1)
    for any non-vertical member and (-1,0,0) for a vertical one; z is ``axis``
    made orthogonal to x; y = z cross x.
    """
    x = _unit(_sub(p1, p0))
    vertical = abs(x[0]) < 1e-9 and abs(x[1]) < 1e-9
    axis: Vec3 = (-1.0, 0.0, 0.0) if vertical else (0.0, 0.0, 1.0)
    d = _dot(axis, x)
    z = _unit((axis[0] - d * x[0], axis[1] - d * x[1], axis[2] - d * x[2]))
    y = _unit(_cross(z, x))
    return x, axis, y, z


@dataclass(frozen=True)
class _Units:
    """How SI input values map to the file's units."""

    system: str  # "SI" or "MM_KN"

    @property
    def mm(self) -> bool:
        return self.system == "MM_KN"

    def length_m(self, v: float) -> float:
        return float(v * 1000.0) if self.mm else float(v)

    def length_mm(self, v: float) -> float:
        return float(v) if self.mm else float(v / 1000.0)

    def force(self, newton: float) -> float:
        return float(newton / 1000.0) if self.mm else float(newton)

    def linear_force(self, newton_per_m: float) -> float:
        # mm files declare LINEARFORCEUNIT = kN/m explicitly.
        return float(newton_per_m / 1000.0) if self.mm else float(newton_per_m)

    def modulus(self, pa: float) -> float:
        # mm files declare MODULUSOFELASTICITYUNIT = N/mm2 explicitly.
        return float(pa / 1e6) if self.mm else float(pa)

    def pressure(self, pa: float) -> float:
        # mm files declare PRESSUREUNIT = MPa.
        return float(pa / 1e6) if self.mm else float(pa)

    def mass_density(self, kg_per_m3: float) -> float:
        # MASSDENSITYUNIT is deliberately undeclared: by the base units it is
        # kg/m3 in SI files and kg/mm3 in mm files.
        return float(kg_per_m3 / 1e9) if self.mm else float(kg_per_m3)


@dataclass
class _Section:
    key: str
    usage: ifcopenshell.entity_instance  # IfcMaterialProfileSetUsage, or IfcMaterial (IFC2X3)
    profile: ifcopenshell.entity_instance
    profile_props: ifcopenshell.entity_instance | None  # IFC2X3 IfcGeneralProfileProperties
    related: list[ifcopenshell.entity_instance] = field(default_factory=list)


@dataclass
class _LoadGroup:
    entity: ifcopenshell.entity_instance
    actions: list[ifcopenshell.entity_instance] = field(default_factory=list)


# --------------------------------------------------------------------------- writer


class _Writer:
    """Low-level builder shared by all samples (IFC2X3, IFC4, IFC4X3)."""

    def __init__(self, sample: str, schema: str, units: str) -> None:
        self.sample = sample
        self.f = ifcopenshell.file(schema=schema)
        self.schema = self.f.schema  # "IFC2X3", "IFC4" or "IFC4X3"
        self.is2x3 = self.schema == "IFC2X3"
        self.u = _Units(units)
        self._schema_decl = ifcopenshell.ifcopenshell_wrapper.schema_by_name(self.f.schema_identifier)
        self._guids: set[str] = set()
        self._points: dict[tuple[float, ...], ifcopenshell.entity_instance] = {}
        self._dirs: dict[tuple[float, ...], ifcopenshell.entity_instance] = {}
        self.owner_history = self._owner_history()
        self.sections: dict[str, _Section] = {}
        self.containment: dict[str, list[ifcopenshell.entity_instance]] = {}
        self.model = None
        self.model_items: list[ifcopenshell.entity_instance] = []
        self.shared_placement = None
        self.load_groups: list[_LoadGroup] = []
        self.combinations: list[tuple[ifcopenshell.entity_instance, list[tuple[float, list]]]] = []
        self.nodes: dict[str, ifcopenshell.entity_instance] = {}
        self.vertices: dict[str, ifcopenshell.entity_instance] = {}
        self.members: dict[str, ifcopenshell.entity_instance] = {}

    # -- basics

    def create(self, type_name: str, **attrs):
        """create_entity, dropping attributes the schema does not have (e.g. Axis in IFC2X3)."""
        decl = self._schema_decl.declaration_by_name(type_name)
        names = {a.name() for a in decl.all_attributes()}
        return self.f.create_entity(type_name, **{k: v for k, v in attrs.items() if k in names})

    def guid(self, key: str) -> str:
        g = ifcopenshell.guid.compress(uuid.uuid5(_GUID_NAMESPACE, f"{self.sample}/{key}").hex)
        if g in self._guids:
            raise ValueError(f"duplicate GlobalId key {key!r} in sample {self.sample!r}")
        self._guids.add(g)
        return g

    def root(self, type_name: str, key: str, **attrs):
        return self.create(type_name, GlobalId=self.guid(key), OwnerHistory=self.owner_history, **attrs)

    def point(self, coords: Sequence[float]):
        c = tuple(float(v) + 0.0 for v in coords)
        if c not in self._points:
            self._points[c] = self.f.create_entity("IfcCartesianPoint", Coordinates=c)
        return self._points[c]

    def direction(self, ratios: Sequence[float]):
        c = _clean(ratios)
        if c not in self._dirs:
            self._dirs[c] = self.f.create_entity("IfcDirection", DirectionRatios=c)
        return self._dirs[c]

    def placement3d(self, location=(0.0, 0.0, 0.0), axis=None, ref=None):
        return self.f.create_entity(
            "IfcAxis2Placement3D",
            Location=self.point(location),
            Axis=self.direction(axis) if axis is not None else None,
            RefDirection=self.direction(ref) if ref is not None else None,
        )

    def local_placement(self, rel_to, location=(0.0, 0.0, 0.0), axis=None, ref=None):
        return self.f.create_entity(
            "IfcLocalPlacement", PlacementRelTo=rel_to, RelativePlacement=self.placement3d(location, axis, ref)
        )

    def header(self, description: str) -> None:
        h = self.f.header
        h.file_description.description = (description,)
        h.file_name.name = f"{self.sample}.ifc"
        h.file_name.time_stamp = _TIME_STAMP
        h.file_name.author = ("plumbframe",)
        h.file_name.organization = ("plumbframe",)
        h.file_name.preprocessor_version = "IfcOpenShell"
        h.file_name.originating_system = _APP
        h.file_name.authorization = ""

    def _owner_history(self):
        if not self.is2x3:
            return None  # optional from IFC4 on
        f = self.f
        person = self.create("IfcPerson", Id="plumbframe", Identification="plumbframe", FamilyName="plumbframe")
        org = self.create("IfcOrganization", Id="plumbframe", Identification="plumbframe", Name="plumbframe")
        user = f.create_entity("IfcPersonAndOrganization", ThePerson=person, TheOrganization=org)
        app = f.create_entity(
            "IfcApplication",
            ApplicationDeveloper=org,
            Version="1",
            ApplicationFullName=_APP,
            ApplicationIdentifier="plumbframe-samples",
        )
        return f.create_entity(
            "IfcOwnerHistory",
            OwningUser=user,
            OwningApplication=app,
            ChangeAction="ADDED",
            CreationDate=_CREATION_DATE,
        )

    # -- project, units, contexts, spatial structure

    def project(self, name: str, description: str) -> None:
        f = self.f
        precision = 1e-2 if self.u.mm else 1e-5
        self.context = f.create_entity(
            "IfcGeometricRepresentationContext",
            ContextIdentifier="Model",
            ContextType="Model",
            CoordinateSpaceDimension=3,
            Precision=precision,
            WorldCoordinateSystem=self.placement3d(),
            TrueNorth=f.create_entity("IfcDirection", DirectionRatios=(0.0, 1.0)),
        )

        def sub(ident: str, view: str):
            return f.create_entity(
                "IfcGeometricRepresentationSubContext",
                ContextIdentifier=ident,
                ContextType="Model",
                ParentContext=self.context,
                TargetView=view,
            )

        self.ctx_body = sub("Body", "MODEL_VIEW")
        self.ctx_axis = sub("Axis", "GRAPH_VIEW")
        self.ctx_reference = sub("Reference", "GRAPH_VIEW")
        self.project_entity = self.root(
            "IfcProject",
            "project",
            Name=name,
            Description=description,
            RepresentationContexts=[self.context],
            UnitsInContext=self._units(),
        )

    def _si(self, unit_type: str, name: str, prefix: str | None = None):
        return self.f.create_entity("IfcSIUnit", UnitType=unit_type, Prefix=prefix, Name=name)

    def _derived(self, unit_type: str, elements: Iterable[tuple]):
        elems = [self.f.create_entity("IfcDerivedUnitElement", Unit=u, Exponent=e) for u, e in elements]
        return self.f.create_entity("IfcDerivedUnit", Elements=elems, UnitType=unit_type)

    def _units(self):
        si = self._si
        if self.u.mm:
            units = [
                si("LENGTHUNIT", "METRE", "MILLI"),
                si("AREAUNIT", "SQUARE_METRE", "MILLI"),
                si("VOLUMEUNIT", "CUBIC_METRE", "MILLI"),
                si("PLANEANGLEUNIT", "RADIAN"),
                si("MASSUNIT", "GRAM", "KILO"),
                si("TIMEUNIT", "SECOND"),
                si("FORCEUNIT", "NEWTON", "KILO"),
                si("PRESSUREUNIT", "PASCAL", "MEGA"),
            ]
            # Explicit derived units so that no value depends on a guess:
            # E in N/mm2 (= MPa) and line loads in kN/m.
            newton = si("FORCEUNIT", "NEWTON")
            kilonewton = units[6]
            metre = si("LENGTHUNIT", "METRE")
            millimetre = units[0]
            units.append(self._derived("MODULUSOFELASTICITYUNIT", [(newton, 1), (millimetre, -2)]))
            units.append(self._derived("LINEARFORCEUNIT", [(kilonewton, 1), (metre, -1)]))
        else:
            units = [
                si("LENGTHUNIT", "METRE"),
                si("AREAUNIT", "SQUARE_METRE"),
                si("VOLUMEUNIT", "CUBIC_METRE"),
                si("PLANEANGLEUNIT", "RADIAN"),
                si("MASSUNIT", "GRAM", "KILO"),
                si("TIMEUNIT", "SECOND"),
                si("FORCEUNIT", "NEWTON"),
                si("PRESSUREUNIT", "PASCAL"),
            ]
        return self.f.create_entity("IfcUnitAssignment", Units=units)

    def spatial(self, storeys: Sequence[tuple[str, float]]) -> None:
        """Site, building and storeys; storey elevations are given in file length units."""
        site_pl = self.local_placement(None)
        building_pl = self.local_placement(site_pl)
        self.site = self.root(
            "IfcSite", "site", Name="Site", ObjectPlacement=site_pl, CompositionType="ELEMENT"
        )
        self.building = self.root(
            "IfcBuilding", "building", Name="Building", ObjectPlacement=building_pl, CompositionType="ELEMENT"
        )
        self.storeys: dict[str, tuple] = {}
        for name, elevation in storeys:
            pl = self.local_placement(building_pl, (0.0, 0.0, elevation))
            st = self.root(
                "IfcBuildingStorey",
                f"storey/{name}",
                Name=name,
                ObjectPlacement=pl,
                CompositionType="ELEMENT",
                Elevation=elevation,
            )
            self.storeys[name] = (st, pl, elevation)
            self.containment[name] = []
        self.root(
            "IfcRelAggregates", "agg/project", RelatingObject=self.project_entity, RelatedObjects=[self.site]
        )
        self.root("IfcRelAggregates", "agg/site", RelatingObject=self.site, RelatedObjects=[self.building])
        self.root(
            "IfcRelAggregates",
            "agg/building",
            RelatingObject=self.building,
            RelatedObjects=[s[0] for s in self.storeys.values()],
        )

    # -- materials and sections

    def steel(self, name: str, fy_pa: float):
        f, u = self.f, self.u
        mat = self.create("IfcMaterial", Name=name, Category="Steel")
        if self.is2x3:
            self.create(
                "IfcMechanicalSteelMaterialProperties",
                Material=mat,
                YoungModulus=u.modulus(210e9),
                ShearModulus=u.modulus(81e9),
                PoissonRatio=0.3,
                YieldStress=u.pressure(fy_pa),
            )
            self.create("IfcGeneralMaterialProperties", Material=mat, MassDensity=u.mass_density(7850.0))
            return mat

        def prop(pname: str, measure: str, value: float):
            return f.create_entity(
                "IfcPropertySingleValue", Name=pname, NominalValue=f.create_entity(measure, value)
            )

        psets = [
            (
                "Pset_MaterialMechanical",
                [
                    prop("YoungModulus", "IfcModulusOfElasticityMeasure", u.modulus(210e9)),
                    prop("ShearModulus", "IfcModulusOfElasticityMeasure", u.modulus(81e9)),
                    prop("PoissonRatio", "IfcPositiveRatioMeasure", 0.3),
                ],
            ),
            ("Pset_MaterialCommon", [prop("MassDensity", "IfcMassDensityMeasure", u.mass_density(7850.0))]),
            ("Pset_MaterialSteel", [prop("YieldStress", "IfcPressureMeasure", u.pressure(fy_pa))]),
        ]
        for pset_name, props in psets:
            f.create_entity("IfcMaterialProperties", Name=pset_name, Properties=props, Material=mat)
        return mat

    def i_profile(self, name: str, h: float, b: float, tw: float, tf: float, r: float):
        """Doubly symmetric I profile; dimensions in mm."""
        L = self.u.length_mm
        return self.create(
            "IfcIShapeProfileDef",
            ProfileType="AREA",
            ProfileName=name,
            Position=self._profile_position(),
            OverallWidth=L(b),
            OverallDepth=L(h),
            WebThickness=L(tw),
            FlangeThickness=L(tf),
            FilletRadius=L(r),
        )

    def chs_profile(self, name: str, d: float, t: float):
        L = self.u.length_mm
        return self.create(
            "IfcCircleHollowProfileDef",
            ProfileType="AREA",
            ProfileName=name,
            Position=self._profile_position(),
            Radius=L(d / 2.0),
            WallThickness=L(t),
        )

    def rhs_profile(self, name: str, h: float, b: float, t: float):
        L = self.u.length_mm
        return self.create(
            "IfcRectangleHollowProfileDef",
            ProfileType="AREA",
            ProfileName=name,
            Position=self._profile_position(),
            XDim=L(b),
            YDim=L(h),
            WallThickness=L(t),
            InnerFilletRadius=L(t),
            OuterFilletRadius=L(2 * t),
        )

    def _profile_position(self):
        if not self.is2x3:
            return None  # optional from IFC4 on: identity
        return self.f.create_entity("IfcAxis2Placement2D", Location=self.point((0.0, 0.0)))

    def section(self, key: str, profile, material, cardinal_point: int) -> _Section:
        if self.is2x3:
            props = self.create("IfcGeneralProfileProperties", ProfileName=profile.ProfileName, ProfileDefinition=profile)
            sec = _Section(key, material, profile, props)
        else:
            mp = self.create("IfcMaterialProfile", Name=key, Material=material, Profile=profile)
            mps = self.create("IfcMaterialProfileSet", Name=key, MaterialProfiles=[mp])
            usage = self.create("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=cardinal_point)
            sec = _Section(key, usage, profile, None)
        self.sections[key] = sec
        return sec

    # -- structural analysis model

    def analysis_model(self, name: str, predefined: str, plane_xz: bool = False) -> None:
        # IFC2X3 has no SharedPlacement and wants one placement per product.
        self.shared_placement = None if self.is2x3 else self.local_placement(None)
        orientation = None
        if plane_xz:
            # local x = global X, local y = global Z: the 2D plane is the world XZ plane
            orientation = self.placement3d((0.0, 0.0, 0.0), (0.0, -1.0, 0.0), (1.0, 0.0, 0.0))
        self.model = self.root(
            "IfcStructuralAnalysisModel",
            "analysis-model",
            Name=name,
            PredefinedType=predefined,
            OrientationOf2DPlane=orientation,
            SharedPlacement=self.shared_placement,
        )
        self.root("IfcRelServicesBuildings", "model-building", RelatingSystem=self.model, RelatedBuildings=[self.building])

    def _item_placement(self):
        """The model's shared placement (IFC4+); IFC2X3 needs one placement per product."""
        return self.local_placement(None) if self.is2x3 else self.shared_placement

    def _stiffness(self, fixed: bool | None):
        if fixed is None:
            return None
        if self.is2x3:
            # IFC2X3 convention: -1. = infinitely stiff (fixed), 0. = free.
            return -1.0 if fixed else 0.0
        return self.f.create_entity("IfcBoolean", bool(fixed))

    def boundary(self, name: str, dofs: Sequence[bool | None]):
        """IfcBoundaryNodeCondition from six flags (ux, uy, uz, rx, ry, rz), True = fixed."""
        lin = "LinearStiffness" if self.is2x3 else "TranslationalStiffness"
        attrs = {}
        for axis_name, value in zip("XYZ", dofs[:3]):
            attrs[lin + axis_name] = self._stiffness(value)
        for axis_name, value in zip("XYZ", dofs[3:]):
            attrs["RotationalStiffness" + axis_name] = self._stiffness(value)
        return self.create("IfcBoundaryNodeCondition", Name=name, **attrs)

    def node(self, name: str, xyz_m: Sequence[float], support=None, support_name: str | None = None):
        L = self.u.length_m
        vertex = self.f.create_entity("IfcVertexPoint", VertexGeometry=self.point([L(c) for c in xyz_m]))
        rep = self.f.create_entity(
            "IfcTopologyRepresentation",
            ContextOfItems=self.ctx_reference,
            RepresentationIdentifier="Reference",
            RepresentationType="Vertex",
            Items=[vertex],
        )
        shape = self.f.create_entity("IfcProductDefinitionShape", Representations=[rep])
        cond = self.boundary(support_name or f"{name} support", support) if support is not None else None
        conn = self.root(
            "IfcStructuralPointConnection",
            f"node/{name}",
            Name=name,
            ObjectPlacement=self._item_placement(),
            Representation=shape,
            AppliedCondition=cond,
        )
        self.nodes[name] = conn
        self.vertices[name] = vertex
        self.model_items.append(conn)
        return conn

    def member(
        self,
        name: str,
        start: str,
        end: str,
        section: _Section,
        predefined: str,
        end_conditions: dict[str, ifcopenshell.entity_instance] | None = None,
    ):
        p0 = self.vertices[start].VertexGeometry.Coordinates
        p1 = self.vertices[end].VertexGeometry.Coordinates
        _, axis, _, _ = member_axes(p0, p1)
        edge = self.f.create_entity("IfcEdge", EdgeStart=self.vertices[start], EdgeEnd=self.vertices[end])
        rep = self.f.create_entity(
            "IfcTopologyRepresentation",
            ContextOfItems=self.ctx_reference,
            RepresentationIdentifier="Reference",
            RepresentationType="Edge",
            Items=[edge],
        )
        shape = self.f.create_entity("IfcProductDefinitionShape", Representations=[rep])
        m = self.root(
            "IfcStructuralCurveMember",
            f"member/{name}",
            Name=name,
            ObjectPlacement=self._item_placement(),
            Representation=shape,
            PredefinedType=predefined,
            Axis=self.direction(axis),
        )
        for node_name in (start, end):
            cond = (end_conditions or {}).get(node_name)
            self.root(
                "IfcRelConnectsStructuralMember",
                f"connects/{name}/{node_name}",
                Name=f"{name}-{node_name}",
                RelatingStructuralMember=m,
                RelatedStructuralConnection=self.nodes[node_name],
                AppliedCondition=cond,
            )
        section.related.append(m)
        self.members[name] = m
        self.model_items.append(m)
        return m

    # -- loads

    def load_case(self, name: str, action_type: str, source: str, self_weight=None) -> _LoadGroup:
        type_name = "IfcStructuralLoadGroup" if self.is2x3 else "IfcStructuralLoadCase"
        e = self.root(
            type_name,
            f"loadcase/{name}",
            Name=name,
            PredefinedType="LOAD_CASE",
            ActionType=action_type,
            ActionSource=source,
            Coefficient=1.0,
            SelfWeightCoefficients=self_weight,
        )
        group = _LoadGroup(e)
        self.load_groups.append(group)
        return group

    def _activity(self, case: _LoadGroup, action, element) -> None:
        case.actions.append(action)
        self.root(
            "IfcRelConnectsStructuralActivity",
            f"activity/{action.Name}",
            RelatingElement=element,
            RelatedStructuralActivity=action,
        )

    def line_load(self, case: _LoadGroup, member_name: str, qz_n_per_m: float) -> None:
        name = f"{case.entity.Name}: {member_name} qz"
        load = self.create(
            "IfcStructuralLoadLinearForce", Name=name, LinearForceZ=self.u.linear_force(qz_n_per_m)
        )
        type_name = "IfcStructuralLinearAction" if self.is2x3 else "IfcStructuralCurveAction"
        action = self.root(
            type_name,
            f"action/{name}",
            Name=name,
            AppliedLoad=load,
            GlobalOrLocal="GLOBAL_COORDS",
            DestabilizingLoad=False,
            ProjectedOrTrue="TRUE_LENGTH",
            PredefinedType="CONST",
        )
        self._activity(case, action, self.members[member_name])

    def point_load(self, case: _LoadGroup, node_name: str, fx=0.0, fy=0.0, fz=0.0) -> None:
        name = f"{case.entity.Name}: {node_name} F"
        F = self.u.force
        load = self.create(
            "IfcStructuralLoadSingleForce",
            Name=name,
            ForceX=F(fx) if fx else None,
            ForceY=F(fy) if fy else None,
            ForceZ=F(fz) if fz else None,
        )
        action = self.root(
            "IfcStructuralPointAction",
            f"action/{name}",
            Name=name,
            AppliedLoad=load,
            GlobalOrLocal="GLOBAL_COORDS",
            DestabilizingLoad=False,
        )
        self._activity(case, action, self.nodes[node_name])

    def combination(self, name: str, purpose: str, terms: Sequence[tuple[float, Sequence[_LoadGroup]]]):
        """A LOAD_COMBINATION group; one IfcRelAssignsToGroupByFactor per term."""
        if self.is2x3:
            raise ValueError("IFC2X3 has no IfcRelAssignsToGroupByFactor: no combinations")
        combo = self.root(
            "IfcStructuralLoadGroup",
            f"combination/{name}",
            Name=name,
            PredefinedType="LOAD_COMBINATION",
            ActionType="NOTDEFINED",
            ActionSource="NOTDEFINED",
            Coefficient=1.0,
            Purpose=purpose,
        )
        self.combinations.append((combo, [(factor, list(cases)) for factor, cases in terms]))
        return combo

    # -- physical elements

    def element(
        self,
        type_name: str,
        key: str,
        name: str,
        p0: Sequence[float],
        p1: Sequence[float],
        section: _Section,
        storey: str,
        predefined: str | None = None,
    ):
        """A linear physical element between two points given in file length units.

        Placement: relative to the storey; origin at p0, local Z along the
        element, local X = the analytical member's local y (see member_axes),
        so local Y = the analytical local z (the profile's yp axis).
        """
        x, _, y, _ = member_axes(p0, p1)
        _, st_pl, elev = self.storeys[storey]
        length = math.sqrt(_dot(_sub(p1, p0), _sub(p1, p0)))
        placement = self.local_placement(st_pl, (p0[0], p0[1], p0[2] - elev), x, y)
        axis_rep = self.f.create_entity(
            "IfcShapeRepresentation",
            ContextOfItems=self.ctx_axis,
            RepresentationIdentifier="Axis",
            RepresentationType="Curve3D",
            Items=[
                self.f.create_entity(
                    "IfcPolyline", Points=[self.point((0.0, 0.0, 0.0)), self.point((0.0, 0.0, length))]
                )
            ],
        )
        body_rep = self.f.create_entity(
            "IfcShapeRepresentation",
            ContextOfItems=self.ctx_body,
            RepresentationIdentifier="Body",
            RepresentationType="SweptSolid",
            Items=[self._extrusion(section.profile, length)],
        )
        shape = self.f.create_entity("IfcProductDefinitionShape", Representations=[axis_rep, body_rep])
        e = self.root(
            type_name,
            key,
            Name=name,
            ObjectPlacement=placement,
            Representation=shape,
            Tag=name,
            PredefinedType=predefined,
        )
        section.related.append(e)
        self.containment[storey].append(e)
        return e

    def _extrusion(self, profile, depth: float):
        return self.f.create_entity(
            "IfcExtrudedAreaSolid",
            SweptArea=profile,
            Position=self.placement3d(),
            ExtrudedDirection=self.direction((0.0, 0.0, 1.0)),
            Depth=depth,
        )

    def footing(self, key: str, name: str, xy: Sequence[float], size: float, depth: float, storey: str):
        """A pad footing whose top is at the storey level, centred on (x, y)."""
        _, st_pl, elev = self.storeys[storey]
        placement = self.local_placement(st_pl, (xy[0], xy[1], -depth))
        profile = self.create(
            "IfcRectangleProfileDef", ProfileType="AREA", ProfileName=f"{name} pad", Position=self._profile_position(), XDim=size, YDim=size
        )
        body_rep = self.f.create_entity(
            "IfcShapeRepresentation",
            ContextOfItems=self.ctx_body,
            RepresentationIdentifier="Body",
            RepresentationType="SweptSolid",
            Items=[self._extrusion(profile, depth)],
        )
        shape = self.f.create_entity("IfcProductDefinitionShape", Representations=[body_rep])
        e = self.root(
            "IfcFooting",
            key,
            Name=name,
            ObjectPlacement=placement,
            Representation=shape,
            Tag=name,
            PredefinedType="PAD_FOOTING",
        )
        self.containment[storey].append(e)
        return e

    def link(self, physical, member_name: str) -> None:
        self.root(
            "IfcRelAssignsToProduct",
            f"product/{member_name}",
            RelatedObjects=[self.members[member_name]],
            RelatingProduct=physical,
        )

    # -- closing relationships

    def finish(self) -> ifcopenshell.file:
        for key, sec in self.sections.items():
            if not sec.related:
                continue
            self.root(
                "IfcRelAssociatesMaterial",
                f"material/{key}",
                Name=key,
                RelatedObjects=sec.related,
                RelatingMaterial=sec.usage,
            )
            if sec.profile_props is not None:
                self.root(
                    "IfcRelAssociatesProfileProperties",
                    f"profile/{key}",
                    Name=key,
                    RelatedObjects=sec.related,
                    RelatingProfileProperties=sec.profile_props,
                    # IFC2X3: rotation of the profile about the member axis;
                    # 0 = the default orientation documented in README.md.
                    ProfileOrientation=self.f.create_entity("IfcPlaneAngleMeasure", 0.0),
                )
        for storey, elements in self.containment.items():
            if elements:
                self.root(
                    "IfcRelContainedInSpatialStructure",
                    f"contained/{storey}",
                    RelatedElements=elements,
                    RelatingStructure=self.storeys[storey][0],
                )
        if self.model is not None:
            self.root(
                "IfcRelAssignsToGroup",
                "group/analysis-model",
                RelatedObjects=self.model_items,
                RelatingGroup=self.model,
            )
            for group in self.load_groups:
                if group.actions:
                    self.root(
                        "IfcRelAssignsToGroup",
                        f"group/{group.entity.Name}",
                        RelatedObjects=group.actions,
                        RelatingGroup=group.entity,
                    )
            for combo, terms in self.combinations:
                for factor, cases in terms:
                    self.root(
                        "IfcRelAssignsToGroupByFactor",
                        f"factor/{combo.Name}/{'+'.join(c.entity.Name for c in cases)}",
                        RelatedObjects=[c.entity for c in cases],
                        RelatingGroup=combo,
                        Factor=factor,
                    )
            loaded_by = [g.entity for g in self.load_groups] + [c for c, _ in self.combinations]
            if loaded_by:
                self.model.LoadedBy = loaded_by
        return self.f


# --------------------------------------------------------------------------- scenarios

_FIXED = (True,) * 6


def _workshop(sample: str, schema: str, units: str) -> ifcopenshell.file:
    w = _Writer(sample, schema, units)
    w.header("ViewDefinition [StructuralAnalysisView]")
    w.project("Workshop portal", "Two-storey single-bay steel portal frame of a workshop (invented scenario).")
    L = w.u.length_m
    w.spatial([("Level 0", L(0.0)), ("Level 1", L(4.0)), ("Roof", L(7.5))])
    w.analysis_model("Workshop portal frame", "LOADING_3D")

    steel = w.steel("Steel S355", 355e6)
    col = w.section("COL I300", w.i_profile("I 300x300x11x19", 300, 300, 11, 19, 27), steel, 10)
    beam = w.section("BEAM I400", w.i_profile("I 400x180x8.6x13.5", 400, 180, 8.6, 13.5, 21), steel, 10)

    # Nodes: N1/N2 fixed bases, N3/N4 first floor, N5/N6 roof (left, right).
    for name, xyz, sup in [
        ("N1", (0.0, 0.0, 0.0), _FIXED),
        ("N2", (8.0, 0.0, 0.0), _FIXED),
        ("N3", (0.0, 0.0, 4.0), None),
        ("N4", (8.0, 0.0, 4.0), None),
        ("N5", (0.0, 0.0, 7.5), None),
        ("N6", (8.0, 0.0, 7.5), None),
    ]:
        w.node(name, xyz, sup, "fixed base" if sup else None)

    members = [
        # name, start, end, section, physical class, storey, predefined
        ("C1", "N1", "N3", col, "IfcColumn", "Level 0", "COLUMN"),
        ("C2", "N2", "N4", col, "IfcColumn", "Level 0", "COLUMN"),
        ("C3", "N3", "N5", col, "IfcColumn", "Level 1", "COLUMN"),
        ("C4", "N4", "N6", col, "IfcColumn", "Level 1", "COLUMN"),
        ("B1", "N3", "N4", beam, "IfcBeam", "Level 1", "BEAM"),
        ("B2", "N5", "N6", beam, "IfcBeam", "Roof", "BEAM"),
    ]
    for name, a, b, sec, cls, storey, pre in members:
        w.member(name, a, b, sec, "RIGID_JOINED_MEMBER")
        p0 = w.vertices[a].VertexGeometry.Coordinates
        p1 = w.vertices[b].VertexGeometry.Coordinates
        phys = w.element(cls, f"element/{name}", name, p0, p1, sec, storey, pre)
        w.link(phys, name)

    g = w.load_case("G dead", "PERMANENT_G", "DEAD_LOAD_G", self_weight=(0.0, 0.0, -1.0))
    w.line_load(g, "B1", -15000.0)
    w.line_load(g, "B2", -10000.0)
    q = w.load_case("Q imposed", "VARIABLE_Q", "LIVE_LOAD_Q")
    w.line_load(q, "B1", -12000.0)
    wind = w.load_case("W wind", "VARIABLE_Q", "WIND_W")
    w.point_load(wind, "N3", fx=8000.0)
    w.point_load(wind, "N5", fx=5000.0)
    if not w.is2x3:
        w.combination("ULS 1", "ULS", [(1.35, [g]), (1.5, [q])])
        w.combination("ULS 2", "ULS", [(1.35, [g]), (1.5, [wind]), (1.05, [q])])
        # G and Q share factor 1.0: one relationship with two load cases.
        w.combination("SLS", "SLS", [(1.0, [g, q]), (0.6, [wind])])
    return w.finish()


def _braced_office(sample: str, schema: str, units: str) -> ifcopenshell.file:
    w = _Writer(sample, schema, units)
    w.header("ViewDefinition [ReferenceView]")
    w.project("Braced office", "Three-storey braced steel office frame (invented scenario).")
    L = w.u.length_mm  # geometry below is in mm
    xs = [0.0, 6000.0, 12000.0, 18000.0]
    ys = [0.0, 7500.0, 15000.0]
    levels = [0.0, 3600.0, 7200.0, 10800.0]
    storey_names = ["Level 0", "Level 1", "Level 2", "Roof"]
    w.spatial([(n, L(z)) for n, z in zip(storey_names, levels)])

    steel = w.steel("Steel S355", 355e6)
    col = w.section("COL I230", w.i_profile("I 230x240x7.5x12", 230, 240, 7.5, 12, 21), steel, 5)
    beam_x = w.section("BEAM-X I330", w.i_profile("I 330x160x7.5x11.5", 330, 160, 7.5, 11.5, 18), steel, 5)
    beam_y = w.section("BEAM-Y I400", w.i_profile("I 400x180x8.6x13.5", 400, 180, 8.6, 13.5, 21), steel, 5)
    beam_s = w.section("BEAM-S I240", w.i_profile("I 240x120x6.2x9.8", 240, 120, 6.2, 9.8, 15), steel, 5)
    brace = w.section("BRACE CHS114", w.chs_profile("CHS 114.3x5", 114.3, 5.0), steel, 5)

    def P(x, y, z):
        return (L(x), L(y), L(z))

    # Footings and columns. Grid names: X lines A..D (x = 0..18000), Y lines 1..3 (y = 0..15000).
    grid_x = "ABCD"
    for j, y in enumerate(ys):
        for i, x in enumerate(xs):
            w.footing(f"footing/{grid_x[i]}{j + 1}", f"F-{grid_x[i]}{j + 1}", (L(x), L(y)), L(1500.0), L(500.0), "Level 0")
    for k in range(3):
        for j, y in enumerate(ys):
            for i, x in enumerate(xs):
                tag = f"C-{grid_x[i]}{j + 1}-S{k + 1}"
                w.element("IfcColumn", f"element/{tag}", tag, P(x, y, levels[k]), P(x, y, levels[k + 1]), col, storey_names[k], "COLUMN")

    # Beams at each floor level (z = 3600, 7200, 10800), contained in the storey at that level.
    for k in (1, 2, 3):
        z = levels[k]
        st = storey_names[k]
        for j, y in enumerate(ys):  # beams along X
            for i in range(3):
                tag = f"BX-{grid_x[i]}{grid_x[i + 1]}{j + 1}-L{k}"
                w.element("IfcBeam", f"element/{tag}", tag, P(xs[i], y, z), P(xs[i + 1], y, z), beam_x, st, "BEAM")
        for i, x in enumerate(xs):  # beams along Y
            for j in range(2):
                tag = f"BY-{grid_x[i]}{j + 1}{j + 2}-L{k}"
                y0, y1 = ys[j], ys[j + 1]
                if (k, i, j) == (2, 3, 0):
                    # Deliberate modelling gap: ends 5 mm short of column axis D2.
                    y1 = y1 - 5.0
                w.element("IfcBeam", f"element/{tag}", tag, P(x, y0, z), P(x, y1, z), beam_y, st, "BEAM")
    # Secondary beam at level 1 in bay B-C / 1-2, spanning between the mid-spans of
    # the primary beams BX-BC1-L1 and BX-BC2-L1 (x = 9000): both must be split there.
    w.element("IfcBeam", "element/BS-BC12-L1", "BS-BC12-L1", P(9000.0, 0.0, 3600.0), P(9000.0, 7500.0, 3600.0), beam_s, "Level 1", "BEAM")

    # Braces: single diagonals from a column base to the opposite column head, every storey.
    for k in range(3):
        z0, z1 = levels[k], levels[k + 1]
        st = storey_names[k]
        diagonals = [
            ("Y1-AB", P(0.0, 0.0, z0), P(6000.0, 0.0, z1)),
            ("Y1-CD", P(18000.0, 0.0, z0), P(12000.0, 0.0, z1)),
            ("Y3-AB", P(0.0, 15000.0, z0), P(6000.0, 15000.0, z1)),
            ("Y3-CD", P(18000.0, 15000.0, z0), P(12000.0, 15000.0, z1)),
            ("XA-12", P(0.0, 0.0, z0), P(0.0, 7500.0, z1)),
            ("XD-12", P(18000.0, 0.0, z0), P(18000.0, 7500.0, z1)),
        ]
        for where, a, b in diagonals:
            tag = f"BR-{where}-S{k + 1}"
            w.element("IfcMember", f"element/{tag}", tag, a, b, brace, st, "BRACE")
    return w.finish()


def _roof_truss(sample: str, schema: str, units: str) -> ifcopenshell.file:
    w = _Writer(sample, schema, units)
    w.header("ViewDefinition [StructuralAnalysisView]")
    w.project("Roof truss", "Pitched pin-jointed Pratt roof truss (invented scenario).")
    w.spatial([("Level 0", 0.0)])
    w.analysis_model("Roof truss", "IN_PLANE_LOADING_2D", plane_xz=True)
    steel = w.steel("Steel S355", 355e6)
    chord = w.section("CHORD SHS120", w.rhs_profile("SHS 120x120x6", 120, 120, 6), steel, 10)
    web = w.section("WEB SHS80", w.rhs_profile("SHS 80x80x4", 80, 80, 4), steel, 10)

    span, rise, panels = 12.0, 2.0, 6
    dx = span / panels
    pin = (True, True, True, False, False, False)
    roller = (False, True, True, False, False, False)
    for i in range(panels + 1):  # bottom chord nodes B0..B6
        sup = pin if i == 0 else roller if i == panels else None
        sup_name = "pin" if i == 0 else "roller" if i == panels else None
        w.node(f"B{i}", (i * dx, 0.0, 0.0), sup, sup_name)
    for i in range(1, panels):  # top chord nodes T1..T5
        x = i * dx
        z = rise * min(x, span - x) / (span / 2.0)
        w.node(f"T{i}", (x, 0.0, z), None)

    top = ["B0"] + [f"T{i}" for i in range(1, panels)] + [f"B{panels}"]
    k = 0
    for i in range(panels):
        w.member(f"BC{i + 1}", f"B{i}", f"B{i + 1}", chord, "PIN_JOINED_MEMBER")
    for i in range(panels):
        w.member(f"TC{i + 1}", top[i], top[i + 1], chord, "PIN_JOINED_MEMBER")
    for i in range(1, panels):
        w.member(f"V{i}", f"B{i}", f"T{i}", web, "PIN_JOINED_MEMBER")
    # Pratt diagonals: from a top node down towards mid-span; start at the smaller x.
    half = panels // 2
    for i in range(1, half):
        k += 1
        w.member(f"D{k}", f"T{i}", f"B{i + 1}", web, "PIN_JOINED_MEMBER")
    for i in range(half + 1, panels):
        k += 1
        w.member(f"D{k}", f"B{i - 1}", f"T{i}", web, "PIN_JOINED_MEMBER")

    g = w.load_case("G roof", "PERMANENT_G", "DEAD_LOAD_G")
    for i in range(1, panels):
        w.point_load(g, f"T{i}", fz=-10000.0)
    if not w.is2x3:
        w.combination("ULS", "ULS", [(1.35, [g])])
    return w.finish()


def _unstable_frame(sample: str, schema: str, units: str) -> ifcopenshell.file:
    w = _Writer(sample, schema, units)
    w.header("ViewDefinition [StructuralAnalysisView]")
    w.project("Unstable frame", "Portal frame with pinned bases and a hinged beam: a sway mechanism.")
    w.spatial([("Level 0", 0.0)])
    w.analysis_model("Unstable frame", "LOADING_3D")
    steel = w.steel("Steel S235", 235e6)
    col = w.section("COL I200", w.i_profile("I 200x200x9x15", 200, 200, 9, 15, 18), steel, 10)
    beam = w.section("BEAM I300", w.i_profile("I 300x150x7.1x10.7", 300, 150, 7.1, 10.7, 15), steel, 10)
    # In-plane pin: translations fixed, rotation about Y free, rotations about X and Z fixed.
    pinned = (True, True, True, True, False, True)
    w.node("N1", (0.0, 0.0, 0.0), pinned, "in-plane pin")
    w.node("N2", (6.0, 0.0, 0.0), pinned, "in-plane pin")
    w.node("N3", (0.0, 0.0, 4.0), None)
    w.node("N4", (6.0, 0.0, 4.0), None)
    w.member("C1", "N1", "N3", col, "RIGID_JOINED_MEMBER")
    w.member("C2", "N2", "N4", col, "RIGID_JOINED_MEMBER")
    # Beam hinged at both ends about its local y (= global Y for this beam).
    hinge = w.boundary("in-plane hinge", (True, True, True, True, False, True))
    w.member("B1", "N3", "N4", beam, "RIGID_JOINED_MEMBER", end_conditions={"N3": hinge, "N4": hinge})
    h = w.load_case("H sway", "VARIABLE_Q", "WIND_W")
    w.point_load(h, "N3", fx=10000.0)
    return w.finish()


def build_frame(bays: int = 2, storeys: int = 2, bay: float = 6.0, height: float = 3.5,
                name: str | None = None, schema: str = "IFC4") -> ifcopenshell.file:
    """A plane multi-bay, multi-storey steel frame of any size, as a structural analysis model.

    Not one of the committed samples: the batch benchmark and tests generate models of
    varied sizes with it. Columns on grid lines x = 0, bay, ..., bays * bay (m) in the
    world XZ plane, fixed bases, rigid joints, floors every ``height``; dead and imposed
    line loads on every beam, a wind point load at the left end of every floor, and two
    ULS combinations. Deterministic like the samples (GlobalIds from ``name``).
    """
    if bays < 1 or storeys < 1:
        raise ValueError(f"bays and storeys must be at least 1, not {bays} and {storeys}")
    key = name or f"frame_{bays}x{storeys}"
    w = _Writer(key, schema, "SI")
    w.header("ViewDefinition [StructuralAnalysisView]")
    w.project(f"Frame {bays} x {storeys}", f"{bays}-bay, {storeys}-storey steel frame (invented scenario).")
    L = w.u.length_m
    w.spatial([("Level 0", L(0.0))] + [(f"Level {k}", L(k * height)) for k in range(1, storeys + 1)])
    w.analysis_model(f"Frame {bays} x {storeys}", "LOADING_3D")
    steel = w.steel("Steel S355", 355e6)
    col = w.section("COL I300", w.i_profile("I 300x300x11x19", 300, 300, 11, 19, 27), steel, 10)
    beam = w.section("BEAM I400", w.i_profile("I 400x180x8.6x13.5", 400, 180, 8.6, 13.5, 21), steel, 10)
    for k in range(storeys + 1):
        for i in range(bays + 1):
            w.node(f"N{i}-{k}", (i * bay, 0.0, k * height), _FIXED if k == 0 else None, "fixed base" if k == 0 else None)
    for k in range(storeys):
        for i in range(bays + 1):
            w.member(f"C{i}-{k + 1}", f"N{i}-{k}", f"N{i}-{k + 1}", col, "RIGID_JOINED_MEMBER")
    for k in range(1, storeys + 1):
        for i in range(bays):
            w.member(f"B{i + 1}-{k}", f"N{i}-{k}", f"N{i + 1}-{k}", beam, "RIGID_JOINED_MEMBER")
    g = w.load_case("G dead", "PERMANENT_G", "DEAD_LOAD_G", self_weight=(0.0, 0.0, -1.0))
    q = w.load_case("Q imposed", "VARIABLE_Q", "LIVE_LOAD_Q")
    wind = w.load_case("W wind", "VARIABLE_Q", "WIND_W")
    for k in range(1, storeys + 1):
        for i in range(bays):
            w.line_load(g, f"B{i + 1}-{k}", -15000.0 if k < storeys else -10000.0)
            w.line_load(q, f"B{i + 1}-{k}", -12000.0 if k < storeys else -4000.0)
        w.point_load(wind, f"N0-{k}", fx=4000.0 * k / storeys + 2000.0)
    if schema != "IFC2X3":
        w.combination("ULS 1", "ULS", [(1.35, [g]), (1.5, [q])])
        w.combination("ULS 2", "ULS", [(1.35, [g]), (1.5, [wind]), (1.05, [q])])
    return w.finish()


_BUILDERS = {
    "workshop_portal": (_workshop, "SI"),
    "braced_office": (_braced_office, "MM_KN"),
    "roof_truss": (_roof_truss, "SI"),
    "unstable_frame": (_unstable_frame, "SI"),
    "workshop_portal_mm": (_workshop, "MM_KN"),
}


def build_sample(name: str, schema: str | None = None) -> ifcopenshell.file:
    """Build sample ``name`` in memory.

    ``schema`` is "IFC2X3", "IFC4" or "IFC4X3"; None means the sample's own
    schema (SAMPLE_SCHEMAS). In IFC2X3, load combinations are left out.
    """
    if name not in _BUILDERS:
        raise ValueError(f"unknown sample {name!r}; expected one of {sorted(_BUILDERS)}")
    schema = schema or SAMPLE_SCHEMAS[name]
    if schema not in ("IFC2X3", "IFC4", "IFC4X3"):
        raise ValueError(f"unsupported schema {schema!r}")
    builder, units = _BUILDERS[name]
    return _declare_derived_units(builder(name, schema, units))


# unit types the samples' values are given in, as products of the declared base units
_DERIVED = (("MODULUSOFELASTICITYUNIT", (("FORCEUNIT", 1), ("LENGTHUNIT", -2))),
            ("LINEARFORCEUNIT", (("FORCEUNIT", 1), ("LENGTHUNIT", -1))),
            ("MASSDENSITYUNIT", (("MASSUNIT", 1), ("LENGTHUNIT", -3))))


def _declare_derived_units(f: ifcopenshell.file) -> ifcopenshell.file:
    """Declare each unit type of `_DERIVED` the file leaves out, built from its own base units, so that no
    value is read in an undeclared unit (the values stay as they are: a reader derives the same unit).
    Created last, so the ids of everything else do not move."""
    assignment = f.by_type("IfcProject")[0].UnitsInContext
    units = list(assignment.Units)
    declared = {u.UnitType for u in units}
    base = {u.UnitType: u for u in units if u.is_a("IfcNamedUnit")}
    for unit_type, elements in _DERIVED:
        if unit_type in declared:
            continue
        parts = [f.create_entity("IfcDerivedUnitElement", Unit=base[t], Exponent=e) for t, e in elements]
        units.append(f.create_entity("IfcDerivedUnit", Elements=parts, UnitType=unit_type))
    assignment.Units = units
    return f


def write_sample(name: str, path: str | pathlib.Path, schema: str | None = None) -> pathlib.Path:
    """Write sample ``name`` to ``path``; ``schema`` None = the sample's own (SAMPLE_SCHEMAS)."""
    path = pathlib.Path(path)
    build_sample(name, schema).write(str(path))
    return path


def main(argv: Sequence[str] | None = None) -> int:
    out_dir = pathlib.Path(argv[0]) if argv else pathlib.Path(__file__).resolve().parent
    for name in SAMPLES:
        write_sample(name, out_dir / f"{name}.ifc")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
