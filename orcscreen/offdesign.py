"""Off-design of a fixed design: the hardware a design point fixes, and the operating point that
hardware reaches at another sink (and source) condition.

The design fixes (:func:`hardware_of`):

* the turbine's swallowing capacity, Stodola's ellipse law
  m = K sqrt(rho_in p_in (1 - (p_out / p_in)^2)) with K from the design point (the law as
  transcribed in secondary copies; Cooke, J. Eng. Gas Turbines Power 107 (1985) 596, from
  memory, for its derivation), one constant per turbine section (a bleed or a reheat splits it
  at a middle pressure): the plant runs in sliding pressure, the heater pressure being what the
  turbine swallows;
* the turbine's part-load efficiency, Pili, Siamisiis, Agromayor, Nord, Wieland, Spliethoff,
  5th International Seminar on ORC Power Systems (2019), paper 70 (correlation as transcribed
  in one secondary copy): eta / eta_d = 0.248 + 1.632 a - 1.940 a^2 + 0.033 b - 1.085 b^2 +
  2.112 a b with a = dh_is / dh_is,d and b = V_out / V_out,d; here V_out is the isentropic
  outlet volume flow (our choice: explicit, and the same basis at design);
* each exchanger's area zone by zone (orcscreen.areas), and each zone's overall coefficient U
  scaled off design with the flows: a single-phase film h ~ Re^0.8 (Dittus-Boelter, Nu = 0.023
  Re^0.8 Pr^n, e.g. Incropera et al., eq. 8.60), a boiling or condensing film held constant
  (common practice), and at design the two sides' resistances taken as equal (our assumption,
  for want of the sides' coefficients): U / U_d = 2 / (r_wf + r_stream) with r = (m_d / m)^0.8
  for a single-phase side and 1 for a phase-changing one;
* the pump (its isentropic efficiency is held; the flow follows the turbine).

The sink's mover runs at a fraction of its design speed (1 unless the source's outlet minimum
or the best-sink-flow control slows it): a cooling-water pump at that fraction of the design
mass flow, the condenser fans at that fraction of the design volume flow (the air's mass flow
follows its density), their power as the cube of the fraction (affinity laws); the sink's
temperature rise follows from the duty. How each family of layouts moves its heater is its
``hot_side`` (orcscreen.cycles.base.HotSide); the operator's answers to binding limits are
described in orcscreen.controls.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from . import areas
from .cycles import LAYOUTS
from .brent import minimize_scalar_bounded
from .exchangers import Profile, condensing_glide_duty, heater_profile
from .paths import condensing_path
from .controls import CONTROLS, MIN_SINK_FLOW_FRACTION
from .turbine import ConstantEfficiency

__all__ = ["PART_LOAD_COEFFICIENTS", "part_load_efficiency", "stodola_constant", "stodola_flow",
           "film_ratio", "scaled_U", "Hardware", "OperatingPoint", "hardware_of", "operating_point",
           "SUPPORTED_LAYOUTS", "YearResult", "annual_energy", "best_sink_flow_point"]

#: Pili et al. (2019): eta / eta_d = c0 + c1 a + c2 a^2 + c3 b + c4 b^2 + c5 a b (sum 1 at design).
PART_LOAD_COEFFICIENTS = (0.248, 1.632, -1.940, 0.033, -1.085, 2.112)

#: Lowest part-load efficiency over the design one that is taken as a running turbine [-]: below,
#: the correlation is far outside the conditions it was fitted on and the bin does not run
#: (our choice).
PART_LOAD_FLOOR = 0.3

#: Exponent of the flow in a single-phase film coefficient (Dittus-Boelter: h ~ Re^0.8).
FILM_EXPONENT = 0.8

#: Zones whose working-fluid side changes phase (their film coefficient is held).
PHASE_CHANGE_ZONES = frozenset({"evaporation", "condensation"})


def part_load_efficiency(eta_design: float, dh_ratio: float, volume_flow_ratio: float) -> float:
    """Turbine isentropic efficiency off design [-] from the design one and the ratios of the
    isentropic enthalpy drop (a) and of the outlet volume flow (b) to their design values:
    Pili et al. (2019), see the module docstring. Not below zero."""
    c0, c1, c2, c3, c4, c5 = PART_LOAD_COEFFICIENTS
    a, b = float(dh_ratio), float(volume_flow_ratio)
    return max(0.0, eta_design * (c0 + c1 * a + c2 * a * a + c3 * b + c4 * b * b + c5 * a * b))


def stodola_constant(m_kg_s: float, rho_in_kg_m3: float, p_in_Pa: float, p_out_Pa: float) -> float:
    """Stodola's K [m^2] of a turbine passing m_kg_s [kg/s] from (rho_in, p_in) to p_out."""
    return m_kg_s / math.sqrt(rho_in_kg_m3 * p_in_Pa * (1.0 - (p_out_Pa / p_in_Pa) ** 2))


