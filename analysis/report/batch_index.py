"""``index.html`` of a batch: every model's row, a link to its report, and the variants side by side.

One self-contained page (no external assets): the summary table, sortable by
any column with a click on its heading (a few lines of plain JavaScript), and,
where the batch ran variants, a comparison table of each model's governing
values per variant. Governing values are shown signed and sort by magnitude.
"""
from __future__ import annotations

import html
import math
from typing import Any

__all__ = ["index_html"]

_SORT_JS = """
function plumbframeSortKey(td){var v=td.getAttribute('data-v');if(v===null)v=td.textContent;
 if(v==='')return[2,''];var n=Number(v);return isNaN(n)?[1,v.toLowerCase()]:[0,n];}
document.querySelectorAll('table.sortable th[data-col]').forEach(function(th){
 th.addEventListener('click',function(){
  var body=th.closest('table').tBodies[0],col=+th.getAttribute('data-col'),asc=th.getAttribute('data-dir')!=='asc';
  var rows=Array.prototype.slice.call(body.rows);
  rows.sort(function(a,b){var x=plumbframeSortKey(a.cells[col]),y=plumbframeSortKey(b.cells[col]);
   if(x[0]!==y[0])return x[0]-y[0];var c=x[1]<y[1]?-1:(x[1]>y[1]?1:0);return asc?c:-c;});
  rows.forEach(function(r){body.appendChild(r);});
  th.closest('tr').parentNode.querySelectorAll('th').forEach(function(h){h.removeAttribute('data-dir');});
  th.setAttribute('data-dir',asc?'asc':'desc');});});
"""

_CSS = """
body{font-family:system-ui,-apple-system,Segoe UI,sans-serif;margin:1.5em;color:#222}
table{border-collapse:collapse;font-size:13px;margin:0.5em 0 1.5em}
th,td{border:1px solid #ccc;padding:3px 6px;text-align:right;vertical-align:top}
th{background:#f1f1f1;cursor:pointer;user-select:none;white-space:nowrap}
th[data-dir=asc]::after{content:' \\25B2'}th[data-dir=desc]::after{content:' \\25BC'}
td.t{text-align:left}small{color:#666}td.m{text-align:left;max-width:32em;font-size:12px}
tr.s-unstable td{background:#fff4e0}tr.s-bad-input td,tr.s-internal-error td{background:#fde8e8}
.note{color:#555;font-size:13px;max-width:60em}
"""

_STATUS_CLASS = {"analysed": "s-analysed", "unstable": "s-unstable", "bad input": "s-bad-input",
                 "internal error": "s-internal-error"}


def _e(v: Any) -> str:
    return html.escape("" if v is None else str(v), quote=True)


def _num(v: Any) -> float | None:
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) else None


def _cell(text: str, sort: Any = None, cls: str = "") -> str:
    attr = f" data-v='{_e(sort)}'" if sort is not None else ""
    return f"<td{attr}{f' class={cls}' if cls else ''}>{text}</td>"


def _force(row: dict[str, Any], label: str, scale: float) -> str:
    v = _num(row.get(label))
    if v is None:
        return _cell("", "")
    where = " · ".join(_e(x) for x in (row.get(f"{label}_component") if label != "N" else None,
                                        row.get(f"{label}_member"), row.get(f"{label}_case")) if x)
    return _cell(f"{v / scale:.2f}<br><small>{where}</small>", abs(v))


def _int(row: dict[str, Any], key: str) -> str:
    v = row.get(key)
    return _cell(_e(v), v if v is not None else "")


