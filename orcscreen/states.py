"""Thermodynamic states as small frozen dataclasses, the property error and the infeasible-cycle signal.

Kept apart from :mod:`orcscreen.properties` (which loads CoolProp) so that the engine's modules
and registries can be imported, and their types used, without loading the property library.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["PropertyError", "SatPoint", "State", "CycleInfeasible"]


class PropertyError(ValueError):
    """A property evaluation failed; the message names the fluid and the inputs."""


@dataclass(frozen=True, slots=True)
class SatPoint:
    """Both ends of the two-phase region at one saturation pressure.

    Units: T_K [K], p_Pa [Pa], h [J/kg], s [J/(kg K)], v [m3/kg]; suffix L = saturated liquid,
    V = saturated vapour. T_K is the temperature of the saturated liquid (the bubble point);
    glide_K [K] is how much hotter the saturated vapour is (the dew point, :attr:`T_dew_K`):
    0 for a pure fluid, positive for a zeotropic mixture.
    """

    T_K: float
    p_Pa: float
    hL: float
    hV: float
    sL: float
    sV: float
    vL: float
    vV: float
    glide_K: float = 0.0

    @property
    def T_dew_K(self) -> float:
        """Temperature [K] of the saturated vapour (the dew point)."""
        return self.T_K + self.glide_K


@dataclass(frozen=True, slots=True)
class State:
    """One thermodynamic state. q is the vapour quality, NaN outside the two-phase region.

    Units: T_K [K], p_Pa [Pa], h [J/kg], s [J/(kg K)], v [m3/kg].
    """

    T_K: float
    p_Pa: float
    h: float
    s: float
    v: float
    q: float
    cp: float = math.nan  # isobaric specific heat [J/(kg K)] of single-phase states, else NaN


class CycleInfeasible(Exception):
    """A limit of the cycle is broken: carries the limit's name, the reason in plain words and,
    where the limit has one, the signed distance to it (negative: broken)."""

    def __init__(self, limit: str, reason: str, margin: float = math.nan):
        super().__init__(reason)
        self.limit = limit
        self.reason = reason
        self.margin = margin