def stodola_flow(K_m2: float, rho_in_kg_m3: float, p_in_Pa: float, p_out_Pa: float) -> float:
    """Mass flow [kg/s] the turbine of constant K swallows: K sqrt(rho_in p_in (1 - (p_out/p_in)^2));
    zero when p_out >= p_in."""
    x = 1.0 - (p_out_Pa / p_in_Pa) ** 2
    return K_m2 * math.sqrt(rho_in_kg_m3 * p_in_Pa * x) if x > 0.0 else 0.0


def film_ratio(m_design: float, m: float) -> float:
    """Resistance of a single-phase film off design over its design value, (m_d / m)^0.8."""
    return (m_design / m) ** FILM_EXPONENT if m > 0.0 else math.inf


def scaled_U(U_design: float, zone: str, wf_flow_ratio: float, stream_flow_ratio: float) -> float:
    """A zone's overall coefficient [W/(m^2 K)] off design: U_d 2 / (r_wf + r_stream), each side's
    resistance r = (m_d / m)^0.8 for a single-phase film and 1 where the working fluid changes
    phase (equal resistances at design; see the module docstring). Ratios are m / m_d."""
    r_wf = 1.0 if zone in PHASE_CHANGE_ZONES else film_ratio(1.0, wf_flow_ratio)
    r_stream = film_ratio(1.0, stream_flow_ratio)
    return U_design * 2.0 / (r_wf + r_stream)


# ---------------------------------------------------------------------------------------------
# the hardware of a design, and its operating point at another condition
# ---------------------------------------------------------------------------------------------


#: Layouts whose off-design this module solves, those with a hot side (Layout.hot_side): one
#: heater, one turbine, one condenser (a recuperator is held at its design effectiveness).
SUPPORTED_LAYOUTS = tuple(name for name, layout in LAYOUTS.items() if layout.hot_side is not None)

#: Relative area mismatch below which an operating point is solved [-].
AREA_RTOL = 1e-6


@dataclass(frozen=True)
class Hardware:
    """What a design fixes [SI]: the turbine's Stodola constant and design efficiency, enthalpy
    drop and outlet volume flow; each exchanger's area and U by zone; the design flows; the
    sink's design flow and auxiliary power; the design's heater coordinate and hot end
    (orcscreen.cycles.base.HotSide: evaporation temperature and superheat, or heater pressure
    and turbine inlet temperature)."""

    layout: str
    K_m2: float
    eta_design: float
    dh_is_design: float
    v_out_design_m3_s: float
    evaporator: areas.ExchangerArea
    condenser: areas.ExchangerArea
    U_design: dict
    m_wf_design: float
    m_source_design: float
    m_sink_design: float
    W_aux_design_W: float
    u_design: float
    hot_design: float
    T_cond_design_K: float
    sink_density_design: float
    T_sink_design_K: float
    #: a turbine of two sections (bleed, reheat; HotSide.lp_inlet): the second section's
    #: Stodola constant [m2], the middle pressure's saturation temperature [K] and the value held
    #: there at design (NaN for one section)
    K_lp_m2: float = math.nan
    T_mid_design_K: float = math.nan
    held_design: float = math.nan
    #: the flow through the turbine's last section and the condenser at design [kg/s]
    m_out_design: float = math.nan


