"""The spectral interval of the sparse backend: its lower end is proven (never above λ_min) and,
on lattices, tight — checked against eigenvalues computed independently (dense eigh, or ARPACK
in shift-invert mode for the larger networks).

Sources: Gershgorin's disc theorem and Perron–Frobenius for irreducible Z-matrices (Horn &
Johnson 2013, Matrix Analysis, §6.1 and ch. 8); the lowest Dirichlet-chain eigenvalue
4 sin²(π/(2(n+1))) of tridiag(−1, 2, −1) is the textbook closed form (same book, §1.4).
"""

import math

import numpy as np
import pytest
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from arealaw import box, hypercubic
from arealaw.correlators import SparseBackend, dense_correlators
from arealaw.correlators.sparse import _interval
from arealaw.correlators.sparse._interval import pencil_interval, scaled_gershgorin

EPS = np.finfo(float).eps


def _lowest(v, m=None, sigma=0.0):
    """λ_min(V, M) without the code under test: dense eigh up to 600 sites, else ARPACK
    (shift-invert about ``sigma``, below the spectrum; converged to rounding)."""
    if v.shape[0] <= 600:
        return scipy.linalg.eigh(v.toarray(), None if m is None else m.toarray(),
                                 eigvals_only=True, subset_by_index=[0, 0])[0]
    return spla.eigsh(v.tocsc(), k=1, M=None if m is None else m.tocsc(), sigma=sigma,
                      which="LM", tol=1e-13, return_eigenvectors=False)[0]


def _proven(lo, lam, v):
    # the reference eigenvalue itself carries rounding of order n·EPS·‖V‖
    return lo <= lam + 10 * v.shape[0] * EPS * abs(v).max()


def _sign_flipped(v, share, seed, shift):
    """V with the sign of a random share of its couplings flipped and λ_min moved to ``shift``:
    a user matrix whose comparison matrix is indefinite (no Gershgorin proof of any kind)."""
    rng = np.random.default_rng(seed)
    up = sp.triu(v, 1).tocoo()
    flip = np.where(rng.random(up.nnz) < share, -1.0, 1.0)
    up = sp.coo_matrix((up.data * flip, (up.row, up.col)), shape=v.shape)
    off = (up + up.T).tocsr()
    lam0 = _lowest(off, sigma=-1 - float(abs(off).sum(axis=1).max()))  # below every disc
    return (off + sp.diags(np.full(v.shape[0], shift - lam0))).tocsr()


def _banded_mass(n, c):
    """M = I + c·(shift up + shift down): non-diagonal, SPD for |c| < ½."""
    e = np.ones(n - 1)
    return (sp.identity(n) + c * (sp.diags(e, 1) + sp.diags(e, -1))).tocsr()


def _cases():
    rng = np.random.default_rng(8)
    # 3-D disordered couplings, no mass, Dirichlet walls: plain Gershgorin gives 0
    yield "3d-disorder-massless", hypercubic((12, 12, 12), coupling_disorder=0.5, seed=2), None
    # 2-D walls only: LOBPCG's vector is rough at the corners of large lattices
    yield "2d-walls-only-200", hypercubic((200, 200)), None
    yield "2d-walls-only-diag-m", hypercubic((45, 45)), sp.diags(1 + rng.random(2025)).tocsr()
    # general M: positive off-diagonals keep V − μM a Z-matrix, negative ones do not
    yield "2d-general-m-z", hypercubic((45, 45)), _banded_mass(2025, 0.2)
    yield "2d-general-m-mixed", hypercubic((45, 45)), _banded_mass(2025, -0.3)


@pytest.mark.parametrize("name, net, m", list(_cases()), ids=lambda c: c if isinstance(c, str)
                         else "")
def test_lower_end_proven_and_tight_on_lattices(name, net, m):
    v = net.potential
    assert _interval.gershgorin(v)[0] <= 0  # the case the proof is for
    lo, hi, info = pencil_interval(v, m)
    lam = _lowest(v, m)
    assert _proven(lo, lam, v), (lo, lam)
    assert lo >= 0.5 * lam  # tight: the lattices have a positive Perron vector
    assert info["method"] in ("scaled-gershgorin", "ldlt")
    if m is None or name.endswith("-z"):
        assert info["method"] == "scaled-gershgorin"  # Z-matrices need no factorisation
    assert hi >= lam


@pytest.mark.parametrize("kind", ["identity", "diagonal", "general"])
def test_inverse_iteration_scaling_proves_the_shift(kind):
    # from even the crudest positive start (all ones), y = (V − μM)^{-1} 1 makes the discs
    # prove at least μ (for a Z-matrix V − μM, μ below λ_min)
    v = hypercubic((60, 60)).potential
    m = {"identity": None, "diagonal": sp.diags(np.linspace(0.5, 2, 3600)).tocsr(),
         "general": _banded_mass(3600, 0.2)}[kind]
    lam = _lowest(v, m)
    w = None if m is None else m.diagonal() if kind == "diagonal" else m
    m_lo, m_hi = (1.0, 1.0) if m is None else (0.5, 2.0) if kind == "diagonal" else (0.6, 1.4)
    pen = _interval._Pencil(v, w, m_lo, m_hi, 0.0)
    crude = pen.discs(np.ones(3600), 0.9 * lam)
    y = pen.solve(0.9 * lam, np.ones(3600), None)
    lo = pen.discs(y, 0.9 * lam)
    assert crude < 0.9 * lam and 0.9 * lam * (1 - 1e-6) <= lo <= lam


