"""Spectral interval [λ_min, λ_max] of the pencil (V, M), with proven bounds.

Every error bound of the sparse backend divides by the lower end λ_lo of this interval, so λ_lo
must be proven, not estimated.  Small pencils take dense eigenvalues.  Large ones take plain
Gershgorin discs when those are positive; otherwise LOBPCG supplies an estimate λ̃ and its
eigenvector x, and the bound is proven from them:

* scaled Gershgorin discs (:func:`scaled_gershgorin`) with the positive scaling |x|, or with the
  solution of (V − 0.9 λ̃ M) y = x (one step of inverse iteration) when |x| is not accurate
  enough; for a Z-matrix V (off-diagonal entries ≤ 0, as every lattice potential) the lowest
  eigenvector is positive (Perron–Frobenius) and the bound is within a few per cent of λ_min;
* otherwise (mixed-sign off-diagonals) an LDLᵀ factorisation of V − μM with positive pivots and
  a bounded residual (:func:`_ldlt_bound`), where its memory allows.

If nothing proves a positive lower end the pencil is refused with a ValueError: a bound that
rests on an estimate is not a bound.
"""

import math
import warnings

import numpy as np
import pyamg
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..._errors import ZERO_MODE
from ..._numerics import EPS, fits_in_memory

__all__ = ["exactly_symmetric", "gershgorin", "is_diagonal", "pencil_interval",
           "scaled_gershgorin"]

#: Pencils up to this size get their interval from a dense eigensolver.
DENSE_INTERVAL_LIMIT = 1500
#: Largest pencil whose lower end may be proven by a sparse LDLᵀ factorisation.
FACTOR_INTERVAL_LIMIT = 100_000
#: A proven lower end below this share of the LOBPCG estimate is tightened further (an inverse
#: iteration costs one preconditioned CG solve; LOBPCG's vector gave 0.73–0.89 of λ_min on
#: 200²–250² walls-only lattices, the inverse iteration 0.99999).
_TIGHT = 0.9
#: Shifts μ = c·λ̃ below the estimate λ̃ at which the discs (general M) and, failing those, an
#: LDLᵀ factorisation show V − μM positive semidefinite (the first that succeeds is kept).
_SHIFTS = (0.99, 0.9, 0.5)
_LDLT_SHIFTS = (0.99, 0.5)
#: Shift of the inverse iteration: far enough below λ̃ for a quick CG solve; the discs of its
#: solution prove at least about this share of λ̃ for a Z-matrix (see _Pencil.solve).
_SOLVE_SHIFT = 0.9
#: Floor of the scaling vector relative to its largest entry (any positive floor is valid; it
#: only guards divisions by entries that LOBPCG left at zero or of the wrong sign).
_FLOOR = 1e-8


def gershgorin(a):
    """Gershgorin bounds (lo, hi) on the eigenvalues of the symmetric sparse matrix ``a``."""
    diag = a.diagonal()
    off = np.asarray(abs(a).sum(axis=1)).ravel() - np.abs(diag)
    return float(np.min(diag - off)), float(np.max(diag + off))


def _abs(a):
    """|a| entrywise, sharing the index arrays of the CSR matrix ``a`` (copies only the values)."""
    return sp.csr_matrix((np.abs(a.data), a.indices, a.indptr), shape=a.shape)


