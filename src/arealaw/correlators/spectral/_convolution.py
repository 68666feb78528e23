"""Matrix-free X_A, P_A of uniform hypercubic lattices: FFT convolution on the region's box.

Along each axis the kernel of sites (i, j) is a signed sum of g(i − j) and, for Dirichlet and
open walls, the image g(i + j + shift).  On the region's bounding box (local coordinates u, v of
width w) the image term becomes a convolution after flipping the input, u + v = u − (w−1−v) +
w − 1, and the FFT of a flipped input is the FFT of the input at −k times a phase.  So every one
of the 2^d image combinations is a pointwise product with one precomputed kernel transform: a
product with X_A or P_A costs one forward and one inverse FFT of a grid of (2w − 1)^d points and
never forms an n × n block.  The kernel tables come from the same converged heat-kernel
quadrature as the dense blocks (:mod:`._spectral`).
"""

import math

import numpy as np
import scipy.fft
import scipy.sparse.linalg as spla

from ..._numerics import EPS, require_memory
from .._base import RegionOperators
from ._heat_kernel import (KernelTables, correlator_factors, image_combos, kernel_temperature,
                           lattice_axes)

__all__ = ["BoxConvolution", "box_grid_points", "box_operator_bytes", "box_operators"]

_WORK_BYTES = 2**28      # complex working grids of one batch of columns


class _BoxPlan:
    """Kernel arguments of every (axis, term) on the FFT grid of a region's bounding box."""

    def __init__(self, axes, coords):
        self.lo = coords.min(axis=0)
        self.width = coords.max(axis=0) - self.lo + 1
        self.grid = tuple(scipy.fft.next_fast_len(int(2 * w - 1)) for w in self.width)
        self.args, self.term_index, self.valid = [], [], []
        for ax, lo, w, n in zip(axes, self.lo, self.width, self.grid):
            pos = np.arange(n)
            delta = np.where(pos < w, pos, pos - n)
            valid = np.abs(delta) <= w - 1
            delta = np.where(valid, delta, 0)
            raw = [ax.canon(delta if sgn < 0 else 2 * int(lo) + shift + int(w) - 1 + delta)
                   for _, sgn, shift in ax.terms]
            args = np.unique(np.concatenate(raw))
            self.args.append(args)
            self.term_index.append([np.searchsorted(args, r) for r in raw])
            self.valid.append(valid)
        self.table_shape = tuple(a.size for a in self.args)
        local = coords - self.lo
        self.flat = np.ravel_multi_index(local.T, self.grid)


