"""The SQLite store: round trips, and survival of a kill -9 in the middle of a sweep."""

import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest
from numpy.testing import assert_allclose

from arealaw.workflow import Case, ResultStore, load_scenario
from arealaw.workflow._sweep import compute_case


def _case(n=8, mass=0.5):
    return Case({"shape": [n], "mass": mass}, {"box": [n // 2], "origin": [0]}, method="dense")


def test_put_and_rows_round_trip_across_reopen(tmp_path):
    path = tmp_path / "r.sqlite"
    c = _case()
    res = compute_case(c)
    with ResultStore(path) as st:
        st.put(c, res)
        run = st.run_id
    with ResultStore(path) as st:
        assert st.has(c.key) and len(st) == 1 and not st.has(_case(mass=0.4).key)
        (row,) = st.rows()
    assert row["case"] == c.key and row["run_id"] == run
    assert row["entropy"] == res["entropy"] and row["renyi"] == res["renyi"]
    assert row["spec"]["network"] == {"shape": [8], "mass": 0.5}


def test_not_a_store_is_a_value_error(tmp_path):
    bad = tmp_path / "bad.sqlite"
    bad.write_bytes(b"this is not sqlite at all" * 100)
    with pytest.raises(ValueError, match="not an arealaw result store"):
        ResultStore(bad)


KILL_SCENARIO = """
title = "kill test"
[numerics]
method = "dense"
[lattices.square]
shape = [20, 20]
mass = {from = 0.1, to = 2.0, step = 0.04}
[[family]]
name = "boxes"
box = [4, 4]
"""


def test_store_survives_kill_9_and_rerun_recomputes_nothing_finished(tmp_path):
    scen = tmp_path / "kill.toml"
    scen.write_text(KILL_SCENARIO)
    store = tmp_path / "kill.sqlite"
    cmd = [sys.executable, "-m", "arealaw", "run", str(scen), "--store", str(store),
           "--no-progress"]
    env = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        deadline = time.monotonic() + 120
        n = 0
        while time.monotonic() < deadline and proc.poll() is None:
            if store.exists():
                try:
                    with sqlite3.connect(store, timeout=5) as con:
                        n = con.execute("SELECT COUNT(*) FROM cases").fetchone()[0]
                except sqlite3.OperationalError:  # table not created yet
                    n = 0
                if n >= 3:
                    break
            time.sleep(0.02)
        assert proc.poll() is None, "the sweep ended before it could be killed"
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.kill()
        proc.wait()
    total = len(load_scenario(scen).cases)
    with sqlite3.connect(store) as con:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        before = dict(con.execute("SELECT case_key, computed_at || ' ' || run_id FROM cases"))
    assert 3 <= len(before) < total
    with ResultStore(store) as st:  # finished cases hold intact, correct numbers
        by_key = {r["case"]: r for r in st.rows()}
    cases = {c.key: c for c in load_scenario(scen).cases}
    for key in list(before)[:3]:
        assert_allclose(by_key[key]["entropy"], compute_case(cases[key])["entropy"], rtol=1e-12)
    out = subprocess.run(cmd, env=env, capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    assert f"{total - len(before)} cases computed, {len(before)} already stored" in out.stdout
    with sqlite3.connect(store) as con:
        after = dict(con.execute("SELECT case_key, computed_at || ' ' || run_id FROM cases"))
    assert set(after) == set(cases)
    assert all(after[k] == v for k, v in before.items())  # not recomputed


def _file_state(path):
    return path.read_bytes(), sorted(p.name for p in path.parent.iterdir())


def test_foreign_sqlite_file_is_refused_and_left_untouched(tmp_path):
    path = tmp_path / "other.sqlite"
    with sqlite3.connect(path) as con:
        con.execute("CREATE TABLE notes (x TEXT)")
        con.execute("INSERT INTO notes VALUES ('keep me')")
    con.close()
    before = _file_state(path)
    for mode in ("r", "w"):
        with pytest.raises(ValueError, match="another program .*notes.* does not modify"):
            ResultStore(path, mode=mode)
    assert _file_state(path) == before  # no table added, journal mode unchanged


def test_other_version_is_not_mixed_in(tmp_path):
    path = tmp_path / "r.sqlite"
    old = Case({"shape": [8], "mass": 0.5}, {"box": [4]}, version="0.0.1")
    with ResultStore(path, version="0.0.1") as st:
        st.put(old, {"entropy": 0.1, "error_bound": 1e-12, "seconds": 0.0})
    with pytest.raises(ValueError, match=r"arealaw 0\.0\.1 .* not mixed: run into a new --store"):
        ResultStore(path)
    with ResultStore(path, mode="r") as st:  # still readable, and says which version it holds
        assert st.versions() == ["0.0.1"] and len(st) == 1


def test_read_only_open_changes_nothing_and_reads(tmp_path):
    path = tmp_path / "r.sqlite"
    c = _case()
    with ResultStore(path) as st:
        st.put(c, compute_case(c))
    before = path.read_bytes()
    with ResultStore(path, mode="r") as st:
        assert st.has(c.key) and len(st.rows()) == 1
        with pytest.raises(ValueError, match="read-only"):
            st.put(c, {})
    assert path.read_bytes() == before


def test_older_layout_and_empty_and_missing(tmp_path):
    path = tmp_path / "old.sqlite"
    with sqlite3.connect(path) as con:
        con.execute("CREATE TABLE cases (case_key TEXT PRIMARY KEY, result TEXT)")
        con.execute("CREATE TABLE runs (run_id TEXT)")
    con.close()
    with pytest.raises(ValueError, match="older table layout .*new --store"):
        ResultStore(path, mode="r")
    with pytest.raises(ValueError, match="does not exist"):
        ResultStore(tmp_path / "missing.sqlite", mode="r")
    assert not (tmp_path / "missing.sqlite").exists()
    (tmp_path / "empty.sqlite").write_bytes(b"")
    with ResultStore(tmp_path / "empty.sqlite", mode="r") as st:
        assert st.rows() == [] and len(st) == 0


def test_first_release_layout_is_read_and_upgraded(tmp_path):
    # a store written before stores recorded their schema: same tables, no meta
    from arealaw.workflow import _store
    path = tmp_path / "v1.sqlite"
    c = _case()
    with sqlite3.connect(path) as con:
        con.executescript(_store.SCHEMA.split("CREATE TABLE IF NOT EXISTS meta")[0])
    con.close()
    with ResultStore(path, mode="r") as st:
        assert st.schema == 1 and st.rows() == []
    with ResultStore(path) as st:
        st.put(c, compute_case(c))
        assert st.schema == _store.SCHEMA_VERSION


def test_claims_share_cases_between_two_open_stores(tmp_path):
    path = tmp_path / "r.sqlite"
    c = _case()
    with ResultStore(path) as a, ResultStore(path) as b:
        assert a.claim(c.key) and not b.claim(c.key)
        assert b.claimed_elsewhere([c.key]) == {c.key}
        a.release(c.key)
        assert b.claim(c.key) and not a.claim(c.key)
    with ResultStore(path) as a:  # closing released b's claim
        assert a.claim(c.key)
