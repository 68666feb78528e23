"""The general sparse path (no symmetry): a ball in a 3-D lattice with seeded random site masses.

asv times a 40³ Dirichlet lattice (64 000 sites, ball of radius 6.2 ≈ 1 000 sites) with one
BLAS thread and one worker process, and the entropy of a ball of radius 5 (552 sites) in the same
lattice: one realisation of a disorder ensemble; the 10^6-site case is
``scripts/bench_sparse_1e6.py``.
``track_*`` record the entropy, its error bound and the CG iterations, so a change in accuracy
shows up beside a change in speed.  Run once by hand: ``python -m benchmarks.bench_sparse``.
"""

import time

from arealaw import ball, entropy, hypercubic
from arealaw.correlators import SparseBackend

from ._common import disordered_ball, one_blas_thread

SIDE = 40
RADIUS = 6.2
TOL = 1e-10


def disordered_case(side=SIDE, radius=RADIUS):
    return disordered_ball(side, radius)


class TimeSparseBall:
    number = 1
    repeat = 1
    timeout = 600

    def setup(self):
        self.net, self.region = disordered_case()

    def time_blocks(self):
        with one_blas_thread():
            SparseBackend(n_jobs=1).blocks(self.net, self.region.indices, tol=TOL)



class TimeSparseRealisation:
    """The entropy of a ball r = 5 in a disordered 40³ lattice: one realisation of an ensemble."""

    number = 1
    repeat = 1
    timeout = 600

    def setup(self):
        self.net, self.region = disordered_case(radius=5.0)

    def time_entropy(self):
        with one_blas_thread():
            entropy(self.net, self.region, method="sparse", tol=TOL)


class TrackSparseBall:
    """Accuracy of the same case, computed once (asv ``setup_cache``)."""

    timeout = 600

    def setup_cache(self):
        net, region = disordered_case()
        with one_blas_thread():
            res = entropy(net, region, method="sparse", tol=TOL)
        return {"entropy": res.entropy, "error_bound": res.error_bound,
                "iterations": res.info.get("iterations", 0)}

    def track_entropy(self, cache):
        return cache["entropy"]

    def track_error_bound(self, cache):
        return cache["error_bound"]

    def track_iterations(self, cache):
        return cache["iterations"]


class TimeSparseSmall:
    """A 2-D disordered lattice: quick enough for every asv run."""

    number = 1
    repeat = 3

    def setup(self):
        self.net = hypercubic((60, 60), mass=0.2, mass_disorder=0.5, coupling_disorder=0.3,
                              seed=2)
        self.region = ball(self.net, 6.0)

    def time_entropy(self):
        with one_blas_thread():
            entropy(self.net, self.region, method="sparse", tol=TOL)


if __name__ == "__main__":
    net, region = disordered_case()
    with one_blas_thread():
        t0 = time.perf_counter()
        res = entropy(net, region, method="sparse", tol=TOL)
        print(f"{net.n_sites} sites, ball of {region.size}: S = {res.entropy:.12f} "
              f"± {res.error_bound:.2g} in {time.perf_counter() - t0:.1f} s")
