"""Study files (TOML, schema version 1): validation, defaults, sweep expansion, case keys.

A study file is data, never executed. :func:`load_study` reads it, validates every key with
pydantic models (unknown keys are refused with the nearest valid key), fills every default and
resolves the fluid filter into a list of fluids. :meth:`Study.cases` expands the sweeps into case
dictionaries (contract section 1) in a deterministic order. This module is the single source of
truth for the defaults of the schema.

Bad input raises :class:`StudyError` whose message has one line per fault, each naming the file,
the key path, the offending value and what is allowed.
"""

from __future__ import annotations

import dataclasses
import difflib
import functools
import hashlib
import itertools
import json
import math
import re
import tomllib
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Annotated, Any, Literal, Optional, Union, get_args, get_origin

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    PrivateAttr,
    TypeAdapter,
    ValidationError,
    ValidationInfo,
    create_model,
    field_validator,
    model_validator,
)

from orcscreen import cycles as _cycles  # the registries the schema reads (no CoolProp loaded)
from orcscreen import streams as _streams
from orcscreen import areas as _areas
from orcscreen import costs as _costs
from orcscreen import controls as _controls
from orcscreen.case_variables import optimised_or
from orcscreen import objectives as _objectives
from orcscreen import turbine as _turbine

__all__ = [
    "StudyError",
    "Study",
    "Case",
    "load_study",
    "study_from_dict",
    "case_key",
    "study_hash",
    "json_schema",
    "SCHEMA_VERSION",
    "LAYOUTS",
    "MAX_CASES",
]

SCHEMA_VERSION = 1

#: Layout names, from the layout registry (orcscreen.cycles.LAYOUTS).
LAYOUTS = tuple(_cycles.LAYOUTS)
#: Source and sink kinds, from the stream registries (orcscreen.streams).
SOURCE_KINDS = tuple(_streams.SOURCE_KINDS)
SINK_KINDS = tuple(_streams.SINK_KINDS)
#: Turbine efficiency models, from the turbine-model registry (orcscreen.turbine).
TURBINE_MODELS = tuple(_turbine.TURBINE_MODELS)
OBJECTIVE_NAMES = tuple(_objectives.OBJECTIVES)
#: Ranking criteria, from the criterion registry (orcscreen.objectives.CRITERIA).
CRITERION_NAMES = tuple(_objectives.CRITERIA)
SAFETY_CLASSES = ("A1", "A2L", "A2", "A3", "B1", "B2L", "B2", "B3")
FLUE_GAS_SPECIES = tuple(_streams.GAS_SPECIES)
MAX_CASES = 1_000_000
"""Studies with more cases are refused unless explicitly allowed (``allow_huge`` / ``--yes``)."""
MAX_CASE_TIME_LIMIT_S = 1_000_000.0
"""Longest case time limit [s] (about 11.6 days): beyond it the per-case timers cannot be set."""
MAX_NESTING = 20
"""Deepest nesting of tables and arrays accepted in a study (the schema needs 4)."""
STREAM_POINTS_EXACT = 2_000
"""Sweeps of up to this many operating points have the stream models checked at every point."""
_SHOWN_CHARS = 80
"""Longest value text shown in a message; longer values are cut with "..."."""


# Defaults that depend on the kind of stream, read from the stream classes (each class carries
# its own, with the reasons in streams.py): pressure by kind, and the specific heat of the
# kinds whose model takes a cp (brine, thermal oil).
_DEFAULT_SOURCE_PRESSURE_bar = {k: c.default_pressure_bar for k, c in _streams.SOURCE_KINDS.items()
                                if c.default_pressure_bar is not None}
_DEFAULT_CP_kJ_kgK = {k: c.default_cp_kJ_kgK for k, c in _streams.SOURCE_KINDS.items()
                      if getattr(c, "default_cp_kJ_kgK", None) is not None}
_DEFAULT_SINK_PRESSURE_bar = {k: c.default_pressure_bar for k, c in _streams.SINK_KINDS.items()}


def _kinds_text(defaults: dict[str, float], unit: str) -> str:
    return ", ".join(f"{v:g} {unit} for {k}" for k, v in defaults.items())


class StudyError(ValueError):
    """A study is invalid. ``errors`` holds one message line per fault; str() joins them."""

    def __init__(self, errors: list[str] | str):
        self.errors = [_one_line(e) for e in ([errors] if isinstance(errors, str) else errors)]
        super().__init__("\n".join(self.errors))


def _one_line(text: str) -> str:
    """``text`` with control and line-breaking characters escaped, so one fault stays one line."""
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in text)


_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def _key_text(key: Any) -> str:
    """A key as TOML writes it: bare when it can be, else quoted (with escapes)."""
    text = str(key)
    return text if _BARE_KEY.fullmatch(text) else json.dumps(text)


# ---------------------------------------------------------------------------------------------
# Models of schema version 1
# ---------------------------------------------------------------------------------------------

def _choices(values: tuple[str, ...]) -> str:
    return ", ".join(f'"{v}"' for v in values)


_CONFIG = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False, populate_by_name=True)


def _f(default: Any, description: str, allowed: str, **constraints: Any) -> Any:
    """A field whose description carries the unit and whose schema names what is allowed."""
    return Field(
        default,
        description=f"{description} Allowed: {allowed}.",
        json_schema_extra={"allowed": allowed},
        **constraints,
    )


def _as_list(value: Any) -> Any:
    """Let a single string stand for a one-element list (``include = "all"``)."""
    return [value] if isinstance(value, str) else value


class _Section(BaseModel):
    model_config = _CONFIG


def _above(v: float, info: ValidationInfo, lower: str) -> float:
    """An upper bound v that must lie above the lower bound (dotted path lower, validated before)."""
    lo = info.data.get(lower.rpartition(".")[2])
    if lo is not None and not lo < v:
        raise ValueError(f"not above {lower} = {lo:g}")
    return v


def _optimise_or_positive(v: Any, what: str) -> Any:
    """A number > 0 or "optimise" ("optimize" accepted), for keys the optimiser may free."""
    if v == "optimize":  # the other spelling
        return "optimise"
    if isinstance(v, (int, float)) and not isinstance(v, bool) and not v > 0:
        raise ValueError(f"{what} must be > 0")
    return v


class StudySection(_Section):
    """[study]: name and objective of the study."""

    name: str = _f("unnamed study", "Name of the study, shown in the outputs.", "any text")
    objective: Literal[OBJECTIVE_NAMES] = _f(
        _objectives.DEFAULT_OBJECTIVE, "What the optimiser makes best per fluid and layout, and what the ranking "
        "sorts by: " + "; ".join(f'"{o.name}" ({o.label}, {"largest" if o.maximise else "smallest"} first)'
                                 for o in _objectives.OBJECTIVES.values()) + ".", _choices(OBJECTIVE_NAMES)
    )
    rank_by: list[Literal[CRITERION_NAMES]] = _f(
        list(_objectives.DEFAULT_RANK_BY), "Criteria the outputs rank by besides the objective, which always comes "
        "first (each gets a rank_<criterion> column; the cases Pareto-optimal over them all are marked): "
        + "; ".join(f'"{c.name}" ({c.label}, {c.direction})' for c in _objectives.CRITERIA.values())
        + ". Outputs only: the cases computed do not depend on it.", f"a list of {_choices(CRITERION_NAMES)}"
    )
    case_time_limit_s: float = _f(60.0, "Time limit of one case [s].", "a number > 0", gt=0)

    @field_validator("rank_by", mode="before")
    @classmethod
    def _rank_by_list(cls, v: Any) -> Any:
        return _as_list(v)


class SourceSection(_Section):
    """[source]: the heat source (required)."""

    kind: Literal[SOURCE_KINDS] = _f(
        ..., "Kind of heat source.", _choices(SOURCE_KINDS)
    )
    inlet_temperature_C: float = _f(..., "Source inlet temperature [°C].", "a number from -50 to 1000", ge=-50, le=1000)
    mass_flow_kg_s: float = _f(..., "Source mass flow [kg/s].", "a number > 0", gt=0)
    pressure_bar: Optional[float] = _f(
        None,
        f"Source pressure [bar]. Default {_kinds_text(_DEFAULT_SOURCE_PRESSURE_bar, 'bar')}; required for "
        "kind \"fluid\" unless inlet_quality is given (then saturation).",
        "a number > 0",
        gt=0,
    )
    min_outlet_temperature_C: Optional[float] = _f(
        None,
        "Lowest allowed source outlet temperature [°C] (reinjection limit, acid dew point); none by default.",
        "a number from -50 to 1000, below the inlet temperature",
        ge=-50,
        le=1000,
    )
    cp_kJ_kgK: Optional[float] = _f(
        None,
        f"Specific heat at 0 °C [kJ/(kg K)] of a brine or thermal oil. Default {_kinds_text(_DEFAULT_CP_kJ_kgK, 'kJ/(kg K)')}.",
        "a number > 0 (kind brine or thermal-oil only)",
        gt=0,
    )
    cp_slope_kJ_kgK2: float = _f(
        0.0,
        "Slope of cp with temperature [kJ/(kg K^2)]: cp = cp_kJ_kgK + cp_slope_kJ_kgK2 * T_C.",
        "a number (kind brine or thermal-oil only)",
    )
    composition: Optional[dict[Literal[FLUE_GAS_SPECIES], Annotated[float, Field(ge=0)]]] = _f(
        None,
        "Flue gas composition as fractions (normalised to sum 1). Default: exhaust of natural gas "
        "burnt with 15 % excess air.",
        "a table of N2, O2, CO2, H2O, Ar fractions >= 0 summing to 1 (kind flue-gas only)",
    )
    composition_basis: Literal["mole", "mass"] = _f("mole", "Basis of the composition fractions.", '"mole", "mass"')
    fluid: Optional[str] = _f(
        None, "CoolProp name of the source fluid (kind \"fluid\").", "a CoolProp fluid name (kind fluid only)"
    )
    inlet_quality: Optional[float] = _f(
        None,
        "Vapour quality of the source fluid at the inlet, e.g. 1 for condensing saturated vapour (kind \"fluid\").",
        "a number from 0 to 1 (kind fluid only)",
        ge=0,
        le=1,
    )

    @model_validator(mode="before")
    @classmethod
    def _kind_defaults(cls, data: Any) -> Any:
        """Fill the defaults that depend on the kind of source (the stream class's own)."""
        if not isinstance(data, Mapping):
            return data
        data = dict(data)
        kind = data.get("kind")
        model = _streams.SOURCE_KINDS.get(kind) if isinstance(kind, str) else None
        if model is not None:
            data.update(model.settings_defaults(data))
        return data


