"""The analytical frame: nodes, members, supports, constraints and loads.

`Frame` is what every solver and writer works on. It holds numpy arrays
(entity-first: ``nodes`` is ``(n, 3)``) and string ids, never an IFC entity,
so it can be built by hand with `FrameBuilder` as easily as by the IFC reader.
All values are SI (m, N, N*m, Pa, kg/m3, rad).

Conventions
-----------
* Global axes are the model's world axes.
* Member local axes: x from end i to end j; local z is the component of the
  member's reference vector ``ref`` normal to x (IFC's ``Axis``); y = z x x.
  Without a reference vector, z is the component of global Z normal to x,
  and for vertical members global -X (so local y is global +Y for beams and
  columns of a frame in the XZ plane). ``roll`` then turns y and z about x.
* Releases are per member end and per end action, in the order
  ``N, Vy, Vz, T, My, Mz`` of `ACTION_NAMES`, in member axes.
* Offsets are rigid links, global vectors from the node to the member end.
"""
from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from .errors import ModelError

__all__ = [
    "DOF_NAMES",
    "REACTION_NAMES",
    "ACTION_NAMES",
    "STANDARD_GRAVITY",
    "SOURCES",
    "Section",
    "Material",
    "InclinedSupport",
    "TemperatureLoad",
    "NodalLoad",
    "LineLoad",
    "PointLoad",
    "Settlement",
    "LoadCase",
    "Combination",
    "RigidBody",
    "Diaphragm",
    "AnalysisOptions",
    "Frame",
    "FrameBuilder",
    "member_axes",
    "member_lengths",
]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int32]
BoolArray = npt.NDArray[np.bool_]

DOF_NAMES = ("ux", "uy", "uz", "rx", "ry", "rz")
REACTION_NAMES = ("fx", "fy", "fz", "mx", "my", "mz")
ACTION_NAMES = ("N", "Vy", "Vz", "T", "My", "Mz")
STANDARD_GRAVITY = 9.80665  # m/s2, the conventional value (common practice, no source)
# Where a member's material or section values came from (Frame.material_sources / section_sources).
SOURCES = ("file", "grade table", "default", "user map", "body geometry")

_AXIS_INDEX = {"x": 0, "y": 1, "z": 2}


# --------------------------------------------------------------------------- parts
@dataclass(frozen=True, slots=True)
class Section:
    """Cross-section constants in member axes (m2, m4).

    ``Iy`` is about local y (bending in the local x-z plane), ``Iz`` about
    local z. ``Avy``/``Avz`` are shear areas; 0 means rigid in shear.
    ``source`` says where the values came from (`SOURCES`; 'file' for
    values given with the model, by the IFC file or by the caller).
    """

    name: str
    A: float
    Iy: float = 0.0
    Iz: float = 0.0
    J: float = 0.0
    Avy: float = 0.0
    Avz: float = 0.0
    source: str = "file"


@dataclass(frozen=True, slots=True)
class Material:
    """Isotropic linear-elastic material: E, G in Pa, density in kg/m3.

    ``source`` says where the values came from (`SOURCES`; 'file' for values
    given with the model, by the IFC file or by the caller).
    """

    name: str
    E: float
    G: float | None = None
    density: float = 0.0
    poisson: float = 0.3
    source: str = "file"
    alpha: float = 0.0  # coefficient of thermal expansion, 1/K (0: not given; needed by temperature loads)

    @property
    def shear_modulus(self) -> float:
        return self.G if self.G is not None else self.E / (2.0 * (1.0 + self.poisson))


@dataclass(frozen=True, slots=True)
class NodalLoad:
    """Force and moment on a node in global axes: (Fx, Fy, Fz, Mx, My, Mz)."""

    node: str
    values: tuple[float, float, float, float, float, float]
    source: str | None = None


@dataclass(frozen=True, slots=True)
class LineLoad:
    """Distributed force on a member, linear from ``w1`` at ``start`` to ``w2`` at ``end``.

    ``direction`` is 'x', 'y' or 'z' of ``axes`` ('local' member axes or
    'global'). Positions are distances from end i in m (``end=None`` means the
    member end), or fractions of the length when ``relative``. A global load
    with ``projected=True`` is given per unit of the length projected normal
    to its direction (a snow load on a rafter); otherwise per true length.
    """

    member: str
    direction: str
    w1: float
    w2: float | None = None
    start: float = 0.0
    end: float | None = None
    axes: str = "local"
    projected: bool = False
    relative: bool = False
    source: str | None = None


@dataclass(frozen=True, slots=True)
class PointLoad:
    """A concentrated force (N) or moment (N*m, ``moment=True``) on a member."""

    member: str
    direction: str
    value: float
    position: float
    axes: str = "local"
    moment: bool = False
    relative: bool = False
    source: str | None = None


@dataclass(frozen=True, slots=True)
class Settlement:
    """A prescribed displacement (m or rad) of a restrained node component."""

    node: str
    dof: str
    value: float
    source: str | None = None


@dataclass(frozen=True, slots=True)
class TemperatureLoad:
    """A uniform temperature change ``delta`` (K) of a whole member: it strains the member by α·delta
    (``Frame.alpha``), which its supports and neighbours restrain."""

    member: str
    delta: float
    source: str | None = None


