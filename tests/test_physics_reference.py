"""The dense reference against published closed forms and values (sources named beside each)."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw as al


def two_oscillators(k0, k1):
    v = np.array([[k0 + k1, -k1], [-k1, k0 + k1]])
    return al.OscillatorNetwork(v)


def srednicki_two_oscillator_entropy(k0, k1):
    # Srednicki 1993, PRL 71, 666, eqs. for two coupled oscillators (REFERENCES.md entry 1).
    wp, wm = math.sqrt(k0), math.sqrt(k0 + 2 * k1)
    xi = ((math.sqrt(wm) - math.sqrt(wp)) / (math.sqrt(wm) + math.sqrt(wp))) ** 2
    return -math.log(1 - xi) - xi / (1 - xi) * math.log(xi)


@pytest.mark.parametrize("k0,k1", [(1.0, 0.5), (1.0, 1.0), (0.3, 2.0), (2.0, 0.01), (1e-2, 5.0)],
                         ids=["k1=0.5", "k1=1", "strong", "weak", "light"])
def test_two_oscillators_closed_form(k0, k1):
    net = two_oscillators(k0, k1)
    res = al.entropy(net, al.from_sites(net, [0]), method="dense")
    assert_allclose(res.entropy, srednicki_two_oscillator_entropy(k0, k1), rtol=0, atol=1e-12)
    assert res.error_bound < 1e-9


def test_two_oscillators_published_values():
    # Srednicki 1993 closed form, evaluated values listed in REFERENCES.md entry 1 ("computed").
    res = al.entropy(two_oscillators(1.0, 0.5), al.from_sites(two_oscillators(1, .5), [0]))
    assert_allclose(res.entropy, 0.0443512355687, atol=1e-12)
    net = two_oscillators(1.0, 1.0)
    res = al.entropy(net, al.from_sites(net, [0]), renyi=[2])
    assert_allclose(res.spectrum.nu[0], 0.518977424651, atol=1e-12)
    assert_allclose(res.entropy, 0.094392465944, atol=1e-12)
    assert_allclose(res.renyi["2"], 0.037252286015, atol=1e-12)


@pytest.mark.parametrize("omega0,published", [(2.0, 0.013624759193), (1.0, 0.055900404567),
                                              (0.1, 0.385080258869)],
                         ids=["w0=2", "w0=1", "w0=0.1"])
def test_half_chain_peschel_chung(omega0, published):
    # Peschel & Chung 1999, J. Phys. A 32, 8419 (REFERENCES.md entry 2; equation location not
    # confirmed, value from memory of the paper's method): half of an infinite massive chain.
    # A Dirichlet chain of 2L sites cut in the middle, L ≫ 1/omega0, approaches it as e^{-2 omega0 L}.
    half = 40 if omega0 >= 1 else 260
    net = al.hypercubic(2 * half, mass=omega0)
    res = al.entropy(net, al.box(net, half, origin=0), method="dense")
    assert_allclose(res.entropy, published, atol=1e-9)


def test_interval_saturates_to_calabrese_cardy():
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002: an interval much longer than the correlation
    # length 1/m has S -> 2 * (c/6) ln(1/m) with c = 1 (two endpoints): 1.5351 at m = 0.01.
    m = 0.01
    net = al.hypercubic(1600, mass=m)
    res = al.entropy(net, al.box(net, 800, origin=400), method="dense")
    assert_allclose(res.entropy, math.log(1 / m) / 3, atol=2e-4)
    assert_allclose(res.entropy, 1.5351, atol=2e-4)


def test_half_chain_one_sixth_log():
    # Calabrese & Cardy 2004 (one endpoint): half-chain S = (1/6) ln(1/m) + O(m^2)
    # (REFERENCES.md entry 3); Dirichlet ends 600 sites from the cut (e^{-2 m L} ~ 6e-6).
    m = 0.01
    net = al.hypercubic(1200, mass=m)
    res = al.entropy(net, al.box(net, 600, origin=0), method="dense")
    assert_allclose(res.entropy, math.log(1 / m) / 6, atol=2e-4)


@pytest.mark.parametrize("n,published", [(10, 0.295896309638), (100, 0.664129015839),
                                         (1000, 1.046385766015)], ids=["N=10", "N=100", "N=1000"])
def test_massless_dirichlet_chain_regression(n, published):
    # REFERENCES.md entry 3, values marked "computed" (independent dense calculation):
    # regression values, K = tridiag(-1, 2, -1), region = first N/2 sites.
    net = al.hypercubic(n, mass=0.0, boundary="dirichlet")
    res = al.entropy(net, al.box(net, n // 2, origin=0), renyi=[2], method="dense")
    assert_allclose(res.entropy, published, atol=1e-9)
    if n == 100:
        assert_allclose(res.renyi["2"], 0.416030075671, atol=1e-9)


def test_central_charge_slope_on_dirichlet_chain():
    # Calabrese & Cardy 2004: on a critical chain with one endpoint of the region inside the system,
    # S = (c/6) ln N + const with c = 1.  Fit the slope over N = 64 .. 512.
    sizes = np.array([64, 128, 256, 512])
    s = []
    for n in sizes:
        net = al.hypercubic(int(n), mass=0.0)
        s.append(al.entropy(net, al.box(net, int(n) // 2, origin=0)).entropy)
    slope = np.polyfit(np.log(sizes), s, 1)[0]
    assert_allclose(slope, 1 / 6, rtol=0.01)
