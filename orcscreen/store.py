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

Reading: rows are decoded :data:`ROWS_CHUNK` at a time (:meth:`RunStore.record_chunks`), and
tables are built chunk by chunk with the column types pandas would give one table built from all
rows at once (:class:`ColumnKinds`), so a large store is never held as a list of row dicts.
Meta entry ``revision`` counts the write transactions, so a reader can tell that nothing changed.
pandas is imported only by the functions that build tables.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import functools
import json
import math
import os
import sqlite3
import time
from collections.abc import Iterable, Iterator, Mapping
from datetime import datetime, timezone
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

from orcscreen.safe_files import OutputFolderError, describe_os_error, open_lock_file, refuse_link

if TYPE_CHECKING:  # pandas is imported where tables are built: not needed to run cases
    import pandas as pd

__all__ = [
    "STORE_FILE",
    "LOCK_FILE",
    "SCHEMA_VERSION",
    "StoreError",
    "StoreLockedError",
    "StoreNotFoundError",
    "StoreDamagedError",
    "SalvageReport",
    "salvage_store",
    "RunStore",
    "EncodedCase",
    "encode_case",
    "orcscreen_version",
    "to_json",
    "ColumnKinds",
    "ROWS_CHUNK",
]

STORE_FILE = "run.sqlite"
LOCK_FILE = "run.lock"
SCHEMA_VERSION = 1
ROWS_CHUNK = 1000
"""Rows decoded and turned into a table at a time when reading the store."""

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


class StoreDamagedError(StoreError):
    """The store file is damaged (SQLite reports a malformed page or not a database) or holds
    rows that cannot be decoded; a run salvages it (:func:`salvage_store`,
    :meth:`RunStore.drop_unreadable`)."""


#: SQLite's primary result codes of a damaged file (sqlite.org/rescode.html): SQLITE_CORRUPT,
#: SQLITE_NOTADB.
_DAMAGE_CODES = (11, 26)
#: ... of a full disk and of a file that cannot be written or opened: SQLITE_FULL,
#: SQLITE_READONLY, SQLITE_CANTOPEN, SQLITE_IOERR, SQLITE_PERM.
_FULL, _READONLY, _CANTOPEN, _IOERR, _PERM = 13, 8, 14, 10, 3


def _sqlite_code(exc: sqlite3.Error) -> int | None:
    code = getattr(exc, "sqlite_errorcode", None)
    return None if code is None else code & 0xFF


def is_damage(exc: BaseException) -> bool:
    """True for an SQLite error that means a damaged file (not a locked or full one)."""
    if not isinstance(exc, sqlite3.DatabaseError):
        return False
    code = _sqlite_code(exc)
    if code is not None:
        return code in _DAMAGE_CODES
    text = str(exc)
    return "malformed" in text or "not a database" in text


def _environment_error(exc: sqlite3.Error, path: Path) -> StoreError | None:
    """A StoreError naming ``path`` and what to do, for SQLite errors the user can fix (full
    disk, no permission, cannot open); None for others."""
    code = _sqlite_code(exc)
    text = str(exc)
    if code == _FULL or "disk is full" in text:
        return StoreError(describe_os_error(OSError(errno.ENOSPC, text), path))
    if code in (_READONLY, _PERM) or "readonly database" in text:
        return StoreError(describe_os_error(OSError(errno.EACCES, text), path))
    if code == _CANTOPEN or "unable to open database" in text:
        return StoreError(f"{path}: cannot open or create the run store ({text}); check that its "
                          "folder exists and is writable for you, or choose another with --out")
    if code == _IOERR or "disk I/O error" in text:
        return StoreError(f"{path}: the disk reported an input/output error ({text}); check the "
                          "disk (free space, permissions, health) or choose another folder with --out")
    return None


def orcscreen_version() -> str:
    """orcscreen's version (orcscreen/_version.py, which the package metadata reads too)."""
    from orcscreen._version import __version__

    return __version__


