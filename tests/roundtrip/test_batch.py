"""``plumbframe batch`` end to end: serial, on a real Dask cluster, with a worker killed mid-batch.

The reference for every batch result is the serial in-process run of the same
models (the same code path as ``plumbframe analyze``); results must agree to
1e-12 relative. One independent number: the roof truss's governing axial
force is the end top-chord force from equilibrium of the support joint
(statics, common practice, no source): N = -1.35 * R / sin(theta), with
R = 25 kN (half of 5 x 10 kN) and tan(theta) = (2/3 m) / 2 m.

The cluster tests start ``dask scheduler`` and two ``dask worker`` processes
(one nanny and one worker process each) on 127.0.0.1 with ports chosen by
the operating system, each in its own process group, and kill the groups at
the end. They need the ``batch`` extra; ``tools/test-all.sh`` installs it and
sets PLUMBFRAME_REQUIRE_DASK=1, which turns a missing Dask into a failure.
"""
from __future__ import annotations

import csv
import json
import math
import os
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_models"
SAMPLE_NAMES = ["braced_office", "roof_truss", "unstable_frame", "workshop_portal", "workshop_portal_mm"]
BROKEN = "broken"
EXPECTED = {"braced_office": 0, "roof_truss": 0, "unstable_frame": 3, "workshop_portal": 0,
            "workshop_portal_mm": 0, BROKEN: 2}
REL = 1e-12
LONG = ("braced_office", "workshop_portal", "workshop_portal_mm", "roof_truss")  # models that take seconds


def _have_dask() -> bool:
    try:
        import distributed  # noqa: F401
    except ImportError:
        return False
    return True


def _need_dask() -> None:
    if not _have_dask():
        if os.environ.get("PLUMBFRAME_REQUIRE_DASK"):
            pytest.fail("PLUMBFRAME_REQUIRE_DASK is set but dask.distributed is not installed")
        pytest.skip("needs the batch extra (dask[distributed])")


def run(argv, capsys=None):
    from analysis.cli import main

    code = main([str(a) for a in argv])
    out, err = capsys.readouterr() if capsys is not None else ("", "")
    return code, out, err


def summary(out: Path) -> dict:
    return json.loads((out / "summary.json").read_text())


def rows_by_model(out: Path) -> dict[str, dict]:
    return {r["folder"] or r["model"]: r for r in summary(out)["rows"]}


