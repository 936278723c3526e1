"""Component costs of an ORC plant: correlations, cost index, annuity, and the plant-cost models.

Pure functions and small frozen dataclasses; SI inputs (m2, W, W/K, m). Every cost is a
:class:`Cost` (value, warnings, and the money it is in: currency, cost year, cost index), so a
caller can convert the components of a model to one currency and year. No currency exchange
rates live here.

Accuracy: screening estimates. The best estimation techniques reach 10-30 % (Lemmens, S.,
"Cost engineering techniques and their applicability for cost estimation of organic Rankine
cycle systems", Energies 9 (2016) 485, doi:10.3390/en9070485); read every figure here as about
+-30 % at best, and never as a quotation.

Sources:
    Turton, R., Bailie, R. C., Whiting, W. B., Shaeiwitz, J. A., Bhattacharyya, D., *Analysis,
    Synthesis, and Design of Chemical Processes*, 4th ed., Prentice Hall 2012, Appendix A
    (purchased cost, pressure, material and bare-module factors; as transcribed in secondary
    copies, see :data:`TURTON_EQUIPMENT`).
    Astolfi, M., Romano, M. C., Bombarda, P., Macchi, E., "Binary ORC (organic Rankine cycles)
    power plants for the exploitation of medium-low temperature geothermal sources - Part B:
    Techno-economic optimization", Energy 66 (2014) 435-446, doi:10.1016/j.energy.2013.11.057
    (ORC component cost functions, as transcribed in a secondary copy).
    Chemical Engineering Plant Cost Index (CEPCI), Chemical Engineering magazine, annual averages
    as transcribed in secondary copies (:data:`CEPCI`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar, Protocol

__all__ = [
    "CostInputError",
    "Cost",
    "CEPCI",
    "TURTON_BASE_CEPCI",
    "TURTON_COST_YEAR",
    "index_ratio",
    "capital_recovery_factor",
    "levelised_cost",
    "TurtonEquipment",
    "TURTON_EQUIPMENT",
    "TURTON_MATERIAL_FACTORS",
    "TURTON_TURBINE_BARE_MODULE_FACTORS",
    "material_factor",
    "pressure_factor",
    "units_needed",
    "purchased_cost",
    "bare_module_cost",
    "ASTOLFI_COST_YEAR",
    "astolfi_turbine_cost",
    "astolfi_generator_cost",
    "astolfi_primary_exchanger_cost",
    "astolfi_recuperator_cost",
    "astolfi_pump_cost",
    "EXCHANGER_KINDS",
    "ExchangerForCost",
    "PlantForCost",
    "CostModel",
    "TurbineBySize2014",
    "BareModule2001",
    "COST_MODELS",
]


class CostInputError(ValueError):
    """An input a cost function cannot take; the message names the value and what is allowed."""


@dataclass(frozen=True)
class Cost:
    """A cost and what to know about it.

    value [currency units]; warnings: soft limits passed (the value stands); currency (ISO 4217
    code), cost_year and base_index (the CEPCI the value is at): the money the value is in.
    """

    value: float
    warnings: tuple[str, ...] = ()
    currency: str | None = None
    cost_year: int | None = None
    base_index: float | None = None


def _finite(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise CostInputError(f"{name} {value!r} is not a number") from None
    if not math.isfinite(v):
        raise CostInputError(f"{name} {value!r} must be a finite number")
    return v


def _positive(name: str, value, unit: str) -> float:
    v = _finite(name, value)
    if v <= 0.0:
        raise CostInputError(f"{name} {value!r}{' ' + unit if unit else ''} must be positive")
    return v


# -- cost index ------------------------------------------------------------------------------------

#: Chemical Engineering Plant Cost Index, annual averages as transcribed in secondary copies
#: (several agree; ../shared/REFERENCES.md section 3). Only the years read there are listed.
CEPCI: dict[int, float] = {
    2001: 394.3,
    2010: 550.8,
    2013: 567.3,
    2014: 576.1,
    2015: 556.8,
    2016: 541.7,
    2017: 567.5,
    2018: 603.1,
    2019: 607.5,
    2020: 596.2,
    2021: 708.0,
    2022: 816.0,
    2023: 797.9,
}

#: CEPCI of Turton's purchased-cost correlations (September 2001; 4th ed., Appendix A) [-]:
#: not the 2001 annual average (394.3).
TURTON_BASE_CEPCI = 397.0
TURTON_COST_YEAR = 2001


def index_ratio(to_year: int, from_year: int, table: dict[int, float] = CEPCI) -> float:
    """Cost-index ratio I(to_year) / I(from_year) [-] that brings a cost from one year to another.

    table: year -> index (default :data:`CEPCI`, annual averages). A year not in the table raises
    :class:`CostInputError` naming the year and the years available.
    """
    for year in (to_year, from_year):
        if year not in table:
            raise CostInputError(
                f"cost index year {year!r} is not in the table; years available: {', '.join(str(y) for y in sorted(table))}")
    return table[to_year] / table[from_year]


# -- annuity -------------------------------------------------------------------------------------------

def capital_recovery_factor(rate: float, years: float) -> float:
    """Capital recovery factor CRF = i (1+i)^n / ((1+i)^n - 1) [1/year] (standard annuity).

    rate i: real discount rate per year [-] (0.08 for 8 %), at least 0 (i = 0 gives 1/n);
    years n: economic lifetime [year], at least 1.
    """
    i = _finite("discount rate", rate)
    n = _finite("lifetime", years)
    if i < 0.0:
        raise CostInputError(f"discount rate {rate!r} must be at least 0 (a fraction per year, 0.08 for 8 %)")
    if n < 1.0:
        raise CostInputError(f"lifetime {years!r} years must be at least 1")
    if i == 0.0:
        return 1.0 / n
    g = (1.0 + i) ** n
    return i * g / (g - 1.0)


def levelised_cost(investment: float, annual_om: float, rate: float, years: float, annual_energy: float) -> float:
    """Levelised cost of energy LCOE = (CRF investment + annual O&M) / annual energy (standard).

    investment [currency]; annual_om [currency/year]; rate, years as in
    :func:`capital_recovery_factor`; annual_energy [energy unit/year, e.g. kWh or MWh]. The result
    is in currency per that energy unit; NaN when the annual energy is not positive.
    """
    crf = capital_recovery_factor(rate, years)
    if not annual_energy > 0.0:
        return math.nan
    return (crf * investment + annual_om) / annual_energy


# -- Turton et al., Appendix A -------------------------------------------------------------------------

#: Capacity units of Turton's table: unit -> (what it measures, SI unit, SI units per table unit).
_CAPACITY_UNITS: dict[str, tuple[str, str, float]] = {"m2": ("area", "m2", 1.0), "kW": ("power", "W", 1e3)}


@dataclass(frozen=True)
class TurtonEquipment:
    """One line of Turton's equipment-cost data (4th ed., Appendix A).

    Purchased cost, carbon steel (cast iron for pumps), near-ambient pressure, CEPCI 397:
    log10 Cp0 = K1 + K2 log10 A + K3 (log10 A)^2, A the capacity in ``capacity_unit`` (m2 or kW),
    fitted for capacity_min..capacity_max. Exchangers and pumps: C_BM = Cp0 (B1 + B2 F_M F_P)
    with log10 F_P = C1 + C2 log10 P + C3 (log10 P)^2, P in barg inside ``pressure_range_barg``.
    Turbines: C_BM = Cp0 F_BM (F_BM for carbon steel; others in
    :data:`TURTON_TURBINE_BARE_MODULE_FACTORS`). area_basis: the area the fit is on (exchangers);
    material_group: key of :data:`TURTON_MATERIAL_FACTORS` (None for turbines).
    """

    name: str
    capacity_unit: str
    K1: float
    K2: float
    K3: float
    capacity_min: float
    capacity_max: float
    B1: float | None
    B2: float | None
    F_BM: float | None
    pressure_C: tuple[float, float, float] | None
    pressure_range_barg: tuple[float, float] | None
    area_basis: str | None
    material_group: str | None = None

    def __post_init__(self):
        if self.capacity_unit not in _CAPACITY_UNITS:
            raise ValueError(f"capacity unit {self.capacity_unit!r} is not one of {sorted(_CAPACITY_UNITS)}")
        if (self.F_BM is None) == (self.B1 is None or self.B2 is None):
            raise ValueError(f"{self.name}: give either B1 and B2 (exchangers, pumps) or F_BM (turbines)")


_SHELL_AND_TUBE_FP = (0.03881, -0.11272, 0.08183)  # shell and tube both at pressure, 5-140 barg [C-sec]

#: Turton's equipment (4th ed., Appendix A), name -> data. K1-K3, B1, B2, F_BM: as transcribed in
#: secondary copies (../shared/REFERENCES.md section 3). Capacity ranges: from memory, and one
#: secondary copy (a public Python transcription of Appendix A) gives the same ranges.
#: Pressure factors: pumps 10-100 barg [C-sec]; shell and tube 5-140 barg [C-sec: a copy of
#: Table A.2, "both shell and tube"; the "tube only" line, -0.00164, -0.00627, 0.0123, is not
#: used]; double pipe 40-100 barg, air cooler 10-100 barg, flat plate C = 0 up to 19 barg: from
#: memory (each meets F_P = 1 at the lower end of its range, as a continuous fit should).
#: Edition: the axial-turbine K1 = 2.7051 (100-4000 kW) is the 4th-edition reading; another copy
#: gives K1 = 2.6259 for 70-7,500 kW, taken to be another edition's line (not used).
TURTON_EQUIPMENT: dict[str, TurtonEquipment] = {e.name: e for e in (
    TurtonEquipment("fixed tube sheet", "m2", 4.3247, -0.3030, 0.1634, 10.0, 1000.0, 1.63, 1.66, None,
                    _SHELL_AND_TUBE_FP, (5.0, 140.0), "heat-transfer area", "shell-and-tube"),
    TurtonEquipment("floating head", "m2", 4.8306, -0.8509, 0.3187, 10.0, 1000.0, 1.63, 1.66, None,
                    _SHELL_AND_TUBE_FP, (5.0, 140.0), "heat-transfer area", "shell-and-tube"),
    TurtonEquipment("kettle", "m2", 4.4646, -0.5277, 0.3955, 10.0, 100.0, 1.63, 1.66, None,
                    _SHELL_AND_TUBE_FP, (5.0, 140.0), "heat-transfer area", "shell-and-tube"),
    TurtonEquipment("double pipe", "m2", 3.3444, 0.2745, -0.0472, 1.0, 10.0, 1.74, 1.55, None,
                    (0.6072, -0.9120, 0.3327), (40.0, 100.0), "heat-transfer area", "shell-and-tube"),
    TurtonEquipment("air cooler", "m2", 4.0336, 0.2341, 0.0497, 10.0, 10000.0, 0.96, 1.21, None,
                    (-0.1250, 0.15361, -0.02861), (10.0, 100.0), "bare-tube area (without fins)", "air cooler"),
    TurtonEquipment("flat plate", "m2", 4.6656, -0.1557, 0.1547, 10.0, 1000.0, 0.96, 1.21, None,
                    (0.0, 0.0, 0.0), (0.0, 19.0), "heat-transfer area", "plate"),
    TurtonEquipment("centrifugal pump", "kW", 3.3892, 0.0536, 0.1538, 1.0, 300.0, 1.89, 1.35, None,
                    (-0.3935, 0.3957, -0.00226), (10.0, 100.0), None, "pump"),
    TurtonEquipment("axial turbine", "kW", 2.7051, 1.4398, -0.1776, 100.0, 4000.0, None, None, 3.5,
                    None, None, None, None),
    TurtonEquipment("radial turbine", "kW", 2.2476, 1.4965, -0.1618, 100.0, 1500.0, None, None, 3.5,
                    None, None, None, None),
)}

#: Material factors F_M of Turton (4th ed., Appendix A), as transcribed in secondary copies
#: (../shared/REFERENCES.md section 3), per equipment group -> material -> F_M [-].
#: CS carbon steel, SS stainless steel, Al aluminium; shell-and-tube as shell/tubes. The double
#: pipe takes the shell-and-tube factors (from memory: one figure of factors covers both).
TURTON_MATERIAL_FACTORS: dict[str, dict[str, float]] = {
    "shell-and-tube": {"CS/CS": 1.0, "CS/SS": 1.81, "SS/SS": 2.73},
    "plate": {"CS": 1.0, "SS": 2.45},
    "air cooler": {"CS": 1.0, "Al": 1.42},
    "pump": {"cast iron": 1.0, "CS": 1.6, "SS": 2.3},
}

#: Bare-module factors F_BM of Turton's turbines by material [-] (secondary copies, as above);
#: an SS turbine: ``dataclasses.replace(TURTON_EQUIPMENT["axial turbine"], F_BM=...["SS"])``.
TURTON_TURBINE_BARE_MODULE_FACTORS: dict[str, float] = {"CS": 3.5, "SS": 6.1, "Ni alloy": 11.7}


def material_factor(eq: TurtonEquipment, material: str) -> float:
    """Turton's material factor F_M [-] of a material for an exchanger or a pump.

    material: a key of the equipment's group in :data:`TURTON_MATERIAL_FACTORS`. Turbines take
    their material through F_BM (:data:`TURTON_TURBINE_BARE_MODULE_FACTORS`), not F_M.
    """
    if eq.material_group is None:
        raise CostInputError(
            f"{eq.name}: its material enters through the bare-module factor F_BM "
            f"({', '.join(f'{k} {v:g}' for k, v in TURTON_TURBINE_BARE_MODULE_FACTORS.items())}), not F_M")
    factors = TURTON_MATERIAL_FACTORS[eq.material_group]
    if material not in factors:
        raise CostInputError(f"{eq.name}: material {material!r} is not one of {', '.join(factors)}")
    return factors[material]


def _capacity(eq: TurtonEquipment, capacity_si: float) -> tuple[float, str]:
    """The capacity in the table's unit, and its description for messages."""
    what, si_unit, si_per_unit = _CAPACITY_UNITS[eq.capacity_unit]
    label = f"{eq.name} {what}"
    value = _positive(label, capacity_si, si_unit) / si_per_unit
    return value, label


