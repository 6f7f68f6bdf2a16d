"""Benchmark: the whole round trip on a building, against a general-purpose pipeline on the same file.

Model: the 10 x 10-column, 100-storey structural analysis model of
`bench_reader.generate_structural` (IFC4, 10,100 point connections, 28,000
curve members, one load case and one combination; about 20 MB), generated
once into a temporary folder (or ``--keep FILE``).

Measured, each in its own process and one after another (never two
tower-sized processes at once):

* reference: a general-purpose pipeline on the same file: ``ifcopenshell.open``,
  nodes, members, profiles and supports walked from the entities, the member
  matrices assembled vectorised (batched 12 x 12, one COO -> CSR), the fixed-end
  forces of the line loads, PARDISO (pypardiso, SPD, both load sets as one
  block; SuperLU where pypardiso is missing) and a JSON of all displacements;
* plumbframe: ``plumbframe analyze tower.ifc --json out.json`` run in-process
  through ``analysis.cli.main``, each stage timed from the progress messages
  (the JSON, written by a process of its own while the IFC is written, from
  its own message), peak memory of the process and its side writer; then
  ``--json --report r.html`` with every output in turn (``PLUMBFRAME_SIDE_OUTPUTS=0``)
  for the JSON's and the report's own times and the report's size;
* ifcopenshell's own ``file.write`` of the results IFC plumbframe wrote;
* ``ifcopenshell.open`` + walking every item's placement chain (the reading
  baseline of bench_reader), and the attributes the reader cannot do without
  read with no logic at all (`bench_reader.least_reading_structural`: a floor
  under the reading ratio);
* a re-run on its own output (results replaced, not added; input untouched),
  and a run killed while it writes (the earlier outputs stay as they were,
  nothing half-written appears);
* a 3,500-member physical model (`bench_reader.generate`), end to end with
  the report.

Printed ratios and targets: end to end (without the report) / reference <= 2.0;
reading / (open + placements) <= 2; writing the IFC / ifcopenshell write of
the output <= 1.5; results IFC / input <= 2; JSON <= 2 s; peak <= 4 GB; report
<= 20 MB in <= 30 s; physical model with report <= 10 s.

Run: ``PYTHONPATH=. python benchmarks/bench_roundtrip.py [--keep FILE] [--skip-checks]``
"""
from __future__ import annotations

import argparse
import hashlib
import json
import os
import signal
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)


