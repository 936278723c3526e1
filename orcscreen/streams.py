"""Heat sources and sinks: enthalpy-temperature relations, entropy and exergy of the streams.

Every stream is built once per case and then answers, cheaply and vectorised (float or ndarray
in, same shape out), the questions the exchanger and cycle models ask along a T-Q profile:

    h_J_kg(T_K) [J/kg], T_K(h_J_kg) [K], s_J_kgK(T_K) [J/(kg K)], cp_J_kgK(T_K) [J/(kg K)]

Models (``kind`` is the key of the study file):

=============  ===============================================================================
source kind    model
=============  ===============================================================================
water          :class:`HotWater`: pressurised liquid water, IAPWS-95 through CoolProp "Water"
brine          :class:`Brine`: incompressible liquid, cp = cp0 + slope (T - 273.15 K)
thermal-oil    :class:`ThermalOil`: same linear-cp liquid (one implementation, two kinds)
flue-gas       :class:`FlueGas`: ideal-gas mixture of N2, O2, CO2, H2O, Ar, no condensation
fluid          :class:`FluidSource`: any CoolProp pure fluid on one isobar, may enter two-phase
=============  ===============================================================================

Sinks: :class:`CoolingWater` (liquid water, IAPWS-95) and :class:`AmbientAir` (dry air as the
ideal-gas mixture N2/O2/Ar/CO2 of :data:`DRY_AIR_MOLE_FRACTIONS`, the same code as the flue gas).

Numerics. Property-library models are tabulated once at construction (cached per fluid, pressure
and range) as a piecewise-cubic Hermite interpolant of h(T) and s(T) whose node slopes are the
exact cp and cp/T; nodes are refined until the interpolant agrees with the equation of state at
every segment midpoint to 1e-5 K (expressed as an enthalpy error over cp; measured: 3e-7 K for
liquid water, 1e-9 K for flue gas). The inverse T(h) is the Newton solution of the same cubic
from an inverse-Hermite guess, so T_K(h_J_kg(T)) == T to about 1e-12 K. Outside the table
range [T_min_valid_K, T_max_valid_K] every curve is continued with the end-point cp held
constant (h linear, s logarithmic): monotone and finite, so the engine can probe temperatures
above the inlet (a pinch that cannot be met) or below the freezing point without an exception;
values there are an extrapolation, not a property.

Reference states. Only differences along one stream are meaningful: water and pure fluids use
CoolProp's reference state, linear-cp liquids h = s = 0 at 0 °C, gases h = 0 at 25 °C (as the
JANAF H - H(298.15 K)) and s on CoolProp's reference of each species plus the mixing term.

Phase change. A :class:`FluidSource` (e.g. condensing steam) has a flat T(h) across the two-phase
region. T_K(h) returns T_sat there; h_J_kg(T) is multivalued at T_sat and is defined as the
*lowest* enthalpy at that temperature (liquid side, h_J_kg(T_sat) = saturated liquid), which is
the conservative reading of "source enthalpy at temperature T on the cooling path" in the
evaporator pinch test m_wf <= m_s (h_in - h_s(T_j + pinch)) / (h3 - h_j). The inlet enthalpy
is therefore the attribute ``h_in_J_kg``, never ``h_J_kg(T_in_K)``.

Sources of the property models: IAPWS-95 (Wagner and Pruss, J. Phys. Chem. Ref. Data 31 (2002)
387) and the CoolProp ideal-gas parts of N2, O2, CO2 (Span and Wagner 1996), Ar, H2O, all via
orcscreen.properties (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498).
"""

from __future__ import annotations

import difflib
import functools
import math
from bisect import bisect_right
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar, Protocol, runtime_checkable

import numpy as np

from orcscreen import properties as props
from orcscreen.properties import PropertyError

__all__ = [
    "StreamError",
    "Stream",
    "HotWater",
    "Brine",
    "ThermalOil",
    "FlueGas",
    "FluidSource",
    "CoolingWater",
    "AmbientAir",
    "DRY_AIR_MOLE_FRACTIONS",
    "DEFAULT_EXCESS_AIR_RATIO",
    "methane_flue_gas_mole_fractions",
    "source_exergy_W",
    "available_heat_W",
    "heat_to_cool_W",
    "SOURCE_KINDS",
    "SINK_KINDS",
    "source_from_settings",
    "sink_from_settings",
]

ZERO_CELSIUS_K = 273.15
R_UNIVERSAL_J_molK = 8.314462618  # CODATA 2018 (exact since the 2019 SI)
P_REF_PA = 1.0e5  # reference pressure of the species entropy tables [Pa]
DEFAULT_T_LOW_K = 253.15  # lowest temperature a source table covers by default (-20 °C)

_SCALARS = (float, int)
_TOL_K = 1.0e-5  # table fidelity to the equation of state, as a temperature [K]
_STEP_K = 4.0  # initial node spacing of a tabulated isobar [K]
_MIN_STEP_K = 2.0e-3  # no refinement below this spacing [K]
_SAT_GAP_K = 0.01  # a temperature this close to T_sat counts as saturated [K]
_MARGIN_K = 5.0  # tables reach this far above the inlet temperature [K]
# Newton on a segment cubic stops after a step below this (in units of the segment): the error left
# is of order the step squared, far below 1e-9 K.
_NEWTON_STOP = 1e-6
#: Arrays up to this size take the scalar path point by point: a few Python floats cost less
#: than numpy's per-call overhead on a tiny array (the search's paths have 3-6 points); larger
#: arrays (the reported profiles) stay vectorised. The same arithmetic either way.
SMALL_ARRAY = 8


class StreamError(ValueError):
    """Physically impossible or unusable stream input; the message says what and why."""


# ---------------------------------------------------------------------------------------------
# Curves: the numerics behind the streams (private)
# ---------------------------------------------------------------------------------------------


