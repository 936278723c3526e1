"""Tests of orcscreen.streams against published tables and independent property libraries.

References (each check names its own beside it):
- JANAF: Chase, NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. Ref. Data Monograph 9
  (1998); H - H(298.15 K) in kJ/mol, values from memory (they agree with CoolProp's ideal-gas
  parts to 0.008 kJ/mol, which is how a slip of memory would show up).
- TRC ideal-gas heat capacities as shipped by the `chemicals` package (Kabo and Roganov 1994
  fit, TRCCp_integral), an independent second library.
- `iapws` package: IAPWS-IF97 and an independent implementation of IAPWS-95.
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
from scipy.integrate import quad

from orcscreen import streams as S

C = S.ZERO_CELSIUS_K
R = S.R_UNIVERSAL_J_molK

# --- flue gas ------------------------------------------------------------------------------------

# NIST-JANAF (Chase 1998), H - H(298.15 K) [kJ/mol], from memory. Ar: 5/2 R (T - 298.15), which
# JANAF tabulates as cp = 20.786 J/(mol K) at every temperature.
JANAF_DH_kJ_mol = {
    "N2": {300: 0.054, 400: 2.971, 500: 5.911, 600: 8.894, 700: 11.937, 800: 15.046, 1000: 21.463},
    "O2": {300: 0.054, 400: 3.025, 500: 6.084, 600: 9.244, 700: 12.499, 800: 15.835, 1000: 22.703},
    "CO2": {300: 0.067, 400: 4.003, 500: 8.305, 600: 12.906, 700: 17.754, 800: 22.806, 1000: 33.397},
    "H2O": {300: 0.062, 400: 3.452, 500: 6.925, 600: 10.501, 700: 14.192, 800: 18.002, 1000: 26.000},
    "Ar": {T: 2.5 * R * (T - 298.15) / 1e3 for T in (300, 400, 500, 600, 700, 800, 1000)},
}

AIR_LIKE = {"N2": 0.7808, "O2": 0.2095, "Ar": 0.0093, "CO2": 0.0004}
GAS_ENGINE_EXHAUST = {"CO2": 0.10, "H2O": 0.18, "O2": 0.02, "N2": 0.69, "Ar": 0.01}


@pytest.mark.parametrize("composition", [AIR_LIKE, GAS_ENGINE_EXHAUST], ids=["air-like", "exhaust-10CO2-18H2O"])
@pytest.mark.parametrize("T1, T2", [(300, 600), (300, 800), (400, 1000)])
def test_flue_gas_enthalpy_rise_against_janaf(composition, T1, T2):
    """Molar enthalpy rise of the mixture = sum y_i [H_i(T2) - H_i(T1)] from JANAF (Chase 1998).

    Tolerance 0.1 % (JANAF prints 0.001 kJ/mol; CoolProp's CO2 ideal-gas part sits up to
    0.008 kJ/mol above JANAF at 1000 K).
    """
    gas = S.FlueGas(1100.0, 1.0, 101325.0, composition)
    total = sum(composition.values())
    expected = sum(y / total * (JANAF_DH_kJ_mol[k][T2] - JANAF_DH_kJ_mol[k][T1]) for k, y in composition.items())
    got = (gas.h_J_kg(float(T2)) - gas.h_J_kg(float(T1))) * gas.molar_mass_kg_mol / 1e3
    assert got == pytest.approx(expected, rel=1e-3)


def test_flue_gas_enthalpy_is_zero_at_25C_like_janaf():
    """Reference state: h = 0 at 298.15 K, so h(T) M is JANAF's H - H(298.15) (Chase 1998, from memory)."""
    gas = S.FlueGas(900.0, 1.0, 101325.0, GAS_ENGINE_EXHAUST)
    assert gas.h_J_kg(298.15) == pytest.approx(0.0, abs=1e-6)
    expected = sum(y * JANAF_DH_kJ_mol[k][800] for k, y in GAS_ENGINE_EXHAUST.items())
    assert gas.h_J_kg(800.0) * gas.molar_mass_kg_mol / 1e3 == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize("basis", ["mole", "mass"])
