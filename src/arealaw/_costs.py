"""Cost model constants, in one table: what each measures, the benchmark that measured it, when.

``method='auto'`` compares the run times that each method's ``assess()`` estimates; every
estimate is a sum of terms (count of operations) × (seconds per operation), and the seconds per
operation are the constants below.  They were fitted to ``python -m benchmarks.bench_costs``
(one BLAS thread, a shared 2-core machine under load, the faster of two runs per case), which
prints estimate, measured time and their ratio for every case; the README quotes its table.
When an algorithm or the machine changes, rerun it, refit the affected constant, and update its
date.  Counts without a time unit (iterations, Lanczos vectors) are algorithmic estimates and say
where they come from.

The table lives below every layer that estimates costs (correlators, methods), beside
``_numerics.py``: it holds numbers only and imports nothing of the package.
"""

from dataclasses import dataclass

__all__ = ["COSTS", "CostConstant", "cost"]


@dataclass(frozen=True)
class CostConstant:
    """One constant of the cost model.

    Attributes
    ----------
    value : float
        The constant (seconds per unit of ``per``, or a dimensionless ratio).
    per : str
        The operation count it multiplies.
    measured_by : str
        The benchmark (and cases) it was fitted to, or the source of an algorithmic count.
    date : str
        When it was last measured (ISO date).
    """

    value: float
    per: str
    measured_by: str
    date: str


_BENCH = "benchmarks/bench_costs.py"

