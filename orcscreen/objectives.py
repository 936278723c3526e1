"""What the optimiser makes best for each fluid and layout (``study.objective``), and what the
ranking sorts by: one registry, :data:`OBJECTIVES`.

An objective names a result column and whether larger or smaller is better; its score is what
the optimiser maximises (larger is better; a cost is negated). Cost objectives need each
evaluated cycle's exchanger profiles, hence areas and costs, inside the search as well
(``needs_costs``: the layouts then build the closed-form model's profiles on the points the
search already has; the reported result is the discretised one).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Objective", "OBJECTIVES", "DEFAULT_OBJECTIVE", "score"]


@dataclass(frozen=True)
class Objective:
    """name: the study's value; label: the trade's words; column: the result column it is (SI
    inside: the net power in W); maximise: larger is better; needs_costs: the economics of
    every evaluated cycle are needed; needs_year: the column comes from a year of operation
    (the optimiser then makes the design's net power best)."""

    name: str
    label: str
    column: str
    maximise: bool
    needs_costs: bool
    #: the column comes from a year of operation: the design is optimised for net power at the
    #: design condition and the ranking sorts by the year's figure
    needs_year: bool = False

    def score(self, r, ctx) -> float:
        """What the optimiser maximises for an evaluated cycle r in context ctx: the column's
        value, negated for a cost; -inf where the cycle is infeasible or its cost unknown."""
        if not r.ok:
            return -math.inf
        if not self.needs_costs or self.needs_year:
            return r.W_net_W
        from .economics import areas_and_costs

        value = areas_and_costs(r, ctx.source, ctx.sink, ctx.settings, [])[0].get(self.column, math.nan)
        if not math.isfinite(value):
            return -math.inf
        return value if self.maximise else -value


#: The objectives, by the study's name for them.
OBJECTIVES: dict[str, Objective] = {o.name: o for o in (
    Objective("net_power", "net power", "net_power_kW", True, False),
    Objective("specific_investment", "specific investment (investment per net kW)", "specific_investment_per_kW",
              False, True),
    Objective("lcoe", "levelised cost of electricity (LCOE)", "lcoe_per_MWh", False, True),
    Objective("net_present_value", "net present value at the electricity price", "net_present_value", True, True),
    Objective("annual_energy", "annual net energy (a year of operation)", "annual_energy_MWh", True, False, True),
    Objective("capacity_factor", "capacity factor over the year", "capacity_factor", True, False, True),
)}

DEFAULT_OBJECTIVE = "net_power"


def score(r, ctx) -> float:
    """The score of r under the context's objective (settings.objective; net power without one)."""
    objective = getattr(ctx.settings, "objective", None) or OBJECTIVES[DEFAULT_OBJECTIVE]
    return objective.score(r, ctx)
