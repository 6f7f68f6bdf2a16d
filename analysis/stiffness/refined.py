"""The subdivided frame, analysed once, with its factorisation kept for the eigenvalue problems.

`RefinedModel` subdivides a frame (`subdivide`), runs the ordinary
first-order analysis on it (the same numbering, constraint elimination
``x = T q + x0`` and solver), and keeps the assembly and the factor of the
reduced stiffness ``K_q``. Geometric stiffness and mass matrices are built
from batched member matrices with the same element map, projected through
the static condensation of released end actions (``k_c = Xᵀ k X`` with the
condensation's own shape ``X``), and reduced with the same ``T``, so rigid
members, rigid bodies and diaphragms stay exact in every analysis.
"""
from __future__ import annotations

import dataclasses

import numpy as np
import scipy.sparse as sp

from ..model import AnalysisOptions, Frame
from .geometric import geometric_stiffness
from .subdivide import Subdivision, subdivide

__all__ = ["RefinedModel", "condensation_map", "normalised_shape"]


def condensation_map(k: np.ndarray, released: np.ndarray) -> np.ndarray:
    """X ``(m,12,12)``: full end displacements from the retained ones, as static condensation recovers them.

    ``d_full = X d``; the released entries of ``d`` are ignored (zero columns).
    """
    m = k.shape[0]
    X = np.broadcast_to(np.eye(12), (m, 12, 12)).copy()
    if m == 0 or not released.any():
        return X
    patterns, inverse = np.unique(released, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    for p, pattern in enumerate(patterns):
        if not pattern.any():
            continue
        rows = np.flatnonzero(inverse == p)
        c, r = np.flatnonzero(pattern), np.flatnonzero(~pattern)
        kk = k[rows]
        Y = -np.linalg.solve(kk[:, c[:, None], c], kk[:, c[:, None], r])  # (g,nc,nr)
        Xg = np.zeros((rows.size, 12, 12))
        Xg[:, r, r] = 1.0
        Xg[:, c[:, None], r] = Y
        X[rows] = Xg
    return X


class RefinedModel:
    """A subdivided frame with its first-order results and its factorised reduced stiffness."""

    def __init__(self, frame: Frame, options: AnalysisOptions, parts: int = 8, progress=None, factor: bool = True):
        from .analyze import Assembly, _analyze, reduced_stiffness
        from .dofs import build_dofs

        self.sub: Subdivision = subdivide(frame, parts)
        # pinned ends keep their own rotations: geometric stiffness and mass act on them exactly
        self.options = dataclasses.replace(options, condense_pinned=False,
                                           plane=bool(options.plane) if options.plane is not None else False)
        keep: dict = {}
        if factor:  # the first-order analysis of the subdivided frame, factorised
            self.results = _analyze(self.sub.frame, self.options, progress, keep=keep)
        else:  # numbering and assembly only (second order factors K + K_g itself)
            self.results = None
            dofs = build_dofs(self.sub.frame, self.options)
            asm = Assembly(self.sub.frame, dofs, self.options)
            Kxx, Kq, springs = reduced_stiffness(asm)
            keep.update(dofs=dofs, asm=asm, Kxx=Kxx, Kq=Kq, springs=springs, factor=None)
        self.asm = keep["asm"]
        self.dofs = keep["dofs"]
        self.Kq: sp.csr_array = keep["Kq"]
        self.Kxx: sp.csr_array = keep["Kxx"]
        self.springs: np.ndarray = keep["springs"]
        self.factor = keep["factor"]
        rel = self.asm.released
        self._rel_rows = np.flatnonzero(rel.any(axis=1))
        self._X = condensation_map(self.asm.k[self._rel_rows], rel[self._rel_rows])
        self._points: tuple[np.ndarray, np.ndarray] | None = None

    # ------------------------------------------------------------------ sizes
    @property
    def frame(self) -> Frame:
        return self.sub.frame

    @property
    def n_q(self) -> int:
        return int(self.Kq.shape[0])

    @property
    def identity_T(self) -> bool:
        T = self.dofs.T
        return self.dofs.rank == 0 and T.shape[0] == T.shape[1]

    # ------------------------------------------------------------------ assembly
    def project(self, local: np.ndarray) -> np.ndarray:
        """Xᵀ a X for batched local matrices ``(mp,12,12)`` (released end actions condensed)."""
        r = self._rel_rows
        if r.size == 0:
            return local
        out = local.copy()
        X = self._X
        out[r] = np.swapaxes(X, 1, 2) @ local[r] @ X
        return out

    def assemble_ext(self, local: np.ndarray) -> sp.csr_array:
        """Global (ext) matrix of batched local member matrices, through the element map."""
        A, idx = self.asm.element_map()
        Ke = np.swapaxes(A, 1, 2) @ self.project(local) @ A
        w = idx.shape[1]
        r = np.broadcast_to(idx[:, :, None], (idx.shape[0], w, w)).ravel()
        c = np.broadcast_to(idx[:, None, :], (idx.shape[0], w, w)).ravel()
        v = Ke.ravel()
        keep = (r >= 0) & (c >= 0) & (v != 0.0)
        n = self.asm.n_ext
        return sp.coo_array((v[keep], (r[keep], c[keep])), shape=(n, n)).tocsr()

    def ext_to_x(self, M_ext: sp.csr_array) -> sp.csr_array:
        xe = self.asm.x_ext
        return sp.csr_array(M_ext[xe][:, xe])

    def x_to_q(self, Mxx: sp.csr_array) -> sp.csr_array:
        if self.identity_T:
            return sp.csr_array(Mxx)
        T = self.dofs.T
        return sp.csr_array((T.T @ Mxx @ T).tocsr())

    def axial_forces(self, end_forces: np.ndarray) -> np.ndarray:
        """Mean axial force (tension > 0) of every piece from end forces ``(mp,2,6)`` or ``(mp,12)``."""
        f = end_forces.reshape(end_forces.shape[0], 12)
        return 0.5 * (-f[:, 0] + f[:, 6])

    def local_geometric(self, N: np.ndarray) -> np.ndarray:
        return geometric_stiffness(self.asm.L, N, self.frame.truss)

    def geometric_q(self, N: np.ndarray) -> sp.csr_array:
        """Reduced geometric stiffness ``(n_q, n_q)`` for piece axial forces ``N (mp,)``."""
        return self.x_to_q(self.ext_to_x(self.assemble_ext(self.local_geometric(N))))

    # ------------------------------------------------------------------ shapes
    def nodal(self, q: np.ndarray) -> np.ndarray:
        """Joint displacements ``(n_refined, 6)`` of a reduced vector ``q`` (no prescribed values)."""
        x = self.dofs.T @ q
        u = np.zeros(self.asm.n_ext)
        u[self.asm.x_ext] = x
        return u[: self.asm.N6].reshape(-1, 6)

    def shape(self, q: np.ndarray) -> tuple[np.ndarray, tuple[np.ndarray, ...]]:
        """A mode: original-node displacements ``(n,6)`` and per member its points ``(c+1,6)`` end i → end j.

        Normalised to a largest translation of 1 over all points, that largest
        translation positive.
        """
        if self._points is None:
            self._points = self.sub.member_points()
        return normalised_shape(self.nodal(q), self._points, self.sub.original.n_nodes)


def normalised_shape(u: np.ndarray, points: tuple[np.ndarray, np.ndarray],
                     n_nodes: int) -> tuple[np.ndarray, tuple[np.ndarray, ...]]:
    """A mode from the displacements ``u`` (pieces' nodes, 6) of a subdivided frame.

    Returns the original nodes' rows ``(n_nodes, 6)`` and per member its points
    ``(c+1, 6)`` end i → end j (``points`` = `Subdivision.member_points`),
    normalised to a largest translation of 1 over all points, that largest
    translation positive.
    """
    trans = u[:, :3]
    k = int(np.argmax(np.abs(trans)))
    big = trans.ravel()[k]
    if big != 0.0:
        u = u / big
    rows, splits = points
    along = tuple(np.split(u[rows], splits)) if rows.size else ()
    return u[:n_nodes].copy(), along
