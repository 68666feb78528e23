"""Computed eigenvectors made orthogonal to a proven accuracy: one polar correction step.

An eigensolver returns U with UᵀU = I + Ψ, ‖Ψ‖ a few hundred ε (more where eigenvalues
cluster).  Correlators formed as ½ U D Uᵀ carry that loss of orthogonality times ‖D‖, which
on massless lattices (‖D‖ ~ N) dominated the dense error bound.  Here U is replaced by
U' = U (I − ½Ψ), within δ ≈ ε·‖|U|‖ of the orthogonal polar factor Q = U (UᵀU)^{-1/2}, with δ
proved, so that the rest of the bound can work with Q.

The correction is only as good as Ψ is known: fl(UᵀU) has errors up to γ_N·(|U|ᵀ|U|), which
for delocalised eigenvectors is ~N²ε in norm, far above Ψ itself.  Ψ is therefore formed
without rounding error by splitting (Ozaki, Ogita, Oishi & Rump 2012, Numer. Algorithms 59(1),
95–118, "error-free transformation of matrix multiplication"): each column of U, scaled by a
power of two, is cut into three slices of b bits, b = ⌊(53 − ⌈log₂N⌉)/2⌋, so that every
product of slice entries is an integer multiple of a power of two below 2^{2b} and any sum of N
of them is exact in double precision, whatever order the BLAS adds them in.  The four leading
slice products are formed; the two smallest ones and the part of U below the slices (at most
2^{-3b-1} of a column's largest entry) are bounded, not computed.
"""

import math
from typing import NamedTuple

import numpy as np

from .._numerics import EPS

__all__ = ["PolarCorrection", "exact_gram_deviation", "polar_corrected"]


class PolarCorrection(NamedTuple):
    """What :func:`polar_corrected` returns: the new basis and three proven bounds."""

    #: U' = U (I − ½Ψ)
    basis: np.ndarray
    #: η ≥ ‖UᵀU − I‖₂
    orthogonality: float
    #: δ ≥ ‖U' − Q‖₂, Q the orthogonal polar factor of U
    deviation: float
    #: ≥ max_i |‖u_i‖² − 1| (the columns of U itself)
    column_deviation: float


def _abs_norm(a):
    """Upper bound of ‖|a|‖₂ (√(‖a‖₁‖a‖∞), the sums' own rounding included)."""
    n = max(a.shape)
    sums = float(np.abs(a).sum(axis=0).max()) * float(np.abs(a).sum(axis=1).max())
    return math.sqrt(sums) * (1 + 2 * n * EPS)


