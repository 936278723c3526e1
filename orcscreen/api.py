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

import dataclasses
import time
from collections.abc import Mapping
from pathlib import Path

from . import fluids as fluid_catalogue
from . import streams
from .cycles import LAYOUTS, CycleContext, CycleSettings
from .annual import optimum_for_year, year_figures
from .areas import U_KEYS
from .economics import Economics
from .objectives import OBJECTIVES
from .case_variables import optimised_or
from .composition import components_to_optimise, optimise_composition
from .mixtures import mixture_name
from .figures import ROW_COLUMNS, case_detail, empty_row, energy_figures, result_row
from .optimize import optimise
from .properties import PropertyError, get_fluid
from .turbine import TURBINE_MODELS, ConstantEfficiency

__all__ = ["screen", "run_case", "evaluate_cycle", "settings_from_case", "case_context", "ROW_COLUMNS"]


def settings_from_case(case, info=None, sink=None) -> CycleSettings:
    """CycleSettings (SI) from a typed case's sections (units of the key names), with the
    fluid's thermal-stability limit from its catalogue entry info (if known); sink: the case's
    sink stream, if built already (its fans or pumps give the auxiliary power per W rejected)."""
    ex, ma, li, cy, sk = case.exchangers, case.machines, case.limits, case.cycle, case.sink
    max_T3 = None
    if info is not None and info.max_temperature_C is not None:
        max_T3 = info.max_temperature_C + 273.15
    return CycleSettings(
        pinch_evaporator_K=optimised_or(ex.pinch_evaporator_K, ex.min_pinch_K),
        pinch_condenser_K=optimised_or(ex.pinch_condenser_K, ex.min_pinch_K),
        pinch_evaporator_bounds_K=(ex.min_pinch_K, ex.max_pinch_K) if ex.pinch_evaporator_K == "optimise" else None,
        pinch_condenser_bounds_K=(ex.min_pinch_K, ex.max_pinch_K) if ex.pinch_condenser_K == "optimise" else None,
        sink_rise_bounds_K=((sk.min_temperature_rise_K, sk.max_temperature_rise_K)
                            if sk.temperature_rise_K == "optimise" else None),
        pinch_recuperator_K=ex.pinch_recuperator_K,
        recuperator_effectiveness=ex.recuperator_effectiveness,
        pump_efficiency=ma.pump_efficiency,
        turbine=TURBINE_MODELS[ma.turbine_model].from_settings(ma, li),
        generator_efficiency=ma.generator_efficiency,
        motor_efficiency=ma.motor_efficiency,
        aux_power_per_W_rejected=(sink or streams.sink_from_settings(dict(sk))).aux_power_per_W_rejected(),
        max_pressure_Pa=None if li.max_pressure_bar is None else li.max_pressure_bar * 1e5,
        max_reduced_pressure=li.max_reduced_pressure,
        max_supercritical_reduced_pressure=li.max_supercritical_reduced_pressure,
        min_turbine_outlet_quality=li.min_turbine_outlet_quality,
        min_condensing_pressure_Pa=None if li.min_condensing_pressure_bar is None else li.min_condensing_pressure_bar * 1e5,
        flag_condensing_pressure_below_Pa=(None if li.flag_condensing_pressure_below_bar is None
                                           else li.flag_condensing_pressure_below_bar * 1e5),
        flag_size_parameter_above_m=li.flag_size_parameter_above_m,
        subcooling_K=cy.subcooling_K or 0.0,
        superheat_K=None if cy.superheat_K == "optimise" else float(cy.superheat_K),
        max_superheat_K=cy.max_superheat_K,
        reheat_temperature_K=None if cy.reheat_temperature_C is None else cy.reheat_temperature_C + 273.15,
        max_turbine_inlet_temperature_K=max_T3,
        u_W_m2K={zone: getattr(ex, key) for zone, key in U_KEYS.items() if getattr(ex, key) is not None},
        economics=Economics.from_section(case.economics),
        objective=OBJECTIVES[case.study.objective],
        profiles_in_search=OBJECTIVES[case.study.objective].needs_costs,
    )


def case_context(case, info) -> CycleContext:
    """The engine's inputs of a typed case: fluid, source and sink streams, settings."""
    sink = streams.sink_from_settings(dict(case.sink))
    return CycleContext(
        fluid=get_fluid(info.coolprop_name),
        source=streams.source_from_settings(dict(case.source)),
        sink=sink,
        settings=settings_from_case(case, info, sink),
    )


