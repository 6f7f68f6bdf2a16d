"""Unit scales between an IFC file and the SI engine: the only place that converts units.

Every factor obeys ``value_ifc * scale == value_si``. The engine works in
metre, newton, kilogram, second, pascal and radian throughout; the reader
converts IFC values with :func:`to_si` and the writer converts back with
:func:`from_si`.

Two traps of ``ifcopenshell.util.unit.calculate_unit_scale`` (0.9.0) are
handled here:

* it returns ``1`` for a unit type the file does not declare (pressure,
  modulus, moment of inertia, linear force ... are often missing), so such
  types are derived from the base units (length, force, mass, plane angle,
  time, temperature) and a warning names the type;
* it scales GRAM-based units to *grams* (a ``KILO`` ``GRAM`` unit gives
  1000, a derived kg/m³ unit gives 1000 as well), so such factors are
  divided by ``1000 ** (power of GRAM in the unit)`` to reach kilograms
  (NEWTON, PASCAL ... are not affected).
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field, fields
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

if TYPE_CHECKING:  # pragma: no cover
    import ifcopenshell

__all__ = [
    "UnitScales",
    "SI_SCALES",
    "UNIT_TYPES",
    "unit_scales",
    "angle_scale",
    "to_si",
    "from_si",
    "section_to_si",
    "warn_derived_in_use",
    "derived_units_note",
]

logger = logging.getLogger(__name__)

FloatArray = npt.NDArray[np.float64]

#: UnitScales field -> IFC unit type (IfcUnitEnum or IfcDerivedUnitEnum item).
UNIT_TYPES: dict[str, str] = {
    "length": "LENGTHUNIT",
    "area": "AREAUNIT",
    "volume": "VOLUMEUNIT",
    "mass": "MASSUNIT",
    "time": "TIMEUNIT",
    "angle": "PLANEANGLEUNIT",
    "temperature_difference": "THERMODYNAMICTEMPERATUREUNIT",
    "force": "FORCEUNIT",
    "pressure": "PRESSUREUNIT",
    "modulus_of_elasticity": "MODULUSOFELASTICITYUNIT",
    "shear_modulus": "SHEARMODULUSUNIT",
    "moment": "TORQUEUNIT",
    "linear_force": "LINEARFORCEUNIT",
    "linear_moment": "LINEARMOMENTUNIT",
    "planar_force": "PLANARFORCEUNIT",
    "moment_of_inertia": "MOMENTOFINERTIAUNIT",
    "section_modulus": "SECTIONMODULUSUNIT",
    "warping_constant": "WARPINGCONSTANTUNIT",
    "mass_density": "MASSDENSITYUNIT",
    "mass_per_length": "MASSPERLENGTHUNIT",
    "linear_stiffness": "LINEARSTIFFNESSUNIT",
    "rotational_stiffness": "ROTATIONALSTIFFNESSUNIT",
    "linear_subgrade_reaction": "MODULUSOFLINEARSUBGRADEREACTIONUNIT",
    "rotational_subgrade_reaction": "MODULUSOFROTATIONALSUBGRADEREACTIONUNIT",
    "subgrade_reaction": "MODULUSOFSUBGRADEREACTIONUNIT",
    "thermal_expansion": "THERMALEXPANSIONCOEFFICIENTUNIT",
}


@dataclass(frozen=True, slots=True)
class UnitScales:
    """SI scale factors of one IFC file: ``value_ifc * scale == value_si``.

    Attributes (SI target in brackets)
    ----------------------------------
    length [m], area [m²], volume [m³], mass [kg], time [s], angle [rad],
    temperature_difference [K], force [N], pressure [Pa],
    modulus_of_elasticity [Pa], shear_modulus [Pa], moment [N·m] (IFC torque),
    linear_force [N/m], linear_moment [N·m/m], planar_force [N/m²],
    moment_of_inertia [m⁴], section_modulus [m³], warping_constant [m⁶],
    mass_density [kg/m³], mass_per_length [kg/m], linear_stiffness [N/m]
    (IfcBoundaryNodeCondition translational springs), rotational_stiffness
    [N·m/rad] (rotational springs), linear_subgrade_reaction [N/m²] (edge
    translational springs), rotational_subgrade_reaction [N·m/(m·rad)] (edge
    rotational springs), subgrade_reaction [N/m³] (face springs),
    thermal_expansion [1/K].

    ``derived`` names the unit types that the file does not declare and that
    were derived from base units. ``used`` records which derived fields were
    read (a value of the model was converted with them): the reader warns
    only for undeclared types among those (:func:`warn_derived_in_use`).
    """

    length: float = 1.0
    area: float = 1.0
    volume: float = 1.0
    mass: float = 1.0
    time: float = 1.0
    angle: float = 1.0
    temperature_difference: float = 1.0
    force: float = 1.0
    pressure: float = 1.0
    modulus_of_elasticity: float = 1.0
    shear_modulus: float = 1.0
    moment: float = 1.0
    linear_force: float = 1.0
    linear_moment: float = 1.0
    planar_force: float = 1.0
    moment_of_inertia: float = 1.0
    section_modulus: float = 1.0
    warping_constant: float = 1.0
    mass_density: float = 1.0
    mass_per_length: float = 1.0
    linear_stiffness: float = 1.0
    rotational_stiffness: float = 1.0
    linear_subgrade_reaction: float = 1.0
    rotational_subgrade_reaction: float = 1.0
    subgrade_reaction: float = 1.0
    thermal_expansion: float = 1.0
    derived: tuple[str, ...] = ()
    used: set[str] = field(default_factory=set, compare=False, repr=False, hash=False)

    def __getattribute__(self, name: str) -> Any:
        if name in _DERIVED_FIELDS:
            object.__getattribute__(self, "used").add(name)
        return object.__getattribute__(self, name)

    def __reduce__(self):  # a copy (pickle, dask) neither marks every field as used nor loses the record
        get = object.__getattribute__
        values = {f.name: get(self, f.name) for f in fields(UnitScales)}
        values["used"] = set(values["used"])
        return (_unit_scales_from, (values,))


def _unit_scales_from(values: dict) -> UnitScales:
    return UnitScales(**values)


#: Scales of a file that is SI throughout.
SI_SCALES = UnitScales()


def _derived_from_base(b: dict[str, float]) -> dict[str, float]:
    """Scale of each derived field from the base scales in ``b``.

    Dimensional analysis, common practice, no source: e.g. MOMENTOFINERTIAUNIT
    = L⁴, MODULUSOFELASTICITYUNIT = F/L², ROTATIONALSTIFFNESSUNIT = F·L/angle.
    """
    L, F, M, ang, T = b["length"], b["force"], b["mass"], b["angle"], b["temperature_difference"]
    return {
        "area": L**2,
        "volume": L**3,
        "pressure": F / L**2,
        "modulus_of_elasticity": F / L**2,
        "shear_modulus": F / L**2,
        "moment": F * L,
        "linear_force": F / L,
        "linear_moment": F * L / L,
        "planar_force": F / L**2,
        "moment_of_inertia": L**4,
        "section_modulus": L**3,
        "warping_constant": L**6,
        "mass_density": M / L**3,
        "mass_per_length": M / L,
        "linear_stiffness": F / L,
        "rotational_stiffness": F * L / ang,
        "linear_subgrade_reaction": F / L**2,
        "rotational_subgrade_reaction": F * L / (L * ang),
        "subgrade_reaction": F / L**3,
        "thermal_expansion": 1.0 / T,
    }


#: the fields derived from base units when the file does not declare them (their use is recorded)
_DERIVED_FIELDS = frozenset(_derived_from_base(dict.fromkeys(
    ("length", "force", "mass", "angle", "temperature_difference"), 1.0)))


def warn_derived_in_use(scales: UnitScales) -> list[str]:
    """Warn for each undeclared unit type that converted a value of the model; returns those types.

    Unit types that the file does not declare but that no value was read in
    were logged at INFO level by :func:`unit_scales` (``--verbose``) and are
    listed in the reader's notes (:func:`derived_units_note`). A file without
    any unit assignment had its one warning already.
    """
    derived = set(scales.derived)
    if derived >= set(UNIT_TYPES.values()):
        return []
    used = object.__getattribute__(scales, "used")
    out = []
    for name in sorted(used, key=list(UNIT_TYPES).index):
        unit_type = UNIT_TYPES[name]
        if unit_type in derived:
            logger.warning("%s is not declared in the file: values of the model in it were converted with %.6g "
                           "(derived from the base units)", unit_type, object.__getattribute__(scales, name))
            out.append(unit_type)
    return out


def derived_units_note(scales: UnitScales) -> str | None:
    """The reader's note on undeclared unit types: those the model's values used, and the rest."""
    if not scales.derived:
        return None
    used = {UNIT_TYPES[n] for n in object.__getattribute__(scales, "used")}
    inuse = [t for t in scales.derived if t in used]
    rest = [t for t in scales.derived if t not in used]
    text = "Unit types not declared in the file, derived from the base units: "
    if inuse:
        text += ", ".join(inuse) + " (values of the model were converted with them)"
        text += ("; not used by the model's values: " + ", ".join(rest)) if rest else ""
    else:
        text += ", ".join(rest) + " (none of them used by the model's values)"
    return text + "."


_BASE_DEFAULTS = {
    # field: (SI default, what the default is called in the warning)
    "length": (1.0, "metre"),
    "mass": (1.0, "kilogram"),
    "time": (1.0, "second"),
    "angle": (1.0, "radian"),
    "temperature_difference": (1.0, "kelvin"),
    "force": (1.0, "newton"),
}


def _unit_assignment(ifc_file: "ifcopenshell.file"):
    """The IfcUnitAssignment in force: the project's UnitsInContext, else a lone assignment."""
    projects = ifc_file.by_type("IfcProject")
    if projects and projects[0].UnitsInContext is not None:
        return projects[0].UnitsInContext, True
    assignments = ifc_file.by_type("IfcUnitAssignment")
    if len(assignments) == 1:
        logger.warning(
            "the IfcUnitAssignment #%d is not the UnitsInContext of an IfcProject; using it anyway",
            assignments[0].id(),
        )
        return assignments[0], False
    return None, False