def units_needed(eq: TurtonEquipment, capacity: float) -> int:
    """Number of equal parallel units n = ceil(A / A_max) that keeps each unit inside Turton's
    range (at least 1). capacity: area [m2] or power [W] (SI, converted to the table's kW here)."""
    a, _ = _capacity(eq, capacity)
    return max(1, math.ceil(a / eq.capacity_max))


def _log10_cp(eq: TurtonEquipment, a: float) -> float:
    x = math.log10(a)
    return eq.K1 + eq.K2 * x + eq.K3 * x * x


def _purchased(eq: TurtonEquipment, capacity: float, parallel_units: bool) -> tuple[float, tuple[str, ...]]:
    a, label = _capacity(eq, capacity)
    unit = eq.capacity_unit
    rng = f"Turton's range {eq.capacity_min:g}-{eq.capacity_max:g} {unit}"
    if parallel_units and a > eq.capacity_max:
        n = units_needed(eq, capacity)
        return n * 10.0 ** _log10_cp(eq, a / n), (
            f"{label} {a:g} {unit} is above {rng}: costed as {n} equal parallel units of {a / n:g} {unit}",)
    warnings = () if eq.capacity_min <= a <= eq.capacity_max else (
        f"{label} {a:g} {unit} is outside {rng}: the correlation is extrapolated",)
    return 10.0 ** _log10_cp(eq, a), warnings


