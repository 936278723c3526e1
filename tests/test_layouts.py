"""The reheat, bleed-regenerative and transcritical layouts against textbook cycles, an
independent steam library and plain physical facts; the by-hand API over every layout.

Textbook: Moran, Shapiro, Boettner, Bailey, *Fundamentals of Engineering Thermodynamics*, 8th ed.,
Wiley 2014, with steam at 8.0 MPa and 480 °C into the turbine and a condenser at 0.008 MPa:

* Example 8.3, reheat at 0.7 MPa to 440 °C, isentropic machines, 100 MW net: thermal efficiency
  40.3 %, steam flow 2.363e5 kg/h;
* Example 8.4, the same with 85 % turbine stages: thermal efficiency 35.1 %;
* Example 8.5, one open feedwater heater at 0.7 MPa (saturated liquid out), 85 % turbine
  stages, isentropic pumps, 100 MW net: thermal efficiency 36.9 %, bled fraction 0.1966, steam
  flow 3.69e5 kg/h.

The book's answers are quoted from memory, at its rounding. Independent check: the same cycles
through IAPWS-IF97 from the ``iapws`` package (Wagner et al., J. Eng. Gas Turbines Power 122
(2000) 150-182), a different formulation and implementation from CoolProp's IAPWS-95.
"""

import pytest

from orcscreen import evaluate_cycle
from orcscreen.api import run_case
from orcscreen.study import study_from_dict

STEAM = dict(evaporation_pressure_bar=80.0, condensing_pressure_bar=0.08, turbine_inlet_temperature_C=480.0)
NET_POWER_W = 100e6


def _flow_kg_h(out) -> float:
    return NET_POWER_W / (out["net_specific_work_kJ_kg"] * 1e3) * 3600.0


def test_reheat_textbook_example_ideal():
    """Moran et al. 8th ed. Example 8.3 (from memory): eta 40.3 %, 2.363e5 kg/h."""
    out = evaluate_cycle("Water", **STEAM, layout="reheat", reheat_pressure_bar=7.0, reheat_temperature_C=440.0)
    assert out["thermal_efficiency"] == pytest.approx(0.403, abs=0.0005)
    assert _flow_kg_h(out) == pytest.approx(2.363e5, rel=0.001)


def test_reheat_textbook_example_with_turbine_efficiency():
    """Moran et al. 8th ed. Example 8.4 (from memory): eta 35.1 %."""
    out = evaluate_cycle("Water", **STEAM, layout="reheat", reheat_pressure_bar=7.0, reheat_temperature_C=440.0,
                         turbine_efficiency=0.85)
    assert out["thermal_efficiency"] == pytest.approx(0.351, abs=0.0005)


def test_open_feed_heater_textbook_example():
    """Moran et al. 8th ed. Example 8.5 (from memory): eta 36.9 %, y 0.1966, 3.69e5 kg/h."""
    out = evaluate_cycle("Water", **STEAM, layout="bleed-regenerative", bleed_pressure_bar=7.0, turbine_efficiency=0.85)
    assert out["thermal_efficiency"] == pytest.approx(0.369, abs=0.0005)
    assert out["bleed_fraction"] == pytest.approx(0.1966, abs=0.0005)
    assert _flow_kg_h(out) == pytest.approx(3.69e5, rel=0.002)
    assert out["bleed_pressure_bar"] == pytest.approx(7.0, rel=1e-9)


def _if97():
    return pytest.importorskip("iapws").IAPWS97