def _cubic_coefficients(y: np.ndarray, dy: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Hermite cubic per segment in u = (T - T_i)/d_i: y = c0 + u (c1 + u (c2 + u c3)); shape (n-1, 4)."""
    y0, y1, m0, m1 = y[:-1], y[1:], dy[:-1] * d, dy[1:] * d
    return np.column_stack((y0, m0, 3.0 * (y1 - y0) - 2.0 * m0 - m1, 2.0 * (y0 - y1) + m0 + m1))


class _HermiteCurve:
    """Piecewise-cubic Hermite h(T) and s(T) through nodes with slopes cp and cp/T.

    Monotone by construction check (Fritsch and Carlson, SIAM J. Numer. Anal. 17 (1980) 238:
    alpha^2 + beta^2 <= 9 on every segment), so T(h) is single-valued; it is found by Newton on
    the segment cubic from the inverse Hermite guess (slopes 1/cp). Constant-cp continuation
    outside [T_lo, T_hi]. The array path pads the segment tables with one linear row at each
    end, so a single searchsorted and one Horner step serve inside and outside the range.
    """

    __slots__ = ("T_lo", "T_hi", "_Tn", "_hn", "_Tb", "_hb", "_inv_d", "_inv_dh", "_hC", "_sC", "_TC",
                 "_Tl", "_hl", "_inv_dl", "_inv_dhl", "_hseg", "_sseg", "_Tseg", "_h_end", "_s_end", "_cp_end")

    def __init__(self, T, h, cp, s):
        T = np.asarray(T, float)
        h = np.asarray(h, float)
        cp = np.asarray(cp, float)
        s = np.asarray(s, float)
        d = np.diff(T)
        dh = np.diff(h)
        if T.size < 2 or np.any(d <= 0.0) or np.any(cp <= 0.0) or np.any(dh <= 0.0):
            raise StreamError("internal table is not monotone (cp must stay positive along the stream)")
        alpha, beta = cp[:-1] * d / dh, cp[1:] * d / dh
        if np.any(alpha**2 + beta**2 > 9.0):
            raise StreamError("internal table is not monotone: cp varies too fast between nodes")
        self.T_lo, self.T_hi = float(T[0]), float(T[-1])
        self._h_end = (float(h[0]), float(h[-1]))
        self._s_end = (float(s[0]), float(s[-1]))
        self._cp_end = (float(cp[0]), float(cp[-1]))
        hC = _cubic_coefficients(h, cp, d)
        sC = _cubic_coefficients(s, cp / T, d)
        TC = _cubic_coefficients(T, 1.0 / cp, dh)  # inverse Hermite T(h): Newton's first guess
        # Python lists for the scalar path (a bisect and a Horner step: about a microsecond).
        self._Tl, self._hl = T.tolist(), h.tolist()
        self._inv_dl, self._inv_dhl = (1.0 / d).tolist(), (1.0 / dh).tolist()
        self._hseg = [tuple(r) for r in hC.tolist()]
        self._sseg = [tuple(r) for r in sC.tolist()]
        self._Tseg = [tuple(r) for r in TC.tolist()]
        # Padded tables for the array path: row 0 is T < T_lo, row n is T >= T_hi (u = T - T_end).
        (h0, h1), (c0, c1), (s0, s1) = self._h_end, self._cp_end, self._s_end
        self._Tn, self._hn = T, h
        self._Tb = np.concatenate(([T[0]], T[:-1], [T[-1]]))
        self._hb = np.concatenate(([h[0]], h[:-1], [h[-1]]))
        self._inv_d = np.concatenate(([1.0], 1.0 / d, [1.0]))
        self._inv_dh = np.concatenate(([1.0], 1.0 / dh, [1.0]))
        self._hC = np.vstack(([h0, c0, 0.0, 0.0], hC, [h1, c1, 0.0, 0.0]))
        self._sC = np.vstack(([s0, 0.0, 0.0, 0.0], sC, [s1, 0.0, 0.0, 0.0]))
        self._TC = np.vstack(([T[0], 1.0 / c0, 0.0, 0.0], TC, [T[-1], 1.0 / c1, 0.0, 0.0]))

    def __getstate__(self):
        return {k: getattr(self, k) for k in self.__slots__}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)

    # -- scalar path ------------------------------------------------------------------------
    def _h1(self, T: float) -> float:
        Tl = self._Tl
        if T <= Tl[0]:
            return self._h_end[0] + self._cp_end[0] * (T - Tl[0])
        if T >= Tl[-1]:
            return self._h_end[1] + self._cp_end[1] * (T - Tl[-1])
        i = bisect_right(Tl, T) - 1
        c0, c1, c2, c3 = self._hseg[i]
        u = (T - Tl[i]) * self._inv_dl[i]
        return c0 + u * (c1 + u * (c2 + u * c3))

    def _s1(self, T: float) -> float:
        Tl = self._Tl
        if T <= Tl[0]:
            return self._s_end[0] + self._cp_end[0] * math.log(T / Tl[0])
        if T >= Tl[-1]:
            return self._s_end[1] + self._cp_end[1] * math.log(T / Tl[-1])
        i = bisect_right(Tl, T) - 1
        c0, c1, c2, c3 = self._sseg[i]
        u = (T - Tl[i]) * self._inv_dl[i]
        return c0 + u * (c1 + u * (c2 + u * c3))

    def _cp1(self, T: float) -> float:
        Tl = self._Tl
        if T <= Tl[0]:
            return self._cp_end[0]
        if T >= Tl[-1]:
            return self._cp_end[1]
        i = bisect_right(Tl, T) - 1
        _, c1, c2, c3 = self._hseg[i]
        u = (T - Tl[i]) * self._inv_dl[i]
        return (c1 + u * (2.0 * c2 + 3.0 * u * c3)) * self._inv_dl[i]

    def _T1(self, h: float) -> float:
        hl, Tl = self._hl, self._Tl
        if h <= hl[0]:
            return Tl[0] + (h - hl[0]) / self._cp_end[0]
        if h >= hl[-1]:
            return Tl[-1] + (h - hl[-1]) / self._cp_end[1]
        i = bisect_right(hl, h) - 1
        _, t1, t2, t3 = self._Tseg[i]
        v = (h - hl[i]) * self._inv_dhl[i]
        u = (t1 + v * (t2 + v * t3)) * v * self._inv_dl[i]
        c0, c1, c2, c3 = self._hseg[i]
        for _ in range(12):
            du = (c0 + u * (c1 + u * (c2 + u * c3)) - h) / (c1 + u * (2.0 * c2 + 3.0 * u * c3))
            u -= du
            if abs(du) < _NEWTON_STOP:
                break
        return Tl[i] + u / self._inv_dl[i]

    # -- array path -------------------------------------------------------------------------
    def _rows(self, x: np.ndarray):
        i = np.searchsorted(self._Tn, x, side="right")
        return i, (x - self._Tb[i]) * self._inv_d[i]

    def h(self, T):
        if isinstance(T, _SCALARS):
            return self._h1(float(T))
        Ta = np.asarray(T, float)
        if Ta.ndim == 1 and Ta.size <= SMALL_ARRAY:
            return np.array([self._h1(x) for x in Ta.tolist()])
        i, u = self._rows(Ta)
        C = self._hC[i]
        return C[..., 0] + u * (C[..., 1] + u * (C[..., 2] + u * C[..., 3]))

    def cp(self, T):
        if isinstance(T, _SCALARS):
            return self._cp1(float(T))
        Ta = np.asarray(T, float)
        i, u = self._rows(Ta)
        C = self._hC[i]
        return (C[..., 1] + u * (2.0 * C[..., 2] + 3.0 * u * C[..., 3])) * self._inv_d[i]

    def s(self, T):
        if isinstance(T, _SCALARS):
            return self._s1(float(T))
        Ta = np.asarray(T, float)
        i, u = self._rows(Ta)
        C = self._sC[i]
        out = C[..., 0] + u * (C[..., 1] + u * (C[..., 2] + u * C[..., 3]))
        lo, hi = i == 0, i == self._Tn.size
        if lo.any():
            out[lo] = self._s_end[0] + self._cp_end[0] * np.log(Ta[lo] / self.T_lo)
        if hi.any():
            out[hi] = self._s_end[1] + self._cp_end[1] * np.log(Ta[hi] / self.T_hi)
        return out

    def T(self, h):
        if isinstance(h, _SCALARS):
            return self._T1(float(h))
        y = np.asarray(h, float)
        if y.ndim == 1 and y.size <= SMALL_ARRAY:
            return np.array([self._T1(x) for x in y.tolist()])
        i = np.searchsorted(self._hn, y, side="right")
        inv_d = self._inv_d[i]
        v = (y - self._hb[i]) * self._inv_dh[i]
        G = self._TC[i]
        u = (G[..., 1] + v * (G[..., 2] + v * G[..., 3])) * v * inv_d
        C = self._hC[i]
        c0, c1, c2, c3 = C[..., 0], C[..., 1], C[..., 2], C[..., 3]
        for _ in range(12):
            du = (c0 + u * (c1 + u * (c2 + u * c3)) - y) / (c1 + u * (2.0 * c2 + 3.0 * u * c3))
            u -= du
            if du.size == 0 or np.abs(du).max() < _NEWTON_STOP:
                break
        return self._Tb[i] + u / inv_d


class _IsobarCurve:
    """A pure fluid on one subcritical isobar: liquid curve, latent plateau at T_sat, vapour curve.

    h(T_sat) is the saturated-liquid enthalpy (lowest enthalpy at that temperature); T(h) is
    T_sat for hL <= h <= hV; cp(T_sat) is the liquid-side value.
    """

    __slots__ = ("liquid", "vapour", "T_sat", "hL", "hV", "sL", "sV", "T_lo", "T_hi")

    def __init__(self, liquid: _HermiteCurve, vapour: _HermiteCurve, sat: props.SatPoint):
        self.liquid, self.vapour = liquid, vapour
        self.T_sat, self.hL, self.hV, self.sL, self.sV = sat.T_K, sat.hL, sat.hV, sat.sL, sat.sV
        self.T_lo, self.T_hi = liquid.T_lo, vapour.T_hi

    def __getstate__(self):
        return {k: getattr(self, k) for k in self.__slots__}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)

    def _by_T(self, T, liquid_fn, vapour_fn):
        if isinstance(T, _SCALARS):
            return liquid_fn(T) if T <= self.T_sat else vapour_fn(T)
        Ta = np.asarray(T, float)
        on_liquid = Ta <= self.T_sat
        if on_liquid.all():
            return liquid_fn(Ta)
        if not on_liquid.any():
            return vapour_fn(Ta)
        return np.where(on_liquid, liquid_fn(Ta), vapour_fn(Ta))

    def h(self, T):
        return self._by_T(T, self.liquid.h, self.vapour.h)

    def s(self, T):
        return self._by_T(T, self.liquid.s, self.vapour.s)

    def cp(self, T):
        return self._by_T(T, self.liquid.cp, self.vapour.cp)

    def T(self, h):
        if isinstance(h, _SCALARS):
            if h <= self.hL:
                return self.liquid.T(h)
            return self.vapour.T(h) if h >= self.hV else self.T_sat
        ha = np.asarray(h, float)
        on_liquid, on_vapour = ha <= self.hL, ha >= self.hV
        if on_liquid.all():
            return self.liquid.T(ha)
        if on_vapour.all():
            return self.vapour.T(ha)
        return np.where(on_liquid, self.liquid.T(ha), np.where(on_vapour, self.vapour.T(ha), self.T_sat))


class _LinearCpCurve:
    """Analytic curve of a liquid with cp = cp0 + slope (T - T_ref), h = s = 0 at T_ref.

    h = cp0 theta + slope theta^2 / 2, theta = T - T_ref;
    s = (cp0 - slope T_ref) ln(T / T_ref) + slope theta;
    T(h) = T_ref + 2 h / (cp0 + sqrt(cp0^2 + 2 slope h)) (the root with theta -> h/cp0 as slope -> 0;
    NaN where cp would be negative). Valid wherever cp > 0.
    """

    __slots__ = ("cp0", "slope", "T_ref", "T_lo", "T_hi")

    def __init__(self, cp0: float, slope: float, T_lo: float, T_hi: float, T_ref: float = ZERO_CELSIUS_K):
        self.cp0, self.slope, self.T_ref, self.T_lo, self.T_hi = cp0, slope, T_ref, T_lo, T_hi

    def __getstate__(self):
        return {k: getattr(self, k) for k in self.__slots__}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)

    def h(self, T):
        th = (T if isinstance(T, _SCALARS) else np.asarray(T, float)) - self.T_ref
        return th * (self.cp0 + 0.5 * self.slope * th)

    def s(self, T):
        if isinstance(T, _SCALARS):
            return (self.cp0 - self.slope * self.T_ref) * math.log(T / self.T_ref) + self.slope * (T - self.T_ref)
        Ta = np.asarray(T, float)
        return (self.cp0 - self.slope * self.T_ref) * np.log(Ta / self.T_ref) + self.slope * (Ta - self.T_ref)

    def cp(self, T):
        th = (T if isinstance(T, _SCALARS) else np.asarray(T, float)) - self.T_ref
        return self.cp0 + self.slope * th

    def T(self, h):
        if isinstance(h, _SCALARS):
            disc = self.cp0 * self.cp0 + 2.0 * self.slope * h
            return self.T_ref + 2.0 * h / (self.cp0 + math.sqrt(disc)) if disc >= 0.0 else math.nan
        ha = np.asarray(h, float)
        disc = self.cp0 * self.cp0 + 2.0 * self.slope * ha
        with np.errstate(invalid="ignore"):
            return self.T_ref + 2.0 * ha / (self.cp0 + np.sqrt(disc))


# -- tabulation of a pure fluid on an isobar ---------------------------------------------------


def _refined_curve(prop, T_lo: float, T_hi: float) -> _HermiteCurve:
    """Hermite curve through prop(T) -> (h, cp, s), bisecting segments until the midpoint test passes.

    A segment passes when the cubic predicts h and s at its midpoint within _TOL_K * cp and
    _TOL_K * cp / T; the tested midpoint is kept as a node either way.
    """
    n = max(2, math.ceil((T_hi - T_lo) / _STEP_K) + 1)
    grid = np.linspace(T_lo, T_hi, n)
    values = [prop(float(T)) for T in grid]
    nodes: list[tuple[float, tuple[float, float, float]]] = [(float(grid[0]), values[0])]

    def refine(Ta, va, Tb, vb):
        Tm = 0.5 * (Ta + Tb)
        vm = prop(Tm)
        d = Tb - Ta
        h_pred = 0.5 * (va[0] + vb[0]) + d * (va[1] - vb[1]) / 8.0
        s_pred = 0.5 * (va[2] + vb[2]) + d * (va[1] / Ta - vb[1] / Tb) / 8.0
        ok = abs(h_pred - vm[0]) <= _TOL_K * vm[1] and abs(s_pred - vm[2]) <= _TOL_K * vm[1] / Tm
        if ok or d <= _MIN_STEP_K:
            nodes.append((Tm, vm))
            nodes.append((Tb, vb))
            return
        refine(Ta, va, Tm, vm)
        refine(Tm, vm, Tb, vb)

    for k in range(n - 1):
        refine(float(grid[k]), values[k], float(grid[k + 1]), values[k + 1])
    T = np.array([t for t, _ in nodes])
    v = np.array([val for _, val in nodes])
    return _HermiteCurve(T, v[:, 0], v[:, 1], v[:, 2])


def _grid_down(T: float) -> float:
    return math.floor(T / 10.0) * 10.0


def _grid_up(T: float) -> float:
    return math.ceil(T / 10.0) * 10.0


def _saturation_on_isobar(fluid: props.Fluid, p_Pa: float) -> props.SatPoint | None:
    """Saturation at p_Pa, or None when the isobar has no liquid-vapour transition (p >= p_crit or p < p_triple)."""
    if p_Pa >= fluid.p_crit_Pa:
        return None
    if p_Pa <= fluid.sat_T(fluid.T_min_K).p_Pa:
        return None
    return fluid.sat_p(p_Pa)


@functools.lru_cache(maxsize=128)
def _isobar_curve(fluid_name: str, p_Pa: float, T_lo: float, T_hi: float):
    """Tabulated curve of a pure fluid on the isobar p_Pa over [T_lo, T_hi] (clamped to the EOS range)."""
    fl = props.get_fluid(fluid_name)
    T_lo = max(T_lo, fl.T_min_K)
    T_hi = min(T_hi, fl.T_max_K)

    def single(T):
        st = fl.state_pT(p_Pa, T)
        return st.h, fl.cp_pT(p_Pa, T), st.s

    sat = _saturation_on_isobar(fl, p_Pa)
    if sat is None or sat.T_K > T_hi + _SAT_GAP_K or sat.T_K < T_lo - _SAT_GAP_K:
        return _refined_curve(single, T_lo, T_hi)
    T_sat = sat.T_K
    cp_L = fl.cp_pT(p_Pa, T_sat - 2.0 * _MIN_STEP_K)
    cp_V = fl.cp_pT(p_Pa, T_sat + 2.0 * _MIN_STEP_K)

    def liquid(T):
        return (sat.hL, cp_L, sat.sL) if T >= T_sat else single(T)

    def vapour(T):
        return (sat.hV, cp_V, sat.sV) if T <= T_sat else single(T)

    T_lo = min(T_lo, max(fl.T_min_K, T_sat - 1.0))
    liq = _refined_curve(liquid, T_lo, T_sat)
    vap = _refined_curve(vapour, T_sat, max(T_hi, T_sat + 1.0))
    return _IsobarCurve(liq, vap, sat)


# -- ideal-gas mixtures ------------------------------------------------------------------------

#: CoolProp names of the gas species a flue gas may contain.
GAS_SPECIES = {"N2": "Nitrogen", "O2": "Oxygen", "CO2": "CarbonDioxide", "H2O": "Water", "Ar": "Argon"}
_GAS_T_LO_K, _GAS_T_HI_K, _GAS_STEP_K = 200.0, 2000.0, 2.5
_T_25C_K = 298.15


@functools.lru_cache(maxsize=None)
def _species_table(species: str):
    """Ideal-gas h - h(298.15 K) [J/kg], cp [J/(kg K)] (central difference, 0.05 K) and s(T, 1 bar) on a fixed grid."""
    name = GAS_SPECIES[species]
    T = np.linspace(_GAS_T_LO_K, _GAS_T_HI_K, round((_GAS_T_HI_K - _GAS_T_LO_K) / _GAS_STEP_K) + 1)
    hig = props.ideal_gas_enthalpy_J_kg
    h_ref = hig(name, _T_25C_K)
    h = np.array([hig(name, t) for t in T]) - h_ref
    dT = 0.05
    cp = np.array([(hig(name, t + dT) - hig(name, t - dT)) / (2.0 * dT) for t in T])
    s = np.array([props.ideal_gas_entropy_J_kgK(name, t, P_REF_PA) for t in T])
    return T, h, cp, s


@functools.lru_cache(maxsize=256)
def _gas_mixture_curve(mole_fractions: tuple[tuple[str, float], ...], p_Pa: float) -> _HermiteCurve:
    """Ideal mixture: h = sum w_i h_i(T), s = sum w_i [s_i(T, p_ref) - R_i ln(y_i p / p_ref)]."""
    M = {k: props.molar_mass_kg_mol(GAS_SPECIES[k]) for k, _ in mole_fractions}
    M_mix = sum(y * M[k] for k, y in mole_fractions)
    h = cp = s = 0.0
    T = None
    for k, y in mole_fractions:
        if y <= 0.0:
            continue
        T, h_k, cp_k, s_k = _species_table(k)
        w = y * M[k] / M_mix
        R_k = R_UNIVERSAL_J_molK / M[k]
        h = h + w * h_k
        cp = cp + w * cp_k
        s = s + w * (s_k - R_k * math.log(y * p_Pa / P_REF_PA))
    return _HermiteCurve(T, h, cp, s)


def _normalised_fractions(composition: Mapping[str, float], basis: str) -> dict[str, float]:
    """Mole fractions from a composition in mole or mass fractions (any positive scale)."""
    if basis not in ("mole", "mass"):
        raise StreamError(f"composition basis {basis!r} is not allowed; use 'mole' or 'mass'")
    if not isinstance(composition, Mapping) or not composition:
        raise StreamError("flue-gas composition must be a non-empty table of species and fractions")
    unknown = sorted(set(composition) - set(GAS_SPECIES))
    if unknown:
        raise StreamError(
            f"flue-gas composition has unknown species {', '.join(map(repr, unknown))}; "
            f"allowed: {', '.join(GAS_SPECIES)}"
        )
    for k, x in composition.items():
        if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x) or x < 0.0:
            raise StreamError(f"flue-gas fraction of {k} is {x!r}; fractions must be numbers >= 0")
    total = sum(composition.values())
    if total <= 0.0:
        raise StreamError("flue-gas fractions add up to zero")
    if basis == "mole":
        return {k: composition[k] / total for k in GAS_SPECIES if composition.get(k, 0.0) > 0.0}
    moles = {k: composition[k] / props.molar_mass_kg_mol(GAS_SPECIES[k]) for k in GAS_SPECIES if composition.get(k, 0.0) > 0.0}
    n = sum(moles.values())
    return {k: v / n for k, v in moles.items()}


#: Dry air, mole fractions (N2 78.084 %, O2 20.946 %, Ar 0.934 %; CO2 0.042 %, about the present-day
#: 420 ppm): the standard composition of dry air, e.g. CRC Handbook, from memory. Normalised on use.
DRY_AIR_MOLE_FRACTIONS = {"N2": 0.78084, "O2": 0.20946, "Ar": 0.00934, "CO2": 0.00042}

#: Combustion air / stoichiometric air of the default flue gas: 15 % excess air, common practice
#: for gas-fired boilers and furnaces (10-20 %).
DEFAULT_EXCESS_AIR_RATIO = 1.15


def methane_flue_gas_mole_fractions(excess_air_ratio: float = DEFAULT_EXCESS_AIR_RATIO,
                                    air: Mapping[str, float] = DRY_AIR_MOLE_FRACTIONS) -> dict[str, float]:
    """Products of complete combustion of methane in dry air, mole fractions.

    CH4 + 2 lambda/y_O2 [air]  ->  CO2 + 2 H2O + 2 (lambda - 1) O2 + (inert rest of the air),
    with lambda = excess_air_ratio >= 1 (1 = stoichiometric). Natural gas is taken as methane.
    """
    if not excess_air_ratio >= 1.0:
        raise StreamError(f"excess-air ratio {excess_air_ratio!r} must be >= 1 (complete combustion)")
    total_air = sum(air.values())
    y_air = {k: v / total_air for k, v in air.items()}
    n_air = 2.0 * excess_air_ratio / y_air["O2"]  # mol air per mol CH4
    products = {k: n_air * y for k, y in y_air.items()}
    products["O2"] -= 2.0
    products["CO2"] = products.get("CO2", 0.0) + 1.0
    products["H2O"] = products.get("H2O", 0.0) + 2.0
    n = sum(products.values())
    return {k: products[k] / n for k in GAS_SPECIES if products.get(k, 0.0) > 0.0}


# ---------------------------------------------------------------------------------------------
# The stream API
# ---------------------------------------------------------------------------------------------


@runtime_checkable
class Stream(Protocol):
    """What the engine needs from a heat source or sink (all SI; vectorised methods).

    Attributes: kind (study-file name), T_in_K [K], m_kg_s [kg/s] (NaN for a sink: it follows
    from the duty), p_Pa [Pa], h_in_J_kg [J/kg], s_in_J_kgK [J/(kg K)], T_min_valid_K and
    T_max_valid_K [K] (range of the property model; constant-cp extrapolation outside).
    """

    kind: str
    T_in_K: float
    m_kg_s: float
    p_Pa: float
    h_in_J_kg: float
    s_in_J_kgK: float
    T_min_valid_K: float
    T_max_valid_K: float

    def h_J_kg(self, T_K): ...

    def T_K(self, h_J_kg): ...

    def s_J_kgK(self, T_K): ...

    def cp_J_kgK(self, T_K): ...

    def describe(self) -> str: ...


class _CurveStream:
    """Shared behaviour: delegate the property calls to the curve built in __post_init__.

    Besides the model, each kind owns the study-file rules that are its own (the study schema
    reads them through the registries below, and names no kind itself): ``own_keys`` (keys of
    its section that only some kinds take), :meth:`settings_defaults`, :meth:`settings_problems`
    (rules between keys that do not vary with a sweep) and :meth:`point_problems` (physical rules
    checked at every operating point).
    """

    kind: ClassVar[str]
    label: ClassVar[str]
    default_pressure_bar: ClassVar[float | None] = None
    #: keys of the study's section that only some kinds take: these are this kind's
    own_keys: ClassVar[tuple[str, ...]] = ()
    #: overall heat-transfer coefficients [W/(m2 K)] of the exchanger zones this stream flows
    #: through (heater zones for a source, condenser zones for a sink), for areas from UA
    #: (orcscreen.areas); the study's [exchangers] u_* keys override them
    u_defaults_W_m2K: ClassVar[dict[str, float]] = {}

    @classmethod
    def settings_defaults(cls, section: Mapping[str, Any]) -> dict[str, Any]:
        """Defaults of this kind for the keys the study left out (None): its pressure."""
        if section.get("pressure_bar") is None and cls.default_pressure_bar is not None:
            return {"pressure_bar": cls.default_pressure_bar}
        return {}

    @classmethod
    def settings_problems(cls, section: Mapping[str, Any], where: str, show) -> tuple[list[str], dict[str, Any]]:
        """Rules between keys of the section (where: "source" or "sink") that a sweep cannot change:
        (messages "key = value: reason; allowed: ...", fixes to apply to the section). show(value)
        writes a value as in the study file."""
        return [], {}

    @classmethod
    def swept_key_problem(cls, key: str, section: Mapping[str, Any]) -> str | None:
        """Why a sweep of one of the section's keys does not apply to this kind, or None."""
        return None

    @classmethod
    def point_problems(cls, values: Mapping[str, Any], show) -> list[tuple[str, str, str]]:
        """(check id, key path, message) for each physical rule the operating point breaks;
        values holds the point's settings by dotted path (source.*, sink.*)."""
        return []

    def _set_curve(self, curve, h_in: float | None = None, s_in: float | None = None) -> None:
        object.__setattr__(self, "_curve", curve)
        object.__setattr__(self, "h_in_J_kg", float(curve.h(self.T_in_K) if h_in is None else h_in))
        object.__setattr__(self, "s_in_J_kgK", float(curve.s(self.T_in_K) if s_in is None else s_in))
        object.__setattr__(self, "T_min_valid_K", float(curve.T_lo))
        object.__setattr__(self, "T_max_valid_K", float(curve.T_hi))

    def h_J_kg(self, T_K):
        """Specific enthalpy [J/kg] at temperature T_K [K] on the stream's isobar."""
        return self._curve.h(T_K)

    def T_K(self, h_J_kg):
        """Temperature [K] at specific enthalpy h_J_kg [J/kg] (inverse of h_J_kg)."""
        return self._curve.T(h_J_kg)

    def s_J_kgK(self, T_K):
        """Specific entropy [J/(kg K)] at temperature T_K [K]."""
        return self._curve.s(T_K)

    def cp_J_kgK(self, T_K):
        """Isobaric specific heat [J/(kg K)] at temperature T_K [K] (derivative of h_J_kg)."""
        return self._curve.cp(T_K)

    def _describe(self, extra: str = "") -> str:
        flow = "" if math.isnan(self.m_kg_s) else f", {self.m_kg_s:.4g} kg/s"
        tail = ""
        T_min = getattr(self, "T_out_min_K", None)
        if T_min is not None:
            tail = f", outlet >= {T_min - ZERO_CELSIUS_K:.1f} °C"
        return f"{self.label}{extra}: {self.T_in_K - ZERO_CELSIUS_K:.1f} °C{flow}, {self.p_Pa / 1e5:.4g} bar{tail}"

    def describe(self) -> str:
        """One line: model, inlet temperature [°C], flow [kg/s], pressure [bar]."""
        return self._describe()


def _check_number(what: str, value, *, positive: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise StreamError(f"{what} is {value!r}; expected a finite number")
    if positive and value <= 0.0:
        raise StreamError(f"{what} is {value!r}; it must be greater than zero")
    return float(value)


def _check_source(src) -> float:
    """Common checks of a source; returns the lowest temperature its table must cover [K]."""
    _check_number("inlet temperature [K]", src.T_in_K, positive=True)
    _check_number("mass flow [kg/s]", src.m_kg_s, positive=True)
    _check_number("pressure [Pa]", src.p_Pa, positive=True)
    T_low = DEFAULT_T_LOW_K if src.T_low_K is None else _check_number("table low end [K]", src.T_low_K, positive=True)
    if src.T_out_min_K is not None:
        T_min = _check_number("minimum outlet temperature [K]", src.T_out_min_K, positive=True)
        if T_min >= src.T_in_K:
            raise StreamError(
                f"source.min_outlet_temperature_C = {T_min - ZERO_CELSIUS_K:.6g}: the minimum outlet "
                f"temperature {T_min - ZERO_CELSIUS_K:.2f} °C is not below the inlet "
                f"temperature {src.T_in_K - ZERO_CELSIUS_K:.2f} °C, so the source could give no heat; "
                f"allowed: a number below source.inlet_temperature_C"
            )
        T_low = min(T_low, T_min)
    return min(T_low, src.T_in_K - 1.0)


#: Overall heat-transfer coefficients [W/(m2 K)] of heater zones heated by a liquid (see HotWater).
_LIQUID_SOURCE_U = {"preheating": 750.0, "evaporation": 1000.0, "superheating": 250.0, "supercritical heating": 650.0}


@dataclass(frozen=True)
class HotWater(_CurveStream):
    """Pressurised liquid water (IAPWS-95 via CoolProp "Water") cooled at constant pressure.

    T_in_K [K], m_kg_s [kg/s], p_Pa [Pa] (must exceed the saturation pressure at T_in, or the
    critical pressure), T_out_min_K [K] or None, T_low_K [K]: lowest temperature to tabulate
    (default -20 °C or T_out_min if lower; the table starts at 0.01 °C at the lowest, below it
    values are a constant-cp extrapolation of liquid water).
    """

    T_in_K: float
    m_kg_s: float
    p_Pa: float
    T_out_min_K: float | None = None
    T_low_K: float | None = None

    kind: ClassVar[str] = "water"
    label: ClassVar[str] = "hot water"
    default_pressure_bar: ClassVar[float] = 10.0
    #: a liquid heating an evaporating organic fluid: midpoints of the ranges of DiPippo,
    #: *Geothermal Power Plants*, Table 8.1 (refrigerant evaporating-brine or -water 170-850) and
    #: of common ORC screening practice (preheater 500-1000, evaporator 600-1500, supercritical
    #: heater 500-800; from memory); the superheater, vapour-side limited, 250 (from memory)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = _LIQUID_SOURCE_U

    def __post_init__(self):
        T_low = _check_source(self)
        water = props.get_fluid("Water")
        T_in_C = self.T_in_K - ZERO_CELSIUS_K
        if self.T_in_K <= water.T_min_K:
            raise StreamError(
                f"source.inlet_temperature_C = {T_in_C:.6g}: hot water at or below its freezing point "
                f"({water.T_min_K - ZERO_CELSIUS_K:.2f} °C) would be ice; allowed: above "
                f"{water.T_min_K - ZERO_CELSIUS_K:.2f} °C")
        if self.p_Pa < water.p_crit_Pa:
            if self.T_in_K >= water.T_crit_K:
                raise StreamError(
                    f"source.inlet_temperature_C = {T_in_C:.6g}: water above its critical temperature "
                    f"({water.T_crit_K - ZERO_CELSIUS_K:.1f} °C) at {self.p_Pa / 1e5:.4g} bar is steam, not "
                    f"hot water; allowed: below {water.T_crit_K - ZERO_CELSIUS_K:.1f} °C, a "
                    f"source.pressure_bar above the critical pressure {water.p_crit_Pa / 1e5:.4g} bar, or "
                    f"kind 'fluid' for a vapour source"
                )
            p_sat = water.sat_T(self.T_in_K).p_Pa
            if self.p_Pa <= p_sat or water.T_sat_K(self.p_Pa) - self.T_in_K < _SAT_GAP_K:
                raise StreamError(
                    f"source.pressure_bar = {self.p_Pa / 1e5:.6g}: hot water at {T_in_C:.1f} °C boils below "
                    f"{p_sat / 1e5:.4g} bar, and the pressure is {self.p_Pa / 1e5:.4g} bar; allowed: a pressure "
                    f"above {p_sat / 1e5:.4g} bar (or kind "
                    f"'fluid' with inlet_quality for a two-phase source)"
                )
        self._set_curve(_isobar_curve("Water", float(self.p_Pa), _grid_down(T_low), _grid_up(self.T_in_K + _MARGIN_K)))

    @classmethod
    def from_settings(cls, section: Mapping[str, Any], T_low_K: float | None = None) -> HotWater:
        T_in, m, p, T_min = _read_common(section, cls)
        return cls(T_in, m, p, T_min, T_low_K)

    @classmethod
    def point_problems(cls, values: Mapping[str, Any], show) -> list[tuple[str, str, str]]:
        """Hot water must be liquid: not ice, not steam above the critical temperature, not
        boiling at its pressure (IAPWS-95 through orcscreen.properties)."""
        T_C, p_bar = values["source.inlet_temperature_C"], values["source.pressure_bar"]
        if p_bar is None:
            return []
        T_triple, T_crit, p_crit = _water_limits()
        if not T_C > T_triple:
            return [("freezing-source", "source.inlet_temperature_C",
                     f"source.inlet_temperature_C = {show(T_C)}: hot water at {T_C:g} °C would be ice "
                     f"(freezing point {T_triple:.2f} °C, IAPWS-95); allowed: above {T_triple:.2f} °C")]
        if p_bar >= p_crit:
            return []
        if T_C >= T_crit:
            return [("steam-source", "source.inlet_temperature_C",
                     f"source.inlet_temperature_C = {show(T_C)}: water above its critical temperature "
                     f"({T_crit:.1f} °C) is steam at {p_bar:g} bar, not hot water; allowed: below "
                     f"{T_crit:.1f} °C, source.pressure_bar above the critical pressure {p_crit:.4g} bar, "
                     f'or kind = "fluid" for steam')]
        try:
            p_sat = _water_saturation_pressure_bar(T_C)
        except props.PropertyError:
            return []  # left to the stream model, whose message names the key
        if not p_bar > p_sat:
            return [("boiling-source", "source.pressure_bar",
                     f"source.pressure_bar = {show(p_bar)}: hot water at {T_C:g} °C boils at this pressure "
                     f"(saturation {p_sat:.4g} bar, IAPWS-95); allowed: a pressure above {p_sat:.4g} bar, "
                     f'or kind = "fluid" for steam')]
        return []


@dataclass(frozen=True)
class _LinearCpLiquid(_CurveStream):
    """Incompressible liquid with cp = cp0_J_kgK + cp_slope_J_kgK2 (T - 273.15 K); h = s = 0 at 0 °C.

    The constructor's cp argument is named cp0_J_kgK (cp at 0 °C) so that it does not hide the
    method cp_J_kgK(T_K) of the stream API; pass it by position or by that name.

    h does not depend on pressure (incompressible: only differences at the fixed p are used).
    cp must stay positive from T_low_K (default -20 °C or T_out_min) to T_in + 5 K.
    """

    T_in_K: float
    m_kg_s: float
    p_Pa: float
    cp0_J_kgK: float
    cp_slope_J_kgK2: float = 0.0
    T_out_min_K: float | None = None
    T_low_K: float | None = None

    default_pressure_bar: ClassVar[float]
    default_cp_kJ_kgK: ClassVar[float]
    own_keys: ClassVar[tuple[str, ...]] = ("cp_kJ_kgK", "cp_slope_kJ_kgK2")

    @classmethod
    def settings_defaults(cls, section: Mapping[str, Any]) -> dict[str, Any]:
        out = super().settings_defaults(section)
        if section.get("cp_kJ_kgK") is None:
            out["cp_kJ_kgK"] = cls.default_cp_kJ_kgK
        return out

    def __post_init__(self):
        T_low = _check_source(self)
        cp0 = _check_number(f"{self.label} cp [J/(kg K)]", self.cp0_J_kgK, positive=True)
        slope = _check_number(f"{self.label} cp slope [J/(kg K^2)]", self.cp_slope_J_kgK2)
        T_hi = self.T_in_K + _MARGIN_K
        for T in (T_low, T_hi):
            if cp0 + slope * (T - ZERO_CELSIUS_K) <= 0.0:
                raise StreamError(
                    f"source.cp_slope_kJ_kgK2 = {slope / 1e3:.6g}: the {self.label} cp = {cp0 / 1e3:.4g} "
                    f"{slope / 1e3:+.4g}*T_C kJ/(kg K) is not positive at {T - ZERO_CELSIUS_K:.1f} °C; "
                    f"allowed: cp_kJ_kgK and cp_slope_kJ_kgK2 that keep cp above zero from "
                    f"{T_low - ZERO_CELSIUS_K:.1f} to {T_hi - ZERO_CELSIUS_K:.1f} °C"
                )
        self._set_curve(_LinearCpCurve(cp0, slope, T_low, T_hi))

    def describe(self) -> str:
        cp = f" (cp {self.cp0_J_kgK / 1e3:.4g} kJ/(kg K) at 0 °C"
        cp += f", {self.cp_slope_J_kgK2 / 1e3:+.3g} per K)" if self.cp_slope_J_kgK2 else ")"
        return self._describe(cp)

    @classmethod
    def from_settings(cls, section: Mapping[str, Any], T_low_K: float | None = None) -> _LinearCpLiquid:
        T_in, m, p, T_min = _read_common(section, cls)
        cp = _read(section, "cp_kJ_kgK", cls.default_cp_kJ_kgK, positive=True)
        slope = _read(section, "cp_slope_kJ_kgK2", 0.0)
        return cls(T_in, m, p, cp * 1e3, slope * 1e3, T_min, T_low_K)


@dataclass(frozen=True)
class Brine(_LinearCpLiquid):
    """Geothermal brine as a linear-cp liquid (see :class:`_LinearCpLiquid`).

    Default cp 3.8 kJ/(kg K): common practice for a moderately saline geothermal brine (pure
    water 4.18; seawater of 35 g/kg about 3.99 kJ/(kg K) at 20 °C, Sharqawy, Lienhard and Zubair,
    Desalin. Water Treat. 16 (2010) 354, from memory; brines of several % dissolved solids lower).
    """

    kind: ClassVar[str] = "brine"
    label: ClassVar[str] = "brine"
    default_pressure_bar: ClassVar[float] = 10.0
    #: a liquid heating an evaporating organic fluid: midpoints of the ranges of DiPippo,
    #: *Geothermal Power Plants*, Table 8.1 (refrigerant evaporating-brine or -water 170-850) and
    #: of common ORC screening practice (preheater 500-1000, evaporator 600-1500, supercritical
    #: heater 500-800; from memory); the superheater, vapour-side limited, 250 (from memory)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = _LIQUID_SOURCE_U
    default_cp_kJ_kgK: ClassVar[float] = 3.8


@dataclass(frozen=True)
class ThermalOil(_LinearCpLiquid):
    """Heat-transfer oil as a linear-cp liquid (see :class:`_LinearCpLiquid`).

    Default cp 2.3 kJ/(kg K): common practice for a synthetic heat-transfer oil at 200-300 °C
    (e.g. a hydrogenated terphenyl oil's datasheet gives about 2.2 at 200 °C and 2.6 at 300 °C,
    from memory). Give cp and its slope from the oil's datasheet for a real study.
    """

    kind: ClassVar[str] = "thermal-oil"
    label: ClassVar[str] = "thermal oil"
    default_pressure_bar: ClassVar[float] = 5.0
    #: a viscous oil film limits the transfer: about half the liquid values (from memory)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = {
        "preheating": 400.0, "evaporation": 500.0, "superheating": 200.0, "supercritical heating": 400.0}
    default_cp_kJ_kgK: ClassVar[float] = 2.3


@dataclass(frozen=True)
class FlueGas(_CurveStream):
    """Flue or exhaust gas: ideal-gas mixture of N2, O2, CO2, H2O and Ar at pressure p_Pa.

    composition: species -> fraction (any positive scale, normalised), basis "mole" or "mass";
    None gives the default natural-gas exhaust, :func:`methane_flue_gas_mole_fractions` at 15 %
    excess air (CO2 8.4 %, H2O 16.7 %, O2 2.5 %, N2 71.6 %, Ar 0.9 % by mole). h = sum of mass
    fractions times the CoolProp ideal-gas species enthalpies; s adds -R_i ln(y_i p / p_ref).
    Water vapour never condenses in this model: below :meth:`water_dew_point_K` the real gas
    would release latent heat (and acid) that is not counted. Valid 200-2000 K (tabulated once
    per process per species, 2.5 K nodes).
    """

    T_in_K: float
    m_kg_s: float
    p_Pa: float
    composition: Mapping[str, float] | None = field(default=None, hash=False)
    basis: str = "mole"
    T_out_min_K: float | None = None
    T_low_K: float | None = None

    kind: ClassVar[str] = "flue-gas"
    label: ClassVar[str] = "flue gas"
    default_pressure_bar: ClassVar[float] = 1.01325
    #: the gas side limits every zone: 50 on the bare-tube area, within DiPippo, *Geothermal
    #: Power Plants*, Table 8.1, steam-gases 30-285 (our choice, low for a low-velocity gas)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = dict.fromkeys(
        ("preheating", "evaporation", "superheating", "supercritical heating"), 50.0)

    def __post_init__(self):
        _check_source(self)
        if self.composition is None:
            y = methane_flue_gas_mole_fractions()
        else:
            y = _normalised_fractions(self.composition, self.basis)
        if not _GAS_T_LO_K < self.T_in_K <= _GAS_T_HI_K:
            raise StreamError(
                f"source.inlet_temperature_C = {self.T_in_K - ZERO_CELSIUS_K:.6g}: outside the flue-gas "
                f"model's range; allowed: above {_GAS_T_LO_K - ZERO_CELSIUS_K:.0f} and up to "
                f"{_GAS_T_HI_K - ZERO_CELSIUS_K:.0f} °C"
            )
        M = {k: props.molar_mass_kg_mol(GAS_SPECIES[k]) for k in y}
        M_mix = sum(y[k] * M[k] for k in y)
        object.__setattr__(self, "mole_fractions", y)
        object.__setattr__(self, "mass_fractions", {k: y[k] * M[k] / M_mix for k in y})
        object.__setattr__(self, "molar_mass_kg_mol", M_mix)
        self._set_curve(_gas_mixture_curve(tuple(sorted(y.items())), float(self.p_Pa)))

    def water_dew_point_K(self) -> float:
        """Temperature [K] at which the water vapour would start to condense (NaN without H2O).

        Saturation temperature of water (IAPWS-95) at the partial pressure y_H2O p. Below the
        triple-point pressure the gas would frost rather than condense; the triple-point
        temperature 273.16 K is returned then, an upper bound of the frost point.
        """
        y = self.mole_fractions.get("H2O", 0.0)
        if y <= 0.0:
            return math.nan
        water = props.get_fluid("Water")
        p_w = y * self.p_Pa
        if p_w <= water.sat_T(water.T_min_K).p_Pa:
            return water.T_min_K
        return water.T_sat_K(p_w)

    def describe(self) -> str:
        parts = ", ".join(f"{k} {100 * v:.1f} %" for k, v in self.mole_fractions.items())
        return self._describe(f" ({parts} by mole)")

    @classmethod
    def from_settings(cls, section: Mapping[str, Any], T_low_K: float | None = None) -> FlueGas:
        T_in, m, p, T_min = _read_common(section, cls)
        composition = section.get("composition")
        basis = section.get("composition_basis") or "mole"
        if composition is not None:
            try:
                _normalised_fractions(composition, basis)
            except StreamError as exc:
                raise StreamError(f"source.composition = {dict(composition) if isinstance(composition, Mapping) else composition!r}: {exc}") from None
        return cls(T_in, m, p, composition, basis, T_min, T_low_K)

    own_keys: ClassVar[tuple[str, ...]] = ("composition",)

    @classmethod
    def settings_defaults(cls, section: Mapping[str, Any]) -> dict[str, Any]:
        """The default composition (natural-gas exhaust) for a mole-basis section without one."""
        out = super().settings_defaults(section)
        if section.get("composition") is None and (section.get("composition_basis") or "mole") == "mole":
            out["composition"] = dict(methane_flue_gas_mole_fractions())
        return out

    @classmethod
    def settings_problems(cls, section, where, show):
        comp = section.get("composition")
        if comp is None:
            return [f'{where}.composition: required when composition_basis = "mass"; allowed: a table '
                    f"of {', '.join(GAS_SPECIES)} mass fractions"], {}
        total = sum(comp.values())
        if not abs(total - 1.0) <= 0.01:
            return [f"{where}.composition = {show(comp)}: fractions sum to {total:.6g}; "
                    f"allowed: fractions of {', '.join(GAS_SPECIES)} summing to 1 (within 0.01)"], {}
        return [], {"composition": {k: x / total for k, x in comp.items()}}


