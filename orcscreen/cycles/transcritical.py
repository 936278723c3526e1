"""Transcritical layouts: the heater runs above the critical pressure, with no evaporation plateau.

Free variables: the heater pressure, as a reduced pressure p/p_crit between just above 1 and
the smaller of ``limits.max_supercritical_reduced_pressure`` and ``limits.max_pressure_bar``;
and the turbine inlet temperature, between the critical temperature and the smaller of the
source inlet minus the evaporator pinch and the fluid's thermal-stability limit. States as in
the subcritical layouts: 1 condenser outlet, 2 pump outlet, (2r recuperator cold-side outlet),
3 turbine inlet, 4 turbine outlet, (4r recuperator hot-side outlet).

* heater (counter-current): the working fluid's isobar is discretised in temperature and
  refined where the enthalpy rises fastest, around the pseudo-critical temperature (the
  isobaric cp maximum); the flow is the largest that keeps the source at least the pinch above
  every point (the pinch can sit anywhere inside the curve; it is searched between the
  neighbours of the discrete minimum) and the source outlet limit (:mod:`orcscreen.exchangers`);
* expansion to the condensing pressure, ending superheated or two-phase (the quality limit
  applies); condenser and recuperator as in the subcritical layouts. Nothing condenses above
  the critical temperature: where the sink and its pinch need that, the case is infeasible with
  that reason (carbon dioxide with a warm sink, for example).

Sources: the method is the standard one for supercritical heaters (e.g. Astolfi, Romano,
Bombarda, Macchi, "Binary ORC power plants for the exploitation of medium-low temperature
geothermal sources - Part A", Energy 66 (2014) 423-434, doi:10.1016/j.energy.2013.11.056, which
also optimises the heater pressure and the turbine inlet temperature); the cycle model as in
:mod:`orcscreen.cycles.subcritical`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from ..exchangers import COND_TOL_FAST_K, SOURCE_OUTLET_LIMIT, heater_flow, recuperate, solve_condensing_temperature
from ..paths import supercritical_heating_path
from ..states import CycleInfeasible, State
from .base import (
    STATE_LABELS,
    C,
    ColdSide,
    CycleContext,
    CycleResult,
    HotSide,
    Layout,
    Variable,
    Window,
    cold_side_before_expansion,
    cold_side_following_turbine,
    condenser_outlet,
    condensing_floor_K,
    cycle_result,
    SEARCH_ZONE_SEGMENTS,
    exchanger_profiles,
    expand,
    infeasible,
    isobar_ts,
    pump,
    supercritical_isobar_ts,
    unused_inputs,
)

__all__ = ["Transcritical", "TRANSCRITICAL", "TRANSCRITICAL_RECUPERATED", "HEATER_REDUCED_PRESSURE",
           "TURBINE_INLET_TEMPERATURE", "LOWEST_REDUCED_PRESSURE"]

#: The heater pressure over the critical pressure as a free variable (outer: scan of 5 from the top, to 3e-3).
HEATER_REDUCED_PRESSURE = Variable("heater_reduced_pressure", "heater reduced pressure", "-", scan_points=5, xatol=3e-3,
                                   scan_from="top")
#: The turbine inlet temperature as a free variable (inner: scan of 6, to 2e-3 K; at a fixed heater
#: pressure the net power rises smoothly to one maximum above the feasible edge).
TURBINE_INLET_TEMPERATURE = Variable("turbine_inlet_temperature_K", "turbine inlet temperature", "°C", offset=-273.15,
                                     scan_points=6, xatol=2e-3, near_half_width=3.0, near_min_width=1.0,
                                     near_xatol=0.02, near_predict=True)
#: Lowest heater pressure searched, over the critical pressure: just above it, where the
#: equation of state is still well behaved (common practice: screens start at about 1.01).
LOWEST_REDUCED_PRESSURE = 1.01
#: Segments of the heater curve in the closed-form model of the search (the discretised model
#: uses CycleSettings.n_zone_segments); both are refined around the pseudo-critical temperature.
N_FAST_SEGMENTS = 8
#: Tolerance [K] of the closed-form model's search for the pinch between two points of the heater
#: curve: the flow bound is flat at its minimum, so this already gives the flow to about 1e-10.
XATOL_FAST_K = 1e-2


class SupercriticalHotSide(HotSide):
    """Off design of a supercritical heater: u is 100 p/p_crit (the heater pressure over the
    critical one, in per cent), hot the turbine inlet temperature [K]. The heater pressure
    slides with the turbine's swallowing capacity and must stay above the critical pressure:
    below it the heater would boil, which this layout's model does not hold."""

    coordinate = "heater pressure"
    hot_words = "turbine inlet temperature"
    variable = "heater_reduced_pressure"

    def of_design(self, r):
        return 100.0 * r.variables[HEATER_REDUCED_PRESSURE.name], r.states["3"].T_K

    def highest_u(self, ctx):
        return 100.0 * ctx.settings.max_heater_pressure_Pa(ctx.fluid)[0] / ctx.fluid.p_crit_Pa

    def point(self, ctx, u, hot, T_cond_K, T_source_K):
        fluid = ctx.fluid
        if not (u > 100.0 * LOWEST_OFF_DESIGN_REDUCED_PRESSURE and T_cond_K < fluid.T_crit_K - 0.05):
            return None
        if not (fluid.T_crit_K < hot < T_source_K - 0.05):
            return None
        p = u / 100.0 * fluid.p_crit_Pa
        return {HEATER_REDUCED_PRESSURE.name: u / 100.0, TURBINE_INLET_TEMPERATURE.name: hot}, fluid.state_pT(p, hot)

    def heating_path(self, ctx, u, states, n):
        # uniform in temperature, without the refinement rounds: a grid that moves continuously
        # with u, so that the areas' balance is smooth for the Newton iteration (the refinement
        # adds points in jumps); three times as many segments make up for it
        return supercritical_heating_path(ctx.fluid, u / 100.0 * ctx.fluid.p_crit_Pa, states.get("2r", states["2"]),
                                          states["3"], 3 * n, rounds=0)


