"""Rational rule for coth(√x/2T)/√x with real nonnegative poles: Matsubara sum + Gauss tail.

The Matsubara sum (k_B = ħ = 1)

    f_T(x) = coth(√x/2T)/√x = 2T Σ_{n∈ℤ} 1/(x + ν_n²),   ν_n = 2πnT,

is already a sum of resolvents, but its tail falls off only like 1/N.  The first N terms are kept
exactly; the tail R_N(x) = 4T Σ_{n>N} 1/(x + ν_n²) is written as ∫ h(u) dρ(u) with
h(u) = 1/(1 + x u) and the discrete measure ρ = Σ_{n>N} 4T u_n δ(u − u_n), u_n = ν_n^{-2}, whose
moments μ_k = 4T (2πT)^{-2(k+1)} ζ(2k + 2, N + 1) are Hurwitz zeta values.  The m-point Gauss rule
of ρ (nodes u_i, weights ρ_i) gives m more resolvents, ρ_i/(1 + x u_i) = (ρ_i/u_i)/(x + 1/u_i),
and its error is exactly h^{(2m)}(ξ)/(2m)! · ‖π_m‖²_ρ for some ξ in the support (Gauss quadrature
remainder; π_m the monic orthogonal polynomial).  Since h^{(2m)}(u) = (2m)! x^{2m}/(1 + x u)^{2m+1},

    0 ≤ R_N(x) − Gauss_m(x) ≤ x^{2m} ‖π_m‖²_ρ,   ‖π_m‖²_ρ = H_{m+1}/H_m (Hankel determinants),

a rigorous one-sided bound.  The moments, nodes and ‖π_m‖² are computed in 40-digit arithmetic
(mpmath), so the rule's own rounding is far below double precision.
"""

import functools
import inspect
import math
from dataclasses import dataclass

import mpmath
import numpy as np

from ._interval import gershgorin

__all__ = ["MatsubaraRule", "matsubara_poles_estimate", "matsubara_rule"]

_DIGITS = 40
_MAX_GAUSS = 8


@dataclass(frozen=True)
class MatsubaraRule:
    """r(x) = Σ w_j / (x + σ_j) ≈ coth(√x/2T)/√x on [lo, hi], with rigorous error bounds.

    ``abs_error`` bounds |r(x) − f_T(x)|, ``x_abs_error`` bounds |x r(x) − x f_T(x)| and
    ``rel_error`` bounds |r/f_T − 1| on [lo, hi] (the same fields as the ground-state rule).
    """

    shifts: np.ndarray
    weights: np.ndarray
    lo: float
    hi: float
    temperature: float
    matsubara_terms: int
    gauss_nodes: int
    rel_error: float
    abs_error: float
    x_abs_error: float

    def __call__(self, x):
        x = np.asarray(x, dtype=float)
        return np.sum(self.weights / (x[..., None] + self.shifts), axis=-1)

    @property
    def n_nodes(self):
        return self.shifts.size


def _moments(t, n_kept, count):
    """Moments ∫ v^k dρ, k < count, of the tail measure in v = u (N+1)² (2πT)² ∈ (0, 1]."""
    u0 = 1 / (2 * mpmath.pi * mpmath.mpf(t)) ** 2
    return [4 * t * u0 * mpmath.mpf(n_kept + 1) ** (2 * k) * mpmath.zeta(2 * k + 2, n_kept + 1)
            for k in range(count)], u0 / (n_kept + 1) ** 2


def _norm2(t, n_kept, m):
    """‖π_m‖²_ρ in u (the Gauss remainder factor), as a float."""
    with mpmath.workdps(_DIGITS):
        mom, scale = _moments(mpmath.mpf(t), n_kept, 2 * m + 1)
        hank = [mpmath.matrix([[mom[i + j] for j in range(r)] for i in range(r)])
                for r in (m, m + 1)]
        return float(mpmath.det(hank[1]) / mpmath.det(hank[0]) * scale ** (2 * m))


def _polyroots(ascending, **options):
    """Roots of Σ a_k x^k (coefficients in ascending order) with any mpmath version.

    mpmath ≥ 1.4 takes ``asc=True`` and deprecates its descending default (which a later
    version may flip); older versions know only the descending order.
    """
    if "asc" in inspect.signature(mpmath.polyroots).parameters:
        return mpmath.polyroots(ascending, asc=True, **options)
    return mpmath.polyroots(ascending[::-1], **options)


def _tail_gauss(t, n_kept, m):
    """Nodes u_i, weights ρ_i and ‖π_m‖² of the m-point Gauss rule of the tail measure ρ."""
    with mpmath.workdps(_DIGITS):
        t = mpmath.mpf(t)
        u0 = 1 / (2 * mpmath.pi * t) ** 2             # u_n = u0 / n²
        scale = u0 / (n_kept + 1) ** 2                # v = u/scale ∈ (0, 1] on the support
        # moments in v: ∫ v^k dρ = 4T u0 (N+1)^{2k} ζ(2k+2, N+1)
        mom = [4 * t * u0 * (n_kept + 1) ** (2 * k) * mpmath.zeta(2 * k + 2, n_kept + 1)
               for k in range(2 * m + 1)]
        hank = [mpmath.matrix([[mom[i + j] for j in range(r)] for i in range(r)])
                for r in (m, m + 1)]
        norm2 = mpmath.det(hank[1]) / mpmath.det(hank[0])   # ‖π_m‖² in v (scale^{2m} apart)
        # π_m(v) = v^m + Σ c_j v^j with Σ_j μ_{i+j} c_j = −μ_{i+m}, i < m
        c = mpmath.lu_solve(hank[0], mpmath.matrix([-mom[i + m] for i in range(m)]))
        roots = _polyroots([c[j] for j in range(m)] + [1], maxsteps=200,
                           extraprec=2 * _DIGITS)
        roots = sorted(mpmath.re(r) for r in roots)
        vand = mpmath.matrix([[r ** k for r in roots] for k in range(m)])
        rho = mpmath.lu_solve(vand, mpmath.matrix(mom[:m]))
        u = [r * scale for r in roots]
        return ([float(x) for x in u], [float(x) for x in rho],
                float(norm2 * scale ** (2 * m)))


