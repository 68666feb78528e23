"""Exact correlators of uniform hypercubic lattices: gathered blocks and the spectral backend.

For M = c·I, X = ½ c^{-1/2} V^{-1/2} and P = ½ c^{1/2} V^{1/2}; the kernels come from the
heat-kernel quadrature of :mod:`._heat_kernel`, tabulated only at the index differences and image
sums the region needs.  Memory is O(n_rows·n_cols + table), independent of the lattice size.
Large regions get matrix-free operators instead (:mod:`._convolution`, FFT on the region's box).
"""

import math

import numpy as np

from ..._errors import UnsupportedMethodError
from ..._costs import cost
from ..._numerics import available_bytes, require_memory
from ..._progress import report
from .._base import Assessment, Blocks, CorrelatorBackend, trace_rounding
from .._temperature import check_temperature
from ._convolution import box_grid_points, box_operator_bytes, box_operators
from ._heat_kernel import (KernelTables, correlator_factors, image_combos, image_term_count,
                           kernel_temperature, lattice_axes)

__all__ = ["SpectralBackend", "spectral_correlators", "spectral_trace"]

_CHUNK = 2_000_000      # block entries gathered per chunk
_TABLE_LIMIT = 40_000_000  # table entries (per kind) before refusing


class _Plan:
    """Per-axis index tables for the sites of a block."""

    def __init__(self, axes, row_coords, col_coords):
        self.axes = axes
        self.args, self.term_index, self.row_inv, self.col_inv = [], [], [], []
        for a, ax in enumerate(axes):
            ur, ir = np.unique(row_coords[:, a], return_inverse=True)
            uc, ic = np.unique(col_coords[:, a], return_inverse=True)
            raw = [ax.canon(ur[:, None] + sgn * uc[None, :] + shift)
                   for _, sgn, shift in ax.terms]
            args = np.unique(np.concatenate([r.ravel() for r in raw]))
            self.args.append(args)
            self.term_index.append([np.searchsorted(args, r) for r in raw])
            self.row_inv.append(ir.ravel())
            self.col_inv.append(ic.ravel())
        self.table_shape = tuple(a.size for a in self.args)
        self.strides = [int(np.prod(self.table_shape[a + 1:], dtype=np.int64))
                        for a in range(len(axes))]
        self.combos = image_combos(axes)
        self.n_terms = len(self.combos)


def _check_served(network):
    lat = network.lattice
    if lat is None:
        return "needs a hypercubic lattice built by arealaw.hypercubic (not user matrices)"
    if not lat.is_uniform:
        return "needs a uniform lattice (scalar mass and inertia, no disorder)"
    return None


