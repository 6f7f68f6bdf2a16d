"""The user's section map: sections for members the file gives none, or a poor one (``--sections FILE.toml``).

An analysis model exported without profiles, or an architectural model whose
steel beams are boxes, has no section an engineer would accept. The map says
what the sections are. Format (TOML; numbers SI — m² and m⁴ — or strings
with a unit: ``"53.8 cm2"``, ``"8356 cm4"``, ``"5380 mm2"``, ``"11.3 in4"``)::

    # members with no profile in the file (and, on the physical route, no usable body)
    default = { A = "53.8 cm2", Iy = "3692 cm4", Iz = "1336 cm4", J = "20.98 cm4", name = "HEA 200" }

    [sections]                        # a name (exact, or a glob) -> the section, replacing the file's
    "B-*" = { A = "53.8 cm2", Iy = "8356 cm4", Iz = "604 cm4", J = "20.1 cm4", name = "IPE 300" }
    "Column type 2" = { A = 0.0149, Iy = 2.517e-4, Iz = 8.563e-5, J = 1.852e-6 }

A key is matched against the element's ``Name``, its type's ``Name``, its
``ObjectType`` and its profile's ``ProfileName``, without regard to case:
exact names before any glob, globs in the order of the file. ``Iy`` is
about the member's local y (the strong axis of a beam whose local z is its
depth, as the handbooks' Iy), ``Iz`` about local z; ``J`` is the torsion
constant. ``Avy`` and ``Avz`` (shear areas, used with ``--shear``) are
optional; without them the member is rigid in shear. An entry replaces the
section's constants only: where the member lies and how its ends are offset
still follow the file's geometry. Every member that gets a section from the
map says so in the results (``section.source`` = ``user map``).
"""
from __future__ import annotations

import fnmatch
import os
from dataclasses import dataclass, field
from typing import Any, Iterable

from ..errors import AnalysisError
from ..model import Section
from .material_map import _is_glob, _number, _toml_key, read_toml

__all__ = ["SectionMap", "load_section_map", "parse_section_map", "section_snippet"]

_AREA_UNITS = {"m2": 1.0, "m²": 1.0, "cm2": 1e-4, "cm²": 1e-4, "mm2": 1e-6, "mm²": 1e-6, "in2": 0.0254 ** 2,
               "in²": 0.0254 ** 2}
_INERTIA_UNITS = {"m4": 1.0, "m⁴": 1.0, "cm4": 1e-8, "cm⁴": 1e-8, "mm4": 1e-12, "mm⁴": 1e-12, "in4": 0.0254 ** 4,
                  "in⁴": 0.0254 ** 4}
_FIELDS = {"A": _AREA_UNITS, "Iy": _INERTIA_UNITS, "Iz": _INERTIA_UNITS, "J": _INERTIA_UNITS, "Avy": _AREA_UNITS,
           "Avz": _AREA_UNITS}
_TOP_KEYS = {"default", "sections"}


@dataclass(frozen=True)
class SectionMap:
    """A parsed section map (see the module docstring)."""

    path: str
    names: tuple[tuple[str, Section], ...] = ()
    default: Section | None = None
    _exact: dict[str, tuple[str, Section]] = field(default_factory=dict, repr=False, compare=False)

    def __post_init__(self) -> None:
        for key, section in self.names:
            self._exact.setdefault(key.strip().casefold(), (key, section))

    def note(self, used: dict[str, int], what: str) -> str:
        """The reader's note of the entries used: ``used`` maps a key to how many ``what`` (members,
        elements) took their section from it."""
        return (f"Sections from the section map {os.path.basename(self.path)}: "
                + ", ".join(f"{key!r} {n} {what}{'s' if n != 1 else ''}" for key, n in used.items()))

    def for_names(self, names: Iterable[str | None]) -> tuple[str, Section] | None:
        """(map key, section) for the first of an element's names that an entry names exactly, else the first
        glob (in file order) that any of them matches; None where no entry applies."""
        folded = [n.strip().casefold() for n in names if n and n.strip()]
        for name in folded:
            hit = self._exact.get(name)
            if hit is not None:
                return hit
        for key, section in self.names:
            if _is_glob(key):
                pattern = key.strip().casefold()
                if any(fnmatch.fnmatchcase(name, pattern) for name in folded):
                    return key, section
        return None


