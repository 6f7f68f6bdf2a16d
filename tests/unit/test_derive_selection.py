"""analysis.ifc.derive and analysis.ifc.selection: which elements make the frame, what is left out,
supports when the file declares none, joints in detailing models, members on one line, IfcMember idealisation.

Small IFC4 files are built with ifcopenshell (the `Physical` builder of test_derive); expectations are hand
geometry and statics (the supports carry the whole weight: sum of reactions = rho g sum(A L), common practice,
no source).
"""
from __future__ import annotations

import numpy as np
import pytest

from analysis import analyze
from analysis.errors import IfcInputError
from analysis.model import STANDARD_GRAVITY
from test_derive import BEAM, COL, RHO, Physical, node_at, portal

G = STANDARD_GRAVITY


def _pset(m, element, pset_name, **values):
    f = m.f
    props = [f.create_entity("IfcPropertySingleValue", Name=k, NominalValue=f.create_entity("IfcBoolean", v))
             for k, v in values.items()]
    pset = f.create_entity("IfcPropertySet", GlobalId=m.gid(), Name=pset_name, HasProperties=props)
    f.create_entity("IfcRelDefinesByProperties", GlobalId=m.gid(), RelatedObjects=[element], RelatingPropertyDefinition=pset)
    return pset


def _wall(m, corner, size, height):
    """An IfcWall: a box from ``corner`` (x, y, z bottom, m) of plan ``size`` (dx, dy) and ``height``."""
    f = m.f
    dx, dy = size
    prof = f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", XDim=dx * m.L, YDim=dy * m.L,
                           Position=f.create_entity("IfcAxis2Placement2D", Location=m.pt((dx / 2 * m.L, dy / 2 * m.L))))
    solid = f.create_entity("IfcExtrudedAreaSolid", SweptArea=prof, Position=m.axis2(),
                            ExtrudedDirection=f.create_entity("IfcDirection", DirectionRatios=[0.0, 0.0, 1.0]), Depth=height * m.L)
    rep = f.create_entity("IfcShapeRepresentation", ContextOfItems=m.ctx_body, RepresentationIdentifier="Body",
                          RepresentationType="SweptSolid", Items=[solid])
    pl = f.create_entity("IfcLocalPlacement", RelativePlacement=m.axis2(tuple(v * m.L for v in corner)))
    return f.create_entity("IfcWall", GlobalId=m.gid(), Name="W", ObjectPlacement=pl,
                           Representation=f.create_entity("IfcProductDefinitionShape", Representations=[rep]))


def _weight(fr):
    return RHO * G * float(np.sum(fr.A * fr.lengths))


def _reaction_z(fr):
    res = analyze(fr)
    return res.cases["Self-weight"].reactions[:, 2].sum()


# --------------------------------------------------------------------------- selection
def test_non_load_bearing_element_is_not_part_of_the_frame():
    m = portal()
    rail = m.element("IfcBeam", "Rail", (0, 0, 1), (6, 0, 1), BEAM)
    _pset(m, rail, "Pset_BeamCommon", LoadBearing=False)
    fr, diags, notes = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    assert any("1 IfcBeam with LoadBearing false in Pset_BeamCommon" in n for n in notes)
    # the type object's value counts too, and the occurrence's own value wins over it
    m = portal()
    beam = m.element("IfcBeam", "Typed", (0, 0, 1), (6, 0, 1), BEAM)
    btype = m.f.create_entity("IfcBeamType", GlobalId=m.gid(), Name="T", PredefinedType="BEAM")
    m.f.create_entity("IfcRelDefinesByType", GlobalId=m.gid(), RelatedObjects=[beam], RelatingType=btype)
    tp = m.f.create_entity("IfcPropertySet", GlobalId=m.gid(), Name="Pset_BeamCommon", HasProperties=[
        m.f.create_entity("IfcPropertySingleValue", Name="LoadBearing", NominalValue=m.f.create_entity("IfcBoolean", False))])
    btype.HasPropertySets = [tp]
    fr, _, _ = m.derive()
    assert "Typed" not in fr.member_ids
    _pset(m, beam, "Pset_BeamCommon", LoadBearing=True)
    fr, _, _ = m.derive()
    assert "Typed" in fr.member_ids


