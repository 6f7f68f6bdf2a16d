"""Shared fixtures: small frames built by hand."""
from __future__ import annotations

import os
import sys

import pytest

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
