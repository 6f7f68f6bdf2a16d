"""Writing output files so that a crash never leaves a half-written file.

Every output (results IFC, JSON, report, sample copies) is written to a
temporary file in the destination folder and moved into place with one
``os.replace``, which is atomic on the same file system.

The outputs of one run form a set that is kept all-or-nothing: inside
``with output_set() as outputs: ...`` every `atomic_write` only stages its
file (writes the temporary); ``outputs.commit()`` then moves them all into
place, and on any failure (or when the block is left without a commit) the
staged temporaries are removed and targets already replaced are restored
from hard-link backups.

A target that exists and is not a regular file (``/dev/null``, a terminal,
a named pipe) is never replaced: the staged bytes are copied into it as a
stream when the set is committed.

Temporary names carry the process id and a host tag (``.plumbframe-<pid>@<host>-XXXX<suffix>``), so
a later run can tell the leftovers of a killed run (`remove_stale_temporaries`)
from the live temporaries of a run going on at the same time.
"""
from __future__ import annotations

import contextlib
import contextvars
import errno
import functools
import glob
import os
import re
import shutil
import signal
import stat
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

from .errors import AnalysisError

__all__ = ["atomic_write", "atomic_text", "output_set", "OutputSet", "remove_stale_temporaries", "is_special_file",
           "side_outputs", "side_outputs_possible", "ForkedCall"]

_PREFIX = ".plumbframe-"
_STALE_AGE = 60.0  # seconds: a leftover younger than this is never touched (another host may be writing it)
_LEGACY_AGE = 24 * 3600.0  # names without a process id (older versions): removed when older than a day
_NAME = re.compile(r"^\.plumbframe-(?:(\d+)(?:@([0-9a-f]{6}))?-)?[A-Za-z0-9_]{6,}")


def _host_tag() -> str:
    import hashlib
    import socket

    return hashlib.sha1(socket.gethostname().encode("utf-8", "replace")).hexdigest()[:6]


#: the process whose id names the temporaries: a side writer (`side_outputs`) names its own after the run
#: that commits them, so that another run never takes them for a dead writer's leftovers
_owner_pid: int | None = None


def _tmp_prefix() -> str:
    """``.plumbframe-<pid>@<host>-``: a later run on this host can tell whether the writer still runs."""
    return f"{_PREFIX}{_owner_pid or os.getpid()}@{_host_tag()}-"


def _public_mode(path: str) -> None:
    """Give a temporary file the mode a normally created file would have (mkstemp makes it 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(path, 0o666 & ~mask)


def is_special_file(path: str) -> bool:
    """True when ``path`` exists and is neither a regular file nor a folder (a device, pipe or socket)."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return False
    return not (stat.S_ISREG(mode) or stat.S_ISDIR(mode))


def _remove(path: str) -> None:
    with contextlib.suppress(OSError):
        os.remove(path)


def _remove_library_temporaries(tmp: str) -> None:
    """ifcopenshell's ``file.write`` writes ``<tmp>.NNNN.tmp`` and renames it: remove what a failure left."""
    for leftover in glob.glob(glob.escape(tmp) + ".*.tmp"):
        _remove(leftover)


def _reason(exc: BaseException, folder: str) -> str:
    if isinstance(exc, OSError):
        return exc.strerror or str(exc)
    text = str(exc) or type(exc).__name__
    with contextlib.suppress(OSError):
        if shutil.disk_usage(folder).free < 1 << 20:
            text += "; the disk is full"
    return text


@dataclass
class _Staged:
    target: str  # where the file goes (symbolic links resolved)
    shown: str  # the path as the user gave it
    tmp: str
    special: bool  # stream into an existing non-regular file instead of replacing it


