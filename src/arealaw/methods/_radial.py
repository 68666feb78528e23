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

from .._errors import UnsupportedMethodError
from .._costs import cost
from ..spectrum._measures import von_neumann_entropy
from ._registry import Method
from ..network._network import OscillatorNetwork
from ..network._radial import RadialLattice, radial_chain
from ..spectrum._symplectic import combine_spectra, symplectic_spectrum
from ..correlators import Assessment, dense_correlators
from ..correlators._dense import dominant_blocks

__all__ = ["RadialMethod", "degeneracy"]

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


def degeneracy(l, dim):
    """g_d(l): 2l + 1 in 3-D; 1 for l = 0 and 2 otherwise in 2-D (l may be non-integer)."""
    l = np.asarray(l, dtype=float)
    if dim == 3:
        return 2 * l + 1
    return np.where(l == 0, 1.0, 2.0)


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
        """Serve centred balls (:func:`arealaw.shells`) of a radial lattice at T = 0."""
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
        """Partial-wave sectors joined with weights, plus the bound on the l-sum."""
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
