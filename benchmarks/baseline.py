"""A straightforward baseline of orcscreen's subcritical cycle model, written by hand.

This is what a competent engineer writes in an afternoon to answer the same question, and the
yardstick of ``bench_baseline.py``: same model as DESIGN section 3 and ``orcscreen/cycles/subcritical.py``,
none of orcscreen's numerics. It is the one place outside ``orcscreen/properties.py`` that
imports CoolProp, on purpose: every property comes from CoolProp's high-level ``PropsSI``
(string parsing and a fresh state on every call), with the default HEOS backend.

Model (one cycle at a given evaporation temperature T_evap, fixed superheat):

* limits: T_evap below the critical temperature; p_evap <= min(p_max, r_max p_crit); turbine
  inlet at least the evaporator pinch below the source inlet, and not above the fluid's
  thermal-stability limit;
* pump h2 = h1 + (h2s - h1)/eta_pump; turbine h4 = h3 - eta_turbine (h3 - h4s); state 1 saturated
  liquid at T_cond (minus the subcooling), state 3 saturated vapour (plus the superheat);
* recuperator (recuperated layout, only when T4 > T2 + pinch): duty eps (h4 - h(p_cond, T2)) with
  the hot side not below its dew point, cut so that the hot outlet stays >= T2 + pinch and the
  cold outlet <= T4 - pinch and not above the bubble point; then checked on a 50-segment
  profile and cut further (Brent's root finder) if an interior point comes closer than the pinch;
* condenser: the lowest T_cond whose 51-point profile (50 segments over desuperheating,
  condensation, subcooling; a knot at the dew and bubble points) keeps the working fluid
  >= pinch above the sink at every point, the sink heated linearly in enthalpy by its fixed
  rise; T_cond by Brent's root finder (scipy ``brentq``) on min approach - pinch from the floor
  T_sink,in + pinch (+ subcooling, and the minimum condensing pressure if set);
* turbine outlet quality >= x_min where the outlet is two-phase;
* evaporator: the largest m_wf with the source >= working fluid + pinch at all 51 points of
  the heating path (50 segments over economiser, evaporation, superheater; a knot at the bubble
  and dew points), i.e. the smallest m_s (h_s,in - h_s(T_j + pinch)) / (h3 - h_j); and the source
  outlet not below its minimum;
* W_net = eta_gen W_t - W_p / eta_motor - aux Q_out.

Optimisation: a coarse uniform scan of the evaporation temperature (default 10 points) over the
same window as orcscreen (``orcscreen.cycles.subcritical.evaporation_window``, passed in by the caller),
then ``scipy.optimize.minimize_scalar(method="bounded")`` between the neighbours of the best
scan point, infeasible points penalised with a large value; the better of the scan's best and
Brent's answer is kept. Bounded Brent alone on the whole window can stop in the wrong branch of
a kinked objective (bubble-point pinch, quality limit), hence the scan.

Restriction: hot-water sources (``source.kind = "water"``) and cooling-water sinks
(``sink.kind = "water"``), both IAPWS-95 through PropsSI "Water"; fixed superheat (not
"optimise"). Other cases raise :class:`Unsupported`.

Sources: the model is the standard vapour power cycle with isentropic efficiencies (Moran,
Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed., Wiley 2014,
ch. 8); the pinch-limited flow is common practice for heat-recovery cycles; properties from
CoolProp (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498); Brent's methods as in SciPy.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from CoolProp.CoolProp import PropsSI as _PropsSI
from scipy.optimize import brentq, minimize_scalar

N_SEGMENTS = 50
N_SCAN = 10
XATOL_K = 0.01
T_COND_XTOL_K = 1e-6
PENALTY = 1e30


class Unsupported(ValueError):
    """A case outside the baseline's scope (not a hot-water source and water sink, or optimised superheat)."""


class Infeasible(Exception):
    def __init__(self, limit: str, reason: str):
        super().__init__(reason)
        self.limit = limit
        self.reason = reason


