"""Thermodynamic properties of working fluids and streams: the only module that imports CoolProp.

One low-level ``AbstractState`` is cached per (fluid, backend) and process and updated in
place; every flash returns a small frozen dataclass in SI units (K, Pa, J/kg, J/(kg K), m3/kg).
CoolProp errors are turned into :class:`PropertyError`, which names the fluid and the inputs.

Sources: Bell, Wronski, Quoilin, Lemort, "Pure and pseudo-pure fluid thermophysical property
evaluation and the open-source thermophysical property library CoolProp", Ind. Eng. Chem.
Res. 53 (2014) 2498-2508, doi:10.1021/ie4033999.

Saturation of pure fluids comes from the superancillary equations that CoolProp ships with
each fluid (Bell and Deiters, AIChE J. 67 (2021) e17289, "Efficient and precise representation
of pure fluid phase equilibria with Chebyshev expansions"; CoolProp's coefficients; CoolProp
documentation page "Superancillaries"): piecewise Chebyshev expansions in temperature of the
saturation pressure and of both saturated densities, which reproduce the equation of state's
own phase equilibrium to about 1e-12. CoolProp 8 builds them for all of its ~120 fluids when it
is imported (about 2 s of every process start). orcscreen imports it with that build switched
off (the environment variable ``COOLPROP_DISABLE_SUPERANCILLARIES_ENTIRELY``, which CoolProp 8
reads when it loads and names in its notice; set only for the import and removed again) and
builds CoolProp's own ``SuperAncillary`` object from the coefficients in the fluid's file, per
fluid on first use (about 20 ms each). A saturated state is the equation of state evaluated at
(T, rho') and (T, rho''), as in CoolProp's own superancillary path. Fluids without expansions,
and temperatures outside them, use CoolProp's iterative phase-equilibrium solver; so do
CoolProp's general flashes, which orcscreen uses only as a fall-back. If the host program imported CoolProp first, it stays
as it was loaded.
"""

from __future__ import annotations

import contextlib
import functools
import json
import math
import os
import sys
from collections import OrderedDict

_NO_EAGER_SUPERANC_ENV = "COOLPROP_DISABLE_SUPERANCILLARIES_ENTIRELY"


@contextlib.contextmanager
def _quiet_stdout():
    """File descriptor 1 to /dev/null inside the block (CoolProp prints a notice there when the
    variable above is set); C stdio buffers are flushed before it is restored."""
    try:
        sys.stdout.flush()
        saved = os.dup(1)
    except (OSError, ValueError, AttributeError):
        yield
        return
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        yield
    finally:
        try:
            import ctypes

            ctypes.CDLL(None).fflush(None)
        except (OSError, AttributeError):
            pass
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


def _import_coolprop():
    """CoolProp's package and core module, imported without the eager superancillary build
    unless CoolProp is already loaded or the variable is already set (module docstring)."""
    if "CoolProp.CoolProp" in sys.modules or _NO_EAGER_SUPERANC_ENV in os.environ:
        import CoolProp
        from CoolProp import CoolProp as core

        return CoolProp, core
    os.environ[_NO_EAGER_SUPERANC_ENV] = "1"
    try:
        with _quiet_stdout():
            import CoolProp
            from CoolProp import CoolProp as core
    finally:
        os.environ.pop(_NO_EAGER_SUPERANC_ENV, None)
    return CoolProp, core


class _OnFirstUse:
    """Stands for CoolProp (the package, or its core module) until an attribute is first read:
    then CoolProp is imported (:func:`_import_coolprop`) and the module's globals point at the
    real modules, so that ``import orcscreen.properties`` (and every module that reads the
    engine's registries) does not load CoolProp; the first fluid does."""

    def __init__(self, which: str):
        self._which = which

    def __getattr__(self, name: str):
        _load_coolprop()
        return getattr(globals()[self._which], name)


