"""Balls by partial waves (Srednicki 1993): one radial chain per angular momentum l.

A rotationally symmetric free scalar in d = 2 or 3 dimensions, discretised on N radial sites
(spacing a = 1, Dirichlet wall at N + 1), splits into independent chains, one per angular
momentum.  With φ = Σ φ_l(r) Y_l / r^{(d−1)/2}, the chain of angular momentum l has
(Srednicki 1993, PRL 71 666)

    d = 3:  V_l = Σ_j (j + ½)² (φ_j/j − φ_{j+1}/(j+1))² + [l(l+1)/j² + m²] φ_j²,
    d = 2:  V_l = Σ_j (j + ½) (φ_j/√j − φ_{j+1}/√(j+1))² + [l²/j² + m²] φ_j²,

and S(first n shells) = Σ_l g_d(l) S_l with g_3(l) = 2l + 1, g_2(0) = 1, g_2(l ≥ 1) = 2.
The sectors l ≤ L are computed (dense chain correlators, in parallel when it pays); the tail
l > L is bracketed by proven bounds lower ≤ Σ_{l>L} g_d S_l ≤ upper
(:mod:`arealaw.methods._wave_tail`: a two-site form of the cut bond with Green-function
supersolutions, both sides within O(l⁻⁴) relative of S_l).  The reported value adds modes whose
weighted entropy is (lower + upper)/2, so every measure (von Neumann and Rényi) stays a weighted
sum over modes, and each order's bound is max(E − lower, upper − E) for the represented E.  The
bound on the tail shrinks like L⁻⁶, and L is the smallest cut-off whose tail bound meets
half the target max(tol, rtol·S).
"""

import functools

import numpy as np

from .._errors import UnsupportedMethodError
from .._costs import cost
from .._parallel import map_units
from ..spectrum._measures import entropy_error_bound, mode_entropy, von_neumann_entropy
from ._registry import Method
from ._wave_tail import WaveTail, degeneracy
from ..network._network import OscillatorNetwork
from ..network._radial import RadialLattice, radial_chain
from ..spectrum._symplectic import SymplecticSpectrum, combine_spectra, symplectic_spectrum
from ..correlators import Assessment, dense_correlators
from ..correlators._dense import dominant_blocks

__all__ = ["RadialMethod", "degeneracy"]

#: Relative accuracy of the l-sum (the proven tail bound) aimed at by default.
DEFAULT_RTOL = 1e-6
#: Why temperature > 0 is refused: the large-l tail bound assumes the ground state.
_THERMAL_REFUSAL = ("the radial method serves only the ground state (its large-l tail bound "
                    "assumes it); for temperature > 0 use a ball on arealaw.hypercubic with "
                    "method='spectral' or 'dense'")
