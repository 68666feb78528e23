"""The proven lower end of the sparse backend's spectral interval, where Gershgorin discs fail.

Three pencils whose plain Gershgorin lower end is 0 or negative: a 2-D lattice with Dirichlet
walls and no mass (300², scaled discs after an inverse iteration), a 3-D one with disordered
couplings (40³, scaled discs with the LOBPCG eigenvector), and a 2-D user matrix with couplings
of random sign (60², an LDLᵀ factorisation).  asv times ``pencil_interval`` with one BLAS thread
and tracks lo/λ_min (λ_min from ARPACK in shift-invert mode), so a loss of tightness shows up
beside a change in speed.  Run once by hand: ``python -m benchmarks.bench_interval``.
"""

import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from arealaw import hypercubic
from arealaw.correlators.sparse._interval import pencil_interval

from ._common import one_blas_thread

CASES = ("walls-2d", "disorder-3d", "mixed-sign-2d")


def _mixed_sign(side=60, seed=5, gap=0.05):
    v = hypercubic((side, side), mass=0.1, boundary="periodic").potential
    rng = np.random.default_rng(seed)
    up = sp.triu(v, 1).tocoo()
    up.data *= np.where(rng.random(up.nnz) < 0.5, -1.0, 1.0)
    off = (up + up.T).tocsr()
    below = -1.0 - float(abs(off).sum(axis=1).max())  # below every eigenvalue of off
    lam0 = spla.eigsh(off.tocsc(), k=1, sigma=below, which="LM",
                      return_eigenvectors=False)[0]
    return (off + sp.diags(np.full(side * side, gap - lam0))).tocsr()


def pencil(case):
    if case == "walls-2d":
        return hypercubic((300, 300)).potential
    if case == "disorder-3d":
        return hypercubic((40, 40, 40), coupling_disorder=0.5, seed=1).potential
    return _mixed_sign()


def _lowest(v):
    return spla.eigsh(v.tocsc(), k=1, sigma=0, which="LM", tol=1e-13,
                      return_eigenvectors=False)[0]


class TimeInterval:
    number = 1
    repeat = 1
    timeout = 300
    params = CASES
    param_names = ["case"]

    def setup(self, case):
        self.v = pencil(case)

    def time_pencil_interval(self, case):
        with one_blas_thread():
            pencil_interval(self.v)


class TrackInterval:
    timeout = 300
    params = CASES
    param_names = ["case"]

    def setup_cache(self):
        out = {}
        for case in CASES:
            v = pencil(case)
            with one_blas_thread():
                lo, _, _ = pencil_interval(v)
            out[case] = lo / _lowest(v)
        return out

    def track_lo_over_lambda_min(self, cache, case):
        return cache[case]


if __name__ == "__main__":
    for case in CASES:
        v = pencil(case)
        with one_blas_thread():
            t0 = time.perf_counter()
            lo, _, info = pencil_interval(v)
            dt = time.perf_counter() - t0
        print(f"{case} ({v.shape[0]} sites): {info['method']} ({info['proof']}), "
              f"lo/λ_min = {lo / _lowest(v):.6f} in {dt:.2f} s")
