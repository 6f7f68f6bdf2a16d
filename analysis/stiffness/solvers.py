"""Sparse symmetric positive-definite solvers behind one interface.

``factorize(K, name)`` returns a `Factor` whose ``solve(B)`` takes all load
cases as one block. For large systems the fastest installed library is used
by default: MKL PARDISO (``pypardiso``), then CHOLMOD (``scikit-sparse``),
then SciPy's SuperLU with a minimum-degree ordering on Aᵀ+A, which is always
there. The matrix is scaled to a unit diagonal first. A zero or negative pivot means the structure is a mechanism:
`SingularStiffness` is raised and the caller finds the mechanism modes.
"""
from __future__ import annotations

import ctypes
import glob
import importlib.util
import logging
import os
import sys
from dataclasses import dataclass
from typing import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["Factor", "SingularStiffness", "factorize", "available_solvers", "choose_solver", "import_pardiso"]

log = logging.getLogger(__name__)

PIVOT_TOL = 1e-9  # of the unit-diagonal scaled matrix: below it the structure is a mechanism


class SingularStiffness(Exception):
    """The reduced stiffness matrix is singular (a mechanism)."""


@dataclass
class Factor:
    name: str
    solve: Callable[[np.ndarray], np.ndarray]


def available_solvers() -> list[str]:
    out = []
    if importlib.util.find_spec("pypardiso") is not None:
        out.append("pardiso")
    if importlib.util.find_spec("sksparse") is not None:
        out.append("cholmod")
    out.append("superlu")
    return out


SMALL = 5000  # below this many unknowns SuperLU is as fast as any and its pivots are plain to check


def choose_solver(requested: str = "auto", n: int | None = None) -> str:
    """The solver to use: the fastest installed one, SuperLU for small systems under 'auto'."""
    avail = available_solvers()
    if requested == "auto":
        return "superlu" if n is not None and n < SMALL else avail[0]
    if requested not in avail:
        raise ValueError(f"solver {requested!r} is not installed here; available: {', '.join(avail)}")
    return requested


def factorize(K: sp.csr_array, requested: str = "auto") -> Factor:
    """Factor the SPD matrix ``K`` once; the returned solve takes an (n,) or (n,k) block."""
    n = K.shape[0]
    if n == 0:
        return Factor("none", lambda B: np.zeros_like(B))
    diag = K.diagonal()
    if np.any(diag <= 0):
        raise SingularStiffness("zero stiffness on the diagonal")
    # symmetric Jacobi scaling: unit diagonal, so pivots compare with 1 whatever the units
    scale = 1.0 / np.sqrt(diag)
    S = sp.diags_array(scale)
    inner = _factor_scaled(sp.csr_array(S @ K @ S), choose_solver(requested, n))

    def solve(B):
        B = np.asarray(B, dtype=float)
        sc = scale if B.ndim == 1 else scale[:, None]
        return sc * inner.solve(sc * B)

    return Factor(inner.name, solve)


def _factor_scaled(K, name: str) -> Factor:
    diag = np.ones(K.shape[0])
    if name == "pardiso":
        try:
            return _pardiso(K, diag)
        except SingularStiffness:
            raise
        except Exception as exc:  # pragma: no cover - library trouble: fall back
            log.warning("PARDISO failed (%s); using SuperLU", exc)
            name = "superlu"
    if name == "cholmod":
        try:
            return _cholmod(K, diag)
        except SingularStiffness:
            raise
        except Exception as exc:  # pragma: no cover
            log.warning("CHOLMOD failed (%s); using SuperLU", exc)
    return _superlu(K, diag)


def _check_pivots(pivots: np.ndarray, diag: np.ndarray) -> None:
    if np.any(~np.isfinite(pivots)) or np.any(pivots <= PIVOT_TOL * diag):
        raise SingularStiffness("a pivot vanished during factorisation")


def _superlu(K, diag) -> Factor:
    Kc = sp.csc_matrix(K)
    try:
        lu = spla.splu(Kc, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                       options={"SymmetricMode": True})
    except RuntimeError as exc:
        raise SingularStiffness(str(exc)) from None
    U = lu.U.diagonal()
    # with symmetric mode the pivots follow the column permutation
    d = diag[lu.perm_c]
    _check_pivots(np.abs(U) * np.sign(U), d)

    def solve(B):
        return lu.solve(np.asarray(B, dtype=float))

    return Factor("superlu", solve)


def _cholmod(K, diag) -> Factor:  # pragma: no cover - optional library
    from sksparse.cholmod import CholmodNotPositiveDefiniteError, cholesky

    try:
        f = cholesky(sp.csc_matrix(K), ordering_method="metis")
    except CholmodNotPositiveDefiniteError as exc:
        raise SingularStiffness(str(exc)) from None
    D = f.D()
    P = f.P()
    _check_pivots(D, diag[P])
    return Factor("cholmod", lambda B: f(np.asarray(B, dtype=float)))


def _point_pardiso_at_mkl() -> None:  # pragma: no cover - optional library
    """Tell pypardiso where MKL's runtime is, so that it need not search the whole environment for it.

    Without ``PYPARDISO_MKL_RT`` every new solver globs ``sys.prefix/lib*/**`` (0.4 s each in a venv
    with scipy and matplotlib); the wheel puts the library directly in ``sys.prefix/lib``.
    """
    if os.environ.get("PYPARDISO_MKL_RT"):
        return
    for path in sorted(glob.glob(os.path.join(sys.prefix, "lib", "*mkl_rt*")), key=len):
        try:
            ctypes.CDLL(path)
        except OSError:
            continue
        os.environ["PYPARDISO_MKL_RT"] = path
        return


def import_pardiso() -> None:  # pragma: no cover - optional library
    """Import pypardiso, told first where MKL is (`_point_pardiso_at_mkl`); ImportError where it is missing."""
    _point_pardiso_at_mkl()
    import pypardiso  # noqa: F401


def _pardiso(K, diag) -> Factor:  # pragma: no cover - optional library
    _point_pardiso_at_mkl()  # before the import: importing pypardiso makes a solver, which searches for MKL
    import pypardiso
    from pypardiso.pardiso_wrapper import PyPardisoError

    solver = pypardiso.PyPardisoSolver(mtype=2)  # real symmetric positive definite
    A = sp.csr_matrix(sp.triu(K, format="csr"))
    A.sort_indices()
    try:
        solver.factorize(A)
    except PyPardisoError as exc:
        raise SingularStiffness(str(exc)) from None
    if solver.get_iparm(14) > 0:  # perturbed pivots
        raise SingularStiffness("PARDISO perturbed pivots")

    def solve(B):
        B = np.asarray(B, dtype=float)
        return solver.solve(A, B if B.ndim == 1 else np.asfortranarray(B))

    return Factor("pardiso", solve)
