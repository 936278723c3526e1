"""Properties of binary zeotropic mixtures at one composition, behind the pure fluid's interface.

A :class:`Mixture` is a :class:`orcscreen.properties.Fluid` for one composition of two
CoolProp fluids (HEOS backend, the mixture model of Kunz and Wagner / Lemmon with CoolProp's
fitted binary interaction parameters). It answers the engine's calls the way a pure fluid does,
with two differences that the engine reads from the data, not from the kind of fluid:

* a saturation point (:class:`orcscreen.states.SatPoint`) has a glide: ``T_K`` is the bubble
  temperature (the liquid end), ``T_dew_K`` the dew temperature (the vapour end) at its pressure;
* a mixture's saturation "temperature" — the argument of :meth:`Mixture.sat_T`, the result of
  :meth:`Mixture.T_sat_K`, hence the evaporation and condensing temperatures the layouts search —
  is the **dew** temperature at that pressure (the hot end of evaporation, where superheat starts;
  the hot end of condensation). Bubble temperatures and glides are reported beside them.

Two-phase states do not follow the lever rule: the phases' compositions change along an isobar,
so neither temperature nor enthalpy is linear in the vapour fraction. They come from a table
built once per composition and process (:class:`SaturationTable`): at pressures spaced evenly in
ln p from the dew pressure at T_LOW_K up to the highest pressure where CoolProp's flash still
converges below the mixture's critical point, CoolProp's (p, Q) flash at vapour mole fractions
0, 0.1, ..., 1 gives T, h, s, ln v and the vapour mass fraction. Between pressures each column is
a cubic spline in ln p; between vapour fractions, along one isobar, the cubic in enthalpy
(or entropy) through the four nearest fractions. A (p, h) mixture flash through CoolProp costs about 300 times a (p, Q) flash
(REFERENCES section 6), so none is made in a case. Single-phase states come from the equation of
state itself with the phase imposed (the pure fluid's Newton iteration on density and
temperature: exact, and a (rho, T) evaluation of the mixture costs about that of a pure fluid),
started from the bubble or dew state of the table.

Accuracy against CoolProp's own flash (tests/test_mixture_properties.py): bubble and dew
temperatures within TABLE_TOLERANCE_K, two-phase enthalpies within TABLE_TOLERANCE_H of the
latent heat. Sources: CoolProp documentation, "Mixtures" (inputs for mixtures: (p, Q), (T, Q),
(T, p)); Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498.
"""

from __future__ import annotations

import math
from collections import OrderedDict

import numpy as np

from . import properties
from .mixtures import mass_fraction, parse_mixture
from .properties import SAT_MEMO_ENTRIES, Fluid
from .states import PropertyError, SatPoint, State

__all__ = ["Mixture", "SaturationTable", "parse_components", "T_LOW_K", "TABLE_TOLERANCE_K", "TABLE_TOLERANCE_H"]

#: Lowest dew temperature of a mixture's table [K] (-43 °C: below any condenser the sinks give;
#: or 2 K above the warmer component's triple point).
T_LOW_K = 230.0
#: Vapour mole fractions of the table on every isobar (closer at the ends, where the glide's
#: temperature bends most).
TABLE_VAPOUR_FRACTIONS = np.array([0.0, 0.02, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.98, 1.0])
#: The table's pressures: LOW_PRESSURES evenly in ln p up to SPLIT_REDUCED_PRESSURE times the
#: critical pressure, then HIGH_PRESSURES evenly in p up to TOP_REDUCED_PRESSURE (the properties
#: change fastest near the critical point); the table stops at the last pressure where every
#: flash converges and the bubble and dew temperatures still rise.
LOW_PRESSURES = 30
HIGH_PRESSURES = 20
SPLIT_REDUCED_PRESSURE = 0.6
TOP_REDUCED_PRESSURE = 0.99


