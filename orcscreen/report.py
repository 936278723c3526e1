"""The HTML report of a run: ``DIR/report.html`` and the charts in ``DIR/figures/``.

:func:`build_report` reads the run store (``DIR/run.sqlite``) and recomputes nothing: it ranks the
stored rows (:func:`orcscreen.outputs.ranking_table`), draws every chart of :mod:`orcscreen.plots`
(PNG into ``DIR/figures/``; SVG as well on request, ``svg=True``) and writes one self-contained
HTML file: figures embedded as base64 PNG, inline CSS, a few lines of inline JavaScript that sort
the tables, no network access (a Content-Security-Policy in the page forbids any). Each chart is
drawn in its own ``try``: a chart that fails is named in the report with its error, and the rest
of the report is written.

The page answers first: the study in one line, the recommended candidates and the ranking table
fill the first screen; the best cases by each further ranking criterion (``study.rank_by``, or
``rank_by`` given to :func:`build_report`) follow the table, then charts, detail cards, inputs,
metadata and method. A layout
whose extra component does nothing (a recuperator that takes no heat) is shown once, folded into
its simpler layout's row (:func:`orcscreen.rank.fold_inactive`); ranking.csv keeps every case.

Orchestration only: no physics here, every number comes from the stored rows and details.
"""

from __future__ import annotations

import base64
import functools
import contextlib
import html
import logging
import math
import os
import sqlite3
from dataclasses import dataclass, field
from datetime import datetime, timezone
from itertools import combinations
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from orcscreen import plots, rank
from orcscreen.controls import CONTROLS
from orcscreen.figures import LAYOUT_COLUMNS, with_ts_data
from orcscreen.fluids import FROM_COMPONENTS, NOT_CLASSIFIED, UNKNOWN, gwp_text, safety_class_text
from orcscreen.objectives import CRITERIA, PARETO_COLUMN, rank_column
from orcscreen.outputs import CRITERION_TOP, by_criterion, criteria_of, criterion_value_text, left_out_fluids, objective_of, ranking_table
from orcscreen.safe_files import atomic_write, refuse_link
from orcscreen.store import RunStore, StoreError

__all__ = ["REPORT_FILE", "FIGURES_DIR", "FigureRecord", "build_report", "make_figures",
           "cautions_text", "fluid_cautions"]

log = logging.getLogger(__name__)

REPORT_FILE = "report.html"
FIGURES_DIR = "figures"
#: how long [s] a report waits for another report that holds the run lock of the folder
REPORT_LOCK_WAIT_S = 120.0
#: How the report reads the store, for the command line to say.
READ_MODE = "under the run lock, from one consistent snapshot of the store"
#: most rows written into the HTML ranking table (the full table is in ranking.csv)
MAX_TABLE_ROWS = 2000

#: Fallback caution text, used only when neither orcscreen.fluids.CAUTIONS nor the README's
#: Cautions section can be read.
_FALLBACK_CAUTIONS = (
    "This is a preliminary screening, not a design. Working fluids can be flammable, toxic or "
    "asphyxiating, and the plant runs under pressure. Check the ASHRAE 34 / ISO 817 safety class, "
    "the flammability, toxicity and global-warming potential of every fluid, and defer to local "
    "codes and to licensed engineers before any decision."
)

#: Meaning of the ASHRAE 34 safety-class letters and digits (ANSI/ASHRAE Standard 34,
#: "Designation and Safety Classification of Refrigerants"; same scheme in ISO 817).
_TOXICITY = {"A": "lower toxicity", "B": "higher toxicity"}
_FLAMMABILITY = {"1": "no flame propagation", "2L": "lower flammability",
                 "2": "flammable", "3": "higher flammability"}


# --------------------------------------------------------------------------- data

@dataclass
class FigureRecord:
    """One chart of the report: where it went, or why it failed."""

    stem: str
    title: str
    caption: str = ""
    png: Path | None = None
    svg: Path | None = None
    error: str | None = None
    group: str = "overview"          # "overview", "sweep" or a case key (detail card)


@dataclass
class _RunData:
    out_dir: Path
    meta: dict
    counts: dict
    table: pd.DataFrame              # ranking_table(rows): all current cases, with rank
    sweep_cols: list[str]
    point: dict                      # reference operating point (swept values), {} without sweep
    top: pd.DataFrame                # best row of each of the top N fluids at the reference point
    details: dict[str, dict | None] = field(default_factory=dict)
    criteria: tuple = ()             # the ranking's criteria (orcscreen.objectives), objective first


#: The row columns the report reads (charts, tables, cards, cautions): the table of all cases
#: is built with these only, from the store in chunks. Every column named in this module,
#: orcscreen.plots, orcscreen.rank and the cautions must be here.
REPORT_COLUMNS = (
    "fluid", "display_name", "coolprop_name", "layout", "status", "reason", "net_power_kW", "turbine_power_kW",
    "pump_power_kW", "aux_power_kW", "heat_input_kW", "thermal_efficiency", "exergy_efficiency",
    "evaporation_pressure_bar", "evaporation_temperature_C", "condensing_pressure_bar",
    "condensing_temperature_C", "superheat_K", "turbine_inlet_pressure_bar", "turbine_inlet_temperature_C",
    "turbine_outlet_temperature_C", "turbine_outlet_quality", "wf_mass_flow_kg_s",
    "source_outlet_temperature_C", "pinch_location", "ua_total_kW_K", "size_parameter_m",
    "volume_ratio", "turbine_efficiency", "turbine_model", "turbine_stages", "volume_ratio_per_stage",
    "warnings", "binding_limit", "sub_atmospheric_condenser",
    "family", "safety_class", "gwp100", "odp", "curve_type",
    "sink_temperature_rise_K", "area_evaporator_m2", "area_condenser_m2", "area_recuperator_m2",
    "condenser_area_basis", "investment_total", "specific_investment_per_kW", "annual_energy_MWh", "lcoe_per_MWh",
    "net_present_value", "capacity_factor", "hours_not_running", "caution",
) + tuple(c.column for c in CRITERIA.values()) + LAYOUT_COLUMNS + rank.fold_columns()


def _load(out_dir: Path, top_n: int,
          columns: Sequence[str] | None = REPORT_COLUMNS,
          store: RunStore | None = None, rank_by: Sequence[str] | None = None) -> _RunData:
    """The report's data from the store (``store``, or the store of ``out_dir`` opened for
    reading); ``columns`` None reads every row column; ``rank_by``: the criteria after the
    objective instead of the stored study's."""
    with (RunStore(out_dir, create=False) if store is None
          else contextlib.nullcontext(store)) as store:
        meta, counts = store.meta(), store.counts()
        rank_by = list(rank_by) if rank_by is not None else None
        table = ranking_table(store.rows(columns=columns), meta, all_columns=columns is None, rank_by=rank_by)
        sweep_cols = rank.sweep_columns(table)
        ok = rank.fold_inactive(rank.feasible(table), objective_of(meta).column)
        point: dict = {}
        at_point = ok
        if sweep_cols and not ok.empty:
            best = ok.loc[pd.to_numeric(ok["net_power_kW"]).idxmax()]
            point = {c: best[c] for c in sweep_cols}
            at_point = _at_point(ok, point)
        # the best layout of each of the best fluids: one card per fluid
        top = (at_point.sort_values("rank", kind="stable")
               .drop_duplicates("fluid", keep="first").head(top_n))
        details = dict(store.iter_details(list(top["case_key"])))
    return _RunData(out_dir, meta, counts, table, sweep_cols, point, top, details, criteria_of(meta, rank_by))


def _at_point(df: pd.DataFrame, point: Mapping) -> pd.DataFrame:
    mask = pd.Series(True, index=df.index)
    for c, v in point.items():
        mask &= df[c] == v
    return df[mask]


# --------------------------------------------------------------------------- figures

#: Chart files the report writes: PNG (embedded in the page) by default, SVG too on request.
FORMATS = ("png",)
FORMATS_WITH_SVG = ("png", "svg")


def _draw(records: list[FigureRecord], fig_dir: Path, stem: str, title: str, caption: str,
          draw: Callable[[], Any], group: str = "overview", formats: Sequence[str] = FORMATS,
          prepare: Callable[[], Any] | None = None) -> None:
    """Queue one chart: its record now, its drawing (``draw``, saved as ``formats``) when
    :func:`_render_all` runs the queue. ``prepare``: the chart's data, computed in this process
    before the drawing processes start (what every one of them would otherwise load again,
    such as the property library for a T-s diagram's dome); ``draw`` must still work without it."""
    records.append(FigureRecord(stem=stem, title=title, caption=caption, group=group))
    _QUEUE.append((draw, fig_dir, stem, tuple(formats), prepare))


