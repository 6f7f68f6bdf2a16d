"""Write analysis results back into a copy of the source IFC file.

The input is never modified: the source is opened, changed in memory and
written to a temporary file in the output's folder, which is then moved into
place with ``os.replace`` (a crash leaves no half-written output). The output
keeps the input's schema and units (SI values are converted back with
`analysis.units.from_si`).

What is written (everything tagged so that a later run can find and replace it):

* one ``IfcStructuralResultGroup`` per load case and combination
  (``Description = 'plumbframe'``, FIRST_ORDER_THEORY, ``ResultForLoadGroup``
  = the case's ``IfcStructuralLoadGroup`` where the input has one,
  ``IsLinear = True``), listed in the analysis model's ``HasResults``;
* ``IfcStructuralPointReaction`` with an ``IfcStructuralLoadSingleForce`` on
  every supported connection (reactions, global axes) and with an
  ``IfcStructuralLoadSingleDisplacement`` on every connection (global axes);
* per curve member an ``IfcStructuralCurveReaction`` (DISCRETE, LOCAL_COORDS)
  whose ``IfcStructuralLoadConfiguration`` holds the internal forces
  N, Vy, Vz, T, My, Mz as ForceX, ForceY, ForceZ, MomentX, MomentY, MomentZ
  of one ``IfcStructuralLoadSingleForce`` per station (``Locations``: the
  distance from the member's start), and a second one with the deflections
  dy, dz of the member axis (``IfcStructuralLoadSingleDisplacement``). IFC2X3
  has neither entity: there the member forces go to property sets only;
* where the input had no structural analysis model (route 'physical'), the
  derived analytical model: ``IfcStructuralAnalysisModel`` (Description
  'plumbframe derived analytical model'), point connections with boundary
  conditions, curve members with ``Axis`` and edge topology,
  ``IfcRelConnectsStructuralMember`` (with end releases), linked to the
  physical elements by ``IfcRelAssignsToProduct``;
* property sets ``PF_MemberForces`` (physical elements and analytical
  members), ``PF_SupportReactions`` (supported connections) and
  ``PF_AnalysisSummary`` (the analysis model; also the IfcProject on route
  'physical').

Entities are created with ``create_entity`` (``ifcopenshell.api`` calls are
much slower per entity).
"""
from __future__ import annotations

import datetime as _dt
import logging
import math
import os
from collections import defaultdict
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import AnalysisError, IfcInputError
from ..model import ACTION_NAMES, REACTION_NAMES

if TYPE_CHECKING:  # pragma: no cover
    pass

__all__ = ["WriteSummary", "write_results", "remove_earlier_results", "TAG", "DERIVED_TAG", "idealisation_text",
           "units_text"]

log = logging.getLogger(__name__)

#: Description of every result group (and reaction) plumbframe writes.
TAG = "plumbframe"
#: Description of the analytical model plumbframe derives from physical elements.
DERIVED_TAG = "plumbframe derived analytical model"
_PSET_PREFIX = "PF_"

#: Entity types that are never deleted when an earlier run is cleaned up, even when unreferenced.
_PROTECTED = ("IfcOwnerHistory", "IfcRepresentationContext", "IfcMaterialDefinition", "IfcMaterialUsageDefinition",
              "IfcMaterial", "IfcMaterialProfileSet", "IfcMaterialProfileSetUsage", "IfcProfileDef", "IfcUnit",
              "IfcNamedUnit", "IfcUnitAssignment", "IfcPerson", "IfcOrganization", "IfcPersonAndOrganization",
              "IfcApplication")


@dataclass(frozen=True)
class WriteSummary:
    """What `write_results` wrote."""

    path: str
    schema: str
    route: str
    result_groups: int = 0
    point_reactions: int = 0
    curve_reactions: int = 0
    property_sets: int = 0
    derived_model: bool = False
    removed_entities: int = 0
    notes: tuple[str, ...] = ()


# --------------------------------------------------------------------------- text helpers
_LENGTH_NAMES = {1.0: "m", 1e-3: "mm", 1e-2: "cm", 1e-1: "dm", 0.3048: "ft", 0.0254: "in"}
_FORCE_NAMES = {1.0: "N", 1e3: "kN", 1e6: "MN", 4.4482216152605: "lbf"}
_ANGLE_NAMES = {1.0: "rad", math.pi / 180: "deg"}


def _unit_name(scale: float, names: dict[float, str], si: str) -> str:
    for value, name in names.items():
        if math.isclose(scale, value, rel_tol=1e-9):
            return name
    return f"{scale:.6g} {si}"


def units_text(units) -> str:
    """The file's units in words, e.g. ``length mm, force kN, moment kN*m, angle rad``."""
    length = _unit_name(units.length, _LENGTH_NAMES, "m")
    force = _unit_name(units.force, _FORCE_NAMES, "N")
    if math.isclose(units.moment, units.force * units.length, rel_tol=1e-9):
        moment = f"{force}*{length}"
    else:
        moment = f"{units.moment:.6g} N*m"
    angle = _unit_name(units.angle, _ANGLE_NAMES, "rad")
    return f"length {length}, force {force}, moment {moment}, angle {angle}"


