"""Figures of a stored sweep (matplotlib ``Figure`` objects directly: no pyplot, no global backend).

* :func:`scaling_figure` — S against the area term R^{d−1} (ln ℓ in 1-D) with the fit, and the
  residuals with the error bounds;
* :func:`energies_figure` — the lowest entanglement energies of one case against their index;
* :func:`region_figure` — a 2-D slice of the region through its centre;
* :func:`mode_figure` — the same slice of the most entangled modes (largest ν).
"""

import io

import numpy as np
from matplotlib.figure import Figure

__all__ = ["decay_figure", "energies_figure", "entangled_modes", "figure_png", "mode_figure", "region_figure",
           "scaling_figure"]


def figure_png(fig, path=None, *, dpi=110):
    """PNG bytes of ``fig`` (and write them to ``path`` when given)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight")
    data = buf.getvalue()
    if path is not None:
        with open(path, "wb") as f:
            f.write(data)
    return data


def scaling_figure(fit, *, title="", measure="entropy"):
    """Entropy against the area term with the fitted law, and the residuals.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.workflow._fits import fit_scaling
    >>> r = np.arange(2.0, 9.0)
    >>> fig = scaling_figure(fit_scaling(r, 0.3 * r**2 + 0.1, dim=3))
    >>> len(fig.axes)
    2
    """
    fig = Figure(figsize=(6.4, 6.0))
    ax, axr = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1.3]})
    r = fit.sizes
    grid = np.linspace(r.min(), r.max(), 200)
    if fit.dim == 1:
        x, xg = np.log(r), np.log(grid)
        xlabel = "ln ℓ_c  (chord length)" if getattr(fit, "size", "x") == "chord" else "ln ℓ"
    else:
        x, xg = r ** (fit.dim - 1), grid ** (fit.dim - 1)
        if getattr(fit, "size", "x") == "bonds":
            xlabel = "boundary area (couplings cut)"
        else:
            xlabel = ("R" if fit.dim == 2 else "R²") + "  (area term)"
    ax.errorbar(x, fit.values, yerr=fit.sigma, fmt="o", ms=4, label=measure)
    ax.plot(xg, fit.predict(grid), "-", lw=1.2, label=fit.law)
    ax.set_ylabel(measure)
    ax.legend(loc="best", fontsize=8)
    ax.set_title(title or fit.law, fontsize=10)
    axr.axhline(0.0, color="0.5", lw=0.8)
    axr.errorbar(x, fit.residuals, yerr=fit.sigma, fmt="o", ms=3)
    axr.set_ylabel("residual")
    axr.set_xlabel(xlabel)
    return fig


def decay_figure(fit, *, title=""):
    """Mutual information against separation on log-log axes with the fitted power law, and the
    residuals relative to the fit.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.workflow._decay import fit_decay
    >>> r = np.array([3.0, 4.0, 6.0, 9.0])
    >>> len(decay_figure(fit_decay(r, 0.2 * r**-3.0)).axes)
    2
    """
    fig = Figure(figsize=(6.4, 6.0))
    ax, axr = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1.3]})
    r = fit.sizes
    grid = np.geomspace(r.min(), r.max(), 200)
    ax.errorbar(r, fit.values, yerr=fit.sigma, fmt="o", ms=4, label="I(A:B)")
    ax.plot(grid, fit.predict(grid), "-", lw=1.2,
            label=f"{fit.law}: p = {fit['p']:.4g} ± {fit.error('p'):.2g}")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_ylabel("mutual information I(A:B)")
    ax.legend(loc="best", fontsize=8)
    ax.set_title(title or fit.law, fontsize=10)
    axr.axhline(0.0, color="0.5", lw=0.8)
    pred = fit.predict(r)
    axr.errorbar(r, fit.residuals / pred, yerr=fit.sigma / pred, fmt="o", ms=3)
    axr.set_ylabel("(I − fit) / fit")
    axr.set_xlabel("separation r of the centres (lattice units)")
    return fig


def energies_figure(energies, *, title=""):
    """Entanglement energies ε_k (ν = ½ coth(ε/2)) against their index k."""
    fig = Figure(figsize=(5.6, 3.6))
    ax = fig.subplots()
    e = np.array([np.inf if isinstance(v, str) or v is None else v for v in energies], float)
    k = np.arange(e.size)
    finite = np.isfinite(e)
    ax.plot(k[finite], e[finite], "o-", ms=4)
    ax.set_xlabel("index k")
    ax.set_ylabel("entanglement energy ε_k")
    ax.set_title(title, fontsize=10)
    return fig


def _slice(network, region, values, extra=None):
    """Values on the region's sites (and ``extra`` = (region, values)) → a 2-D picture through
    the region's centre."""
    if network.lattice is None or network.is_infinite:
        raise ValueError("region pictures need a finite lattice")
    full = np.zeros(network.n_sites, dtype=float)
    full[region.indices] = values
    if extra is not None:
        full[extra[0].indices] = extra[1]
    grid = full.reshape(network.index_shape)
    where = ""
    if grid.ndim == 3:
        c = np.asarray(network.coords(region.indices), float).mean(axis=0)
        i = int(np.floor(c[0] + 0.5))
        grid, where = grid[i], f" (slice at axis-0 coordinate {i})"
    elif grid.ndim == 1:
        grid = grid[None, :]
    return grid, where


