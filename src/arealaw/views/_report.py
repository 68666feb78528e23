"""One self-contained HTML report of a stored sweep: what was computed, fits, figures.

For every family the report records the physics and the numerics (lattice, boundary, mass,
couplings, disorder and seeds, kinetic matrix, temperature, region kind and sizes, measures,
method and its options, tolerance, arealaw version, dates), its fit (model, size variable,
window, χ², model scatter, verdict), ensemble means with standard errors, and its figures; at
the end every stored case and the scenario files themselves.  Figures are rendered once: the
PNG is embedded (base64) and, with ``figures=DIR``, the same figure is written there as PNG/SVG.
"""

import base64
import datetime
import html
import json
import math
from pathlib import Path

from .._entropy import region_modes
from ..workflow._decay import fit_decay_rows
from ..workflow._ensembles import average_realisations, split_seed
from ..workflow._fits import fit_rows
from ..workflow._scenario import ALL_ENERGIES, build_network, build_region

__all__ = ["fit_groups", "group_figures", "pair_groups", "write_report"]

STYLE = """body{font-family:sans-serif;max-width:62em;margin:2em auto;color:#222}
table{border-collapse:collapse;margin:1em 0;font-size:90%}td,th{border:1px solid #bbb;
padding:.2em .6em;text-align:right}th{background:#eee}img{max-width:100%}
table.setup td{text-align:left}table.setup td:first-child{font-weight:bold;background:#f6f6f6}
pre{background:#f6f6f6;padding:.8em;overflow-x:auto;font-size:85%}
.note{color:#555;font-size:90%}.warning{color:#a00}"""

#: Largest region whose most entangled modes the report draws (a dense eigenproblem of the
#: region's blocks; only the top eigenpairs are computed).
MODE_PICTURE_LIMIT = 1000


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


def _all_groups(rows):
    groups = {}
    for r in rows:
        groups.setdefault((r["family"], _variant(r)), []).append(r)
    return groups


def group_name(key):
    family, variant = key
    return f"{family} ({variant})" if variant else family


def _slug(name):
    return "".join(ch if ch.isalnum() else "_" for ch in name).strip("_") or "family"


def _num(v, digits=8):
    if v is None:
        return "—"
    if isinstance(v, float):
        return "—" if not math.isfinite(v) else f"{v:.{digits}g}"
    return html.escape(str(v))


def _table(headers, body, cls=""):
    out = [f"<table{f' class={cls!r}' if cls else ''}><tr>"
           + "".join(f"<th>{html.escape(h)}</th>" for h in headers) + "</tr>"]
    for row in body:
        out.append("<tr>" + "".join(f"<td>{_num(v)}</td>" for v in row) + "</tr>")
    return "\n".join(out + ["</table>"])


def _show(v):
    return json.dumps(v, separators=(", ", ": "), ensure_ascii=False) \
        if isinstance(v, (list, dict)) else f"{v:g}" if isinstance(v, float) else str(v)


def summarize(values, default="—"):
    """The distinct values of one setting across a family, in words.

    Examples
    --------
    >>> summarize([2, 2.5, 3, 3.5, 4, 4.5])
    '2 … 4.5 (6 values)'
    >>> summarize([[4], [4]]), summarize([[2, 3]]), summarize([None], default="1 (default)")
    ('4', '[2, 3]', '1 (default)')
    """
    seen = []
    for v in values:
        if isinstance(v, list) and len(v) == 1:  # one axis: [4] is the number 4
            v = v[0]
        if v is not None and v not in seen:
            seen.append(v)
    if not seen:
        return default
    if len(seen) > 4 and all(isinstance(v, (int, float)) and not isinstance(v, bool)
                             for v in seen):
        return f"{min(seen):g} … {max(seen):g} ({len(seen)} values)"
    return ", ".join(_show(v) for v in seen)


