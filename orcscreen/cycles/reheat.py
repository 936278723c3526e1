"""Reheat: expansion to an intermediate pressure, reheating by the source, a second expansion.

States: 1 condenser outlet, 2 pump outlet, 3 turbine inlet, 3e high-pressure turbine outlet
(reheater inlet), 3r reheater outlet (low-pressure turbine inlet), 4 turbine outlet. Per kg:

    W_t = (h3 - h3e) + (h3r - h4),  Q_in = (h3 - h2) + (h3r - h3e),  Q_out = h4 - h1.

The reheater outlet is at the turbine inlet temperature unless ``cycle.reheat_temperature_C``
sets it (common practice: reheat to the live-steam temperature). Both turbines have the turbine
efficiency, and the outlet-quality limit applies to each. The source heats the evaporator and the
reheater as one composite cold stream (:func:`orcscreen.paths.composite_path`): the pinch is
checked on the composite curve, the best arrangement of the two exchangers in the source train;
the reported "evaporator" profile and UA are those of the composite. Free variables: the
evaporation temperature, the reheat pressure (as the place of its saturation temperature between
the condensing and the evaporation temperature, from 5 to 95 %) and, if asked, the superheat.

Source: Moran, Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed.,
Wiley 2014, section 8.3 (reheat) and Examples 8.3 and 8.4.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from ..exchangers import Profile
from ..paths import composite_path, heating_path, reheating_path
from ..states import CycleInfeasible, SatPoint, State
from .base import C, CycleContext, Variable, Window, condenser_outlet, expand, isentropic_end, isobar_ts, pump
from .subcritical import EVAPORATION_TEMPERATURE_NESTED, SUPERHEAT, EvaporatorHotSide, Subcritical

__all__ = ["Reheat", "REHEAT", "REHEAT_PLACE", "REHEAT_PRESSURE_KEY"]

#: Where the reheat pressure's saturation temperature sits between the condensing (0) and the
#: evaporation temperature (1), as a free variable (scan of 5, to 0.005).
REHEAT_PLACE = Variable("reheat_temperature_fraction", "reheat saturation temperature, fraction of the span", "-",
                        scan_points=5, xatol=0.005, scan_from="top")
#: Key of a reheat pressure given directly [Pa] (exploring by hand) instead of its place.
REHEAT_PRESSURE_KEY = "reheat_pressure_Pa"
#: Key of a reheater outlet temperature given directly [K] (exploring by hand).
REHEAT_TEMPERATURE_KEY = "reheat_temperature_K"
_PLACE_BOUNDS = (0.05, 0.95)


@dataclass
class ReheatColdSide:
    """Pump, both expansions and the reheater at one condensing temperature."""

    T_cond_K: float
    p_cond_Pa: float
    sat: SatPoint
    sat_rh: SatPoint
    s1: State
    s2: State
    s3e: State
    s3r: State
    s4: State
    s4s: State
    eta_t: float
    q_rec: float = 0.0
    recuperator_active: bool = False
    rec_profile: Profile | None = None
    cond_check: tuple | None = None
    condenser_share = 1.0

    @property
    def condenser_inlet(self) -> State:
        return self.s4

    @property
    def heater_inlet(self) -> State:
        return self.s2

    @property
    def turbine_outlet(self) -> State:
        return self.s4

    def w_turbine(self, st3: State) -> float:
        return (st3.h - self.s3e.h) + (self.s3r.h - self.s4.h)

    def w_pump(self) -> float:
        return self.s2.h - self.s1.h

    def q_rejected(self) -> float:
        return self.s4.h - self.s1.h

    def turbine_figures(self, st3: State) -> tuple[State, State, float]:
        """The low-pressure turbine's: the larger machine, whose figures limit the design."""
        return self.s3r, self.s4s, 1.0

    def figures(self) -> dict:
        return {"reheat_pressure_bar": self.sat_rh.p_Pa / 1e5, "reheat_temperature_C": self.s3r.T_K - 273.15}

    def heater_key(self) -> tuple:
        return (self.s2.h, self.s3e.h, self.s3r.h)


