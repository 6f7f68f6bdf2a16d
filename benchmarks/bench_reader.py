"""Benchmark: reading large models, both routes.

Route 2 (physical): generates a regular steel building frame of about 5e4
physical elements (IfcColumn and IfcBeam with an Axis curve, an extruded Body
and a profile set usage, placed relative to their storeys).

Route 1 (structural): generates an IFC4 ``IfcStructuralAnalysisModel`` of a
10 x 10-column, 100-storey frame (10,100 point connections, 28,000 curve
members with one shared profile set per kind, supports at the base, one load
case with a uniform line load on every beam and a few point loads, one
combination), written entity by entity with ``create_entity``. All items sit
in the model's ``SharedPlacement``. The beams of the top ``--loose-storeys``
storeys have no ``IfcRelConnectsStructuralMember``, so their ends join the
point connections by position (the reader's fallback).

For each it times

* the baseline: ``ifcopenshell.open`` plus iterating every element (route 2)
  or every item of the analysis model (route 1) and its placement chain
  down to the location coordinates, and
* ``read_ifc`` of the same file (open, units, placements, sections,
  materials, connections, supports, loads),

and prints the ratio (target: at most 3).

Run: ``PYTHONPATH=. python benchmarks/bench_reader.py [--route both|physical|structural]
[--grid 15] [--storeys 78] [--keep FILE] [--keep-structural FILE]``
"""
from __future__ import annotations

import argparse
import os
import tempfile
import time


