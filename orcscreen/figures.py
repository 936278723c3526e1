"""The result row and the detail of one case, built from an evaluated cycle.

The row holds the figures of merit of DESIGN section 3 as columns with units in their names
(:data:`ROW_COLUMNS`: the common columns, then the layouts' own columns from the layout
registry); the detail holds what the charts draw (states, T-Q profiles, T-s path, saturation
dome, the optimiser's scan). Units: the columns' (°C, bar, kW); SI inside.
"""

from __future__ import annotations

import math

from . import areas, economics, fluids, streams
from .annual import YEAR_COLUMNS, design_year_columns
from .economics import ECONOMIC_COLUMNS
from .cycles import LAYOUTS, CycleResult, Layout, saturation_dome
from .cycles.base import P_ATM_PA, CycleSettings
from .fluids import UNKNOWN, safety_class_text

__all__ = ["ROW_COLUMNS", "COMMON_COLUMNS", "LAYOUT_COLUMNS", "APPROACH_COLUMNS", "result_row", "empty_row", "fluid_names",
           "energy_figures", "case_detail"]

#: Area of each exchanger [m2], from its UA zone by zone (orcscreen.areas).
AREA_COLUMNS = tuple(f"area_{e}_m2" for e in areas.EXCHANGERS)

#: The approach each exchanger reached [K] (its smallest hot-minus-cold temperature difference),
#: by exchanger: at least the study's pinch setting (exchangers.pinch_*_K), larger where another
#: limit holds the exchanger back (a source outlet limit, a pressure limit, a recuperator's
#: effectiveness).
APPROACH_COLUMNS = {e: f"approach_{e}_K" for e in ("evaporator", "condenser", "recuperator")}

#: Columns every layout fills (DESIGN section 5). A zeotropic mixture's evaporation and condensing
#: temperatures are its dew temperatures at those pressures; evaporator_glide_K and
#: condenser_glide_K are dew minus bubble temperature there (0 for a pure fluid, NaN for a
#: supercritical heater); first_component_*_fraction give a mixture's composition (NaN for a
#: pure fluid); composition_optimised is True where the composition was searched (the study's
#: mole_fractions = "optimise"; the coolprop_name then holds the composition found). fluid is the catalogue's display name (what a
#: person reads), coolprop_name the name CoolProp and the study's case keys use. evaporation_* are NaN for a supercritical
#: heater; turbine_inlet_pressure_bar is the highest cycle pressure in every layout.
COMMON_COLUMNS = (
    "fluid", "coolprop_name", "layout", "status", "reason", "warnings", "caution",
    "net_power_kW", "turbine_power_kW", "pump_power_kW", "aux_power_kW", "heat_input_kW",
    "heat_rejected_kW", "recuperator_duty_kW", "thermal_efficiency", "exergy_efficiency",
    "carnot_efficiency", "heat_recovery_factor", "total_efficiency", "source_exergy_kW",
    "evaporation_pressure_bar", "evaporation_temperature_C", "reduced_pressure",
    "condensing_pressure_bar", "condensing_temperature_C", "evaporator_glide_K", "condenser_glide_K", "superheat_K",
    "turbine_inlet_pressure_bar", "turbine_inlet_temperature_C", "turbine_outlet_temperature_C",
    "turbine_outlet_quality", "wf_mass_flow_kg_s", "sink_mass_flow_kg_s", "source_outlet_temperature_C",
    "sink_temperature_rise_K", "pinch_location", *APPROACH_COLUMNS.values(), "ua_evaporator_kW_K",
    "ua_condenser_kW_K", "ua_recuperator_kW_K", "ua_total_kW_K", "size_parameter_m",
    "volume_ratio", "turbine_model", "turbine_stages", "volume_ratio_per_stage", "turbine_efficiency",
    *AREA_COLUMNS, "condenser_area_basis", *ECONOMIC_COLUMNS, *YEAR_COLUMNS,
)
_TAIL_COLUMNS = (
    "binding_limit", "sub_atmospheric_condenser", "family", "first_component_mole_fraction",
    "first_component_mass_fraction", "composition_optimised",
    "safety_class", "gwp100", "odp", "curve_type", "evaluations", "elapsed_s",
)
#: The layouts' own columns, from the layout registry, in registry order.
LAYOUT_COLUMNS = tuple(dict.fromkeys(c for layout in LAYOUTS.values() for c in layout.columns))
#: Columns of a result row, in order (DESIGN section 5).
ROW_COLUMNS = COMMON_COLUMNS + LAYOUT_COLUMNS + _TAIL_COLUMNS


def fluid_names(fluid: str, info) -> dict:
    """The row's fluid columns: the display name (fluid) and the CoolProp name (coolprop_name)
    from the catalogue entry info; the case's own name for both when there is no entry."""
    return {"fluid": getattr(info, "display_name", fluid), "coolprop_name": getattr(info, "coolprop_name", fluid)}


