"""Hypercubic lattice builders: the lattice-regularised free scalar field, V = -Δ + m²."""

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .._arguments import choice, real_number, whole_number
from .._errors import ZERO_MODE
from .._numerics import fits_in_memory, is_inf_word, require_memory
from ._network import OscillatorNetwork

__all__ = ["BOUNDARIES", "HypercubicLattice", "hypercubic"]

BOUNDARIES = ("dirichlet", "periodic", "open")

#: Lattices with more sites than this defer assembling V (and drawing their disorder) until a
#: method asks for it, so that methods assess them from the description alone; where V would not
#: fit in memory, ``network.potential`` is then None (V is not formed).
DEFERRED_ASSEMBLY_SITES = 2**22
#: Entries of V (m², J) and of M accepted: squares and products of correlators built from them
#: stay far from overflow and underflow (double precision spans about 1e±308).
_SCALE_RANGE = (1e-100, 1e100)


@dataclass(frozen=True)
class HypercubicLattice:
    """Description of a hypercubic lattice (what :func:`hypercubic` built).

    ``shape`` entries are ints or ``math.inf``; ``mass`` is a float, or an array of per-site masses
    (given, or drawn with ``mass_disorder``; a lattice above ``DEFERRED_ASSEMBLY_SITES`` keeps
    the given mass and draws at assembly); ``inertia`` is the diagonal of M (float or per-site
    array).
    """

    shape: tuple
    mass: object
    couplings: tuple
    boundaries: tuple
    inertia: object = 1.0
    mass_disorder: float = 0.0
    coupling_disorder: float = 0.0
    seed: object = None

    @property
    def is_infinite(self):
        """True when at least one axis is infinite."""
        return any(math.isinf(n) for n in self.shape)

    @property
    def is_uniform(self):
        """True when translation-invariant up to boundaries: scalar mass, no disorder, M = c·I."""
        return (
            np.ndim(self.mass) == 0
            and np.ndim(self.inertia) == 0
            and self.mass_disorder == 0
            and self.coupling_disorder == 0
        )

    def pencil_bounds(self):
        """(lo, hi) with lo ≤ ω² ≤ hi (up to rounding) for every eigenvalue ω² of M⁻¹V, from the
        description alone: what cost estimates use where V is not assembled.

        V = diag(m_i²) + Σ_bonds J_b (e_i − e_j)(e_i − e_j)ᵀ + Σ_walls J e_i e_iᵀ is a sum of
        positive semidefinite terms, and every J_b ≥ (1 − w)·J, so V dominates
        m_min² I + (1 − w)·(the uniform lattice's −Δ), whose smallest eigenvalue is the plane-wave
        sum Σ_(Dirichlet axes) 4J sin²(π/(2(n+1))); Gershgorin gives
        λ_max(V) ≤ m_max² + 4 Σ_axes J (1 + w).  Dividing by the extreme inertias bounds the pencil.

        Examples
        --------
        >>> from arealaw import hypercubic
        >>> lo, hi = hypercubic((5,), mass=1.0).lattice.pencil_bounds()
        >>> round(lo, 4), hi
        (1.2679, 5.0)
        """
        masses, inertia = np.asarray(self.mass, dtype=float), np.asarray(self.inertia, dtype=float)
        w = self.coupling_disorder
        walls = sum(4 * j * math.sin(math.pi / (2 * (n + 1))) ** 2
                    for n, j, b in zip(self.shape, self.couplings, self.boundaries)
                    if b == "dirichlet")
        lo = float(masses.min()) ** 2 + (1 - w) * walls
        hi = (float(masses.max()) + self.mass_disorder) ** 2 + 4 * (1 + w) * sum(self.couplings)
        return lo / float(inertia.max()), hi / float(inertia.min())

    def describe(self):
        """One line describing the lattice (shape, boundaries, mass, couplings, disorder)."""
        shape = "x".join("inf" if math.isinf(n) else str(int(n)) for n in self.shape)
        mass = f"m={self.mass:g}" if np.ndim(self.mass) == 0 else "per-site masses"
        bnd = ",".join(self.boundaries) if len(set(self.boundaries)) > 1 else self.boundaries[0]
        parts = [shape, mass, bnd]
        if len(set(self.couplings)) > 1 or self.couplings[0] != 1.0:
            parts.append("J=" + ",".join(f"{j:g}" for j in self.couplings))
        if self.mass_disorder or self.coupling_disorder:
            parts.append(f"disorder(m={self.mass_disorder:g},J={self.coupling_disorder:g},"
                         f"seed={self.seed})")
        if np.ndim(self.inertia) != 0 or self.inertia != 1.0:
            parts.append("unequal inertia" if np.ndim(self.inertia) else f"M={self.inertia:g}")
        return " ".join(parts)


