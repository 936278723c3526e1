"""Two finished runs side by side (``orcscreen compare DIR_A DIR_B``): what changed for each
fluid and layout at each operating point.

A run folder is what ``orcscreen run`` writes (:mod:`orcscreen.outputs`): ``ranking.csv`` (one
row per case: swept values, rank, fluid, layout, status, reason, figures) and
``run-info.json``. Cases are matched on their swept values (the columns between ``case_key``
and ``rank``, :func:`orcscreen.outputs.ranking_sweep_columns`), fluid and layout. The value
compared is the study's objective (:func:`orcscreen.outputs.objective_of` on the run store's
meta; net power when the store is absent); when the two runs rank by different objectives,
net power is compared and the ranks stay each run's own. Deltas are B minus A, in the column's
unit and in per cent of A.

Pure functions: :func:`read_run` (a folder -> :class:`RunFolder`), :func:`compare_runs` (two
runs -> :class:`Comparison`, its table sorted with the largest changes first),
:func:`format_comparison` (text for the terminal), :func:`comparison_chart` (B against A,
returns the Axes) and :func:`write_comparison` (the chart as PNG and the table as CSV).
pandas and Matplotlib are imported inside the functions (the command line stays light).
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from orcscreen.objectives import DEFAULT_OBJECTIVE, OBJECTIVES, Objective
from orcscreen.outputs import FLOAT_FORMAT, RANKING_FILE, RUN_INFO_FILE, objective_of

if TYPE_CHECKING:  # imported where tables and charts are built
    import pandas as pd
    from matplotlib.axes import Axes

__all__ = [
    "CompareError",
    "RunFolder",
    "Comparison",
    "read_run",
    "compare_runs",
    "summary_line",
    "format_comparison",
    "comparison_chart",
    "default_chart_path",
    "write_comparison",
]

#: Columns every ranking.csv has (outputs.py: case_key first, then the swept values, then rank).
REQUIRED_COLUMNS = ("case_key", "rank", "fluid", "layout", "status")
#: The value compared when the runs rank by different objectives (or by net power).
NET_POWER = OBJECTIVES[DEFAULT_OBJECTIVE]
#: Order of the kinds of change in the table: the largest changes first.
CHANGE_ORDER = {"became infeasible": 0, "failed in B": 0, "became feasible": 0, "worse": 1, "better": 1,
                "moved up": 1, "moved down": 1, "unchanged": 2, "only in A": 3, "only in B": 3, "not ok in either": 4}
#: Cases labelled by name on the chart: the largest relative changes.
LABELLED = 5


class CompareError(Exception):
    """A run folder that cannot be compared: the message names the path, what is missing and
    what is allowed (exit status 2 at the command line)."""


@dataclass(frozen=True)
class RunFolder:
    """One run's outputs: path, folder name, run-info.json, the ranking table, its swept
    columns, the objective it is ranked by and where that was read (``objective_from``)."""

    path: Path
    name: str
    info: dict
    table: Any  # pandas.DataFrame
    sweep_columns: list[str]
    objective: Objective
    objective_from: str


@dataclass
class Comparison:
    """A against B: ``table`` one row per case of either run, largest changes first (columns:
    swept values, fluid, display_name, layout, change, places_gained, A_/B_rank, A_/B_<value>,
    delta_<value>, delta_<value>_percent, A_/B_status, A_/B_reason, safety_class, gwp100);
    ``value`` the compared column; ``counts`` what :func:`summary_line` prints; ``winners``
    (swept values, A's rank 1, B's rank 1) per operating point in both; ``notes`` the caveats."""

    a: RunFolder
    b: RunFolder
    table: Any  # pandas.DataFrame
    value: Objective
    keys: list[str]
    counts: dict[str, int]
    winners: list[tuple[dict, str, str]]
    notes: list[str] = field(default_factory=list)


# ---------------------------------------------------------------------------------------------
# Reading
# ---------------------------------------------------------------------------------------------

def read_run(directory: str | os.PathLike[str]) -> RunFolder:
    """Read ``directory/ranking.csv`` and ``directory/run-info.json``; the objective from the run
    store's meta (``run.sqlite``, read only) when there is one. Raises :class:`CompareError`
    naming the path and what is missing."""
    path = Path(directory)
    if not path.exists():
        raise CompareError(f"{path}: no such folder; allowed: the output folder of an `orcscreen run` "
                           f"(holding {RANKING_FILE} and {RUN_INFO_FILE})")
    if not path.is_dir():
        raise CompareError(f"{path}: not a folder; allowed: the output folder of an `orcscreen run`")
    for name in (RANKING_FILE, RUN_INFO_FILE):
        if not (path / name).is_file():
            raise CompareError(f"{path}: no {name} in this folder; allowed: the output folder of an "
                               f"`orcscreen run` (holding {RANKING_FILE} and {RUN_INFO_FILE})")
    info = _read_info(path / RUN_INFO_FILE)
    import pandas as pd

    from orcscreen.outputs import ranking_sweep_columns

    ranking = path / RANKING_FILE
    try:
        table = pd.read_csv(ranking, dtype={c: str for c in ("case_key", "fluid", "coolprop_name", "display_name", "layout",
                                                              "status", "reason", "safety_class")},
                            keep_default_na=False, na_values=[""])
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, ValueError) as exc:
        raise CompareError(f"{ranking}: unreadable CSV ({_one_line(exc)}); allowed: the {RANKING_FILE} "
                           "an `orcscreen run` writes") from None
    missing = [c for c in REQUIRED_COLUMNS if c not in table.columns]
    if missing or table.columns[0] != "case_key":
        shown = ", ".join(missing) if missing else "case_key as the first column"
        raise CompareError(f"{ranking}: no {shown}; allowed: the {RANKING_FILE} an `orcscreen run` writes "
                           f"(columns case_key, the swept values, rank, fluid, layout, status, ...)")
    if "coolprop_name" in table:  # runs that name fluids for people: match on the CoolProp name
        table["display_name"] = table["fluid"]
        table["fluid"] = table["coolprop_name"].astype(str)
        if "composition_optimised" in table:  # a searched composition: match on its pair ("A&B")
            searched = table["composition_optimised"].astype(str).str.lower().isin(("true", "1", "1.0"))
            table.loc[searched, "fluid"] = table.loc[searched, "fluid"].str.replace(r"\[[^\]]*\]", "", regex=True)
    table["rank"] = pd.to_numeric(table["rank"], errors="coerce").astype("Int64")
    for col in ("reason", "display_name"):
        if col in table:
            table[col] = table[col].fillna("")
    sweep = ranking_sweep_columns(table)
    for col in sweep:
        numbers = pd.to_numeric(table[col], errors="coerce")
        table[col] = numbers.astype(float) if numbers.notna().sum() == table[col].notna().sum() \
            else table[col].astype(str)
    keys = [*sweep, "fluid", "layout"]
    twice = table[table.duplicated(keys, keep=False)]
    if len(twice):
        first = twice.iloc[0]
        shown = ", ".join(f"{k} = {first[k]}" for k in keys)
        raise CompareError(f"{ranking}: {len(twice)} rows share their fluid, layout and swept values "
                           f"(e.g. {shown}); allowed: one row per case, as `orcscreen run` writes")
    objective, source = _objective_of_run(path)
    name = path.resolve().name or str(path)
    return RunFolder(path, name, info, table, sweep, objective, source)


def _read_info(path: Path) -> dict:
    """run-info.json as a dict, or a CompareError naming the file."""
    try:
        info = json.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise CompareError(f"{path}: not UTF-8 text; allowed: the {RUN_INFO_FILE} an `orcscreen run` writes") from None
    except json.JSONDecodeError as exc:
        raise CompareError(f"{path}: not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg}); "
                           f"allowed: the {RUN_INFO_FILE} an `orcscreen run` writes") from None
    if not isinstance(info, dict):
        raise CompareError(f"{path}: a JSON {type(info).__name__}, not an object; allowed: the "
                           f"{RUN_INFO_FILE} an `orcscreen run` writes")
    return info


def _objective_of_run(path: Path) -> tuple[Objective, str]:
    """The objective the run is ranked by, and where it was read: the store's study (run.sqlite,
    opened as a reader), else net power, said to be assumed."""
    import sqlite3

    from orcscreen.store import STORE_FILE, RunStore, StoreError

    if not (path / STORE_FILE).is_file():
        return NET_POWER, f"not recorded (no {STORE_FILE}): net power assumed"
    try:
        with RunStore(path, create=False) as store:
            meta = store.meta()
    except (StoreError, sqlite3.Error, OSError) as exc:
        return NET_POWER, f"not read ({_one_line(exc)}): net power assumed"
    return objective_of(meta), "the run store"


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__


# ---------------------------------------------------------------------------------------------
# Comparing
# ---------------------------------------------------------------------------------------------

def compare_runs(a: RunFolder, b: RunFolder) -> Comparison:
    """The comparison of run A with run B (see :class:`Comparison`); deltas are B - A."""
    value = a.objective if a.objective.name == b.objective.name else NET_POWER
    notes = []
    if a.objective.name != b.objective.name:
        notes.append(f"A is ranked by {a.objective.label}, B by {b.objective.label}: net power is compared; "
                     "each rank is its own run's")
    for run, tag in ((a, "A"), (b, "B")):
        if run.objective_from != "the run store":
            notes.append(f"objective of {tag} ({run.path}) {run.objective_from}")
    compared = [value.column] + ([NET_POWER.column] if value.column != NET_POWER.column else [])
    for run in (a, b):
        for col in compared:
            if col not in run.table.columns:
                raise CompareError(f"{run.path / RANKING_FILE}: no column {col}; allowed: the {RANKING_FILE} "
                                   "an `orcscreen run` writes")
    keys = list(dict.fromkeys([*a.sweep_columns, *b.sweep_columns]))
    if a.sweep_columns != b.sweep_columns:
        notes.append(f"the runs sweep different settings (A: {', '.join(a.sweep_columns) or 'none'}; "
                     f"B: {', '.join(b.sweep_columns) or 'none'}): only cases with the same values of "
                     f"{', '.join(keys)} are matched")
    keep = ["rank", "status", "reason", *compared]
    info = ["display_name", "safety_class", "gwp100"]
    sides = []
    for run, tag in ((a, "A"), (b, "B")):
        t = run.table.copy()
        for col in keys:
            if col not in t:
                t[col] = math.nan
        for col in info:
            if col not in t:
                t[col] = None
        t = t[[*keys, "fluid", "layout", *info, *keep]]
        sides.append(t.rename(columns={c: f"{tag}_{c}" for c in [*info, *keep]}))
    for col in keys:  # a swept column read as numbers in one run and as text in the other
        if sides[0][col].dtype != sides[1][col].dtype:
            for t in sides:
                t[col] = t[col].map(lambda v: "" if _missing(v) else f"{v:g}" if isinstance(v, float) else str(v))
    merged = sides[0].merge(sides[1], on=[*keys, "fluid", "layout"], how="outer", indicator=True, sort=False)
    table = _finish(merged, keys, compared, value)
    counts = _counts(table)
    winners = _winners(a, b, keys)
    counts["winner_changes"] = sum(wa != wb for _, wa, wb in winners)
    return Comparison(a, b, table, value, keys, counts, winners, notes)


def _finish(merged: pd.DataFrame, keys: list[str], compared: list[str], value: Objective) -> pd.DataFrame:
    """Deltas, the change of each case and the table's columns, largest changes first."""
    import numpy as np
    import pandas as pd

    df = merged
    for col in ("display_name", "safety_class", "gwp100"):
        df[col] = df[f"B_{col}"].where(df[f"B_{col}"].notna(), df[f"A_{col}"])
    for col in compared:
        va = pd.to_numeric(df[f"A_{col}"], errors="coerce").astype(float)
        vb = pd.to_numeric(df[f"B_{col}"], errors="coerce").astype(float)
        df[f"A_{col}"], df[f"B_{col}"] = va, vb
        df[f"delta_{col}"] = vb - va
        with np.errstate(divide="ignore", invalid="ignore"):
            pct = 100.0 * (vb - va) / va.abs()
        df[f"delta_{col}_percent"] = pct.where(np.isfinite(pct))
    df["places_gained"] = (df["A_rank"] - df["B_rank"]).astype("Int64")
    df["change"] = [_change(r, value) for r in df.to_dict("records")]
    rel = df[f"delta_{value.column}_percent"].abs().fillna(0.0)
    best_rank = df["A_rank"].fillna(df["B_rank"]).astype(float).fillna(math.inf)
    df = df.assign(_order=df["change"].map(CHANGE_ORDER), _rel=-rel,
                   _places=-df["places_gained"].abs().astype(float).fillna(0.0), _best=best_rank)
    df = df.sort_values(["_order", "_rel", "_places", "_best", "fluid", "layout"], kind="mergesort")
    values = [c for col in compared for c in (f"A_{col}", f"B_{col}", f"delta_{col}", f"delta_{col}_percent")]
    columns = [*keys, "fluid", "display_name", "layout", "change", "places_gained", "A_rank", "B_rank", *values,
               "A_status", "B_status", "A_reason", "B_reason", "safety_class", "gwp100"]
    return df[columns].reset_index(drop=True)


