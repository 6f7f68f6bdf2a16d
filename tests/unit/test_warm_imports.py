"""Imports made beside the parser (`analysis.warm_imports`): what is imported, what is called, and that no
thread is left behind. Behaviour of this project, no outside source."""
from __future__ import annotations

import importlib.util
import os
import sys
import threading

import pytest

from analysis import warm_imports


def _big_file(tmp_path) -> str:
    path = tmp_path / "big.ifc"
    path.write_bytes(b" " * warm_imports.WORTH_FROM_BYTES)
    return str(path)


def test_named_modules_are_imported_and_hooks_called(tmp_path, monkeypatch):
    (tmp_path / "pf_warm_probe.py").write_text("called = []\ndef hook():\n    called.append(1)\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.delitem(sys.modules, "pf_warm_probe", raising=False)
    warm_imports.expect(["pf_warm_probe:hook", "pf_no_such_module_anywhere", "pf_warm_probe:no_such_hook"])
    with warm_imports.while_parsing(_big_file(tmp_path)):
        pass
    # the thread may have been stopped before it reached the module: only what it did is checked
    if "pf_warm_probe" in sys.modules:
        assert sys.modules["pf_warm_probe"].called in ([], [1])
    assert not [t for t in threading.enumerate() if t.name == "plumbframe-imports"]


def test_hook_runs_when_given_time(tmp_path, monkeypatch):
    (tmp_path / "pf_warm_probe2.py").write_text("called = []\ndef hook():\n    called.append(1)\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.delitem(sys.modules, "pf_warm_probe2", raising=False)
    warm_imports.expect(["pf_warm_probe2:hook"])
    with warm_imports.while_parsing(_big_file(tmp_path)):
        for _ in range(200):  # the parse stands in: wait until the thread is done (at most 2 s)
            if not [t for t in threading.enumerate() if t.name == "plumbframe-imports"]:
                break
            threading.Event().wait(0.01)
    assert sys.modules["pf_warm_probe2"].called == [1]


def test_small_files_import_nothing(tmp_path, monkeypatch):
    monkeypatch.delitem(sys.modules, "pf_warm_probe3", raising=False)
    (tmp_path / "pf_warm_probe3.py").write_text("")
    monkeypatch.syspath_prepend(str(tmp_path))
    small = tmp_path / "small.ifc"
    small.write_bytes(b"ISO-10303-21;")
    warm_imports.expect(["pf_warm_probe3"])
    with warm_imports.while_parsing(str(small)):
        pass
    assert "pf_warm_probe3" not in sys.modules


@pytest.mark.skipif(importlib.util.find_spec("pypardiso") is None, reason="pypardiso not installed")
def test_pardiso_is_told_where_mkl_is_before_its_import(monkeypatch):
    """pypardiso searches the whole environment for MKL unless PYPARDISO_MKL_RT names it."""
    assert "analysis.stiffness.solvers:import_pardiso" in warm_imports.ANALYZE_MODULES
    assert "pypardiso" not in warm_imports.ANALYZE_MODULES
    from analysis.stiffness import solvers

    monkeypatch.delenv("PYPARDISO_MKL_RT", raising=False)  # restored afterwards
    solvers.import_pardiso()
    assert os.environ.get("PYPARDISO_MKL_RT")