def assert_close(a, b, where="") -> None:
    """Equal structure; numbers equal to REL relative (absolute REL * scale of the document near zero)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and set(a) == set(b), where
        for k in a:
            assert_close(a[k], b[k], f"{where}/{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b)):
            assert_close(x, y, f"{where}[{i}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert math.isclose(a, b, rel_tol=REL, abs_tol=1e-9 * REL), f"{where}: {a!r} != {b!r}"
    else:
        assert a == b, f"{where}: {a!r} != {b!r}"


def assert_same_results(out: Path, ref: Path) -> None:
    """Every model's results JSON and numeric row values equal the reference run's."""
    got, want = rows_by_model(out), rows_by_model(ref)
    assert set(got) == set(want)
    numeric = ["nodes", "members", "kinematic", "static", "mechanisms", "max_displacement", "N", "V", "M"]
    for key, w in want.items():
        g = got[key]
        assert (g["status"], g["exit"], g["sha256"]) == (w["status"], w["exit"], w["sha256"]), key
        for k in numeric:
            if w[k] is None:
                assert g[k] is None, (key, k)
            else:
                assert math.isclose(g[k], w[k], rel_tol=REL, abs_tol=1e-3 * REL), (key, k, g[k], w[k])
        for k in ("N_member", "N_case", "M_member", "M_case", "max_displacement_node"):
            assert g[k] == w[k], (key, k)
        if w["results_json"]:
            a = json.loads((out / key / g["results_json"]).read_text())
            b = json.loads((ref / key / w["results_json"]).read_text())
            assert_close(a, b, key)


def assert_nothing_half_written(out: Path) -> None:
    """No temporary anywhere; every model folder holds its row and exactly the files the row names."""
    leftovers = [p for p in out.rglob("*") if p.name.startswith(".plumbframe-")]
    assert not leftovers, leftovers
    for row in summary(out)["rows"]:
        if not row["folder"]:
            continue
        folder = out / row["folder"]
        assert (folder / "batch-row.json").is_file()
        names = {row[k] for k in ("results_ifc", "results_json", "report") if row[k]}
        assert {p.name for p in folder.iterdir()} == names | {"batch-row.json"}
        for name in names:
            data = (folder / name).read_bytes()
            if name.endswith(".json"):
                json.loads(data)
            elif name.endswith(".ifc"):
                assert data.rstrip().endswith(b"END-ISO-10303-21;")
            else:
                assert data.rstrip().endswith(b"</html>")


@pytest.fixture(scope="module")
def inputs(tmp_path_factory) -> Path:
    """Copies of the sample models and one broken file (a truncated IFC)."""
    d = tmp_path_factory.mktemp("models")
    for name in SAMPLE_NAMES:
        shutil.copyfile(SAMPLES / f"{name}.ifc", d / f"{name}.ifc")
    (d / f"{BROKEN}.ifc").write_text("ISO-10303-21;\nHEADER;\nFILE_DESCRIPTION((''),'2;1');\n")
    return d


@pytest.fixture(scope="module")
def serial(inputs, tmp_path_factory) -> Path:
    """The reference: every model analysed one after another in this process."""
    out = tmp_path_factory.mktemp("serial")
    code = run(["batch", inputs, "--out", out, "--serial", "-q"])[0]
    assert code == 2  # some bad input (the broken file) outranks some unstable
    return out


# --------------------------------------------------------------------------- serial
def test_serial_rows_and_outputs(serial, inputs):
    rows = rows_by_model(serial)
    assert {k: r["exit"] for k, r in rows.items()} == EXPECTED
    assert rows[BROKEN]["status"] == "bad input" and "truncated" in rows[BROKEN]["message"]
    assert rows["unstable_frame"]["status"] == "unstable" and "mechanism 1" in rows["unstable_frame"]["message"]
    assert rows["unstable_frame"]["mechanisms"] == 1
    truss = rows["roof_truss"]
    # joint B0: the end top chord carries the reaction (statics; see the module docstring)
    sin = (2.0 / 3.0) / math.hypot(2.0, 2.0 / 3.0)
    assert truss["N"] == pytest.approx(-1.35 * 25e3 / sin, rel=1e-9)
    assert truss["N_member"] in ("TC1", "TC6") and truss["N_case"] == "ULS"
    assert (truss["nodes"], truss["members"], truss["static"]) == (12, 21, 0)
    # the same portal in m/N and in mm/kN files: the same row values
    a, b = rows["workshop_portal"], rows["workshop_portal_mm"]
    for k in ("N", "V", "M", "max_displacement"):
        assert a[k] == pytest.approx(b[k], rel=1e-9)
    for r in rows.values():
        assert r["seconds"] >= 0 and r["peak_memory"] > 0 and r["run"] == "now"
        assert len(r["sha256"] or "x" * 64) == 64
    assert_nothing_half_written(serial)
    doc = summary(serial)
    assert doc["schema"] == "plumbframe.batch/1" and doc["exit_code"] == 2
    with open(serial / "summary.csv", newline="") as fh:
        table = list(csv.DictReader(fh))
    assert [r["model"] for r in table] == [r["model"] for r in doc["rows"]]
    assert float(table[[r["model"] for r in table].index("roof_truss")]["N"]) == truss["N"]


def test_results_ifc_validates(serial):
    import ifcopenshell
    import ifcopenshell.validate

    path = serial / "roof_truss" / "roof_truss.results.ifc"
    log = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(ifcopenshell.open(str(path)), log)
    assert not log.statements, log.statements[:3]


def test_index_links_every_report_and_sorts(serial):
    html = (serial / "index.html").read_text()
    for key, r in rows_by_model(serial).items():
        if r["report"]:
            assert f"href='{key}/{r['report']}'" in html
            assert (serial / key / r["report"]).is_file()
    assert "table id='models' class='sortable'" in html and "addEventListener('click'" in html
    assert "http://" not in html and "https://" not in html and "<link" not in html  # no external assets


def test_rerun_is_up_to_date_then_force_and_changed_input(serial, inputs, tmp_path, capsys):
    out = tmp_path / "out"
    shutil.copytree(serial, out)
    model = tmp_path / "roof_truss.ifc"
    shutil.copyfile(inputs / "roof_truss.ifc", model)
    code, stdout, _ = run(["batch", model, "--out", out, "--serial"], capsys)
    assert code == 0 and "up to date" in stdout  # the same bytes and options as the serial run
    row = rows_by_model(out)["roof_truss"]
    assert row["run"] == "up to date" and row["status"] == "analysed"
    before = (out / "roof_truss" / "roof_truss.results.json").stat().st_mtime_ns
    assert run(["batch", model, "--out", out, "--serial", "--force", "-q"])[0] == 0
    assert rows_by_model(out)["roof_truss"]["run"] == "now"
    assert (out / "roof_truss" / "roof_truss.results.json").stat().st_mtime_ns != before
    # new bytes, or other options: run again (a quick model: unstable, so no outputs to write)
    frame = tmp_path / "unstable_frame.ifc"
    shutil.copyfile(inputs / "unstable_frame.ifc", frame)
    assert run(["batch", frame, "--out", out, "--serial", "-q"])[0] == 3
    assert rows_by_model(out)["unstable_frame"]["run"] == "up to date"
    with open(frame, "a") as fh:
        fh.write("\n")
    assert run(["batch", frame, "--out", out, "--serial", "-q"])[0] == 3
    assert rows_by_model(out)["unstable_frame"]["run"] == "now"
    assert run(["batch", frame, "--out", out, "--serial", "-q", "--shear"])[0] == 3
    assert rows_by_model(out)["unstable_frame"]["run"] == "now"
    assert run(["batch", frame, "--out", out, "--serial", "-q", "--shear"])[0] == 3
    assert rows_by_model(out)["unstable_frame"]["run"] == "up to date"


def test_variant_material_map_contents_count_for_up_to_date(inputs, tmp_path):
    (tmp_path / "maps").mkdir()
    grades = tmp_path / "maps" / "grades.toml"
    grades.write_text('default = "S235"\n')
    variants = tmp_path / "variants.toml"
    variants.write_text('[variants.mapped]\nmaterials = "maps/grades.toml"\n')  # relative to the variants file
    out = tmp_path / "out"
    argv = ["batch", inputs / "unstable_frame.ifc", "--out", out, "--serial", "-q", "--variants", variants]
    assert run(argv)[0] == 3
    assert rows_by_model(out)["unstable_frame/mapped"]["run"] == "now"
    assert run(argv)[0] == 3
    assert rows_by_model(out)["unstable_frame/mapped"]["run"] == "up to date"
    grades.write_text('default = "S355"\n')  # the same file name, other contents: not up to date
    assert run(argv)[0] == 3
    assert rows_by_model(out)["unstable_frame/mapped"]["run"] == "now"


def test_progress_bar_counts_on_a_terminal():
    import io

    from analysis.batch import _Progress
    from analysis.cli import _Console

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    err = Terminal()
    bar = _Progress(_Console(out=io.StringIO(), err=err), 3)
    bar.started("a")
    bar.started("b")
    bar.draw()
    assert "0/3 models" in err.getvalue() and "running 2  finished 0  failed 0" in err.getvalue()
    bar.finished({"folder": "a", "file": "a.ifc", "status": "analysed", "exit": 0, "seconds": 1.0, "run": "now"})
    bar.finished({"folder": "b", "file": "b.ifc", "status": "unstable", "exit": 3, "seconds": 1.0, "run": "now",
                  "message": "a mechanism"})
    assert "2/3 models" in err.getvalue() and "running 0  finished 1  failed 1" in err.getvalue()


def test_variants_rows_and_comparison(inputs, tmp_path):
    variants = tmp_path / "variants.toml"
    variants.write_text('[variants.as-drawn]\n\n[variants.with-shear]\nshear = true\nmerge-tolerance = 0.02\n')
    out = tmp_path / "out"
    code = run(["batch", inputs / "workshop_portal.ifc", inputs / "unstable_frame.ifc", "--out", out, "--serial",
                "-q", "--variants", variants])[0]
    assert code == 3
    rows = rows_by_model(out)
    assert set(rows) == {f"{m}/{v}" for m in ("workshop_portal", "unstable_frame") for v in ("as-drawn", "with-shear")}
    assert rows["unstable_frame/with-shear"]["exit"] == 3 and rows["workshop_portal/with-shear"]["exit"] == 0
    drawn, shear = rows["workshop_portal/as-drawn"], rows["workshop_portal/with-shear"]
    assert drawn["variant"] == "as-drawn" and drawn["options_hash"] != shear["options_hash"]
    # shear deformation adds to the flexibility: a larger sway (Timoshenko vs Euler-Bernoulli, common practice)
    assert shear["max_displacement"] > drawn["max_displacement"]
    html = (out / "index.html").read_text()
    assert "Variants side by side" in html and "table id='variants'" in html
    assert "shear = True" in html
    assert (out / "workshop_portal" / "with-shear" / "workshop_portal.results.ifc").is_file()


def test_variant_values_are_checked_as_on_the_command_line(tmp_path):
    from analysis.batch import _analyze_parser, _apply_variant
    from analysis.errors import AnalysisError

    parser = _analyze_parser()
    base = {a.dest: a.default for a in parser._actions if a.option_strings and a.dest not in ("help",)}
    base["space"] = True
    source = str(tmp_path / "v.toml")
    got = _apply_variant(parser, base, "v", {"plane": True, "merge-tolerance": 0.02, "stations": "all",
                                             "supports": "IfcFooting:pinned", "materials": "m.toml"}, source)
    assert got["plane"] is True and got["space"] is False  # one of a mutually exclusive pair replaces the other
    assert got["merge_tolerance"] == 0.02 and got["stations"] == "all"
    assert got["supports"] == ["IfcFooting:pinned"] and got["materials"] == str(tmp_path / "m.toml")
    assert base["space"] is True and base["supports"] == []  # the command line's set is left alone
    for bad in ({"merge-tolerance": -1}, {"stations": "some"}, {"plane": "yes"}, {"nonsense": 1}):
        with pytest.raises(AnalysisError, match="variant 'v'"):
            _apply_variant(parser, base, "v", bad, source)


def test_bad_variants_file_is_bad_input(inputs, tmp_path, capsys):
    bad = tmp_path / "v.toml"
    bad.write_text("[variants.x]\nno-such-option = 1\n")
    code, _, err = run(["batch", inputs / "roof_truss.ifc", "--out", tmp_path / "o", "--serial",
                        "--variants", bad], capsys)
    assert code == 2 and "no-such-option" in err and "Traceback" not in err
    bad.write_text("[variants.x]\nsolver = 'fastest'\n")
    code, _, err = run(["batch", inputs / "roof_truss.ifc", "--out", tmp_path / "o", "--serial",
                        "--variants", bad], capsys)
    assert code == 2 and "fastest" in err


def test_without_dask_runs_serially_and_says_so(inputs, tmp_path, capsys, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # as if the batch extra were not installed
    code, out, err = run(["batch", inputs / "unstable_frame.ifc", "--out", tmp_path / "o"], capsys)
    assert code == 3
    assert "Dask is not installed" in err and "one model after another" in out
    code, _, err = run(["batch", inputs / "unstable_frame.ifc", "--out", tmp_path / "o",
                        "--scheduler", "tcp://127.0.0.1:1"], capsys)
    assert code == 2 and "plumbframe[batch]" in err


def test_local_cluster_that_cannot_start_falls_back_to_serial(inputs, tmp_path, capsys, monkeypatch):
    _need_dask()
    import distributed

    def refuse(*args, **kwargs):
        raise OSError("no free port")

    monkeypatch.setattr(distributed, "LocalCluster", refuse)
    code, out, err = run(["batch", inputs / "unstable_frame.ifc", "--out", tmp_path / "o"], capsys)
    assert code == 3 and "did not start (OSError: no free port)" in err and "one model after another" in out


def test_exit_code_precedence():
    from analysis.batch import batch_exit_code

    assert batch_exit_code([{"exit": 0}, {"exit": 0}]) == 0
    assert batch_exit_code([{"exit": 0}, {"exit": 3}]) == 3
    assert batch_exit_code([{"exit": 3}, {"exit": 2}]) == 2
    assert batch_exit_code([{"exit": 2}, {"exit": 1}, {"exit": 3}]) == 1


def test_inputs_folders_patterns_and_missing(inputs, tmp_path):
    from analysis.batch import expand_inputs

    (tmp_path / "x.results.ifc").write_text("")
    got = expand_inputs([str(inputs), str(inputs / "roof_*.ifc"), str(tmp_path), str(tmp_path / "none.ifc")])
    files = [p for p, e in got if not e]
    assert sorted(os.path.basename(p) for p in files) == sorted(f"{n}.ifc" for n in SAMPLE_NAMES + [BROKEN])
    errors = [e for _, e in got if e]
    assert any("no .ifc file" in e for e in errors) and any("no such file" in e for e in errors)


# --------------------------------------------------------------------------- a real Dask cluster
def _dask_cmd(*args: str) -> list[str]:
    return [sys.executable, "-m", "dask", *args]


class _Cluster:
    """``dask scheduler`` and two ``dask worker`` processes, each in its own process group."""

    def __init__(self, folder: Path):
        self.folder = folder
        self.file = folder / "scheduler.json"
        self.procs: list[subprocess.Popen] = []
        env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]))
        common = dict(env=env, start_new_session=True, stdout=subprocess.DEVNULL, cwd=str(folder))
        self.log = open(folder / "dask.log", "wb")
        self.procs.append(subprocess.Popen(
            _dask_cmd("scheduler", "--host", "127.0.0.1", "--port", "0", "--no-dashboard",
                      "--dashboard-address", "127.0.0.1:0",  # its HTTP server (health, metrics): a free port
                      "--scheduler-file", str(self.file)), stderr=self.log, **common))
        for k in range(2):
            self.procs.append(subprocess.Popen(
                _dask_cmd("worker", "--scheduler-file", str(self.file), "--host", "127.0.0.1", "--nworkers", "1",
                          "--nthreads", "1", "--no-dashboard", "--name", f"w{k}",
                          "--local-directory", str(folder)), stderr=self.log, **common))
        deadline = time.monotonic() + 90
        while not self.file.exists():
            if time.monotonic() > deadline or self.procs[0].poll() is not None:
                self.stop()
                raise RuntimeError("the dask scheduler did not start: " + (folder / "dask.log").read_text()[-2000:])
            time.sleep(0.1)
        from distributed import Client

        try:
            self.client = Client(scheduler_file=str(self.file), timeout="60s")
            self.client.wait_for_workers(2, timeout=90)
        except BaseException:
            self.stop()
            raise
        self.address = self.client.scheduler.address

    def worker_pids(self) -> dict[str, int]:
        return self.client.run(os.getpid)

    def stop(self) -> None:
        client = getattr(self, "client", None)
        if client is not None:
            try:
                client.close(timeout=5)
            except Exception:
                pass
        for p in self.procs:
            if p.poll() is None:
                try:
                    os.killpg(p.pid, signal.SIGTERM)
                except ProcessLookupError:
                    pass
        deadline = time.monotonic() + 15
        for p in self.procs:
            try:
                p.wait(timeout=max(0.1, deadline - time.monotonic()))
            except subprocess.TimeoutExpired:
                pass
        for p in self.procs:  # the group: the nanny's worker process too
            try:
                os.killpg(p.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            p.wait(timeout=15)
        self.log.close()

    def leaked(self) -> list[int]:
        """Processes of our groups still alive (zombies waiting for their new parent to reap them are dead)."""
        import psutil

        groups = {p.pid for p in self.procs}
        out = []
        for proc in psutil.process_iter(["pid", "status"]):
            try:
                if os.getpgid(proc.pid) in groups and proc.info["status"] != psutil.STATUS_ZOMBIE:
                    out.append(proc.pid)
            except (ProcessLookupError, psutil.Error):
                pass
        return out


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    _need_dask()
    c = _Cluster(tmp_path_factory.mktemp("dask"))
    try:
        yield c
    finally:
        c.stop()
        left = c.leaked()
        deadline = time.monotonic() + 10
        while left and time.monotonic() < deadline:  # a killed worker may take a moment to be gone
            time.sleep(0.2)
            left = c.leaked()
        assert not left, f"dask processes left running: {left}"


def test_cluster_equals_serial(cluster, inputs, serial, tmp_path, capsys):
    out = tmp_path / "out"
    code, stdout, _ = run(["batch", inputs, "--out", out, "--scheduler", cluster.address], capsys)
    assert code == 2, stdout
    assert f"the Dask cluster at {cluster.address}" in stdout
    rows = rows_by_model(out)
    assert {k: r["exit"] for k, r in rows.items()} == EXPECTED
    assert rows[BROKEN]["status"] == "bad input" and rows[BROKEN]["message"]
    workers = set(cluster.worker_pids())
    assert {r["worker"] for r in rows.values()} <= workers
    assert_same_results(out, serial)
    assert_nothing_half_written(out)


def test_worker_killed_mid_batch(cluster, inputs, serial, tmp_path):
    """SIGKILL the worker process that has just started a model: Dask runs the task again elsewhere."""
    from analysis.batch import _TOPIC

    pids = cluster.worker_pids()
    killed: list[tuple[str, int, str]] = []
    lock = threading.Lock()

    def on_event(event) -> None:
        msg = event[1]
        with lock:
            if killed or msg.get("worker") not in pids or msg.get("key") not in LONG:
                return
            killed.append((msg["worker"], pids[msg["worker"]], msg["key"]))
        threading.Timer(0.3, os.kill, (pids[msg["worker"]], signal.SIGKILL)).start()

    cluster.client.subscribe_topic(_TOPIC, on_event)
    try:
        out = tmp_path / "out"
        code = run(["batch", inputs, "--out", out, "--scheduler", cluster.address, "-q"])[0]
    finally:
        cluster.client.unsubscribe_topic(_TOPIC)
    assert killed, "no task started on the cluster"
    address, pid, key = killed[0]
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)
    assert code == 2
    rows = rows_by_model(out)
    assert {k: r["exit"] for k, r in rows.items()} == EXPECTED  # every model analysed despite the kill
    assert rows[key]["worker"] != address  # the killed task ran again on a live worker
    assert_same_results(out, serial)
    assert_nothing_half_written(out)
    cluster.client.wait_for_workers(2, timeout=90)  # the nanny restarts the killed worker


def test_embedded_local_cluster_default(tmp_path):
    """``plumbframe batch sample_models/*.ifc --out runs/``: a local cluster started and stopped by the command."""
    _need_dask()
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-m", "analysis.cli", "batch", str(SAMPLES / "*.ifc"), "--out", "runs/"],
                          cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600)
    assert proc.returncode == 3, proc.stderr  # unstable_frame is a mechanism
    assert "a local Dask cluster of" in proc.stdout and "Traceback" not in proc.stderr
    rows = rows_by_model(tmp_path / "runs")
    assert {k: r["exit"] for k, r in rows.items()} == {k: v for k, v in EXPECTED.items() if k != BROKEN}
    assert len({r["worker"] for r in rows.values()}) >= 1
    assert_nothing_half_written(tmp_path / "runs")
