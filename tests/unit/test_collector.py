"""The collector pause of the bulk phases (analysis.collector): reentrant, restores what it found."""
import gc
import threading

import pytest

from analysis.collector import collector_paused, pauses_collector


@pytest.fixture(autouse=True)
def _enabled_collector():
    was = gc.isenabled()
    gc.enable()
    yield
    (gc.enable if was else gc.disable)()


def test_paused_inside_and_resumed_after():
    with collector_paused():
        assert not gc.isenabled()
        with collector_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()  # the outer phase still runs
    assert gc.isenabled()


def test_resumed_after_an_exception():
    with pytest.raises(ValueError), collector_paused():
        raise ValueError("boom")
    assert gc.isenabled()


def test_a_collector_the_caller_disabled_stays_disabled():
    gc.disable()
    with collector_paused():
        pass
    assert not gc.isenabled()


def test_decorator_keeps_the_function_and_its_result():
    @pauses_collector
    def work(x, *, y):
        """Doc."""
        return x + y, gc.isenabled()

    assert work(1, y=2) == (3, False)
    assert work.__doc__ == "Doc." and work.__name__ == "work"
    assert gc.isenabled()


def test_overlapping_threads_resume_only_when_the_last_ends():
    entered, release = threading.Barrier(3), threading.Event()
    states = []

    def phase():
        with collector_paused():
            entered.wait()
            release.wait()
        states.append(gc.isenabled())

    threads = [threading.Thread(target=phase) for _ in range(2)]
    for t in threads:
        t.start()
    entered.wait()
    assert not gc.isenabled()
    release.set()
    for t in threads:
        t.join()
    assert gc.isenabled()
