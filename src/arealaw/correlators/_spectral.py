"""Exact correlators of uniform hypercubic lattices from separable heat kernels.

For V = m² + Σ_a J_a L_a (L_a the 1-D Laplacian of axis a with its boundary) and M = c·I,

    X = ½ c^{-1/2} V^{-1/2},   P = ½ c^{1/2} V^{1/2} = ½ c^{1/2} V · V^{-1/2},

and V^{-1/2} = (1/√π) ∫₀^∞ s^{-1/2} e^{-s V} ds with e^{-sV} = e^{-s m²} ⊗_a e^{-s J_a L_a}.
Each 1-D heat kernel is a short cosine sum (or a modified Bessel function on an infinite axis),
evaluated only at the index differences and image sums the region needs; Dirichlet and open
axes are the odd / even reflections of a ring of 2(L+1) / 2L sites.  The s-integral is done by
the trapezoid rule after s = exp(π/2 · sinh t) (doubly exponential convergence at both ends),
halving the step until two successive estimates agree; their difference is the reported
quadrature error.  Memory is O(n_rows·n_cols + table), independent of the lattice size.
"""

import math

import numpy as np
import scipy.special

from .._errors import ConvergenceError, UnsupportedMethodError
from .._memory import require_memory
from ._base import Assessment, Blocks, CorrelatorBackend

__all__ = ["SpectralBackend", "spectral_correlators"]

_EPS = np.finfo(float).eps
_T_MAX = 6.0            # t range of the sinh map: s = exp(±π/2·sinh 6) ≈ e^{±317}
_H_START = 0.5          # first trapezoid step in t
_H_MIN = 2.0**-9        # give up (ConvergenceError) below this step
_TRIM = 1e-22           # drop nodes whose integrand envelope is below this (bounded as error)
_CHUNK = 2_000_000      # block entries gathered per chunk
_TABLE_LIMIT = 40_000_000  # table entries (per kind) before refusing


_IVE_ASYMPTOTIC = 1e8  # scipy's ive returns NaN beyond about 1e9


def _ive(nu, x):
    """e^{-x} I_ν(x) for integer ν ≥ 0 and x ≥ 0, arrays broadcast; asymptotic series for huge x."""
    nu, x = np.broadcast_arrays(np.asarray(nu, dtype=float), np.asarray(x, dtype=float))
    out = np.empty(x.shape)
    small = x < _IVE_ASYMPTOTIC
    out[small] = scipy.special.ive(nu[small], x[small])
    if not small.all():
        mu, xb = 4 * nu[~small] ** 2, x[~small]
        term = np.ones_like(xb)
        total = term.copy()
        for k in range(1, 40):  # I_ν(x) e^{-x} √(2πx) = Σ_k (−1)^k Π_j (μ − (2j−1)²) / (k! (8x)^k)
            term = -term * (mu - (2 * k - 1) ** 2) / (k * 8 * xb)
            total += term
            if np.all(np.abs(term) <= 1e-17 * np.abs(total)):
                break
        out[~small] = total / np.sqrt(2 * np.pi * xb)
    return out


