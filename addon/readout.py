"""Read values out of the engine's `Results` for drawing: no bpy, no analysis.

Everything here only picks numbers the engine computed (member diagrams,
member-end displacements, member axes) and places them in world
coordinates for display. Units stay SI; `DISPLAY_UNITS` gives the unit a
label shows.
"""
from __future__ import annotations

import numpy as np

__all__ = ["FORCES", "DISPLAY_UNITS", "model_extent", "member_values", "axis_points",
           "displaced_axis", "governing", "format_value"]

FORCES = ("N", "Vy", "Vz", "T", "My", "Mz")

#: quantity -> (unit label, factor from SI)
DISPLAY_UNITS = {
    "N": ("kN", 1e-3), "Vy": ("kN", 1e-3), "Vz": ("kN", 1e-3),
    "T": ("kN·m", 1e-3), "My": ("kN·m", 1e-3), "Mz": ("kN·m", 1e-3),
    "DISPLACEMENT": ("mm", 1e3),
}


def format_value(quantity: str, value_si: float) -> str:
    unit, factor = DISPLAY_UNITS[quantity]
    return f"{value_si * factor:.4g} {unit}"


def model_extent(frame) -> float:
    """Largest side of the nodes' bounding box, at least 1 m."""
    if frame.n_nodes == 0:
        return 1.0
    return max(float(np.ptp(frame.nodes, axis=0).max()), 1.0)


def _ends(frame, k: int) -> tuple[np.ndarray, np.ndarray]:
    i, j = frame.members[k]
    return frame.nodes[i] + frame.offsets[k, 0], frame.nodes[j] + frame.offsets[k, 1]


def axis_points(frame, k: int, stations: np.ndarray) -> np.ndarray:
    """World points ``(s,3)`` of member ``k``'s axis at ``stations`` (m from end i)."""
    xi, xj = _ends(frame, k)
    L = float(np.linalg.norm(xj - xi))
    ex = (xj - xi) / L
    return xi[None, :] + np.asarray(stations, float)[:, None] * ex[None, :]


def _translations(results, case: str, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Stations and global translations ``(s,3)`` of member ``k``'s axis.

    The transverse parts are the engine's deflections ``dy``, ``dz``; the axial
    part runs linearly between the member-end displacements along the axis.
    """
    dg = results.diagram(case, k)
    cr = results.case(case)
    L = float(results.L[k])
    d = cr.end_displacements[k]
    s = dg.stations
    local = np.stack([d[0] + (d[6] - d[0]) * s / L, dg["dy"], dg["dz"]], axis=1)
    return s, local @ results.R[k]  # rows: local components -> global (R rows are local axes)


def member_values(results, case: str, k: int, quantity: str) -> tuple[np.ndarray, np.ndarray]:
    """Stations ``(s,)`` and values ``(s,)`` of ``quantity`` along member ``k`` (SI)."""
    if quantity in FORCES:
        dg = results.diagram(case, k)
        return dg.stations, np.asarray(dg[quantity], float)
    if quantity == "DISPLACEMENT":
        s, u = _translations(results, case, k)
        return s, np.linalg.norm(u, axis=1)
    raise ValueError(f"quantity {quantity!r} is not one of {', '.join(FORCES)}, DISPLACEMENT")


def displaced_axis(results, case: str, k: int, scale: float) -> np.ndarray:
    """World points of member ``k``'s deflected axis, displacements times ``scale``."""
    s, u = _translations(results, case, k)
    return axis_points(results.frame, k, s) + scale * u


def governing(results, quantity: str, cases) -> tuple[str, float, float, str] | None:
    """Member id, value, station and case of the largest ``|quantity|`` over ``cases``."""
    best = None
    for case in cases:
        for k, mid in enumerate(results.frame.member_ids):
            s, v = member_values(results, case, k, quantity)
            if v.size == 0:
                continue
            at = int(np.argmax(np.abs(v)))
            if best is None or abs(v[at]) > abs(best[1]):
                best = (mid, float(v[at]), float(s[at]), case)
    return best
