"""Choice of the free variables of one fluid and layout: evaporation temperature and superheat.

The objective (net power) can have kinks where the binding constraint changes (bubble-point
pinch, source outlet limit, turbine outlet quality, pressure limit), so unimodality is not
assumed over the whole range: a uniform scan of the evaporation temperature brackets the best
feasible region first, the edge of the feasible region is located by bisection where the best
scan point borders an infeasible one, and a bounded Brent search (scipy ``minimize_scalar``,
method "bounded") refines inside the bracket. The scan and the search use the closed-form pinch
candidates (``exact=False``); the optimum is then evaluated on the discretised profiles
(``exact=True``) and, if the discretised pinch moves the answer, refined again on that model.

Sources: Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall 1973
(the bounded scalar search as implemented in SciPy).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize_scalar

from .cycle import CycleResult, CycleSettings, Layout, evaluate, reset_guesses
from .properties import Fluid

__all__ = ["Optimum", "optimise", "evaporation_window_K"]

#: Number of evaporation temperatures in the bracketing scan.
N_SCAN = 10
#: Tolerance of the refinement on the evaporation temperature [K].
XATOL_K = 2e-3
#: Tolerance on the condensing temperature during the scan and the search [K]: it moves the net
#: power by a few 1e-5 at most, which shifts the located optimum by far less than XATOL_K allows
#: to matter; the optimum itself is re-evaluated tightly (fast and exact).
COND_TOL_SEARCH_K = 2e-3


@dataclass
class Optimum:
    """Result of one fluid-layout optimisation."""

    cycle: CycleResult  # the optimum, evaluated on the discretised profiles
    binding_limit: str
    evaluations: int
    scan_T_K: list = field(default_factory=list)
    scan_W: list = field(default_factory=list)
    scan_limit: list = field(default_factory=list)


def evaporation_window_K(fluid: Fluid, source, sink, s: CycleSettings, superheat_K: float) -> tuple[float, float, str]:
    """Range of evaporation temperatures [K] worth searching, and the name of the upper limit.

    Lower end: 1 K above the hottest condensing temperature the sink can need (sink outlet plus
    pinch). Upper end: the smallest of the pressure limit (subcritical, DESIGN section 3), the
    source inlet minus pinch and superheat (hot end), and the thermal-stability limit.
    """
    T_lo = sink.T_out_K + s.pinch_condenser_K + 1.0
    T_lo = max(T_lo, fluid.T_min_K + 1.0)
    if s.min_condensing_pressure_Pa is not None and s.min_condensing_pressure_Pa < fluid.p_crit_Pa:
        T_lo = max(T_lo, fluid.T_sat_floor_K(s.min_condensing_pressure_Pa) + 1.0)
    p_lim = s.max_evaporation_pressure_Pa(fluid)
    limits = [(fluid.T_sat_floor_K(p_lim), "max pressure" if s.max_pressure_Pa is not None and s.max_pressure_Pa < s.max_reduced_pressure * fluid.p_crit_Pa else "max reduced pressure")]
    limits.append((source.T_in_K - s.pinch_evaporator_K - superheat_K, "hot-end approach"))
    if s.max_turbine_inlet_temperature_K is not None:
        limits.append((s.max_turbine_inlet_temperature_K - superheat_K, "thermal stability"))
    T_hi, name = min(limits)
    return T_lo, T_hi, name


class _Objective:
    """Counts evaluations and keeps a warm start for the condensing temperature."""

    def __init__(self, fluid, source, sink, s, layout, superheat_K, exact, cond_tol_K=COND_TOL_SEARCH_K):
        self.args = (fluid, source, sink, s, layout)
        self.superheat_K = superheat_K
        self.exact = exact
        self.cond_tol_K = cond_tol_K
        self.n = 0
        self.T_cond_guess = None
        self.cache: dict[float, CycleResult] = {}
        self._solved: list[tuple[float, float]] = []  # (T_evap, T_cond) of feasible points

    def _predict_T_cond(self, T_evap_K: float) -> float | None:
        """Condensing temperature predicted from the two nearest solved points (linear)."""
        pts = self._solved
        if len(pts) < 2:
            return self.T_cond_guess
        (x1, y1), (x2, y2) = sorted(pts, key=lambda p: abs(p[0] - T_evap_K))[:2]
        if x1 == x2:
            return y1
        return y1 + (y2 - y1) * (T_evap_K - x1) / (x2 - x1)

    def __call__(self, T_evap_K: float) -> CycleResult:
        hit = self.cache.get(T_evap_K)
        if hit is not None:
            return hit
        self.n += 1
        guess = self._predict_T_cond(T_evap_K)
        r = evaluate(*self.args, T_evap_K, self.superheat_K, exact=self.exact, T_cond_guess_K=guess, cond_tol_K=self.cond_tol_K)
        if r.ok:
            self.T_cond_guess = r.T_cond_K
            self._solved.append((T_evap_K, r.T_cond_K))
        self.cache[T_evap_K] = r
        return r

    def power(self, T_evap_K: float) -> float:
        r = self(T_evap_K)
        return r.W_net_W if r.ok else -math.inf


def _quality_margin(r: CycleResult, x_min: float) -> float:
    if r.ok:
        q = r.states["4"].q
        return math.inf if math.isnan(q) else q - x_min
    return r.margin if r.limit == "turbine outlet quality" else math.nan


def _feasible_edge(obj: _Objective, T_ok: float, T_bad: float, tol_K: float = 1e-4) -> tuple[float, str]:
    """Edge of the feasible region between a feasible and an infeasible point.

    Where the broken limit has a continuous margin (the turbine outlet quality), false position
    with the Illinois modification (Dowell and Jarratt, BIT 11 (1971) 168-174) on that margin;
    otherwise bisection. Always returns a feasible point within tol_K of the edge.
    """
    limit = obj(T_bad).limit
    x_min = obj.args[3].min_turbine_outlet_quality
    m_ok, m_bad = _quality_margin(obj(T_ok), x_min), _quality_margin(obj(T_bad), x_min)
    side = 0
    while abs(T_bad - T_ok) > tol_K:
        use_secant = limit == "turbine outlet quality" and math.isfinite(m_ok) and math.isfinite(m_bad) and m_ok > 0 > m_bad
        mid = T_ok + (T_bad - T_ok) * m_ok / (m_ok - m_bad) if use_secant else 0.5 * (T_ok + T_bad)
        # keep the trial point strictly inside, and not glued to one end
        lo, hi = sorted((T_ok, T_bad))
        span = hi - lo
        mid = min(max(mid, lo + 0.02 * span if span > 4 * tol_K else lo + 0.5 * tol_K), hi - (0.02 * span if span > 4 * tol_K else 0.5 * tol_K))
        r = obj(mid)
        m = _quality_margin(r, x_min)
        if r.ok:
            T_ok, m_ok = mid, m
            if side == 1:
                m_bad *= 0.5
            side = 1
        else:
            T_bad, m_bad, limit = mid, m, r.limit
            if side == -1:
                m_ok *= 0.5
            side = -1
    return T_ok, limit


def _penalised(W: float) -> float:
    """Objective for the minimiser: -W, with infeasible points as a large finite value."""
    return -W if math.isfinite(W) else 1e30


def _refine(obj: _Objective, a: float, b: float) -> float:
    """Bounded Brent search for the largest net power in [a, b]; returns the best point seen."""
    if b - a <= XATOL_K:
        return a if obj.power(a) >= obj.power(b) else b
    res = minimize_scalar(lambda T: _penalised(obj.power(T)), bounds=(a, b), method="bounded", options={"xatol": XATOL_K})
    best = max([a, b, float(res.x)], key=obj.power)
    return best


def _optimise_T_evap(obj: _Objective, T_lo: float, T_hi: float, T_hi_name: str, n_scan: int):
    """Scan, bracket, refine. Returns (T_opt, binding limit name, scan) or (None, reason, scan)."""
    grid = np.linspace(T_lo, T_hi, n_scan)
    results = [obj(float(T)) for T in grid]
    W = np.array([r.W_net_W if r.ok else -np.inf for r in results])
    scan = (list(grid), list(W), [r.limit for r in results])
    if not np.any(np.isfinite(W)):
        return None, results, scan
    i = int(np.argmax(W))
    a = float(grid[max(i - 1, 0)])
    b = float(grid[min(i + 1, n_scan - 1)])
    lower_edge = upper_edge = None
    if i > 0 and not results[i - 1].ok:
        a, lower_edge = _feasible_edge(obj, float(grid[i]), a)
    if i < n_scan - 1 and not results[i + 1].ok:
        b, upper_edge = _feasible_edge(obj, float(grid[i]), b)
    T_opt = _refine(obj, a, b)
    if upper_edge is not None and T_opt >= b - 10 * XATOL_K:
        limit = upper_edge
    elif lower_edge is not None and T_opt <= a + 10 * XATOL_K:
        limit = lower_edge
    elif T_opt >= T_hi - 10 * XATOL_K:
        limit = T_hi_name
    elif T_opt <= T_lo + 10 * XATOL_K:
        limit = "lowest evaporation temperature"
    else:
        limit = "none (interior optimum)"
    return T_opt, limit, scan


def _no_feasible_reason(results: list[CycleResult], T_lo: float, T_hi: float) -> str:
    reasons = [r.reason for r in results if r.reason]
    common = max(set(reasons), key=reasons.count) if reasons else "no feasible point"
    return f"no feasible evaporation temperature between {T_lo - 273.15:.1f} and {T_hi - 273.15:.1f} °C: e.g. {common}"


def _optimise_fixed_superheat(fluid, source, sink, s, layout, superheat_K, n_scan, polish=True):
    """Best evaporation temperature at one superheat: (result, limit, evaluations, scan).

    polish=False returns the closed-form model's optimum without the discretised
    re-evaluation (used inside the superheat search, whose objective must be one model).
    """
    T_lo, T_hi, T_hi_name = evaporation_window_K(fluid, source, sink, s, superheat_K)
    if T_hi <= T_lo:
        reason = (
            f"no room for evaporation: the upper limit ({T_hi_name}, {T_hi - 273.15:.1f} °C) is not above "
            f"the lowest useful evaporation temperature ({T_lo - 273.15:.1f} °C)"
        )
        return None, reason, 0, ([], [], [])
    fast = _Objective(fluid, source, sink, s, layout, superheat_K, exact=False)
    T_opt, info, scan = _optimise_T_evap(fast, T_lo, T_hi, T_hi_name, n_scan)
    if T_opt is None:
        return None, _no_feasible_reason(info, T_lo, T_hi), fast.n, scan
    if not polish:
        return fast(T_opt), info, fast.n, scan
    exact = _Objective(fluid, source, sink, s, layout, superheat_K, exact=True)
    exact.T_cond_guess = fast(T_opt).T_cond_K
    r = exact(T_opt)
    fr = evaluate(fluid, source, sink, s, layout, T_opt, superheat_K, exact=False, T_cond_guess_K=r.T_cond_K if r.ok else None, cond_tol_K=1e-9)
    limit = info
    if not r.ok or abs(r.W_net_W - fr.W_net_W) > 2e-5 * abs(fr.W_net_W):
        # the discretised profiles bind somewhere the closed-form candidates do not see:
        # refine again on the discretised model around the fast optimum
        step = (T_hi - T_lo) / (n_scan - 1)
        a, b = max(T_lo, T_opt - step), min(T_hi, T_opt + step)
        T2 = _refine(exact, a, b)
        if exact.power(T2) > -math.inf:
            r = exact(T2)
            limit = info if abs(T2 - T_opt) < 10 * XATOL_K else "evaporator pinch (discretised)"
    if not r.ok:
        return None, r.reason, fast.n + exact.n, scan
    return r, limit, fast.n + exact.n + 1, scan


def optimise(
    fluid: Fluid,
    source,
    sink,
    settings: CycleSettings,
    layout: Layout,
    superheat_K: float | str = 0.0,
    max_superheat_K: float = 50.0,
    n_scan: int = N_SCAN,
) -> Optimum | tuple[None, str, int]:
    """Best cycle of one fluid and layout for net power.

    superheat_K: a fixed superheat [K], or "optimise" to choose it in [0, max_superheat_K].
    Returns an :class:`Optimum`, or (None, reason, evaluations) when nothing is feasible.
    The result depends only on the arguments: guesses carried between evaluations are reset
    first, so the same case gives the same bits in any process and after any other case.
    """
    reset_guesses()
    if superheat_K != "optimise":
        r, limit, n, scan = _optimise_fixed_superheat(fluid, source, sink, settings, layout, float(superheat_K), n_scan)
        if r is None:
            return None, limit, n
        return Optimum(r, limit, n, *scan)

    total = 0
    memo: dict[float, tuple] = {}

    def inner(sh: float):
        nonlocal total
        if sh not in memo:
            out = _optimise_fixed_superheat(fluid, source, sink, settings, layout, sh, max(10, n_scan // 2), polish=False)
            total += out[2]
            memo[sh] = out
        return memo[sh]

    def inner_near(sh: float):
        """Inner optimum started from the nearest superheat already solved: a bracket of
        +-3 K around its evaporation temperature; the full search when an edge is near."""
        nonlocal total
        if sh in memo:
            return memo[sh]
        known = sorted((abs(k - sh), v[0].T_evap_K) for k, v in memo.items() if v[0] is not None)
        T_lo, T_hi, _ = evaporation_window_K(fluid, source, sink, settings, sh)
        if not known:
            return inner(sh)
        a, b = max(T_lo, known[0][1] - 3.0), min(T_hi, known[0][1] + 3.0)
        obj = _Objective(fluid, source, sink, settings, layout, sh, exact=False)
        if b - a < 1.0 or not (obj(a).ok and obj(b).ok):
            total += obj.n
            return inner(sh)
        T = _refine(obj, a, b)
        total += obj.n
        if T - a < 10 * XATOL_K or b - T < 10 * XATOL_K:
            return inner(sh)
        memo[sh] = (obj(T), "none (interior optimum)", obj.n, ([], [], []))
        return memo[sh]

    def power(sh: float, near: bool = False) -> float:
        r = (inner_near(sh) if near else inner(sh))[0]
        return r.W_net_W if r is not None else -math.inf

    grid = np.linspace(0.0, max_superheat_K, 6)
    W = [power(float(g)) for g in grid]
    if not np.any(np.isfinite(W)):
        return None, inner(0.0)[1], total
    i = int(np.argmax(W))
    a, b = float(grid[max(i - 1, 0)]), float(grid[min(i + 1, len(grid) - 1)])
    res = minimize_scalar(lambda sh: _penalised(power(sh, near=True)), bounds=(a, b), method="bounded", options={"xatol": 0.1})
    best = max([float(grid[i]), float(res.x)], key=lambda sh: power(sh, near=True))
    # polish at the best superheat with the full scan
    r, limit, n, scan = _optimise_fixed_superheat(fluid, source, sink, settings, layout, best, n_scan)
    total += n
    if r is None:
        return None, limit, total
    return Optimum(r, limit, total, *scan)
