"""Regions: sorted sets of site indices with a human description."""

import math
from dataclasses import dataclass, field

import numpy as np

from .._arguments import int_vector, real_number, real_vector, whole_number
from .._numerics import require_memory
from ._network import OscillatorNetwork

__all__ = [
    "Region", "ball", "boundary_sites", "box", "check_region", "complement", "cut_couplings", "difference",
    "from_mask", "from_sites", "half_space", "intersection", "region_of", "slab", "union",
]

#: Bytes per site while a geometric region's index list is built (coordinate grids, flat
#: indices, the sorted copy): refused up front when that would not fit.
_BUILD_BYTES_PER_SITE_AXIS = 8.0
_BUILD_BYTES_PER_SITE = 32.0


@dataclass(frozen=True, eq=False)
class Region:
    """A set of sites of a network: sorted unique flat indices and a description.

    Build regions with :func:`box`, :func:`ball`, :func:`half_space`, :func:`slab`,
    :func:`from_mask`, :func:`from_sites` and combine them with :func:`union`,
    :func:`intersection`, :func:`difference`, :func:`complement`.  ``geometry`` records how a
    region was built (kind and parameters), so symmetry-reduced methods can recognise it.
    """

    indices: np.ndarray
    description: str
    geometry: tuple = ()
    #: (site layout, description) of the network the region was built on; None: unchecked.
    network_key: tuple = field(default=None, repr=False)

    @property
    def size(self):
        """Number of sites (0 for a region infinite along an axis)."""
        return int(self.indices.size)

    def __len__(self):
        return self.size

    def __eq__(self, other):
        return isinstance(other, Region) and np.array_equal(self.indices, other.indices)

    def __hash__(self):
        return hash(self.indices.tobytes())

    def __repr__(self):
        return f"Region({self.description}, {self.size} sites)"


def _network_key(network):
    return (network.site_layout, network.describe_sites())


def region_of(network, indices, description, geometry=()):
    """A :class:`Region` of ``network`` from already validated sorted unique indices."""
    return Region(np.asarray(indices, dtype=np.int64), description, geometry,
                  _network_key(network))


def check_network(network, name="network"):
    """Refuse anything that is not an :class:`OscillatorNetwork`, naming the argument."""
    if not isinstance(network, OscillatorNetwork):
        raise ValueError(f"{name} must be an OscillatorNetwork (arealaw.hypercubic, "
                         f"arealaw.OscillatorNetwork, ...), got {type(network).__name__}")
    return network


def check_region(network, region, name="region"):
    """Refuse a non-region, or a region built on another network (even when its indices fit)."""
    if not isinstance(region, Region):
        raise ValueError(f"{name} must be a Region (see arealaw.box, ball, from_sites, ...), "
                         f"got {type(region).__name__}")
    key = region.network_key
    if key is not None and key[0] != network.site_layout:
        raise ValueError(f"{name} ({region.description}) was built on another network "
                         f"({key[1]}), not on this one ({network.describe_sites()}); build the "
                         "region on this network")
    if region.size and region.indices[-1] >= network.index_limit:
        raise ValueError(f"{name} has site {int(region.indices[-1])}, outside this network of "
                         f"{network.index_limit} sites; was it built for another network?")
    return region


def _require_build_memory(count, d, what):
    require_memory(float(count) * (_BUILD_BYTES_PER_SITE + _BUILD_BYTES_PER_SITE_AXIS * d),
                   f"the site list of {what} ({float(count):.3g} sites)",
                   "choose a smaller region (no method can hold this many sites anyway)")


