"""Property tests over random small networks (hypothesis): inequalities and invariances every
ground state obeys, checked with the dense reference within its error bounds.

Sources: S(A) = S(Ā) for pure states, subadditivity, strong subadditivity (Lieb & Ruskai 1973),
I(A:B) >= 0 and its monotonicity under enlarging B, Rényi entropies non-increasing in the order,
and ν >= ½ (the uncertainty principle for symplectic eigenvalues) are textbook facts of quantum
information (Nielsen & Chuang 2000, ch. 11; Serafini 2017, ch. 3 for Gaussian states).
"""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import arealaw as al

SETTINGS = settings(max_examples=25, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])
#: Slack beyond the reported error bounds (rounding of the comparisons themselves).
SLACK = 1e-10


@st.composite
def networks(draw, min_sites=4, max_sites=8):
    """A random SPD potential V (random couplings, diagonally dominant) and diagonal M."""
    n = draw(st.integers(min_sites, max_sites))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    v = np.zeros((n, n))
    for i in range(n):
        for j in range(i + 1, n):
            if rng.random() < 0.5:
                v[i, j] = v[j, i] = -rng.uniform(0.1, 2.0)
    v += np.diag(np.abs(v).sum(axis=1) + rng.uniform(0.05, 1.0, n))
    m = np.diag(rng.uniform(0.5, 2.0, n)) if draw(st.booleans()) else None
    return v, m, rng


def _net(v, m):
    return al.OscillatorNetwork(v, m)


def _split(rng, n, parts):
    """Disjoint non-empty site sets: a random assignment of the n sites to ``parts`` labels."""
    while True:
        labels = rng.integers(0, parts + 1, n)  # label ``parts`` = left out
        sets = [np.flatnonzero(labels == k) for k in range(parts)]
        if all(s.size for s in sets):
            return sets


def _s(net, sites, **kw):
    res = al.entropy(net, al.from_sites(net, sites), method="dense", **kw)
    return res


@SETTINGS
@given(networks())
def test_pure_state_entropy_of_region_and_complement(sample):
    v, m, rng = sample
    net = _net(v, m)
    (a,) = _split(rng, v.shape[0], 1)
    if a.size == v.shape[0]:
        a = a[:-1]
    ra, rc = _s(net, a), _s(net, np.setdiff1d(np.arange(v.shape[0]), a))
    assert abs(ra.entropy - rc.entropy) <= ra.error_bound + rc.error_bound + SLACK


@SETTINGS
@given(networks())
def test_symplectic_eigenvalues_at_least_half(sample):
    v, m, rng = sample
    net = _net(v, m)
    (a,) = _split(rng, v.shape[0], 1)
    spec = _s(net, a).spectrum
    assert np.all(spec.t + spec.t_error >= 0)  # t = ν² − ¼ >= 0 within its bound


@SETTINGS
@given(networks())
def test_subadditivity_and_mutual_information(sample):
    v, m, rng = sample
    net = _net(v, m)
    a, b = _split(rng, v.shape[0], 2)
    res = al.entropy(net, al.from_sites(net, a), region_b=al.from_sites(net, b), method="dense")
    assert res.mutual_information >= -res.mutual_information_error_bound - SLACK
    assert res.entropy_ab <= res.entropy + res.entropy_b + res.mutual_information_error_bound \
        + SLACK


@SETTINGS
@given(networks(min_sites=5))
def test_strong_subadditivity_and_monotone_mutual_information(sample):
    v, m, rng = sample
    net = _net(v, m)
    a, b, c = _split(rng, v.shape[0], 3)
    s = {}
    err = 0.0
    for name, sites in (("b", b), ("ab", np.r_[a, b]), ("bc", np.r_[b, c]),
                        ("abc", np.r_[a, b, c])):
        r = _s(net, np.sort(sites))
        s[name], err = r.entropy, err + r.error_bound
    # Lieb & Ruskai 1973: S(AB) + S(BC) >= S(ABC) + S(B)
    assert s["ab"] + s["bc"] >= s["abc"] + s["b"] - err - SLACK
    ra = al.from_sites(net, a)
    i_ab = al.entropy(net, ra, region_b=al.from_sites(net, b), method="dense")
    i_abc = al.entropy(net, ra, region_b=al.from_sites(net, np.sort(np.r_[b, c])),
                       method="dense")
    tol = i_ab.mutual_information_error_bound + i_abc.mutual_information_error_bound + SLACK
    assert i_abc.mutual_information >= i_ab.mutual_information - tol


@SETTINGS
@given(networks())
def test_invariant_under_site_relabelling(sample):
    v, m, rng = sample
    n = v.shape[0]
    (a,) = _split(rng, n, 1)
    perm = rng.permutation(n)  # new site k is old site perm[k]
    inv = np.argsort(perm)
    v2 = v[np.ix_(perm, perm)]
    m2 = None if m is None else m[np.ix_(perm, perm)]
    r1, r2 = _s(_net(v, m), a), _s(_net(v2, m2), np.sort(inv[a]))
    assert abs(r1.entropy - r2.entropy) <= r1.error_bound + r2.error_bound + SLACK


@SETTINGS
@given(networks(), st.floats(0.1, 5.0), st.booleans())
def test_invariant_under_adding_a_decoupled_oscillator(sample, w, include):
    v, m, rng = sample
    n = v.shape[0]
    (a,) = _split(rng, n, 1)
    v2 = np.zeros((n + 1, n + 1))
    v2[:n, :n], v2[n, n] = v, w
    m2 = None
    if m is not None:
        m2 = np.eye(n + 1)
        m2[:n, :n] = m
    # a decoupled oscillator is in its own ground state: a product with the rest, S unchanged
    a2 = np.r_[a, n] if include else a
    r1, r2 = _s(_net(v, m), a), _s(_net(v2, m2), a2)
    assert abs(r1.entropy - r2.entropy) <= r1.error_bound + r2.error_bound + SLACK


@SETTINGS
@given(networks())
def test_renyi_non_increasing_in_order(sample):
    v, m, rng = sample
    net = _net(v, m)
    (a,) = _split(rng, v.shape[0], 1)
    orders = [0.5, 2, 3, "inf"]
    r = _s(net, a, renyi=orders)
    values = [r.renyi["0.5"], r.entropy, r.renyi["2"], r.renyi["3"], r.renyi["inf"]]
    errors = [r.renyi_error_bound["0.5"], r.error_bound, r.renyi_error_bound["2"],
              r.renyi_error_bound["3"], r.renyi_error_bound["inf"]]
    for k in range(len(values) - 1):
        assert values[k] >= values[k + 1] - errors[k] - errors[k + 1] - SLACK
