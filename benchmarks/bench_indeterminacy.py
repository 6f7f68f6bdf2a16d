"""Time of the indeterminacy count on regular multi-storey space frames, ~1e3 to ~1e5 DOF.

Each model: a grid of columns (fixed bases), moment-connected beams, pinned X
braces in the corner bays of every storey, one rigid floor diaphragm per
storey. Printed per size: DOF (6 per joint), time of the count
(`analysis.indeterminacy.indeterminacy`), time of the solver's numbering and
assembly in the same run (`build_dofs` + `Assembly` + `reduced_stiffness`),
and their ratio.

With ``--loose-parts``: frames with hundreds of mechanisms instead (a grid of
fixed-base columns tied by beams pinned at both ends, carrying hanging
pin-ended bars, two-bar chains, pendulum members on two-axis hinges and parts
touching nothing; the hand count of each kind is in
tests/unit/test_many_mechanisms.py). Printed per size: members, unknowns,
mechanisms (checked against the hand count), time of the count, time of one
factorisation of the same reduced stiffness (its diagonal raised by 1e-8 of
itself so that it factorises: the cost of one solve of that size), and the ratio.

Run: ``PYTHONPATH=. python benchmarks/bench_indeterminacy.py [--max-dof 100000] [--pinned-beams]``
     ``PYTHONPATH=. python benchmarks/bench_indeterminacy.py --loose-parts [--max-members 6000]``
"""
from __future__ import annotations

import argparse
import time

import numpy as np

from analysis.indeterminacy import indeterminacy
from analysis.model import AnalysisOptions, Diaphragm, Frame, RigidBody  # noqa: F401
from analysis.stiffness.analyze import Assembly, reduced_stiffness
from analysis.stiffness.dofs import build_dofs


def building(nx: int, ny: int, storeys: int, pinned_beams: bool = False) -> Frame:
    """A regular building frame as arrays (built directly, not node by node)."""
    bay_x, bay_y, h = 6.0, 5.0, 3.5
    gi, gj, gs = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), np.arange(storeys + 1), indexing="ij")
    gi, gj, gs = gi.ravel(), gj.ravel(), gs.ravel()
    index = {(a, b, c): k for k, (a, b, c) in enumerate(zip(gi, gj, gs))}
    nodes = np.stack([gi * bay_x, gj * bay_y, gs * h], axis=1).astype(float)
    members, pinned = [], []
    for (a, b, c), k in index.items():
        if c > 0:
            members.append((index[(a, b, c - 1)], k))
            pinned.append(False)
            if a < nx:
                members.append((k, index[(a + 1, b, c)]))
                pinned.append(pinned_beams)
            if b < ny:
                members.append((k, index[(a, b + 1, c)]))
                pinned.append(pinned_beams)
            if (a in (0, nx - 1)) and b in (0, ny) and a < nx:  # braces in the end bays, along X
                members.append((index[(a, b, c - 1)], index[(a + 1, b, c)]))
                pinned.append(True)
            if (b in (0, ny - 1)) and a in (0, nx) and b < ny:  # along Y
                members.append((index[(a, b, c - 1)], index[(a, b + 1, c)]))
                pinned.append(True)
    members = np.array(members, dtype=np.int32)
    m, n = len(members), len(nodes)
    releases = np.zeros((m, 2, 6), bool)
    releases[np.array(pinned), :, 4:6] = True
    restraints = np.zeros((n, 6), bool)
    restraints[gs == 0] = True
    diaphragms = tuple(
        Diaphragm(f"floor {c}", tuple(f"N{k}" for k in np.flatnonzero(gs == c)))
        for c in range(1, storeys + 1))
    return Frame(
        node_ids=tuple(f"N{k}" for k in range(n)), nodes=nodes,
        member_ids=tuple(f"M{k}" for k in range(m)), members=members,
        A=np.full(m, 1e-2), Iy=np.full(m, 2e-4), Iz=np.full(m, 5e-5), J=np.full(m, 1e-6),
        Avy=np.zeros(m), Avz=np.zeros(m), E=np.full(m, 2.1e11), G=np.full(m, 8.1e10), density=np.zeros(m),
        ref=np.full((m, 3), np.nan), roll=np.zeros(m), truss=np.zeros(m, bool), releases=releases,
        offsets=np.zeros((m, 2, 3)), inextensible=np.zeros(m, bool), restraints=restraints,
        springs=np.zeros((n, 6)), diaphragms=diaphragms)


