"""Classic degrees of indeterminacy, checked against hand-method textbook counts.

Sources are named beside each check. "from memory" means the worked example
or rule is recalled, not copied. Plane frames lie in the world XZ plane (Z up).
"""

from analysis.indeterminacy import indeterminacy
from analysis.model import AnalysisOptions, FrameBuilder, Material, Section

STEEL = Material("S355", E=210e9, G=81e9)
SEC = Section("s", A=5e-3, Iy=8e-5, Iz=6e-6, J=2e-7)
PLANE = AnalysisOptions(plane=True)
PLANE_RIGID = AnalysisOptions(plane=True, inextensible=True)
PLANE_RIGID_CONDENSED = AnalysisOptions(plane=True, inextensible=True, condense_pinned=True)


def beam(supports, spans=None, inextensible=False):
    """A straight beam along X with the given support per node."""
    b = FrameBuilder()
    x = 0.0
    spans = spans or [6.0] * (len(supports) - 1)
    for k, sup in enumerate(supports):
        b.add_node(f"N{k + 1}", (x, 0, 0), support=sup)
        if k < len(spans):
            x += spans[k]
    for k in range(len(supports) - 1):
        b.add_member(f"B{k + 1}", f"N{k + 1}", f"N{k + 2}", SEC, STEEL, inextensible=inextensible)
    return b.build()


def portal(base="fixed", hinge_mid=False, storeys=1):
    """Single-bay portal frame (height 4 m per storey, span 6 m)."""
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support=base)
    b.add_node("D", (6, 0, 0), support=base)
    below = ("A", "D")
    for s in range(1, storeys + 1):
        left, right = f"L{s}", f"R{s}"
        b.add_node(left, (0, 0, 4.0 * s))
        b.add_node(right, (6, 0, 4.0 * s))
        b.add_member(f"CL{s}", below[0], left, SEC, STEEL)
        b.add_member(f"CR{s}", below[1], right, SEC, STEEL)
        if hinge_mid and s == storeys:
            b.add_node("H", (3, 0, 4.0 * s))
            b.add_member(f"G{s}a", left, "H", SEC, STEEL, release_j="pinned")
            b.add_member(f"G{s}b", "H", right, SEC, STEEL)
        else:
            b.add_member(f"G{s}", left, right, SEC, STEEL)
        below = (left, right)
    return b.build()


def counts(frame, options=PLANE):
    r = indeterminacy(frame, options)
    return r.kinematic, r.static, r.mechanisms


# ------------------------------------------------------------------ beams
def test_fixed_fixed_beam():
    # Hibbeler, "Structural Analysis", ch. 2 (from memory): a fixed-fixed beam has r = 6
    # reactions and 3 equations, indeterminate to the third degree; no joint displacement.
    assert counts(beam(["fixed", "fixed"])) == (0, 3, 0)
    # with the midspan joint of a slope-deflection solution: kinematic 3 (u, w, θ), still 3 redundants
    assert counts(beam(["fixed", None, "fixed"])) == (3, 3, 0)


def test_propped_cantilever():
    # Hibbeler, "Structural Analysis", slope-deflection examples (from memory): one unknown rotation
    # at the prop when the member is axially rigid; indeterminate to the first degree.
    assert counts(beam(["fixed", "uz"]), PLANE_RIGID) == (1, 1, 0)
    # extensible member: the prop also slides along the beam
    assert counts(beam(["fixed", "uz"])) == (2, 1, 0)


def test_two_span_continuous_beam():
    # Kassimali, "Matrix Analysis of Structures", continuous-beam examples (from memory): one
    # rotation per support joint; a two-span beam on three simple supports has 1 redundant (issue).
    assert counts(beam(["ux uz", "uz", "uz"]), PLANE_RIGID) == (3, 1, 0)
    assert counts(beam(["ux uz", "uz", "uz"])) == (5, 1, 0)


def test_three_span_continuous_beam_fixed_at_one_end():
    # Hibbeler, "Structural Analysis", moment-distribution examples (from memory): fixed at A,
    # rollers at B, C, D: three rotations; reactions 3 + 3 = 6, equations 3 -> 3 redundants.
    assert counts(beam(["fixed", "uz", "uz", "uz"]), PLANE_RIGID) == (3, 3, 0)
    # with the end rotation at the simple end D condensed (pinned end): two rotations left
    assert counts(beam(["fixed", "uz", "uz", "uz"]), PLANE_RIGID_CONDENSED) == (2, 3, 0)


# ------------------------------------------------------------------ portal frames
def test_fixed_base_portal():
    # Hibbeler, "Structural Analysis", slope-deflection frames with sidesway (from memory):
    # unknowns θB, θC and the sway Δ; a fixed portal has 3 redundants (also in the issue).
    assert counts(portal("fixed"), PLANE_RIGID) == (3, 3, 0)
    # extensible members: every free joint has u, w, θ
    assert counts(portal("fixed")) == (6, 3, 0)


def test_pinned_base_portal():
    # Hibbeler, "Structural Analysis" (from memory): pinned-base portal, indeterminate to the first
    # degree; with axially rigid members θA, θB, θC, θD and Δ, or θB, θC, Δ with pinned ends condensed.
    assert counts(portal("pinned"), PLANE_RIGID) == (5, 1, 0)
    assert counts(portal("pinned"), PLANE_RIGID_CONDENSED) == (3, 1, 0)
    assert counts(portal("pinned")) == (8, 1, 0)


