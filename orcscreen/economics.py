"""What a designed plant costs and what its electricity costs: investment by component, specific
investment and the levelised cost of electricity (LCOE), in the study's currency and cost year.

The plant-cost models and their correlations live in :mod:`orcscreen.costs`; this module turns an
evaluated cycle into what they need (UA and area of each exchanger, the machines' powers, the
turbine's size and stages), brings each component's cost to the study's year with the cost
index and to its currency with the study's exchange rates, and adds the annuity.

Conventions (the README says the same):

* a component's cost is escalated in its own currency by the cost index (CEPCI, a US index,
  used for every currency, as is common practice for screening), then converted at the study's
  exchange rate (units of the study's currency per unit of the other, at the cost year);
* annual energy = net power x full-load hours; annual operation and maintenance = a fraction of
  the investment; LCOE = (CRF x investment + O&M) / annual energy, CRF the capital recovery
  factor (standard, e.g. Short, Packey, Holt, NREL/TP-462-5173, 1995, from memory); net present
  value, with an electricity price, = (price x energy - O&M) / CRF - investment.

Accuracy: screening estimates, about +-30 % at best (Lemmens, Energies 9 (2016) 485); the
report and the README say so.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from . import areas, costs
from .cycles import LAYOUTS

__all__ = ["Economics", "COMPONENTS", "ECONOMIC_COLUMNS", "economic_figures", "plant_for_cost", "areas_and_costs"]

#: Exchanger of the result (CycleResult.profiles) -> kind the cost models know; the condenser's
#: depends on the sink. An exchanger not here (the bleed layout's open feed heater, a vessel
#: without UA) is not costed.
_EXCHANGER_KIND = {"evaporator": "heater", "condenser": None, "recuperator": "recuperator"}  # None: the sink's

#: Components a plant can have, in the order of the columns: the layouts' exchangers that are
#: costed, then the machines (orcscreen.costs.MACHINES).
COMPONENTS = (*dict.fromkeys(e for layout in LAYOUTS.values() for e in layout.exchangers
                             if e in _EXCHANGER_KIND), *costs.MACHINES)

#: Columns of a result row this module fills, in order.
ECONOMIC_COLUMNS = (
    *(f"investment_{c}" for c in COMPONENTS), "investment_total", "specific_investment_per_kW",
    "annual_energy_MWh", "lcoe_per_MWh", "net_present_value",
)


@dataclass(frozen=True)
class Economics:
    """The [economics] settings of a case (years, fractions and hours as written; money in the
    study's currency)."""

    cost_model: str = "turbine-by-size-2014"
    currency: str = "EUR"
    cost_year: int = 2023
    #: cost index by year: the built-in CEPCI table with the study's own values over it
    cost_index: Mapping[int, float] = field(default_factory=lambda: dict(costs.CEPCI))
    #: units of the study's currency per unit of each other currency
    exchange_rates: Mapping[str, float] = field(default_factory=dict)
    discount_rate: float = 0.07
    lifetime_years: int = 25
    om_fraction: float = 0.02
    full_load_hours: float = 7500.0
    electricity_price_per_MWh: float | None = None

    @classmethod
    def from_section(cls, section) -> Economics:
        """From a validated [economics] section (orcscreen.study.EconomicsSection)."""
        index = dict(costs.CEPCI)
        index.update({int(y): float(v) for y, v in (section.cost_index or {}).items()})
        return cls(section.cost_model, section.currency, section.cost_year, index,
                   {k: float(v) for k, v in (section.exchange_rates or {}).items()}, section.discount_rate,
                   section.lifetime_years, section.om_fraction, section.full_load_hours,
                   section.electricity_price_per_MWh)

    @property
    def model(self):
        return costs.COST_MODELS[self.cost_model]

    def rate_of(self, currency: str) -> float:
        """Units of the study's currency per unit of currency (1 for its own)."""
        if currency == self.currency:
            return 1.0
        try:
            return self.exchange_rates[currency]
        except KeyError:
            raise costs.CostInputError(f"economics.exchange_rates has no rate for {currency} (the cost model "
                                       f"{self.cost_model!r} prices in it)") from None

    def in_study_money(self, cost: costs.Cost, default_currency: str, default_base_index: float) -> float:
        """A component's cost in the study's currency at its cost year."""
        currency = cost.currency or default_currency
        base = cost.base_index or default_base_index
        return cost.value * self.cost_index[self.cost_year] / base * self.rate_of(currency)


def _barg(p_Pa: float) -> float:
    return max(p_Pa / 1e5 - 1.01325, 0.0)


def plant_for_cost(r, areas: Mapping, condenser_kind: str, area_basis_factor: float = 1.0) -> costs.PlantForCost:
    """What the cost models need of an evaluated cycle r (CycleResult): its exchangers (UA [W/K]
    and area [m2] from areas, an orcscreen.areas.ExchangerArea by exchanger; condenser_kind
    "condenser" or "air_cooler"; the condenser area divided by area_basis_factor, e.g. a finned
    area brought to the bare-tube area a correlation expects), machines' powers, turbine size."""
    p_high = max(st.p_Pa for st in r.states.values())
    pressure = {"evaporator": p_high, "condenser": r.p_cond_Pa, "recuperator": p_high}
    exchangers = {}
    for name, a in areas.items():
        if name not in _EXCHANGER_KIND or not a.ua_W_K > 0.0:
            continue
        kind = _EXCHANGER_KIND[name] or condenser_kind
        area = a.area_m2 / area_basis_factor if _EXCHANGER_KIND[name] is None else a.area_m2
        exchangers[name] = costs.ExchangerForCost(kind, a.ua_W_K, area, _barg(pressure[name]))
    stages = getattr(r.turbine_design, "stages", math.nan)
    return costs.PlantForCost(
        exchangers=exchangers, pump_shaft_W=max(r.W_pump_W, 0.0), turbine_power_W=max(r.W_turbine_W, 0.0),
        turbine_size_parameter_m=r.size_parameter_m, turbine_stages=1 if stages != stages else stages,
        generator_power_W=max(r.W_turbine_W, 0.0), fan_power_W=max(r.W_aux_W, 0.0))


def economic_figures(plant: costs.PlantForCost, W_net_W: float, econ: Economics) -> tuple[dict, list[str]]:
    """(columns of :data:`ECONOMIC_COLUMNS`, warnings): investment by component and in total
    [study currency], specific investment [per kW net], annual energy [MWh], LCOE [per MWh] and,
    with an electricity price, the net present value."""
    model = econ.model
    parts = model.components(plant)
    warnings = [w for c in parts.values() for w in c.warnings]
    money = {k: econ.in_study_money(c, model.currency, model.base_index) for k, c in parts.items()}
    total = sum(money.values())
    energy_MWh = W_net_W / 1e6 * econ.full_load_hours
    om = econ.om_fraction * total
    crf = costs.capital_recovery_factor(econ.discount_rate, econ.lifetime_years)
    price = econ.electricity_price_per_MWh
    out = {f"investment_{c}": money.get(c, math.nan) for c in COMPONENTS}
    out.update({
        "investment_total": total,
        "specific_investment_per_kW": total / (W_net_W / 1e3) if W_net_W > 0.0 else math.nan,
        "annual_energy_MWh": energy_MWh,
        "lcoe_per_MWh": costs.levelised_cost(total, om, econ.discount_rate, econ.lifetime_years, energy_MWh),
        "net_present_value": math.nan if price is None else (price * energy_MWh - om) / crf - total,
    })
    return out, warnings


def areas_and_costs(r, source, sink, settings, notes: list[str]) -> tuple[dict, dict]:
    """(columns, areas) of an evaluated cycle r: the area of each exchanger [m2] (U values:
    orcscreen.areas' defaults, then the source's and sink's kinds, then the study's), the
    condenser's area basis and, with the settings' economics, the investment and LCOE columns
    (:func:`economic_figures`). What cannot be computed becomes a line of notes, never an error
    of the case; its columns stay out (NaN in a row)."""
    out: dict = {"condenser_area_basis": getattr(sink, "area_basis", "")}
    U = areas.zone_coefficients(source, sink, getattr(settings, "u_W_m2K", None))
    try:
        found = areas.exchanger_areas({k: p for k, p in r.profiles.items() if k in areas.EXCHANGERS}, U)
    except (KeyError, ValueError) as exc:
        notes.append(f"areas not computed: {exc}")
        return out, {}
    out.update({f"area_{k}_m2": a.area_m2 for k, a in found.items()})
    econ = getattr(settings, "economics", None)
    if econ is None or sink is None:
        return out, found
    try:
        plant = plant_for_cost(r, found, sink.condenser_cost_kind, sink.finned_to_bare_area_ratio)
        figures, cost_notes = economic_figures(plant, r.W_net_W, econ)
    except (ValueError, ArithmeticError) as exc:  # CostInputError is a ValueError
        notes.append(f"costs not computed: {exc}")
        return out, found
    out.update(figures)
    notes.extend(cost_notes)
    return out, found
