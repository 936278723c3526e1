"""Working-fluid paths along isobars, as arrays of enthalpy and temperature.

An exchanger sees the working fluid as a path of (h, T) points along one isobar: a liquid
zone, an evaporation plateau and a vapour zone below the critical pressure, or one supercritical
curve above it. The exchangers (:mod:`orcscreen.exchangers`) close their pinch on these paths
and never assume isothermal phase change, so superheating, glides and supercritical heating use
the same code.

The single-phase states here come from CoolProp's equation of state through
:mod:`orcscreen.properties`, with the phase imposed by the caller (who knows it) and each flash
started next to a neighbouring state; two-phase states use the lever rule between the saturated
states. Units: SI (K, Pa, J/kg, J/(kg K), m3/kg).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from .states import SatPoint, State

__all__ = [
    "Zone",
    "FluidPath",
    "composite_path",
    "two_phase_state",
    "state_from_ph",
    "flash_ph",
    "isobar_temperatures",
    "heating_path",
    "supercritical_heating_path",
    "condensing_path",
    "reheating_path",
]


@dataclass(slots=True)
class Zone:
    """A stretch of a path where T rises strictly with h (no plateau inside): points first to
    last (indices, inclusive), its name, and h_of_T(T [K]) -> h [J/kg] anywhere inside it."""

    first: int
    last: int
    name: str
    h_of_T: Callable[[float], float]


@dataclass(slots=True)
class FluidPath:
    """Points of a working-fluid path, in the direction of the flow.

    h [J/kg] and T_K [K] arrays of equal length; labels name each point (its zone or corner);
    zones are the stretches between points where an interior point can be evaluated (a pinch
    between two points is searched there).
    """

    h: np.ndarray
    T_K: np.ndarray
    labels: tuple[str, ...]
    zones: tuple[Zone, ...] = ()

    def zone_at(self, j: int) -> Zone | None:
        """The first zone that holds point j, or None."""
        for z in self.zones:
            if z.first <= j <= z.last:
                return z
        return None

    def with_point(self, h: float, T_K: float, label: str) -> FluidPath:
        """The path with one more point, inserted in enthalpy order (zone indices shifted)."""
        k = int(np.searchsorted(self.h, h))
        zones = tuple(Zone(z.first + (z.first >= k), z.last + (z.last >= k), z.name, z.h_of_T) for z in self.zones)
        labels = self.labels[:k] + (label,) + self.labels[k:]
        return FluidPath(np.insert(self.h, k, h), np.insert(self.T_K, k, T_K), labels, zones)

    def h_range_at(self, T_K: float) -> tuple[float, float]:
        """Enthalpy [J/kg] at temperature T_K [K] reached from below and from above (they differ
        on a plateau); the start or the end enthalpy outside the path's temperature range.
        Between two points, the zone's own h_of_T (an equation-of-state call), else linear."""
        T, h = self.T_K, self.h
        if T_K < T[0]:
            return float(h[0]), float(h[0])
        if T_K > T[-1]:
            return float(h[-1]), float(h[-1])
        lo = int(np.searchsorted(T, T_K, "left"))
        hi = int(np.searchsorted(T, T_K, "right")) - 1
        if hi >= lo:  # a point of the path, or a plateau
            return float(h[lo]), float(h[hi])
        zone = self.zone_at(lo - 1)
        if zone is not None and zone.last >= lo:
            x = float(zone.h_of_T(T_K))
        else:
            x = float(np.interp(T_K, T[lo - 1:lo + 1], h[lo - 1:lo + 1]))
        return x, x


def two_phase_state(sat: SatPoint, T_K: float, q: float) -> State:
    """Two-phase state of quality q [-] at saturation sat, by the lever rule."""
    return State(
        T_K,
        sat.p_Pa,
        sat.hL + q * (sat.hV - sat.hL),
        sat.sL + q * (sat.sV - sat.sL),
        sat.vL + q * (sat.vV - sat.vL),
        q,
    )


def next_guess(st: State, dh: float, phase: str) -> tuple[float, float]:
    """Temperature [K] and specific volume [m3/kg] guesses dh [J/kg] away from st on its isobar.

    T from dh/cp; v unchanged for a liquid, scaled with T for a vapour (ideal-gas trend).
    """
    T = st.T_K + dh / st.cp if st.cp > 0.0 else st.T_K
    if T <= 0.5 * st.T_K:
        T = st.T_K
    v = st.v * T / st.T_K if phase == "gas" else st.v
    return T, v