def _gram_exponent(unit, depth: int = 0) -> int:
    """Power of the SI unit GRAM inside ``unit`` (kg = KILO GRAM counts 1, NEWTON counts 0).

    ifcopenshell scales GRAM-based units to grams, so the SI factor must be
    divided by 1000 to this power.
    """
    if unit is None or depth > 16:
        return 0
    if unit.is_a("IfcSIUnit"):
        return 1 if str(unit.Name).upper() == "GRAM" else 0
    if unit.is_a("IfcConversionBasedUnit"):
        factor = unit.ConversionFactor
        return _gram_exponent(getattr(factor, "UnitComponent", None), depth + 1)
    if unit.is_a("IfcDerivedUnit"):
        return sum(int(e.Exponent) * _gram_exponent(e.Unit, depth + 1) for e in unit.Elements)
    return 0


def _declared_scale(ifc_file, assignment, via_project: bool, unit_type: str) -> float | None:
    """SI scale of ``unit_type`` if the assignment declares it, else None (mass in kg)."""
    import ifcopenshell.util.unit as ifc_unit

    units = [u for u in (assignment.Units or []) if getattr(u, "UnitType", None) == unit_type]
    if not units:
        return None
    if len(units) > 1:
        scales = [_unit_scale_alone(u) for u in units]
        if any(not math.isclose(x, scales[0], rel_tol=1e-9) for x in scales):
            from .errors import UnitError

            listed = " and ".join(f"{_unit_label(u)} ({x:g} in SI)" for u, x in zip(units, scales))
            raise UnitError(f"{len(units)} units of type {unit_type} are assigned: {listed}; the file is ambiguous: "
                            "keep one of them", units[1].id())
        logger.warning("%d units of type %s are assigned (#%s, all the same); the first one is used",
                       len(units), unit_type, ", #".join(str(u.id()) for u in units))
    unit = units[0]
    weight = _check_dimensions(unit, unit_type)
    if via_project and len(units) == 1:
        scale = float(ifc_unit.calculate_unit_scale(ifc_file, unit_type))
    else:
        scale = float(ifc_unit.get_unit_scale(unit))
    # ifcopenshell measures GRAM-based units in grams: bring them to kg.
    scale *= 1e-3 ** _gram_exponent(unit)
    if unit_type == "THERMODYNAMICTEMPERATUREUNIT":
        # a temperature *difference* ignores the offset of degree Celsius/Fahrenheit
        name = str(getattr(unit, "Name", "") or "").upper()
        if "FAHRENHEIT" in name:
            scale = 5.0 / 9.0
    scale *= weight
    if not math.isfinite(scale) or scale <= 0.0:
        from .errors import UnitError

        raise UnitError(f"{_unit_label(unit)}: unit of type {unit_type} has scale {scale!r}", unit.id())
    low, high, what = _PLAUSIBLE.get(unit_type, (1e-15, 1e15, ""))
    if not low <= scale <= high:
        from .errors import UnitError

        raise UnitError(f"{_unit_label(unit)}: a {unit_type} of {scale:g} in SI units is not plausible"
                        + (f" ({what})" if what else "") + "; check the unit's prefix or conversion factor", unit.id())
    return scale


