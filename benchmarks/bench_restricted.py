"""Restricted (matrix-free block Lanczos) symplectic spectrum vs the dense eigenproblem.

Balls of growing radius R in a uniform massless 3-D Dirichlet lattice (60³), blocks from the
spectral backend.  The modes kept and the Krylov dimension follow the boundary area (∝ R²);
the time, with dense region blocks as operators, is (products of n×n blocks) × (Krylov
dimension) ∝ R⁶·R² against R⁹ for the dense eigenproblem.  ``track_*`` record the modes kept,
the Krylov dimension and the certified error bound beside the timings.  Run by hand to fit the
exponents: ``python -m benchmarks.bench_restricted`` (one BLAS thread; a few minutes).
"""

import sys
import time

import numpy as np

from arealaw import (ball, entropy_error_bound, hypercubic, symplectic_spectrum,
                     von_neumann_entropy)
from arealaw._restricted import restricted_spectrum
from arealaw.correlators import get_backend

from ._common import one_blas_thread

SIDE = 60
TOL = 1e-10
RADII = [5, 7, 9]


def ball_blocks(radius, side=SIDE):
    """Region blocks of a centred ball (spectral backend: exact, O(n_A²) memory)."""
    net = hypercubic((side,) * 3, mass=0.0)
    region = ball(net, radius)
    b = get_backend("spectral").blocks(net, region.indices, tol=1e-12)
    return net, region, b


def boundary_sites(net, region):
    """Sites of the region coupled to its complement."""
    mask = np.zeros(net.n_sites, dtype=bool)
    mask[region.indices] = True
    cut = net.potential.tocsr()[region.indices][:, ~mask]
    return int(np.count_nonzero(np.diff(cut.indptr)))


class TimeRestrictedBall:
    params = [RADII]
    param_names = ["radius"]
    number = 1
    repeat = 1
    timeout = 900

    def setup(self, radius):
        self.net, self.region, self.b = ball_blocks(radius)

    def time_restricted(self, radius):
        with one_blas_thread():
            restricted_spectrum(self.b.x, self.b.p, tol=TOL, x_error=self.b.x_error,
                                p_error=self.b.p_error)

    def time_dense(self, radius):
        with one_blas_thread():
            symplectic_spectrum(self.b.x, self.b.p, x_error=self.b.x_error,
                                p_error=self.b.p_error)


class TrackRestrictedBall:
    params = [RADII]
    param_names = ["radius"]
    timeout = 900

    def setup(self, radius):
        net, region, b = ball_blocks(radius)
        with one_blas_thread():
            self.spec = restricted_spectrum(b.x, b.p, tol=TOL, x_error=b.x_error,
                                            p_error=b.p_error)
        self.area = boundary_sites(net, region)

    def track_modes_kept(self, radius):
        return len(self.spec)

    def track_krylov_dim(self, radius):
        return self.spec.info.get("krylov_dim", len(self.spec))

    def track_modes_per_boundary_site(self, radius):
        return len(self.spec) / self.area

    def track_error_bound(self, radius):
        return entropy_error_bound(self.spec)


def _slope(r, y):
    return float(np.polyfit(np.log(r), np.log(y), 1)[0])


def main(radii=(5, 7, 9, 11)):
    rows = []
    with one_blas_thread():
        for radius in radii:
            net, region, b = ball_blocks(radius)
            t0 = time.perf_counter()
            spec = restricted_spectrum(b.x, b.p, tol=TOL, x_error=b.x_error, p_error=b.p_error)
            t1 = time.perf_counter()
            ref = symplectic_spectrum(b.x, b.p, x_error=b.x_error, p_error=b.p_error)
            t2 = time.perf_counter()
            rows.append((radius, region.size, boundary_sites(net, region), len(spec),
                         spec.info.get("krylov_dim", len(spec)), t1 - t0, t2 - t1,
                         abs(von_neumann_entropy(spec) - von_neumann_entropy(ref)),
                         entropy_error_bound(spec), entropy_error_bound(ref)))
            print("R=%d n=%d boundary=%d kept=%d krylov=%d restricted=%.2fs dense=%.2fs "
                  "|dS|=%.1e bound=%.1e (dense bound %.1e)" % rows[-1], flush=True)
    r = np.array([row[0] for row in rows], float)
    for name, col in [("modes kept", 3), ("Krylov dimension", 4), ("restricted time", 5),
                      ("dense time", 6), ("region sites", 1), ("boundary sites", 2)]:
        print(f"exponent of {name} vs radius: {_slope(r, [row[col] for row in rows]):.2f}")


if __name__ == "__main__":
    main(tuple(int(a) for a in sys.argv[1:]) or (5, 7, 9, 11))