@dataclass
class OutputSet:
    """Files staged by `atomic_write` while this set is active; see `output_set`."""

    staged: list[_Staged] = field(default_factory=list)
    committed: list[str] = field(default_factory=list)

    def stage(self, path: str, write: Callable[[str], None], suffix: str) -> str:
        target = os.path.realpath(path) if os.path.islink(path) else path
        special = is_special_file(target)
        if any(os.path.abspath(s.target) == os.path.abspath(target) for s in self.staged) and not special:
            raise AnalysisError(f"{path}: named for two outputs of one run; give each output its own file")
        folder = tempfile.gettempdir() if special else os.path.dirname(os.path.abspath(target))
        tmp = _write_temporary(path, folder, write, suffix)
        self.staged.append(_Staged(target, path, tmp, special))
        return path

    def commit(self) -> list[str]:
        """Move every staged file into place (streams first); all or nothing. Returns the paths written."""
        blocked = _block_signals()
        try:
            for s in self.staged:
                if s.special:
                    _stream_into(s.tmp, s.target, s.shown)
                    _remove(s.tmp)
                    self.committed.append(s.shown)
            self._replace_all([s for s in self.staged if not s.special])
        finally:
            self.discard()
            _unblock_signals(blocked)
        return list(self.committed)

    def _replace_all(self, files: list[_Staged]) -> None:
        done: list[tuple[_Staged, str | None]] = []
        try:
            for s in files:
                backup = _backup(s.target)
                try:
                    _public_mode(s.tmp)
                    os.replace(s.tmp, s.target)
                except OSError as exc:
                    if backup:
                        _remove(backup)
                    raise AnalysisError(f"{s.shown}: cannot be written ({exc.strerror or exc})") from None
                done.append((s, backup))
        except BaseException:
            for s, backup in reversed(done):  # put back what was there before
                if backup:
                    with contextlib.suppress(OSError):
                        os.replace(backup, s.target)
                else:
                    _remove(s.target)
            raise
        for s, backup in done:
            if backup:
                _remove(backup)
            self.committed.append(s.shown)

    def discard(self) -> None:
        """Remove every staged temporary that was not committed."""
        for s in self.staged:
            _remove(s.tmp)
            _remove_library_temporaries(s.tmp)
        self.staged.clear()


_ACTIVE: contextvars.ContextVar[OutputSet | None] = contextvars.ContextVar("plumbframe_output_set", default=None)


@contextlib.contextmanager
def output_set() -> Iterator[OutputSet]:
    """Collect the outputs of one run; commit them together with ``.commit()``.

    Leaving the block without a commit (an error, an interrupt) removes the
    staged temporaries, so no output of the run appears.
    """
    outputs = OutputSet()
    token = _ACTIVE.set(outputs)
    try:
        yield outputs
    finally:
        _ACTIVE.reset(token)
        outputs.discard()


def _write_temporary(path: str, folder: str, write: Callable[[str], None], suffix: str) -> str:
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=_tmp_prefix(), suffix=suffix)
    except OSError as exc:
        raise AnalysisError(f"{path}: cannot write in {folder} ({exc.strerror or exc})") from None
    os.close(fd)
    ok = False
    try:
        write(tmp)
        ok = True
    except AnalysisError:
        raise
    except (OSError, RuntimeError) as exc:  # ifcopenshell reports its write failures as RuntimeError
        raise AnalysisError(f"{path}: cannot be written ({_reason(exc, folder)})") from None
    except NotImplementedError as exc:
        raise AnalysisError(f"{path}: {exc}") from None
    finally:
        if not ok:
            _remove(tmp)
            _remove_library_temporaries(tmp)
    return tmp


def _backup(target: str) -> str | None:
    """A hard link to the current ``target`` (None when there is none or links are impossible)."""
    if not os.path.isfile(target):
        return None
    folder = os.path.dirname(os.path.abspath(target))
    for _ in range(5):
        name = os.path.join(folder, f"{_tmp_prefix()}{os.urandom(4).hex()}.bak")
        try:
            os.link(target, name)
            return name
        except FileExistsError:
            continue
        except OSError:
            return None
    return None


def _stream_into(tmp: str, target: str, shown: str) -> None:
    """Copy ``tmp`` into an existing device, pipe or socket path."""
    try:
        mode = os.stat(target).st_mode
        if stat.S_ISFIFO(mode):
            try:  # a pipe nobody reads would block for ever
                fd = os.open(target, os.O_WRONLY | os.O_NONBLOCK)
            except OSError as exc:
                if exc.errno == errno.ENXIO:
                    raise AnalysisError(f"{shown}: a named pipe that no process is reading") from None
                raise
            os.set_blocking(fd, True)
        elif stat.S_ISSOCK(mode):
            raise AnalysisError(f"{shown}: is a socket, not a file")
        else:
            fd = os.open(target, os.O_WRONLY)
        with open(fd, "wb") as out, open(tmp, "rb") as src:
            shutil.copyfileobj(src, out, 1 << 20)
    except OSError as exc:
        raise AnalysisError(f"{shown}: cannot be written ({exc.strerror or exc})") from None


def _block_signals() -> bool:
    """Hold SIGINT/SIGTERM while the renames run (they take milliseconds); True if blocked."""
    if not hasattr(signal, "pthread_sigmask"):
        return False
    try:
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    except (OSError, ValueError):
        return False
    return True


def _unblock_signals(blocked: bool) -> None:
    if blocked:
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT, signal.SIGTERM})


