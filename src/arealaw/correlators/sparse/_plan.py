"""What the shifted solves will cost: the engines' run times, and blocks of right-hand sides that
fit in memory.

Both feed ``SparseBackend.assess`` (refusals and estimates from the shape and options, before
anything is allocated) and ``SparseBackend.blocks`` (the engine that ``engine='auto'`` takes, the
block size): the same numbers decide and estimate.  The time constants are in ``_costs.py``,
fitted to ``benchmarks/bench_engines.py`` (engines) and ``benchmarks/bench_costs.py``.
"""

import math

import numpy as np

from ..._costs import cost
from ..._errors import ZERO_MODE
from ..._numerics import available_bytes
from ._contour import hht_node_count
from ._interval import is_diagonal

__all__ = ["BLOCK_MEMORY_SHARE", "BYTES_PER_ENTRY", "BYTES_PER_NONZERO", "LANES", "block_plan",
           "block_sizes", "column_blocks", "engine_seconds", "has_diagonal_m", "light_cone_share",
           "problem_size", "site_coords"]

#: Bytes per (row, right-hand side) of a multishift CG block: r, p, A p, the input, temporaries.
BYTES_PER_ENTRY = 48.0
#: Bytes per stored nonzero of a CSR matrix: a float64 value and an int32 column index.
BYTES_PER_NONZERO = 12.0
#: Share of the available memory the right-hand-side blocks and the matrices may fill together
#: (the rest stays free for the dense core blocks, other processes and the allocator's slack).
BLOCK_MEMORY_SHARE = 0.5
#: Block sizes are multiples of this many columns where the plan allows: the kernels' loops over
#: a block's columns then run on whole SIMD vectors.  Measured on the 10^6-site ball
#: (``scripts/bench_sparse_1e6.py``), the same columns: 29 of them take as long as 32.
LANES = 8


def engine_seconds(nnz, n_rhs, kappa, tol, *, n_sites, ndim=3, diagonal_m=True, n_poles=None,
                   block_size=32, region_sites=None):
    """Estimated seconds of the shifted solves: {'multishift': s, 'amg': s} ('amg' only for
    non-diagonal M).

    Multishift CG: min(½√κ' ln(2/tol), n) iterations (the CG bound, and CG's termination within
    as many steps as distinct eigenvalues), with κ' = min(κ, n^{2/d}): CG follows the lowest
    modes that the boundary columns excite, on a finite lattice about the gap of its Laplacian,
    ~λ_max/n^{2/d}, however small the interval's lower end (a Gershgorin bound) is.  Each is a
    pass over the nonzeros the Krylov vectors have reached (:func:`light_cone_share` of them,
    when ``region_sites`` is given) per column, plus the recurrence on the shifts per block of
    ``block_size`` columns.  AMG-CG: one solve per pole and
    column, each ``sparse.amg_iterations``·ln(2/tol) iterations of a V-cycle and a product,
    plus a hierarchy per pole (κ, not κ', sets the poles).  Measured 80-200 multishift
    iterations against an estimate of 280 on 24³ at m = 0.3 ... 0.01 (κ up to 1.7e5); the AMG
    count is close to measured.  Constants and the crossover: ``benchmarks/bench_engines.py``.

    Examples
    --------
    >>> est = engine_seconds(7e6, 300, 1e5, 1e-10, n_sites=10**6)  # near-massless 100³
    >>> bool(est["multishift"] < est["amg"])
    True
    >>> chain = engine_seconds(6e4, 2, 6e6, 1e-10, n_sites=20000, ndim=1)  # near-massless
    >>> bool(chain["amg"] < chain["multishift"])
    True
    """
    log = math.log(2 / tol)
    if n_poles is None:
        n_poles = hht_node_count(kappa, 0.25 * tol)
    amg_iters = n_rhs * n_poles * cost("sparse.amg_iterations") * log
    amg = (amg_iters * (cost("sparse.amg_entry") * nnz + cost("sparse.amg_step"))
           + cost("sparse.amg_setup") * nnz * n_poles)
    if not diagonal_m:
        return {"amg": amg}
    kappa_cg = min(kappa, max(n_sites, 2) ** (2.0 / ndim))
    iters = min(0.5 * math.sqrt(kappa_cg) * log, float(n_sites))
    share = 1.0 if region_sites is None else light_cone_share(n_sites, region_sites, iters, ndim)
    multishift = iters * (cost("sparse.cg_entry") * share * nnz * n_rhs
                          + cost("sparse.cg_step") * math.ceil(max(n_rhs, 1) / block_size))
    return {"amg": amg, "multishift": multishift}


