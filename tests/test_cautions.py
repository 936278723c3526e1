"""Cautions and regulatory flags: thermal-stability limits with their sources, the
ozone-depleting fluids left out of "all", and the one caution text of a case (console,
ranking.csv, ranking.xlsx). Outside sources are named beside each check."""

from __future__ import annotations

import csv
import io
import re

import openpyxl
import pytest

from orcscreen import cli
from orcscreen import fluids as F
from orcscreen.study import study_from_dict

#: Catalogue rows with a thermal-stability limit. The brief asked for 20; 16 could be given a
#: source without guessing (fluids/README.md lists them and what is missing).
MIN_STABILITY_LIMITS = 16

#: Published findings the catalogue's limits must not exceed: (fluid, highest allowed limit
#: [°C], source read (abstracts)).
PUBLISHED_CEILINGS = [
    ("Cyclopentane", 300, "Ginosar, Petkovic, Guillen, Energy & Fuels 25 (2011): minor decomposition after "
                          "12 days at 240 and 300 °C, 1,500 ppm products at 350 °C"),
    ("R1336mzz(Z)", 290, "Huo et al., Int. J. Energy Res. (2019): dissociation at 270-290 °C after 24 h at 4.0 MPa"),
    ("R1243zf", 200, "Liu et al., Energy 335 (2025): initial pyrolysis between 180 and 200 °C"),
    ("R1233zd(E)", 150, "Purdue conference paper 2053: E/Z isomerisation above 150 °C sustained"),
    ("MM", 300, "Preissinger and Brueggemann, Energies 9 (2016) 183: stable up to 300 °C"),
    ("MDM", 300, "Di Marcoberardino et al., Energies 15 (2022) 3498: about 300 °C, significant degradation "
                 "at 350 °C; Yu et al., Energy 320 (2025): MDM about 100 °C below 350 °C"),
    ("D4", 300, "Di Marcoberardino et al., Energies 15 (2022) 3498"),
    ("D5", 300, "Di Marcoberardino et al., Energies 15 (2022) 3498"),
]

#: Ozone-depleting substances of the catalogue by the Montreal Protocol's annexes (Annex A
#: group I CFCs: R11, R12, R113, R114; Annex C group I HCFCs: R22, R123, R124, R141b, R142b;
#: from memory of the annexes).
MONTREAL_ANNEXES = {"R11", "R12", "R113", "R114", "R22", "R123", "R124", "R141b", "R142b"}


def _document_named(source: str) -> bool:
    """A source that names a document: a year in parentheses, a DOI, a report or a paper number."""
    return bool(re.search(r"\((19|20)\d\d\)|doi:|report|paper \d+", source))


def test_thermal_stability_limits_have_a_source_naming_a_document():
    limited = [i for i in F.load_catalogue() if i.max_temperature_C is not None]
    assert len(limited) >= MIN_STABILITY_LIMITS, [i.coolprop_name for i in limited]
    for info in limited:
        source = info.max_temperature_source
        assert _document_named(source), (info.coolprop_name, source)
        assert "(read)" in source or "from memory" in source, (info.coolprop_name, source)
        assert 100.0 <= info.max_temperature_C <= 450.0, (info.coolprop_name, info.max_temperature_C)


@pytest.mark.parametrize("name, ceiling_C, source", PUBLISHED_CEILINGS, ids=[c[0] for c in PUBLISHED_CEILINGS])
def test_thermal_stability_limit_within_the_published_finding(name, ceiling_C, source):
    info = F.get_info(name)
    assert info.max_temperature_C is not None and info.max_temperature_C <= ceiling_C, source


def test_catalogue_marks_exactly_the_montreal_annex_fluids_ozone_depleting():
    flagged = {i.display_name for i in F.load_catalogue() if i.ozone_depleting}
    assert flagged == MONTREAL_ANNEXES


def test_all_leaves_out_cfcs_and_hcfcs_and_lists_them_with_the_reason():
    chosen = F.selection(include=["all"])
    assert not any(i.family in F.MONTREAL_FAMILIES for i in chosen.chosen)
    left = {item.info.display_name: item.reason for item in chosen.left_out}
    assert set(left) == MONTREAL_ANNEXES
    for reason in left.values():
        assert "ozone-depleting" in reason and "Montreal Protocol" in reason and 'left out of "all"' in reason
    # the study's [fluids] include = ["all"] path (orcscreen.study) resolves the same way
    study = study_from_dict({"source": {"kind": "water", "inlet_temperature_C": 120, "mass_flow_kg_s": 5}})
    assert set(study.fluids) == {i.coolprop_name for i in chosen.chosen}
    assert {x.info.display_name for x in F.left_out_of(study.fluid_filter.model_dump())} == MONTREAL_ANNEXES
    assert not any("ozone-depleting" in w for w in study.warnings)


def test_named_ozone_depleting_fluid_or_family_is_screened_with_a_warning():
    by_name = F.selection(include=["all", "R11"])
    assert "R11" in {i.coolprop_name for i in by_name.chosen}
    assert "R11" not in {x.info.coolprop_name for x in by_name.left_out}
    by_family = F.selection(include=["hcfc"])
    assert {i.display_name for i in by_family.chosen} == MONTREAL_ANNEXES - {"R11", "R12", "R113", "R114"}
    assert by_family.left_out == ()
    study = study_from_dict({"source": {"kind": "water", "inlet_temperature_C": 120, "mass_flow_kg_s": 5},
                             "fluids": {"include": ["R11", "R245fa"]}})
    warned = [w for w in study.warnings if "ozone-depleting" in w]
    assert len(warned) == 1
    assert "R11: ozone-depleting: phased out under the Montreal Protocol," in warned[0]


