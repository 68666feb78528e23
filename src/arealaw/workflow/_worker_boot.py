"""The first code a worker process runs: its guards against outliving the parent, then its loop.

:class:`~arealaw.workflow._workers.WorkerPool` starts each worker with :func:`runpy.run_path` on
this file, so the guards are armed before anything of arealaw (or of the work function) is
imported: that import takes seconds, and a parent killed meanwhile would otherwise leave the
worker importing on.  Standard library only; the work function is imported afterwards by name.
"""

import ctypes
import importlib
import os
import signal
import sys
import threading
import time

#: ``run_name`` under which :func:`runpy.run_path` runs this file in a worker.
RUN_NAME = "__arealaw_worker__"
#: prctl option: signal sent to this process when its parent dies (linux/prctl.h).
_PR_SET_PDEATHSIG = 1
#: Seconds between a worker's checks that its parent is alive.
PARENT_POLL_SECONDS = 0.5


def _watch_parent(parent_pid):
    while True:
        time.sleep(PARENT_POLL_SECONDS)
        if os.getppid() != parent_pid:
            os._exit(3)  # orphaned: the sweep that wanted the result is gone


def _die_with_parent():
    """Ask Linux to SIGKILL this process when its parent dies (prctl PR_SET_PDEATHSIG).

    The kernel does this even while a long LAPACK call holds the GIL, which would stall the
    polling thread until the call returns.  Elsewhere the polling thread alone serves.
    """
    if not sys.platform.startswith("linux"):
        return
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (OSError, AttributeError):
        pass


def guard(parent_pid):
    """Exit with the parent (death signal and polling thread); Ctrl-C is the parent's to handle."""
    # Ctrl-C goes to the whole process group: the parent handles it and stops the workers.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _die_with_parent()
    if os.getppid() != parent_pid:
        os._exit(3)  # the parent died before the death signal was armed
    threading.Thread(target=_watch_parent, args=(parent_pid,), daemon=True).start()


def resolve(name):
    """The function named ``'module:qualname'``."""
    module, _, qualname = name.partition(":")
    obj = importlib.import_module(module)
    for part in qualname.split("."):
        obj = getattr(obj, part)
    return obj


def serve(conn, target):
    """Apply ``target`` to each case received on ``conn`` and send back the result."""
    while True:
        try:
            case = conn.recv()
        except (EOFError, OSError):
            return
        if case is None:
            return
        conn.send(target(case))


if __name__ == RUN_NAME:
    # conn, parent_pid and target come from WorkerPool through run_path's init_globals
    guard(parent_pid)  # noqa: F821
    serve(conn, resolve(target))  # noqa: F821
