"""Symplectic spectra of regions (full and restricted) and the measures computed from them."""

from ._measures import (entanglement_energies, entropy_error_bound, mode_entropy,
                        mutual_information, renyi_entropy, von_neumann_entropy)
from ._modes import entangled_modes, symplectic_form
from ._negativity import (PartialTransposeSpectrum, log_negativity, log_negativity_error_bound,
                          partial_transpose_spectrum)
from ._restricted import restricted_spectrum
from ._symplectic import SymplecticSpectrum, Tail, combine_spectra, symplectic_spectrum

__all__ = sorted([
    "PartialTransposeSpectrum", "SymplecticSpectrum", "log_negativity",
    "log_negativity_error_bound", "partial_transpose_spectrum", "Tail", "combine_spectra", "entanglement_energies",
    "entropy_error_bound", "mode_entropy", "mutual_information", "renyi_entropy",
    "restricted_spectrum", "symplectic_spectrum", "von_neumann_entropy", "entangled_modes",
    "symplectic_form",
])
