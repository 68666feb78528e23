"""Run the cases of a scenario: locally with joblib processes or on a dask.distributed cluster.

Workers only compute (:func:`compute_case` is a pure function of a case); the one client process
writes every finished case to the store as it arrives, so an interrupted sweep loses nothing
finished and a rerun skips what is stored.
"""

import json
import os
import sys
import time
from collections import OrderedDict

import numpy as np
from threadpoolctl import threadpool_limits

from .._entropy import entropy
from ..network._regions import cut_couplings
from ._scenario import build_network, build_region

__all__ = ["SweepSummary", "compute_case", "connect", "run_cases"]


def boundary_bonds(network, region):
    """Number of couplings (off-diagonal entries of V, counted once) between A and the rest."""
    cut = cut_couplings(network, region.indices)
    return None if cut is None else int(cut.nnz)


#: Networks kept per process, so that consecutive cases on one lattice reuse the backends'
#: per-network caches (e.g. the dense eigendecomposition).
NETWORK_CACHE_SIZE = 2
_networks = OrderedDict()


def _network(spec):
    key = json.dumps(spec, sort_keys=True)
    if key in _networks:
        _networks.move_to_end(key)
        return _networks[key]
    net = build_network(spec)
    _networks[key] = net
    while len(_networks) > NETWORK_CACHE_SIZE:
        _networks.popitem(last=False)
    return net


def compute_case(case):
    """Compute one case (with BLAS pinned to one thread); returns a JSON-able result dict.

    Examples
    --------
    >>> from arealaw.workflow._scenario import Case
    >>> r = compute_case(Case({"shape": [20], "mass": 0.5}, {"box": [10], "origin": [0]},
    ...                       method="dense"))
    >>> round(r["entropy"], 6), r["dim"], r["boundary_bonds"]
    (0.135471, 1, 1)
    """
    with threadpool_limits(limits=1):
        network = _network(case.network)
        region = build_region(network, case.region)
        region_b = build_region(network, case.region_b) if case.region_b else None
        res = entropy(network, region, region_b=region_b, renyi=case.renyi, method=case.method,
                      tol=case.tol, energies=case.energies, temperature=case.temperature)
        out = res.to_dict()
        out["dim"] = network.ndim
        out["boundary_bonds"] = (boundary_bonds(network, region)
                                 if network.n_sites is not None else None)
        out["pid"] = os.getpid()
    return out


class SweepSummary:
    """Counts and a one-line live summary of a running sweep."""

    def __init__(self, total, skipped):
        self.total, self.skipped, self.done, self.failed = total, skipped, 0, []
        self.last = None
        self.t0 = time.perf_counter()

    def line(self):
        parts = [f"{self.done + self.skipped}/{self.total} cases"]
        if self.skipped:
            parts.append(f"{self.skipped} already stored")
        if self.last is not None:
            case, res = self.last
            parts.append(f"last: {case.family} {case.label} S={res['entropy']:.6g} "
                         f"({res['method']})")
        if self.failed:
            parts.append(f"{len(self.failed)} failed")
        return " | ".join(parts)

    @property
    def seconds(self):
        return time.perf_counter() - self.t0


def _progress(total, initial, enabled):
    from tqdm import tqdm
    return tqdm(total=total, initial=initial, unit="case", file=sys.stderr, disable=not enabled,
                dynamic_ncols=True, desc="sweep")


def _safe(case):
    """Worker wrapper: a user error in one case is returned, not raised, so the sweep goes on."""
    try:
        return case.key, compute_case(case), None
    except (ValueError, MemoryError, RuntimeError, OSError) as exc:
        return case.key, None, f"{type(exc).__name__}: {exc}"


def run_cases(cases, store, *, workers=1, scheduler=None, progress=True, stop_on_error=False):
    """Compute the ``cases`` not yet in ``store`` and store each one as it finishes.

    Parameters
    ----------
    cases : list of Case
    store : ResultStore
    workers : int
        Local worker processes (joblib); 1 runs in this process.  Ignored with ``scheduler``.
    scheduler : str, optional
        Address of a dask.distributed scheduler (``tcp://host:8786``), or a ``Client``.
    progress : bool
        Show a progress bar (cases done, ETA) and a live summary line on stderr.
    stop_on_error : bool
        Raise the first failed case's error instead of recording it and going on.

    Returns
    -------
    SweepSummary
    """
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise ValueError(f"workers={workers!r} must be a whole number >= 1")
    stored = store.keys()
    todo = [c for c in cases if c.key not in stored]
    summary = SweepSummary(len(cases), len(cases) - len(todo))
    by_key = {c.key: c for c in todo}
    bar = _progress(len(cases), summary.skipped, progress)
    try:
        if not todo:
            pass
        elif scheduler is not None:
            results = _dask_results(todo, scheduler)
        elif workers == 1:
            results = (_safe(c) for c in todo)
        else:
            from joblib import Parallel, delayed
            results = Parallel(n_jobs=int(workers), return_as="generator_unordered",
                               batch_size=1, pre_dispatch="2*n_jobs")(
                delayed(_safe)(c) for c in todo)
        for key, res, err in (results if todo else ()):
            case = by_key[key]
            if err is not None:
                if stop_on_error:
                    raise ValueError(f"case {case.family} {case.label}: {err}")
                summary.failed.append((case, err))
            else:
                store.put(case, res)
                summary.done += 1
                summary.last = (case, res)
            bar.update(1)
            bar.set_postfix_str(summary.line().split(" | ", 1)[-1], refresh=True)
    finally:
        bar.close()
    return summary


def connect(address, *, timeout=20.0):
    """A dask.distributed ``Client`` for the scheduler at ``address`` (ValueError if unreachable).

    Workers must have arealaw installed (same version: it is part of every case's hash).
    """
    try:
        from distributed import Client
    except ImportError:
        raise ValueError("--scheduler needs dask.distributed: pip install 'arealaw[cluster]'") \
            from None
    try:
        return Client(address, timeout=f"{float(timeout)}s")
    except (OSError, TimeoutError) as exc:
        raise ValueError(f"cannot reach the dask scheduler at {address!r} ({exc}); start one "
                         "with 'dask scheduler' and workers with 'dask worker ADDRESS'") from None


def _dask_results(cases, scheduler):
    from distributed import as_completed
    own = not hasattr(scheduler, "submit")
    client = connect(scheduler) if own else scheduler
    try:
        futures = client.map(_safe, cases, pure=False)
        for fut in as_completed(futures):
            yield fut.result()
            fut.release()
    finally:
        if own:
            client.close()