def _load_coolprop() -> None:
    global CoolProp, CP, _iP, _iT, _iD, _iH, _iS
    if not isinstance(CP, _OnFirstUse):
        return
    CoolProp, CP = _import_coolprop()
    _PHASES.update(liquid=CP.iphase_liquid, gas=CP.iphase_gas)
    _iP, _iT, _iD, _iH, _iS = CP.iP, CP.iT, CP.iDmass, CP.iHmass, CP.iSmass


CoolProp, CP = _OnFirstUse("CoolProp"), _OnFirstUse("CP")

__all__ = [
    "PropertyError",
    "SatPoint",
    "State",
    "Fluid",
    "get_fluid",
    "coolprop_version",
    "coolprop_build",
    "coolprop_fluid_names",
    "ideal_gas_enthalpy_J_kg",
    "ideal_gas_entropy_J_kgK",
    "molar_mass_kg_mol",
]


from .states import PropertyError, SatPoint, State  # noqa: E402  (re-exported)


def _quality(AS) -> float:
    q = AS.Q()
    return q if 0.0 <= q <= 1.0 else math.nan


#: CoolProp's phase constants by name, filled when CoolProp is loaded; "liquid" and "gas" also
#: serve above the critical pressure (below and above the critical temperature), where CoolProp
#: treats an imposed liquid or gas phase as its supercritical liquid or supercritical phase.
_PHASES: dict[str, int] = {}
_iP = _iT = _iD = _iH = _iS = -1  # CoolProp's parameter indices, set when it is loaded


class _SaturationCurves:
    """Saturation pressure p(T) [Pa] and saturated molar densities rho'(T), rho''(T) [mol/m3] of
    one fluid: CoolProp's ``SuperAncillary`` built from the coefficients in the fluid's file
    (module docstring), valid for T_min_K <= T <= T_max_K (triple point to the numerical
    critical point of the expansions)."""

    __slots__ = ("eval_sat", "T_min_K", "T_max_K", "p_min_Pa", "p_max_Pa", "T_crit_K", "p_crit_Pa")

    def __init__(self, text: str, data: dict):
        #: eval_sat(T [K], "P" or "D", 0 liquid / 1 vapour): p [Pa] or molar density [mol/m3]
        self.eval_sat = CP.SuperAncillary(text).eval_sat
        self.T_min_K = max(min(e["xmin"] for e in data[k]) for k in _CURVE_KEYS)
        self.T_max_K = min(max(e["xmax"] for e in data[k]) for k in _CURVE_KEYS)
        self.p_min_Pa = self.p(self.T_min_K)
        self.p_max_Pa = self.p(self.T_max_K)
        # the critical point as CoolProp 8 reports it with its own superancillaries (checked
        # equal for all its fluids): the equation of state's numerical critical temperature
        # and the pressure where the curves end (chlorine's end 1e-4 K below that temperature)
        self.T_crit_K = float(data.get("meta", {}).get("Tcrittrue / K", self.T_max_K))
        self.p_crit_Pa = self.p_max_Pa

    @classmethod
    def of(cls, name: str) -> _SaturationCurves | None:
        """The curves of CoolProp fluid ``name``, or None where its file has none."""
        try:
            text = CP.get_fluid_param_string(name, "JSON")
            start = text.index("{", text.index('"SUPERANCILLARY"'))
            data, end = json.JSONDecoder().raw_decode(text, start)
            return cls(text[start:end], data)
        except (ValueError, KeyError, TypeError):
            return None

    def p(self, T_K: float) -> float:
        return self.eval_sat(T_K, "P", 0)

    def T_K(self, p_Pa: float) -> float:
        """Saturation temperature [K] at p_Pa [Pa] (p_min_Pa <= p_Pa <= p_max_Pa): the root of
        ln p(T) = ln p_Pa in x = 1/T, where it is nearly a straight line (Clausius-Clapeyron), by
        Brent's method (orcscreen.brent: SciPy's brentq arithmetic), to a relative 1e-15 in T."""
        from .brent import brentq

        if p_Pa <= self.p_min_Pa:
            return self.T_min_K
        if p_Pa >= self.p_max_Pa:
            return self.T_max_K
        ev, log, ln_p = self.eval_sat, math.log, math.log(p_Pa)
        x = brentq(lambda x: log(ev(1.0 / x, "P", 0)) - ln_p, 1.0 / self.T_max_K, 1.0 / self.T_min_K,
                   xtol=1e-300, rtol=8.9e-16, maxiter=200)
        return 1.0 / x


