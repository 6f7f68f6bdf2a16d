"""``plumbframe analyze --second-order --buckling N --modes N --mass CASE`` on a sample model, end to end.

Checks the contract of shared/ARCHITECTURE.md ("Added 2026-12-02"): the JSON keys ``theory``,
``buckling``, ``mass`` and ``modes``; the IFC result groups of a second-order run
(TheoryType SECOND_ORDER_THEORY, IsLinear false); the critical factors and frequencies as a
project property set on the analysis model; exit 3 naming the load set past its critical load;
exit 2 for a --mass case that does not exist. The reference values themselves are checked in
tests/reference/test_stability.py, test_modes.py and test_second_order.py.
"""
from __future__ import annotations

import json

import ifcopenshell
import ifcopenshell.validate
import pytest


def run(argv, capsys):
    from analysis.cli import main

    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def portal(tmp_path_factory):
    from analysis.cli import main

    path = tmp_path_factory.mktemp("stab") / "portal.ifc"
    assert main(["sample", "workshop_portal", "-o", str(path), "--quiet"]) == 0
    return path


def test_second_order_buckling_and_modes_keys(portal, tmp_path, capsys):
    out, js = tmp_path / "out.ifc", tmp_path / "out.json"
    code, text, err = run(["analyze", portal, "-o", out, "--json", js, "--second-order", "--buckling", 3,
                           "--modes", 4, "--mass", "G dead=1.0"], capsys)
    assert code == 0, err
    doc = json.loads(js.read_text())
    assert doc["schema"] == "plumbframe.results/1" and doc["theory"] == "second-order"
    combos = {name for name, c in doc["cases"].items() if c["kind"] == "combination"}
    assert combos and set(doc["buckling"]) == combos
    nodes = set(doc["nodes"])
    for modes in doc["buckling"].values():
        factors = [m["factor"] for m in modes]
        assert len(factors) == 3 and factors == sorted(factors) and factors[0] > 1
        for m in modes:
            assert set(m["shape"]) == nodes
            assert max(max(abs(v[c]) for c in ("ux", "uy", "uz")) for v in m["shape"].values()) <= 1 + 1e-12
            assert set(next(iter(m["shape"].values()))) == {"ux", "uy", "uz", "rx", "ry", "rz"}
    assert doc["mass"]["sources"] == ["members", "G dead x 1"] and doc["mass"]["total"] > 0
    freqs = [m["frequency"] for m in doc["modes"]]
    assert len(freqs) == 4 and freqs == sorted(freqs)
    for m in doc["modes"]:
        assert m["period"] == pytest.approx(1 / m["frequency"])
        assert set(m["effective_mass_ratio"]) == {"x", "y", "z"}
        assert all(0 <= r <= 1 + 1e-9 for r in m["effective_mass_ratio"].values())
    assert "alpha_cr" in text and "mode 1" in text

    f = ifcopenshell.open(str(out))
    groups = f.by_type("IfcStructuralResultGroup")
    assert groups and all(g.TheoryType == "SECOND_ORDER_THEORY" and g.IsLinear is False for g in groups)
    psets = [p for p in f.by_type("IfcPropertySet") if p.Name == "PF_StabilityAndModes"]
    assert len(psets) == 1
    props = {p.Name: p.NominalValue.wrappedValue for p in psets[0].HasProperties}
    first = sorted(combos)[0]
    assert props[f"CriticalLoadFactor: {first} #1"] == pytest.approx(doc["buckling"][first][0]["factor"])
    assert props["Mode 1: frequency (Hz)"] == pytest.approx(freqs[0])
    rel = [r for r in f.by_type("IfcRelDefinesByProperties") if r.RelatingPropertyDefinition == psets[0]]
    assert rel[0].RelatedObjects[0].is_a("IfcStructuralAnalysisModel")
    log = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(f, log)
    assert not log.statements


def test_first_order_run_says_so(portal, tmp_path, capsys):
    js = tmp_path / "first.json"
    code, _, err = run(["analyze", portal, "-o", tmp_path / "first.ifc", "--json", js, "--quiet"], capsys)
    assert code == 0, err
    doc = json.loads(js.read_text())
    assert doc["theory"] == "first-order" and "buckling" not in doc and "modes" not in doc
    f = ifcopenshell.open(str(tmp_path / "first.ifc"))
    assert all(g.TheoryType == "FIRST_ORDER_THEORY" and g.IsLinear for g in f.by_type("IfcStructuralResultGroup"))


def test_past_critical_load_exit_3_names_the_load_set(portal, tmp_path, capsys):
    # the sample's loads × 20: its lowest critical factor is about 4.6 (summary above), so every
    # combination is past its critical load
    f = ifcopenshell.open(str(portal))
    for load in (*f.by_type("IfcStructuralLoadSingleForce"), *f.by_type("IfcStructuralLoadLinearForce")):
        for k in range(len(load)):
            if isinstance(load[k], float):
                load[k] = 20 * load[k]
    heavy = tmp_path / "heavy.ifc"
    f.write(str(heavy))
    out = tmp_path / "heavy.results.ifc"
    code, _, err = run(["analyze", heavy, "-o", out, "--second-order"], capsys)
    assert code == 3
    assert "critical load" in err and "α_cr = " in err and "nothing was written" in err
    assert "'" in err.split("critical")[0]  # the load set is named before the message
    assert not out.exists()


def test_unknown_mass_case_is_bad_input(portal, tmp_path, capsys):
    code, _, err = run(["analyze", portal, "-o", tmp_path / "x.ifc", "--modes", 2, "--mass", "nonsense"], capsys)
    assert code == 2
    assert "'nonsense' does not exist" in err
    assert not (tmp_path / "x.ifc").exists()
    code, _, err = run(["analyze", portal, "-o", tmp_path / "x.ifc", "--mass", "G dead"], capsys)
    assert code == 2 and "--modes" in err
