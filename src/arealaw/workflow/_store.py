"""SQLite result store: one row per finished case, keyed by the case's content hash.

Each case is committed in its own transaction (WAL journal), so a process killed at any moment
loses at most the cases still running; a rerun asks :meth:`ResultStore.has` and skips the rest.
"""

import json
import sqlite3
import time
import uuid
from pathlib import Path

__all__ = ["ResultStore"]

SCHEMA = """
CREATE TABLE IF NOT EXISTS cases (
    case_key     TEXT PRIMARY KEY,
    family       TEXT NOT NULL,
    label        TEXT NOT NULL,
    x            REAL,
    lattice      TEXT NOT NULL,
    spec         TEXT NOT NULL,
    result       TEXT NOT NULL,
    entropy      REAL,
    error_bound  REAL,
    seconds      REAL,
    computed_at  REAL NOT NULL,
    run_id       TEXT NOT NULL,
    version      TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS runs (
    run_id   TEXT PRIMARY KEY,
    title    TEXT,
    source   TEXT,
    started  REAL NOT NULL
);
CREATE TABLE IF NOT EXISTS scenarios (
    run_id   TEXT PRIMARY KEY,
    text     TEXT NOT NULL
);
"""

#: Columns of :meth:`ResultStore.rows` besides the result's own fields.
ROW_FIELDS = ("case", "family", "label", "x", "lattice", "computed_at", "run_id", "version")


class ResultStore:
    """Results of a sweep in one SQLite file.

    Examples
    --------
    >>> import tempfile, os
    >>> from arealaw.workflow._scenario import Case
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with ResultStore(os.path.join(d, "r.sqlite")) as st:
    ...         c = Case({"shape": [8], "mass": 0.5}, {"box": [4]})
    ...         st.put(c, {"entropy": 0.1, "error_bound": 1e-12, "seconds": 0.0})
    ...         st.has(c.key), len(st)
    (True, 1)
    """

    def __init__(self, path):
        self.path = Path(path)
        if self.path.parent and not self.path.parent.exists():
            self.path.parent.mkdir(parents=True, exist_ok=True)
        try:
            self._conn = sqlite3.connect(str(self.path), timeout=30.0)
            self._conn.execute("PRAGMA journal_mode=WAL")
            self._conn.execute("PRAGMA synchronous=NORMAL")
            self._conn.executescript(SCHEMA)
        except sqlite3.DatabaseError as exc:
            raise ValueError(f"{str(path)!r} is not an arealaw result store ({exc})") from None
        self.run_id = uuid.uuid4().hex[:12]

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self):
        self._conn.close()

    def __len__(self):
        return self._conn.execute("SELECT COUNT(*) FROM cases").fetchone()[0]

    def begin_run(self, title="", source="", text=""):
        """Record a run; ``text`` is the scenario file itself (the report embeds it)."""
        with self._conn:
            self._conn.execute("INSERT INTO runs VALUES (?, ?, ?, ?)",
                               (self.run_id, title, source, time.time()))
            if text:
                self._conn.execute("INSERT INTO scenarios VALUES (?, ?)", (self.run_id, text))
        return self.run_id

    def runs(self):
        """Recorded runs, oldest first: dicts with run_id, title, source, started, text."""
        sql = ("SELECT r.run_id, r.title, r.source, r.started, s.text FROM runs r "
               "LEFT JOIN scenarios s ON s.run_id = r.run_id ORDER BY r.started")
        return [dict(zip(("run_id", "title", "source", "started", "text"), r))
                for r in self._conn.execute(sql)]

    def keys(self):
        return {r[0] for r in self._conn.execute("SELECT case_key FROM cases")}

    def has(self, key):
        return self._conn.execute("SELECT 1 FROM cases WHERE case_key = ?",
                                  (key,)).fetchone() is not None

    def put(self, case, result):
        """Store one finished case atomically (one transaction)."""
        spec = json.dumps(case.to_dict(), sort_keys=True, allow_nan=True)
        res = json.dumps(result, allow_nan=True)
        with self._conn:
            self._conn.execute(
                "INSERT OR REPLACE INTO cases VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (case.key, case.family, case.label, case.x, case.lattice, spec, res,
                 result.get("entropy"), result.get("error_bound"), result.get("seconds"),
                 time.time(), self.run_id, case.version))

    def rows(self, family=None):
        """Stored cases as dicts: the result fields plus ``case``, ``family``, ``label``, ``x``,
        ``lattice``, ``computed_at``, ``run_id``, ``version`` and ``spec`` (the case content)."""
        sql = ("SELECT case_key, family, label, x, lattice, computed_at, run_id, version, spec, "
               "result FROM cases")
        args = ()
        if family is not None:
            sql += " WHERE family = ?"
            args = (family,)
        out = []
        for r in self._conn.execute(sql + " ORDER BY family, x, label", args):
            d = dict(zip(ROW_FIELDS, r[:8]))
            d["spec"] = json.loads(r[8])
            d.update(json.loads(r[9]))
            out.append(d)
        return out

    def families(self):
        return [r[0] for r in self._conn.execute(
            "SELECT family FROM cases GROUP BY family ORDER BY MIN(rowid)")]
