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
