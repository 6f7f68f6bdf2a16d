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
  distance from the member's start; which stations: `analysis.stations`,
  by default the ends, both sides of concentrated loads and the extremes
  of the forces), and a second one with the deflections dy, dz of the
  member axis (``IfcStructuralLoadSingleDisplacement``) at the ends, the
  load points and the extremes of the deflections. IFC2X3
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

The few entities that existing ones refer to (result groups, the derived
model) are created with ``create_entity``; the bulk (reactions, loads,
relationships, property sets: hundreds of thousands on a building) is
formatted as STEP lines numbered after the file's highest id and appended to
the DATA section (`analysis.ifc.step`), which costs a fraction of creating
them one by one. Where nothing of the source was removed (no earlier
results), the output is the source's own text with the few changed entities
rewritten in place and the new ones added; otherwise ifcopenshell writes the
changed file and the bulk is appended to it. Numbers carry
`analysis.ifc.step.SIGNIFICANT_DIGITS` significant digits.
"""
from __future__ import annotations

import contextlib
import datetime as _dt
import itertools
import logging
import math
import os
from collections import defaultdict
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ..collector import pauses_collector
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
@pauses_collector
def write_results(source_path, out_path, model, results, indeterminacy=None, *, overwrite: bool = False,
                  date: _dt.datetime | None = None, progress=None, stations: str = "extremes",
                  fork: bool | None = False) -> WriteSummary:
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
    stations : the stations of the curve reactions: 'ends', 'extremes' (default) or 'all'
        (see `analysis.stations`); the property sets and the JSON always use every station.
    fork : format the curve reactions in forked processes while the writer goes on (the
        first result set's as soon as it is prepared, the others' while the property sets
        are made; the same bytes, sooner on a machine with a spare core): True, False
        (default: in this process), None (where `side_text_possible`). Never from
        inside an application that cannot be forked safely (Blender).

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
    from ..stations import STATION_SETS

    if stations not in STATION_SETS:
        raise ValueError(f"stations must be one of {', '.join(STATION_SETS)}, got {stations!r}")
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
    from .source import open_source, verify_unchanged

    read_stamp = getattr(model, "source_stamp", None)
    lent = getattr(model, "ifc_file", None)
    if lent is not None and read_stamp is not None and _same_file(read_stamp.path, source_path):
        model.ifc_file = None  # this write changes it: the next one opens the source again
        verify_unchanged(source_path, read_stamp)  # saved again since it was read and analysed?
        f, sha256 = lent, read_stamp.sha256
    else:
        say("opening the source")
        source = open_source(source_path, checks=False)
        f, sha256 = source.file, source.stamp.sha256
        if read_stamp is not None:  # the file may have been saved again since it was read and analysed
            verify_unchanged(source_path, read_stamp, source.stamp)
    source_max = int(f.get_max_id())
    w = _Writer(f, model, results, indeterminacy, date or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0),
                stations=stations, say=say)
    say("removing earlier results")
    w.removed = remove_earlier_results(f, keep_derived=getattr(model, "route", "structural") == "structural")
    say("writing results")
    w.fork = side_text_possible() if fork is None else bool(fork and hasattr(os, "memfd_create"))
    try:
        w.run()
        say(f"writing IFC: saving {len(w.out):,} new entities")
        splice = None
        if not w.removed:  # nothing of the source went: its text is copied and only the changed entities rewritten
            splice = _Splice(source_path, sha256,
                             {ent.id(): (ent.is_a(), ent.to_string(True) + ";")
                              for ent in (f.by_id(eid) for eid in sorted(w.modified) if eid <= source_max)},
                             [f"{e.to_string(True)};\n" for e in _created(f, source_max + 1, w.out.first_id)])
        _atomic_write(f, out_path, w.out.lines, splice)
    finally:
        for side in w.sides:
            side.close()
    return w.summary(out_path)


@dataclass(frozen=True)
class _Splice:
    """How to write the output from the source's own text (see `analysis.ifc.step.splice_data`)."""

    path: str
    sha256: str
    replace: dict[int, tuple[str, str]]  # entity id -> (IFC class, new record) of the source entities changed
    created: list[str]  # records of the entities created through ifcopenshell


def _created(f, first: int, stop: int) -> list:
    """The entities with ids in [first, stop) (made through ifcopenshell before the bulk lines)."""
    out = []
    for eid in range(first, stop):
        try:
            out.append(f.by_id(eid))
        except RuntimeError:  # an id never used or removed again
            continue
    return out


def _same_file(a: str, b: str) -> bool:
    if os.path.exists(b):
        try:
            return os.path.samefile(a, b)
        except OSError:
            return False
    return os.path.abspath(a) == os.path.abspath(b)


def _atomic_write(f, out_path: str, lines: list[str], splice: _Splice | None = None) -> None:
    """Write ``f`` with the bulk ``lines`` appended to its DATA section, atomically.

    The lines are STEP text, so they are appended to a STEP file; another
    format (``.ifczip``, ``.ifcxml``) is written from that file by ifcopenshell.
    With ``splice`` and a STEP source, the source's own bytes are copied with
    the changed entities rewritten in place (no re-serialisation of the model:
    faster, and the design team's text stays as it was); where that cannot be
    done with certainty, ifcopenshell writes the file.
    """
    suffix = os.path.splitext(out_path)[1] or ".ifc"
    from ..fileio import atomic_write
    from .source import read_unchanged
    from .step import append_data, splice_data

    def spliced(tmp: str) -> bool:
        if splice is None:
            return False
        data = read_unchanged(splice.path, splice.sha256)
        head = data[3:64] if data.startswith(b"\xef\xbb\xbf") else data[:64]
        if not head.lstrip().startswith(b"ISO-10303-21"):
            return False
        return splice_data(tmp, data, splice.replace, itertools.chain(splice.created, lines))

    def write(tmp: str) -> None:
        if suffix.lower() == ".ifc":
            if spliced(tmp):
                return
            f.write(tmp)
            append_data(tmp, lines)
            return
        import ifcopenshell

        step = tmp + ".step.ifc"
        try:
            f.write(step)
            append_data(step, lines)
            ifcopenshell.open(step).write(tmp)
        finally:
            if os.path.exists(step):
                os.remove(step)

    atomic_write(out_path, write, suffix=suffix)


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


