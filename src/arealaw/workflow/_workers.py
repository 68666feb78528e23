"""Local worker processes that survive each other's deaths and die with their parent.

A general-purpose pool loses track of which task a killed process was running (the whole pool
breaks), and its workers outlive a parent killed with SIGKILL.  Here each worker runs one case at
a time over its own pipe, so a dead worker's case is known: it is reported as lost (the sweep
retries it once) and the worker is replaced.  Every worker watches its parent, from its first
instructions on (:mod:`._worker_boot`), and exits within about a second of the parent's death,
however the parent died.
"""

import multiprocessing
import os
import runpy
import signal
import time
from multiprocessing.connection import wait

from . import _worker_boot

__all__ = ["WAIT", "WorkerPool", "usable_cores"]

#: Returned by a case source when no case can be handed out now but more may come later
#: (cases claimed by another run that is still computing them).
WAIT = object()

def usable_cores():
    """Cores this process may run on (its CPU affinity), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def describe_exit(code):
    """'killed by signal 9 (SIGKILL)' / 'exit status 1' for a process exit code."""
    if code is None:
        return "still running"
    if code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = "unknown signal"
        return f"killed by signal {-code} ({name})"
    return f"exit status {code}"


class _Worker:
    def __init__(self, ctx, target):
        self.conn, child = ctx.Pipe()
        # the worker runs _worker_boot as a script: its guards are armed before the seconds
        # of importing arealaw and the work function (named, not pickled, for that reason)
        given = {"conn": child, "parent_pid": os.getpid(),
                 "target": f"{target.__module__}:{target.__qualname__}"}
        self.proc = ctx.Process(target=runpy.run_path, args=(_worker_boot.__file__,),
                                kwargs={"init_globals": given,
                                        "run_name": _worker_boot.RUN_NAME},
                                daemon=True, name="arealaw-worker")
        self.proc.start()
        child.close()
        self.case = None

    def stop(self, timeout=2.0):
        try:
            self.conn.send(None)
        except (OSError, ValueError):
            pass
        self.proc.join(timeout)
        if self.proc.is_alive():
            self.proc.terminate()
            self.proc.join(timeout)
        self.conn.close()


class WorkerPool:
    """``n`` worker processes applying ``target`` (a picklable function) to cases.

    :meth:`run` pulls cases from ``source()`` (a callable returning a case, :data:`WAIT` or
    None when done) whenever a worker is free and yields ``(case, value, lost)``: ``value`` is
    ``target(case)``, or, when the worker died while computing it, a description of the death
    with ``lost`` True.  A dead worker is replaced.
    """

    def __init__(self, n, target):
        self.n = int(n)
        self.target = target
        self._ctx = multiprocessing.get_context("spawn")
        self._workers = []

    def start(self):
        """Start the worker processes; returns the pool."""
        self._workers = [_Worker(self._ctx, self.target) for _ in range(self.n)]
        return self

    def stop(self, *, abort=False):
        """Stop every worker (at once when ``abort``: after an error or Ctrl-C)."""
        for w in self._workers:
            w.stop(timeout=0.2 if abort else 2.0)
        self._workers = []

    def __enter__(self):
        return self.start()

    def __exit__(self, *exc):
        self.stop(abort=exc[0] is not None)

    def _replace(self, w):
        w.proc.join(1.0)
        how = describe_exit(w.proc.exitcode)
        w.conn.close()
        self._workers.remove(w)
        self._workers.append(_Worker(self._ctx, self.target))
        return how

    def run(self, source):
        done = False
        self._requeue = []
        while True:
            idle = [w for w in self._workers if w.case is None]
            waiting = False
            while idle and (self._requeue or not done):
                case = self._requeue.pop() if self._requeue else source()
                if case is None:
                    done = True
                elif case is WAIT:
                    waiting = True
                    break
                else:
                    w = idle.pop()
                    try:
                        w.conn.send(case)
                        w.case = case
                    except OSError:  # an idle worker died: not the case's fault
                        self._replace(w)
                        idle = [x for x in self._workers if x.case is None]
                        self._requeue.append(case)
            busy = [w for w in self._workers if w.case is not None]
            if not busy:
                if done:
                    return
                time.sleep(0.5 if waiting else 0.0)
                continue
            handles = {}
            for w in busy:
                handles[w.conn] = w
                handles[w.proc.sentinel] = w
            ready = wait(list(handles), timeout=0.5 if waiting else None)
            seen = set()
            for h in ready:
                w = handles[h]
                if id(w) in seen:
                    continue
                seen.add(id(w))
                case, w.case = w.case, None
                try:
                    value = w.conn.recv() if w.conn.poll() else None
                except (EOFError, OSError):
                    value = None
                if value is not None:
                    yield case, value, False
                    continue
                how = self._replace(w)
                yield case, f"worker process died ({how})", True