def _is_the_file_at(fd: int, path: Path) -> bool:
    """True when the open file fd is the file at path (same device and inode; a link at path is
    never followed), False when path is gone or is another file."""
    try:
        here, there = os.fstat(fd), os.stat(path, follow_symlinks=False)
    except OSError:
        return False
    return (here.st_dev, here.st_ino) == (there.st_dev, there.st_ino)


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


_KIND_SAMPLES: dict[str, Any] = {"none": None, "nan": math.nan, "bool": True, "int": 7,
                                 "float": 1.5, "str": "x", "object": []}
_KIND_OF_TYPE = {type(None): "none", bool: "bool", int: "int", float: "float", str: "str"}


def _kinds_of(values: Any) -> set[str]:
    """Kinds of the values of one object column: none, nan (also a missing key), bool, int,
    float (a finite or infinite float), str, object (lists, dicts...)."""
    import pandas as pd

    types = set(map(type, values))
    kinds = {_KIND_OF_TYPE.get(t, "object") for t in types if t is not float}
    null = pd.isna(values)
    if null.any():
        nulls = values[null]
        if any(v is None for v in nulls):
            kinds.add("none")
        if any(v is not None for v in nulls):
            kinds.add("nan")
    if float in types and any(type(v) is float for v in values[~null]):
        kinds.add("float")
    return kinds


class ColumnKinds:
    """The dtype each column would get in one table built from all rows at once.

    pandas infers a column's dtype from the kinds of values in it (float64 for numbers with
    gaps, int64 for whole numbers only, object for a mix of text and numbers...), never from
    one chunk of rows. This records the kinds seen in every chunk (:meth:`observe`, on object
    tables) and converts a chunk to the dtypes of the whole (:meth:`typed`); the dtype for a
    set of kinds is pandas' own inference on one sample value of each kind
    (``DataFrame.from_records``), which depends only on which kinds occur.
    """

    def __init__(self) -> None:
        self.kinds: dict[str, set[str]] = {}
        self.rows = 0

    def observe(self, frame: pd.DataFrame) -> None:
        """Add the kinds of the values of ``frame`` (object columns, as read from the store)."""
        for name in frame.columns:
            self.kinds.setdefault(name, set()).update(_kinds_of(frame[name].to_numpy()))
        for name in self.kinds:
            if name not in frame.columns and len(frame):
                self.kinds[name].add("nan")  # absent from this chunk: missing, like a lost key
        self.rows += len(frame)

    def add_column(self, name: str) -> None:
        """A column first seen after earlier chunks: missing (NaN) in them."""
        if name not in self.kinds:
            self.kinds[name] = {"nan"} if self.rows else set()

    def dtype(self, name: str):
        return _dtype_for(frozenset(self.kinds.get(name, ())))

    def typed(self, frame: pd.DataFrame) -> pd.DataFrame:
        """``frame`` (object columns) with each column in the dtype of the whole table."""
        out = {}
        for name in frame.columns:
            dtype = self.dtype(name)
            out[name] = frame[name] if dtype == object else frame[name].astype(dtype)
        import pandas as pd

        return pd.DataFrame(out, index=frame.index, columns=frame.columns)


@functools.lru_cache(maxsize=None)
def _dtype_for(kinds: frozenset[str]):
    import pandas as pd

    samples = [{"c": _KIND_SAMPLES[k]} for k in sorted(kinds)]
    return pd.DataFrame.from_records(samples, columns=["c"])["c"].dtype


def object_frame(records: list[dict], columns: list[str]) -> pd.DataFrame:
    """Records as a table of object columns (values as decoded; a missing key is NaN, as in
    ``DataFrame.from_records``)."""
    import pandas as pd

    return pd.DataFrame(records, columns=columns, dtype=object)


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
    return EncodedCase(key, index, row.get("coolprop_name") or row.get("fluid"), row.get("layout"), to_json(dict(sweep)),
                       _status_of(row), str(row.get("reason") or ""), to_json(row),
                       to_json(result.get("detail")),
                       None if elapsed_s is None else float(elapsed_s), _now())


