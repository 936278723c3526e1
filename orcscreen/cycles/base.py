"""What every cycle layout shares: settings, result, free variables, the Layout base, machines.

A layout (one module per family in this package, registered in ``cycles.LAYOUTS``) declares

* its free variables (:class:`Variable`, innermost first) and their bounds for the case at hand
  (:meth:`Layout.window`), which the optimiser searches;
* how it evaluates (:meth:`Layout.evaluate`): its states, its exchangers and its figures, as a
  :class:`CycleResult`, or an infeasible result with the reason in plain words;
* its state labels (in cycle order) for tables and the T-s chart, and its T-s path;
* the limits that apply to it, its exchangers and the output columns it fills.

Everything else (study validation, JSON Schema, optimiser, output columns, charts, report)
reads these declarations: a new layout is one module plus its registration.

Machines (DESIGN section 3): pump h2 = h1 + (h2s - h1)/eta_pump; turbine h4 = h3 - eta_t (h3 - h4s),
eta_t from the turbine model object (:mod:`orcscreen.turbine`). Units: SI inside (K, Pa, J/kg, W).
Source: the vapour power cycle with isentropic efficiencies, e.g. Moran, Shapiro, Boettner,
Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed., Wiley 2014, chapter 8.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ..exchangers import Profile, condenser_approach, condenser_points, condensing_glide_duty, heater_profile
from ..paths import flash_ph, state_from_ph, two_phase_state
from ..states import CycleInfeasible, SatPoint, State
from ..turbine import ConstantEfficiency, TurbineModel, size_parameter_m, volume_ratio

__all__ = [
    "CycleSettings",
    "CycleContext",
    "ColdSide",
    "STATE_LABELS",
    "cycle_result",
    "exchanger_profiles",
    "SEARCH_ZONE_SEGMENTS",
    "CycleResult",
    "CycleInfeasible",
    "Variable",
    "Window",
    "Layout",
    "pump",
    "expand",
    "reset_guesses",
    "condensing_floor_K",
    "infeasible",
    "P_ATM_PA",
]

P_ATM_PA = 101325.0
#: Tolerances [-] on the turbine efficiency of a size-dependent model's fixed point (the net power
#: moves about as much, relatively), in the discretised and the closed-form model; iterations allowed.
ETA_TOL_EXACT = 1e-8
ETA_TOL_FAST = 1e-9
ETA_ITERATIONS = 30


@dataclass(frozen=True)
class CycleSettings:
    """Settings of one cycle evaluation, SI units (see DESIGN section 3 for the defaults).

    superheat_K: a fixed turbine-inlet superheat of the subcritical layouts [K], or None to
    optimise it in [0, max_superheat_K]. reheat_temperature_K: reheater outlet [K], None for the
    turbine inlet temperature (common practice). max_supercritical_reduced_pressure: highest
    heater pressure of a transcritical cycle over the critical pressure.
    """

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
    max_supercritical_reduced_pressure: float = 1.3
    min_turbine_outlet_quality: float = 0.9
    min_condensing_pressure_Pa: float | None = None
    flag_condensing_pressure_below_Pa: float | None = None
    flag_size_parameter_above_m: float | None = None
    subcooling_K: float = 0.0
    superheat_K: float | None = 0.0
    max_superheat_K: float = 50.0
    reheat_temperature_K: float | None = None
    max_turbine_inlet_temperature_K: float | None = None
    n_zone_segments: int = 20
    #: overall heat-transfer coefficients [W/(m2 K)] by exchanger zone that the study gives
    #: (orcscreen.areas.ZONES); the streams' defaults fill the rest
    u_W_m2K: Mapping[str, float] = field(default_factory=dict, hash=False)
    #: the case's economics (orcscreen.economics.Economics), None for none
    economics: object = field(default=None, hash=False)
    #: what the optimiser makes best (orcscreen.objectives.Objective), None for the net power
    objective: object = None
    #: fewest turbine stages (a size-dependent model takes at least these; the optimiser raises
    #: it where more stages pay for themselves under a cost objective)
    turbine_min_stages: int = 1
    #: bounds [K] of the case's free variables (orcscreen.case_variables), None where fixed: the
    #: pinches (with a cost objective) and the sink's temperature rise
    pinch_evaporator_bounds_K: tuple[float, float] | None = None
    pinch_condenser_bounds_K: tuple[float, float] | None = None
    sink_rise_bounds_K: tuple[float, float] | None = None
    #: build the exchanger profiles in the search too (the closed-form model's points), for an
    #: objective that needs areas and costs at every evaluation
    profiles_in_search: bool = False

    def max_evaporation_pressure_Pa(self, fluid) -> float:
        """Highest allowed subcritical evaporation pressure [Pa]: min(p_max, r_max p_crit)."""
        p = self.max_reduced_pressure * fluid.p_crit_Pa
        if self.max_pressure_Pa is not None:
            p = min(p, self.max_pressure_Pa)
        return p

    def max_heater_pressure_Pa(self, fluid) -> tuple[float, str]:
        """Highest allowed supercritical heater pressure [Pa] and the name of the limit that sets it."""
        p = self.max_supercritical_reduced_pressure * fluid.p_crit_Pa
        if self.max_pressure_Pa is not None and self.max_pressure_Pa < p:
            return self.max_pressure_Pa, "max pressure"
        return p, "max supercritical reduced pressure"


@dataclass(frozen=True)
class CycleContext:
    """One case's fixed inputs: the working fluid, the source and sink streams (either may be
    None when a by-hand evaluation fixes the flow or the condensing temperature) and settings."""

    fluid: object
    source: object
    sink: object
    settings: CycleSettings
    #: results of one evaluation that do not depend on the turbine efficiency (pump outlets,
    #: isentropic expansion ends, the heater closure), kept across the passes of a size-dependent
    #: turbine's fixed point (see Layout.evaluate); None outside it
    memo: dict | None = field(default=None, compare=False)
    #: the turbine model in effect: settings.turbine, or a constant efficiency while a
    #: size-dependent model's fixed point is solved (see Layout.evaluate)
    turbine_now: object = field(default=None, compare=False)

    @property
    def turbine(self):
        """The turbine model an expansion uses now."""
        return self.settings.turbine if self.turbine_now is None else self.turbine_now


@dataclass(frozen=True)
class Variable:
    """A free variable of a layout, as the optimiser sees it.

    name: key in the variables mapping, SI unit in the name; label: words for charts; unit: the
    display unit of its column; scale, offset: display value = SI value * scale + offset;
    scan_points: points of the bracketing scan; xatol: tolerance of the refinement [SI];
    near_half_width: half width [SI] of the warm-started bracket when an outer variable moves;
    near_min_width: a warm-started bracket narrower than this [SI] uses the full search instead;
    near_xatol: tolerance of a warm-started search inside an outer search (None: xatol); the
    optimum's own search always uses xatol; near_predict: centre that bracket on the optimum
    extrapolated along the two nearest outer values (a ridge) rather than on the nearest one;
    scan_from: as an outer variable, "top" or "bottom": scan from that end of its window, each
    point's inner optimum warm-started from the point before (one full inner search instead of
    one per point), and stop where the objective has fallen twice in a row past its best (one
    peak assumed); None: every scan point gets a full inner search.
    """

    name: str
    label: str
    unit: str
    scale: float = 1.0
    offset: float = 0.0
    scan_points: int = 10
    xatol: float = 2e-3
    near_half_width: float = 3.0
    near_min_width: float = 1.0
    near_xatol: float | None = None
    near_predict: bool = False
    scan_from: str | None = None

    def __post_init__(self):
        if self.scan_from not in (None, "top", "bottom"):
            raise ValueError(f"Variable {self.name}: scan_from is 'top', 'bottom' or None, not {self.scan_from!r}")

    def display(self, value: float) -> float:
        return value * self.scale + self.offset


@dataclass(frozen=True)
class Window:
    """Bounds of one variable [SI] for the case and the outer variables, with the names of the
    limits that set them (reported as the binding limit when the optimum sits on one)."""

    lo: float
    hi: float
    lo_name: str
    hi_name: str


class HotSide:
    """The heater of a fixed design as orcscreen.offdesign moves it (one per family of layouts).

    u: the pressure coordinate the turbine's swallowing capacity sets (sliding pressure), in a
    unit where STEP_U is a fit finite-difference step and a Newton step is clipped to 5; hot: the
    hot-end value an operator holds (raises, to answer a wet expansion or the pressure limit)."""

    #: the words of u and hot
    coordinate: str = ""
    hot_words: str = ""
    #: the layout's free variable that sets u at the design
    variable: str = ""

    def of_design(self, r: "CycleResult") -> tuple[float, float]:
        """(u, hot) of a design result."""
        raise NotImplementedError

    def highest_u(self, ctx: "CycleContext") -> float:
        """u at the layout's pressure limit (inf when none applies)."""
        raise NotImplementedError

    def point(self, ctx: "CycleContext", u: float, hot: float, T_cond_K: float, T_source_K: float):
        """(free variables x of the layout, turbine-inlet state) at (u, hot), or None outside
        the fluid's or the source's range."""
        raise NotImplementedError

    def heating_path(self, ctx: "CycleContext", u: float, states: Mapping[str, "State"], n: int):
        """The heater's discretised path at u between the cycle's states (orcscreen.paths), per kg
        of the heater's flow; it ends at the heater's outlet enthalpy."""
        raise NotImplementedError

    #: the state entering the second section of a turbine split by a bleed or a reheat ("" for
    #: a turbine of one section); its pressure is the middle pressure, a third unknown off design
    lp_inlet: str = ""

    def middle_of_design(self, ctx: "CycleContext", r: "CycleResult") -> tuple[float, float]:
        """(saturation temperature of the middle pressure [K], the value held there [SI]) of a
        design whose turbine has two sections."""
        raise NotImplementedError

    def middle(self, ctx: "CycleContext", T_mid_K: float, held: float) -> dict:
        """The layout's free variables that put the middle pressure at saturation temperature
        T_mid_K (and hold the value held there)."""
        raise NotImplementedError

    def isentropic_expansion(self, fluid, states: Mapping[str, "State"], sat_c) -> tuple[float, float]:
        """(isentropic enthalpy drop of the turbine [J/kg], specific volume at its isentropic
        outlet [m3/kg]): the part-load correlation's a and b. One expansion from state 3."""
        st4s = isentropic_end(fluid, states["3"], sat_c)
        return states["3"].h - st4s.h, st4s.v


