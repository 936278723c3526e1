"""Tabular outputs regenerated from the run store: ``DIR/ranking.csv``, ``DIR/run-info.json``,
and the plain-text top table printed after a run.

ranking.csv has one row per case of the current study: ``case_key``, the swept values (one
column per dotted study path), ``rank``, one ``rank_<criterion>`` per ranking criterion (the
study's objective first, then ``study.rank_by``; orcscreen.objectives.CRITERIA), ``pareto_optimal``
(no other case at the operating point is at least as good in every criterion and better in one,
compared at the file's 6 significant digits), the engine's row columns (contract section 2, in that
order, without the timing column ``elapsed_s`` so that two runs give byte-identical files), then
the constant columns ``orcscreen_version``, ``coolprop_version`` and ``study_hash`` that keep the
file self-describing. Rows are sorted by operating point (the swept values, in case order), then
by rank (by the study's objective, orcscreen.objectives: net power by default); cases that are
not ok follow the ranked ones of their operating point in case order. Floats are written with 6 significant digits (``%.6g``).

:func:`write_outputs` streams: a first pass over the store keeps only what ranking needs (swept
values, status, net power, fluid, layout: about a hundred bytes per case) and the kinds of values
of every column; a second pass decodes :data:`~orcscreen.store.ROWS_CHUNK` rows at a time,
whole operating points together, in ranking order, and appends them to the file. The columns
get the types one table of all rows would give them (:class:`orcscreen.store.ColumnKinds`), so
the bytes are those of :func:`ranking_table` on the whole table. Memory does not grow with the
number of cases beyond that first-pass table; a store of at most :data:`DECODE_ONCE_ROWS` cases
keeps its first-pass rows for the second pass instead of decoding them again. It returns a
:class:`RankingSummary` (counts, swept columns, the best rows), which :func:`top_table` prints;
a second call on an unchanged store (same store revision, untouched files) rewrites nothing.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import sqlite3
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from orcscreen import store as _store
from orcscreen.objectives import (
    CRITERIA,
    DEFAULT_OBJECTIVE,
    OBJECTIVES,
    PARETO_COLUMN,
    Criterion,
    Objective,
    criteria_for,
    rank_column,
)
from orcscreen.safe_files import atomic_write, atomic_writer
from orcscreen.store import (
    ColumnKinds,
    RunStore,
    StoreError,
    object_frame,
    table_columns,
)

if TYPE_CHECKING:  # pandas is imported where tables are built
    import pandas as pd

__all__ = [
    "ROW_COLUMNS",
    "RANKING_FILE",
    "RUN_INFO_FILE",
    "FLOAT_FORMAT",
    "TOP_KEPT",
    "RankingSummary",
    "ranking_table",
    "ranking_sweep_columns",
    "write_outputs",
    "top_table",
    "objective_of",
    "criteria_of",
    "by_criterion",
]

RANKING_FILE = "ranking.csv"
RUN_INFO_FILE = "run-info.json"
FLOAT_FORMAT = "%.6g"
TOP_KEPT = 100
"""Best ranked rows a :class:`RankingSummary` keeps for :func:`top_table`."""
DECODE_ONCE_ROWS = 4000
"""Up to this many cases, :func:`write_outputs` keeps the rows of its first pass for the second
(about 8 MB) instead of decoding them again."""

#: Row columns left out of ranking.csv: run timings, which differ from run to run.
TIMING_COLUMNS = ("elapsed_s",)
_INTEGER_COLUMNS = ("evaluations",)
_VERSION_COLUMNS = ("orcscreen_version", "coolprop_version", "study_hash")
_STORE_ONLY = ("case_key", "case_index", "case_elapsed_s", "finished_at")
#: Row columns the ranking order needs, and with the integer columns the first pass of
#: write_outputs.
_RANK_KEYS = ("status", *dict.fromkeys(c.column for c in CRITERIA.values()), "fluid", "layout")
#: Significant digits of ranking.csv's floats (FLOAT_FORMAT): the Pareto marks compare values so.
WRITTEN_DIGITS = 6
_RANKING_INPUTS = (*_RANK_KEYS, *_INTEGER_COLUMNS)


def _engine_row_columns() -> tuple[str, ...]:
    """The engine's row columns (contract section 2), ``orcscreen.api.ROW_COLUMNS``; imported
    on first use, since orcscreen.api loads the engine and CoolProp."""
    from orcscreen.api import ROW_COLUMNS

    return ROW_COLUMNS


def __getattr__(name: str):
    """``ROW_COLUMNS`` stays importable from here (PEP 562) without an engine import at module load."""
    if name == "ROW_COLUMNS":
        return _engine_row_columns()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _sweep_columns_of(columns: list[str]) -> list[str]:
    """The swept dotted paths: the columns between case_index and the first row column."""
    end = columns.index("fluid") if "fluid" in columns else len(columns)
    return [c for c in columns[:end] if c not in ("case_key", "case_index")]


def _row_columns_of(columns: list[str], sweep_cols: list[str]) -> list[str]:
    """ranking.csv's row columns: the engine's, then any other stored ones, without timings."""
    engine_columns = _engine_row_columns()
    extra = [c for c in columns if c not in engine_columns and c not in sweep_cols
             and c not in _STORE_ONLY]
    return [c for c in (*engine_columns, *extra) if c not in TIMING_COLUMNS]


def objective_of(meta: dict | None) -> Objective:
    """The study's objective (orcscreen.objectives), from a store's meta; net power by default."""
    name = (((meta or {}).get("study") or {}).get("study") or {}).get("objective")
    return OBJECTIVES.get(name) or OBJECTIVES[DEFAULT_OBJECTIVE]


def criteria_of(meta: dict | None, rank_by: list[str] | tuple[str, ...] | None = None) -> tuple[Criterion, ...]:
    """The criteria of the ranking (orcscreen.objectives.criteria_for): the study's objective
    first, then ``rank_by`` when given (an override, e.g. ``--rank-by``), else the stored study's
    ``study.rank_by`` (the default criteria for a store written before that key)."""
    section = ((meta or {}).get("study") or {}).get("study") or {}
    if rank_by is None:
        rank_by = section.get("rank_by")
    return criteria_for(objective_of(meta).name, rank_by)


def _objective_key(df: pd.DataFrame, objective: Criterion):
    """Sort key of a criterion's column: smaller first (negated when larger is better); a
    missing value last."""
    import numpy as np
    import pandas as pd

    value = pd.to_numeric(df[objective.column], errors="coerce").astype(float) if objective.column in df else \
        pd.Series(np.nan, index=df.index)
    key = -value if objective.maximise else value
    return key.where(np.isfinite(key), np.inf)


def _ranked_order(df: pd.DataFrame, sweep_cols: list[str],
                  criteria: tuple[Criterion, ...] | None = None) -> pd.DataFrame:
    """``df`` sorted into ranking order with its ``rank`` (Int64, <NA> when not ranked), one
    ``rank_<criterion>`` per criterion, ``pareto_optimal`` and its operating point number
    ``_point`` (see :func:`ranking_table`); ``rank`` by the first criterion (the objective; net
    power by default)."""
    import numpy as np
    import pandas as pd

    criteria = criteria or (OBJECTIVES[DEFAULT_OBJECTIVE],)
    df = df.reset_index(drop=True).copy()
    # Operating point = identical swept values, numbered in order of first appearance (case order).
    if df.empty:
        point = pd.Series([], dtype="int64")
    elif sweep_cols:
        labels = df[sweep_cols].apply(lambda r: json.dumps(list(r), default=str), axis=1)
        point = pd.Series(pd.factorize(labels)[0], index=df.index)
    else:
        point = pd.Series(0, index=df.index)
    power = pd.to_numeric(df["net_power_kW"], errors="coerce").astype(float)
    ranked = (df["status"] == "ok") & np.isfinite(power)
    df["_point"] = point
    df["_ranked"] = ~ranked  # False sorts first
    df["_fluid"] = df["fluid"].astype(str)
    df["_layout"] = df["layout"].astype(str)
    df["_order"] = df["case_index"] if "case_index" in df else df.index
    df["_power"] = _objective_key(df, criteria[0]).where(ranked, 0.0)
    df = df.sort_values(["_point", "_ranked", "_power", "_fluid", "_layout", "_order"],
                        kind="mergesort").reset_index(drop=True)
    df["rank"] = _ranks(df, "_power")
    for criterion in criteria:
        df["_key"] = _objective_key(df, criterion).where(~df["_ranked"], 0.0)
        df[rank_column(criterion)] = _ranks(df, "_key")
    df = df.drop(columns="_key")
    pareto = np.zeros(len(df), dtype=bool)
    if len(criteria) and len(df):
        from orcscreen.rank import pareto_optimal

        ok = df[~df["_ranked"]]
        cols = [(c.column, c.maximise) for c in criteria]
        for _, rows in ok.groupby("_point", sort=False):
            pareto[rows.index.to_numpy()] = pareto_optimal(rows, cols, significant=WRITTEN_DIGITS).to_numpy()
    df[PARETO_COLUMN] = pareto
    return df


def _ranks(df: pd.DataFrame, key: str) -> pd.Series:
    """1, 2, ... within each operating point by ``key`` (smaller first), ties by fluid, layout
    and case order, as the ranking's ``rank``; <NA> for the rows not ranked."""
    import pandas as pd

    order = df.sort_values(["_point", "_ranked", key, "_fluid", "_layout", "_order"], kind="mergesort")
    rank = order.groupby("_point").cumcount() + 1
    rank = rank.where(~order["_ranked"]).reindex(df.index)
    return pd.array(rank, dtype="Int64")


