"""One self-contained HTML report of a stored sweep: tables, fits and figures (base64 PNG)."""

import base64
import datetime
import html
import math

from ..workflow._ensembles import split_seed
from ..workflow._fits import fit_rows
from ._plots import energies_figure, figure_png, mode_figure, region_figure, scaling_figure
from ..network._specs import network_from_spec, region_from_spec

__all__ = ["fit_groups", "pair_groups", "write_report"]

STYLE = """body{font-family:sans-serif;max-width:60em;margin:2em auto;color:#222}
table{border-collapse:collapse;margin:1em 0;font-size:90%}td,th{border:1px solid #bbb;
padding:.2em .6em;text-align:right}th{background:#eee}img{max-width:100%}
.note{color:#555;font-size:90%}.warning{color:#a00}"""


def _variant(row):
    label, _ = split_seed(row["label"])
    return label.split(" | ", 1)[1] if " | " in label else ""


def fit_groups(rows):
    """Rows of a store grouped for fitting: {(family, lattice variant): [rows]} (swept sizes;
    the realisations of an ensemble stay in their group, to be averaged by the fit)."""
    groups = {}
    for r in rows:
        if r.get("x") is None or r.get("mutual_information") is not None:
            continue
        groups.setdefault((r["family"], _variant(r)), []).append(r)
    return groups


def pair_groups(rows):
    """Pairs grouped like :func:`fit_groups`, keeping groups with 3 or more separations."""
    groups = {}
    for r in rows:
        if r.get("x") is not None and r.get("mutual_information") is not None:
            groups.setdefault((r["family"], _variant(r)), []).append(r)
    return {k: g for k, g in groups.items() if len({r["x"] for r in g}) >= 3}


def group_name(key):
    family, variant = key
    return f"{family} ({variant})" if variant else family


def _img(fig, alt):
    data = base64.b64encode(figure_png(fig)).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def _num(v, digits=8):
    if v is None:
        return "—"
    if isinstance(v, float):
        return "—" if not math.isfinite(v) else f"{v:.{digits}g}"
    return html.escape(str(v))


def _table(headers, body):
    out = ["<table><tr>" + "".join(f"<th>{html.escape(h)}</th>" for h in headers) + "</tr>"]
    for row in body:
        out.append("<tr>" + "".join(f"<td>{_num(v)}</td>" for v in row) + "</tr>")
    return "\n".join(out + ["</table>"])


def _fit_section(key, rows, powers, endpoints, size):
    name = group_name(key)
    parts = [f"<h3>Fit: {html.escape(name)}</h3>"]
    try:
        fit = fit_rows(rows, powers=powers, endpoints=endpoints,
                       size="x" if size == "bonds" and rows[0]["dim"] < 2 else size)
    except ValueError as exc:
        return parts + [f'<p class="note">no fit: {html.escape(str(exc))}</p>'], None
    body = []
    for n, v, e in zip(fit.names, fit.coefficients, fit.stderr):
        drops = "; ".join(f"−{k}: {a:.6g}" for k, a, _ in fit.stability.get(n, []))
        body.append([n, float(v), float(e), fit.drift.get(n), drops or "—"])
    against = {"bonds": "R = (boundary bonds)^(1/(d−1))",
               "chord": "ℓ_c = the conformal chord length (Calabrese & Cardy 2004)"}.get(
                   fit.size, "R = the swept size")
    p_value = "" if fit.p_value is None else f", p = {fit.p_value:.2g}"
    parts.append(f"<p>{html.escape(fit.law)} with {against}, {fit.sizes.size} points. Against "
                 f"the error bounds alone: χ² = {_num(fit.chi2, 4)}, χ²/dof = "
                 f"{_num(fit.chi2_red, 4)}{p_value}"
                 + (f"; a model scatter σ_m = {fit.model_sigma:.3g} is added in quadrature to "
                    "the weights, so the standard errors include it" if fit.model_sigma else "")
                 + f". {html.escape(fit.assessment[:1].upper() + fit.assessment[1:])}.</p>")
    if fit.warning:
        parts.append(f'<p class="warning"><b>Warning:</b> {html.escape(fit.warning)}.</p>')
    parts.append(_table(["coefficient", "value", "std. error", "largest drift",
                         "dropping smallest sizes"], body))
    if fit.central_charge is not None:
        parts.append(f"<p>central charge c = {fit.central_charge:.5g} ± "
                     f"{fit.central_charge_stderr:.2g} ({fit.endpoints} endpoint(s))</p>")
    parts.append(_img(scaling_figure(fit, title=name), f"fit of {name}"))
    return parts, fit


