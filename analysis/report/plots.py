"""Plots of the analytical frame for the report (matplotlib, Agg backend, PNG as base64).

A plane frame is drawn in its own plane; a space frame in an axonometric
view (a fixed projection computed here and drawn on plain 2D axes, which is
much faster than a 3D axes object).
Diagrams are drawn on the members: N and V along local z (positive towards
+z), My along local z on the stretched side (My > 0 stretches the +z
fibres), Mz along local y on the stretched side (Mz > 0 stretches -y, drawn
towards -y).
"""
from __future__ import annotations

import base64
import io
import math

import numpy as np

__all__ = ["frame_views", "case_figure", "to_png_base64", "view_axes"]

_AXES = "XYZ"


def _mpl():
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return plt


def to_png_base64(fig, dpi: int = 90) -> str:
    plt = _mpl()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def view_axes(results) -> tuple[int, int] | None:
    """The two world axes of a plane frame's own plane, or None for a space frame."""
    plane = getattr(results.dofs, "plane_axis", None) if results is not None else None
    if plane is None:
        return None
    a, b = [k for k in range(3) if k != plane]
    return a, b


def _size(frame) -> float:
    return max(float(np.ptp(frame.nodes, axis=0).max()) if frame.n_nodes else 1.0, 1e-9)


_TURN, _EL = math.radians(35.0), math.radians(25.0)
#: axonometric projection seen from above: rows are the screen x and y directions in world coordinates
#: (X runs right and a little down, Y recedes right and up, Z is up)
_ISO = np.array([[math.cos(_TURN), math.sin(_TURN), 0.0],
                 [-math.sin(_TURN) * math.sin(_EL), math.cos(_TURN) * math.sin(_EL), math.cos(_EL)]])


def project(points, view):
    """Screen coordinates (n,2) of world points (n,3): ``view`` is (a, b) world axes or 'iso'."""
    P = np.asarray(points, float).reshape(-1, 3)
    if view == "iso":
        return P @ _ISO.T
    return P[:, list(view)]


#: above this many members the diagrams are drawn as members coloured by their peak value (`_coloured_members`)
LARGE = 1500


def _line_width(frame, lw: float) -> float:
    """Thinner lines as the member count grows, so that a building stays a drawing and not a blot."""
    return lw if frame.n_members <= 200 else max(0.12, lw * math.sqrt(200.0 / frame.n_members))


def _draw_frame(ax, frame, view, color="0.25", lw=1.6, labels=True, supports=True):
    P = project(frame.nodes, view)
    many = frame.n_members > 60
    if frame.n_members:
        segs = P[frame.members]  # (m,2,2)
        from matplotlib.collections import LineCollection

        ax.add_collection(LineCollection(segs, colors=color, linewidths=_line_width(frame, lw), zorder=2))
    if labels and not many:
        for k in range(frame.n_members):
            mid = P[frame.members[k]].mean(axis=0)
            ax.annotate(frame.member_ids[k], mid, fontsize=7, color="#1f4e9c", ha="center", va="center",
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="#1f4e9c", lw=0.5), zorder=5)
    sup = np.flatnonzero(frame.supported)
    if supports and sup.size:
        fixed = frame.restraints[sup].all(axis=1)
        for marker, mask, label in (("s", fixed, "fixed support"), ("^", ~fixed, "partial support or spring")):
            idx = sup[mask]
            if idx.size:
                size = (70 if labels else 40) if sup.size <= 100 else 6
                ax.scatter(P[idx, 0], P[idx, 1], marker=marker, s=size, c="#c0392b", zorder=4,
                           label=label, edgecolors="black", linewidths=0.5)
    if labels and frame.n_nodes <= 80:
        for i, nid in enumerate(frame.node_ids):
            ax.annotate(nid, P[i], fontsize=7, xytext=(3, 3), textcoords="offset points", color="black", zorder=6)


