"""A disorder ensemble through the command line: ``arealaw run`` on 1 or 2 local workers.

Usage: OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 python scripts/bench_sparse_ensemble.py [SEEDS] [WORKERS ...]
Default: 50 seeds of the 40³ disorder case of ``benchmarks/bench_sparse.py`` (seeded site
masses m = 0.3 (1 + 0.5 u), Dirichlet walls), the ball of radius 5, ``method = "sparse"``,
tol 1e-10, on 2 workers.  Each worker count runs in a fresh process into a fresh store; prints
one JSON line per count: wall seconds, the ensemble as ``arealaw results --json`` reports it
(mean of S over the realisations, their number and the standard error), and the load average
(1 min) before and after.
"""

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

SCENARIO = """
title = "disorder ensemble: 40^3 lattice, ball r = 5, {seeds} seeds"
[numerics]
method = "sparse"
tol = 1e-10
[lattices.cube]
shape = [40, 40, 40]
mass = 0.3
mass_disorder = 0.5
seed = {{from = 1, to = {seeds}}}
[[family]]
name = "ball r = 5"
lattice = "cube"
ball = {{values = [5]}}
"""


def run(seeds, workers, folder):
    folder = Path(folder)
    scenario = folder / "ensemble.toml"
    scenario.write_text(SCENARIO.format(seeds=seeds))
    store = folder / f"ensemble-{workers}.sqlite"
    src = Path(__file__).resolve().parents[1] / "src"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        p for p in (str(src), os.environ.get("PYTHONPATH", "")) if p))
    load_before = os.getloadavg()[0]
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "arealaw", "run", str(scenario), "--store", str(store),
                    "--workers", str(workers), "--quiet"], check=True, env=env)
    seconds = time.perf_counter() - t0
    out = subprocess.run([sys.executable, "-m", "arealaw", "results", "--store", str(store),
                          "--json"],
                         check=True, env=env, capture_output=True, text=True).stdout
    return seconds, load_before, out


def main(argv):
    seeds = int(argv[1]) if len(argv) > 1 else 50
    counts = [int(w) for w in argv[2:]] or [2]
    for workers in counts:
        with tempfile.TemporaryDirectory() as folder:
            seconds, load_before, out = run(seeds, workers, folder)
        (mean,) = json.loads(out)  # one family, one size: the ensemble mean
        print(json.dumps({"seeds": seeds, "workers": workers, "wall_s": round(seconds, 1),
                          **{k: mean[k] for k in ("realisations", "entropy", "entropy_stderr",
                                                  "error_bound", "method")},
                          "iterations": mean["info"].get("iterations"),
                          "load_before": load_before, "load_after": os.getloadavg()[0]}))


if __name__ == "__main__":
    main(sys.argv)
