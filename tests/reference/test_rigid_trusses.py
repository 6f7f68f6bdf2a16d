"""Pin-jointed trusses with every bar axially rigid (``--inextensible``), against hand methods.

Sources beside each check. The bar forces are compared with the method of
joints (equilibrium of every joint, common practice; any statics text, e.g.
Hibbeler, "Engineering Mechanics: Statics", the chapter on trusses — from
memory): in closed form for the Pratt truss, as the joint-equilibrium system
solved with numpy (built here, independently of the engine) for the others.
Plane trusses lie in the world XZ plane, Z up.
"""
from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from analysis.errors import ModelError
from analysis.indeterminacy import indeterminacy
from analysis.model import AnalysisOptions, FrameBuilder, LoadCase, Material, NodalLoad, Section
from analysis.stiffness.analyze import analyze

BAR = Section("bar", A=2e-3)
STEEL = Material("S355", E=210e9)
RIGID = AnalysisOptions(plane=True, condense_pinned=True, inextensible=True)
ELASTIC = AnalysisOptions(plane=True, condense_pinned=True)
P = 9e3

# six joints, nine bars: panels 4 m, height 3 m (3-4-5 triangles), diagonals falling toward midspan
PRATT_NODES = {"L0": (0, 0), "L1": (4, 0), "L2": (8, 0), "L3": (12, 0), "U1": (4, 3), "U2": (8, 3)}
PRATT_BARS = [("L0", "L1"), ("L1", "L2"), ("L2", "L3"), ("U1", "U2"), ("L0", "U1"), ("U2", "L3"),
              ("U1", "L1"), ("U2", "L2"), ("U1", "L2")]
# seven joints, eleven bars: equilateral-ish triangles, span 12 m, height 3 m
WARREN_NODES = {"L0": (0, 0), "L1": (4, 0), "L2": (8, 0), "L3": (12, 0), "U0": (2, 3), "U1": (6, 3), "U2": (10, 3)}
WARREN_BARS = [("L0", "L1"), ("L1", "L2"), ("L2", "L3"), ("U0", "U1"), ("U1", "U2"),
               ("L0", "U0"), ("U0", "L1"), ("L1", "U1"), ("U1", "L2"), ("L2", "U2"), ("U2", "L3")]
# eight joints, thirteen bars: two 4 m panels, 4 m deep; the end posts are split at mid-height and the
# K diagonals run from there to the top and bottom of the middle post
K_NODES = {"L0": (0, 0), "L1": (4, 0), "L2": (8, 0), "U0": (0, 4), "U1": (4, 4), "U2": (8, 4),
           "M0": (0, 2), "M2": (8, 2)}
K_BARS = [("L0", "L1"), ("L1", "L2"), ("U0", "U1"), ("U1", "U2"), ("L0", "M0"), ("M0", "U0"),
          ("L2", "M2"), ("M2", "U2"), ("L1", "U1"), ("M0", "U1"), ("M0", "L1"), ("M2", "U1"), ("M2", "L1")]


def truss(nodes, bars, supports, loads, **member_flags):
    b = FrameBuilder()
    for name, (x, z) in nodes.items():
        b.add_node(name, (x, 0, z), support=supports.get(name))
    for i, j in bars:
        b.add_member(i + j, i, j, BAR, STEEL, truss=True, **member_flags.get(i + j, {}))
    b.add_case(LoadCase("P", nodal=tuple(NodalLoad(n, (fx, 0, fz, 0, 0, 0)) for n, (fx, fz) in loads.items())))
    return b.build()


def method_of_joints(nodes, bars, supports, loads):
    """Bar forces (tension +) and reactions from the 2j joint-equilibrium equations (numpy solve)."""
    names = list(nodes)
    index = {n: k for k, n in enumerate(names)}
    cols = []
    for i, j in bars:
        d = np.subtract(nodes[j], nodes[i], dtype=float)
        e = d / np.linalg.norm(d)
        col = np.zeros(2 * len(names))
        col[2 * index[i]: 2 * index[i] + 2] = e  # a tension pulls joint i toward j
        col[2 * index[j]: 2 * index[j] + 2] = -e
        cols.append(col)
    for name, held in supports.items():
        for c, comp in enumerate(("ux", "uz")):
            if comp in held.split():
                col = np.zeros(2 * len(names))
                col[2 * index[name] + c] = 1.0
                cols.append(col)
    A = np.array(cols).T
    assert A.shape[0] == A.shape[1] and np.linalg.matrix_rank(A) == A.shape[0]  # determinate
    f = np.zeros(2 * len(names))
    for name, (fx, fz) in loads.items():
        f[2 * index[name]: 2 * index[name] + 2] = (fx, fz)
    x = np.linalg.solve(A, -f)
    return dict(zip((i + j for i, j in bars), x[: len(bars)]))


