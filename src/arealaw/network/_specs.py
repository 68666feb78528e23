"""Plain-dict descriptions of networks and regions (from the CLI or a scenario file).

One normaliser per kind of input, so that ``arealaw entropy`` options and scenario files mean
exactly the same thing.  Network keys: ``shape``, ``mass``, ``boundary``, ``coupling``,
``inertia``, ``mass_disorder``, ``coupling_disorder``, ``seed`` — or ``potential`` (and
``kinetic``) paths to scipy ``save_npz`` files.  Region keys (exactly one kind): ``box`` (+
``origin``), ``ball`` (+ ``center``), ``half_space`` = [axis, at], ``slab`` = [axis, start,
stop], ``sites`` (text file, one flat index per line, or ``.npy``), ``mask`` (``.npy`` boolean).
"""

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .._arguments import allowed_hint, unknown_name, whole_number
from ._lattices import hypercubic
from ._network import load_network
from ._regions import ball, box, from_mask, from_sites, half_space, slab

__all__ = ["LATTICE_SPEC", "MATRIX_SPEC", "REGION_KINDS", "REGION_SPEC", "SpecKey",
           "network_from_spec", "region_from_spec"]


@dataclass(frozen=True)
class SpecKey:
    """One key of a network or region spec, as the CLI and scenario files spell it.

    ``count`` is how many values it takes (``"+"``: one or more, None: one), ``kind`` their type
    (``"extent"``: a positive integer or 'inf', ``"path"``: a file name), ``of`` the region kind
    an option belongs to.
    """

    key: str
    help: str
    count: object = None
    kind: str = "float"
    metavar: object = None
    of: str = None


#: Keys of a hypercubic lattice (:func:`arealaw.hypercubic`), in the order of ``--help``.
LATTICE_SPEC = (
    SpecKey("shape", "sites per axis (1-3 axes); 'inf' for an infinite axis", "+", "extent", "N"),
    SpecKey("mass", "field mass m >= 0 (default 0)"),
    SpecKey("boundary", "dirichlet | periodic | open, one value or one per axis "
                        "(default dirichlet)", "+", "str", "B"),
    SpecKey("coupling", "nearest-neighbour coupling, one value or one per axis (default 1)",
            "+", "float", "J"),
    SpecKey("inertia", "oscillator mass (diagonal of M, default 1)"),
    SpecKey("mass_disorder", "seeded random site masses m_i = m + W*u_i, u_i ~ U(0,1) "
                             "independent per site; any W >= 0", metavar="W"),
    SpecKey("coupling_disorder", "seeded random couplings J_b = J*(1 + W*u_b), u_b ~ U(-1,1) "
                                 "independent per bond; 0 <= W < 1 keeps every J_b > 0",
            metavar="W"),
    SpecKey("seed", "seed of the disorder", kind="int"),
)
#: Keys of a network given by its matrices (:func:`arealaw.load_network`).
MATRIX_SPEC = (
    SpecKey("potential", "potential matrix (scipy save_npz)", kind="path", metavar="V.npz"),
    SpecKey("kinetic", "kinetic matrix (scipy save_npz)", kind="path", metavar="M.npz"),
)
#: Region kinds (exactly one per region) and their options (``of`` the kind they refine).
REGION_SPEC = (
    SpecKey("box", "box: sites per axis", "+", "int", "S"),
    SpecKey("origin", "corner of the box (default: centred)", "+", "int", "O", of="box"),
    SpecKey("ball", "ball: sites at distance <= R from the centre", None, "float", "R"),
    SpecKey("center", "centre of the ball (default: lattice centre)", "+", "float", "C",
            of="ball"),
    SpecKey("half_space", "sites with coordinate < AT along AXIS", 2, "int", ("AXIS", "AT")),
    SpecKey("slab", "sites with START <= coordinate < STOP along AXIS", 3, "int",
            ("AXIS", "START", "STOP")),
    SpecKey("sites", "text file with one flat site index per line, or .npy", kind="path",
            metavar="FILE"),
    SpecKey("mask", ".npy boolean mask over all sites", kind="path", metavar="FILE"),
)

LATTICE_KEYS = tuple(k.key for k in LATTICE_SPEC)
MATRIX_KEYS = tuple(k.key for k in MATRIX_SPEC)
REGION_KINDS = tuple(k.key for k in REGION_SPEC if k.of is None)
REGION_OPTIONS = {kind: tuple(k.key for k in REGION_SPEC if k.of == kind)
                  for kind in REGION_KINDS if any(k.of == kind for k in REGION_SPEC)}


