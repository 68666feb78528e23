"""Balls by partial waves (Srednicki 1993): one radial chain per angular momentum l.

A rotationally symmetric free scalar in d = 2 or 3 dimensions, discretised on N radial sites
(spacing a = 1, Dirichlet wall at N + 1), splits into independent chains, one per angular
momentum.  With φ = Σ φ_l(r) Y_l / r^{(d−1)/2}, the chain of angular momentum l has
(Srednicki 1993, PRL 71 666)

    d = 3:  V_l = Σ_j (j + ½)² (φ_j/j − φ_{j+1}/(j+1))² + [l(l+1)/j² + m²] φ_j²,
    d = 2:  V_l = Σ_j (j + ½) (φ_j/√j − φ_{j+1}/√(j+1))² + [l²/j² + m²] φ_j²,

and S(first n shells) = Σ_l g_d(l) S_l with g_3(l) = 2l + 1, g_2(0) = 1, g_2(l ≥ 1) = 2.
The l-sum converges slowly (terms g_d S_l ~ l^{d−6}·ln l at large l), so sectors l ≤ L are summed
exactly and the rest is a quadrature over l in ln l (each quadrature node is a chain with a
non-integer l, weighted by g_d(l) × the quadrature weight), plus a bound on what lies beyond
the last node from the large-l asymptotics.  That keeps every measure (von Neumann and Rényi)
a weighted sum over modes.
"""

import math
import os

import numpy as np
import scipy.sparse as sp

from .._errors import UnsupportedMethodError
from .._costs import cost
from .._numerics import DEFAULT_TOL
from ..spectrum._measures import von_neumann_entropy
from ._registry import Method
from ..network._network import OscillatorNetwork
from ..network._regions import region_of
from ..spectrum._symplectic import combine_spectra, symplectic_spectrum
from ..correlators import Assessment, dense_correlators
from ..correlators._dense import dominant_blocks

__all__ = ["RadialLattice", "RadialMethod", "radial_chain", "radial_entropy", "radial_lattice",
           "shells"]

DIMENSIONS = (2, 3)
#: Relative accuracy of the l-sum (tail estimate + bound) aimed at by default.
DEFAULT_RTOL = 1e-6
#: Gauss–Legendre nodes per unit panel in ln l for the tail quadrature (and the embedded check).
_GL_NODES = 6
_GL_CHECK = 3
#: Largest tail quadrature panel count (ln l up to ~ 40).
_MAX_PANELS = 40
#: Why temperature > 0 is refused: the large-l tail bound assumes the ground state.
_THERMAL_REFUSAL = ("the radial method serves only the ground state (its large-l tail bound "
                    "assumes it); for temperature > 0 use a ball on arealaw.hypercubic with "
                    "method='spectral' or 'dense'")
#: Below this leading t a sector's modes are close to rounding; the quadrature stops there.
_T_RELIABLE = 1e-11


def _check_dim(dim):
    if dim not in DIMENSIONS:
        raise ValueError(f"dim={dim!r}: the radial partial-wave method supports d = 2 and 3; for "
                         "d = 1 (a chain) use arealaw.hypercubic with method='dense'")
    return int(dim)


def _check_size(n_radial):
    if isinstance(n_radial, bool) or not isinstance(n_radial, (int, np.integer)) or n_radial < 2:
        raise ValueError(f"n_radial={n_radial!r} must be a whole number >= 2 (radial sites)")
    return int(n_radial)


def _check_mass(mass):
    if not (isinstance(mass, (int, float, np.floating)) and math.isfinite(mass) and mass >= 0):
        raise ValueError(f"mass={mass!r} must be a finite number >= 0")
    return float(mass)


def degeneracy(l, dim):
    """g_d(l): 2l + 1 in 3-D; 1 for l = 0 and 2 otherwise in 2-D (l may be non-integer)."""
    l = np.asarray(l, dtype=float)
    if dim == 3:
        return 2 * l + 1
    return np.where(l == 0, 1.0, 2.0)


