"""Property tests of the stiffness engine on random stable frames (hypothesis).

Facts checked, all common practice of linear structural mechanics (no source):
global equilibrium, Maxwell-Betti reciprocity, invariance under rigid motions,
symmetry, and that the batched assembly equals a plain per-member loop.
"""
from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from analysis import (AnalysisOptions, FrameBuilder, LineLoad, LoadCase, Material, NodalLoad, PointLoad, Section,
                      UnstableStructureError, analyze)
from analysis.model import member_axes
from analysis.stiffness.analyze import assemble

SEC = Section("S", A=6e-3, Iy=9e-5, Iz=3e-5, J=2e-6, Avy=3e-3, Avz=3.5e-3)
MAT = Material("M", E=205e9, G=79e9, density=7850.0)
SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def frames(draw, plane=False):
    """A random building-like frame: columns on fixed bases, beams, some braces and releases."""
    nx = draw(st.integers(1, 3))
    ny = 1 if plane else draw(st.integers(1, 2))
    nz = draw(st.integers(1, 3))
    dx = draw(st.floats(3.0, 8.0))
    dy = draw(st.floats(3.0, 8.0))
    dz = draw(st.floats(2.5, 4.5))
    b = FrameBuilder()
    ids = {}
    for k in range(nz + 1):
        for j in range(ny + 1 if not plane else 1):
            for i in range(nx + 1):
                nid = f"N{i}{j}{k}"
                ids[i, j, k] = nid
                b.add_node(nid, (i * dx, j * dy, k * dz), support="fixed" if k == 0 else None)
    count = 0
    loads = []
    for (i, j, k), nid in ids.items():
        if k == 0:
            continue
        b.add_member(f"C{count}", ids[i, j, k - 1], nid, SEC, MAT)
        count += 1
        for di, dj in ((1, 0), (0, 1)):
            other = ids.get((i + di, j + dj, k))
            if other is None:
                continue
            rel = draw(st.sampled_from(["", "pinned"]))
            mid = f"B{count}"
            b.add_member(mid, nid, other, SEC, MAT, release_j=rel)
            count += 1
            loads.append(LineLoad(mid, "z", -draw(st.floats(1e3, 2e4)), axes="global"))
            if draw(st.booleans()):
                loads.append(PointLoad(mid, "y", draw(st.floats(-5e3, 5e3)), draw(st.floats(0.1, 0.9)), relative=True))
    top = ids[nx, 0, nz]
    nodal = (NodalLoad(top, (draw(st.floats(-2e4, 2e4)), 0.0 if plane else draw(st.floats(-2e4, 2e4)), -1e4, 0, 0, 0)),)
    b.add_case(LoadCase("L", nodal=nodal, member=tuple(loads), self_weight=(0, 0, -1)))
    return b


def _run(b, **kw):
    try:
        return analyze(b.build(), AnalysisOptions(**kw))
    except UnstableStructureError:
        assume(False)


@SETTINGS
@given(frames(), st.booleans())
def test_global_equilibrium(b, shear):
    r = _run(b, shear=shear)
    assert r.cases["L"].equilibrium_residual < 1e-10


@SETTINGS
@given(frames(plane=True), st.booleans())
def test_global_equilibrium_plane(b, inext):
    r = _run(b, plane=True, inextensible=inext)
    assert r.cases["L"].equilibrium_residual < 1e-10


@SETTINGS
@given(frames(), st.data())
def test_maxwell_betti_reciprocity(b, data):
    frame = b.build()
    free = [k for k in range(frame.n_nodes) if not frame.restraints[k].any()]
    a_node, b_node = data.draw(st.sampled_from(free)), data.draw(st.sampled_from(free))
    a_dof, b_dof = data.draw(st.integers(0, 5)), data.draw(st.integers(0, 5))
    ea = np.zeros(6)
    ea[a_dof] = 1.0
    eb = np.zeros(6)
    eb[b_dof] = 1.0
    frame = frame.replace(load_cases=(LoadCase("a", nodal=(NodalLoad(frame.node_ids[a_node], tuple(ea)),)),
                                      LoadCase("b", nodal=(NodalLoad(frame.node_ids[b_node], tuple(eb)),))))
    try:
        r = analyze(frame)
    except UnstableStructureError:
        assume(False)
    u_ba = r.cases["a"].displacements[b_node, b_dof]
    u_ab = r.cases["b"].displacements[a_node, a_dof]
    assert_allclose(u_ba, u_ab, rtol=1e-8, atol=1e-14 * max(abs(u_ba), 1e-30) + 1e-20)


def _rotation(ax, ay, az):
    cx, sx, cy, sy, cz, sz = np.cos(ax), np.sin(ax), np.cos(ay), np.sin(ay), np.cos(az), np.sin(az)
    Rx = np.array([[1, 0, 0], [0, cx, -sx], [0, sx, cx]])
    Ry = np.array([[cy, 0, sy], [0, 1, 0], [-sy, 0, cy]])
    Rz = np.array([[cz, -sz, 0], [sz, cz, 0], [0, 0, 1]])
    return Rz @ Ry @ Rx


@SETTINGS
@given(frames(), st.tuples(st.floats(-3, 3), st.floats(-3, 3), st.floats(-3, 3)),
       st.tuples(st.floats(-50, 50), st.floats(-50, 50), st.floats(-50, 50)))
