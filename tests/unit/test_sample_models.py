"""The committed sample_models/*.ifc files are reproducible, valid and complete."""

import importlib.util
import pathlib
import sys

import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.util.unit  # noqa: E402
import ifcopenshell.validate  # noqa: E402

SAMPLE_DIR = pathlib.Path(__file__).resolve().parents[2] / "sample_models"


def _load_generator():
    spec = importlib.util.spec_from_file_location("plumbframe_sample_generate", SAMPLE_DIR / "generate.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up by name
    spec.loader.exec_module(module)
    return module


generate = _load_generator()
NAMES = sorted(generate.SAMPLES)


@pytest.fixture(scope="module")
def opened():
    cache = {}

    def _open(name):
        if name not in cache:
            cache[name] = ifcopenshell.open(str(SAMPLE_DIR / f"{name}.ifc"))
        return cache[name]

    return _open


def test_every_sample_has_a_builder_and_schema():
    assert set(generate.SAMPLES) == set(generate.SAMPLE_SCHEMAS)
    assert set(NAMES) == {"workshop_portal", "braced_office", "roof_truss", "unstable_frame", "workshop_portal_mm"}


@pytest.mark.parametrize("name", NAMES)
def test_regenerated_file_is_identical(name, tmp_path):
    out = generate.write_sample(name, tmp_path / f"{name}.ifc")
    committed = (SAMPLE_DIR / f"{name}.ifc").read_bytes()
    assert out.read_bytes() == committed
    assert len(committed) < 300_000


@pytest.mark.parametrize("name", NAMES)
def test_sample_validates(name, opened):
    f = opened(name)
    assert f.schema == generate.SAMPLE_SCHEMAS[name]
    log = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(f, log)
    assert log.statements == []


@pytest.mark.parametrize("name", ["workshop_portal", "roof_truss", "unstable_frame"])
@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4", "IFC4X3"])
def test_other_schemas_validate(name, schema):
    f = generate.build_sample(name, schema)
    log = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(f, log)
    assert log.statements == []


def test_unknown_sample_raises():
    with pytest.raises(ValueError, match="nope"):
        generate.build_sample("nope")


def _groups(f, predefined):
    return sorted(g.Name for g in f.by_type("IfcStructuralLoadGroup") if g.PredefinedType == predefined)


def _coords(node):
    return node.Representation.Representations[0].Items[0].VertexGeometry.Coordinates


@pytest.mark.parametrize("name, scale", [("workshop_portal", 1.0), ("workshop_portal_mm", 1000.0)])
def test_workshop_contents(name, scale, opened):
    f = opened(name)
    nodes = {n.Name: n for n in f.by_type("IfcStructuralPointConnection")}
    members = {m.Name: m for m in f.by_type("IfcStructuralCurveMember")}
    assert sorted(nodes) == ["N1", "N2", "N3", "N4", "N5", "N6"]
    assert sorted(members) == ["B1", "B2", "C1", "C2", "C3", "C4"]
    assert _coords(nodes["N6"]) == (8.0 * scale, 0.0, 7.5 * scale)
    assert members["B1"].Axis.DirectionRatios == (0.0, 0.0, 1.0)
    assert members["C1"].Axis.DirectionRatios == (-1.0, 0.0, 0.0)
    supports = sorted(n.Name for n in nodes.values() if n.AppliedCondition)
    assert supports == ["N1", "N2"]
    assert all(v.wrappedValue is True for v in list(nodes["N1"].AppliedCondition)[1:])
    assert len(f.by_type("IfcRelConnectsStructuralMember")) == 12
    assert _groups(f, "LOAD_CASE") == ["G dead", "Q imposed", "W wind"]
    assert _groups(f, "LOAD_COMBINATION") == ["SLS", "ULS 1", "ULS 2"]
    model = f.by_type("IfcStructuralAnalysisModel")[0]
    assert len(model.LoadedBy) == 6
    factors = {
        (r.RelatingGroup.Name, c.Name): r.Factor
        for r in f.by_type("IfcRelAssignsToGroupByFactor")
        for c in r.RelatedObjects
    }
    assert factors == {
        ("ULS 1", "G dead"): 1.35,
        ("ULS 1", "Q imposed"): 1.5,
        ("ULS 2", "G dead"): 1.35,
        ("ULS 2", "W wind"): 1.5,
        ("ULS 2", "Q imposed"): 1.05,
        ("SLS", "G dead"): 1.0,
        ("SLS", "Q imposed"): 1.0,
        ("SLS", "W wind"): 0.6,
    }
    assert len(f.by_type("IfcStructuralCurveAction")) == 3
    assert len(f.by_type("IfcStructuralPointAction")) == 2
    assert len(f.by_type("IfcColumn")) == 4 and len(f.by_type("IfcBeam")) == 2
    assert len(f.by_type("IfcRelAssignsToProduct")) == 6
    # loads in SI after unit scaling
    q_scale = ifcopenshell.util.unit.calculate_unit_scale(f, "LINEARFORCEUNIT")
    loads = sorted(a.AppliedLoad.LinearForceZ * q_scale for a in f.by_type("IfcStructuralCurveAction"))
    assert loads == pytest.approx([-15000.0, -12000.0, -10000.0])
    e_scale = 1e6 if scale == 1000.0 else 1.0  # MODULUSOFELASTICITYUNIT: N/mm2 in the mm file, Pa in the SI one
    mech = [p for p in f.by_type("IfcMaterialProperties") if p.Name == "Pset_MaterialMechanical"][0]
    young = {p.Name: p.NominalValue.wrappedValue for p in mech.Properties}["YoungModulus"]
    assert young * e_scale == pytest.approx(210e9)


def test_braced_office_contents(opened):
    f = opened("braced_office")
    assert not f.by_type("IfcStructuralItem")
    assert len(f.by_type("IfcColumn")) == 36  # 4 x 3 grid lines, 3 storeys
    assert len(f.by_type("IfcBeam")) == 3 * (9 + 8) + 1  # X and Y beams per floor + secondary
    braces = f.by_type("IfcMember")
    assert len(braces) == 18 and {b.PredefinedType for b in braces} == {"BRACE"}
    assert len(f.by_type("IfcFooting")) == 12
    assert ifcopenshell.util.unit.calculate_unit_scale(f, "LENGTHUNIT") == pytest.approx(1e-3)
    assert ifcopenshell.util.unit.calculate_unit_scale(f, "FORCEUNIT") == pytest.approx(1e3)
    assert {u.CardinalPoint for u in f.by_type("IfcMaterialProfileSetUsage")} == {5}


def test_roof_truss_contents(opened):
    f = opened("roof_truss")
    assert len(f.by_type("IfcStructuralPointConnection")) == 12
    members = f.by_type("IfcStructuralCurveMember")
    assert len(members) == 21 and {m.PredefinedType for m in members} == {"PIN_JOINED_MEMBER"}
    model = f.by_type("IfcStructuralAnalysisModel")[0]
    assert model.PredefinedType == "IN_PLANE_LOADING_2D"
    loads = [a.AppliedLoad.ForceZ for a in f.by_type("IfcStructuralPointAction")]
    assert loads == [-10000.0] * 5
    assert _groups(f, "LOAD_COMBINATION") == ["ULS"]


def test_unstable_frame_contents(opened):
    f = opened("unstable_frame")
    assert f.schema == "IFC2X3"
    assert len(f.by_type("IfcStructuralPointConnection")) == 4
    assert len(f.by_type("IfcStructuralCurveMember")) == 3
    base = [n for n in f.by_type("IfcStructuralPointConnection") if n.Name == "N1"][0].AppliedCondition
    assert list(base)[1:] == [-1.0, -1.0, -1.0, -1.0, 0.0, -1.0]
    hinged = [r for r in f.by_type("IfcRelConnectsStructuralMember") if r.AppliedCondition]
    assert sorted(r.Name for r in hinged) == ["B1-N3", "B1-N4"]
    assert _groups(f, "LOAD_COMBINATION") == []