def test_mullions_and_parts_of_railings_are_not_frame_members():
    m = portal()
    m.element("IfcMember", "Mullion", (1, 0, 0), (1, 0, 4), (0.05, 0.1), predefined="MULLION")
    post = m.element("IfcMember", "Post", (2, 0, 0), (2, 0, 1), (0.05, 0.05), predefined="POST")
    railing = m.f.create_entity("IfcRailing", GlobalId=m.gid(), Name="Handrail")
    m.f.create_entity("IfcRelAggregates", GlobalId=m.gid(), RelatingObject=railing, RelatedObjects=[post])
    fr, _, notes = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    note = next(n for n in notes if n.startswith("Not read as frame members"))
    assert "1 IfcMember of predefined type MULLION" in note and "1 IfcMember that is part of an IfcRailing" in note


def test_selector_queries_include_and_exclude():
    m = portal()
    m.element("IfcMember", "Mullion", (1, 0, 0), (1, 0, 4), (0.05, 0.1), predefined="MULLION")
    fr, _, _ = m.derive(select="IfcColumn, IfcMember")  # the query replaces the default rule: the mullion is read
    assert set(fr.member_ids) == {"C1", "C2", "Mullion"}
    fr, _, notes = m.derive(exclude="IfcBeam, Name=B1")
    assert set(fr.member_ids) == {"C1", "C2"}
    assert any("1 excluded by --exclude" in n for n in notes)
    with pytest.raises(IfcInputError, match=r"--select 'IfcBeam, \(\(': not a valid ifcopenshell selector query"):
        m.derive(select="IfcBeam, ((")
    with pytest.raises(IfcInputError, match="finds no element"):
        m.derive(select="IfcSlab")


# --------------------------------------------------------------------------- left out
def test_loose_part_is_left_out_and_strict_makes_it_an_error():
    m = portal()
    m.element("IfcBeam", "Loose", (20, 0, 3), (26, 0, 3), BEAM)  # touches nothing
    fr, diags, notes = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"} and fr.n_nodes == 4
    loose = m.f.by_type("IfcBeam")[1]
    assert any(d.entity_id == loose.id() and d.level == "warning" and loose.GlobalId in d.message
               and "left out — connected to no support" in d.message for d in diags)
    assert any("1 connected to no support" in n for n in notes)
    with pytest.raises(IfcInputError, match=r"(?s)1 element\(s\) cannot become members.*#\d+ IfcBeam 'Loose'.*connected to no support") as exc:
        m.derive(strict=True)
    assert exc.value.entity_id == loose.id()


def test_element_with_a_circular_placement_is_left_out():
    """An element whose placement chain runs in a circle has no position: it is left out and named, the rest
    is analysed (common practice, no source: a bad element never aborts the model)."""
    m = portal()
    bad = m.element("IfcBeam", "Knot", (0, 0, 2), (6, 0, 2), BEAM)
    bad.ObjectPlacement.PlacementRelTo = bad.ObjectPlacement  # the placement is relative to itself
    fr, diags, notes = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    assert any(d.entity_id == bad.id() and "left out — unresolvable placement" in d.message
               and "runs in a circle" in d.message for d in diags)
    with pytest.raises(IfcInputError, match=r"(?s)#\d+ IfcBeam 'Knot'.*unresolvable placement"):
        m.derive(strict=True)


def test_exact_duplicate_is_left_out():
    m = portal()
    m.element("IfcBeam", "Copy", (0, 0, 4), (6, 0, 4), BEAM)  # B1 twice (another GlobalId)
    fr, diags, _ = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    assert any("'Copy'" in d.message and "left out — duplicate" in d.message for d in diags)