@dataclass(frozen=True)
class OperatingPoint:
    """The plant's state at one condition: net power [W] (0 when it cannot run, with the reason),
    and the evaporation (NaN for a supercritical heater) and condensing temperatures [K],
    working-fluid flow [kg/s], turbine efficiency and source outlet temperature [K] it settles
    at; u is the heater's coordinate (orcscreen.cycles.base.HotSide)."""

    W_net_W: float
    reason: str = ""
    T_evap_K: float = math.nan
    T_cond_K: float = math.nan
    m_wf_kg_s: float = math.nan
    eta_turbine: float = math.nan
    T_source_out_K: float = math.nan
    result: object = None
    #: the evaporator's and condenser's T-Q profiles at the point (the areas' check)
    profiles: dict = dataclasses.field(default_factory=dict)
    #: turbine-inlet superheat at the point [K] (raised above the design's where a wet expansion
    #: or the pressure limit is answered)
    superheat_K: float = math.nan
    #: the sink's fan or pump flow over its design flow [-]
    sink_flow_fraction: float = 1.0
    #: what the operator did to meet a limit, in words ("" when nothing)
    actions: str = ""
    #: the heater's coordinate at the point and a two-section turbine's middle saturation
    #: temperature [K] (the next bin's start)
    u: float = math.nan
    T_mid_K: float = math.nan

    @property
    def running(self) -> bool:
        return not self.reason


def _need(design) -> None:
    if design.layout not in LAYOUTS or LAYOUTS[design.layout].hot_side is None:
        raise ValueError(f"off-design of the {design.layout!r} layout is not modelled (only "
                         f"{', '.join(SUPPORTED_LAYOUTS)})")


def hardware_of(design, ctx) -> Hardware:
    """The hardware the design result (exact, feasible) fixes in its context."""
    _need(design)
    fluid, st, sink = ctx.fluid, design.states, ctx.sink
    st3 = st["3"]
    sat_c = fluid.sat_T(design.T_cond_K)
    side = LAYOUTS[design.layout].hot_side
    u, hot = side.of_design(design)
    m, m_out = design.m_wf_kg_s, _condenser_flow(design)
    T_mid, held, K_lp = math.nan, math.nan, math.nan
    p_out = sat_c.p_Pa
    if side.lp_inlet:  # a turbine of two sections: a Stodola law for each
        T_mid, held = side.middle_of_design(ctx, design)
        p_out = fluid.sat_T(T_mid).p_Pa
        lp = st[side.lp_inlet]
        K_lp = stodola_constant(m_out, 1.0 / lp.v, p_out, sat_c.p_Pa)
    K = stodola_constant(m, 1.0 / st3.v, st3.p_Pa, p_out)
    dh_is, v_s = side.isentropic_expansion(fluid, st, sat_c)
    U = areas.zone_coefficients(ctx.source, sink, ctx.settings.u_W_m2K)
    # both profiles as operating_point builds them (the same paths), so that the design
    # condition returns the design itself
    n = ctx.settings.n_zone_segments
    path = side.heating_path(ctx, u, st, n)
    profiles = {"evaporator": heater_profile(path, m, float(path.h[-1]), ctx.source),
                "condenser": _condenser_profile(fluid, sat_c, st, m_out, sink, design.m_sink_kg_s, n)}
    found = areas.exchanger_areas(profiles, U)
    return Hardware(design.layout, K, design.eta_turbine, dh_is, m_out * v_s,
                    found["evaporator"], found["condenser"], U, m, ctx.source.m_kg_s,
                    design.m_sink_kg_s, design.W_aux_W, u, hot, design.T_cond_K,
                    _density(sink, sink.T_in_K), sink.T_in_K, K_lp, T_mid, held, m_out)


def _condenser_inlet(states):
    """The condenser's inlet: the last state of the cycle's state table (in cycle order)."""
    return next(reversed(states.values()))


def _condenser_flow(r) -> float:
    """Working-fluid flow through the condenser [kg/s] (the turbine's last section's): the heat
    rejected over the enthalpy fall from the condenser's inlet to 1."""
    return r.Q_out_W / (_condenser_inlet(r.states).h - r.states["1"].h)