class _Ref:
    """An entity written as a STEP line: its id and Name, as the writer uses them."""

    __slots__ = ("_id", "Name")

    def __init__(self, eid: int, name: str) -> None:
        self._id, self.Name = eid, name

    def id(self) -> int:
        return self._id


class _Writer:
    def __init__(self, f, model, results, indeterminacy, date: _dt.datetime, stations: str = "extremes",
                 say=None):
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
        self.modified: set[int] = set()  # ids of source entities changed through ifcopenshell
        self.owner = self._owner_history()
        self.counts: defaultdict[str, int] = defaultdict(int)
        self._properties: dict[str, dict[str, str]] = {}  # shared IfcPropertySingleValue: name -> value -> ref
        self.stations = stations
        self.say = say or (lambda step: None)
        self.derived = False
        self._by_guid: dict[str, Any] = {}
        self.fork = False  # format the curve reactions in a forked process (`_SideText`)
        self._curve_jobs: list[_CurveLines] = []
        self.sides: list[_SideText] = []  # the processes formatting them

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
    def _scale(self, what: str) -> float:
        """The file's unit scale of ``what`` as a plain float (looked up once)."""
        scales = self.__dict__.setdefault("_scales", {})
        value = scales.get(what)
        if value is None:
            value = scales[what] = float(getattr(self.units, what))
        return value

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
            self.analysis_model = self._derived_model_root()
            self.derived = True
            self.physical = self._physical_targets()
        self.load_groups = self._load_groups()
        groups = self._result_groups()
        self._start_bulk()  # nothing is created through ifcopenshell after this
        if self.derived:
            self._derive_model()
        self._write_results(groups)
        rest = [job for job in self._curve_jobs if job.side is None]
        if self.fork and rest:  # their text is made alongside the property sets
            self.sides.append(_SideText(rest))
        self.say(f"writing IFC: property sets, {len(self.out):,} entities")
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
        linked: defaultdict[int, list] = defaultdict(list)  # one pass over the relations, not two inverses per item
        for rel in self.f.by_type("IfcRelAssignsToProduct"):
            prod = rel.RelatingProduct
            if prod is None:
                continue
            objects = rel.RelatedObjects or ()
            if prod.is_a("IfcElement"):  # the item among RelatedObjects (its HasAssignments)
                for obj in objects:
                    linked[obj.id()].append(prod)
            linked[prod.id()] += [o for o in objects if o.is_a("IfcElement")]  # the item as RelatingProduct
        targets: dict[int, _Target] = {}
        for k, item in enumerate(self.member_items):
            for phys in dict.fromkeys(linked.get(item.id(), ())):
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

    def _derived_model_root(self):
        """The derived IfcStructuralAnalysisModel (created in the file: the result groups refer to it)."""
        f, frame = self.f, self.frame
        self._origin = f.create_entity("IfcAxis2Placement3D",
                                       Location=f.create_entity("IfcCartesianPoint", Coordinates=[0.0, 0.0, 0.0]))
        self._shared = None if self.ifc2x3 else f.create_entity("IfcLocalPlacement", RelativePlacement=self._origin)
        attrs = dict(Name=(frame.name or "plumbframe") + " (analytical, derived)", Description=DERIVED_TAG,
                     PredefinedType="LOADING_3D")
        if not self.ifc2x3:
            attrs["SharedPlacement"] = self._shared
        return self._root("IfcStructuralAnalysisModel", **attrs)

    def _derive_model(self) -> None:
        """Point connections, curve members, their relations and links to the physical elements, as STEP lines.

        ``node_items`` and ``member_items`` become `_Ref` (id and Name) for the rest of the writer.
        """
        from .step import reals, string

        frame, out, line = self.frame, self.out, self._line
        ctx = f"#{self._context().id()}"
        tag = string(TAG)
        origin = f"#{self._origin.id()}"
        shared = f"#{self._shared.id()}" if self._shared is not None else None
        local = line("IfcLocalPlacement", ("RelativePlacement",))

        def placement() -> str:
            # IFC2X3: an IfcObjectPlacement places exactly one product (PlacesObject [1:1]); IFC4 shares one
            return f"#{out.add(local % origin)}" if shared is None else shared

        point = line("IfcCartesianPoint", ("Coordinates",))
        vertex = line("IfcVertexPoint", ("VertexGeometry",))
        topo = line("IfcTopologyRepresentation", ("ContextOfItems", "RepresentationIdentifier", "RepresentationType",
                                                  "Items"))
        shape = line("IfcProductDefinitionShape", ("Representations",))
        edge_fmt = line("IfcEdge", ("EdgeStart", "EdgeEnd"))
        direction = line("IfcDirection", ("DirectionRatios",))
        xyz = reals(np.asarray(frame.nodes, float) / self._scale("length"))
        vertices: list[str] = []
        self.node_items = []
        for i, nid in enumerate(frame.node_ids):
            pt = out.add(point % f"({xyz[3 * i]},{xyz[3 * i + 1]},{xyz[3 * i + 2]})")
            vp = f"#{out.add(vertex % f'#{pt}')}"
            vertices.append(vp)
            rep = out.add(shape % f"(#{out.add(topo % (ctx, string('Reference'), string('Vertex'), f'({vp})'))})")
            cond = self._node_condition(i)
            eid = self._add_root("IfcStructuralPointConnection", Name=string(nid), Description=tag,
                                 ObjectPlacement=placement(), Representation=f"#{rep}",
                                 AppliedCondition=cond or "$")
            self.node_items.append(_Ref(eid, nid))
        axes = [] if self.ifc2x3 else reals(np.array([np.round(r[2], 12) for r in self.results.R]).reshape(-1) + 0.0)
        self.member_items = []
        for k, mid in enumerate(frame.member_ids):
            a, b = frame.members[k]
            edge = out.add(edge_fmt % (vertices[a], vertices[b]))
            rep = out.add(shape % f"(#{out.add(topo % (ctx, string('Reference'), string('Edge'), f'(#{edge})'))})")
            values = dict(Name=string(mid), Description=tag, ObjectPlacement=placement(), Representation=f"#{rep}",
                          PredefinedType=".PIN_JOINED_MEMBER." if frame.truss[k] else ".RIGID_JOINED_MEMBER.")
            if not self.ifc2x3:
                values["Axis"] = f"#{out.add(direction % f'({axes[3 * k]},{axes[3 * k + 1]},{axes[3 * k + 2]})')}"
            member = self._add_root("IfcStructuralCurveMember", **values)
            self.member_items.append(_Ref(member, mid))
            for end, node in ((0, a), (1, b)):
                rel_cond = self._release_condition(frame.releases[k, end]) if frame.releases[k, end].any() else "$"
                self._add_root("IfcRelConnectsStructuralMember", Name=string(f"{mid}-{frame.node_ids[node]}"),
                               RelatingStructuralMember=f"#{member}",
                               RelatedStructuralConnection=f"#{self.node_items[node].id()}", AppliedCondition=rel_cond)
        everything = "(" + ",".join(f"#{e.id()}" for e in (*self.node_items, *self.member_items)) + ")"
        self._add_root("IfcRelAssignsToGroup", RelatedObjects=everything, RelatingGroup=f"#{self.analysis_model.id()}")
        by_physical: dict[int, list] = defaultdict(list)
        phys_entities = {}
        for k, guid in enumerate(frame.member_sources):
            ent = self.entity(guid)
            if ent is not None and ent.is_a("IfcProduct"):
                by_physical[ent.id()].append(self.member_items[k])
                phys_entities[ent.id()] = ent
        for pid, items in by_physical.items():
            self._add_root("IfcRelAssignsToProduct", RelatedObjects="(" + ",".join(f"#{i.id()}" for i in items) + ")",
                           RelatingProduct=f"#{pid}")
        self._associate_materials(phys_entities, by_physical)

    def _associate_materials(self, phys_entities, by_physical) -> None:
        from .step import string

        by_material: dict[int, list] = {}
        for pid, items in by_physical.items():
            for rel in getattr(phys_entities[pid], "HasAssociations", None) or ():
                if rel.is_a("IfcRelAssociatesMaterial"):
                    by_material.setdefault(rel.RelatingMaterial.id(), []).extend(items)
                    break
        for mat, items in by_material.items():
            self._add_root("IfcRelAssociatesMaterial", Name=string("plumbframe"),
                           RelatedObjects="(" + ",".join(f"#{i.id()}" for i in items) + ")", RelatingMaterial=f"#{mat}")

    def _stiffness_value(self, fixed: bool, spring: float, rotational: bool) -> str:
        """One stiffness attribute of an IfcBoundaryNodeCondition as STEP text."""
        from .step import real

        if self.ifc2x3:  # IFC2X3: a number; -1 is the customary value for a rigid restraint
            if fixed:
                return real(-1.0)
            scale = self.units.rotational_stiffness if rotational else self.units.linear_stiffness
            return real(float(spring) / scale if spring > 0 else 0.0)
        if fixed:
            return "IFCBOOLEAN(.T.)"
        if spring > 0:
            scale = self.units.rotational_stiffness if rotational else self.units.linear_stiffness
            cls = "IFCROTATIONALSTIFFNESSMEASURE" if rotational else "IFCLINEARSTIFFNESSMEASURE"
            return f"{cls}({real(float(spring) / scale)})"
        return "IFCBOOLEAN(.F.)"

    _CONDITION_NAMES = {True: ("LinearStiffnessX", "LinearStiffnessY", "LinearStiffnessZ", "RotationalStiffnessX",
                               "RotationalStiffnessY", "RotationalStiffnessZ"),
                        False: ("TranslationalStiffnessX", "TranslationalStiffnessY", "TranslationalStiffnessZ",
                                "RotationalStiffnessX", "RotationalStiffnessY", "RotationalStiffnessZ")}

    def _condition(self, name: str, values: list[str]) -> str:
        """An IfcBoundaryNodeCondition line (shared by content); returns its reference."""
        from .step import string

        cache = self.__dict__.setdefault("_conditions", {})
        key = (name, tuple(values))
        ref = cache.get(key)
        if ref is None:
            fmt = self._line("IfcBoundaryNodeCondition", ("Name", *self._CONDITION_NAMES[self.ifc2x3]))
            ref = cache[key] = f"#{self.out.add(fmt % (string(name), *values))}"
        return ref

    def _node_condition(self, i: int) -> str | None:
        frame = self.frame
        if not (frame.restraints[i].any() or (frame.springs[i] > 0).any()):
            return None
        return self._condition("support", [self._stiffness_value(bool(frame.restraints[i, c]), float(frame.springs[i, c]),
                                                                 c >= 3) for c in range(6)])

    def _release_condition(self, released) -> str:
        return self._condition("end release", [self._stiffness_value(not bool(released[c]), 0.0, c >= 3)
                                               for c in range(6)])

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
    def _result_groups(self) -> list:
        """One IfcStructuralResultGroup per case and combination (created in the file itself: HasResults)."""
        second = getattr(self.results, "theory", "") == "second-order"
        theory, linear = ("SECOND_ORDER_THEORY", False) if second else ("FIRST_ORDER_THEORY", True)
        groups = []
        used: set[int] = set()
        for name in self.results.cases:
            lg = self.load_groups.get(name)
            if lg is not None:
                taken = [g for g in (getattr(lg, "SourceOfResultGroup", None) or ()) if g.Description != TAG]
                if lg.id() in used or taken:  # ResultGroupFor is 0..1: never a second result group on one load group
                    self.notes.append(f"{name}: the load group {lg.is_a()} #{lg.id()} already has a result group; "
                                      "the results are not linked to it (ResultForLoadGroup left empty)")
                    lg = None
                else:
                    used.add(lg.id())
            groups.append(self._root("IfcStructuralResultGroup", Name=name, Description=TAG,
                                     TheoryType=theory, ResultForLoadGroup=lg, IsLinear=linear))
            self.counts["groups"] += 1
        existing = [g for g in (self.analysis_model.HasResults or ())]
        self.analysis_model.HasResults = existing + groups if (existing or groups) else None
        self.modified.add(self.analysis_model.id())
        return groups

    def _start_bulk(self) -> None:
        """From here on entities are STEP lines numbered after the file's highest id (see `analysis.ifc.step`)."""
        from .step import EntityTemplates, StepLines

        self.tpl = EntityTemplates(getattr(self.f, "schema_identifier", None) or self.schema)
        self.out = StepLines(int(self.f.get_max_id()) + 1)
        self._guid_pool: list[str] = []
        self._owner_ref = f"#{self.owner.id()}" if self.owner is not None else "$"
        self._formats: dict[tuple[str, tuple[str, ...]], str] = {}
        self._labels: list[tuple[str, tuple[str, str]]] | None = None
        self._common_props: list[tuple[str, str, Any]] | None = None

    def _fmt(self, ifc_class: str, names: tuple[str, ...]) -> str:
        """A format string ``IFCCLASS(...)`` with ``{name}`` fields for ``names``, ``$`` for the rest."""
        key = (ifc_class, names)
        fmt = self._formats.get(key)
        if fmt is None:
            upper, attrs, derived = self.tpl.attributes(ifc_class)
            missing = set(names) - set(attrs)
            if missing:
                raise ValueError(f"{ifc_class} has no attribute {sorted(missing)[0]!r} in {self.schema}")
            parts = ["{%s}" % a if a in names else ("*" if d else "$") for a, d in zip(attrs, derived)]
            fmt = self._formats[key] = f"{upper}({','.join(parts)})"
        return fmt

    def _new_guid(self) -> str:
        if not self._guid_pool:
            from .step import new_guids

            self._guid_pool = new_guids(8192)
        return self._guid_pool.pop()

    def _add_root(self, ifc_class: str, **values: str) -> int:
        """A rooted entity as a STEP line (values already formatted); returns its id."""
        fmt = self._fmt(ifc_class, ("GlobalId", "OwnerHistory", *values))
        return self.out.add(fmt.format(GlobalId=f"'{self._new_guid()}'", OwnerHistory=self._owner_ref, **values))

    def _write_results(self, groups) -> None:
        from .step import reals, string

        frame, res = self.frame, self.results
        active = set(self._active())
        supported = np.flatnonzero(frame.supported)
        curve_ok = not self.ifc2x3
        if not curve_ok:
            self.notes.append("IFC2X3 has no curve reactions: member internal forces are written to the "
                              "PF_MemberForces property sets only")
        chains = self._member_chains() if curve_ok else {}
        u = self.units
        f_scale = np.array([u.force] * 3 + [u.moment] * 3)
        d_scale = np.array([u.length] * 3 + [u.angle] * 3)
        force_fmt = self._line("IfcStructuralLoadSingleForce", ("Name", "ForceX", "ForceY", "ForceZ", "MomentX",
                                                                 "MomentY", "MomentZ"))
        disp_fmt = self._line("IfcStructuralLoadSingleDisplacement", (
            "Name", "DisplacementX", "DisplacementY", "DisplacementZ", "RotationalDisplacementRX",
            "RotationalDisplacementRY", "RotationalDisplacementRZ"))
        nodes = [i for i, e in enumerate(self.node_items) if e is not None]
        with_item = np.zeros(frame.n_nodes, bool)
        with_item[nodes] = True
        sup = [int(i) for i in supported if with_item[i]]
        item_refs = [f"#{e.id()}" if e is not None else "$" for e in self.node_items]
        inactive = [c for c in range(6) if c not in active]
        tag = string(TAG)
        out = self.out
        for group, (name, cr) in zip(groups, res.cases.items()):
            self.say(f"writing IFC: {name}: reactions and displacements of {len(nodes):,} nodes")
            reactions: list[int] = []
            for what, rows, values, scale, fmt in (("reaction", sup, cr.reactions, f_scale, force_fmt),
                                                   ("displacement", nodes, cr.displacements, d_scale, disp_fmt)):
                if not rows:
                    continue
                V = values[rows] / scale
                V[:, inactive] = np.nan  # '$': not a component of this analysis
                tok = reals(V)
                first = out.block(len(rows))
                load_name = string(f"{name}: {what}")
                out.extend([f"#{first + n}={fmt % (load_name, *tok[6 * n:6 * n + 6])};\n" for n in range(len(rows))])
                names = [string(f"{frame.node_ids[i]} {what}") for i in rows]
                reactions += self._activities("IfcStructuralPointReaction", names, list(range(first, first + len(rows))),
                                              ".GLOBAL_COORDS.", [item_refs[i] for i in rows], tag)
            self.counts["point"] += len(reactions)
            if chains:
                reactions += self._curve_results(name, chains, tag)
            if reactions:
                self._add_root("IfcRelAssignsToGroup", RelatedObjects="(" + ",".join(f"#{r}" for r in reactions) + ")",
                               RelatingGroup=f"#{group.id()}")
        missing = frame.n_nodes - len(nodes)
        if missing:
            self.notes.append(f"{missing} node(s) have no IfcStructuralPointConnection in the file: "
                              "their displacements and reactions are in the results JSON only")

    def _chain_labels(self, chains: dict) -> list[tuple[str, tuple[str, str]]]:
        """Per IFC curve member (cached): its reference and the names of its two reactions."""
        from .step import string

        if self._labels is None:
            self._labels = []
            for item, segments in chains.items():
                label = item.Name or self.frame.member_ids[segments[0][0]]
                self._labels.append((f"#{item.id()}", (string(f"{label} internal forces"),
                                                         string(f"{label} deflections"))))
        return self._labels

    def _line(self, ifc_class: str, names: tuple[str, ...]) -> str:
        """A %-format ``IFCCLASS(...)`` taking ``names`` in the order given (the schema's order of them)."""
        upper, attrs, derived = self.tpl.attributes(ifc_class)
        order = [a for a in attrs if a in names]
        if tuple(order) != tuple(names):
            raise ValueError(f"{ifc_class}: give {names} in the schema's order {tuple(order)}")
        parts = ["%s" if a in names else ("*" if d else "$") for a, d in zip(attrs, derived)]
        return f"{upper}({','.join(parts)})"

    def _activities(self, ifc_class: str, names: list[str], loads: list[int], coords: str, items: list[str],
                    tag: str, predefined: str | None = None) -> list[int]:
        """Reactions (one per load) with their IfcRelConnectsStructuralActivity to ``items``; returns their ids."""
        n = len(loads)
        fmt, rel = self._activity_formats(ifc_class, predefined)
        first = self.out.block(2 * n)
        self.out.extend(_activity_lines(fmt, rel, first, self._owner_ref, names, tag, loads, coords, items,
                                        (predefined,) if predefined else ()))
        return list(range(first, first + 2 * n, 2))

    def _activity_formats(self, ifc_class: str, predefined: str | None) -> tuple[str, str]:
        keys = ("GlobalId", "OwnerHistory", "Name", "Description", "AppliedLoad", "GlobalOrLocal") + \
            (("PredefinedType",) if predefined else ())
        return self._line(ifc_class, keys), self._line("IfcRelConnectsStructuralActivity", (
            "GlobalId", "OwnerHistory", "RelatingElement", "RelatedStructuralActivity"))

    def _curve_results(self, case: str, chains: dict, tag: str) -> list[int]:
        """Internal forces and deflections of every IFC curve member at the chosen stations (`analysis.stations`)."""
        from ..stations import select_stations_batch
        from .step import reals, string

        res, u, out = self.results, self.units, self.out
        self.say(f"writing IFC: {case}: diagrams of {len(chains):,} members")
        order = [(k, offset) for segments in chains.values() for k, offset in segments]
        if [k for k, _ in order] == list(range(self.frame.n_members)):  # one IFC member per frame member, in order
            blk = res.diagram_block(case)
        else:
            from ..results import join_diagrams

            blk = join_diagrams([res.diagram(case, k) for k, _ in order])
        sizes, S, F, D = blk.sizes, blk.stations, blk.forces, blk.deflections
        # each reaction at its own stations: the forces at the ends, both sides of concentrated loads and the
        # forces' extremes; the deflections at the ends, the load points and the deflections' extremes
        keep_f = select_stations_batch(sizes, S, F, np.zeros_like(D), self.stations)
        keep_d = select_stations_batch(sizes, S, np.zeros_like(F), D, self.stations)
        S = S + np.repeat(np.array([offset for _, offset in order], float), sizes)  # along the IFC member
        seg_starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        n_segments = [len(segments) for segments in chains.values()]
        chain_starts = np.concatenate([[0], np.cumsum(n_segments)[:-1]])

        def per_chain(keep: np.ndarray) -> list[int]:
            per_segment = np.add.reduceat(keep.astype(np.int64), seg_starts) if sizes.size else sizes
            counts = np.add.reduceat(per_segment, chain_starts).tolist() if n_segments else []
            return [0, *np.cumsum(counts).astype(int).tolist()]

        starts_f, starts_d = per_chain(keep_f), per_chain(keep_d)
        total_f, total_d = int(keep_f.sum()), int(keep_d.sum())
        fs = np.array([u.force] * 3 + [u.moment] * 3)
        self.say(f"writing IFC: {case}: {total_f:,} force and {total_d:,} deflection stations of {len(chains):,} members")
        n_items = len(starts_f) - 1
        first = out.block(total_f + total_d + 6 * n_items)  # loads, configurations, reactions with their relations
        chain = self._chain_labels(chains)
        job = _CurveLines(
            where_f=S[keep_f] / u.length, where_d=S[keep_d] / u.length, forces=F[keep_f] / fs,
            deflections=D[keep_d] / u.length, starts_f=starts_f, starts_d=starts_d, first=first,
            names=(string(f"{case}: internal forces"), string(f"{case}: deflections")),
            items=[ref for ref, _ in chain], labels=[label for _, label in chain], owner=self._owner_ref, tag=tag,
            force_fmt=self._line("IfcStructuralLoadSingleForce", ("ForceX", "ForceY", "ForceZ", "MomentX", "MomentY",
                                                                 "MomentZ")),
            defl_fmt=self._line("IfcStructuralLoadSingleDisplacement", ("DisplacementY", "DisplacementZ")),
            config_fmt=self._line("IfcStructuralLoadConfiguration", ("Name", "Values", "Locations")),
            activity_fmts=self._activity_formats("IfcStructuralCurveReaction", ".DISCRETE."))
        out.later(job)
        self._curve_jobs.append(job)
        if self.fork and not self.sides:  # the first result set's text is made while the others are prepared
            self.sides.append(_SideText([job]))
        a0 = job.first_reaction
        self.counts["curve"] += 2 * n_items
        return list(range(a0, a0 + 4 * n_items, 2))

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

    # -- property sets ----------------------------------------------------------
    _TEXT_TYPES = ("IfcLabel", "IfcText", "IfcDateTime", "IfcIdentifier")

    def _pset(self, name: str, objects: list, props: list[tuple[str, str, Any]]) -> None:
        """One property set ``name`` on ``objects`` (properties with a None value left out)."""
        self._pset_columns(name, [objects], [(pname, typ, [value]) for pname, typ, value in props])

    def _pset_columns(self, name: str, owners: list[list], columns: list[tuple[str, str, list]]) -> None:
        """One property set ``name`` on each entry of ``owners`` (a list of the entities it defines) from
        columns: (property, IFC type, one value per property set, None where that set has no such value).

        An IfcProperty may belong to several property sets; every IfcPropertySingleValue is shared by
        content with all the others this writer made (date, version, units, idealisation, governing case
        names, equal values), which halves the entities a large model gets.
        """
        from .step import new_guids, reals, string

        n = len(owners)
        if not n:
            return
        out, cache = self.out, self._properties
        prop_fmt = self._line("IfcPropertySingleValue", ("Name", "NominalValue"))
        lines: list[str] = []
        refs_by_column: list[list[str | None]] = []
        for pname, typ, values in columns:
            # each distinct value formatted once (values equal as Python numbers format alike: 0.0 and -0.0 as
            # "0.", 1 and True as the same integer or boolean), in the order of their first occurrence
            distinct = list(dict.fromkeys([v for v in values if v is not None]))
            if not distinct:
                continue
            if typ in self._TEXT_TYPES:
                tokens = [string(v) for v in distinct]
            elif typ == "IfcInteger":
                tokens = [str(int(v)) for v in distinct]
            elif typ == "IfcBoolean":
                tokens = [".T." if v else ".F." for v in distinct]
            else:
                tokens = reals(np.array(distinct, dtype=float))
            prefix = "IFCLABEL(" if typ == "IfcDateTime" and self.ifc2x3 else f"{typ.upper()}("
            keys = [prefix + t + ")" for t in tokens]
            known = cache.setdefault(pname, {})  # value text -> "#id" of the property with it
            missing = [key for key in dict.fromkeys(keys) if key not in known]
            if missing:
                first = out.block(len(missing))
                # one %-format for the whole column: the name is quoted (and any '%' in it doubled) once
                line = f"#%d={prop_fmt % (string(pname).replace('%', '%%'), '%s')};\n"
                lines.extend([line % (first + n, key) for n, key in enumerate(missing)])
                known.update(zip(missing, [f"#{first + n}" for n in range(len(missing))]))
            ref_of = dict(zip(distinct, [known[key] for key in keys]))
            refs_by_column.append([ref_of[v] if v is not None else None for v in values])
        pset_fmt = self._line("IfcPropertySet", ("GlobalId", "OwnerHistory", "Name", "Description", "HasProperties"))
        rel_fmt = self._line("IfcRelDefinesByProperties", ("GlobalId", "OwnerHistory", "RelatedObjects",
                                                            "RelatingPropertyDefinition"))
        guids = new_guids(2 * n)
        first = out.block(2 * n)
        tag, owner, quoted_set = string(TAG), self._owner_ref, string(name)
        for j, row in enumerate(zip(*refs_by_column)):
            pset = first + 2 * j
            props_text = "(" + ",".join([r for r in row if r is not None]) + ")"
            objects_text = "(" + ",".join(f"#{o.id()}" for o in owners[j]) + ")"
            lines.append(f"#{pset}={pset_fmt % (repr_guid(guids[2 * j]), owner, quoted_set, tag, props_text)};\n"
                         f"#{pset + 1}={rel_fmt % (repr_guid(guids[2 * j + 1]), owner, objects_text, f'#{pset}')};\n")
        out.extend(lines)
        self.counts["psets"] += n

    def _common(self) -> list[tuple[str, str, Any]]:
        common = getattr(self, "_common_props", None)
        if common is None:
            common = self._common_props = self._common_list()
        return list(common)

    def _common_list(self) -> list[tuple[str, str, Any]]:
        from .. import __version__

        return [("AnalysisDate", "IfcDateTime", self.date.strftime("%Y-%m-%dT%H:%M:%S")),
                ("ProgramVersion", "IfcLabel", f"plumbframe {__version__}"),
                ("Units", "IfcLabel", units_text(self.units)),
                ("Idealisation", "IfcText", idealisation_text(self.results))]

    def member_extremes(self, members: list[int]) -> list[tuple[str, str, Any]]:
        """Property list of PF_MemberForces for the frame members ``members`` (file units): per action its
        smallest and largest value over the members and cases with the first case reaching it, the largest
        deflection from the chord and displacement with their cases, the span-to-deflection ratio, the
        members' ids, and the common properties."""
        return self.member_extremes_many([members])[0]

    def member_extremes_many(self, groups: list[list[int]]) -> list[list[tuple[str, str, Any]]]:
        """`member_extremes` of many member groups at once (numpy over all of them, case by case)."""
        columns = self.member_extremes_columns(groups)
        return [[(name, typ, values[g]) for name, typ, values in columns if values[g] is not None]
                for g in range(len(groups))]

    def member_extremes_columns(self, groups: list[list[int]]) -> list[tuple[str, str, list]]:
        """PF_MemberForces of many member groups as columns: (property, IFC type, one value per group, None
        where the group has no such value), in the order of the property set, common properties last."""
        res = self.results
        names = list(res.cases)
        if not groups:
            return []
        sizes = np.array([len(g) for g in groups], dtype=np.int64)
        idx = np.concatenate([np.asarray(g, dtype=np.int64) for g in groups])
        starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        n_cases, n_groups = len(names), len(groups)
        lo = np.full((n_cases, n_groups, 6), np.inf)
        hi = np.full((n_cases, n_groups, 6), -np.inf)
        rel = np.full((n_cases, n_groups), -np.inf)
        tot = np.full((n_cases, n_groups), -np.inf)
        ratio = np.full(n_groups, np.inf)
        L = np.asarray(res.L, float)[idx]
        for c, name in enumerate(names):
            mn, mx = res.force_ranges(name)
            r, t = res.axis_deflections(name)
            # NaN (no such component) never wins, as in a comparison
            lo[c] = np.minimum.reduceat(np.where(np.isnan(mn[idx]), np.inf, mn[idx]), starts, axis=0)
            hi[c] = np.maximum.reduceat(np.where(np.isnan(mx[idx]), -np.inf, mx[idx]), starts, axis=0)
            rk, tk = np.nan_to_num(r[idx], nan=-np.inf), np.nan_to_num(t[idx], nan=-np.inf)
            rel[c] = np.maximum.reduceat(rk, starts)
            tot[c] = np.maximum.reduceat(tk, starts)
            with np.errstate(divide="ignore", invalid="ignore"):
                q = np.where(rk > 0, L / np.where(rk > 0, rk, 1.0), np.inf)
            ratio = np.minimum(ratio, np.minimum.reduceat(q, starts))
        # the first case reaching each extreme (np.argmin/argmax: the first of equal values)
        c_lo, c_hi = lo.argmin(axis=0), hi.argmax(axis=0)
        v_lo = np.take_along_axis(lo, c_lo[None], axis=0)[0]
        v_hi = np.take_along_axis(hi, c_hi[None], axis=0)[0]
        c_rel, c_tot = rel.argmax(axis=0), tot.argmax(axis=0)
        v_rel = np.take_along_axis(rel, c_rel[None], axis=0)[0]
        v_tot = np.take_along_axis(tot, c_tot[None], axis=0)[0]
        fs = np.array([self._scale("force")] * 3 + [self._scale("moment")] * 3)
        length = self._scale("length")
        lo_l, hi_l = (v_lo / fs).tolist(), (v_hi / fs).tolist()
        ok_lo, ok_hi = np.isfinite(v_lo).tolist(), np.isfinite(v_hi).tolist()
        c_lo_l, c_hi_l = c_lo.tolist(), c_hi.tolist()
        defl = np.where(v_rel > 0, v_rel, 0.0) / length
        disp = np.where(v_tot > 0, v_tot, 0.0) / length
        defl_case = [names[c] if v > 0 else None for c, v in zip(c_rel.tolist(), v_rel.tolist())]
        disp_case = [names[c] if v > 0 else None for c, v in zip(c_tot.tolist(), v_tot.tolist())]
        ratio_l = [float(x) if math.isfinite(x) else None for x in ratio.tolist()]
        defl_l, disp_l = defl.tolist(), disp.tolist()
        kinds = [("IfcForceMeasure" if a < 3 else "IfcTorqueMeasure", action) for a, action in enumerate(ACTION_NAMES)]
        ids = self.frame.member_ids
        columns: list[tuple[str, str, list]] = []
        for a, (typ, action) in enumerate(kinds):
            ok = [lo_ok[a] and hi_ok[a] for lo_ok, hi_ok in zip(ok_lo, ok_hi)]
            if not any(ok):
                continue
            columns += [(f"{action}Min", typ, [row[a] if k else None for row, k in zip(lo_l, ok)]),
                        (f"{action}MinCase", "IfcLabel", [names[row[a]] if k else None for row, k in zip(c_lo_l, ok)]),
                        (f"{action}Max", typ, [row[a] if k else None for row, k in zip(hi_l, ok)]),
                        (f"{action}MaxCase", "IfcLabel", [names[row[a]] if k else None for row, k in zip(c_hi_l, ok)])]
        columns += [("MaxDeflection", "IfcLengthMeasure", defl_l),
                    ("MaxDeflectionCase", "IfcLabel", defl_case),
                    ("SpanToDeflection", "IfcReal", ratio_l),
                    ("MaxAxisDisplacement", "IfcLengthMeasure", disp_l),
                    ("MaxAxisDisplacementCase", "IfcLabel", disp_case),
                    ("Members", "IfcText", [", ".join(ids[k] for k in members) for members in groups])]
        columns += [(name, typ, [value] * n_groups) for name, typ, value in self._common()]
        return columns

    def _write_member_psets(self) -> None:
        if not self.results.cases:
            return
        seen: dict[int, list[int]] = defaultdict(list)
        ents = {}
        for k, item in enumerate(self.member_items):
            if item is not None:
                seen[item.id()].append(k)
                ents[item.id()] = item
        owners = [ents[iid] for iid in seen] + [t.entity for t in self.physical.values() if t.entity.id() not in ents]
        groups = list(seen.values()) + [t.members for t in self.physical.values() if t.entity.id() not in ents]
        self._pset_columns("PF_MemberForces", [[o] for o in owners], self.member_extremes_columns(groups))

    def _write_support_psets(self) -> None:
        frame, res = self.frame, self.results
        active = self._active()
        rows = [int(i) for i in np.flatnonzero(frame.supported) if self.node_items[i] is not None]
        if not rows or not res.cases:
            return
        columns: list[tuple[str, str, list]] = []
        for name, cr in res.cases.items():
            for c in active:
                typ = "IfcForceMeasure" if c < 3 else "IfcTorqueMeasure"
                scale = self._scale("force") if c < 3 else self._scale("moment")
                columns.append((f"{name}: {REACTION_NAMES[c]}", typ, (cr.reactions[rows, c] / scale).tolist()))
        columns += [(pname, typ, [value] * len(rows)) for pname, typ, value in self._common()]
        self._pset_columns("PF_SupportReactions", [[self.node_items[i]] for i in rows], columns)

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


