"""Run ``plumbframe check`` and ``analyze`` on every IFC file in a folder and print one table.

Usage::

    .venv/bin/python tools/real_models.py DIR [--timeout S] [--out TABLE.md] [--maps MAPDIR] [-- EXTRA CLI OPTIONS]

For each ``*.ifc`` file (sorted by name) three subprocesses run (a fourth validates the output), each with the
timeout: a probe (this script with ``--probe``: it reads the model as the CLI
does and measures the included elements' body volumes with
``ifcopenshell.geom``), ``plumbframe check`` and ``plumbframe analyze … --json``.
Options after ``--`` go to both commands (e.g. ``--members frame``). With
``--maps MAPDIR``, a file ``MAPDIR/<name>.toml`` beside a model's name is
passed as its ``--materials`` map and ``MAPDIR/<name>.sections.toml`` as its
``--sections`` map (the only per-file inputs).

Columns: file; schema; elements (IfcBeam, IfcColumn, IfcMember in the file);
included (elements that became members); left out by reason; materials by
source (elements); nodes, members, supports of the analytical frame; exit
codes of check and analyze; seconds and peak resident memory of analyze; the
largest equilibrium residual; the total vertical reaction of the
"Self-weight" case beside ρ·g·V summed over the included elements (ρ of the
element's member, V the volume of its body mesh; where the geometry kernel
cannot build a body in place, the volume of its Body items built alone, as
the note says; the number of included elements whose body cannot be built at
all is given beside it, and then no ratio) and their ratio; the largest translation of a node under
self-weight (a barely held part of the frame shows here first); whether the written results IFC passes
``ifcopenshell.validate`` (schema and where-rules; a fourth subprocess),
counting only problems beyond those the input file has itself; the
first line of the error or mechanism, if any. The table is Markdown.
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
G = 9.80665  # standard gravity, m/s2 (the engine's STANDARD_GRAVITY)


# --------------------------------------------------------------------------- probe (runs in its own process)
def _mesh_volume(verts, faces) -> float:
    import numpy as np

    v = np.asarray(verts, dtype=float).reshape(-1, 3)
    f = np.asarray(faces, dtype=np.int64).reshape(-1, 3)
    if not len(f):
        return 0.0
    a, b, c = v[f[:, 0]], v[f[:, 1]], v[f[:, 2]]
    # divergence theorem over a closed triangulated surface (common practice, no source)
    return float(abs(np.einsum("ij,ij->i", a, np.cross(b, c)).sum()) / 6.0)


def _item_volume(settings, element) -> float | None:
    """Volume of an element's Body items built one by one without its placement (mapped items through their
    source), or None when one of them cannot be built either."""
    import ifcopenshell.geom

    rep = getattr(element, "Representation", None)
    items = [i for r in (rep.Representations if rep else ()) if r.RepresentationIdentifier == "Body" for i in r.Items]
    total = 0.0
    while items:
        item = items.pop()
        if item.is_a("IfcMappedItem"):
            items.extend(item.MappingSource.MappedRepresentation.Items)
            continue
        try:
            shape = ifcopenshell.geom.create_shape(settings, item)
        except Exception:
            return None
        total += _mesh_volume(shape.verts, shape.faces)
    return total if total > 0 else None


def probe(path: str, extra: list[str]) -> dict:
    sys.path.insert(0, str(ROOT))
    import ifcopenshell
    import ifcopenshell.geom

    from analysis.cli import build_parser
    from analysis.ifc.reader import read_ifc
    from analysis.ifc.selection import reason_kind, select_frame_elements

    out: dict = {"file": os.path.basename(path)}
    args = build_parser().parse_args(["check", path, *extra])
    f = ifcopenshell.open(path)
    out["schema"] = f.schema
    out["elements"] = sum(len(f.by_type(c)) for c in ("IfcBeam", "IfcColumn", "IfcMember")) if f.schema else 0
    kw = dict(model=args.model, merge_tolerance=args.merge_tolerance, select=args.select, exclude=args.exclude,
              supports=args.supports, strict=args.strict, members=args.members)
    if getattr(args, "materials", None):
        kw["materials"] = args.materials
    if getattr(args, "sections", None):
        kw["sections"] = args.sections
    try:
        model = read_ifc(path, **kw)
    except Exception as exc:  # reported in the table; check/analyze give the exit code
        out["error"] = f"{type(exc).__name__}: {str(exc).splitlines()[0][:200]}"
        return out
    frame = model.frame
    out["route"] = model.route
    out["nodes"], out["members"] = frame.n_nodes, frame.n_members
    out["supports"] = int(frame.restraints.any(axis=1).sum())
    left = list(getattr(model, "left_out", []) or [])
    out["left_out"] = dict(Counter(reason_kind(x.reason) for x in left))
    if model.route != "physical":
        out["included"] = frame.n_members
        return out
    chosen, _ = select_frame_elements(f, select=args.select, exclude=args.exclude)
    gone = {x.entity_id for x in left}
    included = [e for e in chosen if e.id() not in gone]
    out["included"] = len(included)
    density = {}
    msrc = getattr(frame, "material_sources", None)
    sources: Counter = Counter()
    by_gid = {}
    for k, gid in enumerate(frame.member_sources):
        if gid not in by_gid:
            by_gid[gid] = k
    for e in included:
        k = by_gid.get(e.GlobalId)
        if k is None:  # merged into another element's member: that member's density
            k = next((j for j, lab in enumerate(frame.member_labels) if f"#{e.id()} " in lab), None)
        density[e.id()] = float(frame.density[k]) if k is not None else 0.0
        if msrc is not None and k is not None:
            sources[msrc[k]] += 1
    out["materials"] = dict(sources)
    settings = ifcopenshell.geom.settings()
    volume = {}
    if included:
        it = ifcopenshell.geom.iterator(settings, f, max(1, min(4, os.cpu_count() or 1)), include=included)
        ok = it.initialize()
        while ok:
            shape = it.get()
            volume[int(shape.id)] = _mesh_volume(shape.geometry.verts, shape.geometry.faces)
            ok = it.next()
    # bodies the kernel cannot build in place (a placement it refuses): their representation items alone,
    # whose volume the placement does not change
    unplaced = 0
    for e in included:
        if e.id() in volume:
            continue
        v = _item_volume(settings, e)
        if v is not None:
            volume[e.id()] = v
            unplaced += 1
    out["unplaced_volume"] = unplaced
    out["no_volume"] = sum(1 for e in included if e.id() not in volume)
    out["rho_g_V"] = sum(density[e.id()] * volume.get(e.id(), 0.0) for e in included) * G
    return out


# --------------------------------------------------------------------------- runner
def _run(cmd: list[str], timeout: float) -> tuple[int | None, float, float, str]:
    """(exit code or None on timeout, seconds, peak RSS MB, stderr) of one child process."""
    t0 = time.perf_counter()
    with tempfile.TemporaryFile() as err, tempfile.TemporaryFile() as out:
        proc = subprocess.Popen(cmd, stdout=out, stderr=err, cwd=ROOT)
        rc: int | None = None
        peak = 0.0
        while True:
            pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
            if pid:
                rc = os.waitstatus_to_exitcode(status)
                peak = usage.ru_maxrss / 1024.0
                proc.returncode = rc
                break
            if time.perf_counter() - t0 > timeout:
                proc.kill()
                _, status, usage = os.wait4(proc.pid, 0)
                proc.returncode = -9
                peak = usage.ru_maxrss / 1024.0
                break
            time.sleep(0.05)
        seconds = time.perf_counter() - t0
        err.seek(0)
        out.seek(0)
        text = err.read().decode("utf-8", "replace") + out.read().decode("utf-8", "replace")
    return rc, seconds, peak, text


def _first_problem(text: str) -> str:
    lines = [ln.strip() for ln in text.splitlines()]
    if any("Traceback (most recent call last)" in ln for ln in lines):
        return "TRACEBACK"
    for ln in lines:
        if ln.startswith("mechanism 1:"):
            return ln[:140]
    for ln in lines:
        if ln.startswith("plumbframe: error:"):
            return ln[len("plumbframe: error:"):].strip()[:140]
    return ""


def validate(path: str, source: str | None = None) -> dict:
    """Schema and where-rule problems of a written IFC (``ifcopenshell.validate``; needs pytest importable),
    and of its ``source`` (the input), whose own defects the copy keeps."""
    import ifcopenshell
    import ifcopenshell.validate

    def problems(p: str) -> list:
        logger = ifcopenshell.validate.json_logger()
        ifcopenshell.validate.validate(ifcopenshell.open(p), logger, express_rules=True)
        return [s for s in logger.statements if s.get("level") in ("error", "warning")]

    out = problems(path)
    own = len(problems(source)) if source else 0
    return {"problems": len(out), "input_problems": own, "first": str(out[0].get("message"))[:200] if out else ""}


def _fmt_counts(d: dict | None) -> str:
    if not d:
        return "–"
    return ", ".join(f"{v} {k}" for k, v in sorted(d.items()))


def measure(path: Path, timeout: float, extra: list[str]) -> dict:
    py = sys.executable
    row: dict = {"file": path.name}
    rc, _, _, text = _run([py, __file__, "--probe", str(path), "--", *extra], timeout)
    try:
        row.update(json.loads(text.strip().splitlines()[-1]))
    except (ValueError, IndexError):
        row["probe"] = _first_problem(text) or f"probe exit {rc}"
    with tempfile.TemporaryDirectory() as tmp:
        rc_c, _, _, text_c = _run([py, "-m", "analysis.cli", "check", str(path), *extra], timeout)
        js = os.path.join(tmp, "r.json")
        rc_a, sec, peak, text_a = _run([py, "-m", "analysis.cli", "analyze", str(path), "-o", os.path.join(tmp, "r.ifc"),
                                        "--json", js, "-q", *extra], timeout)
        row.update(check=rc_c, analyze=rc_a, seconds=sec, peak_mb=peak)
        row["problem"] = _first_problem(text_a) or _first_problem(text_c)
        out_ifc = os.path.join(tmp, "r.ifc")
        if rc_a == 0 and os.path.exists(out_ifc):
            rc_v, _, _, text_v = _run([py, __file__, "--validate", out_ifc, "--against", str(path)], timeout)
            try:
                row["valid"] = json.loads(text_v.strip().splitlines()[-1])
            except (ValueError, IndexError):
                row["valid"] = {"problems": None, "first": _first_problem(text_v) or f"validate exit {rc_v}"}
        if rc_a == 0 and os.path.exists(js):
            with open(js) as fh:
                doc = json.load(fh)
            cases = doc.get("cases", {})
            row["residual"] = max((c.get("equilibrium_residual") or 0.0 for c in cases.values()), default=None)
            sw = cases.get("Self-weight")
            if sw:
                row["reaction_z"] = sum(r.get("fz", 0.0) for r in sw.get("reactions", {}).values())
                row["max_u"] = max((sum((d.get(k) or 0.0) ** 2 for k in ("ux", "uy", "uz")) ** 0.5
                                    for d in sw.get("displacements", {}).values()), default=None)
    return row


def _fmt_valid(v: dict | None) -> str:
    if not v:
        return "–"
    n, own = v.get("problems"), v.get("input_problems") or 0
    if n == 0:
        return "yes"
    if n is not None and n <= own:
        return f"no new problem (the input has {own})"
    return (f"{n} problem(s) ({own} in the input): " if n is not None else "not checked: ") + \
        str(v.get("first", "")).replace("|", "/")


def table(rows: list[dict]) -> str:
    head = ("| file | schema | elements | included | left out | materials | nodes | members | supports | check | "
            "analyze | s | MB | residual | ΣRz self-weight kN | ρ·g·V kN | ratio | max u self-weight mm | "
            "results IFC valid | note |")
    lines = [head, "|" + "---|" * 20]
    for r in rows:
        rz, w = r.get("reaction_z"), r.get("rho_g_V")
        missing = int(r.get("no_volume") or 0)
        ratio = f"{rz / w:.3f}" if rz is not None and w and not missing else "–"
        res = r.get("residual")
        note = r.get("problem") or r.get("error") or r.get("probe") or ""
        if r.get("map"):
            note = f"map {r['map']}" + (f"; {note}" if note else "")
        if r.get("unplaced_volume"):
            note = (f"V of {r['unplaced_volume']} from their body items alone (the kernel cannot place them)"
                    + (f"; {note}" if note else ""))
        lines.append("| " + " | ".join([
            r["file"], str(r.get("schema", "–")), str(r.get("elements", "–")), str(r.get("included", "–")),
            _fmt_counts(r.get("left_out")), _fmt_counts(r.get("materials")), str(r.get("nodes", "–")),
            str(r.get("members", "–")), str(r.get("supports", "–")),
            str(r.get("check", "–")), str(r.get("analyze", "–")) if r.get("analyze") is not None else "timeout",
            f"{r.get('seconds', 0):.1f}", f"{r.get('peak_mb', 0):.0f}",
            f"{res:.1e}" if isinstance(res, float) else "–",
            f"{rz / 1e3:.2f}" if rz is not None else "–",
            (f"{w / 1e3:.2f}" if w else "–") + (f" ({missing} without geometry)" if missing else ""), ratio,
            f"{r['max_u'] * 1e3:.3g}" if r.get("max_u") is not None else "–",
            _fmt_valid(r.get("valid")), note.replace("|", "/")]) + " |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    extra: list[str] = []
    if "--" in argv:
        i = argv.index("--")
        argv, extra = argv[:i], argv[i + 1:]
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("folder", nargs="?")
    p.add_argument("--timeout", type=float, default=600.0, help="seconds per subprocess (default 600)")
    p.add_argument("--out", help="also write the table to this file")
    p.add_argument("--maps", metavar="MAPDIR", help="folder of per-model material maps <model name>.toml and "
                   "section maps <model name>.sections.toml")
    p.add_argument("--probe", metavar="FILE", help=argparse.SUPPRESS)
    p.add_argument("--validate", metavar="FILE", help=argparse.SUPPRESS)
    p.add_argument("--against", metavar="FILE", help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if args.validate:
        print(json.dumps(validate(args.validate, args.against)))
        return 0
    if args.probe:
        print(json.dumps(probe(args.probe, extra)))
        return 0
    if not args.folder:
        p.error("name the folder of IFC files")
    files = sorted(Path(args.folder).glob("*.ifc"))
    rows = []
    for path in files:
        own = Path(args.maps) / f"{path.stem}.toml" if args.maps else None
        sections = Path(args.maps) / f"{path.stem}.sections.toml" if args.maps else None
        given = [p for p in (own, sections) if p is not None and p.exists()]
        row = measure(path, args.timeout, extra + (["--materials", str(own)] if own in given else [])
                      + (["--sections", str(sections)] if sections in given else []))
        if given:
            row["map"] = " and ".join(p.name for p in given)
        rows.append(row)
        print(f"{path.name}: check {row.get('check')}, analyze {row.get('analyze')}, {row.get('seconds', 0):.1f} s",
              file=sys.stderr)
    text = table(rows)
    print(text)
    if args.out:
        Path(args.out).write_text(text + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
