"""The count joint by joint (`Indeterminacy.joints`, ``plumbframe check --by-joint``, ``indeterminacy.joints``).

The outside reference is the bookkeeping of a hand count (common practice, no
source): at every joint, DOF + released end rotations - restrained -
eliminated - reduced = unknowns + own end rotations, and the rows summed give
the kinematic count term by term. tests/conftest.py checks that identity on
every count any test module makes; here it is checked on every bundled sample
model under several idealisations, and the attribution itself is checked.
"""
from __future__ import annotations

import json

import numpy as np
import pytest

from analysis.cli import main
from analysis.indeterminacy import ATTRIBUTION_RULE, indeterminacy, joint_totals
from analysis.model import AnalysisOptions, FrameBuilder, LoadCase, Material, NodalLoad, RigidBody, Section
from analysis.samples import available_samples, sample_path
from analysis.stiffness.dofs import build_dofs, plane_of

SEC = Section("s", A=5e-3, Iy=8e-5, Iz=6e-6, J=2e-7)
STEEL = Material("S355", E=210e9, G=81e9)
KEYS = ["unknowns", "restrained", "eliminated", "own_rotations"]


def _sample_options(frame):
    opts = [AnalysisOptions(plane=False), AnalysisOptions(plane=False, inextensible=True),
            AnalysisOptions(plane=False, condense_pinned=True)]
    if plane_of(frame) is not None:
        opts += [AnalysisOptions(plane=True), AnalysisOptions(plane=True, inextensible=True, condense_pinned=True)]
    return opts


@pytest.mark.parametrize("name", available_samples())
def test_rows_add_up_on_every_sample_model(name):
    from analysis.ifc.reader import read_ifc

    model = read_ifc(str(sample_path(name)))
    frame = model.frame
    for options in _sample_options(frame):
        r = indeterminacy(frame, options)  # the conftest fixture checks the sums on every call
        dofs = build_dofs(frame, options)
        assert r.kinematic == dofs.n_q
        s = joint_totals(r.joints)
        assert s["kinematic"] == r.kinematic
        rows = r.to_dict()["joints"]
        assert list(rows) == list(frame.node_ids)
        assert all(list(v) == KEYS for v in rows.values())
        # the unknowns listed are exactly the independent unknowns of the solver (the columns of T)
        listed = {(nid, c) for nid, v in rows.items() for c in v["unknowns"]}
        masters = np.flatnonzero(dofs.slave_row < 0)
        names = ("ux", "uy", "uz", "rx", "ry", "rz")
        solver = {(frame.node_ids[dofs.x_node[x]], names[dofs.x_comp[x]]) for x in masters if dofs.x_comp[x] < 6}
        assert listed == solver
        # every row names its IFC entity: the analysis model's point connection, or for a frame derived
        # from physical elements the elements meeting there
        if model.route == "physical":
            assert all(j.entity.startswith(j.label + ": where #") for j in r.joints)
        else:
            assert all("IfcStructuralPointConnection" in j.entity for j in r.joints)


def pratt(inextensible_nodes_order=None):
    nodes = {"L0": (0, 0), "L1": (4, 0), "L2": (8, 0), "L3": (12, 0), "U1": (4, 3), "U2": (8, 3)}
    order = inextensible_nodes_order or list(nodes)
    b = FrameBuilder()
    for n in order:
        x, z = nodes[n]
        b.add_node(n, (x, 0, z), support={"L0": "ux uz", "L3": "uz"}.get(n), label=f"#{10 + list(nodes).index(n)} "
                   f"IfcStructuralPointConnection '{n}'", source=f"GUID-{n}")
    for i, j in [("L0", "L1"), ("L1", "L2"), ("L2", "L3"), ("U1", "U2"), ("L0", "U1"), ("U2", "L3"), ("U1", "L1"),
                 ("U2", "L2"), ("U1", "L2")]:
        b.add_member(i + j, i, j, SEC, STEEL, truss=True)
    b.add_case(LoadCase("P", nodal=(NodalLoad("L1", (0, 0, -9e3, 0, 0, 0)),)))
    return b.build()


RIGID_TRUSS = AnalysisOptions(plane=True, condense_pinned=True, inextensible=True)


