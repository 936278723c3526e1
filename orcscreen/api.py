"""The Python entry points: screen a study, run one case, evaluate one cycle by hand.

* :func:`screen` takes a study (a dictionary shaped like the study file, or a path) and returns
  a pandas DataFrame of every fluid and layout, best net power first.
* :func:`run_case` runs one case dictionary (the unit of work of the batch layer) and returns its
  result row and detail; a thermodynamic failure becomes a row with status "failed".
* :func:`evaluate_cycle` evaluates one fully specified cycle (given pressures) for exploring by
  hand.

Units: the dictionaries and the rows use the units in their key names (°C, bar, kW); everything
is SI inside the engine.
"""

from __future__ import annotations

import math
import time
from pathlib import Path


from . import fluids as fluid_catalogue
from . import streams
from .cycle import LAYOUTS, P_ATM_PA, CycleResult, CycleSettings, saturation_dome, ts_path
from .optimize import optimise
from .properties import PropertyError, get_fluid
from .turbine import ConstantEfficiency

__all__ = ["screen", "run_case", "evaluate_cycle", "settings_from_case", "ROW_COLUMNS"]

#: Columns of a result row, in order (DESIGN section 5; contract section 2).
ROW_COLUMNS = (
    "fluid", "display_name", "layout", "status", "reason", "warnings",
    "net_power_kW", "turbine_power_kW", "pump_power_kW", "aux_power_kW", "heat_input_kW",
    "heat_rejected_kW", "recuperator_duty_kW", "thermal_efficiency", "exergy_efficiency",
    "carnot_efficiency", "heat_recovery_factor", "total_efficiency", "source_exergy_kW",
    "evaporation_pressure_bar", "evaporation_temperature_C", "reduced_pressure",
    "condensing_pressure_bar", "condensing_temperature_C", "superheat_K",
    "turbine_inlet_temperature_C", "turbine_outlet_temperature_C", "turbine_outlet_quality",
    "wf_mass_flow_kg_s", "sink_mass_flow_kg_s", "source_outlet_temperature_C", "pinch_location",
    "pinch_evaporator_K", "pinch_condenser_K", "pinch_recuperator_K", "ua_evaporator_kW_K",
    "ua_condenser_kW_K", "ua_recuperator_kW_K", "ua_total_kW_K", "size_parameter_m",
    "volume_ratio", "turbine_efficiency", "binding_limit", "sub_atmospheric_condenser", "family",
    "safety_class", "gwp100", "odp", "curve_type", "evaluations", "elapsed_s",
)

_STATE_LABELS = {
    "1": "condenser outlet",
    "2": "pump outlet",
    "2r": "recuperator cold-side outlet",
    "3": "turbine inlet",
    "4": "turbine outlet",
    "4r": "recuperator hot-side outlet",
}


def settings_from_case(case: dict, info=None) -> CycleSettings:
    """CycleSettings (SI) from the sections of a case dictionary (units of the key names)."""
    ex, ma, li, cy, sk = case["exchangers"], case["machines"], case["limits"], case["cycle"], case["sink"]
    max_T3 = None
    if info is not None and info.max_temperature_C is not None:
        max_T3 = info.max_temperature_C + 273.15
    return CycleSettings(
        pinch_evaporator_K=ex["pinch_evaporator_K"],
        pinch_condenser_K=ex["pinch_condenser_K"],
        pinch_recuperator_K=ex["pinch_recuperator_K"],
        recuperator_effectiveness=ex["recuperator_effectiveness"],
        pump_efficiency=ma["pump_efficiency"],
        turbine=ConstantEfficiency(ma["turbine_efficiency"]),
        generator_efficiency=ma["generator_efficiency"],
        motor_efficiency=ma["motor_efficiency"],
        aux_power_per_W_rejected=sk.get("aux_power_per_kW_rejected", 0.0) or 0.0,
        max_pressure_Pa=None if li.get("max_pressure_bar") is None else li["max_pressure_bar"] * 1e5,
        max_reduced_pressure=li["max_reduced_pressure"],
        min_turbine_outlet_quality=li["min_turbine_outlet_quality"],
        min_condensing_pressure_Pa=None if li.get("min_condensing_pressure_bar") is None else li["min_condensing_pressure_bar"] * 1e5,
        subcooling_K=cy.get("subcooling_K", 0.0) or 0.0,
        max_turbine_inlet_temperature_K=max_T3,
    )


