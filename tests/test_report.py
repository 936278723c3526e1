"""Tests of the HTML report (orcscreen/report.py) built from a small real run.

A study of a few catalogue fluids is run by the real batch into a temporary directory (engine,
store and ranking.csv as in `orcscreen run`), plus one failed case recorded the way the batch
records one; then the report is built from the store alone. The page is parsed with the standard
library's HTML parser and compared with the store, ranking.csv and the details: what it shows
must be what was computed. Self-containment is checked against the HTML standard's resource
attributes (src, href, srcset...: only data: URIs and in-page anchors are allowed).
"""

from __future__ import annotations

import base64
import html.parser
import re
from pathlib import Path

import pandas as pd
import pytest

from orcscreen import plots, rank, report
from orcscreen.batch import failed_row, run_study
from orcscreen.fluids import CAUTIONS
from orcscreen.outputs import ranking_table
from orcscreen.store import RunStore, StoreNotFoundError
from orcscreen.study import case_key, study_from_dict

# Invented scenario: 10 kg/s of hot water at 130 °C; the study name carries HTML-special
# characters on purpose (they must come out escaped).
STUDY = {
    "study": {"name": "report test <b>hot</b> & water"},
    "source": {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kg_s": 10},
    "fluids": {"include": ["R245fa", "Isobutane", "n-Pentane", "CarbonDioxide"]},
    "cycle": {"layouts": ["basic", "recuperated"]},
}
FAILED_REASON = "PropertyError: flash did not converge (recorded for the test)"


def _small_run(out: Path) -> Path:
    study = study_from_dict(STUDY)
    run_study(study, out, jobs=1, progress=False)
    # one failed case, recorded as the batch records a case that raised
    case = {**next(study.cases()).as_dict(), "fluid": "Toluene"}
    with RunStore(out) as store:
        store.put(case_key(case), len(store),
                  {"row": failed_row(case, FAILED_REASON), "detail": None})
    return out


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = _small_run(tmp_path_factory.mktemp("report") / "run")
    path = report.build_report(out, top_n=3)
    return out, path, path.read_text(encoding="utf-8")


class _Page(html.parser.HTMLParser):
    """Collects resource attributes, tables (id -> header texts and rows of cell texts, with the
    data-sort keys) and section texts."""

    RESOURCE_ATTRS = {"src", "href", "srcset", "poster", "data", "action", "formaction",
                      "background", "cite", "manifest"}

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.resources: list[tuple[str, str, str]] = []
        self.tables: dict[str, dict] = {}
        self._table = None
        self._cell = None
        self._row = None
        self.sections: dict[str, list[str]] = {}
        self._section = []
        self.scripts = 0
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for name, value in attrs:
            if name in self.RESOURCE_ATTRS and value is not None:
                self.resources.append((tag, name, value))
        if tag == "script":
            self.scripts += 1
            assert "src" not in a
        if tag == "section":
            self._section.append(a.get("id", ""))
            self.sections.setdefault(a.get("id", ""), [])
        if tag == "table" and a.get("id"):
            self._table = self.tables.setdefault(a["id"], {"head": [], "rows": [], "keys": []})
        if self._table is not None:
            if tag == "tr":
                self._row = ([], [])
            if tag in ("td", "th"):
                self._cell = [tag, a.get("data-sort"), []]

    def handle_endtag(self, tag):
        if tag == "section" and self._section:
            self._section.pop()
        if self._table is not None:
            if tag in ("td", "th") and self._cell is not None:
                kind, key, parts = self._cell
                text = "".join(parts).strip()
                self._row[0].append((kind, text))
                self._row[1].append(key)
                self._cell = None
            if tag == "tr" and self._row is not None:
                cells, keys = self._row
                if all(kind == "th" for kind, _ in cells):
                    self._table["head"] = [t for _, t in cells]
                else:
                    self._table["rows"].append([t for _, t in cells])
                    self._table["keys"].append(keys)
                self._row = None
            if tag == "table":
                self._table = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell[2].append(data)
        for sid in self._section:
            self.sections[sid].append(data)


def _parse(text: str) -> _Page:
    page = _Page()
    page.feed(text)
    page.close()
    return page


def _section(page: _Page, sid: str) -> str:
    return re.sub(r"\s+", " ", " ".join(page.sections.get(sid, [])))


def test_report_is_one_self_contained_file(built):
    out, path, text = built
    assert path == out / "report.html"
    page = _parse(text)
    assert text.startswith("<!DOCTYPE html>")
    for tag, attr, value in page.resources:
        assert value.startswith(("data:", "#")), f"<{tag} {attr}={value[:60]!r}> leaves the file"
    images = [v for tag, attr, v in page.resources if tag == "img"]
    assert images, "no embedded figure"
    for src in images:
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Content-Security-Policy" in text and "default-src 'none'" in text
    assert "<link rel=\"stylesheet\"" not in text and "@import" not in text
    assert page.scripts == 1


def test_summary_matches_the_store(built):
    out, _, text = built
    page = _parse(text)
    with RunStore(out, create=False) as store:
        meta, counts = store.meta(), store.counts()
    summary = _section(page, "summary")
    assert meta["study_hash"] in summary
    assert meta["orcscreen_version"] in summary and meta["coolprop_version"] in summary
    assert meta["created_at"] in summary
    assert counts == {"ok": 6, "infeasible": 2, "failed": 1}
    assert "9 (6 ok, 2 infeasible, 1 failed)" in summary
    # inputs with the defaults filled in (the sink section was not in the study: all defaults)
    assert "inlet_temperature_C" in summary and "pinch_evaporator_K" in summary
    # the name is escaped, not interpreted
    assert "report test <b>hot</b> & water" in summary
    assert "<b>hot</b>" not in text.replace("&lt;b&gt;hot&lt;/b&gt;", "")


def test_ranking_table_follows_ranking_csv(built):
    out, _, text = built
    page = _parse(text)
    table = page.tables["ranking-table"]
    csv = pd.read_csv(out / "ranking.csv")
    # a layout whose recuperator takes no heat is one row, its simpler layout's (rank.fold_inactive)
    ok = rank.fold_inactive(csv[csv["status"] == "ok"]).sort_values("rank")
    head = table["head"]
    assert head[:4] == ["rank", "fluid", "layout", "net power [kW]"]
    for wanted in ("cond. p [bar]", "high p [bar]", "SP [m]", "VR [-]", "stages", "turbine eff. [-]",
                   "safety class", "GWP100", "caution", "evaporator pinch", "warnings"):
        assert wanted in head
    assert [int(r[0]) for r in table["rows"]] == ok["rank"].astype(int).tolist()
    assert [r[1] for r in table["rows"]] == ok["fluid"].tolist()
    assert [r[2].split(" (")[0] for r in table["rows"]] == ok["layout"].tolist()
    # the warnings, as in ranking.csv (the sub-atmospheric condensers here)
    col = head.index("warnings")
    assert [r[col] for r in table["rows"]] == ok["warnings"].fillna("").tolist()
    assert any("below atmospheric pressure" in r[col] for r in table["rows"])
    shown = [float(r[3]) for r in table["rows"]]
    assert shown == pytest.approx(ok["net_power_kW"].tolist(), abs=0.051)
    # the sort keys carry full precision (ranking.csv holds 6 significant digits)
    keys = [float(k[3]) for k in table["keys"]]
    assert keys == pytest.approx(ok["net_power_kW"].tolist(), rel=1e-5)
    for column, header, spec in (("condensing_pressure_bar", "cond. p [bar]", ".3f"),
                                 ("turbine_inlet_pressure_bar", "high p [bar]", ".2f")):
        col = head.index(header)
        assert [r[col] for r in table["rows"]] == [format(v, spec) for v in ok[column]]
    col = head.index("evaporator pinch")
    assert [r[col] for r in table["rows"]] == ok["pinch_location"].fillna("").tolist()
    col = head.index("safety class")
    assert [r[col] for r in table["rows"]] == ok["safety_class"].fillna("").tolist()
    # a plain-words caution from the ASHRAE 34 class (ANSI/ASHRAE 34: 3 = higher flammability)
    col = head.index("caution")
    for r, (_, row) in zip(table["rows"], ok.iterrows()):
        if row["safety_class"] == "A3":
            assert "highly flammable" in r[col]


def test_the_answer_comes_first(built):
    """The study line, the candidates and the ranking come before the charts, the cards and the
    inputs, metadata and method."""
    out, _, text = built
    page = _parse(text)
    at = {name: text.index(marker) for name, marker in (
        ("line", 'id="study-line"'), ("candidates", 'id="candidates"'), ("ranking", 'id="ranking-table"'),
        ("charts", 'id="charts"'), ("cards", 'id="top"'), ("summary", 'id="summary"'),
        ("method", 'id="method"'), ("cautions", 'id="cautions"'))}
    assert list(at) == sorted(at, key=at.get)
    line = re.search(r'id="study-line">([^<]*)<', text).group(1)
    assert "water source 130 °C, 10 kg/s" in line and "9 cases (6 ok, 2 infeasible, 1 failed)" in line
    assert "ranked by net power" in line
    csv = pd.read_csv(out / "ranking.csv")
    best = csv[csv["rank"] == 1].iloc[0]
    candidates = re.sub(r"\s+", " ", re.sub(r"<[^>]+>", "", text[at["candidates"]:at["ranking"]]))
    assert f"1. {best['fluid']}" in candidates or f"{best['fluid']} ·" in candidates
    assert f"{best['net_power_kW']:.1f} kW net" in candidates


def test_detail_cards_show_the_stored_detail(built):
    out, _, text = built
    page = _parse(text)
    with RunStore(out, create=False) as store:
        table = ranking_table(store.rows(), store.meta())
        top = (rank.fold_inactive(table[table["status"] == "ok"]).sort_values("rank")
               .drop_duplicates("fluid").head(3))           # best layout of the 3 best fluids
        assert top["fluid"].nunique() == 3
        details = [store.detail(k) for k in top["case_key"]]
    assert text.count('<article class="card"') == 3
    top_text = _section(page, "top")
    for n, ((_, row), detail) in enumerate(zip(top.iterrows(), details), start=1):
        assert f"{n}. {plots.case_label(row)}" in top_text
        assert f"{row['net_power_kW']:.1f} kW net" in top_text
        for state in detail["states"]:
            assert f" {state['T_C']:.2f} " in top_text
            assert f" {state['p_bar']:.3f} " in top_text
            assert f" {state['h_kJ_kg']:.2f} " in top_text
        for hx in detail["exchangers"].values():
            assert f" {hx['duty_kW']:.1f} " in top_text
            assert f" {hx['pinch_K']:.2f} " in top_text
            assert f" {hx['ua_kW_K']:.2f} " in top_text
        assert f" {row['size_parameter_m']:.4f} " in top_text
        assert f" {row['turbine_power_kW']:.1f} " in top_text
        assert f" {row['turbine_efficiency']:.3f} " in top_text and f" {int(row['turbine_stages'])} " in top_text
        for warning in str(row["warnings"] or "").split("; "):
            assert warning in top_text       # a card shows its case's warnings
    # per-fluid cautions: ASHRAE 34 class meanings (ANSI/ASHRAE 34: A = lower toxicity,
    # B = higher toxicity; 1 = no flame propagation, 3 = higher flammability)
    for _, row in top.iterrows():
        for caution in report.fluid_cautions(row):
            assert caution in top_text
    if (top["safety_class"] == "A3").any():
        assert "lower toxicity, higher flammability" in top_text
    if (top["safety_class"] == "B1").any():
        assert "higher toxicity, no flame propagation" in top_text


def test_infeasible_and_failed_cases_are_listed_with_reasons(built):
    out, _, text = built
    page = _parse(text)
    table = page.tables["problems-table"]
    with RunStore(out, create=False) as store:
        rows = store.rows()
    bad = rows[rows["status"] != "ok"]
    assert len(table["rows"]) == len(bad) == 3
    listed = {(r[2], r[3]) for r in table["rows"]}
    assert ("failed", FAILED_REASON) in listed
    for _, r in bad.iterrows():
        assert (r["status"], r["reason"]) in listed
    assert any(r[2] == "infeasible" and r[3] for r in table["rows"])


def test_cautions_section_carries_the_catalogue_cautions(built):
    _, _, text = built
    page = _parse(text)
    cautions = _section(page, "cautions")
    flat = re.sub(r"\s+", " ", CAUTIONS).strip()
    for sentence in re.split(r"(?<=\.)\s", flat):
        assert sentence.strip() in cautions
    assert "Preliminary screening, not a design" in text


def test_every_chart_has_its_png_and_svg_only_on_request(built, tmp_path):
    out, _, text = built
    figures = out / "figures"
    pngs = sorted(p.stem for p in figures.glob("*.png"))
    assert not list(figures.glob("*.svg"))          # PNG only by default
    other = tmp_path / "copy"
    other.mkdir()
    (other / "run.sqlite").write_bytes((out / "run.sqlite").read_bytes())
    report.build_report(other, top_n=3, svg=True)
    assert sorted(p.stem for p in (other / "figures").glob("*.svg")) == pngs
    report.build_report(other, top_n=3)             # a rebuild without SVG leaves none behind
    assert not list((other / "figures").glob("*.svg"))
    for stem in ("ranking", "tradeoff_size_parameter", "tradeoff_ua", "landscape", "turbine_map"):
        assert stem in pngs
    assert len([s for s in pngs if s.startswith("tq_")]) == 3
    assert len([s for s in pngs if s.startswith("ts_")]) == 3
    assert "chart-problems" not in text        # nothing failed
    assert text.count("<img ") == len(pngs)


def test_a_failing_chart_is_reported_and_the_rest_is_kept(built, monkeypatch, tmp_path):
    out, _, _ = built
    other = tmp_path / "copy"
    other.mkdir()
    for name in ("run.sqlite", "ranking.csv"):
        (other / name).write_bytes((out / name).read_bytes())

    def broken(*args, **kwargs):
        raise RuntimeError("the T-Q plotter broke (raised on purpose)")

    monkeypatch.setattr(plots, "tq_diagram", broken)
    path = report.build_report(other, top_n=2)
    text = path.read_text(encoding="utf-8")
    page = _parse(text)
    problems = _section(page, "chart-problems")
    assert "RuntimeError: the T-Q plotter broke (raised on purpose)" in problems
    assert problems.count("T-Q diagram") == 2
    csv = pd.read_csv(out / "ranking.csv")
    shown = rank.fold_inactive(csv[csv["status"] == "ok"])
    assert len(page.tables["ranking-table"]["rows"]) == len(shown)   # results all there
    assert not list((other / "figures").glob("tq_*"))
    assert len(list((other / "figures").glob("ts_*.png"))) == 2


def test_a_failure_in_a_charts_prepared_data_is_recorded_on_that_chart(built, monkeypatch, tmp_path):
    """The T-s diagrams' data (dome and path, from the property library) is computed before the
    drawing processes start; when that fails, the failure is recorded on each T-s chart (it is
    raised again where the chart is drawn), the data is asked for again there, and every other
    chart is drawn."""
    out, _, _ = built
    other = tmp_path / "copy"
    other.mkdir()
    for name in ("run.sqlite", "ranking.csv"):
        (other / name).write_bytes((out / name).read_bytes())
    calls = []

    def broken(detail, row):
        calls.append(row["case_key"])
        raise RuntimeError("the saturation dome broke (raised on purpose)")

    monkeypatch.setattr(report, "with_ts_data", broken)
    monkeypatch.setattr(report, "CHART_WORKERS", 1)      # the calls are counted in this process
    page = _parse(report.build_report(other, top_n=2).read_text(encoding="utf-8"))
    problems = _section(page, "chart-problems")
    assert "RuntimeError: the saturation dome broke (raised on purpose)" in problems
    assert problems.count("T-s diagram") == 2
    assert len(calls) == 4 and len(set(calls)) == 2      # prepared once, then again when drawn
    assert not list((other / "figures").glob("ts_*"))
    assert len(list((other / "figures").glob("tq_*.png"))) == 2


def test_the_sections_without_charts_are_made_once_beside_the_drawing(built, monkeypatch, tmp_path):
    """The page's sections that show no chart are made while the charts are drawn, once; when
    that fails, they are made again after the charts (and the page is whole)."""
    out, _, _ = built
    other = tmp_path / "copy"
    other.mkdir()
    for name in ("run.sqlite", "ranking.csv"):
        (other / name).write_bytes((out / name).read_bytes())
    real, calls = report._chart_free_parts, []

    def counted(data):
        calls.append(1)
        return real(data)

    monkeypatch.setattr(report, "_chart_free_parts", counted)
    whole = report.build_report(other, top_n=2).read_text(encoding="utf-8")
    assert len(calls) == 1

    def failing_first(data):
        calls.append(1)
        if len(calls) == 2:
            raise RuntimeError("the summary broke once (raised on purpose)")
        return real(data)

    monkeypatch.setattr(report, "_chart_free_parts", failing_first)
    again = report.build_report(other, top_n=2).read_text(encoding="utf-8")
    assert len(calls) == 3
    built_at = re.compile(r"built \d{4}-\d\d-\d\d \d\d:\d\d UTC")
    assert built_at.sub("", again) == built_at.sub("", whole)
    for section in ("summary", "problems", "cautions"):
        assert f'id="{section}"' in again


def test_prepared_chart_data_is_computed_once():
    """report._Once keeps its first value; a failure is raised again on the next call."""
    calls = []

    def flaky():
        calls.append(1)
        if len(calls) == 1:
            raise ValueError("first call fails")
        return len(calls)

    once = report._Once(flaky)
    with pytest.raises(ValueError, match="first call fails"):
        once()
    assert once() == 2 and once() == 2 and len(calls) == 2


def test_rebuild_removes_charts_of_an_earlier_report(built, tmp_path):
    out, _, _ = built
    other = tmp_path / "copy"
    other.mkdir()
    (other / "run.sqlite").write_bytes((out / "run.sqlite").read_bytes())
    report.build_report(other, top_n=3)
    assert len(list((other / "figures").glob("tq_*.png"))) == 3
    report.build_report(other, top_n=1)
    assert len(list((other / "figures").glob("tq_*.png"))) == 1


def test_missing_store_raises_the_store_error(tmp_path):
    with pytest.raises(StoreNotFoundError, match="no run store"):
        report.build_report(tmp_path / "nothing-here")


def test_cautions_fall_back_to_the_readme_section(monkeypatch, tmp_path):
    import orcscreen.fluids

    monkeypatch.delattr(orcscreen.fluids, "CAUTIONS")
    paras = report.cautions_text()
    readme = Path(report.__file__).resolve().parent.parent / "README.md"
    if readme.is_file() and "autions" in readme.read_text(encoding="utf-8"):
        assert paras and all(p.strip() for p in paras)
    else:
        assert paras == [report._FALLBACK_CAUTIONS]


def test_a_run_without_feasible_case_still_gets_a_report(tmp_path):
    """Carbon dioxide cannot evaporate below its critical point (31 °C, NIST Chemistry WebBook,
    from memory) above the condensing temperature of a 20 °C sink: every case is infeasible."""
    study = {**STUDY, "study": {"name": "nothing feasible"},
             "fluids": {"include": ["CarbonDioxide"]}}
    run_study(study_from_dict(study), tmp_path, jobs=1, progress=False)
    text = report.build_report(tmp_path).read_text(encoding="utf-8")
    page = _parse(text)
    assert "No case is feasible." in _section(page, "ranking")
    assert len(page.tables["problems-table"]["rows"]) == 2
    assert "chart-problems" not in text
    assert not list((tmp_path / "figures").glob("*.png"))


def test_report_reads_only_its_columns_and_shows_the_same(built):
    """The report's table holds REPORT_COLUMNS only (read from the store in chunks); the page
    it gives is the page of the table of every column, and the charts get the same values."""
    out = built[0]
    mine = report._load(out, 3)
    every = report._load(out, 3, columns=None)
    assert set(mine.table.columns) < set(every.table.columns)
    assert "ua_condenser_kW_K" not in mine.table and "ua_condenser_kW_K" in every.table
    pd.testing.assert_frame_equal(mine.table, every.table[list(mine.table.columns)])
    pd.testing.assert_frame_equal(mine.top, every.top[list(mine.top.columns)])
    built_at = re.compile(r"built \d{4}-\d\d-\d\d \d\d:\d\d UTC")
    assert built_at.sub("", report.render_report(mine, [])) == \
        built_at.sub("", report.render_report(every, []))


def test_charts_drawn_in_forked_processes_are_the_same_files(built, tmp_path, monkeypatch):
    """The report draws its charts in forked processes, one per core: the same PNG bytes as
    drawn one after the other in this process, and every chart present."""
    import filecmp
    import shutil

    out, _, _ = built
    parallel = sorted((out / report.FIGURES_DIR).glob("*.png"))
    assert len(parallel) >= 5
    serial_run = tmp_path / "serial"
    shutil.copytree(out, serial_run)
    monkeypatch.setattr(report, "CHART_WORKERS", 1)
    report.build_report(serial_run, top_n=3)
    serial = sorted((serial_run / report.FIGURES_DIR).glob("*.png"))
    assert [p.name for p in serial] == [p.name for p in parallel]
    for a, b in zip(parallel, serial):
        assert filecmp.cmp(a, b, shallow=False), a.name
