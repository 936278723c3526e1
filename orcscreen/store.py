"""The run store: one SQLite file per output directory, ``DIR/run.sqlite``.

Every finished case is one row of table ``cases`` keyed by its case key, written and committed
as soon as its worker returns, so a run killed at any moment (SIGKILL included) loses only the
cases that were in flight. The database runs in WAL mode: readers (plots, report) can read while
a run writes. Table ``meta`` holds the run's provenance (orcscreen and CoolProp versions, study
hash, name and JSON, created/updated timestamps).

Table ``cases`` also records which cases belong to the *current* study: ``case_index`` is the
case's position in the study's case order, or NULL for a case kept from an earlier version of the
study (it stays in the file, so going back to the old study recomputes nothing, but it is left out
of :meth:`RunStore.rows` and :meth:`RunStore.counts`). See :meth:`RunStore.set_plan`.

A lock file ``DIR/run.lock`` held with ``fcntl.flock`` for the lifetime of a run refuses a second
run on the same directory (:class:`StoreLockedError`). The kernel releases the lock when the
process dies, however it dies, so a killed run never leaves a stale lock behind.

Durability: ``synchronous=NORMAL`` in WAL mode keeps every committed transaction across a crash
of the process (the case here); only a power loss or OS crash may drop the last commits
(SQLite documentation, "Write-Ahead Logging" and "PRAGMA synchronous").
"""

from __future__ import annotations

import contextlib
import fcntl
import json
import math
import os
import sqlite3
from collections.abc import Iterable, Iterator, Mapping
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any, NamedTuple

import pandas as pd

__all__ = [
    "STORE_FILE",
    "LOCK_FILE",
    "SCHEMA_VERSION",
    "StoreError",
    "StoreLockedError",
    "StoreNotFoundError",
    "RunStore",
    "EncodedCase",
    "encode_case",
    "orcscreen_version",
    "to_json",
]

STORE_FILE = "run.sqlite"
LOCK_FILE = "run.lock"
SCHEMA_VERSION = 1

_SCHEMA = """
CREATE TABLE IF NOT EXISTS cases (
    case_key    TEXT PRIMARY KEY,
    case_index  INTEGER,
    fluid       TEXT,
    layout      TEXT,
    sweep       TEXT NOT NULL,
    status      TEXT NOT NULL,
    reason      TEXT NOT NULL,
    row         TEXT NOT NULL,
    detail      TEXT,
    elapsed_s   REAL,
    finished_at TEXT NOT NULL
);
CREATE INDEX IF NOT EXISTS cases_by_index ON cases (case_index);
CREATE TABLE IF NOT EXISTS meta (
    key   TEXT PRIMARY KEY,
    value TEXT
);
"""


class StoreError(RuntimeError):
    """The run store cannot be used; the message says why and what to do."""


class StoreLockedError(StoreError):
    """Another run holds the lock of this output directory."""


class StoreNotFoundError(StoreError, FileNotFoundError):
    """No run store in the given directory (and the caller asked not to create one)."""


def orcscreen_version() -> str:
    """Installed version of orcscreen (package metadata), "unknown" if not installed."""
    try:
        return metadata.version("orcscreen")
    except metadata.PackageNotFoundError:
        return "unknown"


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def _plain(value: Any) -> Any:
    """json.dumps fallback: numpy scalars and arrays, tuples, sets -> plain Python."""
    if hasattr(value, "tolist"):
        return value.tolist()
    if isinstance(value, (set, frozenset)):
        return sorted(value)
    raise TypeError(f"cannot store a value of type {type(value).__name__} as JSON: {value!r}")


def to_json(value: Any) -> str:
    """Compact JSON text of a result; key order is kept (the row keeps its column order).

    NaN and infinities are written as the JavaScript literals ``NaN``/``Infinity``, which
    Python's json module reads back as floats.
    """
    return json.dumps(value, default=_plain, ensure_ascii=False, separators=(",", ":"))


