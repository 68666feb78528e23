"""Entanglement measures as pure functions of a symplectic spectrum (t = ν² − ¼).

Per mode, with a = ν + ½ and ε = ν − ½ (so a − ε = 1):
von Neumann  s = a ln a − ε ln ε;  Rényi  s_n = ln(aⁿ − εⁿ)/(n − 1);  s_∞ = ln a;
entanglement energy  e = ln(a/ε), i.e. ν = ½ coth(e/2).
Every per-mode function is increasing and concave in t with value 0 at t = 0, which is what makes
the error and tail bounds below valid (Jensen: an omitted tail of total T over m modes carries at
most m·s(T/m)).
"""

import math

import numpy as np

from .._numerics import is_inf_word
from ._bounds import sum_error_bound

__all__ = [
    "entanglement_energies", "entropy_error_bound", "mode_entropy", "mutual_information",
    "normalize_order", "order_label", "renyi_entropy", "von_neumann_entropy",
]


def normalize_order(order):
    """Validate a Rényi order: a number > 0 or ``inf`` (strings 'inf'/'infinity' accepted)."""
    if is_inf_word(order):
        return math.inf
    if isinstance(order, str):
        try:
            order = float(order.strip())
        except ValueError:
            raise ValueError(f"Rényi order {order!r} is not a number > 0 or 'inf'") from None
    try:
        n = float(order)
    except (TypeError, ValueError):
        raise ValueError(f"Rényi order {order!r} is not a number > 0 or 'inf'") from None
    if not n > 0:
        raise ValueError(f"Rényi order {order!r} must be > 0 (use 1 for von Neumann, inf for "
                         "the min-entropy)")
    return n


def order_label(order):
    """The key used for an order in results: '2', '0.5', 'inf'."""
    n = normalize_order(order)
    return "inf" if math.isinf(n) else f"{n:g}"


def mode_entropy(t, order=1.0):
    """Entropy of single modes with t = ν² − ¼ (array), for Rényi ``order`` (1 = von Neumann)."""
    n = normalize_order(order)
    t = np.maximum(np.asarray(t, dtype=float), 0.0)
    a = np.sqrt(0.25 + t) + 0.5
    eps = t / a
    # a = 1 + ε exactly: ln a = log1p(ε) keeps full relative accuracy for tiny t
    log_a = np.log1p(eps)
    if math.isinf(n):
        return log_a
    if n == 1.0:
        with np.errstate(divide="ignore", invalid="ignore"):
            eln = np.where(eps > 0, eps * np.log(np.where(eps > 0, eps, 1.0)), 0.0)
        return a * log_a - eln
    with np.errstate(divide="ignore"):
        r = np.where(eps > 0, (eps / a) ** n, 0.0)
    return (n * log_a + np.log1p(-r)) / (n - 1.0)


def _weighted(spec, values):
    return float(np.dot(spec.weights, values))


def von_neumann_entropy(spec):
    """S = Σ (ν+½) ln(ν+½) − (ν−½) ln(ν−½) over the computed modes.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import SymplecticSpectrum, von_neumann_entropy
    >>> spec = SymplecticSpectrum(np.array([0.75]), np.zeros(1), np.ones(1))   # ν = 1
    >>> round(von_neumann_entropy(spec), 12)
    0.954771252442
    """
    return _weighted(spec, mode_entropy(spec.t, 1.0))


def renyi_entropy(spec, order):
    """Rényi entropy S_n = (1/(n−1)) Σ ln[(ν+½)ⁿ − (ν−½)ⁿ]; n = 1 is von Neumann, n = inf the min."""
    return _weighted(spec, mode_entropy(spec.t, order))


def entropy_error_bound(spec, order=1.0):
    """Bound on |S_n(exact) − S_n(computed)|.

    When the spectrum carries its trace (every dense symmetric-form spectrum and sums of them),
    the near-½ modes are bounded as a sum with the trace and concavity
    (:func:`~arealaw.spectrum._bounds.sum_error_bound`); otherwise mode by mode from ``t_error``,
    plus the restricted tail bound m·s(T/m).  ``extra_error`` (and ``order_error(order)`` when
    the spectrum has one) is added in both cases.
    """
    extra = spec.extra_error + (0.0 if spec.order_error is None else spec.order_error(order))
    if spec.trace is not None and spec.tail is None:
        n = normalize_order(order)
        nuclear = (spec.nuclear_error if spec.nuclear_error is not None else
                   float(np.dot(spec.weights, spec.t_error)))
        err = sum_error_bound(spec.t, spec.t_error, spec.weights, trace=spec.trace,
                              trace_error=spec.trace_error, nuclear=nuclear,
                              f=lambda t: mode_entropy(t, n))
        return float(err + extra)
    lo = np.maximum(spec.t - spec.t_error, 0.0)
    hi = spec.t + spec.t_error
    err = _weighted(spec, mode_entropy(hi, order) - mode_entropy(lo, order))
    if spec.nuclear_error is not None and spec.t.size and np.all(spec.t > 0):
        # s concave: the secant slope over [t − min(δ, t), t] bounds every change per unit,
        # so the kept modes cost at most (Σ w|δt|)·(largest such slope)
        s = mode_entropy(spec.t, order)
        reach = np.minimum(spec.t_error, spec.t)
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = np.where(reach > 0, (s - mode_entropy(lo, order)) / reach, 0.0)
        err = min(err, float(spec.nuclear_error) * float(np.max(slope)))
    if spec.tail is not None and spec.tail.count > 0 and spec.tail.sum_t > 0:
        mean = min(spec.tail.sum_t / spec.tail.count, spec.tail.max_t)
        err += spec.tail.count * float(mode_entropy(np.array([mean]), order)[0])
    return float(err + extra)


def entanglement_energies(spec):
    """ε_k = ln((ν+½)/(ν−½)) per computed mode, ascending (inf for ν = ½ exactly)."""
    a = spec.nu + 0.5
    eps = spec.epsilon
    with np.errstate(divide="ignore"):
        return np.sort(np.log(a) - np.log(eps))


def mutual_information(s_a, s_b, s_ab):
    """I(A:B) = S_A + S_B − S_AB."""
    return s_a + s_b - s_ab
