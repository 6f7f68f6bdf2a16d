"""Materials of whole models: the user's material map, defaults, and the one report of unknown materials.

Small IFC files are built here entity by entity (a two-bay portal of physical
columns and beams for route 2, the bundled workshop portal for route 1).
"""
from __future__ import annotations

import json
import tomllib

import ifcopenshell
import ifcopenshell.guid
import numpy as np
import pytest

from analysis.errors import AnalysisError
from analysis.ifc.material_map import load_material_map, parse_material_map
from analysis.ifc.materials import FAMILY_DEFAULTS, NO_MATERIAL_DEFAULTS, UnknownMaterialsError, grade_table
from analysis.ifc.reader import ReaderDefaults, read_ifc
from analysis.model import SOURCES, STANDARD_GRAVITY, Section

B, H = 0.3, 0.3  # column and beam rectangles, m


class Portal:
    """Two bays of physical columns and beams (m, N, kg), each element with the material given (or none)."""

    def __init__(self, schema="IFC4"):
        self.f = f = ifcopenshell.file(schema=schema)
        self.is2x3 = schema == "IFC2X3"
        units = [f.create_entity("IfcSIUnit", UnitType=t, Name=n) for t, n in
                 (("LENGTHUNIT", "METRE"), ("FORCEUNIT", "NEWTON"), ("PLANEANGLEUNIT", "RADIAN"))]
        units.append(f.create_entity("IfcSIUnit", UnitType="MASSUNIT", Prefix="KILO", Name="GRAM"))
        self.ctx = f.create_entity("IfcGeometricRepresentationContext", ContextType="Model", CoordinateSpaceDimension=3,
                                   Precision=1e-6, WorldCoordinateSystem=self.axis2())
        self.body = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model",
                                    ParentContext=self.ctx, TargetView="MODEL_VIEW")
        f.create_entity("IfcProject", GlobalId=ifcopenshell.guid.new(), Name="materials", RepresentationContexts=[self.ctx],
                        UnitsInContext=f.create_entity("IfcUnitAssignment", Units=units))
        self.elements = {}

    def pt(self, c):
        return self.f.create_entity("IfcCartesianPoint", Coordinates=[float(v) for v in c])

    def direction(self, d):
        return self.f.create_entity("IfcDirection", DirectionRatios=[float(v) for v in d])

    def axis2(self, origin=(0.0, 0.0, 0.0), axis=None, ref=None):
        return self.f.create_entity("IfcAxis2Placement3D", Location=self.pt(origin),
                                    Axis=self.direction(axis) if axis is not None else None,
                                    RefDirection=self.direction(ref) if ref is not None else None)

    def material(self, name, category=None, E=None, G=None, nu=None, density=None):
        f = self.f
        kwargs = {"Name": name}
        if category is not None and not self.is2x3:
            kwargs["Category"] = category
        mat = f.create_entity("IfcMaterial", **kwargs)
        if self.is2x3:
            if E is not None or G is not None or nu is not None:
                f.create_entity("IfcMechanicalMaterialProperties", Material=mat, YoungModulus=E, ShearModulus=G, PoissonRatio=nu)
            if density is not None:
                f.create_entity("IfcGeneralMaterialProperties", Material=mat, MassDensity=density)
            return mat

        def prop(pname, measure, value):
            return f.create_entity("IfcPropertySingleValue", Name=pname, NominalValue=f.create_entity(measure, value))

        mech = [prop(n, m, v) for n, m, v in (("YoungModulus", "IfcModulusOfElasticityMeasure", E),
                                             ("ShearModulus", "IfcModulusOfElasticityMeasure", G),
                                             ("PoissonRatio", "IfcPositiveRatioMeasure", nu)) if v is not None]
        if mech:
            f.create_entity("IfcMaterialProperties", Name="Pset_MaterialMechanical", Material=mat, Properties=mech)
        if density is not None:
            f.create_entity("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=mat,
                            Properties=[prop("MassDensity", "IfcMassDensityMeasure", density)])
        return mat

    def element(self, cls, name, p0, p1, material=None):
        """A linear element with an extruded rectangular body along its local z; ``material`` an IfcMaterial or None."""
        f = self.f
        p0, p1 = np.asarray(p0, float), np.asarray(p1, float)
        z = (p1 - p0) / np.linalg.norm(p1 - p0)
        x = (1.0, 0.0, 0.0) if abs(z[2]) > 0.999 else (0.0, -1.0, 0.0) if abs(z[0]) > 0.999 else (1.0, 0.0, 0.0)
        pl = f.create_entity("IfcLocalPlacement", RelativePlacement=self.axis2(p0, z, x))
        prof = f.create_entity("IfcRectangleProfileDef", ProfileType="AREA", ProfileName=f"R{B}x{H}",
                               Position=f.create_entity("IfcAxis2Placement2D", Location=self.pt((0.0, 0.0))), XDim=B, YDim=H)
        solid = f.create_entity("IfcExtrudedAreaSolid", SweptArea=prof, Position=self.axis2(),
                                ExtrudedDirection=self.direction((0, 0, 1)), Depth=float(np.linalg.norm(p1 - p0)))
        rep = f.create_entity("IfcShapeRepresentation", ContextOfItems=self.body, RepresentationIdentifier="Body",
                              RepresentationType="SweptSolid", Items=[solid])
        e = f.create_entity(cls, GlobalId=ifcopenshell.guid.new(), Name=name, ObjectPlacement=pl,
                            Representation=f.create_entity("IfcProductDefinitionShape", Representations=[rep]))
        if material is not None:
            f.create_entity("IfcRelAssociatesMaterial", GlobalId=ifcopenshell.guid.new(), RelatedObjects=[e],
                            RelatingMaterial=material)
        self.elements[name] = e
        return e

    def write(self, path):
        self.f.write(str(path))
        return path