def _change(r: dict, value: Objective) -> str:
    """The kind of change of one case (a key of CHANGE_ORDER)."""
    if r["_merge"] == "left_only":
        return "only in A"
    if r["_merge"] == "right_only":
        return "only in B"
    ok_a, ok_b = r["A_status"] == "ok", r["B_status"] == "ok"
    if ok_a and not ok_b:
        return "became infeasible" if r["B_status"] == "infeasible" else "failed in B"
    if ok_b and not ok_a:
        return "became feasible"
    if not ok_a:
        return "not ok in either"
    delta = r[f"delta_{value.column}"]
    places = r["places_gained"]
    if (delta == 0 or _missing(delta)) and (_missing(places) or places == 0):
        return "unchanged"
    if not _missing(delta) and delta != 0:
        return "better" if (delta > 0) == value.maximise else "worse"
    return "moved up" if places > 0 else "moved down"


def _missing(v: Any) -> bool:
    """True for None, NaN and pandas' NA."""
    import pandas as pd

    try:
        return bool(pd.isna(v))
    except (TypeError, ValueError):
        return False


def _counts(table: pd.DataFrame) -> dict[str, int]:
    """Cases in both runs, rank changes (ranked in both), status changes, cases in one run."""
    change = table["change"]
    both = ~change.isin(["only in A", "only in B"])
    ranked = table["A_rank"].notna() & table["B_rank"].notna()
    return {
        "compared": int(both.sum()),
        "rank_changed": int((ranked & (table["A_rank"] != table["B_rank"])).sum()),
        "became_infeasible": int((change == "became infeasible").sum()),
        "failed_in_b": int((change == "failed in B").sum()),
        "became_feasible": int((change == "became feasible").sum()),
        "only_a": int((change == "only in A").sum()),
        "only_b": int((change == "only in B").sum()),
    }


