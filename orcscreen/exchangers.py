"""Counter-current heat exchangers: T-Q profiles and the closure of every exchanger's pinch.

Exchangers work on working-fluid paths (:mod:`orcscreen.paths`: arrays of h and T) and on
profiles (arrays of duty and of hot and cold temperatures at the same duty points), never on the
assumption of isothermal evaporation, so that superheating, temperature glides and transcritical
heating use the same code. This module owns every pinch closure of a cycle:

* heater (evaporator or supercritical heater): the largest working-fluid flow that keeps the
  pinch against the source everywhere and the source outlet limit (:func:`heater_flow`);
* condenser: the lowest condensing temperature that keeps the pinch against the sink
  (:func:`solve_condensing_temperature`);
* recuperator: duty from the effectiveness, cut to keep its pinch (:func:`recuperate`);
* open feed heater: the bled fraction that brings the feed liquid to saturation
  (:func:`open_heater_bleed_fraction`).

Conventions: the duty coordinate Q_W runs from the cold end of the exchanger (0, where the cold
stream enters and the hot stream leaves) to the hot end (the full duty).

Sources:
    Segment-wise logarithmic mean temperature difference for UA of exchangers with phase change:
    Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed.,
    Wiley 2007, section 11.3 (LMTD); applied zone by zone as is common practice for evaporators
    and condensers with phase change.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .brent import minimize_scalar_bounded
from .paths import FluidPath, condensing_path, flash_ph, isobar_temperatures, state_from_ph
from .states import CycleInfeasible, SatPoint, State
from .streams import SMALL_ARRAY

__all__ = [
    "Profile",
    "lmtd_K",
    "ua_W_K",
    "max_flow_for_pinch",
    "refine_zone_pinch",
    "heater_flow",
    "heater_profile",
    "condenser_approach",
    "condenser_points",
    "solve_condensing_temperature",
    "COND_TOL_FAST_K",
    "recuperate",
    "open_heater_bleed_fraction",
    "glide_duty",
    "condensing_glide_duty",
]


@dataclass(frozen=True)
class Profile:
    """T-Q profile of a counter-current exchanger.

    Q_W [W] from the cold end (0) to the duty; T_hot_K and T_cold_K [K] at the same points.
    phase_change_Q_W [W]: where the working fluid changes phase along a glide (a zeotropic
    mixture: from the bubble to the dew point), None for a pure fluid, whose plateau shows it
    (orcscreen.areas names the zones from either).
    """

    Q_W: np.ndarray
    T_hot_K: np.ndarray
    T_cold_K: np.ndarray
    phase_change_Q_W: tuple[float, float] | None = None

    @property
    def duty_W(self) -> float:
        return float(self.Q_W[-1] - self.Q_W[0])

    @property
    def approach_K(self) -> np.ndarray:
        """Local temperature difference T_hot - T_cold [K] at each point."""
        return self.T_hot_K - self.T_cold_K

    @property
    def pinch_index(self) -> int:
        return int(np.argmin(self.approach_K))

    @property
    def min_approach_K(self) -> float:
        """Smallest temperature difference over the discretised profile [K]."""
        return float(np.min(self.approach_K))

    def ua_W_K(self) -> float:
        """UA [W/K] by segment-wise LMTD."""
        return ua_W_K(self)


def lmtd_K(dT_a_K: np.ndarray, dT_b_K: np.ndarray) -> np.ndarray:
    """Logarithmic mean of two terminal temperature differences [K] (Incropera et al., eq. 11.15).

    Equal or nearly equal differences give their arithmetic mean (the limit of the formula).
    """
    a = np.asarray(dT_a_K, dtype=float)
    b = np.asarray(dT_b_K, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = a / b
        out = np.where(np.abs(ratio - 1.0) < 1e-6, 0.5 * (a + b), (a - b) / np.log(ratio))
    return out


def ua_W_K(profile: Profile) -> float:
    """Overall conductance UA [W/K] = sum of dQ_i / LMTD_i over the profile's segments.

    Returns inf if any local temperature difference is not positive (a pinch of zero).
    """
    dT = profile.approach_K
    if np.any(dT <= 0.0):
        return float("inf")
    dQ = np.diff(profile.Q_W)
    return float(np.sum(dQ / lmtd_K(dT[:-1], dT[1:])))


def max_flow_for_pinch(
    h_wf_J_kg: np.ndarray,
    T_wf_K: np.ndarray,
    h_wf_out_J_kg: float,
    h_source_in_J_kg: float,
    h_source_at_J_kg: np.ndarray,
    m_source_kg_s: float,
) -> tuple[float, int]:
    """Largest working-fluid flow [kg/s] for which the source stays pinch K above every point.

    For each point j of the working-fluid heating path (enthalpy h_j, temperature T_j), the
    source has released m_wf (h_out - h_j) from the hot end; it must still be at least
    T_j + pinch, i.e. hold enthalpy h_source_at_j = h_s(T_j + pinch):

        m_wf <= m_s (h_s,in - h_s(T_j + pinch)) / (h_out - h_j).

    h_source_at_J_kg holds h_s(T_j + pinch) for each point (the caller applies the pinch).
    Returns the smallest bound and the index of the point that sets it (the pinch point). Points
    with h_j >= h_out (the hot end) carry no bound on the flow; a point with a source too cold
    gives a bound <= 0.
    """
    bounds = flow_bounds(h_wf_J_kg, h_wf_out_J_kg, h_source_in_J_kg, h_source_at_J_kg, m_source_kg_s)
    j = int(bounds.argmin())
    return float(bounds[j]), j


def flow_bounds(h_wf_J_kg, h_wf_out_J_kg: float, h_source_in_J_kg: float, h_source_at_J_kg, m_source_kg_s: float) -> np.ndarray:
    """The flow bound [kg/s] of every point of a heating path (see :func:`max_flow_for_pinch`;
    inf at points with no heat left to take)."""
    h = np.asarray(h_wf_J_kg, dtype=float)
    floor = 1e-9 * max(abs(h_wf_out_J_kg), 1.0)
    if h.ndim == 1 and h.size <= SMALL_ARRAY:  # the same arithmetic in Python floats (streams.SMALL_ARRAY)
        return np.array([m_source_kg_s * (h_source_in_J_kg - hs) / dh if dh > floor else math.inf
                         for dh, hs in zip([h_wf_out_J_kg - x for x in h.tolist()], np.asarray(h_source_at_J_kg, dtype=float).tolist())])
    dh = h_wf_out_J_kg - h
    usable = dh > floor
    bounds = np.full(h.shape, np.inf)
    bounds[usable] = m_source_kg_s * (h_source_in_J_kg - np.asarray(h_source_at_J_kg)[usable]) / dh[usable]
    return bounds


def _C(T_K: float) -> str:
    return f"{T_K - 273.15:.1f} °C"


# ---------------------------------------------------------------------------------------------
# heater: pinch-limited working-fluid flow
# ---------------------------------------------------------------------------------------------
#: The heater's binding limit where the source leaves at its lowest outlet temperature (the
#: pinch location heater_flow returns then; the optimiser reads it).
SOURCE_OUTLET_LIMIT = "source outlet limit"


def refine_zone_pinch(h_of_T, source, pinch_K, h_out, hs_in, T_a, T_b, xatol_K=1e-5):
    """Pinch-limited flow inside one zone of a heating path, between two discretisation points.

    The flow bound m(T) = m_s (h_s,in - h_s(T + pinch)) / (h_out - h_wf(T)) is minimised over
    the working-fluid temperature T in [T_a, T_b] by a bounded Brent search (xatol_K [K]; the
    bound is flat at its minimum, so 1e-3 K already gives the flow to about 1e-8); h_wf comes
    from the zone's h_of_T. Returns (flow [kg/s], T [K], h [J/kg]) at the pinch.
    """
    def bound(T):
        h = h_of_T(T)
        return source.m_kg_s * (hs_in - float(source.h_J_kg(T + pinch_K))) / (h_out - h)

    res = minimize_scalar_bounded(bound, (float(T_a), float(T_b)), xatol=xatol_K)
    T = float(res.x)
    return float(res.fun), T, h_of_T(T)


def heater_flow(path: FluidPath, h_out: float, source, pinch_K: float, exact: bool,
                fast_interior: Callable[[], tuple[float, str]] | None = None, xatol_fast_K: float = 1e-3,
                fast_parabola: bool = False):
    """Largest working-fluid flow [kg/s] through a heater, where it binds, and the path checked.

    path: the working fluid's heating path, inlet first; h_out [J/kg]: its outlet enthalpy. The
    flow keeps the source at least pinch_K above every point of the path and, when the source
    has one, its outlet at or above its limit. Between two points of a zone the pinch is
    searched (:func:`refine_zone_pinch`) around the discrete minimum: to 1e-5 K when exact (and
    the pinch point is added to the returned path), else by fast_interior() when the layout
    gives one (a cheaper test; returns (bound, zone name)), else, with fast_parabola, at the
    vertex of the bound's parabola through the discrete minimum and its neighbours (for a path
    whose points follow the curve closely), else to xatol_fast_K (the closed-form models of the
    search; the discretised model decides what is reported).
    Returns (flow, pinch location, path); raises :class:`CycleInfeasible` when no flow is possible.
    """
    hs_in = float(source.h_in_J_kg)
    hs_at = source.h_J_kg(path.T_K + pinch_K)
    bounds = flow_bounds(path.h, h_out, hs_in, hs_at, source.m_kg_s)
    j = int(bounds.argmin())
    m_wf = float(bounds[j])
    location = path.labels[j]
    if not exact and fast_interior is None and fast_parabola:
        # closed-form model without a test of its own: the bound's parabola through the discrete
        # minimum and its neighbours, checked at its vertex (one more point)
        zone = path.zone_at(j)
        if zone is not None:
            m_int = _parabolic_pinch(zone, path.T_K, bounds, j, source, pinch_K, h_out, hs_in)
            if m_int < m_wf:
                m_wf, location = m_int, zone.name
    elif exact or fast_interior is None:
        # the pinch may lie between two points of a single-phase zone: search between the
        # neighbours of the discrete minimum, inside its zone
        zone = path.zone_at(j)
        if zone is not None:
            a, b = max(j - 1, zone.first), min(j + 1, zone.last)
            if b > a and path.T_K[b] > path.T_K[a]:
                m_ref, T_j, h_j = refine_zone_pinch(zone.h_of_T, source, pinch_K, h_out, hs_in, path.T_K[a], path.T_K[b],
                                                    1e-5 if exact else xatol_fast_K)
                if m_ref < m_wf:
                    m_wf, location = m_ref, zone.name
                    if exact:
                        path = path.with_point(h_j, T_j, location)
    else:
        m_int, where = fast_interior()
        if m_int < m_wf:
            m_wf, location = m_int, where
    if source.T_out_min_K is not None:
        m_lim = source.m_kg_s * (hs_in - float(source.h_J_kg(source.T_out_min_K))) / (h_out - path.h[0])
        if m_lim < m_wf:
            m_wf, location = m_lim, SOURCE_OUTLET_LIMIT
    return m_wf, location, path


def _parabolic_pinch(zone, T, bounds, j, source, pinch_K, h_out, hs_in) -> float:
    """The flow bound at the vertex of the parabola through three points of the zone around the
    discrete minimum j (inf when the vertex falls outside them or no parabola opens upwards)."""
    i = min(max(j - 1, zone.first), zone.last - 2)
    if i < zone.first or i + 2 > zone.last:
        return math.inf
    (x0, x1, x2), (y0, y1, y2) = (float(T[i]), float(T[i + 1]), float(T[i + 2])), (bounds[i], bounds[i + 1], bounds[i + 2])
    if not (math.isfinite(y0) and math.isfinite(y1) and math.isfinite(y2)) or not x0 < x1 < x2:
        return math.inf
    d = (x1 - x0) * (y1 - y2) - (x1 - x2) * (y1 - y0)
    if d == 0.0:
        return math.inf
    x = x1 - 0.5 * ((x1 - x0) ** 2 * (y1 - y2) - (x1 - x2) ** 2 * (y1 - y0)) / d
    if not x0 < x < x2:
        return math.inf
    return source.m_kg_s * (hs_in - float(source.h_J_kg(x + pinch_K))) / (h_out - zone.h_of_T(x))


def heater_profile(path: FluidPath, m_wf: float, h_out: float, source) -> Profile:
    """T-Q profile of a heater: working-fluid path (per kg) at flow m_wf [kg/s] against the source."""
    hs_in = float(source.h_in_J_kg)
    Q = m_wf * (path.h - path.h[0])
    T_src = source.T_K(hs_in - m_wf * (h_out - path.h) / source.m_kg_s)
    return Profile(Q, np.asarray(T_src, dtype=float), path.T_K, glide_duty(path.labels, Q, path.T_K))


def condensing_glide_duty(sat: SatPoint, h: np.ndarray, m_kg_s: float) -> tuple[float, float] | None:
    """(duty at the bubble point, duty at the dew point or the wet inlet) [W] of a condenser whose
    working fluid (flow m_kg_s, enthalpies h from the cold end [J/kg]) glides at saturation sat;
    None for a pure fluid (its plateau shows the zones)."""
    if sat.glide_K <= 0.0:
        return None
    return m_kg_s * max(sat.hL - h[0], 0.0), m_kg_s * (min(sat.hV, h[-1]) - h[0])


def glide_duty(labels, Q_W, T_K) -> tuple[float, float] | None:
    """(duty at the bubble point, duty at the dew point) [W] of a path with a glide (its dew point
    hotter than its bubble point), from its labelled points; None otherwise (a pure fluid)."""
    if "bubble point" not in labels or "dew point" not in labels:
        return None
    ib, id_ = labels.index("bubble point"), labels.index("dew point")
    if not T_K[id_] > T_K[ib] + 1e-9:
        return None
    return float(Q_W[ib]), float(Q_W[id_])


# ---------------------------------------------------------------------------------------------
# condenser: lowest condensing temperature against the sink
# ---------------------------------------------------------------------------------------------
#: Tolerance [K] on the condensing temperature of the closed-form (fast) model.
COND_TOL_FAST_K = 2e-4


def condenser_approach(fluid, sink, cs, n: int, exact: bool):
    """Minimum working fluid - sink temperature difference [K], where it occurs, and the points.

    cs is a layout's cold side at one condensing temperature: it has sat (saturation at the
    condensing pressure), s1 (condenser outlet), condenser_inlet and a cond_check slot, where
    the exact (discretised) result is kept, so the reported profile is the one that was checked.
    Returns (approach [K], location, (h, T_wf, T_sink) arrays).
    """
    if exact and cs.cond_check is not None:
        return cs.cond_check
    path = condensing_path(fluid, cs.sat, cs.s1, cs.condenser_inlet, n, exact)
    if not exact and path.h.size <= SMALL_ARRAY:
        return _condenser_approach_fast(path, sink)
    h, T, T_sink = _against_sink(path, sink)
    dT = T - T_sink
    j = int(dT.argmin())
    out = float(dT[j]), path.labels[j], (h, T, T_sink)
    if exact:
        cs.cond_check = out
    return out


def _condenser_approach_fast(path: FluidPath, sink):
    """condenser_approach on a short condensing path (the closed-form model's 3-4 corners) in
    Python floats: the same arithmetic as _against_sink, without numpy's per-call overhead."""
    h, T = path.h.tolist(), path.T_K.tolist()
    h0, span = h[0], h[-1] - h[0]
    hs_in = sink.h_in_J_kg
    rise = sink.h_out_J_kg - hs_in
    T_sink = [sink.T_K(hs_in + (x - h0) / span * rise) for x in h]
    dT = [a - b for a, b in zip(T, T_sink)]
    j = min(range(len(dT)), key=dT.__getitem__)
    return dT[j], path.labels[j], (path.h, path.T_K, np.array(T_sink))


def condenser_points(fluid, sink, cs, n: int, exact: bool):
    """(h [J/kg], T_wf [K], T_sink [K], labels) along the condenser of cold side cs, from its cold
    end: the condensing path (n segments per single-phase zone when exact) against the sink,
    whose enthalpy rises in proportion to the duty."""
    path = condensing_path(fluid, cs.sat, cs.s1, cs.condenser_inlet, n, exact)
    return (*_against_sink(path, sink), path.labels)


def _against_sink(path: FluidPath, sink):
    """(h [J/kg], T_wf [K], T_sink [K]) of a condensing path against the sink, whose enthalpy
    rises in proportion to the duty."""
    h, T = path.h, path.T_K
    frac = (h - h[0]) / (h[-1] - h[0])
    hs_in = sink.h_in_J_kg
    return h, T, sink.T_K(hs_in + frac * (sink.h_out_J_kg - hs_in))


def solve_condensing_temperature(fluid, sink, cold_side, pinch_K: float, T_floor_K: float, T_ceiling_K: float,
                                 n: int, exact: bool, T_guess_K: float | None = None, tol_K: float = COND_TOL_FAST_K,
                                 ceiling_what: str = "the evaporation temperature"):
    """Lowest condensing temperature [K] that keeps the condenser pinch; returns that cold side.

    cold_side(T_cond_K, exact) builds a layout's cold side (condenser outlet, pumps, expansion,
    recuperator...) at one condensing temperature. The sink rises by a fixed amount, so the
    residual r(T) = min approach - pinch increases with T_cond with a slope close to 1: secant
    (fixed-point) iterations from T_guess_K, never below T_floor_K and only below T_ceiling_K
    (the evaporation temperature, or the critical temperature above which nothing condenses).
    exact: converge on the closed-form candidates first (to 1e-9 K), then on the discretised
    profile; else on the candidates to tol_K. ceiling_what names the ceiling in the reasons.
    """
    if T_floor_K >= T_ceiling_K:
        raise CycleInfeasible("sink", f"the condensing temperature would be {_C(T_floor_K)}, not below {ceiling_what} {_C(T_ceiling_K)}")
    T = T_guess_K if T_guess_K is not None and math.isfinite(T_guess_K) else sink.T_out_K + pinch_K
    T = max(T, T_floor_K)
    args = (fluid, sink, cold_side, pinch_K, T_floor_K, T_ceiling_K, ceiling_what, n)
    if exact:
        T = _condenser_iterations(*args, T, False, 1e-9).T_cond_K
        return _condenser_iterations(*args, T, True, 1e-9)
    return _condenser_iterations(*args, T, False, tol_K)


def _condenser_iterations(fluid, sink, cold_side, pinch_K, T_floor, T_ceiling, ceiling_what, n, T, exact, tol):
    """Secant iterations on r(T_cond) = min approach - pinch, which increases with T_cond."""
    prev = None
    for _ in range(60):
        if T >= T_ceiling:
            raise CycleInfeasible("sink", f"the sink and its pinch need a condensing temperature at or above {ceiling_what} {_C(T_ceiling)}")
        cs = cold_side(T, exact)
        approach, _, _ = condenser_approach(fluid, sink, cs, n, exact)
        r = approach - pinch_K
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
# recuperator and open feed heater
# ---------------------------------------------------------------------------------------------
def recuperate(fluid, sat_c: SatPoint, p_cold_Pa: float, st2: State, st4: State, pinch_K: float, effectiveness: float,
               n: int, exact: bool, cold_sat: SatPoint | None):
    """Recuperator duty per unit mass [J/kg] and outlet states (2r, 4r) under its effectiveness and pinch.

    Hot side: the turbine outlet st4 on the condensing isobar (sat_c), kept vapour. Cold side: the
    pump outlet st2 at p_cold_Pa; below the critical pressure (cold_sat, its saturation) it stays
    liquid (at most saturated), above it (cold_sat None) it may pass the pseudo-critical region.
    Duty eps * (h4 - h(p4, T2)) (the vapour side has the smaller capacity), cut so that both ends
    keep the pinch and, exact, so that the discretised profile does too.
    Returns (q, st2r, st4r, active, profile per kg or None).
    """
    dT = pinch_K
    if st4.T_K <= st2.T_K + dT:
        return 0.0, st2, st4, False, None
    p_c, p_e = sat_c.p_Pa, p_cold_Pa
    # hot side cooled to the cold inlet temperature: the ideal duty (vapour side is C_min)
    h4_at_T2 = fluid.state_pT(p_c, st2.T_K, "gas").h if st2.T_K > sat_c.T_dew_K + 1e-6 else sat_c.hV
    q = effectiveness * (st4.h - max(h4_at_T2, sat_c.hV))
    # cold end: hot outlet at least T2 + pinch, and not below the dew point (no condensing here)
    T4r_min = st2.T_K + dT
    h4r_min = fluid.state_pT(p_c, T4r_min, "gas").h if T4r_min > sat_c.T_dew_K else sat_c.hV
    q = min(q, st4.h - max(h4r_min, sat_c.hV))
    # hot end: cold outlet at most T4 - pinch, and below the critical pressure still liquid
    T2r_max = st4.T_K - dT
    if cold_sat is not None:
        h2r_max = fluid.state_pT(p_e, T2r_max, "liquid").h if T2r_max < cold_sat.T_K else cold_sat.hL
        q = min(q, min(h2r_max, cold_sat.hL) - st2.h)
    else:
        q = min(q, fluid.state_pT(p_e, T2r_max).h - st2.h)
    if q <= 0.0:
        return 0.0, st2, st4, False, None
    cold = _cold_outlet(fluid, p_e, st2, cold_sat)
    st2r = cold(q)
    st4r = state_from_ph(fluid, sat_c, st4.h - q, st4)
    if exact:
        prof = _recuperator_profile(fluid, sat_c, p_e, st2, st4, q, n, cold_sat)
        if prof.min_approach_K < dT - 1e-9:
            # an interior pinch: shrink the duty until the discretised profile respects it
            lo, hi = 0.0, 1.0
            for _ in range(50):
                mid = 0.5 * (lo + hi)
                if _recuperator_profile(fluid, sat_c, p_e, st2, st4, q * mid, n, cold_sat).min_approach_K >= dT:
                    lo = mid
                else:
                    hi = mid
            q *= lo
            if q <= 0.0:
                return 0.0, st2, st4, False, None
            st2r = cold(q)
            st4r = state_from_ph(fluid, sat_c, st4.h - q, st4)
            prof = _recuperator_profile(fluid, sat_c, p_e, st2, st4, q, n, cold_sat)
        return q, st2r, st4r, True, prof
    return q, st2r, st4r, True, None


def _cold_outlet(fluid, p_Pa: float, st2: State, cold_sat: SatPoint | None):
    """State of the recuperator's cold side after taking q [J/kg]: a phase-imposed liquid flash
    below the critical pressure, the general flash above it (the phase changes on the way)."""
    if cold_sat is not None:
        return lambda q: flash_ph(fluid, p_Pa, st2.h + q, "liquid", st2)
    return lambda q: fluid.state_ph(p_Pa, st2.h + q)


def _recuperator_profile(fluid, sat_c, p_e_Pa, st2, st4, q, n, cold_sat) -> Profile:
    frac = np.linspace(0.0, 1.0, n + 1)
    h_cold = st2.h + frac * q
    h_hot = st4.h - q + frac * q
    if cold_sat is not None:
        T_cold = isobar_temperatures(fluid, p_e_Pa, h_cold, st2, "liquid")
    else:
        T_cold = np.array([fluid.state_ph(p_e_Pa, float(h)).T_K for h in h_cold])
    T_hot = isobar_temperatures(fluid, sat_c.p_Pa, h_hot[::-1], st4, "gas")[::-1]
    return Profile(frac * q, T_hot, T_cold)


def open_heater_bleed_fraction(h_feed_in: float, h_bleed: float, h_out: float) -> float:
    """Bled fraction y [-] of the flow leaving an open feed heater (a mixing chamber).

    Energy balance of the adiabatic mixing of y kg of bled vapour (h_bleed [J/kg]) with 1 - y kg
    of feed liquid (h_feed_in) into 1 kg leaving at h_out (saturated liquid at the bleed
    pressure): y = (h_out - h_feed_in) / (h_bleed - h_feed_in) (e.g. Moran, Shapiro, Boettner,
    Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed., section 8.4.1).
    """
    if not h_bleed > h_out > h_feed_in - 1e-9:
        raise CycleInfeasible("feed heater", "the bled vapour cannot bring the feed liquid to saturation")
    return (h_out - h_feed_in) / (h_bleed - h_feed_in)
