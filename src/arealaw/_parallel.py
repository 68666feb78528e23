"""Independent work units inside one computation, on local processes or a dask.distributed cluster.

One entropy computation holds work units that need nothing from each other: column blocks of the
sparse backend's shifted solves, parity sectors, partial waves, transverse momenta.  The caller
of the API says once where they may run (:func:`parallelism`: ``workers=N`` local processes,
joblib's ``'loky'`` backend, or ``scheduler=ADDRESS`` of a dask.distributed cluster, joblib's
``'dask'`` backend) and installs it for the computation with :func:`parallel_work`; the layers
below run their units through :func:`map_units`, which reads that setting.  Without one, each
stage keeps its own automatic choice (in process, or local processes where that pays).

Units are module-level functions of the package and their arguments are data (arrays, sparse
matrices, small objects), never file names: a worker needs only arealaw installed.  Each unit
runs with BLAS pinned to one thread (the parallelism is the workers').  Results come back in
the order of the units, so a parallel computation gives the serial one's numbers bit for bit.

Examples
--------
>>> import math
>>> with parallel_work(parallelism(workers=1)):
...     map_units(math.sqrt, [(4.0,), (9.0,)])
[2.0, 3.0]
"""

import contextlib
import contextvars
import os
from dataclasses import dataclass

from threadpoolctl import threadpool_limits

from ._arguments import whole_number
from ._progress import report

__all__ = ["Parallelism", "connect", "current_parallelism", "map_units", "parallel_work",
           "parallelism", "usable_cores", "width"]

#: Seconds :func:`connect` tries to reach a scheduler by default.
CONNECT_TIMEOUT = 20.0
#: Seconds work units wait for a cluster without workers to get one before giving up.
WAIT_FOR_WORKERS = 10.0

_CURRENT = contextvars.ContextVar("arealaw_parallelism", default=None)


@dataclass(frozen=True)
class Parallelism:
    """Where the work units of one computation run (made by :func:`parallelism`).

    ``workers`` local processes (1: in this process), or the dask.distributed ``scheduler``
    (an address such as ``'tcp://head:8786'``, or a ``distributed.Client``); neither: each
    stage decides (its automatic choice).
    """

    workers: int = None
    scheduler: object = None

    @property
    def is_automatic(self):
        """True when neither workers nor a scheduler was asked for."""
        return self.workers is None and self.scheduler is None

    def describe(self):
        """One phrase for results and messages: 'automatic', '2 local processes', ..."""
        if self.scheduler is not None:
            address = getattr(self.scheduler, "scheduler", None)
            address = getattr(address, "address", None) or self.scheduler
            return f"dask scheduler {address}" if isinstance(address, str) else "dask client"
        if self.workers is None:
            return "automatic"
        return "in process" if self.workers == 1 else f"{self.workers} local processes"


def parallelism(workers=None, scheduler=None):
    """Normalise the ``workers`` / ``scheduler`` arguments of the API into a :class:`Parallelism`.

    Parameters
    ----------
    workers : int, optional
        Local worker processes (>= 1; 1 computes in this process).
    scheduler : str or distributed.Client, optional
        A dask.distributed scheduler address (``'tcp://host:8786'``) or a connected client.

    Examples
    --------
    >>> parallelism(workers=2).describe()
    '2 local processes'
    >>> parallelism(workers=2, scheduler="tcp://head:8786")
    Traceback (most recent call last):
    ...
    ValueError: give workers=2 or scheduler='tcp://head:8786', not both
    """
    if isinstance(workers, Parallelism) and scheduler is None:
        return workers
    if workers is not None:
        workers = whole_number(workers, "workers", minimum=1)
    if scheduler is not None:
        if isinstance(scheduler, str):
            if not scheduler.strip() or any(c.isspace() for c in scheduler.strip()):
                raise ValueError(f"scheduler={scheduler!r} is not an address; give one such as "
                                 "'tcp://head-node:8786' (printed by 'dask scheduler')")
            scheduler = scheduler.strip()
        elif not (hasattr(scheduler, "submit") and hasattr(scheduler, "ncores")):
            raise ValueError(f"scheduler must be an address such as 'tcp://head-node:8786' or a "
                             f"distributed.Client, got {type(scheduler).__name__}")
        if workers is not None:
            # local processes or a cluster's workers: one place for the units, not two
            raise ValueError(f"give workers={workers} or scheduler={scheduler!r}, not both")
    return Parallelism(workers, scheduler)


def connect(address, *, timeout=CONNECT_TIMEOUT):
    """A dask.distributed ``Client`` for the scheduler at ``address`` (ValueError if unreachable).

    Workers must have arealaw installed (the same version: it is part of every case's hash).
    """
    try:
        from distributed import Client
    except ImportError:
        raise ValueError("--scheduler needs dask.distributed: pip install 'arealaw[cluster]'") \
            from None
    try:
        return Client(address, timeout=f"{float(timeout)}s")
    except (OSError, TimeoutError, ValueError, TypeError) as exc:
        why = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise ValueError(f"cannot reach the dask scheduler at {address!r} ({why}); start one "
                         "with 'dask scheduler' and workers with 'dask worker ADDRESS'") from None


@contextlib.contextmanager
def parallel_work(par):
    """Run the work units of the ``with`` block as ``par`` (a :class:`Parallelism`) says.

    A scheduler given as an address is connected here (one clear ValueError if it cannot be
    reached) and closed at the end; a client is used as given.
    """
    if par is None or par.is_automatic:
        yield par
        return
    client = None
    if isinstance(par.scheduler, str):
        client = connect(par.scheduler)
        par = Parallelism(None, client)
    token = _CURRENT.set(par)
    try:
        yield par
    finally:
        _CURRENT.reset(token)
        if client is not None:
            client.close()