def scaled_gershgorin(a, x, weights=None):
    """Proven lower bound on λ_min(A, W), W = diag(weights) (I when None), from any x > 0.

    With D = diag(x), the matrix D⁻¹W⁻¹AD is similar to W^{-1/2}AW^{-1/2}, whose eigenvalues
    (those of the pencil) are real, and Gershgorin's theorem places each in the disc of one of
    its rows, so

        λ_min(A, W) ≥ min_i h_i,   h_i = (a_ii − Σ_{j≠i} |a_ij| x_j / x_i) / w_i
                                        = (a_ii + |a_ii| − s_i / x_i) / w_i,

    with s_i = Σ_j |a_ij| x_j.

    Any positive x is valid; the lowest eigenvector of a Z-matrix (a_ij ≤ 0 off the diagonal;
    positive by Perron–Frobenius) makes every h_i equal to λ_min, so an accurate one is tight.

    Rounding (u = EPS/2; Higham 2002, *Accuracy and Stability*, eq. 3.5 for a sum of k
    nonnegative products): the computed ŝ_i of the k_i stored entries of row i is within
    γ_{k_i}·s_i of s_i, and the division by x_i, the doubling (exact), the subtraction and the
    division by w_i add one relative u each, so |ĥ_i − h_i| ≤ γ_{k_i+3}(2a_ii + s_i/x_i)/w_i.
    The bound subtracts (k_i + 6)·EPS·(2a_ii + ŝ_i/x_i)/w_i, about twice that (which also covers
    ŝ_i against s_i and the rounding of the margin itself) while k_i·u < 0.01.

    Parameters
    ----------
    a : sparse matrix, shape (n, n)
        Symmetric (entry for entry).
    x : ndarray, shape (n,)
        Positive scaling.
    weights : ndarray, shape (n,), optional
        Positive diagonal of W.

    Returns
    -------
    float
        A lower bound on the smallest eigenvalue of A x = λ W x (−inf when x is not positive).

    Examples
    --------
    >>> import numpy as np, scipy.sparse as sp
    >>> a = sp.diags([[-1.0] * 9, [2.0] * 10, [-1.0] * 9], [-1, 0, 1], format="csr")
    >>> x = np.sin(np.pi * np.arange(1, 11) / 11)   # the lowest eigenvector
    >>> lo = scaled_gershgorin(a, x)
    >>> bool(lo <= 2 - 2 * np.cos(np.pi / 11) < lo * (1 + 1e-12))
    True
    """
    a = sp.csr_matrix(a)
    x = np.asarray(x, dtype=float)
    if not np.all(x > 0) or not np.all(np.isfinite(x)):
        return -math.inf
    diag = a.diagonal()
    k = np.diff(a.indptr)
    t = (_abs(a) @ x) / x  # |a_ii| + Σ_{j≠i} |a_ij| x_j / x_i
    h = (diag + np.abs(diag)) - t  # the first sum is exact (0 or 2a_ii)
    margin = (k + 6) * EPS * (2 * np.abs(diag) + t)
    if weights is not None:
        h, margin = h / weights, margin / weights
    return float(np.min(h - margin))


def _positive(x):
    """|x| floored at a small share of its largest entry (a valid scaling for the discs)."""
    x = np.abs(np.asarray(x, dtype=float))
    top = float(np.max(x)) if x.size else 0.0
    if not (top > 0 and math.isfinite(top)):
        return np.ones_like(x)
    return np.maximum(x, _FLOOR * top)


def _row_abs_sum(a):
    """max(‖a‖_∞, ‖a‖_1) rounded up: bounds ‖(a + aᵀ)/2‖₂ for the sparse matrix ``a``."""
    a = abs(sp.csr_matrix(a))
    if a.nnz == 0:
        return 0.0
    rows = float(np.max(np.asarray(a.sum(axis=1))))
    cols = float(np.max(np.asarray(a.sum(axis=0))))
    # each sum of k nonnegative terms is within γ_k of the exact one
    k = max(int(np.max(np.diff(a.indptr))), int(np.max(np.bincount(a.indices))))
    return max(rows, cols) * (1 + 2 * (k + 2) * EPS)


def _symmetric(a):
    """(S, e): CSR S symmetric entry for entry, and e ≥ ‖(A + Aᵀ)/2 − S‖₂ (0 when A is exactly
    symmetric; else one rounding of each averaged entry, at most u·(|a_ij| + |a_ji|))."""
    a = sp.csr_matrix(a, dtype=float)
    if not a.has_sorted_indices:
        a = a.sorted_indices()  # a copy: the caller's matrix (perhaps read-only) is left alone
    if exactly_symmetric(a):
        return a, 0.0
    s = (0.5 * (a + a.T)).tocsr()
    s.sort_indices()
    return s, EPS * _row_abs_sum(a)


def _not_pd(lam, name="potential V"):
    if name != "potential V":
        return ValueError(f"{name} is not positive definite (smallest eigenvalue about {lam:.3g})")
    return ValueError(
        f"potential V is not positive definite: the smallest eigenvalue of the pencil (V, M) is "
        f"about {lam:.3g}; {ZERO_MODE}")