def test_flue_gas_against_trc_ideal_gas_heat_capacities(basis):
    """Enthalpy and entropy change 320 -> 750 K against the TRC ideal-gas cp of `chemicals`.

    TRC fits (chemicals.heat_capacity.TRC_gas_data, TRCCp_integral[_over_T]); argon is
    monatomic, cp = 5/2 R. Tolerance 0.1 %. The mass basis is the same gas given in mass
    fractions, which checks the conversion as well.
    """
    from chemicals.heat_capacity import TRC_gas_data, TRCCp_integral, TRCCp_integral_over_T

    cas = {"N2": "7727-37-9", "O2": "7782-44-7", "CO2": "124-38-9", "H2O": "7732-18-5"}
    molar_mass = {"N2": 0.0280134, "O2": 0.0319988, "CO2": 0.0440095, "H2O": 0.01801528, "Ar": 0.039948}
    y = GAS_ENGINE_EXHAUST
    T1, T2 = 320.0, 750.0
    dH = dS = 0.0
    for k, yk in y.items():
        if k == "Ar":
            dH += yk * 2.5 * R * (T2 - T1)
            dS += yk * 2.5 * R * math.log(T2 / T1)
            continue
        row = TRC_gas_data.loc[cas[k]]
        a = [row[c] for c in ("a0", "a1", "a2", "a3", "a4", "a5", "a6", "a7")]
        dH += yk * (TRCCp_integral(T2, *a) - TRCCp_integral(T1, *a))
        dS += yk * (TRCCp_integral_over_T(T2, *a) - TRCCp_integral_over_T(T1, *a))
    if basis == "mass":
        M = sum(y[k] * molar_mass[k] for k in y)
        composition = {k: y[k] * molar_mass[k] / M for k in y}
    else:
        composition = y
    gas = S.FlueGas(900.0, 1.0, 101325.0, composition, basis)
    assert gas.mole_fractions["CO2"] == pytest.approx(0.10, rel=1e-4)
    M_mix = gas.molar_mass_kg_mol
    assert (gas.h_J_kg(T2) - gas.h_J_kg(T1)) * M_mix == pytest.approx(dH, rel=1e-3)
    assert (gas.s_J_kgK(T2) - gas.s_J_kgK(T1)) * M_mix == pytest.approx(dS, rel=1e-3)


def test_flue_gas_entropy_mixing_term_and_pressure():
    """Ideal mixture: s = sum w_i [s_i(T, p_ref) - R_i ln(y_i p/p_ref)] (any thermodynamics text).

    At fixed T, doubling the pressure lowers s by (R/M_mix) ln 2; the mixing entropy of the
    exhaust versus its pure species at p is -R/M sum y ln y.
    """
    a = S.FlueGas(700.0, 1.0, 1.0e5, GAS_ENGINE_EXHAUST)
    b = S.FlueGas(700.0, 1.0, 2.0e5, GAS_ENGINE_EXHAUST)
    R_mix = R / a.molar_mass_kg_mol
    assert a.s_J_kgK(500.0) - b.s_J_kgK(500.0) == pytest.approx(R_mix * math.log(2.0), rel=1e-6)
    pure_sum = sum(
        a.mass_fractions[k] * S.FlueGas(700.0, 1.0, 1.0e5, {k: 1.0}).s_J_kgK(500.0) for k in GAS_ENGINE_EXHAUST
    )
    mixing = -R_mix * sum(y * math.log(y) for y in GAS_ENGINE_EXHAUST.values())
    assert a.s_J_kgK(500.0) - pure_sum == pytest.approx(mixing, rel=1e-6)


def test_default_flue_gas_is_methane_with_15_percent_excess_air():
    """Combustion balance CH4 + 2 O2 -> CO2 + 2 H2O (any combustion text, e.g. Turns).

    Stoichiometric methane in the textbook air O2 + 3.76 N2 gives 1 : 2 : 7.52 mol of CO2, H2O,
    N2 (9.51 %, 19.01 %, 71.48 %). At 15 % excess air, 0.3 mol O2 per mol CH4 is left over.
    """
    y = S.methane_flue_gas_mole_fractions(1.0, {"O2": 1.0, "N2": 3.76})
    assert y["CO2"] == pytest.approx(1 / 10.52, rel=1e-12)
    assert y["H2O"] == pytest.approx(2 / 10.52, rel=1e-12)
    assert y["N2"] == pytest.approx(7.52 / 10.52, rel=1e-12)
    assert "O2" not in y
    gas = S.FlueGas(673.15, 10.0, 101325.0)
    yd = gas.mole_fractions
    assert yd["O2"] / (yd["H2O"] / 2.0) == pytest.approx(2.0 * (S.DEFAULT_EXCESS_AIR_RATIO - 1.0), rel=1e-9)
    assert sum(yd.values()) == pytest.approx(1.0, abs=1e-12)