def _per_axis(value, d, name, cast):
    if value is None or isinstance(value, (dict, set)):
        raise ValueError(f"{name} must be one value or one per axis, got {value!r}")
    vals = np.atleast_1d(np.asarray(value, dtype=object))
    if vals.size == 1:
        vals = np.repeat(vals, d)
    if vals.size != d:
        raise ValueError(f"{name} has {vals.size} values but the lattice has {d} axes; "
                         f"give one value or one per axis")
    return tuple(cast(v) for v in vals)


def _parse_extent(n):
    if is_inf_word(n):
        return math.inf
    if isinstance(n, float) and math.isinf(n) and n > 0:
        return math.inf
    try:
        return whole_number(n, "shape entry", minimum=1)
    except ValueError as exc:
        raise ValueError(f"{exc}; give a positive integer or 'inf' per axis") from None


def _boundary(b):
    return choice(b, "boundary", BOUNDARIES)


def hypercubic(shape, *, mass=0.0, coupling=1.0, boundary="dirichlet", inertia=1.0,
               mass_disorder=0.0, coupling_disorder=0.0, seed=None):
    """Build the nearest-neighbour hypercubic lattice V = Σ m_i² q_i² + Σ_bonds J (q_i − q_j)².

    Parameters
    ----------
    shape : sequence of int or 'inf'
        Sites per axis (d = len(shape), 1 ≤ d ≤ 3).  An infinite axis is only served by the exact
        spectral method; V is then not formed.
    mass : float or array_like
        Field mass m ≥ 0, or an array of per-site masses with ``shape``.
    coupling : float or sequence of float
        Nearest-neighbour coupling J > 0, one value or one per axis (anisotropy).
    boundary : str or sequence of str
        ``'dirichlet'`` (fixed walls beyond both ends), ``'periodic'``, or ``'open'`` (free ends),
        one value or one per axis.  Ignored for infinite axes.
    inertia : float or array_like
        Diagonal kinetic matrix M (oscillator masses), one value or one per site.
    mass_disorder, coupling_disorder : float
        Seeded disorder: m_i = m + w·u_i with u_i ~ U(0, 1) independent per site, any w ≥ 0;
        J_bond = J·(1 + w·u_bond) with u_bond ~ U(−1, 1) independent per bond, 0 ≤ w < 1.
    seed : int, optional
        Seed of the disorder (``numpy.random.default_rng``).

    Returns
    -------
    OscillatorNetwork
        Sites in C order: the flat index of coordinate (x_0, ..., x_{d-1}) is
        ``numpy.ravel_multi_index(x, shape)`` (last axis fastest).  Coordinates are 0-based.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> net = hypercubic((4, 3), mass=0.5, boundary=("dirichlet", "periodic"))
    >>> net.n_sites, float(net.potential[0, 0])
    (12, 4.25)
    """
    if isinstance(shape, (int, np.integer, str, float, bool)):
        shape = (shape,)
    if not isinstance(shape, (tuple, list, np.ndarray)):
        raise ValueError(f"shape must be a sequence of sites per axis (e.g. (20, 20)), got "
                         f"{shape!r} ({type(shape).__name__})")
    shape = tuple(_parse_extent(n) for n in np.asarray(shape, dtype=object).ravel())
    d = len(shape)
    if not 1 <= d <= 3:
        raise ValueError(f"shape {shape} has {d} axes; hypercubic lattices have 1, 2 or 3")
    couplings = _per_axis(coupling, d, "coupling",
                          lambda j: real_number(j, "coupling", minimum=0, strict=True))
    boundaries = _per_axis(boundary, d, "boundary", _boundary)
    boundaries = tuple("infinite" if math.isinf(n) else b for n, b in zip(shape, boundaries))
    # m_i = m + w·u_i with u_i >= 0 stays a valid mass for any w >= 0; a coupling
    # J·(1 + w·u), u in (−1, 1), stays positive only for w < 1
    if not (0 <= real_number(mass_disorder, "mass_disorder") < math.inf):
        raise ValueError(f"mass_disorder={mass_disorder!r} must be a finite number >= 0")
    if not (0 <= real_number(coupling_disorder, "coupling_disorder") < 1):
        raise ValueError(f"coupling_disorder={coupling_disorder!r} must satisfy 0 <= w < 1 "
                         "(larger w would give negative couplings)")
    if seed is not None:
        seed = whole_number(seed, "seed", minimum=0)
    infinite = any(math.isinf(n) for n in shape)
    if infinite and (np.ndim(mass) or np.ndim(inertia) or mass_disorder or coupling_disorder):
        raise ValueError("an infinite lattice must be uniform: scalar mass and inertia, no disorder")
    n_sites = None if infinite else int(np.prod(shape))
    uniform = not (np.ndim(mass) or np.ndim(inertia) or mass_disorder or coupling_disorder)
    # Large lattices defer assembly (disorder draws included) until a method reads V, so that
    # assessments refuse from the description within a second instead of after assembling
    deferred = not infinite and n_sites > DEFERRED_ASSEMBLY_SITES
    if not infinite and not deferred:
        # V is assembled now: refuse before allocating anything when it cannot fit
        require_memory(assembly_bytes(n_sites, d), f"assembling V of {n_sites:.3g} lattice sites",
                       "use a smaller lattice" + ("" if uniform else
                                                  ", or a uniform one (no disorder, scalar mass "
                                                  "and inertia), which is served without V"))
    masses = _site_values(mass, shape, n_sites, "mass", allow_zero=True)
    inertias = _site_values(inertia, shape, n_sites, "inertia", allow_zero=False)
    rng = np.random.default_rng(seed)

    def site_masses():
        if mass_disorder:
            return np.broadcast_to(masses, (n_sites,)) + mass_disorder * rng.random(n_sites)
        return masses

    if deferred:
        # m_i = m + w·u_i with w > 0 is positive unless every u_i draws exactly 0
        _check_zero_mode(np.max(masses) + mass_disorder, boundaries, shape)
    else:
        masses = site_masses()
        _check_zero_mode(masses, boundaries, shape)
    spec = HypercubicLattice(
        shape=shape, mass=masses if np.ndim(masses) else float(masses), couplings=couplings,
        boundaries=boundaries, inertia=inertias if np.ndim(inertias) else float(inertias),
        mass_disorder=float(mass_disorder), coupling_disorder=float(coupling_disorder), seed=seed,
    )
    _check_scale(spec)
    if infinite:
        return OscillatorNetwork(None, lattice=spec, check=False)

    def matrices():
        v = _assemble(shape, site_masses() if deferred else masses, couplings, boundaries,
                      coupling_disorder, rng)
        kinetic = None if np.ndim(inertias) == 0 and inertias == 1.0 else sp.diags(
            np.broadcast_to(inertias, (n_sites,)).astype(float), format="csr")
        return v, kinetic

    if deferred:
        return OscillatorNetwork(lambda: _checked_matrices(matrices, n_sites, len(shape)),
                                 lattice=spec, check=False)
    return OscillatorNetwork(*matrices(), lattice=spec, check=False)