def light_cone_share(n_sites, region_sites, iterations, ndim=3):
    """Mean share of the rows that multishift CG works on over ``iterations`` iterations.

    After k products the Krylov vectors of a region's boundary columns reach the sites within
    k hops of the region (:mod:`._kernels`), at most the d-dimensional ℓ¹ ball of radius r₀ + k,
    volume ω_d (r₀ + k)^d with ω_d = 2^d/d! and r₀ from the region's volume.  Walls are
    ignored, so the share errs high (the estimate long, never short).

    Examples
    --------
    >>> round(light_cone_share(10**6, 968, 88, 3), 2)  # a ball in 100³, 88 iterations
    0.33
    >>> light_cone_share(1000, 10, 5000, 1) > 0.9  # a long run on a short chain: every row
    True
    """
    d = max(int(ndim), 1)
    omega = 2.0 ** d / math.factorial(d)
    r0 = (max(float(region_sites), 1.0) / omega) ** (1.0 / d)
    steps = max(int(math.ceil(iterations)), 1)
    k = np.arange(1, steps + 1, dtype=float)
    reached = np.minimum(omega * (r0 + k) ** d, float(n_sites))
    return float(reached.mean() / max(float(n_sites), 1.0))


def block_plan(n, n_rhs, nnz, *, block_size=32, n_jobs=1, may_reduce=True):
    """(block sizes, workers, peak bytes) of the multishift solves on ``n`` sites.

    Blocks of right-hand sides (:func:`block_sizes`), a multiple of the workers, as large as
    ``block_size`` allows while the matrices and every worker's block fit in
    ``BLOCK_MEMORY_SHARE`` of the available memory; then one worker (no matrix copy in shared memory) if ``may_reduce`` (the
    count was not asked for), then single columns, before the caller refuses on the returned
    peak.  The matrices: V, A_BB + σ₀I and the scaled A (A is
    V itself when M = I), and with worker processes A_BB once more in shared memory (joblib maps
    it into every worker); while they are sliced, before any block exists, one transient copy
    more.  The blocks: ``BYTES_PER_ENTRY`` per site and column per worker.  Measured: 2.0 GiB
    peak against 3.1 GiB planned on 100³, 6.1 GiB against 10.4 GiB on 215³ (README, "Memory and time of
    the sparse path").

    Examples
    --------
    >>> sizes, jobs, peak = block_plan(10**6, 300, 7 * 10**6, block_size=32, n_jobs=1)
    >>> max(sizes) <= 32 and sum(sizes) == 300 and jobs == 1 and peak > 12 * 7 * 10**6
    True
    """
    matrix = BYTES_PER_NONZERO * nnz
    index = 40.0 * n  # site masks, index arrays, the kept rows' maps
    room = BLOCK_MEMORY_SHARE * available_bytes()

    def solve_bytes(jobs, bs):
        return matrix * (3 + (jobs > 1)) + index + BYTES_PER_ENTRY * n * bs * jobs

    fit = int((room - solve_bytes(n_jobs, 0)) / (BYTES_PER_ENTRY * n * n_jobs))
    if fit < 1 and n_jobs > 1 and may_reduce:
        n_jobs = 1  # two blocks do not fit beside the matrices: one worker, no copy in shm
        fit = int((room - solve_bytes(1, 0)) / (BYTES_PER_ENTRY * n))
    sizes = block_sizes(n_rhs, max(1, min(block_size, n_rhs, fit)), n_jobs)
    peak = max(solve_bytes(n_jobs, max(sizes)), matrix * 4 + index)
    return sizes, n_jobs, peak