def two_bays(schema="IFC4"):
    """Columns C1 (x=0), C2 (x=5), C3 (x=10) 3 m high, beams B1 (0..5) and B2 (5..10) on top.

    C1, C2: 'Solid' (nothing in the file); B1: 'Radial Gradient Fill 9'; B2: 'S355J2'; C3: no material.
    """
    m = Portal(schema)
    solid = m.material("Solid")
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 3), solid)
    m.element("IfcColumn", "C2", (5, 0, 0), (5, 0, 3), solid)
    m.element("IfcColumn", "C3", (10, 0, 0), (10, 0, 3), None)
    m.element("IfcBeam", "B1", (0, 0, 3), (5, 0, 3), m.material("Radial Gradient Fill 9"))
    m.element("IfcBeam", "B2", (5, 0, 3), (10, 0, 3), m.material("S355J2", category="Steel"))
    return m


def member_of(frame, name):
    return frame.member_index(name)


# --------------------------------------------------------------------------- the report
def test_unknown_materials_in_one_report_with_a_snippet(tmp_path, capsys):
    from analysis.cli import main

    m = two_bays()
    path = m.write(tmp_path / "bays.ifc")
    out = tmp_path / "out.ifc"
    code = main(["analyze", str(path), "-o", str(out), "--json", str(tmp_path / "r.json")])
    err = capsys.readouterr().err
    assert code == 2
    assert not out.exists() and not (tmp_path / "r.json").exists()  # nothing half-written
    assert "Traceback" not in err
    # every unknown material, its element count and two example elements (#id, class, Name, GlobalId)
    c1, c2, b1 = m.elements["C1"], m.elements["C2"], m.elements["B1"]
    assert "2 materials of 3 elements" in err
    assert "'Solid': 2 elements (2 IfcColumn)" in err
    assert f"#{c1.id()} IfcColumn 'C1' (GlobalId {c1.GlobalId})" in err
    assert f"#{c2.id()} IfcColumn 'C2' (GlobalId {c2.GlobalId})" in err
    assert f"'Radial Gradient Fill 9': 1 element (1 IfcBeam)" in err and f"#{b1.id()} IfcBeam 'B1'" in err
    # recognised or absent materials are not in the report
    assert "S355J2" not in err.split("[materials]")[0].split("could not be identified")[1]
    # elements that are not part of the frame: how to leave them out instead
    assert """--exclude 'IfcElement, material="Solid"'""" in err
    # the ready-to-edit snippet is TOML naming exactly the unknown materials, grades left to fill in
    snippet = err[err.index("# materials.toml"):]
    doc = tomllib.loads(snippet)
    assert doc["materials"] == {"Solid": "", "Radial Gradient Fill 9": ""}
    # as it stands the snippet is refused: every grade must be filled in
    (tmp_path / "materials.toml").write_text(snippet)
    with pytest.raises(AnalysisError, match="no grade given"):
        load_material_map(tmp_path / "materials.toml")


