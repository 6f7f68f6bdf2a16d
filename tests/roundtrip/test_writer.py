"""Results written back into IFC: reopen with ifcopenshell and compare with the results JSON.

These tests build a tiny structural analysis model (a cantilever with a linked
IfcBeam) entity by entity, and the matching Frame by hand, so they do not
depend on the reader. The end-to-end runs on the sample models are in
test_cli.py.
"""
from __future__ import annotations

import os
import types
from collections import Counter

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.guid  # noqa: E402

L = 4.0  # m
P = 10e3  # N, tip load, acting down (-Z)
E = 210e9
IY = 8356e-8
SECTION = dict(A=53.8e-4, Iy=IY, Iz=603.8e-8, J=20.1e-8)


# --------------------------------------------------------------------------- a tiny IFC
def _units(f, mm_kn: bool):
    if mm_kn:
        length = f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI", Name="METRE")
        dims = f.create_entity("IfcDimensionalExponents", 1, 1, -2, 0, 0, 0, 0)
        newton = f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Name="NEWTON")
        force = f.create_entity("IfcConversionBasedUnit", Dimensions=dims, UnitType="FORCEUNIT", Name="kN",
                                ConversionFactor=f.create_entity("IfcMeasureWithUnit",
                                                                 f.create_entity("IfcForceMeasure", 1000.0), newton))
    else:
        length = f.create_entity("IfcSIUnit", UnitType="LENGTHUNIT", Name="METRE")
        force = f.create_entity("IfcSIUnit", UnitType="FORCEUNIT", Name="NEWTON")
    angle = f.create_entity("IfcSIUnit", UnitType="PLANEANGLEUNIT", Name="RADIAN")
    return f.create_entity("IfcUnitAssignment", Units=[length, force, angle])