class ReheatHotSide(EvaporatorHotSide):
    """Off design of the reheat layout: the evaporator and the reheater as one composite heater
    (as at design), the reheater outlet temperature held at the design's (common practice: the
    reheat temperature is controlled), and a turbine of two sections, the reheated vapour (3r)
    at the middle pressure entering the second one (orcscreen.offdesign: a Stodola law per
    section)."""

    lp_inlet = "3r"

    def middle_of_design(self, ctx, r):
        return ctx.fluid.T_sat_K(r.states["3e"].p_Pa), r.states["3r"].T_K

    def middle(self, ctx, T_mid_K, held):
        return {REHEAT_PRESSURE_KEY: ctx.fluid.sat_T(T_mid_K).p_Pa, REHEAT_TEMPERATURE_KEY: held}

    def heating_path(self, ctx, u, states, n):
        fluid = ctx.fluid
        main = heating_path(fluid, fluid.sat_T(u), states["2"], states["3"], n, True, zones=False)
        rh = reheating_path(fluid, fluid.sat_p(states["3e"].p_Pa), states["3e"], states["3r"], n, True)
        return composite_path((main, rh), (1.0, 1.0), ("evaporator", "reheater"))

    def isentropic_expansion(self, fluid, states, sat_c):
        """The two sections' isentropic drops added; the outlet volume of the second's end."""
        sat_rh = fluid.sat_p(states["3e"].p_Pa)
        hp = isentropic_end(fluid, states["3"], sat_rh)
        lp = isentropic_end(fluid, states["3r"], sat_c)
        return (states["3"].h - hp.h) + (states["3r"].h - lp.h), lp.v


