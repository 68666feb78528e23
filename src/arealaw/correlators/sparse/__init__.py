"""Correlators of any sparse network: contour quadrature of V^(-1/2) by shifted solves."""

from ._contour import inverse_sqrt_rule
from ._sparse import IllConditionedWarning, SparseBackend

__all__ = sorted(["IllConditionedWarning", "SparseBackend", "inverse_sqrt_rule"])
