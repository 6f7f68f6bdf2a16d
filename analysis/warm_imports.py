"""Importing the modules a command needs later while the IFC file is being parsed.

``ifcopenshell.open`` parses in C++ without holding Python's global lock, and
reading and hashing the file (`analysis.ifc.source`) release it too: measured
on these machines, another thread keeps over 80 % of its speed meanwhile. The
modules an ``analyze`` run imports only after reading (the sparse solver with
its MKL libraries, scipy.spatial, the counts, the writer: about 0.4 s) are
therefore imported by a thread while the parser runs (the command names
them with `expect`, `analysis.ifc.source.open_source` parses inside
`while_parsing`), and the thread is stopped and joined when the parser
returns: nothing else runs beside the command's own thread afterwards
(forking, `analysis.fileio.side_outputs`, needs that).

A module that fails to import in the thread is left alone: the command's own
import of it raises where it is needed, with its usual message.
"""
from __future__ import annotations

import contextlib
import importlib
import os
import threading
from collections.abc import Iterator, Sequence

__all__ = ["ANALYZE_MODULES", "CHECK_MODULES", "expect", "while_parsing", "WORTH_FROM_BYTES"]

#: what ``plumbframe check`` imports after reading
CHECK_MODULES = ("scipy.spatial", "analysis.indeterminacy")
#: what ``plumbframe analyze`` imports after reading (pypardiso where installed); ``module:function`` imports
#: the module and calls the function (pypardiso must be told where MKL is before its import, or it searches
#: the whole environment for it)
ANALYZE_MODULES = (*CHECK_MODULES, "analysis.stiffness.solvers:import_pardiso", "uuid", "analysis.magnitudes", "analysis.stations",
                   "analysis.jsonio", "analysis.fileio", "analysis.ifc.writer")
#: files smaller than this parse in a few hundredths of a second: nothing to overlap, the modules come as needed
WORTH_FROM_BYTES = 2_000_000

_expected: tuple[str, ...] = ()


def expect(names: Sequence[str]) -> None:
    """Name the modules the next file parsed (`while_parsing`) may import alongside; once.

    A name ``module:function`` imports the module and calls its function without arguments.
    """
    global _expected
    _expected = tuple(names)


def _import_all(names: Sequence[str], stop: threading.Event) -> None:
    for name in names:
        if stop.is_set():  # the parser is done: the rest is imported where it is needed, as before
            return
        module, _, function = name.partition(":")
        with contextlib.suppress(Exception):  # the command's own import reports it
            imported = importlib.import_module(module)
            if function:
                getattr(imported, function)()


@contextlib.contextmanager
def while_parsing(path: str | os.PathLike[str]) -> Iterator[None]:
    """While the block parses ``path``, import the modules `expect` named (then forgotten) in a thread.

    Only for a file of `WORTH_FROM_BYTES` or more. When the block ends the
    thread stops after the module it is importing, and is joined: the
    reader's own Python work after parsing does not share the interpreter
    with it.
    """
    global _expected
    names, _expected = _expected, ()
    try:
        worth = bool(names) and os.stat(path).st_size >= WORTH_FROM_BYTES
    except OSError:
        worth = False  # the reader reports the file
    if not worth:
        yield
        return
    stop = threading.Event()
    thread = threading.Thread(target=_import_all, args=(names, stop), name="plumbframe-imports", daemon=True)
    thread.start()
    try:
        yield
    finally:
        stop.set()
        thread.join()
