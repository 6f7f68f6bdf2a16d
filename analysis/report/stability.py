"""The report's section on stability and dynamics: critical load factors, second-order amplification, modes.

Thresholds stated in words (EN 1993-1-1, 5.2.1 and 5.2.2 — from memory): for an elastic global
analysis of a steel frame, first-order results may be used where the lowest critical factor
α_cr ≥ 10; for 3 ≤ α_cr < 10 the sway effects may be amplified by 1/(1 − 1/α_cr) or a second-order
analysis run; below 3 a second-order analysis is needed. Other materials' codes state their own
limits. For modal analysis, the modes taken together commonly should carry at least 90 % of the mass
in each direction (EN 1998-1, 4.3.3.3.1 — from memory).
"""
from __future__ import annotations

import html
import math

import numpy as np

__all__ = ["stability_section", "verdict"]


def _e(x) -> str:
    return html.escape(str(x))


def _table(headers, rows, left_cols=1) -> str:
    head = "".join(f"<th class='l'>{_e(h)}</th>" if i < left_cols else f"<th>{_e(h)}</th>" for i, h in enumerate(headers))
    body = "".join("<tr>" + "".join(f"<td class='l'>{_e(c)}</td>" if i < left_cols else f"<td>{_e(c)}</td>"
                                    for i, c in enumerate(row)) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def verdict(alpha: float) -> str:
    """What the lowest critical factor of a load set means for the global analysis, in words."""
    if not math.isfinite(alpha):
        return "no buckling mode under this load set (no member in compression)"
    if alpha <= 1.0:
        return "at or past the elastic critical load: the frame cannot carry this load set"
    if alpha < 3.0:
        return "second-order analysis required (α_cr < 3: amplifying first-order results is not enough)"
    if alpha < 10.0:
        amp = 1.0 / (1.0 - 1.0 / alpha)
        return (f"second-order effects must be considered: amplify the sway effects by 1/(1 − 1/α_cr) = {amp:.3f}, "
                "or use the second-order results")
    return "first-order elastic analysis is acceptable (α_cr ≥ 10)"


def stability_section(results, plots: bool = True) -> str:
    """HTML for whatever of buckling, second order and modes the results hold ('' when none)."""
    buckling = getattr(results, "buckling", None)
    modes = getattr(results, "modes", None)
    second = getattr(results, "theory", "first-order") == "second-order"
    if buckling is None and modes is None and not second:
        return ""
    parts = ["<h2 id='stability'>Stability and dynamics</h2>",
             "<p>Computed with every member subdivided internally into pieces with their own geometric stiffness "
             "and consistent mass, so one IFC member per column or beam is as exact as the theory; forces and "
             "diagrams refer to the IFC members.</p>"]
    if buckling is not None:
        parts.append(_buckling(results, buckling, plots))
    if second:
        parts.append(_amplification(results, buckling))
    if modes is not None:
        parts.append(_modes(results, modes, plots))
    return "\n".join(parts)


def _buckling(results, buckling, plots) -> str:
    n = max((len(v) for v in buckling.values()), default=0)
    heads = ["Load set"] + [f"α_cr,{k + 1}" for k in range(n)] + ["What it means"]
    rows = []
    for name, found in buckling.items():
        alphas = [m.factor for m in found]
        rows.append([name, *(f"{a:.3f}" for a in alphas), *([""] * (n - len(alphas))),
                     verdict(alphas[0] if alphas else math.inf)])
    out = ["<h3>Elastic critical load factors</h3>",
           "<p>α_cr is the factor by which a load set would have to be multiplied for the frame to buckle "
           "elastically (axial forces from the first-order analysis, flexural buckling of the frame and of its "
           "members; lateral-torsional and torsional buckling of single members are member checks, not part "
           "of this). For an elastic global analysis of a steel frame, EN 1993-1-1 (5.2.1) lets first-order "
           "results stand where α_cr ≥ 10; from 3 to 10 the sway effects may be amplified by 1/(1 − 1/α_cr) or "
           "a second-order analysis used; below 3 a second-order analysis is needed. Other materials' codes "
           "set their own limits.</p>", _table(heads, rows, left_cols=1)]
    if plots:
        for name, found in list(buckling.items())[:4]:
            if found:
                out.append(_shape_figure(results, found[0].along, f"{name}: first buckling mode, α_cr = {found[0].factor:.3f}"))
    return "\n".join(out)


def _amplification(results, buckling) -> str:
    first = getattr(results, "first_order_cases", None) or {}
    rows = []
    for name, cr in results.cases.items():
        fo = first.get(name)
        if fo is None:
            continue
        d1 = float(np.linalg.norm(fo.displacements[:, :3], axis=1).max(initial=0.0))
        d2 = float(np.linalg.norm(cr.displacements[:, :3], axis=1).max(initial=0.0))
        m1 = _peak_moment(results, name, fo)
        m2 = _peak_moment(results, name, None)
        alpha = buckling[name][0].factor if buckling and buckling.get(name) else math.nan
        rows.append([name, f"{d1 * 1e3:.3f}", f"{d2 * 1e3:.3f}", f"{d2 / d1:.3f}" if d1 > 0 else "–",
                     f"{m1 / 1e3:.2f}", f"{m2 / 1e3:.2f}", f"{m2 / m1:.3f}" if m1 > 0 else "–",
                     f"{1 / (1 - 1 / alpha):.3f}" if math.isfinite(alpha) and alpha > 1 else "–"])
    return ("<h3>Second-order amplification</h3><p>Every load case and combination was analysed to second order "
            "(P-Δ and P-δ, each combination as its own load set; axial forces iterated to convergence). The "
            "results elsewhere in this report are the second-order ones; here they stand beside first order. "
            "1/(1 − 1/α_cr) is the simple amplification estimate from the lowest critical factor. The equilibrium "
            "residuals of second-order results are those of the second-order equations (equilibrium in the "
            "deflected geometry): in the undeflected geometry the loads and reactions differ by the P-Δ "
            "moments, as they should.</p>"
            + _table(["Load set", "max |u| 1st [mm]", "max |u| 2nd [mm]", "ratio", "max |M| 1st [kN·m]",
                      "max |M| 2nd [kN·m]", "ratio", "1/(1 − 1/α_cr)"], rows))


def _peak_moment(results, name, first_order_case) -> float:
    if first_order_case is None:
        F = [results.diagram(name, k).forces for k in range(results.frame.n_members)]
        return max((float(np.hypot(f[:, 4], f[:, 5]).max(initial=0.0)) for f in F), default=0.0)
    # first order: the diagrams of the first-order case through a Results view of it
    from ..results import Results

    view = Results(frame=results.frame, options=results.options, dofs=results.dofs, R=results.R, L=results.L,
                   cases={name: first_order_case})
    F = [view.diagram(name, k).forces for k in range(results.frame.n_members)]
    return max((float(np.hypot(f[:, 4], f[:, 5]).max(initial=0.0)) for f in F), default=0.0)


def _modes(results, modes, plots) -> str:
    mass = results.mass
    rows = []
    cum = np.zeros(3)
    for k, m in enumerate(modes, 1):
        r = np.array(m.effective_mass_ratio)
        cum += r
        rows.append([k, f"{m.frequency:.4f}", f"{m.period:.4f}", *(f"{v:.3f}" for v in r), *(f"{v:.3f}" for v in cum)])
    out = ["<h3>Natural modes</h3>",
           f"<p>Mass {mass.total:,.0f} kg: {_e(', '.join(mass.sources))} (members' own mass ρ·A per length as "
           "consistent mass; a named load case adds its gravity loads ÷ g × factor as translational mass in all "
           "directions, its self-weight not counted twice). Effective mass ratios are the effective modal mass "
           "in each world direction over the total mass; response-spectrum analyses commonly take enough modes "
           "for the cumulative ratio to reach 90 % in each direction (EN 1998-1, 4.3.3.3.1).</p>",
           _table(["Mode", "f [Hz]", "T [s]", "mass x", "mass y", "mass z", "Σ x", "Σ y", "Σ z"], rows)]
    if plots:
        for k, m in enumerate(modes[:3], 1):
            out.append(_shape_figure(results, m.along, f"Mode {k}: f = {m.frequency:.3f} Hz, T = {m.period:.3f} s"))
    return "\n".join(out)


def _shape_figure(results, along, caption: str) -> str:
    """The undeformed frame and a mode shape (largest translation drawn as 1/8 of the frame size)."""
    from .plots import _mpl, _setup, project, to_png_base64, view_axes

    plt = _mpl()
    frame = results.frame
    view = view_axes(results) or "iso"
    size = max(float(np.ptp(frame.nodes, axis=0).max()) if frame.n_nodes else 1.0, 1e-9)
    scale = size / 8
    fig, ax = plt.subplots(figsize=(8, 5))
    pts_all = [frame.nodes]
    for k, pts in enumerate(along):
        a, b = frame.members[k]
        t = np.linspace(0.0, 1.0, len(pts))[:, None]
        base = (1 - t) * frame.nodes[a] + t * frame.nodes[b]
        moved = base + scale * np.asarray(pts)[:, :3]
        P0, P1 = project(base, view), project(moved, view)
        ax.plot(P0[:, 0], P0[:, 1], color="0.7", lw=1.0)
        ax.plot(P1[:, 0], P1[:, 1], color="#1f4e9c", lw=1.8)
        pts_all.append(moved)
    _setup(ax, view, caption, project(np.vstack(pts_all), view))
    return (f"<figure><img alt='{_e(caption)}' src='data:image/png;base64,{to_png_base64(fig)}'>"
            f"<figcaption>{_e(caption)} (grey: undeformed; blue: the shape, largest translation drawn as 1/8 of "
            "the frame size; shapes have no absolute size)</figcaption></figure>")