#: The charts queued by _draw, in record order: (draw, folder, stem, formats, prepare). A module
#: global so that forked workers find the drawing functions (closures cannot be sent to a process).
_QUEUE: list[tuple[Callable[[], Any], Path, str, tuple[str, ...], Callable[[], Any] | None]] = []


class _Once:
    """A function of no arguments whose first successful value is kept (a failure is raised
    again on the next call, so that it is recorded on the chart that needs it)."""

    def __init__(self, fn: Callable[[], Any]):
        self._fn, self._done, self._value = fn, False, None

    def __call__(self) -> Any:
        if not self._done:
            self._value, self._done = self._fn(), True
        return self._value


def _prepare_all() -> None:
    """Compute the queued charts' data here, before any drawing process is forked; load the
    fonts every chart uses. A failure is left for the chart's drawing to record."""
    for stem, prepare in ((q[2], q[4]) for q in _QUEUE if q[4] is not None):
        try:
            prepare()
        except Exception:  # noqa: BLE001 - recorded when the chart is drawn
            log.debug("data of chart %s not prepared", stem, exc_info=True)
    plots.load_fonts()


#: Processes that draw the charts at most (each chart is independent; Matplotlib draws on one core).
CHART_WORKERS = 4


def _render(i: int) -> tuple[str | None, str | None, str | None]:
    """Draw and save queued chart i: (PNG path, SVG path, error)."""
    draw, fig_dir, stem, formats, _ = _QUEUE[i]
    try:
        ax = draw()
        paths = dict(zip(formats, plots.save_figure(ax.figure, fig_dir, stem, formats=formats)))
        return (str(paths["png"]) if "png" in paths else None, str(paths["svg"]) if "svg" in paths else None, None)
    except Exception as exc:  # noqa: BLE001 - a failing chart must never lose the report
        log.debug("chart %s failed", stem, exc_info=True)
        return None, None, f"{type(exc).__name__}: {exc}"


def _render_all(records: list[FigureRecord], meanwhile: Callable[[], Any] | None = None) -> None:
    """Draw the queued charts into their records: in forked processes (one per core, at most
    CHART_WORKERS) where the platform forks and there is more than one chart and one core,
    else here; the same files either way (Matplotlib's Agg output depends only on the figure).
    ``meanwhile``: work of this process that needs no chart, done while the charts are drawn
    (best effort: an exception there is dropped; the work is to be done again after)."""
    n = len(_QUEUE)
    _prepare_all()
    workers = min(CHART_WORKERS, n, len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1)
    results = None
    if workers > 1:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        try:
            ctx = multiprocessing.get_context("fork")
        except ValueError:
            ctx = None
        if ctx is not None:
            try:
                with ProcessPoolExecutor(workers, mp_context=ctx) as pool:
                    futures = [pool.submit(_render, i) for i in range(n)]
                    _best_effort(meanwhile)
                    meanwhile = None
                    results = [f.result() for f in futures]
            except (OSError, RuntimeError) as exc:  # no processes to be had: draw here
                log.debug("charts drawn in one process: %s", exc)
                results = None
    if results is None:
        results = [_render(i) for i in range(n)]
    _best_effort(meanwhile)
    for record, (png, svg, error) in zip(records, results):  # one record per queued chart, in order
        record.png, record.svg, record.error = (Path(png) if png else None), (Path(svg) if svg else None), error
        if error:
            log.warning("chart %s not drawn: %s", record.stem, error)
    _QUEUE.clear()


def _best_effort(work: Callable[[], Any] | None) -> None:
    if work is None:
        return
    try:
        work()
    except Exception:  # noqa: BLE001 - done again, and raised there, by whoever needs it
        log.debug("work beside the charts failed", exc_info=True)


def _point_note(point: Mapping) -> str:
    if not point:
        return ""
    parts = []
    for c, v in point.items():
        name, _, unit = plots.axis_label(c).partition(" [")
        unit = unit.rstrip("]")
        parts.append(f"{name} = {_fmt(v, 'g')}" + (f" {unit}" if unit not in ("", "-") else ""))
    return "operating point of the best case: " + ", ".join(parts)


def make_figures(data: _RunData, fig_dir: Path, svg: bool = False,
                 meanwhile: Callable[[], Any] | None = None) -> list[FigureRecord]:
    """Draw every chart of the run into ``fig_dir`` (PNG; SVG too when ``svg``); one record per
    chart, failures included.

    Without any feasible case there is nothing to draw (no chart, no error)."""
    formats = FORMATS_WITH_SVG if svg else FORMATS
    draw = functools.partial(_draw, formats=formats)
    refuse_link(fig_dir)
    fig_dir.mkdir(parents=True, exist_ok=True)
    for entry in fig_dir.iterdir():  # the folder is the report's: a link there is dropped,
        if entry.is_symlink():       # never written through
            entry.unlink()
    for old in list(fig_dir.glob("*.png")) + list(fig_dir.glob("*.svg")):
        old.unlink()                 # charts of an earlier report (other top fluids, say)
    records: list[FigureRecord] = []
    ok = rank.feasible(data.table)
    if ok.empty:
        return records
    _QUEUE.clear()
    try:
        _queue_figures(data, fig_dir, draw, records, ok)
        _render_all(records, meanwhile)
    finally:
        _QUEUE.clear()
    return records


