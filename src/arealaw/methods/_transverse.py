"""Half-spaces, slabs and strips by transverse Fourier reduction (exact on the lattice).

On a uniform hypercubic lattice that is periodic (or infinite) along every axis but the normal
one, transverse momenta k decouple: the region's spectrum is the union over k of the spectra of
1-D chains along the normal axis with the effective mass

    μ²(k) = m² + Σ_i 4 J_i sin²(k_i / 2)

(Casini & Huerta 2009 review, J. Phys. A 42 504007).  Periodic transverse axes give a finite sum
over k = 2πq/L; infinite ones give the entropy per unit boundary area as an integral over the
Brillouin zone, done by graded composite Gauss–Legendre quadrature with a refinement check.
When the normal axis is infinite too, the half-chain spectrum is known in closed form (Peschel &
Chung 1999): entanglement energies (2j + 1)ε with ε = π K(λ′)/K(λ), λ + 1/λ = 2 + μ².

Gibbs states reduce the same way: H = Σ_k H_k, so exp(−H/T) is a product over transverse momenta
and each chain is in its own Gibbs state at T (its correlators from the dense backend with the
coth factor).  A half-space of an infinite normal axis has infinite thermal entropy, so at
T > 0 it is refused.
A strip of a 3-D lattice (a box spanning one whole periodic axis) reduces the same way to boxes
of a 2-D lattice, one per momentum along the spanned axis.
"""

import math

import numpy as np
import scipy.special

from .._costs import cost
from .._numerics import EPS
from .._parallel import map_units
from .._errors import ZERO_MODE, ConvergenceError, UnsupportedMethodError
from ..network._lattices import HypercubicLattice, hypercubic
from ..spectrum._measures import von_neumann_entropy
from ._registry import Method
from ..spectrum._symplectic import SymplecticSpectrum, combine_spectra, symplectic_spectrum
from ..correlators import Assessment, dense_correlators
from ..correlators._dense import dominant_blocks

__all__ = ["TransverseMethod", "half_chain_spectrum"]

#: Relative accuracy aimed at for Brillouin-zone integrals.
DEFAULT_RTOL = 1e-8
#: Entanglement energies above this are dropped (mode entropy < 1e-16).
_E_MAX = 40.0


def half_chain_spectrum(mu2, *, coupling=1.0):
    """Symplectic spectrum of half of an infinite chain with V = μ² + J·(−Δ) (Peschel & Chung 1999).

    Examples
    --------
    >>> from arealaw import von_neumann_entropy
    >>> from arealaw.methods import half_chain_spectrum
    >>> round(von_neumann_entropy(half_chain_spectrum(1.0)), 12)
    0.055900404567
    """
    w2 = float(mu2) / float(coupling)  # J only rescales the energy: ω₀² = μ²/J in units of J
    if not w2 > 0:
        raise ValueError(f"mu2={mu2!r}: the massless infinite chain has no normalisable half-"
                         "chain state; give an effective mass > 0")
    w = math.sqrt(w2)
    one_minus = w * math.sqrt(1 + w2 / 4) - w2 / 2  # 1 − λ without cancellation
    lam = 1.0 - one_minus
    m1 = one_minus * (1.0 + lam)  # 1 − λ²
    eps = math.pi * scipy.special.ellipk(m1) / scipy.special.ellipkm1(m1)
    j = np.arange(int(_E_MAX / (2 * eps)) + 2)
    e = (2 * j + 1) * eps
    e = e[e < _E_MAX]
    t = 0.25 / np.sinh(e / 2) ** 2  # ν = ½ coth(e/2) ⇒ t = ν² − ¼
    return SymplecticSpectrum(t=t, t_error=16 * EPS * t, weights=np.ones_like(t),
                              info={"epsilon": eps})


def _lattice(network):
    lat = network.lattice
    if not isinstance(lat, HypercubicLattice) or not lat.is_uniform:
        raise UnsupportedMethodError(
            "method 'transverse' needs a uniform hypercubic lattice (arealaw.hypercubic without "
            "disorder); use method='dense' (or another lattice method) here")
    return lat


