"""Run the cases of a scenario: locally with worker processes or on a dask.distributed cluster.

Workers only compute (:func:`compute_case` is a pure function of a case); the one client process
writes every finished case to the store as it arrives, so an interrupted sweep loses nothing
finished and a rerun skips what is stored.
"""

import json
import os
import sys
import time
from collections import OrderedDict, deque

import numpy as np
from threadpoolctl import threadpool_limits

from .._entropy import entropy, region_modes
from .._parallel import connect
from ..network._regions import complement, cut_couplings
from ._cases import Case, build_network, build_region
from ._store import ResultStore
from ._workers import WAIT, WorkerPool, usable_cores

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
        against_rest = case.negativity and region_b is None
        if against_rest:  # a family's region against the rest of the lattice
            region_b = complement(network, region)
        res = entropy(network, region, region_b=region_b, renyi=case.renyi, method=case.method,
                      tol=case.tol, energies=case.energies, temperature=case.temperature,
                      negativity=case.negativity)
        out = res.to_dict()
        if against_rest:  # the pair is only the negativity's: keep the row a family row
            for k in ("entropy_b", "entropy_ab", "mutual_information",
                      "mutual_information_error_bound", "region_b_sites", "region_b"):
                out.pop(k, None)
            out["log_negativity_partner"] = "rest of the lattice"
        if case.mode_profiles:  # what mode figures draw: plot and report then need no blocks
            nu, u = region_modes(network, region, count=min(case.mode_profiles, region.size),
                                 tol=case.tol)
            out["mode_profiles"] = {"nu": nu.tolist(), "profiles": u.tolist()}
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
        self.retried = []    # (case, why): lost with a dead worker and computed again
        self.elsewhere = 0   # cases stored meanwhile by another run on the same store
        self.notes = []      # e.g. the worker count was capped
        self.t0 = time.perf_counter()

    def line(self):
        parts = [f"{self.done + self.skipped + self.elsewhere}/{self.total} cases"]
        if self.skipped:
            parts.append(f"{self.skipped} already stored")
        if self.elsewhere:
            parts.append(f"{self.elsewhere} by another run")
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


#: Times a case whose worker process died is computed again within the same run.
LOST_CASE_RETRIES = 1


class _Source:
    """Hands out the cases this run computes, claiming each in the store first.

    Cases claimed by another live run on the same store are left to it; when nothing else is
    left, the source answers :data:`WAIT` until those are stored (counted in
    ``summary.elsewhere``) or their run has died (then this run claims and computes them).
    """

    def __init__(self, todo, store, summary, on_elsewhere):
        self.pending = deque(todo)
        self.retry = deque()
        self.elsewhere = {}
        self.store, self.summary, self.on_elsewhere = store, summary, on_elsewhere
        self.claims = hasattr(store, "claim")

    def __call__(self):
        if self.retry:
            return self.retry.popleft()
        while self.pending:
            case = self.pending.popleft()
            if not self.claims or self.store.claim(case.key):
                return case
            if self.store.has(case.key):
                self.on_elsewhere(case)
            else:
                self.elsewhere[case.key] = case
        for key, case in list(self.elsewhere.items()):
            if self.store.has(key):
                del self.elsewhere[key]
                self.on_elsewhere(case)
            elif self.store.claim(key):  # the other run died: its claim lapsed
                del self.elsewhere[key]
                return case
        return WAIT if self.elsewhere else None


def _inline(source):
    while True:
        case = source()
        if case is None:
            return
        if case is WAIT:
            time.sleep(0.5)
            continue
        yield case, _safe(case), False


def _worker_count(workers, n_cases, summary):
    cores = usable_cores()
    n = max(1, min(int(workers), cores, n_cases))
    if n < workers:
        why = (f"{cores} usable core{'s' * (cores > 1)}" if n == cores
               else f"{n_cases} case{'s' * (n_cases > 1)} to compute")
        summary.notes.append(f"workers={workers} capped at {n} ({why})")
    return n


