"""Certified error bounds of sums Σ w·f(t) over a symplectic spectrum (entropies of any order).

Why sums, not modes
-------------------
Near-½ modes (t = ν² − ¼ close to 0) carry per-mode errors δ whose entropy cost δ·ln(1/δ) is
large beside the entropy they hold; thousands of them add up to nonsense.  Their *sum* is known
far better: tr(X_A P_A) − n/4 = Σ t exactly, and it is formed with a small, known rounding error.
The bound below splits the computed modes (descending) into a head of k modes, bounded mode by
mode, and a tail bounded as a whole:

* head: |t*_i − t_i| ≤ δ_i (Weyl, per mode) and Σ_i w_i|t*_i − t_i| ≤ D (Lidskii: the sorted
  eigenvalue changes are majorised by the singular values of the perturbation, so their total is
  at most its nuclear norm).  For concave increasing f the cost of a downward change Δ ≤ δ is at
  most Δ·(f(t) − f(t − δ'))/δ' with δ' = min(δ, t) (secants steepen to the left), which also
  bounds f'(t) and so every upward change per unit (unbounded only at t = 0); each mode costs at
  most max(f(t) − f(t − δ'), f(t + δ) − f(t)), so the head
  costs at most min(Σ secants, D·max slope) over its modes.
* tail: its exact total T* = τ* − Σ_{i≤k} t*_i ≤ τ + e_τ − Σ_{i≤k} w_i t_i + min(Σ_{i≤k} w_i δ_i, D),
  with τ ± e_τ the exact trace; or (Ky Fan) T* ≤ Σ_{i>k} w_i t_i + D, whichever is smaller.  Jensen for concave f with f(0) = 0: the exact tail holds at most
  m·f(T*/m) (m = Σ_{i>k} w_i); the computed tail holds F_tail ≥ 0, so the tail error is at most
  max(F_tail, m·f(T_u/m)).  No assumption relates the exact tail modes to the computed ones.

The bound is the smallest over k of head + tail.  It needs f increasing and concave in t with
f(0) = 0; that holds for every per-mode entropy (see :func:`~arealaw.spectrum._measures.mode_entropy`;
proof in :func:`concavity_note`).
"""

import numpy as np
import scipy.linalg

from .._numerics import EPS

__all__ = ["CorrelatorTerms", "correlator_terms", "concavity_note", "sum_error_bound"]


def concavity_note():
    """Why every per-mode entropy is increasing and concave in t (the proof the bounds rely on).

    With a = ν + ½, ε = ν − ½, x = ε/a ∈ [0, 1) (increasing in ν) and t = ν² − ¼ (so
    df/dt = (df/dν)/(2ν)):

    * von Neumann: df/dν = ln(a/ε) = −ln x, positive and decreasing; divided by 2ν it stays
      decreasing, so f is concave in t.
    * Rényi α > 1 (β = α − 1 > 0): df/dν = α/(α−1) · (1/a) · g(x), g(x) = (1 − x^β)/(1 − x^{β+1});
      g' has the sign of h(x) = −β + (β+1)x − x^{β+1}, with h(1) = 0 and h' = (β+1)(1 − x^β) > 0,
      so h < 0 and g decreases; 1/a and 1/(2ν) decrease too.
    * Rényi 0 < α < 1 (−1 < β < 0): df/dν = α/(1−α) · (1/a) · (x^β − 1)/(1 − x^{β+1}); the last
      factor has derivative sign β + x^{β+1} − (β+1)x, zero at x = 1 with derivative
      (β+1)(x^β − 1) > 0, hence negative: decreasing again.
    * α = ∞: f = ln a, df/dt = 1/(2ν a), decreasing.

    In every case df/dt > 0 and decreases: f is increasing and concave in t, f(0) = 0.

    Returns
    -------
    str
        This note's first line (the function exists to carry the proof in the docs).
    """
    return "every per-mode entropy is increasing and concave in t = nu^2 - 1/4"


