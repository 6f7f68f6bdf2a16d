"""Which figures the report draws, and in which view.

A frame whose members all lie in one plane is drawn in that plane's
elevation (or plan): the overview and every case. A space frame keeps the
axonometric view and gets one elevation per vertical plane of members (grid
line), the planes holding the most members first: up to
`views.MAX_ELEVATIONS` in the overview and `CASE_ELEVATIONS` per case (N and
M only), and
per-case elevations only where the plane holds at most `plots.LARGE`
members (a building's diagrams are member colours in the axonometric view).

Each figure comes as ``(caption, base64 PNG, view kind, view name)``; the
HTML marks the figure with its view.
"""
from __future__ import annotations

from .views import MAX_ELEVATIONS, View, axonometric, frame_plane_view, member_plane_views

__all__ = ["overview_figures", "case_figures", "report_views", "CASE_ELEVATIONS"]

#: elevations per case of a space frame (the overview shows up to views.MAX_ELEVATIONS); one where the model
#: has more than `MANY_CASES` cases and combinations. They show N and M (the axonometric figure has the rest).
CASE_ELEVATIONS = 2
MANY_CASES = 10


def report_views(frame) -> tuple[View | None, list[View]]:
    """(the frame's own plane or None, the elevations of a space frame)."""
    own = frame_plane_view(frame)
    if own is not None:
        return own, []
    from .plots import LARGE

    # a building of thousands of members: three elevations (each is a drawing of thousands of lines)
    return None, member_plane_views(frame, MAX_ELEVATIONS if frame.n_members <= LARGE else 3)


def overview_figures(frame, results=None, views=None) -> list[tuple[str, str, str, str]]:
    from .elevations import elevation_frame_figure
    from .plots import frame_views

    own, elevations = views if views is not None else report_views(frame)
    legend = "node labels black, member labels blue, supports red: square fixed, triangle partial"
    out = []
    if own is not None:
        out.append((f"{own.name[0].upper() + own.name[1:]} of the analytical frame ({legend})",
                    elevation_frame_figure(frame, own), own.kind, own.name))
    iso = axonometric()
    if own is None and not elevations:  # no plane of members: the XZ and YZ projections and the 3D view
        for caption, b64 in frame_views(frame, results):
            kind = "axonometric" if caption.startswith("Axonometric") else "projection"
            out.append((caption, b64, kind, iso.name if kind == "axonometric" else "XZ and YZ projections"))
    else:
        out.append((f"Axonometric (3D) view of the analytical frame ({legend})", _axonometric_figure(frame),
                    "axonometric", iso.name))
    for view in elevations:
        out.append((f"{view.name[0].upper() + view.name[1:]}: the {_count(frame, view)} members in this plane "
                    f"({legend})", elevation_frame_figure(frame, view), view.kind, view.name))
    return out


def _axonometric_figure(frame) -> str:
    """The overview's 3D view alone (plots.frame_views also draws projections, not needed beside elevations)."""
    from .plots import _draw_frame, _mpl, _setup, project, to_png_base64

    fig, ax = _mpl().subplots(figsize=(9, 7))
    _draw_frame(ax, frame, "iso")
    _setup(ax, "iso", "Axonometric view of the analytical frame", project(frame.nodes, "iso"))
    return to_png_base64(fig)


def _count(frame, view: View) -> int:
    return frame.n_members if view.members is None else len(view.members)


def _in_plane_actions(results, case: str, actions) -> tuple[str, ...]:
    """N always; V and M where they are more than rounding next to the largest force (a truss has none)."""
    import numpy as np

    from .plots import _size

    lo, hi = results.force_ranges(case)
    peak = np.maximum(np.abs(lo), np.abs(hi)).max(axis=0) if len(lo) else np.zeros(6)
    v, m = float(max(peak[1], peak[2])), float(max(peak[4], peak[5])) / _size(results.frame)
    top = max(float(peak[0]), v, m, 1e-300)
    out = ["N"]
    if any(a in ("Vy", "Vz") for a in actions) and v > 1e-6 * top:
        out.append("V")
    if any(a in ("My", "Mz") for a in actions) and m > 1e-6 * top:
        out.append("M")
    return tuple(out)


def case_figures(results, case: str, actions, views=None) -> list[tuple[str, str, str, str]]:
    from .elevations import elevation_case_figure
    from .plots import LARGE, case_figure

    frame = results.frame
    own, elevations = views if views is not None else report_views(frame)
    in_plane = _in_plane_actions(results, case, actions)
    out = []
    if own is not None:
        out.append((f"{case}: deformed shape and N, V, M in the {own.name} (moments on the tension side)",
                    elevation_case_figure(results, case, own, in_plane), own.kind, own.name))
        return out
    out.append((f"{case}: deformed shape and internal-force diagrams drawn on the frame in the axonometric view "
                "(N and V towards local +z or +y; moments on the stretched side)",
                case_figure(results, case, actions), "axonometric", axonometric().name))
    shown = in_plane if len(in_plane) == 1 else tuple(a for a in in_plane if a != "V")
    for view in elevations[:CASE_ELEVATIONS if len(results.cases) <= MANY_CASES else 1]:
        if _count(frame, view) > LARGE:
            continue
        out.append((f"{case}: {', '.join(shown)} of the {_count(frame, view)} members in the {view.name} "
                    "(moments on the tension side)",
                    elevation_case_figure(results, case, view, shown, deformed=False), view.kind, view.name))
    return out