def test_cli_strict_exit_code_and_left_out_count(tmp_path, capsys):
    from analysis.cli import main

    m = portal()
    m.element("IfcBeam", "Loose", (20, 0, 3), (26, 0, 3), BEAM)
    path = tmp_path / "loose.ifc"
    m.f.write(str(path))
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "left out   1 elements (1 connected to no support" in out
    assert main(["check", str(path), "--strict"]) == 2
    assert "IfcBeam 'Loose'" in capsys.readouterr().err
    assert main(["check", str(path), "--exclude", "IfcBeam, Name=Loose", "--members", "frame",
                 "--supports", "IfcColumn:pinned"]) == 3  # a portal on pins: a mechanism out of its plane
    assert main(["check", str(path), "--select", "IfcBeam, (("]) == 2
    assert "not a valid ifcopenshell selector query" in capsys.readouterr().err


def test_summary_counts_every_warning():
    from types import SimpleNamespace

    from analysis.cli import summary_table
    from analysis.errors import Diagnostic

    fr, _, _ = portal().derive()
    diags = [Diagnostic("warning", k, f"w{k}") for k in range(90)] + [Diagnostic("info", None, "i")]
    text = summary_table(SimpleNamespace(frame=fr, diagnostics=diags, notes=[], path="x.ifc", route="physical"))
    assert "  warnings   90" in text and "... and 84 more" in text


# --------------------------------------------------------------------------- supports
def test_roof_grid_on_walls_is_supported_where_it_bears():
    m = Physical()
    b, h = BEAM
    # two walls 0.3 m thick, 3 m high, along Y at x = 0 and x = 6; beams along X resting on them
    _wall(m, (-0.15, -0.5, 0.0), (0.3, 5.0), 3.0)
    _wall(m, (5.85, -0.5, 0.0), (0.3, 5.0), 3.0)
    z = 3.0 + h / 2  # centroid line half the depth above the wall tops
    for y in (0.0, 2.0, 4.0):
        m.element("IfcBeam", f"R{y:g}", (0, y, z), (6, y, z), BEAM)
    m.element("IfcBeam", "T1", (3, 0, z), (3, 2, z), BEAM)  # ties framing into the rafters' spans
    m.element("IfcBeam", "T2", (3, 2, z), (3, 4, z), BEAM)
    fr, diags, notes = m.derive()
    sup = np.flatnonzero(fr.restraints.any(axis=1))
    np.testing.assert_allclose(np.sort(fr.nodes[sup, 1]), [0, 0, 2, 2, 4, 4], atol=1e-12)
    assert set(np.round(fr.nodes[sup, 0], 9)) == {0.0, 6.0}
    assert fr.restraints[sup, :3].all()  # pinned bearings
    assert fr.restraints[sup, 3].all() and not fr.restraints[sup, 4:].any()  # beams along X: their twist held (fork)
    assert any("bear on 6 IfcWall" in n for n in notes)
    assert sum("bears on #" in d.message for d in diags) == 6
    np.testing.assert_allclose(_reaction_z(fr), _weight(fr), rtol=1e-9)
    # named: the ends bearing on the walls, fixed
    fr2, _, notes2 = m.derive(supports=["IfcWall:fixed"])
    assert fr2.restraints.all(axis=1).sum() == 6 and fr2.restraints.any(axis=1).sum() == 6
    assert any("--supports 'IfcWall' (fixed): 0 lowest ends of 0 frame elements, and member ends bearing on 6 IfcWall" in n
               for n in notes2)


def test_lowest_nodes_pinned_when_nothing_bears():
    m = Physical()
    bar = (0.08, 0.08)
    # a truss 6 m x 1.5 m in the XZ plane floating in space: chords, posts and diagonals
    for i in range(3):
        x0, x1 = 2.0 * i, 2.0 * (i + 1)
        m.element("IfcMember", f"Bot{i}", (x0, 0, 10), (x1, 0, 10), bar, predefined="CHORD")
        m.element("IfcMember", f"Top{i}", (x0, 0, 11.5), (x1, 0, 11.5), bar, predefined="CHORD")
        m.element("IfcMember", f"D{i}", (x0, 0, 10), (x1, 0, 11.5), bar, predefined="BRACE")
    for i in range(4):
        m.element("IfcMember", f"P{i}", (2.0 * i, 0, 10), (2.0 * i, 0, 11.5), bar, predefined="POST")
    fr, _, notes = m.derive()
    low = np.flatnonzero(fr.restraints.any(axis=1))
    assert len(low) == 4 and np.allclose(fr.nodes[low, 2], 10.0)
    assert fr.restraints[low, :3].all() and not fr.restraints[low, 4:].any()
    assert any("lowest elevation" in n and "pinned" in n for n in notes)
    np.testing.assert_allclose(_reaction_z(fr), _weight(fr), rtol=1e-9)


