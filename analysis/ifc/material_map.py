"""The user's material map: IFC material names to grades or values (``--materials FILE.toml``).

Format (TOML; values SI — Pa and kg/m3 — or strings with a unit)::

    # elements with no material at all (optional)
    default = "S235"

    [materials]                       # IFC material name (exact, or a glob) -> what it is
    "STEEL/S235JR" = "S235"           # a grade from the grade table, in any spelling it reads
    "Concrete*" = "C30/37"            # a glob: *, ?, [abc]; matched without regard to case
    "Solid" = { grade = "S355", density = 7850 }          # a grade with some values replaced
    "Bearing pad" = { E = "5 MPa", nu = 0.45, density = 1300 }   # explicit values

    [classes]                         # fallback per IFC class, for elements whose material
    IfcMember = "C24"                 # is not identified otherwise (or is absent)
    IfcColumn = { grade = "C30/37" }

Each entry is a grade name (`analysis.ifc.materials.find_grade`: ``S355J2``,
``A992``, ``C30/37``, ``GL24h``, ``EN AW-6082 T6``, or a word such as
``steel``), or a table with ``grade`` and/or ``E``, ``G``, ``nu`` (or
``poisson``), ``density``; without a grade it needs ``E`` and, for frame
members, ``G`` or ``nu``. Names match exactly (ignoring case and surrounding
spaces) before any glob; globs are tried in the order of the file. A class
key matches that class and its subtypes (``IfcBeam`` also matches
``IfcBeamStandardCase``); the first matching key in file order wins.
Values the IFC file gives always win over the map.
"""
from __future__ import annotations

import fnmatch
import math
import os
import re
from dataclasses import dataclass, field
from typing import Any

from ..errors import AnalysisError

__all__ = ["MaterialMap", "MaterialSpec", "load_material_map", "parse_material_map", "snippet"]

_KEYS = {"grade", "E", "G", "nu", "poisson", "density"}
_TOP_KEYS = {"default", "materials", "classes"}
# unit -> SI factor; moduli in Pa, densities in kg/m3
_MODULUS_UNITS = {"pa": 1.0, "kpa": 1e3, "mpa": 1e6, "gpa": 1e9, "n/mm2": 1e6, "n/mm²": 1e6, "n/m2": 1.0,
                  "kn/m2": 1e3, "kn/mm2": 1e9, "ksi": 6.894757293168361e6, "psi": 6.894757293168361e3}
_DENSITY_UNITS = {"kg/m3": 1.0, "kg/m³": 1.0, "t/m3": 1e3, "t/m³": 1e3, "g/cm3": 1e3, "lb/ft3": 16.018463373960138}
_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S*)\s*$")


@dataclass(frozen=True, slots=True)
class MaterialSpec:
    """What one map entry says: SI ``values`` (of E, G, nu, density) and the grade named, if any."""

    values: dict[str, float]
    grade: str | None = None
    where: str = ""


@dataclass(frozen=True)
class MaterialMap:
    """A parsed material map (see the module docstring)."""

    path: str
    names: tuple[tuple[str, MaterialSpec], ...] = ()
    classes: tuple[tuple[str, MaterialSpec], ...] = ()
    default: MaterialSpec | None = None
    _exact: dict[str, tuple[str, MaterialSpec]] = field(default_factory=dict, repr=False, compare=False)

    def __post_init__(self) -> None:
        for key, spec in self.names:
            self._exact.setdefault(key.strip().casefold(), (key, spec))

    def for_name(self, name: str | None) -> tuple[str, MaterialSpec] | None:
        """(map key, spec) for an IFC material name: exact first, then the globs in file order."""
        folded = (name or "").strip().casefold()
        hit = self._exact.get(folded)
        if hit is not None:
            return hit
        for key, spec in self.names:
            if _is_glob(key) and fnmatch.fnmatchcase(folded, key.strip().casefold()):
                return key, spec
        return None

    def for_class(self, ifc_file: Any, cls: str) -> tuple[str, MaterialSpec] | None:
        """(class key, spec) of the first class key that ``cls`` is (or is a subtype of)."""
        for key, spec in self.classes:
            if _is_subtype(ifc_file, cls, key):
                return key, spec
        return None


