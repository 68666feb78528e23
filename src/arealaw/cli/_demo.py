"""``arealaw demo``: run the bundled demo sweep, fit it and write a report."""

import os
import time
from importlib.resources import files
from pathlib import Path

from ._common import HelpFormatter, positive_int, progress_bars
from ._run import sweep
from ._stores import open_store

__all__ = ["demo_scenario_text", "register"]


def register(sub):
    p = sub.add_parser("demo", help="run the bundled demo sweep, fit it and write a report",
                       formatter_class=HelpFormatter,
                       description="Area law of balls in a 3-D lattice and the decay of the "
                                   "mutual information of two cubes with their separation: "
                                   "runs, fits and writes DIR/report.html.")
    p.add_argument("--out", default="arealaw-demo", metavar="DIR",
                   help="output folder (default: arealaw-demo)")
    p.add_argument("--save-scenario", metavar="FILE",
                   help="write the demo scenario to FILE and stop (edit it, then arealaw run)")
    p.add_argument("--workers", type=positive_int, default=min(2, os.cpu_count() or 1),
                   metavar="N", help="local worker processes (default: up to 2)")
    p.add_argument("--quiet", "--no-progress", dest="no_progress", action="store_true",
                   help="no progress bars")
    p.set_defaults(func=cmd_demo)


def demo_scenario_text():
    """The bundled demo scenario (TOML text)."""
    return (files("arealaw") / "data" / "demo.toml").read_text(encoding="utf-8")


def cmd_demo(args):
    from ..views._report import fit_groups, pair_groups, write_report
    from ..workflow._decay import fit_decay_rows
    from ..workflow._fits import fit_rows
    from ..workflow._scenario import parse_scenario
    text = demo_scenario_text()
    if args.save_scenario:
        Path(args.save_scenario).write_text(text, encoding="utf-8")
        print(f"demo scenario written to {args.save_scenario}; run it with "
              f"arealaw run {args.save_scenario}")
        return 0
    scenario = parse_scenario(text, source="demo.toml")
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    store_path = out / "results.sqlite"
    t0 = time.perf_counter()
    status = sweep(scenario, str(store_path), args.workers, None, not args.no_progress)
    with open_store(store_path) as store, progress_bars(not args.no_progress):
        for key, rows in fit_groups(store.rows()).items():
            fit = fit_rows(rows, size="bonds")
            print(f"{key[0]}: {fit.law}, R = (boundary bonds)^(1/2): " + ", ".join(
                f"{n} = {v:.5g} ± {e:.2g}" for n, v, e in
                zip(fit.names, fit.coefficients, fit.stderr)))
            print(f"  {fit.assessment}" + (f"\n  WARNING: {fit.warning}" if fit.warning else ""))
        for key, rows in pair_groups(store.rows()).items():
            fit = fit_decay_rows(rows)
            print(f"{key[0]}: {fit.law}: " + ", ".join(
                f"{n} = {v:.5g} ± {e:.2g}" for n, v, e in
                zip(fit.names, fit.coefficients, fit.stderr)))
            print(f"  {fit.assessment}" + (f"\n  WARNING: {fit.warning}" if fit.warning else ""))
        report = write_report(store, out / "report.html", title=scenario.title, size="bonds",
                              figures=out / "report_figures")
    print(f"report: {report}  (total {time.perf_counter() - t0:.1f} s)")
    return status