def _whole_numbers(values: pd.Series) -> bool:
    """True when every finite value of an integer column is a whole number (then it is written
    as integers)."""
    import numpy as np
    import pandas as pd

    numbers = pd.to_numeric(values, errors="coerce").astype(float)
    finite = numbers[np.isfinite(numbers)]
    return bool((finite == finite.round()).all())


def _finish(df: pd.DataFrame, sweep_cols: list[str], row_cols: list[str], meta: dict,
            whole: dict[str, bool], rank_cols: list[str]) -> pd.DataFrame:
    """The ranking.csv columns of rows in ranking order that carry their ``rank``, their
    ``rank_cols`` (one per criterion) and their Pareto mark."""
    import numpy as np
    import pandas as pd

    for col in _INTEGER_COLUMNS:
        if col in df and whole.get(col, False):
            values = pd.to_numeric(df[col], errors="coerce").astype(float)
            df[col] = pd.array(values.where(np.isfinite(values)), dtype="Int64")
    if "reason" in df:
        df["reason"] = df["reason"].fillna("")
    for col in _VERSION_COLUMNS:
        df[col] = meta.get(col, "")
    return df[["case_key", *sweep_cols, "rank", *rank_cols, PARETO_COLUMN, *row_cols, *_VERSION_COLUMNS]]


