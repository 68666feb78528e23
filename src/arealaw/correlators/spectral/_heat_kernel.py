"""Heat-kernel quadrature for V^{∓1/2} of uniform hypercubic lattices, on argument grids.

For V = m² + Σ_a J_a L_a (L_a the 1-D Laplacian of axis a with its boundary),
V^{-1/2} = (1/√π) ∫₀^∞ s^{-1/2} e^{-s V} ds with e^{-sV} = e^{-s m²} ⊗_a e^{-s J_a L_a}.
Each 1-D heat kernel is a short cosine sum (or a modified Bessel function on an infinite axis),
evaluated only at the arguments a plan asks for; Dirichlet and open axes are the odd / even
reflections of a ring of 2(L+1) / 2L sites.  The s-integral is done by the trapezoid rule after
s = exp(π/2 · sinh t) (doubly exponential convergence at both ends), halving the step until two
successive estimates agree; their difference is the reported quadrature error.

Gibbs states at temperature T need coth(√λ/2T)/√λ = Σ_{k∈ℤ} e^{−|k|√λ/T}/√λ in place of λ^{-1/2},
and e^{−a√λ}/√λ = (1/√π) ∫₀^∞ s^{-1/2} e^{−sλ − a²/4s} ds, so the thermal kernel is the same
integral with the weight θ(s) = Σ_{k∈ℤ} e^{−k²/(4sT²)} (the images of imaginary time on a circle
of length 1/T); θ ≡ 1 at T = 0.  For large sT² the Poisson-dual form
θ(s) = 2T√(πs) Σ_{n∈ℤ} e^{−(2πnT)² s} (Matsubara frequencies) converges faster.
"""

import itertools
import math

import numpy as np
import scipy.special

from ..._numerics import EPS
from ..._errors import ConvergenceError

__all__ = ["Axis", "KernelTables", "correlator_factors", "image_combos", "image_term_count",
           "imaginary_time_weight", "kernel_temperature", "lattice_axes"]

_T_MAX = 6.0            # t range of the sinh map: s = exp(±π/2·sinh 6) ≈ e^{±317}
_H_START = 0.5          # first trapezoid step in t
_H_MIN = 2.0**-9        # give up (ConvergenceError) below this step
_TRIM = 1e-22           # drop nodes whose integrand envelope is below this (bounded as error)


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


def imaginary_time_weight(s, temperature):
    """θ(s) = Σ_{k∈ℤ} exp(−k²/(4sT²)) for s > 0 (1 at T = 0), to full precision.

    Both forms are sums of positive terms; the one used has ratio of successive terms ≤ e^{-1},
    so 40 terms leave a remainder below e^{-40}·(first term) < 1e-17 relative.

    Examples
    --------
    >>> import numpy as np
    >>> th = imaginary_time_weight(np.array([0.01, 1.0, 100.0]), 0.5)
    >>> direct = [sum(np.exp(-k**2 / (4 * s * 0.25)) for k in range(-60, 61))
    ...           for s in (0.01, 1.0, 100.0)]
    >>> bool(np.allclose(th, direct, rtol=1e-14, atol=0))
    True
    """
    s = np.asarray(s, dtype=float)
    if temperature == 0:
        return np.ones_like(s)
    x = 1.0 / (4.0 * s * temperature ** 2)       # θ = Σ_k e^{−k² x}
    out = np.empty_like(s)
    direct = x >= 1.0
    k = np.arange(1, 41, dtype=float)
    xd = x[direct]
    out[direct] = 1.0 + 2.0 * np.exp(-np.outer(xd, k ** 2)).sum(axis=1)
    xp = x[~direct]                               # Poisson: √(π/x) Σ_n e^{−π² n²/x}
    out[~direct] = np.sqrt(np.pi / xp) * (1.0 + 2.0 * np.exp(
        -np.outer(np.pi ** 2 / xp, k ** 2)).sum(axis=1))
    return out


class Axis:
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

    def qbound(self, s):
        """Upper bound of |q(δ; s)| over δ: q(0; s) = Σ_k w_k λ_k e^{-sλ_k} (non-negative terms)."""
        if self.boundary == "infinite":
            x = 2 * self.coupling * s
            return 2 * self.coupling * (_ive(0, x) - _ive(1, x))
        return np.exp(-np.outer(s, self.lam)) @ (self.weights * self.lam)

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