def _queue_figures(data: _RunData, fig_dir: Path, draw, records: list[FigureRecord], ok: pd.DataFrame) -> None:
    """Queue every chart of the run (:func:`_draw`), in the report's order."""
    at_point = _at_point(ok, data.point) if data.point else ok
    note = _point_note(data.point)

    draw(records, fig_dir, "ranking", "Net power of every case",
          "Net power of every feasible fluid and layout, best first; beside each bar the net "
          "power, the ASHRAE 34 safety class and the GWP100. The power axis starts just below the "
          "smallest bar shown, not at zero, so that close candidates can be told apart. A layout "
          "whose extra component does nothing (a recuperator that takes no heat) is one bar, its "
          "simpler layout's, marked \"no gain\"." + (f" At the {note}." if note else ""),
          lambda: plots.ranking_chart(at_point))
    if len(data.criteria) > 1:
        draw(records, fig_dir, "criteria", "Best cases by each ranking criterion",
              f"For each ranking criterion ({', '.join(c.name for c in data.criteria)}), its best "
              f"{plots.CRITERIA_BARS} feasible cases, best on top, with the value; a black diamond marks a case "
              "that is Pareto-optimal over all the criteria. A layout without gain is folded into its simpler "
              "layout's bar." + (f" At the {note}." if note else ""),
              lambda: plots.criteria_chart(at_point, data.criteria, money=_money(data.meta)))
    draw(records, fig_dir, "tradeoff_size_parameter", "Net power against turbine size",
          "Each point is a feasible case; filled diamonds are Pareto-optimal (no other case has "
          "more net power with a smaller size parameter); at most "
          f"{plots.TRADEOFF_LABELS} of them are named, most net power first (crowded neighbours unnamed)." + (f" At the {note}." if note else ""),
          lambda: plots.tradeoff_chart(at_point, x="size_parameter_m",
                                       title="Net power against turbine size parameter"))
    draw(records, fig_dir, "tradeoff_ua", "Net power against total UA",
          "Filled diamonds: Pareto-optimal for net power against total UA of the exchangers, "
          f"a first measure of exchanger size; at most {plots.TRADEOFF_LABELS} of them are named, "
          "most net power first (crowded neighbours unnamed)." + (f" At the {note}." if note else ""),
          lambda: plots.tradeoff_chart(at_point, x="ua_total_kW_K",
                                       title="Net power against total UA"))
    money = _money(data.meta)
    if "specific_investment_per_kW" in at_point and np.isfinite(
            pd.to_numeric(at_point["specific_investment_per_kW"], errors="coerce")).any():
        draw(records, fig_dir, "tradeoff_investment", "Net power against specific investment",
              "Filled diamonds: Pareto-optimal for net power against investment per net kW "
              f"({money}; a screening estimate, about ±30 % at best); at most {plots.TRADEOFF_LABELS} "
              "of them are named, most net power first (crowded neighbours unnamed)." + (f" At the {note}." if note else ""),
              lambda: plots.tradeoff_chart(at_point, x="specific_investment_per_kW",
                                           title="Net power against specific investment",
                                           xlabel=f"specific investment [{money} per net kW]"))
    draw(records, fig_dir, "turbine_map", "Turbine map",
          "Turbine isentropic efficiency against size parameter for every feasible case; the fill "
          "shows the volume ratio, the small number the stage count, the rings the best cases by rank. "
          "Small machines and large volume ratios cost efficiency." + (f" At the {note}." if note else ""),
          lambda: plots.turbine_map(at_point, data.top))
    cases = [(r, data.details.get(r["case_key"])) for _, r in data.top.iterrows()]
    if any((d or {}).get("year") for _, d in cases):
        year = (data.meta.get("study") or {}).get("year") or {}
        year_control = year.get("control") or "sliding-pressure"
        chosen_for = ("each design chosen for the most energy over the year (design_for = \"year\"; the case's "
                      "warnings say how far from the design point's optimum)" if year.get("design_for") == "year"
                      else "each design the study's optimum at the design condition")
        draw(records, fig_dir, "year_power", "Net power over the year",
              f"Each top case's fixed design rated at the sink temperatures of the year's bins ({chosen_for}; the "
              "turbine's swallowing capacity sets the heater pressure, a Stodola law per turbine section; exchanger "
              f"areas fixed, their coefficients scaled with the flows; control \"{year_control}\": "
              f"{CONTROLS[year_control].description}). A bin at zero does not run; its reason is in the case's warnings.",
              lambda: plots.year_chart(cases))
        draw(records, fig_dir, "rank_change", "Design-point ranking against the year",
              "Where the best case at the design point is not the best over the year, the two are drawn in colour.",
              lambda: plots.rank_change_chart(at_point))
    draw(records, fig_dir, "landscape", "Optimisation landscape",
          "The optimiser's scan of evaporation temperature for the best fluids; the star is the "
          "optimum, the legend names the limit that binds there.",
          lambda: plots.landscape_chart(cases))

    varied = [c for c in data.sweep_cols if data.table[c].nunique(dropna=True) > 1]
    for c in varied:
        draw(records, fig_dir, plots.file_stem("sweep", c), f"Net power over {c}",
              "Black dashed with diamonds: best case at each point (named where it changes); coloured: the "
              "fluid and layout combinations with the highest net power.",
              lambda c=c: plots.sweep_chart(data.table, c), group="sweep")
    for x, y in combinations(varied, 2):
        draw(records, fig_dir, plots.file_stem("map", x, y), f"Best fluid over {x} and {y}",
              "Best fluid and layout at each operating point, with its net power.",
              lambda x=x, y=y: plots.best_fluid_map(data.table, x, y), group="sweep")

    for n, (_, row) in enumerate(data.top.iterrows(), start=1):
        key = row["case_key"]
        detail = data.details.get(key)
        label = plots.case_label(row)
        stem = plots.file_stem(f"{n:02d}", row["fluid"], row["layout"])

        def need_detail(detail=detail, key=key):
            if not detail:
                raise ValueError(f"no stored detail for case {key}")
            return detail

        draw(records, fig_dir, f"tq_{stem}", f"T-Q diagram, {label}",
              "Temperature against heat duty of each exchanger (hot side solid, cold side "
              "dashed); the bar marks each exchanger's pinch with its value. A narrow exchanger "
              "(a recuperator, usually) is drawn enlarged in an inset as well.",
              lambda row=row, nd=need_detail: plots.tq_diagram(nd(), row), group=key)
        ts_detail = _Once(lambda row=row, nd=need_detail: with_ts_data(nd(), row))
        draw(records, fig_dir, f"ts_{stem}", f"T-s diagram, {label}",
              "Saturation dome, cycle path and numbered states.",
              lambda row=row, ts_detail=ts_detail: plots.ts_diagram(ts_detail(), row), group=key,
              prepare=ts_detail)


# --------------------------------------------------------------------------- cautions

def cautions_text() -> list[str]:
    """Paragraphs of the general cautions: ``orcscreen.fluids.CAUTIONS`` if the fluid catalogue
    provides it, else the README's "Cautions" section, else a short built-in text."""
    try:
        from orcscreen import fluids  # the catalogue module may not exist in every checkout
        text = getattr(fluids, "CAUTIONS", None)
    except Exception:  # noqa: BLE001 - any import problem: fall back to the README
        text = None
    if isinstance(text, (list, tuple)):
        return [str(t) for t in text if str(t).strip()]
    if isinstance(text, str) and text.strip():
        return _line_paragraphs(text)
    readme = Path(__file__).resolve().parent.parent / "README.md"
    if readme.is_file():
        section = _markdown_section(readme.read_text(encoding="utf-8"), "cautions")
        if section:
            return _paragraphs(section)
    return [_FALLBACK_CAUTIONS]


def _markdown_section(text: str, title: str) -> str:
    lines, keep, level = [], False, 0
    for line in text.splitlines():
        if line.startswith("#"):
            hashes = len(line) - len(line.lstrip("#"))
            if keep and hashes <= level:
                break
            if line.lstrip("#").strip().lower().startswith(title):
                keep, level = True, hashes
                continue
        if keep:
            lines.append(line)
    return "\n".join(lines).strip()


def _line_paragraphs(text: str) -> list[str]:
    """Hard-wrapped plain text to paragraphs: a line ending with a full stop ends a paragraph."""
    paras, current = [], []
    for line in text.splitlines():
        if line.strip():
            current.append(line.strip())
        if current and (not line.strip() or line.rstrip().endswith(".")):
            paras.append(" ".join(current))
            current = []
    if current:
        paras.append(" ".join(current))
    return paras


def _paragraphs(text: str) -> list[str]:
    paras, current = [], []
    for line in text.splitlines():
        stripped = line.strip()
        if not stripped or stripped.startswith(("- ", "* ")):
            if current:
                paras.append(" ".join(current))
                current = []
            if stripped:
                current = [stripped[2:]]
            continue
        current.append(stripped)
    if current:
        paras.append(" ".join(current))
    return paras


def fluid_cautions(row: Mapping) -> list[str]:
    """Cautions for one case from its catalogue data (safety class, GWP, ODP) and its result."""
    out = []
    cls = str(row.get("safety_class") or "").strip().upper()
    if cls and cls[0] in _TOXICITY and cls[1:] in _FLAMMABILITY:
        if FROM_COMPONENTS in str(row.get("caution") or ""):  # a mixture without an ASHRAE 34 blend class
            out.append(f"{FROM_COMPONENTS[0].upper()}{FROM_COMPONENTS[1:]}: {cls}, {_TOXICITY[cls[0]]}, "
                       f"{_FLAMMABILITY[cls[1:]]}.")
        else:
            out.append(f"ASHRAE 34 class {cls}: {_TOXICITY[cls[0]]}, {_FLAMMABILITY[cls[1:]]}.")
        if cls[1:] in ("2", "3"):
            out.append("Flammable: hazardous-area classification, leak detection and ignition "
                       "control are required.")
        if cls[0] == "B":
            out.append("Higher toxicity: exposure limits, detection and ventilation govern the "
                       "plant room.")
    else:
        words = (f"{NOT_CLASSIFIED.capitalize()} in ASHRAE 34" if cls in ("NONE", NOT_CLASSIFIED.upper())
                 else f"ASHRAE 34 safety class {UNKNOWN}")
        out.append(f"{words}: treat the fluid as flammable and toxic until its safety data sheet "
                   "says otherwise.")
    gwp = _num(row.get("gwp100"))
    if math.isfinite(gwp):
        out.append(f"GWP100 = {gwp:g}: check the fluorinated-gas rules that apply on site.")
    else:
        out.append(f"GWP100 {UNKNOWN}.")
    odp = _num(row.get("odp"))
    if math.isfinite(odp) and odp > 0:
        out.append(f"ODP = {odp:g}: an ozone-depleting substance, controlled under the "
                   "Montreal Protocol.")
    if _truthy(row.get("sub_atmospheric_condenser")):
        out.append("The condenser runs below atmospheric pressure: air leaks in, and "
                   "non-condensable gases must be purged.")
    return out


# --------------------------------------------------------------------------- formatting

def _num(value) -> float:
    try:
        return float(value)
    except (TypeError, ValueError):
        return math.nan


def _truthy(value) -> bool:
    if isinstance(value, str):
        return value.strip().lower() in ("true", "1", "yes")
    try:
        return bool(value) and not (isinstance(value, float) and math.isnan(value))
    except (TypeError, ValueError):
        return False


def _missing(value) -> bool:
    if value is None or value is pd.NA:
        return True
    return isinstance(value, float) and math.isnan(value)


def _fmt(value, spec: str = ".2f") -> str:
    if _missing(value):
        return ""
    if isinstance(value, (bool,)):
        return "yes" if value else "no"
    if isinstance(value, (int, float)) or hasattr(value, "__float__"):
        try:
            return format(float(value), spec)
        except (TypeError, ValueError):
            pass
    return str(value)


def _sort_key(value) -> str:
    """Value for a cell's data-sort attribute: full-precision number, or the text."""
    if _missing(value):
        return ""
    try:
        return repr(float(value))
    except (TypeError, ValueError):
        return str(value)