class _Axis:
    """One lattice axis: its 1-D heat kernel g(δ; s) and Laplacian-weighted kernel q(δ; s).

    The axis kernel of sites (i, j) is Σ_terms sign · g(arg), with arg = i − j or i + j + shift.
    """

    def __init__(self, length, coupling, boundary):
        self.coupling = float(coupling)
        self.boundary = boundary
        if boundary == "infinite":
            self.ring = None
            self.terms = ((1.0, -1, 0),)
        else:
            length = int(length)
            self.length = length
            if boundary == "periodic":
                self.ring = length
                self.terms = ((1.0, -1, 0),)
            elif boundary == "dirichlet":  # odd reflection about the wall sites −1 and L
                self.ring = 2 * length + 2
                self.terms = ((1.0, -1, 0), (-1.0, 1, 2))
            elif boundary == "open":       # even reflection about the mid-bond points
                self.ring = 2 * length
                self.terms = ((1.0, -1, 0), (1.0, 1, 1))
            else:
                raise ValueError(f"unknown boundary {boundary!r}")
            n = self.ring
            k = np.arange(n // 2 + 1)
            w = np.where((k == 0) | (2 * k == n), 1.0, 2.0) / n
            if boundary == "dirichlet":
                # The k = 0 and k = N/2 modes cancel exactly between the two image terms; leaving
                # them out avoids the catastrophic cancellation of 1/N constants at large s.
                w[(k == 0) | (2 * k == n)] = 0.0
            self.k = k
            self.weights = w
            self.lam = 4.0 * self.coupling * np.sin(np.pi * k / n) ** 2

    @property
    def lambda_min(self):
        """Smallest eigenvalue of J_a L_a on this axis (0 unless Dirichlet)."""
        if self.boundary == "dirichlet":
            return float(self.lam[1])
        return 0.0

    @property
    def n_modes(self):
        return 0 if self.ring is None else int(self.k.size)

    def canon(self, arg):
        """Canonical argument: g is even, and periodic on a ring."""
        if self.ring is None:
            return np.abs(arg)
        r = np.mod(arg, self.ring)
        return np.minimum(r, self.ring - r)

    def bound(self, s):
        """Upper bound of |g(δ; s)| over δ (used for the node-trimming envelope)."""
        if self.boundary == "infinite":
            return _ive(0, 2 * self.coupling * s)
        # nonnegative mode weights: |g(δ)| ≤ g(0) = Σ_k w_k e^{-sλ_k}
        return np.exp(-np.outer(s, self.lam)) @ self.weights

    def kernels(self, s, args):
        """g(args; s) and q(args; s) = −∂g/∂s for node values ``s`` (shape (n_nodes, n_args))."""
        s = np.asarray(s, dtype=float)[:, None]
        if self.ring is None:
            a = np.asarray(args, dtype=float)[None, :]
            x = 2 * self.coupling * s
            g = _ive(a, x)
            gm = _ive(np.abs(a - 1), x)
            gp = _ive(a + 1, x)
            q = self.coupling * (2 * g - gm - gp)
            return g, q
        e = np.exp(-s * self.lam[None, :])
        ew, ewl = e * self.weights, e * (self.weights * self.lam)
        args = np.asarray(args)
        g = np.empty((s.shape[0], args.size))
        q = np.empty_like(g)
        step = max(1, 4_000_000 // max(self.k.size, 1))  # bound the cosine table's memory
        for lo in range(0, args.size, step):
            cos = np.cos((2 * np.pi / self.ring) * np.outer(self.k, args[lo:lo + step]))
            g[:, lo:lo + step] = ew @ cos
            q[:, lo:lo + step] = ewl @ cos
        return g, q


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
        self.n_terms = int(np.prod([len(ax.terms) for ax in axes]))


def _outer_sum(weights, factors):
    """Σ_n weights[n] ⊗_a factors[a][n, :] as an array of shape (len f_0, ..., len f_{d−1})."""
    acc = factors[0] * weights[:, None]
    for f in factors[1:-1]:
        acc = (acc[:, :, None] * f[:, None, :]).reshape(acc.shape[0], -1)
    out = acc.T @ factors[-1] if len(factors) > 1 else acc.sum(axis=0)
    return out.reshape([f.shape[1] for f in factors])


def _nodes(h, offset):
    """t nodes k·h + offset within [−T, T], s = exp(π/2 sinh t) and the weight ds/dt."""
    n = int(math.floor((_T_MAX - offset) / h))
    m = int(math.floor((_T_MAX + offset) / h))
    t = offset + h * np.arange(-m, n + 1)
    s = np.exp(0.5 * np.pi * np.sinh(t))
    return s, s * 0.5 * np.pi * np.cosh(t)


class _Tables:
    """V^{-1/2} and V^{1/2} kernels on the argument grid of a plan, by converged quadrature."""

    def __init__(self, mass, axes, plan, tol):
        self.m2 = float(mass) ** 2
        self.axes = axes
        self.plan = plan
        self.p_scale = self.m2 + sum(4 * ax.coupling for ax in axes)
        h = _H_START
        sx, sp, nodes, abs_w, trimmed = self._sums(h, 0.0)
        tx, tp = h * sx, h * sp
        levels, diff_x, diff_p = 0, math.inf, math.inf
        while True:
            ox, op, n_new, a_new, t_new = self._sums(h, h / 2)
            sx, sp = sx + ox, sp + op
            nodes, abs_w, trimmed = nodes + n_new, abs_w + a_new, trimmed + t_new
            h /= 2
            nx, np_ = h * sx, h * sp
            diff_x = float(np.max(np.abs(nx - tx)))
            diff_p = float(np.max(np.abs(np_ - tp)))
            tx, tp = nx, np_
            levels += 1
            modes = max([ax.n_modes for ax in axes] + [1])
            # rounding model of blocked (BLAS / pairwise) sums over nodes and modes, per axis
            self.rounding = _EPS * (8 + 2 * len(axes) + math.log2(nodes) + math.log2(modes)) \
                * h * abs_w
            target = max(self.rounding, 1e-6 * tol)
            if levels >= 2 and diff_x <= target and diff_p <= target * self.p_scale:
                break
            if h < _H_MIN:
                raise ConvergenceError(
                    f"the spectral quadrature did not converge: step {h:g}, successive "
                    f"estimates differ by {diff_x:.3g} (X) and {diff_p:.3g} (P), target {tol:g}")
        self.vm = tx        # V^{-1/2} on the argument grid
        self.vp = tp        # V^{1/2}
        self.err_x = diff_x + h * trimmed + self.rounding
        self.err_p = diff_p + (h * trimmed + self.rounding) * self.p_scale
        self.info = {"quadrature_nodes": int(nodes), "quadrature_step": h,
                     "quadrature_levels": levels, "quadrature_diff_x": diff_x,
                     "quadrature_diff_p": diff_p, "table_shape": list(plan.table_shape)}

    def _sums(self, h, offset):
        s, jac = _nodes(h, offset)
        base = jac * np.exp(-s * self.m2) / np.sqrt(s * math.pi)
        env = base.copy()
        live = base > 0  # e^{-s m²} underflowed elsewhere; skip those (Bessel of huge arguments)
        for ax in self.axes:
            env[live] *= ax.bound(s[live])
        keep = env > _TRIM
        if keep[0] or keep[-1]:  # the integrand is not negligible at |t| = T: range too short
            raise ConvergenceError(
                f"the spectral quadrature range s in [{s[0]:.3g}, {s[-1]:.3g}] is too short for "
                f"this lattice (integrand envelope {max(env[0], env[-1]):.3g} at its ends); the "
                "mass is too small — increase it or use Dirichlet walls")
        trimmed = float(env[~keep].sum()) * max(1.0, self.p_scale)
        s, w = s[keep], base[keep]
        shape = self.plan.table_shape
        if not s.size:
            return np.zeros(shape), np.zeros(shape), 0, 0.0, trimmed
        gq = [ax.kernels(s, args) for ax, args in zip(self.axes, self.plan.args)]
        g = [k[0] for k in gq]
        sx = _outer_sum(w, g)
        sp = self.m2 * sx
        for a in range(len(self.axes)):
            sp = sp + _outer_sum(w, g[:a] + [gq[a][1]] + g[a + 1:])
        return sx, sp, int(s.size), float(env[keep].sum()), trimmed


def _axes_of(lattice):
    return [_Axis(n, j, b) for n, j, b in zip(lattice.shape, lattice.couplings,
                                              lattice.boundaries)]


def _check_served(network):
    lat = network.lattice
    if lat is None:
        return "needs a hypercubic lattice built by arealaw.hypercubic (not user matrices)"
    if not lat.is_uniform:
        return "needs a uniform lattice (scalar mass and inertia, no disorder)"
    return None


def spectral_correlators(network, rows, cols=None, *, tol=1e-12):
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
    why = _check_served(network)
    if why:
        raise UnsupportedMethodError(f"the spectral method {why}; use method='dense' or 'sparse'")
    lat = network.lattice
    rows = np.asarray(rows, dtype=np.int64).ravel()
    cols = rows if cols is None else np.asarray(cols, dtype=np.int64).ravel()
    n_r, n_c = rows.size, cols.size
    require_memory(2 * 8.0 * n_r * n_c + 8 * 8.0 * min(n_r * n_c, _CHUNK),
                   f"spectral correlator blocks of {n_r}×{n_c} sites", "use a smaller region")
    axes = _axes_of(lat)
    plan = _Plan(axes, network.coords(rows), network.coords(cols))
    table_size = int(np.prod(plan.table_shape, dtype=np.int64))
    if table_size > _TABLE_LIMIT:
        raise UnsupportedMethodError(
            f"the spectral kernel table for this region has {table_size} entries (axes "
            f"{plan.table_shape}); the region is too spread out — use a compact region")
    require_memory(8.0 * table_size * (6 + len(axes)), "the spectral kernel table",
                   "use a more compact region")
    tables = _Tables(lat.mass, axes, plan, tol)
    c = float(lat.inertia)
    fx, fp = 0.5 / math.sqrt(c), 0.5 * math.sqrt(c)
    vm, vp = tables.vm.ravel(), tables.vp.ravel()
    x = np.empty((n_r, n_c))
    p = np.empty((n_r, n_c))
    step = max(1, _CHUNK // max(n_c, 1))
    combos = np.array(np.meshgrid(*[range(len(ax.terms)) for ax in axes],
                                  indexing="ij")).reshape(len(axes), -1).T
    for start in range(0, n_r, step):
        sl = slice(start, min(start + step, n_r))
        offs = []
        for a, ax in enumerate(axes):
            ir, ic = plan.row_inv[a][sl], plan.col_inv[a]
            offs.append([np.take(np.take(ti, ir, axis=0), ic, axis=1) * plan.strides[a]
                         for ti in plan.term_index[a]])
        xs = np.zeros((sl.stop - sl.start, n_c))
        ps = np.zeros_like(xs)
        for combo in combos:
            flat = offs[0][combo[0]]
            for a in range(1, len(axes)):
                flat = flat + offs[a][combo[a]]
            sign = np.prod([axes[a].terms[combo[a]][0] for a in range(len(axes))])
            if sign > 0:
                xs += np.take(vm, flat)
                ps += np.take(vp, flat)
            else:
                xs -= np.take(vm, flat)
                ps -= np.take(vp, flat)
        x[sl] = fx * xs
        p[sl] = fp * ps
    entry_x = plan.n_terms * (tables.err_x + 2 * _EPS * np.abs(vm).max())
    entry_p = plan.n_terms * (tables.err_p + 2 * _EPS * np.abs(vp).max())
    norm = math.sqrt(float(n_r) * float(n_c))
    info = dict(tables.info, image_terms=plan.n_terms, entry_x_error=fx * entry_x,
                entry_p_error=fp * entry_p)
    return Blocks(x, p, fx * norm * entry_x, fp * norm * entry_p, info)


class SpectralBackend(CorrelatorBackend):
    """Exact correlators of uniform hypercubic lattices (any size, infinite axes included)."""

    name = "spectral"

    def assess(self, network, n_rows, *, tol):
        why = _check_served(network)
        if why:
            return Assessment(False, why)
        lat = network.lattice
        terms = 2 ** sum(b in ("dirichlet", "open") for b in lat.boundaries)
        n = float(n_rows)
        need = 2 * 8.0 * n * n + 8 * 8.0 * min(n * n, _CHUNK) + 8.0 * 64 * n * 8
        # gathers of the block, plus the per-axis mode sums (≈ 500 nodes × modes × arguments)
        modes = sum(0 if math.isinf(s) else int(s) // 2 + 1 for s in lat.shape)
        span = max(min(4 * n, 4 * s) for s in lat.shape)
        secs = 5e-3 + 1.5e-8 * terms * n * n + 1e-6 * modes * span
        shape = "x".join("inf" if math.isinf(s) else str(int(s)) for s in lat.shape)
        return Assessment(True, f"exact heat-kernel quadrature on the uniform {shape} lattice",
                          need, secs)

    def blocks(self, network, rows, cols=None, *, tol):
        return spectral_correlators(network, rows, cols, tol=tol)
