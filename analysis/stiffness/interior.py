"""Subdivided members for the eigenvalue problems, solved on the first-order factorisation.

Every frame member is split into pieces (`subdivide`); the pieces' interior
joints add unknowns ``z`` of their own (the active components of each
interior joint) beside the first-order analysis's independent unknowns
``q``. The stiffness of the subdivided frame, over ``y = [q; z]``, is

    K = [[K_qq, K_qz], [K_zq, K_zz]],

with ``K_zz`` block diagonal (one band per member). Eliminating ``z`` is the
exact static condensation of each member's pieces, so the Schur complement
``K_qq − K_qz K_zz⁻¹ K_zq`` is the first-order reduced stiffness ``K_q``
itself: a solve with ``K`` needs one solve with the factor the static
analysis already has plus two banded solves with ``K_zz``, whose
factorisation costs a few percent of that of ``K_q``. The geometric
stiffness and the mass of the pieces live on the same ``y``, so the
eigenproblems of `stability` and `dynamics` are as exact as the subdivision,
while the only large factorisation is the one of the linear analysis.

End releases, own end rotations (with the springs of semi-rigid ends), rigid
end offsets and the constraint elimination ``x = T q`` are taken from the
first-order analysis unchanged:
the first piece carries the member's end-i treatment, the last its end j.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from ..model import Frame
from .elements import end_transformation, local_stiffness
from .geometric import geometric_stiffness
from .loads import internal_forces
from .refined import condensation_map, normalised_shape
from .solvers import Factor, factorize
from .subdivide import Subdivision, subdivide

__all__ = ["InteriorModel", "piece_axial_forces"]


class InteriorModel:
    """Subdivided frame over ``[q; z]`` with the Schur-complement solve on the first-order factor.

    Parameters
    ----------
    frame : the frame analysed to first order.
    options : the options that analysis ran with (``res.options``).
    kept : what `analyze` put in its ``keep`` dict (assembly, dofs, reduced stiffness, factor).
    parts : pieces per frame member.
    """

    def __init__(self, frame: Frame, options, kept: dict, parts: int = 8):
        asm_o, dofs_o = kept["asm"], kept["dofs"]
        self.options = options
        self.asm_o, self.dofs_o = asm_o, dofs_o
        self.factor_o: Factor = kept["factor"]
        self.sub: Subdivision = subdivide(frame, parts)
        pf = self.sub.frame
        n, n_ref, mp = frame.n_nodes, pf.n_nodes, pf.n_members
        parent, first, last = self.sub.parent, self.sub.first, self.sub.last
        self.R = asm_o.R[parent]
        self.L = self.sub.h
        Te = end_transformation(self.R, pf.offsets)
        stand_in = np.where(pf.truss, pf.A**2, 0.0)  # as in Assembly: bars are condensed to axial only
        Iy = np.where(pf.truss, stand_in, pf.Iy)
        Iz = np.where(pf.truss, stand_in, pf.Iz)
        J = np.where(pf.truss, stand_in, pf.J)
        G = np.where(pf.truss & ~(pf.G > 0), pf.E, pf.G)
        Avy, Avz = (pf.Avy, pf.Avz) if options.shear else (None, None)
        L_ = self.L

        def stiffness(rows):  # local stiffness of pieces ``rows``, built chunk by chunk (memory)
            return local_stiffness(L_[rows], pf.E[rows], G[rows], pf.A[rows], Iy[rows], Iz[rows], J[rows],
                                   None if Avy is None else Avy[rows], None if Avz is None else Avz[rows])

        cond = np.zeros((mp, 2, 6), bool)
        cond[first, 0] = dofs_o.condensed[:, 0]
        cond[last, 1] = dofs_o.condensed[:, 1]
        self.released = cond.reshape(mp, 12)
        # the condensation shapes of the pieces with released end actions (the others need none)
        self._rel_rows = np.flatnonzero(self.released.any(axis=1))
        self._rel_pos = np.full(mp, -1, dtype=np.int64)
        self._rel_pos[self._rel_rows] = np.arange(self._rel_rows.size)
        self._X = condensation_map(stiffness(self._rel_rows), self.released[self._rel_rows])

        # ext numbering: the first-order ext (joints of the model's nodes, own end rotations), then interior joints
        n_ext_o = asm_o.n_ext
        self.n_ext = n_ext_o + 6 * (n_ref - n)
        nodes = np.arange(n_ref)
        self.node_ext = np.where(nodes < n, 6 * nodes, n_ext_o + 6 * (nodes - n))
        comp = np.arange(6)
        ends = pf.members.astype(np.int64)
        idx = np.concatenate([self.node_ext[ends[:, 0]][:, None] + comp, self.node_ext[ends[:, 1]][:, None] + comp], axis=1)
        hs = asm_o.hinge_slots
        h_ext = np.where(hs >= 0, asm_o.N6 + (hs - asm_o.n_joint_x), -1)
        hinge = np.full((mp, 12), -1, dtype=np.int64)
        hinge[first, :6] = h_ext[:, :6]
        hinge[last, 6:] = h_ext[:, 6:]
        if (hinge >= 0).any():
            A = np.zeros((mp, 12, 24))
            A[:, :, :12] = Te
            rows, slots = np.nonzero(hinge >= 0)
            A[rows, slots, 12 + slots] = 1.0
            self.A, self.idx = A, np.concatenate([idx, hinge], axis=1)
        else:
            self.A, self.idx = Te, idx

        # unknowns: the first-order x, then the active components of the interior joints
        active = np.array(sorted(dofs_o.active))
        z_ext = (n_ext_o + 6 * (np.arange(n, n_ref) - n))[:, None] + active[None, :]
        self.z_ext = z_ext.reshape(-1)
        self.x_ext = np.concatenate([asm_o.x_ext, self.z_ext])
        self.n_qo = int(kept["Kq"].shape[0])
        self.n_z = int(self.z_ext.size)
        T = dofs_o.T
        self.G = sp.csr_array(sp.block_diag([sp.csr_matrix(T), sp.identity(self.n_z, format="csr")], format="csr"))
        springs = np.concatenate([kept["springs"], np.zeros(self.n_z)])
        K_ext = self.assemble_ext(stiffness)
        sr, sc, sv = asm_o._end_spring_entries()  # semi-rigid ends: on the first-order ext numbering, kept here
        if sv.size:
            K_ext = sp.csr_array(K_ext + sp.coo_array((sv, (sr, sc)), shape=(self.n_ext, self.n_ext)).tocsr())
        K = self.to_q(K_ext)
        if springs.any():
            K = sp.csr_array(K + self.G.T @ sp.diags_array(springs) @ self.G)
        self.Kq = sp.csr_array(K)
        nq = self.n_qo
        self.K_qz = sp.csr_array(self.Kq[:nq, nq:])
        self.K_zq = sp.csr_array(self.Kq[nq:, :nq])
        K_zz = sp.csr_array(self.Kq[nq:, nq:])
        self.factor_z = _banded_factor(K_zz) if self.n_z else None
        self.factor = Factor(f"{self.factor_o.name} + interior", self.solve)
        self._points: tuple[np.ndarray, np.ndarray] | None = None

    # ------------------------------------------------------------------ operators
    def solve(self, b: np.ndarray) -> np.ndarray:
        """``K⁻¹ b`` by eliminating the interior unknowns (b ``(n,)`` or ``(n,c)``)."""
        b = np.asarray(b, float)
        nq = self.n_qo
        if self.factor_z is None:
            return self.factor_o.solve(b)
        bq, bz = b[:nq], b[nq:]
        z0 = self.factor_z.solve(bz)
        yq = self.factor_o.solve(bq - self.K_qz @ z0)
        yz = z0 - self.factor_z.solve(self.K_zq @ yq)
        return np.concatenate([yq, yz])

    def _project(self, local: np.ndarray, rows: np.ndarray) -> np.ndarray:
        """Xᵀ a X for pieces ``rows`` (released end actions condensed with the stiffness's own shape)."""
        pos = self._rel_pos[rows]
        sel = np.flatnonzero(pos >= 0)
        if sel.size:
            X = self._X[pos[sel]]
            local = local.copy()
            local[sel] = np.swapaxes(X, 1, 2) @ local[sel] @ X
        return local

    def assemble_ext(self, local, chunk: int = 40000) -> sp.csr_array:
        """Global (ext) matrix of the pieces' local matrices: an array ``(mp,12,12)`` or ``rows -> array``.

        Assembled in chunks of pieces, so memory stays a few hundred MB on large models.
        """
        mp = self.A.shape[0]
        out = sp.csr_array((self.n_ext, self.n_ext))
        for start in range(0, mp, chunk):
            rows = np.arange(start, min(mp, start + chunk))
            loc = local(rows) if callable(local) else local[rows]
            A, idx = self.A[rows], self.idx[rows]
            Ke = np.swapaxes(A, 1, 2) @ self._project(loc, rows) @ A
            w = idx.shape[1]
            r = np.broadcast_to(idx[:, :, None], (idx.shape[0], w, w)).ravel()
            c = np.broadcast_to(idx[:, None, :], (idx.shape[0], w, w)).ravel()
            v = Ke.ravel()
            keep = (r >= 0) & (c >= 0) & (v != 0.0)
            out = out + sp.coo_array((v[keep], (r[keep], c[keep])), shape=(self.n_ext, self.n_ext)).tocsr()
        return sp.csr_array(out)

    def to_q(self, M_ext: sp.csr_array) -> sp.csr_array:
        xe = self.x_ext
        Mxx = sp.csr_array(M_ext[xe][:, xe])
        return sp.csr_array((self.G.T @ Mxx @ self.G).tocsr())

    def to_q_vector(self, v_ext: np.ndarray) -> np.ndarray:
        return self.G.T @ v_ext[self.x_ext]

    def rigid_translation(self, d: int) -> np.ndarray:
        """Unit translation of every joint (interior ones included) along world axis ``d``, over ext."""
        r = np.zeros(self.n_ext)
        r[self.node_ext + d] = 1.0
        return r

    def geometric_q(self, N: np.ndarray) -> sp.csr_array:
        truss = self.sub.frame.truss
        return self.to_q(self.assemble_ext(lambda rows: geometric_stiffness(self.L[rows], N[rows], truss[rows])))

    @property
    def frame(self) -> Frame:
        return self.sub.frame

    @property
    def n_q(self) -> int:
        return self.n_qo + self.n_z

    # ------------------------------------------------------------------ shapes
    def nodal(self, y: np.ndarray) -> np.ndarray:
        """Joint displacements ``(n_pieces_frame_nodes, 6)`` of ``y = [q; z]``."""
        x = self.G @ y
        u = np.zeros(self.n_ext)
        u[self.x_ext] = x
        return u[self.node_ext[:, None] + np.arange(6)]

    def shape(self, y: np.ndarray):
        """Original-node displacements ``(n,6)`` and per member its points ``(c+1,6)``; largest translation 1."""
        if self._points is None:
            self._points = self.sub.member_points()
        return normalised_shape(self.nodal(y), self._points, self.sub.original.n_nodes)


def _banded_factor(K: sp.csr_array) -> Factor:
    """Cholesky factor of the interior stiffness, which is banded.

    The interior joints of a member are numbered one after the other, so
    ``K_zz`` couples an unknown only with the next joint's: a half bandwidth of
    at most 11 in space (5 in a plane analysis), and the banded Cholesky costs
    O(n) (LAPACK pbtrf/pbtrs through `scipy.linalg.cholesky_banded`).
    """
    import scipy.linalg

    coo = K.tocoo()
    u = int(np.abs(coo.row - coo.col).max()) if coo.nnz else 0
    n = K.shape[0]
    if u > 64:  # not the expected structure: a general sparse factor
        return factorize(K, "superlu")
    ab = np.zeros((u + 1, n))
    for o in range(u + 1):
        ab[u - o, o:] = K.diagonal(o)
    try:
        c = scipy.linalg.cholesky_banded(ab, lower=False, check_finite=False)
    except np.linalg.LinAlgError:
        return factorize(K, "superlu")

    def solve(b):
        return scipy.linalg.cho_solve_banded((c, False), np.asarray(b, float), check_finite=False)

    return Factor("banded Cholesky", solve)


def piece_axial_forces(sub: Subdivision, cr, L: np.ndarray) -> np.ndarray:
    """Axial force (tension > 0) at the middle of every piece from a first-order `CaseResult` of the members.

    Uniform loads in closed form over all members at once; members with other
    loads through their exact internal-force function.
    """
    mid = sub.start + sub.h / 2
    k = sub.parent
    f = cr.end_forces[:, 0]  # (m,6) end i, nodes on member
    N = -f[k, 0] - cr.loads.uniform[k, 0] * mid
    for member, loading in cr.loads.generic.items():
        if loading.empty:
            continue
        rows = sub.pieces[member]
        full = cr.loads.loading(member, float(L[member]))
        N[rows] = internal_forces(full, f[member], mid[rows])[:, 0]
    return N