class SinkSection(_Section):
    """[sink]: the heat sink (cooling water or ambient air)."""

    kind: Literal[SINK_KINDS] = _f("water", "Kind of heat sink.", _choices(SINK_KINDS))
    inlet_temperature_C: float = _f(20.0, "Sink inlet temperature [°C].", "a number from -50 to 80", ge=-50, le=80)
    temperature_rise_K: Union[float, Literal["optimise"]] = _f(
        10.0, "Temperature rise of the sink across the condenser [K], or \"optimise\" (between the two keys "
        "below: the fan or pump power against the condensing temperature).", 'a number > 0 or "optimise"'
    )
    min_temperature_rise_K: float = _f(
        3.0, "Lowest sink temperature rise when it is optimised [K] (common practice).", "a number > 0", gt=0
    )
    max_temperature_rise_K: float = _f(
        25.0, "Highest sink temperature rise when it is optimised [K] (common practice: air coolers 10-25 K).",
        "a number > 0", gt=0
    )
    pressure_bar: Optional[float] = _f(
        None, f"Sink pressure [bar]. Default {_kinds_text(_DEFAULT_SINK_PRESSURE_bar, 'bar')}.", "a number > 0", gt=0
    )
    fan_pressure_drop_Pa: Optional[float] = _f(
        None, "Air-side pressure drop the condenser fans overcome [Pa] (kind \"air\"; default 150, from memory): "
        "fan power = air volume flow x pressure drop / aux_efficiency.", "a number >= 0", ge=0
    )
    pump_head_m: Optional[float] = _f(
        None, "Head of the cooling-water pump [m] (kind \"water\"; default 15, from memory): pump power = "
        "water flow x g x head / aux_efficiency.", "a number >= 0", ge=0
    )
    aux_efficiency: Optional[float] = _f(
        None, "Efficiency of the fans or the cooling-water pump with motor and drive [-] (default: air 0.6, "
        "water 0.75, from memory).", "a number in (0, 1]", gt=0, le=1
    )
    aux_power_per_kW_rejected: Optional[float] = _f(
        None, "A fixed fan or pump power per kW of heat rejected [kW/kW], instead of the fan or pump model; "
        "none by default.", "a number >= 0", ge=0
    )

    @field_validator("temperature_rise_K", mode="before")
    @classmethod
    def _rise(cls, v: Any) -> Any:
        return _optimise_or_positive(v, "the temperature rise")

    @field_validator("max_temperature_rise_K")
    @classmethod
    def _rise_bounds(cls, v: float, info: ValidationInfo) -> float:
        return _above(v, info, "sink.min_temperature_rise_K")

    @model_validator(mode="before")
    @classmethod
    def _kind_defaults(cls, data: Any) -> Any:
        """Fill the defaults that depend on the kind of sink (the stream class's own)."""
        if not isinstance(data, Mapping):
            return data
        data = dict(data)
        kind = data.get("kind", "water")
        model = _streams.SINK_KINDS.get(kind) if isinstance(kind, str) else None
        if model is not None:
            data.update(model.settings_defaults(data))
        return data


class ExchangersSection(_Section):
    """[exchangers]: pinch points, recuperator effectiveness and the zones' heat-transfer coefficients."""

    pinch_evaporator_K: Union[float, Literal["optimise"]] = _f(
        10.0, "Minimum temperature difference in the evaporator [K], or \"optimise\" with a cost objective.",
        'a number > 0 or "optimise"'
    )
    pinch_condenser_K: Union[float, Literal["optimise"]] = _f(
        5.0, "Minimum temperature difference in the condenser [K], or \"optimise\" with a cost objective.",
        'a number > 0 or "optimise"'
    )
    min_pinch_K: float = _f(2.0, "Lowest pinch when a pinch is optimised [K] (common practice).", "a number > 0", gt=0)
    max_pinch_K: float = _f(25.0, "Highest pinch when a pinch is optimised [K].", "a number > 0", gt=0)
    pinch_recuperator_K: float = _f(10.0, "Minimum temperature difference in the recuperator [K].", "a number > 0", gt=0)
    recuperator_effectiveness: float = _f(
        0.8, "Recuperator effectiveness [-].", "a number in (0, 1]", gt=0, le=1
    )

    @field_validator("pinch_evaporator_K", "pinch_condenser_K", mode="before")
    @classmethod
    def _pinch(cls, v: Any) -> Any:
        return _optimise_or_positive(v, "a pinch")

    @field_validator("max_pinch_K")
    @classmethod
    def _pinch_bounds(cls, v: float, info: ValidationInfo) -> float:
        return _above(v, info, "exchangers.min_pinch_K")


ExchangersSection = create_model(  # the pinch keys above and one U key per zone of orcscreen.areas
    "ExchangersSection", __base__=ExchangersSection, __doc__=ExchangersSection.__doc__,
    **{key: (Optional[float], _f(None, f"Overall heat-transfer coefficient of the {zone} zone [W/(m2 K)], for "
                                   "areas from UA; default: the source's or sink's kind (see the README).",
                                   "a number > 0", gt=0))
       for zone, key in _areas.U_KEYS.items()},
)


class MachinesSection(_Section):
    """[machines]: efficiencies of turbine, pump, generator and motor."""

    turbine_model: Literal[TURBINE_MODELS] = _f(
        _turbine.DEFAULT_TURBINE_MODEL, "Turbine efficiency model (orcscreen.turbine.TURBINE_MODELS).", _choices(TURBINE_MODELS)
    )
    turbine_efficiency: float = _f(0.80, "Isentropic efficiency of the turbine [-] (turbine_model \"constant\").", "a number in (0, 1]", gt=0, le=1)
    max_turbine_stages: int = _f(
        3, "Most stages of an axial turbine (turbine_model \"axial-sp-vr\"); the fewest stages that keep the "
        "volume ratio per stage within limits.max_volume_ratio_per_stage are taken.", "an integer from 1 to 3", ge=1, le=3
    )
    pump_efficiency: float = _f(0.70, "Isentropic efficiency of the pump [-].", "a number in (0, 1]", gt=0, le=1)
    generator_efficiency: float = _f(1.0, "Generator efficiency [-].", "a number in (0, 1]", gt=0, le=1)
    motor_efficiency: float = _f(1.0, "Efficiency of the pump motor [-].", "a number in (0, 1]", gt=0, le=1)


class LimitsSection(_Section):
    """[limits]: pressure, reduced-pressure and quality limits."""

    max_pressure_bar: Optional[float] = _f(None, "Highest cycle pressure [bar]; none by default.", "a number > 0", gt=0)
    max_reduced_pressure: float = _f(
        0.9, "Highest evaporation pressure as a fraction of the critical pressure [-].", "a number in (0, 1)", gt=0, lt=1
    )
    max_supercritical_reduced_pressure: float = _f(
        1.3, "Highest heater pressure of a transcritical layout as a multiple of the critical pressure [-].",
        "a number > 1 and at most 3", gt=1, le=3
    )
    min_turbine_outlet_quality: float = _f(
        0.9, "Lowest vapour quality at the turbine outlet when it is two-phase [-].", "a number in [0, 1]", ge=0, le=1
    )
    max_volume_ratio_per_stage: float = _f(
        10.0, "Largest isentropic volume ratio per turbine stage, VR^(1/stages) [-]; beyond it with the most "
        "stages allowed no turbine fits and the case is infeasible (turbine_model \"axial-sp-vr\").",
        "a number > 1", gt=1
    )
    min_condensing_pressure_bar: Optional[float] = _f(
        None, "Lowest condensing pressure [bar], a hard floor: the condenser is held at or above it; none by "
        "default.", "a number > 0", gt=0
    )
    flag_condensing_pressure_below_bar: Optional[float] = _f(
        0.05, "A result condensing below this pressure [bar] carries a warning (deep vacuum: a very large "
        "condenser and exhaust, air in-leakage; common practice); none to switch the flag off.", "a number > 0", gt=0
    )
    flag_size_parameter_above_m: Optional[float] = _f(
        1.0, "A result whose turbine size parameter exceeds this [m] carries a warning (1 m: the top of the "
        "axial correlation's range); none to switch the flag off.", "a number > 0", gt=0
    )


class CycleSection(_Section):
    """[cycle]: layouts and the superheat and subcooling settings."""

    layouts: list[Literal[LAYOUTS]] = _f(
        list(_cycles.DEFAULT_LAYOUTS), "Cycle layouts to screen (orcscreen.cycles.LAYOUTS).",
        f"a non-empty list of {_choices(LAYOUTS)}", min_length=1
    )
    superheat_K: Union[float, Literal["optimise"]] = _f(
        0.0, "Superheat at the turbine inlet [K], or \"optimise\".", 'a number >= 0 or "optimise"'
    )
    max_superheat_K: float = _f(50.0, "Upper bound of the superheat when it is optimised [K].", "a number > 0", gt=0)
    subcooling_K: float = _f(0.0, "Subcooling at the condenser outlet [K].", "a number >= 0", ge=0)
    reheat_temperature_C: Optional[float] = _f(
        None, "Reheater outlet temperature of the reheat layout [°C]; by default the turbine inlet temperature.",
        "a number from -50 to 1000", ge=-50, le=1000
    )

    @field_validator("layouts", mode="before")
    @classmethod
    def _layouts_list(cls, v: Any) -> Any:
        return _as_list(v)

    @field_validator("layouts")
    @classmethod
    def _layouts_unique(cls, v: list[str]) -> list[str]:
        dup = sorted({x for x in v if v.count(x) > 1})
        if dup:
            raise ValueError(f"layout {dup[0]!r} is listed twice")
        return v

    @field_validator("superheat_K", mode="before")
    @classmethod
    def _superheat(cls, v: Any) -> Any:
        if v == "optimize":  # the other spelling
            return "optimise"
        if isinstance(v, (int, float)) and not isinstance(v, bool) and v < 0:
            raise ValueError("superheat must be >= 0")
        return v


COST_MODELS = tuple(_costs.COST_MODELS)

#: Off-design control strategies of a year (the plant's response to each bin).
CONTROLS = _controls.CONTROL_NAMES

#: What a design is chosen for when the study has a year.
DESIGN_FOR = ("design-point", "year")