def flash_ph(fluid, p_Pa: float, h: float, phase: str, near: State) -> State:
    """Single-phase state at (p, h), Newton started from near (a state of the same phase)."""
    T, v = next_guess(near, h - near.h, phase)
    return fluid.state_ph(p_Pa, h, phase, T, v)


def state_from_ph(fluid, sat: SatPoint, h: float, near: State | None = None) -> State:
    """State at the saturation pressure of sat and enthalpy h; two-phase states without a flash.

    Single-phase states use the phase-imposed Newton flash, started next to the state near
    (same pressure) or at the saturation point of the same phase. Inside a glide (a mixture's
    saturation point) the fluid's own two-phase table gives the state.
    """
    if sat.hL <= h <= sat.hV:
        if sat.glide_K > 0.0:
            return fluid.two_phase_state(sat.p_Pa, h)
        return two_phase_state(sat, sat.T_K, (h - sat.hL) / (sat.hV - sat.hL))
    gas = h > sat.hV
    if near is None:
        near = State(sat.T_dew_K if gas else sat.T_K, sat.p_Pa, sat.hV if gas else sat.hL, sat.sV if gas else sat.sL, sat.vV if gas else sat.vL, math.nan)
    return flash_ph(fluid, sat.p_Pa, h, "gas" if gas else "liquid", near)


def isobar_temperatures(fluid, p_Pa: float, h: np.ndarray, start: State, phase: str) -> np.ndarray:
    """Temperatures [K] at enthalpies h along one single-phase isobar, starting next to state start.

    Each point's flash starts from the previous point's temperature plus dh/cp.
    """
    T = np.empty(len(h))
    prev = start
    for i, hi in enumerate(h):
        prev = flash_ph(fluid, p_Pa, float(hi), phase, prev)
        T[i] = prev.T_K
    return T


def add_zone(fluid, p_Pa: float, T_a: float, T_b: float, n: int, phase: str, label: str, h: list, T: list, labels: list) -> None:
    """Append the n - 1 interior points of a single-phase zone from T_a to T_b [K] on one isobar."""
    Tz = np.linspace(T_a, T_b, n + 1)[1:-1]
    h.extend(fluid.h_pT_array(p_Pa, Tz, phase))
    T.extend(Tz)
    labels.extend([label] * len(Tz))


#: Segments of a glide on a path, evenly in enthalpy, besides the table's own vapour fractions:
#: the glide's temperature bends (most near the bubble point), so a pinch against a straight
#: sink line can fall between two points; at 40 segments the chord's error is about 1e-3 K, a
#: tenth of the table's tolerance. The search and the reported result use the same points (one
#: vectorised evaluation of the table's cubic), so that their condensing pressures agree.
GLIDE_SEGMENTS = 40


def add_glide(fluid, sat: SatPoint, label: str, h: list, T: list, labels: list) -> None:
    """Append the interior points of a glide between the bubble and the dew point of sat: the
    vapour fractions of the fluid's two-phase table
    (:meth:`orcscreen.mixture_properties.Mixture.two_phase_nodes`) and GLIDE_SEGMENTS more evenly
    in enthalpy (the table's cubic); nothing for a pure fluid."""
    if sat.glide_K <= 0.0:
        return
    hn, Tn = fluid.two_phase_nodes(sat.p_Pa)
    pts = {float(a): float(b) for a, b in zip(hn[1:-1], Tn[1:-1])}
    he = np.linspace(sat.hL, sat.hV, GLIDE_SEGMENTS + 1)[1:-1]
    for x, t in zip(he, fluid.two_phase_T_of_h(sat.p_Pa, he)):
        pts.setdefault(float(x), float(t))
    for x in sorted(pts):
        h.append(x)
        T.append(pts[x])
        labels.append(label)


