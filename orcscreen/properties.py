"""Thermodynamic properties of working fluids and streams: the only module that imports CoolProp.

One low-level ``AbstractState`` is cached per (fluid, backend) and process and updated in
place; every flash returns a small frozen dataclass in SI units (K, Pa, J/kg, J/(kg K), m3/kg).
CoolProp errors are turned into :class:`PropertyError`, which names the fluid and the inputs.

Sources: Bell, Wronski, Quoilin, Lemort, "Pure and pseudo-pure fluid thermophysical property
evaluation and the open-source thermophysical property library CoolProp", Ind. Eng. Chem.
Res. 53 (2014) 2498-2508, doi:10.1021/ie4033999. Saturation of pure fluids uses CoolProp's
superancillary equations where available (Bell and Deiters, AIChE J. 67 (2021) e17289).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import CoolProp
from CoolProp import CoolProp as CP

__all__ = [
    "PropertyError",
    "SatPoint",
    "State",
    "Fluid",
    "get_fluid",
    "coolprop_version",
    "coolprop_fluid_names",
    "ideal_gas_enthalpy_J_kg",
    "ideal_gas_entropy_J_kgK",
    "molar_mass_kg_mol",
]


class PropertyError(ValueError):
    """A property evaluation failed; the message names the fluid and the inputs."""


@dataclass(frozen=True, slots=True)
class SatPoint:
    """Both ends of the two-phase region at one saturation temperature.

    Units: T_K [K], p_Pa [Pa], h [J/kg], s [J/(kg K)], v [m3/kg]; suffix L = saturated liquid,
    V = saturated vapour.
    """

    T_K: float
    p_Pa: float
    hL: float
    hV: float
    sL: float
    sV: float
    vL: float
    vV: float


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


def _quality(AS) -> float:
    q = AS.Q()
    return q if 0.0 <= q <= 1.0 else math.nan


_PHASES = {"liquid": CP.iphase_liquid, "gas": CP.iphase_gas}
_iP, _iT, _iD, _iH, _iS = CP.iP, CP.iT, CP.iDmass, CP.iHmass, CP.iSmass


class Fluid:
    """A pure working fluid on one CoolProp backend, with a cached low-level state.

    Constants (read once from the equation of state): T_crit_K, p_crit_Pa, T_min_K (triple
    point or lowest temperature of the equation), T_max_K, p_max_Pa, M_kg_mol.
    """

    def __init__(self, name: str, backend: str = "HEOS"):
        self.name = name
        self.backend = backend
        try:
            self._AS = CP.AbstractState(backend, name)
        except ValueError as exc:
            raise PropertyError(f"CoolProp backend {backend} does not know the fluid {name!r}: {exc}") from None
        AS = self._AS
        self.T_crit_K = AS.T_critical()
        self.p_crit_Pa = AS.p_critical()
        self.M_kg_mol = AS.molar_mass()
        self.T_max_K = AS.Tmax()
        self.p_max_Pa = AS.pmax()
        self.T_min_K = max(AS.Ttriple(), AS.Tmin())
        self._sat_cache: dict[float, SatPoint] = {}

    def __repr__(self) -> str:
        return f"Fluid({self.name!r}, {self.backend!r})"

    def __reduce__(self):
        return (get_fluid, (self.name, self.backend))

    # -- saturation -------------------------------------------------------------------
    def sat_T(self, T_K: float) -> SatPoint:
        """Saturation at temperature T_K [K] (T_min_K <= T_K < T_crit_K)."""
        cached = self._sat_cache.get(T_K)
        if cached is not None:
            return cached
        AS = self._AS
        try:
            AS.update(CP.QT_INPUTS, 0.0, T_K)
            p, hL, sL, rhoL = AS.p(), AS.hmass(), AS.smass(), AS.rhomass()
            AS.update(CP.QT_INPUTS, 1.0, T_K)
            sat = SatPoint(T_K, p, hL, AS.hmass(), sL, AS.smass(), 1.0 / rhoL, 1.0 / AS.rhomass())
        except ValueError as exc:
            raise PropertyError(
                f"{self.name}: no saturation state at T = {T_K - 273.15:.2f} °C "
                f"(critical temperature {self.T_crit_K - 273.15:.2f} °C): {exc}"
            ) from None
        if len(self._sat_cache) > 20000:
            self._sat_cache.clear()
        self._sat_cache[T_K] = sat
        return sat

    def sat_p(self, p_Pa: float) -> SatPoint:
        """Saturation at pressure p_Pa [Pa] (below the critical pressure)."""
        try:
            self._AS.update(CP.PQ_INPUTS, p_Pa, 0.0)
            T = self._AS.T()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: no saturation state at p = {p_Pa / 1e5:.5g} bar: {exc}") from None
        return self.sat_T(T)

    def T_sat_K(self, p_Pa: float) -> float:
        """Saturation temperature [K] at pressure p_Pa [Pa]."""
        try:
            self._AS.update(CP.PQ_INPUTS, p_Pa, 0.0)
            return self._AS.T()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: no saturation temperature at p = {p_Pa / 1e5:.5g} bar: {exc}") from None

    # -- single-phase and general flashes ------------------------------------------
    def _state(self, pair: int, a: float, b: float, what: str) -> State:
        AS = self._AS
        try:
            AS.update(pair, a, b)
            q = _quality(AS)
            cp = AS.cpmass() if math.isnan(q) else math.nan
            return State(AS.T(), AS.p(), AS.hmass(), AS.smass(), 1.0 / AS.rhomass(), q, cp)
        except ValueError as exc:
            raise PropertyError(f"{self.name}: property evaluation failed at {what}: {exc}") from None

    def _newton_T(self, p_Pa: float, target: float, entropy: bool, T_K: float, phase: str, v_guess: float | None = None) -> State | None:
        """Single-phase flash at fixed p by Newton's method on (density, temperature).

        Solves p(rho, T) = p_Pa and h(rho, T) = target (or s(rho, T) = target) with the
        Helmholtz equation of state evaluated directly at (rho, T) with the phase imposed, which
        skips the phase search of the general flash (a (rho, T) update costs a fraction of a
        (p, T) update). The Jacobian is taken at the start and refreshed every third step
        (chord-Newton); the iteration stops on the residuals: |p - p_Pa| <= 1e-10 p_Pa and
        |h - target| <= 1e-5 J/kg (|s - target| <= 1e-8 J/(kg K)), i.e. about 1e-8 K.
        The first density comes from v_guess or from one (p, T) update. Returns None when it
        does not converge, so the caller can fall back to CoolProp's general flash.
        """
        AS = self._AS
        d = AS.first_partial_deriv
        y = AS.smass if entropy else AS.hmass
        iY = _iS if entropy else _iH
        tol_y = 1e-8 if entropy else 1e-5
        tol_p = 1e-10 * p_Pa
        AS.specify_phase(_PHASES[phase])
        try:
            if v_guess is None or not v_guess > 0.0:
                AS.update(CP.PT_INPUTS, p_Pa, T_K)
                rho = AS.rhomass()
            else:
                rho = 1.0 / v_guess
            AS.update(CP.DmassT_INPUTS, rho, T_K)
            for it in range(40):
                r1 = AS.p() - p_Pa
                r2 = y() - target
                if abs(r1) <= tol_p and abs(r2) <= tol_y:
                    return State(T_K, p_Pa + r1, AS.hmass(), AS.smass(), 1.0 / rho, math.nan, AS.cpmass())
                if it % 3 == 0:
                    a, b = d(_iP, _iD, _iT), d(_iP, _iT, _iD)
                    c, e = d(iY, _iD, _iT), d(iY, _iT, _iD)
                    det = a * e - b * c
                d_rho = -(e * r1 - b * r2) / det
                d_T = -(a * r2 - c * r1) / det
                rho += max(min(d_rho, 0.5 * rho), -0.5 * rho)
                T_K += max(min(d_T, 0.2 * T_K), -0.2 * T_K)
                AS.update(CP.DmassT_INPUTS, rho, T_K)
        except (ValueError, ZeroDivisionError):
            return None
        finally:
            AS.unspecify_phase()
        return None

    def state_ps(self, p_Pa: float, s: float, phase: str | None = None, T_guess_K: float | None = None, v_guess: float | None = None) -> State:
        """State at pressure p_Pa [Pa] and specific entropy s [J/(kg K)].

        With phase ("liquid" or "gas", known to the caller) and a temperature guess, a Newton
        iteration with the phase imposed replaces CoolProp's general flash (several times faster).
        """
        if phase is not None and T_guess_K is not None:
            st = self._newton_T(p_Pa, s, True, T_guess_K, phase, v_guess)
            if st is not None:
                return st
        return self._state(CP.PSmass_INPUTS, p_Pa, s, f"p = {p_Pa / 1e5:.6g} bar, s = {s:.6g} J/(kg K)")

    def state_ph(self, p_Pa: float, h: float, phase: str | None = None, T_guess_K: float | None = None, v_guess: float | None = None) -> State:
        """State at pressure p_Pa [Pa] and specific enthalpy h [J/kg] (phase and guess: see state_ps)."""
        if phase is not None and T_guess_K is not None:
            st = self._newton_T(p_Pa, h, False, T_guess_K, phase, v_guess)
            if st is not None:
                return st
        return self._state(CP.HmassP_INPUTS, h, p_Pa, f"p = {p_Pa / 1e5:.6g} bar, h = {h:.6g} J/kg")

    def state_pT(self, p_Pa: float, T_K: float, phase: str | None = None) -> State:
        """Single-phase state at pressure p_Pa [Pa] and temperature T_K [K].

        phase ("liquid" or "gas"), when the caller knows it, is imposed: this skips the phase
        search and stays reliable right next to the saturation curve.
        """
        what = f"p = {p_Pa / 1e5:.6g} bar, T = {T_K - 273.15:.6g} °C"
        if phase is None:
            return self._state(CP.PT_INPUTS, p_Pa, T_K, what)
        self._AS.specify_phase(_PHASES[phase])
        try:
            return self._state(CP.PT_INPUTS, p_Pa, T_K, what)
        finally:
            self._AS.unspecify_phase()

    def h_pT_array(self, p_Pa: float, T_K, phase: str):
        """Specific enthalpies [J/kg] at pressure p_Pa [Pa] and each temperature of T_K [K].

        The phase ("liquid" or "gas"), known to the caller, is imposed: one (p, T) update per
        point, no phase search. Used to discretise single-phase zones of exchanger profiles.
        """
        import numpy as np

        AS = self._AS
        out = np.empty(len(T_K))
        AS.specify_phase(_PHASES[phase])
        try:
            for i, T in enumerate(T_K):
                AS.update(CP.PT_INPUTS, p_Pa, float(T))
                out[i] = AS.hmass()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: {phase} enthalpy failed at p = {p_Pa / 1e5:.6g} bar: {exc}") from None
        finally:
            AS.unspecify_phase()
        return out

    def state_Tq(self, T_K: float, q: float) -> State:
        """Two-phase state at temperature T_K [K] and quality q [-]."""
        return self._state(CP.QT_INPUTS, q, T_K, f"T = {T_K - 273.15:.6g} °C, quality {q:.4g}")

    def cp_pT(self, p_Pa: float, T_K: float) -> float:
        """Isobaric specific heat [J/(kg K)] of a single-phase state."""
        try:
            self._AS.update(CP.PT_INPUTS, p_Pa, T_K)
            return self._AS.cpmass()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: cp failed at p = {p_Pa / 1e5:.6g} bar, T = {T_K - 273.15:.6g} °C: {exc}") from None

    def saturated_vapour_dTds(self, T_K: float, dT_K: float = 0.05) -> float:
        """Slope dT/ds [K^2 kg/J] of the saturated-vapour curve at T_K, by central difference."""
        sa = self.sat_T(T_K - dT_K)
        sb = self.sat_T(T_K + dT_K)
        return (2.0 * dT_K) / (sb.sV - sa.sV)


@functools.lru_cache(maxsize=None)
def get_fluid(name: str, backend: str = "HEOS") -> Fluid:
    """The process-wide cached :class:`Fluid` for a CoolProp fluid name and backend."""
    return Fluid(name, backend)


def coolprop_version() -> str:
    """Version string of the CoolProp library in use."""
    return CoolProp.__version__


@functools.lru_cache(maxsize=1)
def coolprop_fluid_names() -> tuple[str, ...]:
    """Names of all pure fluids known to CoolProp's HEOS backend."""
    return tuple(sorted(CP.get_global_param_string("FluidsList").split(",")))