def _lowest(a, b, rng):
    """Lowest eigenpair of a x = λ b x (lobpcg with an AMG preconditioner): λ̃, its residual,
    the b-normalised vector and the preconditioner (reused by the inverse iteration)."""
    n = a.shape[0]
    x0 = rng.standard_normal((n, 2))
    try:
        ml = pyamg.smoothed_aggregation_solver(a.tocsr(), symmetry="symmetric")
        prec = ml.aspreconditioner()
    except (ValueError, np.linalg.LinAlgError):
        # pyamg's setup can meet NaNs on matrices far from an M-matrix (its spectral-radius
        # estimate breaks down); LOBPCG then runs unpreconditioned, slower but as valid
        prec = None
    with warnings.catch_warnings():
        # lobpcg warns when short of its tolerance; the residual computed below is what counts,
        # and the lower end is proven from the vector whatever its accuracy.
        warnings.simplefilter("ignore", UserWarning)
        lam, vec = spla.lobpcg(a, x0, B=b, M=prec, largest=False, tol=1e-7, maxiter=400)
    i = int(np.argmin(lam))
    x = vec[:, i]
    bx = x if b is None else b @ x
    x = x / math.sqrt(float(x @ bx))
    bx = x if b is None else b @ x
    res = float(np.linalg.norm(a @ x - lam[i] * bx))
    return float(lam[i]), res, x, prec


class _Pencil:
    """The pencil (V, M) of a large-interval computation and what its proofs share.

    ``m`` is None (M = I), a weight vector (diagonal M) or a sparse matrix, and [m_lo, m_hi]
    proven bounds on the spectrum of M.  ``e_v``, ``e_m`` bound ‖V_true − V‖₂, ‖M_true − M‖₂
    (the symmetrisation of a matrix that is not symmetric to the bit; M_true's bounds are
    already in [m_lo, m_hi]).  ``name`` names V in messages.
    """

    def __init__(self, v, m, m_lo, m_hi, e_v, e_m=0.0, name="potential V"):
        self.v, self.m, self.m_lo, self.m_hi, self.e_v = v, m, m_lo, m_hi, e_v
        self.e_m, self.name = e_m, name
        self.general = m is not None and not isinstance(m, np.ndarray)

    def shifted(self, mu):
        """(B̂, e): B̂ = fl(V − μM), symmetric entry for entry, and e ≥ ‖V − μM − B̂‖₂.

        Each entry is one product and one difference, so |error| ≤ 2u(|v_ij| + μ|m_ij|)."""
        if self.m is None:
            b = (self.v - mu * sp.identity(self.v.shape[0], format="csr")).tocsr()
            e = EPS * _row_abs_sum(self.v) + EPS * mu
        elif self.general:
            b = (self.v - mu * self.m).tocsr()
            e = EPS * (_row_abs_sum(self.v) + mu * _row_abs_sum(self.m))
        else:
            b = (self.v - sp.diags(mu * self.m)).tocsr()
            e = EPS * (_row_abs_sum(self.v) + mu * float(np.max(self.m)))
        b.sort_indices()
        return b, e + self.e_v + mu * self.e_m

    def from_shift(self, mu, g):
        """Lower bound on λ_min(V, M) from a lower bound g on λ_min(V − μM).

        V − μM ⪰ gI, and gI ⪰ (g/m_hi)M when g ≥ 0, gI ⪰ (g/m_lo)M when g < 0 (as
        m_lo I ⪯ M ⪯ m_hi I), so V ⪰ (μ + g/m)M.  The last term pads the two roundings."""
        lo = mu + g / (self.m_hi if g >= 0 else self.m_lo)
        return lo - 4 * EPS * (abs(mu) + abs(g) / self.m_lo)

    def discs(self, x, mu):
        """Proven lower bound on λ_min(V, M) from scaled Gershgorin discs with the scaling x."""
        if not self.general:
            # the weighted form is exact for diagonal M; μ is not needed
            lo = scaled_gershgorin(self.v, x, self.m)
            return lo - self.e_v / self.m_lo
        b, e = self.shifted(mu)
        return self.from_shift(mu, scaled_gershgorin(b, x) - e)

    def solve(self, mu, rhs, prec):
        """y ≈ (V − μM)^{-1} rhs (CG, the AMG preconditioner of V): one inverse iteration.

        Its accuracy only affects tightness: the discs are proven for whatever y results."""
        b, _ = self.shifted(mu)
        with warnings.catch_warnings():
            # a short CG run still gives a valid (if looser) scaling; nothing is claimed for it
            warnings.simplefilter("ignore", RuntimeWarning)
            y, _ = spla.cg(b, rhs, rtol=1e-10, maxiter=300, M=prec)
        return y