def purchased_cost(eq: TurtonEquipment, capacity: float, parallel_units: bool = False) -> Cost:
    """Purchased cost Cp0 [USD at CEPCI 397, Sept. 2001] of Turton's base equipment (carbon
    steel, cast-iron pump, near-ambient pressure): log10 Cp0 = K1 + K2 log10 A + K3 (log10 A)^2.

    capacity: area [m2] for exchangers (on the equipment's ``area_basis``), power [W] for pumps
    (shaft) and turbines (fluid power); the table's kW are reached here. Outside the fitted range
    the correlation is evaluated at the capacity given (no clamp) and a warning names the range.
    parallel_units: above the range, cost n = ceil(A / A_max) equal units of A / n each
    (Turton's practice for a capacity beyond the largest unit; :func:`units_needed`) and say so.
    Source: Turton et al., 4th ed. 2012, Appendix A (coefficients as in secondary copies).
    """
    value, warnings = _purchased(eq, capacity, parallel_units)
    return Cost(value, warnings, "USD", TURTON_COST_YEAR, TURTON_BASE_CEPCI)


def pressure_factor(eq: TurtonEquipment, pressure_barg: float) -> tuple[float, tuple[str, ...]]:
    """Turton's pressure factor F_P [-] and warnings: log10 F_P = C1 + C2 log10 P + C3 (log10 P)^2
    with P [barg] inside the equipment's pressure range; F_P = 1 below the range (and for
    equipment without pressure coefficients); above it the fit is extrapolated with a warning."""
    p = _finite(f"{eq.name} pressure (barg)", pressure_barg)
    if eq.pressure_C is None or eq.pressure_range_barg is None:
        return 1.0, ()
    lo, hi = eq.pressure_range_barg
    if p < lo:
        return 1.0, ()
    c1, c2, c3 = eq.pressure_C
    x = math.log10(p) if p > 0.0 else 0.0  # p = lo = 0 only for a zero-coefficient line
    warnings = () if p <= hi else (
        f"{eq.name} pressure {p:g} barg is above Turton's pressure range {lo:g}-{hi:g} barg: the pressure factor is extrapolated",)
    return 10.0 ** (c1 + c2 * x + c3 * x * x), warnings