def ranking_table(rows: pd.DataFrame, meta: dict | None = None, *,
                  all_columns: bool = True, rank_by: list[str] | None = None) -> pd.DataFrame:
    """The ranking table (see module docstring) from :meth:`RunStore.rows`' table.

    ``rank`` is 1, 2, ... within each operating point (identical swept values) over the rows
    with status "ok" and a finite net_power_kW, by net_power_kW descending, ties broken by fluid
    then layout (names ascending); empty (<NA>) for the other rows. ``all_columns=False`` keeps
    only the row columns present in ``rows`` (a table read with ``RunStore.rows(columns=...)``)
    instead of adding the missing ones empty. ``rank_by``: the criteria after the objective,
    instead of the stored study's (:func:`criteria_of`); ``rank_<criterion>`` are ranked the
    same way, by each criterion's column (a missing value last).
    """
    meta = meta or {}
    df = rows.reset_index(drop=True).copy()
    sweep_cols = _sweep_columns_of(list(df.columns))
    for col in _engine_row_columns() if all_columns else _RANK_KEYS:
        if col not in df:
            df[col] = None
    row_cols = _row_columns_of(list(df.columns), sweep_cols)
    if not all_columns:
        row_cols = [c for c in row_cols if c in df]
    whole = {c: _whole_numbers(df[c]) for c in _INTEGER_COLUMNS if c in df}
    criteria = criteria_of(meta, rank_by)
    return _finish(_ranked_order(df, sweep_cols, criteria), sweep_cols, row_cols, meta, whole,
                   [rank_column(c) for c in criteria])


@dataclass
class RankingSummary:
    """What :func:`write_outputs` wrote, and what :func:`top_table` prints, without the table.

    cases: rows written; columns: ranking.csv's columns; status_counts: rows per status;
    sweep_columns: the swept paths, ``varying`` those with more than one value; points: number
    of operating points over the varying columns; ranked: rows with a rank; ``leaders``: the
    first ranked rows in file order and ``best``: the ranked rows of highest net power over all
    points (ties by fluid, layout, file order), up to ``kept`` rows each, with every column.
    """

    path: Path
    store_path: Path
    cases: int = 0
    columns: list[str] = field(default_factory=list)
    status_counts: dict[str, int] = field(default_factory=dict)
    sweep_columns: list[str] = field(default_factory=list)
    varying: list[str] = field(default_factory=list)
    points: int = 1
    ranked: int = 0
    kept: int = TOP_KEPT
    leaders: Any = None
    best: Any = None
    #: the objective the rows are ranked by (orcscreen.objectives.Objective)
    objective: Any = None
    #: the ranking's criteria (orcscreen.objectives.Criterion), the objective first
    criteria: tuple = ()
    #: criterion name -> its best ranked rows over all points (up to ``kept``), best first
    tops: dict = field(default_factory=dict)

    @property
    def empty(self) -> bool:
        return self.cases == 0

    def __len__(self) -> int:
        return self.cases

    def table(self) -> pd.DataFrame:
        """The whole ranking table, read from the store (small runs and tests)."""
        with RunStore(self.store_path, create=False) as store:
            return ranking_table(store.rows(), store.meta(),
                                 rank_by=[c.name for c in self.criteria[1:]] if self.criteria else None)


_NAN = object()  # one stand-in for every NaN swept value (NaN != NaN, drop_duplicates: equal)