def test_invariance_under_rigid_motion(b, angles, shift):
    frame = b.build()
    # nodal and global member loads must turn with the model: use local-axis loads only here
    case = LoadCase("L", nodal=(), member=tuple(LineLoad(m, "z", -1e4) for m in frame.member_ids[:3]) +
                    tuple(PointLoad(m, "y", 2e3, 0.3, relative=True) for m in frame.member_ids[-2:]))
    frame = frame.replace(load_cases=(case,))
    Q = _rotation(*angles)
    R0 = member_axes(frame)
    moved = frame.replace(nodes=frame.nodes @ Q.T + np.asarray(shift), ref=R0[:, 2] @ Q.T)
    try:
        r0, r1 = analyze(frame), analyze(moved)
    except UnstableStructureError:
        assume(False)
    c0, c1 = r0.cases["L"], r1.cases["L"]
    scale = np.abs(c0.end_forces).max()
    assert_allclose(c1.end_forces, c0.end_forces, atol=1e-7 * scale)
    u0 = c0.displacements
    u1 = c1.displacements
    assert_allclose(u1[:, :3], u0[:, :3] @ Q.T, atol=1e-7 * np.abs(u0).max())
    assert_allclose(u1[:, 3:], u0[:, 3:] @ Q.T, atol=1e-7 * np.abs(u0).max())


def test_symmetric_portal_under_symmetric_load_gives_symmetric_results():
    # symmetry of a linear elastic structure (common practice, no source)
    b = FrameBuilder()
    for nid, x, z, sup in (("A", 0, 0, "fixed"), ("B", 0, 3.5, None), ("C", 5, 3.5, None), ("D", 10, 3.5, None),
                           ("E", 10, 0, "fixed")):
        b.add_node(nid, (x, 0, z), support=sup)
    b.add_member("AB", "A", "B", SEC, MAT)
    b.add_member("BC", "B", "C", SEC, MAT)
    b.add_member("DC", "D", "C", SEC, MAT)
    b.add_member("ED", "E", "D", SEC, MAT)
    b.add_case(LoadCase("g", member=(LineLoad("BC", "z", -8e3, axes="global"), LineLoad("DC", "z", -8e3, axes="global")),
                        nodal=(NodalLoad("C", (0, 0, -2e4, 0, 0, 0)),)))
    r = analyze(b.build())
    u = r.cases["g"].displacements
    assert_allclose(u[0], u[4] * [-1, 1, 1, 1, -1, -1], atol=1e-16)
    assert_allclose(u[1], u[3] * [-1, 1, 1, 1, -1, -1], atol=1e-16)
    assert_allclose(u[2, [0, 4]], 0.0, atol=1e-16)
    R = r.cases["g"].reactions
    assert_allclose(R[0], R[4] * [-1, 1, 1, 1, -1, -1], rtol=1e-10)


def _loop_stiffness(frame):
    """Plain per-member assembly, written independently: Euler-Bernoulli 12x12 (no shear, no releases)."""
    n = frame.n_nodes
    K = np.zeros((6 * n, 6 * n))
    R = member_axes(frame)
    for k in range(frame.n_members):
        i, j = frame.members[k]
        L = np.linalg.norm(frame.nodes[j] - frame.nodes[i])
        E, G, A, Iy, Iz, J = (float(getattr(frame, a)[k]) for a in ("E", "G", "A", "Iy", "Iz", "J"))
        kl = np.zeros((12, 12))
        kl[np.ix_([0, 6], [0, 6])] = E * A / L * np.array([[1, -1], [-1, 1]])
        kl[np.ix_([3, 9], [3, 9])] = G * J / L * np.array([[1, -1], [-1, 1]])
        bz = E * Iz / L**3 * np.array([[12, 6 * L, -12, 6 * L], [6 * L, 4 * L * L, -6 * L, 2 * L * L],
                                        [-12, -6 * L, 12, -6 * L], [6 * L, 2 * L * L, -6 * L, 4 * L * L]])
        kl[np.ix_([1, 5, 7, 11], [1, 5, 7, 11])] = bz
        by = E * Iy / L**3 * np.array([[12, -6 * L, -12, -6 * L], [-6 * L, 4 * L * L, 6 * L, 2 * L * L],
                                        [-12, 6 * L, 12, 6 * L], [-6 * L, 2 * L * L, 6 * L, 4 * L * L]])
        kl[np.ix_([2, 4, 8, 10], [2, 4, 8, 10])] = by
        T = np.kron(np.eye(4), R[k])
        kg = T.T @ kl @ T
        dofs = [6 * i + c for c in range(6)] + [6 * j + c for c in range(6)]
        K[np.ix_(dofs, dofs)] += kg
    return K


@SETTINGS
@given(frames())
def test_batched_assembly_equals_loop(b):
    frame = b.build()
    frame = frame.replace(releases=np.zeros_like(frame.releases))
    _, asm = assemble(frame)
    K = asm.K_full.toarray()
    K_loop = _loop_stiffness(frame)
    assert_allclose(K, K_loop, rtol=1e-12, atol=1e-9 * np.abs(K_loop).max())
