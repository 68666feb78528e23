"""Cost model of ``method='auto'``: estimated against measured seconds over a grid of cases.

Every method's ``assess()`` returns an estimated run time; ``method='auto'`` takes the cheapest
(exact methods first, see ``methods/_registry.py``).  This script runs a grid of cases spanning
every method (dense; spectral with dense blocks, parity sectors, FFT box operators and the
restricted solver; sparse; radial; transverse) with the method named explicitly, and prints
estimate, measured wall time (the faster of ``--repeat`` runs, default 2, BLAS pinned to one
thread, a fresh network each run so that no per-network cache is reused) and their ratio.  The
constants in ``src/arealaw/_costs.py`` were fitted to its output; each case takes at most about
ten seconds on a loaded 2-core machine.  Run: ``python -m benchmarks.bench_costs`` (a few
minutes), or name cases: ``python -m benchmarks.bench_costs dense-chain-1000 radial-3d``.
"""

import sys
import time

from arealaw import ball, box, entropy, half_space, hypercubic, radial_lattice, shells
from arealaw.correlators import SpectralBackend
from arealaw.methods._registry import BlockMethod
from arealaw.methods._reflections import ReflectionBlockMethod

from ._common import one_blas_thread

TOL = 1e-10


def _spectral(operators, sectors=True):
    m = (ReflectionBlockMethod if sectors else BlockMethod)("spectral")
    m.backend = SpectralBackend(operators=operators)
    return m


def _lattice(shape, **kw):
    return lambda: hypercubic(shape, **kw)


#: (name, network factory, region factory, method): the method is a registered name or a Method.
CASES = [
    ("dense-chain-500", _lattice((500,), mass=0.1), lambda n: box(n, 250, origin=(0,)), "dense"),
    ("dense-chain-1000", _lattice((1000,), mass=0.0), lambda n: box(n, 300, origin=(0,)),
     "dense"),
    ("dense-chain-2000", _lattice((2000,), mass=0.0), lambda n: box(n, 256, origin=(0,)),
     "dense"),
    ("dense-2d-40", _lattice((40, 40), mass=0.1), lambda n: box(n, 12, origin=(3, 3)), "dense"),
    ("dense-3d-12", _lattice((12, 12, 12), mass=0.1), lambda n: box(n, 6, origin=(1, 1, 1)),
     "dense"),
    ("spectral-chain-2000", _lattice((2000,), mass=0.0), lambda n: box(n, 256, origin=(0,)),
     _spectral("dense", sectors=False)),
    ("spectral-inf-chain", _lattice(("inf",), mass=0.01), lambda n: box(n, 800),
     _spectral("dense", sectors=False)),
    ("spectral-2d-periodic", _lattice((48, 48), mass=0.05, boundary="periodic"),
     lambda n: box(n, 20, origin=(3, 5)), _spectral("dense", sectors=False)),
    ("spectral-3d-box", _lattice((30, 30, 30), mass=0.0), lambda n: box(n, 10, origin=(2, 4, 6)),
     _spectral("dense", sectors=False)),
    ("spectral-3d-inf", _lattice(("inf",) * 3, mass=0.3), lambda n: box(n, 8),
     _spectral("dense", sectors=False)),
    ("spectral-sectors-3d", _lattice((20, 20, 20), mass=0.0), lambda n: box(n, 10),
     _spectral("dense")),
    ("spectral-sectors-ball", _lattice((40, 40, 40), mass=0.0), lambda n: ball(n, 9.5),
     _spectral("dense")),
    ("spectral-sectors-2d", _lattice((60, 60), mass=0.0), lambda n: box(n, 40), _spectral("dense")),
    ("restricted-fft-chain", _lattice(("inf",), mass=0.01), lambda n: box(n, 8200),
     _spectral("fft", sectors=False)),
    ("restricted-fft-2d", _lattice((100, 100), mass=0.0), lambda n: box(n, (85, 95), origin=(4, 2)),
     _spectral("fft", sectors=False)),
    ("restricted-dense-chain", _lattice(("inf",), mass=0.01), lambda n: box(n, 8100),
     _spectral("dense", sectors=False)),
    ("sparse-chain-2000", _lattice((2000,), mass=0.0), lambda n: box(n, 256, origin=(0,)),
     "sparse"),
    ("sparse-2d-disorder", _lattice((40, 40), mass=0.3, mass_disorder=0.5, seed=1),
     lambda n: box(n, 6), "sparse"),
    ("sparse-3d-disorder", _lattice((24, 24, 24), mass=0.3, mass_disorder=0.5, seed=1),
     lambda n: ball(n, 3.2), "sparse"),
    ("sparse-chain-massive", _lattice((5000,), mass=0.2), lambda n: box(n, 100), "sparse"),
    ("radial-3d", lambda: radial_lattice(60, dim=3), lambda n: shells(n, 10), "radial"),
    ("radial-2d", lambda: radial_lattice(40, dim=2), lambda n: shells(n, 8), "radial"),
    ("transverse-per-area", _lattice((20, "inf", "inf"), mass=0.0),
     lambda n: half_space(n, 0, 10), "transverse"),
    ("transverse-periodic", _lattice((30, 24, 24), mass=0.0,
                                     boundary=("dirichlet", "periodic", "periodic")),
     lambda n: half_space(n, 0, 15), "transverse"),
]


def run_case(name, make_network, make_region, method, repeat=2):
    """(estimated seconds, measured seconds, method used) of one case."""
    from arealaw.methods._registry import _METHODS
    m = _METHODS[method] if isinstance(method, str) else method
    with one_blas_thread():
        net = make_network()
        region = make_region(net)
        estimate = m.assess(net, [region], tol=TOL).seconds
        best = float("inf")
        for _ in range(repeat):
            net = make_network()
            region = make_region(net)
            t0 = time.perf_counter()
            entropy(net, region, method=m, tol=TOL)
            best = min(best, time.perf_counter() - t0)
    return estimate, best, m.name


def main(names=(), repeat=2):
    print(f"{'case':24} {'method':10} {'estimate s':>11} {'measured s':>11} {'ratio':>7}")
    for name, make_network, make_region, method in CASES:
        if names and name not in names:
            continue
        est, got, used = run_case(name, make_network, make_region, method, repeat)
        print(f"{name:24} {used:10} {est:11.3g} {got:11.3g} {est / got:7.2f}", flush=True)


if __name__ == "__main__":
    main(tuple(sys.argv[1:]))