def run_case(case) -> dict:
    """Run one case and return {"row": ..., "detail": ...}.

    case: a typed case (:class:`orcscreen.study.Case`, as ``Study.cases()`` yields them) or its
    plain dictionary form (validated first). Never raises for a thermodynamic failure: the row's
    status is "ok", "infeasible" (with the reason in plain words) or "failed" (with the error
    message).
    """
    from .study import Case

    t0 = time.perf_counter()
    info = None
    case = Case.from_dict(case) if isinstance(case, Mapping) else case
    try:
        info = fluid_catalogue.get_info(case.fluid)  # a pair to optimise: its worse component's facts
        pair = components_to_optimise(case.fluid)
        layout = LAYOUTS[case.layout]
        # a pair to optimise: the context of its 50/50 composition (a point of the scan)
        ctx = case_context(case, info if pair is None else fluid_catalogue.get_info(mixture_name(*pair, 0.5)))
        composition_scan = None
        if pair is None or layout.unsuited(ctx):
            opt = optimise(layout, ctx)
        else:  # the composition is a free variable too (orcscreen.composition)
            opt, x, n, composition_scan = optimise_composition(layout, ctx, *pair)
            if opt is not None:
                info = fluid_catalogue.get_info(mixture_name(*pair, x))
                ctx = dataclasses.replace(ctx, fluid=get_fluid(info.coolprop_name))
                opt = dataclasses.replace(opt, evaluations=n)
            else:
                opt = (None, x, n)
        if isinstance(opt, tuple):
            _, reason, n = opt
            row = empty_row(case.fluid, case.layout, info, "infeasible", reason, time.perf_counter() - t0, n)
            row["composition_optimised"] = pair is not None
            return {"row": row, "detail": None}
        year = getattr(case, "year", None)
        design_notes, rated_year = [], None
        if year is not None and year.resolved_path:
            try:
                opt, design_notes, rated_year = optimum_for_year(layout, ctx, opt, year)
            except (PropertyError, ValueError, ArithmeticError) as exc:  # the design point's optimum stands
                design_notes = [f"not designed for the year: {type(exc).__name__}: {exc}"]
        try:
            detail = case_detail(layout, ctx.fluid, ctx.sink, opt.cycle, opt)
        except PropertyError as exc:  # chart data only: the result itself stands
            detail = {"error": f"detail not available: {exc}"}
        if composition_scan is not None and isinstance(detail, dict):
            detail["composition_scan"] = [{"first_component_mole_fraction": x, "score": s if s > -1e300 else None, "reason": why}
                                          for x, s, why in composition_scan]
        row = result_row(case.fluid, layout, info, ctx.fluid, ctx.source, ctx.sink, opt.cycle, opt.binding_limit,
                         opt.evaluations, time.perf_counter() - t0, ctx.settings)
        row["composition_optimised"] = pair is not None
        if year is not None and year.resolved_path:
            try:
                columns, year_detail, notes = year_figures(layout, ctx, opt.cycle, year, row, rated_year)
            except (PropertyError, ValueError, ArithmeticError) as exc:  # the design's result stands
                columns, year_detail, notes = {}, None, [f"year not rated: {type(exc).__name__}: {exc}"]
            row.update(columns)
            row["warnings"] = "; ".join(w for w in (row["warnings"], *design_notes, *notes) if w)
            if isinstance(detail, dict) and year_detail is not None:
                detail["year"] = year_detail
            row["elapsed_s"] = time.perf_counter() - t0
        return {"row": row, "detail": detail}
    except (PropertyError, ValueError, ArithmeticError) as exc:
        msg = f"{type(exc).__name__}: {exc}"
        return {"row": empty_row(case.fluid, case.layout, info, "failed", msg, time.perf_counter() - t0), "detail": None}


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
        row = dict(c.sweep)
        row.update(res["row"])
        rows.append(row)
    df = pd.DataFrame(rows)
    ok = df["status"] == "ok"
    df = pd.concat([df[ok].sort_values("net_power_kW", ascending=False, kind="stable"), df[~ok]], ignore_index=True)
    return df


