"""Checks the command line makes before and around a run: option values, output paths, memory, signals.

Everything here raises `AnalysisError` (exit 2) with a message that says
what is wrong and what to do; nothing here computes results.
"""
from __future__ import annotations

import argparse
import math
import os
import signal
import sys
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager

from .errors import AnalysisError

__all__ = [
    "Terminated",
    "available_memory",
    "check_distinct_outputs",
    "check_ifc_output_format",
    "check_json_memory",
    "check_solver",
    "json_memory_estimate",
    "nonnegative_length",
    "terminate_as_interrupt",
    "quiet_stdout_errors",
]

# Bytes of memory per number of the results JSON while it is built and written: the float object and its
# list slot (32), the copy made to drop non-finite values (32) and its text with indentation (about 30),
# encoded once more to be written (30). Measured on the workshop sample: 120-140 bytes per number.
JSON_BYTES_PER_NUMBER = 100
JSON_ARRAYS_PER_MEMBER = 9  # stations, N, Vy, Vz, T, My, Mz, dy, dz


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised where the program is so that the same clean-up runs as for Ctrl-C."""


def nonnegative_length(text: str) -> float:
    """argparse type: a finite length >= 0 in metres."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"{text!r}: give a finite length of 0 or more (metres)")
    if value > 10.0:
        raise argparse.ArgumentTypeError(f"{text!r}: a tolerance over 10 m would merge whole bays (metres are meant)")
    return value


def check_solver(requested: str) -> None:
    """The solver asked for is installed (else say how to get it)."""
    if requested in (None, "auto"):
        return
    from .stiffness.solvers import available_solvers

    avail = available_solvers()
    if requested in avail:
        return
    how = {"pardiso": "pip install pypardiso (x86-64 only)",
           "cholmod": "install SuiteSparse and pip install scikit-sparse"}.get(requested, "")
    raise AnalysisError(f"--solver {requested}: not installed here (installed: {', '.join(avail)})"
                        + (f"; to get it: {how}" if how else "") + ", or use --solver auto")


def check_ifc_output_format(path: str) -> None:
    """The results IFC can be written as STEP (.ifc or any other name) or zipped STEP (.ifcZIP)."""
    ext = os.path.splitext(path)[1].lower()
    if ext in (".ifcxml", ".ifcjson"):
        raise AnalysisError(f"{path}: the IFC library cannot write {os.path.splitext(path)[1]} files; "
                            "name the output .ifc (or .ifcZIP)")


def _identity(path: str) -> tuple:
    try:
        st = os.stat(path)
    except OSError:
        return ("path", os.path.realpath(os.path.abspath(path)))
    return ("inode", st.st_dev, st.st_ino)


def check_distinct_outputs(outputs: Sequence[tuple[str, str | None]]) -> None:
    """No two outputs of one run on one file (devices such as /dev/null may take several)."""
    from .fileio import is_special_file

    seen: dict[tuple, str] = {}
    for what, path in outputs:
        if not path or is_special_file(path):
            continue
        key = _identity(path)
        if key in seen:
            raise AnalysisError(f"{path}: named for both the {seen[key]} and the {what}; "
                                "give each output its own file")
        seen[key] = what


def available_memory() -> int | None:
    """Bytes this process can still allocate: MemAvailable, bounded by a cgroup limit (None: unknown)."""
    avail: int | None = None
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    avail = int(line.split()[1]) * 1024
                    break
    except (OSError, ValueError):
        avail = None
    for limit_file, usage_file in (("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory.current"),
                                   ("/sys/fs/cgroup/memory/memory.limit_in_bytes",
                                    "/sys/fs/cgroup/memory/memory.usage_in_bytes")):
        try:
            with open(limit_file) as fh:
                raw = fh.read().strip()
            if raw == "max":
                continue
            with open(usage_file) as fh:
                room = int(raw) - int(fh.read().strip())
        except (OSError, ValueError):
            continue
        if room < (1 << 50):
            avail = room if avail is None else min(avail, room)
    return avail


def json_memory_estimate(n_members: int, n_results: int, stations: int, n_nodes: int = 0) -> int:
    """Bytes needed to build and write the results JSON (``n_results`` cases and combinations)."""
    numbers = n_results * (n_members * JSON_ARRAYS_PER_MEMBER * max(stations, 2) + n_nodes * 12)
    numbers += n_members * 20 + n_nodes * 4
    return int(numbers * JSON_BYTES_PER_NUMBER)


def _gb(n: float) -> str:
    return f"{n / 1e9:.1f} GB"


def check_json_memory(path: str, n_members: int, n_results: int, stations: int, n_nodes: int = 0,
                      available: Callable[[], int | None] | None = None) -> None:
    """Refuse a ``--json`` that cannot fit in memory, before the long part of the run."""
    need = json_memory_estimate(n_members, n_results, stations, n_nodes)
    room = (available or available_memory)()
    if room is None or need < room:
        return
    raise AnalysisError(f"{path}: the results JSON of {n_members:,} members x {n_results} cases and combinations "
                        f"x at least {stations} stations needs about {_gb(need)} of memory, and {_gb(room)} are free; "
                        "nothing was analysed. Leave out --json (the results IFC and the report hold the results), "
                        "or analyse a part of the model")


@contextmanager
def terminate_as_interrupt() -> Iterator[None]:
    """While active, SIGTERM raises `Terminated` (so output sets are discarded as on Ctrl-C)."""
    try:
        previous = signal.getsignal(signal.SIGTERM)
    except (ValueError, AttributeError):  # not the main thread, or no signals
        yield
        return

    def handler(signum, frame):
        raise Terminated()

    try:
        signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def quiet_stdout_errors(stream=None) -> None:
    """After a closed or full stdout: flush what can be, then point stdout at /dev/null so exit is silent."""
    stream = stream or sys.stdout
    try:
        stream.flush()
    except (OSError, ValueError):
        pass
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, stream.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass
