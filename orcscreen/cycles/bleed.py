"""Regeneration by turbine bleed: an open feed-liquid heater fed by vapour bled from the turbine.

Part of the flow is bled from the turbine at an intermediate pressure into an open feed heater
(a mixing chamber), where it brings the condensate, pumped to the bleed pressure by a first pump,
to saturated liquid; a second pump takes that liquid to the evaporation pressure. States:
1 condenser outlet, 2 low-pressure pump outlet, 2f feed-heater outlet (saturated liquid at the
bleed pressure), 2h high-pressure pump outlet (evaporator inlet), 3 turbine inlet, 3b bled
vapour, 4 turbine outlet. Per kg through the evaporator, y kg is bled:

    y = (h2f - h2) / (h3b - h2),  W_t = (h3 - h3b) + (1 - y)(h3b - h4),
    W_p = (1 - y)(h2 - h1) + (h2h - h2f),  Q_out = (1 - y)(h4 - h1).

The turbine expands 3 -> 3b and 3b -> 4, each with the turbine efficiency (as in the textbook
example cited below). Free variables: the evaporation temperature, the bleed pressure (as the
place of its saturation temperature between the condensing and the evaporation temperature,
from 5 to 95 %: the bounds then follow the case) and, if asked, the superheat.

Source: Moran, Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed.,
Wiley 2014, section 8.4.1 (regenerative cycle with an open feedwater heater) and Example 8.5.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from ..exchangers import Profile, open_heater_bleed_fraction
from ..states import CycleInfeasible, SatPoint, State
from .base import CycleContext, Variable, Window, condenser_outlet, expand, isobar_ts, pump
from .subcritical import EVAPORATION_TEMPERATURE_NESTED, SUPERHEAT, EvaporatorHotSide, Subcritical

__all__ = ["BleedRegenerative", "BLEED_REGENERATIVE", "BLEED_PLACE", "BLEED_PRESSURE_KEY"]

#: Where the bleed pressure's saturation temperature sits between the condensing (0) and the
#: evaporation temperature (1), as a free variable (scan of 5, to 0.005).
BLEED_PLACE = Variable("bleed_temperature_fraction", "bleed saturation temperature, fraction of the span", "-",
                       scan_points=5, xatol=0.005, scan_from="top")
#: Key of a bleed pressure given directly [Pa] (exploring by hand) instead of its place.
BLEED_PRESSURE_KEY = "bleed_pressure_Pa"
_PLACE_BOUNDS = (0.05, 0.95)


@dataclass
class BleedColdSide:
    """Condensate pump, feed heater, feed pump and the two expansions at one condensing temperature."""

    T_cond_K: float
    p_cond_Pa: float
    sat: SatPoint
    s1: State
    s2: State
    s2f: State
    s2h: State
    s3b: State
    s4: State
    s4s: State  # isentropic end of the whole expansion 3 -> condensing pressure (turbine figures)
    y: float
    eta_t: float
    q_rec: float = 0.0
    recuperator_active: bool = False
    rec_profile: Profile | None = None
    cond_check: tuple | None = None

    @property
    def condenser_inlet(self) -> State:
        return self.s4

    @property
    def heater_inlet(self) -> State:
        return self.s2h

    @property
    def turbine_outlet(self) -> State:
        return self.s4

    @property
    def condenser_share(self) -> float:
        return 1.0 - self.y

    def w_turbine(self, st3: State) -> float:
        return (st3.h - self.s3b.h) + (1.0 - self.y) * (self.s3b.h - self.s4.h)

    def w_pump(self) -> float:
        return (1.0 - self.y) * (self.s2.h - self.s1.h) + (self.s2h.h - self.s2f.h)

    def q_rejected(self) -> float:
        return (1.0 - self.y) * (self.s4.h - self.s1.h)

    def turbine_figures(self, st3: State) -> tuple[State, State, float]:
        return st3, self.s4s, 1.0 - self.y

    def figures(self) -> dict:
        return {"bleed_pressure_bar": self.s3b.p_Pa / 1e5, "bleed_fraction": self.y}

    def heater_key(self) -> tuple:
        return (self.s2h.h,)


class BleedHotSide(EvaporatorHotSide):
    """Off design of the bleed layout: the evaporator fed from the feed pump (state 2h), and a
    turbine of two sections, the bled vapour (3b) at the middle pressure entering the second one
    with the flow the open heater leaves it (orcscreen.offdesign: a Stodola law per section)."""

    heater_inlet = "2h"
    lp_inlet = "3b"

    def middle_of_design(self, ctx, r):
        return ctx.fluid.T_sat_K(r.states["3b"].p_Pa), math.nan

    def middle(self, ctx, T_mid_K, held):
        return {BLEED_PRESSURE_KEY: ctx.fluid.sat_T(T_mid_K).p_Pa}


class BleedRegenerative(Subcritical):
    """Subcritical layout with one open feed-liquid heater fed by turbine bleed (module docstring)."""

    columns = ("bleed_pressure_bar", "bleed_fraction")
    cost_factor = 8.0
    hot_side = BleedHotSide()
    #: its bleed saturation and open heater assume a pure fluid's plateau (not built for a glide)
    takes_mixtures = False

    #: the bleed fraction, hence the heater inlet, follows the expansion (see Subcritical.heater_inlet_follows_turbine)
    heater_inlet_follows_turbine = True

    def __init__(self):
        super().__init__("bleed-regenerative", "basic layout plus turbine bleed into an open feed-liquid heater and a second pump",
                         recuperator=False)
        self.state_labels = {
            "1": "condenser outlet",
            "2": "condensate pump outlet",
            "2f": "feed-heater outlet",
            "2h": "feed pump outlet",
            "3": "turbine inlet",
            "3b": "bled vapour",
            "4": "turbine outlet",
        }
        self.exchangers = ("evaporator", "condenser", "feed heater")
        self.limits = self.limits + ("bleed pressure between the condensing and the evaporation pressure",)

    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        if ctx.settings.superheat_K is None:
            return (EVAPORATION_TEMPERATURE_NESTED, BLEED_PLACE, SUPERHEAT)
        return (EVAPORATION_TEMPERATURE_NESTED, BLEED_PLACE)

    hand_inputs = Subcritical.hand_inputs + (BLEED_PRESSURE_KEY,)

    def variables_for(self, fluid, given):
        p_b = given.get(BLEED_PRESSURE_KEY)
        if p_b is None:
            raise ValueError("layout 'bleed-regenerative' needs the bleed pressure")
        return {**super().variables_for(fluid, given), BLEED_PRESSURE_KEY: p_b}

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        if name == BLEED_PLACE.name:
            return Window(*_PLACE_BOUNDS, "lowest bleed pressure", "highest bleed pressure")
        return super().window(ctx, name, outer)

    def cold_side(self, ctx: CycleContext, x: Mapping[str, float], sat_e: SatPoint, st3: State, T_cond_K: float,
                  exact: bool) -> BleedColdSide:
        """Both pumps, the feed heater and the expansions at one condensing temperature; the bleed
        pressure follows from its place in x (or is given in x as bleed_pressure_Pa)."""
        fluid, s = ctx.fluid, ctx.settings
        sat_c = fluid.sat_T(T_cond_K)
        if BLEED_PRESSURE_KEY in x:
            p_b = float(x[BLEED_PRESSURE_KEY])
            if not sat_c.p_Pa < p_b < sat_e.p_Pa:
                raise CycleInfeasible("bleed pressure", f"bleed pressure {p_b / 1e5:.4g} bar is not between the condensing "
                                      f"({sat_c.p_Pa / 1e5:.4g} bar) and the evaporation pressure ({sat_e.p_Pa / 1e5:.4g} bar)")
            sat_b = fluid.sat_p(p_b)
        else:
            f = float(x[BLEED_PLACE.name])
            sat_b = fluid.sat_T(T_cond_K + f * (sat_e.T_K - T_cond_K))
        st1 = condenser_outlet(fluid, sat_c, s.subcooling_K)
        st2 = pump(fluid, st1, sat_b.p_Pa, s.pump_efficiency, ctx.memo)
        st2f = State(sat_b.T_K, sat_b.p_Pa, sat_b.hL, sat_b.sL, sat_b.vL, 0.0)
        st2h = pump(fluid, st2f, sat_e.p_Pa, s.pump_efficiency, ctx.memo)
        hp = expand(fluid, st3, sat_b, ctx.turbine, ctx.memo)
        lp = expand(fluid, hp.st_out, sat_c, ctx.turbine, ctx.memo)
        whole = expand(fluid, st3, sat_c, ctx.turbine, ctx.memo)  # the casing's isentropic end, for SP and VR
        y = open_heater_bleed_fraction(st2.h, hp.st_out.h, st2f.h)
        return BleedColdSide(T_cond_K, sat_c.p_Pa, sat_c, st1, st2, st2f, st2h, hp.st_out, lp.st_out, whole.st_out_s, y, hp.eta)

    def _state_table(self, cs: BleedColdSide, st3: State) -> dict[str, State]:
        return {"1": cs.s1, "2": cs.s2, "2f": cs.s2f, "2h": cs.s2h, "3": st3, "3b": cs.s3b, "4": cs.s4}

    def ts_path(self, fluid, r, n: int = 8):
        """1 -> 2 (pump), feed heating to 2f along the bleed isobar, 2h, evaporator isobar to 3,
        expansion 3 -> 3b -> 4, condenser isobar back to 1."""
        st = r.states
        sat_e, sat_c, sat_b = fluid.sat_T(r.T_evap_K), fluid.sat_T(r.T_cond_K), fluid.sat_p(st["3b"].p_Pa)
        s_b, T_b = isobar_ts(fluid, sat_b, st["2"].h, st["2f"].h, n)
        s_hi, T_hi = isobar_ts(fluid, sat_e, st["2h"].h, st["3"].h, n)
        s_lo, T_lo = isobar_ts(fluid, sat_c, st["4"].h, st["1"].h, n)
        return ([st["1"].s] + s_b + s_hi + [st["3b"].s] + s_lo,
                [st["1"].T_K] + T_b + T_hi + [st["3b"].T_K] + T_lo)


BLEED_REGENERATIVE = BleedRegenerative()