def _make(network, indices, description, geometry=(), *, allow_empty=False, presorted=False):
    idx = np.asarray(indices)
    if idx.dtype == object or not (np.issubdtype(idx.dtype, np.number) or idx.size == 0):
        raise ValueError(f"site indices must be integers, got {idx.dtype} values")
    if idx.size and not np.issubdtype(idx.dtype, np.integer):
        flat = idx.ravel()
        if np.issubdtype(idx.dtype, np.bool_):
            raise ValueError("site indices must be integers, got booleans (a mask? use "
                             "from_mask)")
        bad = np.flatnonzero(~(np.mod(flat, 1) == 0))
        if bad.size:
            raise ValueError(f"site indices must be integers, got {flat[bad[0]].item()!r} "
                             f"(entry {int(bad[0]) + 1}); give whole site numbers")
    idx = idx.astype(np.int64).ravel()
    if idx.size == 0 and not allow_empty:
        raise ValueError(f"region {description} contains no sites; enlarge or move it")
    limit = network.index_limit
    bad = idx[(idx < 0) | (idx >= limit)]
    if bad.size:
        raise ValueError(f"site index {int(bad[0])} is out of range for a network of "
                         f"{limit} sites (valid: 0..{limit - 1})")
    if presorted:  # built in C order from ranges: sorted and unique already (no O(n log n))
        return Region(idx, description, geometry, _network_key(network))
    uniq = np.unique(idx)
    if uniq.size != idx.size:
        vals, counts = np.unique(idx, return_counts=True)
        raise ValueError(f"site {int(vals[counts > 1][0])} appears more than once in region "
                         f"{description}; list each site once")
    return Region(uniq, description, geometry, _network_key(network))


def _lattice_shape(network, what):
    shape = network.index_shape
    if shape is None:
        raise ValueError(f"a {what} region needs a hypercubic lattice; for other networks use "
                         "from_sites / from_mask (or ball with site coordinates)")
    return shape


def _check_axis(axis, d):
    axis = whole_number(axis, "axis")
    if not 0 <= axis < d:
        raise ValueError(f"axis {axis!r} is out of range for a {d}-D lattice (valid: 0..{d - 1})")
    return axis


def _finite_extent(network, axis):
    n = network.lattice.shape[axis]
    return None if math.isinf(n) else int(n)


