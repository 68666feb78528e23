"""Two-point route and partial transpose against the symplectic route on the same blocks.

The two-point route (``method='two-point'``) solves a 2n × 2n complex Hermitian eigenproblem
where the symplectic route solves an n × n real one; its cost constant in
``methods/_two_point.py`` comes from these timings (BLAS pinned to one thread).  The partial
transpose of A ∪ B costs one symplectic eigenproblem of |A ∪ B| sites.
"""

import numpy as np

from arealaw import hypercubic
from arealaw.correlators import dense_correlators
from arealaw.methods import two_point_spectrum
from arealaw.spectrum import partial_transpose_spectrum, symplectic_spectrum

from ._common import one_blas_thread


class TimeTwoPointRoute:
    params = [200, 400]
    param_names = ["sites"]
    number = 1
    repeat = 1
    timeout = 300

    def setup(self, n):
        net = hypercubic((2 * n,), mass=0.1)
        x, p, _ = dense_correlators(net)
        idx = np.arange(n // 2, n // 2 + n)
        self.x, self.p = x[np.ix_(idx, idx)], p[np.ix_(idx, idx)]

    def time_two_point(self, n):
        with one_blas_thread():
            two_point_spectrum(self.x, self.p)

    def time_symplectic(self, n):
        with one_blas_thread():
            symplectic_spectrum(self.x, self.p)

    def time_partial_transpose(self, n):
        with one_blas_thread():
            partial_transpose_spectrum(self.x, self.p, np.arange(n) >= n // 2)