@dataclass(frozen=True)
class CycleResult:
    """Everything one cycle evaluation produced. Powers [W], flows [kg/s], temperatures [K].

    T_evap_K and superheat_K are NaN for a supercritical heater; p_evap_Pa is the highest cycle
    pressure (the evaporator's, or the supercritical heater's). figures holds the layout's own
    figures, in the units of their output columns (e.g. bleed_fraction, reheat_pressure_bar).
    """

    status: str  # "ok" or "infeasible"
    reason: str = ""
    limit: str = ""  # the limit that was broken (infeasible) or that sets the flow
    layout: str = ""
    variables: dict = field(default_factory=dict)
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
    turbine_inlet: str = "3"  # state keys of the turbine inlet and of its (last) outlet
    turbine_outlet: str = "4"
    turbine_design: object = None  # the size-dependent model's TurbineDesign (stages, warnings), else None
    figures: dict = field(default_factory=dict)
    profiles: dict = field(default_factory=dict)
    margin: float = math.nan  # infeasible: signed distance to the broken limit, if it has one

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    @property
    def regime(self):
        """What the net power jumps across: the turbine's stage count (None without one). The
        optimiser searches each side of such a jump on its own."""
        stages = getattr(self.turbine_design, "stages", None)
        return None if stages is None or stages != stages else stages

    @property
    def turbine_outlet_quality(self) -> float:
        """Vapour quality at the (last) turbine outlet; NaN when it is superheated or unknown."""
        st = self.states.get(self.turbine_outlet)
        return math.nan if st is None else st.q


