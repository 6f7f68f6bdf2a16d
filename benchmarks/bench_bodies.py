"""Benchmark: axes and sections of tessellated members (`analysis.ifc.bodies`) against the geometry kernel alone.

Generates an IFC4 steel frame in millimetres whose columns, beams and
diagonal braces have only a ``Body`` that is an ``IfcTriangulatedFaceSet``
(I-sections of a few sizes, 44 triangles each, in element coordinates; the
placement turns each into its direction), about ``--elements`` of them.

It times, in the same run and alternately (the best of ``--repeat``):

* the baseline: ``ifcopenshell.geom.iterator`` over those elements with
  the settings, kernel and threads `analysis.ifc.bodies` uses, taking each
  shape's vertex and face buffers as numpy arrays and its placement matrix
  (the least any consumer of the kernel does), and
* `analysis.ifc.bodies.body_axes` over the same elements: the same kernel
  pass plus world coordinates, closedness and volume checks, principal
  directions, side-face refinement, the mid-length cut with its section
  integrals, principal axes, and J and shear areas per distinct section,

and prints the ratio (target: at most 2).

Run: ``PYTHONPATH=. python benchmarks/bench_bodies.py [--elements 5000] [--repeat 2] [--threads N] [--keep FILE]``
"""
from __future__ import annotations

import argparse
import math
import os
import tempfile
import time

import numpy as np

# I-sections (mm): b, h, tf, tw
SIZES = [(100, 200, 8.5, 5.6), (120, 240, 9.8, 6.2), (150, 300, 10.7, 7.1), (180, 360, 12.7, 8.0),
         (200, 400, 13.5, 8.6), (220, 450, 14.6, 9.4), (300, 300, 19.0, 11.0), (300, 260, 17.5, 10.0)]


def _i_body(b, h, tf, tw, L):
    pts = [(-b / 2, -h / 2), (b / 2, -h / 2), (b / 2, -h / 2 + tf), (tw / 2, -h / 2 + tf), (tw / 2, h / 2 - tf),
           (b / 2, h / 2 - tf), (b / 2, h / 2), (-b / 2, h / 2), (-b / 2, h / 2 - tf), (-tw / 2, h / 2 - tf),
           (-tw / 2, -h / 2 + tf), (-b / 2, -h / 2 + tf)]
    cap = [(0, 1, 2), (0, 2, 3), (0, 3, 10), (0, 10, 11), (10, 3, 4), (10, 4, 9), (4, 5, 6), (4, 6, 9), (9, 6, 7), (9, 7, 8)]
    verts = [(0.0, y, z) for y, z in pts] + [(float(L), y, z) for y, z in pts]
    tris = [(c + 1, bb + 1, a + 1) for a, bb, c in cap] + [(a + 13, bb + 13, c + 13) for a, bb, c in cap]
    for i in range(12):
        j = (i + 1) % 12
        tris += [(i + 1, j + 1, j + 13), (i + 1, j + 13, i + 13)]
    return verts, tris


