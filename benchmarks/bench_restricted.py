"""Restricted (matrix-free block Lanczos) symplectic spectrum against the dense eigenproblem.

Balls of growing radius R in a uniform massless 3-D Dirichlet lattice of side 2R + 12, X_A and
P_A from the spectral backend either as FFT convolutions on the ball's bounding box (no n × n
block) or as dense region blocks.  The work of the restricted solver is counted in operator
products (one per Lanczos vector and operator): it follows the boundary area (∝ R²) because only
the modes with ν − ½ above the threshold are computed.  The wall time adds what each product and
the orthogonalisation cost: an FFT product is O(R³ log R), orthogonalising m ∝ R² vectors of
n ∝ R³ entries O(R⁷), against O(R⁹) for the dense eigenproblem.  ``track_*`` record the products,
the modes kept and the certified bound beside the timings.  Fit the exponents by hand:
``python -m benchmarks.bench_restricted 6 8 10 12 14`` (one BLAS thread; about 10 minutes).
"""

import sys
import time

import numpy as np
import scipy.sparse.linalg as spla

from arealaw import (ball, entropy_error_bound, hypercubic, symplectic_spectrum,
                     von_neumann_entropy)
from arealaw.network import boundary_sites
from arealaw.spectrum import restricted_spectrum
from arealaw.correlators import SpectralBackend

from ._common import one_blas_thread

TOL = 1e-10
RADII = [5, 7, 9]
FFT = SpectralBackend(operators="fft")
DENSE_BLOCKS = SpectralBackend(operators="dense")


class CountingOperator(spla.LinearOperator):
    """Wraps an operator; counts the vectors it is applied to and the seconds spent."""

    def __init__(self, op):
        super().__init__(dtype=np.float64, shape=op.shape)
        self.op = op
        self.vectors = 0
        self.seconds = 0.0

    def _matmat(self, v):
        t0 = time.perf_counter()
        out = self.op.matmat(v)
        self.seconds += time.perf_counter() - t0
        self.vectors += v.shape[1]
        return out

    def _matvec(self, v):
        return self._matmat(v.reshape(-1, 1)).ravel()


def ball_case(radius):
    net = hypercubic((2 * radius + 12,) * 3, mass=0.0)
    return net, ball(net, radius)


def run_restricted(backend, net, region):
    """(spectrum, operator products, seconds: in products, in the solver, in the setup).

    The setup is the backend's work before the first product: kernel tables and FFTs of the
    kernels, or the gathered dense blocks, and the exact trace.
    """
    t0 = time.perf_counter()
    ops = backend.operators(net, region.indices, tol=1e-12)
    x, p = CountingOperator(ops.x), CountingOperator(ops.p)
    t1 = time.perf_counter()
    spec = restricted_spectrum(x, p, entropy_tol=TOL, trace=ops.trace, x_error=ops.x_error,
                               p_error=ops.p_error)
    t2 = time.perf_counter()
    return spec, x.vectors + p.vectors, (x.seconds + p.seconds, t2 - t1, t1 - t0)


class TimeRestrictedBall:
    params = [RADII]
    param_names = ["radius"]
    number = 1
    repeat = 1
    timeout = 900

    def setup(self, radius):
        self.net, self.region = ball_case(radius)
        self.fft = FFT.operators(self.net, self.region.indices, tol=1e-12)
        self.blocks = DENSE_BLOCKS.blocks(self.net, self.region.indices, tol=1e-12)

    def time_restricted_fft_operators(self, radius):
        o = self.fft
        with one_blas_thread():
            restricted_spectrum(o.x, o.p, entropy_tol=TOL, trace=o.trace, x_error=o.x_error,
                                p_error=o.p_error)

    def time_restricted_dense_blocks(self, radius):
        b = self.blocks
        with one_blas_thread():
            restricted_spectrum(b.x, b.p, entropy_tol=TOL, x_error=b.x_error,
                                p_error=b.p_error)

    def time_dense_eigenproblem(self, radius):
        b = self.blocks
        with one_blas_thread():
            symplectic_spectrum(b.x, b.p, x_error=b.x_error, p_error=b.p_error)


class TrackRestrictedBall:
    params = [RADII]
    param_names = ["radius"]
    timeout = 900

    def setup(self, radius):
        net, region = ball_case(radius)
        with one_blas_thread():
            self.spec, self.products, _ = run_restricted(FFT, net, region)
        self.area = boundary_sites(net, region)

    def track_operator_products(self, radius):
        return self.products

    def track_products_per_boundary_site(self, radius):
        return self.products / self.area

    def track_modes_kept(self, radius):
        return len(self.spec)

    def track_modes_per_boundary_site(self, radius):
        return len(self.spec) / self.area

    def track_error_bound(self, radius):
        return entropy_error_bound(self.spec)


def _slope(r, y):
    return float(np.polyfit(np.log(r), np.log(y), 1)[0])


def main(radii=(6, 8, 10, 12, 14)):
    rows = []
    header = ("R", "sites", "boundary", "kept", "products", "fft_products_s", "fft_solver_s",
              "fft_setup_s", "blocks_solver_s", "blocks_setup_s", "dense_s", "dS", "bound")
    print(" ".join(header), flush=True)
    with one_blas_thread():
        for radius in radii:
            net, region = ball_case(radius)
            spec, products, fft_s = run_restricted(FFT, net, region)
            _, _, blocks_s = run_restricted(DENSE_BLOCKS, net, region)
            t0 = time.perf_counter()
            b = DENSE_BLOCKS.blocks(net, region.indices, tol=1e-12)
            ref = symplectic_spectrum(b.x, b.p, x_error=b.x_error, p_error=b.p_error)
            t_dense = time.perf_counter() - t0
            rows.append((radius, region.size, boundary_sites(net, region), len(spec), products,
                         *fft_s, *blocks_s[1:], t_dense,
                         abs(von_neumann_entropy(spec) - von_neumann_entropy(ref)),
                         entropy_error_bound(spec)))
            print("%d %d %d %d %d %.2f %.2f %.2f %.2f %.2f %.2f %.1e %.1e" % rows[-1], flush=True)
    r = np.array([row[0] for row in rows], float)
    for name, col in [("region sites", 1), ("boundary sites", 2), ("modes kept", 3),
                      ("operator products", 4), ("time in FFT products", 5),
                      ("restricted solver, FFT operators", 6), ("FFT setup and trace", 7),
                      ("restricted solver, dense blocks", 8), ("dense block setup", 9),
                      ("dense eigenproblem with its blocks", 10)]:
        print(f"exponent of {name} vs radius: {_slope(r, [row[col] for row in rows]):.2f}")


if __name__ == "__main__":
    main(tuple(int(a) for a in sys.argv[1:]) or (6, 8, 10, 12, 14))