class Reheat(Subcritical):
    """Subcritical layout with one reheat between two turbines (module docstring)."""

    columns = ("reheat_pressure_bar", "reheat_temperature_C")
    turbine_outlets = ("3e", "4")
    cost_factor = 15.0
    hot_side = ReheatHotSide()
    #: its reheat saturation assumes a pure fluid's plateau (not built for a glide)
    takes_mixtures = False

    #: the reheater inlet is the high-pressure turbine outlet (see Subcritical.heater_inlet_follows_turbine)
    heater_inlet_follows_turbine = True

    def __init__(self):
        super().__init__("reheat", "basic layout with the expansion split by a reheater heated by the source",
                         recuperator=False)
        self.state_labels = {
            "1": "condenser outlet",
            "2": "pump outlet",
            "3": "turbine inlet",
            "3e": "high-pressure turbine outlet",
            "3r": "reheater outlet",
            "4": "turbine outlet",
        }
        self.exchangers = ("evaporator", "condenser")
        self.limits = self.limits + ("reheat pressure between the condensing and the evaporation pressure",)

    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        if ctx.settings.superheat_K is None:
            return (EVAPORATION_TEMPERATURE_NESTED, REHEAT_PLACE, SUPERHEAT)
        return (EVAPORATION_TEMPERATURE_NESTED, REHEAT_PLACE)

    hand_inputs = Subcritical.hand_inputs + (REHEAT_PRESSURE_KEY, REHEAT_TEMPERATURE_KEY)

    def variables_for(self, fluid, given):
        p_rh = given.get(REHEAT_PRESSURE_KEY)
        if p_rh is None:
            raise ValueError("layout 'reheat' needs the reheat pressure")
        x = {**super().variables_for(fluid, given), REHEAT_PRESSURE_KEY: p_rh}
        if given.get(REHEAT_TEMPERATURE_KEY) is not None:
            x[REHEAT_TEMPERATURE_KEY] = given[REHEAT_TEMPERATURE_KEY]
        return x

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        if name == REHEAT_PLACE.name:
            return Window(*_PLACE_BOUNDS, "lowest reheat pressure", "highest reheat pressure")
        return super().window(ctx, name, outer)

    def cold_side(self, ctx: CycleContext, x: Mapping[str, float], sat_e: SatPoint, st3: State, T_cond_K: float,
                  exact: bool) -> ReheatColdSide:
        """Pump, high-pressure expansion, reheater and low-pressure expansion at one condensing
        temperature; the reheat pressure follows from its place in x (or is given there)."""
        fluid, source, s = ctx.fluid, ctx.source, ctx.settings
        sat_c = fluid.sat_T(T_cond_K)
        if REHEAT_PRESSURE_KEY in x:
            p_rh = float(x[REHEAT_PRESSURE_KEY])
            if not sat_c.p_Pa < p_rh < sat_e.p_Pa:
                raise CycleInfeasible("reheat pressure", f"reheat pressure {p_rh / 1e5:.4g} bar is not between the condensing "
                                      f"({sat_c.p_Pa / 1e5:.4g} bar) and the evaporation pressure ({sat_e.p_Pa / 1e5:.4g} bar)")
            sat_rh = fluid.sat_p(p_rh)
        else:
            sat_rh = fluid.sat_T(T_cond_K + float(x[REHEAT_PLACE.name]) * (sat_e.T_K - T_cond_K))
        T_rh = x.get(REHEAT_TEMPERATURE_KEY, s.reheat_temperature_K if s.reheat_temperature_K is not None else st3.T_K)
        if not T_rh > sat_rh.T_K:
            raise CycleInfeasible("reheat temperature", f"reheater outlet {C(T_rh)} is not above the saturation temperature "
                                  f"{C(sat_rh.T_K)} at the reheat pressure")
        if source is not None and T_rh > source.T_in_K - s.pinch_evaporator_K + 1e-9:
            raise CycleInfeasible("hot-end approach", f"reheater outlet {C(T_rh)} is closer than the evaporator pinch to the source inlet {C(source.T_in_K)}")
        if s.max_turbine_inlet_temperature_K is not None and T_rh > s.max_turbine_inlet_temperature_K + 1e-9:
            raise CycleInfeasible("thermal stability", f"reheater outlet {C(T_rh)} is above the thermal-stability limit of {fluid.name} ({C(s.max_turbine_inlet_temperature_K)})")
        st1 = condenser_outlet(fluid, sat_c, s.subcooling_K)
        st2 = pump(fluid, st1, sat_e.p_Pa, s.pump_efficiency, ctx.memo)
        hp = expand(fluid, st3, sat_rh, ctx.turbine, ctx.memo)
        st3r = fluid.state_pT(sat_rh.p_Pa, T_rh, "gas")
        if not st3r.h > hp.st_out.h:
            raise CycleInfeasible("reheat temperature", f"the high-pressure turbine leaves at {C(hp.st_out.T_K)}, not below the reheater outlet {C(T_rh)}")
        lp = expand(fluid, st3r, sat_c, ctx.turbine, ctx.memo)
        return ReheatColdSide(T_cond_K, sat_c.p_Pa, sat_c, sat_rh, st1, st2, hp.st_out, st3r, lp.st_out, lp.st_out_s, lp.eta)

    def _check_cold_side(self, ctx: CycleContext, sat_e: SatPoint, cs: ReheatColdSide) -> None:
        """The outlet-quality limit applies to both turbines."""
        x_min = ctx.settings.min_turbine_outlet_quality
        q = cs.s3e.q
        if not math.isnan(q) and q < x_min:
            raise CycleInfeasible("turbine outlet quality", f"high-pressure turbine outlet quality {q:.3f} is below the limit "
                                  f"{x_min:.3f} (a lower reheat pressure or more superheat may help)", q - x_min)
        super()._check_cold_side(ctx, sat_e, cs)

    def heater_path(self, ctx: CycleContext, sat_e: SatPoint, cs: ReheatColdSide, st3: State, n: int, exact: bool):
        """The composite of the evaporator path (2 -> 3) and the reheater path (3e -> 3r)."""
        main = heating_path(ctx.fluid, sat_e, cs.s2, st3, n, exact)
        rh = reheating_path(ctx.fluid, cs.sat_rh, cs.s3e, cs.s3r, n, exact)
        path = composite_path((main, rh), (1.0, 1.0), ("evaporator", "reheater"))
        return path, float(path.h[-1]), None

    def _state_table(self, cs: ReheatColdSide, st3: State) -> dict[str, State]:
        return {"1": cs.s1, "2": cs.s2, "3": st3, "3e": cs.s3e, "3r": cs.s3r, "4": cs.s4}

    def ts_path(self, fluid, r, n: int = 8):
        """1 -> 2 (pump), evaporator isobar to 3, expansion to 3e, reheater isobar to 3r,
        expansion to 4, condenser isobar back to 1."""
        st = r.states
        sat_e, sat_c, sat_rh = fluid.sat_T(r.T_evap_K), fluid.sat_T(r.T_cond_K), fluid.sat_p(st["3e"].p_Pa)
        s_hi, T_hi = isobar_ts(fluid, sat_e, st["2"].h, st["3"].h, n)
        s_rh, T_rh = isobar_ts(fluid, sat_rh, st["3e"].h, st["3r"].h, n)
        s_lo, T_lo = isobar_ts(fluid, sat_c, st["4"].h, st["1"].h, n)
        return [st["1"].s] + s_hi + s_rh + s_lo, [st["1"].T_K] + T_hi + T_rh + T_lo


REHEAT = Reheat()
