"""Choice of a layout's free variables: the best cycle of one fluid and layout for net power.

Generic over the variables a layout declares (:meth:`orcscreen.cycles.base.Layout.variables`,
innermost first) and their bounds (:meth:`~orcscreen.cycles.base.Layout.window`).

Innermost variable (e.g. the evaporation temperature, or a supercritical heater's pressure):
the objective can have kinks where the binding constraint changes (pinch location, source
outlet limit, turbine outlet quality, pressure limit), so unimodality is not assumed over the
whole range: a uniform scan brackets the best feasible region first, the edge of the feasible
region is located where the best scan point borders an infeasible one (false position on the
turbine-outlet quality margin, else bisection), and a bounded Brent search (SciPy's
``minimize_scalar`` method "bounded", transcribed in :mod:`orcscreen.brent`) refines inside the
bracket; where the best of the bracket is the kink at which the source outlet limit meets a
pinch, which a parabolic search approaches only at the golden section's rate, the kink is found
instead as the zero of the source's outlet margin on the pinch side (:func:`_outlet_kink`).
The scan and the search use the layout's closed-form pinch candidates (``exact=False``); the
optimum is then evaluated on the discretised profiles (``exact=True``) and, if the discretised
pinch moves the answer, refined again on that model.

Outer variables (e.g. an optimised superheat, a supercritical turbine inlet temperature, a bleed
or reheat pressure): a uniform scan of the outer variable, each point with its own inner
optimum, brackets the best; a bounded Brent search refines it, each trial warm-started from the
nearest inner optimum already found (a narrow bracket around it; the full inner search when an
edge is near); the best outer value is polished with the full inner search. A scan from the
bottom of its window (the superheat) stops at its first point when the envelope theorem shows
the objective falling off it (:func:`_envelope_falls`). With more than two variables the same
scheme nests.

Sources: Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall 1973
(the bounded scalar search as implemented in SciPy); Dowell and Jarratt, BIT 11 (1971) 168-174
(false position with the Illinois modification).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np

from .brent import minimize_scalar_bounded
from .cycles import CycleContext, CycleResult, Layout, Variable, Window, reset_guesses
from .exchangers import SOURCE_OUTLET_LIMIT
from .case_variables import with_case_variables
from .objectives import score

__all__ = ["Optimum", "optimise", "COND_TOL_SEARCH_K", "INTERIOR", "SOURCE_OUTLET_LIMIT"]

#: Tolerance on the condensing temperature during the scan and the search [K]: it moves the net
#: power by a few 1e-5 at most, which shifts the located optimum by far less than the variables'
#: tolerances allow to matter; the optimum itself is re-evaluated tightly (fast and exact).
COND_TOL_SEARCH_K = 2e-3
#: Tolerance of a size-dependent turbine's efficiency on the scan's points [-]: the scan only
#: brackets the optimum, so a noise of ~1e-6 in its net power is harmless; the refining search
#: settles the efficiency to cycles.base.ETA_TOL_FAST, for a smooth objective.
ETA_TOL_SCAN = 1e-6
#: Relative difference between the closed-form and the discretised model at the optimum above
#: which the optimum is searched again on the discretised model.
EXACT_REFINE_RTOL = 2e-5
#: The same for an objective that needs areas (orcscreen.objectives): the search's profiles,
#: SEARCH_ZONE_SEGMENTS per zone, against the reported ones; measured 1e-7 to 2e-4 apart except
#: close to the critical point, where the search is then redone on the reported model.
SCORE_REFINE_RTOL = 2e-4
#: Largest number of points of the kink search (_outlet_kink) before it gives way to Brent's.
KINK_MAX_STEPS = 24
#: The kink search ends when the kink is bracketed within KINK_XTOL times the variable's
#: tolerance, or when the nearest pinch-side point is within KINK_END times that distance of
#: the zero of the source's outlet margin predicted from the pinch side.
KINK_XTOL = 1e-2
KINK_END = 1e-2
#: The envelope test of a scanned outer variable (_envelope_falls): the fall of the objective
#: [relative] over one outer tolerance past the first scan point that stops the scan there. The
#: test's evaluations are settled tightly (ENVELOPE_COND_TOL_K, a size-dependent turbine's
#: efficiency to cycles.base.ETA_TOL_FAST): measured noise below 1e-12 relative, against 1e-5 to
#: 1e-3 for the falls seen on the shipped studies; the second-order term of the inner variable's
#: move is estimated and taken off the fall first.
ENVELOPE_FALL_RTOL = 1e-6
#: Tolerance on the condensing temperature of the envelope test's evaluations [K] (as the polish's).
ENVELOPE_COND_TOL_K = 1e-9
#: The binding limit of an optimum whose free variables sit on no bound and no edge.
INTERIOR = "none (interior optimum)"
#: The source leaves at its minimum outlet temperature when it is this close to it [K]: the
#: flow closure meets the limit to round-off, and an optimum at the kink between the limit and
#: the pinch is located to 2e-3 K of evaporation temperature (common practice: a tolerance
#: well above the solver's and well below anything an engineer would read as a margin).
SOURCE_OUTLET_TOL_K = 1e-2


@dataclass
class Optimum:
    """Result of one fluid-layout optimisation.

    cycle: the optimum, evaluated on the discretised profiles; binding_limit: the limits the
    optimum sits on, in words, joined by "; " (a variable's bound or feasible edge, the source
    outlet limit), INTERIOR when none; evaluations: cycle evaluations spent. scan_*: the bracketing scan
    of the innermost variable at the optimum's outer values (SI values, net power [W], limit).
    """

    cycle: CycleResult
    binding_limit: str
    evaluations: int
    scan_variable: Variable | None = None
    scan_x: list = field(default_factory=list)
    scan_W: list = field(default_factory=list)
    scan_limit: list = field(default_factory=list)


class _Objective:
    """One variable of a layout at fixed outer values: counts evaluations, caches results and
    predicts the condensing temperature of the next point from the nearest solved ones."""

    def __init__(self, layout: Layout, ctx: CycleContext, var: Variable, fixed: Mapping[str, float], exact: bool,
                 cond_tol_K: float = COND_TOL_SEARCH_K):
        self.layout, self.ctx, self.var, self.fixed = layout, ctx, var, dict(fixed)
        self.exact = exact
        self.cond_tol_K = cond_tol_K
        self.n = 0
        self.T_cond_guess = None
        self.cache: dict[float, CycleResult] = {}
        self.scores: dict[float, float] = {}
        self.eta_guess = None
        #: tolerance of a size-dependent turbine's efficiency fixed point (None: the layout's
        #: default); the scan sets a looser one (ETA_TOL_SCAN)
        self.eta_tol: float | None = None
        self._solved: list[tuple[float, float, float]] = []  # (x, T_cond, turbine efficiency) of feasible points

    def _predict(self, x: float) -> tuple[float | None, float | None]:
        """Condensing temperature and turbine efficiency predicted from the two nearest solved
        points (linear in x)."""
        pts = self._solved
        if len(pts) < 2:
            return self.T_cond_guess, self.eta_guess
        (x1, t1, e1), (x2, t2, e2) = sorted(pts, key=lambda p: abs(p[0] - x))[:2]
        if x1 == x2:
            return t1, e1
        return t1 + (t2 - t1) * (x - x1) / (x2 - x1), float(e1 + (e2 - e1) * (x - x1) / (x2 - x1))

    def point(self, x: float) -> dict[str, float]:
        return {self.var.name: x, **self.fixed}

    def __call__(self, x: float) -> CycleResult:
        hit = self.cache.get(x)
        if hit is not None:
            return hit
        self.n += 1
        guess, eta = self._predict(x)
        r = self.layout.evaluate(self.ctx, self.point(x), exact=self.exact, T_cond_guess_K=guess, cond_tol_K=self.cond_tol_K,
                                 eta_guess=eta, eta_tol=self.eta_tol)
        self._record(x, r)
        return r

    def _record(self, x: float, r: CycleResult) -> None:
        if r.ok:
            # a size-dependent turbine's efficiency at the size found: the next point's best guess
            eta_found = getattr(r.turbine_design, "efficiency", r.eta_turbine)
            self.T_cond_guess, self.eta_guess = r.T_cond_K, eta_found
            self._solved.append((x, r.T_cond_K, eta_found))
        self.cache[x] = r

    def seed(self, xs, results: list[CycleResult]) -> None:
        """Take results already evaluated at xs, in that order, as if evaluated here (the same
        cache and guesses; no evaluation counted)."""
        for x, r in zip(xs, results):
            self._record(float(x), r)

    def power(self, x: float) -> float:
        """The objective's score at x (the net power [W] by default; larger is better)."""
        hit = self.scores.get(x)
        if hit is None:
            hit = self.scores[x] = score(self(x), self.ctx)
        return hit


