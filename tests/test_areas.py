"""Exchanger areas zone by zone (orcscreen.areas) against hand LMTD arithmetic, a textbook example
and CoolProp's latent heats.

Sources: Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed.,
Wiley 2007, section 11.3 (LMTD, eq. 11.15; q = U A LMTD) and Example 11.1 (from memory);
CoolProp's PropsSI (saturated enthalpies) as the external reference for the phase-change duty.
The U values below are invented test inputs inside the ranges of DiPippo, *Geothermal Power
Plants*, Table 8.1.
"""

import math

import numpy as np
import pytest

from orcscreen import streams
from orcscreen.areas import ZONES, ExchangerArea, exchanger_area, exchanger_areas, segment_zones
from orcscreen.cycles import LAYOUTS, CycleContext, CycleSettings
from orcscreen.exchangers import Profile, ua_W_K
from orcscreen.properties import get_fluid

U_TEST = {"preheating": 700.0, "evaporation": 900.0, "superheating": 300.0, "supercritical heating": 600.0,
          "desuperheating": 250.0, "condensation": 800.0, "subcooling": 600.0, "recuperation": 200.0}

SOURCE = {"kind": "water", "inlet_temperature_C": 150.0, "mass_flow_kg_s": 10.0, "pressure_bar": 10.0}
SINK = {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 10.0}


def _linear_profile(Q_W, T_hot_K, T_cold_K, n):
    """Counter-current profile with constant heat capacities (linear T-Q) in n segments; the
    (T_hot, T_cold) pairs are given at the cold end (Q = 0) and the hot end (Q = Q_W)."""
    f = np.linspace(0.0, 1.0, n + 1)
    return Profile(f * Q_W, T_hot_K[0] + f * (T_hot_K[1] - T_hot_K[0]), T_cold_K[0] + f * (T_cold_K[1] - T_cold_K[0]))


def _runs(zones):
    """The zone names in order, consecutive repeats collapsed."""
    return tuple(z for i, z in enumerate(zones) if i == 0 or zones[i - 1] != z)


# ------------------------------------------------------------------------------------------
# hand arithmetic and a textbook example
# ------------------------------------------------------------------------------------------
@pytest.mark.parametrize("n", [1, 7, 1000])
def test_single_zone_area_matches_hand_lmtd(n):
    """Incropera et al. 6th ed., eq. 11.15, made-up example: oil cooled 150 -> 90 °C against water
    heated 30 -> 70 °C, counter-current, Q = 100 kW, U = 500 W/(m² K).
    End differences: 150 - 70 = 80 K (hot end), 90 - 30 = 60 K (cold end);
    LMTD = (80 - 60) / ln(80/60) = 20 / 0.2876820725 = 69.52118 K;
    A = Q / (U LMTD) = 100e3 × ln(4/3) / (500 × 20) = 10 ln(4/3) = 2.876820725 m².
    With constant heat capacities the difference is linear in Q, so the segment-wise sum of
    dQ_i / LMTD_i telescopes to the single LMTD's UA for any number of segments n."""
    A_hand_m2 = 10.0 * math.log(4.0 / 3.0)
    prof = _linear_profile(100e3, (363.15, 423.15), (303.15, 343.15), n)
    res = exchanger_area(prof, "recuperator", {"recuperation": 500.0})
    assert res.area_m2 == pytest.approx(A_hand_m2, rel=1e-9)
    assert res.ua_W_K == pytest.approx(100e3 / (20.0 / math.log(4.0 / 3.0)), rel=1e-9)
    assert res.mean_U_W_m2K == pytest.approx(500.0, rel=1e-12)
    assert set(res.by_zone) == {"recuperation"}


def test_incropera_example_11_1_tube_length():
    """Incropera et al. 6th ed., Example 11.1 (from memory): counter-flow concentric-tube oil cooler,
    oil 0.1 kg/s (cp 2131 J/(kg K)) 100 -> 60 °C, water 0.2 kg/s (cp 4178) entering at 30 °C and
    leaving at 40.2 °C, U = 38.1 W/(m² K), inner tube 25 mm: q = 8524 W, LMTD = 43.2 °C,
    L = 65.9 m (the book's rounding)."""
    q = 0.1 * 2131.0 * 40.0
    T_w_out = 303.15 + q / (0.2 * 4178.0)
    prof = _linear_profile(q, (333.15, 373.15), (303.15, T_w_out), 10)
    res = exchanger_area(prof, "recuperator", {"recuperation": 38.1})
    assert res.area_m2 / (math.pi * 0.025) == pytest.approx(65.9, abs=0.05)


