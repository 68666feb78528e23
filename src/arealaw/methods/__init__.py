"""Methods: the protocol, the registry and automatic choice, and the built-in methods.

Block methods read X_A, P_A from a correlator backend; mirror-symmetric regions split into
parity sectors; symmetry reductions (balls by partial waves, half-spaces and slabs by
transverse momenta) split the problem into independent 1-D chains and join their spectra with
:func:`arealaw.combine_spectra`.
"""

from ._radial import RadialMethod
from ._registry import BlockMethod, Method, choose_method, method_names, register_method
from ._transverse import TransverseMethod, half_chain_spectrum
from ._two_point import TwoPointMethod, two_point_spectrum

__all__ = sorted([
    "BlockMethod", "Method", "RadialMethod", "TransverseMethod", "TwoPointMethod", "choose_method",
    "half_chain_spectrum", "method_names", "register_method", "two_point_spectrum",
])
