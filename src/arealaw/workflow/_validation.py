"""A table of published reference values, recomputed through the public API.

Each :class:`Reference` names its case, a zero-argument function computing the value with
arealaw, the value it is compared with, a tolerance (absolute, or relative when ``relative``),
and its source (authors, year, equation or table; "computed" marks regression values from an
independent dense calculation, "value from memory" where no precise location is known).  Its
``kind`` says which of these the reference value is: ``'published'`` (a value stated in the
source), ``'identity'`` (an exact relation between two routes, e.g. a ratio of 1, with the
source of the relation), ``'computed'`` (a regression value, no publication) or ``'memory'``
(a published value quoted from memory); by default it is read from the source text.
:func:`run_validation` evaluates the table (``quick=True``: the subset that runs in well under two
minutes) and returns :class:`ValidationRow` objects; ``arealaw validate`` prints them.
"""

import math
import time
from dataclasses import dataclass

import numpy as np

from .._entropy import entropy, radial_entropy
from ..correlators.sparse import inverse_sqrt_rule
from ..network import OscillatorNetwork, box, from_sites, half_space, hypercubic

__all__ = ["KINDS", "REFERENCES", "Reference", "ValidationRow", "references", "run_validation"]

#: Kinds of reference value, with the words ``arealaw validate`` prints before the value.
KINDS = {"published": "published", "identity": "exact identity", "computed": "computed reference",
         "memory": "from memory"}


def _kind(source, case):
    text = source.lower()
    if text.startswith("computed"):
        return "computed"
    if "value from memory" in text:
        return "memory"
    if "(ratio)" in case:
        return "identity"
    return "published"


@dataclass(frozen=True)
class Reference:
    """One reference value and how to recompute it."""

    case: str
    compute: object
    published: float
    tolerance: float
    source: str
    relative: bool = False
    quick: bool = True
    kind: str = None

    def __post_init__(self):
        kind = _kind(self.source, self.case) if self.kind is None else self.kind
        if kind not in KINDS:
            raise ValueError(f"kind={kind!r} is not one of {', '.join(KINDS)}")
        object.__setattr__(self, "kind", kind)


@dataclass
class ValidationRow:
    """Outcome of one reference: computed value, deviation and PASS/FAIL."""

    case: str
    computed: float
    published: float
    deviation: float
    tolerance: float
    relative: bool
    source: str
    passed: bool
    seconds: float
    error: str = None
    kind: str = "published"

    def to_dict(self):
        """JSON form: ``reference`` is the value compared with and ``kind`` what it is;
        ``published`` holds it only when it is a published value (else None)."""
        d = dict(self.__dict__)
        d["reference"] = self.published
        if self.kind != "published":
            d["published"] = None
        d["status"] = "PASS" if self.passed else "FAIL"
        for k in ("computed", "deviation"):
            if d[k] is not None and not math.isfinite(d[k]):
                d[k] = None
        return d


# -- the computations (public API only) -------------------------------------------------------

def _two_oscillators(k0, k1, what):
    net = OscillatorNetwork(np.array([[k0 + k1, -k1], [-k1, k0 + k1]]))
    res = entropy(net, from_sites(net, [0]), renyi=[2], method="dense")
    if what == "nu":
        return float(res.spectrum.nu[0])
    return res.renyi["2"] if what == "S2" else res.entropy