def test_supports_query_names_the_supported_elements():
    m = portal()
    fr, _, notes = m.derive(supports=["IfcColumn, Name=C1:pinned"])
    k = node_at(fr, (0, 0, 0))
    assert fr.restraints[k, :3].all() and not fr.restraints[k, 3:].any()
    assert fr.restraints.any(axis=1).sum() == 1
    assert any("--supports 'IfcColumn, Name=C1' (pinned)" in n for n in notes)
    fr, _, _ = m.derive(supports=["IfcColumn"])
    assert fr.restraints.all(axis=1).sum() == 2  # fixed by default
    with pytest.raises(IfcInputError, match="finds no element"):
        m.derive(supports=["IfcPile"])


# --------------------------------------------------------------------------- joints
def test_eccentric_beams_from_both_sides_of_a_column_share_one_node():
    m = Physical()
    m.element("IfcColumn", "CL", (-6, 0, 0), (-6, 0, 4), COL)
    m.element("IfcColumn", "CM", (0, 0, 0), (0, 0, 8), COL)
    m.element("IfcColumn", "CR", (6, 0, 0), (6, 0, 4), COL)
    m.element("IfcBeam", "BL", (-6, 0, 4), (-0.15, 0, 4), BEAM)  # stops at the face of CM
    m.element("IfcBeam", "BR", (0.15, 0, 4), (6, 0, 4), BEAM)  # from the other face
    fr, diags, _ = m.derive()
    assert set(fr.member_ids) == {"CL", "CM/1", "CM/2", "CR", "BL", "BR"}  # CM in two parts, no zero-length piece
    k = node_at(fr, (0, 0, 4))
    bl, br = fr.member_index("BL"), fr.member_index("BR")
    assert fr.members[bl, 1] == k and fr.members[br, 0] == k
    np.testing.assert_allclose(fr.offsets[bl, 1], [-0.15, 0, 0], atol=1e-12)
    np.testing.assert_allclose(fr.offsets[br, 0], [0.15, 0, 0], atol=1e-12)
    assert np.all(fr.lengths > 0.5)
    np.testing.assert_allclose(_reaction_z(fr), RHO * G * float(np.sum(fr.A * fr.lengths)), rtol=1e-9)


@pytest.mark.parametrize("gap, joined", [(0.35, True), (0.37, False)])
def test_snap_distance_follows_the_section_sizes(gap, joined):
    m = Physical()
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 4), COL)
    m.element("IfcColumn", "C2", (6, 0, 0), (6, 0, 4), COL)
    # the beam stops `gap` short of C2's axis: joined when gap <= (0.3 + 0.4) / 2 + 0.01 (faces touching)
    m.element("IfcBeam", "B1", (0, 0, 4), (6 - gap, 0, 4), BEAM)
    fr, diags, _ = m.derive()
    k = fr.member_index("B1")
    end = fr.nodes[fr.members[k, 1]]
    if joined:
        np.testing.assert_allclose(end, [6, 0, 4], atol=1e-12)
        np.testing.assert_allclose(fr.offsets[k, 1], [-gap, 0, 0], atol=1e-12)
        assert any("rigid offset" in d.message and "'B1'" in d.message for d in diags)
    else:
        np.testing.assert_allclose(end, [6 - gap, 0, 4], atol=1e-12)  # a free cantilever end
        assert not fr.offsets.any()


