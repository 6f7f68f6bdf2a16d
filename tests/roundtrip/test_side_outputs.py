"""Outputs written alongside the IFC in forked processes (`analysis.fileio.side_outputs`).

The guarantees are the same as for outputs written in turn: all of a run's
files appear together or none does, nothing half-written is left behind, and
the files are the same bytes the serial path writes (common practice, no source).
"""
from __future__ import annotations

import json
import os
import signal
import sys
import time

import pytest

from analysis import cli, fileio
from analysis.errors import AnalysisError

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="side outputs fork: Linux only")


def leftovers(folder) -> list[str]:
    return sorted(n for n in os.listdir(folder) if n.startswith(".plumbframe-"))


def test_side_outputs_are_committed_with_the_others(tmp_path):
    a, b, c = tmp_path / "a.txt", tmp_path / "b.txt", tmp_path / "c.txt"
    seen = []
    with fileio.output_set() as outs:
        with fileio.side_outputs([("a", lambda: fileio.atomic_text(a, "A " + fileio._tmp_prefix())),
                                  ("b", lambda: fileio.atomic_text(b, "B"))], fork=True,
                                 done=lambda what, s, forked: seen.append((what, forked))):
            fileio.atomic_text(c, "C")
            assert not a.exists() and not b.exists()  # staged, not yet in place
        assert not a.exists()
        written = outs.commit()
    assert sorted(written) == sorted(map(str, (a, b, c)))
    # the child names its temporaries after the run that commits them, never after itself
    assert a.read_text() == f"A .plumbframe-{os.getpid()}@{fileio._host_tag()}-"
    assert b.read_text() == "B" and c.read_text() == "C"
    assert seen == [("a", True), ("b", True)]
    assert leftovers(tmp_path) == []


def test_a_failing_side_output_leaves_nothing(tmp_path):
    a, c = tmp_path / "a.txt", tmp_path / "c.txt"

    def fails():
        fileio.atomic_text(a, "A")
        raise AnalysisError(f"{a}: cannot be written (No space left on device)")

    with pytest.raises(AnalysisError, match="No space left on device"):
        with fileio.output_set() as outs:
            with fileio.side_outputs([("a", fails)], fork=True):
                fileio.atomic_text(c, "C")
            outs.commit()
    assert not a.exists() and not c.exists()
    assert leftovers(tmp_path) == []


def test_a_fault_in_a_side_output_keeps_its_traceback(tmp_path):
    def broken():
        {}["missing"]

    with pytest.raises(RuntimeError, match=r"KeyError: 'missing'(.|\n)*in broken"):
        with fileio.output_set():
            with fileio.side_outputs([("a", broken)], fork=True):
                pass
    assert leftovers(tmp_path) == []


def test_a_killed_side_writer_is_reported(tmp_path):
    def killed():
        fileio.atomic_text(tmp_path / "a.txt", "A")
        os.kill(os.getpid(), signal.SIGKILL)

    with pytest.raises(AnalysisError, match="ended by signal 9"):
        with fileio.output_set():
            with fileio.side_outputs([("a", killed)], fork=True):
                pass
    assert not (tmp_path / "a.txt").exists()
    # a temporary a killed writer could not remove is named after this live run: removed once the run is over
    left = leftovers(tmp_path)
    assert all(n.startswith(f".plumbframe-{os.getpid()}@") for n in left)


def test_a_failure_of_the_run_stops_the_side_writers(tmp_path):
    a = tmp_path / "a.txt"
    flag = tmp_path / "staged"

    def slow():
        fileio.atomic_text(a, "A")
        flag.write_text("")
        time.sleep(30)

    t0 = time.perf_counter()
    with pytest.raises(ValueError, match="the IFC writer failed"):
        with fileio.output_set() as outs:
            with fileio.side_outputs([("a", slow)], fork=True):
                for _ in range(500):  # until the child has staged its file
                    if flag.exists():
                        break
                    time.sleep(0.01)
                raise ValueError("the IFC writer failed")
            outs.commit()
    assert time.perf_counter() - t0 < 20  # the child was stopped, not waited for
    assert not a.exists()
    assert leftovers(tmp_path) == []


def test_a_side_output_staged_before_the_run_failed_is_removed(tmp_path):
    a = tmp_path / "a.txt"
    with pytest.raises(ValueError, match="the IFC writer failed"):
        with fileio.output_set() as outs:
            with fileio.side_outputs([("a", lambda: fileio.atomic_text(a, "A"))], fork=True):
                for _ in range(500):  # until the child has staged its file and gone
                    if leftovers(tmp_path):
                        break
                    time.sleep(0.01)
                time.sleep(0.3)
                raise ValueError("the IFC writer failed")
            outs.commit()
    assert not a.exists()
    assert leftovers(tmp_path) == []