#: Number of PropsSI calls so far (the benchmark reports calls per evaluation).
CALLS = [0]


def PropsSI(*args):
    CALLS[0] += 1
    return _PropsSI(*args)


@dataclass(frozen=True)
class Inputs:
    """Everything one baseline case needs, SI units."""

    fluid: str
    recuperated: bool
    T_source_in_K: float
    m_source_kg_s: float
    p_source_Pa: float
    T_source_out_min_K: float | None
    T_sink_in_K: float
    sink_rise_K: float
    p_sink_Pa: float
    aux_per_W_rejected: float
    pinch_evaporator_K: float
    pinch_condenser_K: float
    pinch_recuperator_K: float
    recuperator_effectiveness: float
    eta_turbine: float
    eta_pump: float
    eta_generator: float
    eta_motor: float
    max_pressure_Pa: float | None
    max_reduced_pressure: float
    min_turbine_outlet_quality: float
    min_condensing_pressure_Pa: float | None
    subcooling_K: float
    superheat_K: float
    max_turbine_inlet_K: float | None


def _aux_per_W_rejected(snk: dict) -> float:
    """Cooling-water pump power per W rejected: a fixed fraction when the case gives one, else
    g H / eta per kg of water over the water's enthalpy rise (PropsSI)."""
    if snk.get("aux_power_per_kW_rejected") is not None:
        return snk["aux_power_per_kW_rejected"]
    T_in = snk.get("inlet_temperature_C", 20.0) + 273.15
    p = (snk.get("pressure_bar") or 2.0) * 1e5
    dh = PropsSI("H", "T", T_in + snk.get("temperature_rise_K", 10.0), "P", p, "Water") - PropsSI("H", "T", T_in, "P", p, "Water")
    return 9.80665 * (snk.get("pump_head_m") or 0.0) / (snk.get("aux_efficiency") or 1.0) / dh


def inputs_from_case(case: dict, coolprop_name: str, max_turbine_inlet_C: float | None = None) -> Inputs:
    """Inputs from a case dictionary (contract section 1, units of the key names).

    coolprop_name: the fluid's CoolProp name; max_turbine_inlet_C: its thermal-stability limit
    [°C] from the catalogue, or None.
    """
    src, snk = case["source"], case["sink"]
    if src.get("kind") != "water":
        raise Unsupported(f"source.kind = {src.get('kind')!r}: the baseline handles hot water only")
    if (snk.get("kind") or "water") != "water":
        raise Unsupported(f"sink.kind = {snk.get('kind')!r}: the baseline handles cooling water only")
    cy, ex, ma, li = case["cycle"], case["exchangers"], case["machines"], case["limits"]
    sh = cy.get("superheat_K", 0.0)
    if isinstance(sh, str):
        raise Unsupported("cycle.superheat_K = 'optimise': the baseline takes a fixed superheat")
    if case["machines"].get("turbine_model", "constant") != "constant":
        raise Unsupported("machines.turbine_model: the baseline takes a constant turbine efficiency")
    T_min_out = src.get("min_outlet_temperature_C")
    p_max = li.get("max_pressure_bar")
    p_cond_min = li.get("min_condensing_pressure_bar")
    return Inputs(
        fluid=coolprop_name,
        recuperated=case["layout"] == "recuperated",
        T_source_in_K=src["inlet_temperature_C"] + 273.15,
        m_source_kg_s=src["mass_flow_kg_s"],
        p_source_Pa=(src.get("pressure_bar") or 10.0) * 1e5,
        T_source_out_min_K=None if T_min_out is None else T_min_out + 273.15,
        T_sink_in_K=snk.get("inlet_temperature_C", 20.0) + 273.15,
        sink_rise_K=snk.get("temperature_rise_K", 10.0),
        p_sink_Pa=(snk.get("pressure_bar") or 2.0) * 1e5,
        aux_per_W_rejected=_aux_per_W_rejected(snk),
        pinch_evaporator_K=ex["pinch_evaporator_K"],
        pinch_condenser_K=ex["pinch_condenser_K"],
        pinch_recuperator_K=ex["pinch_recuperator_K"],
        recuperator_effectiveness=ex["recuperator_effectiveness"],
        eta_turbine=ma["turbine_efficiency"],
        eta_pump=ma["pump_efficiency"],
        eta_generator=ma["generator_efficiency"],
        eta_motor=ma["motor_efficiency"],
        max_pressure_Pa=None if p_max is None else p_max * 1e5,
        max_reduced_pressure=li["max_reduced_pressure"],
        min_turbine_outlet_quality=li["min_turbine_outlet_quality"],
        min_condensing_pressure_Pa=None if p_cond_min is None else p_cond_min * 1e5,
        subcooling_K=cy.get("subcooling_K") or 0.0,
        superheat_K=float(sh),
        max_turbine_inlet_K=None if max_turbine_inlet_C is None else max_turbine_inlet_C + 273.15,
    )