# --------------------------------------------------------------------------- child processes
def _child(kind: str, *args: str, timeout: float = 3600, env: dict | None = None) -> dict:
    """Run this script as ``--child KIND ARGS`` in a fresh process; returns the JSON it prints last."""
    env = dict(os.environ, **(env or {}), PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    done = subprocess.run([sys.executable, __file__, "--child", kind, *args], capture_output=True, text=True,
                          env=env, timeout=timeout)
    if done.returncode != 0:
        raise RuntimeError(f"{kind} failed ({done.returncode}):\n{done.stdout[-2000:]}\n{done.stderr[-4000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _peak_mb() -> float:
    """Peak resident memory of this process plus the largest of its children (the side writers), MB."""
    import resource

    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return (own + children) / 1024.0


def child_reference(path: str, out_json: str) -> dict:
    """The general-purpose pipeline (see the module docstring); stage times in seconds."""
    import numpy as np
    import scipy.sparse as sp

    import ifcopenshell

    t = {}
    t0 = time.perf_counter()
    f = ifcopenshell.open(path)
    t["open"] = time.perf_counter() - t0
    # nodes and members straight from the topology (the file is in mm and kN)
    s = time.perf_counter()
    mm = 1e-3
    index, xyz, fixed = {}, [], []
    for c in f.by_type("IfcStructuralPointConnection"):
        v = c.Representation.Representations[0].Items[0]
        index[v.id()] = len(xyz)
        xyz.append(v.VertexGeometry.Coordinates)
        fixed.append(c.AppliedCondition is not None)
    X = np.array(xyz, float) * mm
    props = {}
    for rel in f.by_type("IfcRelAssociatesMaterial"):
        p = rel.RelatingMaterial.ForProfileSet.MaterialProfiles[0].Profile
        b, h, tw, tf = p.OverallWidth * mm, p.OverallDepth * mm, p.WebThickness * mm, p.FlangeThickness * mm
        A = 2 * b * tf + (h - 2 * tf) * tw  # thin-walled I section, common practice, no source
        Iy = (b * h**3 - (b - tw) * (h - 2 * tf) ** 3) / 12
        Iz = (2 * tf * b**3 + (h - 2 * tf) * tw**3) / 12
        J = (2 * b * tf**3 + (h - 2 * tf) * tw**3) / 3
        for m in rel.RelatedObjects:
            props[m.id()] = (A, Iy, Iz, J)
    ends, sec, axis, mid = [], [], [], []
    for m in f.by_type("IfcStructuralCurveMember"):
        e = m.Representation.Representations[0].Items[0]
        ends.append((index[e.EdgeStart.id()], index[e.EdgeEnd.id()]))
        sec.append(props[m.id()])
        axis.append(m.Axis.DirectionRatios)
        mid.append(m.id())
    ends_a = np.array(ends)
    S = np.array(sec)
    Z = np.array(axis, float)
    q_of = {}
    for rel in f.by_type("IfcRelConnectsStructuralActivity"):
        a = rel.RelatedStructuralActivity
        if a.is_a("IfcStructuralCurveAction"):
            q_of[rel.RelatingElement.id()] = a.AppliedLoad.LinearForceZ * 1e6  # kN/mm (the file units) -> N/m
    P = np.zeros((len(X), 6))
    for rel in f.by_type("IfcRelConnectsStructuralActivity"):
        a = rel.RelatedStructuralActivity
        if a.is_a("IfcStructuralPointAction"):
            v = rel.RelatingElement.Representation.Representations[0].Items[0]
            P[index[v.id()], 0] += (a.AppliedLoad.ForceX or 0.0) * 1e3
    t["walk"] = time.perf_counter() - s
    # vectorized assembly: local 12x12 matrices, rotation, one COO -> CSR
    s = time.perf_counter()
    E, G = 210e9, 81e9
    m = len(ends_a)
    d = X[ends_a[:, 1]] - X[ends_a[:, 0]]
    L = np.linalg.norm(d, axis=1)
    ex = d / L[:, None]
    ey = np.cross(Z, ex)
    ey /= np.linalg.norm(ey, axis=1)[:, None]
    ez = np.cross(ex, ey)
    R3 = np.stack([ex, ey, ez], axis=1)  # (m,3,3) rows: local axes
    A, Iy, Iz, J = S.T
    k = np.zeros((m, 12, 12))
    ea, gj = E * A / L, G * J / L
    for (i, j, v) in ((0, 0, ea), (0, 6, -ea), (6, 6, ea), (3, 3, gj), (3, 9, -gj), (9, 9, gj)):
        k[:, i, j] = v
    for I, a, b, sgn in ((Iz, 1, 5, 1.0), (Iy, 2, 4, -1.0)):
        c12, c6, c4, c2 = 12 * E * I / L**3, 6 * E * I / L**2, 4 * E * I / L, 2 * E * I / L
        k[:, a, a], k[:, a + 6, a + 6], k[:, a, a + 6] = c12, c12, -c12
        k[:, a, b], k[:, a, b + 6] = sgn * c6, sgn * c6
        k[:, b, a + 6], k[:, a + 6, b + 6] = -sgn * c6, -sgn * c6  # upper triangle; mirrored below
        k[:, b, b], k[:, b + 6, b + 6], k[:, b, b + 6] = c4, c4, c2
    k = np.triu(k) + np.triu(k, 1).transpose(0, 2, 1)
    T = np.zeros((m, 12, 12))
    for blk in range(4):
        T[:, 3 * blk:3 * blk + 3, 3 * blk:3 * blk + 3] = R3
    K_e = np.swapaxes(T, 1, 2) @ k @ T
    dof = (6 * ends_a[:, [0] * 6 + [1] * 6] + np.tile(np.arange(6), 2)[None, :])
    rows = np.repeat(dof, 12, axis=1).ravel()
    cols = np.tile(dof, (1, 12)).ravel()
    n = 6 * len(X)
    K = sp.coo_array((K_e.ravel(), (rows, cols)), shape=(n, n)).tocsr()
    # fixed-end forces of the uniform line loads (global Z), member ends to nodes
    F = P.ravel().copy()
    q = np.array([q_of.get(i, 0.0) for i in mid])
    loaded = q != 0
    ql = (q * L)[loaded]
    np.add.at(F, 6 * ends_a[loaded, 0] + 2, ql / 2)
    np.add.at(F, 6 * ends_a[loaded, 1] + 2, ql / 2)
    wl = q[loaded] * L[loaded] ** 2 / 12  # end moments about the beam's horizontal normal (global)
    nrm = np.cross(ex[loaded], [0.0, 0.0, 1.0])
    for end, sgn in ((0, 1.0), (1, -1.0)):
        for c in range(3):
            np.add.at(F, 6 * ends_a[loaded, end] + 3 + c, sgn * wl * nrm[:, c])
    free = np.ones(n, bool)
    free[(6 * np.flatnonzero(fixed)[:, None] + np.arange(6)).ravel()] = False
    Kf = K[free][:, free]
    B = np.stack([F[free], 1.5 * F[free]], axis=1)
    t["assemble"] = time.perf_counter() - s
    s = time.perf_counter()
    try:
        import pypardiso

        solver = pypardiso.PyPardisoSolver(mtype=2)
        U = np.asarray(solver.solve(sp.triu(Kf, format="csr"), B))
        name = "pardiso"
    except ImportError:
        from scipy.sparse.linalg import splu

        U = splu(Kf.tocsc(), permc_spec="MMD_AT_PLUS_A").solve(B)
        name = "superlu"
    t["solve"] = time.perf_counter() - s
    s = time.perf_counter()
    full = np.zeros((n, 2))
    full[free] = U
    import orjson

    names = ("ux", "uy", "uz", "rx", "ry", "rz")
    doc = {case: {str(i): dict(zip(names, full[6 * i:6 * i + 6, c].tolist())) for i in range(len(X))}
           for c, case in enumerate(("case", "combination"))}
    with open(out_json, "wb") as fh:
        fh.write(orjson.dumps(doc))
    t["json"] = time.perf_counter() - s
    t["total"] = time.perf_counter() - t0
    return {"times": t, "solver": name, "unknowns": int(free.sum()), "peak_mb": _peak_mb()}


#: progress message prefix -> stage of the report
_STAGES = (("reading", "reading"), ("counting", "counting"), ("numbering", "numbering"), ("assembl", "assembling"),
           ("factoris", "factorising"), ("solving", "solving"), ("recovering", "recovering"),
           ("writing IFC", "writing IFC"), ("writing the IFC", "writing IFC"), ("opening", "writing IFC"),
           ("removing", "writing IFC"), ("writing results", "writing IFC"), ("writing JSON", "JSON"),
           ("writing the report", "report"))


def child_plumbframe(*argv: str) -> dict:
    """``plumbframe ARGV`` in-process, timed per stage from its progress messages."""
    from analysis import cli

    marks: list[tuple[float, str]] = []
    aside: dict[str, float] = {}

    def progress(self, step: str) -> None:  # noqa: ARG001 - replaces _Console.progress for timing
        marks.append((time.perf_counter(), str(step)))

    def info(self, text: str) -> None:  # noqa: ARG001 - "<what> written in S s alongside the IFC"
        words = str(text).split()
        if str(text).endswith("alongside the IFC") and "written" in words:
            aside[words[0]] = float(words[words.index("in") + 1])

    cli._Console.progress = progress  # type: ignore[method-assign]
    cli._Console.info = info  # type: ignore[method-assign]
    t0 = time.perf_counter()
    code = cli.main(["analyze", *argv, "-q"])
    total = time.perf_counter() - t0
    stages: dict[str, float] = {}
    ends = [m[0] for m in marks[1:]] + [t0 + total]
    for (start, step), end in zip(marks, ends):
        stage = next((name for prefix, name in _STAGES if step.startswith(prefix)), "other")
        if "alongside the IFC" in step:
            stage = "other"  # the announcement only: the writer's own time comes with its message
        stages[stage] = stages.get(stage, 0.0) + end - start
    return {"code": code, "total": total, "stages": stages, "aside": aside, "peak_mb": _peak_mb(),
            "steps": len(marks)}


def child_ifc_write(path: str) -> dict:
    import ifcopenshell

    f = ifcopenshell.open(path)
    with tempfile.TemporaryDirectory(dir=os.path.dirname(path)) as tmp:
        t = time.perf_counter()
        f.write(os.path.join(tmp, "copy.ifc"))
        return {"write": time.perf_counter() - t, "entities": len(list(f))}


def child_open_walk(path: str) -> dict:
    sys.path.insert(0, HERE)
    from bench_reader import baseline_structural, least_reading_structural

    return {"baseline": min(baseline_structural(path) for _ in range(2)),
            "least": min(least_reading_structural(path) for _ in range(2))}


def child_counts(path: str) -> dict:
    import ifcopenshell

    f = ifcopenshell.open(path)
    return {"result_groups": len(f.by_type("IfcStructuralResultGroup")),
            "reactions": len(f.by_type("IfcStructuralReaction")), "psets": len(f.by_type("IfcPropertySet"))}


# --------------------------------------------------------------------------- checks at tower size
def _sha(path: str) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 22), b""):
            h.update(chunk)
    return h.hexdigest()


