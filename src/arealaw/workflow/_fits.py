"""Scaling fits of entropies against region size, by weighted least squares.

The law of the dimension: in d ≥ 2, S = a·R^{d−1} + b·ln R + c (area term, logarithmic term,
constant; Srednicki 1993, Solodukhin 2008), optionally with power corrections R^p; in d = 1,
S = (c/3)·ln ℓ + const for an interval with two endpoints and (c/6)·ln ℓ for one (Calabrese &
Cardy 2004, J. Stat. Mech. P06002).  Each point is weighted by its error bound σ_i.  The bounds
cover the numerics, not the truncation of the law: when the scatter exceeds them (χ²/dof > 1),
a common model scatter σ_m is added in quadrature, σ_i² + σ_m², with σ_m chosen so that
χ²/dof = 1 (common practice, no source), and reported as ``model_sigma``.
"""

from dataclasses import dataclass, field

import numpy as np

__all__ = ["FitResult", "fit_rows", "fit_scaling"]

#: Error bounds below this (relative to max(|S|, 1)) are raised to it: no point gets infinite
#: weight.
SIGMA_FLOOR = 1e-13


@dataclass
class FitResult:
    """Coefficients of a scaling fit with standard errors and their stability.

    ``stability[name]`` lists ``(dropped, value, stderr)`` for refits without the ``dropped``
    smallest sizes; ``drift[name]`` is the largest change of the coefficient among them.
    """

    dim: int
    law: str
    names: list
    coefficients: np.ndarray
    stderr: np.ndarray
    chi2_red: float
    sizes: np.ndarray
    values: np.ndarray
    sigma: np.ndarray
    residuals: np.ndarray
    powers: list
    endpoints: int = 2
    stability: dict = field(default_factory=dict)
    drift: dict = field(default_factory=dict)
    central_charge: float = None
    central_charge_stderr: float = None
    size: str = "x"
    bounds: np.ndarray = None
    model_sigma: float = 0.0

    def __getitem__(self, name):
        return float(self.coefficients[self.names.index(name)])

    def error(self, name):
        return float(self.stderr[self.names.index(name)])

    def predict(self, sizes):
        return _design(np.asarray(sizes, float), self.dim, self.powers) @ self.coefficients

    def to_dict(self):
        d = {"dim": self.dim, "law": self.law, "size": self.size,
             "points": int(self.sizes.size), "chi2_red": float(self.chi2_red),
             "model_sigma": self.model_sigma,
             "coefficients": {n: {"value": float(v), "stderr": float(e),
                                  "drift": self.drift.get(n),
                                  "dropping_smallest": [
                                      {"dropped": k, "value": float(a), "stderr": float(b)}
                                      for k, a, b in self.stability.get(n, [])]}
                              for n, v, e in zip(self.names, self.coefficients, self.stderr)}}
        if self.central_charge is not None:
            d["central_charge"] = {"value": self.central_charge,
                                   "stderr": self.central_charge_stderr,
                                   "endpoints": self.endpoints}
        return d


def _names(dim, powers):
    if dim == 1:
        base = ["log", "const"]
    else:
        base = ["area", "log", "const"]
    return base + [f"R^{p:g}" for p in powers]


def _design(r, dim, powers):
    cols = [np.log(r), np.ones_like(r)] if dim == 1 else [r ** (dim - 1), np.log(r),
                                                          np.ones_like(r)]
    cols += [r ** p for p in powers]
    return np.stack(cols, axis=1)


def _solve(r, s, sigma, dim, powers, unit_weights=False):
    a = _design(r, dim, powers) / sigma[:, None]
    y = s / sigma
    coef, _, rank, sv = np.linalg.lstsq(a, y, rcond=None)
    if rank < a.shape[1]:
        raise ValueError(f"the sizes do not determine the {a.shape[1]} coefficients of the "
                         "law (too few distinct sizes or collinear corrections); give more sizes "
                         "or fewer corrections")
    resid = s - _design(r, dim, powers) @ coef
    dof = r.size - a.shape[1]
    chi2 = float(np.sum((resid / sigma) ** 2))
    chi2_red = chi2 / dof if dof > 0 else float("nan")
    cov = np.linalg.pinv(a.T @ a)
    if dof <= 0:
        scale = float("nan")
    elif unit_weights:  # no error bounds: the scatter is the only estimate of the noise
        scale = chi2_red
    else:
        scale = max(chi2_red, 1.0)
    return coef, np.sqrt(np.diag(cov) * scale), chi2_red, resid


