"""orcscreen: screening of working fluids and layouts for organic Rankine cycles.

Entry points: :func:`screen` (a whole study), :func:`run_case` (one case dictionary) and
:func:`evaluate_cycle` (one fully specified cycle by hand). The command line is ``orcscreen``.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("orcscreen")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0+unknown"

from .api import evaluate_cycle, run_case, screen  # noqa: E402

__all__ = ["screen", "run_case", "evaluate_cycle", "__version__"]
