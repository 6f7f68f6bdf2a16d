"""Elastic critical load factors and second-order (P-Δ and P-δ) analysis.

Both work on a `RefinedModel` (members subdivided, first-order analysis done
once, reduced stiffness ``K_q`` factorised once).

Critical factors
    ``(K_q + α K_g(N)) φ = 0`` with ``N`` the first-order axial forces of the
    load set. Written as ``(-K_g) φ = μ K_q φ`` with ``μ = 1/α``, the largest
    positive μ give the lowest positive α. ARPACK (`scipy.sparse.linalg.eigsh`)
    iterates with ``K_q⁻¹`` applied by the factor the static analysis already
    has (its generalised mode 2: the shift-invert operator at σ = 0), so no
    new factorisation is needed; small systems use a dense solver.

Second order
    ``(K + K_g(N)) u = F`` with ``K_g`` from each piece's own axial force,
    iterated until the axial forces converge. The first iteration factors
    ``K + K_g(N₀)`` (``N₀`` first order); that factorisation fails exactly
    when the load set is at or past its critical load, which is reported with
    the critical factor. Later iterations change ``N`` a little, and are solved
    by conjugate gradients preconditioned with that factor (a handful of
    solves each).
"""
from __future__ import annotations

import copy
import logging
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..errors import UnstableStructureError
from ..model import LoadCase
from .loads import case_loads
from .refined import RefinedModel
from .solvers import SingularStiffness, factorize

if TYPE_CHECKING:
    from ..results import CaseResult

__all__ = ["BucklingMode", "CriticalLoadError", "critical_factors", "critical_load_error", "second_order_case",
           "largest_generalized"]

log = logging.getLogger(__name__)

DENSE = 600  # below this many unknowns the eigenvalue problems are solved densely


@dataclass(frozen=True)
class BucklingMode:
    """One elastic critical load factor with its mode shape.

    ``shape (n,6)`` at the model's nodes, ``along[k] (c+1,6)`` at the
    points of member k from end i to end j; largest translation 1.
    """

    factor: float
    shape: np.ndarray
    along: tuple[np.ndarray, ...]


class CriticalLoadError(UnstableStructureError):
    """A load set is at or past its elastic critical load: second order has no equilibrium."""

    def __init__(self, message: str, load_set: str, factor: float):
        super().__init__(message, mechanisms=(message,))
        self.load_set = load_set
        self.factor = factor


def largest_generalized(A: sp.csr_array, K: sp.csr_array, solve, count: int) -> tuple[np.ndarray, np.ndarray]:
    """The ``count`` largest eigenvalues μ of ``A φ = μ K φ`` (K positive definite) and their vectors.

    ``solve`` applies K⁻¹ (the existing factorisation). Returns μ in
    descending order and the vectors as columns.
    """
    n = K.shape[0]
    count = min(count, n)
    if count <= 0:
        return np.zeros(0), np.zeros((n, 0))
    if n <= DENSE:
        w, V = scipy.linalg.eigh(A.toarray(), K.toarray())
        order = np.argsort(-w)[:count]
        return w[order], V[:, order]
    k = min(count, n - 2)
    Minv = spla.LinearOperator((n, n), matvec=lambda b: solve(np.asarray(b, float).reshape(-1)), dtype=float)
    # a wider Krylov basis than ARPACK's default restarts less (each step costs one solve);
    # tol 1e-10 on the Ritz residuals gives the eigenvalues to about 1e-14 relative (they converge quadratically)
    ncv = min(n - 1, max(2 * k + 1, 3 * k + 10, 20))
    try:
        w, V = spla.eigsh(sp.csr_matrix(A), k=k, M=sp.csr_matrix(K), Minv=Minv, which="LA", ncv=ncv, tol=1e-10)
    except spla.ArpackNoConvergence as exc:  # keep what converged, say so
        w, V = exc.eigenvalues, exc.eigenvectors
        log.warning("the eigenvalue iteration converged for %d of the %d values asked for", len(w), k)
    order = np.argsort(-w)
    return w[order], V[:, order]


def critical_factors(model, N: np.ndarray, count: int) -> list[BucklingMode]:
    """The ``count`` lowest positive elastic critical load factors for piece axial forces ``N``.

    Fewer are returned where the load set has fewer buckling modes (a frame
    in tension everywhere has none).
    """
    if count <= 0 or not np.any(N < 0):
        return []
    Kg = model.geometric_q(N)
    mu, V = largest_generalized(sp.csr_array(-Kg), model.Kq, model.factor.solve, count)
    top = float(np.max(np.abs(mu))) if mu.size else 0.0
    out = []
    for k in range(mu.size):
        if mu[k] <= 1e-12 * max(top, 1e-300):
            break
        shape, along = model.shape(V[:, k])
        out.append(BucklingMode(factor=float(1.0 / mu[k]), shape=shape, along=along))
    return out


