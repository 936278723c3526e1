"""A year of operation of one case's design: the annual columns of its row and the points of its
year chart (orchestration: orcscreen.year reads the year, orcscreen.offdesign rates the design).

Columns: ``annual_energy_MWh`` (the sum over the bins of net power x hours, the bins where the
plant cannot run counting zero), ``capacity_factor`` (that energy over the design's net power
times the year's hours), ``hours_not_running``; the LCOE and the net present value are computed
again on the annual energy. Without a year the annual energy is the design's net power times
``economics.full_load_hours`` and the capacity factor those hours over 8,760.
"""

from __future__ import annotations

import dataclasses
import functools
import math

from . import costs, offdesign, year_design
from .year import HOURS_PER_YEAR, read_year

__all__ = ["YEAR_COLUMNS", "year_figures", "design_year_columns", "optimum_for_year"]

#: The row's columns of a year (with annual_energy_MWh, an economic column).
YEAR_COLUMNS = ("capacity_factor", "hours_not_running")


@functools.lru_cache(maxsize=8)
def _bins(path: str, sha256: str, bin_width_K: float):
    """The year's bins (read once per process and file content)."""
    return read_year(path, bin_width_K).bins


def design_year_columns(econ) -> dict:
    """Capacity factor and hours not running of a case without a year (full-load hours)."""
    hours = getattr(econ, "full_load_hours", math.nan)
    return {"capacity_factor": hours / HOURS_PER_YEAR, "hours_not_running": math.nan}


def optimum_for_year(layout, ctx, opt, section) -> tuple:
    """(optimum, notes, year): the design-point optimum opt, or with section.design_for = "year"
    the design searched for the year's energy (orcscreen.year_design) in its place, with its
    year already rated (offdesign.YearResult; None when not rated here)."""
    if section.design_for != "year" or opt.cycle.layout not in offdesign.SUPPORTED_LAYOUTS:
        return opt, [], None
    bins = _bins(section.resolved_path, section.sha256, section.bin_width_K)
    design, n, limit, note, year = year_design.design_for_year(layout, ctx, opt.cycle, bins, section.control)
    opt = dataclasses.replace(opt, cycle=design, evaluations=opt.evaluations + n,
                              binding_limit=opt.binding_limit if limit is None else limit)
    return opt, [note] if note else [], year


def year_figures(layout, ctx, design, section, row: dict, year=None) -> tuple[dict, dict | None, list[str]]:
    """(row columns, chart detail, notes) of the design result over the year of section (a
    validated [year] section with its resolved path); year: the design's YearResult when it is
    already rated (optimum_for_year), else rated here. The row's economics are used for the
    LCOE on the annual energy. A layout whose off-design is not modelled gets a note."""
    if design.layout not in offdesign.SUPPORTED_LAYOUTS:
        return ({"annual_energy_MWh": math.nan, "capacity_factor": math.nan, "hours_not_running": math.nan}, None,
                [f"year not rated: off-design of the {design.layout} layout is not modelled "
                 f"(only {', '.join(offdesign.SUPPORTED_LAYOUTS)})"])
    if year is None:
        bins = _bins(section.resolved_path, section.sha256, section.bin_width_K)
        year = offdesign.annual_energy(layout, ctx, offdesign.hardware_of(design, ctx), bins, design.W_net_W,
                                       section.control)
    out = {"annual_energy_MWh": year.energy_MWh, "capacity_factor": year.capacity_factor,
           "hours_not_running": year.hours_not_running}
    econ = ctx.settings.economics
    invest = row.get("investment_total", math.nan)
    if econ is not None and invest == invest:
        om = econ.om_fraction * invest
        out["lcoe_per_MWh"] = costs.levelised_cost(invest, om, econ.discount_rate, econ.lifetime_years, year.energy_MWh)
        price = econ.electricity_price_per_MWh
        if price is not None:
            crf = costs.capital_recovery_factor(econ.discount_rate, econ.lifetime_years)
            out["net_present_value"] = (price * year.energy_MWh - om) / crf - invest
    detail = {"sink_temperature_C": [b.sink_temperature_C for b, _ in year.points],
              "hours": [b.hours for b, _ in year.points],
              "net_power_kW": [p.W_net_W / 1e3 for _, p in year.points],
              "reason": [p.reason for _, p in year.points],
              "sink_flow_fraction": [p.sink_flow_fraction for _, p in year.points],
              "superheat_K": [p.superheat_K for _, p in year.points],
              "actions": [p.actions for _, p in year.points],
              "design_sink_temperature_C": ctx.sink.T_in_K - 273.15}
    notes = []
    if year.hours_not_running > 0:
        stopped = [(b, p) for b, p in year.points if p.reason]
        coldest = min(stopped, key=lambda bp: bp[0].sink_temperature_C)
        notes.append(f"not running {year.hours_not_running:.0f} h of the year ({len(stopped)} of {len(year.points)} bins); "
                     f"at {coldest[0].sink_temperature_C:.1f} °C: {coldest[1].reason}")
    return out, detail, notes
