"""Where value labels of internal-force diagrams go: pure functions shared by the report and the add-on.

Two steps, both without any drawing library:

* :func:`label_stations` picks the stations of one member's diagram worth a
  label: its two ends and its interior extremes (a peak of the ordinate or a
  corner where a concentrated load acts), leaving out values that are
  negligible next to the largest value of the figure.
* :func:`place_labels` puts label boxes next to their anchors in screen
  coordinates, larger values first, trying a few positions around each
  anchor and leaving out a label that would overlap one already placed
  (greedy placement: common practice, no source).

The report calls them in the figure's data units (matplotlib); the Blender
add-on calls them in the plane of the view it draws its text in (world units
along the view's screen axes), so both show the same labels at the same
places.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = ["label_stations", "place_labels", "text_box", "Label"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, slots=True)
class Label:
    """One placed value label: what it shows and where (screen or world coordinates, as the caller's anchors)."""

    member: int  # member index
    station: float  # m from end i
    value: float  # SI
    anchor: tuple[float, ...]  # the diagram point it belongs to
    position: tuple[float, ...]  # the centre of its box


def label_stations(stations, values, peak: float, *, rel: float = 0.03) -> list[int]:
    """Indices of ``stations`` that deserve a value label: ends and interior extremes.

    Parameters
    ----------
    stations : (s,) array, m
    values : (s,) array, the diagram's ordinates
    peak : float
        The largest magnitude in the whole figure: values below ``rel * peak``
        get no label (a pinned end's zero moment, rounding noise).

    Returns
    -------
    list of int
        Station indices, ends first, without repeats (a constant diagram: the
        station nearest mid-length only). An interior station is
        an extreme where the ordinate is a local maximum of magnitude or the
        slope changes sign (a peak under a point load); a station repeated at
        a jump (the same position twice) counts with the larger side.
    """
    s = np.asarray(stations, float)
    v = np.asarray(values, float)
    n = len(v)
    if n == 0:
        return []
    floor = rel * max(float(peak), 1e-300)
    if float(np.ptp(v)) <= 1e-6 * max(float(np.abs(v).max()), 1e-300):  # constant (a truss bar): one label, mid-length
        return [int(np.argmin(np.abs(s - 0.5 * (s[0] + s[-1]))))] if abs(v[0]) >= floor else []
    out: list[int] = []
    for i in (0, n - 1):
        if abs(v[i]) >= floor and i not in out:
            out.append(i)
    if n < 3:
        return out
    a = np.abs(v)
    for i in range(1, n - 1):
        if a[i] < floor:
            continue
        if s[i + 1] - s[i] <= 1e-12 and a[i + 1] >= a[i]:  # a jump: the larger side of it only
            continue
        if s[i] - s[i - 1] <= 1e-12 and a[i - 1] > a[i]:
            continue
        left, right = v[i] - v[i - 1], v[i + 1] - v[i]
        peak_of_magnitude = a[i] >= a[i - 1] and a[i] >= a[i + 1] and (a[i] > a[i - 1] or a[i] > a[i + 1])
        if peak_of_magnitude or left * right < 0:
            out.append(i)
    # at most one label per member for each side of zero besides the ends: the largest interior ones
    ends = [i for i in out if i in (0, n - 1)]
    inner = sorted((i for i in out if i not in (0, n - 1)), key=lambda i: -a[i])
    kept: list[int] = []
    for i in inner:
        if all(np.sign(v[i]) != np.sign(v[j]) or abs(s[i] - s[j]) > 0.25 * (s[-1] - s[0]) for j in kept):
            kept.append(i)
    return ends + sorted(kept)


def text_box(text: str, height: float) -> tuple[float, float]:
    """Width and height of a one-line label of ``height`` (character width 0.6 of the height)."""
    return 0.6 * height * max(len(text), 1), height


# positions tried around an anchor, in box sizes: beyond the tip first, then the sides, then further out
_TRIES = [(0.0, 0.0), (0.6, 0.0), (-0.6, 0.0), (0.0, 0.8), (0.0, -0.8), (0.6, 0.8), (-0.6, 0.8), (0.6, -0.8),
          (-0.6, -0.8), (1.2, 0.0), (-1.2, 0.0), (0.0, 1.6), (0.0, -1.6)]


def place_labels(anchors, sizes, priority, *, away=None, obstacles=None, bounds=None,
                 limit: int | None = None) -> FloatArray:
    """Centres of label boxes that do not overlap; NaN rows for labels left out.

    Parameters
    ----------
    anchors : (k,2) array
        The points the labels belong to (screen coordinates of any unit).
    sizes : (k,2) array
        Width and height of each label's box, same units.
    priority : (k,) array
        Larger first (the magnitude of the value): a label that cannot find a
        free place gives way to those placed before it.
    away : (k,2) array, optional
        A direction per label to push it off its anchor (the side the diagram
        is drawn on): the box starts half its size beyond the anchor that way.
    obstacles : (o,4) array, optional
        Boxes (xmin, ymin, xmax, ymax) to keep clear of (member labels, a legend).
    bounds : (4,) array, optional
        (xmin, ymin, xmax, ymax) the boxes must stay inside.
    limit : int, optional
        At most this many labels.

    Returns
    -------
    (k,2) array of box centres (NaN where left out).

    Notes
    -----
    Greedy, O(k²) box tests; for the few dozen labels of one figure.
    """
    A = np.asarray(anchors, float).reshape(-1, 2)
    S = np.asarray(sizes, float).reshape(-1, 2)
    k = len(A)
    out = np.full((k, 2), np.nan)
    if k == 0:
        return out
    D = np.zeros((k, 2)) if away is None else np.asarray(away, float).reshape(-1, 2)
    norm = np.linalg.norm(D, axis=1, keepdims=True)
    D = np.divide(D, norm, out=np.zeros_like(D), where=norm > 0)
    placed: list[tuple[float, float, float, float]] = [tuple(b) for b in np.asarray(obstacles, float).reshape(-1, 4)] \
        if obstacles is not None else []
    order = np.argsort(-np.asarray(priority, float), kind="stable")
    count = 0
    for i in order:
        if limit is not None and count >= limit:
            break
        w, h = S[i]
        base = A[i] + D[i] * (0.5 * np.abs(D[i]) @ np.array([w, h]) + 0.15 * h)
        for dx, dy in _TRIES:
            c = base + np.array([dx * w, dy * h])
            box = (c[0] - w / 2, c[1] - h / 2, c[0] + w / 2, c[1] + h / 2)
            if bounds is not None and (box[0] < bounds[0] or box[1] < bounds[1] or box[2] > bounds[2]
                                       or box[3] > bounds[3]):
                continue
            if any(box[0] < b[2] and b[0] < box[2] and box[1] < b[3] and b[1] < box[3] for b in placed):
                continue
            placed.append(box)
            out[i] = c
            count += 1
            break
    return out