def _decoded(rec: tuple) -> tuple:
    key, index, sweep_text, row_text, elapsed_s, finished_at = rec
    try:
        sweep, row = json.loads(sweep_text), json.loads(row_text)
        if not isinstance(sweep, dict) or not isinstance(row, dict):
            raise ValueError("not a JSON object")
    except (TypeError, ValueError) as exc:
        raise StoreDamagedError(
            f"case {key} of the run store cannot be read ({type(exc).__name__}: {exc}); run the "
            "study again into the same folder: orcscreen keeps the readable cases and "
            "recomputes the unreadable ones") from None
    return key, index, sweep, row, elapsed_s, finished_at


#: SQL test of a stored JSON text that Python's json module reads back as an object (a row)
#: or as any value (a detail). NaN and Infinity, which Python writes and SQLite's JSON
#: functions refuse, are replaced by 0 for the test (sqlite.org/json1.html).
def _json_sql(column: str) -> str:
    return f"replace(replace({column}, 'NaN', '0'), 'Infinity', '0')"


def _object_sql(column: str) -> str:
    """1 when ``column`` holds JSON text of an object (evaluated lazily: CASE stops early)."""
    j = _json_sql(column)
    return (f"CASE WHEN typeof({column}) != 'text' THEN 0 WHEN NOT json_valid({j}) THEN 0 "
            f"ELSE json_type({j}) = 'object' END")


_UNREADABLE_SQL = (
    f"SELECT case_key FROM cases WHERE NOT ({_object_sql('sweep')}) OR NOT ({_object_sql('row')}) "
    f"OR (detail IS NOT NULL AND NOT (CASE WHEN typeof(detail) != 'text' THEN 0 "
    f"ELSE json_valid({_json_sql('detail')}) END))"
)


def _readable_json(text: Any, want_object: bool) -> bool:
    """Python fallback of :data:`_UNREADABLE_SQL` for an SQLite without JSON functions."""
    if not isinstance(text, str):
        return False
    try:
        value = json.loads(text)
    except ValueError:
        return False
    return isinstance(value, dict) or not want_object


def table_columns(sweep_cols: Iterable[str], row_cols: Iterable[str]) -> list[str]:
    """Column order of :meth:`RunStore.rows` from the sweep and row keys in order of first
    appearance."""
    sweep_cols = list(sweep_cols)
    return ["case_key", "case_index", *sweep_cols,
            *(c for c in row_cols if c not in sweep_cols and c not in ("case_key", "case_index")),
            "case_elapsed_s", "finished_at"]