def _activity_lines(fmt: str, rel: str, first: int, owner: str, names: list[str], tag: str, loads: list[int],
                    coords: str, items: list[str], extra: tuple[str, ...]) -> list[str]:
    """STEP lines of reactions (one per load, ids from ``first``), each followed by its
    IfcRelConnectsStructuralActivity to the item it acts on."""
    from .step import new_guids

    guids = new_guids(2 * len(loads))
    return [f"#{first + 2 * j}={fmt % (repr_guid(guids[2 * j]), owner, names[j], tag, f'#{loads[j]}', coords, *extra)};\n"
            f"#{first + 2 * j + 1}={rel % (repr_guid(guids[2 * j + 1]), owner, items[j], f'#{first + 2 * j}')};\n"
            for j in range(len(loads))]


def _numbered(fmt: str, first: int, tokens: list[str], per: int) -> str:
    """Lines ``#id=<fmt>;`` with ids from ``first``, ``per`` tokens each, made by one %-operation."""
    n = len(tokens) // per
    if not n:
        return ""
    args: list[Any] = [None] * ((per + 1) * n)
    args[0::per + 1] = range(first, first + n)
    for c in range(per):
        args[1 + c::per + 1] = tokens[c::per]
    return (f"#%d={fmt};\n" * n) % tuple(args)