class CorrelatorTerms:
    """How block errors of X_A, P_A move the modes: per mode, in the trace, and in total.

    ``per_mode`` bounds each |δt| (Weyl), ``trace`` the change of tr(X_A P_A) and ``total`` the
    nuclear norm of the perturbation of the symmetric form (so Σ|δt|, Lidskii).
    """

    def __init__(self, per_mode=0.0, total=0.0, trace=None):
        self.per_mode = float(per_mode)
        self.total = float(total)
        self.trace = float(total if trace is None else trace)

    def __add__(self, other):
        return CorrelatorTerms(self.per_mode + other.per_mode, self.total + other.total,
                               self.trace + other.trace)

    def __repr__(self):
        return (f"CorrelatorTerms(per_mode={self.per_mode:.3g}, total={self.total:.3g}, "
                f"trace={self.trace:.3g})")


def correlator_terms(x, p, x_error=0.0, p_error=0.0, *, x_dominant=None, p_dominant=None,
                     x_entry=0.0, p_entry=0.0):
    """Per-mode and total effect on t of errors in the blocks X_A, P_A.

    Two kinds of error description are accepted, and their effects add:

    ``x_error``, ``p_error``
        Spectral-norm bounds: ‖F‖ ≤ δX, ‖G‖ ≤ δP for F = X − X*, G = P − P*.  In the symmetric
        form P^{1/2} X P^{1/2} a change F moves each eigenvalue by at most ‖P‖δX (Weyl) and
        changes the trace / nuclear norm by at most δX·tr P (P ⪰ 0); likewise for G with X, and
        the cross term F·G by δX·δP per mode, n·δX·δP in total.
    ``x_dominant``, ``p_dominant``
        Positive semi-definite blocks H, H' with −H ⪯ F ⪯ H, −H' ⪯ G ⪯ H' (Loewner order; errors
        relative to the actual matrices, e.g. from an eigendecomposition's backward error).  Then
        |tr(F P)| ≤ tr(H P), the perturbation P^{1/2} F P^{1/2} has nuclear norm ≤ tr(H P) (and so
        every eigenvalue moves by at most that), likewise tr(H' X); the cross term is bounded by
        ‖H‖·tr H'.  This is what keeps massless lattices (‖X_A‖ large) tight.
    ``x_entry``, ``p_entry``
        Bounds on every entry, |F_ij| ≤ e_x, |G_ij| ≤ e_p (quadratures).  The trace moves by at
        most e_x·Σ|P_ij| + e_p·Σ|X_ij| + n²·e_x·e_p (far below e_x·n·tr P where P decays); per
        mode and in total they act as the norm bounds n·e_x, n·e_p.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.spectrum._bounds import correlator_terms
    >>> correlator_terms(np.eye(2), np.eye(2), 1e-12, 0.0)
    CorrelatorTerms(per_mode=1e-12, total=2e-12, trace=2e-12)
    """
    x = np.asarray(x, dtype=float)
    p = np.asarray(p, dtype=float)
    n = x.shape[0]
    out = CorrelatorTerms()
    if x_error or p_error:
        xn = _norm_upper(x)
        pn = _norm_upper(p)
        per = xn * p_error + pn * x_error + x_error * p_error
        tot = float(np.trace(x)) * p_error + float(np.trace(p)) * x_error + n * x_error * p_error
        out = out + CorrelatorTerms(per, tot)
    if x_dominant is not None or p_dominant is not None:
        hx = 0.0 if x_dominant is None else float(np.sum(np.asarray(x_dominant) * p))
        hp = 0.0 if p_dominant is None else float(np.sum(np.asarray(p_dominant) * x))
        cross = 0.0
        if x_dominant is not None and p_dominant is not None:
            cross = _norm_upper(x_dominant) * float(np.trace(p_dominant))
        # the eigenvalues of P^{1/2} H P^{1/2} ⪰ 0 sum to tr(H P): its norm is at most that
        tot = abs(hx) + abs(hp) + cross
        out = out + CorrelatorTerms(tot, tot)
    if x_entry or p_entry:
        ex, ep = n * x_entry, n * p_entry
        per = _norm_upper(x) * ep + _norm_upper(p) * ex + ex * ep
        tr = (x_entry * float(np.abs(p).sum()) + p_entry * float(np.abs(x).sum())
              + float(n) * n * x_entry * p_entry)
        tot = float(np.trace(x)) * ep + float(np.trace(p)) * ex + n * ex * ep
        out = out + CorrelatorTerms(per, tot, tr)
    return out


