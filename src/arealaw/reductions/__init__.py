"""Symmetry reductions: balls by partial waves, half-spaces and slabs by transverse momenta.

Each reduction is a :class:`~arealaw._methods.Method` ('radial', 'transverse') that splits the
problem into independent 1-D chains and joins their spectra with
:func:`arealaw.combine_spectra`.
"""

from ._radial import (RadialLattice, RadialMethod, radial_chain, radial_entropy, radial_lattice,
                      shells)
from ._transverse import TransverseMethod, half_chain_spectrum

__all__ = sorted([
    "RadialLattice", "RadialMethod", "radial_chain", "radial_entropy", "radial_lattice",
    "TransverseMethod", "half_chain_spectrum", "shells",
])
