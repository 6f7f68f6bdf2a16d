"""Which physical elements make the analytical frame, and the record of those left out.

`select_frame_elements` applies the documented default rule (below) or the
user's selector queries, and `LeftOut` is the note kept for every element
that was selected but could not become a member (route 2, `analysis.ifc.derive`).

Default selection
-----------------
``IfcBeam``, ``IfcColumn`` and ``IfcMember`` with their subtypes (the IFC4
``…StandardCase`` classes included), except

* an element whose ``LoadBearing`` is false in its common property set
  (``Pset_BeamCommon``, ``Pset_ColumnCommon``, ``Pset_MemberCommon``; the
  occurrence's value wins over its type object's). A missing value counts as
  load-bearing;
* an element whose predefined type (its own, else its type object's) names
  something that is not a frame member (`NOT_FRAME_TYPES`): a curtain-wall
  ``MULLION``, a stair ``STRINGER``, a plate ``STIFFENING_RIB``; a
  ``CORNICE`` beam; a ``PILASTER`` column. An ``IfcMember`` of type
  ``PLATE`` is kept: IFC defines it as the head or sole plate of a framed
  wall, which the studs bear on (a steel plate is an ``IfcPlate``, never
  selected);
* an element that is a part (``IfcRelAggregates`` or ``IfcRelNests``, at
  any depth) of an element that is not a structure: a railing, stair,
  ramp, curtain wall, window, door, shading device, furniture
  (`NOT_FRAME_WHOLES`).

``--select QUERY`` replaces the default rule: exactly the elements the
query finds (`ifcopenshell.util.selector.filter_elements` syntax, e.g.
``"IfcBeam, IfcColumn, Name=/B-.*/"``) are read, whatever their class.
``--exclude QUERY`` then removes the elements its query finds. Every
element set aside is counted in the notes, by reason.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Any

from ..errors import IfcInputError

__all__ = ["select_frame_elements", "parse_supports", "LeftOut", "left_out_message", "reason_kind",
           "FRAME_CLASSES", "NOT_FRAME_TYPES", "NOT_FRAME_WHOLES", "COMMON_PSETS"]

#: classes read as linear structural elements by default (subtypes included).
FRAME_CLASSES = ("IfcColumn", "IfcBeam", "IfcMember")

#: the common property set holding ``LoadBearing`` per class.
COMMON_PSETS = {"IfcBeam": "Pset_BeamCommon", "IfcColumn": "Pset_ColumnCommon", "IfcMember": "Pset_MemberCommon"}

#: predefined types (IFC enumerations, IFC2X3 to IFC4X3) that are not frame members.
NOT_FRAME_TYPES = {
    "IfcMember": ("MULLION", "STRINGER", "STIFFENING_RIB"),
    "IfcBeam": ("CORNICE",),
    "IfcColumn": ("PILASTER",),
}

#: an element that is part of one of these is not part of the frame.
NOT_FRAME_WHOLES = ("IfcRailing", "IfcStair", "IfcStairFlight", "IfcRamp", "IfcRampFlight", "IfcCurtainWall",
                    "IfcWindow", "IfcDoor", "IfcShadingDevice", "IfcFurnishingElement")


@dataclass(frozen=True, slots=True)
class LeftOut:
    """An element selected for the frame that could not become a member."""

    entity_id: int
    cls: str
    name: str
    global_id: str
    reason: str

    @property
    def label(self) -> str:
        return f"#{self.entity_id} {self.cls} '{self.name}'" if self.name else f"#{self.entity_id} {self.cls}"

    def __str__(self) -> str:
        return f"{self.label} ({self.global_id}): {self.reason}"


def left_out_message(left: list[LeftOut]) -> str:
    """One message listing every element left out (for ``--strict``)."""
    lines = [f"{len(left)} element(s) cannot become members of the analytical frame (--strict):"]
    lines += [f"  {x}" for x in left]
    return "\n".join(lines)


def reason_kind(reason: str) -> str:
    """The kind of a left-out reason (its text before the first colon), for counts."""
    return reason.split(":", 1)[0].strip()


def _types(ifc_file) -> dict[int, Any]:
    """Element id -> its type object (IfcRelDefinesByType), read once."""
    out: dict[int, Any] = {}
    for rel in ifc_file.by_type("IfcRelDefinesByType"):
        for o in rel.RelatedObjects or ():
            out[o.id()] = rel.RelatingType
    return out


def _predefined(element, types: dict[int, Any]) -> str | None:
    """The predefined type (the element's own, else its type object's; the user-defined text for USERDEFINED)."""
    pt = getattr(element, "PredefinedType", None)
    if pt == "USERDEFINED":
        text = getattr(element, "ObjectType", None)
        return str(text).upper() if text else None
    if pt and pt != "NOTDEFINED":
        return str(pt).upper()
    t = types.get(element.id())
    if t is None:
        return None
    tp = getattr(t, "PredefinedType", None)
    if tp == "USERDEFINED":
        text = getattr(t, "ElementType", None)
        return str(text).upper() if text else None
    return str(tp).upper() if tp and tp != "NOTDEFINED" else None


def _load_bearing(ifc_file, elements, types: dict[int, Any]) -> dict[int, bool]:
    """Element id -> LoadBearing from the class's common pset (occurrence over type), where given;
    ``types`` is `_types` of the file."""
    names = set(COMMON_PSETS.values())

    def value_of(pset) -> bool | None:
        if pset is None or not pset.is_a("IfcPropertySet") or pset.Name not in names:
            return None
        for prop in pset.HasProperties or ():
            if prop.Name == "LoadBearing" and prop.is_a("IfcPropertySingleValue") and prop.NominalValue is not None:
                v = prop.NominalValue.wrappedValue
                if isinstance(v, str):
                    return v.strip().upper() not in ("FALSE", ".F.", "F", "NO", "0", "UNKNOWN")
                return bool(v)
        return None

    wanted = {e.id() for e in elements}
    out: dict[int, bool] = {}
    # type objects first (the last of their psets that says), occurrences then overwrite
    by_type: dict[int, bool | None] = {}
    for e in elements:
        t = types.get(e.id())
        if t is None:
            continue
        if t.id() not in by_type:
            said = [v for v in map(value_of, getattr(t, "HasPropertySets", None) or ()) if v is not None]
            by_type[t.id()] = said[-1] if said else None
        v = by_type[t.id()]
        if v is not None:
            out[e.id()] = v
    for rel in ifc_file.by_type("IfcRelDefinesByProperties"):
        defs = rel.RelatingPropertyDefinition
        for pset in (defs if isinstance(defs, tuple) else (defs,)):
            if not hasattr(pset, "is_a"):
                continue
            v = value_of(pset)
            if v is None:
                continue
            for o in rel.RelatedObjects:
                if o.id() in wanted:
                    out[o.id()] = v
    return out


def _parents(ifc_file) -> dict[int, Any]:
    """Part id -> the whole it belongs to (IfcRelAggregates, IfcRelNests), read once."""
    out: dict[int, Any] = {}
    for cls in ("IfcRelAggregates", "IfcRelNests"):
        try:
            rels = ifc_file.by_type(cls)
        except RuntimeError:  # a schema without the relation
            continue
        for rel in rels:
            for o in rel.RelatedObjects or ():
                out.setdefault(o.id(), rel.RelatingObject)
    return out


def _whole(element, parents: dict[int, Any], cache: dict[int, str | None]) -> str | None:
    """Class of the non-structural whole (railing, stair…) the element is a part of, if any."""
    chain = []
    eid = element.id()
    found: str | None = None
    for _ in range(32):  # decomposition depth guard
        if eid in cache:
            found = cache[eid]
            break
        chain.append(eid)
        parent = parents.get(eid)
        if parent is None:
            break
        if any(parent.is_a(c) for c in NOT_FRAME_WHOLES):
            found = f"{parent.is_a()} #{parent.id()}"
            break
        eid = parent.id()
    for e_ in chain:
        cache[e_] = found
    return found


def _query(ifc_file, query: str, option: str) -> set:
    import ifcopenshell.util.selector as selector

    try:
        found = selector.filter_elements(ifc_file, query)
    except Exception as exc:  # lark parse errors and selector errors: the user's query is wrong
        text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise IfcInputError(f"{option} {query!r}: not a valid ifcopenshell selector query ({text})") from None
    return {e for e in found if hasattr(e, "is_a") and e.is_a("IfcProduct")}


def select_frame_elements(ifc_file, *, select: str | None = None, exclude: str | None = None,
                          ) -> tuple[list[Any], list[str]]:
    """The elements that make the frame, and notes on the ones set aside.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
    select : str, optional
        Selector query replacing the default rule (module docstring).
    exclude : str, optional
        Selector query whose elements are removed from the selection.

    Returns
    -------
    (list of entity_instance, list of str)
        The selected elements sorted by entity id, and plain-language notes.

    Raises
    ------
    IfcInputError
        A query that is not valid selector syntax.
    """
    notes: list[str] = []
    skipped: Counter[str] = Counter()
    if select:
        chosen = sorted(_query(ifc_file, select, "--select"), key=lambda e: e.id())
        notes.append(f"Elements selected by --select {select!r}: {len(chosen)}"
                     + (" (" + ", ".join(f"{v} {k}" for k, v in sorted(Counter(e.is_a() for e in chosen).items())) + ")"
                        if chosen else "") + ".")
    else:
        seen: set[int] = set()
        candidates = []
        for base in FRAME_CLASSES:
            for e in ifc_file.by_type(base):
                if e.id() not in seen:
                    seen.add(e.id())
                    candidates.append(e)
        types = _types(ifc_file)
        bearing = _load_bearing(ifc_file, candidates, types)
        parents = _parents(ifc_file)
        wholes: dict[int, str | None] = {}
        chosen = []
        for e in sorted(candidates, key=lambda e: e.id()):
            base = next(b for b in FRAME_CLASSES if e.is_a(b))
            if bearing.get(e.id()) is False:
                skipped[f"{base} with LoadBearing false in {COMMON_PSETS[base]}"] += 1
                continue
            pt = _predefined(e, types)
            if pt in NOT_FRAME_TYPES[base]:
                skipped[f"{base} of predefined type {pt}"] += 1
                continue
            whole = _whole(e, parents, wholes)
            if whole is not None:
                skipped[f"{base} that is part of an {whole.split(' ', 1)[0]}"] += 1
                continue
            chosen.append(e)
    if exclude:
        gone = _query(ifc_file, exclude, "--exclude")
        before = len(chosen)
        chosen = [e for e in chosen if e not in gone]
        if before - len(chosen):
            skipped[f"excluded by --exclude {exclude!r}"] += before - len(chosen)
    if skipped:
        notes.append("Not read as frame members (by the selection rule): "
                     + "; ".join(f"{v} {k}" for k, v in sorted(skipped.items())) + ".")
    return chosen, notes


def parse_supports(spec: str, default_kind: str = "fixed") -> tuple[str, str]:
    """``QUERY[:fixed|pinned]`` -> (query, kind)."""
    text = spec.strip()
    kind = default_kind
    head, sep, tail = text.rpartition(":")
    if sep and tail.strip().lower() in ("fixed", "pinned"):
        text, kind = head.strip(), tail.strip().lower()
    if not text:
        raise IfcInputError(f"--supports {spec!r}: no selector query before the support kind")
    return text, kind
