"""Member axis and cross-section from any body, through ifcopenshell's geometry kernel.

Route 2 of the reader (`analysis.ifc.derive`) reads an ``Axis`` curve or an
``IfcExtrudedAreaSolid`` body directly. Every other body (``IfcFacetedBrep``,
``IfcTriangulatedFaceSet``, ``IfcPolygonalFaceSet``, mapped items of those,
boolean results without an extruded first operand, ...) and every
extrusion whose length is suspect comes here: `body_axes` triangulates all
of them in ONE pass of ``ifcopenshell.geom.iterator`` (several threads
where the machine has them; openings are not subtracted: a member's
section is its gross section) and derives, in world coordinates (m):

Axis direction
    The principal direction of the body's volume: the eigenvector of the
    largest eigenvalue of its second-moment tensor about its centroid
    (volume integrals over the closed triangle mesh by the divergence
    theorem, exact for the polyhedron). For a prismatic body this is then
    made exact: the faces whose normals are within 60° of square to that
    direction (the side faces) define the extrusion direction as the null
    vector of Σ a n nᵀ over them; the body counts as prismatic when that
    tensor's smallest eigenvalue is below 1e-6 of its trace. The sign:
    upwards for members steeper than 45°, else towards +X (or +Y).
Cross-section
    A cut of the mesh by the plane normal to the axis at mid-length. Each
    cut triangle gives one segment, oriented by the face's outward normal
    (t = d × n), so the outer boundary runs counter-clockwise and holes
    clockwise with no chaining or nesting logic; A, the centroid and the
    second moments are summed by Green's theorem over the segments (exact
    for the polygon). The principal axes follow; local z is the principal
    axis along which the section is deep (larger ∫ z² dA, the strong axis:
    ``Iy`` is the major second moment, as for profiles, see
    `analysis.ifc.sections`), local y = z × x. A section with Iy ≈ Iz
    (round, square) has no preferred axis: ``z`` is None and the frame's
    default orientation applies.
Axis line and ends
    Through the section centroid, parallel to the direction, from the
    body's smallest to its largest extent along it.
Torsion and shear
    Per distinct section (same A, Iy, Iz and perimeter), the cut is chained
    into loops and `analysis.ifc.polygon_section` gives J (finite elements
    on the warping function) and the shear areas (Zhuravskii); the module
    docstring there names the sources.

The batched path needs a closed, consistently oriented surface (every
directed edge once, and once reversed: the kernel's output for solids and
closed face sets). Any other mesh (open ends, triangles wound either way)
is taken one at a time: the direction from the area-weighted second
moments of its triangles (refined by the side faces likewise), the section
from the cut's segments chained into loops without their orientation
(even-odd region), with a note. A mesh that the kernel cannot build, or
whose cut gives no closed loop, is reported as a failure with its reason,
never an exception.
"""
from __future__ import annotations

import logging
import math
import os
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np
import numpy.typing as npt

from .polygon_section import PolygonSection, polygon_section

__all__ = ["BodyAxis", "BodyMesh", "body_axes", "body_meshes", "mesh_axes", "kernel_settings", "kernel_threads", "KERNELS",
           "SIDE_FACE_COSINE", "PRISMATIC_TOLERANCE", "SUSPECT_LENGTH_RATIO"]

logger = logging.getLogger(__name__)

FloatArray = npt.NDArray[np.float64]

#: faces whose unit normal n has |n · d| below this count as side faces of a member along d
SIDE_FACE_COSINE = 0.5
#: smallest eigenvalue / trace of the side faces' normal tensor below which the body is prismatic
PRISMATIC_TOLERANCE = 1e-6
#: a suspect axis (shorter than its section depth) gives way to the body's principal direction only when the body
#: is at least this many times longer along that direction than both the suspect axis and the section cut across
#: it; otherwise the body is a block (a cleat, a packing piece, a short stud) that is no longer in any direction,
#: and the axis is kept
SUSPECT_LENGTH_RATIO = 3.0

#: geometry kernels tried in this order: CGAL for what it builds (face sets, Breps: about 20× faster than
#: OpenCASCADE on tessellated bodies, measured), OpenCASCADE for the rest (booleans, swept curves)
KERNELS = ("hybrid-cgal-simple-opencascade", "opencascade")


@dataclass(frozen=True, slots=True)
class BodyMesh:
    """A body's closed triangle mesh in world coordinates (m): vertices (n,3), faces (k,3)."""

    element_id: int
    vertices: FloatArray
    faces: npt.NDArray[np.int64]


