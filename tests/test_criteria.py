"""Tests of the ranking criteria (orcscreen/objectives.py ``CRITERIA``, ``study.rank_by``,
``--rank-by``): the ``rank_<criterion>`` columns and the Pareto marks of ranking.csv, the
per-criterion tops of the console and the report, and the refusals.

The real run is an invented scenario like the demo's (hot water at 120 °C, cooling water at 15
and 25 °C, three fluids, basic and recuperated). The checks are independent of orcscreen's own
ranking code: the ranks are recomputed with pandas from ranking.csv's own columns (a sort per
operating point), the Pareto marks by a brute-force dominance check over the chosen columns, with
the definition of weak dominance (K. Deb, *Multi-Objective Optimization Using Evolutionary
Algorithms*, Wiley 2001, section 2.4: a point dominates another when it is no worse in every
objective and strictly better in at least one).
"""

from __future__ import annotations

import html.parser
import json
import shutil
import tomllib

import numpy as np
import pandas as pd
import pytest

from orcscreen import cli, outputs, rank
from orcscreen.batch import run_study
from orcscreen.objectives import CRITERIA, OBJECTIVES, PARETO_COLUMN, rank_column
from orcscreen.spreadsheet import SPREADSHEET_FILE, column_style
from orcscreen.study import json_schema, study_from_dict

STUDY_TOML = """
[study]
name = "criteria test"
rank_by = ["thermal_efficiency", "size_parameter"]

[source]
kind = "water"
inlet_temperature_C = 120
mass_flow_kg_s = 12
pressure_bar = 6

[sink]
kind = "water"
inlet_temperature_C = 20
temperature_rise_K = 8

[exchangers]
pinch_evaporator_K = 8
pinch_condenser_K = 5

[fluids]
include = ["R1234yf", "R236fa", "n-Pentane"]

[cycle]
layouts = ["basic", "recuperated"]

[sweep]
"sink.inlet_temperature_C" = [15, 25]
"""
STUDY = tomllib.loads(STUDY_TOML)
SWEEP = "sink.inlet_temperature_C"
CASES = 3 * 2 * 2


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    out = tmp_path_factory.mktemp("criteria") / "run"
    run_study(study_from_dict(STUDY), out, jobs=1, progress=False)
    summary = outputs.write_outputs(out)
    return out, summary, pd.read_csv(out / outputs.RANKING_FILE)


def _chosen(names):
    return [CRITERIA[n] for n in names]


def _independent_ranks(csv: pd.DataFrame, column: str, maximise: bool) -> pd.Series:
    """1, 2, ... per operating point over the ok rows: by the column (best first), then fluid,
    then layout, with pandas alone."""
    ok = csv[csv["status"] == "ok"].copy()
    ok["_v"] = -ok[column] if maximise else ok[column]
    ok = ok.sort_values([SWEEP, "_v", "fluid", "layout"], kind="mergesort")
    return (ok.groupby(SWEEP).cumcount() + 1).reindex(csv.index)


def _assert_ranks_match(csv: pd.DataFrame, column: str, maximise: bool, ranks: pd.Series) -> None:
    """ranks equal the independent ranking; where ranking.csv's 6 digits tie two values, the
    file cannot say which is ahead, so the two ranks may come in either order."""
    expected = _independent_ranks(csv, column, maximise)
    for _, group in csv[csv["status"] == "ok"].groupby([SWEEP, column]):
        assert sorted(ranks[group.index].astype(int)) == sorted(expected[group.index].astype(int)), group


def _brute_force_pareto(csv: pd.DataFrame, criteria) -> pd.Series:
    """True where no other ok row of the operating point is >= in every criterion (each in its
    direction) and > in one, from ranking.csv's own values."""
    marks = pd.Series(False, index=csv.index)
    for _, group in csv[csv["status"] == "ok"].groupby(SWEEP):
        values = {i: [r[c.column] if c.maximise else -r[c.column] for c in criteria]
                  for i, r in group.iterrows()}
        for i, vi in values.items():
            if not all(np.isfinite(vi)):
                continue
            dominated = any(all(a >= b for a, b in zip(vj, vi)) and any(a > b for a, b in zip(vj, vi))
                            for j, vj in values.items() if j != i)
            marks[i] = not dominated
    return marks


