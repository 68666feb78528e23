"""Bad input gives a clear ValueError naming the bad value, never a silently wrong number."""

import math

import numpy as np
import pytest
import scipy.sparse as sp

import arealaw as al
from arealaw import _numerics


@pytest.mark.parametrize("v,match", [
    (np.ones((2, 3)), "square"),
    (np.array([[2.0, -1.0], [-0.5, 2.0]]), "not symmetric"),
    (np.array([[2.0, np.nan], [np.nan, 2.0]]), "non-finite"),
    (np.array([[1.0, 2.0], [2.0, 1.0]]), "not positive definite"),
    (np.array([[-1.0, 0.0], [0.0, 1.0]]), "not positive definite"),
], ids=["non-square", "asymmetric", "nan", "indefinite", "negative-diagonal"])
def test_bad_potential(v, match):
    with pytest.raises(ValueError, match=match):
        al.OscillatorNetwork(v)


def test_bad_kinetic():
    v = np.eye(2) * 2
    with pytest.raises(ValueError, match="kinetic M is not positive definite"):
        al.OscillatorNetwork(v, np.array([[1.0, 3.0], [3.0, 1.0]]))
    with pytest.raises(ValueError, match="must match"):
        al.OscillatorNetwork(v, np.eye(3))


@pytest.mark.parametrize("boundary", ["periodic", "open"])
def test_massless_zero_mode_refused(boundary):
    with pytest.raises(ValueError, match="zero mode"):
        al.hypercubic((8, 8), mass=0.0, boundary=boundary)


def test_lattice_parameter_errors():
    with pytest.raises(ValueError, match="shape entry"):
        al.hypercubic((4, -2), mass=1)
    with pytest.raises(ValueError, match="1, 2 or 3"):
        al.hypercubic((2, 2, 2, 2), mass=1)
    with pytest.raises(ValueError, match="boundary 'wall'"):
        al.hypercubic(4, mass=1, boundary="wall")
    with pytest.raises(ValueError, match="coupling"):
        al.hypercubic(4, mass=1, coupling=-1)
    with pytest.raises(ValueError, match="2 axes"):
        al.hypercubic((4, 4), mass=1, coupling=(1, 2, 3))


def test_region_errors():
    net = al.hypercubic((5, 5), mass=1.0)
    with pytest.raises(ValueError, match="out of range"):
        al.from_sites(net, [3, 25])
    with pytest.raises(ValueError, match="more than once"):
        al.from_sites(net, [3, 3])
    with pytest.raises(ValueError, match="no sites"):
        al.from_sites(net, [])
    with pytest.raises(ValueError, match="outside the lattice"):
        al.box(net, 3, origin=(4, 0))
    with pytest.raises(ValueError, match="no sites"):
        al.ball(net, 0.2, center=(0.5, 0.5))
    with pytest.raises(ValueError, match="axis 2"):
        al.slab(net, 2, 0, 1)


def test_regions_must_be_disjoint_for_mutual_information():
    net = al.hypercubic(10, mass=1.0)
    with pytest.raises(ValueError, match="share 2 sites"):
        al.entropy(net, al.box(net, 4, origin=0), region_b=al.box(net, 4, origin=2))


def test_region_from_other_network():
    big = al.hypercubic(50, mass=1.0)
    small = al.hypercubic(10, mass=1.0)
    with pytest.raises(ValueError, match="another network"):
        al.entropy(small, al.box(big, 5, origin=30))


def test_memory_refused_up_front(monkeypatch):
    monkeypatch.setattr(_numerics, "available_bytes", lambda: 1e6)
    net = al.hypercubic((30, 30), mass=0.5)
    with pytest.raises(al.InsufficientMemoryError, match=r"needs about .* use method"):
        al.correlators.dense_correlators(net)


def test_unknown_method_names_alternatives():
    net = al.hypercubic(10, mass=1.0)
    with pytest.raises(ValueError, match="unknown method 'magic'.*dense"):
        al.entropy(net, al.box(net, 3), method="magic")