class _Gather:
    """Entries of X[rows, cols], P[rows, cols] in row chunks, from one converged table."""

    def __init__(self, network, rows, cols, tol, temperature=0.0):
        why = _check_served(network)
        if why:
            raise UnsupportedMethodError(
                f"the spectral method {why}; use method='dense' or 'sparse'")
        lat = network.lattice
        self.rows, self.cols = rows, cols
        self.axes = axes = lattice_axes(lat)
        self.plan = plan = _Plan(axes, network.coords(rows), network.coords(cols))
        table_size = int(np.prod(plan.table_shape, dtype=np.int64))
        if table_size > _TABLE_LIMIT:
            raise UnsupportedMethodError(
                f"the spectral kernel table for this region has {table_size} entries (axes "
                f"{plan.table_shape}); the region is too spread out — use a compact region")
        require_memory(8.0 * table_size * (6 + len(axes)), "the spectral kernel table",
                       "use a more compact region")
        self.tables = tables = KernelTables(lat.mass, axes, plan, tol,
                                           temperature=kernel_temperature(lat, temperature))
        self.fx, self.fp = correlator_factors(lat)
        self.entry_x, self.entry_p = tables.entry_errors(plan.n_terms, self.fx, self.fp)
        self.info = dict(tables.info, image_terms=plan.n_terms, temperature=float(temperature))

    def chunks(self):
        """Yield (row slice, X rows, P rows) with at most _CHUNK entries per chunk."""
        axes, plan = self.axes, self.plan
        vm, vp = self.tables.vm.ravel(), self.tables.vp.ravel()
        n_r, n_c = self.rows.size, self.cols.size
        step = max(1, _CHUNK // max(n_c, 1))
        for start in range(0, n_r, step):
            sl = slice(start, min(start + step, n_r))
            offs = []
            for a, ax in enumerate(axes):
                ir, ic = plan.row_inv[a][sl], plan.col_inv[a]
                offs.append([np.take(np.take(ti, ir, axis=0), ic, axis=1) * plan.strides[a]
                             for ti in plan.term_index[a]])
            xs = np.zeros((sl.stop - sl.start, n_c))
            ps = np.zeros_like(xs)
            for combo, sign, _ in plan.combos:
                flat = offs[0][combo[0]]
                for a in range(1, len(axes)):
                    flat = flat + offs[a][combo[a]]
                if sign > 0:
                    xs += np.take(vm, flat)
                    ps += np.take(vp, flat)
                else:
                    xs -= np.take(vm, flat)
                    ps -= np.take(vp, flat)
            xs *= self.fx
            ps *= self.fp
            report("correlators", sl.stop, n_r)
            yield sl, xs, ps


def spectral_correlators(network, rows, cols=None, *, tol=1e-12, temperature=0.0):
    """Exact blocks X[rows, cols], P[rows, cols] of a uniform hypercubic lattice.

    Parameters
    ----------
    network : OscillatorNetwork
        Built by :func:`arealaw.hypercubic` with scalar mass and inertia and no disorder; any
        mix of Dirichlet, periodic, open and infinite axes.
    rows, cols : array_like of int
        Flat site indices (C order over ``network.index_shape``); ``cols`` defaults to ``rows``.
    tol : float
        Target accuracy of the entries; the quadrature is refined until two successive
        estimates differ by less than ``tol / 100`` (or by rounding only).
    temperature : float
        T ≥ 0 of the Gibbs state (0: the ground state); the heat-kernel integrand gains the
        imaginary-time weight θ(s) (see :mod:`._heat_kernel`).

    Returns
    -------
    Blocks
        With ``x_error``, ``p_error`` bounding the spectral-norm error of the blocks
        (quadrature difference, trimmed nodes and rounding, times sqrt(n_rows·n_cols)).

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> from arealaw.correlators import spectral_correlators
    >>> import math, scipy.special
    >>> b = spectral_correlators(hypercubic("inf", mass=1.0), [0])
    >>> exact = scipy.special.ellipk(4 / 5) / (math.pi * math.sqrt(5))  # ½ ∫ dk/2π ω(k)^{-1}
    >>> bool(abs(b.x[0, 0] - exact) < 1e-14), bool(b.x_error < 1e-13)
    (True, True)
    """
    rows = np.asarray(rows, dtype=np.int64).ravel()
    cols = rows if cols is None else np.asarray(cols, dtype=np.int64).ravel()
    n_r, n_c = rows.size, cols.size
    require_memory(2 * 8.0 * n_r * n_c + 8 * 8.0 * min(n_r * n_c, _CHUNK),
                   f"spectral correlator blocks of {n_r}×{n_c} sites", "use a smaller region")
    gather = _Gather(network, rows, cols, tol, check_temperature(temperature))
    x = np.empty((n_r, n_c))
    p = np.empty((n_r, n_c))
    for sl, xs, ps in gather.chunks():
        x[sl] = xs
        p[sl] = ps
    norm = math.sqrt(float(n_r) * float(n_c))
    return Blocks(x, p, norm * gather.entry_x, norm * gather.entry_p, gather.info,
                  entry_x_error=gather.entry_x, entry_p_error=gather.entry_p)


def spectral_trace(network, rows, *, tol=1e-12, rep_rows=None, weights=None, temperature=0.0):
    """tr(X_A P_A) − n/4 of the region ``rows`` and a bound on its error, without storing X_A.

    Row chunks of X_A and P_A are formed and reduced on the fly (O(n) memory beyond a chunk).
    ``rep_rows`` (positions into ``rows``) and ``weights`` restrict the sum to one row per
    class of rows with equal diagonal (X_A P_A)_ii, e.g. the orbits of a symmetry of the region.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import hypercubic, box
    >>> from arealaw.correlators import spectral_correlators, spectral_trace
    >>> net = hypercubic((12, 12), mass=0.5)
    >>> idx = box(net, 4).indices
    >>> b = spectral_correlators(net, idx)
    >>> t, err = spectral_trace(net, idx)
    >>> bool(abs(t - (np.sum(b.x * b.p) - idx.size / 4)) < 1e-12), bool(err < 1e-10)
    (True, True)
    """
    rows = np.asarray(rows, dtype=np.int64).ravel()
    n = rows.size
    reps = np.arange(n) if rep_rows is None else np.asarray(rep_rows, dtype=np.int64)
    w = np.ones(reps.size) if weights is None else np.asarray(weights, dtype=float)
    if w.shape != reps.shape or abs(float(w.sum()) - n) > 1e-9 * n:
        raise ValueError(f"weights (total {float(w.sum())}) must give one weight per "
                         f"representative row and add up to the region size {n}")
    gather = _Gather(network, rows[reps], rows, tol, check_temperature(temperature))
    total, abs_total, abs_x, abs_p = 0.0, 0.0, 0.0, 0.0
    for sl, xs, ps in gather.chunks():
        prod = xs * ps
        ww = w[sl]
        total += float(ww @ (prod.sum(axis=1) - 0.25))
        abs_total += float(ww @ (np.abs(prod).sum(axis=1) + 0.25))
        abs_x += float(ww @ np.abs(xs).sum(axis=1))
        abs_p += float(ww @ np.abs(ps).sum(axis=1))
    ex, ep = gather.entry_x, gather.entry_p
    return total, trace_rounding(n, abs_total) + ep * abs_x + ex * abs_p + float(n) * n * ex * ep


class SpectralBackend(CorrelatorBackend):
    """Exact correlators of uniform hypercubic lattices (any size, infinite axes included).

    Parameters
    ----------
    operators : {'auto', 'fft', 'dense'}
        How :meth:`operators` applies X_A and P_A for the restricted spectrum: FFT convolution
        on the region's bounding box (memory O(box), no n × n block), dense region blocks, or
        'auto': the cheaper product by a measured cost model, FFT whenever dense blocks would
        not fit.
    """

    name = "spectral"
    #: Correlators exact to rounding (``method='auto'`` prefers exact methods).
    exact = True

    def __init__(self, *, operators="auto"):
        if operators not in ("auto", "fft", "dense"):
            raise ValueError(f"operators={operators!r}; choose 'auto', 'fft' or 'dense'")
        self.operator_kind = operators

    def assess(self, network, n_rows, *, tol, temperature=0.0):
        why = _check_served(network)
        if why:
            return Assessment(False, why)
        lat = network.lattice
        n = float(n_rows)
        need = 2 * 8.0 * n * n + 8 * 8.0 * min(n * n, _CHUNK) + 8.0 * 64 * n * 8
        # gathers of the block, plus the per-axis mode sums (≈ 500 nodes × modes × arguments)
        modes = sum(0 if math.isinf(s) else int(s) // 2 + 1 for s in lat.shape)
        span = max(min(4 * n, 4 * s) for s in lat.shape)
        secs = (cost("spectral.overhead") + cost("spectral.entry") * n * n
                + cost("spectral.mode_sum") * modes * span)
        shape = "x".join("inf" if math.isinf(s) else str(int(s)) for s in lat.shape)
        return Assessment(True, f"exact heat-kernel quadrature on the uniform {shape} lattice",
                          need, secs)

    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        return spectral_correlators(network, rows, cols, tol=tol, temperature=temperature)

    def operators(self, network, rows, *, tol, temperature=0.0):
        """X_A, P_A as FFT box convolutions where cheaper than dense blocks (or where those
        would not fit), with the exact trace gathered row by row; otherwise dense blocks."""
        why = _check_served(network)
        if why:
            raise UnsupportedMethodError(
                f"the spectral method {why}; use method='dense' or 'sparse'")
        rows = np.asarray(rows, dtype=np.int64).ravel()
        fft, why = self._choose(network, rows)
        if not fft:
            ops = super().operators(network, rows, tol=tol, temperature=temperature)
            ops.info = dict(ops.info, operator="dense-blocks", operator_reason=why)
            return ops
        ops = box_operators(network, rows, tol=tol, temperature=temperature)
        ops.trace = spectral_trace(network, rows, tol=tol, temperature=temperature)
        ops.info = dict(ops.info, operator_reason=why)
        return ops

    def operator_bytes(self, network, rows):
        rows = np.asarray(rows, dtype=np.int64).ravel()
        fft, _ = self._choose(network, rows)
        return _box_cost(network, rows)[0] if fft else 16.0 * float(rows.size) ** 2

    def product_seconds(self, network, rows):
        """Estimated seconds to apply X_A and P_A to one vector (as :meth:`operators` would)."""
        rows = np.asarray(rows, dtype=np.int64).ravel()
        fft, _ = self._choose(network, rows)
        if fft:
            return 2.0 * _box_cost(network, rows)[1]
        return 2.0 * cost("spectral.dense_product_entry") * float(rows.size) ** 2

    def _choose(self, network, rows):
        if self.operator_kind != "auto":
            return self.operator_kind == "fft", f"requested operators={self.operator_kind!r}"
        return _choose_operators(network, rows)


def _box_cost(network, rows):
    """(bytes, seconds per vector) of the FFT box operators of a region."""
    coords = network.coords(rows)
    widths = coords.max(axis=0) - coords.min(axis=0) + 1
    terms = image_term_count(network.lattice)
    return box_operator_bytes(widths, terms), cost("spectral.fft_point") * box_grid_points(widths)


def _choose_operators(network, rows):
    """(use FFT box operators?, why): the cheaper product, unless dense blocks do not fit."""
    n = float(rows.size)
    dense_bytes = 16.0 * n * n
    box_bytes, box_secs = _box_cost(network, rows)
    dense_secs = cost("spectral.dense_product_entry") * n * n
    if dense_bytes > 0.3 * available_bytes() and box_bytes < dense_bytes:
        return True, "dense region blocks would not fit in memory"
    if box_secs < dense_secs:
        return True, f"FFT products estimated {dense_secs / box_secs:.2g}× cheaper"
    return False, f"dense products estimated {box_secs / dense_secs:.2g}× cheaper"
