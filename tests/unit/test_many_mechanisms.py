"""Mechanism counts of frames with hundreds of loose and pin-jointed parts.

A stable base (fixed-base cantilever columns whose tops are tied by beams
pinned at both ends) carries parts whose mechanisms are counted by hand,
joint by joint (free joint components less the independent conditions the
bars and hinges impose; common practice, no source):

- a pin-ended truss bar hanging from a column top: its free end has 3
  translations, the bar's length fixes 1: 2 mechanisms (it swings two ways);
- a chain of two such bars: 6 translations, 2 lengths: 4 mechanisms;
- a frame member hanging from a column top on a hinge releasing both bending
  moments (torsion held): a rigid body turning about two axes: 2 mechanisms;
- a frame member touching nothing: a free rigid body: 6 mechanisms;
- a truss bar touching nothing: 6 rigid-body motions less the turn about its
  own axis (its joints have no rotations): 5 mechanisms.
"""
from __future__ import annotations

import numpy as np

from analysis.indeterminacy import indeterminacy
from analysis.model import AnalysisOptions, FrameBuilder, Material, Section

STEEL = Material("S355", E=210e9, G=81e9)
SEC = Section("s", A=5e-3, Iy=8e-5, Iz=6e-6, J=2e-7)
PER_PART = {"bar": 2, "chain": 4, "pendulum": 2, "loose member": 6, "loose bar": 5}


def loose_parts_frame(nx: int, ny: int, parts: dict[str, int]):
    """The base grid with ``parts[kind]`` parts of each kind; (frame, expected mechanisms)."""
    b = FrameBuilder()
    h, bay = 3.0, 4.0
    tops = []
    for a in range(nx):
        for c in range(ny):
            b.add_node(f"B{a}_{c}", (a * bay, c * bay, 0.0), support="fixed")
            tops.append((b.add_node(f"T{a}_{c}", (a * bay, c * bay, h)), a * bay, c * bay))
            b.add_member(f"C{a}_{c}", f"B{a}_{c}", f"T{a}_{c}", SEC, STEEL)
            if a:
                b.add_member(f"X{a}_{c}", f"T{a - 1}_{c}", f"T{a}_{c}", SEC, STEEL, release_i="pinned",
                             release_j="pinned")
            if c:
                b.add_member(f"Y{a}_{c}", f"T{a}_{c - 1}", f"T{a}_{c}", SEC, STEEL, release_i="pinned",
                             release_j="pinned")
    rng = np.random.default_rng(7)
    expected = 0
    for kind, count in parts.items():
        for q in range(count):
            top, x0, y0 = tops[int(rng.integers(len(tops)))]
            base = np.array(rng.uniform(-0.5, 0.5, 3)) + (x0, y0, h)
            name = f"{kind.replace(' ', '_')}{q}"
            if kind in ("bar", "chain", "pendulum"):
                b.add_node(f"{name}_a", base - (0.3, 0.2, 1.0))
                if kind == "pendulum":
                    b.add_member(name, top, f"{name}_a", SEC, STEEL, release_i="pinned")
                else:
                    b.add_member(name, top, f"{name}_a", SEC, STEEL, truss=True)
                if kind == "chain":
                    b.add_node(f"{name}_b", base - (0.1, 0.6, 1.8))
                    b.add_member(f"{name}_2", f"{name}_a", f"{name}_b", SEC, STEEL, truss=True)
            else:
                far = base + (0.0, 0.0, 10.0)
                b.add_node(f"{name}_a", far)
                b.add_node(f"{name}_b", far + (1.0, 0.5, 0.2))
                b.add_member(name, f"{name}_a", f"{name}_b", SEC, STEEL, truss=(kind == "loose bar"))
            expected += PER_PART[kind]
    return b.build(), expected


def test_the_base_grid_is_stable():
    frame, expected = loose_parts_frame(4, 3, {})
    assert expected == 0
    assert indeterminacy(frame).mechanisms == 0


def test_each_kind_of_part_adds_its_hand_count():
    for kind, per in PER_PART.items():
        frame, expected = loose_parts_frame(3, 3, {kind: 3})
        assert expected == 3 * per
        for method in ("auto", "geometry", "stiffness"):
            assert indeterminacy(frame, mechanism_method=method).mechanisms == expected, (kind, method)


def test_hundreds_of_mechanisms_are_all_counted_and_a_few_described():
    parts = {"bar": 150, "chain": 100, "pendulum": 60, "loose member": 30, "loose bar": 30}
    frame, expected = loose_parts_frame(14, 14, parts)  # the pinned beams tie one block of about 4000 columns
    assert frame.n_members > 1000
    r = indeterminacy(frame, AnalysisOptions())
    assert r.mechanisms == expected == 300 + 400 + 120 + 180 + 150
    st = r.static_terms
    assert r.static == (st["mechanisms"] + st["member_forces"] + st["reactions"] + st["springs"]
                        + st["constraint_forces"] - st["equations"])
    assert 0 < len(r.mechanism_descriptions) <= 6
    assert any(f"... and {expected - len(r.mechanism_descriptions)} more mechanisms" == n for n in r.notes)
    assert not any("lower bound" in n for n in r.notes)


def test_fixing_columns_held_alone_keeps_the_nullity():
    """Nullity of M equals that of what `_peel_fixed` leaves (compared with numpy's SVD rank)."""
    import scipy.sparse as sp

    from analysis.indeterminacy import _peel_fixed

    rng = np.random.default_rng(3)
    for trial in range(40):
        r, c = int(rng.integers(5, 40)), int(rng.integers(5, 40))
        dense = rng.uniform(-1.0, 1.0, (r, c)) * (rng.uniform(size=(r, c)) < rng.uniform(0.03, 0.2))
        M = sp.csr_array(dense if trial % 2 else dense.round(1))  # rounded: exact dependencies at times
        rows, cols = _peel_fixed(M)
        full = c - np.linalg.matrix_rank(M.toarray()) if r else c
        core = M[rows][:, cols].toarray()
        left = cols.size - (np.linalg.matrix_rank(core) if core.size else 0)
        assert left == full, trial


def test_block_inverse_iteration_finds_a_null_space_of_hundreds():
    """A graph Laplacian has one zero eigenvalue per connected part (common practice, no source)."""
    import scipy.sparse as sp

    from analysis.indeterminacy import block_null_space

    parts, size = 300, 12
    rng = np.random.default_rng(5)
    i = np.arange(parts * size).reshape(parts, size)
    a, b = i[:, :-1].ravel(), i[:, 1:].ravel()  # a path in every part ...
    extra = rng.integers(0, size, (parts, 2))  # ... and one more edge across it
    a = np.concatenate([a, i[np.arange(parts), extra[:, 0]]])
    b = np.concatenate([b, i[np.arange(parts), (extra[:, 0] + 2 + extra[:, 1] % (size - 3)) % size]])
    n = parts * size
    W = sp.coo_array((np.ones(a.size), (a, b)), shape=(n, n)).tocsr()
    W = W + W.T
    L = sp.diags_array(np.asarray(W.sum(axis=1)).ravel()) - W
    d = 1.0 / np.sqrt(L.diagonal())
    Ls = sp.csr_array(sp.diags_array(d) @ L @ sp.diags_array(d))
    w, V, complete = block_null_space(Ls)
    assert complete
    assert int((w < 1e-9).sum()) == parts
    Z = V[:, w < 1e-9]
    assert np.abs(Ls @ Z).max() < 1e-8
