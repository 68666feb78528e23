"""Scenario files (TOML): lattices, region families with swept parameters, measures → cases.

A scenario names its lattices, the region families to sweep on them, optional region pairs for
mutual information, and the numerics.  Lattice and region tables use exactly the keys of
:func:`arealaw.network._specs.network_from_spec` / ``region_from_spec`` (the keys of ``arealaw
entropy``); a radial lattice (Srednicki's partial waves) is ``radial = N`` (+ ``dim``, ``mass``)
with the region ``shells = n``.  Relative file names (``out``, ``potential``, ``kinetic``,
``sites``, ``mask``) are taken relative to the scenario file's folder.

What a family sweeps:

* any lattice or region value may be a *sweep table* instead of a value: ``{from = 2, to = 6,
  step = 1}`` (inclusive) or ``{values = [0.1, 0.2]}``; the sweeps of a family (its own keys,
  the keys of its lattice table, which it may also override, and its ``vars``) expand into
  their Cartesian product.  For ``box`` a swept number n means an n×…×n box;
* ``vars = {N = {values = [20, 40]}}`` declares swept (or fixed) variables that only serve
  expressions;
* a value written ``"= expression"`` is computed from the swept values (safe arithmetic, see
  :mod:`arealaw.workflow._expressions`), e.g. ``shape = ["= N"]`` and ``box = ["= N // 2"]``;
* ``tied = ["shape", "box"]`` (or a list of such lists) sweeps the named keys together, value
  by value, instead of as a product (their sweeps must have equal lengths);
* ``size = "= N // 2"`` is the fit's size variable; by default the first swept variable or
  region key, and for a pair the distance between the centres of A and B (``separation``;
  ``gap`` is the smallest site-to-site distance, both in lattice units);
* a swept ``seed`` (of disorder) is an *ensemble*, never a size: every realisation is stored,
  and results, fits and the report average over realisations with standard errors.
* ``temperature`` (of the Gibbs state, lattice units; 0 = the ground state) is a numerics key
  that a family or pair may also sweep, e.g. ``temperature = {values = [0, 0.1, 0.3]}``.

Layout::

    title = "area law of balls"
    out = "demo-out"                 # folder for the store, figures and report (optional)
    [numerics]                       # optional; a family or pair may override any of these
    method = "auto"
    tol = 1e-10
    renyi = [2]
    energies = 8                     # or "all": the whole entanglement spectrum of each case
    mode_profiles = 2                # store the site profiles of the 2 most entangled modes
    negativity = false               # true: also the logarithmic negativity E_N (a pair: A:B;
                                     # a family: the region against the rest of the lattice)
    [lattices.cube]
    shape = [12, 12, 12]
    mass = 0.1
    [[family]]
    name = "balls"
    lattice = "cube"                 # may be left out when there is one lattice
    ball = {from = 2, to = 5, step = 0.5}
    [[pair]]
    name = "two boxes"
    vars = {d = {from = 4, to = 8}}
    a = {box = [2, 2, 2], origin = [1, 5, 5]}
    b = {box = [2, 2, 2], origin = ["= 1 + d", 5, 5]}
"""

import itertools
import json
import math
import re
import sys
from pathlib import Path

import numpy as np

from .._arguments import allowed_hint, did_you_mean, unknown_name
from .._numerics import DEFAULT_TOL, check_tol
from ..correlators import check_temperature
from ..methods._registry import method_names
from ..network._specs import LATTICE_KEYS, MATRIX_KEYS, REGION_KINDS, REGION_OPTIONS
from ..spectrum._measures import normalize_order
from ._axes import MAX_CASES, _axes, _Entry, _fill, _label, _size_axis, _sweep_values
from ._cases import (RADIAL_REGION, Case, _jsonify, Scenario, build_network, build_region,
                     case_hash, region_separation)
from ._expressions import evaluate

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["Case", "Scenario", "build_network", "build_region", "case_hash", "load_scenario",
           "parse_scenario", "region_separation"]