def make_cantilever_ifc(path, schema="IFC4", mm_kn=False, with_group=True, structural=True):
    """A cantilever along global X as a structural analysis model; returns the GlobalIds used."""
    f = ifcopenshell.file(schema=schema)
    s = 1000.0 if mm_kn else 1.0
    owner = None
    if schema == "IFC2X3":
        person = f.create_entity("IfcPerson", FamilyName="test")
        org = f.create_entity("IfcOrganization", Name="test")
        app = f.create_entity("IfcApplication", org, "1", "test", "test")
        owner = f.create_entity("IfcOwnerHistory", f.create_entity("IfcPersonAndOrganization", person, org),
                                app, None, "ADDED", None, None, None, 0)

    def root(cls, **kw):
        return f.create_entity(cls, GlobalId=ifcopenshell.guid.new(), OwnerHistory=owner, **kw)

    origin = f.create_entity("IfcCartesianPoint", Coordinates=[0.0, 0.0, 0.0])
    ctx = f.create_entity("IfcGeometricRepresentationContext", ContextIdentifier="Model", ContextType="Model",
                          CoordinateSpaceDimension=3, Precision=1e-5,
                          WorldCoordinateSystem=f.create_entity("IfcAxis2Placement3D", Location=origin))
    project = root("IfcProject", Name="Cantilever test", RepresentationContexts=[ctx], UnitsInContext=_units(f, mm_kn))
    origin3d = f.create_entity("IfcAxis2Placement3D",
                               Location=f.create_entity("IfcCartesianPoint", Coordinates=[0.0, 0.0, 0.0]))
    shared = f.create_entity("IfcLocalPlacement", RelativePlacement=origin3d) if schema != "IFC2X3" else None

    def placement_():  # IFC2X3: a placement places exactly one product
        return f.create_entity("IfcLocalPlacement", RelativePlacement=origin3d) if schema == "IFC2X3" else shared

    if not structural:
        beam = root("IfcBeam", Name="B-1")
        f.write(str(path))
        return {"beam": beam.GlobalId, "project": project.GlobalId}
    model_attrs = dict(Name="cantilever", PredefinedType="LOADING_3D")
    amodel = root("IfcStructuralAnalysisModel", **model_attrs)
    vps = []
    conns = []
    for name, x, cond in (("A", 0.0, True), ("B", L, False)):
        vp = f.create_entity("IfcVertexPoint", f.create_entity("IfcCartesianPoint", Coordinates=[x * s, 0.0, 0.0]))
        vps.append(vp)
        rep = f.create_entity("IfcProductDefinitionShape", Representations=[f.create_entity(
            "IfcTopologyRepresentation", ContextOfItems=ctx, RepresentationIdentifier="Reference",
            RepresentationType="Vertex", Items=[vp])])
        bc = None
        if cond:
            if schema == "IFC2X3":
                bc = f.create_entity("IfcBoundaryNodeCondition", "fixed", -1.0, -1.0, -1.0, -1.0, -1.0, -1.0)
            else:
                t = f.create_entity("IfcBoolean", True)
                bc = f.create_entity("IfcBoundaryNodeCondition", "fixed", t, t, t, t, t, t)
        conns.append(root("IfcStructuralPointConnection", Name=name, ObjectPlacement=placement_(), Representation=rep,
                          AppliedCondition=bc))
    edge = f.create_entity("IfcEdge", vps[0], vps[1])
    rep = f.create_entity("IfcProductDefinitionShape", Representations=[f.create_entity(
        "IfcTopologyRepresentation", ContextOfItems=ctx, RepresentationIdentifier="Reference",
        RepresentationType="Edge", Items=[edge])])
    attrs = dict(Name="M1", ObjectPlacement=placement_(), Representation=rep, PredefinedType="RIGID_JOINED_MEMBER")
    if schema != "IFC2X3":
        attrs["Axis"] = f.create_entity("IfcDirection", [0.0, 0.0, 1.0])
    member = root("IfcStructuralCurveMember", **attrs)
    for c in conns:
        root("IfcRelConnectsStructuralMember", RelatingStructuralMember=member, RelatedStructuralConnection=c)
    beam = root("IfcBeam", Name="B-1")
    root("IfcRelAssignsToProduct", RelatedObjects=[member], RelatingProduct=beam)
    root("IfcRelAssignsToGroup", RelatedObjects=[*conns, member], RelatingGroup=amodel)
    group = None
    if with_group:
        group = root("IfcStructuralLoadCase", Name="tip", PredefinedType="LOAD_CASE", ActionType="VARIABLE_Q",
                     ActionSource="LIVE_LOAD_Q", Coefficient=1.0) if schema != "IFC2X3" else \
            root("IfcStructuralLoadGroup", Name="tip", PredefinedType="LOAD_CASE", ActionType="VARIABLE_Q",
                 ActionSource="LIVE_LOAD_Q", Coefficient=1.0)
        amodel.LoadedBy = [group]
        # the tip load the hand-built frame carries, so that the load group holds what it stands for
        load = f.create_entity("IfcStructuralLoadSingleForce", Name="tip", ForceZ=-P / (1000.0 if mm_kn else 1.0))
        action = root("IfcStructuralPointAction", Name="tip load", AppliedLoad=load, GlobalOrLocal="GLOBAL_COORDS",
                      DestabilizingLoad=False)
        root("IfcRelConnectsStructuralActivity", RelatingElement=conns[1], RelatedStructuralActivity=action)
        root("IfcRelAssignsToGroup", RelatedObjects=[action], RelatingGroup=group)
    f.write(str(path))
    return {"A": conns[0].GlobalId, "B": conns[1].GlobalId, "M1": member.GlobalId, "beam": beam.GlobalId,
            "model": amodel.GlobalId, "group": group.GlobalId if group else None, "project": project.GlobalId}


def _scales(mm_kn: bool):
    """The unit scales of make_cantilever_ifc, written out (mm and kN, or m and N)."""
    from analysis.units import UnitScales

    lf = (1e-3, 1e3) if mm_kn else (1.0, 1.0)
    return UnitScales(length=lf[0], force=lf[1], moment=lf[0] * lf[1], angle=1.0, linear_stiffness=lf[1] / lf[0],
                      rotational_stiffness=lf[0] * lf[1])