def test_flue_gas_water_dew_point_against_iapws():
    """Dew point = T_sat of water at the partial pressure y_H2O p (IAPWS-IF97 saturation line, iapws)."""
    from iapws import IAPWS97

    gas = S.FlueGas(600.0, 1.0, 101325.0, GAS_ENGINE_EXHAUST)
    expected = IAPWS97(P=0.18 * 101325.0 / 1e6, x=0).T
    assert gas.water_dew_point_K() == pytest.approx(expected, abs=0.01)
    assert math.isnan(S.FlueGas(600.0, 1.0, 101325.0, AIR_LIKE).water_dew_point_K())


def test_ambient_air_cp_against_ideal_gas_air_table():
    """Dry air cp0 of 1.005, 1.029, 1.142 kJ/(kg K) at 300, 500, 1000 K (ideal-gas air table in
    Cengel and Boles, Thermodynamics, Table A-2b; from memory, 4 digits). Tolerance 0.2 %."""
    air = S.AmbientAir(293.15, 10.0, 101325.0)
    for T, cp in ((300.0, 1005.0), (500.0, 1029.0), (1000.0, 1142.0)):
        assert air.cp_J_kgK(T) == pytest.approx(cp, rel=2e-3)
    assert air.mass_flow_kg_s(1.0e6) == pytest.approx(1.0e6 / (air.h_J_kg(303.15) - air.h_J_kg(293.15)))


# --- hot water and cooling water ---------------------------------------------------------------


@pytest.mark.parametrize("p_bar, T_in_C", [(10.0, 170.0), (2.0, 110.0), (50.0, 250.0)])
def test_hot_water_against_iapws(p_bar, T_in_C):
    """Enthalpy and entropy along the isobar against the `iapws` package.

    IAPWS-95 (iapws.IAPWS95, the formulation of CoolProp "Water" in an independent code): 1 J/kg,
    1e-3 J/(kg K). IAPWS-IF97 (iapws.IAPWS97): enthalpy differences within 0.2 kJ/kg, the
    consistency IF97 keeps with IAPWS-95 in region 1 (IF97 release, from memory).
    """
    from iapws import IAPWS95, IAPWS97

    hw = S.HotWater(T_in_C + C, 5.0, p_bar * 1e5)
    T_ref = 280.0
    ref95 = IAPWS95(P=p_bar / 10.0, T=T_ref)
    for T in (300.0, 0.5 * (T_ref + T_in_C + C), T_in_C + C):
        r = IAPWS95(P=p_bar / 10.0, T=T)
        assert hw.h_J_kg(T) - hw.h_J_kg(T_ref) == pytest.approx((r.h - ref95.h) * 1e3, abs=1.0)
        assert hw.s_J_kgK(T) - hw.s_J_kgK(T_ref) == pytest.approx((r.s - ref95.s) * 1e3, abs=1e-3)
    ref97 = IAPWS97(P=p_bar / 10.0, T=T_ref)
    for T in np.linspace(285.0, T_in_C + C, 6):
        r = IAPWS97(P=p_bar / 10.0, T=float(T))
        assert hw.h_J_kg(float(T)) - hw.h_J_kg(T_ref) == pytest.approx((r.h - ref97.h) * 1e3, abs=200.0)


