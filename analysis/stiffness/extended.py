"""Second-order analysis, critical load factors and natural modes on top of a first-order analysis.

`extended_analysis` takes the `Results` of the ordinary first-order analysis
and, as its options ask (``second_order``, ``buckling``, ``modes`` with
``mass``), subdivides the members (`subdivide`), analyses the subdivided
frame once and factors it once (`RefinedModel`), and adds:

* ``buckling``: per combination (per load case where there is none) the
  lowest positive elastic critical load factors with their shapes;
* ``modes`` and ``mass``: the lowest natural modes and the mass they act on;
* with ``second_order``: every load case and every combination (as its own
  load set) analysed to second order; ``cases`` then holds those results
  (end forces, reactions, displacements and diagrams of the IFC members, the
  diagrams with the P-δ moments of the deflected pieces) and
  ``first_order_cases`` the first-order ones, for comparison.
"""
from __future__ import annotations

import logging

import numpy as np

from ..model import Frame
from .dynamics import mass_model, natural_modes
from .interior import InteriorModel, piece_axial_forces
from .loads import case_loads
from .refined import RefinedModel
from .stability import CriticalLoadError, critical_factors, critical_load_error, second_order_case
from .subdivide import Subdivision, combination_case

__all__ = ["extended_analysis", "buckling_load_sets"]

log = logging.getLogger(__name__)


def buckling_load_sets(frame: Frame) -> list[str]:
    """The load sets critical factors are computed for: the combinations, else the load cases."""
    return [c.name for c in frame.combinations] or [c.name for c in frame.load_cases]


def extended_analysis(res, progress=None, kept: dict | None = None):
    """Add what ``res.options`` asks beyond first order to ``res`` (returned, changed in place).

    ``kept`` is the ``keep`` dict of the first-order `analyze` call (its assembly and factor),
    on which the eigenvalue problems are solved.
    """
    opts = res.options
    if not (opts.second_order or opts.buckling or opts.modes):
        return res
    say = progress or (lambda step: None)
    frame = res.frame
    if not kept:
        raise ValueError("extended_analysis needs the keep dict of the first-order analysis")
    eig = None
    if opts.buckling or opts.modes:
        say("subdividing members")
        eig = InteriorModel(frame, res.options, kept, parts=opts.subdivisions)
        if opts.buckling:
            say("critical load factors")
            res.buckling = {name: critical_factors(eig, piece_axial_forces(eig.sub, res.cases[name], res.L),
                                                   opts.buckling)
                            for name in buckling_load_sets(frame)}
        if opts.modes:
            say("natural modes")
            mass = mass_model(eig, opts.mass)
            res.mass = mass
            res.modes = natural_modes(eig, mass, opts.modes)
    if opts.second_order:
        say("second order")
        refined = RefinedModel(frame, opts, parts=opts.subdivisions, factor=False)
        if eig is None and not res.options.condense_pinned:
            eig = InteriorModel(frame, res.options, kept, parts=opts.subdivisions)
        try:
            _second_order(res, refined, eig)
        except CriticalLoadError as exc:
            # the critical factor for the message, on the first-order factorisation
            eig = eig or InteriorModel(frame, res.options, kept, parts=opts.subdivisions)
            name = exc.load_set
            found = critical_factors(eig, piece_axial_forces(eig.sub, res.cases[name], res.L), 1)
            alpha = found[0].factor if found else float("nan")
            kind = res.cases[name].kind
            raise critical_load_error(name, kind, alpha, "did not converge" not in str(exc)) from None
    return res


def _second_order(res, model: RefinedModel, interior=None) -> None:
    from ..results import CaseResult, Results

    frame, sub = res.frame, model.sub
    sets = [(c.name, "case", model.frame.case(c.name), c, ((c.name, 1.0),)) for c in frame.load_cases]
    sets += [(c.name, "combination", combination_case(model.frame, c), combination_case(frame, c), c.factors)
             for c in frame.combinations]
    first_idx, last_idx = sub.first, sub.last
    n = frame.n_nodes
    second: dict = {}
    for name, kind, refined_case, case, factors in sets:
        N0 = piece_axial_forces(sub, res.cases[name], res.L)  # first order, exact along each member
        cr_ref, N, resid, _ = second_order_case(model, refined_case, kind, N0, interior=interior)
        ef = np.stack([cr_ref.end_forces[first_idx, 0], cr_ref.end_forces[last_idx, 1]], axis=1)
        ed = np.concatenate([cr_ref.end_displacements[first_idx, :6], cr_ref.end_displacements[last_idx, 6:]], axis=1)
        ref_res = Results(frame=model.frame, options=model.options, dofs=model.dofs, R=model.asm.R, L=model.asm.L,
                          cases={name: cr_ref})
        cr = CaseResult(name=name, kind=kind, displacements=cr_ref.displacements[:n].copy(),
                        reactions=cr_ref.reactions[:n].copy(), end_forces=ef, end_displacements=ed,
                        loads=case_loads(frame, case, res.R, res.L), factors=tuple(factors),
                        equilibrium_residual=resid)
        cr.diagrams = _diagram_function(sub, ref_res, name, N)
        second[name] = cr
    res.first_order_cases = res.cases
    res.cases = second
    res.theory = "second-order"
    res._diagram_cache.clear()


def _diagram_function(sub: Subdivision, ref_res, name: str, N: np.ndarray):
    """Diagrams of the IFC members from their pieces, with the P-δ moments −N·(w − w_i), N·(v − v_i)."""
    from ..results import MemberDiagram

    def diagrams(n_st: int) -> list:
        out = []
        for pieces in sub.pieces:
            c = len(pieces)
            n_sub = max(3, int(np.ceil((n_st - 1) / c)) + 1)
            st, F, D = [], [], []
            for p in pieces:
                dg = ref_res.diagram(name, int(p), n_sub)
                f = dg.forces.copy()
                v0, w0 = dg.deflections[0]
                f[:, 4] -= N[p] * (dg.deflections[:, 1] - w0)
                f[:, 5] += N[p] * (dg.deflections[:, 0] - v0)
                st.append(dg.stations + sub.start[p])
                F.append(f)
                D.append(dg.deflections)
            s, f_all, d_all = np.concatenate(st), np.concatenate(F), np.concatenate(D)
            keep = np.ones(s.size, bool)
            scale = max(float(np.abs(f_all).max()), 1e-300)
            for k in range(1, s.size):
                if abs(s[k] - s[k - 1]) <= 1e-9 * max(s[-1], 1.0) and np.abs(f_all[k] - f_all[k - 1]).max() <= 1e-6 * scale:
                    keep[k] = False
            out.append(MemberDiagram(stations=s[keep], forces=f_all[keep], deflections=d_all[keep]))
        return out

    return diagrams