def atomic_write(path: str | os.PathLike[str], write: Callable[[str], None], suffix: str = ".tmp") -> str:
    """Call ``write(tmp_path)`` and move the result to ``path``; nothing is left behind on failure.

    Inside an active `output_set` the file is only staged; the set's
    ``commit()`` moves it into place with the others.

    Raises
    ------
    AnalysisError
        The folder cannot be written, the writer fails (also ifcopenshell's
        ``RuntimeError``), the path is already an output of this run, or the
        file cannot be replaced.
    """
    path = os.fspath(path)
    active = _ACTIVE.get()
    if active is not None:
        return active.stage(path, write, suffix)
    with output_set() as outputs:
        outputs.stage(path, write, suffix)
        outputs.commit()
    return path


def atomic_text(path: str | os.PathLike[str], text: str, suffix: str = ".tmp") -> str:
    """Write a UTF-8 text file atomically (see `atomic_write`)."""

    def write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)

    return atomic_write(path, write, suffix)


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists but belongs to someone else
        return True
    return True


def remove_stale_temporaries(folders, now: float | None = None) -> list[str]:
    """Remove temporaries of our own naming that a killed run left in ``folders``; returns their paths.

    A file counts as stale when it was written on this host by a process
    that no longer runs; when it was written by a process of this id without
    a host tag (or on another host sharing the folder) once it is also older
    than a minute (a day for another host); names without a process id when
    older than a day.
    """
    host = _host_tag()
    now = time.time() if now is None else now
    removed: list[str] = []
    for folder in dict.fromkeys(os.path.abspath(f) for f in folders):
        try:
            names = os.listdir(folder)
        except OSError:
            continue
        for name in names:
            m = _NAME.match(name)
            if m is None:
                continue
            path = os.path.join(folder, name)
            try:
                st = os.lstat(path)
            except OSError:
                continue
            if not stat.S_ISREG(st.st_mode):
                continue
            age = now - st.st_mtime
            pid = int(m.group(1)) if m.group(1) else None
            tag = m.group(2)
            if pid is not None and tag == host:
                stale = pid != os.getpid() and not _alive(pid)
            elif pid is not None and tag is None:
                stale = age > _STALE_AGE and pid != os.getpid() and not _alive(pid)
            else:
                stale = age > _LEGACY_AGE
            if stale:
                try:
                    os.remove(path)
                except OSError:
                    continue
                removed.append(path)
    return removed


# --------------------------------------------------------------------------- work done alongside
class ForkedCall:
    """``body()`` run by a forked process while this one goes on (Linux); `join` gives its report.

    ``body`` returns a JSON-able dict; the report is that dict with
    ``"ok": True``, or ``{"ok": False, "error": text}`` when it raised an
    `AnalysisError`, with ``"trace"`` added for any other exception (a fault)
    or a process that ended without reporting. The child stops when this
    process dies, and SIGTERM or SIGINT make it leave through Python (its
    ``finally`` blocks run), as `cancel` relies on: it waits for that.
    """

    def __init__(self, body: Callable[[], dict], doing: str):
        self.doing = doing  # what the process does, for its messages: "writing the JSON"
        read_fd, write_fd = os.pipe()
        parent = os.getpid()
        pid = os.fork()
        if pid == 0:  # pragma: no cover - the child's coverage is not collected (it leaves by os._exit)
            os.close(read_fd)
            _forked_child(body, write_fd, parent)
        os.close(write_fd)
        self.pid, self.fd = pid, read_fd
        self.report: dict | None = None

    def join(self) -> dict:
        """Wait for the child (once); its report."""
        import json

        if self.report is not None:
            return self.report
        with open(self.fd, "rb") as fh:  # read to the end first: a long error would fill the pipe
            text = fh.read().decode("utf-8", "replace")
        _, status = os.waitpid(self.pid, 0)
        try:
            report = json.loads(text)
        except ValueError:
            how = (f"ended by signal {os.WTERMSIG(status)}" if os.WIFSIGNALED(status)
                   else f"exited with status {os.waitstatus_to_exitcode(status)}")
            report = {"ok": False, "error": f"the process {self.doing} {how}"}
        self.report = report
        return report

    def cancel(self) -> dict:
        """Stop the child if it still runs; its report (it may have finished before it was stopped)."""
        if self.report is None:
            with contextlib.suppress(OSError):
                os.kill(self.pid, signal.SIGTERM)
        return self.join()


