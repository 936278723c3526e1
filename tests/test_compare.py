"""Tests of ``orcscreen compare`` (orcscreen/compare.py and its command line).

Two small real runs (invented scenario: hot water at 120 °C, three fluids, one layout, two sink
temperatures) differ in one input and one fluid: run B caps the cycle pressure at 10 bar and
leaves n-pentane out. The reference for every check is the pair of ranking.csv files the runs
wrote, read here with the standard library's csv module (independently of compare.py, which
reads them with pandas): deltas, rank changes, status changes, cases in one run only and
winners are recomputed from those files.
"""

from __future__ import annotations

import csv
import json
import math
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from orcscreen import cli
from orcscreen import compare as cmp

STUDY = """
# invented test study: three fluids, one layout, two sink temperatures
[study]
name = "compare-{tag}"
{objective}
[source]
kind = "water"
inlet_temperature_C = 120
mass_flow_kg_s = 5
[fluids]
include = {fluids}
[cycle]
layouts = ["basic"]
{limits}
[sweep]
"sink.inlet_temperature_C" = [15, 25]
"""
SWEPT = "sink.inlet_temperature_C"
#: The first 8 bytes of every PNG file (PNG specification, W3C Recommendation / ISO/IEC 15948,
#: section 5.2 "PNG signature").
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _run(capsys, *argv):
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def _make_run(root: Path, tag: str, fluids: list[str], limits: str = "", objective: str = "") -> Path:
    study = root / f"{tag}.toml"
    study.write_text(STUDY.format(tag=tag, fluids=json.dumps(fluids), limits=limits, objective=objective))
    out = root / tag
    assert cli.main(["run", str(study), "--out", str(out), "--jobs", "1", "--no-report"]) == 0
    return out


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """(A, B): B caps the pressure at 10 bar and leaves n-pentane out."""
    root = tmp_path_factory.mktemp("compare")
    a = _make_run(root, "before", ["R245fa", "n-Pentane", "R134a"])
    b = _make_run(root, "pressure-cap", ["R245fa", "R134a"], limits="[limits]\nmax_pressure_bar = 10")
    return a, b


def _rows(directory: Path) -> dict[tuple[str, str, str], dict]:
    """ranking.csv by (swept value as written, fluid, layout), read with the csv module; the fluid
    by its CoolProp name, on which compare matches runs."""
    with open(directory / "ranking.csv", newline="", encoding="utf-8") as f:
        return {(r[SWEPT], r.get("coolprop_name") or r["fluid"], r["layout"]): r for r in csv.DictReader(f)}


def _key(r) -> tuple[str, str, str]:
    return (f"{float(r[SWEPT]):g}", r["fluid"], r["layout"])


def _table(runs):
    a, b = runs
    return cmp.compare_runs(cmp.read_run(a), cmp.read_run(b))


def _finite(text: str) -> bool:
    return text != "" and math.isfinite(float(text))


def test_deltas_are_the_difference_of_the_two_rankings(runs):
    # reference: the two ranking.csv files (net power, the studies' default objective)
    A, B = (_rows(d) for d in runs)
    c = _table(runs)
    assert c.value.column == "net_power_kW"
    by_key = {_key(r): r for r in c.table.to_dict("records")}
    checked = 0
    for key in A.keys() & B.keys():
        va, vb = A[key]["net_power_kW"], B[key]["net_power_kW"]
        if not (_finite(va) and _finite(vb)):
            continue
        row = by_key[key]
        assert row["A_net_power_kW"] == float(va) and row["B_net_power_kW"] == float(vb)
        assert row["delta_net_power_kW"] == pytest.approx(float(vb) - float(va), rel=1e-12, abs=1e-12)
        assert row["delta_net_power_kW_percent"] == pytest.approx(
            100 * (float(vb) - float(va)) / abs(float(va)), rel=1e-12, abs=1e-12)
        checked += 1
    assert checked >= 3  # both R245fa points and R134a at 15 °C have a value in both runs
    # at least one value really changed (R134a is held below 10 bar in B)
    assert any(by_key[k]["delta_net_power_kW"] != 0 for k in by_key if by_key[k]["change"] in ("better", "worse"))