def assembly_bytes(n_sites, d):
    """Peak bytes while V of a d-dimensional lattice is assembled (COO triplets, CSR, masses).

    Measured with tracemalloc on 200² and 50³ lattices with disorder: 335 and 449 bytes per
    site, i.e. 64·(2d + 1) + 16.
    """
    return float(n_sites) * (64.0 * (2 * d + 1) + 16.0)


def _checked_matrices(matrices, n_sites, d):
    if not fits_in_memory(assembly_bytes(n_sites, d)):
        return None, None  # V cannot be formed here; like an infinite lattice's, it stays None
    return matrices()


def _site_values(value, shape, n_sites, name, *, allow_zero):
    if np.ndim(value) == 0:
        value = real_number(value, name)
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of one number per site") from None
    if arr.ndim:
        if n_sites is None or arr.size != n_sites:
            raise ValueError(f"{name} array has shape {arr.shape}; give one number or one value "
                             f"per site (shape {shape})")
        arr = arr.ravel()
    if not np.all(np.isfinite(arr)) or np.any(arr < 0) or (not allow_zero and np.any(arr == 0)):
        bad = arr if arr.ndim == 0 else arr[~(np.isfinite(arr) & (arr > (-1 if allow_zero else 0)))]
        bound = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be finite and {bound}, got {np.ravel(bad)[:3].tolist() or arr}")
    return arr if arr.ndim else float(arr)


