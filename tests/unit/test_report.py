"""The HTML report: sections, embedded images, tables, notes and the caution, on frames built by hand."""
from __future__ import annotations

import base64
import io
import re
import types

import pytest

from analysis import AnalysisOptions, Combination, Diagnostic, FrameBuilder, LoadCase, NodalLoad, analyze

import matplotlib  # noqa: E402,F401  (a hard dependency: never skipped)


def _portal(steel, ipe300, space: bool):
    b = FrameBuilder(name="test portal")
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 0, 3))
    b.add_node("C", (4, 0, 3))
    b.add_node("D", (4, 0, 0), support="pinned")
    if space:
        b.add_node("E", (4, 3, 3))
        b.add_node("F", (4, 3, 0), support="fixed")
    b.add_member("col-1", "A", "B", ipe300, steel)
    b.add_member("beam", "B", "C", ipe300, steel)
    b.add_member("col-2", "D", "C", ipe300, steel)
    if space:
        b.add_member("beam-2", "C", "E", ipe300, steel)
        b.add_member("col-3", "F", "E", ipe300, steel)
    b.add_case(LoadCase("H", nodal=(NodalLoad("B", (10e3, 2e3 if space else 0.0, 0, 0, 0, 0)),)))
    b.add_case(LoadCase("V", nodal=(NodalLoad("C", (0, 0, -20e3, 0, 0, 0)),)))
    b.add_combination(Combination("H+V", (("H", 1.5), ("V", 1.35))))
    return b.build()


def _model(frame):
    return types.SimpleNamespace(frame=frame, route="structural", schema="IFC4", path="/x/portal.ifc",
                                 notes=["Section of beam taken from its profile (a derivation note)."],
                                 diagnostics=[Diagnostic("warning", 12, "#12 IfcBeam 'B': a warning")])


@pytest.mark.parametrize("space", [False, True], ids=["plane", "space"])
def test_report_sections_images_and_caution(steel, ipe300, space, tmp_path):
    from analysis.report import CAUTION, write_report

    frame = _portal(steel, ipe300, space)
    res = analyze(frame, AnalysisOptions(plane=None if space else True))
    ind = {"kinematic": 1, "static": 2, "mechanisms": 0, "terms": {"joints": 4}, "notes": ["a count note"]}
    path = tmp_path / "r.html"
    write_report(path, _model(frame), res, ind)
    text = path.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    for anchor in ("overview", "indeterminacy", "cases", "members", "equilibrium", "notes"):
        assert f"id='{anchor}'" in text
    assert text.count(CAUTION.split(".")[0]) >= 2  # at the top and at the end
    for words in ("a derivation note", "a warning", "a count note", "H+V", "1.5 × H"):
        assert words in text
    # every member and every supported node appears in the tables
    for mid in frame.member_ids:
        assert f"<td class='l'>{mid}</td>" in text
    # self-contained: no external references, images decode as PNG
    # (the complete tables are CSV files beside it, linked by their bare names)
    assert not re.search(r"(src|href)=['\"](?!data:|#|r\.[a-z_]+\.csv['\"])", text)
    images = re.findall(r"data:image/png;base64,([A-Za-z0-9+/=]+)", text)
    views = re.findall(r"<figure data-view='([a-z]+)' data-view-name='([^']*)'>", text)
    assert len(images) == len(views)  # every figure says which view it is drawn in
    if space:  # axonometric + the two elevations (planes XZ at Y = 0 and YZ at X = 4), overview and each case
        assert len(images) == 3 + 3 * 3
        assert {n for _, n in views} >= {"XZ elevation at Y = 0.000 m", "YZ elevation at X = 4.000 m",
                                          "axonometric view"}
    else:  # overview: elevation + 3D view; each case and combination in the frame's elevation
        assert len(images) == 2 + 3
        assert [k for k, _ in views] == ["elevation", "axonometric"] + ["elevation"] * 3
    from PIL import Image

    for b64 in images:
        with Image.open(io.BytesIO(base64.b64decode(b64))) as im:
            assert im.format == "PNG" and im.size[0] > 300


def test_report_reactions_match_statics(steel, ipe300):
    """Vertical reactions of the V case sum to the applied 20 kN (statics, common practice)."""
    from analysis.report import build_report

    frame = _portal(steel, ipe300, False)
    res = analyze(frame, AnalysisOptions(plane=True))
    text = build_report(_model(frame), res, None, plots=False)
    section = text.split("<h3>V <small>")[1].split("<b>Displacements</b>")[0]
    sums = re.findall(r"<td class='l'>sum</td>(.*?)</tr>", section)
    assert sums
    cells = re.findall(r"<td>([^<]*)</td>", sums[0])
    assert "20.00" in cells
    assert "not computed" in text  # no indeterminacy given


def test_report_refuses_missing_folder(steel, ipe300, tmp_path):
    from analysis.errors import AnalysisError
    from analysis.report import write_report

    frame = _portal(steel, ipe300, False)
    res = analyze(frame, AnalysisOptions(plane=True))
    with pytest.raises(AnalysisError, match="does not exist"):
        write_report(tmp_path / "missing" / "r.html", _model(frame), res)


def test_large_frame_report_shows_the_governing_rows_and_writes_complete_csv(steel, ipe300, tmp_path):
    """A frame with more members than the report shows: short tables in the HTML, every row in the CSVs."""
    import csv

    from analysis.report import write_report
    from analysis.report.tables import SHOWN

    b = FrameBuilder(name="long girder")
    n = 70  # a continuous beam on supports every 2 m: 70 members, 71 supports
    for i in range(n + 1):
        b.add_node(f"N{i}", (2.0 * i, 0, 0), support="pinned" if i else "fixed")
    for i in range(n):
        b.add_member(f"M{i}", f"N{i}", f"N{i + 1}", ipe300, steel)
    b.add_case(LoadCase("P", nodal=(NodalLoad("N35", (0, 0, -50e3, 0, 0, 0)), NodalLoad("N35", (0, 0, 0, 0, 1e3, 0)))))
    frame = b.build()
    res = analyze(frame, AnalysisOptions(plane=True))
    path = tmp_path / "r.html"
    write_report(path, _model(frame), res, None)
    text = path.read_text(encoding="utf-8")
    envelope = text.split("id='members'")[1].split("id='equilibrium'")[0]
    rows = re.findall(r"<tr><td class='l'>(M\d+)</td>", envelope)
    assert len(rows) == SHOWN < n
    # the largest bending moment (span moment next to the load, statics) heads the table
    assert rows[0] in ("M34", "M35")
    assert "r.member_forces.csv" in text and "of 70 members" in text
    with open(tmp_path / "r.member_forces.csv", newline="") as fh:
        table = list(csv.DictReader(fh))
    assert [r["member"] for r in table] == list(frame.member_ids)
    lo, hi = res.force_ranges("P")
    assert [float(r["My_max"]) for r in table] == hi[:, 4].tolist()  # exact: repr of every double
    with open(tmp_path / "r.reactions.csv", newline="") as fh:
        assert len(list(csv.DictReader(fh))) == n + 1
