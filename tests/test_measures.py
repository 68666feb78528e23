"""Measures as functions of the symplectic spectrum, and the symplectic spectrum itself."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

import arealaw as al


def spectrum_of(nu):
    nu = np.asarray(nu, float)
    return al.SymplecticSpectrum(nu**2 - 0.25, np.zeros(nu.size), np.ones(nu.size))


def test_von_neumann_formula():
    # S = (ν+½)ln(ν+½) − (ν−½)ln(ν−½) (Peschel 2003; Casini & Huerta 2009 review).
    nu = np.array([0.5, 0.7, 1.3, 10.0])
    expected = sum((v + .5) * math.log(v + .5) - ((v - .5) * math.log(v - .5) if v > .5 else 0)
                   for v in nu)
    assert_allclose(al.von_neumann_entropy(spectrum_of(nu)), expected, rtol=1e-14)


@pytest.mark.parametrize("order", [0.5, 2.0, 3.0, 7.5], ids=lambda n: f"n={n}")
def test_renyi_formula(order):
    # S_n = (1/(n−1)) Σ ln[(ν+½)^n − (ν−½)^n] (REFERENCES.md, standard formulas).
    nu = np.array([0.51, 0.9, 2.5])
    expected = np.sum(np.log((nu + .5) ** order - (nu - .5) ** order)) / (order - 1)
    assert_allclose(al.renyi_entropy(spectrum_of(nu), order), expected, rtol=1e-13)


def test_renyi_limits():
    spec = spectrum_of([0.6, 1.1, 3.0])
    s1 = al.von_neumann_entropy(spec)
    assert_allclose(al.renyi_entropy(spec, 1 + 1e-7), s1, rtol=1e-6)
    assert_allclose(al.renyi_entropy(spec, 1 - 1e-7), s1, rtol=1e-6)
    assert_allclose(al.renyi_entropy(spec, math.inf), np.sum(np.log(spec.nu + .5)), rtol=1e-14)
    assert_allclose(al.renyi_entropy(spec, 1e6), al.renyi_entropy(spec, "inf"), rtol=1e-5)
    orders = [0.3, 0.5, 1, 2, 5, "inf"]
    values = [al.renyi_entropy(spec, n) for n in orders]
    assert all(a > b for a, b in zip(values, values[1:]))  # S_n decreases with n


def test_entanglement_energies_invert_coth():
    # ν = ½ coth(ε/2) (REFERENCES.md, standard formulas).
    nu = np.array([0.55, 1.0, 4.0])
    e = al.entanglement_energies(spectrum_of(nu))
    assert_allclose(np.sort(0.5 / np.tanh(e / 2)), np.sort(nu), rtol=1e-13)


def test_epsilon_has_no_cancellation():
    t = np.array([1e-30, 1e-20, 1e-10])
    spec = al.SymplecticSpectrum(t, np.zeros(3), np.ones(3))
    assert_allclose(spec.epsilon, t, rtol=1e-9)  # ν − ½ ≈ t for small t


@settings(max_examples=60, deadline=None)
@given(st.floats(0.1, 20), st.floats(1e-8, 10), st.floats(1e-8, 10), st.floats(0.01, 0.99))
def test_mode_functions_are_concave_and_increasing(order, t1, t2, lam):
    # The tail and error bounds rely on every per-mode function being increasing and concave in t.
    for n in (order, 1.0, math.inf):
        f = lambda t: float(al.mode_entropy(np.array([t]), n)[0])  # noqa: E731
        mid = f(lam * t1 + (1 - lam) * t2)
        assert mid >= lam * f(t1) + (1 - lam) * f(t2) - 1e-12 * (1 + abs(mid))
        assert f(max(t1, t2)) >= f(min(t1, t2)) - 1e-15


def test_tail_bound_is_honest_for_spread_tails():
    rng = np.random.default_rng(3)
    t_all = np.sort(rng.exponential(1e-3, 200))[::-1]
    kept, omitted = t_all[:20], t_all[20:]
    spec = al.SymplecticSpectrum(kept, np.zeros(20), np.ones(20),
                                 tail=al.Tail(omitted.size, omitted.sum(), omitted.max()))
    full = al.von_neumann_entropy(spectrum_of(np.sqrt(t_all + .25)))
    err = full - al.von_neumann_entropy(spec)
    assert 0 < err <= al.entropy_error_bound(spec)


@pytest.mark.parametrize("bad", [0, -1, "x", float("nan")], ids=["zero", "negative", "text", "nan"])
def test_bad_renyi_order(bad):
    with pytest.raises(ValueError, match="Rényi order"):
        al.renyi_entropy(spectrum_of([1.0]), bad)


def test_symplectic_spectrum_matches_eigenvalues_of_xp():
    rng = np.random.default_rng(0)
    net = al.hypercubic((6, 6), mass=0.3)
    x, p, _ = al.correlators.dense_correlators(net)
    idx = np.sort(rng.choice(36, 12, replace=False))
    spec = al.symplectic_spectrum(x[np.ix_(idx, idx)], p[np.ix_(idx, idx)])
    nu2 = np.sort(np.linalg.eigvals(x[np.ix_(idx, idx)] @ p[np.ix_(idx, idx)]).real)[::-1]
    assert_allclose(spec.nu**2, nu2, atol=1e-12)
    assert np.all(spec.t_error < 1e-12)


def test_mutual_information_decays_with_distance():
    net = al.hypercubic(200, mass=0.05)
    a = al.box(net, 10, origin=50)
    mi = [al.entropy(net, a, region_b=al.box(net, 10, origin=60 + r)).mutual_information
          for r in (2, 10, 30)]
    assert mi[0] > mi[1] > mi[2] > 0
