"""SQLite result store: one row per finished case, keyed by the case's content hash.

Each case is committed in its own transaction (WAL journal), so a process killed at any moment
loses at most the cases still running; a rerun asks :meth:`ResultStore.has` and skips the rest.

A store says what it is: the SQLite header carries arealaw's application id and a ``meta`` table
records the table layout (``schema``) and the arealaw version that wrote it.  A file that is not
an arealaw store (another program's database) is never modified; read-only commands open the file
read-only (a store in a read-only folder stays readable); results of another arealaw version are
not mixed into a store (the case hash includes the version, so a rerun would silently add a second
copy of every case).  Concurrent runs on one store share the work: a run *claims* a case before
computing it, and skips cases claimed by another live run (SQLite's locking serialises claims).
"""

import json
import os
import socket
import sqlite3
import time
import uuid
from pathlib import Path
from urllib.parse import quote

from .._arguments import allowed_hint

__all__ = ["APPLICATION_ID", "SCHEMA_VERSION", "ResultStore"]

#: ``PRAGMA application_id`` of arealaw stores (ASCII 'ARLW').
APPLICATION_ID = 0x41524C57
#: Table layout written by this code.  1: the unversioned layout of the first release (tables
#: cases, runs and perhaps scenarios; no meta); 2: meta (schema, version) and claims added.
SCHEMA_VERSION = 2
#: A claim by a process on another machine (whose liveness cannot be checked) lapses after this.
CLAIM_LAPSE_SECONDS = 6 * 3600.0