def _quality_margin(r: CycleResult, x_min: float) -> float:
    if r.ok:
        q = r.turbine_outlet_quality
        return math.inf if math.isnan(q) else q - x_min
    return r.margin if r.limit == "turbine outlet quality" else math.nan


def _feasible_edge(obj: _Objective, x_ok: float, x_bad: float) -> tuple[float, str]:
    """Edge of the feasible region between a feasible and an infeasible point.

    Where the broken limit has a continuous margin (the turbine outlet quality), false position
    with the Illinois modification on that margin; otherwise bisection. Always returns a
    feasible point within tol of the edge (tol: 1/20 of the variable's tolerance).
    """
    tol = obj.var.xatol / 20.0
    limit = obj(x_bad).limit
    x_min = obj.ctx.settings.min_turbine_outlet_quality
    m_ok, m_bad = _quality_margin(obj(x_ok), x_min), _quality_margin(obj(x_bad), x_min)
    side = 0
    while abs(x_bad - x_ok) > tol:
        use_secant = limit == "turbine outlet quality" and math.isfinite(m_ok) and math.isfinite(m_bad) and m_ok > 0 > m_bad
        mid = x_ok + (x_bad - x_ok) * m_ok / (m_ok - m_bad) if use_secant else 0.5 * (x_ok + x_bad)
        # keep the trial point strictly inside, and not glued to one end
        lo, hi = sorted((x_ok, x_bad))
        span = hi - lo
        mid = min(max(mid, lo + 0.02 * span if span > 4 * tol else lo + 0.5 * tol), hi - (0.02 * span if span > 4 * tol else 0.5 * tol))
        r = obj(mid)
        m = _quality_margin(r, x_min)
        if r.ok:
            x_ok, m_ok = mid, m
            if side == 1:
                m_bad *= 0.5
            side = 1
        else:
            x_bad, m_bad, limit = mid, m, r.limit
            if side == -1:
                m_ok *= 0.5
            side = -1
    return x_ok, limit


