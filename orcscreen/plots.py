"""Charts of a screening study (matplotlib, Agg canvas, never shown on screen).

Every chart function takes result data (rows of contract section 2 as a DataFrame, or the detail
dict of section 3) and an optional ``ax``; it draws on that Axes (or on a new figure) and returns
the Axes. Nothing here computes physics: every number drawn is read from the rows or the detail.
Saving is separate (:func:`save_figure`); the report layer decides what to draw and where to keep it.

Visual design (our own):
- Colours from the Okabe-Ito palette, chosen to stay distinguishable with the common forms of
  colour-vision deficiency: M. Okabe and K. Ito, "Color Universal Design (CUD) - How to make
  figures and presentations that are friendly to colorblind people" (2002/2008),
  https://jfly.uni-koeln.de/color/ ; also B. Wong, "Points of view: Color blindness",
  Nature Methods 8, 441 (2011), doi:10.1038/nmeth.1618. Colour never carries meaning alone:
  layouts also differ by marker and hatch, streams by line style, map cells carry text.
- Sizes for A4 print: figures 6.7 in (170 mm, an A4 text width) wide, text 8-10 pt.
- Units in square brackets on every axis.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.layout_engine import PlaceHolderLayoutEngine
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import FuncFormatter, LogFormatter
from matplotlib.transforms import blended_transform_factory

from orcscreen import cycles as _cycles
from orcscreen.fluids import UNKNOWN, gwp_text, safety_class_text
from orcscreen import rank

__all__ = [
    "OKABE_ITO",
    "STREAM_COLOURS",
    "LAYOUT_STYLE",
    "axis_label",
    "case_label",
    "ranking_chart",
    "criteria_chart",
    "tq_diagram",
    "ts_diagram",
    "tradeoff_chart",
    "landscape_chart",
    "sweep_chart",
    "best_fluid_map",
    "year_chart",
    "rank_change_chart",
    "file_stem",
    "save_figure",
    "load_fonts",
    "write_png",
]

#: Okabe-Ito palette (see module docstring for the source), in their published order.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
#: Order for series lines (yellow left out: too pale for a line on white paper).
SERIES_COLOURS = [OKABE_ITO[k] for k in
                  ("blue", "vermillion", "bluish_green", "orange", "reddish_purple", "sky_blue",
                   "black")]
#: Order for filled areas (map cells), where the pale yellow works; grey added for an 9th class.
FILL_COLOURS = [OKABE_ITO[k] for k in
                ("sky_blue", "orange", "bluish_green", "yellow", "reddish_purple", "vermillion",
                 "blue")] + ["#BBBBBB"]
STREAM_COLOURS = {"source": OKABE_ITO["vermillion"], "working fluid": OKABE_ITO["blue"],
                  "sink": OKABE_ITO["sky_blue"]}
#: Styles given to the layouts of the registry (orcscreen.cycles.LAYOUTS), in its order.
_LAYOUT_STYLES = (
    {"color": OKABE_ITO["blue"], "marker": "o", "hatch": ""},
    {"color": OKABE_ITO["orange"], "marker": "s", "hatch": "///"},
    {"color": OKABE_ITO["bluish_green"], "marker": "D", "hatch": "\\\\"},
    {"color": OKABE_ITO["vermillion"], "marker": "v", "hatch": "xx"},
    {"color": OKABE_ITO["sky_blue"], "marker": "P", "hatch": "--"},
    {"color": OKABE_ITO["yellow"], "marker": "X", "hatch": "++"},
)
LAYOUT_STYLE = {name: _LAYOUT_STYLES[i % len(_LAYOUT_STYLES)] for i, name in enumerate(_cycles.LAYOUTS)}
_OTHER_LAYOUT = {"color": OKABE_ITO["reddish_purple"], "marker": "^", "hatch": "..."}
_GREY = "#777777"

WIDTH_IN = 6.7          # A4 text width, 170 mm
TITLE_PT, LABEL_PT, TICK_PT, NOTE_PT = 10, 9, 8, 7.5

_NAMED_LABELS = {
    "net_power_kW": "net power",
    "size_parameter_m": "turbine size parameter SP",
    "ua_total_kW_K": "total UA (all exchangers)",
    "evaporation_temperature_C": "evaporation temperature",
    "condensing_temperature_C": "condensing temperature",
    "heat_duty_kW": "heat duty",
}
# longest suffix first so "_kW_K" wins over "_K"
_UNIT_SUFFIXES = [
    ("_kJ_kgK2", "kJ/(kg·K²)"), ("_kJ_kgK", "kJ/(kg·K)"), ("_kJ_kg", "kJ/kg"),
    ("_kW_K", "kW/K"), ("_kg_s", "kg/s"), ("_per_kW_rejected", "kW per kW rejected"),
    ("_kW", "kW"), ("_bar", "bar"), ("_Pa", "Pa"), ("_C", "°C"), ("_K", "K"), ("_m", "m"),
    ("_s", "s"), ("_W", "W"),
]


def axis_label(column: str) -> str:
    """Readable axis label with its unit in brackets, from a column or dotted study path.

    ``"source.inlet_temperature_C"`` -> ``"source inlet temperature [°C]"``;
    quantities without a unit (efficiencies, qualities, ratios) get ``[-]``.
    """
    if column in _NAMED_LABELS:
        name, unit = _NAMED_LABELS[column], None
        for suffix, u in _UNIT_SUFFIXES:
            if column.endswith(suffix):
                unit = u
                break
        return f"{name} [{unit or '-'}]"
    text = column.replace(".", " ")
    unit = "-"
    for suffix, u in _UNIT_SUFFIXES:
        if text.endswith(suffix):
            text, unit = text[: -len(suffix)], u
            break
    return f"{text.replace('_', ' ').strip()} [{unit}]"


def case_label(row: Mapping) -> str:
    """Short name of a case: display name (or CoolProp name) and layout."""
    name = row.get("display_name") or row.get("fluid") or "?"
    layout = row.get("layout") or ""
    return f"{name} · {layout}" if layout else str(name)


def _layout_style(layout) -> dict:
    return LAYOUT_STYLE.get(str(layout), _OTHER_LAYOUT)


def _new_axes(ax: Axes | None, height_in: float) -> Axes:
    if ax is not None:
        return ax
    fig = Figure(figsize=(WIDTH_IN, height_in), layout="constrained")
    FigureCanvasAgg(fig)
    return fig.add_subplot()


def _plain_log_labels(axis) -> None:
    """Label a logarithmic axis in plain numbers (0.1, 20, 300) where Matplotlib would write
    powers of ten in math text: easier to read, and no math-text parser to load for every chart."""
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    axis.set_minor_formatter(LogFormatter(labelOnlyBase=False))


def _finish(ax: Axes, xlabel: str, ylabel: str, title: str | None) -> Axes:
    ax.set_xlabel(xlabel, fontsize=LABEL_PT)
    ax.set_ylabel(ylabel, fontsize=LABEL_PT)
    if title:
        ax.set_title(title, fontsize=TITLE_PT, loc="left")
    ax.tick_params(labelsize=TICK_PT)
    ax.grid(True, color="#DDDDDD", linewidth=0.6)
    ax.set_axisbelow(True)
    return ax


def _num(value) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        return math.nan
    return out


def _fmt(value, spec: str = ".1f", missing: str = "n/a") -> str:
    v = _num(value)
    return missing if not math.isfinite(v) else format(v, spec)


# --------------------------------------------------------------------------- ranking

def ranking_chart(df: pd.DataFrame, ax: Axes | None = None, max_bars: int = 40,
                  title: str | None = "Net power of the feasible cases") -> Axes:
    """Horizontal bars of net power [kW], best case on top, one bar per feasible fluid + layout.

    Beside each bar: the net power, the ASHRAE 34 safety class and the GWP100. Shows at most
    ``max_bars`` cases (the best ones) and says so in the title when it cuts. A layout whose
    extra component does nothing is shown once, as its simpler layout's bar with a note
    (:func:`orcscreen.rank.fold_inactive`). The power axis starts just below the smallest bar
    shown, not at zero (:func:`ranking_axis_start`; the axis label says so), so that close
    candidates can be told apart.
    """
    ok = rank.fold_inactive(rank.feasible(df))
    if ok.empty:
        raise ValueError("ranking chart: no feasible case to plot")
    ok = ok.assign(_p=pd.to_numeric(ok["net_power_kW"])).sort_values("_p", ascending=False,
                                                                      kind="stable")
    cut = len(ok) - max_bars
    ok = ok.head(max_bars)
    ax = _new_axes(ax, 1.2 + 0.24 * len(ok))
    y = np.arange(len(ok))
    power = ok["_p"].to_numpy()
    top = float(np.nanmax(power))
    start = ranking_axis_start(power)
    for i, (_, row) in enumerate(ok.iterrows()):
        style = _layout_style(row.get("layout"))
        ax.barh(i, row["_p"], height=0.7, color=style["color"], hatch=style["hatch"],
                edgecolor="white" if not style["hatch"] else "#333333", linewidth=0.4,
                gid=f"bar-{i}")
        safety = safety_class_text(row.get("safety_class"))
        safety = f"class {UNKNOWN}" if safety == UNKNOWN else safety
        note = f"{row['_p']:.1f} kW   {safety}   GWP {gwp_text(row.get('gwp100'))}"
        ax.text(max(row["_p"], start) + 0.01 * (top - start), i, note, va="center", ha="left",
                fontsize=NOTE_PT, gid=f"bar-note-{i}")
    labels = [case_label(r) + (f" ({r[rank.FOLDED]}: no gain)" if r.get(rank.FOLDED) else "")
              for _, r in ok.iterrows()]
    ax.set_yticks(y, labels, fontsize=TICK_PT)
    ax.set_ylim(len(ok) - 0.5, -0.5)        # best (index 0) on top
    ax.set_xlim(start, top + 0.55 * (top - start))   # room for the notes beside the bars
    # no legend: every bar's label names its layout; colour and hatch only repeat it
    if cut > 0 and title:
        title = f"{title}\n(best {max_bars}; {cut} more in the table)"
    label = axis_label("net_power_kW")
    if start != 0.0:
        name, _, unit = label.partition(" [")
        label = f"{name}, axis from {start:g} kW, not zero [{unit}"
    _finish(ax, label, "", title)
    ax.grid(False, axis="y")
    return ax


#: Cases shown per criterion in :func:`criteria_chart`.
CRITERIA_BARS = 5


def criteria_chart(df: pd.DataFrame, criteria: Sequence, n: int = CRITERIA_BARS,
                   title: str | None = "Best cases by each ranking criterion", money: str | None = None) -> Axes:
    """One panel per ranking criterion (orcscreen.objectives.Criterion: column, direction,
    label): horizontal bars of its best ``n`` feasible cases, best on top, the value beside each
    bar; a black diamond at the end of a bar marks a Pareto-optimal case (column
    ``pareto_optimal``). Cases are ordered by the criterion's ``rank_<name>`` column when the
    table has it (else by the column's value in the criterion's direction); layouts without gain
    are folded (:func:`orcscreen.rank.fold_inactive`). The value axis starts just below the
    smallest bar, as the ranking chart's does (:func:`ranking_axis_start`). ``money``: the unit
    of the cost criteria's values (e.g. "EUR of 2023"). Returns the first panel (its figure
    holds them all)."""
    from orcscreen.objectives import PARETO_COLUMN, rank_column

    criteria = list(criteria)
    if not criteria:
        raise ValueError("criteria chart: no criterion given")
    ok = rank.fold_inactive(rank.feasible(df), criteria[0].column)
    if ok.empty:
        raise ValueError("criteria chart: no feasible case to plot")
    fig = Figure(figsize=(WIDTH_IN, 0.6 + len(criteria) * (0.5 + 0.22 * n)), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(len(criteria), 1, squeeze=False)[:, 0]
    for ax, c in zip(axes, criteria):
        values = pd.to_numeric(ok[c.column], errors="coerce") if c.column in ok else pd.Series(np.nan, index=ok.index)
        rows = ok.assign(_v=values)[np.isfinite(values)]
        col = rank_column(c)
        if col in rows:
            rows = rows.assign(_r=pd.to_numeric(rows[col], errors="coerce")).sort_values("_r", kind="stable")
        else:
            rows = rows.sort_values("_v", ascending=not c.maximise, kind="stable")
        rows = rows.head(n)
        if rows.empty:
            ax.text(0.5, 0.5, f"no case has a value of {c.column}", transform=ax.transAxes, ha="center")
            ax.set_axis_off()
            continue
        v = rows["_v"].to_numpy(dtype=float)
        start = ranking_axis_start(v)
        top = float(np.nanmax(v))
        for i, (_, row) in enumerate(rows.iterrows()):
            style = _layout_style(row.get("layout"))
            ax.barh(i, row["_v"], height=0.7, color=style["color"], hatch=style["hatch"],
                    edgecolor="white" if not style["hatch"] else "#333333", linewidth=0.4,
                    gid=f"criterion-{c.name}-bar-{i}")
            ax.text(row["_v"] + 0.03 * (top - start or 1.0), i, f"{row['_v']:.4g}", va="center", ha="left",
                    fontsize=NOTE_PT, gid=f"criterion-{c.name}-note-{i}")
            if str(row.get(PARETO_COLUMN)).strip().lower() in ("true", "1"):
                ax.plot([row["_v"]], [i], marker="D", color="black", markersize=4, zorder=3,
                        gid=f"criterion-{c.name}-pareto-{i}")
        labels = [case_label(r) + (f" ({r[rank.FOLDED]}: no gain)" if r.get(rank.FOLDED) else "")
                  for _, r in rows.iterrows()]
        ax.set_yticks(np.arange(len(rows)), labels, fontsize=TICK_PT)
        ax.set_ylim(len(rows) - 0.5, -0.5)
        ax.set_xlim(start, top + 0.25 * (top - start or abs(top) or 1.0))
        label = axis_label(c.column)
        if c.needs_costs and money:  # money columns: the study's currency (per kW, per MWh)
            per = c.column.rsplit("_per_", 1)[1] if "_per_" in c.column else ""
            label = f"{c.label} [{money}{' per ' + per if per else ''}]"
        if start != 0.0:
            name, _, unit = label.partition(" [")
            label = f"{name}, axis from {start:g}, not zero [{unit}"
        _finish(ax, label, "", f"{c.label} ({c.direction})")
        ax.title.set_fontsize(LABEL_PT)
        ax.grid(False, axis="y")
    if title:
        fig.suptitle(title, fontsize=TITLE_PT, x=0.0, ha="left")
    return axes[0]


def ranking_axis_start(power: Sequence[float]) -> float:
    """Lower end [kW] of the ranking chart's power axis: a tenth of the spread of the bars (at
    least 5 % of the largest bar) below the smallest one, rounded down to a step of
    10**floor(log10(spread / 10)), so that the smallest bar keeps a visible length; zero when that would reach zero or a bar is not
    positive (then the bars are drawn from zero as usual)."""
    p = np.asarray(power, dtype=float)
    p = p[np.isfinite(p)]
    if p.size == 0 or p.min() <= 0.0:
        return min(0.0, float(p.min()) * 1.05) if p.size else 0.0
    lo, hi = float(p.min()), float(p.max())
    spread = max(hi - lo, 0.05 * hi)
    below = lo - 0.1 * spread
    step = 10.0 ** math.floor(math.log10(spread / 10.0))   # a round number, at most spread / 10
    start = math.floor(below / step) * step
    return start if start > 0.0 else 0.0


# --------------------------------------------------------------------------- T-Q diagram

#: exchanger order on the heat-duty axis (cold to hot) and which stream is on which side
_EXCHANGER_SIDES = {
    "condenser": ("working fluid", "sink"),
    "recuperator": ("working fluid", "working fluid"),
    "evaporator": ("source", "working fluid"),
}


#: An exchanger narrower than this share of the T-Q diagram's total duty is drawn enlarged in an
#: inset as well (a recuperator often takes a few per cent of the heat: a sliver on the axis).
TQ_NARROW_SHARE = 0.12


def tq_diagram(detail: Mapping, row: Mapping | None = None, ax: Axes | None = None,
               title: str | None = None) -> Axes:
    """Temperature [°C] against heat duty [kW] for the condenser, recuperator and evaporator.

    The exchangers stand side by side on one duty axis (cold to hot: condenser | recuperator |
    evaporator), each as wide as its duty; within each, hot stream solid and cold stream dashed.
    The pinch of each exchanger is marked by a bar between the two streams, labelled with its
    value in K (the ``pinch_K`` of the detail). An exchanger narrower than
    :data:`TQ_NARROW_SHARE` of the total duty (a recuperator, usually) is also drawn enlarged in
    an inset at the upper left, on its own duty axis, where its pinch is labelled.
    """
    exchangers = detail.get("exchangers") or {}
    present = [name for name in _EXCHANGER_SIDES if exchangers.get(name)]
    if not present:
        raise ValueError("T-Q diagram: the detail has no exchanger profiles")
    ax = _new_axes(ax, 3.9)
    duties = {name: _duty(exchangers[name]) for name in present}
    total = sum(duties.values())
    narrow = [n for n in present if len(present) > 1 and duties[n] < TQ_NARROW_SHARE * total]
    offset = 0.0
    trans = blended_transform_factory(ax.transData, ax.transAxes)
    for name in present:
        hx = exchangers[name]
        duty = duties[name]
        _tq_exchanger(ax, name, hx, offset, label_pinch=name not in narrow)
        ax.axvline(offset, color="#BBBBBB", linewidth=0.8)
        ax.text(offset + duty / 2, 0.985, f"{name}\n{duty:,.0f} kW", transform=trans,
                ha="center", va="top", fontsize=NOTE_PT)
        offset += duty
    ax.axvline(offset, color="#BBBBBB", linewidth=0.8)
    ax.set_xlim(0, offset)
    lo, hi = ax.get_ylim()
    ax.set_ylim(lo, hi + 0.22 * (hi - lo))      # head room for the exchanger names
    for k, name in enumerate(narrow[:1]):       # one inset: the space above the condenser
        inset = ax.inset_axes([0.08, 0.40, 0.30, 0.36])
        inset.set_gid(f"inset-{name}")
        _tq_exchanger(inset, name, exchangers[name], 0.0, label_pinch=True)
        inset.set_xlim(-0.05 * duties[name], 1.05 * duties[name])   # the pinch bar off the frame
        inset.set_title(f"{name} enlarged, {duties[name]:,.0f} kW", fontsize=NOTE_PT, loc="left")
        inset.tick_params(labelsize=TICK_PT - 1)
        inset.set_xlabel("heat duty [kW]", fontsize=NOTE_PT - 0.5)
        inset.set_ylabel("[°C]", fontsize=NOTE_PT - 0.5)
        inset.grid(True, color="#EEEEEE", linewidth=0.5)
        inset.set_facecolor("white")
    handles = [Line2D([], [], color=STREAM_COLOURS[s], linewidth=1.8, label=s)
               for s in ("source", "working fluid", "sink")]
    handles += [Line2D([], [], color="#444444", linestyle="-", label="hot side"),
                Line2D([], [], color="#444444", linestyle="--", label="cold side")]
    ax.legend(handles=handles, fontsize=NOTE_PT, ncols=1, framealpha=0.9,
              **({"loc": "lower right"} if narrow else {"loc": "upper left", "bbox_to_anchor": (0, 0.86)}))
    if title is None and row is not None:
        title = f"T-Q diagram: {case_label(row)}"
    return _finish(ax, "heat duty, exchangers side by side [kW]", "temperature [°C]", title)


def _duty(hx: Mapping) -> float:
    """An exchanger's duty [kW]: the detail's, else the end of its profile."""
    duty = _num(hx.get("duty_kW"))
    return duty if math.isfinite(duty) else float(np.asarray(hx["Q_kW"], dtype=float)[-1])


def _tq_exchanger(ax: Axes, name: str, hx: Mapping, offset: float, label_pinch: bool) -> None:
    """One exchanger's two streams from ``offset`` [kW] on, and its pinch bar (with its value
    when ``label_pinch``)."""
    q = np.asarray(hx["Q_kW"], dtype=float) + offset
    hot_stream, cold_stream = _EXCHANGER_SIDES[name]
    ax.plot(q, hx["T_hot_C"], color=STREAM_COLOURS[hot_stream], linewidth=1.8,
            linestyle="-", gid=f"{name}-hot")
    ax.plot(q, hx["T_cold_C"], color=STREAM_COLOURS[cold_stream], linewidth=1.8,
            linestyle="--", gid=f"{name}-cold")
    pinch = _num(hx.get("pinch_K"))
    if not math.isfinite(pinch):
        return
    xq = offset + _num(hx.get("pinch_Q_kW"))
    t_hot, t_cold = _num(hx.get("pinch_T_hot_C")), _num(hx.get("pinch_T_cold_C"))
    ax.plot([xq, xq], [t_cold, t_hot], color="black", linewidth=1.2,
            marker="_", markersize=8, gid=f"pinch-{name}-bar")
    if not label_pinch:
        return
    right = (xq - offset) < 0.6 * _duty(hx)
    ax.annotate(f"pinch {pinch:.1f} K", xy=(xq, (t_hot + t_cold) / 2),
                xytext=(5 if right else -5, 0), textcoords="offset points",
                ha="left" if right else "right", va="center", fontsize=NOTE_PT,
                bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.85},
                gid=f"pinch-{name}")


# --------------------------------------------------------------------------- T-s diagram

_STATE_OFFSETS = {"1": (-12, -10), "2": (-12, 6), "2r": (-14, 4), "3": (8, 4), "4": (8, -4),
                  "4r": (8, -8), "2f": (-14, 4), "2h": (-14, 8), "3b": (10, 0), "3e": (10, -2), "3r": (8, 6)}


def ts_diagram(detail: Mapping, row: Mapping | None = None, ax: Axes | None = None,
               title: str | None = None) -> Axes:
    """Temperature [°C] against specific entropy [kJ/(kg·K)]: saturation dome, cycle path, states.

    States are drawn as numbered points (the names of the detail: 1, 2, 3, 4 and the layout's own).
    """
    states = detail.get("states") or []
    if not states:
        raise ValueError("T-s diagram: the detail has no states")
    ax = _new_axes(ax, 4.2)
    dome = detail.get("dome") or {}
    if dome.get("T_C"):
        t = np.asarray(dome["T_C"], dtype=float)
        s_l = np.asarray(dome["s_liquid_kJ_kgK"], dtype=float)
        s_v = np.asarray(dome["s_vapour_kJ_kgK"], dtype=float)
        t_l = np.asarray(dome.get("T_liquid_C", dome["T_C"]), dtype=float)  # a mixture's bubble curve
        ax.plot(np.concatenate([s_l, s_v[::-1]]), np.concatenate([t_l, t[::-1]]), color=_GREY,
                linewidth=1.2, label="saturation dome", gid="dome")
    path = detail.get("ts_path") or {}
    if path.get("T_C"):
        ax.plot(path["s_kJ_kgK"], path["T_C"], color=STREAM_COLOURS["working fluid"],
                linewidth=1.8, label="cycle", gid="cycle-path")
    s_states = [_num(st.get("s_kJ_kgK")) for st in states]
    t_states = [_num(st.get("T_C")) for st in states]
    ax.plot(s_states, t_states, linestyle="none", marker="o", markersize=5,
            markerfacecolor="white", markeredgecolor="black", gid="states")
    for st, s, t in zip(states, s_states, t_states):
        name = str(st.get("name"))
        ax.annotate(name, xy=(s, t), xytext=_STATE_OFFSETS.get(name, (6, 6)),
                    textcoords="offset points", fontsize=LABEL_PT, fontweight="bold",
                    ha="center", va="center", gid=f"state-{name}")
    ax.legend(fontsize=NOTE_PT, loc="upper left")
    if title is None and row is not None:
        title = f"T-s diagram: {case_label(row)}"
    return _finish(ax, "specific entropy [kJ/(kg·K)]", "temperature [°C]", title)


# --------------------------------------------------------------------------- trade-off

#: Most Pareto-optimal cases a trade-off chart names (more labels overlap at A4 width).
TRADEOFF_LABELS = 8


def tradeoff_chart(df: pd.DataFrame, x: str = "size_parameter_m", ax: Axes | None = None,
                   title: str | None = None, label_front: bool = True, xlabel: str | None = None,
                   max_labels: int = TRADEOFF_LABELS) -> Axes:
    """Net power [kW] against a size or cost measure ``x`` (turbine SP [m], total UA [kW/K],
    specific investment; xlabel names its axis where the column name cannot).

    Every feasible case is a point (marker by layout; a layout whose extra component does
    nothing is folded into its simpler layout, :func:`orcscreen.rank.fold_inactive`); the
    Pareto-optimal cases of :func:`orcscreen.rank.pareto_front` (most power for least size) are
    filled and joined by a step line, and at most ``max_labels`` of them are named, those with
    the most net power first, a point next to one already named left unnamed. The x axis turns logarithmic when the sizes span more than a factor of 30.
    """
    ok = rank.fold_inactive(rank.feasible(df))
    ok = ok[np.isfinite(pd.to_numeric(ok[x], errors="coerce"))] if x in ok else ok.iloc[0:0]
    if ok.empty:
        raise ValueError(f"trade-off chart: no feasible case with a value of {x}")
    front = rank.pareto_front(ok, maximise="net_power_kW", minimise=x)
    ax = _new_axes(ax, 4.0)
    for layout, group in ok.groupby("layout", sort=False):
        style = _layout_style(layout)
        ax.scatter(group[x], group["net_power_kW"], marker=style["marker"], s=22,
                   facecolor="none", edgecolor=style["color"], linewidth=0.9,
                   label=f"{layout}", gid=f"cases-{layout}")
    pts = ok[front].sort_values(x)
    ax.plot(pts[x], pts["net_power_kW"], drawstyle="steps-post", color="black", linewidth=0.9,
            zorder=1)
    ax.scatter(pts[x], pts["net_power_kW"], marker="D", s=30, color="black", zorder=3,
               label="Pareto-optimal", gid="pareto")
    values = pd.to_numeric(ok[x]).to_numpy(dtype=float)
    if values.min() > 0 and values.max() / values.min() > 30:
        ax.set_xscale("log")         # sizes spanning orders of magnitude (SP of siloxanes...)
        _plain_log_labels(ax.xaxis)
    if label_front and max_labels > 0:
        _label_points(ax, pts.loc[pts.index.isin(_to_name(ax, pts, x, max_labels))], x)
    ax.legend(fontsize=NOTE_PT, loc="lower right")
    return _finish(ax, xlabel or axis_label(x), axis_label("net_power_kW"), title)


def _to_name(ax: Axes, pts: pd.DataFrame, x: str, most: int) -> list:
    """Index of the points to name: by net power, most first, skipping a point that sits within
    a quarter of the x span and 5 % of the y span of one already named (about a label's size at
    A4 width: its label would overlap), up to ``most``."""
    log_x = ax.get_xscale() == "log"
    xlo, xhi = ax.get_xlim()
    ylo, yhi = ax.get_ylim()

    def xpos(v: float) -> float:
        return math.log10(v) if log_x else v

    span_x, span_y = abs(xpos(xhi) - xpos(xlo)) or 1.0, abs(yhi - ylo) or 1.0
    chosen: list = []
    kept: list[tuple[float, float]] = []
    order = pd.to_numeric(pts["net_power_kW"]).sort_values(ascending=False, kind="stable").index
    for i in order:
        px, py = xpos(float(pts.at[i, x])), float(pts.at[i, "net_power_kW"])
        if any(abs(px - qx) < 0.25 * span_x and abs(py - qy) < 0.05 * span_y for qx, qy in kept):
            continue
        chosen.append(i)
        kept.append((px, py))
        if len(chosen) == most:
            break
    return chosen


def _label_points(ax: Axes, pts: pd.DataFrame, x: str) -> None:
    """Name the points of ``pts`` (sorted by ``x``): coincident points share one label, and a
    label close to the previous one goes to the other side of its point."""
    groups: list[tuple[float, float, list[str]]] = []
    for _, r in pts.iterrows():
        px, py = float(r[x]), float(r["net_power_kW"])
        if groups and math.isclose(px, groups[-1][0], rel_tol=1e-9, abs_tol=1e-12) \
                and math.isclose(py, groups[-1][1], rel_tol=1e-9, abs_tol=1e-12):
            groups[-1][2].append(r)
        else:
            groups.append((px, py, [r]))
    log_x = ax.get_xscale() == "log"

    def xpos(v: float) -> float:
        return math.log10(v) if log_x else v

    xlo, xhi = ax.get_xlim()
    ylo, yhi = ax.get_ylim()
    span_x = abs(xpos(xhi) - xpos(xlo)) or 1.0
    span_y = abs(yhi - ylo) or 1.0
    below = True
    previous = None
    for px, py, names in groups:
        if previous is not None and abs(xpos(px) - xpos(previous[0])) < 0.25 * span_x \
                and abs(py - previous[1]) < 0.05 * span_y:
            below = not below
        else:
            below = True
        ax.annotate(_joint_label(names), xy=(px, py), xytext=(5, -9 if below else 5),
                    textcoords="offset points", fontsize=NOTE_PT - 0.5, gid="pareto-label",
                    bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.7})
        previous = (px, py)


def _joint_label(rows: Sequence[Mapping]) -> str:
    """One label for cases at the same point: "R1234yf · basic, recuperated"."""
    by_fluid: dict[str, list[str]] = {}
    for r in rows:
        name = str(r.get("display_name") or r.get("fluid") or "?")
        by_fluid.setdefault(name, []).append(str(r.get("layout") or ""))
    return " / ".join(f"{name} · {', '.join(l for l in layouts if l)}" if any(layouts) else name
                      for name, layouts in by_fluid.items())


# --------------------------------------------------------------------------- turbine map

def turbine_map(df: pd.DataFrame, top: pd.DataFrame | None = None, ax: Axes | None = None,
                title: str | None = "Turbine map: efficiency against size parameter") -> Axes:
    """Turbine isentropic efficiency [-] against the whole turbine's size parameter SP [m].

    Every feasible case is a point (a layout whose extra component does nothing folded into its
    simpler layout): its fill shows the volume ratio VR (logarithmic colour scale, colour bar),
    its marker the layout, a small number beside it the stage count where
    the turbine model gives one. The cases of ``top`` (the ranking's best) are ringed in black
    and numbered by rank. SP on a logarithmic axis (sizes span orders of magnitude).
    """
    from matplotlib.colors import LogNorm

    ok = rank.fold_inactive(rank.feasible(df))
    sp = pd.to_numeric(ok.get("size_parameter_m"), errors="coerce")
    eta = pd.to_numeric(ok.get("turbine_efficiency"), errors="coerce")
    vr = pd.to_numeric(ok.get("volume_ratio"), errors="coerce")
    keep = np.isfinite(sp) & np.isfinite(eta) & np.isfinite(vr) & (sp > 0) & (vr > 0)
    ok = ok[keep]
    if ok.empty:
        raise ValueError("turbine map: no feasible case with a size parameter, a volume ratio and an efficiency")
    sp, eta, vr = sp[keep], eta[keep], vr[keep]
    ax = _new_axes(ax, 4.2)
    norm = LogNorm(vmin=max(float(vr.min()), 1.0), vmax=max(float(vr.max()), float(vr.min()) * 1.01, 1.01))
    points = None
    for layout, group in ok.groupby("layout", sort=False):
        style = _layout_style(layout)
        idx = group.index
        points = ax.scatter(sp[idx], eta[idx], c=vr[idx], cmap="viridis", norm=norm, marker=style["marker"], s=30,
                            edgecolor=_GREY, linewidth=0.5, label=str(layout), gid=f"turbine-{layout}")
    stages = pd.to_numeric(ok.get("turbine_stages"), errors="coerce") if "turbine_stages" in ok else None
    if stages is not None and stages.notna().any():
        for i in ok.index[stages.notna()]:
            ax.annotate(f"{int(stages[i])}", xy=(sp[i], eta[i]), xytext=(3, -7), textcoords="offset points",
                        fontsize=NOTE_PT - 1.5, color=_GREY, gid="stages")
    if top is not None and not top.empty:
        marked = top.assign(_x=pd.to_numeric(top["size_parameter_m"], errors="coerce")).sort_values("_x")
        for k, (_, r) in enumerate(marked.iterrows()):
            x, y = _num(r.get("size_parameter_m")), _num(r.get("turbine_efficiency"))
            if not (math.isfinite(x) and math.isfinite(y) and x > 0):
                continue
            ax.scatter([x], [y], s=120, facecolor="none", edgecolor="black", linewidth=1.2, zorder=4, gid="top-case")
            ax.annotate(f"{_fmt(r.get('rank'), '.0f', '?')} {r.get('display_name') or r.get('fluid')}",
                        xy=(x, y), xytext=(6, 7 if k % 2 == 0 else -14), textcoords="offset points",
                        fontsize=NOTE_PT - 0.5, gid="top-label", zorder=5,
                        bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.8})
    ax.set_xscale("log")
    _plain_log_labels(ax.xaxis)
    bar = ax.figure.colorbar(points, ax=ax, pad=0.01)
    _plain_log_labels(bar.ax.yaxis)
    bar.set_label("turbine volume ratio VR [-]", fontsize=LABEL_PT)
    bar.ax.tick_params(which="both", labelsize=TICK_PT)
    handles = [Line2D([], [], linestyle="none", marker=_layout_style(l)["marker"], markerfacecolor="white",
                      markeredgecolor="black", label=str(l)) for l in ok["layout"].unique()]
    if top is not None and not top.empty:
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=9, markerfacecolor="none",
                              markeredgecolor="black", label="best cases (rank)"))
    ax.legend(handles=handles, fontsize=NOTE_PT, loc="lower right")
    return _finish(ax, axis_label("size_parameter_m"), "turbine isentropic efficiency [-]", title)


# --------------------------------------------------------------------------- a year

def year_chart(cases: Sequence[tuple[Mapping, Mapping]], ax: Axes | None = None,
               title: str | None = "Net power over the year's sink temperatures") -> Axes:
    """Net power [kW] of each top case's fixed design against the sink inlet temperature [°C] of
    the year's bins (detail["year"]), the design temperature marked; a bin where the plant does
    not run sits at zero."""
    ax = _new_axes(ax, 4.0)
    drawn = 0
    for k, (row, detail) in enumerate(cases):
        year = (detail or {}).get("year")
        if not year:
            continue
        colour = list(OKABE_ITO.values())[1 + k % (len(OKABE_ITO) - 1)]
        ax.plot(year["sink_temperature_C"], year["net_power_kW"], marker=_layout_style(row.get("layout"))["marker"],
                markersize=3, linewidth=1.0, color=colour, label=case_label(row), gid=f"year-{k}")
        drawn += 1
        T_d = year.get("design_sink_temperature_C")
        if T_d is not None:
            ax.axvline(T_d, color=_GREY, linewidth=0.7, linestyle="--", zorder=0)
    if not drawn:
        raise ValueError("year chart: no case carries a year")
    ax.annotate("design", xy=(T_d, 0), xycoords=("data", "axes fraction"), xytext=(3, 4),
                textcoords="offset points", fontsize=NOTE_PT, color=_GREY)
    ax.legend(fontsize=NOTE_PT, loc="best")
    return _finish(ax, axis_label("sink.inlet_temperature_C"), axis_label("net_power_kW"), title)


def rank_change_chart(df: pd.DataFrame, n: int = 10, ax: Axes | None = None,
                      title: str | None = "Design-point ranking against the year's ranking") -> Axes:
    """The best n cases by design net power (left) and by annual net energy (right), each case a
    line between its two ranks; the winner of each side in bold, and a line in colour where the
    winner changes."""
    ok = rank.fold_inactive(rank.feasible(df), "annual_energy_MWh")
    energy = pd.to_numeric(ok.get("annual_energy_MWh"), errors="coerce")
    ok = ok[np.isfinite(energy)]
    if ok.empty:
        raise ValueError("ranking comparison: no feasible case with an annual energy")
    design = ok.sort_values(["net_power_kW", "fluid", "layout"], ascending=[False, True, True], kind="mergesort")
    annual = ok.sort_values(["annual_energy_MWh", "fluid", "layout"], ascending=[False, True, True], kind="mergesort")
    rank_d = {i: k + 1 for k, i in enumerate(design.index)}
    rank_a = {i: k + 1 for k, i in enumerate(annual.index)}
    shown = [i for i in ok.index if rank_d[i] <= n or rank_a[i] <= n]
    ax = _new_axes(ax, 4.2)
    changed = design.index[0] != annual.index[0]
    for i in shown:
        row = ok.loc[i]
        lead = i in (design.index[0], annual.index[0])
        colour = OKABE_ITO["vermillion"] if (changed and lead) else _GREY
        ax.plot([0, 1], [rank_d[i], rank_a[i]], color=colour, linewidth=1.6 if lead else 0.8, marker="o", markersize=3)
        label = case_label(row)
        weight = "bold" if lead else "normal"
        if rank_d[i] <= n:
            ax.annotate(label, xy=(0, rank_d[i]), xytext=(-6, 0), textcoords="offset points", ha="right", va="center",
                        fontsize=NOTE_PT, fontweight=weight)
        if rank_a[i] <= n:
            ax.annotate(label, xy=(1, rank_a[i]), xytext=(6, 0), textcoords="offset points", ha="left", va="center",
                        fontsize=NOTE_PT, fontweight=weight)
    ax.set_xlim(-0.9, 1.9)
    ax.set_ylim(n + 0.5, 0.5)
    ax.set_xticks([0, 1], ["by design net power", "by annual net energy"], fontsize=TICK_PT)
    ax.set_yticks(range(1, n + 1))
    if changed:
        ax.text(0.5, 0.02, "the winner changes over the year", transform=ax.transAxes, ha="center",
                fontsize=NOTE_PT, color=OKABE_ITO["vermillion"])
    return _finish(ax, "", "rank", title)


# --------------------------------------------------------------------------- landscape

def landscape_chart(cases: Sequence[tuple[Mapping, Mapping]], ax: Axes | None = None,
                    title: str | None = None) -> Axes:
    """The optimiser's scan for each ``(row, detail)`` case: net power [kW] against the layout's
    innermost free variable (the evaporation temperature [°C], or a supercritical heater's
    pressure [bar]); the optimum is a star, and the legend names its binding limit. Cases whose
    scan is over another variable than the first case's are left out.
    """
    drawn = [(r, d) for r, d in cases if d and (d.get("landscape") or {}).get("net_power_kW")]
    if not drawn:
        raise ValueError("landscape chart: no case has an optimisation scan")
    variable, unit = _scan_axis(drawn[0][1])
    drawn = [(r, d) for r, d in drawn if _scan_axis(d) == (variable, unit)]
    ax = _new_axes(ax, 4.4)
    for i, (row, detail) in enumerate(drawn):
        colour = SERIES_COLOURS[i % len(SERIES_COLOURS)]
        scan = detail["landscape"]
        t = np.asarray(scan["x"] if "x" in scan else scan["evaporation_temperature_C"], dtype=float)
        p = np.asarray([_num(v) for v in scan["net_power_kW"]], dtype=float)
        order = np.argsort(t)
        opt = detail.get("optimum") or {}
        x_opt = opt.get("x", opt.get("evaporation_temperature_C"))
        limit = opt.get("binding_limit") or "none (interior optimum)"
        ax.plot(t[order], p[order], color=colour, linewidth=1.4,
                marker=_layout_style(row.get("layout"))["marker"], markersize=2.5,
                label=f"{case_label(row)}: optimum {_fmt(opt.get('net_power_kW'))} kW at "
                      f"{_fmt(x_opt)} {unit}, limit: {limit}",
                gid=f"scan-{i}")
        if opt:
            ax.plot([_num(x_opt)], [_num(opt.get("net_power_kW"))],
                    marker="*", markersize=12, color=colour, markeredgecolor="black",
                    markeredgewidth=0.6, linestyle="none", zorder=4, gid=f"optimum-{i}")
    ax.legend(fontsize=NOTE_PT - 0.5, loc="upper center", bbox_to_anchor=(0.5, -0.16), ncols=1,
              frameon=False)
    if title is None:
        title = f"Net power against {variable}"
    return _finish(ax, f"{variable} [{unit}]", axis_label("net_power_kW"), title)


def _scan_axis(detail: Mapping) -> tuple[str, str]:
    """(variable, unit) of a detail's scan; details stored before layouts had free variables of
    their own scanned the evaporation temperature."""
    scan = detail.get("landscape") or {}
    return scan.get("variable") or "evaporation temperature", scan.get("unit") or "°C"


# --------------------------------------------------------------------------- sweeps

def _reference_values(df: pd.DataFrame, columns: Iterable[str]) -> dict:
    """Middle value (the median of the distinct values, rounded down) of each swept column."""
    ref = {}
    for c in columns:
        values = sorted(pd.unique(df[c].dropna()))
        ref[c] = values[(len(values) - 1) // 2] if values else None
    return ref


def _slice(df: pd.DataFrame, keep: Sequence[str]) -> tuple[pd.DataFrame, dict]:
    others = [c for c in rank.sweep_columns(df) if c not in keep]
    ref = _reference_values(df, others)
    mask = pd.Series(True, index=df.index)
    for c, v in ref.items():
        mask &= df[c] == v
    return df[mask], ref


def _slice_note(ref: Mapping) -> str:
    parts = []
    for c, v in ref.items():
        name, _, unit = axis_label(c).partition(" [")
        unit = unit.rstrip("]")
        parts.append(f"{name} = {v:g}" + (f" {unit}" if unit and unit != "-" else ""))
    return ", ".join(parts)


def sweep_chart(df: pd.DataFrame, variable: str, ax: Axes | None = None, top_n: int = 5,
                title: str | None = None) -> Axes:
    """Net power [kW] against one swept variable: the best case at each point (black dashed,
    white diamonds, named where it changes) and the ``top_n`` fluids that do best across the
    sweep, each in its better layout.

    "Do best across the sweep" = the highest mean share of the best net power of each point
    (an infeasible point counts as 0), so a fluid that is good everywhere beats one that only
    wins at one end. Other swept variables are held at their middle value (said in the title).
    """
    part, ref = _slice(df, [variable])
    ok = rank.fold_inactive(rank.feasible(part))
    if ok.empty:
        raise ValueError(f"sweep chart over {variable}: no feasible case")
    ax = _new_axes(ax, 4.0)
    ok = ok.assign(_p=pd.to_numeric(ok["net_power_kW"]))
    best_at = ok.groupby(variable)["_p"].transform("max")
    n_points = ok[variable].nunique()
    share = (ok.assign(_share=ok["_p"] / best_at.where(best_at > 0))
             .groupby(["fluid", "layout"], sort=False)["_share"].sum() / n_points)
    combos = (share.sort_values(ascending=False, kind="stable").reset_index()
              .drop_duplicates("fluid").head(top_n))
    for i, (fluid, layout) in enumerate(zip(combos["fluid"], combos["layout"])):
        series = ok[(ok["fluid"] == fluid) & (ok["layout"] == layout)].sort_values(variable)
        style = _layout_style(layout)
        ax.plot(series[variable], series["_p"], color=SERIES_COLOURS[i % len(SERIES_COLOURS)],
                marker=style["marker"], markersize=3.5, linewidth=1.1,
                label=case_label(series.iloc[0]), gid=f"top-{i}")
    best = rank.best_per_point(part).sort_values(variable)
    ax.plot(best[variable], pd.to_numeric(best["net_power_kW"]), color="black", linewidth=1.0,
            linestyle=(0, (4, 2)), marker="D", markersize=4.5, markerfacecolor="white",
            markeredgecolor="black", zorder=4, label="best case at each point", gid="best")
    previous, changes = None, 0
    for k, (_, r) in enumerate(best.iterrows()):
        name = case_label(r)
        if name != previous:        # name the best case where it changes along the sweep,
            above = changes % 2 == 0    # alternately above and below the line
            ax.annotate(name, xy=(r[variable], r["net_power_kW"]),
                        xytext=(-4, 8) if above else (6, -12), textcoords="offset points",
                        ha="right" if above and k else "left", fontsize=NOTE_PT - 0.5,
                        bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none",
                              "alpha": 0.75}, gid=f"best-name-{k}")
            changes += 1
        previous = name
    lo, hi = ax.get_ylim()
    ax.set_ylim(lo, hi + 0.12 * (hi - lo))
    ax.legend(fontsize=NOTE_PT, loc="best")
    if title is None:
        title = f"Net power over {axis_label(variable).split(' [')[0]}"
        if ref:
            title += f" ({_slice_note(ref)})"
    return _finish(ax, axis_label(variable), axis_label("net_power_kW"), title)


def best_fluid_map(df: pd.DataFrame, x: str, y: str, ax: Axes | None = None,
                   title: str | None = None) -> Axes:
    """Map over two swept variables: each cell coloured by its best fluid + layout and labelled
    with it (name, layout and net power [kW]; on wide grids a number keyed to the legend and the
    net power); hatched grey where no case is feasible.
    """
    part, ref = _slice(df, [x, y])
    xs = sorted(pd.unique(part[x].dropna()))
    ys = sorted(pd.unique(part[y].dropna()))
    if not xs or not ys:
        raise ValueError(f"best-fluid map: no values of {x} and {y}")
    best = rank.best_per_point(part)
    names = [case_label(r) for _, r in best.iterrows()]
    classes = list(dict.fromkeys(names))
    numbered = len(xs) > 6          # full names do not fit in narrow cells at A4 width
    grid = np.full((len(ys), len(xs)), np.nan)
    cell_text = {}
    for (_, r), name in zip(best.iterrows(), names):
        i, j = ys.index(r[y]), xs.index(r[x])
        k = classes.index(name)
        grid[i, j] = k
        power = f"{float(r['net_power_kW']):.0f} kW"
        cell_text[(i, j)] = (f"{k + 1}\n{float(r['net_power_kW']):.0f}" if numbered else
                             f"{r.get('display_name') or r['fluid']}\n{r['layout']}\n{power}")
    ax = _new_axes(ax, 1.6 + (0.42 if numbered else 0.6) * len(ys))
    colours = [FILL_COLOURS[k % len(FILL_COLOURS)] for k in range(max(1, len(classes)))]
    cmap = ListedColormap(colours).with_extremes(bad="#F2F2F2")
    ax.imshow(np.ma.masked_invalid(grid), cmap=cmap, vmin=-0.5, vmax=len(colours) - 0.5,
              origin="lower", aspect="auto", interpolation="nearest", gid="map")
    for i in range(len(ys)):
        for j in range(len(xs)):
            text = cell_text.get((i, j))
            if text is None:
                ax.add_patch(_hatched_cell(j, i))
                text = "none\nfeasible"
            dark = not np.isnan(grid[i, j]) and _is_dark(colours[int(grid[i, j])])
            ax.text(j, i, text, ha="center", va="center", fontsize=NOTE_PT - 1.5,
                    color="white" if dark else "black", gid=f"cell-{i}-{j}")
    ax.set_xticks(range(len(xs)), [f"{v:g}" for v in xs])
    ax.set_yticks(range(len(ys)), [f"{v:g}" for v in ys])
    ax.set_xticks(np.arange(len(xs) + 1) - 0.5, minor=True)
    ax.set_yticks(np.arange(len(ys) + 1) - 0.5, minor=True)
    ax.legend(handles=[Patch(facecolor=colours[k], edgecolor="#555555",
                             label=f"{k + 1}: {c}" if numbered else c)
                       for k, c in enumerate(classes)],
              fontsize=NOTE_PT, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False,
              title="best case\n(cell: number, net power [kW])" if numbered else "best case",
              title_fontsize=NOTE_PT)
    if title is None:
        title = "Best fluid and layout"
        if ref:
            title += f" ({_slice_note(ref)})"
    _finish(ax, axis_label(x), axis_label(y), title)
    ax.grid(False)
    ax.grid(True, which="minor", color="white", linewidth=1.5)
    ax.tick_params(which="minor", length=0)
    return ax


def _is_dark(colour: str) -> bool:
    """True when white text contrasts more than black on ``colour``: relative luminance L below
    0.179, where the WCAG 2.x contrast ratios (L + 0.05) / 0.05 and 1.05 / (L + 0.05) are equal
    (W3C, Web Content Accessibility Guidelines 2.1, definitions of relative luminance and
    contrast ratio; sRGB)."""
    rgb = [int(colour.lstrip("#")[k:k + 2], 16) / 255 for k in (0, 2, 4)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2] < 0.179


def _hatched_cell(j: int, i: int) -> Rectangle:
    return Rectangle((j - 0.5, i - 0.5), 1, 1, facecolor="none", edgecolor="#999999",
                     hatch="xx", linewidth=0)


# --------------------------------------------------------------------------- saving

_SAFE = re.compile(r"[^A-Za-z0-9_.-]+")


def file_stem(*parts) -> str:
    """File-name-safe stem from parts (fluid names may contain spaces, commas, brackets)."""
    return _SAFE.sub("-", "_".join(str(p) for p in parts if p not in (None, ""))).strip("-")


def load_fonts() -> None:
    """Load the font every chart's text uses (a process that then forks hands it to its children)."""
    from matplotlib.font_manager import FontProperties, findfont, get_font

    get_font(findfont(FontProperties()))


def save_figure(fig: Figure, directory: Path | str, stem: str,
                formats: Sequence[str] = ("png",), dpi: int = 200) -> list[Path]:
    """Write ``fig`` as ``directory/stem.<format>`` for each format (PNG by default; add "svg"
    for a vector file); return the paths written.

    The layout is made once, at ``dpi``, then frozen (Matplotlib's ``savefig`` would lay the
    figure out again in a drawing pass of its own for every format). The PNG is 8-bit RGB on
    white, written with zlib level 1 (:data:`PNG_COMPRESS_LEVEL`); file metadata without
    dates or software, so the same data gives the same files.
    """
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    _freeze_layout(fig, dpi)  # once for every format (write_png's own call then does nothing)
    paths = []
    for fmt in formats:
        path = directory / f"{stem}.{fmt}"
        if fmt == "png":
            write_png(fig, path, dpi)
        else:
            fig.savefig(path, format=fmt, dpi=dpi, metadata={"Date": None}, facecolor="white")
        paths.append(path)
    return paths


#: zlib level of the PNG files. RGB at level 1 took 0.43 of the time of Matplotlib's own PNG
#: (RGBA, Pillow's default level 6) to encode the demo's ranking chart, 1340 x 2160 pixels,
#: and gave a file 16 % smaller (2026-12-03).
PNG_COMPRESS_LEVEL = 1


def _freeze_layout(fig: Figure, dpi: int) -> None:
    """Run the figure's layout engine once at ``dpi`` and switch it off."""
    engine = fig.get_layout_engine()
    if engine is None or isinstance(engine, PlaceHolderLayoutEngine):  # none, or already frozen
        return
    fig.set_dpi(dpi)
    engine.execute(fig)
    fig.set_layout_engine("none")


def write_png(fig: Figure, path: Path | str, dpi: int = 200) -> None:
    """Lay ``fig`` out (once), draw it on its Agg canvas at ``dpi`` and write it to ``path`` as
    an RGB PNG (no alpha channel: the figure is opaque white), zlib level
    :data:`PNG_COMPRESS_LEVEL`, no text chunks (the same figure gives the same bytes)."""
    from PIL import Image

    fig.patch.set_facecolor("white")
    _freeze_layout(fig, dpi)
    fig.set_dpi(dpi)
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()
    width, height = canvas.get_width_height(physical=True)
    image = Image.frombuffer("RGBA", (width, height), canvas.buffer_rgba(), "raw", "RGBA", 0, 1).convert("RGB")
    image.save(path, format="png", compress_level=PNG_COMPRESS_LEVEL, dpi=(dpi, dpi))
