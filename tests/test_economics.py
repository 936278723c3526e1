"""Economics of a designed plant and the sink's fans and pumps, on real cases of the engine.

Checked against: the definitions of the capital recovery factor and the levelised cost (a
second reference: numpy-financial's pmt), the ideal-gas density of air (CoolProp's "Air", a
reference equation of state), the hydraulic power of a pump (m g H), and conservation (the
components add up to the total). Cost correlations themselves: tests/test_costs.py.
"""

from __future__ import annotations

import math

import pytest

from orcscreen.api import run_case
from orcscreen.study import study_from_dict

SOURCE = {"kind": "water", "inlet_temperature_C": 140.0, "mass_flow_kg_s": 20.0}


def _row(sink=None, economics=None, fluid="R245fa", layout="basic", source=None, **sections) -> dict:
    raw = {"source": source or SOURCE, "sink": sink or {"kind": "water"}, "fluids": {"include": [fluid]},
           "cycle": {"layouts": [layout]}, **sections}
    if economics is not None:
        raw["economics"] = economics
    case = next(iter(study_from_dict(raw).cases()))
    row = run_case(case)["row"]
    assert row["status"] == "ok", row["reason"]
    return row


def test_lcoe_is_the_annualised_cost_over_the_annual_energy():
    """LCOE = (CRF I + O&M) / E with CRF = i (1+i)^n / ((1+i)^n - 1) (standard annuity; the CRF
    also from numpy-financial: -pmt(i, n, 1)), E = net power x full-load hours."""
    npf = pytest.importorskip("numpy_financial")
    econ = {"discount_rate": 0.06, "lifetime_years": 20, "om_fraction": 0.025, "full_load_hours": 8000.0,
            "electricity_price_per_MWh": 90.0}
    row = _row(economics=econ)
    crf = float(-npf.pmt(0.06, 20, 1.0))
    assert crf == pytest.approx(0.06 * 1.06 ** 20 / (1.06 ** 20 - 1.0), rel=1e-12)
    invest = row["investment_total"]
    energy = row["net_power_kW"] * 8000.0 / 1e3
    assert row["annual_energy_MWh"] == pytest.approx(energy, rel=1e-12)
    assert row["lcoe_per_MWh"] == pytest.approx((crf * invest + 0.025 * invest) / energy, rel=1e-12)
    # the net present value at the price: the yearly margin over the annuity factor, less the investment
    npv = float(npf.pv(0.06, 20, -(90.0 * energy - 0.025 * invest))) - invest
    assert row["net_present_value"] == pytest.approx(npv, rel=1e-9)
    assert row["specific_investment_per_kW"] == pytest.approx(invest / row["net_power_kW"], rel=1e-12)


def test_components_add_up_to_the_total_and_cost_rises_with_size():
    """Conservation: the investment columns sum to investment_total. Larger source flow -> a
    larger plant -> a larger investment (every component of the default model rises with its
    UA, power or size parameter; Astolfi et al. 2014)."""
    rows = [_row(source={**SOURCE, "mass_flow_kg_s": m}, layout="recuperated") for m in (10.0, 20.0, 40.0)]
    for row in rows:
        parts = [row[k] for k in row if k.startswith("investment_") and k != "investment_total"]
        assert sum(p for p in parts if p == p) == pytest.approx(row["investment_total"], rel=1e-12)
    totals = [r["investment_total"] for r in rows]
    assert totals[0] < totals[1] < totals[2]
    # economy of scale: all exponents of the default model are below 1 and the size parameter's
    # 1.1 acts on a square root of the flow, so the specific investment falls with size
    spec = [r["specific_investment_per_kW"] for r in rows]
    assert spec[0] > spec[1] > spec[2]


