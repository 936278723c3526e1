"""Tests of the orcscreen command line, run in-process through ``orcscreen.cli.main``.

The malformed-study corpus (tests/malformed/, one fault per file, the file name says which)
checks that bad input gives exit status 2 and one clear message naming the file, the key path,
the offending value and what is allowed, never a traceback.
"""

from __future__ import annotations

import csv
import importlib.util
import io
import json
from pathlib import Path

import pytest

from orcscreen import cli
from orcscreen.study import load_study

HERE = Path(__file__).resolve().parent
MALFORMED = HERE / "malformed"
STUDIES = sorted((HERE.parent / "studies").glob("*.toml"))

# file -> fragments the message must contain (key path, offending value, what is allowed)
EXPECTED = {
    "composition-for-water-source": ["source.composition", '"N2": 0.7', "only for kind flue-gas"],
    "composition-in-percent": ["source.composition", '"N2": 72.0', "sum to 100", "summing to 1"],
    "cp-for-water-source": ["source.cp_kJ_kgK = 4.2", "brine or thermal-oil"],
    "fluid-filter-leaves-nothing": ["fluids", '"include": ["hfc"]', '"max_gwp": 0.0', "leaves no fluid"],
    "fluid-source-without-fluid": ["source.fluid", 'kind = "fluid"', "CoolProp fluid name"],
    "hot-water-boils": ["source.pressure_bar = 10.0", "200 °C", "above 15.55 bar"],
    "max-reduced-pressure-one": ["limits.max_reduced_pressure = 1.0", "(0, 1)"],
    "min-outlet-above-inlet": ["source.min_outlet_temperature_C = 130.0", "below source.inlet_temperature_C"],
    "missing-inlet-temperature": ["source.inlet_temperature_C", "missing", "-50 to 1000"],
    "missing-source-section": ["[source]", "missing", "kind, inlet_temperature_C and mass_flow_kg_s"],
    "nan-mass-flow": ["source.mass_flow_kg_s = nan", "finite", "> 0"],
    "negative-mass-flow": ["source.mass_flow_kg_s = -5", "> 0"],
    "not-utf8": ["not UTF-8", "UTF-8 TOML"],
    "pinch-condenser-negative": ["exchangers.pinch_condenser_K = -2", "> 0"],
    "pinch-evaporator-zero": ["exchangers.pinch_evaporator_K = 0", "> 0"],
    "pump-efficiency-zero": ["machines.pump_efficiency = 0", "(0, 1]"],
    "recuperator-effectiveness-above-one": ["exchangers.recuperator_effectiveness = 1.5", "(0, 1]"],
    "schema-version-2": ["schema_version = 2", "allowed: 1"],
    "section-not-a-table": ["machines = 0.8", "must be a table"],
    "sink-temperature-out-of-range": ["sink.inlet_temperature_C = 95", "-50 to 80"],
    "source-too-cold-at-sweep-point": ["source.inlet_temperature_C = 90.0", "sweep point sink.inlet_temperature_C = 70.0",
                                       "70 + 10 + 10 + 5 = 95 °C"],
    "source-too-cold-for-sink": ["source.inlet_temperature_C = 40.0", "too cold", "= 45 °C"],
    "turbine-efficiency-with-size-dependent-model": ["machines.turbine_efficiency = 0.8",
                                                     'only for machines.turbine_model = "constant"', "the default"],
    "turbine-stages-zero": ["machines.max_turbine_stages = 0", "an integer from 1 to 3"],
    "economics-negative-rate": ["economics.discount_rate = -0.05", "from 0 to 1"],
    "economics-lifetime-zero": ["economics.lifetime_years = 0", "an integer from 1 to 100"],
    "economics-unknown-currency": ['economics.currency = "EUX"', "unknown currency code", "ISO 4217"],
    "economics-cost-year-outside-index": ["economics.cost_year = 2031", "no cost index", "2023",
                                          "economics.cost_index"],
    "economics-missing-exchange-rate": ["economics.exchange_rates", "prices in EUR", "results are in USD",
                                        "rate for EUR"],
    "pinch-optimised-for-net-power": ['exchangers.pinch_evaporator_K = "optimise"', "smallest pinch always wins",
                                      "a cost objective"],
    "sink-rise-bounds-reversed": ["sink.max_temperature_rise_K = 8", "not above sink.min_temperature_rise_K = 20"],
    "year-file-missing": ["year.file = 'no-such-climate.csv'", "no such file"],
    "year-file-outside-folder": ["year.file = '../../studies/climate-dry-inland.csv'", "outside the study's folder"],
    "year-negative-hours": ["year.file", "year-negative-hours.csv, row 5, column hours", "'-760'", "from 0 to 8,784"],
    "year-design-for-unknown": ['year.design_for = "annual"', '"design-point", "year"'],
    "year-unknown-control": ['year.control = "fan-speed"', '"sliding-pressure-best-sink-flow"'],
    "annual-objective-without-year": ['study.objective = "annual_energy"', "needs a year", "year.file"],
    "npv-objective-without-price": ['study.objective = "net_present_value"', "economics.electricity_price_per_MWh"],
    "fan-pressure-drop-for-water-sink": ["sink.fan_pressure_drop_Pa = 120", "only for kind air"],
    "fixed-aux-fraction-with-fan-model": ["sink.aux_power_per_kW_rejected = 0.015", "sink.fan_pressure_drop_Pa",
                                          "one of the two"],
    "unknown-turbine-model": ['machines.turbine_model = "radial"', '"constant", "axial-sp-vr"'],
    "superheat-bad-string": ['cycle.superheat_K = "max"', 'a number >= 0 or "optimise"'],
    "sweep-duplicate-value": ['sweep."sink.inlet_temperature_C" = [10, 20, 10]', "each value once"],
    "sweep-non-numeric-key": ['sweep."source.kind"', "not a numeric setting", "source.inlet_temperature_C"],
    "sweep-range-unknown-key": ['sweep."source.inlet_temperature_C".end', "start, stop, step"],
    "sweep-same-key-twice": ["sink.inlet_temperature_C", "swept twice", "one entry per setting"],
    "sweep-scalar-value": ['sweep."source.inlet_temperature_C" = 120', "{start, stop, step}"],
    "sweep-step-zero": ['sweep."source.inlet_temperature_C".step = 0', "> 0"],
    "sweep-stop-below-start": ['sweep."source.inlet_temperature_C".stop = 110', "stop >= start"],
    "sweep-too-many-cases": ["sweep", "2,000,001 cases", "1,000,000", "--yes"],
    "sweep-unknown-key": ['sweep."source.inlet_temp_C"', "did you mean source.inlet_temperature_C"],
    "sweep-value-out-of-range": ['sweep."machines.turbine_efficiency"[1] = 1.1', "(0, 1]"],
    "toml-syntax-missing-equals": ["TOML syntax error", "line 5, column 16"],
    "turbine-efficiency-above-one": ["machines.turbine_efficiency = 1.2", "(0, 1]"],
    "unknown-fluid-name": ["fluids", "'R245fb'", "close matches: R245fa"],
    "unknown-key-typo": ["source.mass_flow_kgs", "did you mean source.mass_flow_kg_s"],
    "unknown-layout": ['cycle.layouts[1] = "dual-pressure"', '"basic", "recuperated"'],
    "unknown-safety-class": ['fluids.safety_classes[1] = "A4"', '"A1", "A2L"'],
    "unknown-section-typo": ["[sinks]", "did you mean [sink]"],
    "unknown-source-kind": ['source.kind = "steam"', '"water", "brine", "thermal-oil", "flue-gas", "fluid"'],
    "wrong-type-boolean-flow": ["source.mass_flow_kg_s = true", "wrong type", "a number > 0"],
    "wrong-type-temperature-string": ['source.inlet_temperature_C = "130"', "wrong type", "-50 to 1000"],
    # robustness cases (a fuzzing pass and hand-made faults): every one named by key or line
    "bom-then-unknown-key": ["source.mass_flow_kgs", "did you mean source.mass_flow_kg_s"],
    "brine-cp-turns-negative": ["source.cp_slope_kJ_kgK2 = -0.01", "not positive", "allowed"],
    "case-time-limit-too-long": ["study.case_time_limit_s = 10000000000.0", "at most 1000000 s"],
    "cooling-water-leaves-as-steam": ["sink.temperature_rise_K = 400", "420 °C", "critical temperature",
                                      "below 373.9 °C"],
    "fluid-source-above-eos-range": ["source.inlet_temperature_C = 900", "R134a's equation of state",
                                     "up to"],
    "fluid-source-pressure-below-triple-point": ["source.pressure_bar = 0.001", "no usable states",
                                                 "allowed"],
    "fluid-source-quality-above-critical": ["source.inlet_temperature_C = 400", "no two-phase state",
                                            "inlet_quality"],
    "fluid-source-saturated-without-quality": ["source.inlet_temperature_C = 151.83", "saturated at 5 bar",
                                               "source.inlet_quality"],
    "hot-water-above-critical-temperature": ["source.inlet_temperature_C = 999", "critical temperature",
                                             'kind = "fluid"'],
    "dotted-key-5000-parts": ["line 6", "more than 20 dotted parts"],
    "nesting-10000-deep": ["line 8", "nested more than 20 levels"],
    "nul-byte": ["TOML syntax error", "line 4, column 26"],
    "number-literal-10000-digits": ["line 4", "10,001 digits"],
    "sink-water-far-below-freezing": ["sink.inlet_temperature_C = -20", "would freeze", '"air"'],
    "superheat-infinite": ["cycle.superheat_K = inf", "must be a finite number"],
    "sweep-range-absurd-step": ['sweep."source.inlet_temperature_C".step = 1e-09', "larger step"],
    "sweep-range-stop-infinite": ['sweep."source.inlet_temperature_C".stop = inf', "must be a finite number"],
    "sweep-value-nan": ['sweep."sink.inlet_temperature_C"[1] = nan', "must be a finite number"],
}