def generate(path: str, n_target: int = 5000, bay: float = 6000.0, height: float = 3500.0) -> int:
    """Write the model and return its number of elements."""
    import ifcopenshell
    import ifcopenshell.guid

    f = ifcopenshell.file(schema="IFC4")
    ce = f.create_entity
    gid = ifcopenshell.guid.new

    def pt(c):
        return ce("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def d(v):
        return ce("IfcDirection", DirectionRatios=[float(x) for x in v])

    units = [ce("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI", Name="METRE"),
             ce("IfcSIUnit", UnitType="FORCEUNIT", Prefix="KILO", Name="NEWTON"),
             ce("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN")]
    ctx = ce("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3, Precision=1e-5,
             WorldCoordinateSystem=ce("IfcAxis2Placement3D", Location=pt((0, 0, 0))))
    body = ce("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model", ParentContext=ctx,
              TargetView="MODEL_VIEW")
    ce("IfcProject", GlobalId=gid(), Name="bodies benchmark", RepresentationContexts=[ctx],
       UnitsInContext=ce("IfcUnitAssignment", Units=units))
    mat = ce("IfcMaterial", Name="S355")
    elements = []

    def element(cls, origin, direction, up, size, L):
        if len(elements) >= n_target:
            return
        verts, tris = _i_body(*SIZES[size], L)
        fs = ce("IfcTriangulatedFaceSet", Coordinates=ce("IfcCartesianPointList3D", CoordList=verts), Closed=True,
                CoordIndex=tris)
        rep = ce("IfcShapeRepresentation", ContextOfItems=body, RepresentationIdentifier="Body",
                 RepresentationType="Tessellation", Items=[fs])
        x = np.asarray(direction, dtype=float)
        x /= np.linalg.norm(x)
        z = np.asarray(up, dtype=float)
        z = z - (z @ x) * x
        z /= np.linalg.norm(z)
        # the element's local x along the member, local z = the section's depth direction
        placement = ce("IfcLocalPlacement", RelativePlacement=ce("IfcAxis2Placement3D", Location=pt(origin),
                                                                  Axis=d(z), RefDirection=d(x)))
        e = ce(cls, GlobalId=gid(), Name=f"{cls[3]}{len(elements) + 1}", ObjectPlacement=placement,
               Representation=ce("IfcProductDefinitionShape", Representations=[rep]))
        elements.append(e)

    # columns on a square grid, beams both ways at each storey, one diagonal brace per bay and storey on the edges
    per_storey_grid = lambda g: g * g + 2 * g * (g - 1) + 4 * (g - 1)  # noqa: E731
    g = 6
    storeys = max(1, math.ceil(n_target / per_storey_grid(g)))
    for s in range(storeys):
        z0 = s * height
        for i in range(g):
            for j in range(g):
                element("IfcColumn", (i * bay, j * bay, z0), (0, 0, 1), (1, 0, 0), 6 + (s % 2), height)
        for i in range(g):
            for j in range(g - 1):
                element("IfcBeam", (i * bay, j * bay, z0 + height), (0, 1, 0), (0, 0, 1), (i + j) % 6, bay)
                element("IfcBeam", (j * bay, i * bay, z0 + height), (1, 0, 0), (0, 0, 1), (i * j) % 6, bay)
        for j in range(g - 1):
            for x0, dy in ((0.0, 0.0), ((g - 1) * bay, 0.0)):
                element("IfcMember", (x0, j * bay, z0), (0, bay, height), (1, 0, 0), 0, math.hypot(bay, height))
            for y0 in (0.0, (g - 1) * bay):
                element("IfcMember", (j * bay, y0, z0), (bay, 0, height), (0, 1, 0), 1, math.hypot(bay, height))
        if len(elements) >= n_target:
            break
    ce("IfcRelAssociatesMaterial", GlobalId=gid(), RelatedObjects=elements, RelatingMaterial=mat)
    f.write(path)
    return len(elements)


def kernel_alone(f, elements, threads):
    import ifcopenshell.geom

    from analysis.ifc.bodies import KERNELS, kernel_settings

    it = ifcopenshell.geom.iterator(kernel_settings(), f, threads, include=elements, geometry_library=KERNELS[0])
    n = 0
    if it.initialize():
        while True:
            shape = it.get()
            g = shape.geometry
            np.frombuffer(g.verts_buffer, dtype=np.float64).reshape(-1, 3)
            np.frombuffer(g.faces_buffer, dtype=np.int32).reshape(-1, 3)
            np.asarray(shape.transformation.matrix).reshape(4, 4)
            n += 1
            if not it.next():
                break
    return n


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--elements", type=int, default=5000)
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--threads", type=int, default=None)
    ap.add_argument("--keep", default=None, help="write the generated model here")
    args = ap.parse_args()

    import ifcopenshell

    from analysis.ifc.bodies import body_meshes, kernel_threads, mesh_axes

    with tempfile.TemporaryDirectory() as tmp:
        path = args.keep or os.path.join(tmp, "bodies.ifc")
        t0 = time.perf_counter()
        n = generate(path, args.elements)
        print(f"generated {n} tessellated elements in {time.perf_counter() - t0:.1f} s")
        f = ifcopenshell.open(path)
        elements = [e for c in ("IfcColumn", "IfcBeam", "IfcMember") for e in f.by_type(c)]
        threads = args.threads or kernel_threads(len(elements))
        base, ours, analysis = [], [], []
        for _ in range(args.repeat):
            t = time.perf_counter()
            got = kernel_alone(f, elements, threads)
            base.append(time.perf_counter() - t)
            t = time.perf_counter()
            meshes, failed = body_meshes(f, elements, threads=threads)  # body_axes = body_meshes + mesh_axes
            t1 = time.perf_counter()
            axes, more = mesh_axes(meshes)
            t2 = time.perf_counter()
            ours.append(t2 - t)
            analysis.append(t2 - t1)
            assert got == len(elements) and len(axes) == len(elements) and not failed and not more, (got, len(axes))
        tb, to, ta = min(base), min(ours), min(analysis)
        print(f"{'elements':>9} {'threads':>7} {'kernel s':>9} {'body_axes s':>11} {'of which analysis s':>19} {'ratio':>6}")
        print(f"{len(elements):>9} {threads:>7} {tb:>9.2f} {to:>11.2f} {ta:>19.2f} {to / tb:>6.2f}   (target ≤ 2)")


if __name__ == "__main__":
    main()