class YearSection(_Section):
    """[year]: a year of operation; each fluid's design is rated bin by bin (orcscreen.offdesign)."""

    file: Optional[str] = _f(
        None, "CSV file of the year (hourly rows or temperature bins; orcscreen.year), relative to the study "
        "file and inside its folder; none: the design point only.", "a relative path to a CSV file"
    )
    design_sink_temperature_C: Optional[float] = _f(
        None, "Design sink inlet temperature [°C]; default: sink.inlet_temperature_C where the study writes it, "
        "else the year's mean (common practice).", "a number from -50 to 80", ge=-50, le=80
    )
    control: Literal[CONTROLS] = _f(
        "sliding-pressure", "How the plant meets each bin (orcscreen.controls): " + "; ".join(
            f"\"{c.name}\": {c.description}" for c in _controls.CONTROLS.values()) + ".", _choices(CONTROLS)
    )
    bin_width_K: float = _f(1.0, "Width of the sink-temperature bins of an hourly year [K].", "a number > 0", gt=0)
    design_for: Literal[DESIGN_FOR] = _f(
        "design-point", "What each fluid's design is chosen for: \"design-point\" (the study's objective at the "
        "design condition) or \"year\" (the evaporation temperature searched for the most energy over the "
        "year, orcscreen.year_design; an option: about four times the cost of the year's rating).",
        _choices(DESIGN_FOR)
    )
    #: set on loading (not study keys): the file resolved, and its SHA-256 (the case keys carry it)
    resolved_path: Optional[str] = Field(None, description="Set by orcscreen on loading; leave out.")
    sha256: Optional[str] = Field(None, description="Set by orcscreen on loading; leave out.")


def _currency_problem(code: Any) -> str | None:
    """Why code is not an ISO 4217 currency code (pycountry's table), or None."""
    import pycountry

    if isinstance(code, str) and len(code) == 3 and code.isupper() and pycountry.currencies.get(alpha_3=code):
        return None
    near = _nearest(str(code).upper(), [c.alpha_3 for c in pycountry.currencies])
    return f"unknown currency code {code!r}" + (f" (did you mean {near!r}?)" if near else "")


class EconomicsSection(_Section):
    """[economics]: what the plant costs and what its electricity costs (screening estimates)."""

    cost_model: Literal[COST_MODELS] = _f(
        "turbine-by-size-2014", "Plant-cost model (orcscreen.costs.COST_MODELS): \"turbine-by-size-2014\" (Astolfi "
        "et al. 2014: exchangers by UA, turbine by size parameter and stages) or \"bare-module-2001\" (Turton et "
        "al., Appendix A: by area and power).", _choices(COST_MODELS)
    )
    currency: str = _f("EUR", "Currency of the results, an ISO 4217 code (the default cost model's).",
                       "an ISO 4217 code in capitals, such as EUR, USD, GBP")
    exchange_rates: dict[str, float] = _f(
        {}, "Units of the study's currency per unit of another currency, at the cost year (needed for every "
        "currency a cost model prices in other than the study's, e.g. {USD = 0.92}).", "a table of ISO 4217 code = number > 0",
        validate_default=True,
    )
    cost_index: dict[str, float] = _f(
        {}, "Cost index values by year, over the built-in CEPCI annual averages (e.g. {\"2024\" = 800.0}).",
        "a table of year = number > 0"
    )
    cost_year: int = _f(
        2023, "Year whose money the results are in (cost index of that year; default: the last year of the "
        "built-in CEPCI table).", "a year of the cost index table", ge=1900, le=2200, validate_default=True
    )
    discount_rate: float = _f(
        0.07, "Discount rate per year, real [-] (common practice for screening).", "a number from 0 to 1", ge=0, le=1
    )
    lifetime_years: int = _f(25, "Economic lifetime [years] (common practice: 20-30).", "an integer from 1 to 100", ge=1, le=100)
    om_fraction: float = _f(
        0.02, "Operation and maintenance per year as a fraction of the investment [-] (common practice, from memory: "
        "1.5-2.5 %).", "a number from 0 to 1", ge=0, le=1
    )
    full_load_hours: float = _f(
        7500.0, "Full-load hours per year [h] (common practice for base-load heat recovery and geothermal plants).",
        "a number > 0 and at most 8784", gt=0, le=8784
    )
    electricity_price_per_MWh: Optional[float] = _f(
        None, "Price of the electricity sold [currency/MWh], for the net present value; none by default.", "a number >= 0", ge=0
    )

    @field_validator("currency")
    @classmethod
    def _currency(cls, v: str) -> str:
        problem = _currency_problem(v)
        if problem:
            raise ValueError(problem)
        return v

    @field_validator("cost_index")
    @classmethod
    def _years(cls, v: dict[str, float]) -> dict[str, float]:
        for year, value in v.items():
            if not (year.isdigit() and 1900 <= int(year) <= 2200):
                raise ValueError(f"cost index year {year!r} is not a year from 1900 to 2200")
            if not (isinstance(value, (int, float)) and value > 0 and math.isfinite(value)):
                raise ValueError(f"cost index of {year} = {value!r}: must be a number > 0")
        return v

    @field_validator("exchange_rates")
    @classmethod
    def _rates(cls, v: dict[str, float], info: ValidationInfo) -> dict[str, float]:
        for code, value in v.items():
            problem = _currency_problem(code)
            if problem:
                raise ValueError(problem)
            if not (isinstance(value, (int, float)) and value > 0 and math.isfinite(value)):
                raise ValueError(f"exchange rate of {code} = {value!r}: must be a number > 0")
        model, currency = _costs.COST_MODELS.get(info.data.get("cost_model")), info.data.get("currency")
        missing = [c for c in getattr(model, "currencies", ()) if currency and c != currency and c not in v]
        if missing:
            raise ValueError(f"the cost model {info.data['cost_model']!r} prices in {', '.join(model.currencies)} and "
                             f"the results are in {currency}: give the rate for {', '.join(missing)} (units of "
                             f"{currency} per unit)")
        return v

    @field_validator("cost_year")
    @classmethod
    def _cost_year(cls, v: int, info: ValidationInfo) -> int:
        years = sorted({*_costs.CEPCI, *(int(y) for y in info.data.get("cost_index") or {})})
        if v not in years:
            raise ValueError(f"no cost index for it (the table has {', '.join(map(str, years))}; give the year's "
                             "value in economics.cost_index)")
        return v


_MIXTURE_DECIMALS = 6  # mole fractions in a mixture's name (orcscreen.mixtures.DECIMALS)


class MixtureEntry(_Section):
    """One entry of [fluids] mixtures: a binary zeotropic mixture of two catalogue fluids."""

    components: list[str] = _f(
        ..., "The two fluids of the mixture (CoolProp or display names); CoolProp must have "
        "interaction parameters for the pair.",
        "a list of two different catalogue fluid names whose pair has interaction parameters in CoolProp",
        min_length=2, max_length=2,
    )
    mole_fractions: Union[Annotated[list[Annotated[float, Field(gt=0, lt=1)]], Field(min_length=1)],
                          Literal["optimise"]] = _f(
        ..., "Mole fractions of the FIRST component to screen [-], one mixture per value, or \"optimise\" "
        "(the composition is optimised per case); the mass fraction is reported.",
        'a list of numbers between 0 and 1 (exclusive; 0 and 1 are the pure fluids, which fluids.include '
        'screens), or "optimise"',
    )

    @field_validator("components", mode="before")
    @classmethod
    def _two_names(cls, v: Any) -> Any:
        if not isinstance(v, list) or len(v) != 2 or not all(isinstance(n, str) and n.strip() for n in v):
            raise ValueError("not two fluid names")
        return v

    @field_validator("mole_fractions", mode="before")
    @classmethod
    def _fractions(cls, v: Any) -> Any:
        if v in ("optimise", "optimize"):
            return "optimise"
        if not isinstance(v, list) or not v:
            raise ValueError('neither a list of mole fractions nor "optimise"')
        for j, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, (int, float)):
                raise ValueError(f"item {j} = {_show(x)} is not a number")
            if not (math.isfinite(x) and 0 < x < 1):
                raise ValueError(f"item {j} = {_show(x)} is not between 0 and 1 (exclusive)")
            if not 0 < round(x, _MIXTURE_DECIMALS) < 1:
                raise ValueError(f"item {j} = {_show(x)} rounds to {round(x, _MIXTURE_DECIMALS):g} at "
                                 f"{_MIXTURE_DECIMALS} decimals")
        return [float(x) for x in v]


class FluidsSection(_Section):
    """[fluids]: which working fluids of the catalogue to screen."""

    include: list[str] = _f(
        ["all"], "Fluids to screen: CoolProp names, display names, family names or \"all\".",
        'a list of fluid names, family names or "all"', min_length=1,
    )
    exclude: list[str] = _f([], "Fluids or families to leave out.", "a list of fluid or family names")
    max_gwp: Optional[float] = _f(None, "Highest 100-year global warming potential [-].", "a number >= 0", ge=0)
    safety_classes: Optional[list[Literal[SAFETY_CLASSES]]] = _f(
        None, "ASHRAE 34 safety classes allowed; all by default.",
        f"a list of {_choices(SAFETY_CLASSES)}",
    )
    zero_odp: bool = _f(False, "Keep only fluids with zero ozone depletion potential.", "true or false")
    mixtures: list[MixtureEntry] = _f(
        [], "Binary zeotropic mixtures to screen after the pure fluids, e.g. [{components = [\"isobutane\", "
        "\"isopentane\"], mole_fractions = [0.3, 0.5, 0.7]}]; the filters max_gwp, safety_classes and "
        "zero_odp apply to each mixture (a composition to be optimised: its worse component); exclude does not.",
        "a list of tables {components = [two fluid names], mole_fractions = [numbers in (0, 1)] or \"optimise\"}",
    )

    @field_validator("include", "exclude", "safety_classes", mode="before")
    @classmethod
    def _lists(cls, v: Any) -> Any:
        return _as_list(v)


_CASE_SECTIONS = ("study", "source", "sink", "exchangers", "machines", "limits", "cycle", "economics", "year")