def current_parallelism():
    """The :class:`Parallelism` installed by :func:`parallel_work`, or None (automatic)."""
    return _CURRENT.get()


def width(auto=1):
    """Units that can run at once: the workers asked for, the cluster's worker threads, or
    ``auto`` (the caller's automatic choice; -1: the usable cores) without a setting."""
    par = current_parallelism()
    if par is None or par.is_automatic:
        return usable_cores() if auto == -1 else max(1, int(auto))
    if par.scheduler is not None:
        return max(1, sum(par.scheduler.ncores().values()))
    return par.workers


def usable_cores():
    """Cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover (not Linux)
        return os.cpu_count() or 1


def _pinned(fn, args):
    # a unit runs with one BLAS thread: the parallelism is the workers', and threaded BLAS only
    # loses time to oversubscription on the shared machines this runs on
    with threadpool_limits(limits=1):
        return fn(*args)


def map_units(fn, units, *, auto=1, stage=None, batch_size=1, shared=()):
    """``[fn(*u) for u in units]``, run where :func:`parallel_work` says.

    Parameters
    ----------
    fn : callable
        A module-level function of the package (workers import it by name).
    units : sequence of tuple
        Arguments of each call: data, not file names.
    auto : int
        Processes to use when no setting is installed (1: in this process; -1: usable cores).
    stage : str, optional
        Progress stage reported once per finished unit when units run in other processes
        (units run in this process report their own progress).
    batch_size : int
        Units per task sent to a worker (many tiny units: send them in batches).
    shared : sequence
        Arguments that every unit takes (the very same objects, e.g. the lattice's matrix): on
        a cluster they are sent to every worker once, before the units, so that the scheduler
        can place units on any worker (data held by one worker would draw every unit there).

    Returns
    -------
    list
        The results, in the order of ``units``.
    """
    units = list(units)
    par = current_parallelism()
    if not units:
        return []
    if par is not None and par.scheduler is not None:
        from distributed import KilledWorker
        try:
            if sum(par.scheduler.ncores().values()) == 1:
                return _client_map(par.scheduler, fn, units, stage, shared)
            return _joblib_map(fn, units, stage, batch_size, backend="dask",
                               options={"client": par.scheduler, "scatter": list(shared),
                                        "wait_for_workers_timeout": WAIT_FOR_WORKERS},
                               n_jobs=-1, shared=shared)
        except TimeoutError:
            if sum(par.scheduler.ncores().values()):
                raise
            raise ConnectionError(f"the dask scheduler has no workers (waited "
                                  f"{WAIT_FOR_WORKERS:g} s); start some with 'dask worker "
                                  "ADDRESS'") from None
        except KilledWorker as exc:
            raise ConnectionError(f"a dask worker died computing a work unit ({exc}); is it "
                                  "out of memory? use fewer workers per machine, or no "
                                  "scheduler") from None
    n = min(width(auto), len(units))
    if n <= 1:
        # pinned here too: a unit's numbers must not depend on where it ran (threaded BLAS
        # may round differently)
        return [_pinned(fn, u) for u in units]
    return _joblib_map(fn, units, stage, batch_size, backend="loky", options={}, n_jobs=n)


class _SharedSlot:
    """Stands in a unit's arguments for the ``index``-th shared argument (see :func:`_unit`)."""

    __slots__ = ("index",)

    def __init__(self, index):
        self.index = index


def _unit(fn, spec, *shared):
    args = tuple(shared[a.index] if isinstance(a, _SharedSlot) else a for a in spec)
    return _pinned(fn, args)


def _specs(units, shared):
    """The units with a :class:`_SharedSlot` in place of each shared object (by identity)."""
    slot = {id(obj): _SharedSlot(k) for k, obj in enumerate(shared)}
    return [tuple(slot.get(id(a), a) for a in u) for u in units]


def _client_map(client, fn, units, stage, shared):
    # A cluster of one worker thread, through the client itself: joblib runs the calls of a
    # pool of one in the calling process, which is not where the user sent them (a laptop
    # driving a cluster would compute the whole case itself).
    from distributed import as_completed
    held = client.scatter(list(shared), broadcast=True) if shared else []
    futures = [client.submit(_unit, fn, spec, *held, pure=False)
               for spec in _specs(units, shared)]
    if stage is not None:
        report(stage, 0, len(units))
        for done, _ in enumerate(as_completed(futures), start=1):
            report(stage, done, len(units))
    return client.gather(futures)


def _joblib_map(fn, units, stage, batch_size, *, backend, options, n_jobs, shared=()):
    import joblib
    # The shared objects go to each call as its own top-level arguments, and the units carry
    # slots in their place: joblib's dask backend swaps a scattered object for its future only
    # where it is a call's argument itself, and a unit's tuple is sent whole, so before this
    # every unit shipped the lattice's matrix again (12 x ~90 MB through the scheduler on the
    # 10^6-site case).
    tasks = (joblib.delayed(_unit)(fn, spec, *shared) for spec in _specs(units, shared))
    out = []
    with joblib.parallel_config(backend=backend, n_jobs=n_jobs, **options):
        results = joblib.Parallel(return_as="generator", batch_size=batch_size)(tasks)
        if stage is not None:
            report(stage, 0, len(units))
        for r in results:
            out.append(r)
            if stage is not None:
                report(stage, len(out), len(units))
    return out