def generate(path: str, grid: int = 15, storeys: int = 78, bay: float = 6000.0, height: float = 3500.0) -> int:
    """Write the model (mm) and return its number of linear elements."""
    import ifcopenshell
    import ifcopenshell.guid

    f = ifcopenshell.file(schema="IFC4")
    ce = f.create_entity
    gid = ifcopenshell.guid.new

    def pt(c):
        return ce("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def d(v):
        return ce("IfcDirection", DirectionRatios=[float(x) for x in v])

    origin = ce("IfcAxis2Placement3D", Location=pt((0, 0, 0)))
    units = [ce("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI", Name="METRE"),
             ce("IfcSIUnit", UnitType="FORCEUNIT", Prefix="KILO", Name="NEWTON"),
             ce("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
             ce("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM")]
    ctx = ce("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3, Precision=1e-5,
             WorldCoordinateSystem=origin)
    axis_ctx = ce("IfcGeometricRepresentationSubContext", ContextIdentifier="Axis", ContextType="Model", ParentContext=ctx,
                  TargetView="GRAPH_VIEW")
    body_ctx = ce("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model", ParentContext=ctx,
                  TargetView="MODEL_VIEW")
    project = ce("IfcProject", GlobalId=gid(), Name="Benchmark tower", RepresentationContexts=[ctx],
                 UnitsInContext=ce("IfcUnitAssignment", Units=units))
    mat = ce("IfcMaterial", Name="Steel")

    def prop(name, measure, value):
        return ce("IfcPropertySingleValue", Name=name, NominalValue=ce(measure, value))

    ce("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat,
       Properties=[prop("YoungModulus", "IfcModulusOfElasticityMeasure", 210.0),
                   prop("ShearModulus", "IfcModulusOfElasticityMeasure", 81.0)])
    ce("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
       Properties=[prop("MassDensity", "IfcMassDensityMeasure", 7.85e-6)])
    profiles = {
        "column": ce("IfcIShapeProfileDef", ProfileType="AREA", ProfileName="I 300x300", OverallWidth=300.0, OverallDepth=300.0,
                     WebThickness=11.0, FlangeThickness=19.0, FilletRadius=27.0),
        "beam": ce("IfcIShapeProfileDef", ProfileType="AREA", ProfileName="I 400x180", OverallWidth=180.0, OverallDepth=400.0,
                   WebThickness=8.6, FlangeThickness=13.5, FilletRadius=21.0),
    }
    usages = {}
    for kind, prof in profiles.items():
        mps = ce("IfcMaterialProfileSet", MaterialProfiles=[ce("IfcMaterialProfile", Material=mat, Profile=prof)])
        usages[kind] = ce("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=5)
    zdir, xdir, ydir = d((0, 0, 1)), d((1, 0, 0)), d((0, 1, 0))
    site_pl = ce("IfcLocalPlacement", RelativePlacement=origin)
    related = {"column": [], "beam": []}
    count = 0

    def element(cls, kind, name, storey_pl, elev, p0, p1, xaxis):
        nonlocal count
        length = sum((b - a) ** 2 for a, b in zip(p0, p1)) ** 0.5
        z = [(b - a) / length for a, b in zip(p0, p1)]
        pl = ce("IfcLocalPlacement", PlacementRelTo=storey_pl,
                RelativePlacement=ce("IfcAxis2Placement3D", Location=pt((p0[0], p0[1], p0[2] - elev)),
                                     Axis=zdir if z[2] > 0.5 else d(z), RefDirection=xaxis))
        axis = ce("IfcShapeRepresentation", ContextOfItems=axis_ctx, RepresentationIdentifier="Axis", RepresentationType="Curve3D",
                  Items=[ce("IfcPolyline", Points=[pt((0, 0, 0)), pt((0, 0, length))])])
        body = ce("IfcShapeRepresentation", ContextOfItems=body_ctx, RepresentationIdentifier="Body", RepresentationType="SweptSolid",
                  Items=[ce("IfcExtrudedAreaSolid", SweptArea=profiles[kind], Position=origin, ExtrudedDirection=zdir, Depth=length)])
        e = ce(cls, GlobalId=gid(), Name=name, ObjectPlacement=pl,
               Representation=ce("IfcProductDefinitionShape", Representations=[axis, body]))
        related[kind].append(e)
        count += 1

    for k in range(storeys):
        z0, z1 = k * height, (k + 1) * height
        st_pl = ce("IfcLocalPlacement", PlacementRelTo=site_pl, RelativePlacement=ce("IfcAxis2Placement3D", Location=pt((0, 0, z0))))
        ce("IfcBuildingStorey", GlobalId=gid(), Name=f"Level {k}", ObjectPlacement=st_pl, Elevation=z0)
        for i in range(grid):
            for j in range(grid):
                element("IfcColumn", "column", f"C{i}-{j}-{k}", st_pl, z0, (i * bay, j * bay, z0), (i * bay, j * bay, z1), xdir)
        for i in range(grid - 1):  # beams along X: profile y up, local x = -Y ... placement x = Y
            for j in range(grid):
                element("IfcBeam", "beam", f"BX{i}-{j}-{k}", st_pl, z0, (i * bay, j * bay, z1), ((i + 1) * bay, j * bay, z1), ydir)
        for i in range(grid):
            for j in range(grid - 1):
                element("IfcBeam", "beam", f"BY{i}-{j}-{k}", st_pl, z0, (i * bay, j * bay, z1), (i * bay, (j + 1) * bay, z1),
                        d((-1, 0, 0)))
    for kind, els in related.items():
        ce("IfcRelAssociatesMaterial", GlobalId=gid(), RelatedObjects=els, RelatingMaterial=usages[kind])
    assert project
    f.write(path)
    return count


def baseline(path: str) -> float:
    import ifcopenshell

    t = time.perf_counter()
    f = ifcopenshell.open(path)
    n = 0
    for cls in ("IfcColumn", "IfcBeam", "IfcMember"):
        for e in f.by_type(cls):
            p = e.ObjectPlacement
            while p is not None:  # the whole placement chain, down to the coordinates
                c = p.RelativePlacement.Location.Coordinates
                n += len(c)
                p = p.PlacementRelTo
    return time.perf_counter() - t


def generate_structural(path: str, grid: int = 10, storeys: int = 100, bay: float = 6000.0, height: float = 3500.0,
                        loose_storeys: int = 1) -> tuple[int, int]:
    """Write the structural analysis model (mm, kN); return (point connections, curve members)."""
    import ifcopenshell
    import ifcopenshell.guid

    f = ifcopenshell.file(schema="IFC4")
    ce = f.create_entity
    gid = ifcopenshell.guid.new

    def pt(c):
        return ce("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def d(v):
        return ce("IfcDirection", DirectionRatios=[float(x) for x in v])

    origin = ce("IfcAxis2Placement3D", Location=pt((0, 0, 0)))
    units = [ce("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI", Name="METRE"),
             ce("IfcSIUnit", UnitType="FORCEUNIT", Prefix="KILO", Name="NEWTON"),
             ce("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN"),
             ce("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM")]
    ctx = ce("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3, Precision=1e-5,
             WorldCoordinateSystem=origin)
    ref_ctx = ce("IfcGeometricRepresentationSubContext", ContextIdentifier="Reference", ContextType="Model",
                 ParentContext=ctx, TargetView="GRAPH_VIEW")
    ce("IfcProject", GlobalId=gid(), Name="Benchmark analysis tower", RepresentationContexts=[ctx],
       UnitsInContext=ce("IfcUnitAssignment", Units=units))
    shared = ce("IfcLocalPlacement", RelativePlacement=origin)
    amodel = ce("IfcStructuralAnalysisModel", GlobalId=gid(), Name="Tower frame", PredefinedType="LOADING_3D",
                SharedPlacement=shared)
    mat = ce("IfcMaterial", Name="Steel")

    def prop(name, measure, value):
        return ce("IfcPropertySingleValue", Name=name, NominalValue=ce(measure, value))

    ce("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat,
       Properties=[prop("YoungModulus", "IfcModulusOfElasticityMeasure", 210.0),
                   prop("ShearModulus", "IfcModulusOfElasticityMeasure", 81.0)])
    ce("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
       Properties=[prop("MassDensity", "IfcMassDensityMeasure", 7.85e-6)])
    profiles = {
        "column": ce("IfcIShapeProfileDef", ProfileType="AREA", ProfileName="I 300x300", OverallWidth=300.0,
                     OverallDepth=300.0, WebThickness=11.0, FlangeThickness=19.0, FilletRadius=27.0),
        "beam": ce("IfcIShapeProfileDef", ProfileType="AREA", ProfileName="I 400x180", OverallWidth=180.0,
                   OverallDepth=400.0, WebThickness=8.6, FlangeThickness=13.5, FilletRadius=21.0),
    }
    usages = {}
    for kind, prof in profiles.items():
        mps = ce("IfcMaterialProfileSet", MaterialProfiles=[ce("IfcMaterialProfile", Material=mat, Profile=prof)])
        # symmetric I: the mid-depth point (5) is the centroid, so no offset, but the reader still checks it
        usages[kind] = ce("IfcMaterialProfileSetUsage", ForProfileSet=mps, CardinalPoint=5 if kind == "column" else 10)
    fixed = ce("IfcBoundaryNodeCondition", "fixed base", *[ce("IfcBoolean", True) for _ in range(6)])
    axis_column, axis_beam = d((0, 1, 0)), d((0, 0, 1))
    items = []
    nodes = {}
    vertices = {}

    def topo(item, kind):
        return ce("IfcProductDefinitionShape", Representations=[ce(
            "IfcTopologyRepresentation", ContextOfItems=ref_ctx, RepresentationIdentifier="Reference",
            RepresentationType=kind, Items=[item])])

    for k in range(storeys + 1):
        for i in range(grid):
            for j in range(grid):
                v = ce("IfcVertexPoint", VertexGeometry=pt((i * bay, j * bay, k * height)))
                c = ce("IfcStructuralPointConnection", GlobalId=gid(), Name=f"N{i}-{j}-{k}", ObjectPlacement=shared,
                       Representation=topo(v, "Vertex"), AppliedCondition=fixed if k == 0 else None)
                nodes[i, j, k], vertices[i, j, k] = c, v
                items.append(c)
    related = {"column": [], "beam": []}
    beams = []

    def member(kind, name, a, b, connect):
        m = ce("IfcStructuralCurveMember", GlobalId=gid(), Name=name, ObjectPlacement=shared,
               PredefinedType="RIGID_JOINED_MEMBER",
               Representation=topo(ce("IfcEdge", EdgeStart=vertices[a], EdgeEnd=vertices[b]), "Edge"),
               Axis=axis_column if kind == "column" else axis_beam)
        if connect:
            for node in (a, b):
                ce("IfcRelConnectsStructuralMember", GlobalId=gid(), RelatingStructuralMember=m,
                   RelatedStructuralConnection=nodes[node])
        related[kind].append(m)
        items.append(m)
        if kind == "beam":
            beams.append(m)

    for k in range(storeys):
        loose = k >= storeys - loose_storeys
        for i in range(grid):
            for j in range(grid):
                member("column", f"C{i}-{j}-{k}", (i, j, k), (i, j, k + 1), True)
        for i in range(grid - 1):
            for j in range(grid):
                member("beam", f"BX{i}-{j}-{k}", (i, j, k + 1), (i + 1, j, k + 1), not loose)
        for i in range(grid):
            for j in range(grid - 1):
                member("beam", f"BY{i}-{j}-{k}", (i, j, k + 1), (i, j + 1, k + 1), not loose)
    for kind, els in related.items():
        ce("IfcRelAssociatesMaterial", GlobalId=gid(), RelatedObjects=els, RelatingMaterial=usages[kind])
    ce("IfcRelAssignsToGroup", GlobalId=gid(), RelatedObjects=items, RelatingGroup=amodel)

    case = ce("IfcStructuralLoadCase", GlobalId=gid(), Name="Floor load and wind", PredefinedType="LOAD_CASE",
              ActionType="VARIABLE_Q", ActionSource="LIVE_LOAD_Q", Coefficient=1.0)
    q = ce("IfcStructuralLoadLinearForce", Name="floor", LinearForceZ=-12.0)  # kN/m = N/mm
    actions = []

    def act(action, item):
        ce("IfcRelConnectsStructuralActivity", GlobalId=gid(), RelatingElement=item, RelatedStructuralActivity=action)
        actions.append(action)

    for m in beams:
        act(ce("IfcStructuralCurveAction", GlobalId=gid(), Name="q", AppliedLoad=q, GlobalOrLocal="GLOBAL_COORDS",
               DestabilizingLoad=False, ProjectedOrTrue="TRUE_LENGTH", PredefinedType="CONST"), m)
    wind = ce("IfcStructuralLoadSingleForce", Name="wind", ForceX=25.0)
    for j in range(grid):
        act(ce("IfcStructuralPointAction", GlobalId=gid(), Name="wind", AppliedLoad=wind, GlobalOrLocal="GLOBAL_COORDS",
               DestabilizingLoad=False), nodes[0, j, storeys])
    ce("IfcRelAssignsToGroup", GlobalId=gid(), RelatedObjects=actions, RelatingGroup=case)
    combo = ce("IfcStructuralLoadGroup", GlobalId=gid(), Name="ULS 1.5 Q", PredefinedType="LOAD_COMBINATION",
               ActionType="NOTDEFINED", ActionSource="NOTDEFINED", Coefficient=1.0)
    ce("IfcRelAssignsToGroupByFactor", GlobalId=gid(), RelatedObjects=[case], RelatingGroup=combo, Factor=1.5)
    amodel.LoadedBy = [case, combo]
    f.write(path)
    return len(nodes), sum(len(v) for v in related.values())


def baseline_structural(path: str) -> float:
    import ifcopenshell

    t = time.perf_counter()
    f = ifcopenshell.open(path)
    n = 0
    for model in f.by_type("IfcStructuralAnalysisModel"):
        for rel in model.IsGroupedBy:
            for e in rel.RelatedObjects:
                p = e.ObjectPlacement
                while p is not None:  # the whole placement chain, down to the coordinates
                    c = p.RelativePlacement.Location.Coordinates
                    n += len(c)
                    p = p.PlacementRelTo
    return time.perf_counter() - t


def least_reading_structural(path: str) -> float:
    """Seconds to read, through ifcopenshell's Python API and with no logic at all, the attributes route 1
    cannot do without: open; the model's items; per member its GlobalId, Name, PredefinedType, Axis,
    placement, representation down to both vertices' coordinates, its relations to point connections
    (each with its connection and end condition) and its material association; per point connection its
    GlobalId, Name, vertex coordinates and support condition; per action its load and the item it acts on.
    Attributes are read by position (`get_argument`), as the reader reads them; each read looks its
    position up in a dict, which the reader does not, so this is slightly above the true floor (a version
    with the positions written out measured 1.05 s against 1.20 s on the tower).

    What this takes over `baseline_structural` is a floor under the reader's ratio that no logic of
    the reader's own can go below. ``n`` only keeps the coordinates' reads from being skipped.
    """
    import ifcopenshell

    t = time.perf_counter()
    f = ifcopenshell.open(path)
    positions: dict[tuple[str, str], int] = {}

    def get(e, attr: str):
        key = (e.is_a(), attr)
        i = positions.get(key)
        if i is None:
            i = positions[key] = e.get_argument_index(attr)
        return e.get_argument(i)

    n = 0
    rels: dict[int, list] = {}
    for r in f.by_type("IfcRelConnectsStructuralMember"):
        rels.setdefault(get(r, "RelatingStructuralMember").id(), []).append(r)
    mats = {}
    for r in f.by_type("IfcRelAssociatesMaterial"):
        material = get(r, "RelatingMaterial")
        for o in get(r, "RelatedObjects"):
            mats[o.id()] = material
    for model in f.by_type("IfcStructuralAnalysisModel"):
        for grouped in model.IsGroupedBy:
            for e in get(grouped, "RelatedObjects"):
                member = e.is_a("IfcStructuralCurveMember")
                get(e, "GlobalId"), get(e, "Name"), get(e, "ObjectPlacement")
                for rep in get(get(e, "Representation"), "Representations"):
                    for it in get(rep, "Items"):
                        vertices = (get(it, "EdgeStart"), get(it, "EdgeEnd")) if member else (it,)
                        for v in vertices:
                            n += len(get(get(v, "VertexGeometry"), "Coordinates"))
                if member:
                    get(e, "PredefinedType"), get(e, "Axis"), mats.get(e.id())
                    for r in rels.get(e.id(), ()):
                        get(r, "RelatedStructuralConnection"), get(r, "AppliedCondition")
                else:
                    get(e, "AppliedCondition")
    for r in f.by_type("IfcRelConnectsStructuralActivity"):
        get(r, "RelatingElement"), get(get(r, "RelatedStructuralActivity"), "AppliedLoad")
    return time.perf_counter() - t


def _measure(path: str, baseline_fn, label: str) -> None:
    from analysis.ifc.reader import read_ifc

    base = min(baseline_fn(path) for _ in range(2))
    read = float("inf")
    for _ in range(2):  # best of two, like the baseline
        t = time.perf_counter()
        model = read_ifc(path)
        read = min(read, time.perf_counter() - t)
    fr = model.frame
    print(f"{label}: frame: {fr.n_nodes} nodes, {fr.n_members} members")
    print(f"{label}: open + iterate placements: {base:.2f} s")
    print(f"{label}: read_ifc (route {model.route}): {read:.2f} s")
    print(f"{label}: ratio: {read / base:.2f} (target <= 3)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--route", choices=("both", "physical", "structural"), default="both")
    ap.add_argument("--grid", type=int, default=15, help="physical model: columns per side")
    ap.add_argument("--storeys", type=int, default=78, help="physical model: storeys")
    ap.add_argument("--keep", help="physical model: write it here and keep it (an existing file there is reused)")
    ap.add_argument("--structural-grid", type=int, default=10)
    ap.add_argument("--structural-storeys", type=int, default=100)
    ap.add_argument("--loose-storeys", type=int, default=1,
                    help="structural model: top storeys whose beams join their nodes by position only")
    ap.add_argument("--keep-structural", help="structural model: write it here and keep it (an existing file is reused)")
    args = ap.parse_args()
    import ifcopenshell  # noqa: F401  (import time is not part of either measurement)
    import scipy.spatial  # noqa: F401  (library import time is not reading time)

    import analysis.ifc.reader  # noqa: F401

    tmp = tempfile.TemporaryDirectory()
    if args.route in ("both", "physical"):
        path = args.keep or os.path.join(tmp.name, "bench_physical.ifc")
        if args.keep and os.path.exists(path):
            print(f"reusing {path}, {os.path.getsize(path) / 1e6:.1f} MB")
        else:
            t = time.perf_counter()
            n = generate(path, args.grid, args.storeys)
            print(f"generated {n} elements, {os.path.getsize(path) / 1e6:.1f} MB in {time.perf_counter() - t:.1f} s")
        _measure(path, baseline, "physical")
    if args.route in ("both", "structural"):
        path = args.keep_structural or os.path.join(tmp.name, "bench_structural.ifc")
        if args.keep_structural and os.path.exists(path):
            print(f"reusing {path}, {os.path.getsize(path) / 1e6:.1f} MB")
        else:
            t = time.perf_counter()
            n_nodes, n_members = generate_structural(path, args.structural_grid, args.structural_storeys,
                                                     loose_storeys=args.loose_storeys)
            print(f"generated {n_nodes} point connections, {n_members} curve members, "
                  f"{os.path.getsize(path) / 1e6:.1f} MB in {time.perf_counter() - t:.1f} s")
        _measure(path, baseline_structural, "structural")


if __name__ == "__main__":
    main()
