"""Sweep throughput: cases per second with 1 and 2 local worker processes (target ratio ≥ 1.8).

Each case has its own network (a different mass), so every case does a full dense
eigendecomposition of a 32×32 lattice and the workers share no cached work.

Run once by hand: ``python -m benchmarks.bench_sweep`` prints both throughputs and their ratio.
"""

import tempfile
import time
from pathlib import Path

from arealaw.workflow import Case, ResultStore, run_cases

N_CASES = 12


def sweep_cases(n_cases=N_CASES, side=32):
    return [Case({"shape": [side, side], "mass": 0.1 + 0.05 * i}, {"box": [6, 6]},
                 method="dense", family="bench", label=f"m{i}", x=i) for i in range(n_cases)]


def run_sweep(cases, workers):
    with tempfile.TemporaryDirectory() as d:
        with ResultStore(Path(d) / "bench.sqlite") as store:
            summary = run_cases(cases, store, workers=workers, progress=False)
    assert summary.done == len(cases) and not summary.failed
    return summary


class TimeSweep:
    params = [1, 2]
    param_names = ["workers"]
    number = 1
    repeat = 2
    timeout = 300

    def setup(self, workers):
        self.cases = sweep_cases()
        run_sweep(sweep_cases(2, side=8), workers)  # start (and reuse) the worker processes

    def time_sweep(self, workers):
        run_sweep(self.cases, workers)

    def track_cases_per_second(self, workers):
        t0 = time.perf_counter()
        run_sweep(self.cases, workers)
        return len(self.cases) / (time.perf_counter() - t0)

    track_cases_per_second.unit = "cases/s"


def main():
    cases = sweep_cases()
    rates = {}
    for workers in (1, 2):
        run_sweep(sweep_cases(2, side=8), workers)
        t0 = time.perf_counter()
        run_sweep(cases, workers)
        rates[workers] = len(cases) / (time.perf_counter() - t0)
        print(f"workers={workers}: {rates[workers]:.3f} cases/s")
    print(f"speed-up 2 vs 1 workers: {rates[2] / rates[1]:.2f} (target >= 1.8)")


if __name__ == "__main__":
    main()