class Study(BaseModel):
    """A validated study. Build it with :func:`load_study` or :func:`study_from_dict`.

    Attributes beyond the sections: ``fluids`` (resolved fluid names, catalogue order, then mixtures),
    ``sweep_axes`` (dotted path -> list of values, file order), ``n_cases``, ``origin``.
    """

    model_config = ConfigDict(
        extra="forbid", strict=True, frozen=True, populate_by_name=True,
        title="orcscreen study (schema version 1)",
    )

    schema_version: Literal[1] = _f(1, "Version of the study-file schema.", "1")
    study: StudySection = Field(default_factory=StudySection, description="[study] name and objective.")
    source: SourceSection = Field(..., description="[source] the heat source (required).")
    sink: SinkSection = Field(default_factory=SinkSection, description="[sink] cooling water or ambient air.")
    exchangers: ExchangersSection = Field(default_factory=ExchangersSection, description="[exchangers] pinch points.")
    machines: MachinesSection = Field(default_factory=MachinesSection, description="[machines] efficiencies.")
    limits: LimitsSection = Field(default_factory=LimitsSection, description="[limits] pressure and quality limits.")
    cycle: CycleSection = Field(default_factory=CycleSection, description="[cycle] layouts, superheat, subcooling.")
    economics: EconomicsSection = Field(default_factory=EconomicsSection,
                                        description="[economics] cost model, money, annuity (screening estimates).")
    year: YearSection = Field(default_factory=YearSection, description="[year] a year of operation (off-design).")
    fluid_filter: FluidsSection = Field(
        default_factory=FluidsSection, alias="fluids", description="[fluids] which fluids to screen."
    )

    _origin: str = PrivateAttr("<dict>")
    _fluids: tuple[str, ...] = PrivateAttr(())
    _sweep: dict[str, Any] = PrivateAttr(default_factory=dict)  # path -> list of values or range dict
    _warnings: tuple[str, ...] = PrivateAttr(())

    @property
    def origin(self) -> str:
        """Where the study came from (file path or "<dict>")."""
        return self._origin

    @property
    def fluids(self) -> tuple[str, ...]:
        """CoolProp names of the fluids selected by the [fluids] section, in catalogue order, then
        its mixtures in file and composition order (``A[x]&B[1-x]``; ``A&B`` for a composition
        to be optimised; orcscreen.mixtures)."""
        return self._fluids

    @property
    def warnings(self) -> tuple[str, ...]:
        """Lines about things allowed but probably unintended (a sweep that overrides a value
        written in its section, an ozone-depleting fluid named in [fluids]); `check` and `run`
        print them."""
        return self._warnings

    @property
    def layouts(self) -> tuple[str, ...]:
        return tuple(self.cycle.layouts)

    @property
    def sweep_spec(self) -> dict[str, Any]:
        """The sweep as written (flattened to dotted paths): list of values or {start, stop, step}."""
        return dict(self._sweep)

    @property
    def sweep_axes(self) -> dict[str, list[Any]]:
        """Dotted path -> list of values, in file order."""
        return {path: list(_axis_values(spec)) for path, spec in self._sweep.items()}

    @property
    def sweep_sizes(self) -> dict[str, int]:
        """Dotted path -> number of values, without expanding the sweep."""
        return {path: _axis_length(spec) for path, spec in self._sweep.items()}

    @property
    def n_points(self) -> int:
        """Number of operating points (product of the sweep sizes; 1 without a sweep)."""
        return math.prod(self.sweep_sizes.values())

    @property
    def n_cases(self) -> int:
        return self.n_points * len(self._fluids) * len(self.cycle.layouts)

    def base_case(self) -> dict[str, Any]:
        """The case sections without sweep values applied (plain JSON-able dicts)."""
        dumped = self.model_dump(mode="python", by_alias=True)
        return {name: dumped[name] for name in _CASE_SECTIONS}

    def cases(self) -> Iterator[Case]:
        """Typed cases (:class:`Case`): sweep points x fluids x layouts, in that order."""
        base = self.base_case()
        cycle = {k: v for k, v in base["cycle"].items() if k != "layouts"}
        paths = list(self._sweep)
        axes = [_axis_values(self._sweep[p]) for p in paths]
        split = [tuple(p.split(".", 1)) for p in paths]
        models = {name: getattr(self, "fluid_filter" if name == "fluids" else name) for name in _CASE_SECTIONS}
        for point in itertools.product(*axes):
            sections = {name: dict(base[name]) for name in _CASE_SECTIONS if name != "cycle"}
            sections["cycle"] = dict(cycle)
            updates: dict[str, dict[str, Any]] = {}
            for (section, key), value in zip(split, point):
                sections[section][key] = value
                updates.setdefault(section, {})[key] = value
            typed = {name: models[name].model_copy(update=updates[name]) if name in updates else models[name]
                     for name in _CASE_SECTIONS}
            sweep = dict(zip(paths, point))
            for fluid in self._fluids:
                for layout in self.cycle.layouts:
                    data = {name: dict(sec) for name, sec in sections.items()}
                    if data["source"].get("composition") is not None:
                        data["source"]["composition"] = dict(data["source"]["composition"])
                    data["cycle"]["layout"] = layout
                    data["fluid"] = fluid
                    data["layout"] = layout
                    data["sweep"] = dict(sweep)
                    yield Case(fluid=fluid, layout=layout, sweep=dict(sweep), data=data, **typed)


