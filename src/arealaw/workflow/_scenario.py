"""Scenario files (TOML): lattices, region families with swept parameters, measures → cases.

A scenario names its lattices, the region families to sweep on them, optional region pairs for
mutual information, and the numerics.  Lattice and region tables use exactly the keys of
:func:`arealaw.network._specs.network_from_spec` / ``region_from_spec`` (the keys of ``arealaw entropy``).
Any lattice or region value may be a *sweep table* instead of a value:
``{from = 2, to = 6, step = 1}`` (inclusive) or ``{values = [0.1, 0.2]}``; families expand
into the Cartesian product of their sweeps.  For ``box`` a swept number n means an n×…×n box.

Layout::

    title = "area law of balls"
    out = "demo-out"                 # folder for the store, figures and report (optional)
    [numerics]                       # optional; a family or pair may override any of these
    method = "auto"
    tol = 1e-10
    renyi = [2]
    energies = 8
    [lattices.cube]
    shape = [12, 12, 12]
    mass = 0.1
    [[family]]
    name = "balls"
    lattice = "cube"                 # may be left out when there is one lattice
    ball = {from = 2, to = 5, step = 0.5}
    [[pair]]
    name = "two boxes"
    a = {box = [2, 2, 2], origin = [1, 5, 5]}
    b = {box = [2, 2, 2], origin = [7, 5, 5]}
"""

import hashlib
import itertools
import json
import math
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .._numerics import DEFAULT_TOL, check_tol
from ..spectrum._measures import normalize_order, order_label
from ..methods._registry import method_names
from ..network._specs import LATTICE_KEYS, MATRIX_KEYS, REGION_KINDS, REGION_OPTIONS, network_from_spec, \
    region_from_spec

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["Case", "Scenario", "case_hash", "load_scenario", "parse_scenario"]

TOP_KEYS = ("title", "out", "numerics", "lattices", "family", "pair")
NUMERICS_KEYS = ("method", "tol", "renyi", "energies")
FAMILY_KEYS = ("name", "lattice") + NUMERICS_KEYS
PAIR_KEYS = ("name", "lattice", "a", "b") + NUMERICS_KEYS
SWEEP_KEYS = ("from", "to", "step", "values")
MAX_CASES = 100000


def _version():
    from .. import __version__
    return __version__


@dataclass
class Case:
    """One computation: a network spec, a region spec (and optionally a second region), measures.

    ``key`` is the content hash over everything that determines the numbers (network and region
    specs, measures, method options, package version); ``family``, ``label`` and ``x`` (the swept
    value, e.g. the ball radius) only describe it.
    """

    network: dict
    region: dict
    region_b: dict = None
    renyi: list = field(default_factory=list)
    energies: int = 0
    method: str = "auto"
    tol: float = DEFAULT_TOL
    family: str = ""
    label: str = ""
    x: float = None
    lattice: str = ""
    version: str = field(default_factory=_version)

    @property
    def key(self):
        return case_hash(self)

    def content(self):
        """The dict the content hash is taken over."""
        return {"network": self.network, "region": self.region, "region_b": self.region_b,
                "renyi": [order_label(n) for n in self.renyi], "energies": self.energies,
                "method": self.method, "tol": self.tol, "version": self.version}

    def to_dict(self):
        return {"case": self.key, "family": self.family, "label": self.label, "x": self.x,
                "lattice": self.lattice, **self.content()}


def case_hash(case):
    """SHA-256 (first 16 hex digits) of the case's canonical JSON content.

    Examples
    --------
    >>> a = Case({"shape": [8], "mass": 0.5}, {"box": [4]})
    >>> b = Case({"mass": 0.5, "shape": [8]}, {"box": [4]}, family="other name")
    >>> case_hash(a) == case_hash(b), len(case_hash(a))
    (True, 16)
    """
    text = json.dumps(case.content(), sort_keys=True, separators=(",", ":"), default=_jsonify)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def _jsonify(v):
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (np.floating,)):
        return float(v)
    if isinstance(v, float) and math.isinf(v):
        return "inf"
    raise TypeError(f"cannot hash {v!r}")


