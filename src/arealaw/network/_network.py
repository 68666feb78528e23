"""Oscillator networks: H = ½ pᵀ M⁻¹ p + ½ qᵀ V q with sparse, symmetric positive-definite V and M."""

import hashlib
import math

import numpy as np
import scipy.linalg
import scipy.sparse as sp

from .._errors import ZERO_MODE

__all__ = ["OscillatorNetwork", "load_network"]

#: Networks up to this size get an exact (dense) positive-definiteness check.
DENSE_CHECK_LIMIT = 3000
#: Along an infinite axis, site index i stands for lattice coordinate i (translation invariance
#: makes the origin irrelevant); this is the extent used for flat indexing.
INFINITE_EXTENT = 2**20


class OscillatorNetwork:
    """A network of coupled harmonic oscillators.

    Parameters
    ----------
    potential : sparse matrix or array_like, shape (N, N)
        Potential matrix V (symmetric positive definite).  ``None`` only for lattices with an
        infinite axis, whose V is never formed.
    kinetic : sparse matrix or array_like, optional
        Kinetic (mass) matrix M, symmetric positive definite.  Default: identity.
    coords : array_like, shape (N, d), optional
        Site coordinates, used by geometric region builders (ball, half-space, ...).
    lattice : HypercubicLattice, optional
        Set by :func:`arealaw.hypercubic`; lets exact spectral methods recognise the structure.
    check : bool
        Validate symmetry, finiteness and positive definiteness (default True).

    Notes
    -----
    Units: ħ = 1.  The ground state has ⟨qqᵀ⟩ = X and ⟨ppᵀ⟩ = P with
    X = ½ M^{-1/2} K^{-1/2} M^{-1/2}, K = M^{-1/2} V M^{-1/2}, and P = V X M.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import OscillatorNetwork
    >>> net = OscillatorNetwork(np.array([[2.0, -1.0], [-1.0, 2.0]]))
    >>> net.n_sites
    2
    """

    def __init__(self, potential, kinetic=None, *, coords=None, lattice=None, check=True):
        self.lattice = lattice
        self._factory = None
        if callable(potential) and lattice is not None and not lattice.is_infinite:
            # Deferred assembly (huge lattices): ``potential()`` returns (V, M or None) and runs
            # only when a method asks for the matrices; exact spectral methods never do.
            self._factory = potential
            self._potential = self._kinetic = None
            self.n_sites = int(np.prod(lattice.shape, dtype=np.int64))
            self._coords = None
            return
        if potential is None:
            if lattice is None or not lattice.is_infinite:
                raise ValueError("potential=None is only allowed for a lattice with an infinite axis")
            self.potential = None
            self.kinetic = None
            self.n_sites = None
        else:
            self.potential = _as_csr(potential, "potential V")
            self.n_sites = self.potential.shape[0]
            self.kinetic = None if kinetic is None else _as_csr(kinetic, "kinetic M")
            if self.kinetic is not None and self.kinetic.shape != self.potential.shape:
                raise ValueError(
                    f"kinetic M has shape {self.kinetic.shape} but potential V has shape "
                    f"{self.potential.shape}; they must match"
                )
        if coords is not None:
            coords = np.asarray(coords, dtype=float)
            if coords.ndim == 1:
                coords = coords[:, None]
            if self.n_sites is not None and coords.shape[0] != self.n_sites:
                raise ValueError(
                    f"coords has {coords.shape[0]} rows but the network has {self.n_sites} sites"
                )
            if not np.all(np.isfinite(coords)):
                raise ValueError("coords contains NaN or infinity; give finite site coordinates")
        self._coords = coords
        if check and self.potential is not None:
            _check_spd(self.potential, "potential V", check_pd=lattice is None)
            if self.kinetic is not None:
                _check_spd(self.kinetic, "kinetic M", check_pd=True)

    # -- matrices (assembled on first use when deferred) --------------------------------------
    def _assemble(self):
        factory, self._factory = self._factory, None
        self._potential, self._kinetic = factory()

    @property
    def potential(self):
        """Potential matrix V (csr); None where V is not formed (infinite or too large)."""
        if self._factory is not None:
            self._assemble()
        return self._potential

    @potential.setter
    def potential(self, value):
        self._potential = value

    @property
    def kinetic(self):
        """Kinetic matrix M (csr), or None for the identity."""
        if self._factory is not None:
            self._assemble()
        return self._kinetic

    @kinetic.setter
    def kinetic(self, value):
        self._kinetic = value

    @property
    def is_deferred(self):
        """True while V of a huge lattice has not been assembled (see :func:`hypercubic`)."""
        return self._factory is not None

    # -- structure -----------------------------------------------------------------------------
    @property
    def is_infinite(self):
        """True for a lattice with at least one infinite axis."""
        return self.n_sites is None

    @property
    def ndim(self):
        """Spatial dimension (lattice dimension, else coordinate dimension, else None)."""
        if self.lattice is not None:
            return len(self.lattice.shape)
        return None if self._coords is None else self._coords.shape[1]

    @property
    def index_shape(self):
        """Shape used for flat site indices (C order); None for networks without a lattice."""
        if self.lattice is None:
            return None
        return tuple(INFINITE_EXTENT if math.isinf(n) else int(n) for n in self.lattice.shape)

    @property
    def index_limit(self):
        """One past the largest valid flat site index."""
        if self.n_sites is not None:
            return self.n_sites
        return int(np.prod(self.index_shape, dtype=np.int64))

    @property
    def site_layout(self):
        """What a flat site index means on this network: a small hashable key, computed once.

        Lattices: their index shape; other networks: the number of sites and a digest of their
        coordinates.  Regions remember the layout of the network they were built on and are
        refused on a network whose sites differ (another shape or size), where their indices
        would silently select other sites.  Networks that differ only in V or M (another mass,
        coupling or disorder) share a layout, so a region can be reused across them.
        """
        cached = self.__dict__.get("_site_layout")
        if cached is None:
            if self.index_shape is not None:
                cached = ("lattice", tuple(self.index_shape))
            else:
                digest = None
                if self._coords is not None:
                    digest = hashlib.blake2b(np.ascontiguousarray(self._coords).tobytes(),
                                             digest_size=8).hexdigest()
                cached = (type(self).__name__, self.index_limit, self.ndim, digest)
            self._site_layout = cached
        return cached

    def describe_sites(self):
        """The site layout in words, e.g. 'a 20x20 lattice' or 'a network of 12 sites'."""
        if self.index_shape is not None and self.lattice is not None:
            dims = ["inf" if math.isinf(n) else str(int(n)) for n in self.lattice.shape]
            if len(dims) == 1:
                return f"a chain of {dims[0]} sites"
            return "a " + "x".join(dims) + " lattice"
        return f"{self!r} ({self.index_limit} sites)"

    def coords(self, indices=None):
        """Coordinates of the given sites (all sites when ``indices`` is None), shape (n, d)."""
        if self.lattice is not None:
            if indices is None:
                if self.is_infinite:
                    raise ValueError("an infinite lattice has no finite list of site coordinates")
                indices = np.arange(self.n_sites)
            return np.stack(np.unravel_index(np.asarray(indices), self.index_shape), axis=1)
        if self._coords is None:
            raise ValueError(
                "this network has no site coordinates; pass coords= (or a coords array in the "
                ".npz file) to use geometric regions, or select sites by index"
            )
        return self._coords if indices is None else self._coords[np.asarray(indices)]

    def __repr__(self):
        if self.lattice is not None:
            return f"OscillatorNetwork({self.lattice.describe()})"
        kind = "identity M" if self.kinetic is None else "general M"
        return f"OscillatorNetwork(N={self.n_sites}, {kind})"