def evaluate_cycle(
    fluid: str,
    evaporation_pressure_bar: float | None = None,
    condensing_pressure_bar: float | None = None,
    turbine_inlet_temperature_C: float | None = None,
    wf_mass_flow_kg_s: float | None = None,
    turbine_efficiency: float = 1.0,
    pump_efficiency: float = 1.0,
    layout: str = "basic",
    recuperator_effectiveness: float = 0.8,
    pinch_recuperator_K: float = 10.0,
    *,
    evaporation_temperature_C: float | None = None,
    heater_pressure_bar: float | None = None,
    bleed_pressure_bar: float | None = None,
    reheat_pressure_bar: float | None = None,
    reheat_temperature_C: float | None = None,
    condensing_temperature_C: float | None = None,
    source: Mapping | None = None,
    sink: Mapping | None = None,
    pinch_evaporator_K: float = 10.0,
    pinch_condenser_K: float = 5.0,
    min_turbine_outlet_quality: float = 0.0,
) -> dict:
    """Evaluate one cycle of any layout by hand, with its free variables given.

    Layouts and what they take (°C, bar): the subcritical ones ("basic", "recuperated",
    "bleed-regenerative", "reheat") an evaporation pressure or temperature, "transcritical" and
    "transcritical-recuperated" a heater pressure above the critical pressure; all an optional
    turbine inlet temperature (saturated vapour otherwise; required for the transcritical ones);
    "bleed-regenerative" bleed_pressure_bar, "reheat" reheat_pressure_bar and optionally
    reheat_temperature_C (default: the turbine inlet temperature).

    The condensing side: condensing_pressure_bar or condensing_temperature_C, or a sink (a
    dictionary shaped like the study file's [sink]) whose condenser pinch sets it. The flow:
    wf_mass_flow_kg_s (default 1 kg/s), or a source (shaped like [source]) whose evaporator pinch
    and outlet limit set the largest flow; the result then names the pinch location and the
    source temperature there. The turbine outlet quality is reported, and limited only by
    min_turbine_outlet_quality (default 0).

    Returns a dict: powers [kW], thermal_efficiency, net_specific_work_kJ_kg (per kg through the
    turbine inlet), turbine_outlet_quality, wf_mass_flow_kg_s, condensing temperature and
    pressure, the turbine's size parameter and volume ratio, the layout's own figures (e.g.
    bleed_fraction), with a source pinch_location, source_temperature_at_pinch_C and
    source_outlet_temperature_C, and the states (°C, bar, kJ/kg, kJ/(kg K)). Raises ValueError
    for inputs that do not fit the layout or a cycle that is not feasible.
    """
    try:  # a catalogue name (CoolProp or display), else any CoolProp fluid
        f = get_fluid(fluid_catalogue.get_info(fluid).coolprop_name)
    except fluid_catalogue.UnknownFluidError:
        f = get_fluid(fluid)
    if layout not in LAYOUTS:
        raise ValueError(f"unknown layout {layout!r}; allowed: {', '.join(LAYOUTS)}")
    lay = LAYOUTS[layout]
    high = evaporation_pressure_bar if heater_pressure_bar is None else heater_pressure_bar
    if evaporation_pressure_bar is not None and heater_pressure_bar is not None:
        raise ValueError("give the evaporation pressure or the heater pressure, not both")

    def K(T_C):
        return None if T_C is None else T_C + 273.15

    def Pa(p_bar):
        return None if p_bar is None else p_bar * 1e5

    given = {
        "evaporation_temperature_K": K(evaporation_temperature_C),
        "high_pressure_Pa": Pa(high),
        "turbine_inlet_temperature_K": K(turbine_inlet_temperature_C),
        "bleed_pressure_Pa": Pa(bleed_pressure_bar),
        "reheat_pressure_Pa": Pa(reheat_pressure_bar),
        "reheat_temperature_K": K(reheat_temperature_C),
    }
    x = lay.variables_for(f, given)
    if (condensing_pressure_bar is None) + (condensing_temperature_C is None) + (sink is None) != 2:
        raise ValueError("give one of condensing_pressure_bar, condensing_temperature_C or a sink")
    if source is not None and wf_mass_flow_kg_s is not None:
        raise ValueError("give the working-fluid flow or a source, not both")
    T_cond = K(condensing_temperature_C)
    if condensing_pressure_bar is not None:
        T_cond = f.T_sat_K(condensing_pressure_bar * 1e5)
    s = CycleSettings(
        turbine=ConstantEfficiency(turbine_efficiency),
        pump_efficiency=pump_efficiency,
        min_turbine_outlet_quality=min_turbine_outlet_quality,
        max_reduced_pressure=0.999999,
        max_supercritical_reduced_pressure=1e9,
        recuperator_effectiveness=recuperator_effectiveness,
        pinch_recuperator_K=pinch_recuperator_K,
        pinch_evaporator_K=pinch_evaporator_K,
        pinch_condenser_K=pinch_condenser_K,
    )
    src = None if source is None else streams.source_from_settings(dict(source))
    snk = None if sink is None else streams.sink_from_settings(dict(sink))
    ctx = CycleContext(f, src, snk, s)
    m = None if src is not None else (1.0 if wf_mass_flow_kg_s is None else wf_mass_flow_kg_s)
    r = lay.evaluate(ctx, x, exact=src is not None, T_cond_K=T_cond, m_wf_kg_s=m)
    if not r.ok:
        raise ValueError(r.reason)
    out = {
        **energy_figures(r),
        "net_specific_work_kJ_kg": r.W_net_W / r.m_wf_kg_s / 1e3,
        "back_work_ratio": r.W_pump_W / r.W_turbine_W,
        "turbine_outlet_quality": r.turbine_outlet_quality,
        "wf_mass_flow_kg_s": r.m_wf_kg_s,
        "condensing_temperature_C": r.T_cond_K - 273.15,
        "condensing_pressure_bar": r.p_cond_Pa / 1e5,
        "size_parameter_m": r.size_parameter_m,
        "volume_ratio": r.volume_ratio,
        **r.figures,
        "states": {
            k: {"T_C": st.T_K - 273.15, "p_bar": st.p_Pa / 1e5, "h_kJ_kg": st.h / 1e3, "s_kJ_kgK": st.s / 1e3, "q": st.q}
            for k, st in r.states.items()
        },
    }
    if src is not None:
        prof = r.profiles["evaporator"]
        out.update(
            pinch_location=r.pinch_location,
            source_temperature_at_pinch_C=float(prof.T_hot_K[prof.pinch_index]) - 273.15,
            source_outlet_temperature_C=r.T_source_out_K - 273.15,
        )
    return out