def cantilever_model(ids, path, mm_kn=False):
    """The Frame of make_cantilever_ifc built by hand, wrapped like the reader's IfcModel."""
    from analysis import Combination, FrameBuilder, LoadCase, Material, NodalLoad, Section

    b = FrameBuilder(name="cantilever")
    b.add_node("A", (0, 0, 0), support="fixed", source=ids["A"])
    b.add_node("B", (L, 0, 0), source=ids["B"])
    b.add_member("M1", "A", "B", Section("I", **SECTION), Material("steel", E=E, G=81e9), ref=(0, 0, 1),
                 source=ids["M1"])
    b.add_case(LoadCase("tip", nodal=(NodalLoad("B", (0, 0, -P, 0, 0, 0)),), source=ids["group"]))
    b.add_combination(Combination("1.5 tip", (("tip", 1.5),)))
    frame = b.build()
    units = _scales(mm_kn)
    return types.SimpleNamespace(frame=frame, route="structural", units=units, notes=["a note"], diagnostics=[],
                                 path=str(path), schema="IFC4", analysis_models=[("cantilever", ids["model"])])


def counts(path):
    return Counter(e.is_a() for e in ifcopenshell.open(str(path)))


def psets_of(entity):
    import ifcopenshell.util.element as ue

    return ue.get_psets(entity)


@pytest.fixture(params=[("IFC4", False), ("IFC4", True), ("IFC4X3", False), ("IFC2X3", False)],
                ids=["IFC4-m-N", "IFC4-mm-kN", "IFC4X3", "IFC2X3"])
def written(request, tmp_path, assert_valid_ifc):
    from analysis import analyze
    from analysis.ifc.writer import write_results

    schema, mm = request.param
    src = tmp_path / "cantilever.ifc"
    ids = make_cantilever_ifc(src, schema=schema, mm_kn=mm)
    model = cantilever_model(ids, src, mm)
    res = analyze(model.frame)
    out = tmp_path / "out.ifc"
    before = src.read_bytes()
    summary = write_results(src, out, model, res)
    assert src.read_bytes() == before  # the input is never modified
    assert_valid_ifc(out)
    return types.SimpleNamespace(src=src, out=out, ids=ids, model=model, res=res, summary=summary,
                                 schema=schema, mm=mm, scale_f=1000.0 if mm else 1.0, scale_l=1e-3 if mm else 1.0)  # value_ifc * scale == SI


# --------------------------------------------------------------------------- tests
def test_result_groups_and_reactions(written):
    w = written
    f = ifcopenshell.open(str(w.out))
    assert f.schema == ifcopenshell.open(str(w.src)).schema
    groups = {g.Name: g for g in f.by_type("IfcStructuralResultGroup")}
    assert set(groups) == {"tip", "1.5 tip"}
    amodel = f.by_guid(w.ids["model"])
    assert set(amodel.HasResults) == set(groups.values())
    g = groups["tip"]
    assert g.TheoryType == "FIRST_ORDER_THEORY" and g.IsLinear
    assert g.ResultForLoadGroup.GlobalId == w.ids["group"]
    assert groups["1.5 tip"].ResultForLoadGroup is None
    reactions = [o for rel in g.IsGroupedBy for o in rel.RelatedObjects]
    support = f.by_guid(w.ids["A"])
    on_support = [r.RelatedStructuralActivity for r in support.AssignedStructuralActivity
                  if r.RelatedStructuralActivity in reactions]
    forces = [r.AppliedLoad for r in on_support if r.AppliedLoad.is_a("IfcStructuralLoadSingleForce")]
    assert len(forces) == 1
    # cantilever with tip load: support reaction Fz = +P, My = -P*L about global Y (statics, common practice)
    assert forces[0].ForceZ == pytest.approx(P / w.scale_f)
    assert forces[0].MomentY == pytest.approx(-P * L / (w.scale_f * w.scale_l))
    tip = f.by_guid(w.ids["B"])
    disp = [r.RelatedStructuralActivity.AppliedLoad for r in tip.AssignedStructuralActivity
            if r.RelatedStructuralActivity in reactions]
    assert len(disp) == 1 and disp[0].is_a("IfcStructuralLoadSingleDisplacement")
    # tip deflection P L^3 / (3 E I), Roark's Formulas, Table 8.1 case 1a (from memory)
    assert disp[0].DisplacementZ == pytest.approx(-P * L**3 / (3 * E * IY) / w.scale_l, rel=1e-9)


