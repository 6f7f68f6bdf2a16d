"""analysis.ifc.materials: the grade table and the recognition of grade names.

Values are checked against the standards' own tables and formulas (named at
each check); spellings are those seen in exported building models.
"""
from __future__ import annotations

import math

import pytest

from analysis.ifc.materials import FAMILY_DEFAULTS, NO_MATERIAL_DEFAULTS, find_grade, grade_table, recognise_grade

G0 = 9.80665  # standard gravity, m/s2 (common practice, no source)
KSI = 1000 * 0.45359237 * G0 / 0.0254**2  # 1 ksi in Pa from the definitions of the pound and the inch
PCF = 0.45359237 / 0.3048**3  # 1 lb/ft3 in kg/m3


# --------------------------------------------------------------------------- spellings
@pytest.mark.parametrize("name, grade, how", [
    ("S235JR", "S235", "grade"),
    ("STEEL/S275J0", "S275", "grade"),
    ("S275J2", "S275", "grade"),
    ("S355JR", "S355", "grade"),
    ("s355jr", "S355", "grade"),
    ("S355 J2H", "S355", "grade"),
    ("S355-K2", "S355", "grade"),
    ("S355J2+N", "S355", "grade"),
    ("S235JRG2", "S235", "grade"),
    ("S275JO", "S275", "grade"),  # the letter O for the digit 0, as typed in practice
    ("S355J0W", "S355", "grade"),
    ("S420NL", "S420", "grade"),
    ("S460ML", "S460", "grade"),
    ("S460QL1", "S460", "grade"),
    ("S450J0", "S450", "grade"),
    ("Structural steel S355", "S355", "grade"),
    ("ASTM A36", "A36", "grade"),
    ("A36", "A36", "grade"),
    ("ASTM A992", "A992", "grade"),
    ("A572 Gr50", "A572 Gr50", "grade"),
    ("A572 Gr. 50", "A572 Gr50", "grade"),
    ("ASTM A572 Grade 65", "A572 Gr65", "grade"),
    ("A572-50", "A572 Gr50", "grade"),
    ("A500 Gr.B", "A500 GrB", "grade"),
    ("A500C", "A500 GrC", "grade"),
    ("Concrete C30/37", "C30/37", "grade"),
    ("C30-37", "C30/37", "grade"),
    ("C 30/37", "C30/37", "grade"),
    ("c90/105", "C90/105", "grade"),
    ("C12/15", "C12/15", "grade"),
    ("Concrete C30", "C30/37", "grade"),  # Cnn in a concrete's name: the cylinder strength
    ("Beton C25/30", "C25/30", "grade"),
    ("LC25/28", "LC25/28 D1.8", "grade"),
    ("LC30/33 D1,6", "LC30/33 D1.6", "grade"),
    ("LC 20/22 D2.0", "LC20/22 D2.0", "grade"),
    ("gl24h", "GL24h", "grade"),
    ("GL 28c", "GL28c", "grade"),
    ("Glulam GL32h", "GL32h", "grade"),
    ("C24", "C24", "grade"),  # Cnn alone: an EN 338 softwood class
    ("Timber C16", "C16", "grade"),
    ("D70", "D70", "grade"),
    ("Oak D30", "D30", "grade"),
    ("EN AW-6082 T6", "EN AW-6082 T6", "grade"),
    ("AW-6063-T5", "EN AW-6063 T5", "grade"),
    ("6061-T6", "EN AW-6061 T6", "grade"),
    ("Aluminium 6082", "EN AW-6082 T6", "grade"),
    ("EN AW-5083 O/H111", "EN AW-5083 O/H111", "grade"),
    # bare words: the family's documented default grade
    ("Steel", FAMILY_DEFAULTS["steel"], "word"),
    ("STEEL", FAMILY_DEFAULTS["steel"], "word"),
    ("metal_steel-galvanized", FAMILY_DEFAULTS["steel"], "word"),
    ("Metal - Steel - 345 MPa", FAMILY_DEFAULTS["steel"], "word"),
    ("Baustahl", FAMILY_DEFAULTS["steel"], "word"),
    ("Concrete", FAMILY_DEFAULTS["concrete"], "word"),
    ("Concrete, Cast-in-Place gray", FAMILY_DEFAULTS["concrete"], "word"),
    ("concrete_reinforced_in-situ", FAMILY_DEFAULTS["concrete"], "word"),
    ("Stahlbeton 65690", FAMILY_DEFAULTS["concrete"], "word"),
    ("Lightweight concrete", FAMILY_DEFAULTS["lightweight concrete"], "word"),
    ("Leichtbeton", FAMILY_DEFAULTS["lightweight concrete"], "word"),
    ("Timber", FAMILY_DEFAULTS["softwood"], "word"),
    ("wood", FAMILY_DEFAULTS["softwood"], "word"),
    ("Softwood", FAMILY_DEFAULTS["softwood"], "word"),
    ("wood_spruce_beam", FAMILY_DEFAULTS["softwood"], "word"),
    ("Holz", FAMILY_DEFAULTS["softwood"], "word"),
    ("Hardwood", FAMILY_DEFAULTS["hardwood"], "word"),
    ("Glued laminated timber", FAMILY_DEFAULTS["glulam"], "word"),
    ("Aluminium", FAMILY_DEFAULTS["aluminium"], "word"),
    ("aluminum", FAMILY_DEFAULTS["aluminium"], "word"),
])
def test_grade_names_in_the_spellings_of_real_files(name, grade, how):
    found = recognise_grade(name)
    assert found is not None, name
    assert (found.grade.name, found.how) == (grade, how)