@dataclass(frozen=True)
class FluidSource(_CurveStream):
    """Any CoolProp pure fluid cooled at constant pressure, possibly entering two-phase.

    fluid: CoolProp name; inlet_quality: None for a single-phase inlet at (p_Pa, T_in_K), or the
    vapour quality 0..1 of a saturated inlet (e.g. 1 for condensing steam); then T_in_K must be
    the saturation temperature at p_Pa (within 0.05 K; T_in_K is then reset to the exact T_sat),
    and p_Pa may be None to take it from T_in_K. The curve includes the latent plateau: see the
    module notes on h_J_kg(T_sat); use h_in_J_kg for the inlet enthalpy.
    """

    fluid: str
    T_in_K: float
    m_kg_s: float
    p_Pa: float | None = None
    inlet_quality: float | None = None
    T_out_min_K: float | None = None
    T_low_K: float | None = None

    kind: ClassVar[str] = "fluid"
    label: ClassVar[str] = "fluid"
    default_pressure_bar: ClassVar[float | None] = None
    #: as a liquid source (a condensing vapour source transfers better: conservative)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = _LIQUID_SOURCE_U

    def __post_init__(self):
        try:
            fl = props.get_fluid(self.fluid)
        except PropertyError:
            raise StreamError(f"source.fluid = {self.fluid!r}: not a CoolProp pure-fluid name; allowed: a "
                              f"CoolProp fluid name such as 'Water'") from None
        T_in_C = self.T_in_K - ZERO_CELSIUS_K
        x = self.inlet_quality
        if x is not None:
            x = _check_number("inlet quality", x)
            if not 0.0 <= x <= 1.0:
                raise StreamError(f"source.inlet_quality = {x!r}: not a vapour quality; allowed: from 0 "
                                  f"(liquid) to 1 (vapour)")
            if not fl.T_min_K < self.T_in_K < fl.T_crit_K:
                raise StreamError(
                    f"source.inlet_temperature_C = {T_in_C:.6g}: {self.fluid} has no two-phase state at "
                    f"this temperature (an inlet_quality needs one); allowed: between "
                    f"{fl.T_min_K - ZERO_CELSIUS_K:.2f} and {fl.T_crit_K - ZERO_CELSIUS_K:.2f} °C, or leave "
                    f"out source.inlet_quality for a single-phase source"
                )
            p_sat = fl.sat_T(self.T_in_K).p_Pa
            if self.p_Pa is None:
                object.__setattr__(self, "p_Pa", p_sat)
            elif abs(fl.T_sat_K(self.p_Pa) - self.T_in_K) > 0.05:
                raise StreamError(
                    f"source.pressure_bar = {self.p_Pa / 1e5:.6g}: a two-phase {self.fluid} inlet at "
                    f"{T_in_C:.2f} °C has the pressure {p_sat / 1e5:.5g} bar, not {self.p_Pa / 1e5:.5g} bar; allowed: leave the pressure "
                    f"out (it follows from the temperature), or give the matching pair"
                )
        elif self.p_Pa is None:
            raise StreamError(f"source.pressure_bar is missing: a single-phase {self.fluid} source needs "
                              f"its pressure; allowed: a number > 0 (or give source.inlet_quality)")
        T_low = _check_source(self)
        sat = _saturation_on_isobar(fl, self.p_Pa)
        if x is None and sat is not None and abs(sat.T_K - self.T_in_K) < _SAT_GAP_K:
            raise StreamError(
                f"source.inlet_temperature_C = {T_in_C:.6g}: {self.fluid} is saturated at "
                f"{self.p_Pa / 1e5:.5g} bar, so its state needs a vapour quality; allowed: give "
                f"source.inlet_quality (0 liquid to 1 vapour), or a temperature away from saturation"
            )
        if not self.T_in_K <= fl.T_max_K:
            raise StreamError(
                f"source.inlet_temperature_C = {T_in_C:.6g}: above the range of {self.fluid}'s equation "
                f"of state; allowed: up to {fl.T_max_K - ZERO_CELSIUS_K:.1f} °C")
        try:
            curve = _isobar_curve(self.fluid, float(self.p_Pa), _grid_down(T_low), _grid_up(self.T_in_K + _MARGIN_K))
        except PropertyError:
            raise StreamError(
                f"source.pressure_bar = {self.p_Pa / 1e5:.6g}: {self.fluid}'s equation of state gives no "
                f"usable states along this pressure between {T_low - ZERO_CELSIUS_K:.1f} and "
                f"{T_in_C:.1f} °C (below its triple point, or too close to its critical point); "
                f"allowed: another pressure, or a source.min_outlet_temperature_C inside the fluid's "
                f"range (from {fl.T_min_K - ZERO_CELSIUS_K:.2f} °C)") from None
        if x is None:
            self._set_curve(curve)
        else:
            # A saturated inlet sits exactly on the plateau: T_in_K becomes the T_sat of the table.
            object.__setattr__(self, "T_in_K", curve.T_sat)
            self._set_curve(curve, curve.hL + x * (curve.hV - curve.hL), curve.sL + x * (curve.sV - curve.sL))

    @property
    def T_sat_K(self) -> float:
        """Saturation temperature [K] on the stream's isobar (NaN if it has none in range)."""
        return getattr(self._curve, "T_sat", math.nan)

    def describe(self) -> str:
        q = "" if self.inlet_quality is None else f", inlet quality {self.inlet_quality:.3g}"
        return self._describe(f" {self.fluid}") + q

    own_keys: ClassVar[tuple[str, ...]] = ("fluid", "inlet_quality")

    @classmethod
    def settings_problems(cls, section, where, show):
        """The fluid must be CoolProp's (its canonical name is kept); the pressure comes either from
        the section or, with an inlet quality, from the temperature."""
        errors, fixes = [], {}
        name = section.get("fluid")
        if name is None:
            errors.append(f'{where}.fluid: required for kind = "fluid"; allowed: a CoolProp fluid name such as "Water"')
        else:
            names = props.coolprop_fluid_names()
            canonical = name if name in names else {n.lower(): n for n in names}.get(str(name).lower())
            if canonical is None:
                close = difflib.get_close_matches(str(name), names, n=3, cutoff=0.5)
                hint = f"; close matches: {', '.join(close)}" if close else ""
                errors.append(f"{where}.fluid = {show(name)}: unknown to CoolProp{hint}; allowed: a CoolProp fluid name")
            else:
                fixes["fluid"] = canonical
        quality, pressure = section.get("inlet_quality"), section.get("pressure_bar")
        if quality is None and pressure is None:
            errors.append(f'{where}.pressure_bar: required for kind = "fluid" without inlet_quality; '
                          f"allowed: a number > 0 (or give {where}.inlet_quality for a saturated source)")
        if quality is not None and pressure is not None:
            errors.append(f"{where}.pressure_bar = {show(pressure)}: a saturated source "
                          f"(inlet_quality given) takes its pressure from the temperature; allowed: leave it out")
        return errors, fixes

    @classmethod
    def swept_key_problem(cls, key: str, section: Mapping[str, Any]) -> str | None:
        if key == "pressure_bar" and section.get("inlet_quality") is not None:
            return "a saturated source (inlet_quality given) takes its pressure from the temperature"
        return None

    @classmethod
    def from_settings(cls, section: Mapping[str, Any], T_low_K: float | None = None) -> FluidSource:
        fluid = section.get("fluid")
        if not isinstance(fluid, str) or not fluid:
            raise StreamError("source.fluid is missing: kind 'fluid' needs a CoolProp fluid name (e.g. 'Water')")
        T_in, m, p, T_min = _read_common(section, cls)
        x = section.get("inlet_quality")
        if x is not None:
            x = _read(section, "inlet_quality", None)
        elif p is None:
            raise StreamError(
                "source.pressure_bar is missing: a single-phase 'fluid' source needs its pressure "
                "(or give source.inlet_quality for a saturated inlet at its inlet temperature)"
            )
        return cls(fluid, T_in, m, p, x, T_min, T_low_K)


