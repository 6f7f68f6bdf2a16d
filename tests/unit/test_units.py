"""Unit scales of IFC files: declared, prefixed, derived, and the to_si/from_si pair."""
from __future__ import annotations

import logging
import math

import numpy as np
import pytest
from hypothesis import given, strategies as st

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.guid  # noqa: E402

from analysis.ifc.sections import SectionProperties  # noqa: E402
from analysis.units import (  # noqa: E402
    SI_SCALES, UnitScales, derived_units_note, from_si, section_to_si, to_si, unit_scales, warn_derived_in_use)

SCHEMAS = ["IFC2X3", "IFC4", "IFC4X3"]


def _project_file(schema, units):
    """A file with an IfcProject whose UnitsInContext holds ``units`` (built by ``units(f)``)."""
    f = ifcopenshell.file(schema=schema)
    project = f.create_entity("IfcProject", GlobalId=ifcopenshell.guid.new(), Name="P")
    made = units(f)
    if made is not None:
        project.UnitsInContext = f.createIfcUnitAssignment(made)
    return f


def _si(f, unit_type, name, prefix=None):
    return f.createIfcSIUnit(None, unit_type, prefix, name)


def _mm_kn(f):
    return [
        _si(f, "LENGTHUNIT", "METRE", "MILLI"),
        _si(f, "FORCEUNIT", "NEWTON", "KILO"),
        _si(f, "AREAUNIT", "SQUARE_METRE", "MILLI"),
        _si(f, "PLANEANGLEUNIT", "RADIAN"),
        _si(f, "MASSUNIT", "GRAM", "KILO"),
        _si(f, "PRESSUREUNIT", "PASCAL", "MEGA"),
    ]


@pytest.mark.parametrize("schema", SCHEMAS)
def test_mm_kn_file(schema, caplog):
    f = _project_file(schema, _mm_kn)
    with caplog.at_level(logging.WARNING, logger="analysis.units"):
        s = unit_scales(f)
    # SI prefixes milli = 1e-3, kilo = 1e3, mega = 1e6 (SI Brochure, BIPM — from memory)
    assert s.length == pytest.approx(1e-3)
    assert s.force == pytest.approx(1e3)
    assert s.area == pytest.approx(1e-6)  # milli + AREAUNIT: (1e-3 m)²
    assert s.pressure == pytest.approx(1e6)
    assert s.mass == pytest.approx(1.0)  # kilogram, not 1000 (ifcopenshell scales mass to grams)
    assert s.angle == 1.0
    # derived, dimensional analysis (common practice, no source)
    assert s.moment == pytest.approx(1.0)  # kN·mm = N·m
    assert s.linear_force == pytest.approx(1e6)  # kN/mm
    assert s.planar_force == pytest.approx(1e9)  # kN/mm²
    assert s.modulus_of_elasticity == pytest.approx(1e9)  # kN/mm², from base units, not from PRESSUREUNIT
    assert s.moment_of_inertia == pytest.approx(1e-12)
    assert s.section_modulus == pytest.approx(1e-9)
    assert s.rotational_stiffness == pytest.approx(1.0)  # kN·mm/rad
    assert s.linear_stiffness == pytest.approx(1e6)  # kN/mm
    assert s.mass_density == pytest.approx(1e9)  # kg/mm³
    assert s.volume == pytest.approx(1e-9)
    assert "MOMENTOFINERTIAUNIT" in s.derived and "LENGTHUNIT" not in s.derived
    # an undeclared type is logged at INFO when derived; the warning comes once a value was read in it
    assert "MOMENTOFINERTIAUNIT" not in caplog.text
    with caplog.at_level(logging.WARNING, logger="analysis.units"):
        warned = warn_derived_in_use(s)
    assert "MOMENTOFINERTIAUNIT" in warned and "MOMENTOFINERTIAUNIT" in caplog.text


