"""Exact spectral correlators of uniform hypercubic lattices against the dense reference."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw as al
from arealaw.correlators import dense_correlators, get_backend, spectral_correlators

CASES = {
    "1d-dirichlet-massless": dict(shape=(14,), mass=0.0, boundary="dirichlet"),
    "1d-periodic": dict(shape=(11,), mass=0.3, boundary="periodic"),
    "1d-open": dict(shape=(9,), mass=0.4, boundary="open", coupling=1.7),
    "1d-periodic-L2": dict(shape=(2,), mass=0.5, boundary="periodic"),
    "2d-dirichlet-open-aniso": dict(shape=(7, 6), mass=0.2, boundary=("dirichlet", "open"),
                                    coupling=(1.0, 0.6)),
    "2d-periodic-massless-dirichlet": dict(shape=(6, 5), mass=0.0,
                                           boundary=("periodic", "dirichlet")),
    "2d-inertia": dict(shape=(5, 6), mass=0.7, boundary="dirichlet", inertia=2.5),
    "3d-dirichlet-massless": dict(shape=(6, 6, 6), mass=0.0, boundary="dirichlet"),
    "3d-mixed-aniso-inertia": dict(shape=(5, 4, 6), mass=0.1,
                                   boundary=("periodic", "dirichlet", "open"),
                                   coupling=(1.0, 2.0, 0.5), inertia=0.4),
    "3d-open-L1": dict(shape=(1, 5, 4), mass=0.6, boundary="open"),
}


def _spectral_norm(a):
    return float(np.linalg.norm(a, 2))


@pytest.mark.parametrize("case", list(CASES.values()), ids=list(CASES))
def test_blocks_equal_dense(case):
    net = al.hypercubic(**case)
    x, p, info = dense_correlators(net)
    rng = np.random.default_rng(3)
    rows = np.sort(rng.choice(net.n_sites, min(net.n_sites, 60), replace=False))
    b = spectral_correlators(net, rows)
    ex = _spectral_norm(b.x - x[np.ix_(rows, rows)])
    ep = _spectral_norm(b.p - p[np.ix_(rows, rows)])
    assert_allclose(b.x, x[np.ix_(rows, rows)], rtol=0, atol=1e-12)
    assert_allclose(b.p, p[np.ix_(rows, rows)], rtol=0, atol=1e-12)
    # both sides carry rounding: the difference is within the sum of the two bounds
    assert ex <= b.x_error + info["x_error"]
    assert ep <= b.p_error + info["p_error"]
    assert b.x_error < 1e-10 and b.p_error < 1e-9


@pytest.mark.parametrize("case", [CASES[k] for k in ("2d-dirichlet-open-aniso",
                                                     "3d-mixed-aniso-inertia")],
                         ids=["2d", "3d"])
def test_cross_blocks_equal_dense(case):
    net = al.hypercubic(**case)
    x, p, _ = dense_correlators(net)
    rows, cols = np.arange(0, net.n_sites, 3), np.arange(1, net.n_sites, 4)
    b = spectral_correlators(net, rows, cols)
    assert b.x.shape == (rows.size, cols.size)
    assert_allclose(b.x, x[np.ix_(rows, cols)], rtol=0, atol=1e-12)
    assert_allclose(b.p, p[np.ix_(rows, cols)], rtol=0, atol=1e-12)


@pytest.mark.parametrize("key", ["1d-dirichlet-massless", "2d-dirichlet-open-aniso",
                                 "2d-inertia", "3d-dirichlet-massless",
                                 "3d-mixed-aniso-inertia"])
def test_entropy_equals_dense(key):
    net = al.hypercubic(**CASES[key])
    shape = net.lattice.shape
    reg = al.box(net, [max(1, n // 2) for n in shape], origin=[n // 4 for n in shape])
    dense = al.entropy(net, reg, method="dense", renyi=[2])
    spec = al.entropy(net, reg, method="spectral", renyi=[2])
    assert spec.method == "spectral"
    assert abs(spec.entropy - dense.entropy) <= 1e-9
    assert abs(spec.renyi["2"] - dense.renyi["2"]) <= 1e-9
    assert abs(spec.entropy - dense.entropy) <= spec.error_bound + dense.error_bound


def test_error_bound_is_honest_against_exact_mode_sum():
    # 2-D periodic torus: X = (1/2N) Σ_k cos(k·r)/ω(k) summed exactly over the N modes
    # (common practice, no source); the spectral quadrature must stay inside its own bound.
    n1, n2, m, j = 7, 9, 0.25, (1.0, 1.4)
    net = al.hypercubic((n1, n2), mass=m, coupling=j, boundary="periodic")
    k1 = 2 * np.pi * np.arange(n1) / n1
    k2 = 2 * np.pi * np.arange(n2) / n2
    om = np.sqrt(m**2 + 4 * j[0] * np.sin(k1[:, None] / 2) ** 2
                 + 4 * j[1] * np.sin(k2[None, :] / 2) ** 2)
    c = np.stack(np.unravel_index(np.arange(n1 * n2), (n1, n2)), axis=1)
    d = c[:, None, :] - c[None, :, :]
    phase = np.cos(k1[None, None, :, None] * d[..., 0, None, None]
                   + k2[None, None, None, :] * d[..., 1, None, None])
    x_exact = (phase / om).sum(axis=(2, 3)) / (2 * n1 * n2)
    p_exact = (phase * om).sum(axis=(2, 3)) / (2 * n1 * n2)
    b = spectral_correlators(net, np.arange(n1 * n2))
    assert _spectral_norm(b.x - x_exact) <= b.x_error
    assert _spectral_norm(b.p - p_exact) <= b.p_error
    assert b.x_error < 1e-11


def test_infinite_matches_large_periodic():
    # translation invariance: the 2-D infinite lattice equals a torus far beyond the
    # correlation length (corrections ~ e^{-m L}; common practice, no source)
    inf = al.hypercubic(("inf", "inf"), mass=1.2, coupling=(1.0, 0.8))
    big = al.hypercubic((70, 70), mass=1.2, coupling=(1.0, 0.8), boundary="periodic")
    ri = al.box(inf, 4, origin=(10, 20))
    rb = al.box(big, 4, origin=(10, 20))
    a = spectral_correlators(inf, ri.indices)
    b = spectral_correlators(big, rb.indices)
    assert_allclose(a.x, b.x, rtol=0, atol=1e-12)
    assert_allclose(a.p, b.p, rtol=0, atol=1e-12)


def test_infinite_dirichlet_mix_matches_large_periodic():
    inf = al.hypercubic(("inf", 5), mass=1.0, boundary="dirichlet")
    big = al.hypercubic((80, 5), mass=1.0, boundary=("periodic", "dirichlet"))
    a = spectral_correlators(inf, al.box(inf, (3, 5), origin=(7, 0)).indices)
    b = spectral_correlators(big, al.box(big, (3, 5), origin=(7, 0)).indices)
    assert_allclose(a.x, b.x, rtol=0, atol=1e-12)
    assert_allclose(a.p, b.p, rtol=0, atol=1e-12)


def test_massless_infinite_3d_is_the_limit_of_dirichlet_boxes():
    # Dirichlet heat kernels grow with the domain, so X(0,0) increases with L towards the
    # infinite-lattice value; the kernel of V^{-1/2} falls like 1/r², so the deficit falls like
    # 1/L² (common practice, no source).
    inf = al.hypercubic(("inf",) * 3, mass=0.0)
    x_inf = spectral_correlators(inf, al.box(inf, 1, origin=(5, 5, 5)).indices).x[0, 0]
    vals = []
    for n in (9, 17, 33):
        net = al.hypercubic((n,) * 3, mass=0.0)
        vals.append(spectral_correlators(net, al.box(net, 1).indices).x[0, 0])
    assert vals[0] < vals[1] < vals[2] < x_inf
    gaps = [x_inf - v for v in vals]
    assert 0.2 < gaps[2] / gaps[1] < 0.35  # (17/33)² = 0.27


def test_infinite_chain_interval_saturates_to_twice_peschel_chung():
    # Peschel & Chung 1999, J. Phys. A 32, 8419 (REFERENCES.md entry 2, value from memory of the
    # paper's method): half-infinite chain at omega0 = 1 has S = 0.055900404567; an interval far
    # longer than the correlation length has two such ends.
    net = al.hypercubic("inf", mass=1.0)
    res = al.entropy(net, al.box(net, 40, origin=100))
    assert res.method == "spectral"
    assert_allclose(res.entropy, 2 * 0.055900404567, rtol=0, atol=1e-9)


def test_infinite_chain_interval_calabrese_cardy():
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002 (REFERENCES.md entry 3): interval >> 1/m on
    # the infinite chain, S -> 2 (c/6) ln(1/m) = (1/3) ln 100 = 1.5351 (c = 1, m = 0.01).
    m = 0.01
    net = al.hypercubic("inf", mass=m)
    res = al.entropy(net, al.box(net, 800, origin=0))
    assert res.method == "spectral"
    assert_allclose(res.entropy, math.log(1 / m) / 3, atol=2e-4)


def test_auto_picks_spectral_for_large_uniform_boxes():
    net = al.hypercubic((40, 40, 40), mass=0.0)
    res = al.entropy(net, al.box(net, 3))
    assert res.method == "spectral"
    assert res.error_bound < 1e-8


def test_huge_box_is_never_assembled():
    net = al.hypercubic((1000, 1000, 1000), mass=0.0)
    assert net.is_deferred and net.n_sites == 10**9
    res = al.entropy(net, al.box(net, 3), method="spectral")
    ref = al.hypercubic((60, 60, 60), mass=0.0)
    near = al.entropy(ref, al.box(ref, 3), method="spectral")
    assert net.potential is None  # 10^9 sites: V is never formed
    # deep inside a huge massless box the walls hardly matter (common practice, no source)
    assert 0 < res.entropy - near.entropy < 1e-2 * near.entropy


@pytest.mark.parametrize("net", [
    al.hypercubic((6, 6), mass=0.5, mass_disorder=0.3, seed=1),
    al.hypercubic((6, 6), mass=np.full(36, 0.5)),
    al.hypercubic((6, 6), mass=0.5, inertia=np.linspace(1, 2, 36)),
    al.OscillatorNetwork(np.array([[2.0, -1.0], [-1.0, 2.0]])),
], ids=["disorder", "site-masses", "site-inertia", "user-matrix"])
def test_refuses_what_it_cannot_serve(net):
    a = get_backend("spectral").assess(net, 4, tol=1e-10)
    assert not a.ok and a.reason
    with pytest.raises(al.UnsupportedMethodError if hasattr(al, "UnsupportedMethodError")
                       else ValueError, match="spectral"):
        spectral_correlators(net, [0, 1])
    res = al.entropy(net, al.from_sites(net, [0, 1]))
    assert res.method != "spectral"


@pytest.mark.parametrize("case,radius", [
    (dict(shape=(9, 9, 9), mass=0.0, boundary="dirichlet"), 3.0),
    (dict(shape=(10, 8, 9), mass=0.3, boundary=("open", "periodic", "dirichlet"),
          coupling=(1.0, 0.7, 1.3)), 2.6),
    (dict(shape=(16, 15), mass=0.2, boundary=("dirichlet", "open"), inertia=1.7), 5.0),
], ids=["ball-3d-dirichlet-odd", "ball-3d-mixed", "disc-2d"])
def test_reflection_sectors_give_the_dense_entropy(case, radius):
    net = al.hypercubic(**case)
    reg = al.ball(net, radius)
    spec = al.entropy(net, reg, method="spectral", renyi=[3])
    dense = al.entropy(net, reg, method="dense", renyi=[3])
    sectors = spec.spectrum.info["reflection_sectors"]
    assert len(sectors) == 2 ** len(case["shape"]) and sum(sectors) == reg.size
    assert abs(spec.entropy - dense.entropy) <= 1e-9
    assert abs(spec.renyi["3"] - dense.renyi["3"]) <= 1e-9
    assert abs(spec.entropy - dense.entropy) <= spec.error_bound + dense.error_bound


def test_reflection_sectors_are_orthonormal_and_commute_with_x():
    from arealaw.methods._reflections import reflection_sectors
    net = al.hypercubic((7, 8), mass=0.4, boundary=("dirichlet", "periodic"))
    reg = al.box(net, (5, 4), origin=(1, 2))
    basis = np.hstack([b.toarray() for b in reflection_sectors(net, reg.indices)])
    assert_allclose(basis.T @ basis, np.eye(reg.size), atol=1e-14)
    x = spectral_correlators(net, reg.indices).x
    y = basis.T @ x @ basis
    off = y.copy()
    sizes = [b.shape[1] for b in reflection_sectors(net, reg.indices)]
    start = 0
    for m in sizes:
        off[start:start + m, start:start + m] = 0
        start += m
    assert np.abs(off).max() < 1e-14


def test_tiny_mass_on_a_torus_is_a_convergence_error():
    # e^{-s m²} stays ~1 over the whole quadrature range: refuse rather than return a number
    net = al.hypercubic(5, mass=1e-100, boundary="periodic")
    with pytest.raises(al.ConvergenceError, match="too short"):
        spectral_correlators(net, [0, 1])


def test_auto_reports_parity_sectors_only_for_symmetric_regions():
    from arealaw.methods import choose_method
    net = al.hypercubic((100, 100, 100), mass=0.0)
    symmetric = choose_method(net, [al.ball(net, 13)], tol=1e-10)
    assert symmetric.method.name == "spectral" and "8 parity sectors" in symmetric.reason
    # centred on a site, the ball is not mirrored by the Dirichlet box: no sectors to claim
    off = choose_method(net, [al.ball(net, 13, center=(50, 50, 50))], tol=1e-10)
    assert "parity" not in off.reason and "restricted" in off.reason