def idealisation_text(results) -> str:
    """The idealisation of an analysis in words (for property sets, summaries and reports)."""
    opt = results.options
    parts = ["plane frame, 3 unknowns per joint" if results.dimension == 2 else "space frame, 6 unknowns per joint"]
    parts.append("members axially rigid" if opt.inextensible else "axial deformation included")
    parts.append("shear deformation included" if opt.shear else "Euler-Bernoulli members (no shear deformation)")
    if opt.condense_pinned:
        parts.append("rotations at pinned ends condensed out")
    parts.append("second-order elastic (P-Delta and P-delta)" if getattr(results, "theory", "") == "second-order"
                 else "first-order linear elastic")
    if results.solver:
        parts.append(f"solver {results.solver}")
    return "; ".join(parts)


# --------------------------------------------------------------------------- entry point
def write_results(source_path, out_path, model, results, indeterminacy=None, *, overwrite: bool = False,
                  date: _dt.datetime | None = None, progress=None) -> WriteSummary:
    """Write ``results`` into a copy of ``source_path`` at ``out_path``.

    Parameters
    ----------
    source_path : the IFC file the model was read from (never modified).
    out_path : where the copy with results goes (same schema and units).
    model : the reader's ``IfcModel`` (``frame``, ``route``, ``units``, ``notes``).
    results : `analysis.results.Results` of ``model.frame``.
    indeterminacy : an ``Indeterminacy`` (or its ``to_dict()``), optional.
    overwrite : allow ``out_path`` to be the source file itself.
    date : the analysis date written to the property sets (default: now, UTC).
    progress : optional callable(step: str).

    Returns
    -------
    WriteSummary

    Raises
    ------
    AnalysisError
        ``out_path`` is the input (without ``overwrite``) or cannot be written.
    IfcInputError
        The source cannot be opened, or an entity the frame refers to is missing.
    """
    say = progress or (lambda step: None)
    source_path, out_path = os.fspath(source_path), os.fspath(out_path)
    if not os.path.isfile(source_path):
        raise AnalysisError(f"{source_path}: no such file")
    if _same_file(source_path, out_path) and not overwrite:
        raise AnalysisError(f"{out_path}: refusing to overwrite the input file (pass overwrite=True to allow it)")
    folder = os.path.dirname(os.path.abspath(out_path))
    from ..fileio import is_special_file

    if not is_special_file(out_path):  # a device or pipe is written as a stream, not replaced
        if not os.path.isdir(folder):
            raise AnalysisError(f"{out_path}: the folder {folder} does not exist")
        if not os.access(folder, os.W_OK):
            raise AnalysisError(f"{out_path}: the folder {folder} is not writable")
    say("opening the source")
    from .source import open_source, verify_unchanged

    source = open_source(source_path, checks=False)
    f = source.file
    read_stamp = getattr(model, "source_stamp", None)
    if read_stamp is not None:  # the file may have been saved again since it was read and analysed
        verify_unchanged(source_path, read_stamp, source.stamp)
    w = _Writer(f, model, results, indeterminacy, date or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0))
    say("removing earlier results")
    w.removed = remove_earlier_results(f, keep_derived=getattr(model, "route", "structural") == "structural")
    say("writing results")
    w.run()
    say("saving")
    _atomic_write(f, out_path)
    return w.summary(out_path)


def _same_file(a: str, b: str) -> bool:
    if os.path.exists(b):
        try:
            return os.path.samefile(a, b)
        except OSError:
            return False
    return os.path.abspath(a) == os.path.abspath(b)


def _atomic_write(f, out_path: str) -> None:
    suffix = os.path.splitext(out_path)[1] or ".ifc"
    from ..fileio import atomic_write

    atomic_write(out_path, f.write, suffix=suffix)


# --------------------------------------------------------------------------- removal of earlier runs
def remove_earlier_results(f, *, keep_derived: bool = False) -> int:
    """Remove everything an earlier plumbframe run wrote into ``f``; returns how many entities went.

    Result groups tagged 'plumbframe' with their reactions, loads and
    relationships; property sets named ``PF_*``; and (unless
    ``keep_derived``) the derived analytical model with its items.
    """
    roots: list = []
    for group in f.by_type("IfcStructuralResultGroup"):
        if group.Description != TAG:
            continue
        roots.append(group)
        for rel in group.IsGroupedBy or ():
            roots.append(rel)
            for obj in rel.RelatedObjects:
                if obj.is_a("IfcStructuralReaction") and obj.Description == TAG:
                    roots.append(obj)
                    roots.extend(obj.AssignedToStructuralItem or ())
    ours = set(roots)
    for model in f.by_type("IfcStructuralAnalysisModel"):
        if model.HasResults:
            kept = [g for g in model.HasResults if g not in ours]
            if len(kept) != len(model.HasResults):
                model.HasResults = kept or None
    for rel in f.by_type("IfcRelDefinesByProperties"):
        pset = rel.RelatingPropertyDefinition
        if pset is not None and not isinstance(pset, tuple) and pset.is_a("IfcPropertySet") \
                and (pset.Name or "").startswith(_PSET_PREFIX):
            roots += [rel, pset, *pset.HasProperties]
    if not keep_derived:
        for model in f.by_type("IfcStructuralAnalysisModel"):
            if model.Description == DERIVED_TAG:
                roots += _derived_model_entities(model)
    return _remove_all(f, roots)