_CURVE_KEYS = ("jexpansions_p", "jexpansions_rhoL", "jexpansions_rhoV")


_NOT_BUILT = object()

#: Entries kept in one fluid's saturation memo (:meth:`Fluid.sat_T`); the least recently used
#: goes first. The bound is 1 MiB per fluid. An entry holds its key (a float, 24 B), a SatPoint
#: (8 slots, 96 B with its GC header), the SatPoint's 7 other floats (168 B) and the OrderedDict's
#: slot and link node; tracemalloc, after 20,000 distinct temperatures through one memo (R245fa,
#: CPython 3.11): 1,536 entries hold 0.67 MiB (459 B per entry, the table's free slots included)
#: and at most 0.81 MiB while the table is rebuilt; 2,048 entries would reach 0.97 MiB then.
#: Least recently used rather than clearing when full: the cases of a fluid share a few
#: temperatures (T_min_K, the top of the evaporation range, condensing temperatures that
#: recur with the sink), and those stay. On the sat_T calls of the overnight-sweep study (5,200
#: cases, 41 fluids, one process) the hit rate is 0.814 with this bound, 0.817 unbounded (then
#: up to 13,042 entries, 4.6 MiB, for n-decane) and 0.79 clearing at 2,048 entries.
SAT_MEMO_ENTRIES = 1536


