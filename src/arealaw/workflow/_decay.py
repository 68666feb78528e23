"""Power-law fits of the decay of mutual information with the separation of two regions.

For regions far apart compared with their size, I(A:B) ≈ A·r^(−p) (in a critical field the
exponent is set by the lightest operator's scaling dimension, p = 4Δ; Cardy 2013, J. Phys. A
46 285402).  The fit is weighted least squares of ln I against ln r with σ_ln I = σ_I / I; the
standard errors are scaled by √(χ²/dof) when that exceeds 1 (common practice, no source).
"""

from dataclasses import dataclass

import numpy as np
# chi-square tail from scipy.special: importing scipy.stats would cost ~0.5 s at every command
from scipy.special import chdtrc

from ._ensembles import average_realisations, ensemble_sigma
from ._fits import SIGMA_FLOOR, FitResult

#: Largest rms residual of ln I, relative to ln I's change over the fitted range, at which a
#: power law is said to describe the decay (common practice, no source: a few percent of the
#: range is what one sees by eye on a log-log plot).
DECAY_MISFIT_LIMIT = 0.02

__all__ = ["DecayFit", "fit_decay", "fit_decay_rows"]


@dataclass
class DecayFit(FitResult):
    """A :class:`FitResult` of I = A·r^(−p): ``names`` are ``['A', 'p']``."""

    def predict(self, sizes):
        a, p = self.coefficients
        return a * np.asarray(sizes, float) ** (-p)


def fit_decay(separations, values, errors=None):
    """Fit I = A·r^(−p) to mutual informations ``values`` at separations ``separations``.

    Examples
    --------
    >>> import numpy as np
    >>> r = np.array([4.0, 6.0, 8.0, 12.0])
    >>> fit = fit_decay(r, 0.5 * r**-2.0)
    >>> round(fit["A"], 9), round(fit["p"], 9)
    (0.5, 2.0)
    """
    r = np.asarray(separations, float).ravel()
    i = np.asarray(values, float).ravel()
    if r.size != i.size:
        raise ValueError(f"{r.size} separations but {i.size} values; give one value each")
    if r.size < 3 or np.unique(r).size < 3:
        raise ValueError(f"a power-law fit needs at least 3 distinct separations, got "
                         f"{np.unique(r).size}; sweep the separation (e.g. vars = {{d = "
                         "{from = 2, to = 10}}})")
    if np.any(~np.isfinite(r)) or np.any(r <= 0):
        raise ValueError("separations must be finite and > 0")
    sigma = np.ones_like(i) if errors is None else np.asarray(errors, float).ravel()
    bad = np.flatnonzero(~(i > (sigma if errors is not None else 0.0)) | ~np.isfinite(i))
    if bad.size:
        k = bad[0]
        raise ValueError(f"I(A:B) = {i[k]:.3g} at separation {r[k]:g} is not above its error "
                         f"{sigma[k]:.2g}; a log-log fit needs resolved values, so drop the "
                         "largest separations or tighten tol" if errors is not None else
                         f"I(A:B) = {i[k]:.3g} at separation {r[k]:g} must be > 0")
    order = np.argsort(r)
    r, i, sigma = r[order], i[order], sigma[order]
    bounds = sigma
    s_ln = np.maximum(sigma / i, SIGMA_FLOOR) if errors is not None else np.ones_like(i)
    design = np.stack([np.ones_like(r), -np.log(r)], axis=1)
    a = design / s_ln[:, None]
    coef, *_ = np.linalg.lstsq(a, np.log(i) / s_ln, rcond=None)
    dof = r.size - 2
    resid_ln = np.log(i) - design @ coef
    chi2 = float(np.sum((resid_ln / s_ln) ** 2))
    chi2_red = chi2 / dof
    cov = np.linalg.inv(a.T @ a) * (chi2_red if errors is None else max(chi2_red, 1.0))
    err = np.sqrt(np.diag(cov))
    amp = float(np.exp(coef[0]))
    fit = DecayFit(dim=0, law="I = A·r^(−p), r = separation", names=["A", "p"],
                   coefficients=np.array([amp, coef[1]]), stderr=np.array([amp * err[0], err[1]]),
                   chi2_red=chi2_red, sizes=r, values=i, sigma=bounds, residuals=np.zeros_like(i),
                   powers=[], bounds=bounds)
    fit.residuals = i - fit.predict(r)
    fit.size = "separation"
    fit.chi2, fit.dof = chi2, dof
    _judge(fit, resid_ln, errors is not None)
    return fit


def _judge(fit, resid_ln, errors_given):
    """χ² p-value and the rms of ln I's residuals relative to ln I's change over the range."""
    parts = []
    if errors_given:
        fit.p_value = float(chdtrc(fit.dof, fit.chi2))
        parts.append(f"chi2/dof {fit.chi2_red:.3g} against the error bounds (p = "
                     f"{fit.p_value:.2g})" + ("; the standard errors are scaled by "
                                              "sqrt(chi2/dof)" if fit.chi2_red > 1 else ""))
    change = float(np.ptp(np.log(fit.values)))
    rms = float(np.sqrt(np.sum(resid_ln**2) / fit.dof))
    fit.relative_misfit = rms / change if change > 0 else float("inf")
    parts.append(f"rms residual of ln I {rms:.2g} = {fit.relative_misfit:.2g} of ln I's change "
                 "over the range")
    fit.assessment = "; ".join(parts)
    if not fit.relative_misfit <= DECAY_MISFIT_LIMIT:
        fit.warning = (f"a power law does not describe the decay: the rms residual of ln I is "
                       f"{fit.relative_misfit:.2g} of its change over the range (limit "
                       f"{DECAY_MISFIT_LIMIT:g}); at these separations I(A:B) is not yet in "
                       "its asymptotic regime (or decays exponentially, in a massive field)")


def fit_decay_rows(rows, *, measure="mutual_information"):
    """Fit the decay of the stored pairs ``rows`` (one pair family) against their ``x``, the
    separation (ensembles averaged first; their standard errors join the weights)."""
    if measure != "mutual_information":
        raise ValueError(f"measure {measure!r} is not known for pairs; allowed: "
                         "mutual_information")
    pts = [r for r in average_realisations(rows)
           if r.get("x") is not None and r.get("mutual_information") is not None]
    if not pts:
        raise ValueError("no stored pair with a separation and a mutual information")
    errs = [ensemble_sigma(r["mutual_information_error_bound"],
                           r.get("mutual_information_stderr")) for r in pts]
    fit = fit_decay([r["x"] for r in pts], [r["mutual_information"] for r in pts], errs)
    fit.ensemble = any("realisations" in r for r in pts)  # the points are ensemble means
    return fit
