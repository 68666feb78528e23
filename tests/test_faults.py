"""Faults with real processes: a killed worker, a killed parent, two runs on one store, Ctrl-C."""

import os
import signal
import sqlite3
import subprocess
import sys
import threading
import time

import pytest

from arealaw.workflow._scenario import load_scenario

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"),
                                reason="reads worker processes from /proc")

SCENARIO = """
[numerics]
method = "dense"
[lattices.square]
shape = [30, 30]
mass = {from = 0.1, to = %s, step = 0.1}
[[family]]
name = "boxes"
box = [8, 8]
"""

ENV = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}


def _scenario(tmp_path, top=0.4):
    path = tmp_path / "s.toml"
    path.write_text(SCENARIO % top)
    return path, len(load_scenario(path).cases)


#: Starts the command line as a terminal does: with Python's Ctrl-C handler installed.  A test
#: run started as a background job of a non-interactive shell inherits SIGINT ignored, and
#: Python keeps an ignored SIGINT ignored; a user at a terminal never has it so.
_AS_FROM_A_TERMINAL = ("import runpy, signal, sys; signal.signal(signal.SIGINT, "
                       "signal.default_int_handler); sys.argv[0] = 'arealaw'; "
                       "runpy.run_module('arealaw', run_name='__main__', alter_sys=True)")


def _run(scenario, store, *extra):
    cmd = [sys.executable, "-c", _AS_FROM_A_TERMINAL, "run", str(scenario), "--store",
           str(store), "--no-progress", *extra]
    return subprocess.Popen(cmd, env=ENV, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def _stat(pid):
    try:
        with open(f"/proc/{pid}/stat") as fh:
            fields = fh.read().rsplit(")", 1)[1].split()
    except OSError:
        return None
    return fields[0], int(fields[11]) + int(fields[12])  # state, utime + stime


def _workers(pid):
    """Worker processes of ``pid`` (spawned children, not multiprocessing's resource tracker)."""
    out = []
    for task in os.listdir(f"/proc/{pid}/task"):
        try:
            with open(f"/proc/{pid}/task/{task}/children") as fh:
                kids = [int(k) for k in fh.read().split()]
        except OSError:
            continue
        for k in kids:
            try:
                with open(f"/proc/{k}/cmdline", "rb") as fh:
                    cmd = fh.read()
            except OSError:
                continue
            if b"spawn_main" in cmd:
                out.append(k)
    return out


def _wait_for(predicate, timeout, what):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = predicate()
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError(f"timed out waiting for {what}")


def _stored(store):
    if not store.exists():
        return 0
    try:
        with sqlite3.connect(store, timeout=5) as con:
            return con.execute("SELECT COUNT(*) FROM cases").fetchone()[0]
    except sqlite3.OperationalError:
        return 0


def _busy_worker(pid):
    """A worker that is using CPU (computing a case) right now."""
    before = {w: _stat(w) for w in _workers(pid)}
    time.sleep(0.3)
    for w, st in before.items():
        now = _stat(w)
        if st and now and now[1] > st[1] and now[0] != "Z":
            return w
    return None


def test_killed_worker_case_is_retried_and_the_rest_finished(tmp_path):
    scenario, total = _scenario(tmp_path)
    store = tmp_path / "r.sqlite"
    proc = _run(scenario, store, "--workers", "2")
    try:
        _wait_for(lambda: _stored(store) >= 1, 120, "a first stored case")
        victim = _wait_for(lambda: _busy_worker(proc.pid), 60, "a busy worker")
        os.kill(victim, signal.SIGKILL)
        out, err = proc.communicate(timeout=180)
    finally:
        proc.kill()
    assert proc.returncode == 0, err
    assert "Traceback" not in err
    assert "worker process died (killed by signal 9 (SIGKILL)); computed again" in err
    assert f"{total} cases computed" in out
    assert _stored(store) == total


def test_workers_exit_when_the_parent_is_killed(tmp_path):
    scenario, _ = _scenario(tmp_path, top=2.0)
    store = tmp_path / "r.sqlite"
    proc = _run(scenario, store, "--workers", "2")
    try:
        # two stored cases: both workers have finished importing and armed their guards
        _wait_for(lambda: _stored(store) >= 2, 120, "two stored cases")
        workers = _wait_for(lambda: len(_workers(proc.pid)) == 2 and _workers(proc.pid), 60,
                            "two workers")
        _wait_for(lambda: _busy_worker(proc.pid), 60, "a busy worker")
        proc.send_signal(signal.SIGKILL)
        proc.wait(10)
        # dead (gone, or a zombie nobody reaps) within seconds, even mid-computation
        _wait_for(lambda: all(_stat(w) is None or _stat(w)[0] == "Z" for w in workers), 10,
                  "the workers to exit after their parent died")
    finally:
        proc.kill()
        proc.communicate()


def test_two_concurrent_runs_share_the_cases(tmp_path):
    scenario, total = _scenario(tmp_path)
    store = tmp_path / "r.sqlite"
    first = _run(scenario, store)
    second = _run(scenario, store)
    outs = [p.communicate(timeout=240) for p in (first, second)]
    for p, (out, err) in zip((first, second), outs):
        assert p.returncode == 0, err
    computed = [int(out.split(" cases computed")[0].split()[-1]) for out, _ in outs]
    assert sum(computed) == total  # every case computed exactly once between the two runs
    assert _stored(store) == total
    with sqlite3.connect(store) as con:
        assert con.execute("SELECT COUNT(*) FROM claims").fetchone()[0] == 0


def test_ctrl_c_says_how_to_resume(tmp_path):
    # 300 cases: enough that the run is still going when the signal arrives
    scenario, total = _scenario(tmp_path, top=30.0)
    store = tmp_path / "r.sqlite"
    proc = _run(scenario, store)
    try:
        _wait_for(lambda: _stored(store) >= 1, 120, "a first stored case")
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=60)
    finally:
        proc.kill()
    assert proc.returncode == 130
    assert "rerun the same command to resume" in err and "Traceback" not in err
    assert 1 <= _stored(store) < total


