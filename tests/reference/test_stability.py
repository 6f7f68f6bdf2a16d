"""Elastic critical load factors against the classic closed forms, one member per column or beam.

Sources: Euler's column formulas P_cr = π²EI/(KL)² with K = 1 (pinned–pinned), 2 (fixed–free) and
0.699 (fixed–pinned, P_cr = 20.19 EI/L², the root kL = 4.4934 of tan kL = kL) and the higher roots
(pinned: n²π²; fixed–free: (2n−1)²π²/4; fixed–pinned: 4.4934², 7.7253², 10.9041²) —
Timoshenko & Gere, Theory of Elastic Stability, ch. 2 (from memory). Sway portal on a rigid beam:
each column a sway column with effective length h (fixed bases: P_cr = π²EI/h² per column) or 2h
(pinned bases: π²EI/(4h²)) — same source, ch. 2 (from memory).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from analysis import AnalysisOptions, Combination, FrameBuilder, LoadCase, Material, NodalLoad, Section, analyze

E = 210e9
I_STRONG, I_WEAK = 8356e-8, 8356e-8 / 4  # weak axis second mode (9×) comes after the strong first (4×)
A = 53.8e-4
H = 4.0
P = 1.0e5  # applied load, N
RTOL = 5e-3
MAT = Material("steel", E=E, G=81e9, density=7850.0)


def column(base: str, top: str, Iy=I_STRONG, Iz=I_STRONG) -> object:
    b = FrameBuilder()
    b.add_node("B", (0, 0, 0), support=base)
    b.add_node("T", (0, 0, H), support=top or None)
    b.add_member("C", "B", "T", Section("col", A=A, Iy=Iy, Iz=Iz, J=1e-6), MAT)
    b.add_case(LoadCase("P", nodal=(NodalLoad("T", (0, 0, -P, 0, 0, 0)),)))
    return b.build()


def factors(frame, n, name="P", **kw):
    res = analyze(frame, AnalysisOptions(buckling=n, **kw))
    return np.array([m.factor for m in res.buckling[name]]), res


PIN_BASE = "ux uy uz rz"  # pinned, torsion held
EULER = [
    ("pinned-pinned", PIN_BASE, "ux uy", [1.0, 4.0, 9.0]),
    ("fixed-free", "fixed", "", [0.25, 2.25, 6.25]),
    ("fixed-pinned", "fixed", "ux uy", [4.4934**2 / math.pi**2, 7.7253**2 / math.pi**2, 10.9041**2 / math.pi**2]),
]


@pytest.mark.parametrize("name,base,top,multiples", EULER, ids=[e[0] for e in EULER])
def test_euler_columns_and_higher_modes(name, base, top, multiples):
    # one plane: the weak axis is made very stiff so only the strong-axis modes come first
    pe = math.pi**2 * E * I_STRONG / H**2
    alpha, _ = factors(column(base, top, Iy=I_STRONG, Iz=I_STRONG), 6)
    # equal inertias: each mode appears twice (two planes)
    assert_allclose(alpha[::2], np.array(multiples) * pe / P, rtol=RTOL)
    assert_allclose(alpha[1::2], alpha[::2], rtol=1e-6)


def test_fixed_pinned_constant():
    alpha, _ = factors(column("fixed", "ux uy"), 1)
    assert_allclose(alpha[0] * P, 20.19 * E * I_STRONG / H**2, rtol=RTOL)


def test_space_column_weak_axis_first_in_the_right_direction():
    # vertical member: local z = global -X, local y = global +Y (model.py convention);
    # Iz (about local z) governs bending in the local x-y plane, i.e. sway along global Y
    alpha, res = factors(column("fixed", "", Iy=I_STRONG, Iz=I_WEAK), 2)
    assert_allclose(alpha * P, [math.pi**2 * E * I_WEAK / (4 * H**2), math.pi**2 * E * I_STRONG / (4 * H**2)], rtol=RTOL)
    weak, strong = res.buckling["P"]
    top = res.frame.node_index("T")
    assert abs(weak.shape[top, 1]) == pytest.approx(1.0) and abs(weak.shape[top, 0]) < 1e-6
    assert abs(strong.shape[top, 0]) == pytest.approx(1.0) and abs(strong.shape[top, 1]) < 1e-6


def portal(base: str):
    b = FrameBuilder()
    col = Section("col", A=A, Iy=I_STRONG, Iz=I_STRONG, J=1e-6)
    beam = Section("beam", A=1.0, Iy=1e3, Iz=1e3, J=1e3)  # practically rigid
    b.add_node("A", (0, 0, 0), support=base)
    b.add_node("B", (0, 0, H))
    b.add_node("C", (6.0, 0, H))
    b.add_node("D", (6.0, 0, 0), support=base)
    b.add_member("AB", "A", "B", col, MAT)
    b.add_member("BC", "B", "C", beam, MAT)
    b.add_member("DC", "D", "C", col, MAT)
    b.add_case(LoadCase("G", nodal=(NodalLoad("B", (0, 0, -P, 0, 0, 0)), NodalLoad("C", (0, 0, -P, 0, 0, 0)))))
    b.add_combination(Combination("1.35G", (("G", 1.35),)))
    return b.build()


@pytest.mark.parametrize("base,length", [("fixed", H), ("pinned", 2 * H)])
def test_sway_portal_on_rigid_beam(base, length):
    alpha, res = factors(portal(base), 1, name="1.35G", plane=True)
    assert_allclose(alpha[0] * 1.35 * P, math.pi**2 * E * I_STRONG / length**2, rtol=RTOL)
    # the mode is the sway: both column tops move the same way, the beam stays straight
    b, c = res.frame.node_index("B"), res.frame.node_index("C")
    mode = res.buckling["1.35G"][0].shape
    assert_allclose(mode[b, 0], mode[c, 0], rtol=1e-3)
    assert set(res.buckling) == {"1.35G"}  # per combination where there are combinations


def test_scaled_load_scales_the_factor_inversely():
    """Property (linear eigenproblem): loads × s gives α / s."""
    base, _ = factors(column("fixed", ""), 2)
    frame = column("fixed", "")
    for s in (0.5, 3.0, 17.0):
        scaled = frame.replace(load_cases=(LoadCase("P", nodal=(NodalLoad("T", (0, 0, -P * s, 0, 0, 0)),)),))
        alpha, _ = factors(scaled, 2)
        assert_allclose(alpha, base / s, rtol=1e-9)


def test_tension_only_has_no_buckling_mode():
    frame = column("fixed", "")
    pulled = frame.replace(load_cases=(LoadCase("P", nodal=(NodalLoad("T", (0, 0, P, 0, 0, 0)),)),))
    alpha, _ = factors(pulled, 3)
    assert alpha.size == 0
