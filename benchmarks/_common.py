"""Helpers shared by the asv benchmarks: BLAS pinned to one thread per process, the disorder case."""

from threadpoolctl import threadpool_limits

from arealaw import ball, hypercubic

__all__ = ["disordered_ball", "one_blas_thread"]


def one_blas_thread():
    """Pin BLAS/OpenMP pools to one thread (this machine's CPU steal makes threads erratic)."""
    return threadpool_limits(limits=1)


def disordered_ball(side, radius):
    """The sparse benchmarks' disorder case: a side³ lattice with seeded random site masses
    m_i = 0.3 (1 + 0.5 u_i) and a ball of ``radius`` (network, region)."""
    net = hypercubic((side,) * 3, mass=0.3, mass_disorder=0.5, seed=1)
    return net, ball(net, radius)
