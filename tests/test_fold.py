"""Tests of the folding of layouts whose extra component does nothing (orcscreen/rank.py,
``fold_inactive``) and of its use in the console top table, the ranking chart and ranking.csv.

The real run is an invented scenario like the demo's (hot water at 120 °C, cooling water at
20 °C) with a fluid whose recuperator stays inactive and one whose recuperator works; which is
which is read from the run itself. A recuperator can only take heat when the turbine outlet is
hotter than the pump outlet plus the recuperator pinch (DESIGN.md section 3); otherwise the
recuperated layout is the basic cycle again, which the engine flags with the warning
"recuperator inactive". The hand-made tables check the rule's edges (tolerance, operating
points, status).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from orcscreen import outputs, plots, rank
from orcscreen.batch import run_study
from orcscreen.cycles import LAYOUTS
from orcscreen.study import study_from_dict

STUDY = {
    "study": {"name": "fold test"},
    "source": {"kind": "water", "inlet_temperature_C": 120, "mass_flow_kg_s": 12, "pressure_bar": 6},
    "sink": {"kind": "water", "inlet_temperature_C": 20, "temperature_rise_K": 8},
    "exchangers": {"pinch_evaporator_K": 8, "pinch_condenser_K": 5},
    "fluids": {"include": ["R1234yf", "R236fa", "n-Pentane"]},
    "cycle": {"layouts": ["basic", "recuperated"]},
}


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    out = tmp_path_factory.mktemp("fold") / "run"
    run_study(study_from_dict(STUDY), out, jobs=1, progress=False)
    summary = outputs.write_outputs(out)
    csv = pd.read_csv(out / outputs.RANKING_FILE)
    return out, summary, csv


def _inactive_fluids(csv: pd.DataFrame) -> set[str]:
    rec = csv[(csv["layout"] == "recuperated") & (csv["status"] == "ok")]
    return set(rec.loc[rec["recuperator_duty_kW"] <= 0, "fluid"])


def test_the_registry_says_which_layout_adds_what():
    """DESIGN.md section 3: the recuperated layout is the basic one plus a recuperator (states
    2r and 4r); the same holds for the transcritical pair."""
    pairs = rank.simpler_layouts()
    assert pairs["recuperated"] == ("basic", ("recuperator",))
    assert pairs["transcritical-recuperated"] == ("transcritical", ("recuperator",))
    assert "basic" not in pairs and "transcritical" not in pairs
    for layout, (simpler, extra) in pairs.items():
        assert set(LAYOUTS[simpler].exchangers) | set(extra) == set(LAYOUTS[layout].exchangers)


def test_csv_keeps_both_rows_the_console_and_the_chart_show_one(run):
    _, summary, csv = run
    inactive = _inactive_fluids(csv)
    assert inactive, "the scenario must have a fluid whose recuperator stays inactive"
    active = set(csv.loc[(csv["layout"] == "recuperated") & (csv["recuperator_duty_kW"] > 0), "fluid"])
    assert active, "the scenario must have a fluid whose recuperator works"
    # ranking.csv: every case, the inactive recuperator flagged by the engine
    assert len(csv) == 6 and (csv["status"] == "ok").all()
    for fluid in inactive:
        rows = csv[csv["fluid"] == fluid]
        assert sorted(rows["layout"]) == ["basic", "recuperated"]
        rec = rows[rows["layout"] == "recuperated"].iloc[0]
        assert "recuperator inactive" in rec["warnings"]
        basic = rows[rows["layout"] == "basic"].iloc[0]
        assert rec["net_power_kW"] == pytest.approx(basic["net_power_kW"], rel=rank.FOLD_RTOL)

    # the console's top table: the inactive fluid once, as basic, with the note
    text = outputs.top_table(summary, n=10)
    table_lines = text.splitlines()[2:2 + 6]
    for fluid in inactive:
        name = fluid  # display names (the csv's fluid column)
        listed = [line for line in table_lines if f" {name} " in line]
        assert len(listed) == 1 and " basic " in listed[0]
        assert f"{name} · basic: recuperated" in text and "recuperator gives no gain here" in text
    for fluid in active:
        name = fluid
        assert len([line for line in table_lines if f" {name} " in line]) == 2
    assert text.splitlines()[0] == f"best {6 - len(inactive)} of 6 cases by net power"
    assert "recuperator inactive" not in text      # the folded row's warning is not listed

    # the ranking chart: one bar per distinct result
    ax = plots.ranking_chart(csv)
    bars = [p for p in ax.patches if (p.get_gid() or "").startswith("bar-")]
    assert len(bars) == 6 - len(inactive)
    labels = [t.get_text() for t in ax.get_yticklabels()]
    for fluid in inactive:
        name = fluid
        assert [l for l in labels if l.startswith(f"{name} ·")] == [f"{name} · basic (recuperated: no gain)"]


def test_best_per_point_names_the_simpler_layout(run):
    _, _, csv = run
    best = rank.best_per_point(csv)
    assert len(best) == 1
    top = csv.loc[csv["rank"] == 1].iloc[0]
    if top["fluid"] in _inactive_fluids(csv):
        assert best.iloc[0]["layout"] == "basic"
    assert best.iloc[0]["net_power_kW"] == pytest.approx(top["net_power_kW"], rel=rank.FOLD_RTOL)


def _pair(power_rec: float, duty: float = 0.0, status: str = "ok", point=(120, 120)) -> pd.DataFrame:
    return pd.DataFrame({
        "source.inlet_temperature_C": list(point),
        "fluid": ["R1234yf", "R1234yf"], "layout": ["basic", "recuperated"],
        "status": ["ok", status], "rank": [1, 2],
        "net_power_kW": [100.0, power_rec], "recuperator_duty_kW": [0.0, duty],
    })


@pytest.mark.parametrize("table, folded", [
    (_pair(100.0), True),                       # the same cycle: folded
    (_pair(100.0 * (1 - 0.5 * rank.FOLD_RTOL)), True),   # within the tolerance
    (_pair(100.0 * (1 - 2 * rank.FOLD_RTOL)), False),    # outside it: both shown
    (_pair(100.0, duty=5.0), False),            # the recuperator takes heat: both shown
    (_pair(100.0, status="infeasible"), False),  # not ok: nothing to fold
    (_pair(100.0, point=(120, 140)), False),    # other operating point: not the same case
])
def test_fold_rule_on_hand_made_tables(table, folded):
    out = rank.fold_inactive(table)
    assert len(out) == (1 if folded else 2)
    kept = out[out["layout"] == "basic"].iloc[0]
    if folded:
        assert kept[rank.FOLDED] == "recuperated"
        assert kept[rank.FOLD_NOTE] == "recuperated (rank 2) gives the same result: the recuperator gives no gain here"
    else:
        assert (out[rank.FOLD_NOTE] == "").all()


def test_fold_compares_the_objective_too():
    """Equal net power but another objective value (an annual energy, say): not folded."""
    table = _pair(100.0).assign(annual_energy_MWh=[800.0, 810.0])
    assert len(rank.fold_inactive(table)) == 1
    assert len(rank.fold_inactive(table, "annual_energy_MWh")) == 2
    assert np.all(rank.fold_inactive(table.iloc[:0])[rank.FOLD_NOTE] == "")
