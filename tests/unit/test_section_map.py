"""The user's section map (``--sections FILE.toml``): sections for members the file gives none, or a poor one.

Checked against closed forms: a cantilever whose only section comes from the
map deflects P L^3 / (3 E Iy) with that Iy (Roark's Formulas, Table 8.1 case
1a — from memory); unit conversions are exact powers of ten (common practice,
no source).
"""
from __future__ import annotations

import re
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

from analysis.errors import AnalysisError, IfcInputError
from analysis.ifc.material_map import parse_material_map
from analysis.ifc.reader import read_ifc
from analysis.ifc.section_map import load_section_map, parse_section_map

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "roundtrip"))
from test_material_map import Portal  # noqa: E402
from test_writer import make_cantilever_ifc  # noqa: E402

STEEL = parse_material_map({"default": "S235"})  # E = 210 GPa (EN 1993-1-1, 3.2.6)
# IPE 300 as the handbooks give it (from memory): A 53.8 cm², Iy 8356 cm⁴, Iz 604 cm⁴, It 20.1 cm⁴
IPE300 = {"A": "53.8 cm2", "Iy": "8356 cm4", "Iz": "604 cm4", "J": "20.1 cm4", "name": "IPE 300"}


# --------------------------------------------------------------------------- the format
def test_units_and_names():
    m = parse_section_map({"default": IPE300,
                           "sections": {"B-*": {"A": 5380.0e-6, "Iy": "8.356e7 mm4", "Iz": "6.04e-6 m4",
                                                "J": "0.483 in4"}}})
    d = m.default
    assert (d.name, d.source) == ("IPE 300", "user map")
    assert d.A == pytest.approx(53.8e-4, rel=1e-12) and d.Iy == pytest.approx(8356e-8, rel=1e-12)
    key, s = m.names[0]
    assert key == "B-*" and s.name == "B-*"  # no name given: the key names it
    assert s.Iy == pytest.approx(8.356e-5, rel=1e-12) and s.J == pytest.approx(0.483 * 0.0254 ** 4, rel=1e-12)
    assert s.Avy == s.Avz == 0.0


def test_exact_names_before_globs_and_globs_in_file_order():
    one = {"A": 1.0, "Iy": 1.0, "Iz": 1.0, "J": 1.0}
    m = parse_section_map({"sections": {"B*": one | {"name": "glob B"}, "*": one | {"name": "any"},
                                        "b-12": one | {"name": "exact"}}})
    assert m.for_names(["B-12"])[1].name == "exact"  # case does not matter
    assert m.for_names(["beam 7"])[1].name == "glob B"
    assert m.for_names(["column", None, "B-7"])[1].name == "glob B"  # any of the element's names
    assert m.for_names([None, ""]) is None


@pytest.mark.parametrize("doc,message", [
    ({"default": {"A": 1.0, "Iy": 1.0, "Iz": 1.0}}, r"default: give J as well"),
    ({"default": {"A": "0 cm2", "Iy": 1.0, "Iz": 1.0, "J": 1.0}}, r"default: A must be > 0"),
    ({"sections": {"X": {"A": "3 cm3", "Iy": 1.0, "Iz": 1.0, "J": 1.0}}}, r"\[sections\] 'X': A: unit 'cm3'"),
    ({"sections": {"X": {"A": 1.0, "Iy": 1.0, "Iz": 1.0, "J": 1.0, "Wy": 2.0}}}, r"unknown key Wy"),
    ({"sections": {"X": "IPE 300"}}, r"\[sections\] 'X': give a table"),
    ({"section": {}}, r"unknown top-level key section"),
])
def test_errors_name_the_entry(doc, message):
    with pytest.raises(AnalysisError, match=message):
        parse_section_map(doc, "map.toml")


