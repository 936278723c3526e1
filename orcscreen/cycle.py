"""Cycle state points of the subcritical layouts, for given evaporation conditions.

No optimisation happens here: :func:`evaluate` takes the evaporation temperature and the
superheat and returns every state, flow, power and exchanger figure of one cycle, or an
infeasible result with the reason in plain words.

States (DESIGN section 3): 1 condenser outlet, 2 pump outlet, 2r recuperator cold-side outlet,
3 turbine inlet, 4 turbine outlet, 4r recuperator hot-side outlet (2r = 2 and 4r = 4 in the basic
layout). Model:

* pump:    h2 = h1 + (h2s - h1) / eta_pump
* turbine: h4 = h3 - eta_turbine (h3 - h4s), eta_turbine from the turbine model object
* evaporator (counter-current): the working-fluid flow is the largest with the source at least
  pinch_evaporator_K above the working fluid everywhere and the source outlet not below its limit;
* condenser (counter-current, sink with a fixed temperature rise): the lowest condensing
  temperature with the working fluid at least pinch_condenser_K above the sink everywhere;
* recuperator: duty eps * m (h4 - h(p4, T2)), reduced to respect pinch_recuperator_K at both ends;
  the cold side stays liquid and the hot side stays vapour.

Two accuracies: ``exact=False`` checks the pinch at the closed-form candidates only (cold end,
bubble point, dew point, source outlet limit) and is what the optimiser's scan uses; ``exact=True``
checks it on the discretised profiles of every exchanger (``n_zone_segments`` per zone), returns
the profiles, and is what every reported result uses.

Sources: the model is the standard vapour power cycle with isentropic efficiencies, e.g.
Moran, Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed., Wiley
2014, chapter 8; the pinch-limited flow follows common practice for heat-recovery cycles (e.g.
Quoilin et al., Renew. Sust. Energy Rev. 22 (2013) 168-186, doi:10.1016/j.rser.2013.01.028).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .exchangers import Profile, max_flow_for_pinch
from .properties import Fluid, PropertyError, State
from .turbine import ConstantEfficiency, TurbineModel, size_parameter_m, volume_ratio

__all__ = ["CycleSettings", "CycleResult", "Layout", "LAYOUTS", "evaluate", "CycleInfeasible"]

P_ATM_PA = 101325.0


@dataclass(frozen=True)
class Layout:
    """A cycle layout: its name, a one-line description and the components it has."""

    name: str
    description: str
    recuperator: bool


#: Registry of layouts (one place: the study validation, the optimiser and the docs read it).
LAYOUTS: dict[str, Layout] = {
    "basic": Layout("basic", "pump, evaporator, turbine, condenser", recuperator=False),
    "recuperated": Layout(
        "recuperated", "basic layout plus a recuperator from turbine outlet to pump outlet", recuperator=True
    ),
}


@dataclass(frozen=True)
class CycleSettings:
    """Settings of one cycle evaluation, SI units (see DESIGN section 3 for the defaults)."""

    pinch_evaporator_K: float = 10.0
    pinch_condenser_K: float = 5.0
    pinch_recuperator_K: float = 10.0
    recuperator_effectiveness: float = 0.8
    pump_efficiency: float = 0.7
    turbine: TurbineModel = field(default_factory=lambda: ConstantEfficiency(0.8))
    generator_efficiency: float = 1.0
    motor_efficiency: float = 1.0
    aux_power_per_W_rejected: float = 0.0
    max_pressure_Pa: float | None = None
    max_reduced_pressure: float = 0.9
    min_turbine_outlet_quality: float = 0.9
    min_condensing_pressure_Pa: float | None = None
    subcooling_K: float = 0.0
    max_turbine_inlet_temperature_K: float | None = None
    n_zone_segments: int = 20

    def max_evaporation_pressure_Pa(self, fluid: Fluid) -> float:
        """Highest allowed subcritical evaporation pressure [Pa]: min(p_max, r_max p_crit)."""
        p = self.max_reduced_pressure * fluid.p_crit_Pa
        if self.max_pressure_Pa is not None:
            p = min(p, self.max_pressure_Pa)
        return p


class CycleInfeasible(Exception):
    """Raised inside the evaluation when a limit is broken; carries the limit name and reason."""

    def __init__(self, limit: str, reason: str, margin: float = math.nan):
        super().__init__(reason)
        self.limit = limit
        self.reason = reason
        self.margin = margin  # signed distance to the limit where it has one (negative: broken)


@dataclass(frozen=True)
class CycleResult:
    """Everything one cycle evaluation produced. Powers [W], flows [kg/s], temperatures [K]."""

    status: str  # "ok" or "infeasible"
    reason: str = ""
    limit: str = ""  # the limit that was broken (infeasible) or that sets the flow
    T_evap_K: float = math.nan
    p_evap_Pa: float = math.nan
    superheat_K: float = math.nan
    T_cond_K: float = math.nan
    p_cond_Pa: float = math.nan
    states: dict = field(default_factory=dict)
    m_wf_kg_s: float = math.nan
    m_sink_kg_s: float = math.nan
    W_turbine_W: float = math.nan
    W_pump_W: float = math.nan
    W_aux_W: float = math.nan
    W_net_W: float = -math.inf
    Q_in_W: float = math.nan
    Q_out_W: float = math.nan
    Q_rec_W: float = 0.0
    T_source_out_K: float = math.nan
    pinch_location: str = ""
    eta_turbine: float = math.nan
    size_parameter_m: float = math.nan
    volume_ratio: float = math.nan
    profiles: dict = field(default_factory=dict)
    margin: float = math.nan  # infeasible: signed distance to the broken limit, if it has one

    @property
    def ok(self) -> bool:
        return self.status == "ok"


def _infeasible(limit: str, reason: str, margin: float = math.nan, **known) -> CycleResult:
    return CycleResult(status="infeasible", reason=reason, limit=limit, margin=margin, **known)


def _C(T_K: float) -> str:
    return f"{T_K - 273.15:.1f} °C"


# ---------------------------------------------------------------------------------------------
# cold side: condenser outlet, pump, expansion, recuperator for a given condensing temperature
# ---------------------------------------------------------------------------------------------
@dataclass
class _ColdSide:
    T_cond_K: float
    p_cond_Pa: float
    sat: object
    s1: State
    s2: State
    s4s_h: float
    s4s_v: float
    s4s_T: float
    s4s_q: float
    s4: State
    eta_t: float
    s2r: State
    s4r: State
    q_rec: float
    recuperator_active: bool
    rec_profile: Profile | None = None  # per unit mass flow (Q in J/kg), exact mode only
    cond_check: tuple | None = None  # exact condenser approach, kept once computed


def _two_phase_state(sat, T_K: float, q: float) -> State:
    return State(
        T_K,
        sat.p_Pa,
        sat.hL + q * (sat.hV - sat.hL),
        sat.sL + q * (sat.sV - sat.sL),
        sat.vL + q * (sat.vV - sat.vL),
        q,
    )


def _state_from_ph(fluid: Fluid, sat, h: float, near: State | None = None) -> State:
    """State at the saturation pressure of sat and enthalpy h; two-phase states without a flash.

    Single-phase states use the phase-imposed Newton flash, started next to the state near
    (same pressure) or at the saturation point of the same phase.
    """
    if sat.hL <= h <= sat.hV:
        return _two_phase_state(sat, sat.T_K, (h - sat.hL) / (sat.hV - sat.hL))
    gas = h > sat.hV
    if near is None:
        near = State(sat.T_K, sat.p_Pa, sat.hV if gas else sat.hL, sat.sV if gas else sat.sL, sat.vV if gas else sat.vL, math.nan)
    return _flash_ph(fluid, sat.p_Pa, h, "gas" if gas else "liquid", near)


#: Last vapour cp [J/(kg K)] seen per fluid: the first guess of the expansion-outlet flash.
#: Cleared at the start of every optimisation (:func:`reset_guesses`), so that a result does not
#: depend, even in its last bits, on what the process computed before.
_CP_VAPOUR_HINT: dict[str, float] = {}


def reset_guesses() -> None:
    """Forget the first guesses carried between evaluations (call at the start of a case)."""
    _CP_VAPOUR_HINT.clear()


def _superheated_ps(fluid: Fluid, sat, s: float) -> State:
    """Superheated vapour at the pressure of sat and entropy s (s > sV), phase-imposed Newton."""
    cp = _CP_VAPOUR_HINT.get(fluid.name, 1000.0)
    T0 = sat.T_K * math.exp((s - sat.sV) / cp)
    st = fluid.state_ps(sat.p_Pa, s, "gas", T0, sat.vV * T0 / sat.T_K)
    if not math.isnan(st.cp):
        _CP_VAPOUR_HINT[fluid.name] = st.cp
    return st


def _flash_ph(fluid: Fluid, p_Pa: float, h: float, phase: str, near: State) -> State:
    """Single-phase state at (p, h), Newton started from near (a state of the same phase)."""
    T, v = _next_guess(near, h - near.h, phase)
    return fluid.state_ph(p_Pa, h, phase, T, v)


def _next_guess(st: State, dh: float, phase: str) -> tuple[float, float]:
    """Temperature [K] and specific volume [m3/kg] guesses dh [J/kg] away from st on its isobar.

    T from dh/cp; v unchanged for a liquid, scaled with T for a vapour (ideal-gas trend).
    """
    T = st.T_K + dh / st.cp if st.cp > 0.0 else st.T_K
    if T <= 0.5 * st.T_K:
        T = st.T_K
    v = st.v * T / st.T_K if phase == "gas" else st.v
    return T, v


def _recuperate(fluid, s, sat_c, sat_e, st2: State, st4: State, exact: bool):
    """Recuperator duty per unit mass [J/kg] and outlet states (2r, 4r) under eps and pinch."""
    dT = s.pinch_recuperator_K
    if st4.T_K <= st2.T_K + dT:
        return 0.0, st2, st4, False, None
    p_c, p_e = sat_c.p_Pa, sat_e.p_Pa
    # hot side cooled to the cold inlet temperature: the ideal duty (vapour side is C_min)
    h4_at_T2 = fluid.state_pT(p_c, st2.T_K, "gas").h if st2.T_K > sat_c.T_K + 1e-6 else sat_c.hV
    q = s.recuperator_effectiveness * (st4.h - max(h4_at_T2, sat_c.hV))
    # cold end: hot outlet at least T2 + pinch, and not below the dew point (no condensing here)
    T4r_min = st2.T_K + dT
    h4r_min = fluid.state_pT(p_c, T4r_min, "gas").h if T4r_min > sat_c.T_K else sat_c.hV
    q = min(q, st4.h - max(h4r_min, sat_c.hV))
    # hot end: cold outlet at most T4 - pinch, and still liquid (no boiling in the recuperator)
    T2r_max = st4.T_K - dT
    h2r_max = fluid.state_pT(p_e, T2r_max, "liquid").h if T2r_max < sat_e.T_K else sat_e.hL
    q = min(q, min(h2r_max, sat_e.hL) - st2.h)
    if q <= 0.0:
        return 0.0, st2, st4, False, None
    st2r = _flash_ph(fluid, p_e, st2.h + q, "liquid", st2)
    st4r = _state_from_ph(fluid, sat_c, st4.h - q, st4)
    if exact:
        n = s.n_zone_segments
        prof = _recuperator_profile(fluid, sat_c, p_e, st2, st4, q, n)
        if prof.min_approach_K < dT - 1e-9:
            # an interior pinch: shrink the duty until the discretised profile respects it
            lo, hi = 0.0, 1.0
            for _ in range(50):
                mid = 0.5 * (lo + hi)
                if _recuperator_profile(fluid, sat_c, p_e, st2, st4, q * mid, n).min_approach_K >= dT:
                    lo = mid
                else:
                    hi = mid
            q *= lo
            if q <= 0.0:
                return 0.0, st2, st4, False, None
            st2r = _flash_ph(fluid, p_e, st2.h + q, "liquid", st2)
            st4r = _state_from_ph(fluid, sat_c, st4.h - q, st4)
            prof = _recuperator_profile(fluid, sat_c, p_e, st2, st4, q, n)
        return q, st2r, st4r, True, prof
    return q, st2r, st4r, True, None


def _recuperator_profile(fluid, sat_c, p_e_Pa, st2, st4, q, n) -> Profile:
    frac = np.linspace(0.0, 1.0, n + 1)
    h_cold = st2.h + frac * q
    h_hot = st4.h - q + frac * q
    T_cold = _isobar_temperatures(fluid, p_e_Pa, h_cold, st2, "liquid")
    T_hot = _isobar_temperatures(fluid, sat_c.p_Pa, h_hot[::-1], st4, "gas")[::-1]
    return Profile(frac * q, T_hot, T_cold)


def _isobar_temperatures(fluid: Fluid, p_Pa: float, h: np.ndarray, start: State, phase: str) -> np.ndarray:
    """Temperatures [K] at enthalpies h along one single-phase isobar, starting next to state start.

    Each point's flash starts from the previous point's temperature plus dh/cp.
    """
    T = np.empty(len(h))
    prev = start
    for i, hi in enumerate(h):
        prev = _flash_ph(fluid, p_Pa, float(hi), phase, prev)
        T[i] = prev.T_K
    return T


def _cold_side(fluid: Fluid, s: CycleSettings, recuperated: bool, sat_e, st3: State, T_cond_K: float, exact: bool) -> _ColdSide:
    sat_c = fluid.sat_T(T_cond_K)
    p_c, p_e = sat_c.p_Pa, sat_e.p_Pa
    if s.subcooling_K > 0.0:
        st1 = fluid.state_pT(p_c, T_cond_K - s.subcooling_K, "liquid")
    else:
        st1 = State(T_cond_K, p_c, sat_c.hL, sat_c.sL, sat_c.vL, 0.0)
    st2s = fluid.state_ps(p_e, st1.s, "liquid", st1.T_K, st1.v)
    h2 = st1.h + (st2s.h - st1.h) / s.pump_efficiency
    st2 = _flash_ph(fluid, p_e, h2, "liquid", st2s)
    # isentropic expansion to the condensing pressure
    if st3.s <= sat_c.sV:
        q4s = (st3.s - sat_c.sL) / (sat_c.sV - sat_c.sL)
        st4s = _two_phase_state(sat_c, T_cond_K, q4s)
    else:
        st4s = _superheated_ps(fluid, sat_c, st3.s)
    dh_s = st3.h - st4s.h
    eta_t = s.turbine.efficiency(math.nan, st4s.v / st3.v)
    h4 = st3.h - eta_t * dh_s
    st4 = _state_from_ph(fluid, sat_c, h4, st4s if h4 > sat_c.hV and math.isnan(st4s.q) else None)
    if recuperated:
        q_rec, st2r, st4r, active, rec_prof = _recuperate(fluid, s, sat_c, sat_e, st2, st4, exact)
    else:
        q_rec, st2r, st4r, active, rec_prof = 0.0, st2, st4, False, None
    return _ColdSide(T_cond_K, p_c, sat_c, st1, st2, st4s.h, st4s.v, st4s.T_K, st4s.q, st4, eta_t, st2r, st4r, q_rec, active, rec_prof)


def _add_zone(fluid: Fluid, p_Pa: float, T_a: float, T_b: float, n: int, phase: str, label: str, h: list, T: list, labels: list) -> None:
    """Append the n - 1 interior points of a single-phase zone from T_a to T_b [K] on one isobar."""
    Tz = np.linspace(T_a, T_b, n + 1)[1:-1]
    h.extend(fluid.h_pT_array(p_Pa, Tz, phase))
    T.extend(Tz)
    labels.extend([label] * len(Tz))


def _condenser_wf_path(fluid: Fluid, cs: _ColdSide, n: int, exact: bool) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """Working-fluid enthalpy and temperature points on the condenser path, cold end first."""
    sat = cs.sat
    h1, h_in = cs.s1.h, cs.s4r.h
    pts_h = [h1]
    pts_T = [cs.s1.T_K]
    labels = ["cold end"]
    if cs.s1.h < sat.hL - 1e-9:  # subcooled liquid zone
        if exact:
            _add_zone(fluid, sat.p_Pa, cs.s1.T_K, sat.T_K, n, "liquid", "subcooling zone", pts_h, pts_T, labels)
        pts_h.append(sat.hL)
        pts_T.append(sat.T_K)
        labels.append("bubble point")
    h_dew = min(sat.hV, h_in)
    pts_h.append(h_dew)
    pts_T.append(sat.T_K)
    labels.append("dew point")
    if h_in > sat.hV + 1e-9:
        if exact:
            _add_zone(fluid, sat.p_Pa, sat.T_K, cs.s4r.T_K, n, "gas", "desuperheating zone", pts_h, pts_T, labels)
        pts_h.append(h_in)
        pts_T.append(cs.s4r.T_K)
        labels.append("hot end")
    return np.array(pts_h), np.array(pts_T), labels


def _condenser_approach(fluid, sink, cs: _ColdSide, n: int, exact: bool):
    """Minimum working fluid - sink temperature difference [K] and where it occurs.

    The exact (discretised) result is kept on the cold side, so the reported profile is the
    one that was checked.
    """
    if exact and cs.cond_check is not None:
        return cs.cond_check
    h, T, labels = _condenser_wf_path(fluid, cs, n, exact)
    frac = (h - h[0]) / (h[-1] - h[0])
    hs_in = sink.h_in_J_kg
    hs_out = sink.h_J_kg(sink.T_out_K)
    T_sink = sink.T_K(hs_in + frac * (hs_out - hs_in))
    dT = T - T_sink
    j = int(np.argmin(dT))
    out = float(dT[j]), labels[j], (h, T, T_sink)
    if exact:
        cs.cond_check = out
    return out


#: Tolerance [K] on the condensing temperature of the closed-form (fast) model.
COND_TOL_FAST_K = 2e-4


def _solve_condenser(fluid, sink, s, recuperated, sat_e, st3, exact, T_guess_K=None, tol_K=COND_TOL_FAST_K) -> _ColdSide:
    """Lowest condensing temperature that keeps the condenser pinch (fixed-point with secant)."""
    dT_pinch = s.pinch_condenser_K
    T_floor = sink.T_in_K + dT_pinch + s.subcooling_K
    if s.min_condensing_pressure_Pa is not None:
        T_floor = max(T_floor, fluid.T_sat_floor_K(s.min_condensing_pressure_Pa))
    T_floor = max(T_floor, fluid.T_min_K + s.subcooling_K + 0.01)
    if T_floor >= sat_e.T_K:
        raise CycleInfeasible(
            "sink", f"the condensing temperature would be {_C(T_floor)}, not below the evaporation temperature {_C(sat_e.T_K)}"
        )
    T = T_guess_K if T_guess_K is not None else sink.T_out_K + dT_pinch
    T = max(T, T_floor)
    if exact:
        # converge on the closed-form candidates first, then on the discretised profile
        T = _condenser_iterations(fluid, sink, s, recuperated, sat_e, st3, T, T_floor, False, 1e-9).T_cond_K
        return _condenser_iterations(fluid, sink, s, recuperated, sat_e, st3, T, T_floor, True, 1e-9)
    return _condenser_iterations(fluid, sink, s, recuperated, sat_e, st3, T, T_floor, False, tol_K)


def _condenser_iterations(fluid, sink, s, recuperated, sat_e, st3, T, T_floor, exact, tol) -> _ColdSide:
    """Secant iterations on r(T_cond) = min approach - pinch, which increases with T_cond."""
    dT_pinch = s.pinch_condenser_K
    n = s.n_zone_segments
    prev = None
    for _ in range(60):
        if T >= sat_e.T_K:
            raise CycleInfeasible("sink", f"the sink and its pinch need a condensing temperature at or above the evaporation temperature {_C(sat_e.T_K)}")
        cs = _cold_side(fluid, s, recuperated, sat_e, st3, T, exact)
        approach, _, _ = _condenser_approach(fluid, sink, cs, n, exact)
        # residual r(T) = approach - pinch, increasing in T with slope close to 1
        r = approach - dT_pinch
        if abs(r) < tol or (r > 0 and T <= T_floor + 1e-12):
            return cs
        if prev is not None and prev[1] != r:
            slope = (r - prev[1]) / (T - prev[0])
            slope = min(max(slope, 0.5), 1.5)
        else:
            slope = 1.0
        prev = (T, r)
        T = max(T - r / slope, T_floor)
    raise CycleInfeasible("condenser", "the condensing temperature did not converge")


# ---------------------------------------------------------------------------------------------
# evaporator
# ---------------------------------------------------------------------------------------------
def _evaporator_path(fluid, sat_e, st_in: State, st3: State, n: int, exact: bool):
    """Working-fluid heating path (h, T, labels) from the evaporator inlet to the turbine inlet."""
    h = [st_in.h]
    T = [st_in.T_K]
    labels = ["economiser inlet"]
    if exact:
        _add_zone(fluid, sat_e.p_Pa, st_in.T_K, sat_e.T_K, n, "liquid", "economiser", h, T, labels)
    h.append(sat_e.hL)
    T.append(sat_e.T_K)
    labels.append("bubble point")
    h.append(sat_e.hV)
    T.append(sat_e.T_K)
    labels.append("dew point")
    if st3.h > sat_e.hV + 1e-9:
        if exact:
            _add_zone(fluid, sat_e.p_Pa, sat_e.T_K, st3.T_K, n, "gas", "superheater", h, T, labels)
        h.append(st3.h)
        T.append(st3.T_K)
        labels.append("hot end")
    return np.array(h), np.array(T), labels


def _fast_interior_pinch(fluid, source, s, sat_e, st_in: State, st3: State, hs_in: float) -> tuple[float, str]:
    """Closed-form test for a pinch inside the economiser or the superheater (fast mode).

    The flow bound m(T) = N/D, N = m_s (h_s,in - h_s(T + pinch)), D = h3 - h_wf(T), has
    dm/dT of the sign of N cp_wf - m_s cp_s D. If m rises into the bubble point (economiser side)
    or falls away from the dew point (superheater side), a smaller bound lies inside that zone and
    a bounded search finds it; otherwise the zone ends already bound the flow. Costs two (p, T)
    updates when no zone needs the search. Returns (bound [kg/s], zone name), inf if none.
    """
    p, T_e, dT, m_s = sat_e.p_Pa, sat_e.T_K, s.pinch_evaporator_K, source.m_kg_s

    def slope_sign(T, h, cp_wf):
        N = m_s * (hs_in - float(source.h_J_kg(T + dT)))
        return N * cp_wf - m_s * float(source.cp_J_kgK(T + dT)) * (st3.h - h)

    best = (math.inf, "")
    if st_in.T_K < T_e - 1e-6:
        cpL = fluid.state_pT(p, T_e, "liquid").cp
        if slope_sign(T_e, sat_e.hL, cpL) > 0.0:
            m, _, _ = _refine_zone_pinch(fluid, source, s, p, st3.h, hs_in, st_in.T_K, T_e, "liquid", 1e-3)
            best = min(best, (m, "economiser"))
    if st3.T_K > T_e + 1e-6:
        cpV = fluid.state_pT(p, T_e, "gas").cp
        if slope_sign(T_e, sat_e.hV, cpV) < 0.0:
            m, _, _ = _refine_zone_pinch(fluid, source, s, p, st3.h, hs_in, T_e, st3.T_K, "gas", 1e-3)
            best = min(best, (m, "superheater"))
    return best


def _refine_zone_pinch(fluid, source, s, p_Pa, h_out, hs_in, T_a, T_b, phase, xatol_K=1e-5):
    """Pinch-limited flow inside one single-phase zone, between two discretisation points.

    The flow bound m(T) = m_s (h_s,in - h_s(T + pinch)) / (h_out - h_wf(p, T)) is minimised over
    the working-fluid temperature T in [T_a, T_b] by a bounded Brent search (xatol_K [K]; the
    bound is flat at its minimum, so 1e-3 K already gives the flow to about 1e-8).
    Returns (flow [kg/s], T [K], h [J/kg]) at the pinch.
    """
    from scipy.optimize import minimize_scalar

    def bound(T):
        h = fluid.h_pT(p_Pa, T, phase)
        return source.m_kg_s * (hs_in - float(source.h_J_kg(T + s.pinch_evaporator_K))) / (h_out - h)

    res = minimize_scalar(bound, bounds=(float(T_a), float(T_b)), method="bounded", options={"xatol": xatol_K})
    T = float(res.x)
    return float(res.fun), T, fluid.h_pT(p_Pa, T, phase)


def evaluate(
    fluid: Fluid,
    source,
    sink,
    settings: CycleSettings,
    layout: Layout,
    T_evap_K: float,
    superheat_K: float = 0.0,
    exact: bool = True,
    T_cond_guess_K: float | None = None,
    T_cond_K: float | None = None,
    m_wf_kg_s: float | None = None,
    cond_tol_K: float = COND_TOL_FAST_K,
) -> CycleResult:
    """One subcritical cycle at evaporation temperature T_evap_K [K] and superheat_K [K].

    source and sink are stream objects of :mod:`orcscreen.streams` (vectorised h_J_kg(T_K),
    T_K(h_J_kg), attributes T_in_K, m_kg_s, T_out_min_K; sink also T_out_K). Returns a
    :class:`CycleResult`; an infeasible point is a result with the reason, not an exception.
    A property failure raises :class:`orcscreen.properties.PropertyError`.

    For exploring by hand: T_cond_K fixes the condensing temperature (the sink may then be None
    and its pinch is not checked) and m_wf_kg_s fixes the working-fluid flow (the source may then
    be None and its pinch is not checked). cond_tol_K is the tolerance on the condensing
    temperature of the fast model (the exact model always converges to 1e-9 K).
    """
    s = settings
    known = {"T_evap_K": T_evap_K, "superheat_K": superheat_K}
    try:
        return _evaluate(fluid, source, sink, s, layout, T_evap_K, superheat_K, exact, T_cond_guess_K, known, T_cond_K, m_wf_kg_s, cond_tol_K)
    except CycleInfeasible as exc:
        return _infeasible(exc.limit, exc.reason, exc.margin, **known)


def _evaluate(fluid, source, sink, s, layout, T_evap_K, superheat_K, exact, T_cond_guess_K, known, T_cond_fixed_K=None, m_wf_fixed=None, cond_tol_K=COND_TOL_FAST_K) -> CycleResult:
    if T_evap_K >= fluid.T_crit_K:
        raise CycleInfeasible("critical point", f"evaporation temperature {_C(T_evap_K)} is not below the critical temperature of {fluid.name} ({_C(fluid.T_crit_K)})")
    sat_e = fluid.sat_T(T_evap_K)
    p_lim = s.max_evaporation_pressure_Pa(fluid)
    if sat_e.p_Pa > p_lim * (1.0 + 1e-9):
        raise CycleInfeasible("max pressure", f"evaporation pressure {sat_e.p_Pa / 1e5:.2f} bar is above the limit {p_lim / 1e5:.2f} bar")
    T3 = T_evap_K + superheat_K
    if source is not None and T3 > source.T_in_K - s.pinch_evaporator_K + 1e-9:
        raise CycleInfeasible("hot-end approach", f"turbine inlet {_C(T3)} is closer than the evaporator pinch to the source inlet {_C(source.T_in_K)}")
    if s.max_turbine_inlet_temperature_K is not None and T3 > s.max_turbine_inlet_temperature_K + 1e-9:
        raise CycleInfeasible("thermal stability", f"turbine inlet {_C(T3)} is above the thermal-stability limit of {fluid.name} ({_C(s.max_turbine_inlet_temperature_K)})")
    if superheat_K > 1e-12:
        st3 = fluid.state_pT(sat_e.p_Pa, T3, "gas")
    else:
        st3 = State(T_evap_K, sat_e.p_Pa, sat_e.hV, sat_e.sV, sat_e.vV, 1.0)

    if T_cond_fixed_K is None:
        cs = _solve_condenser(fluid, sink, s, layout.recuperator, sat_e, st3, exact, T_cond_guess_K, cond_tol_K)
    else:
        cs = _cold_side(fluid, s, layout.recuperator, sat_e, st3, T_cond_fixed_K, exact)
    known.update(T_cond_K=cs.T_cond_K, p_cond_Pa=cs.p_cond_Pa, p_evap_Pa=sat_e.p_Pa)
    st1, st2, st2r, st4, st4r = cs.s1, cs.s2, cs.s2r, cs.s4, cs.s4r
    if st2r.h > sat_e.hL + 1e-6:  # the recuperator may heat the liquid up to saturation, no further
        raise CycleInfeasible("recuperator", "the recuperator would boil the working fluid")
    if not math.isnan(st4.q) and st4.q < s.min_turbine_outlet_quality:
        raise CycleInfeasible(
            "turbine outlet quality",
            f"turbine outlet quality {st4.q:.3f} is below the limit {s.min_turbine_outlet_quality:.3f} (a wet expansion; superheat may help)",
            st4.q - s.min_turbine_outlet_quality,
        )

    # evaporator: the largest flow that keeps the pinch and the source outlet limit
    n = s.n_zone_segments
    h_path, T_path, labels = _evaporator_path(fluid, sat_e, st2r, st3, n, exact)
    if m_wf_fixed is not None:
        return _fixed_flow_result(fluid, s, layout, sat_e, cs, st3, m_wf_fixed, known)
    hs_in = float(source.h_in_J_kg)
    hs_at = source.h_J_kg(T_path + s.pinch_evaporator_K)
    m_wf, j = max_flow_for_pinch(h_path, T_path, st3.h, hs_in, hs_at, source.m_kg_s)
    location = labels[j]
    if exact:
        # the pinch may lie between two points of a single-phase zone: search between the
        # neighbours of the discrete minimum, inside its zone
        ib, id_ = labels.index("bubble point"), labels.index("dew point")
        zone = (0, ib, "liquid", "economiser") if j <= ib else (id_, len(labels) - 1, "gas", "superheater")
        a, b = max(j - 1, zone[0]), min(j + 1, zone[1])
        if b > a and T_path[b] > T_path[a]:
            m_ref, T_j, h_j = _refine_zone_pinch(fluid, source, s, sat_e.p_Pa, st3.h, hs_in, T_path[a], T_path[b], zone[2])
            if m_ref < m_wf:
                m_wf, location = m_ref, zone[3]
                k = int(np.searchsorted(h_path, h_j))
                h_path = np.insert(h_path, k, h_j)
                T_path = np.insert(T_path, k, T_j)
                labels.insert(k, location)
    else:
        m_int, where = _fast_interior_pinch(fluid, source, s, sat_e, st2r, st3, hs_in)
        if m_int < m_wf:
            m_wf, location = m_int, where
    if source.T_out_min_K is not None:
        m_lim = source.m_kg_s * (hs_in - float(source.h_J_kg(source.T_out_min_K))) / (st3.h - st2r.h)
        if m_lim < m_wf:
            m_wf, location = m_lim, "source outlet limit"
    if not m_wf > 0.0:
        raise CycleInfeasible("evaporator pinch", f"the source is too cold for evaporation at {_C(T_evap_K)} with a {s.pinch_evaporator_K:g} K pinch")

    q_in = st3.h - st2r.h
    Q_in = m_wf * q_in
    hs_out = hs_in - Q_in / source.m_kg_s
    T_s_out = float(source.T_K(hs_out))
    W_t = m_wf * (st3.h - st4.h)
    W_p = m_wf * (st2.h - st1.h)
    Q_out = m_wf * (st4r.h - st1.h)
    W_aux = s.aux_power_per_W_rejected * Q_out
    W_net = s.generator_efficiency * W_t - W_p / s.motor_efficiency - W_aux
    dh_sink = float(sink.h_J_kg(sink.T_out_K) - sink.h_in_J_kg)
    states = _state_table(layout, cs, st3)
    V4s = m_wf * cs.s4s_v
    result = CycleResult(
        status="ok",
        limit=location,
        T_evap_K=T_evap_K,
        p_evap_Pa=sat_e.p_Pa,
        superheat_K=superheat_K,
        T_cond_K=cs.T_cond_K,
        p_cond_Pa=cs.p_cond_Pa,
        states=states,
        m_wf_kg_s=m_wf,
        m_sink_kg_s=Q_out / dh_sink,
        W_turbine_W=W_t,
        W_pump_W=W_p,
        W_aux_W=W_aux,
        W_net_W=W_net,
        Q_in_W=Q_in,
        Q_out_W=Q_out,
        Q_rec_W=m_wf * cs.q_rec,
        T_source_out_K=T_s_out,
        pinch_location=location,
        eta_turbine=cs.eta_t,
        size_parameter_m=size_parameter_m(V4s, st3.h - cs.s4s_h),
        volume_ratio=volume_ratio(cs.s4s_v, st3.v),
        profiles=_profiles(fluid, source, sink, cs, h_path, T_path, m_wf, st3, hs_in, n) if exact else {},
    )
    if W_net <= 0.0:
        return _infeasible("net power", f"net power {W_net / 1e3:.3g} kW is not positive", W_net, **known)
    return result


def _profiles(fluid, source, sink, cs: _ColdSide, h_path, T_path, m_wf, st3, hs_in, n) -> dict[str, Profile]:
    """Discretised T-Q profiles of every exchanger of an evaluated cycle (exact mode)."""
    out = {}
    Q_evap = m_wf * (h_path - h_path[0])
    T_src = source.T_K(hs_in - m_wf * (st3.h - h_path) / source.m_kg_s)
    out["evaporator"] = Profile(Q_evap, np.asarray(T_src, dtype=float), T_path)
    h, T, T_sink = _condenser_approach(fluid, sink, cs, n, True)[2]
    out["condenser"] = Profile(m_wf * (h - h[0]), T, np.asarray(T_sink, dtype=float))
    if cs.recuperator_active:
        prof = cs.rec_profile
        out["recuperator"] = Profile(m_wf * prof.Q_W, prof.T_hot_K, prof.T_cold_K)
    return out


def _state_table(layout: Layout, cs: _ColdSide, st3: State) -> dict[str, State]:
    """The states of a layout in cycle order: 1, 2, (2r), 3, 4, (4r)."""
    if layout.recuperator:
        return {"1": cs.s1, "2": cs.s2, "2r": cs.s2r, "3": st3, "4": cs.s4, "4r": cs.s4r}
    return {"1": cs.s1, "2": cs.s2, "3": st3, "4": cs.s4}


def _fixed_flow_result(fluid, s, layout, sat_e, cs: _ColdSide, st3: State, m_wf: float, known) -> CycleResult:
    """Cycle with a given working-fluid flow and no source or sink streams (exploring by hand)."""
    st1, st2, st2r, st4, st4r = cs.s1, cs.s2, cs.s2r, cs.s4, cs.s4r
    W_t = m_wf * (st3.h - st4.h)
    W_p = m_wf * (st2.h - st1.h)
    Q_out = m_wf * (st4r.h - st1.h)
    W_aux = s.aux_power_per_W_rejected * Q_out
    states = _state_table(layout, cs, st3)
    return CycleResult(
        status="ok",
        T_evap_K=sat_e.T_K,
        p_evap_Pa=sat_e.p_Pa,
        superheat_K=known["superheat_K"],
        T_cond_K=cs.T_cond_K,
        p_cond_Pa=cs.p_cond_Pa,
        states=states,
        m_wf_kg_s=m_wf,
        W_turbine_W=W_t,
        W_pump_W=W_p,
        W_aux_W=W_aux,
        W_net_W=s.generator_efficiency * W_t - W_p / s.motor_efficiency - W_aux,
        Q_in_W=m_wf * (st3.h - st2r.h),
        Q_out_W=Q_out,
        Q_rec_W=m_wf * cs.q_rec,
        eta_turbine=cs.eta_t,
        size_parameter_m=size_parameter_m(m_wf * cs.s4s_v, st3.h - cs.s4s_h),
        volume_ratio=volume_ratio(cs.s4s_v, st3.v),
    )


def _isobar(fluid: Fluid, sat, h_from: float, h_to: float, n: int) -> tuple[list[float], list[float]]:
    """(s, T) points along the isobar of sat's pressure from h_from to h_to (inclusive)."""
    s_pts, T_pts = [], []
    knots = [h_from, h_to]
    for h_edge in (sat.hL, sat.hV):  # put the saturation corners on the path
        if min(h_from, h_to) < h_edge < max(h_from, h_to):
            knots.append(h_edge)
    knots = sorted(knots, reverse=h_from > h_to)
    for a, b in zip(knots[:-1], knots[1:]):
        for h in np.linspace(a, b, n + 1)[:-1]:
            st = _state_from_ph(fluid, sat, float(h))
            s_pts.append(st.s)
            T_pts.append(st.T_K)
    st = _state_from_ph(fluid, sat, h_to)
    s_pts.append(st.s)
    T_pts.append(st.T_K)
    return s_pts, T_pts