def heating_path(fluid, sat_e: SatPoint, st_in: State, st3: State, n: int, exact: bool, zones: bool = True) -> FluidPath:
    """Subcritical heating path from the heater inlet st_in to the turbine inlet st3.

    Corners: economiser inlet, bubble point, dew point and, with superheat, the hot end; with
    exact, n segments in each single-phase zone (economiser, superheater). A glide (a
    mixture) adds the points of the fluid's two-phase table between bubble and dew point, in
    either accuracy. zones=False leaves out the zones (a caller that never searches between
    points saves their making).
    """
    h = [st_in.h]
    T = [st_in.T_K]
    labels = ["economiser inlet"]
    if exact:
        add_zone(fluid, sat_e.p_Pa, st_in.T_K, sat_e.T_K, n, "liquid", "economiser", h, T, labels)
    h.append(sat_e.hL)
    T.append(sat_e.T_K)
    labels.append("bubble point")
    add_glide(fluid, sat_e, "evaporating", h, T, labels)
    h.append(sat_e.hV)
    T.append(sat_e.T_dew_K)
    labels.append("dew point")
    if st3.h > sat_e.hV + 1e-9:
        if exact:
            add_zone(fluid, sat_e.p_Pa, sat_e.T_dew_K, st3.T_K, n, "gas", "superheater", h, T, labels)
        h.append(st3.h)
        T.append(st3.T_K)
        labels.append("hot end")
    if not zones:
        return FluidPath(np.array(h), np.array(T), tuple(labels))
    p = sat_e.p_Pa
    ib, id_ = labels.index("bubble point"), labels.index("dew point")
    found = (
        Zone(0, ib, "economiser", lambda T_K: fluid.h_pT(p, T_K, "liquid")),
        Zone(id_, len(labels) - 1, "superheater", lambda T_K: fluid.h_pT(p, T_K, "gas")),
    )
    if sat_e.glide_K > 0.0:
        found += (Zone(ib, id_, "evaporating", lambda T_K: fluid.two_phase_h_of_T(p, T_K)),)
    return FluidPath(np.array(h), np.array(T), tuple(labels), found)


def supercritical_heating_path(fluid, p_Pa: float, st_in: State, st3: State, n: int, rounds: int = 4) -> FluidPath:
    """Heating path above the critical pressure, from st_in to st3, discretised in temperature.

    n uniform temperature segments first; then, up to ``rounds`` times, every segment that holds
    more than twice the mean enthalpy rise is halved. The isobaric heat capacity peaks at the
    pseudo-critical temperature, so the enthalpy rises fastest there and that is where the grid
    is refined (common practice for supercritical heaters: a pinch can sit inside the curve, and
    a check of the two ends alone overestimates the flow).
    """
    T = list(np.linspace(st_in.T_K, st3.T_K, n + 1))
    h = [st_in.h] + [fluid.h_pT(p_Pa, float(t), None) for t in T[1:-1]] + [st3.h]
    for _ in range(rounds):
        dh_mean = (h[-1] - h[0]) / (len(h) - 1)
        split = [i for i in range(len(h) - 1) if h[i + 1] - h[i] > 2.0 * dh_mean]
        if not split:
            break
        for i in reversed(split):
            t = 0.5 * (T[i] + T[i + 1])
            T.insert(i + 1, t)
            h.insert(i + 1, fluid.h_pT(p_Pa, t, None))
    labels = ("heater inlet",) + ("supercritical heater",) * (len(T) - 2) + ("hot end",)
    zone = Zone(0, len(T) - 1, "supercritical heater",
                lambda T_K: fluid.h_pT(p_Pa, T_K, None))
    return FluidPath(np.array(h), np.array(T), labels, (zone,))


def condensing_path(fluid, sat: SatPoint, st_out: State, st_in: State, n: int, exact: bool) -> FluidPath:
    """Condensing path from the cold end (condenser outlet st_out) to the hot end (inlet st_in).

    Corners: cold end, bubble point (with subcooling), dew point and, with a superheated inlet,
    the hot end; with exact, n segments in each single-phase zone (subcooling, desuperheating).
    A glide (a mixture) adds the points of the fluid's two-phase table between bubble and dew
    point (or the wet inlet), in either accuracy.
    """
    h1, h_in = st_out.h, st_in.h
    pts_h = [h1]
    pts_T = [st_out.T_K]
    labels = ["cold end"]
    if st_out.h < sat.hL - 1e-9:  # subcooled liquid zone
        if exact:
            add_zone(fluid, sat.p_Pa, st_out.T_K, sat.T_K, n, "liquid", "subcooling zone", pts_h, pts_T, labels)
        pts_h.append(sat.hL)
        pts_T.append(sat.T_K)
        labels.append("bubble point")
    h_dew = min(sat.hV, h_in)
    if sat.glide_K > 0.0:
        n0 = len(pts_h)
        add_glide(fluid, sat, "condensing", pts_h, pts_T, labels)
        keep = n0 + sum(1 for x in pts_h[n0:] if x < h_dew - 1e-9)
        del pts_h[keep:], pts_T[keep:], labels[keep:]
        T_dew = sat.T_dew_K if h_dew >= sat.hV else fluid.two_phase_state(sat.p_Pa, h_dew).T_K
    else:
        T_dew = sat.T_K
    pts_h.append(h_dew)
    pts_T.append(T_dew)
    labels.append("dew point")
    if h_in > sat.hV + 1e-9:
        if exact:
            add_zone(fluid, sat.p_Pa, sat.T_dew_K, st_in.T_K, n, "gas", "desuperheating zone", pts_h, pts_T, labels)
        pts_h.append(h_in)
        pts_T.append(st_in.T_K)
        labels.append("hot end")
    return FluidPath(np.array(pts_h), np.array(pts_T), tuple(labels))


