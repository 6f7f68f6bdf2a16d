"""Natural modes of vibration and effective modal masses.

Mass model (all SI):

* every member's own mass ρ·A per length, as a consistent mass matrix of
  its pieces (`mass.consistent_mass`; torsion with ρ·(Iy + Iz));
* for each named load case with a factor, its loads acting in the gravity
  direction (−Z) divided by g = 9.80665 m/s² times the factor, as
  translational mass in all three directions: nodal forces as point masses
  at their nodes, uniform member loads as distributed mass of the piece
  (consistent, like the member's own), other member loads lumped to the
  piece ends by the lever rule. A case's self-weight is not counted again
  (the members' own mass is always in). Upward load components add no mass.

Eigenproblem ``K_q φ = ω² M_q φ`` on the subdivided frame, as
``M_q φ = μ K_q φ`` (μ = 1/ω²) with ARPACK and ``K_q⁻¹`` from the existing
factorisation (`interior.InteriorModel.solve`, `stability.largest_generalized`).

Effective modal mass in world direction d: ``(φᵀ M r_d)² / (φᵀ M φ)`` with
``r_d`` the rigid translation of every joint in d, supports included (the
ground motion); ratios are to the total mass. Point masses on supported
joints never move, so over all modes the ratios sum to less than 1 by the
mass the supports hold.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..errors import ModelError
from ..model import STANDARD_GRAVITY
from .loads import case_loads
from .mass import consistent_mass
from .interior import InteriorModel
from .stability import largest_generalized

__all__ = ["NaturalMode", "MassModel", "mass_model", "natural_modes"]


@dataclass(frozen=True)
class NaturalMode:
    """One natural mode: frequency (Hz), period (s), effective mass ratios per world axis, shape."""

    frequency: float
    period: float
    omega: float
    effective_mass_ratio: tuple[float, float, float]
    shape: np.ndarray  # (n,6), largest translation 1
    along: tuple[np.ndarray, ...]


@dataclass(frozen=True)
class MassModel:
    """Reduced mass ``M_q`` (over the unknowns of the subdivided frame), the total mass (kg), its sources in words."""

    Mq: sp.csr_array
    total: float
    sources: tuple[str, ...]
    by_source: tuple[float, ...]
    influence: tuple[np.ndarray, ...] = ()  # (n_q,) per world axis: Tᵀ (M r_d) restricted to the unknowns


def mass_model(model: InteriorModel, mass_cases: tuple[tuple[str, float], ...] = ()) -> MassModel:
    """Assemble the mass of the subdivided frame (members plus the named cases' gravity loads)."""
    frame = model.frame
    R, L = model.R, model.L
    mu = frame.density * frame.A
    polar = np.where(frame.truss, 0.0, frame.density * (frame.Iy + frame.Iz))
    nodal_mass = np.zeros(frame.n_nodes)
    sources = ["members"]
    amounts = [float((mu * L).sum())]
    for name, factor in mass_cases:
        try:
            case = frame.case(name)
        except ModelError:
            raise ModelError(f"mass: load case {name!r} does not exist; the model has "
                             f"{', '.join(c.name for c in frame.load_cases) or 'no load cases'}") from None
        if not (math.isfinite(factor) and factor >= 0):
            raise ModelError(f"mass: the factor of load case {name!r} must be a number >= 0, got {factor!r}")
        ld = case_loads(frame, dataclasses.replace(case, self_weight=(0.0, 0.0, 0.0)), R, L)
        before = float((mu * L).sum() + nodal_mass.sum())
        down = -ld.nodal[:, 2]
        nodal_mass += np.maximum(down, 0.0) * factor / STANDARD_GRAVITY
        # uniform member loads: global components, the downward one is mass per length
        q_glob = np.einsum("mji,mj->mi", R, ld.uniform)
        mu = mu + np.maximum(-q_glob[:, 2], 0.0) * factor / STANDARD_GRAVITY
        for k, loading in ld.generic.items():
            h = float(L[k])
            Rk = R[k]
            i, j = frame.members[k]
            for a, b, qa, qb in loading.lines:
                if b <= a:
                    continue
                fa, fb = -(Rk.T @ qa)[2], -(Rk.T @ qb)[2]
                total = (fa + fb) / 2 * (b - a)
                if total <= 0:
                    continue
                xbar = a + (b - a) * (fa + 2 * fb) / (3 * (fa + fb)) if fa + fb != 0 else (a + b) / 2
                m = total * factor / STANDARD_GRAVITY
                nodal_mass[i] += m * (1 - xbar / h)
                nodal_mass[j] += m * xbar / h
            for a, p in loading.forces:
                fz = -(Rk.T @ p)[2]
                if fz > 0:
                    m = fz * factor / STANDARD_GRAVITY
                    nodal_mass[i] += m * (1 - a / h)
                    nodal_mass[j] += m * a / h
        sources.append(f"{name} x {factor:g}")
        amounts.append(float((mu * L).sum() + nodal_mass.sum()) - before)
    if sum(amounts) <= 0.0:
        raise ModelError("natural modes need mass: the members have no density and no load case was named "
                         "to give mass (--mass CASE)")
    M_ext = model.assemble_ext(lambda rows: consistent_mass(L[rows], mu[rows], polar[rows], frame.truss[rows]))
    if nodal_mass.any():
        idx = (model.node_ext[:, None] + np.arange(3)).ravel()
        diag = np.zeros(model.n_ext)
        diag[idx] = np.repeat(nodal_mass, 3)
        M_ext = sp.csr_array(M_ext + sp.diags_array(diag))
    # effective loads of a unit ground acceleration along each world axis: every joint (supports
    # included) translates rigidly, so the mass coupled to the supports counts too
    influence = tuple(model.to_q_vector(M_ext @ model.rigid_translation(d)) for d in range(3))
    return MassModel(Mq=model.to_q(M_ext), total=float(sum(amounts)), sources=tuple(sources),
                     by_source=tuple(amounts), influence=influence)


def natural_modes(model: InteriorModel, mass: MassModel, count: int) -> list[NaturalMode]:
    """The ``count`` lowest natural modes, ascending frequency."""
    if count <= 0:
        return []
    mu, V = largest_generalized(mass.Mq, model.Kq, model.factor.solve, count)
    top = float(np.max(np.abs(mu))) if mu.size else 0.0
    influence = mass.influence
    out = []
    for k in range(mu.size):
        if mu[k] <= 1e-12 * max(top, 1e-300):
            break
        phi = V[:, k]
        gen = float(phi @ (mass.Mq @ phi))
        ratios = tuple(float((phi @ L) ** 2 / gen / mass.total) if mass.total > 0 else 0.0 for L in influence)
        omega = 1.0 / math.sqrt(mu[k])
        f = omega / (2 * math.pi)
        shape, along = model.shape(phi)
        out.append(NaturalMode(frequency=f, period=1.0 / f, omega=omega,
                               effective_mass_ratio=(ratios[0], ratios[1], ratios[2]), shape=shape, along=along))
    return out