def test_hot_water_inverse_round_trip_scalar_and_array():
    """T_K(h_J_kg(T)) == T to 1e-6 K (contract), scalars and arrays of any shape, plus T from iapws h."""
    from iapws import IAPWS95

    hw = S.HotWater(160.0 + C, 5.0, 8.0e5)
    rng = np.random.default_rng(7)
    T = rng.uniform(hw.T_min_valid_K, hw.T_in_K, size=(4, 25))
    h = hw.h_J_kg(T)
    assert h.shape == T.shape
    assert np.max(np.abs(hw.T_K(h) - T)) < 1e-6
    for t in T.ravel()[:10]:
        assert isinstance(hw.h_J_kg(float(t)), float)
        assert abs(hw.T_K(hw.h_J_kg(float(t))) - t) < 1e-6
    # The inverse of an independent IAPWS-95 enthalpy recovers the temperature: dT = dh/cp < 1e-3 K.
    r = IAPWS95(P=0.8, T=400.0)
    assert hw.T_K(r.h * 1e3 - (IAPWS95(P=0.8, T=300.0).h * 1e3 - hw.h_J_kg(300.0))) == pytest.approx(400.0, abs=1e-3)


def test_short_arrays_take_the_scalar_path_with_the_same_numbers():
    """Arrays of at most S.SMALL_ARRAY points are evaluated point by point in Python floats; the
    values equal those of the vectorised path (the same points inside a longer array) to 1e-12
    (same arithmetic; the Newton steps may stop one step apart), inside and outside the table."""
    hw = S.HotWater(150.0 + C, 5.0, 6.0e5)
    rng = np.random.default_rng(11)
    T_long = rng.uniform(hw.T_min_valid_K - 10.0, hw.T_max_valid_K + 10.0, size=40)
    h_long = hw.h_J_kg(T_long)
    for n in range(1, S.SMALL_ARRAY + 1):
        T_short, h_short = T_long[:n].copy(), h_long[:n].copy()
        assert np.array_equal(hw.h_J_kg(T_short), h_long[:n])
        assert np.max(np.abs(hw.T_K(h_short) - hw.T_K(h_long)[:n])) < 1e-9
        assert np.max(np.abs(hw.T_K(h_short) - T_short)) < 1e-6


def test_extrapolation_outside_the_table_is_monotone_and_invertible():
    """Outside the table the curve continues with constant cp (module convention): monotone, exact inverse."""
    hw = S.HotWater(90.0 + C, 5.0, 3.0e5)
    T = np.array([250.0, hw.T_min_valid_K, hw.T_max_valid_K, hw.T_max_valid_K + 40.0])
    h = hw.h_J_kg(T)
    assert np.all(np.diff(h) > 0)
    assert np.max(np.abs(hw.T_K(h) - T)) < 1e-9
    assert hw.cp_J_kgK(250.0) == pytest.approx(hw.cp_J_kgK(hw.T_min_valid_K))


def test_cooling_water_mass_flow_against_iapws():
    """Sink flow = Q / (h(T_out) - h(T_in)), IAPWS-95 enthalpies from iapws."""
    from iapws import IAPWS95

    sink = S.CoolingWater(18.0 + C, 8.0, 2.0e5)
    dh = (IAPWS95(P=0.2, T=26.0 + C).h - IAPWS95(P=0.2, T=18.0 + C).h) * 1e3
    assert sink.T_out_K == pytest.approx(26.0 + C)
    assert sink.mass_flow_kg_s(2.0e6) == pytest.approx(2.0e6 / dh, rel=1e-6)
    assert math.isnan(sink.m_kg_s)


# --- linear-cp liquids -----------------------------------------------------------------------------


@pytest.mark.parametrize("cls", [S.Brine, S.ThermalOil])
def test_linear_cp_liquid_against_quadrature(cls):
    """h = int cp dT and s = int cp/T dT from 0 °C (scipy quad of cp = cp0 + slope T_C), and the inverse."""
    cp0, slope = 1800.0, 3.5
    liquid = cls(300.0 + C, 4.0, 5.0e5, cp0, slope)

    def cp(T):
        return cp0 + slope * (T - C)

    for T in (250.0, 350.0, 573.15):
        assert liquid.h_J_kg(T) == pytest.approx(quad(cp, C, T)[0], rel=1e-12)
        assert liquid.s_J_kgK(T) == pytest.approx(quad(lambda t: cp(t) / t, C, T)[0], rel=1e-10)
        assert liquid.cp_J_kgK(T) == pytest.approx(cp(T))
    T = np.linspace(260.0, 580.0, 50)
    assert np.max(np.abs(liquid.T_K(liquid.h_J_kg(T)) - T)) < 1e-9
    flat = cls(300.0 + C, 4.0, 5.0e5, 3800.0, 0.0)
    assert flat.T_K(3800.0 * 50.0) == pytest.approx(50.0 + C, abs=1e-9)


