"""The plumbframe command line end to end on every sample model.

analyze -> reopen the output with ifcopenshell -> the result entities and
property sets sit on the right elements and carry the JSON's values (in the
file's units); the input's bytes are unchanged; a second run on the output
gives the same entity counts; bad input gives exit code 2 with a message
naming the problem. main(argv) runs in-process; one test runs the command in
a subprocess.
"""
from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from collections import Counter, defaultdict
from pathlib import Path

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.util.element as ue  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_models"

# File units of each sample as sample_models/README.md states them: (length m per unit, force N per unit)
UNITS = {
    "workshop_portal": (1.0, 1.0),
    "workshop_portal_mm": (1e-3, 1e3),
    "braced_office": (1e-3, 1e3),
    "roof_truss": (1.0, 1.0),
}
EXTRA = {"roof_truss": ["--plane"]}  # an in-plane truss: a space analysis finds out-of-plane mechanisms
STABLE = list(UNITS)


def run(argv, capsys):
    from analysis.cli import main

    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def copy_sample(name, tmp_path) -> Path:
    dst = tmp_path / f"{name}.ifc"
    shutil.copyfile(SAMPLES / f"{name}.ifc", dst)
    return dst


def counts(path) -> Counter:
    return Counter(e.is_a() for e in ifcopenshell.open(str(path)))


@pytest.fixture(scope="module")
def analysed(tmp_path_factory, assert_valid_ifc):
    """Every stable sample analysed once: (input, output, json doc, stdout)."""
    from analysis.cli import main

    out = {}
    for name in STABLE:
        d = tmp_path_factory.mktemp(name)
        src = d / f"{name}.ifc"
        shutil.copyfile(SAMPLES / f"{name}.ifc", src)
        before = src.read_bytes()
        code = main(["analyze", str(src), "--json", str(d / "r.json"), "-q", *EXTRA.get(name, [])])
        assert code == 0, name
        assert src.read_bytes() == before, f"{name}: the input was modified"
        assert_valid_ifc(d / f"{name}.results.ifc")
        out[name] = (src, d / f"{name}.results.ifc", json.loads((d / "r.json").read_text()))
    return out


@pytest.mark.parametrize("name", STABLE)
def test_json_follows_the_contract(analysed, name):
    _, _, doc = analysed[name]
    assert doc["schema"] == "plumbframe.results/1"
    assert doc["units"] == {"length": "m", "force": "N", "moment": "N*m", "angle": "rad"}
    assert doc["dimension"] in (2, 3)
    assert set(doc) == {"schema", "units", "dimension", "nodes", "members", "indeterminacy", "cases", "envelopes", "theory"}
    assert set(doc["indeterminacy"]) >= {"kinematic", "static", "mechanisms", "terms", "notes"}
    for case in doc["cases"].values():
        assert case["kind"] in ("case", "combination")
        assert case["equilibrium_residual"] < 1e-8
        for m in case["members"].values():
            assert set(m) == {"stations", "N", "Vy", "Vz", "T", "My", "Mz", "dy", "dz"}


@pytest.mark.parametrize("name", STABLE)
def test_result_groups_and_member_psets_carry_the_json_values(analysed, name):
    src, out, doc = analysed[name]
    length, force = UNITS[name]
    f = ifcopenshell.open(str(out))
    assert f.schema == ifcopenshell.open(str(src)).schema
    groups = {g.Name: g for g in f.by_type("IfcStructuralResultGroup")}
    assert set(groups) == set(doc["cases"])
    for g in groups.values():
        assert g.TheoryType == "FIRST_ORDER_THEORY" and g.IsLinear and g.Description == "plumbframe"
        assert any(g in (m.HasResults or ()) for m in f.by_type("IfcStructuralAnalysisModel"))
    # member extremes, grouped by the entity they came from
    by_source = defaultdict(list)
    for mid, m in doc["members"].items():
        by_source[m["source"]].append(mid)
    assert None not in by_source
    for guid, mids in by_source.items():
        ps = ue.get_psets(f.by_guid(guid)).get("PF_MemberForces")
        assert ps is not None, f"{name}: no PF_MemberForces on {guid}"
        for action, scale in (("N", force), ("Vz", force), ("My", force * length)):
            values = [v for c in doc["cases"].values() for mid in mids for v in c["members"][mid][action]]
            assert ps[f"{action}Max"] == pytest.approx(max(values) / scale, rel=1e-9, abs=1e-9 * max(map(abs, values)) / scale + 1e-12)
            assert ps[f"{action}Min"] == pytest.approx(min(values) / scale, rel=1e-9, abs=1e-9 * max(map(abs, values)) / scale + 1e-12)