@pytest.mark.parametrize("eta", [1.0, 0.85])
def test_reheat_against_iapws_if97(eta):
    """Every state's enthalpy and the efficiency against IAPWS-IF97 (0.5 kJ/kg, 1e-3: the two
    formulations agree to about 0.1 kJ/kg here, IF97 paper)."""
    IF97 = _if97()
    st1 = IF97(P=0.008, x=0.0)
    h2 = st1.h + (IF97(P=8.0, s=st1.s).h - st1.h)
    st3 = IF97(P=8.0, T=753.15)
    h3e = st3.h - eta * (st3.h - IF97(P=0.7, s=st3.s).h)
    st3r = IF97(P=0.7, T=713.15)
    h4 = st3r.h - eta * (st3r.h - IF97(P=0.008, s=st3r.s).h)
    eta_ref = ((st3.h - h3e) + (st3r.h - h4) - (h2 - st1.h)) / ((st3.h - h2) + (st3r.h - h3e))
    out = evaluate_cycle("Water", **STEAM, layout="reheat", reheat_pressure_bar=7.0, reheat_temperature_C=440.0,
                         turbine_efficiency=eta)
    ours = {k: v["h_kJ_kg"] for k, v in out["states"].items()}
    for k, ref in {"1": st1.h, "2": h2, "3": st3.h, "3e": h3e, "3r": st3r.h, "4": h4}.items():
        assert ours[k] == pytest.approx(ref, abs=0.5), k
    assert out["thermal_efficiency"] == pytest.approx(eta_ref, abs=1e-3)


def test_open_feed_heater_against_iapws_if97():
    IF97, eta = _if97(), 0.85
    st1 = IF97(P=0.008, x=0.0)
    h2 = st1.h + (IF97(P=0.7, s=st1.s).h - st1.h)
    st2f = IF97(P=0.7, x=0.0)
    h2h = st2f.h + (IF97(P=8.0, s=st2f.s).h - st2f.h)
    st3 = IF97(P=8.0, T=753.15)
    h3b = st3.h - eta * (st3.h - IF97(P=0.7, s=st3.s).h)
    st3b = IF97(P=0.7, h=h3b)
    h4 = h3b - eta * (h3b - IF97(P=0.008, s=st3b.s).h)
    y = (st2f.h - h2) / (h3b - h2)
    w = (st3.h - h3b) + (1 - y) * (h3b - h4) - (1 - y) * (h2 - st1.h) - (h2h - st2f.h)
    out = evaluate_cycle("Water", **STEAM, layout="bleed-regenerative", bleed_pressure_bar=7.0, turbine_efficiency=eta)
    assert out["bleed_fraction"] == pytest.approx(y, abs=2e-4)
    assert out["thermal_efficiency"] == pytest.approx(w / (st3.h - h2h), abs=1e-3)
    assert out["states"]["4"]["h_kJ_kg"] == pytest.approx(h4, abs=0.5)


# -- the by-hand API ---------------------------------------------------------------------------

WATER_SOURCE = {"kind": "water", "inlet_temperature_C": 130.0, "mass_flow_kg_s": 10.0, "pressure_bar": 5.0}
COOLING = {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 8.0}


def test_by_hand_flow_from_the_source_pinch():
    """A saturated R245fa cycle at 90 °C against hot water: the flow is the bubble-point pinch's
    energy balance (the pinch at the bubble point of a dry fluid without superheat: common
    practice), checked with CoolProp's high-level PropsSI (IAPWS-95, its general flash: 1e-6)
    and with IAPWS-IF97 from ``iapws`` (1.5e-3: IF97 and IAPWS-95 differ by 5e-4 on this
    enthalpy drop)."""
    from CoolProp.CoolProp import PropsSI

    IF97 = _if97()
    out = evaluate_cycle("R245fa", evaporation_temperature_C=90.0, source=WATER_SOURCE, sink=COOLING,
                         pinch_evaporator_K=8.0, turbine_efficiency=0.8, pump_efficiency=0.7)
    assert out["pinch_location"] == "bubble point"
    assert out["source_temperature_at_pinch_C"] == pytest.approx(98.0, abs=1e-6)
    dh_wf = out["states"]["3"]["h_kJ_kg"] - _saturated_liquid_h("R245fa", 90.0)
    dh_95 = (PropsSI("H", "P", 5e5, "T", 403.15, "Water") - PropsSI("H", "P", 5e5, "T", 371.15, "Water")) / 1e3
    dh_97 = IF97(P=0.5, T=403.15).h - IF97(P=0.5, T=371.15).h
    assert out["wf_mass_flow_kg_s"] == pytest.approx(10.0 * dh_95 / dh_wf, rel=1e-6)
    assert out["wf_mass_flow_kg_s"] == pytest.approx(10.0 * dh_97 / dh_wf, rel=1.5e-3)
    # counter-current condenser: the plateau faces the sink between its inlet and its outlet
    # (the desuperheating zone takes the sink's last degrees), so with the 5 K pinch it lies
    # between 25 °C and 33 °C
    assert 20.0 + 5.0 < out["condensing_temperature_C"] < 20.0 + 8.0 + 5.0