def test_currency_and_cost_year_conversion():
    """The same plant in another currency and year: x rate x CEPCI(year) / CEPCI(2023) (annual
    averages 797.9 for 2023, 596.2 for 2020, as transcribed in orcscreen.costs.CEPCI)."""
    base = _row()
    other = _row(economics={"currency": "USD", "exchange_rates": {"EUR": 1.1}, "cost_year": 2020})
    assert other["investment_total"] == pytest.approx(base["investment_total"] * 1.1 * 596.2 / 797.9, rel=1e-12)


def test_fan_power_is_air_volume_flow_times_pressure_drop_over_efficiency():
    """Fan power = V_air dp / eta with V_air = m_air / rho(T_in, p) (fan law; the density of dry
    air from CoolProp's "Air" pseudo-pure fluid (Lemmon et al. 2000) as the reference, which the
    ideal-gas mixture matches to 0.1 % at ambient conditions)."""
    from CoolProp.CoolProp import PropsSI

    sink = {"kind": "air", "inlet_temperature_C": 25.0, "temperature_rise_K": 12.0, "fan_pressure_drop_Pa": 180.0,
            "aux_efficiency": 0.55}
    row = _row(sink=sink)
    rho = PropsSI("D", "T", 298.15, "P", 101325.0, "Air")
    expected_kW = row["sink_mass_flow_kg_s"] / rho * 180.0 / 0.55 / 1e3
    assert row["aux_power_kW"] == pytest.approx(expected_kW, rel=1e-3)


def test_cooling_water_pump_power_is_flow_times_g_times_head():
    """Pump power = m g H / eta (hydraulic power; g = 9.80665 m/s2, standard gravity)."""
    row = _row(sink={"kind": "water", "pump_head_m": 22.0, "aux_efficiency": 0.7})
    assert row["aux_power_kW"] == pytest.approx(row["sink_mass_flow_kg_s"] * 9.80665 * 22.0 / 0.7 / 1e3, rel=1e-9)


def test_a_fixed_fraction_replaces_the_fan_model():
    row = _row(sink={"kind": "air", "aux_power_per_kW_rejected": 0.012})
    assert row["aux_power_kW"] == pytest.approx(0.012 * row["heat_rejected_kW"], rel=1e-12)


def test_raising_the_fan_pressure_drop_lowers_the_net_power():
    """More fan work per kg of air costs net power, monotonically (energy balance: W_net =
    W_turbine - W_pump - W_fans, the condenser unchanged)."""
    net = [_row(sink={"kind": "air", "fan_pressure_drop_Pa": dp})["net_power_kW"] for dp in (0.0, 150.0, 300.0)]
    assert net[0] > net[1] > net[2]
    assert math.isfinite(net[2]) and net[2] > 0


def test_an_air_cooled_condenser_needs_far_more_area_than_a_water_cooled_one():
    """U of air-cooled bundles (25-50 W/(m2 K) on the finned area) against organic condensing on
    water (450-850): DiPippo, Geothermal Power Plants, Table 8.1; the areas differ by more than
    10x for the same duty class, and the basis is reported."""
    water, air = _row(), _row(sink={"kind": "air"})
    assert air["area_condenser_m2"] > 10 * water["area_condenser_m2"]
    assert (water["condenser_area_basis"], air["condenser_area_basis"]) == ("bare tube", "finned")


def test_the_area_based_model_costs_the_same_plant_differently_but_consistently():
    """The bare-module model (Turton et al.) prices in USD at CEPCI 397 (Sept. 2001) with the
    generator in EUR of 2014: with rates for both, every component is present and the total
    adds up."""
    row = _row(layout="recuperated", economics={"cost_model": "bare-module-2001", "currency": "EUR",
                                                "exchange_rates": {"USD": 0.9}})
    parts = {k: row[k] for k in row if k.startswith("investment_") and k != "investment_total"}
    assert all(parts[f"investment_{c}"] > 0 for c in ("evaporator", "condenser", "recuperator", "pump", "turbine",
                                                       "generator"))
    assert sum(parts.values()) == pytest.approx(row["investment_total"], rel=1e-12)
