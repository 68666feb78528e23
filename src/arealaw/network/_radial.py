"""The radial lattice (Srednicki 1993): a free scalar in d = 2 or 3 on N radial sites.

With φ = Σ φ_l(r) Y_l / r^{(d−1)/2} the field splits into one chain per angular momentum l
(Srednicki 1993, PRL 71 666):

    d = 3:  V_l = Σ_j (j + ½)² (φ_j/j − φ_{j+1}/(j+1))² + [l(l+1)/j² + m²] φ_j²,
    d = 2:  V_l = Σ_j (j + ½) (φ_j/√j − φ_{j+1}/√(j+1))² + [l²/j² + m²] φ_j².

This module holds the lattice (the network and its balls); summing the chains is
``method='radial'`` (:mod:`arealaw.methods`).
"""

import math

import numpy as np
import scipy.sparse as sp

from ._network import OscillatorNetwork
from ._regions import region_of

__all__ = ["DIMENSIONS", "RadialLattice", "radial_chain", "radial_lattice", "shells"]

#: Dimensions served by the radial lattice.
DIMENSIONS = (2, 3)


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


def radial_chain(n_radial, l, *, dim=3, mass=0.0):
    """Potential matrix (sparse, N × N) of the radial chain of angular momentum ``l``.

    Examples
    --------
    >>> from arealaw.network import radial_chain
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
        """None: the shells have no lattice layout."""
        return None

    @property
    def index_limit(self):
        """Number of radial sites N (indices of shells are 0 … N − 1)."""
        return self.n_radial

    @property
    def ndim(self):
        """Dimension d of the radial lattice (2 or 3)."""
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
                     f"ball of {n} shells (R = {n + 0.5:g})",
                     ("ball", n + 0.5, (0.0,) * network.dim))