def _box_geometry(lat, region):
    """A box spanning whole periodic axes: a strip (3-D) or a slab written as a box."""
    size, origin = region.geometry[1], region.geometry[2]
    spans = [a for a, (n, b) in enumerate(zip(lat.shape, lat.boundaries))
             if b == "periodic" and size[a] == n and origin[a] == 0]
    if not spans:
        raise UnsupportedMethodError(
            f"method 'transverse' serves boxes only when they span a whole periodic axis (strips, "
            f"slabs); box {region.description} spans none: use method='dense' (or another "
            "lattice method)")
    axes = tuple(a for a in range(len(lat.shape)) if a not in spans)
    if any(math.isinf(lat.shape[a]) for a in axes):
        raise UnsupportedMethodError(
            "method 'transverse' needs the axes a strip does not span to be finite; use "
            "method='spectral' for boxes of infinite lattices")
    return axes, tuple(origin[a] for a in axes), tuple(origin[a] + size[a] for a in axes)


def _geometry(network, region):
    """(normal axes, starts, stops or None for a half-space of an infinite axis), checked."""
    lat = _lattice(network)
    kind = region.geometry[0] if region.geometry else None
    if kind == "box":
        return _box_geometry(lat, region)
    if kind not in ("half_space", "slab"):
        raise UnsupportedMethodError(
            f"method 'transverse' serves half-spaces, slabs and strips (arealaw.half_space, "
            f"arealaw.slab, a box spanning periodic axes); region {region.description} is a "
            f"{kind or 'general'} region: use method='dense' (or another lattice method)")
    axis = region.geometry[1]
    start, stop = (0, region.geometry[2]) if kind == "half_space" else region.geometry[2:4]
    for a, b in enumerate(lat.boundaries):
        if a != axis and b not in ("periodic", "infinite"):
            raise UnsupportedMethodError(
                f"method 'transverse' needs periodic or infinite transverse axes, but axis {a} "
                f"is {b}: a {kind.replace('_', '-')} across it breaks translation symmetry; use "
                "method='dense' (or another lattice method)")
    normal = lat.boundaries[axis]
    if normal == "infinite":
        if kind != "half_space":
            raise UnsupportedMethodError(
                "method 'transverse' serves slabs only on a finite normal axis (dirichlet, open or "
                f"periodic); axis {axis} is infinite here")
        return (axis,), (start,), None
    transverse = [n for a, n in enumerate(lat.shape) if a != axis]
    if region.size and region.size != (stop - start) * int(np.prod(transverse)):
        raise UnsupportedMethodError(
            f"region {region.description} does not span the transverse axes; method 'transverse' "
            "needs a whole half-space or slab")
    return (axis,), (int(start),), (int(stop),)


def _chain_spectrum(lat, axes, start, stop, mu2, temperature=0.0):
    """Spectrum of the box start..stop−1 of the sub-lattice along ``axes`` with mass² ``mu2``."""
    if stop is None:
        if temperature > 0:
            raise UnsupportedMethodError(_THERMAL_REFUSAL)
        return half_chain_spectrum(mu2, coupling=lat.couplings[axes[0]])
    sub = hypercubic([lat.shape[a] for a in axes], mass=math.sqrt(max(mu2, 0.0)),
                     coupling=[lat.couplings[a] for a in axes],
                     boundary=[lat.boundaries[a] for a in axes], inertia=lat.inertia)
    x, p, info = dense_correlators(sub, temperature=temperature)
    grids = np.meshgrid(*[np.arange(b, e) for b, e in zip(start, stop)], indexing="ij")
    rows = np.ravel_multi_index([g.ravel() for g in grids], [lat.shape[a] for a in axes])
    ix = np.ix_(rows, rows)
    hx, hp = dominant_blocks(info, rows)
    return symplectic_spectrum(x[ix], p[ix], x_dominant=hx, p_dominant=hp)


