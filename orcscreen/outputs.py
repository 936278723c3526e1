"""Tabular outputs regenerated from the run store: ``DIR/ranking.csv``, ``DIR/run-info.json``,
and the plain-text top table printed after a run.

ranking.csv has one row per case of the current study: ``case_key``, the swept values (one
column per dotted study path), ``rank``, the engine's row columns (contract section 2, in that
order, without the timing column ``elapsed_s`` so that two runs give byte-identical files), then
the constant columns ``orcscreen_version``, ``coolprop_version`` and ``study_hash`` that keep the
file self-describing. Rows are sorted by operating point (the swept values, in case order), then
by rank; cases that are not ok follow the ranked ones of their operating point in case order.
Floats are written with 6 significant digits (``%.6g``).
"""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np
import pandas as pd

from orcscreen.api import ROW_COLUMNS  # the engine's row columns, contract section 2
from orcscreen.store import RunStore

__all__ = [
    "ROW_COLUMNS",
    "RANKING_FILE",
    "RUN_INFO_FILE",
    "FLOAT_FORMAT",
    "ranking_table",
    "ranking_sweep_columns",
    "write_outputs",
    "top_table",
]

RANKING_FILE = "ranking.csv"
RUN_INFO_FILE = "run-info.json"
FLOAT_FORMAT = "%.6g"

#: Row columns left out of ranking.csv: run timings, which differ from run to run.
TIMING_COLUMNS = ("elapsed_s",)
_INTEGER_COLUMNS = ("evaluations",)
_VERSION_COLUMNS = ("orcscreen_version", "coolprop_version", "study_hash")


def _sweep_columns(df: pd.DataFrame) -> list[str]:
    """The swept dotted paths: the columns between case_index and the first row column."""
    cols = list(df.columns)
    end = cols.index("fluid") if "fluid" in cols else len(cols)
    return [c for c in cols[:end] if c not in ("case_key", "case_index")]


def ranking_table(rows: pd.DataFrame, meta: dict | None = None) -> pd.DataFrame:
    """The ranking table (see module docstring) from :meth:`RunStore.rows`' table.

    ``rank`` is 1, 2, ... within each operating point (identical swept values) over the rows
    with status "ok" and a finite net_power_kW, by net_power_kW descending, ties broken by fluid
    then layout (names ascending); empty (<NA>) for the other rows.
    """
    meta = meta or {}
    df = rows.reset_index(drop=True).copy()
    sweep_cols = _sweep_columns(df)
    for col in ROW_COLUMNS:
        if col not in df:
            df[col] = None
    extra = [c for c in df.columns if c not in ROW_COLUMNS and c not in sweep_cols
             and c not in ("case_key", "case_index", "case_elapsed_s", "finished_at")]
    row_cols = [c for c in (*ROW_COLUMNS, *extra) if c not in TIMING_COLUMNS]

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
    df["_power"] = -power.where(ranked, 0.0)
    df["_fluid"] = df["fluid"].astype(str)
    df["_layout"] = df["layout"].astype(str)
    df["_order"] = df["case_index"] if "case_index" in df else df.index
    df = df.sort_values(["_point", "_ranked", "_power", "_fluid", "_layout", "_order"],
                        kind="mergesort").reset_index(drop=True)
    rank = df.groupby("_point").cumcount() + 1
    df["rank"] = pd.array(rank.where(~df["_ranked"]), dtype="Int64")
    for col in _INTEGER_COLUMNS:
        values = pd.to_numeric(df[col], errors="coerce").astype(float)
        finite = values[np.isfinite(values)]
        if (finite == finite.round()).all():
            df[col] = pd.array(values.where(np.isfinite(values)), dtype="Int64")
    df["reason"] = df["reason"].fillna("")
    for col in _VERSION_COLUMNS:
        df[col] = meta.get(col, "")
    return df[["case_key", *sweep_cols, "rank", *row_cols, *_VERSION_COLUMNS]]