def _winners(a: RunFolder, b: RunFolder, keys: list[str]) -> list[tuple[dict, str, str]]:
    """(swept values, A's winner, B's winner) for each operating point ranked in both runs."""
    found = []
    firsts = []
    for run in (a, b):
        t = run.table[run.table["rank"] == 1]
        firsts.append({tuple(_key(r.get(k)) for k in keys): (dict((k, r.get(k)) for k in keys), _name(r))
                       for r in t.to_dict("records")})
    for point, (values, name_a) in firsts[0].items():
        if point in firsts[1]:
            found.append((values, name_a, firsts[1][point][1]))
    return found


def _key(v: Any) -> Any:
    return "nan" if v is None or (isinstance(v, float) and math.isnan(v)) else v


def _name(r: dict) -> str:
    return f"{r.get('display_name') or r.get('fluid')} · {r.get('layout')}"


# ---------------------------------------------------------------------------------------------
# Text
# ---------------------------------------------------------------------------------------------

def summary_line(c: Comparison) -> str:
    """One line: cases compared, rank changes, feasibility changes, cases in one run, winner."""
    n = c.counts
    parts = [f"{n['compared']} case{'s' if n['compared'] != 1 else ''} in both runs",
             f"{n['rank_changed']} changed rank", f"{n['became_infeasible']} became infeasible",
             f"{n['became_feasible']} became feasible"]
    if n["failed_in_b"]:
        parts.append(f"{n['failed_in_b']} failed in B")
    parts.append(f"{n['only_a']} only in A, {n['only_b']} only in B")
    if not c.winners:
        winner = "no operating point ranked in both runs"
    elif len(c.winners) == 1:
        _, wa, wb = c.winners[0]
        winner = f"winner changed: {wa} -> {wb}" if wa != wb else f"winner unchanged: {wa}"
    else:
        k = c.counts["winner_changes"]
        winner = (f"winner changed at {k} of {len(c.winners)} operating points" if k
                  else f"winner unchanged at all {len(c.winners)} operating points")
    return "compare: " + ", ".join(parts) + "; " + winner