# -- sinks ---------------------------------------------------------------------------------------


#: Standard acceleration of gravity [m/s2] (CGPM 1901, exact by definition).
G_STANDARD_M_S2 = 9.80665


class _Sink(_CurveStream):
    """Shared sink behaviour: fixed temperature rise, flow from the heat duty, and the power of
    its fans or pumps.

    Auxiliary power: ``aux_J_kg`` is the work per kg of sink flow [J/kg] that moves it (a fan's
    or a pump's, set by the kind from its own keys), so the power per W rejected is
    aux_J_kg / (h_out - h_in) and the power W_aux = m_sink aux_J_kg. A study may instead give a
    fixed ``aux_power_per_kW_rejected`` (``fixed_aux_per_W``, NaN when not given).
    """

    T_in_K: float
    rise_K: float
    #: default efficiency of the fan or pump with its motor and drive [-] (the kind's)
    default_aux_efficiency: ClassVar[float]

    def aux_power_per_W_rejected(self) -> float:
        """Fan or pump power per W of heat rejected [-]: the fixed fraction when the study gives
        one, else aux_J_kg / (h_out - h_in)."""
        if not math.isnan(self.fixed_aux_per_W):
            return self.fixed_aux_per_W
        return self.aux_J_kg / (self.h_out_J_kg - self.h_in_J_kg)

    @classmethod
    def aux_work_J_kg(cls, section: Mapping[str, Any], T_in_K: float, p_Pa: float) -> float:
        """Work per kg of sink flow [J/kg] of the fans or pumps, from the kind's own keys."""
        raise NotImplementedError

    @classmethod
    def settings_problems(cls, section: Mapping[str, Any], where: str, show) -> tuple[list[str], dict[str, Any]]:
        """A fixed auxiliary fraction replaces the kind's fan or pump model: not both."""
        if section.get("aux_power_per_kW_rejected") is None:
            return [], {}
        given = [k for k in cls.own_keys if section.get(k) is not None and section.get(k) != cls.own_defaults.get(k)]
        if section.get("aux_efficiency") not in (None, cls.default_aux_efficiency):
            given.append("aux_efficiency")
        if given:
            return [f"{where}.aux_power_per_kW_rejected = {show(section['aux_power_per_kW_rejected'])}: a fixed "
                    f"fraction replaces the {cls.label} model, so {', '.join(f'{where}.{k}' for k in given)} would be "
                    f"ignored; allowed: one of the two"], {}
        return [], {}

    @classmethod
    def settings_defaults(cls, section: Mapping[str, Any]) -> dict[str, Any]:
        """The kind's pressure, auxiliary efficiency and own keys where the study left them out."""
        out = super().settings_defaults(section)
        if section.get("aux_efficiency") is None:
            out["aux_efficiency"] = cls.default_aux_efficiency
        out.update({k: v for k, v in cls.own_defaults.items() if section.get(k) is None})
        return out

    @property
    def T_out_K(self) -> float:
        """Sink outlet temperature [K] = T_in_K + rise_K."""
        return self.T_in_K + self.rise_K

    @functools.cached_property
    def h_out_J_kg(self) -> float:
        """Specific enthalpy [J/kg] at the outlet temperature (computed once per sink)."""
        return self.h_J_kg(self.T_out_K)

    def mass_flow_kg_s(self, Q_W):
        """Sink mass flow [kg/s] that takes the heat duty Q_W [W] with the fixed temperature rise."""
        return Q_W / (self.h_J_kg(self.T_out_K) - self.h_in_J_kg)

    def describe(self) -> str:
        return self._describe(f" (+{self.rise_K:.3g} K)")

    def _check_sink(self) -> None:
        _check_number("sink inlet temperature [K]", self.T_in_K, positive=True)
        _check_number("sink temperature rise [K]", self.rise_K, positive=True)
        _check_number("sink pressure [Pa]", self.p_Pa, positive=True)

    @classmethod
    def from_settings(cls, section: Mapping[str, Any]):
        T_in = _read(section, "inlet_temperature_C", 20.0, where="sink") + ZERO_CELSIUS_K
        if section.get("temperature_rise_K") == "optimise":  # the optimiser varies it from its lowest value
            section = {**section, "temperature_rise_K": section.get("min_temperature_rise_K", 3.0)}
        rise = _read(section, "temperature_rise_K", 10.0, positive=True, where="sink")
        p = _read(section, "pressure_bar", cls.default_pressure_bar, positive=True, where="sink") * 1e5
        fixed = section.get("aux_power_per_kW_rejected")
        fixed = math.nan if fixed is None else _read(section, "aux_power_per_kW_rejected", None, where="sink")
        if fixed < 0.0:
            raise StreamError(f"sink.aux_power_per_kW_rejected = {fixed!r}: must be >= 0")
        aux = 0.0 if not math.isnan(fixed) else cls.aux_work_J_kg({**cls.settings_defaults(section), **{
            k: v for k, v in section.items() if v is not None}}, T_in, p)
        return cls(T_in, rise, p, aux_J_kg=aux, fixed_aux_per_W=fixed)