def test_rigid_truss_rows_name_the_bars_and_supports():
    # a determinate truss with rigid bars (common practice, no source): every free joint translation is
    # taken by one bar; the supports take the rest; the rotations of pin joints are no unknowns
    r = indeterminacy(pratt(), RIGID_TRUSS)
    by = {j.node_id: j for j in r.joints}
    assert by["L0"].restrained == ("ux", "uz") and by["L0"].support == "pin support"
    assert by["L3"].restrained == ("uz",) and by["L3"].support == "roller support"
    assert [(e.component, e.by) for e in by["L1"].eliminated] == [("ux", "L0L1"), ("uz", "U1L1")]
    assert all(j.unknowns == () and j.reduced == (("ry", "nothing attaches to it"),) for j in r.joints)
    assert all(e.expressed_in == () for j in r.joints for e in j.eliminated)  # nothing left to move
    text = r.format_joint_table()
    assert "#11 IfcStructuralPointConnection 'L1'" in text and "(source GUID-L1)" in text
    assert "eliminated ux by member L0L1 (axially rigid) held by the supports through it" in text
    assert "6 x 3 + 0 - 3 - 9 - 6 = 0" in text
    assert ATTRIBUTION_RULE[:40] in text.replace("\n  ", " ")
    # elastic bars: the joints keep their translations
    r = indeterminacy(pratt(), AnalysisOptions(plane=True, condense_pinned=True))
    assert {j.node_id: j.unknowns for j in r.joints}["U1"] == ("ux", "uz")


def test_attribution_follows_the_joint_order_not_round_off():
    # the rule: a constraint takes a component of the joint that comes last in the list; the same
    # model gives the same rows every time, and reversing the joint list moves the attribution
    f = pratt()
    first = indeterminacy(f, RIGID_TRUSS).to_dict()["joints"]
    assert indeterminacy(f, RIGID_TRUSS).to_dict()["joints"] == first
    assert {"component": "ux", "by": "U1U2"} in first["U2"]["eliminated"]  # U2 comes after U1
    rev = pratt(["U2", "U1", "L3", "L2", "L1", "L0"])
    rows = indeterminacy(rev, RIGID_TRUSS).to_dict()["joints"]
    assert {"component": "ux", "by": "U1U2"} in rows["U1"]["eliminated"]  # now U1 comes after U2
    # a support component is never eliminated, and every bar takes exactly one component
    assert rows["L0"]["restrained"] == ["ux", "uz"] and rows["L0"]["eliminated"] == []
    taken = [e["by"] for v in rows.values() for e in v["eliminated"]]
    assert sorted(taken) == sorted(f.member_ids)


def test_portal_with_rigid_members_writes_the_sway_in_terms_of_one_joint():
    # slope-deflection count of a pinned portal with rigid members (Hibbeler, "Structural Analysis",
    # from memory): unknowns the joint rotations and one sway; the girder's axial constraint ties the
    # right-hand top's sway to the left-hand top's
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("D", (6, 0, 0), support="pinned")
    b.add_node("B", (0, 0, 4))
    b.add_node("C", (6, 0, 4))
    b.add_member("AB", "A", "B", SEC, STEEL)
    b.add_member("BC", "B", "C", SEC, STEEL, release_j="My")
    b.add_member("CD", "C", "D", SEC, STEEL)
    r = indeterminacy(b.build(), AnalysisOptions(plane=True, inextensible=True))
    by = {j.node_id: j for j in r.joints}
    assert by["B"].unknowns == ("ux", "ry")
    (ux_c, uz_c) = by["C"].eliminated
    assert (ux_c.component, ux_c.by, ux_c.expressed_in) == ("ux", "BC", (("B", ("ux",)),))
    assert (uz_c.component, uz_c.by, uz_c.expressed_in) == ("uz", "CD", ())
    assert by["C"].own_rotations == 1 and by["C"].own_members == ("BC",) and by["C"].count == 2
    assert r.kinematic == 6


def test_rigid_body_followers_are_written_in_terms_of_its_first_node():
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 3))
    b.add_node("C", (2, 0, 3))
    b.add_node("E", (2, 1, 3))
    b.add_member("AB", "A", "B", SEC, STEEL)
    b.add_member("CE", "C", "E", SEC, STEEL)
    b.add_rigid_body(RigidBody("cap", ("B", "C")))
    r = indeterminacy(b.build(), AnalysisOptions(plane=False))
    (c,) = [j for j in r.joints if j.node_id == "C"]
    assert [e.component for e in c.eliminated] == ["ux", "uy", "uz", "rx", "ry", "rz"]
    assert {e.by for e in c.eliminated} == {"cap"} and {e.kind for e in c.eliminated} == {"rigid body"}
    # u_C = u_B + θ_B × (C - B), C - B = (2, 0, 0): uy_C = uy_B + 2 rz_B, uz_C = uz_B - 2 ry_B (rigid motion)
    expr = {e.component: e.expressed_in for e in c.eliminated}
    assert expr["uy"] == (("B", ("uy", "rz")),) and expr["uz"] == (("B", ("uz", "ry")),)
    assert expr["ux"] == (("B", ("ux",)),)
    assert c.to_dict() == {"unknowns": [], "restrained": [], "own_rotations": 0,
                           "eliminated": [{"component": x, "by": "cap"} for x in ("ux", "uy", "uz", "rx", "ry", "rz")]}


