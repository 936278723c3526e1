"""Ranking helpers on the result table: operating points, best case per point, Pareto sets, and
the folding of layouts whose extra component does nothing.

Pure table operations on the rows of contract section 2 (no physics). An *operating point* is one
combination of swept values; the sweep columns are the ones named with a dotted study path
(e.g. ``"source.inlet_temperature_C"``).

Folding (:func:`fold_inactive`): a recuperated layout whose recuperator takes no heat gives the
basic layout's cycle again; the console table, the charts and the report show such a pair once,
as the simpler layout's row with a note. ranking.csv keeps every case. Which layout is the
simpler one of which, and what its extra exchangers are, is read from the layout registry
(:data:`orcscreen.cycles.LAYOUTS`), never from layout names.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from orcscreen.objectives import PARETO_COLUMN

__all__ = [
    "sweep_columns",
    "feasible",
    "best_per_point",
    "pareto_front",
    "pareto_optimal",
    "dominance_front",
    "FOLD_NOTE",
    "FOLDED",
    "FOLD_RTOL",
    "simpler_layouts",
    "fold_columns",
    "fold_inactive",
]

#: Columns that :func:`fold_inactive` adds: the note on a kept row, and the names of the layouts
#: folded into it ("" where nothing was folded).
FOLD_NOTE = "fold_note"
FOLDED = "folded_layouts"
#: Relative tolerance within which a folded row's net power and objective equal the simpler
#: layout's. The optimiser settles the evaporation temperature to about 2e-3 K, which moves the
#: net power by about 1e-5 relative (measured on the demo study); 1e-4 leaves room (common practice).
FOLD_RTOL = 1e-4


def sweep_columns(df: pd.DataFrame) -> list[str]:
    """Columns holding swept study values (dotted paths such as ``source.mass_flow_kg_s``)."""
    return [c for c in df.columns if isinstance(c, str) and "." in c]


def feasible(df: pd.DataFrame) -> pd.DataFrame:
    """Rows with status "ok" and a finite net power."""
    if df.empty or "status" not in df:
        return df.iloc[0:0]
    power = pd.to_numeric(df["net_power_kW"], errors="coerce")
    return df[(df["status"] == "ok") & np.isfinite(power)]


def _point_groups(df: pd.DataFrame):
    cols = sweep_columns(df)
    if not cols:
        return [((), df)]
    return list(df.groupby(cols, dropna=False, sort=True))


def best_per_point(df: pd.DataFrame, objective: str = "net_power_kW") -> pd.DataFrame:
    """The feasible row with the highest ``objective`` at each operating point.

    Returns one row per operating point that has at least one feasible case, in the order of the
    sweep values (a single row when there is no sweep); points with no feasible case are absent.
    When the table has a ``rank`` column (ranking.csv, :func:`orcscreen.outputs.ranking_table`)
    the row ranked best is taken, so ties are broken as the ranking breaks them; otherwise the first
    row with the highest value. Layouts whose extra component does nothing are folded first
    (:func:`fold_inactive`): such a best case is named by its simpler layout.
    """
    ok = feasible(df)
    if ok.empty:
        return ok
    ok = fold_inactive(ok, objective)
    picks = []
    for _, group in _point_groups(ok):
        ranks = pd.to_numeric(group["rank"], errors="coerce") if "rank" in group else None
        if ranks is not None and ranks.notna().any():
            picks.append(ranks.idxmin())    # rank 1, or the simpler row it was folded into
            continue
        values = pd.to_numeric(group[objective], errors="coerce")
        picks.append(values.idxmax())
    return ok.loc[picks]


def pareto_front(
    df: pd.DataFrame,
    maximise: str = "net_power_kW",
    minimise: str = "size_parameter_m",
) -> pd.Series:
    """Boolean Series (index of ``df``): True where the row is Pareto-optimal for ``maximise``
    against ``minimise`` (:func:`pareto_optimal` over these two columns). Status is not looked
    at: pass the feasible rows."""
    return pareto_optimal(df, [(maximise, True), (minimise, False)]).rename("pareto")


def pareto_optimal(df: pd.DataFrame, columns: Sequence[tuple[str, bool]],
                   significant: int | None = None) -> pd.Series:
    """Boolean Series (index of ``df``): True where the row is Pareto-optimal over ``columns``,
    pairs (column, larger is better).

    A row is Pareto-optimal when no other row is at least as good in every column and strictly
    better in one (weak dominance, the usual definition: Deb, *Multi-Objective Optimization
    Using Evolutionary Algorithms*, Wiley 2001, section 2.4). ``significant``: values are
    compared rounded to that many significant digits (ranking.csv's precision, so that the marks
    can be checked from the file); None compares them as they are. Rows with a missing or
    non-finite value in any column are never on the front; identical rows are all kept. Status
    is not looked at: pass the feasible rows of one operating point.
    """
    values = np.empty((len(df), len(columns)), dtype=float)
    for j, (col, larger_better) in enumerate(columns):
        v = pd.to_numeric(df[col], errors="coerce").to_numpy(dtype=float) if col in df else \
            np.full(len(df), np.nan)
        if significant is not None:
            v = np.array([float(f"{x:.{significant}g}") for x in v], dtype=float)
        values[:, j] = v if larger_better else -v
    return pd.Series(dominance_front(values), index=df.index, name=PARETO_COLUMN)


#: Largest number of rows compared all at once by :func:`dominance_front` (rows x rows x columns
#: booleans); more are compared a row at a time.
_BROADCAST_ROWS = 1500


def dominance_front(values: np.ndarray) -> np.ndarray:
    """Boolean array: True for the rows of ``values`` (n x k, larger is better in every column)
    that no other row dominates (at least as good in every column, better in one). A row with
    a non-finite value is never on the front."""
    values = np.asarray(values, dtype=float)
    n = values.shape[0]
    on_front = np.zeros(n, dtype=bool)
    idx = np.flatnonzero(np.isfinite(values).all(axis=1)) if n else np.array([], dtype=int)
    v = values[idx]
    if len(idx) <= _BROADCAST_ROWS:
        # dominated[i] = some row r with v[r] >= v[i] everywhere and v[r] > v[i] somewhere
        geq = (v[:, None, :] >= v[None, :, :]).all(axis=2)
        gt = (v[:, None, :] > v[None, :, :]).any(axis=2)
        on_front[idx] = ~(geq & gt).any(axis=0)
        return on_front
    for k, i in enumerate(idx):
        dominated = (v >= v[k]).all(axis=1) & (v > v[k]).any(axis=1)
        on_front[i] = not dominated.any()
    return on_front


# --------------------------------------------------------------------------- folding

def simpler_layouts() -> dict[str, tuple[str, tuple[str, ...]]]:
    """Layout name -> (its simpler layout's name, the exchangers it adds), from the registry.

    Layout B is the simpler layout of A when A is an instance of B's class, has the same kind of
    heater (``supercritical``), and B's exchangers and states are a strict subset of A's: the
    recuperated layouts add a recuperator to basic and to transcritical. Where several qualify,
    the one with most exchangers (the closest) is taken.
    """
    from orcscreen.cycles import LAYOUTS

    out: dict[str, tuple[str, tuple[str, ...]]] = {}
    for name, layout in LAYOUTS.items():
        found = [(len(other.exchangers), other_name, other) for other_name, other in LAYOUTS.items()
                 if other is not layout and isinstance(layout, type(other))
                 and other.supercritical == layout.supercritical
                 and set(other.exchangers) < set(layout.exchangers)
                 and set(other.state_labels) <= set(layout.state_labels)]
        if found:
            _, other_name, other = max(found, key=lambda f: f[0])
            out[name] = (other_name, tuple(e for e in layout.exchangers if e not in other.exchangers))
    return out


def fold_columns() -> tuple[str, ...]:
    """The row columns :func:`fold_inactive` reads besides the ranking's (the duty columns of
    the exchangers that layouts add), for readers that load only some columns."""
    return tuple(dict.fromkeys(_duty_column(e) for _, extra in simpler_layouts().values() for e in extra))


def _duty_column(exchanger: str) -> str:
    """The row column of an exchanger's duty [kW] (``recuperator_duty_kW``)."""
    return f"{exchanger.replace(' ', '_')}_duty_kW"


