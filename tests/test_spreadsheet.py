"""Tests of ranking.xlsx (orcscreen/spreadsheet.py), read back with openpyxl.

A small invented study runs end to end through the command line; the spreadsheet is checked
against the ranking.csv of the same run (header, every value, order), against the unit symbols
of the SI Brochure (BIPM, 9th ed. 2019, Tables 2 and 4: K, °C, Pa, W, m, kg, s; bar = 1e5 Pa and
h as the SI Brochure's 8th ed. Table 8 lists them, from memory), against the safety classes of
ANSI/ASHRAE Standard 34 and the GWP100 of IPCC AR6 WG1 Table 7.SM.7 (read through the
globalwarmingpotentials package), and against the project's one caution text.
"""

from __future__ import annotations

import csv
import json
import os

import openpyxl
import pytest

from orcscreen import cli, fluids, spreadsheet
from orcscreen.spreadsheet import SPREADSHEET_FILE, column_style, write_spreadsheet

# invented test study: two fluids, one layout, two sink temperatures
TINY = """
[study]
name = "tiny"
[source]
kind = "water"
inlet_temperature_C = 120
mass_flow_kg_s = 5
[fluids]
include = ["R245fa", "n-Pentane"]
[cycle]
layouts = ["basic"]
[sweep]
"sink.inlet_temperature_C" = [15, 25]
"""


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    """Output folder of one run of the tiny study (no report)."""
    base = tmp_path_factory.mktemp("xlsx")
    study = base / "tiny.toml"
    study.write_text(TINY)
    out = base / "out"
    assert cli.main(["run", str(study), "--out", str(out), "--jobs", "1", "--no-report"]) == 0
    return out


def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


def _sheet_rows(ws):
    return [list(r) for r in ws.iter_rows(values_only=True)]


def test_ranking_sheet_holds_the_csv_header_and_every_value(run_dir):
    rows = _csv_rows(run_dir / "ranking.csv")
    wb = openpyxl.load_workbook(run_dir / SPREADSHEET_FILE)
    assert wb.sheetnames == ["ranking", "inputs", "cautions"]
    sheet = _sheet_rows(wb["ranking"])
    assert sheet[0] == rows[0]  # same columns, same order
    assert len(sheet) == 2 + (len(rows) - 1) == 6  # header, units, the four cases
    compared = 0
    for csv_row, xlsx_row in zip(rows[1:], sheet[2:]):  # same rows, same order
        assert len(xlsx_row) == len(csv_row)
        for name, text, value in zip(rows[0], csv_row, xlsx_row):
            if text == "":
                assert value is None, name
            elif isinstance(value, bool):
                assert text == str(value), name
            elif isinstance(value, (int, float)):
                assert value == pytest.approx(float(text), rel=1e-15), name
                compared += 1
            else:
                assert value == text, name
    assert compared > 4 * 40  # most figures of the four ok cases are numbers


def test_units_row_carries_the_units_of_the_names(run_dir):
    ws = openpyxl.load_workbook(run_dir / SPREADSHEET_FILE)["ranking"]
    header, units = _sheet_rows(ws)[:2]
    unit = dict(zip(header, units))
    money = json.loads((run_dir / "run-info.json").read_text())["money"]["currency"]
    # symbols of the SI Brochure (BIPM 2019) for the units the column names end with
    assert unit["net_power_kW"] == "kW"
    assert unit["evaporation_temperature_C"] == "°C"
    assert unit["sink.inlet_temperature_C"] == "°C"  # a swept study key
    assert unit["superheat_K"] == "K"
    assert unit["condensing_pressure_bar"] == "bar"
    assert unit["wf_mass_flow_kg_s"] == "kg/s"
    assert unit["ua_evaporator_kW_K"] == "kW/K"
    assert unit["size_parameter_m"] == "m"
    assert unit["area_evaporator_m2"] == "m²"
    assert unit["annual_energy_MWh"] == "MWh"
    assert unit["thermal_efficiency"] == "-"
    assert unit["lcoe_per_MWh"] == f"{money}/MWh"  # the study's currency, from run-info.json
    assert unit["fluid"] is None and unit["case_key"] is None  # no unit: an empty cell


