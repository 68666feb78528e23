"""Registers the built-in methods, in the order ``method='auto'`` breaks ties.

Kept apart from ``_registry.py`` so that the methods built on its protocol (reductions, parity
sectors) import it, and nothing imports them back.
"""

from ._registry import BlockMethod, register_method
from ._reflections import ReflectionBlockMethod
from ._radial import RadialMethod
from ._transverse import TransverseMethod
from ._two_point import TwoPointMethod

__all__ = []

register_method(BlockMethod("dense"))
register_method(RadialMethod())
register_method(TransverseMethod())
register_method(BlockMethod("sparse"))
register_method(ReflectionBlockMethod("spectral"))
register_method(TwoPointMethod())  # a cross-check: auto picks it only if it were cheapest