@dataclass(frozen=True)
class CoolingWater(_Sink):
    """Cooling water (IAPWS-95 via CoolProp "Water") heated by rise_K at constant pressure p_Pa."""

    T_in_K: float
    rise_K: float
    p_Pa: float
    m_kg_s: float = math.nan
    aux_J_kg: float = 0.0
    fixed_aux_per_W: float = math.nan

    kind: ClassVar[str] = "water"
    label: ClassVar[str] = "cooling water"
    default_pressure_bar: ClassVar[float] = 2.0
    own_keys: ClassVar[tuple[str, ...]] = ("pump_head_m",)
    #: pump head of the cooling-water circuit [m]: the condenser, piping and a cooling tower's
    #: lift, 10-20 m in plants of this size (from memory; a study setting)
    own_defaults: ClassVar[dict[str, float]] = {"pump_head_m": 15.0}
    #: organic vapour condensing against water: DiPippo, *Geothermal Power Plants*, Table 8.1,
    #: refrigerant condensing-water 450-850 (the midpoint); desuperheating, vapour-side limited,
    #: 250, and subcooling 500 (from memory)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = {"desuperheating": 250.0, "condensation": 650.0, "subcooling": 500.0}
    #: the cost models' kind of condenser, and the area its U values are on
    condenser_cost_kind: ClassVar[str] = "condenser"
    area_basis: ClassVar[str] = "bare tube"
    #: area on the basis the U values are on / bare-tube area
    finned_to_bare_area_ratio: ClassVar[float] = 1.0
    #: pump with motor (from memory: 0.75 for a centrifugal cooling-water pump and motor)
    default_aux_efficiency: ClassVar[float] = 0.75

    @classmethod
    def aux_work_J_kg(cls, section: Mapping[str, Any], T_in_K: float, p_Pa: float) -> float:
        """Pump work per kg of cooling water [J/kg] = g H / eta (head H [m], eta with the motor)."""
        head = _read(section, "pump_head_m", None, where="sink")
        eta = _read(section, "aux_efficiency", None, positive=True, where="sink")
        if head < 0.0 or eta > 1.0:
            raise StreamError(f"sink: pump_head_m = {head!r}, aux_efficiency = {eta!r}: allowed a head >= 0 and "
                              f"an efficiency in (0, 1]")
        return G_STANDARD_M_S2 * head / eta

    @classmethod
    def point_problems(cls, values: Mapping[str, Any], show) -> list[tuple[str, str, str]]:
        """Cooling water must stay liquid from inlet to outlet: not frozen, not steam, not boiling."""
        T_in_C, rise_K, p_bar = values["sink.inlet_temperature_C"], values["sink.temperature_rise_K"], values["sink.pressure_bar"]
        if not T_in_C > 0:
            return [("freezing-sink", "sink.inlet_temperature_C",
                     f"sink.inlet_temperature_C = {show(T_in_C)}: cooling water would freeze; allowed: above 0 °C, "
                     f'or sink.kind = "air"')]
        _, T_crit, p_crit = _water_limits()
        T_out = T_in_C + rise_K
        if p_bar is None or p_bar >= p_crit:
            return []
        if T_out >= T_crit:
            return [("steam-sink", "sink.temperature_rise_K",
                     f"sink.temperature_rise_K = {show(rise_K)}: cooling water leaving at {T_out:g} °C is "
                     f"above the critical temperature of water ({T_crit:.1f} °C) and would be steam at "
                     f"{p_bar:g} bar; allowed: a rise that keeps the outlet below {T_crit:.1f} °C")]
        try:
            p_sat = _water_saturation_pressure_bar(T_out)
        except props.PropertyError:
            return []
        if not p_bar > p_sat:
            return [("boiling-sink", "sink.pressure_bar",
                     f"sink.pressure_bar = {show(p_bar)}: cooling water leaving at {T_out:g} °C boils at this "
                     f"pressure (saturation {p_sat:.4g} bar, IAPWS-95); allowed: above {p_sat:.4g} bar")]
        return []

    def __post_init__(self):
        self._check_sink()
        water = props.get_fluid("Water")
        if self.T_in_K <= water.T_min_K:
            raise StreamError(
                f"sink.inlet_temperature_C = {self.T_in_K - ZERO_CELSIUS_K:.6g}: cooling water would "
                f"freeze; allowed: above {water.T_min_K - ZERO_CELSIUS_K:.2f} °C, or sink kind 'air'"
            )
        T_sat = water.T_sat_K(self.p_Pa) if self.p_Pa < water.p_crit_Pa else math.inf
        if self.T_out_K >= T_sat - _SAT_GAP_K:
            raise StreamError(
                f"sink.pressure_bar = {self.p_Pa / 1e5:.6g}: cooling water leaving at "
                f"{self.T_out_K - ZERO_CELSIUS_K:.1f} °C would boil at {self.p_Pa / 1e5:.4g} bar (saturation "
                f"{T_sat - ZERO_CELSIUS_K:.1f} °C); allowed: a higher sink pressure or a smaller "
                f"sink.temperature_rise_K"
            )
        self._set_curve(_isobar_curve("Water", float(self.p_Pa), _grid_down(self.T_in_K - 10.0),
                                      _grid_up(self.T_out_K + 10.0)))