def test_mixed_sign_user_matrix_proven_by_factorisation():
    v = _sign_flipped(hypercubic((40, 50), mass=0.1, boundary="periodic").potential, 0.5,
                      seed=5, shift=0.05)
    assert _interval.gershgorin(v)[0] < 0
    lo, _, info = pencil_interval(v)
    lam = _lowest(v)
    assert info["method"] == "ldlt"
    assert _proven(lo, lam, v) and lo >= 0.5 * lam


def test_unprovable_lower_end_is_refused(monkeypatch):
    v = _sign_flipped(hypercubic((40, 50), mass=0.1, boundary="periodic").potential, 0.5,
                      seed=5, shift=0.05)
    monkeypatch.setattr(_interval, "FACTOR_INTERVAL_LIMIT", 1000)
    with pytest.raises(ValueError, match=r"could not prove .* about 0\.05 .*method='dense'"):
        pencil_interval(v)


def test_discs_keep_their_rounding_margin():
    # the exact lowest eigenvector of the Dirichlet chain: the discs all equal λ_min up to
    # rounding, and the margin must keep the bound below it
    n = 3000
    v = sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1], format="csr")
    lam = 4 * math.sin(math.pi / (2 * (n + 1))) ** 2
    lo = scaled_gershgorin(v, np.sin(math.pi * np.arange(1, n + 1) / (n + 1)))
    assert lo < lam and lo > lam * (1 - 1e-6)
    assert scaled_gershgorin(v, -np.ones(n)) == -math.inf


def test_asymmetry_at_rounding_level_is_accounted():
    v = hypercubic((45, 45)).potential.tolil()
    v[0, 1] = v[0, 1] * (1 + 4 * EPS)  # one entry off its transpose by rounding
    v = v.tocsr()
    lo, _, _ = pencil_interval(v)
    assert _proven(lo, _lowest(0.5 * (v + v.T)), v)


def test_backend_on_walls_only_lattice_uses_proven_interval(monkeypatch):
    monkeypatch.setattr(_interval, "DENSE_INTERVAL_LIMIT", 100)
    net = hypercubic((24, 24))
    rows = box(net, (3, 3), origin=(10, 10)).indices
    b = SparseBackend().blocks(net, rows, tol=1e-8)
    assert b.info["interval_method"] == "scaled-gershgorin"
    x, p, _ = dense_correlators(net)
    assert np.linalg.norm(b.x - x[np.ix_(rows, rows)], 2) <= b.x_error
    assert np.linalg.norm(b.p - p[np.ix_(rows, rows)], 2) <= b.p_error
    assert_allclose(b.x, x[np.ix_(rows, rows)], rtol=1e-6)


@st.composite
def _pencils(draw):
    """A random sparse SPD pencil: random couplings (all negative, or of mixed sign), a
    diagonal placing λ_min at a random height, and M = I, diagonal or banded."""
    n = draw(st.integers(30, 160))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    k = 3 * n
    i, j = rng.integers(0, n, k), rng.integers(0, n, k)
    keep = i != j
    mixed = draw(st.booleans())
    w = rng.uniform(0.1, 2.0, keep.sum()) * (np.where(rng.random(keep.sum()) < 0.5, -1, 1)
                                              if mixed else -1)
    off = sp.coo_matrix((w, (i[keep], j[keep])), shape=(n, n)).tocsr()
    off = (off + off.T).tocsr()
    d = rng.uniform(0.0, 1.0, n)
    base = off + sp.diags(d)
    gap = 10 ** draw(st.floats(-4, 0))
    v = (base + sp.diags(np.full(n, gap - _lowest(base.tocsr())))).tocsr()
    kind = draw(st.sampled_from(["identity", "diagonal", "banded"]))
    m = {"identity": None, "diagonal": sp.diags(rng.uniform(0.5, 2.0, n)).tocsr(),
         "banded": _banded_mass(n, draw(st.sampled_from([0.2, -0.3])))}[kind]
    return v, m, mixed


def _check_random_pencil(pencil):
    v, m, mixed = pencil
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(_interval, "DENSE_INTERVAL_LIMIT", 0)  # the large-pencil path, checked by eigh
        lo, hi, info = pencil_interval(v, m)
    lam = _lowest(v, m)
    assert _proven(lo, lam, v), (lo, lam, info)
    if not mixed and info["method"] != "gershgorin":
        assert lo >= 0.5 * lam


_SETTINGS = dict(deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])


@settings(max_examples=30, **_SETTINGS)
@given(_pencils())
def test_lower_end_is_proven_on_random_pencils(pencil):
    _check_random_pencil(pencil)


@pytest.mark.slow
@settings(max_examples=300, **_SETTINGS)
@given(_pencils())
def test_lower_end_is_proven_on_many_random_pencils(pencil):
    _check_random_pencil(pencil)