class Fluid:
    """A pure working fluid on one CoolProp backend, with a cached low-level state.

    Constants (read once from the equation of state): T_crit_K, p_crit_Pa (on first use, from
    the saturation curves), T_min_K (triple point or lowest temperature of the equation),
    T_max_K, p_max_Pa, M_kg_mol.
    """

    def __init__(self, name: str, backend: str = "HEOS"):
        self.name = name
        self.backend = backend
        try:
            self._AS = CP.AbstractState(backend, name)
        except ValueError as exc:
            raise PropertyError(f"CoolProp backend {backend} does not know the fluid {name!r}: {exc}") from None
        AS = self._AS
        self._critical_in_file = (AS.T_critical(), AS.p_critical())
        self.M_kg_mol = AS.molar_mass()
        self.T_max_K = AS.Tmax()
        self.p_max_Pa = AS.pmax()
        self.T_min_K = max(AS.Ttriple(), AS.Tmin())
        self._sat_cache: OrderedDict[float, SatPoint] = OrderedDict()  # see SAT_MEMO_ENTRIES
        self._curves = _NOT_BUILT if backend == "HEOS" else None

    def _saturation_curves(self) -> _SaturationCurves | None:
        if self._curves is _NOT_BUILT:
            self._curves = _SaturationCurves.of(self.name)
        return self._curves

    @functools.cached_property
    def T_crit_K(self) -> float:
        """Critical temperature [K]: where the saturation curves end (the equation of state's
        numerical critical point, as CoolProp 8 reports it with its superancillaries), else the
        value in the fluid's file."""
        curves = self._saturation_curves()
        return curves.T_crit_K if curves is not None else self._critical_in_file[0]

    @functools.cached_property
    def p_crit_Pa(self) -> float:
        """Critical pressure [Pa], at T_crit_K (see there)."""
        curves = self._saturation_curves()
        return curves.p_crit_Pa if curves is not None else self._critical_in_file[1]

    #: A pure fluid has no glide (a :class:`orcscreen.mixture_properties.Mixture` has).
    is_mixture = False

    @property
    def T_sat_max_K(self) -> float:
        """Highest saturation temperature [K] (of :meth:`sat_T`): the critical temperature."""
        return self.T_crit_K

    @property
    def p_sat_max_Pa(self) -> float:
        """Highest saturation pressure [Pa] (of :meth:`sat_p`): the critical pressure."""
        return self.p_crit_Pa

    def __repr__(self) -> str:
        return f"Fluid({self.name!r}, {self.backend!r})"

    def __reduce__(self):
        return (get_fluid, (self.name, self.backend))

    # -- saturation -------------------------------------------------------------------
    def sat_T(self, T_K: float) -> SatPoint:
        """Saturation at temperature T_K [K] (T_min_K <= T_K < T_crit_K): superancillary curves
        where the fluid has them (module docstring), else CoolProp's phase-equilibrium solver.
        Memoised per fluid, at most SAT_MEMO_ENTRIES temperatures (least recently used evicted);
        a result does not depend on the memo."""
        memo = self._sat_cache
        cached = memo.get(T_K)
        if cached is not None:
            memo.move_to_end(T_K)
            return cached
        curves = self._saturation_curves()
        if curves is not None and curves.T_min_K <= T_K <= curves.T_max_K:
            sat = self._sat_from_curves(curves, T_K)
        else:
            sat = self.sat_T_solved(T_K)
        memo[T_K] = sat
        if len(memo) > SAT_MEMO_ENTRIES:
            memo.popitem(last=False)
        return sat

    def _sat_from_curves(self, curves: _SaturationCurves, T_K: float) -> SatPoint:
        AS = self._AS
        try:
            ev = curves.eval_sat
            AS.specify_phase(CP.iphase_liquid)
            AS.update(CP.DmolarT_INPUTS, ev(T_K, "D", 0), T_K)
            hL, sL, rhoL = AS.hmass(), AS.smass(), AS.rhomass()
            AS.specify_phase(CP.iphase_gas)
            AS.update(CP.DmolarT_INPUTS, ev(T_K, "D", 1), T_K)
            return SatPoint(T_K, ev(T_K, "P", 0), hL, AS.hmass(), sL, AS.smass(), 1.0 / rhoL, 1.0 / AS.rhomass())
        except ValueError as exc:
            raise PropertyError(f"{self.name}: no saturation state at T = {T_K - 273.15:.2f} °C: {exc}") from None
        finally:
            AS.unspecify_phase()

    def sat_T_solved(self, T_K: float) -> SatPoint:
        """Saturation at T_K by CoolProp's iterative phase-equilibrium solver (not cached): the
        fall-back of :meth:`sat_T` outside the curves, and an independent reference for tests."""
        AS = self._AS
        try:
            AS.update(CP.QT_INPUTS, 0.0, T_K)
            p, hL, sL, rhoL = AS.p(), AS.hmass(), AS.smass(), AS.rhomass()
            AS.update(CP.QT_INPUTS, 1.0, T_K)
            return SatPoint(T_K, p, hL, AS.hmass(), sL, AS.smass(), 1.0 / rhoL, 1.0 / AS.rhomass())
        except ValueError as exc:
            raise PropertyError(
                f"{self.name}: no saturation state at T = {T_K - 273.15:.2f} °C "
                f"(critical temperature {self.T_crit_K - 273.15:.2f} °C): {exc}"
            ) from None

    def sat_p(self, p_Pa: float) -> SatPoint:
        """Saturation at pressure p_Pa [Pa] (below the critical pressure)."""
        return self.sat_T(self.T_sat_K(p_Pa))

    def T_sat_K(self, p_Pa: float) -> float:
        """Saturation temperature [K] at pressure p_Pa [Pa] (curves where available, as sat_T)."""
        curves = self._saturation_curves()
        if curves is not None and curves.p_min_Pa <= p_Pa <= curves.p_max_Pa:
            return curves.T_K(p_Pa)
        return self.T_sat_solved_K(p_Pa)

    def T_sat_floor_K(self, p_Pa: float) -> float:
        """Saturation temperature [K] at p_Pa [Pa] as a lower bound: T_min_K where p_Pa lies
        below the saturation pressure at T_min_K (below the triple-point pressure there is no
        liquid, so such a pressure floor never binds inside the equation's range)."""
        try:
            if p_Pa <= self.sat_T(self.T_min_K).p_Pa:
                return self.T_min_K
        except PropertyError:
            pass
        return self.T_sat_K(p_Pa)

    def T_sat_solved_K(self, p_Pa: float) -> float:
        """Saturation temperature [K] at p_Pa by CoolProp's iterative solver: the fall-back of
        :meth:`T_sat_K` outside the curves, and an independent reference for tests."""
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
                    if not self._on_its_side(phase, AS.rhomolar(), T_K):
                        return None  # a spurious root of the equation of state (see below)
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

    def _on_its_side(self, phase: str, rho_mol_m3: float, T_K: float) -> bool:
        """False if a converged state is denser than the saturated vapour yet imposed "gas", or
        lighter than the saturated liquid yet imposed "liquid", at its temperature (1e-7 relative
        slack): inside the two-phase region a multiparameter equation of state has further
        roots with dp/drho > 0 (seen: R134a, 30 bar, "liquid" at 334 K and 718 kg/m3, where the
        liquid has 1066 kg/m3), which a phase-imposed iteration can land on from a far guess."""
        curves = self._curves
        if curves is None or curves is _NOT_BUILT or not curves.T_min_K <= T_K <= curves.T_max_K:
            return True
        if phase == "liquid":
            return rho_mol_m3 >= curves.eval_sat(T_K, "D", 0) * (1.0 - 1e-7)
        return rho_mol_m3 <= curves.eval_sat(T_K, "D", 1) * (1.0 + 1e-7)

    def state_ps(self, p_Pa: float, s: float, phase: str | None = None, T_guess_K: float | None = None, v_guess: float | None = None) -> State:
        """State at pressure p_Pa [Pa] and specific entropy s [J/(kg K)].

        With phase ("liquid" or "gas", known to the caller) and a temperature guess, a Newton
        iteration with the phase imposed replaces CoolProp's general flash (several times faster).
        Without them, the phase comes from the saturated states at p (see :meth:`_flash_py`).
        """
        if phase is not None and T_guess_K is not None:
            st = self._newton_T(p_Pa, s, True, T_guess_K, phase, v_guess)
            if st is not None:
                return st
        return self._flash_py(p_Pa, s, True)

    def state_ph(self, p_Pa: float, h: float, phase: str | None = None, T_guess_K: float | None = None, v_guess: float | None = None) -> State:
        """State at pressure p_Pa [Pa] and specific enthalpy h [J/kg] (phase and guess: see state_ps)."""
        if phase is not None and T_guess_K is not None:
            st = self._newton_T(p_Pa, h, False, T_guess_K, phase, v_guess)
            if st is not None:
                return st
        return self._flash_py(p_Pa, h, False)

    def _flash_py(self, p_Pa: float, y: float, entropy: bool) -> State:
        """State at p_Pa and y = s (entropy) or h, any phase. Below the critical pressure of a
        fluid with saturation curves: saturated states at p, then the lever rule inside the
        two-phase region or a phase-imposed Newton iteration outside it (started from the
        saturated state of that phase), else a bracketed solve (:meth:`_bracketed_py`).
        Otherwise, or if both fail, CoolProp's general flash (which, with CoolProp's
        superancillaries off, brackets the saturation temperature by its ancillary equations and
        can miss states right at the phase boundary)."""
        if entropy:
            pair, a, b, what = CP.PSmass_INPUTS, p_Pa, y, f"p = {p_Pa / 1e5:.6g} bar, s = {y:.6g} J/(kg K)"
        else:
            pair, a, b, what = CP.HmassP_INPUTS, y, p_Pa, f"p = {p_Pa / 1e5:.6g} bar, h = {y:.6g} J/kg"
        curves = self._saturation_curves()
        if curves is not None and curves.p_min_Pa <= p_Pa < curves.p_max_Pa:
            sat = self.sat_T(curves.T_K(p_Pa))
            yL, yV = (sat.sL, sat.sV) if entropy else (sat.hL, sat.hV)
            if yL <= y <= yV:
                q = (y - yL) / (yV - yL)
                h = y if not entropy else sat.hL + q * (sat.hV - sat.hL)
                s = y if entropy else sat.sL + q * (sat.sV - sat.sL)
                return State(sat.T_K, sat.p_Pa, h, s, sat.vL + q * (sat.vV - sat.vL), q)
            liquid = y < yL
            phase = "liquid" if liquid else "gas"
            st = self._newton_T(p_Pa, y, entropy, sat.T_K, phase, sat.vL if liquid else sat.vV)
            if st is not None:
                return st
            st = self._bracketed_py(p_Pa, y, entropy, phase, sat.T_K)
            if st is not None:
                return st
        return self._state(pair, a, b, what)

    def _bracketed_py(self, p_Pa: float, y: float, entropy: bool, phase: str, T_sat_K: float) -> State | None:
        """Single-phase state at p_Pa and y = s or h by Brent's method (orcscreen.brent) on T along the
        isobar with the phase imposed, between T_min_K and T_sat_K (liquid) or T_sat_K and
        T_max_K (gas): h and s rise with T along an isobar, so the root is unique. None if y is
        outside that range."""
        from .brent import brentq

        lo, hi = (self.T_min_K, T_sat_K) if phase == "liquid" else (T_sat_K, self.T_max_K)
        get = (lambda st: st.s) if entropy else (lambda st: st.h)
        try:
            f_lo = get(self.state_pT(p_Pa, lo, phase)) - y
            f_hi = get(self.state_pT(p_Pa, hi, phase)) - y
            if f_lo * f_hi > 0.0:
                return None
            T = brentq(lambda T: get(self.state_pT(p_Pa, T, phase)) - y, lo, hi, xtol=1e-10, rtol=8.9e-16)
            return self.state_pT(p_Pa, T, phase)
        except (PropertyError, ValueError):
            return None

    def _phase_at(self, p_Pa: float, T_K: float) -> str | None:
        """"liquid" or "gas" from the saturation temperature at p_Pa (curves only), None above
        the critical pressure or without curves."""
        curves = self._saturation_curves()
        if curves is None or not curves.p_min_Pa <= p_Pa < curves.p_max_Pa:
            return None
        return "liquid" if T_K < curves.T_K(p_Pa) else "gas"

    def state_pT(self, p_Pa: float, T_K: float, phase: str | None = None) -> State:
        """Single-phase state at pressure p_Pa [Pa] and temperature T_K [K].

        phase ("liquid" or "gas"), when the caller knows it, is imposed: this skips the phase
        search and stays reliable right next to the saturation curve. Without it, the phase
        comes from the saturation temperature at p where the fluid has curves.
        """
        what = f"p = {p_Pa / 1e5:.6g} bar, T = {T_K - 273.15:.6g} °C"
        if phase is None:
            phase = self._phase_at(p_Pa, T_K)
        if phase is None:
            return self._state(CP.PT_INPUTS, p_Pa, T_K, what)
        self._AS.specify_phase(_PHASES[phase])
        try:
            return self._state(CP.PT_INPUTS, p_Pa, T_K, what)
        finally:
            self._AS.unspecify_phase()

    def h_pT(self, p_Pa: float, T_K: float, phase: str | None) -> float:
        """Specific enthalpy [J/kg] at p_Pa [Pa] and T_K [K], phase ("liquid" or "gas") imposed:
        the one-point case of :meth:`h_pT_array` without the array (same CoolProp calls). With
        phase None, CoolProp finds the phase (above the critical pressure it knows the fluid is
        supercritical and this costs no more than an imposed phase)."""
        AS = self._AS
        if phase is not None:
            AS.specify_phase(_PHASES[phase])
        try:
            AS.update(CP.PT_INPUTS, p_Pa, T_K)
            return AS.hmass()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: {phase or 'single-phase'} enthalpy failed at p = {p_Pa / 1e5:.6g} bar, "
                                f"T = {T_K - 273.15:.6g} °C: {exc}") from None
        finally:
            if phase is not None:
                AS.unspecify_phase()

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
        """Two-phase state at temperature T_K [K] and quality q [-] (0 <= q <= 1), by the lever
        rule between the saturated states of :meth:`sat_T`."""
        if not 0.0 <= q <= 1.0:
            raise PropertyError(f"{self.name}: quality {q:.4g} outside 0-1 at T = {T_K - 273.15:.6g} °C")
        sat = self.sat_T(T_K)
        return State(T_K, sat.p_Pa, sat.hL + q * (sat.hV - sat.hL), sat.sL + q * (sat.sV - sat.sL),
                     sat.vL + q * (sat.vV - sat.vL), q)

    def cp_pT(self, p_Pa: float, T_K: float) -> float:
        """Isobaric specific heat [J/(kg K)] of a single-phase state (phase as in state_pT)."""
        st = self.state_pT(p_Pa, T_K)
        if math.isnan(st.cp):
            raise PropertyError(f"{self.name}: no single-phase cp at p = {p_Pa / 1e5:.6g} bar, T = {T_K - 273.15:.6g} °C")
        return st.cp

    def saturated_vapour_dTds(self, T_K: float, dT_K: float = 0.05) -> float:
        """Slope dT/ds [K^2 kg/J] of the saturated-vapour curve at T_K, by central difference."""
        sa = self.sat_T(T_K - dT_K)
        sb = self.sat_T(T_K + dT_K)
        return (2.0 * dT_K) / (sb.sV - sa.sV)


