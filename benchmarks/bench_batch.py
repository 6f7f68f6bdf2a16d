"""Benchmark: ``plumbframe batch`` of many small models, serial vs a local Dask cluster.

Generates ``--models`` (default 40) plane steel frames of varied sizes with
``sample_models/generate.py``'s ``build_frame`` (1-4 bays x 1-5 storeys,
4 to 45 members, 3 load cases and 2 combinations each), then times, in this
one run:

* ``plumbframe batch DIR --out A --serial`` (one model after another in this
  process), and
* ``plumbframe batch DIR --out B --workers 2`` (a LocalCluster of 2 worker
  processes, started and stopped by the command; the time includes that),

and prints the ratio Dask / serial (target: at most 0.6 on 2 cores), the
cluster's start-up time, and the scheduler overhead per task, measured two
ways: the round trip of a no-op task on a fresh 2-worker cluster (submit to
result, many in flight), and in the batch itself
(wall time x workers - the time the tasks ran on the workers) / tasks,
which also counts the idle workers at the tail of the batch.
Both runs must give the same results (checked on the summary rows).

Run: ``PYTHONPATH=. python benchmarks/bench_batch.py [--models 40] [--workers 2] [--rounds 2] [--keep DIR]``
"""
from __future__ import annotations

import argparse
import importlib.util
import json
import math
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _generator():
    spec = importlib.util.spec_from_file_location("plumbframe_sample_generate", ROOT / "sample_models" / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    assert spec.loader is not None
    sys.modules[spec.name] = mod  # dataclasses look their module up there
    spec.loader.exec_module(mod)
    return mod


def generate(folder: Path, n: int) -> list[tuple[int, int]]:
    gen = _generator()
    sizes = []
    for k in range(n):
        bays, storeys = 1 + k % 4, 1 + (k * 7 // 4) % 5
        gen.build_frame(bays, storeys, name=f"frame_{k:02d}").write(str(folder / f"frame_{k:02d}_{bays}x{storeys}.ifc"))
        sizes.append((bays, storeys))
    return sizes


def batch(models: Path, out: Path, *extra: str) -> tuple[float, int]:
    from analysis.cli import main

    t0 = time.perf_counter()
    code = main(["batch", str(models), "--out", str(out), "--force", "-q", *extra])
    return time.perf_counter() - t0, code


def noop_overhead(workers: int, tasks: int = 400) -> tuple[float, float]:
    """(cluster start-up s, seconds per no-op task) on a fresh LocalCluster."""
    import logging

    from distributed import Client, LocalCluster

    t0 = time.perf_counter()
    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                           dashboard_address=None, scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                           silence_logs=logging.CRITICAL)
    client = Client(cluster)
    startup = time.perf_counter() - t0
    try:
        client.submit(int, 0).result()  # warm
        t0 = time.perf_counter()
        futures = [client.submit(int, k, pure=False) for k in range(tasks)]
        client.gather(futures)
        per = (time.perf_counter() - t0) * workers / tasks
    finally:
        client.close()
        cluster.close()
    return startup, per


def _load() -> str:
    try:
        return "/".join(f"{v:.1f}" for v in os.getloadavg())
    except OSError:  # pragma: no cover
        return "?"


def _spin(seconds_of_work: int) -> float:
    t0 = time.perf_counter()
    x = 0
    for k in range(seconds_of_work * 4_000_000):
        x += k * k
    return time.perf_counter() - t0


def spare_cores(work: int = 1) -> float:
    """Time of two pure-Python loops run at once in two processes / the same two one after the other.

    0.5 on an idle 2-core machine; near 1.0 when other work leaves about one core free. It is the
    best ratio any two-process batch could reach at that moment.
    """
    import multiprocessing as mp

    t0 = time.perf_counter()
    _spin(work)
    _spin(work)
    one_by_one = time.perf_counter() - t0
    ctx = mp.get_context("spawn")
    with ctx.Pool(2) as pool:
        pool.map(_spin, [0, 0])  # start-up out of the timing
        t0 = time.perf_counter()
        pool.map(_spin, [work, work])
        together = time.perf_counter() - t0
    return together / one_by_one


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--models", type=int, default=40)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--rounds", type=int, default=2, help="1: serial, dask; 2: serial, dask, dask, serial")
    ap.add_argument("--keep", metavar="DIR", help="keep the models and outputs here")
    args = ap.parse_args(argv)
    work = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="plumbframe-bench-batch-"))
    models = work / "models"
    models.mkdir(parents=True, exist_ok=True)
    sizes = generate(models, args.models)
    members = [s * (b + 1) + s * b for b, s in sizes]
    print(f"{args.models} models, {min(members)}-{max(members)} members (mean {sum(members) / len(members):.0f}), "
          f"{os.cpu_count()} cores")
    try:
        # serial, dask, then (with --rounds 2) dask, serial again: the order cancels a load that drifts
        # linearly on a shared machine; the times are summed per kind
        t_serial = t_dask = 0.0
        order = (["serial", "dask", "dask", "serial"][: 2 * args.rounds] if args.rounds <= 2
                 else ["serial", "dask"] * args.rounds)
        load0 = _load()
        capacity = [spare_cores()]
        cpu = {"serial": 0.0, "dask": 0.0}
        for kind in order:
            extra = ("--serial",) if kind == "serial" else ("--workers", str(args.workers))
            c0 = time.process_time()
            t, code = batch(models, work / kind, *extra)
            cpu[kind] += time.process_time() - c0
            capacity.append(spare_cores())
            if code != 0:
                bad = [r for r in json.loads((work / kind / "summary.json").read_text())["rows"] if r["exit"]]
                print(f"{kind} run: exit {code}; {len(bad)} models failed, e.g. {bad[0]['model']}: {bad[0]['message']}")
                return 1
            if kind == "serial":
                t_serial += t
            else:
                t_dask += t
        rounds = len(order) // 2
        t_serial, t_dask = t_serial / rounds, t_dask / rounds
        rows_s = {r["model"]: r for r in json.loads((work / "serial" / "summary.json").read_text())["rows"]}
        doc = json.loads((work / "dask" / "summary.json").read_text())
        rows_d = {r["model"]: r for r in doc["rows"]}
        for k, r in rows_s.items():
            for f in ("N", "V", "M", "max_displacement"):
                assert math.isclose(r[f], rows_d[k][f], rel_tol=1e-12), (k, f)
        busy = sum(r["seconds"] for r in rows_d.values())  # of the last dask run
        busy_serial = sum(r["seconds"] for r in rows_s.values())
        cpu_d = sum(r["cpu_seconds"] for r in rows_d.values())
        cpu_s = sum(r["cpu_seconds"] for r in rows_s.values())
        startup, per_noop = noop_overhead(args.workers)
        in_batch = (t_dask * args.workers - busy) / len(rows_d)
        print(f"serial                  {t_serial:8.2f} s  (last run: tasks {busy_serial:.2f} s, CPU {cpu_s:.2f} s)")
        print(f"dask, {args.workers} workers         {t_dask:8.2f} s  (last run: tasks {busy:.2f} s, CPU {cpu_d:.2f} s "
              f"on the workers; CPU of the command's own process {cpu['dask'] / rounds:.2f} s)")
        print(f"ratio dask / serial     {t_dask / t_serial:8.3f}   (target <= 0.6)")
        print(f"spare-core ratio        {min(capacity):.3f}-{max(capacity):.3f} (two pure-Python loops at once / one "
              "after the other, measured between the runs: 0.5 = two free cores, 1.0 = one)")
        print(f"cluster start-up        {startup:8.2f} s  (a fresh LocalCluster of {args.workers}, measured apart)")
        print(f"overhead per task       {per_noop * 1e3:8.2f} ms  (no-op task round trip, x workers / tasks)")
        print(f"overhead per task       {in_batch:8.3f} s   in the batch: (wall x workers - task time) / tasks, "
              "incl. start-up, worker imports and the idle tail")
        peak = max(r["peak_memory"] for r in rows_d.values())
        print(f"largest worker peak     {peak:8.0f} MB")
        print(f"load average            {load0} at the start, {_load()} at the end ({rounds} round(s), "
              "times are means per run)")
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    sys.exit(main())