def _section(value: Any, where: str, fallback_name: str) -> Section:
    if not isinstance(value, dict):
        raise ValueError(f"{where}: give a table such as {{ A = \"53.8 cm2\", Iy = \"8356 cm4\", Iz = \"604 cm4\", "
                         f"J = \"20.1 cm4\" }}, not {value!r}")
    unknown = set(value) - set(_FIELDS) - {"name"}
    if unknown:
        raise ValueError(f"{where}: unknown key{'s' if len(unknown) > 1 else ''} {', '.join(sorted(unknown))} "
                         "(use A, Iy, Iz, J, and optionally Avy, Avz, name)")
    missing = [k for k in ("A", "Iy", "Iz", "J") if k not in value]
    if missing:
        raise ValueError(f"{where}: give {', '.join(missing)} as well (A in m² or e.g. \"53.8 cm2\"; Iy, Iz, J in m⁴ "
                         "or e.g. \"8356 cm4\")")
    values = {k: _number(value[k], units, f"{where}: {k}") for k, units in _FIELDS.items() if k in value}
    for k in ("A", "Iy", "Iz", "J"):
        if not values[k] > 0:
            raise ValueError(f"{where}: {k} must be > 0, got {value[k]!r}")
    for k in ("Avy", "Avz"):
        if k in values and values[k] < 0:
            raise ValueError(f"{where}: {k} must be >= 0, got {value[k]!r}")
    name = value.get("name", fallback_name)
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"{where}: name must be a text")
    return Section(name.strip(), values["A"], values["Iy"], values["Iz"], values["J"], values.get("Avy", 0.0),
                   values.get("Avz", 0.0), source="user map")


def parse_section_map(doc: dict[str, Any], path: str = "<section map>") -> SectionMap:
    """A `SectionMap` from a parsed TOML document.

    Raises
    ------
    AnalysisError
        Unknown keys or units, missing or non-positive values (the message names the entry).
    """
    try:
        unknown = set(doc) - _TOP_KEYS
        if unknown:
            raise ValueError(f"unknown top-level key{'s' if len(unknown) > 1 else ''} {', '.join(sorted(unknown))} "
                             "(use default and [sections]; top-level keys go before the first [table])")
        table = doc.get("sections", {})
        if not isinstance(table, dict):
            raise ValueError("[sections] must be a table")
        names = tuple((str(k), _section(v, f"[sections] {k!r}", str(k))) for k, v in table.items())
        default = _section(doc["default"], "default", "default section") if "default" in doc else None
    except ValueError as exc:
        raise AnalysisError(f"{path}: {exc}") from None
    return SectionMap(path, names, default)


def load_section_map(path: str | os.PathLike[str]) -> SectionMap:
    """Read a section map file (TOML, see the module docstring).

    Raises
    ------
    AnalysisError
        The file is missing, unreadable, not TOML, or an entry is wrong (the message names it).
    """
    path = os.fspath(path)
    return parse_section_map(read_toml(path, "section map"), path)


def section_snippet(names: list[tuple[str, int]]) -> str:
    """A ready-to-edit section map for members without a section: a default and one entry per name (with
    its member count), every value to be filled in (a zero is refused when the map is read)."""
    blank = '{ A = "0 cm2", Iy = "0 cm4", Iz = "0 cm4", J = "0 cm4" }'
    lines = ["# plumbframe section map: fill in the values (A > 0, Iy, Iz, J > 0) and pass it with --sections FILE.toml",
             f"default = {blank}   # every member without a profile", "", "[sections]   # or by name (globs allowed)"]
    for name, count in names[:20]:
        lines.append(f"# {_toml_key(name)} = {blank}   # {count} member{'s' if count != 1 else ''}")
    if len(names) > 20:
        lines.append(f"# ... and {len(names) - 20} more names")
    return "\n".join(lines)
