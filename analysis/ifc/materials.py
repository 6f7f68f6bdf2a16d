"""Materials and profiles of IFC elements, shared by both reader routes.

An element's material comes from its ``IfcRelAssociatesMaterial`` (or, when
the occurrence has none, from its type through ``IfcRelDefinesByType``):

* IFC4 and IFC4X3: ``IfcMaterial`` / ``IfcMaterialProfileSetUsage`` /
  ``IfcMaterialProfileSet`` / ``IfcMaterialProfile`` / ``IfcMaterialLayerSet``
  (usage) / ``IfcMaterialConstituentSet`` / ``IfcMaterialList``; the values
  are read from ``IfcMaterialProperties`` named ``Pset_MaterialMechanical``
  (YoungModulus, ShearModulus, PoissonRatio) and ``Pset_MaterialCommon``
  (MassDensity), attached to the material (or to the profile/set holding it).
* IFC2X3: ``IfcMaterial`` / ``IfcMaterialList`` / ``IfcMaterialLayerSet``
  (usage); values from the ``IfcMaterialProperties`` subtypes
  ``IfcMechanicalMaterialProperties`` (and ``...SteelMaterialProperties``),
  ``IfcGeneralMaterialProperties`` and ``IfcExtendedMaterialProperties``
  named like the IFC4 property sets.

Every value is converted to SI with the file's `UnitScales` (a property
with its own ``Unit`` uses that unit). A value the file does not give comes
from the user's material map (`analysis.ifc.material_map`), from a trade
grade named by the material (`recognise_grade`, over the package's table
``analysis/data/material_grades.csv``: EN 10025 and ASTM steels, EN 1992
concrete, EN 338 and EN 14080 timber, EN 1999 aluminium, each row with its
source), from the caller's defaults, or from the documented defaults
(`FAMILY_DEFAULTS` for a bare word such as "Steel", `NO_MATERIAL_DEFAULTS`
for an element without material); `MaterialResolver` gives the order. Every
value not from the file is reported as a `Diagnostic` naming the element; a
material that stays unknown goes into one report of all of them
(`UnknownMaterialsError`) with a material-map snippet to fill in.

The profile comes from ``IfcMaterialProfileSetUsage`` (with its
``CardinalPoint``) or ``IfcMaterialProfileSet`` (IFC4+), or from
``IfcRelAssociatesProfileProperties`` (IFC2X3), again through the type when
the occurrence has none.
"""
from __future__ import annotations

import csv
import functools
import io
import logging
import math
import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from ..errors import Diagnostic, IfcInputError, entity_label
from ..model import Material

if TYPE_CHECKING:
    from .material_map import MaterialMap, MaterialSpec

__all__ = [
    "FAMILY_DEFAULTS",
    "NO_MATERIAL_DEFAULTS",
    "Grade",
    "GradeMatch",
    "MaterialResolver",
    "UnknownMaterialsError",
    "element_material",
    "element_profile",
    "find_grade",
    "grade_table",
    "material_definition",
    "material_values",
    "profile_mechanical_values",
    "recognise_grade",
]

logger = logging.getLogger(__name__)

# Property name -> UnitScales field of its measure.
_MATERIAL_PROPS = {
    "YoungModulus": "modulus_of_elasticity",
    "ShearModulus": "shear_modulus",
    "PoissonRatio": None,
    "MassDensity": "mass_density",
}
_MATERIAL_PSETS = ("Pset_MaterialMechanical", "Pset_MaterialCommon")
# Measure type -> UnitScales field (None: dimensionless).
_MEASURE_UNITS = {
    "IfcModulusOfElasticityMeasure": "modulus_of_elasticity",
    "IfcShearModulusMeasure": "shear_modulus",
    "IfcPressureMeasure": "pressure",
    "IfcMassDensityMeasure": "mass_density",
    "IfcPositiveRatioMeasure": None,
    "IfcRatioMeasure": None,
    "IfcNormalisedRatioMeasure": None,
}

# IFC2X3 IfcStructuralProfileProperties / IfcGeneralProfileProperties attribute -> Pset_ProfileMechanical name.
_PROFILE_2X3_ATTRS = {
    "PhysicalWeight": "MassPerLength",
    "Perimeter": "Perimeter",
    "MinimumPlateThickness": "MinimumPlateThickness",
    "MaximumPlateThickness": "MaximumPlateThickness",
    "CrossSectionArea": "CrossSectionArea",
    "TorsionalConstantX": "TorsionalConstantX",
    "MomentOfInertiaYZ": "MomentOfInertiaYZ",
    "MomentOfInertiaY": "MomentOfInertiaY",
    "MomentOfInertiaZ": "MomentOfInertiaZ",
    "WarpingConstant": "WarpingConstant",
    "ShearCentreZ": "ShearCentreZ",
    "ShearCentreY": "ShearCentreY",
    "ShearDeformationAreaZ": "ShearDeformationAreaZ",
    "ShearDeformationAreaY": "ShearDeformationAreaY",
    "MaximumSectionModulusY": "MaximumSectionModulusY",
    "MinimumSectionModulusY": "MinimumSectionModulusY",
    "MaximumSectionModulusZ": "MaximumSectionModulusZ",
    "MinimumSectionModulusZ": "MinimumSectionModulusZ",
    "TorsionalSectionModulus": "TorsionalSectionModulus",
    "CentreOfGravityInX": "CentreOfGravityInX",
    "CentreOfGravityInY": "CentreOfGravityInY",
}


# --------------------------------------------------------------------------- small helpers
def _unwrap(value: Any) -> Any:
    """The plain Python value of a (possibly wrapped) IFC select value."""
    return getattr(value, "wrappedValue", value)


def _is_2x3(ifc_file) -> bool:
    return ifc_file.schema == "IFC2X3"


def _own_associations(element, rel_type: str) -> list:
    return [r for r in (getattr(element, "HasAssociations", None) or ()) if r.is_a(rel_type)]


def _element_type(element):
    """The type object of an occurrence (IfcRelDefinesByType; IFC2X3 IsDefinedBy), or None."""
    for rel in getattr(element, "IsTypedBy", None) or ():
        return rel.RelatingType
    for rel in getattr(element, "IsDefinedBy", None) or ():
        if rel.is_a("IfcRelDefinesByType"):
            return rel.RelatingType
    return None


def _association(element, rel_type: str):
    """The first association of ``rel_type`` on the occurrence, else on its type: (rel, holder)."""
    rels = _own_associations(element, rel_type)
    if rels:
        return rels[0], element
    type_obj = _element_type(element)
    if type_obj is not None:
        rels = _own_associations(type_obj, rel_type)
        if rels:
            return rels[0], type_obj
    return None, None