def _number(v: Any, percent: bool = False) -> str:
    try:
        x = float(v)
    except (TypeError, ValueError):
        return "-"
    if not math.isfinite(x):
        return "-"
    if percent:
        return f"{x:+.1f}"
    return f"{x:,.0f}" if abs(x) >= 1000 else f"{x:.4g}"


def _rank_text(v: Any) -> str:
    return "-" if _missing(v) else str(int(v))


def format_comparison(c: Comparison, n: int = 20) -> str:
    """Text for the terminal: the summary line, the two runs, the notes, the first ``n`` rows of
    the table (largest changes first) and the reasons of the status changes among them."""
    lines = [summary_line(c)]
    for run, tag in ((c.a, "A"), (c.b, "B")):
        study = run.info.get("study_name") or "?"
        lines.append(f"  {tag}: {run.path} (study {study!r}, {len(run.table)} cases, ranked by "
                     f"{run.objective.label})")
    lines += [f"  note: {note}" for note in c.notes]
    col = c.value.column
    varying = [k for k in c.keys if c.table[k].nunique(dropna=False) > 1]
    shown = c.table[c.table["change"] != "unchanged"].head(n)
    if shown.empty:
        lines.append(f"no change in {col} or rank")
        return "\n".join(lines)
    import pandas as pd

    cells: dict[str, list[str]] = {"change": list(shown["change"])}
    for k in varying:
        cells[k] = [_number(v) if isinstance(v, float) else str(v) for v in shown[k]]
    cells["fluid"] = [str(r["display_name"] or r["fluid"]) for r in shown.to_dict("records")]
    cells["layout"] = list(shown["layout"].astype(str))
    cells["rank A -> B"] = [f"{_rank_text(x)} -> {_rank_text(y)}" for x, y in zip(shown["A_rank"], shown["B_rank"])]
    cells[f"{col} A"] = [_number(v) for v in shown[f"A_{col}"]]
    cells[f"{col} B"] = [_number(v) for v in shown[f"B_{col}"]]
    cells["delta"] = [_number(v) for v in shown[f"delta_{col}"]]
    cells["delta %"] = [_number(v, percent=True) for v in shown[f"delta_{col}_percent"]]
    cells["class"] = ["-" if _missing(v) else str(v) for v in shown["safety_class"]]
    lines.append(pd.DataFrame(cells).to_string(index=False))
    more = int((c.table["change"] != "unchanged").sum()) - len(shown)
    if more > 0:
        lines.append(f"... {more} more changed cases in the CSV")
    reasons = []
    for r in shown.to_dict("records"):
        if r["change"] in ("became infeasible", "failed in B"):
            reasons.append(f"  {_name(r)}{_at(r, varying)}: {r['change']}: {r['B_reason'] or 'no reason given'}")
        elif r["change"] == "became feasible":
            reasons.append(f"  {_name(r)}{_at(r, varying)}: became feasible; in A it was {r['A_status']}: "
                           f"{r['A_reason'] or 'no reason given'}")
    if reasons:
        lines.append("status changes:")
        lines += reasons
    return "\n".join(lines)