def _condenser_profile(fluid, sat_c, states, m_out: float, sink, m_sink: float, n: int) -> Profile:
    """The condenser's T-Q profile [W, K] at a condensing point: the working fluid from the
    condenser's inlet to 1 against the sink at flow m_sink [kg/s]."""
    cpath = condensing_path(fluid, sat_c, states["1"], _condenser_inlet(states), n, True)
    Q = m_out * (cpath.h - cpath.h[0])
    T_sink = sink.T_K(sink.h_in_J_kg + Q / m_sink)
    return Profile(Q, cpath.T_K, np.asarray(T_sink, dtype=float), condensing_glide_duty(sat_c, cpath.h, m_out))


def _density(sink, T_K: float) -> float:
    """Inlet density of an air sink [kg/m3] (fans move a fixed volume), 1 for any other sink."""
    from .streams import dry_air_density_kg_m3

    return dry_air_density_kg_m3(T_K, sink.p_Pa) if getattr(sink, "area_basis", "") == "finned" else 1.0


def _area(profile: Profile, exchanger: str, U_design: dict, wf_ratio: float,
          stream_ratio: float) -> float:
    """Area [m2] the profile needs with the zones' U scaled off design (inf across a crossing)."""
    U = {z: scaled_U(U_design[z], z, wf_ratio, stream_ratio) for z in U_design}
    return areas.exchanger_area(profile, exchanger, U).area_m2


