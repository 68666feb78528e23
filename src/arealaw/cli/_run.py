"""``arealaw run``: expand a scenario into cases and compute those not yet stored."""

import sys
import time
from pathlib import Path

from ._common import HelpFormatter, positive_float, positive_int
from ._stores import open_store

__all__ = ["register", "sweep"]

EPILOG = """examples:
  arealaw run sweep.toml                          store in <out>/results.sqlite of the scenario
  arealaw run sweep.toml --store r.sqlite --workers 2
  arealaw run sweep.toml --scheduler tcp://head-node:8786

A rerun skips every case already in the store; an interrupted run loses no finished case.
On a cluster: start 'dask scheduler' on one machine and 'dask worker tcp://HOST:8786' on each
worker machine (each needs arealaw installed); results are written by this process only.
"""


def register(sub):
    p = sub.add_parser("run", help="run a TOML scenario into a result store",
                       description="Expand a scenario into cases and compute those not yet "
                                   "stored.", epilog=EPILOG, formatter_class=HelpFormatter)
    p.add_argument("scenario", metavar="SCENARIO.toml")
    p.add_argument("--store", metavar="PATH",
                   help="SQLite result store (default: <out>/results.sqlite, out from the "
                        "scenario)")
    p.add_argument("--workers", type=positive_int, default=1, metavar="N",
                   help="local worker processes (default 1)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="dask.distributed scheduler, e.g. tcp://head-node:8786")
    p.add_argument("--scheduler-timeout", type=positive_float, default=20.0, metavar="SECONDS",
                   help="how long to try reaching the scheduler (default 20)")
    p.add_argument("--quiet", "--no-progress", dest="no_progress", action="store_true",
                   help="no progress bar")
    p.set_defaults(func=cmd_run)


def sweep(scenario, store_path, workers, scheduler, progress, scheduler_timeout=20.0):
    """Run ``scenario``'s missing cases into the store at ``store_path``, print a summary and
    return the exit status (1 if a case failed); also used by ``demo``."""
    from ..workflow._sweep import connect, run_cases
    t0 = time.perf_counter()
    client = connect(scheduler, timeout=scheduler_timeout) if scheduler else None
    try:
        with open_store(store_path, must_exist=False) as store:
            store.begin_run(scenario.title, scenario.source, scenario.text)
            summary = run_cases(scenario.cases, store, workers=workers, scheduler=client,
                                progress=progress)
    except KeyboardInterrupt:
        print(f"arealaw run: interrupted; every finished case is kept in {store_path}: rerun "
              "the same command to resume (it computes only what is missing)", file=sys.stderr)
        return 130
    finally:
        if client is not None:
            client.close()
    seconds = time.perf_counter() - t0
    for note in summary.notes:
        print(f"arealaw run: {note}", file=sys.stderr)
    for case, why in summary.retried:
        print(f"arealaw run: case {case.family} {case.label}: {why}; computed again",
              file=sys.stderr)
    for case, err in summary.failed:
        print(f"arealaw run: case {case.family} {case.label} failed: {err}", file=sys.stderr)
    by_other = f", {summary.elsewhere} by another run" if summary.elsewhere else ""
    print(f"{summary.done} cases computed, {summary.skipped} already stored{by_other}, "
          f"{len(summary.failed)} failed in {seconds:.1f} s; store: {store_path}")
    return 1 if summary.failed else 0


def cmd_run(args):
    from ..workflow._scenario import load_scenario
    scenario = load_scenario(args.scenario)
    store = args.store or str(Path(scenario.out) / "results.sqlite")
    return sweep(scenario, store, args.workers, args.scheduler, not args.no_progress,
                 args.scheduler_timeout)