def get_fluid(name: str, backend: str = "HEOS") -> Fluid:
    """The process-wide cached :class:`Fluid` for a CoolProp fluid name and backend; a binary
    mixture in CoolProp's syntax with its composition ("A[x]&B[1-x]") gives a
    :class:`orcscreen.mixture_properties.Mixture` (the last MIXTURES_KEPT of them are kept:
    each holds its own saturation table, and a composition search builds many)."""
    if "&" in name:
        return _get_mixture(name, backend)
    return _get_pure(name, backend)


#: Mixtures (compositions) kept per process by :func:`get_fluid`.
MIXTURES_KEPT = 64


@functools.lru_cache(maxsize=None)
def _get_pure(name: str, backend: str) -> Fluid:
    return Fluid(name, backend)


@functools.lru_cache(maxsize=MIXTURES_KEPT)
def _get_mixture(name: str, backend: str) -> Fluid:
    from .mixture_properties import Mixture

    return Mixture(name, backend)


def coolprop_version() -> str:
    """Version string of the CoolProp library in use."""
    return CoolProp.__version__


def coolprop_build() -> str:
    """Version and source revision of the CoolProp library in use (keys caches)."""
    return f"{CoolProp.__version__}-{getattr(CoolProp, '__gitrevision__', '')}"


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
    # the ideal-gas part of the Helmholtz energy at this (T, rho). The gas phase is imposed: no
    # phase search (which needs a saturation state, absent below the triple point).
    AS.specify_phase(CP.iphase_gas)
    AS.update(CP.DmolarT_INPUTS, 1e-6, T_K)
    return AS