def test_filled_in_snippet_analyses_and_the_json_traces_each_value(tmp_path, capsys):
    from analysis.cli import main

    m = two_bays()
    path = m.write(tmp_path / "bays.ifc")
    (tmp_path / "materials.toml").write_text('[materials]\n"Solid" = "C30/37"\n"Radial Gradient Fill 9" = "S355"\n')
    code = main(["analyze", str(path), "-o", str(tmp_path / "out.ifc"), "--json", str(tmp_path / "r.json"), "-q",
                 "--materials", str(tmp_path / "materials.toml")])
    assert code == 0, capsys.readouterr().err
    doc = json.loads((tmp_path / "r.json").read_text())
    members = {mid: v for mid, v in doc["members"].items()}
    assert set(members["C1"]["material"]) == {"name", "E", "G", "density", "source"}
    assert set(members["C1"]["section"]) == {"name", "A", "Iy", "Iz", "J", "source"}
    c30, s355, s235 = grade_table()["C30/37"], grade_table()["S355"], grade_table()[NO_MATERIAL_DEFAULTS["IfcColumn"]]
    assert members["C1"]["material"] == {"name": "Solid", "E": c30.E, "G": c30.G, "density": c30.density, "source": "user map"}
    assert members["B1"]["material"]["source"] == "user map" and members["B1"]["material"]["E"] == s355.E
    assert members["B2"]["material"]["source"] == "grade table"
    assert members["C3"]["material"] == {"name": s235.name, "E": s235.E, "G": s235.G, "density": s235.density,
                                         "source": "default"}
    for v in members.values():
        assert v["material"]["source"] in SOURCES and v["section"]["source"] in SOURCES
        # the section of an extruded 0.3 m square: A = b h, I = b h^3 / 12 (Gere & Timoshenko — from memory)
        assert v["section"]["A"] == pytest.approx(B * H) and v["section"]["Iy"] == pytest.approx(B * H**3 / 12)
        assert v["section"]["source"] == "file"
    # the same entries in `check --json`
    assert main(["check", str(path), "--json", str(tmp_path / "c.json"), "-q", "--materials",
                 str(tmp_path / "materials.toml")]) == 0
    counts = json.loads((tmp_path / "c.json").read_text())
    assert counts["members"]["C1"]["material"] == members["C1"]["material"]


# --------------------------------------------------------------------------- the map
def test_map_glob_class_fallback_default_and_explicit_values(tmp_path):
    m = two_bays()
    path = m.write(tmp_path / "bays.ifc")
    mm = parse_material_map({
        "default": "C24",
        "materials": {"sol*": {"grade": "S355", "density": "7.7 t/m3"}},
        "classes": {"IfcBeam": {"E": "70 GPa", "nu": 0.25, "density": 2500}},
    }, "map.toml")
    fr = read_ifc(path, materials=mm).frame
    k = {name: member_of(fr, name) for name in ("C1", "C2", "C3", "B1", "B2")}
    # glob, case-insensitive, with the density replaced
    assert (fr.E[k["C1"]], fr.G[k["C1"]], fr.density[k["C1"]]) == (210e9, 81e9, pytest.approx(7700.0))
    assert fr.material_sources[k["C1"]] == fr.material_sources[k["C2"]] == "user map"
    # class fallback: explicit values, G = E / (2 (1 + nu))
    assert (fr.E[k["B1"]], fr.G[k["B1"]], fr.density[k["B1"]]) == (70e9, pytest.approx(70e9 / 2.5), 2500)
    assert fr.material_sources[k["B1"]] == "user map"
    # a grade in the name wins over the class fallback
    assert fr.material_sources[k["B2"]] == "grade table" and fr.E[k["B2"]] == 210e9
    # no material at all: the map's default
    c24 = grade_table()["C24"]
    assert (fr.E[k["C3"]], fr.G[k["C3"]], fr.density[k["C3"]], fr.material_names[k["C3"]]) == (c24.E, c24.G, c24.density, "C24")
    assert fr.material_sources[k["C3"]] == "user map"


