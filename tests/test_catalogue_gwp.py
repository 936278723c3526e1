"""The catalogue's GWP100 against IPCC AR6, the max_gwp filter's list of what it left out, and
the words shown for unknown or unclassified catalogue values.

Outside source: IPCC AR6 WG1 (2021), chapter 7, Table 7.SM.7, 100-year GWP, as carried by the
`chemicals` package (``chemicals.environment.GWP(CAS, method="IPCC (2021) 100yr")``), looked up
by the CAS number that CoolProp gives for each fluid. A later edit of fluids/catalogue.csv that
drifts from the table, or a fluid the table covers left without its value, fails here.
"""

from __future__ import annotations

import math
import textwrap

import CoolProp.CoolProp as CP
import pytest
from chemicals.environment import GWP

from orcscreen import fluids as F
from orcscreen import outputs, report

AR6_METHOD = "IPCC (2021) 100yr"


def _ar6(info: F.FluidInfo) -> float | None:
    """GWP100 of IPCC AR6 Table 7.SM.7 for the fluid's CAS number, via chemicals; None if absent."""
    cas = CP.get_fluid_param_string(info.coolprop_name, "CAS")
    return GWP(cas, method=AR6_METHOD)


# -- AR6 values --------------------------------------------------------------------------------
def test_every_ar6_value_is_the_ipcc_ar6_table_value_by_cas():
    """IPCC AR6 WG1 Ch.7 Table 7.SM.7 via chemicals: every catalogue value marked AR6 equals it."""
    marked = [i for i in F.load_catalogue() if i.gwp_report == "AR6"]
    assert len(marked) >= 40  # the HFCs, HFOs, CFCs, HCFCs, perfluorocarbons, siloxanes...
    for info in marked:
        table = _ar6(info)
        assert table is not None, f"{info.coolprop_name} is marked AR6 but the AR6 table has no row for it"
        assert info.gwp100 == pytest.approx(table, rel=1e-9), info.coolprop_name
        assert "AR6" in info.gwp_source and "7.SM.7" in info.gwp_source, info.coolprop_name


def test_every_fluid_the_ar6_table_covers_carries_its_ar6_value():
    """IPCC AR6 WG1 Ch.7 Table 7.SM.7 via chemicals: a fluid with a row in the table is marked
    AR6 (no older or other value kept where AR6 has one)."""
    for info in F.load_catalogue():
        if info.coolprop_name == "SES36":  # a blend: CoolProp gives no CAS number
            continue
        if _ar6(info) is not None:
            assert info.gwp_report == "AR6", info.coolprop_name


def test_every_unassessed_fluid_says_so_in_words():
    """A fluid without an AR6 value says "not assessed by IPCC AR6" in its GWP source; with no
    value at all its source starts with "unknown" and its report is "none", never a silent blank."""
    unassessed = [i for i in F.load_catalogue() if i.gwp_report != "AR6"]
    assert {"IsoButane", "n-Pentane", "Isopentane", "Cyclopentane"} <= {i.coolprop_name for i in unassessed}
    for info in unassessed:
        assert "not assessed by IPCC AR6" in info.gwp_source, info.coolprop_name
        if info.gwp100 is None:
            assert info.gwp_report == "none" and info.gwp_source.startswith("unknown"), info.coolprop_name
        else:
            assert info.gwp_report in F.GWP_REPORTS[1:-1], info.coolprop_name


# -- the gwp_report column is checked like the others ------------------------------------------
def _mini(tmp_path, monkeypatch, row: str):
    path = tmp_path / "mini.csv"
    path.write_text(",".join(F._COLUMNS) + "\n" + row + "\n", encoding="utf-8")
    monkeypatch.setenv(F.CATALOGUE_ENV, str(path))
    return path


@pytest.mark.parametrize("report_cell, gwp_cell, message", [
    ("AR7", "1530", r"line 2: gwp_report 'AR7' is not one of AR6, AR5, AR4, TAR, SAR, other, none"),
    ("none", "1530", r"gwp_report 'none' does not fit gwp100; allowed: the report the value comes from"),
    ("AR6", "", r"gwp_report 'AR6' does not fit gwp100; allowed: 'none' \(gwp100 is empty\)"),
])
def test_bad_gwp_report_names_file_line_value_and_allowed(tmp_path, monkeypatch, report_cell, gwp_cell, message):
    source = "test" if gwp_cell else "unknown"
    _mini(tmp_path, monkeypatch, f"R134a,R134a,hfc,A1,test,{gwp_cell},{source},{report_cell},0,test,,unknown")
    with pytest.raises(F.CatalogueError, match=message) as err:
        F.load_catalogue()
    assert "mini.csv, line 2: gwp_report" in str(err.value)