@dataclass(frozen=True)
class AmbientAir(_Sink):
    """Dry ambient air, an ideal-gas mixture of :data:`DRY_AIR_MOLE_FRACTIONS` (N2, O2, Ar, CO2).

    Same species tables as :class:`FlueGas` (CoolProp ideal-gas parts), so an air-like flue gas
    and the ambient air agree; humidity is not modelled.
    """

    T_in_K: float
    rise_K: float
    p_Pa: float
    m_kg_s: float = math.nan
    aux_J_kg: float = 0.0
    fixed_aux_per_W: float = math.nan

    kind: ClassVar[str] = "air"
    label: ClassVar[str] = "ambient air"
    default_pressure_bar: ClassVar[float] = 1.01325
    own_keys: ClassVar[tuple[str, ...]] = ("fan_pressure_drop_Pa",)
    #: air-side pressure drop of an air-cooled condenser's finned bundle and the fan's static
    #: pressure [Pa]: designs run at about 100-200 Pa (from memory; a study setting)
    own_defaults: ClassVar[dict[str, float]] = {"fan_pressure_drop_Pa": 150.0}
    #: air-cooled condenser, on the finned area: DiPippo, *Geothermal Power Plants*, Table 8.1,
    #: water-air 25-50 (35 in every zone: the air side limits)
    u_defaults_W_m2K: ClassVar[dict[str, float]] = dict.fromkeys(("desuperheating", "condensation", "subcooling"), 35.0)
    condenser_cost_kind: ClassVar[str] = "air_cooler"
    area_basis: ClassVar[str] = "finned"
    #: finned / bare-tube area of high-finned air-cooler tubes, about 15-25 (from memory)
    finned_to_bare_area_ratio: ClassVar[float] = 20.0
    #: fan with motor and drive, total-to-static (from memory: axial condenser fans 0.55-0.7)
    default_aux_efficiency: ClassVar[float] = 0.6

    @classmethod
    def aux_work_J_kg(cls, section: Mapping[str, Any], T_in_K: float, p_Pa: float) -> float:
        """Fan work per kg of air [J/kg] = dp / (rho_in eta): the air's volume flow at the inlet
        times the pressure drop over the fan efficiency, with rho_in = p M / (R T) (ideal gas,
        the dry-air composition of :data:`DRY_AIR_MOLE_FRACTIONS`)."""
        dp = _read(section, "fan_pressure_drop_Pa", None, where="sink")
        eta = _read(section, "aux_efficiency", None, positive=True, where="sink")
        if dp < 0.0 or eta > 1.0:
            raise StreamError(f"sink: fan_pressure_drop_Pa = {dp!r}, aux_efficiency = {eta!r}: allowed a pressure "
                              f"drop >= 0 and an efficiency in (0, 1]")
        return dp / (dry_air_density_kg_m3(T_in_K, p_Pa) * eta)

    def __post_init__(self):
        self._check_sink()
        y = _normalised_fractions(DRY_AIR_MOLE_FRACTIONS, "mole")
        self._set_curve(_gas_mixture_curve(tuple(sorted(y.items())), float(self.p_Pa)))


