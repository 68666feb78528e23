"""The dense backend's backward error: the residual bound and the backward-error lemma.

The checks are against an independent 50-digit computation (mpmath) of the same quantities
(common practice, no source): the 2-norm of the residual K U − U Λ of the computed pairs, and
the backward error ‖Q Λ Qᵀ − K‖₂ with Q the orthogonal polar factor of U.
"""

import math

import mpmath as mp
import numpy as np
import pytest
import scipy.linalg
import scipy.sparse

from arealaw.correlators._dense import _residual, backward_error
from arealaw.correlators._polar import exact_gram_deviation, polar_corrected

EPS = np.finfo(float).eps


class _Net:
    """The two attributes :func:`_residual` reads."""

    def __init__(self, v):
        self.kinetic = None
        self.potential = v


def _spectra(rng, n):
    """Random, clustered and near-degenerate spectra."""
    yield rng.uniform(0.1, 4.0, n)
    yield np.repeat(rng.uniform(0.5, 2.0, n // 3 + 1), 3)[:n]             # exact triples
    base = rng.uniform(0.5, 2.0, n)
    base[1::2] = base[::2][: n // 2] + 1e-12                              # pairs 1e-12 apart
    yield base


def _matrix(rng, lam):
    n = lam.size
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    k = (q * lam) @ q.T
    return 0.5 * (k + k.T)


def _mp_residual_norm(k, u, lam):
    with mp.workdps(50):
        km, um = mp.matrix(k.tolist()), mp.matrix(u.tolist())
        r = km * um - um * mp.diag(mp.matrix(lam.tolist()))
        return float(mp.sqrt(max(mp.eigsy(r.T * r)[0])))


def _mp_backward_error(k, u, lam):
    """‖Q Λ Qᵀ − K‖₂ with Q = U (UᵀU)^{-1/2}, at 50 digits."""
    with mp.workdps(50):
        um = mp.matrix(u.tolist())
        g, w = mp.eigsy(um.T * um)
        s_inv = w * mp.diag([1 / mp.sqrt(x) for x in g]) * w.T
        q = um * s_inv
        e = q * mp.diag(mp.matrix(lam.tolist())) * q.T - mp.matrix(k.tolist())
        return float(max(abs(x) for x in mp.eigsy(e)[0]))


@pytest.mark.parametrize("n", [6, 11])
def test_residual_bound_above_true_residual(n):
    rng = np.random.default_rng(n)
    for lam_exact in _spectra(rng, n):
        k = _matrix(rng, lam_exact)
        lam, u = scipy.linalg.eigh(k)
        res, res_round = _residual(_Net(k), k, u, lam)
        budget = backward_error(res, u, res_round, float(np.abs(lam).max()))
        true = _mp_residual_norm(k, u, lam)
        assert budget["residual_norm"] + budget["residual_rounding"] >= true
        assert budget["residual"] >= _mp_backward_error(k, u, lam)


@pytest.mark.parametrize("scale", [1e-9, 1e-6])
def test_lemma_with_lost_orthogonality(scale):
    """Eigenvectors spoiled on purpose (‖UᵀU − I‖ ≈ scale): β still covers the backward error,
    and is not ‖K‖·η-sized (the lemma's point)."""
    rng = np.random.default_rng(7)
    n = 9
    lam_exact = np.concatenate([rng.uniform(1e-3, 1e-2, 3), rng.uniform(1.0, 100.0, n - 3)])
    k = _matrix(rng, lam_exact)
    lam, u = scipy.linalg.eigh(k)
    u = u + scale * rng.standard_normal((n, n))
    res, res_round = _residual(_Net(k), k, u, lam)
    budget = backward_error(res, u, res_round, float(np.abs(lam).max()))
    true = _mp_backward_error(k, u, lam)
    assert true <= budget["residual"] <= 10 * max(true, 1e3 * EPS)


def test_sparse_residual_rounding_is_columnwise():
    """Sparse V: the residual is formed with V itself and each column's rounding bound is
    γ_{w+1}(‖|V|‖∞ + |λ|), far below a dense √N·ε·‖V‖ model."""
    n = 300
    v = scipy.sparse.diags([-np.ones(n - 1), 2.0 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1],
                           format="csr")
    lam, u = scipy.linalg.eigh(v.toarray())
    res, res_round = _residual(_Net(v), None, u, lam)
    assert np.abs(res - (v.toarray() @ u - u * lam)).max() < 1e-13
    gamma = 4 * EPS / (1 - 4 * EPS)
    assert np.all(res_round <= gamma * (4.0 + np.abs(lam)) * 1.0001)
    assert np.all(res_round >= gamma * 4.0 * 0.9999)
    assert float(res_round.max()) < 2 * math.sqrt(n) * EPS * 4.0


def _mp_gram_and_polar(u):
    """UᵀU − I and the orthogonal polar factor Q = U (UᵀU)^{-1/2}, at 50 digits."""
    with mp.workdps(50):
        um = mp.matrix(u.tolist())
        gram = um.T * um
        g, w = mp.eigsy(gram)
        s_inv = w * mp.diag([1 / mp.sqrt(x) for x in g]) * w.T
        return gram - mp.eye(u.shape[1]), um * s_inv


def _mp_norm2(a):
    with mp.workdps(50):
        return float(mp.sqrt(max(mp.eigsy(a.T * a)[0])))


@pytest.mark.parametrize("scale", [0.0, 1e-13, 1e-9])
def test_gram_deviation_and_polar_correction_are_proven(scale):
    """Ψ = UᵀU − I from the error-free slices is within its stated error of the 50-digit value,
    and U' = U(I − ½Ψ) within δ of the polar factor (Ozaki, Ogita, Oishi & Rump 2012 for the
    splitting; the reference is mpmath, common practice, no source)."""
    rng = np.random.default_rng(11)
    n = 10
    k = _matrix(rng, np.repeat(rng.uniform(0.5, 2.0, 4), 3)[:n])     # clustered spectrum
    _, u = scipy.linalg.eigh(k)
    u = u + scale * rng.standard_normal((n, n))
    psi, err = exact_gram_deviation(u)
    true_psi, q = _mp_gram_and_polar(u)
    with mp.workdps(50):
        assert _mp_norm2(mp.matrix(psi.tolist()) - true_psi) <= err + 1e-40
    u2, eta, delta, column = polar_corrected(u)
    assert eta >= _mp_norm2(true_psi)
    with mp.workdps(50):
        assert column >= max(abs(true_psi[i, i]) for i in range(n))
    with mp.workdps(50):
        dev = _mp_norm2(mp.matrix(u2.tolist()) - q)
    assert dev <= delta
    # the correction works: δ sits at the rounding level of U', not at ‖UᵀU − I‖
    assert delta <= 100 * n * EPS
