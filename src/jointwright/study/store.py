"""The study store: one SQLite file holding the study definition and every finished case.

Tables (see docs/study-format.md for the full schema):

``study``
    one row: store format version, study hash, the study definition and base project (JSON),
    varied parameter paths, package version, creation time.
``cases``
    one row per finished case (``case_id`` unique): parameters as JSON plus one column
    ``"param:<path>"`` per varied parameter, status ``done``/``failed``, error and traceback
    summary, one column ``"metric:<name>"`` per metric (added with ALTER TABLE the first time a
    name appears), the full result as JSON, wall time, worker.
``runs``
    one row per call of the runner: start/finish time, host, back-end, workers, counts, status.

Every finished case is written in its own transaction (WAL journal, synchronous=FULL), so a run
killed at any point keeps every case that finished before it. No pickle: everything is JSON,
text or numbers.

One writer at a time: :meth:`StudyStore.open` takes an exclusive lock on ``<store>.lock`` (an
operating-system file lock, released by the kernel when the process ends, however it ends) and
writes its pid, host and start time there, so a second writer is refused with a message naming
the first. Readers take no lock. A run found still marked ``running`` by the next writer (its
process was killed) is marked ``interrupted``.
"""

from __future__ import annotations

import json
import socket
import sqlite3
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from .lock import WriterLock, _now
from .store_file import (
    STORE_FORMAT,
    backup_store,
    damaged,
    move_aside,
    query,
    read_study_row,
)

PARAM_PREFIX = "param:"
METRIC_PREFIX = "metric:"

_CASE_COLUMNS = (
    "case_id", "case_index", "variant", "task", "params", "status", "error", "traceback",
    "result", "wall_time", "worker", "finished", "run_id",
)  # fmt: skip

_SCHEMA = """
CREATE TABLE study (
    format_version INTEGER NOT NULL,
    study_hash TEXT NOT NULL,
    name TEXT NOT NULL,
    definition TEXT NOT NULL,
    base_file TEXT NOT NULL,
    base_project TEXT NOT NULL,
    parameters TEXT NOT NULL,
    case_count INTEGER NOT NULL,
    package_version TEXT NOT NULL,
    created TEXT NOT NULL
);
CREATE TABLE runs (
    run_id INTEGER PRIMARY KEY AUTOINCREMENT,
    started TEXT NOT NULL,
    finished TEXT,
    host TEXT NOT NULL,
    backend TEXT NOT NULL,
    workers INTEGER,
    package_version TEXT NOT NULL,
    cases_done INTEGER NOT NULL DEFAULT 0,
    cases_failed INTEGER NOT NULL DEFAULT 0,
    status TEXT NOT NULL CHECK (status IN ('running', 'complete', 'interrupted'))
);
CREATE TABLE cases (
    case_id TEXT PRIMARY KEY,
    case_index INTEGER NOT NULL,
    variant TEXT,
    task TEXT NOT NULL,
    params TEXT NOT NULL,
    status TEXT NOT NULL CHECK (status IN ('done', 'failed')),
    error TEXT,
    traceback TEXT,
    result TEXT,
    wall_time REAL,
    worker TEXT,
    finished TEXT,
    run_id INTEGER REFERENCES runs(run_id)
);
"""


def quote_identifier(name: str) -> str:
    """SQL identifier in double quotes with inner quotes doubled (safe for any text)."""
    if "\x00" in name:
        raise ValueError("identifier contains a NUL character")
    return '"' + name.replace('"', '""') + '"'


def _sql_value(v: Any) -> Any:
    """A parameter or metric value as SQLite stores it (text, integer, real or NULL)."""
    if isinstance(v, bool):
        return int(v)
    if v is None or isinstance(v, (int, float, str)):
        return v
    return json.dumps(v, sort_keys=True)


@dataclass(frozen=True)
class CaseRecord:
    """What a worker reports for one case (everything JSON-able; ``result`` already JSON text)."""

    status: str  # "done" or "failed"
    metrics: dict = field(default_factory=dict)
    result: str | None = None
    error: str | None = None
    traceback: str | None = None
    wall_time: float = 0.0
    worker: str = ""


