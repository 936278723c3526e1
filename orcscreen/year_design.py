"""The design chosen for the year (``[year] design_for = "year"``, an option): instead of the
design that makes the study's objective best at the design condition, the design's heater
pressure (the evaporation temperature, or a supercritical heater's pressure: the layout's
``hot_side.variable``) is searched for the most net energy over the year, each candidate
design's hardware rated bin by bin (orcscreen.offdesign).

The search (Brent's bounded method, orcscreen.brent, to YEAR_XATOL of the variable's
window) rates each
candidate on at most REPRESENTATIVE_BINS bins: consecutive bins merged into groups of about
equal hours, each group at its hour-weighted mean sink temperature (our choice; the year's own
bins when they carry source values). The design found is then rated on every bin and kept only
when it beats the design-point optimum's year there. Other free variables (an optimised
superheat, a turbine inlet temperature) stay at the design-point optimum's values. It costs many design optimisations per
case (figures in benchmarks/bench_year.py), hence an option.
"""

from __future__ import annotations

import math

from . import offdesign
from .year import Bin

__all__ = ["REPRESENTATIVE_BINS", "YEAR_XATOL", "representative_bins", "design_for_year"]

#: Most bins a candidate design is rated on during the search (our choice).
REPRESENTATIVE_BINS = 8

#: Tolerance of the searched variable, as a fraction of its window (our choice: about 0.05 K of
#: a 60 K evaporation window).
YEAR_XATOL = 1e-3


def representative_bins(bins, n: int = REPRESENTATIVE_BINS) -> list:
    """At most n bins standing for the year: consecutive bins (sorted by sink temperature) merged
    into groups of about equal hours, each at its hour-weighted mean temperature with the group's
    hours. Bins with source values are returned as they are (they cannot be merged by sink
    temperature alone)."""
    bins = list(bins)
    if len(bins) <= n or any(b.source_temperature_C is not None or b.source_mass_flow_kg_s is not None for b in bins):
        return bins
    total = sum(b.hours for b in bins)
    groups, current, filled = [], [], 0.0
    for b in sorted(bins, key=lambda b: b.sink_temperature_C):
        current.append(b)
        filled += b.hours
        if filled >= total * (len(groups) + 1) / n - 1e-9 and len(groups) < n - 1:
            groups.append(current)
            current = []
    if current:
        groups.append(current)
    out = []
    for g in groups:
        hours = sum(b.hours for b in g)
        if hours > 0:
            out.append(Bin(sum(b.sink_temperature_C * b.hours for b in g) / hours, hours))
    return out


def design_for_year(layout, ctx, design, bins, control: str):
    """(design, evaluations, binding limit, note, year): the exact, feasible design of the layout
    whose year on bins is best, starting from the design-point optimum design (kept, with its
    binding limit None, when no other does better over every bin), the designs evaluated, a
    note, and the chosen design's year on every bin (orcscreen.offdesign.YearResult, None where
    the layout has no such variable: the caller rates it)."""
    from .brent import minimize_scalar_bounded

    name = layout.hot_side.variable
    var = next((v for v in layout.variables(ctx) if v.name == name), None)
    if var is None:
        return design, 0, None, "", None
    outer = {k: v for k, v in design.variables.items() if k != name}
    window = layout.window(ctx, name, outer)
    xatol = YEAR_XATOL * (window.hi - window.lo)
    few = representative_bins(bins)
    tried: dict[float, float] = {}

    def rated(x: float, on):
        """(design at x, its YearResult over the bins on, or None where infeasible)."""
        r = layout.evaluate(ctx, {**design.variables, name: x}, exact=True)
        if not r.ok:
            return r, None
        return r, offdesign.annual_energy(layout, ctx, offdesign.hardware_of(r, ctx), on, r.W_net_W, control)

    def loss(x: float) -> float:
        year = rated(float(x), few)[1]
        tried[float(x)] = -math.inf if year is None else year.energy_MWh
        return -tried[float(x)]

    minimize_scalar_bounded(loss, (window.lo, window.hi), xatol=xatol)
    n = len(tried) + 2
    x_best = max(tried, key=tried.get)
    base = offdesign.annual_energy(layout, ctx, offdesign.hardware_of(design, ctx), bins, design.W_net_W, control)
    if not math.isfinite(tried[x_best]):
        return design, n, None, "designed for the year: no other design runs, the design point's optimum kept", base
    r, year = rated(x_best, bins)
    if year is None or year.energy_MWh <= base.energy_MWh:
        return design, n, None, "designed for the year: the design point's optimum is also the year's", base
    at = (window.lo_name if x_best - window.lo < 2 * xatol else
          window.hi_name if window.hi - x_best < 2 * xatol else "none (the year's interior optimum)")
    gain = (f"{year.energy_MWh / base.energy_MWh - 1.0:+.2%}" if base.energy_MWh > 0
            else f"{year.energy_MWh:.0f} MWh instead of none")
    note = (f"designed for the year: {var.label} {_shown(var, x_best)} instead of "
            f"{_shown(var, design.variables[name])}, {gain} energy over the year, "
            f"{r.W_net_W / design.W_net_W - 1.0:+.2%} net power at the design point")
    return r, n, at, note, year


def _shown(var, value: float) -> str:
    """A free variable's SI value in its display unit."""
    return f"{var.display(value):.4g}" + (f" {var.unit}" if var.unit != "-" else "")