def _e(value) -> str:
    return html.escape("" if value is None else str(value), quote=True)


#: Catalogue columns shown in words where a value is missing ("unknown", "not classified").
_CATALOGUE_SHOWN = {"safety_class": safety_class_text, "gwp100": gwp_text}

#: Ranking-table columns: (column, header, format, what the header means). Sweep columns come
#: first, the study's objective after the layout when it is not the net power. Format "%" shows a
#: fraction in per cent; "" is text.
_RANK_COLUMNS = [
    ("rank", "rank", "d", "rank within the operating point, as in ranking.csv"),
    ("display_name", "fluid", "", "working fluid"),
    ("layout", "layout", "", "cycle layout (a layout without gain is folded into it, see the note)"),
    ("net_power_kW", "net power [kW]", ".1f", "net electrical power"),
    (PARETO_COLUMN, "Pareto", "", "Pareto-optimal over the ranking's criteria: no other case at the operating "
     "point is at least as good in every criterion and better in one"),
    ("thermal_efficiency", "thermal eff. [%]", "%", "thermal efficiency: net power / heat input"),
    ("turbine_inlet_pressure_bar", "high p [bar]", ".2f",
     "highest cycle pressure: evaporation pressure, or the supercritical heater's"),
    ("condensing_pressure_bar", "cond. p [bar]", ".3f", "condensing pressure"),
    ("size_parameter_m", "SP [m]", ".3f", "turbine size parameter (Macchi and Perdichizzi 1981)"),
    ("volume_ratio", "VR [-]", ".1f", "turbine volume ratio"),
    ("turbine_stages", "stages", ".0f", "turbine stages, where the turbine model gives them"),
    ("turbine_efficiency", "turbine eff. [-]", ".3f", "turbine isentropic efficiency"),
    ("safety_class", "safety class", "", "ANSI/ASHRAE 34 safety class"),
    ("gwp100", "GWP100", "g", "global-warming potential over 100 years"),
    ("caution", "caution", "", "in plain words; the cards and the Cautions section say more"),
    ("pinch_location", "evaporator pinch", "", "where the evaporator pinch sits"),
    ("warnings", "warnings", "", "soft limits passed; the result stands"),
]
#: Ranking-table columns whose text wraps.
_WRAP_COLUMNS = ("layout", "caution", "pinch_location", "warnings")


def _table(headers: Sequence[tuple], rows: Iterable[Sequence[tuple]],
           table_id: str, caption: str = "", wrap: Sequence[int] = ()) -> str:
    """A sortable table. ``headers``: (text, numeric[, what it means]); each row cell: (shown
    text, sort key[, tooltip]); ``wrap``: indices of columns of long text that may wrap."""
    head = "".join(
        f'<th scope="col" data-type="{"num" if h[1] else "text"}" tabindex="0" '
        f'title="{_e((h[2] + "; ") if len(h) > 2 and h[2] else "")}click to sort">{_e(h[0])}</th>'
        for h in headers)
    body = []
    for cells in rows:
        tds = []
        for i, cell in enumerate(cells):
            shown, key = cell[0], cell[1]
            attr = "" if _missing(key) or key == "" else f' data-sort="{_e(key)}"'
            if i in wrap:
                attr += ' class="wrap"'
            if len(cell) > 2 and cell[2]:
                attr += f' title="{_e(cell[2])}"'
            tds.append(f"<td{attr}>{_e(shown)}</td>")
        body.append("<tr>" + "".join(tds) + "</tr>")
    cap = f"<caption>{_e(caption)}</caption>" if caption else ""
    return (f'<div class="scroll"><table class="sortable" id="{_e(table_id)}">{cap}'
            f"<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table></div>")