def test_two_storey_fixed_frame():
    # Hibbeler, "Structural Analysis", degree of indeterminacy of frames (from memory): each closed
    # ring of a rigid frame adds 3 redundants -> 6; with rigid members 4 rotations + 2 sways.
    assert counts(portal("fixed", storeys=2), PLANE_RIGID) == (6, 6, 0)
    assert counts(portal("fixed", storeys=2)) == (12, 6, 0)


def test_portal_with_internal_hinge():
    # A hinge releases one internal force: fixed portal with a hinge in the girder has 2 redundants
    # (common practice, no source). The hinged end has its own rotation (one more unknown).
    r = indeterminacy(portal("fixed", hinge_mid=True), PLANE_RIGID)
    # θL, θR, θH (girder b), θH own (girder a), sway, w of the hinge
    assert (r.kinematic, r.static, r.mechanisms) == (6, 2, 0)
    assert r.terms["releases"] == 1


def test_three_hinged_portal_is_statically_determinate():
    # Hibbeler, "Structural Analysis" (from memory): the three-hinged frame is statically determinate.
    assert counts(portal("pinned", hinge_mid=True))[1:] == (0, 0)


# ------------------------------------------------------------------ trusses
def truss(nodes, bars, supports, plane=True):
    b = FrameBuilder()
    for name, xyz in nodes.items():
        b.add_node(name, xyz, support=supports.get(name))
    for k, (i, j) in enumerate(bars):
        b.add_member(f"T{k + 1}", i, j, SEC, STEEL, truss=True)
    return b.build()


def test_plane_trusses():
    nodes = {"A": (0, 0, 0), "B": (4, 0, 0), "C": (4, 0, 3), "D": (0, 0, 3)}
    sup = {"A": "ux uz", "B": "uz"}
    # Hibbeler, "Structural Analysis", truss determinacy b + r = 2j (from memory):
    # a braced square, b = 5, r = 3, j = 4: determinate, 4 free translations + 1 ... 2j - r = 5
    braced = truss(nodes, [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C")], sup)
    assert counts(braced) == (5, 0, 0)
    # both diagonals: b = 6 -> one internal redundant
    both = truss(nodes, [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"), ("B", "D")], sup)
    assert counts(both) == (5, 1, 0)
    # no diagonal: b + r = 7 < 2j = 8, a mechanism (the square racks)
    square = truss(nodes, [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")], sup)
    assert counts(square) == (5, 0, 1)


def test_space_truss():
    # Kassimali, "Matrix Analysis of Structures", space trusses (from memory): b + r vs 3j.
    # Tetrahedron on three pins: b = 6, r = 9, j = 4 -> s - m = 3, the three base bars are redundant.
    nodes = {"A": (0, 0, 0), "B": (4, 0, 0), "C": (0, 4, 0), "D": (1, 1, 3)}
    bars = [("A", "B"), ("B", "C"), ("C", "A"), ("A", "D"), ("B", "D"), ("C", "D")]
    f = truss(nodes, bars, {"A": "pinned", "B": "pinned", "C": "pinned"})
    r = indeterminacy(f)
    assert (r.kinematic, r.static, r.mechanisms) == (3, 3, 0)


# ------------------------------------------------------------------ rules of thumb
def test_rule_straight_line_of_rigid_members_has_one_redundant():
    # Common practice, no source: a straight line of axially rigid members whose two ends are both
    # held along it has one fewer independent axial constraint than members.
    for n_members in (1, 2, 3, 5):
        f = beam(["pinned"] + [None] * (n_members - 1) + ["pinned"], inextensible=True)
        r = indeterminacy(f, PLANE)
        assert r.terms["redundant_constraints"] == 1
        assert r.terms["constraints"] == n_members - 1
        assert len(r.redundant) == 1 and "adds nothing" in r.redundant[0]


def test_rule_two_non_parallel_rigid_members_fix_a_plane_joint():
    # Common practice, no source: at a plane-frame joint at most two non-parallel axially rigid
    # members count; a third adds nothing.
    b = FrameBuilder()
    b.add_node("J", (0, 0, 0))
    for k, (x, z) in enumerate([(-3, 3), (0, 4), (3, 3), (4, 0)]):
        b.add_node(f"S{k}", (x, 0, z), support="pinned")
        b.add_member(f"M{k}", f"S{k}", "J", SEC, STEEL, inextensible=True)
    r = indeterminacy(b.build(), PLANE)
    assert r.terms["constraints"] == 2
    assert r.terms["redundant_constraints"] == 2
    # five rotations are left (four pinned ends, the joint)
    assert r.kinematic == 5


def test_explanation_names_the_duplicated_support_and_member():
    # The example wording: the redundant constraint names the support and the member.
    f = beam(["pinned", None, "pinned"], inextensible=True)
    r = indeterminacy(f, PLANE)
    (text,) = r.redundant
    assert text.startswith("the axial constraint of member B2 adds nothing")
    assert "pin support of node N1 (holding it horizontally)" in text
    assert "pin support of node N3" in text and "member B1" in text
