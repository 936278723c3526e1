"""Cycle layouts: the one registry of layouts.

Each layout is an object (:class:`orcscreen.cycles.base.Layout`) that declares its free
variables and their bounds, evaluates its states, exchangers and figures, labels its states and
names the limits that apply to it. The study schema, the optimiser, the output columns, the
charts and the report all read :data:`LAYOUTS`; adding a layout is one module plus one line here.
"""

from __future__ import annotations

from .base import CycleContext, CycleInfeasible, CycleResult, CycleSettings, Layout, Variable, Window, reset_guesses, saturation_dome
from .bleed import BLEED_REGENERATIVE
from .reheat import REHEAT
from .subcritical import BASIC, RECUPERATED
from .transcritical import TRANSCRITICAL, TRANSCRITICAL_RECUPERATED

__all__ = [
    "LAYOUTS",
    "DEFAULT_LAYOUTS",
    "Layout",
    "CycleContext",
    "CycleResult",
    "CycleSettings",
    "CycleInfeasible",
    "Variable",
    "Window",
    "reset_guesses",
    "saturation_dome",
]

#: The layouts by name, in the order the outputs list them.
LAYOUTS: dict[str, Layout] = {
    layout.name: layout
    for layout in (BASIC, RECUPERATED, TRANSCRITICAL, TRANSCRITICAL_RECUPERATED, BLEED_REGENERATIVE, REHEAT)
}

#: Layouts a study screens when it names none: the subcritical pair and the transcritical layout,
#: so that a hot source shows its supercritical candidates without being asked.
DEFAULT_LAYOUTS: tuple[str, ...] = ("basic", "recuperated", "transcritical")