def box(network, size, origin=None):
    """Box of ``size`` sites per axis starting at ``origin`` (default: centred).

    Examples
    --------
    >>> from arealaw import hypercubic, box
    >>> box(hypercubic((6, 6), mass=1.0), 2).indices.tolist()
    [14, 15, 20, 21]
    """
    shape = _lattice_shape(check_network(network), "box")
    d = len(shape)
    size = int_vector(size, d, "box size", minimum=1)
    centred = origin is None
    if centred:
        ext = [(_finite_extent(network, a) or 2 * int(size[a])) for a in range(d)]
        origin = [(e - s) // 2 for e, s in zip(ext, size)]
    origin = int_vector(origin, d, "box origin")
    for a in range(d):
        ext = _finite_extent(network, a)
        if origin[a] < 0 or (ext is not None and origin[a] + size[a] > ext):
            raise ValueError(f"box along axis {a} spans {origin[a]}..{origin[a] + size[a] - 1}, "
                             f"outside the lattice (0..{(ext or shape[a]) - 1})")
    desc = "box " + "x".join(map(str, size))
    _require_build_memory(np.prod(size.astype(float)), d, desc)
    grids = np.meshgrid(*[np.arange(o, o + s) for o, s in zip(origin, size)], indexing="ij")
    idx = np.ravel_multi_index([g.ravel() for g in grids], shape)
    desc = "box " + "x".join(map(str, size)) + " at (" + ",".join(map(str, origin)) + ")"
    if centred and any(_finite_extent(network, a) is None for a in range(d)):
        # on an infinite axis every position is equivalent: the working coordinates mean nothing
        desc = ("box " + "x".join(map(str, size)) + " centred ("
                + ",".join(str(o) if _finite_extent(network, a) is not None else "any"
                           for a, o in enumerate(origin)) + ")")
    return _make(network, idx, desc, ("box", tuple(size.tolist()), tuple(origin.tolist())),
                 presorted=True)


def ball(network, radius, center=None):
    """Sites at Euclidean distance ≤ ``radius`` from ``center`` (default: the lattice centre).

    Works on lattices and on networks with site coordinates.
    """
    check_network(network)
    radius = real_number(radius, "ball radius", minimum=0)
    if network.lattice is not None:
        shape = network.index_shape
        d = len(shape)
        if center is None:
            ext = [_finite_extent(network, a) for a in range(d)]
            center = [((e - 1) / 2 if e is not None else math.ceil(radius)) for e in ext]
        c = real_vector(center, d, "ball center")
        lo = np.maximum(np.ceil(c - radius), 0)
        hi = np.floor(c + radius)
        for a in range(d):
            ext = _finite_extent(network, a)
            if ext is not None:
                hi[a] = min(hi[a], ext - 1)
        _require_build_memory(np.prod(np.maximum(hi - lo + 1, 0)), d, f"ball r={radius:g}")
        lo, hi = lo.astype(np.int64), hi.astype(np.int64)
        axes = [np.arange(lo[a], hi[a] + 1) for a in range(d)]
        grids = np.meshgrid(*axes, indexing="ij")
        pts = np.stack([g.ravel() for g in grids], axis=1)
        keep = np.sum((pts - c) ** 2, axis=1) <= radius**2 * (1 + 1e-12)
        idx = np.ravel_multi_index(pts[keep].T, shape) if keep.any() else np.array([], int)
    else:
        xyz = network.coords()
        c = xyz.mean(axis=0) if center is None else real_vector(center, xyz.shape[1],
                                                                 "ball center")
        idx = np.flatnonzero(np.sum((xyz - c) ** 2, axis=1) <= radius**2 * (1 + 1e-12))
    desc = f"ball r={radius:g} at (" + ",".join(f"{x:g}" for x in np.atleast_1d(c)) + ")"
    return _make(network, idx, desc, ("ball", float(radius), tuple(np.atleast_1d(c).tolist())))


def half_space(network, axis, at):
    """Sites with coordinate ``< at`` along ``axis`` (a lattice with finite extent there)."""
    shape = _lattice_shape(check_network(network), "half-space")
    axis = _check_axis(axis, len(shape))
    at = whole_number(at, "half-space position")
    if network.is_infinite and _infinitely_many(network, axis, normal_counts=True):
        return _geometric(network, f"half-space x{axis} < {at}", ("half_space", axis, at))
    region = slab(network, axis, 0, at)
    desc = f"half-space x{axis} < {at}"
    return Region(region.indices, desc, ("half_space", axis, at), region.network_key)


def slab(network, axis, start, stop):
    """Sites with ``start <= coordinate < stop`` along ``axis``."""
    shape = _lattice_shape(check_network(network), "slab")
    d = len(shape)
    axis = _check_axis(axis, d)
    start, stop = whole_number(start, "slab start"), whole_number(stop, "slab stop")
    ext = _finite_extent(network, axis)
    if not (0 <= start < stop) or (ext is not None and stop > ext):
        raise ValueError(f"slab {start}..{stop} along axis {axis} must satisfy "
                         f"0 <= start < stop <= {ext if ext is not None else 'inf'}")
    if network.is_infinite and _infinitely_many(network, axis, normal_counts=False):
        return _geometric(network, f"slab {start} <= x{axis} < {stop}",
                          ("slab", axis, int(start), int(stop)))
    _require_build_memory(np.prod([float(n) for n in shape]) / shape[axis] * (stop - start), d,
                          f"slab {start} <= x{axis} < {stop}")
    sub = [np.arange(n) for n in shape]
    sub[axis] = np.arange(int(start), int(stop))
    grids = np.meshgrid(*sub, indexing="ij")
    idx = np.ravel_multi_index([g.ravel() for g in grids], shape)
    return _make(network, idx, f"slab {start} <= x{axis} < {stop}",
                 ("slab", axis, int(start), int(stop)), presorted=True)


def _infinitely_many(network, axis, *, normal_counts):
    """Whether a half-space (normal_counts) or slab along ``axis`` has infinitely many sites."""
    shape = network.lattice.shape
    return any(math.isinf(n) for a, n in enumerate(shape) if a != axis or normal_counts)


def _geometric(network, description, geometry):
    # Infinitely many sites: the region is described by its geometry alone (no index list);
    # only methods that work from the geometry (method='transverse') can serve it.
    return Region(np.empty(0, dtype=np.int64), description + " (infinite)", geometry,
                  _network_key(network))


def from_mask(network, mask, description="mask"):
    """Sites where the boolean ``mask`` (flat, or with the lattice shape) is true."""
    check_network(network)
    try:
        m = np.asarray(mask)
    except ValueError:
        raise ValueError("mask must be a boolean array (flat, or with the lattice shape), got "
                         "ragged nested lists") from None
    if m.dtype == object or not (m.dtype == bool or np.issubdtype(m.dtype, np.number)):
        raise ValueError(f"mask must be a boolean array (flat, or with the lattice shape), got "
                         f"{m.dtype} values")
    if m.dtype != bool:
        if not np.all(np.isin(m, (0, 1))):
            raise ValueError("mask must be boolean (or 0/1), got values "
                             f"{np.unique(m)[:4].tolist()}")
        m = m.astype(bool)
    if m.size != network.index_limit:
        raise ValueError(f"mask has {m.size} entries but the network has "
                         f"{network.index_limit} sites")
    return _make(network, np.flatnonzero(m.ravel()), description, ("mask",))


def from_sites(network, sites, description=None):
    """Region from a list of flat site indices (C order on lattices)."""
    check_network(network)
    try:
        s = np.asarray(sites)
    except ValueError:
        raise ValueError("sites must be a flat list of integer site indices, got ragged nested "
                         "lists") from None
    desc = description or f"{s.size} listed sites"
    return _make(network, s, desc, ("sites",))


def union(network, *regions):
    """Sites in any of the regions."""
    for i, r in enumerate(regions):
        check_region(network, r, f"region {i + 1}")
    idx = np.unique(np.concatenate([r.indices for r in regions]))
    return _make(network, idx, " ∪ ".join(r.description for r in regions))


def intersection(network, a, b):
    """Sites in both regions."""
    check_region(network, a, "region a")
    check_region(network, b, "region b")
    return _make(network, np.intersect1d(a.indices, b.indices),
                 f"{a.description} ∩ {b.description}")


def difference(network, a, b):
    """Sites of ``a`` not in ``b``."""
    check_region(network, a, "region a")
    check_region(network, b, "region b")
    return _make(network, np.setdiff1d(a.indices, b.indices),
                 f"{a.description} minus {b.description}")


def complement(network, region):
    """All other sites of a finite network."""
    check_region(network, region)
    if network.is_infinite:
        raise ValueError("the complement of a region of an infinite lattice is infinite; "
                         "use the region itself (S(A) = S(complement) for a pure state)")
    return _make(network, np.setdiff1d(np.arange(network.n_sites), region.indices),
                 f"complement of {region.description}")


def cut_couplings(network, indices):
    """The couplings V[A, not A] between a region's sites and the rest (csr), or None without V.

    Its rows with entries are the region's boundary sites; its entries are the cut bonds.
    """
    v = network.potential
    if v is None:
        return None
    outside = np.ones(v.shape[0], dtype=bool)
    outside[np.asarray(indices)] = False
    return v.tocsr()[np.asarray(indices)][:, outside]


def boundary_sites(network, region):
    """Number of sites of ``region`` coupled to its complement through V (None without V).

    ``region`` is a :class:`Region` or an index array.

    Examples
    --------
    >>> from arealaw import hypercubic, box
    >>> from arealaw.network import boundary_sites
    >>> net = hypercubic((8, 8), mass=0.1)
    >>> boundary_sites(net, box(net, [3, 3], origin=[2, 2]))
    8
    """
    indices = region.indices if isinstance(region, Region) else np.asarray(region)
    cut = cut_couplings(network, indices)
    if cut is None:
        return None
    return int(np.count_nonzero(np.diff(cut.indptr)))