def test_thermal_oil_fitted_to_a_datasheet_reproduces_its_enthalpy():
    """A commercial hydrogenated-terphenyl oil (Therminol 66 technical bulletin, from memory):
    cp = 1.496005 + 3.313e-3 T + 8.970785e-7 T^2 kJ/(kg K), T in °C.

    A linear cp through the datasheet values at 100 and 300 °C gives those values back and the
    enthalpy rise 100 -> 300 °C of the datasheet correlation within 0.5 % (the trapezoid error
    of the small curvature is 0.27 %).
    """

    def cp_sheet(T_C):
        return 1.496005 + 3.313e-3 * T_C + 8.970785e-7 * T_C**2

    slope = (cp_sheet(300.0) - cp_sheet(100.0)) / 200.0
    cp0 = cp_sheet(100.0) - 100.0 * slope
    oil = S.ThermalOil(320.0 + C, 10.0, 5.0e5, cp0 * 1e3, slope * 1e3)
    assert oil.cp_J_kgK(100.0 + C) == pytest.approx(cp_sheet(100.0) * 1e3, rel=1e-12)
    assert oil.cp_J_kgK(300.0 + C) == pytest.approx(cp_sheet(300.0) * 1e3, rel=1e-12)
    dh_sheet = quad(cp_sheet, 100.0, 300.0)[0] * 1e3
    assert oil.h_J_kg(300.0 + C) - oil.h_J_kg(100.0 + C) == pytest.approx(dh_sheet, rel=5e-3)


# --- exergy -----------------------------------------------------------------------------------


def _some_sources():
    return [
        S.HotWater(150.0 + C, 20.0, 10.0e5),
        S.Brine(140.0 + C, 30.0, 10.0e5, 3800.0, 1.0),
        S.ThermalOil(300.0 + C, 8.0, 5.0e5, 1500.0, 3.5),
        S.FlueGas(450.0 + C, 12.0, 101325.0),
        S.FluidSource("Water", 120.0 + C, 2.0, None, 1.0),
    ]


@pytest.mark.parametrize("source", _some_sources(), ids=lambda s: s.kind)
def test_exergy_between_zero_and_the_carnot_bound(source):
    """0 < Ex < Q (1 - T0/T_in): every element of heat is released at or below T_in (second law)."""
    T0 = 293.15
    Q = S.available_heat_W(source, T0)
    Ex = S.source_exergy_W(source, T0)
    assert 0.0 < Ex < Q * (1.0 - T0 / source.T_in_K)
    assert Ex < Q


def test_exergy_of_constant_cp_liquid_is_the_log_mean_formula():
    """Ex = m cp [(T - T0) - T0 ln(T/T0)] for a constant-cp liquid (e.g. Kotas, The Exergy Method
    of Thermal Plant Analysis, the physical exergy of an incompressible stream)."""
    cp, m, T, T0 = 3800.0, 30.0, 413.15, 288.15
    brine = S.Brine(T, m, 10.0e5, cp)
    assert S.source_exergy_W(brine, T0) == pytest.approx(m * cp * ((T - T0) - T0 * math.log(T / T0)), rel=1e-12)
    assert S.available_heat_W(brine, T0) == pytest.approx(m * cp * (T - T0), rel=1e-12)


def test_hot_water_exergy_against_hand_integral_with_iapws():
    """Ex = m int_{T0}^{T_in} (1 - T0/T) dh along the isobar, trapezoids on IAPWS-IF97 enthalpies
    (iapws), and Ex = m[(h - h0) - T0 (s - s0)] from IAPWS-95 values; both within 0.1 %."""
    from iapws import IAPWS95, IAPWS97

    T_in, T0, p_MPa, m = 150.0 + C, 20.0 + C, 1.0, 20.0
    hw = S.HotWater(T_in, m, p_MPa * 1e6)
    Ts = np.linspace(T0, T_in, 201)
    h = np.array([IAPWS97(P=p_MPa, T=float(t)).h for t in Ts]) * 1e3
    Tm = 0.5 * (Ts[1:] + Ts[:-1])
    hand = m * np.sum((1.0 - T0 / Tm) * np.diff(h))
    a, b = IAPWS95(P=p_MPa, T=T_in), IAPWS95(P=p_MPa, T=T0)
    direct = m * ((a.h - b.h) - T0 * (a.s - b.s)) * 1e3
    Ex = S.source_exergy_W(hw, T0)
    assert Ex == pytest.approx(hand, rel=1e-3)
    assert Ex == pytest.approx(direct, rel=1e-6)
    assert S.heat_to_cool_W(hw, T0) == pytest.approx(S.available_heat_W(hw, T0))