# --------------------------------------------------------------------------- registry and schema

def test_objectives_are_the_criteria_the_optimiser_can_maximise():
    assert set(OBJECTIVES) < set(CRITERIA)
    for name, objective in OBJECTIVES.items():
        assert CRITERIA[name] is objective
    for name, c in CRITERIA.items():
        assert c.name == name and c.column and c.label
    assert not CRITERIA["size_parameter"].maximise  # smaller: a cheaper machine (README)
    assert CRITERIA["pinch"].column == "approach_evaporator_K"


def test_schema_enum_of_rank_by_is_the_registry():
    props = json_schema()["$defs"]["StudySection"]["properties"]["rank_by"]
    assert props["items"]["enum"] == list(CRITERIA)


# --------------------------------------------------------------------------- ranks and marks

def test_rank_columns_equal_an_independent_pandas_ranking(run):
    _, summary, csv = run
    names = ["net_power", "thermal_efficiency", "size_parameter"]   # the objective first
    assert [c.name for c in summary.criteria] == names
    assert len(csv) == CASES and (csv["status"] == "ok").all()      # every row kept
    cols = list(csv.columns)
    assert cols[cols.index("rank"):cols.index("rank") + 5] == ["rank", *map(rank_column, _chosen(names)),
                                                               PARETO_COLUMN]
    for c in _chosen(names):
        ranks = csv[rank_column(c)]
        for _, group in csv.groupby(SWEEP):   # a permutation of 1..n within each point
            assert sorted(group[rank_column(c)]) == list(range(1, len(group) + 1))
        _assert_ranks_match(csv, c.column, c.maximise, ranks)
    # the objective's rank column is the ranking's rank
    assert (csv["rank_net_power"] == csv["rank"]).all()
    # the thermal efficiency orders otherwise than the power here (a recuperator raises it,
    # DESIGN.md section 3): the check is not trivial
    assert not (csv["rank_thermal_efficiency"] == csv["rank"]).all()


def test_pareto_marks_equal_a_brute_force_dominance_check(run):
    _, summary, csv = run
    criteria = summary.criteria
    expected = _brute_force_pareto(csv, criteria)
    assert csv[PARETO_COLUMN].astype(bool).tolist() == expected.tolist()
    assert expected.any() and not expected.all()


@pytest.mark.parametrize("values, front", [
    # by hand from the definition (Deb 2001, section 2.4), two objectives both maximised
    ([[1, 5], [2, 4], [3, 3], [2, 2], [1, 1]], [True, True, True, False, False]),
    ([[1, 1], [1, 1]], [True, True]),                      # identical rows: both kept
    ([[1, np.nan], [0, 0]], [False, True]),                # a missing value: never on the front
    ([[3, 1, 1], [1, 3, 1], [1, 1, 3], [1, 1, 1]], [True, True, True, False]),
])
def test_dominance_front_by_hand(values, front):
    assert rank.dominance_front(np.array(values, dtype=float)).tolist() == front


def test_pareto_compares_at_the_written_digits():
    """Two cases that ranking.csv writes alike (6 significant digits) do not dominate each
    other; at full precision the first would dominate the second."""
    df = pd.DataFrame({"p": [100.0000001, 100.0], "s": [0.5, 0.5]})
    cols = [("p", True), ("s", False)]
    assert rank.pareto_optimal(df, cols, significant=6).tolist() == [True, True]
    assert rank.pareto_optimal(df, cols).tolist() == [True, False]


