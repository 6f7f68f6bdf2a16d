"""plumbframe's engine: read an IFC model, count and check it, analyse it, write results back.

The public API (everything here can be used without Blender):

>>> from analysis import FrameBuilder, Section, Material, LoadCase, NodalLoad, analyze
"""
from __future__ import annotations

import logging as _logging

from .errors import AnalysisError, Diagnostic, IfcInputError, ModelError, UnitError, UnstableStructureError
from .model import (
    ACTION_NAMES,
    DOF_NAMES,
    REACTION_NAMES,
    AnalysisOptions,
    Combination,
    Diaphragm,
    Frame,
    FrameBuilder,
    InclinedSupport,
    LineLoad,
    LoadCase,
    Material,
    NodalLoad,
    PointLoad,
    RigidBody,
    Section,
    Settlement,
    TemperatureLoad,
)
from .results import Results
from .stiffness.analyze import analyze
from .stiffness.dynamics import NaturalMode
from .stiffness.stability import BucklingMode, CriticalLoadError

__version__ = "0.1.0"

# a library stays quiet unless the application configures logging (the CLI and the add-on do)
_logging.getLogger(__name__).addHandler(_logging.NullHandler())

__all__ = [
    "__version__",
    "AnalysisError",
    "Diagnostic",
    "IfcInputError",
    "ModelError",
    "UnitError",
    "UnstableStructureError",
    "ACTION_NAMES",
    "DOF_NAMES",
    "REACTION_NAMES",
    "AnalysisOptions",
    "Combination",
    "Diaphragm",
    "Frame",
    "FrameBuilder",
    "InclinedSupport",
    "LineLoad",
    "LoadCase",
    "Material",
    "NodalLoad",
    "PointLoad",
    "RigidBody",
    "Section",
    "Settlement",
    "TemperatureLoad",
    "Results",
    "analyze",
    "BucklingMode",
    "CriticalLoadError",
    "NaturalMode",
]
