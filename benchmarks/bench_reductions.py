"""Symmetry reductions: a ball by partial waves, a half-space by transverse momenta.

Compared with the dense reference on the same lattice where that fits (the transverse case), so
the gain of the reduction shows up as the ratio of the two timings.
"""

import arealaw as al

from ._common import one_blas_thread


class RadialBall:
    """Ball of n shells on N = 60 radial sites (d = 3), l-sum to relative 1e-6."""

    params = [5, 10, 20]
    param_names = ["shells"]

    number = 1
    repeat = 3

    def time_radial_entropy(self, shells):
        with one_blas_thread():
            al.radial_entropy(60, shells, n_jobs=1)


class TransverseHalfSpace:
    """Half of a 12 x 8 x 8 lattice (Dirichlet normal, periodic transverse): reduction vs dense."""

    number = 1
    repeat = 3

    def setup(self):
        self.net = al.hypercubic((12, 8, 8), mass=0.1,
                                 boundary=("dirichlet", "periodic", "periodic"))
        self.region = al.half_space(self.net, 0, 6)

    def time_transverse(self):
        with one_blas_thread():
            al.entropy(self.net, self.region, method="transverse")

    def time_dense(self):
        with one_blas_thread():
            al.entropy(self.net, self.region, method="dense")


class PerAreaIntegral:
    """Entropy per unit area of the half-space of the infinite massless cubic lattice."""

    number = 1
    repeat = 3

    def setup(self):
        self.net = al.hypercubic(("inf", "inf", "inf"), mass=0.0)
        self.region = al.half_space(self.net, 0, 0)

    def time_per_area(self):
        with one_blas_thread():
            al.entropy(self.net, self.region)
