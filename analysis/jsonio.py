"""Serialising the results JSON fast and exactly.

With orjson (a dependency) numpy arrays are written directly, every float64
as its shortest round-trip decimal (``float(text) == value`` exactly), and
NaN or infinity as ``null`` (JSON has neither). Without orjson the standard
library writes the same document, more slowly.
"""
from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

__all__ = ["dumps", "plain"]


def _default(obj: Any) -> Any:
    if isinstance(obj, np.ndarray):
        return np.ascontiguousarray(obj)
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, (set, frozenset)):
        return sorted(obj)
    raise TypeError(f"{type(obj).__name__} is not JSON serialisable")


def plain(obj: Any) -> Any:
    """The document with arrays as lists and non-finite numbers as None (for the standard library)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, np.generic):
        return plain(obj.item())
    return obj


def dumps(doc: Any) -> bytes:
    """UTF-8 JSON of ``doc`` ending in a newline; numpy arrays and scalars allowed, NaN/infinity -> null."""
    try:
        import orjson
    except ImportError:  # pragma: no cover - orjson is a dependency
        return (json.dumps(plain(doc), allow_nan=False, ensure_ascii=False) + "\n").encode("utf-8")
    return orjson.dumps(doc, default=_default,
                        option=orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS | orjson.OPT_APPEND_NEWLINE)
