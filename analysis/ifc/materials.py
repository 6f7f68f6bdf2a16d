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
with its own ``Unit`` uses that unit). A value the file does not give is
taken from the user's defaults when given, and every default used is
reported as a `Diagnostic` naming the element; otherwise the error names the
element and the material.

The profile comes from ``IfcMaterialProfileSetUsage`` (with its
``CardinalPoint``) or ``IfcMaterialProfileSet`` (IFC4+), or from
``IfcRelAssociatesProfileProperties`` (IFC2X3), again through the type when
the occurrence has none.
"""
from __future__ import annotations

import logging
import math
from typing import Any

from ..errors import Diagnostic, IfcInputError, entity_label
from ..model import Material

__all__ = [
    "element_material",
    "element_profile",
    "material_definition",
    "material_values",
    "profile_mechanical_values",
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
        values[name] = number * scale

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


def element_material(ifc_file, element, scales, defaults=None, *, need_density: bool = True,
                     need_shear: bool = True, cache: dict | None = None) -> tuple[Material, list[Diagnostic]]:
    """The linear-elastic `Material` (SI) of a structural or physical element.

    Parameters
    ----------
    ifc_file : ifcopenshell.file
    element : entity_instance
        Any product with a material association on itself or on its type.
    scales : analysis.units.UnitScales
        The file's unit scales.
    defaults : object with attributes ``E``, ``G``, ``poisson``, ``density`` (SI) or None
        User-given values for what the file does not say (e.g. ``ReaderDefaults``).
        ``None`` attributes are not defaults.
    need_density : bool
        Without a density in the file or the defaults, raise (True) or use 0
        with an info diagnostic (False: no self-weight is asked for).
    need_shear : bool
        Without G (ShearModulus, or E and PoissonRatio) raise (True) or
        derive G from E with Poisson's ratio 0.3 and warn (False: axial-only bars).
    cache : dict, optional
        Shared between calls to reuse the values of a material entity.

    Returns
    -------
    (Material, list[Diagnostic])
        Diagnostics name the element for every default used.

    Raises
    ------
    IfcInputError
        No material, several different materials, or a missing value with no default.
    """
    label = entity_label(element)
    diagnostics: list[Diagnostic] = []
    definition = material_definition(ifc_file, element)

    def default(name: str):
        return getattr(defaults, name, None) if defaults is not None else None

    values: dict[str, float]
    if definition is None:
        if default("E") is None:
            raise IfcInputError(f"{label}: no material (IfcRelAssociatesMaterial on the element or its type) and no default material given", element.id())
        material_name, values, material_id = "default", {}, None
        diagnostics.append(Diagnostic("warning", element.id(), f"{label}: no material in the file; the default material is used"))
    else:
        found = _materials_in(definition)
        if not found:
            if default("E") is None:
                raise IfcInputError(f"{label}: material definition {entity_label(definition)} holds no IfcMaterial", element.id())
            material_name, values, material_id = str(getattr(definition, "Name", None) or "default"), {}, None
            diagnostics.append(Diagnostic("warning", element.id(), f"{label}: {entity_label(definition)} holds no IfcMaterial; the default material is used"))
        else:
            distinct = {m.id(): m for _, m in found}
            if len(distinct) > 1:
                names = ", ".join(entity_label(m) for m in distinct.values())
                raise IfcInputError(f"{label}: several materials ({names}): composite members are not supported", element.id())
            chain, mat = found[0]
            material_id = mat.id()
            material_name = str(mat.Name or f"#{mat.id()}")
            key = (material_id, tuple(h.id() for h in chain))
            if cache is not None and key in cache:
                values = cache[key]
            else:
                values = material_values(ifc_file, mat, scales, holders=tuple(reversed(chain)))
                if cache is not None:
                    cache[key] = values

    where = f"{label}: material '{material_name}'"
    E = values.get("YoungModulus")
    if E is None:
        if default("E") is None:
            raise IfcInputError(f"{where} has no YoungModulus (Pset_MaterialMechanical) and no default E was given", element.id())
        E = float(default("E"))
        if definition is not None:
            diagnostics.append(Diagnostic("warning", element.id(), f"{where}: no YoungModulus; default E = {E:.6g} Pa used"))
    nu = values.get("PoissonRatio")
    G = values.get("ShearModulus")
    if G is None:
        if nu is not None:
            G = E / (2.0 * (1.0 + nu))
            diagnostics.append(Diagnostic("info", element.id(), f"{where}: no ShearModulus; G = E / (2 (1 + PoissonRatio)) = {G:.6g} Pa"))
        elif default("G") is not None:
            G = float(default("G"))
            diagnostics.append(Diagnostic("warning", element.id(), f"{where}: no ShearModulus; default G = {G:.6g} Pa used"))
        elif default("poisson") is not None:
            nu = float(default("poisson"))
            G = E / (2.0 * (1.0 + nu))
            diagnostics.append(Diagnostic("warning", element.id(), f"{where}: no ShearModulus nor PoissonRatio; default Poisson's ratio {nu:.6g} used, G = {G:.6g} Pa"))
        elif need_shear:
            raise IfcInputError(f"{where} has no ShearModulus nor PoissonRatio (Pset_MaterialMechanical) and no default G or Poisson's ratio was given", element.id())
        else:
            G = E / 2.6
            diagnostics.append(Diagnostic("info", element.id(), f"{where}: no ShearModulus; G = E / 2.6 assumed (not used by an axial-only member)"))
    density = values.get("MassDensity")
    if density is None:
        if default("density") is not None:
            density = float(default("density"))
            diagnostics.append(Diagnostic("warning", element.id(), f"{where}: no MassDensity; default density = {density:.6g} kg/m3 used"))
        elif need_density:
            raise IfcInputError(f"{where} has no MassDensity (Pset_MaterialCommon) and no default density was given", element.id())
        else:
            density = 0.0
            diagnostics.append(Diagnostic("info", element.id(), f"{where}: no MassDensity; density 0 (no self-weight is asked for)"))
    for what, value in (("YoungModulus", E), ("ShearModulus", G), ("MassDensity", density)):
        if not math.isfinite(value) or value < 0 or (what != "MassDensity" and value == 0):
            raise IfcInputError(f"{where}: {what} = {value!r} is not a valid value", element.id())
    poisson = nu if nu is not None else (E / (2.0 * G) - 1.0)
    return Material(material_name, E=float(E), G=float(G), density=float(density), poisson=float(poisson)), diagnostics


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