def _kv_table(pairs: Iterable[tuple[str, Any]], cls: str = "kv") -> str:
    rows = "".join(f"<tr><th scope=\"row\">{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in pairs)
    return f'<table class="{cls}"><tbody>{rows}</tbody></table>'


def _figure_html(rec: FigureRecord) -> str:
    if rec.error or rec.png is None:
        return (f'<figure class="chart failed"><figcaption><strong>{_e(rec.title)}</strong>: '
                f"this chart could not be drawn ({_e(rec.error)}). The results are not "
                "affected.</figcaption></figure>")
    data = base64.b64encode(rec.png.read_bytes()).decode("ascii")
    files = f"figures/{rec.png.name}, figures/{rec.svg.name}" if rec.svg else rec.png.name
    return (f'<figure class="chart" id="fig-{_e(rec.stem)}"><img alt="{_e(rec.title)}" '
            f'src="data:image/png;base64,{data}"><figcaption><strong>{_e(rec.title)}.</strong> '
            f"{_e(rec.caption)} <span class=\"files\">({_e(files)})</span></figcaption></figure>")


# --------------------------------------------------------------------------- sections

def _money(meta: Mapping) -> str:
    """The money of the cost columns: "EUR of 2023"."""
    econ = (meta.get("study") or {}).get("economics") or {}
    return f"{econ.get('currency', '?')} of {econ.get('cost_year', '?')}"


def _cost_basis(meta: Mapping) -> str:
    """What the cost columns are: model, money, annuity, and their class of accuracy."""
    econ = (meta.get("study") or {}).get("economics") or {}
    if not econ:
        return "not computed"
    return (f"{econ.get('cost_model')} in {_money(meta)}; discount rate {econ.get('discount_rate')}, "
            f"{econ.get('lifetime_years')} years, O&M {econ.get('om_fraction')} of the investment a year, "
            f"{econ.get('full_load_hours')} full-load hours. A screening estimate (a study-class estimate), "
            "about ±30 % at best (Lemmens, Energies 9 (2016) 485): for comparing candidates, never a quotation")


def _summary(data: _RunData) -> str:
    meta = data.meta
    counts = {s: int(data.counts.get(s, 0)) for s in ("ok", "infeasible", "failed")}
    counts.update({s: int(n) for s, n in data.counts.items() if s not in counts})
    table = data.table
    pairs = [
        ("study", meta.get("study_name") or (meta.get("study") or {}).get("study", {}).get("name", "")),
        ("study hash", meta.get("study_hash", "")),
        ("run started", meta.get("created_at", "")),
        ("last updated", meta.get("updated_at", "")),
        ("orcscreen version", meta.get("orcscreen_version", "")),
        ("CoolProp version", meta.get("coolprop_version", "")),
        ("cases", f"{len(table)} (" + ", ".join(f"{n} {s}" for s, n in counts.items()) + ")"),
        ("fluids", table["fluid"].nunique() if "fluid" in table else 0),
        ("layouts", ", ".join(map(str, pd.unique(table["layout"]))) if "layout" in table else ""),
        ("ranked by", "; ".join(f"{c.label} ({c.direction})" for c in (data.criteria or (objective_of(meta),)))),
        ("costs", _cost_basis(meta)),
    ]
    for c in data.sweep_cols:
        values = sorted(pd.unique(table[c].dropna()))
        pairs.append((f"swept: {plots.axis_label(c)}", ", ".join(_fmt(v, "g") for v in values)))
    parts = ['<section id="summary"><h2>Study: metadata, inputs and method</h2>', _kv_table(pairs)]
    status_counts = "".join(f'<li><span class="badge {s}">{_e(s)}</span> {n}</li>'
                            for s, n in counts.items())
    parts.append(f'<ul class="counts" id="counts">{status_counts}</ul>')
    parts.append(_left_out_paragraph(meta))
    parts.append(_inputs(meta))
    parts.append(_method(meta))
    parts.append("</section>")
    return "".join(parts)


def _method(meta: Mapping) -> str:
    """How the results were obtained, in a few lines (the README's method section has it all)."""
    study = meta.get("study") or {}
    machines = study.get("machines") or {}
    exchangers = study.get("exchangers") or {}
    objective = objective_of(dict(meta))
    items = [
        f"Each case (fluid, layout, operating point) is optimised for {objective.label} over the "
        "layout's free variables, within the study's pinch, pressure, temperature and turbine limits; "
        "a case without a feasible cycle keeps its reason.",
        f"Pinches: evaporator {_fmt(exchangers.get('pinch_evaporator_K'), 'g')} K, condenser "
        f"{_fmt(exchangers.get('pinch_condenser_K'), 'g')} K; turbine efficiency model "
        f"{machines.get('turbine_model', '?')}; fluid properties from CoolProp "
        f"{meta.get('coolprop_version', '')}.",
        f"Ranking by {objective.label} within each operating point, ties by fluid, then layout. A layout "
        "whose extra component does nothing (a recuperator that takes no heat) gives its simpler "
        "layout's result: tables and charts show it once, with a note; ranking.csv keeps both rows.",
        "The model, its assumptions and its sources: README, \"What a case computes\".",
    ]
    year = study.get("year") or {}
    if year.get("file"):
        control = year.get("control") or "sliding-pressure"
        items.insert(-1, (
            f"A year of operation ({year.get('file')}, bins of {_fmt(year.get('bin_width_K'), 'g')} K): each design "
            + ("chosen for the most energy over the year" if year.get("design_for") == "year"
               else "optimised at the design sink temperature")
            + " fixes its hardware (turbine swallowing capacity by Stodola's ellipse law per section, part-load "
            "efficiency by Pili et al. 2019, exchanger areas with film coefficients scaled as flow^0.8); each bin's "
            f"operating point is solved with that hardware under control \"{control}\": "
            f"{CONTROLS[control].description}. A bin where no operating point exists, or a limit still breaks, "
            "counts zero with its reason (hours not running)."))
    return '<h3 id="method">Method</h3><ul>' + "".join(f"<li>{_e(t)}</li>" for t in items) + "</ul>"


def _left_out_paragraph(meta: Mapping) -> str:
    """The fluids the [fluids] filters left out, with reasons (outputs.left_out_fluids, the
    list of run-info.json); empty when none was left out."""
    left = left_out_fluids(dict(meta))
    if not left:
        return ""
    items = "".join(f"<li>{_e(item['display_name'])}: {_e(item['reason'])}</li>" for item in left)
    return (f'<div id="left-out"><p class="note">Left out by the [fluids] filters ({len(left)} '
            f"fluid{'s' if len(left) != 1 else ''}):</p><ul class=\"note\">{items}</ul></div>")


def _schema_defaults() -> dict[str, Any]:
    """Dotted path -> fixed default of every study key, from the study schema."""
    try:
        from orcscreen.study import json_schema
        schema = json_schema()
    except Exception:  # noqa: BLE001 - the summary must not depend on the study module
        return {}
    out: dict[str, Any] = {}
    defs = schema.get("$defs", {})
    for section, spec in schema.get("properties", {}).items():
        ref = spec.get("$ref") or next(
            (a.get("$ref") for a in spec.get("allOf", []) if "$ref" in a), None)
        if ref:
            fields = defs.get(ref.rsplit("/", 1)[-1], {}).get("properties", {})
            for key, field_spec in fields.items():
                if "default" in field_spec:
                    out[f"{section}.{key}"] = field_spec["default"]
        elif "default" in spec:
            out[section] = spec["default"]
    return out


def _defaults_used(meta: Mapping) -> set[str] | None:
    """Dotted paths of the study keys filled by default, if the store records them."""
    for key in ("defaults_used", "study_defaults"):
        found = meta.get(key)
        if isinstance(found, (list, tuple, set)):
            return {str(p) for p in found}
    return None


def _is_default(path: str, value: Any, recorded: set[str] | None, schema: Mapping) -> bool:
    if recorded is not None:
        return path in recorded
    return schema.get(path) is not None and schema[path] == value


def _shown(value: Any) -> str:
    if value is None:
        return "none"
    if isinstance(value, (list, tuple)):
        return ", ".join(map(str, value)) or "(empty)"
    if isinstance(value, Mapping):
        return ", ".join(f"{k} = {_shown(v)}" for k, v in value.items()) or "(none)"
    return _fmt(value, "g")


def _inputs(meta: Mapping) -> str:
    study = meta.get("study")
    if not isinstance(study, Mapping) or not study:
        return "<p>The run store holds no copy of the study inputs.</p>"
    recorded = _defaults_used(meta)
    schema = _schema_defaults() if recorded is None else {}
    blocks, loose = [], []
    for section, body in study.items():
        if not isinstance(body, Mapping) or not body or section == "sweep":
            loose.append((section, body))
            continue
        rows = []
        for key, value in body.items():
            tag = (' <span class="dflt">default</span>'
                   if _is_default(f"{section}.{key}", value, recorded, schema) else "")
            rows.append(f'<tr><th scope="row"><code>{_e(key)}</code></th>'
                        f"<td>{_e(_shown(value))}{tag}</td></tr>")
        blocks.append(f'<div class="inputs"><h4>[{_e(section)}]</h4><table class="kv small">'
                      f"<tbody>{''.join(rows)}</tbody></table></div>")
    if loose:
        extra = "".join(f'<tr><th scope="row"><code>{_e(k)}</code></th><td>{_e(_shown(v))}</td></tr>'
                        for k, v in loose)
        blocks.append(f'<div class="inputs"><h4>other</h4><table class="kv small"><tbody>{extra}'
                      "</tbody></table></div>")
    note = ('Keys marked <span class="dflt">default</span> were not set in the study file.'
            if recorded is not None else
            'Keys marked <span class="dflt">default</span> hold the fixed default of the study '
            "schema; defaults that depend on the source kind are not marked.")
    return ('<details open><summary>Inputs (every key, defaults filled in)</summary>'
            f'<div class="input-grid">{"".join(blocks)}</div><p class="note">{note}</p></details>')


def _rank_columns(meta: Mapping) -> list[tuple[str, str, str, str]]:
    """The ranking table's columns for this study: :data:`_RANK_COLUMNS`, with the study's
    objective after the layout when it is not the net power."""
    columns = list(_RANK_COLUMNS)
    objective = objective_of(dict(meta))
    if objective.column != "net_power_kW":
        unit = plots.axis_label(objective.column).partition(" [")[2].rstrip("]")
        money = _money(meta) if objective.needs_costs else ""
        header = f"{objective.label} [{money or unit}]" if (money or unit) not in ("", "-") else objective.label
        columns.insert(3, (objective.column, header, ".4g", "the study's objective: the ranking's order"))
    return columns


def _cell(row: Mapping, col: str, fmt: str) -> tuple:
    """One ranking-table cell: (shown text, sort key[, tooltip])."""
    value = row.get(col)
    if col == "display_name":
        value = value or row.get("fluid")
    if col == "layout" and row.get(rank.FOLDED):
        return (f"{value} ({row[rank.FOLDED]}: no gain)", value, row.get(rank.FOLD_NOTE))
    if col == "caution":
        text = short_caution(row)
        return (text, text)
    if col == PARETO_COLUMN:
        text = "yes" if _truthy(value) else ""
        return (text, text)
    if col in _CATALOGUE_SHOWN:
        return (_CATALOGUE_SHOWN[col](value), _sort_key(value))
    if fmt == "":
        return (_fmt(value), _fmt(value))
    if fmt == "%":
        return (_fmt(_num(value) * 100.0, ".2f"), _sort_key(value))
    return (_fmt(value, fmt if fmt != "d" else ".0f"), _sort_key(value))


def _ranking_section(data: _RunData, overview: list[FigureRecord]) -> str:
    ok = rank.fold_inactive(rank.feasible(data.table), objective_of(data.meta).column)
    ok = ok.sort_values([*data.sweep_cols, "rank"], kind="stable") if data.sweep_cols else \
        ok.sort_values("rank", kind="stable")
    shown = ok.head(MAX_TABLE_ROWS)
    columns = _rank_columns(data.meta)
    headers = [(plots.axis_label(c), True, "swept study value") for c in data.sweep_cols]
    headers += [(h, fmt != "", what) for _, h, fmt, what in columns]
    rows = []
    for _, r in shown.iterrows():
        cells = [(_fmt(r[c], "g"), _sort_key(r[c])) for c in data.sweep_cols]
        cells += [_cell(r, col, fmt) for col, _, fmt, _ in columns]
        rows.append(cells)
    cut = len(ok) - len(shown)
    folded = int((ok[rank.FOLDED] != "").sum()) if rank.FOLDED in ok else 0
    caption = (f"Feasible cases, ranked by {objective_of(data.meta).label} within each operating point. Click a "
               "header to sort." +
               (f" {folded} row{'s' if folded != 1 else ''} stand{'' if folded != 1 else 's'} for a layout "
                "whose extra component does nothing (marked \"no gain\": the same result as the simpler "
                "layout); ranking.csv has both rows." if folded else "") +
               (f" The first {len(shown)} of {len(ok)} rows; all are in ranking.csv." if cut > 0 else ""))
    if data.criteria and len(data.criteria) > 1:
        caption += (" Pareto: optimal over " + ", ".join(c.label for c in data.criteria) + " (compared at the "
                    "6 significant digits of ranking.csv).")
    figs = "".join(_figure_html(r) for r in overview)
    empty = "<p>No case is feasible.</p>" if ok.empty else ""
    names = [c for c, _, _, _ in columns]
    wrap = tuple(len(data.sweep_cols) + names.index(c) for c in _WRAP_COLUMNS if c in names)
    return ('<section id="ranking"><h2>Ranking</h2>' + empty +
            (_table(headers, rows, "ranking-table", caption, wrap=wrap) if not ok.empty else "") +
            "</section>" + _criteria_section(data, ok) + (f'<section id="charts"><h2>Charts</h2><div class="charts">{figs}</div></section>'
                            if figs else ""))


def _criteria_section(data: _RunData, ok: pd.DataFrame) -> str:
    """For each criterion after the objective, a small table of its best cases (folded as the
    ranking table; the best over all operating points, the swept values shown, as the console
    lists them): rank by that criterion within its point,
    fluid, layout, value, net power, Pareto mark. Empty with the objective alone."""
    if ok.empty or len(data.criteria) < 2:
        return ""
    blocks = []
    for c in data.criteria[1:]:
        col = rank_column(c)
        if col not in ok or c.column not in ok:
            continue
        values = pd.to_numeric(ok[c.column], errors="coerce")
        best = by_criterion(ok[np.isfinite(values)], c).head(CRITERION_TOP)  # as the console's
        unit = plots.axis_label(c.column).partition(" [")[2].rstrip("]")
        if c.needs_costs:  # money columns: the study's currency (per kW, per MWh)
            per = c.column.rsplit("_per_", 1)[1] if "_per_" in c.column else ""
            unit = _money(data.meta) + (f" per {per}" if per else "")
        unit = "%" if c.fmt == "%" else unit
        header = f"{c.label} [{unit}]" if unit not in ("", "-") else c.label
        headers = [(f"rank by {c.name}", True, f"{col} in ranking.csv")]
        headers += [(plots.axis_label(s), True, "swept study value") for s in data.sweep_cols]
        headers += [("fluid", False), ("layout", False), (header, True, c.label),
                    ("net power [kW]", True), ("Pareto", False)]
        rows = []
        for _, r in best.iterrows():
            cells = [(_fmt(r[col], ".0f"), _sort_key(r[col]))]
            cells += [(_fmt(r[s], "g"), _sort_key(r[s])) for s in data.sweep_cols]
            cells += [_cell(r, "display_name", ""), _cell(r, "layout", ""),
                      (criterion_value_text(c, r[c.column]), _sort_key(r[c.column])),
                      _cell(r, "net_power_kW", ".1f"), _cell(r, PARETO_COLUMN, "")]
            rows.append(cells)
        caption = f"Best {len(best)} by {c.label} ({c.direction})."
        blocks.append(f'<div class="criterion" data-criterion="{_e(c.name)}">'
                      + _table(headers, rows, f"top-{c.name}", caption) + "</div>")
    if not blocks:
        return ""
    return ('<section id="criteria"><h2>Best by each criterion</h2><div class="criteria">'
            + "".join(blocks) + "</div></section>")


def short_caution(row: Mapping) -> str:
    """A case's caution in plain words: the row's ``caution`` column (orcscreen.fluids.caution_text,
    the one rule), or for a run stored before that column the same function on the catalogue's
    facts of the row's fluid."""
    given = row.get("caution")
    if isinstance(given, str) and given.strip():
        return given.strip()
    from orcscreen import fluids

    try:
        info = fluids.get_info(str(row.get("coolprop_name") or row.get("fluid")))
    except ValueError:
        info = None
    return fluids.caution_text(info, row)


def _study_line(data: _RunData) -> str:
    """The study in one line: source, sink, fluids and layouts, cases, objective, sweeps."""
    study = data.meta.get("study") or {}
    source, sink = study.get("source") or {}, study.get("sink") or {}
    table = data.table
    parts = []
    if source:
        parts.append(f"{source.get('kind', '?')} source {_fmt(source.get('inlet_temperature_C'), 'g')} °C, "
                     f"{_fmt(source.get('mass_flow_kg_s'), 'g')} kg/s")
    if sink:
        parts.append(f"{sink.get('kind', '?')} sink {_fmt(sink.get('inlet_temperature_C'), 'g')} °C")
    n_fluids = table["fluid"].nunique() if "fluid" in table else 0
    layouts = ", ".join(map(str, pd.unique(table["layout"]))) if "layout" in table else ""
    parts.append(f"{n_fluids} fluids × {layouts}")
    counts = {s: int(data.counts.get(s, 0)) for s in ("ok", "infeasible", "failed")}
    parts.append(f"{len(table)} cases (" + ", ".join(f"{n} {s}" for s, n in counts.items() if n) + ")")
    for c in data.sweep_cols:
        values = table[c].nunique(dropna=True)
        if values > 1:
            parts.append(f"swept: {plots.axis_label(c).split(' [')[0]} ({values} values)")
    parts.append(f"ranked by {objective_of(data.meta).label}")
    return " · ".join(parts)


#: Candidates named at the top of the page.
CANDIDATES = 3


def _candidates(data: _RunData) -> str:
    """The best fluids (each in its best layout, at the best case's operating point) in one line
    each: the answer before the detail."""
    if data.top.empty:
        return '<p id="candidates">No feasible case: see the infeasible and failed cases below.</p>'
    objective = objective_of(data.meta)
    items = []
    for n, (_, r) in enumerate(data.top.head(CANDIDATES).iterrows(), start=1):
        value = ""
        if objective.column != "net_power_kW":
            value = f", {objective.label} {_fmt(r.get(objective.column), '.4g')}"
        caution = short_caution(r)
        folded = f" ({r.get(rank.FOLDED)}: no gain)" if r.get(rank.FOLDED) else ""
        items.append(
            f'<li><a href="#card-{n}"><strong>{_e(r.get("display_name") or r.get("fluid"))}</strong></a> · '
            f"{_e(r.get('layout'))}{_e(folded)}: {_fmt(r.get('net_power_kW'), '.1f')} kW net{_e(value)}; "
            f"class {_e(safety_class_text(r.get('safety_class')))}, GWP100 {_e(gwp_text(r.get('gwp100')))}"
            + (f"; <em>{_e(caution)}</em>" if caution else "") + "</li>")
    point = _point_note(data.point)
    return ('<div id="candidates"><h2>Recommended candidates</h2>'
            f'<ol class="cands">{"".join(items)}</ol>'
            + (f'<p class="note">At the {_e(point)}.</p>' if point else "") + "</div>")


def _card(n: int, row: Mapping, detail: Mapping | None, figs: list[FigureRecord]) -> str:
    label = plots.case_label(row)
    parts = [f'<article class="card" id="card-{n}"><h3>{n}. {_e(label)} '
             f'<span class="power">{_fmt(row.get("net_power_kW"), ".1f")} kW net</span></h3>']
    facts = [
        ("CoolProp name", row.get("coolprop_name") or row.get("fluid")), ("family", row.get("family")),
        ("curve type", row.get("curve_type")),
        ("safety class (ASHRAE 34)", safety_class_text(row.get("safety_class"))),
        ("GWP100", gwp_text(row.get("gwp100"))),
        ("ODP", _fmt(row.get("odp"), "g") or UNKNOWN),
        ("thermal efficiency", _fmt(row.get("thermal_efficiency"), ".4f")),
        ("exergy efficiency", _fmt(row.get("exergy_efficiency"), ".4f")),
        ("heat input [kW]", _fmt(row.get("heat_input_kW"), ".1f")),
        ("source outlet T [°C]", _fmt(row.get("source_outlet_temperature_C"), ".1f")),
        ("working-fluid flow [kg/s]", _fmt(row.get("wf_mass_flow_kg_s"), ".3f")),
        ("binding limit", row.get("binding_limit") or "none"),
    ]
    turbine = [
        ("turbine power [kW]", _fmt(row.get("turbine_power_kW"), ".1f")),
        ("pump power [kW]", _fmt(row.get("pump_power_kW"), ".1f")),
        ("auxiliary power [kW]", _fmt(row.get("aux_power_kW"), ".1f")),
        ("turbine efficiency [-]", _fmt(row.get("turbine_efficiency"), ".3f")),
        ("turbine model", row.get("turbine_model") or ""),
        ("turbine stages", _fmt(row.get("turbine_stages"), ".0f") or "not modelled"),
        ("volume ratio per stage [-]", _fmt(row.get("volume_ratio_per_stage"), ".2f") or "not modelled"),
        ("size parameter SP [m]", _fmt(row.get("size_parameter_m"), ".4f")),
        ("volume ratio [-]", _fmt(row.get("volume_ratio"), ".2f")),
        ("inlet / outlet T [°C]", f"{_fmt(row.get('turbine_inlet_temperature_C'), '.1f')} / "
                                  f"{_fmt(row.get('turbine_outlet_temperature_C'), '.1f')}"),
        ("outlet quality [-]", _fmt(row.get("turbine_outlet_quality"), ".3f") or "superheated"),
        ("turbine inlet p [bar]", _fmt(row.get("turbine_inlet_pressure_bar"), ".2f")),
        *[(plots.axis_label(c), _fmt(row.get(c), ".4g")) for c in LAYOUT_COLUMNS if _fmt(row.get(c), ".4g")],
        ("evaporation p / T", f"{_fmt(row.get('evaporation_pressure_bar'), '.2f')} bar / "
                              f"{_fmt(row.get('evaporation_temperature_C'), '.1f')} °C"
         if _fmt(row.get("evaporation_temperature_C"), ".1f") else "none (supercritical heater)"),
        ("condensing p / T", f"{_fmt(row.get('condensing_pressure_bar'), '.3f')} bar / "
                             f"{_fmt(row.get('condensing_temperature_C'), '.1f')} °C"),
    ]
    notes = [w for w in str(row.get("warnings") or "").split("; ") if w and w != "nan"]
    if notes:
        parts.append('<div class="warnings"><strong>Warnings</strong> (soft limits passed; the result stands):<ul>' +
                     "".join(f"<li>{_e(w)}</li>" for w in notes) + "</ul></div>")
    parts.append('<div class="cols"><div><h4>Fluid and cycle</h4>' + _kv_table(facts) +
                 '</div><div><h4>Turbine and pump</h4>' + _kv_table(turbine) + "</div></div>")
    if detail:
        states = detail.get("states") or []
        srows = "".join(
            f"<tr><td>{_e(s.get('name'))}</td><td>{_e(s.get('label'))}</td>"
            f"<td>{_fmt(s.get('T_C'), '.2f')}</td><td>{_fmt(s.get('p_bar'), '.3f')}</td>"
            f"<td>{_fmt(s.get('h_kJ_kg'), '.2f')}</td><td>{_fmt(s.get('s_kJ_kgK'), '.4f')}</td>"
            f"<td>{_fmt(s.get('q'), '.3f') or '–'}</td></tr>" for s in states)
        parts.append('<h4>States</h4><table class="grid"><thead><tr><th>state</th><th>where</th>'
                     "<th>T [°C]</th><th>p [bar]</th><th>h [kJ/kg]</th><th>s [kJ/(kg·K)]</th>"
                     f"<th>quality [-]</th></tr></thead><tbody>{srows}</tbody></table>")
        xrows = "".join(
            f"<tr><td>{_e(name)}</td><td>{_fmt(hx.get('duty_kW'), '.1f')}</td>"
            f"<td>{_fmt(hx.get('pinch_K'), '.2f')}</td>"
            f"<td>{_fmt(hx.get('pinch_T_hot_C'), '.1f')} / {_fmt(hx.get('pinch_T_cold_C'), '.1f')}</td>"
            f"<td>{_fmt(hx.get('ua_kW_K'), '.2f')}</td></tr>"
            for name, hx in (detail.get("exchangers") or {}).items() if hx)
        parts.append('<h4>Exchangers</h4><table class="grid"><thead><tr><th>exchanger</th>'
                     "<th>duty [kW]</th><th>pinch [K]</th><th>T at pinch, hot / cold [°C]</th>"
                     f"<th>UA [kW/K]</th></tr></thead><tbody>{xrows}</tbody></table>")
        loc = row.get("pinch_location")
        if loc:
            parts.append(f'<p class="note">Evaporator pinch location: {_e(loc)}.</p>')
    else:
        parts.append("<p>No detail is stored for this case.</p>")
    parts.append("<h4>Cautions for this fluid</h4><ul>" +
                 "".join(f"<li>{_e(c)}</li>" for c in fluid_cautions(row)) + "</ul>")
    parts.append('<div class="charts">' + "".join(_figure_html(f) for f in figs) + "</div>")
    parts.append("</article>")
    return "".join(parts)


def _problems_section(data: _RunData) -> str:
    bad = data.table[data.table["status"] != "ok"] if "status" in data.table else data.table
    if bad.empty:
        return ('<section id="problems"><h2>Infeasible and failed cases</h2>'
                "<p>None: every case gave a feasible cycle.</p></section>")
    headers = [(plots.axis_label(c), True) for c in data.sweep_cols]
    headers += [("fluid", False), ("layout", False), ("status", False), ("reason", False)]
    rows = []
    for _, r in bad.iterrows():
        cells = [(_fmt(r[c], "g"), _sort_key(r[c])) for c in data.sweep_cols]
        name = r.get("display_name") or r.get("fluid")
        cells += [(name, name), (r.get("layout"), r.get("layout")),
                  (r.get("status"), r.get("status")), (r.get("reason") or "", r.get("reason") or "")]
        rows.append(cells)
    return ('<section id="problems"><h2>Infeasible and failed cases</h2>' +
            _table(headers, rows, "problems-table",
                   f"{len(bad)} cases without a feasible result, with the reason recorded.",
                   wrap=(len(headers) - 1,)) +
            "</section>")


def _chart_problems(records: list[FigureRecord]) -> str:
    failed = [r for r in records if r.error]
    if not failed:
        return ""
    items = "".join(f"<li><strong>{_e(r.title)}</strong> ({_e(r.stem)}): {_e(r.error)}</li>"
                    for r in failed)
    return ('<section id="chart-problems"><h2>Charts that could not be drawn</h2>'
            "<p>These failures touch only the charts; every computed result above and in "
            f"ranking.csv is complete.</p><ul>{items}</ul></section>")


def _cautions_section() -> str:
    paras = "".join(f"<p>{_e(p)}</p>" for p in cautions_text())
    return f'<section id="cautions"><h2>Cautions</h2>{paras}</section>'


# --------------------------------------------------------------------------- page

_CSS = """
:root{--ink:#1a1a1a;--muted:#555;--line:#d0d0d0;--band:#f4f6f8;--accent:#0072B2}
*{box-sizing:border-box}
body{font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;
 color:var(--ink);margin:0 auto;max-width:1320px;padding:0 1rem 3rem}
header{border-bottom:3px solid var(--accent);padding:.6rem 0 .3rem;margin-bottom:.3rem}
h1{font-size:1.4rem;margin:0}h2{font-size:1.3rem;margin:2rem 0 .6rem;border-bottom:1px solid var(--line)}
#candidates h2,#ranking h2{font-size:1.1rem;margin:.6rem 0 .2rem}
ol.cands{margin:.2rem 0 .2rem;padding-left:1.6rem}ol.cands li{margin:0}
header .sub{font-size:.9rem}
h3{font-size:1.1rem;margin:.2rem 0 .6rem}h4{font-size:.95rem;margin:1rem 0 .3rem}
.sub{color:var(--muted)}.note{color:var(--muted);font-size:.9rem}
.banner{background:#fff4e0;border-left:4px solid #E69F00;padding:.2rem .8rem;margin:.4rem 0 0}
table{border-collapse:collapse;font-size:.85rem}
th,td{padding:.25rem .5rem;border-bottom:1px solid var(--line);text-align:left;vertical-align:top}
table.sortable td[data-sort],table.grid td{font-variant-numeric:tabular-nums}
table.sortable thead th{position:sticky;top:0;background:var(--band);cursor:pointer;white-space:nowrap;user-select:none}
table.sortable thead th:hover{background:#e4e9ee}
table.sortable th[aria-sort=ascending]::after{content:" \\25B2"}
table.sortable th[aria-sort=descending]::after{content:" \\25BC"}
table.sortable caption,table caption{caption-side:top;text-align:left;color:var(--muted);padding:.3rem 0}
table.kv th{font-weight:600;color:var(--muted);width:15rem}
.scroll{overflow:auto;max-height:38rem;border:1px solid var(--line)}
.counts{list-style:none;padding:0;display:flex;gap:1rem}
.badge{display:inline-block;padding:.05rem .5rem;border-radius:.8rem;color:#fff;font-size:.8rem}
.badge.ok{background:#009E73}.badge.infeasible{background:#E69F00;color:#000}.badge.failed{background:#D55E00}
.card{border:1px solid var(--line);border-radius:6px;padding:.8rem 1rem;margin:1rem 0;break-inside:avoid}
.card .power{color:var(--accent);font-weight:600;margin-left:.6rem}
.cols{display:flex;flex-wrap:wrap;gap:2rem}
.charts{display:flex;flex-wrap:wrap;gap:1rem}
.warnings{border-left:4px solid #b35900;background:#fff6ec;padding:.3rem .8rem;margin:.5rem 0}
figure.chart{margin:0;flex:1 1 520px;max-width:100%}
figure.chart img{width:100%;height:auto;border:1px solid var(--line)}
figure.failed{border:1px dashed #D55E00;padding:.5rem}
figcaption{font-size:.85rem;color:var(--muted)}.files{font-family:monospace;font-size:.75rem}
code{font-size:.85em}
table.sortable td{white-space:nowrap}table.sortable td.wrap{white-space:normal;overflow-wrap:anywhere;min-width:7rem;max-width:22rem}
.criteria{display:flex;flex-wrap:wrap;gap:0 1.2rem}.criteria table{font-size:.78rem}
#criteria h2{font-size:1.1rem;margin:.6rem 0 .2rem}
#ranking-table{font-size:.78rem;width:100%}#ranking-table thead th{white-space:normal;vertical-align:bottom}
#ranking-table th,#ranking-table td{padding:.2rem .3rem}
.input-grid{display:flex;flex-wrap:wrap;gap:.4rem 1.6rem;align-items:flex-start}
.inputs h4{margin:.6rem 0 .1rem}table.small{font-size:.8rem}table.small th{width:auto;padding-right:1rem}
.dflt{font-size:.7rem;color:var(--muted);border:1px solid var(--line);border-radius:.6rem;padding:0 .35rem}
footer{margin-top:3rem;color:var(--muted);font-size:.8rem;border-top:1px solid var(--line)}
@media print{.scroll{max-height:none;overflow:visible;border:0}table.sortable thead th{position:static}
 body{max-width:none;font-size:10pt}figure.chart{flex-basis:100%}}
"""

# Sorting: a click (or Enter) on a header sorts the body rows by that column; numbers by value,
# text by locale order; empty cells always last. No libraries, no network.
_JS = """
(function(){
  function key(cell, numeric){
    if(!cell){return null;}
    var raw = cell.hasAttribute('data-sort') ? cell.getAttribute('data-sort') : cell.textContent.trim();
    if(raw === ''){return null;}
    if(numeric){var v = parseFloat(raw); return isNaN(v) ? null : v;}
    return raw.toLowerCase();
  }
  function sortTable(table, col, th){
    var numeric = th.getAttribute('data-type') === 'num';
    var dir = th.getAttribute('aria-sort') === 'ascending' ? 'descending' : 'ascending';
    var heads = table.tHead.rows[0].cells;
    for(var i = 0; i < heads.length; i++){heads[i].removeAttribute('aria-sort');}
    th.setAttribute('aria-sort', dir);
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var sign = dir === 'ascending' ? 1 : -1;
    rows.forEach(function(r, i){r._pos = i;});
    rows.sort(function(a, b){
      var x = key(a.cells[col], numeric), y = key(b.cells[col], numeric);
      if(x === null && y === null){return a._pos - b._pos;}
      if(x === null){return 1;}
      if(y === null){return -1;}
      var c = numeric ? x - y : x.localeCompare(y);
      return c !== 0 ? sign * c : a._pos - b._pos;
    });
    rows.forEach(function(r){body.appendChild(r);});
  }
  var tables = document.querySelectorAll('table.sortable');
  Array.prototype.forEach.call(tables, function(table){
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function(th, col){
      th.addEventListener('click', function(){sortTable(table, col, th);});
      th.addEventListener('keydown', function(ev){
        if(ev.key === 'Enter' || ev.key === ' '){ev.preventDefault(); sortTable(table, col, th);}
      });
    });
  });
  document.body.setAttribute('data-sortable-ready', String(tables.length));
})();
"""

_CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
        "script-src 'unsafe-inline'; base-uri 'none'; form-action 'none'")