def bare_module_cost(eq: TurtonEquipment, capacity: float, pressure_barg: float = 0.0,
                     material_factor: float = 1.0, parallel_units: bool = False) -> Cost:
    """Bare-module cost C_BM [USD at CEPCI 397, Sept. 2001] (purchase plus direct and indirect
    installation costs) of Turton's equipment.

    Exchangers and pumps: C_BM = Cp0 (B1 + B2 F_M F_P), F_P from :func:`pressure_factor` at
    pressure_barg [barg], material_factor F_M [-] (:func:`material_factor`; 1 = base material).
    Turbines: C_BM = Cp0 F_BM (the pressure does not enter; material through F_BM, so
    material_factor must stay 1). capacity and parallel_units as in :func:`purchased_cost`.
    Source: Turton et al., 4th ed. 2012, Appendix A (factors as in secondary copies).
    """
    f_m = _positive(f"{eq.name} material factor", material_factor, "")
    cp, warnings = _purchased(eq, capacity, parallel_units)
    if eq.F_BM is not None:
        if f_m != 1.0:
            raise CostInputError(
                f"{eq.name}: material factor {material_factor!r} does not apply; its material enters through "
                f"F_BM ({', '.join(f'{k} {v:g}' for k, v in TURTON_TURBINE_BARE_MODULE_FACTORS.items())})")
        return Cost(cp * eq.F_BM, warnings, "USD", TURTON_COST_YEAR, TURTON_BASE_CEPCI)
    f_p, p_warnings = pressure_factor(eq, pressure_barg)
    return Cost(cp * (eq.B1 + eq.B2 * f_m * f_p), warnings + p_warnings, "USD", TURTON_COST_YEAR, TURTON_BASE_CEPCI)


