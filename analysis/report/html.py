"""Assemble the HTML report (one self-contained file; see the package docstring)."""
from __future__ import annotations

import datetime as _dt
import html
import math
import os

import numpy as np

from ..errors import AnalysisError
from ..model import ACTION_NAMES, DOF_NAMES, REACTION_NAMES

__all__ = ["CAUTION", "build_report", "write_report"]

CAUTION = ("Results are an aid to a qualified engineer. They do not replace engineering judgement: check the "
           "model, the loads and the results; design to the local code; a licensed engineer's review remains "
           "required.")

_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,Helvetica,Arial,sans-serif;margin:0;color:#1d2733;
background:#f6f7f9;line-height:1.45}
main{max-width:1180px;margin:0 auto;padding:18px 28px 60px;background:#fff}
h1{font-size:1.6em;margin:0.4em 0 0.1em}h2{border-bottom:2px solid #1f4e9c;padding-bottom:3px;margin-top:1.8em}
h3{margin-top:1.4em;color:#1f4e9c}
.caution{border-left:6px solid #c0392b;background:#fdf0ee;padding:10px 14px;margin:14px 0;font-weight:600}
table{border-collapse:collapse;margin:8px 0 14px;font-size:0.86em}
th,td{border:1px solid #d5dae1;padding:3px 8px;text-align:right}
th{background:#eef1f6;text-align:center}td.l,th.l{text-align:left}
pre{background:#f3f5f8;padding:10px;overflow-x:auto;font-size:0.85em;border:1px solid #dde2e8}
figure{margin:10px 0 18px}figure img{max-width:100%;border:1px solid #e1e5ea}
figcaption{font-size:0.85em;color:#4a5563}
.meta td{text-align:left}.ok{color:#1e8449;font-weight:600}.bad{color:#c0392b;font-weight:600}
nav a{margin-right:12px}
p.note{font-size:0.85em;color:#4a5563;margin-top:-8px}
"""


def _e(x) -> str:
    return html.escape(str(x))


def _num(v: float, scale: float = 1.0, digits: int = 2) -> str:
    if v is None or not math.isfinite(v):
        return "–"
    return f"{v / scale:.{digits}f}"


def _table(headers, rows, left_cols=1) -> str:
    head = "".join(f"<th class='l'>{_e(h)}</th>" if i < left_cols else f"<th>{_e(h)}</th>"
                   for i, h in enumerate(headers))
    body = []
    for row in rows:
        body.append("<tr>" + "".join(f"<td class='l'>{_e(c)}</td>" if i < left_cols else f"<td>{_e(c)}</td>"
                                     for i, c in enumerate(row)) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _img(b64: str, caption: str, view: tuple[str, str] | None = None) -> str:
    """A figure; ``view`` (kind, name) marks it with the view it is drawn in (figures.py)."""
    mark = f" data-view='{_e(view[0])}' data-view-name='{_e(view[1])}'" if view else ""
    return (f"<figure{mark}><img alt='{_e(caption)}' src='data:image/png;base64,{b64}'>"
            f"<figcaption>{_e(caption)}</figcaption></figure>")


def _ind_dict(ind):
    if ind is None:
        return None
    return ind.to_dict() if hasattr(ind, "to_dict") else dict(ind)


def _actions_to_draw(results, case: str) -> tuple[str, ...]:
    lo, hi = results.force_ranges(case)
    peak = np.maximum(np.abs(lo), np.abs(hi)).max(axis=0) if len(lo) else np.zeros(6)
    peaks = {a: float(peak[i]) for i, a in enumerate(ACTION_NAMES)}
    top_v = max(peaks["Vy"], peaks["Vz"])
    top_m = max(peaks["My"], peaks["Mz"], peaks["T"])
    out = ["N"]
    for a in ("Vz", "Vy"):
        if peaks[a] > 1e-3 * max(top_v, 1e-12) or (a == "Vz" and top_v == 0):
            out.append(a)
    for a in ("My", "Mz", "T"):
        if peaks[a] > 1e-3 * max(top_m, 1e-12) or (a == "My" and top_m == 0):
            out.append(a)
    return tuple(out[:5])


def _member_rows(results, env, members) -> list[list]:
    """Envelope rows of ``members`` (from `tables.member_envelope`)."""
    frame = results.frame
    names = list(results.cases)
    rows = []
    for k in members:
        k = int(k)
        L = float(results.L[k])
        defl = float(env["defl"][k])
        ratio = f"L/{L / defl:.0f}" if defl > 0 else "–"
        row = [frame.member_ids[k], f"{L:.3f}"]
        for i in range(6):
            lo, hi = float(env["lo"][k, i]), float(env["hi"][k, i])
            row += [_num(lo, 1e3), _num(hi, 1e3)] if math.isfinite(lo) else ["–", "–"]
        peak = {a: max(abs(float(env["lo"][k, i])), abs(float(env["hi"][k, i]))) for a, i in (("My", 4), ("Mz", 5))}
        gov = max(("My", "Mz"), key=lambda a: peak[a] if math.isfinite(peak[a]) else 0.0)
        i = ACTION_NAMES.index(gov)
        c = env["lo_case"][k, i] if abs(env["lo"][k, i]) >= abs(env["hi"][k, i]) else env["hi_case"][k, i]
        row += [f"{defl * 1e3:.2f}", ratio, f"{gov}: {names[int(c)] if names else ''}"]
        rows.append(row)
    return rows


def _csv_note(csv_names, table: str, shown: int, total: int, what: str) -> str:
    """A line under a shortened table naming the CSV file with all of it."""
    link = ""
    if csv_names and table in csv_names:
        name = csv_names[table]
        link = f" — all {total} in <a href='{_e(name)}'>{_e(name)}</a>"
    if shown >= total:
        return f"<p class='note'>{_e(what)}{link}.</p>" if link else ""
    return f"<p class='note'>{shown} of {total} {_e(what)} shown{link}.</p>"


def build_report(model, results, indeterminacy=None, *, date: _dt.datetime | None = None, plots: bool = True,
                 csv_names: dict[str, str] | None = None, env: dict | None = None) -> str:
    """The report as one HTML string (``plots=False`` leaves the figures out: tables and text only).

    Tables longer than `tables.SHOWN` rows show what a reader looks at first
    (supports, governing members, largest reactions and displacements);
    ``csv_names`` (table -> file name beside the report) are linked for the rest.
    """
    from .tables import SHOWN, governing_members, largest, member_envelope

    env = env if env is not None else member_envelope(results)
    from .. import __version__
    from ..ifc.writer import idealisation_text
    from .elevations import CONVENTION
    from .figures import case_figures, overview_figures, report_views

    frame = results.frame
    ind = _ind_dict(indeterminacy)
    date = date or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    path = getattr(model, "path", "") or ""
    title = f"plumbframe report — {os.path.basename(path) or frame.name or 'model'}"
    active = sorted(results.active_components)
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>{_e(title)}</title>"
             f"<meta name='viewport' content='width=device-width, initial-scale=1'><style>{_CSS}</style></head>"
             "<body><main>", f"<h1>{_e(title)}</h1>", f"<div class='caution'>{_e(CAUTION)}</div>"]
    parts.append("<nav><a href='#overview'>Model</a><a href='#indeterminacy'>Indeterminacy</a>"
                 "<a href='#cases'>Load cases and combinations</a><a href='#members'>Member forces</a>"
                 "<a href='#stability'>Stability and dynamics</a><a href='#equilibrium'>Equilibrium</a><a href='#notes'>Notes and defaults</a></nav>")
    supports = int(frame.supported.sum())
    route = getattr(model, "route", "")
    meta = [("Input file", path or "–"), ("Schema", getattr(model, "schema", "–")),
            ("How the frame was obtained", {"structural": "the file's structural analysis model",
                                            "physical": "derived from the physical beams, columns and members"}
             .get(route, route or "–")),
            ("Nodes / members / supports", f"{frame.n_nodes} / {frame.n_members} / {supports}"),
            ("Load cases / combinations", f"{len(frame.load_cases)} / {len(frame.combinations)}"),
            ("Idealisation", idealisation_text(results)), ("Unknowns solved", results.n_unknowns),
            ("Units in this report", "m, mm for displacements, kN, kN·m, rad; global axes are the file's world axes"),
            ("Program", f"plumbframe {__version__}"), ("Date", date.strftime("%Y-%m-%d %H:%M:%S UTC"))]
    parts.append("<table class='meta'>" + "".join(f"<tr><th class='l'>{_e(k)}</th><td>{_e(v)}</td></tr>"
                                                  for k, v in meta) + "</table>")

    parts.append("<h2 id='overview'>Model overview</h2>")
    views = report_views(frame) if plots else (None, [])
    for caption, b64, kind, view_name in (overview_figures(frame, results, views) if plots else ()):
        parts.append(_img(b64, caption, (kind, view_name)))
    if plots and (views[0] is not None or views[1]):
        parts.append(f"<p><small>{_e(CONVENTION)}</small></p>")
    parts.append("<h3>Nodes</h3>")
    node_rows = []
    sup_mask = frame.supported
    inclined = {sup.node: sup for sup in frame.inclined_supports}
    shown_nodes = list(range(frame.n_nodes)) if frame.n_nodes <= SHOWN else np.flatnonzero(sup_mask)[:SHOWN].tolist()
    for i in shown_nodes:
        nid = frame.node_ids[i]
        r = frame.restraints[i]
        support = "fixed" if r.all() else (" ".join(DOF_NAMES[c] for c in range(6) if r[c]) or "")
        if (frame.springs[i] > 0).any():
            support += " springs"
        if nid in inclined:
            held = " ".join(DOF_NAMES[c] for c in range(6) if inclined[nid].restrained[c])
            z = inclined[nid].axes[2]
            support = f"inclined: {held} along its own axes (its z: {z[0]:.3f}, {z[1]:.3f}, {z[2]:.3f})"
        node_rows.append([nid, *(f"{v:.3f}" for v in frame.nodes[i]), support or "–", frame.node_labels[i]])
    parts.append(_table(["Node", "X [m]", "Y [m]", "Z [m]", "Support", "Source"], node_rows))
    parts.append(_csv_note(csv_names, "nodes", len(shown_nodes), frame.n_nodes,
                           "nodes (the supported ones)" if len(shown_nodes) < frame.n_nodes else "nodes"))
    parts.append("<h3>Members</h3>")
    mem_rows = []
    shown_members = governing_members(results, env)
    for k in shown_members.tolist():
        mid = frame.member_ids[k]
        rel = []
        for end, tag in ((0, "i"), (1, "j")):
            names = [ACTION_NAMES[c] for c in range(6) if frame.releases[k, end, c]]
            names += [f"{ACTION_NAMES[c]} spring {frame.end_springs[k, end, c]:.4g} N·m/rad" for c in range(6)
                      if frame.end_springs[k, end, c] > 0]
            if names:
                rel.append(f"{tag}: {' '.join(names)}")
        mem_rows.append([mid, frame.node_ids[frame.members[k, 0]], frame.node_ids[frame.members[k, 1]],
                         f"{results.L[k]:.3f}", _sourced(frame.section_names[k], frame.section_sources[k]),
                         _sourced(frame.material_names[k], frame.material_sources[k]),
                         "axial only" if frame.truss[k] else "frame", "; ".join(rel) or "–", frame.member_labels[k]])
    parts.append(_table(["Member", "i", "j", "L [m]", "Section", "Material", "Kind", "Releases", "Source"],
                        mem_rows, left_cols=3))
    parts.append(_csv_note(csv_names, "members", len(shown_members), frame.n_members,
                           "members (the governing ones)" if len(shown_members) < frame.n_members else "members"))

    parts.append("<h2 id='indeterminacy'>Indeterminacy</h2>")
    if ind is not None:
        table = indeterminacy.format_table() if hasattr(indeterminacy, "format_table") else None
        if table:
            parts.append(f"<pre>{_e(table)}</pre>")
        else:
            parts.append(_table(["Count", "Value"], [["kinematic", ind["kinematic"]], ["static", ind["static"]],
                                                     ["mechanisms", ind["mechanisms"]]]))
        notes = ind.get("notes") or []
        if notes and not table:
            parts.append("<ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes) + "</ul>")
    else:
        parts.append("<p>The counts were not computed for this run.</p>")
    from .joints import joint_count_section

    parts.append(joint_count_section(indeterminacy))

    parts.append("<h2 id='cases'>Load cases and combinations</h2>")
    for name, cr in results.cases.items():
        kind = "combination" if cr.kind == "combination" else "load case"
        parts.append(f"<h3>{_e(name)} <small>({kind})</small></h3>")
        if cr.kind == "combination" and cr.factors:
            parts.append("<p>" + " + ".join(f"{f:g} × {_e(c)}" for c, f in cr.factors) + "</p>")
        if plots:
            for caption, b64, kind, view_name in case_figures(results, name, _actions_to_draw(results, name), views):
                parts.append(_img(b64, caption, (kind, view_name)))
        sup = np.flatnonzero(frame.supported)
        heads = ["Node"] + [f"{REACTION_NAMES[c]} [{'kN' if c < 3 else 'kN·m'}]" for c in active]
        shown_sup = sup if sup.size <= SHOWN else sup[largest(np.linalg.norm(cr.reactions[sup, :3], axis=1))]
        rows = [[frame.node_ids[i], *(_num(cr.reactions[i, c], 1e3) for c in active)] for i in shown_sup]
        total = ["sum", *(_num(cr.reactions[sup, c].sum(), 1e3) if c < 3 else "" for c in active)]
        parts.append("<p><b>Reactions</b> (forces the supports exert on the structure, global axes"
                     + (f"; the {len(shown_sup)} largest, the sum over all {sup.size}" if len(shown_sup) < sup.size
                        else "") + ")</p>")
        parts.append(_table(heads, rows + [total]))
        parts.append(_csv_note(csv_names, "reactions", len(shown_sup), int(sup.size), "supports"))
        d = cr.displacements
        tn = np.linalg.norm(d[:, :3], axis=1)
        order = np.argsort(-tn)[: min(12, frame.n_nodes)]
        heads = ["Node"] + [f"{DOF_NAMES[c]} [{'mm' if c < 3 else 'mrad'}]" for c in active]
        rows = [[frame.node_ids[i], *(_num(d[i, c], 1e-3, 3) for c in active)] for i in order]
        parts.append(f"<p><b>Displacements</b> (global axes; the {len(order)} largest)</p>")
        parts.append(_table(heads, rows))
        parts.append(_csv_note(csv_names, "displacements", len(order), frame.n_nodes, "nodes"))

    parts.append("<h2 id='members'>Member forces: envelope over all cases and combinations</h2>")
    parts.append("<p>Internal forces in member axes (x from end i to end j, z from the member's Axis, "
                 "y = z × x); N &gt; 0 tension; values in kN and kN·m. The deflection is the largest distance of "
                 "the deformed axis from the chord between its displaced ends.</p>")
    heads = ["Member", "L [m]"]
    for a in ACTION_NAMES:
        heads += [f"{a} min", f"{a} max"]
    heads += ["δ [mm]", "span/δ", "governing moment"]
    parts.append(_table(heads, _member_rows(results, env, shown_members)))
    parts.append(_csv_note(csv_names, "member_forces", len(shown_members), frame.n_members,
                           "members (the governing ones: largest |N|, |V|, |M| and deflection in turn)"
                           if len(shown_members) < frame.n_members else "members"))

    from .stability import stability_section

    parts.append(stability_section(results, plots))

    parts.append("<h2 id='equilibrium'>Equilibrium check</h2>")
    parts.append("<p>Relative residual |Σ loads + Σ reactions| / Σ |forces| of the whole structure, "
                 "forces and moments (moments divided by the frame size).</p>")
    rows = []
    for name, cr in results.cases.items():
        r = cr.equilibrium_residual
        ok = math.isfinite(r) and r < 1e-6
        rows.append([name, f"{r:.2e}" if math.isfinite(r) else "–", "ok" if ok else "CHECK"])
    parts.append(_table(["Case or combination", "Residual", "Verdict"], rows))

    parts.append("<h2 id='notes'>Notes, defaults and derivations</h2>")
    notes = list(getattr(model, "notes", None) or ())
    diags = list(getattr(model, "diagnostics", None) or ()) + list(results.diagnostics)
    if notes:
        parts.append("<h3>How the model was read</h3><ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes) + "</ul>")
    if diags:
        parts.append("<h3>Diagnostics</h3><ul>" + "".join(
            f"<li><b>{_e(d.level)}</b>: {_e(d.message)}</li>" for d in diags) + "</ul>")
    if not notes and not diags:
        parts.append("<p>The reader reported no defaults or derivations.</p>")
    parts.append(f"<div class='caution'>{_e(CAUTION)}</div>")
    parts.append("</main></body></html>")
    return "\n".join(parts)



def write_report(path, model, results, indeterminacy=None, *, date: _dt.datetime | None = None) -> str:
    """Write the HTML report to ``path`` (atomically); returns the path."""
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise AnalysisError(f"{path}: cannot write the report: the folder {folder} does not exist")
    from ..fileio import atomic_text
    from .tables import csv_paths, csv_tables, member_envelope

    env = member_envelope(results)
    paths = csv_paths(path)
    text = build_report(model, results, indeterminacy, date=date, env=env,
                        csv_names={k: os.path.basename(v) for k, v in paths.items()})
    for name, table in csv_tables(results, env).items():  # the complete tables beside the report
        atomic_text(paths[name], table, suffix=".csv")
    atomic_text(path, text, suffix=".html")
    return path


def _sourced(name: str, source: str) -> str:
    """A section or material name, with where its values came from unless that is the file."""
    return (name or "–") + (f" ({source})" if source and source != "file" else "")