class RunStore:
    """The SQLite run store of one output directory.

    ``RunStore(path)`` opens (and by default creates) ``path/run.sqlite``; ``path`` may also name
    the ``.sqlite`` file itself. With ``lock=True`` the run lock is taken first and held until
    :meth:`close` (or the end of the ``with`` block); a run that finds it taken raises
    :class:`StoreLockedError` (``purpose`` "report" marks a report's hold, which another report
    waits up to ``wait_s`` [s] for). With ``create=False`` the store must exist and nothing is
    written on opening (a reader). With ``salvage=True`` (and the lock) a file that SQLite
    cannot open as a database is set aside and rebuilt from its readable rows
    (``salvage_report`` says what was kept). Readers need no lock. Use as a context manager::

        with RunStore(out_dir, lock=True) as store:
            store.put(key, index, {"row": row, "detail": detail}, sweep={...})
    """

    def __init__(self, path: str | os.PathLike[str], *, lock: bool = False,
                 create: bool = True, purpose: str = "run", wait_s: float = 0.0,
                 salvage: bool = False) -> None:
        path = Path(path)
        if path.suffix == ".sqlite":
            self.directory, self.path = path.parent, path
        else:
            self.directory, self.path = path, path / STORE_FILE
        self._lock_fd: int | None = None
        self._conn: sqlite3.Connection | None = None
        self.salvage_report: SalvageReport | None = None
        if not create and not self.path.exists():
            raise StoreNotFoundError(
                f"no run store at {self.path}; run a study into {self.directory} first "
                "(orcscreen run STUDY.toml --out DIR)")
        try:
            self.directory.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(describe_os_error(exc, self.directory, "create")) from None
        try:
            refuse_link(self.path)  # SQLite would follow a link and write to its target
        except OutputFolderError as exc:
            raise StoreError(str(exc)) from None
        if lock:
            self._acquire_lock(purpose, wait_s)
        try:
            try:
                self._connect(create)
            except StoreDamagedError:
                if not (salvage and lock):
                    raise
                self.salvage_report = salvage_store(self.path)  # under the lock
                self._connect(create)
        except BaseException:
            self.close()
            raise

    def _connect(self, create: bool = True) -> None:
        """Open the SQLite connection; with ``create`` also the schema and meta (a writer),
        else only check the schema version (a reader writes nothing)."""
        try:
            self._conn = sqlite3.connect(self.path, timeout=30.0, isolation_level=None)
            if create:
                self._conn.execute("PRAGMA journal_mode=WAL")
                self._conn.execute("PRAGMA synchronous=NORMAL")
                self._conn.executescript(_SCHEMA)
                self._init_meta()
            else:
                self._check_schema_version()
        except BaseException as exc:
            if self._conn is not None:
                with contextlib.suppress(sqlite3.Error):
                    self._conn.close()
                self._conn = None
            if isinstance(exc, sqlite3.DatabaseError):
                raise self.error_for(exc) from None
            if isinstance(exc, OSError):
                raise StoreError(describe_os_error(exc, self.path)) from None
            raise

    def salvage(self) -> SalvageReport:
        """Rebuild this (damaged) store from its readable rows (:func:`salvage_store`) and
        reconnect to the new file; the run lock, if held, stays held."""
        if self._conn is not None:
            with contextlib.suppress(sqlite3.Error):
                self._conn.close()
            self._conn = None
        report = salvage_store(self.path)
        self._connect(create=True)
        return report

    def error_for(self, exc: sqlite3.Error) -> StoreError:
        """The StoreError (path, what went wrong, what to do) for an SQLite error on this store."""
        if is_damage(exc):
            return StoreDamagedError(
                f"{self.path} is not a usable orcscreen run store: the file is damaged ({exc}); "
                f"run the study again into {self.directory}: orcscreen sets the damaged file "
                "aside, keeps the readable cases and recomputes the rest")
        found = _environment_error(exc, self.path)
        if found is not None:
            return found
        return StoreError(f"{self.path} is not a usable orcscreen run store: {exc}; choose "
                          "another output folder with --out")

    # -- lifetime -----------------------------------------------------------------------------
    def _acquire_lock(self, purpose: str = "run", wait_s: float = 0.0) -> None:
        """Take the run lock (flock(2) on ``DIR/run.lock``, opened without following a link).

        ``purpose`` is written into the lock file ("run" or "report") so that a refused caller
        can say who holds it. ``wait_s`` [s]: wait up to this long while another *report* holds
        the lock (a run holding it refuses at once: it may take hours).
        """
        lock_path = self.directory / LOCK_FILE
        try:
            fd = open_lock_file(lock_path)
        except OutputFolderError as exc:
            raise StoreError(str(exc)) from None
        deadline = time.monotonic() + max(0.0, wait_s)
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                if _is_the_file_at(fd, lock_path):
                    break
                # the holder removed the file as it finished: lock the one now there instead
                os.close(fd)
                fd = open_lock_file(lock_path)
                continue
            except BlockingIOError:
                holder = os.pread(fd, 200, 0).decode("utf-8", "replace").strip()
                if (not holder or holder.endswith(", report")) and time.monotonic() < deadline:
                    time.sleep(0.1)
                    continue
                os.close(fd)
                if holder.endswith(", report"):
                    raise StoreLockedError(
                        f"{self.directory}: an orcscreen report is being built there ({holder}); "
                        "wait for it to finish and try again") from None
                raise StoreLockedError(
                    f"another orcscreen run is using {self.directory} ({holder or 'another process'}); "
                    "wait for it to finish, stop it, or choose another output directory with "
                    "--out") from None
            except OSError as exc:
                os.close(fd)
                raise StoreError(describe_os_error(exc, lock_path)) from None
        try:
            os.ftruncate(fd, 0)
            tail = "" if purpose == "run" else f", {purpose}"
            os.pwrite(fd, f"pid {os.getpid()}, started {_now()}{tail}\n".encode(), 0)
        except OSError as exc:
            os.close(fd)
            raise StoreError(describe_os_error(exc, lock_path)) from None
        self._lock_fd = fd

    def close(self) -> None:
        """Close the database and release the run lock (both idempotent); the lock file is
        removed first, while still held (a waiter that then gets the lock on the removed file
        sees that it is gone and locks the path's new file: :meth:`_acquire_lock`)."""
        if self._conn is not None:
            self._conn.close()
            self._conn = None
        if self._lock_fd is not None:
            lock_path = self.directory / LOCK_FILE
            if _is_the_file_at(self._lock_fd, lock_path):
                with contextlib.suppress(OSError):
                    os.unlink(lock_path)
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
    def _transaction(self, bump: bool = True) -> Iterator[sqlite3.Connection]:
        """One write transaction: BEGIN IMMEDIATE ... COMMIT, ROLLBACK on any error; with
        ``bump`` it also adds one to the meta entry ``revision``. An SQLite error the user can
        fix (full disk, no permission, damaged file) becomes a :class:`StoreError` that says so.
        """
        conn = self.conn
        try:
            conn.execute("BEGIN IMMEDIATE")
            try:
                yield conn
                if bump:
                    conn.execute("UPDATE meta SET value = CAST(value AS INTEGER) + 1 "
                                 "WHERE key = 'revision'")
            except BaseException:
                with contextlib.suppress(sqlite3.Error):
                    conn.execute("ROLLBACK")
                raise
            conn.execute("COMMIT")
        except sqlite3.DatabaseError as exc:
            if conn.in_transaction:
                with contextlib.suppress(sqlite3.Error):
                    conn.execute("ROLLBACK")
            error = self.error_for(exc)
            if type(error) is StoreError and not is_damage(exc) and _environment_error(exc, self.path) is None:
                raise  # not the user's to fix: an internal error
            raise error from None

    @property
    def conn(self) -> sqlite3.Connection:
        if self._conn is None:
            raise StoreError(f"run store {self.path} is closed")
        return self._conn

    # -- meta ---------------------------------------------------------------------------------
    def _init_meta(self) -> None:
        with self._transaction(bump=False) as conn:
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)",
                         (json.dumps(SCHEMA_VERSION),))
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('created_at', ?)",
                         (json.dumps(_now()),))
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('revision', '0')")
        self._check_schema_version()

    def _check_schema_version(self) -> None:
        row = self.conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
        try:
            found = json.loads(row[0]) if row else None
        except (TypeError, ValueError):
            found = row[0]
        if found != SCHEMA_VERSION:
            raise StoreError(f"{self.path} has store schema version {found!r}; this orcscreen "
                             f"reads version {SCHEMA_VERSION}: use a new output directory")

    def meta(self) -> dict[str, Any]:
        """All meta entries: schema_version, created_at, updated_at, orcscreen_version,
        coolprop_version, study_hash, study_name, study (the study as a JSON-able dict),
        revision..."""
        entries = {}
        for key, value in self.conn.execute("SELECT key, value FROM meta"):
            try:
                entries[key] = json.loads(value)
            except (TypeError, ValueError):  # a damaged entry: left out, the rest is kept
                continue
        return entries

    def revision(self) -> int:
        """Number of write transactions on the store so far (cases, plan, meta): equal numbers
        mean unchanged contents."""
        found = self.conn.execute("SELECT value FROM meta WHERE key = 'revision'").fetchone()
        try:
            return int(json.loads(found[0])) if found else 0
        except (TypeError, ValueError):
            return -1  # damaged: never equal to a revision written before

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

    def record_chunks(self, *, include_stale: bool = False, chunk: int | None = None,
                      indexes: Iterable[int] | None = None) -> Iterator[list[tuple]]:
        """Decoded current cases in case order, ``chunk`` (default :data:`ROWS_CHUNK`) at a
        time: lists of ``(case_key, case_index, sweep dict, row dict, elapsed_s, finished_at)``.

        ``indexes``: only the cases of these case indexes, in the order given (one chunk per
        call of the underlying query: a range when they are consecutive, else a list).
        ``include_stale`` as in :meth:`rows`. A damaged file or an undecodable row raises
        :class:`StoreDamagedError`.
        """
        try:
            yield from self._record_chunks(include_stale=include_stale, chunk=chunk,
                                           indexes=indexes)
        except sqlite3.DatabaseError as exc:
            raise self.error_for(exc) from None
        except StoreDamagedError as exc:
            raise StoreDamagedError(f"{self.path}: {exc}") from None

    def _record_chunks(self, *, include_stale: bool = False, chunk: int | None = None,
                       indexes: Iterable[int] | None = None) -> Iterator[list[tuple]]:
        columns = "case_key, case_index, sweep, row, elapsed_s, finished_at"
        chunk = chunk or ROWS_CHUNK
        if indexes is not None:
            wanted = list(indexes)
            for start in range(0, len(wanted), chunk):
                part = wanted[start:start + chunk]
                low, high = min(part), max(part)
                if high - low + 1 == len(part):
                    found = self.conn.execute(
                        f"SELECT {columns} FROM cases WHERE case_index BETWEEN ? AND ?",
                        (low, high)).fetchall()
                else:
                    found = []
                    for k in range(0, len(part), 500):  # SQLite's host-parameter limit
                        some = part[k:k + 500]
                        found += self.conn.execute(
                            f"SELECT {columns} FROM cases WHERE case_index IN "
                            f"({','.join('?' * len(some))})", some).fetchall()
                by_index = {rec[1]: rec for rec in found}
                yield [_decoded(by_index[i]) for i in part if i in by_index]
            return
        where = "" if include_stale else "WHERE case_index IS NOT NULL"
        cursor = self.conn.execute(
            f"SELECT {columns} FROM cases {where} "
            "ORDER BY case_index IS NULL, case_index, case_key")
        while True:
            found = cursor.fetchmany(chunk)
            if not found:
                return
            yield [_decoded(rec) for rec in found]

    def rows(self, *, include_stale: bool = False,
             columns: Iterable[str] | None = None) -> pd.DataFrame:
        """The current cases as a table, in case order.

        Columns: ``case_key``, ``case_index``, one column per swept dotted path (in the order
        they first appear), then the row keys in the engine's order (keys missing from a row
        are NaN/None), then ``case_elapsed_s`` (the batch's wall time of the case [s]) and
        ``finished_at`` (UTC, ISO 8601). ``include_stale=True`` also returns cases of earlier
        study versions (``case_index`` NaN, sorted last by key). ``columns``: keep only these
        row columns (those that exist, in the order above), with ``case_key``, ``case_index``
        and the swept values.

        Built :data:`ROWS_CHUNK` rows at a time, with the same column types as one table built
        from all rows at once.
        """
        import pandas as pd

        wanted = None if columns is None else {"case_key", "case_index", *columns}
        kinds = ColumnKinds()
        frames = []
        sweep_cols: dict[str, None] = {}
        row_cols: dict[str, None] = {}
        for records in self.record_chunks(include_stale=include_stale):
            dicts = []
            for key, index, sweep, row, elapsed_s, finished_at in records:
                sweep_cols.update(dict.fromkeys(sweep))
                row_cols.update(dict.fromkeys(row))
                dicts.append({"case_key": key, "case_index": index, **sweep, **row,
                              "case_elapsed_s": elapsed_s, "finished_at": finished_at})
            names = table_columns(sweep_cols, row_cols)
            if wanted is not None:
                names = [n for n in names if n in wanted or n in sweep_cols]
            for name in names:
                kinds.add_column(name)
            frame = object_frame(dicts, names)
            del dicts
            kinds.observe(frame)
            frames.append(frame)
        order = table_columns(sweep_cols, row_cols)
        if wanted is not None:
            order = [c for c in order if c in wanted or c in sweep_cols]
        if frames:
            df = kinds.typed(pd.concat(frames, ignore_index=True).reindex(columns=order))
        else:
            df = pd.DataFrame.from_records([], columns=order)
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
        if found[0] is None:
            return None
        try:
            return json.loads(found[0])
        except (TypeError, ValueError) as exc:
            raise StoreDamagedError(
                f"the detail of case {key} in {self.path} cannot be read ({exc}); run the study "
                "again into the same folder to recompute it") from None

    def iter_details(self, keys: Iterable[str]) -> Iterator[tuple[str, dict[str, Any] | None]]:
        """Yield ``(key, detail)`` for each of ``keys`` in the order given; unknown keys raise
        KeyError. One case's detail is in memory at a time."""
        for key in keys:
            yield key, self.detail(key)

    # -- damage and salvage -------------------------------------------------------------------
    @contextlib.contextmanager
    def snapshot(self) -> Iterator[RunStore]:
        """Read one consistent state of the store: every read inside the block sees the store
        as it was at the first one, whatever a writer commits meanwhile (a read transaction in
        WAL mode, sqlite.org/wal.html "Concurrency")."""
        conn = self.conn
        conn.execute("BEGIN")
        try:
            conn.execute("SELECT COUNT(*) FROM meta").fetchone()  # the snapshot starts here
            yield self
        finally:
            with contextlib.suppress(sqlite3.Error):
                conn.execute("COMMIT")

    def integrity_problem(self) -> str | None:
        """SQLite's quick check of the file (``PRAGMA quick_check``): None when it is sound,
        else the first problem found."""
        try:
            found = [r[0] for r in self.conn.execute("PRAGMA quick_check(1)")]
        except sqlite3.DatabaseError as exc:
            return str(exc)
        return None if found == ["ok"] else "; ".join(map(str, found))

    def unreadable_keys(self) -> list[str]:
        """Keys of stored cases whose swept values, row or detail cannot be decoded (damaged
        JSON text), in key order."""
        try:
            return sorted(k for (k,) in self.conn.execute(_UNREADABLE_SQL))
        except sqlite3.OperationalError as exc:
            if "no such function" not in str(exc):
                raise
        bad = []
        for key, sweep, row, detail in self.conn.execute(
                "SELECT case_key, sweep, row, detail FROM cases"):
            if not (_readable_json(sweep, True) and _readable_json(row, True)
                    and (detail is None or _readable_json(detail, False))):
                bad.append(key)
        return sorted(bad)

    def drop_cases(self, keys: Iterable[str]) -> int:
        """Delete the stored cases of ``keys`` (one transaction); returns how many were there."""
        keys = list(keys)
        n = 0
        with self._transaction() as conn:
            for start in range(0, len(keys), 500):
                part = keys[start:start + 500]
                n += conn.execute(f"DELETE FROM cases WHERE case_key IN ({','.join('?' * len(part))})",
                                  part).rowcount
        return n