# -- Astolfi et al. 2014, Part B -------------------------------------------------------------------------

ASTOLFI_COST_YEAR = 2014
_ASTOLFI_SOURCE = "Astolfi et al., Energy 66 (2014) 435"


def _astolfi(value: float) -> Cost:
    return Cost(value, (), "EUR", ASTOLFI_COST_YEAR, CEPCI[ASTOLFI_COST_YEAR])


def astolfi_turbine_cost(stages: int, size_parameter_m: float) -> Cost:
    """ORC turbine cost [EUR of 2014] = 1.23e6 (n_stages / 2)^0.5 (SP / 0.18 m)^1.1.

    stages: number of stages (whole number, at least 1); size_parameter_m: SP [m] (Macchi and
    Perdichizzi's size parameter, :func:`orcscreen.turbine.size_parameter_m`). Validity range not
    given in the copy read. Source: Astolfi, Romano, Bombarda, Macchi, Energy 66 (2014) 435
    (Part B), as transcribed in a secondary copy.
    """
    n = _finite("turbine stages", stages)
    if n < 1 or n != int(n):
        raise CostInputError(f"turbine stages {stages!r} must be a whole number of at least 1")
    sp = _positive("turbine size parameter", size_parameter_m, "m")
    return _astolfi(1.23e6 * (n / 2.0) ** 0.5 * (sp / 0.18) ** 1.1)


