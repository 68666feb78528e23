"""Reflection sectors: split a mirror-symmetric region of a uniform lattice into parity blocks.

A reflection x_a → c − x_a that maps both the lattice (its boundary condition along a) and the
region onto themselves commutes with V, hence with X_A and P_A.  The k independent reflections
generate Z₂^k; its 2^k characters split the region's modes into sectors of about n/2^k sites,
so the dense symplectic eigenproblem costs about 4^k times less (64× for a centred cube or ball).
The sector bases are orthonormal ±1/√|orbit| vectors, so block errors carry over unchanged.
"""

import numpy as np
import scipy.sparse as sp

from .._numerics import fits_in_memory
from .._parallel import map_units
from ._registry import BlockMethod, dense_spectrum_seconds
from ..spectrum._symplectic import combine_spectra, symplectic_spectrum
from ..correlators import Assessment

__all__ = ["ReflectionBlockMethod", "reflection_sectors"]

#: Regions smaller than this are not worth splitting.
MIN_SECTOR_REGION = 64


def _mirror_axes(network, coords, indices):
    """Per symmetric axis: (axis, c) with x_a → c − x_a preserving lattice and region."""
    lat = network.lattice
    shape = network.index_shape
    found = []
    for a, bnd in enumerate(lat.boundaries):
        lo, hi = int(coords[:, a].min()), int(coords[:, a].max())
        if lo == hi:
            continue  # the reflection fixes every site: nothing to split
        c = lo + hi
        if bnd in ("dirichlet", "open") and c != int(lat.shape[a]) - 1:
            continue
        mirrored = coords.copy()
        mirrored[:, a] = c - coords[:, a]
        flat = np.ravel_multi_index(mirrored.T, shape)
        pos = np.searchsorted(indices, flat)
        pos = np.minimum(pos, indices.size - 1)
        if np.array_equal(indices[pos], flat):
            found.append((a, pos))
    return found


class _Group:
    """Z₂^k action on a region: site images, orbit representatives, stabiliser sizes."""

    def __init__(self, axes, n):
        k = len(axes)
        self.size = 2**k
        images = np.empty((self.size, n), dtype=np.int64)
        images[0] = np.arange(n)
        for g in range(1, self.size):
            low = (g & -g).bit_length() - 1
            images[g] = axes[low][1][images[g & (g - 1)]]
        self.reps = np.unique(images.min(axis=0))
        self.orbits = images[:, self.reps]                   # (|G|, n_orbits)
        self.fixed = self.orbits == self.reps[None, :]       # g stabilises the orbit's rep
        self.stab = self.fixed.sum(axis=0)

    def character(self, sigma):
        return 1.0 - 2.0 * (np.array([bin(g & sigma).count("1") for g in range(self.size)]) % 2)

    def allowed(self, chi):
        """Orbits that carry character chi (chi trivial on their stabiliser)."""
        return np.flatnonzero(~(self.fixed & (chi[:, None] < 0)).any(axis=0))


def _group(network, indices):
    lat = network.lattice
    if lat is None or not lat.is_uniform:
        return None
    indices = np.asarray(indices, dtype=np.int64)
    axes = _mirror_axes(network, network.coords(indices), indices)
    return _Group(axes, indices.size) if axes else None


def reflection_sectors(network, indices):
    """Orthonormal sector bases (csc, n × m_σ) of a mirror-symmetric region, or None.

    Examples
    --------
    >>> from arealaw import hypercubic, box
    >>> net = hypercubic((6, 6), mass=1.0)
    >>> [b.shape[1] for b in reflection_sectors(net, box(net, 2).indices)]
    [1, 1, 1, 1]
    """
    grp = _group(network, indices)
    if grp is None:
        return None
    n = len(indices)
    bases = []
    for sigma in range(grp.size):
        chi = grp.character(sigma)
        cols = grp.allowed(chi)
        rows = grp.orbits[:, cols].ravel()
        col_of = np.tile(np.arange(cols.size), grp.size)
        b = sp.csc_matrix((np.repeat(chi, cols.size), (rows, col_of)), shape=(n, cols.size))
        b.sum_duplicates()
        norms = np.sqrt(np.asarray(b.multiply(b).sum(axis=0)).ravel())
        bases.append(sp.csc_matrix(b @ sp.diags(1.0 / norms)))
    return [b for b in bases if b.shape[1]]