def radial_chain(n_radial, l, *, dim=3, mass=0.0):
    """Potential matrix (sparse, N × N) of the radial chain of angular momentum ``l``.

    Examples
    --------
    >>> from arealaw.methods import radial_chain
    >>> v = radial_chain(3, 0).toarray()
    >>> float(v[0, 0]), float(v[1, 1]), round(float(v[0, 1]), 6)
    (2.25, 2.125, -1.125)
    """
    n_radial = _check_size(n_radial)
    dim = _check_dim(dim)
    mass = _check_mass(mass)
    if not (l >= 0 and math.isfinite(l)):
        raise ValueError(f"angular momentum l={l!r} must be a finite number >= 0")
    j = np.arange(1, n_radial + 1, dtype=float)
    if dim == 3:
        # bond j ↔ j+1 has weight (j+½)² between φ_j/j and φ_{j+1}/(j+1); site 1 has no inner bond
        outer = (j + 0.5) ** 2 / j**2
        inner = np.concatenate([[0.0], (j[1:] - 0.5) ** 2 / j[1:] ** 2])
        off = -(j[:-1] + 0.5) ** 2 / (j[:-1] * j[1:])
        centrifugal = l * (l + 1) / j**2
    else:
        outer = (j + 0.5) / j
        inner = np.concatenate([[0.0], (j[1:] - 0.5) / j[1:]])
        off = -(j[:-1] + 0.5) / np.sqrt(j[:-1] * j[1:])
        centrifugal = l**2 / j**2
    diag = outer + inner + centrifugal + mass**2
    return sp.diags([off, diag, off], [-1, 0, 1], format="csr")


class RadialLattice(OscillatorNetwork):
    """The free scalar on N radial sites in d = 2 or 3 (all partial waves together).

    It stands for infinitely many oscillators (every angular momentum), so it is infinite as a
    network: ``n_sites`` is None, and its only sites for region building are the N radial shells
    (index j − 1 for radius j).  Served by ``method='radial'``; build it with
    :func:`radial_lattice` and regions with :func:`shells`.
    """

    def __init__(self, n_radial, *, dim=3, mass=0.0):
        self.n_radial = _check_size(n_radial)
        self.dim = _check_dim(dim)
        self.mass = _check_mass(mass)
        self.lattice = None
        self.potential = None
        self.kinetic = None
        self.n_sites = None
        self._coords = np.arange(1, self.n_radial + 1, dtype=float)[:, None]

    @property
    def index_shape(self):
        return None

    @property
    def index_limit(self):
        return self.n_radial

    @property
    def ndim(self):
        return self.dim

    def coords(self, indices=None):
        """Radii (j = index + 1) of the given shells."""
        return self._coords if indices is None else self._coords[np.asarray(indices)]

    def __repr__(self):
        return (f"RadialLattice(N={self.n_radial}, d={self.dim}, m={self.mass:g}, "
                "Dirichlet wall at N+1)")


def radial_lattice(n_radial, *, dim=3, mass=0.0):
    """The radial lattice of Srednicki (1993): N radial sites, d = 2 or 3, optional mass.

    Examples
    --------
    >>> from arealaw import radial_lattice
    >>> radial_lattice(40, dim=3)
    RadialLattice(N=40, d=3, m=0, Dirichlet wall at N+1)
    """
    return RadialLattice(n_radial, dim=dim, mass=mass)


def shells(network, n):
    """The ball of the first ``n`` radial sites (radius R = n + ½) of a :class:`RadialLattice`."""
    if not isinstance(network, RadialLattice):
        raise ValueError("shells() needs a radial lattice (arealaw.radial_lattice); on a "
                         "hypercubic lattice use arealaw.ball")
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 1 <= n < network.n_radial:
        raise ValueError(f"shells n={n!r} must be a whole number with 1 <= n < N = "
                         f"{network.n_radial} (the ball must end inside the lattice)")
    return region_of(network, np.arange(int(n), dtype=np.int64),
                     f"ball of {n} shells (R = {n + 0.5:g})", ("ball", n + 0.5, (0.0,) * network.dim))


def _ball_shells(network, region):
    """Number of shells of a centred ball on the radial lattice, or a ValueError saying why not."""
    n = region.size
    if n == 0 or not np.array_equal(region.indices, np.arange(n)) or n >= network.n_radial:
        raise UnsupportedMethodError(
            f"method 'radial' needs a ball centred at the origin, i.e. the first n radial sites "
            f"(arealaw.shells), with n < N; region {region.description} is not one. Other regions "
            "of the radial lattice break rotation symmetry and are not supported by any method")
    return n


def _sector(n_radial, n, l, dim, mass):
    net = OscillatorNetwork(radial_chain(n_radial, l, dim=dim, mass=mass), check=False)
    x, p, info = dense_correlators(net)
    hx, hp = dominant_blocks(info, np.arange(n))
    return symplectic_spectrum(x[:n, :n], p[:n, :n], x_dominant=hx, p_dominant=hp)


