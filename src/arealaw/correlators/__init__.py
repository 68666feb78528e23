"""Correlator backends: X[rows, cols] and P[rows, cols] of the ground state or a Gibbs state.

Every backend implements :class:`CorrelatorBackend`; :func:`get_backend` looks one up by the
name used in ``method=``.  New backends register themselves with :func:`register_backend`.
"""

from ._base import (Assessment, Blocks, CorrelatorBackend, RegionOperators, apply_operator,
                    as_array, operator_trace, trace_rounding)
from ._dense import DenseBackend, dense_correlators
from ._temperature import check_temperature, coth_factor
from .sparse import IllConditionedWarning, SparseBackend
from .spectral import SpectralBackend, spectral_correlators, spectral_trace

_REGISTRY = {}


def register_backend(backend):
    """Make ``backend`` (a :class:`CorrelatorBackend` instance) available by its name."""
    _REGISTRY[backend.name] = backend
    return backend


def get_backend(name):
    """The registered backend called ``name``."""
    try:
        return _REGISTRY[name]
    except KeyError:
        raise ValueError(f"unknown correlator backend {name!r}; available: "
                         f"{', '.join(sorted(_REGISTRY))}") from None


def backend_names():
    """Names of the registered backends, sorted."""
    return sorted(_REGISTRY)


register_backend(DenseBackend())
register_backend(SparseBackend())
register_backend(SpectralBackend())

__all__ = sorted([
    "Assessment", "Blocks", "CorrelatorBackend", "DenseBackend", "IllConditionedWarning",
    "RegionOperators", "SparseBackend", "apply_operator", "as_array", "backend_names",
    "check_temperature", "coth_factor",
    "operator_trace",
    "SpectralBackend", "dense_correlators", "get_backend", "register_backend",
    "spectral_correlators", "spectral_trace", "trace_rounding",
])
