"""Tests of the charts (orcscreen/plots.py) and of the Pareto and best-per-point helpers
(orcscreen/rank.py).

The charts are checked against the data they draw, taken from a small real run of the engine
(``orcscreen.api.run_case`` on a study of a few catalogue fluids): each chart must show exactly
the numbers of the rows and details, in the stated units. Where the engine's numbers themselves
have an outside reference, the test says so: the pinch marked on a T-Q diagram is compared with
the pinch set in the study (DESIGN.md section 3: the working-fluid flow is the largest that keeps
the evaporator pinch, and the condensing temperature the lowest that keeps the condenser pinch,
so without a minimum source outlet temperature both settings are met exactly; common practice
for pinch-limited screening).
The Pareto tests use hand-made tables whose front was worked out by hand.
"""

from __future__ import annotations

import json

import math
import re

import matplotlib.image as mpimg
import numpy as np
import pandas as pd
import pytest

from orcscreen import plots, rank
from orcscreen.figures import with_ts_data
from orcscreen.api import run_case
from orcscreen.study import study_from_dict

UNIT = re.compile(r"\[[^\]]+\]$")

# An invented scenario: 10 kg/s of hot water at 130 °C, cooling water at 20 °C (the study
# defaults: 10 K evaporator pinch, 5 K condenser pinch).
STUDY = {
    "study": {"name": "plot test"},
    "source": {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kg_s": 10},
    "fluids": {"include": ["R245fa", "Isobutane", "n-Pentane", "CarbonDioxide"]},
    "cycle": {"layouts": ["basic", "recuperated"]},
}
PINCH_EVAPORATOR_K = 10.0
PINCH_CONDENSER_K = 5.0


def _run(study: dict) -> tuple[pd.DataFrame, dict]:
    rows, details = [], {}
    for n, case in enumerate(study_from_dict(study).cases()):
        result = run_case(case)
        row = {"case_key": f"case-{n}", **case.sweep, **result["row"]}
        rows.append(row)
        details[row["case_key"]] = result["detail"]
    return pd.DataFrame(rows), details


@pytest.fixture(scope="module")
def run():
    df, details = _run(STUDY)
    assert (df["status"] == "ok").sum() >= 4, df[["fluid", "layout", "status", "reason"]]
    return df, details


@pytest.fixture(scope="module")
def sweep_run():
    study = {**STUDY, "fluids": {"include": ["R245fa", "Isobutane"]},
             "cycle": {"layouts": ["basic"]},
             "sweep": {"source.inlet_temperature_C": [120, 140],
                       "sink.inlet_temperature_C": [15, 25]}}
    return _run(study)[0]


def _best_ok(df: pd.DataFrame, layout: str | None = None) -> pd.Series:
    ok = df[df["status"] == "ok"]
    if layout:
        ok = ok[ok["layout"] == layout]
    return ok.loc[ok["net_power_kW"].idxmax()]


def _assert_units(ax):
    for label in (ax.get_xlabel(), ax.get_ylabel()):
        if label:
            assert UNIT.search(label), f"axis label without a unit: {label!r}"


def _by_gid(artists, gid):
    found = [a for a in artists if a.get_gid() == gid]
    assert found, f"no artist with gid {gid!r}"
    return found[0]


# --------------------------------------------------------------------------- labels

@pytest.mark.parametrize("column, expected", [
    ("net_power_kW", "net power [kW]"),
    ("ua_total_kW_K", "total UA (all exchangers) [kW/K]"),
    ("size_parameter_m", "turbine size parameter SP [m]"),
    ("source.inlet_temperature_C", "source inlet temperature [°C]"),
    ("source.mass_flow_kg_s", "source mass flow [kg/s]"),
    ("exchangers.pinch_evaporator_K", "exchangers pinch evaporator [K]"),
    ("source.cp_kJ_kgK", "source cp [kJ/(kg·K)]"),
    ("machines.turbine_efficiency", "machines turbine efficiency [-]"),
])
def test_axis_label_carries_the_unit_of_the_column_name(column, expected):
    assert plots.axis_label(column) == expected


# --------------------------------------------------------------------------- ranking

def test_ranking_bars_best_first_with_class_and_gwp(run):
    df, _ = run
    ax = plots.ranking_chart(df)
    # a layout whose recuperator takes no heat is one bar, its simpler layout's
    ok = rank.fold_inactive(df[df["status"] == "ok"]).sort_values("net_power_kW", ascending=False)
    bars = sorted((p for p in ax.patches if (p.get_gid() or "").startswith("bar-")),
                  key=lambda p: p.get_y())
    # the y axis is inverted: the bar nearest y = 0 is drawn on top
    assert ax.yaxis_inverted()
    assert len(bars) == len(ok)
    np.testing.assert_allclose([b.get_width() for b in bars], ok["net_power_kW"], rtol=1e-12)
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels == [plots.case_label(r) + (f" ({r[rank.FOLDED]}: no gain)" if r[rank.FOLDED] else "")
                      for _, r in ok.iterrows()]
    for i, (_, r) in enumerate(ok.iterrows()):
        note = _by_gid(ax.texts, f"bar-note-{i}").get_text()
        assert f"{r['net_power_kW']:.1f} kW" in note
        cls = r["safety_class"] if isinstance(r["safety_class"], str) else ""
        assert {"none": "not classified", "": "class unknown"}.get(cls, cls) in note
        gwp = r["gwp100"]
        assert (f"GWP {gwp:g}" if gwp is not None and math.isfinite(gwp) else "GWP unknown") in note
    # the infeasible carbon dioxide cases (critical point below the useful evaporation
    # temperature: 31 °C, NIST Chemistry WebBook, from memory) have no bar
    assert not any("CarbonDioxide" in l or "carbon dioxide" in l.lower() for l in labels)
    _assert_units(ax)


def test_ranking_axis_starts_near_the_smallest_bar_and_says_so(run):
    df, _ = run
    ax = plots.ranking_chart(df)
    widths = [p.get_width() for p in ax.patches if (p.get_gid() or "").startswith("bar-")]
    lo, hi = ax.get_xlim()
    # not at zero: below the smallest bar by at most a fifth of the spread of the bars
    # (at least 5 % of the largest), so the smallest bar stays visible
    spread = max(max(widths) - min(widths), 0.05 * max(widths))
    assert 0.0 < lo < min(widths)
    assert min(widths) - lo <= 0.2 * spread
    assert f"axis from {lo:g} kW, not zero" in ax.get_xlabel()
    _assert_units(ax)


@pytest.mark.parametrize("power, start", [
    ([245.6, 150.2], 140.0),    # spread 95.4: 150.2 - 9.54 = 140.66, floored to a step of 1 kW
    ([220.0, 219.0], 217.0),    # spread below 5 % of 220: 11 kW; 219 - 1.1 = 217.9, step 1 kW
    ([50.0, 3.0], 0.0),         # the step down would reach zero: drawn from zero
    ([10.0, -2.0], -2.1),       # a bar below zero: the usual axis through zero
])
def test_ranking_axis_start_by_hand(power, start):
    """Worked by hand from the rule of plots.ranking_axis_start (a tenth of the spread below the
    smallest bar, rounded down to a step of 10**floor(log10(spread / 10)))."""
    assert plots.ranking_axis_start(power) == pytest.approx(start)


def test_ranking_chart_cuts_to_max_bars_and_says_so(run):
    df, _ = run
    ax = plots.ranking_chart(df, max_bars=3)
    assert len([p for p in ax.patches if (p.get_gid() or "").startswith("bar-")]) == 3
    assert "more in the table" in ax.get_title(loc="left")


def test_ranking_chart_without_feasible_case_raises_clearly(run):
    df, _ = run
    with pytest.raises(ValueError, match="no feasible case"):
        plots.ranking_chart(df[df["status"] != "ok"])


# --------------------------------------------------------------------------- T-Q

@pytest.mark.parametrize("layout", ["basic", "recuperated"])
def test_tq_pinch_marks_equal_the_detail_and_the_study_setting(run, layout):
    df, details = run
    row = _best_ok(df, layout)
    detail = details[row["case_key"]]
    ax = plots.tq_diagram(detail, row)
    exchangers = {k: v for k, v in detail["exchangers"].items() if v}
    assert {"evaporator", "condenser"} <= set(exchangers)
    offset = 0.0
    for name in ("condenser", "recuperator", "evaporator"):
        hx = exchangers.get(name)
        if hx is None:
            continue
        # a narrow exchanger (the recuperator) has its pinch labelled in its enlarged inset
        inset = [a for a in ax.child_axes if a.get_gid() == f"inset-{name}"]
        texts = inset[0].texts if inset else ax.texts
        assert inset or hx["duty_kW"] >= plots.TQ_NARROW_SHARE * sum(
            h["duty_kW"] for h in exchangers.values())
        text = _by_gid(texts, f"pinch-{name}").get_text()
        shown = float(re.search(r"pinch ([0-9.]+) K", text).group(1))
        assert shown == pytest.approx(hx["pinch_K"], abs=0.05)
        # the marked bar spans the two streams at the pinch
        bar = _by_gid(ax.lines, f"pinch-{name}-bar")
        np.testing.assert_allclose(bar.get_ydata(), [hx["pinch_T_cold_C"], hx["pinch_T_hot_C"]])
        np.testing.assert_allclose(bar.get_xdata(), [offset + hx["pinch_Q_kW"]] * 2)
        # the curves drawn are the detail's profiles, and the pinch is their closest approach
        hot = _by_gid(ax.lines, f"{name}-hot")
        cold = _by_gid(ax.lines, f"{name}-cold")
        np.testing.assert_allclose(hot.get_xdata(), np.asarray(hx["Q_kW"]) + offset)
        gap = np.asarray(hot.get_ydata()) - np.asarray(cold.get_ydata())
        assert gap.min() == pytest.approx(hx["pinch_K"], abs=1e-9)
        offset += hx["duty_kW"]
    # outside reference: the pinch settings of the study (see module docstring; the study sets
    # no minimum source outlet temperature, so the evaporator pinch alone limits the flow)
    assert exchangers["evaporator"]["pinch_K"] == pytest.approx(PINCH_EVAPORATOR_K, abs=0.05)
    assert exchangers["condenser"]["pinch_K"] == pytest.approx(PINCH_CONDENSER_K, abs=0.05)
    assert ax.get_xlim() == pytest.approx((0.0, offset))
    assert "[kW]" in ax.get_xlabel() and "[°C]" in ax.get_ylabel()


def test_tq_duties_balance_heat_input_and_rejection(run):
    """Energy balance (first law) on what the chart shows: evaporator duty = heat input and
    condenser duty = heat rejected of the row."""
    df, details = run
    for _, row in df[df["status"] == "ok"].iterrows():
        hx = details[row["case_key"]]["exchangers"]
        assert hx["evaporator"]["duty_kW"] == pytest.approx(row["heat_input_kW"], rel=1e-6)
        assert hx["condenser"]["duty_kW"] == pytest.approx(row["heat_rejected_kW"], rel=1e-6)


# --------------------------------------------------------------------------- T-s

def test_ts_diagram_draws_the_states_dome_and_path(run):
    df, details = run
    row = _best_ok(df, "recuperated")
    detail = with_ts_data(details[row["case_key"]], row)  # the T-s data is computed for the drawn cases only
    ax = plots.ts_diagram(detail, row)
    states = _by_gid(ax.lines, "states")
    np.testing.assert_allclose(states.get_xdata(), [s["s_kJ_kgK"] for s in detail["states"]])
    np.testing.assert_allclose(states.get_ydata(), [s["T_C"] for s in detail["states"]])
    numbered = {t.get_text() for t in ax.texts if (t.get_gid() or "").startswith("state-")}
    assert numbered == {s["name"] for s in detail["states"]}
    assert {"1", "2", "3", "4"} <= numbered
    dome = _by_gid(ax.lines, "dome")
    # the dome reaches above the evaporation temperature of the cycle
    assert max(dome.get_ydata()) > row["evaporation_temperature_C"]
    path = _by_gid(ax.lines, "cycle-path")
    np.testing.assert_allclose(path.get_ydata(), detail["ts_path"]["T_C"])
    assert ax.get_xlabel() == "specific entropy [kJ/(kg·K)]"
    assert ax.get_ylabel() == "temperature [°C]"


@pytest.mark.parametrize("fluid, layout, source_C", [
    ("R245fa", "basic", 130.0), ("R245fa", "recuperated", 130.0), ("R245fa", "bleed-regenerative", 130.0),
    ("R245fa", "reheat", 130.0), ("R134a", "transcritical", 150.0)])
def test_ts_data_from_the_stored_states_equals_the_live_result(fluid, layout, source_C):
    """The T-s path drawn from a stored detail (its states, the row's temperatures) is the one
    the live cycle result gives (layout.ts_path on the engine's own states) to 1e-9: deferring the
    chart data to the drawn cases changes nothing drawn."""
    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles import LAYOUTS
    from orcscreen.figures import case_detail, result_row, ts_data
    from orcscreen.optimize import optimise
    from orcscreen.study import study_from_dict

    raw = {"source": {"kind": "brine", "inlet_temperature_C": source_C, "mass_flow_kg_s": 30.0},
           "sink": {"kind": "water", "inlet_temperature_C": 20.0}, "fluids": {"include": [fluid]},
           "cycle": {"layouts": [layout]}}
    case = next(iter(study_from_dict(raw).cases()))
    info = fluids.get_info(case.fluid)
    ctx, L = case_context(case, info), LAYOUTS[layout]
    opt = optimise(L, ctx)
    r = opt.cycle
    detail = json.loads(json.dumps(case_detail(L, ctx.fluid, ctx.sink, r, opt)))  # as stored
    row = result_row(case.fluid, L, info, ctx.fluid, ctx.source, ctx.sink, r, opt.binding_limit, opt.evaluations,
                     0.0, ctx.settings)
    row = json.loads(json.dumps(row, default=str))
    drawn = with_ts_data(detail, row)
    live = ts_data(L, ctx.fluid, r, min(r.T_cond_K, ctx.sink.T_in_K) - 15.0)
    for part, keys in (("ts_path", ("s_kJ_kgK", "T_C")), ("dome", ("s_liquid_kJ_kgK", "s_vapour_kJ_kgK", "T_C"))):
        for k in keys:
            np.testing.assert_allclose(drawn[part][k], live[part][k], rtol=1e-9, atol=1e-9)


# --------------------------------------------------------------------------- Pareto

def test_pareto_front_hand_made_table():
    """Hand-made table, front worked out by hand (maximise power, minimise size):
    A (100 kW, 0.10 m) and D (80 kW, 0.05 m) and F (60 kW, 0.02 m) are on the front;
    B (90 kW, 0.12 m) is dominated by A; C (100 kW, 0.15 m) by A (same power, larger);
    E (70 kW, 0.05 m) by D; G (NaN size) is never on the front; H repeats A exactly, and
    identical points do not dominate each other, so H is on the front too."""
    df = pd.DataFrame({
        "case": list("ABCDEFGH"),
        "net_power_kW": [100, 90, 100, 80, 70, 60, 120, 100],
        "size_parameter_m": [0.10, 0.12, 0.15, 0.05, 0.05, 0.02, np.nan, 0.10],
    }, index=[10, 11, 12, 13, 14, 15, 16, 17])
    front = rank.pareto_front(df)
    assert list(front.index) == list(df.index)
    assert set(df.loc[front, "case"]) == {"A", "D", "F", "H"}


def test_pareto_front_other_columns_and_single_row():
    """Hand-made: with UA as the size, the single cheapest point and the single strongest point
    are on the front, the middle one too (it is not beaten on both)."""
    df = pd.DataFrame({"net_power_kW": [10.0, 20.0, 15.0, 14.0],
                       "ua_total_kW_K": [1.0, 3.0, 2.0, 2.5]})
    assert rank.pareto_front(df, minimise="ua_total_kW_K").tolist() == [True, True, True, False]
    assert rank.pareto_front(df.iloc[:1], minimise="ua_total_kW_K").tolist() == [True]


def test_best_per_point_hand_made_table():
    """Hand-made: two operating points; the best ok row of each, an infeasible row with a
    larger (meaningless) power ignored; a point with no ok row left out."""
    df = pd.DataFrame({
        "source.inlet_temperature_C": [120, 120, 120, 140, 140, 160],
        "fluid": ["a", "b", "c", "a", "b", "a"],
        "status": ["ok", "ok", "infeasible", "ok", "ok", "failed"],
        "net_power_kW": [5.0, 7.0, 99.0, 9.0, 8.0, np.nan],
    })
    best = rank.best_per_point(df)
    assert best["fluid"].tolist() == ["b", "a"]
    assert best["source.inlet_temperature_C"].tolist() == [120, 140]


def test_tradeoff_names_only_the_strongest_pareto_cases():
    """Hand-made table of 12 cases all on the front (power and size both rising, a label's
    height apart): only the max_labels cases of most power are named; cases crowded next to a
    named one are not."""
    n = 12
    df = pd.DataFrame({"fluid": [f"f{k}" for k in range(n)], "display_name": [f"f{k}" for k in range(n)],
                       "layout": "basic", "status": "ok",
                       "net_power_kW": np.linspace(100.0, 200.0, n), "ua_total_kW_K": np.linspace(10.0, 50.0, n)})
    assert rank.pareto_front(df, minimise="ua_total_kW_K").all()
    for k in (8, 3):
        ax = plots.tradeoff_chart(df, x="ua_total_kW_K", max_labels=k)
        named = [t.get_text() for t in ax.texts if t.get_gid() == "pareto-label"]
        assert sorted(named) == sorted(f"f{i} · basic" for i in range(n - k, n))
    ax = plots.tradeoff_chart(df, x="ua_total_kW_K")
    assert len([t for t in ax.texts if t.get_gid() == "pareto-label"]) == plots.TRADEOFF_LABELS == 8
    # the same front crowded into a corner by a far, dominated case: one name, the strongest
    far = pd.DataFrame({"fluid": ["far"], "display_name": ["far"], "layout": ["basic"], "status": ["ok"],
                        "net_power_kW": [0.0], "ua_total_kW_K": [200.0]})   # linear axis (span below 30x)
    crowded = pd.concat([df.assign(net_power_kW=np.linspace(199.0, 200.0, n)), far], ignore_index=True)
    ax = plots.tradeoff_chart(crowded, x="ua_total_kW_K")
    named = [t.get_text() for t in ax.texts if t.get_gid() == "pareto-label"]
    assert named == [f"f{n - 1} · basic"]


def test_tradeoff_marks_exactly_the_pareto_cases(run):
    df, _ = run
    ok = rank.fold_inactive(df[df["status"] == "ok"])
    for x in ("size_parameter_m", "ua_total_kW_K"):
        ax = plots.tradeoff_chart(df, x=x)
        marked = _by_gid(ax.collections, "pareto").get_offsets()
        front = ok[rank.pareto_front(ok, minimise=x)]
        got = sorted(map(tuple, np.asarray(marked)))
        want = sorted(zip(front[x], front["net_power_kW"]))
        np.testing.assert_allclose(got, want)
        # brute-force check of the definition on the real rows
        for _, r in ok.iterrows():
            dominated = ((ok["net_power_kW"] >= r["net_power_kW"]) & (ok[x] <= r[x])
                         & ((ok["net_power_kW"] > r["net_power_kW"]) | (ok[x] < r[x]))).any()
            on_front = any(np.allclose(p, (r[x], r["net_power_kW"])) for p in want)
            assert on_front != dominated
        _assert_units(ax)
        assert ax.get_xlabel() == plots.axis_label(x)


# --------------------------------------------------------------------------- turbine map

def test_turbine_map_plots_every_feasible_case_and_rings_the_best(run):
    df, _ = run
    ok = rank.fold_inactive(df[df["status"] == "ok"])
    top = ok.assign(rank=ok["net_power_kW"].rank(ascending=False)).nsmallest(3, "rank")
    ax = plots.turbine_map(df, top)
    drawn = np.vstack([c.get_offsets() for c in ax.collections if str(c.get_gid()).startswith("turbine-")])
    want = sorted(zip(ok["size_parameter_m"], ok["turbine_efficiency"]))
    np.testing.assert_allclose(sorted(map(tuple, drawn)), want)
    # each point's colour value is its volume ratio
    values = np.concatenate([c.get_array() for c in ax.collections if str(c.get_gid()).startswith("turbine-")])
    np.testing.assert_allclose(sorted(values), sorted(ok["volume_ratio"]))
    rings = [tuple(c.get_offsets()[0]) for c in ax.collections if c.get_gid() == "top-case"]
    np.testing.assert_allclose(sorted(rings), sorted(zip(top["size_parameter_m"], top["turbine_efficiency"])))
    labels = [t.get_text() for t in ax.texts if t.get_gid() == "top-label"]
    assert sorted(labels) == sorted(f"{int(r['rank'])} {r['fluid']}" for _, r in top.iterrows())
    assert ax.get_xscale() == "log"
    _assert_units(ax)


def test_log_axes_are_labelled_in_plain_numbers(run):
    """The turbine map's logarithmic size axis and volume-ratio colour bar carry plain numbers,
    never math text (no parser per chart; easier to read): every drawn tick label, major and
    minor, is a number as Python's float() reads it."""
    df, _ = run
    ax = plots.turbine_map(df)
    ax.figure.canvas.draw()
    bar = next(a for a in ax.figure.axes if a is not ax)
    labels = [t.get_text() for axis in (ax.xaxis, bar.yaxis)
              for t in axis.get_ticklabels(which="both") if t.get_visible() and t.get_text()]
    assert labels, "no tick label drawn"
    assert all("$" not in t for t in labels), labels
    for t in labels:
        float(t.replace("\N{MINUS SIGN}", "-"))


def test_turbine_map_without_feasible_case_raises_clearly(run):
    df, _ = run
    with pytest.raises(ValueError, match="turbine map: no feasible case"):
        plots.turbine_map(df[df["status"] != "ok"])


# --------------------------------------------------------------------------- landscape

def test_landscape_marks_the_optimum_and_its_binding_limit(run):
    df, details = run
    ok = df[df["status"] == "ok"].sort_values("net_power_kW", ascending=False).head(3)
    cases = [(r, details[r["case_key"]]) for _, r in ok.iterrows()]
    ax = plots.landscape_chart(cases)
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    for i, (row, detail) in enumerate(cases):
        opt = detail["optimum"]
        star = _by_gid(ax.lines, f"optimum-{i}")
        assert star.get_xdata()[0] == pytest.approx(opt["x"])
        assert opt["variable"] == "evaporation temperature"
        assert star.get_ydata()[0] == pytest.approx(opt["net_power_kW"])
        assert opt["net_power_kW"] == pytest.approx(row["net_power_kW"])
        limit = opt["binding_limit"] or "none (interior optimum)"
        assert f"limit: {limit}" in legend[i]
        scan = _by_gid(ax.lines, f"scan-{i}")
        t = np.asarray(detail["landscape"]["x"], dtype=float)
        assert sorted(scan.get_xdata()) == pytest.approx(sorted(t))
    _assert_units(ax)


# --------------------------------------------------------------------------- sweeps

def test_sweep_chart_best_line_is_the_best_case_of_each_point(sweep_run):
    df = sweep_run
    variable, other = "source.inlet_temperature_C", "sink.inlet_temperature_C"
    ax = plots.sweep_chart(df, variable)
    # the other swept variable is held at its middle value: of [15, 25] the lower one
    assert "sink inlet temperature = 15 °C" in ax.get_title(loc="left")
    part = df[(df[other] == 15) & (df["status"] == "ok")]
    want = part.groupby(variable)["net_power_kW"].max()
    best = _by_gid(ax.lines, "best")
    np.testing.assert_allclose(best.get_xdata(), want.index)
    np.testing.assert_allclose(best.get_ydata(), want.values)
    _assert_units(ax)
    assert ax.get_xlabel() == "source inlet temperature [°C]"


def test_best_fluid_map_names_the_best_case_in_each_cell(sweep_run):
    df = sweep_run.copy()
    x, y = "source.inlet_temperature_C", "sink.inlet_temperature_C"
    # make one operating point infeasible throughout: its cell must say so
    dead = (df[x] == 120) & (df[y] == 25)
    df.loc[dead, "status"] = "infeasible"
    ax = plots.best_fluid_map(df, x, y)
    xs, ys = sorted(df[x].unique()), sorted(df[y].unique())
    for i, yv in enumerate(ys):
        for j, xv in enumerate(xs):
            text = _by_gid(ax.texts, f"cell-{i}-{j}").get_text()
            point = df[(df[x] == xv) & (df[y] == yv) & (df["status"] == "ok")]
            if point.empty:
                assert text == "none\nfeasible"
                continue
            best = point.loc[point["net_power_kW"].idxmax()]
            assert text.splitlines()[0] == best["fluid"]
            assert text.splitlines()[-1] == f"{best['net_power_kW']:.0f} kW"
    _assert_units(ax)


# --------------------------------------------------------------------------- files

def test_save_figure_writes_png_and_svg_that_are_not_blank(run, tmp_path):
    df, details = run
    row = _best_ok(df)
    ax = plots.tq_diagram(details[row["case_key"]], row)
    assert [p.name for p in plots.save_figure(ax.figure, tmp_path / "png", "tq")] == ["tq.png"]
    paths = plots.save_figure(ax.figure, tmp_path / "figures", "tq", formats=("png", "svg"))
    assert [p.name for p in paths] == ["tq.png", "tq.svg"]
    assert paths[0].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert paths[1].read_text(encoding="utf-8").lstrip().startswith("<?xml")
    pixels = mpimg.imread(paths[0])
    assert pixels.shape[1] == pytest.approx(plots.WIDTH_IN * 200, abs=2)   # A4 width at 200 dpi
    assert pixels[..., :3].std() > 0.05


def test_png_has_the_pixels_of_matplotlibs_own_savefig(run, tmp_path):
    """plots.write_png lays the figure out once and writes an opaque RGB PNG: the same pixels
    and the same axes positions as Matplotlib's own savefig (constrained layout, PNG at 200 dpi,
    white face; the reference), the same bytes when written twice, and the layout engine off
    afterwards."""
    from PIL import Image

    df, details = run
    row = _best_ok(df)
    mine = plots.tq_diagram(details[row["case_key"]], row).figure
    ref = plots.tq_diagram(details[row["case_key"]], row).figure
    plots.write_png(mine, tmp_path / "mine.png")
    plots.write_png(mine, tmp_path / "again.png")
    ref.savefig(tmp_path / "ref.png", format="png", dpi=200, facecolor="white")
    assert (tmp_path / "mine.png").read_bytes() == (tmp_path / "again.png").read_bytes()
    with Image.open(tmp_path / "mine.png") as a, Image.open(tmp_path / "ref.png") as b:
        assert a.mode == "RGB" and b.mode == "RGBA"
        assert a.size == b.size and a.info["dpi"] == pytest.approx((200, 200), abs=0.01)   # pHYs in whole dots per metre
        pa, pb = np.asarray(a), np.asarray(b)
    assert (pb[..., 3] == 255).all()                      # the reference is opaque too
    np.testing.assert_array_equal(pa, pb[..., :3])
    for ax_m, ax_r in zip(mine.axes, ref.axes, strict=True):
        np.testing.assert_allclose(ax_m.get_position().bounds, ax_r.get_position().bounds, rtol=0, atol=1e-12)
    assert type(mine.get_layout_engine()).__name__ == "PlaceHolderLayoutEngine"


def test_file_stem_is_safe_for_odd_fluid_names():
    assert plots.file_stem("tq", "01", "R1233zd(E)", "basic") == "tq_01_R1233zd-E-_basic"
    assert "/" not in plots.file_stem("a/b", "c d")