def test_gwp_report_accepts_any_case_and_a_missing_column_is_named(tmp_path, monkeypatch):
    _mini(tmp_path, monkeypatch, "R134a,R134a,hfc,A1,test,1530,test,ar6,0,test,,unknown")
    assert F.get_info("R134a").gwp_report == "AR6"
    old = tmp_path / "old.csv"
    header = [c for c in F._COLUMNS if c != "gwp_report"]
    old.write_text(",".join(header) + "\nR134a,R134a,hfc,A1,test,1530,test,0,test,,unknown\n", encoding="utf-8")
    monkeypatch.setenv(F.CATALOGUE_ENV, str(old))
    with pytest.raises(F.CatalogueError, match="header lacks column.s. gwp_report"):
        F.load_catalogue()


# -- what the filters leave out, and why --------------------------------------------------------
def test_max_gwp_lists_what_it_left_out_with_the_reason():
    """R134a: AR6 GWP100 1530 (Table 7.SM.7); isobutane: no AR6 value, left out (conservative)."""
    chosen = F.selection(include=["R134a", "isobutane", "R1234yf"], max_gwp=150)
    assert [i.coolprop_name for i in chosen.chosen] == ["R1234yf"]
    assert [x.line for x in chosen.left_out] == [
        "R134a: GWP 1530 above max_gwp 150",
        "isobutane: GWP not known (not assessed by IPCC AR6): left out by max_gwp",
    ]
    assert chosen.left_out[0].as_dict() == {"fluid": "R134a", "display_name": "R134a",
                                            "reason": "GWP 1530 above max_gwp 150"}


def test_selection_splits_what_was_asked_for_and_select_keeps_its_answer():
    filters = dict(include=["hfc", "hydrocarbon", "siloxane"], exclude=["R32"], max_gwp=700,
                   safety_classes=["A1", "A3"])
    both = F.selection(**filters)
    asked = {i.coolprop_name for i in F.select(include=filters["include"], exclude=filters["exclude"])}
    chosen = {i.coolprop_name for i in both.chosen}
    left = {x.info.coolprop_name for x in both.left_out}
    assert chosen | left == asked and not chosen & left and "R32" not in left
    assert F.select(**filters) == list(both.chosen)
    reasons = {x.info.display_name: x.reason for x in both.left_out}
    # R134a: AR6 1530 and class A1: the GWP alone; MM: AR6 0.476 but not listed in ASHRAE 34
    assert reasons["R134a"] == "GWP 1530 above max_gwp 700"
    assert reasons["MM"] == "not classified in ASHRAE 34: left out by safety_classes"
    # n-pentane: no AR6 value, class A3 allowed; toluene is not asked for (aromatic)
    assert reasons["n-pentane"].startswith("GWP not known")
    assert "toluene" not in reasons
    # R152a: GWP 164 (AR6) passes, class A2 does not; R143a: GWP 5810 and class A2L, both reasons
    assert reasons["R152a"] == "safety class A2 not in safety_classes A1, A3"
    assert reasons["R143a"] == "GWP 5810 above max_gwp 700; safety class A2L not in safety_classes A1, A3"


def test_zero_odp_reason_and_no_filter_leaves_nothing_out():
    """R123 ODP 0.02 (Montreal Protocol Annex C, from memory)."""
    left = F.selection(include=["R123", "R245fa"], zero_odp=True).left_out
    assert [x.line for x in left] == ["R123: ODP 0.02 not zero: left out by zero_odp"]
    # without filters only the ozone-depleting families are left out (of "all"; Montreal Protocol)
    assert {x.info.family for x in F.selection().left_out} == {"cfc", "hcfc"}
    assert F.selection(include=["all", "cfc", "hcfc"]).left_out == ()