def infeasible(limit: str, reason: str, margin: float = math.nan, **known) -> CycleResult:
    """An infeasible result with the broken limit, the reason and what is known of the point."""
    return CycleResult(status="infeasible", reason=reason, limit=limit, margin=margin, **known)


def C(T_K: float) -> str:
    """A temperature [K] in words, in °C."""
    return f"{T_K - 273.15:.1f} °C"


class Layout:
    """Base of every cycle layout (module docstring). Subclasses set the class attributes and
    implement variables, window, evaluate and ts_path."""

    name: str = ""
    description: str = ""
    #: state keys in cycle order -> words (tables, T-s chart)
    state_labels: Mapping[str, str] = {}
    #: the limits that apply to the layout, in words (documentation and the report)
    limits: tuple[str, ...] = ()
    #: the exchangers it has, named as in CycleResult.profiles
    exchangers: tuple[str, ...] = ()
    #: True when it works with a zeotropic mixture (a glide in its exchangers, states from the
    #: mixture's table: orcscreen.mixture_properties); a mixture case of any other layout is
    #: recorded as not evaluated, with the reason
    takes_mixtures: bool = False
    #: output columns of its own (besides the common ones), filled from CycleResult.figures
    columns: tuple[str, ...] = ()
    #: a supercritical heater (no evaporation plateau)
    supercritical: bool = False
    #: cost of one optimisation relative to the basic layout's, as measured (benchmarks/
    #: bench_layouts.py, total over total, 2026-12-02; the transcritical layouts' 2026-12-03,
    #: after the kink search): for the time estimate of `orcscreen check`
    cost_factor: float = 1.0
    #: how orcscreen.offdesign moves the heater of a fixed design (a HotSide: its pressure
    #: coordinate, the hot end held, the state and path at a point); None: off design not modelled
    hot_side: "HotSide | None" = None

    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        """The free variables for this case, innermost (searched most often) first."""
        raise NotImplementedError

    def unsuited(self, ctx: CycleContext) -> str | None:
        """Why the layout cannot work for this fluid, source and sink at all (a reason in plain
        words, before any search), or None: here, a mixture in a layout not built for one."""
        if getattr(ctx.fluid, "is_mixture", False) and not self.takes_mixtures:
            built = ", ".join(f'"{layout.name}"' for layout in _mixture_layouts())
            return f"the {self.name} layout is not built for zeotropic mixtures (layouts that take them: {built})"
        return None

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        """Bounds of variable name given the values of the variables outside it."""
        raise NotImplementedError

    def evaluate(self, ctx: CycleContext, x: Mapping[str, float], exact: bool = True, T_cond_guess_K: float | None = None,
                 cond_tol_K: float | None = None, T_cond_K: float | None = None, m_wf_kg_s: float | None = None,
                 eta_guess: float | None = None, eta_tol: float | None = None) -> CycleResult:
        """One cycle at the free variables x (SI, by name). exact: check every pinch on the
        discretised profiles (what is reported); else on closed-form candidates (the search).
        T_cond_K fixes the condensing temperature (the sink may be None), m_wf_kg_s the
        working-fluid flow (the source may be None): for exploring by hand.

        With a size-dependent turbine model the efficiency depends on the size parameter, which
        depends on the flow, which depends (through the condenser and a recuperator) on the
        efficiency: a fixed point, solved by successive substitution from eta_guess (or the
        model's nominal efficiency) to eta_tol, by default ETA_TOL_EXACT (exact) or ETA_TOL_FAST.
        A layout may let the efficiency follow the condensing temperature inside its condenser
        iteration (cold_side_following_turbine), so that one pass usually settles it.
        The outlet-quality limit depends on the efficiency too: it is checked on the settled
        cycle. A size the model finds no turbine for is infeasible with its reason."""
        model = ctx.settings.turbine
        if not model.size_dependent:
            return self.evaluate_at(ctx, x, exact, T_cond_guess_K, cond_tol_K, T_cond_K, m_wf_kg_s)
        eta = float(eta_guess) if eta_guess is not None and 0.05 < eta_guess <= 1.0 else model.nominal_efficiency
        tol = eta_tol if eta_tol is not None else ETA_TOL_EXACT if exact else ETA_TOL_FAST
        memo: dict = {}
        settings = _without_quality_limit(ctx.settings)
        stages_seen: list = []
        min_stages = ctx.settings.turbine_min_stages
        for _ in range(ETA_ITERATIONS):
            fixed = CycleContext(ctx.fluid, ctx.source, ctx.sink, settings, memo, ConstantEfficiency(eta))
            r = self.evaluate_at(fixed, x, exact, T_cond_guess_K, cond_tol_K, T_cond_K, m_wf_kg_s)
            if not r.ok:
                return r
            design = model.design(r.size_parameter_m, r.volume_ratio, min_stages)
            stages_seen.append(design.stages)
            if len(stages_seen) >= 3 and stages_seen[-1] == stages_seen[-3] != stages_seen[-2] and design.stages == design.stages:
                # at the edge between n and n + 1 stages the count flips with the efficiency it
                # gives: n + 1 stages (which fit either way) is the turbine that settles
                min_stages = max(s for s in stages_seen if s == s)
                design = model.design(r.size_parameter_m, r.volume_ratio, min_stages)
            if design.reason:
                return infeasible("turbine", design.reason, math.nan, layout=r.layout, variables=r.variables,
                                  T_evap_K=r.T_evap_K, p_evap_Pa=r.p_evap_Pa, T_cond_K=r.T_cond_K, p_cond_Pa=r.p_cond_Pa)
            if abs(design.efficiency - r.eta_turbine) <= tol:  # a layout may have moved it (see subcritical)
                wet = self._quality_below(r, ctx.settings.min_turbine_outlet_quality)
                if wet:
                    return infeasible("turbine outlet quality", wet[0], wet[1], layout=r.layout, variables=r.variables,
                                      T_evap_K=r.T_evap_K, p_evap_Pa=r.p_evap_Pa, T_cond_K=r.T_cond_K, p_cond_Pa=r.p_cond_Pa)
                object.__setattr__(r, "turbine_design", design)  # r is this call's own, just made
                return r
            eta, T_cond_guess_K = design.efficiency, r.T_cond_K
        return infeasible("turbine", f"the turbine efficiency and size did not settle (last {eta:.4f})", math.nan,
                          layout=r.layout, variables=r.variables)

    #: state keys of the turbine outlets the outlet-quality limit applies to
    turbine_outlets: tuple[str, ...] = ("4",)

    def _quality_below(self, r: CycleResult, x_min: float) -> tuple[str, float] | None:
        """(reason, margin) when a turbine outlet of r is wetter than x_min, else None."""
        for key in self.turbine_outlets:
            q = r.states[key].q
            if not math.isnan(q) and q < x_min:
                where = self.state_labels.get(key, "turbine outlet")
                return (f"{where} quality {q:.3f} is below the limit {x_min:.3f} (a wet expansion; superheat or a "
                        f"hotter turbine inlet may help)", q - x_min)
        return None

    def evaluate_at(self, ctx: CycleContext, x: Mapping[str, float], exact: bool = True,
                    T_cond_guess_K: float | None = None, cond_tol_K: float | None = None, T_cond_K: float | None = None,
                    m_wf_kg_s: float | None = None) -> CycleResult:
        """One cycle with the turbine efficiency of ctx.settings.turbine as it is (see evaluate)."""
        raise NotImplementedError

    def ts_path(self, fluid, r: CycleResult) -> tuple[list[float], list[float]]:
        """Closed path (s [J/(kg K)], T [K]) of an evaluated cycle through its states."""
        raise NotImplementedError

    #: what a cycle given by hand needs, besides the condensing side (names of variables_for)
    hand_inputs: tuple[str, ...] = ()

    def variables_for(self, fluid, given: Mapping[str, float | None]) -> dict[str, float]:
        """The free variables x of a cycle given by hand: given holds SI values by name
        (evaporation_temperature_K, high_pressure_Pa, turbine_inlet_temperature_K,
        bleed_pressure_Pa, reheat_pressure_Pa, reheat_temperature_K), None when not given.
        Raises ValueError naming what is missing or does not apply."""
        raise NotImplementedError