@pytest.mark.parametrize("source_factory", [
    lambda T: S.HotWater(T, 1.0, 5.0e5),
    lambda T: S.FlueGas(T, 1.0, 101325.0),
    lambda T: S.Brine(T, 1.0, 5.0e5, 3800.0, 2.0),
], ids=["water", "flue-gas", "brine"])
def test_exergy_vanishes_quadratically_as_inlet_approaches_dead_state(source_factory):
    """For T_in = T0 + dT, Ex -> m cp dT^2 / (2 T0) (second-order expansion of (h-h0) - T0 (s-s0))."""
    T0 = 300.0
    for dT in (2.0, 0.5):
        src = source_factory(T0 + dT)
        expected = src.cp_J_kgK(T0) * dT**2 / (2.0 * T0)
        assert S.source_exergy_W(src, T0) == pytest.approx(expected, rel=0.01)
    assert S.source_exergy_W(source_factory(T0 + 1e-3), T0) < 1e-4


def test_flue_gas_exergy_does_not_depend_on_the_mixing_term():
    """Dead state of the same composition and pressure: the mixing and pressure terms cancel."""
    a = S.FlueGas(500.0 + C, 10.0, 1.0e5)
    b = S.FlueGas(500.0 + C, 10.0, 1.3e5)
    assert S.source_exergy_W(a, 298.15) == pytest.approx(S.source_exergy_W(b, 298.15), rel=1e-9)


# --- condensing steam and other pure-fluid sources -------------------------------------------------


def test_condensing_steam_latent_plateau():
    """Saturated steam at 1 atm condensing: T stays at 99.97 °C over the latent heat 2256.5 kJ/kg
    (IAPWS-IF97 saturation from iapws; steam tables give h_fg = 2256.4 kJ/kg at 100 °C)."""
    from iapws import IAPWS97

    liq, vap = IAPWS97(P=0.101325, x=0), IAPWS97(P=0.101325, x=1)
    steam = S.FluidSource("Water", liq.T, 3.0, 101325.0, inlet_quality=1.0)
    T_sat = steam.T_sat_K
    assert T_sat == pytest.approx(liq.T, abs=0.01)
    assert steam.T_in_K == T_sat  # a saturated inlet sits exactly on the plateau
    h_fg = steam.h_in_J_kg - steam.h_J_kg(T_sat)  # h(T_sat) is the saturated liquid (conservative)
    assert h_fg == pytest.approx((vap.h - liq.h) * 1e3, rel=5e-4)
    plateau = np.linspace(steam.h_J_kg(T_sat), steam.h_in_J_kg, 11)
    assert np.all(steam.T_K(plateau) == T_sat)
    assert steam.T_K(steam.h_in_J_kg) == T_sat
    assert steam.h_J_kg(T_sat + 0.1) >= steam.h_in_J_kg
    below = steam.h_J_kg(T_sat - 1.0)
    assert steam.h_J_kg(T_sat) - below == pytest.approx(liq.cp * 1e3, rel=0.01)
    Q = S.heat_to_cool_W(steam, T_sat - 10.0)
    assert Q == pytest.approx(3.0 * (h_fg + steam.h_J_kg(T_sat) - steam.h_J_kg(T_sat - 10.0)))