def _nan_row(case: dict, info, status: str, reason: str, elapsed: float, evaluations: int = 0) -> dict:
    row = {k: math.nan for k in ROW_COLUMNS}
    row.update(
        fluid=case["fluid"],
        display_name=getattr(info, "display_name", case["fluid"]),
        layout=case["layout"],
        status=status,
        reason=reason,
        warnings="",
        pinch_location="",
        binding_limit="",
        sub_atmospheric_condenser=None,
        evaluations=evaluations,
        elapsed_s=elapsed,
    )
    _add_fluid_columns(row, info)
    return row


def _add_fluid_columns(row: dict, info) -> None:
    if info is None:
        row.update(family="", safety_class="", gwp100=math.nan, odp=math.nan, curve_type="")
        return
    row.update(
        family=info.family,
        safety_class=info.safety_class,
        gwp100=math.nan if info.gwp100 is None else info.gwp100,
        odp=math.nan if info.odp is None else info.odp,
        curve_type=info.curve_type,
    )


def _row(case, info, fluid, source, sink, r: CycleResult, binding: str, n: int, elapsed: float) -> dict:
    T0 = sink.T_in_K
    ex_source = streams.source_exergy_W(source, T0)
    q_avail = streams.available_heat_W(source, T0)
    st1, st3, st4 = r.states["1"], r.states["3"], r.states["4"]
    prof = r.profiles
    ua = {k: p.ua_W_K() / 1e3 for k, p in prof.items()}
    approach = {k: p.min_approach_K for k, p in prof.items()}
    row = {
        "fluid": case["fluid"],
        "display_name": info.display_name,
        "layout": case["layout"],
        "status": "ok",
        "reason": "",
        **_energy_figures(r),
        "aux_power_kW": r.W_aux_W / 1e3,
        "exergy_efficiency": r.W_net_W / ex_source,
        "carnot_efficiency": 1.0 - st1.T_K / st3.T_K,
        "heat_recovery_factor": r.Q_in_W / q_avail,
        "total_efficiency": r.W_net_W / q_avail,
        "source_exergy_kW": ex_source / 1e3,
        "evaporation_pressure_bar": r.p_evap_Pa / 1e5,
        "evaporation_temperature_C": r.T_evap_K - 273.15,
        "reduced_pressure": r.p_evap_Pa / fluid.p_crit_Pa,
        "condensing_pressure_bar": r.p_cond_Pa / 1e5,
        "condensing_temperature_C": r.T_cond_K - 273.15,
        "superheat_K": r.superheat_K,
        "turbine_inlet_temperature_C": st3.T_K - 273.15,
        "turbine_outlet_temperature_C": st4.T_K - 273.15,
        "turbine_outlet_quality": st4.q,
        "wf_mass_flow_kg_s": r.m_wf_kg_s,
        "sink_mass_flow_kg_s": r.m_sink_kg_s,
        "source_outlet_temperature_C": r.T_source_out_K - 273.15,
        "pinch_location": r.pinch_location,
        "pinch_evaporator_K": approach.get("evaporator", math.nan),
        "pinch_condenser_K": approach.get("condenser", math.nan),
        "pinch_recuperator_K": approach.get("recuperator", math.nan),
        "ua_evaporator_kW_K": ua.get("evaporator", math.nan),
        "ua_condenser_kW_K": ua.get("condenser", math.nan),
        "ua_recuperator_kW_K": ua.get("recuperator", math.nan),
        "ua_total_kW_K": sum(ua.values()),
        "size_parameter_m": r.size_parameter_m,
        "volume_ratio": r.volume_ratio,
        "turbine_efficiency": r.eta_turbine,
        "binding_limit": binding,
        "sub_atmospheric_condenser": bool(r.p_cond_Pa < P_ATM_PA),
        "evaluations": n,
        "elapsed_s": elapsed,
    }
    row["warnings"] = "; ".join(_warnings(case, source, r))
    _add_fluid_columns(row, info)
    return {k: row[k] for k in ROW_COLUMNS}