def test_map_exact_name_before_globs_and_globs_in_file_order():
    mm = parse_material_map({"materials": {"S*": "C24", "Solid*": "GL24h", "solid": "D30"}})
    assert mm.for_name("Solid")[0] == "solid"  # exact (ignoring case) first
    assert mm.for_name("Solid 2")[0] == "S*"  # then the first glob in the file
    assert mm.for_name("Other") is None


def test_map_class_keys_match_subtypes():
    mm = parse_material_map({"classes": {"IfcBeam": "S355", "IfcElement": "C24"}})
    f = ifcopenshell.file(schema="IFC4")
    assert mm.for_class(f, "IfcBeamStandardCase")[0] == "IfcBeam"
    assert mm.for_class(f, "IfcColumn")[0] == "IfcElement"
    assert mm.for_class(f, "IfcStructuralCurveMember") is None


def test_timber_grade_with_a_new_e_keeps_its_shear_ratio():
    spec = parse_material_map({"materials": {"x": {"grade": "C24", "E": "12000 MPa"}}}).names[0][1]
    c24 = grade_table()["C24"]
    assert spec.values["E"] == 12e9 and spec.values["G"] == pytest.approx(12e9 * c24.G / c24.E)


@pytest.mark.parametrize("doc, message", [
    ({"materials": {"x": "unobtainium"}}, r"\[materials\] 'x'.*not a grade"),
    ({"materials": {"x": ""}}, "no grade given"),
    ({"materials": {"x": {"E": "210 GPa", "colour": "red"}}}, "unknown key colour"),
    ({"materials": {"x": {"E": "210 furlongs"}}}, "unit 'furlongs'"),
    ({"materials": {"x": {"E": -1.0}}}, "E must be > 0"),
    ({"materials": {"x": {"grade": "S355", "nu": 0.7}}}, "nu must lie between"),
    ({"materials": {"x": {"density": 7850}}}, "give a grade or E"),
    ({"classes": {"beams": "S355"}}, "not an IFC class name"),
    ({"defaults": "S235"}, "unknown top-level key defaults"),
])
def test_map_errors_name_the_entry(doc, message):
    with pytest.raises(AnalysisError, match=message):
        parse_material_map(doc, "map.toml")


def test_map_file_errors(tmp_path):
    with pytest.raises(AnalysisError, match="material map not found"):
        load_material_map(tmp_path / "none.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text('[materials]\n"x" = \n')
    with pytest.raises(AnalysisError, match="not a valid TOML"):
        load_material_map(bad)
    good = tmp_path / "good.toml"
    good.write_text('default = "S235"\n[materials]\n"Solid" = { grade = "C30/37" }\n[classes]\nIfcMember = "C24"\n')
    mm = load_material_map(good)
    assert mm.default.grade == "S235" and mm.for_name(" solid ")[1].grade == "C30/37" and mm.classes[0][0] == "IfcMember"


def test_bad_map_through_the_cli_is_exit_2(tmp_path, capsys):
    from analysis.cli import main

    path = two_bays().write(tmp_path / "bays.ifc")
    (tmp_path / "m.toml").write_text('[materials]\n"Solid" = "S999"\n')
    assert main(["check", str(path), "--materials", str(tmp_path / "m.toml")]) == 2
    err = capsys.readouterr().err
    assert "m.toml" in err and "'S999' is not a grade" in err and "Traceback" not in err


# --------------------------------------------------------------------------- file values, words, defaults
@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4", "IFC4X3_ADD2"])
def test_file_values_win_and_the_grade_completes_them(schema, tmp_path):
    m = Portal(schema)
    conc = m.material("Concrete C30/37", E=30e9, nu=0.15)  # the file's own E and nu, no density
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 3), conc)
    m.element("IfcColumn", "C2", (5, 0, 0), (5, 0, 3), conc)
    m.element("IfcBeam", "B1", (0, 0, 3), (5, 0, 3), conc)
    result = read_ifc(m.write(tmp_path / "c.ifc"))
    fr = result.frame
    k = member_of(fr, "C1")
    assert fr.E[k] == pytest.approx(30e9) and fr.G[k] == pytest.approx(30e9 / 2.3)
    # density from EN 1991-1-1 Table A.1 through the grade: 25 kN/m3 for reinforced concrete
    assert fr.density[k] * STANDARD_GRAVITY == pytest.approx(25e3, rel=1e-6)
    assert fr.material_sources[k] == "file"
    assert "Materials: 'Concrete C30/37' -> file values + grade table C30/37 (3 elements)." in result.notes


