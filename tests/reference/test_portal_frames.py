"""Portal frames against the slope-deflection method, solved independently with sympy.

Slope-deflection equations (e.g. Hibbeler, Structural Analysis, ch. 10 — from memory), written here:
M_ij = 2EI/L (2θ_i + θ_j - 3ψ) + FEM_ij, clockwise positive, ψ = Δ/L the chord rotation.
They neglect axial strain, so the engine runs with axially rigid members and must then agree exactly.
In the world XZ plane with X right and Z up, a clockwise rotation is a positive rotation about +Y.
"""
from __future__ import annotations

import pytest
import sympy as sy
from numpy.testing import assert_allclose

from analysis import AnalysisOptions, FrameBuilder, LineLoad, LoadCase, Material, NodalLoad, Section, analyze

E = 200e9
COL = Section("col", A=8e-3, Iy=1.2e-4, Iz=4e-5, J=1e-6)
BEAM = Section("beam", A=9e-3, Iy=2.5e-4, Iz=5e-5, J=1e-6)
MAT = Material("steel", E=E, G=77e9)
H_, L_ = 4.0, 6.0
HLOAD, W = 20e3, 15e3


def portal(base: str):
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support=base)
    b.add_node("B", (0, 0, H_))
    b.add_node("C", (L_, 0, H_))
    b.add_node("D", (L_, 0, 0), support=base)
    b.add_member("AB", "A", "B", COL, MAT)
    b.add_member("BC", "B", "C", BEAM, MAT)
    b.add_member("DC", "D", "C", COL, MAT)
    b.add_case(LoadCase("lateral", nodal=(NodalLoad("B", (HLOAD, 0, 0, 0, 0, 0)),)))
    b.add_case(LoadCase("gravity", member=(LineLoad("BC", "z", -W, axes="global"),)))
    return b.build()


def slope_deflection(base: str, case: str) -> dict[str, float]:
    tA, tB, tC, tD, d = sy.symbols("tA tB tC tD d")
    EIc, EIb = E * COL.Iy, E * BEAM.Iy
    fem = W * L_**2 / 12 if case == "gravity" else 0.0
    H = HLOAD if case == "lateral" else 0.0
    if base == "fixed":
        tA_, tD_ = 0, 0
    else:
        tA_, tD_ = tA, tD
    psi = d / H_  # sway to the right turns both columns clockwise
    M = {
        "AB": 2 * EIc / H_ * (2 * tA_ + tB - 3 * psi),
        "BA": 2 * EIc / H_ * (2 * tB + tA_ - 3 * psi),
        "BC": 2 * EIb / L_ * (2 * tB + tC) - fem,
        "CB": 2 * EIb / L_ * (2 * tC + tB) + fem,
        "CD": 2 * EIc / H_ * (2 * tC + tD_ - 3 * psi),
        "DC": 2 * EIc / H_ * (2 * tD_ + tC - 3 * psi),
    }
    eqs = [M["BA"] + M["BC"], M["CB"] + M["CD"],
           # horizontal equilibrium of the beam: column shears (from end moments) balance H
           (M["AB"] + M["BA"]) / H_ + (M["CD"] + M["DC"]) / H_ + H]
    unknowns = [tB, tC, d]
    if base == "pinned":
        eqs += [M["AB"], M["DC"]]
        unknowns += [tA, tD]
    sol = sy.solve(eqs, unknowns, dict=True)[0]
    out = {k: float(v.subs(sol)) for k, v in M.items()}
    out.update(tB=float(sol[tB]), tC=float(sol[tC]), d=float(sol[d]))
    return out


def end_moment_about_y(res, case, member, end):
    """Global Y moment that the node exerts on a member end (clockwise positive)."""
    k = res.frame.member_index(member)
    f = res.cases[case].end_forces[k, end]
    return float((res.R[k].T @ f[3:])[1])


@pytest.mark.parametrize("base", ["fixed", "pinned"])
@pytest.mark.parametrize("case", ["lateral", "gravity"])
@pytest.mark.parametrize("condense", [False, True])
def test_portal_matches_slope_deflection(base, case, condense):
    expect = slope_deflection(base, case)
    res = analyze(portal(base), AnalysisOptions(plane=True, inextensible=True, condense_pinned=condense))
    cr = res.cases[case]
    B, C = 1, 2
    scale = max(abs(v) for k, v in expect.items() if len(k) == 2)
    assert_allclose(cr.displacements[B, 4], expect["tB"], rtol=1e-9)
    assert_allclose(cr.displacements[C, 4], expect["tC"], rtol=1e-9)
    assert_allclose(cr.displacements[B, 0], expect["d"], rtol=1e-9, atol=1e-15)
    assert_allclose(cr.displacements[C, 0], cr.displacements[B, 0], rtol=1e-12, atol=1e-15)  # beam rigid axially
    assert_allclose(cr.displacements[B, 2], 0.0, atol=1e-15)  # columns rigid axially
    for member, end, key in (("AB", 0, "AB"), ("AB", 1, "BA"), ("BC", 0, "BC"), ("BC", 1, "CB"),
                             ("DC", 1, "CD"), ("DC", 0, "DC")):
        assert_allclose(end_moment_about_y(res, case, member, end), expect[key], atol=1e-9 * scale)
    # kinematic unknowns (slope-deflection): fixed base θB, θC, Δ; pinned base adds θA, θD unless condensed
    expected_unknowns = 3 if base == "fixed" or condense else 5
    assert res.n_unknowns == expected_unknowns


def test_extensible_portal_is_close_to_slope_deflection():
    # Axial strain changes the answer only slightly for stocky members (common practice, no source)
    expect = slope_deflection("fixed", "lateral")
    res = analyze(portal("fixed"), AnalysisOptions(plane=True))
    assert_allclose(res.cases["lateral"].displacements[1, 0], expect["d"], rtol=2e-2)
    assert res.n_unknowns == 3 * 4 - 6
    space = analyze(portal("fixed"))
    assert space.n_unknowns == 6 * 4 - 12
    assert_allclose(space.cases["lateral"].displacements, res.cases["lateral"].displacements, atol=1e-15)


def test_pinned_portal_left_to_the_default_is_analysed_in_its_plane():
    # in space a portal on pinned bases sways out of its plane freely (a mechanism); its nodes and loads
    # all lie in the XZ plane, so the default analysis falls back to the plane frame and says so
    from analysis import UnstableStructureError

    with pytest.raises(UnstableStructureError):
        analyze(portal("pinned"), AnalysisOptions(plane=False))
    res = analyze(portal("pinned"))
    assert res.dimension == 2
    assert any("out of its own plane" in d.message for d in res.diagnostics)
    plane = analyze(portal("pinned"), AnalysisOptions(plane=True))
    assert_allclose(res.cases["lateral"].displacements, plane.cases["lateral"].displacements, rtol=1e-12, atol=1e-18)