@dataclass
class Cycle:
    """One evaluated baseline cycle. Powers [W], flows [kg/s], temperatures [K]."""

    ok: bool
    limit: str = ""
    reason: str = ""
    T_evap_K: float = math.nan
    T_cond_K: float = math.nan
    m_wf_kg_s: float = math.nan
    W_net_W: float = -math.inf
    W_turbine_W: float = math.nan
    W_pump_W: float = math.nan
    Q_in_W: float = math.nan
    Q_out_W: float = math.nan
    Q_rec_W: float = 0.0
    q4: float = math.nan


@dataclass
class Optimum:
    cycle: Cycle
    evaluations: int
    propssi_calls: int
    scan: list = field(default_factory=list)


# -- discretisation ------------------------------------------------------------------------------

def zone_points(knots: list[float], n: int = N_SEGMENTS) -> np.ndarray:
    """n + 1 enthalpies from knots[0] to knots[-1] with every knot on the grid.

    Each zone between consecutive knots gets segments in proportion to its enthalpy span, at
    least one; zones of zero span are dropped.
    """
    ks = [knots[0]]
    for k in knots[1:]:
        if abs(k - ks[-1]) > 1e-9 * max(1.0, abs(k)):
            ks.append(k)
    spans = np.abs(np.diff(ks))
    if len(spans) == 0:
        return np.array([knots[0]] * (n + 1))
    share = n * spans / spans.sum()
    counts = np.maximum(1, np.floor(share).astype(int))
    while counts.sum() < n:
        counts[int(np.argmax(share - counts))] += 1
    while counts.sum() > n:
        counts[int(np.argmax(counts))] -= 1
    pts = [ks[0]]
    for a, b, c in zip(ks[:-1], ks[1:], counts):
        pts.extend(np.linspace(a, b, c + 1)[1:])
    return np.array(pts)


def _T_ph(p_Pa: float, h: np.ndarray, fluid: str) -> np.ndarray:
    return np.array([PropsSI("T", "P", p_Pa, "H", float(x), fluid) for x in h])


# -- the cycle -----------------------------------------------------------------------------------

@dataclass
class _Sat:
    T: float
    p: float
    hL: float
    hV: float
    sL: float


def _sat(T_K: float, fluid: str) -> _Sat:
    return _Sat(
        T_K,
        PropsSI("P", "T", T_K, "Q", 0, fluid),
        PropsSI("H", "T", T_K, "Q", 0, fluid),
        PropsSI("H", "T", T_K, "Q", 1, fluid),
        PropsSI("S", "T", T_K, "Q", 0, fluid),
    )


@dataclass
class _ColdSide:
    T_cond: float
    sat_c: _Sat
    h1: float
    T1: float
    h2: float
    T2: float
    h4: float
    T4: float
    h2r: float
    h4r: float
    q_rec: float


