"""The command goes without numpy's huge-page advice for its run and gives the setting back.

Why: first touch of huge-page-advised memory is slow on these virtual machines (benchmarks/README.md,
2026-12-05). Common practice, no source: a context manager restores what it found, also after an error.
"""
import pytest

from analysis import cli


def _current(switch):
    before = switch(True)
    switch(before)
    return before


@pytest.fixture
def switch():
    s = cli._hugepage_switch()
    if s is None:
        pytest.skip("this numpy has no huge-page switch")
    was = _current(s)
    yield s
    s(was)


@pytest.mark.parametrize("start", [True, False])
def test_off_inside_and_restored_after(switch, start):
    switch(start)
    with cli._small_pages():
        assert _current(switch) is False
    assert _current(switch) is start


def test_restored_after_an_error(switch):
    switch(True)
    with pytest.raises(RuntimeError), cli._small_pages():
        raise RuntimeError("boom")
    assert _current(switch) is True