def _setup(rows):
    """(field, value) pairs recording the physics and numerics of a family's stored cases."""
    specs = [r["spec"] for r in rows]
    nets = [s["network"] for s in specs]
    get = lambda key: [n.get(key) for n in nets]  # noqa: E731
    out = []
    if any("radial" in n for n in nets):
        out.append(("lattice", f"radial lattice (Srednicki's partial waves): "
                               f"{summarize(get('radial'))} radial sites, d = "
                               f"{summarize(get('dim'), '3')}; Dirichlet wall at N + 1"))
    elif any("potential" in n for n in nets):
        out.append(("lattice", f"potential matrix V from {summarize(get('potential'))}"))
    else:
        out.append(("lattice shape", " × ".join(str(n) for n in nets[0]["shape"])
                    if len({json.dumps(n["shape"]) for n in nets}) == 1
                    else summarize(get("shape"))))
        out.append(("boundary", summarize(get("boundary"), "dirichlet (default)")))
        out.append(("couplings J", summarize(get("coupling"), "1 (default)")))
    if not any("potential" in n for n in nets):
        out.append(("mass m", summarize(get("mass"), "0 (default)")))
    kinetic = summarize(get("kinetic"), "")
    out.append(("kinetic matrix M", f"from {kinetic}" if kinetic else
                "identity" if any("potential" in n for n in nets) else
                f"inertia × identity, inertia = {summarize(get('inertia'), '1 (default)')}"))
    disorder = []
    if any(get("mass_disorder")):
        disorder.append(f"site masses m_i = m + W·u_i, u_i ~ U(0, 1) per site, W = "
                        f"{summarize(get('mass_disorder'))}")
    if any(get("coupling_disorder")):
        disorder.append(f"couplings J_b = J·(1 + W·u_b), u_b ~ U(−1, 1) per bond, W = "
                        f"{summarize(get('coupling_disorder'))}")
    out.append(("disorder", "; ".join(disorder) or "none"))
    seeds = [s for s in get("seed") if s is not None]
    if seeds:
        n = len(set(seeds))
        out.append(("seed", (f"ensemble of {n} realisations per point, seeds "
                             f"{summarize(seeds)}") if n > 1 else summarize(seeds)))
    temps = [r.get("temperature") or 0.0 for r in rows]
    out.append(("temperature T", "0 (ground state)" if not any(temps)
                else summarize(temps)))
    for side, label in (("region", "region A" if specs[0].get("region_b") else "region"),
                        ("region_b", "region B")):
        regions = [s[side] for s in specs if s.get(side)]
        if not regions:
            continue
        keys = list(dict.fromkeys(k for reg in regions for k in reg))
        out.append((label, "; ".join(f"{k} = {summarize([reg.get(k) for reg in regions])}"
                                     for k in keys)
                    + f" ({summarize([r.get(side + '_sites') for r in rows])} sites)"))
    if specs[0].get("region_b"):
        xs = [r.get("x") for r in rows]
        out.append(("separation of the centres", summarize(xs)))
    measures = ["von Neumann entropy"]
    orders = list(dict.fromkeys(o for s in specs for o in s.get("renyi", [])))
    if orders:
        measures.append("Rényi S_n, n = " + ", ".join(orders))
    if specs[0].get("region_b"):
        measures.append("S_B, S_AB, mutual information I(A:B)")
    if any(r.get("log_negativity") is not None for r in rows):
        measures.append("logarithmic negativity E_N" + (" of A against the rest of the lattice"
                                                        if rows[0].get("log_negativity_partner")
                                                        else "(A:B)"))
    energies = max(s.get("energies", 0) for s in specs)
    if energies:
        measures.append("the whole entanglement spectrum" if energies >= ALL_ENERGIES
                        else f"the {energies} lowest entanglement energies")
    profiles = max(s.get("mode_profiles", 0) for s in specs)
    if profiles:
        measures.append(f"site profiles of the {profiles} most entangled modes")
    out.append(("measures", "; ".join(measures)))
    chosen = {}
    for r in rows:
        chosen[r.get("method")] = chosen.get(r.get("method"), 0) + 1
    out.append(("method", f"requested {summarize([s.get('method') for s in specs])}; used "
                + ", ".join(f"{m} ({k} cases)" for m, k in chosen.items())
                + f"; e.g. {rows[-1].get('reason', '')}"))
    out.append(("tolerance tol", summarize([s.get("tol") for s in specs])))
    options = sorted({k for r in rows for k in (r.get("info") or {})
                      if k in ("lmax", "partial_waves", "sectors", "tail_modes",
                               "clamped_modes")})
    if options:
        out.append(("method details", "; ".join(
            f"{k} = {summarize([(r.get('info') or {}).get(k) for r in rows])}"
            for k in options)))
    out.append(("arealaw version", summarize([r.get("version") for r in rows])))
    stamps = [r["computed_at"] for r in rows if r.get("computed_at")]
    if stamps:
        out.append(("computed", f"{_date(min(stamps))} … {_date(max(stamps))} UTC, "
                                f"{sum(r.get('seconds') or 0 for r in rows):.3g} s in all"))
    return out


