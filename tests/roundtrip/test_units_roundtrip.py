"""The same workshop portal in m/N (workshop_portal.ifc) and in mm/kN (workshop_portal_mm.ifc).

Reading either file must give the same Frame in SI units, and the same
analysis results: unit conversion is exact up to rounding (1e-9 relative).
"""
from __future__ import annotations

import pathlib

import numpy as np
import pytest

import ifcopenshell  # noqa: E402,F401  (a hard dependency: never skipped)

from analysis import analyze  # noqa: E402
from analysis.ifc.reader import read_ifc  # noqa: E402

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"
RTOL = 1e-9

ARRAYS = ("nodes", "A", "Iy", "Iz", "J", "Avy", "Avz", "E", "G", "density", "ref", "roll",
          "truss", "releases", "offsets", "restraints", "springs")


@pytest.fixture(scope="module")
def both():
    si = read_ifc(SAMPLES / "workshop_portal.ifc")
    mm = read_ifc(SAMPLES / "workshop_portal_mm.ifc")
    return si, mm


def _close(a, b, what):
    a, b = np.asarray(a), np.asarray(b)
    if a.dtype == bool:
        np.testing.assert_array_equal(a, b, err_msg=what)
        return
    scale = max(float(np.abs(a).max()) if a.size else 0.0, 1e-300)
    np.testing.assert_allclose(b, a, rtol=RTOL, atol=RTOL * scale, err_msg=what)


def test_units_differ_in_the_files(both):
    si, mm = both
    assert si.units.length == 1.0 and si.units.force == 1.0
    assert mm.units.length == pytest.approx(1e-3) and mm.units.force == pytest.approx(1e3)


def test_same_frame_in_si(both):
    si, mm = both
    a, b = si.frame, mm.frame
    assert a.node_ids == b.node_ids and a.member_ids == b.member_ids
    np.testing.assert_array_equal(a.members, b.members)
    for key in ARRAYS:
        _close(getattr(a, key), getattr(b, key), key)
    assert [c.name for c in a.load_cases] == [c.name for c in b.load_cases]
    for ca, cb in zip(a.load_cases, b.load_cases):
        _close(ca.self_weight, cb.self_weight, f"{ca.name} self weight")
        assert len(ca.nodal) == len(cb.nodal) and len(ca.member) == len(cb.member)
        for la, lb in zip(ca.nodal, cb.nodal):
            assert la.node == lb.node
            _close(la.values, lb.values, f"{ca.name} nodal load")
        for la, lb in zip(ca.member, cb.member):
            assert (la.member, la.direction, la.axes, type(la)) == (lb.member, lb.direction, lb.axes, type(lb))
            for field in ("w1", "w2", "start", "end", "value", "position"):
                if hasattr(la, field) and getattr(la, field) is not None:
                    _close(getattr(la, field), getattr(lb, field), f"{ca.name} member load {field}")
    assert [(c.name, dict(c.factors)) for c in a.combinations] == [(c.name, dict(c.factors)) for c in b.combinations]


def test_same_results(both):
    si, mm = both
    ra, rb = analyze(si.frame), analyze(mm.frame)
    assert set(ra.cases) == set(rb.cases)
    for name in ra.cases:
        ca, cb = ra.case(name), rb.case(name)
        _close(ca.displacements, cb.displacements, f"{name} displacements")
        _close(ca.reactions, cb.reactions, f"{name} reactions")
        _close(ca.end_forces, cb.end_forces, f"{name} end forces")