@pytest.mark.parametrize("name", [
    "Solid", "Default", " <Unnamed>", "", "internal wall finish", "Radial Gradient Fill 1515460218",
    "STEEL/NEOPRENE",  # a bearing pad: another material named beside the family word
    "Concrete, Sand/Cement Screed", "MISCELLANEOUS/PVC", "stone_granite_masonry", "8.8",
    "S2355", "XS355", "S355X", "A3600", "C99/99", "GL40h", "Steel and concrete",
])
def test_names_that_are_not_a_grade(name):
    assert recognise_grade(name) is None


def test_category_counts_and_the_name_wins():
    assert recognise_grade("Material-12", "Steel").grade.name == FAMILY_DEFAULTS["steel"]
    assert recognise_grade("Material-12", "S355").how == "grade"
    assert recognise_grade("S275J2", "Steel").grade.name == "S275"  # a designation in the name beats the category
    assert recognise_grade("Steel", "S460").grade.name == "S460"  # a designation in the category beats a bare word
    assert recognise_grade(None, None) is None


def test_what_was_read_is_reported_as_written():
    assert recognise_grade("STEEL/S275J0").text == "S275J0"
    assert recognise_grade("gl24h").text == "gl24h"
    assert recognise_grade("Concrete, Cast-in-Place gray").text == "concrete"


def test_find_grade_for_the_material_map():
    assert find_grade("S355J2").name == "S355"
    assert find_grade("C30/37").name == "C30/37"
    assert find_grade("timber").name == FAMILY_DEFAULTS["softwood"]
    with pytest.raises(ValueError, match="not a grade"):
        find_grade("unobtainium")


# --------------------------------------------------------------------------- the table
def test_every_row_names_its_source_and_gives_what_a_frame_needs():
    table = grade_table()
    assert len(table) > 100
    for g in table.values():
        assert g.source and g.standard, g.name
        assert g.E > 0 and g.G > 0 and g.density > 0, g.name
        assert g.G < g.E
    for family, name in FAMILY_DEFAULTS.items():
        assert table[name].family == family
    assert set(NO_MATERIAL_DEFAULTS.values()) <= set(table)


@pytest.mark.parametrize("name, fy", [("S235", 235), ("S275", 275), ("S355", 355), ("S420", 420), ("S450", 450), ("S460", 460)])
def test_en_structural_steels(name, fy):
    g = grade_table()[name]
    # EN 1993-1-1:2005 3.2.6: E = 210 000 N/mm2, nu = 0.3, G = E / (2 (1 + nu)) ~ 81 000 N/mm2 (from memory)
    assert (g.E, g.G, g.poisson) == (210e9, 81e9, 0.3)
    assert g.G == pytest.approx(g.E / (2 * (1 + g.poisson)), rel=0.01)
    # EN 1991-1-1:2002 Table A.4: steel 77.0 to 78.5 kN/m3 (from memory); 7850 kg/m3 x g is 77.0 to 0.1 kN/m3
    assert 77.0 <= round(g.density * G0 / 1e3, 1) <= 78.5
    # the grade number is the nominal yield strength, t <= 16 mm (EN 10025-2 Table 7, from memory)
    assert g.strength == fy * 1e6