def _pcg(A, b, solve, x0, rtol=1e-12, maxiter=200):
    """Preconditioned conjugate gradients on ``A x = b``; None on negative curvature or no convergence."""
    x = x0.copy()
    r = b - A @ x
    bnorm = float(np.linalg.norm(b)) or 1.0
    z = solve(r)
    p = z.copy()
    rz = float(r @ z)
    for _ in range(maxiter):
        if np.linalg.norm(r) <= rtol * bnorm:
            return x
        Ap = A @ p
        pAp = float(p @ Ap)
        if pAp <= 0.0:
            return None
        a = rz / pAp
        x += a * p
        r -= a * Ap
        z = solve(r)
        rz_new = float(r @ z)
        p = z + (rz_new / rz) * p
        rz = rz_new
    return x if np.linalg.norm(r) <= 1e-8 * bnorm else None


def second_order_case(model: RefinedModel, case: LoadCase, kind: str, N0: np.ndarray,
                      tol: float = 1e-9, max_iter: int = 50, interior=None):
    """Second-order analysis of one load set of the subdivided frame.

    Parameters
    ----------
    model : the subdivided, factorised model.
    case : the load set in the subdivided frame's members (a case, or a combination as one case).
    kind : 'case' or 'combination' (for messages and the result).
    N0 : first-order axial forces of the pieces (start of the iteration).
    interior : an `interior.InteriorModel` of the same subdivision: when given (and the frame has no
        axially rigid members and the load set no settlements), every solve runs by conjugate
        gradients on the first-order factorisation and nothing new is factorised; the load set is
        first checked against its critical factor.

    Returns
    -------
    (CaseResult of the subdivided frame, piece axial forces N, relative residual, iterations)

    Raises
    ------
    CriticalLoadError
        The load set is at or past its elastic critical load.
    """
    from .analyze import _constraint_forces, _end_forces, _load_vectors, _reactions

    asm, dofs = model.asm, model.dofs
    frame = model.frame
    loads = [case_loads(frame, case, asm.R, asm.L)]
    F_ext, u_r, fef = _load_vectors(asm, [case], loads, [])
    xe = asm.x_ext
    r_ext = np.flatnonzero(dofs.restrained.reshape(-1))
    x0 = dofs.particular(u_r)
    T = dofs.T
    springs = model.springs
    if (interior is not None and not any(r.kind == "axial" for r in dofs.rows) and not np.any(u_r)
            and dofs.n_hinges == interior.dofs_o.n_hinges and frame.n_nodes == interior.frame.n_nodes):
        return _second_order_on_first_factor(model, interior, case, kind, N0, loads, F_ext, fef, tol, max_iter)
    N = N0.copy()
    q = None
    factor = None
    scale_N = max(float(np.abs(N0).max()) if N0.size else 0.0, 1e-300)
    resid = float("nan")
    for it in range(1, max_iter + 1):
        kg = model.local_geometric(N)
        K_ext = sp.csr_array(asm.K_full + model.assemble_ext(kg))
        Kxx = sp.csr_array(K_ext[xe][:, xe])
        if springs.any():
            Kxx = sp.csr_array(Kxx + sp.diags_array(springs))
        Kq = model.x_to_q(Kxx)
        rhs = F_ext[xe] - K_ext[xe][:, r_ext] @ u_r[r_ext] - Kxx @ x0
        b = (T.T @ rhs)[:, 0]
        if factor is None:
            try:
                factor = factorize(Kq, model.options.solver)
            except SingularStiffness:
                raise _critical(model, case.name, kind, N0) from None
            q = factor.solve(b)
        else:
            q_new = _pcg(Kq, b, factor.solve, q)
            if q_new is None:
                raise _critical(model, case.name, kind, N0)
            q = q_new
        resid = float(np.linalg.norm(Kq @ q - b)) / max(float(np.linalg.norm(b)), 1e-300)
        x = T @ q[:, None] + x0
        u_ext = np.zeros((asm.n_ext, 1))
        u_ext[xe] = x
        u_ext[r_ext] = u_r[r_ext]
        asm2 = copy.copy(asm)
        asm2.K_full = K_ext
        asm2.k = asm.k + kg
        lam = _constraint_forces(asm2, F_ext, u_ext, springs, x)
        f, d = _end_forces(asm2, u_ext, fef, lam)
        f[asm.released] = 0.0  # released end actions carry nothing (exactly so after condensation)
        N_new = model.axial_forces(f[:, :, 0])
        change = float(np.abs(N_new - N).max()) if N.size else 0.0
        N = N_new
        if change <= tol * scale_N:
            break
        if not np.all(np.isfinite(N)) or (N.size and np.abs(N).max() > 1e6 * scale_N):
            raise _critical(model, case.name, kind, N0)
    else:
        raise _critical(model, case.name, kind, N0, converged=False)
    reactions = _reactions(asm2, F_ext, u_ext, lam)
    cr = _case_result(asm, frame, case, kind, u_ext, d, f, reactions, loads, resid)
    log.info("second order %s %r: %d iteration(s), residual %.1e", kind, case.name, it, resid)
    return cr, N, resid, it


