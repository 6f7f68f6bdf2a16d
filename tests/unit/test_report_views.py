"""Views of the report: a plane frame in its elevation, a space frame axonometric plus one elevation per plane of
members; diagrams on the tension side; value labels at ends and extremes that do not overlap."""
from __future__ import annotations

import html
import re

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from analysis import AnalysisOptions, FrameBuilder, LineLoad, LoadCase, NodalLoad, analyze
from analysis.report.labels import label_stations, place_labels
from analysis.report.views import axonometric, frame_plane_view, in_plane_diagram, member_plane_views

import matplotlib  # noqa: E402,F401  (a hard dependency: never skipped)


def _views(text: str) -> list[tuple[str, str]]:
    return re.findall(r"<figure data-view='([a-z]+)' data-view-name='([^']*)'>", text)


def test_workshop_portal_report_is_drawn_in_its_elevation(tmp_path):
    """The bundled workshop portal lies in the world XZ plane: its overview and every case in that elevation."""
    from analysis.ifc.reader import read_ifc
    from analysis.report import build_report
    from analysis.report.elevations import CONVENTION
    from analysis.samples import write_sample

    model = read_ifc(write_sample("workshop_portal", tmp_path / "portal.ifc"))
    res = analyze(model.frame, AnalysisOptions())  # a space analysis, as the CLI runs it: the geometry decides
    text = build_report(model, res)
    views = _views(text)
    assert views[0] == ("elevation", "XZ elevation at Y = 0.000 m")
    cases = views[2:]
    assert len(cases) == len(res.cases) and all(v == ("elevation", "XZ elevation at Y = 0.000 m") for v in cases)
    assert "axonometric" not in {k for k, _ in cases}
    assert CONVENTION in html.unescape(text)
    assert "tension (stretched) side" in text


def _box(steel, ipe300, bays_x=2, bays_y=1, h=3.0, span=5.0, depth=4.0):
    """A one-storey space frame of bays_x × bays_y bays (columns fixed at the base, beams along both axes)."""
    b = FrameBuilder(name="box")
    for i in range(bays_x + 1):
        for j in range(bays_y + 1):
            b.add_node(f"B{i}{j}", (i * span, j * depth, 0.0), support="fixed")
            b.add_node(f"T{i}{j}", (i * span, j * depth, h))
            b.add_member(f"C{i}{j}", f"B{i}{j}", f"T{i}{j}", ipe300, steel)
            if i:
                b.add_member(f"X{i}{j}", f"T{i - 1}{j}", f"T{i}{j}", ipe300, steel)
            if j:
                b.add_member(f"Y{i}{j}", f"T{i}{j - 1}", f"T{i}{j}", ipe300, steel)
    b.add_case(LoadCase("H", nodal=(NodalLoad("T00", (5e3, 3e3, -10e3, 0, 0, 0)),)))
    return b.build()


def test_space_frame_gets_one_elevation_per_grid_line(steel, ipe300):
    frame = _box(steel, ipe300)
    assert frame_plane_view(frame) is None
    views = member_plane_views(frame)
    names = sorted(v.name for v in views)
    # grid lines Y = 0, Y = 4 (3 columns + 2 beams each) and X = 0, 5, 10 (2 columns + 1 beam each)
    assert names == sorted(["XZ elevation at Y = 0.000 m", "XZ elevation at Y = 4.000 m", "YZ elevation at X = 0.000 m",
                            "YZ elevation at X = 5.000 m", "YZ elevation at X = 10.000 m"])
    assert [len(v.members) for v in views] == [5, 5, 3, 3, 3]  # most members first
    first = {frame.member_ids[k] for k in views[0].members}
    assert first == {"C00", "C10", "C20", "X10", "X20"}
    assert len(member_plane_views(frame, limit=2)) == 2  # the limit for big models