def empty_row(fluid: str, layout: str, info, status: str, reason: str, elapsed: float, evaluations: int = 0) -> dict:
    """A row without figures (infeasible or failed case), with the fluid's catalogue facts
    (fluid: the case's CoolProp name)."""
    row = {k: math.nan for k in ROW_COLUMNS}
    row.update(
        **fluid_names(fluid, info),
        layout=layout,
        status=status,
        reason=reason,
        warnings="",
        pinch_location="",
        condenser_area_basis="",
        binding_limit="",
        composition_optimised=False,
        sub_atmospheric_condenser=None,
        evaluations=evaluations,
        elapsed_s=elapsed,
    )
    _add_fluid_columns(row, info)
    return row


def _add_fluid_columns(row: dict, info, flag_condensing_below_Pa: float | None = None) -> None:
    """The fluid's catalogue facts (words as the catalogue displays them: one spelling of
    "unknown" and "not classified", orcscreen.fluids.safety_class_text; numbers NaN when
    unknown), its caution (orcscreen.fluids.caution_text, from the facts and the row's
    condensing pressure) and, for an ozone-depleting fluid, its warning."""
    flag_bar = None if flag_condensing_below_Pa is None else flag_condensing_below_Pa / 1e5
    row["caution"] = fluids.caution_text(info, row, flag_bar)
    if info is None:
        row.update(family=UNKNOWN, safety_class=safety_class_text(None), gwp100=math.nan, odp=math.nan,
                   curve_type=UNKNOWN)
        return
    row["warnings"] = "; ".join(w for w in (row["warnings"], fluids.ozone_depleting_warning(info)) if w)
    row.update(
        family=info.family,
        safety_class=safety_class_text(info.safety_class),
        gwp100=math.nan if info.gwp100 is None else info.gwp100,
        odp=math.nan if info.odp is None else info.odp,
        curve_type=info.curve_type,
    )


def energy_figures(r: CycleResult) -> dict:
    """Powers and duties [kW] and the thermal efficiency of an evaluated cycle."""
    return {
        "net_power_kW": r.W_net_W / 1e3,
        "turbine_power_kW": r.W_turbine_W / 1e3,
        "pump_power_kW": r.W_pump_W / 1e3,
        "heat_input_kW": r.Q_in_W / 1e3,
        "heat_rejected_kW": r.Q_out_W / 1e3,
        "recuperator_duty_kW": r.Q_rec_W / 1e3,
        "thermal_efficiency": r.W_net_W / r.Q_in_W,
    }


def carnot_efficiency(r: CycleResult) -> float:
    """1 - T_min / T_max over the cycle's states: an upper bound of its thermal efficiency."""
    T = [st.T_K for st in r.states.values()]
    return 1.0 - min(T) / max(T)