def _forked_child(body: Callable[[], dict], fd: int, parent: int) -> None:  # pragma: no cover - runs in the child
    """The child of `ForkedCall`: run ``body``, send its report to the parent, leave without clean-up."""
    import json
    import traceback

    code = 1
    try:
        signal.signal(signal.SIGTERM, _raise_exit)
        signal.signal(signal.SIGINT, _raise_exit)
        _die_with(parent)
        report = {**body(), "ok": True}
        code = 0
    except AnalysisError as exc:
        report = {"ok": False, "error": str(exc)}
    except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent as text
        report = {"ok": False, "error": f"{type(exc).__name__}: {exc}", "trace": traceback.format_exc()}
    try:
        os.write(fd, json.dumps(report).encode("utf-8"))
        os.close(fd)
    finally:
        os._exit(code)


def _raise_exit(signum, frame) -> None:  # pragma: no cover - runs in the child
    raise SystemExit(128 + signum)


def _die_with(parent: int) -> None:  # pragma: no cover - runs in the child
    """Have the kernel stop this child when the parent dies (Linux); then check it did not die already."""
    import ctypes

    with contextlib.suppress(OSError, AttributeError):
        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGTERM)  # PR_SET_PDEATHSIG
    if os.getppid() != parent:
        raise SystemExit(1)


def _stage_aside(work: Callable[[], None], owner: int) -> dict:  # pragma: no cover - runs in the child
    """`side_outputs`' body in the child: ``work`` in a fresh output set; its staged files for the parent."""
    global _owner_pid
    _owner_pid = owner
    t0 = time.perf_counter()
    with output_set() as mine:
        work()
        staged = [vars(s).copy() for s in mine.staged]
        mine.staged.clear()  # the temporaries stay: the parent commits them with its own
    return {"staged": staged, "seconds": time.perf_counter() - t0}


def side_outputs_possible() -> bool:
    """Whether `side_outputs` can fork here: Linux, only the main thread running, not switched off.

    ``PLUMBFRAME_SIDE_OUTPUTS=0`` writes every output in turn.
    """
    import threading

    return (sys.platform.startswith("linux") and hasattr(os, "fork") and threading.active_count() == 1
            and threading.current_thread() is threading.main_thread()
            and os.environ.get("PLUMBFRAME_SIDE_OUTPUTS", "1") != "0")


@contextlib.contextmanager
def side_outputs(works: list[tuple[str, Callable[[], None]]], *, fork: bool | None = None,
                 started: Callable[[str, bool], None] | None = None,
                 done: Callable[[str, float, bool], None] | None = None) -> Iterator[None]:
    """Stage the outputs of ``works`` (``(what, work)``) in forked processes while the block runs.

    Each ``work`` writes its files with `atomic_write` as it would in this
    process; it runs in a child forked when the block starts (a copy of the
    run as it is then: later changes in this process are not seen), and its
    staged temporaries join the active `output_set` when the block ends, so
    they are committed, or removed, with the others. A failure in a child
    is raised here as `AnalysisError` after the block; a failure in the
    block stops the children and removes what they staged.

    ``fork``: True forks, False runs each work in turn when the block ends,
    None forks when `side_outputs_possible`. ``started(what, forked)`` is
    called as each work starts (forked: all before the block),
    ``done(what, seconds, forked)`` as each output is staged.
    """
    if fork is None:
        fork = side_outputs_possible()
    active = _ACTIVE.get()
    if not fork or active is None or not works:
        yield
        for what, work in works:
            if started is not None:
                started(what, False)
            t0 = time.perf_counter()
            work()
            if done is not None:
                done(what, time.perf_counter() - t0, False)
        return
    owner = os.getpid()
    writers: list[tuple[str, ForkedCall]] = []
    try:
        for what, work in works:
            if started is not None:
                started(what, True)
            sys.stdout.flush()
            sys.stderr.flush()
            writers.append((what, ForkedCall(functools.partial(_stage_aside, work, owner), f"writing the {what}")))
        yield
    except BaseException:
        for _, w in writers:
            report = w.cancel()
            for entry in report["staged"] if report["ok"] else ():  # staged before it was stopped
                _remove(entry["tmp"])
        raise
    failed = None
    for what, w in writers:
        report = w.join()
        if report["ok"]:
            for entry in report["staged"]:
                active.staged.append(_Staged(**entry))
            if done is not None:
                done(what, float(report["seconds"]), True)
        elif failed is None:
            failed = report
    if failed is not None:
        if "trace" in failed:  # a fault, not bad input: keep the child's traceback
            raise RuntimeError(f"{failed['error']}\n(in the process writing it)\n{failed['trace']}")
        raise AnalysisError(failed["error"])
