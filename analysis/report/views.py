"""Views of a frame for drawings: its own plane, the planes of its members (grid lines), an axonometric view.

A :class:`View` is an orthographic projection: two screen directions ``u``
(right) and ``v`` (up) in world coordinates and the direction ``n = u × v``
towards the viewer. An elevation shows true lengths of the members lying in
its plane; the in-plane internal forces of those members are

* N along the member,
* V in the plane: ``Vy (ey·p) + Vz (ez·p)`` with ``p = n × ex`` (the left of
  the member's direction i → j as the viewer sees it),
* M about the view's normal: ``My (ey·n) + Mz (ez·n)``, drawn on the
  stretched (tension) side, which is ``(ex × n) · sign(M)``: My > 0
  stretches +z fibres and Mz > 0 stretches −y fibres, i.e. the stretched side
  of a moment vector M is ``ex × M`` (positive-face rule of the engine).

Drawing moments on the tension side and N, V with their signs is common
practice, no source. Used by the report and the Blender add-on alike.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

__all__ = ["View", "axonometric", "drawing_view", "frame_plane_view", "member_plane_views", "in_plane_diagram", "diagram_labels",
           "MAX_ELEVATIONS"]

FloatArray = npt.NDArray[np.float64]
_AXES = "XYZ"

#: at most this many elevations of a space frame (the planes holding the most members first)
MAX_ELEVATIONS = 6


@dataclass(frozen=True)
class View:
    """An orthographic view: ``kind`` is 'elevation', 'plan', 'plane' (a tilted plane) or 'axonometric'."""

    kind: str
    name: str
    u: FloatArray  # (3,) screen right, world
    v: FloatArray  # (3,) screen up, world
    offset: float = 0.0  # n · x of the plane (elevations)
    members: npt.NDArray[np.intp] | None = None  # members lying in the plane (None: all)
    labels: tuple[str, str] = ("", "")  # axis titles of an elevation
    origin: FloatArray = field(default_factory=lambda: np.zeros(3))

    @property
    def n(self) -> FloatArray:
        return np.cross(self.u, self.v)

    @property
    def in_plane(self) -> bool:
        return self.kind != "axonometric"

    def project(self, points) -> FloatArray:
        """Screen coordinates (k,2) of world points (k,3)."""
        P = np.asarray(points, float).reshape(-1, 3) - self.origin
        return P @ np.stack([self.u, self.v]).T

    def rotation(self) -> FloatArray:
        """3×3 matrix with columns u, v, n: turns text drawn in the XY plane into the view's screen plane."""
        return np.stack([self.u, self.v, self.n], axis=1)


_TURN, _EL = math.radians(35.0), math.radians(25.0)


def axonometric() -> View:
    """The report's fixed axonometric view: X right and a little down, Y receding right and up, Z up."""
    u = np.array([math.cos(_TURN), math.sin(_TURN), 0.0])
    v = np.array([-math.sin(_TURN) * math.sin(_EL), math.cos(_TURN) * math.sin(_EL), math.cos(_EL)])
    return View("axonometric", "axonometric view", u, v)


def drawing_view(frame) -> View:
    """The view labels are placed in: the frame's own plane, else the axonometric view."""
    return frame_plane_view(frame) or axonometric()


def _size(nodes) -> float:
    return max(float(np.ptp(nodes, axis=0).max()) if len(nodes) else 1.0, 1e-9)


def _view_of_plane(normal, point, size: float, members=None) -> View:
    """The view of the plane through ``point`` normal to ``normal``, seen from its front."""
    nrm = np.asarray(normal, float) / np.linalg.norm(normal)
    tol = 1e-6
    if abs(nrm[2]) < tol:  # a vertical plane: an elevation, Z up
        v = np.array([0.0, 0.0, 1.0])
        # seen from -Y for planes facing Y, from +X for planes facing X (X or Y runs to the right)
        n_view = nrm * (-np.sign(nrm[1]) if abs(nrm[1]) >= abs(nrm[0]) else np.sign(nrm[0]))
        u = np.cross(v, n_view)
        kind = "elevation"
    elif abs(abs(nrm[2]) - 1.0) < tol:  # a horizontal plane: a plan, X right, Y up
        u, v, n_view = np.array([1.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0]), np.array([0.0, 0.0, 1.0])
        kind = "plan"
    else:  # a tilted plane: its line of steepest slope up
        n_view = nrm if nrm[2] > 0 else -nrm
        v = np.array([0.0, 0.0, 1.0]) - n_view[2] * n_view
        v /= np.linalg.norm(v)
        u = np.cross(v, n_view)
        kind = "plane"
    u = np.where(np.abs(u) < 1e-12, 0.0, u)
    offset = float(n_view @ np.asarray(point, float))
    axis = [k for k in range(3) if abs(abs(n_view[k]) - 1.0) < tol]
    if axis:
        k = axis[0]
        plane = "".join(_AXES[a] for a in range(3) if a != k)
        at = float(np.asarray(point, float)[k])
        name = f"{plane} {'plan' if kind == 'plan' else 'elevation'} at {_AXES[k]} = {at:.3f} m"
        su = [a for a in range(3) if abs(abs(u[a]) - 1.0) < tol]
        labels = (f"{'−' if su and u[su[0]] < 0 else ''}{_AXES[su[0]]} [m]" if su else "along the plane [m]",
                  "Z [m]" if kind == "elevation" else "Y [m]")
    else:
        bearing = math.degrees(math.atan2(u[1], u[0])) % 360.0
        name = (f"elevation along bearing {bearing:.1f}° from X" if kind == "elevation"
                else f"view normal to the plane ({n_view[0]:.3f}, {n_view[1]:.3f}, {n_view[2]:.3f})")
        labels = ("along the plane [m]", "Z [m]" if kind == "elevation" else "up the slope [m]")
    origin = np.zeros(3)
    if not axis:  # screen coordinates from the frame's corner, not from the world origin far away
        origin = np.asarray(point, float) - offset * n_view
    return View(kind, name, u, v, offset=offset, members=members, labels=labels, origin=origin)


