"""``arealaw fit``: the scaling law of each swept family (and the decay of each swept pair)."""

from ._common import HelpFormatter, print_json
from ._stores import fit_options, fits, open_store

__all__ = ["fit_lines", "register"]

EPILOG = """examples:
  arealaw fit --store r.sqlite                       every swept family
  arealaw fit --store r.sqlite --family balls --power 1 --json
  arealaw fit --store chain.sqlite --measure renyi:2 --endpoints 1

Law: S = a R^(d-1) + b ln R + c in d >= 2; S = (c/3) ln l + const in 1-D (two endpoints).
"""


def register(sub):
    p = sub.add_parser("fit", help="fit the scaling law of each swept family",
                       epilog=EPILOG, formatter_class=HelpFormatter,
                       description="Weighted least-squares fit of entropy against region size.")
    fit_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object per fit, as a list")
    p.set_defaults(func=cmd_fit)


def _fit_measure(fit, measure):
    return "mutual_information" if fit.size == "separation" else measure


def fit_lines(fit):
    """The lines ``arealaw fit`` prints about one fit."""
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
    with open_store(args.store) as store:
        found = fits(args, store)
    if args.json:
        print_json([{"family": name, "measure": _fit_measure(fit, args.measure), **fit.to_dict()}
                    for name, fit, _ in found])
        return 0
    for name, fit, _ in found:
        first, *rest = fit_lines(fit)
        print(f"{name}: {first}")
        for line in rest:
            print(line)
    return 0
