"""Helpers shared by the commands that fill or read a result store (``run``, ``results``,
``fit``, ``plot``, ``report``, ``demo``): opening a store, the fit options, figure formats and
the per-group progress bar."""

import argparse
import sys

__all__ = ["fit_options", "fits", "formats", "group_bar", "open_store"]


def open_store(path, *, must_exist=True):
    """The store at ``path``: read-only for reading commands, never created by them."""
    from ..workflow._store import ResultStore
    return ResultStore(path, mode="r" if must_exist else "w")


def fit_options(p, family=True):
    """The options shared by ``fit``, ``plot`` and ``report``."""
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


def fits(args, store):
    """``[(name, fit, rows)]``: the scaling fit of every swept family and the decay fit of
    every swept pair in ``store``, as ``fit_options`` asked."""
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


def _size(size, dim):
    """--size bonds means nothing in 1-D (one cut bond per end): fall back to x there."""
    return "x" if size == "bonds" and dim < 2 else size


def formats(text):
    """--format png,svg,pdf → a tuple of known formats."""
    from ..views._plots import FORMATS
    fmts = tuple(f.strip().lower() for f in text.split(",") if f.strip())
    bad = [f for f in fmts if f not in FORMATS]
    if bad or not fmts:
        raise argparse.ArgumentTypeError(f"format {bad[0] if bad else text!r} is not known; "
                                         f"allowed: {', '.join(FORMATS)} (comma-separated)")
    return fmts


def group_bar(total, desc, args):
    """A progress bar over groups on stderr unless --quiet; like the stage bars it appears
    only after :data:`~._common.PROGRESS_DELAY` seconds, so quick work prints nothing."""
    from tqdm import tqdm

    from . import _common
    return tqdm(total=total, desc=desc, unit="group", file=sys.stderr,
                disable=getattr(args, "quiet", False), mininterval=0.5,
                delay=_common.PROGRESS_DELAY, dynamic_ncols=True)