def _end_points(frame) -> FloatArray:
    """(m,2,3) member end points including rigid end offsets."""
    return frame.nodes[frame.members] + frame.offsets


def frame_plane_view(frame, tol: float | None = None) -> View | None:
    """The view of the plane every member lies in, or None for a space frame.

    The plane comes from the singular vectors of the centred joint
    coordinates (the normal is the direction of least spread); a frame is
    plane when no joint lies farther than ``tol`` (default 1e-6 of its size)
    from that plane.
    """
    if frame.n_nodes < 2 or frame.n_members == 0:
        return None
    P = _end_points(frame).reshape(-1, 3)
    size = _size(P)
    tol = 1e-6 * size if tol is None else tol
    c = P.mean(axis=0)
    _, sv, Vt = np.linalg.svd(P - c, full_matrices=len(P) < 3)  # full U of a building would be (2m)² doubles
    normal = Vt[-1]
    if float(np.abs((P - c) @ normal).max()) > tol:
        return None
    if len(sv) > 1 and sv[1] <= tol * math.sqrt(len(P)):  # all on one line: the plane holding Z (or Y)
        d = Vt[0]
        up = np.array([0.0, 0.0, 1.0]) if abs(d[2]) < 0.999 else np.array([1.0, 0.0, 0.0])
        normal = np.cross(d, up)
    # snap to a world axis when it is one (rounding of the singular vectors)
    k = int(np.argmax(np.abs(normal)))
    if abs(abs(normal[k]) - 1.0) < 1e-9:
        normal = np.eye(3)[k] * np.sign(normal[k])
    elif abs(normal[2]) < 1e-9:
        normal = np.array([normal[0], normal[1], 0.0])
    return _view_of_plane(normal, c, size)


def member_plane_views(frame, limit: int = MAX_ELEVATIONS, *, min_members: int = 3) -> list[View]:
    """Elevations of a space frame: one per vertical plane of members (a grid line), most members first.

    A non-vertical member defines the vertical plane through it; members
    whose both ends lie within 1e-4 of the frame's size from that plane
    belong to it (columns included). Planes with fewer than ``min_members``
    members are left out; at most
    ``limit`` are returned.
    """
    if frame.n_members == 0:
        return []
    E = _end_points(frame)
    size = _size(E.reshape(-1, 3))
    tol = 1e-4 * size
    d = E[:, 1] - E[:, 0]
    h = d[:, :2]
    hl = np.linalg.norm(h, axis=1)
    L = np.linalg.norm(d, axis=1)
    sloped = hl > 1e-3 * np.maximum(L, 1e-300)
    if not sloped.any():
        return []
    k = np.flatnonzero(sloped)
    nrm = np.stack([-h[k, 1], h[k, 0]], axis=1) / hl[k, None]
    # canonical sign: angle of the normal in [0, 180)
    flip = (nrm[:, 1] < -1e-12) | ((np.abs(nrm[:, 1]) <= 1e-12) & (nrm[:, 0] < 0))
    nrm[flip] *= -1
    ang = np.round(np.degrees(np.arctan2(nrm[:, 1], nrm[:, 0])) / 0.01).astype(np.int64)
    off = (nrm * E[k, 0, :2]).sum(axis=1)
    key = np.round(off / tol).astype(np.int64)
    groups: dict[tuple[int, int], list[int]] = {}
    for a, b, idx in zip(ang.tolist(), key.tolist(), range(len(k))):
        groups.setdefault((a, b), []).append(idx)
    candidates = []
    seen: set[bytes] = set()  # one plane split by the rounding of its offset: once
    for (a, b), rows in groups.items():
        n2 = nrm[rows[0]]
        c = float(np.median(off[rows]))
        dist = np.abs(E[:, :, :2] @ n2 - c).max(axis=1)
        inside = np.flatnonzero(dist <= tol)
        if len(inside) < min_members or len(inside) == frame.n_members or inside.tobytes() in seen:
            continue
        seen.add(inside.tobytes())
        candidates.append((len(inside), a, c, n2, inside))
    candidates.sort(key=lambda t: (-t[0], t[1], t[2]))
    out = []
    for count, _, c, n2, inside in candidates[:limit]:
        normal = np.array([n2[0], n2[1], 0.0])
        if abs(abs(normal[0]) - 1.0) < 1e-9 or abs(abs(normal[1]) - 1.0) < 1e-9:
            normal = np.round(normal)
        point = E[inside[0], 0]
        out.append(_view_of_plane(normal, point, size, members=inside))
    return out