def test_rank_columns_are_integers_in_the_spreadsheet(run):
    from openpyxl import load_workbook

    out, _, csv = run
    assert column_style("rank_exergy_efficiency") == ("", "0")   # not the efficiency format
    sheet = load_workbook(out / SPREADSHEET_FILE, read_only=True).worksheets[0]
    rows = list(sheet.iter_rows(min_row=1, max_row=3))
    header = [c.value for c in rows[0]]
    assert header == list(csv.columns)
    for name in ("rank_thermal_efficiency", "rank_size_parameter"):
        cell = rows[2][header.index(name)]
        assert cell.number_format == "0" and isinstance(cell.value, int)


# --------------------------------------------------------------------------- console and folding

def test_console_shows_the_top_of_each_criterion_and_the_marks_folded(run):
    _, summary, csv = run
    text = outputs.top_table(summary, n=20)
    assert "top 5 by thermal efficiency (largest first; # = rank_thermal_efficiency):" in text
    assert "top 5 by turbine size parameter (smallest first; # = rank_size_parameter):" in text
    # the main table: one line per shown case; a folded pair is one line, marked when either is
    table = text.split("\nPareto: ")[0].splitlines()[2:]
    folded = rank.fold_inactive(csv[csv["status"] == "ok"])
    assert len(table) == len(folded) < len(csv)
    by_key = {(r[SWEEP], r["fluid"], r["layout"]): bool(r[PARETO_COLUMN]) for _, r in csv.iterrows()}
    for line, (_, r) in zip(table, folded.sort_values([SWEEP, "rank"]).iterrows()):
        assert f" {r['fluid']} " in line
        marks = [by_key[(r[SWEEP], r["fluid"], r["layout"])]]
        marks += [by_key[(r[SWEEP], r["fluid"], lay)] for lay in str(r[rank.FOLDED]).split(", ") if lay]
        assert line.rstrip().endswith("yes") == any(marks), line


# --------------------------------------------------------------------------- command line

def _cli(capsys, *argv):
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_rank_by_option_overrides_the_study_key_and_computes_nothing(run, tmp_path, capsys):
    out, _, before = run
    copy = tmp_path / "run"
    shutil.copytree(out, copy)
    study = tmp_path / "criteria.toml"
    study.write_text(STUDY_TOML, encoding="utf-8")
    code, text, err = _cli(capsys, "run", str(study), "--out", str(copy), "--jobs", "1", "--no-report",
                           "--rank-by", "exergy_efficiency,pinch")
    assert code == 0, err
    after = pd.read_csv(copy / outputs.RANKING_FILE)
    assert "rank_exergy_efficiency" in after and "rank_pinch" in after
    assert "rank_thermal_efficiency" not in after and "rank_size_parameter" not in after
    # the cases were not computed again: same keys, same values
    key = ["case_key", "net_power_kW", "approach_evaporator_K"]
    pd.testing.assert_frame_equal(after[key].sort_values("case_key").reset_index(drop=True),
                                  before[key].sort_values("case_key").reset_index(drop=True))
    info = json.loads((copy / outputs.RUN_INFO_FILE).read_text())
    assert [c["criterion"] for c in info["ranked_by"]] == ["net_power", "exergy_efficiency", "pinch"]
    assert "top 5 by exergy (second-law) efficiency" in text
    chosen = _chosen(["net_power", "exergy_efficiency", "pinch"])
    assert after[PARETO_COLUMN].astype(bool).tolist() == _brute_force_pareto(after, chosen).tolist()
    _assert_ranks_match(after, "approach_evaporator_K", True, after["rank_pinch"])


