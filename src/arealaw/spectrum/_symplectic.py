"""Symplectic spectra of Gaussian states, stored as t = ν² − ¼ with per-mode error bounds.

Working with t (and ε = ν − ½ = t / (ν + ½)) instead of ν avoids the cancellation in ν − ½ for
the many modes close to ½ that carry the tail of the entropy.
"""

from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from .._numerics import EPS
from ._bounds import correlator_terms
from ..correlators import trace_rounding
from ._modes import symplectic_form

__all__ = ["SymplecticSpectrum", "Tail", "combine_spectra", "symplectic_spectrum"]

#: Regions up to this size get a posteriori (residual) eigenvalue bounds; larger ones a
#: rounding model, since eigenvectors cost about three times the eigenvalues.
RESIDUAL_BOUND_LIMIT = 2000


@dataclass(frozen=True)
class Tail:
    """Modes a restricted solver did not compute: ``count`` of them, Σt = ``sum_t``, each t ≤ ``max_t``."""

    count: float
    sum_t: float
    max_t: float


@dataclass(frozen=True)
class SymplecticSpectrum:
    """Symplectic eigenvalues of a region, as t = ν² − ¼ ≥ 0 (descending).

    Attributes
    ----------
    t : ndarray
        ν² − ¼ of the computed modes, clamped at 0, descending.
    t_error : ndarray
        Bound on |t_exact − t| per mode (numerics and correlator errors).
    weights : ndarray
        Multiplicity of each mode (1, or a degeneracy / quadrature weight in reductions).
    tail : Tail or None
        Omitted modes (restricted solvers); their entropy is bounded, not added.
    clamped : int
        How many computed t were slightly negative from rounding and set to 0.
    extra_error : float
        Further bound on any measure from outside the modes (e.g. a truncated partial-wave sum).
    info : dict
        Diagnostics.
    trace : float or None
        Σ w·t of all modes as formed independently (tr(X_A P_A) − n/4), or None if unknown.
    trace_error : float
        Bound on |Σ w·t_exact − trace|.
    nuclear_error : float or None
        Bound on Σ w·|t_exact − t| over the computed modes (None: use Σ w·t_error).
        With ``trace`` these give the sum bounds of :mod:`arealaw.spectrum._bounds`.
    order_error : callable or None
        ``order_error(order)``: a further bound that depends on the Rényi order (1 = von Neumann),
        added to ``extra_error`` (e.g. the partial-wave tail, whose bound differs per order).
    """


    t: np.ndarray
    t_error: np.ndarray
    weights: np.ndarray
    tail: Tail = None
    clamped: int = 0
    extra_error: float = 0.0
    info: dict = field(default_factory=dict)
    trace: float = None
    trace_error: float = 0.0
    nuclear_error: float = None
    order_error: object = None

    @property
    def nu(self):
        """Symplectic eigenvalues ν ≥ ½."""
        return np.sqrt(0.25 + self.t)

    @property
    def epsilon(self):
        """ν − ½, computed without cancellation."""
        return self.t / (np.sqrt(0.25 + self.t) + 0.5)

    @property
    def n_modes(self):
        """Number of computed modes (with multiplicity)."""
        return float(np.sum(self.weights))

    def __len__(self):
        return int(self.t.size)


def _make_spectrum(t_raw, delta, weights=None, *, nuclear_error=None, **kw):
    t_raw = np.asarray(t_raw, dtype=float)
    delta = np.broadcast_to(np.asarray(delta, dtype=float), t_raw.shape).copy()
    neg = t_raw < 0
    # A clamped mode's true t lies in [0, δ]: widen δ so that it covers the rounding we undid.
    delta[neg] = np.maximum(delta[neg], -t_raw[neg])
    t = np.where(neg, 0.0, t_raw)
    order = np.argsort(-t, kind="stable")
    w = np.ones_like(t) if weights is None else np.broadcast_to(weights, t.shape)[order]
    if nuclear_error is not None:
        # clamping moved the computed values further from the exact ones by at most −t_raw
        nuclear_error = float(nuclear_error) + float(np.sum(-t_raw[neg]))
    return SymplecticSpectrum(t=t[order], t_error=delta[order], weights=np.asarray(w, float),
                              clamped=int(neg.sum()), nuclear_error=nuclear_error, **kw)


