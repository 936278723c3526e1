"""Subcritical layouts: basic (pump, evaporator, turbine, condenser) and recuperated.

Free variables: the evaporation temperature, and the turbine-inlet superheat when the study asks
to optimise it (else the superheat is fixed). States (DESIGN section 3): 1 condenser outlet,
2 pump outlet, 2r recuperator cold-side outlet, 3 turbine inlet, 4 turbine outlet, 4r recuperator
hot-side outlet (2r and 4r only in the recuperated layout).

* evaporator (counter-current): the largest working-fluid flow with the source at least
  pinch_evaporator_K above the working fluid everywhere and the source outlet not below its limit;
* condenser (counter-current, sink with a fixed temperature rise): the lowest condensing
  temperature with the working fluid at least pinch_condenser_K above the sink everywhere;
* recuperator: duty eps * m (h4 - h(p4, T2)), reduced to respect pinch_recuperator_K; the cold
  side stays liquid and the hot side vapour.

Two accuracies: ``exact=False`` checks the pinch at the closed-form candidates only (cold end,
bubble point, dew point, source outlet limit, with a slope test for a pinch inside the
economiser or superheater) and is what the optimiser's scan uses; ``exact=True`` checks it on
the discretised profiles of every exchanger (``n_zone_segments`` per zone), returns the
profiles, and is what every reported result uses.

Sources: the vapour power cycle with isentropic efficiencies, e.g. Moran, Shapiro, Boettner,
Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed., Wiley 2014, chapter 8; the
pinch-limited flow follows common practice for heat-recovery cycles (e.g. Quoilin et al., Renew.
Sust. Energy Rev. 22 (2013) 168-186, doi:10.1016/j.rser.2013.01.028).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping


from ..exchangers import (COND_TOL_FAST_K, SOURCE_OUTLET_LIMIT, heater_flow, recuperate, refine_zone_pinch,
                          solve_condensing_temperature)
from ..paths import heating_path
from ..states import CycleInfeasible, SatPoint, State
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
    unused_inputs,
)

__all__ = ["Subcritical", "BASIC", "RECUPERATED", "EVAPORATION_TEMPERATURE", "EVAPORATION_TEMPERATURE_NESTED", "SUPERHEAT",
           "evaporation_window"]

#: The evaporation temperature as a free variable (scan of 10, refined to 2e-3 K).
EVAPORATION_TEMPERATURE = Variable("evaporation_temperature_K", "evaporation temperature", "°C", offset=-273.15,
                                   scan_points=10, xatol=2e-3, near_half_width=3.0, near_min_width=1.0)
#: The evaporation temperature inside the search of a layout's own outer variable (bleed or reheat
#: pressure): warm starts follow the ridge of optima and stop at 0.02 K (the optimum's own search
#: keeps 2e-3 K).
EVAPORATION_TEMPERATURE_NESTED = dataclasses.replace(EVAPORATION_TEMPERATURE, near_xatol=0.02, near_predict=True)
#: The turbine-inlet superheat as a free variable (scan of 6, refined to 0.1 K).
SUPERHEAT = Variable("superheat_K", "superheat", "K", scan_points=6, xatol=0.1, scan_from="bottom")


def evaporation_window(ctx: CycleContext, superheat_K: float) -> Window:
    """Range of evaporation temperatures [K] worth searching at one superheat, and its limits.

    Lower end: 1 K above the hottest condensing temperature the sink can need (sink outlet plus
    pinch). Upper end: the smallest of the pressure limit (subcritical, DESIGN section 3), the
    source inlet minus pinch and superheat (hot end), and the thermal-stability limit.
    """
    fluid, source, sink, s = ctx.fluid, ctx.source, ctx.sink, ctx.settings
    T_lo = sink.T_out_K + s.pinch_condenser_K + 1.0
    T_lo = max(T_lo, fluid.T_min_K + 1.0)
    if s.min_condensing_pressure_Pa is not None and s.min_condensing_pressure_Pa < fluid.p_crit_Pa:
        T_lo = max(T_lo, fluid.T_sat_floor_K(s.min_condensing_pressure_Pa) + 1.0)
    p_lim = s.max_evaporation_pressure_Pa(fluid)
    limits = [(fluid.T_sat_floor_K(p_lim), "max pressure" if s.max_pressure_Pa is not None and s.max_pressure_Pa < s.max_reduced_pressure * fluid.p_crit_Pa else "max reduced pressure")]
    if fluid.p_sat_max_Pa < p_lim:  # a mixture whose saturation table ends below the limit
        limits.append((fluid.T_sat_max_K, "end of the mixture's saturation table"))
    limits.append((source.T_in_K - s.pinch_evaporator_K - superheat_K, "hot-end approach"))
    if s.max_turbine_inlet_temperature_K is not None:
        limits.append((s.max_turbine_inlet_temperature_K - superheat_K, "thermal stability"))
    T_hi, name = min(limits)
    return Window(T_lo, T_hi, "lowest evaporation temperature", name)


class EvaporatorHotSide(HotSide):
    """Off design of an evaporator: u is the evaporation temperature [K], hot the superheat [K]."""

    coordinate = "evaporation temperature"
    hot_words = "superheat"
    variable = "evaporation_temperature_K"

    def of_design(self, r):
        return r.T_evap_K, r.superheat_K

    def highest_u(self, ctx):
        fluid = ctx.fluid
        p_max = ctx.settings.max_evaporation_pressure_Pa(fluid)
        if p_max < fluid.p_sat_max_Pa:
            return fluid.T_sat_K(p_max)
        # a saturation curve that ends below the critical pressure (a mixture's table) caps it there
        return fluid.T_sat_max_K if p_max < fluid.p_crit_Pa else math.inf

    def point(self, ctx, u, hot, T_cond_K, T_source_K):
        fluid = ctx.fluid
        if not (T_cond_K + 0.5 < u < min(fluid.T_sat_max_K - 0.05, T_source_K - 0.05)):
            return None
        if hot < 0.0 or u + hot > T_source_K - 0.05:
            return None
        sat_e = fluid.sat_T(u)
        st3 = (fluid.state_pT(sat_e.p_Pa, u + hot, "gas") if hot > 1e-12
               else State(u, sat_e.p_Pa, sat_e.hV, sat_e.sV, sat_e.vV, 1.0))
        return {EVAPORATION_TEMPERATURE.name: u, SUPERHEAT.name: hot}, st3

    #: the state entering the evaporator
    heater_inlet: str = "2"

    def heating_path(self, ctx, u, states, n):
        st_in = states.get("2r", states[self.heater_inlet])
        return heating_path(ctx.fluid, ctx.fluid.sat_T(u), st_in, states["3"], n, True, zones=False)


class Subcritical(Layout):
    """Basic and recuperated subcritical layouts (module docstring)."""

    hot_side = EvaporatorHotSide()
    takes_mixtures = True

    limits = ("max pressure", "max reduced pressure", "thermal stability", "turbine outlet quality",
              "min condensing pressure", "evaporator pinch", "condenser pinch", SOURCE_OUTLET_LIMIT)

    def __init__(self, name: str, description: str, recuperator: bool):
        self.name = name
        self.description = description
        self.recuperator = recuperator
        keys = ("1", "2", "2r", "3", "4", "4r") if recuperator else ("1", "2", "3", "4")
        self.state_labels = {k: STATE_LABELS[k] for k in keys}
        self.exchangers = ("evaporator", "condenser", "recuperator") if recuperator else ("evaporator", "condenser")
        if recuperator:
            self.limits = self.limits + ("recuperator pinch",)

    # -- variables ----------------------------------------------------------------------
    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        if ctx.settings.superheat_K is None:
            return (EVAPORATION_TEMPERATURE, SUPERHEAT)
        return (EVAPORATION_TEMPERATURE,)

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        if name == SUPERHEAT.name:
            return Window(0.0, ctx.settings.max_superheat_K, "no superheat", "max superheat")
        return evaporation_window(ctx, self._superheat(ctx, outer))

    @staticmethod
    def _superheat(ctx: CycleContext, x: Mapping[str, float]) -> float:
        sh = x.get(SUPERHEAT.name)
        if sh is None:
            sh = ctx.settings.superheat_K if ctx.settings.superheat_K is not None else 0.0
        return float(sh)

    hand_inputs = ("evaporation_temperature_K", "high_pressure_Pa", "turbine_inlet_temperature_K")

    def variables_for(self, fluid, given):
        unused_inputs(self, given)
        T_evap = given.get("evaporation_temperature_K")
        p = given.get("high_pressure_Pa")
        if (T_evap is None) == (p is None):
            raise ValueError(f"layout {self.name!r} needs the evaporation pressure or the evaporation temperature (one of them)")
        if T_evap is None:
            if not p < fluid.p_sat_max_Pa:
                raise ValueError(f"evaporation pressure {p / 1e5:.4g} bar is not below the highest saturation pressure of "
                                 f"{fluid.name} ({fluid.p_sat_max_Pa / 1e5:.4g} bar: its critical pressure, or the end of a "
                                 "mixture's table); above the critical pressure use a transcritical layout")
            T_evap = fluid.T_sat_K(p)
        T3 = given.get("turbine_inlet_temperature_K")
        superheat = 0.0 if T3 is None else T3 - T_evap
        if superheat < 0.0:
            raise ValueError(f"turbine inlet {T3 - 273.15:.2f} °C is below the evaporation temperature {T_evap - 273.15:.2f} °C")
        return {EVAPORATION_TEMPERATURE.name: T_evap, SUPERHEAT.name: superheat}

    # -- evaluation -----------------------------------------------------------------------
    def evaluate_at(self, ctx, x, exact=True, T_cond_guess_K=None, cond_tol_K=None, T_cond_K=None, m_wf_kg_s=None):
        T_evap_K = float(x[EVAPORATION_TEMPERATURE.name])
        superheat_K = self._superheat(ctx, x)
        known = {"layout": self.name, "variables": dict(x), "T_evap_K": T_evap_K, "superheat_K": superheat_K}
        try:
            return self._evaluate(ctx, x, T_evap_K, superheat_K, exact, T_cond_guess_K, known, T_cond_K, m_wf_kg_s,
                                  COND_TOL_FAST_K if cond_tol_K is None else cond_tol_K)
        except CycleInfeasible as exc:
            return infeasible(exc.limit, exc.reason, exc.margin, **known)

    def cold_side(self, ctx: CycleContext, x: Mapping[str, float], sat_e: SatPoint, st3: State, T_cond_K: float,
                  exact: bool) -> ColdSide:
        """Condenser outlet, pump, expansion and recuperator at condensing temperature T_cond_K [K]
        (x: the free variables, for layouts whose cold side has some)."""
        fluid, s = ctx.fluid, ctx.settings
        sat_c = fluid.sat_T(T_cond_K)
        st1 = condenser_outlet(fluid, sat_c, s.subcooling_K)
        st2 = pump(fluid, st1, sat_e.p_Pa, s.pump_efficiency, ctx.memo)
        ex = expand(fluid, st3, sat_c, ctx.turbine, ctx.memo)
        st4 = ex.st_out
        if self.recuperator:
            q_rec, st2r, st4r, active, rec_prof = recuperate(fluid, sat_c, sat_e.p_Pa, st2, st4, s.pinch_recuperator_K,
                                                             s.recuperator_effectiveness, s.n_zone_segments, exact, sat_e)
        else:
            q_rec, st2r, st4r, active, rec_prof = 0.0, st2, st4, False, None
        return ColdSide(T_cond_K, sat_c.p_Pa, sat_c, st1, st2, ex.st_out_s, st4, ex.eta, st2r, st4r, q_rec, active, rec_prof)

    def _evaluate(self, ctx, x, T_evap_K, superheat_K, exact, T_cond_guess_K, known, T_cond_fixed_K, m_wf_fixed, cond_tol_K) -> CycleResult:
        fluid, source, sink, s = ctx.fluid, ctx.source, ctx.sink, ctx.settings
        if T_evap_K >= fluid.T_sat_max_K:
            raise CycleInfeasible("critical point", f"evaporation temperature {C(T_evap_K)} is not below the end of the saturation curve of {fluid.name} ({C(fluid.T_sat_max_K)}: its critical point, or a mixture table's end)")
        sat_e = fluid.sat_T(T_evap_K)
        p_lim = s.max_evaporation_pressure_Pa(fluid)
        if sat_e.p_Pa > p_lim * (1.0 + 1e-9):
            raise CycleInfeasible("max pressure", f"evaporation pressure {sat_e.p_Pa / 1e5:.2f} bar is above the limit {p_lim / 1e5:.2f} bar")
        T3 = T_evap_K + superheat_K
        if source is not None and T3 > source.T_in_K - s.pinch_evaporator_K + 1e-9:
            raise CycleInfeasible("hot-end approach", f"turbine inlet {C(T3)} is closer than the evaporator pinch to the source inlet {C(source.T_in_K)}")
        if s.max_turbine_inlet_temperature_K is not None and T3 > s.max_turbine_inlet_temperature_K + 1e-9:
            raise CycleInfeasible("thermal stability", f"turbine inlet {C(T3)} is above the thermal-stability limit of {fluid.name} ({C(s.max_turbine_inlet_temperature_K)})")
        if superheat_K > 1e-12:
            st3 = fluid.state_pT(sat_e.p_Pa, T3, "gas")
        else:
            st3 = State(T_evap_K, sat_e.p_Pa, sat_e.hV, sat_e.sV, sat_e.vV, 1.0)

        if T_cond_fixed_K is None and m_wf_fixed is None and source is not None and ctx.turbine_now is not None:
            cold_side = cold_side_following_turbine(
                ctx, st3, lambda c, T, ex: self.cold_side(c, x, sat_e, st3, T, ex),
                lambda cs, ex: self._heater_closure(ctx, sat_e, cs, st3, ex)[0],
                None if self.heater_inlet_follows_turbine else lambda T: cold_side_before_expansion(ctx, sat_e.p_Pa, st3, T))
        else:
            def cold_side(T, ex):
                return self.cold_side(ctx, x, sat_e, st3, T, ex)

        if T_cond_fixed_K is None:
            cs = solve_condensing_temperature(fluid, sink, cold_side, s.pinch_condenser_K, condensing_floor_K(fluid, sink, s),
                                              sat_e.T_dew_K, s.n_zone_segments, exact, T_cond_guess_K, cond_tol_K)
        else:
            cs = cold_side(T_cond_fixed_K, exact)
        known.update(T_cond_K=cs.T_cond_K, p_cond_Pa=cs.p_cond_Pa, p_evap_Pa=sat_e.p_Pa)
        self._check_cold_side(ctx, sat_e, cs)

        # evaporator: the largest flow that keeps the pinch and the source outlet limit
        if m_wf_fixed is not None:  # exploring by hand: the flow is given, no source
            path, h_out, _ = self.heater_path(ctx, sat_e, cs, st3, s.n_zone_segments, exact)
            return cycle_result(ctx, self, cs, st3, m_wf_fixed, h_out - float(path.h[0]), self._state_table(cs, st3), known,
                                T_evap_K=T_evap_K, p_evap_Pa=sat_e.p_Pa, superheat_K=superheat_K)
        hs_in = float(source.h_in_J_kg)
        m_wf, location, path, h_out = self._heater_closure(ctx, sat_e, cs, st3, exact)
        if not m_wf > 0.0:
            raise CycleInfeasible("evaporator pinch", f"the source is too cold for evaporation at {C(T_evap_K)} with a {s.pinch_evaporator_K:g} K pinch")

        q_in = h_out - float(path.h[0])
        T_s_out = float(source.T_K(hs_in - m_wf * q_in / source.m_kg_s))
        r = cycle_result(ctx, self, cs, st3, m_wf, q_in, self._state_table(cs, st3), known, location, T_s_out,
                         self._profiles(ctx, sat_e, cs, st3, path, m_wf, h_out, exact),
                         T_evap_K=T_evap_K, p_evap_Pa=sat_e.p_Pa, superheat_K=superheat_K)
        if r.W_net_W <= 0.0:
            return infeasible("net power", f"net power {r.W_net_W / 1e3:.3g} kW is not positive", r.W_net_W, **known)
        return r

    def _profiles(self, ctx: CycleContext, sat_e: SatPoint, cs, st3: State, path, m_wf: float, h_out: float,
                  exact: bool) -> dict | None:
        """The exchanger profiles of a result: the checked ones (exact), those of the search when
        the objective needs areas (a heating path of SEARCH_ZONE_SEGMENTS per zone), else none."""
        if exact:
            return exchanger_profiles(ctx, cs, path, m_wf, h_out)
        if ctx.settings.profiles_in_search:
            finer = self.heater_path(ctx, sat_e, cs, st3, SEARCH_ZONE_SEGMENTS, True)[0]
            return exchanger_profiles(ctx, cs, finer, m_wf, h_out, search=True)
        return None

    @property
    def heater_inlet_follows_turbine(self) -> bool:
        """True when the heater inlet (hence the flow) depends on the turbine's efficiency: a
        recuperator, a bleed or a reheater between them."""
        return self.recuperator

    def _heater_closure(self, ctx: CycleContext, sat_e: SatPoint, cs, st3: State, exact: bool):
        """(working-fluid flow [kg/s], pinch location, heating path, outlet enthalpy [J/kg]): the
        largest flow that keeps the evaporator pinch and the source outlet limit, kept in ctx.memo."""
        key = ("heater", exact, st3.h, cs.heater_key())
        memo = ctx.memo
        if memo is not None and key in memo:
            return memo[key]
        path, h_out, fast_interior = self.heater_path(ctx, sat_e, cs, st3, ctx.settings.n_zone_segments, exact)
        m_wf, location, path = heater_flow(path, h_out, ctx.source, ctx.settings.pinch_evaporator_K, exact,
                                           fast_interior=fast_interior)
        if memo is not None:
            memo[key] = m_wf, location, path, h_out
        return m_wf, location, path, h_out

    def _check_cold_side(self, ctx: CycleContext, sat_e: SatPoint, cs) -> None:
        """Limits on the cold side: the heater inlet stays liquid, the turbine outlet dry enough."""
        s = ctx.settings
        st4 = cs.turbine_outlet
        if cs.heater_inlet.h > sat_e.hL + 1e-6:  # the recuperator may heat the liquid up to saturation, no further
            raise CycleInfeasible("recuperator", "the recuperator would boil the working fluid")
        if not math.isnan(st4.q) and st4.q < s.min_turbine_outlet_quality:
            raise CycleInfeasible(
                "turbine outlet quality",
                f"turbine outlet quality {st4.q:.3f} is below the limit {s.min_turbine_outlet_quality:.3f} (a wet expansion; superheat may help)",
                st4.q - s.min_turbine_outlet_quality,
            )

    def heater_path(self, ctx: CycleContext, sat_e: SatPoint, cs, st3: State, n: int, exact: bool):
        """(heating path from the heater inlet, outlet enthalpy [J/kg], fast interior-pinch test)."""
        fluid, source, s = ctx.fluid, ctx.source, ctx.settings
        st_in = cs.heater_inlet
        # the closed-form model tests the zones with its own slope test: no zones needed there
        path = heating_path(fluid, sat_e, st_in, st3, n, exact, zones=exact or source is None)
        if source is None:
            return path, st3.h, None
        hs_in = float(source.h_in_J_kg)
        return path, st3.h, lambda: _fast_interior_pinch(fluid, source, s, sat_e, st_in, st3, hs_in)

    def _state_table(self, cs: ColdSide, st3: State) -> dict[str, State]:
        """The states of the layout in cycle order: 1, 2, (2r), 3, 4, (4r)."""
        if self.recuperator:
            return {"1": cs.s1, "2": cs.s2, "2r": cs.s2r, "3": st3, "4": cs.s4, "4r": cs.s4r}
        return {"1": cs.s1, "2": cs.s2, "3": st3, "4": cs.s4}

    def ts_path(self, fluid, r: CycleResult, n: int = 8) -> tuple[list[float], list[float]]:
        """Pump and turbine as straight lines between their end states, heat exchange along isobars."""
        st = r.states
        sat_e = fluid.sat_T(r.T_evap_K)
        sat_c = fluid.sat_T(r.T_cond_K)
        s_pts = [st["1"].s]
        T_pts = [st["1"].T_K]
        s_hi, T_hi = isobar_ts(fluid, sat_e, st["2"].h, st["3"].h, n)
        s_lo, T_lo = isobar_ts(fluid, sat_c, st["4"].h, st["1"].h, n)
        return s_pts + s_hi + s_lo, T_pts + T_hi + T_lo


def _fast_interior_pinch(fluid, source, s, sat_e, st_in: State, st3: State, hs_in: float) -> tuple[float, str]:
    """Closed-form test for a pinch inside the economiser or the superheater (fast mode).

    The flow bound m(T) = N/D, N = m_s (h_s,in - h_s(T + pinch)), D = h3 - h_wf(T), has
    dm/dT of the sign of N cp_wf - m_s cp_s D. If m rises into the bubble point (economiser side)
    or falls away from the dew point (superheater side), a smaller bound lies inside that zone and
    a bounded search finds it; otherwise the zone ends already bound the flow. Costs two (p, T)
    updates when no zone needs the search. Returns (bound [kg/s], zone name), inf if none.
    """
    p, T_e, T_d, dT, m_s = sat_e.p_Pa, sat_e.T_K, sat_e.T_dew_K, s.pinch_evaporator_K, source.m_kg_s

    def slope_sign(T, h, cp_wf):
        N = m_s * (hs_in - float(source.h_J_kg(T + dT)))
        return N * cp_wf - m_s * float(source.cp_J_kgK(T + dT)) * (st3.h - h)

    best = (math.inf, "")
    if st_in.T_K < T_e - 1e-6:
        cpL = fluid.state_pT(p, T_e, "liquid").cp
        if slope_sign(T_e, sat_e.hL, cpL) > 0.0:
            m, _, _ = refine_zone_pinch(lambda T: fluid.h_pT(p, T, "liquid"), source, dT, st3.h, hs_in, st_in.T_K, T_e, 1e-3)
            best = min(best, (m, "economiser"))
    if st3.T_K > T_d + 1e-6:
        cpV = fluid.state_pT(p, T_d, "gas").cp
        if slope_sign(T_d, sat_e.hV, cpV) < 0.0:
            m, _, _ = refine_zone_pinch(lambda T: fluid.h_pT(p, T, "gas"), source, dT, st3.h, hs_in, T_d, st3.T_K, 1e-3)
            best = min(best, (m, "superheater"))
    return best


BASIC = Subcritical("basic", "pump, evaporator, turbine, condenser", recuperator=False)
RECUPERATED = Subcritical("recuperated", "basic layout plus a recuperator from turbine outlet to pump outlet", recuperator=True)