def composite_path(paths: Sequence[FluidPath], weights: Sequence[float], names: Sequence[str]) -> FluidPath:
    """Composite of several heating paths that take heat from one source, as one cold stream.

    At every temperature of any path, the composite enthalpy is the weighted sum of each path's
    enthalpy there (weights: each path's flow per unit of the reference flow), so one pinch
    check on the composite covers all of them: the heat cascade of pinch analysis (Linnhoff et
    al., *A User Guide on Process Integration for the Efficient Use of Energy*, IChemE 1982;
    Kemp, *Pinch Analysis and Process Integration*, 2nd ed., Butterworth-Heinemann 2007, ch. 2),
    which is the best any arrangement of the exchangers can do. h [J per kg of reference flow]
    starts at the sum of the paths' inlet enthalpies. names label each path's points.
    """
    T_all = np.unique(np.concatenate([p.T_K for p in paths]))
    h, T, labels = [], [], []
    for t in T_all:
        t = float(t)
        lo = hi = 0.0
        label = ""
        for path, w, name in zip(paths, weights, names):
            a, b = path.h_range_at(t)
            lo += w * a
            hi += w * b
            k = np.flatnonzero(path.T_K == t)
            if len(k) and not label:
                label = f"{name} {path.labels[int(k[0])]}"
        h.append(lo)
        T.append(t)
        labels.append(label or "composite")
        if hi > lo:
            h.append(hi)
            T.append(t)
            labels.append(label or "composite")
    zones = []
    start = 0
    for i in range(1, len(T) + 1):
        if i == len(T) or T[i] == T[i - 1]:
            if i - 1 > start:
                zones.append(Zone(start, i - 1, "composite", _composite_h(paths, weights)))
            start = i
    return FluidPath(np.array(h), np.array(T), tuple(labels), tuple(zones))


def _composite_h(paths: Sequence[FluidPath], weights: Sequence[float]) -> Callable[[float], float]:
    """h_of_T of a composite path between two of its points (no plateau in between)."""
    def h_of_T(T_K: float) -> float:
        return sum(w * path.h_range_at(T_K)[0] for path, w in zip(paths, weights))

    return h_of_T


def reheating_path(fluid, sat: SatPoint, st_in: State, st_out: State, n: int, exact: bool) -> FluidPath:
    """Heating path of a reheater on the subcritical isobar of sat, from st_in (two-phase or
    vapour) to the superheated st_out: the rest of the evaporation plateau, then a vapour zone
    (n segments when exact)."""
    h, T, labels = [st_in.h], [st_in.T_K], ["reheater inlet"]
    T_from = st_in.T_K
    if st_in.h < sat.hV - 1e-9:
        h.append(sat.hV)
        T.append(sat.T_K)
        labels.append("reheater dew point")
        T_from = sat.T_K
    first = len(h) - 1
    if exact:
        add_zone(fluid, sat.p_Pa, T_from, st_out.T_K, n, "gas", "reheater", h, T, labels)
    h.append(st_out.h)
    T.append(st_out.T_K)
    labels.append("reheater outlet")
    p = sat.p_Pa
    zone = Zone(first, len(h) - 1, "reheater", lambda T_K: fluid.h_pT(p, T_K, "gas"))
    return FluidPath(np.array(h), np.array(T), tuple(labels), (zone,))
