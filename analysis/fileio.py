"""Writing output files so that a crash never leaves a half-written file.

Every output (results IFC, JSON, report, sample copies) is written to a
temporary file in the destination folder and moved into place with one
``os.replace``, which is atomic on the same file system.
"""
from __future__ import annotations

import os
import tempfile
from typing import Callable

from .errors import AnalysisError

__all__ = ["atomic_write", "atomic_text"]


def _public_mode(path: str) -> None:
    """Give a temporary file the mode a normally created file would have (mkstemp makes it 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(path, 0o666 & ~mask)


def atomic_write(path: str | os.PathLike[str], write: Callable[[str], None], suffix: str = ".tmp") -> str:
    """Call ``write(tmp_path)`` and move the result to ``path``; nothing is left behind on failure.

    Raises
    ------
    AnalysisError
        The folder cannot be written or the file cannot be replaced.
    """
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".plumbframe-", suffix=suffix)
    except OSError as exc:
        raise AnalysisError(f"{path}: cannot write in {folder} ({exc.strerror or exc})") from None
    os.close(fd)
    try:
        write(tmp)
        _public_mode(tmp)
        os.replace(tmp, path)
    except OSError as exc:
        raise AnalysisError(f"{path}: cannot be written ({exc.strerror or exc})") from None
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)
    return path


def atomic_text(path: str | os.PathLike[str], text: str, suffix: str = ".tmp") -> str:
    """Write a UTF-8 text file atomically (see `atomic_write`)."""

    def write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)

    return atomic_write(path, write, suffix)