TOP_KEYS = ("title", "out", "numerics", "lattices", "family", "pair")
#: ``temperature`` (of the Gibbs state; 0 = ground state) may also be a sweep in a family or pair.
NUMERICS_KEYS = ("method", "tol", "renyi", "energies", "mode_profiles", "temperature", "negativity")
#: Keys of measures not yet computed by sweeps: refused with this reason (none at present).
PLANNED_KEYS = {}
SWEEP_CONTROL_KEYS = ("size", "tied", "vars")
FAMILY_KEYS = ("name", "lattice") + SWEEP_CONTROL_KEYS + NUMERICS_KEYS
PAIR_KEYS = ("name", "lattice", "a", "b") + SWEEP_CONTROL_KEYS + NUMERICS_KEYS
SCENARIO_LATTICE_KEYS = LATTICE_KEYS + MATRIX_KEYS + ("radial", "dim")
SCENARIO_REGION_KEYS = REGION_KINDS + (RADIAL_REGION,)
#: Keys holding file names: relative names resolve against the scenario file's folder.
PATH_KEYS = ("potential", "kinetic", "sites", "mask")
#: ``energies = "all"``: store every entanglement energy of each case (the report then plots
#: spectra without recomputing them).
ALL_ENERGIES = 2**31 - 1


class _Where:
    """Finds the line of a key in the TOML text (tomllib does not keep positions)."""

    def __init__(self, text, source):
        self.lines = text.splitlines()
        self.source = source

    def line(self, key, header=None, nth=0):
        start, seen = 0, -1
        if header is not None:
            pat = re.compile(r"^\s*\[\[?\s*" + re.escape(header) + r"\s*\]\]?\s*(#.*)?$")
            for i, ln in enumerate(self.lines):
                if pat.match(ln):
                    seen += 1
                    if seen == nth:
                        start = i + 1
                        break
            else:
                return None
        if key is None:
            return start
        kpat = re.compile(r"^\s*" + re.escape(key) + r"\s*=")
        for i in range(start, len(self.lines)):
            if header is not None and i > start and self.lines[i].lstrip().startswith("["):
                break
            if kpat.match(self.lines[i]):
                return i + 1
        return None

    def error(self, msg, key=None, header=None, nth=0):
        ln = self.line(key, header, nth)
        where = f"{self.source or 'scenario'}, line {ln}: " if ln else (f"{self.source}: " if self.source
                                                          else "")
        return ValueError(where + msg)


def load_scenario(path):
    """Read and validate a scenario file; returns a :class:`Scenario`.

    Examples
    --------
    >>> from importlib.resources import files
    >>> sc = load_scenario(files("arealaw") / "data" / "demo.toml")
    >>> len(sc.cases) > 5
    True
    """
    p = Path(path)
    if not p.is_file():
        raise ValueError(f"scenario file {str(path)!r} does not exist")
    return parse_scenario(p.read_text(encoding="utf-8"), source=str(p), base=p.resolve().parent)