def operating_point(layout, ctx, hw: Hardware, T_sink_in_K: float, T_source_in_K: float | None = None,
                    m_source_kg_s: float | None = None, guess: tuple | None = None,
                    sink_flow_fraction: float = 1.0) -> OperatingPoint:
    """The operating point of the design's hardware at a sink inlet temperature (and source inlet
    temperature and flow, the design's when None), the sink's fans or pumps at sink_flow_fraction
    of their design flow, in sliding pressure: the heater coordinate u (evaporation temperature
    or supercritical pressure, the layout's hot side) at which the turbine swallows the flow
    (Stodola, per section), with the evaporator's and the condenser's areas just sufficient
    (their zones' U scaled with the flows). Solved by a damped Newton iteration on (u, T_cond[,
    T_mid]) from guess (a neighbouring bin's (u, T_cond, T_mid); the design's by default).

    A limit that binds is answered as an operator would (orcscreen.controls): a wet expansion
    with just enough superheat, the pressure limit by holding the pressure there with less flow
    (more superheat), the source's outlet minimum by slowing the sink's fans or pumps. A point
    where the hardware cannot run, or that still breaks a limit, has zero power and the reason."""
    fluid, s = ctx.fluid, ctx.settings
    source = ctx.source
    if T_source_in_K is not None or m_source_kg_s is not None:
        source = dataclasses.replace(source, T_in_K=T_source_in_K or source.T_in_K, m_kg_s=m_source_kg_s or source.m_kg_s)
    sink = dataclasses.replace(ctx.sink, T_in_K=float(T_sink_in_K),
                               rise_K=max(2.0 * ctx.sink.rise_K / MIN_SINK_FLOW_FRACTION, 30.0))
    density_ratio = _density(sink, sink.T_in_K) / hw.sink_density_design
    # the layout evaluates without the outlet-quality and pressure limits nor the design's pinch:
    # this module checks the limits on the solved point (and answers them first)
    settings0 = dataclasses.replace(s, aux_power_per_W_rejected=0.0, turbine=ConstantEfficiency(hw.eta_design),
                                    u_W_m2K={}, economics=None, objective=None, profiles_in_search=False,
                                    min_turbine_outlet_quality=0.0, max_pressure_Pa=None, max_reduced_pressure=0.995,
                                    max_supercritical_reduced_pressure=math.inf, pinch_evaporator_K=0.0)
    n = s.n_zone_segments
    q_min = s.min_turbine_outlet_quality
    side = layout.hot_side
    u_max = side.highest_u(ctx)
    T_min = source.T_out_min_K

    k = 1 if side.lp_inlet else 0  # a turbine of two sections: the middle pressure is unknown too

    def solve_point(x, answers=()):
        """(residuals, payload) at x = (u, T_cond[, T_mid][, hot][, sink flow fraction]), u the
        heater's coordinate, T_mid the saturation temperature of a two-section turbine's middle
        pressure, hot the heater's hot end (orcscreen.cycles.base.HotSide): the flow the turbine
        swallows (Stodola, per section), the part-load efficiency settled, the areas needed over
        the design's (and the second section's flow against its law), and one residual per
        answer: "wet" (hot end free, outlet quality at its limit), "pressure" (hot end free, the
        heater at the pressure limit), "outlet" (sink flow free, source outlet at its minimum)."""
        u, T_cond = float(x[0]), float(x[1])
        T_mid = float(x[2]) if k else math.nan
        hot = float(x[2 + k]) if "wet" in answers or "pressure" in answers else hw.hot_design
        g = float(x[-1]) if "outlet" in answers else sink_flow_fraction
        if T_cond <= sink.T_in_K or not 0.05 < g <= 1.5:
            return None, None
        at = side.point(ctx, u, hot, T_cond, source.T_in_K)
        if at is None or (k and not T_cond + 0.1 < T_mid < u - 0.1):
            return None, None
        variables, st3 = at
        m_sink = hw.m_sink_design * density_ratio * g
        sat_c = fluid.sat_T(T_cond)
        p_out = sat_c.p_Pa
        if k:
            variables = {**variables, **side.middle(ctx, T_mid, hw.held_design)}
            p_out = fluid.sat_T(T_mid).p_Pa
        m = stodola_flow(hw.K_m2, 1.0 / st3.v, st3.p_Pa, p_out)
        if not m > 0.0:
            return None, None
        eta = hw.eta_design
        r = None
        for _ in range(4):  # the part-load efficiency depends on the expansion it sets
            here = dataclasses.replace(ctx, source=source, sink=sink,
                                       settings=dataclasses.replace(settings0, turbine=ConstantEfficiency(eta)))
            r = layout.evaluate_at(here, variables, True, T_cond_K=T_cond, m_wf_kg_s=m)
            if not r.ok:
                return None, r
            dh_is, v_s = side.isentropic_expansion(fluid, r.states, sat_c)
            m_out = _condenser_flow(r)
            eta_new = part_load_efficiency(hw.eta_design, dh_is / hw.dh_is_design, m_out * v_s / hw.v_out_design_m3_s)
            if not eta_new > PART_LOAD_FLOOR * hw.eta_design:  # far outside the correlation's range
                return None, (f"turbine part-load efficiency below {PART_LOAD_FLOOR:.0%} of the design's: "
                              "outside the correlation's range")
            if abs(eta_new - eta) < 1e-7:
                break
            eta = eta_new
        st = r.states
        path = side.heating_path(ctx, u, st, n)
        prof_e = heater_profile(path, m, float(path.h[-1]), source)
        prof_c = _condenser_profile(fluid, sat_c, st, m_out, sink, m_sink, n)
        A_e = _area(prof_e, "evaporator", hw.U_design, m / hw.m_wf_design,
                    source.m_kg_s / hw.m_source_design)
        A_c = _area(prof_c, "condenser", hw.U_design, m_out / hw.m_out_design, m_sink / hw.m_sink_design)
        res = [A_e / hw.evaporator.area_m2 - 1.0, A_c / hw.condenser.area_m2 - 1.0]
        if k:  # the second section swallows what the first leaves it
            lp = st[side.lp_inlet]
            res.append(m_out / stodola_flow(hw.K_lp_m2, 1.0 / lp.v, p_out, sat_c.p_Pa) - 1.0)
        if "wet" in answers:  # the hot end that puts the turbine outlets at their quality limit
            res.append(_outlet_quality(layout, r) - q_min)
        elif "pressure" in answers:  # the hot end that holds the heater at the pressure limit
            res.append(u - u_max)
        if "outlet" in answers:  # the sink flow that brings the source outlet to its minimum
            res.append(float(prof_e.T_hot_K[0]) - T_min)
        res = np.array(res)
        payload = _Solved(r, {"evaporator": prof_e, "condenser": prof_c}, m, eta, hot, g,
                          hw.W_aux_design_W * density_ratio * g ** 3, T_mid)
        return (res if np.all(np.isfinite(res)) else None), payload

    # start: the guess's (a neighbouring bin's) point, or the design's with the condensing
    # temperature moved with the sink (and a middle pressure's saturation moved half as much)
    dT = sink.T_in_K - hw.T_sink_design_K
    x0 = np.array((hw.u_design, hw.T_cond_design_K + dT) + ((hw.T_mid_design_K + 0.5 * dT,) if k else ()))
    if guess is not None:
        x0[0] = guess[0]
        if k and len(guess) > 2 and guess[2] == guess[2]:
            x0[2] = guess[2]
    x, out, failed = _newton(solve_point, x0)
    if failed and abs(x0[1] - hw.T_cond_design_K) > 0.5:  # a second start: the design's condensing temperature
        x2, out2, failed2 = _newton(solve_point, np.array((x0[0], hw.T_cond_design_K) +
                                                          ((hw.T_mid_design_K,) if k else ())))
        if not failed2:
            x, out, failed = x2, out2, ""
    answers = ()
    if failed and math.isfinite(u_max):
        # no sliding-pressure point (it may lie above the pressure limit): try the pressure held
        x, out, answers = _answer(solve_point, x, out, answers, np.array([u_max, *x0[1:], hw.hot_design + 3.0]),
                                  ("pressure",))
        # held with less flow, the hot end can only rise: a point with a cooler one is another branch
        failed = failed if not answers or out.hot < hw.hot_design - 1e-9 else ""
    if failed:
        return OperatingPoint(0.0, reason=failed, sink_flow_fraction=sink_flow_fraction)
    T3_max = s.max_turbine_inlet_temperature_K
    if _wet(layout, out.result, q_min) and (T3_max is None or out.result.states["3"].T_K + 3.0 < T3_max):
        # a wet expansion: just enough more heat at the hot end to hold the outlet quality at its limit
        x, out, answers = _answer(solve_point, x, out, answers, np.array([*x[:2 + k], hw.hot_design + 3.0]), ("wet",))
    if x[0] > u_max + 1e-9 and "pressure" not in answers:
        # the pressure limit: held there with less flow, the vapour leaving hotter
        x, out, answers = _answer(solve_point, x, out, answers, np.array([u_max, *x[1:2 + k], out.hot + 3.0]),
                                  ("pressure",))
    if T_min is not None and out.T_source_out_K < T_min - 1e-6:
        # the source's outlet minimum: the sink's fans or pumps slowed until it is met,
        # started from the design's point, where a design on that limit settles
        design_start = (hw.u_design, hw.T_cond_design_K) + ((hw.T_mid_design_K,) if k else ())
        for x1 in (np.concatenate((design_start, x[2 + k:], (0.7 * out.sink_flow_fraction,))),
                   np.append(x, 0.8 * out.sink_flow_fraction)):
            x, out, answers = _answer(solve_point, x, out, answers, x1, answers + ("outlet",))
            if "outlet" in answers:
                break
        if "outlet" in answers and out.sink_flow_fraction < MIN_SINK_FLOW_FRACTION:
            why = (f"the source outlet would need the sink's flow at {out.sink_flow_fraction:.0%} of design, "
                   f"below the {MIN_SINK_FLOW_FRACTION:.0%} the fans or pumps are slowed to")
            return OperatingPoint(0.0, why, sink_flow_fraction=out.sink_flow_fraction)
    r, profiles = out.result, out.profiles
    why = _limits(ctx, layout, r, source, out.T_source_out_K, x[0] > u_max * (1 + 1e-9), side)
    W_net = r.W_net_W - out.W_aux_W
    if not why and W_net <= 0.0:
        why = "net power not positive at this condition"
    return OperatingPoint(0.0 if why else W_net, why, r.T_evap_K, float(x[1]), out.m_wf_kg_s, out.eta_turbine,
                          out.T_source_out_K, r, profiles, r.superheat_K, out.sink_flow_fraction,
                          "; ".join(_ANSWERED[a].format(hot=side.hot_words) for a in answers), float(x[0]),
                          out.T_mid_K)