@pytest.mark.parametrize("name, fy_ksi", [("A36", 36), ("A992", 50), ("A572 Gr50", 50), ("A572 Gr65", 65),
                                          ("A500 GrB", 46), ("A500 GrC", 50), ("A53 GrB", 35)])
def test_astm_steels_with_aisc_values(name, fy_ksi):
    g = grade_table()[name]
    # AISC 360-16: E = 29 000 ksi, G = 11 200 ksi; AISC Manual: steel weighs 490 lb/ft3 (from memory)
    assert g.E == pytest.approx(29000 * KSI, rel=1e-6)
    assert g.G == pytest.approx(11200 * KSI, rel=1e-6)
    assert g.density == pytest.approx(490 * PCF, rel=1e-4)
    # AISC Manual Table 2-4 (2-3 for HSS): Fy (from memory)
    assert g.strength == pytest.approx(fy_ksi * KSI, rel=1e-3)


# EN 1992-1-1:2004 Table 3.1 (from memory): fck, fck,cube, Ecm in GPa as printed
TABLE_3_1 = [(12, 15, 27), (16, 20, 29), (20, 25, 30), (25, 30, 31), (30, 37, 33), (35, 45, 34), (40, 50, 35),
             (45, 55, 36), (50, 60, 37), (55, 67, 38), (60, 75, 39), (70, 85, 41), (80, 95, 42), (90, 105, 44)]


@pytest.mark.parametrize("fck, cube, ecm", TABLE_3_1)
def test_concrete_classes_of_en_1992_table_3_1(fck, cube, ecm):
    g = grade_table()[f"C{fck}/{cube}"]
    assert g.E == ecm * 1e9 and g.strength == fck * 1e6
    # the same table's formula Ecm = 22 (fcm / 10)^0.3 GPa with fcm = fck + 8 MPa, rounded as printed
    assert abs(g.E / 1e9 - 22 * ((fck + 8) / 10) ** 0.3) < 0.5
    # nu = 0.2 for uncracked concrete, EN 1992-1-1 3.1.3(4)
    assert g.poisson == 0.2 and g.G == pytest.approx(g.E / 2.4)
    # EN 1991-1-1:2002 Table A.1: normal-weight concrete 24 kN/m3, +1 for normal reinforcement (from memory)
    assert g.density * G0 == pytest.approx(25e3, rel=1e-4)


@pytest.mark.parametrize("flck, cube", [(8, 9), (20, 22), (25, 28), (35, 38), (50, 55), (80, 88)])
@pytest.mark.parametrize("dclass, rho, gamma", [("1.0", 1000, 11), ("1.4", 1400, 15), ("1.8", 1800, 19), ("2.0", 2000, 21)])
def test_lightweight_concrete_of_en_1992_section_11(flck, cube, dclass, rho, gamma):
    g = grade_table()[f"LC{flck}/{cube} D{dclass}"]
    # EN 1992-1-1 11.3.2(1): Elcm = Ecm eta_E, eta_E = (rho / 2200)^2, Ecm from Table 3.1's formula with flcm = flck + 8
    expected = 22e9 * ((flck + 8) / 10) ** 0.3 * (rho / 2200) ** 2
    assert g.E == pytest.approx(expected, rel=1e-3)
    assert g.poisson == 0.2  # 11.3.2(2)
    # EN 1991-1-1 Table A.1 lightweight concrete: upper bound of the density class, +1 kN/m3 when reinforced
    assert g.density * G0 == pytest.approx(gamma * 1e3, rel=1e-4)