def dry_air_density_kg_m3(T_K: float, p_Pa: float) -> float:
    """Density of dry air [kg/m3] as an ideal gas of :data:`DRY_AIR_MOLE_FRACTIONS`: p M / (R T)."""
    y = _normalised_fractions(DRY_AIR_MOLE_FRACTIONS, "mole")
    M = sum(f * props.molar_mass_kg_mol(GAS_SPECIES[k]) for k, f in y.items())
    return p_Pa * M / (R_UNIVERSAL_J_molK * T_K)


# ---------------------------------------------------------------------------------------------
# Heat and exergy of a source
# ---------------------------------------------------------------------------------------------


def source_exergy_W(source: Stream, T0_K: float) -> float:
    """Flow exergy [W] of the source relative to the dead state at T0_K and the source pressure.

    Ex = m_s [(h_in - h0) - T0 (s_in - s0)], h0 = h(T0), s0 = s(T0) on the source's own isobar
    (DESIGN section 3). Flue gas: dead state of the same composition, no condensation (the
    chemical exergy and the latent heat of the water vapour are not counted).
    """
    h0, s0 = source.h_J_kg(T0_K), source.s_J_kgK(T0_K)
    return source.m_kg_s * ((source.h_in_J_kg - h0) - T0_K * (source.s_in_J_kgK - s0))