#: Words of CoolProp's own error texts: a message about bad input says things in plain words.
RAW_PROPERTY_TEXT = ("QT_flash", "PT_flash", "PropertyError", "Temperature to", "must be in range [")


def run(capsys, *argv):
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_corpus_has_at_least_25_files_and_each_has_expectations():
    names = sorted(p.stem for p in MALFORMED.glob("*.toml"))
    assert len(names) >= 25
    assert names == sorted(EXPECTED)


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_malformed_study_exits_2_with_one_clear_message(capsys, name):
    path = MALFORMED / f"{name}.toml"
    code, out, err = run(capsys, "check", str(path))
    assert code == 2
    assert "Traceback" not in err and "Traceback" not in out
    lines = err.strip().splitlines()
    assert len(lines) == 1, err  # one fault per file -> one message line
    assert lines[0].startswith(f"{path}: ")  # names the file
    for fragment in EXPECTED[name]:
        assert fragment in lines[0], f"{fragment!r} not in {lines[0]!r}"
    assert not any(word in lines[0] for word in RAW_PROPERTY_TEXT), lines[0]
    rest = lines[0][len(f"{path}: "):]
    assert " inf bar" not in rest
    assert not rest.startswith(("source = {", "sink = {")), rest  # the key, not the whole section


@pytest.mark.parametrize("name", ["negative-mass-flow", "unknown-key-typo"])
def test_run_refuses_malformed_studies_the_same_way(capsys, tmp_path, name):
    code, out, err = run(capsys, "run", str(MALFORMED / f"{name}.toml"), "--out", str(tmp_path / "o"))
    assert code == 2 and EXPECTED[name][0] in err and "Traceback" not in err
    assert not (tmp_path / "o").exists()  # nothing written