def _mixture_layouts() -> list:
    """The registered layouts that take mixtures (read from the registry when asked)."""
    from . import LAYOUTS

    return [layout for layout in LAYOUTS.values() if layout.takes_mixtures]


def unused_inputs(layout: Layout, given: Mapping[str, float | None]) -> None:
    """Refuse inputs a layout does not use (a cycle given by hand must not silently drop one)."""
    extra = [k for k, v in given.items() if v is not None and k not in layout.hand_inputs]
    if extra:
        raise ValueError(f"layout {layout.name!r} does not use {', '.join(extra)}; it takes {', '.join(layout.hand_inputs)}")

    def __repr__(self) -> str:
        return f"<layout {self.name!r}>"


# ---------------------------------------------------------------------------------------------
# machines
# ---------------------------------------------------------------------------------------------
#: Last vapour cp [J/(kg K)] seen per fluid: the first guess of the expansion-outlet flash.
#: Cleared at the start of every optimisation (:func:`reset_guesses`), so that a result does not
#: depend, even in its last bits, on what the process computed before.
_CP_VAPOUR_HINT: dict[str, float] = {}


def reset_guesses() -> None:
    """Forget the first guesses carried between evaluations (call at the start of a case)."""
    _CP_VAPOUR_HINT.clear()


def _superheated_ps(fluid, sat: SatPoint, s: float) -> State:
    """Superheated vapour at the pressure of sat and entropy s (s > sV), phase-imposed Newton."""
    cp = _CP_VAPOUR_HINT.get(fluid.name, 1000.0)
    T0 = sat.T_dew_K * math.exp((s - sat.sV) / cp)
    st = fluid.state_ps(sat.p_Pa, s, "gas", T0, sat.vV * T0 / sat.T_dew_K)
    if not math.isnan(st.cp):
        _CP_VAPOUR_HINT[fluid.name] = st.cp
    return st