def _recuperator(inp: Inputs, sat_c: _Sat, sat_e: _Sat, h2, T2, h4, T4) -> float:
    """Recuperator duty per unit mass [J/kg] (0 when it is not used)."""
    f, dT = inp.fluid, inp.pinch_recuperator_K
    if T4 <= T2 + dT:
        return 0.0
    h4_at_T2 = PropsSI("H", "P", sat_c.p, "T", T2, f) if T2 > sat_c.T + 1e-6 else sat_c.hV
    q = inp.recuperator_effectiveness * (h4 - max(h4_at_T2, sat_c.hV))
    T4r_min = T2 + dT
    h4r_min = PropsSI("H", "P", sat_c.p, "T", T4r_min, f) if T4r_min > sat_c.T else sat_c.hV
    q = min(q, h4 - max(h4r_min, sat_c.hV))
    T2r_max = T4 - dT
    h2r_max = PropsSI("H", "P", sat_e.p, "T", T2r_max, f) if T2r_max < sat_e.T else sat_e.hL
    q = min(q, min(h2r_max, sat_e.hL) - h2)
    if q <= 0.0:
        return 0.0

    def margin(duty: float) -> float:
        frac = np.linspace(0.0, 1.0, N_SEGMENTS + 1)
        T_cold = _T_ph(sat_e.p, h2 + frac * duty, f)
        T_hot = _T_ph(sat_c.p, h4 - duty + frac * duty, f)
        return float(np.min(T_hot - T_cold)) - dT

    if margin(q) < -1e-9:  # an interior pinch: the largest duty that keeps it
        q = brentq(margin, 0.0, q, xtol=1e-6 * q)
    return q


def _cold_side(inp: Inputs, sat_e: _Sat, h3: float, s3: float, T_cond: float) -> _ColdSide:
    f = inp.fluid
    sat_c = _sat(T_cond, f)
    if inp.subcooling_K > 0.0:
        T1 = T_cond - inp.subcooling_K
        h1 = PropsSI("H", "P", sat_c.p, "T", T1, f)
        s1 = PropsSI("S", "P", sat_c.p, "T", T1, f)
    else:
        T1, h1, s1 = T_cond, sat_c.hL, sat_c.sL
    h2s = PropsSI("H", "P", sat_e.p, "S", s1, f)
    h2 = h1 + (h2s - h1) / inp.eta_pump
    T2 = PropsSI("T", "P", sat_e.p, "H", h2, f)
    h4s = PropsSI("H", "P", sat_c.p, "S", s3, f)
    h4 = h3 - inp.eta_turbine * (h3 - h4s)
    T4 = PropsSI("T", "P", sat_c.p, "H", h4, f)
    q_rec = _recuperator(inp, sat_c, sat_e, h2, T2, h4, T4) if inp.recuperated else 0.0
    return _ColdSide(T_cond, sat_c, h1, T1, h2, T2, h4, T4, h2 + q_rec, h4 - q_rec, q_rec)


def _condenser_margin(inp: Inputs, cs: _ColdSide, hs_in: float, hs_out: float) -> float:
    """min over the 51 points of (T_wf - T_sink) - pinch [K]."""
    sat = cs.sat_c
    knots = [cs.h1]
    if cs.h1 < sat.hL - 1e-9:
        knots.append(sat.hL)
    knots.append(min(sat.hV, cs.h4r))
    if cs.h4r > sat.hV + 1e-9:
        knots.append(cs.h4r)
    h = zone_points(knots)
    T_wf = _T_ph(sat.p, h, inp.fluid)
    frac = (h - h[0]) / (h[-1] - h[0])
    T_sink = np.array([PropsSI("T", "P", inp.p_sink_Pa, "H", float(x), "Water") for x in hs_in + frac * (hs_out - hs_in)])
    return float(np.min(T_wf - T_sink)) - inp.pinch_condenser_K