def _at(r: dict, varying: list[str]) -> str:
    return "".join(f" at {k} = {_number(r[k]) if isinstance(r[k], float) else r[k]}" for k in varying)


# ---------------------------------------------------------------------------------------------
# Chart and files
# ---------------------------------------------------------------------------------------------

def comparison_chart(c: Comparison, ax: Axes | None = None, labelled: int = LABELLED) -> Axes:
    """The compared value in B against A, one point per case with a value in both runs (marker
    by layout), the line B = A, and the ``labelled`` cases of largest relative change named.
    A case with a value in one run only (infeasible, failed or absent in the other) is a grey
    cross on the axis of the run that has it. Returns the Axes."""
    import numpy as np
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from orcscreen import plots

    col = c.value.column
    if ax is None:
        fig = Figure(figsize=(plots.WIDTH_IN, 5.6), layout="constrained")
        FigureCanvasAgg(fig)
        ax = fig.add_subplot()
    t = c.table
    has_a, has_b = np.isfinite(t[f"A_{col}"].astype(float)), np.isfinite(t[f"B_{col}"].astype(float))
    both, only_a, only_b = t[has_a & has_b], t[has_a & ~has_b], t[~has_a & has_b]
    values = np.concatenate([t.loc[has_a, f"A_{col}"].to_numpy(float), t.loc[has_b, f"B_{col}"].to_numpy(float)])
    if not len(values):
        ax.text(0.5, 0.5, "no case has a value in either run", transform=ax.transAxes, ha="center",
                fontsize=plots.LABEL_PT)
        values = np.array([0.0, 1.0])
    lo, hi = float(values.min()), float(values.max())
    pad = 0.06 * (hi - lo) if hi > lo else max(abs(hi) * 0.06, 1.0)
    lo, hi = lo - pad, hi + pad
    ax.plot([lo, hi], [lo, hi], color="#777777", linewidth=0.8, linestyle="--", label="B = A", zorder=2)
    for layout, part in both.groupby("layout", sort=True):
        style = plots.LAYOUT_STYLE.get(str(layout), {"color": plots.OKABE_ITO["reddish_purple"], "marker": "^"})
        ax.scatter(part[f"A_{col}"], part[f"B_{col}"], s=24, color=style["color"], marker=style["marker"],
                   edgecolor="white", linewidth=0.4, label=str(layout), zorder=3)
    if len(only_a):
        ax.scatter(only_a[f"A_{col}"], np.full(len(only_a), lo), marker="x", s=30, color="#777777",
                   clip_on=False, zorder=4, label="no value in B (on the A axis)")
    if len(only_b):
        ax.scatter(np.full(len(only_b), lo), only_b[f"B_{col}"], marker="x", s=30, color="#777777",
                   clip_on=False, zorder=4, label="no value in A (on the B axis)")
    ax.set_xlim(lo, hi)
    ax.set_ylim(lo, hi)
    varying = [k for k in c.keys if t[k].nunique(dropna=False) > 1]
    moved = both[both[f"delta_{col}"].abs() > 0]
    top = moved.assign(_r=moved[f"delta_{col}_percent"].abs().fillna(0.0)) \
        .sort_values("_r", ascending=False, kind="mergesort").head(labelled)
    middle = 0.5 * (lo + hi)
    for r in top.to_dict("records"):
        right = r[f"A_{col}"] > middle  # the label on the side with room
        ax.annotate(_name(r) + _at(r, varying), xy=(r[f"A_{col}"], r[f"B_{col}"]), xytext=(-5 if right else 5, 5),
                    textcoords="offset points", ha="right" if right else "left", fontsize=plots.NOTE_PT - 0.5,
                    bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.7})
    x, y, ha, va = (0.02, 0.98, "left", "top") if c.value.maximise else (0.98, 0.02, "right", "bottom")
    ax.text(x, y, "better in B", transform=ax.transAxes, ha=ha, va=va, fontsize=plots.NOTE_PT,
            color=plots.OKABE_ITO["bluish_green"])
    ax.legend(fontsize=plots.NOTE_PT, loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0)
    label = plots.axis_label(col)
    ax.set_title(f"{c.b.name} (B) against {c.a.name} (A): {label.split(' [')[0]}", fontsize=plots.TITLE_PT,
                 loc="left")
    ax.set_xlabel(f"A, {c.a.name}: {label}", fontsize=plots.LABEL_PT)
    ax.set_ylabel(f"B, {c.b.name}: {label}", fontsize=plots.LABEL_PT)
    ax.tick_params(labelsize=plots.TICK_PT)
    ax.grid(True, color="#DDDDDD", linewidth=0.6)
    ax.set_axisbelow(True)
    return ax


def default_chart_path(dir_a: str | os.PathLike[str], dir_b: str | os.PathLike[str]) -> Path:
    """``DIR_B/compare-<name of A>.png`` (the name made safe for a file name)."""
    from orcscreen.plots import file_stem

    name = Path(dir_a).resolve().name or "run"
    return Path(dir_b) / f"compare-{file_stem(name) or 'run'}.png"


def write_comparison(c: Comparison, chart_path: str | os.PathLike[str]) -> tuple[Path, Path]:
    """Write the chart to ``chart_path`` (PNG) and the table beside it (same stem, ``.csv``);
    return both paths. The CSV's floats have 6 significant digits, like ranking.csv."""
    from orcscreen import plots
    from orcscreen.safe_files import atomic_write

    chart = Path(chart_path)
    if chart.suffix.lower() != ".png":
        raise CompareError(f"{chart}: the chart is a PNG file; allowed: a file name ending in .png")
    table_path = chart.with_suffix(".csv")
    chart.parent.mkdir(parents=True, exist_ok=True)
    atomic_write(table_path, c.table.to_csv(index=False, float_format=FLOAT_FORMAT, lineterminator="\n"))
    ax = comparison_chart(c)
    plots.write_png(ax.figure, chart)
    return chart, table_path