def test_file_errors(tmp_path):
    with pytest.raises(AnalysisError, match="section map not found"):
        load_section_map(tmp_path / "none.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("default = {")
    with pytest.raises(AnalysisError, match="not a valid TOML section map"):
        load_section_map(bad)


# --------------------------------------------------------------------------- route 1: an analysis model without profiles
def _cantilever(tmp_path):
    src = tmp_path / "cantilever.ifc"
    make_cantilever_ifc(src)  # L = 4 m along X, tip load 10 kN down, Axis (0, 0, 1), no material, no profile
    return src


def test_members_without_profile_in_one_message_with_a_snippet(tmp_path):
    src = _cantilever(tmp_path)
    with pytest.raises(IfcInputError) as info:
        read_ifc(src, materials=STEEL)
    text = str(info.value)
    assert "1 of 1 curve members have no profile" in text and "IfcStructuralCurveMember 'M1'" in text
    assert "--sections FILE.toml" in text
    snippet = text.split("\n\n", 1)[1]
    doc = tomllib.loads(snippet)  # ready to edit: valid TOML whose blanks are refused until filled in
    with pytest.raises(AnalysisError, match="A must be > 0"):
        parse_section_map(doc)


@pytest.mark.parametrize("doc", [{"default": IPE300}, {"sections": {"M1": IPE300}}, {"sections": {"b-*": IPE300}}],
                         ids=["default", "member name", "physical element glob"])
def test_the_map_gives_the_section_and_the_deflection_follows(tmp_path, doc):
    from analysis import analyze

    src = _cantilever(tmp_path)
    model = read_ifc(src, materials=STEEL, sections=parse_section_map(doc, "m.toml"))
    fr = model.frame
    assert fr.section_sources == ("user map",)
    assert fr.A[0] == pytest.approx(53.8e-4) and fr.Iy[0] == pytest.approx(8356e-8)
    res = analyze(fr)
    L, P, E, Iy = 4.0, 10e3, 210e9, 8356e-8
    uz = res.cases["tip"].displacements[fr.node_index("B"), 2]
    assert uz == pytest.approx(-P * L ** 3 / (3 * E * Iy), rel=1e-9)  # Roark, Table 8.1 case 1a (from memory)
    if "sections" in doc:
        assert any(n.startswith("Sections from the section map m.toml") for n in model.notes)


def test_a_named_entry_replaces_the_files_profile(tmp_path):
    from analysis.cli import main

    src = tmp_path / "wp.ifc"
    assert main(["sample", "workshop_portal", "-o", str(src)]) == 0
    plain = read_ifc(src).frame
    columns = [k for k, mid in enumerate(plain.member_ids) if plain.section_names[k] != plain.section_names[0]] or [0]
    target = plain.section_names[columns[0]]
    fr = read_ifc(src, sections=parse_section_map({"sections": {target: IPE300}})).frame
    hit = [k for k in range(fr.n_members) if fr.section_sources[k] == "user map"]
    assert hit == [k for k in range(plain.n_members) if plain.section_names[k] == target]
    assert np.allclose(fr.A[hit], 53.8e-4) and np.allclose(fr.Iy[hit], 8356e-8)
    rest = [k for k in range(fr.n_members) if k not in hit]
    assert np.array_equal(fr.A[rest], plain.A[rest]) and fr.nodes.tolist() == plain.nodes.tolist()


# --------------------------------------------------------------------------- route 2: physical elements
def test_physical_elements_by_name_keep_their_geometry(tmp_path):
    m = Portal()
    steel = m.material("S355J2")
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 3), steel)
    m.element("IfcColumn", "C2", (5, 0, 0), (5, 0, 3), steel)
    m.element("IfcBeam", "B1", (0, 0, 3), (5, 0, 3), steel)
    path = m.write(tmp_path / "bay.ifc")
    plain = read_ifc(path).frame
    model = read_ifc(path, sections=parse_section_map({"sections": {"B1": IPE300}}, "bay.toml"))
    fr = model.frame
    beam = [k for k, src in enumerate(fr.member_sources) if src == m.elements["B1"].GlobalId]
    assert beam and all(fr.section_sources[k] == "user map" for k in beam)
    assert np.allclose(fr.A[beam], 53.8e-4) and np.allclose(fr.Iz[beam], 604e-8)
    others = [k for k in range(fr.n_members) if k not in beam]
    assert [fr.section_sources[k] for k in others] == [plain.section_sources[k] for k in others]
    assert "user map" not in plain.section_sources
    assert np.allclose(fr.A[others], 0.09)  # the extruded 0.3 m x 0.3 m rectangles
    assert fr.nodes.tolist() == plain.nodes.tolist()
    assert any(re.match(r"Sections from the section map bay.toml: 'B1' \d element", n) for n in model.notes)


def test_cli_takes_the_map_and_the_json_traces_it(tmp_path, capsys):
    import json

    from analysis.cli import main

    src = _cantilever(tmp_path)
    mats = tmp_path / "m.toml"
    mats.write_text('default = "S235"\n')
    assert main(["check", str(src), "--materials", str(mats)]) == 2
    err = capsys.readouterr().err
    assert "no profile" in err and "--sections" in err
    secs = tmp_path / "s.toml"
    secs.write_text('default = { A = "53.8 cm2", Iy = "8356 cm4", Iz = "604 cm4", J = "20.1 cm4", name = "IPE 300" }\n')
    out = tmp_path / "out.json"
    assert main(["analyze", str(src), "--materials", str(mats), "--sections", str(secs), "--json", str(out)]) == 0
    doc = json.loads(out.read_text())
    section = next(iter(doc["members"].values()))["section"]
    assert section["source"] == "user map" and section["name"] == "IPE 300"
    assert section["Iy"] == pytest.approx(8356e-8)