def _spans(refs) -> tuple[str, list[int]]:
    """``refs`` joined by commas, and where each starts in that text (one more: the end plus one)."""
    refs = list(refs)
    return ",".join(refs), list(itertools.accumulate([len(r) + 1 for r in refs], initial=0))


@dataclass
class _CurveLines:
    """The STEP lines of one result set's curve reactions, for ids handed out already (see `_curve_results`).

    In id order: the force loads, the deflection loads, two load
    configurations per IFC member, then its two reactions, each with its
    relation to the member. The text is made when the file is written, or
    ahead of that by a forked process (`_SideText`).
    """

    where_f: np.ndarray  # (stations,) along the member, file units
    where_d: np.ndarray
    forces: np.ndarray  # (stations, 6) file units
    deflections: np.ndarray  # (stations, 2)
    starts_f: list[int]  # per member, into the force stations; one more than members
    starts_d: list[int]
    first: int
    names: tuple[str, str]  # STEP strings of the two configurations' names
    items: list[str]  # '#id' of each IFC curve member
    labels: list[tuple[str, str]]  # STEP strings of its two reactions' names
    owner: str
    tag: str
    force_fmt: str
    defl_fmt: str
    config_fmt: str
    activity_fmts: tuple[str, str]
    side: Any = None  # (the _SideText making this text, its file descriptor)

    @property
    def first_reaction(self) -> int:
        return self.first + len(self.forces) + len(self.deflections) + 2 * len(self.items)

    def lines(self) -> list[str]:
        from .step import reals

        f0, total_f, total_d = self.first, len(self.forces), len(self.deflections)
        d0 = f0 + total_f
        c0 = d0 + total_d
        where_f = [f"({t})" for t in reals(self.where_f)]
        where_d = [f"({t})" for t in reals(self.where_d)]
        tok_f, tok_d = reals(self.forces), reals(self.deflections)
        force_fmt, defl_fmt, config_fmt, names = self.force_fmt, self.defl_fmt, self.config_fmt, self.names
        # the loads: one %-operation over all of them (id, then the values), a line each
        lines = [_numbered(force_fmt, f0, tok_f, 6), _numbered(defl_fmt, d0, tok_d, 2)]
        kinds = ((_spans(f"#{f0 + x}" for x in range(total_f)), where_f, self.starts_f),
                 (_spans(f"#{d0 + x}" for x in range(total_d)), where_d, self.starts_d))
        items, labels = [], []
        for j, (ref, label) in enumerate(zip(self.items, self.labels)):
            for w, ((refs, at), where, starts) in enumerate(kinds):
                a, b = starts[j], starts[j + 1]
                # the member's references: a slice of all of them joined (the ids run on)
                listed = refs[at[a]:at[b] - 1] if b > a else ""
                lines.append(f"#{c0 + 2 * j + w}={config_fmt % (names[w], '(' + listed + ')', '(' + ','.join(where[a:b]) + ')')};\n")
                labels.append(label[w])
                items.append(ref)
        fmt, rel = self.activity_fmts
        lines += _activity_lines(fmt, rel, self.first_reaction, self.owner, labels, self.tag,
                                 list(range(c0, c0 + len(labels))), ".LOCAL_COORDS.", items, (".DISCRETE.",))
        return lines

    def chunks(self):
        """The text, as `analysis.ifc.step` writes it (str or bytes pieces)."""
        if self.side is not None:
            side, fd = self.side
            yield from side.chunks(fd)
        else:
            yield "".join(self.lines())