def test_serial_fallback_runs_the_works_after_the_block(tmp_path):
    order = []
    with fileio.output_set() as outs:
        with fileio.side_outputs([("a", lambda: order.append("a"))], fork=False,
                                 started=lambda what, forked: order.append(("started", what, forked))):
            order.append("block")
        outs.commit()
    assert order == ["block", ("started", "a", False), "a"]


def _volatile_free(doc):
    """The results JSON without what differs from run to run (the date of the run)."""
    if isinstance(doc, dict):
        return {k: _volatile_free(v) for k, v in doc.items() if k not in ("date", "created", "analysed_at")}
    if isinstance(doc, list):
        return [_volatile_free(v) for v in doc]
    return doc


def test_cli_side_outputs_write_what_the_serial_run_writes(tmp_path, capsys, monkeypatch):
    if not fileio.side_outputs_possible():
        pytest.skip("this process has threads running: side outputs would not fork")
    from analysis.samples import write_sample

    src = str(write_sample("workshop_portal", str(tmp_path / "W.ifc")))
    outs = {}
    for mode in ("serial", "side"):
        monkeypatch.setattr(cli, "SIDE_OUTPUTS_FROM", 10 ** 9 if mode == "serial" else 0)
        d = tmp_path / mode
        d.mkdir()
        code = cli.main(["analyze", src, "-o", str(d / "out.ifc"), "--json", str(d / "r.json"),
                         "--report", str(d / "r.html"), "-v"])
        err = capsys.readouterr().err
        assert code == 0, err
        assert ("alongside the IFC" in err) == (mode == "side"), err
        outs[mode] = d
        assert leftovers(d) == []
    serial, side = (json.loads((outs[m] / "r.json").read_text()) for m in ("serial", "side"))
    assert _volatile_free(serial) == _volatile_free(side)
    csv = sorted(n for n in os.listdir(outs["serial"]) if n.endswith(".csv"))
    assert csv and csv == sorted(n for n in os.listdir(outs["side"]) if n.endswith(".csv"))
    for name in csv:
        assert (outs["serial"] / name).read_bytes() == (outs["side"] / name).read_bytes(), name
    import re

    stamp = re.compile(rb"\d{4}-\d\d-\d\d[ T]\d\d:\d\d(:\d\d)?")  # the time of the run
    html = [stamp.sub(b"DATE", (outs[m] / "r.html").read_bytes()) for m in ("serial", "side")]
    assert html[0] == html[1]


# --------------------------------------------------------------------------- the IFC writer's own side process
def _portal(tmp_path):
    from analysis.ifc.reader import read_ifc
    from analysis.samples import write_sample
    from analysis.stiffness.analyze import analyze

    src = str(write_sample("workshop_portal", str(tmp_path / "W.ifc")))
    model = read_ifc(src)
    return src, model, analyze(model.frame)


def _without_guids(data: bytes) -> bytes:
    import re

    return re.sub(rb"'[0-9A-Za-z_$]{22}'", b"'GUID'", data)


def test_curve_reactions_formatted_aside_are_the_same_bytes(tmp_path):
    import datetime as dt

    from analysis.ifc.writer import write_results

    src, model, results = _portal(tmp_path)
    date = dt.datetime(2026, 12, 3, 12, 0, tzinfo=dt.timezone.utc)
    texts = {}
    for fork in (False, True):
        out = tmp_path / f"out-{fork}.ifc"
        summary = write_results(src, str(out), model, results, date=date, fork=fork)
        assert summary.curve_reactions > 0
        texts[fork] = out.read_bytes()
    assert b"IFCSTRUCTURALCURVEREACTION" in texts[True]
    assert _without_guids(texts[True]) == _without_guids(texts[False])
    assert leftovers(tmp_path) == []


def test_a_failing_curve_formatter_leaves_no_output(tmp_path, monkeypatch):
    from analysis.ifc import writer

    src, model, results = _portal(tmp_path)

    def broken(self):
        raise ValueError("formatter broke")

    monkeypatch.setattr(writer._CurveLines, "lines", broken)  # the forked process has the same class
    out = tmp_path / "out.ifc"
    with pytest.raises(writer.SideProcessFault, match=r"formatting the curve reactions failed(.|\n)*formatter broke"):
        writer.write_results(src, str(out), model, results, fork=True)
    assert not out.exists()
    assert leftovers(tmp_path) == []