# Plausible SI scales of the base units of a building model (common practice, no source): outside these
# ranges a unit is a mistake (an EXA prefix, a conversion factor off by powers of ten), not a real choice.
_PLAUSIBLE = {
    "LENGTHUNIT": (1e-6, 1e4, "length units from micrometre to 10 km"),
    "FORCEUNIT": (1e-3, 1e9, "force units from millinewton to giganewton"),
    "MASSUNIT": (1e-6, 1e6, "mass units from milligram to kilotonne"),
    "TIMEUNIT": (1e-6, 1e9, "time units from microsecond to decades"),
    "PLANEANGLEUNIT": (1e-6, 10.0, "angle units from microradian to a turn"),
}


# Dimensions (length, mass, time) each unit type must have: force = M L T^-2 (common practice, no source).
_DIMENSIONS = {
    "LENGTHUNIT": (1, 0, 0), "MASSUNIT": (0, 1, 0), "TIMEUNIT": (0, 0, 1), "FORCEUNIT": (1, 1, -2),
    "AREAUNIT": (2, 0, 0), "VOLUMEUNIT": (3, 0, 0), "PRESSUREUNIT": (-1, 1, -2),
    "MODULUSOFELASTICITYUNIT": (-1, 1, -2), "SHEARMODULUSUNIT": (-1, 1, -2), "PLANARFORCEUNIT": (-1, 1, -2),
    "MASSDENSITYUNIT": (-3, 1, 0), "MASSPERLENGTHUNIT": (-1, 1, 0), "LINEARFORCEUNIT": (0, 1, -2),
    "LINEARMOMENTUNIT": (1, 1, -2), "TORQUEUNIT": (2, 1, -2), "MOMENTOFINERTIAUNIT": (4, 0, 0),
    "SECTIONMODULUSUNIT": (3, 0, 0), "WARPINGCONSTANTUNIT": (6, 0, 0), "LINEARSTIFFNESSUNIT": (0, 1, -2),
    "ROTATIONALSTIFFNESSUNIT": (2, 1, -2), "MODULUSOFLINEARSUBGRADEREACTIONUNIT": (-1, 1, -2),
    "MODULUSOFSUBGRADEREACTIONUNIT": (-2, 1, -2), "MODULUSOFROTATIONALSUBGRADEREACTIONUNIT": (1, 1, -2),
}
_DIMENSION_WORDS = {(1, 1, -2): "force (N)", (-1, 1, -2): "force per area (N/m2)", (-2, 1, 0): "mass per area (kg/m2)",
                    (-3, 1, 0): "mass per volume (kg/m3)", (0, 1, -2): "force per length (N/m)",
                    (2, 1, -2): "force times length (N*m)", (0, 1, 0): "mass (kg)", (1, 0, 0): "length (m)",
                    (-1, 1, 0): "mass per length (kg/m)"}