def test_bad_tolerance():
    net = al.hypercubic(10, mass=1.0)
    with pytest.raises(ValueError, match="tol=-1"):
        al.entropy(net, al.box(net, 3), tol=-1)


def test_region_builders():
    net = al.hypercubic((6, 8), mass=1.0, boundary="periodic")
    assert al.half_space(net, 1, 3).size == 18
    assert al.slab(net, 0, 2, 4).size == 16
    a = al.box(net, 2, origin=(0, 0))
    b = al.box(net, 2, origin=(1, 1))
    assert al.union(net, a, b).size == 7
    assert al.intersection(net, a, b).size == 1
    assert al.difference(net, a, b).size == 3
    assert al.complement(net, a).size == 44
    ball = al.ball(net, 2.0, center=(3, 4))
    pts = net.coords(ball.indices)
    assert np.all(np.sum((pts - [3, 4]) ** 2, axis=1) <= 4) and ball.size == 13
    mask = np.zeros((6, 8), bool)
    mask[1, 2] = mask[5, 7] = True
    assert al.from_mask(net, mask).indices.tolist() == [10, 47]


def test_site_order_is_c_order():
    net = al.hypercubic((3, 4), mass=1.0)
    assert net.coords([0, 1, 4]).tolist() == [[0, 0], [0, 1], [1, 0]]
    # the bond between (0,0) and (1,0) is V[0, 4]
    assert net.potential[0, 4] == -1.0 and net.potential[0, 1] == -1.0


def test_lattice_assembly_matches_direct_sum():
    # V = Σ m² q² + Σ_bonds J (q_i − q_j)²: check every boundary kind against a direct build.
    for b in ("dirichlet", "periodic", "open"):
        net = al.hypercubic(5, mass=0.5, coupling=2.0, boundary=b)
        v = np.diag(np.full(5, 0.25))
        bonds = [(i, i + 1) for i in range(4)] + ([(4, 0)] if b == "periodic" else [])
        for i, j in bonds:
            v[i, i] += 2
            v[j, j] += 2
            v[i, j] -= 2
            v[j, i] -= 2
        if b == "dirichlet":
            v[0, 0] += 2
            v[4, 4] += 2
        np.testing.assert_allclose(net.potential.toarray(), v, atol=0)


def test_infinite_lattice_has_no_potential():
    net = al.hypercubic(("inf", 5), mass=0.3)
    assert net.is_infinite and net.potential is None
    assert math.isinf(net.lattice.shape[0])
    with pytest.raises(ValueError, match="infinite"):
        al.complement(net, al.box(net, (2, 2), origin=(0, 0)))


def test_load_network(tmp_path):
    v = sp.csr_matrix(np.array([[2.0, -1.0], [-1.0, 2.0]]))
    sp.save_npz(tmp_path / "V.npz", v)
    net = al.load_network(tmp_path / "V.npz")
    assert net.n_sites == 2
    with pytest.raises(ValueError, match="does not exist"):
        al.load_network(tmp_path / "missing.npz")
    (tmp_path / "bad.npz").write_text("nope")
    with pytest.raises(ValueError, match="not a scipy.sparse"):
        al.load_network(tmp_path / "bad.npz")


def test_centred_box_on_infinite_axes_names_no_position():
    # a centred box on an infinite axis has no meaningful coordinate there (translation
    # invariance): the description says "centred", finite axes keep their coordinates
    from arealaw import box, hypercubic
    assert box(hypercubic(("inf",) * 3, mass=0.5), 3).description == "box 3x3x3 centred (any,any,any)"
    mixed = box(hypercubic((20, "inf"), mass=0.5), (4, 3))
    assert mixed.description == "box 4x3 centred (8,any)"
    assert box(hypercubic((10,), mass=0.5), 4).description == "box 4 at (3)"
    assert box(hypercubic(("inf",), mass=0.5), 4, origin=0).description == "box 4 at (0)"