def _main_table(rows: list[dict[str, Any]], variants: bool) -> str:
    heads = ["model"] + (["variant"] if variants else []) + [
        "status", "run", "message", "nodes", "members", "kinematic", "static", "mechanisms",
        "largest displacement [mm]", "N [kN]", "V [kN]", "M [kN·m]", "seconds", "peak memory [MB]", "report"]
    out = ["<table id='models' class='sortable'><thead><tr>"]
    out += [f"<th data-col='{i}'>{_e(h)}</th>" for i, h in enumerate(heads)]
    out.append("</tr></thead><tbody>")
    for r in rows:
        cells = [_cell(_e(r.get("model")), cls="t")]
        if variants:
            cells.append(_cell(_e(r.get("variant")), cls="t"))
        cells.append(_cell(_e(r.get("status")) + f" <small>(exit {_e(r.get('exit'))})</small>", r.get("status"), "t"))
        cells.append(_cell(_e(r.get("run")), cls="t"))
        cells.append(_cell(_e(r.get("message")), cls="m"))
        cells += [_int(r, k) for k in ("nodes", "members", "kinematic", "static", "mechanisms")]
        d = _num(r.get("max_displacement"))
        cells.append(_cell("" if d is None else f"{d * 1e3:.2f}<br><small>{_e(r.get('max_displacement_node'))} · "
                                                f"{_e(r.get('max_displacement_case'))}</small>", "" if d is None else d))
        cells += [_force(r, "N", 1e3), _force(r, "V", 1e3), _force(r, "M", 1e3)]
        s, m = _num(r.get("seconds")), _num(r.get("peak_memory"))
        cells.append(_cell("" if s is None else f"{s:.2f}", "" if s is None else s))
        cells.append(_cell("" if m is None else f"{m:.0f}", "" if m is None else m))
        link = ""
        if r.get("report") and r.get("folder"):
            href = f"{r['folder']}/{r['report']}"
            link = f"<a href='{_e(href)}'>report</a>"
        cells.append(_cell(link, cls="t"))
        cls = _STATUS_CLASS.get(str(r.get("status")), "")
        out.append(f"<tr class='{cls}'>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _comparison(rows: list[dict[str, Any]], names: list[str]) -> str:
    """Models down, variants across: status, largest displacement and governing N, V, M of each."""
    by_model: dict[str, dict[str, dict[str, Any]]] = {}
    for r in rows:
        by_model.setdefault(str(r.get("model")), {})[str(r.get("variant"))] = r
    sub = ["status", "displacement [mm]", "N [kN]", "V [kN]", "M [kN·m]"]
    out = ["<table id='variants' class='sortable'><thead><tr><th rowspan='2' data-col='0'>model</th>"]
    out += [f"<th colspan='{len(sub)}'>{_e(n)}</th>" for n in names]
    out.append("</tr><tr>")
    col = 1
    for _n in names:
        for s in sub:
            out.append(f"<th data-col='{col}'>{_e(s)}</th>")
            col += 1
    out.append("</tr></thead><tbody>")
    for model, per in by_model.items():
        cells = [_cell(_e(model), cls="t")]
        for n in names:
            got = per.get(n)
            if got is None:
                cells += [_cell("", "")] * len(sub)
                continue
            r = got
            link = _e(r.get("status"))
            if r.get("report") and r.get("folder"):
                link = f"<a href='{_e(r['folder'] + '/' + r['report'])}'>{link}</a>"
            cells.append(_cell(link, r.get("status"), "t"))
            d = _num(r.get("max_displacement"))
            cells.append(_cell("" if d is None else f"{d * 1e3:.2f}", "" if d is None else d))
            cells += [_force(r, "N", 1e3), _force(r, "V", 1e3), _force(r, "M", 1e3)]
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def index_html(doc: dict[str, Any]) -> str:
    """The page for a ``plumbframe.batch/1`` summary document."""
    from .html import CAUTION

    rows = list(doc.get("rows", []))
    variant_names = list(doc.get("variants") or {})
    counts = doc.get("counts", {})
    n_models = len({r.get("model") for r in rows})
    title = f"plumbframe batch — {n_models} model{'s' if n_models != 1 else ''}"
    if variant_names:
        title += f", {len(variant_names)} variant{'s' if len(variant_names) != 1 else ''}, {len(rows)} rows"
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>{_e(title)}</title>"
             f"<style>{_CSS}</style></head><body><h1>{_e(title)}</h1>"]
    parts.append(f"<p class='note'>plumbframe {_e(doc.get('plumbframe'))}, {_e(doc.get('created'))}; ran "
                 f"{_e(doc.get('ran'))} in {_e(doc.get('seconds'))} s; exit code {_e(doc.get('exit_code'))}. "
                 + ", ".join(f"{_e(n)} {_e(s)}" for s, n in sorted(counts.items())) + ".</p>")
    parts.append("<p class='note'>Click a column heading to sort. Governing values are the largest magnitudes "
                 "over every load case and combination (shown signed, sorted by magnitude; N &gt; 0 tension), "
                 "V and M the larger of the two components named below the value. summary.csv and summary.json "
                 "hold the same rows in SI units.</p>")
    parts.append(_main_table(rows, bool(variant_names)))
    if len(variant_names) > 1:
        parts.append("<h2>Variants side by side</h2>")
        settings = doc.get("variants") or {}
        parts.append("<ul class='note'>" + "".join(
            f"<li><b>{_e(n)}</b>: {_e(', '.join(f'{k} = {v}' for k, v in (settings.get(n) or {}).items()) or 'the command line options')}</li>"
            for n in variant_names) + "</ul>")
        parts.append(_comparison(rows, variant_names))
    parts.append(f"<p class='note'><b>Caution.</b> {_e(CAUTION)}</p>")
    parts.append(f"<script>{_SORT_JS}</script></body></html>\n")
    return "".join(parts)