def _ldlt_bound(b):
    """Proven lower bound on λ_min(B) of the symmetric CSR matrix B from its LDLᵀ, or None.

    SuperLU with a symmetric fill-reducing order and diagonal pivots gives P B Pᵀ ≈ L U with L
    unit lower triangular; with D = diag(U) > 0 the matrix L D Lᵀ is positive semidefinite
    exactly (L and D are the stored numbers), so λ_min(B) ≥ −‖P B Pᵀ − L D Lᵀ‖₂.  The residual
    R̂ = fl(P B Pᵀ − fl(fl(L D) Lᵀ)) is computed, and the rounding of the product is at most
    γ_{k+1}·(|L| D |Lᵀ|)_ij for k the longest row of L (Higham 2002, eq. 3.5), padded 4×;
    ‖R‖₂ ≤ max(‖R‖_∞, ‖R‖_1).  None when a pivot is not positive (B is then, up to rounding,
    not positive definite) or the factorisation fails.
    """
    n = b.shape[0]
    try:
        lu = spla.splu(b.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                       options={"SymmetricMode": True})
    except (RuntimeError, MemoryError):
        return None
    if not np.array_equal(lu.perm_r, lu.perm_c):
        return None
    d = lu.U.diagonal()
    if not np.all(d > 0):
        return None
    lower = lu.L.tocsr()
    pr = sp.csr_matrix((np.ones(n), (lu.perm_r, np.arange(n))), shape=(n, n))
    bp = (pr @ b @ pr.T).tocsr()  # permutations: exact
    ld = (lower @ sp.diags(d)).tocsr()
    resid = bp - ld @ lower.T
    k = int(np.max(np.diff(lower.indptr)))
    t = _abs(ld) @ _abs(lower).T
    return -(_row_abs_sum(resid) + _row_abs_sum(2 * (k + 2) * EPS * t))


def _factor_bytes(n):
    # fill of a 3-D nested-dissection-like order (measured: about 8 n^{1/3} entries per row of
    # L on cubic lattices), times L, U, L D Lᵀ and |L| D |Lᵀ| at 12 bytes an entry
    return 4 * 12.0 * n * (8 * n ** (1 / 3) + 16)


def _proven_lower(pen, rng):
    """(lo, info): a proven lo ≤ λ_min(V, M) for a large pencil, or ValueError."""
    v, m = pen.v, pen.m
    b = None if m is None else (sp.diags(m) if not pen.general else m)
    lam, res, x, prec = _lowest(v, b, rng)
    if lam <= 0:
        raise _not_pd(lam, pen.name)  # a Rayleigh quotient ≤ 0: V is not positive definite
    info = {"lambda_min": lam, "residual": res}
    found = []  # (lower bound, method, how)

    def best():
        return max(found)[0] if found else -math.inf

    z = _positive(x)
    for c in _SHIFTS if pen.general else (None,):
        found.append((pen.discs(z, None if c is None else c * lam), "scaled-gershgorin",
                      "eigenvector"))
    if best() < _TIGHT * lam:
        mu = _SOLVE_SHIFT * lam
        rhs = z if pen.general or m is None else m * z
        y = _positive(pen.solve(mu, rhs, prec))
        found.append((pen.discs(y, mu), "scaled-gershgorin", "inverse-iteration"))
    why = "LDLT not needed"
    if best() < _TIGHT * lam:
        n = v.shape[0]
        if n > FACTOR_INTERVAL_LIMIT:
            why = f"an LDLT factorisation is not tried above {FACTOR_INTERVAL_LIMIT} sites"
        elif not fits_in_memory(_factor_bytes(n)):
            why = "an LDLT factorisation would not fit in memory"
        else:
            why = "no positive LDLT factorisation below the estimate"
            for c in _LDLT_SHIFTS:
                bm, e = pen.shifted(c * lam)
                g = _ldlt_bound(bm)
                if g is not None:
                    found.append((pen.from_shift(c * lam, g - e), "ldlt", f"shift {c}"))
                    break
    lo, method, how = max(found)
    if not lo > 0:
        raise ValueError(
            f"could not prove the {pen.name} positive definite on {v.shape[0]} sites: the "
            f"smallest eigenvalue of {'the pencil (V, M)' if pen.name == 'potential V' else 'M'} "
            f"is about {lam:.3g} (LOBPCG estimate, "
            f"residual {res:.2g}) but scaled Gershgorin discs give no positive lower bound and "
            f"{why}; use method='dense' for up to a few thousand sites, or add a mass")
    info["method"], info["proof"] = method, how
    info["proven_over_estimate"] = lo / lam
    return lo, info


