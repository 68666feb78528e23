"""The two-point-function route (W v = λ iΔ v) against the symplectic route."""

import json

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw as al
from arealaw.cli import main
from arealaw.methods import two_point_spectrum


def random_spd(rng, n, *, cond=10.0):
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = (q * np.exp(rng.uniform(0, np.log(cond), n))) @ q.T
    return 0.5 * (a + a.T)


@pytest.mark.parametrize("n,size,kinetic", [(20, 7, False), (30, 12, True), (50, 25, True)],
                         ids=["diagonal-M", "random-M", "half-random-M"])
def test_equals_symplectic_route_on_random_networks(n, size, kinetic):
    # Two independent routes to one number (Sorkin 2012, arXiv:1205.2953; the symplectic
    # route: Williamson's theorem): |ΔS| < 1e-10 (project standard for fast paths).
    rng = np.random.default_rng(100 + n)
    v = random_spd(rng, n, cond=50.0)
    net = al.OscillatorNetwork(v, random_spd(rng, n, cond=5.0) if kinetic else None)
    a = al.from_sites(net, np.sort(rng.choice(n, size, replace=False)))
    ref = al.entropy(net, a, method="dense", renyi=[0.5, 2, "inf"])
    got = al.entropy(net, a, method="two-point", renyi=[0.5, 2, "inf"])
    assert got.method == "two-point" and ref.entropy > 0.1
    assert abs(got.entropy - ref.entropy) < 1e-10
    assert abs(got.entropy - ref.entropy) <= got.error_bound + ref.error_bound
    for k in ref.renyi:
        assert abs(got.renyi[k] - ref.renyi[k]) < 1e-10
    # the route's own sum Σ λ ln|λ| is the von Neumann entropy with the usual sign
    assert abs(got.spectrum.info["two_point_entropy"] - ref.entropy) < 1e-10
    assert_allclose(got.spectrum.t, ref.spectrum.t, atol=1e-11)


def test_lattice_region_and_mutual_information():
    net = al.hypercubic((10, 10), mass=0.2)
    a, b = al.ball(net, 2, center=(3, 3)), al.box(net, 3, origin=(6, 2))
    ref = al.entropy(net, a, region_b=b, method="dense")
    got = al.entropy(net, a, region_b=b, method="two-point")
    assert abs(got.entropy - ref.entropy) < 1e-10
    assert abs(got.mutual_information - ref.mutual_information) < 1e-10


def test_qp_correlator_is_used():
    # A symplectic shear p → p + S q (S symmetric) leaves the symplectic eigenvalues unchanged
    # and makes C = X S non-zero (Williamson's theorem; common practice, no source).
    rng = np.random.default_rng(9)
    net = al.OscillatorNetwork(random_spd(rng, 16, cond=20.0))
    x, p, _ = al.correlators.dense_correlators(net)
    idx = np.arange(0, 16, 2)
    xa, pa = x[np.ix_(idx, idx)], p[np.ix_(idx, idx)]
    s = 0.3 * random_spd(rng, idx.size)
    sheared = two_point_spectrum(xa, pa + s @ xa @ s, xa @ s)
    plain = al.symplectic_spectrum(xa, pa)
    assert_allclose(sheared.t, plain.t, atol=1e-12)
    ignored = two_point_spectrum(xa, pa + s @ xa @ s)  # dropping C changes the answer
    assert np.max(np.abs(ignored.t - plain.t)) > 1e-3


def test_auto_never_prefers_it():
    # the honest cost estimate: the two-point route is ~20x the symplectic eigenproblem
    cases = [(al.hypercubic(60, mass=0.1), lambda n: al.box(n, 20)),
             (al.hypercubic((14, 14), mass=0.1), lambda n: al.ball(n, 4)),
             (al.OscillatorNetwork(random_spd(np.random.default_rng(1), 30)),
              lambda n: al.from_sites(n, range(12)))]
    for net, make in cases:
        region = make(net)
        auto = al.choose_method(net, [region], tol=1e-10).method
        assert auto.name != "two-point"
        two = al.choose_method(net, [region], "two-point", tol=1e-10).method
        assert (two.assess(net, [region], tol=1e-10).seconds
                > auto.assess(net, [region], tol=1e-10).seconds)


def test_bad_blocks():
    with pytest.raises(ValueError, match="must be square blocks of one shape"):
        two_point_spectrum(np.eye(2), np.eye(3))
    with pytest.raises(ValueError, match="not positive definite"):
        two_point_spectrum(np.eye(2), -np.eye(2))
    with pytest.raises(ValueError, match="region is empty"):
        two_point_spectrum(np.zeros((0, 0)), np.zeros((0, 0)))


def test_cli_method_two_point(capsys):
    code = main(["entropy", "--shape", "30", "--mass", "0.3", "--box", "8", "--method",
                 "two-point", "--json"])
    two = json.loads(capsys.readouterr().out)
    main(["entropy", "--shape", "30", "--mass", "0.3", "--box", "8", "--method", "dense",
          "--json"])
    dense = json.loads(capsys.readouterr().out)
    assert code == 0 and two["method"] == "two-point"
    assert abs(two["entropy"] - dense["entropy"]) < 1e-10


@pytest.mark.parametrize("temperature", [0.05, 0.4, 3.0])
def test_equals_symplectic_route_at_temperature(temperature):
    # Gibbs states: W and iΔ from the thermal X_T, P_T; the same identity as at T = 0
    # (Sorkin 2012, arXiv:1205.2953, holds for any Gaussian state), |ΔS| < 1e-10.
    rng = np.random.default_rng(7)
    net = al.OscillatorNetwork(random_spd(rng, 30, cond=40.0), random_spd(rng, 30, cond=4.0))
    a = al.from_sites(net, np.sort(rng.choice(30, 11, replace=False)))
    ref = al.entropy(net, a, method="dense", renyi=[2], temperature=temperature)
    got = al.entropy(net, a, method="two-point", renyi=[2], temperature=temperature)
    assert got.temperature == temperature and ref.entropy > 0.1
    assert abs(got.entropy - ref.entropy) < 1e-10
    assert abs(got.renyi["2"] - ref.renyi["2"]) < 1e-10
    assert abs(got.entropy - ref.entropy) <= got.error_bound + ref.error_bound


def test_large_region_is_refused_with_an_alternative():
    net = al.hypercubic((300, 300), mass=0.1)
    big = al.box(net, (150, 150))
    with pytest.raises(al.UnsupportedMethodError, match="two-point eigenproblem of 22500 sites "
                                                        "needs .*can"):
        al.entropy(net, big, method="two-point")


def test_cli_infinite_region_is_one_line(capsys):
    code = main(["entropy", "--shape", "20", "inf", "--boundary", "dirichlet", "periodic",
                 "--mass", "0.2", "--half-space", "0", "10", "--method", "two-point"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1 and "two-point" in err