def result_row(fluid_name: str, layout: Layout, info, fluid, source, sink, r: CycleResult, binding: str, n: int,
               elapsed: float, settings: CycleSettings | None = None) -> dict:
    """The row of a feasible case (DESIGN section 5); settings: the case's (for the turbine model's
    name and the plausibility flags)."""
    T0 = sink.T_in_K
    ex_source = streams.source_exergy_W(source, T0)
    q_avail = streams.available_heat_W(source, T0)
    st_in, st_out = r.states[r.turbine_inlet], r.states[r.turbine_outlet]
    prof = r.profiles
    ua = {k: p.ua_W_K() / 1e3 for k, p in prof.items()}
    approach = {k: p.min_approach_K for k, p in prof.items()}
    row = {k: math.nan for k in ROW_COLUMNS}
    row.update({
        **fluid_names(fluid_name, info),
        "layout": layout.name,
        "status": "ok",
        "reason": "",
        **energy_figures(r),
        "aux_power_kW": r.W_aux_W / 1e3,
        "exergy_efficiency": r.W_net_W / ex_source,
        "carnot_efficiency": carnot_efficiency(r),
        "heat_recovery_factor": r.Q_in_W / q_avail,
        "total_efficiency": r.W_net_W / q_avail,
        "source_exergy_kW": ex_source / 1e3,
        "evaporation_pressure_bar": math.nan if layout.supercritical else r.p_evap_Pa / 1e5,
        "evaporation_temperature_C": r.T_evap_K - 273.15,
        "reduced_pressure": r.p_evap_Pa / fluid.p_crit_Pa,
        "condensing_pressure_bar": r.p_cond_Pa / 1e5,
        "condensing_temperature_C": r.T_cond_K - 273.15,
        "superheat_K": r.superheat_K,
        "turbine_inlet_pressure_bar": st_in.p_Pa / 1e5,
        "turbine_inlet_temperature_C": st_in.T_K - 273.15,
        "turbine_outlet_temperature_C": st_out.T_K - 273.15,
        "turbine_outlet_quality": st_out.q,
        "wf_mass_flow_kg_s": r.m_wf_kg_s,
        "sink_mass_flow_kg_s": r.m_sink_kg_s,
        "source_outlet_temperature_C": r.T_source_out_K - 273.15,
        "sink_temperature_rise_K": r.variables.get("sink_temperature_rise_K", getattr(sink, "rise_K", math.nan)),
        "pinch_location": r.pinch_location,
        **{col: approach.get(e, math.nan) for e, col in APPROACH_COLUMNS.items()},
        "ua_evaporator_kW_K": ua.get("evaporator", math.nan),
        "ua_condenser_kW_K": ua.get("condenser", math.nan),
        "ua_recuperator_kW_K": ua.get("recuperator", math.nan),
        "ua_total_kW_K": sum(ua.values()),
        "size_parameter_m": r.size_parameter_m,
        "volume_ratio": r.volume_ratio,
        "turbine_model": getattr(getattr(settings, "turbine", None), "name", ""),
        "turbine_stages": getattr(r.turbine_design, "stages", math.nan),
        "volume_ratio_per_stage": getattr(r.turbine_design, "vr_per_stage", math.nan),
        "turbine_efficiency": r.eta_turbine,
        "binding_limit": binding,
        "composition_optimised": False,
        "sub_atmospheric_condenser": bool(r.p_cond_Pa < P_ATM_PA),
        "evaluations": n,
        "elapsed_s": elapsed,
    })
    row.update({k: v for k, v in r.figures.items() if k in layout.columns})
    row.update(_glides(layout, fluid, r))
    notes = _warnings(layout, source, r, settings)
    row.update(economics.areas_and_costs(r, source, sink, settings, notes)[0])
    row.update(design_year_columns(getattr(settings, "economics", None)))
    row["warnings"] = "; ".join(notes)
    _add_fluid_columns(row, info, getattr(settings, "flag_condensing_pressure_below_Pa", None))
    return {k: row[k] for k in ROW_COLUMNS}


def _glides(layout: Layout, fluid, r: CycleResult) -> dict:
    """The glide columns [K] and a mixture's composition (the columns' comment above)."""
    if not getattr(fluid, "is_mixture", False):
        return {"evaporator_glide_K": math.nan if layout.supercritical else 0.0, "condenser_glide_K": 0.0}
    return {
        "evaporator_glide_K": math.nan if layout.supercritical else fluid.sat_p(r.p_evap_Pa).glide_K,
        "condenser_glide_K": fluid.sat_p(r.p_cond_Pa).glide_K,
        "first_component_mole_fraction": fluid.mole_fractions[0],
        "first_component_mass_fraction": fluid.mass_fraction_first,
    }


def _warnings(layout: Layout, source, r: CycleResult, settings: CycleSettings | None = None) -> list[str]:
    """Plain-words notes on a feasible result that the engineer should see (soft limits passed)."""
    out = []
    dew = getattr(source, "water_dew_point_K", None)
    if callable(dew):
        T_dew = dew()
        if T_dew is not None and r.T_source_out_K < T_dew:
            out.append(
                f"flue gas leaves at {r.T_source_out_K - 273.15:.1f} °C, below its water dew point "
                f"{T_dew - 273.15:.1f} °C: condensation is not modelled and corrodes (raise min_outlet_temperature_C)"
            )
    p_flag = getattr(settings, "flag_condensing_pressure_below_Pa", None)
    if p_flag is not None and r.p_cond_Pa < p_flag:
        out.append(f"condenser at {r.p_cond_Pa / 1e5:.3g} bar, below limits.flag_condensing_pressure_below_bar = "
                   f"{p_flag / 1e5:g}: a deep vacuum, very large condenser and turbine exhaust, air ingress")
    elif r.p_cond_Pa < P_ATM_PA:
        out.append(f"condenser below atmospheric pressure ({r.p_cond_Pa / 1e5:.3g} bar): air ingress, larger equipment")
    if "recuperator" in layout.exchangers and r.Q_rec_W <= 0.0:
        out.append("recuperator inactive: the turbine outlet is not hotter than the pump outlet plus the pinch")
    turbine_notes = getattr(r.turbine_design, "warnings", ())
    out.extend(turbine_notes)
    sp_flag = getattr(settings, "flag_size_parameter_above_m", None)
    if sp_flag is not None and r.size_parameter_m > sp_flag and not any("size parameter" in w for w in turbine_notes):
        out.append(f"turbine size parameter {r.size_parameter_m:.3g} m above limits.flag_size_parameter_above_m = "
                   f"{sp_flag:g} m: a very large machine, beyond the size the efficiency correlations cover")
    return out


def _f(x: float) -> float | None:
    """JSON-friendly float: NaN and infinities become None."""
    x = float(x)
    return x if math.isfinite(x) else None