@pytest.mark.parametrize("name, has, lacks", [
    # ASHRAE 34 / ISO 817 groups: A/B toxicity, 1 / 2L / 2 / 3 flammability
    ("n-Propane", ["highly flammable", "class A3"], ["toxicity"]),
    ("R1234yf", ["lower flammability", "class A2L"], ["GWP"]),
    ("R152A", ["flammable", "class A2", "high GWP 164"], ["very high"]),
    ("R245fa", ["higher toxicity", "class B1", "high GWP 962"], ["flammab"]),
    ("Ammonia", ["higher toxicity, lower flammability", "class B2L"], []),
    ("R236FA", ["class A1", "very high GWP 8690"], ["flammab"]),
    ("Cyclopentane", ["not classified by ASHRAE 34; flammable"], ["GWP"]),
    ("MDM", ["not classified by ASHRAE 34; flammable"], []),
    ("Novec649", ["not classified by ASHRAE 34; flammability not established: treat as flammable"], []),
    ("R22", ["ozone-depleting: phased out under the Montreal Protocol", "high GWP 1960"], []),
])
def test_caution_text_of_the_fluid(name, has, lacks):
    text = F.caution_text(F.get_info(name))
    for part in has:
        assert part in text, (name, text)
    for part in lacks:
        assert part not in text, (name, text)


def test_caution_text_flags_vacuum_condensers_from_the_row():
    info = F.get_info("R245fa")
    assert "vacuum" not in F.caution_text(info, {"condensing_pressure_bar": 1.5}, 0.05)
    assert "vacuum condenser (0.8 bar)" in F.caution_text(info, {"condensing_pressure_bar": 0.8}, 0.05)
    assert "deep vacuum condenser (0.03 bar" in F.caution_text(info, {"condensing_pressure_bar": 0.03}, 0.05)
    assert "below the flag of 2 bar" in F.caution_text(info, {"condensing_pressure_bar": 1.5}, 2.0)
    assert "vacuum" not in F.caution_text(info, {"condensing_pressure_bar": float("nan")}, 0.05)


STUDY = """
# invented test study: four fluids, one layout
[study]
name = "cautions"
[source]
kind = "water"
inlet_temperature_C = 120
mass_flow_kg_s = 5
[sink]
inlet_temperature_C = 20
[fluids]
include = ["R245fa", "n-Pentane", "Cyclopentane", "R11"]
[machines]
turbine_model = "constant"
[cycle]
layouts = ["basic"]
"""


def run(capsys, *argv):
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_check_warns_of_a_named_cfc_and_lists_the_cfcs_left_out_of_all(capsys, tmp_path):
    study = tmp_path / "cautions.toml"
    study.write_text(STUDY)
    code, out, err = run(capsys, "check", str(study))
    assert code == 0, err
    assert "R11: ozone-depleting: phased out under the Montreal Protocol," in err
    everything = tmp_path / "all.toml"
    everything.write_text(STUDY.replace('include = ["R245fa", "n-Pentane", "Cyclopentane", "R11"]',
                                        'include = ["all"]'))
    code, out, err = run(capsys, "check", str(everything))
    assert code == 0, err
    assert f"left out by the [fluids] filters: {len(MONTREAL_ANNEXES)}" in out
    for name in MONTREAL_ANNEXES:
        assert re.search(rf"^\s+{re.escape(name)}: ozone-depleting: phased out under the Montreal Protocol",
                         out, re.M), name


def test_run_writes_a_caution_for_every_case_and_prints_one_per_fluid(capsys, tmp_path):
    study = tmp_path / "cautions.toml"
    study.write_text(STUDY)
    out_dir = tmp_path / "out"
    code, out, err = run(capsys, "run", str(study), "--out", str(out_dir), "--jobs", "1", "--no-report")
    assert code == 0, err
    assert "R11: ozone-depleting: phased out under the Montreal Protocol," in err  # the study's warning
    rows = list(csv.DictReader(io.StringIO((out_dir / "ranking.csv").read_text(encoding="utf-8"))))
    assert len(rows) == 4
    for row in rows:
        info = F.get_info(row["fluid"])
        caution = row["caution"]
        assert caution, row["fluid"]
        if info.flammable:
            assert "flammab" in caution, (row["fluid"], caution)
        if row["status"] == "ok":
            p_bar = float(row["condensing_pressure_bar"])
            assert ("vacuum condenser" in caution) == (p_bar < 1.01325), (row["fluid"], p_bar, caution)
        assert caution == F.caution_text(info, {"condensing_pressure_bar": float(row["condensing_pressure_bar"] or "nan")},
                                         0.05)  # the one function, the study's default flag
    cfc = next(r for r in rows if r["fluid"] == "R11")
    assert F.OZONE_DEPLETING_WARNING in cfc["warnings"].split("; ")
    # ranking.xlsx carries the same column, row for row (header row, units row, then the rows)
    ws = openpyxl.load_workbook(out_dir / "ranking.xlsx")["ranking"]
    header = [c.value for c in ws[1]]
    col = header.index("caution")
    fluid_col = header.index("fluid")
    sheet = {r[fluid_col]: r[col] for r in ws.iter_rows(min_row=3, values_only=True)}
    assert sheet == {r["fluid"]: r["caution"] for r in rows}
    # the console: a caution line for each fluid of the top list
    block = out.split("cautions (", 1)[1].split("\n\n", 1)[0]
    for row in rows:
        if row["status"] == "ok":
            assert f"  {row['fluid']}: {row['caution']}" in block, (row["fluid"], block)
