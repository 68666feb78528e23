"""``arealaw results``: list or export what a store holds."""

import csv
import sys

from ._common import HelpFormatter, print_json
from ._stores import open_store

__all__ = ["register"]

EPILOG = """examples:
  arealaw results --store r.sqlite
  arealaw results --store r.sqlite --json > results.json
  arealaw results --store r.sqlite --csv --family balls > balls.csv
"""


def register(sub):
    p = sub.add_parser("results", help="list or export what a store holds",
                       epilog=EPILOG, formatter_class=HelpFormatter,
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
    with open_store(args.store) as store:
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