class KernelTables:
    """V^{-1/2} and V^{1/2} kernels on ``plan.args`` (per axis), by converged quadrature.

    At ``temperature`` T > 0 the kernels are those of coth(V^{1/2}/2T)·V^{∓1/2} (module notes);
    T here is in units of V's spectrum (see :func:`kernel_temperature`).
    """

    def __init__(self, mass, axes, plan, tol, *, temperature=0.0):
        self.m2 = float(mass) ** 2
        self.temperature = float(temperature)
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
            # rounding model of blocked (BLAS / pairwise) sums over nodes and modes, per axis;
            # X and P have their own envelopes (P's integrand is small where X's is large)
            factor = EPS * (8 + 2 * len(axes) + math.log2(nodes) + math.log2(modes)) * h
            self.rounding = factor * abs_w[0]
            self.rounding_p = factor * abs_w[1]
            target = max(self.rounding, 1e-6 * tol)
            target_p = max(self.rounding_p, 1e-6 * tol * self.p_scale)
            if levels >= 2 and diff_x <= target and diff_p <= target_p:
                break
            if h < _H_MIN:
                raise ConvergenceError(
                    f"the spectral quadrature did not converge: step {h:g}, successive "
                    f"estimates differ by {diff_x:.3g} (X) and {diff_p:.3g} (P), target {tol:g}",
                    residual=max(diff_x, diff_p), iterations=levels)
        self.vm = tx        # V^{-1/2} on the argument grid
        self.vp = tp        # V^{1/2}
        tail_x, tail_p = self._range_tails()
        self.err_x = diff_x + h * trimmed[0] + self.rounding + tail_x
        self.err_p = diff_p + h * trimmed[1] + self.rounding_p + tail_p
        self.info = {"quadrature_nodes": int(nodes), "quadrature_step": h,
                     "quadrature_levels": levels, "quadrature_diff_x": diff_x,
                     "quadrature_diff_p": diff_p, "table_shape": list(plan.table_shape)}

    def _range_tails(self):
        """Analytic bounds of the s-integrals beyond the quadrature range [s_min, s_max].

        Near 0 every kernel is at most 1: ∫_0^{s_min} s^{-1/2} ds/√π = 2√(s_min/π) (and P's
        integrand adds at most p_scale).  Beyond s_max the integrand f(s) = s^{-1/2} e^{-sm²}
        Π_a g_a(s)/√π has every factor non-increasing, and each infinite axis's e^{-x}I_0(x)
        decays at least like x^{-1/2} (√x e^{-x} I_0(x) increases to 1/√(2π)), so
        f(s) ≤ f(s_max)·(s/s_max)^{-a} with a = ½ + (infinite axes)/2, and f(s) ≤
        f(s_max)·e^{-r(s − s_max)} with r = m² + Σ λ_min of Dirichlet axes: the tail is at most
        f(s_max)·min(s_max/(a − 1), 1/r) (finite: massless lattices need two infinite axes or a
        wall).  P's integrand has an extra factor decaying like 1/s (a + 1).  Both are
        astronomically small at s_max = e^{π/2·sinh 6}; they are reported, not assumed.
        """
        s_min = math.exp(-0.5 * math.pi * math.sinh(_T_MAX))
        s_max = 1.0 / s_min
        head = 2 * math.sqrt(s_min / math.pi)
        s_arr = np.array([s_max])
        g = math.exp(-s_max * self.m2) / math.sqrt(math.pi * s_max) if self.m2 * s_max < 700 \
            else 0.0
        q = self.m2 * g
        for ax in self.axes:
            gb = float(ax.bound(s_arr)[0])
            q = q * gb + g * float(ax.qbound(s_arr)[0])
            g *= gb
        n_inf = sum(ax.boundary == "infinite" for ax in self.axes)
        rate = self.m2 + sum(ax.lambda_min for ax in self.axes)
        a = 0.5 + 0.5 * n_inf
        span = min(s_max / (a - 1) if a > 1 else math.inf, 1 / rate if rate > 0 else math.inf)
        span_p = min(s_max / a, 1 / rate if rate > 0 else math.inf)
        if not math.isfinite(span):
            return math.inf, math.inf
        return 1.01 * g * span + head, 1.01 * q * span_p + head * self.p_scale

    def entry_errors(self, n_terms, fx, fp):
        """Bounds on one entry of X = fx·Σ±g and P = fp·Σ±g summed from ``n_terms`` table values."""
        return (fx * n_terms * (self.err_x + 2 * EPS * np.abs(self.vm).max()),
                fp * n_terms * (self.err_p + 2 * EPS * np.abs(self.vp).max()))

    def _sums(self, h, offset):
        s, jac = _nodes(h, offset)
        base = jac * np.exp(-s * self.m2) / np.sqrt(s * math.pi)
        if self.temperature > 0:
            base = base * imaginary_time_weight(s, self.temperature)
        env = base.copy()
        live = base > 0  # e^{-s m²} underflowed elsewhere; skip those (Bessel of huge arguments)
        gb = [ax.bound(s[live]) for ax in self.axes]
        qb = [ax.qbound(s[live]) for ax in self.axes]
        prod = np.prod(gb, axis=0) if gb else np.ones(int(live.sum()))
        env[live] *= prod
        # P's envelope: m²·Πg + Σ_a q_a Π_{b≠a} g_b (each factor bounded over the arguments)
        env_p = np.zeros_like(base)
        pe = self.m2 * prod
        for a in range(len(self.axes)):
            term = qb[a]
            for b in range(len(self.axes)):
                if b != a:
                    term = term * gb[b]
            pe = pe + term
        env_p[live] = base[live] * pe
        keep = env > _TRIM
        if keep[0] or keep[-1]:  # the integrand is not negligible at |t| = T: range too short
            raise ConvergenceError(
                f"the spectral quadrature range s in [{s[0]:.3g}, {s[-1]:.3g}] is too short for "
                f"this lattice (integrand envelope {max(env[0], env[-1]):.3g} at its ends); the "
                "mass is too small — increase it or use Dirichlet walls" + (
                    "; a massless thermal state in d <= 2 without walls has no finite "
                    "correlators" if self.temperature > 0 else ""),
                residual=float(max(env[0], env[-1])))
        trimmed = np.array([float(env[~keep].sum()), float(env_p[~keep].sum())])
        abs_sum = np.array([float(env[keep].sum()), float(env_p[keep].sum())])
        s, w = s[keep], base[keep]
        shape = self.plan.table_shape
        if not s.size:
            return np.zeros(shape), np.zeros(shape), 0, abs_sum, trimmed
        gq = [ax.kernels(s, args) for ax, args in zip(self.axes, self.plan.args)]
        g = [k[0] for k in gq]
        sx = _outer_sum(w, g)
        sp = self.m2 * sx
        for a in range(len(self.axes)):
            sp = sp + _outer_sum(w, g[:a] + [gq[a][1]] + g[a + 1:])
        return sx, sp, int(s.size), abs_sum, trimmed


