"""Contour quadrature for x^{-1/2} with real positive poles (Hale, Higham & Trefethen 2008).

x^{-1/2} = (2/π) ∫₀^∞ (t² + x)^{-1} dt.  The substitution t = √λ_min · sc(u | k′²),
k′² = 1 − λ_min/λ_max, maps u ∈ [0, K(k′²)) onto t ∈ [0, ∞); the N-point midpoint rule in u gives

    x^{-1/2} ≈ r_N(x) = Σ_j w_j / (x + σ_j),   σ_j = t_j² > 0,  w_j > 0,

with a relative error ≈ 4 exp(−2π² N / ln(16 κ)) uniformly on [λ_min, λ_max], κ = λ_max/λ_min
(Hale, Higham & Trefethen 2008, SIAM J. Numer. Anal. 46, 2505, section 4).
"""

import math
from dataclasses import dataclass

import numpy as np
import scipy.special

__all__ = ["InverseSqrtRule", "hht_error_estimate", "hht_node_count", "inverse_sqrt_rule"]


def hht_error_estimate(n_nodes, kappa):
    """The HHT 2008 estimate 4 exp(−2π² N / ln(16 κ)) of the relative error of N nodes."""
    return 4.0 * math.exp(-2.0 * math.pi ** 2 * n_nodes / math.log(16.0 * kappa))


def hht_node_count(kappa, tol):
    """Nodes N with 4 exp(−2π² N / ln(16 κ)) ≤ tol: ⌈ln(4/tol) ln(16κ) / (2π²)⌉.

    Examples
    --------
    >>> hht_node_count(1e4, 1e-8), hht_node_count(1e8, 1e-12)
    (13, 32)
    """
    if not (kappa >= 1 and math.isfinite(kappa)):
        raise ValueError(f"condition number {kappa!r} must be a finite number >= 1")
    if not 0 < tol < 1:
        raise ValueError(f"tol={tol!r} must be in (0, 1)")
    return max(1, math.ceil(math.log(4.0 / tol) * math.log(16.0 * kappa) / (2.0 * math.pi ** 2)))


@dataclass(frozen=True)
class InverseSqrtRule:
    """r(x) = Σ w_j / (x + σ_j) ≈ x^{-1/2} on [lo, hi], with measured error bounds.

    ``rel_error`` bounds |r(x)√x − 1|, ``abs_error`` bounds |r(x) − x^{-1/2}| and ``x_abs_error``
    bounds |x r(x) − √x| on [lo, hi] (sampled densely in ln x; the error is smooth and
    equioscillates about N times, so a fine sample plus a 5 % margin covers its maximum).
    """

    shifts: np.ndarray
    weights: np.ndarray
    lo: float
    hi: float
    rel_error: float
    abs_error: float
    x_abs_error: float

    def __call__(self, x):
        x = np.asarray(x, dtype=float)
        return np.sum(self.weights / (x[..., None] + self.shifts), axis=-1)

    @property
    def n_nodes(self):
        return self.shifts.size


def _nodes(lo, hi, n):
    m = 1.0 - lo / hi  # parameter k'^2 of the Jacobi functions
    kc = math.sqrt(lo / hi)  # complementary modulus
    big_k = scipy.special.ellipkm1(lo / hi)  # K(m) computed from 1 - m without cancellation
    u = (np.arange(n) + 0.5) * big_k / n
    # cn(u) is tiny near u = K when m is close to 1; there use v = K - u and
    # sn(K - v) = cn(v)/dn(v), cn(K - v) = k_c sn(v)/dn(v), dn(K - v) = k_c/dn(v).
    far = u > 0.5 * big_k
    v = np.where(far, big_k - u, u)
    sn, cn, dn, _ = scipy.special.ellipj(v, m)
    sc = np.where(far, cn / (kc * np.where(far, sn, 1.0)), sn / cn)
    dsc = np.where(far, dn / (kc * np.where(far, sn, 1.0) ** 2), dn / cn ** 2)
    t = math.sqrt(lo) * sc
    return t ** 2, (2.0 / math.pi) * (big_k / n) * math.sqrt(lo) * dsc


def _measure(shifts, weights, lo, hi):
    x = np.geomspace(lo, hi, 4000) if hi > lo else np.array([lo])
    r = np.sum(weights / (x[:, None] + shifts), axis=1)
    rel = np.abs(r * np.sqrt(x) - 1.0)
    return (1.05 * float(rel.max()), 1.05 * float((rel / np.sqrt(x)).max()),
            1.05 * float((rel * np.sqrt(x)).max()))


def inverse_sqrt_rule(lo, hi, *, tol=None, n_nodes=None, max_nodes=120):
    """Quadrature rule for x^{-1/2} on [lo, hi] (0 < lo ≤ hi).

    Parameters
    ----------
    lo, hi : float
        Spectral interval (a lower bound of λ_min and an upper bound of λ_max).
    tol : float, optional
        Target relative error; N starts at :func:`hht_node_count` and grows until the measured
        relative error is below ``tol``.
    n_nodes : int, optional
        Fixed number of nodes instead of ``tol``.

    Examples
    --------
    >>> rule = inverse_sqrt_rule(1.0, 1e4, tol=1e-8)
    >>> rule.n_nodes, bool(rule.rel_error < 1e-8)
    (13, True)
    >>> float(abs(rule(4.0) - 0.5)) < 1e-8
    True
    """
    lo, hi = float(lo), float(hi)
    if not (0 < lo <= hi and math.isfinite(hi)):
        raise ValueError(f"spectral interval [{lo!r}, {hi!r}] must satisfy 0 < lo <= hi < inf")
    hi = max(hi, lo * (1 + 1e-12))
    if n_nodes is None:
        if tol is None:
            raise ValueError("give tol or n_nodes")
        n = hht_node_count(hi / lo, tol)
    else:
        n = int(n_nodes)
        if n < 1:
            raise ValueError(f"n_nodes={n_nodes!r} must be a positive integer")
    while True:
        shifts, weights = _nodes(lo, hi, n)
        rel, ab, xab = _measure(shifts, weights, lo, hi)
        if n_nodes is not None or rel <= tol or n >= max_nodes:
            break
        n += max(1, n // 8)
    return InverseSqrtRule(shifts, weights, lo, hi, rel, ab, xab)