#: name -> CostConstant.  Names are ``<method or backend>.<term>``.
COSTS = {
    # dense backend: eigendecomposition of the whole network, then blocks
    "dense.correlators": CostConstant(
        4.5e-10, "second per N³ (N = network sites; eigh of M^-1/2 V M^-1/2, correlators)",
        f"{_BENCH} dense-*", "2026-12-03"),
    # symplectic spectrum of a region from dense blocks (every block method)
    "spectrum.dense_flop": CostConstant(
        2.0e-10, "second per flop of the dense symplectic eigenproblem (4 n³ flops)",
        f"{_BENCH} dense-*, spectral-*; benchmarks/bench_restricted.py", "2026-12-03"),
    "spectrum.restricted_flop": CostConstant(
        1.6e-10, "second per flop of block Lanczos with dense region blocks "
        "(4 n² m + 4 n m² flops, m Lanczos vectors)",
        "benchmarks/bench_restricted.py; bench_costs.py restricted-*", "2026-12-03"),
    "spectrum.restricted_modes_base": CostConstant(
        1.0, "Lanczos vectors per boundary site, plus modes_per_decade per decade of 1/tol",
        "benchmarks/bench_restricted.py (3-D balls: 1.5× at 1e-6, 2.0× at 1e-10, 2.2× at 1e-12)",
        "2026-11-30"),
    "spectrum.restricted_modes_per_decade": CostConstant(
        0.125, "Lanczos vectors per boundary site per decade of 1/tol",
        "benchmarks/bench_restricted.py (as above)", "2026-11-30"),
    # spectral backend (heat-kernel quadrature)
    "spectral.overhead": CostConstant(
        5e-3, "second per call (node tables, planning)", f"{_BENCH} spectral-*", "2026-12-03"),
    "spectral.entry": CostConstant(
        1.5e-7, "second per region-block entry (X and P gathered from the kernel tables)",
        f"{_BENCH} spectral-*, restricted-*", "2026-12-03"),
    "spectral.mode_sum": CostConstant(
        4e-7, "second per (axis mode × separation) of the per-axis mode sums",
        f"{_BENCH} spectral-chain-2000, spectral-3d-box", "2026-12-03"),
    "spectral.fft_point": CostConstant(
        3e-8, "second per bounding-box grid point per vector of an FFT box product",
        "benchmarks/bench_restricted.py (balls R = 10, 12, FFT and dense blocks in one run; "
        "bench_costs.py restricted-* agree within 2x under load)", "2026-12-01"),
    "spectral.dense_product_entry": CostConstant(
        6e-11, "second per block entry per vector of a dense block product (its ratio to "
        "fft_point decides FFT against dense operators)",
        "benchmarks/bench_restricted.py (balls R = 10, 12, same run as fft_point)", "2026-12-01"),
    # sparse backend (contour quadrature, shifted CG)
    "sparse.cg_entry": CostConstant(
        3.5e-10, "second per (nonzero × right-hand side × CG iteration), fused CG kernels",
        f"{_BENCH} sparse-* (ratios 0.37-1.36 under load 6)", "2026-12-03"),
    "sparse.dense_cube": CostConstant(
        3e-9, "second per n³ of the region (blocks, boundary Schur complement)",
        f"{_BENCH} sparse-*", "2026-12-03"),
    "sparse.overhead": CostConstant(
        0.02, "second per call (contour nodes, boundary Schur set-up)", f"{_BENCH} sparse-*",
        "2026-12-03"),
    "sparse.setup_nnz": CostConstant(
        2e-6, "second per nonzero of V (condition estimate, AMG setup)",
        f"{_BENCH} sparse-*", "2026-12-03"),
    "sparse.cg_step": CostConstant(
        2e-4, "second per multishift CG iteration per block of right-hand sides (the "
        "recurrence on the shifts' scalars and kept rows: numpy calls, not memory passes)",
        "benchmarks/bench_engines.py chain-2000 (0.30 ms per iteration, 2 columns, load 5-12)",
        "2026-12-03"),
    "sparse.amg_entry": CostConstant(
        1e-8, "second per (nonzero × AMG-CG iteration) of one solve (V-cycle and product on "
        "one vector), beside sparse.amg_step",
        "benchmarks/bench_engines.py dirichlet-24-* (3.4 ms per iteration at 96 768 nonzeros)",
        "2026-12-03"),
    "sparse.amg_step": CostConstant(
        2.5e-3, "second per AMG-CG iteration of one solve, whatever its size (scipy's CG loop "
        "and pyamg's levels in Python)",
        "benchmarks/bench_engines.py chain-2000 (2.8 ms per iteration at 6 000 nonzeros)",
        "2026-12-03"),
    "sparse.amg_iterations": CostConstant(
        0.4, "AMG-preconditioned CG iterations per solve (one pole, one column) per ln(2/tol)",
        "benchmarks/bench_engines.py (8.7-11.3 iterations per solve at tol = 1e-10)",
        "2026-12-03"),
    "sparse.amg_setup": CostConstant(
        8e-7, "second per (nonzero × pole) of a pyamg smoothed-aggregation hierarchy",
        "pyamg setup timed on the 24³, 40³ lattices of benchmarks/bench_engines.py "
        "(1.1e-6, 6.6e-7)", "2026-12-03"),
    # partial waves (radial method)
    "radial.sector_cube": CostConstant(
        3e-9, "second per N_radial³ per angular momentum l (dense chain correlators)",
        f"{_BENCH} radial-*", "2026-12-03"),
    "radial.sector_overhead": CostConstant(
        2.5e-4, "second per angular momentum l", f"{_BENCH} radial-*", "2026-12-03"),
    # transverse reduction
    "transverse.chain_cube": CostConstant(
        3e-9, "second per n_normal³ per transverse momentum (dense chain correlators)",
        f"{_BENCH} transverse-periodic", "2026-12-03"),
    "transverse.chain_overhead": CostConstant(
        3e-4, "second per transverse momentum (finite normal axes)",
        f"{_BENCH} transverse-periodic", "2026-12-03"),
    "transverse.bz_point": CostConstant(
        1e-4, "second per Brillouin-zone node (infinite normal axis, Bessel kernels)",
        f"{_BENCH} transverse-per-area", "2026-12-03"),
}


def cost(name):
    """The value of the cost constant ``name`` (see :data:`COSTS`).

    Examples
    --------
    >>> cost("spectral.fft_point") == COSTS["spectral.fft_point"].value
    True
    """
    try:
        return COSTS[name].value
    except KeyError:
        raise KeyError(f"no cost constant {name!r}; known: {', '.join(sorted(COSTS))}") from None