def table_pressures(p_lo_Pa: float, p_crit_Pa: float) -> np.ndarray:
    """The pressures [Pa] of a mixture's table (see LOW_PRESSURES)."""
    p_split = max(SPLIT_REDUCED_PRESSURE * p_crit_Pa, 2.0 * p_lo_Pa)
    low = np.exp(np.linspace(math.log(p_lo_Pa), math.log(p_split), LOW_PRESSURES))
    high = np.linspace(p_split, max(TOP_REDUCED_PRESSURE * p_crit_Pa, 1.01 * p_split), HIGH_PRESSURES + 1)[1:]
    return np.concatenate([low, high])
#: Stated accuracy of the table against CoolProp's direct (p, Q) flash (tested): bubble, dew and
#: two-phase temperatures [K], and enthalpy as a fraction of the latent heat at that pressure.
TABLE_TOLERANCE_K = 0.01
TABLE_TOLERANCE_H = 1e-4

def parse_components(name: str) -> tuple[str, str, float]:
    """(first, second, first's mole fraction) of a mixture name with its composition
    (:func:`orcscreen.mixtures.parse_mixture`; 0 and 1 allowed: a pure component); ValueError
    for any other form."""
    a, b, x = parse_mixture(name, pure_ends=True)
    if x is None:
        raise ValueError(f"{name!r} is not a binary mixture with its composition (expected 'A[x]&B[1-x]')")
    return a, b, x


def _cubic_weights(xs: np.ndarray, x: float) -> tuple[tuple[float, float, float, float], int]:
    """Lagrange weights of the cubic through the four nodes of xs (increasing) around x, and the
    first node's index (the interval's neighbours; the first or last four at the ends)."""
    k = int(np.searchsorted(xs, x)) - 2
    k = min(max(k, 0), len(xs) - 4)
    x0, x1, x2, x3 = (float(v) for v in xs[k:k + 4])
    d0, d1, d2, d3 = x - x0, x - x1, x - x2, x - x3
    return ((d1 * d2 * d3) / ((x0 - x1) * (x0 - x2) * (x0 - x3)),
            (d0 * d2 * d3) / ((x1 - x0) * (x1 - x2) * (x1 - x3)),
            (d0 * d1 * d3) / ((x2 - x0) * (x2 - x1) * (x2 - x3)),
            (d0 * d1 * d2) / ((x3 - x0) * (x3 - x1) * (x3 - x2))), k