def _regime_edge(obj: _Objective, x_in: float, x_out: float) -> tuple[float, float]:
    """The jump of the regime (see CycleResult.regime) between x_in and x_out, by bisection to
    1/20 of the variable's tolerance: (a point of x_in's regime two tolerances short of the jump,
    where the closed-form and the discretised models agree on the regime; the first point
    beyond the jump that is feasible, else x_out)."""
    tol = obj.var.xatol / 20.0
    start, regime = x_in, obj(x_in).regime
    far = x_out
    while abs(x_out - x_in) > tol:
        mid = 0.5 * (x_in + x_out)
        r = obj(mid)
        if r.ok and r.regime == regime:
            x_in = mid
        else:
            x_out = mid
            if r.ok:
                far = mid
    inside = x_in + math.copysign(min(2.0 * obj.var.xatol, abs(x_in - start)), start - x_in)
    return (inside if obj(inside).ok and obj(inside).regime == regime else x_in), far


def _penalised(W: float) -> float:
    """Objective for the minimiser: -W, with infeasible points as a large finite value."""
    return -W if math.isfinite(W) else 1e30


def _refine(power, a: float, b: float, xatol: float) -> float:
    """Bounded Brent search for the largest power(x) in [a, b]; returns the best point seen."""
    if b - a <= xatol:
        return a if power(a) >= power(b) else b
    res = minimize_scalar_bounded(lambda x: _penalised(power(x)), (a, b), xatol=xatol)
    return max([a, b, float(res.x)], key=power)


def _zero_of(points: list[tuple[float, float]]) -> float | None:
    """Where y = 0 by inverse interpolation through two or three points (x, y) with distinct y
    (the quadratic x(y) through three, the line through two); None when two y coincide."""
    (x0, y0), (x1, y1) = points[0], points[1]
    if y0 == y1:
        return None
    if len(points) == 2:
        return x0 - y0 * (x1 - x0) / (y1 - y0)
    x2, y2 = points[2]
    if y2 in (y0, y1):
        return None
    return (x0 * y1 * y2 / ((y0 - y1) * (y0 - y2)) + x1 * y0 * y2 / ((y1 - y0) * (y1 - y2))
            + x2 * y0 * y1 / ((y2 - y0) * (y2 - y1)))


def _outlet_kink(obj: _Objective, a: float, x0: float, b: float, tol: float) -> float | None:
    """The optimum in [a, b] where the source outlet limit and a pinch meet, or None when the
    best of [a, b] is no such kink (the caller then searches as before).

    Where the source has a lowest outlet temperature, the heater's flow is the smaller of the
    flow that cools the source to that temperature and the flow its pinch allows
    (exchangers.heater_flow), and the net power has a kink where the two are equal; a
    parabolic search converges there only at the golden section's rate. On the pinch side the
    source's outlet margin T_source_out - T_min is smooth and falls to 0 at the kink: its zero
    is predicted by inverse interpolation through the (up to three) pinch-side points nearest
    it (_zero_of), and the next point is set past that zero on the pinch side, by twice the
    last prediction's move (at least KINK_END / 2 of the end tolerance, at most half way to
    the nearest pinch-side point), so that the nearest pinch-side points close in on the kink;
    bisection where no zero is predicted inside the bracket. The search ends when the kink is
    bracketed within tol * KINK_XTOL, or the nearest pinch-side point is within
    tol * KINK_XTOL * KINK_END of the zero predicted; the answer is the better of the two
    points that bracket the kink. None when a, x0 and b are not all feasible on one regime with
    the limit holding at one end and a pinch at the other, when the limit holds on more than
    one stretch, or when the net power does not rise into the kink on the limit's side and fall
    from it on the pinch side.
    """
    T_min = getattr(obj.ctx.source, "T_out_min_K", None)
    if T_min is None:
        return None
    pts = sorted({a, x0, b})
    if not all(obj(x).ok for x in pts) or len({obj(x).regime for x in pts}) > 1:
        return None

    def held(x):
        return obj(x).pinch_location == SOURCE_OUTLET_LIMIT

    ends = (held(pts[0]), held(pts[-1]))
    if ends[0] == ends[1]:
        return None
    toward = 1.0 if ends[0] else -1.0  # the direction from the limit's side to the pinch's
    xtol = tol * KINK_XTOL
    last = None
    for _ in range(KINK_MAX_STEPS):
        xs = sorted(pts, key=lambda x: toward * x)  # the limit's side first
        n_held = sum(held(x) for x in xs)
        if not all(held(x) for x in xs[:n_held]) or any(held(x) for x in xs[n_held:]):
            return None  # the limit holds on more than one stretch
        near_held, near_pinch = xs[n_held - 1], xs[n_held]
        if n_held >= 2 and not obj.power(near_held) > obj.power(xs[n_held - 2]):
            return None  # the net power does not rise into the kink
        if len(xs) - n_held >= 2 and not obj.power(near_pinch) > obj.power(xs[n_held + 1]):
            return None  # nor fall from it
        if toward * (near_pinch - near_held) <= xtol:
            break
        x_new = 0.5 * (near_held + near_pinch)
        side = [(x, obj(x).T_source_out_K - T_min) for x in xs[n_held:n_held + 3]]
        zero = _zero_of(side) if len(side) >= 2 else None
        if zero is not None and toward * near_held < toward * zero < toward * near_pinch:
            if toward * (near_pinch - zero) <= KINK_END * xtol:
                break  # the nearest pinch-side point is at the kink
            # past the zero predicted, on the pinch side, by twice the last prediction's move,
            # at most half way to the nearest pinch-side point
            moved = 0.0 if last is None else abs(zero - last)
            push = max(2.0 * moved, 0.5 * KINK_END * xtol)
            x_new = zero + toward * min(push, 0.5 * toward * (near_pinch - zero))
            last = zero
        if not obj(x_new).ok or obj(x_new).regime != obj(pts[0]).regime:
            return None
        pts.append(x_new)
    else:
        return None
    xs = sorted(pts, key=lambda x: toward * x)
    n_held = sum(held(x) for x in xs)
    return max(xs[n_held - 1], xs[n_held], key=obj.power)