def _warnings(case: dict, source, r: CycleResult) -> list[str]:
    """Plain-words notes on a feasible result that the engineer should see."""
    out = []
    dew = getattr(source, "water_dew_point_K", None)
    if callable(dew):
        T_dew = dew()
        if T_dew is not None and r.T_source_out_K < T_dew:
            out.append(
                f"flue gas leaves at {r.T_source_out_K - 273.15:.1f} °C, below its water dew point "
                f"{T_dew - 273.15:.1f} °C: condensation is not modelled and corrodes (raise min_outlet_temperature_C)"
            )
    if r.p_cond_Pa < P_ATM_PA:
        out.append(f"condenser below atmospheric pressure ({r.p_cond_Pa / 1e5:.3g} bar): air ingress, larger equipment")
    if case["layout"] == "recuperated" and r.Q_rec_W <= 0.0:
        out.append("recuperator inactive: the turbine outlet is not hotter than the pump outlet plus the pinch")
    return out


def _energy_figures(r: CycleResult) -> dict:
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


def _f(x: float) -> float | None:
    """JSON-friendly float: NaN and infinities become None."""
    x = float(x)
    return x if math.isfinite(x) else None


def _detail(fluid, sink, r: CycleResult, opt) -> dict:
    states = [
        {
            "name": k,
            "label": _STATE_LABELS[k],
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
    s_path, T_path = ts_path(fluid, r)
    T_dome, sL, sV = saturation_dome(fluid, min(r.T_cond_K, sink.T_in_K) - 15.0)
    return {
        "states": states,
        "exchangers": exch,
        "ts_path": {"s_kJ_kgK": [s / 1e3 for s in s_path], "T_C": [t - 273.15 for t in T_path]},
        "dome": {
            "s_liquid_kJ_kgK": [s / 1e3 for s in sL],
            "s_vapour_kJ_kgK": [s / 1e3 for s in sV],
            "T_C": [t - 273.15 for t in T_dome],
        },
        "landscape": {
            "evaporation_temperature_C": [float(t) - 273.15 for t in opt.scan_T_K],
            "net_power_kW": [_f(w / 1e3) for w in opt.scan_W],
            "limit": list(opt.scan_limit),
        },
        "optimum": {
            "evaporation_temperature_C": r.T_evap_K - 273.15,
            "net_power_kW": r.W_net_W / 1e3,
            "binding_limit": opt.binding_limit,
        },
    }


def run_case(case: dict) -> dict:
    """Run one case dictionary (contract section 1) and return {"row": ..., "detail": ...}.

    Never raises for a thermodynamic failure: the row's status is "ok", "infeasible" (with the
    reason in plain words) or "failed" (with the error message).
    """
    t0 = time.perf_counter()
    info = None
    try:
        info = fluid_catalogue.get_info(case["fluid"])
        fluid = get_fluid(info.coolprop_name)
        source = streams.source_from_settings(case["source"])
        sink = streams.sink_from_settings(case["sink"])
        settings = settings_from_case(case, info)
        layout = LAYOUTS[case["layout"]]
        cy = case["cycle"]
        opt = optimise(fluid, source, sink, settings, layout, cy.get("superheat_K", 0.0), cy.get("max_superheat_K", 50.0))
        if isinstance(opt, tuple):
            _, reason, n = opt
            return {"row": _nan_row(case, info, "infeasible", reason, time.perf_counter() - t0, n), "detail": None}
        try:
            detail = _detail(fluid, sink, opt.cycle, opt)
        except PropertyError as exc:  # chart data only: the result itself stands
            detail = {"error": f"detail not available: {exc}"}
        row = _row(case, info, fluid, source, sink, opt.cycle, opt.binding_limit, opt.evaluations, time.perf_counter() - t0)
        return {"row": row, "detail": detail}
    except (PropertyError, ValueError, ArithmeticError) as exc:
        msg = f"{type(exc).__name__}: {exc}"
        return {"row": _nan_row(case, info, "failed", msg, time.perf_counter() - t0), "detail": None}


def screen(study: dict | str | Path, jobs: int = 1):
    """Screen every fluid and layout of a study; return a DataFrame, best net power first.

    study: a dictionary shaped like the study file (sections source, sink, ...; see the README's
    study file reference) or the path of a TOML study file. Runs in this process when jobs == 1,
    else in parallel with joblib. Infeasible and failed cases are kept, at the end, with reasons.

    Example::

        from orcscreen import screen
        df = screen({"source": {"kind": "water", "inlet_temperature_C": 120,
                                "mass_flow_kg_s": 10}, "fluids": {"include": ["hydrocarbon"]}})
        print(df[["fluid", "layout", "net_power_kW"]].head())
    """
    import pandas as pd

    from . import study as study_module

    if isinstance(study, (str, Path)):
        st = study_module.load_study(study)
    else:
        st = study_module.study_from_dict(study)
    cases = list(st.cases())
    if jobs == 1:
        results = [run_case(c) for c in cases]
    else:
        from joblib import Parallel, delayed

        results = Parallel(n_jobs=jobs)(delayed(run_case)(c) for c in cases)
    rows = []
    for c, res in zip(cases, results):
        row = dict(c.get("sweep", {}))
        row.update(res["row"])
        rows.append(row)
    df = pd.DataFrame(rows)
    ok = df["status"] == "ok"
    df = pd.concat([df[ok].sort_values("net_power_kW", ascending=False, kind="stable"), df[~ok]], ignore_index=True)
    return df


def evaluate_cycle(
    fluid: str,
    evaporation_pressure_bar: float,
    condensing_pressure_bar: float,
    turbine_inlet_temperature_C: float | None = None,
    wf_mass_flow_kg_s: float = 1.0,
    turbine_efficiency: float = 1.0,
    pump_efficiency: float = 1.0,
    layout: str = "basic",
    recuperator_effectiveness: float = 0.8,
    pinch_recuperator_K: float = 10.0,
) -> dict:
    """Evaluate one fully specified cycle by hand: given pressures and working-fluid flow.

    Turbine inlet: saturated vapour at the evaporation pressure, or superheated to
    turbine_inlet_temperature_C. Condenser outlet: saturated liquid. No source or sink limits
    are applied (the turbine outlet quality is reported, not limited). Returns a dict with the
    powers [kW], the thermal efficiency, the turbine figures and the states (°C, bar, kJ/kg,
    kJ/(kg K)).
    """
    try:  # a catalogue name (CoolProp or display), else any CoolProp fluid
        f = get_fluid(fluid_catalogue.get_info(fluid).coolprop_name)
    except fluid_catalogue.UnknownFluidError:
        f = get_fluid(fluid)
    T_evap = f.T_sat_K(evaporation_pressure_bar * 1e5)
    T_cond = f.T_sat_K(condensing_pressure_bar * 1e5)
    superheat = 0.0 if turbine_inlet_temperature_C is None else turbine_inlet_temperature_C + 273.15 - T_evap
    if superheat < 0:
        raise ValueError(
            f"turbine inlet {turbine_inlet_temperature_C} °C is below the saturation temperature "
            f"{T_evap - 273.15:.2f} °C at {evaporation_pressure_bar} bar"
        )
    s = CycleSettings(
        turbine=ConstantEfficiency(turbine_efficiency),
        pump_efficiency=pump_efficiency,
        min_turbine_outlet_quality=0.0,
        max_reduced_pressure=0.999999,
        recuperator_effectiveness=recuperator_effectiveness,
        pinch_recuperator_K=pinch_recuperator_K,
    )
    from .cycle import evaluate

    r = evaluate(f, None, None, s, LAYOUTS[layout], T_evap, superheat, exact=False, T_cond_K=T_cond, m_wf_kg_s=wf_mass_flow_kg_s)
    if not r.ok:
        raise ValueError(r.reason)
    return {
        **_energy_figures(r),
        "back_work_ratio": r.W_pump_W / r.W_turbine_W,
        "turbine_outlet_quality": r.states["4"].q,
        "size_parameter_m": r.size_parameter_m,
        "volume_ratio": r.volume_ratio,
        "states": {
            k: {"T_C": st.T_K - 273.15, "p_bar": st.p_Pa / 1e5, "h_kJ_kg": st.h / 1e3, "s_kJ_kgK": st.s / 1e3, "q": st.q}
            for k, st in r.states.items()
        },
    }

