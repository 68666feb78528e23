"""``arealaw report``: one self-contained HTML report of a store."""

from pathlib import Path

from ._common import HelpFormatter, progress_bars
from ._stores import fit_options, formats, group_bar, open_store

__all__ = ["register"]


def register(sub):
    p = sub.add_parser("report", help="one self-contained HTML report of a store",
                       formatter_class=HelpFormatter,
                       description="Tables, fits and figures of a store in one HTML file.")
    fit_options(p, family=False)
    p.add_argument("--out", default="report.html", metavar="FILE",
                   help="HTML file (default: report.html)")
    p.add_argument("--title", default="", help="report title (default: the scenario's)")
    p.add_argument("--format", type=formats, default=("png", "svg"), metavar="F,F",
                   help="also write each figure in these formats into FILE_figures/ next to "
                        "the report (default: png,svg)")
    p.add_argument("--no-figure-files", dest="format", action="store_const", const=(),
                   help="only embed the figures in the HTML file")
    p.add_argument("--quiet", action="store_true", help="no progress bars")
    p.set_defaults(func=cmd_report)


def cmd_report(args):
    from ..views._report import write_report
    out = Path(args.out)
    figures = out.with_name(out.stem + "_figures") if args.format else None
    with open_store(args.store) as store, progress_bars(not args.quiet):
        bar = group_bar(None, "report", args)

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