def _is_glob(key: str) -> bool:
    return any(c in key for c in "*?[")


def _is_subtype(ifc_file: Any, cls: str, key: str) -> bool:
    if cls.lower() == key.lower():
        return True
    try:
        import ifcopenshell.ifcopenshell_wrapper as wrapper

        decl: Any = wrapper.schema_by_name(ifc_file.schema_identifier if hasattr(ifc_file, "schema_identifier")
                                           else ifc_file.schema).declaration_by_name(cls)
        while decl is not None:
            if decl.name().lower() == key.lower():
                return True
            decl = decl.supertype()
    except Exception:  # an unknown class name: only the exact name matches
        return False
    return False


def _number(value: Any, units: dict[str, float], what: str) -> float:
    if isinstance(value, bool):
        raise ValueError(f"{what}: {value!r} is not a number")
    if isinstance(value, (int, float)):
        number = float(value)
    elif isinstance(value, str):
        m = _NUMBER_UNIT.match(value)
        if m is None:
            raise ValueError(f"{what}: {value!r} is not a number with a unit")
        unit = m.group(2).lower().replace("^", "").replace("**", "")
        if unit and unit not in units:
            raise ValueError(f"{what}: unit {m.group(2)!r} is not one of {', '.join(sorted(set(units)))}")
        number = float(m.group(1)) * (units[unit] if unit else 1.0)
    else:
        raise ValueError(f"{what}: {value!r} is not a number")
    if not math.isfinite(number):
        raise ValueError(f"{what}: {value!r} is not a finite number")
    return number


def _spec(value: Any, where: str) -> MaterialSpec:
    """A map entry (a grade name or a table) as SI values."""
    from .materials import find_grade

    if isinstance(value, str):
        value = {"grade": value}
    if not isinstance(value, dict):
        raise ValueError(f"{where}: give a grade name or a table such as {{ grade = \"S355\" }} or "
                         f"{{ E = 210e9, G = 81e9, density = 7850 }}, not {value!r}")
    unknown = set(value) - _KEYS
    if unknown:
        raise ValueError(f"{where}: unknown key{'s' if len(unknown) > 1 else ''} {', '.join(sorted(unknown))} "
                         f"(use grade, E, G, nu, density)")
    values: dict[str, float] = {}
    grade_name = None
    if "grade" in value:
        text = value["grade"]
        if not isinstance(text, str) or not text.strip():
            raise ValueError(f"{where}: no grade given (write one, e.g. \"S355\", \"C30/37\", \"C24\", \"GL24h\", "
                             "or give E, G and density)")
        try:
            grade = find_grade(text.strip())
        except ValueError as exc:
            raise ValueError(f"{where}: {exc}") from None
        grade_name = grade.name
        values = {"E": grade.E, "G": grade.G, "density": grade.density}
        if grade.poisson is not None:
            values["nu"] = grade.poisson
    overrides: dict[str, float] = {}
    if "E" in value:
        overrides["E"] = _number(value["E"], _MODULUS_UNITS, f"{where}: E")
    if "G" in value:
        overrides["G"] = _number(value["G"], _MODULUS_UNITS, f"{where}: G")
    for key in ("nu", "poisson"):
        if key in value:
            overrides["nu"] = _number(value[key], {}, f"{where}: {key}")
    if "density" in value:
        overrides["density"] = _number(value["density"], _DENSITY_UNITS, f"{where}: density")
    if ("E" in overrides or "nu" in overrides) and "G" not in overrides:
        values.pop("G", None)  # a new E or nu: G follows from them, not from the grade
        if "nu" not in overrides and "nu" not in values and grade_name is not None:
            # a grade given without nu (timber): keep its G / E ratio
            grade = find_grade(grade_name)
            values["G"] = overrides.get("E", grade.E) * grade.G / grade.E
    values.update(overrides)
    if "E" not in values:
        raise ValueError(f"{where}: give a grade or E")
    for key, v in values.items():
        if key in ("E", "G") and not v > 0:
            raise ValueError(f"{where}: {key} must be > 0 (Pa), got {v!r}")
        if key == "density" and v < 0:
            raise ValueError(f"{where}: density must be >= 0 (kg/m3), got {v!r}")
        if key == "nu" and not -1.0 < v < 0.5:
            raise ValueError(f"{where}: nu must lie between -1 and 0.5, got {v!r}")
    return MaterialSpec(values, grade_name, where)