def _words(dims: tuple[int, ...]) -> str:
    if dims in _DIMENSION_WORDS:
        return _DIMENSION_WORDS[dims]
    return "m^{} kg^{} s^{}".format(*dims)


STANDARD_GRAVITY = 9.80665  # m/s2, the conventional value (3rd CGPM, 1901)


def _check_dimensions(unit, unit_type: str) -> float:
    """A derived or conversion-based unit must have the dimensions of its unit type; returns a factor for its scale.

    A unit built from a mass where its type needs a force (pound per square
    inch declared as a MODULUSOFELASTICITYUNIT, a frequent exporter slip for
    pound-force per square inch) is read as the weight of that mass: its
    scale times standard gravity, with a warning. Any other mismatch is a
    UnitError.
    """
    want = _DIMENSIONS.get(unit_type)
    if want is None or unit.is_a("IfcSIUnit"):
        return 1.0
    try:
        if unit.is_a("IfcDerivedUnit"):
            import ifcopenshell.util.unit as ifc_unit

            dims = tuple(int(v) for v in ifc_unit.get_unit_dimensions(unit))[:3]
        else:
            d = getattr(unit, "Dimensions", None)
            if d is None:
                return 1.0
            dims = (int(d.LengthExponent), int(d.MassExponent), int(d.TimeExponent))
    except Exception:  # an unreadable unit: the scale check that follows reports it
        return 1.0
    if dims == want:
        return 1.0
    if tuple(w - d for w, d in zip(want, dims)) == (1, 0, -2):  # a mass where a force is meant
        logger.warning("%s: declared as %s, which is %s, but its dimensions are %s: read as the weight of that mass "
                       "(times standard gravity %g m/s2); check the unit's elements",
                       _unit_label(unit), unit_type, _words(want), _words(dims), STANDARD_GRAVITY)
        return STANDARD_GRAVITY
    from .errors import UnitError

    raise UnitError(f"{_unit_label(unit)}: declared as {unit_type}, which is {_words(want)}, but its dimensions are "
                    f"{_words(dims)}: values in this unit cannot be converted; fix the unit's elements", unit.id())


