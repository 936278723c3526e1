"""Cycle state points against a textbook steam cycle and an independent IAPWS-IF97 library.

Textbook: Moran, Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*,
8th ed., Wiley 2014, Example 8.1 (ideal Rankine cycle: saturated vapour at 8.0 MPa into the
turbine, saturated liquid at 0.008 MPa out of the condenser, 100 MW net) and Example 8.2 (the
same with turbine and pump isentropic efficiencies of 85 %). The book's answers are quoted from
memory, at the book's rounding: thermal efficiency 37.1 % and 31.4 %, back-work ratio 0.84 %,
mass flow 3.77e5 kg/h and 4.449e5 kg/h, turbine-outlet quality 0.6745 (ideal).

Independent check: the ``iapws`` package (IAPWS-IF97, Wagner et al., J. Eng. Gas Turbines Power
122 (2000) 150-182), a different formulation and implementation from CoolProp's IAPWS-95.
"""

import math

import pytest

from orcscreen.cycles import LAYOUTS, CycleContext, CycleSettings
from orcscreen.properties import get_fluid
from orcscreen.turbine import ConstantEfficiency

def evaluate(fluid, source, sink, settings, layout, T_evap_K, superheat_K, **kw):
    """One subcritical cycle at an evaporation temperature [K] and superheat [K]."""
    return layout.evaluate(CycleContext(fluid, source, sink, settings),
                           {"evaporation_temperature_K": T_evap_K, "superheat_K": superheat_K}, **kw)


P_EVAP_PA = 8.0e6
P_COND_PA = 0.008e6
NET_POWER_W = 100e6


def steam_cycle(eta: float):
    water = get_fluid("Water")
    s = CycleSettings(
        turbine=ConstantEfficiency(eta), pump_efficiency=eta, min_turbine_outlet_quality=0.0, max_reduced_pressure=0.99
    )
    r = evaluate(
        water, None, None, s, LAYOUTS["basic"], water.T_sat_K(P_EVAP_PA), 0.0,
        exact=False, T_cond_K=water.T_sat_K(P_COND_PA), m_wf_kg_s=1.0,
    )
    assert r.ok, r.reason
    return r


def test_steam_cycle_textbook_example_ideal():
    """Moran et al. 8th ed. Example 8.1 (from memory): eta 37.1 %, bwr 0.84 %, 3.77e5 kg/h, x 0.6745."""
    r = steam_cycle(1.0)
    eta = r.W_net_W / r.Q_in_W
    assert eta == pytest.approx(0.371, abs=0.0005)
    assert r.W_pump_W / r.W_turbine_W == pytest.approx(0.0084, abs=0.00005)
    m_kg_h = NET_POWER_W / r.W_net_W * 3600.0
    assert m_kg_h == pytest.approx(3.77e5, abs=0.005e5)
    assert r.states["4"].q == pytest.approx(0.6745, abs=0.0005)


def test_steam_cycle_textbook_example_with_efficiencies():
    """Moran et al. 8th ed. Example 8.2 (from memory): eta 31.4 %, 4.449e5 kg/h."""
    r = steam_cycle(0.85)
    eta = r.W_net_W / r.Q_in_W
    assert eta == pytest.approx(0.314, abs=0.0005)
    m_kg_h = NET_POWER_W / r.W_net_W * 3600.0
    assert m_kg_h == pytest.approx(4.449e5, rel=0.002)


@pytest.mark.parametrize("eta", [1.0, 0.85])
def test_steam_cycle_against_iapws_if97(eta):
    """Each state's enthalpy and the efficiency against IAPWS-IF97 from the ``iapws`` package.

    IF97 and IAPWS-95 agree to about 0.1 kJ/kg in this region (IF97 paper, consistency with
    IAPWS-95); the tolerance is 0.5 kJ/kg on enthalpies and 1e-3 on the efficiency.
    """
    iapws = pytest.importorskip("iapws")
    IF97 = iapws.IAPWS97
    p_e, p_c = P_EVAP_PA / 1e6, P_COND_PA / 1e6  # MPa
    st1 = IF97(P=p_c, x=0.0)
    st2s = IF97(P=p_e, s=st1.s)
    h2 = st1.h + (st2s.h - st1.h) / eta
    st3 = IF97(P=p_e, x=1.0)
    st4s = IF97(P=p_c, s=st3.s)
    h4 = st3.h - eta * (st3.h - st4s.h)
    eta_ref = ((st3.h - h4) - (h2 - st1.h)) / (st3.h - h2)

    r = steam_cycle(eta)
    ours = {k: st.h / 1e3 for k, st in r.states.items()}
    ref = {"1": st1.h, "2": h2, "3": st3.h, "4": h4}
    for k in ref:
        assert ours[k] == pytest.approx(ref[k], abs=0.5), k
    assert r.W_net_W / r.Q_in_W == pytest.approx(eta_ref, abs=1e-3)