@dataclass
class Scenario:
    """A parsed scenario: its title, output folder and expanded cases."""

    title: str
    out: str
    cases: list
    source: str = ""


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
        where = f"{self.source}, line {ln}: " if ln else (f"{self.source}: " if self.source
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
    return parse_scenario(p.read_text(encoding="utf-8"), source=str(p))


def parse_scenario(text, *, source=""):
    """Parse and validate scenario TOML text into a :class:`Scenario` (see module docstring).

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
        raise w.error(f"unknown key {unknown[0]!r}; allowed at top level: "
                      f"{', '.join(TOP_KEYS)}", unknown[0])
    title = data.get("title", "")
    out = data.get("out", "arealaw-out")
    for key, val in (("title", title), ("out", out)):
        if not isinstance(val, str):
            raise w.error(f"{key} = {val!r} must be a string", key)
    defaults = _numerics(data.get("numerics", {}), {"method": "auto", "tol": DEFAULT_TOL,
                                                    "renyi": [], "energies": 0}, w, "numerics")
    lattices = data.get("lattices")
    if not isinstance(lattices, dict) or not lattices:
        raise w.error("no lattice given: add a table [lattices.NAME] with shape = [...] "
                      "(and mass, boundary, ...)")
    nets = {}
    for name, spec in lattices.items():
        header = f"lattices.{name}"
        if not isinstance(spec, dict):
            raise w.error(f"lattices.{name} must be a table of lattice keys", name)
        unknown = sorted(set(spec) - set(LATTICE_KEYS) - set(MATRIX_KEYS))
        if unknown:
            raise w.error(f"unknown lattice key {unknown[0]!r} in [{header}]; allowed: "
                          f"{', '.join(LATTICE_KEYS + MATRIX_KEYS)}", unknown[0], header)
        nets[name] = [(vals, _check_network(vals, w, header))
                      for vals, _ in _expand(spec, w, header)]
    families, pairs = data.get("family", []), data.get("pair", [])
    if not isinstance(families, list) or not isinstance(pairs, list):
        raise w.error("family and pair must be arrays of tables: write [[family]] / [[pair]]")
    if not families and not pairs:
        raise w.error("nothing to compute: add a [[family]] (e.g. ball = {from = 2, to = 6}) "
                      "or a [[pair]]")
    cases = []
    for i, fam in enumerate(families):
        cases += _family_cases(fam, i, "family", nets, defaults, w)
    for i, pair in enumerate(pairs):
        cases += _family_cases(pair, i, "pair", nets, defaults, w)
    keys = {}
    for c in cases:
        if c.key in keys:
            raise w.error(f"case {c.label!r} of {c.family!r} repeats case {keys[c.key]!r} "
                          "(same lattice, region and measures); remove the duplicate")
        keys[c.key] = f"{c.family}: {c.label}"
    return Scenario(title=title, out=out, cases=cases, source=source)


def _numerics(spec, base, w, header, nth=0, allowed=NUMERICS_KEYS):
    if not isinstance(spec, dict):
        raise w.error(f"{header} must be a table with keys {', '.join(allowed)}", header)
    out = dict(base)
    for key, val in spec.items():
        if key not in NUMERICS_KEYS:
            if key in allowed:
                continue
            raise w.error(f"unknown key {key!r} in [{header}]; allowed: {', '.join(allowed)}",
                          key, header, nth)
        if key == "method" and val not in method_names():
            raise w.error(f"method = {val!r} is not known; allowed: "
                          f"{', '.join(method_names())}", key, header, nth)
        if key == "tol":
            try:
                check_tol(val)
            except ValueError as exc:
                raise w.error(str(exc).replace("tol=", "tol = ", 1), key, header, nth) from None
        if key == "energies" and (isinstance(val, bool) or not isinstance(val, int) or val < 0):
            raise w.error(f"energies = {val!r} must be a whole number >= 0", key, header, nth)
        if key == "renyi":
            vals = val if isinstance(val, list) else [val]
            try:
                val = [normalize_order(v) for v in vals]
            except ValueError as exc:
                raise w.error(f"renyi = {spec[key]!r}: {exc}; allowed: numbers > 0 or \"inf\"",
                              key, header, nth) from None
        out[key] = float(val) if key == "tol" else val
    return out


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


def _expand(spec, w, header, nth=0):
    """Cartesian product over the sweep tables of ``spec``: [(values dict, swept dict), ...]."""
    fixed, swept = {}, {}
    for key, val in spec.items():
        if isinstance(val, dict) and key not in ("a", "b"):
            swept[key] = _sweep_values(key, val, w, header, nth)
        else:
            fixed[key] = val
    combos = []
    for vals in itertools.product(*swept.values()):
        point = dict(zip(swept, vals))
        combos.append(({**fixed, **point}, point))
    return combos


def _check_network(spec, w, header):
    try:
        return network_from_spec(spec)
    except (ValueError, TypeError) as exc:
        key = next((k for k in spec if repr(spec[k]) in str(exc) or k in str(exc)), None)
        raise w.error(f"[{header}]: {exc}", key, header) from None


def _region_spec(spec, network, w, header, nth, key=None):
    spec = dict(spec)
    if isinstance(spec.get("box"), (int, float)) and not isinstance(spec.get("box"), bool):
        spec["box"] = [int(spec["box"])] * network.ndim
    kinds = [k for k in REGION_KINDS if k in spec]
    if len(kinds) != 1:
        raise w.error(f"{'region ' + key if key else header} needs exactly one region kind; "
                      f"allowed: {', '.join(REGION_KINDS)}; got "
                      f"{', '.join(kinds) if kinds else 'none'}", key, header, nth)
    try:
        region = region_from_spec(network, spec)
    except (ValueError, TypeError) as exc:
        given = ", ".join(f"{k} = {v!r}" for k, v in spec.items())
        raise w.error(f"{'region ' + key if key else header}: {exc} (given: {given})",
                      key or kinds[0], header, nth) from None
    if region.size == 0:
        raise w.error(f"region {spec!r} holds no site of the lattice; make it larger or move it",
                      key or kinds[0], header, nth)
    return spec


def _family_cases(fam, nth, kind, nets, defaults, w):
    header = kind
    if not isinstance(fam, dict):
        raise w.error(f"each [[{kind}]] must be a table", None, header, nth)
    name = fam.get("name", f"{kind} {nth + 1}")
    lattice = fam.get("lattice")
    if lattice is None:
        if len(nets) != 1:
            raise w.error(f"{kind} {name!r} must name its lattice (lattice = one of "
                          f"{', '.join(map(repr, nets))})", None, header, nth)
        lattice = next(iter(nets))
    if lattice not in nets:
        raise w.error(f"lattice = {lattice!r} is not defined; allowed: "
                      f"{', '.join(map(repr, nets))}", "lattice", header, nth)
    allowed = (PAIR_KEYS if kind == "pair" else FAMILY_KEYS)
    region_keys = set(REGION_KINDS) | {k for v in REGION_OPTIONS.values() for k in v}
    rest = {k: v for k, v in fam.items() if k not in allowed}
    if kind == "pair":
        if "a" not in fam or "b" not in fam or rest:
            bad = sorted(rest)[0] if rest else ("a" if "a" not in fam else "b")
            raise w.error(f"[[pair]] {name!r}: key {bad!r} is missing or not allowed; allowed: "
                          f"{', '.join(PAIR_KEYS)} (a and b are region tables)", bad, header,
                          nth)
    else:
        unknown = sorted(set(rest) - region_keys)
        if unknown:
            raise w.error(f"unknown key {unknown[0]!r} in [[family]] {name!r}; allowed: "
                          f"{', '.join(FAMILY_KEYS + REGION_KINDS)}, origin, center",
                          unknown[0], header, nth)
    num = _numerics({k: v for k, v in fam.items() if k in NUMERICS_KEYS}, defaults, w, header,
                    nth)
    cases = []
    for net_spec, network in nets[lattice]:
        for spec, point in _expand(rest if kind == "family" else {k: fam[k] for k in "ab"},
                                   w, header, nth):
            if kind == "pair":
                for side in "ab":
                    if not isinstance(spec[side], dict):
                        raise w.error(f"{side} = {spec[side]!r} must be a region table, e.g. "
                                      "{box = [2, 2], origin = [0, 0]}", side, header, nth)
                region = _region_spec(spec["a"], network, w, header, nth, "a")
                region_b = _region_spec(spec["b"], network, w, header, nth, "b")
                x, label = None, "A:B"
            else:
                region = _region_spec(spec, network, w, header, nth)
                region_b = None
                x = next(iter(point.values())) if point else None
                label = ", ".join(f"{k}={v}" for k, v in point.items()) or "single"
            lat_point = {k: v for k, v in net_spec.items()
                         if len(nets[lattice]) > 1 and k in _swept_keys(nets[lattice])}
            if lat_point:
                label += " | " + ", ".join(f"{k}={v}" for k, v in lat_point.items())
            cases.append(Case(network=_canon(net_spec), region=_canon(region),
                              region_b=_canon(region_b) if region_b else None,
                              renyi=list(num["renyi"]), energies=int(num["energies"]),
                              method=num["method"], tol=float(num["tol"]), family=name,
                              label=label, x=x, lattice=lattice))
    return cases


def _swept_keys(variants):
    keys = set()
    first = variants[0][0]
    for spec, _ in variants[1:]:
        keys |= {k for k in spec if spec[k] != first.get(k)}
    return keys


def _canon(spec):
    """Plain JSON-able values (TOML already gives those; inf stays a string)."""
    return json.loads(json.dumps(spec, default=_jsonify))