def _check_scale(spec):
    """Refuse masses, couplings and inertias whose squares or ratios leave double precision."""
    lo_s, hi_s = _SCALE_RANGE
    big = [(name, v) for name, v, top in (
        ("mass", float(np.max(spec.mass)) + spec.mass_disorder, math.sqrt(hi_s)),
        ("coupling", max(spec.couplings), hi_s)) if v > top]
    inertia = np.asarray(spec.inertia, dtype=float)
    if not (lo_s <= float(inertia.min()) and float(inertia.max()) <= hi_s):
        big.append(("inertia", float(inertia.min() if inertia.min() < lo_s else inertia.max())))
    if big:
        name, v = big[0]
        raise ValueError(f"{name}={v:g} is outside the range this double-precision arithmetic "
                         f"serves (masses up to {math.sqrt(hi_s):g}, couplings up to {hi_s:g}, "
                         f"inertias in [{lo_s:g}, {hi_s:g}]); rescale the units: the ground-state entropy "
                         "depends only on ratios of masses², couplings and inertias")


def _check_zero_mode(masses, boundaries, shape):
    """Refuse exactly the massless lattices whose ⟨qq⟩ diverges.

    ⟨qq⟩ = Σ_(finite-axis modes) ∫ d^{d∞}k/(2π)^{d∞} 1/(2ω(k)).  Without mass and Dirichlet
    walls every finite periodic or open axis has a zero mode, so the term with all finite-axis
    momenta zero is ∫ d^{d∞}k/|k| near k = 0, finite iff d∞ ≥ 2 (d∞ infinite axes); all other
    terms have a gap.  Finite axes beside two or more infinite ones are therefore fine.
    """
    if np.any(np.asarray(masses) > 0) or "dirichlet" in boundaries:
        return
    n_inf = sum(math.isinf(n) for n in shape)
    if n_inf >= 2:
        return
    kinds = "/".join(sorted({b for b in boundaries}))
    raise ValueError(
        f"massless lattice with {kinds} boundaries and {n_inf} infinite axes: {ZERO_MODE} (or "
        "use at least two infinite axes)")


def _assemble(shape, masses, couplings, boundaries, coupling_disorder, rng):
    n = int(np.prod(shape))
    idx = np.arange(n).reshape(shape)
    rows, cols, vals = [], [], []
    diag = np.zeros(n) + np.asarray(masses) ** 2
    for axis, (length, j, b) in enumerate(zip(shape, couplings, boundaries)):
        if b == "periodic" and length > 1:
            a = idx.ravel()
            c = np.roll(idx, -1, axis=axis).ravel()
            if length == 2:  # two sites on a ring: one pair, bonded twice
                keep = np.take(idx, [0], axis=axis).ravel()
                a, c = keep, np.take(idx, [1], axis=axis).ravel()
                jb = 2 * j * np.ones(a.size)
            else:
                jb = j * np.ones(a.size)
        else:
            a = np.take(idx, np.arange(length - 1), axis=axis).ravel()
            c = np.take(idx, np.arange(1, length), axis=axis).ravel()
            jb = j * np.ones(a.size)
        if coupling_disorder and a.size:
            jb = jb * (1 + coupling_disorder * rng.uniform(-1, 1, a.size))
        np.add.at(diag, a, jb)
        np.add.at(diag, c, jb)
        rows += [a, c]
        cols += [c, a]
        vals += [-jb, -jb]
        if b == "dirichlet":  # walls beyond both ends pin a bond of strength J to each end site
            ends = np.take(idx, [0, length - 1], axis=axis).ravel() if length > 1 else idx.ravel()
            np.add.at(diag, ends, j if length > 1 else 2 * j)
    rows.append(np.arange(n))
    cols.append(np.arange(n))
    vals.append(diag)
    return sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                         shape=(n, n))