def _scan(obj: _Objective, grid) -> tuple[list[CycleResult], tuple[list, list, list]]:
    """Results at the grid points, and the scan for the chart: (x values, net power [W] or -inf, limits)."""
    tol, obj.eta_tol = obj.eta_tol, (None if obj.exact else ETA_TOL_SCAN)
    try:
        results = [obj(float(x)) for x in grid]
    finally:
        obj.eta_tol = tol
    return results, (list(grid), [r.W_net_W if r.ok else -np.inf for r in results], [r.limit for r in results])


def _scan_and_refine(obj: _Objective, w: Window, n_scan: int):
    """Scan, bracket, refine one variable. Returns (x_opt, binding limit, scan) or (None, results, scan)."""
    xatol = obj.var.xatol
    grid = np.linspace(w.lo, w.hi, n_scan)
    results, scan = _scan(obj, grid)
    W = np.array([obj.power(float(x)) for x in grid])
    if not np.any(np.isfinite(W)):
        return None, results, scan
    i = int(np.argmax(W))
    a = float(grid[max(i - 1, 0)])
    b = float(grid[min(i + 1, n_scan - 1)])
    lower_edge = upper_edge = None
    others = []  # brackets on the far side of a jump of the regime (the turbine's stage count)
    if i > 0 and not results[i - 1].ok:
        a, lower_edge = _feasible_edge(obj, float(grid[i]), a)
    elif i > 0 and results[i - 1].regime != results[i].regime:
        (a, far), lower_edge = _regime_edge(obj, float(grid[i]), a), "turbine stage count"
        others.append((float(grid[i - 1]), far))
    if i < n_scan - 1 and not results[i + 1].ok:
        b, upper_edge = _feasible_edge(obj, float(grid[i]), b)
    elif i < n_scan - 1 and results[i + 1].regime != results[i].regime:
        (b, far), upper_edge = _regime_edge(obj, float(grid[i]), b), "turbine stage count"
        others.append((far, float(grid[i + 1])))
    x_opt = None
    if lower_edge is None and upper_edge is None and not others:
        x_opt = _outlet_kink(obj, a, float(grid[i]), b, xatol)
    if x_opt is None:
        x_opt = _refine(obj.power, a, b, xatol)
    for lo, hi in others:
        x_far = _refine(obj.power, lo, hi, xatol)
        if obj.power(x_far) > obj.power(x_opt):
            x_opt, a, b, lower_edge, upper_edge = x_far, lo, hi, "turbine stage count", "turbine stage count"
    sits = lambda end: _sits_on(obj.power, x_opt, end, xatol)  # noqa: E731
    if upper_edge is not None and sits(b):
        limit = upper_edge
    elif lower_edge is not None and sits(a):
        limit = lower_edge
    elif sits(w.hi):
        limit = w.hi_name
    elif sits(w.lo):
        limit = w.lo_name
    else:
        limit = INTERIOR
    return x_opt, limit, scan


def _no_room_reason(var: Variable, w: Window) -> str:
    return (f"no room for the {var.label}: the upper limit ({w.hi_name}, {var.display(w.hi):.4g} {var.unit}) is not "
            f"above the lower one ({w.lo_name}, {var.display(w.lo):.4g} {var.unit})")


