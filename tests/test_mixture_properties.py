"""A mixture's saturation table and states against CoolProp called directly (the reference library).

CoolProp's PropsSI with a mixture string ("HEOS::A[x]&B[1-x]") flashes every point from scratch:
(p, Q) for the bubble, dew and two-phase states, (p, T) for single-phase states. The table's
stated accuracy (orcscreen.mixture_properties.TABLE_TOLERANCE_K, TABLE_TOLERANCE_H) is what is
checked; single-phase states come from the equation of state itself and must agree to 1e-6 K.
"""

import math

import numpy as np
import pytest
import CoolProp.CoolProp as CP

from orcscreen.mixture_properties import TABLE_TOLERANCE_H, TABLE_TOLERANCE_K, Mixture, parse_components
from orcscreen.properties import PropertyError, get_fluid

#: Pairs with CoolProp interaction parameters (REFERENCES section 6) at three compositions.
PAIRS = [
    ("Isobutane", "Isopentane", 0.5),
    ("Propane", "Isobutane", 0.3),
    ("R245fa", "Isopentane", 0.7),
    ("R1233zd(E)", "R245fa", 0.4),
]


def _name(a, b, x):
    return f"{a}[{x:.6f}]&{b}[{1 - x:.6f}]"


def _direct(a, b, x):
    return f"HEOS::{a}[{x}]&{b}[{1 - x}]"


def _pressures(m: Mixture, n: int = 7):
    """Pressures across the table, between its nodes (where a spline is least accurate)."""
    lo, hi = math.log(m._table.p_min_Pa), math.log(m._table.p_max_Pa)
    return [math.exp(lo + (hi - lo) * (k + 0.37) / n) for k in range(n)]


@pytest.mark.parametrize("a,b,x", PAIRS)
def test_bubble_and_dew_temperatures_match_coolprop(a, b, x):
    m = get_fluid(_name(a, b, x))
    checked = 0
    for p in _pressures(m):
        try:
            T_bub = CP.PropsSI("T", "P", p, "Q", 0, _direct(a, b, x))
            T_dew = CP.PropsSI("T", "P", p, "Q", 1, _direct(a, b, x))
        except ValueError:  # CoolProp's own flash from scratch fails near the critical point
            continue
        sat = m.sat_p(p)
        assert sat.T_K == pytest.approx(T_bub, abs=TABLE_TOLERANCE_K), (a, b, p)
        assert sat.T_dew_K == pytest.approx(T_dew, abs=TABLE_TOLERANCE_K), (a, b, p)
        assert m.T_sat_K(p) == pytest.approx(T_dew, abs=TABLE_TOLERANCE_K)
        assert m.bubble_temperature_K(p) == pytest.approx(T_bub, abs=TABLE_TOLERANCE_K)
        assert sat.glide_K > 0.0  # a zeotropic mixture
        checked += 1
    assert checked >= 5


@pytest.mark.parametrize("a,b,x", PAIRS)
def test_two_phase_states_match_coolprop(a, b, x):
    m = get_fluid(_name(a, b, x))
    fluid = _direct(a, b, x)
    for p in _pressures(m, 4):
        try:
            ref = {q: CP.PropsSI(["T", "H", "S"], "P", p, "Q", q, fluid) for q in (0.0, 0.15, 0.5, 0.85, 1.0)}
        except ValueError:
            continue
        latent = ref[1.0][1] - ref[0.0][1]
        ds = ref[1.0][2] - ref[0.0][2]
        for q in (0.15, 0.5, 0.85):
            T, h, s = ref[q]
            st = m.two_phase_state(p, h)
            assert st.T_K == pytest.approx(T, abs=TABLE_TOLERANCE_K), (a, b, p, q)
            assert abs(st.s - s) <= TABLE_TOLERANCE_H * ds, (a, b, p, q)
            by_s = m.two_phase_state(p, s, entropy=True)
            assert abs(by_s.h - h) <= TABLE_TOLERANCE_H * latent, (a, b, p, q)
            assert 0.0 < st.q < 1.0
        # the general (p, h) entry point gives the same two-phase state
        assert m.state_ph(p, ref[0.5][1]).T_K == pytest.approx(ref[0.5][0], abs=TABLE_TOLERANCE_K)


@pytest.mark.parametrize("a,b,x", PAIRS[:2])
def test_single_phase_states_are_the_equation_of_state(a, b, x):
    """Liquid below the bubble point and vapour above the dew point: exact (no table)."""
    m = get_fluid(_name(a, b, x))
    p = _pressures(m, 3)[1]
    sat = m.sat_p(p)
    for T, phase in ((sat.T_K - 20.0, "liquid"), (sat.T_dew_K + 15.0, "gas")):
        h = CP.PropsSI("H", "P", p, "T", T, _direct(a, b, x))
        s = CP.PropsSI("S", "P", p, "T", T, _direct(a, b, x))
        assert m.state_ph(p, h).T_K == pytest.approx(T, abs=1e-6), phase
        assert m.state_ps(p, s).T_K == pytest.approx(T, abs=1e-6), phase
        assert m.state_pT(p, T).h == pytest.approx(h, rel=1e-9), phase