class SaturationTable:
    """Bubble-to-dew states of one mixture on a grid of pressures (module docstring).

    columns(p) returns, at pressure p_Pa [Pa], arrays over the vapour mole fractions of the
    table: T [K], h [J/kg], s [J/(kg K)], v [m3/kg], q (vapour mass fraction [-]).
    """

    def __init__(self, AS, cp, M_components: tuple[float, float], p_lo_Pa: float, p_crit_Pa: float):
        from scipy.interpolate import CubicSpline

        rows, lnp = [], []
        M_mix = AS.molar_mass()
        ends: dict[int, object] = {}  # the bubble and dew solutions of the last pressure

        def row_at(p: float) -> list[tuple]:
            row = [self._node(AS, cp, p, float(q), M_mix, M_components, ends, j)
                   for j, q in enumerate(TABLE_VAPOUR_FRACTIONS)]
            if rows and not (row[0][0] > rows[-1][0][0] and row[-1][0] > rows[-1][-1][0]):
                raise ValueError("a flash jumped to another branch near the critical point")
            return row

        for p in table_pressures(p_lo_Pa, p_crit_Pa):
            p = float(p)
            for _ in range(4):  # on a failure, halve the step towards p (at most 3 times)
                try:
                    rows.append(row_at(p))
                    lnp.append(math.log(p))
                    break
                except ValueError:
                    if not rows:
                        break
                    p = 0.5 * (p + math.exp(lnp[-1]))
            else:
                break
            if not lnp or lnp[-1] != math.log(p):
                break  # the flash fails next to the critical point: the table ends below
        if len(rows) < 8:
            raise PropertyError(f"{AS.name()}: the mixture's saturation table has only {len(rows)} pressures")
        data = np.array(rows)  # (pressures, fractions, 5)
        self.lnp = np.array(lnp)
        self.p_min_Pa = float(math.exp(lnp[0]))
        self.p_max_Pa = float(math.exp(lnp[-1]))
        self.nq = nq = len(TABLE_VAPOUR_FRACTIONS)
        # columns: T (nq), h (nq), s (nq), ln v (nq), q_mass (nq)
        self._spline = CubicSpline(self.lnp, data.transpose(0, 2, 1).reshape(len(rows), 5 * nq))
        self._dew_T = CubicSpline(self.lnp, data[:, -1, 0])
        self._dew_dT = self._dew_T.derivative()
        self._nodes_T_dew = data[:, -1, 0]

    @staticmethod
    def _node(AS, cp, p: float, q: float, M_mix: float, M: tuple[float, float], ends: dict, j: int) -> tuple:
        """(T, h, s, -ln rho, vapour mass fraction) at (p, Q = q) by CoolProp's flash; the bubble
        and dew points start from the previous pressure's solution (CoolProp's guesses
        structure, which it takes for Q = 0 and 1 only): it follows the curves closer to the
        critical point than a flash without guesses."""
        g = ends.get(j) if q in (0.0, 1.0) else None
        try:
            if g is None:
                raise ValueError
            AS.update_with_guesses(cp.PQ_INPUTS, p, q, g)
        except ValueError:
            AS.update(cp.PQ_INPUTS, p, q)
        y = list(AS.mole_fractions_vapor())
        if q in (0.0, 1.0):
            g = cp.PyGuessesStructure()
            g.T, g.x, g.y = AS.T(), list(AS.mole_fractions_liquid()), y
            g.rhomolar_liq = AS.saturated_liquid_keyed_output(cp.iDmolar)
            g.rhomolar_vap = AS.saturated_vapor_keyed_output(cp.iDmolar)
            ends[j] = g
        M_v = y[0] * M[0] + y[1] * M[1]
        return AS.T(), AS.hmass(), AS.smass(), -math.log(AS.rhomass()), min(max(q * M_v / M_mix, 0.0), 1.0)

    def columns(self, p_Pa: float) -> tuple[np.ndarray, ...]:
        y = self._spline(math.log(p_Pa))
        n = self.nq
        return y[:n], y[n:2 * n], y[2 * n:3 * n], np.exp(y[3 * n:4 * n]), y[4 * n:]

    def T_dew_K(self, p_Pa: float) -> float:
        return float(self._dew_T(math.log(p_Pa)))

    @property
    def T_dew_min_K(self) -> float:
        return float(self._nodes_T_dew[0])

    @property
    def T_dew_max_K(self) -> float:
        return float(self._nodes_T_dew[-1])

    def p_at_dew_Pa(self, T_K: float) -> float:
        """Pressure [Pa] whose dew temperature on the table's spline is T_K [K] (Newton from the
        nodes' interpolation; the spline is monotonic there), to 1e-12 K."""
        x = float(np.interp(T_K, self._nodes_T_dew, self.lnp))
        for _ in range(30):
            r = float(self._dew_T(x)) - T_K
            if abs(r) < 1e-12 * T_K:
                break
            x -= r / float(self._dew_dT(x))
            x = min(max(x, self.lnp[0]), self.lnp[-1])
        return math.exp(x)


