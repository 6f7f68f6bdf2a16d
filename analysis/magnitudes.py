"""Finite, representable magnitudes: the check a frame passes before any matrix is built.

A modulus of 1e-300 Pa, a line load of -1e300 N/m or a node at x = 1e300 m
is a mistake in the file (a unit, a typo), not a structure: each overflows
double precision somewhere in the stiffness matrix or the results, and then
fails far from its cause. `check_magnitudes` names the value and its
element instead.

The bounds are deliberately wide (many orders of magnitude past any
building or bridge; common practice, no source): they catch what cannot be
computed, not what is merely unusual.
"""
from __future__ import annotations

import math

import numpy as np

from .errors import ModelError
from .model import Frame, LineLoad, PointLoad

__all__ = ["check_magnitudes", "plausibility_warnings", "displacement_warnings", "BOUNDS"]

#: (lowest allowed magnitude of a non-zero value, highest), SI units.
BOUNDS: dict[str, tuple[float, float]] = {
    "coordinate": (0.0, 1e8),  # m: georeferenced coordinates reach 1e7
    "E": (1e3, 1e14),  # Pa
    "G": (1e3, 1e14),  # Pa
    "A": (1e-12, 1e4),  # m2
    "I": (0.0, 1e6),  # m4 (Iy, Iz, J)
    "density": (0.0, 1e6),  # kg/m3
    "force": (0.0, 1e13),  # N, N*m, N/m
    "settlement": (0.0, 1e3),  # m or rad
    "factor": (0.0, 1e4),  # combination factors, self-weight coefficients
    "spring": (0.0, 1e30),  # N/m, N*m/rad
}


def _bad(value: float, kind: str, positive: bool = False) -> str | None:
    """Why ``value`` cannot be used (None: it can)."""
    if math.isnan(value):
        return "is not a number (NaN)"
    if math.isinf(value):
        return "is infinite"
    low, high = BOUNDS[kind]
    a = abs(value)
    if positive and value <= 0.0:
        return f"is {value:g}, not positive"
    if a > high:
        return f"is {value:g}, beyond {high:g} (SI units)"
    if a != 0.0 and a < low:
        return f"is {value:g}, below {low:g} (SI units)"
    return None


def _label(labels: tuple[str, ...], ids: tuple[str, ...], k: int, what: str) -> str:
    if k < len(labels) and labels[k] and labels[k] != ids[k]:
        return labels[k]
    return f"{what} {ids[k]}"


def check_magnitudes(frame: Frame) -> None:
    """Raise `ModelError` naming the first value that is not finite or beyond `BOUNDS`.

    Checks node coordinates, E, G, A, Iy, Iz, J, density, springs, every
    load, settlement and self-weight coefficient, and combination factors.
    The message names the member or node by its entity label where the frame
    has one (``#92 IfcStructuralCurveMember 'C1' (GlobalId ...)``).
    """
    nodes = np.asarray(frame.nodes, dtype=float)
    if nodes.size:
        bad = ~np.isfinite(nodes) | (np.abs(nodes) > BOUNDS["coordinate"][1])
        if bad.any():
            i, c = (int(v) for v in np.argwhere(bad)[0])
            why = _bad(float(nodes[i, c]), "coordinate")
            raise ModelError(f"{_label(frame.node_labels, frame.node_ids, i, 'node')}: coordinate {'xyz'[c]} {why}")
    member_checks = (("E", frame.E, "E", True), ("G", frame.G, "G", True), ("A", frame.A, "A", True),
                     ("Iy", frame.Iy, "I", False), ("Iz", frame.Iz, "I", False), ("J", frame.J, "I", False),
                     ("density", frame.density, "density", False))
    for name, values, kind, positive in member_checks:
        arr = np.asarray(values, dtype=float)
        if not arr.size:
            continue
        low, high = BOUNDS[kind]
        a = np.abs(arr)
        bad = ~np.isfinite(arr) | (a > high) | ((a != 0) & (a < low)) | (arr < 0)
        if positive:
            bad |= arr <= 0
        if name == "G" and len(frame.truss) == arr.size:  # an axial bar may leave G at 0 (it is not used)
            bad &= ~((arr == 0) & np.asarray(frame.truss, dtype=bool))
        if bad.any():
            k = int(np.flatnonzero(bad)[0])
            v = float(arr[k])
            why = _bad(v, kind, positive) or (f"is {v:g}, negative" if v < 0 else f"is {v:g}")
            raise ModelError(f"{_label(frame.member_labels, frame.member_ids, k, 'member')}: {name} {why}")
    springs = np.asarray(frame.springs, dtype=float)
    if springs.size:
        bad = ~np.isfinite(springs) | (springs < 0) | (springs > BOUNDS["spring"][1])
        if bad.any():
            i, c = (int(v) for v in np.argwhere(bad)[0])
            raise ModelError(f"{_label(frame.node_labels, frame.node_ids, i, 'node')}: support spring {c + 1} "
                             f"{_bad(float(springs[i, c]), 'spring') or f'is {springs[i, c]:g}, negative'}")
    for case in frame.load_cases:
        _check_case(case)
    for combo in frame.combinations:
        for name, factor in combo.factors:
            why = _bad(float(factor), "factor")
            if why:
                raise ModelError(f"combination {combo.name!r}" + (f" ({combo.source})" if combo.source else "")
                                 + f": the factor of {name!r} {why}")


