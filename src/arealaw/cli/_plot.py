"""``arealaw plot``: the figures of a store as PNG, SVG or PDF files."""

import sys
from pathlib import Path

from ._common import HelpFormatter, progress_bars
from ._stores import fit_options, fits, formats, group_bar, open_store

__all__ = ["register"]


def register(sub):
    p = sub.add_parser("plot", help="figures of a store (PNG, SVG, PDF)",
                       formatter_class=HelpFormatter,
                       description="Scaling fits with residuals, power-law decays of mutual "
                                   "information, entanglement energies, regions and modes, as "
                                   "PNG/SVG/PDF files.")
    fit_options(p)
    p.add_argument("--out", default="figures", metavar="DIR", help="folder (default: figures)")
    p.add_argument("--format", type=formats, default=("png", "svg"), metavar="F,F",
                   help="file formats, comma-separated: png, svg, pdf (default: png,svg)")
    p.add_argument("--quiet", action="store_true", help="no progress bars")
    p.set_defaults(func=cmd_plot)


def _slug(name):
    return "".join(ch if ch.isalnum() else "_" for ch in name).strip("_") or "family"


def cmd_plot(args):
    from ..views._plots import save_figure
    from ..views._report import group_figures
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    with open_store(args.store) as store, progress_bars(not args.quiet):
        found = fits(args, store)
        bar = group_bar(len(found), "plot", args)
        for name, fit, rows in found:
            for slug, _, make in group_figures(name, rows, fit, measure=args.measure):
                try:
                    fig = make()
                except (NotImplementedError, ValueError) as exc:
                    print(f"arealaw plot: no {slug} figure for {name}: {exc}", file=sys.stderr)
                    continue
                if fig is not None:
                    written += save_figure(fig, out / f"{_slug(name)}_{slug}", args.format,
                                           png=False)[1]
            bar.update(1)
        bar.close()
    for p in written:
        print(p)
    return 0