class Mixture(Fluid):
    """A binary mixture at one composition (module docstring). name: CoolProp's syntax with
    both mole fractions, ``"Isobutane[0.400000]&Isopentane[0.600000]"``.

    Constants: T_crit_K, p_crit_Pa (CoolProp's critical point of the mixture), T_min_K (lowest
    dew temperature of the table), T_max_K, p_max_Pa, M_kg_mol; p_table_max_Pa (the table's
    highest pressure: saturation states exist up to it)."""

    def __init__(self, name: str, backend: str = "HEOS"):
        first, second, x = parse_components(name)
        properties._load_coolprop()
        CP = properties.CP
        self.name = name
        self.backend = backend
        self.components = (first, second)
        self.mole_fractions = (x, 1.0 - x)
        try:
            AS = CP.AbstractState(backend, f"{first}&{second}")
            AS.set_mole_fractions([x, 1.0 - x])
        except ValueError as exc:
            raise PropertyError(f"CoolProp cannot build the mixture {name!r}: {exc}") from None
        self._AS = AS
        M = tuple(CP.AbstractState(backend, c).molar_mass() for c in (first, second))
        self.M_kg_mol = AS.molar_mass()
        self.mass_fraction_first = mass_fraction(x, *M)
        self.T_max_K = AS.Tmax()
        self.p_max_Pa = AS.pmax()
        if x in (0.0, 1.0):  # a pure fluid in a mixture's clothes (tests; CoolProp's mixture critical point fails)
            pure = properties.get_fluid(first if x == 1.0 else second, backend)
            self.T_crit_K, self.p_crit_Pa = pure.T_crit_K, pure.p_crit_Pa
        else:
            self.T_crit_K, self.p_crit_Pa = self._critical_point(AS)
        T_low = max(T_LOW_K, max(CP.AbstractState(backend, c).Ttriple() for c in (first, second)) + 2.0)
        try:
            AS.update(CP.QT_INPUTS, 1.0, T_low)
            p_lo = AS.p()
        except ValueError as exc:
            raise PropertyError(f"{name}: no dew point at {T_low - 273.15:.1f} °C: {exc}") from None
        self._table = SaturationTable(AS, CP, M, p_lo, self.p_crit_Pa)
        self.T_min_K = self._table.T_dew_min_K
        self.p_table_max_Pa = self._table.p_max_Pa
        self._sat_cache: OrderedDict[float, SatPoint] = OrderedDict()
        self._nodes: OrderedDict[float, tuple] = OrderedDict()
        self._curves = None

    @staticmethod
    def _critical_point(AS) -> tuple[float, float]:
        try:
            points = [c for c in AS.all_critical_points() if c.stable]
        except ValueError as exc:
            raise PropertyError(f"{AS.name()}: CoolProp finds no critical point of the mixture: {exc}") from None
        if not points:
            raise PropertyError(f"{AS.name()}: CoolProp finds no stable critical point of the mixture")
        best = min(points, key=lambda c: c.T)
        return best.T, best.p

    is_mixture = True

    @property
    def T_sat_max_K(self) -> float:
        """Highest dew temperature of the table [K] (a mixture's dew curve can pass its critical
        temperature: the cricondentherm lies above it)."""
        return self._table.T_dew_max_K

    @property
    def p_sat_max_Pa(self) -> float:
        """Highest pressure of the table [Pa] (below the critical pressure)."""
        return self._table.p_max_Pa

    def __repr__(self) -> str:
        return f"Mixture({self.name!r})"

    def __reduce__(self):
        return (properties.get_fluid, (self.name, self.backend))

    # -- saturation ------------------------------------------------------------------------
    def _columns(self, p_Pa: float) -> tuple[np.ndarray, ...]:
        """The table's columns at p_Pa (memoised like the saturation points)."""
        memo = self._nodes
        got = memo.get(p_Pa)
        if got is not None:
            return got
        if not self._table.p_min_Pa * (1 - 1e-12) <= p_Pa <= self._table.p_max_Pa * (1 + 1e-12):
            raise PropertyError(f"{self.name}: no saturation state at p = {p_Pa / 1e5:.6g} bar (the mixture's table "
                                f"covers {self._table.p_min_Pa / 1e5:.4g}-{self._table.p_max_Pa / 1e5:.4g} bar)")
        got = self._table.columns(p_Pa)
        memo[p_Pa] = got
        if len(memo) > SAT_MEMO_ENTRIES:
            memo.popitem(last=False)
        return got

    def sat_p(self, p_Pa: float) -> SatPoint:
        """Bubble and dew states at pressure p_Pa [Pa]."""
        T, h, s, v, _ = self._columns(p_Pa)
        return SatPoint(float(T[0]), p_Pa, float(h[0]), float(h[-1]), float(s[0]), float(s[-1]), float(v[0]),
                        float(v[-1]), float(T[-1] - T[0]))

    def sat_T(self, T_K: float) -> SatPoint:
        """Saturation at the pressure whose dew temperature is T_K [K] (module docstring)."""
        memo = self._sat_cache
        cached = memo.get(T_K)
        if cached is not None:
            memo.move_to_end(T_K)
            return cached
        sat = self.sat_p(self.p_at_dew_Pa(T_K))
        memo[T_K] = sat
        if len(memo) > SAT_MEMO_ENTRIES:
            memo.popitem(last=False)
        return sat

    def p_at_dew_Pa(self, T_K: float) -> float:
        """Pressure [Pa] whose dew temperature is T_K [K]."""
        tab = self._table
        if not tab.T_dew_min_K - 1e-9 <= T_K <= tab.T_dew_max_K + 1e-9:
            raise PropertyError(f"{self.name}: no saturation state at a dew temperature of {T_K - 273.15:.2f} °C (the "
                                f"mixture's table covers {tab.T_dew_min_K - 273.15:.1f} to {tab.T_dew_max_K - 273.15:.1f} °C)")
        return tab.p_at_dew_Pa(T_K)

    def sat_T_solved(self, T_K: float) -> SatPoint:
        """Bubble and dew states at the dew temperature T_K by CoolProp's flashes (not the table):
        the reference of the tests."""
        AS, CP = self._AS, properties.CP
        try:
            AS.update(CP.QT_INPUTS, 1.0, T_K)
            p, hV, sV, rhoV = AS.p(), AS.hmass(), AS.smass(), AS.rhomass()
            AS.update(CP.PQ_INPUTS, p, 0.0)
            return SatPoint(AS.T(), p, AS.hmass(), hV, AS.smass(), sV, 1.0 / AS.rhomass(), 1.0 / rhoV, T_K - AS.T())
        except ValueError as exc:
            raise PropertyError(f"{self.name}: no saturation state at a dew temperature of {T_K - 273.15:.2f} °C: {exc}") from None

    def T_sat_K(self, p_Pa: float) -> float:
        """Dew temperature [K] at p_Pa [Pa]."""
        self._columns(p_Pa)  # range check
        return self._table.T_dew_K(p_Pa)

    def bubble_temperature_K(self, p_Pa: float) -> float:
        """Bubble temperature [K] at p_Pa [Pa]."""
        return float(self._columns(p_Pa)[0][0])

    def T_sat_floor_K(self, p_Pa: float) -> float:
        if p_Pa <= self._table.p_min_Pa:
            return self.T_min_K
        return self.T_sat_K(min(p_Pa, self._table.p_max_Pa))

    def T_sat_solved_K(self, p_Pa: float) -> float:
        AS, CP = self._AS, properties.CP
        try:
            AS.update(CP.PQ_INPUTS, p_Pa, 1.0)
            return AS.T()
        except ValueError as exc:
            raise PropertyError(f"{self.name}: no dew temperature at p = {p_Pa / 1e5:.5g} bar: {exc}") from None

    # -- two-phase states from the table -----------------------------------------------------
    def two_phase_nodes(self, p_Pa: float) -> tuple[np.ndarray, np.ndarray]:
        """(h [J/kg], T [K]) of the table's vapour fractions along the isobar p_Pa, bubble to dew."""
        T, h, _, _, _ = self._columns(p_Pa)
        return h, T

    def two_phase_state(self, p_Pa: float, y: float, entropy: bool = False) -> State:
        """Two-phase state at p_Pa [Pa] and y = h [J/kg] (or s [J/(kg K)] with entropy), between
        the bubble and dew values: the cubic in y through the four nearest vapour fractions of
        the table."""
        T, h, s, v, q = self._columns(p_Pa)
        ys = s if entropy else h
        if not ys[0] - 1e-9 <= y <= ys[-1] + 1e-9:
            raise PropertyError(f"{self.name}: {'s' if entropy else 'h'} = {y:.6g} is outside the two-phase region at "
                                f"p = {p_Pa / 1e5:.6g} bar")
        w, k = _cubic_weights(ys, y)

        def at(col):
            return float(w[0] * col[k] + w[1] * col[k + 1] + w[2] * col[k + 2] + w[3] * col[k + 3])

        return State(at(T), p_Pa, y if not entropy else at(h), y if entropy else at(s), at(v),
                     min(max(at(q), 0.0), 1.0))

    def two_phase_T_of_h(self, p_Pa: float, h: np.ndarray) -> np.ndarray:
        """Temperatures [K] at enthalpies h [J/kg] inside the glide at p_Pa, all at once: the same
        cubic as :meth:`two_phase_state`, vectorised."""
        T, hs, _, _, _ = self._columns(p_Pa)
        k = np.clip(np.searchsorted(hs, h) - 2, 0, len(hs) - 4)
        x = [hs[k + i] for i in range(4)]
        d = [h - xi for xi in x]
        out = np.zeros(len(h))
        for i in range(4):
            w = np.ones(len(h))
            for j in range(4):
                if j != i:
                    w *= d[j] / (x[i] - x[j])
            out += w * T[k + i]
        return out

    def two_phase_h_of_T(self, p_Pa: float, T_K: float) -> float:
        """Enthalpy [J/kg] at temperature T_K [K] inside the glide at p_Pa: the cubic in T
        through the four nearest vapour fractions of the table (T rises with h along the glide)."""
        T, h, _, _, _ = self._columns(p_Pa)
        w, k = _cubic_weights(T, T_K)
        return float(w[0] * h[k] + w[1] * h[k + 1] + w[2] * h[k + 2] + w[3] * h[k + 3])

    # -- general flashes -------------------------------------------------------------------------
    def _flash_py(self, p_Pa: float, y: float, entropy: bool) -> State:
        """State at p_Pa and y = s or h: the table inside the two-phase region, else the
        phase-imposed Newton iteration from the bubble or dew state (CoolProp's general flash
        only above the table's pressures)."""
        tab = self._table
        if tab.p_min_Pa <= p_Pa <= tab.p_max_Pa:
            T, h, s, v, _ = self._columns(p_Pa)
            ys = s if entropy else h
            if ys[0] <= y <= ys[-1]:
                return self.two_phase_state(p_Pa, y, entropy)
            liquid = y < ys[0]
            k = 0 if liquid else -1
            st = self._newton_T(p_Pa, y, entropy, float(T[k]), "liquid" if liquid else "gas", float(v[k]))
            if st is not None:
                return st
            st = self._bracketed_py(p_Pa, y, entropy, "liquid" if liquid else "gas", float(T[k]))
            if st is not None:
                return st
        CP = properties.CP
        pair, a, b = (CP.PSmass_INPUTS, p_Pa, y) if entropy else (CP.HmassP_INPUTS, y, p_Pa)
        return self._state(pair, a, b, f"p = {p_Pa / 1e5:.6g} bar, {'s' if entropy else 'h'} = {y:.6g}")

    def _phase_at(self, p_Pa: float, T_K: float) -> str | None:
        tab = self._table
        if not tab.p_min_Pa <= p_Pa <= tab.p_max_Pa:
            return None
        T = self._columns(p_Pa)[0]
        if T_K < T[0]:
            return "liquid"
        if T_K > T[-1]:
            return "gas"
        raise PropertyError(f"{self.name}: {T_K - 273.15:.4g} °C at {p_Pa / 1e5:.6g} bar is inside the glide "
                            f"({T[0] - 273.15:.4g} to {T[-1] - 273.15:.4g} °C): two-phase, not a (p, T) state")

    def state_Tq(self, T_K: float, q: float) -> State:
        """Two-phase state of vapour mass fraction q [-] at the pressure whose dew temperature is T_K [K]."""
        if not 0.0 <= q <= 1.0:
            raise PropertyError(f"{self.name}: quality {q:.4g} outside 0-1")
        p = self.p_at_dew_Pa(T_K)
        _, h, _, _, qm = self._columns(p)
        return self.two_phase_state(p, float(np.interp(q, qm, h)))
