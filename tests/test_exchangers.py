"""Exchangers: LMTD and UA against a textbook example; the pinch closures on paths.

Textbook: Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed.,
Wiley 2007, Example 11.1 (counterflow concentric-tube oil cooler): oil 0.1 kg/s from 100 to 60 °C
(cp 2131 J/(kg K)), water 0.2 kg/s entering at 30 °C (cp 4178 J/(kg K)); the book finds
q = 8524 W, water outlet 40.2 °C and a log mean temperature difference of 43.2 °C. The numbers
are quoted from memory, at the book's rounding.
"""

import math

import numpy as np
import pytest

from orcscreen.exchangers import (
    Profile,
    lmtd_K,
    max_flow_for_pinch,
    open_heater_bleed_fraction,
    ua_W_K,
)
from orcscreen.paths import FluidPath, Zone, composite_path
from orcscreen.states import CycleInfeasible

# Incropera et al. 6th ed., Example 11.1 (from memory)
M_OIL, CP_OIL, T_OIL_IN, T_OIL_OUT = 0.1, 2131.0, 100.0, 60.0
M_W, CP_W, T_W_IN = 0.2, 4178.0, 30.0


def _oil_cooler(n_segments: int) -> Profile:
    """The example's exchanger as a T-Q profile (Q from the cold end), constant heat capacities."""
    q = M_OIL * CP_OIL * (T_OIL_IN - T_OIL_OUT)
    Q = np.linspace(0.0, q, n_segments + 1)
    T_hot = T_OIL_OUT + Q / (M_OIL * CP_OIL) + 273.15
    T_cold = T_W_IN + Q / (M_W * CP_W) + 273.15
    return Profile(Q, T_hot, T_cold)


def test_heat_rate_and_outlet_temperature_of_the_textbook_oil_cooler():
    p = _oil_cooler(1)
    assert p.duty_W == pytest.approx(8524.0, abs=0.5)
    assert p.T_cold_K[-1] - 273.15 == pytest.approx(40.2, abs=0.05)


def test_lmtd_of_the_textbook_oil_cooler():
    p = _oil_cooler(1)
    dT = p.approach_K
    assert float(lmtd_K(dT[-1], dT[0])) == pytest.approx(43.2, abs=0.05)
    assert float(lmtd_K(dT[0], dT[-1])) == pytest.approx(43.2, abs=0.05)  # symmetric


def test_ua_of_the_textbook_oil_cooler_and_segment_independence():
    """UA = q / LMTD (the book's q over its LMTD: 197 W/K); with constant heat capacities the
    segment-wise sum of dQ/LMTD equals the single-segment value exactly (a property of the log
    mean: each segment's dQ/LMTD is its own d(ln dT) over the constant slope of dT against Q)."""
    ua1 = ua_W_K(_oil_cooler(1))
    assert ua1 == pytest.approx(8524.0 / 43.2, rel=2e-3)
    for n in (2, 7, 50):
        assert ua_W_K(_oil_cooler(n)) == pytest.approx(ua1, rel=1e-10)


def test_lmtd_of_equal_differences_is_their_value():
    assert float(lmtd_K(12.0, 12.0)) == 12.0
    assert float(lmtd_K(12.0, 12.0 * (1 + 1e-9))) == pytest.approx(12.0, rel=1e-8)


def test_ua_is_infinite_when_the_profiles_touch():
    p = Profile(np.array([0.0, 1.0]), np.array([300.0, 310.0]), np.array([300.0, 305.0]))
    assert math.isinf(ua_W_K(p))


def test_max_flow_for_pinch_is_the_energy_balance_of_the_binding_point():
    """An isothermal cold stream at 350 K (3 points) against a source of constant cp 4 kJ/(kg K),
    10 kg/s from 400 K, pinch 10 K: the bound at the cold end is m_s cp (400 - 360) / dh."""
    h = np.array([0.0, 1e5, 3e5])
    T = np.array([350.0, 350.0, 350.0])
    cp, m_s, T_in = 4000.0, 10.0, 400.0
    hs_at = cp * (T + 10.0)
    m, j = max_flow_for_pinch(h, T, 3e5, cp * T_in, hs_at, m_s)
    assert j == 0
    assert m == pytest.approx(m_s * cp * (T_in - 360.0) / 3e5, rel=1e-12)


def test_short_path_bounds_equal_the_vectorised_ones():
    """flow_bounds on a path of at most SMALL_ARRAY points (Python floats) gives the same bits as
    on a longer path holding the same points (numpy), including the no-heat-left points (inf)."""
    from orcscreen.exchangers import flow_bounds
    from orcscreen.streams import SMALL_ARRAY

    rng = np.random.default_rng(3)
    h = np.sort(rng.uniform(0.0, 4e5, size=30))
    hs_at = rng.uniform(1e5, 5e5, size=30)
    h_out = float(h[5])  # points 5.. have no heat left: inf
    long = flow_bounds(h, h_out, 6e5, hs_at, 12.0)
    for n in range(1, SMALL_ARRAY + 1):
        short = flow_bounds(h[:n], h_out, 6e5, hs_at[:n], 12.0)
        assert np.array_equal(short, long[:n])
    assert np.isinf(long[5:]).all() and np.isfinite(long[:5]).all()


def test_open_heater_balance_and_its_limits():
    y = open_heater_bleed_fraction(100e3, 2800e3, 700e3)
    # the mixing closes the energy balance: y h_bleed + (1 - y) h_feed = h_out
    assert y * 2800e3 + (1 - y) * 100e3 == pytest.approx(700e3, rel=1e-12)
    with pytest.raises(CycleInfeasible):
        open_heater_bleed_fraction(100e3, 600e3, 700e3)  # bled vapour colder than the outlet


def _linear_path(T0, T1, cp, name, h0=0.0, n=4):
    T = np.linspace(T0, T1, n + 1)
    return FluidPath(h0 + cp * (T - T0), T, (name,) * (n + 1), (Zone(0, n, name, lambda t: h0 + cp * (t - T0)),))


def test_composite_of_two_streams_adds_their_heat_capacities():
    """Heat cascade of pinch analysis (Kemp, *Pinch Analysis and Process Integration*, 2nd ed.,
    2007, ch. 2): where two cold streams overlap in temperature their heat capacities add."""
    a = _linear_path(300.0, 400.0, 1000.0, "a")
    b = _linear_path(350.0, 380.0, 3000.0, "b", h0=5e4)
    c = composite_path((a, b), (1.0, 1.0), ("a", "b"))
    assert c.h[0] == pytest.approx(5e4)  # both inlets
    assert c.h[-1] == pytest.approx(1e5 + 5e4 + 9e4)  # both outlets
    assert np.all(np.diff(c.T_K) >= 0.0) and np.all(np.diff(c.h) >= 0.0)
    i = int(np.searchsorted(c.T_K, 360.0))
    # between 350 and 380 K the slope is (1000 + 3000) J/(kg K); below and above it is 1000
    k350, k380 = list(c.T_K).index(350.0), list(c.T_K).index(380.0)
    assert (c.h[k380] - c.h[k350]) / 30.0 == pytest.approx(4000.0, rel=1e-12)
    assert i > 0
    z = c.zone_at(k350)
    assert z is not None and z.h_of_T(365.0) == pytest.approx(c.h[k350] + 4000.0 * 15.0, rel=1e-12)
