"""Time the sparse method on a disordered 3-D lattice (no symmetry): S of a ball with its bound.

Usage: OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 python scripts/bench_sparse_1e6.py [L] [radius] [tol]
Default: 100³ = 10^6 Dirichlet sites, seeded site masses m = 0.3 + 0.5 u, ball of radius 6.2.
"""

import json
import sys
import time

from arealaw import ball, entropy, hypercubic


def main(argv):
    side = int(argv[1]) if len(argv) > 1 else 100
    radius = float(argv[2]) if len(argv) > 2 else 6.2
    tol = float(argv[3]) if len(argv) > 3 else 1e-10
    t0 = time.perf_counter()
    net = hypercubic((side,) * 3, mass=0.3, mass_disorder=0.5, seed=1)
    region = ball(net, radius)
    t1 = time.perf_counter()
    res = entropy(net, region, method="sparse", tol=tol)
    t2 = time.perf_counter()
    out = {"sites": net.n_sites, "region_sites": int(region.size), "tol": tol,
           "build_s": round(t1 - t0, 2), "entropy_s": round(t2 - t1, 2),
           "entropy": res.entropy, "error_bound": res.error_bound}
    print(json.dumps(out))
    d = res.to_dict()
    print(json.dumps({k: d[k] for k in d if k not in ("entropy",)}, default=str)[:3000])


if __name__ == "__main__":
    main(sys.argv)