def available_heat_W(source: Stream, T0_K: float) -> float:
    """Heat [W] released by cooling the source from its inlet to T0_K: m_s (h_in - h(T0))."""
    return source.m_kg_s * (source.h_in_J_kg - source.h_J_kg(T0_K))


def heat_to_cool_W(source: Stream, T_out_K):
    """Heat [W] released by cooling the source from its inlet to T_out_K [K] (float or array)."""
    return source.m_kg_s * (source.h_in_J_kg - source.h_J_kg(T_out_K))


# ---------------------------------------------------------------------------------------------
# Settings (the edge: °C, bar, kJ/(kg K) in; SI out)
# ---------------------------------------------------------------------------------------------


def _read(section: Mapping[str, Any], key: str, default, *, positive: bool = False, where: str = "source"):
    value = section.get(key)
    if value is None:
        if default is None:
            raise StreamError(f"{where}.{key} is missing")
        return default
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise StreamError(f"{where}.{key} = {value!r}: expected a finite number")
    if positive and value <= 0.0:
        raise StreamError(f"{where}.{key} = {value!r}: must be greater than zero")
    return float(value)


def _read_common(section: Mapping[str, Any], cls) -> tuple[float, float, float | None, float | None]:
    """Inlet temperature [K], mass flow [kg/s], pressure [Pa] (class default) and minimum outlet [K]."""
    T_in = _read(section, "inlet_temperature_C", None) + ZERO_CELSIUS_K
    m = _read(section, "mass_flow_kg_s", None, positive=True)
    default_p = cls.default_pressure_bar
    p_bar = section.get("pressure_bar")
    p = None if p_bar is None and default_p is None else _read(section, "pressure_bar", default_p, positive=True) * 1e5
    T_min = section.get("min_outlet_temperature_C")
    if T_min is not None:
        T_min = _read(section, "min_outlet_temperature_C", None) + ZERO_CELSIUS_K
    return T_in, m, p, T_min


@functools.lru_cache(maxsize=4096)
def _water_saturation_pressure_bar(T_C: float) -> float:
    """Saturation pressure of pure water [bar] (IAPWS-95 through orcscreen.properties)."""
    water = props.get_fluid("Water")
    T_K = T_C + ZERO_CELSIUS_K
    if T_K >= water.T_crit_K:
        return math.inf
    return water.sat_T(T_K).p_Pa / 1e5


def _water_limits() -> tuple[float, float, float]:
    """Triple-point temperature [°C], critical temperature [°C] and critical pressure [bar]
    of water (IAPWS-95 through orcscreen.properties)."""
    water = props.get_fluid("Water")
    return water.T_min_K - ZERO_CELSIUS_K, water.T_crit_K - ZERO_CELSIUS_K, water.p_crit_Pa / 1e5


#: Source models by study-file kind (each class carries its kind, defaults and from_settings).
SOURCE_KINDS: dict[str, type] = {cls.kind: cls for cls in (HotWater, Brine, ThermalOil, FlueGas, FluidSource)}
#: Sink models by study-file kind.
SINK_KINDS: dict[str, type] = {cls.kind: cls for cls in (CoolingWater, AmbientAir)}


def source_from_settings(section: Mapping[str, Any], T_low_K: float | None = None) -> Stream:
    """The source of a case dictionary's ``source`` section (contract units: °C, bar, kg/s, kJ/(kg K)).

    Missing or None keys take the contract defaults (pressure by kind, brine/oil cp); keys that do
    not apply to the kind are ignored. T_low_K [K]: lowest temperature the tables must cover
    (default -20 °C or the minimum outlet temperature); pass the sink inlet if it is colder.
    Raises StreamError with the key, the value and what is allowed.
    """
    kind = section.get("kind")
    cls = SOURCE_KINDS.get(kind) if isinstance(kind, str) else None
    if cls is None:
        raise StreamError(f"source.kind = {kind!r}: unknown source kind; allowed: {', '.join(SOURCE_KINDS)}")
    try:
        return cls.from_settings(section, T_low_K)
    except StreamError as exc:
        raise _in_section(exc, "source", kind) from None


def _in_section(exc: StreamError, where: str, kind: str) -> StreamError:
    """Name the section and kind in a message that does not already start with a key path."""
    msg = str(exc)
    return exc if msg.startswith(f"{where}.") else StreamError(f"{where} (kind {kind!r}): {msg}")


def sink_from_settings(section: Mapping[str, Any]) -> Stream:
    """The sink of a case dictionary's ``sink`` section (kind default "water"; °C, K, bar)."""
    kind = section.get("kind") or "water"
    cls = SINK_KINDS.get(kind) if isinstance(kind, str) else None
    if cls is None:
        raise StreamError(f"sink.kind = {kind!r}: unknown sink kind; allowed: {', '.join(SINK_KINDS)}")
    try:
        return cls.from_settings(section)
    except StreamError as exc:
        raise _in_section(exc, "sink", kind) from None
