"""Figures of a stored sweep (matplotlib ``Figure`` objects directly: no pyplot, no global backend).

* :func:`scaling_figure` — S against the area term R^{d−1} (ln ℓ in 1-D) with the fit, and the
  residuals with the error bars the fit used (said in the axis label);
* :func:`decay_figure` — mutual information against separation, log-log, with the power law;
* :func:`energies_figure` — the lowest entanglement energies of one case against their index;
* :func:`region_figure` — regions A (and B) on a slice through their centre, with a legend;
* :func:`mode_figure` — the most entangled modes (largest ν): line plots on chains, images of a
  slice (cropped to the region and a margin) in 2-D and 3-D, with labelled colour bars.

:func:`save_figure` renders a figure once per requested format (laying it out once) and returns
the PNG bytes (the report embeds those), so ``plot`` and ``report`` never draw a figure twice.
"""

import io
from pathlib import Path

import numpy as np

__all__ = ["FORMATS", "decay_figure", "energies_figure", "figure_png", "mode_figure",
           "region_figure", "save_figure", "scaling_figure"]

#: File formats a figure may be written in.
FORMATS = ("png", "svg", "pdf")
#: Sites of margin around a region in cropped slices.
MARGIN = 3
#: Titles sit at the top of their axes, whose ticks are at the bottom: a fixed position spares
#: matplotlib's automatic title placement (it measures every tick label at each rendering).
#: The residual panels keep automatic placement, as their offset text (×10⁻⁶) sits at the top.
TITLE_Y = 1.0


#: Margins (inches: left, right, bottom, top) of figures laid out by hand.  Constrained layout
#: measures every tick label twice per rendering and took a quarter of ``report``'s time; the
#: line plots have labels of known extent, so fixed margins serve them.  Image panels with
#: colour bars keep constrained layout.
MARGINS = (0.85, 0.2, 0.55, 0.35)


def _figure(**kwargs):
    # matplotlib is imported on first use: ``import arealaw`` must stay light
    from matplotlib.figure import Figure
    return Figure(**kwargs)


def _fixed_grid(figsize, **gridspec):
    """gridspec_kw placing the axes inside :data:`MARGINS` of a figure of ``figsize``."""
    (w, h), (left, right, bottom, top) = figsize, MARGINS
    return {"left": left / w, "right": 1 - right / w, "bottom": bottom / h, "top": 1 - top / h,
            **gridspec}


