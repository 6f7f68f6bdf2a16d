"""Speed of the analyses beyond first order on regular multi-storey space frames.

Prints, for each size, measured in this one run:
  DOF, linear s (one first-order analysis, `analyze`),
  buckling s and ratio_buckling = the 10 lowest critical factors of one load case ÷ linear,
  modes s and ratio_modes = the 10 lowest natural modes ÷ linear,
  second s and ratio_second = second-order analysis of the load case ÷ linear, with the loads
  scaled to half the critical load first (α_cr = 2),
  peak RSS (MB) after the run.
Each extra analysis is timed as the whole call of `analyze` with the option set, minus nothing:
it includes its own first-order analysis, the subdivided model, its factorisation and the eigen
or second-order solve.
Targets at 1e5 DOF: ratio_buckling and ratio_modes <= 3 + 1 (the first-order analysis they include);
ratio_second <= 5 + 1.

Usage: python benchmarks/bench_stability.py [--max-dof 1.2e5] [--min-dof 0] [--parts 8]
"""
from __future__ import annotations

import argparse
import dataclasses
import os
import resource
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from analysis import AnalysisOptions, LineLoad, LoadCase, NodalLoad, analyze  # noqa: E402
from benchmarks.bench_engine import building  # noqa: E402


def scaled(frame, factor: float):
    out = []
    for c in frame.load_cases:
        out.append(dataclasses.replace(
            c, nodal=tuple(dataclasses.replace(n, values=tuple(factor * v for v in n.values)) for n in c.nodal),
            member=tuple(dataclasses.replace(m, w1=factor * m.w1) if isinstance(m, LineLoad) else m for m in c.member),
            self_weight=tuple(factor * v for v in c.self_weight)))
    return frame.replace(load_cases=tuple(out))


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--max-dof", type=float, default=1.2e5)
    p.add_argument("--min-dof", type=float, default=0.0, help="skip the smaller frames")
    p.add_argument("--parts", type=int, default=8)
    args = p.parse_args(argv)
    sizes = [(3, 3, 4), (5, 5, 8), (8, 8, 12), (14, 14, 24), (24, 24, 30)]
    print(f"{'DOF':>8} {'members':>8} {'linear':>8} {'buckling':>9} {'ratio_b':>7} {'modes':>8} {'ratio_m':>7} "
          f"{'second':>8} {'ratio_s':>7} {'RSS MB':>8} solver")
    for nx, ny, nz in sizes:
        dof = 6 * (nx + 1) * (ny + 1) * nz
        if dof > args.max_dof:
            break
        if dof < args.min_dof:
            continue
        frame = building(nx, ny, nz)
        # a heavy gravity load so the frame buckles under it
        frame = frame.replace(load_cases=(LoadCase("G", nodal=tuple(
            NodalLoad(nid, (1e3, 5e2, -2e5, 0, 0, 0)) for nid, z in zip(frame.node_ids, frame.nodes[:, 2]) if z > 0),
            self_weight=(0, 0, -1)),))
        t0 = time.perf_counter()
        res = analyze(frame, AnalysisOptions())
        linear = time.perf_counter() - t0
        t1 = time.perf_counter()
        rb = analyze(frame, AnalysisOptions(buckling=10, subdivisions=args.parts))
        buck = time.perf_counter() - t1
        alpha = rb.buckling["G"][0].factor
        t2 = time.perf_counter()
        analyze(frame, AnalysisOptions(modes=10, mass=(("G", 1.0),), subdivisions=args.parts))
        modes = time.perf_counter() - t2
        half = scaled(frame, alpha / 2)
        t3 = time.perf_counter()
        analyze(half, AnalysisOptions(second_order=True, subdivisions=args.parts))
        second = time.perf_counter() - t3
        rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
        print(f"{dof:8d} {frame.n_members:8d} {linear:8.2f} {buck:9.2f} {buck / linear:7.2f} {modes:8.2f} "
              f"{modes / linear:7.2f} {second:8.2f} {second / linear:7.2f} {rss:8.0f} {res.solver}", flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
