"""The two shifted-solve engines of the sparse backend against each other, from massive to
near-massless disorder: multishift CG (one Krylov sequence for every pole, ∝ √κ) and
pyamg-preconditioned CG (one solve per pole and column, ∝ ln κ).

Cases: disordered 3-D lattices (Dirichlet, site masses m + 0.5u; periodic, masses m + m·u and
couplings J(1 + 0.5u'), whose lowest eigenvalue stays ~m² as m → 0) at m = 0.3, 0.1, 0.03, 0.01,
and disordered periodic chains, where √κ grows with the length and the multigrid engine wins.
Each case runs both engines with BLAS pinned to one thread and one worker process and prints
time, iterations, the entropy with its bound and the cost model's estimate of each engine; the
constants ``sparse.amg_entry`` and ``sparse.amg_iterations`` in ``src/arealaw/_costs.py`` were
fitted to its output.  Run: ``python -m benchmarks.bench_engines [case ...]`` (a few minutes).
asv times the two engines on one small near-massless case.
"""

import sys
import time

from arealaw import ball, box, entropy_error_bound, hypercubic, von_neumann_entropy
from arealaw.correlators import SparseBackend
from arealaw.methods._registry import block_spectrum

from ._common import one_blas_thread

TOL = 1e-10
MASSES = (0.3, 0.1, 0.03, 0.01)


def _dirichlet(side, m):
    return lambda: hypercubic((side,) * 3, mass=m, mass_disorder=0.5, seed=1)


def _periodic(side, m):
    return lambda: hypercubic((side,) * 3, mass=m, mass_disorder=m, coupling_disorder=0.5,
                              seed=1, boundary="periodic")


def _chain(length, m):
    return lambda: hypercubic((length,), mass=m, mass_disorder=m, coupling_disorder=0.5, seed=1,
                              boundary="periodic")


#: name -> (network factory, region factory)
CASES = {
    **{f"dirichlet-24-m{m:g}": (_dirichlet(24, m), lambda n: ball(n, 3.5)) for m in MASSES},
    **{f"periodic-24-m{m:g}": (_periodic(24, m), lambda n: ball(n, 3.5)) for m in MASSES},
    **{f"chain-{n_}-m{m:g}": (_chain(n_, m), lambda n: box(n, 50))
       for n_, m in ((2000, 0.01), (20000, 0.001), (20000, 0.0001))},
}


def run_engine(net, region, engine):
    """(seconds, blocks, entropy, bound) of one engine, one worker, one BLAS thread; the bound
    propagated as ``entropy()`` does (the blocks' Loewner error form, not their norms)."""
    with one_blas_thread():
        t0 = time.perf_counter()
        b = SparseBackend(engine=engine, n_jobs=1).blocks(net, region.indices, tol=TOL)
        seconds = time.perf_counter() - t0
    spec = block_spectrum(b)
    return seconds, b, von_neumann_entropy(spec), entropy_error_bound(spec)


class TimeEngines:
    """Both engines on a near-massless periodic 12³ lattice (κ ≈ 1.6e5), ball r = 2.5."""

    params = ["multishift", "amg"]
    param_names = ["engine"]
    number = 1
    repeat = 1
    timeout = 300

    def setup(self, engine):
        self.net = _periodic(12, 0.01)()
        self.region = ball(self.net, 2.5)

    def time_blocks(self, engine):
        with one_blas_thread():
            SparseBackend(engine=engine, n_jobs=1).blocks(self.net, self.region.indices, tol=TOL)


def main(names):
    import warnings

    from arealaw.correlators.sparse import IllConditionedWarning

    warnings.simplefilter("ignore", IllConditionedWarning)
    print("| case | sites | κ (interval) | poles | columns | multishift s (iterations) | "
          "AMG s (iterations per solve) | AMG/multishift | estimate ms / AMG s | "
          "auto | S (multishift) | \\|ΔS\\| | bounds |")
    print("| --- " * 13 + "|")
    for name in names or CASES:
        make_net, make_region = CASES[name]
        net = make_net()
        region = make_region(net)
        out = {}
        for engine in ("multishift", "amg"):
            out[engine] = run_engine(net, region, engine)
        (t_ms, b_ms, s_ms, e_ms), (t_amg, b_amg, s_amg, e_amg) = out["multishift"], out["amg"]
        i = b_ms.info
        solves = i["poles"] * i["boundary_rhs"]
        est = SparseBackend(n_jobs=1).engine_estimates(net, region.size, tol=TOL)
        auto = min(est, key=est.get)
        print(f"| {name} | {net.n_sites} | {i['condition_number']:.3g} | {i['poles']} | "
              f"{i['boundary_rhs']} | {t_ms:.3g} ({i['iterations']}) | "
              f"{t_amg:.3g} ({b_amg.info['iterations'] / max(solves, 1):.1f}) | "
              f"{t_amg / t_ms:.3g} | {est['multishift']:.3g} / {est['amg']:.3g} | {auto} | "
              f"{s_ms:.12f} | {abs(s_ms - s_amg):.2g} | {e_ms:.2g}, {e_amg:.2g} |", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