def _psd_norm(a):
    """Spectral norm of a symmetric positive semi-definite block: its largest eigenvalue.

    (One partial eigvalsh is several times cheaper than the SVD behind ``norm(a, 2)``.)
    """
    n = a.shape[0]
    return float(abs(scipy.linalg.eigvalsh(a, subset_by_index=[n - 1, n - 1])[0]))


def symplectic_spectrum(x, p, *, x_error=0.0, p_error=0.0, x_dominant=None, p_dominant=None,
                        x_entry=0.0, p_entry=0.0, info=None):
    """Symplectic spectrum of a region from its blocks X_A, P_A (dense, stable symmetric form).

    (:func:`form_eigenvalues` is the plain per-mode variant, used for partially transposed P.)

    With X_A = L Lᵀ (Cholesky), the eigenvalues of W = Lᵀ P_A L are ν²; ``t`` comes from the
    eigenvalues of W − ¼ I.  Per-mode error bounds combine eigenvalue residuals (or a rounding
    model for large regions), a rounding model of forming W (2√n·ε·‖|L|ᵀ|P_A||L|‖, which is
    what sets the size of the clamped, slightly negative t) and the block errors, given either
    as spectral norms ``x_error``, ``p_error``, as Loewner-dominating blocks ``x_dominant``,
    ``p_dominant`` or as entry bounds ``x_entry``, ``p_entry`` (see :func:`~arealaw.spectrum._bounds.correlator_terms`).  The spectrum also
    carries the trace tr(X_A P_A) − n/4 with its error and a bound on Σ|δt| (``nuclear_error``),
    from which the measures bound the near-½ modes as a sum.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import symplectic_spectrum
    >>> spec = symplectic_spectrum(np.array([[1.0]]), np.array([[1.0]]))
    >>> float(spec.nu[0])
    1.0
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    p = np.atleast_2d(np.asarray(p, dtype=float))
    if x.shape != p.shape or x.shape[0] != x.shape[1]:
        raise ValueError(f"X_A {x.shape} and P_A {p.shape} must be square blocks of one shape")
    n = x.shape[0]
    if n == 0:
        raise ValueError("the region is empty; a symplectic spectrum needs at least one site")
    xs = 0.5 * (x + x.T)
    ps = 0.5 * (p + p.T)
    chol, w = symplectic_form(xs, ps)
    w[np.diag_indices(n)] -= 0.25
    # forming W: each entry's rounding is at most a few ε·(|L|ᵀ|P||L|)_ij (√n model for the
    # accumulated sums); the largest row sum of that non-negative matrix bounds its norm
    abs_l = np.abs(chol)
    form = 2 * np.sqrt(n) * EPS * float(np.max(abs_l.T @ (np.abs(ps) @ abs_l.sum(axis=1))))
    del abs_l
    if n <= RESIDUAL_BOUND_LIMIT:
        lam, vec = scipy.linalg.eigh(w)
        resid = np.linalg.norm(w @ vec - vec * lam, axis=0)
        wnorm = max(abs(lam[0]), abs(lam[-1])) + 0.25
        delta = resid + 4 * np.sqrt(n) * EPS * wnorm + form
    else:
        lam = scipy.linalg.eigvalsh(w, driver="evd")
        wnorm = max(abs(lam[0]), abs(lam[-1])) + 0.25
        delta = (8 * np.sqrt(n) * EPS * wnorm + form) * np.ones(n)
    corr = correlator_terms(xs, ps, x_error, p_error, x_dominant=x_dominant,
                            p_dominant=p_dominant, x_entry=x_entry, p_entry=p_entry)
    delta = delta + corr.per_mode
    rows = (xs * ps).sum(axis=1) - 0.25
    trace = float(rows.sum())
    trace_err = trace_rounding(n, float(np.abs(xs * ps).sum()) + 0.25 * n) + corr.trace
    nuclear = float(np.sum(delta - corr.per_mode)) + corr.total
    return _make_spectrum(lam, delta, info=dict(info or {}), trace=trace, trace_error=trace_err,
                          nuclear_error=nuclear)


def form_eigenvalues(x, p, *, x_error=0.0, p_error=0.0, x_dominant=None, p_dominant=None,
                     x_entry=0.0, p_entry=0.0):
    """Eigenvalues of W − ¼ I, W = Lᵀ P L with X = L Lᵀ, and a bound on each one's error.

    The eigenvalues of W are those of X P (ν² for a region's blocks, ν̃² for a partially
    transposed P, which need not lie above ¼).  Each bound is the eigenvalue residual (or a
    rounding model above ``RESIDUAL_BOUND_LIMIT`` sites), the rounding of forming W (as in
    :func:`symplectic_spectrum`) and the block errors in any of the forms of
    :func:`~arealaw.spectrum._bounds.correlator_terms` (per mode, Weyl), which needs X and P
    positive definite.  ``x`` and ``p`` are checked square blocks of one shape.
    """
    n = x.shape[0]
    xs = 0.5 * (x + x.T)
    ps = 0.5 * (p + p.T)
    chol, w = symplectic_form(xs, ps)
    w[np.diag_indices(n)] -= 0.25
    abs_l = np.abs(chol)
    form = 2 * np.sqrt(n) * EPS * float(np.max(abs_l.T @ (np.abs(ps) @ abs_l.sum(axis=1))))
    del abs_l
    if n <= RESIDUAL_BOUND_LIMIT:
        lam, vec = scipy.linalg.eigh(w)
        resid = np.linalg.norm(w @ vec - vec * lam, axis=0)
        wnorm = max(abs(lam[0]), abs(lam[-1])) + 0.25
        delta = resid + 4 * np.sqrt(n) * EPS * wnorm + form
    else:
        lam = scipy.linalg.eigvalsh(w, driver="evd")
        wnorm = max(abs(lam[0]), abs(lam[-1])) + 0.25
        delta = (8 * np.sqrt(n) * EPS * wnorm + form) * np.ones(n)
    corr = correlator_terms(xs, ps, x_error, p_error, x_dominant=x_dominant,
                            p_dominant=p_dominant, x_entry=x_entry, p_entry=p_entry)
    return lam, delta + corr.per_mode


def combine_spectra(parts, *, extra_error=0.0, info=None, order_error=None):
    """Join spectra of independent sectors, ``parts`` = [(spectrum, weight), ...].

    Used by symmetry reductions (partial waves, transverse momenta): each sector's modes enter
    with multiplicity ``weight``; tails and extra errors add up (``order_error``, a per-order
    bound, is the joined spectrum's; the parts must not carry one).
    """
    parts = list(parts)
    if not parts:
        raise ValueError("combine_spectra needs at least one sector")
    t = np.concatenate([s.t for s, _ in parts])
    d = np.concatenate([s.t_error for s, _ in parts])
    w = np.concatenate([s.weights * wt for s, wt in parts])
    tails = [(s.tail, wt) for s, wt in parts if s.tail is not None]
    tail = None
    if tails:
        tail = Tail(count=float(sum(tl.count * wt for tl, wt in tails)),
                    sum_t=float(sum(tl.sum_t * wt for tl, wt in tails)),
                    max_t=float(max(tl.max_t for tl, _ in tails)))
    order = np.argsort(-t, kind="stable")
    extra = extra_error + sum(s.extra_error * wt for s, wt in parts)
    trace = trace_err = nuclear = None
    if all(s.trace is not None for s, _ in parts):
        # sector traces and Lidskii totals add with the sector weights
        trace = float(sum(s.trace * wt for s, wt in parts))
        trace_err = float(sum(s.trace_error * wt for s, wt in parts))
        nuclear = float(sum(wt * (s.nuclear_error if s.nuclear_error is not None else
                                  float(np.dot(s.weights, s.t_error))) for s, wt in parts))
    return SymplecticSpectrum(t=t[order], t_error=d[order], weights=w[order], tail=tail,
                              clamped=sum(s.clamped for s, _ in parts), extra_error=float(extra),
                              info=dict(info or {}), trace=trace, trace_error=trace_err or 0.0,
                              nuclear_error=nuclear, order_error=order_error)
