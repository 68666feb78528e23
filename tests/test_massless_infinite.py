"""Massless lattices with two or more infinite axes have finite correlators and are served."""

import math

import numpy as np
import pytest
import scipy.integrate

import arealaw as al
from arealaw.correlators import spectral_correlators


def _bz_entry(power, dx, dy):
    """½ ∫ d²k/(2π)² ω(k)^power cos(k·δ), ω² = 4 sin²(kx/2) + 4 sin²(ky/2), by scipy dblquad.

    The definition of the lattice correlators in momentum space (common practice, no source:
    X = ½ V^{-1/2}, P = ½ V^{1/2} with V diagonal in plane waves); the integrand is even, so
    the zone reduces to [0, π]² with weight 1/π².  The k → 0 corner (1/|k|) is integrable;
    it is split off so the adaptive rule sees a smooth integrand away from it.
    """
    def f(ky, kx):
        w = math.sqrt(4 * math.sin(kx / 2) ** 2 + 4 * math.sin(ky / 2) ** 2)
        return w ** power * math.cos(kx * dx) * math.cos(ky * dy)
    total = 0.0
    for (a, b) in ((0.0, 0.5), (0.5, math.pi)):
        for (c, d) in ((0.0, 0.5), (0.5, math.pi)):
            val, _ = scipy.integrate.dblquad(f, a, b, c, d, epsabs=1e-13, epsrel=1e-12)
            total += val
    return 0.5 * total / math.pi ** 2


def test_massless_plane_correlators_match_zone_integrals():
    net = al.hypercubic(("inf", "inf"), mass=0.0)
    rows = al.box(net, (2, 2)).indices
    b = spectral_correlators(net, rows)
    coords = net.coords(rows)
    for j in (1, 3):  # neighbour and diagonal neighbour of site 0
        dx, dy = (coords[j] - coords[0]).tolist()
        assert abs(b.x[0, j] - _bz_entry(-1, dx, dy)) < 1e-9 + b.entry_x_error
        assert abs(b.p[0, j] - _bz_entry(1, dx, dy)) < 1e-9 + b.entry_p_error
    assert abs(b.x[0, 0] - _bz_entry(-1, 0, 0)) < 1e-9


def test_massless_plane_is_accepted_and_bounded():
    net = al.hypercubic(("inf", "inf"), mass=0.0)
    res = al.entropy(net, al.box(net, (4, 4)))
    assert res.method == "spectral" and 0 < res.error_bound < 1e-8
    # the same square centred in ever larger massless Dirichlet boxes approaches it (the walls
    # are an infrared cut-off whose effect shrinks with the size; common practice, no source)
    gaps = []
    for size in (30, 60, 120, 240):
        big = al.hypercubic((size, size), mass=0.0)
        c = size // 2 - 2
        far = al.entropy(big, al.box(big, (4, 4), origin=(c, c)), method="spectral")
        gaps.append(abs(far.entropy - res.entropy))
    assert all(b < a for a, b in zip(gaps, gaps[1:])) and gaps[-1] < 0.5 * gaps[0]


@pytest.mark.parametrize("shape,boundary", [(("inf", "inf", 6), "periodic"),
                                            (("inf", "inf", 5), "open")])
def test_finite_axes_beside_two_infinite_ones_are_accepted(shape, boundary):
    net = al.hypercubic(shape, mass=0.0, boundary=boundary)
    res = al.entropy(net, al.box(net, (2, 2, 2)))
    assert math.isfinite(res.entropy) and res.error_bound < 1e-8


@pytest.mark.parametrize("shape,boundary", [(("inf",), "periodic"), (("inf", 6), "periodic"),
                                            ((8, 8), "periodic"), (("inf", 5), "open")])
def test_divergent_massless_cases_are_refused(shape, boundary):
    with pytest.raises(ValueError, match="zero mode"):
        al.hypercubic(shape, mass=0.0, boundary=boundary)


def test_tiny_mass_half_plane_returns_a_bounded_value():
    # the per-area value converges slowly only at k → 0; it is returned with a bound instead of
    # a refusal, and agrees with the massless value within the bounds
    nets = [al.hypercubic(("inf", "inf"), mass=m) for m in (1e-8, 0.0)]
    res = [al.entropy(n, al.half_space(n, 0, 0)) for n in nets]
    for r in res:
        assert r.entropy_per_area > 0 and r.error_bound < 1e-5
    assert abs(res[0].entropy_per_area - res[1].entropy_per_area) < \
        res[0].error_bound + res[1].error_bound + 1e-6