class _Tables(html.parser.HTMLParser):
    """Tables of a page: id -> {"head": header texts, "rows": rows of cell texts}."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, dict] = {}
        self._table = self._row = self._cell = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table":
            self._table = self.tables.setdefault(a.get("id") or f"t{len(self.tables)}", {"head": [], "rows": []})
        elif tag == "tr" and self._table is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            if self._table["head"]:
                self._table["rows"].append(self._row)
            else:
                self._table["head"] = self._row
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def _report_tables(capsys, out, *extra):
    code, _, err = _cli(capsys, "report", str(out), *extra)
    assert code == 0, err
    page = _Tables()
    page.feed((out / "report.html").read_text(encoding="utf-8"))
    return page.tables


def test_report_shows_the_top_of_each_criterion(run, tmp_path, capsys):
    out, _, csv = run
    copy = tmp_path / "run"
    shutil.copytree(out, copy)
    tables = _report_tables(capsys, copy)
    assert {"top-thermal_efficiency", "top-size_parameter"} <= set(tables)
    assert "top-net_power" not in tables              # the objective is the main table
    folded = rank.fold_inactive(csv[csv["status"] == "ok"])
    for name, column, ascending in (("thermal_efficiency", "thermal_efficiency", False),
                                    ("size_parameter", "size_parameter_m", True)):
        t = tables[f"top-{name}"]
        assert t["head"][0] == f"rank by {name}" and "Pareto" in t["head"]
        shown = [float(r[t["head"].index(next(h for h in t["head"] if h.startswith(CRITERIA[name].label)))])
                 for r in t["rows"]]
        best = folded[column].sort_values(ascending=ascending).head(5)
        scale = 100.0 if CRITERIA[name].fmt == "%" else 1.0
        np.testing.assert_allclose(shown, scale * best.to_numpy(), atol=0.006 if scale == 100 else 6e-4)
    # the ranking table's Pareto column, a folded row marked when it or a row folded into it is
    ranking = tables["ranking-table"]
    col = ranking["head"].index("Pareto")
    assert sum(r[col] == "yes" for r in ranking["rows"]) >= 1
    assert {r[col] for r in ranking["rows"]} <= {"yes", ""}


def test_report_rank_by_redraws_with_other_criteria(run, tmp_path, capsys):
    out, _, csv = run
    copy = tmp_path / "run"
    shutil.copytree(out, copy)
    tables = _report_tables(capsys, copy, "--rank-by", "lcoe,pinch")
    assert {"top-lcoe", "top-pinch"} <= set(tables)
    assert "top-thermal_efficiency" not in tables
    t = tables["top-lcoe"]
    value_col = next(i for i, h in enumerate(t["head"]) if h.startswith(CRITERIA["lcoe"].label))
    folded = rank.fold_inactive(csv[csv["status"] == "ok"])
    np.testing.assert_allclose([float(r[value_col]) for r in t["rows"]],
                               folded["lcoe_per_MWh"].sort_values().head(5).to_numpy(), atol=0.06)
    # ranking.csv keeps the run's criteria; the figures include the criteria chart
    assert "rank_thermal_efficiency" in pd.read_csv(copy / outputs.RANKING_FILE)
    assert (copy / "figures" / "criteria.png").is_file()


def test_criterion_needing_costs_without_economics_exits_2(tmp_path, capsys):
    """The net present value needs the price of the electricity, an [economics] key."""
    study = tmp_path / "npv.toml"
    study.write_text('[study]\nrank_by = ["size_parameter", "net_present_value"]\n\n'
                     '[source]\nkind = "water"\ninlet_temperature_C = 120\nmass_flow_kg_s = 10\n', encoding="utf-8")
    code, _, err = _cli(capsys, "check", str(study))
    assert code == 2 and "Traceback" not in err
    line, = err.strip().splitlines()
    assert line.startswith(f"{study}: study.rank_by[1] = \"net_present_value\"")
    assert "economics.electricity_price_per_MWh" in line


def test_rank_by_option_is_refused_clearly(tmp_path, capsys):
    study = tmp_path / "plain.toml"
    study.write_text('[source]\nkind = "water"\ninlet_temperature_C = 120\nmass_flow_kg_s = 10\n', encoding="utf-8")
    code, _, err = _cli(capsys, "run", str(study), "--out", str(tmp_path / "o"), "--rank-by", "annual_energy")
    assert code == 2 and "--rank-by[0] = \"annual_energy\"" in err and "year.file" in err
    assert not (tmp_path / "o").exists()
    code, _, err = _cli(capsys, "run", str(study), "--rank-by", "net_power,efficiency")
    assert code == 2 and "'efficiency'" in err and "exergy_efficiency" in err and "Traceback" not in err