def test_wet_steam_inlet_and_superheated_inlet():
    """Quality 0.4 sits on the plateau at 40 % of the latent heat; a superheated inlet cools
    through the plateau: h(T) jumps by h_fg at T_sat and T(h) inverts on both sides."""
    wet = S.FluidSource("Water", 130.0 + C, 1.0, None, 0.4)
    T_sat = wet.T_sat_K
    hL = wet.h_J_kg(T_sat)
    hV = wet.h_J_kg(T_sat + 1e-9)
    assert wet.h_in_J_kg == pytest.approx(hL + 0.4 * (hV - hL), rel=1e-9)
    assert wet.T_K(wet.h_in_J_kg) == T_sat

    hot = S.FluidSource("Water", 200.0 + C, 1.0, 3.0e5)
    T = np.concatenate([np.linspace(300.0, hot.T_sat_K - 0.1, 20), np.linspace(hot.T_sat_K + 0.1, 473.15, 20)])
    assert np.max(np.abs(hot.T_K(hot.h_J_kg(T)) - T)) < 1e-6
    assert hot.h_J_kg(hot.T_sat_K + 1e-6) - hot.h_J_kg(hot.T_sat_K) > 2.0e6


def test_supercritical_carbon_dioxide_source_is_single_valued():
    """Above the critical pressure there is no plateau; the table follows the cp peak (CoolProp EOS)."""
    from orcscreen.properties import get_fluid

    co2 = S.FluidSource("CarbonDioxide", 180.0 + C, 5.0, 90.0e5)
    T = np.linspace(290.0, 450.0, 81)
    fluid = get_fluid("CarbonDioxide")
    h_eos = np.array([fluid.state_pT(90.0e5, float(t)).h for t in T])
    assert np.max(np.abs(co2.h_J_kg(T) - h_eos) / co2.cp_J_kgK(T)) < 1e-4
    assert np.max(np.abs(co2.T_K(co2.h_J_kg(T)) - T)) < 1e-6


def test_streams_pickle_for_worker_processes():
    """Batch workers receive streams by pickle; the copy answers the same."""
    for src in _some_sources():
        copy = pickle.loads(pickle.dumps(src))
        assert copy.h_J_kg(350.0) == src.h_J_kg(350.0)
        assert copy.T_K(src.h_in_J_kg) == pytest.approx(src.T_K(src.h_in_J_kg))


# --- settings ----------------------------------------------------------------------------------


def test_source_settings_defaults_and_units():
    """Contract table: pressure 10 bar water/brine, 1.01325 bar flue gas, 5 bar oil; cp brine 3.8, oil 2.3."""
    base = {"inlet_temperature_C": 140.0, "mass_flow_kg_s": 25.0}
    water = S.source_from_settings({"kind": "water", **base, "pressure_bar": None})
    assert isinstance(water, S.HotWater) and water.p_Pa == 10.0e5 and water.T_in_K == pytest.approx(413.15)
    brine = S.source_from_settings({"kind": "brine", **base, "cp_kJ_kgK": None, "cp_slope_kJ_kgK2": 0.0})
    assert brine.cp_J_kgK(350.0) == 3800.0 and brine.p_Pa == 10.0e5
    oil = S.source_from_settings({"kind": "thermal-oil", **base, "cp_kJ_kgK": 1.9, "cp_slope_kJ_kgK2": 0.003,
                                   "min_outlet_temperature_C": 60.0})
    assert oil.p_Pa == 5.0e5 and oil.cp_J_kgK(100.0 + C) == pytest.approx(2200.0)
    assert oil.T_out_min_K == pytest.approx(333.15)
    assert S.source_from_settings({"kind": "thermal-oil", **base}).cp_J_kgK(400.0) == 2300.0
    gas = S.source_from_settings({"kind": "flue-gas", **base, "composition": None, "composition_basis": "mole"})
    assert gas.p_Pa == 101325.0 and gas.mole_fractions == S.methane_flue_gas_mole_fractions()
    steam = S.source_from_settings({"kind": "fluid", "fluid": "Water", "inlet_temperature_C": 120.0,
                                     "mass_flow_kg_s": 2.0, "inlet_quality": 1.0})
    assert steam.p_Pa == pytest.approx(1.9867e5, rel=1e-3)  # p_sat(120 °C) = 1.9867 bar (IAPWS-95)
    for src in (water, brine, oil, gas, steam):
        assert isinstance(src, S.Stream) and src.kind in S.SOURCE_KINDS
        assert "°C" in src.describe() and "bar" in src.describe() and "\n" not in src.describe()
    assert set(S.SOURCE_KINDS) == {"water", "brine", "thermal-oil", "flue-gas", "fluid"}