class StudyStore:
    """Read-write access to one study's SQLite file. The runner's parent process alone writes,
    and only one process at a time (see :class:`WriterLock`).

    Use :meth:`open`; close with :meth:`close` (or as a context manager).
    """

    def __init__(self, path: Path, conn: sqlite3.Connection, lock: WriterLock | None = None):
        self.path, self._conn, self._lock = path, conn, lock
        try:
            cols = [r[1] for r in conn.execute("PRAGMA table_info(cases)")]
        except sqlite3.DatabaseError as exc:
            raise damaged(path, exc) from None
        self._columns = {c.lower(): c for c in cols}

    # -------------------------------------------------------------------------- opening
    @classmethod
    def open(cls, path: str | Path, spec, case_count: int, *, restart: bool = False) -> StudyStore:
        """Open the store for ``spec`` (a :class:`~jointwright.study.spec.StudySpec`), creating it.

        An existing store made for another study hash is refused with :class:`InputError`
        unless ``restart`` is true; ``restart`` always starts a fresh file, first copying the old
        one to ``<name>.<UTC time>.bak``.
        """
        path = Path(path)
        lock = WriterLock(path)
        lock.acquire(path)
        try:
            return cls._open_locked(path, spec, case_count, restart, lock)
        except BaseException:
            lock.release()
            raise

    @classmethod
    def _open_locked(cls, path: Path, spec, case_count: int, restart: bool, lock) -> StudyStore:
        if path.exists() and _never_created(path):
            for suffix in ("", "-wal", "-shm"):  # a run killed while creating it: start afresh
                Path(f"{path}{suffix}").unlink(missing_ok=True)
        if path.exists():
            try:
                old = read_study_row(path)
            except InputError as exc:
                if not (restart and "damaged" in exc.rule):
                    raise
                old = None
                move_aside(path)  # a damaged store is kept byte for byte, not copied by SQLite
            if old is None:
                pass
            elif restart:
                backup_store(path)
            elif old["study_hash"] != spec.hash:
                raise InputError(
                    str(path), "study.hash",
                    f"this store holds study {old['name']!r} (hash {old['study_hash'][:12]}) but "
                    f"the study and base project now hash to {spec.hash[:12]}: the study file or "
                    "base project changed. Restart to start anew (the old store is kept as a "
                    "backup), or use another store file",
                )  # fmt: skip
            else:
                store = cls(path, _connect(path), lock)
                store._close_dead_runs()
                return store
        conn = _connect(path)
        try:
            _create(conn, spec, case_count)
        except sqlite3.Error as exc:
            conn.close()
            raise InputError(str(path), "(file)", f"cannot create the store ({exc})") from None
        return cls(path, conn, lock)

    def _close_dead_runs(self) -> None:
        """Runs still marked ``running`` belong to processes that ended without saying so (we
        hold the writer lock, so none is alive): mark them ``interrupted``."""
        try:
            self._conn.execute("UPDATE runs SET status = 'interrupted' WHERE status = 'running'")
        except sqlite3.DatabaseError as exc:
            raise damaged(self.path, exc) from None

    def close(self) -> None:
        """Close the connection (finished cases are already committed) and release the lock."""
        try:
            self._conn.close()
        finally:
            if self._lock is not None:
                self._lock.release()

    def __enter__(self) -> StudyStore:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # ------------------------------------------------------------------------- queries
    def statuses(self) -> dict[str, str]:
        """case id -> status of every case in the store."""
        return dict(self._conn.execute("SELECT case_id, status FROM cases"))

    # -------------------------------------------------------------------------- writing
    def start_run(self, backend: str, workers: int | None) -> int:
        """Record the start of a run; returns its id."""
        from .. import __version__

        cur = self._conn.execute(
            "INSERT INTO runs (started, host, backend, workers, package_version, status) "
            "VALUES (?, ?, ?, ?, ?, 'running')",
            (_now(), socket.gethostname(), backend, workers, __version__),
        )
        assert cur.lastrowid is not None  # an INSERT sets it
        return int(cur.lastrowid)

    def finish_run(self, run_id: int, status: str, done: int, failed: int) -> None:
        """Record how a run ended (``complete`` or ``interrupted``)."""
        self._conn.execute(
            "UPDATE runs SET finished = ?, status = ?, cases_done = ?, cases_failed = ? "
            "WHERE run_id = ?",
            (_now(), status, done, failed, run_id),
        )

    def write(self, case, record: CaseRecord, run_id: int | None = None) -> CaseRecord:
        """Store one finished case in one transaction; returns the record as stored.

        A case already stored as ``done`` is never overwritten; a ``failed`` one is replaced.
        A metric whose name differs from an existing metric column only in letter case turns
        the record into a failure (SQLite column names ignore case).
        """
        record = self._check_metric_names(record)
        row = {
            "case_id": case.id, "case_index": case.index, "variant": case.variant,
            "task": case.task, "params": json.dumps(dict(case.assignments), sort_keys=True),
            "status": record.status, "error": record.error, "traceback": record.traceback,
            "result": record.result, "wall_time": record.wall_time, "worker": record.worker,
            "finished": _now(), "run_id": run_id,
        }  # fmt: skip
        row.update({PARAM_PREFIX + p: _sql_value(v) for p, v in case.values.items()})
        row.update({METRIC_PREFIX + m: _sql_value(v) for m, v in record.metrics.items()})
        conn = self._conn
        conn.execute("BEGIN IMMEDIATE")
        try:
            prior = conn.execute(
                "SELECT status FROM cases WHERE case_id = ?", (case.id,)
            ).fetchone()
            if prior is not None and prior[0] == "done":
                conn.execute("ROLLBACK")
                return record
            if prior is not None:
                conn.execute("DELETE FROM cases WHERE case_id = ?", (case.id,))
            if any(name.lower() not in self._columns for name in row):  # look again, then add
                self._columns = _column_names(conn)
            for name in row:
                if name.lower() not in self._columns:
                    conn.execute(f"ALTER TABLE cases ADD COLUMN {quote_identifier(name)}")
            names = ", ".join(quote_identifier(n) for n in row)
            marks = ", ".join("?" for _ in row)
            conn.execute(f"INSERT INTO cases ({names}) VALUES ({marks})", tuple(row.values()))
            conn.execute("COMMIT")
        except BaseException:
            try:  # SQLite may have rolled back already (a full disk does)
                if conn.in_transaction:
                    conn.execute("ROLLBACK")
                self._columns = _column_names(conn)
            except sqlite3.Error:
                pass
            raise
        self._columns.update({n.lower(): n for n in row})
        return record

    def _check_metric_names(self, record: CaseRecord) -> CaseRecord:
        for m in record.metrics:
            have = self._columns.get((METRIC_PREFIX + m).lower())
            if have is not None and have != METRIC_PREFIX + m:
                old = have[len(METRIC_PREFIX) :]
                rule = f"metric {m!r} differs from the stored metric {old!r} only in letter case"
                return CaseRecord("failed", error=f"ValueError: {rule}", wall_time=record.wall_time,
                                  worker=record.worker)  # fmt: skip
        return record