def test_dask_dead_worker_cases_are_resubmitted(tmp_path):
    # the scheduler resubmits a dead worker's case elsewhere; the sweep finishes every case
    distributed = pytest.importorskip("distributed")
    from arealaw.workflow._scenario import parse_scenario
    from arealaw.workflow._store import ResultStore
    from arealaw.workflow._sweep import run_cases
    sc = parse_scenario("""
[numerics]
method = "dense"
[lattices.square]
shape = [30, 30]
mass = {from = 0.1, to = 1.2, step = 0.1}
[[family]]
box = [8, 8]
""")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client, ResultStore(tmp_path / "r.sqlite") as st:
        pids = list(client.run(os.getpid).values())
        killer = threading.Timer(1.5, os.kill, (pids[0], signal.SIGKILL))
        killer.start()
        summary = run_cases(sc.cases, st, scheduler=client, progress=False)
        assert killer.finished.is_set()  # the worker died while the sweep was running
        killer.join()
        assert summary.done + len(summary.failed) == len(sc.cases)
        assert not summary.failed and len(st) == len(sc.cases)


SLOW_MODULE = """
import os
import time

if os.getpid() != int(os.environ["AREALAW_TEST_PARENT"]):
    time.sleep(60)  # importing this in a worker takes a minute, far longer than the test waits


def work(case):
    return case
"""

PARENT = """
if __name__ == "__main__":  # a spawned worker runs this file first: it must do nothing there
    import os
    import time

    os.environ["AREALAW_TEST_PARENT"] = str(os.getpid())
    import slow_work
    from arealaw.workflow._workers import WorkerPool

    pool = WorkerPool(1, slow_work.work).start()
    print(pool._workers[0].proc.pid, flush=True)
    time.sleep(300)
"""


def test_worker_exits_with_a_parent_killed_while_the_worker_imports(tmp_path):
    # the guards come before any import of arealaw or of the work function: a worker whose
    # imports take a minute still exits within seconds of its parent's death
    (tmp_path / "slow_work.py").write_text(SLOW_MODULE)
    (tmp_path / "parent.py").write_text(PARENT)
    path = os.pathsep.join(p for p in (str(tmp_path), ENV.get("PYTHONPATH")) if p)
    proc = subprocess.Popen([sys.executable, str(tmp_path / "parent.py")],
                            env={**ENV, "PYTHONPATH": path}, stdout=subprocess.PIPE, text=True)
    try:
        worker = int(proc.stdout.readline())
        time.sleep(1.0)  # the worker is past its start-up, inside the minute-long import
        assert _stat(worker) is not None and _stat(worker)[0] != "Z"
        proc.send_signal(signal.SIGKILL)
        proc.wait(10)
        _wait_for(lambda: _stat(worker) is None or _stat(worker)[0] == "Z", 10,
                  "the importing worker to exit after its parent died")
    finally:
        proc.kill()
        proc.communicate()
