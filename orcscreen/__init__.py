"""orcscreen: screening of working fluids and layouts for organic Rankine cycles.

Entry points: :func:`screen` (a whole study), :func:`run_case` (one case dictionary) and
:func:`evaluate_cycle` (one fully specified cycle by hand). The command line is ``orcscreen``.

The three entry points live in :mod:`orcscreen.api` and are loaded on first use (PEP 562 module
``__getattr__``): ``import orcscreen`` and the light modules (``orcscreen.store``,
``orcscreen.study``, ``orcscreen.cli``) do not load the engine and CoolProp until a function
needs them, and ``from orcscreen import screen`` works as before.
"""

from typing import TYPE_CHECKING

from orcscreen._version import __version__

if TYPE_CHECKING:  # for type checkers and editors; at run time see __getattr__
    from orcscreen.api import evaluate_cycle, run_case, screen

#: Names of the package root that are loaded from orcscreen.api on first use.
_ENGINE_ENTRY_POINTS = ("screen", "run_case", "evaluate_cycle")

__all__ = [*_ENGINE_ENTRY_POINTS, "__version__"]


def __getattr__(name: str):
    """Load an engine entry point on first access (imports orcscreen.api, hence CoolProp)."""
    if name in _ENGINE_ENTRY_POINTS:
        from orcscreen import api

        value = getattr(api, name)
        globals()[name] = value  # later look-ups skip this function
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
