"""Member ends that bear on other elements (walls, slabs, footings, piles) below them.

`bearing_hits` answers, for points at member ends, whether an upward-facing
face of one of the given elements' bodies lies directly below the underside
of the member's section there, within a tolerance, or cuts the lower half of
the section (the member seated in a notch, or on a sloping wall top, the face
between the underside and the centroid), or whether the end is
built into the body (a beam end in a wall pocket: the point lies inside it).
The bodies come from ``ifcopenshell.geom`` (triangulated, world coordinates,
metres); both tests cast a vertical ray from each point against those
triangles (barycentric coordinates in plan; inside when the upward ray
crosses the closed surface an odd number of times; common practice, no
source).
"""
from __future__ import annotations

import logging
import math
import os
from typing import Any, Collection, Sequence

import numpy as np
import numpy.typing as npt

__all__ = ["bearing_hits", "body_triangles", "carried_by", "rests_on", "span_runs", "BEARING_CLASSES",
           "SPAN_BEARING_CLASSES"]

logger = logging.getLogger(__name__)

#: elements a member end can bear on when the file declares no supports.
BEARING_CLASSES = ("IfcWall", "IfcSlab", "IfcFooting", "IfcPile")

#: elements a member can bear on along its span (a purlin on a wall top, a rafter over a wall): slabs are
#: left out, since a slab on the members' level is carried by them far more often than it carries them.
SPAN_BEARING_CLASSES = ("IfcWall", "IfcFooting", "IfcPile")

_UP = 0.2  # a face counts as upward-facing when its normal's z component exceeds this


def body_triangles(ifc_file, entities: Sequence[Any]) -> dict[int, npt.NDArray[np.float64]]:
    """Entity id -> triangles ``(t, 3, 3)`` of its body, world coordinates in m.

    Elements whose geometry cannot be built are skipped (logged).
    """
    import ifcopenshell.geom

    out: dict[int, npt.NDArray[np.float64]] = {}
    if not entities:
        return out
    settings = ifcopenshell.geom.settings()
    settings.set("use-world-coords", True)
    threads = max(1, min(4, os.cpu_count() or 1))
    try:
        it = ifcopenshell.geom.iterator(settings, ifc_file, threads, include=list(entities))
        ok = bool(it.initialize())
    except Exception as exc:  # geometry kernel refused the whole set: nothing bears
        logger.warning("bearing elements: no geometry (%s)", exc)
        return out
    while ok:
        shape = it.get()
        geo = shape.geometry
        v = np.asarray(geo.verts, dtype=float).reshape(-1, 3)
        f = np.asarray(geo.faces, dtype=np.int64).reshape(-1, 3)
        if len(f):
            out[int(shape.id)] = v[f]
        ok = bool(it.next())
    return out


