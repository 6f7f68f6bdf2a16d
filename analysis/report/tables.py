"""The report's tables: complete ones as CSV files beside the report, short ones (what a reader looks at) in it.

A building has tens of thousands of members: the HTML shows the governing
members (largest |N|, |V|, |M| and deflection), the supports with the largest
reactions and the largest displacements, each table at most `SHOWN` rows; the
complete tables go to ``<report>.<table>.csv`` in the same folder (SI units
as in the results JSON: m, N, N*m, rad).
"""
from __future__ import annotations

import csv
import io
import math
import os

import numpy as np

from ..model import ACTION_NAMES, DOF_NAMES, REACTION_NAMES

__all__ = ["SHOWN", "csv_tables", "csv_paths", "member_envelope", "governing_members", "largest"]

#: rows of a table shown in the HTML; the CSV beside it has all of them
SHOWN = 40


def csv_paths(report_path: str) -> dict[str, str]:
    """Table name -> path of its CSV beside ``report_path`` (``r.html`` -> ``r.members.csv`` ...)."""
    root = os.path.splitext(os.fspath(report_path))[0]
    return {name: f"{root}.{name}.csv" for name in ("nodes", "members", "member_forces", "reactions",
                                                      "displacements")}


def member_envelope(results) -> dict[str, np.ndarray]:
    """Per member over all cases: min and max of each action (m,6), the governing case indices,
    the largest axis deflection from the chord (m,) and the case giving it."""
    names = list(results.cases)
    m = results.frame.n_members
    lo = np.full((m, 6), np.inf)
    hi = np.full((m, 6), -np.inf)
    lo_case = np.zeros((m, 6), int)
    hi_case = np.zeros((m, 6), int)
    defl = np.zeros(m)
    defl_case = np.zeros(m, int)
    for c, name in enumerate(names):
        a, b = results.force_ranges(name)
        rel, _ = results.axis_deflections(name)
        lower, higher = a < lo, b > hi
        lo, hi = np.where(lower, a, lo), np.where(higher, b, hi)
        lo_case[lower], hi_case[higher] = c, c
        more = rel > defl
        defl, defl_case = np.where(more, rel, defl), np.where(more, c, defl_case)
    return {"lo": lo, "hi": hi, "lo_case": lo_case, "hi_case": hi_case, "defl": defl, "defl_case": defl_case}


def governing_members(results, env: dict[str, np.ndarray], limit: int = SHOWN) -> np.ndarray:
    """Members a reader looks at first: the largest |N|, |Vy|, |Vz|, |T|, |My|, |Mz| and deflection/span,
    taken in turn until ``limit`` (ordered by the largest bending moment)."""
    m = results.frame.n_members
    if m <= limit:
        return np.arange(m)
    peak = np.maximum(np.abs(env["lo"]), np.abs(env["hi"]))
    peak[~np.isfinite(peak)] = 0.0
    L = np.maximum(np.asarray(results.L, float), 1e-12)
    ranks = [np.argsort(-peak[:, a], kind="stable") for a in range(6)] + [np.argsort(-env["defl"] / L, kind="stable")]
    chosen: dict[int, None] = {}
    depth = 0
    while len(chosen) < limit and depth < m:
        for r in ranks:
            if len(chosen) >= limit:
                break
            chosen.setdefault(int(r[depth]), None)
        depth += 1
    picked = np.array(list(chosen), dtype=int)
    moment = np.maximum(peak[picked, 4], peak[picked, 5])
    return picked[np.argsort(-moment, kind="stable")]


def largest(values: np.ndarray, limit: int = SHOWN) -> np.ndarray:
    """Indices of the ``limit`` largest ``values``, largest first."""
    order = np.argsort(-np.asarray(values, float), kind="stable")
    return order[:limit]


def _csv(header: list[str], rows) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def _num(v: float) -> str:
    return repr(float(v)) if math.isfinite(v) else ""


def csv_tables(results, env: dict[str, np.ndarray] | None = None) -> dict[str, str]:
    """Table name -> CSV text of the complete tables (SI units; see the module docstring)."""
    frame = results.frame
    names = list(results.cases)
    env = env if env is not None else member_envelope(results)
    active = sorted(results.active_components)
    out = {}
    out["nodes"] = _csv(["node", "x_m", "y_m", "z_m", *[f"restrained_{DOF_NAMES[c]}" for c in range(6)], "source"],
                        ([nid, *map(_num, frame.nodes[i]), *(int(v) for v in frame.restraints[i]),
                          frame.node_sources[i] or ""] for i, nid in enumerate(frame.node_ids)))
    out["members"] = _csv(["member", "node_i", "node_j", "length_m", "section", "material", "kind", "source"],
                          ([mid, frame.node_ids[frame.members[k, 0]], frame.node_ids[frame.members[k, 1]],
                            _num(results.L[k]), frame.section_names[k] or "", frame.material_names[k] or "",
                            "axial" if frame.truss[k] else "frame", frame.member_sources[k] or ""]
                           for k, mid in enumerate(frame.member_ids)))
    head = ["member", "length_m"]
    for a in ACTION_NAMES:
        head += [f"{a}_min", f"{a}_min_case", f"{a}_max", f"{a}_max_case"]
    head += ["deflection_m", "deflection_case"]
    lo, hi = env["lo"].tolist(), env["hi"].tolist()
    lc, hc = env["lo_case"].tolist(), env["hi_case"].tolist()
    defl, dc = env["defl"].tolist(), env["defl_case"].tolist()
    L = np.asarray(results.L, float).tolist()

    def member_row(k: int, mid: str) -> list:
        row = [mid, repr(L[k])]
        for a in range(6):
            row += [_num(lo[k][a]), names[lc[k][a]] if names else "", _num(hi[k][a]), names[hc[k][a]] if names else ""]
        return row + [repr(defl[k]), names[dc[k]] if names else ""]

    out["member_forces"] = _csv(head, (member_row(k, mid) for k, mid in enumerate(frame.member_ids)))
    sup = np.flatnonzero(frame.supported)
    out["reactions"] = _csv(["case", "node", *[f"{REACTION_NAMES[c]}_{'N' if c < 3 else 'Nm'}" for c in active]],
                            ([name, frame.node_ids[i], *(_num(cr.reactions[i, c]) for c in active)]
                             for name, cr in results.cases.items() for i in sup))
    out["displacements"] = _csv(["case", "node", *[f"{DOF_NAMES[c]}_{'m' if c < 3 else 'rad'}" for c in active]],
                                ([name, nid, *(repr(v) for v in row)]
                                 for name, cr in results.cases.items()
                                 for nid, row in zip(frame.node_ids, cr.displacements[:, active].tolist())))
    return out
