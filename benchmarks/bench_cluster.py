"""One sparse case on a dask.distributed LocalCluster: 1 against 2 single-threaded workers.

The column blocks of the shifted solves are the work units (``entropy(..., scheduler=client)``);
the case is one realisation of the disorder ensemble of ``bench_sparse`` (40³ Dirichlet lattice,
seeded site masses, ball r = 5, 552 sites, about 240 boundary right-hand sides in 8 blocks).
Workers are separate processes (``processes=True``), each with one thread and BLAS pinned to one
thread per unit; the workers are started and warmed (numba kernels loaded) in ``setup``.
``track_speedup`` runs both worker counts and returns time(1 worker) / time(2 workers).

Run by hand: ``python -m benchmarks.bench_cluster [side] [radius]`` (or
``scripts/bench_cluster.py``, which also prints the load average and checks that the numbers
are equal).  The 10^6-site case of ``scripts/bench_sparse_1e6.py``: ``... 100 6.2``.
"""

import sys
import time

from arealaw import entropy

from ._common import disordered_ball, one_blas_thread

SIDE = 40
RADIUS = 5.0
TOL = 1e-10


def disordered_case(side=SIDE, radius=RADIUS):
    return disordered_ball(side, radius)


def local_cluster(workers):
    """A LocalCluster of ``workers`` single-threaded worker processes and a client on it."""
    from distributed import Client, LocalCluster
    # no memory limit: the benchmark measures speed, and a worker holding one large column block
    # must not be paused or restarted by the nanny's default thresholds
    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                           host="127.0.0.1", dashboard_address=":0", memory_limit=0)
    client = Client(cluster)
    small, region = disordered_case(side=10, radius=2.2)
    entropy(small, region, method="sparse", tol=TOL, scheduler=client)  # warm the workers
    return cluster, client


def timed(net, region, client):
    """(seconds, result) of the case with its work units on ``client``'s workers."""
    with one_blas_thread():
        t0 = time.perf_counter()
        res = entropy(net, region, method="sparse", tol=TOL, scheduler=client)
        return time.perf_counter() - t0, res


class TimeClusterSparse:
    params = [1, 2]
    param_names = ["workers"]
    number = 1
    repeat = 1
    timeout = 900

    def setup(self, workers):
        self.net, self.region = disordered_case()
        self.cluster, self.client = local_cluster(workers)

    def teardown(self, workers):
        self.client.close()
        self.cluster.close()

    def time_entropy(self, workers):
        timed(self.net, self.region, self.client)


class TrackClusterSpeedup:
    """time(1 worker) / time(2 workers) of the same case (target ≥ 1.8 on the 10^6 case)."""

    timeout = 1800

    def setup_cache(self):
        return compare()["speedup"]

    def track_speedup(self, speedup):
        return speedup

    track_speedup.unit = "ratio"


def compare(side=SIDE, radius=RADIUS, counts=(1, 2)):
    """Seconds per worker count, their ratio, and whether the numbers were equal."""
    net, region = disordered_case(side, radius)
    seconds, results = {}, {}
    for workers in counts:
        cluster, client = local_cluster(workers)
        try:
            seconds[workers], results[workers] = timed(net, region, client)
        finally:
            client.close()
            cluster.close()
    first, last = results[counts[0]], results[counts[-1]]
    return {"sites": net.n_sites, "region_sites": int(region.size),
            "boundary_rhs": first.info.get("boundary_rhs"), "seconds": seconds,
            "speedup": seconds[counts[0]] / seconds[counts[-1]],
            "entropy": first.entropy, "error_bound": first.error_bound,
            "equal": (first.entropy, first.error_bound) == (last.entropy, last.error_bound)}


if __name__ == "__main__":
    args = [float(a) for a in sys.argv[1:3]]
    print(compare(int(args[0]) if args else SIDE, args[1] if len(args) > 1 else RADIUS))