def _status_of(row: Mapping[str, Any]) -> str:
    status = row.get("status")
    return str(status) if status else "failed"


class EncodedCase(NamedTuple):
    """One finished case as it is written to table ``cases`` (JSON already encoded)."""

    case_key: str
    case_index: int | None
    fluid: str | None
    layout: str | None
    sweep: str
    status: str
    reason: str
    row: str
    detail: str
    elapsed_s: float | None
    finished_at: str


def encode_case(key: str, index: int | None, result: Mapping[str, Any],
                sweep: Mapping[str, Any] | None = None,
                elapsed_s: float | None = None) -> EncodedCase:
    """Encode one finished case for the store (arguments as in :meth:`RunStore.put`).

    Raises TypeError for a value that has no JSON form.
    """
    row = dict(result["row"])
    if sweep is None:
        sweep = result.get("sweep") or {}
    if elapsed_s is None:
        elapsed_s = result.get("elapsed_s", row.get("elapsed_s"))
    if elapsed_s is not None and not math.isfinite(float(elapsed_s)):
        elapsed_s = None
    return EncodedCase(key, index, row.get("fluid"), row.get("layout"), to_json(dict(sweep)),
                       _status_of(row), str(row.get("reason") or ""), to_json(row),
                       to_json(result.get("detail")),
                       None if elapsed_s is None else float(elapsed_s), _now())


