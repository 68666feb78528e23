"""Error bounds are rigorous and tight: property tests against a 50-digit reference.

Every bound must be ≥ |S − S_ref| (rigour) and ≤ 1e3·max(|S − S_ref|, floor) (tightness), where
S_ref comes from an independent route at higher accuracy: mpmath at 50 digits (eigendecomposition
of K = M^{-1/2} V M^{-1/2}, blocks, Cholesky symmetric form, mode entropies), on networks of at
most 12 sites.  The floor is the rounding level of a double-precision computation: the larger of
1e3·ε·n and 10× the entropy's change when the softest mode of K moves by n·ε·‖K‖ (what any
backward-stable eigensolver may commit; on ill-conditioned K it exceeds 1e3·ε·n) (a
difference at rounding level cannot certify more; for Rényi orders below 1, n times that order's
entropy of a mode at that level); for the contour-quadrature backend also the requested ``tol``
(common practice, no source: a bound may sit at the accuracy that was asked).
"""

import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import arealaw as al

EPS = np.finfo(float).eps
ORDERS = (1.0, 2.0, 0.5, math.inf)
TIGHT = 1e3
#: A general (non-diagonal) M adds the errors of the computed M^{∓1/2} (their backward error and
#: basis terms): rigorous but up to ~10⁴ above the true error on ill-conditioned draws
TIGHT_GENERAL_M = 1e4


def _mp_matrix(a):
    return mp.matrix([[mp.mpf(float(v)) for v in row] for row in np.asarray(a)])


def _mp_sqrt_pair(a, shift_softest=0):
    """a^{1/2}, a^{-1/2} of a symmetric positive definite mpmath matrix.

    ``shift_softest`` is added to its smallest eigenvalue first (the rounding-level probe).
    """
    lam, u = mp.eigsy(a)
    n = a.rows
    if shift_softest:
        lam = [lam[i] for i in range(n)]
        k = min(range(n), key=lambda i: lam[i])
        lam[k] += shift_softest
    half = mp.matrix(n, n)
    inv_half = mp.matrix(n, n)
    for i in range(n):
        for j in range(n):
            half[i, j] = mp.fsum(u[i, k] * u[j, k] * mp.sqrt(lam[k]) for k in range(n))
            inv_half[i, j] = mp.fsum(u[i, k] * u[j, k] / mp.sqrt(lam[k]) for k in range(n))
    return half, inv_half


def _mp_mode(t, order):
    nu = mp.sqrt(mp.mpf(1) / 4 + t)
    a, e = nu + mp.mpf(1) / 2, t / (nu + mp.mpf(1) / 2)
    if order == 1.0:
        return a * mp.log(a) - (e * mp.log(e) if e > 0 else 0)
    if math.isinf(order):
        return mp.log(a)
    return mp.log(a ** order - e ** order) / (order - 1)


def mp_reference(v, m, sites, orders, shift_softest=0.0):
    """Rényi entropies of ``sites`` in the ground state of (V, M), at 50 digits.

    ``shift_softest`` (relative to ‖K‖) moves the smallest eigenvalue of K = M^{-1/2}VM^{-1/2}.
    """
    with mp.workdps(50):
        vv = _mp_matrix(v)
        if m is None:
            m_half = m_inv_half = mp.eye(vv.rows)
        else:
            m_half, m_inv_half = _mp_sqrt_pair(_mp_matrix(m))
        k = m_inv_half * vv * m_inv_half
        k = (k + k.T) / 2
        k_norm = max(abs(x) for x in mp.eigsy(k)[0]) if shift_softest else 0
        k_half, k_inv_half = _mp_sqrt_pair(k, shift_softest * k_norm)
        x = m_inv_half * k_inv_half * m_inv_half / 2
        p = m_half * k_half * m_half / 2
        idx = list(sites)
        xa = mp.matrix([[x[i, j] for j in idx] for i in idx])
        pa = mp.matrix([[p[i, j] for j in idx] for i in idx])
        chol = mp.cholesky((xa + xa.T) / 2)
        w = chol.T * pa * chol
        nu2, _ = mp.eigsy((w + w.T) / 2)
        ts = [max(nu2[i] - mp.mpf(1) / 4, mp.mpf(0)) for i in range(len(idx))]
        return {o: float(mp.fsum(_mp_mode(t, o) for t in ts)) for o in orders}


def rounding_levels(v, m, sites, orders, ref):
    """Per order: 10× the entropy's change when K's softest mode moves by n·ε·‖K‖."""
    moved = mp_reference(v, m, sites, orders, shift_softest=v.shape[0] * EPS)
    return {o: 10.0 * abs(moved[o] - ref[o]) for o in orders}