@pytest.mark.parametrize("schema", SCHEMAS)
def test_undeclared_moment_of_inertia_is_derived_and_warned(schema, caplog):
    f = _project_file(schema, lambda f: [_si(f, "LENGTHUNIT", "METRE", "CENTI")])
    with caplog.at_level(logging.WARNING, logger="analysis.units"):
        s = unit_scales(f)
        assert s.moment_of_inertia == pytest.approx(1e-8)  # cm⁴ = 1e-8 m⁴
        warn_derived_in_use(s)
    records = [r.getMessage() for r in caplog.records if r.levelno == logging.WARNING]
    assert any("MOMENTOFINERTIAUNIT" in m for m in records)
    # the undeclared FORCEUNIT defaults to newton, and says so
    assert s.force == 1.0
    assert any("FORCEUNIT" in m and "newton" in m for m in records)


def test_declared_moment_of_inertia_wins():
    def units(f):
        mm = _si(f, "LENGTHUNIT", "METRE", "MILLI")
        cm = _si(f, "LENGTHUNIT", "METRE", "CENTI")
        moi = f.createIfcDerivedUnit([f.createIfcDerivedUnitElement(cm, 4)], "MOMENTOFINERTIAUNIT", None)
        return [mm, moi]

    s = unit_scales(_project_file("IFC4", units))
    assert s.length == pytest.approx(1e-3)
    assert s.moment_of_inertia == pytest.approx(1e-8)
    assert "MOMENTOFINERTIAUNIT" not in s.derived


def test_declared_mass_density_in_kg_per_cubic_metre():
    def units(f):
        kg = _si(f, "MASSUNIT", "GRAM", "KILO")
        m = _si(f, "LENGTHUNIT", "METRE")
        rho = f.createIfcDerivedUnit(
            [f.createIfcDerivedUnitElement(kg, 1), f.createIfcDerivedUnitElement(m, -3)], "MASSDENSITYUNIT", None
        )
        return [kg, m, rho]

    s = unit_scales(_project_file("IFC4", units))
    assert s.mass_density == pytest.approx(1.0)  # kg/m³ is SI (the gram trap is corrected)
    assert s.mass == pytest.approx(1.0)


def test_degrees_and_rotational_stiffness():
    def units(f):
        rad = _si(f, "PLANEANGLEUNIT", "RADIAN")
        deg = f.createIfcConversionBasedUnit(
            f.createIfcDimensionalExponents(0, 0, 0, 0, 0, 0, 0), "PLANEANGLEUNIT", "degree",
            f.createIfcMeasureWithUnit(f.create_entity("IfcPlaneAngleMeasure", math.pi / 180), rad),
        )
        return [deg, _si(f, "FORCEUNIT", "NEWTON", "KILO"), _si(f, "LENGTHUNIT", "METRE")]

    s = unit_scales(_project_file("IFC4", units))
    assert s.angle == pytest.approx(math.pi / 180)
    # kN·m per degree (dimensional analysis, common practice, no source)
    assert s.rotational_stiffness == pytest.approx(1e3 / (math.pi / 180))


def test_file_without_units_is_si_with_warning(caplog):
    f = ifcopenshell.file(schema="IFC4")
    with caplog.at_level(logging.WARNING, logger="analysis.units"):
        s = unit_scales(f)
    assert s.length == 1.0 and s.force == 1.0 and s.moment_of_inertia == 1.0
    assert "no IfcUnitAssignment" in caplog.text


def test_to_si_from_si_vectorised():
    a = np.array([[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]])
    np.testing.assert_allclose(to_si(a, 1e-3), a * 1e-3)
    np.testing.assert_allclose(from_si(to_si(a, 1e-3), 1e-3), a)
    assert to_si([1, 2], 2.0).tolist() == [2.0, 4.0]
    assert isinstance(to_si(3, 2.0), float)


@given(
    value=st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).filter(lambda v: v == 0 or abs(v) > 1e-280),
    exponent=st.integers(min_value=-12, max_value=12),
)
def test_round_trip(value, exponent):
    scale = 10.0**exponent
    assert from_si(to_si(value, scale), scale) == pytest.approx(value, rel=1e-12, abs=1e-300)
    arr = np.array([value, -value])
    np.testing.assert_allclose(from_si(to_si(arr, scale), scale), arr, rtol=1e-12)