@pytest.mark.parametrize("name", STABLE)
def test_reactions_on_supported_connections(analysed, name):
    _, out, doc = analysed[name]
    length, force = UNITS[name]
    f = ifcopenshell.open(str(out))
    conns = {}
    for c in f.by_type("IfcStructuralPointConnection"):
        conns[c.GlobalId] = c
        conns.setdefault(("name", c.Name), c)
    for case_name, case in doc["cases"].items():
        assert case["reactions"]
        for node, r in case["reactions"].items():
            source = doc["nodes"][node]["source"]
            conn = conns.get(source) or conns.get(("name", node))
            assert conn is not None, f"{name}: no connection for node {node}"
            acts = [rel.RelatedStructuralActivity for rel in conn.AssignedStructuralActivity]
            mine = [a for a in acts if a.AppliedLoad.is_a("IfcStructuralLoadSingleForce")
                    and any(rel.RelatingGroup.Name == case_name for rel in a.HasAssignments)]
            assert len(mine) == 1
            load = mine[0].AppliedLoad
            # the IFC carries 12 significant digits (analysis.ifc.step): equal to 1e-9 relative
            assert (load.ForceZ or 0.0) == pytest.approx(r.get("fz", 0.0) / force, rel=1e-9, abs=1e-9)
            ps = ue.get_psets(conn)["PF_SupportReactions"]
            assert ps[f"{case_name}: fz"] == pytest.approx(r["fz"] / force, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("name", ["workshop_portal", "workshop_portal_mm", "roof_truss"])
def test_curve_reactions_hold_the_member_diagrams(analysed, name):
    _, out, doc = analysed[name]
    length, force = UNITS[name]
    f = ifcopenshell.open(str(out))
    for mid, m in doc["members"].items():
        member = f.by_guid(m["source"])
        acts = [rel.RelatedStructuralActivity for rel in member.AssignedStructuralActivity]
        for case_name, case in doc["cases"].items():
            r = [a for a in acts if a.is_a("IfcStructuralCurveReaction")
                 and a.AppliedLoad.Name == f"{case_name}: internal forces"]
            assert len(r) == 1
            cfg = r[0].AppliedLoad
            js = case["members"][mid]
            # the default station set: ends, extremes and concentrated loads, each a station of the JSON
            at = _json_stations(js["stations"], [loc[0] * length for loc in cfg.Locations])
            assert at[0] == 0 and at[-1] == len(js["stations"]) - 1
            for action in ("N", "Vz", "My"):  # the extremes of each force are among them
                assert at.count(int(np.argmax(js[action]))) or np.isclose(max(js[action]), max(
                    js[action][i] for i in at), rtol=1e-9, atol=1e-9 * max(map(abs, js[action])) + 1e-12)
            assert np.allclose([v.ForceX for v in cfg.Values], np.array(js["N"])[at] / force, atol=1e-9)
            assert np.allclose([v.MomentY for v in cfg.Values], np.array(js["My"])[at] / (force * length), atol=1e-9)


def _json_stations(stations, locations) -> list[int]:
    """Index into the JSON stations of each IFC location (both sides of a load share a position: in order)."""
    out: list[int] = []
    for x in locations:
        hits = [i for i, s in enumerate(stations) if abs(s - x) <= 1e-9 * max(1.0, abs(x)) and i not in out]
        assert hits, f"IFC station {x} is not a station of the JSON"
        out.append(hits[0])
    return out


@pytest.mark.parametrize("name", ["workshop_portal_mm", "braced_office"])
def test_default_and_full_station_sets_agree(analysed, name, tmp_path, capsys, assert_valid_ifc):
    """--stations all writes every JSON station; the default writes a subset with the same values there."""
    src, out, doc = analysed[name]
    full = tmp_path / "all.ifc"
    code, _, _ = run(["analyze", src, "-o", full, "--stations", "all", "-q"], capsys)
    assert code == 0
    assert_valid_ifc(full)

    def curves(path):
        f = ifcopenshell.open(str(path))
        got = {}
        for r in f.by_type("IfcStructuralCurveReaction"):
            cfg = r.AppliedLoad
            rows = [[v.ForceX, v.ForceY, v.ForceZ, v.MomentX, v.MomentY, v.MomentZ] if v.is_a(
                "IfcStructuralLoadSingleForce") else [v.DisplacementY or 0.0, v.DisplacementZ or 0.0]
                for v in cfg.Values]
            got[(r.AssignedToStructuralItem[0].RelatingElement.Name, cfg.Name)] = (  # derived members get new ids
                [loc[0] for loc in cfg.Locations], np.array(rows, float))
        return got

    every, default = curves(full), curves(out)
    assert set(every) == set(default) and every
    fewer = 0
    for key, (locs, values) in default.items():
        all_locs, all_values = every[key]
        at = _json_stations(all_locs, locs)
        assert np.array_equal(values, all_values[at])  # the same numbers at the stations both carry
        fewer += len(all_locs) - len(locs)
    assert fewer > 0


def test_physical_route_writes_the_derived_model(analysed):
    from analysis.ifc.writer import DERIVED_TAG

    _, out, doc = analysed["braced_office"]
    f = ifcopenshell.open(str(out))
    derived = [m for m in f.by_type("IfcStructuralAnalysisModel") if m.Description == DERIVED_TAG]
    assert len(derived) == 1
    assert len(f.by_type("IfcStructuralCurveMember")) == len(doc["members"])
    assert len(f.by_type("IfcStructuralPointConnection")) == len(doc["nodes"])
    # every derived member is tied to the physical element it came from
    for member in f.by_type("IfcStructuralCurveMember"):
        phys = [rel.RelatingProduct for rel in member.HasAssignments if rel.is_a("IfcRelAssignsToProduct")]
        assert len(phys) == 1 and phys[0].GlobalId == doc["members"][member.Name]["source"]
    assert "PF_AnalysisSummary" in ue.get_psets(f.by_type("IfcProject")[0])


@pytest.mark.parametrize("name", ["workshop_portal_mm", "braced_office"])
def test_second_run_replaces_the_first(analysed, name, tmp_path, capsys):
    _, out, _ = analysed[name]
    again = tmp_path / "again.ifc"
    code, _, err = run(["analyze", out, "-o", again, "-q", *EXTRA.get(name, [])], capsys)
    assert code == 0, err
    assert counts(again) == counts(out)


def test_default_output_name_and_summary(tmp_path, capsys):
    src = copy_sample("workshop_portal", tmp_path)
    code, out, err = run(["analyze", src], capsys)
    assert code == 0, err
    assert (tmp_path / "workshop_portal.results.ifc").is_file()
    for words in ("governing internal forces", "largest displacement", "equilibrium", "kinematic 24",
                  "qualified engineer"):
        assert words in out
    assert len(out.splitlines()) <= 40  # one screen


def test_report_written(tmp_path, capsys):
    src = copy_sample("roof_truss", tmp_path)
    report = tmp_path / "r.html"
    code, _, err = run(["analyze", src, "--plane", "--report", report, "-q"], capsys)
    assert code == 0, err
    text = report.read_text()
    for section in ("id='overview'", "id='indeterminacy'", "id='cases'", "id='members'", "id='equilibrium'",
                    "id='notes'", "qualified engineer"):
        assert section in text
    assert text.count("data:image/png;base64,") >= 2 + 2  # overview (2) + one per case and combination


def test_check_stable_and_json(tmp_path, capsys):
    src = copy_sample("workshop_portal", tmp_path)
    js = tmp_path / "c.json"
    code, out, err = run(["check", src, "--json", js], capsys)
    assert code == 0, err
    doc = json.loads(js.read_text())
    assert "cases" not in doc and "envelopes" not in doc
    # a fixed-base two-storey single-bay portal: 6 x 2 fixed-base reactions + 2 closed rings x 6 - ... ;
    # static indeterminacy 12 as counted by hand (3 rings x 6 - 6 = 12, common practice, no source)
    assert doc["indeterminacy"]["static"] == 12
    assert doc["indeterminacy"]["kinematic"] == 24  # 4 free joints x 6 DOF
    assert "kinematic indeterminacy" in out


def test_unstable_model_exit_3_and_nothing_written(tmp_path, capsys):
    src = copy_sample("unstable_frame", tmp_path)
    code, _, err = run(["analyze", src, "--json", tmp_path / "r.json", "--report", tmp_path / "r.html"], capsys)
    assert code == 3
    assert "mechanism" in err and "Traceback" not in err
    assert sorted(os.listdir(tmp_path)) == ["unstable_frame.ifc"]
    code, _, err = run(["check", src], capsys)
    assert code == 3 and "mechanism 1:" in err


@pytest.mark.parametrize("case", ["missing", "folder", "garbage", "out-folder", "same-as-input", "json-folder"])
def test_bad_input_exit_2_with_a_message(case, tmp_path, capsys):
    src = copy_sample("workshop_portal", tmp_path)
    argv = ["analyze", src, "-q"]
    expect = None
    if case == "missing":
        argv[1] = tmp_path / "nope.ifc"
        expect = "nope.ifc: no such file"
    elif case == "folder":
        argv[1] = tmp_path
        expect = "is a folder"
    elif case == "garbage":
        bad = tmp_path / "bad.ifc"
        bad.write_text("this is not an IFC file\n")
        argv[1] = bad
        expect = "bad.ifc"
    elif case == "out-folder":
        argv += ["-o", tmp_path / "no" / "out.ifc"]
        expect = "does not exist"
    elif case == "same-as-input":
        argv += ["-o", src]
        expect = "overwrite the input"
    elif case == "json-folder":
        argv += ["--json", tmp_path / "missing" / "r.json"]
        expect = "does not exist"
    before = sorted(os.listdir(tmp_path))
    code, out, err = run(argv, capsys)
    assert code == 2
    assert expect in err
    assert "Traceback" not in err + out
    assert sorted(os.listdir(tmp_path)) == before  # nothing half-written


def test_verbose_shows_traceback_for_bad_input(tmp_path, capsys):
    bad = tmp_path / "bad.ifc"
    bad.write_text("ISO-10303-21;\nrubbish\n")
    code, _, err = run(["check", bad, "-v"], capsys)
    assert code == 2 and "Traceback" in err


def test_sample_command(tmp_path, capsys):
    out = tmp_path / "p.ifc"
    code, _, err = run(["sample", "workshop_portal", "-o", out], capsys)
    assert code == 0, err
    assert out.read_bytes() == (SAMPLES / "workshop_portal.ifc").read_bytes()
    code, text, _ = run(["sample", "--list"], capsys)
    assert code == 0 and "roof_truss" in text.split()
    code, _, err = run(["sample", "no_such_model", "-o", tmp_path / "x.ifc"], capsys)
    assert code == 2 and "no_such_model" in err and "workshop_portal" in err


@pytest.mark.parametrize("command", ["check", "analyze", "sample"])
def test_help_has_examples(command, capsys):
    code, out, _ = run([command, "--help"], capsys)
    assert code == 0 and "examples:" in out


def test_version_and_usage_errors(capsys):
    from analysis import __version__

    code, out, _ = run(["--version"], capsys)
    assert code == 0 and __version__ in out
    code, _, err = run(["analyze"], capsys)
    assert code == 2 and "MODEL.ifc" in err
    code, _, _ = run(["check", "x.ifc", "--solver", "fastest"], capsys)
    assert code == 2


def test_console_script_in_a_subprocess(tmp_path):
    """The installed ``plumbframe`` script when present, else ``python -m analysis.cli``; quiet in a pipe."""
    script = Path(sys.executable).with_name("plumbframe")
    cmd = [str(script)] if script.exists() else [sys.executable, "-m", "analysis.cli"]
    src = copy_sample("workshop_portal", tmp_path)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    p = subprocess.run([*cmd, "analyze", str(src), "-o", str(tmp_path / "o.ifc")], capture_output=True, text=True,
                       env=env, timeout=300)
    assert p.returncode == 0, p.stderr
    assert "\r" not in p.stderr  # no progress line when stderr is not a terminal
    assert "governing internal forces" in p.stdout
    p = subprocess.run([*cmd, "analyze", str(tmp_path / "missing.ifc")], capture_output=True, text=True, env=env,
                       timeout=300)
    assert p.returncode == 2 and "no such file" in p.stderr and "Traceback" not in p.stderr


def test_in_plane_model_is_analysed_as_a_plane_frame(tmp_path, capsys):
    """roof_truss declares IN_PLANE_LOADING_2D: a plane analysis by default, --space asks for 6 DOF per joint."""
    src = copy_sample("roof_truss", tmp_path)
    js = tmp_path / "c.json"
    code, _, err = run(["check", src, "--json", js, "-q"], capsys)
    assert code == 0, err
    doc = json.loads(js.read_text())
    assert doc["dimension"] == 2
    # a simple pin-jointed truss: m + r = 2 j (21 + 3 = 2 x 12), statically determinate (common practice, no source)
    assert doc["indeterminacy"]["static"] == 0 and doc["indeterminacy"]["mechanisms"] == 0
    code, _, err = run(["check", src, "--space", "-q"], capsys)
    assert code == 3  # pin-jointed joints of a plane truss are free out of its plane