CASES_COLUMNS = ("case_key", "family", "label", "x", "lattice", "spec", "result", "entropy",
                 "error_bound", "seconds", "computed_at", "run_id", "version")

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
CREATE TABLE IF NOT EXISTS meta (
    key    TEXT PRIMARY KEY,
    value  TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS claims (
    case_key    TEXT PRIMARY KEY,
    run_id      TEXT NOT NULL,
    host        TEXT NOT NULL,
    pid         INTEGER NOT NULL,
    claimed_at  REAL NOT NULL
);
"""

#: Columns of :meth:`ResultStore.rows` besides the result's own fields.
ROW_FIELDS = ("case", "family", "label", "x", "lattice", "computed_at", "run_id", "version")

_SQLITE_HEADER = b"SQLite format 3\x00"


def _version():
    from .._version import __version__
    return __version__


def _pid_alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class ResultStore:
    """Results of a sweep in one SQLite file.

    Parameters
    ----------
    path : str or Path
    mode : {'w', 'r'}
        ``'w'`` (default) creates the store if needed and writes results; ``'r'`` opens an existing
        store read-only and never changes the file.
    version : str, optional
        The arealaw version whose results are written (default: this one).  A store holding
        results of another version is refused for writing.

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

    def __init__(self, path, *, mode="w", version=None):
        if mode not in ("r", "w"):
            raise ValueError(f"mode={mode!r} must be 'r' (read-only) or 'w'")
        self.path = Path(path)
        self.mode = mode
        self.version = version or _version()
        self.run_id = uuid.uuid4().hex[:12]
        self._host, self._pid = socket.gethostname(), os.getpid()
        self._conn = None
        self.schema = self.created_version = None
        self._check_file()
        try:
            self._conn = self._connect()
        except sqlite3.DatabaseError as exc:
            raise ValueError(f"store {str(self.path)!r} is damaged ({exc}); rerun the scenario "
                             "into a new --store path") from None
        try:
            self._identify_when_free()
        except sqlite3.DatabaseError as exc:
            self.close()
            raise ValueError(f"store {str(self.path)!r} cannot be read as an arealaw result "
                             f"store ({exc})") from None
        except BaseException:
            self.close()
            raise

    # -- opening ------------------------------------------------------------------------------
    def _check_file(self):
        p, where = self.path, f"store {str(self.path)!r}"
        if p.is_dir():
            raise ValueError(f"{where} is a folder; give a file path, e.g. "
                             f"{str(p / 'results.sqlite')!r}")
        if p.exists():
            try:
                with open(p, "rb") as fh:
                    head = fh.read(len(_SQLITE_HEADER))
            except PermissionError:
                raise ValueError(f"{where} cannot be read (permission denied)") from None
            if head and head != _SQLITE_HEADER:
                raise ValueError(f"{where} is not an arealaw result store (not an SQLite file); "
                                 "give another --store path")
            if self.mode == "w" and not os.access(p, os.W_OK):
                raise ValueError(f"{where} is read-only; read it with 'arealaw results', or run "
                                 "into a writable copy or a new --store path")
        elif self.mode == "r":
            raise ValueError(f"{where} does not exist; run a scenario first (arealaw run "
                             "SCENARIO.toml --store PATH)")
        if self.mode == "w":
            folder = p.parent if str(p.parent) else Path(".")
            try:
                folder.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise ValueError(f"cannot create the folder {str(folder)!r} for {where} "
                                 f"({exc.strerror or exc}); choose another --store path") from None
            if not os.access(folder, os.W_OK | os.X_OK):
                raise ValueError(f"folder {str(folder)!r} of {where} is not writable (SQLite "
                                 "keeps its journal beside the store); choose a writable folder")

    def _connect(self):
        if self.mode == "w":
            return sqlite3.connect(str(self.path), timeout=30.0)
        uri = "file:" + quote(str(self.path.resolve()))
        try:
            conn = sqlite3.connect(uri + "?mode=ro", uri=True, timeout=30.0)
            conn.execute("SELECT name FROM sqlite_master").fetchall()
            return conn
        except sqlite3.OperationalError:
            # a WAL store in a read-only folder cannot create its -shm file: nobody can be
            # writing there, so reading the file as immutable is exact, unless results wait in
            # the -wal file (a killed run), which an immutable read would silently leave out
            wal = Path(str(self.path) + "-wal")
            if wal.exists() and wal.stat().st_size > 0:
                raise ValueError(f"store {str(self.path)!r} has results not yet merged from "
                                 f"{wal.name!r}, and its folder is read-only (SQLite cannot "
                                 "read them there); copy both files to a writable folder and "
                                 "read the copy") from None
            return sqlite3.connect(uri + "?immutable=1", uri=True, timeout=30.0)

    def _identify_when_free(self, patience=60.0):
        """:meth:`_identify`, retried while another run holds the lock.

        SQLite answers "database is locked" at once, without waiting for the busy timeout, when
        two connections would deadlock (both upgrading a read to a write, or changing the journal
        mode while the other writes): concurrent runs starting on one store meet exactly that.
        Identification and initialisation are idempotent, so retrying them is safe.
        """
        deadline = time.monotonic() + patience
        pause = 0.02
        while True:
            try:
                return self._identify()
            except sqlite3.OperationalError as exc:
                busy = "locked" in str(exc) or "busy" in str(exc)
                if not busy or time.monotonic() > deadline:
                    raise
                if self._conn.in_transaction:
                    self._conn.rollback()
                time.sleep(pause)
                pause = min(2 * pause, 0.5)

    def _tables(self):
        return {r[0] for r in self._conn.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table'")}

    def _identify(self):
        where = f"store {str(self.path)!r}"
        tables = self._tables()
        app_id = self._conn.execute("PRAGMA application_id").fetchone()[0]
        meta = {}
        if "meta" in tables:
            meta = dict(self._conn.execute("SELECT key, value FROM meta"))
        ours = app_id == APPLICATION_ID or meta.get("application") == "arealaw"
        if not tables and app_id == 0:
            self.schema = None  # a new (empty) file
        elif ours:
            self.schema = int(meta.get("schema", 0))
        elif {"cases", "runs"} <= tables and tables <= {"cases", "runs", "scenarios", "meta",
                                                         "claims"}:
            self.schema = 1  # the unversioned layout of the first release
        else:
            raise ValueError(f"{where} is an SQLite database of another program (tables: "
                             f"{', '.join(sorted(tables)) or 'none'}); arealaw does not modify "
                             "it: give a new --store path")
        if self.schema is not None and self.schema > SCHEMA_VERSION:
            raise ValueError(f"{where} was written by a newer arealaw (table layout "
                             f"{self.schema}, this arealaw reads up to {SCHEMA_VERSION}); "
                             "upgrade arealaw to read it")
        if self.schema is not None and "cases" in tables:
            cols = {r[1] for r in self._conn.execute("PRAGMA table_info(cases)")}
            missing = [c for c in CASES_COLUMNS if c not in cols]
            if missing:
                raise ValueError(f"{where} has an older table layout (cases without "
                                 f"{', '.join(missing)}) that this arealaw cannot read; rerun "
                                 "the scenario into a new --store path")
        self.created_version = meta.get("version")
        if self.mode == "w":
            self._check_versions(where)
            self._initialise()

    def _check_versions(self, where):
        if self.schema is None:
            return
        versions = self.versions()
        if self.created_version and self.created_version not in versions:
            versions.append(self.created_version)
        other = sorted(v for v in versions if v != self.version)
        if other:
            raise ValueError(f"{where} holds results of arealaw {', '.join(other)} and this is "
                             f"arealaw {self.version}; results of different versions are not "
                             "mixed: run into a new --store path (or use the store with arealaw "
                             f"{other[0]})")

    def _initialise(self):
        conn = self._conn
        conn.execute("PRAGMA journal_mode=WAL")
        conn.execute("PRAGMA synchronous=NORMAL")
        with conn:
            conn.executescript(SCHEMA)
            conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('application', 'arealaw')")
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('version', ?)", (self.version,))
            conn.execute("INSERT OR REPLACE INTO meta VALUES ('schema', ?)",
                         (str(SCHEMA_VERSION),))
        self.schema = SCHEMA_VERSION
        self.created_version = self.created_version or self.version

    # -- context ------------------------------------------------------------------------------
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self):
        """Release this run's remaining claims and close the file."""
        if self._conn is None:
            return
        try:
            if self.mode == "w" and self.schema == SCHEMA_VERSION:
                with self._conn:
                    self._conn.execute("DELETE FROM claims WHERE run_id = ?", (self.run_id,))
        except sqlite3.Error:
            pass  # closing must not hide the error that ended the run; stale claims lapse
        finally:
            self._conn.close()
            self._conn = None

    # -- reading ------------------------------------------------------------------------------
    def _has_cases(self):
        return self.schema is not None

    def __len__(self):
        if not self._has_cases():
            return 0
        return self._conn.execute("SELECT COUNT(*) FROM cases").fetchone()[0]

    def versions(self):
        """arealaw versions of the stored results, sorted."""
        if not self._has_cases():
            return []
        return sorted(r[0] for r in self._conn.execute("SELECT DISTINCT version FROM cases"))

    def keys(self):
        """Case keys of every stored result."""
        if not self._has_cases():
            return set()
        return {r[0] for r in self._conn.execute("SELECT case_key FROM cases")}

    def has(self, key):
        """True when a result for case ``key`` is stored."""
        if not self._has_cases():
            return False
        return self._conn.execute("SELECT 1 FROM cases WHERE case_key = ?",
                                  (key,)).fetchone() is not None

    def rows(self, family=None):
        """Stored cases as dicts: the result fields plus ``case``, ``family``, ``label``, ``x``,
        ``lattice``, ``computed_at``, ``run_id``, ``version`` and ``spec`` (the case content)."""
        if not self._has_cases():
            return []
        sql = ("SELECT case_key, family, label, x, lattice, computed_at, run_id, version, spec, "
               "result FROM cases")
        args = ()
        if family is not None:
            sql += " WHERE family = ?"
            args = (family,)
        where = f"store {str(self.path)!r}"
        try:
            found = self._conn.execute(sql + " ORDER BY family, x, label", args).fetchall()
            families = ([] if found or family is None else sorted(
                r[0] for r in self._conn.execute("SELECT DISTINCT family FROM cases")))
        except sqlite3.DatabaseError as exc:
            raise ValueError(f"{where} is damaged ({exc}); rerun the scenario into a new "
                             "--store path") from None
        if family is not None and not found:
            hint = allowed_hint(family, families, quoted=True) if families else "; it is empty"
            raise ValueError(f"{where} holds no results for family {family!r}{hint}")
        out = []
        for r in found:
            d = dict(zip(ROW_FIELDS, r[:8]))
            try:
                d["spec"] = json.loads(r[8])
                d.update(json.loads(r[9]))
            except (TypeError, ValueError) as exc:
                raise ValueError(f"{where}: the stored result of case {r[0]!r} cannot be read "
                                 f"({exc}); the file was changed outside arealaw: rerun the "
                                 "scenario into a new --store path") from None
            out.append(d)
        return out

    def runs(self):
        """Recorded runs, oldest first: dicts with run_id, title, source, started, text."""
        if not self._has_cases():
            return []
        if "scenarios" not in self._tables():  # a first-release store: no scenario texts
            sql = ("SELECT run_id, title, source, started, NULL FROM runs ORDER BY started")
        else:
            sql = ("SELECT r.run_id, r.title, r.source, r.started, s.text FROM runs r "
                   "LEFT JOIN scenarios s ON s.run_id = r.run_id ORDER BY r.started")
        return [dict(zip(("run_id", "title", "source", "started", "text"), r))
                for r in self._conn.execute(sql)]

    # -- writing ------------------------------------------------------------------------------
    def _writable(self):
        if self.mode != "w":
            raise ValueError(f"store {str(self.path)!r} was opened read-only")

    def begin_run(self, title="", source="", text=""):
        """Record a run; ``text`` is the scenario file itself (the report embeds it)."""
        self._writable()
        with self._conn:
            self._conn.execute("INSERT INTO runs VALUES (?, ?, ?, ?)",
                               (self.run_id, title, source, time.time()))
            if text:
                self._conn.execute("INSERT INTO scenarios VALUES (?, ?)", (self.run_id, text))
        return self.run_id

    def put(self, case, result):
        """Store one finished case atomically (one transaction) and drop its claim."""
        self._writable()
        if case.version != self.version:
            raise ValueError(f"case {case.family} {case.label} is of arealaw {case.version}, "
                             f"this store takes results of {self.version}")
        spec = json.dumps(case.to_dict(), sort_keys=True, allow_nan=True)
        res = json.dumps(result, allow_nan=True)
        with self._conn:
            self._conn.execute(
                "INSERT OR REPLACE INTO cases VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (case.key, case.family, case.label, case.x, case.lattice, spec, res,
                 result.get("entropy"), result.get("error_bound"), result.get("seconds"),
                 time.time(), self.run_id, case.version))
            self._conn.execute("DELETE FROM claims WHERE case_key = ?", (case.key,))

    def _claim_is_live(self, row, now):
        run_id, host, pid, claimed_at = row
        if run_id == self.run_id:
            return True
        if host == self._host:
            return _pid_alive(pid)
        return now - claimed_at < CLAIM_LAPSE_SECONDS

    def claim(self, key):
        """Claim case ``key`` for this run: False when it is stored or another live run has it.

        A claim of a process that has died (same machine), or older than
        ``CLAIM_LAPSE_SECONDS`` (another machine), is taken over.
        """
        self._writable()
        now = time.time()
        with self._conn:
            self._conn.execute("BEGIN IMMEDIATE")
            if self._conn.execute("SELECT 1 FROM cases WHERE case_key = ?", (key,)).fetchone():
                return False
            row = self._conn.execute("SELECT run_id, host, pid, claimed_at FROM claims WHERE "
                                     "case_key = ?", (key,)).fetchone()
            if row is not None and row[0] != self.run_id and self._claim_is_live(row, now):
                return False
            self._conn.execute("INSERT OR REPLACE INTO claims VALUES (?, ?, ?, ?, ?)",
                               (key, self.run_id, self._host, self._pid, now))
        return True

    def release(self, key):
        """Give up this run's claim of ``key`` (the case failed; a later run may retry it)."""
        self._writable()
        with self._conn:
            self._conn.execute("DELETE FROM claims WHERE case_key = ? AND run_id = ?",
                               (key, self.run_id))

    def claimed_elsewhere(self, keys):
        """The subset of ``keys`` claimed by other live runs (and not yet stored)."""
        if self.schema != SCHEMA_VERSION:
            return set()
        now = time.time()
        rows = self._conn.execute("SELECT case_key, run_id, host, pid, claimed_at FROM claims "
                                  "WHERE run_id != ?", (self.run_id,)).fetchall()
        keys = set(keys)
        return {r[0] for r in rows if r[0] in keys and self._claim_is_live(r[1:], now)}