def _inactive(rows: pd.DataFrame, exchangers: tuple[str, ...]) -> pd.Series:
    """True where every one of ``exchangers`` has a duty column and takes no heat."""
    mask = pd.Series(bool(exchangers), index=rows.index)
    for e in exchangers:
        col = _duty_column(e)
        if col not in rows:
            return pd.Series(False, index=rows.index)
        duty = pd.to_numeric(rows[col], errors="coerce").astype(float)
        mask &= np.isfinite(duty) & (duty <= 0.0)
    return mask


def _close(a: pd.Series, b: pd.Series, rtol: float) -> np.ndarray:
    x = pd.to_numeric(a, errors="coerce").to_numpy(dtype=float)
    y = pd.to_numeric(b, errors="coerce").to_numpy(dtype=float)
    return np.isfinite(x) & np.isfinite(y) & np.isclose(x, y, rtol=rtol, atol=0.0)


def fold_inactive(df: pd.DataFrame, objective: str = "net_power_kW",
                  rtol: float = FOLD_RTOL) -> pd.DataFrame:
    """``df`` without the rows whose layout's extra component does nothing, marked on the rows
    kept in their place (a kept row is marked :data:`~orcscreen.objectives.PARETO_COLUMN` when
    a row folded into it is: it stands for both).

    A row is folded when (1) its layout has a simpler layout in the registry
    (:func:`simpler_layouts`), (2) every exchanger it adds has a duty column that is zero or
    less (the recuperator took no heat), (3) the same fluid in the simpler layout at the same
    operating point is ok too, and (4) the two give the same net power and ``objective`` within
    ``rtol``. The simpler row is kept, and column :data:`FOLD_NOTE` says what was folded into it,
    e.g. "recuperated (rank 2) gives the same result: the recuperator gives no gain here", and
    :data:`FOLDED` names the layouts folded ("recuperated"); both "" elsewhere. Order and every other row are unchanged (a table whose index is not unique
    comes back renumbered); a table without the columns needed is returned with an empty note
    column.
    """
    if not df.index.is_unique:
        df = df.reset_index(drop=True)
    out = df.copy()
    out[FOLD_NOTE] = ""
    out[FOLDED] = ""
    if df.empty or not {"fluid", "layout", "net_power_kW"} <= set(df.columns):
        return out
    ok = df[df["status"] == "ok"] if "status" in df else df
    keys = [*sweep_columns(df), "fluid"]
    compared = [c for c in dict.fromkeys(["net_power_kW", objective]) if c in df]
    drop: list = []
    into: dict = {}  # folded row -> the row kept in its place
    notes: dict = {}
    folded: dict = {}
    for layout, (simpler, extra) in simpler_layouts().items():
        rows = ok[ok["layout"] == layout]
        rows = rows[_inactive(rows, extra)]
        base = ok[ok["layout"] == simpler]
        if rows.empty or base.empty:
            continue
        pairs = (rows[keys + compared + [c for c in ("rank",) if c in rows]].reset_index(names="_i")
                 .merge(base[keys + compared].reset_index(names="_j").drop_duplicates(keys),
                        on=keys, suffixes=("", "_base")))
        same = np.ones(len(pairs), dtype=bool)
        for c in compared:
            same &= _close(pairs[c], pairs[f"{c}_base"], rtol)
        words = " and ".join(extra)
        for _, p in pairs[same].iterrows():
            drop.append(p["_i"])
            into[p["_i"]] = p["_j"]
            rank = p.get("rank")
            where = f" (rank {int(rank)})" if rank is not None and pd.notna(rank) else ""
            note = f"{layout}{where} gives the same result: the {words} gives no gain here"
            notes[p["_j"]] = f"{notes[p['_j']]}; {note}" if p["_j"] in notes else note
            folded[p["_j"]] = f"{folded[p['_j']]}, {layout}" if p["_j"] in folded else layout
    for j, note in notes.items():
        out.at[j, FOLD_NOTE] = note
        out.at[j, FOLDED] = folded[j]
    if PARETO_COLUMN in out:  # the kept row stands for the folded ones: marked when one of them is
        for i, j in into.items():
            if _truthy(out.at[i, PARETO_COLUMN]):
                out.at[j, PARETO_COLUMN] = True
    return out.drop(index=drop)


def _truthy(value) -> bool:
    """A Pareto mark read from a table: True, "True" (a CSV read as text), 1."""
    return str(value).strip().lower() in ("true", "1", "yes")