def _killed_run(src: str, out: str, json_out: str) -> tuple[bool, str]:
    """Start plumbframe, kill it while it writes the IFC; the earlier outputs must be unchanged."""
    before = {p: _sha(p) for p in (out, json_out) if os.path.exists(p)}
    folder = os.path.dirname(out)
    env = dict(os.environ, PYTHONPATH=ROOT)
    proc = subprocess.Popen([sys.executable, "-m", "analysis.cli", "analyze", src, "-o", out, "--json", json_out,
                             "-v"], stderr=subprocess.PIPE, stdout=subprocess.DEVNULL, text=True, env=env)
    assert proc.stderr is not None
    for line in proc.stderr:
        if "writing results" in line or "writing IFC" in line:
            time.sleep(1.0)
            proc.send_signal(signal.SIGKILL)
            break
    proc.wait()
    after = {p: _sha(p) for p in before}
    left = [n for n in os.listdir(folder) if n.startswith(".plumbframe-")]
    ok = after == before
    return ok, f"outputs unchanged: {ok}; temporaries left by the killed run: {len(left)} (removed by the next run)"


# --------------------------------------------------------------------------- main
def main() -> None:
    if len(sys.argv) > 2 and sys.argv[1] == "--child":  # one measurement in this process (see _child)
        kind, rest = sys.argv[2], sys.argv[3:]
        fn = {"reference": child_reference, "plumbframe": child_plumbframe, "ifc_write": child_ifc_write,
              "open_walk": child_open_walk, "counts": child_counts}[kind]
        print(json.dumps(fn(*rest)))
        return
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--keep", help="the tower model: write it here and keep it (an existing file is reused)")
    ap.add_argument("--skip-checks", action="store_true", help="skip the re-run and the killed run")
    args = ap.parse_args()
    sys.path.insert(0, HERE)
    from bench_reader import generate, generate_structural

    tmp = tempfile.TemporaryDirectory()
    work = tmp.name
    src = args.keep or os.path.join(work, "tower.ifc")
    if not os.path.exists(src):
        t = time.perf_counter()
        generate_structural(src)
        print(f"generated the tower in {time.perf_counter() - t:.0f} s")
    size_in = os.path.getsize(src)
    print(f"tower: {src}, {size_in / 1e6:.1f} MB")
    out = os.path.join(work, "tower.results.ifc")
    js, report = os.path.join(work, "out.json"), os.path.join(work, "report.html")
    src_hash = _sha(src)

    ref = _child("reference", src, os.path.join(work, "reference.json"))
    pf = _child("plumbframe", src, "-o", out, "--json", js)  # the command
    assert pf["code"] == 0, pf
    # the same with the report, every output in turn: the JSON's and the report's own times, uncontended
    rp = _child("plumbframe", src, "-o", os.path.join(work, "again.results.ifc"), "--json",
                os.path.join(work, "again.json"), "--report", report, env={"PLUMBFRAME_SIDE_OUTPUTS": "0"})
    assert rp["code"] == 0, rp
    wr = _child("ifc_write", out)
    base = _child("open_walk", src)

    st = pf["stages"]
    e2e = pf["total"]
    json_s = rp["stages"].get("JSON", 0.0)
    report_s = rp["stages"].get("report", 0.0)
    rt = ref["times"]
    print(f"\nreference pipeline ({ref['solver']}, {ref['unknowns']} unknowns): {rt['total']:.2f} s = "
          + ", ".join(f"{k} {v:.2f}" for k, v in rt.items() if k != "total"))
    print(f"plumbframe analyze --json: {e2e:.2f} s; stages (share of it):")
    for name, secs in st.items():
        print(f"  {name:<12} {secs:7.2f} s  {100 * secs / e2e:5.1f} %")
    for name, secs in pf["aside"].items():
        print(f"  {name:<12} {secs:7.2f} s  written alongside the IFC by a process of its own")
    serial = rp["total"] - rp["stages"].get("report", 0.0)
    outputs_turn = rp["stages"].get("writing IFC", 0.0) + json_s
    print(f"the same with every output in turn (PLUMBFRAME_SIDE_OUTPUTS=0, report time left out): {serial:.2f} s "
          f"(JSON {json_s:.2f} s, writing IFC {rp['stages'].get('writing IFC', 0.0):.2f} s); the IFC and the "
          f"JSON took {st.get('writing IFC', 0.0):.2f} s with side processes, {outputs_turn:.2f} s in turn")
    size_out = os.path.getsize(out)
    rows = [
        ("end to end / reference", e2e / rt["total"], 2.0),
        ("reading / (open + placements)", st.get("reading", 0.0) / base["baseline"], 2.0),
        ("writing IFC / ifcopenshell write of it", st.get("writing IFC", 0.0) / wr["write"], 1.5),
        ("results IFC size / input size", size_out / size_in, 2.0),
        ("JSON writing, in turn [s]", json_s, 2.0),
        ("peak memory [GB]", pf["peak_mb"] / 1024, 4.0),
        ("report [s]", report_s, 30.0),
        ("report [MB]", os.path.getsize(report) / 1e6, 20.0),
    ]
    print(f"\nresults IFC {size_out / 1e6:.1f} MB ({wr['entities']:,} entities; ifcopenshell writes it in "
          f"{wr['write']:.2f} s); JSON {os.path.getsize(js) / 1e6:.1f} MB; open + placements {base['baseline']:.2f} s")
    print(f"the attributes route 1 cannot do without, read with no logic at all: {base['least']:.2f} s = "
          f"{base['least'] / base['baseline']:.2f}x open + placements (a floor under the reader's ratio)")
    csv = sorted(n for n in os.listdir(work) if n.endswith(".csv"))
    print(f"report {os.path.getsize(report) / 1e6:.1f} MB with {len(csv)} CSV tables beside it: {', '.join(csv)}")
    print(f"\n{'measure':<42} {'value':>8} {'target':>7}")
    for label, value, target in rows:
        print(f"{label:<42} {value:8.2f} {'<= ' + format(target, 'g'):>7} {'ok' if value <= target else 'NOT MET'}")

    if not args.skip_checks:
        first = _child("counts", out)
        again = os.path.join(work, "again.ifc")
        r2 = _child("plumbframe", out, "-o", again)
        second = _child("counts", again)
        print(f"\nre-run on its own output: {first} -> {second}: "
              f"{'replaced' if first == second and r2['code'] == 0 else 'NOT REPLACED'}")
        print(f"input untouched: {_sha(src) == src_hash}")
        ok, text = _killed_run(src, out, js)
        print(f"killed while writing: {text}")

    phys = os.path.join(work, "physical.ifc")
    n = generate(phys, grid=6, storeys=36)
    r = _child("plumbframe", phys, "--json", os.path.join(work, "p.json"), "--report", os.path.join(work, "p.html"))
    print(f"\nphysical model, {n} elements, end to end with report: {r['total']:.2f} s (target <= 10) "
          f"{'ok' if r['total'] <= 10 else 'NOT MET'}; stages: "
          + ", ".join(f"{k} {v:.2f}" for k, v in r["stages"].items()))


if __name__ == "__main__":
    main()