def _date(stamp):
    return datetime.datetime.fromtimestamp(stamp, datetime.timezone.utc).strftime(
        "%Y-%m-%d %H:%M")


def _fit_text(fit):
    window = (f"{fit.sizes.size} points, {fit.size if fit.size != 'x' else 'size'} from "
              f"{fit.sizes.min():.4g} to {fit.sizes.max():.4g}")
    against = {"bonds": "R = (couplings cut by the boundary)^(1/(d−1))",
               "chord": "ℓ_c = the conformal chord length (Calabrese & Cardy 2004)",
               "separation": "r = the distance between the centres of A and B",
               }.get(fit.size, "R = the swept size")
    p_value = "" if fit.p_value is None else f", p = {fit.p_value:.2g}"
    weights = "error bounds" + (" and ensemble standard errors in quadrature"
                                if getattr(fit, "ensemble", False) else "")
    text = (f"Model {fit.law}; size variable {against}; window {window}. Weights: {weights}; "
            f"against them alone χ² = {_num(fit.chi2, 4)} with {fit.dof} degrees of freedom, "
            f"χ²/dof = {_num(fit.chi2_red, 4)}{p_value}; model scatter "
            + (f"σ_m = {fit.model_sigma:.3g} added in quadrature, so the standard errors "
               "include it" if fit.model_sigma else "none") + ".")
    if fit.assessment:
        text += f" {fit.assessment[:1].upper() + fit.assessment[1:]}."
    return text


def _fit_table(fit):
    body = []
    for n, v, e in zip(fit.names, fit.coefficients, fit.stderr):
        drops = "; ".join(f"−{k}: {a:.6g}" for k, a, _ in fit.stability.get(n, []))
        body.append([n, float(v), float(e), fit.drift.get(n), drops or "—"])
    return _table(["coefficient", "value", "std. error", "largest drift",
                   "dropping smallest sizes"], body)


def _fit(rows, pair, powers, endpoints, size):
    if pair:
        return fit_decay_rows(rows)
    dim = rows[0].get("dim") or 1
    if size == "bonds" and dim < 2:
        size = "x"
    return fit_rows(rows, powers=powers, endpoints=endpoints, size=size)


def _rebuild(row):
    spec = row["spec"]
    if "radial" in spec["network"]:
        return None, None, None
    net = build_network(spec["network"])
    if net.lattice is None or net.is_infinite or net.ndim > 3:
        return None, None, None
    reg = build_region(net, spec["region"])
    reg_b = build_region(net, spec["region_b"]) if spec.get("region_b") else None
    return net, reg, reg_b


def mode_row(rows):
    """The case whose most entangled modes are drawn, and whether they are stored: the largest
    swept case that stored them (scenario key ``mode_profiles``), else the largest case small
    enough to recompute them (``MODE_PICTURE_LIMIT`` sites); (None, False) if there is none."""
    swept = [r for r in rows if r.get("x") is not None and not r.get("region_b")]
    stored = [r for r in swept if (r.get("mode_profiles") or {}).get("profiles")]
    if stored:
        return max(stored, key=lambda r: r["x"]), True
    small = [r for r in swept if isinstance(r.get("region_sites"), int)
             and r["region_sites"] <= MODE_PICTURE_LIMIT]
    return (max(small, key=lambda r: r["x"]), False) if small else (None, False)