def block_sizes(n_rhs, block_size, n_jobs=1):
    """Sizes of the column blocks: a multiple of ``n_jobs`` blocks of at most ``block_size``
    columns, each but the last a multiple of :data:`LANES` when the blocks hold two lanes or
    more on average, else as equal as possible.

    Examples
    --------
    >>> block_sizes(344, 32, 2)  # 12 blocks for two workers
    [32, 32, 32, 32, 32, 32, 32, 24, 24, 24, 24, 24]
    >>> block_sizes(344, 32, 1)
    [32, 32, 32, 32, 32, 32, 32, 32, 32, 32, 24]
    >>> block_sizes(60, 30, 1)
    [24, 24, 12]
    >>> block_sizes(10, 32, 2), block_sizes(10, 32, 1)
    ([5, 5], [10])
    """
    cap = block_size - block_size % LANES if block_size >= LANES else block_size
    n_chunks = n_jobs * math.ceil(n_rhs / (n_jobs * cap))
    if n_chunks == 1 or n_rhs < 2 * LANES * n_chunks:
        n_chunks = n_jobs * math.ceil(n_rhs / (n_jobs * block_size))
        size = math.ceil(n_rhs / n_chunks)
        return [size] * (n_rhs // size) + ([n_rhs % size] if n_rhs % size else [])
    groups, extra = divmod(math.ceil(n_rhs / LANES), n_chunks)
    sizes = [LANES * (groups + (k < extra)) for k in range(n_chunks)]
    sizes[-1] -= sum(sizes) - n_rhs  # the last block gives back the columns that do not exist
    return sizes


def column_blocks(sizes, points=None):
    """Index arrays of the columns in each block, of the given ``sizes`` (:func:`block_sizes`).

    With the sites' coordinates ``points`` (n_rhs, d), the columns are ordered by recursive
    bisection at the median of the widest coordinate, so that every block is a compact patch of
    the region's boundary rather than a run of site indices (a ring of it): the rows its CG
    vectors reach after k products (the light cone of :mod:`._kernels`) stay fewer.  Measured
    on the 10⁶-site ball of ``scripts/bench_sparse_1e6.py``: 26.1 % of the rows on average
    against 27.4 % for index runs.

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 8, endpoint=False)
    >>> ring = np.stack([np.cos(t), np.sin(t)], axis=1)
    >>> [sorted(b.tolist()) for b in column_blocks([4, 4], ring)]  # two half rings
    [[3, 4, 5, 6], [0, 1, 2, 7]]
    >>> [b.tolist() for b in column_blocks([2, 2, 1])]
    [[0, 1], [2, 3], [4]]
    """
    n_rhs = int(sum(sizes))
    if points is None:
        order = np.arange(n_rhs)
    else:
        points = np.asarray(points, dtype=float)

        def split(ix):
            if ix.size <= 1:
                return ix
            pts = points[ix]
            ix = ix[np.argsort(pts[:, int(np.argmax(np.ptp(pts, axis=0)))], kind="stable")]
            return np.concatenate([split(ix[:ix.size // 2]), split(ix[ix.size // 2:])])

        order = split(np.arange(n_rhs))
    return np.split(order, np.cumsum(sizes)[:-1])


def problem_size(network, n_rows, kappa_guess):
    """(nonzeros, κ estimate, right-hand sides) of the solves for a region of ``n_rows`` sites,
    from the network or, for a lattice not yet assembled, its description; or why there are
    none (a message).  ``kappa_guess(network)`` estimates κ of an assembled network.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> nnz, kappa, n_rhs = problem_size(hypercubic((10, 10), mass=0.5), 16, lambda n: 10.0)
    >>> nnz, kappa, round(n_rhs)
    (460, 10.0, 16)
    """
    n = network.n_sites
    d = network.ndim or 3
    if network.is_deferred:
        # Huge lattices assemble V lazily: estimate from the description instead.
        lat = network.lattice
        nnz = float(n) * (2 * d + 1) + (float(n) if np.ndim(lat.inertia) else 0.0)
        lo, hi = lat.pencil_bounds()
        if not lo > 0:
            return ZERO_MODE
        kappa = hi / lo
    else:
        v = network.potential
        if v is None:
            return "V of this lattice is too large to form; use method='spectral'"
        nnz = v.nnz + (0 if network.kinetic is None else network.kinetic.nnz)
        kappa = kappa_guess(network)
    # one right-hand side per inner-boundary site: about 2d n^{(d-1)/d} for a compact region
    n_rhs = min(n_rows, 2 * d * max(n_rows, 1) ** ((d - 1) / d)) if n_rows < n else 0
    return nnz, kappa, n_rhs


def has_diagonal_m(network):
    """True when M is diagonal (multishift CG can serve): lattices always, matrices if so.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> has_diagonal_m(hypercubic((4, 4), mass=1.0))
    True
    """
    if network.is_deferred:
        return True  # lattices have a diagonal M (the inertia)
    m = network.kinetic
    return m is None or is_diagonal(m)


def site_coords(network, sites):
    """Coordinates of ``sites`` (for :func:`column_blocks`), or None for a network without any.

    Examples
    --------
    >>> from arealaw import OscillatorNetwork, hypercubic
    >>> site_coords(hypercubic((3, 4), mass=1.0), [5]).tolist()
    [[1, 1]]
    >>> import scipy.sparse as sp
    >>> site_coords(OscillatorNetwork(sp.identity(3, format="csr")), [0]) is None
    True
    """
    try:
        return network.coords(sites)
    except ValueError:
        return None
