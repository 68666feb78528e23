"""Scaling fits of entropies against region size, by weighted least squares.

The law of the dimension: in d ≥ 2, S = a·R^{d−1} + b·ln R + c (area term, logarithmic term,
constant; Srednicki 1993, Solodukhin 2008), optionally with power corrections R^p; in d = 1,
S = (c/3)·ln ℓ + const for an interval with two endpoints and (c/6)·ln ℓ for one (Calabrese &
Cardy 2004, J. Stat. Mech. P06002).  On finite chains the interval length ℓ may be replaced by
the conformal chord length (:func:`chord_length`, same source, eqs. for the periodic and the open
chain), which removes the finite-size curvature of S(ℓ).

Each point is weighted by its error bound σ_i.  How well the law describes the data is judged,
and reported, before anything is added to the weights:

* ``chi2``, ``dof``, ``chi2_red`` and ``p_value``: χ² of the residuals with the certified bounds
  as σ_i, and the probability of a χ² at least as large if the law held (χ² distribution with
  ``dof`` degrees of freedom).  The bounds are worst-case, so p < 10⁻³ means the residuals exceed
  what the numerics can explain: the law is at best an approximation at these sizes.
* ``relative_misfit``: the rms residual over the leading term's change across the fitted range
  (a·Δln ℓ in 1-D, a·ΔR^{d−1} otherwise).  It does not depend on the bounds.  Above
  :data:`MISFIT_LIMIT` the law does not describe the data and ``warning`` says so in words; the
  coefficients are then not to be trusted whatever their standard errors.

When the residuals exceed the bounds (p < :data:`P_VALUE_LIMIT`) a common model scatter σ_m is
added in quadrature, σ_i² + σ_m², with σ_m chosen so that χ²/dof would be 1 (common practice,
no source), so that the standard errors reflect the scatter; σ_m is reported as
``model_sigma``, and
``chi2_red`` stays the value before it.
"""

import math
from dataclasses import dataclass, field

import numpy as np
# chi-square tail from scipy.special: importing scipy.stats would cost ~0.5 s at every command
from scipy.special import chdtrc

from .._arguments import real_number
from ._ensembles import average_realisations, ensemble_sigma

__all__ = ["FitResult", "chord_length", "fit_rows", "fit_scaling"]

#: Error bounds below this (relative to max(|S|, 1)) are raised to it: no point gets infinite
#: weight.
SIGMA_FLOOR = 1e-13

#: Largest rms residual, relative to the leading term's change over the fitted range, at which a
#: law is said to describe the data.  A law whose truncation leaves 0.1 % of the signal is still
#: a fair description; a wrong size variable leaves percents (ln ℓ on a finite chain: 5-30 %,
#: against 1e-5 for the chord length; measured on the chains of tests/test_fits.py).
MISFIT_LIMIT = 1e-3