def _unit_label(unit) -> str:
    """``#8 IfcSIUnit MILLI METRE`` / ``#333 IfcConversionBasedUnit 'inch'``."""
    if unit.is_a("IfcSIUnit"):
        prefix = f"{unit.Prefix} " if getattr(unit, "Prefix", None) else ""
        return f"#{unit.id()} IfcSIUnit {prefix}{unit.Name}"
    name = getattr(unit, "Name", None)
    return f"#{unit.id()} {unit.is_a()}" + (f" '{name}'" if name else "")


def _unit_scale_alone(unit) -> float:
    import ifcopenshell.util.unit as ifc_unit

    try:
        return float(ifc_unit.get_unit_scale(unit)) * 1e-3 ** _gram_exponent(unit)
    except Exception:  # an unreadable unit: it cannot agree with another
        return math.nan


def unit_scales(ifc_file: "ifcopenshell.file") -> UnitScales:
    """SI scale factors of every unit type the engine reads or writes.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
        Any IFC2X3, IFC4 or IFC4X3 file.

    Returns
    -------
    UnitScales
        ``value_ifc * scale == value_si`` for each field.

    Raises
    ------
    UnitError
        A declared unit has a non-positive or non-finite scale.

    Notes
    -----
    Declared types come from ``ifcopenshell.util.unit.calculate_unit_scale``
    (prefixes included: milli plus AREAUNIT gives 1e-6). A type the file does
    not declare is derived from the base units and logged at INFO level
    naming the type (the reader then warns for the types its values used,
    :func:`warn_derived_in_use`); undeclared base units default to SI (an undeclared
    FORCEUNIT means newton). A file without any unit assignment is taken as
    metres and newtons, with a warning.

    Examples
    --------
    >>> import ifcopenshell
    >>> unit_scales(ifcopenshell.file(schema="IFC4")).length  # doctest: +SKIP
    1.0
    """
    assignment, via_project = _unit_assignment(ifc_file)
    if assignment is None:
        logger.warning("the file has no IfcUnitAssignment: assuming metres, newtons, kilograms and radians")
        return UnitScales(derived=tuple(UNIT_TYPES.values()))

    values: dict[str, float] = {}
    derived: list[str] = []
    for name, (default, label) in _BASE_DEFAULTS.items():
        unit_type = UNIT_TYPES[name]
        scale = _declared_scale(ifc_file, assignment, via_project, unit_type)
        if scale is None:
            if name in ("length", "force", "angle"):
                logger.warning("%s is not declared in the file: %s is assumed", unit_type, label)
            else:
                logger.info("%s is not declared in the file: %s is assumed", unit_type, label)
            scale = default
            derived.append(unit_type)
        values[name] = scale

    from_base = _derived_from_base(values)
    for name, scale_from_base in from_base.items():
        unit_type = UNIT_TYPES[name]
        scale = _declared_scale(ifc_file, assignment, via_project, unit_type)
        if scale is None:
            # INFO only: the reader warns for those the model's values use (warn_derived_in_use) and notes the rest
            logger.info("%s is not declared in the file: derived from the base units as %.6g", unit_type,
                        scale_from_base)
            scale = scale_from_base
            derived.append(unit_type)
        values[name] = scale
    return UnitScales(**values, derived=tuple(derived))  # type: ignore[arg-type]  # floats only