def pump(fluid, st_in: State, p_out_Pa: float, efficiency: float, memo: dict | None = None) -> State:
    """Pump outlet state: h2 = h1 + (h2s - h1) / eta, the liquid phase imposed (at any pressure
    below or above the critical one, the pumped liquid stays below the critical temperature).
    memo: a CycleContext.memo (the same inlet and pressure give the same outlet)."""
    key = ("pump", st_in.h, st_in.s, p_out_Pa, efficiency)
    if memo is not None and key in memo:
        return memo[key]
    st2s = fluid.state_ps(p_out_Pa, st_in.s, "liquid", st_in.T_K, st_in.v)
    h2 = st_in.h + (st2s.h - st_in.h) / efficiency
    out = flash_ph(fluid, p_out_Pa, h2, "liquid", st2s)
    if memo is not None:
        memo[key] = out
    return out


@dataclass(slots=True)
class Expansion:
    """One expansion: isentropic outlet st_out_s, actual outlet st_out, and the efficiency used."""

    st_in: State
    st_out_s: State
    st_out: State
    eta: float

    @property
    def dh_s(self) -> float:
        return self.st_in.h - self.st_out_s.h


def isentropic_end(fluid, st_in: State, sat_out: SatPoint, memo: dict | None = None) -> State:
    """The isentropic end of an expansion from st_in to the saturation pressure of sat_out
    (two-phase or superheated). memo: a CycleContext.memo."""
    key = ("expansion", st_in.h, st_in.s, sat_out.T_K)
    if memo is not None and key in memo:
        return memo[key]
    if st_in.s <= sat_out.sV:
        q4s = (st_in.s - sat_out.sL) / (sat_out.sV - sat_out.sL)
        if q4s < 0.0:
            raise CycleInfeasible("turbine outlet quality", "the expansion would end as a liquid", q4s)
        st_s = (fluid.two_phase_state(sat_out.p_Pa, st_in.s, entropy=True) if sat_out.glide_K > 0.0
                else two_phase_state(sat_out, sat_out.T_K, q4s))
    else:
        st_s = _superheated_ps(fluid, sat_out, st_in.s)
    if memo is not None:
        memo[key] = st_s
    return st_s


def expand(fluid, st_in: State, sat_out: SatPoint, turbine: TurbineModel, memo: dict | None = None) -> Expansion:
    """Expansion from st_in to the saturation pressure of sat_out (two-phase or superheated end).
    memo: a CycleContext.memo (the isentropic end does not depend on the efficiency)."""
    st_s = isentropic_end(fluid, st_in, sat_out, memo)
    eta = turbine.efficiency(math.nan, st_s.v / st_in.v)
    h_out = st_in.h - eta * (st_in.h - st_s.h)
    st_out = state_from_ph(fluid, sat_out, h_out, st_s if h_out > sat_out.hV and math.isnan(st_s.q) else None)
    return Expansion(st_in, st_s, st_out, eta)