def test_condensed_and_own_rotations_are_reductions_at_their_joint():
    # a beam on a pin and a roller with a hinge at midspan: the hinged end's own rotation is an unknown,
    # or, with pinned ends condensed, a reduction at that joint (common practice, no source)
    b = FrameBuilder()
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("H", (4, 0, 0))
    b.add_node("C", (10, 0, 0), support="uz")
    b.add_member("AH", "A", "H", SEC, STEEL)
    b.add_member("HC", "H", "C", SEC, STEEL, release_i="My")
    f = b.build()
    r = indeterminacy(f, AnalysisOptions(plane=True))
    h = [j for j in r.joints if j.node_id == "H"][0]
    assert (h.releases, h.own_rotations, h.count) == (1, 1, 4)
    r = indeterminacy(f, AnalysisOptions(plane=True, condense_pinned=True))
    by = {j.node_id: j for j in r.joints}
    assert by["H"].own_rotations == 0 and ("own rotation", "hinged member end, condensed out") in by["H"].reduced
    assert ("ry", "pinned end, condensed out") in by["C"].reduced


def test_cli_by_joint_and_json(tmp_path, capsys):
    path = tmp_path / "truss.ifc"
    assert main(["sample", "roof_truss", "-o", str(path), "-q"]) == 0
    js = tmp_path / "counts.json"
    code = main(["check", str(path), "--plane", "--condense-pinned", "--inextensible", "--by-joint",
                 "--json", str(js)])
    out = capsys.readouterr().out
    assert code == 0
    assert "Joint by joint (plane frame" in out and "IfcStructuralPointConnection" in out
    assert "= 0 (kinematic indeterminacy)" in out
    doc = json.loads(js.read_text())
    joints = doc["indeterminacy"]["joints"]
    assert list(joints) == list(doc["nodes"])
    assert all(list(v) == KEYS for v in joints.values())
    assert sum(len(v["unknowns"]) + v["own_rotations"] for v in joints.values()) == doc["indeterminacy"]["kinematic"] == 0
    members = set(doc["members"])
    assert all(e["by"] in members and set(e) == {"component", "by"} for v in joints.values() for e in v["eliminated"])
    # analyze --json carries the same block; the all-rigid truss is analysed and written back
    res = tmp_path / "results.json"
    out = tmp_path / "out.ifc"
    assert main(["analyze", str(path), "--plane", "--condense-pinned", "--inextensible", "-o", str(out),
                 "--json", str(res), "-q"]) == 0
    doc = json.loads(res.read_text())
    joints = doc["indeterminacy"]["joints"]
    assert sum(len(v["unknowns"]) + v["own_rotations"] for v in joints.values()) == doc["indeterminacy"]["kinematic"]
    import ifcopenshell
    import ifcopenshell.validate

    logger = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(ifcopenshell.open(str(out)), logger, express_rules=True)
    assert not [s for s in logger.statements if s.get("level") in ("error", "warning")]
    # without --by-joint the table is not printed
    assert main(["check", str(path), "--plane"]) == 0
    assert "Joint by joint" not in capsys.readouterr().out


def test_report_has_the_joint_table():
    import re
    import types

    from analysis.report import build_report
    from analysis.stiffness.analyze import analyze

    f = pratt()
    r = indeterminacy(f, RIGID_TRUSS)
    res = analyze(f, RIGID_TRUSS)
    model = types.SimpleNamespace(frame=f, route="structural", schema="IFC4", path="/x/pratt.ifc", notes=[],
                                  diagnostics=[])
    page = build_report(model, res, r, plots=False)
    assert "The count joint by joint" in page
    table = page[page.index("<table class='joints'>"):]
    table = table[: table.index("</table>")]
    assert table.count("<tr>") == 1 + f.n_nodes + 1  # head, one row per joint, totals
    assert "#11 IfcStructuralPointConnection &#x27;L1&#x27; (source GUID-L1)" in table
    assert "ux by member L0L1 (axially rigid) held by the supports through it" in table
    total = re.search(r"<th class='l'>total</th><th class='l'>6 joints</th>((?:<th>\d+</th>){6})", table)
    assert total and re.findall(r"\d+", total.group(1)) == ["18", "0", "3", "9", "6", "0"]