class SideProcessFault(Exception):
    """A forked helper of the writer failed: a fault of the program, not of the input or the disk."""


class _SideText:
    """The text of `_CurveLines` jobs, made by a forked process while the writer goes on (Linux).

    Each job's text goes into an anonymous in-memory file; the writer reads
    it when it writes the file, after the process has ended well. The writer
    starts two at most: one for the first result set, one for the rest. A failure
    there is raised in the writer; `close` stops the process if the writer
    gives up first.
    """

    def __init__(self, jobs: list[_CurveLines]) -> None:
        from ..fileio import ForkedCall

        self.fds = [os.memfd_create(f"plumbframe-curve-reactions-{k}") for k in range(len(jobs))]
        fds = list(self.fds)

        def body() -> dict:  # pragma: no cover - runs in the forked process
            for job, fd in zip(jobs, fds):
                view = memoryview("".join(job.lines()).encode("ascii"))
                while view:
                    view = view[os.write(fd, view):]
            return {}

        self.call = ForkedCall(body, "formatting the curve reactions")
        for job, fd in zip(jobs, self.fds):
            job.side = (self, fd)

    def chunks(self, fd: int):
        report = self.call.join()
        if not report["ok"]:
            raise SideProcessFault(f"the process formatting the curve reactions failed: {report['error']}"
                                   + (f"\n{report['trace']}" if "trace" in report else ""))
        os.lseek(fd, 0, os.SEEK_SET)
        while True:
            data = os.read(fd, 1 << 22)
            if not data:
                return
            yield data

    def close(self) -> None:
        """Stop the process if it still runs; free the in-memory files."""
        self.call.cancel()
        for fd in self.fds:
            with contextlib.suppress(OSError):
                os.close(fd)
        self.fds = []


def side_text_possible() -> bool:
    """Whether the writer may fork a formatter (`_SideText`): as for the CLI's side outputs, and memfd."""
    from ..fileio import side_outputs_possible

    return hasattr(os, "memfd_create") and side_outputs_possible()


def repr_guid(guid: str) -> str:
    """A GlobalId as a STEP string (its 64 characters need no escaping)."""
    return f"'{guid}'"


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