@functools.lru_cache(maxsize=64)
def _without_quality_limit(settings: CycleSettings) -> CycleSettings:
    """The settings with no outlet-quality limit (checked on the settled cycle instead)."""
    return dataclasses.replace(settings, min_turbine_outlet_quality=0.0)


def condensing_floor_K(fluid, sink, s: CycleSettings) -> float:
    """Lowest condensing temperature [K]: the sink inlet plus the condenser pinch (plus the
    subcooling), the condensing-pressure floor if set, and the equation's lowest temperature.
    A floor at or above the critical pressure leaves nothing to condense: infeasible."""
    T_floor = sink.T_in_K + s.pinch_condenser_K + s.subcooling_K
    if s.min_condensing_pressure_Pa is not None:
        if s.min_condensing_pressure_Pa >= fluid.p_crit_Pa:
            raise CycleInfeasible(
                "min condensing pressure",
                f"the condensing-pressure floor {s.min_condensing_pressure_Pa / 1e5:.4g} bar is not below the critical "
                f"pressure of {fluid.name} ({fluid.p_crit_Pa / 1e5:.4g} bar): it cannot condense",
            )
        T_floor = max(T_floor, fluid.T_sat_floor_K(s.min_condensing_pressure_Pa))
    return max(T_floor, fluid.T_min_K + s.subcooling_K + 0.01)


def condenser_outlet(fluid, sat_c: SatPoint, subcooling_K: float) -> State:
    """Condenser outlet: saturated liquid at the condensing pressure, or subcooled by subcooling_K."""
    if subcooling_K > 0.0:
        return fluid.state_pT(sat_c.p_Pa, sat_c.T_K - subcooling_K, "liquid")
    return State(sat_c.T_K, sat_c.p_Pa, sat_c.hL, sat_c.sL, sat_c.vL, 0.0)


# ---------------------------------------------------------------------------------------------
# T-s chart helpers
# ---------------------------------------------------------------------------------------------
def isobar_ts(fluid, sat: SatPoint, h_from: float, h_to: float, n: int) -> tuple[list[float], list[float]]:
    """(s, T) points along the subcritical isobar of sat's pressure from h_from to h_to (inclusive)."""
    s_pts, T_pts = [], []
    knots = [h_from, h_to]
    for h_edge in (sat.hL, sat.hV):  # put the saturation corners on the path
        if min(h_from, h_to) < h_edge < max(h_from, h_to):
            knots.append(h_edge)
    knots = sorted(knots, reverse=bool(h_from > h_to))
    for a, b in zip(knots[:-1], knots[1:]):
        for h in np.linspace(a, b, n + 1)[:-1]:
            st = state_from_ph(fluid, sat, float(h))
            s_pts.append(st.s)
            T_pts.append(st.T_K)
    st = state_from_ph(fluid, sat, h_to)
    s_pts.append(st.s)
    T_pts.append(st.T_K)
    return s_pts, T_pts


def supercritical_isobar_ts(fluid, p_Pa: float, h_from: float, h_to: float, n: int) -> tuple[list[float], list[float]]:
    """(s, T) points along an isobar above the critical pressure from h_from to h_to (inclusive)."""
    s_pts, T_pts = [], []
    for h in np.linspace(h_from, h_to, 3 * n + 1):
        st = fluid.state_ph(p_Pa, float(h))
        s_pts.append(st.s)
        T_pts.append(st.T_K)
    return s_pts, T_pts


def saturation_dome(fluid, T_low_K: float, n: int = 60) -> tuple[list[float], list[float], list[float], list[float]]:
    """Saturation dome: temperatures [K] of the saturated vapour, liquid and vapour entropies
    [J/(kg K)], and temperatures [K] of the saturated liquid (the same as the first for a pure
    fluid; the bubble temperatures at the same pressures for a mixture).

    From T_low_K (not below the fluid's lowest temperature) to just below the critical point
    (a mixture: the end of its table), spaced more densely near the top.
    """
    from ..states import PropertyError

    T_lo = max(T_low_K, fluid.T_min_K + 0.01)
    T_top = fluid.T_sat_max_K * (1.0 - 1e-5)
    u = np.linspace(0.0, 1.0, n)
    T = T_lo + (T_top - T_lo) * (1.0 - (1.0 - u) ** 2)
    T_ok, sL, sV, TL = [], [], [], []
    for t in T:
        try:
            sat = fluid.sat_T(float(t))
        except PropertyError:  # some equations of state fail very close to the critical point
            continue
        T_ok.append(float(t))
        sL.append(sat.sL)
        sV.append(sat.sV)
        TL.append(sat.T_K)
    return T_ok, sL, sV, TL