def parse_scenario(text, *, source="", base=None):
    """Parse and validate scenario TOML text into a :class:`Scenario` (see module docstring).

    ``base`` is the folder that relative file names (``out``, matrix, site and mask files) are
    taken against; None leaves them relative to the current directory.

    Examples
    --------
    >>> sc = parse_scenario('''
    ... [lattices.chain]
    ... shape = [40]
    ... mass = 0.1
    ... [[family]]
    ... box = {from = 2, to = 10, step = 4}
    ... ''')
    >>> [c.x for c in sc.cases]
    [2, 6, 10]
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ValueError(f"{source or 'scenario'}: not valid TOML: {exc}") from None
    w = _Where(text, source)
    unknown = sorted(set(data) - set(TOP_KEYS))
    if unknown:
        raise w.error(unknown_name("key", unknown[0], TOP_KEYS, "at top level"), unknown[0])
    title = data.get("title", "")
    out = data.get("out", "arealaw-out")
    for key, val in (("title", title), ("out", out)):
        if not isinstance(val, str):
            raise w.error(f"{key} = {val!r} must be a string", key)
    defaults = _numerics(data.get("numerics", {}), {"method": "auto", "tol": DEFAULT_TOL,
                                                    "renyi": [], "energies": 0, "mode_profiles": 0,
                                                    "temperature": 0.0, "negativity": False},
                         w, "numerics")
    lattices = data.get("lattices")
    if not isinstance(lattices, dict) or not lattices:
        raise w.error("no lattice given: add a table [lattices.NAME] with shape = [...] "
                      "(and mass, boundary, ...)")
    for name, spec in lattices.items():
        header = f"lattices.{name}"
        if not isinstance(spec, dict):
            raise w.error(f"lattices.{name} must be a table of lattice keys", name)
        for key in spec:
            if key in PLANNED_KEYS:
                raise w.error(f"{key}: {PLANNED_KEYS[key]}", key, header)
        unknown = sorted(set(spec) - set(SCENARIO_LATTICE_KEYS))
        if unknown:
            raise w.error(unknown_name("lattice key", unknown[0], SCENARIO_LATTICE_KEYS,
                                       f"in [{header}]"), unknown[0], header)
    families, pairs = data.get("family", []), data.get("pair", [])
    if not isinstance(families, list) or not isinstance(pairs, list):
        raise w.error("family and pair must be arrays of tables: write [[family]] / [[pair]]")
    if not families and not pairs:
        raise w.error("nothing to compute: add a [[family]] (e.g. ball = {from = 2, to = 6}) "
                      "or a [[pair]]")
    base = None if base is None else Path(base)
    if base is not None and not Path(out).is_absolute():
        out = str(base / out)
    cases, networks = [], {}
    named = {}
    for kind, tables in (("family", families), ("pair", pairs)):
        for i, fam in enumerate(tables):
            name = fam.get("name") if isinstance(fam, dict) else None
            if name is not None and name in named:
                # results, fits and figures are grouped by name: two tables would be mixed
                raise w.error(f"{kind} name {name!r} is already used by {named[name]}; give "
                              "each [[family]] and [[pair]] its own name", "name", kind, i)
            if name is not None:
                named[name] = f"{kind} {i + 1}"
    for i, fam in enumerate(families):
        cases += _family_cases(fam, i, "family", lattices, defaults, w, base, networks)
    for i, pair in enumerate(pairs):
        cases += _family_cases(pair, i, "pair", lattices, defaults, w, base, networks)
    if len(cases) > MAX_CASES:
        raise w.error(f"the scenario expands into {len(cases)} cases; at most {MAX_CASES}")
    keys = {}
    for c in cases:
        if c.key in keys:
            raise w.error(f"case {c.label!r} of {c.family!r} repeats case {keys[c.key]!r} "
                          "(same lattice, region and measures); remove the duplicate")
        keys[c.key] = f"{c.family}: {c.label}"
    return Scenario(title=title, out=out, cases=cases, source=source, text=text)


def _numerics(spec, base, w, header, nth=0, allowed=NUMERICS_KEYS):
    if not isinstance(spec, dict):
        raise w.error(f"{header} must be a table with keys {', '.join(allowed)}", header)
    out = dict(base)
    for key, val in spec.items():
        if key in PLANNED_KEYS:
            raise w.error(f"{key}: {PLANNED_KEYS[key]}", key, header, nth)
        if key not in NUMERICS_KEYS:
            if key in allowed:
                continue
            raise w.error(unknown_name("key", key, allowed, f"in [{header}]"),
                          key, header, nth)
        if key == "method" and val not in method_names():
            raise w.error(f"method = {val!r} is not known" + allowed_hint(val, method_names()),
                          key, header, nth)
        if key == "tol":
            try:
                check_tol(val)
            except ValueError as exc:
                raise w.error(str(exc).replace("tol=", "tol = ", 1), key, header, nth) from None
        if key == "temperature":
            if isinstance(val, dict) and header != "numerics":
                continue  # a sweep: each value is checked with its case
            try:
                val = check_temperature(val)
            except ValueError as exc:
                raise w.error(str(exc).replace("temperature=", "temperature = ", 1), key,
                              header, nth) from None
        if key == "energies" and val == "all":
            val = ALL_ENERGIES
        if key == "energies" and (isinstance(val, bool) or not isinstance(val, int) or val < 0):
            raise w.error(f"energies = {val!r} must be a whole number >= 0 or \"all\" (the "
                          "whole entanglement spectrum, stored with each case)", key, header,
                          nth)
        if key == "mode_profiles" and (isinstance(val, bool) or not isinstance(val, int)
                                       or val < 0):
            raise w.error(f"mode_profiles = {val!r} must be a whole number >= 0 (how many of "
                          "the most entangled modes to store the site profiles of)", key,
                          header, nth)
        if key == "negativity" and not isinstance(val, bool):
            raise w.error(f"negativity = {val!r} must be true or false", key, header, nth)
        if key == "renyi":
            vals = val if isinstance(val, list) else [val]
            try:
                val = [normalize_order(v) for v in vals]
            except ValueError as exc:
                raise w.error(f"renyi = {spec[key]!r}: {exc}; allowed: numbers > 0 or \"inf\"",
                              key, header, nth) from None
        out[key] = float(val) if key == "tol" else val
    return out




def _entries(fam, kind, lattice_spec, w, header, nth, name):
    """The family's keys (vars, region keys or a/b, lattice overrides, lattice table)."""
    region_keys = set(SCENARIO_REGION_KEYS) | {k for v in REGION_OPTIONS.values() for k in v}
    allowed = PAIR_KEYS if kind == "pair" else FAMILY_KEYS
    for key in fam:
        if key in PLANNED_KEYS:
            raise w.error(f"{key}: {PLANNED_KEYS[key]}", key, header, nth)
        if key in allowed or key in SCENARIO_LATTICE_KEYS or (kind == "family"
                                                                and key in region_keys):
            continue
        if kind == "pair":
            hint = did_you_mean(key, PAIR_KEYS + tuple(SCENARIO_LATTICE_KEYS))
            raise w.error(f"[[pair]] {name!r}: key {key!r} is not allowed{hint or ';'} allowed: "
                          f"{', '.join(PAIR_KEYS)} (a and b are region tables) or a lattice "
                          "key", key, header, nth)
        hint = did_you_mean(key, FAMILY_KEYS + tuple(SCENARIO_REGION_KEYS) + tuple(region_keys)
                            + tuple(SCENARIO_LATTICE_KEYS))
        raise w.error(f"unknown key {key!r} in [[family]] {name!r}{hint or ';'} allowed: "
                      f"{', '.join(FAMILY_KEYS + SCENARIO_REGION_KEYS)}, origin, center, or a "
                      "lattice key", key, header, nth)
    if kind == "pair" and ("a" not in fam or "b" not in fam):
        bad = "a" if "a" not in fam else "b"
        raise w.error(f"[[pair]] {name!r}: key {bad!r} is missing; allowed: "
                      f"{', '.join(PAIR_KEYS)} (a and b are region tables)", None, header, nth)
    entries = []
    variables = fam.get("vars", {})
    if not isinstance(variables, dict):
        raise w.error(f"vars = {variables!r} must be a table of names, e.g. vars = {{N = "
                      "{values = [20, 40]}}", "vars", header, nth)
    for key, val in variables.items():
        if not key.isidentifier() or key in SCENARIO_LATTICE_KEYS or key in region_keys:
            raise w.error(f"vars: {key!r} must be a plain name that is not a lattice or region "
                          "key", "vars", header, nth)
        entries.append(_Entry(key, "var", key, val))
    if kind == "pair":
        for side in "ab":
            if not isinstance(fam[side], dict):
                raise w.error(f"{side} = {fam[side]!r} must be a region table, e.g. "
                              "{box = [2, 2], origin = [0, 0]}", side, header, nth)
            entries += [_Entry(f"{side}.{k}", side, k, v) for k, v in fam[side].items()]
    else:
        entries += [_Entry(k, "region", k, v) for k, v in fam.items() if k in region_keys]
    entries += [_Entry(k, "override", k, v) for k, v in fam.items() if k in SCENARIO_LATTICE_KEYS]
    if isinstance(fam.get("temperature"), dict):   # a temperature sweep is an axis like any other
        entries.append(_Entry("temperature", "state", "temperature", fam["temperature"]))
    entries += [_Entry(k, "lattice", k, v) for k, v in lattice_spec.items() if k not in fam]
    return entries