def astolfi_generator_cost(power_W: float) -> Cost:
    """Generator cost [EUR of 2014] = 0.2e6 (W_el / 5 MW)^0.67. power_W: electric power [W].
    Validity range not given in the copy read. Source: Astolfi et al., Energy 66 (2014) 435
    (Part B), as transcribed in a secondary copy."""
    return _astolfi(0.2e6 * (_positive("generator power", power_W, "W") / 5e6) ** 0.67)


def astolfi_primary_exchanger_cost(ua_W_K: float) -> Cost:
    """Primary heat exchanger cost [EUR of 2014] = 1.5e6 (UA / 4000 kW/K)^0.9. ua_W_K: UA [W/K].
    Validity range not given in the copy read. Source: Astolfi et al., Energy 66 (2014) 435
    (Part B), as transcribed in a secondary copy."""
    return _astolfi(1.5e6 * (_positive("exchanger UA", ua_W_K, "W/K") / 4e6) ** 0.9)


def astolfi_recuperator_cost(ua_W_K: float) -> Cost:
    """Recuperator cost [EUR of 2014] = 0.26e6 (UA / 650 kW/K)^0.9. ua_W_K: UA [W/K].
    Validity range not given in the copy read. Source: Astolfi et al., Energy 66 (2014) 435
    (Part B), as transcribed in a secondary copy."""
    return _astolfi(0.26e6 * (_positive("recuperator UA", ua_W_K, "W/K") / 6.5e5) ** 0.9)


def astolfi_pump_cost(power_W: float) -> Cost:
    """Feed pump cost [EUR of 2014] = 14e3 (W_pump / 200 kW)^0.67. power_W: pump power [W] (we
    pass the shaft power). Validity range not given in the copy read. Source: Astolfi et al.,
    Energy 66 (2014) 435 (Part B), as transcribed in a secondary copy."""
    return _astolfi(14e3 * (_positive("pump power", power_W, "W") / 2e5) ** 0.67)


# -- the plant and the plant-cost models --------------------------------------------------------------

#: Kinds of exchanger a plant-cost model prices; each model maps every kind to a correlation.
EXCHANGER_KINDS: tuple[str, ...] = ("heater", "condenser", "recuperator", "air_cooler")
MACHINES = ("pump", "turbine", "generator")


@dataclass(frozen=True)
class ExchangerForCost:
    """An exchanger as the cost models see it.

    kind: one of :data:`EXCHANGER_KINDS`; ua_W_K: UA [W/K]; area_m2: area [m2] on the basis the
    area-based model expects (bare-tube area for an air cooler), NaN if unknown;
    max_pressure_barg: highest pressure of its two sides [barg].
    """

    kind: str
    ua_W_K: float
    area_m2: float = math.nan
    max_pressure_barg: float = 0.0

    def __post_init__(self):
        if self.kind not in EXCHANGER_KINDS:
            raise CostInputError(f"exchanger kind {self.kind!r} is not one of {', '.join(EXCHANGER_KINDS)}")


