"""Exact spectral path against the plain dense baseline, in one asv run (BLAS pinned to one thread).

Cases (issue 3 targets): a centred cube of side 10 in a 20³ Dirichlet box (the dense baseline
is timed at 10³–14³ here and extrapolated with N³, since its 20³ run takes minutes), a
centred ball of radius 13 (9 171 sites) in a 101³ box, and a centred cube of side 10 in a
1000³ = 10^9-site box.  ``scripts/perf_table.py`` runs the big cases once each (including the
100³ box whose off-centre ball has no mirror symmetry) and prints the README table.
"""

from arealaw import ball, box, entropy, hypercubic

from ._common import one_blas_thread
from .dense_baseline import dense_entropy


def spectral_case(name):
    if name == "cube20":
        net = hypercubic((20, 20, 20), mass=0.0)
        return net, box(net, 10)
    if name == "ball101":
        net = hypercubic((101, 101, 101), mass=0.0)
        return net, ball(net, 13, center=(50, 50, 50))
    if name == "cube1000":
        net = hypercubic((1000, 1000, 1000), mass=0.0)
        return net, box(net, 10)
    raise ValueError(f"unknown case {name!r}")


class TimeSpectralEntropy:
    params = ["cube20", "cube1000", "ball101"]
    param_names = ["case"]
    number = 1
    repeat = 1
    timeout = 600

    def setup(self, name):
        self.net, self.region = spectral_case(name)

    def time_entropy(self, name):
        with one_blas_thread():
            entropy(self.net, self.region, method="spectral")

    def peakmem_entropy(self, name):
        with one_blas_thread():
            entropy(self.net, self.region, method="spectral")


class TimeDenseBaseline:
    """The plain numpy route (eigh of V, blocks, eigvals) on N³ Dirichlet boxes, cube N/2."""

    params = [10, 12, 14]
    param_names = ["side"]
    number = 1
    repeat = 1
    timeout = 600

    def time_dense_entropy(self, side):
        with one_blas_thread():
            dense_entropy(side, side // 2)


class TrackSpectralVsDense:
    """|ΔS| between the spectral method and the dense baseline (12³ box, cube 6)."""

    timeout = 600

    def setup_cache(self):
        net = hypercubic((12, 12, 12), mass=0.0)
        with one_blas_thread():
            s = entropy(net, box(net, 6), method="spectral").entropy
            return abs(s - dense_entropy(12, 6))

    def track_abs_delta_s(self, delta):
        return delta
