"""Importing the modules a command needs later while the IFC file is being parsed.

``ifcopenshell.open`` parses in C++ without holding Python's global lock, and
reading and hashing the file (`analysis.ifc.source`) release it too: measured
on these machines, another thread keeps over 80 % of its speed meanwhile. The
modules an ``analyze`` run imports only after reading (the sparse solver with
its MKL libraries, scipy.spatial, the counts, the writer: about 0.4 s) are
therefore imported by a thread while the parser runs, and the thread is
joined before the reading returns: nothing else runs beside the command's
own thread afterwards (forking, `analysis.fileio.side_outputs`, needs that).

A module that fails to import in the thread is left alone: the command's own
import of it raises where it is needed, with its usual message.
"""
from __future__ import annotations

import contextlib
import importlib
import os
import threading
from collections.abc import Iterator, Sequence

__all__ = ["ANALYZE_MODULES", "CHECK_MODULES", "importing_alongside", "WORTH_FROM_BYTES"]

#: what ``plumbframe check`` imports after reading
CHECK_MODULES = ("scipy.spatial", "analysis.indeterminacy")
#: what ``plumbframe analyze`` imports after reading (pypardiso where installed)
ANALYZE_MODULES = (*CHECK_MODULES, "pypardiso", "uuid", "analysis.magnitudes", "analysis.stations",
                   "analysis.jsonio", "analysis.fileio", "analysis.ifc.writer")
#: files smaller than this parse in a few hundredths of a second: nothing to overlap, the modules come as needed
WORTH_FROM_BYTES = 2_000_000


def _import_all(names: Sequence[str]) -> None:
    for name in names:
        with contextlib.suppress(Exception):  # the command's own import reports it
            importlib.import_module(name)


@contextlib.contextmanager
def importing_alongside(names: Sequence[str], path: str | os.PathLike[str] | None = None) -> Iterator[None]:
    """Import ``names`` in a thread while the block runs (joined when it ends); only where ``path``, the file
    the block parses, is at least `WORTH_FROM_BYTES` (or not given). ``plumbframe batch`` passes nothing: its
    runs share a process, where the modules stay imported after the first."""
    if not names:
        yield
        return
    if path is not None:
        try:
            worth = os.stat(path).st_size >= WORTH_FROM_BYTES
        except OSError:
            worth = False  # the reader reports the file
        if not worth:
            yield
            return
    thread = threading.Thread(target=_import_all, args=(tuple(names),), name="plumbframe-imports", daemon=True)
    thread.start()
    try:
        yield
    finally:
        thread.join()