def _f(x, t):
    """coth(√x/2T)/√x."""
    w = math.sqrt(x)
    return (1.0 + 2.0 / math.expm1(w / t)) / w if w / t < 700 else 1.0 / w


def _tail_bound(t, n_kept, m, hi):
    return hi ** (2 * m) * _norm2(t, n_kept, m)


@functools.lru_cache(maxsize=64)
def matsubara_rule(lo, hi, temperature, *, tol, max_nodes=400):
    """Rule for coth(√x/2T)/√x on [lo, hi] with relative error ≤ ``tol`` (module notes).

    Chooses the number N of explicit Matsubara terms and m of Gauss tail nodes with the fewest
    poles in all (N + 1 + m); raises ValueError if more than ``max_nodes`` would be needed.
    The poles grow like 1/T at low temperature (the Matsubara spacing 2πT against √hi).
    Rules are cached (their search costs 0.02–2 s of 40-digit arithmetic).

    Examples
    --------
    >>> import numpy as np
    >>> rule = matsubara_rule(0.05, 12.0, 0.2, tol=1e-10)
    >>> x = np.geomspace(0.05, 12.0, 50)
    >>> exact = 1 / np.tanh(np.sqrt(x) / 0.4) / np.sqrt(x)
    >>> err = np.abs(rule(x) - exact)
    >>> bool(err.max() <= rule.abs_error), bool(rule.rel_error <= 1e-10)
    (True, True)
    """
    lo, hi, t = float(lo), float(hi), float(temperature)
    if not (0 < lo <= hi and math.isfinite(hi)):
        raise ValueError(f"spectral interval [{lo!r}, {hi!r}] must satisfy 0 < lo <= hi < inf")
    if not (t > 0 and math.isfinite(t)):
        raise ValueError(f"temperature={temperature!r} must be a finite number > 0")
    # E/f_T ≤ hi^{2m} ‖π_m‖² / f_T(hi) (E increases and f_T decreases with x)
    target = tol * _f(hi, t)
    best = None      # (poles, N, m); the bound decreases with N for each m
    for m in (3, 4, 2, 5, 6, 1, 7, 8):
        if best is None:
            n_hi = 1
            while _tail_bound(t, n_hi, m, hi) > target:
                n_hi *= 2
                if n_hi > 4 * max_nodes:
                    break
            else:
                best = (n_hi + 1 + m, n_hi, m)
            if best is None:
                continue
        n_top = best[0] - 2 - m          # fewer poles than the best so far
        if n_top < 0 or _tail_bound(t, n_top, m, hi) > target:
            continue
        n_lo = -1                        # invariant: bound(n_top) ≤ target < bound(n_lo)
        while n_top - n_lo > 1:
            mid = (n_lo + n_top) // 2
            if _tail_bound(t, mid, m, hi) > target:
                n_lo = mid
            else:
                n_top = mid
        best = (n_top + 1 + m, n_top, m)
    if best is None or best[0] > max_nodes:
        need = "more than " + str(4 * max_nodes) if best is None else str(best[0])
        raise ValueError(f"temperature={t:g} needs {need} poles for tol={tol:g} on the spectral "
                         f"interval [{lo:.3g}, {hi:.3g}] (at most {max_nodes}); use a larger "
                         "temperature or tol, or method='dense' / 'spectral'")
    _, n_kept, m = best
    u, rho, norm2 = _tail_gauss(t, n_kept, m)
    nu2 = (2 * math.pi * t * np.arange(n_kept + 1)) ** 2
    w = np.full(n_kept + 1, 4 * t)
    w[0] = 2 * t
    shifts = np.concatenate([nu2, 1.0 / np.asarray(u)])
    weights = np.concatenate([w, np.asarray(rho) / np.asarray(u)])
    abs_err = hi ** (2 * m) * norm2
    # a little room for the double-precision rounding of nodes and weights (relative ~1e-16
    # per term, Σ terms ≤ f_T(lo))
    round_err = 8 * np.finfo(float).eps * (n_kept + m + 1) * _f(lo, t)
    return MatsubaraRule(shifts, weights, lo, hi, t, int(n_kept + 1), int(m),
                         (abs_err + round_err) / _f(hi, t), abs_err + round_err,
                         hi * (abs_err + round_err))


def matsubara_poles_estimate(network, temperature):
    """About √λ_max/(2πT): the Matsubara terms the thermal rule keeps (measured: 115 for
    λ_max = 13, T = 0.005, tol = 1e-10), from a cheap upper bound of λ_max(V, M)."""
    lat = network.lattice
    if network.is_deferred:
        hi = lat.pencil_bounds()[1]
    else:
        hi = gershgorin(network.potential)[1]
        m = network.kinetic
        if m is not None:
            m_lo = gershgorin(m)[0]
            if m_lo <= 0:
                return 0.0  # no cheap bound: blocks() decides from the exact interval
            hi /= m_lo
    return math.sqrt(hi) / (2 * math.pi * temperature)
