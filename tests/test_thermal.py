"""Gibbs states at temperature T > 0: every backend against the dense reference and physics."""

import math
import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
import scipy.sparse as sp
from numpy.testing import assert_allclose

import arealaw as al
from arealaw import UnsupportedMethodError
from arealaw.correlators import dense_correlators, get_backend, spectral_correlators


def _random_network(n, seed, *, diagonal_m):
    """A random sparse SPD V (chain plus random long bonds) and SPD M (diagonal or banded)."""
    rng = np.random.default_rng(seed)
    off = -rng.uniform(0.2, 1.0, n - 1)
    v = sp.diags([off, off], [-1, 1], shape=(n, n)).tolil()
    for _ in range(n // 2):
        i, j = rng.choice(n, 2, replace=False)
        w = rng.uniform(0.05, 0.3)
        v[i, j] -= w
        v[j, i] -= w
    v = v.tocsr()
    v = v + sp.diags(np.asarray(abs(v).sum(axis=1)).ravel() + rng.uniform(0.1, 0.5, n))
    if diagonal_m:
        m = sp.diags(rng.uniform(0.5, 2.0, n))
    else:
        o = rng.uniform(-0.3, 0.3, n - 1)
        m = sp.diags([o, 1.0 + rng.uniform(0.2, 1.0, n), o], [-1, 0, 1])
    return al.OscillatorNetwork(v.tocsr(), m.tocsr())


def _mode_entropy(omega, t):
    """(n+1) ln(n+1) − n ln n with n = 1/(e^{ω/T} − 1): one thermal oscillator."""
    n = 1.0 / np.expm1(omega / t)
    return (n + 1) * np.log1p(n) - np.where(n > 0, n * np.log(np.where(n > 0, n, 1.0)), 0.0)


def test_zero_temperature_is_the_ground_state_exactly():
    net = al.hypercubic((9, 8), mass=0.3)
    reg = al.box(net, (4, 3))
    for method in ("dense", "spectral", "sparse"):
        g = al.entropy(net, reg, method=method, renyi=[2])
        z = al.entropy(net, reg, method=method, renyi=[2], temperature=0.0)
        assert z.entropy == g.entropy and z.error_bound == g.error_bound
        assert z.renyi == g.renyi and z.temperature == 0.0
    x0, p0, _ = dense_correlators(net)
    xt, pt, _ = dense_correlators(net, temperature=0)
    assert np.array_equal(x0, xt) and np.array_equal(p0, pt)


@pytest.mark.parametrize("diagonal_m", [True, False], ids=["diag-M", "banded-M"])
def test_whole_system_entropy_is_the_sum_of_normal_mode_entropies(diagonal_m):
    # Standard statistical mechanics: the Gibbs state is a product over normal modes, each with
    # S = (n+1) ln(n+1) − n ln n, n the Bose–Einstein occupation (common practice, no source).
    net = _random_network(24, 5, diagonal_m=diagonal_m)
    v, m = net.potential.toarray(), net.kinetic.toarray()
    omega = np.sqrt(scipy.linalg.eigh(v, m, eigvals_only=True))
    whole = al.from_sites(net, np.arange(24))
    for t in (0.1, 0.7, 3.0):
        res = al.entropy(net, whole, method="dense", temperature=t, renyi=[2])
        exact = float(np.sum(_mode_entropy(omega, t)))
        assert abs(res.entropy - exact) <= res.error_bound + 1e-12 * exact
        assert res.error_bound < 1e-8 * max(exact, 1.0)
        # Rényi-2 of a thermal oscillator: ln coth(ω/2T) (common practice, no source)
        exact2 = float(np.sum(np.log(1 / np.tanh(omega / (2 * t)))))
        assert abs(res.renyi["2"] - exact2) <= res.renyi_error_bound["2"] + 1e-12 * exact2


@pytest.mark.parametrize("case", [
    dict(shape=(13,), mass=0.2, boundary="dirichlet"),
    dict(shape=(6, 7), mass=0.1, boundary=("periodic", "open"), coupling=(1.0, 0.5)),
    dict(shape=(5, 4, 6), mass=0.3, boundary=("dirichlet", "periodic", "open"), inertia=0.6),
], ids=["1d", "2d", "3d"])
@pytest.mark.parametrize("t", [0.05, 0.4, 2.5])
def test_spectral_blocks_equal_dense_at_temperature(case, t):
    net = al.hypercubic(**case)
    x, p, info = dense_correlators(net, temperature=t)
    rows = np.arange(0, net.n_sites, 2)
    b = spectral_correlators(net, rows, temperature=t)
    ex = float(np.linalg.norm(b.x - x[np.ix_(rows, rows)], 2))
    ep = float(np.linalg.norm(b.p - p[np.ix_(rows, rows)], 2))
    assert ex <= b.x_error + info["x_error"] and ep <= b.p_error + info["p_error"]
    assert b.x_error < 1e-9 * max(1.0, float(np.abs(x).max()))
    assert b.p_error < 1e-9 * max(1.0, float(np.abs(p).max()))


@pytest.mark.parametrize("diagonal_m,engine", [(True, "multishift"), (True, "amg"),
                                               (False, "amg")])
@pytest.mark.parametrize("t", [0.05, 0.3, 2.0])
def test_sparse_blocks_equal_dense_at_temperature(diagonal_m, engine, t):
    from arealaw.correlators import SparseBackend
    net = _random_network(50, 11, diagonal_m=diagonal_m)
    rows, cols = np.arange(8, 20), np.arange(15, 31)
    b = SparseBackend(engine=engine).blocks(net, rows, cols, tol=1e-10, temperature=t)
    x, p, info = dense_correlators(net, temperature=t)
    ex = float(np.linalg.norm(b.x - x[np.ix_(rows, cols)], 2))
    ep = float(np.linalg.norm(b.p - p[np.ix_(rows, cols)], 2))
    assert ex <= b.x_error + info["x_error"] and ep <= b.p_error + info["p_error"]
    assert b.x_error < 1e-9 and b.p_error < 1e-9
    assert b.info["temperature"] == t


@pytest.mark.parametrize("t", [0.01, 0.1, 1.0, 10.0])
def test_matsubara_rule_bound_holds_and_is_tight(t):
    from arealaw.correlators.sparse._matsubara import matsubara_rule
    rule = matsubara_rule(0.003, 25.0, t, tol=1e-9)
    x = np.geomspace(0.003, 25.0, 3000)
    w = np.sqrt(x)
    exact = (1 + 2 / np.expm1(w / t)) / w
    err = np.abs(rule(x) - exact)
    assert err.max() <= rule.abs_error and np.abs(x * (rule(x) - exact)).max() <= rule.x_abs_error
    assert rule.rel_error <= 1e-9
    assert rule.abs_error <= 1e4 * max(err.max(), 1e-13)   # tight, not just small
    # more poles at lower temperature: the Matsubara spacing 2πT shrinks
    assert rule.n_nodes <= 3 + int(4 / t)


def test_matsubara_rule_refuses_too_many_poles():
    from arealaw.correlators.sparse._matsubara import matsubara_rule
    with pytest.raises(ValueError, match="temperature=1e-05 needs"):
        matsubara_rule(1e-4, 12.0, 1e-5, tol=1e-12, max_nodes=50)


def test_sparse_assess_refuses_too_low_a_temperature_and_auto_goes_elsewhere():
    net = al.hypercubic((12, 12), mass=0.3)
    sparse = get_backend("sparse")
    assert sparse.assess(net, 9, tol=1e-10, temperature=0.1).ok
    a = sparse.assess(net, 9, tol=1e-10, temperature=1e-5)
    assert not a.ok and "too low" in a.reason
    with pytest.raises(UnsupportedMethodError, match="method='dense' can"):
        al.entropy(net, al.box(net, 3), method="sparse", temperature=1e-5)


def test_thermal_entropy_every_backend_within_its_bound():
    net = al.hypercubic((10, 9), mass=0.2)
    reg, reg_b = al.box(net, (3, 3), origin=(1, 1)), al.box(net, (3, 2), origin=(6, 5))
    ref = al.entropy(net, reg, region_b=reg_b, method="dense", temperature=0.3, renyi=[0.5])
    for method in ("spectral", "sparse"):
        r = al.entropy(net, reg, region_b=reg_b, method=method, temperature=0.3, renyi=[0.5])
        assert abs(r.entropy - ref.entropy) <= r.error_bound + ref.error_bound
        assert abs(r.renyi["0.5"] - ref.renyi["0.5"]) <= (r.renyi_error_bound["0.5"]
                                                          + ref.renyi_error_bound["0.5"])
        assert abs(r.mutual_information - ref.mutual_information) <= (
            r.mutual_information_error_bound + ref.mutual_information_error_bound)


def _free_boson_entropy_density(mass, t, dim):
    """s = ∫ d^dk/(2π)^d [(n+1) ln(n+1) − n ln n], ω² = m² + Σ 4 sin²(k_a/2), by quadrature."""
    def integrand(*k):
        omega = math.sqrt(mass ** 2 + sum(4 * math.sin(q / 2) ** 2 for q in k))
        return float(_mode_entropy(np.array([omega]), t)[0])
    if dim == 1:
        val, _ = scipy.integrate.quad(integrand, -math.pi, math.pi, epsabs=1e-13, epsrel=1e-12)
    else:
        val, _ = scipy.integrate.dblquad(lambda a, b: integrand(a, b), -math.pi, math.pi,
                                         -math.pi, math.pi, epsabs=1e-11, epsrel=1e-10)
    return val / (2 * math.pi) ** dim


def test_large_region_approaches_the_free_boson_entropy_density():
    # Extensive thermal entropy (standard statistical mechanics, common practice, no source):
    # S(ℓ) = s ℓ + 2 b + O(e^{−ℓ/ξ}) on an infinite chain, so the increment S(2ℓ) − S(ℓ) over ℓ
    # tends to the lattice free-boson density s(T) of the dispersion ω² = m² + 4 sin²(k/2).
    net = al.hypercubic("inf", mass=0.05)
    t = 0.5
    s = _free_boson_entropy_density(0.05, t, 1)
    res = [al.entropy(net, al.box(net, ell, origin=0), method="spectral", temperature=t)
           for ell in (40, 80)]
    slope = (res[1].entropy - res[0].entropy) / 40
    assert abs(slope - s) < 1e-6 * s
    assert res[1].error_bound < 1e-6


@pytest.mark.slow
def test_large_square_approaches_the_free_boson_entropy_density_in_2d():
    # S(L×L) = s L² + b L + c + O(e^{−L/ξ}) on the infinite square lattice (extensive thermal
    # entropy, edge and corner terms; common practice, no source): the second difference in L
    # isolates s(T) of ω² = m² + 4 sin²(k_x/2) + 4 sin²(k_y/2).
    net = al.hypercubic(("inf", "inf"), mass=0.2)
    t = 0.3
    s = _free_boson_entropy_density(0.2, t, 2)
    res = [al.entropy(net, al.box(net, (ell, ell), origin=(0, 0)), method="spectral",
                      temperature=t) for ell in (12, 16, 20)]
    second = (res[2].entropy - 2 * res[1].entropy + res[0].entropy) / (2 * 16)
    assert abs(second - s) < 1e-5 * s
    assert max(r.error_bound for r in res) < 1e-7


def test_mutual_information_of_distant_regions_decays():
    # At T > 0 with a mass, correlations decay exponentially with the distance, so I(A:B) must
    # fall steadily with the separation (common practice, no source).
    net = al.hypercubic("inf", mass=0.3)
    a = al.box(net, 6, origin=0)
    mis = []
    for gap in (2, 6, 12, 24):
        r = al.entropy(net, a, region_b=al.box(net, 6, origin=6 + gap), method="spectral",
                       temperature=1.0)
        assert r.mutual_information_error_bound < 1e-9
        mis.append(r.mutual_information)
    assert all(x > y for x, y in zip(mis, mis[1:]))
    assert mis[-1] < 1e-5 * mis[0]


@pytest.mark.parametrize("bad", [-0.1, math.inf, math.nan, "hot", True])
def test_bad_temperature_is_refused(bad):
    net = al.hypercubic(8, mass=0.5)
    with pytest.raises(ValueError, match="temperature"):
        al.entropy(net, al.box(net, 3), temperature=bad)


def test_ground_state_only_methods_refuse_and_name_one_that_can():
    rad = al.radial_lattice(20, dim=3, mass=0.1)
    with pytest.raises(UnsupportedMethodError, match="method='spectral'"):
        al.entropy(rad, al.shells(rad, 4), method="radial", temperature=0.2)
    net = al.hypercubic(("inf", 6), mass=0.3, boundary=("dirichlet", "periodic"))
    with pytest.raises(UnsupportedMethodError, match="infinite entropy at temperature"):
        al.entropy(net, al.half_space(net, 0, 0), method="transverse", temperature=0.2)


@pytest.mark.parametrize("t", [0.2, 1.0])
def test_transverse_slabs_at_temperature_equal_dense_and_converge_per_area(t):
    # H = Σ_k H_k: the Gibbs state factorises over transverse momenta (exact on the lattice)
    net = al.hypercubic((8, 10), mass=0.3, boundary=("dirichlet", "periodic"))
    reg = al.slab(net, 0, 2, 5)
    a = al.entropy(net, reg, method="transverse", temperature=t, renyi=[2])
    d = al.entropy(net, reg, method="dense", temperature=t, renyi=[2])
    assert a.method == "transverse"
    assert abs(a.entropy - d.entropy) <= a.error_bound + d.error_bound
    assert abs(a.renyi["2"] - d.renyi["2"]) <= a.renyi_error_bound["2"] + d.renyi_error_bound["2"]
    # an infinite transverse axis gives the entropy per unit area: the limit of S/L
    inf = al.hypercubic((8, "inf"), mass=0.3, boundary=("dirichlet", "periodic"))
    per_area = al.entropy(inf, al.slab(inf, 0, 2, 5), method="transverse", temperature=t)
    big = al.hypercubic((8, 80), mass=0.3, boundary=("dirichlet", "periodic"))
    s80 = al.entropy(big, al.slab(big, 0, 2, 5), method="transverse", temperature=t).entropy
    assert abs(per_area.entropy_per_area - s80 / 80) < 1e-8 + per_area.error_bound


def test_auto_never_uses_the_restricted_solver_at_temperature():
    from arealaw.methods._registry import restricted_plan
    net = al.hypercubic((40, 40, 40), mass=0.1)
    idx = al.ball(net, 14).indices
    assert restricted_plan(net, idx, 1e-10) is not None
    assert restricted_plan(net, idx, 1e-10, temperature=0.1) is None


def test_cli_temperature_is_echoed_and_bad_values_exit_2(capsys):
    import json
    from arealaw.cli import main
    code = main(["entropy", "--shape", "12", "--mass", "0.4", "--box", "5", "--temperature",
                 "0.3", "--json"])
    d = json.loads(capsys.readouterr().out)
    net = al.hypercubic(12, mass=0.4)
    ref = al.entropy(net, al.box(net, 5), temperature=0.3)
    assert code == 0 and d["temperature"] == 0.3
    assert abs(d["entropy"] - ref.entropy) <= ref.error_bound
    for bad in ("-1", "nan", "inf"):
        code = main(["entropy", "--shape", "12", "--box", "5", "--temperature", bad])
        err = capsys.readouterr().err
        assert code == 2 and err.count("\n") == 1 and "temperature" in err
    code = main(["entropy", "--radial", "20", "--shells", "4", "--temperature", "0.2"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "temperature" in err


def test_scenario_sweeps_temperature_and_keeps_ground_state_keys():
    from arealaw.workflow._scenario import parse_scenario
    from arealaw.workflow._sweep import compute_case
    text = "[lattices.chain]\nshape = [16]\nmass = 0.4\n[[family]]\nbox = 4\n"
    plain = parse_scenario(text).cases
    swept = parse_scenario(text + "temperature = {values = [0, 0.2, 0.6]}\n").cases
    assert [c.temperature for c in swept] == [0.0, 0.2, 0.6]
    assert swept[0].key == plain[0].key            # T = 0 is the ground-state case
    assert len({c.key for c in swept}) == 3 and "temperature=0.2" in swept[1].label
    fixed = parse_scenario("[numerics]\ntemperature = 0.2\n" + text).cases
    assert fixed[0].key == swept[1].key
    net = al.hypercubic(16, mass=0.4)
    out = compute_case(swept[2])
    ref = al.entropy(net, al.box(net, 4), temperature=0.6)
    assert out["temperature"] == 0.6 and abs(out["entropy"] - ref.entropy) <= ref.error_bound


def test_large_regions_at_temperature_are_refused_with_a_memory_estimate():
    from arealaw.methods._registry import choose_method
    net = al.hypercubic((100, 100, 100), mass=0.0)
    reg = al.ball(net, 30, center=(40, 45, 50))            # 113 081 sites, no mirror symmetry
    from arealaw.methods._registry import _METHODS
    # at T = 0 the restricted solver serves it (auto takes it where its memory estimate fits)
    assert _METHODS["spectral"].assess(net, [reg], tol=1e-10).ok
    with pytest.raises(UnsupportedMethodError,
                       match=r"dense eigenproblem of 113081 sites needs .*GiB \(the restricted"):
        choose_method(net, [reg], "auto", tol=1e-10, temperature=0.1)


def test_fft_operators_at_temperature_equal_the_gathered_blocks():
    from arealaw.correlators import SpectralBackend
    net = al.hypercubic((12, 10, 9), mass=0.2, boundary=("dirichlet", "periodic", "open"),
                        inertia=1.7)
    idx = al.ball(net, 3, center=(4, 4, 4)).indices
    ops = SpectralBackend(operators="fft").operators(net, idx, tol=1e-12, temperature=0.3)
    x, p, info = dense_correlators(net, temperature=0.3)
    v = np.random.default_rng(2).standard_normal((idx.size, 3))
    ix = np.ix_(idx, idx)
    vn = np.linalg.norm(v, axis=0)       # ‖(A − B) v‖₂ ≤ ‖A − B‖₂ ‖v‖₂ per column
    assert np.all(np.linalg.norm(ops.x.matmat(v) - x[ix] @ v, axis=0)
                  <= (ops.x_error + info["x_error"]) * vn)
    assert np.all(np.linalg.norm(ops.p.matmat(v) - p[ix] @ v, axis=0)
                  <= (ops.p_error + info["p_error"]) * vn)
    exact_trace = float(np.sum(x[ix] * p[ix]) - idx.size / 4)
    assert abs(ops.trace[0] - exact_trace) <= ops.trace[1] + 1e-9 * abs(exact_trace)


def test_negativity_of_a_gibbs_state_uses_the_partial_transpose():
    # At T > 0 the state of A ∪ Ā is mixed: E_N is not the Rényi-½ entropy of A, and it falls
    # as the temperature rises (thermal noise washes out entanglement; common practice, no
    # source).
    net = al.hypercubic(16, mass=0.3)
    a, b = al.box(net, 8, origin=0), al.box(net, 8, origin=8)
    cold = al.entropy(net, a, region_b=b, negativity=True, method="dense")
    warm = al.entropy(net, a, region_b=b, negativity=True, method="dense", temperature=0.3)
    assert cold.info["log_negativity_route"].startswith("pure")
    assert warm.info["log_negativity_route"] == "partial transpose"
    assert warm.mutual_information > 0 and warm.entropy_ab > 1.0
    assert 0 <= warm.log_negativity + warm.log_negativity_error_bound
    assert warm.log_negativity < cold.log_negativity - cold.log_negativity_error_bound