def _no_feasible_reason(var: Variable, results: list[CycleResult], w: Window) -> str:
    reasons = [r.reason for r in results if r.reason]
    common = max(set(reasons), key=reasons.count) if reasons else "no feasible point"
    return (f"no feasible {var.label} between {var.display(w.lo):.4g} and {var.display(w.hi):.4g} {var.unit}: "
            f"e.g. {common}")


def _optimise_innermost(layout: Layout, ctx: CycleContext, var: Variable, fixed: Mapping[str, float], polish: bool = True,
                        keep: list | None = None):
    """Best value of the innermost variable at fixed outer values: (result, limit, evaluations, scan).

    polish=False returns the closed-form model's optimum without the discretised re-evaluation
    (used inside an outer search, whose objective must be one model). result is None when
    nothing is feasible; limit is then the reason. keep, when given, receives the results of
    the scan (in the scan's order).
    """
    n_scan = var.scan_points
    w = layout.window(ctx, var.name, fixed)
    if w.hi <= w.lo:
        return None, _no_room_reason(var, w), 0, ([], [], [])
    fast = _Objective(layout, ctx, var, fixed, exact=False)
    x_opt, info, scan = _scan_and_refine(fast, w, n_scan)
    if keep is not None:
        keep.extend(fast.cache[float(x)] for x in scan[0])
    if x_opt is None:
        return None, _no_feasible_reason(var, info, w), fast.n, scan
    if not polish:
        return fast(x_opt), info, fast.n, scan
    r, limit, n = _polish(layout, ctx, var, fixed, fast, x_opt, info, w)
    if r is None:
        return None, limit, fast.n + n, scan
    return r, limit, fast.n + n, scan


def _polish(layout: Layout, ctx: CycleContext, var: Variable, fixed: Mapping[str, float], fast: _Objective, x_opt: float,
            info: str, w: Window):
    """The closed-form optimum x_opt evaluated on the discretised profiles: (result or None,
    binding limit or reason, evaluations). Where the two models differ by more than
    EXACT_REFINE_RTOL, the optimum is searched again on the discretised model, one scan step
    either side."""
    exact = _Objective(layout, ctx, var, fixed, exact=True)
    if fast(x_opt).ok:
        exact.T_cond_guess = fast(x_opt).T_cond_K
        exact.eta_guess = getattr(fast(x_opt).turbine_design, "efficiency", fast(x_opt).eta_turbine)
    r = exact(x_opt)
    fr = layout.evaluate(ctx, fast.point(x_opt), exact=False, T_cond_guess_K=r.T_cond_K if r.ok else None, cond_tol_K=1e-9,
                         eta_guess=r.eta_turbine if r.ok else None)
    limit = info
    s_exact, s_fast = score(r, ctx), score(fr, ctx)  # the objective's (the net power by default)
    if not r.ok or abs(r.W_net_W - fr.W_net_W) > EXACT_REFINE_RTOL * abs(fr.W_net_W) or (
            s_exact != r.W_net_W and not abs(s_exact - s_fast) <= SCORE_REFINE_RTOL * abs(s_fast)):
        # the discretised profiles bind somewhere the closed-form candidates do not see:
        # refine again on the discretised model around the fast optimum
        step = (w.hi - w.lo) / (var.scan_points - 1)
        a, b = max(w.lo, x_opt - step), min(w.hi, x_opt + step)
        x2 = _refine(exact.power, a, b, var.xatol)
        if exact.power(x2) > -math.inf:
            r = exact(x2)
            where = "heater" if layout.supercritical else "evaporator"
            limit = info if abs(x2 - x_opt) < 10 * var.xatol else f"{where} pinch (discretised)"
    if not r.ok:
        return None, r.reason, exact.n
    return r, limit, exact.n + 1