def test_too_many_cases_pass_with_yes(capsys):
    code, out, err = run(capsys, "check", "--yes", str(MALFORMED / "sweep-too-many-cases.toml"))
    assert code == 0, err
    assert "2,000,001" in out


# -- help -------------------------------------------------------------------------------------

COMMANDS = ("run", "check", "fluids", "schema", "report")


@pytest.mark.parametrize("command", COMMANDS)
def test_every_command_has_help_with_an_example(capsys, command):
    code, out, err = run(capsys, command, "--help")
    assert code == 0
    assert f"usage: orcscreen {command}" in out
    assert "example:" in out and f"orcscreen {command}" in out.split("example:")[1]


def test_top_level_help_lists_the_commands(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == 0
    for command in COMMANDS:
        assert command in out


@pytest.mark.parametrize("argv", [[], ["frobnicate"], ["run"], ["run", "x.toml", "--jobs", "0"],
                                  ["check", "x.toml", "--jobs", "two"], ["fluids", "--format", "xml"],
                                  ["fluids", "--safety-class", "A4"], ["fluids", "--max-gwp", "-3"]])
def test_usage_errors_exit_2_without_traceback(capsys, argv):
    code, out, err = run(capsys, *argv)
    assert code == 2
    assert "Traceback" not in err and err.strip()


def test_missing_study_file(capsys, tmp_path):
    code, _, err = run(capsys, "check", str(tmp_path / "absent.toml"))
    assert code == 2 and "absent.toml: study file not found" in err


# -- fluids -----------------------------------------------------------------------------------

def test_fluids_table_has_catalogue_columns_and_cautions(capsys):
    code, out, _ = run(capsys, "fluids")
    assert code == 0
    header = out.splitlines()[0]
    for title in ("fluid", "class", "GWP100", "ODP", "family", "T_crit", "p_crit", "vapour curve"):
        assert title in header
    assert "R245fa" in out and "Cautions:" in out
    assert "not a design" in out  # the screening caution of orcscreen.fluids.CAUTIONS


def test_fluids_csv_parses_and_filters_apply(capsys):
    code, out, _ = run(capsys, "fluids", "--format", "csv", "--safety-class", "A1", "A2L", "--max-gwp", "700")
    assert code == 0
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rows
    for col in ("coolprop_name", "safety_class", "gwp100", "odp", "family", "T_crit_C", "p_crit_bar", "curve_type"):
        assert col in rows[0]
    assert {r["safety_class"] for r in rows} <= {"A1", "A2L"}
    assert all(float(r["gwp100"]) <= 700 for r in rows)


def test_fluids_json_with_family_and_zero_odp(capsys):
    code, out, _ = run(capsys, "fluids", "--format", "json", "--family", "hydrocarbon", "--zero-odp")
    assert code == 0
    records = json.loads(out)
    assert records and all(r["family"] == "hydrocarbon" and r["odp"] == 0 for r in records)
    assert any(r["coolprop_name"] == "n-Pentane" for r in records)


def test_fluids_unknown_family_exits_2_with_close_matches(capsys):
    code, _, err = run(capsys, "fluids", "--family", "hydrocarbons")
    assert code == 2 and "hydrocarbons" in err and "hydrocarbon" in err and "Traceback" not in err


# -- schema and check -------------------------------------------------------------------------

def test_schema_is_json_with_every_section(capsys):
    code, out, _ = run(capsys, "schema")
    assert code == 0
    schema = json.loads(out)
    for section in ("study", "source", "sink", "exchangers", "machines", "limits", "cycle", "fluids", "sweep"):
        assert section in schema["properties"]


@pytest.mark.parametrize("path", STUDIES, ids=lambda p: p.name)
def test_check_each_shipped_study(capsys, path, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # check writes nothing: the working directory stays empty
    code, out, err = run(capsys, "check", str(path))
    assert code == 0, err
    study = load_study(path)
    assert f"= {study.n_cases:,}" in out
    assert f"fluids: {len(study.fluids)}" in out
    assert "estimate" in out
    assert list(tmp_path.iterdir()) == []


def test_shipped_studies_cover_the_scenarios():
    studies = {p.stem: load_study(p) for p in STUDIES}
    single = [s for s in studies.values() if s.n_points == 1]
    assert len(single) >= 4
    kinds = {s.source.kind for s in single}
    assert {"brine", "water", "flue-gas", "thermal-oil"} <= kinds
    brine = studies["geothermal-brine"].source
    assert 120 <= brine.inlet_temperature_C <= 140 and 60 <= brine.min_outlet_temperature_C <= 80
    gas = studies["kiln-exhaust"].source
    assert 280 <= gas.inlet_temperature_C <= 320 and 120 <= gas.min_outlet_temperature_C <= 150
    assert 240 <= studies["thermal-oil-loop"].source.inlet_temperature_C <= 260
    assert 85 <= studies["engine-jacket-water"].source.inlet_temperature_C <= 95
    demo = studies["demo"]
    assert len(demo.fluids) >= 30 and set(demo.layouts) == {"basic", "recuperated"}
    sweep = studies["overnight-sweep"]
    assert sweep.n_cases >= 2000
    assert {"source.inlet_temperature_C", "sink.inlet_temperature_C"} <= set(sweep.sweep_axes)
    for path in STUDIES:
        assert "invented" in path.read_text().split("\n[", 1)[0].lower(), path.name


# -- report and run ---------------------------------------------------------------------------

def test_report_without_a_run_store_exits_2(capsys, tmp_path):
    code, _, err = run(capsys, "report", str(tmp_path))
    assert code == 2 and "run.sqlite" in err and "Traceback" not in err


def test_internal_error_exits_1_with_one_line(capsys, monkeypatch):
    def boom():
        raise RuntimeError("simulated bug")

    monkeypatch.setattr("orcscreen.study.json_schema", boom)
    code, _, err = run(capsys, "schema")
    assert code == 1
    assert "internal error: RuntimeError: simulated bug" in err and "Traceback" not in err
    code, _, err = run(capsys, "--debug", "schema")
    assert code == 1 and "Traceback" in err


TINY = """
# invented test study: two fluids, one layout
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


@pytest.mark.skipif(importlib.util.find_spec("orcscreen.batch") is None, reason="orcscreen.batch not there yet")
def test_run_end_to_end_and_resume(capsys, tmp_path):
    study = tmp_path / "tiny.toml"
    study.write_text(TINY)
    out_dir = tmp_path / "out"
    code, out, err = run(capsys, "run", str(study), "--out", str(out_dir), "--jobs", "1", "--no-report")
    assert code == 0, err
    assert (out_dir / "ranking.csv").is_file() and (out_dir / "run.sqlite").is_file()
    rows = list(csv.DictReader(io.StringIO((out_dir / "ranking.csv").read_text())))
    assert len(rows) == 4
    assert {r["coolprop_name"] for r in rows} == {"R245fa", "n-Pentane"}
    assert {r["sink.inlet_temperature_C"] for r in rows} == {"15", "25"}
    assert "Preliminary screening, not a design" in out
    assert "ok" in out
    first = (out_dir / "ranking.csv").read_text()
    # the same command again computes nothing new and writes the same ranking
    code, out, err = run(capsys, "run", str(study), "--out", str(out_dir), "--jobs", "1", "--no-report")
    assert code == 0, err
    assert "4 already in the store" in out
    assert (out_dir / "ranking.csv").read_text() == first


@pytest.mark.skipif(importlib.util.find_spec("orcscreen.batch") is None, reason="orcscreen.batch not there yet")
def test_run_default_out_dir_is_out_slash_stem(capsys, tmp_path, monkeypatch):
    study = tmp_path / "tiny.toml"
    study.write_text(TINY.replace('["R245fa", "n-Pentane"]', '["R245fa"]').replace("[15, 25]", "[15]"))
    monkeypatch.chdir(tmp_path)
    code, out, err = run(capsys, "run", str(study), "--jobs", "1", "--no-report")
    assert code == 0, err
    assert (tmp_path / "out" / "tiny" / "ranking.csv").is_file()


@pytest.mark.skipif(importlib.util.find_spec("orcscreen.batch") is None, reason="orcscreen.batch not there yet")
def test_report_failure_after_run_keeps_results_and_exit_0(capsys, tmp_path, monkeypatch):
    report = pytest.importorskip("orcscreen.report")

    def broken(out_dir, *a, **k):
        raise ValueError("simulated chart failure")

    monkeypatch.setattr(report, "build_report", broken)
    study = tmp_path / "tiny.toml"
    study.write_text(TINY.replace("[15, 25]", "[15]"))
    code, out, err = run(capsys, "run", str(study), "--out", str(tmp_path / "o"), "--jobs", "1")
    assert code == 0
    assert "warning: report not built" in err and "simulated chart failure" in err
    assert (tmp_path / "o" / "ranking.csv").is_file()


def test_report_command_calls_the_report_builder(capsys, tmp_path, monkeypatch):
    report = pytest.importorskip("orcscreen.report")
    calls = []

    svg_asked = []

    def fake(out_dir, *a, **k):
        calls.append(Path(out_dir))
        svg_asked.append(bool(k.get("svg")))
        return Path(out_dir) / "report.html"

    monkeypatch.setattr(report, "build_report", fake)
    (tmp_path / "run.sqlite").write_bytes(b"")
    code, out, err = run(capsys, "report", str(tmp_path))
    assert code == 0, err
    assert calls == [tmp_path]
    assert "report.html" in out and "not a design" in out
    code, _, err = run(capsys, "report", str(tmp_path), "--svg")
    assert code == 0, err
    assert calls[-1] == tmp_path and svg_asked == [False, True]


def test_version(capsys):
    from importlib import metadata

    code, out, _ = run(capsys, "--version")
    assert code == 0 and out.strip() == f"orcscreen {metadata.version('orcscreen')}"