@dataclasses.dataclass(frozen=True)
class Case:
    """One case: a fluid and a layout at one operating point, with the study's validated sections
    (sweep values applied) as typed, frozen section models. This is what travels from the study
    to the engine (:func:`orcscreen.api.run_case`). :meth:`as_dict` is its canonical plain form
    (case keys and the store); :meth:`from_dict` validates such a form back into a Case.
    """

    fluid: str
    layout: str
    sweep: dict[str, Any]
    study: StudySection
    source: SourceSection
    sink: SinkSection
    exchangers: ExchangersSection
    machines: MachinesSection
    limits: LimitsSection
    cycle: CycleSection
    economics: EconomicsSection
    year: YearSection
    data: dict[str, Any] = dataclasses.field(repr=False, compare=False, default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        """Plain JSON-able form: the sections (cycle with "layout" instead of "layouts"), the
        fluid, the layout and the sweep values."""
        if self.data:
            return self.data
        out = {name: getattr(self, name).model_dump(mode="python") for name in _CASE_SECTIONS}
        out["cycle"].pop("layouts", None)
        out["cycle"]["layout"] = self.layout
        out.update(fluid=self.fluid, layout=self.layout, sweep=dict(self.sweep))
        return out

    @classmethod
    def from_dict(cls, d: Mapping[str, Any], origin: str = "<case>") -> Case:
        """Validate a case's plain form (see :meth:`as_dict`; missing sections take their
        defaults); raise :class:`StudyError` on bad input."""
        if isinstance(d, Case):
            return d
        if not isinstance(d, Mapping):
            raise StudyError(f"{origin}: a case must be a table, not {_type_name(d)}")
        layout = d.get("layout") or (d.get("cycle") or {}).get("layout")
        sections: dict[str, Any] = {}
        errors: list[str] = []
        for name in _CASE_SECTIONS:
            raw = dict(d.get(name) or {})
            if name == "cycle":
                raw.pop("layout", None)
                raw["layouts"] = [layout]
            try:
                sections[name] = _SECTION_MODELS[name].model_validate(raw)
            except ValidationError as exc:
                errors.extend(_format_validation_errors(exc, origin, prefix=f"{name}."))
        if errors:
            raise StudyError(errors)
        return cls(fluid=str(d.get("fluid")), layout=str(layout), sweep=dict(d.get("sweep") or {}), **sections)


# ---------------------------------------------------------------------------------------------
# Field lookup (for sweeps and messages)
# ---------------------------------------------------------------------------------------------

_SECTION_MODELS: dict[str, type[BaseModel]] = {
    "study": StudySection,
    "source": SourceSection,
    "sink": SinkSection,
    "exchangers": ExchangersSection,
    "machines": MachinesSection,
    "limits": LimitsSection,
    "cycle": CycleSection,
    "economics": EconomicsSection,
    "year": YearSection,
    "fluids": FluidsSection,
}
_TOP_KEYS = ("schema_version", *_SECTION_MODELS, "sweep")


def _is_numeric(annotation: Any) -> bool:
    if annotation is float:
        return True
    return float in getattr(annotation, "__args__", ())


NUMERIC_PATHS: tuple[str, ...] = tuple(
    f"{section}.{name}"
    for section, model in _SECTION_MODELS.items()
    if section != "fluids"
    for name, fi in model.model_fields.items()
    if _is_numeric(fi.annotation)
)
"""Dotted paths of the settings a [sweep] may vary (numeric settings of the case sections)."""

ALL_PATHS: tuple[str, ...] = tuple(
    f"{section}.{name}" for section, model in _SECTION_MODELS.items() for name in model.model_fields
)


@functools.lru_cache(maxsize=None)
def _field_adapter(path: str) -> TypeAdapter:
    section, key = path.split(".", 1)
    fi = _SECTION_MODELS[section].model_fields[key]
    annotation = fi.annotation
    if path == "cycle.superheat_K":
        annotation = Union[Annotated[float, Field(ge=0)], Literal["optimise"]]
    typ = Annotated[annotation, *fi.metadata] if fi.metadata else annotation
    return TypeAdapter(typ, config=ConfigDict(strict=True, allow_inf_nan=False))


def _item_model(annotation: Any) -> type[BaseModel] | None:
    """The model of a field that holds a table or a list of tables ([fluids] mixtures), else None."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    if get_origin(annotation) is list:
        args = get_args(annotation)
        if args and isinstance(args[0], type) and issubclass(args[0], BaseModel):
            return args[0]
    return None


def _field_at(path: str) -> tuple[type[BaseModel] | None, Any]:
    """(model the path leads to, FieldInfo of its last key) for a dotted path whose list items
    may carry indices ("fluids.mixtures[1].components"); (None, None) where it leads nowhere."""
    names = re.sub(r"\[\d+\]", "", path).split(".")
    model: type[BaseModel] | None = _SECTION_MODELS.get(names[0])
    fi = None
    for name in names[1:]:
        fi = model.model_fields.get(name) if model is not None else None
        if fi is None:
            return None, None
        model = _item_model(fi.annotation)
    return model, fi


def _allowed(path: str) -> str:
    _, fi = _field_at(path)
    if fi is None or not isinstance(fi.json_schema_extra, dict):
        return ""
    return str(fi.json_schema_extra.get("allowed", ""))


_LAST_KEY = re.compile(r'(?:(.*)\.)?("(?:[^"\\]|\\.)*"|[^."]+)')


def _split_last(path: str) -> tuple[str, str]:
    """(parent path, last key) of a dotted key path; the key may be quoted (with dots in it)."""
    m = _LAST_KEY.fullmatch(path)
    if m is None:
        parent, _, key = path.partition(".")
        return (parent, key) if key else ("", parent)
    return m.group(1) or "", m.group(2)


def _nearest(word: str, choices: list[str] | tuple[str, ...]) -> str | None:
    best = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    if not best:
        lowered = {c.lower(): c for c in choices}
        best = [lowered[m] for m in difflib.get_close_matches(word.lower(), list(lowered), n=1, cutoff=0.6)]
    return best[0] if best else None


def _show(value: Any) -> str:
    """A value as it would be written in TOML (strings quoted, lists and tables as JSON)."""
    if isinstance(value, float) and not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    try:
        text = json.dumps(value, ensure_ascii=False, default=str)
    except (TypeError, ValueError, RecursionError):
        text = repr(value)
    return _cut(text)


def _cut(text: str) -> str:
    """``text``, or its first :data:`_SHOWN_CHARS` characters and "..." with the length."""
    if len(text) <= _SHOWN_CHARS:
        return text
    return f"{text[:_SHOWN_CHARS - 20]}... ({len(text):,} characters)"


# ---------------------------------------------------------------------------------------------
# Turning pydantic errors into one line per key
# ---------------------------------------------------------------------------------------------

_TYPE_NAMES = {bool: "a boolean", int: "a number", float: "a number", str: "a string", list: "a list", dict: "a table"}


def _type_name(value: Any) -> str:
    for t, name in _TYPE_NAMES.items():
        if type(value) is t:
            return name
    return type(value).__name__


def _loc_path(loc: tuple[Any, ...]) -> tuple[str, str]:
    """(dotted key path, field path for the allowed text) from a pydantic error location."""
    parts: list[str] = []
    model: Any = Study
    field_path = ""
    for item in loc:
        if isinstance(item, int):
            parts[-1] = f"{parts[-1]}[{item}]" if parts else f"[{item}]"
            continue
        if model is None:
            # union member tags ("float", "literal['optimise']") or dict keys below a field
            if field_path.endswith(".composition") and item in FLUE_GAS_SPECIES:
                parts.append(item)
            continue
        fields = {(fi.alias or name): name for name, fi in model.model_fields.items()}
        if item not in fields and item not in model.model_fields:
            parts.append(_key_text(item))
            model = None
            continue
        name = fields.get(item, item)
        parts.append(str(item))
        annotation = model.model_fields[name].annotation
        if _item_model(annotation) is not None:  # a section, or a list of tables (fluids.mixtures)
            model = _item_model(annotation)
            field_path = ".".join(parts) if model is not annotation else field_path
        else:
            field_path = ".".join(parts)
            model = None
    return ".".join(parts), field_path


def _format_validation_errors(exc: ValidationError, origin: str, prefix: str = "") -> list[str]:
    """One line per key path: file, path, value, problem, what is allowed."""
    grouped: dict[str, list[dict[str, Any]]] = {}
    fields: dict[str, str] = {}
    for err in exc.errors():
        path, field_path = _loc_path(tuple(err["loc"]))
        path = prefix + path if prefix else path
        grouped.setdefault(path, []).append(err)
        fields[path] = prefix + field_path if field_path and prefix else field_path
    # A misspelt key also makes its correct name "missing": say it once, as the misspelling.
    suggested = set()
    for path, errs in grouped.items():
        if errs[0]["type"] == "extra_forbidden":
            parent, key = _split_last(path)
            model = _field_at(parent)[0] if parent else None
            guess = _nearest(key, list(model.model_fields)) if model is not None and key else None
            if guess:
                suggested.add(f"{parent}.{guess}")
    lines = []
    for path, errs in grouped.items():
        if errs[0]["type"] == "missing" and path in suggested:
            continue
        lines.append(_error_line(origin, path, fields[path], errs))
    return lines


def _error_line(origin: str, path: str, field_path: str, errs: list[dict[str, Any]]) -> str:
    err = errs[0]
    kind = err["type"]
    value = err.get("input")
    allowed = _allowed(field_path) if field_path else ""
    if kind == "extra_forbidden":
        return _unknown_key_line(origin, path, value)
    if kind == "missing":
        if path in _SECTION_MODELS:
            return f"{origin}: [{path}] section is required but missing; it needs at least kind, inlet_temperature_C and mass_flow_kg_s"
        return f"{origin}: {path}: required key is missing; allowed: {allowed or 'see orcscreen schema'}"
    if kind == "model_type" or (kind == "dict_type" and path in _SECTION_MODELS):
        return f"{origin}: {path} = {_show(value)}: must be a table [{path}] of keys, not {_type_name(value)}"
    value_errors = [e for e in errs if e["type"] == "value_error"]
    if isinstance(value, float) and not math.isfinite(value):
        problem = "must be a finite number"
    elif value_errors:
        problem = value_errors[0]["msg"].removeprefix("Value error, ")
    elif any(e["type"] in ("literal_error", "enum") for e in errs) and not any(
        e["type"].endswith("_type") and not isinstance(value, (int, float)) for e in errs if e["type"] != "literal_error"
    ):
        problem = "not an allowed value"
    elif all(e["type"].endswith(("_type", "_parsing")) or e["type"] == "literal_error" for e in errs):
        problem = f"wrong type ({_type_name(value)})"
    elif kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        problem = "out of range"
    elif kind == "finite_number":
        problem = "must be a finite number"
    elif kind == "too_short":
        problem = "must not be empty"
    else:
        problem = err["msg"].lower()
    tail = f"; allowed: {allowed}" if allowed else ""
    return f"{origin}: {path} = {_show(value)}: {problem}{tail}"


def _unknown_key_line(origin: str, path: str, value: Any) -> str:
    section, key = _split_last(path)
    if key.startswith('"'):
        key = json.loads(key)
    if not section:
        guess = _nearest(key, _TOP_KEYS)
        hint = f"; did you mean [{guess}]?" if guess else ""
        return f"{origin}: [{_key_text(key)}]: unknown section{hint} allowed: {', '.join(_TOP_KEYS)}"
    model = _field_at(section)[0]
    choices = list(model.model_fields) if model is not None else []
    guess = _nearest(key, choices)
    hint = f"; did you mean {section}.{guess}?" if guess else ""
    where = f"[{section}]" if section in _SECTION_MODELS else section
    return f"{origin}: {path}: unknown key{hint} allowed in {where}: {', '.join(choices)}"


# ---------------------------------------------------------------------------------------------
# Sweeps
# ---------------------------------------------------------------------------------------------

_RANGE_KEYS = ("start", "stop", "step")


def _range_length(start: float, stop: float, step: float) -> int:
    """Number of grid values start + i*step <= stop (stop included within 1e-9*step)."""
    return int(math.floor((stop - start) / step + 1e-9)) + 1


def _axis_length(spec: Any) -> int:
    if isinstance(spec, dict):
        return _range_length(spec["start"], spec["stop"], spec["step"])
    return len(spec)


def _axis_values(spec: Any) -> Iterator[Any] | list[Any]:
    """Values of one sweep axis: a list as given, or a range start + i*step to 12 significant digits."""
    if isinstance(spec, dict):
        start, step = spec["start"], spec["step"]
        n = _axis_length(spec)
        return [float(f"{start + i * step:.12g}") for i in range(n)]
    return list(spec)


def _flatten_sweep(raw: Any, origin: str, errors: list[str]) -> dict[str, tuple[str, Any]]:
    """Dotted path -> (key path in the file, raw spec) for both the quoted and the nested form."""
    out: dict[str, tuple[str, Any]] = {}
    if not isinstance(raw, Mapping):
        errors.append(f"{origin}: sweep = {_show(raw)}: must be a table [sweep] of dotted paths, not {_type_name(raw)}")
        return out

    def walk(prefix: str, table: Mapping[str, Any], where: str) -> None:
        for key, value in table.items():
            path = f"{prefix}.{key}" if prefix else key
            file_path = f"{where}.{_key_text(key)}"
            is_range = isinstance(value, Mapping) and any(k in value for k in _RANGE_KEYS)
            if isinstance(value, Mapping) and not is_range:
                if path.count(".") >= 1:
                    errors.append(
                        f"{origin}: {file_path}: not a numeric setting, a sweep varies one number; "
                        f"allowed (numeric settings): {', '.join(NUMERIC_PATHS)}"
                    )
                    continue
                walk(path, value, file_path)
                continue
            if path in out:
                errors.append(f"{origin}: {file_path}: {path} is swept twice (quoted and nested form); allowed: one entry per setting")
                continue
            out[path] = (file_path, value)

    walk("", raw, "sweep")
    return out


def _check_sweep(flat: dict[str, tuple[str, Any]], origin: str, errors: list[str]) -> dict[str, Any]:
    """Validate every sweep axis; return path -> list of validated values or a range dict."""
    specs: dict[str, Any] = {}
    for path, (file_path, spec) in flat.items():
        if path not in NUMERIC_PATHS:
            if path in ALL_PATHS:
                why = f"{path} is not a numeric setting and cannot be swept"
            else:
                why = "unknown setting"
            guess = _nearest(path, NUMERIC_PATHS) if path not in ALL_PATHS else None
            if guess:
                errors.append(f"{origin}: {file_path}: {why}; did you mean {guess}? allowed: a numeric "
                              f"setting by its dotted path (orcscreen schema lists them)")
            else:
                errors.append(f"{origin}: {file_path}: {why}; allowed (numeric settings): {', '.join(NUMERIC_PATHS)}")
            continue
        adapter = _field_adapter(path)
        allowed = _allowed(path)
        if isinstance(spec, list):
            if not spec:
                errors.append(f"{origin}: {file_path} = []: a sweep list needs at least one value; allowed: {allowed}")
                continue
            values, bad = [], False
            for i, item in enumerate(spec):
                try:
                    values.append(adapter.validate_python(item))
                except ValidationError:
                    why = ("must be a finite number" if isinstance(item, float) and not math.isfinite(item)
                           else f"not valid for {path}")
                    errors.append(f"{origin}: {file_path}[{i}] = {_show(item)}: {why}; allowed: {allowed}")
                    bad = True
            if bad:
                continue
            dup = [v for i, v in enumerate(values) if v in values[:i]]
            if dup:
                errors.append(f"{origin}: {file_path} = {_show(spec)}: value {_show(dup[0])} is listed twice; allowed: each value once")
                continue
            specs[path] = values
        elif isinstance(spec, Mapping):
            rng = _check_range(path, file_path, spec, origin, errors)
            if rng is not None:
                specs[path] = rng
        else:
            errors.append(
                f"{origin}: {file_path} = {_show(spec)}: a sweep needs a list of values or a "
                f"{{start, stop, step}} range, not {_type_name(spec)}; allowed values: {allowed}"
            )
    return specs


def _finite(x: int | float) -> bool:
    """True for a number that is finite as a float (a huge integer is not)."""
    try:
        return math.isfinite(float(x))
    except OverflowError:
        return False


def _check_range(path: str, file_path: str, spec: Mapping[str, Any], origin: str, errors: list[str]) -> dict | None:
    ok = True
    for key in spec:
        if key not in _RANGE_KEYS:
            guess = _nearest(key, _RANGE_KEYS)
            hint = f"; did you mean {guess}?" if guess else ""
            errors.append(f"{origin}: {file_path}.{key}: unknown key in a sweep range{hint}; allowed: start, stop, step")
            ok = False
    if not ok:
        return None
    for key in _RANGE_KEYS:
        if key not in spec:
            errors.append(f"{origin}: {file_path}.{key}: required key of a sweep range is missing; allowed: a number")
            ok = False
        elif isinstance(spec[key], bool) or not isinstance(spec[key], (int, float)):
            errors.append(f"{origin}: {file_path}.{key} = {_show(spec[key])}: wrong type ({_type_name(spec[key])}); allowed: a finite number")
            ok = False
        elif not _finite(spec[key]):
            errors.append(f"{origin}: {file_path}.{key} = {_show(spec[key])}: must be a finite number; allowed: a finite number")
            ok = False
    if not ok:
        return None
    start, stop, step = (float(spec[k]) for k in _RANGE_KEYS)
    if step <= 0:
        errors.append(f"{origin}: {file_path}.step = {_show(spec['step'])}: out of range; allowed: a number > 0")
        return None
    if stop < start:
        errors.append(
            f"{origin}: {file_path}.stop = {_show(spec['stop'])}: below start = {_show(spec['start'])}; allowed: stop >= start"
        )
        return None
    span = (stop - start) / step
    if not math.isfinite(span) or span >= 10 * MAX_CASES:
        errors.append(f"{origin}: {file_path}.step = {_show(spec['step'])}: from {_show(spec['start'])} to "
                      f"{_show(spec['stop'])} this gives more than {10 * MAX_CASES:,} values; allowed: a "
                      f"larger step")
        return None
    rng = {"start": start, "stop": stop, "step": step}
    n = _range_length(start, stop, step)
    adapter = _field_adapter(path)
    for label, value in (("start", start), ("stop", float(f"{start + (n - 1) * step:.12g}"))):
        try:
            adapter.validate_python(value)
        except ValidationError:
            errors.append(f"{origin}: {file_path}.{label} = {_show(spec[label])}: out of range for {path}; allowed: {_allowed(path)}")
            return None
    return rng


# ---------------------------------------------------------------------------------------------
# Checks across keys (per sweep point)
# ---------------------------------------------------------------------------------------------

_POINT_PATHS = (
    "source.inlet_temperature_C",
    "source.min_outlet_temperature_C",
    "source.pressure_bar",
    "sink.inlet_temperature_C",
    "sink.temperature_rise_K",
    "sink.pressure_bar",
    "exchangers.pinch_evaporator_K",
    "exchangers.pinch_condenser_K",
    "exchangers.min_pinch_K",
    "limits.max_pressure_bar",
    "limits.min_condensing_pressure_bar",
    "cycle.superheat_K",
    "cycle.max_superheat_K",
)
# Every swept source or sink setting can break the stream models, so they count as well.
_POINT_PATHS = tuple(dict.fromkeys(
    _POINT_PATHS + tuple(p for p in NUMERIC_PATHS if p.startswith(("source.", "sink.")))
))


def _point_problems(study: Study, base: Mapping[str, Any], v: Mapping[str, Any],
                    with_streams: bool = True) -> list[tuple[str, str, str]]:
    """(check id, key path, message) for every cross-key rule the point v breaks."""
    out = []
    T_src = v["source.inlet_temperature_C"]
    T_sink = v["sink.inlet_temperature_C"]
    # an optimised rise or pinch: its lowest value for the temperature budget, the highest rise
    # for the sink's own rules (the optimiser may reach either)
    rise = optimised_or(v["sink.temperature_rise_K"], v["sink.min_temperature_rise_K"])
    p_min = v["exchangers.min_pinch_K"]
    pe, pc = (optimised_or(v["exchangers.pinch_evaporator_K"], p_min),
              optimised_or(v["exchangers.pinch_condenser_K"], p_min))
    v = {**v, "sink.temperature_rise_K": optimised_or(v["sink.temperature_rise_K"], v["sink.max_temperature_rise_K"])}
    # Any cycle must reject heat above the sink outlet + condenser pinch and take it in below
    # the source inlet - evaporator pinch, so the source must be hotter than their sum.
    need = T_sink + rise + pe + pc
    if not T_src > need:
        out.append((
            "too-cold", "source.inlet_temperature_C",
            f"source.inlet_temperature_C = {_show(T_src)}: the source is too cold for the sink; allowed: above "
            f"sink.inlet_temperature_C + sink.temperature_rise_K + exchangers.pinch_evaporator_K + "
            f"exchangers.pinch_condenser_K "
            f"= {T_sink:g} + {rise:g} + {pe:g} + {pc:g} = {need:g} °C",
        ))
    T_min = v["source.min_outlet_temperature_C"]
    if T_min is not None and not T_min < T_src:
        out.append((
            "min-outlet", "source.min_outlet_temperature_C",
            f"source.min_outlet_temperature_C = {_show(T_min)}: not below the source inlet temperature "
            f"{T_src:g} °C; allowed: a number below source.inlet_temperature_C",
        ))
    # the physical rules of the source's and the sink's own kinds (orcscreen.streams)
    out.extend(_streams.SOURCE_KINDS[study.source.kind].point_problems(v, _show))
    out.extend(_streams.SINK_KINDS[study.sink.kind].point_problems(v, _show))
    p_max, p_cmin = v["limits.max_pressure_bar"], v["limits.min_condensing_pressure_bar"]
    if p_max is not None and p_cmin is not None and not p_cmin < p_max:
        out.append((
            "pressures", "limits.min_condensing_pressure_bar",
            f"limits.min_condensing_pressure_bar = {_show(p_cmin)}: not below limits.max_pressure_bar = "
            f"{p_max:g}; allowed: a number below the highest pressure",
        ))
    sh, sh_max = v["cycle.superheat_K"], v["cycle.max_superheat_K"]
    if isinstance(sh, float) and sh > sh_max:
        out.append((
            "superheat", "cycle.superheat_K",
            f"cycle.superheat_K = {_show(sh)}: above cycle.max_superheat_K = {sh_max:g}; allowed: a number "
            f"from 0 to cycle.max_superheat_K",
        ))
    if with_streams and not out:
        for name in ("source", "sink"):
            section = dict(base[name])
            section.update({p.split(".", 1)[1]: x for p, x in v.items() if p.startswith(name + ".")})
            problem = _stream_problem(name, _canonical_or_none(section))
            if problem:
                out.append((f"stream-{name}", name, _stream_line(name, section, problem)))
    return out


def _canonical_or_none(section: Mapping[str, Any]) -> str:
    try:
        return _canonical(section)
    except ValueError:  # a non-finite number: refused by the section models already
        return json.dumps(section, sort_keys=True, default=str)


def _stream_line(name: str, section: Mapping[str, Any], problem: str) -> str:
    """One line for a refusal of the stream model: the model's own message when it names a
    key of the section (``source.xxx = ...``), else the kind of stream and the reason."""
    if problem.startswith(f"{name}."):
        return problem
    kind = section.get("kind") or ("water" if name == "sink" else None)
    return f"{name}.kind = {_show(kind)}: the {name} model refuses these settings: {problem}"


@functools.lru_cache(maxsize=4096)
def _stream_problem(name: str, section_json: str) -> str | None:
    """What the stream model of streams.py says against a source or sink section, or None."""
    from orcscreen import streams
    from orcscreen.properties import PropertyError

    section = json.loads(section_json)
    build = streams.source_from_settings if name == "source" else streams.sink_from_settings
    try:
        build(section)
    except streams.StreamError as exc:
        return str(exc)
    except (PropertyError, ValueError, ArithmeticError):
        # a fluid-property failure: said in plain words, CoolProp's own text left out
        key = f"{name}.inlet_temperature_C"
        return (f"{key} = {_show(section.get('inlet_temperature_C'))}: the {name}'s properties "
                f"cannot be evaluated at these settings (outside the range of its model or "
                f"equation of state); allowed: a temperature and pressure inside that range")
    return None


def _check_points(study: Study, specs: dict[str, Any], origin: str, errors: list[str], *,
                  with_streams: bool = True) -> None:
    """Apply the cross-key rules to the base values and to every sweep point that can matter."""
    base = study.base_case()
    fixed = {p: base[p.split(".")[0]][p.split(".")[1]] for p in _POINT_PATHS}
    swept = [p for p in specs if p in _POINT_PATHS]
    n_total = math.prod(_axis_length(specs[p]) for p in swept)
    if n_total > 100_000:
        # The rules are monotone in each value, so the corners of the sweep box find any breach.
        axes = [_axis_bounds(specs[p]) for p in swept]
        exact = False
    else:
        axes = [_axis_values(specs[p]) for p in swept]
        exact = True
    # The stream models (a table per source and sink setting) are built at every point of a
    # sweep of at most STREAM_POINTS_EXACT points, else at the corners of the sweep box only.
    streams_exact = n_total <= STREAM_POINTS_EXACT
    seen: dict[str, tuple[str, dict[str, Any], int]] = {}
    n_points = 0
    for combo in itertools.product(*axes):
        n_points += 1
        values = dict(fixed)
        values.update(zip(swept, combo))
        for check, path, message in _point_problems(study, base, values, with_streams and streams_exact):
            if check in seen:
                first = seen[check]
                seen[check] = (first[0], first[1], first[2] + 1)
            else:
                seen[check] = (message, dict(zip(swept, combo)), 1)
    at_corners: dict[str, tuple[str, dict[str, Any]]] = {}
    if with_streams and not streams_exact and not seen:
        for combo in itertools.product(*(_axis_bounds(specs[p]) for p in swept)):
            values = dict(fixed)
            values.update(zip(swept, combo))
            for check, path, message in _point_problems(study, base, values, True):
                at_corners.setdefault(check, (message, dict(zip(swept, combo))))
    for message, point, count in seen.values():
        where = ""
        if point:
            where = " (at sweep point " + ", ".join(f"{p} = {_show(x)}" for p, x in point.items())
            where += f"; {count} of {n_points} points)" if exact else "; a corner of the sweep)"
        errors.append(f"{origin}: {message}{where}")
    for message, point in at_corners.values():
        where = ", ".join(f"{p} = {_show(x)}" for p, x in point.items())
        errors.append(f"{origin}: {message} (at sweep point {where}; a corner of the sweep)")


def _axis_bounds(spec: Any) -> list[Any]:
    """Smallest and largest value of an axis ("optimise" counts as the largest), without expanding it."""
    if isinstance(spec, dict):
        n = _axis_length(spec)
        last = float(f"{spec['start'] + (n - 1) * spec['step']:.12g}")
        return sorted({spec["start"], last})
    key = lambda x: x if isinstance(x, float) else math.inf  # noqa: E731
    return sorted({min(spec, key=key), max(spec, key=key)}, key=key)


_STREAM_KINDS = {"source": (_streams.SOURCE_KINDS, SourceSection), "sink": (_streams.SINK_KINDS, SinkSection)}


def _kinds_owning(key: str, name: str = "source") -> list[str]:
    """The source (or sink) kinds that take a key only some kinds take (their classes' own_keys)."""
    return [k for k, c in _STREAM_KINDS[name][0].items() if key in c.own_keys]


def _kind_keys(name: str) -> tuple[str, ...]:
    """Keys of [source] or [sink] that only some kinds take, from the stream classes."""
    return tuple(dict.fromkeys(k for c in _STREAM_KINDS[name][0].values() for k in c.own_keys))


def _check_source_keys(study: Study, origin: str, errors: list[str]) -> Study:
    """Rules between keys of [source] and of [sink] that do not vary with the sweep: keys that
    only other kinds take, then the kind's own rules (orcscreen.streams); returns the study with
    the kind's fixes applied (e.g. the flue-gas composition normalised, the source fluid name
    canonical)."""
    for name, (kinds, section_model) in _STREAM_KINDS.items():
        sec = getattr(study, name)
        kind = sec.kind
        model = kinds[kind]
        section = sec.model_dump()
        defaults = {k: fi.default for k, fi in section_model.model_fields.items()}
        for key in _kind_keys(name):
            if key not in model.own_keys and section.get(key) != defaults.get(key):
                owners = " or ".join(_kinds_owning(key, name))
                errors.append(f"{origin}: {name}.{key} = {_show(section[key])}: only for kind {owners} "
                              f"(this {name} is {kind!r}); allowed: leave it out")
        problems, fixes = model.settings_problems(section, name, _show)
        errors.extend(f"{origin}: {p}" for p in problems)
        if fixes and not problems:
            study = study.model_copy(update={name: sec.model_copy(update=fixes)})
    return study


def _check_swept_source_keys(study: Study, flat: dict[str, tuple[str, Any]], specs: dict[str, Any],
                             origin: str, errors: list[str]) -> None:
    """A swept source (or sink) setting must apply to its kind, as a written one must."""
    for path in specs:
        section_name, _, key = path.partition(".")
        if section_name not in _STREAM_KINDS:
            continue
        kind = getattr(study, section_name).kind
        model = _STREAM_KINDS[section_name][0][kind]
        if key in _kind_keys(section_name) and key not in model.own_keys:
            why = f"only for kind {' or '.join(_kinds_owning(key, section_name))}"
        else:
            why = model.swept_key_problem(key, getattr(study, section_name).model_dump())
        if why:
            errors.append(f"{origin}: {flat[path][0]}: {why} (this {section_name} is {kind!r}); allowed: "
                          f"leave this sweep out")


# ---------------------------------------------------------------------------------------------
# Fluids
# ---------------------------------------------------------------------------------------------

def _check_mixtures(section: FluidsSection, origin: str, errors: list[str]) -> list[dict[str, Any]]:
    """The [fluids] mixtures entries whose components are catalogue fluids forming a pair with
    interaction parameters in CoolProp (orcscreen.mixtures.check_pair); one error line per other
    entry, naming its key path."""
    from orcscreen import fluids, mixtures

    good = []
    for i, entry in enumerate(section.mixtures):
        where = f"{origin}: fluids.mixtures[{i}].components = {_show(list(entry.components))}"
        try:
            mixtures.check_pair(*entry.components)
        except fluids.UnknownFluidError as exc:
            errors.append(f"{where}: {exc}; allowed: {_allowed('fluids.mixtures.components')} "
                          f"(names listed by `orcscreen fluids`)")
            continue
        except mixtures.MixtureError as exc:
            errors.append(f"{where}: {exc.problem}; allowed: {exc.allowed}")
            continue
        good.append(entry.model_dump())
    return good


def _resolve_fluids(section: FluidsSection, origin: str, errors: list[str]) -> tuple[str, ...]:
    """CoolProp names of the chosen fluids (catalogue order), then of the mixtures (file order,
    composition order; orcscreen.mixtures.mixture_name)."""
    from orcscreen import fluids

    entries = _check_mixtures(section, origin, errors)
    try:
        infos = fluids.select(
            include=list(section.include),
            exclude=list(section.exclude),
            max_gwp=section.max_gwp,
            safety_classes=None if section.safety_classes is None else list(section.safety_classes),
            zero_odp=section.zero_odp,
            mixtures=entries,
        )
    except fluids.UnknownFluidError as exc:
        errors.append(f"{origin}: fluids: {exc}; allowed: names and families listed by `orcscreen fluids`")
        return ()
    except ValueError as exc:
        errors.append(f"{origin}: fluids: {exc}")
        return ()
    names = [getattr(info, "coolprop_name", info) for info in infos]
    names = tuple(dict.fromkeys(names))
    if not names:
        errors.append(
            f"{origin}: fluids = {_show(section.model_dump(exclude_defaults=True))}: the filter leaves no fluid; "
            f"allowed: a filter that keeps at least one fluid (see orcscreen fluids)"
        )
    return names


def _fluid_warnings(names: tuple[str, ...], origin: str) -> tuple[str, ...]:
    """A line for each chosen fluid that the Montreal Protocol phases out (only named ones can
    be chosen: "all" leaves them out, orcscreen.fluids.selection)."""
    from orcscreen import fluids

    return tuple(f"{origin}: fluids: {line}" for line in fluids.regulatory_warnings(names))


# ---------------------------------------------------------------------------------------------
# Entry points
# ---------------------------------------------------------------------------------------------

def load_study(path: str | Path, *, allow_huge: bool = False) -> Study:
    """Read, validate and resolve a study file; raise :class:`StudyError` on any bad input."""
    path = Path(path)
    origin = str(path)
    try:
        raw_bytes = path.read_bytes()
    except FileNotFoundError:
        raise StudyError(f"{origin}: study file not found") from None
    except OSError as exc:
        raise StudyError(f"{origin}: cannot read the study file: {exc.strerror or exc}") from None
    try:
        text = raw_bytes.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw_bytes.count(b"\n", 0, exc.start) + 1
        raise StudyError(f"{origin}: line {line}: not UTF-8 text (byte {exc.start}); allowed: a UTF-8 TOML "
                         f"file") from None
    text = text.removeprefix("\ufeff")  # a UTF-8 byte-order mark, as some editors write, is accepted
    too_long = _long_dotted_key(text)
    if too_long is not None:  # the TOML parser's time and memory grow with its square
        raise StudyError(f"{origin}: line {too_long}: a key of more than {MAX_NESTING} dotted parts; "
                         f"allowed: at most {MAX_NESTING} levels (a study needs 4)")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        where = "" if " line " in str(exc) else f" (line {_line_of(text, len(text))}, the last line)"
        raise StudyError(f"{origin}: TOML syntax error: {exc}{where}") from None
    except RecursionError:
        raise StudyError(_deep_text_message(origin, text)) from None
    except ValueError as exc:  # e.g. an integer literal beyond Python's digit limit
        raise StudyError(_long_literal_message(origin, text, exc)) from None
    return study_from_dict(data, origin=origin, allow_huge=allow_huge)


_KEY_PART = re.compile(r"^[ \t]*\[*([^=\]\n#]*)", re.MULTILINE)


def _long_dotted_key(text: str) -> int | None:
    """The line of the first key or table header with more than :data:`MAX_NESTING` dots in
    it (the text before "=" or inside the brackets), or None."""
    for match in _KEY_PART.finditer(text):
        if match.group(1).count(".") > MAX_NESTING:
            return _line_of(text, match.start())
    return None


def _line_of(text: str, pos: int) -> int:
    return text.count("\n", 0, pos) + 1


def _deep_text_message(origin: str, text: str) -> str:
    """The message for TOML text nested too deeply for the parser: the line where the
    nesting passes :data:`MAX_NESTING` (brackets and braces outside strings and comments)."""
    depth, pos, n = 0, None, len(text)
    i = 0
    while i < n:
        c = text[i]
        if c in "\"'":
            triple = text.startswith(c * 3, i)
            end = text.find(c * 3 if triple else c, i + (3 if triple else 1))
            while end != -1 and c == '"' and text[end - 1] == "\\":
                end = text.find(c * 3 if triple else c, end + 1)
            i = n if end == -1 else end + (3 if triple else 1)
            continue
        if c == "#":
            end = text.find("\n", i)
            i = n if end == -1 else end
            continue
        if c in "[{":
            depth += 1
            if depth > MAX_NESTING and pos is None:
                pos = i
        elif c in "]}":
            depth -= 1
        i += 1
    where = f"line {_line_of(text, pos)}" if pos is not None else "line 1"
    return (f"{origin}: {where}: tables or arrays nested more than {MAX_NESTING} levels deep; "
            f"allowed: at most {MAX_NESTING} levels (a study needs 4)")


def _long_literal_message(origin: str, text: str, exc: ValueError) -> str:
    """The message for a literal the TOML parser cannot convert (an integer of thousands of
    digits): the line of the longest run of digits."""
    import re

    runs = [(m.end() - m.start(), m.start()) for m in re.finditer(r"[0-9_]{100,}", text)]
    if runs:
        length, start = max(runs)
        return (f"{origin}: line {_line_of(text, start)}: a number literal of {length:,} digits; allowed: "
                f"an ordinary number (at most a few hundred digits)")
    return f"{origin}: line 1: the TOML text cannot be read ({exc}); allowed: a TOML study file"


def _nesting_problem(d: Mapping[str, Any], origin: str) -> str | None:
    """A message when tables or arrays in ``d`` nest deeper than :data:`MAX_NESTING` (found
    without recursion), naming the key path where it happens."""
    stack: list[tuple[Any, str, int]] = [(d, "", 0)]
    while stack:
        value, path, depth = stack.pop()
        if depth > MAX_NESTING:
            return (f"{origin}: {_cut(path)}: tables or arrays nested more than {MAX_NESTING} levels "
                    f"deep; allowed: at most {MAX_NESTING} levels (a study needs 4)")
        if isinstance(value, Mapping):
            stack.extend((v, f"{path}.{k}" if path else str(k), depth + 1) for k, v in value.items())
        elif isinstance(value, list):
            stack.extend((v, f"{path}[{i}]", depth + 1) for i, v in enumerate(value))
    return None


def _turbine_key_problems(raw: Mapping[str, Any], study: Study, specs: Mapping[str, Any], origin: str,
                          errors: list[str]) -> None:
    """A key that only another turbine model reads (its class's own_keys), written or swept, is
    refused: with the size-dependent default a written turbine_efficiency would silently be
    ignored."""
    chosen = study.machines.turbine_model
    mine = _turbine.TURBINE_MODELS[chosen].own_keys
    named = "machines" in raw and isinstance(raw["machines"], Mapping) and "turbine_model" in raw["machines"]
    which = _show(chosen) + ("" if named else ", the default")
    for model_name, model in _turbine.TURBINE_MODELS.items():
        for path in model.own_keys:
            if path in mine:
                continue
            section, _, key = path.partition(".")
            table = raw.get(section)
            written = isinstance(table, Mapping) and key in table
            if written or path in specs:
                shown = f"{path} = {_show(table[key])}" if written else f"sweep.{path}"
                errors.append(f"{origin}: {shown}: only for machines.turbine_model = {_show(model_name)} (this study's "
                              f"model is {which}); allowed: leave it out, or set machines.turbine_model = "
                              f"{_show(model_name)}")


def _time_limit_problems(study: Study, specs: Mapping[str, Any], origin: str, errors: list[str]) -> None:
    """A case time limit beyond :data:`MAX_CASE_TIME_LIMIT_S` cannot be timed."""
    values = [study.study.case_time_limit_s]
    path = "study.case_time_limit_s"
    if path in specs:
        values = [v for v in _axis_bounds(specs[path]) if isinstance(v, float)]
    for value in values:
        if value > MAX_CASE_TIME_LIMIT_S:
            errors.append(f"{origin}: {path} = {_show(value)}: longer than a case can be timed; allowed: a "
                          f"number > 0 and at most {MAX_CASE_TIME_LIMIT_S:.0f} s (about 11.6 days)")
            return


def _check_year(study: Study, raw: Mapping[str, Any], specs: Mapping[str, Any], origin: str,
                errors: list[str]) -> Study:
    """The year file: resolved inside the study's folder, read and binned (orcscreen.year; its
    problems name the file, row and column), its hash kept for the case keys; the design sink
    temperature settled (year.design_sink_temperature_C, else a written sink.inlet_temperature_C,
    else the year's mean) and put in [sink]."""
    from orcscreen import year as _year

    section = study.year
    given = (raw.get("year") or {}) if isinstance(raw.get("year"), Mapping) else {}
    for key in ("resolved_path", "sha256"):
        if key in given:
            errors.append(f"{origin}: year.{key}: set by orcscreen on loading; allowed: leave it out")
    if section.file is None:
        return study
    if "sink.inlet_temperature_C" in specs:
        errors.append(f"{origin}: sweep.\"sink.inlet_temperature_C\": the year gives the sink temperatures; "
                      f"allowed: leave this sweep out, or the [year] section")
        return study
    study_file = Path(origin) if origin != "<dict>" else Path.cwd() / "study.toml"
    try:
        path = _year.resolve_year_path(study_file, section.file)
    except _year.YearError as exc:  # names the study file and the key
        errors.append(str(exc))
        return study
    try:
        year = _year.read_year(path, section.bin_width_K)
        sha = hashlib.sha256(path.read_bytes()).hexdigest()
    except (_year.YearError, OSError) as exc:  # names the year file, its row and column
        errors.append(f"{origin}: year.file = {_show(section.file)}: {exc}")
        return study
    written = (raw.get("sink") or {}).get("inlet_temperature_C") if isinstance(raw.get("sink"), Mapping) else None
    T_design = section.design_sink_temperature_C
    if T_design is None:
        T_design = float(written) if isinstance(written, (int, float)) else round(year.mean_sink_temperature_C, 2)
    update = {"resolved_path": str(path), "sha256": sha, "design_sink_temperature_C": T_design}
    return study.model_copy(update={"year": section.model_copy(update=update),
                                    "sink": study.sink.model_copy(update={"inlet_temperature_C": T_design})})


def criterion_problems(names: Mapping[str, str], study: Mapping[str, Any], origin: str) -> list[str]:
    """One line per criterion (``names``: where it was given, e.g. ``study.rank_by[2]`` -> its
    name) whose required study keys (``Criterion.requires``: a year, the price of the electricity)
    the study (a mapping of sections) leaves unset."""
    lines = []
    for where, name in names.items():
        criterion = _objectives.CRITERIA[name]
        other = "another objective" if where == "study.objective" else "another criterion"
        for key, what in _objectives.unmet(criterion, study):
            lines.append(f'{origin}: {where} = "{name}": needs {what}; allowed: give {key}, or {other}')
    return lines


def _objective_problems(study: Study, origin: str, errors: list[str]) -> None:
    """The objective and the ranking criteria have the study keys they need (a year, the price
    of the electricity); a pinch is optimised only for a cost (for the net power its lowest value
    always wins)."""
    objective = _objectives.OBJECTIVES[study.study.objective]
    names = {"study.objective": objective.name}
    names.update({f"study.rank_by[{i}]": n for i, n in enumerate(study.study.rank_by)
                  if n != objective.name})
    errors.extend(criterion_problems(names, study.model_dump(mode="python", by_alias=True), origin))
    for key in ("pinch_evaporator_K", "pinch_condenser_K"):
        if getattr(study.exchangers, key) == "optimise" and not objective.needs_costs:
            errors.append(f'{origin}: exchangers.{key} = "optimise": with study.objective = "{objective.name}" the '
                          f"smallest pinch always wins; allowed: a number > 0, or a cost objective "
                          f"({', '.join(o.name for o in _objectives.OBJECTIVES.values() if o.needs_costs)})")


def _sweep_override_warnings(raw: Mapping[str, Any], flat: Mapping[str, tuple[str, Any]],
                             specs: Mapping[str, Any], origin: str) -> tuple[str, ...]:
    """One warning per swept setting that is also written in its section: the sweep wins. A
    required key (no default, e.g. source.inlet_temperature_C) must be written even when swept,
    so it gets no warning (there would be no way to silence it)."""
    lines = []
    for path in specs:
        section, _, key = path.partition(".")
        table = raw.get(section)
        model = _SECTION_MODELS.get(section)
        required = model is not None and key in model.model_fields and model.model_fields[key].is_required()
        if isinstance(table, Mapping) and key in table and not required:
            lines.append(f"{origin}: warning: {flat[path][0]} overrides {path} = {_show(table[key])} "
                         f"written in [{section}]; the swept values are used, the written one is "
                         f"ignored; remove one of the two to silence this warning")
    return tuple(lines)


def study_from_dict(d: Mapping[str, Any], origin: str = "<dict>", *, allow_huge: bool = False) -> Study:
    """Validate a study given as a dictionary (the parsed TOML); raise :class:`StudyError`."""
    if not isinstance(d, Mapping):
        raise StudyError(f"{origin}: a study must be a table of sections, not {_type_name(d)}")
    deep = _nesting_problem(d, origin)
    if deep:
        raise StudyError(deep)
    errors: list[str] = []
    raw = dict(d)
    raw_sweep = raw.pop("sweep", {})
    version = raw.get("schema_version", SCHEMA_VERSION)
    if version != SCHEMA_VERSION or isinstance(version, bool):
        raise StudyError(
            f"{origin}: schema_version = {_show(version)}: this orcscreen reads schema version "
            f"{SCHEMA_VERSION}; allowed: 1"
        )
    study: Study | None
    try:
        study = Study.model_validate(raw)
    except ValidationError as exc:
        errors.extend(_format_validation_errors(exc, origin))
        study = None
    flat = _flatten_sweep(raw_sweep, origin, errors)
    specs = _check_sweep(flat, origin, errors)
    if study is None:
        raise StudyError(errors)
    study = _check_source_keys(study, origin, errors)
    _check_swept_source_keys(study, flat, specs, origin, errors)
    _turbine_key_problems(raw, study, specs, origin, errors)
    _time_limit_problems(study, specs, origin, errors)
    _objective_problems(study, origin, errors)
    study = _check_year(study, raw, specs, origin, errors)
    fluids = _resolve_fluids(study.fluid_filter, origin, errors)
    _check_points(study, specs, origin, errors, with_streams=not errors)
    study._origin = origin
    study._fluids = fluids
    study._sweep = specs
    study._warnings = _sweep_override_warnings(raw, flat, specs, origin) + _fluid_warnings(fluids, origin)
    if not errors and not allow_huge and study.n_cases > MAX_CASES:
        sizes = " x ".join(f"{n} {p}" for p, n in study.sweep_sizes.items())
        sizes = f"{sizes} x " if sizes else ""
        errors.append(
            f"{origin}: sweep: {study.n_cases:,} cases ({sizes}{len(fluids)} fluids x {len(study.layouts)} layouts) "
            f"is more than {MAX_CASES:,}; allowed: at most {MAX_CASES:,} cases, or confirm with --yes"
        )
    if errors:
        raise StudyError(errors)
    return study


def _versions() -> dict[str, str]:
    from orcscreen import properties

    from orcscreen._version import __version__

    return {"orcscreen": __version__, "coolprop": properties.coolprop_version()}


def _canonical(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=True, allow_nan=False)


def case_key(case: Case | Mapping[str, Any]) -> str:
    """Stable key of a case: first 16 hex digits of sha256 over its canonical JSON and versions.

    Every input is covered except the study name, the case time limit and the ranking criteria
    (none changes the physics), so renaming a study, giving cases more time or ranking by other
    criteria recomputes nothing. The
    "sweep" entry is covered too: the store keeps each row's swept values, and a case reused
    under another sweep shape would carry stale sweep columns. Extending a sweep axis keeps the
    keys of the points already computed.
    """
    body = dict(case.as_dict() if isinstance(case, Case) else case)
    if isinstance(body.get("study"), Mapping):
        body["study"] = {k: v for k, v in body["study"].items() if k not in ("name", "case_time_limit_s", "rank_by")}
    text = _canonical({"case": body, "versions": _versions()})
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:16]


def study_hash(study: Study) -> str:
    """First 16 hex digits of sha256 over the whole validated study, its fluids and the versions."""
    body = {
        "study": study.model_dump(mode="json", by_alias=True),
        "sweep": study.sweep_spec,
        "fluids": list(study.fluids),
        "versions": _versions(),
    }
    return hashlib.sha256(_canonical(body).encode("ascii")).hexdigest()[:16]


def json_schema() -> dict[str, Any]:
    """JSON Schema of the study file (schema version 1), with units and allowed values."""
    schema = Study.model_json_schema(by_alias=True)
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["description"] = (
        "Study file of orcscreen, TOML, schema version 1. Units are in the key names (_C, _K, _bar, "
        "_kg_s). Every key has a default except [source] kind, inlet_temperature_C and mass_flow_kg_s."
    )
    schema["properties"]["sweep"] = _sweep_schema()
    schema.setdefault("$defs", {})["SweepRange"] = _SWEEP_RANGE_SCHEMA
    return schema


_SWEEP_RANGE_SCHEMA: dict[str, Any] = {
    "type": "object",
    "description": "A range: start + i*step up to stop, stop included when it falls on the grid.",
    "properties": {
        "start": {"type": "number"},
        "stop": {"type": "number", "description": "stop >= start"},
        "step": {"type": "number", "exclusiveMinimum": 0},
    },
    "required": list(_RANGE_KEYS),
    "additionalProperties": False,
}


def _sweep_schema() -> dict[str, Any]:
    axis = {
        "description": "A list of values or a {start, stop, step} range.",
        "oneOf": [{"type": "array", "minItems": 1, "items": {"type": ["number", "string"]}}, {"$ref": "#/$defs/SweepRange"}],
    }
    props: dict[str, Any] = {}
    nested: dict[str, dict[str, Any]] = {}
    for path in NUMERIC_PATHS:
        section, key = path.split(".")
        entry = dict(axis, description=f"Sweep of {path}: list of values or range. Each value: {_allowed(path)}.")
        props[path] = entry
        nested.setdefault(section, {"type": "object", "additionalProperties": False, "properties": {}})
        nested[section]["properties"][key] = entry
    props.update(nested)
    return {
        "type": "object",
        "title": "Sweep",
        "description": "Settings to vary, by dotted path (quoted, or nested as [sweep.<section>]); the cases "
        "are the product of all sweeps times fluids times layouts.",
        "properties": props,
        "additionalProperties": False,
    }