# EN 338:2009 Table 1 (from memory): class, E0,mean (kN/mm2), Gmean (kN/mm2), rho_mean (kg/m3)
EN_338 = [("C14", 7.0, 0.44, 350), ("C16", 8.0, 0.50, 370), ("C18", 9.0, 0.56, 380), ("C20", 9.5, 0.59, 390),
          ("C22", 10.0, 0.63, 410), ("C24", 11.0, 0.69, 420), ("C27", 11.5, 0.72, 450), ("C30", 12.0, 0.75, 460),
          ("C35", 13.0, 0.81, 480), ("C40", 14.0, 0.88, 500), ("C45", 15.0, 0.94, 520), ("C50", 16.0, 1.00, 550),
          ("D18", 10.0, 0.63, 570), ("D24", 11.0, 0.69, 580), ("D30", 11.0, 0.69, 640), ("D35", 12.0, 0.75, 650),
          ("D40", 13.0, 0.81, 660), ("D50", 14.0, 0.88, 750), ("D60", 17.0, 1.06, 840), ("D70", 20.0, 1.25, 1080)]


@pytest.mark.parametrize("name, e0, gmean, rho", EN_338)
def test_timber_classes_of_en_338(name, e0, gmean, rho):
    g = grade_table()[name]
    assert (g.E, g.G, g.density) == (e0 * 1e9, pytest.approx(gmean * 1e9), rho)
    # the table's Gmean is E0,mean / 16 rounded to 0.01 kN/mm2 (EN 338:2009 Table 1, from memory)
    assert abs(g.G - g.E / 16) <= 0.006e9
    assert g.strength == int(name[1:]) * 1e6  # the class number is fm,k in N/mm2


# EN 14080:2013 Tables 5 (h) and 4 (c) (from memory): E0,g,mean (N/mm2), rho_g,mean (kg/m3); Gg,mean 650 N/mm2
EN_14080 = [("GL20h", 8400, 370), ("GL22h", 10500, 410), ("GL24h", 11500, 420), ("GL26h", 12100, 445),
            ("GL28h", 12600, 460), ("GL30h", 13600, 480), ("GL32h", 14200, 490), ("GL20c", 10400, 390),
            ("GL22c", 10400, 390), ("GL24c", 11000, 400), ("GL26c", 12000, 420), ("GL28c", 12500, 420),
            ("GL30c", 13000, 430), ("GL32c", 13500, 440)]


@pytest.mark.parametrize("name, e0, rho", EN_14080)
def test_glulam_classes_of_en_14080(name, e0, rho):
    g = grade_table()[name]
    assert (g.E, g.G, g.density) == (e0 * 1e6, 650e6, rho)


def test_aluminium_alloys_of_en_1999():
    alloys = [g for g in grade_table().values() if g.family == "aluminium"]
    assert {"EN AW-6082 T6", "EN AW-6061 T6", "EN AW-6063 T6", "EN AW-6060 T6", "EN AW-7020 T6"} <= {g.name for g in alloys}
    for g in alloys:
        # EN 1999-1-1:2007 3.2.5: E = 70 000 N/mm2, G = 27 000 N/mm2, nu = 0.3, rho = 2700 kg/m3 (from memory)
        assert (g.E, g.G, g.poisson, g.density) == (70e9, 27e9, 0.3, 2700)
        assert g.G == pytest.approx(g.E / (2 * (1 + g.poisson)), rel=0.04)


def test_table_ships_with_the_package():
    from importlib.resources import files

    text = (files("analysis") / "data" / "material_grades.csv").read_text(encoding="utf-8")
    header = next(line for line in text.splitlines() if not line.startswith("#"))
    assert header.split(",") == ["family", "grade", "E_MPa", "G_MPa", "nu", "density_kg_m3", "strength_MPa", "standard", "source"]
    assert math.isclose(grade_table()["S355"].E, 210e9)


def test_any_name_is_read_without_error():
    from hypothesis import given
    from hypothesis import strategies as st

    @given(st.text(max_size=40), st.one_of(st.none(), st.text(max_size=20)))
    def check(name, category):
        found = recognise_grade(name, category)
        assert found is None or found.grade.name in grade_table()

    check()


@pytest.mark.parametrize("prefix", ["", "STEEL/", "Steel ", "MAT_", "Structural steel - "])
@pytest.mark.parametrize("grade", ["S235", "S275", "S355", "S460"])
@pytest.mark.parametrize("suffix", ["", "JR", "J0", " J2H", "-K2", "NL", "ML", "+N"])
def test_steel_designations_with_prefixes_and_suffixes(prefix, grade, suffix):
    found = recognise_grade(f"{prefix}{grade}{suffix}")
    assert found is not None and found.grade.name == grade and found.how == "grade"
