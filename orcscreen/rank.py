"""Ranking helpers on the result table: operating points, best case per point, Pareto sets.

Pure table operations on the rows of contract section 2 (no physics). An *operating point* is one
combination of swept values; the sweep columns are the ones named with a dotted study path
(e.g. ``"source.inlet_temperature_C"``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = [
    "sweep_columns",
    "feasible",
    "best_per_point",
    "pareto_front",
]


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
    the row ranked 1 is taken, so ties are broken as the ranking breaks them; otherwise the first
    row with the highest value.
    """
    ok = feasible(df)
    if ok.empty:
        return ok
    picks = []
    for _, group in _point_groups(ok):
        if "rank" in group and (pd.to_numeric(group["rank"], errors="coerce") == 1).any():
            picks.append(group.index[(pd.to_numeric(group["rank"], errors="coerce") == 1)][0])
            continue
        values = pd.to_numeric(group[objective], errors="coerce")
        picks.append(values.idxmax())
    return ok.loc[picks]


def pareto_front(
    df: pd.DataFrame,
    maximise: str = "net_power_kW",
    minimise: str = "size_parameter_m",
) -> pd.Series:
    """Boolean Series (index of ``df``): True where the row is Pareto-optimal.

    A row is Pareto-optimal when no other row has ``maximise`` >= and ``minimise`` <= its own with
    at least one of the two strictly better (weak dominance, the usual definition). Rows with a
    missing or non-finite value in either column are never on the front. Identical rows are all
    kept. Status is not looked at: pass the feasible rows.
    """
    gain = pd.to_numeric(df[maximise], errors="coerce").to_numpy(dtype=float)
    cost = pd.to_numeric(df[minimise], errors="coerce").to_numpy(dtype=float)
    valid = np.isfinite(gain) & np.isfinite(cost)
    on_front = np.zeros(len(df), dtype=bool)
    idx = np.flatnonzero(valid)
    g, c = gain[idx], cost[idx]
    for k, i in enumerate(idx):
        at_least_as_good = (g >= g[k]) & (c <= c[k])
        strictly_better = (g > g[k]) | (c < c[k])
        on_front[i] = not np.any(at_least_as_good & strictly_better)
    return pd.Series(on_front, index=df.index, name="pareto")