def _solve_condenser(inp: Inputs, sat_e: _Sat, h3: float, s3: float) -> _ColdSide:
    f = inp.fluid
    hs_in = PropsSI("H", "T", inp.T_sink_in_K, "P", inp.p_sink_Pa, "Water")
    hs_out = PropsSI("H", "T", inp.T_sink_in_K + inp.sink_rise_K, "P", inp.p_sink_Pa, "Water")
    T_floor = inp.T_sink_in_K + inp.pinch_condenser_K + inp.subcooling_K
    if inp.min_condensing_pressure_Pa is not None:
        T_floor = max(T_floor, PropsSI("T", "P", inp.min_condensing_pressure_Pa, "Q", 0, f))
    T_floor = max(T_floor, max(PropsSI("Ttriple", f), PropsSI("Tmin", f)) + inp.subcooling_K + 0.01)
    if T_floor >= sat_e.T:
        raise Infeasible("sink", "the condensing temperature floor is not below the evaporation temperature")
    sides: dict[float, _ColdSide] = {}

    def r(T: float) -> float:
        sides[T] = cs = _cold_side(inp, sat_e, h3, s3, T)
        return _condenser_margin(inp, cs, hs_in, hs_out)

    if r(T_floor) >= 0.0:
        return sides[T_floor]
    T_hi = min(inp.T_sink_in_K + inp.sink_rise_K + inp.pinch_condenser_K + inp.subcooling_K + 1.0, sat_e.T - 1e-3)
    if T_hi <= T_floor or r(T_hi) < 0.0:
        raise Infeasible("sink", "no condensing temperature below the evaporation temperature keeps the condenser pinch")
    T = brentq(r, T_floor, T_hi, xtol=T_COND_XTOL_K)  # within T_COND_XTOL_K of the lowest feasible T_cond
    return sides[T] if T in sides else _cold_side(inp, sat_e, h3, s3, T)


def evaluate(inp: Inputs, T_evap_K: float) -> Cycle:
    """The baseline cycle at evaporation temperature T_evap_K [K]; infeasible points carry the reason."""
    try:
        return _evaluate(inp, T_evap_K)
    except Infeasible as exc:
        return Cycle(False, exc.limit, exc.reason, T_evap_K)


