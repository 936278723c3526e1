"""What the ranking can sort by (criteria, ``study.rank_by``) and what the optimiser makes best
for each fluid and layout (objectives, ``study.objective``): one registry, :data:`CRITERIA`;
:data:`OBJECTIVES` is its part the optimiser can also maximise.

A criterion is a result column, a direction (larger or smaller is better), a label in the trade's
words, a display format, and the study keys it needs (e.g. a year of operation). An objective is
a criterion with a score: what the optimiser maximises (larger is better; a cost is negated).
Cost objectives need each evaluated cycle's exchanger profiles, hence areas and costs, inside the
search as well (``needs_costs``: the layouts then build the closed-form model's profiles on the
points the search already has; the reported result is the discretised one).

The study's objective is always the first criterion of a ranking (:func:`criteria_for`); the
others only order and mark the outputs, they never change a computed case.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

__all__ = ["Criterion", "Objective", "CRITERIA", "OBJECTIVES", "DEFAULT_OBJECTIVE", "DEFAULT_RANK_BY",
           "score", "criteria_for", "unmet", "rank_column", "PARETO_COLUMN"]


@dataclass(frozen=True)
class Criterion:
    """name: the study's value; label: the trade's words; column: the result column (as in
    ranking.csv); maximise: larger is better; needs_costs: the column is a cost figure (from
    [economics]; defaults apply when the section is absent); needs_year: the column comes from a
    year of operation; requires: (dotted study key, what it is) pairs that must be set for the
    column to exist; fmt: display format ("%": a fraction shown in per cent); short: a short
    header for the console."""

    name: str
    label: str
    column: str
    maximise: bool
    needs_costs: bool = False
    #: the column comes from a year of operation: the design is optimised for net power at the
    #: design condition and the ranking sorts by the year's figure
    needs_year: bool = False
    requires: tuple[tuple[str, str], ...] = ()
    fmt: str = ".4g"
    short: str = ""

    @property
    def direction(self) -> str:
        """"largest first" or "smallest first"."""
        return "largest first" if self.maximise else "smallest first"


@dataclass(frozen=True)
class Objective(Criterion):
    """A criterion the optimiser can maximise (``study.objective``)."""

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


_YEAR = (("year.file", "a year"),)
_PRICE = (("economics.electricity_price_per_MWh", "the price of the electricity sold"),)

#: Every criterion, by the study's name for it, in the order the schema and README list them.
CRITERIA: dict[str, Criterion] = {c.name: c for c in (
    Objective("net_power", "net power", "net_power_kW", True, fmt=".1f", short="net kW"),
    Criterion("thermal_efficiency", "thermal efficiency", "thermal_efficiency", True, fmt="%", short="eta_th %"),
    # within one operating point the source's exergy is the same for every case, so this orders
    # as the net power does there; it differs across operating points (DESIGN.md section 3)
    Criterion("exergy_efficiency", "exergy (second-law) efficiency", "exergy_efficiency", True, fmt="%",
              short="eta_II %"),
    # the smallest temperature difference the evaporator reached: at least the pinch setting; a
    # wider approach at the optimum is an evaporator with room to spare (smaller, more forgiving
    # of fouling and off-design), so larger is better (README, "Ranking criteria")
    Criterion("pinch", "evaporator approach reached (pinch)", "approach_evaporator_K", True, fmt=".2f",
              short="pinch K"),
    Criterion("size_parameter", "turbine size parameter", "size_parameter_m", False,
              fmt=".3f", short="SP m"),
    Objective("specific_investment", "specific investment (investment per net kW)", "specific_investment_per_kW",
              False, True, short="invest/kW", fmt=".0f"),
    Objective("lcoe", "levelised cost of electricity (LCOE)", "lcoe_per_MWh", False, True, short="LCOE/MWh",
              fmt=".1f"),
    Objective("net_present_value", "net present value at the electricity price", "net_present_value", True, True,
              requires=_PRICE, short="NPV"),
    Objective("annual_energy", "annual net energy (a year of operation)", "annual_energy_MWh", True, False, True,
              requires=_YEAR, short="MWh/year", fmt=".0f"),
    Objective("capacity_factor", "capacity factor over the year", "capacity_factor", True, False, True,
              requires=_YEAR, short="CF", fmt=".3f"),
)}

#: The objectives (criteria the optimiser can maximise), by the study's name for them.
OBJECTIVES: dict[str, Objective] = {n: c for n, c in CRITERIA.items() if isinstance(c, Objective)}

DEFAULT_OBJECTIVE = "net_power"
#: The criteria a study ranks by besides its objective, unless it says otherwise: the power, how
#: well the source's exergy is used, and the turbine's size (common practice in ORC screening:
#: power against machine size, e.g. Macchi and Perdichizzi 1981).
DEFAULT_RANK_BY = ("net_power", "exergy_efficiency", "size_parameter")
#: The ranking.csv column marking the cases that are Pareto-optimal over the chosen criteria.
PARETO_COLUMN = "pareto_optimal"


def score(r, ctx) -> float:
    """The score of r under the context's objective (settings.objective; net power without one)."""
    objective = getattr(ctx.settings, "objective", None) or OBJECTIVES[DEFAULT_OBJECTIVE]
    return objective.score(r, ctx)


def rank_column(criterion: Criterion) -> str:
    """The ranking.csv column of a criterion's rank within each operating point: ``rank_<name>``."""
    return f"rank_{criterion.name}"


def criteria_for(objective: str | None, rank_by: Iterable[str] | None = None) -> tuple[Criterion, ...]:
    """The criteria of a ranking: the objective first, then ``rank_by`` in order, each once
    (unknown names are skipped: the study validates them; ``rank_by`` None: the default)."""
    names = [objective or DEFAULT_OBJECTIVE, *(DEFAULT_RANK_BY if rank_by is None else rank_by)]
    return tuple(CRITERIA[n] for n in dict.fromkeys(names) if n in CRITERIA)


def unmet(criterion: Criterion, study: Mapping[str, Any]) -> list[tuple[str, str]]:
    """The (dotted key, what it is) of ``criterion.requires`` that the study (a mapping of
    sections, as a store's meta holds it) leaves unset."""
    missing = []
    for key, what in criterion.requires:
        section, _, name = key.partition(".")
        value = (study.get(section) or {}).get(name) if isinstance(study.get(section), Mapping) else None
        if value is None:
            missing.append((key, what))
    return missing