#: χ² p-value below which the residuals are said to exceed the certified error bounds.
P_VALUE_LIMIT = 1e-3


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
    chi2: float = float("nan")
    dof: int = 0
    p_value: float = None
    relative_misfit: float = float("nan")
    warning: str = None
    assessment: str = ""

    def __getitem__(self, name):
        return float(self.coefficients[self.names.index(name)])

    def error(self, name):
        """Standard error of the fitted parameter ``name``."""
        return float(self.stderr[self.names.index(name)])

    def predict(self, sizes):
        """The fitted law evaluated at ``sizes``."""
        return _design(np.asarray(sizes, float), self.dim, self.powers) @ self.coefficients

    def to_dict(self):
        """JSON-ready dict of the fit (law, parameters, errors, residual statistics)."""
        d = {"dim": self.dim, "law": self.law, "size": self.size,
             "points": int(self.sizes.size), "chi2_red": float(self.chi2_red),
             "chi2": float(self.chi2), "dof": int(self.dof), "p_value": self.p_value,
             "model_sigma": self.model_sigma, "relative_misfit": float(self.relative_misfit),
             "warning": self.warning, "assessment": self.assessment,
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


def chord_length(ell, n, boundary):
    """Conformal chord length of an interval of ``ell`` sites in a finite chain of ``n`` sites.

    The finite-size forms of Calabrese & Cardy 2004 (J. Stat. Mech. P06002, sec. 3.2 and 3.3):
    periodic chain, any interval, S = (c/3) ln[(L/π) sin(πℓ/L)] + c′; open chain, interval at
    an end, S = (c/6) ln[(2L/π) sin(πℓ/L)] + c″.  The lattice fixes L and where the cut sits:
    periodic L = n; a Dirichlet chain has its walls at sites −1 and n, so L = n + 1 and the cut,
    in the middle of the cut bond, is ℓ + ½ from the wall (this makes S(ℓ) = S(n − ℓ) exact);
    free ("open") ends reflect half a bond out, L = n.  Returns the argument of the logarithm,
    so that S = a·ln(chord) + const with a = c/3 (periodic) or c/6 (open ends).

    Examples
    --------
    >>> round(float(chord_length(8, 16, "periodic")), 6)    # ℓ = N/2: N/π
    5.092958
    >>> bool(np.isclose(chord_length(3, 20, "dirichlet"), chord_length(17, 20, "dirichlet")))
    True
    """
    ell = np.asarray(ell, dtype=float)
    if boundary == "periodic":
        length, x, factor = float(n), ell, 1.0
    elif boundary == "dirichlet":
        length, x, factor = float(n) + 1.0, ell + 0.5, 2.0
    elif boundary == "open":
        length, x, factor = float(n), ell, 2.0
    else:
        raise ValueError(f"boundary={boundary!r} is not known; allowed: periodic, dirichlet, "
                         "open")
    if np.any(ell < 1) or np.any(ell >= n):
        raise ValueError(f"interval lengths must lie in 1..{int(n) - 1} for a chain of {n} "
                         "sites")
    return factor * length / np.pi * np.sin(np.pi * x / length)


def _judge(fit, r, errors_given):
    """Fill χ² before any model scatter, the relative misfit, and the verdict in words."""
    lead = np.log(r) if fit.dim == 1 else r ** (fit.dim - 1)
    change = abs(float(fit.coefficients[0])) * float(np.ptp(lead))
    rms = float(np.sqrt(np.sum(fit.residuals**2) / max(fit.dof, 1)))
    fit.relative_misfit = rms / change if change > 0 else float("inf")
    lead_name = "ln ℓ" if fit.dim == 1 else f"R^{fit.dim - 1}"
    parts = []
    if errors_given and fit.dof > 0:
        fit.p_value = float(chdtrc(fit.dof, fit.chi2))
        if fit.p_value < P_VALUE_LIMIT:
            parts.append(f"the residuals exceed the certified error bounds (chi2/dof "
                         f"{fit.chi2_red:.3g}, p = {fit.p_value:.2g}); the standard errors "
                         f"include a model scatter {fit.model_sigma:.2g}")
        else:
            parts.append(f"the law describes the data within their error bounds (p = "
                         f"{fit.p_value:.2g})")
    parts.append(f"rms residual {rms:.2g} = {fit.relative_misfit:.2g} of the {lead_name} "
                 "term's change over the range")
    fit.assessment = "; ".join(parts)
    if not fit.relative_misfit <= MISFIT_LIMIT:
        hint = (" (a finite chain: try the chord length, size 'chord')" if fit.dim == 1
                and fit.size != "chord" else " (add corrections, larger sizes, or another "
                "size variable)")
        fit.warning = (f"the law does not describe the data: its rms residual is "
                       f"{fit.relative_misfit:.2g} of the {lead_name} term's change over the "
                       f"range (limit {MISFIT_LIMIT:g}), so the coefficients are not "
                       f"reliable{hint}")


def fit_scaling(sizes, values, errors=None, *, dim, powers=(), endpoints=2, max_drop=3,
                size="x"):
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
    size : str
        Name of the size variable, recorded in the result (``'chord'`` names ln ℓ_c in 1-D).

    Returns
    -------
    FitResult
        With ``chi2``/``chi2_red``/``p_value`` against the bounds alone, ``model_sigma``,
        ``relative_misfit``, ``assessment`` (in words) and ``warning`` (None, or why the law
        does not describe the data; see the module docstring for the criteria).

    Examples
    --------
    >>> import numpy as np
    >>> r = np.arange(2.0, 12.0)
    >>> fit = fit_scaling(r, 0.3 * r**2 - 0.02 * np.log(r) + 0.1, dim=3)
    >>> round(fit["area"], 6), round(fit["log"], 6), fit.warning
    (0.3, -0.02, None)
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
    powers = [real_number(p, "power") for p in powers]
    if any(not math.isfinite(p) or p == 0 for p in powers) or len(set(powers)) < len(powers):
        raise ValueError(f"powers {powers} must be distinct finite numbers other than 0 (R^0 "
                         "is the constant term, already in the fit)")
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
    dof = r.size - len(names)
    coef, err, chi2_red, resid = _solve(r, s, sigma, dim, powers, errors is None)
    chi2 = chi2_red * dof if dof > 0 else float("nan")
    chi2_red_bounds = chi2_red
    if errors is not None and dof > 0 and chdtrc(dof, chi2) < P_VALUE_LIMIT:
        model_sigma = _model_sigma(r, s, bounds, dim, powers)
        sigma = np.sqrt(bounds**2 + model_sigma**2)
        coef, err, _, resid = _solve(r, s, sigma, dim, powers)
    fit = FitResult(dim=dim, law=_law(dim, powers, size), names=names, coefficients=coef,
                    stderr=err, chi2_red=chi2_red_bounds, sizes=r, values=s, sigma=sigma,
                    residuals=resid,
                    powers=powers, endpoints=endpoints, bounds=bounds,
                    model_sigma=float(model_sigma), chi2=chi2, dof=dof, size=size)
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
    _judge(fit, r, errors is not None)
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


def _law(dim, powers, size="x"):
    extra = "".join(f" + e·R^{p:g}" for p in powers)
    if dim == 1:
        if size == "chord":
            return "S = a·ln ℓ_c + const, ℓ_c the chord length" + extra
        return "S = a·ln ℓ + const" + extra
    return f"S = a·R^{dim - 1} + b·ln R + c" + extra


def fit_rows(rows, *, measure="entropy", size="x", powers=(), endpoints=2, max_drop=3):
    """Fit stored sweep rows (dicts with ``x``, ``dim`` and the measure) of one family.

    ``measure`` is ``'entropy'``, ``'renyi:N'`` (e.g. ``'renyi:2'``) or ``'log_negativity'``
    (families with ``negativity = true``: E_N of the region against the rest; pairs: E_N(A:B));
    the error bounds stored with each value are the weights.  Disorder ensembles (a swept seed) are averaged first
    (:func:`~arealaw.workflow._ensembles.average_realisations`): their weights are the mean
    bound and the standard error of the mean in quadrature.  ``size='x'`` fits against the swept value (ball radius,
    box side); ``size='bonds'`` (d ≥ 2) against the area-equivalent size R = B^{1/(d−1)} of the
    number B of couplings cut by the region's boundary, so that the area coefficient is the
    entropy per cut bond (lattice balls have jagged surfaces; B follows them exactly).  The
    logarithmic coefficient is the same for both choices, since ln R changes by a constant.
    ``size='chord'`` (finite chains) fits against the conformal chord length of the interval
    (:func:`chord_length`): any interval of a periodic chain (two endpoints), or an interval at
    an end of a Dirichlet or open chain (one endpoint); ``endpoints`` then follows the boundary.
    """
    if size not in ("x", "bonds", "chord"):
        raise ValueError(f"size={size!r} is not known; allowed: x (swept value), bonds, chord")
    pts = [r for r in average_realisations(rows) if r.get("x") is not None]
    if not pts:
        raise ValueError("this family has no swept size (x); fits need a family with a swept "
                         "region size such as ball = {from = 2, to = 6}")
    dims = {r["dim"] for r in pts}
    if len(dims) != 1:
        raise ValueError(f"the family mixes lattices of dimensions {sorted(dims)}; fit one at a "
                         "time")
    if measure == "entropy":
        vals = [r["entropy"] for r in pts]
        errs = [ensemble_sigma(r["error_bound"], r.get("entropy_stderr")) for r in pts]
    elif measure.startswith("renyi:"):
        order = measure.split(":", 1)[1]
        if any(order not in r["renyi"] for r in pts):
            have = sorted(pts[0]["renyi"])
            raise ValueError(f"measure {measure!r} was not computed; stored Rényi orders: "
                             f"{', '.join(have) if have else 'none'}")
        vals = [r["renyi"][order] for r in pts]
        errs = [ensemble_sigma(r["renyi_error_bound"][order],
                               (r.get("renyi_stderr") or {}).get(order)) for r in pts]
    elif measure == "log_negativity":
        if any(r.get("log_negativity") is None for r in pts):
            raise ValueError("measure 'log_negativity' was not computed for this family; add "
                             "negativity = true to it in the scenario")
        vals = [r["log_negativity"] for r in pts]
        errs = [ensemble_sigma(r["log_negativity_error_bound"], r.get("log_negativity_stderr"))
                for r in pts]
    else:
        raise ValueError(f"measure {measure!r} is not known; allowed: entropy, renyi:N, "
                         "log_negativity")
    dim = dims.pop()
    if size == "bonds":
        if dim < 2 or any(r.get("boundary_bonds") in (None, 0) for r in pts):
            raise ValueError("size='bonds' needs d >= 2 and a finite lattice (boundary bonds "
                             "stored with every case); use size='x'")
        sizes = [float(r["boundary_bonds"]) ** (1.0 / (dim - 1)) for r in pts]
    elif size == "chord":
        if dim != 1:
            raise ValueError("size='chord' is for finite chains (d = 1); use size='x' or 'bonds'")
        sizes, endpoints = _chords(pts)
    else:
        sizes = [r["x"] for r in pts]
    fit = fit_scaling(sizes, vals, errs, dim=dim, powers=powers, endpoints=endpoints,
                      max_drop=max_drop, size=size)
    fit.ensemble = any("realisations" in r for r in pts)  # the points are ensemble means
    return fit


def _chords(rows):
    """Chord lengths of the stored intervals, and the endpoint count their boundary implies."""
    out, kinds = [], set()
    for row in rows:
        spec = row.get("spec") or {}
        net, reg = spec.get("network") or {}, spec.get("region") or {}
        shape = net.get("shape")
        if not shape or len(shape) != 1 or str(shape[0]) == "inf":
            raise ValueError("size='chord' needs a finite chain (shape = [N]); for infinite "
                             "chains use size='x'")
        n = int(shape[0])
        bc = net.get("boundary") or "dirichlet"
        bc = bc[0] if isinstance(bc, (list, tuple)) else bc
        ell = int(row["region_sites"])
        if "half_space" in reg:
            start = 0
        elif "box" in reg and reg.get("origin") is not None:
            start = int(list(reg["origin"])[0]) if isinstance(reg["origin"], (list, tuple)) \
                else int(reg["origin"])
        elif "slab" in reg:
            start = int(reg["slab"][1])
        else:
            start = None
        if bc != "periodic" and start not in (0, n - ell):
            raise ValueError(f"size='chord' on a {bc} chain needs intervals at an end (box with "
                             "origin 0, or half_space); the chord form of a middle interval "
                             "of an open chain is not a single logarithm")
        if bc == "periodic" and start is None and "box" not in reg:
            raise ValueError("size='chord' needs interval regions (box, slab or half_space)")
        kinds.add(bc)
        out.append(float(chord_length(ell, n, bc)))
    if len(kinds) != 1:
        raise ValueError(f"the family mixes boundaries {sorted(kinds)}; fit one at a time")
    return out, 2 if kinds.pop() == "periodic" else 1
