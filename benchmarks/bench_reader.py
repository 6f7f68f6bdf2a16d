"""Benchmark: deriving the analytical frame of a large physical model (route 2).

Generates a regular steel building frame of about 5e4 physical elements
(IfcColumn and IfcBeam with an Axis curve, an extruded Body and a profile
set usage, placed relative to their storeys), then times

* the baseline: ``ifcopenshell.open`` plus iterating every element's
  placement down to its location coordinates, and
* ``read_ifc`` of the same file (open, units, derivation: placements,
  sections, materials, merging, splitting, supports, self-weight),

and prints the ratio (target: at most 3).

Run: ``PYTHONPATH=. python benchmarks/bench_reader.py [--grid 15] [--storeys 78] [--keep FILE]``
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


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--grid", type=int, default=15)
    ap.add_argument("--storeys", type=int, default=78)
    ap.add_argument("--keep", help="write the model here and keep it (an existing file there is reused)")
    args = ap.parse_args()
    import ifcopenshell  # noqa: F401  (import time is not part of either measurement)

    from analysis.ifc.reader import read_ifc

    tmp = tempfile.TemporaryDirectory()
    path = args.keep or os.path.join(tmp.name, "bench_physical.ifc")
    if args.keep and os.path.exists(path):
        print(f"reusing {path}, {os.path.getsize(path) / 1e6:.1f} MB")
    else:
        t = time.perf_counter()
        n = generate(path, args.grid, args.storeys)
        print(f"generated {n} elements, {os.path.getsize(path) / 1e6:.1f} MB in {time.perf_counter() - t:.1f} s")
    import scipy.spatial  # noqa: F401  (library import time is not reading time)

    base = min(baseline(path) for _ in range(2))
    read = float("inf")
    for _ in range(2):  # best of two, like the baseline
        t = time.perf_counter()
        model = read_ifc(path)
        read = min(read, time.perf_counter() - t)
    fr = model.frame
    print(f"frame: {fr.n_nodes} nodes, {fr.n_members} members")
    print(f"open + iterate placements: {base:.2f} s")
    print(f"read_ifc (route {model.route}): {read:.2f} s")
    print(f"ratio: {read / base:.2f} (target <= 3)")


if __name__ == "__main__":
    main()