def _saturated_liquid_h(name: str, T_C: float) -> float:
    from CoolProp.CoolProp import PropsSI

    return PropsSI("H", "T", T_C + 273.15, "Q", 0.0, name) / 1e3


def test_by_hand_transcritical_cycle_and_its_limits():
    out = evaluate_cycle("R134a", heater_pressure_bar=50.0, condensing_pressure_bar=8.0, turbine_inlet_temperature_C=120.0,
                         layout="transcritical", turbine_efficiency=0.8, pump_efficiency=0.7)
    assert out["states"]["3"]["p_bar"] == pytest.approx(50.0)
    assert 0.0 < out["thermal_efficiency"] < 1.0 - (out["condensing_temperature_C"] + 273.15) / 393.15
    with pytest.raises(ValueError, match="not above the critical pressure"):
        evaluate_cycle("R134a", heater_pressure_bar=30.0, condensing_pressure_bar=8.0, turbine_inlet_temperature_C=120.0,
                       layout="transcritical")
    with pytest.raises(ValueError, match="does not use bleed_pressure_Pa"):
        evaluate_cycle("R134a", 20.0, 8.0, bleed_pressure_bar=10.0)
    with pytest.raises(ValueError, match="needs the bleed pressure"):
        evaluate_cycle("R134a", 20.0, 8.0, layout="bleed-regenerative")


def test_evaluate_cycle_without_a_sink_does_not_crash():
    """A condensing temperature given directly needs no sink (it used to crash)."""
    out = evaluate_cycle("IsoButane", evaporation_temperature_C=100.0, condensing_temperature_C=35.0,
                         source=WATER_SOURCE, pinch_evaporator_K=5.0)
    assert out["condensing_temperature_C"] == pytest.approx(35.0)
    assert out["wf_mass_flow_kg_s"] > 0.0


# -- screening facts ---------------------------------------------------------------------------

def _rows(**study):
    s = study_from_dict(study)
    return [run_case(c)["row"] for c in s.cases()]


def test_carbon_dioxide_is_screenable_where_the_sink_lets_it_condense():
    """CO2 (critical temperature 31 °C, from memory; CoolProp gives 30.98 °C) runs a
    transcritical cycle with 8 °C cooling water; with 25 °C water it cannot condense."""
    base = {"source": {"kind": "water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 10.0, "pressure_bar": 5.0},
            "cycle": {"layouts": ["transcritical", "basic"]}, "fluids": {"include": ["CarbonDioxide"]},
            "limits": {"max_supercritical_reduced_pressure": 1.5}}
    cold = _rows(**base, sink={"kind": "water", "inlet_temperature_C": 8.0, "temperature_rise_K": 4.0},
                 exchangers={"pinch_condenser_K": 3.0})
    assert cold[0]["status"] == "ok", cold[0]["reason"]
    assert cold[0]["reduced_pressure"] > 1.0 and cold[0]["net_power_kW"] > 0.0
    warm = _rows(**base, sink={"kind": "water", "inlet_temperature_C": 25.0, "temperature_rise_K": 8.0})
    assert warm[0]["status"] == "infeasible"
    assert "critical temperature" in warm[0]["reason"] and "condens" in warm[0]["reason"]


def test_a_source_that_cannot_pass_the_critical_temperature_gives_a_plain_reason():
    rows = _rows(source={"kind": "water", "inlet_temperature_C": 150.0, "mass_flow_kg_s": 10.0},
                 cycle={"layouts": ["transcritical"]}, fluids={"include": ["n-Pentane"]})
    assert rows[0]["status"] == "infeasible"
    assert "cannot heat n-Pentane above its critical temperature" in rows[0]["reason"]