def _dirichlet_half(n, mass=0.0, what="S"):
    net = hypercubic(n, mass=mass, boundary="dirichlet")
    res = entropy(net, box(net, n // 2, origin=0), renyi=[2], method="dense")
    return res.renyi["2"] if what == "S2" else res.entropy


def _infinite_half_chain(mass):
    net = hypercubic(("inf",), mass=mass)
    return entropy(net, half_space(net, 0, 0)).entropy


def _slope(n1, n2, what="S"):
    return (_dirichlet_half(n2, what=what) - _dirichlet_half(n1, what=what)) / math.log(n2 / n1)


def _interval_in_chain(mass, length, n):
    net = hypercubic(n, mass=mass, boundary="dirichlet")
    return entropy(net, box(net, length), method="dense").entropy


def _ball_kappa(n_radial, n1, n2):
    s1 = radial_entropy(n_radial, n1).entropy
    s2 = radial_entropy(n_radial, n2).entropy
    return (s2 - s1) / ((n2 + 0.5) ** 2 - (n1 + 0.5) ** 2)


def _ball_fit(n_radial, ns):
    """κ from a least-squares fit S = κR² + c ln R + d over several radii."""
    r = np.array([n + 0.5 for n in ns])
    s = np.array([radial_entropy(n_radial, n).entropy for n in ns])
    coef, *_ = np.linalg.lstsq(np.stack([r**2, np.log(r), np.ones_like(r)], 1), s, rcond=None)
    return float(coef[0])


def _sphere_log_coefficient(n_radial, ns):
    """c from S = κR² + c ln R + d + e/R² at fixed N (finite-N corrections ∝ R²/N² go into κ)."""
    r = np.array([n + 0.5 for n in ns])
    s = np.array([radial_entropy(n_radial, n, rtol=1e-9).entropy for n in ns])
    basis = np.stack([r**2, np.log(r), np.ones_like(r), r**-2.0], 1)
    coef, *_ = np.linalg.lstsq(basis, s, rcond=None)
    return float(coef[1])


def _reduction_vs_dense(shape, at, mass):
    net = hypercubic(shape, mass=mass, boundary=("dirichlet",) + ("periodic",) * (len(shape) - 1))
    reg = half_space(net, 0, at)
    return entropy(net, reg, method="transverse").entropy, entropy(net, reg,
                                                                         method="dense").entropy


def _per_area_vs_ring(n, ring, mass):
    inf = hypercubic((n, "inf"), mass=mass, boundary=("dirichlet", "periodic"))
    fin = hypercubic((n, ring), mass=mass, boundary=("dirichlet", "periodic"))
    return (entropy(inf, half_space(inf, 0, n // 2)).entropy_per_area,
            entropy(fin, half_space(fin, 0, n // 2), method="transverse").entropy / ring)


def _half_space_per_area(dim, mass):
    net = hypercubic(("inf",) * dim, mass=mass)
    return entropy(net, half_space(net, 0, 0)).entropy_per_area


def _mass_slope_2d(m):
    return (_half_space_per_area(2, 2 * m) - _half_space_per_area(2, m)) / m


def _mass_log_3d(ms):
    """Coefficient a of S/A − S/A(m=0) = a m² ln m + b m² (fit over small masses)."""
    s0 = _half_space_per_area(3, 0.0)
    m = np.asarray(ms)
    ds = np.array([_half_space_per_area(3, x) for x in m]) - s0
    coef, *_ = np.linalg.lstsq(np.stack([m**2 * np.log(m), m**2], 1), ds, rcond=None)
    return float(coef[0])


def _hht_nodes(kappa, tol):
    """Nodes the sparse backend's x^{-1/2} rule uses to reach ``tol`` on [1, κ]."""
    return float(inverse_sqrt_rule(1.0, kappa, tol=tol).n_nodes)


# -- the table --------------------------------------------------------------------------------

SREDNICKI = "Srednicki 1993, PRL 71 666 (two-oscillator formula)"
PESCHEL = "Peschel & Chung 1999, J. Phys. A 32 8419 (half-chain, elliptic formula; value from memory of the method)"
CC = "Calabrese & Cardy 2004, J. Stat. Mech. P06002"


def _table():
    refs = [
        Reference("two oscillators k0=1 k1=0.5: S", lambda: _two_oscillators(1, 0.5, "S"),
                  0.0443512355687, 1e-10, SREDNICKI),
        Reference("two oscillators k0=k1=1: S", lambda: _two_oscillators(1, 1, "S"),
                  0.094392465944, 1e-10, SREDNICKI),
        Reference("two oscillators k0=k1=1: nu", lambda: _two_oscillators(1, 1, "nu"),
                  0.518977424651, 1e-10, "computed (independent dense calculation)"),
        Reference("two oscillators k0=k1=1: S_2", lambda: _two_oscillators(1, 1, "S2"),
                  0.037252286015, 1e-10, "computed (independent dense calculation)"),
    ]
    for w, value in ((2.0, 0.013624759193), (1.0, 0.055900404567), (0.1, 0.385080258869)):
        refs.append(Reference(f"half-chain w0={w:g}: Dirichlet chain N=400, dense",
                              lambda w=w: _dirichlet_half(400, mass=w), value, 1e-9, PESCHEL))
        refs.append(Reference(f"half-chain w0={w:g}: infinite chain, closed form",
                              lambda w=w: _infinite_half_chain(w), value, 1e-11, PESCHEL))
    refs += [
        Reference("massive half-chain m=1e-6: S - (1/6) ln(1/m)",
                  lambda: _infinite_half_chain(1e-6) - math.log(1e6) / 6, 0.0, 1e-9,
                  CC + ", massive scaling with one endpoint"),
        Reference("Dirichlet chain m=0: slope dS/dlnN (N=200..400)", lambda: _slope(200, 400),
                  1 / 6, 0.01, CC + ", c/6 for one endpoint", relative=True),
        Reference("Dirichlet chain m=0: slope dS_2/dlnN (N=200..400)",
                  lambda: _slope(200, 400, "S2"), 1 / 8, 0.02,
                  CC + ", (c/12)(1+1/n) for one endpoint", relative=True),
        Reference("Dirichlet chain m=0: slope dS/dlnN (N=1000..2000)", lambda: _slope(1000, 2000),
                  1 / 6, 0.003, CC + ", c/6 for one endpoint", relative=True, quick=False),
        Reference("Dirichlet chain N=10, half: S", lambda: _dirichlet_half(10), 0.295896309638,
                  1e-10, "computed (independent dense calculation)"),
        Reference("Dirichlet chain N=100, half: S", lambda: _dirichlet_half(100),
                  0.664129015839, 1e-10, "computed (independent dense calculation)"),
        Reference("Dirichlet chain N=100, half: S_2", lambda: _dirichlet_half(100, what="S2"),
                  0.416030075671, 1e-10, "computed (independent dense calculation)"),
        Reference("Dirichlet chain N=1000, half: S", lambda: _dirichlet_half(1000),
                  1.046385766015, 1e-9, "computed (independent dense calculation)"),
        Reference("interval of 40 sites, w0=1, far from walls: S / (2 S_half)",
                  lambda: _interval_in_chain(1.0, 40, 200) / (2 * 0.055900404567), 1.0, 1e-9,
                  "Peschel & Eisler 2009 review: two independent cuts", relative=True),
        Reference("ball on radial lattice N=40: kappa = dS/dR^2 (n=8..12)",
                  lambda: _ball_kappa(40, 8, 12), 0.30, 0.01,
                  "Srednicki 1993, PRL 71 666 (S = 0.30 R^2)"),
        Reference("ball on radial lattice N=60: kappa from S = kR^2 + c lnR + d (n=10..24)",
                  lambda: _ball_fit(60, range(10, 25, 2)), 0.295, 0.005,
                  "Lohmayer, Neuberger, Schwimmer & Theisen 2010, arXiv:0911.4283 (value from "
                  "memory)", quick=False),
        Reference("sphere: log coefficient c of S = kR^2 + c lnR + d + e/R^2 (N=400, n=10..30)",
                  lambda: _sphere_log_coefficient(400, range(10, 31, 5)), -1 / 90, 0.02,
                  "Solodukhin 2008, PLB 665 305; Lohmayer, Neuberger, Schwimmer & Theisen 2010, "
                  "arXiv:0911.4283; Casini & Huerta 2010, arXiv:1007.1813", relative=True,
                  quick=False),
        Reference("transverse reduction = dense, 8x6x6 periodic transverse (ratio)",
                  lambda: (lambda a, b: a / b)(*_reduction_vs_dense((8, 6, 6), 4, 0.2)), 1.0,
                  1e-8, "Casini & Huerta 2009 review, J. Phys. A 42 504007 (exact on the lattice)",
                  relative=True),
        Reference("transverse reduction = dense, 12x8 massless periodic transverse (ratio)",
                  lambda: (lambda a, b: a / b)(*_reduction_vs_dense((12, 8), 5, 0.0)), 1.0,
                  1e-8, "Casini & Huerta 2009 review, J. Phys. A 42 504007 (exact on the lattice)",
                  relative=True),
        Reference("per-area integral = large periodic ring L=256 (ratio)",
                  lambda: (lambda a, b: a / b)(*_per_area_vs_ring(10, 256, 0.1)), 1.0, 1e-9,
                  "Casini & Huerta 2009 review (k-integral as the L -> inf limit)", relative=True),
        Reference("2+1 D half-plane: d(S/L)/dm at m -> 0", lambda: _mass_slope_2d(1e-3),
                  -1 / 12, 0.01, "Hertzberg & Wilczek 2011, PRL 106 050404 (-mL/12; value from "
                  "memory)", relative=True),
        Reference("3+1 D half-space: coefficient of m^2 ln m in S/A",
                  lambda: _mass_log_3d([1e-3, 2e-3, 4e-3, 8e-3]), 1 / (24 * math.pi), 0.05,
                  "Hertzberg & Wilczek 2011, PRL 106 050404 (m^2 A ln(m)/24pi; value from memory)",
                  relative=True, quick=False),
        Reference("cubic lattice half-space, m=0: S/A", lambda: _half_space_per_area(3, 0.0),
                  0.0242619559541, 1e-9, "computed (transverse reduction; regression value)",
                  relative=True),
    ]
    hht = "Hale, Higham & Trefethen 2008, SIAM J. Numer. Anal. 46 2505 (node-count estimate)"
    for kappa, tol, nodes in ((1e4, 1e-8, 13), (1e4, 1e-12, 18), (1e8, 1e-8, 22),
                              (1e8, 1e-12, 32)):
        refs.append(Reference(f"HHT nodes for x^-1/2, kappa={kappa:g}, tol={tol:g}",
                              lambda k=kappa, t=tol: _hht_nodes(k, t), nodes, 1.0, hht))
    return tuple(refs)


REFERENCES = _table()


def references(*, quick=False):
    """The reference table (only the quick subset when ``quick``)."""
    return [r for r in REFERENCES if r.quick or not quick]


def _evaluate(ref):
    t0 = time.perf_counter()
    try:
        value = float(ref.compute())
    except (ValueError, ArithmeticError, MemoryError, RuntimeError) as exc:
        return ValidationRow(ref.case, None, ref.published, None, ref.tolerance, ref.relative,
                             ref.source, False, time.perf_counter() - t0,
                             f"{type(exc).__name__}: {exc}", ref.kind)
    dev = abs(value - ref.published)
    if ref.relative:
        dev = dev / abs(ref.published)
    return ValidationRow(ref.case, value, ref.published, dev, ref.tolerance, ref.relative,
                         ref.source, bool(dev <= ref.tolerance), time.perf_counter() - t0,
                         kind=ref.kind)


def run_validation(refs=None, *, quick=False, progress=None):
    """Evaluate references (default: the whole table, or its quick subset) into rows.

    Examples
    --------
    >>> rows = run_validation(references(quick=True)[:1])
    >>> rows[0].passed, rows[0].deviation < 1e-10
    (True, True)
    """
    refs = references(quick=quick) if refs is None else list(refs)
    rows = []
    for ref in refs:
        row = _evaluate(ref)
        rows.append(row)
        if progress is not None:
            progress(row)
    return rows