def angle_scale(ifc_file: "ifcopenshell.file") -> float:
    """SI scale of the file's PLANEANGLEUNIT alone (radian if undeclared), without
    the warnings of :func:`unit_scales`; for readers of angle parameters."""
    assignment, via_project = _unit_assignment(ifc_file)
    if assignment is None:
        return 1.0
    scale = _declared_scale(ifc_file, assignment, via_project, "PLANEANGLEUNIT")
    return 1.0 if scale is None else scale


def to_si(value_ifc: Any, scale: float) -> Any:
    """File units to SI: ``value_ifc * scale``; scalars stay floats, sequences become arrays.

    >>> to_si(2.5, 1e-3)
    0.0025
    """
    if isinstance(value_ifc, (int, float, np.floating, np.integer)):
        return float(value_ifc) * scale
    return np.asarray(value_ifc, dtype=np.float64) * scale


def from_si(value_si: Any, scale: float) -> Any:
    """SI to file units: ``value_si / scale``, the inverse of :func:`to_si`.

    >>> from_si(0.0025, 1e-3)
    2.5
    """
    if isinstance(value_si, (int, float, np.floating, np.integer)):
        return float(value_si) / scale
    return np.asarray(value_si, dtype=np.float64) / scale


#: SectionProperties field -> how many powers of length it carries.
_SECTION_LENGTH_POWERS = {"A": 2, "Iy": 4, "Iz": 4, "J": 4, "Avy": 2, "Avz": 2, "Iyz": 4, "cy": 1, "cz": 1}


def section_to_si(section, length_scale: float):
    """A copy of a ``SectionProperties`` (profile units) in metres.

    Profile dimensions are IfcLengthMeasure / IfcPositiveLengthMeasure, so
    every section value scales with a power of the file's length unit:
    ``A * L²``, ``I * L⁴``, ``c * L``.
    """
    import dataclasses

    changes = {
        f.name: getattr(section, f.name) * length_scale ** _SECTION_LENGTH_POWERS[f.name]
        for f in fields(section)
        if f.name in _SECTION_LENGTH_POWERS
    }
    return dataclasses.replace(section, **changes)