def test_saturation_temperature_is_the_dew_temperature_and_round_trips():
    m = get_fluid(_name("Isobutane", "Isopentane", 0.5))
    for T in (290.0, 320.0, 360.0, 400.0):
        sat = m.sat_T(T)
        assert sat.T_dew_K == pytest.approx(T, abs=1e-9)
        assert m.T_sat_K(sat.p_Pa) == pytest.approx(T, abs=1e-9)
        assert sat.T_K < T  # the bubble point is colder


def test_mass_fraction_from_molar_masses():
    """Mass fraction w1 = x1 M1 / (x1 M1 + x2 M2), molar masses from CoolProp."""
    m = get_fluid(_name("R245fa", "Isopentane", 0.7))
    M1, M2 = CP.PropsSI("M", "R245fa"), CP.PropsSI("M", "Isopentane")
    assert m.mass_fraction_first == pytest.approx(0.7 * M1 / (0.7 * M1 + 0.3 * M2), rel=1e-12)


def test_states_beyond_the_table_are_errors_with_a_reason():
    """Near the critical point CoolProp's flash stops converging: the table ends there, and a
    saturation state above its end is a PropertyError naming the range (not a crash)."""
    m = get_fluid(_name("R245fa", "Isopentane", 0.7))
    assert m.p_sat_max_Pa < m.p_crit_Pa
    with pytest.raises(PropertyError, match="table covers"):
        m.sat_T(m.T_sat_max_K + 1.0)
    with pytest.raises(PropertyError, match="table covers"):
        m.sat_p(m.p_sat_max_Pa * 1.05)


def test_pure_ends_reduce_to_the_pure_fluid():
    """A mole fraction of 1 or 0 is the pure component: the table reproduces its saturation
    (orcscreen's pure-fluid curves) within the table's tolerance."""
    for x, pure in ((1.0, "Isobutane"), (0.0, "Isopentane")):
        m = get_fluid(_name("Isobutane", "Isopentane", x))
        f = get_fluid(pure)
        for T in (300.0, 340.0, 380.0):
            a, b = m.sat_T(T), f.sat_T(T)
            assert a.glide_K == pytest.approx(0.0, abs=TABLE_TOLERANCE_K)
            assert f.T_sat_K(a.p_Pa) == pytest.approx(T, abs=TABLE_TOLERANCE_K)
            assert a.hV == pytest.approx(b.hV, abs=TABLE_TOLERANCE_H * (b.hV - b.hL))
            assert a.hL == pytest.approx(b.hL, abs=TABLE_TOLERANCE_H * (b.hV - b.hL))


def test_names_are_checked():
    assert parse_components("Isobutane[0.25]&Isopentane[0.75]") == ("Isobutane", "Isopentane", 0.25)
    for bad in ("Isobutane&Isopentane", "Isobutane[0.3]&Isopentane[0.3]", "Isobutane[1.5]&Isopentane[-0.5]"):
        with pytest.raises(ValueError):
            parse_components(bad)


def test_a_mixture_survives_pickling_as_its_name():
    import pickle

    m = get_fluid(_name("Isobutane", "Isopentane", 0.5))
    assert pickle.loads(pickle.dumps(m)) is m
    assert np.isfinite(m.T_crit_K) and m.T_min_K < 240.0


def test_the_solved_saturation_is_coolprops_and_the_table_agrees():
    """Mixture.sat_T_solved and T_sat_solved_K flash CoolProp directly (the table's reference):
    the dew point at T, the bubble point at its pressure; the table agrees within its tolerance."""
    a, b, x = PAIRS[0]
    m = get_fluid(_name(a, b, x))
    for T in (300.0, 350.0):
        ref, tab = m.sat_T_solved(T), m.sat_T(T)
        assert ref.T_dew_K == pytest.approx(T, abs=1e-9)
        assert ref.p_Pa == pytest.approx(CP.PropsSI("P", "T", T, "Q", 1, _direct(a, b, x)), rel=1e-9)
        assert tab.T_K == pytest.approx(ref.T_K, abs=TABLE_TOLERANCE_K)
        assert tab.p_Pa == pytest.approx(ref.p_Pa, rel=1e-4)
        assert m.T_sat_solved_K(ref.p_Pa) == pytest.approx(T, abs=1e-6)