def test_curve_reaction_carries_the_json_values(written):
    w = written
    f = ifcopenshell.open(str(w.out))
    member = f.by_guid(w.ids["M1"])
    acts = [r.RelatedStructuralActivity for r in member.AssignedStructuralActivity or ()]
    if w.schema == "IFC2X3":
        assert not acts
        assert any("IFC2X3" in n for n in w.summary.notes)
        return
    doc = w.res.to_dict()
    from analysis.ifc.writer import write_results

    every = w.out.with_name("every.ifc")
    write_results(w.src, every, w.model, w.res, stations="all")
    f_every = ifcopenshell.open(str(every))  # kept: its entities live as long as the file
    full = f_every.by_guid(w.ids["M1"])
    full_acts = [r.RelatedStructuralActivity for r in full.AssignedStructuralActivity or ()]
    for case in ("tip", "1.5 tip"):
        js = doc["cases"][case]["members"]["M1"]
        # --stations all: every station of the JSON
        cfg = _curve_config(full_acts, case, "internal forces")
        assert [loc[0] for loc in cfg.Locations] == pytest.approx(np.array(js["stations"]) / w.scale_l)
        assert [v.ForceX for v in cfg.Values] == pytest.approx(np.array(js["N"]) / w.scale_f, abs=1e-9)
        assert [v.MomentY for v in cfg.Values] == pytest.approx(np.array(js["My"]) / (w.scale_f * w.scale_l))
        assert [v.ForceZ for v in cfg.Values] == pytest.approx(np.array(js["Vz"]) / w.scale_f)
        # the default: a cantilever under a tip load has linear N, V, M and a monotonic deflection: the ends
        cfg = _curve_config(acts, case, "internal forces")
        assert [loc[0] for loc in cfg.Locations] == pytest.approx([0.0, L / w.scale_l])
        assert [v.MomentY for v in cfg.Values] == pytest.approx(np.array(js["My"])[[0, -1]] / (w.scale_f * w.scale_l))
        dz = _curve_config(acts, case, "deflections")
        assert [v.DisplacementZ for v in dz.Values] == pytest.approx(np.array(js["dz"])[[0, -1]] / w.scale_l, rel=1e-9,
                                                                     abs=1e-15)


def _curve_config(acts, case, what):
    found = [a for a in acts if a.is_a("IfcStructuralCurveReaction") and a.AppliedLoad.Name == f"{case}: {what}"]
    assert len(found) == 1
    r = found[0]
    assert r.PredefinedType == "DISCRETE" and r.GlobalOrLocal == "LOCAL_COORDS" and r.Description == "plumbframe"
    return r.AppliedLoad


def test_member_psets_on_analytical_and_physical(written):
    w = written
    f = ifcopenshell.open(str(w.out))
    doc = w.res.to_dict()
    for guid in (w.ids["M1"], w.ids["beam"]):
        ps = psets_of(f.by_guid(guid))["PF_MemberForces"]
        for action in ("N", "Vz", "My"):
            lo = min(min(doc["cases"][c]["members"]["M1"][action]) for c in doc["cases"])
            hi = max(max(doc["cases"][c]["members"]["M1"][action]) for c in doc["cases"])
            scale = w.scale_f * (w.scale_l if action.startswith("M") or action == "T" else 1.0)
            assert ps[f"{action}Min"] == pytest.approx(lo / scale, abs=1e-9)
            assert ps[f"{action}Max"] == pytest.approx(hi / scale, abs=1e-9)
        # the 1.5 combination governs the fixed-end moment |M| = 1.5 P L (statics)
        assert max(abs(ps["MyMin"]), abs(ps["MyMax"])) == pytest.approx(1.5 * P * L / (w.scale_f * w.scale_l))
        assert "1.5 tip" in (ps["MyMinCase"], ps["MyMaxCase"])
        assert ps["ProgramVersion"].startswith("plumbframe")
        assert "mm" in ps["Units"] if w.mm else " m," in ps["Units"]
        # tip deflection of a cantilever relative to its chord is 0: the span ratio uses the chord deflection
        assert ps["MaxAxisDisplacement"] == pytest.approx(1.5 * P * L**3 / (3 * E * IY) / w.scale_l, rel=1e-6)