def parse_material_map(doc: dict[str, Any], path: str = "<material map>") -> MaterialMap:
    """A `MaterialMap` from a parsed TOML document.

    Raises
    ------
    AnalysisError
        Unknown keys, grades or units, or values out of range (the message names the entry).
    """
    name = os.path.basename(path)
    try:
        unknown = set(doc) - _TOP_KEYS
        if unknown:
            raise ValueError(f"unknown top-level key{'s' if len(unknown) > 1 else ''} "
                             f"{', '.join(sorted(unknown))} (use default, [materials], [classes]; top-level keys "
                             "go before the first [table])")
        materials = doc.get("materials", {})
        classes = doc.get("classes", {})
        for what, table in (("materials", materials), ("classes", classes)):
            if not isinstance(table, dict):
                raise ValueError(f"[{what}] must be a table")
        names = tuple((str(k), _spec(v, f"[materials] {k!r}")) for k, v in materials.items())
        class_specs = []
        for k, v in classes.items():
            if not re.fullmatch(r"Ifc[A-Za-z0-9]+", str(k)):
                raise ValueError(f"[classes] {k!r}: not an IFC class name (e.g. IfcBeam, IfcColumn, IfcMember)")
            class_specs.append((str(k), _spec(v, f"[classes] {k}")))
        default = _spec(doc["default"], "default") if "default" in doc else None
    except ValueError as exc:
        raise AnalysisError(f"{path}: {exc}") from None
    return MaterialMap(name, names, tuple(class_specs), default)


def load_material_map(path: str | os.PathLike[str]) -> MaterialMap:
    """Read a material map file (TOML, see the module docstring).

    Raises
    ------
    AnalysisError
        The file is missing, unreadable, not TOML, or an entry is wrong (the message names it).
    """
    path = os.fspath(path)
    mm = parse_material_map(read_toml(path, "material map"), path)
    return MaterialMap(path, mm.names, mm.classes, mm.default)


def read_toml(path: str, what: str) -> dict[str, Any]:
    """The TOML document in ``path`` (a user's map: ``what`` names it in the messages).

    Raises
    ------
    AnalysisError
        The file is missing, not a regular file, unreadable or not TOML.
    """
    import tomllib

    if not os.path.isfile(path):
        raise AnalysisError(f"{path}: {what} not found (or not a regular file)")
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise AnalysisError(f"{path}: not a valid TOML {what} ({exc})") from None
    except OSError as exc:
        raise AnalysisError(f"{path}: cannot be read ({exc.strerror or exc})") from None


def _toml_key(name: str) -> str:
    return '"' + name.replace("\\", "\\\\").replace('"', '\\"') + '"'


def snippet(unknown: list[tuple[str, int, list[str]]]) -> str:
    """A ready-to-edit material map for unknown materials: ``(name, element count, IFC classes)``.

    Every grade is left empty (``""``): the map is refused until each is filled in.
    """
    lines = ["# materials.toml: fill in a grade (S355, A992, C30/37, C24, GL24h, EN AW-6082 T6 ...)",
             "# or values, e.g. { E = 210e9, G = 81e9, density = 7850 }  (Pa, kg/m3)",
             "[materials]"]
    width = min(max((len(_toml_key(n)) for n, _, _ in unknown), default=0), 40)
    for name, count, classes in unknown:
        key = _toml_key(name)
        lines.append(f"{key:<{width}} = \"\"   # {count} element{'s' if count != 1 else ''}: {', '.join(classes)}")
    return "\n".join(lines)
