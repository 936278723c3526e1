"""Heat-transfer areas of an evaluated cycle's exchangers, zone by zone, from their T-Q profiles.

Each segment of a discretised profile (:class:`orcscreen.exchangers.Profile`) gets a zone
(preheating, evaporation, ...), its conductance UA_i = dQ_i / LMTD_i [W/K] and its area
A_i = UA_i / U_zone [m²], with one overall heat-transfer coefficient U [W/(m² K)] per zone.

Sources:
    Logarithmic mean temperature difference and q = U A LMTD: Incropera, DeWitt, Bergman,
    Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley 2007, section 11.3
    (eq. 11.15); applied segment by segment and summed zone by zone (common practice for
    exchangers with phase change). Approximate U values by service: DiPippo, *Geothermal Power
    Plants*, Table 8.1.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from .exchangers import Profile, lmtd_K

__all__ = ["zone_coefficients", "ZONES", "EXCHANGERS", "U_KEYS", "DEFAULT_U_W_m2K", "PLATEAU_TOL_K", "segment_zones", "ExchangerArea", "exchanger_area", "exchanger_areas"]

#: Zone names, in the order they are reported.
ZONES = ("preheating", "evaporation", "superheating", "supercritical heating",
         "desuperheating", "condensation", "subcooling", "recuperation")

#: Study keys ([exchangers]) of the zones' overall heat-transfer coefficients, zone -> key.
U_KEYS = {zone: f"u_{zone.replace(' ', '_')}_W_m2K" for zone in ZONES}

#: Overall heat-transfer coefficients [W/(m2 K)] that depend on no stream: the recuperator,
#: organic vapour to organic liquid, 100-300 in common ORC screening practice (the midpoint;
#: from memory). The source's and sink's kinds give the heater's and condenser's zones.
DEFAULT_U_W_m2K = {"recuperation": 200.0}

def zone_coefficients(source, sink, given=None) -> dict[str, float]:
    """Overall coefficients U [W/(m2 K)] by zone for a case: DEFAULT_U_W_m2K, then the source's and
    the sink's kinds (their ``u_defaults_W_m2K``), then the study's own (``given``)."""
    return {**DEFAULT_U_W_m2K, **getattr(source, "u_defaults_W_m2K", {}), **getattr(sink, "u_defaults_W_m2K", {}),
            **(given or {})}


#: Largest change of the working-fluid temperature [K] over a segment that still counts as a
#: phase-change plateau.
PLATEAU_TOL_K = 1e-9


@dataclass(frozen=True)
class _ZoneRule:
    """How one exchanger's segments are named: the working-fluid side (a Profile attribute),
    the zones on the cold-end side of the first plateau, on it and after it, and the zone of a
    profile without plateau (None: refused)."""

    wf_side: str | None
    before: str
    plateau: str
    after: str
    no_plateau: str | None


#: One rule per exchanger, named as in CycleResult.profiles.
_RULES = {
    "evaporator": _ZoneRule("T_cold_K", "preheating", "evaporation", "superheating", "supercritical heating"),
    "condenser": _ZoneRule("T_hot_K", "subcooling", "condensation", "desuperheating", None),
    "recuperator": _ZoneRule(None, "recuperation", "recuperation", "recuperation", "recuperation"),
}


#: The exchangers whose areas are computed, named as in CycleResult.profiles.
EXCHANGERS = tuple(_RULES)


def _rule(exchanger: str) -> _ZoneRule:
    try:
        return _RULES[exchanger]
    except KeyError:
        raise ValueError(f"unknown exchanger {exchanger!r}; allowed: {', '.join(_RULES)}") from None


def segment_zones(profile: Profile, exchanger: str) -> tuple[str, ...]:
    """The zone of each segment of a profile (len(profile.Q_W) - 1 names).

    A pure-fluid rule by the phase-change plateau: a segment with a positive duty dQ over which
    the working-fluid temperature changes by at most PLATEAU_TOL_K [K] is a plateau. Evaporator
    (working fluid on the cold side): plateau segments are "evaporation", the others
    "preheating" before the first plateau and "superheating" after it (in a reheat layout's
    composite heater the reheated vapour shares these segments); no plateau at all is
    "supercritical heating". Condenser (working fluid on the hot side): "condensation" on the
    plateau, "subcooling" on its cold-end side (lower Q), "desuperheating" on its hot-end side;
    a condenser without plateau is refused (ValueError). Recuperator: all "recuperation".
    A zeotropic mixture glides while changing phase: its profile says where
    (``Profile.phase_change_Q_W``) and the zones follow that instead of a plateau.
    """
    codes, names = _zone_codes(profile, exchanger)
    return tuple(names[c] for c in codes)


def _zone_codes(profile: Profile, exchanger: str) -> tuple[np.ndarray, tuple[str, str, str]]:
    """(zone code of each segment: 0 before the first plateau, 1 on a plateau, 2 after it; the
    names of the three codes) by the rule of :func:`segment_zones`."""
    rule = _rule(exchanger)
    n = len(profile.Q_W) - 1
    if rule.wf_side is None:
        return np.ones(n, dtype=np.intp), (rule.before, rule.plateau, rule.after)
    glide = getattr(profile, "phase_change_Q_W", None)
    if glide is not None:  # a mixture: the phase change is where the profile says, not a plateau
        mid = 0.5 * (profile.Q_W[1:] + profile.Q_W[:-1])
        codes = np.where(mid < glide[0], 0, np.where(mid <= glide[1], 1, 2))
        return codes.astype(np.intp), (rule.before, rule.plateau, rule.after)
    T = getattr(profile, rule.wf_side)
    flat = (np.abs(np.diff(T)) <= PLATEAU_TOL_K) & (np.diff(profile.Q_W) > 0.0)
    if not flat.any():
        if rule.no_plateau is None:
            raise ValueError(f"the {exchanger} profile has no phase-change plateau (working-fluid temperature "
                             f"constant within {PLATEAU_TOL_K:g} K): zones need a pure fluid")
        return np.ones(n, dtype=np.intp), (rule.no_plateau,) * 3
    first = int(np.argmax(flat))
    codes = np.where(flat, 1, np.where(np.arange(n) < first, 0, 2))
    return codes, (rule.before, rule.plateau, rule.after)


@dataclass(frozen=True)
class ExchangerArea:
    """Area of one exchanger: total area_m2 [m²] and ua_W_K [W/K], and by_zone: zone ->
    (UA [W/K], area [m²]) for the zones present, in the order of ZONES."""

    exchanger: str
    area_m2: float
    ua_W_K: float
    by_zone: dict[str, tuple[float, float]] = field(default_factory=dict)

    @property
    def mean_U_W_m2K(self) -> float:
        """Area-weighted overall heat-transfer coefficient UA / A [W/(m² K)] (nan for a zero or
        infinite area)."""
        return self.ua_W_K / self.area_m2 if 0.0 < self.area_m2 < math.inf else math.nan


def _segment_ua(profile: Profile) -> np.ndarray:
    """UA_i = dQ_i / LMTD_i [W/K] of each segment; inf where a local difference is not positive,
    0 where dQ_i = 0 (lmtd_K's arithmetic-mean limit for nearly equal ends)."""
    dT = profile.T_hot_K - profile.T_cold_K
    dQ = np.diff(profile.Q_W)
    if dT.min() <= 0.0 or not dQ.all():  # rare: the general form
        bad = (dT[:-1] <= 0.0) | (dT[1:] <= 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(bad, math.inf, np.where(dQ == 0.0, 0.0, dQ / lmtd_K(dT[:-1], dT[1:])))
    a, b = dT[:-1], dT[1:]
    ratio = a / b
    log = np.log(ratio)
    near = np.abs(ratio - 1.0) < 1e-6
    if near.any():
        return dQ / np.where(near, 0.5 * (a + b), (a - b) / np.where(near, 1.0, log))
    return dQ * log / (a - b)


def exchanger_area(profile: Profile, exchanger: str, U_W_m2K: Mapping[str, float]) -> ExchangerArea:
    """Area of an exchanger from its profile and the overall coefficients U_W_m2K [W/(m² K)] by zone.

    Per segment UA_i = dQ_i / LMTD_i [W/K] (:func:`orcscreen.exchangers.lmtd_K`) and
    A_i = UA_i / U[zone_i] [m²]; a segment with dQ == 0 adds nothing. A segment touching a
    local temperature difference that is not positive has infinite UA and area, so the totals
    are infinite (as :func:`orcscreen.exchangers.ua_W_K`). Raises KeyError for a zone of the
    profile missing from U_W_m2K, ValueError for a U that is not a positive number.
    """
    codes, names = _zone_codes(profile, exchanger)
    ua = _segment_ua(profile)
    ua_by_code = np.bincount(codes, weights=ua, minlength=3)
    seen = np.bincount(codes, minlength=3) > 0
    by_code: dict[str, float] = {}
    for k in range(3):
        if seen[k]:
            by_code[names[k]] = by_code.get(names[k], 0.0) + float(ua_by_code[k])
    missing = [z for z in by_code if z not in U_W_m2K]
    if missing:
        raise KeyError(f"no overall heat-transfer coefficient U [W/(m² K)] for zone(s) {', '.join(missing)} "
                       f"of the {exchanger}; given: {', '.join(U_W_m2K) or 'none'}")
    by_zone = {}
    for z in ZONES:
        if z not in by_code:
            continue
        try:
            U = float(U_W_m2K[z])
        except (TypeError, ValueError):
            U = math.nan
        if not (math.isfinite(U) and U > 0.0):
            raise ValueError(f"U for zone {z!r} = {U_W_m2K[z]!r}: must be a positive number [W/(m² K)]")
        by_zone[z] = (by_code[z], by_code[z] / U)
    return ExchangerArea(exchanger, sum(a for _, a in by_zone.values()), sum(u for u, _ in by_zone.values()), by_zone)


def exchanger_areas(profiles: Mapping[str, Profile], U_W_m2K: Mapping[str, float]) -> dict[str, ExchangerArea]:
    """:func:`exchanger_area` of each profile of a cycle result (name -> Profile), same order."""
    return {name: exchanger_area(p, name, U_W_m2K) for name, p in profiles.items()}