def test_run_info_and_report_list_the_left_out_fluids():
    """run-info.json's left_out_fluids and the report's paragraph, from a stored study's [fluids]."""
    meta = {"study": {"fluids": {"include": ["R134a", "isobutane", "R1234yf"], "exclude": [],
                                 "max_gwp": 150.0, "safety_classes": None, "zero_odp": False}}}
    listed = outputs.left_out_fluids(meta)
    assert [x["fluid"] for x in listed] == ["R134a", "IsoButane"]
    assert listed[1]["reason"] == "GWP not known (not assessed by IPCC AR6): left out by max_gwp"
    paragraph = report._left_out_paragraph(meta)
    assert "Left out by the [fluids] filters (2 fluids)" in paragraph
    assert "<li>R134a: GWP 1530 above max_gwp 150</li>" in paragraph
    assert outputs.left_out_fluids({}) is None and report._left_out_paragraph({}) == ""
    # a name the catalogue no longer knows: the outputs are still written, without the list
    assert outputs.left_out_fluids({"study": {"fluids": {"include": ["R999"]}}}) is None


# -- one spelling for unknown, words for unclassified -------------------------------------------
def test_safety_class_none_is_written_with_its_source_and_shown_in_words():
    """ANSI/ASHRAE 34 lists no class for toluene, the siloxanes and cyclopentane (from memory)."""
    for info in F.load_catalogue():
        if info.safety_class == "none":
            assert info.safety_class_source.startswith("not listed in ANSI/ASHRAE 34"), info.coolprop_name
    frame = F.catalogue_frame()
    assert frame["safety_class"].map(lambda v: isinstance(v, str) and v != "").all()
    shown = dict(zip(frame["coolprop_name"], frame["safety_class"]))
    assert shown["Toluene"] == "not classified" and shown["R134a"] == "A1"
    assert F.get_info("toluene").cautions.startswith("Not classified in ASHRAE 34")


@pytest.mark.parametrize("value, shown", [
    ("none", "not classified"), ("", "unknown"), (None, "unknown"), (math.nan, "unknown"), ("B2L", "B2L"),
])
def test_safety_class_text(value, shown):
    assert F.safety_class_text(value) == shown


@pytest.mark.parametrize("value, shown", [
    (None, "unknown"), (math.nan, "unknown"), (0.02, "0.02"), (1530.0, "1530"), (12500.0, "12500"),
])
def test_gwp_text(value, shown):
    """General format: AR6 gives GWP100 from 0.006 (n-butane) to 12500 (R12); none is rounded away."""
    assert F.gwp_text(value) == shown


def test_report_cautions_say_unknown_and_not_classified():
    assert "GWP100 unknown." in report.fluid_cautions({"safety_class": "none", "gwp100": math.nan})
    cautions = report.fluid_cautions({"safety_class": "none", "gwp100": math.nan})
    assert cautions[0].startswith("Not classified in ASHRAE 34")
    assert report.fluid_cautions({"safety_class": "", "gwp100": 3.0})[0].startswith("ASHRAE 34 safety class unknown")


def test_top_table_shows_words_not_blanks():
    import pandas as pd

    table = pd.DataFrame({
        "case_key": ["a", "b"], "rank": [1, 2], "fluid": ["Toluene", "R236EA"],
        "display_name": ["toluene", "R236ea"], "layout": ["basic", "basic"], "status": ["ok", "ok"],
        "net_power_kW": [10.0, 5.0], "safety_class": ["none", ""], "gwp100": [math.nan, 1500.0],
    })
    text = outputs.top_table(table)
    lines = {line.split()[1]: line for line in text.splitlines() if line.strip()[:1].isdigit()}
    assert "not classified" in lines["toluene"] and "unknown" in lines["toluene"]
    assert "unknown" in lines["R236ea"] and "1500" in lines["R236ea"]


CHECK_STUDY = textwrap.dedent("""\
    # invented test study: a filter that leaves fluids out
    [source]
    kind = "water"
    inlet_temperature_C = 120
    mass_flow_kg_s = 5
    [fluids]
    include = ["R134a", "isobutane", "R1234ze(E)"]
    max_gwp = 150
    """)


def test_check_prints_the_left_out_fluids(capsys, tmp_path):
    from orcscreen import cli

    path = tmp_path / "study.toml"
    path.write_text(CHECK_STUDY, encoding="utf-8")
    assert cli.main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "left out by the [fluids] filters: 2" in out
    assert "R134a: GWP 1530 above max_gwp 150" in out
    assert "isobutane: GWP not known (not assessed by IPCC AR6): left out by max_gwp" in out