def fit_scaling(sizes, values, errors=None, *, dim, powers=(), endpoints=2, max_drop=3):
    """Fit entropies ``values`` at region sizes ``sizes`` with the law of dimension ``dim``.

    Parameters
    ----------
    sizes : array_like
        Linear region size R (ball radius, box side, interval length ℓ), all > 0.
    values : array_like
        Entropies (von Neumann or one Rényi order).
    errors : array_like, optional
        Error bound of each value (weights 1/σ²); default: equal weights.
    dim : int
        Spatial dimension d: 1 gives S = a·ln ℓ + const, d ≥ 2 gives S = a·R^{d−1} + b·ln R + c.
    powers : sequence of float
        Extra correction terms R^p (e.g. ``(1,)`` for a perimeter-like term in 3-D, ``(-1,)``).
    endpoints : {1, 2}
        In 1-D, the number of region endpoints: the central charge is c = 3a (two) or 6a (one).
    max_drop : int
        Refit dropping up to this many smallest sizes to show each coefficient's stability.

    Returns
    -------
    FitResult

    Examples
    --------
    >>> import numpy as np
    >>> r = np.arange(2.0, 12.0)
    >>> fit = fit_scaling(r, 0.3 * r**2 - 0.02 * np.log(r) + 0.1, dim=3)
    >>> round(fit["area"], 6), round(fit["log"], 6)
    (0.3, -0.02)
    """
    r = np.asarray(sizes, dtype=float).ravel()
    s = np.asarray(values, dtype=float).ravel()
    if isinstance(dim, bool) or int(dim) != dim or not 1 <= dim <= 3:
        raise ValueError(f"dim={dim!r} must be 1, 2 or 3")
    dim = int(dim)
    if r.size != s.size:
        raise ValueError(f"{r.size} sizes but {s.size} values; give one value per size")
    if r.size == 0 or not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise ValueError("sizes must be finite and > 0 (a log term needs R > 0)")
    if not np.all(np.isfinite(s)):
        raise ValueError("values must be finite numbers")
    if endpoints not in (1, 2):
        raise ValueError(f"endpoints={endpoints!r} must be 1 or 2")
    powers = [float(p) for p in powers]
    if errors is None:
        sigma = np.ones_like(s)
    else:
        sigma = np.asarray(errors, dtype=float).ravel()
        if sigma.size != s.size or np.any(~np.isfinite(sigma)) or np.any(sigma < 0):
            raise ValueError("errors must be one finite bound >= 0 per value")
        sigma = np.maximum(sigma, SIGMA_FLOOR * np.maximum(np.abs(s), 1.0))
    order = np.argsort(r)
    r, s, sigma = r[order], s[order], sigma[order]
    names = _names(dim, powers)
    if r.size < len(names):
        raise ValueError(f"{r.size} points cannot determine the {len(names)} coefficients "
                         f"({', '.join(names)}); give more sizes")
    bounds = sigma
    model_sigma = 0.0
    coef, err, chi2_red, resid = _solve(r, s, sigma, dim, powers, errors is None)
    if errors is not None and chi2_red > 1.0:
        model_sigma = _model_sigma(r, s, bounds, dim, powers)
        sigma = np.sqrt(bounds**2 + model_sigma**2)
        coef, err, chi2_red, resid = _solve(r, s, sigma, dim, powers)
    fit = FitResult(dim=dim, law=_law(dim, powers), names=names, coefficients=coef, stderr=err,
                    chi2_red=chi2_red, sizes=r, values=s, sigma=sigma, residuals=resid,
                    powers=powers, endpoints=endpoints, bounds=bounds,
                    model_sigma=float(model_sigma))
    for k in range(1, int(max_drop) + 1):
        if r.size - k <= len(names):
            break
        c_k, e_k, _, _ = _solve(r[k:], s[k:], sigma[k:], dim, powers, errors is None)
        for i, n in enumerate(names):
            fit.stability.setdefault(n, []).append((k, float(c_k[i]), float(e_k[i])))
    for i, n in enumerate(names):
        if n in fit.stability:
            fit.drift[n] = max(abs(v - coef[i]) for _, v, _ in fit.stability[n])
    if dim == 1:
        factor = 3.0 if endpoints == 2 else 6.0
        fit.central_charge = factor * float(coef[0])
        fit.central_charge_stderr = factor * float(err[0])
    return fit