# --------------------------------------------------------------------------- members on one line
def test_double_studs_side_by_side_or_merged():
    def wall(tol):
        m = Physical()
        stud = (0.045, 0.095)
        m.element("IfcMember", "Sole", (0, 0, 0), (2.4, 0, 0), stud, predefined="PLATE")
        m.element("IfcMember", "Head", (0, 0, 2.4), (2.4, 0, 2.4), stud, predefined="PLATE")
        for x in (0.0, 1.2, 2.4):
            m.element("IfcMember", f"S{x:g}", (x, 0, 0), (x, 0, 2.4), stud, predefined="STUD")
        m.element("IfcMember", "S1.2b", (1.245, 0, 0), (1.245, 0, 2.4), stud, predefined="STUD")  # a double stud
        return m.derive(merge_tolerance=tol)

    fr, diags, _ = wall(0.01)  # 45 mm apart: two members side by side at their real positions
    assert {"S1.2", "S1.2b"} <= set(fr.member_ids)
    np.testing.assert_allclose(fr.nodes[fr.members[fr.member_index("S1.2b")]][:, 0], 1.245, atol=1e-12)
    w = _weight(fr)
    np.testing.assert_allclose(_reaction_z(fr), w, rtol=1e-9)
    fr2, diags2, notes2 = wall(0.05)  # within the tolerance: one analytical member, the summed section
    k = fr2.member_index("S1.2")
    assert "S1.2b" not in fr2.member_ids and "merged with" in fr2.member_labels[k]
    A1 = 0.045 * 0.095
    np.testing.assert_allclose(fr2.A[k], 2 * A1, rtol=1e-12)
    np.testing.assert_allclose(fr2.Iy[k], 2 * 0.045 * 0.095**3 / 12, rtol=1e-12)  # b h^3/12 each, added
    assert any("merged into one analytical member" in n for n in notes2)
    assert sum("merged" in d.message for d in diags2) == 2
    np.testing.assert_allclose(_reaction_z(fr2), RHO * G * A1 * (2 * 2.4 + 4 * 2.4), rtol=1e-9)


# --------------------------------------------------------------------------- IfcMember idealisation
def test_members_auto_rule_and_override():
    m = portal()
    m.element("IfcColumn", "C3", (9, 0, 0), (9, 0, 4), COL)
    m.element("IfcMember", "Brace", (6, 0, 0), (9, 0, 4), (0.1, 0.1), predefined="BRACE")  # between two joints
    m.element("IfcMember", "Stud", (3, 0, 0), (3, 0, 4), (0.05, 0.1), predefined="STUD")  # a framing type
    m.element("IfcMember", "Chord", (6, 0, 4), (9, 0, 4), (0.1, 0.1))  # continues B1 in line
    m.element("IfcMember", "Rail", (0, 0, 2), (6, 0, 2), (0.1, 0.1))  # the post lands on its span, the stud crosses it
    m.element("IfcMember", "Post", (2, 0, 0), (2, 0, 2), (0.1, 0.1))  # from a support to the rail
    m.element("IfcMember", "Arm", (9, 0, 4), (10, 0, 5), (0.1, 0.1))  # one end meets nothing
    fr, diags, notes = m.derive()
    truss = {mid.split("/")[0]: bool(fr.truss[k]) for k, mid in enumerate(fr.member_ids)}
    why = {d.message.split("'")[1]: d.message for d in diags
           if "IfcMember" in d.message and ("bar (truss)" in d.message or "frame member (rigid" in d.message)}
    assert truss["Brace"] and "between two joints (BRACE)" in why["Brace"]
    assert truss["Post"] and "pin-ended axial bar" in why["Post"]
    assert not truss["Stud"] and "a STUD (framing member)" in why["Stud"]
    assert any("crosses" in d.message or "where they cross" in n for d in diags for n in notes)
    assert not truss["Chord"] and "continued in line by #" in why["Chord"] and "'B1'" in why["Chord"]
    assert not truss["Rail"] and "continuous through 2 joint(s)" in why["Rail"]
    assert not truss["Arm"] and "meets no other element" in why["Arm"]
    assert any("IfcMember idealisation (--members auto): 2 pin-ended axial bars" in n for n in notes)
    fr, _, _ = m.derive(members="frame")
    assert not fr.truss.any()
    fr, _, _ = m.derive(members="truss")
    members = [k for k, lab in enumerate(fr.member_labels) if "IfcMember" in lab]
    assert fr.truss[members].all() and not np.delete(fr.truss, members).any()