def _optimise_nested(layout: Layout, ctx: CycleContext, variables: tuple[Variable, ...], fixed: Mapping[str, float],
                     polish: bool = True, keep: list | None = None):
    """Best values of variables (innermost first) at fixed outer values: (result, limit, evaluations, scan).
    keep: see _optimise_innermost (one variable only)."""
    if len(variables) == 1:
        return _optimise_innermost(layout, ctx, variables[0], fixed, polish, keep)
    inner_vars, outer = variables[:-1], variables[-1]
    w = layout.window(ctx, outer.name, fixed)
    total = 0
    memo: dict[float, tuple] = {}
    scanned: dict[float, list[CycleResult]] = {}  # the inner scan's results of each full inner search

    def inner(v: float):
        nonlocal total
        if v not in memo:
            kept: list[CycleResult] = []
            out = _optimise_nested(layout, ctx, inner_vars, {**fixed, outer.name: v}, polish=False,
                                   keep=kept if len(inner_vars) == 1 else None)
            total += out[2]
            memo[v] = out
            if kept:
                scanned[v] = kept
        return memo[v]

    def inner_near(v: float):
        """Inner optimum started from the nearest outer value already solved: a bracket of
        +- near_half_width around its inner optimum; the full search when an edge is near."""
        nonlocal total
        if v in memo:
            return memo[v]
        if len(inner_vars) > 1:
            return inner(v)
        iv = inner_vars[0]
        known = sorted((abs(k - v), res[0].variables[iv.name], k) for k, res in memo.items() if res[0] is not None)
        if not known:
            return inner(v)
        point = {**fixed, outer.name: v}
        wi = layout.window(ctx, iv.name, point)
        x0 = known[0][1]
        if iv.near_predict and len(known) >= 2 and known[0][2] != known[1][2]:
            # follow the ridge: the inner optimum extrapolated along the two nearest outer values
            (_, xa, va), (_, xb, vb) = known[0], known[1]
            x0 = min(max(xa + (xb - xa) * (v - va) / (vb - va), wi.lo), wi.hi)
        a, b = max(wi.lo, x0 - iv.near_half_width), min(wi.hi, x0 + iv.near_half_width)
        obj = _Objective(layout, ctx, iv, point, exact=False)
        if b - a < iv.near_min_width or not a < x0 < b:
            total += obj.n
            return inner(v)
        edge_a = edge_b = False
        name_a = name_b = ""
        if not obj(a).ok or not obj(b).ok:
            # an edge of the feasible region inside the bracket: from the nearest optimum,
            # which is feasible here too or the full search decides, to each infeasible end
            if not obj(x0).ok:
                total += obj.n
                return inner(v)
            if not obj(a).ok:
                (a, name_a), edge_a = _feasible_edge(obj, x0, a), True
            if not obj(b).ok:
                (b, name_b), edge_b = _feasible_edge(obj, x0, b), True
        if obj(a).ok and obj(b).ok and obj(a).regime != obj(b).regime:
            # the turbine's stage count jumps inside the bracket: the net power does too, and the
            # full search looks at each side of the jump (see _scan_and_refine)
            total += obj.n
            return inner(v)
        tol = iv.near_xatol or iv.xatol
        x = _outlet_kink(obj, a, x0, b, tol)
        if x is None:
            x = _refine(obj.power, a, b, tol)
        for _ in range(2):
            # an optimum at a bracket end that is no edge: walk the bracket that way, twice at most
            if b - x < 10 * tol and not edge_b and b < wi.hi:
                a, b = x - 0.5 * iv.near_half_width, min(wi.hi, x + iv.near_half_width)
            elif x - a < 10 * tol and not edge_a and a > wi.lo:
                a, b = max(wi.lo, x - iv.near_half_width), x + 0.5 * iv.near_half_width
            else:
                break
            if not (obj(a).ok and obj(b).ok):
                break
            x = _refine(obj.power, a, b, tol)
        total += obj.n
        if (x - a < 10 * tol and not edge_a and a > wi.lo) or (b - x < 10 * tol and not edge_b and b < wi.hi):
            return inner(v)
        sits = lambda end: _sits_on(obj.power, x, end, tol)  # noqa: E731
        if edge_b and sits(b):
            limit = name_b
        elif edge_a and sits(a):
            limit = name_a
        elif sits(wi.hi):
            limit = wi.hi_name
        elif sits(wi.lo):
            limit = wi.lo_name
        else:
            limit = INTERIOR
        memo[v] = (obj(x), limit, obj.n, ([], [], []))
        return memo[v]

    scores: dict[float, float] = {}

    def power(v: float, near: bool = False) -> float:
        r = (inner_near(v) if near else inner(v))[0]
        if v not in scores:
            scores[v] = score(r, ctx) if r is not None else -math.inf
        return scores[v]

    if w.hi <= w.lo:
        grid = np.array([w.lo])
    else:
        grid = np.linspace(w.lo, w.hi, outer.scan_points)
    envelope_stop = False
    if outer.scan_from:
        # the full inner search at one end of the grid (Variable.scan_from), then each next point
        # warm-started from its neighbour (a full search wherever that cannot be trusted, see
        # inner_near), on to where the objective has fallen twice in a row past its best (one peak)
        W = [-math.inf] * len(grid)
        order = range(len(grid) - 1, -1, -1) if outer.scan_from == "top" else range(len(grid))
        seen: list[int] = []
        for k in order:
            W[k] = power(float(grid[k]), near=True)
            seen.append(k)
            if len(seen) == 1 and len(grid) > 1 and len(inner_vars) == 1:
                stop, n = _envelope_falls(layout, ctx, inner_vars[0], outer, memo.get(float(grid[k])),
                                          float(grid[order[1]]) - float(grid[k]))
                total += n
                if stop:
                    envelope_stop = True
                    break
            best_k = max(sorted(seen), key=lambda m: W[m])  # ties: the lowest value
            if len(seen) - seen.index(best_k) >= 3 and W[seen[-1]] < W[seen[-2]] < W[best_k]:
                break
    else:
        W = [power(float(g)) for g in grid]
    if not np.any(np.isfinite(W)):
        return None, inner(float(grid[0]))[1], total, ([], [], [])
    i = int(np.argmax(W))
    best = float(grid[i])
    near_power = lambda v: power(v, near=True)  # noqa: E731
    if len(grid) > 1 and not envelope_stop:
        a, b = float(grid[max(i - 1, 0)]), float(grid[min(i + 1, len(grid) - 1)])
        x = _at_bound(near_power, grid, i, outer.xatol) if outer.scan_from else None
        if x is None:
            x = _refine_across_regimes(near_power, lambda v: inner_near(v)[0], a, best, b, outer.xatol)
        best = max([float(grid[i]), x], key=near_power)
    if not polish:
        r, limit, _, scan = inner_near(best)
        return r, limit, total, scan
    point = {**fixed, outer.name: best}
    if outer.scan_from and len(inner_vars) == 1 and memo.get(best, (None,))[0] is not None:
        # polish the warm-started inner optimum at the best outer value on the discretised
        # model; the chart's scan of the inner variable there is the coarse scan alone
        iv = inner_vars[0]
        x_in = memo[best][0].variables[iv.name]
        fast = _Objective(layout, ctx, iv, point, exact=False)
        wi = layout.window(ctx, iv.name, point)
        grid_in = np.linspace(wi.lo, wi.hi, iv.scan_points)
        if best in scanned and list(memo[best][3][0]) == list(grid_in):
            # the full inner search at this outer value began with this very scan: taken as it is
            fast.seed(grid_in, scanned[best])
            scan = memo[best][3]
        else:
            _, scan = _scan(fast, grid_in)
        r, limit, n = _polish(layout, ctx, iv, point, fast, x_in, memo[best][1], wi)
        total += fast.n + n
    else:
        # polish at the best outer value with the full inner search
        r, limit, n, scan = _optimise_nested(layout, ctx, inner_vars, point, polish=True)
        total += n
    if r is None:
        return None, limit, total, scan
    return r, _with_bound(limit, outer, w, best, near_power), total, scan