def _where(case, source) -> str:
    return f"load case {case.name!r}" + (f", action with GlobalId {source}" if source else "")


def _check_case(case) -> None:
    for k, c in enumerate(case.self_weight):
        why = _bad(float(c), "factor")
        if why:
            raise ModelError(f"load case {case.name!r}" + (f" ({case.source})" if case.source else "")
                             + f": self-weight coefficient {'xyz'[k]} {why}")
    for load in case.nodal:
        for v in load.values:
            why = _bad(float(v), "force")
            if why:
                raise ModelError(f"{_where(case, load.source)}: a load on node {load.node} {why}")
    for m in case.member:
        values: list[float] = []
        if isinstance(m, LineLoad):
            values = [float(m.w1)] + ([float(m.w2)] if m.w2 is not None else [])
        elif isinstance(m, PointLoad):
            values = [float(m.value)]
        for v in values:
            why = _bad(v, "force")
            if why:
                raise ModelError(f"{_where(case, m.source)}: a load on member {m.member} {why}")
    for s in case.settlements:
        why = _bad(float(s.value), "settlement")
        if why:
            raise ModelError(f"{_where(case, s.source)}: the settlement of node {s.node} ({s.dof}) {why}")


# --------------------------------------------------------------------------- plausibility (warnings, not errors)
# Typical ranges per material family, SI (E, G in Pa, density in kg/m3); a value outside the wide range is
# reported. Steel: EN 1993-1-1 3.2.6 gives E = 210 GPa, G = 81 GPa, density 7850 (EN 1991-1-1 Annex A);
# concrete: EN 1992-1-1 Table 3.1, Ecm 27-44 GPa; timber: EN 338, E0,mean 7-20 GPa, density 290-1080;
# aluminium: EN 1999-1-1 3.2.5, E = 70 GPa, density 2700 (from memory). The wide ranges are common practice.
_FAMILIES: tuple[tuple[str, str, dict[str, tuple[float, float]]], ...] = (
    ("steel", r"steel|stahl|acier|\bS\s?[2-9]\d\d|\bA\s?(36|572|992|500|588|913)\b|\bgrade\s*\d+",
     {"E": (150e9, 250e9), "G": (60e9, 100e9), "density": (7000.0, 8500.0)}),
    ("concrete", r"concrete|beton|\bL?C\s?\d{2,3}\s*/\s*\d{2,3}",
     {"E": (5e9, 60e9), "G": (2e9, 27e9), "density": (1500.0, 3000.0)}),
    ("timber", r"timber|wood|holz|softwood|hardwood|glulam|\bGL\s?\d{2}|\b[CD]\s?\d{2}\b|\bLVL\b|\bCLT\b",
     {"E": (1e9, 30e9), "G": (0.05e9, 2e9), "density": (250.0, 1200.0)}),
    ("aluminium", r"alumin|\bEN\s?AW|\b[5-7]\d{3}-T\d",
     {"E": (60e9, 80e9), "G": (20e9, 30e9), "density": (2500.0, 2900.0)}),
)
_ANY = {"E": (1e8, 5e11), "G": (1e7, 2e11), "density": (1.0, 25000.0)}


