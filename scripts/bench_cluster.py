"""One sparse case on a dask LocalCluster with 1 and then 2 single-threaded workers.

Usage: OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 python scripts/bench_cluster.py [L] [radius]
Default: 40³ disordered lattice (seeded site masses m = 0.3 + 0.5 u), ball of radius 5; the
10^6-site case of scripts/bench_sparse_1e6.py is ``100 6.2``.  Prints one JSON line: seconds per
worker count, their ratio, whether the numbers were equal, and the load average (1 min) before
and after, since timings on a shared machine move with its load.
"""

import json
import os
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.bench_cluster import RADIUS, SIDE, compare  # noqa: E402


def main(argv):
    side = int(argv[1]) if len(argv) > 1 else SIDE
    radius = float(argv[2]) if len(argv) > 2 else RADIUS
    load_before = os.getloadavg()[0]
    out = compare(side, radius)
    out["load_before"], out["load_after"] = load_before, os.getloadavg()[0]
    out["seconds"] = {str(k): round(v, 2) for k, v in out["seconds"].items()}
    out["speedup"] = round(out["speedup"], 3)
    print(json.dumps(out))


if __name__ == "__main__":
    main(sys.argv)
