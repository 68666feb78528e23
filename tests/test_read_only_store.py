"""A store in a read-only folder, read by real processes that the permissions bind.

The suite usually runs as root, whom file permissions do not bind (CAP_DAC_OVERRIDE).  Root
processes here run under ``setpriv`` with the permission-overriding capabilities dropped from
their bounding set, so a folder of mode 0555 is as read-only to them as to any user; a non-root
user needs no help.
"""

import os
import shutil
import sqlite3
import stat
import subprocess
import sys

import pytest

from arealaw.workflow._scenario import Case, load_scenario
from arealaw.workflow._store import ResultStore
from arealaw.workflow._sweep import run_cases

#: Capabilities that let root write or read regardless of permission bits (capabilities(7)).
_OVERRIDES = "-dac_override,-dac_read_search,-fowner,-linux_immutable"

SCENARIO = """
[numerics]
method = "dense"
[lattices.chain]
shape = [40]
mass = 0.2
[[family]]
name = "boxes"
box = {from = 4, to = 12, step = 2}
"""


def _bound_by_permissions():
    """Command prefix under which folder permissions apply; None when nothing can drop them."""
    if os.geteuid() != 0:
        return []
    setpriv = shutil.which("setpriv")
    return None if setpriv is None else [setpriv, f"--bounding-set={_OVERRIDES}"]


PREFIX = _bound_by_permissions()
pytestmark = pytest.mark.skipif(PREFIX is None or not sys.platform.startswith("linux"),
                                reason="running as root without setpriv: permissions do not apply")
ENV = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}


def _arealaw(*args, cwd):
    return subprocess.run([*PREFIX, sys.executable, "-m", "arealaw", *map(str, args)], env=ENV,
                          capture_output=True, text=True, timeout=300, cwd=cwd)


@pytest.fixture
def read_only_store(tmp_path):
    scenario = tmp_path / "s.toml"
    scenario.write_text(SCENARIO)
    folder = tmp_path / "ro"
    store = folder / "r.sqlite"
    with ResultStore(store) as st:
        summary = run_cases(load_scenario(scenario).cases, st, progress=False)
    assert summary.failed == [] and summary.done == 5
    before = store.read_bytes()
    folder.chmod(stat.S_IRUSR | stat.S_IXUSR | stat.S_IRGRP | stat.S_IXGRP)
    yield scenario, store, before
    folder.chmod(stat.S_IRWXU)


def test_permissions_bind_the_test_processes(read_only_store):
    """The mechanism works: a process of the test cannot create a file in the folder."""
    _, store, _ = read_only_store
    probe = subprocess.run([*PREFIX, sys.executable, "-c",
                            f"open({str(store.parent / 'x')!r}, 'w')"], capture_output=True,
                           text=True, timeout=60)
    assert probe.returncode != 0 and "Permission denied" in probe.stderr


def test_reading_commands_work_and_run_says_why_not(read_only_store, tmp_path):
    scenario, store, before = read_only_store
    store.chmod(0o444)
    # a clean run leaves a WAL-mode store without its -wal and -shm files
    assert sorted(p.name for p in store.parent.iterdir()) == ["r.sqlite"]
    # (read from the header, not with SQLite: this root process would create them)
    assert before[18:20] == b"\x02\x02"  # file format versions 2: WAL mode (SQLite file format, 1.3)
    res = _arealaw("results", "--store", store, "--json", cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    assert res.stdout.count('"entropy"') == 5  # boxes 4, 6, 8, 10, 12
    fit = _arealaw("fit", "--store", store, cwd=tmp_path)
    assert fit.returncode == 0 and "boxes" in fit.stdout, fit.stderr
    report = _arealaw("report", "--store", store, "--out", tmp_path / "rep.html", "--quiet",
                      "--no-figure-files", cwd=tmp_path)
    assert report.returncode == 0, report.stderr
    assert (tmp_path / "rep.html").stat().st_size > 0
    run = _arealaw("run", scenario, "--store", store, "--no-progress", cwd=tmp_path)
    assert run.returncode == 2
    assert run.stderr.count("\n") == 1 and "Traceback" not in run.stderr
    assert "read-only" in run.stderr and "--store" in run.stderr
    store.chmod(0o644)  # a writable file in the read-only folder: SQLite's journal cannot be made
    run = _arealaw("run", scenario, "--store", store, "--no-progress", cwd=tmp_path)
    assert run.returncode == 2 and run.stderr.count("\n") == 1, run.stderr
    assert "not writable" in run.stderr and "writable folder" in run.stderr
    assert store.read_bytes() == before
    assert sorted(p.name for p in store.parent.iterdir()) == ["r.sqlite"]


def test_unmerged_wal_in_read_only_folder_is_not_silently_skipped(tmp_path):
    """Results still in the -wal file (a killed run) cannot be read without the -shm file the
    read-only folder forbids: refused with what to do, never a table missing those rows."""
    folder = tmp_path / "ro"
    folder.mkdir()
    store = folder / "r.sqlite"
    with ResultStore(store) as st:
        st.put(Case({"shape": [8], "mass": 0.5}, {"box": [4]}),
               {"entropy": 0.1, "error_bound": 1e-12, "seconds": 0.0})
        holder = sqlite3.connect(store)  # a reader that keeps the WAL from being merged at close
        holder.execute("PRAGMA wal_autocheckpoint=0")
        holder.execute("SELECT COUNT(*) FROM cases").fetchone()
        st._conn.execute("PRAGMA wal_autocheckpoint=0")
        st.put(Case({"shape": [8], "mass": 0.6}, {"box": [4]}),
               {"entropy": 0.2, "error_bound": 1e-12, "seconds": 0.0})
    copy = tmp_path / "copy"
    copy.mkdir()
    for name in ("r.sqlite", "r.sqlite-wal"):
        shutil.copy(folder / name, copy / name)  # as a killed run leaves them: no -shm
    holder.close()
    assert (copy / "r.sqlite-wal").stat().st_size > 0
    copy.chmod(0o555)
    try:
        res = _arealaw("results", "--store", copy / "r.sqlite", "--json", cwd=tmp_path)
    finally:
        copy.chmod(0o755)
    assert res.returncode == 2 and res.stderr.count("\n") == 1, (res.stdout, res.stderr)
    assert "r.sqlite-wal" in res.stderr and "writable" in res.stderr
