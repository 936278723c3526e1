"""Free variables of a case that belong to no layout: the sink's temperature rise (the fan power
against the condensing temperature of an air-cooled plant) and, with a cost objective, the
evaporator and condenser pinches (decision variables of thermo-economic screening: Heberle and
Brueggemann, 3rd International Seminar on ORC Power Systems, 2015).

:func:`with_case_variables` wraps a layout so that the optimiser sees these as its outermost
variables: each value gives the context a sink or settings of its own (a new sink stream with
that rise and the fan or pump power per W rejected it gives; a settings copy with that pinch),
and the layout evaluates in it. The values reached appear among the result's variables.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .cycles import CycleContext, CycleResult, Layout, Variable, Window

__all__ = ["CaseVariable", "CASE_VARIABLES", "case_variables", "with_case_variables", "optimised_or"]


def optimised_or(value, fallback: float) -> float:
    """A study value, or fallback where it is "optimise" (the bound a check or a nominal stream
    takes while the optimiser frees it)."""
    return fallback if value == "optimise" else value


def _with_rise(ctx: CycleContext, rise_K: float) -> CycleContext:
    sink = dataclasses.replace(ctx.sink, rise_K=float(rise_K))
    settings = dataclasses.replace(ctx.settings, aux_power_per_W_rejected=sink.aux_power_per_W_rejected())
    return dataclasses.replace(ctx, sink=sink, settings=settings)


def _with_setting(name: str) -> Callable[[CycleContext, float], CycleContext]:
    def apply(ctx: CycleContext, value: float) -> CycleContext:
        return dataclasses.replace(ctx, settings=dataclasses.replace(ctx.settings, **{name: float(value)}))
    return apply


@dataclass(frozen=True)
class CaseVariable:
    """A free variable of the case: the optimiser's Variable, the CycleSettings field holding its
    bounds [SI] when it is free (None: fixed), the words of its bounds, and how a value enters
    the context."""

    variable: Variable
    bounds_field: str
    lo_name: str
    hi_name: str
    apply: Callable[[CycleContext, float], CycleContext]


#: The case's own free variables, outermost last (the optimiser nests them in this order).
CASE_VARIABLES = (
    CaseVariable(Variable("pinch_evaporator_K", "evaporator pinch", "K", scan_points=6, xatol=0.02,
                          near_half_width=2.0, near_min_width=0.5, scan_from="top"),
                 "pinch_evaporator_bounds_K", "min pinch", "max pinch", _with_setting("pinch_evaporator_K")),
    CaseVariable(Variable("pinch_condenser_K", "condenser pinch", "K", scan_points=6, xatol=0.02,
                          near_half_width=2.0, near_min_width=0.5, scan_from="top"),
                 "pinch_condenser_bounds_K", "min pinch", "max pinch", _with_setting("pinch_condenser_K")),
    CaseVariable(Variable("sink_temperature_rise_K", "sink temperature rise", "K", scan_points=7, xatol=0.02,
                          near_half_width=3.0, near_min_width=0.5, scan_from="top"),
                 "sink_rise_bounds_K", "min sink temperature rise", "max sink temperature rise", _with_rise),
)


def case_variables(ctx: CycleContext) -> tuple[CaseVariable, ...]:
    """The case variables free in this context (their bounds set in its settings)."""
    return tuple(cv for cv in CASE_VARIABLES if getattr(ctx.settings, cv.bounds_field, None) is not None)


class _WithCaseVariables:
    """A layout whose free variables gain the case's own, outermost; everything else is the
    layout's."""

    def __init__(self, layout: Layout, free: tuple[CaseVariable, ...]):
        self._layout, self._free = layout, {cv.variable.name: cv for cv in free}
        self._contexts: dict[tuple, CycleContext] = {}

    def __getattr__(self, name: str):
        return getattr(self._layout, name)

    def _split(self, ctx: CycleContext, x: Mapping[str, float]) -> tuple[CycleContext, dict, dict]:
        """(the context at the case variables' values in x, the layout's own values, the case's)."""
        own = {k: v for k, v in x.items() if k not in self._free}
        case = {k: float(x[k]) for k in self._free if k in x}
        key = (id(ctx), *sorted(case.items()))
        at = self._contexts.get(key)
        if at is None:
            at = ctx
            for name, value in case.items():
                at = self._free[name].apply(at, value)
            if len(self._contexts) > 4096:  # a bound on memory; the searches revisit few values
                self._contexts.clear()
            self._contexts[key] = at
        return at, own, case

    def variables(self, ctx: CycleContext) -> tuple[Variable, ...]:
        return (*self._layout.variables(ctx), *(cv.variable for cv in self._free.values()))

    def window(self, ctx: CycleContext, name: str, outer: Mapping[str, float]) -> Window:
        cv = self._free.get(name)
        if cv is not None:
            lo, hi = getattr(ctx.settings, cv.bounds_field)
            return Window(lo, hi, cv.lo_name, cv.hi_name)
        at, own, _ = self._split(ctx, outer)
        return self._layout.window(at, name, own)

    def evaluate(self, ctx: CycleContext, x: Mapping[str, float], *args, **kwargs) -> CycleResult:
        at, own, case = self._split(ctx, x)
        r = self._layout.evaluate(at, own, *args, **kwargs)
        return dataclasses.replace(r, variables={**r.variables, **case})


def with_case_variables(layout: Layout, ctx: CycleContext):
    """The layout as the optimiser should see it in ctx: itself, or wrapped with the case's free
    variables when the settings leave some free."""
    free = case_variables(ctx)
    return _WithCaseVariables(layout, free) if free else layout
