"""Natural modes and effective modal masses against closed forms, one member per beam or column.

Sources (Clough & Penzien, Dynamics of Structures, ch. 18; Blevins, Formulas for Natural Frequency and
Mode Shape, table 8-1 — from memory): a uniform Euler–Bernoulli beam of mass μ per length has
ω_n = β_n² √(EI/(μ L⁴)) with β_n L = nπ (simply supported) and 1.87510, 4.69409, 7.85476 (cantilever).
Effective modal mass ratios: 8/π² for the first simply supported mode (∫sin / ∫sin², from memory), 0.613
and 0.188 for the first two cantilever modes (from memory). A portal with rigid beam, fixed-base columns
and storey mass M: lateral stiffness 2 × 12EI/h³, ω = √(24EI/(h³M)) (common practice, no source).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from analysis import AnalysisOptions, FrameBuilder, LineLoad, LoadCase, Material, NodalLoad, Section, analyze

E = 210e9
RHO = 7850.0
A = 53.8e-4
I = 8356e-8
L = 6.0
RTOL = 5e-3
G = 9.80665
MAT = Material("steel", E=E, G=81e9, density=RHO)


def beam(kind: str, Iy=I, Iz=I, material=MAT):
    b = FrameBuilder()
    sec = Section("s", A=A, Iy=Iy, Iz=Iz, J=1e-3)  # torsion modes well above the bending ones
    if kind == "simple":
        b.add_node("A", (0, 0, 0), support="ux uy uz rx")
        b.add_node("B", (L, 0, 0), support="uy uz")
    else:
        b.add_node("A", (0, 0, 0), support="fixed")
        b.add_node("B", (L, 0, 0))
    b.add_member("AB", "A", "B", sec, material)
    return b.build()


def omega(beta_l, Iv=I, E_=E, rho=RHO):
    return beta_l**2 * math.sqrt(E_ * Iv / (rho * A * L**4))


def bending_modes(res, axis):
    """Modes whose largest motion is a translation along world ``axis``."""
    return [m for m in res.modes if np.abs(np.concatenate([a[:, :3] for a in m.along])).max(axis=0).argmax() == axis]


@pytest.mark.parametrize("kind,betas", [("simple", [math.pi, 2 * math.pi, 3 * math.pi]),
                                        ("cantilever", [1.87510, 4.69409, 7.85476])])
def test_beam_first_three_frequencies(kind, betas):
    res = analyze(beam(kind, Iy=I, Iz=I / 50), AnalysisOptions(modes=12, plane=False))
    vertical = bending_modes(res, 2)[:3]  # bending about local y (Iy), motion along Z
    assert_allclose([m.omega for m in vertical], [omega(b) for b in betas], rtol=RTOL)
    sideways = bending_modes(res, 1)[:3]
    assert_allclose([m.omega for m in sideways], [omega(b, I / 50) for b in betas], rtol=RTOL)


def test_effective_mass_ratios_simple_and_cantilever():
    res = analyze(beam("simple"), AnalysisOptions(modes=1, plane=True))
    assert_allclose(res.modes[0].effective_mass_ratio[2], 8 / math.pi**2, rtol=RTOL)
    res = analyze(beam("cantilever"), AnalysisOptions(modes=2, plane=True))
    assert_allclose([m.effective_mass_ratio[2] for m in res.modes], [0.613, 0.188], rtol=RTOL, atol=5e-4)
    assert res.mass.total == pytest.approx(RHO * A * L)
    assert res.mass.sources == ("members",)


def test_portal_storey_mass_from_a_load_case():
    h, span = 3.5, 8.0
    M = 40e3  # kg on the floor
    b = FrameBuilder()
    col = Section("col", A=A, Iy=I, Iz=I, J=1e-6)
    beam_sec = Section("beam", A=1.0, Iy=1e3, Iz=1e3, J=1e3)
    massless = Material("massless steel", E=E, G=81e9, density=0.0)
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, h))
    b.add_node("C", (span, 0, h))
    b.add_node("D", (span, 0, 0), support="fixed")
    b.add_member("AB", "A", "B", col, massless)
    b.add_member("BC", "B", "C", beam_sec, massless)
    b.add_member("DC", "D", "C", col, massless)
    w = M * G / span
    b.add_case(LoadCase("floor", member=(LineLoad("BC", "z", -w, axes="global"),), self_weight=(0, 0, -1)))
    res = analyze(b.build(), AnalysisOptions(modes=1, mass=(("floor", 1.0),), plane=True))
    assert_allclose(res.modes[0].omega, math.sqrt(24 * E * I / (h**3 * M)), rtol=RTOL)
    assert res.modes[0].effective_mass_ratio[0] == pytest.approx(1.0, rel=1e-3)
    assert res.mass.total == pytest.approx(M)
    assert res.mass.sources == ("members", "floor x 1")


def test_space_cantilever_two_inertias():
    Iy, Iz = I, I / 4
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, L))
    b.add_member("AB", "A", "B", Section("s", A=A, Iy=Iy, Iz=Iz, J=1e-5), MAT)
    res = analyze(b.build(), AnalysisOptions(modes=2))
    # vertical member: local y = world +Y, so Iz governs sway along Y (the weak one first), Iy along X
    first, second = res.modes
    assert_allclose([first.omega, second.omega], [omega(1.87510, Iz), omega(1.87510, Iy)], rtol=RTOL)
    assert first.effective_mass_ratio[1] == pytest.approx(0.613, abs=2e-3) and first.effective_mass_ratio[0] < 1e-9
    assert second.effective_mass_ratio[0] == pytest.approx(0.613, abs=2e-3) and second.effective_mass_ratio[1] < 1e-9


def test_mass_sums_to_the_total():
    """Members' own mass, nodal masses and a partial line load: the total is their sum, and with the
    mass on free joints only the effective masses of all modes add up to it (a mathematical identity)."""
    b = FrameBuilder()
    sec = Section("s", A=A, Iy=I, Iz=I, J=1e-5)
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 3.0))
    b.add_node("C", (4.0, 0, 3.0))
    b.add_member("AB", "A", "B", sec, MAT)
    b.add_member("BC", "B", "C", sec, MAT)
    b.add_case(LoadCase("extra", nodal=(NodalLoad("C", (0, 0, -5e3, 0, 0, 0)), NodalLoad("B", (0, 0, -1e3, 0, 0, 0))),
                        member=(LineLoad("BC", "z", -2e3, axes="global", start=1.0, end=3.0),)))
    frame = b.build()
    res = analyze(frame, AnalysisOptions(modes=200, mass=(("extra", 2.0),), plane=True, subdivisions=4))
    members = RHO * A * 7.0
    added = 2.0 * (6e3 + 2e3 * 2.0) / G
    assert res.mass.total == pytest.approx(members + added)
    assert sum(m.effective_mass_ratio[0] for m in res.modes) < 1.0
    massless = frame.replace(density=np.zeros(2))
    res = analyze(massless, AnalysisOptions(modes=200, mass=(("extra", 2.0),), plane=True, subdivisions=4))
    assert res.mass.total == pytest.approx(added)
    for axis in (0, 2):
        assert sum(m.effective_mass_ratio[axis] for m in res.modes) == pytest.approx(1.0, rel=1e-9)


@pytest.mark.parametrize("scale", [0.25, 4.0])
def test_frequencies_scale_with_root_E_and_inverse_root_rho(scale):
    base = analyze(beam("cantilever"), AnalysisOptions(modes=3, plane=True)).modes
    stiff = Material("x", E=E * scale, G=81e9 * scale, density=RHO)
    heavy = Material("y", E=E, G=81e9, density=RHO * scale)
    f_e = analyze(beam("cantilever", material=stiff), AnalysisOptions(modes=3, plane=True)).modes
    f_r = analyze(beam("cantilever", material=heavy), AnalysisOptions(modes=3, plane=True)).modes
    assert_allclose([m.frequency for m in f_e], [m.frequency * math.sqrt(scale) for m in base], rtol=1e-8)
    assert_allclose([m.frequency for m in f_r], [m.frequency / math.sqrt(scale) for m in base], rtol=1e-8)


def test_no_mass_is_a_clear_error():
    from analysis import ModelError

    frame = beam("cantilever", material=Material("massless", E=E, G=81e9, density=0.0))
    with pytest.raises(ModelError, match="natural modes need mass"):
        analyze(frame, AnalysisOptions(modes=2, plane=True))


def test_a_mass_case_with_self_weight_does_not_count_the_members_twice():
    frame = beam("cantilever")
    with_sw = frame.replace(load_cases=(LoadCase("G", nodal=(NodalLoad("B", (0, 0, -2e3, 0, 0, 0)),),
                                                 self_weight=(0, 0, -1)),))
    res = analyze(with_sw, AnalysisOptions(modes=1, mass=(("G", 1.0),), plane=True))
    assert res.mass.total == pytest.approx(RHO * A * L + 2e3 / G)
    # a tip mass M on a cantilever of mass m: ω² ≈ 3EI / (L³ (M + 0.2357 m)) (Rayleigh, from memory)
    M, m = 2e3 / G, RHO * A * L
    assert res.modes[0].omega == pytest.approx(math.sqrt(3 * E * I / (L**3 * (M + 0.2357 * m))), rel=0.01)
