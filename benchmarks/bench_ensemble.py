"""Disorder ensembles: 50 seeds on 2 local workers, then the ensemble means and their fit.

A 16×16 lattice with random site masses (m_i = 0.2 + 1.0·u_i), boxes of side 2, 4, 6 and 8,
seeds 1..50: 200 small dense cases (the sweep machinery, not the solver, is what is timed).

Run once by hand: ``python -m benchmarks.bench_ensemble`` prints the sweep time on 1 and 2
workers, the time to average and fit, and the fitted area coefficient with its standard error.
"""

import tempfile
import time
from pathlib import Path

from arealaw.workflow._ensembles import average_realisations
from arealaw.workflow._fits import fit_rows
from arealaw.workflow._scenario import parse_scenario
from arealaw.workflow._store import ResultStore
from arealaw.workflow._sweep import run_cases

SEEDS = 50

SCENARIO = """
[numerics]
method = "dense"
[lattices.square]
shape = [16, 16]
mass = 0.2
mass_disorder = 1.0
seed = {{from = 1, to = {seeds}}}
[[family]]
name = "boxes"
box = {{values = [2, 4, 6, 8]}}
"""


def ensemble_cases(seeds=SEEDS):
    return parse_scenario(SCENARIO.format(seeds=seeds)).cases


def run_ensemble(cases, workers, folder):
    with ResultStore(Path(folder) / f"ensemble-{workers}-{len(cases)}.sqlite") as store:
        summary = run_cases(cases, store, workers=workers, progress=False)
        assert summary.done == len(cases) and not summary.failed
        return store.rows()


class TimeEnsemble:
    params = [1, 2]
    param_names = ["workers"]
    number = 1
    repeat = 2
    timeout = 600

    def setup(self, workers):
        self.cases = ensemble_cases()
        with tempfile.TemporaryDirectory() as d:  # start (and reuse) the worker processes
            self.rows = run_ensemble(ensemble_cases(2), workers, d)

    def time_sweep(self, workers):
        with tempfile.TemporaryDirectory() as d:
            run_ensemble(self.cases, workers, d)

    def time_average_and_fit(self, workers):
        fit_rows(self.rows)


def main():
    cases = ensemble_cases()
    for workers in (1, 2):
        with tempfile.TemporaryDirectory() as d:
            run_ensemble(ensemble_cases(2), workers, d)
            t0 = time.perf_counter()
            rows = run_ensemble(cases, workers, d)
            sweep = time.perf_counter() - t0
        t0 = time.perf_counter()
        means = average_realisations(rows)
        fit = fit_rows(rows)
        post = time.perf_counter() - t0
        print(f"workers={workers}: {len(cases)} cases ({SEEDS} seeds x 4 sizes) in {sweep:.2f} s "
              f"({len(cases) / sweep:.1f} cases/s); average + fit {post * 1e3:.1f} ms; "
              f"{len(means)} means, area = {fit['area']:.5f} ± {fit.error('area'):.2g}")


if __name__ == "__main__":
    main()