def ideal_gas_enthalpy_J_kg(name: str, T_K: float) -> float:
    """Ideal-gas specific enthalpy [J/kg] of a pure fluid at T_K, on CoolProp's reference state."""
    try:
        return _ideal_gas_state(name, T_K).hmass_idealgas()
    except ValueError as exc:
        raise PropertyError(f"{name}: ideal-gas enthalpy failed at T = {T_K - 273.15:.6g} °C: {exc}") from None
    finally:
        get_fluid(name)._AS.unspecify_phase()


def ideal_gas_entropy_J_kgK(name: str, T_K: float, p_Pa: float) -> float:
    """Ideal-gas specific entropy [J/(kg K)] of a pure fluid at T_K [K] and partial pressure p_Pa [Pa]."""
    try:
        AS = get_fluid(name)._AS
        R = 8.31446261815324 / AS.molar_mass()
        rho = p_Pa / (R * T_K)
        AS.specify_phase(CP.iphase_gas)  # as in _ideal_gas_state
        AS.update(CP.DmassT_INPUTS, rho, T_K)
        return AS.smass_idealgas()
    except ValueError as exc:
        raise PropertyError(f"{name}: ideal-gas entropy failed at T = {T_K - 273.15:.6g} °C: {exc}") from None
    finally:
        get_fluid(name)._AS.unspecify_phase()