def pencil_interval(v, m=None, *, seed=0):
    """Proven bounds lo ≤ λ_min and hi ≥ λ_max of V x = λ M x (M = I when ``m`` is None).

    Small pencils (n ≤ ``DENSE_INTERVAL_LIMIT``): dense eigenvalues, padded by a relative 1e-8
    (``method='dense'``).  Large ones: hi from Gershgorin discs (divided by a proven lower bound
    of M for non-identity M); lo from Gershgorin discs when those are positive
    (``'gershgorin'``), else proven from a LOBPCG eigenvector by scaled Gershgorin discs
    (``'scaled-gershgorin'``, :func:`scaled_gershgorin`; tight for Z-matrices) or by a sparse
    LDLᵀ factorisation of V − μM with positive pivots (``'ldlt'``, mixed-sign V up to
    ``FACTOR_INTERVAL_LIMIT`` sites).  For diagonal M the discs are weighted by M; for general M
    they bound λ_min(V − μM) at shifts μ below the estimate and
    λ_min(V, M) ≥ μ + λ_min(V − μM)/m, m = λ_max(M) or λ_min(M) by the sign.

    Returns
    -------
    lo, hi : float
    info : dict
        ``method`` (which proof gave lo), ``proof`` (its scaling vector: ``'eigenvector'`` or
        ``'inverse-iteration'``; or the shift of the factorisation) and the raw estimates
        (``lambda_min``: the LOBPCG estimate λ̃, ``residual``, ``proven_over_estimate``: lo/λ̃);
        for a non-diagonal M also ``kinetic_interval``, proven bounds (m_lo, m_hi) on its
        spectrum.

    Raises
    ------
    ValueError
        If the pencil is not positive definite, or no positive lower end can be proven.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> v = hypercubic((40, 40)).potential      # massless, Dirichlet walls: Gershgorin gives 0
    >>> lo, hi, info = pencil_interval(v)
    >>> info["method"], bool(0.9 < lo / info["lambda_min"] <= 1)
    ('scaled-gershgorin', True)
    """
    return _interval(v, m, seed, "potential V")


def _interval(v, m, seed, name):
    n = v.shape[0]
    if n <= DENSE_INTERVAL_LIMIT:
        lam = scipy.linalg.eigh(v.toarray(), None if m is None else m.toarray(), eigvals_only=True)
        scale = max(abs(lam[0]), abs(lam[-1]))
        if lam[0] <= 64 * n * EPS * scale:
            raise _not_pd(lam[0], name)
        pad = 1e-8 + 64 * n * EPS * scale / lam[0]
        info = {"method": "dense", "lambda_min": float(lam[0]), "lambda_max": float(lam[-1])}
        if m is not None and not is_diagonal(m):
            info["kinetic_interval"] = _interval(m, None, seed, "kinetic M")[:2]
        return float(lam[0] * (1 - pad)), float(lam[-1] * (1 + pad)), info
    rng = np.random.default_rng(seed)
    v, e_v = _symmetric(v)
    g_lo, g_hi = gershgorin(v)
    e_m = 0.0
    kinetic = {}  # M's own bounds, reported for a non-diagonal M (the solves need them too)
    if m is None:
        m_lo, m_hi, weights = 1.0, 1.0, None
    elif is_diagonal(m):
        weights = np.asarray(m.diagonal(), dtype=float)
        if not np.all(weights > 0):
            raise ValueError("kinetic M is not positive definite (a diagonal entry is <= 0)")
        m_lo, m_hi = float(np.min(weights)), float(np.max(weights))
    else:
        weights, e_m = _symmetric(m)
        m_lo, m_hi, _ = _interval(weights, None, seed, "kinetic M")
        m_lo, m_hi = m_lo - e_m, m_hi + e_m  # of M as given (Weyl)
        if m_lo <= 0:
            raise _not_pd(m_lo, "kinetic M")
        kinetic = {"kinetic_interval": (m_lo, m_hi)}
    g_lo, g_hi = g_lo - e_v, g_hi + e_v  # for V as given, not its symmetrised copy
    if m is not None:
        g_lo, g_hi = g_lo / m_hi if g_lo > 0 else g_lo, g_hi / m_lo
    if g_lo > 0:  # Gershgorin already proves definiteness, and its bound is rigorous
        return g_lo, g_hi, {"method": "gershgorin", "gershgorin": (g_lo, g_hi), **kinetic}
    d_min = float(np.min(v.diagonal()))
    if d_min <= 0:
        raise _not_pd(d_min, name)  # e_iᵀ V e_i ≤ 0: a Rayleigh quotient of the pencil ≤ 0
    lo, info = _proven_lower(_Pencil(v, weights, m_lo, m_hi, e_v, e_m, name), rng)
    info["gershgorin"] = (g_lo, g_hi)
    return lo, g_hi, {**info, **kinetic}


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