# ---------------------------------------------------------------------------------------------
# cold side and result of the layouts with one pump and one turbine
# ---------------------------------------------------------------------------------------------
@dataclass
class ColdSide:
    """Condenser outlet, pump, expansion and (optional) recuperator at one condensing temperature:
    the cold side of the layouts with one pump and one turbine (basic, recuperated, transcritical).
    A layout's cold side offers these accessors and per-kg figures to :func:`cycle_result`."""

    T_cond_K: float
    p_cond_Pa: float
    sat: SatPoint
    s1: State
    s2: State
    s4s: State
    s4: State
    eta_t: float
    s2r: State
    s4r: State
    q_rec: float
    recuperator_active: bool
    rec_profile: Profile | None = None  # per unit mass flow (Q in J/kg), exact mode only
    cond_check: tuple | None = None  # exact condenser approach, kept once computed

    @property
    def condenser_inlet(self) -> State:
        return self.s4r

    @property
    def heater_inlet(self) -> State:
        return self.s2r

    @property
    def turbine_outlet(self) -> State:
        return self.s4

    def w_turbine(self, st3: State) -> float:
        """Turbine work per kg through the heater [J/kg]."""
        return st3.h - self.s4.h

    def w_pump(self) -> float:
        """Pump work per kg through the heater [J/kg]."""
        return self.s2.h - self.s1.h

    def q_rejected(self) -> float:
        """Heat rejected in the condenser per kg through the heater [J/kg]."""
        return self.s4r.h - self.s1.h

    #: flow through the condenser per kg through the heater [-]
    condenser_share = 1.0

    def turbine_figures(self, st3: State) -> tuple[State, State, float]:
        """(inlet, isentropic outlet, outlet flow per kg through the heater) of the expansion
        whose size parameter and volume ratio are reported."""
        return st3, self.s4s, 1.0

    def figures(self) -> dict:
        """The layout's own output figures (column name -> value)."""
        return {}

    def heater_key(self) -> tuple:
        """What the heater closure depends on besides the turbine inlet: the heater inlet."""
        return (self.s2r.h,)


def cold_side_before_expansion(ctx: CycleContext, p_high_Pa: float, st3: State, T_cond_K: float) -> ColdSide:
    """The cold side of a layout with one pump and one turbine before its expansion is known:
    condenser outlet, pump outlet and the isentropic end (what the heater closure and the
    turbine's size need when no recuperator stands between them); the outlet fields hold the
    isentropic end, the efficiency NaN."""
    fluid, s = ctx.fluid, ctx.settings
    sat_c = fluid.sat_T(T_cond_K)
    st1 = condenser_outlet(fluid, sat_c, s.subcooling_K)
    st2 = pump(fluid, st1, p_high_Pa, s.pump_efficiency, ctx.memo)
    st_s = isentropic_end(fluid, st3, sat_c, ctx.memo)
    return ColdSide(T_cond_K, sat_c.p_Pa, sat_c, st1, st2, st_s, st_s, math.nan, st2, st_s, 0.0, False)


#: Two efficiencies closer than this are one (the cold side is not built again for it) [-].
ETA_SAME = 1e-11


def cold_side_following_turbine(ctx: CycleContext, st3: State, build, flow, before_expansion=None):
    """A layout's cold-side function (T_cond_K, exact) -> cold side whose turbine efficiency fits
    the turbine it gives, for use inside a size-dependent turbine's fixed point (Layout.evaluate).

    At each condensing temperature the condenser's iteration tries, the heater closure's flow
    (``flow(cold side, exact)`` [kg/s]) and the isentropic expansion give the turbine's size
    parameter and volume ratio, hence the model's efficiency, and the cold side is built again
    with it (``build(context, T_cond_K, exact)``, the context's turbine_now the efficiency). The
    efficiency then follows the condensing temperature as it converges, and the fixed point
    settles in one pass where the flow does not depend on the efficiency; where it does (a
    recuperator, a bleed, a reheater), the dependence is weak and a pass rarely follows.
    ``before_expansion(T_cond_K)``: the cold side before the expansion, for layouts whose heater
    inlet does not depend on it (cheaper than a build at a stale efficiency).
    ctx.turbine_now carries the first guess."""
    model, state = ctx.settings.turbine, {"eta": ctx.turbine_now.efficiency()}

    def with_eta(eta: float) -> CycleContext:
        return CycleContext(ctx.fluid, ctx.source, ctx.sink, ctx.settings, ctx.memo, ConstantEfficiency(eta))

    def cold_side(T_cond_K: float, exact: bool):
        cs = before_expansion(T_cond_K) if before_expansion else build(with_eta(state["eta"]), T_cond_K, exact)
        m_wf = math.nan
        if cs.heater_inlet.h < st3.h:  # else the layout refuses the point with its reason
            try:
                m_wf = flow(cs, exact)
            except (CycleInfeasible, ValueError, ArithmeticError):  # the same: the layout's reason follows
                pass
        if m_wf > 0.0:
            st_in, st_out_s, share = cs.turbine_figures(st3)
            design = model.design(size_parameter_m(m_wf * share * st_out_s.v, st_in.h - st_out_s.h), st_out_s.v / st_in.v,
                                  ctx.settings.turbine_min_stages)
            if not design.reason and 0.0 < design.efficiency <= 1.0 and abs(design.efficiency - state["eta"]) > ETA_SAME:
                state["eta"] = design.efficiency
                return build(with_eta(design.efficiency), T_cond_K, exact)
        return cs if before_expansion is None else build(with_eta(state["eta"]), T_cond_K, exact)

    return cold_side


