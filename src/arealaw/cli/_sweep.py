"""``arealaw run / results / fit / plot / report / demo``: scenario sweeps and their analysis."""

import argparse
import csv
import os
import sys
import time
from importlib.resources import files
from pathlib import Path

from ._common import HelpFormatter, positive_float, positive_int, print_json

__all__ = ["register"]

RUN_EPILOG = """examples:
  arealaw run sweep.toml                          store in <out>/results.sqlite of the scenario
  arealaw run sweep.toml --store r.sqlite --workers 2
  arealaw run sweep.toml --scheduler tcp://head-node:8786

A rerun skips every case already in the store; an interrupted run loses no finished case.
On a cluster: start 'dask scheduler' on one machine and 'dask worker tcp://HOST:8786' on each
worker machine (each needs arealaw installed); results are written by this process only.
"""

RESULTS_EPILOG = """examples:
  arealaw results --store r.sqlite
  arealaw results --store r.sqlite --json > results.json
  arealaw results --store r.sqlite --csv --family balls > balls.csv
"""

FIT_EPILOG = """examples:
  arealaw fit --store r.sqlite                       every swept family
  arealaw fit --store r.sqlite --family balls --power 1 --json
  arealaw fit --store chain.sqlite --measure renyi:2 --endpoints 1

Law: S = a R^(d-1) + b ln R + c in d >= 2; S = (c/3) ln l + const in 1-D (two endpoints).
"""


def _store(path, *, must_exist=True):
    """The store at ``path``: read-only for reading commands, never created by them."""
    from ..workflow._store import ResultStore
    return ResultStore(path, mode="r" if must_exist else "w")


def register(sub):
    p = sub.add_parser("run", help="run a TOML scenario into a result store",
                       description="Expand a scenario into cases and compute those not yet "
                                   "stored.", epilog=RUN_EPILOG, formatter_class=HelpFormatter)
    p.add_argument("scenario", metavar="SCENARIO.toml")
    _run_options(p)
    p.set_defaults(func=cmd_run)

    p = sub.add_parser("results", help="list or export what a store holds",
                       epilog=RESULTS_EPILOG, formatter_class=HelpFormatter,
                       description="Stored cases: a table, or JSON / CSV for other tools.")
    p.add_argument("--store", required=True, metavar="PATH")
    p.add_argument("--family", help="only this family")
    p.add_argument("--each", action="store_true",
                   help="list every realisation of a disorder ensemble (default: their means, "
                        "with n and the standard error)")
    fmt = p.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="a JSON list, one object per case")
    fmt.add_argument("--csv", action="store_true", help="CSV, one row per case")
    p.set_defaults(func=cmd_results)

    p = sub.add_parser("fit", help="fit the scaling law of each swept family",
                       epilog=FIT_EPILOG, formatter_class=HelpFormatter,
                       description="Weighted least-squares fit of entropy against region size.")
    _fit_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object per fit, as a list")
    p.set_defaults(func=cmd_fit)

    p = sub.add_parser("plot", help="figures of a store (PNG, SVG, PDF)",
                       formatter_class=HelpFormatter,
                       description="Scaling fits with residuals, power-law decays of mutual "
                                   "information, entanglement energies, regions and modes, as "
                                   "PNG/SVG/PDF files.")
    _fit_options(p)
    p.add_argument("--out", default="figures", metavar="DIR", help="folder (default: figures)")
    p.add_argument("--format", type=_formats, default=("png", "svg"), metavar="F,F",
                   help="file formats, comma-separated: png, svg, pdf (default: png,svg)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_plot)

    p = sub.add_parser("report", help="one self-contained HTML report of a store",
                       formatter_class=HelpFormatter,
                       description="Tables, fits and figures of a store in one HTML file.")
    _fit_options(p, family=False)
    p.add_argument("--out", default="report.html", metavar="FILE",
                   help="HTML file (default: report.html)")
    p.add_argument("--title", default="", help="report title (default: the scenario's)")
    p.add_argument("--format", type=_formats, default=("png", "svg"), metavar="F,F",
                   help="also write each figure in these formats into FILE_figures/ next to "
                        "the report (default: png,svg)")
    p.add_argument("--no-figure-files", dest="format", action="store_const", const=(),
                   help="only embed the figures in the HTML file")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_report)

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
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_demo)