def bar_forces(frame, options):
    res = analyze(frame, options)
    forces = res.cases["P"].end_forces  # nodes on member, member axes: N = force at end j along x
    return {mid: float(forces[k, 1, 0]) for k, mid in enumerate(frame.member_ids)}, res


SUPPORTS = {"L0": "ux uz", "L3": "uz"}
CASES = {
    "pratt": (PRATT_NODES, PRATT_BARS, SUPPORTS, {"L1": (0.0, -P), "U2": (2e3, 0.0)}),
    "warren": (WARREN_NODES, WARREN_BARS, SUPPORTS, {"L1": (0.0, -P), "U1": (0.0, -4e3), "U2": (1.5e3, -2e3)}),
    "k-truss": (K_NODES, K_BARS, {"L0": "ux uz", "L2": "uz"}, {"L1": (0.0, -P), "U1": (3e3, -2e3), "M2": (1e3, 0.0)}),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_determinate_truss_has_no_unknown_left_when_every_bar_is_rigid(name):
    # Common practice, no source: a statically determinate truss (b + r = 2j, Hibbeler, "Structural
    # Analysis", truss determinacy — from memory) whose bars keep their length is one rigid body on
    # determinate supports: no joint can move, so there is no unknown displacement; each bar's axial
    # constraint is independent.
    nodes, bars, sup, loads = CASES[name]
    frame = truss(nodes, bars, sup, loads)
    r = indeterminacy(frame, RIGID)
    assert (r.kinematic, r.static, r.mechanisms) == (0, 0, 0)
    assert r.terms["constraints"] == len(bars) and r.terms["redundant_constraints"] == 0
    # without the idealisation every free joint translation is an unknown: 2j - r
    assert indeterminacy(frame, ELASTIC).kinematic == 2 * len(nodes) - 3
    # the notes say which members the idealisation made rigid
    note = next(n for n in r.notes if n.startswith("axially rigid"))
    assert f"every member ({len(bars)}" in note


def test_pratt_bar_forces_equal_the_method_of_joints_in_closed_form():
    # Method of joints by hand (common practice; any statics text — from memory) for a load P down at
    # L1 only: reactions 2P/3 at L0, P/3 at L3; with the 3-4-5 geometry (sin 3/5, cos 4/5):
    # L0U1 = -(2P/3)/(3/5) = -10P/9, L0L1 = 8P/9, U2L3 = -5P/9, L2L3 = 4P/9, U1U2 = -4P/9,
    # U2L2 = P/3, U1L2 = -5P/9, L1L2 = 8P/9, U1L1 = P.
    expect = {"L0U1": -10 / 9, "L0L1": 8 / 9, "U2L3": -5 / 9, "L2L3": 4 / 9, "U1U2": -4 / 9, "U2L2": 1 / 3,
              "U1L2": -5 / 9, "L1L2": 8 / 9, "U1L1": 1.0}
    frame = truss(PRATT_NODES, PRATT_BARS, SUPPORTS, {"L1": (0.0, -P)})
    for options in (ELASTIC, RIGID):
        forces, res = bar_forces(frame, options)
        for bar, ratio in expect.items():
            assert_allclose(forces[bar], ratio * P, rtol=1e-9, atol=1e-6)
        assert_allclose(res.cases["P"].reactions[0, 2], 2 * P / 3, rtol=1e-9)
        assert_allclose(res.cases["P"].reactions[3, 2], P / 3, rtol=1e-9)
        assert not [d for d in res.diagnostics if "redundant set" in d.message]


@pytest.mark.parametrize("name", sorted(CASES))
def test_bar_forces_equal_the_method_of_joints(name):
    # Method of joints as the 2j x (b + r) joint-equilibrium system (common practice; any statics text —
    # from memory): the bar forces of a determinate truss do not depend on the bars' stiffness, so the
    # elastic and the all-rigid analyses both give them.
    nodes, bars, sup, loads = CASES[name]
    frame = truss(nodes, bars, sup, loads)
    expect = method_of_joints(nodes, bars, sup, loads)
    scale = max(abs(v) for v in expect.values())
    for options in (ELASTIC, RIGID):
        forces, res = bar_forces(frame, options)
        for bar, value in expect.items():
            assert_allclose(forces[bar], value, atol=1e-9 * scale)
    # with every bar rigid nothing moves
    assert np.abs(res.cases["P"].displacements[:, :3]).max() == 0.0


def test_extra_diagonal_is_one_redundant_axial_constraint_named_with_the_bars_it_repeats():
    # Common practice, no source: a second diagonal in a braced panel is one internal redundant
    # (b + r - 2j = 1); with every bar rigid its length is already fixed by the six bars of that panel
    # (the panel's state of self-stress), so its constraint is the one redundant constraint.
    frame = truss(PRATT_NODES, PRATT_BARS + [("U2", "L1")], SUPPORTS, {"L1": (0.0, -P)})
    r = indeterminacy(frame, RIGID)
    assert (r.kinematic, r.static, r.mechanisms) == (0, 1, 0)
    assert r.terms["constraints"] == 9 and r.terms["redundant_constraints"] == 1
    (text,) = r.redundant
    assert text.startswith("the axial constraint of member U2L1 adds nothing")
    for bar in ("L1L2", "U1U2", "U1L1", "U2L2", "U1L2"):
        assert f"member {bar} (axially rigid)" in text
    for bar in ("L0L1", "L2L3", "L0U1", "U2L3"):  # outside the panel: not part of the self-stress
        assert f"member {bar} " not in text
    # the analysis warns that the rigid set's forces are the smallest in equilibrium
    _, res = bar_forces(frame, RIGID)
    assert any("smallest forces in equilibrium" in d.message for d in res.diagnostics)
    # the same truss, elastic: one redundant, solved by compatibility, no warning
    _, res = bar_forces(frame, ELASTIC)
    assert not any("smallest forces" in d.message for d in res.diagnostics)


def test_per_member_property_overrides_the_idealisation_both_ways():
    # one bar kept extensible under --inextensible: one unknown remains (its own elongation frees one
    # joint movement); one bar made rigid without the option: one unknown fewer (common practice)
    loads = {"L1": (0.0, -P)}
    kept = truss(PRATT_NODES, PRATT_BARS, SUPPORTS, loads, U1L1={"extensible": True})
    r = indeterminacy(kept, RIGID)
    assert (r.kinematic, r.terms["constraints"]) == (1, 8)
    note = next(n for n in r.notes if n.startswith("axially rigid"))
    assert "8 of 9 members" in note and "U1L1" in note and "kept extensible" in note
    forces, _ = bar_forces(kept, RIGID)
    assert_allclose(forces["U1L1"], P, rtol=1e-9)
    made = truss(PRATT_NODES, PRATT_BARS, SUPPORTS, loads, U1L1={"inextensible": True})
    r = indeterminacy(made, ELASTIC)
    assert (r.kinematic, r.terms["constraints"]) == (8, 1)
    note = next(n for n in r.notes if n.startswith("axially rigid"))
    assert "U1L1" in note and "its own property" in note
    with pytest.raises(ModelError, match="U1L1.*both axially rigid and extensible"):
        truss(PRATT_NODES, PRATT_BARS, SUPPORTS, loads, U1L1={"inextensible": True, "extensible": True})


def test_space_truss_rigid_bars():
    # Common practice, no source: a tetrahedron on a pin, two rollers and a third support component
    # is determinate in space (b + r = 6 + 6 = 3j); every bar rigid leaves nothing to move.
    b = FrameBuilder()
    for name, xyz, sup in (("A", (0, 0, 0), "pinned"), ("B", (4, 0, 0), "uy uz"), ("C", (0, 4, 0), "uz"),
                           ("D", (1, 1, 3), None)):
        b.add_node(name, xyz, support=sup)
    for i, j in (("A", "B"), ("B", "C"), ("C", "A"), ("A", "D"), ("B", "D"), ("C", "D")):
        b.add_member(i + j, i, j, BAR, STEEL, truss=True)
    f = b.build()
    assert indeterminacy(f, AnalysisOptions(plane=False, inextensible=True)).kinematic == 0
    assert indeterminacy(f, AnalysisOptions(plane=False)).kinematic == 6
