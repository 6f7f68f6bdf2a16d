"""Speed and memory of the stiffness engine on regular multi-storey space frames.

Prints, for each size, measured in this one run:
  DOF, assembly s, factor+solve s, total analysis s,
  ratio_total = total / (bare factorisation + solve of the same reduced matrix with the same solver),
  ratio_loop = per-member Python loop assembly / batched assembly (the loop is timed on up to
               3000 members and scaled linearly: it is linear by construction),
  ratio_10 = analysis with 10 load cases / analysis with 1 case,
  peak RSS (MB) after the run.
Targets: ratio_total <= 1.3 from 1e5 DOF; ratio_10 <= 1.5; memory linear in members.

Usage: python benchmarks/bench_engine.py [--max-dof 3e5] [--solver auto]
"""
from __future__ import annotations

import argparse
import os
import resource
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from analysis import AnalysisOptions, LineLoad, LoadCase, Material, NodalLoad, Section  # noqa: E402
from analysis.model import Frame, member_axes  # noqa: E402
from analysis.stiffness.analyze import Assembly, analyze, reduced_stiffness  # noqa: E402
from analysis.stiffness.dofs import build_dofs  # noqa: E402
from analysis.stiffness.elements import end_transformation, local_stiffness  # noqa: E402
from analysis.stiffness.solvers import factorize  # noqa: E402


def building(nx: int, ny: int, nz: int, n_cases: int = 1) -> Frame:
    """A regular space frame: (nx+1)(ny+1)(nz+1) nodes, columns, beams both ways, fixed bases."""
    dx, dy, dz = 6.0, 7.5, 3.6
    I, J, K = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), np.arange(nz + 1), indexing="ij")
    idx = (I * (ny + 1) + J) * (nz + 1) + K
    nodes = np.stack([I.ravel() * dx, J.ravel() * dy, K.ravel() * dz], axis=1).astype(float)
    cols = np.stack([idx[:, :, :-1].ravel(), idx[:, :, 1:].ravel()], axis=1)
    bx = np.stack([idx[:-1, :, 1:].ravel(), idx[1:, :, 1:].ravel()], axis=1)
    by = np.stack([idx[:, :-1, 1:].ravel(), idx[:, 1:, 1:].ravel()], axis=1)
    members = np.concatenate([cols, bx, by]).astype(np.int32)
    m, n = len(members), len(nodes)
    restraints = np.zeros((n, 6), bool)
    restraints[K.ravel() == 0] = True
    sec = Section("HE", A=1.2e-2, Iy=2.5e-4, Iz=8e-5, J=1.5e-6)
    mat = Material("S", E=210e9, G=81e9, density=7850)
    beams = [f"M{k}" for k in range(len(cols), m)]
    top = int(idx[-1, -1, -1])
    cases = []
    for c in range(n_cases):
        cases.append(LoadCase(f"LC{c}", nodal=(NodalLoad(f"N{top}", (1e4 * (c + 1), 5e3, 0, 0, 0, 0)),),
                              member=tuple(LineLoad(b, "z", -1e4 - c, axes="global") for b in beams[:: max(1, len(beams) // 200)]),
                              self_weight=(0, 0, -1)))
    return Frame(node_ids=tuple(f"N{k}" for k in range(n)), nodes=nodes, member_ids=tuple(f"M{k}" for k in range(m)),
                 members=members, A=np.full(m, sec.A), Iy=np.full(m, sec.Iy), Iz=np.full(m, sec.Iz), J=np.full(m, sec.J),
                 Avy=np.zeros(m), Avz=np.zeros(m), E=np.full(m, mat.E), G=np.full(m, mat.G), density=np.full(m, 7850.0),
                 ref=np.full((m, 3), np.nan), roll=np.zeros(m), truss=np.zeros(m, bool), releases=np.zeros((m, 2, 6), bool),
                 offsets=np.zeros((m, 2, 3)), inextensible=np.zeros(m, bool), restraints=restraints,
                 springs=np.zeros((n, 6)), load_cases=tuple(cases))


def loop_assembly_time(frame: Frame, limit: int = 3000) -> float:
    """Per-member Python loop (the naive way), timed on up to ``limit`` members, scaled to all."""
    import scipy.sparse as sp

    m = min(frame.n_members, limit)
    R = member_axes(frame)
    t = time.perf_counter()
    rows, cols, vals = [], [], []
    for k in range(m):
        i, j = frame.members[k]
        L = float(np.linalg.norm(frame.nodes[j] - frame.nodes[i]))
        kl = local_stiffness(np.array([L]), frame.E[k:k + 1], frame.G[k:k + 1], frame.A[k:k + 1], frame.Iy[k:k + 1],
                             frame.Iz[k:k + 1], frame.J[k:k + 1])[0]
        T = end_transformation(R[k:k + 1], frame.offsets[k:k + 1])[0]
        kg = T.T @ kl @ T
        dofs = [6 * int(i) + c for c in range(6)] + [6 * int(j) + c for c in range(6)]
        for a in range(12):
            for b in range(12):
                rows.append(dofs[a])
                cols.append(dofs[b])
                vals.append(kg[a, b])
    sp.coo_array((vals, (rows, cols)), shape=(6 * frame.n_nodes,) * 2).tocsr()
    return (time.perf_counter() - t) * frame.n_members / m


def peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--max-dof", type=float, default=1.2e5)
    p.add_argument("--solver", default="auto")
    args = p.parse_args(argv)
    sizes = [(3, 3, 4), (5, 5, 8), (8, 8, 12), (10, 10, 20), (14, 14, 24), (17, 17, 32), (24, 24, 30), (30, 30, 36)]
    print(f"{'DOF':>8} {'members':>8} {'assemble':>9} {'fac+sol':>8} {'total':>8} {'ratio_total':>11} "
          f"{'ratio_loop':>10} {'ratio_10':>8} {'RSS MB':>8} solver")
    for nx, ny, nz in sizes:
        frame = building(nx, ny, nz)
        dof = 6 * (nx + 1) * (ny + 1) * nz
        if dof > args.max_dof:
            break
        opts = AnalysisOptions(solver=args.solver)
        t0 = time.perf_counter()
        res = analyze(frame, opts)
        total = time.perf_counter() - t0
        # the same reduced matrix, bare: factor + solve only
        dofs = build_dofs(frame, opts)
        t1 = time.perf_counter()
        asm = Assembly(frame, dofs, opts)
        assemble_s = time.perf_counter() - t1
        _, Kq, _ = reduced_stiffness(asm)
        b = np.ones((Kq.shape[0], 1))
        t2 = time.perf_counter()
        f = factorize(Kq, args.solver)
        f.solve(b)
        bare = time.perf_counter() - t2
        loop = loop_assembly_time(frame)
        frame10 = building(nx, ny, nz, n_cases=10)
        t3 = time.perf_counter()
        analyze(frame10, opts)
        ten = time.perf_counter() - t3
        print(f"{dof:8d} {frame.n_members:8d} {assemble_s:9.3f} {res.timings['solve']:8.3f} {total:8.3f} "
              f"{total / bare:11.2f} {loop / assemble_s:10.1f} {ten / total:8.2f} {peak_rss_mb():8.0f} {res.solver}",
              flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