def _resolve_paths(spec, base):
    if base is None:
        return spec
    return {k: (str(base / v) if k in PATH_KEYS and isinstance(v, str)
                and not Path(v).is_absolute() else v) for k, v in spec.items()}


def _family_cases(fam, nth, kind, lattices, defaults, w, base, networks):
    header = kind
    if not isinstance(fam, dict):
        raise w.error(f"each [[{kind}]] must be a table", None, header, nth)
    name = fam.get("name", f"{kind} {nth + 1}")
    lattice = fam.get("lattice")
    if lattice is None:
        if len(lattices) != 1:
            raise w.error(f"{kind} {name!r} must name its lattice (lattice = one of "
                          f"{', '.join(map(repr, lattices))})", None, header, nth)
        lattice = next(iter(lattices))
    if lattice not in lattices:
        hint = allowed_hint(lattice, list(lattices), quoted=True)
        raise w.error(f"lattice = {lattice!r} is not defined{hint}", "lattice", header, nth)
    lat_header = f"lattices.{lattice}"
    num = _numerics({k: v for k, v in fam.items() if k in NUMERICS_KEYS}, defaults, w, header,
                    nth)
    entries = _entries(fam, kind, lattices[lattice], w, header, nth, name)
    lat_order = {k: i for i, k in enumerate(lattices[lattice])}

    def where(entry):  # the table an entry was written in (for line numbers)
        return (lat_header, 0) if entry.where == "lattice" else (header, nth)

    for e in entries:
        if isinstance(e.raw, dict):
            e.values = _sweep_values(e.name, e.raw, w, *where(e))
    size = fam.get("size")
    if size is not None and not isinstance(size, str):
        raise w.error(f"size = {size!r} must be an expression string, e.g. size = \"= N // 2\"",
                      "size", header, nth)
    axes = _axes(entries, fam.get("tied", []), w, header, nth)
    total = math.prod(len(axis[0].values) for axis in axes)
    if total > MAX_CASES:
        raise w.error(f"{kind} {name!r} expands into {total} cases; at most {MAX_CASES}", None,
                      header, nth)
    x_axes = _size_axis(axes, size, kind)
    fixed = {e.name: e.raw for e in entries if e.values is None and not e.is_expression}
    cases = []
    for combo in itertools.product(*[list(zip(*[e.values for e in axis])) for axis in axes]):
        point = {e.name: v for axis, vals in zip(axes, combo) for e, v in zip(axis, vals)}
        names = {k: v for k, v in {**fixed, **point}.items() if k.isidentifier()}
        values = {}
        for e in entries:
            values[e.name] = (point[e.name] if e.values is not None
                              else _fill(e, names, w, *where(e)) if e.is_expression
                              else e.raw)
        net_spec = _resolve_paths({e.key: values[e.name] for e in sorted(
            (e for e in entries if e.where in ("override", "lattice")),
            key=lambda e: lat_order.get(e.key, len(lat_order)))}, base)
        network = _network_checked(net_spec, entries, networks, w, header, nth, lat_header)
        if kind == "pair":
            spec_a = _resolve_paths({e.key: values[e.name] for e in entries if e.where == "a"},
                                    base)
            spec_b = _resolve_paths({e.key: values[e.name] for e in entries if e.where == "b"},
                                    base)
            region, reg_a = _region_spec(spec_a, network, w, header, nth, "a")
            region_b, reg_b = _region_spec(spec_b, network, w, header, nth, "b")
            shared = np.intersect1d(reg_a.indices, reg_b.indices)
            if shared.size:
                what = "the logarithmic negativity" if num["negativity"] else "mutual information"
                raise w.error(f"[[pair]] {name!r}: regions a and b share {shared.size} sites; "
                              f"{what} needs disjoint regions", "b", header, nth)
            sep, gap = region_separation(network, reg_a, reg_b)
            names.update({"separation": sep, "gap": gap} if sep is not None else {})
            default_x = sep
        else:
            region, _ = _region_spec(_resolve_paths({e.key: values[e.name] for e in entries
                                                     if e.where == "region"}, base),
                                     network, w, header, nth)
            region_b = None
            first = next((e for i in x_axes for e in axes[i]
                          if e.where in ("var", "region")), None)
            default_x = point[first.name] if first is not None else None
        if size is not None:
            text = "=" + size.lstrip().lstrip("=")
            try:
                x = evaluate(text, names)
            except ValueError as exc:
                raise w.error(f"size = {size!r}: {exc}", "size", header, nth) from None
        else:
            x = default_x
        if isinstance(x, bool) or not isinstance(x, (int, float)):
            x = None
        label = _label(axes, x_axes, point, kind)
        temperature = values.get("temperature", num["temperature"])
        try:
            temperature = check_temperature(temperature)
        except ValueError as exc:
            raise w.error(str(exc).replace("temperature=", "temperature = ", 1), "temperature",
                          header, nth) from None
        if num["mode_profiles"] and (temperature or "radial" in net_spec):
            raise w.error(f"mode_profiles = {num['mode_profiles']} stores ground-state site "
                          "profiles: leave it out of " + ("thermal cases" if temperature else
                                       "a radial lattice (its regions are shells)"),
                          "mode_profiles",
                          header, nth)
        cases.append(Case(network=_canon(net_spec), region=_canon(region),
                          region_b=_canon(region_b) if region_b else None,
                          renyi=list(num["renyi"]), energies=int(num["energies"]),
                          mode_profiles=int(num["mode_profiles"]),
                          method=num["method"], tol=float(num["tol"]),
                          temperature=temperature, family=name,
                          label=label, x=x, lattice=lattice,
                          negativity=bool(num["negativity"])))
    return cases