def test_panes_filter_widths_and_number_formats(run_dir):
    ws = openpyxl.load_workbook(run_dir / SPREADSHEET_FILE)["ranking"]
    assert ws.freeze_panes == "B3"  # below header and units, right of the first column
    assert ws.auto_filter.ref == f"A2:{openpyxl.utils.get_column_letter(ws.max_column)}6"
    header = [c.value for c in ws[1]]
    col = {name: i for i, name in enumerate(header)}
    first = ws[3]
    assert first[col["rank"]].number_format == "0"
    assert first[col["net_power_kW"]].number_format == "0.0"
    assert first[col["thermal_efficiency"]].number_format == "0.000"
    assert first[col["evaporation_temperature_C"]].number_format == "0.0"
    assert first[col["condensing_pressure_bar"]].number_format == "0.000"
    # every number of the sheet has a format of its column (no column left to "General")
    for row in ws.iter_rows(min_row=3):
        for name, cell in zip(header, row):
            if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool):
                assert cell.number_format != "General", name
                assert cell.number_format == column_style(name)[1], name
    # ECMA-376 Part 1, 18.3.1.13 (col): the stored width is the characters shown plus 5 pixels
    # of padding at the default font's 7-pixel digit width, truncated to 1/256: n + 182/256
    widths = [ws.column_dimensions[openpyxl.utils.get_column_letter(i + 1)].width - 182 / 256
              for i in range(len(header))]
    assert all(6 <= w <= 50 for w in widths)
    assert widths[col["turbine_outlet_temperature_C"]] >= len("turbine_outlet_temperature_C")


def test_inputs_sheet_holds_the_study_and_run_info(run_dir):
    ws = openpyxl.load_workbook(run_dir / SPREADSHEET_FILE)["inputs"]
    rows = {r[0]: (r[1], r[2]) for r in ws.iter_rows(min_row=2, values_only=True) if r and r[0]}
    info = json.loads((run_dir / "run-info.json").read_text())
    assert rows["study_hash"][0] == info["study_hash"]
    assert rows["orcscreen_version"][0] == info["orcscreen_version"]
    assert rows["counts.ok"][0] == info["counts"]["ok"] == 4
    assert rows["study.name"][0] == "tiny"
    assert rows["source.kind"][0] == "water"
    assert rows["source.inlet_temperature_C"] == (120, "°C")
    assert rows["source.mass_flow_kg_s"] == (5, "kg/s")
    assert json.loads(rows["fluids.include"][0]) == ["R245fa", "n-Pentane"]
    assert json.loads(rows["sweep.sink.inlet_temperature_C"][0]) == [15, 25]
    assert rows["sweep.sink.inlet_temperature_C"][1] == "°C"
    assert SPREADSHEET_FILE not in rows  # every row of ranking.csv is in the sheet


def test_cautions_sheet_holds_the_caution_text_and_each_fluid(run_dir):
    ws = openpyxl.load_workbook(run_dir / SPREADSHEET_FILE)["cautions"]
    rows = _sheet_rows(ws)
    lines = fluids.CAUTIONS.strip().splitlines()
    assert rows[0][0] == "Cautions"
    assert [r[0] for r in rows[1:1 + len(lines)]] == lines  # the one copy, word for word
    text = " ".join(lines).lower()
    for topic in ("flammable", "toxic", "f-gas", "montreal protocol", "not a design",
                  "local codes", "licensed engineers"):
        assert topic in text
    # the ranking's fluid column: the catalogue's display names
    table = {r[0]: r for r in rows[1 + len(lines):] if r[0] in ("R245fa", "n-pentane")}
    assert set(table) == {"R245fa", "n-pentane"}
    # ANSI/ASHRAE Standard 34 (from memory): R-245fa is B1, R-601 (n-pentane) A3
    assert table["R245fa"][2] == "B1" and table["n-pentane"][2] == "A3"
    assert table["R245fa"][5] == fluids.get_info("R245fa").cautions  # the catalogue's own text
    gwp = pytest.importorskip("globalwarmingpotentials")
    # IPCC AR6 WG1 Table 7.SM.7 GWP100, as the globalwarmingpotentials package transcribes it
    assert table["R245fa"][3] == pytest.approx(gwp.data["AR6GWP100"]["HFC245fa"])