class _Tally:
    """Running figures of the rows written, for a :class:`RankingSummary`."""

    def __init__(self, sweep_cols: list[str], keep: int, criteria: tuple[Criterion, ...] = ()) -> None:
        self.sweep_cols, self.keep = sweep_cols, keep
        self.criteria = tuple(criteria) or (OBJECTIVES[DEFAULT_OBJECTIVE],)
        self.objective = self.criteria[0]
        self.tops: dict[str, Any] = {}
        self.cases = 0
        self.status: dict[str, int] = {}
        self.values: dict[str, set] = {c: set() for c in sweep_cols}
        self.points: set[tuple] = set()
        self.ranked = 0
        self.leaders = None
        self.best = None

    def add(self, table: pd.DataFrame) -> None:
        import pandas as pd

        self.cases += len(table)
        if "status" in table:
            for status, n in table["status"].value_counts().items():
                self.status[status] = self.status.get(status, 0) + int(n)
        for c in self.sweep_cols:
            self.values[c].update(table[c].astype(str).dropna().unique())
        if self.sweep_cols:
            self.points.update(tuple(_NAN if isinstance(v, float) and v != v else v for v in t)
                               for t in table[self.sweep_cols].itertuples(index=False, name=None))
        ok = table[table["rank"].notna()] if "rank" in table else table.iloc[0:0]
        self.ranked += len(ok)
        if self.leaders is None or len(self.leaders) < self.keep:
            more = ok.head(self.keep - (0 if self.leaders is None else len(self.leaders)))
            self.leaders = more if self.leaders is None else pd.concat([self.leaders, more])
        both = ok if self.best is None else pd.concat([self.best, ok])
        self.best = by_criterion(both, self.objective).head(self.keep)
        for c in self.criteria[1:]:
            kept = self.tops.get(c.name)
            both = ok if kept is None else pd.concat([kept, ok])
            self.tops[c.name] = by_criterion(both, c).head(self.keep)

    def summary(self, path: Path, store_path: Path, columns: list[str]) -> RankingSummary:
        varying = [c for c in self.sweep_cols if self.cases and len(self.values[c]) > 1]
        if varying and self.cases:
            idx = [self.sweep_cols.index(c) for c in varying]
            points = len({tuple(p[i] for i in idx) for p in self.points})
        else:
            points = 1
        return RankingSummary(path=path, store_path=store_path, cases=self.cases,
                              columns=columns, status_counts=dict(self.status),
                              sweep_columns=list(self.sweep_cols), varying=varying,
                              points=points, ranked=self.ranked, kept=self.keep,
                              leaders=self.leaders, best=self.best, objective=self.objective,
                              criteria=self.criteria, tops=dict(self.tops))


def by_criterion(ok: pd.DataFrame, objective: Criterion) -> pd.DataFrame:
    """Ranked rows by a criterion (best first), then fluid, then layout; stable (file order)."""
    return (ok.assign(_p=_objective_key(ok, objective))
            .sort_values(["_p", "fluid", "layout"], kind="mergesort").drop(columns="_p"))


def _records_frame(records: list[tuple], columns: list[str]) -> pd.DataFrame:
    """Decoded store records (RunStore.record_chunks) as a table of object columns."""
    dicts = [{"case_key": key, "case_index": index, **sweep, **row,
              "case_elapsed_s": elapsed_s, "finished_at": finished_at}
             for key, index, sweep, row, elapsed_s, finished_at in records]
    return object_frame(dicts, columns)