def _derived_model_entities(model) -> list:
    out = [model]
    for rel in model.IsGroupedBy or ():
        out.append(rel)
        for item in rel.RelatedObjects:
            if not item.is_a("IfcStructuralItem"):
                continue
            out.append(item)
            for attr in ("ConnectedBy", "ConnectsStructuralMembers", "HasAssignments", "HasAssociations",
                         "AssignedStructuralActivity"):
                for r in getattr(item, attr, None) or ():
                    if r.is_a("IfcRelAssignsToGroup") and r.RelatingGroup != model:
                        continue  # e.g. a load group of the user's: leave it
                    out.append(r)
    return out


def _remove_all(f, roots: list) -> int:
    """Delete ``roots`` and every entity they alone reference (never an IfcRoot outside ``roots``)."""
    if not roots:
        return 0
    doomed: dict[int, Any] = {}
    for e in roots:
        doomed[e.id()] = e
    # forward closure: non-rooted entities only referenced from within the doomed set
    frontier = list(doomed.values())
    candidates: dict[int, Any] = {}
    while frontier:
        e = frontier.pop()
        for sub in f.traverse(e, max_levels=1)[1:]:
            if not sub.id() or sub.id() in doomed or sub.id() in candidates:
                continue
            if sub.is_a("IfcRoot") or any(sub.is_a(t) for t in _PROTECTED):
                continue
            candidates[sub.id()] = sub
            frontier.append(sub)
    # keep a candidate when something outside the doomed set refers to it (iterate to a fixed point)
    changed = True
    everything = {**doomed, **candidates}
    while changed:
        changed = False
        for cid in list(candidates):
            ent = candidates[cid]
            if any(ref.id() not in everything for ref in f.get_inverse(ent)):
                del candidates[cid]
                del everything[cid]
                changed = True
    count = len(everything)
    f.batch()
    for e in list(doomed.values()) + list(candidates.values()):
        f.remove(e)
    f.unbatch()
    return count


# --------------------------------------------------------------------------- the writer
@dataclass
class _Target:
    """An IFC entity that receives a member property set, and the frame members that make it up."""

    entity: Any
    members: list[int] = field(default_factory=list)