def loose_parts(max_members: int) -> None:
    """The count on frames with hundreds of mechanisms against one factorisation of their stiffness."""
    import sys
    from pathlib import Path

    import scipy.sparse as sp

    from analysis.stiffness.solvers import factorize

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests" / "unit"))
    from test_many_mechanisms import loose_parts_frame

    print(f"{'members':>8} {'unknowns':>9} {'mech':>6} {'hand':>6} {'count s':>8} {'factor s':>9} {'ratio':>6}")
    for nx, parts in ((10, 100), (16, 250), (22, 500), (30, 900)):
        frame, expected = loose_parts_frame(nx, nx, {"bar": parts, "chain": parts // 2, "pendulum": parts // 3,
                                                     "loose member": parts // 10, "loose bar": parts // 10})
        if frame.n_members > max_members * 1.1:
            break
        options = AnalysisOptions()
        t0 = time.perf_counter()
        r = indeterminacy(frame, options)
        t_count = time.perf_counter() - t0
        dofs = build_dofs(frame, options)
        _, Kq, _ = reduced_stiffness(Assembly(frame, dofs, options))
        d = Kq.diagonal()
        Ks = sp.csr_array(Kq + sp.diags_array(1e-8 * np.where(d > 0, d, d.max())))
        t0 = time.perf_counter()
        factorize(Ks, options.solver)
        t_fact = time.perf_counter() - t0
        assert r.mechanisms == expected, (r.mechanisms, expected)
        print(f"{frame.n_members:>8} {Kq.shape[0]:>9} {r.mechanisms:>6} {expected:>6} {t_count:>8.2f} "
              f"{t_fact:>9.3f} {t_count / t_fact:>6.1f}")


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--max-dof", type=int, default=100_000)
    ap.add_argument("--pinned-beams", action="store_true", help="beams pinned at both ends")
    ap.add_argument("--inextensible", action="store_true")
    ap.add_argument("--loose-parts", action="store_true", help="frames with hundreds of mechanisms")
    ap.add_argument("--max-members", type=int, default=6000, help="largest --loose-parts frame")
    args = ap.parse_args(argv)
    if args.loose_parts:
        loose_parts(args.max_members)
        return
    options = AnalysisOptions(inextensible=args.inextensible)
    sizes = [(3, 3, 4), (5, 5, 8), (8, 8, 12), (10, 10, 20), (12, 12, 25), (14, 14, 30), (18, 18, 40)]
    print(f"{'DOF':>8} {'unknowns':>9} {'kin':>7} {'static':>7} {'mech':>5} "
          f"{'count s':>8} {'assembly s':>10} {'ratio':>6}")
    for nx, ny, storeys in sizes:
        frame = building(nx, ny, storeys, args.pinned_beams)
        dof = 6 * frame.n_nodes
        if dof > args.max_dof * 1.1:
            break
        t0 = time.perf_counter()
        r = indeterminacy(frame, options)
        t_count = time.perf_counter() - t0
        t0 = time.perf_counter()
        dofs = build_dofs(frame, options)
        asm = Assembly(frame, dofs, options)
        _, Kq, _ = reduced_stiffness(asm)
        t_asm = time.perf_counter() - t0
        assert r.kinematic == Kq.shape[0]
        print(f"{dof:>8} {Kq.shape[0]:>9} {r.kinematic:>7} {r.static:>7} {r.mechanisms:>5} "
              f"{t_count:>8.2f} {t_asm:>10.2f} {t_count / t_asm:>6.2f}")


if __name__ == "__main__":
    main()