class RunStore:
    """The SQLite run store of one output directory.

    ``RunStore(path)`` opens (and by default creates) ``path/run.sqlite``; ``path`` may also name
    the ``.sqlite`` file itself. With ``lock=True`` the run lock is taken first and held until
    :meth:`close` (or the end of the ``with`` block); a run that finds it taken raises
    :class:`StoreLockedError`. Readers need no lock. Use as a context manager::

        with RunStore(out_dir, lock=True) as store:
            store.put(key, index, {"row": row, "detail": detail}, sweep={...})
    """

    def __init__(self, path: str | os.PathLike[str], *, lock: bool = False,
                 create: bool = True) -> None:
        path = Path(path)
        if path.suffix == ".sqlite":
            self.directory, self.path = path.parent, path
        else:
            self.directory, self.path = path, path / STORE_FILE
        self._lock_fd: int | None = None
        self._conn: sqlite3.Connection | None = None
        if not create and not self.path.exists():
            raise StoreNotFoundError(
                f"no run store at {self.path}; run a study into {self.directory} first "
                "(orcscreen run STUDY.toml --out DIR)")
        try:
            self.directory.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(f"cannot create output directory {self.directory}: {exc.strerror}") from None
        if lock:
            self._acquire_lock()
        try:
            self._conn = sqlite3.connect(self.path, timeout=30.0, isolation_level=None)
            self._conn.execute("PRAGMA journal_mode=WAL")
            self._conn.execute("PRAGMA synchronous=NORMAL")
            self._conn.executescript(_SCHEMA)
            self._init_meta()
        except sqlite3.DatabaseError as exc:
            self.close()
            raise StoreError(f"{self.path} is not a usable orcscreen run store: {exc}") from None

    # -- lifetime -----------------------------------------------------------------------------
    def _acquire_lock(self) -> None:
        lock_path = self.directory / LOCK_FILE
        fd = os.open(lock_path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.pread(fd, 200, 0).decode("utf-8", "replace").strip() or "another process"
            os.close(fd)
            raise StoreLockedError(
                f"another orcscreen run is using {self.directory} ({holder}); wait for it to "
                "finish, stop it, or choose another output directory with --out") from None
        os.ftruncate(fd, 0)
        os.pwrite(fd, f"pid {os.getpid()}, started {_now()}\n".encode(), 0)
        self._lock_fd = fd

    def close(self) -> None:
        """Close the database and release the run lock (both idempotent)."""
        if self._conn is not None:
            self._conn.close()
            self._conn = None
        if self._lock_fd is not None:
            os.close(self._lock_fd)  # closing the descriptor releases the flock
            self._lock_fd = None

    def __enter__(self) -> RunStore:
        return self

    def __exit__(self, *exc_info: object) -> None:
        self.close()

    @property
    def locked(self) -> bool:
        """True while this object holds the run lock."""
        return self._lock_fd is not None

    @contextlib.contextmanager
    def _transaction(self) -> Iterator[sqlite3.Connection]:
        """One write transaction: BEGIN IMMEDIATE ... COMMIT, ROLLBACK on any error."""
        conn = self.conn
        conn.execute("BEGIN IMMEDIATE")
        try:
            yield conn
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        conn.execute("COMMIT")

    @property
    def conn(self) -> sqlite3.Connection:
        if self._conn is None:
            raise StoreError(f"run store {self.path} is closed")
        return self._conn

    # -- meta ---------------------------------------------------------------------------------
    def _init_meta(self) -> None:
        with self._transaction() as conn:
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)",
                         (json.dumps(SCHEMA_VERSION),))
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('created_at', ?)",
                         (json.dumps(_now()),))
        found = self.meta().get("schema_version")
        if found != SCHEMA_VERSION:
            raise StoreError(f"{self.path} has store schema version {found!r}; this orcscreen "
                             f"reads version {SCHEMA_VERSION}: use a new output directory")

    def meta(self) -> dict[str, Any]:
        """All meta entries: schema_version, created_at, updated_at, orcscreen_version,
        coolprop_version, study_hash, study_name, study (the study as a JSON-able dict)..."""
        return {k: json.loads(v) for k, v in self.conn.execute("SELECT key, value FROM meta")}

    def set_meta(self, **entries: Any) -> None:
        """Insert or replace meta entries (JSON-able values); also stamps ``updated_at``."""
        entries = {**entries, "updated_at": _now()}
        with self._transaction() as conn:
            conn.executemany("INSERT OR REPLACE INTO meta VALUES (?, ?)",
                                  [(k, to_json(v)) for k, v in entries.items()])

    # -- writing ------------------------------------------------------------------------------
    def put(self, key: str, index: int | None, result: Mapping[str, Any], *,
            sweep: Mapping[str, Any] | None = None, elapsed_s: float | None = None) -> None:
        """Store one finished case and commit at once.

        ``result`` is ``run_case``'s ``{"row": ..., "detail": ...}``; ``sweep`` the case's
        swept values (default ``result["sweep"]`` or ``{}``); ``elapsed_s`` [s] the wall time of
        the case (default ``result["elapsed_s"]`` then ``row["elapsed_s"]``). An existing entry
        with the same key is replaced.
        """
        self.put_many([(key, index, result, sweep, elapsed_s)])

    def put_many(self, records: Iterable[tuple]) -> int:
        """Store several finished cases in one transaction; returns how many.

        Each record is ``(key, index, result)`` optionally followed by ``sweep`` and
        ``elapsed_s`` as in :meth:`put`.
        """
        return self.put_encoded([encode_case(*rec) for rec in records])

    def put_encoded(self, cases: Iterable[EncodedCase]) -> int:
        """Store cases already encoded with :func:`encode_case` (e.g. by a worker process, which
        spares the driver the JSON work) in one transaction; returns how many."""
        rows = [tuple(c) for c in cases]
        if rows:
            with self._transaction() as conn:
                conn.executemany(
                    "INSERT OR REPLACE INTO cases VALUES (?,?,?,?,?,?,?,?,?,?,?)", rows)
        return len(rows)

    def set_plan(self, keys: Iterable[str]) -> None:
        """Declare the current study's cases: ``keys`` in case order (index 0, 1, ...).

        Stored cases get their index in this order; stored cases not in ``keys`` (from an
        earlier version of the study) get index NULL and drop out of :meth:`rows` and
        :meth:`counts`, but stay in the file. One transaction.
        """
        self.conn.execute("CREATE TEMP TABLE IF NOT EXISTS plan "
                          "(case_key TEXT PRIMARY KEY, case_index INTEGER)")
        with self._transaction() as conn:
            conn.execute("DELETE FROM temp.plan")
            conn.executemany("INSERT OR IGNORE INTO temp.plan VALUES (?, ?)",
                             ((k, i) for i, k in enumerate(keys)))
            conn.execute("UPDATE cases SET case_index = (SELECT p.case_index FROM "
                         "temp.plan AS p WHERE p.case_key = cases.case_key)")

    # -- reading ------------------------------------------------------------------------------
    def done_keys(self) -> set[str]:
        """Keys of every stored case (any status, current study or not)."""
        return {k for (k,) in self.conn.execute("SELECT case_key FROM cases")}

    def failed_keys(self) -> set[str]:
        """Keys of stored cases with status "failed"."""
        return {k for (k,) in self.conn.execute(
            "SELECT case_key FROM cases WHERE status = 'failed'")}

    def counts(self) -> dict[str, int]:
        """Number of current cases per status, e.g. ``{"ok": 40, "infeasible": 3}``."""
        return dict(self.conn.execute(
            "SELECT status, COUNT(*) FROM cases WHERE case_index IS NOT NULL "
            "GROUP BY status ORDER BY status"))

    def __len__(self) -> int:
        (n,) = self.conn.execute(
            "SELECT COUNT(*) FROM cases WHERE case_index IS NOT NULL").fetchone()
        return n

    def rows(self, *, include_stale: bool = False) -> pd.DataFrame:
        """The current cases as a table, in case order.

        Columns: ``case_key``, ``case_index``, one column per swept dotted path (in the order
        they first appear), then the row keys in the engine's order (keys missing from a row
        are NaN/None), then ``case_elapsed_s`` (the batch's wall time of the case [s]) and
        ``finished_at`` (UTC, ISO 8601). ``include_stale=True`` also returns cases of earlier
        study versions (``case_index`` NaN, sorted last by key).
        """
        where = "" if include_stale else "WHERE case_index IS NOT NULL"
        cursor = self.conn.execute(
            "SELECT case_key, case_index, sweep, row, elapsed_s, finished_at FROM cases "
            f"{where} ORDER BY case_index IS NULL, case_index, case_key")
        records, sweep_cols, row_cols = [], {}, {}
        for key, index, sweep_text, row_text, elapsed_s, finished_at in cursor:
            sweep = json.loads(sweep_text)
            row = json.loads(row_text)
            sweep_cols.update(dict.fromkeys(sweep))
            row_cols.update(dict.fromkeys(row))
            records.append({"case_key": key, "case_index": index, **sweep, **row,
                            "case_elapsed_s": elapsed_s, "finished_at": finished_at})
        columns = ["case_key", "case_index", *sweep_cols,
                   *(c for c in row_cols if c not in sweep_cols and c not in ("case_key", "case_index")),
                   "case_elapsed_s", "finished_at"]
        df = pd.DataFrame.from_records(records, columns=columns)
        if not include_stale and not df.empty:
            df["case_index"] = df["case_index"].astype("int64")
        return df

    def sweeps(self) -> dict[str, dict[str, Any]]:
        """Case key -> swept values of every current case."""
        return {k: json.loads(s) for k, s in self.conn.execute(
            "SELECT case_key, sweep FROM cases WHERE case_index IS NOT NULL")}

    def detail(self, key: str) -> dict[str, Any] | None:
        """The stored detail of one case (contract section 3; None when the case is not ok).

        Raises KeyError for a key that is not in the store.
        """
        found = self.conn.execute("SELECT detail FROM cases WHERE case_key = ?", (key,)).fetchone()
        if found is None:
            raise KeyError(f"case {key!r} is not in the run store {self.path}")
        return None if found[0] is None else json.loads(found[0])

    def iter_details(self, keys: Iterable[str]) -> Iterator[tuple[str, dict[str, Any] | None]]:
        """Yield ``(key, detail)`` for each of ``keys`` in the order given; unknown keys raise
        KeyError. One case's detail is in memory at a time."""
        for key in keys:
            yield key, self.detail(key)
