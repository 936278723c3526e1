"""The composition of a binary mixture as a free variable of a case.

A mixture named without its composition (``"Isobutane&Isopentane"``, the study's
``mole_fractions = "optimise"``) is optimised over the first component's mole fraction x: a
bracketing scan of COMPOSITION_SCAN fractions from X_MIN to X_MAX, then Brent's bounded search
(orcscreen.brent) between the best point's neighbours to XATOL. At every x the layout's own optimisation
(:func:`orcscreen.optimize.optimise`) runs on that composition's properties, so the search is
nested around the existing optimum: the cycle's variables are optimised for each composition
and the composition for the best of them. The score is the study's objective, as the optimiser
scores a cycle (:func:`orcscreen.objectives.score`).

Every composition needs its own saturation table (orcscreen.mixture_properties, 0.3-1 s each):
this search is the costly part of a mixture case, about COMPOSITION_SCAN + 10 tables.
"""

from __future__ import annotations

import dataclasses
import math

from .cycles import CycleContext, Layout
from .objectives import score
from .optimize import optimise
from .brent import minimize_scalar_bounded
from .mixtures import DECIMALS, is_mixture, mixture_name, parse_mixture
from .properties import PropertyError, get_fluid

__all__ = ["X_MIN", "X_MAX", "COMPOSITION_SCAN", "XATOL", "optimise_composition", "components_to_optimise"]

#: Range of the first component's mole fraction searched [-] (the pure ends are the pure fluids'
#: own cases).
X_MIN, X_MAX = 0.02, 0.98
#: Mole fractions of the bracketing scan, evenly spaced from X_MIN to X_MAX.
COMPOSITION_SCAN = 9
#: Tolerance of the refinement on the mole fraction [-].
XATOL = 2e-3


def components_to_optimise(name: str) -> tuple[str, str] | None:
    """(first, second) of a mixture named without its composition ("A&B"), else None."""
    if not is_mixture(name):
        return None
    first, second, x = parse_mixture(name)
    return None if x is not None else (first, second)


def optimise_composition(layout: Layout, ctx: CycleContext, first: str, second: str):
    """Best composition of first and second for layout in ctx (ctx.fluid is ignored), scored
    by the study's objective (orcscreen.objectives.score, larger is better). Returns (Optimum, x, evaluations, scan) with scan the list of
    (x, score or -inf, reason) tried, or (None, reason, evaluations, scan) when no composition
    gives a feasible cycle.
    """
    tried: dict[float, tuple] = {}
    total = [0]

    def at(x: float):
        x = round(float(x), DECIMALS)
        if x not in tried:
            try:
                fluid = get_fluid(mixture_name(first, second, x))
            except PropertyError as exc:
                tried[x] = (None, -math.inf, str(exc))
                return tried[x]
            ctx_x = dataclasses.replace(ctx, fluid=fluid)
            opt = optimise(layout, ctx_x)
            if isinstance(opt, tuple):
                total[0] += opt[2]
                tried[x] = (None, -math.inf, opt[1])
            else:
                total[0] += opt.evaluations
                tried[x] = (opt, score(opt.cycle, ctx_x), "")
        return tried[x]

    xs = [X_MIN + (X_MAX - X_MIN) * i / (COMPOSITION_SCAN - 1) for i in range(COMPOSITION_SCAN)]
    values = [at(x)[1] for x in xs]
    best = max(range(len(xs)), key=lambda i: values[i])
    if not math.isfinite(values[best]):
        reasons = sorted({tried[round(x, DECIMALS)][2] for x in xs})
        return None, "no composition gives a feasible cycle: " + "; ".join(reasons[:3]), total[0], _scan(tried)
    lo, hi = xs[max(best - 1, 0)], xs[min(best + 1, len(xs) - 1)]
    if hi > lo:
        minimize_scalar_bounded(lambda x: -at(x)[1] if math.isfinite(at(x)[1]) else 1e300, (lo, hi), xatol=XATOL)
    x_best = max(tried, key=lambda x: tried[x][1])  # the best composition evaluated
    return tried[x_best][0], x_best, total[0], _scan(tried)


def _scan(tried: dict) -> list[tuple[float, float, str]]:
    return [(x, v, why) for x, (_, v, why) in sorted(tried.items())]