def _model_sigma(r, s, bounds, dim, powers):
    """The scatter σ_m, added in quadrature to the bounds, that makes χ²/dof = 1 (bisection)."""
    lo, hi = 0.0, 10.0 * float(np.ptp(s)) + 1e-300
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if _solve(r, s, np.sqrt(bounds**2 + mid**2), dim, powers)[2] > 1.0:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-12 * hi:
            break
    return hi


def _law(dim, powers):
    extra = "".join(f" + e·R^{p:g}" for p in powers)
    if dim == 1:
        return "S = a·ln ℓ + const" + extra
    return f"S = a·R^{dim - 1} + b·ln R + c" + extra


def fit_rows(rows, *, measure="entropy", size="x", powers=(), endpoints=2, max_drop=3):
    """Fit stored sweep rows (dicts with ``x``, ``dim`` and the measure) of one family.

    ``measure`` is ``'entropy'`` or ``'renyi:N'`` (e.g. ``'renyi:2'``); the error bounds stored
    with each value are the weights.  ``size='x'`` fits against the swept value (ball radius,
    box side); ``size='bonds'`` (d ≥ 2) against the area-equivalent size R = B^{1/(d−1)} of the
    number B of couplings cut by the region's boundary, so that the area coefficient is the
    entropy per cut bond (lattice balls have jagged surfaces; B follows them exactly).  The
    logarithmic coefficient is the same for both choices, since ln R changes by a constant.
    """
    if size not in ("x", "bonds"):
        raise ValueError(f"size={size!r} is not known; allowed: x (swept value), bonds")
    pts = [r for r in rows if r.get("x") is not None]
    if not pts:
        raise ValueError("this family has no swept size (x); fits need a family with a swept "
                         "region size such as ball = {from = 2, to = 6}")
    dims = {r["dim"] for r in pts}
    if len(dims) != 1:
        raise ValueError(f"the family mixes lattices of dimensions {sorted(dims)}; fit one at a "
                         "time")
    if measure == "entropy":
        vals = [r["entropy"] for r in pts]
        errs = [r["error_bound"] for r in pts]
    elif measure.startswith("renyi:"):
        order = measure.split(":", 1)[1]
        if any(order not in r["renyi"] for r in pts):
            have = sorted(pts[0]["renyi"])
            raise ValueError(f"measure {measure!r} was not computed; stored Rényi orders: "
                             f"{', '.join(have) if have else 'none'}")
        vals = [r["renyi"][order] for r in pts]
        errs = [r["renyi_error_bound"][order] for r in pts]
    else:
        raise ValueError(f"measure {measure!r} is not known; allowed: entropy, renyi:N")
    dim = dims.pop()
    if size == "bonds":
        if dim < 2 or any(r.get("boundary_bonds") in (None, 0) for r in pts):
            raise ValueError("size='bonds' needs d >= 2 and a finite lattice (boundary bonds "
                             "stored with every case); use size='x'")
        sizes = [float(r["boundary_bonds"]) ** (1.0 / (dim - 1)) for r in pts]
    else:
        sizes = [r["x"] for r in pts]
    fit = fit_scaling(sizes, vals, errs, dim=dim, powers=powers, endpoints=endpoints,
                      max_drop=max_drop)
    fit.size = size
    return fit
