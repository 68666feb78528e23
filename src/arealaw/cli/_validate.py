"""``arealaw validate``: recompute published reference values and report PASS/FAIL."""

import sys

from ..workflow._validation import KINDS, references, run_validation
from ._common import HelpFormatter, print_json, progress_bars

__all__ = ["register"]

EPILOG = """examples:
  arealaw validate --quick          the subset CI runs (well under two minutes)
  arealaw validate --json           every reference, as one JSON object

Exit status: 0 when every row passes, 1 when any fails.
"""


def register(sub):
    p = sub.add_parser("validate", help="recompute published reference values (PASS/FAIL)",
                       description="Recompute a table of published reference values through "
                                   "the public API and compare.",
                       epilog=EPILOG, formatter_class=HelpFormatter)
    p.add_argument("--quick", action="store_true", help="only the quick subset")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--quiet", action="store_true",
                   help="no progress bar (with --json a bar over the references appears on "
                        "stderr after a few seconds)")
    p.set_defaults(func=run)


def _num(x):
    return "n/a" if x is None else f"{x:.12g}"


def _line(row):
    kind = "rel" if row.relative else "abs"
    dev = "n/a" if row.deviation is None else f"{row.deviation:.2g}"
    status = "PASS" if row.passed else "FAIL"
    text = (f"{status}  {row.case}\n      computed {_num(row.computed)}  {KINDS[row.kind]} "
            f"{_num(row.published)}  deviation {dev} ({kind}, tolerance {row.tolerance:.2g})"
            f"  {row.seconds:.2g} s\n      source: {row.source}")
    if row.error:
        text += f"\n      error: {row.error}"
    return text


def run(args):
    refs = references(quick=args.quick)
    if args.json:
        from .._progress import report
        with progress_bars(not args.quiet):
            done = []
            rows = run_validation(refs, progress=lambda row: (
                done.append(row), report("references", len(done), len(refs))))
    else:
        print(f"arealaw validate: {len(refs)} reference values"
              + (" (quick subset)" if args.quick else ""))
        rows = run_validation(refs, progress=lambda row: (print(_line(row)), sys.stdout.flush()))
    failed = sum(not r.passed for r in rows)
    kinds = {k: sum(r.kind == k for r in rows) for k in KINDS}
    if args.json:
        print_json({"rows": [r.to_dict() for r in rows], "passed": len(rows) - failed,
                    "failed": failed, "kinds": kinds})
    else:
        print(f"{len(rows) - failed} passed, {failed} failed; reference values: "
              + ", ".join(f"{n} {KINDS[k]}" for k, n in kinds.items()))
    return 1 if failed else 0
