"""Which stations of a member diagram go into the results IFC (``--stations ends|extremes|all``).

A member diagram (`analysis.results.MemberDiagram`) holds every station the
analysis computed: an even grid, both sides of every concentrated load and
the points where a shear force or a slope vanishes. The design team's model
needs far fewer to show what matters:

* ``ends``: the two member ends;
* ``extremes`` (the default): the ends, both sides of every concentrated
  load (a jump in the diagram), and for each of N, Vy, Vz, T, My, Mz, dy and
  dz the stations of its smallest and largest value where that lies inside
  the member (beyond the end values by more than a round-off margin);
* ``all``: every station.

Every subset is a subset of ``all``, with the same values at the stations
they share. The writer selects the forces' stations and the deflections'
stations apart (each with the other's values given as zeros), so that the
internal-force reaction of a member carries its force extremes and the
deflection reaction its deflection extremes, not each other's.
"""
from __future__ import annotations

import numpy as np

__all__ = ["STATION_SETS", "DEFAULT_STATIONS", "select_stations"]

STATION_SETS = ("ends", "extremes", "all")
DEFAULT_STATIONS = "extremes"
_MARGIN = 1e-9  # relative to the column's largest magnitude: beyond the ends by less than this is not an extreme


def select_stations(stations: np.ndarray, forces: np.ndarray, deflections: np.ndarray, which: str) -> np.ndarray:
    """Indices (sorted) into ``stations`` of the station set ``which`` (see the module docstring).

    Parameters
    ----------
    stations : (s,) m from end i, ascending (a concentrated load appears twice, both sides).
    forces : (s,6) N, Vy, Vz, T, My, Mz.
    deflections : (s,2) dy, dz.
    which : 'ends', 'extremes' or 'all'.
    """
    s = np.asarray(stations, float)
    n = s.size
    if which not in STATION_SETS:
        raise ValueError(f"station set must be one of {', '.join(STATION_SETS)}, got {which!r}")
    if which == "all" or n <= 2:
        return np.arange(n)
    keep = np.zeros(n, bool)
    keep[0] = keep[-1] = True
    if which == "ends":
        return np.flatnonzero(keep)
    same = np.diff(s) == 0.0  # both sides of a concentrated load
    keep[:-1] |= same
    keep[1:] |= same
    values = np.concatenate([np.asarray(forces, float).reshape(n, -1), np.asarray(deflections, float).reshape(n, -1)],
                            axis=1)
    ends_lo = np.minimum(values[0], values[-1])
    ends_hi = np.maximum(values[0], values[-1])
    margin = _MARGIN * np.abs(values).max(axis=0)
    lo, hi = values.argmin(axis=0), values.argmax(axis=0)
    cols = np.arange(values.shape[1])
    keep[lo[values[lo, cols] < ends_lo - margin]] = True
    keep[hi[values[hi, cols] > ends_hi + margin]] = True
    return np.flatnonzero(keep)


def select_stations_batch(sizes: np.ndarray, stations: np.ndarray, forces: np.ndarray, deflections: np.ndarray,
                          which: str) -> np.ndarray:
    """`select_stations` of many diagrams at once: a boolean mask over their concatenated stations.

    ``sizes`` (g,) are the diagrams' station counts; ``stations`` (S,), ``forces``
    (S,6) and ``deflections`` (S,2) their rows one after another. The same
    stations as calling `select_stations` on each diagram.
    """
    if which not in STATION_SETS:
        raise ValueError(f"station set must be one of {', '.join(STATION_SETS)}, got {which!r}")
    sizes = np.asarray(sizes, dtype=np.int64)
    total = int(sizes.sum())
    if which == "all":
        return np.ones(total, bool)
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64)
    ends = starts + sizes - 1
    keep = np.zeros(total, bool)
    keep[starts] = True
    keep[ends] = True
    small = sizes <= 2
    if which == "ends" or total == 0:
        return keep
    owner = np.repeat(np.arange(sizes.size), sizes)
    s = np.asarray(stations, float)
    same = (np.diff(s) == 0.0) & (owner[1:] == owner[:-1])  # both sides of a concentrated load
    keep[:-1] |= same
    keep[1:] |= same
    values = np.concatenate([np.asarray(forces, float).reshape(total, -1),
                             np.asarray(deflections, float).reshape(total, -1)], axis=1)
    ends_lo = np.minimum(values[starts], values[ends])
    ends_hi = np.maximum(values[starts], values[ends])
    margin = _MARGIN * np.maximum.reduceat(np.abs(values), starts, axis=0)
    lo = np.minimum.reduceat(values, starts, axis=0)
    hi = np.maximum.reduceat(values, starts, axis=0)
    for col in range(values.shape[1]):
        v = values[:, col]
        for ext, beyond in ((lo[:, col], lo[:, col] < ends_lo[:, col] - margin[:, col]),
                            (hi[:, col], hi[:, col] > ends_hi[:, col] + margin[:, col])):
            if not beyond.any():  # no diagram has an extreme of this column between its ends (a zero column)
                continue
            hit = (v == ext[owner]) & beyond[owner]
            if hit.any():
                rows = np.flatnonzero(hit)
                _, first = np.unique(owner[rows], return_index=True)  # argmin/argmax: the first such station
                keep[rows[first]] = True
    keep[np.repeat(small, sizes)] = True  # two stations or fewer: all of them
    return keep
