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

from .methods import _builtin  # noqa: F401  (registers dense, spectral, sparse, ...)
from ._entropy import (EntropyResult, NegativityResult, entropy, logarithmic_negativity,
                       radial_entropy, region_modes)
from ._version import __version__
from ._errors import ConvergenceError, InsufficientMemoryError, UnsupportedMethodError
from .methods import choose_method, method_names
from .network import (HypercubicLattice, OscillatorNetwork, Region, ball, box, complement,
                      difference, from_mask, from_sites, half_space, hypercubic, intersection,
                      load_network, radial_lattice, shells, slab, union)
from .spectrum import (SymplecticSpectrum, Tail, combine_spectra, entanglement_energies,
                       entropy_error_bound, mode_entropy, mutual_information, renyi_entropy,
                       restricted_spectrum, symplectic_spectrum, von_neumann_entropy)
from .views import write_report
from .workflow import (Case, FitResult, ResultStore, Scenario, fit_rows, fit_scaling,
                       load_scenario, parse_scenario, run_cases)


__all__ = sorted([
    "Case", "ConvergenceError", "EntropyResult", "FitResult", "NegativityResult", "ResultStore", "Scenario",
    "fit_rows", "fit_scaling", "load_scenario", "parse_scenario", "restricted_spectrum",
    "run_cases", "write_report", "HypercubicLattice", "InsufficientMemoryError",
    "OscillatorNetwork", "Region", "SymplecticSpectrum", "Tail", "UnsupportedMethodError",
    "ball", "box", "choose_method", "combine_spectra", "complement", "difference",
    "entanglement_energies", "entropy", "entropy_error_bound", "from_mask", "from_sites",
    "half_space", "hypercubic", "intersection", "load_network", "logarithmic_negativity",
    "method_names", "mode_entropy", "mutual_information", "radial_entropy", "radial_lattice",
    "region_modes",
    "renyi_entropy", "shells", "slab", "union", "von_neumann_entropy",
])