def test_superheated_steam_cycle_conservation():
    """Conservation laws, no published value: a superheated inlet (8 MPa, 480 °C) ends drier than
    the saturated inlet, beats its efficiency, stays below Carnot, and the energy balance closes."""
    water = get_fluid("Water")
    s = CycleSettings(turbine=ConstantEfficiency(1.0), pump_efficiency=1.0, min_turbine_outlet_quality=0.0)
    T_e = water.T_sat_K(P_EVAP_PA)
    r = evaluate(water, None, None, s, LAYOUTS["basic"], T_e, 753.15 - T_e, exact=False,
                 T_cond_K=water.T_sat_K(P_COND_PA), m_wf_kg_s=1.0)
    assert r.ok
    assert r.states["4"].q > steam_cycle(1.0).states["4"].q
    eta = r.W_net_W / r.Q_in_W
    assert 0.371 < eta < 1.0 - r.states["1"].T_K / r.states["3"].T_K
    assert math.isclose(r.Q_in_W - r.Q_out_W, r.W_turbine_W - r.W_pump_W, rel_tol=1e-12)


def test_recuperator_may_heat_the_liquid_to_saturation():
    """A very dry fluid (n-decane, 40 K superheat, 60 °C evaporation) whose recuperator is
    capped by the bubble point is feasible; the laws hold. No published value: conservation,
    the recuperator pinch and the bubble-point cap (the cold side stays liquid)."""
    from orcscreen import streams

    src = streams.source_from_settings({"kind": "water", "inlet_temperature_C": 200.0, "mass_flow_kg_s": 10.0, "pressure_bar": 20.0})
    snk = streams.sink_from_settings({"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 10.0})
    f = get_fluid("n-Decane")
    s = CycleSettings()
    r = evaluate(f, src, snk, s, LAYOUTS["recuperated"], 333.15, 40.0, exact=True)
    assert r.ok, r.reason
    sat = f.sat_T(333.15)
    assert r.states["2r"].h <= sat.hL + 1e-6
    assert r.Q_rec_W > 0.0
    assert r.profiles["recuperator"].min_approach_K >= s.pinch_recuperator_K - 1e-6
    assert math.isclose(r.Q_in_W - r.Q_out_W, r.W_turbine_W - r.W_pump_W, rel_tol=1e-9)


def test_evaluate_cycle_api_reproduces_the_textbook_example():
    """The by-hand API on Moran et al. 8th ed. Example 8.2 (from memory): eta 31.4 %."""
    from orcscreen import evaluate_cycle

    out = evaluate_cycle("Water", evaporation_pressure_bar=80.0, condensing_pressure_bar=0.08,
                         turbine_efficiency=0.85, pump_efficiency=0.85)
    assert out["thermal_efficiency"] == pytest.approx(0.314, abs=0.0005)
    assert out["states"]["3"]["q"] == 1.0
    assert out["net_power_kW"] == pytest.approx(out["turbine_power_kW"] - out["pump_power_kW"], rel=1e-12)


def test_screen_api_returns_ranked_frame():
    """screen() ranks feasible cases by net power and keeps the others with a reason."""
    from orcscreen import screen

    df = screen({
        "source": {"kind": "water", "inlet_temperature_C": 110.0, "mass_flow_kg_s": 5.0},
        "sink": {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 8.0},
        "fluids": {"include": ["R245fa", "IsoButane", "Water"]},
        "cycle": {"layouts": ["basic"]},
    })
    ok = df[df["status"] == "ok"]
    assert list(ok["net_power_kW"]) == sorted(ok["net_power_kW"], reverse=True)
    assert set(df["coolprop_name"]) == {"R245fa", "IsoButane", "Water"}
    assert all(df.loc[df["status"] != "ok", "reason"].str.len() > 0)