@dataclass(frozen=True)
class _Solved:
    """What one trial of operating_point computed: the cycle, its exchanger profiles, the flow
    [kg/s], the turbine efficiency, the heater's hot end, the sink flow fraction and the sink's
    fan or pump power [W]."""

    result: object
    profiles: dict
    m_wf_kg_s: float
    eta_turbine: float
    hot: float
    sink_flow_fraction: float
    W_aux_W: float
    T_mid_K: float = math.nan

    @property
    def T_source_out_K(self) -> float:
        return float(self.profiles["evaporator"].T_hot_K[0])


#: What the operator did for each answer, in words.
_ANSWERED = {"wet": "{hot} raised to keep the expansion dry",
             "pressure": "pressure held at its limit with less flow (a higher {hot})",
             "outlet": "sink flow reduced to keep the source outlet at its minimum"}


def _outlet_quality(layout, r) -> float:
    """The lowest quality at the layout's turbine outlets (1 where an outlet is superheated)."""
    qs = [r.states[key].q for key in layout.turbine_outlets]
    return min(q if q == q else 1.0 for q in qs)


def _wet(layout, r, q_min: float) -> bool:
    return _outlet_quality(layout, r) < q_min


def _answer(solve_point, x, out, answers: tuple, x0, trial: tuple):
    """Solve again from x0 with the unknowns and residuals of trial: the new (x, payload,
    answers), or the old ones when no point is found (the limit check then names the limit the
    plant could not meet)."""
    x_new, out_new, failed = _newton(lambda z: solve_point(z, trial), x0)
    if failed:
        return x, out, answers
    return x_new, out_new, trial


