"""Helpers shared by the asv benchmarks: BLAS pinned to one thread per process."""

from threadpoolctl import threadpool_limits

__all__ = ["one_blas_thread"]


def one_blas_thread():
    """Pin BLAS/OpenMP pools to one thread (this machine's CPU steal makes threads erratic)."""
    return threadpool_limits(limits=1)