def test_rank_changes_and_winner_from_the_rankings(runs):
    A, B = (_rows(d) for d in runs)
    c = _table(runs)
    by_key = {_key(r): r for r in c.table.to_dict("records")}
    changed = 0
    for key in A.keys() & B.keys():
        ra, rb = A[key]["rank"], B[key]["rank"]
        if ra and rb:
            assert by_key[key]["places_gained"] == int(ra) - int(rb)
            changed += int(ra) != int(rb)
    assert changed > 0
    assert c.counts["rank_changed"] == changed
    winners_a = {k[0]: k[1:] for k, r in A.items() if r["rank"] == "1"}
    winners_b = {k[0]: k[1:] for k, r in B.items() if r["rank"] == "1"}
    expected = sum(winners_a[p] != winners_b[p] for p in winners_a.keys() & winners_b.keys())
    assert c.counts["winner_changes"] == expected
    assert len(c.winners) == len(winners_a.keys() & winners_b.keys()) == 2


def test_a_case_that_becomes_infeasible_is_listed_with_its_reason(runs):
    A, B = (_rows(d) for d in runs)
    lost = [k for k in A.keys() & B.keys() if A[k]["status"] == "ok" and B[k]["status"] == "infeasible"]
    assert lost, "the 10 bar cap should make a case infeasible (R134a at the warmer sink)"
    c = _table(runs)
    by_key = {_key(r): r for r in c.table.to_dict("records")}
    for key in lost:
        assert by_key[key]["change"] == "became infeasible"
        assert by_key[key]["B_reason"] == B[key]["reason"] != ""
    assert c.counts["became_infeasible"] == len(lost)
    text = cmp.format_comparison(c)
    for key in lost:
        assert f"became infeasible: {B[key]['reason']}" in text


def test_cases_in_one_run_only_are_listed(runs):
    A, B = (_rows(d) for d in runs)
    only_a, only_b = A.keys() - B.keys(), B.keys() - A.keys()
    assert only_a and not only_b  # n-pentane's two points
    c = _table(runs)
    listed = {_key(r): r["change"] for r in c.table.to_dict("records")}
    assert {k for k, v in listed.items() if v == "only in A"} == only_a
    assert set(listed) == A.keys() | B.keys()
    assert (c.counts["only_a"], c.counts["only_b"], c.counts["compared"]) == \
        (len(only_a), 0, len(A.keys() & B.keys()))


def test_largest_changes_come_first(runs):
    t = _table(runs).table
    order = [cmp.CHANGE_ORDER[v] for v in t["change"]]
    assert order == sorted(order)
    assert t["change"].iloc[0] == "became infeasible"
    same = t[t["change"].isin(["better", "worse"])]["delta_net_power_kW_percent"].abs().tolist()
    assert same == sorted(same, reverse=True)