def molar_mass_kg_mol(name: str) -> float:
    """Molar mass [kg/mol] of a CoolProp fluid."""
    return get_fluid(name).M_kg_mol


def _ideal_gas_state(name: str, T_K: float):
    AS = get_fluid(name)._AS
    # Very low density: the real-gas state tends to the ideal gas; the *_idealgas outputs are
    # the ideal-gas part of the Helmholtz energy at this (T, rho).
    AS.update(CP.DmolarT_INPUTS, 1e-6, T_K)
    return AS


def ideal_gas_enthalpy_J_kg(name: str, T_K: float) -> float:
    """Ideal-gas specific enthalpy [J/kg] of a pure fluid at T_K, on CoolProp's reference state."""
    try:
        return _ideal_gas_state(name, T_K).hmass_idealgas()
    except ValueError as exc:
        raise PropertyError(f"{name}: ideal-gas enthalpy failed at T = {T_K - 273.15:.6g} °C: {exc}") from None


def ideal_gas_entropy_J_kgK(name: str, T_K: float, p_Pa: float) -> float:
    """Ideal-gas specific entropy [J/(kg K)] of a pure fluid at T_K [K] and partial pressure p_Pa [Pa]."""
    try:
        AS = get_fluid(name)._AS
        R = 8.31446261815324 / AS.molar_mass()
        rho = p_Pa / (R * T_K)
        AS.update(CP.DmassT_INPUTS, rho, T_K)
        return AS.smass_idealgas()
    except ValueError as exc:
        raise PropertyError(f"{name}: ideal-gas entropy failed at T = {T_K - 273.15:.6g} °C: {exc}") from None
