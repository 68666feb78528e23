"""Sweep axes of a scenario family: swept values, tied keys, expressions, case labels.

Split from :mod:`._scenario` (which reads the TOML and reports positions through the ``w``
argument these helpers take) to keep each module to one concept.
"""

import json
import math
from dataclasses import dataclass

from ._expressions import evaluate, expression_names, is_expression

__all__ = ["ENSEMBLE_KEY", "MAX_CASES", "SWEEP_KEYS"]

#: The key whose sweep is an ensemble of disorder realisations.
ENSEMBLE_KEY = "seed"
SWEEP_KEYS = ("from", "to", "step", "values")
MAX_CASES = 100000


def _sweep_values(key, val, w, header, nth):
    unknown = sorted(set(val) - set(SWEEP_KEYS))
    if unknown:
        raise w.error(f"{key} = {val!r}: unknown sweep key {unknown[0]!r}; a sweep is "
                      "{from = A, to = B, step = C} or {values = [...]}", key, header, nth)
    if "values" in val:
        if set(val) != {"values"} or not isinstance(val["values"], list) or not val["values"]:
            raise w.error(f"{key} = {val!r}: values must be a non-empty list and stand alone",
                          key, header, nth)
        return list(val["values"])
    if "from" not in val or "to" not in val:
        raise w.error(f"{key} = {val!r}: a range sweep needs from and to (step optional, "
                      "default 1)", key, header, nth)
    a, b, s = val["from"], val["to"], val.get("step", 1)
    if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (a, b, s)) \
            or s <= 0 or b < a:
        raise w.error(f"{key} = {val!r}: from <= to and step > 0 must be numbers", key, header,
                      nth)
    n = int(math.floor((b - a) / s + 1e-9)) + 1
    if n > MAX_CASES:
        raise w.error(f"{key} = {val!r} gives {n} values; at most {MAX_CASES}", key, header, nth)
    vals = [a + i * s for i in range(n)]
    if all(isinstance(v, int) for v in (a, s)):
        return [int(v) for v in vals]
    return [round(v, 12) for v in vals]


@dataclass
class _Entry:
    """One key of a family after merging its lattice table: where it goes and how it varies."""

    name: str          # the name in labels, ``tied`` and expressions ("b.origin" inside a pair)
    where: str         # "var", "region", "a", "b", "override" (family lattice key), "lattice"
    key: str           # the key inside its spec
    raw: object
    values: list = None  # a sweep's values; None for a fixed value or an expression

    @property
    def is_expression(self):
        return is_expression(self.raw) or (isinstance(self.raw, list)
                                           and any(is_expression(v) for v in self.raw))


def _fill(entry, names, w, header, nth):
    """The value of an expression entry (an expression, or a list holding some)."""
    try:
        if isinstance(entry.raw, list):
            return [evaluate(v, names) if is_expression(v) else v for v in entry.raw]
        return evaluate(entry.raw, names)
    except ValueError as exc:
        raise w.error(f"{entry.name} = {entry.raw!r}: {exc}", entry.key, header, nth) from None


def _axes(entries, tied, w, header, nth):
    """Groups of entries swept together: each tied group is one axis, every other sweep its
    own; the ensemble key comes last."""
    swept = {e.name: e for e in entries if e.values is not None}
    if isinstance(tied, list) and tied and all(isinstance(t, str) for t in tied):
        tied = [tied]
    if not isinstance(tied, list) or not all(isinstance(g, list) and len(g) >= 2
                                             and all(isinstance(n, str) for n in g)
                                             for g in tied):
        raise w.error(f"tied = {tied!r} must list two or more swept keys, e.g. tied = "
                      "[\"shape\", \"box\"], or a list of such lists", "tied", header, nth)
    group_of = {}
    for g in tied:
        for n in g:
            if n not in swept:
                raise w.error(f"tied: {n!r} is not swept in this family; swept: "
                              f"{', '.join(swept) or 'nothing'}", "tied", header, nth)
            if n == ENSEMBLE_KEY:
                raise w.error("tied: seed sweeps an ensemble of disorder realisations and "
                              "cannot be tied to another key", "tied", header, nth)
            if n in group_of:
                raise w.error(f"tied: {n!r} appears in two groups", "tied", header, nth)
            group_of[n] = tuple(g)
        lengths = {n: len(swept[n].values) for n in g}
        if len(set(lengths.values())) != 1:
            raise w.error("tied keys must sweep the same number of values; got "
                          + ", ".join(f"{n}: {k}" for n, k in lengths.items()), "tied", header,
                          nth)
    axes, seen = [], set()
    for e in entries:
        if e.values is None or e.name in seen:
            continue
        group = group_of.get(e.name, (e.name,))
        seen.update(group)
        axes.append([swept[n] for n in group])
    axes.sort(key=lambda axis: axis[0].name == ENSEMBLE_KEY)
    return axes


def _size_axis(axes, size, kind):
    """Index of the axis that holds the fit's size variable (None: no such axis)."""
    if size is not None:
        used = expression_names("=" + size.lstrip().lstrip("="))
        geometric = kind == "pair" and bool(used & {"separation", "gap"})
        return [i for i, axis in enumerate(axes)
                if any(e.name in used or geometric and e.where in ("var", "a", "b")
                       for e in axis)]
    if kind == "pair":
        return [i for i, axis in enumerate(axes) if any(e.where in ("var", "a", "b")
                                                        for e in axis)]
    for i, axis in enumerate(axes):
        if any(e.where in ("var", "region") for e in axis) and axis[0].name != ENSEMBLE_KEY:
            return [i]
    return []


def _label(axes, x_axes, point, kind):
    """``size keys | other keys, seed=K``: the part after `` | `` names the fit group."""
    def show(axis):
        return [f"{e.name}={_short(point[e.name])}" for e in axis]
    first = [s for i in x_axes for s in show(axes[i])]
    rest = [s for i, axis in enumerate(axes) if i not in x_axes for s in show(axis)]
    label = ", ".join(first) or ("A:B" if kind == "pair" else "single")
    return label + (" | " + ", ".join(rest) if rest else "")


def _short(v):
    return json.dumps(v, separators=(",", ":")) if isinstance(v, (list, dict)) else str(v)