def test_space_frame_report_has_axonometric_and_elevations(steel, ipe300):
    from analysis.report import build_report
    from analysis.report.figures import CASE_ELEVATIONS
    import types

    frame = _box(steel, ipe300)
    res = analyze(frame, AnalysisOptions())
    model = types.SimpleNamespace(frame=frame, route="structural", schema="IFC4", path="/x/box.ifc", notes=[],
                                  diagnostics=[])
    views = _views(build_report(model, res))
    kinds = [k for k, _ in views]
    assert kinds[0] == "axonometric" and kinds.count("elevation") == 5 + CASE_ELEVATIONS
    assert kinds.count("axonometric") == 2  # overview and the one case


def _beam(steel, ipe300, L=6.0):
    b = FrameBuilder(name="beam")
    b.add_node("A", (0, 0, 0), support="pinned")
    b.add_node("B", (L, 0, 0), support="uy uz rx")
    b.add_member("M", "A", "B", ipe300, steel)
    b.add_case(LoadCase("w", member=(LineLoad("M", "z", -10e3, axes="global"),)))
    return b.build()


def test_sagging_moment_is_drawn_below_the_beam(steel, ipe300):
    """Simply supported beam under a downward UDL: M = wL²/8 at midspan (Roark, Table 8.1, case 2e — from memory),
    bottom fibres in tension, so the diagram lies below the beam (tension side: common practice, no source)."""
    frame = _beam(steel, ipe300)
    res = analyze(frame, AnalysisOptions())
    view = frame_plane_view(frame)
    assert view is not None and view.kind == "elevation"
    axis, M, direction = in_plane_diagram(res, "w", 0, "M", view)
    mid = int(np.argmin(np.abs(axis[:, 0] - 3.0)))
    assert abs(M[mid]) == pytest.approx(10e3 * 6.0**2 / 8, rel=1e-6)
    assert (M[mid] * direction)[2] < 0  # drawn towards -Z: below


def test_cantilever_moment_is_drawn_on_top(steel, ipe300):
    """A cantilever with a downward tip load hogs: top fibres in tension, M = P L at the support (statics)."""
    b = FrameBuilder(name="cantilever")
    b.add_node("A", (0, 0, 0), support="fixed")
    b.add_node("B", (0, 4.0, 0))  # along Y this time: the YZ elevation
    b.add_member("M", "A", "B", ipe300, steel)
    b.add_case(LoadCase("P", nodal=(NodalLoad("B", (0, 0, -5e3, 0, 0, 0)),)))
    frame = b.build()
    res = analyze(frame, AnalysisOptions())
    view = frame_plane_view(frame)
    assert view.name.startswith("YZ elevation")
    axis, M, direction = in_plane_diagram(res, "P", 0, "M", view)
    assert abs(M[0]) == pytest.approx(5e3 * 4.0, rel=1e-6)
    assert (M[0] * direction)[2] > 0
    # the axonometric view draws the engine's own components; the elevation's N, V, M are in its plane
    assert not axonometric().in_plane and view.in_plane


def test_label_stations_ends_and_extremes():
    s = np.linspace(0.0, 6.0, 13)
    parabola = s * (6.0 - s)  # zero at the ends: only the extreme at midspan
    assert label_stations(s, parabola, 9.0) == [6]
    linear = 3.0 - s  # a shear diagram: both ends, nothing inside
    assert label_stations(s, linear, 3.0) == [0, 12]
    assert label_stations(s, np.full_like(s, 2.0), 2.0) == [6]  # constant (a truss bar): once, mid-length


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 10), st.floats(0, 10)), min_size=1, max_size=40))
def test_placed_labels_never_overlap(points):
    anchors = np.array(points)
    sizes = np.tile([1.2, 0.4], (len(anchors), 1))
    pos = place_labels(anchors, sizes, np.arange(len(anchors), 0, -1))
    kept = np.flatnonzero(np.isfinite(pos).all(axis=1))
    assert kept.size >= 1  # the first (largest) always finds a place
    for a in kept:
        for b in kept:
            if a < b:
                overlap_x = abs(pos[a, 0] - pos[b, 0]) < 1.2 - 1e-9
                overlap_y = abs(pos[a, 1] - pos[b, 1]) < 0.4 - 1e-9
                assert not (overlap_x and overlap_y)
