"""Cases: one computation each (network spec, region specs, measures), hashed by content.

The model behind scenario files (:mod:`._scenario` parses them into cases) and sweeps
(:mod:`._sweep` computes them): what a case is, its content hash, and how its specs become a
network and regions.
"""

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from .._numerics import DEFAULT_TOL
from .._version import __version__
from ..network import RadialLattice, network_from_spec, radial_lattice, region_from_spec, shells
from ..spectrum._measures import order_label

__all__ = ["Case", "RADIAL_KEYS", "RADIAL_REGION", "Scenario", "build_network", "build_region",
           "case_hash", "region_separation"]

#: The radial lattice of Srednicki's partial waves: ``radial = N`` sites, ``dim``, ``mass``;
#: its regions are ``shells = n``.
RADIAL_KEYS = ("radial", "dim", "mass")
RADIAL_REGION = "shells"


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
    mode_profiles: int = 0
    method: str = "auto"
    tol: float = DEFAULT_TOL
    temperature: float = 0.0
    family: str = ""
    label: str = ""
    x: float = None
    lattice: str = ""
    version: str = __version__
    negativity: bool = False

    @property
    def key(self):
        """The content hash of the case (see :func:`case_hash`)."""
        return case_hash(self)

    def content(self):
        """The dict the content hash is taken over (``temperature`` only when > 0, and
        ``negativity`` and ``mode_profiles`` only when set, so earlier cases keep their keys)."""
        out = {"network": self.network, "region": self.region, "region_b": self.region_b,
               "renyi": [order_label(n) for n in self.renyi], "energies": self.energies,
               "method": self.method, "tol": self.tol, "version": self.version}
        if self.temperature:
            out["temperature"] = float(self.temperature)
        if self.negativity:
            out["negativity"] = True
        if self.mode_profiles:
            out["mode_profiles"] = int(self.mode_profiles)
        return out

    def to_dict(self):
        """Descriptive fields and the hashed content, as stored with each result."""
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
    text: str = ""


def build_network(spec):
    """The network of a case's lattice spec: a radial lattice (``radial`` key) or
    :func:`~arealaw.network._specs.network_from_spec`.

    Examples
    --------
    >>> build_network({"radial": 30, "dim": 3, "mass": 0.0})
    RadialLattice(N=30, d=3, m=0, Dirichlet wall at N+1)
    """
    if "radial" in spec:
        extra = sorted(set(spec) - set(RADIAL_KEYS))
        if extra:
            raise ValueError(f"{extra[0]!r} does not go with a radial lattice; allowed: "
                             f"{', '.join(RADIAL_KEYS)}")
        return radial_lattice(spec["radial"], dim=spec.get("dim", 3),
                              mass=spec.get("mass", 0.0))
    if "dim" in spec:
        raise ValueError("dim belongs to the radial lattice; add radial = N (radial sites)")
    return network_from_spec(spec)


def build_region(network, spec):
    """The region of a case's region spec (``shells = n`` on a radial lattice)."""
    if RADIAL_REGION in spec:
        extra = sorted(set(spec) - {RADIAL_REGION})
        if extra:
            raise ValueError(f"{extra[0]!r} does not go with shells; a radial region is "
                             "shells = n alone")
        n = spec[RADIAL_REGION]
        if isinstance(n, float) and n.is_integer():
            n = int(n)
        return shells(network, n)
    if isinstance(network, RadialLattice):
        raise ValueError("a radial lattice takes the region shells = n (the first n radial "
                         "sites)")
    return region_from_spec(network, spec)


def region_separation(network, region_a, region_b):
    """(separation, gap): the distance between the centres of the two regions and the smallest
    site-to-site distance, in the lattice's site coordinates (lattice units, no wrap-around on
    periodic axes); (None, None) when the network has no coordinates.

    Examples
    --------
    >>> net = network_from_spec({"shape": [40], "mass": 0.1})
    >>> a = region_from_spec(net, {"box": [4], "origin": [2]})
    >>> b = region_from_spec(net, {"box": [4], "origin": [12]})
    >>> region_separation(net, a, b)
    (10.0, 7.0)
    """
    from scipy.spatial import cKDTree
    try:
        ca = np.asarray(network.coords(region_a.indices), float)
        cb = np.asarray(network.coords(region_b.indices), float)
    except ValueError:
        return None, None
    centre = float(np.linalg.norm(ca.mean(axis=0) - cb.mean(axis=0)))
    gap = float(cKDTree(ca).query(cb, k=1)[0].min())
    return centre, gap
