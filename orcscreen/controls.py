"""How the plant meets each bin of a year: the control strategies of ``[year] control`` (one
registry, read by the study schema, orcscreen.offdesign and the report).

Every strategy runs in sliding pressure (the turbine's swallowing capacity sets the evaporation
pressure) and answers a limit that binds off design the way an operator would
(orcscreen.offdesign.operating_point):

* a wet expansion: more superheat at the turbine inlet (the feed pump slows until the vapour
  leaves the evaporator hot enough), just enough to hold the outlet quality at its limit;
* the evaporation-pressure limit: the pressure held at the limit with less working-fluid flow
  (the feed pump slows; the vapour leaves the evaporator more superheated);
* the source's minimum outlet temperature (reinjection, acid dew point): the sink's fans or
  cooling-water pumps slowed until the source leaves at its minimum (the condensing temperature
  rises, and with it the temperature at which the working fluid enters the evaporator).

A bin where none of these finds an operating point within the hardware, or where another limit
breaks (thermal stability, the turbine's part-load range), is not run and counts zero.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Control", "CONTROLS", "CONTROL_NAMES", "MIN_SINK_FLOW_FRACTION"]

#: Lowest flow the sink's fans or pumps are slowed to, over their design flow [-] (our choice:
#: variable-speed drives commonly run down to about a quarter of full speed).
MIN_SINK_FLOW_FRACTION = 0.25


@dataclass(frozen=True)
class Control:
    """A control strategy: its name, a sentence for the schema and the report, and whether the
    sink's mover speed is chosen in each bin for the largest net power."""

    name: str
    description: str
    best_sink_flow: bool


CONTROLS: dict[str, Control] = {c.name: c for c in (
    Control("sliding-pressure",
            "sliding pressure, the sink's fans or pumps at their design speed unless the source's outlet "
            "minimum needs them slower; a wet expansion is met with more superheat and the pressure limit "
            "by holding the pressure with less flow", False),
    Control("sliding-pressure-best-sink-flow",
            "as sliding-pressure, and in each bin the sink's fans or pumps run at the speed that gives the "
            f"largest net power ({MIN_SINK_FLOW_FRACTION:.0%} to 100 % of the design flow, their power "
            "following the cube of the speed): more energy in cold weather, for about ten times the "
            "rating time", True),
)}

CONTROL_NAMES = tuple(CONTROLS)