def in_plane_diagram(results, case: str, k: int, action: str, view: View, *, local: bool = False):
    """One member's diagram in a view: (axis points (s,3), ordinates (s,), world direction (3,) of +ordinate).

    ``action`` is 'N', 'V' or 'M' in an in-plane view (see the module notes), or
    one of the engine's 'N', 'Vy', 'Vz', 'T', 'My', 'Mz' in any view (drawn
    along local z, y for Vy, −y for Mz, as the axonometric figures do). For M
    the ordinate is the magnitude and the direction points to the stretched
    side at each station's sign: the returned direction is for M > 0 about n.
    ``local=True`` draws N along local z in every view (the add-on's geometry).
    """
    frame = results.frame
    dg = results.diagram(case, k)
    ex, ey, ez = results.R[k]
    xi = frame.nodes[frame.members[k, 0]] + frame.offsets[k, 0]
    axis = xi[None, :] + dg.stations[:, None] * ex[None, :]
    F = dg.forces
    if action in ("V", "M"):
        n = view.n
        if action == "V":
            p = np.cross(n, ex)
            return axis, F[:, 1] * (ey @ p) + F[:, 2] * (ez @ p), p
        return axis, F[:, 4] * (ey @ n) + F[:, 5] * (ez @ n), np.cross(ex, n)
    col = {"N": 0, "Vy": 1, "Vz": 2, "T": 3, "My": 4, "Mz": 5}[action]
    if action == "N" and view.in_plane and not local:
        return axis, F[:, 0], np.cross(view.n, ex)
    direction = -ey if action == "Mz" else (ey if action == "Vy" else ez)
    return axis, F[:, col], direction


def diagram_labels(results, case: str, action: str, view: View, *, scale: float, text_height: float,
                   fmt, members=None, limit: int = 60, rel: float = 0.03, bounds=None, obstacles=None,
                   local: bool = False) -> list:
    """Value labels of one diagram in a view: ends and extremes, placed without overlap.

    Parameters
    ----------
    scale : float
        World length per unit of the ordinate (how the diagram is drawn).
    text_height : float
        Label height in the view's screen units (world length for the
        add-on, data units for the report).
    fmt : callable
        Value (SI) -> label text.
    members : sequence of int, optional
        The members drawn (default: the view's, or all).

    Returns
    -------
    list of (Label, text, world point of the label's centre); ``anchor`` and
    ``position`` are screen coordinates of the view (``View.project``); the
    world point lies in the plane through the diagram's tip parallel to the
    view (where the add-on puts its text).
    """
    from .labels import Label, label_stations, place_labels, text_box

    idx = members if members is not None else (view.members if view.members is not None
                                                else range(results.frame.n_members))
    pieces = []
    peak = 0.0
    for k in idx:
        axis, val, direction = in_plane_diagram(results, case, int(k), action, view, local=local)
        pieces.append((int(k), axis, val, direction))
        if val.size:
            peak = max(peak, float(np.abs(val).max()))
    cands = []
    for k, axis, val, direction in pieces:
        stations = results.diagram(case, k).stations
        d2 = view.project(direction[None, :] + view.origin)[0]
        for i in label_stations(stations, val, peak, rel=rel):
            tip = axis[i] + scale * val[i] * direction
            a2 = view.project(tip[None, :])[0]
            text = fmt(float(val[i]))
            cands.append((k, float(stations[i]), float(val[i]), a2, d2 * np.sign(val[i]), text,
                          float((tip - view.origin) @ view.n)))
    if not cands:
        return []
    # the same value at the same joint from two members (a moment round a corner): one label
    cands.sort(key=lambda c: -abs(c[2]))
    unique: list = []
    reach = 4.0 * text_height
    for c in cands:
        if not any(c[5] == u[5] and float(np.linalg.norm(c[3] - u[3])) < reach for u in unique):
            unique.append(c)
    cands = unique
    anchors = np.array([c[3] for c in cands])
    sizes = np.array([text_box(c[5], text_height) for c in cands])
    pos = place_labels(anchors, sizes, [abs(c[2]) for c in cands], away=np.array([c[4] for c in cands]),
                       limit=limit, bounds=bounds, obstacles=obstacles)
    out = []
    for c, p in zip(cands, pos):
        if np.isfinite(p).all():
            world = view.origin + p[0] * view.u + p[1] * view.v + c[6] * view.n
            out.append((Label(c[0], c[1], c[2], tuple(c[3].tolist()), tuple(p.tolist())), c[5], world))
    return out