def figure_png(fig, path=None, *, dpi=110):
    """PNG bytes of ``fig`` (and write them to ``path`` when given)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight")
    data = buf.getvalue()
    if path is not None:
        with open(path, "wb") as f:
            f.write(data)
    return data


def save_figure(fig, stem=None, formats=("png",), *, dpi=110, png=True):
    """Write ``fig`` as ``stem.<format>`` for each of ``formats`` (when ``stem`` is given) and
    return (PNG bytes, paths written); the PNG is rendered even when ``formats`` leaves it out
    unless ``png=False`` (then the bytes are None).

    Each format is rendered once, and the layout is computed once: the constrained layout of the
    first rendering is kept for the others.  SVG files keep their text as text (no glyph paths:
    smaller files, drawn faster, and the labels stay searchable).

    Examples
    --------
    >>> fig = _figure()
    >>> _ = fig.subplots().plot([0, 1], [1, 0])
    >>> png, paths = save_figure(fig)
    >>> png[:4], paths
    (b'\x89PNG', [])
    """
    from matplotlib import rc_context
    unknown = [f for f in formats if f not in FORMATS]
    if unknown:
        raise ValueError(f"figure format {unknown[0]!r} is not known; allowed: "
                         f"{', '.join(FORMATS)}")
    data_png, paths = None, []
    for i, fmt in enumerate(dict.fromkeys((["png"] if png else []) + list(formats))):
        if i == 1:  # the first rendering placed the axes: keep them where they are
            fig.set_layout_engine("none")
        buf = io.BytesIO()
        with rc_context({"svg.fonttype": "none"}):
            fig.savefig(buf, format=fmt, dpi=dpi)  # constrained layout: no tight-bbox redraw
        data = buf.getvalue()
        if fmt == "png":
            data_png = data
        if stem is not None and fmt in formats:
            path = Path(f"{stem}.{fmt}")
            path.write_bytes(data)
            paths.append(path)
    return data_png, paths


def error_bar_label(fit):
    """What the error bars of a fit's points are, in words."""
    parts = ["certified error bounds"]
    if getattr(fit, "ensemble", False):
        parts.append("ensemble standard errors")
    if getattr(fit, "model_sigma", 0.0):
        parts.append(f"model scatter {fit.model_sigma:.2g}")
    return "error bars: " + " ⊕ ".join(parts)


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
    fig = _figure(figsize=(6.4, 6.0))
    ax, axr = fig.subplots(2, 1, sharex=True, gridspec_kw=_fixed_grid(
        (6.4, 6.0), height_ratios=[3, 1.3], hspace=0.22))
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
    ax.errorbar(x, fit.values, yerr=fit.sigma, fmt="o", ms=4,
                label=measure + (" (ensemble means)" if getattr(fit, "ensemble", False) else ""))
    ax.plot(xg, fit.predict(grid), "-", lw=1.2, label=fit.law)
    ax.set_ylabel(measure)
    ax.legend(loc="best", fontsize=8)
    ax.set_title(title or fit.law, fontsize=10, y=TITLE_Y)
    axr.axhline(0.0, color="0.5", lw=0.8)
    axr.errorbar(x, fit.residuals, yerr=fit.sigma, fmt="o", ms=3)
    axr.set_ylabel("residual")
    axr.set_xlabel(xlabel)
    axr.set_title(error_bar_label(fit), fontsize=8, loc="left")
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
    fig = _figure(figsize=(6.4, 6.0))
    ax, axr = fig.subplots(2, 1, sharex=True, gridspec_kw=_fixed_grid(
        (6.4, 6.0), height_ratios=[3, 1.3], hspace=0.22))
    r = fit.sizes
    grid = np.geomspace(r.min(), r.max(), 200)
    ax.errorbar(r, fit.values, yerr=fit.sigma, fmt="o", ms=4, label="I(A:B)")
    ax.plot(grid, fit.predict(grid), "-", lw=1.2,
            label=f"{fit.law}: p = {fit['p']:.4g} ± {fit.error('p'):.2g}")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_ylabel("mutual information I(A:B)")
    ax.legend(loc="best", fontsize=8)
    ax.set_title(title or fit.law, fontsize=10, y=TITLE_Y)
    axr.axhline(0.0, color="0.5", lw=0.8)
    pred = fit.predict(r)
    axr.errorbar(r, fit.residuals / pred, yerr=fit.sigma / pred, fmt="o", ms=3)
    axr.set_title(error_bar_label(fit), fontsize=8, loc="left")
    axr.set_ylabel("(I − fit) / fit")
    axr.set_xlabel("separation r of the centres (lattice units)")
    return fig


def energies_figure(energies, *, title=""):
    """Entanglement energies ε_k (ν = ½ coth(ε/2)) against their index k."""
    fig = _figure(figsize=(5.6, 3.6))
    ax = fig.subplots(gridspec_kw=_fixed_grid((5.6, 3.6)))
    e = np.array([np.inf if isinstance(v, str) or v is None else v for v in energies], float)
    k = np.arange(e.size)
    finite = np.isfinite(e)
    ax.plot(k[finite], e[finite], "o-", ms=4)
    ax.set_xlabel("index k")
    ax.set_ylabel("entanglement energy ε_k")
    ax.set_title(title, fontsize=10, y=TITLE_Y)
    return fig


def _slice(network, region, values, extra=None, *, margin=None):
    """Values on the region's sites (and ``extra`` = (region, values)) → a 2-D picture through
    the region's centre (axis 0 fixed in 3-D), cropped to the regions plus ``margin`` sites
    when given.  Returns (grid, where, (row offset, column offset))."""
    if network.lattice is None or network.is_infinite:
        raise ValueError("region pictures need a finite lattice")
    full = np.zeros(network.n_sites, dtype=float)
    full[region.indices] = values
    idx = region.indices
    if extra is not None:
        full[extra[0].indices] = extra[1]
        idx = np.concatenate([idx, extra[0].indices])
    grid = full.reshape(network.index_shape)
    coords = np.asarray(network.coords(idx))
    where = ""
    if grid.ndim == 3:
        c = np.asarray(network.coords(region.indices), float).mean(axis=0)
        i = int(np.floor(c[0] + 0.5))
        grid, where = grid[i], f" (slice at axis-0 coordinate {i})"
        coords = coords[:, 1:]
    elif grid.ndim == 1:
        grid, coords = grid[None, :], np.stack([np.zeros(len(coords), int), coords[:, 0]], 1)
    offset = (0, 0)
    if margin is not None:
        lo = np.maximum(coords.min(axis=0) - margin, 0)
        hi = np.minimum(coords.max(axis=0) + margin + 1, grid.shape)
        grid, offset = grid[lo[0]:hi[0], lo[1]:hi[1]], (int(lo[0]), int(lo[1]))
    return grid, where, offset