class _Writer:
    def __init__(self, f, model, results, indeterminacy, date: _dt.datetime):
        from ..units import unit_scales

        self.f = f
        self.model = model
        self.results = results
        self.frame = results.frame
        self.schema = f.schema
        self.ifc2x3 = f.schema == "IFC2X3"
        self.units = getattr(model, "units", None) or unit_scales(f)
        self.route = getattr(model, "route", "structural")
        self.ind = indeterminacy.to_dict() if hasattr(indeterminacy, "to_dict") else indeterminacy
        self.date = date
        self.removed = 0
        self.notes: list[str] = []
        self.owner = self._owner_history()
        self.counts: defaultdict[str, int] = defaultdict(int)
        self._properties: dict[tuple[str, str, Any], Any] = {}  # shared IfcPropertySingleValue by content
        self.derived = False
        self._by_guid: dict[str, Any] = {}

    # -- small factories -------------------------------------------------------
    def _guid(self) -> str:
        import ifcopenshell.guid

        return ifcopenshell.guid.new()

    def _root(self, ifc_class: str, **attrs):
        return self.f.create_entity(ifc_class, GlobalId=self._guid(), OwnerHistory=self.owner, **attrs)

    def _owner_history(self):
        histories = self.f.by_type("IfcOwnerHistory")
        if histories:
            return histories[0]
        if not self.ifc2x3:
            return None
        f = self.f
        person = f.create_entity("IfcPerson", FamilyName="plumbframe")
        org = f.create_entity("IfcOrganization", Name="plumbframe")
        pao = f.create_entity("IfcPersonAndOrganization", ThePerson=person, TheOrganization=org)
        from .. import __version__

        app = f.create_entity("IfcApplication", ApplicationDeveloper=org, Version=__version__,
                              ApplicationFullName="plumbframe", ApplicationIdentifier="plumbframe")
        return f.create_entity("IfcOwnerHistory", OwningUser=pao, OwningApplication=app, ChangeAction="ADDED",
                               CreationDate=int(self.date.timestamp()))

    def entity(self, guid: str | None):
        if not guid:
            return None
        if guid not in self._by_guid:
            try:
                self._by_guid[guid] = self.f.by_guid(guid)
            except RuntimeError:
                self._by_guid[guid] = None
        return self._by_guid[guid]

    # -- conversions ------------------------------------------------------------
    def _force(self, v):
        return float(v) / self.units.force

    def _moment(self, v):
        return float(v) / self.units.moment

    def _length(self, v):
        return float(v) / self.units.length

    def _angle(self, v):
        return float(v) / self.units.angle

    def _active(self) -> list[int]:
        return sorted(self.results.active_components)

    # -- main -------------------------------------------------------------------
    def run(self) -> None:
        frame = self.frame
        if self.route == "structural":
            self.analysis_model = self._find_analysis_model()
            self.node_items = [self.entity(g) for g in frame.node_sources]
            self.member_items = [self.entity(g) for g in frame.member_sources]
            missing = [frame.member_labels[k] for k, e in enumerate(self.member_items) if e is None]
            if missing:
                raise IfcInputError(f"member {missing[0]}: its source entity is not in the file")
            self.physical = self._physical_of_structural()
        else:
            self.analysis_model = self._derive_model()
            self.derived = True
            self.physical = self._physical_targets()
        self.load_groups = self._load_groups()
        self._write_result_groups()
        self._write_member_psets()
        self._write_support_psets()
        self._write_summary_pset()
        self._write_stability_pset()

    def summary(self, path: str) -> WriteSummary:
        return WriteSummary(path=path, schema=self.schema, route=self.route,
                            result_groups=self.counts["groups"], point_reactions=self.counts["point"],
                            curve_reactions=self.counts["curve"], property_sets=self.counts["psets"],
                            derived_model=self.derived, removed_entities=self.removed, notes=tuple(self.notes))

    # -- analysis model ---------------------------------------------------------
    def _find_analysis_model(self):
        for item in self._items_in_order():
            for rel in getattr(item, "HasAssignments", None) or ():
                if rel.is_a("IfcRelAssignsToGroup") and rel.RelatingGroup.is_a("IfcStructuralAnalysisModel"):
                    return rel.RelatingGroup
        for name, guid in getattr(self.model, "analysis_models", None) or ():
            ent = self.entity(guid)
            if ent is not None:
                return ent
        models = self.f.by_type("IfcStructuralAnalysisModel")
        if not models:
            raise IfcInputError("the file has no IfcStructuralAnalysisModel to attach results to")
        return models[0]

    def _items_in_order(self):
        for g in self.frame.member_sources:
            e = self.entity(g)
            if e is not None:
                yield e

    def _physical_of_structural(self) -> dict[int, _Target]:
        """Physical elements linked to the analytical members (IfcRelAssignsToProduct, either direction)."""
        targets: dict[int, _Target] = {}
        for k, item in enumerate(self.member_items):
            for phys in _linked_physical(item):
                targets.setdefault(phys.id(), _Target(phys)).members.append(k)
        return targets

    def _physical_targets(self) -> dict[int, _Target]:
        targets: dict[int, _Target] = {}
        for k, guid in enumerate(self.frame.member_sources):
            ent = self.entity(guid)
            if ent is not None:
                targets.setdefault(ent.id(), _Target(ent)).members.append(k)
        return targets

    # -- derived model (route 'physical') ----------------------------------------
    def _context(self):
        contexts = [c for c in self.f.by_type("IfcGeometricRepresentationSubContext")
                    if c.ContextIdentifier == "Reference"]
        if contexts:
            return contexts[0]
        model_ctx = [c for c in self.f.by_type("IfcGeometricRepresentationContext", include_subtypes=False)
                     if c.ContextType == "Model"]
        if model_ctx:
            return model_ctx[0]
        contexts = self.f.by_type("IfcGeometricRepresentationContext")
        if not contexts:
            raise IfcInputError("the file has no IfcGeometricRepresentationContext")
        return contexts[0]

    def _point(self, xyz):
        return self.f.create_entity("IfcCartesianPoint", Coordinates=[self._length(v) for v in xyz])

    def _direction(self, v):
        return self.f.create_entity("IfcDirection", DirectionRatios=[float(round(c, 12)) + 0.0 for c in v])

    def _derive_model(self):
        f, frame = self.f, self.frame
        placement = f.create_entity("IfcLocalPlacement", RelativePlacement=f.create_entity(
            "IfcAxis2Placement3D", Location=f.create_entity("IfcCartesianPoint", Coordinates=[0.0, 0.0, 0.0])))
        ctx = self._context()
        attrs = dict(Name=(frame.name or "plumbframe") + " (analytical, derived)", Description=DERIVED_TAG,
                     PredefinedType="LOADING_3D")
        if not self.ifc2x3:
            attrs["SharedPlacement"] = placement
        amodel = self._root("IfcStructuralAnalysisModel", **attrs)
        vertices = []
        self.node_items = []
        for i, nid in enumerate(frame.node_ids):
            vp = f.create_entity("IfcVertexPoint", VertexGeometry=self._point(frame.nodes[i]))
            vertices.append(vp)
            rep = f.create_entity("IfcProductDefinitionShape", Representations=[f.create_entity(
                "IfcTopologyRepresentation", ContextOfItems=ctx, RepresentationIdentifier="Reference",
                RepresentationType="Vertex", Items=[vp])])
            cond = self._node_condition(i)
            self.node_items.append(self._root("IfcStructuralPointConnection", Name=nid, Description=TAG,
                                              ObjectPlacement=placement, Representation=rep, AppliedCondition=cond))
        R = self.results.R
        self.member_items = []
        for k, mid in enumerate(frame.member_ids):
            a, b = frame.members[k]
            edge = f.create_entity("IfcEdge", EdgeStart=vertices[a], EdgeEnd=vertices[b])
            rep = f.create_entity("IfcProductDefinitionShape", Representations=[f.create_entity(
                "IfcTopologyRepresentation", ContextOfItems=ctx, RepresentationIdentifier="Reference",
                RepresentationType="Edge", Items=[edge])])
            attrs = dict(Name=mid, Description=TAG, ObjectPlacement=placement, Representation=rep,
                         PredefinedType="PIN_JOINED_MEMBER" if frame.truss[k] else "RIGID_JOINED_MEMBER")
            if not self.ifc2x3:
                attrs["Axis"] = self._direction(R[k][2])
            member = self._root("IfcStructuralCurveMember", **attrs)
            self.member_items.append(member)
            for end, node in ((0, a), (1, b)):
                rel_cond = None
                if frame.releases[k, end].any():
                    rel_cond = self._release_condition(frame.releases[k, end])
                self._root("IfcRelConnectsStructuralMember", Name=f"{mid}-{frame.node_ids[node]}",
                           RelatingStructuralMember=member, RelatedStructuralConnection=self.node_items[node],
                           AppliedCondition=rel_cond)
        self._root("IfcRelAssignsToGroup", RelatedObjects=self.node_items + self.member_items,
                   RelatingGroup=amodel)
        by_physical: dict[int, list] = defaultdict(list)
        phys_entities = {}
        for k, guid in enumerate(frame.member_sources):
            ent = self.entity(guid)
            if ent is not None and ent.is_a("IfcProduct"):
                by_physical[ent.id()].append(self.member_items[k])
                phys_entities[ent.id()] = ent
        for pid, items in by_physical.items():
            self._root("IfcRelAssignsToProduct", RelatedObjects=items, RelatingProduct=phys_entities[pid])
        self._associate_materials(phys_entities, by_physical)
        return amodel

    def _associate_materials(self, phys_entities, by_physical) -> None:
        by_material: dict[int, tuple[Any, list]] = {}
        for pid, items in by_physical.items():
            for rel in getattr(phys_entities[pid], "HasAssociations", None) or ():
                if rel.is_a("IfcRelAssociatesMaterial"):
                    mat = rel.RelatingMaterial
                    by_material.setdefault(mat.id(), (mat, []))[1].extend(items)
                    break
        for mat, items in by_material.values():
            self._root("IfcRelAssociatesMaterial", Name="plumbframe", RelatedObjects=items, RelatingMaterial=mat)

    def _stiffness_value(self, fixed: bool, spring: float, rotational: bool):
        f = self.f
        if self.ifc2x3:  # IFC2X3: a number; -1 is the customary value for a rigid restraint
            if fixed:
                return -1.0
            scale = self.units.rotational_stiffness if rotational else self.units.linear_stiffness
            return float(spring) / scale if spring > 0 else 0.0
        if fixed:
            return f.create_entity("IfcBoolean", True)
        if spring > 0:
            scale = self.units.rotational_stiffness if rotational else self.units.linear_stiffness
            cls = "IfcRotationalStiffnessMeasure" if rotational else "IfcLinearStiffnessMeasure"
            return f.create_entity(cls, float(spring) / scale)
        return f.create_entity("IfcBoolean", False)

    def _node_condition(self, i: int):
        frame = self.frame
        if not (frame.restraints[i].any() or (frame.springs[i] > 0).any()):
            return None
        names = (("LinearStiffnessX", "LinearStiffnessY", "LinearStiffnessZ") if self.ifc2x3 else
                 ("TranslationalStiffnessX", "TranslationalStiffnessY", "TranslationalStiffnessZ")) + \
            ("RotationalStiffnessX", "RotationalStiffnessY", "RotationalStiffnessZ")
        values = {n: self._stiffness_value(bool(frame.restraints[i, c]), float(frame.springs[i, c]), c >= 3)
                  for c, n in enumerate(names)}
        return self.f.create_entity("IfcBoundaryNodeCondition", Name="support", **values)

    def _release_condition(self, released):
        names = (("LinearStiffnessX", "LinearStiffnessY", "LinearStiffnessZ") if self.ifc2x3 else
                 ("TranslationalStiffnessX", "TranslationalStiffnessY", "TranslationalStiffnessZ")) + \
            ("RotationalStiffnessX", "RotationalStiffnessY", "RotationalStiffnessZ")
        values = {n: self._stiffness_value(not bool(released[c]), 0.0, c >= 3) for c, n in enumerate(names)}
        return self.f.create_entity("IfcBoundaryNodeCondition", Name="end release", **values)

    # -- load groups ------------------------------------------------------------
    def _load_groups(self) -> dict[str, Any]:
        frame = self.frame
        groups = {}
        by_name: dict[str | None, Any] = {}
        for g in self.f.by_type("IfcStructuralLoadGroup"):
            by_name.setdefault(g.Name, g)
        for item in (*frame.load_cases, *frame.combinations):
            ent = self.entity(getattr(item, "source", None))
            if ent is None or not ent.is_a("IfcStructuralLoadGroup"):
                ent = by_name.get(item.name)
            groups[item.name] = ent
        return groups

    # -- result groups ----------------------------------------------------------
    def _write_result_groups(self) -> None:
        f, frame, res = self.f, self.frame, self.results
        active = self._active()
        supported = np.flatnonzero(frame.restraints.any(axis=1) | (frame.springs > 0).any(axis=1))
        groups = []
        curve_ok = not self.ifc2x3
        if not curve_ok:
            self.notes.append("IFC2X3 has no curve reactions: member internal forces are written to the "
                              "PF_MemberForces property sets only")
        chains = self._member_chains() if curve_ok else {}
        second = getattr(res, "theory", "") == "second-order"
        theory, linear = ("SECOND_ORDER_THEORY", False) if second else ("FIRST_ORDER_THEORY", True)
        for name, cr in res.cases.items():
            group = self._root("IfcStructuralResultGroup", Name=name, Description=TAG,
                               TheoryType=theory, ResultForLoadGroup=self.load_groups.get(name),
                               IsLinear=linear)
            groups.append(group)
            self.counts["groups"] += 1
            reactions = []
            for i in supported.tolist():
                item = self.node_items[i]
                if item is None:
                    continue
                load = f.create_entity("IfcStructuralLoadSingleForce", Name=f"{name}: reaction",
                                       **self._six(cr.reactions[i], active, ("ForceX", "ForceY", "ForceZ",
                                                                             "MomentX", "MomentY", "MomentZ"),
                                                   force=True))
                reactions.append(self._reaction("IfcStructuralPointReaction", f"{frame.node_ids[i]} reaction",
                                                load, "GLOBAL_COORDS", item))
            for i in range(frame.n_nodes):
                item = self.node_items[i]
                if item is None:
                    continue
                load = f.create_entity("IfcStructuralLoadSingleDisplacement", Name=f"{name}: displacement",
                                       **self._six(cr.displacements[i], active,
                                                   ("DisplacementX", "DisplacementY", "DisplacementZ",
                                                    "RotationalDisplacementRX", "RotationalDisplacementRY",
                                                    "RotationalDisplacementRZ"), force=False))
                reactions.append(self._reaction("IfcStructuralPointReaction", f"{frame.node_ids[i]} displacement",
                                                load, "GLOBAL_COORDS", item))
            self.counts["point"] += len(reactions)
            for item, segments in chains.items():
                reactions += self._curve_reactions(name, item, segments)
            if reactions:
                self._root("IfcRelAssignsToGroup", RelatedObjects=reactions, RelatingGroup=group)
        missing = sum(1 for e in self.node_items if e is None)
        if missing:
            self.notes.append(f"{missing} node(s) have no IfcStructuralPointConnection in the file: "
                              "their displacements and reactions are in the results JSON only")
        existing = [g for g in (self.analysis_model.HasResults or ())]
        self.analysis_model.HasResults = existing + groups if (existing or groups) else None

    def _six(self, values, active, names, force: bool) -> dict:
        out = {}
        for c, n in enumerate(names):
            if c not in active:
                continue
            if force:
                out[n] = self._force(values[c]) if c < 3 else self._moment(values[c])
            else:
                out[n] = self._length(values[c]) if c < 3 else self._angle(values[c])
        return out

    def _reaction(self, ifc_class, name, load, coords, item, **extra):
        r = self._root(ifc_class, Name=name, Description=TAG, AppliedLoad=load, GlobalOrLocal=coords, **extra)
        self._root("IfcRelConnectsStructuralActivity", RelatingElement=item, RelatedStructuralActivity=r)
        return r

    def _member_chains(self) -> dict[Any, list[tuple[int, float]]]:
        """Per IFC curve member: its frame members with their start distance along it (m)."""
        frame = self.frame
        groups: dict[int, list[int]] = defaultdict(list)
        items = {}
        for k, item in enumerate(self.member_items):
            if item is not None:
                groups[item.id()].append(k)
                items[item.id()] = item
        out = {}
        L = self.results.L
        for iid, ks in groups.items():
            if len(ks) == 1:
                out[items[iid]] = [(ks[0], 0.0)]
                continue
            starts = {int(frame.members[k, 0]): k for k in ks}
            ends = {int(frame.members[k, 1]) for k in ks}
            first = [k for k in ks if int(frame.members[k, 0]) not in ends]
            chain, pos = [], 0.0
            cur: int | None = first[0] if first else ks[0]
            seen: set[int] = set()
            while cur is not None and cur not in seen:
                seen.add(cur)
                chain.append((cur, pos))
                pos += float(L[cur])
                cur = starts.get(int(frame.members[cur, 1]))
            if len(chain) != len(ks):  # not a simple chain: fall back to member order
                chain, pos = [], 0.0
                for k in ks:
                    chain.append((k, pos))
                    pos += float(L[k])
            out[items[iid]] = chain
        return out

    def _curve_reactions(self, case: str, item, segments) -> list:
        f, res = self.f, self.results
        locations, forces, defl = [], [], []
        for k, offset in segments:
            dg = res.diagram(case, k)
            for s, F, d in zip(dg.stations, dg.forces, dg.deflections):
                locations.append([self._length(offset + s)])
                forces.append(f.create_entity(
                    "IfcStructuralLoadSingleForce", ForceX=self._force(F[0]), ForceY=self._force(F[1]),
                    ForceZ=self._force(F[2]), MomentX=self._moment(F[3]), MomentY=self._moment(F[4]),
                    MomentZ=self._moment(F[5])))
                defl.append(f.create_entity("IfcStructuralLoadSingleDisplacement", DisplacementY=self._length(d[0]),
                                            DisplacementZ=self._length(d[1])))
        name = item.Name or self.frame.member_ids[segments[0][0]]
        out = []
        for what, values in (("internal forces", forces), ("deflections", defl)):
            config = f.create_entity("IfcStructuralLoadConfiguration", Name=f"{case}: {what}", Values=values,
                                     Locations=[list(x) for x in locations])
            out.append(self._reaction("IfcStructuralCurveReaction", f"{name} {what}", config, "LOCAL_COORDS", item,
                                      PredefinedType="DISCRETE"))
        self.counts["curve"] += len(out)
        return out

    # -- property sets ----------------------------------------------------------
    def _value(self, ifc_type: str, v):
        if ifc_type == "IfcDateTime" and self.ifc2x3:
            ifc_type = "IfcLabel"
        return self.f.create_entity(ifc_type, v)

    def _property(self, pname: str, t: str, v: Any):
        """One IfcPropertySingleValue, shared by every property set that states the same thing.

        An IfcProperty may belong to several property sets; sharing the
        repeated ones (date, version, units, idealisation, governing case
        names) halves the entities a large model gets.
        """
        key = (pname, t, v)
        prop = self._properties.get(key)
        if prop is None:
            prop = self.f.create_entity("IfcPropertySingleValue", Name=pname, NominalValue=self._value(t, v))
            self._properties[key] = prop
        return prop

    def _pset(self, name: str, objects: list, props: list[tuple[str, str, Any]]) -> None:
        values = [self._property(pname, t, v) for pname, t, v in props if v is not None]
        pset = self._root("IfcPropertySet", Name=name, Description=TAG, HasProperties=values)
        self._root("IfcRelDefinesByProperties", RelatedObjects=objects, RelatingPropertyDefinition=pset)
        self.counts["psets"] += 1

    def _common(self) -> list[tuple[str, str, Any]]:
        from .. import __version__

        return [("AnalysisDate", "IfcDateTime", self.date.strftime("%Y-%m-%dT%H:%M:%S")),
                ("ProgramVersion", "IfcLabel", f"plumbframe {__version__}"),
                ("Units", "IfcLabel", units_text(self.units)),
                ("Idealisation", "IfcText", idealisation_text(self.results))]

    def member_extremes(self, members: list[int]) -> list[tuple[str, str, Any]]:
        """Property list of PF_MemberForces for the frame members ``members`` (file units)."""
        res = self.results
        lo = np.full(6, np.inf)
        hi = np.full(6, -np.inf)
        lo_case = [""] * 6
        hi_case = [""] * 6
        defl, defl_case, ratio, disp, disp_case = 0.0, "", math.inf, 0.0, ""
        for name in res.cases:
            for k in members:
                dg = res.diagram(name, k)
                mn, mx = dg.forces.min(axis=0), dg.forces.max(axis=0)
                for a in range(6):
                    if mn[a] < lo[a]:
                        lo[a], lo_case[a] = mn[a], name
                    if mx[a] > hi[a]:
                        hi[a], hi_case[a] = mx[a], name
                d_rel, d_abs = _relative_deflection(dg.stations, dg.deflections, float(res.L[k]))
                if d_rel > defl:
                    defl, defl_case = d_rel, name
                if d_rel > 0:
                    ratio = min(ratio, float(res.L[k]) / d_rel)
                if d_abs > disp:
                    disp, disp_case = d_abs, name
        props = []
        for a, action in enumerate(ACTION_NAMES):
            if not np.isfinite(lo[a]):
                continue
            typ = "IfcForceMeasure" if a < 3 else "IfcTorqueMeasure"
            conv = self._force if a < 3 else self._moment
            props += [(f"{action}Min", typ, conv(lo[a])), (f"{action}MinCase", "IfcLabel", lo_case[a]),
                      (f"{action}Max", typ, conv(hi[a])), (f"{action}MaxCase", "IfcLabel", hi_case[a])]
        props += [("MaxDeflection", "IfcLengthMeasure", self._length(defl)),
                  ("MaxDeflectionCase", "IfcLabel", defl_case or None),
                  ("SpanToDeflection", "IfcReal", float(ratio) if math.isfinite(ratio) else None),
                  ("MaxAxisDisplacement", "IfcLengthMeasure", self._length(disp)),
                  ("MaxAxisDisplacementCase", "IfcLabel", disp_case or None),
                  ("Members", "IfcText", ", ".join(self.frame.member_ids[k] for k in members))]
        return props + self._common()

    def _write_member_psets(self) -> None:
        if not self.results.cases:
            return
        seen: dict[int, list[int]] = defaultdict(list)
        ents = {}
        for k, item in enumerate(self.member_items):
            if item is not None:
                seen[item.id()].append(k)
                ents[item.id()] = item
        for iid, ks in seen.items():
            self._pset("PF_MemberForces", [ents[iid]], self.member_extremes(ks))
        for target in self.physical.values():
            if target.entity.id() in ents:
                continue
            self._pset("PF_MemberForces", [target.entity], self.member_extremes(target.members))

    def _write_support_psets(self) -> None:
        frame, res = self.frame, self.results
        active = self._active()
        supported = np.flatnonzero(frame.restraints.any(axis=1) | (frame.springs > 0).any(axis=1))
        for i in supported:
            item = self.node_items[i]
            if item is None or not res.cases:
                continue
            props = []
            for name, cr in res.cases.items():
                for c in active:
                    typ = "IfcForceMeasure" if c < 3 else "IfcTorqueMeasure"
                    conv = self._force if c < 3 else self._moment
                    props.append((f"{name}: {REACTION_NAMES[c]}", typ, conv(cr.reactions[i, c])))
            self._pset("PF_SupportReactions", [item], props + self._common())

    def _write_summary_pset(self) -> None:
        props: list[tuple[str, str, Any]] = [("Route", "IfcLabel", self.route),
                                             ("Nodes", "IfcInteger", self.frame.n_nodes),
                                             ("Members", "IfcInteger", self.frame.n_members),
                                             ("Unknowns", "IfcInteger", int(self.results.n_unknowns))]
        if self.ind:
            props += [("KinematicIndeterminacy", "IfcInteger", int(self.ind["kinematic"])),
                      ("StaticIndeterminacy", "IfcInteger", int(self.ind["static"])),
                      ("Mechanisms", "IfcInteger", int(self.ind["mechanisms"]))]
            for key, value in (self.ind.get("terms") or {}).items():
                props.append((f"Count_{key}", "IfcInteger", int(value)))
        worst = 0.0
        for name, cr in self.results.cases.items():
            r = float(cr.equilibrium_residual)
            if math.isfinite(r):
                worst = max(worst, r)
                props.append((f"EquilibriumResidual: {name}", "IfcReal", r))
        props.append(("EquilibriumResidualMax", "IfcReal", worst))
        objects = [self.analysis_model]
        if self.route != "structural":
            objects += self.f.by_type("IfcProject")[:1]
        self._pset("PF_AnalysisSummary", objects, props + self._common())

    def _write_stability_pset(self) -> None:
        """PF_StabilityAndModes on the analysis model: critical load factors, natural frequencies, modal masses."""
        res = self.results
        props: list[tuple[str, str, Any]] = []
        for name, modes in (getattr(res, "buckling", None) or {}).items():
            for k, mode in enumerate(modes, 1):
                props.append((f"CriticalLoadFactor: {name} #{k}", "IfcReal", float(mode.factor)))
        mass = getattr(res, "mass", None)
        if mass is not None:
            props.append(("TotalMass (kg)", "IfcReal", float(mass.total)))
            props.append(("MassSources", "IfcText", "; ".join(mass.sources)))
        for k, mode in enumerate(getattr(res, "modes", None) or (), 1):
            props.append((f"Mode {k}: frequency (Hz)", "IfcReal", float(mode.frequency)))
            props.append((f"Mode {k}: period (s)", "IfcReal", float(mode.period)))
            for axis, ratio in zip("XYZ", mode.effective_mass_ratio):
                props.append((f"Mode {k}: effective mass ratio {axis}", "IfcReal", float(ratio)))
        if not props:
            return
        self._pset("PF_StabilityAndModes", [self.analysis_model], props + self._common())


def _relative_deflection(stations, deflections, L: float) -> tuple[float, float]:
    """Largest deflection of the member axis from the chord between its displaced ends, and largest total."""
    s = np.asarray(stations, float)
    d = np.asarray(deflections, float)
    if s.size == 0 or L <= 0:
        return 0.0, 0.0
    t = s / L
    chord = d[0][None, :] * (1 - t)[:, None] + d[-1][None, :] * t[:, None]
    rel = np.linalg.norm(d - chord, axis=1)
    return float(rel.max()), float(np.linalg.norm(d, axis=1).max())


def _linked_physical(item) -> list:
    """Physical elements tied to an analytical item by IfcRelAssignsToProduct, in either direction."""
    out = []
    for rel in getattr(item, "HasAssignments", None) or ():
        if rel.is_a("IfcRelAssignsToProduct"):
            prod = rel.RelatingProduct
            if prod is not None and prod.is_a("IfcElement"):
                out.append(prod)
    for rel in getattr(item, "ReferencedBy", None) or ():
        if rel.is_a("IfcRelAssignsToProduct"):
            out += [o for o in rel.RelatedObjects if o.is_a("IfcElement")]
    return list(dict.fromkeys(out))