def _stream_ranking(store: RunStore, meta: dict, target: Path | None,
                    keep: int | None = None, rank_by: list[str] | None = None) -> RankingSummary:
    """Write ranking.csv to ``target`` (None: write nothing) from the store in two passes (module
    docstring); return its summary. A store of at most :data:`DECODE_ONCE_ROWS` current cases
    is decoded once: its rows are kept from the first pass to the second (object tables, about
    2 kB a row)."""
    keep = keep or TOP_KEPT
    import numpy as np
    import pandas as pd

    # Pass 1: columns in order of first appearance, kinds of values of every column, and the
    # small table the ranking needs.
    kinds = ColumnKinds()
    sweep_seen: dict[str, None] = {}
    row_seen: dict[str, None] = {}
    light = []
    kept: list | None = [] if len(store) <= DECODE_ONCE_ROWS else None
    for records in store.record_chunks():
        for _, _, sweep, row, _, _ in records:
            sweep_seen.update(dict.fromkeys(sweep))
            row_seen.update(dict.fromkeys(row))
        names = table_columns(sweep_seen, row_seen)
        for name in names:
            kinds.add_column(name)
        frame = _records_frame(records, names)
        del records
        kinds.observe(frame)
        light.append(frame[[c for c in names if c == "case_index" or c in _RANKING_INPUTS
                            or c in sweep_seen]])
        if kept is not None:
            kept.append(frame)
        del frame
    columns = table_columns(sweep_seen, row_seen)
    sweep_cols = _sweep_columns_of(columns)
    names = [c for c in columns if c == "case_index" or c in _RANKING_INPUTS or c in sweep_seen]
    if any(c not in names for c in sweep_cols):  # row keys before "fluid": not a usual store
        del light, kept
        return _whole_ranking(store, meta, target, keep, rank_by)
    criteria = criteria_of(meta, rank_by)
    rank_cols = [rank_column(c) for c in criteria]
    missing = [c for c in _engine_row_columns() if c not in columns]
    row_cols = _row_columns_of(columns + missing, sweep_cols)
    out_columns = ["case_key", *sweep_cols, "rank", *rank_cols, PARETO_COLUMN, *row_cols, *_VERSION_COLUMNS]
    small = kinds.typed(pd.concat(light, ignore_index=True).reindex(columns=names))
    del light
    for col in _RANKING_INPUTS:
        if col not in small:
            small[col] = None
    whole = {c: _whole_numbers(small[c]) for c in _INTEGER_COLUMNS}
    order = _ranked_order(small, sweep_cols, criteria)[["case_index", "_point", "rank", *rank_cols, PARETO_COLUMN]]
    del small
    if kept is not None:
        kept = pd.concat(kept, ignore_index=True).reindex(columns=columns)
        kept_index = kept["case_index"].to_numpy(dtype="int64")  # ascending: case order

    # Pass 2: whole operating points, about ROWS_CHUNK rows at a time, in ranking order.
    tally = _Tally(sweep_cols, keep, criteria)
    with contextlib.ExitStack() as stack:
        # written to a temporary file created without following links, renamed at the end
        out = None if target is None else stack.enter_context(atomic_writer(target))
        first = True
        for part in _point_slices(order):
            indexes = part["case_index"].to_numpy(dtype="int64")
            if kept is not None:
                frame = kept.iloc[np.searchsorted(kept_index, indexes)].reset_index(drop=True)
            else:
                records = [rec for chunk in store.record_chunks(indexes=indexes.tolist(),
                                                                chunk=len(indexes))
                           for rec in chunk]
                frame = _records_frame(records, columns)
                del records
            if len(frame) != len(indexes) or not (
                    frame["case_index"].to_numpy(dtype="int64") == indexes).all():
                raise StoreError(f"the run store {store.path} changed while ranking.csv was "
                                 "written; write it again")
            table = kinds.typed(frame)
            del frame
            for col in missing:
                table[col] = None
            for col in ("rank", *rank_cols, PARETO_COLUMN):
                table[col] = part[col].array
            table = _finish(table, sweep_cols, row_cols, meta, whole, rank_cols)
            if out is not None:
                table.to_csv(out, index=False, header=first, float_format=FLOAT_FORMAT,
                             lineterminator="\n")
            first = False
            tally.add(table)
    return tally.summary(target or store.directory / RANKING_FILE, store.path, out_columns)


def _whole_ranking(store: RunStore, meta: dict, target: Path | None,
                   keep: int | None = None, rank_by: list[str] | None = None) -> RankingSummary:
    """ranking.csv from the whole table in memory (an empty store, or an unusual one)."""
    keep = keep or TOP_KEPT
    table = ranking_table(store.rows(), meta, rank_by=rank_by)
    if target is not None:
        _atomic_write(target, table.to_csv(index=False, float_format=FLOAT_FORMAT,
                                           lineterminator="\n"))
    return _small_summary(table, target or store.directory / RANKING_FILE, store.path, keep,
                          criteria_of(meta, rank_by))


def _point_slices(order: pd.DataFrame):
    """Consecutive pieces of ``order`` made of whole operating points, about ROWS_CHUNK rows."""
    points = order["_point"].to_numpy()
    n = len(points)
    start = 0
    while start < n:
        end = min(start + _store.ROWS_CHUNK, n)
        while end < n and points[end] == points[end - 1]:
            end += 1
        yield order.iloc[start:end]
        start = end


#: store file -> (revision, file stamps, summary) of the tables this process wrote last, for
#: the last few stores only.
_WRITTEN: dict[Path, tuple[int, tuple, RankingSummary]] = {}
_WRITTEN_KEPT = 4


def _stamps(*paths: Path) -> tuple:
    try:
        return tuple((p.stat().st_ino, p.stat().st_size, p.stat().st_mtime_ns) for p in paths)
    except OSError:
        return ()