def _extent(grid, offset):
    """imshow extent so that the axes show lattice coordinates of the cropped slice."""
    r0, c0 = offset
    return (c0 - 0.5, c0 + grid.shape[1] - 0.5, r0 - 0.5, r0 + grid.shape[0] - 0.5)


def mode_figure(network, region, nu, u, *, title="", margin=MARGIN):
    """Profiles of entangled modes of ``region`` (``nu``, ``u`` as :func:`arealaw.region_modes`
    returns them): line plots against the site on a chain, else images of |u_k| on a slice
    through the region's centre cropped to the region plus ``margin`` sites, each with a
    labelled colour bar.

    Examples
    --------
    >>> from arealaw import hypercubic, box, region_modes
    >>> net = hypercubic(30, mass=0.2)
    >>> reg = box(net, 8, origin=4)
    >>> fig = mode_figure(net, reg, *region_modes(net, reg, count=2))
    >>> [ax.get_xlabel() for ax in fig.axes]
    ['site (lattice units)']
    """
    nu, u = np.atleast_1d(nu), np.atleast_2d(u)
    if network.ndim == 1:
        fig = _figure(figsize=(6.4, 3.8))
        ax = fig.subplots(gridspec_kw=_fixed_grid((6.4, 3.8)))
        x = np.asarray(network.coords(region.indices))[:, 0]
        for k in range(len(nu)):
            sign = np.sign(u[k][np.argmax(np.abs(u[k]))]) or 1.0
            ax.plot(x, sign * u[k], "o-", ms=3, label=f"mode {k + 1}: ν = {nu[k]:.6g}")
        ax.axhline(0.0, color="0.6", lw=0.6)
        ax.set_xlabel("site (lattice units)")
        ax.set_ylabel("amplitude u_k (unit norm)")
        ax.legend(loc="best", fontsize=8)
        ax.set_title(title or f"most entangled modes of {region.description}", fontsize=9,
                     y=TITLE_Y)
        return fig
    amp = np.abs(u)
    fig = _figure(figsize=(4.6 * len(nu), 4.2), layout="constrained")
    axes = np.atleast_1d(fig.subplots(1, len(nu)))
    for k, ax in enumerate(axes):
        grid, where, offset = _slice(network, region, amp[k], margin=margin)
        im = ax.imshow(grid, origin="lower", cmap="magma", interpolation="nearest",
                       extent=_extent(grid, offset))
        bar = fig.colorbar(im, ax=ax, shrink=0.85)
        bar.set_label("|u_k| (unit-norm profile, dimensionless)", fontsize=8)
        ax.set_title(f"mode {k + 1}: ν = {nu[k]:.4g}{where}", fontsize=8, y=TITLE_Y)
        ax.set_xlabel("last axis (site)")
        ax.set_ylabel("middle axis (site)" if network.ndim == 3 else "first axis (site)")
    fig.suptitle(title or f"most entangled modes of {region.description}", fontsize=9)
    return fig


def region_figure(network, region, *, region_b=None, title="", margin=MARGIN):
    """Regions A (and B) on a slice through A's centre (axis 0 fixed in 3-D), cropped to the
    regions plus ``margin`` sites, with a legend.

    Examples
    --------
    >>> from arealaw import hypercubic, box
    >>> net = hypercubic((12, 12), mass=0.2)
    >>> fig = region_figure(net, box(net, 2, origin=(1, 1)), region_b=box(net, 2, origin=(6, 6)))
    >>> [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    ['A (4 sites)', 'B (4 sites)']
    """
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch
    colours = ["#f4f4f4", "#1f77b4", "#d62728"]
    grid, where, offset = _slice(network, region, 1.0,
                                 None if region_b is None else (region_b, 2.0), margin=margin)
    fig = _figure(figsize=(5.0, 4.4))
    ax = fig.subplots(gridspec_kw=_fixed_grid((5.0, 4.4)))
    ax.imshow(grid, origin="lower", cmap=ListedColormap(colours), vmin=-0.5, vmax=2.5,
              interpolation="nearest", extent=_extent(grid, offset))
    handles = [Patch(color=colours[1], label=f"A ({region.size} sites)")]
    if region_b is not None:
        handles.append(Patch(color=colours[2], label=f"B ({region_b.size} sites)"))
    handles.append(Patch(facecolor=colours[0], edgecolor="0.6", label="rest of the lattice"))
    ax.legend(handles=handles[:-1], loc="upper right", fontsize=8, framealpha=0.9)
    ax.set_title((title or region.description) + where, fontsize=9, y=TITLE_Y)
    ax.set_xlabel("last axis (site)")
    ax.set_ylabel({3: "middle axis (site)", 2: "first axis (site)"}.get(network.ndim, ""))
    if network.ndim == 1:
        ax.set_yticks([])
    return fig