def _envelope_falls(layout: Layout, ctx: CycleContext, iv: Variable, outer: Variable, found, spacing: float):
    """True when the objective falls off the first scan point v0 of a scanned outer variable into
    the window (the optimum is at v0), by the envelope theorem; (answer, evaluations spent).

    Envelope theorem (e.g. Mas-Colell, Whinston and Green, *Microeconomic Theory*, Oxford 1995,
    mathematical appendix; from memory): where the inner optimum x*(v0) is interior and the objective smooth there,
    d score*(v)/dv at v0 equals the partial derivative of the score in v at fixed x*(v0). The
    score is evaluated at v0 and at v0 + h (h: one outer tolerance, the scan's resolution and
    _at_bound's step, towards the window), each at x* and x* +- d (d: ten inner tolerances, the
    distance _sits_on calls the optimum's own); the parabola through each three (the inner
    variable's curvature) estimates the O(h^2) gain of re-optimising x at v0 + h, which is taken
    off the fall at fixed x*. The answer is yes only when all six points are feasible, share
    the regime, the pinch location and a dry turbine outlet, both parabolas open downwards
    (a smooth interior maximum, no kink between binding constraints within d), and the fall
    exceeds ENVELOPE_FALL_RTOL; otherwise the scan goes on as before. A wet outlet is left to
    the scan: the structure of the cycle changes where the outlet crosses the dew line further
    along the outer variable, and the objective can rise again past a first dip there.
    """
    r, limit = (found or (None, ""))[:2]
    if r is None or not r.ok or limit != INTERIOR:
        return False, 0
    h = math.copysign(outer.xatol, spacing)
    if abs(spacing) <= abs(h):
        return False, 0
    x, d, v0 = r.variables[iv.name], 10.0 * iv.xatol, r.variables[outer.name]
    eta = getattr(r.turbine_design, "efficiency", r.eta_turbine)
    tops, pts = [], []
    for v in (v0, v0 + h):
        at = [layout.evaluate(ctx, {**r.variables, outer.name: v, iv.name: x + k * d}, exact=False, T_cond_guess_K=r.T_cond_K,
                              cond_tol_K=ENVELOPE_COND_TOL_K, eta_guess=eta) for k in (-1, 0, 1)]
        pts += at
        if not all(p.ok for p in at):
            return False, len(pts)
        lo, mid, hi = (score(p, ctx) for p in at)
        curvature = lo + hi - 2.0 * mid
        if not curvature < 0.0:
            return False, len(pts)
        tops.append(mid + (hi - lo) ** 2 / (-8.0 * curvature))  # the parabola's vertex value
    same = len({(p.regime, p.pinch_location) for p in pts}) == 1
    dry = all(math.isnan(p.turbine_outlet_quality) for p in pts)
    return same and dry and tops[0] - tops[1] > ENVELOPE_FALL_RTOL * abs(tops[0]), len(pts)


def _refine_across_regimes(power, result_at, a: float, x_best: float, b: float, xatol: float) -> float:
    """Best outer value in [a, b] around the best scan point x_best. Where the regime of the inner
    optimum (the turbine's stage count, CycleResult.regime) differs between x_best and an end of
    the bracket, the net power jumps in between: the jump is found by bisection to xatol and
    each side is refined on its own (a search across the jump may settle on the wrong side)."""
    def regime(v):
        r = result_at(v)
        return None if r is None else r.regime

    own = regime(x_best)
    lo, hi, far_sides = a, b, []
    for end in (a, b):
        other = regime(end) if end != x_best else own
        if own is None or other is None or other == own:
            continue
        x_in, x_out = x_best, end
        while abs(x_out - x_in) > xatol:
            mid = 0.5 * (x_in + x_out)
            x_in, x_out = (mid, x_out) if regime(mid) == own else (x_in, mid)
        if end < x_best:
            lo, far = x_in, (end, x_out)
        else:
            hi, far = x_in, (x_out, end)
        far_sides.append(far)
    candidates = [_refine(power, lo, hi, xatol)] + [_refine(power, p, q, xatol) for p, q in far_sides]
    return max(candidates, key=power)