def write_outputs(out_dir: str | os.PathLike[str], store: RunStore | None = None) -> pd.DataFrame:
    """Regenerate ``out_dir/ranking.csv`` and ``out_dir/run-info.json`` from the run store.

    Returns the ranking table. ``store`` may be an open store of ``out_dir`` (e.g. the one a run
    holds the lock of); otherwise the store is opened read-only-style (no lock, no creation).
    Both files are written atomically (temporary file, then rename).
    """
    out_dir = Path(out_dir)
    own = store is None
    store = store or RunStore(out_dir, create=False)
    try:
        meta = store.meta()
        table = ranking_table(store.rows(), meta)
        counts = store.counts()
    finally:
        if own:
            store.close()
    _atomic_write(out_dir / RANKING_FILE,
                  table.to_csv(index=False, float_format=FLOAT_FORMAT, lineterminator="\n"))
    info = {
        "orcscreen_version": meta.get("orcscreen_version"),
        "coolprop_version": meta.get("coolprop_version"),
        "study_hash": meta.get("study_hash"),
        "study_name": meta.get("study_name"),
        "cases": int(len(table)),
        "counts": {s: int(counts.get(s, 0)) for s in ("ok", "infeasible", "failed")}
        | {s: int(n) for s, n in counts.items() if s not in ("ok", "infeasible", "failed")},
        "sweep_columns": ranking_sweep_columns(table),
        "created_at": meta.get("created_at"),
        "updated_at": meta.get("updated_at"),
        "files": {"ranking": RANKING_FILE, "store": store.path.name},
    }
    _atomic_write(out_dir / RUN_INFO_FILE, json.dumps(info, indent=2) + "\n")
    return table


def ranking_sweep_columns(table: pd.DataFrame) -> list[str]:
    """The swept dotted paths of a ranking table: the columns between case_key and rank."""
    cols = list(table.columns)
    return cols[1:cols.index("rank")] if "rank" in cols else []


def _atomic_write(path: Path, text: str) -> None:
    tmp = path.with_name(f".{path.name}.tmp")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, path)


def _fmt(value, spec: str) -> str:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return ""
    return format(v, spec) if math.isfinite(v) else ""


def top_table(df: pd.DataFrame, n: int = 10) -> str:
    """Plain-text table of the best ``n`` ranked cases of a ranking table, for the terminal.

    One operating point: its ``n`` best cases. Several: the ``n`` best cases over all points
    (by net power), with the swept values shown. Ends with a line of status counts.
    """
    sweep_cols = [c for c in ranking_sweep_columns(df)
                  if not df.empty and df[c].astype(str).nunique() > 1]  # only those that vary
    ok = df[df["rank"].notna()] if "rank" in df else df.iloc[0:0]
    n_points = len(df.drop_duplicates(sweep_cols)) if sweep_cols and not df.empty else 1
    if n_points > 1:
        ok = ok.assign(_p=-pd.to_numeric(ok["net_power_kW"])).sort_values(
            ["_p", "fluid", "layout"], kind="mergesort")
    best = ok.head(n)
    counts = df["status"].value_counts() if "status" in df else pd.Series(dtype=int)
    tally = ", ".join(f"{s} {int(counts.get(s, 0))}" for s in ("ok", "infeasible", "failed"))
    if best.empty:
        return f"no feasible case among {len(df)} ({tally})"
    columns = {"#": best["rank"].astype(str)}
    for col in sweep_cols:
        columns[col] = best[col].map(lambda v: _fmt(v, ".4g") or str(v))
    columns["fluid"] = best["display_name"].where(best["display_name"].notna(), best["fluid"]) \
        if "display_name" in best else best["fluid"]
    columns["layout"] = best["layout"]
    spec = [("net kW", "net_power_kW", ".1f"), ("eta_th %", "thermal_efficiency", ".2%"),
            ("eta_II %", "exergy_efficiency", ".2%"), ("T_evap C", "evaporation_temperature_C", ".1f"),
            ("p_evap bar", "evaporation_pressure_bar", ".2f"),
            ("p_cond bar", "condensing_pressure_bar", ".3f"), ("SP m", "size_parameter_m", ".3f"),
            ("VR", "volume_ratio", ".1f")]
    for title, col, fmt in spec:
        if col in best:
            if fmt.endswith("%"):
                columns[title] = best[col].map(lambda v, f=fmt[:-1] + "f": _fmt(100 * float(v), f)
                                               if v is not None and v == v else "")
            else:
                columns[title] = best[col].map(lambda v, f=fmt: _fmt(v, f))
    for title, col in (("class", "safety_class"), ("GWP100", "gwp100")):
        if col in best:
            columns[title] = best[col].map(lambda v: "" if v is None or v != v else
                                           (_fmt(v, ".0f") if isinstance(v, (int, float)) else str(v)))
    table = pd.DataFrame(columns).to_string(index=False)
    if n_points > 1:
        head = f"best {len(best)} of {len(df)} cases over {n_points} operating points"
    else:
        head = f"best {len(best)} of {len(df)} cases"
    return f"{head}\n{table}\n{tally}"