def _run_options(p):
    p.add_argument("--store", metavar="PATH",
                   help="SQLite result store (default: <out>/results.sqlite, out from the "
                        "scenario)")
    p.add_argument("--workers", type=positive_int, default=1, metavar="N",
                   help="local worker processes (default 1)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="dask.distributed scheduler, e.g. tcp://head-node:8786")
    p.add_argument("--scheduler-timeout", type=positive_float, default=20.0, metavar="SECONDS",
                   help="how long to try reaching the scheduler (default 20)")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")


def _fit_options(p, family=True):
    p.add_argument("--store", required=True, metavar="PATH")
    if family:
        p.add_argument("--family", help="only this family")
    p.add_argument("--measure", default="entropy", metavar="M",
                   help="entropy (default), renyi:N (e.g. renyi:2) or log_negativity")
    p.add_argument("--power", nargs="+", type=float, default=[], metavar="P",
                   help="extra correction terms R^P (e.g. 1 or -1)")
    p.add_argument("--endpoints", type=int, choices=(1, 2), default=2,
                   help="1-D only: region endpoints, c = 3a (2) or 6a (1)")
    p.add_argument("--size", choices=("x", "bonds", "chord"), default="x",
                   help="size variable: x = the swept value (default); bonds (d >= 2) = "
                        "(couplings cut by the boundary)^(1/(d-1)), which follows jagged "
                        "lattice surfaces; chord (finite chains) = the conformal chord length "
                        "of Calabrese & Cardy 2004 (periodic: any interval; dirichlet/open: "
                        "intervals at an end), which sets --endpoints from the boundary")


def _sweep(scenario, store_path, workers, scheduler, progress, scheduler_timeout=20.0):
    from ..workflow._sweep import connect, run_cases
    t0 = time.perf_counter()
    client = connect(scheduler, timeout=scheduler_timeout) if scheduler else None
    try:
        with _store(store_path, must_exist=False) as store:
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
    return _sweep(scenario, store, args.workers, args.scheduler, not args.no_progress,
                  args.scheduler_timeout)


def _flat(row):
    out = {k: row.get(k) for k in ("case", "family", "label", "x", "lattice", "network", "region",
                                   "region_sites", "region_b", "method", "entropy",
                                   "error_bound")}
    for k, v in (row.get("renyi") or {}).items():
        out[f"renyi_{k}"] = v
    for k, v in (row.get("renyi_stderr") or {}).items():
        out[f"renyi_{k}_stderr"] = v
    for k in ("mutual_information", "mutual_information_error_bound", "log_negativity",
              "log_negativity_error_bound", "boundary_bonds", "seconds", "computed_at", "run_id",
              "version", "realisations", "entropy_stderr", "mutual_information_stderr",
              "log_negativity_stderr"):
        out[k] = row.get(k)
    return out


def cmd_results(args):
    from ..workflow._ensembles import average_realisations
    with _store(args.store) as store:
        rows = store.rows(args.family)
    if not args.each:
        rows = average_realisations(rows)
    if args.json:
        print_json([{k: v for k, v in r.items() if k != "spec"} for r in rows])
        return 0
    flat = [_flat(r) for r in rows]
    if args.csv:
        fields = []
        for r in flat:
            fields += [k for k in r if k not in fields]
        w = csv.DictWriter(sys.stdout, fieldnames=fields, lineterminator="\n")
        w.writeheader()
        w.writerows(flat)
        return 0
    if not rows:
        print(f"store {args.store}: no results")
        return 0
    ensembles = any(r.get("realisations") for r in flat)
    neg = any(r["log_negativity"] is not None for r in flat)
    print(f"{'case':16}  {'family':14}  {'label':16}  {'sites':>6}  {'entropy':>14}  "
          f"{'error':>8}  " + ("   n  std.err   " if ensembles else "")
          + (f"{'log neg.':>14}  {'error':>8}  " if neg else "") + "method")
    for r in flat:
        mean = (f"{r['realisations'] or 1:>4}  {r['entropy_stderr'] or 0.0:>8.2g}  "
                if ensembles else "")
        entropy = "n/a" if r["entropy"] is None else f"{r['entropy']:.10g}"
        en = ""
        if neg:
            en = (f"{r['log_negativity']:>14.10g}  {r['log_negativity_error_bound']:>8.2g}  "
                  if r["log_negativity"] is not None else f"{'—':>14}  {'':>8}  ")
        print(f"{r['case']:16}  {r['family'][:14]:14}  {r['label'][:16]:16}  "
              f"{r['region_sites']:>6}  {entropy:>14}  {r['error_bound']:>8.2g}  "
              f"{mean}{en}{r['method']}")
    return 0


def _fits(args, store):
    from ..views._report import fit_groups, group_name, pair_groups
    from ..workflow._decay import fit_decay_rows
    from ..workflow._fits import fit_rows
    versions = store.versions()
    if len(versions) > 1:
        raise ValueError(f"store {args.store!r} holds results of arealaw versions "
                         f"{', '.join(versions)}; a fit would mix them: rerun the scenario into "
                         "a new --store path with one version")
    rows = store.rows(getattr(args, "family", None))
    if not rows:
        what = f"family {args.family!r}" if getattr(args, "family", None) else "anything"
        raise ValueError(f"store {args.store!r} holds no results for {what}; see "
                         f"arealaw results --store {args.store}")
    groups = fit_groups(rows)
    pairs = pair_groups(rows) if args.measure == "entropy" else {}
    if not groups and not pairs:
        raise ValueError("no family with a swept region size to fit (e.g. ball = {from = 2, "
                         "to = 6}) and no pair with 3 or more separations")
    return [(group_name(k), fit_rows(g, measure=args.measure, powers=args.power,
                                     endpoints=args.endpoints,
                                     size=_size(args.size, g[0]["dim"])), g)
            for k, g in groups.items()] + [(group_name(k), fit_decay_rows(g), g)
                                           for k, g in pairs.items()]


def _fit_measure(fit, measure):
    return "mutual_information" if fit.size == "separation" else measure


def _size(size, dim):
    """--size bonds means nothing in 1-D (one cut bond per end): fall back to x there."""
    return "x" if size == "bonds" and dim < 2 else size


def fit_lines(fit):
    """The lines ``arealaw fit`` prints about one fit (also used by ``demo``)."""
    scatter = f", model scatter {fit.model_sigma:.2g} added" if fit.model_sigma else ""
    p = "" if fit.p_value is None else f", p = {fit.p_value:.2g}"
    lines = [f"{fit.law}  ({fit.sizes.size} points; against the error bounds: chi2 "
             f"{fit.chi2:.3g}, chi2/dof {fit.chi2_red:.3g}{p}{scatter})"]
    for n, v, e in zip(fit.names, fit.coefficients, fit.stderr):
        drift = fit.drift.get(n)
        d = f"  drift {drift:.2g} dropping up to {len(fit.stability[n])} smallest" \
            if drift is not None else ""
        lines.append(f"  {n:8} {v:+.8g} ± {e:.2g}{d}")
    if fit.central_charge is not None:
        lines.append(f"  central charge c = {fit.central_charge:.6g} ± "
                     f"{fit.central_charge_stderr:.2g}")
    lines.append(f"  {fit.assessment}")
    if fit.warning:
        lines.append(f"  WARNING: {fit.warning}")
    return lines


def cmd_fit(args):
    with _store(args.store) as store:
        fits = _fits(args, store)
    if args.json:
        print_json([{"family": name, "measure": _fit_measure(fit, args.measure), **fit.to_dict()}
                    for name, fit, _ in fits])
        return 0
    for name, fit, _ in fits:
        first, *rest = fit_lines(fit)
        print(f"{name}: {first}")
        for line in rest:
            print(line)
    return 0


def _slug(name):
    return "".join(ch if ch.isalnum() else "_" for ch in name).strip("_") or "family"


def _formats(text):
    """--format png,svg,pdf → a tuple of known formats."""
    from ..views._plots import FORMATS
    fmts = tuple(f.strip().lower() for f in text.split(",") if f.strip())
    bad = [f for f in fmts if f not in FORMATS]
    if bad or not fmts:
        raise argparse.ArgumentTypeError(f"format {bad[0] if bad else text!r} is not known; "
                                         f"allowed: {', '.join(FORMATS)} (comma-separated)")
    return fmts


def cmd_plot(args):
    from ..views._plots import save_figure
    from ..views._report import group_figures
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    with _store(args.store) as store:
        fits = _fits(args, store)
        bar = _bar(len(fits), "plot", args)
        for name, fit, rows in fits:
            for slug, _, make in group_figures(name, rows, fit, measure=args.measure):
                try:
                    fig = make()
                except (NotImplementedError, ValueError) as exc:
                    print(f"arealaw plot: no {slug} figure for {name}: {exc}", file=sys.stderr)
                    continue
                if fig is not None:
                    written += save_figure(fig, out / f"{_slug(name)}_{slug}", args.format)[1]
            bar.update(1)
        bar.close()
    for p in written:
        print(p)
    return 0


def _bar(total, desc, args):
    """A progress bar on stderr unless --quiet (tqdm hides itself for quick work)."""
    from tqdm import tqdm
    return tqdm(total=total, desc=desc, unit="group", file=sys.stderr,
                disable=getattr(args, "quiet", False), mininterval=0.5, delay=2.0,
                dynamic_ncols=True)


def cmd_report(args):
    from ..views._report import write_report
    out = Path(args.out)
    figures = out.with_name(out.stem + "_figures") if args.format else None
    with _store(args.store) as store:
        bar = _bar(None, "report", args)

        def progress(done, total):
            bar.total = total
            bar.update(done - bar.n)
        try:
            path = write_report(store, args.out, title=args.title, powers=args.power,
                                endpoints=args.endpoints, size=args.size, figures=figures,
                                formats=args.format or (), progress=progress)
        finally:
            bar.close()
    print(path)
    if figures is not None:
        print(f"figures: {figures}/ ({', '.join(args.format)})")
    return 0


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
    status = _sweep(scenario, str(store_path), args.workers, None, not args.no_progress)
    with _store(store_path) as store:
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