def group_figures(name, rows, fit, *, measure="entropy"):
    """(slug, caption, make) for each figure of one group; ``make()`` builds the Figure (None
    when it cannot be drawn).  Shared by ``arealaw plot`` and the report."""
    from ._plots import decay_figure, energies_figure, mode_figure, region_figure, \
        scaling_figure
    out = []
    if fit is not None:
        if fit.size == "separation":
            out.append(("fit", f"I(A:B) against separation, {name}",
                        lambda: decay_figure(fit, title=name)))
        else:
            out.append(("fit", f"fit of {name}",
                        lambda: scaling_figure(fit, title=name, measure=measure)))
    swept = [r for r in rows if r.get("x") is not None] or rows
    largest = max(swept, key=lambda r: r.get("x") or 0)

    def region():
        net, reg, reg_b = _rebuild(largest)
        return None if net is None else region_figure(
            net, reg, region_b=reg_b, title=f"{largest['family']}: {largest['label']}")
    out.append(("region", "regions", region))
    mrow, stored = mode_row(rows)
    if mrow is not None:
        def modes():
            net, reg, _ = _rebuild(mrow)
            if net is None:
                return None
            if stored:
                nu, u = (mrow["mode_profiles"]["nu"][:2],
                         mrow["mode_profiles"]["profiles"][:2])
            else:  # not in the store: the region's blocks are computed again
                nu, u = region_modes(net, reg, count=2)
            return mode_figure(net, reg, nu, u, title=f"most entangled modes, {mrow['family']}: "
                                                      f"{mrow['label']}")
        how = ("read from the store" if stored else "recomputed from the correlator blocks; "
               "mode_profiles = 2 in the scenario's numerics stores them")
        out.append(("modes", f"most entangled modes of {mrow['label']} ({how})", modes))
    if largest.get("entanglement_energies"):
        out.append(("energies", "entanglement energies", lambda: energies_figure(
            largest["entanglement_energies"], title=f"{name}: {largest['label']}")))
    return out


def _figure_html(fig_dir, name, slug, caption, make, formats, written):
    from ._plots import save_figure
    try:
        fig = make()
    except (NotImplementedError, ValueError) as exc:  # e.g. a method without region blocks
        return f'<p class="note">no {html.escape(caption)}: {html.escape(str(exc))}</p>'
    if fig is None:
        return ""
    stem = None if fig_dir is None else fig_dir / f"{_slug(name)}_{slug}"
    png, paths = save_figure(fig, stem, formats)
    written += paths
    data = base64.b64encode(png).decode("ascii")
    return (f'<figure><img alt="{html.escape(caption)}" src="data:image/png;base64,{data}">'
            f'<figcaption class="note">{html.escape(caption)}</figcaption></figure>')


def _negativity_section(rows, pair, powers, endpoints, size):
    """E_N per case with its bound and, for a swept family, its fit (the entropy's law)."""
    what = "" if pair else " of the region against the rest of the lattice"
    parts = [f"<h3>Logarithmic negativity{what}</h3>",
             _table(["point", "x", "E_N", "E_N error bound"],
                    [[r["label"], r.get("x"), r["log_negativity"],
                      r["log_negativity_error_bound"]] for r in rows])]
    swept = [r for r in rows if r.get("x") is not None]
    if pair or len({r["x"] for r in swept}) < 3:
        return parts
    dim = rows[0].get("dim") or 1
    try:
        fit = fit_rows(swept, measure="log_negativity", powers=powers, endpoints=endpoints,
                       size="x" if size == "bonds" and dim < 2 else size)
    except ValueError as exc:
        return parts + [f'<p class="note">no fit of E_N: {html.escape(str(exc))}</p>']
    return parts + [f"<p>Fit of E_N: {html.escape(_fit_text(fit))}</p>", _fit_table(fit)]


def _ensemble_table(means, pair):
    key = "mutual_information" if pair else "entropy"
    body = [[m["label"], m.get("x"), m.get("realisations", 1), m.get(key),
             m.get(f"{key}_stderr"), m.get("error_bound" if not pair else
                                          "mutual_information_error_bound")]
            for m in means]
    what = "I(A:B)" if pair else "S"
    return _table(["point", "x", "realisations", f"mean {what}", "standard error",
                   "mean error bound"], body)


