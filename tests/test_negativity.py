"""Logarithmic negativity: identities, product states, the CFT slope, backends and bad input."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw as al
from arealaw.spectrum import (log_negativity, log_negativity_error_bound,
                              partial_transpose_spectrum)


def random_spd(rng, n, *, cond=10.0):
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = (q * np.exp(rng.uniform(0, np.log(cond), n))) @ q.T
    return 0.5 * (a + a.T)


def dense_partial_transpose(net, a, b):
    x, p, info = al.correlators.dense_correlators(net)
    rows = np.concatenate([a.indices, b.indices])
    return partial_transpose_spectrum(x[np.ix_(rows, rows)], p[np.ix_(rows, rows)],
                                      np.arange(rows.size) >= a.size,
                                      x_error=info["x_error"], p_error=info["p_error"])


@pytest.mark.parametrize("case", ["chain", "square", "random-M"])
def test_pure_state_complement_equals_half_renyi(case):
    # For a pure state and B = Ā, E_N = S_1/2(A) (Vidal & Werner 2002, Phys. Rev. A 65,
    # 032314, Sec. V).  The partial transpose of the whole network is compared with the Rényi-½
    # entropy of A's own spectrum: an independent route.
    rng = np.random.default_rng(21)
    if case == "chain":
        net = al.hypercubic(40, mass=0.1)
        a = al.box(net, 12, origin=5)
    elif case == "square":
        net = al.hypercubic((7, 7), mass=0.2, boundary="periodic")
        a = al.ball(net, 2)
    else:
        n = 24
        net = al.OscillatorNetwork(random_spd(rng, n, cond=30), random_spd(rng, n, cond=5))
        a = al.from_sites(net, np.sort(rng.choice(n, 9, replace=False)))
    b = al.complement(net, a)
    pt = dense_partial_transpose(net, a, b)
    en, en_err = log_negativity(pt), log_negativity_error_bound(pt)
    res = al.entropy(net, a, renyi=[0.5], method="dense")
    s_half, s_err = res.renyi["0.5"], res.renyi_error_bound["0.5"]
    assert en > 0.05
    assert abs(en - s_half) <= en_err + s_err
    assert_allclose(en, s_half, atol=1e-6)
    # the API takes the same identity as its shortcut and says so
    api = al.logarithmic_negativity(net, a, b, method="dense")
    assert api.route.startswith("pure state") and api.log_negativity == s_half


def test_product_state_has_zero_negativity():
    # Decoupled oscillators (diagonal V and M) are in a product state: E_N = 0
    # (common practice, no source); coupling them makes A and B entangled.
    rng = np.random.default_rng(3)
    v = np.diag(rng.uniform(0.5, 2.0, 12))
    m = np.diag(rng.uniform(0.5, 2.0, 12))
    net = al.OscillatorNetwork(v, m)
    a, b = al.from_sites(net, [0, 1, 2, 3]), al.from_sites(net, [4, 5, 6])
    res = al.logarithmic_negativity(net, a, b, method="dense")
    # exact value 0 within the bound; the bound stays at rounding level (it carries the dense
    # backend's rounding models, relative to ‖X‖, ‖P‖)
    assert 0.0 <= res.log_negativity <= res.error_bound < 1e-11
    coupled = al.OscillatorNetwork(v + np.diag(np.full(11, -0.2), 1) + np.diag(np.full(11, -0.2),
                                                                             -1), m)
    assert al.logarithmic_negativity(coupled, a, b).log_negativity > 1e-3


def test_two_mode_squeezed_state():
    # E_N = 2r for a two-mode squeezed vacuum (Vidal & Werner 2002, PRA 65 032314, Sec. V).
    for r in (0.1, 0.7, 2.5):
        c, s = np.cosh(2 * r), np.sinh(2 * r)
        x = 0.5 * np.array([[c, s], [s, c]])
        p = 0.5 * np.array([[c, -s], [-s, c]])
        pt = partial_transpose_spectrum(x, p, [False, True])
        bound = log_negativity_error_bound(pt)
        assert abs(log_negativity(pt) - 2 * r) <= bound
        # absolute eigenvalue bounds: loose (~eps·‖W‖/ν̃²) only for extreme squeezing, r = 2.5
        assert bound < (1e-12 if r < 1 else 1e-6)


def test_adjacent_intervals_follow_cft_slope():
    # Two adjacent intervals of length ℓ in a massless chain: E_N = (c/4) ln(ℓ1ℓ2/(ℓ1+ℓ2)) + const
    # with c = 1 (Calabrese, Cardy & Tonni 2012, Phys. Rev. Lett. 109, 130502, Eq. (9)).
    # Checked: the fitted slope of E_N against ln(ℓ/2) is c/4 (not the constant).  Dirichlet
    # chain of 1000 sites, intervals centred, ℓ = 8 … 64; measured slope 0.2490.
    net = al.hypercubic(1000)
    ells = np.array([8, 16, 32, 64])
    en = []
    for ell in ells:
        res = al.logarithmic_negativity(net, al.box(net, ell, origin=500 - ell),
                                        al.box(net, ell, origin=500))
        assert res.error_bound < 1e-6
        en.append(res.log_negativity)
    slope = np.polyfit(np.log(ells / 2.0), en, 1)[0]
    assert abs(slope - 0.25) < 0.004


@pytest.mark.parametrize("method", ["sparse", "spectral"])
def test_backends_agree_with_dense_within_bounds(method):
    # fast paths against the dense reference (project standard: |ΔE_N| within the bounds)
    net = al.hypercubic((9, 9), mass=0.3)
    a = al.box(net, (3, 3), origin=(1, 1))
    b = al.box(net, (3, 2), origin=(4, 2))
    ref = al.logarithmic_negativity(net, a, b, method="dense")
    got = al.logarithmic_negativity(net, a, b, method=method)
    assert ref.log_negativity > 0.01 and got.method == method
    assert abs(got.log_negativity - ref.log_negativity) <= got.error_bound + ref.error_bound
    assert got.error_bound < 1e-6


def test_entropy_result_carries_negativity():
    net = al.hypercubic(30, mass=0.2)
    a, b = al.box(net, 4, origin=5), al.box(net, 4, origin=9)
    res = al.entropy(net, a, region_b=b, negativity=True)
    alone = al.logarithmic_negativity(net, a, b, method=res.method)
    assert res.log_negativity == alone.log_negativity > 0
    d = res.to_dict()
    assert d["log_negativity_error_bound"] == alone.error_bound
    assert "log_negativity" not in al.entropy(net, a, region_b=b).to_dict()
    assert alone.to_dict()["log_negativity_error_bound"] == alone.error_bound


def test_pure_complement_skips_the_large_spectra():
    # S_B = S_A and S_AB = 0 for complementary regions of a pure state (Schmidt decomposition)
    net = al.hypercubic((6, 6), mass=0.2)
    a = al.box(net, (3, 3), origin=(0, 0))
    res = al.entropy(net, a, region_b=al.complement(net, a))
    direct = al.entropy(net, al.complement(net, a), method="dense")
    assert res.info["pure_complement"] and res.entropy_ab == 0.0
    assert abs(res.entropy_b - direct.entropy) <= res.error_bound + direct.error_bound


def test_bad_input():
    net = al.hypercubic(12, mass=0.3)
    a, b = al.box(net, 4, origin=0), al.box(net, 4, origin=2)
    with pytest.raises(ValueError, match="share 2 sites.*negativity needs disjoint regions"):
        al.logarithmic_negativity(net, a, b)
    with pytest.raises(ValueError, match="share 2 sites.*negativity needs disjoint regions"):
        al.entropy(net, a, region_b=b, negativity=True)
    with pytest.raises(ValueError, match="negativity=True needs region_b"):
        al.entropy(net, a, negativity=True)
    with pytest.raises(ValueError, match="must be True or False"):
        al.entropy(net, a, region_b=al.box(net, 2, origin=6), negativity="yes")
    with pytest.raises(ValueError, match="X .* must be blocks of one square shape"):
        partial_transpose_spectrum(np.eye(2), np.eye(2), [True])


def test_method_without_blocks_names_one_that_has_them():
    net = al.hypercubic((6, 6, 6), mass=0.3)
    a, b = al.box(net, 2, origin=(0, 0, 0)), al.box(net, 2, origin=(3, 3, 3))
    with pytest.raises(al.UnsupportedMethodError, match="transverse.*no correlator blocks.*can"):
        al.logarithmic_negativity(net, a, b, method="transverse")


def test_thermal_negativity_against_the_rest_tends_to_the_pure_value():
    # A gapped chain (gap 0.8) at T = 0.02: the Gibbs state differs from the ground state by
    # O(e^{-0.8/T}) ≈ 4e-18, so the partial transpose of the whole (mixed-route) state must give
    # E_N = S_1/2(A) (Vidal & Werner 2002, PRA 65 032314) within the bounds.
    net = al.hypercubic(30, mass=0.8)
    a = al.box(net, 8, origin=6)
    b = al.complement(net, a)
    hot = al.logarithmic_negativity(net, a, b, method="dense", temperature=0.02)
    cold = al.entropy(net, a, renyi=[0.5], method="dense")
    assert hot.route == "partial transpose"
    assert abs(hot.log_negativity - cold.renyi["0.5"]) <= (hot.error_bound
                                                            + cold.renyi_error_bound["0.5"])


def test_thermal_negativity_decreases_and_vanishes():
    # Heating destroys entanglement: E_N falls with T and is exactly 0 once the state is
    # separable at high T (common practice, no source).
    net = al.hypercubic(40, mass=0.3)
    a, b = al.box(net, 5, origin=10), al.box(net, 5, origin=15)
    en = [al.logarithmic_negativity(net, a, b, temperature=t).log_negativity
          for t in (0.0, 0.2, 0.5, 1.0, 5.0)]
    assert all(x > y for x, y in zip(en[:3], en[1:4]))
    assert en[0] > 0.1 and en[-1] == 0.0


@pytest.mark.parametrize("temperature", [0.1, 0.7])
def test_thermal_spectral_agrees_with_dense(temperature):
    net = al.hypercubic((8, 8), mass=0.2)
    a, b = al.box(net, (2, 3), origin=(2, 2)), al.box(net, (2, 3), origin=(4, 2))
    ref = al.logarithmic_negativity(net, a, b, method="dense", temperature=temperature)
    got = al.logarithmic_negativity(net, a, b, method="spectral", temperature=temperature)
    assert ref.log_negativity > 0.01
    assert abs(got.log_negativity - ref.log_negativity) <= got.error_bound + ref.error_bound
    res = al.entropy(net, a, region_b=b, negativity=True, temperature=temperature)
    assert abs(res.log_negativity - ref.log_negativity) <= res.log_negativity_error_bound \
        + ref.error_bound


def test_large_pair_is_refused_before_allocating():
    # memory is estimated from the sizes of A and B before any block is formed
    net = al.hypercubic((400, 400), mass=0.1)
    a, b = al.box(net, (150, 100), origin=(0, 0)), al.box(net, (150, 100), origin=(200, 0))
    with pytest.raises(al.InsufficientMemoryError, match="partial transpose of 30000 sites"):
        al.logarithmic_negativity(net, a, b)