def _column_names(conn: sqlite3.Connection) -> dict[str, str]:
    """lower-case name -> name of every column of ``cases``, as the file has them now."""
    return {c[1].lower(): c[1] for c in conn.execute("PRAGMA table_info(cases)")}


def _never_created(path: Path) -> bool:
    """True for an empty file or an SQLite file without a single table: what a run killed
    before its first commit leaves (creating the tables is one transaction)."""
    try:
        if path.stat().st_size == 0:
            return True
        return not query(path, "SELECT name FROM sqlite_master")
    except (OSError, sqlite3.Error, InputError):
        return False


def _connect(path: Path) -> sqlite3.Connection:
    try:
        conn = sqlite3.connect(path, isolation_level=None, timeout=30.0)
        conn.execute("PRAGMA journal_mode=WAL")
        conn.execute("PRAGMA synchronous=FULL")
    except sqlite3.Error as exc:
        raise InputError(str(path), "(file)", f"cannot open the store as SQLite: {exc}") from None
    return conn


def _create(conn: sqlite3.Connection, spec, case_count: int) -> None:
    from .. import __version__
    from .spec import canonical_json

    params = [p.path for p in spec.parameters]
    conn.execute("BEGIN IMMEDIATE")
    for statement in _SCHEMA.split(";"):
        if statement.strip():
            conn.execute(statement)
    for p in params:
        conn.execute(f"ALTER TABLE cases ADD COLUMN {quote_identifier(PARAM_PREFIX + p)}")
    conn.execute(
        "INSERT INTO study VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (STORE_FORMAT, spec.hash, spec.name, canonical_json(spec.definition), str(spec.base_file),
         canonical_json(spec.base_project), json.dumps(params), case_count, __version__, _now()),
    )  # fmt: skip
    conn.execute("COMMIT")