def _newton(solve, x0: np.ndarray, step_K: float = 0.02, iterations: int = 40):
    """Damped Newton iteration on solve(x) -> (residuals or None, payload) from x0, with a
    forward-difference Jacobian: (x, payload, "") when the residuals are below AREA_RTOL, else
    (x, payload, the reason in words)."""
    x = np.array(x0, dtype=float)
    f, out = solve(x)
    for _ in range(iterations):
        if f is None:
            return x, out, _why(out, "no operating point: the hardware cannot run at this condition")
        if np.max(np.abs(f)) < AREA_RTOL:
            return x, out, ""
        k = len(x)
        J = np.empty((k, k))
        for j in range(k):
            dx = np.zeros(k)
            dx[j] = step_K
            fj, _ = solve(x + dx)
            if fj is None:
                dx[j] = -step_K
                fj, _ = solve(x + dx)
                if fj is None:
                    return x, out, "no operating point: the search left the fluid's range"
            J[:, j] = (fj - f) / dx[j]
        try:
            delta = -np.linalg.solve(J, f)
        except np.linalg.LinAlgError:
            return x, out, "no operating point: the area balance is singular here"
        lam = 1.0
        while lam > 1e-3:
            x_try = x + lam * np.clip(delta, -5.0, 5.0)
            f_try, out_try = solve(x_try)
            if f_try is not None and np.linalg.norm(f_try) < np.linalg.norm(f):
                x, f, out = x_try, f_try, out_try
                break
            lam *= 0.5
        else:
            return x, out, "no operating point: the area balance did not converge"
    return x, out, "no operating point: the area balance did not converge"


@dataclass(frozen=True)
class YearResult:
    """A design's year: net energy [MWh], hours, hours not running, capacity factor, and each
    bin's (bin, operating point)."""

    energy_MWh: float
    hours: float
    hours_not_running: float
    #: annual energy over the design's net power times the hours [-]
    capacity_factor: float
    points: tuple


def best_sink_flow_point(layout, ctx, hw: Hardware, T_sink_in_K: float, T_source_in_K: float | None = None,
                         m_source_kg_s: float | None = None, guess: tuple[float, float] | None = None) -> OperatingPoint:
    """The operating point at the sink's fan or pump speed that gives the largest net power, from
    MIN_SINK_FLOW_FRACTION to the design flow (or to the flow the source's outlet minimum
    allows): a bounded scalar search (Brent's method, orcscreen.brent: SciPy's minimize_scalar arithmetic) to SINK_FLOW_XTOL
    over the points of operating_point; the design speed's point when no slower one does better."""
    full = operating_point(layout, ctx, hw, T_sink_in_K, T_source_in_K, m_source_kg_s, guess)
    start = (full.u, full.T_cond_K, full.T_mid_K) if full.running else guess
    top = min(1.0, full.sink_flow_fraction)
    if top <= MIN_SINK_FLOW_FRACTION + SINK_FLOW_XTOL:
        return full
    tried = [full]

    def loss(g: float) -> float:
        p = operating_point(layout, ctx, hw, T_sink_in_K, T_source_in_K, m_source_kg_s, start, sink_flow_fraction=g)
        tried.append(p)
        return -p.W_net_W

    minimize_scalar_bounded(loss, (MIN_SINK_FLOW_FRACTION, top), xatol=SINK_FLOW_XTOL)
    return max(tried, key=lambda p: p.W_net_W)