def test_members_crossing_where_they_touch_are_joined():
    m = Physical()
    b, h = BEAM
    for x in (0.0, 6.0):  # two rafters along Y on columns ...
        m.element("IfcColumn", f"C{x:g}a", (x, 0, 0), (x, 0, 3), COL)
        m.element("IfcColumn", f"C{x:g}b", (x, 6, 0), (x, 6, 3), COL)
        m.element("IfcBeam", f"R{x:g}", (x, 0, 3), (x, 6, 3), BEAM)
    # ... and a purlin along X lying on them: centre line h above theirs (their sections touch)
    m.element("IfcBeam", "P", (-1, 3, 3 + h), (7, 3, 3 + h), BEAM)
    fr, diags, notes = m.derive()
    assert {"R0/1", "R0/2", "R6/1", "R6/2", "P/1", "P/2", "P/3"} <= set(fr.member_ids)
    k = node_at(fr, (0, 3, 3))  # the node is on the rafter below
    p1 = fr.member_index("P/1")
    assert fr.members[p1, 1] == k
    np.testing.assert_allclose(fr.offsets[p1, 1], [0, 0, h], atol=1e-12)
    assert sum("crosses" in d.message for d in diags) == 2
    np.testing.assert_allclose(_reaction_z(fr), _weight(fr), rtol=1e-9)
    # X-bracing in one plane: the diagonals meet at one node
    m = portal()
    m.element("IfcMember", "X1", (0, 0, 0), (6, 0, 4), (0.1, 0.1), predefined="BRACE")
    m.element("IfcMember", "X2", (6, 0, 0), (0, 0, 4), (0.1, 0.1), predefined="BRACE")
    fr, _, _ = m.derive()
    k = node_at(fr, (3, 0, 2))
    assert sum(k in fr.members[i] for i in range(fr.n_members)) == 4
    assert not fr.truss.any()  # continuous through the crossing: frame members


def test_beam_end_built_into_a_wall_is_supported():
    m = Physical()
    _wall(m, (-0.2, -1.0, 0.0), (0.4, 2.0), 3.5)  # the walls go on above the beam (pockets)
    _wall(m, (5.8, -1.0, 0.0), (0.4, 2.0), 3.5)
    m.element("IfcBeam", "B", (0, 0, 3), (6, 0, 3), BEAM)
    fr, diags, notes = m.derive()
    assert fr.restraints.any(axis=1).sum() == 2 and fr.restraints[:, :3].all()
    assert sum("bears on #" in d.message for d in diags) == 2
    np.testing.assert_allclose(_reaction_z(fr), _weight(fr), rtol=1e-9)


def test_loose_group_hanging_from_a_beam_is_joined_by_its_joints():
    m = portal()
    # a frame hung under B1: its top joints (hanger and top rail meet there) touch B1's underside
    m.element("IfcColumn", "H1", (2, 0, 2), (2, 0, 3.75), (0.1, 0.1))
    m.element("IfcColumn", "H2", (4, 0, 2), (4, 0, 3.75), (0.1, 0.1))
    m.element("IfcBeam", "T", (2, 0, 3.75), (4, 0, 3.75), (0.1, 0.1))
    m.element("IfcBeam", "L", (2, 0, 2), (4, 0, 2), (0.1, 0.1))
    fr, diags, notes = m.derive()
    assert not any("left out" in d.message for d in diags)
    for name, x in (("H1", 2.0), ("H2", 4.0)):
        i = fr.member_index(name)
        assert fr.members[i, 1] == node_at(fr, (x, 0, 4))
        np.testing.assert_allclose(fr.offsets[i, 1], [0, 0, -0.25], atol=1e-12)
    assert any("merged with" in lab and "'T'" in lab for lab in fr.member_labels)  # T lies along B1 now
    np.testing.assert_allclose(_reaction_z(fr), RHO * G * (2 * 0.09 * 4 + 0.08 * 6 + 0.01 * (2 * 1.75 + 2 * 2)), rtol=1e-9)


