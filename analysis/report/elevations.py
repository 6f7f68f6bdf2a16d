"""Figures in a plane of the frame (analysis.report.views.View): the frame, and per case its deformed shape
and N, V, M in that plane, with value labels at member ends and extremes that do not collide.

Moments are drawn on the tension (stretched) side and labelled with their
magnitude; N and V are drawn to the left of each member's direction i → j as
seen in the view and labelled with their sign (N > 0 tension). Common
practice, no source.
"""
from __future__ import annotations

import numpy as np

from .views import View, diagram_labels, in_plane_diagram

__all__ = ["elevation_frame_figure", "elevation_case_figure", "CONVENTION"]

CONVENTION = ("Diagrams in an elevation show true lengths of the members lying in its plane. Bending moments about "
              "the plane's normal are drawn on the tension (stretched) side of each member and labelled with their "
              "magnitude; axial forces (N > 0 tension) and in-plane shear forces are drawn to the left of the "
              "member's direction i → j as seen in the view, labelled with their sign. Values are labelled at "
              "member ends and at extremes along the members; a label that would overlap another is left out "
              "(the larger value wins).")

_COLOURS = {"N": "#8e44ad", "V": "#16a085", "M": "#c0392b"}
_FONT = 8.0  # points


def _members(frame, view: View) -> np.ndarray:
    return np.arange(frame.n_members) if view.members is None else np.asarray(view.members)


def _fmt(action: str):
    if action == "M":
        return lambda v: f"{abs(v) / 1e3:.1f}"
    return lambda v: f"{v / 1e3:+.1f}"


def _base(ax, frame, view: View, members, color="0.7", lw=1.0, labels=False):
    from matplotlib.collections import LineCollection

    from .plots import _line_width

    E = frame.nodes[frame.members[members]] + frame.offsets[members]
    segs = view.project(E.reshape(-1, 3)).reshape(-1, 2, 2)
    ax.add_collection(LineCollection(list(segs), colors=color, linewidths=_line_width(frame, lw), zorder=2))
    nodes = np.unique(frame.members[members])
    P = view.project(frame.nodes[nodes])
    sup = frame.restraints[nodes].any(axis=1) | (frame.springs[nodes] > 0).any(axis=1)
    if sup.any():
        fixed = frame.restraints[nodes].all(axis=1)
        for marker, mask, label in (("s", sup & fixed, "fixed support"), ("^", sup & ~fixed, "partial support or spring")):
            if mask.any():
                ax.scatter(P[mask, 0], P[mask, 1], marker=marker, s=40 if mask.sum() <= 100 else 6, c="#c0392b",
                           zorder=4, label=label, edgecolors="black", linewidths=0.5)
    if labels and len(members) <= 60:
        for k in members:
            mid = view.project((E[list(members).index(k)]).mean(axis=0)[None, :])[0]
            ax.annotate(frame.member_ids[k], mid, fontsize=_FONT, color="#1f4e9c", ha="center", va="center",
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="#1f4e9c", lw=0.5), zorder=5)
        if len(nodes) <= 80:
            for i, p in zip(nodes, P):
                ax.annotate(frame.node_ids[i], p, fontsize=_FONT, xytext=(3, 3), textcoords="offset points", zorder=6)
    return segs.reshape(-1, 2)


def _limits(ax, view: View, title: str, pts) -> float:
    """Equal-aspect limits around ``pts``; returns data units per point of the drawn axes."""
    ax.set_aspect("equal", adjustable="datalim")
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    pad = 0.1 * max(float((hi - lo).max()), 1e-6)
    lo, hi = lo - pad, hi + pad
    fig = ax.figure
    box = ax.get_position()
    w_pt, h_pt = box.width * fig.get_figwidth() * 72, box.height * fig.get_figheight() * 72
    dpp = max((hi[0] - lo[0]) / w_pt, (hi[1] - lo[1]) / h_pt)
    cx, cy = (lo + hi) / 2
    ax.set_xlim(cx - dpp * w_pt / 2, cx + dpp * w_pt / 2)
    ax.set_ylim(cy - dpp * h_pt / 2, cy + dpp * h_pt / 2)
    ax.set_xlabel(view.labels[0], fontsize=8)
    ax.set_ylabel(view.labels[1], fontsize=8)
    ax.tick_params(labelsize=7)
    ax.grid(True, lw=0.3, alpha=0.5)
    ax.set_title(title, fontsize=9)
    return dpp