#: Words for the states of the layouts with one pump and one turbine.
STATE_LABELS = {
    "1": "condenser outlet",
    "2": "pump outlet",
    "2r": "recuperator cold-side outlet",
    "3": "turbine inlet",
    "4": "turbine outlet",
    "4r": "recuperator hot-side outlet",
}


def cycle_result(ctx: CycleContext, layout: Layout, cs, st3: State, m_wf: float, q_in: float, states: dict, known: dict,
                 location: str = "", T_source_out_K: float = math.nan, profiles: dict | None = None,
                 **fields) -> CycleResult:
    """The result of a cycle whose cold side cs (per-kg figures, see :class:`ColdSide`) and
    working-fluid flow m_wf [kg/s] are known: powers, duties, sink flow, turbine figures.
    q_in [J/kg]: heat taken per kg through the heater; fields: further CycleResult fields."""
    s, sink = ctx.settings, ctx.sink
    W_t = m_wf * cs.w_turbine(st3)
    W_p = m_wf * cs.w_pump()
    Q_out = m_wf * cs.q_rejected()
    W_aux = s.aux_power_per_W_rejected * Q_out
    W_net = s.generator_efficiency * W_t - W_p / s.motor_efficiency - W_aux
    dh_sink = float(sink.h_out_J_kg - sink.h_in_J_kg) if sink is not None else math.nan
    st_t, st_ts, share = cs.turbine_figures(st3)
    V4s = m_wf * share * st_ts.v if share != 1.0 else m_wf * st_ts.v
    return CycleResult(
        status="ok",
        limit=location,
        layout=layout.name,
        variables=known["variables"],
        T_cond_K=cs.T_cond_K,
        p_cond_Pa=cs.p_cond_Pa,
        states=states,
        m_wf_kg_s=m_wf,
        m_sink_kg_s=Q_out / dh_sink,
        W_turbine_W=W_t,
        W_pump_W=W_p,
        W_aux_W=W_aux,
        W_net_W=W_net,
        Q_in_W=m_wf * q_in,
        Q_out_W=Q_out,
        Q_rec_W=m_wf * cs.q_rec,
        T_source_out_K=T_source_out_K,
        pinch_location=location,
        eta_turbine=cs.eta_t,
        size_parameter_m=size_parameter_m(V4s, st_t.h - st_ts.h),
        volume_ratio=volume_ratio(st_ts.v, st_t.v),
        figures=cs.figures(),
        profiles=profiles or {},
        **fields,
    )


#: Segments per single-phase zone of the profiles built inside the search for an objective
#: that needs areas (CycleSettings.profiles_in_search); the reported ones have n_zone_segments.
SEARCH_ZONE_SEGMENTS = 6


def exchanger_profiles(ctx: CycleContext, cs, heater_path, m_wf: float, h_out: float, search: bool = False) -> dict:
    """T-Q profiles of an evaluated cycle: heater, condenser (when a sink is given) and an active
    recuperator. heater_path: the heating path, inlet first (the checked one; in the search a
    path of SEARCH_ZONE_SEGMENTS per zone). search: profiles for an objective that needs areas
    inside the search (the condenser with SEARCH_ZONE_SEGMENTS per zone, a recuperator by its
    two ends); else the discretised ones that are checked and reported."""
    fluid, source, sink, n = ctx.fluid, ctx.source, ctx.sink, ctx.settings.n_zone_segments
    out = {"evaporator": heater_profile(heater_path, m_wf, h_out, source)}
    if sink is None:  # a condensing temperature given by hand: no sink to draw
        return out
    if search:
        h, T, T_sink, _ = condenser_points(fluid, sink, cs, SEARCH_ZONE_SEGMENTS, True)
    else:
        h, T, T_sink = condenser_approach(fluid, sink, cs, n, True)[2]
    m_c = m_wf if cs.condenser_share == 1.0 else m_wf * cs.condenser_share
    out["condenser"] = Profile(m_c * (h - h[0]), T, np.asarray(T_sink, dtype=float), condensing_glide_duty(cs.sat, h, m_c))
    if cs.recuperator_active:
        prof = cs.rec_profile
        if prof is None:  # in the search: its two ends (hot side 4 -> 4r, cold side 2 -> 2r)
            prof = Profile(np.array([0.0, cs.q_rec]), np.array([cs.s4r.T_K, cs.s4.T_K]), np.array([cs.s2.T_K, cs.s2r.T_K]))
        out["recuperator"] = Profile(m_wf * prof.Q_W, prof.T_hot_K, prof.T_cold_K)
    return out
