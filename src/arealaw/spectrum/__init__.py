"""Symplectic spectra of regions (full and restricted) and the measures computed from them."""

from ._measures import (entanglement_energies, entropy_error_bound, mode_entropy,
                        mutual_information, renyi_entropy, von_neumann_entropy)
from ._restricted import restricted_spectrum
from ._symplectic import SymplecticSpectrum, Tail, combine_spectra, symplectic_spectrum

__all__ = sorted([
    "SymplecticSpectrum", "Tail", "combine_spectra", "entanglement_energies",
    "entropy_error_bound", "mode_entropy", "mutual_information", "renyi_entropy",
    "restricted_spectrum", "symplectic_spectrum", "von_neumann_entropy",
])
