"""Exact correlators of uniform hypercubic lattices: heat-kernel quadrature, FFT box operators."""

from ._spectral import SpectralBackend, spectral_correlators, spectral_trace

__all__ = sorted(["SpectralBackend", "spectral_correlators", "spectral_trace"])