@dataclass(frozen=True, slots=True)
class LoadCase:
    """One load case. ``self_weight`` is the acceleration in units of g, global axes.

    ``(0, 0, -1)`` adds the members' weight acting down (-Z).
    """

    name: str
    nodal: tuple[NodalLoad, ...] = ()
    member: tuple[LineLoad | PointLoad, ...] = ()
    settlements: tuple[Settlement, ...] = ()
    self_weight: tuple[float, float, float] = (0.0, 0.0, 0.0)
    source: str | None = None
    temperature: tuple[TemperatureLoad, ...] = ()


@dataclass(frozen=True, slots=True)
class Combination:
    """A factored sum of load cases: ``factors`` is ((case name, factor), ...)."""

    name: str
    factors: tuple[tuple[str, float], ...]
    source: str | None = None


@dataclass(frozen=True, slots=True)
class RigidBody:
    """Nodes that move as one rigid body (all six components)."""

    name: str
    nodes: tuple[str, ...]
    source: str | None = None


@dataclass(frozen=True, slots=True)
class InclinedSupport:
    """A support whose restraints act along its own axes, turned against the world axes.

    ``axes`` are the support's x, y and z as unit vectors in world axes (rows of
    a rotation); ``restrained`` flags ux, uy, uz, rx, ry, rz along them. Each
    flag is an exact constraint (the node's displacement along that axis is
    zero); the reaction is reported in world axes like any other.
    """

    node: str
    axes: tuple[tuple[float, float, float], tuple[float, float, float], tuple[float, float, float]]
    restrained: tuple[bool, bool, bool, bool, bool, bool]
    source: str | None = None


@dataclass(frozen=True, slots=True)
class Diaphragm:
    """Nodes tied by a floor that is rigid in its own plane (normal ``normal``).

    The in-plane translations and the rotation about the normal of every node
    follow one rigid in-plane motion; out-of-plane motion stays free.
    """

    name: str
    nodes: tuple[str, ...]
    normal: tuple[float, float, float] = (0.0, 0.0, 1.0)
    source: str | None = None


@dataclass(frozen=True, slots=True)
class AnalysisOptions:
    """The idealisation and the numerics of one analysis.

    plane
        True: plane analysis in the frame's own plane (a world coordinate
        plane), 3 DOF per joint; False: space frame, 6 DOF per joint; None
        (default): space frame, except that `analyze` falls back to the
        plane analysis, with a warning, when the frame and all its loads lie
        in one world plane and it is a mechanism only out of that plane.
    inextensible
        Every member is axially rigid, pin-jointed truss bars included: its
        length is held by an exact constraint and its axial force is the
        constraint force. A member's own property overrides this either way
        (``Frame.inextensible`` keeps it rigid without the option,
        ``Frame.extensible`` keeps it extensible with it; the IFC reader sets
        them from ``PF_Idealisation.AxiallyRigid``); a member whose
        axial force is released is never rigid. An all-rigid determinate
        truss is analysed by equilibrium alone; where rigid members form a
        redundant set, their forces are the smallest in equilibrium (a
        warning says so).
    condense_pinned
        Rotations at pinned member ends (end releases and pin-supported
        ends) are condensed out of the unknowns.
    shear
        Include shear deformation where sections give shear areas.
    solver
        'auto', 'cholmod', 'pardiso' or 'superlu'.
    second_order, buckling, modes, mass, subdivisions
        Beyond first order (see `analysis.stiffness.extended`): every case
        and combination to second order (P-Δ and P-δ); the ``buckling``
        lowest elastic critical load factors per combination; the ``modes``
        lowest natural modes with the members' own mass plus, per
        ``(case name, factor)`` in ``mass``, that case's gravity loads / g;
        members are split into ``subdivisions`` pieces for these analyses.
    """

    plane: bool | None = None
    inextensible: bool = False
    condense_pinned: bool = False
    shear: bool = False
    solver: str = "auto"
    stations: int = 11
    second_order: bool = False
    buckling: int = 0
    modes: int = 0
    mass: tuple[tuple[str, float], ...] = ()
    subdivisions: int = 8

    def __post_init__(self) -> None:
        if self.buckling < 0 or self.modes < 0:
            raise ValueError(f"buckling and modes must be counts >= 0, got {self.buckling} and {self.modes}")
        if self.subdivisions < 1:
            raise ValueError(f"subdivisions must be at least 1, got {self.subdivisions}")
        object.__setattr__(self, "mass", tuple((str(n), float(f)) for n, f in self.mass))
        if self.solver not in ("auto", "cholmod", "pardiso", "superlu"):
            raise ValueError(f"solver {self.solver!r} is not one of auto, cholmod, pardiso, superlu")
        if self.stations < 2:
            raise ValueError(f"stations must be at least 2, got {self.stations}")