def _evaluate(inp: Inputs, T_evap_K: float) -> Cycle:
    f = inp.fluid
    T_crit = PropsSI("Tcrit", f)
    if T_evap_K >= T_crit:
        raise Infeasible("critical point", "evaporation temperature not below the critical temperature")
    sat_e = _sat(T_evap_K, f)
    p_lim = inp.max_reduced_pressure * PropsSI("pcrit", f)
    if inp.max_pressure_Pa is not None:
        p_lim = min(p_lim, inp.max_pressure_Pa)
    if sat_e.p > p_lim * (1.0 + 1e-9):
        raise Infeasible("max pressure", "evaporation pressure above the limit")
    T3 = T_evap_K + inp.superheat_K
    if T3 > inp.T_source_in_K - inp.pinch_evaporator_K + 1e-9:
        raise Infeasible("hot-end approach", "turbine inlet closer than the pinch to the source inlet")
    if inp.max_turbine_inlet_K is not None and T3 > inp.max_turbine_inlet_K + 1e-9:
        raise Infeasible("thermal stability", "turbine inlet above the thermal-stability limit")
    if inp.superheat_K > 1e-12:
        h3 = PropsSI("H", "P", sat_e.p, "T", T3, f)
        s3 = PropsSI("S", "P", sat_e.p, "T", T3, f)
    else:
        h3 = sat_e.hV
        s3 = PropsSI("S", "T", T_evap_K, "Q", 1, f)

    cs = _solve_condenser(inp, sat_e, h3, s3)
    if cs.h2r >= sat_e.hL + 1e-6:
        raise Infeasible("recuperator", "the recuperator would boil the working fluid")
    sat_c = cs.sat_c
    q4 = math.nan
    if sat_c.hL <= cs.h4 <= sat_c.hV:
        q4 = (cs.h4 - sat_c.hL) / (sat_c.hV - sat_c.hL)
        if q4 < inp.min_turbine_outlet_quality:
            raise Infeasible("turbine outlet quality", f"turbine outlet quality {q4:.3f} below the limit")

    # evaporator: the largest flow that keeps the pinch at all 51 points
    knots = [cs.h2r, sat_e.hL, sat_e.hV]
    if h3 > sat_e.hV + 1e-9:
        knots.append(h3)
    h = zone_points(knots)
    T_wf = _T_ph(sat_e.p, h, f)
    hs_in = PropsSI("H", "T", inp.T_source_in_K, "P", inp.p_source_Pa, "Water")
    hs_at = np.array([PropsSI("H", "T", float(T) + inp.pinch_evaporator_K, "P", inp.p_source_Pa, "Water") for T in T_wf])
    dh = h3 - h
    use = dh > 1e-9 * max(abs(h3), 1.0)
    m_wf = float(np.min(inp.m_source_kg_s * (hs_in - hs_at[use]) / dh[use]))
    limit = "evaporator pinch"
    if inp.T_source_out_min_K is not None:
        hs_min = PropsSI("H", "T", inp.T_source_out_min_K, "P", inp.p_source_Pa, "Water")
        m_lim = inp.m_source_kg_s * (hs_in - hs_min) / (h3 - cs.h2r)
        if m_lim < m_wf:
            m_wf, limit = m_lim, "source outlet limit"
    if not m_wf > 0.0:
        raise Infeasible("evaporator pinch", "the source is too cold for this evaporation temperature")

    W_t = m_wf * (h3 - cs.h4)
    W_p = m_wf * (cs.h2 - cs.h1)
    Q_out = m_wf * (cs.h4r - cs.h1)
    W_net = inp.eta_generator * W_t - W_p / inp.eta_motor - inp.aux_per_W_rejected * Q_out
    if W_net <= 0.0:
        raise Infeasible("net power", "net power not positive")
    return Cycle(True, limit, "", T_evap_K, cs.T_cond, m_wf, W_net, W_t, W_p, m_wf * (h3 - cs.h2r), Q_out, m_wf * cs.q_rec, q4)


# -- the optimisation ----------------------------------------------------------------------------

def optimise(inp: Inputs, T_lo_K: float, T_hi_K: float, n_scan: int = N_SCAN, xatol_K: float = XATOL_K) -> Optimum:
    """Best net power over T_evap in [T_lo_K, T_hi_K]: coarse scan, then bounded Brent."""
    calls0 = CALLS[0]
    seen: dict[float, Cycle] = {}

    def cycle(T: float) -> Cycle:
        if T not in seen:
            seen[T] = evaluate(inp, T)
        return seen[T]

    def objective(T: float) -> float:
        c = cycle(float(T))
        return -c.W_net_W if c.ok else PENALTY

    if not T_hi_K > T_lo_K:
        return Optimum(Cycle(False, "window", "no room for evaporation"), 0, 0)
    grid = np.linspace(T_lo_K, T_hi_K, n_scan)
    scan = [cycle(float(T)) for T in grid]
    W = [c.W_net_W if c.ok else -math.inf for c in scan]
    i = int(np.argmax(W))
    if not math.isfinite(W[i]):
        reasons = [c.reason for c in scan]
        common = max(set(reasons), key=reasons.count)
        return Optimum(Cycle(False, scan[i].limit, f"no feasible scan point: e.g. {common}"), len(seen), CALLS[0] - calls0, scan)
    a, b = float(grid[max(i - 1, 0)]), float(grid[min(i + 1, n_scan - 1)])
    res = minimize_scalar(objective, bounds=(a, b), method="bounded", options={"xatol": xatol_K})
    best = max([float(grid[i]), float(res.x)], key=lambda T: cycle(T).W_net_W if cycle(T).ok else -math.inf)
    return Optimum(cycle(best), len(seen), CALLS[0] - calls0, scan)
