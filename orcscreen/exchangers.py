"""Counter-current heat exchangers on temperature-duty (T-Q) profiles.

Exchangers work on profiles (arrays of duty and of hot and cold temperatures at the same duty
points), never on the assumption of isothermal evaporation, so that superheating, temperature
glides and transcritical heating use the same code.

Conventions: the duty coordinate Q_W runs from the cold end of the exchanger (0, where the cold
stream enters and the hot stream leaves) to the hot end (the full duty).

Sources:
    Segment-wise logarithmic mean temperature difference for UA of exchangers with phase change:
    Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed.,
    Wiley 2007, section 11.3 (LMTD); applied zone by zone as is common practice for evaporators
    and condensers with phase change.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Profile", "lmtd_K", "ua_W_K", "max_flow_for_pinch"]


@dataclass(frozen=True)
class Profile:
    """T-Q profile of a counter-current exchanger.

    Q_W [W] from the cold end (0) to the duty; T_hot_K and T_cold_K [K] at the same points.
    """

    Q_W: np.ndarray
    T_hot_K: np.ndarray
    T_cold_K: np.ndarray

    @property
    def duty_W(self) -> float:
        return float(self.Q_W[-1] - self.Q_W[0])

    @property
    def approach_K(self) -> np.ndarray:
        """Local temperature difference T_hot - T_cold [K] at each point."""
        return self.T_hot_K - self.T_cold_K

    @property
    def pinch_index(self) -> int:
        return int(np.argmin(self.approach_K))

    @property
    def min_approach_K(self) -> float:
        """Smallest temperature difference over the discretised profile [K]."""
        return float(np.min(self.approach_K))

    def ua_W_K(self) -> float:
        """UA [W/K] by segment-wise LMTD."""
        return ua_W_K(self)


def lmtd_K(dT_a_K: np.ndarray, dT_b_K: np.ndarray) -> np.ndarray:
    """Logarithmic mean of two terminal temperature differences [K] (Incropera et al., eq. 11.15).

    Equal or nearly equal differences give their arithmetic mean (the limit of the formula).
    """
    a = np.asarray(dT_a_K, dtype=float)
    b = np.asarray(dT_b_K, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = a / b
        out = np.where(np.abs(ratio - 1.0) < 1e-6, 0.5 * (a + b), (a - b) / np.log(ratio))
    return out


def ua_W_K(profile: Profile) -> float:
    """Overall conductance UA [W/K] = sum of dQ_i / LMTD_i over the profile's segments.

    Returns inf if any local temperature difference is not positive (a pinch of zero).
    """
    dT = profile.approach_K
    if np.any(dT <= 0.0):
        return float("inf")
    dQ = np.diff(profile.Q_W)
    return float(np.sum(dQ / lmtd_K(dT[:-1], dT[1:])))


def max_flow_for_pinch(
    h_wf_J_kg: np.ndarray,
    T_wf_K: np.ndarray,
    h_wf_out_J_kg: float,
    h_source_in_J_kg: float,
    h_source_at_J_kg: np.ndarray,
    m_source_kg_s: float,
) -> tuple[float, int]:
    """Largest working-fluid flow [kg/s] for which the source stays pinch K above every point.

    For each point j of the working-fluid heating path (enthalpy h_j, temperature T_j), the
    source has released m_wf (h_out - h_j) from the hot end; it must still be at least
    T_j + pinch, i.e. hold enthalpy h_source_at_j = h_s(T_j + pinch):

        m_wf <= m_s (h_s,in - h_s(T_j + pinch)) / (h_out - h_j).

    h_source_at_J_kg holds h_s(T_j + pinch) for each point (the caller applies the pinch).
    Returns the smallest bound and the index of the point that sets it (the pinch point). Points
    with h_j >= h_out (the hot end) carry no bound on the flow; a point with a source too cold
    gives a bound <= 0.
    """
    h = np.asarray(h_wf_J_kg, dtype=float)
    dh = h_wf_out_J_kg - h
    usable = dh > 1e-9 * max(abs(h_wf_out_J_kg), 1.0)
    bounds = np.full(h.shape, np.inf)
    bounds[usable] = m_source_kg_s * (h_source_in_J_kg - np.asarray(h_source_at_J_kg)[usable]) / dh[usable]
    j = int(np.argmin(bounds))
    return float(bounds[j]), j