def _as_csr(a, name):
    if sp.issparse(a):
        m = sp.csr_matrix(a, dtype=float)
    else:
        try:
            arr = np.asarray(a, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"{name} must be a rectangular matrix of numbers (a scipy sparse "
                             "matrix or a 2-D array), got ragged or non-numeric rows") from None
        if arr.ndim != 2:
            raise ValueError(f"{name} must be a 2-D matrix, got an array of shape {arr.shape}")
        m = sp.csr_matrix(arr)
    if m.shape[0] != m.shape[1]:
        raise ValueError(f"{name} must be square, got shape {m.shape}")
    if m.shape[0] == 0:
        raise ValueError(f"{name} is empty (shape {m.shape}); give at least one site")
    m.sum_duplicates()
    m.eliminate_zeros()
    return m


def _check_spd(m, name, *, check_pd):
    if not np.all(np.isfinite(m.data)):
        bad = int(np.sum(~np.isfinite(m.data)))
        raise ValueError(f"{name} has {bad} non-finite entries (NaN or inf); all must be finite")
    scale = float(abs(m).max()) if m.nnz else 0.0
    asym = abs(m - m.T)
    if asym.nnz and float(asym.max()) > 1e-12 * max(scale, 1.0):
        raise ValueError(
            f"{name} is not symmetric (max |A - A^T| = {float(asym.max()):.3g}); "
            "a Hamiltonian's matrices must be symmetric"
        )
    diag = m.diagonal()
    if np.any(diag <= 0):
        i = int(np.argmin(diag))
        raise ValueError(
            f"{name} is not positive definite: diagonal entry {i} is {diag[i]:.6g} (must be > 0)"
        )
    if not check_pd:
        return
    n = m.shape[0]
    if n <= DENSE_CHECK_LIMIT:
        lam = scipy.linalg.eigvalsh(m.toarray(), subset_by_index=[0, 0])[0]
        if lam <= 1e-14 * scale * n:
            raise ValueError(
                f"{name} is not positive definite: smallest eigenvalue {lam:.3g}; {ZERO_MODE}")
        return
    off = np.asarray(abs(m).sum(axis=1)).ravel() - np.abs(diag)
    if np.all(diag - off > 0):
        return  # strictly diagonally dominant: positive definite (Gershgorin)
    # Otherwise iterative solvers detect indefiniteness (CG breakdown) when they run.


def load_network(potential_path, kinetic_path=None):
    """Load a network from scipy ``save_npz`` files (V and optional M).

    A ``coords.npy`` or ``.npz`` beside them is not read; pass ``coords`` via the API instead.
    """
    def _load(path, name):
        try:
            return sp.load_npz(path)
        except FileNotFoundError:
            raise ValueError(f"{name} file {str(path)!r} does not exist") from None
        except (OSError, ValueError, KeyError) as exc:
            raise ValueError(
                f"{name} file {str(path)!r} is not a scipy.sparse save_npz file ({exc})"
            ) from None

    v = _load(potential_path, "potential")
    m = None if kinetic_path is None else _load(kinetic_path, "kinetic")
    return OscillatorNetwork(v, m)