#: Largest automatic cut-off (one dense chain per l); a target that needs more is reported
#: with the bound reached there.
MAX_LMAX = 20000
#: Fraction of the target given to the l-tail (the rest to the sectors' numerics).
_TAIL_SHARE = 0.5
#: Terms of the tail summed one by one (then in closed form): start, and largest.
_L_END, _L_END_MAX = 2**17, 2**21


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
    """Partial-wave spectra: independent work units, run where the caller asked
    (:mod:`arealaw._parallel`); without a setting, ``n_jobs`` or all cores when it pays."""
    ls = [float(l) for l in ls]
    work = len(ls) * (cost("radial.sector_cube") * n_radial**3 + cost("radial.sector_overhead"))
    if n_jobs is None:
        n_jobs = 1 if work < 4.0 or len(ls) < 8 else -1
    return map_units(_sector, [(n_radial, n, l, dim, mass) for l in ls], auto=n_jobs,
                     stage="partial waves", batch_size=max(1, len(ls) // 64))


@functools.lru_cache(maxsize=4)
def _wave_tail(nr, n, dim, mass, l_end):
    # assess() and spectrum() of one case share it (building one costs ~0.1 s per 2^17 terms)
    return WaveTail(nr, n, dim=dim, mass=mass, l_end=l_end)


def _plan(nr, n, dim, mass, *, lmax, rtol, atol):
    """(WaveTail, cut-off L, target): L from the proven tail bound unless ``lmax`` is fixed."""
    tail = _wave_tail(nr, n, dim, mass, _L_END)
    # a lower bound on S (every sector holds at least f(T_lo)) keeps the target conservative
    target = max(atol, rtol * tail.total_lower())
    while (tail.l_end < _L_END_MAX
           and 0.5 * tail.far_upper() > 0.01 * _TAIL_SHARE * target):
        tail = _wave_tail(nr, n, dim, mass, 2 * tail.l_end)
    if lmax is not None:
        return tail, int(lmax), target
    return tail, tail.cutoff(_TAIL_SHARE * target, limit=MAX_LMAX), target


def _tail_part(tail, cutoff, fixed):
    """The modes carrying the tail estimate (none for a fixed cut-off) and the per-order bound."""
    if fixed:
        t, w = np.zeros(0), np.zeros(0)
    else:
        t, w = tail.midpoint_modes(cutoff)

    def order_error(order):
        lo, up = tail.bounds(cutoff, order)
        est = float(np.dot(w, mode_entropy(t, order)))
        return max(est - lo, up - est)

    spec = SymplecticSpectrum(t=t, t_error=np.zeros_like(t), weights=w,
                              trace=float(np.dot(w, t)), trace_error=0.0, nuclear_error=0.0)
    return spec, order_error


def _l_sum(network, n, *, lmax, rtol, atol, n_jobs):
    """Sectors with weights, the tail's modes, its per-order bound, and diagnostics."""
    nr, dim, mass = network.n_radial, network.dim, network.mass
    tail, cutoff, target = _plan(nr, n, dim, mass, lmax=lmax, rtol=rtol, atol=atol)
    ls = np.arange(cutoff + 1)
    specs = _sectors(nr, n, ls, dim, mass, n_jobs)
    weights = degeneracy(ls, dim)
    if lmax is None:
        # each computed sector adds its rounding bound (about constant, times g_l, so growing
        # with l) while the tail's bracket shrinks like L^-6: keep the cut-off where their sum
        # is least, which drops computed sectors whose bracket is narrower than their rounding
        numerics = np.cumsum([entropy_error_bound(s) * w for s, w in zip(specs, weights)])
        cutoff = int(np.argmin(numerics + tail.half_gaps()[:cutoff + 1]))
        specs, weights, ls = specs[:cutoff + 1], weights[:cutoff + 1], ls[:cutoff + 1]
    parts = list(zip(specs, weights.tolist()))
    s_explicit = float(sum(von_neumann_entropy(s) * w for s, w in parts))
    tail_spec, order_error = _tail_part(tail, cutoff, lmax is not None)
    if tail_spec.t.size:
        parts.append((tail_spec, 1.0))
    lo, up = tail.bounds(cutoff)
    info = {"lmax": cutoff, "l_sum_explicit": s_explicit,
            "l_tail_estimate": von_neumann_entropy(tail_spec), "l_tail_bound": order_error(1.0),
            "l_tail_lower": lo, "l_tail_upper": up, "l_target": target}
    return parts, order_error, info


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
        n_l = 1 + sum(_plan(network.n_radial, r.size, network.dim, network.mass,
                            lmax=self.lmax, rtol=self.rtol, atol=tol)[1] for r in regions)
        seconds = n_l * (cost("radial.sector_cube") * network.n_radial**3
                         + cost("radial.sector_overhead"))
        return Assessment(True, f"partial waves on {network.n_radial} radial sites, "
                                f"d = {network.dim}", 8.0 * network.n_radial**2 * 6, seconds)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        """Partial-wave sectors joined with weights, the tail's modes and its proven bound."""
        if temperature > 0:
            raise UnsupportedMethodError(_THERMAL_REFUSAL)
        if not isinstance(network, RadialLattice):
            raise UnsupportedMethodError("method 'radial' needs a radial lattice "
                                         "(arealaw.radial_lattice)")
        n = _ball_shells(network, region)
        parts, order_error, info = _l_sum(network, n, lmax=self.lmax, rtol=self.rtol, atol=tol,
                                          n_jobs=self.n_jobs)
        info.update(n_radial=network.n_radial, dim=network.dim, shells=n, radius=n + 0.5,
                    sectors=len(parts))
        return combine_spectra(parts, info=info, order_error=order_error)