def _sector_block(rep_rows, grp, chi, cols):
    """v_Oᵀ X v_O' = Σ_g χ(g) X[x_O, g x_O'] / sqrt(|Stab_O| |Stab_O'|), from rows X[reps, :]."""
    sub = rep_rows[cols]
    z = np.zeros((cols.size, cols.size))
    for g in range(grp.size):
        z += chi[g] * sub[:, grp.orbits[g, cols]]
    scale = 1.0 / np.sqrt(grp.stab[cols].astype(float))
    z *= scale[:, None] * scale[None, :]
    return 0.5 * (z + z.T)


def _sector_spectrum(x, p, x_entry, p_entry, info):
    """One parity sector's symplectic spectrum (a work unit: module level, data in)."""
    return symplectic_spectrum(x, p, x_entry=x_entry, p_entry=p_entry, info=info)


class ReflectionBlockMethod(BlockMethod):
    """A block method that splits mirror-symmetric regions into parity sectors first.

    Only the rows of one site per orbit are computed (about n²/2^k entries instead of n²).
    The backend must report ``Blocks.entry_x_error``/``entry_p_error`` (bounds per entry), so
    the error of the full region block can be bounded (n × entry bound); otherwise the whole
    block is used.
    """

    def assess(self, network, regions, *, tol, temperature=0.0):
        """As :class:`BlockMethod`, but regions that split into sectors cost their sectors."""
        n_max = max((r.size for r in regions), default=0)
        k_max = 2 ** (network.ndim or 1)
        if not fits_in_memory(2 * 8.0 * n_max * n_max / k_max):
            # even the most symmetric split would not fit: do not spend O(n) finding mirrors
            return super().assess(network, regions, tol=tol, temperature=temperature)
        groups = [None if r.size < MIN_SECTOR_REGION else _group(network, r.indices)
                  for r in regions]
        if not regions or any(g is None or g.size < 2 for g in groups):
            return super().assess(network, regions, tol=tol, temperature=temperature)
        a = self.backend.assess(network, max(r.size for r in regions), tol=tol,
                                temperature=temperature)
        if not a.ok:
            return a
        big = max(regions, key=lambda r: r.size)
        k = groups[regions.index(big)].size
        # rows of one site per orbit, then 2^k dense sector eigenproblems of about n/2^k sites
        need = 2 * 8.0 * big.size * big.size / k + 4 * 8.0 * (big.size / k) ** 2
        secs = a.seconds / k + sum(k * dense_spectrum_seconds(r.size / g.size)
                                   for r, g in zip(regions, groups))
        return Assessment(True, f"{a.reason}; {k} parity sectors", need, secs)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        grp = None if region.size < MIN_SECTOR_REGION else _group(network, region.indices)
        if grp is None or grp.size < 2:
            return super().spectrum(network, region, tol=tol, temperature=temperature)
        idx = region.indices
        b = self.backend.blocks(network, idx[grp.reps], idx, tol=tol, temperature=temperature)
        if b.entry_x_error is None or b.entry_p_error is None:
            return super().spectrum(network, region, tol=tol, temperature=temperature)
        units, sizes = [], []
        for sigma in range(grp.size):
            chi = grp.character(sigma)
            cols = grp.allowed(chi)
            if not cols.size:
                continue
            # a sector entry sums |G| entries with weights ≤ 1: its error is ≤ |G|·entry bound
            units.append((_sector_block(b.x, grp, chi, cols), _sector_block(b.p, grp, chi, cols),
                          grp.size * b.entry_x_error, grp.size * b.entry_p_error, b.info))
            sizes.append(int(cols.size))
        if sum(sizes) != region.size:  # completeness of the sector bases
            raise AssertionError("reflection sectors do not span the region")
        # the sectors' eigenproblems are independent work units (in process unless the caller
        # asked for workers or a cluster); their blocks travel as data
        parts = [(spec, 1.0) for spec in map_units(_sector_spectrum, units, stage="sectors")]
        return combine_spectra(parts, info=dict(b.info, reflection_sectors=sizes))