def bearing_hits(triangles: dict[int, npt.NDArray[np.float64]], points: npt.NDArray[np.float64],
                 below: npt.NDArray[np.float64], tol: float,
                 embedded: bool | Collection[int] = True) -> npt.NDArray[np.int64]:
    """For each point, the id of the element it bears on, or -1.

    Parameters
    ----------
    triangles : dict
        From `body_triangles`.
    points : (q, s, 3) float
        ``s`` sample points (m) per member end (e.g. the end and a point just
        inside it), all with the same underside depth.
    below : (q,) float
        Depth (m) of the section's underside below the points.
    tol : float
        The gap (m) allowed between the underside and the face, either way
        (the face may also lie anywhere between the underside and the point).
    embedded : bool or collection of ids
        Whether a point inside a body bears on it (True: every body; a
        collection: only those elements').
    """
    q = len(points)
    hit = np.full(q, -1, dtype=np.int64)
    if q == 0 or not triangles:
        return hit
    pts = points.reshape(-1, 3)
    owner = np.repeat(np.arange(q), points.shape[1])
    under = pts[:, 2] - np.repeat(below, points.shape[1])
    best = np.full(q, np.inf)
    for eid, tri_all in triangles.items():
        lo, hi = tri_all.reshape(-1, 3).min(axis=0), tri_all.reshape(-1, 3).max(axis=0)
        cand = np.flatnonzero((pts[:, 0] >= lo[0] - tol) & (pts[:, 0] <= hi[0] + tol) & (pts[:, 1] >= lo[1] - tol)
                              & (pts[:, 1] <= hi[1] + tol) & (pts[:, 2] >= lo[2] - tol) & (under <= hi[2] + tol))
        if len(cand) == 0:
            continue
        # a point inside the body (an end built into a wall): bears, with gap 0
        embeds = embedded if isinstance(embedded, bool) else eid in embedded
        within = _inside(tri_all, pts[cand, :3]) if embeds else np.zeros(len(cand), dtype=bool)
        for i in cand[within]:
            o = owner[i]
            if best[o] > 0.0:
                best[o] = 0.0
                hit[o] = eid
        nrm = np.cross(tri_all[:, 1] - tri_all[:, 0], tri_all[:, 2] - tri_all[:, 0])
        norm = np.linalg.norm(nrm, axis=1)
        tri = tri_all[(norm > 0) & (nrm[:, 2] > _UP * np.maximum(norm, 1e-300))]  # upward-facing faces
        if len(tri) == 0:
            continue
        tri = tri[_plan_area(tri) > 1e-18]
        if len(tri) == 0:
            continue
        a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
        # barycentric coordinates of the plan point in each triangle's plan projection
        v0, v1 = (b - a)[:, :2], (c - a)[:, :2]
        den = v0[:, 0] * v1[:, 1] - v1[:, 0] * v0[:, 1]
        okd = np.abs(den) > 1e-18
        for chunk in np.array_split(cand, max(1, len(cand) * len(tri) // 2_000_000 + 1)):
            w = pts[chunk, None, :2] - a[None, :, :2]
            with np.errstate(divide="ignore", invalid="ignore"):
                u = (w[..., 0] * v1[None, :, 1] - v1[None, :, 0] * w[..., 1]) / den[None, :]
                t = (v0[None, :, 0] * w[..., 1] - w[..., 0] * v0[None, :, 1]) / den[None, :]
            eps = 1e-9
            inside = okd[None, :] & (u >= -eps) & (t >= -eps) & (u + t <= 1 + eps)
            z = a[None, :, 2] + u * (b - a)[None, :, 2] + t * (c - a)[None, :, 2]
            gap = under[chunk, None] - z
            # the face within the tolerance of the underside, or cutting the section's lower half
            depth = (pts[chunk, 2] - under[chunk])[:, None]
            good = inside & (gap <= tol) & (gap >= -(depth + tol))
            gapabs = np.where(good, np.abs(gap), np.inf).min(axis=1)
            for i, g in zip(chunk, gapabs):
                o = owner[i]
                if g < best[o]:
                    best[o] = g
                    hit[o] = eid
    return hit


def carried_by(triangles: dict[int, npt.NDArray[np.float64]], points: npt.NDArray[np.float64],
               above: npt.NDArray[np.float64], tol: float) -> set[int]:
    """Ids of the elements that rest on the given points: a downward face of the body within ``tol``
    of the top of the section there (``above``, m over each point), found as `bearing_hits` upside down.

    ``points`` is ``(q, s, 3)`` as in `bearing_hits`: points along frame members.
    """
    flipped = {eid: (tri[:, [0, 2, 1]] * np.array([1.0, 1.0, -1.0])) for eid, tri in triangles.items()}
    mirrored = points * np.array([1.0, 1.0, -1.0])
    hit = bearing_hits(flipped, mirrored, above, tol, embedded=False)
    return {int(h) for h in hit if h >= 0}


def rests_on(triangles: npt.NDArray[np.float64], others: dict[int, npt.NDArray[np.float64]], tol: float) -> bool:
    """Whether a body (its triangles) rests on any of ``others``: a corner or centre of one of its downward
    faces within ``tol`` above an upward face of theirs, or a corner or centre of one of their upward faces
    within ``tol`` below a downward face of its own (either face may be the larger one)."""
    if not others or len(triangles) == 0:
        return False
    down = _facing(triangles, -1.0)
    if len(down) == 0:
        return False
    pts = _corners_and_centres(down)
    if (bearing_hits(others, pts[:, None, :], np.zeros(len(pts)), tol, embedded=False) >= 0).any():
        return True
    for tri in others.values():
        up = _facing(tri, 1.0)
        if len(up):
            below = _corners_and_centres(up)
            if carried_by({0: triangles}, below[:, None, :], np.zeros(len(below)), tol):
                return True
    return False


def _facing(tri: npt.NDArray[np.float64], sign: float) -> npt.NDArray[np.float64]:
    """The triangles facing up (``sign`` 1) or down (-1), as `bearing_hits` counts a face upward."""
    nrm = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    norm = np.linalg.norm(nrm, axis=1)
    return tri[(norm > 0) & (sign * nrm[:, 2] > _UP * np.maximum(norm, 1e-300))]


def _corners_and_centres(tri: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    return np.unique(np.vstack([tri.reshape(-1, 3), tri.mean(axis=1)]), axis=0)


def span_runs(triangles: dict[int, npt.NDArray[np.float64]], A: npt.NDArray[np.float64], B: npt.NDArray[np.float64],
              below: npt.NDArray[np.float64], tol: float, members: Sequence[int], step: float = 0.02,
              embedded: bool | Collection[int] = True) -> list[tuple[int, float, float, int]]:
    """Where members bear on the given bodies along their spans: runs ``(member, t0, t1, element id)``.

    Each member in ``members`` (indices into ``A``, ``B``: the centre-line ends, m) is sampled every
    ``step`` or less along its length; a sample bears when `bearing_hits` finds a face or body under
    it (``below[k]``: the depth of member k's underside under its centre line). A run is a stretch of
    consecutive bearing samples, ``t0`` and ``t1`` the fractions of the length where it starts and ends
    (the outer edges of its first and last samples); a run over several bodies in a row (a plate over a
    wall corner) is one, named after the body under its first sample. Only member-body pairs whose
    bounding boxes come within the tolerance and the member's depth are sampled. ``embedded`` is passed
    on to `bearing_hits`.
    """
    out: list[tuple[int, float, float, int]] = []
    if not triangles or len(members) == 0:
        return out
    ids = list(triangles)
    lo = np.array([triangles[i].reshape(-1, 3).min(axis=0) for i in ids])
    hi = np.array([triangles[i].reshape(-1, 3).max(axis=0) for i in ids])
    for k in members:
        a, b = A[k], B[k]
        r = tol + float(below[k])
        near = np.flatnonzero(np.all(np.minimum(a, b) - r <= hi, axis=1) & np.all(np.maximum(a, b) + r >= lo, axis=1))
        if len(near) == 0:
            continue
        length = float(np.linalg.norm(b - a))
        n = max(2, int(math.ceil(length / step)))
        t = (np.arange(n) + 0.5) / n
        pts = (a + t[:, None] * (b - a))[:, None, :]
        depth = np.full(n, float(below[k]))
        owner = np.full(n, -1, dtype=np.int64)
        for j in near.tolist():
            free = owner < 0
            if not free.any():
                break
            hit = bearing_hits({ids[j]: triangles[ids[j]]}, pts[free], depth[free], tol, embedded)
            owner[np.flatnonzero(free)[hit >= 0]] = ids[j]
        on = owner >= 0
        if not on.any():
            continue
        edges = np.flatnonzero(np.diff(np.concatenate([[0], on.astype(np.int8), [0]])))
        for i0, i1 in zip(edges[::2].tolist(), edges[1::2].tolist()):
            out.append((int(k), i0 / n, i1 / n, int(owner[i0])))
    return out


def _plan_area(tri: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """Twice the plan (XY) area of each triangle, unsigned."""
    v0, v1 = (tri[:, 1] - tri[:, 0])[:, :2], (tri[:, 2] - tri[:, 0])[:, :2]
    return np.abs(v0[:, 0] * v1[:, 1] - v1[:, 0] * v0[:, 1])


def _inside(tri: npt.NDArray[np.float64], pts: npt.NDArray[np.float64]) -> npt.NDArray[np.bool_]:
    """Whether each point lies inside the closed triangulated surface (odd crossings of an upward ray)."""
    if len(pts) == 0:
        return np.zeros(0, dtype=bool)
    okd = _plan_area(tri) > 1e-18
    tri = tri[okd]  # faces seen edge-on from above play no part
    a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
    v0, v1 = (b - a)[:, :2], (c - a)[:, :2]
    den = v0[:, 0] * v1[:, 1] - v1[:, 0] * v0[:, 1]
    okd = okd[okd]
    out = np.zeros(len(pts), dtype=bool)
    # a slightly skewed plan point avoids rays through shared edges and vertices
    jitter = np.array([1.3e-7, 0.7e-7])
    for chunk in np.array_split(np.arange(len(pts)), max(1, len(pts) * len(tri) // 2_000_000 + 1)):
        w = (pts[chunk, None, :2] + jitter) - a[None, :, :2]
        with np.errstate(divide="ignore", invalid="ignore"):
            u = (w[..., 0] * v1[None, :, 1] - v1[None, :, 0] * w[..., 1]) / den[None, :]
            t = (v0[None, :, 0] * w[..., 1] - w[..., 0] * v0[None, :, 1]) / den[None, :]
        inside = okd[None, :] & (u >= 0) & (t >= 0) & (u + t <= 1)
        z = a[None, :, 2] + u * (b - a)[None, :, 2] + t * (c - a)[None, :, 2]
        crossings = (inside & (z > pts[chunk, None, 2])).sum(axis=1)
        out[chunk] = crossings % 2 == 1
    return out