def test_zero_duty_segment_adds_nothing_and_touching_profiles_give_infinite_area():
    """A repeated point (dQ = 0) leaves the hand example's area (Incropera eq. 11.15, see above)
    unchanged; a zero temperature difference anywhere gives an infinite area, as
    exchangers.ua_W_K gives an infinite UA (q = U A LMTD with LMTD -> 0)."""
    prof = _linear_profile(100e3, (363.15, 423.15), (303.15, 343.15), 4)
    doubled = Profile(np.insert(prof.Q_W, 2, prof.Q_W[2]), np.insert(prof.T_hot_K, 2, prof.T_hot_K[2]),
                      np.insert(prof.T_cold_K, 2, prof.T_cold_K[2]))
    res = exchanger_area(doubled, "recuperator", {"recuperation": 500.0})
    assert res.area_m2 == pytest.approx(10.0 * math.log(4.0 / 3.0), rel=1e-9)
    touching = Profile(prof.Q_W, prof.T_hot_K, np.where(np.arange(5) == 4, prof.T_hot_K, prof.T_cold_K))
    res = exchanger_area(touching, "recuperator", {"recuperation": 500.0})
    assert math.isinf(res.area_m2) and math.isinf(res.ua_W_K) and math.isinf(ua_W_K(touching))
    assert math.isnan(res.mean_U_W_m2K)


# ------------------------------------------------------------------------------------------
# real profiles from the engine
# ------------------------------------------------------------------------------------------
def _evaluate(fluid_name, layout, given, **settings):
    f = get_fluid(fluid_name)
    lay = LAYOUTS[layout]
    ctx = CycleContext(f, streams.source_from_settings(SOURCE), streams.sink_from_settings(SINK),
                       CycleSettings(min_turbine_outlet_quality=0.0, **settings))
    r = lay.evaluate(ctx, lay.variables_for(f, given), exact=True)
    assert r.ok, r.reason
    return r


@pytest.fixture(scope="module")
def cycles():
    return {
        "basic subcooled": _evaluate("Isopentane", "basic", {"evaporation_temperature_K": 373.15,
                                                             "turbine_inlet_temperature_K": 378.15}, subcooling_K=3.0),
        "basic saturated": _evaluate("R245fa", "basic", {"evaporation_temperature_K": 373.15}),
        "recuperated": _evaluate("Isopentane", "recuperated", {"evaporation_temperature_K": 373.15,
                                                               "turbine_inlet_temperature_K": 383.15}),
        "reheat": _evaluate("Isopentane", "reheat", {"evaporation_temperature_K": 373.15,
                                                     "turbine_inlet_temperature_K": 383.15, "reheat_pressure_Pa": 3e5}),
        "transcritical": _evaluate("R134a", "transcritical", {"high_pressure_Pa": 1.1 * get_fluid("R134a").p_crit_Pa,
                                                              "turbine_inlet_temperature_K": 410.0}),
    }


def _latent_duty_W(fluid_name, T_K, m_kg_s):
    """m (h_dew - h_bubble) at T from CoolProp's PropsSI (the external reference)."""
    from CoolProp.CoolProp import PropsSI

    return m_kg_s * (PropsSI("H", "T", T_K, "Q", 1.0, fluid_name) - PropsSI("H", "T", T_K, "Q", 0.0, fluid_name))


def _zone_duty_W(profile, zones, zone):
    dQ = np.diff(profile.Q_W)
    return float(np.sum(dQ[np.array(zones) == zone]))


def test_subcritical_zones_in_order_and_phase_change_duties_match_coolprop(cycles):
    """Zones of the engine's profiles: preheating, evaporation, superheating along the heater;
    subcooling (cycle subcooling > 0), condensation, desuperheating along the condenser. The
    plateau duties equal m_wf (h_dew - h_bubble) from CoolProp PropsSI to 1e-6 relative."""
    r = cycles["basic subcooled"]
    ev = segment_zones(r.profiles["evaporator"], "evaporator")
    co = segment_zones(r.profiles["condenser"], "condenser")
    assert _runs(ev) == ("preheating", "evaporation", "superheating")
    assert _runs(co) == ("subcooling", "condensation", "desuperheating")
    assert _zone_duty_W(r.profiles["evaporator"], ev, "evaporation") == pytest.approx(
        _latent_duty_W("Isopentane", 373.15, r.m_wf_kg_s), rel=1e-6)
    assert _zone_duty_W(r.profiles["condenser"], co, "condensation") == pytest.approx(
        _latent_duty_W("Isopentane", r.T_cond_K, r.m_wf_kg_s), rel=1e-6)

    r = cycles["basic saturated"]  # no superheat, no subcooling
    ev = segment_zones(r.profiles["evaporator"], "evaporator")
    assert _runs(ev) == ("preheating", "evaporation")
    assert _runs(segment_zones(r.profiles["condenser"], "condenser")) == ("condensation", "desuperheating")
    assert _zone_duty_W(r.profiles["evaporator"], ev, "evaporation") == pytest.approx(
        _latent_duty_W("R245fa", 373.15, r.m_wf_kg_s), rel=1e-6)


