"""Invariants of the dense reference: purity, ν ≥ ½, relabelling, general kinetic matrices."""

import numpy as np
import pytest
import scipy.linalg
import scipy.sparse as sp
from numpy.testing import assert_allclose

import arealaw as al


def random_spd(rng, n, *, cond=10.0, sparse_pattern=False):
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    lam = np.exp(rng.uniform(0, np.log(cond), n))
    a = (q * lam) @ q.T
    return 0.5 * (a + a.T)


@pytest.mark.parametrize("shape,boundary", [((30,), "dirichlet"), ((6, 7), "periodic"),
                                            ((4, 4, 4), "open")], ids=["1d", "2d", "3d"])
def test_pure_state_symmetry(shape, boundary):
    # A pure global state has S(A) = S(complement of A) for every Rényi order (common practice,
    # no source: Schmidt decomposition).
    net = al.hypercubic(shape, mass=0.3, boundary=boundary)
    rng = np.random.default_rng(1)
    a = al.from_sites(net, rng.choice(net.n_sites, net.n_sites // 3, replace=False))
    b = al.complement(net, a)
    ra, rb = (al.entropy(net, r, renyi=[0.5, 2, "inf"]) for r in (a, b))
    assert_allclose(ra.entropy, rb.entropy, rtol=1e-10)
    for k in ra.renyi:
        # Orders n < 1 weigh near-½ modes like t^n, so rounding-level t matter: the bounds say so.
        tol = ra.renyi_error_bound[k] + rb.renyi_error_bound[k]
        assert abs(ra.renyi[k] - rb.renyi[k]) <= tol
        assert tol < (1e-3 if k == "0.5" else 1e-8)


def test_symplectic_eigenvalues_at_least_half():
    rng = np.random.default_rng(2)
    net = al.hypercubic((8, 8), mass=0.05, coupling_disorder=0.5, seed=3)
    for _ in range(5):
        reg = al.from_sites(net, rng.choice(64, rng.integers(1, 40), replace=False))
        spec = al.entropy(net, reg).spectrum
        assert np.all(spec.nu >= 0.5)
        assert np.all(spec.t >= 0)


def test_relabelling_sites_leaves_entropy_unchanged():
    rng = np.random.default_rng(4)
    net = al.hypercubic((5, 6), mass=0.2, mass_disorder=0.4, seed=7)
    perm = rng.permutation(net.n_sites)
    v = net.potential[perm][:, perm]
    relabelled = al.OscillatorNetwork(v)
    region = al.box(net, (2, 3), origin=(1, 1))
    inverse = np.argsort(perm)  # old site i sits at new position inverse[i]
    moved = al.from_sites(relabelled, inverse[region.indices])
    assert_allclose(al.entropy(net, region).entropy, al.entropy(relabelled, moved).entropy,
                    rtol=1e-11)


def riccati_gamma(v, m):
    """Ground-state width Γ (ψ ∝ exp(−qᵀΓq/2)) from Γ M⁻¹ Γ = V, by the geometric mean
    Γ = M (M⁻¹V)^{1/2} (Schur-based sqrtm: a route independent of the eigendecomposition)."""
    g = m @ scipy.linalg.sqrtm(np.linalg.solve(m, v)).real
    return 0.5 * (g + g.T)


def srednicki_single_site_entropy(gamma, site):
    # Integrate the Gaussian ψ(q) over all other sites (Srednicki 1993, PRL 71, 666): the reduced
    # density matrix of one site is ρ(x, x') ∝ exp(−γ(x² + x'²)/2 + β x x') with
    # β = ½ bᵀ C⁻¹ b, γ = a − β, and ξ = β / (γ + sqrt(γ² − β²)).
    others = [i for i in range(gamma.shape[0]) if i != site]
    a = gamma[site, site]
    b = gamma[others, site]
    c = gamma[np.ix_(others, others)]
    beta = 0.5 * b @ np.linalg.solve(c, b)
    gam = a - beta
    xi = beta / (gam + np.sqrt(gam**2 - beta**2))
    return -np.log(1 - xi) - xi / (1 - xi) * np.log(xi)


@pytest.mark.parametrize("n", [2, 3], ids=["2 oscillators", "3 oscillators"])
def test_general_kinetic_matrix_against_gaussian_integral(n):
    rng = np.random.default_rng(10 + n)
    v = random_spd(rng, n, cond=20)
    m = random_spd(rng, n, cond=5)
    assert np.abs(m - np.diag(np.diag(m))).max() > 0.05  # genuinely non-diagonal M
    gamma = riccati_gamma(v, m)
    assert_allclose(gamma @ np.linalg.solve(m, gamma), v, atol=1e-12)
    net = al.OscillatorNetwork(v, m)
    for site in range(n):
        res = al.entropy(net, al.from_sites(net, [site]))
        assert_allclose(res.entropy, srednicki_single_site_entropy(gamma, site), atol=1e-12)


def test_general_kinetic_matrix_change_of_variables():
    # q = M^{-1/2} y maps H to M = I with V' = M^{-1/2} V M^{-1/2}; entropies of whole-site regions
    # are unchanged only for diagonal M, so check the diagonal case against the mapped network.
    rng = np.random.default_rng(5)
    net0 = al.hypercubic((4, 5), mass=0.4)
    masses = rng.uniform(0.5, 2.0, net0.n_sites)
    net = al.hypercubic((4, 5), mass=0.4, inertia=masses)
    scale = sp.diags(1 / np.sqrt(masses))
    mapped = al.OscillatorNetwork(scale @ net0.potential @ scale)
    region = al.box(net, (2, 2), origin=(1, 1))
    assert_allclose(al.entropy(net, region).entropy,
                    al.entropy(mapped, al.from_sites(mapped, region.indices)).entropy, rtol=1e-11)


def test_correlators_satisfy_ground_state_relations():
    # For the ground state, X P = ¼ I on the whole system (pure state) and P = V X M.
    rng = np.random.default_rng(8)
    v = random_spd(rng, 6, cond=30)
    m = random_spd(rng, 6, cond=4)
    x, p, info = al.correlators.dense_correlators(al.OscillatorNetwork(v, m))
    assert_allclose(x @ p, 0.25 * np.eye(6), atol=1e-12)
    assert_allclose(p, v @ x @ m, atol=1e-12)
    assert info["x_error"] > 0 and info["p_error"] > 0


def test_whole_system_has_zero_entropy():
    net = al.hypercubic((5, 5), mass=0.5)
    res = al.entropy(net, al.from_sites(net, np.arange(25)), renyi=[2])
    assert abs(res.entropy) <= res.error_bound + 1e-12
    assert res.error_bound < 1e-8


def test_error_bound_covers_disagreement_between_inertia_routes():
    # Same physics two ways (diag inertia via kinetic matrix vs. general OscillatorNetwork):
    # each reported bound covers the difference (common practice, no source).
    rng = np.random.default_rng(9)
    masses = rng.uniform(0.5, 2.0, 30)
    a = al.hypercubic(30, mass=0.1, inertia=masses)
    b = al.OscillatorNetwork(a.potential.toarray(), np.diag(masses))
    ra = al.entropy(a, al.box(a, 12, origin=3))
    rb = al.entropy(b, al.from_sites(b, np.arange(3, 15)))
    assert abs(ra.entropy - rb.entropy) <= ra.error_bound + rb.error_bound
