"""Gibbs states against the ground state: the cost of temperature > 0 (BLAS pinned to one thread).

asv cases: a centred cube of side 16 (4 096 sites, 8 parity sectors) and an off-centre ball of
radius 7 (1 419 sites, no symmetry) in the 100³ Dirichlet box by the spectral method (the thermal
kernel is the same heat-kernel quadrature with the imaginary-time weight θ(s)), and a ball of
radius 4 (257 sites) in a 40³ lattice with seeded random site masses by the sparse method
(Matsubara poles instead of the contour poles), each at T = 0, 0.1, 0.5.  The 10^6-site sparse
case (same ball in a disordered 100³ lattice) takes minutes per temperature and is run by hand,
printing thermal / T = 0 time ratios: ``python -m benchmarks.bench_thermal [--sparse-1e6]``.
"""

import sys
import time

from arealaw import ball, box, entropy, hypercubic
from arealaw.correlators import SparseBackend

from ._common import one_blas_thread

TOL = 1e-10
TEMPERATURES = [0.0, 0.1, 0.5]
CASES = ["spectral-cube16-box100", "spectral-ball7-box100", "sparse-ball4-40"]


def thermal_case(name):
    """(network, region, method) of a named case."""
    if name.startswith("spectral"):
        net = hypercubic((100, 100, 100), mass=0.0)
        region = box(net, 16) if "cube" in name else ball(net, 7, center=(30, 40, 50))
        return net, region, "spectral"
    if name.startswith("sparse"):
        side = 100 if name.endswith("1e6") else 40
        net = hypercubic((side,) * 3, mass=0.3, mass_disorder=0.5, seed=1)
        return net, ball(net, 4), "sparse"
    raise ValueError(f"unknown case {name!r}")


def run_case(net, region, kind, temperature):
    """Entropy (spectral) or the region's blocks (sparse: they dominate; one worker process)."""
    if kind == "sparse":
        return SparseBackend(n_jobs=1).blocks(net, region.indices, tol=TOL,
                                              temperature=temperature)
    return entropy(net, region, method=kind, tol=TOL, temperature=temperature)


class TimeThermal:
    params = (CASES, TEMPERATURES)
    param_names = ["case", "temperature"]
    number = 1
    repeat = 1
    timeout = 1200

    def setup(self, name, temperature):
        self.net, self.region, self.kind = thermal_case(name)
        if self.kind == "sparse":
            _ = self.net.potential   # assemble V outside the timing

    def time_thermal(self, name, temperature):
        with one_blas_thread():
            run_case(self.net, self.region, self.kind, temperature)


def main(argv):
    names = CASES + (["sparse-ball4-1e6"] if "--sparse-1e6" in argv else [])
    for name in names:
        net, region, kind = thermal_case(name)
        if kind == "sparse":
            _ = net.potential
        base = None
        for t in TEMPERATURES:
            with one_blas_thread():
                t0 = time.perf_counter()
                out = run_case(net, region, kind, t)
                secs = time.perf_counter() - t0
            base = secs if t == 0 else base
            extra = (f"S = {out.entropy:.10g} ± {out.error_bound:.2g}" if kind != "sparse" else
                     f"poles {out.info['poles']}, x_error {out.x_error:.2g}")
            print(f"{name:24s} n = {region.size:5d}  T = {t:<4g} {secs:8.2f} s  "
                  f"ratio {secs / base:5.2f}  {extra}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
