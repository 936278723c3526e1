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
import fcntl
import functools
import json
import math
import os
import sqlite3
from collections.abc import Iterable, Iterator, Mapping
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

if TYPE_CHECKING:  # pandas is imported where tables are built: not needed to run cases
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
    return EncodedCase(key, index, row.get("fluid"), row.get("layout"), to_json(dict(sweep)),
                       _status_of(row), str(row.get("reason") or ""), to_json(row),
                       to_json(result.get("detail")),
                       None if elapsed_s is None else float(elapsed_s), _now())


def _decoded(rec: tuple) -> tuple:
    key, index, sweep_text, row_text, elapsed_s, finished_at = rec
    return key, index, json.loads(sweep_text), json.loads(row_text), elapsed_s, finished_at


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
    def _transaction(self, bump: bool = True) -> Iterator[sqlite3.Connection]:
        """One write transaction: BEGIN IMMEDIATE ... COMMIT, ROLLBACK on any error; with
        ``bump`` it also adds one to the meta entry ``revision``."""
        conn = self.conn
        conn.execute("BEGIN IMMEDIATE")
        try:
            yield conn
            if bump:
                conn.execute("UPDATE meta SET value = CAST(value AS INTEGER) + 1 "
                             "WHERE key = 'revision'")
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
        with self._transaction(bump=False) as conn:
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)",
                         (json.dumps(SCHEMA_VERSION),))
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('created_at', ?)",
                         (json.dumps(_now()),))
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('revision', '0')")
        found = self.meta().get("schema_version")
        if found != SCHEMA_VERSION:
            raise StoreError(f"{self.path} has store schema version {found!r}; this orcscreen "
                             f"reads version {SCHEMA_VERSION}: use a new output directory")

    def meta(self) -> dict[str, Any]:
        """All meta entries: schema_version, created_at, updated_at, orcscreen_version,
        coolprop_version, study_hash, study_name, study (the study as a JSON-able dict),
        revision..."""
        return {k: json.loads(v) for k, v in self.conn.execute("SELECT key, value FROM meta")}

    def revision(self) -> int:
        """Number of write transactions on the store so far (cases, plan, meta): equal numbers
        mean unchanged contents."""
        found = self.conn.execute("SELECT value FROM meta WHERE key = 'revision'").fetchone()
        return int(json.loads(found[0])) if found else 0

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
        ``include_stale`` as in :meth:`rows`.
        """
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
        return None if found[0] is None else json.loads(found[0])

    def iter_details(self, keys: Iterable[str]) -> Iterator[tuple[str, dict[str, Any] | None]]:
        """Yield ``(key, detail)`` for each of ``keys`` in the order given; unknown keys raise
        KeyError. One case's detail is in memory at a time."""
        for key in keys:
            yield key, self.detail(key)