def _chart_free_parts(data: _RunData) -> dict[str, str]:
    """The sections of the page that show no chart (made while the charts are drawn)."""
    return {"candidates": _candidates(data), "summary": _summary(data), "problems": _problems_section(data),
            "cautions": _cautions_section()}


def render_report(data: _RunData, records: list[FigureRecord], parts: Mapping[str, str] | None = None) -> str:
    """The whole HTML page as a string. ``parts``: :func:`_chart_free_parts` of data, if made."""
    parts = parts or _chart_free_parts(data)
    name = data.meta.get("study_name") or "orcscreen study"
    overview = [r for r in records if r.group == "overview"]
    sweeps = [r for r in records if r.group == "sweep"]
    cards = []
    for n, (_, row) in enumerate(data.top.iterrows(), start=1):
        key = row["case_key"]
        cards.append(_card(n, row, data.details.get(key), [r for r in records if r.group == key]))
    point = _point_note(data.point)
    top_section = ('<section id="top"><h2>Top fluids in detail</h2>' +
                   (f'<p class="note">At the {_e(point)}.</p>' if point else "") +
                   ("".join(cards) or "<p>No feasible case.</p>") + "</section>")
    sweep_section = ('<section id="sweeps"><h2>Sweeps</h2><div class="charts">' +
                     "".join(_figure_html(r) for r in sweeps) + "</div></section>"
                     if sweeps else "")
    made = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    kinds = " and SVG" if any(r.svg for r in records) else ""
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        '<link rel="icon" href="data:,">'
        f"<title>{_e(name)} – orcscreen report</title><style>{_CSS}</style></head><body>"
        f'<header><h1>{_e(name)}</h1><div class="sub" id="study-line">{_e(_study_line(data))}</div>'
        '<div class="banner">Preliminary screening, not a design: see the '
        '<a href="#cautions">cautions</a> before acting on any result.</div></header>'
        '<nav class="note"><a href="#ranking">ranking</a> · '
        + ('<a href="#criteria">by criterion</a> · ' if len(data.criteria) > 1 else "")
        + ('<a href="#charts">charts</a> · ' if overview else "") +
        '<a href="#top">top fluids</a> · ' + ('<a href="#sweeps">sweeps</a> · ' if sweeps else "") +
        '<a href="#summary">inputs and method</a> · '
        '<a href="#problems">infeasible and failed</a> · <a href="#cautions">cautions</a></nav>'
        + parts["candidates"] + _ranking_section(data, overview) + sweep_section + top_section
        + parts["summary"] + parts["problems"] + _chart_problems(records) + parts["cautions"]
        + f"<footer>orcscreen screening report · study hash "
        f"<code>{_e(data.meta.get('study_hash', ''))}</code> · built {made} · written by orcscreen "
        f"{_e(data.meta.get('orcscreen_version', ''))} with CoolProp "
        f"{_e(data.meta.get('coolprop_version', ''))}; charts also in {_e(FIGURES_DIR)}/ as PNG{kinds}; "
        "every result in ranking.csv.</footer>"
        f"<script>{_JS}</script></body></html>\n"
    )


