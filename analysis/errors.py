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
    "PlacementError",
    "UnitError",
    "UnstableStructureError",
    "ModelError",
    "Diagnostic",
    "entity_label",
    "entity_global_id",
]


class AnalysisError(Exception):
    """Base of every error the engine raises about the user's model or file."""

    def __init__(self, message: str, entity_id: int | None = None):
        super().__init__(message)
        self.entity_id = entity_id


class IfcInputError(AnalysisError):
    """The IFC file is missing something the analysis needs, or holds nonsense."""


class PlacementError(IfcInputError):
    """An object placement cannot be resolved (a cycle, an unsupported placement or grid curve).

    ``entity_id`` is the placement at fault; readers that can leave the
    element out catch this type and report the element with ``str(exc)``
    as the reason.
    """


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


def entity_label(entity, global_id: bool = True) -> str:
    """``#412 IfcBeam 'B-12' (GlobalId 2ccDLznxfJAhKiXoPKukxj)`` for an ifcopenshell entity.

    The name is omitted when empty, the GlobalId where the entity has none
    (or ``global_id`` is false, e.g. where the message gives it already).
    """
    name = _name_of(entity)
    label = f"#{entity.id()} {entity.is_a()}"
    if name:
        label = f"{label} '{name}'"
    if global_id:
        gid = entity_global_id(entity)
        if gid:
            label = f"{label} (GlobalId {gid})"
    return label


_NAME_INDEX: dict[str, int] = {}  # IFC class -> position of its Name attribute (-1: none)


def _name_of(entity) -> str | None:
    """An entity's Name, through its attribute position (cached per class: labels are made by the thousand)."""
    try:
        cls = entity.is_a()
        index = _NAME_INDEX.get(cls)
        if index is None:
            try:
                index = int(entity.get_argument_index("Name"))
            except Exception:  # the class has no Name attribute
                index = -1
            _NAME_INDEX[cls] = index
        return entity.get_argument(index) if index >= 0 else None
    except Exception:  # not an ifcopenshell entity (a stand-in with a Name of its own)
        try:
            return getattr(entity, "Name", None)
        except Exception:
            return None


def entity_global_id(entity) -> str | None:
    """The GlobalId of an IfcRoot entity, None for other entities (profiles, points, units)."""
    try:
        cls = entity.is_a()
        rooted = _ROOTED.get(cls)
        if rooted is None:
            rooted = _ROOTED[cls] = bool(entity.is_a("IfcRoot"))
        if not rooted:
            return None
        gid = entity.get_argument(0)  # IfcRoot.GlobalId in every schema
    except Exception:  # not an ifcopenshell entity, or an unreadable attribute
        return None
    return str(gid) if gid else None


_ROOTED: dict[str, bool] = {}  # class name -> is an IfcRoot (the same in every schema)