def _second_order_on_first_factor(model: RefinedModel, interior, case: LoadCase, kind: str, N0: np.ndarray,
                                  loads, F_ext, fef, tol: float, max_iter: int):
    """The iteration of `second_order_case` with every solve preconditioned by the first-order factor."""
    from .analyze import _constraint_forces, _end_forces, _reactions

    asm, dofs, frame = model.asm, model.dofs, model.frame
    found = critical_factors(interior, N0, 1)
    alpha = found[0].factor if found else float("inf")
    if alpha <= 1.0:
        raise critical_load_error(case.name, kind, alpha)
    # ext of the subdivided frame -> ext of the interior model (same joints, same own end rotations)
    ref_to_int = np.concatenate([(interior.node_ext[:, None] + np.arange(6)).reshape(-1),
                                 interior.asm_o.N6 + np.arange(dofs.n_hinges)])
    F_int = np.zeros(interior.n_ext)
    F_int[ref_to_int] = F_ext[:, 0]
    b = interior.to_q_vector(F_int)
    bnorm = max(float(np.linalg.norm(b)), 1e-300)
    y = interior.solve(b)
    lam0 = np.zeros((dofs.C.shape[0], 1))
    N = N0.copy()
    scale_N = max(float(np.abs(N0).max()) if N0.size else 0.0, 1e-300)
    asm2 = copy.copy(asm)
    for it in range(1, max_iter + 1):
        kg = model.local_geometric(N)
        Ky = sp.csr_array(interior.Kq + interior.geometric_q(N))
        y_new = _pcg(Ky, b, interior.solve, y)
        if y_new is None:
            raise critical_load_error(case.name, kind, alpha)
        y = y_new
        u_int = np.zeros(interior.n_ext)
        u_int[interior.x_ext] = interior.G @ y
        u_ext = u_int[ref_to_int][:, None]
        asm2.k = asm.k + kg
        f, d = _end_forces(asm2, u_ext, fef, lam0)
        f[asm.released] = 0.0
        N_new = model.axial_forces(f[:, :, 0])
        change = float(np.abs(N_new - N).max()) if N.size else 0.0
        N = N_new
        if change <= tol * scale_N:
            break
        if not np.all(np.isfinite(N)) or (N.size and np.abs(N).max() > 1e6 * scale_N):
            raise critical_load_error(case.name, kind, alpha)
    else:
        raise critical_load_error(case.name, kind, alpha, converged=False)
    resid = float(np.linalg.norm(Ky @ y - b)) / bnorm
    # constraint forces and reactions once, from the assembled second-order stiffness
    asm2.K_full = sp.csr_array(asm.K_full + model.assemble_ext(kg))
    x = u_ext[asm.x_ext]
    lam = _constraint_forces(asm2, F_ext, u_ext, model.springs, x)
    reactions = _reactions(asm2, F_ext, u_ext, lam)
    cr = _case_result(asm, frame, case, kind, u_ext, d, f, reactions, loads, resid)
    log.info("second order %s %r on the first-order factor: %d iteration(s), α_cr %.4g, residual %.1e",
             kind, case.name, it, alpha, resid)
    return cr, N, resid, it


def _case_result(asm, frame, case: LoadCase, kind: str, u_ext, d, f, reactions, loads, resid: float) -> "CaseResult":
    """The converged second-order state of one load set as a `CaseResult` (bars' chord rotations and
    rotations nothing attaches to filled in, as in the first-order recovery)."""
    from ..results import CaseResult
    from .analyze import _chord_rotations_of_bars, _fill_unattached_rotations

    _chord_rotations_of_bars(asm, d)
    disp = u_ext[: asm.N6].reshape(frame.n_nodes, 6, 1)
    _fill_unattached_rotations(asm, disp, d)
    return CaseResult(name=case.name, kind=kind, displacements=disp[:, :, 0].copy(), reactions=reactions[:, :, 0].copy(),
                      end_forces=f[:, :, 0].reshape(-1, 2, 6).copy(), end_displacements=d[:, :, 0].copy(), loads=loads[0],
                      factors=((case.name, 1.0),), equilibrium_residual=resid)


def _critical(model: RefinedModel, name: str, kind: str, N0: np.ndarray, converged: bool = True) -> CriticalLoadError:
    modes = critical_factors(model, N0, 1) if model.factor is not None else []
    alpha = modes[0].factor if modes else float("nan")
    return critical_load_error(name, kind, alpha, converged)


def critical_load_error(name: str, kind: str, alpha: float, converged: bool = True) -> CriticalLoadError:
    """The error of a load set at or past its critical load (``alpha`` its lowest critical factor)."""
    what = f"{kind} {name!r}"
    if converged:
        msg = (f"{what} is at or past its elastic critical load (critical load factor α_cr = {alpha:.4g} ≤ 1): "
               "there is no second-order equilibrium; the frame needs more stiffness or less load")
    else:
        msg = (f"{what}: the second-order axial forces did not converge (critical load factor α_cr = {alpha:.4g}); "
               "the load set is close to its critical load")
    return CriticalLoadError(msg, name, alpha)