def test_reheat_composite_heater_and_recuperator_zones(cycles):
    """The reheat layout's composite heater keeps one evaporation plateau whose duty is the
    latent heat of the whole flow (CoolProp PropsSI, 1e-6 relative): the reheated vapour adds
    no duty at a single temperature. A recuperator is all recuperation."""
    r = cycles["reheat"]
    ev = segment_zones(r.profiles["evaporator"], "evaporator")
    assert _runs(ev) == ("preheating", "evaporation", "superheating")
    assert _zone_duty_W(r.profiles["evaporator"], ev, "evaporation") == pytest.approx(
        _latent_duty_W("Isopentane", 373.15, r.m_wf_kg_s), rel=1e-6)
    rec = cycles["recuperated"].profiles["recuperator"]
    assert set(segment_zones(rec, "recuperator")) == {"recuperation"}
    assert len(segment_zones(rec, "recuperator")) == len(rec.Q_W) - 1


def test_transcritical_heater_is_one_supercritical_zone(cycles):
    """A heater above the critical pressure has no plateau: all "supercritical heating"; its
    condenser still condenses (R134a condensing below its critical temperature)."""
    r = cycles["transcritical"]
    assert set(segment_zones(r.profiles["evaporator"], "evaporator")) == {"supercritical heating"}
    assert "condensation" in segment_zones(r.profiles["condenser"], "condenser")


def test_zone_split_conserves_ua(cycles):
    """Sum of the zones' UA equals exchangers.ua_W_K of the whole profile (1e-12 relative), and the
    zones' areas sum to the total area; zones come in the order of ZONES."""
    n = 0
    for name, r in cycles.items():
        areas = exchanger_areas(r.profiles, U_TEST)
        assert list(areas) == list(r.profiles)
        for ex, res in areas.items():
            assert isinstance(res, ExchangerArea) and res.exchanger == ex
            ua_ref = ua_W_K(r.profiles[ex])
            assert sum(u for u, _ in res.by_zone.values()) == pytest.approx(ua_ref, rel=1e-12), (name, ex)
            assert res.ua_W_K == pytest.approx(ua_ref, rel=1e-12), (name, ex)
            assert res.area_m2 == pytest.approx(sum(a for _, a in res.by_zone.values()), rel=1e-12)
            for z, (ua, a) in res.by_zone.items():
                assert a == pytest.approx(ua / U_TEST[z], rel=1e-12)
            assert list(res.by_zone) == [z for z in ZONES if z in res.by_zone]
            n += 1
    assert n >= 11


def test_area_halves_when_u_doubles_and_scales_with_duty(cycles):
    """A = UA / U (q = U A LMTD, Incropera et al. section 11.3): doubling every U halves the area; a
    profile with the same temperatures and k times the duty has k times the area."""
    prof = cycles["basic subcooled"].profiles["evaporator"]
    base = exchanger_area(prof, "evaporator", U_TEST)
    doubled = exchanger_area(prof, "evaporator", {z: 2.0 * u for z, u in U_TEST.items()})
    assert doubled.area_m2 == pytest.approx(0.5 * base.area_m2, rel=1e-12)
    assert doubled.ua_W_K == pytest.approx(base.ua_W_K, rel=1e-12)
    scaled = exchanger_area(Profile(3.0 * prof.Q_W, prof.T_hot_K, prof.T_cold_K), "evaporator", U_TEST)
    assert scaled.area_m2 == pytest.approx(3.0 * base.area_m2, rel=1e-12)
    for z in base.by_zone:
        assert scaled.by_zone[z][1] == pytest.approx(3.0 * base.by_zone[z][1], rel=1e-12)


# ------------------------------------------------------------------------------------------
# bad input
# ------------------------------------------------------------------------------------------
def test_bad_input_is_refused_with_a_clear_message(cycles):
    r = cycles["basic subcooled"]
    with pytest.raises(ValueError, match="unknown exchanger 'boiler'; allowed: evaporator, condenser, recuperator"):
        segment_zones(r.profiles["evaporator"], "boiler")
    with pytest.raises(KeyError, match="superheating"):
        exchanger_area(r.profiles["evaporator"], "evaporator", {"preheating": 700.0, "evaporation": 900.0})
    with pytest.raises(ValueError, match="U for zone 'preheating' = 0.0"):
        exchanger_area(r.profiles["evaporator"], "evaporator", {**U_TEST, "preheating": 0.0})
    glide = _linear_profile(1e5, (340.0, 360.0), (300.0, 310.0), 5)  # a condenser without plateau
    with pytest.raises(ValueError, match="no phase-change plateau"):
        segment_zones(glide, "condenser")