def test_bare_word_gives_the_family_default_with_a_warning(tmp_path):
    m = Portal()
    wood = m.material("Softwood", category="Softwood")
    for name, p0, p1 in (("C1", (0, 0, 0), (0, 0, 3)), ("C2", (5, 0, 0), (5, 0, 3)), ("B1", (0, 0, 3), (5, 0, 3))):
        m.element("IfcColumn" if name[0] == "C" else "IfcBeam", name, p0, p1, wood)
    result = read_ifc(m.write(tmp_path / "w.ifc"))
    c24 = grade_table()[FAMILY_DEFAULTS["softwood"]]
    fr = result.frame
    assert set(fr.material_sources) == {"default"}
    assert np.all(fr.E == c24.E) and np.all(fr.density == c24.density)
    warned = [d for d in result.diagnostics if d.level == "warning" and "the word 'softwood'" in d.message]
    assert len(warned) == 3 and {d.entity_id for d in warned} == {e.id() for e in m.elements.values()}
    assert any(n.startswith("Materials:") and "'Softwood' -> default C24 (3 elements)" in n for n in result.notes)


# --------------------------------------------------------------------------- route 1
def _route1(tmp_path, edit, name="wp.ifc"):
    from analysis.samples import write_sample

    path = tmp_path / name
    write_sample("workshop_portal", path)
    f = ifcopenshell.open(str(path))
    edit(f)
    f.write(str(path))
    return path, f


def test_curve_members_without_material_take_the_class_default(tmp_path):
    def drop(f):
        for mp in f.by_type("IfcMaterialProfile"):
            mp.Material = None  # the profile stays, the material is gone

    path, f = _route1(tmp_path, drop)
    members = f.by_type("IfcStructuralCurveMember")
    result = read_ifc(path)
    s235 = grade_table()[NO_MATERIAL_DEFAULTS["IfcStructuralCurveMember"]]
    assert set(result.frame.material_sources) == {"default"} and np.all(result.frame.E == s235.E)
    warned = {d.entity_id for d in result.diagnostics if d.level == "warning" and "holds no IfcMaterial" in d.message}
    assert warned == {mm.id() for mm in members}
    # the map's class fallback says otherwise
    mm = parse_material_map({"classes": {"IfcStructuralCurveMember": "S460"}, "default": "C24"})
    assert set(read_ifc(path, materials=mm).frame.material_sources) == {"user map"}


def test_ifc2x3_style_association_without_material(tmp_path):
    # as exported by some tools: the association's material is not readable ($): no material, no profile
    def blank(f):
        for rel in f.by_type("IfcRelAssociatesMaterial"):
            rel.RelatingMaterial = None

    path, _ = _route1(tmp_path, blank)
    sec = Section("given", A=0.01, Iy=1e-4, Iz=1e-4, J=1e-5)
    fr = read_ifc(path, defaults=ReaderDefaults(section=sec)).frame
    assert set(fr.material_sources) == {"default"} and set(fr.section_sources) == {"default"}
    mm = parse_material_map({"default": "C30/37"})
    fr = read_ifc(path, defaults=ReaderDefaults(section=sec), materials=mm).frame
    assert set(fr.material_sources) == {"user map"} and np.all(fr.E == grade_table()["C30/37"].E)


