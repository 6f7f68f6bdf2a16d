"""Exceptions and diagnostics of the plumbframe engine.

Every error about user data starts with the entity at fault, e.g.
``#412 IfcStructuralCurveMember 'B12': no material profile``, and keeps the
entity's step id in ``.entity_id`` so the CLI and the add-on can point at it.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "AnalysisError",
    "IfcInputError",
    "UnitError",
    "UnstableStructureError",
    "ModelError",
    "Diagnostic",
    "entity_label",
]


class AnalysisError(Exception):
    """Base of every error the engine raises about the user's model or file."""

    def __init__(self, message: str, entity_id: int | None = None):
        super().__init__(message)
        self.entity_id = entity_id


class IfcInputError(AnalysisError):
    """The IFC file is missing something the analysis needs, or holds nonsense."""


class UnitError(AnalysisError):
    """A unit in the file cannot be understood or converted."""


class ModelError(AnalysisError):
    """The analytical model (built by hand or by the reader) is inconsistent."""


class UnstableStructureError(AnalysisError):
    """The structure is a mechanism under the chosen idealisation.

    ``mechanisms`` holds plain-language descriptions of each independent
    mechanism found.
    """

    def __init__(self, message: str, entity_id: int | None = None, mechanisms: tuple[str, ...] = ()):
        super().__init__(message, entity_id)
        self.mechanisms = tuple(mechanisms)


@dataclass(frozen=True, slots=True)
class Diagnostic:
    """A non-fatal finding: ``level`` is 'info', 'warning' or 'error'."""

    level: str
    entity_id: int | None
    message: str

    def __str__(self) -> str:
        return f"{self.level}: {self.message}"


def entity_label(entity) -> str:
    """``#412 IfcBeam 'B-12'`` for an ifcopenshell entity (name omitted when empty)."""
    try:
        name = getattr(entity, "Name", None)
    except Exception:  # entity without a Name attribute
        name = None
    label = f"#{entity.id()} {entity.is_a()}"
    return f"{label} '{name}'" if name else label