def exact_gram_deviation(u):
    """Ψ = UᵀU − I formed exactly up to a proven error, and that error's 2-norm bound.

    Parameters
    ----------
    u : ndarray, shape (N, N)
        Columns of about unit norm (computed eigenvectors).

    Returns
    -------
    psi : ndarray, shape (N, N)
        Symmetric, with ‖psi − (UᵀU − I)‖₂ ≤ ``error``.
    error : float
        The slices' remainder (‖2U_sᵀR + RᵀR‖ ≤ 2‖U_s‖‖R‖_F + ‖R‖_F²), the slice products left
        out (2‖U₂‖_F‖U₃‖_F + ‖U₃‖_F²) and the rounding of adding the exact slice products
        (γ₆ times their absolute sum, in Frobenius norm).

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.correlators._polar import exact_gram_deviation
    >>> u = np.linalg.qr(np.random.default_rng(0).standard_normal((5, 5)))[0]
    >>> psi, err = exact_gram_deviation(u)
    >>> bool(np.abs(psi).max() < 1e-14 and err < 1e-20)
    True
    """
    u = np.asarray(u, dtype=float)
    n = u.shape[0]
    bits = (53 - math.ceil(math.log2(max(n, 1)))) // 2
    # column scales: powers of two at or above each column's largest entry, so |u / s| < 1
    _, expo = np.frexp(np.abs(u).max(axis=0))
    scale = np.ldexp(1.0, expo)
    rest = u / scale
    # slice k is an integer multiple of 2^{-kb}: at most 2^b of them (k = 1), 2^{b-1} (k > 1);
    # each cut and remainder is exact (a rounding to a coarser grid and what it left)
    slices = []
    for k in range(1, 4):
        cut = np.round(np.ldexp(rest, k * bits))
        cut = np.ldexp(cut, -k * bits)
        rest -= cut
        slices.append(cut)
    h1, h2, h3 = slices
    del slices, cut
    rest *= scale
    r_fro = float(np.linalg.norm(rest))
    del rest
    # the slices' own norms bound the products left out (‖AᵀB‖₂ ≤ ‖A‖_F‖B‖_F)
    f2 = float(np.linalg.norm(h2 * scale))
    f3 = float(np.linalg.norm(h3 * scale))
    left_out = 2 * f2 * f3 + f3 * f3
    outer = np.multiply.outer(scale, scale)
    # every slice product is exact: N terms below 2^{2b} units each stay below 2^53 units
    psi = h1.T @ h1
    psi *= outer
    psi[np.diag_indices(n)] -= 1.0     # the diagonal is within a factor 2 of 1: exact
    absum = float(np.linalg.norm(psi))
    terms = 1
    for a, b in ((h1, h2), (h1, h3), (h2, h2)):
        part = a.T @ b
        part *= outer
        size = float(np.linalg.norm(part))
        psi += part
        terms += 1
        if a is not b:
            psi += part.T
            size *= 2
            terms += 1
        absum += size
        del part
    del h1, h2, h3
    # each entry is a sum of `terms` exact numbers: its rounding is at most γ·Σ|terms|
    gamma = terms * EPS / (1 - terms * EPS)
    rounding = gamma * absum * (1 + 2 * n * EPS)
    # ‖U_s‖₂² = ‖I + Ψ_s‖ ≤ 1 + ‖Ψ_s‖_F with Ψ_s the Gram deviation of the slices' sum
    us_norm = math.sqrt(1 + float(np.linalg.norm(psi)) * (1 + 2 * n * EPS) + rounding
                        + left_out)
    remainder = ((2 * us_norm * r_fro + r_fro * r_fro) * (1 + 2 * n * EPS)
                 + left_out * (1 + 2 * n * EPS))
    return psi, rounding + remainder


def polar_corrected(u):
    """U' = U (I − ½Ψ) with proven bounds: η ≥ ‖UᵀU − I‖₂ and δ ≥ ‖U' − Q‖₂ (a
    :class:`PolarCorrection`).

    Q = U (UᵀU)^{-1/2} is the orthogonal polar factor of U (the basis the backward-error lemma
    of :func:`~arealaw.correlators._dense.backward_error` is stated in).  With Ψ̂ the computed
    Gram deviation (error e_G) and η ≥ ‖Ψ‖:
    ‖U(I − ½Ψ̂) − Q‖ ≤ ‖U‖·(⅜η²(1 − η)^{-5/2} + ½e_G) (Taylor of (1 + x)^{-1/2} to first order,
    ‖U‖ ≤ √(1 + η)); forming U·Ψ̂ adds at most γ_N‖|U|‖·‖Ψ̂‖_F/2 and the final subtraction
    rounds each entry relatively, ε‖|U'|‖.

    Returns
    -------
    PolarCorrection
        ``basis`` U', ``orthogonality`` η, ``deviation`` δ and ``column_deviation``.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.correlators._polar import polar_corrected
    >>> q = np.linalg.qr(np.random.default_rng(1).standard_normal((6, 6)))[0]
    >>> u = q + 1e-9 * np.random.default_rng(2).standard_normal((6, 6))
    >>> u2, eta, delta, _ = polar_corrected(u)
    >>> bool(eta > 1e-9 and delta < 1e-14)
    True
    >>> bool(np.abs(u2.T @ u2 - np.eye(6)).max() < 1e-14)
    True
    """
    n = u.shape[0]
    psi, e_g = exact_gram_deviation(u)
    eta = float(np.linalg.norm(psi)) * (1 + 2 * n * EPS) + e_g
    column = float(np.abs(np.diag(psi)).max()) + e_g if n else 0.0
    if eta >= 0.5:
        return PolarCorrection(u, eta, math.inf, column)
    gamma = n * EPS / (1 - n * EPS)
    psi *= 0.5
    u_new = u - u @ psi
    product = gamma * _abs_norm(u) * float(np.linalg.norm(psi)) * (1 + 2 * n * EPS)
    series = 0.375 * eta * eta / (1 - eta) ** 2.5
    delta = (math.sqrt(1 + eta) * (series + 0.5 * e_g) + product
             + EPS * _abs_norm(u_new) / (1 - EPS))
    return PolarCorrection(u_new, eta, delta, column)