def _panel_shape(frame, view: View, members) -> tuple[float, float]:
    E = frame.nodes[frame.members[members]] + frame.offsets[members]
    P = view.project(E.reshape(-1, 3))
    w, h = np.ptp(P, axis=0) if len(P) else (1.0, 1.0)
    ratio = float(h) / max(float(w), 1e-9)
    return 5.8, float(np.clip(5.8 * ratio * 0.9 + 0.9, 2.6, 8.0))


def elevation_frame_figure(frame, view: View) -> str:
    """The analytical frame in one elevation with node and member labels and supports (base64 PNG)."""
    from .plots import _mpl, to_png_base64

    plt = _mpl()
    members = _members(frame, view)
    w, h = _panel_shape(frame, view, members)
    fig, ax = plt.subplots(figsize=(min(2 * w, 11), min(2 * h, 7.5)))
    fig.subplots_adjust(left=0.08, right=0.98, top=0.92, bottom=0.1)
    pts = _base(ax, frame, view, members, color="0.25", lw=1.6, labels=True)
    _limits(ax, view, f"Analytical frame: {view.name}", pts)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="best", fontsize=7)
    return to_png_base64(fig)


def elevation_case_figure(results, case: str, view: View, actions=("N", "V", "M"), *, deformed: bool = True) -> str:
    """Deformed shape (unless ``deformed=False``) and the in-plane N, V, M of one case in one elevation (base64 PNG)."""
    from matplotlib.collections import LineCollection, PolyCollection

    from .plots import _deformed, _mpl, _size, to_png_base64

    plt = _mpl()
    frame = results.frame
    members = _members(frame, view)
    w, h = _panel_shape(frame, view, members)
    panels = ["deformed", *actions] if deformed else list(actions)
    nrow = (len(panels) + 1) // 2
    fig, axs = plt.subplots(nrow, 2, figsize=(2 * w, h * nrow), squeeze=False)
    for ax in axs.ravel()[len(panels):]:
        ax.set_visible(False)
    top = 0.5 / (h * nrow)
    fig.subplots_adjust(left=0.07, right=0.98, top=1 - top - 0.02, bottom=0.45 / (h * nrow), wspace=0.16, hspace=0.32)
    size = _size(frame)
    for ax, what in zip(axs.ravel(), panels):
        base = _base(ax, frame, view, members)
        pts = [base]
        if what == "deformed":
            lines, scale, peak = _deformed(results, case)
            lines2 = [view.project(lines[k]) for k in members]
            ax.add_collection(LineCollection(lines2, colors="#1f4e9c", linewidths=1.6, zorder=3))
            pts += lines2
            title = (f"Deformed shape (largest {peak * 1e3:.2f} mm, drawn ×{scale:.0f})" if peak > 0
                     else "Deformed shape (no displacement)")
            _limits(ax, view, title, np.concatenate(pts))
            continue
        data = [in_plane_diagram(results, case, int(k), what, view) for k in members]
        peak = max((float(np.abs(v).max()) for _, v, _ in data if v.size), default=0.0)
        scale = size / 8 / peak if peak > 0 else 0.0
        colour = _COLOURS[what]
        polys, edges = [], []
        for axis, val, direction in data:
            a2 = view.project(axis)
            o2 = view.project(axis + scale * val[:, None] * direction[None, :])
            polys.append(np.concatenate([a2, o2[::-1]]))
            edges.append(o2)
            pts.append(o2)
        ax.add_collection(PolyCollection(polys, facecolors=colour, alpha=0.22, linewidths=0, zorder=2))
        ax.add_collection(LineCollection(edges, colors=colour, linewidths=1.0, zorder=3))
        unit = "kN·m" if what == "M" else "kN"
        name = {"N": "N (axial, > 0 tension)", "V": "V (shear in the plane)",
                "M": "M about the plane's normal (tension side)"}[what]
        title = f"{name} [{unit}]: largest {peak / 1e3:.1f}" if peak > 0 else f"{name}: zero"
        dpp = _limits(ax, view, title, np.concatenate(pts))
        if peak > 0 and len(members) <= 200:
            xl, yl = ax.get_xlim(), ax.get_ylim()
            height = _FONT * 1.25 * dpp
            placed = diagram_labels(results, case, what, view, scale=scale, text_height=height, fmt=_fmt(what),
                                    members=members, limit=40, bounds=(xl[0], yl[0], xl[1], yl[1]))
            for label, text, _ in placed:
                ax.annotate(text, label.position, fontsize=_FONT, color=colour, ha="center", va="center", zorder=6)
    fig.suptitle(f"{case} — {view.name}", fontsize=11)
    return to_png_base64(fig, dpi=84)