def test_support_and_summary_psets(written, tmp_path):
    w = written
    f = ifcopenshell.open(str(w.out))
    ps = psets_of(f.by_guid(w.ids["A"]))["PF_SupportReactions"]
    assert ps["tip: fz"] == pytest.approx(P / w.scale_f)
    assert ps["1.5 tip: fz"] == pytest.approx(1.5 * P / w.scale_f)
    assert "PF_SupportReactions" not in psets_of(f.by_guid(w.ids["B"]))
    summary = psets_of(f.by_guid(w.ids["model"]))["PF_AnalysisSummary"]
    assert summary["EquilibriumResidualMax"] < 1e-9
    assert summary["Route"] == "structural"


def test_rerun_replaces_earlier_results(written, tmp_path):
    from analysis.ifc.writer import write_results

    w = written
    again = tmp_path / "again.ifc"
    model = cantilever_model(w.ids, w.out)
    summary = write_results(w.out, again, model, w.res)
    assert summary.removed_entities > 0
    assert counts(again) == counts(w.out)


def test_refuses_to_overwrite_input(tmp_path):
    from analysis import analyze
    from analysis.errors import AnalysisError
    from analysis.ifc.writer import write_results

    src = tmp_path / "c.ifc"
    ids = make_cantilever_ifc(src)
    model = cantilever_model(ids, src)
    res = analyze(model.frame)
    before = src.read_bytes()
    with pytest.raises(AnalysisError, match="refusing to overwrite"):
        write_results(src, src, model, res)
    assert src.read_bytes() == before
    write_results(src, src, model, res, overwrite=True)
    assert len(ifcopenshell.open(str(src)).by_type("IfcStructuralResultGroup")) == 2


def test_bad_output_folder_leaves_nothing(tmp_path):
    from analysis import analyze
    from analysis.errors import AnalysisError
    from analysis.ifc.writer import write_results

    src = tmp_path / "c.ifc"
    ids = make_cantilever_ifc(src)
    model = cantilever_model(ids, src)
    res = analyze(model.frame)
    with pytest.raises(AnalysisError, match="does not exist"):
        write_results(src, tmp_path / "nope" / "out.ifc", model, res)
    assert sorted(os.listdir(tmp_path)) == ["c.ifc"]


def test_physical_route_adds_derived_model(tmp_path):
    """Route 'physical': the derived analytical model is written and linked to the physical element."""
    from analysis import FrameBuilder, LoadCase, Material, NodalLoad, Section, analyze
    from analysis.ifc.writer import DERIVED_TAG, write_results

    src = tmp_path / "phys.ifc"
    ids = make_cantilever_ifc(src, structural=False)
    ifcopenshell.open(str(src))  # the physical file opens
    b = FrameBuilder()
    b.add_node("n1", (0, 0, 0), support="fixed")
    b.add_node("n2", (L / 2, 0, 0))
    b.add_node("n3", (L, 0, 0))
    sec, mat = Section("I", **SECTION), Material("steel", E=E, G=81e9)
    b.add_member("B-1/1", "n1", "n2", sec, mat, source=ids["beam"])
    b.add_member("B-1/2", "n2", "n3", sec, mat, source=ids["beam"], release_j="pinned")
    b.add_case(LoadCase("tip", nodal=(NodalLoad("n3", (0, 0, -P, 0, 0, 0)),)))
    frame = b.build()
    model = types.SimpleNamespace(frame=frame, route="physical", units=_scales(False), notes=[], diagnostics=[])
    res = analyze(frame)
    out = tmp_path / "out.ifc"
    s = write_results(src, out, model, res)
    assert s.derived_model
    g = ifcopenshell.open(str(out))
    derived = [m for m in g.by_type("IfcStructuralAnalysisModel") if m.Description == DERIVED_TAG]
    assert len(derived) == 1
    assert len(g.by_type("IfcStructuralPointConnection")) == 3
    members = g.by_type("IfcStructuralCurveMember")
    assert sorted(m.Name for m in members) == ["B-1/1", "B-1/2"]
    beam = g.by_guid(ids["beam"])
    linked = [o for rel in beam.ReferencedBy for o in rel.RelatedObjects]
    assert set(linked) == set(members)
    ps = psets_of(beam)["PF_MemberForces"]
    assert ps["MyMax"] == pytest.approx(P * L)  # hogging fixed-end moment P L (statics)
    assert "PF_AnalysisSummary" in psets_of(g.by_type("IfcProject")[0])
    # a second run on the output replaces the derived model instead of adding another
    out2 = tmp_path / "out2.ifc"
    write_results(out, out2, model, res)
    assert counts(out2) == counts(out)