def build_report(out_dir: str | os.PathLike[str], top_n: int = 5, svg: bool = False,
                 rank_by: Sequence[str] | None = None) -> Path:
    """Draw the charts and write ``out_dir/report.html`` from the run store; return its path.

    Recomputes nothing. Raises :class:`orcscreen.store.StoreNotFoundError` when ``out_dir`` has
    no run store. ``out_dir/figures/`` belongs to the report: its PNG and SVG files are replaced
    on every build. A chart that fails is logged and named in the report; the report is still
    written. ``top_n``: number of best fluids (each in its best layout, at the operating point of
    the best case) that get a detail card with T-Q and T-s diagrams and appear in the landscape
    chart. ``svg``: write every chart as SVG too (vector files for print or editing; PNG alone
    is what the page needs, and about half the time of a report). ``rank_by``: the criteria
    after the study's objective for this report (names of orcscreen.objectives.CRITERIA), instead
    of the run's ``study.rank_by``; nothing is computed again.
    """
    out_dir = Path(out_dir)
    path = out_dir / REPORT_FILE
    if out_dir.is_dir() and not os.access(out_dir, os.W_OK):
        raise StoreError(
            f"{out_dir}: the folder is not writable for you, so the report cannot be written "
            "there (the run store itself is fine); make the folder writable, or copy it and run "
            "`orcscreen report` on the copy")
    # The same lock as a run (a run in progress is refused, another report is waited for),
    # and one read transaction: the report shows one consistent state of the store.
    with RunStore(out_dir, create=False, lock=True, purpose="report",
                  wait_s=REPORT_LOCK_WAIT_S) as store, store.snapshot():
        try:
            data = _load(out_dir, max(0, int(top_n)), store=store, rank_by=rank_by)
        except sqlite3.DatabaseError as exc:  # a damaged file: say so, with what to do
            raise store.error_for(exc) from None
        parts: dict[str, str] = {}
        records = make_figures(data, out_dir / FIGURES_DIR, svg=svg,
                               meanwhile=lambda: parts.update(_chart_free_parts(data)))
        page = render_report(data, records, parts or None)
        atomic_write(path, page)  # temporary file without following links, then rename
    return path
