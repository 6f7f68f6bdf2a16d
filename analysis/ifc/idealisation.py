"""A member's own idealisation, read from the IFC file: axially rigid or extensible.

The whole-model option ``--inextensible`` (`AnalysisOptions.inextensible`)
makes every member axially rigid; a member's own property overrides it either
way. The property is ``AxiallyRigid`` (IfcBoolean, or IfcLogical TRUE/FALSE)
in the project property set ``PF_Idealisation`` (not a ``Pset_`` name: those
are the standard's own), attached to the analytical member
(IfcStructuralCurveMember) or to the physical element it stands for (IfcBeam,
IfcColumn, IfcMember, ...); the analytical member's own value wins.

- ``AxiallyRigid`` TRUE: the member is axially rigid in every analysis
  (`Frame.inextensible`).
- ``AxiallyRigid`` FALSE: the member keeps its axial stiffness even under
  ``--inextensible`` (`Frame.extensible`).
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import IfcInputError, entity_label
from ..model import Frame

__all__ = ["PSET_NAME", "PROPERTY_NAME", "axial_properties", "apply_axial_properties"]

PSET_NAME = "PF_Idealisation"
PROPERTY_NAME = "AxiallyRigid"


def axial_properties(ifc_file) -> dict[str, bool]:
    """``{GlobalId: rigid}`` of every object that carries ``PF_Idealisation.AxiallyRigid``.

    One pass over the file's property sets (no per-element look-up).

    Raises
    ------
    IfcInputError
        The property holds something other than TRUE or FALSE (the message
        names the property and its set).
    """
    out: dict[str, bool] = {}
    for pset in ifc_file.by_type("IfcPropertySet"):
        if pset.Name != PSET_NAME:
            continue
        value = _value(pset)
        if value is None:
            continue
        rels = list(getattr(pset, "DefinesOccurrence", None) or ()) + list(getattr(pset, "PropertyDefinitionOf", None) or ())
        for rel in rels:
            for obj in rel.RelatedObjects or ():
                gid = getattr(obj, "GlobalId", None)
                if gid:
                    out[str(gid)] = value
    return out


def _value(pset) -> bool | None:
    for prop in pset.HasProperties or ():
        if prop.Name != PROPERTY_NAME:
            continue
        raw: Any = getattr(prop, "NominalValue", None)
        value = getattr(raw, "wrappedValue", raw)
        if isinstance(value, bool):
            return value
        if value in ("TRUE", "FALSE", "T", "F"):  # IfcLogical read as text
            return value in ("TRUE", "T")
        if value is None or value in ("UNKNOWN", "U"):
            return None
        raise IfcInputError(f"{entity_label(prop)} in {entity_label(pset)}: {PROPERTY_NAME} must be TRUE or FALSE "
                            f"(an IfcBoolean), not {value!r}", entity_id=prop.id())
    return None


def apply_axial_properties(ifc_file, frame: Frame, physical: dict[str, str] | None = None) -> tuple[Frame, list[str]]:
    """``frame`` with the members' own ``AxiallyRigid`` values set, and a note saying which.

    ``physical`` maps member ids to the GlobalId of the physical element each
    stands for (the reader's ``IfcModel.physical``).
    """
    values = axial_properties(ifc_file)
    if not values or frame.n_members == 0:
        return frame, []
    physical = physical or {}
    rigid = frame.inextensible.copy()
    kept = frame.extensible.copy()
    for k, mid in enumerate(frame.member_ids):
        own = values.get(frame.member_sources[k] or "")
        if own is None:
            own = values.get(physical.get(mid, ""))
        if own is None:
            continue
        rigid[k], kept[k] = own, not own
    if np.array_equal(rigid, frame.inextensible) and np.array_equal(kept, frame.extensible):
        return frame, []
    parts = []
    for flags, words in ((rigid & ~frame.inextensible, "axially rigid in every analysis"),
                         (kept & ~frame.extensible, "kept extensible under --inextensible")):
        ids = [frame.member_ids[k] for k in np.flatnonzero(flags)]
        if ids:
            shown = ", ".join(ids[:10]) + (f" and {len(ids) - 10} more" if len(ids) > 10 else "")
            parts.append(f"{len(ids)} member{'s' if len(ids) != 1 else ''} {words} ({shown})")
    note = f"{PSET_NAME}.{PROPERTY_NAME}: " + "; ".join(parts) + "."
    return frame.replace(inextensible=rigid, extensible=kept), [note]