class SalvageReport(NamedTuple):
    """What :func:`salvage_store` did: cases copied to the new store, cases found (by key) in
    the damaged file that could not be read, and where the damaged file was set aside."""

    kept: int
    lost: int
    damaged_file: Path


def _read_damaged(path: Path) -> tuple[list[tuple], set[str], list[tuple]]:
    """Whatever can be read from a damaged store: case records (all columns), the case keys
    seen anywhere (table or index), and the meta entries."""
    records: dict[str, tuple] = {}
    keys: set[str] = set()
    meta: list[tuple] = []
    try:
        conn = sqlite3.connect(f"file:{path}?mode=ro", uri=True, isolation_level=None)
    except sqlite3.Error:
        return [], set(), []
    with contextlib.closing(conn):
        with contextlib.suppress(sqlite3.Error):
            meta = conn.execute("SELECT key, value FROM meta").fetchall()
        with contextlib.suppress(sqlite3.Error):  # the keys through the primary-key index
            for (k,) in conn.execute("SELECT case_key FROM cases"):
                keys.add(k)
        try:
            (top,) = conn.execute("SELECT max(rowid) FROM cases NOT INDEXED").fetchone()
        except sqlite3.Error:
            top = None
        top = top if isinstance(top, int) else 10 * max(len(keys), 1000)
        columns = ("case_key, case_index, fluid, layout, sweep, status, reason, row, detail, "
                   "elapsed_s, finished_at")
        step = 256
        start = 0
        while start <= top:
            try:
                found = conn.execute(f"SELECT {columns} FROM cases NOT INDEXED WHERE rowid "
                                     "BETWEEN ? AND ?", (start, start + step - 1)).fetchall()
            except sqlite3.Error:
                found = []
                for rowid in range(start, start + step):  # one row at a time around the damage
                    with contextlib.suppress(sqlite3.Error):
                        found += conn.execute(f"SELECT {columns} FROM cases NOT INDEXED "
                                              "WHERE rowid = ?", (rowid,)).fetchall()
            for rec in found:
                if isinstance(rec[0], str):
                    records[rec[0]] = rec
                    keys.add(rec[0])
            start += step
    return list(records.values()), keys, meta