def test_section_to_si():
    s = SectionProperties(A=100.0, Iy=1e4, Iz=2e4, J=3e3, Avy=50.0, Avz=60.0, Iyz=-5.0, cy=2.0, cz=-1.0, name="x")
    m = section_to_si(s, 1e-3)  # mm -> m
    assert (m.A, m.Iy, m.Iz, m.J) == pytest.approx((1e-4, 1e-8, 2e-8, 3e-9))
    assert (m.Avy, m.Avz, m.Iyz, m.cy, m.cz) == pytest.approx((5e-5, 6e-5, -5e-12, 2e-3, -1e-3))
    assert m.name == "x"


def test_si_scales_are_identity():
    assert all(getattr(SI_SCALES, f) == 1.0 for f in UnitScales.__slots__ if f not in ("derived", "used"))


# --------------------------------------------------------------------------- warnings only for the units in use
def _portal_file(tmp_path, *, moment=False, declare_linear_force=False):
    """The bundled workshop portal (m, N, Pa; it does not declare TORQUEUNIT), optionally with a moment on one
    point action; its own LINEARFORCEUNIT (N/m) is taken out unless ``declare_linear_force``."""
    from analysis.samples import write_sample

    path = tmp_path / "portal.ifc"
    write_sample("workshop_portal", path)
    f = ifcopenshell.open(str(path))
    if moment:
        load = f.by_type("IfcStructuralLoadSingleForce")[0]
        load.MomentY = 5e3
    assignment = f.by_type("IfcProject")[0].UnitsInContext
    assert any(getattr(u, "UnitType", None) == "LINEARFORCEUNIT" for u in assignment.Units)
    if not declare_linear_force:
        assignment.Units = [u for u in assignment.Units if getattr(u, "UnitType", None) != "LINEARFORCEUNIT"]
    f.write(str(path))
    return path


def _unit_warnings(caplog):
    return [r.getMessage() for r in caplog.records if r.levelno >= logging.WARNING and r.name == "analysis.units"]


def test_undeclared_unit_warns_only_where_the_model_uses_it(tmp_path, caplog):
    """An undeclared unit type that no value of the model is given in gives no warning (INFO only, and a note);
    one that converts the model's values does. Dimensional analysis: N/m from N and m (common practice, no
    source); IfcUnitAssignment may leave any unit type out (IFC 4.3, IfcUnitAssignment — from memory)."""
    from analysis.ifc.reader import read_ifc

    assert ifcopenshell.open(str(_portal_file(tmp_path))).by_type("IfcStructuralLoadLinearForce")  # line loads in use
    with caplog.at_level(logging.INFO, logger="analysis.units"):
        model = read_ifc(_portal_file(tmp_path))
    warned = _unit_warnings(caplog)
    assert any("LINEARFORCEUNIT" in m for m in warned)  # the line loads are given in it
    for unused in ("TORQUEUNIT", "THERMALEXPANSIONCOEFFICIENTUNIT", "WARPINGCONSTANTUNIT",
                   "MODULUSOFSUBGRADEREACTIONUNIT", "MOMENTOFINERTIAUNIT"):
        assert not any(unused in m for m in warned), unused
        assert any(unused in r.getMessage() for r in caplog.records if r.levelno == logging.INFO)  # --verbose
    note = next(n for n in model.notes if n.startswith("Unit types not declared"))
    assert "TORQUEUNIT" in note and "THERMALEXPANSIONCOEFFICIENTUNIT" in note  # the report's notes keep them all
    assert note.index("LINEARFORCEUNIT") < note.index("not used") < note.index("TORQUEUNIT")

    caplog.clear()
    with caplog.at_level(logging.WARNING, logger="analysis.units"):
        read_ifc(_portal_file(tmp_path, moment=True, declare_linear_force=True))
    warned = _unit_warnings(caplog)
    assert any("TORQUEUNIT" in m for m in warned)  # now a point action carries a moment in it
    assert not any("LINEARFORCEUNIT" in m for m in warned)  # declared: nothing to warn about


def test_note_without_any_use():
    s = UnitScales(derived=("TORQUEUNIT",))
    assert "none of them used" in derived_units_note(s)
    assert warn_derived_in_use(s) == []
    s.moment  # noqa: B018  (reading a value in it counts as use)
    assert warn_derived_in_use(s) == ["TORQUEUNIT"]