def write_outputs(out_dir: str | os.PathLike[str],
                  store: RunStore | None = None, rank_by: list[str] | None = None) -> RankingSummary:
    """Regenerate ``out_dir/ranking.csv`` and ``out_dir/run-info.json`` from the run store.

    Returns a :class:`RankingSummary` (for :func:`top_table`; ``.table()`` reads the whole
    table). ``store`` may be an open store of ``out_dir`` (e.g. the one a run holds the lock of);
    otherwise the store is opened read-only-style (no lock, no creation). ``rank_by``: the
    criteria after the objective, instead of the stored study's ``study.rank_by``. Both files are
    written atomically (temporary file, then rename). When this process wrote both files from
    the same store revision with the same criteria and they are untouched since, nothing is
    rewritten.
    """
    out_dir = Path(out_dir)
    own = store is None
    store = store or RunStore(out_dir, create=False)
    ranking_path, info_path = out_dir / RANKING_FILE, out_dir / RUN_INFO_FILE
    try:
        revision = store.revision()
        meta = store.meta()
        names = tuple(c.name for c in criteria_of(meta, rank_by))
        done = _WRITTEN.get(store.path.resolve())
        if done and done[0] == revision and done[1] and done[1] == _stamps(ranking_path, info_path) \
                and tuple(c.name for c in done[2].criteria) == names:
            return done[2]
        counts = store.counts()
        if len(store):
            summary = _stream_ranking(store, meta, ranking_path, rank_by=rank_by)
        else:
            summary = _whole_ranking(store, meta, ranking_path, rank_by=rank_by)
    except sqlite3.DatabaseError as exc:  # a damaged file: say so, with what to do
        raise store.error_for(exc) from None
    finally:
        if own:
            store.close()
    info = {
        "orcscreen_version": meta.get("orcscreen_version"),
        "coolprop_version": meta.get("coolprop_version"),
        "study_hash": meta.get("study_hash"),
        "study_name": meta.get("study_name"),
        "ranked_by": [{"criterion": c.name, "column": c.column, "rank_column": rank_column(c),
                       "direction": c.direction} for c in summary.criteria],
        "cases": int(summary.cases),
        "counts": {s: int(counts.get(s, 0)) for s in ("ok", "infeasible", "failed")}
        | {s: int(n) for s, n in counts.items() if s not in ("ok", "infeasible", "failed")},
        "sweep_columns": list(summary.sweep_columns),
        "created_at": meta.get("created_at"),
        "updated_at": meta.get("updated_at"),
        "files": {"ranking": RANKING_FILE, "store": store.path.name},
        "money": _money_info((meta.get("study") or {}).get("economics")),
        "left_out_fluids": left_out_fluids(meta),
    }
    _atomic_write(info_path, json.dumps(info, indent=2) + "\n")
    from orcscreen.spreadsheet import SPREADSHEET_FILE, write_spreadsheet  # XlsxWriter: only there

    write_spreadsheet(out_dir / SPREADSHEET_FILE, ranking_path, info, meta.get("study"),
                      text_columns=("case_key", *_VERSION_COLUMNS))
    _WRITTEN.pop(store.path.resolve(), None)
    while len(_WRITTEN) >= _WRITTEN_KEPT:  # the oldest first (dicts keep insertion order)
        _WRITTEN.pop(next(iter(_WRITTEN)))
    _WRITTEN[store.path.resolve()] = (revision, _stamps(ranking_path, info_path), summary)
    return summary


def left_out_fluids(meta: dict) -> list[dict] | None:
    """The fluids that the stored study's [fluids] filters left out, each {fluid, display_name,
    reason} (orcscreen.fluids.left_out_of, on the catalogue in use); None when the store holds
    no study or the catalogue no longer knows a name of its filters."""
    section = (meta.get("study") or {}).get("fluids")
    if not isinstance(section, dict):
        return None
    from orcscreen import fluids

    try:
        return [item.as_dict() for item in fluids.left_out_of(section)]
    except ValueError:  # UnknownFluidError, CatalogueError: the run's files still get written
        return None


def _money_info(economics: dict | None) -> dict | None:
    """What the investment_*, specific_investment_per_kW, lcoe_per_MWh and net_present_value
    columns are in: the study's currency and cost year, the cost model and index, the annuity."""
    if not economics:
        return None
    from .costs import CEPCI

    year = economics.get("cost_year")
    index = {**{str(y): v for y, v in CEPCI.items()}, **(economics.get("cost_index") or {})}
    return {
        "currency": economics.get("currency"),
        "cost_year": year,
        "cost_index_at_cost_year": index.get(str(year)),
        "cost_model": economics.get("cost_model"),
        "exchange_rates": economics.get("exchange_rates") or {},
        "discount_rate": economics.get("discount_rate"),
        "lifetime_years": economics.get("lifetime_years"),
        "om_fraction": economics.get("om_fraction"),
        "full_load_hours": economics.get("full_load_hours"),
        "electricity_price_per_MWh": economics.get("electricity_price_per_MWh"),
        "accuracy": "screening estimate, about +-30 % at best (Lemmens, Energies 9 (2016) 485); not a quotation",
    }


def _small_summary(table: pd.DataFrame, path: Path, store_path: Path,
                   keep: int | None = None, criteria: tuple[Criterion, ...] = ()) -> RankingSummary:
    """The summary of a ranking table held in memory."""
    keep = keep or TOP_KEPT
    tally = _Tally(ranking_sweep_columns(table), keep, criteria)
    if len(table):
        tally.add(table)
    summary = tally.summary(path, store_path, list(table.columns))
    if summary.leaders is None:
        summary.leaders = table.iloc[0:0]
        summary.best = table.iloc[0:0]
    return summary