def _setup(ax, view, title, points=None):
    ax.set_aspect("equal", adjustable="box")
    if view == "iso":
        ax.set_xticks([])
        ax.set_yticks([])
        for side in ax.spines.values():
            side.set_visible(False)
        triad = _triad(ax, points)
        if triad is not None:
            points = np.concatenate([points, triad])
    else:
        ax.set_xlabel(f"{_AXES[view[0]]} [m]")
        ax.set_ylabel(f"{_AXES[view[1]]} [m]")
        ax.grid(True, lw=0.3, alpha=0.5)
    if points is not None and len(points):
        lo, hi = points.min(axis=0), points.max(axis=0)
        pad = 0.08 * max(float((hi - lo).max()), 1e-6)
        ax.set_xlim(lo[0] - pad, hi[0] + pad)
        ax.set_ylim(lo[1] - pad, hi[1] + pad)
    ax.set_title(title, fontsize=10)


def _triad(ax, points):
    """Small X, Y, Z arrows beside an axonometric view; returns the screen points they cover."""
    if points is None or not len(points):
        return None
    lo, hi = points.min(axis=0), points.max(axis=0)
    size = 0.08 * max(float((hi - lo).max()), 1e-6)
    origin = np.array([lo[0] - 1.5 * size, lo[1] + 0.5 * size])
    covered = [origin]
    for k, name in enumerate("XYZ"):
        e = np.zeros(3)
        e[k] = 1.0
        d = project(e[None, :], "iso")[0] * size
        ax.annotate("", origin + d, origin, arrowprops=dict(arrowstyle="->", color="0.3", lw=0.8))
        ax.annotate(name, origin + 1.25 * d, fontsize=7, color="0.3", ha="center", va="center")
        covered.append(origin + 1.3 * d)
    return np.array(covered)


def frame_views(frame, results=None) -> list[tuple[str, str]]:
    """Overview images: (caption, base64 PNG): the frame's plane or elevations, plus an axonometric view."""
    plt = _mpl()
    out = []
    plane = view_axes(results)
    if plane is None:  # a space analysis of a frame that lies in one plane: still draw that plane
        from ..stiffness.dofs import plane_of

        normal = plane_of(frame) if frame.n_nodes > 1 else None
        if normal is not None:
            a, b = (k for k in range(3) if k != normal)
            plane = (a, b)
    legend = "node labels black, member labels blue, supports red: square fixed, triangle partial"
    if plane is not None:
        fig, ax = plt.subplots(figsize=(9, 5.5))
        _draw_frame(ax, frame, plane)
        _setup(ax, plane, f"Analytical frame in the {_AXES[plane[0]]}{_AXES[plane[1]]} plane",
               project(frame.nodes, plane))
        ax.legend(loc="best", fontsize=7)
        out.append((f"Elevation of the analytical frame ({legend})", to_png_base64(fig)))
    else:
        fig, axs = plt.subplots(1, 2, figsize=(12, 5))
        for ax, view, name in ((axs[0], (0, 2), "XZ elevation"), (axs[1], (1, 2), "YZ elevation")):
            _draw_frame(ax, frame, view, labels=False)  # labels would overlap: they are in the 3D view
            _setup(ax, view, name, project(frame.nodes, view))
        out.append(("Elevations of the analytical frame (supports red: square fixed, triangle partial)",
                    to_png_base64(fig)))
    fig, ax = plt.subplots(figsize=(9, 7))
    _draw_frame(ax, frame, "iso")
    _setup(ax, "iso", "Axonometric view of the analytical frame", project(frame.nodes, "iso"))
    out.append((f"Axonometric (3D) view of the analytical frame ({legend})", to_png_base64(fig)))
    return out


def _deformed(results, case):
    """Deformed axis points per member (global), scaled so the largest displacement is 1/15 of the frame."""
    frame = results.frame
    R = results.R
    size = _size(frame)
    cr = results.case(case)
    peak = float(np.abs(cr.displacements[:, :3]).max(initial=0.0))
    diagrams = [results.diagram(case, k) for k in range(frame.n_members)]
    for dg in diagrams:
        peak = max(peak, float(np.abs(dg.deflections).max(initial=0.0)))
    scale = size / 15 / peak if peak > 0 else 0.0
    lines = []
    for k, dg in enumerate(diagrams):
        a, b = frame.members[k]
        xi = frame.nodes[a] + frame.offsets[k, 0]
        ex, ey, ez = R[k]
        base = xi[None, :] + dg.stations[:, None] * ex[None, :]
        ua = cr.displacements[a, :3] @ ex  # axial displacement: linear between the end values
        ub = cr.displacements[b, :3] @ ex
        t = dg.stations / max(float(results.L[k]), 1e-12)
        u = (1 - t) * ua + t * ub
        disp = u[:, None] * ex + dg.deflections[:, :1] * ey + dg.deflections[:, 1:2] * ez
        lines.append(base + scale * disp)
    return lines, scale, peak