def _small_csv(path, rows):
    with open(path, "w", newline="", encoding="utf-8") as f:
        csv.writer(f, lineterminator="\n").writerows(rows)


def test_text_stays_text_and_infinities_stay_readable(tmp_path):
    # Spreadsheet programs run a cell text that begins with "=" as a formula (common practice;
    # OWASP, "CSV Injection"); a key that looks like a number must stay the key.
    _small_csv(tmp_path / "r.csv", [["case_key", "rank", "fluid", "reason", "net_power_kW"],
                                    ["1234e5", "1", "R245fa", "=1+1", "inf"],
                                    ["0042", "", "R245fa", "", "-inf"]])
    write_spreadsheet(tmp_path / "r.xlsx", tmp_path / "r.csv", {"study_name": "x"}, {},
                      text_columns=("case_key",))
    ws = openpyxl.load_workbook(tmp_path / "r.xlsx")["ranking"]
    assert [c.value for c in ws["A"][2:]] == ["1234e5", "0042"]
    reason = ws["D3"]
    assert reason.value == "=1+1" and reason.data_type == "s"
    assert [c.value for c in ws["E"][2:]] == ["inf", "-inf"]
    assert ws["B4"].value is None


def test_a_ranking_longer_than_a_sheet_is_cut_and_the_inputs_say_so(run_dir, tmp_path, monkeypatch):
    monkeypatch.setattr(spreadsheet, "SHEET_ROWS", 5)  # header, units and 3 of the 4 cases
    info = json.loads((run_dir / "run-info.json").read_text())
    write_spreadsheet(tmp_path / "cut.xlsx", run_dir / "ranking.csv", info, {})
    wb = openpyxl.load_workbook(tmp_path / "cut.xlsx")
    assert wb["ranking"].max_row == 5
    notes = [r[1] for r in wb["inputs"].iter_rows(values_only=True) if r and r[0] == SPREADSHEET_FILE]
    assert len(notes) == 1 and "the first 3 of 4 rows" in notes[0]


def test_a_link_in_the_output_folder_is_replaced_not_written_through(run_dir, tmp_path):
    # rename(2) replaces a link at the target name (POSIX), as for ranking.csv (safe_files)
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me")
    link = tmp_path / SPREADSHEET_FILE
    os.symlink(victim, link)
    info = json.loads((run_dir / "run-info.json").read_text())
    write_spreadsheet(link, run_dir / "ranking.csv", info, {})
    assert victim.read_text() == "keep me"
    assert not link.is_symlink() and openpyxl.load_workbook(link).sheetnames[0] == "ranking"
    assert not any(p.name.endswith(".tmp") for p in tmp_path.iterdir())


def test_column_style_reads_the_endings_longest_first():
    assert column_style("ua_total_kW_K") == ("kW/K", "0.00")  # not "_K"
    assert column_style("area_condenser_m2")[0] == "m²"  # not "_m"
    assert column_style("source.cp_kJ_kgK")[0] == "kJ/(kg·K)"
    assert column_style("investment_total", "USD") == ("USD", "#,##0")
    assert column_style("specific_investment_per_kW", "USD")[0] == "USD/kW"
    assert column_style("fluid") == ("", None)
    assert column_style("rank") == ("", "0")  # an integer without a unit