@dataclass(frozen=True, kw_only=True)
class PlantForCost:
    """What the cost models need of a designed plant (SI).

    exchangers: name -> :class:`ExchangerForCost`; the name is the component key of the result
    (usually the kind). pump_shaft_W, turbine_power_W (fluid or shaft power of the expansion),
    generator_power_W [W]: a machine whose power is 0 is absent. turbine_size_parameter_m [m]
    and turbine_stages: the turbine's size parameter and stage count (NaN where the turbine
    model knows none). fan_power_W [W]: air-cooler fans; no model here costs fans apart from the
    air cooler (the figure is for the energy balance).
    """

    exchangers: dict[str, ExchangerForCost]
    pump_shaft_W: float
    turbine_power_W: float
    turbine_size_parameter_m: float
    turbine_stages: float
    generator_power_W: float
    fan_power_W: float = 0.0

    def __post_init__(self):
        for name, ex in self.exchangers.items():
            if not isinstance(ex, ExchangerForCost):
                raise CostInputError(f"exchanger {name!r} is a {type(ex).__name__}, not an ExchangerForCost")
            if name in MACHINES:
                raise CostInputError(f"exchanger name {name!r} is taken by a machine ({', '.join(MACHINES)})")
        for label, value in (("pump shaft power", self.pump_shaft_W), ("turbine power", self.turbine_power_W),
                             ("generator power", self.generator_power_W), ("fan power", self.fan_power_W)):
            if _finite(label, value) < 0.0:
                raise CostInputError(f"{label} {value!r} W must not be negative")


class CostModel(Protocol):
    """A plant-cost model: one currency and cost year for the components it prices itself."""

    name: str
    #: ISO 4217 code of the model's money, and every currency its components come in
    currency: str
    currencies: tuple[str, ...]
    #: year of the model's money, and the CEPCI it is at
    cost_year: int
    base_index: float
    #: True when exchangers are costed by area (the plant must carry areas), else by UA
    area_based: bool

    def components(self, plant: PlantForCost) -> dict[str, Cost]:
        """Cost of each component present, by component key."""
        ...


@dataclass(frozen=True)
class TurbineBySize2014:
    """ORC component costs of Astolfi et al. (2014, Part B) [EUR of 2014].

    Exchangers by UA: heater, condenser and air cooler as primary heat exchangers, recuperator by
    its own function; pump by its shaft power; turbine by size parameter and stages; generator by
    electric power. Validity ranges not given in the copy read. What the figures include (purchase
    or installed) follows the paper and was not read in the copy.
    Sources: Astolfi, Romano, Bombarda, Macchi, Energy 66 (2014) 435 (functions as transcribed
    in a secondary copy); accuracy: a screening estimate, about +-30 % at best (Lemmens,
    Energies 9 (2016) 485).
    """

    name: ClassVar[str] = "turbine-by-size-2014"
    currency: ClassVar[str] = "EUR"
    #: every currency its components come in
    currencies: ClassVar[tuple[str, ...]] = ("EUR",)
    cost_year: ClassVar[int] = ASTOLFI_COST_YEAR
    base_index: ClassVar[float] = CEPCI[ASTOLFI_COST_YEAR]
    area_based: ClassVar[bool] = False
    #: exchanger kind -> cost function of UA [W/K]
    EXCHANGER_COST: ClassVar[dict] = {
        "heater": astolfi_primary_exchanger_cost,
        "condenser": astolfi_primary_exchanger_cost,
        "recuperator": astolfi_recuperator_cost,
        "air_cooler": astolfi_primary_exchanger_cost,
    }

    def components(self, plant: PlantForCost) -> dict[str, Cost]:
        out = {name: self.EXCHANGER_COST[ex.kind](ex.ua_W_K) for name, ex in plant.exchangers.items()}
        if plant.pump_shaft_W > 0.0:
            out["pump"] = astolfi_pump_cost(plant.pump_shaft_W)
        if plant.turbine_power_W > 0.0:
            if not (plant.turbine_size_parameter_m > 0.0 and plant.turbine_stages >= 1):
                raise CostInputError(
                    f"{self.name} costs the turbine by its size parameter and stages; got size parameter "
                    f"{plant.turbine_size_parameter_m!r} m and stages {plant.turbine_stages!r} (choose a size-dependent turbine model)")
            out["turbine"] = astolfi_turbine_cost(plant.turbine_stages, plant.turbine_size_parameter_m)
        if plant.generator_power_W > 0.0:
            out["generator"] = astolfi_generator_cost(plant.generator_power_W)
        return out