def case_detail(layout: Layout, fluid, sink, r: CycleResult, opt) -> dict:
    """What the charts of one case draw: states, exchanger profiles, scan, and the lowest
    temperature of its T-s diagram (T_low_C). The T-s path and the saturation dome are drawn
    for a few cases only, so they are computed when drawn (:func:`with_ts_data`), not here."""
    states = [
        {
            "name": k,
            "label": layout.state_labels.get(k, k),
            "T_C": st.T_K - 273.15,
            "p_bar": st.p_Pa / 1e5,
            "h_kJ_kg": st.h / 1e3,
            "s_kJ_kgK": st.s / 1e3,
            "q": _f(st.q),
        }
        for k, st in r.states.items()
    ]
    exch = {}
    for name, p in r.profiles.items():
        j = p.pinch_index
        exch[name] = {
            "Q_kW": [float(q) / 1e3 for q in p.Q_W],
            "T_hot_C": [float(t) - 273.15 for t in p.T_hot_K],
            "T_cold_C": [float(t) - 273.15 for t in p.T_cold_K],
            "duty_kW": p.duty_W / 1e3,
            "pinch_K": p.min_approach_K,
            "pinch_Q_kW": float(p.Q_W[j]) / 1e3,
            "pinch_T_hot_C": float(p.T_hot_K[j]) - 273.15,
            "pinch_T_cold_C": float(p.T_cold_K[j]) - 273.15,
            "ua_kW_K": _f(p.ua_W_K() / 1e3),
        }
    var = opt.scan_variable
    x_opt = r.variables.get(var.name, math.nan) if var is not None else math.nan
    return {
        "states": states,
        "exchangers": exch,
        "T_low_C": min(r.T_cond_K, sink.T_in_K) - 15.0 - 273.15,
        "landscape": {
            "variable": var.label if var is not None else "",
            "unit": var.unit if var is not None else "",
            "x": [var.display(float(x)) for x in opt.scan_x] if var is not None else [],
            "net_power_kW": [_f(w / 1e3) for w in opt.scan_W],
            "limit": list(opt.scan_limit),
        },
        "optimum": {
            "variable": var.label if var is not None else "",
            "x": _f(var.display(x_opt)) if var is not None else None,
            "net_power_kW": r.W_net_W / 1e3,
            "binding_limit": opt.binding_limit,
            "variables": {k: _f(v) for k, v in r.variables.items()},
        },
    }


def ts_data(layout: Layout, fluid, r, T_low_K: float) -> dict:
    """The T-s diagram's cycle path and saturation dome [kJ/(kg K), °C] of result r (a
    CycleResult, or the states of a stored detail: :func:`with_ts_data`) down to T_low_K [K]."""
    s_path, T_path = layout.ts_path(fluid, r)
    T_dome, sL, sV, T_liquid = saturation_dome(fluid, T_low_K)
    dome = {
        "s_liquid_kJ_kgK": [s / 1e3 for s in sL],
        "s_vapour_kJ_kgK": [s / 1e3 for s in sV],
        "T_C": [t - 273.15 for t in T_dome],
    }
    if T_liquid != T_dome:  # a mixture: the bubble curve at its own temperatures
        dome["T_liquid_C"] = [t - 273.15 for t in T_liquid]
    return {
        "ts_path": {"s_kJ_kgK": [s / 1e3 for s in s_path], "T_C": [t - 273.15 for t in T_path]},
        "dome": dome,
    }


def with_ts_data(detail: dict, row) -> dict:
    """detail with its T-s path and dome, computed from its stored states and the row's layout,
    fluid and condensing and evaporation temperatures when the detail does not hold them (runs
    since the T-s data is computed only for the cases drawn)."""
    if detail.get("ts_path") or not detail.get("states"):
        return detail
    from types import SimpleNamespace

    from .properties import get_fluid
    from .states import State

    fluid = get_fluid(str(row.get("coolprop_name") or row.get("fluid")))
    states = {st["name"]: State(st["T_C"] + 273.15, st["p_bar"] * 1e5, st["h_kJ_kg"] * 1e3, st["s_kJ_kgK"] * 1e3,
                                math.nan, math.nan if st.get("q") is None else st["q"])
              for st in detail["states"]}
    r = SimpleNamespace(states=states, T_evap_K=_num(row.get("evaporation_temperature_C")) + 273.15,
                        T_cond_K=_num(row.get("condensing_temperature_C")) + 273.15)
    T_low = detail.get("T_low_C")
    T_low_K = (r.T_cond_K - 15.0) if T_low is None else T_low + 273.15
    return {**detail, **ts_data(LAYOUTS[row["layout"]], fluid, r, T_low_K)}


def _num(value) -> float:
    try:
        return float(value)
    except (TypeError, ValueError):
        return math.nan
