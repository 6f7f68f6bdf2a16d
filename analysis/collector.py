"""Pausing Python's cyclic garbage collector during the bulk phases of a run.

Reading a large model keeps hundreds of thousands of small objects alive (entity
wrappers, tuples, dictionaries of ids), and writing results makes as many again.
Every automatic collection walks the young ones again and every few hundred
thousand allocations the whole heap: on the 28,000-member tower of
``benchmarks/bench_roundtrip.py`` that was a quarter of the reading and about
2 s of the command. These phases make no reference cycles in bulk (the peak
memory of the command is the same with the collector paused, measured), so
the collector is paused while they run and works as usual afterwards.

The pause is reentrant and thread-safe: it is lifted when the outermost
phase ends, and a collector a caller disabled itself stays disabled.
"""
from __future__ import annotations

import contextlib
import gc
import threading
from collections.abc import Callable, Iterator
from functools import wraps
from typing import Any, TypeVar

__all__ = ["collector_paused", "pauses_collector"]

_lock = threading.Lock()
_depth = 0
_resume = False  # whether the outermost pause found the collector enabled

F = TypeVar("F", bound=Callable[..., Any])


@contextlib.contextmanager
def collector_paused() -> Iterator[None]:
    """Run the block with the cyclic garbage collector paused (reference counting still frees memory)."""
    global _depth, _resume
    with _lock:
        if _depth == 0:
            _resume = gc.isenabled()
            gc.disable()
        _depth += 1
    try:
        yield
    finally:
        with _lock:
            _depth -= 1
            if _depth == 0 and _resume:
                gc.enable()


def pauses_collector(fn: F) -> F:
    """Decorator: ``fn`` runs inside `collector_paused`."""

    @wraps(fn)
    def paused(*args: Any, **kwargs: Any) -> Any:
        with collector_paused():
            return fn(*args, **kwargs)

    return paused  # type: ignore[return-value]