@dataclass(frozen=True, slots=True)
class BodyAxis:
    """Axis and section of a member derived from its body (world coordinates, SI).

    ``start``/``end`` (3,) m, the centroid line's ends; ``z`` (3,) unit, the
    strong principal axis of the section (local z), None when the section
    has no preferred axis; ``y`` = z × x; ``A`` m², ``Iy`` (major), ``Iz``
    m⁴ about the principal axes, ``J`` m⁴, ``Avy``, ``Avz`` m²; ``depth``
    and ``width`` the section's extents along z and y (m); ``volume`` m³;
    ``prismatic`` whether the side faces are parallel to the axis;
    ``notes`` plain-language remarks (non-prismatic body, approximated J).
    """

    element_id: int
    start: FloatArray
    end: FloatArray
    z: FloatArray | None
    y: FloatArray | None
    A: float
    Iy: float
    Iz: float
    J: float
    Avy: float
    Avz: float
    depth: float
    width: float
    volume: float
    prismatic: bool
    notes: tuple[str, ...] = ()

    @property
    def length(self) -> float:
        return float(np.linalg.norm(self.end - self.start))

    @property
    def direction(self) -> FloatArray:
        d = self.end - self.start
        return d / np.linalg.norm(d)


def kernel_threads(n: int) -> int:
    """Kernel threads for ``n`` elements: the cores this process may use, fewer for small sets."""
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cores = os.cpu_count() or 1
    return max(1, min(cores, 1 + n // 64))


def kernel_settings():
    """The ``ifcopenshell.geom`` settings `body_meshes` uses (element coordinates, welded vertices, no openings)."""
    import ifcopenshell.geom

    s = ifcopenshell.geom.settings()
    s.set("use-world-coords", False)  # shared geometry stays shared; placed here with numpy
    s.set("weld-vertices", True)
    s.set("no-normals", True)
    s.set("disable-opening-subtractions", True)
    return s


def body_meshes(ifc_file, entities: Sequence[Any], *, threads: int | None = None,
                ) -> tuple[list[BodyMesh], dict[int, str]]:
    """Triangulate the bodies of ``entities`` in one pass of ``ifcopenshell.geom.iterator``.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
    entities : sequence of IfcProduct
    threads : int, optional
        Kernel threads (default: the cores available, fewer for small sets).

    Returns
    -------
    (list[BodyMesh], dict[int, str])
        World-coordinate meshes in m, and, per entity id that gave none,
        the reason.
    """
    import ifcopenshell.geom

    entities = list(entities)
    if not entities:
        return [], {}
    n_threads = threads or kernel_threads(len(entities))
    raw: list[tuple[int, FloatArray, np.ndarray, FloatArray]] = []
    error: Exception | None = None
    kernel: Any
    for kernel in KERNELS:
        try:
            it = ifcopenshell.geom.iterator(kernel_settings(), ifc_file, n_threads, include=entities, geometry_library=kernel)
        except Exception as exc:  # a kernel this build lacks: the next one
            error = exc
            continue
        raw = []
        try:
            if it.initialize():
                while True:
                    shape = it.get()
                    g = shape.geometry
                    raw.append((int(shape.id), np.frombuffer(g.verts_buffer, dtype=np.float64).reshape(-1, 3),
                                np.frombuffer(g.faces_buffer, dtype=np.int32).reshape(-1, 3),
                                np.asarray(shape.transformation.matrix, dtype=np.float64).reshape(4, 4).T))
                    if not it.next():
                        break
        except RuntimeError as exc:  # the kernel gave up part-way: the rest are failures with their reason
            logger.warning("geometry kernel stopped after %d of %d bodies: %s", len(raw), len(entities), exc)
        error = None
        break
    if error is not None:
        raise RuntimeError(f"ifcopenshell's geometry kernel is not available: {error}")
    meshes = []
    done = set()
    for eid, v, f, M in raw:
        done.add(eid)
        if len(f) == 0:
            continue
        meshes.append(BodyMesh(eid, v @ M[:3, :3].T + M[:3, 3], f.astype(np.int64)))
    have = {m.element_id for m in meshes}
    failures = {}
    for e in entities:
        eid = e.id()
        if eid not in have:
            failures[eid] = ("its body gives no surface" if eid in done
                             else "the geometry kernel could not build its body")
    return meshes, failures


def body_axes(ifc_file, entities: Sequence[Any], *, threads: int | None = None,
              ) -> tuple[dict[int, BodyAxis], dict[int, str]]:
    """Axis and section of each entity from its body (module docstring).

    Parameters
    ----------
    ifc_file : ifcopenshell.file
    entities : sequence of IfcProduct
        The elements to derive (one kernel pass for all of them).
    threads : int, optional
        Kernel threads (default: the cores available).

    Returns
    -------
    (dict[int, BodyAxis], dict[int, str])
        Results by entity id (world coordinates, SI), and the reasons for
        the entities that gave none.
    """
    meshes, failures = body_meshes(ifc_file, entities, threads=threads)
    axes, more = mesh_axes(meshes)
    failures.update(more)
    return axes, failures


# --------------------------------------------------------------------------- batched mesh analysis
@dataclass
class _Batch:
    ids: list[int]
    V: FloatArray  # (nv,3) vertices relative to their element's origin
    F: np.ndarray  # (nt,3) global vertex indices
    te: np.ndarray  # (nt,) element of each triangle
    ve: np.ndarray  # (nv,) element of each vertex
    vstart: np.ndarray  # (m,) first vertex of each element
    origin: FloatArray  # (m,3)
    failures: dict[int, str] = field(default_factory=dict)


def _sum(idx: np.ndarray, values: FloatArray, m: int) -> FloatArray:
    """Per-element sums of (n,) or (n,k) values."""
    if values.ndim == 1:
        return np.asarray(np.bincount(idx, weights=values, minlength=m), dtype=np.float64)
    return np.stack([np.bincount(idx, weights=values[:, j], minlength=m) for j in range(values.shape[1])],
                    axis=1).astype(np.float64)


def _batch(meshes: Sequence[BodyMesh]) -> _Batch:
    m = len(meshes)
    nv = np.array([len(x.vertices) for x in meshes], dtype=np.int64)
    nt = np.array([len(x.faces) for x in meshes], dtype=np.int64)
    vstart = np.concatenate([[0], np.cumsum(nv)[:-1]]).astype(np.int64)
    V = np.vstack([x.vertices for x in meshes])
    ve = np.repeat(np.arange(m), nv)
    origin = _sum(ve, V, m) / nv[:, None]
    V = V - origin[ve]
    te = np.repeat(np.arange(m), nt)
    F = np.vstack([x.faces for x in meshes]) + np.repeat(vstart, nt)[:, None]
    return _Batch([x.element_id for x in meshes], V, F, te, ve, vstart, origin)


def _orient(vectors: FloatArray) -> FloatArray:
    """Deterministic signs for (m,3) axis directions: up when steeper than 45°, else +X, else +Y."""
    d = vectors.copy()
    steep = np.abs(d[:, 2]) > math.sqrt(0.5)
    key = np.where(steep, d[:, 2], np.where(np.abs(d[:, 0]) > 1e-9, d[:, 0], d[:, 1]))
    d[key < 0] *= -1.0
    return d


def mesh_axes(meshes: Sequence[BodyMesh]) -> tuple[dict[int, BodyAxis], dict[int, str]]:
    """`body_axes` on meshes already in world coordinates (m), all in one batch.

    Returns
    -------
    (dict[int, BodyAxis], dict[int, str])
        Results and failure reasons by element id.
    """
    meshes = [x for x in meshes if len(x.faces) and len(x.vertices)]
    if not meshes:
        return {}, {}
    b = _batch(meshes)
    m = len(b.ids)
    failures: dict[int, str] = {}
    bad = np.zeros(m, dtype=bool)

    P0, P1, P2 = b.V[b.F[:, 0]], b.V[b.F[:, 1]], b.V[b.F[:, 2]]
    cross = np.cross(P1 - P0, P2 - P0)  # (nt,3) twice the area vector
    dbl_area = np.linalg.norm(cross, axis=1)
    # -- closed and outward: Σ area vectors = 0, volume > 0 ---------------------------------
    area_sum = _sum(b.te, cross, m)
    area_tot = _sum(b.te, dbl_area, m)
    vol6 = np.einsum("ij,ij->i", P0, cross)  # 6 × signed tetra volumes (apex at the origin)
    volume = _sum(b.te, vol6, m) / 6.0
    closed = np.linalg.norm(area_sum, axis=1) <= 1e-6 * np.maximum(area_tot, 1e-300)
    # every directed edge once and its reverse once: a closed, consistently oriented (welded) surface
    nv_all = np.int64(len(b.V))
    ea = np.concatenate([b.F[:, 0], b.F[:, 1], b.F[:, 2]])
    eb = np.concatenate([b.F[:, 1], b.F[:, 2], b.F[:, 0]])
    fwd = ea * nv_all + eb
    order_e = np.sort(fwd)
    rev = eb * nv_all + ea
    at = np.minimum(np.searchsorted(order_e, rev), len(order_e) - 1)
    unpaired = order_e[at] != rev  # the reverse edge is missing
    at_f = np.searchsorted(order_e, fwd)
    twice = order_e[np.minimum(at_f + 1, len(order_e) - 1)] == fwd  # the same directed edge twice
    twice[at_f + 1 >= len(order_e)] = False
    unpaired |= twice
    if unpaired.any():
        closed[np.unique(np.tile(b.te, 3)[unpaired])] = False
    loose: dict[int, BodyAxis] = {}
    for k in np.flatnonzero(~closed).tolist():  # open or inconsistently oriented: one at a time, from its surface
        try:
            loose[b.ids[k]] = _surface_axis(meshes[k])
        except ValueError as exc:
            failures[b.ids[k]] = f"its body is not a closed surface and {exc}"
    bad |= ~closed
    inverted = closed & (volume < 0)
    if inverted.any():  # consistently inside-out: turn it round
        flip = inverted[b.te]
        cross[flip] *= -1.0
        vol6[flip] *= -1.0
        b.F[flip] = b.F[flip][:, ::-1]
        P0, P1, P2 = b.V[b.F[:, 0]], b.V[b.F[:, 1]], b.V[b.F[:, 2]]
        volume = np.abs(volume)
    tiny = ~bad & ~(volume > 0)
    for k in np.flatnonzero(tiny).tolist():
        failures[b.ids[k]] = "its body encloses no volume"
    bad |= tiny

    # -- volume second moments (tetrahedra with apex at the element origin) -------------------
    S3 = P0 + P1 + P2
    first = _sum(b.te, vol6[:, None] * S3, m) / 24.0  # ∫ x dV
    outer = (np.einsum("ti,tj->tij", P0, P0) + np.einsum("ti,tj->tij", P1, P1) + np.einsum("ti,tj->tij", P2, P2)
             + np.einsum("ti,tj->tij", S3, S3))
    Q = _sum(b.te, (vol6[:, None, None] / 120.0 * outer).reshape(-1, 9), m).reshape(m, 3, 3)  # ∫ x xᵀ dV
    vol_safe = np.where(volume > 0, volume, 1.0)
    c = first / vol_safe[:, None]
    C = Q / vol_safe[:, None, None] - np.einsum("ki,kj->kij", c, c)
    C[bad] = np.eye(3)
    _, vecs = np.linalg.eigh(C)
    d = vecs[:, :, 2].copy()

    # -- side faces refine the direction of prismatic bodies ----------------------------------
    nrm = cross / np.maximum(dbl_area, 1e-300)[:, None]
    side = np.abs(np.einsum("ti,ti->t", nrm, d[b.te])) < SIDE_FACE_COSINE
    w = np.where(side, dbl_area, 0.0)
    N = _sum(b.te, (w[:, None, None] * np.einsum("ti,tj->tij", nrm, nrm)).reshape(-1, 9), m).reshape(m, 3, 3)
    N[bad] = np.eye(3)
    nvals, nvecs = np.linalg.eigh(N)
    trace = np.maximum(nvals.sum(axis=1), 1e-300)
    prismatic = (nvals[:, 0] <= PRISMATIC_TOLERANCE * trace) & ~bad
    refined = nvecs[:, :, 0].copy()
    refined[np.einsum("ki,ki->k", refined, d) < 0] *= -1.0
    d = np.where(prismatic[:, None], refined, d)
    d = _orient(d / np.linalg.norm(d, axis=1)[:, None])
    # in-plane basis u, v with u × v = d (from the second principal direction)
    u = vecs[:, :, 1] - np.einsum("ki,ki->k", vecs[:, :, 1], d)[:, None] * d
    un = np.linalg.norm(u, axis=1)
    fallback = un < 1e-6
    if fallback.any():
        alt = np.where(np.abs(d[fallback, 2:3]) < 0.9, np.array([[0.0, 0.0, 1.0]]), np.array([[1.0, 0.0, 0.0]]))
        u[fallback] = np.cross(d[fallback], alt)
        un[fallback] = np.linalg.norm(u[fallback], axis=1)
    u /= un[:, None]
    v = np.cross(d, u)

    # -- extent along the axis, cut plane at mid-length -----------------------------------------
    s = np.einsum("ij,ij->i", b.V, d[b.ve])
    smin = np.minimum.reduceat(s, b.vstart)
    smax = np.maximum.reduceat(s, b.vstart)
    length = smax - smin
    mid = 0.5 * (smin + smax)
    h = s - mid[b.ve]
    for shift in (1.1e-4, -2.3e-4, 3.7e-3):  # step off vertices lying on the plane
        on = np.abs(h) <= 1e-9 * length[b.ve]
        if not on.any():
            break
        hit = np.zeros(m, dtype=bool)
        hit[b.ve[on]] = True
        mid[hit] += shift * length[hit]
        h = s - mid[b.ve]
    pos = h > 0
    ha, hb, hc = h[b.F[:, 0]], h[b.F[:, 1]], h[b.F[:, 2]]
    pa, pb, pc = pos[b.F[:, 0]], pos[b.F[:, 1]], pos[b.F[:, 2]]
    mask = np.stack([pa != pb, pb != pc, pc != pa], axis=1)
    cut = mask.any(axis=1) & ~bad[b.te]
    tri = np.flatnonzero(cut)
    cols = np.nonzero(mask[tri])[1].reshape(-1, 2)  # the two crossing edges of each cut triangle
    Pt = np.stack([P0[tri], P1[tri], P2[tri]], axis=1)  # (k,3,3)
    Ht = np.stack([ha[tri], hb[tri], hc[tri]], axis=1)
    rows = np.arange(len(tri))

    def edge_point(col: np.ndarray) -> FloatArray:
        i, j = col, (col + 1) % 3
        hi, hj = Ht[rows, i], Ht[rows, j]
        t = hi / (hi - hj)
        return Pt[rows, i] + t[:, None] * (Pt[rows, j] - Pt[rows, i])

    qa, qb = edge_point(cols[:, 0]), edge_point(cols[:, 1])
    se = b.te[tri]
    tdir = np.cross(d[se], cross[tri])
    swap = np.einsum("ij,ij->i", qb - qa, tdir) < 0
    qa[swap], qb[swap] = qb[swap], qa[swap].copy()
    plane_origin = mid[:, None] * d  # relative to the element origin
    xa = np.einsum("ij,ij->i", qa - plane_origin[se], u[se])
    ya = np.einsum("ij,ij->i", qa - plane_origin[se], v[se])
    xb = np.einsum("ij,ij->i", qb - plane_origin[se], u[se])
    yb = np.einsum("ij,ij->i", qb - plane_origin[se], v[se])

    # -- Green's theorem per segment ------------------------------------------------------------
    cr = xa * yb - xb * ya
    A = _sum(se, cr, m) / 2.0
    Sx = _sum(se, (xa + xb) * cr, m) / 6.0
    Sy = _sum(se, (ya + yb) * cr, m) / 6.0
    Qxx = _sum(se, (xa * xa + xa * xb + xb * xb) * cr, m) / 12.0
    Qyy = _sum(se, (ya * ya + ya * yb + yb * yb) * cr, m) / 12.0
    Qxy = _sum(se, (xa * yb + 2 * xa * ya + 2 * xb * yb + xb * ya) * cr, m) / 24.0
    seglen = np.hypot(xb - xa, yb - ya)
    perim = _sum(se, seglen, m)
    gap = np.hypot(_sum(se, xb - xa, m), _sum(se, yb - ya, m))
    open_cut = ~bad & ((gap > 1e-6 * np.maximum(perim, 1e-300)) | ~(A > 0))
    for k in np.flatnonzero(open_cut).tolist():
        failures[b.ids[k]] = "the cut through its body at mid-length is not a closed section"
    bad |= open_cut
    A_safe = np.where(bad, 1.0, A)
    cx, cy = Sx / A_safe, Sy / A_safe
    Cxx = Qxx - A * cx * cx
    Cyy = Qyy - A * cy * cy
    Cxy = Qxy - A * cx * cy
    # principal axes of [[Cxx, Cxy], [Cxy, Cyy]]: the larger value's axis is local z
    half_diff = 0.5 * (Cxx - Cyy)
    rad = np.hypot(half_diff, Cxy)
    I1 = 0.5 * (Cxx + Cyy) + rad
    I2 = 0.5 * (Cxx + Cyy) - rad
    theta = 0.5 * np.arctan2(2.0 * Cxy, Cxx - Cyy)  # angle of the I1 axis from u
    z2 = np.stack([np.cos(theta), np.sin(theta)], axis=1)
    zw = z2[:, 0:1] * u + z2[:, 1:2] * v
    steep = np.abs(zw[:, 2]) > 1e-6
    key = np.where(steep, zw[:, 2], np.where(np.abs(zw[:, 0]) > 1e-6, zw[:, 0], zw[:, 1]))
    zw[key < 0] *= -1.0
    z2[key < 0] *= -1.0
    yw = np.cross(zw, d)
    isotropic = rad <= 1e-6 * (I1 + I2)

    # -- section extents along the principal axes ----------------------------------------------
    ok_seg = ~bad[se]
    rel_x, rel_y = xa - cx[se], ya - cy[se]
    zc = rel_x * z2[se, 0] + rel_y * z2[se, 1]
    yc = rel_x * z2[se, 1] - rel_y * z2[se, 0]
    depth = np.zeros(m)
    width = np.zeros(m)
    for arr, extent in ((zc, depth), (yc, width)):
        hi = np.full(m, -np.inf)
        lo = np.full(m, np.inf)
        np.maximum.at(hi, se[ok_seg], arr[ok_seg])
        np.minimum.at(lo, se[ok_seg], arr[ok_seg])
        extent[:] = np.where(np.isfinite(hi), hi - lo, 0.0)

    centre = b.origin + plane_origin + cx[:, None] * u + cy[:, None] * v
    start = centre + (smin - mid)[:, None] * d
    end = centre + (smax - mid)[:, None] * d

    # -- torsion and shear per distinct section -------------------------------------------------
    good = np.flatnonzero(~bad)
    sig = [tuple(float(f"{x:.5g}") for x in row) for row in np.stack([A, I1, I2, perim], axis=1)[good]]
    groups: dict[tuple, list[int]] = {}
    for k, key_ in zip(good.tolist(), sig):
        groups.setdefault(key_, []).append(k)
    order = np.argsort(se, kind="stable")
    seg_start = np.searchsorted(se[order], np.arange(m))
    seg_end = np.searchsorted(se[order], np.arange(m), side="right")
    section_of: dict[int, tuple[PolygonSection | None, str | None]] = {}
    for key_, ks in groups.items():
        k = ks[0]
        sl = order[seg_start[k]:seg_end[k]]
        pa2 = np.stack([xa[sl] - cx[k], ya[sl] - cy[k]], axis=1)
        pb2 = np.stack([xb[sl] - cx[k], yb[sl] - cy[k]], axis=1)
        result: tuple[PolygonSection | None, str | None]
        try:
            loops = _chain(pa2, pb2)
            result = (polygon_section(loops), None)
        except (ValueError, ArithmeticError) as exc:
            result = (None, f"the torsion constant is Saint-Venant's approximation A⁴/(40 Ip) (the cut could not be "
                            f"meshed: {exc})")
        for kk in ks:
            section_of[kk] = result

    out: dict[int, BodyAxis] = {}
    vol_ratio = np.where(~bad & (length > 0), volume / np.maximum(A * length, 1e-300), 1.0)
    for k in good.tolist():
        sec, why = section_of[k]
        notes: list[str] = []
        if sec is not None:
            J, Avy, Avz = sec.J, sec.Avy, sec.Avz
        else:
            J = A[k] ** 4 / (40.0 * (I1[k] + I2[k]))
            Avy = Avz = 5.0 / 6.0 * A[k]
            notes.append(f"{why}; shear areas 5/6 A")
        if not prismatic[k]:
            notes.append("the body is not prismatic (its side faces are not all parallel to the axis): the axis is "
                         "its principal direction and the section is the cut at mid-length")
        if abs(vol_ratio[k] - 1.0) > 0.02:
            notes.append(f"the body's volume is {vol_ratio[k]:.3g} × section area × length (cut ends, notches or "
                         "a varying section)")
        iso = bool(isotropic[k])
        out[b.ids[k]] = BodyAxis(
            element_id=b.ids[k], start=start[k].copy(), end=end[k].copy(),
            z=None if iso else zw[k].copy(), y=None if iso else yw[k].copy(),
            A=float(A[k]), Iy=float(I1[k]), Iz=float(I2[k]), J=float(J), Avy=float(Avy), Avz=float(Avz),
            depth=float(depth[k]), width=float(width[k]), volume=float(volume[k]), prismatic=bool(prismatic[k]),
            notes=tuple(notes))
    out.update(loose)
    return out, failures


def _surface_axis(mesh: BodyMesh) -> BodyAxis:
    """Axis and section of a mesh that is not a closed, consistently oriented surface.

    The direction from the area-weighted second moments of its triangles
    (refined by the side faces as for closed bodies), the section from the
    mid-length cut's segments chained into loops without their orientation
    (the region is where an odd number of loops encloses a point).

    Raises
    ------
    ValueError
        The cut at mid-length gives no closed loop.
    """
    V = mesh.vertices - mesh.vertices.mean(axis=0)
    F = mesh.faces
    P0, P1, P2 = V[F[:, 0]], V[F[:, 1]], V[F[:, 2]]
    cross = np.cross(P1 - P0, P2 - P0)
    w = np.linalg.norm(cross, axis=1)
    if not w.sum() > 0:
        raise ValueError("it has no area")
    cen = (P0 + P1 + P2) / 3.0
    c = (w[:, None] * cen).sum(axis=0) / w.sum()
    C = np.einsum("t,ti,tj->ij", w, cen - c, cen - c) / w.sum()
    d = np.linalg.eigh(C)[1][:, 2]
    nrm = cross / np.maximum(w, 1e-300)[:, None]
    side = np.abs(nrm @ d) < SIDE_FACE_COSINE
    N = np.einsum("t,ti,tj->ij", np.where(side, w, 0.0), nrm, nrm)
    nvals, nvecs = np.linalg.eigh(N)
    prismatic = bool(nvals[0] <= PRISMATIC_TOLERANCE * max(nvals.sum(), 1e-300))
    if prismatic:
        d = nvecs[:, 0] * (1.0 if nvecs[:, 0] @ d >= 0 else -1.0)
    d = _orient(d[None, :] / np.linalg.norm(d))[0]
    s = V @ d
    smin, smax = float(s.min()), float(s.max())
    length = smax - smin
    mid = 0.5 * (smin + smax)
    h = s - mid
    for shift in (1.1e-4, -2.3e-4, 3.7e-3):
        if not (np.abs(h) <= 1e-9 * length).any():
            break
        mid += shift * length
        h = s - mid
    u = np.linalg.eigh(C)[1][:, 1]
    u = u - (u @ d) * d
    if np.linalg.norm(u) < 1e-6:
        u = np.cross(d, [0.0, 0.0, 1.0] if abs(d[2]) < 0.9 else [1.0, 0.0, 0.0])
    u /= np.linalg.norm(u)
    v = np.cross(d, u)
    pos = h > 0
    segs = []
    for tri in F[(pos[F].any(axis=1)) & (~pos[F]).any(axis=1)]:
        pts = []
        for i, j in ((0, 1), (1, 2), (2, 0)):
            a, b = tri[i], tri[j]
            if pos[a] != pos[b]:
                t = h[a] / (h[a] - h[b])
                pts.append(V[a] + t * (V[b] - V[a]))
        segs.append(pts)
    if not segs:
        raise ValueError("the cut at mid-length meets none of its faces")
    q = np.array(segs)  # (k, 2, 3)
    origin = mid * d
    q2 = np.stack([(q - origin) @ u, (q - origin) @ v], axis=2)  # (k, 2, 2)
    loops = _chain_unoriented(q2[:, 0], q2[:, 1])
    sec = polygon_section(loops)
    z3 = sec.z_axis[0] * u + sec.z_axis[1] * v
    if abs(z3[2]) > 1e-6 and z3[2] < 0 or abs(z3[2]) <= 1e-6 and (z3[0] if abs(z3[0]) > 1e-6 else z3[1]) < 0:
        z3 = -z3
    y3 = np.cross(z3, d)
    centre = mesh.vertices.mean(axis=0) + origin + sec.centroid[0] * u + sec.centroid[1] * v
    notes = ["its body is not a closed, consistently oriented surface: the direction comes from its surface and the "
             "section from the loops of the mid-length cut"]
    if not prismatic:
        notes.append("the body is not prismatic (its side faces are not all parallel to the axis): the axis is its "
                     "principal direction and the section is the cut at mid-length")
    return BodyAxis(
        element_id=mesh.element_id, start=centre + (smin - mid) * d, end=centre + (smax - mid) * d,
        z=None if sec.isotropic else z3, y=None if sec.isotropic else y3,
        A=sec.A, Iy=sec.Iy, Iz=sec.Iz, J=sec.J, Avy=sec.Avy, Avz=sec.Avz, depth=sec.depth, width=sec.width,
        volume=sec.A * length, prismatic=prismatic, notes=tuple(notes))


def _chain_unoriented(pa: FloatArray, pb: FloatArray) -> list[FloatArray]:
    """Closed loops from segments pa[i] – pb[i] of either direction (each end point shared by exactly two)."""
    size = float(np.ptp(np.vstack([pa, pb]), axis=0).max())
    if not size > 0:
        raise ValueError("the cut at mid-length has no extent")
    keys = np.round(np.vstack([pa, pb]) / (1e-7 * size)).astype(np.int64)
    uniq, ids = np.unique(keys, axis=0, return_index=False, return_inverse=True)
    ids = ids.ravel()
    n = len(pa)
    a_id, b_id = ids[:n], ids[n:]
    keep = a_id != b_id
    a_id, b_id = a_id[keep], b_id[keep]
    pts = np.vstack([pa, pb])
    where = np.zeros((len(uniq), 2), dtype=np.int64)
    first = np.full(len(uniq), -1, dtype=np.int64)
    for i, pid in enumerate(np.concatenate([a_id, b_id]).tolist()):
        j = i % len(a_id)
        if first[pid] < 0:
            first[pid] = j
            where[pid, 0] = j
        else:
            where[pid, 1] = j
    counts = np.bincount(np.concatenate([a_id, b_id]), minlength=len(uniq))
    if len(a_id) == 0 or (counts != 2).any():
        raise ValueError("the cut at mid-length is not a set of closed loops")
    point_of = {int(p): pts[np.flatnonzero(ids == p)[0]] for p in np.unique(np.concatenate([a_id, b_id])).tolist()}
    used = np.zeros(len(a_id), dtype=bool)
    loops = []
    for s0 in range(len(a_id)):
        if used[s0]:
            continue
        loop = []
        seg, at = s0, int(a_id[s0])
        while not used[seg]:
            used[seg] = True
            loop.append(point_of[at])
            at = int(b_id[seg]) if int(a_id[seg]) == at else int(a_id[seg])
            nxt = where[at, 0] if where[at, 0] != seg else where[at, 1]
            seg = int(nxt)
        if len(loop) >= 3:
            loops.append(np.array(loop))
    if not loops:
        raise ValueError("the cut at mid-length has no closed loop")
    return loops


def _chain(pa: FloatArray, pb: FloatArray) -> list[FloatArray]:
    """Closed loops from oriented segments pa[i] → pb[i] (end points matched to 1e-7 of the size)."""
    size = float(np.ptp(np.vstack([pa, pb]), axis=0).max())
    if not size > 0:
        raise ValueError("the cut has no extent")
    q = 1e-7 * size
    keys = np.round(np.vstack([pa, pb]) / q).astype(np.int64)
    _, ids = np.unique(keys, axis=0, return_inverse=True)
    ids = ids.ravel()
    n = len(pa)
    a_id, b_id = ids[:n], ids[n:]
    keep = a_id != b_id  # degenerate segments
    seg = np.flatnonzero(keep)
    nxt: dict[int, int] = {}
    for i in seg.tolist():
        if int(a_id[i]) in nxt:
            raise ValueError("the cut's boundary branches (the body touches itself)")
        nxt[int(a_id[i])] = i
    used = np.zeros(n, dtype=bool)
    loops = []
    for i0 in seg.tolist():
        if used[i0]:
            continue
        pts = []
        i = i0
        while not used[i]:
            used[i] = True
            pts.append(pa[i])
            j = nxt.get(int(b_id[i]))
            if j is None:
                raise ValueError("the cut's boundary is not closed")
            i = j
        if i != i0:
            raise ValueError("the cut's boundary is not a set of simple loops")
        if len(pts) >= 3:
            loops.append(np.array(pts))
    if not loops:
        raise ValueError("the cut has no closed loop")
    return loops

