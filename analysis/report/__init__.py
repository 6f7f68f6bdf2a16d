"""A self-contained HTML report of one analysis (plots embedded as PNG).

``write_report(path, model, results, indeterminacy)`` writes one HTML file
that needs nothing else to display: the model overview (elevations and a 3D
view with node and member labels and supports), the indeterminacy table and
its notes, per load case and combination the deformed shape and the N, V, M
diagrams drawn on the frame, reaction tables, member force tables with
governing values, the equilibrium check, every note and default the reader
reported, and the caution that results are an aid to a qualified engineer.
"""
from __future__ import annotations

from .html import CAUTION, build_report, write_report

__all__ = ["write_report", "build_report", "CAUTION"]