def run_cases(cases, store, *, workers=1, scheduler=None, progress=True, stop_on_error=False):
    """Compute the ``cases`` not yet in ``store`` and store each one as it finishes.

    Parameters
    ----------
    cases : list of Case
    store : ResultStore
    workers : int
        Local worker processes; 1 computes in this process.  Capped at the usable cores and
        the cases to compute (``summary.notes`` says so).  Ignored with ``scheduler``.
    scheduler : str, optional
        Address of a dask.distributed scheduler (``tcp://host:8786``), or a ``Client``.
    progress : bool
        Show a progress bar (cases done, ETA) and a live summary line on stderr.
    stop_on_error : bool
        Raise the first failed case's error instead of recording it and going on.

    Returns
    -------
    SweepSummary

    Notes
    -----
    A case whose worker process dies (killed, out of memory) is computed once more; if it is
    lost again it is recorded as failed and left unclaimed, so a rerun retries it.  Every other
    case is finished.  Concurrent runs on one store share the cases (see
    :meth:`ResultStore.claim`).
    """
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise ValueError(f"workers={workers!r} must be a whole number >= 1")
    if isinstance(cases, (str, bytes, dict)) or not all(isinstance(c, Case) for c in cases):
        raise ValueError(f"cases must be a list of Case (e.g. load_scenario(path).cases), got "
                         f"{type(cases).__name__}")
    if not isinstance(store, ResultStore):
        raise ValueError(f"store must be a ResultStore (e.g. ResultStore('results.sqlite')), "
                         f"got {type(store).__name__}")
    stored = store.keys()
    todo = [c for c in cases if c.key not in stored]
    summary = SweepSummary(len(cases), len(cases) - len(todo))
    bar = _progress(len(cases), summary.skipped, progress)

    def tick():
        bar.update(1)
        bar.set_postfix_str(summary.line().split(" | ", 1)[-1], refresh=True)

    def elsewhere(case):
        summary.elsewhere += 1
        tick()

    source = _Source(todo, store, summary, elsewhere)
    attempts = {}
    try:
        if not todo:
            results, pool = (), None
        elif scheduler is not None:
            results, pool = _dask_results(source, scheduler), None
        else:
            n = _worker_count(workers, len(todo), summary)
            pool = WorkerPool(n, _safe) if n > 1 else None
            results = pool.start().run(source) if pool else _inline(source)
        try:
            for case, value, lost in results:
                if lost:
                    attempts[case.key] = attempts.get(case.key, 0) + 1
                    if attempts[case.key] <= LOST_CASE_RETRIES:
                        summary.retried.append((case, value))
                        source.retry.append(case)
                        continue
                    err = (f"{value}, {attempts[case.key]} times; left for a rerun to retry "
                           "(is it running out of memory?)")
                else:
                    _, res, err = value
                if err is not None:
                    if hasattr(store, "release"):
                        store.release(case.key)
                    if stop_on_error:
                        raise ValueError(f"case {case.family} {case.label}: {err}")
                    summary.failed.append((case, err))
                else:
                    store.put(case, res)
                    summary.done += 1
                    summary.last = (case, res)
                tick()
        finally:
            if pool is not None:
                pool.stop(abort=sys.exc_info()[0] is not None)
    finally:
        bar.close()
    return summary


def _dask_results(source, scheduler):
    """Submit cases as the source hands them out; a case lost with a dead worker is reported
    as lost (the scheduler itself first reschedules it on other workers)."""
    from distributed import KilledWorker, as_completed
    own = not hasattr(scheduler, "submit")
    client = connect(scheduler) if own else scheduler
    try:
        n = len(client.scheduler_info().get("workers", {})) or 1
        limit = 2 * n + 2
        done, inflight, state = as_completed(), {}, None

        def fill():
            while len(inflight) < limit:
                case = source()
                if case is None or case is WAIT:
                    return case
                fut = client.submit(_safe, case, pure=False)
                inflight[fut.key] = case
                done.add(fut)
            return "full"

        state = fill()
        while inflight or state is WAIT:
            if not inflight:
                time.sleep(0.5)
                state = fill()
                continue
            fut = next(done)
            case = inflight.pop(fut.key)
            try:
                yield case, fut.result(), False
            except KilledWorker as exc:
                yield case, f"dask worker died ({exc})", True
            fut.release()
            state = fill()
    finally:
        if own:
            client.close()