def _transverse_axes(lat, axes):
    return [a for a in range(len(lat.shape)) if a not in axes]


def _mu2(lat, axes, ks):
    """Effective mass² for transverse momenta ``ks`` (list of arrays, one per transverse axis)."""
    mu2 = float(lat.mass) ** 2
    grids = np.meshgrid(*ks, indexing="ij") if ks else []
    total = np.full(grids[0].shape if grids else (), mu2)
    for a, g in zip(_transverse_axes(lat, axes), grids):
        total = total + 4 * lat.couplings[a] * np.sin(g / 2) ** 2
    return total


def _grouped(mu2, weights):
    """Distinct μ² (to rounding) with summed weights: k ↔ −k and axis swaps give equal chains."""
    weights = np.broadcast_to(np.asarray(weights, dtype=float), np.shape(mu2)).ravel()
    mu2 = np.ravel(mu2)
    key = np.round(mu2 / max(mu2.max(), 1e-300) * 2**40)
    uniq, inv = np.unique(key, return_inverse=True)
    w = np.bincount(inv, weights=weights)
    first = np.zeros(uniq.size, dtype=int)
    first[inv[::-1]] = np.arange(mu2.size)[::-1]
    return mu2[first], w


def _graded_rule(levels, nodes):
    """Gauss–Legendre on [0, π] with panels graded geometrically towards k = 0."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    edges = np.concatenate([[0.0], math.pi * 2.0 ** -np.arange(levels, -1, -1.0)])
    ks, ws = [], []
    for a, b in zip(edges[:-1], edges[1:]):
        ks.append(a + (b - a) * (x + 1) / 2)
        ws.append((b - a) / 2 * w)
    return np.concatenate(ks), np.concatenate(ws)


def _zone_parts(lat, axes, start, stop, levels, nodes, temperature=0.0):
    n_t = len(lat.shape) - len(axes)
    k, w = _graded_rule(levels, nodes)
    mu2 = _mu2(lat, axes, [k] * n_t)
    wg = w
    for _ in range(n_t - 1):
        wg = np.multiply.outer(wg, w)
    wg = wg / math.pi**n_t  # ∫_{[−π,π]^n} d^n k/(2π)^n of an even function = (1/π^n)∫_{[0,π]^n}
    mus, ws = _grouped(mu2, wg)
    return _chains(lat, axes, start, stop, mus, ws, temperature)


def _chains(lat, axes, start, stop, mus, ws, temperature):
    """(spectrum, weight) per chain: the transverse momenta are independent work units, run
    where the caller asked (:mod:`arealaw._parallel`; in process by default).  The lattice
    travels as its description (a few hundred bytes), never as V."""
    specs = map_units(_chain_spectrum, [(lat, axes, start, stop, m, temperature) for m in mus],
                      stage="transverse momenta")
    return [(spec, float(w)) for spec, w in zip(specs, ws)]


def _entropy_of(parts):
    return sum(wt * von_neumann_entropy(s) for s, wt in parts)


#: Why temperature > 0 is refused for half-spaces of an infinite normal axis.
_THERMAL_REFUSAL = ("a half-space of an infinite normal axis has infinite entropy at temperature "
                    "> 0 (the thermal part grows with its volume); use a slab on a finite normal "
                    "axis (method='transverse'), or a finite region with method='spectral'")


class TransverseMethod(Method):
    """``method='transverse'``: half-spaces and slabs of lattices periodic or infinite transversally."""

    name = "transverse"

    def __init__(self, *, rtol=DEFAULT_RTOL, max_levels=28):
        self.rtol = rtol
        self.max_levels = max_levels

    def assess(self, network, regions, *, tol, temperature=0.0):
        """Serve half-spaces and slabs of uniform lattices with translation-invariant axes."""
        lat = network.lattice
        if not isinstance(lat, HypercubicLattice):
            return Assessment(False, "the transverse reduction needs a hypercubic lattice")
        try:
            geos = [_geometry(network, r) for r in regions]
        except UnsupportedMethodError as exc:
            return Assessment(False, str(exc))
        if temperature > 0 and any(g[2] is None for g in geos):
            return Assessment(False, _THERMAL_REFUSAL)
        axes = geos[0][0]
        n_normal = float(np.prod([lat.shape[a] for a in axes]))
        chain = (cost("transverse.chain_cube") * n_normal**3 + cost("transverse.chain_overhead")
                 if math.isfinite(n_normal) else cost("transverse.bz_point"))
        transverse = [lat.shape[a] for a in _transverse_axes(lat, axes)]
        if all(math.isfinite(n) for n in transverse):
            n_k = int(np.prod([n // 2 + 1 for n in transverse])) if transverse else 1
            how = f"{n_k} transverse momenta"
        else:
            n_k = 2 * 150 ** len(transverse)
            how = "Brillouin-zone integral (entropy per unit area)"
        nbytes = 40.0 * (n_normal if math.isfinite(n_normal) else 1.0) ** 2
        return Assessment(True, f"transverse reduction along axes {list(axes)}: {how}", nbytes,
                          len(regions) * n_k * chain)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        """One chain per transverse momentum, joined with weights (per area on infinite axes)."""
        axes, start, stop = _geometry(network, region)
        lat = network.lattice
        transverse = [lat.shape[a] for a in _transverse_axes(lat, axes)]
        if any(math.isinf(n) for n in transverse):
            if not all(math.isinf(n) for n in transverse):
                raise UnsupportedMethodError(
                    "method 'transverse' needs the transverse axes all periodic or all infinite")
            return self._per_area(lat, axes, start, stop, tol, temperature)
        ks = [2 * np.pi * np.arange(n) / n for n in transverse]
        mus, ws = _grouped(_mu2(lat, axes, ks), 1.0) if ks else (np.array([lat.mass**2]), [1.0])
        parts = _chains(lat, axes, start, stop, mus, ws, temperature)
        return combine_spectra(parts, info={"transverse_momenta": int(np.sum(ws)),
                                            "distinct_chains": len(parts), "axes": list(axes)})

    def _per_area(self, lat, axes, start, stop, tol, temperature=0.0):
        if lat.mass == 0 and stop is not None and "dirichlet" not in [lat.boundaries[a]
                                                                      for a in axes]:
            raise ValueError(f"k = 0 chain of a massless lattice with periodic/open normal axes: "
                             f"{ZERO_MODE}")
        levels, nodes = 8, 6
        converged = True
        prev = _zone_parts(lat, axes, start, stop, levels, nodes, temperature)
        s_prev = _entropy_of(prev)
        while True:
            levels, nodes = levels + 4, nodes + 2
            parts = _zone_parts(lat, axes, start, stop, levels, nodes, temperature)
            s = _entropy_of(parts)
            err = abs(s - s_prev)
            if err <= max(tol, self.rtol * abs(s)):
                break
            if levels >= self.max_levels and err <= 1e-3 * abs(s):
                # Slow only at the k → 0 panel (a log singularity when μ → 0): each refinement
                # shrinks that panel 16×, so the error left is far below the last change;
                # report the value with 4× that change as its quadrature bound.
                converged = False
                err = 4 * err
                break
            if levels >= self.max_levels:
                raise ConvergenceError(
                    f"the Brillouin-zone integral did not converge: change {err:.3g} between "
                    f"the last two refinements ({levels} grading levels, {nodes} nodes)",
                    residual=err, iterations=levels)
            prev, s_prev = parts, s
        return combine_spectra(parts, extra_error=err, info={
            "per_area": True, "axes": list(axes), "quadrature_nodes_per_axis": (levels + 1) * nodes,
            "distinct_chains": len(parts), "quadrature_change": err,
            "quadrature_converged": converged})
