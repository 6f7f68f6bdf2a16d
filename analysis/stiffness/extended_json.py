"""The results-JSON keys of the analyses beyond first order (``theory``, ``buckling``, ``mass``, ``modes``).

Kept apart from `analysis.results` so the schema additions live in one place
(shared/ARCHITECTURE.md, "Added 2026-12-02"). Shapes are given at the
model's nodes (``shape``) and, as an optional extra for models of up to
`ALONG_LIMIT` members, at evenly spaced points along each member from end i
to end j (``along``: global translations), so a member that buckles or
vibrates between its joints can be drawn.
"""
from __future__ import annotations

import numpy as np

from ..model import DOF_NAMES

__all__ = ["extended_keys", "shape_dict", "ALONG_LIMIT"]


def shape_dict(res, shape: np.ndarray) -> dict:
    comps = sorted(res.dofs.active)
    return {nid: {DOF_NAMES[c]: float(shape[i, c]) for c in comps} for i, nid in enumerate(res.frame.node_ids)}


ALONG_LIMIT = 2000  # members: above it the JSON keeps the nodal shapes only (``along`` grows as members × points)


def _along(res, along) -> dict | None:
    if res.frame.n_members > ALONG_LIMIT:
        return None
    return {mid: [[float(v) for v in p[:3]] for p in pts] for mid, pts in zip(res.frame.member_ids, along)}


def _entry(res, base: dict, shape, along) -> dict:
    out = dict(base)
    out["shape"] = shape_dict(res, shape)
    points = _along(res, along)
    if points is not None:
        out["along"] = points
    return out


def extended_keys(res) -> dict:
    """``theory`` always; ``buckling``, ``mass`` and ``modes`` where they were computed."""
    out: dict = {"theory": getattr(res, "theory", "first-order")}
    buckling = getattr(res, "buckling", None)
    if buckling is not None:
        out["buckling"] = {name: [_entry(res, {"factor": float(b.factor)}, b.shape, b.along) for b in modes]
                           for name, modes in buckling.items()}
    mass = getattr(res, "mass", None)
    if mass is not None:
        out["mass"] = {"total": float(mass.total), "sources": list(mass.sources)}
    modes = getattr(res, "modes", None)
    if modes is not None:
        out["modes"] = [_entry(res, {"frequency": float(m.frequency), "period": float(m.period),
                                     "effective_mass_ratio": dict(zip("xyz", (float(r) for r in m.effective_mass_ratio)))},
                               m.shape, m.along) for m in modes]
    return out