def _unit_scale_of(unit) -> float:
    """SI scale of a property's own ``Unit`` (ifcopenshell measures mass in grams: brought to kg)."""
    import ifcopenshell.util.unit as ifc_unit

    scale = float(ifc_unit.get_unit_scale(unit))
    try:
        mass_exp = int(ifc_unit.get_unit_dimensions(unit)[1])
    except Exception:  # a unit ifcopenshell cannot take apart: no mass correction
        mass_exp = 0
    return scale * 1e-3**mass_exp


# --------------------------------------------------------------------------- trade grades
# What a bare word in a material name (or its Category) stands for: the family's default grade.
# Used with a warning, because the word names the kind of material and not its grade. For a linear
# analysis the grade within a family changes only E where the family's grades differ in E (concrete,
# timber); every structural steel and aluminium alloy has the same E, G and density.
FAMILY_DEFAULTS = {
    "steel": "S235",  # the lowest EN 10025-2 grade; E, G, density as every structural steel
    "concrete": "C30/37",  # a common class of structural concrete (common practice, no source)
    "lightweight concrete": "LC25/28 D1.8",
    "softwood": "C24",  # the common structural softwood class in Europe (common practice, no source)
    "hardwood": "D30",
    "glulam": "GL24h",
    "aluminium": "EN AW-6082 T6",  # the common structural extrusion alloy (common practice, no source)
}
# Elements with no material at all (nothing in the file, no material map entry): the default per IFC
# class, used with a warning. Structural steel for every class: it is the commonest material of
# linear frame members, and its E does not depend on the grade; a material map says otherwise.
NO_MATERIAL_DEFAULTS = {
    "IfcBeam": "S235",
    "IfcColumn": "S235",
    "IfcMember": "S235",
    "IfcStructuralCurveMember": "S235",
}
_NO_MATERIAL_FALLBACK = "S235"  # any other class

# Words (lower case, whole words of the name) naming a family; English and the languages of the
# files seen in practice (German, French, Dutch, Spanish, Italian, Scandinavian).
_FAMILY_WORDS = {
    "steel": ("steel", "stahl", "baustahl", "acier", "staal", "acero", "acciaio", "stål", "stal"),
    "concrete": ("concrete", "beton", "béton", "betón", "stahlbeton", "ortbeton", "hormigon", "hormigón",
                 "calcestruzzo", "gewapend", "betong"),
    "lightweight concrete": ("leichtbeton", "lightweight"),
    "softwood": ("timber", "wood", "softwood", "lumber", "holz", "bois", "hout", "madera", "legno", "trä",
                 "spruce", "fir", "pine", "larch", "fichte", "tanne", "kiefer", "nadelholz", "vollholz", "kvh"),
    "hardwood": ("hardwood", "oak", "beech", "laubholz", "eiche", "buche"),
    "glulam": ("glulam", "gluedlaminated", "brettschichtholz", "bsh", "glt"),
    "aluminium": ("aluminium", "aluminum", "alu", "alumínio", "aluminio"),
}
# Words that name another (non-structural) material: a name holding one is not read by its words
# ("STEEL/NEOPRENE" is a bearing pad, "Concrete, Sand/Cement Screed" a screed).
_OTHER_WORDS = frozenset((
    "neoprene", "rubber", "elastomer", "elastomeric", "pvc", "pu", "polyurethane", "polystyrene", "eps", "xps",
    "insulation", "isolation", "isolatie", "dämmung", "daemmung", "wool", "foam", "glass", "glazing", "carpet",
    "tile", "tiles", "screed", "estrich", "membrane", "felt", "bitumen", "plaster", "plasterboard", "gypsum",
    "putz", "sealant", "mortar", "grout", "soil", "gravel", "water", "air", "virtual",
))
_WORD_RE = re.compile(r"[^\W\d_]+", re.UNICODE)

_L = r"(?<![A-Z0-9])"  # left boundary: no letter or digit before
_R = r"(?![A-Z0-9])"  # right boundary: no letter or digit after
_STEEL_EN = re.compile(_L + r"S[ \-]?(235|275|355|420|450|460)(?![0-9])")
# EN 10025 / EN 10210 / EN 10219 qualities and delivery conditions after the grade number
_STEEL_SUFFIX = re.compile(r"(?:JR|J0|JO|J2|K2|NL|N|ML|M|QL1|QL|Q)?(?:G\d)?(?:WP|W|H|C)?(?:\+(?:AR|N|M|QT|Q))?")
_ASTM = re.compile(_L + r"(?:ASTM[ \-]*)?A[ \-]?(36|53|500|529|572|588|913|992|1085)(?![0-9])"
                   r"(?:[ \-./]*(?:GR(?:ADE)?\.?[ \-]*)?([ABC]|42|50|55|60|65|70))?" + _R)
_CONCRETE = re.compile(_L + r"(L?C)[ \-]?(\d{1,2})[ ]*[/\-_|][ ]*(\d{1,3})(?![0-9])"
                       r"(?:[ \-,]*D?[ ]*([12])[.,]([0-9]))?")
_CONCRETE_FCK = re.compile(_L + r"C[ \-]?(\d{2})(?![0-9/])")
_TIMBER = re.compile(_L + r"([CD])[ \-]?(\d{2})(?![0-9/.,])" + r"(?![A-Z])")
_GLULAM = re.compile(_L + r"GL[ \-]?(\d{2})[ ]*([HC])?" + _R)
_ALU = re.compile(_L + r"(?:EN[ \-]*)?(?:AW|AA|AL|ALU|ALUMINIUM|ALUMINUM)[ \-]*(\d{4}A?)"
                  r"(?:[ \-]*(T\d{1,2}|O/H111|O|H111))?" + _R)
_ALU_TEMPER = re.compile(_L + r"([567]\d{3}A?)[ \-]+(T\d{1,2})" + _R)


@dataclass(frozen=True, slots=True)
class Grade:
    """One row of the grade table (SI: Pa, kg/m3); ``strength`` (Pa) is for information."""

    family: str
    name: str
    E: float
    G: float
    poisson: float | None
    density: float
    strength: float | None
    standard: str
    source: str


@dataclass(frozen=True, slots=True)
class GradeMatch:
    """A grade recognised in a material name: ``how`` is 'grade' (a designation) or 'word' (a family word)."""

    grade: Grade
    how: str
    text: str  # what was read: the designation as written ("S355J2H") or the word ("Softwood")