def write_report(store, path, *, title="", powers=(), endpoints=2, size="x", figures=None,
                 formats=("png", "svg"), progress=None):
    """Write the report of everything in ``store`` to ``path`` (HTML); returns the path.

    ``size`` ('x', 'bonds' or 'chord') is the size variable of the fits (see
    :func:`~arealaw.workflow._fits.fit_rows`); pairs with 3 or more separations get a power-law
    fit of their mutual information.  ``figures`` is a folder to write each figure into (in
    ``formats``) besides embedding it; ``progress(done, total)`` is called as groups finish.
    """
    from .._version import __version__
    rows = store.rows()
    if not rows:
        raise ValueError(f"the store {str(store.path)!r} holds no results; run a scenario first "
                         "(arealaw run SCENARIO.toml --store PATH)")
    runs = store.runs() if hasattr(store, "runs") else []
    title = title or next((r["title"] for r in reversed(runs) if r.get("title")), "")
    fig_dir = None if figures is None else Path(figures)
    if fig_dir is not None:
        fig_dir.mkdir(parents=True, exist_ok=True)
    stamp = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    means = average_realisations(rows)
    ensembles = sum(1 for m in means if m.get("realisations"))
    parts = [f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>"
             f"{html.escape(title or 'arealaw report')}</title><style>{STYLE}</style></head><body>",
             f"<h1>{html.escape(title or 'arealaw sweep report')}</h1>",
             f"<p class='note'>{len(rows)} stored cases"
             + (f" ({ensembles} ensemble points averaged over their realisations)"
                if ensembles else "")
             + f" from {html.escape(str(store.path))}; written {stamp} by arealaw "
               f"{html.escape(__version__)}. Each family lists what was computed and how; "
               "the scenario files are at the end.</p>"]
    written = []
    groups = _all_groups(rows)
    for i, (key, grp) in enumerate(groups.items()):
        name = group_name(key)
        pair = any(r.get("mutual_information") is not None for r in grp)
        parts.append(f"<h2>{'Pair' if pair else 'Family'}: {html.escape(name)}</h2>")
        parts.append(_table(["setting", "value"], _setup(grp), cls="setup"))
        fit = None
        swept = [r for r in grp if r.get("x") is not None]
        if swept and (not pair or len({r["x"] for r in swept}) >= 3):
            try:
                fit = _fit(swept, pair, powers, endpoints, size)
            except ValueError as exc:
                parts.append(f'<p class="note">no fit: {html.escape(str(exc))}</p>')
        if fit is not None:
            parts.append(f"<h3>Fit</h3><p>{html.escape(_fit_text(fit))}</p>")
            if fit.warning:
                parts.append(f'<p class="warning"><b>Warning:</b> {html.escape(fit.warning)}.'
                             "</p>")
            parts.append(_fit_table(fit))
            if fit.central_charge is not None:
                parts.append(f"<p>central charge c = {fit.central_charge:.5g} ± "
                             f"{fit.central_charge_stderr:.2g} ({fit.endpoints} endpoint(s))</p>")
        neg_rows = [r for r in grp if r.get("log_negativity") is not None]
        if neg_rows:
            parts += _negativity_section(neg_rows, pair, powers, endpoints, size)
        grp_means = average_realisations(grp)
        if pair or any(m.get("realisations") for m in grp_means):
            parts.append("<h3>" + ("Ensemble means" if any(m.get("realisations")
                                                           for m in grp_means)
                                   else "Mutual information") + "</h3>")
            parts.append(_ensemble_table(grp_means, pair))
        for slug, caption, make in group_figures(name, grp, fit):
            parts.append(_figure_html(fig_dir, name, slug, caption, make, formats, written))
        if progress is not None:
            progress(i + 1, len(groups))
    parts.append("<h2>All cases</h2>")
    parts.append(_table(["case", "family", "label", "sites", "entropy", "error bound", "method",
                         "seconds"],
                        [[r["case"], r["family"], r["label"], r["region_sites"], r["entropy"],
                          r["error_bound"], r["method"], r["seconds"]] for r in rows]))
    texts = {}
    for run in runs:
        if run.get("text"):
            texts.setdefault(run["text"], run)
    if texts:
        parts.append("<h2>Scenario files</h2>")
        for text, run in texts.items():
            parts.append(f"<p class='note'>{html.escape(run.get('source') or 'scenario')}, "
                         f"first run {_date(run['started'])} UTC</p>"
                         f"<pre>{html.escape(text)}</pre>")
    parts.append("</body></html>")
    with open(path, "w", encoding="utf-8") as f:
        f.write("\n".join(p for p in parts if p))
    return path