def criteria_in(table: pd.DataFrame) -> tuple[Criterion, ...]:
    """The criteria a ranking table was ranked by, read from its ``rank_<criterion>`` columns
    (in order; the first is the objective); () for a table without them."""
    by_column = {rank_column(c): c for c in CRITERIA.values()}
    return tuple(by_column[col] for col in table.columns if col in by_column)


def ranking_sweep_columns(table: pd.DataFrame) -> list[str]:
    """The swept dotted paths of a ranking table: the columns between case_key and rank."""
    cols = list(table.columns)
    return cols[1:cols.index("rank")] if "rank" in cols else []


def _atomic_write(path: Path, text: str) -> None:
    atomic_write(path, text)


def _fmt(value, spec: str) -> str:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return ""
    return format(v, spec) if math.isfinite(v) else ""


def top_table(table: pd.DataFrame | RankingSummary, n: int = 10) -> str:
    """Plain-text table of the best ``n`` ranked cases of a ranking table (or of the
    :class:`RankingSummary` that :func:`write_outputs` returns), for the terminal.

    One operating point: its ``n`` best cases. Several: the ``n`` best cases over all points
    (by the study's objective), with the swept values shown. A column marks the cases that are
    Pareto-optimal over the ranking's criteria; then, for each criterion after the objective, its
    best :data:`CRITERION_TOP` cases. Ends with a line of status counts.
    """
    if isinstance(table, RankingSummary):
        summary = table
        if n > summary.kept and summary.ranked > summary.kept:  # more than kept: read again
            with RunStore(summary.store_path, create=False) as store:
                summary = _stream_ranking(store, store.meta(), None, keep=n,
                                          rank_by=[c.name for c in summary.criteria[1:]] or None)
    else:
        summary = _small_summary(table, Path(RANKING_FILE), Path(), keep=max(n, TOP_KEPT),
                                 criteria=criteria_in(table))
    return _top_text(summary, n)


#: Cases listed per criterion after the main table (console and report).
CRITERION_TOP = 5


def _is_true(value) -> bool:
    return str(value).strip().lower() in ("true", "1", "yes")


def criterion_value_text(criterion: Criterion, value) -> str:
    """A criterion's value as the console and the report show it (its format; "%": per cent)."""
    if criterion.fmt == "%":
        return _fmt(100.0 * float(value), ".2f") if _fmt(value, "g") else ""
    return _fmt(value, criterion.fmt)


def _criterion_tops(summary: RankingSummary, sweep_cols: list[str]) -> str:
    """For each criterion after the objective: its best :data:`CRITERION_TOP` cases (over all
    points when there are several, the swept values shown), folded as the main table is."""
    import pandas as pd

    from orcscreen.rank import fold_inactive

    blocks = []
    for c in summary.criteria[1:]:
        pool = summary.tops.get(c.name)
        if pool is None or pool.empty:
            continue
        best = fold_inactive(pool, summary.objective.column).head(CRITERION_TOP)
        columns = {"#": best[rank_column(c)].astype(str) if rank_column(c) in best else ""}
        for col in sweep_cols:
            columns[col] = best[col].map(lambda v: _fmt(v, ".4g") or str(v))
        columns["fluid"] = best.apply(_name, axis=1)
        columns["layout"] = [f"{lay} ({f}: no gain)" if isinstance(f, str) and f else str(lay)
                             for lay, f in zip(best["layout"], best.get("folded_layouts", [""] * len(best)))]
        columns[c.short or c.column] = best[c.column].map(lambda v, c=c: criterion_value_text(c, v))
        if c.column != "net_power_kW":
            columns["net kW"] = best["net_power_kW"].map(lambda v: _fmt(v, ".1f"))
        if PARETO_COLUMN in best:
            columns["Pareto"] = best[PARETO_COLUMN].map(lambda v: "yes" if _is_true(v) else "")
        head = f"top {len(best)} by {c.label} ({c.direction}; # = {rank_column(c)}):"
        blocks.append(head + "\n" + pd.DataFrame(columns).to_string(index=False))
    return "\n".join(blocks)


def _warning_lines(best) -> list[str]:
    """One line per warning of the listed cases: "  #rank fluid · layout: warning"."""
    if "warnings" not in best:
        return []
    lines = []
    for _, r in best.iterrows():
        text = r["warnings"]
        if not isinstance(text, str) or not text:
            continue
        lines.extend(f"  #{r['rank']} {_name(r)} · {r['layout']}: {w}" for w in text.split("; ") if w)
    return lines


def _fold_lines(best) -> list[str]:
    """One line per row that a layout without gain was folded into (orcscreen.rank.fold_inactive)."""
    from orcscreen.rank import FOLD_NOTE

    return [f"  #{r['rank']} {_name(r)} · {r['layout']}: {r[FOLD_NOTE]}"
            for _, r in best.iterrows() if r.get(FOLD_NOTE)]


def _name(r) -> str:
    return r.get("display_name") if isinstance(r.get("display_name"), str) else r["fluid"]