def lattice_axes(lattice):
    return [Axis(n, j, b) for n, j, b in zip(lattice.shape, lattice.couplings,
                                              lattice.boundaries)]


def image_term_count(lattice):
    """Number of image terms of ``lattice``'s kernel, ``len(image_combos(lattice_axes(lattice)))``:
    two per finite Dirichlet or open axis (direct and mirrored), one per periodic or infinite axis.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> image_term_count(hypercubic((8, 8, 8), mass=0.1, boundary=("dirichlet", "open",
    ...                                                            "periodic")).lattice)
    4
    """
    return math.prod(len(ax.terms) for ax in lattice_axes(lattice))


def image_combos(axes):
    """Every choice of one kernel term per axis: (term per axis, sign, axes using the image)."""
    out = []
    for combo in itertools.product(*[range(len(ax.terms)) for ax in axes]):
        sign = float(np.prod([axes[a].terms[t][0] for a, t in enumerate(combo)]))
        flipped = tuple(a for a, t in enumerate(combo) if axes[a].terms[t][1] > 0)
        out.append((combo, sign, flipped))
    return out


def kernel_temperature(lattice, temperature):
    """T√c: the temperature in units of V's spectrum (ω² = λ/c for M = c·I, so ω/2T = √λ/2T√c)."""
    return float(temperature) * math.sqrt(float(lattice.inertia))


def correlator_factors(lattice):
    """(fx, fp) with X = fx·V^{-1/2}, P = fp·V^{1/2} for the scalar inertia c (M = c·I)."""
    c = float(lattice.inertia)
    return 0.5 / math.sqrt(c), 0.5 * math.sqrt(c)