def test_command_prints_summary_and_writes_chart_and_csv(capsys, runs):
    a, b = runs
    A, B = _rows(a), _rows(b)
    code, out, err = _run(capsys, "compare", str(a), str(b))
    assert code == 0, err
    lines = out.splitlines()
    n_both = len(A.keys() & B.keys())
    assert lines[0].startswith(f"compare: {n_both} cases in both runs")
    assert "1 became infeasible" in lines[0] and "2 only in A, 0 only in B" in lines[0]
    assert "winner changed" in lines[0]
    assert "Preliminary screening, not a design" in out  # cli.CAUTION_LINE, as the run command prints
    chart, table = b / f"compare-{a.name}.png", b / f"compare-{a.name}.csv"
    assert chart.read_bytes()[:8] == PNG_SIGNATURE and chart.stat().st_size > 1000
    with open(table, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    assert len(rows) == len(A.keys() | B.keys())
    assert {"change", "A_rank", "B_rank", "delta_net_power_kW", "safety_class", "gwp100"} <= set(rows[0])
    # the CSV's deltas are those of the rankings, at its 6 significant digits
    for r in rows:
        key = _key(r)
        if r["delta_net_power_kW"]:
            expected = float(B[key]["net_power_kW"]) - float(A[key]["net_power_kW"])
            assert float(r["delta_net_power_kW"]) == pytest.approx(expected, rel=1e-5, abs=1e-4)


def test_out_option_names_the_chart_and_the_csv_goes_beside_it(capsys, runs, tmp_path):
    a, b = runs
    target = tmp_path / "charts" / "cap.png"
    code, out, err = _run(capsys, "compare", str(a), str(b), "--out", str(target), "--top", "2")
    assert code == 0, err
    assert target.read_bytes()[:8] == PNG_SIGNATURE
    assert (tmp_path / "charts" / "cap.csv").stat().st_size > 0
    assert "more changed cases in the CSV" in out
    code, out, err = _run(capsys, "compare", str(a), str(b), "--out", str(tmp_path / "cap.svg"))
    assert code == 2 and "cap.svg" in err and ".png" in err


def test_different_objectives_compare_net_power(capsys, runs, tmp_path):
    a, _ = runs
    c_dir = _make_run(tmp_path, "by-investment", ["R245fa", "n-Pentane", "R134a"],
                      objective='objective = "specific_investment"')
    c = cmp.compare_runs(cmp.read_run(a), cmp.read_run(c_dir))
    assert c.b.objective.name == "specific_investment" and c.value.column == "net_power_kW"
    assert any("net power is compared" in n for n in c.notes)
    same = cmp.compare_runs(cmp.read_run(c_dir), cmp.read_run(c_dir))
    assert same.value.column == "specific_investment_per_kW"  # the study's objective when both agree
    assert set(same.table["change"]) == {"unchanged"} and same.counts["rank_changed"] == 0
    assert "delta_net_power_kW" in same.table  # net power alongside


def test_without_run_store_net_power_is_assumed_and_said(runs, tmp_path):
    a, b = runs
    bare = tmp_path / "bare"
    bare.mkdir()
    for name in ("ranking.csv", "run-info.json"):
        shutil.copy(a / name, bare / name)
    c = cmp.compare_runs(cmp.read_run(bare), cmp.read_run(b))
    assert any("net power assumed" in n for n in c.notes)


# -- bad input --------------------------------------------------------------------------------

def test_missing_folder_exits_2_naming_it(capsys, runs, tmp_path):
    _, b = runs
    missing = tmp_path / "no-such-run"
    code, out, err = _run(capsys, "compare", str(missing), str(b))
    assert code == 2
    assert str(missing) in err and "no such folder" in err and "Traceback" not in err


def test_folder_without_ranking_exits_2_naming_path_and_file(capsys, runs, tmp_path):
    a, _ = runs
    half = tmp_path / "half"
    half.mkdir()
    shutil.copy(a / "run-info.json", half / "run-info.json")
    code, out, err = _run(capsys, "compare", str(a), str(half))
    assert code == 2
    assert str(half) in err and "ranking.csv" in err and "Traceback" not in err
    assert not list(half.glob("compare-*"))  # nothing written


@pytest.mark.parametrize("fault, words", [
    ("ranking-not-csv", ["ranking.csv", "unreadable CSV"]),
    ("ranking-no-status", ["ranking.csv", "status"]),
    ("info-not-json", ["run-info.json", "not valid JSON"]),
    ("info-not-object", ["run-info.json", "not an object"]),
])
def test_unreadable_files_exit_2_naming_the_file(capsys, runs, tmp_path, fault, words):
    a, b = runs
    bad = tmp_path / fault
    shutil.copytree(a, bad)
    if fault == "ranking-not-csv":
        (bad / "ranking.csv").write_bytes(b"\xff\xfe\x00garbage\x00\x81")
    elif fault == "ranking-no-status":
        text = (bad / "ranking.csv").read_text().replace(",status,", ",state,", 1)
        (bad / "ranking.csv").write_text(text)
    elif fault == "info-not-json":
        (bad / "run-info.json").write_text("{not json")
    else:
        (bad / "run-info.json").write_text("[1, 2]")
    code, out, err = _run(capsys, "compare", str(bad), str(b))
    assert code == 2, err
    assert str(bad) in err and "Traceback" not in err
    for w in words:
        assert w in err


def test_help_has_an_example(capsys):
    code, out, _ = _run(capsys, "compare", "--help")
    assert code == 0 and "usage: orcscreen compare" in out
    assert "orcscreen compare" in out.split("example:")[1]
    code, out, _ = _run(capsys, "--help")
    assert "compare" in out


def test_module_and_command_line_stay_light():
    # pandas and Matplotlib wait for the first comparison (DEVELOPERS.md, "Light imports")
    code = ("import sys, orcscreen.cli, orcscreen.compare\n"
            "print([m for m in ('pandas', 'matplotlib', 'numpy', 'CoolProp') if m in sys.modules])")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == "[]"