def test_a_slab_resting_on_beams_is_no_support():
    def model(z):
        m = portal()
        box = _wall(m, (-0.5, -1.0, z), (7.0, 2.0), 0.2)
        m.f.create_entity("IfcSlab", GlobalId=m.gid(), Name="Deck", ObjectPlacement=box.ObjectPlacement,
                          Representation=box.Representation)
        m.f.remove(box)
        m.element("IfcColumn", "C3", (3, 0, z + 0.2), (3, 0, z + 2.8), COL)  # stands on the deck
        return m.derive()

    fr, diags, _ = model(4.2)  # the deck lies on B1's top face (B1 is 0.4 deep): it hands C3 on to B1, no support
    assert "C3" not in fr.member_ids and fr.restraints.any(axis=1).sum() == 2
    assert any("'C3'" in d.message and "connected to no support" in d.message for d in diags)
    fr, diags, _ = model(6.0)  # a deck that rests on no frame member (on walls not in the model): C3 stands on it
    k = fr.member_index("C3")
    assert fr.restraints[fr.members[k, 0]].all()
    assert any("'C3' start bears on" in d.message and "'Deck'" in d.message for d in diags)


def test_beam_over_two_walls_bears_where_it_crosses_them():
    # a beam 9 m long over two walls 0.3 m thick centred at x = 1 and x = 5: supports under the walls'
    # middles, the overhangs free; reactions of a beam with overhangs under its own weight by statics
    # (moments about one support; common practice, no source)
    m = Physical()
    b, h = BEAM
    _wall(m, (0.85, -1.0, 0.0), (0.3, 2.0), 3.0)
    _wall(m, (4.85, -1.0, 0.0), (0.3, 2.0), 3.0)
    m.element("IfcBeam", "B", (-1, 0, 3 + h / 2), (8, 0, 3 + h / 2), BEAM)
    fr, diags, notes = m.derive()
    sup = np.flatnonzero(fr.restraints.any(axis=1))
    x = np.sort(fr.nodes[sup, 0])
    np.testing.assert_allclose(x, [1.0, 5.0], atol=0.011)  # the middle of each contact, to half a sample step
    assert fr.restraints[sup, :3].all() and fr.restraints[sup, 3].all()  # pinned, the twist held (fork)
    assert set(fr.member_ids) == {"B/1", "B/2", "B/3"}
    assert sum("bears on #" in d.message and "from its start: supported there (pinned)" in d.message for d in diags) == 2
    assert any("2 IfcWall (along a span)" in n for n in notes)
    res = analyze(fr).cases["Self-weight"]
    w = RHO * G * b * h
    x1, x2 = x
    r2 = w * 9.0 * (3.5 - x1) / (x2 - x1)
    rz = {round(float(fr.nodes[i, 0]), 6): res.reactions[i, 2] for i in sup}
    np.testing.assert_allclose([rz[round(float(x1), 6)], rz[round(float(x2), 6)]], [9.0 * w - r2, r2], rtol=1e-9)


