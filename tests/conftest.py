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