def entangled_modes(network, region, *, count=2, method="auto", tol=1e-8):
    """Site profiles u_k of the ``count`` most entangled modes of ``region`` (largest ν).

    With X_A = L Lᵀ and Lᵀ P_A L w = ν² w, u = L w is the mode's profile (an eigenvector of
    X_A P_A, unit norm).  Returns (nu, u of shape (count, region.size)); needs a method that
    gives the region's blocks.

    Examples
    --------
    >>> from arealaw import hypercubic, box
    >>> net = hypercubic((10, 10), mass=0.2)
    >>> nu, amp = entangled_modes(net, box(net, [4, 4]), count=1)
    >>> bool(nu[0] > 0.5), amp.shape
    (True, (1, 16))
    """
    import scipy.linalg

    from ..methods._registry import choose_method
    choice = choose_method(network, [region], method, tol=tol)
    b = choice.method.blocks(network, region.indices, tol=tol)
    chol = scipy.linalg.cholesky(0.5 * (b.x + b.x.T), lower=True)
    w = chol.T @ b.p @ chol
    nu2, vec = scipy.linalg.eigh(0.5 * (w + w.T))
    top = np.argsort(nu2)[::-1][:count]
    u = chol @ vec[:, top]
    u /= np.linalg.norm(u, axis=0)
    return np.sqrt(np.maximum(nu2[top], 0.0)), u.T


def mode_figure(network, region, *, count=2, title=""):
    """Slices of the ``count`` most entangled modes' amplitudes (see :func:`entangled_modes`)."""
    nu, u = entangled_modes(network, region, count=count)
    amp = np.abs(u)
    fig = Figure(figsize=(4.4 * len(nu), 4.0))
    axes = np.atleast_1d(fig.subplots(1, len(nu)))
    for k, ax in enumerate(axes):
        grid, where = _slice(network, region, amp[k])
        im = ax.imshow(grid, origin="lower", cmap="magma", interpolation="nearest")
        fig.colorbar(im, ax=ax, shrink=0.8)
        ax.set_title(f"mode {k + 1}: ν = {nu[k]:.4g}{where}", fontsize=8)
    fig.suptitle(title or f"most entangled modes of {region.description}", fontsize=9)
    return fig


def region_figure(network, region, *, region_b=None, title=""):
    """A 2-D slice of the lattice through the region's centre (axis 0 fixed in 3-D)."""
    shape = network.index_shape
    grid, where = _slice(network, region, 1.0, None if region_b is None else (region_b, 2.0))
    fig = Figure(figsize=(4.8, 4.2))
    ax = fig.subplots()
    ax.imshow(grid, origin="lower", cmap="Blues" if region_b is None else "viridis",
              vmin=0, vmax=2 if region_b is not None else 1, interpolation="nearest")
    ax.set_title((title or region.description) + where, fontsize=9)
    ax.set_xlabel("last axis")
    ax.set_ylabel("middle axis" if len(shape) == 3 else ("first axis" if len(shape) == 2 else ""))
    return fig