def _norm_upper(a):
    """An upper bound of ‖a‖₂ for a symmetric positive semi-definite block.

    Its largest eigenvalue (with a rounding margin) up to 4000 rows, the largest absolute row
    sum beyond (one partial eigvalsh is then no longer cheap beside the rest).
    """
    n = a.shape[0]
    if n == 0:
        return 0.0
    if n <= 4000:
        top = float(scipy.linalg.eigvalsh(a, subset_by_index=[n - 1, n - 1])[0])
        return abs(top) * (1 + 1e-10) + 4 * n * EPS * float(np.abs(np.diag(a)).max())
    return float(np.abs(a).sum(axis=1).max())


def sum_error_bound(t, t_error, weights, *, trace, trace_error, nuclear, f):
    """Bound on |Σ w f(t*) − Σ w f(t)| for an increasing concave per-mode function f, f(0) = 0.

    Parameters
    ----------
    t, t_error, weights : ndarray
        Computed modes (descending, clamped at 0), per-mode bounds δ_i on |t*_i − t_i| and
        multiplicities.
    trace, trace_error : float
        τ and e_τ with |Σ w t* − τ| ≤ e_τ (the exact total of all modes).
    nuclear : float
        D with Σ w_i |t*_i − t_i| ≤ D.
    f : callable
        The per-mode function on arrays of t (e.g. ``lambda t: mode_entropy(t, 2)``).

    Returns
    -------
    float
        The bound (see the module docstring for the derivation).

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import mode_entropy
    >>> from arealaw.spectrum._bounds import sum_error_bound
    >>> t = np.array([0.5, 1e-9] + [0.0] * 998)
    >>> b = sum_error_bound(t, np.full(1000, 1e-14), np.ones(1000), trace=0.5 + 1e-9,
    ...                     trace_error=1e-13, nuclear=1e-11, f=mode_entropy)
    >>> bool(b < 1e-9)
    True
    """
    t = np.asarray(t, dtype=float)
    d = np.asarray(t_error, dtype=float)
    w = np.asarray(weights, dtype=float)
    s = f(t)
    s_lo = f(np.maximum(t - d, 0.0))
    down = np.maximum(s - s_lo, 0.0)      # f is increasing: a negative rise is rounding
    up = np.maximum(f(t + d) - s, 0.0)
    secant = w * np.maximum(down, up)
    # a downward change stops at t = 0: its secant runs over min(δ, t) and bounds f'(t), hence
    # every upward change per unit too; at t = 0 the upward slope is unbounded
    reach = np.minimum(d, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(reach > 0, down / np.where(reach > 0, reach, 1.0),
                         np.where(d > 0, np.inf, 0.0))
    zero = np.zeros(1)
    head_secants = np.concatenate([zero, np.cumsum(secant)])
    head_slope = np.concatenate([zero, np.maximum.accumulate(slope)]) if t.size else zero
    with np.errstate(invalid="ignore"):
        head = np.where(np.isinf(head_slope), head_secants,
                        np.minimum(head_secants, nuclear * head_slope))
    head_t = np.concatenate([zero, np.cumsum(w * t)])
    head_d = np.minimum(np.concatenate([zero, np.cumsum(w * d)]), nuclear)
    total_w = float(w.sum())
    count = total_w - np.concatenate([zero, np.cumsum(w)])
    # two certificates of the exact tail total: the trace, or Ky Fan on the computed tail
    # (Σ_{i>k} t*_i ≤ Σ_{i>k} t_i + D for the sorted vectors); the smaller one counts
    by_trace = trace + trace_error - head_t + head_d
    by_lidskii = float(np.dot(w, t)) - head_t + nuclear
    # a trace certificate at or below zero can only come from its rounding model failing at the
    # ε level (the exact total is ≥ 0): then only Ky Fan counts
    tail_sum = np.maximum(np.where(by_trace > 0, np.minimum(by_trace, by_lidskii), by_lidskii),
                          0.0)
    computed_tail = float(np.dot(w, s)) - np.concatenate([zero, np.cumsum(w * s)])
    live = count > 1e-12 * max(total_w, 1.0)
    jensen = np.zeros_like(count)
    jensen[live] = count[live] * f(tail_sum[live] / count[live])
    tail = np.where(live, np.maximum(jensen, np.maximum(computed_tail, 0.0)), 0.0)
    return max(float(np.min(head + tail)), 0.0)
