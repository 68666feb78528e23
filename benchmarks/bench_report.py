"""``arealaw plot`` and ``arealaw report`` on a store of 100 cases.

Three families (40 intervals of a chain, 30 discs of a square lattice, 20 balls of a cube) and a
pair swept over 10 separations, every case with its 8 lowest entanglement energies: small dense
cases, computed once in ``setup_cache``; what is timed is reading the store, fitting, drawing and
writing the figures (PNG + SVG) and the HTML.  ``modes`` selects whether the cases also store
their two most entangled modes (the figures then read them instead of recomputing blocks).

Run once by hand: ``python -m benchmarks.bench_report [STORE_DIR]`` builds the stores (kept in
STORE_DIR when given) and prints wall and CPU seconds of each command in a fresh process.
"""

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from arealaw.cli import main as cli_main
from arealaw.workflow._scenario import parse_scenario
from arealaw.workflow._store import ResultStore
from arealaw.workflow._sweep import run_cases

SCENARIO = """
title = "report benchmark: 100 cases"
[numerics]
method = "dense"
energies = 8
mode_profiles = {modes}
[lattices.chain]
shape = [200]
mass = 0.01
[lattices.square]
shape = [24, 24]
mass = 0.1
[lattices.cube]
shape = [12, 12, 12]
mass = 0.1
[[family]]
name = "intervals"
lattice = "chain"
box = {{from = 2, to = 80, step = 2}}
[[family]]
name = "discs"
lattice = "square"
ball = {{from = 1.5, to = 8.75, step = 0.25}}
center = [12, 12]
[[family]]
name = "balls"
lattice = "cube"
ball = {{from = 1, to = 5.75, step = 0.25}}
center = [6, 6, 6]
[[pair]]
name = "two squares"
lattice = "square"
vars = {{d = {{from = 3, to = 12}}}}
a = {{box = [2, 2], origin = [11, 3]}}
b = {{box = [2, 2], origin = [11, "= 3 + d"]}}
"""


def build_store(path, modes=0):
    """Compute the 100 cases into the store at ``path`` (skipping those already there)."""
    scenario = parse_scenario(SCENARIO.format(modes=modes), source="bench_report.toml")
    assert len(scenario.cases) == 100, len(scenario.cases)
    with ResultStore(path) as store:
        store.begin_run(scenario.title, scenario.source, scenario.text)
        summary = run_cases(scenario.cases, store, workers=1, progress=False)
        assert not summary.failed, summary.failed
    return path


class TimeReport:
    params = [0, 2]
    param_names = ["modes"]
    number = 1
    repeat = 2
    timeout = 600

    def setup_cache(self):
        folder = tempfile.mkdtemp(prefix="arealaw-bench-report-")
        return {m: str(build_store(Path(folder) / f"store-{m}.sqlite", m)) for m in self.params}

    def setup(self, stores, modes):
        self.store = stores[modes]
        self.out = tempfile.mkdtemp(prefix="arealaw-bench-out-")

    def time_report(self, stores, modes):
        cli_main(["report", "--store", self.store, "--out", f"{self.out}/report.html",
                  "--quiet"])

    def time_plot(self, stores, modes):
        cli_main(["plot", "--store", self.store, "--out", f"{self.out}/figures", "--quiet"])


def _timed(args):
    """Wall and CPU seconds of ``arealaw ARGS`` in a fresh interpreter (imports included)."""
    t0 = time.perf_counter()
    before = os.times()
    subprocess.run([sys.executable, "-m", "arealaw", *args], check=True,
                   stdout=subprocess.DEVNULL)
    after = os.times()
    return (time.perf_counter() - t0,
            after.children_user - before.children_user
            + after.children_system - before.children_system)


def main():
    folder = Path(sys.argv[1] if len(sys.argv) > 1 else tempfile.mkdtemp())
    folder.mkdir(parents=True, exist_ok=True)
    for modes in TimeReport.params:
        store = str(build_store(folder / f"store-{modes}.sqlite", modes))
        for name, args in (("report", ["report", "--store", store, "--out",
                                       str(folder / f"report-{modes}.html"), "--quiet"]),
                           ("report --no-figure-files",
                            ["report", "--store", store, "--out",
                             str(folder / f"report-{modes}-nf.html"), "--no-figure-files",
                             "--quiet"]),
                           ("plot", ["plot", "--store", store, "--out",
                                     str(folder / f"figures-{modes}"), "--quiet"])):
            wall, cpu = _timed(args)
            print(f"mode_profiles = {modes}: {name}: {wall:.2f} s wall, {cpu:.2f} s CPU")


if __name__ == "__main__":
    main()