def _at_bound(power, grid, i: int, xatol: float) -> float | None:
    """The window's end when the best scan point is that end and the objective still rises into
    it over the last xatol (the optimum sits on the bound: no search needed), else None."""
    for end, inward in ((len(grid) - 1, -xatol), (0, xatol)):
        if i == end and len(grid) > 1:
            x = float(grid[end])
            if power(x) > power(x + inward):
                return x
    return None


def _sits_on(power, x: float, end: float, xatol: float) -> bool:
    """True when the optimum x sits on the bound or edge ``end``: within 10 xatol of it and the
    objective there at least as good as at x. An optimum the search found strictly better than
    the bound close by is an interior one (the bound does not hold it back)."""
    return x == end or (abs(x - end) <= 10 * xatol and power(end) >= power(x))


def _joined(*limits: str) -> str:
    """Binding limits joined with "; " (each once, in order); INTERIOR when none binds."""
    named = [p for limit in limits for p in limit.split("; ") if p and p != INTERIOR]
    return "; ".join(dict.fromkeys(named)) or INTERIOR


def _with_bound(limit: str, var: Variable, w: Window, x: float, power) -> str:
    """The binding limit of an inner optimum, with the outer variable's bound if it sits on one
    (power: the objective of the outer variable, larger is better)."""
    if w.hi > w.lo:
        bound = w.hi_name if _sits_on(power, x, w.hi, var.xatol) else w.lo_name if _sits_on(power, x, w.lo, var.xatol) else ""
        if bound:
            return _joined(limit, bound)
    return limit


def _source_outlet_binding(r: CycleResult, ctx: CycleContext, limit: str) -> str:
    """The binding limit with the source outlet limit in front when the source leaves at its
    minimum outlet temperature (within SOURCE_OUTLET_TOL_K): the heater's flow is then held by
    that limit (alone, or with the pinch at the optimum's kink), whatever the free variables."""
    T_min = getattr(ctx.source, "T_out_min_K", None)
    T_out = getattr(r, "T_source_out_K", math.nan)
    if T_min is None or not T_out <= T_min + SOURCE_OUTLET_TOL_K:
        return limit
    return _joined(SOURCE_OUTLET_LIMIT, limit)


def optimise(layout: Layout, ctx: CycleContext) -> Optimum | tuple[None, str, int]:
    """Best cycle of one fluid and layout for the objective of ctx.settings (net power by
    default; orcscreen.objectives), over the layout's free variables.

    Returns an :class:`Optimum`, or (None, reason, evaluations) when nothing is feasible. The
    result depends only on the arguments: guesses carried between evaluations are reset first,
    so the same case gives the same bits in any process and after any other case.
    """
    reset_guesses()
    layout = with_case_variables(layout, ctx)
    why = layout.unsuited(ctx)
    if why:
        return None, why, 0
    variables = layout.variables(ctx)
    r, limit, n, scan = _optimise_nested(layout, ctx, variables, {}, polish=True)
    if r is None:
        return None, limit, n
    r, limit, n, scan = _stages_for_cost(layout, ctx, variables, (r, limit, n, scan))
    return Optimum(r, _source_outlet_binding(r, ctx, limit), n, variables[0], *scan)


def _stages_for_cost(layout: Layout, ctx: CycleContext, variables, found: tuple) -> tuple:
    """Under a cost objective, the turbine's stage count as part of the optimum: every stage
    costs money and the efficiency correlation always favours more, so the optimum's cycle is
    evaluated with each larger stage count the model allows; where one scores better there,
    the case is optimised again with at least that many stages, and the best is kept. Without
    a cost objective (or a stage count) the fewest stages of the model's rule stand."""
    r, limit, n, scan = found
    objective = getattr(ctx.settings, "objective", None)
    model = ctx.settings.turbine
    stages = getattr(r.turbine_design, "stages", None)
    if objective is None or not objective.needs_costs or not stages or stages != stages:
        return found
    best = found
    for k in range(int(stages) + 1, getattr(model, "max_stages", 0) + 1):
        at_k = replace(ctx, settings=replace(ctx.settings, turbine_min_stages=k))
        trial = layout.evaluate(at_k, r.variables, exact=True)
        n += 1
        if score(trial, at_k) <= score(best[0], ctx):
            continue
        r_k, limit_k, n_k, scan_k = _optimise_nested(layout, at_k, variables, {}, polish=True)
        n += n_k
        if r_k is not None and score(r_k, at_k) > score(best[0], ctx):
            best = (r_k, _joined(limit_k, f"{k} turbine stages pay for themselves"), n, scan_k)
    return best[0], best[1], n, best[3]