def salvage_store(path: str | os.PathLike[str]) -> SalvageReport:
    """Set a damaged store aside (``run.sqlite.damaged-<UTC time>``) and build a new one at
    the same place from the rows that can still be read; the caller must hold the run lock.

    Rows whose JSON cannot be decoded are left out as well, so that every kept row reads back.
    Returns the number of cases kept and lost (cases whose key was seen but whose row could
    not be read).
    """
    store_path = Path(path)
    if store_path.suffix != ".sqlite":
        store_path = store_path / STORE_FILE
    records, keys, meta = _read_damaged(store_path)
    stamp = datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%SZ")
    aside = store_path.with_name(f"{store_path.name}.damaged-{stamp}")
    try:
        os.replace(store_path, aside)
        for suffix in ("-wal", "-shm"):
            side = store_path.with_name(store_path.name + suffix)
            if side.exists():
                os.replace(side, aside.with_name(aside.name + suffix))
    except OSError as exc:
        raise StoreError(describe_os_error(exc, store_path)) from None
    good = [rec for rec in records
            if _readable_json(rec[4], True) and _readable_json(rec[7], True)
            and (rec[8] is None or _readable_json(rec[8], False))]
    fresh = RunStore(store_path)
    try:
        with fresh._transaction() as conn:
            conn.executemany("INSERT OR REPLACE INTO meta VALUES (?, ?)",
                             [(k, v) for k, v in meta if isinstance(k, str)
                              and k not in ("schema_version", "created_at", "revision")
                              and _readable_json(v, False)])
            conn.executemany("INSERT OR REPLACE INTO cases VALUES (?,?,?,?,?,?,?,?,?,?,?)", good)
    finally:
        fresh.close()
    kept = {rec[0] for rec in good}
    return SalvageReport(kept=len(kept), lost=len(keys - kept), damaged_file=aside)