def test_sink_settings_defaults():
    """Sink defaults: kind water, 20 °C, rise 10 K, 2 bar water / 1.01325 bar air."""
    water = S.sink_from_settings({})
    assert isinstance(water, S.CoolingWater) and water.p_Pa == 2.0e5
    assert water.T_in_K == pytest.approx(293.15) and water.T_out_K == pytest.approx(303.15)
    air = S.sink_from_settings({"kind": "air", "inlet_temperature_C": -10.0, "temperature_rise_K": 15.0,
                                "pressure_bar": None, "aux_power_per_kW_rejected": 0.01})
    assert isinstance(air, S.AmbientAir) and air.p_Pa == 101325.0 and air.T_out_K == pytest.approx(278.15)
    assert set(S.SINK_KINDS) == {"water", "air"}


@pytest.mark.parametrize("section, words", [
    ({"kind": "steam"}, ["source.kind", "'steam'", "flue-gas"]),
    ({"kind": "water", "inlet_temperature_C": 150.0, "mass_flow_kg_s": -3.0}, ["source.mass_flow_kg_s", "-3"]),
    ({"kind": "water", "inlet_temperature_C": 150.0, "mass_flow_kg_s": 3.0, "pressure_bar": 3.0},
     ["boils below 4.76", "3 bar"]),
    ({"kind": "brine", "inlet_temperature_C": 90.0, "mass_flow_kg_s": 3.0, "min_outlet_temperature_C": 95.0},
     ["minimum outlet temperature 95.00 °C", "90.00 °C"]),
    ({"kind": "flue-gas", "inlet_temperature_C": 400.0, "mass_flow_kg_s": 3.0, "composition": {"N2": 0.9, "CH4": 0.1}},
     ["source.composition", "'CH4'", "allowed"]),
    ({"kind": "flue-gas", "inlet_temperature_C": 400.0, "mass_flow_kg_s": 3.0, "composition": {"N2": 1.1, "O2": -0.1}},
     ["fraction of O2", ">= 0"]),
    ({"kind": "flue-gas", "inlet_temperature_C": 400.0, "mass_flow_kg_s": 3.0, "composition": {"N2": 1.0},
      "composition_basis": "volume"}, ["'volume'", "'mole' or 'mass'"]),
    ({"kind": "fluid", "fluid": "Water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 2.0},
     ["source.pressure_bar is missing"]),
    ({"kind": "fluid", "fluid": "Water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 2.0, "inlet_quality": 1.0,
      "pressure_bar": 5.0}, ["1.9867 bar", "not 5 bar"]),
    ({"kind": "fluid", "fluid": "Unobtainium", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 2.0,
      "pressure_bar": 5.0}, ["'Unobtainium'"]),
    ({"kind": "thermal-oil", "inlet_temperature_C": "hot", "mass_flow_kg_s": 2.0},
     ["source.inlet_temperature_C", "'hot'", "number"]),
    ({"kind": "thermal-oil", "inlet_temperature_C": 250.0, "mass_flow_kg_s": 2.0, "cp_kJ_kgK": 2.0,
      "cp_slope_kJ_kgK2": -0.01}, ["not positive", "cp_slope_kJ_kgK2"]),
    ({"kind": "brine", "mass_flow_kg_s": 2.0}, ["source.inlet_temperature_C is missing"]),
])
def test_source_settings_errors_say_what_is_wrong(section, words):
    with pytest.raises(S.StreamError) as info:
        S.source_from_settings(section)
    for word in words:
        assert word in str(info.value)


@pytest.mark.parametrize("section, words", [
    ({"kind": "water", "inlet_temperature_C": 90.0, "temperature_rise_K": 40.0}, ["boil", "2 bar"]),
    ({"kind": "water", "inlet_temperature_C": -5.0}, ["freeze", "'air'"]),
    ({"kind": "air", "temperature_rise_K": 0.0}, ["sink.temperature_rise_K", "greater than zero"]),
    ({"kind": "sea"}, ["sink.kind", "'sea'"]),
])
def test_sink_settings_errors_say_what_is_wrong(section, words):
    with pytest.raises(S.StreamError) as info:
        S.sink_from_settings(section)
    for word in words:
        assert word in str(info.value)
