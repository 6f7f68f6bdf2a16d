"""The station sets of the results IFC (analysis.stations): ends, extremes and concentrated loads."""
from __future__ import annotations

import numpy as np
import pytest

from analysis import AnalysisOptions, FrameBuilder, LoadCase, analyze
from analysis.model import LineLoad, PointLoad

L = 6.0
W = 10e3  # N/m
P = 20e3  # N


def _beam(steel, ipe300, point: bool):
    b = FrameBuilder(name="simple beam")
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("B", (L, 0, 0), support=("uy", "uz"))
    b.add_member("M", "A", "B", ipe300, steel)
    loads = (PointLoad("M", "z", -P, 2.0, axes="global"),) if point else (LineLoad("M", "z", -W, axes="global"),)
    b.add_case(LoadCase("q", member=loads))
    return b.build()


def test_uniform_load_default_stations_are_ends_and_midspan(steel, ipe300):
    """Simply supported beam, uniform load: the moment extreme wL²/8 and the deflection extreme sit at midspan
    (Roark, Table 8.1, case 2e — from memory)."""
    from analysis.stations import select_stations

    res = analyze(_beam(steel, ipe300, False), AnalysisOptions(plane=True))
    dg = res.diagram("q", 0)
    idx = select_stations(dg.stations, dg.forces, dg.deflections, "extremes")
    assert dg.stations[idx] == pytest.approx([0.0, L / 2, L])
    assert abs(dg.forces[idx[1], 4]) == pytest.approx(W * L**2 / 8, rel=1e-9)
    assert select_stations(dg.stations, dg.forces, dg.deflections, "ends").tolist() == [0, len(dg.stations) - 1]
    assert select_stations(dg.stations, dg.forces, dg.deflections, "all").tolist() == list(range(len(dg.stations)))


def test_point_load_keeps_both_sides_of_the_jump(steel, ipe300):
    """Concentrated load at a = 2 m: shear jumps by P there, moment P a b / L (statics, common practice)."""
    from analysis.stations import select_stations

    res = analyze(_beam(steel, ipe300, True), AnalysisOptions(plane=True))
    dg = res.diagram("q", 0)
    idx = select_stations(dg.stations, dg.forces, dg.deflections, "extremes")
    at = dg.stations[idx]
    assert (np.isclose(at, 2.0)).sum() == 2  # both sides of the load
    side = idx[np.isclose(at, 2.0)]
    assert abs(dg.forces[side[0], 2] - dg.forces[side[1], 2]) == pytest.approx(P, rel=1e-9)
    assert abs(dg.forces[side[0], 4]) == pytest.approx(P * 2.0 * (L - 2.0) / L, rel=1e-9)


def test_batched_selection_equals_one_by_one():
    from analysis.stations import select_stations, select_stations_batch

    rng = np.random.default_rng(11)
    for _ in range(100):
        sizes = rng.integers(1, 10, rng.integers(1, 6))
        S, F, D = [], [], []
        for n in sizes:
            st = np.sort(rng.random(n))
            if n > 3:
                st[2] = st[1]  # a concentrated load
            f = rng.standard_normal((n, 6))
            f[:, 3] = 0.5  # a constant column: no interior extreme
            S.append(st), F.append(f), D.append(rng.standard_normal((n, 2)))
        for which in ("ends", "extremes", "all"):
            one = np.concatenate([np.isin(np.arange(len(s)), select_stations(s, f, d, which))
                                  for s, f, d in zip(S, F, D)])
            both = select_stations_batch(sizes, np.concatenate(S), np.concatenate(F), np.concatenate(D), which)
            assert np.array_equal(one, both)
    with pytest.raises(ValueError, match="station set"):
        select_stations(np.zeros(3), np.zeros((3, 6)), np.zeros((3, 2)), "some")