def _caution_lines(best) -> list[str]:
    """One line per fluid of the listed cases with its caution (the rows' ``caution`` column,
    orcscreen.fluids.caution_text): "  fluid: caution"; a fluid whose cases differ (e.g. one
    condenses under vacuum) gets a line per distinct caution."""
    if "caution" not in best:
        return []
    lines = []
    for _, r in best.iterrows():
        text = r["caution"]
        line = f"  {_name(r)}: {text}" if isinstance(text, str) and text else None
        if line and line not in lines:
            lines.append(line)
    return lines


def _top_text(summary: RankingSummary, n: int) -> str:
    import pandas as pd

    from orcscreen.rank import fold_inactive

    sweep_cols = summary.varying
    n_points = summary.points if sweep_cols else 1
    pool = summary.best if n_points > 1 else summary.leaders
    objective = summary.objective or OBJECTIVES[DEFAULT_OBJECTIVE]
    # a layout whose extra component does nothing is shown once, as its simpler layout
    best = fold_inactive(pool, objective.column).head(n) if pool is not None else None
    counts = summary.status_counts
    tally = ", ".join(f"{s} {int(counts.get(s, 0))}" for s in ("ok", "infeasible", "failed"))
    if best is None or best.empty:
        return f"no feasible case among {summary.cases} ({tally})"
    columns = {"#": best["rank"].astype(str)}
    for col in sweep_cols:
        columns[col] = best[col].map(lambda v: _fmt(v, ".4g") or str(v))
    columns["fluid"] = best["display_name"].where(best["display_name"].notna(), best["fluid"]) \
        if "display_name" in best else best["fluid"]
    columns["layout"] = best["layout"]
    spec = [("net kW", "net_power_kW", ".1f"), ("eta_th %", "thermal_efficiency", ".2%"),
            ("eta_II %", "exergy_efficiency", ".2%"), ("T_evap C", "evaporation_temperature_C", ".1f"),
            ("p_high bar", "turbine_inlet_pressure_bar", ".2f"),
            ("p_cond bar", "condensing_pressure_bar", ".3f"), ("SP m", "size_parameter_m", ".3f"),
            ("VR", "volume_ratio", ".1f"), ("stages", "turbine_stages", ".0f"), ("eta_t", "turbine_efficiency", ".3f")]
    if objective.needs_year:  # the year's figures next to the design power
        spec[1:1] = [("MWh/year", "annual_energy_MWh", ".0f"), ("CF", "capacity_factor", ".3f"),
                     ("h off", "hours_not_running", ".0f")]
    if objective.needs_costs:  # the money columns next to the power (study currency)
        spec[1:1] = [("invest/kW", "specific_investment_per_kW", ".0f"), ("LCOE/MWh", "lcoe_per_MWh", ".1f")]
        if objective.column == "net_present_value":
            spec.insert(3, ("NPV", "net_present_value", ".4g"))
    for title, col, fmt in spec:
        if col in best:
            if fmt.endswith("%"):
                columns[title] = best[col].map(lambda v, f=fmt[:-1] + "f": _fmt(100 * float(v), f)
                                               if v is not None and v == v else "")
            else:
                columns[title] = best[col].map(lambda v, f=fmt: _fmt(v, f))
    from orcscreen.fluids import gwp_text, safety_class_text  # one spelling of unknown, "not classified"

    for title, col, shown in (("class", "safety_class", safety_class_text), ("GWP100", "gwp100", gwp_text)):
        if col in best:
            columns[title] = best[col].map(shown)
    criteria = summary.criteria or (objective,)
    if PARETO_COLUMN in best and len(criteria) > 1:
        columns["Pareto"] = best[PARETO_COLUMN].map(lambda v: "yes" if _is_true(v) else "")
    text = pd.DataFrame(columns).to_string(index=False)
    if PARETO_COLUMN in best and len(criteria) > 1:
        text += (f"\nPareto: optimal over {', '.join(c.label for c in criteria)} (no other case at its "
                 "operating point is as good in all and better in one)")
    cautions = _caution_lines(best)
    if cautions:
        text += "\ncautions (catalogue data and each case's condenser; screening, not design):\n" + "\n".join(cautions)
    notes = _warning_lines(best)
    if notes:
        text += "\nwarnings (soft limits passed; the results stand):\n" + "\n".join(notes)
    folded = _fold_lines(best)
    if folded:
        text += "\nshown once (the same result in a layout whose extra component does nothing):\n" + "\n".join(folded)
    tops = _criterion_tops(summary, sweep_cols if n_points > 1 else [])
    if tops:
        text += "\n" + tops
    by = f" by {objective.label}"
    if n_points > 1:
        head = f"best {len(best)} of {summary.cases} cases{by} over {n_points} operating points"
    else:
        head = f"best {len(best)} of {summary.cases} cases{by}"
    return f"{head}\n{text}\n{tally}"