#: Tolerance of the best sink flow [-] (a 1 % step of the fan speed; our choice).
SINK_FLOW_XTOL = 0.01


def annual_energy(layout, ctx, hw: Hardware, bins, W_design_W: float, control: str = "sliding-pressure") -> YearResult:
    """Sum of net power x hours over a year's bins (orcscreen.year.Bin: sink temperature °C, hours,
    optional source temperature °C and flow), each bin's operating point under the control
    strategy (orcscreen.controls) started from its neighbour's (bins sorted by sink
    temperature); a bin where the plant cannot run counts zero. Capacity factor: energy over the
    design's net power over all the hours."""
    point_at = best_sink_flow_point if CONTROLS[control].best_sink_flow else operating_point
    solved = {}
    T_d = hw.T_sink_design_K - 273.15
    warm = [i for i, b in enumerate(bins) if b.sink_temperature_C >= T_d]
    cold = [i for i, b in enumerate(bins) if b.sink_temperature_C < T_d]
    # continuation outwards from the design temperature: each bin starts from its neighbour's point
    for chain in (sorted(warm, key=lambda i: bins[i].sink_temperature_C),
                  sorted(cold, key=lambda i: -bins[i].sink_temperature_C)):
        guess = None
        for i in chain:
            b = bins[i]
            T_src = None if b.source_temperature_C is None else b.source_temperature_C + 273.15
            solved[i] = p = point_at(layout, ctx, hw, b.sink_temperature_C + 273.15, T_src, b.source_mass_flow_kg_s, guess)
            if p.running:
                guess = (p.u, p.T_cond_K, p.T_mid_K)
    points = tuple((b, solved[i]) for i, b in enumerate(bins))
    energy_Wh = sum(p.W_net_W * b.hours for b, p in points)
    hours = sum(b.hours for b, _ in points)
    off = sum(b.hours for b, p in points if not p.running)
    cf = energy_Wh / (W_design_W * hours) if hours > 0 and W_design_W > 0 else math.nan
    return YearResult(energy_Wh / 1e6, hours, off, cf, points)


def _why(out, default: str) -> str:
    if isinstance(out, str):
        return out
    r = out[0] if isinstance(out, tuple) else out
    return getattr(r, "reason", "") or default


def _limits(ctx, layout, r, source, T_source_out_K: float, above_pressure: bool, side) -> str:
    """The limit the solved point breaks, in words, or ""."""
    s = ctx.settings
    st3 = r.states["3"]
    q4 = _outlet_quality(layout, r)
    if q4 < s.min_turbine_outlet_quality - 1e-6:  # an answered limit is met to the solver's tolerance
        return f"turbine outlet quality {q4:.3f} below {s.min_turbine_outlet_quality:g}"
    T_min = source.T_out_min_K
    if T_min is not None and T_source_out_K < T_min - 1e-6:
        return (f"source outlet {T_source_out_K - 273.15:.1f} °C below its minimum {T_min - 273.15:.1f} °C "
                "even with the sink's fans or pumps slowed")
    if s.max_turbine_inlet_temperature_K is not None and st3.T_K > s.max_turbine_inlet_temperature_K + 1e-6:
        return (f"turbine inlet {st3.T_K - 273.15:.1f} °C above the fluid's thermal-stability limit "
                f"{s.max_turbine_inlet_temperature_K - 273.15:.1f} °C")
    if above_pressure:
        return (f"{side.coordinate} above its pressure limit ({st3.p_Pa / 1e5:.2f} bar), "
                "and no operating point holds it there with less flow")
    return ""