def _network_checked(spec, entries, cache, w, header, nth, lat_header):
    key = json.dumps(spec, sort_keys=True, default=str)
    if key in cache:
        return cache[key]
    try:
        net = build_network(spec)
    except (ValueError, TypeError) as exc:
        bad = next((e for e in entries if e.where in ("override", "lattice")
                    and (repr(e.raw) in str(exc) or e.key in str(exc))), None)
        hdr, n = (lat_header, 0) if bad is None or bad.where == "lattice" else (header, nth)
        raise w.error(f"[{hdr}]: {exc}", bad.key if bad else None, hdr, n) from None
    cache[key] = net
    while len(cache) > 64:  # keep memory flat for large ensembles
        cache.pop(next(iter(cache)))
    return net


def _region_spec(spec, network, w, header, nth, key=None):
    spec = dict(spec)
    if isinstance(spec.get("box"), (int, float)) and not isinstance(spec.get("box"), bool):
        size = spec["box"]  # a fraction is refused by box(), not truncated here
        spec["box"] = [int(size) if float(size).is_integer() else size] * network.ndim
    kinds = [k for k in SCENARIO_REGION_KEYS if k in spec]
    if len(kinds) != 1:
        raise w.error(f"{'region ' + key if key else header} needs exactly one region kind; "
                      f"allowed: {', '.join(SCENARIO_REGION_KEYS)}; got "
                      f"{', '.join(kinds) if kinds else 'none'}", key, header, nth)
    try:
        region = build_region(network, spec)
    except (ValueError, TypeError) as exc:
        given = ", ".join(f"{k} = {v!r}" for k, v in spec.items())
        raise w.error(f"{'region ' + key if key else header}: {exc} (given: {given})",
                      key or kinds[0], header, nth) from None
    if region.size == 0:
        raise w.error(f"region {spec!r} holds no site of the lattice; make it larger or move it",
                      key or kinds[0], header, nth)
    return spec, region


def _canon(spec):
    """Plain JSON-able values (TOML already gives those; inf stays a string)."""
    return json.loads(json.dumps(spec, default=_jsonify))