@functools.lru_cache(maxsize=1)
def grade_table() -> dict[str, Grade]:
    """The package's grade table (``analysis/data/material_grades.csv``), by grade name, in SI units.

    Each row names its source (the standard's table, and "from memory"
    where the value was typed from the published table without the
    document at hand). A blank G is E / (2 (1 + nu)).
    """
    from importlib.resources import files

    # the engine package by its own name: "analysis", or a sub-package of the Blender extension
    engine = __name__.rsplit(".", 2)[0]
    text = (files(engine) / "data" / "material_grades.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(io.StringIO("".join(line for line in text.splitlines(keepends=True) if not line.startswith("#"))))
    table: dict[str, Grade] = {}
    for row in rows:
        E = float(row["E_MPa"]) * 1e6
        nu = float(row["nu"]) if row["nu"] else None
        if row["G_MPa"]:
            G = float(row["G_MPa"]) * 1e6
        elif nu is not None:
            G = E / (2.0 * (1.0 + nu))
        else:  # pragma: no cover - the table gives G or nu on every row (tested)
            raise ValueError(f"material_grades.csv: {row['grade']} has neither G nor nu")
        table[row["grade"]] = Grade(row["family"], row["grade"], E, G, nu, float(row["density_kg_m3"]),
                                    float(row["strength_MPa"]) * 1e6 if row["strength_MPa"] else None,
                                    row["standard"], row["source"])
    return table


def _words(text: str) -> list[str]:
    """The words of a name, lower case, and each pair of neighbours joined ("light weight" -> "lightweight")."""
    words = [w.lower() for w in _WORD_RE.findall(text)]
    return words + [a + b for a, b in zip(words, words[1:])]


def _family_of_words(words: list[str]) -> tuple[str, str] | None:
    """(family, word) named by the words of a name, or None (also when a word names another material)."""
    if any(w in _OTHER_WORDS for w in words):
        return None
    found: list[tuple[str, str]] = []
    for w in words:
        for family, names in _FAMILY_WORDS.items():
            if w in names:
                found.append((family, w))
    if not found:
        return None
    families = {f for f, _ in found}
    if "lightweight concrete" in families and ("concrete" in families or "leichtbeton" in {w for _, w in found}):
        return next((f, w) for f, w in found if f == "lightweight concrete")
    families.discard("lightweight concrete")
    if "glulam" in families:
        families -= {"softwood"}
    if "hardwood" in families:
        families -= {"softwood"}
    if len(families) != 1:  # "steel and concrete", "wood-aluminium": not one material
        return None
    family = families.pop()
    return family, next(w for f, w in found if f == family)


def _designation(text: str, words: list[str]) -> GradeMatch | None:
    """A grade designation written in ``text`` (upper-cased), or None."""
    table = grade_table()
    up = text.upper()
    original = text if len(text) == len(up) else up

    def written(m: re.Match) -> str:
        return original[m.start():m.end()].strip()
    fw = _family_of_words(words)
    concrete_word = fw is not None and fw[0] == "concrete"
    for m in _CONCRETE.finditer(up):
        kind, a, b = m.group(1), int(m.group(2)), int(m.group(3))
        if kind == "LC":
            dclass = f"{m.group(4)}.{m.group(5)}" if m.group(4) else FAMILY_DEFAULTS["lightweight concrete"].split(" D")[1]
            grade = table.get(f"LC{a}/{b} D{dclass}")
        else:
            grade = table.get(f"C{a}/{b}")
        if grade is not None:
            return GradeMatch(grade, "grade", written(m))
    for m in _STEEL_EN.finditer(up):
        rest = up[m.end():]
        suffix = _STEEL_SUFFIX.match(rest)
        end = m.end()
        if rest and (rest[0].isalnum() or rest[0] == "+"):
            # letters straight after the number must be an EN quality designation, up to a boundary
            if suffix is None or (len(rest) > suffix.end() and rest[suffix.end()].isalnum()):
                continue
            end += suffix.end()
        elif rest[:1] in (" ", "-"):
            tail = _STEEL_SUFFIX.match(rest[1:])
            if tail is not None and tail.end() and (len(rest) == 1 + tail.end() or not rest[1 + tail.end()].isalnum()):
                end += 1 + tail.end()
        return GradeMatch(table[f"S{m.group(1)}"], "grade", original[m.start():end].strip())
    for m in _ASTM.finditer(up):
        number, sub = m.group(1), m.group(2)
        names = [g for g in table if g.split()[0] == f"A{number}"]
        if sub is not None:
            chosen = [g for g in names if g.endswith(f"Gr{sub}")]
        else:
            default = {"A572": "A572 Gr50", "A500": "A500 GrC", "A913": "A913 Gr50", "A53": "A53 GrB", "A529": "A529 Gr50"}
            chosen = [default.get(f"A{number}", names[0] if names else "")]
        if chosen and chosen[0] in table:
            return GradeMatch(table[chosen[0]], "grade", written(m))
    for m in _GLULAM.finditer(up):
        grade = table.get(f"GL{m.group(1)}{(m.group(2) or 'H').lower()}")
        if grade is not None:
            return GradeMatch(grade, "grade", written(m))
    for m in _ALU.finditer(up):
        alloy, temper = m.group(1), m.group(2)
        grade = _alloy(alloy, temper)
        if grade is not None:
            return GradeMatch(grade, "grade", written(m))
    for m in _ALU_TEMPER.finditer(up):
        grade = _alloy(m.group(1), m.group(2))
        if grade is not None:
            return GradeMatch(grade, "grade", written(m))
    for m in _TIMBER.finditer(up):
        letter, number = m.group(1), int(m.group(2))
        if letter == "C" and concrete_word:
            break  # "Concrete C30": a concrete class by its cylinder strength (below)
        grade = table.get(f"{letter}{number}")
        if grade is not None and grade.family in ("softwood", "hardwood"):
            return GradeMatch(grade, "grade", written(m))
    if concrete_word:
        for m in _CONCRETE_FCK.finditer(up):
            fck = int(m.group(1))
            grade = next((g for g in table.values() if g.family == "concrete" and g.name.startswith(f"C{fck}/")), None)
            if grade is not None:
                return GradeMatch(grade, "grade", written(m))
    return None


def _alloy(alloy: str, temper: str | None) -> Grade | None:
    table = grade_table()
    rows = [g for g in table.values() if g.family == "aluminium" and g.name.split()[1] == f"AW-{alloy}"]
    if not rows:
        return None
    if temper is not None:
        temper = "O/H111" if temper in ("O", "H111") else temper
        exact = [g for g in rows if g.name.split()[-1] == temper]
        if exact:
            return exact[0]
    return rows[0]  # the alloy's first row: its common structural temper


def recognise_grade(name: str | None, category: str | None = None) -> GradeMatch | None:
    """The trade grade that a material name (or, failing it, its category) stands for.

    Case-insensitive, and tolerant of prefixes and separators: ``STEEL/S275J0``,
    ``S355 J2H``, ``ASTM A36``, ``A572 Gr. 50``, ``Concrete C30/37``, ``C30-37``,
    ``LC25/28 D1,6``, ``gl24h``, ``C24``, ``EN AW-6082 T6``. A designation in
    the name wins over one in the category; either wins over a bare family word
    (``Steel``, ``Concrete, Cast-in-Place gray``, ``Softwood``, ``Holz``),
    which gives the family's default grade (`FAMILY_DEFAULTS`, ``how='word'``).
    A name that also names another material (``STEEL/NEOPRENE``) is not read by
    its words. ``Cnn`` alone is a timber class unless the name is a concrete's.

    Examples
    --------
    >>> recognise_grade("STEEL/S275J0").grade.name
    'S275'
    >>> m = recognise_grade("Concrete, Cast-in-Place gray")
    >>> (m.grade.name, m.how)
    ('C30/37', 'word')
    """
    texts = [t for t in (name, category) if t and str(t).strip()]
    for t in texts:
        found = _designation(str(t), _words(str(t)))
        if found is not None:
            return found
    for t in texts:
        fw = _family_of_words(_words(str(t)))
        if fw is not None:
            family, word = fw
            return GradeMatch(grade_table()[FAMILY_DEFAULTS[family]], "word", word)
    return None


def find_grade(text: str) -> Grade:
    """The grade a user names (any spelling `recognise_grade` reads, or a family word).

    Raises
    ------
    ValueError
        Nothing in the table matches.
    """
    table = grade_table()
    if text in table:
        return table[text]
    found = recognise_grade(text)
    if found is None:
        raise ValueError(f"{text!r} is not a grade in the table (for example S355, A992, C30/37, LC25/28 D1.8, "
                         "C24, D30, GL24h, EN AW-6082 T6, or a word such as steel, concrete, timber)")
    return found.grade


# --------------------------------------------------------------------------- materials
def material_definition(ifc_file, element):
    """The material definition associated with ``element`` or its type, or None.

    Returns the ``RelatingMaterial`` of the ``IfcRelAssociatesMaterial``
    (a usage, a set or a single material).
    """
    rel, _ = _association(element, "IfcRelAssociatesMaterial")
    return rel.RelatingMaterial if rel is not None else None


def _materials_in(definition) -> list:
    """(holder chain, IfcMaterial) pairs inside a material definition, outermost holder first."""
    if definition is None:
        return []
    if definition.is_a("IfcMaterial"):
        return [([], definition)]
    if definition.is_a("IfcMaterialProfileSetUsage"):
        return [([definition] + chain, m) for chain, m in _materials_in(definition.ForProfileSet)]
    if definition.is_a("IfcMaterialLayerSetUsage"):
        return [([definition] + chain, m) for chain, m in _materials_in(definition.ForLayerSet)]
    found: list = []
    if definition.is_a("IfcMaterialProfileSet"):
        parts = [p for p in definition.MaterialProfiles or ()]
    elif definition.is_a("IfcMaterialLayerSet"):
        parts = [p for p in definition.MaterialLayers or ()]
    elif definition.is_a("IfcMaterialConstituentSet"):
        parts = [p for p in definition.MaterialConstituents or ()]
    elif definition.is_a("IfcMaterialList"):
        return [([definition], m) for m in definition.Materials or ()]
    elif definition.is_a("IfcMaterialProfile") or definition.is_a("IfcMaterialLayer") or definition.is_a("IfcMaterialConstituent"):
        mat = getattr(definition, "Material", None)
        return [([definition], mat)] if mat is not None else []
    else:
        return []
    for part in parts:
        mat = getattr(part, "Material", None)
        if mat is not None:
            found.append(([definition, part], mat))
    return found


def _checked_value(definition, name: str, raw: float, si: float) -> float:
    """A material value the analysis can use, else IfcInputError naming the material and the value.

    Physical bounds (common practice, no source): E, G > 0; -1 < nu <= 0.5
    (the bounds for an isotropic solid: G = E / (2 (1 + nu)) and the bulk
    modulus stay positive); density >= 0.
    """
    if not math.isfinite(si):
        what = "not a number (NaN)" if math.isnan(raw) else ("infinite" if not math.isfinite(raw)
                                                               else f"{raw!r}, which overflows in SI units")
        raise IfcInputError(f"{entity_label(definition)}: {name} is {what}", definition.id())
    if name in ("YoungModulus", "ShearModulus") and si <= 0.0:
        raise IfcInputError(f"{entity_label(definition)}: {name} {raw:g} is not positive", definition.id())
    if name == "PoissonRatio" and not -1.0 < si <= 0.5:
        raise IfcInputError(f"{entity_label(definition)}: PoissonRatio {raw:g} is outside -1 < nu <= 0.5, the range of "
                            "an isotropic material (at -1 the shear modulus E / (2 (1 + nu)) is infinite)",
                            definition.id())
    if name == "MassDensity" and si < 0.0:
        raise IfcInputError(f"{entity_label(definition)}: MassDensity {raw:g} is negative", definition.id())
    return si


def _properties_of(ifc_file, definition, scales) -> dict[str, float]:
    """SI values of the mechanical properties attached directly to one material definition."""
    values: dict[str, float] = {}

    def put(name: str, raw: Any, unit=None, measure: str | None = None) -> None:
        if measure is None and hasattr(raw, "is_a"):
            measure = raw.is_a()
        raw = _unwrap(raw)
        if raw is None or name not in _MATERIAL_PROPS or name in values:
            return
        try:
            number = float(raw)
        except (TypeError, ValueError):
            return
        # the value's measure type decides its unit (a ShearModulus is often an IfcModulusOfElasticityMeasure)
        field_name = _MEASURE_UNITS.get(measure or "", _MATERIAL_PROPS[name])
        if unit is not None:
            scale = _unit_scale_of(unit)
        elif field_name is None:
            scale = 1.0
        else:
            scale = getattr(scales, field_name)
        values[name] = _checked_value(definition, name, number, number * scale)

    if _is_2x3(ifc_file):
        if not definition.is_a("IfcMaterial"):
            return values
        for props in ifc_file.by_type("IfcMaterialProperties"):
            if props.Material != definition:
                continue
            if props.is_a("IfcMechanicalMaterialProperties"):
                # IFC2X3 types YoungModulus and ShearModulus as IfcModulusOfElasticityMeasure
                put("YoungModulus", props.YoungModulus, measure="IfcModulusOfElasticityMeasure")
                put("ShearModulus", props.ShearModulus, measure="IfcModulusOfElasticityMeasure")
                put("PoissonRatio", props.PoissonRatio, measure="IfcPositiveRatioMeasure")
            elif props.is_a("IfcGeneralMaterialProperties"):
                put("MassDensity", props.MassDensity, measure="IfcMassDensityMeasure")
            elif props.is_a("IfcExtendedMaterialProperties") and props.Name in _MATERIAL_PSETS:
                for prop in props.ExtendedProperties or ():
                    if prop.is_a("IfcPropertySingleValue"):
                        put(prop.Name, prop.NominalValue, prop.Unit)
        return values

    for props in getattr(definition, "HasProperties", None) or ():
        if props.Name not in _MATERIAL_PSETS and not (props.Name or "").endswith("MaterialMechanical"):
            continue
        for prop in props.Properties or ():
            if prop.is_a("IfcPropertySingleValue"):
                put(prop.Name, prop.NominalValue, prop.Unit)
    return values


def material_values(ifc_file, material, scales, holders=()) -> dict[str, float]:
    """SI values (YoungModulus, ShearModulus, PoissonRatio, MassDensity) of ``material``.

    Values on the material itself win; missing ones are looked for on the
    ``holders`` (the profile, layer or set that holds it, innermost first).
    """
    values = _properties_of(ifc_file, material, scales)
    for holder in holders:
        for key, value in _properties_of(ifc_file, holder, scales).items():
            values.setdefault(key, value)
    return values


# Property names of the values a material gives (messages and the unknown-material report).
_VALUE_WORDS = {"E": "YoungModulus", "G": "ShearModulus", "nu": "PoissonRatio", "density": "MassDensity"}
_EXAMPLES = 2  # example elements named per unknown material


@dataclass(frozen=True, slots=True)
class _Provider:
    """One place that gives some of a material's values (SI), in the order they are asked."""

    source: str  # 'file' | 'user map' | 'grade table' | 'default' (the Frame's source labels)
    values: dict[str, float]  # of E, G, nu, density
    text: str  # how a message names it
    level: str  # diagnostic level when it gives a value the file does not
    name: str = ""  # the material's name when it stands for a missing material (a grade, "default")


@dataclass(frozen=True, slots=True)
class _Resolution:
    """What one material (or its absence) resolves to for one kind of element; messages hold ``{label}``."""

    material: Material | None
    messages: tuple[tuple[str, str], ...]  # (level, text with {label})
    unknown: tuple[str, str] | None  # (report key = material name, what is missing)
    summary: str = ""  # for the model's note: "'S235JR' -> grade table S235 (EN 10025-2)"


@dataclass
class _Unknown:
    name: str
    missing: str
    count: int = 0
    classes: dict[str, int] = field(default_factory=dict)
    examples: list[str] = field(default_factory=list)


class UnknownMaterialsError(IfcInputError):
    """Materials that stay unknown, all of them in one message with a material-map snippet.

    ``unknown`` lists ``(name, element count, missing values, example labels)``.
    """

    def __init__(self, message: str, entity_id: int | None, unknown: list[tuple[str, int, str, list[str]]]):
        super().__init__(message, entity_id)
        self.unknown = unknown


def _fmt_values(values: dict[str, float]) -> str:
    parts = []
    for key in ("E", "G", "nu", "density"):
        if key in values:
            v = values[key]
            parts.append(f"{key} = {v / 1e9:.6g} GPa" if key in ("E", "G") else
                         f"density = {v:.6g} kg/m3" if key == "density" else f"nu = {v:.6g}")
    return ", ".join(parts)


def _short(p: _Provider) -> str:
    """A provider in the model's material note."""
    if p.source == "file":
        return "file values"
    if p.source == "user map":
        return f"user map {p.name}" if p.name and p.name != "user map" else "user map values"
    if p.source == "grade table":
        return f"grade table {p.name}"
    return f"default {p.name}" if p.name and p.name != "default" else "defaults given"


def _grade_values(grade: Grade) -> dict[str, float]:
    values = {"E": grade.E, "G": grade.G, "density": grade.density}
    if grade.poisson is not None:
        values["nu"] = grade.poisson
    return values


class MaterialResolver:
    """The material of every element, from the file, the user's map, the grade table and the defaults.

    Each value (E, G, Poisson's ratio, density) comes from the first of these
    that gives it (a value the file gives always wins):

    1. the file: ``Pset_MaterialMechanical`` / ``Pset_MaterialCommon`` (IFC4+),
       the IFC2X3 material property entities;
    2. the user's material map, by material name (exact, then glob) — source 'user map';
    3. a grade designation in the material's name or ``Category``
       (`recognise_grade`) — source 'grade table';
    4. the map's fallback for the element's IFC class — 'user map';
    5. the values the caller gives (``defaults.E`` …, e.g. `ReaderDefaults`) — 'default';
    6. a bare family word in the name or category (steel, concrete, wood …):
       the family's default grade (`FAMILY_DEFAULTS`), with a warning — 'default'.

    An element with no material at all takes the map's class fallback, else
    the map's ``default``, else the caller's defaults, else the documented
    default of its IFC class (`NO_MATERIAL_DEFAULTS`), with a warning.
    A material that still lacks a value the analysis needs is *unknown*: it is
    recorded (`material` returns None) and `raise_unknown` raises one
    `UnknownMaterialsError` naming every unknown material, its element count
    and two example elements, with a ready-to-edit material-map snippet.

    The source of a `Material` is that of its E.
    """

    def __init__(self, ifc_file, scales, defaults=None, materials: MaterialMap | None = None) -> None:
        self.f = ifc_file
        self.scales = scales
        self.defaults = defaults
        found: Any = materials if materials is not None else getattr(defaults, "materials", None) if defaults is not None else None
        if found is not None and not hasattr(found, "for_name"):  # a path: read the map
            from .material_map import load_material_map

            found = load_material_map(found)
        self.map: MaterialMap | None = found
        self._values: dict[Any, dict[str, float]] = {}
        self._resolved: dict[Any, _Resolution] = {}
        self._unknown: dict[str, _Unknown] = {}
        self._counts: dict[str, int] = {}

    # -- public
    def material(self, element, *, need_density: bool = True, need_shear: bool = True,
                 key: Any = None) -> tuple[Material | None, list[Diagnostic]]:
        """(Material or None when unknown, diagnostics naming the element).

        ``key``, when given, is what alone decides the element's material (its
        material association, or its type's): elements with the same key share
        the work. Of several materials (a layer or constituent set, a list), the one load-bearing
        material (with file values, a map entry or a grade name) is used, with a warning; otherwise the
        combination is unknown (the map can name it: ``"Steel + Paint"``).
        """
        cls = element.is_a()
        rkey = None if key is None else (key, cls, need_density, need_shear)
        found = self._resolved.get(rkey) if rkey is not None else None
        if found is None:
            found = self._resolve(element, cls, need_density, need_shear)
            if rkey is not None:
                self._resolved[rkey] = found
        diagnostics: list[Diagnostic] = []
        if found.messages or found.unknown is not None:
            label = entity_label(element)
            diagnostics = [Diagnostic(level, element.id(), text.replace("{label}", label)) for level, text in found.messages]
            if found.unknown is not None:
                self._record(element, cls, label, *found.unknown)
        if found.summary:
            self._counts[found.summary] = self._counts.get(found.summary, 0) + 1
        return found.material, diagnostics

    def summary(self) -> str:
        """One note for the model: where the materials came from, with element counts."""
        if not self._counts:
            return ""
        parts = [f"{text} ({n} element{'s' if n != 1 else ''})"
                 for text, n in sorted(self._counts.items(), key=lambda kv: (-kv[1], kv[0]))]
        return "Materials: " + "; ".join(parts) + "."

    @property
    def unknown(self) -> bool:
        return bool(self._unknown)

    def raise_unknown(self) -> None:
        """Raise the complete unknown-material report, if any material stayed unknown."""
        if not self._unknown:
            return
        from .material_map import snippet

        items = sorted(self._unknown.values(), key=lambda u: (-u.count, u.name))
        n = sum(u.count for u in items)
        lines = [f"{len(items)} material{'s' if len(items) != 1 else ''} of {n} element{'s' if n != 1 else ''} "
                 "could not be identified: the file gives no (or not enough) mechanical properties and the name "
                 "matches no grade in the grade table"
                 + (f" nor an entry of the material map {self.map.path}" if self.map is not None else "") + ":"]
        for u in items:
            what = f"'{u.name}'" if u.name else "(unnamed material)"
            lines.append(f"  {what}: {u.count} element{'s' if u.count != 1 else ''}"
                         f" ({', '.join(f'{c} {k}' for k, c in sorted(u.classes.items()))}), {u.missing}; e.g. "
                         + "; ".join(u.examples))
        physical = [u for u in items if any(not c.startswith("IfcStructural") for c in u.classes) and u.name
                    and '"' not in u.name and " + " not in u.name]
        if physical:
            lines.append("Elements that are not part of the frame (bearing pads, pipes, insulation) can be left out, "
                         f"e.g. --exclude 'IfcElement, material=\"{physical[0].name}\"'.")
        lines.append("Say what they are in a material map and pass it with --materials FILE.toml "
                     "(the README describes the format); for example, edit this:")
        lines.append("")
        lines.append(snippet([(u.name, u.count, sorted(u.classes)) for u in items]))
        first = items[0]
        eid = int(first.examples[0][1:].split()[0]) if first.examples and first.examples[0].startswith("#") else None
        raise UnknownMaterialsError("\n".join(lines), eid,
                                    [(u.name, u.count, u.missing, list(u.examples)) for u in items])

    # -- steps
    def _record(self, element, cls: str, label: str, name: str, missing: str) -> None:
        u = self._unknown.get(name)
        if u is None:
            u = self._unknown[name] = _Unknown(name, missing)
        u.count += 1
        u.classes[cls] = u.classes.get(cls, 0) + 1
        if len(u.examples) < _EXAMPLES:
            u.examples.append(label)

    def _default(self, name: str):
        return getattr(self.defaults, name, None) if self.defaults is not None else None

    def _caller_defaults(self) -> _Provider | None:
        values = {}
        for key, attr in (("E", "E"), ("G", "G"), ("nu", "poisson"), ("density", "density")):
            v = self._default(attr)
            if v is not None:
                values[key] = float(v)
        return _Provider("default", values, "the defaults given", "warning", "default") if values else None

    def _map_provider(self, spec: MaterialSpec | None, what: str) -> _Provider | None:
        if spec is None:
            return None
        assert self.map is not None
        return _Provider("user map", dict(spec.values), f"the material map {self.map.path} ({what})", "info",
                         spec.grade or "user map")

    def _class_spec(self, cls: str) -> tuple[str, MaterialSpec] | None:
        if self.map is None:
            return None
        return self.map.for_class(self.f, cls)

    def _resolve(self, element, cls: str, need_density: bool, need_shear: bool) -> _Resolution:
        definition = material_definition(self.f, element)
        found = _materials_in(definition) if definition is not None else []
        if not found:
            return self._resolve_absent(definition, cls, need_density, need_shear)
        distinct = {m.id(): m for _, m in found}
        extra: list[tuple[str, str]] = []
        if len(distinct) > 1:
            names = [str(m.Name or f"#{m.id()}").strip() for m in distinct.values()]
            joined = " + ".join(names)
            hit = self.map.for_name(joined) if self.map is not None else None
            if hit is not None:  # the map names the combination itself
                return self._combine([self._map_provider(hit[1], f"'{hit[0]}'")],  # type: ignore[list-item]
                                     f"{{label}}: materials '{joined}'", joined, joined, need_density, need_shear)
            # a load-bearing material beside finishes (steel + paint, timber + insulation): that one is used
            bearing: dict[int, tuple[list, Any]] = {}
            for chain_k, mat_k in found:
                name_k = str(mat_k.Name or "").strip()
                if ("E" in self._values_of(chain_k, mat_k)
                        or (self.map is not None and self.map.for_name(name_k) is not None)
                        or recognise_grade(name_k, getattr(mat_k, "Category", None) if hasattr(mat_k, "Category") else None)):
                    bearing.setdefault(mat_k.id(), (chain_k, mat_k))
            if len(bearing) != 1:
                return _Resolution(None, (), (joined, f"several materials ({', '.join(repr(n) for n in names)}) and "
                                              + ("none" if not bearing else "more than one") + " of them identified as "
                                              "the load-bearing one (the map can name the combination)"))
            chain, mat = next(iter(bearing.values()))
            extra.append(("warning", f"{{label}}: several materials ({', '.join(repr(n) for n in names)}): the "
                                     f"load-bearing one, '{str(mat.Name or '').strip()}', is used for the whole section"))
        else:
            chain, mat = found[0]
        values = self._values_of(chain, mat)
        name = str(mat.Name).strip() if mat.Name is not None else ""
        category = getattr(mat, "Category", None) if hasattr(mat, "Category") else None
        providers: list[_Provider] = [_Provider("file", values, "the file", "info")]
        if self.map is not None:
            hit = self.map.for_name(name)
            if hit is not None:
                providers.append(self._map_provider(hit[1], f"'{hit[0]}'"))  # type: ignore[arg-type]
        match = recognise_grade(name, category)
        if match is not None and match.how == "grade":
            g = match.grade
            providers.append(_Provider("grade table", _grade_values(g), f"grade {g.name} ({g.standard}, read from '{match.text}')", "info", g.name))
        spec = self._class_spec(cls)
        if spec is not None:
            providers.append(self._map_provider(spec[1], f"fallback for {spec[0]}"))  # type: ignore[arg-type]
        caller = self._caller_defaults()
        if caller is not None:
            providers.append(caller)
        if match is not None and match.how == "word":
            g = match.grade
            providers.append(_Provider("default", _grade_values(g),
                                       f"the default grade {g.name} ({g.standard}) for the word '{match.text}' (no grade in the name)",
                                       "warning", g.name))
        found_ = self._combine(providers, f"{{label}}: material '{name or f'#{mat.id()}'}'", name or f"#{mat.id()}",
                               name, need_density, need_shear)
        if extra and found_.material is not None:
            found_ = _Resolution(found_.material, tuple(extra) + found_.messages, None, found_.summary)
        return found_

    def _values_of(self, chain: list, mat) -> dict[str, float]:
        """The file's SI values (keys E, G, nu, density) of a material as held by ``chain`` (cached)."""
        vkey = (mat.id(), tuple(h.id() for h in chain))
        values = self._values.get(vkey)
        if values is None:
            raw = material_values(self.f, mat, self.scales, holders=tuple(reversed(chain)))
            values = {k: raw[n] for k, n in _VALUE_WORDS.items() if n in raw}
            self._values[vkey] = values
        return values

    def _resolve_absent(self, definition, cls: str, need_density: bool, need_shear: bool) -> _Resolution:
        why = (f"{entity_label(definition)} holds no IfcMaterial" if definition is not None
               else "no material in the file")
        providers: list[_Provider] = []
        spec = self._class_spec(cls)
        if spec is not None:
            providers.append(self._map_provider(spec[1], f"fallback for {spec[0]}"))  # type: ignore[arg-type]
        if self.map is not None and self.map.default is not None:
            providers.append(self._map_provider(self.map.default, "default for elements with no material"))  # type: ignore[arg-type]
        caller = self._caller_defaults()
        if caller is not None:
            providers.append(caller)
        grade = grade_table()[NO_MATERIAL_DEFAULTS.get(cls, _NO_MATERIAL_FALLBACK)]
        providers.append(_Provider("default", _grade_values(grade),
                                   f"the documented default for {cls} elements, {grade.name} ({grade.standard}), is used "
                                   "(a material map can name another)", "warning", grade.name))
        return self._combine(providers, f"{{label}}: {why}", "", "", need_density, need_shear, absent=True)

    def _combine(self, providers: list[_Provider], where: str, material_name: str, report_name: str,
                 need_density: bool, need_shear: bool, absent: bool = False) -> _Resolution:
        """Each value from the first provider that gives it; messages for every value the file does not give."""
        taken: dict[str, tuple[float, _Provider]] = {}
        for key in ("E", "density"):
            for p in providers:
                if key in p.values:
                    taken[key] = (p.values[key], p)
                    break
        # G from the first provider giving G or nu (a nu gives G = E / (2 (1 + nu)))
        for p in providers:
            if "G" in p.values:
                taken["G"] = (p.values["G"], p)
                if "nu" in p.values:
                    taken["nu"] = (p.values["nu"], p)
                break
            if "nu" in p.values and "E" in taken:
                taken["nu"] = (p.values["nu"], p)
                taken["G"] = (taken["E"][0] / (2.0 * (1.0 + p.values["nu"])), p)
                break
        missing = []
        if "E" not in taken:
            missing.append("YoungModulus")
        if "G" not in taken and need_shear:
            missing.append("ShearModulus or PoissonRatio")
        if "density" not in taken and need_density:
            missing.append("MassDensity")
        if missing:
            gives = [_VALUE_WORDS[k] for k in ("E", "G", "nu", "density") if k in taken]
            text = ", ".join(f"no {what}" for what in missing) + (f" (known: {', '.join(gives)})" if gives else "")
            return _Resolution(None, (), (report_name, text))
        messages: list[tuple[str, str]] = []
        by_provider: dict[int, list[str]] = {}
        order: list[_Provider] = []
        for key, (_, p) in taken.items():
            if p.source == "file" and not absent:
                continue
            if id(p) not in by_provider:
                by_provider[id(p)] = []
                order.append(p)
            by_provider[id(p)].append(key)
        for p in order:
            if p.level == "info" and not absent:
                continue  # a grade named by the material, or the user's map: said once per model (`summary`)
            keys = by_provider[id(p)]
            shown = {k: taken[k][0] for k in keys}
            if p.source == "default" and p.text == "the defaults given":
                messages.append((p.level, f"{where}: no {', '.join(_VALUE_WORDS[k] for k in keys)} in the file; "
                                 f"default {_fmt_values(shown)} used"))
            elif absent:
                messages.append((p.level, f"{where}; {p.text}: {_fmt_values(shown)}"))
            else:
                messages.append((p.level, f"{where}: {_fmt_values(shown)} from {p.text}"))
        bad = [f"{_VALUE_WORDS[k]} = {v!r} is not a valid value" for k, (v, _) in taken.items()
               if not math.isfinite(v) or v < 0 or (k in ("E", "G") and v == 0)]
        if bad:
            return _Resolution(None, (), (report_name, "; ".join(bad)))
        E = taken["E"][0]
        if "G" in taken:
            G = taken["G"][0]
        else:
            G = E / 2.6
            messages.append(("info", f"{where}: no ShearModulus; G = E / 2.6 assumed (not used by an axial-only member)"))
        if "density" in taken:
            density = taken["density"][0]
        else:
            density = 0.0
            messages.append(("info", f"{where}: no MassDensity; density 0 (no self-weight is asked for)"))
        nu = taken["nu"][0] if "nu" in taken else E / (2.0 * G) - 1.0
        source = taken["E"][1].source
        if absent:
            material_name = taken["E"][1].name or "default"
        head = "no material" if absent else f"'{material_name}'"
        used = list({id(v[1]): v[1] for v in taken.values()}.values())
        summary = head + " -> " + " + ".join(_short(p) for p in used)
        return _Resolution(Material(material_name, E=float(E), G=float(G), density=float(density), poisson=float(nu),
                                    source=source), tuple(messages), None, summary)


def element_material(ifc_file, element, scales, defaults=None, *, need_density: bool = True,
                     need_shear: bool = True, cache: dict | None = None,
                     materials: MaterialMap | None = None) -> tuple[Material, list[Diagnostic]]:
    """The linear-elastic `Material` (SI) of one structural or physical element.

    A one-element `MaterialResolver` (see there for where each value comes
    from); readers of whole models use the resolver itself, which reports
    every unknown material at once.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
    element : entity_instance
        Any product with a material association on itself or on its type.
    scales : analysis.units.UnitScales
        The file's unit scales.
    defaults : object with attributes ``E``, ``G``, ``poisson``, ``density`` (SI) or None
        User-given values for what the file does not say (e.g. ``ReaderDefaults``);
        ``None`` attributes are not defaults. Its ``materials`` attribute, if
        any, is the material map.
    need_density : bool
        Without a density, the material is unknown (True) or gets density 0
        with an info diagnostic (False: no self-weight is asked for).
    need_shear : bool
        Without G (or Poisson's ratio) the material is unknown (True) or G = E / 2.6
        is assumed (False: axial-only bars).
    cache : dict, optional
        Shared between calls: holds a resolver for the same file and arguments.
    materials : MaterialMap, optional
        The user's material map (default: ``defaults.materials``).

    Returns
    -------
    (Material, list[Diagnostic])
        Diagnostics name the element for every value the file does not give.

    Raises
    ------
    UnknownMaterialsError
        The material (or, of several, the load-bearing one) cannot be identified.
    """
    resolver = None
    ckey = ("resolver", id(defaults), id(materials))
    if cache is not None:
        resolver = cache.get(ckey)
    if resolver is None:
        resolver = MaterialResolver(ifc_file, scales, defaults, materials)
        if cache is not None:
            cache[ckey] = resolver
    resolver._unknown.clear()
    material, diagnostics = resolver.material(element, need_density=need_density, need_shear=need_shear)
    if material is None:
        resolver.raise_unknown()
    assert material is not None
    return material, diagnostics


# --------------------------------------------------------------------------- profiles
def element_profile(ifc_file, element):
    """The profile of a linear element: ``(profile, cardinal_point, usage)``.

    ``profile`` is an ``IfcProfileDef`` or None when the file gives none;
    ``cardinal_point`` the usage's ``CardinalPoint`` (an int, or None when
    not given); ``usage`` the entity it came from: ``IfcMaterialProfileSetUsage``,
    ``IfcMaterialProfileSet`` or ``IfcMaterialProfile`` (IFC4+), or the
    ``IfcRelAssociatesProfileProperties`` (IFC2X3), or None.

    Raises
    ------
    IfcInputError
        A profile set with several different profiles (composite sections).
    """
    definition = material_definition(ifc_file, element)
    if definition is not None and not _is_2x3(ifc_file):
        usage = definition
        cardinal = None
        if definition.is_a("IfcMaterialProfileSetUsage"):
            cardinal = definition.CardinalPoint
            profile_set = definition.ForProfileSet
        elif definition.is_a("IfcMaterialProfileSet"):
            profile_set = definition
            # the occurrence may have no usage while its type holds the set: look for the occurrence's usage first
        elif definition.is_a("IfcMaterialProfile"):
            return definition.Profile, None, definition
        else:
            profile_set = None
        if profile_set is not None:
            profiles = [p.Profile for p in profile_set.MaterialProfiles or () if p.Profile is not None]
            distinct = {p.id(): p for p in profiles}
            if len(distinct) > 1:
                raise IfcInputError(
                    f"{entity_label(element)}: profile set {entity_label(profile_set)} has {len(distinct)} profiles: "
                    "composite sections are not supported", element.id())
            if distinct:
                cardinal = int(_unwrap(cardinal)) if cardinal is not None else None
                return profiles[0], cardinal, usage
    rel, _ = _association(element, "IfcRelAssociatesProfileProperties")
    if rel is not None:
        props = rel.RelatingProfileProperties
        profile = getattr(props, "ProfileDefinition", None)
        if profile is not None:
            return profile, None, rel
    return None, None, None


def profile_mechanical_values(ifc_file, profile, usage=None) -> dict[str, float]:
    """``Pset_ProfileMechanical`` values given for a profile, in file units (not converted).

    IFC4+: ``IfcProfileProperties`` named ``Pset_ProfileMechanical`` on the
    profile (``HasProperties``). IFC2X3: the attributes of the
    ``IfcStructuralProfileProperties`` / ``IfcGeneralProfileProperties``
    that ``usage`` (an ``IfcRelAssociatesProfileProperties``) relates, under
    their IFC4 property names.
    """
    values: dict[str, float] = {}
    if profile is None:
        return values
    for props in getattr(profile, "HasProperties", None) or ():
        if props.Name != "Pset_ProfileMechanical":
            continue
        for prop in props.Properties or ():
            if prop.is_a("IfcPropertySingleValue") and prop.NominalValue is not None:
                try:
                    values[prop.Name] = float(_unwrap(prop.NominalValue))
                except (TypeError, ValueError):
                    continue
    if usage is not None and usage.is_a("IfcRelAssociatesProfileProperties"):
        props = usage.RelatingProfileProperties
        for attr, name in _PROFILE_2X3_ATTRS.items():
            value = _unwrap(getattr(props, attr, None)) if hasattr(props, attr) else None
            if value is not None:
                values.setdefault(name, float(value))
    return values


#: Coefficients of thermal expansion (1/K) by material family, where the file gives none: steel
#: EN 1993-1-1, 3.2.6(1); concrete EN 1992-1-1, 3.1.3(5); lightweight concrete EN 1992-1-1, 11.3.2(2);
#: aluminium EN 1999-1-1, 3.2.5(1). Timber has no code value for frames: the file must give it.
THERMAL_DEFAULTS = {"steel": 12e-6, "steel ASTM": 12e-6, "concrete": 10e-6, "lightweight concrete": 8e-6,
                    "aluminium": 23e-6}


def thermal_expansion(ifc_file, element, degree: float = 1.0) -> tuple[float, str] | None:
    """(coefficient of thermal expansion 1/K, where it came from) of an element's material, or None.

    ``degree`` is the file's temperature-difference unit in K (a value per degree Fahrenheit is
    divided by 5/9).

    The file's own value first (IFC4: ``ThermalExpansionCoefficient`` in the material's property sets;
    IFC2X3: ``IfcThermalMaterialProperties``), then the family default of a grade its name or category
    names (`THERMAL_DEFAULTS`).
    """
    found = _materials_in(material_definition(ifc_file, element))
    for _, mat in found:
        if _is_2x3(ifc_file):
            for props in ifc_file.by_type("IfcThermalMaterialProperties"):
                value = _unwrap(getattr(props, "ThermalExpansionCoefficient", None))
                if props.Material == mat and value:
                    return float(value) / degree, f"file ({mat.Name})"
            continue
        for props in getattr(mat, "HasProperties", None) or ():
            for prop in getattr(props, "Properties", None) or ():
                if prop.is_a("IfcPropertySingleValue") and prop.Name == "ThermalExpansionCoefficient":
                    value = _unwrap(prop.NominalValue)
                    if value:
                        return float(value) / degree, f"file ({mat.Name})"
    for _, mat in found:
        match = recognise_grade(mat.Name, getattr(mat, "Category", None))
        if match is not None and match.grade.family in THERMAL_DEFAULTS:
            return THERMAL_DEFAULTS[match.grade.family], f"{match.grade.family} default ({mat.Name})"
    return None