def ts_path(fluid: Fluid, r: CycleResult, n: int = 8) -> tuple[list[float], list[float]]:
    """Closed path (s [J/(kg K)], T [K]) of an evaluated cycle through its states along isobars.

    Pump and turbine are drawn as straight lines between their end states.
    """
    st = r.states
    sat_e = fluid.sat_T(r.T_evap_K)
    sat_c = fluid.sat_T(r.T_cond_K)
    s_pts = [st["1"].s]
    T_pts = [st["1"].T_K]
    s_hi, T_hi = _isobar(fluid, sat_e, st["2"].h, st["3"].h, n)
    s_lo, T_lo = _isobar(fluid, sat_c, st["4"].h, st["1"].h, n)
    return s_pts + s_hi + s_lo, T_pts + T_hi + T_lo


def saturation_dome(fluid: Fluid, T_low_K: float, n: int = 60) -> tuple[list[float], list[float], list[float]]:
    """Saturation dome: temperatures [K] and liquid and vapour entropies [J/(kg K)].

    From T_low_K (not below the fluid's lowest temperature) to just below the critical point,
    spaced more densely near the critical point.
    """
    T_lo = max(T_low_K, fluid.T_min_K + 0.01)
    T_top = fluid.T_crit_K * (1.0 - 1e-5)
    u = np.linspace(0.0, 1.0, n)
    T = T_lo + (T_top - T_lo) * (1.0 - (1.0 - u) ** 2)
    T_ok, sL, sV = [], [], []
    for t in T:
        try:
            sat = fluid.sat_T(float(t))
        except PropertyError:  # some equations of state fail very close to the critical point
            continue
        T_ok.append(float(t))
        sL.append(sat.sL)
        sV.append(sat.sV)
    return T_ok, sL, sV
