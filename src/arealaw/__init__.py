"""arealaw: ground-state entanglement of large lattices of coupled harmonic oscillators.

The pipeline runs one way: network (V, M) → correlators (X_A, P_A) → symplectic spectrum →
measures (entropies, mutual information) → sweeps and stores → command line.

Examples
--------
>>> import arealaw
>>> net = arealaw.hypercubic((8, 8), mass=0.2)
>>> res = arealaw.entropy(net, arealaw.box(net, 4), renyi=[2])
>>> res.entropy > res.renyi["2"] > 0
True
"""

from . import _builtin_methods  # noqa: F401  (registers dense, spectral, sparse, ...)
from ._entropy import EntropyResult, entropy, logarithmic_negativity
from ._errors import ConvergenceError, InsufficientMemoryError, UnsupportedMethodError
from ._fits import FitResult, fit_rows, fit_scaling
from ._lattices import HypercubicLattice, hypercubic
from ._measures import (entanglement_energies, entropy_error_bound, mode_entropy,
                        mutual_information, renyi_entropy, von_neumann_entropy)
from ._methods import choose_method, method_names
from ._network import OscillatorNetwork, load_network
from ._regions import (Region, ball, box, complement, difference, from_mask, from_sites,
                       half_space, intersection, slab, union)
from ._report import write_report
from ._restricted import restricted_spectrum
from ._scenario import Case, Scenario, load_scenario, parse_scenario
from ._spectrum import SymplecticSpectrum, Tail, combine_spectra, symplectic_spectrum
from ._store import ResultStore
from ._sweep import run_cases
from .reductions import radial_entropy, radial_lattice, shells

__version__ = "0.1.0"

__all__ = sorted([
    "Case", "ConvergenceError", "EntropyResult", "FitResult", "ResultStore", "Scenario",
    "fit_rows", "fit_scaling", "load_scenario", "parse_scenario", "restricted_spectrum",
    "run_cases", "write_report", "HypercubicLattice", "InsufficientMemoryError",
    "OscillatorNetwork", "Region", "SymplecticSpectrum", "Tail", "UnsupportedMethodError",
    "ball", "box", "choose_method", "combine_spectra", "complement", "difference",
    "entanglement_energies", "entropy", "entropy_error_bound", "from_mask", "from_sites",
    "half_space", "hypercubic", "intersection", "load_network", "logarithmic_negativity",
    "method_names", "mode_entropy", "mutual_information", "radial_entropy", "radial_lattice",
    "renyi_entropy", "shells", "slab", "union", "von_neumann_entropy",
])
