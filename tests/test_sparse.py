"""The general sparse backend (contour quadrature + shifted solves) against the dense reference."""

import math

import numpy as np
import pytest
import scipy.sparse as sp
from numpy.testing import assert_allclose

from arealaw import (ConvergenceError, OscillatorNetwork, ball, box, entropy,
                     entropy_error_bound, from_sites, hypercubic, symplectic_spectrum,
                     von_neumann_entropy)
from arealaw.correlators import (IllConditionedWarning, SparseBackend, dense_correlators,
                                 get_backend)
from arealaw.correlators.sparse._contour import hht_error_estimate, hht_node_count, inverse_sqrt_rule
from arealaw.correlators.sparse._kernels import (UNREACHED, compact_columns, csr_block_product,
                                                 direction_update, hop_distance, merge_rows,
                                                 residual_update, rows_by_level)
from arealaw.correlators.sparse._shifted import amg_shifted_cg, multishift_cg


def _general_mass(n, seed):
    """A non-diagonal sparse SPD kinetic matrix: diagonally dominant, random symmetric pattern."""
    rng = np.random.default_rng(seed)
    i = rng.integers(0, n, 3 * n)
    j = rng.integers(0, n, 3 * n)
    off = sp.coo_matrix((-0.1 * rng.random(3 * n), (i, j)), shape=(n, n)).tocsr()
    off = off + off.T
    off.setdiag(0)
    off.eliminate_zeros()
    dom = np.asarray(abs(off).sum(axis=1)).ravel()
    return (off + sp.diags(0.5 + dom + rng.random(n))).tocsr()


def _lattice_cases():
    yield "1d-dirichlet-massless", hypercubic(60)
    yield "1d-periodic-mass-disorder", hypercubic(48, mass=0.2, mass_disorder=0.5,
                                                  boundary="periodic", seed=3)
    yield "2d-open-coupling-disorder", hypercubic((12, 10), mass=0.3, boundary="open",
                                                  coupling_disorder=0.6, seed=4)
    yield "2d-mixed-inertia", hypercubic((10, 9), mass=0.4, boundary=("dirichlet", "periodic"),
                                         inertia=np.linspace(0.5, 2.0, 90))
    yield "3d-dirichlet-disorder", hypercubic((7, 6, 6), mass=0.2, mass_disorder=0.5,
                                              coupling_disorder=0.3, seed=5)
    net = hypercubic((9, 9), mass=0.3, mass_disorder=0.4, boundary="periodic", seed=6)
    yield "2d-general-M", OscillatorNetwork(net.potential, _general_mass(81, 7),
                                            lattice=None, coords=net.coords())


CASES = list(_lattice_cases())