def test_wall_plate_bedded_on_a_wall_holds_the_joists_on_it():
    # a plate lying on a wall along its whole length, past both wall ends; joists on top of the plate,
    # crossing a second wall further on
    m = Physical()
    b, h = BEAM
    _wall(m, (0.0, -0.15, 0.0), (6.0, 0.3), 3.0)
    _wall(m, (0.0, 3.85, 0.0), (6.0, 0.3), 3.0 + h)  # its top at the joists' underside
    m.element("IfcBeam", "Plate", (-0.5, 0, 3 + h / 2), (6.5, 0, 3 + h / 2), BEAM)
    for x in (1.0, 3.0, 5.0):
        m.element("IfcBeam", f"J{x:g}", (x, -1, 3 + 1.5 * h), (x, 5, 3 + 1.5 * h), BEAM)
    fr, diags, notes = m.derive()
    sup = np.flatnonzero(fr.restraints.any(axis=1))
    on_plate = sorted(float(v) for v in fr.nodes[sup][np.abs(fr.nodes[sup, 1]) < 1e-9, 0])
    np.testing.assert_allclose(on_plate, [0.0, 1.0, 3.0, 5.0, 6.0], atol=0.021)  # the contact's ends and the joists
    under = fr.nodes[sup][np.abs(fr.nodes[sup, 1] - 4.0) <= 0.011]
    np.testing.assert_allclose(np.sort(under[:, 0]), [1.0, 3.0, 5.0], atol=1e-9)
    assert len(sup) == 8 and fr.restraints[sup, :3].all()
    assert not any("left out" in d.message for d in diags)
    np.testing.assert_allclose(_reaction_z(fr), _weight(fr), rtol=1e-9)


def test_column_in_a_wall_and_beam_in_a_slab_are_not_held_along_their_spans():
    # a column standing inside a wall and a beam cast into a slab bear only where their ends do
    m = portal()
    _wall(m, (-0.3, -0.3, 0.0), (0.6, 0.6), 3.0)  # around the foot of C1, 3 m of its 4 m
    slab = _wall(m, (-0.5, -1.0, 3.9), (7.0, 2.0), 0.2)  # B1's centre line (z = 4) inside it
    m.f.create_entity("IfcSlab", GlobalId=m.gid(), Name="Deck", ObjectPlacement=slab.ObjectPlacement,
                      Representation=slab.Representation)
    m.f.remove(slab)
    fr, diags, _ = m.derive()
    assert set(fr.member_ids) == {"C1", "C2", "B1"}
    assert not any("from its start" in d.message for d in diags)
    assert fr.restraints.any(axis=1).sum() == 2  # the column bases only: B1's ends inside the deck are not held by it


def test_a_slab_on_beams_and_walls_still_carries_a_column_down():
    # the deck lies on B1's top face and, beyond the frame, on a wall: what stands on it goes down the wall
    m = portal()
    box = _wall(m, (-0.5, -1.0, 4.2), (9.5, 2.0), 0.2)
    m.f.create_entity("IfcSlab", GlobalId=m.gid(), Name="Deck", ObjectPlacement=box.ObjectPlacement,
                      Representation=box.Representation)
    m.f.remove(box)
    _wall(m, (8.5, -1.0, 0.0), (0.3, 2.0), 4.2)  # its top under the deck's far end
    m.element("IfcColumn", "C3", (3, 0, 4.4), (3, 0, 7.0), COL)
    fr, diags, notes = m.derive()
    k = fr.member_index("C3")
    assert fr.restraints[fr.members[k, 0]].all()
    assert any("also on walls, footings or piles, so they stay supports" in n and "'Deck'" in n for n in notes)


def test_every_rafter_crossing_a_long_purlin_is_joined():
    # a 13 m purlin under sloping rafters 0.7 m apart (sections 80 x 160 mm): each rafter's centre line
    # passes 125 mm from the purlin's, inside the 170 mm at which their sections touch (half of each size
    # plus the tolerance), wherever the samples of the two lines happen to fall (geometry of crossing
    # lines, common practice, no source)
    m = Physical()
    small = (0.08, 0.16)
    m.element("IfcBeam", "P", (-0.5, 0.23, 3.28), (12.5, 0.23, 3.28), small)
    xs = [round(0.4 + 0.7 * i, 6) for i in range(17)]
    for i, x in enumerate(xs):
        m.element("IfcMember", f"R{i}", (x, -0.54, 2.98), (x, 5.04, 6.2), small, predefined="RAFTER")
    fr, diags, notes = m.derive(supports=["IfcBeam:pinned"])
    ids = set(fr.member_ids)
    missed = [f"R{i}" for i in range(len(xs)) if f"R{i}/2" not in ids]
    assert not missed
    assert sum("crosses" in d.message for d in diags) == len(xs)