@dataclass(frozen=True)
class BareModule2001:
    """Bare-module costs of Turton et al. (4th ed. 2012, Appendix A) [USD at CEPCI 397, Sept. 2001].

    Heater, condenser, recuperator: floating-head shell-and-tube by area, with the shell-and-tube
    pressure factor at the exchanger's highest pressure; air cooler: by bare-tube area; pump:
    centrifugal, by shaft power, pressure factor at the highest exchanger pressure (the pump's
    discharge); turbine: axial, by the turbine power, F_BM of carbon steel. Base materials
    throughout (F_M = 1). Above a fitted range, equal parallel units (Turton's practice), with a
    warning. The generator is not in Turton's table: it is costed with the generator function of
    Astolfi et al. (2014) in EUR of 2014 (its Cost says so; convert it before adding), a
    purchase figure, not a bare-module one.
    Sources: Turton et al. 2012 (coefficients as transcribed in secondary copies); Astolfi,
    Romano, Bombarda, Macchi, Energy 66 (2014) 435 (generator); accuracy: a screening estimate,
    about +-30 % at best (Lemmens, Energies 9 (2016) 485).
    """

    name: ClassVar[str] = "bare-module-2001"
    currency: ClassVar[str] = "USD"
    #: every currency its components come in (the generator's is EUR)
    currencies: ClassVar[tuple[str, ...]] = ("USD", "EUR")
    cost_year: ClassVar[int] = TURTON_COST_YEAR
    base_index: ClassVar[float] = TURTON_BASE_CEPCI
    area_based: ClassVar[bool] = True
    #: exchanger kind -> Turton equipment
    EXCHANGER_EQUIPMENT: ClassVar[dict[str, str]] = {
        "heater": "floating head",
        "condenser": "floating head",
        "recuperator": "floating head",
        "air_cooler": "air cooler",
    }
    PUMP: ClassVar[str] = "centrifugal pump"
    TURBINE: ClassVar[str] = "axial turbine"

    def components(self, plant: PlantForCost) -> dict[str, Cost]:
        out: dict[str, Cost] = {}
        for name, ex in plant.exchangers.items():
            if not (ex.area_m2 > 0.0 and math.isfinite(ex.area_m2)):
                raise CostInputError(
                    f"{self.name} costs exchangers by area; exchanger {name!r} has area {ex.area_m2!r} m2 "
                    "(give areas from UA and U values)")
            eq = TURTON_EQUIPMENT[self.EXCHANGER_EQUIPMENT[ex.kind]]
            out[name] = _named(name, bare_module_cost(eq, ex.area_m2, ex.max_pressure_barg, parallel_units=True))
        if plant.pump_shaft_W > 0.0:
            p_max = max((ex.max_pressure_barg for ex in plant.exchangers.values()), default=0.0)
            out["pump"] = _named("pump", bare_module_cost(TURTON_EQUIPMENT[self.PUMP], plant.pump_shaft_W, p_max,
                                                          parallel_units=True))
        if plant.turbine_power_W > 0.0:
            out["turbine"] = _named("turbine", bare_module_cost(TURTON_EQUIPMENT[self.TURBINE], plant.turbine_power_W,
                                                                parallel_units=True))
        if plant.generator_power_W > 0.0:
            out["generator"] = astolfi_generator_cost(plant.generator_power_W)  # in EUR of 2014: its Cost says so
        return out


def _named(component: str, cost: Cost) -> Cost:
    """The cost with its warnings prefixed by the component's name."""
    return Cost(cost.value, tuple(f"{component}: {w}" for w in cost.warnings), cost.currency, cost.cost_year, cost.base_index)


#: The plant-cost models, by name (the one registry of cost models).
COST_MODELS: dict[str, CostModel] = {m.name: m for m in (TurbineBySize2014(), BareModule2001())}