def _region(net, seed):
    rng = np.random.default_rng(seed)
    return np.sort(rng.choice(net.n_sites, size=min(25, net.n_sites // 3), replace=False))


ENGINE_CASES = [(name, net, eng) for name, net in CASES for eng in ("multishift", "amg")
                if not (eng == "multishift" and name.endswith("general-M"))]


@pytest.mark.parametrize("name,net,engine", ENGINE_CASES,
                         ids=[f"{c[0]}-{c[2]}" for c in ENGINE_CASES])
def test_blocks_match_dense_and_bounds_are_honest(name, net, engine):
    rows = _region(net, 1)
    x, p, _ = dense_correlators(net)
    b = SparseBackend(engine=engine).blocks(net, rows, tol=1e-10)
    ex = np.linalg.norm(b.x - x[np.ix_(rows, rows)], 2)
    ep = np.linalg.norm(b.p - p[np.ix_(rows, rows)], 2)
    assert ex <= 1e-10 and ep <= 1e-10
    assert ex <= b.x_error and ep <= b.p_error
    assert b.x_error < 1e-7 and b.p_error < 1e-6
    assert b.info["engine"] == engine


def test_multishift_refuses_general_mass():
    name, net = CASES[-1]
    with pytest.raises(ValueError, match="diagonal kinetic"):
        SparseBackend(engine="multishift").blocks(net, [0, 1], tol=1e-8)


def test_cross_blocks_rows_differ_from_cols():
    net = hypercubic((8, 8), mass=0.3, mass_disorder=0.5, seed=2)
    x, p, _ = dense_correlators(net)
    rows, cols = np.array([3, 4, 5, 11]), np.array([40, 41, 50])
    b = SparseBackend().blocks(net, rows, cols, tol=1e-10)
    assert_allclose(b.x, x[np.ix_(rows, cols)], atol=1e-10)
    assert_allclose(b.p, p[np.ix_(rows, cols)], atol=1e-10)


@pytest.mark.parametrize("name,net", CASES[2:], ids=[c[0] for c in CASES[2:]])
def test_entropy_matches_dense(name, net):
    region = np.sort(np.random.default_rng(9).choice(net.n_sites, 20, replace=False))
    reg = from_sites(net, region)
    ref = entropy(net, reg, method="dense", renyi=(2,))
    res = entropy(net, reg, method="sparse", renyi=(2,))
    assert abs(res.entropy - ref.entropy) <= 1e-9
    assert abs(res.entropy - ref.entropy) <= res.error_bound
    assert abs(res.renyi["2"] - ref.renyi["2"]) <= 1e-9


def test_entropy_3d_ball_matches_dense():
    net = hypercubic((9, 9, 9), mass=0.25, mass_disorder=0.5, seed=11)
    reg = ball(net, 2.5)
    ref = entropy(net, reg, method="dense")
    res = entropy(net, reg, method="sparse")
    assert abs(res.entropy - ref.entropy) <= 1e-9
    assert abs(res.entropy - ref.entropy) <= res.error_bound


def test_whole_network_region_has_no_complement():
    net = hypercubic((5, 4), mass=0.5, mass_disorder=0.3, seed=1)
    x, p, _ = dense_correlators(net)
    rows = np.arange(net.n_sites)
    b = SparseBackend().blocks(net, rows, tol=1e-10)
    assert_allclose(b.x, x, atol=1e-10)
    assert_allclose(b.p, p, atol=1e-10)


@pytest.mark.parametrize("engine", ["multishift", "amg"], ids=["multishift", "amg"])
def test_tiny_maxiter_raises_convergence_error(engine):
    net = hypercubic((30, 30), mass=0.1)
    with pytest.raises(ConvergenceError, match="residual") as exc:
        SparseBackend(engine=engine, maxiter=2).blocks(net, box(net, (4, 4)).indices, tol=1e-10)
    assert exc.value.residual > 1e-10 and 1 <= exc.value.iterations <= 2


def test_indefinite_user_matrix_small():
    v = sp.diags([np.full(49, -1.0), np.full(50, 1.5), np.full(49, -1.0)], [-1, 0, 1])
    net = OscillatorNetwork(v, check=False)
    with pytest.raises(ValueError, match="not positive definite"):
        SparseBackend().blocks(net, [10, 11], tol=1e-8)


def test_indefinite_user_matrix_large_uses_iterative_check():
    n = 2500  # above the dense-interval limit: LOBPCG finds the negative eigenvalue
    v = sp.diags([np.full(n - 1, -1.0), np.full(n, 1.9), np.full(n - 1, -1.0)], [-1, 0, 1])
    net = OscillatorNetwork(v, check=False)
    with pytest.raises(ValueError, match="not positive definite"):
        SparseBackend().blocks(net, [10, 11], tol=1e-8)


def test_ill_conditioned_warns_with_condition_and_poles():
    net = hypercubic(40, mass=1e-4, boundary="periodic")
    rows = np.array([0, 1, 2])
    with pytest.warns(IllConditionedWarning, match=r"condition number .* poles"):
        b = SparseBackend().blocks(net, rows, tol=1e-8)
    assert b.info["condition_number"] > 1e8
    x, p, _ = dense_correlators(net)
    assert np.linalg.norm(b.x - x[np.ix_(rows, rows)], 2) <= b.x_error
    assert np.linalg.norm(b.p - p[np.ix_(rows, rows)], 2) <= b.p_error
    assert_allclose(b.x, x[np.ix_(rows, rows)], rtol=1e-6)


def test_assess_and_registry():
    be = get_backend("sparse")
    assert isinstance(be, SparseBackend)
    net = hypercubic((20, 20), mass=0.2, mass_disorder=0.5, seed=1)
    a = be.assess(net, 30, tol=1e-10)
    assert a.ok and a.seconds > 0 and a.bytes > 0
    assert not be.assess(hypercubic(("inf", 4), mass=1.0), 10, tol=1e-10).ok


def test_reported_interval_contains_spectrum():
    net = hypercubic((9, 8), mass=0.3, mass_disorder=0.5, boundary="open", seed=8)
    b = SparseBackend().blocks(net, [5, 6], tol=1e-8)
    lam = np.linalg.eigvalsh(net.potential.toarray())
    lo, hi = b.info["spectral_interval"]
    assert lo <= lam[0] and hi >= lam[-1] and lo > 0


# -- the quadrature rule ------------------------------------------------------------------------

@pytest.mark.parametrize("kappa,tol,nodes", [(1e4, 1e-8, 13), (1e4, 1e-12, 18), (1e8, 1e-8, 22),
                                             (1e8, 1e-12, 32)],
                         ids=["k1e4-t1e-8", "k1e4-t1e-12", "k1e8-t1e-8", "k1e8-t1e-12"])
def test_node_count_matches_hht(kappa, tol, nodes):
    # Hale, Higham & Trefethen 2008, SIAM J. Numer. Anal. 46, 2505: error ≈ 4 exp(−2π²N/ln 16κ);
    # node counts as listed in REFERENCES.md entry 7.
    assert hht_node_count(kappa, tol) == nodes
    rule = inverse_sqrt_rule(1.0, kappa, tol=tol)
    assert rule.n_nodes == nodes
    assert rule.rel_error <= tol
    # the measured error follows the HHT estimate within a factor 2
    assert 0.5 <= rule.rel_error / hht_error_estimate(nodes, kappa) <= 2.0


def test_rule_is_accurate_at_random_points_with_positive_poles():
    rng = np.random.default_rng(0)
    rule = inverse_sqrt_rule(0.01, 50.0, tol=1e-11)
    x = np.exp(rng.uniform(math.log(0.01), math.log(50.0), 500))
    assert np.all(rule.shifts > 0) and np.all(rule.weights > 0)
    assert np.max(np.abs(rule(x) * np.sqrt(x) - 1)) <= rule.rel_error <= 1e-11
    assert np.max(np.abs(rule(x) - x ** -0.5)) <= rule.abs_error


def test_rule_rejects_bad_interval():
    with pytest.raises(ValueError, match="spectral interval"):
        inverse_sqrt_rule(0.0, 1.0, tol=1e-8)


# -- the shifted solvers ------------------------------------------------------------------------

def test_shifted_solvers_match_direct_solves():
    net = hypercubic((10, 10), mass=0.3, mass_disorder=0.5, seed=1)
    a = net.potential
    rng = np.random.default_rng(0)
    f = rng.standard_normal((a.shape[0], 4))
    shifts = np.array([0.02, 0.5, 7.0, 300.0])
    keep = np.arange(0, a.shape[0], 5)
    dense = a.toarray()
    z1, r1, _ = multishift_cg(a, f, shifts, keep, rtol=1e-12, maxiter=500)
    z2, r2, _ = amg_shifted_cg(a, None, shifts, lambda s: f, keep, rtol=1e-12, maxiter=500)
    for j, s in enumerate(shifts):
        exact = np.linalg.solve(dense + s * np.eye(a.shape[0]), f)[keep]
        assert_allclose(z1[j], exact, atol=1e-10)
        assert_allclose(z2[j], exact, atol=1e-10)
    assert np.all(r1 <= 1e-12 * np.linalg.norm(f, axis=0) * 1.0001)
    assert np.all(r2 <= 1.5e-12 * np.linalg.norm(f, axis=0))


@pytest.mark.parametrize("index_dtype", [np.int32, np.int64])
def test_fused_kernels_match_numpy(index_dtype):
    # The fused CG passes against the numpy expressions they replace (any CSR, not only SPD).
    rng = np.random.default_rng(3)
    a = sp.random(300, 300, density=0.03, random_state=4, format="csr") + sp.identity(300)
    a.indices = a.indices.astype(index_dtype)
    a.indptr = a.indptr.astype(index_dtype)
    p, r = rng.standard_normal((2, 300, 7))
    alpha, beta = rng.random((2, 7))
    out, pap, rr = np.empty((300, 7)), np.empty(7), np.empty(7)
    every = np.arange(300)
    csr_block_product(a.indptr, a.indices, a.data, p, out, pap, every)
    assert_allclose(out, a @ p, rtol=1e-13, atol=1e-13)
    assert_allclose(pap, np.einsum("ij,ij->j", p, a @ p), rtol=1e-12)
    r_new = r - alpha * out
    residual_update(r, out, alpha, rr, every)
    assert_allclose(r, r_new, rtol=1e-13, atol=1e-13)
    assert_allclose(rr, (r_new ** 2).sum(axis=0), rtol=1e-12)
    p_new = r + beta * p
    direction_update(p, r, beta, every)
    assert_allclose(p, p_new, rtol=1e-13, atol=1e-13)
    p[5, 2] = np.nan  # a NaN must reach the caller (no finite-math assumption in the kernels)
    csr_block_product(a.indptr, a.indices, a.data, p, out, pap, every)
    assert np.isnan(pap[2]) and np.isfinite(np.delete(pap, 2)).all()


def test_hop_distance_matches_breadth_first_search():
    # Independent route: scipy's unweighted shortest paths from each source, minimised.
    from scipy.sparse.csgraph import shortest_path
    net = hypercubic((9, 7), mass=0.4, boundary=("dirichlet", "periodic"))
    v = net.potential.tocsr()
    pattern = sp.block_diag([v, sp.identity(5)]).tocsr()  # plus 5 sites nothing reaches
    sources = np.array([3, 40, 41])
    hops = hop_distance(pattern.indptr, pattern.indices, sources)
    paths = shortest_path(abs(pattern), unweighted=True, indices=sources).min(axis=0)
    reached = np.isfinite(paths)
    assert np.array_equal(hops[reached], paths[reached].astype(int))
    assert np.all(hops[~reached] == UNREACHED) and (~reached).sum() == 5


def test_light_cone_rows_change_no_number():
    # multishift_cg works on the rows within k hops of the right-hand sides after k products.
    # Against the same run with every row active from the start (a third column supported
    # everywhere, by a 1e-300 floor) and against dense solves.
    net = hypercubic((30, 30), mass=0.2, mass_disorder=0.5, seed=3)
    a = net.potential.tocsr()
    f = np.zeros((a.shape[0], 3))
    f[[0, 31, 465], [0, 1, 2]] = 1.0
    keep = np.array([0, 31, 465, 899])
    shifts = np.array([0.0, 0.5, 4.0])
    z, resid, iters = multishift_cg(a, f, shifts, keep, rtol=1e-12, maxiter=500)
    f_full = f.copy()
    f_full[:, 2] += 1e-300  # a column supported everywhere: every row active from the start
    z_full, _, _ = multishift_cg(a, f_full, shifts, keep, rtol=1e-12, maxiter=500)
    assert np.array_equal(z[:, :, :2], z_full[:, :, :2])  # same operations, bit for bit
    f_used = f.copy()
    z_in_place, _, _ = multishift_cg(a, f_used, shifts, keep, rtol=1e-12, maxiter=500,
                                     overwrite_rhs=True)
    assert np.array_equal(z_in_place, z) and not np.array_equal(f_used, f)
    dense = a.toarray()
    for j, s in enumerate(shifts):
        exact = np.linalg.solve(dense + s * np.eye(a.shape[0]), f)[keep]
        assert_allclose(z[j], exact, atol=1e-10)


def test_column_compaction_in_place_matches_numpy():
    # multishift_cg drops finished columns by moving the others to the front of the same
    # storage; against numpy's column selection (a copy), on blocks that vanish beyond a light
    # cone (random hop distances, some rows unreached) and with every count of kept columns.
    rng = np.random.default_rng(7)
    n, b = 41, 6
    for level in (0, 2, 5):
        hops = rng.integers(0, 8, n).astype(np.int32)
        hops[::9] = UNREACHED
        block = rng.standard_normal((n, b))
        block[hops > level] = 0.0
        for m in range(1, b + 1):
            kept = np.sort(rng.choice(b, m, replace=False))
            flat = block.copy().reshape(-1)
            compact_columns(flat, n, b, kept, hops, level)
            assert np.array_equal(flat[:n * m].reshape(n, m), block[:, kept])
    order, start = rows_by_level(hops)
    assert start.size - 2 == hops[hops != UNREACHED].max()
    rows, out = order[start[0]:start[1]], np.empty(n, dtype=np.int64)
    for level in range(1, start.size - 1):  # the step-by-step merges of multishift_cg
        assert np.array_equal(order[start[level]:start[level + 1]],
                              np.flatnonzero(hops == level))
        rows = out[:merge_rows(rows, order[start[level]:start[level + 1]], out)].copy()
        assert np.array_equal(rows, np.flatnonzero(hops <= level))


def test_columns_finishing_apart_keep_their_numbers():
    # A column on a site that nothing couples to converges in one iteration and is dropped
    # while two columns on the lattice run on inside their light cones (in-place compaction of
    # r and p): each column's numbers are those of its own run, up to rounding, and the dense
    # solves'.
    lattice = hypercubic((30, 30), mass=0.2, mass_disorder=0.5, seed=3).potential
    a = sp.block_diag([lattice, sp.identity(1) * 2.0]).tocsr()
    n = a.shape[0]
    f = np.zeros((n, 3))
    f[n - 1, 0] = 1.0
    f[31, 1] = 1.0
    f[[465, 466], 2] = [1.0, -2.0]
    keep = np.array([0, 31, 465, n - 1])
    shifts = np.array([0.0, 0.7, 5.0])
    z, resid, iters = multishift_cg(a, f, shifts, keep, rtol=1e-12, maxiter=500)
    for c in range(3):
        alone, _, _ = multishift_cg(a, f[:, [c]], shifts, keep, rtol=1e-12, maxiter=500)
        assert_allclose(z[:, :, c], alone[:, :, 0], rtol=1e-13, atol=1e-15)
    dense = a.toarray()
    for j, s in enumerate(shifts):
        exact = np.linalg.solve(dense + s * np.eye(n), f)[keep]
        assert_allclose(z[j], exact, atol=1e-10)


def test_uniform_lattice_agrees_with_spectral_backend():
    # Independent check: the exact spectral backend of uniform boxes (dense is too slow here).
    net = hypercubic((16, 16, 16), mass=0.1, boundary=("dirichlet", "periodic", "dirichlet"))
    rows = ball(net, 3.0).indices
    bs = get_backend("spectral").blocks(net, rows, tol=1e-12)
    bp = SparseBackend().blocks(net, rows, tol=1e-10)
    dx = np.linalg.norm(bs.x - bp.x, 2)
    dp = np.linalg.norm(bs.p - bp.p, 2)
    assert dx <= 1e-10 and dp <= 1e-10
    assert dx <= bs.x_error + bp.x_error and dp <= bs.p_error + bp.p_error


@pytest.mark.parametrize("kw", [
    {"mass": 0.3, "mass_disorder": 0.5, "seed": 1},
    {"mass": 0.3, "coupling_disorder": 0.6, "seed": 2, "boundary": ("dirichlet", "periodic")},
    {"mass": 0.2, "mass_disorder": 0.4, "coupling_disorder": 0.3, "seed": 3,
     "inertia": np.linspace(1, 2, 42)},
], ids=["mass", "coupling", "both-inertia"])
def test_deferred_disordered_lattice_equals_the_assembled_one(kw, monkeypatch):
    """Above the deferral threshold a disordered lattice draws at assembly: the same V, M, and an
    assessment from the description alone (pencil bounds) that does not assemble it."""
    import arealaw.network._lattices as lattices
    eager = hypercubic((7, 6), **kw)
    monkeypatch.setattr(lattices, "DEFERRED_ASSEMBLY_SITES", 10)
    lazy = hypercubic((7, 6), **kw)
    assert lazy.is_deferred
    a = SparseBackend().assess(lazy, 4, tol=1e-10)
    assert a.ok and lazy.is_deferred
    lo, hi = lazy.lattice.pencil_bounds()
    v = lazy.potential.toarray()
    m = np.eye(42) if lazy.kinetic is None else lazy.kinetic.toarray()
    assert_allclose(v, eager.potential.toarray(), rtol=0, atol=0)
    w = np.linalg.eigvalsh(np.linalg.solve(np.linalg.cholesky(m), v)
                           @ np.linalg.inv(np.linalg.cholesky(m)).T)
    # the description's bounds contain the spectrum of M^-1 V (rounding allowance 1e-12)
    assert lo <= w[0] * (1 + 1e-12) and w[-1] <= hi * (1 + 1e-12)


def test_huge_disordered_lattice_is_refused_without_assembly():
    """10^9 sites with disorder: refused from shape and options (V, masses never drawn)."""
    from arealaw import UnsupportedMethodError
    net = hypercubic((1000, 1000, 1000), mass=0.3, mass_disorder=0.5, seed=1)
    assert net.is_deferred
    with pytest.raises(UnsupportedMethodError, match="sparse: needs about .*GiB for 1000000000"):
        entropy(net, box(net, 3))
    assert net.is_deferred


def _near_massless(shape):
    # lowest eigenvalue ~m² = 1e-4 (masses m(1 + u), couplings J(1 + 0.5u')): κ ~ 1e5
    return hypercubic(shape, mass=0.01, mass_disorder=0.01, coupling_disorder=0.5, seed=8,
                      boundary="periodic")


def test_engines_agree_on_near_massless_disorder_within_bounds():
    # both engines against dense (exact interval: 512 sites) and each other, at κ ~ 1e5:
    # |ΔS| within the sum of the bounds (common practice, no source)
    net = _near_massless((8, 8, 8))
    region = ball(net, 2.0)
    ref = entropy(net, region, method="dense")
    got = {}
    for engine in ("multishift", "amg"):
        b = SparseBackend(engine=engine).blocks(net, region.indices, tol=1e-10)
        assert b.info["engine"] == engine and b.info["condition_number"] > 1e4
        spec = symplectic_spectrum(b.x, b.p, x_error=b.x_error, p_error=b.p_error)
        got[engine] = (von_neumann_entropy(spec), entropy_error_bound(spec))
        s, bound = got[engine]
        assert abs(s - ref.entropy) <= bound + ref.error_bound
        assert abs(s - ref.entropy) <= 1e-8
    (s1, e1), (s2, e2) = got["multishift"], got["amg"]
    assert abs(s1 - s2) <= e1 + e2


def test_auto_engine_follows_the_measured_costs():
    # benchmarks/bench_engines.py: in 3-D at these sizes multishift CG wins at every mass
    # (30-125x at 24³, m = 0.3 ... 0.01); the estimates agree, and auto takes the cheaper
    backend = SparseBackend()
    net = hypercubic((16, 16, 16), mass=0.01, mass_disorder=0.5, seed=1)
    est = backend.engine_estimates(net, 100, tol=1e-10)
    assert est["multishift"] < est["amg"]
    rows = ball(net, 2.0).indices
    assert backend.blocks(net, rows, tol=1e-10).info["engine"] == "multishift"
    assert "multishift engine" in backend.assess(net, rows.size, tol=1e-10).reason
    # a near-massless disordered chain of 20 000 sites: AMG-CG measured 6x faster (6.2 s against
    # 38.5 s, bench_engines.py chain-20000-m0.001); multishift needs ~18 000 iterations there
    chain = hypercubic((20000,), mass=0.001, mass_disorder=0.001, coupling_disorder=0.5, seed=1,
                       boundary="periodic")
    est = backend.engine_estimates(chain, 50, tol=1e-10)
    assert est["amg"] < est["multishift"]
    assert "amg engine" in backend.assess(chain, 50, tol=1e-10).reason
    # a general (non-diagonal) M has only the AMG engine
    name, gnet = CASES[-1]
    assert set(backend.engine_estimates(gnet, 10, tol=1e-10)) == {"amg"}


def test_block_plan_counts_the_matrices_and_refuses_up_front(monkeypatch):
    # a 215³ lattice (10^7 sites, 7e7 nonzeros, ~354 boundary columns of a ball r = 6): the
    # blocks get what the matrices leave of half the available memory; one worker, then
    # single columns, and then a refusal from the description alone (nothing assembled)
    from arealaw import _numerics
    from arealaw.correlators.sparse import _plan
    n, nnz, cols = 215 ** 3, 7 * 215 ** 3, 354
    for avail in (16e9, 64e9):
        monkeypatch.setattr(_plan, "available_bytes", lambda a=avail: a)
        sizes, jobs, peak = _plan.block_plan(n, cols, nnz, block_size=32, n_jobs=2)
        bs = max(sizes)
        assert sum(sizes) == cols and jobs == 2 and 1 <= bs <= 32 and peak <= _plan.BLOCK_MEMORY_SHARE * avail
        assert peak >= 3 * _plan.BYTES_PER_NONZERO * nnz + _plan.BYTES_PER_ENTRY * n * bs * 2
    monkeypatch.setattr(_plan, "available_bytes", lambda: 4e9)
    sizes, jobs, peak = _plan.block_plan(n, cols, nnz, block_size=32, n_jobs=2)
    assert (max(sizes), jobs) == (1, 1) and peak > 2e9
    _, jobs, _ = _plan.block_plan(n, cols, nnz, block_size=32, n_jobs=2, may_reduce=False)
    assert jobs == 2  # a count the caller asked for is kept (and refused if it does not fit)
    monkeypatch.setattr(_numerics, "available_bytes", lambda: 4e9)
    net = hypercubic((215, 215, 215), mass=0.3, mass_disorder=0.5, seed=1)
    verdict = SparseBackend().assess(net, 925, tol=1e-10)
    assert not verdict.ok and "needs about" in verdict.reason and "right-hand sides" in verdict.reason
    assert net.is_deferred


def test_block_sizes_cover_the_columns_within_the_cap():
    # every column once, no block above the cap, whole SIMD lanes when the blocks are large
    from arealaw.correlators.sparse._plan import LANES, block_sizes
    for n_rhs in range(1, 300, 7):
        for cap in (1, 5, 8, 29, 32, 64):
            for jobs in (1, 2, 3):
                sizes = block_sizes(n_rhs, cap, jobs)
                assert sum(sizes) == n_rhs and min(sizes) >= 1 and max(sizes) <= cap
                if cap % LANES == 0 and n_rhs >= 2 * LANES * len(sizes) and len(sizes) > 1:
                    assert all(s % LANES == 0 for s in sizes[:-1])


def test_blocks_of_columns_are_compact_patches():
    # The multishift blocks take boundary columns in bisection order: every block is a compact
    # patch, and the result does not depend on the order (same S as one block of every column).
    from arealaw.correlators.sparse._plan import column_blocks
    t = np.linspace(0, 2 * np.pi, 64, endpoint=False)
    ring = np.stack([np.cos(t), np.sin(t)], axis=1)
    blocks = column_blocks([8] * 8, ring)
    assert sorted(np.concatenate(blocks).tolist()) == list(range(64))
    for block in blocks:  # each run of 8 is 8 neighbours along the ring
        members = set(block.tolist())
        assert any(all((start + k) % 64 in members for k in range(8)) for start in members)
    net = hypercubic((14, 14, 14), mass=0.3, mass_disorder=0.5, seed=4)
    rows = ball(net, 2.5).indices
    small = SparseBackend(block_size=5, n_jobs=1).blocks(net, rows, tol=1e-10)
    whole = SparseBackend(block_size=1000, n_jobs=1).blocks(net, rows, tol=1e-10)
    assert_allclose(small.x, whole.x, rtol=0, atol=1e-13)
    assert_allclose(small.p, whole.p, rtol=0, atol=1e-13)