def network_from_spec(spec):
    """Build an :class:`OscillatorNetwork` from a dict (see module docstring).

    Examples
    --------
    >>> net = network_from_spec({"shape": [10, 10], "mass": 0.5, "boundary": "periodic"})
    >>> net.n_sites
    100
    """
    if not isinstance(spec, dict):
        raise ValueError(f"a lattice must be a table of keys ({', '.join(LATTICE_KEYS)}), got "
                         f"{spec!r}")
    spec = {k: v for k, v in spec.items() if v is not None}
    unknown = sorted(set(spec) - set(LATTICE_KEYS) - set(MATRIX_KEYS))
    if unknown:
        raise ValueError(unknown_name("lattice key", unknown[0], LATTICE_KEYS + MATRIX_KEYS))
    if "potential" in spec:
        extra = sorted(set(spec) & set(LATTICE_KEYS))
        if extra:
            raise ValueError(f"{extra[0]!r} cannot be combined with a potential matrix file; "
                             "give either a lattice (shape, ...) or matrices")
        return load_network(spec["potential"], spec.get("kinetic"))
    if "kinetic" in spec:
        raise ValueError("a kinetic matrix needs a potential matrix (potential = V.npz)")
    if "shape" not in spec:
        raise ValueError("no lattice given: set shape (e.g. [20, 20]) or a potential matrix file")
    kw = {k: spec[k] for k in LATTICE_KEYS if k in spec and k != "shape"}
    return hypercubic(spec["shape"], **kw)


def _read_sites(path):
    p = Path(path)
    if not p.exists():
        raise ValueError(f"site file {str(path)!r} does not exist")
    if p.suffix == ".npy":
        return load_array(p, "site file")
    try:
        return np.loadtxt(p, dtype=float, ndmin=1, comments="#")
    except ValueError as exc:
        raise ValueError(f"site file {str(path)!r} must hold one integer site index per line "
                         f"({exc})") from None


def region_from_spec(network, spec):
    """Build a :class:`Region` of ``network`` from a dict with exactly one region kind.

    Examples
    --------
    >>> net = network_from_spec({"shape": [10, 10], "mass": 0.5})
    >>> region_from_spec(net, {"box": [2, 3], "origin": [0, 0]}).size
    6
    """
    if not isinstance(spec, dict):
        raise ValueError(f"a region must be a table with one of {', '.join(REGION_KINDS)}, got "
                         f"{spec!r}")
    spec = {k: v for k, v in spec.items() if v is not None}
    kinds = [k for k in REGION_KINDS if k in spec]
    if not kinds:
        other = sorted(set(spec) - {o for v in REGION_OPTIONS.values() for o in v})
        if other:
            raise ValueError(unknown_name("region kind", other[0], REGION_KINDS))
    if len(kinds) != 1:
        raise ValueError("give exactly one region kind (" + ", ".join(REGION_KINDS) + "), got "
                         + (", ".join(kinds) if kinds else "none"))
    kind = kinds[0]
    allowed = {kind, *REGION_OPTIONS.get(kind, ())}
    unknown = sorted(set(spec) - allowed)
    if unknown:
        raise ValueError(f"region key {unknown[0]!r} does not go with {kind!r}"
                         + allowed_hint(unknown[0], sorted(allowed)))
    value = spec[kind]
    if kind == "box":
        return box(network, value, spec.get("origin"))
    if kind == "ball":
        return ball(network, value, spec.get("center"))
    if kind == "half_space":
        axis, at = _ints(value, 2, "half_space", "[axis, at]")
        return half_space(network, axis, at)
    if kind == "slab":
        axis, start, stop = _ints(value, 3, "slab", "[axis, start, stop]")
        return slab(network, axis, start, stop)
    if kind == "sites":
        return from_sites(network, _read_sites(value), f"sites from {Path(value).name}")
    mask_path = Path(value)
    if not mask_path.exists():
        raise ValueError(f"mask file {str(value)!r} does not exist")
    return from_mask(network, load_array(mask_path, "mask file"), f"mask {mask_path.name}")


def load_array(path, what):
    """A plain numeric array from a ``.npy`` file; never unpickles (pickles can run code)."""
    try:
        arr = np.load(path, allow_pickle=False)
    except ValueError as exc:
        text = str(exc)
        if "Object arrays" in text:
            reason = "holds an array of Python objects"
        elif "pickled" in text:
            reason = "holds pickled Python objects, not a .npy array (arealaw never unpickles)"
        else:
            reason = f"is not a .npy array ({text})"
        raise ValueError(f"{what} {str(path)!r} {reason}; save a numeric array with "
                         "numpy.save(path, array)") from None
    except (OSError, EOFError) as exc:
        raise ValueError(f"{what} {str(path)!r} cannot be read as a .npy array ({exc})") from None
    if isinstance(arr, np.lib.npyio.NpzFile):
        arr.close()
        raise ValueError(f"{what} {str(path)!r} is an .npz archive; save one array with "
                         "numpy.save(path, array)")
    return arr


def _ints(value, n, name, form):
    vals = value if isinstance(value, (list, tuple, np.ndarray)) else [value]
    if len(vals) != n:
        raise ValueError(f"{name} must be {form} (integers), got {value!r}")
    return [whole_number(v, f"{name} entry") for v in vals]