def test_route_1_unknown_material_report(tmp_path):
    def anonymise(f):
        for mat in f.by_type("IfcMaterial"):
            mat.Name, mat.Category = "Solid", None
        for props in f.by_type("IfcMaterialProperties"):
            f.remove(props)

    path, f = _route1(tmp_path, anonymise)
    with pytest.raises(UnknownMaterialsError, match=r"'Solid': \d+ elements \(\d+ IfcStructuralCurveMember\)") as info:
        read_ifc(path)
    (name, count, missing, examples), = info.value.unknown
    assert name == "Solid" and count == len(f.by_type("IfcStructuralCurveMember")) and len(examples) == 2
    assert "YoungModulus" in missing
    fr = read_ifc(path, materials=parse_material_map({"materials": {"Solid": "S355"}})).frame
    assert set(fr.material_sources) == {"user map"}


# --------------------------------------------------------------------------- several materials
@pytest.mark.parametrize("schema", ["IFC2X3", "IFC4"])
def test_several_materials_the_load_bearing_one_or_the_report(schema, tmp_path):
    m = Portal(schema)
    f = m.f

    def several(*materials):
        if schema == "IFC2X3":
            return f.create_entity("IfcMaterialList", Materials=list(materials))
        return f.create_entity("IfcMaterialConstituentSet", MaterialConstituents=[
            f.create_entity("IfcMaterialConstituent", Material=mat) for mat in materials])

    painted = several(m.material("S275J0"), m.material("Paint, grey"))
    finishes = several(m.material("Paint"), m.material("Wall finish"))
    m.element("IfcColumn", "C1", (0, 0, 0), (0, 0, 3), painted)
    m.element("IfcColumn", "C2", (5, 0, 0), (5, 0, 3), finishes)
    m.element("IfcBeam", "B1", (0, 0, 3), (5, 0, 3), painted)
    path = m.write(tmp_path / "s.ifc")
    with pytest.raises(UnknownMaterialsError, match=r"'Paint \+ Wall finish': 1 element") as info:
        read_ifc(path)
    assert [u[0] for u in info.value.unknown] == ["Paint + Wall finish"]  # the painted steel is not in the report
    result = read_ifc(path, materials=parse_material_map({"materials": {"Paint + Wall*": "C30/37"}}))
    fr = result.frame
    k1, k2 = member_of(fr, "C1"), member_of(fr, "C2")
    assert (fr.material_names[k1], fr.material_sources[k1], fr.E[k1]) == ("S275J0", "grade table", 210e9)
    assert fr.material_sources[k2] == "user map" and fr.E[k2] == grade_table()["C30/37"].E
    assert any(d.level == "warning" and "the load-bearing one, 'S275J0'" in d.message
               for d in result.diagnostics if d.entity_id == m.elements["C1"].id())


def test_the_readme_example_is_a_valid_map():
    import pathlib

    text = (pathlib.Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    section = text[text.index("## Materials"):]
    block = section[section.index("```toml") + len("```toml"):]
    mm = parse_material_map(tomllib.loads(block[:block.index("```")]), "README.md")
    assert mm.default is not None and mm.names and mm.classes


def test_element_material_of_one_element():
    from analysis.ifc.materials import element_material
    from analysis.units import unit_scales

    m = two_bays()
    scales = unit_scales(m.f)
    mat, diags = element_material(m.f, m.elements["B2"], scales)
    assert (mat.name, mat.E, mat.source, diags) == ("S355J2", 210e9, "grade table", [])
    mat, diags = element_material(m.f, m.elements["C3"], scales)
    assert mat.source == "default" and diags[0].level == "warning"
    with pytest.raises(UnknownMaterialsError, match="'Solid': 1 element"):
        element_material(m.f, m.elements["C1"], scales)
    mat, _ = element_material(m.f, m.elements["C1"], scales, ReaderDefaults(E=30e9, poisson=0.2, density=2400.0))
    assert (mat.E, mat.G, mat.density, mat.source) == (30e9, pytest.approx(12.5e9), 2400.0, "default")


def test_derive_takes_the_map_as_a_path_in_its_defaults(tmp_path):
    from analysis.ifc.derive import derive_frame
    from analysis.units import unit_scales

    m = two_bays()
    (tmp_path / "m.toml").write_text('[materials]\n"Solid" = "C30/37"\n"Radial*" = "S355"\n')
    fr, _, _ = derive_frame(m.f, scales=unit_scales(m.f), defaults={"materials": str(tmp_path / "m.toml")})
    assert fr.material_sources[member_of(fr, "C1")] == "user map"