def test_force_and_deflection_reactions_carry_their_own_extremes(tmp_path, assert_valid_ifc):
    # under floor loads a member's moment peaks where the shear vanishes and its deflection where the slope
    # does: the internal-force reaction holds the ends, load points and force extremes, the deflection
    # reaction the ends, load points and deflection extremes (`analysis.stations`), each read against the
    # JSON's complete diagrams (the selection rule of the module, common practice, no source)
    import json

    from analysis.cli import main
    from analysis.stations import select_stations

    src, out, js = tmp_path / "portal.ifc", tmp_path / "portal.results.ifc", tmp_path / "portal.json"
    assert main(["sample", "workshop_portal", "-o", str(src)]) == 0
    assert main(["analyze", str(src), "-o", str(out), "--json", str(js)]) == 0
    assert_valid_ifc(out)
    doc = json.loads(js.read_text())
    f = ifcopenshell.open(str(out))
    scale = next(u for u in f.by_type("IfcSIUnit") if u.UnitType == "LENGTHUNIT")
    to_file = 1e3 if scale.Prefix == "MILLI" else 1.0
    checked = differ = 0
    for member in f.by_type("IfcStructuralCurveMember"):
        for case, cr in doc["cases"].items():
            d = cr["members"].get(member.Name)
            if d is None:
                continue
            acts = [r.RelatedStructuralActivity for r in member.AssignedStructuralActivity or ()]
            s = np.array(d["stations"])
            F = np.array([d[k] for k in ("N", "Vy", "Vz", "T", "My", "Mz")]).T
            D = np.array([d["dy"], d["dz"]]).T
            for what, want in (("internal forces", select_stations(s, F, np.zeros_like(D), "extremes")),
                               ("deflections", select_stations(s, np.zeros_like(F), D, "extremes"))):
                cfg = _curve_config(acts, case, what)
                assert [loc[0] for loc in cfg.Locations] == pytest.approx(s[want] * to_file, abs=1e-9)
            differ += set(select_stations(s, F, np.zeros_like(D), "extremes")) != set(
                select_stations(s, np.zeros_like(F), D, "extremes"))
            checked += 1
    assert checked >= 6 and differ >= 1  # some member has its force and deflection extremes at different stations


# --------------------------------------------------------------------------- the source's own text
def _data_records(text: str) -> list[str]:
    return [line for line in text.splitlines() if line.startswith("#")]


def test_fresh_output_is_the_source_text_plus_results(written):
    # without earlier results the output is the input's text, byte for byte, but for the analysis model's
    # record (its HasResults now lists the result groups), with the new entities before the DATA section's end
    src, out = written.src.read_text(), written.out.read_text()
    model_id = ifcopenshell.open(str(written.src)).by_guid(written.ids["model"]).id()
    assert out.startswith(src.split("DATA;")[0])
    before, after = _data_records(src), _data_records(out)
    changed = [k for k, (a, b) in enumerate(zip(before, after)) if a != b]
    assert [before[k].split("=")[0] for k in changed] == [f"#{model_id}"]
    assert out.rstrip().endswith("END-ISO-10303-21;") and out.count("ENDSEC;") == src.count("ENDSEC;")