#: Largest region whose most entangled modes the report draws (a dense eigenproblem).
MODE_PICTURE_LIMIT = 1500


def _rebuild(row):
    spec = row["spec"]
    net = network_from_spec(spec["network"])
    if net.lattice is None or net.is_infinite or net.ndim > 3:
        return None, None, None
    reg = region_from_spec(net, spec["region"])
    reg_b = region_from_spec(net, spec["region_b"]) if spec.get("region_b") else None
    return net, reg, reg_b


def _picture(row):
    net, reg, reg_b = _rebuild(row)
    if net is None:
        return ""
    name = f"{row['family']}: {row['label']}"
    return _img(region_figure(net, reg, region_b=reg_b, title=name), "region")


def mode_row(rows):
    """The largest swept case small enough for a mode picture (None if there is none)."""
    small = [r for r in rows if r["region_sites"] <= MODE_PICTURE_LIMIT]
    return max(small, key=lambda r: r["x"]) if small else None


def _modes(row):
    net, reg, _ = _rebuild(row) if row is not None else (None, None, None)
    if net is None:
        return ""
    try:
        return _img(mode_figure(net, reg, title=f"most entangled modes, {row['family']}: "
                                               f"{row['label']}"), "modes")
    except (NotImplementedError, ValueError) as exc:  # a method without region blocks
        return f'<p class="note">no mode picture: {html.escape(str(exc))}</p>'


def write_report(store, path, *, title="", powers=(), endpoints=2, size="x"):
    """Write the report of everything in ``store`` to ``path`` (HTML); returns the path.

    ``size`` ('x' or 'bonds') is the size variable of the fits in d ≥ 2 (see :func:`fit_rows`).
    """
    rows = store.rows()
    if not rows:
        raise ValueError(f"the store {str(store.path)!r} holds no results; run a scenario first "
                         "(arealaw run SCENARIO.toml --store PATH)")
    stamp = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    parts = [f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>"
             f"{html.escape(title or 'arealaw report')}</title><style>{STYLE}</style></head><body>",
             f"<h1>{html.escape(title or 'arealaw sweep report')}</h1>",
             f"<p class='note'>{len(rows)} stored cases from {html.escape(str(store.path))}; "
             f"written {stamp}.</p>"]
    groups = fit_groups(rows)
    if groups:
        parts.append("<h2>Scaling fits</h2>")
    for key, grp in groups.items():
        sec, _ = _fit_section(key, grp, powers, endpoints, size)
        parts += sec
        largest = max(grp, key=lambda r: r["x"])
        parts.append(_picture(largest))
        parts.append(_modes(mode_row(grp)))
        if largest.get("entanglement_energies"):
            parts.append(_img(energies_figure(largest["entanglement_energies"],
                                              title=f"{key[0]}: {largest['label']}"),
                              "entanglement energies"))
    pairs = [r for r in rows if r.get("mutual_information") is not None]
    if pairs:
        parts.append("<h2>Mutual information</h2>")
        parts.append(_table(["family", "region A", "region B", "S_A", "S_B", "S_AB", "I(A:B)",
                             "error bound"],
                            [[r["family"], r["region"], r["region_b"], r["entropy"],
                              r["entropy_b"], r["entropy_ab"], r["mutual_information"],
                              r["mutual_information_error_bound"]] for r in pairs]))
        parts.append(_picture(pairs[0]))
    parts.append("<h2>All cases</h2>")
    parts.append(_table(["case", "family", "label", "sites", "entropy", "error bound", "method",
                         "seconds"],
                        [[r["case"], r["family"], r["label"], r["region_sites"], r["entropy"],
                          r["error_bound"], r["method"], r["seconds"]] for r in rows]))
    parts.append("</body></html>")
    with open(path, "w", encoding="utf-8") as f:
        f.write("\n".join(p for p in parts if p))
    return path
