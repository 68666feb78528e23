"""Transverse Fourier reduction against dense / spectral references and published formulas."""

import math

import pytest
from numpy.testing import assert_allclose

import arealaw as al

DIRICHLET_PERIODIC = ("dirichlet", "periodic")


@pytest.mark.parametrize("mass", [0.0, 0.3], ids=["massless", "massive"])
@pytest.mark.parametrize("kind", ["half_space", "slab"], ids=["half-space", "slab"])
def test_2d_sum_equals_dense(mass, kind):
    net = al.hypercubic((12, 8), mass=mass, boundary=DIRICHLET_PERIODIC)
    reg = al.half_space(net, 0, 5) if kind == "half_space" else al.slab(net, 0, 3, 8)
    dense = al.entropy(net, reg, method="dense", renyi=[2])
    red = al.entropy(net, reg, method="transverse", renyi=[2])
    assert_allclose(red.entropy, dense.entropy, rtol=1e-8)
    assert_allclose(red.renyi["2"], dense.renyi["2"], rtol=1e-8)
    assert red.error_bound < 1e-7


@pytest.mark.parametrize("normal", ["dirichlet", "open", "periodic"])
def test_3d_sum_equals_dense(normal):
    net = al.hypercubic((6, 5, 4), mass=0.3, boundary=(normal, "periodic", "periodic"),
                        coupling=(1.0, 0.7, 1.3))
    reg = al.half_space(net, 0, 3)
    assert_allclose(al.entropy(net, reg, method="transverse").entropy,
                    al.entropy(net, reg, method="dense").entropy, rtol=1e-8)


@pytest.mark.parametrize("mass", [0.0, 0.25], ids=["massless", "massive"])
def test_3d_strip_equals_dense(mass):
    # a strip: finite cross-section (3 x 2 sites) along the whole periodic axis 2
    net = al.hypercubic((6, 5, 8), mass=mass, boundary=("dirichlet", "open", "periodic"))
    reg = al.box(net, (3, 2, 8), origin=(1, 1, 0))
    red = al.entropy(net, reg, method="transverse")
    assert_allclose(red.entropy, al.entropy(net, reg, method="dense").entropy, rtol=1e-8)
    assert red.info["distinct_chains"] == 5  # k and −k give equal cross-sections


def test_agrees_with_spectral_backend():
    assert "spectral" in al.method_names()
    net = al.hypercubic((10, 6, 6), mass=0.2, boundary=("dirichlet", "periodic", "periodic"))
    reg = al.half_space(net, 0, 5)
    assert_allclose(al.entropy(net, reg, method="transverse").entropy,
                    al.entropy(net, reg, method="spectral").entropy, rtol=1e-8)


def test_infinite_transverse_integral_matches_large_periodic_ring():
    inf = al.hypercubic((10, "inf"), mass=0.1, boundary=DIRICHLET_PERIODIC)
    res = al.entropy(inf, al.half_space(inf, 0, 5))
    assert res.entropy is None and res.method == "transverse"
    d = res.to_dict()
    assert d["entropy"] is None and d["entropy_per_area"] == res.entropy_per_area
    # infinite counts are numbers in Python and "inf" in JSON
    assert res.is_infinite and res.sites == res.region_sites == math.inf
    assert d["sites"] == d["region_sites"] == "inf"
    ring = al.hypercubic((10, 256), mass=0.1, boundary=DIRICHLET_PERIODIC)
    per_site = al.entropy(ring, al.half_space(ring, 0, 5), method="transverse").entropy / 256
    assert_allclose(res.entropy_per_area, per_site, rtol=1e-9)


@pytest.mark.parametrize("omega,value", [(2.0, 0.013624759193), (1.0, 0.055900404567),
                                         (0.1, 0.385080258869)], ids=["w2", "w1", "w0.1"])
def test_half_chain_peschel_chung(omega, value):
    # Peschel & Chung 1999, J. Phys. A 32 8419 (values as in shared REFERENCES entry 2)
    net = al.hypercubic(("inf",), mass=omega)
    assert_allclose(al.entropy(net, al.half_space(net, 0, 0)).entropy, value, atol=1e-11)


def test_massive_half_chain_calabrese_cardy():
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002: half-chain S = (1/6) ln(1/m) + O(m²)
    net = al.hypercubic(("inf",), mass=1e-6)
    assert_allclose(al.entropy(net, al.half_space(net, 0, 0)).entropy, math.log(1e6) / 6,
                    atol=1e-9)


def test_area_law_mass_term_2d():
    # Hertzberg & Wilczek 2011, PRL 106 050404 (value from memory): 2+1 D, dS/dm = −L/12
    s = [al.entropy(n, al.half_space(n, 0, 0)).entropy_per_area
         for n in (al.hypercubic(("inf", "inf"), mass=m) for m in (1e-3, 2e-3))]
    assert_allclose((s[1] - s[0]) / 1e-3, -1 / 12, rtol=0.01)


def test_cubic_lattice_area_coefficient_massless():
    # computed: half-space of the infinite massless cubic lattice, entropy per unit area
    # (regression value from this reduction; the finite-L periodic check above validates it)
    net = al.hypercubic(("inf", "inf", "inf"), mass=0.0)
    res = al.entropy(net, al.half_space(net, 0, 0))
    assert_allclose(res.entropy_per_area, 0.0242619559541, rtol=1e-9)
    massive = al.hypercubic(("inf", "inf", "inf"), mass=1e-3)
    assert abs(al.entropy(massive, al.half_space(massive, 0, 0)).entropy_per_area
               - res.entropy_per_area) < 1e-6


def test_bad_input_names_the_supported_method():
    net = al.hypercubic((8, 6), mass=0.2, boundary=("dirichlet", "dirichlet"))
    with pytest.raises(al.UnsupportedMethodError, match="axis 1 is dirichlet.*method='dense'"):
        al.entropy(net, al.slab(net, 0, 2, 5), method="transverse")
    per = al.hypercubic((8, 6), mass=0.2, boundary=DIRICHLET_PERIODIC)
    with pytest.raises(al.UnsupportedMethodError, match="spans none"):
        al.entropy(per, al.box(per, 2), method="transverse")
    with pytest.raises(al.UnsupportedMethodError, match="half-spaces, slabs and strips"):
        al.entropy(per, al.ball(per, 1.5), method="transverse")
    inf = al.hypercubic(("inf", 6), mass=0.2, boundary=("dirichlet", "periodic"))
    with pytest.raises(al.UnsupportedMethodError, match="finite normal axis"):
        al.entropy(inf, al.slab(inf, 0, 2, 5), method="transverse")
    with pytest.raises(al.UnsupportedMethodError):
        al.entropy(inf, al.half_space(inf, 0, 3), method="dense")


def test_cli_per_area_json(capsys):
    import json

    from arealaw.cli import main
    argv = ["entropy", "--shape", "10", "inf", "--boundary", "dirichlet", "periodic",
            "--mass", "0.1", "--half-space", "0", "5", "--json"]
    assert main(argv) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["entropy"] is None and doc["method"] == "transverse"
    net = al.hypercubic((10, "inf"), mass=0.1, boundary=DIRICHLET_PERIODIC)
    assert_allclose(doc["entropy_per_area"],
                    al.entropy(net, al.half_space(net, 0, 5)).entropy_per_area, rtol=1e-12)
