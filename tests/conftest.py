"""Shared fixtures: small frames built by hand."""
from __future__ import annotations

import os
import sys

import pytest
from hypothesis import settings

# Property tests draw the same examples on every run and machine (CI included); explore more
# locally with HYPOTHESIS_PROFILE=explore.
settings.register_profile("repeatable", derandomize=True, deadline=None)
settings.register_profile("explore", derandomize=False, deadline=None, max_examples=300)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "repeatable"))

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

STEEL_E = 210e9
STEEL_G = 81e9


@pytest.fixture
def steel():
    from analysis import Material

    return Material("steel", E=STEEL_E, G=STEEL_G, density=7850.0)


@pytest.fixture
def ipe300():
    from analysis import Section

    # IPE 300 nominal values, European section tables (from memory)
    return Section("IPE 300", A=53.8e-4, Iy=8356e-8, Iz=603.8e-8, J=20.1e-8, Avy=32.3e-4, Avz=25.7e-4)


# --------------------------------------------------------------------------- IFC validation of written files
@pytest.fixture(scope="session")
def assert_valid_ifc():
    """A function that checks a written IFC file with ``ifcopenshell.validate``: schema and where-rules.

    ifcopenshell's rule executor parses, rewrites and compiles the schema's
    rules on every call (about 8 s); here the compiled rules are kept per
    schema for the session, so a check costs the checking only.
    """
    import ast

    import ifcopenshell
    import ifcopenshell.validate
    from ifcopenshell.express import rule_executor as rx

    codes: dict[str, object] = {}
    saved = (rx.__dict__.get("ast"), rx.__dict__.get("compile"))

    class _CachedAst:
        def __getattr__(self, name):
            return getattr(ast, name)

        def parse(self, source, *args, **kw):
            return ast.parse("") if source in codes else ast.parse(source, *args, **kw)

    current: list[str] = []

    def _compile(tree, filename, mode, *args, **kw):
        key = current[-1]
        if key not in codes:
            codes[key] = compile(tree, filename, mode, *args, **kw)
        return codes[key]

    real_read = rx.__dict__.get("open")
    rx.ast = _CachedAst()
    rx.compile = _compile

    def _open(fn, *args, **kw):
        fh = open(fn, *args, **kw)
        if str(fn).endswith(".py"):
            source = fh.read()
            fh.close()
            current.append(source)
            import io

            return io.StringIO(source)
        return fh

    rx.open = _open

    def check(path) -> None:
        f = path if isinstance(path, ifcopenshell.file) else ifcopenshell.open(str(path))
        logger = ifcopenshell.validate.json_logger()
        ifcopenshell.validate.validate(f, logger, express_rules=True)
        problems = [s for s in logger.statements if s.get("level") in ("error", "warning")]
        assert not problems, f"{path}: {len(problems)} validation problem(s), first: " + \
            "; ".join(str(p.get("message"))[:600] for p in problems[:3])

    yield check
    for name, value in zip(("ast", "compile", "open"), (*saved, real_read)):
        if value is None:
            rx.__dict__.pop(name, None)
        else:
            setattr(rx, name, value)


# --------------------------------------------------------------------------- the count joint by joint
def assert_joint_count_adds_up(result) -> None:
    """The by-joint rows of an `Indeterminacy` add up to its terms and to the kinematic count.

    Bookkeeping identity (common practice, no source): at every joint, DOF + released end rotations -
    restrained - eliminated - reduced = unknowns + own end rotations; summed over the joints it is the
    kinematic count's formula term by term.
    """
    from analysis.indeterminacy import joint_totals

    t = result.terms
    s = joint_totals(result.joints)
    assert (s["joints"], s["dof"]) == (t["joints"], t["joints"] * t["dof_per_joint"])
    assert (s["releases"], s["restraints"], s["constraints"], s["reductions"]) == \
        (t["releases"], t["restraints"], t["constraints"], t["reductions"])
    assert s["kinematic"] == result.kinematic
    rows = result.to_dict()["joints"]
    assert len(rows) == t["joints"]
    assert sum(len(v["unknowns"]) + v["own_rotations"] for v in rows.values()) == result.kinematic
    assert sum(len(v["restrained"]) for v in rows.values()) == t["restraints"]
    assert sum(len(v["eliminated"]) for v in rows.values()) == t["constraints"]


@pytest.fixture(autouse=True)
def _every_count_adds_up_joint_by_joint(request, monkeypatch):
    """Wherever a test counts with `analysis.indeterminacy.indeterminacy` (directly, or through the CLI, which
    looks it up when it runs), check the by-joint rows too."""
    engine = sys.modules.get("analysis.indeterminacy")
    module = getattr(request, "module", None)
    if engine is None and getattr(module, "indeterminacy", None) is None:
        yield
        return
    if engine is None:
        import analysis.indeterminacy as engine
    counted = engine.indeterminacy

    def checked(*args, **kwargs):
        result = counted(*args, **kwargs)
        assert_joint_count_adds_up(result)
        return result

    checked.__wrapped__ = counted  # type: ignore[attr-defined]
    monkeypatch.setattr(engine, "indeterminacy", checked)
    if getattr(module, "indeterminacy", None) is counted:
        monkeypatch.setattr(module, "indeterminacy", checked)
    yield
