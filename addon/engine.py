"""Glue to the `analysis` engine: lazy imports and the per-scene session.

The installable extension carries the engine as the sub-package
``<extension package>.analysis`` (see tools/build_addon.py); a development
checkout with the repository on ``sys.path`` finds the top-level ``analysis``
package instead. Nothing here is imported until an operator runs, so
registering the add-on stays cheap.

The session keeps the objects an analysis needs between operator calls (the
read model, the frame, the results, the indeterminacy count). It lives in
memory only; what the user should be able to inspect is copied onto the
Blender objects as custom properties by `drawing`.
"""
from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import Any

__all__ = ["engine", "analysis_error", "Session", "session", "drop_session", "clear_sessions"]

_ROOT: Any = None


def _root():
    global _ROOT
    if _ROOT is None:
        inside = f"{__package__}.analysis"
        try:
            _ROOT = importlib.import_module(inside)
        except ModuleNotFoundError as exc:
            if exc.name != inside:
                raise
            _ROOT = importlib.import_module("analysis")
    return _ROOT


def engine(submodule: str = ""):
    """The engine package, or one of its modules: ``engine("ifc.reader")``."""
    root = _root()
    return importlib.import_module(f"{root.__name__}.{submodule}") if submodule else root


def analysis_error() -> type:
    """The engine's base error class, `analysis.errors.AnalysisError` (imported lazily)."""
    return engine("errors").AnalysisError


@dataclass
class Session:
    """What one scene holds between operator calls."""

    path: str = ""
    model: Any = None  # analysis.ifc.reader.IfcModel
    frame: Any = None  # analysis.model.Frame
    results: Any = None  # analysis.results.Results
    indeterminacy: Any = None  # analysis.indeterminacy.Indeterminacy
    options: Any = None  # analysis.model.AnalysisOptions used for `results`
    extra: dict = field(default_factory=dict)


_SESSIONS: dict[int, Session] = {}


def session(scene, create: bool = True) -> Session | None:
    """The session of ``scene`` (created empty when ``create``)."""
    key = scene.session_uid
    if key not in _SESSIONS and create:
        _SESSIONS[key] = Session()
    return _SESSIONS.get(key)


def drop_session(scene) -> None:
    _SESSIONS.pop(scene.session_uid, None)


def clear_sessions() -> None:
    _SESSIONS.clear()