# --------------------------------------------------------------------------- frame
def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a, copy=True)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, slots=True)
class Frame:
    """The analytical model as arrays (see module docstring for conventions).

    Shapes: ``nodes (n,3)``, ``members (m,2) int32`` (rows into ``nodes``),
    per-member arrays ``(m,)``, ``ref (m,3)`` (NaN row: default orientation),
    ``releases (m,2,6) bool``, ``offsets (m,2,3)``, ``restraints (n,6) bool``,
    ``springs (n,6)`` (N/m or N*m/rad, 0 = none).

    Axial idealisation per member: ``inextensible`` True keeps the member
    axially rigid whatever the options say; ``extensible`` True keeps it
    extensible under ``AnalysisOptions.inextensible`` (both True is an
    error); both False follow the option. ``extensible`` may be left empty
    (all False).
    """

    node_ids: tuple[str, ...]
    nodes: FloatArray
    member_ids: tuple[str, ...]
    members: IntArray
    A: FloatArray
    Iy: FloatArray
    Iz: FloatArray
    J: FloatArray
    Avy: FloatArray
    Avz: FloatArray
    E: FloatArray
    G: FloatArray
    density: FloatArray
    ref: FloatArray
    roll: FloatArray
    truss: BoolArray
    releases: BoolArray
    offsets: FloatArray
    inextensible: BoolArray
    restraints: BoolArray
    springs: FloatArray
    rigid_bodies: tuple[RigidBody, ...] = ()
    inclined_supports: tuple[InclinedSupport, ...] = ()
    diaphragms: tuple[Diaphragm, ...] = ()
    load_cases: tuple[LoadCase, ...] = ()
    combinations: tuple[Combination, ...] = ()
    node_sources: tuple[str | None, ...] = ()
    member_sources: tuple[str | None, ...] = ()
    node_labels: tuple[str, ...] = ()
    member_labels: tuple[str, ...] = ()
    section_names: tuple[str, ...] = ()
    material_names: tuple[str, ...] = ()
    name: str = ""
    # where each member's section / material values came from (one of SOURCES; default 'file')
    section_sources: tuple[str, ...] = ()
    material_sources: tuple[str, ...] = ()
    # members kept extensible under AnalysisOptions.inextensible (empty: none)
    extensible: BoolArray = field(default_factory=lambda: np.zeros(0, dtype=np.bool_))
    # semi-rigid member ends (m,2,6): rotational spring stiffness N*m/rad between the end and its joint,
    # about local y (My) and z (Mz) only; 0 = rigid (or released, where `releases` says so). Empty: none
    end_springs: FloatArray = field(default_factory=lambda: np.zeros(0))
    # coefficient of thermal expansion per member, 1/K (0: not given). Empty: all 0
    alpha: FloatArray = field(default_factory=lambda: np.zeros(0))
    _lookups: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        n, m = len(self.node_ids), len(self.member_ids)
        if np.asarray(self.extensible).size == 0:
            object.__setattr__(self, "extensible", np.zeros(m, dtype=np.bool_))
        if np.asarray(self.end_springs).size == 0:
            object.__setattr__(self, "end_springs", np.zeros((m, 2, 6)))
        if np.asarray(self.alpha).size == 0:
            object.__setattr__(self, "alpha", np.zeros(m))
        specs = {
            "nodes": (np.float64, (n, 3)),
            "members": (np.int32, (m, 2)),
            "A": (np.float64, (m,)),
            "Iy": (np.float64, (m,)),
            "Iz": (np.float64, (m,)),
            "J": (np.float64, (m,)),
            "Avy": (np.float64, (m,)),
            "Avz": (np.float64, (m,)),
            "E": (np.float64, (m,)),
            "G": (np.float64, (m,)),
            "density": (np.float64, (m,)),
            "ref": (np.float64, (m, 3)),
            "roll": (np.float64, (m,)),
            "truss": (np.bool_, (m,)),
            "releases": (np.bool_, (m, 2, 6)),
            "offsets": (np.float64, (m, 2, 3)),
            "inextensible": (np.bool_, (m,)),
            "extensible": (np.bool_, (m,)),
            "restraints": (np.bool_, (n, 6)),
            "springs": (np.float64, (n, 6)),
            "end_springs": (np.float64, (m, 2, 6)),
            "alpha": (np.float64, (m,)),
        }
        for key, (dtype, shape) in specs.items():
            a: np.ndarray = np.asarray(getattr(self, key), dtype=dtype)
            if a.size == 0:
                a = a.reshape(shape)
            if a.shape != shape:
                raise ValueError(f"Frame.{key} must have shape {shape}, got {a.shape}")
            object.__setattr__(self, key, _readonly(a))
        defaults = {
            "node_sources": (None,) * n,
            "member_sources": (None,) * m,
            "node_labels": tuple(self.node_ids),
            "member_labels": tuple(self.member_ids),
            "section_names": ("",) * m,
            "material_names": ("",) * m,
            "section_sources": ("file",) * m,
            "material_sources": ("file",) * m,
        }
        for key, default in defaults.items():
            value = tuple(getattr(self, key)) or default
            if len(value) != len(default):
                raise ValueError(f"Frame.{key} must have {len(default)} entries, got {len(value)}")
            object.__setattr__(self, key, value)
        object.__setattr__(self, "node_ids", tuple(str(i) for i in self.node_ids))
        object.__setattr__(self, "member_ids", tuple(str(i) for i in self.member_ids))
        object.__setattr__(self, "_lookups", ({k: i for i, k in enumerate(self.node_ids)},
                                              {k: i for i, k in enumerate(self.member_ids)}))
        self._validate()

    # -- convenience -------------------------------------------------------
    @property
    def n_nodes(self) -> int:
        return len(self.node_ids)

    @property
    def n_members(self) -> int:
        return len(self.member_ids)

    def node_index(self, node_id: str) -> int:
        try:
            return self._node_lookup()[node_id]
        except KeyError:
            raise ModelError(f"node {node_id!r} does not exist") from None

    def member_index(self, member_id: str) -> int:
        try:
            return self._member_lookup()[member_id]
        except KeyError:
            raise ModelError(f"member {member_id!r} does not exist") from None

    def _node_lookup(self) -> dict[str, int]:
        return self._lookups[0]

    def _member_lookup(self) -> dict[str, int]:
        return self._lookups[1]

    def case(self, name: str) -> LoadCase:
        for c in self.load_cases:
            if c.name == name:
                return c
        raise ModelError(f"load case {name!r} does not exist")

    def replace(self, **changes) -> "Frame":
        """A copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    @property
    def lengths(self) -> FloatArray:
        return member_lengths(self)

    @property
    def supported(self) -> BoolArray:
        """(n,) True for the nodes a support holds: restraints, springs or an inclined support."""
        out: BoolArray = np.asarray(self.restraints.any(axis=1) | (self.springs > 0).any(axis=1), dtype=np.bool_)
        if self.inclined_supports:
            out = out.copy()
            out[[self.node_index(s.node) for s in self.inclined_supports]] = True
        return out

    # -- validation --------------------------------------------------------
    def _validate(self) -> None:
        n = self.n_nodes
        if len(set(self.node_ids)) != n:
            dup = _first_duplicate(self.node_ids)
            raise ModelError(f"node id {dup!r} is used twice")
        if len(set(self.member_ids)) != self.n_members:
            dup = _first_duplicate(self.member_ids)
            raise ModelError(f"member id {dup!r} is used twice")
        if not np.all(np.isfinite(self.nodes)):
            k = int(np.argwhere(~np.isfinite(self.nodes))[0, 0])
            raise ModelError(f"node {self.node_labels[k]}: coordinates are not finite numbers")
        if self.n_members:
            if self.members.min() < 0 or self.members.max() >= n:
                k = int(np.argwhere((self.members < 0) | (self.members >= n))[0, 0])
                raise ModelError(f"member {self.member_labels[k]}: end node index out of range")
            same = self.members[:, 0] == self.members[:, 1]
            if same.any():
                k = int(np.argmax(same))
                raise ModelError(f"member {self.member_labels[k]}: both ends on node {self.node_labels[self.members[k, 0]]}")
            lengths = member_lengths(self)
            scale = max(float(np.ptp(self.nodes, axis=0).max()) if n else 0.0, 1.0)
            short = lengths <= 1e-9 * scale
            if short.any():
                k = int(np.argmax(short))
                raise ModelError(f"member {self.member_labels[k]}: zero length")
            pairs = np.sort(self.members, axis=1)
            _, first, counts = np.unique(pairs, axis=0, return_index=True, return_counts=True)
            if (counts > 1).any():
                row = pairs[first[np.argmax(counts > 1)]]
                dups = [self.member_labels[k] for k in np.flatnonzero((pairs == row).all(axis=1))]
                raise ModelError(f"members {', '.join(dups)} join the same two nodes (duplicate members)")
            both = self.inextensible & self.extensible
            if both.any():
                k = int(np.argmax(both))
                raise ModelError(f"member {self.member_labels[k]}: both axially rigid and extensible")
            self._validate_properties()
            self._validate_end_springs()
        self._validate_inclined()
        if (self.springs < 0).any() or not np.all(np.isfinite(self.springs)):
            k = int(np.argwhere((self.springs < 0) | ~np.isfinite(self.springs))[0, 0])
            raise ModelError(f"node {self.node_labels[k]}: spring stiffness must be a finite number >= 0")
        self._validate_groups()
        self._validate_loads()

    def _validate_properties(self) -> None:
        frame_members = ~self.truss
        checks = [
            ("cross-section area A", self.A, np.ones_like(self.truss)),
            ("Young's modulus E", self.E, np.ones_like(self.truss)),
            ("shear modulus G", self.G, frame_members),
            ("second moment Iy", self.Iy, frame_members),
            ("second moment Iz", self.Iz, frame_members),
            ("torsion constant J", self.J, frame_members),
        ]
        for what, values, mask in checks:
            bad = mask & ~(np.isfinite(values) & (values > 0))
            if bad.any():
                k = int(np.argmax(bad))
                raise ModelError(f"member {self.member_labels[k]}: {what} must be a positive number, got {values[k]!r}")
        for what, values in (("shear area Avy", self.Avy), ("shear area Avz", self.Avz), ("density", self.density)):
            bad = ~np.isfinite(values) | (values < 0)
            if bad.any():
                k = int(np.argmax(bad))
                raise ModelError(f"member {self.member_labels[k]}: {what} must be a number >= 0, got {values[k]!r}")

    def _validate_inclined(self) -> None:
        seen: set[str] = set()
        for sup in self.inclined_supports:
            k = self.node_index(sup.node)
            label = self.node_labels[k]
            if sup.node in seen:
                raise ModelError(f"node {label}: two inclined supports")
            seen.add(sup.node)
            Q = np.asarray(sup.axes, float)
            if Q.shape != (3, 3) or not np.all(np.isfinite(Q)) or not np.allclose(Q @ Q.T, np.eye(3), atol=1e-6):
                raise ModelError(f"node {label}: the axes of its inclined support are not three orthogonal unit vectors")
            if len(sup.restrained) != 6 or not any(sup.restrained):
                raise ModelError(f"node {label}: an inclined support restrains nothing")
            if self.restraints[k].any() or (self.springs[k] > 0).any():
                raise ModelError(f"node {label}: an inclined support and restraints or springs in world axes at once")

    def _validate_end_springs(self) -> None:
        es = self.end_springs
        bad = ~np.isfinite(es) | (es < 0)
        if bad.any():
            k, end = (int(v) for v in np.argwhere(bad)[0][:2])
            raise ModelError(f"member {self.member_labels[k]}: end spring at end {'ij'[end]} must be a finite number >= 0")
        other = (es[:, :, :4] > 0).any(axis=(1, 2))
        if other.any():
            k = int(np.argmax(other))
            raise ModelError(f"member {self.member_labels[k]}: only rotational end springs about local y and z (My, Mz) "
                             "are supported")
        sprung = es > 0
        on_bar = sprung.any(axis=(1, 2)) & self.truss
        if on_bar.any():
            k = int(np.argmax(on_bar))
            raise ModelError(f"member {self.member_labels[k]}: an axial bar (truss member) has no end moments to spring")
        clash = sprung & self.releases
        if clash.any():
            k, end, c = (int(v) for v in np.argwhere(clash)[0])
            raise ModelError(f"member {self.member_labels[k]}: {ACTION_NAMES[c]} at end {'ij'[end]} is both released "
                             "and sprung")

    def _validate_groups(self) -> None:
        known = set(self.node_ids)
        groups: tuple[RigidBody | Diaphragm, ...] = (*self.rigid_bodies, *self.diaphragms)
        for group in groups:
            kind = "rigid body" if isinstance(group, RigidBody) else "diaphragm"
            missing = [k for k in group.nodes if k not in known]
            if missing:
                raise ModelError(f"{kind} {group.name!r}: node {missing[0]!r} does not exist")
            if len(set(group.nodes)) < 2:
                raise ModelError(f"{kind} {group.name!r}: needs at least two distinct nodes")
            if isinstance(group, Diaphragm) and np.linalg.norm(group.normal) == 0:
                raise ModelError(f"diaphragm {group.name!r}: normal is a zero vector")

    def _validate_loads(self) -> None:
        nodes, members = set(self.node_ids), self._member_lookup()
        names = [c.name for c in self.load_cases]
        if len(set(names)) != len(names):
            raise ModelError(f"load case {_first_duplicate(names)!r} is defined twice")
        lengths = member_lengths(self) if self.n_members else np.zeros(0)
        for case in self.load_cases:
            where = f"load case {case.name!r}"
            for nload in case.nodal:
                if nload.node not in nodes:
                    raise ModelError(f"{where}: nodal load on missing node {nload.node!r}")
                if len(nload.values) != 6 or not np.all(np.isfinite(nload.values)):
                    raise ModelError(f"{where}: nodal load on node {nload.node!r} needs six finite values")
            for load in case.member:
                if load.member not in members:
                    raise ModelError(f"{where}: load on missing member {load.member!r}")
                if load.direction not in _AXIS_INDEX or load.axes not in ("local", "global"):
                    raise ModelError(f"{where}: load on member {load.member!r} has direction {load.direction!r} in {load.axes!r} axes")
                L = lengths[members[load.member]]
                positions = load_positions(load, L)
                values = (load.w1, load.w2 if load.w2 is not None else load.w1) if isinstance(load, LineLoad) else (load.value,)
                if not (all(map(math.isfinite, positions)) and all(map(math.isfinite, values))):
                    raise ModelError(f"{where}: load on member {load.member!r} has a value that is not a finite number")
                if min(positions) < -1e-9 * L or max(positions) > L * (1 + 1e-9) or positions[-1] < positions[0]:
                    raise ModelError(f"{where}: load on member {load.member!r} lies outside the member (0..{L:.6g} m)")
            for t in case.temperature:
                if t.member not in members:
                    raise ModelError(f"{where}: temperature change of missing member {t.member!r}")
                k = members[t.member]
                if not math.isfinite(t.delta):
                    raise ModelError(f"{where}: temperature change of member {self.member_labels[k]} is not a finite number")
                if t.delta and not (math.isfinite(self.alpha[k]) and self.alpha[k] > 0):
                    raise ModelError(f"{where}: member {self.member_labels[k]} has a temperature change but its material "
                                     f"{self.material_names[k] or '(unnamed)'!r} no coefficient of thermal expansion")
            for s in case.settlements:
                if s.node not in nodes:
                    raise ModelError(f"{where}: settlement of missing node {s.node!r}")
                if s.dof not in DOF_NAMES:
                    raise ModelError(f"{where}: settlement of node {s.node!r} names component {s.dof!r}, not one of {DOF_NAMES}")
                k = self.node_index(s.node)
                if not self.restraints[k, DOF_NAMES.index(s.dof)]:
                    raise ModelError(f"{where}: settlement {s.dof} of node {self.node_labels[k]} acts on a component that no support restrains")
        case_names = set(names)
        combo_names = [c.name for c in self.combinations]
        if len(set(combo_names)) != len(combo_names):
            raise ModelError(f"combination {_first_duplicate(combo_names)!r} is defined twice")
        for combo in self.combinations:
            if combo.name in case_names:
                raise ModelError(f"combination {combo.name!r} has the name of a load case")
            for case_name, factor in combo.factors:
                if case_name not in case_names:
                    raise ModelError(f"combination {combo.name!r}: load case {case_name!r} does not exist")
                if not math.isfinite(factor):
                    raise ModelError(f"combination {combo.name!r}: factor of {case_name!r} is not a finite number")


def _first_duplicate(items: Sequence[str]) -> str:
    seen: set[str] = set()
    for item in items:
        if item in seen:
            return item
        seen.add(item)
    return ""


def load_positions(load: LineLoad | PointLoad, length: float) -> tuple[float, ...]:
    """Start/end (line load) or position (point load) in metres from end i."""
    scale = length if load.relative else 1.0
    if isinstance(load, LineLoad):
        end = length if load.end is None else load.end * scale
        return (load.start * scale, end)
    return (load.position * scale,)


# --------------------------------------------------------------------------- geometry
def member_ends(frame: Frame) -> tuple[FloatArray, FloatArray]:
    """Coordinates ``(m,3)`` of the member ends, offsets included."""
    xi = frame.nodes[frame.members[:, 0]] + frame.offsets[:, 0]
    xj = frame.nodes[frame.members[:, 1]] + frame.offsets[:, 1]
    return xi, xj


def member_lengths(frame: Frame) -> FloatArray:
    """Lengths ``(m,)`` between the member ends (offsets included), m."""
    xi, xj = member_ends(frame)
    return np.linalg.norm(xj - xi, axis=1)


def member_axes(frame: Frame) -> FloatArray:
    """Rotation matrices ``(m,3,3)``: row k is local axis k in global components.

    ``R @ v_global`` gives local components.
    """
    xi, xj = member_ends(frame)
    ex = xj - xi
    ex /= np.linalg.norm(ex, axis=1)[:, None]
    ref = np.array(frame.ref, dtype=float)
    default = ~np.all(np.isfinite(ref), axis=1)
    if default.any():
        vertical = np.abs(ex[:, 2]) > 1.0 - 1e-9
        ref[default] = np.where(vertical[default, None], [-1.0, 0.0, 0.0], [0.0, 0.0, 1.0])
    ez = ref - np.sum(ref * ex, axis=1)[:, None] * ex
    norm = np.linalg.norm(ez, axis=1)
    bad = norm < 1e-9 * np.maximum(np.linalg.norm(ref, axis=1), 1e-300)
    if bad.any():
        k = int(np.argmax(bad))
        raise ModelError(f"member {frame.member_labels[k]}: reference vector {tuple(frame.ref[k])} is parallel to the member axis")
    ez /= norm[:, None]
    ey = np.cross(ez, ex)
    if np.any(frame.roll != 0.0):
        c, s = np.cos(frame.roll)[:, None], np.sin(frame.roll)[:, None]
        ey, ez = c * ey + s * ez, -s * ey + c * ez
    return np.stack([ex, ey, ez], axis=1)


# --------------------------------------------------------------------------- builder
_RELEASE_WORDS = {"pinned": ("My", "Mz"), "pin": ("My", "Mz"), "hinge": ("My", "Mz"), "fixed": ()}
_SUPPORT_WORDS = {
    "fixed": DOF_NAMES,
    "pinned": ("ux", "uy", "uz"),
    "pin": ("ux", "uy", "uz"),
    "free": (),
}


def _parse_components(spec: str | Iterable[str], names: Sequence[str], words: Mapping[str, Sequence[str]]) -> tuple[bool, ...]:
    tokens = spec.replace(",", " ").split() if isinstance(spec, str) else list(spec)
    flags = [False] * len(names)
    for token in tokens:
        expanded = words.get(token, (token,))
        for name in expanded:
            if name not in names:
                raise ValueError(f"{name!r} is not one of {', '.join(names)} or {', '.join(words)}")
            flags[names.index(name)] = True
    return tuple(flags)


@dataclass
class FrameBuilder:
    """Build a `Frame` by hand.

    Examples
    --------
    >>> from analysis.model import FrameBuilder, Section, Material, LoadCase, NodalLoad
    >>> b = FrameBuilder()
    >>> steel = Material("S355", E=210e9, G=81e9, density=7850)
    >>> ipe = Section("IPE 300", A=53.8e-4, Iy=8356e-8, Iz=604e-8, J=20.1e-8)
    >>> b.add_node("N1", (0, 0, 0), support="fixed")
    'N1'
    >>> b.add_node("N2", (3, 0, 0))
    'N2'
    >>> b.add_member("B1", "N1", "N2", ipe, steel)
    'B1'
    >>> b.add_case(LoadCase("tip", nodal=(NodalLoad("N2", (0, 0, -1000, 0, 0, 0)),)))
    >>> frame = b.build()
    >>> frame.n_nodes, frame.n_members
    (2, 1)
    """

    name: str = ""
    _nodes: dict[str, dict] = field(default_factory=dict)
    _members: dict[str, dict] = field(default_factory=dict)
    _cases: list[LoadCase] = field(default_factory=list)
    _combos: list[Combination] = field(default_factory=list)
    _inclined: list[InclinedSupport] = field(default_factory=list)
    _rigid: list[RigidBody] = field(default_factory=list)
    _diaphragms: list[Diaphragm] = field(default_factory=list)

    def add_node(self, node_id: str, xyz: Sequence[float], support: str | Iterable[str] | None = None,
                 springs: Mapping[str, float] | None = None, source: str | None = None, label: str | None = None) -> str:
        """Add a node; ``support`` is 'fixed', 'pinned' or components like 'ux uz ry'."""
        if node_id in self._nodes:
            raise ModelError(f"node id {node_id!r} is used twice")
        self._nodes[node_id] = {"xyz": tuple(float(v) for v in xyz), "restraint": [False] * 6,
                                "springs": [0.0] * 6, "source": source, "label": label or node_id}
        if support is not None:
            self.support(node_id, support)
        for dof, k in (springs or {}).items():
            self.spring(node_id, dof, k)
        return node_id

    def support(self, node_id: str, components: str | Iterable[str]) -> None:
        """Restrain components of a node ('fixed', 'pinned', or e.g. 'ux uz')."""
        flags = _parse_components(components, DOF_NAMES, _SUPPORT_WORDS)
        node = self._node(node_id)
        node["restraint"] = [a or b for a, b in zip(node["restraint"], flags)]

    def inclined_support(self, node_id: str, axes: Sequence[Sequence[float]], components: str | Iterable[str],
                         source: str | None = None) -> None:
        """Restrain components of a node along the support's own ``axes`` (rows: its x, y, z in world axes).

        Axes given to a few digits (``0.866``) are made exactly orthonormal (the nearest rotation);
        axes further than 1 % from orthonormal are an error.
        """
        self._node(node_id)
        flags = _parse_components(components, DOF_NAMES, _SUPPORT_WORDS)
        M = np.asarray(axes, dtype=float)
        if M.shape == (3, 3) and np.all(np.isfinite(M)) and np.allclose(M @ M.T, np.eye(3), atol=1e-2):
            U, _, Vt = np.linalg.svd(M)
            M = U @ Vt  # the nearest orthonormal rows (polar decomposition)
        Q = tuple(tuple(float(v) for v in row) for row in M.reshape(-1, 3)) if M.size == 9 else tuple(map(tuple, M))
        self._inclined.append(InclinedSupport(node_id, Q, tuple(flags), source))  # type: ignore[arg-type]

    def thermal_expansion(self, member_id: str, alpha: float) -> None:
        """Set a member's coefficient of thermal expansion (1/K), replacing its material's."""
        try:
            mm = self._members[member_id]
        except KeyError:
            raise ModelError(f"member {member_id!r} does not exist") from None
        mm["material"] = dataclasses.replace(mm["material"], alpha=float(alpha))

    def spring(self, node_id: str, dof: str, stiffness: float) -> None:
        """An elastic support: N/m for translations, N*m/rad for rotations."""
        if dof not in DOF_NAMES:
            raise ValueError(f"{dof!r} is not one of {', '.join(DOF_NAMES)}")
        self._node(node_id)["springs"][DOF_NAMES.index(dof)] = float(stiffness)

    def _node(self, node_id: str) -> dict:
        try:
            return self._nodes[node_id]
        except KeyError:
            raise ModelError(f"node {node_id!r} does not exist") from None

    def add_member(self, member_id: str, node_i: str, node_j: str, section: Section, material: Material, *,
                   ref: Sequence[float] | None = None, roll: float = 0.0, truss: bool = False,
                   release_i: str | Iterable[str] = (), release_j: str | Iterable[str] = (),
                   offset_i: Sequence[float] = (0.0, 0.0, 0.0), offset_j: Sequence[float] = (0.0, 0.0, 0.0),
                   inextensible: bool = False, extensible: bool = False, source: str | None = None,
                   label: str | None = None, spring_i: Mapping[str, float] | None = None,
                   spring_j: Mapping[str, float] | None = None) -> str:
        """Add a member from ``node_i`` to ``node_j``.

        ``release_i``/``release_j`` name released end actions ('My Mz', or
        'pinned' for both bending moments); ``spring_i``/``spring_j`` make an
        end semi-rigid: ``{"My": k}`` and/or ``{"Mz": k}``, a rotational spring
        of k N*m/rad between the member end and its joint about the member's
        local axis; ``truss=True`` makes an axial-only bar.
        ``inextensible=True`` makes this member axially rigid in every
        analysis; ``extensible=True`` keeps it extensible even under
        ``AnalysisOptions.inextensible``.
        """
        if inextensible and extensible:
            raise ModelError(f"member {label or member_id}: both axially rigid and extensible")
        if member_id in self._members:
            raise ModelError(f"member id {member_id!r} is used twice")
        for node_id in (node_i, node_j):
            if node_id not in self._nodes:
                raise ModelError(f"member {label or member_id}: end node {node_id!r} does not exist")
        rel = (_parse_components(release_i, ACTION_NAMES, _RELEASE_WORDS),
               _parse_components(release_j, ACTION_NAMES, _RELEASE_WORDS))
        springs = [[0.0] * 6, [0.0] * 6]
        for end, given in enumerate((spring_i, spring_j)):
            for name, value in (given or {}).items():
                if name not in ("My", "Mz"):
                    raise ModelError(f"member {label or member_id}: end spring {name!r}: only My and Mz (rotational "
                                     "springs about the member's local y and z) are supported")
                springs[end][ACTION_NAMES.index(name)] = float(value)
        self._members[member_id] = {
            "ends": (node_i, node_j), "section": section, "material": material,
            "ref": tuple(ref) if ref is not None else (math.nan,) * 3, "roll": float(roll), "truss": bool(truss),
            "releases": rel, "offsets": (tuple(offset_i), tuple(offset_j)), "inextensible": bool(inextensible),
            "extensible": bool(extensible), "source": source, "label": label or member_id, "springs": springs,
        }
        return member_id

    def add_case(self, case: LoadCase) -> None:
        self._cases.append(case)

    def add_combination(self, combination: Combination) -> None:
        self._combos.append(combination)

    def add_rigid_body(self, body: RigidBody) -> None:
        self._rigid.append(body)

    def add_diaphragm(self, diaphragm: Diaphragm) -> None:
        self._diaphragms.append(diaphragm)

    def build(self) -> Frame:
        node_ids = list(self._nodes)
        index = {k: i for i, k in enumerate(node_ids)}
        nodes = [self._nodes[k] for k in node_ids]
        mems = list(self._members.values())

        def column(key: str) -> list:
            return [mm[key] for mm in mems]

        def shared(objects: list) -> tuple[list, npt.NDArray[np.intp]]:
            """The distinct objects (members share a few sections and materials) and each member's index."""
            first: dict[int, int] = {}
            distinct: list = []
            where = []
            for obj in objects:
                k = first.get(id(obj))
                if k is None:
                    k = first[id(obj)] = len(distinct)
                    distinct.append(obj)
                where.append(k)
            return distinct, np.array(where, dtype=np.intp)

        sections, s_at = shared(column("section"))
        materials, m_at = shared(column("material"))

        def spread(distinct: list, at: npt.NDArray[np.intp], name: str) -> FloatArray:
            """One attribute of the distinct objects, as a column over the members."""
            return np.array([getattr(x, name) for x in distinct], dtype=np.float64).reshape(-1)[at]

        def of_sections(name: str) -> FloatArray:
            return spread(sections, s_at, name)

        def of_materials(name: str) -> FloatArray:
            return spread(materials, m_at, name)

        ends = column("ends")
        return Frame(
            node_ids=tuple(node_ids),
            nodes=np.array([nd["xyz"] for nd in nodes], dtype=float).reshape(-1, 3),
            member_ids=tuple(self._members),
            members=np.array([[index[i], index[j]] for i, j in ends], dtype=np.int32).reshape(-1, 2),
            A=of_sections("A"),
            Iy=of_sections("Iy"),
            Iz=of_sections("Iz"),
            J=of_sections("J"),
            Avy=of_sections("Avy"),
            Avz=of_sections("Avz"),
            E=of_materials("E"),
            G=of_materials("shear_modulus"),
            density=of_materials("density"),
            ref=np.array(column("ref"), dtype=float).reshape(-1, 3),
            roll=np.array(column("roll"), dtype=np.float64),
            truss=np.array(column("truss"), dtype=np.bool_),
            releases=np.array(column("releases"), dtype=bool).reshape(-1, 2, 6),
            offsets=np.array(column("offsets"), dtype=float).reshape(-1, 2, 3),
            inextensible=np.array(column("inextensible"), dtype=np.bool_),
            extensible=np.array(column("extensible"), dtype=np.bool_),
            end_springs=np.array(column("springs"), dtype=float).reshape(-1, 2, 6),
            alpha=of_materials("alpha"),
            restraints=np.array([nd["restraint"] for nd in nodes], dtype=bool).reshape(-1, 6),
            springs=np.array([nd["springs"] for nd in nodes], dtype=float).reshape(-1, 6),
            rigid_bodies=tuple(self._rigid),
            inclined_supports=tuple(self._inclined),
            diaphragms=tuple(self._diaphragms),
            load_cases=tuple(self._cases),
            combinations=tuple(self._combos),
            node_sources=tuple(nd["source"] for nd in nodes),
            member_sources=tuple(column("source")),
            node_labels=tuple(nd["label"] for nd in nodes),
            member_labels=tuple(column("label")),
            section_names=tuple(sections[k].name for k in s_at.tolist()),
            material_names=tuple(materials[k].name for k in m_at.tolist()),
            name=self.name,
            section_sources=tuple(sections[k].source for k in s_at.tolist()),
            material_sources=tuple(materials[k].source for k in m_at.tolist()),
        )