def _diagram_lines(results, case, action: str):
    """Per member: (axis points, offset points, values) of one diagram drawn on the frame, and the peak."""
    frame = results.frame
    R = results.R
    size = _size(frame)
    col = {"N": 0, "Vy": 1, "Vz": 2, "T": 3, "My": 4, "Mz": 5}[action]
    peak = 0.0
    data = []
    for k in range(frame.n_members):
        dg = results.diagram(case, k)
        v = dg.forces[:, col]
        peak = max(peak, float(np.abs(v).max(initial=0.0)))
        data.append((k, dg.stations, v))
    scale = size / 8 / peak if peak > 0 else 0.0
    out = []
    for k, s, v in data:
        a = frame.members[k, 0]
        xi = frame.nodes[a] + frame.offsets[k, 0]
        ex, ey, ez = R[k]
        axis = xi[None, :] + s[:, None] * ex[None, :]
        direction = -ey if action == "Mz" else (ey if action == "Vy" else ez)
        out.append((axis, axis + scale * v[:, None] * direction[None, :], v))
    return out, peak


def _fmt_value(v: float, action: str) -> str:
    if action in ("N", "Vy", "Vz"):
        return f"{v / 1e3:.1f} kN"
    return f"{v / 1e3:.1f} kN·m"


_COLOURS = {"N": "#8e44ad", "Vy": "#16a085", "Vz": "#16a085", "T": "#7f8c8d", "My": "#c0392b", "Mz": "#d35400"}


def _coloured_members(ax, frame, view, values, cmap: str, label: str, lw: float = 1.2):
    """Members drawn in the colour of one value each (a building's diagrams, legible at any member count)."""
    from matplotlib.collections import LineCollection

    P = project(frame.nodes, view)
    v = np.asarray(values, float)
    order = np.argsort(v, kind="stable")  # the largest drawn last, on top
    lc = LineCollection(P[frame.members][order], array=v[order], cmap=cmap, linewidths=_line_width(frame, lw) * 2,
                        zorder=3)
    ax.add_collection(lc)
    ax.figure.colorbar(lc, ax=ax, shrink=0.8, pad=0.01).set_label(label, fontsize=8)
    return P


def _large_case_figure(results, case: str, actions) -> str:
    """`case_figure` of a building: the deformed shape from the nodal displacements, and per action its
    largest magnitude along each member as the member's colour."""
    plt = _mpl()
    from matplotlib.collections import LineCollection

    frame = results.frame
    view = view_axes(results) or "iso"
    panels = ["deformed", *actions]
    nrow = (len(panels) + 1) // 2
    fig, axs = plt.subplots(nrow, 2, figsize=(12, 4.8 * nrow), squeeze=False)
    for ax in axs.ravel()[len(panels):]:
        ax.set_visible(False)
    cr = results.case(case)
    lo, hi = results.force_ranges(case)
    base = project(frame.nodes, view)
    for ax, what in zip(axs.ravel(), panels):
        if what == "deformed":
            u = cr.displacements[:, :3]
            peak = float(np.linalg.norm(u, axis=1).max(initial=0.0))
            scale = _size(frame) / 15 / peak if peak > 0 else 0.0
            moved = project(frame.nodes + scale * u, view)
            _draw_frame(ax, frame, view, color="0.8", lw=1.0, labels=False, supports=True)
            ax.add_collection(LineCollection(moved[frame.members], colors="#1f4e9c",
                                             linewidths=_line_width(frame, 1.6), zorder=3))
            pts = np.concatenate([base, moved])
            title = (f"Deformed shape (largest {peak * 1e3:.2f} mm, drawn ×{scale:.3g}; joints joined straight)"
                     if peak > 0 else "Deformed shape (no displacement)")
        else:
            i = ("N", "Vy", "Vz", "T", "My", "Mz").index(what)
            if what == "N":
                value = np.where(np.abs(lo[:, 0]) > np.abs(hi[:, 0]), lo[:, 0], hi[:, 0]) / 1e3
                lim = float(np.abs(value).max(initial=0.0)) or 1.0
                P = _coloured_members(ax, frame, view, value, "coolwarm_r", "N [kN] (largest magnitude; < 0 compression)")
                ax.collections[-1].set_clim(-lim, lim)
            else:
                value = np.maximum(np.abs(lo[:, i]), np.abs(hi[:, i])) / 1e3
                unit = "kN" if what in ("Vy", "Vz") else "kN·m"
                P = _coloured_members(ax, frame, view, value, "viridis", f"|{what}| max along the member [{unit}]")
            pts = P
            title = f"{what}: largest magnitude per member ({_fmt_value(float(np.abs(value).max(initial=0.0)) * 1e3, what)})"
        _setup(ax, view, title, pts)
    fig.suptitle(case, fontsize=12)
    fig.subplots_adjust(left=0.04, right=0.97, top=1 - 0.45 / (4.8 * nrow), bottom=0.5 / (4.8 * nrow), wspace=0.12,
                        hspace=0.3)
    return to_png_base64(fig, dpi=80)