def _sectors(n_radial, n, ls, dim, mass, n_jobs):
    ls = [float(l) for l in ls]
    work = len(ls) * (cost("radial.sector_cube") * n_radial**3 + cost("radial.sector_overhead"))
    if n_jobs is None:
        n_jobs = 1 if work < 4.0 or (os.cpu_count() or 1) < 2 else -1
    if n_jobs == 1 or len(ls) < 8:
        return [_sector(n_radial, n, l, dim, mass) for l in ls]
    import joblib
    return joblib.Parallel(n_jobs=n_jobs, batch_size=max(1, len(ls) // 64))(
        joblib.delayed(_sector)(n_radial, n, l, dim, mass) for l in ls)


def _remainder_bound(f_last, l_last, p_last):
    """Σ_{l > l_last} f(l) ≤ ∫ f(l_last)(l/l_last)^{−p} dl when the local exponent only grows."""
    if not p_last > 1:
        return math.inf
    return f_last * l_last / (p_last - 1)


def _exponent(f0, f1, l0, l1):
    if f0 <= 0 or f1 <= 0:
        return math.inf if f1 <= 0 else -math.inf
    return -math.log(f1 / f0) / math.log(l1 / l0)


def _gauss(k):
    x, w = np.polynomial.legendre.leggauss(k)
    return 0.5 * (x + 1), 0.5 * w


def _l_sum(network, n, *, lmax, rtol, atol, n_jobs):
    """Sectors with weights, the explicit cut-off, and the bound on what was left out."""
    nr, dim, mass = network.n_radial, network.dim, network.mass
    explicit = int(lmax) if lmax is not None else max(8 * n, 48)
    ls = np.arange(explicit + 1)
    specs = _sectors(nr, n, ls, dim, mass, n_jobs)
    weights = degeneracy(ls, dim)
    terms = np.array([von_neumann_entropy(s) * w for s, w in zip(specs, weights)])
    parts = list(zip(specs, weights.tolist()))
    s_explicit = float(terms.sum())
    p_local = _exponent(terms[-2], terms[-1], explicit - 1, explicit) if explicit >= 2 else 0
    info = {"lmax": explicit, "l_sum_explicit": s_explicit}
    if lmax is not None:  # a fixed cut-off: bound the rest by the asymptotics, no quadrature
        bound = _remainder_bound(terms[-1], explicit + 0.5, p_local)
        info.update(l_tail_bound=bound, l_tail_estimate=0.0)
        return parts, bound, info
    # Tail Σ_{l > L} f(l) = ∫_{L+½}^∞ f(l) dl + O(f'(L)) (midpoint rule), with l = (L+½) e^u.
    target = max(atol, rtol * s_explicit)
    p_inf = 6.0 - dim  # f = g S_l ~ l^{d−6}·ln l: the local exponent rises towards 6 − d
    l0 = explicit + 0.5
    xs, ws = _gauss(_GL_NODES)
    xc, wc = _gauss(_GL_CHECK)
    tail, tail_check = 0.0, 0.0
    rest, rest_half = 0.0, math.inf
    f_prev, l_prev = terms[-1], float(explicit)
    k = _GL_NODES
    for panel in range(_MAX_PANELS):
        u = panel + np.concatenate([xs, xc])
        lq = l0 * np.exp(u)
        sp_ = _sectors(nr, n, lq, dim, mass, n_jobs)
        g = degeneracy(lq, dim)
        wq = np.concatenate([ws, wc]) * lq * g  # dl = l du
        s_node = np.array([von_neumann_entropy(s) for s in sp_])
        tail += float(np.dot(s_node[:k], wq[:k]))
        tail_check += float(np.dot(s_node[k:], wq[k:]))
        parts += [(s, float(w)) for s, w in zip(sp_[:k], wq[:k])]
        # What lies beyond l_end: between the asymptotic exponent p_inf (lower) and the current
        # local exponent p (upper), since the local exponent only grows with l.
        f_last, l_last = s_node[k - 1] * g[k - 1], lq[k - 1]
        p_last = _exponent(f_prev, f_last, l_prev, l_last)
        f_prev, l_prev = f_last, l_last
        l_end = l0 * math.exp(panel + 1.0)
        hi = _remainder_bound(f_last * (l_last / l_end) ** min(p_last, p_inf), l_end, p_last)
        lo = f_last * (l_last / l_end) ** p_inf * l_end / (p_inf - 1) * (l_end / (l_end + 1))
        rest, rest_half = 0.5 * (hi + lo), 0.5 * (hi - lo)
        # Sectors whose leading t is near rounding (~1e-11) would only add noise: stop there.
        reliable = sp_[k - 1].t.size and sp_[k - 1].t[0] > _T_RELIABLE
        if panel >= 1 and (rest_half + abs(tail - tail_check) < 0.5 * target or not reliable):
            break
    if math.isfinite(rest) and rest > 0 and s_node[k - 1] > 0:
        # the remainder enters as the last node's spectrum, scaled to carry the estimate
        parts.append((sp_[k - 1], float(rest / s_node[k - 1])))
    midpoint = 3.0 * terms[-1] / (24.0 * l0)  # |f'| ≈ 3 f / l: the midpoint-rule correction
    bound = rest_half + abs(tail - tail_check) + midpoint
    info.update(l_tail_estimate=tail + rest, l_tail_bound=bound, l_tail_end=l_end)
    return parts, bound, info


class RadialMethod(Method):
    """``method='radial'``: centred balls on a :class:`RadialLattice`, by partial waves."""

    name = "radial"

    def __init__(self, *, lmax=None, rtol=DEFAULT_RTOL, n_jobs=None):
        self.lmax = lmax
        self.rtol = rtol
        self.n_jobs = n_jobs

    def assess(self, network, regions, *, tol, temperature=0.0):
        if temperature > 0:
            return Assessment(False, _THERMAL_REFUSAL)
        if not isinstance(network, RadialLattice):
            return Assessment(False, "the radial method serves arealaw.radial_lattice networks "
                                     "(balls on hypercubic lattices: method='dense' or another "
                                     "lattice method)")
        for r in regions:
            try:
                _ball_shells(network, r)
            except UnsupportedMethodError as exc:
                return Assessment(False, str(exc))
        n_l = (self.lmax or 8 * max(r.size for r in regions) + 48) + 200
        seconds = len(regions) * n_l * (cost("radial.sector_cube") * network.n_radial**3
                                        + cost("radial.sector_overhead"))
        return Assessment(True, f"partial waves on {network.n_radial} radial sites, "
                                f"d = {network.dim}", 8.0 * network.n_radial**2 * 6, seconds)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        if temperature > 0:
            raise UnsupportedMethodError(_THERMAL_REFUSAL)
        if not isinstance(network, RadialLattice):
            raise UnsupportedMethodError("method 'radial' needs a radial lattice "
                                         "(arealaw.radial_lattice)")
        n = _ball_shells(network, region)
        parts, bound, info = _l_sum(network, n, lmax=self.lmax, rtol=self.rtol, atol=tol,
                                    n_jobs=self.n_jobs)
        info.update(n_radial=network.n_radial, dim=network.dim, shells=n, radius=n + 0.5,
                    sectors=len(parts))
        return combine_spectra(parts, extra_error=bound, info=info)


def radial_entropy(n_radial, n_shells, *, dim=3, mass=0.0, renyi=(), lmax=None,
                   rtol=DEFAULT_RTOL, tol=DEFAULT_TOL, n_jobs=None):
    """Entanglement entropy of a ball of ``n_shells`` radial sites (R = n + ½) on the radial lattice.

    Parameters
    ----------
    n_radial : int
        Radial sites N (Dirichlet wall at N + 1).
    n_shells : int
        The ball: the first n radial sites, 1 ≤ n < N.
    dim : {2, 3}
    mass : float
    renyi : sequence
        Rényi orders besides von Neumann.
    lmax : int, optional
        Fixed angular-momentum cut-off (the rest is only bounded).  Default: sum exactly up to
        L = max(8n, 48) and integrate the tail in ln l until it is known to ``rtol``.
    rtol : float
        Relative accuracy aimed at for the l-sum.
    tol : float
        Absolute accuracy floor of the l-sum.
    n_jobs : int, optional
        joblib workers for the sectors (default: parallel only when it pays).

    Returns
    -------
    EntropyResult
        ``info['lmax']`` is the explicit cut-off, ``info['l_tail_estimate']`` the integrated tail,
        and ``error_bound`` includes the bound on the l-sum.

    Examples
    --------
    >>> from arealaw import radial_entropy
    >>> res = radial_entropy(20, 5, lmax=40)
    >>> 0.25 < res.entropy / 5.5**2 < 0.32
    True
    """
    from .._entropy import entropy  # the reductions sit below the entropy API

    net = radial_lattice(n_radial, dim=dim, mass=mass)
    region = shells(net, n_shells)
    method = RadialMethod(lmax=lmax, rtol=rtol, n_jobs=n_jobs)
    res = entropy(net, region, renyi=renyi, method=method, tol=tol)
    return res