class BoxConvolution(spla.LinearOperator):
    """X_A (or P_A) applied as Σ_S A_S(k) · F(R_S k) on a box's FFT grid (see the module notes).

    ``spectra`` maps a tuple of flipped axes S to the kernel transform times its phase.  Real
    FFTs store k_last ≥ 0 only; F(R_S k) with the last axis in S is conj F(R_{S'} k), S' the
    leading axes outside S, so only flips of leading axes are ever formed.
    """

    def __init__(self, spectra, flat, grid):
        n = flat.size
        super().__init__(dtype=np.float64, shape=(n, n))
        d = len(grid)
        self.flat = flat
        self.grid = tuple(int(g) for g in grid)
        self.axes = tuple(range(1, d + 1))
        half = self.grid[-1] // 2 + 1
        last = d - 1
        self.terms = {}          # leading flips T -> [(A for F_T, A for conj F_T)]
        for flipped, spec in spectra.items():
            spec = spec[..., :half]
            if last in flipped:
                key, slot = tuple(a for a in range(last) if a not in flipped), 1
            else:
                key, slot = tuple(flipped), 0
            pair = self.terms.setdefault(key, [None, None])
            pair[slot] = spec if pair[slot] is None else pair[slot] + spec
        self.reverse = [(-np.arange(g)) % g for g in self.grid]
        self.norm_bound = sum(float(np.abs(a).max()) for a in spectra.values())
        size = int(np.prod(self.grid))
        self.rounding = 5.0 * EPS * math.log2(max(size, 2)) * self.norm_bound
        # columns per FFT batch: about 4 complex half-grids each, _WORK_BYTES in all
        self.step = max(1, int(_WORK_BYTES // (4 * 16 * size // 2 + 1)))

    def _matmat(self, v):
        v = np.asarray(v, dtype=float)
        b = v.shape[1]
        out = np.empty((self.shape[0], b))
        size = int(np.prod(self.grid))
        for s in range(0, b, self.step):
            e = min(b, s + self.step)
            buf = np.zeros((e - s, size))
            buf[:, self.flat] = v[:, s:e].T
            f = scipy.fft.rfftn(buf.reshape((e - s,) + self.grid), axes=self.axes, workers=1)
            acc = np.zeros_like(f)
            tmp = np.empty_like(f)
            for key, (direct, conj) in self.terms.items():
                ft = f
                for a in key:
                    ft = np.take(ft, self.reverse[a], axis=a + 1)
                if direct is not None:
                    np.multiply(direct, ft, out=tmp)
                    acc += tmp
                if conj is not None:
                    np.conjugate(ft, out=tmp)
                    tmp *= conj
                    acc += tmp
            y = scipy.fft.irfftn(acc, s=self.grid, axes=self.axes, workers=1)
            out[:, s:e] = y.reshape(e - s, size)[:, self.flat].T
        return out

    def _matvec(self, v):
        return self._matmat(np.asarray(v).reshape(-1, 1)).ravel()

    def _adjoint(self):
        return self  # X_A and P_A are symmetric


def _kernel_spectra(table, plan, axes, factor):
    """{flipped axes: FFT(signed kernel on the grid) · phase} from a table of g on plan.args."""
    d = len(axes)
    out = {}
    for combo, sign, flipped in image_combos(axes):
        idx = [plan.term_index[a][combo[a]] for a in range(d)]
        kern = table[np.ix_(*idx)]
        for a in range(d):
            shape = [1] * d
            shape[a] = -1
            kern = kern * plan.valid[a].reshape(shape)
        spec = scipy.fft.fftn(factor * sign * kern, workers=1)
        for a in flipped:
            shape = [1] * d
            shape[a] = -1
            k = np.arange(plan.grid[a])
            phase = np.exp(-2j * np.pi * k * (int(plan.width[a]) - 1) / plan.grid[a])
            spec = spec * phase.reshape(shape)
        out[flipped] = out.get(flipped, 0) + spec
    return out


def box_grid_points(widths):
    """Points of the FFT grid of a box with the given widths."""
    return float(np.prod([scipy.fft.next_fast_len(int(2 * w - 1)) for w in widths]))


def box_operator_bytes(widths, n_terms):
    """Memory of the kernel transforms (2 kinds × ``n_terms``), tables and working grids."""
    size = box_grid_points(widths)
    work = min(_WORK_BYTES, 64 * 4 * 8.0 * size)   # a 64-column block, 4 half-grids each
    return 16.0 * size * (2 * n_terms) + work + 8.0 * 10 * float(
        np.prod([2 * (2 * w - 1) for w in widths]))


def box_operators(network, rows, *, tol, temperature=0.0):
    """:class:`RegionOperators` X_A, P_A of a uniform lattice as :class:`BoxConvolution` s.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import hypercubic, ball
    >>> from arealaw.correlators import spectral_correlators
    >>> from arealaw.correlators.spectral._convolution import box_operators
    >>> net = hypercubic((16, 16, 16), mass=0.0)
    >>> idx = ball(net, 4).indices
    >>> ops, b = box_operators(net, idx, tol=1e-12), spectral_correlators(net, idx)
    >>> v = np.random.default_rng(0).standard_normal((idx.size, 2))
    >>> bool(np.abs(ops.x.matmat(v) - b.x @ v).max() < 1e-12), ops.info["box"]
    (True, [8, 8, 8])
    """
    lat = network.lattice
    axes = lattice_axes(lat)
    coords = network.coords(np.asarray(rows, dtype=np.int64).ravel())
    plan = _BoxPlan(axes, coords)
    n_terms = len(image_combos(axes))
    require_memory(box_operator_bytes(plan.width, n_terms),
                   f"FFT operators on a {'×'.join(str(int(w)) for w in plan.width)} box",
                   "use a more compact region")
    tables = KernelTables(lat.mass, axes, plan, tol,
                          temperature=kernel_temperature(lat, temperature))
    fx, fp = correlator_factors(lat)
    x = BoxConvolution(_kernel_spectra(tables.vm, plan, axes, fx), plan.flat, plan.grid)
    p = BoxConvolution(_kernel_spectra(tables.vp, plan, axes, fp), plan.flat, plan.grid)
    n = float(coords.shape[0])
    entry_x, entry_p = tables.entry_errors(n_terms, fx, fp)
    info = dict(tables.info, image_terms=n_terms, operator="fft-box",
                box=[int(w) for w in plan.width], fft_grid=list(plan.grid),
                temperature=float(temperature))
    # ‖E‖₂ ≤ n · max |E_ij| for the tables, plus the FFT rounding of each product
    return RegionOperators(x, p, n * entry_x + x.rounding, n * entry_p + p.rounding, info,
                           entry_x_error=entry_x, entry_p_error=entry_p,
                           operator_rounding=(x.rounding, p.rounding))