def _check(res, ref, floor, tight=TIGHT, levels=None):
    n = res.region_sites
    for order in ORDERS:
        if order == 1.0:
            s, bound = res.entropy, res.error_bound
        else:
            key = al.spectrum._measures.order_label(order)
            s, bound = res.renyi[key], res.renyi_error_bound[key]
        diff = abs(s - ref[order])
        if order < 1:
            # orders below 1 weigh a mode like t^order near 0: rounding-level t ~ floor carry
            # n·s_order(floor) that no double-precision computation resolves
            level = max(floor, n * float(al.mode_entropy(np.array([floor]), order)[0]))
        else:
            level = floor
        if levels is not None:
            level = max(level, levels[order])
        assert diff <= bound, f"order {order}: |S − S_ref| = {diff:.3g} > bound {bound:.3g}"
        assert bound <= tight * max(diff, level), \
            f"order {order}: bound {bound:.3g} not within {tight:g} of max(diff {diff:.3g}, floor)"


@st.composite
def networks(draw, kinetic):
    n = draw(st.integers(3, 10))
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    cond = 10.0 ** draw(st.floats(0.0, 4.0))
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    lam = np.exp(rng.uniform(0, math.log(cond), n))
    lam *= draw(st.floats(0.1, 10.0)) / lam.max()
    v = (q * lam) @ q.T
    v = 0.5 * (v + v.T)
    m = None
    if kinetic == "diagonal":
        m = np.diag(rng.uniform(0.5, 2.0, n))
    elif kinetic == "general":
        q2, _ = np.linalg.qr(rng.standard_normal((n, n)))
        m = (q2 * rng.uniform(0.5, 3.0, n)) @ q2.T
        m = 0.5 * (m + m.T)
    size = draw(st.integers(1, n - 1))
    sites = np.sort(rng.choice(n, size, replace=False))
    return v, m, sites


def _run(v, m, sites, method):
    """The method's result, the 50-digit reference and its rounding levels."""
    net = al.OscillatorNetwork(v, m)
    region = al.from_sites(net, sites)
    res = al.entropy(net, region, renyi=[o for o in ORDERS if o != 1.0], method=method)
    ref = mp_reference(v, m, sites, ORDERS)
    return res, ref, rounding_levels(v, m, sites, ORDERS, ref)


@pytest.mark.parametrize("kinetic", ["identity", "diagonal", "general"])
@settings(max_examples=12, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_dense_bound_rigorous_and_tight(kinetic, data):
    v, m, sites = data.draw(networks(kinetic))
    res, ref, levels = _run(v, m, sites, "dense")
    _check(res, ref, 1e3 * EPS * v.shape[0], TIGHT_GENERAL_M if kinetic == "general" else TIGHT,
           levels)


@pytest.mark.parametrize("kinetic", ["identity", "general"])
@settings(max_examples=8, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_sparse_bound_rigorous_and_tight(kinetic, data):
    v, m, sites = data.draw(networks(kinetic))
    res, ref, levels = _run(v, m, sites, "sparse")
    _check(res, ref, max(1e3 * EPS * v.shape[0], 1e-10),
           TIGHT_GENERAL_M if kinetic == "general" else TIGHT, levels)


@st.composite
def lattices(draw):
    dims = draw(st.integers(1, 2))
    shape = tuple(draw(st.integers(2, 12 if dims == 1 else 3)) for _ in range(dims))
    boundary = tuple(draw(st.sampled_from(["dirichlet", "periodic", "open"]))
                     for _ in range(dims))
    massless = draw(st.booleans()) and "dirichlet" in boundary
    mass = 0.0 if massless else draw(st.floats(0.05, 2.0))
    net = al.hypercubic(shape, mass=mass, boundary=list(boundary))
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    size = draw(st.integers(1, net.n_sites - 1))
    return net, np.sort(rng.choice(net.n_sites, size, replace=False))


@settings(max_examples=15, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(case=lattices())
def test_spectral_bound_rigorous_and_tight(case):
    net, sites = case
    region = al.from_sites(net, sites)
    res = al.entropy(net, region, renyi=[o for o in ORDERS if o != 1.0], method="spectral")
    ref = mp_reference(net.potential.toarray(), None, sites, ORDERS)
    _check(res, ref, 1e3 * EPS * net.n_sites)


@pytest.mark.slow
@pytest.mark.parametrize("kinetic", ["identity", "diagonal", "general"])
@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_dense_bound_many_examples(kinetic, data):
    v, m, sites = data.draw(networks(kinetic))
    res, ref, levels = _run(v, m, sites, "dense")
    _check(res, ref, 1e3 * EPS * v.shape[0], TIGHT_GENERAL_M if kinetic == "general" else TIGHT,
           levels)
