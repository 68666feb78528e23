"""Spectral interval [λ_min, λ_max] of the pencil (V, M), padded to safe bounds."""

import math
import warnings

import numpy as np

from ..._errors import ZERO_MODE
from ..._numerics import EPS
import pyamg
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["exactly_symmetric", "gershgorin", "is_diagonal", "pencil_interval"]

#: Pencils up to this size get their interval from a dense eigensolver.
DENSE_INTERVAL_LIMIT = 1500


def gershgorin(a):
    """Gershgorin bounds (lo, hi) on the eigenvalues of the symmetric sparse matrix ``a``."""
    diag = a.diagonal()
    off = np.asarray(abs(a).sum(axis=1)).ravel() - np.abs(diag)
    return float(np.min(diag - off)), float(np.max(diag + off))


def _not_pd(lam):
    return ValueError(
        f"potential V is not positive definite: the smallest eigenvalue of the pencil (V, M) is "
        f"about {lam:.3g}; {ZERO_MODE}")


def _lowest(a, b, rng):
    """Lowest eigenpair of a x = λ b x (lobpcg with an AMG preconditioner), and its residual."""
    n = a.shape[0]
    x0 = rng.standard_normal((n, 2))
    ml = pyamg.smoothed_aggregation_solver(a.tocsr(), symmetry="symmetric")
    with warnings.catch_warnings():
        # lobpcg warns when short of its tolerance; the residual computed below is what counts.
        warnings.simplefilter("ignore", UserWarning)
        lam, vec = spla.lobpcg(a, x0, B=b, M=ml.aspreconditioner(), largest=False, tol=1e-7,
                               maxiter=400)
    i = int(np.argmin(lam))
    x = vec[:, i]
    bx = x if b is None else b @ x
    x = x / math.sqrt(float(x @ bx))
    bx = x if b is None else b @ x
    res = float(np.linalg.norm(a @ x - lam[i] * bx))
    return float(lam[i]), res


def pencil_interval(v, m=None, *, seed=0):
    """Bounds lo ≤ λ_min and hi ≥ λ_max of V x = λ M x (M = I when ``m`` is None).

    Small pencils: dense eigenvalues, padded by a relative 1e-8.  Large ones: λ_max from
    Gershgorin (rigorous for M = I; divided by a lower bound of M otherwise), λ_min from a
    rigorous Gershgorin bound when that is within a factor 2 of the LOBPCG estimate (or positive
    without one), else the LOBPCG estimate minus its residual and a 5 % margin.

    Returns
    -------
    lo, hi : float
    info : dict
        ``method`` and the raw estimates.

    Raises
    ------
    ValueError
        If the pencil is not positive definite.
    """
    n = v.shape[0]
    if n <= DENSE_INTERVAL_LIMIT:
        lam = scipy.linalg.eigh(v.toarray(), None if m is None else m.toarray(), eigvals_only=True)
        scale = max(abs(lam[0]), abs(lam[-1]))
        if lam[0] <= 64 * n * EPS * scale:
            raise _not_pd(lam[0])
        pad = 1e-8 + 64 * n * EPS * scale / lam[0]
        return (float(lam[0] * (1 - pad)), float(lam[-1] * (1 + pad)),
                {"method": "dense", "lambda_min": float(lam[0]), "lambda_max": float(lam[-1])})
    rng = np.random.default_rng(seed)
    g_lo, g_hi = gershgorin(v)
    if m is None:
        m_lo, m_hi = 1.0, 1.0
    else:
        m_lo, m_hi = gershgorin(m)
        if m_lo <= 0:
            lam_m, res_m = _lowest(m, None, rng)
            m_lo = 0.95 * (lam_m - res_m)
            if m_lo <= 0:
                raise ValueError(f"kinetic M is not positive definite (smallest eigenvalue "
                                 f"about {lam_m:.3g})")
        g_lo, g_hi = g_lo / m_hi if g_lo > 0 else g_lo, g_hi / m_lo
    if g_lo > 0:  # Gershgorin already proves definiteness, and its bound is rigorous
        return g_lo, g_hi, {"method": "gershgorin", "gershgorin": (g_lo, g_hi)}
    lam, res = _lowest(v, m, rng)
    if lam <= 0 or lam - res <= 0:
        raise _not_pd(lam)
    est = 0.95 * (lam - res)
    lo = g_lo if g_lo >= 0.5 * est else est
    return lo, g_hi, {"method": "lobpcg+gershgorin", "lambda_min": lam, "residual": res,
                      "gershgorin": (g_lo, g_hi)}


def is_diagonal(m):
    """True when the sparse matrix ``m`` has no off-diagonal entries."""
    c = sp.coo_matrix(m)
    return bool(np.all(c.row == c.col))


def exactly_symmetric(a):
    """True when the CSR matrix ``a`` equals its transpose entry for entry (its CSC form, which
    is its transpose's CSR form, then has the same arrays)."""
    if not (sp.isspmatrix_csr(a) or isinstance(a, sp.csr_array)) or not a.has_sorted_indices:
        return False
    c = a.tocsc()
    c.sort_indices()
    return (np.array_equal(a.indptr, c.indptr) and np.array_equal(a.indices, c.indices)
            and np.array_equal(a.data, c.data))
