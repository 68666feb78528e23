"""Disorder ensembles: stored realisations of one case (a swept ``seed``) as one averaged row.

A scenario that sweeps ``seed`` labels each case ``... seed=K`` (see
:mod:`arealaw.workflow._scenario`); the store keeps every realisation.  Averaging takes the
sample mean of each measure, its standard error s/√n (sample standard deviation, n − 1
denominator; common practice, no source), and the mean of the realisations' error bounds, which
bounds the numerical error of the mean (|mean(S̃) − mean(S)| ≤ mean |S̃_k − S_k|).
"""

import math
import re

import numpy as np

__all__ = ["average_realisations", "ensemble_sigma", "split_seed"]

#: Measures averaged over realisations, each with its error bound's key.
MEASURES = {"entropy": "error_bound", "mutual_information": "mutual_information_error_bound",
            "log_negativity": "log_negativity_error_bound",
            "entropy_b": None, "entropy_ab": None, "entropy_per_area": None}

_SEED = re.compile(r"(^|,\s*|\s\|\s)seed=([^,|\s]+)")


def split_seed(label):
    """(label without the ensemble's ``seed=K``, K as text or None).

    Examples
    --------
    >>> split_seed("ball=2 | mass=0.1, seed=7")
    ('ball=2 | mass=0.1', '7')
    >>> split_seed("ball=2 | seed=3")
    ('ball=2', '3')
    >>> split_seed("box=4")
    ('box=4', None)
    """
    m = _SEED.search(label)
    if m is None:
        return label, None
    keep = m.group(1) if m.group(1).strip() == "" and m.start() == 0 else ""
    rest = (label[:m.start()] + keep + label[m.end():]).strip()
    return rest.rstrip("|, ").strip() or "single", m.group(2)


def ensemble_sigma(bound, stderr):
    """Weight of an averaged value in a fit: its numerical bound and its standard error in
    quadrature (just the bound for a single case)."""
    return math.hypot(bound, stderr or 0.0)


def _mean(values):
    v = np.asarray(values, dtype=float)
    err = float(np.std(v, ddof=1) / math.sqrt(v.size)) if v.size > 1 else 0.0
    return float(np.mean(v)), err


def average_realisations(rows):
    """Rows with every ensemble (rows differing only in their seed) replaced by one mean row.

    The mean row keeps the first realisation's fields, with ``label`` without the seed,
    ``realisations`` (n), ``seeds``, ``cases`` (the stored case keys), each measure's mean and
    ``<measure>_stderr``, the mean error bounds, Rényi means with ``renyi_stderr``, and the
    summed ``seconds``.  Rows that are not part of an ensemble pass unchanged; rows already
    averaged are left alone.

    Examples
    --------
    >>> rows = [{"case": c, "family": "f", "lattice": "l", "label": f"ball=2 | seed={k}",
    ...          "x": 2, "entropy": s, "error_bound": 1e-9, "renyi": {}, "seconds": 1.0}
    ...         for c, k, s in (("a", 1, 1.0), ("b", 2, 1.2), ("c", 3, 1.4))]
    >>> (m,) = average_realisations(rows)
    >>> m["label"], m["realisations"], round(m["entropy"], 12), round(m["entropy_stderr"], 12)
    ('ball=2', 3, 1.2, 0.115470053838)
    """
    groups = {}
    for r in rows:
        label = r.get("label", "")
        base, seed = (label, None) if "realisations" in r else split_seed(label)
        key = (id(r),) if seed is None else (r.get("family"), r.get("lattice"), base, r.get("x"))
        groups.setdefault(key, []).append((r, base, seed))
    out = []
    for key, grp in groups.items():
        if len(key) == 1:
            out.append(grp[0][0])
            continue
        out.append(_mean_row([g[0] for g in grp], grp[0][1], [g[2] for g in grp]))
    return out


def _mean_row(grp, label, seeds):
    row = dict(grp[0])
    row.update(label=label, realisations=len(grp), seeds=seeds, cases=[r.get("case") for r in grp],
               seconds=sum(r.get("seconds") or 0.0 for r in grp), entanglement_energies=None)
    for name, bound in MEASURES.items():
        vals = [r.get(name) for r in grp]
        if any(v is None or isinstance(v, str) for v in vals):
            continue
        row[name], row[f"{name}_stderr"] = _mean(vals)
        if bound is not None and all(r.get(bound) is not None for r in grp):
            row[bound] = float(np.mean([r[bound] for r in grp]))
    orders = grp[0].get("renyi") or {}
    if orders and all(set(r.get("renyi") or {}) == set(orders) for r in grp):
        means = {k: _mean([r["renyi"][k] for r in grp]) for k in orders}
        row["renyi"] = {k: m for k, (m, _) in means.items()}
        row["renyi_stderr"] = {k: e for k, (_, e) in means.items()}
        row["renyi_error_bound"] = {k: float(np.mean([r["renyi_error_bound"][k] for r in grp]))
                                    for k in orders}
    return row
