"""A member's own PF_Idealisation.AxiallyRigid property, read from the IFC file (both routes).

Counts are checked against the hand count of the truss (common practice, no source): with every bar
axially rigid the determinate roof truss has no unknown; one bar kept extensible frees one joint
movement; one bar made rigid without the option takes one away.
"""
from __future__ import annotations

import ifcopenshell
import ifcopenshell.api
import pytest

from analysis.cli import main
from analysis.errors import IfcInputError
from analysis.ifc.reader import read_ifc
from analysis.indeterminacy import indeterminacy
from analysis.model import AnalysisOptions
from analysis.samples import sample_path

RIGID = AnalysisOptions(plane=True, condense_pinned=True, inextensible=True)
ELASTIC = AnalysisOptions(plane=True, condense_pinned=True)


def _with_property(sample, tmp_path, pick, values, value_type=None):
    f = ifcopenshell.open(str(sample_path(sample)))
    chosen = pick(f)
    for element, value in zip(chosen, values):
        pset = ifcopenshell.api.run("pset.add_pset", f, product=element, name="PF_Idealisation")
        if value_type is None:
            ifcopenshell.api.run("pset.edit_pset", f, pset=pset, properties={"AxiallyRigid": value})
        else:
            prop = f.create_entity("IfcPropertySingleValue", Name="AxiallyRigid",
                                   NominalValue=f.create_entity(value_type, value))
            pset.HasProperties = [prop]
    path = tmp_path / f"{sample}.ifc"
    f.write(str(path))
    return path, chosen


def test_structural_members_override_the_option_both_ways(tmp_path):
    path, (kept, made) = _with_property("roof_truss", tmp_path, lambda f: f.by_type("IfcStructuralCurveMember")[:2],
                                        [False, True])
    model = read_ifc(str(path))
    frame = model.frame
    k_kept = frame.member_sources.index(kept.GlobalId)
    k_made = frame.member_sources.index(made.GlobalId)
    assert frame.extensible[k_kept] and not frame.inextensible[k_kept]
    assert frame.inextensible[k_made] and not frame.extensible[k_made]
    assert any(n.startswith("PF_Idealisation.AxiallyRigid: 1 member axially rigid") for n in model.notes)
    assert indeterminacy(frame, RIGID).kinematic == 1
    assert indeterminacy(frame, ELASTIC).kinematic == 2 * frame.n_nodes - 3 - 1
    note = next(n for n in indeterminacy(frame, RIGID).notes if n.startswith("axially rigid"))
    assert frame.member_ids[k_kept] in note and "kept extensible" in note


def test_physical_elements_carry_it_to_their_segments(tmp_path):
    path, (beam,) = _with_property("braced_office", tmp_path, lambda f: f.by_type("IfcBeam")[:1], [True])
    frame = read_ifc(str(path)).frame
    segments = [k for k, src in enumerate(frame.member_sources) if src == beam.GlobalId]
    assert segments and all(frame.inextensible[k] for k in segments)
    assert int(frame.inextensible.sum()) == len(segments)


def test_a_value_that_is_not_true_or_false_is_an_input_error(tmp_path, capsys):
    path, _ = _with_property("roof_truss", tmp_path, lambda f: f.by_type("IfcStructuralCurveMember")[:1], ["yes"],
                             value_type="IfcLabel")
    with pytest.raises(IfcInputError, match=r"#\d+ IfcPropertySingleValue 'AxiallyRigid' in #\d+ IfcPropertySet "
                                            r"'PF_Idealisation'.*must be TRUE or FALSE"):
        read_ifc(str(path))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "AxiallyRigid must be TRUE or FALSE" in err and "Traceback" not in err