def _rewritten(text: str, model_id: int, crlf: bool) -> str:
    """The same model as another exporter might write it: the analysis model's record over three lines,
    a string holding a semicolon, two records on one line, CRLF line ends."""
    lines = text.splitlines()
    out = []
    for k, line in enumerate(lines):
        if line.startswith(f"#{model_id}="):
            a, b = line.split(",", 1)
            line = a + ",\n  " + b.replace(",$,", ",\n  $,", 1)
        elif "IFCPROJECT(" in line:
            line = line.replace("'Cantilever test'", "'Cantilever; test it''s'")
        out.append(line)
    joined = "\n".join(out) + "\n"
    first = next(r for r in out if r.startswith("#1="))
    second = next(r for r in out if r.startswith("#2="))
    joined = joined.replace(first + "\n" + second, first + " " + second)
    return joined.replace("\n", "\r\n") if crlf else joined


@pytest.mark.parametrize("crlf", [False, True], ids=["LF", "CRLF"])
def test_output_from_text_of_another_exporter(tmp_path, assert_valid_ifc, crlf):
    from analysis import analyze
    from analysis.ifc.writer import write_results

    plain = tmp_path / "plain.ifc"
    ids = make_cantilever_ifc(plain)
    model_id = ifcopenshell.open(str(plain)).by_guid(ids["model"]).id()
    src = tmp_path / "other.ifc"
    src.write_bytes(_rewritten(plain.read_text(), model_id, crlf).encode("ascii"))
    model = cantilever_model(ids, src)
    res = analyze(model.frame)
    out = tmp_path / "out.ifc"
    write_results(src, out, model, res)
    assert_valid_ifc(out)
    f = ifcopenshell.open(str(out))
    assert f.by_type("IfcProject")[0].Name == "Cantilever; test it's"
    assert {g.Name for g in f.by_guid(ids["model"]).HasResults} == {"tip", "1.5 tip"}
    reference = tmp_path / "reference.ifc"
    write_results(plain, reference, cantilever_model(ids, plain), res)
    assert counts(out) == counts(reference)
    assert out.read_bytes().startswith(src.read_bytes().split(b"DATA;")[0])  # copied, not re-serialised


def test_a_record_lookalike_in_a_string_falls_back_to_the_ifc_library(tmp_path, assert_valid_ifc, monkeypatch):
    # a string that holds the text of the record to be rewritten: the splice is not sure, ifcopenshell writes
    from analysis import analyze
    from analysis.ifc.writer import write_results

    plain = tmp_path / "plain.ifc"
    ids = make_cantilever_ifc(plain)
    model_id = ifcopenshell.open(str(plain)).by_guid(ids["model"]).id()
    text = plain.read_text().replace("'Cantilever test'", f"'see #{model_id}=IFCSTRUCTURALANALYSISMODEL(x)'")
    src = tmp_path / "odd.ifc"
    src.write_text(text)
    model = cantilever_model(ids, src)
    out = tmp_path / "out.ifc"
    import analysis.ifc.step as step

    said = []
    real = step.splice_data
    monkeypatch.setattr(step, "splice_data", lambda *a: said.append(real(*a)) or said[-1])
    write_results(src, out, model, analyze(model.frame))
    assert said == [False]
    assert_valid_ifc(out)
    f = ifcopenshell.open(str(out))
    assert f.by_type("IfcProject")[0].Name == f"see #{model_id}=IFCSTRUCTURALANALYSISMODEL(x)"
    assert len(f.by_guid(ids["model"]).HasResults) == 2


def test_the_readers_file_is_lent_to_one_write(tmp_path, assert_valid_ifc):
    # the writer takes the file the reader opened (no second parse); a second write of the same model opens
    # the source again and writes the same entities
    from analysis import analyze
    from analysis.cli import main
    from analysis.ifc.reader import read_ifc
    from analysis.ifc.writer import write_results

    src = tmp_path / "portal.ifc"
    assert main(["sample", "workshop_portal", "-o", str(src)]) == 0
    model = read_ifc(src)
    assert model.ifc_file is not None
    res = analyze(model.frame)
    first, second = tmp_path / "first.ifc", tmp_path / "second.ifc"
    write_results(src, first, model, res)
    assert model.ifc_file is None
    write_results(src, second, model, res)
    assert_valid_ifc(first)
    assert counts(first) == counts(second)
    assert read_ifc(first).frame.n_members == model.frame.n_members