#: Lowest heater pressure off design, over the critical pressure (our choice: closer, the
#: equation of state near the critical point makes the areas' balance ill-conditioned).
LOWEST_OFF_DESIGN_REDUCED_PRESSURE = 1.002


class Transcritical(Layout):
    """Transcritical layout, with or without a recuperator (module docstring)."""

    supercritical = True
    hot_side = SupercriticalHotSide()
    cost_factor = 4.0
    limits = ("max pressure", "max supercritical reduced pressure", "thermal stability", "turbine outlet quality",
              "min condensing pressure", "condensation below the critical temperature", "heater pinch",
              "condenser pinch", SOURCE_OUTLET_LIMIT)

    def __init__(self, name: str, description: str, recuperator: bool):
        self.name = name
        self.description = description
        self.recuperator = recuperator
        keys = ("1", "2", "2r", "3", "4", "4r") if recuperator else ("1", "2", "3", "4")
        self.state_labels = {k: STATE_LABELS[k] for k in keys}
        self.exchangers = ("evaporator", "condenser", "recuperator") if recuperator else ("evaporator", "condenser")
        if recuperator:
            self.limits = self.limits + ("recuperator pinch",)

    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        return (TURBINE_INLET_TEMPERATURE, HEATER_REDUCED_PRESSURE)

    def unsuited(self, ctx: CycleContext) -> str | None:
        """The source must heat the fluid above its critical temperature, and the sink must let it
        condense below it."""
        why = super().unsuited(ctx)
        if why:
            return why
        fluid, s = ctx.fluid, ctx.settings
        T_hot = self.window(ctx, TURBINE_INLET_TEMPERATURE.name, {})
        if T_hot.hi <= fluid.T_crit_K:
            return (f"the source cannot heat {fluid.name} above its critical temperature {C(fluid.T_crit_K)} "
                    f"(upper limit {C(T_hot.hi)}: {T_hot.hi_name}): no supercritical heater")
        try:
            T_floor = condensing_floor_K(fluid, ctx.sink, s)
        except CycleInfeasible as exc:
            return exc.reason
        if T_floor >= fluid.T_crit_K:
            return (f"{fluid.name} cannot condense: the sink and its pinch need {C(T_floor)}, not below its critical "
                    f"temperature {C(fluid.T_crit_K)}")
        p_max, name = s.max_heater_pressure_Pa(fluid)
        if p_max <= LOWEST_REDUCED_PRESSURE * fluid.p_crit_Pa:
            return (f"the pressure limit {p_max / 1e5:.4g} bar ({name}) leaves no room above the critical pressure "
                    f"of {fluid.name} ({fluid.p_crit_Pa / 1e5:.4g} bar)")
        return None

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        fluid, s = ctx.fluid, ctx.settings
        if name == HEATER_REDUCED_PRESSURE.name:
            p_max, hi_name = s.max_heater_pressure_Pa(fluid)
            return Window(LOWEST_REDUCED_PRESSURE, p_max / fluid.p_crit_Pa, "lowest supercritical pressure", hi_name)
        limits = [(ctx.source.T_in_K - s.pinch_evaporator_K, "hot-end approach")]
        if s.max_turbine_inlet_temperature_K is not None:
            limits.append((s.max_turbine_inlet_temperature_K, "thermal stability"))
        limits.append((fluid.T_max_K, "equation of state range"))
        T_hi, hi_name = min(limits)
        return Window(fluid.T_crit_K, T_hi, "critical temperature", hi_name)

    hand_inputs = ("high_pressure_Pa", "turbine_inlet_temperature_K")

    def variables_for(self, fluid, given):
        unused_inputs(self, given)
        p, T3 = given.get("high_pressure_Pa"), given.get("turbine_inlet_temperature_K")
        if p is None or T3 is None:
            raise ValueError(f"layout {self.name!r} needs the heater pressure and the turbine inlet temperature")
        if not p > fluid.p_crit_Pa:
            raise ValueError(f"heater pressure {p / 1e5:.4g} bar is not above the critical pressure of {fluid.name} "
                             f"({fluid.p_crit_Pa / 1e5:.4g} bar): use a subcritical layout")
        return {HEATER_REDUCED_PRESSURE.name: p / fluid.p_crit_Pa, TURBINE_INLET_TEMPERATURE.name: T3}

    # -- evaluation -----------------------------------------------------------------------
    def evaluate_at(self, ctx, x, exact=True, T_cond_guess_K=None, cond_tol_K=None, T_cond_K=None, m_wf_kg_s=None):
        fluid = ctx.fluid
        p_h = float(x[HEATER_REDUCED_PRESSURE.name]) * fluid.p_crit_Pa
        T3 = float(x[TURBINE_INLET_TEMPERATURE.name])
        known = {"layout": self.name, "variables": dict(x), "p_evap_Pa": p_h}
        try:
            return self._evaluate(ctx, p_h, T3, exact, T_cond_guess_K, known, T_cond_K, m_wf_kg_s,
                                  COND_TOL_FAST_K if cond_tol_K is None else cond_tol_K)
        except CycleInfeasible as exc:
            return infeasible(exc.limit, exc.reason, exc.margin, **known)

    def cold_side(self, ctx: CycleContext, p_h: float, st3: State, T_cond_K: float, exact: bool) -> ColdSide:
        fluid, s = ctx.fluid, ctx.settings
        sat_c = fluid.sat_T(T_cond_K)
        st1 = condenser_outlet(fluid, sat_c, s.subcooling_K)
        st2 = pump(fluid, st1, p_h, s.pump_efficiency, ctx.memo)
        ex = expand(fluid, st3, sat_c, ctx.turbine, ctx.memo)
        st4 = ex.st_out
        if self.recuperator:
            q_rec, st2r, st4r, active, rec_prof = recuperate(fluid, sat_c, p_h, st2, st4, s.pinch_recuperator_K,
                                                             s.recuperator_effectiveness, s.n_zone_segments, exact, None)
        else:
            q_rec, st2r, st4r, active, rec_prof = 0.0, st2, st4, False, None
        return ColdSide(T_cond_K, sat_c.p_Pa, sat_c, st1, st2, ex.st_out_s, st4, ex.eta, st2r, st4r, q_rec, active, rec_prof)

    def _evaluate(self, ctx, p_h, T3, exact, T_cond_guess_K, known, T_cond_fixed_K, m_wf_fixed, cond_tol_K) -> CycleResult:
        fluid, source, sink, s = ctx.fluid, ctx.source, ctx.sink, ctx.settings
        if not p_h > fluid.p_crit_Pa:
            raise CycleInfeasible("critical pressure", f"heater pressure {p_h / 1e5:.2f} bar is not above the critical pressure of {fluid.name} ({fluid.p_crit_Pa / 1e5:.2f} bar)")
        p_lim, lim_name = s.max_heater_pressure_Pa(fluid)
        if p_h > p_lim * (1.0 + 1e-9):
            raise CycleInfeasible(lim_name, f"heater pressure {p_h / 1e5:.2f} bar is above the limit {p_lim / 1e5:.2f} bar ({lim_name})")
        if source is not None and T3 > source.T_in_K - s.pinch_evaporator_K + 1e-9:
            raise CycleInfeasible("hot-end approach", f"turbine inlet {C(T3)} is closer than the heater pinch to the source inlet {C(source.T_in_K)}")
        if s.max_turbine_inlet_temperature_K is not None and T3 > s.max_turbine_inlet_temperature_K + 1e-9:
            raise CycleInfeasible("thermal stability", f"turbine inlet {C(T3)} is above the thermal-stability limit of {fluid.name} ({C(s.max_turbine_inlet_temperature_K)})")
        st3 = fluid.state_pT(p_h, T3)

        if T_cond_fixed_K is None and m_wf_fixed is None and source is not None and ctx.turbine_now is not None:
            cold_side = cold_side_following_turbine(
                ctx, st3, lambda c, T, ex: self.cold_side(c, p_h, st3, T, ex),
                lambda cs, ex: self._heater_closure(ctx, p_h, cs, st3, ex)[0],
                None if self.recuperator else lambda T: cold_side_before_expansion(ctx, p_h, st3, T))
        else:
            def cold_side(T, ex):
                return self.cold_side(ctx, p_h, st3, T, ex)

        if T_cond_fixed_K is None:
            cs = solve_condensing_temperature(fluid, sink, cold_side, s.pinch_condenser_K, condensing_floor_K(fluid, sink, s),
                                              fluid.T_crit_K, s.n_zone_segments, exact, T_cond_guess_K, cond_tol_K,
                                              ceiling_what=f"the critical temperature of {fluid.name}")
        else:
            if T_cond_fixed_K >= fluid.T_crit_K:
                raise CycleInfeasible("sink", f"condensing temperature {C(T_cond_fixed_K)} is not below the critical temperature {C(fluid.T_crit_K)}")
            cs = cold_side(T_cond_fixed_K, exact)
        known.update(T_cond_K=cs.T_cond_K, p_cond_Pa=cs.p_cond_Pa)
        st1, st2, st2r, st4, st4r = cs.s1, cs.s2, cs.s2r, cs.s4, cs.s4r
        if not st3.h > st2r.h:
            raise CycleInfeasible("heater", "the working fluid would not take heat in the heater")
        if not math.isnan(st4.q) and st4.q < s.min_turbine_outlet_quality:
            raise CycleInfeasible(
                "turbine outlet quality",
                f"turbine outlet quality {st4.q:.3f} is below the limit {s.min_turbine_outlet_quality:.3f} (a wet expansion; a hotter turbine inlet may help)",
                st4.q - s.min_turbine_outlet_quality,
            )
        q_in = st3.h - st2r.h
        states = ({"1": st1, "2": st2, "2r": st2r, "3": st3, "4": st4, "4r": st4r} if self.recuperator
                  else {"1": st1, "2": st2, "3": st3, "4": st4})
        if m_wf_fixed is not None:
            return cycle_result(ctx, self, cs, st3, m_wf_fixed, q_in, states, known, p_evap_Pa=st3.p_Pa)
        m_wf, location, path = self._heater_closure(ctx, p_h, cs, st3, exact)
        if not m_wf > 0.0:
            raise CycleInfeasible("heater pinch", f"the source is too cold for a heater at {p_h / 1e5:.2f} bar with a {s.pinch_evaporator_K:g} K pinch")
        T_s_out = float(source.T_K(float(source.h_in_J_kg) - m_wf * q_in / source.m_kg_s))
        r = cycle_result(ctx, self, cs, st3, m_wf, q_in, states, known, location, T_s_out,
                         self._profiles(ctx, p_h, cs, st3, path, m_wf, exact), p_evap_Pa=st3.p_Pa)
        if r.W_net_W <= 0.0:
            return infeasible("net power", f"net power {r.W_net_W / 1e3:.3g} kW is not positive", r.W_net_W, **known)
        return r

    def _heater_closure(self, ctx: CycleContext, p_h: float, cs, st3: State, exact: bool):
        """(working-fluid flow [kg/s], pinch location, heating path): the largest flow that keeps
        the heater pinch and the source outlet limit, kept in ctx.memo."""
        key = ("heater", exact, st3.h, cs.heater_key())
        if ctx.memo is not None and key in ctx.memo:
            return ctx.memo[key]
        s = ctx.settings
        path = supercritical_heating_path(ctx.fluid, p_h, cs.heater_inlet, st3, s.n_zone_segments if exact else N_FAST_SEGMENTS)
        out = heater_flow(path, st3.h, ctx.source, s.pinch_evaporator_K, exact, xatol_fast_K=XATOL_FAST_K)
        if ctx.memo is not None:
            ctx.memo[key] = out
        return out

    def _profiles(self, ctx: CycleContext, p_h: float, cs, st3: State, path, m_wf: float, exact: bool) -> dict | None:
        """The exchanger profiles of a result: the checked ones (exact), those of the search when
        the objective needs areas (a heater path of SEARCH_ZONE_SEGMENTS), else none."""
        if exact:
            return exchanger_profiles(ctx, cs, path, m_wf, st3.h)
        if ctx.settings.profiles_in_search:
            finer = supercritical_heating_path(ctx.fluid, p_h, cs.heater_inlet, st3, SEARCH_ZONE_SEGMENTS)
            return exchanger_profiles(ctx, cs, finer, m_wf, st3.h, search=True)
        return None

    def ts_path(self, fluid, r: CycleResult, n: int = 8) -> tuple[list[float], list[float]]:
        """Pump and turbine as straight lines; the heater along its supercritical isobar."""
        st = r.states
        sat_c = fluid.sat_T(r.T_cond_K)
        s_hi, T_hi = supercritical_isobar_ts(fluid, st["3"].p_Pa, st["2"].h, st["3"].h, n)
        s_lo, T_lo = isobar_ts(fluid, sat_c, st["4"].h, st["1"].h, n)
        return [st["1"].s] + s_hi + s_lo, [st["1"].T_K] + T_hi + T_lo


TRANSCRITICAL = Transcritical("transcritical", "pump, supercritical heater, turbine, condenser", recuperator=False)
TRANSCRITICAL_RECUPERATED = Transcritical(
    "transcritical-recuperated", "transcritical layout plus a recuperator from turbine outlet to pump outlet", recuperator=True
)