def case_figure(results, case: str, actions=("N", "Vz", "My")) -> str:
    """One figure per case: deformed shape and the diagrams of ``actions`` drawn on the frame (base64 PNG).

    Above `LARGE` members the diagrams become member colours (`_large_case_figure`)."""
    if results.frame.n_members > LARGE:
        return _large_case_figure(results, case, actions)
    plt = _mpl()
    from matplotlib.collections import LineCollection, PolyCollection

    frame = results.frame
    view = view_axes(results) or "iso"
    panels = ["deformed", *actions]
    ncol = 2
    nrow = (len(panels) + 1) // 2
    fig, axs = plt.subplots(nrow, ncol, figsize=(12, 4.4 * nrow), squeeze=False)
    for ax in axs.ravel()[len(panels):]:
        ax.set_visible(False)
    base_pts = project(frame.nodes, view)
    for ax, what in zip(axs.ravel(), panels):
        _draw_frame(ax, frame, view, color="0.7", lw=1.0, labels=False, supports=True)
        pts_all = [base_pts]
        if what == "deformed":
            lines, scale, peak = _deformed(results, case)
            lines2 = [project(p, view) for p in lines]
            ax.add_collection(LineCollection(lines2, colors="#1f4e9c", linewidths=1.6, zorder=3))
            pts_all += lines2
            title = (f"Deformed shape (largest {peak * 1e3:.2f} mm, drawn ×{scale:.0f})" if peak > 0
                     else "Deformed shape (no displacement)")
        else:
            lines, peak = _diagram_lines(results, case, what)
            colour = _COLOURS[what]
            polys, edges = [], []
            for axis, off, v in lines:
                a2, o2 = project(axis, view), project(off, view)
                polys.append(np.concatenate([a2, o2[::-1]]))
                edges.append(o2)
                pts_all.append(o2)
                if len(v) and peak > 0:
                    j = int(np.abs(v).argmax())
                    if abs(v[j]) >= 0.25 * peak and frame.n_members <= 60:
                        ax.annotate(_fmt_value(v[j], what), o2[j], fontsize=7, color=colour, zorder=6)
            ax.add_collection(PolyCollection(polys, facecolors=colour, alpha=0.25, linewidths=0, zorder=2))
            ax.add_collection(LineCollection(edges, colors=colour, linewidths=1.0, zorder=3))
            title = f"{what} (largest {_fmt_value(peak, what)})" if peak > 0 else f"{what} (zero)"
        _setup(ax, view, title, np.concatenate(pts_all))
    fig.suptitle(f"{case} — axonometric view" if view == "iso" else case, fontsize=12, y=1 - 0.12 / (4.4 * nrow))
    fig.subplots_adjust(left=0.06, right=0.98, top=1 - 0.8 / (4.4 * nrow), bottom=0.55 / (4.4 * nrow), wspace=0.18,
                        hspace=0.3)
    return to_png_base64(fig, dpi=80)