def _family(name: str) -> tuple[str, dict[str, tuple[float, float]]]:
    import re

    for family, pattern, ranges in _FAMILIES:
        if re.search(pattern, name or "", re.IGNORECASE):
            return family, ranges
    return "", _ANY


def plausibility_warnings(frame: Frame) -> list:
    """Warnings for E, G and density far outside the range of the material's family (by its name).

    One warning per material and value, naming the material, the value, the
    range and the number of members; a unit mistake (psi for ksi, mass for
    force) shows up here long before it shows as kilometre displacements.
    """
    from .errors import Diagnostic

    out: list[Diagnostic] = []
    names = np.array(list(frame.material_names) if len(frame.material_names) == frame.n_members
                     else [""] * frame.n_members, dtype=object)
    seen: dict[tuple[str, str, float], int] = {}
    if not frame.n_members:
        return out
    unique, inverse = np.unique(names.astype(str), return_inverse=True)
    for u, name in enumerate(unique):  # one family look-up per material name
        rows = inverse == u
        family, ranges = _family(str(name))
        for key, values in (("E", frame.E), ("G", frame.G), ("density", frame.density)):
            v = np.asarray(values, dtype=float)[rows]
            low, high = ranges[key]
            bad = (v < low) | (v > high)
            if key != "E":
                bad &= v != 0.0  # not given (a bar's G, a weightless member)
            for x in np.unique(v[bad]):
                seen[(str(name), key, float(x))] = int(np.count_nonzero(v[bad] == x))
    for (name, key, v), count in seen.items():
        family, ranges = _family(name)
        low, high = ranges[key]
        unit, scale = ("GPa", 1e9) if key in ("E", "G") else ("kg/m3", 1.0)
        what = f"{family} " if family else ""
        out.append(Diagnostic("warning", None, f"material {name or '(unnamed)'!r}: {key} = {v / scale:.4g} {unit} is "
                                               f"outside the plausible range of {what or 'structural '}materials "
                                               f"({low / scale:.4g} to {high / scale:.4g} {unit}) on {count} "
                                               "member(s): check the value and its unit"))
    return out


def displacement_warnings(results, ratio: float = 1.0 / 50.0) -> list:
    """A warning when the largest translation exceeds ``ratio`` of the frame's size (a unit or stiffness mistake).

    Span/50 is far beyond any serviceability limit (span/250 to span/500 are
    usual; common practice, no source): a linear analysis is not valid there.
    """
    from .errors import Diagnostic

    frame = results.frame
    if frame.n_nodes < 2:
        return []
    size = float(np.max(np.ptp(np.asarray(frame.nodes, dtype=float), axis=0)))
    if size <= 0.0:
        return []
    worst, where = 0.0, ("", "")
    for name, cr in results.cases.items():
        d = np.asarray(cr.displacements, dtype=float)
        if not d.size:
            continue
        t = np.linalg.norm(d[:, :3], axis=1)
        i = int(np.argmax(t))
        if t[i] > worst:
            worst, where = float(t[i]), (frame.node_ids[i], name)
    if worst <= ratio * size:
        return []
    return [Diagnostic("warning", None, f"the largest displacement, {worst * 1e3:.4g} mm at node {where[0]} "
                                        f"({where[1]}), is 1/{size / worst:.3g} of the frame's size ({size:.4g} m): "
                                        "far beyond what a linear analysis represents; check the supports, the units of E, the "
                                        "sections and the loads")]
