"""Component costs, cost index, annuity and the plant-cost models (orcscreen/costs.py).

Sources, named again beside each check:
  [Turton] Turton, Bailie, Whiting, Shaeiwitz, Bhattacharyya, *Analysis, Synthesis, and Design of
      Chemical Processes*, 4th ed. 2012, Appendix A: log10 Cp0 = K1 + K2 log10 A + K3 (log10 A)^2,
      log10 F_P = C1 + C2 log10 P + C3 (log10 P)^2, C_BM = Cp0 (B1 + B2 F_M F_P) or Cp0 F_BM
      (coefficients as transcribed in secondary copies, ../shared/REFERENCES.md section 3).
  [Astolfi] Astolfi, Romano, Bombarda, Macchi, Energy 66 (2014) 435 (Part B): ORC cost functions
      in EUR of 2014 (as transcribed in a secondary copy).
  [CEPCI] Chemical Engineering Plant Cost Index, annual averages (secondary copies).
  [annuity] CRF = i (1+i)^n / ((1+i)^n - 1), LCOE = (CRF I + O&M) / E (standard formulas).
Every expected value below is worked by hand from the published equation and coefficients (the
arithmetic is in the comment), at the source's precision: Turton's coefficients have four
decimals, so exponents are compared to 5e-5 and costs to 1e-3 relative.
"""

import dataclasses
import math

import numpy as np
import pytest

from orcscreen.costs import (
    CEPCI,
    COST_MODELS,
    EXCHANGER_KINDS,
    TURTON_BASE_CEPCI,
    TURTON_EQUIPMENT,
    TURTON_TURBINE_BARE_MODULE_FACTORS,
    CostInputError,
    ExchangerForCost,
    PlantForCost,
    astolfi_generator_cost,
    astolfi_primary_exchanger_cost,
    astolfi_pump_cost,
    astolfi_recuperator_cost,
    astolfi_turbine_cost,
    bare_module_cost,
    capital_recovery_factor,
    index_ratio,
    levelised_cost,
    material_factor,
    pressure_factor,
    purchased_cost,
    units_needed,
)

TURTON_REL = 1e-3      # costs from four-decimal coefficients [Turton]
TURTON_LOG_ABS = 5e-5  # half a unit of the coefficients' last decimal, on log10 Cp0


# -- Turton: purchased cost --------------------------------------------------------------------------

# (equipment, capacity in SI [m2 or W], log10 Cp0 summed by hand, Cp0 = 10^that [USD, CEPCI 397])
TURTON_BY_HAND = [
    # A = 100 m2, log10 A = 2: 4.3247 - 0.3030*2 + 0.1634*4 = 4.3247 - 0.6060 + 0.6536 = 4.3723
    ("fixed tube sheet", 100.0, 4.3723, 23_567),
    # A = 100 m2: 4.8306 - 0.8509*2 + 0.3187*4 = 4.8306 - 1.7018 + 1.2748 = 4.4036
    ("floating head", 100.0, 4.4036, 25_328),
    # A = 10 m2, log10 A = 1: 4.4646 - 0.5277 + 0.3955 = 4.3324
    ("kettle", 10.0, 4.3324, 21_498),
    # A = 10 m2: 3.3444 + 0.2745 - 0.0472 = 3.5717
    ("double pipe", 10.0, 3.5717, 3_729.9),
    # bare-tube A = 1000 m2, log10 A = 3: 4.0336 + 0.2341*3 + 0.0497*9 = 4.0336 + 0.7023 + 0.4473 = 5.1832
    ("air cooler", 1000.0, 5.1832, 152_475),
    # A = 100 m2: 4.6656 - 0.1557*2 + 0.1547*4 = 4.6656 - 0.3114 + 0.6188 = 4.9730
    ("flat plate", 100.0, 4.9730, 93_972),
    # shaft 10 kW, log10 10 = 1: 3.3892 + 0.0536 + 0.1538 = 3.5966
    ("centrifugal pump", 10e3, 3.5966, 3_950.0),
    # fluid power 1000 kW, log10 = 3: 2.7051 + 1.4398*3 - 0.1776*9 = 2.7051 + 4.3194 - 1.5984 = 5.4261
    ("axial turbine", 1e6, 5.4261, 266_747),
    # 1000 kW: 2.2476 + 1.4965*3 - 0.1618*9 = 2.2476 + 4.4895 - 1.4562 = 5.2809
    ("radial turbine", 1e6, 5.2809, 190_941),
]


@pytest.mark.parametrize("name, capacity, log_cp, cp", TURTON_BY_HAND, ids=[r[0] for r in TURTON_BY_HAND])
def test_turton_purchased_cost_by_hand(name, capacity, log_cp, cp):
    """[Turton] Appendix A purchased cost of the base equipment, worked by hand (table above)."""
    cost = purchased_cost(TURTON_EQUIPMENT[name], capacity)
    assert math.log10(cost.value) == pytest.approx(log_cp, abs=TURTON_LOG_ABS)
    assert cost.value == pytest.approx(cp, rel=TURTON_REL)
    assert cost.warnings == ()  # inside the fitted range
    assert (cost.currency, cost.cost_year, cost.base_index) == ("USD", 2001, 397.0)


# -- Turton: pressure, material and bare-module factors ---------------------------------------------------

def test_turton_bare_module_floating_head_with_pressure_and_material_by_hand():
    """[Turton] floating head, 100 m2, 100 barg, CS shell / SS tubes:
    log10 F_P = 0.03881 - 0.11272*2 + 0.08183*4 = 0.03881 - 0.22544 + 0.32732 = 0.14069, F_P = 1.3826;
    F_M = 1.81; C_BM = 25,328 (1.63 + 1.66*1.81*1.3826) = 25,328 * 5.7841 = 146,499 USD."""
    eq = TURTON_EQUIPMENT["floating head"]
    f_p, warnings = pressure_factor(eq, 100.0)
    assert math.log10(f_p) == pytest.approx(0.14069, abs=5e-6) and warnings == ()
    f_m = material_factor(eq, "CS/SS")
    assert f_m == 1.81
    cost = bare_module_cost(eq, 100.0, pressure_barg=100.0, material_factor=f_m)
    assert cost.value == pytest.approx(146_499, rel=TURTON_REL)
    assert cost.warnings == ()


def test_turton_bare_module_pump_with_pressure_and_material_by_hand():
    """[Turton] centrifugal pump, 10 kW shaft, 100 barg, stainless steel:
    log10 F_P = -0.3935 + 0.3957*2 - 0.00226*4 = -0.3935 + 0.7914 - 0.00904 = 0.38886, F_P = 2.4483;
    F_M = 2.3; C_BM = 3,950.0 (1.89 + 1.35*2.3*2.4483) = 3,950.0 * 9.4920 = 37,493 USD."""
    eq = TURTON_EQUIPMENT["centrifugal pump"]
    cost = bare_module_cost(eq, 10e3, pressure_barg=100.0, material_factor=material_factor(eq, "SS"))
    assert cost.value == pytest.approx(37_493, rel=TURTON_REL)


def test_turton_pressure_factor_is_one_below_the_range():
    """[Turton] F_P = 1 below the pressure range (shell and tube: 5 barg): at 3 barg
    C_BM = Cp0 (1.63 + 1.66) = 3.29 * 25,328 = 83,329 USD for 100 m2 of floating head."""
    eq = TURTON_EQUIPMENT["floating head"]
    assert pressure_factor(eq, 3.0) == (1.0, ())
    assert pressure_factor(eq, -0.5) == (1.0, ())  # vacuum side: no pressure correction
    assert bare_module_cost(eq, 100.0, pressure_barg=3.0).value == pytest.approx(83_329, rel=TURTON_REL)


@pytest.mark.parametrize("name", ["fixed tube sheet", "floating head", "kettle", "double pipe", "air cooler",
                                  "centrifugal pump"])
def test_turton_pressure_factor_meets_one_where_its_range_starts(name):
    """[Turton] each pressure fit starts from F_P = 1 at the low end of its range (a property of the
    published coefficients: e.g. shell and tube at 5 barg, log10 5 = 0.69897:
    0.03881 - 0.11272*0.69897 + 0.08183*0.48856 = 0.03881 - 0.07879 + 0.03998 = 0.00000); checks the
    transcription of C1-C3, including the lines marked from memory (double pipe, air cooler)."""
    eq = TURTON_EQUIPMENT[name]
    lo, _ = eq.pressure_range_barg
    f_p, _ = pressure_factor(eq, lo)
    assert f_p == pytest.approx(1.0, abs=2e-4)


def test_turton_pressure_above_range_warns_with_the_range():
    """[Turton] shell-and-tube pressure fit ends at 140 barg: above, the fit is extrapolated with a warning."""
    f_p, warnings = pressure_factor(TURTON_EQUIPMENT["floating head"], 160.0)
    assert f_p > pressure_factor(TURTON_EQUIPMENT["floating head"], 140.0)[0]
    assert len(warnings) == 1 and "160 barg" in warnings[0] and "5-140 barg" in warnings[0]


def test_turton_turbine_bare_module_factor():
    """[Turton] turbines: C_BM = Cp0 F_BM, F_BM 3.5 (CS), 6.1 (SS), 11.7 (Ni alloy); at 1000 kW,
    Cp0 = 10^5.4261 = 266,747 USD (by hand above), so C_BM = 3.5 * 266,747 = 933,615 USD (CS) and
    6.1 * 266,747 = 1,627,157 USD (SS)."""
    eq = TURTON_EQUIPMENT["axial turbine"]
    assert bare_module_cost(eq, 1e6).value == pytest.approx(933_615, rel=TURTON_REL)
    ss = dataclasses.replace(eq, F_BM=TURTON_TURBINE_BARE_MODULE_FACTORS["SS"])
    assert bare_module_cost(ss, 1e6).value == pytest.approx(1_627_157, rel=TURTON_REL)
    with pytest.raises(CostInputError, match="F_BM"):
        bare_module_cost(eq, 1e6, material_factor=2.0)
    with pytest.raises(CostInputError, match="F_BM"):
        material_factor(eq, "SS")


def test_material_factors_from_the_table_and_unknown_material():
    """[Turton] material factors as transcribed (REFERENCES section 3): plate SS 2.45, air-cooler Al 1.42,
    shell-and-tube SS/SS 2.73, pump CS 1.6; an unknown material names the ones allowed."""
    assert material_factor(TURTON_EQUIPMENT["flat plate"], "SS") == 2.45
    assert material_factor(TURTON_EQUIPMENT["air cooler"], "Al") == 1.42
    assert material_factor(TURTON_EQUIPMENT["fixed tube sheet"], "SS/SS") == 2.73
    assert material_factor(TURTON_EQUIPMENT["centrifugal pump"], "CS") == 1.6
    with pytest.raises(CostInputError, match=r"'titanium'.*cast iron, CS, SS"):
        material_factor(TURTON_EQUIPMENT["centrifugal pump"], "titanium")


# -- Turton: ranges, warnings, parallel units ---------------------------------------------------------------

def test_turton_below_range_is_evaluated_not_clamped_and_warns():
    """[Turton] air cooler fitted for 10-10000 m2; at 4.2 m2 (log10 4.2 = 0.62325):
    4.0336 + 0.2341*0.62325 + 0.0497*0.38844 = 4.0336 + 0.14590 + 0.01931 = 4.19881 -> 15,805 USD."""
    cost = purchased_cost(TURTON_EQUIPMENT["air cooler"], 4.2)
    assert cost.value == pytest.approx(15_805, rel=TURTON_REL)
    assert len(cost.warnings) == 1
    assert "air cooler area 4.2 m2 is outside Turton's range 10-10000 m2" in cost.warnings[0]


def test_turton_above_range_as_parallel_units():
    """[Turton] practice for a capacity above the largest unit: n = ceil(A / A_max) equal units.
    Air cooler 25,000 m2 -> 3 units of 8,333.3 m2 (log10 = 3.92082, squared 15.37282):
    4.0336 + 0.2341*3.92082 + 0.0497*15.37282 = 4.0336 + 0.91786 + 0.76403 = 5.71549 -> 519,389 USD
    each, 1,558,167 USD for three."""
    eq = TURTON_EQUIPMENT["air cooler"]
    assert [units_needed(eq, a) for a in (4.2, 10_000.0, 10_001.0, 25_000.0)] == [1, 1, 2, 3]
    split = purchased_cost(eq, 25_000.0, parallel_units=True)
    assert split.value == pytest.approx(1_558_167, rel=TURTON_REL)
    assert "3 equal parallel units" in split.warnings[0] and "10-10000 m2" in split.warnings[0]
    single = purchased_cost(eq, 25_000.0)  # the default: one unit, extrapolated, with the warning
    assert single.value != pytest.approx(split.value, rel=1e-2)
    assert "outside Turton's range 10-10000 m2" in single.warnings[0]
    # power units: the axial turbine's range is 100-4000 kW and the input is in W
    assert units_needed(TURTON_EQUIPMENT["axial turbine"], 9e6) == 3
    assert "axial turbine power 50 kW" in purchased_cost(TURTON_EQUIPMENT["axial turbine"], 50e3).warnings[0]


def test_floating_head_fit_has_its_minimum_inside_the_range():
    """[Turton] a property of the published floating-head fit (K2 < 0 < K3): d log Cp0 / d log A = 0 at
    log10 A = 0.8509 / (2*0.3187) = 1.33495, A = 21.6 m2, inside the 10-1000 m2 range; the cost dips
    there by about 8 % (10^4.2984 = 19,879 USD at 10 m2, 10^4.2626 = 18,308 USD at 21.6 m2). The
    monotonic check below therefore starts at 22 m2 for this line."""
    eq = TURTON_EQUIPMENT["floating head"]
    at_10, at_min, at_30 = (purchased_cost(eq, a).value for a in (10.0, 21.6, 30.0))
    assert at_10 == pytest.approx(19_879, rel=TURTON_REL)
    assert at_min == pytest.approx(18_308, rel=TURTON_REL)
    assert at_min < at_10 and at_min < at_30


@pytest.mark.parametrize("name", list(TURTON_EQUIPMENT))
def test_turton_cost_rises_with_capacity_inside_its_range(name):
    """[Turton] purchased and bare-module cost rise with area or power over a grid inside each range
    (from 22 m2 for the floating head, see above)."""
    eq = TURTON_EQUIPMENT[name]
    si = 1.0 if eq.capacity_unit == "m2" else 1e3
    lo = 22.0 if name == "floating head" else eq.capacity_min
    grid = np.geomspace(lo, eq.capacity_max, 40) * si
    purchased = [purchased_cost(eq, a).value for a in grid]
    bare = [bare_module_cost(eq, a).value for a in grid]
    assert np.all(np.diff(purchased) > 0) and np.all(np.diff(bare) > 0)


@pytest.mark.parametrize("name", ["floating head", "centrifugal pump"])
def test_turton_cost_rises_with_pressure_inside_the_range(name):
    """[Turton] the pressure factor rises over its range (shell and tube 5-140 barg, pumps 10-100 barg)."""
    eq = TURTON_EQUIPMENT[name]
    lo, hi = eq.pressure_range_barg
    cap = 100.0 if eq.capacity_unit == "m2" else 10e3
    costs = [bare_module_cost(eq, cap, pressure_barg=p).value for p in np.linspace(lo + 1.0, hi, 30)]
    assert np.all(np.diff(costs) > 0)


# -- Astolfi et al. 2014 -------------------------------------------------------------------------------

def test_astolfi_functions_at_their_reference_sizes():
    """[Astolfi] each function returns its reference cost at its reference size: turbine 1.23 MEUR at
    2 stages and SP 0.18 m; generator 0.2 MEUR at 5 MW; primary exchangers 1.5 MEUR at 4000 kW/K;
    recuperator 0.26 MEUR at 650 kW/K; pump 14 kEUR at 200 kW."""
    assert astolfi_turbine_cost(2, 0.18).value == pytest.approx(1.23e6, rel=1e-12)
    assert astolfi_generator_cost(5e6).value == pytest.approx(0.2e6, rel=1e-12)
    assert astolfi_primary_exchanger_cost(4e6).value == pytest.approx(1.5e6, rel=1e-12)
    assert astolfi_recuperator_cost(6.5e5).value == pytest.approx(0.26e6, rel=1e-12)
    cost = astolfi_pump_cost(2e5)
    assert cost.value == pytest.approx(14e3, rel=1e-12)
    assert (cost.currency, cost.cost_year, cost.warnings) == ("EUR", 2014, ())


def test_astolfi_functions_scaled_by_hand():
    """[Astolfi] doubled sizes, by hand: turbine 4 stages, SP 0.36 m: 1.23e6 * 2^0.5 * 2^1.1 = 1.23e6 *
    2^1.6 = 1.23e6 * 3.03143 = 3.72866e6; generator 10 MW: 0.2e6 * 2^0.67 = 0.2e6 * 1.59107 = 318,215;
    primary 8000 kW/K: 1.5e6 * 2^0.9 = 1.5e6 * 1.86607 = 2.79910e6; recuperator 1300 kW/K: 0.26e6 *
    1.86607 = 485,178; pump 400 kW: 14e3 * 1.59107 = 22,275 EUR of 2014."""
    assert astolfi_turbine_cost(4, 0.36).value == pytest.approx(3.72866e6, rel=1e-5)
    assert astolfi_generator_cost(10e6).value == pytest.approx(318_215, rel=1e-5)
    assert astolfi_primary_exchanger_cost(8e6).value == pytest.approx(2.79910e6, rel=1e-5)
    assert astolfi_recuperator_cost(1.3e6).value == pytest.approx(485_178, rel=1e-5)
    assert astolfi_pump_cost(4e5).value == pytest.approx(22_275, rel=1e-4)


def test_astolfi_costs_rise_with_size():
    """[Astolfi] every function rises with UA, power, size parameter and stage count (positive exponents)."""
    ua = np.geomspace(1e4, 1e8, 30)
    power = np.geomspace(1e3, 5e7, 30)
    sp = np.geomspace(0.02, 1.0, 30)
    for series in ([astolfi_primary_exchanger_cost(x).value for x in ua],
                   [astolfi_recuperator_cost(x).value for x in ua],
                   [astolfi_generator_cost(x).value for x in power],
                   [astolfi_pump_cost(x).value for x in power],
                   [astolfi_turbine_cost(2, x).value for x in sp],
                   [astolfi_turbine_cost(n, 0.1).value for n in (1, 2, 3, 4)]):
        assert np.all(np.diff(series) > 0)


# -- cost index ------------------------------------------------------------------------------------

def test_index_ratio_from_the_cepci_table():
    """[CEPCI] annual averages 2023 797.9, 2001 394.3: ratio 797.9 / 394.3 = 2.02359; Turton's base is
    September 2001 at 397: 797.9 / 397 = 2.00982."""
    assert index_ratio(2023, 2001) == pytest.approx(2.02359, rel=1e-5)
    assert index_ratio(2014, 2014) == 1.0
    assert CEPCI[2023] / TURTON_BASE_CEPCI == pytest.approx(2.00982, rel=1e-5)
    assert index_ratio(2001, 2023) == pytest.approx(1.0 / 2.02359, rel=1e-5)


def test_index_ratio_names_a_missing_year_and_the_years_available():
    with pytest.raises(CostInputError, match=r"2012.*2001, 2010, 2013, .*2023"):
        index_ratio(2012, 2001)
    with pytest.raises(CostInputError, match="1999"):
        index_ratio(2020, 1999)
    assert issubclass(CostInputError, ValueError)


# -- annuity ---------------------------------------------------------------------------------------------

def test_capital_recovery_factor_closed_form():
    """[annuity] i = 0.08, n = 20: 1.08^20 = 4.66095714; 0.08 * 4.66095714 / 3.66095714 = 0.10185220882;
    i = 0 -> 1/n; n = 1 -> 1 + i."""
    assert capital_recovery_factor(0.08, 20) == pytest.approx(0.10185220882, rel=1e-10)
    assert capital_recovery_factor(0.0, 25) == pytest.approx(1.0 / 25, rel=1e-15)
    assert capital_recovery_factor(0.05, 1) == pytest.approx(1.05, rel=1e-12)


def test_capital_recovery_factor_against_numpy_financial():
    """The annuity payment of numpy-financial (pmt of a unit present value) is the CRF."""
    npf = pytest.importorskip("numpy_financial")
    for rate, years in ((0.08, 20), (0.03, 30), (0.12, 10)):
        assert capital_recovery_factor(rate, years) == pytest.approx(-npf.pmt(rate, years, 1.0), rel=1e-12)


def test_levelised_cost_by_hand():
    """[annuity] 1,000,000 invested, 20,000 per year O&M, 8 %, 20 years, 1,000,000 kWh per year:
    (0.10185220882 * 1e6 + 2e4) / 1e6 = 0.12185220882 per kWh; no energy gives NaN."""
    assert levelised_cost(1e6, 2e4, 0.08, 20, 1e6) == pytest.approx(0.12185220882, rel=1e-10)
    assert math.isnan(levelised_cost(1e6, 2e4, 0.08, 20, 0.0))
    assert math.isnan(levelised_cost(1e6, 2e4, 0.08, 20, -5.0))


@pytest.mark.parametrize("rate, years, named", [(-0.01, 20, "-0.01"), (0.08, 0.5, "0.5"), (math.nan, 20, "nan"),
                                                (0.08, "twenty", "twenty")])
def test_capital_recovery_factor_refuses_bad_inputs(rate, years, named):
    with pytest.raises(CostInputError, match=named):
        capital_recovery_factor(rate, years)


# -- bad inputs to the correlations ----------------------------------------------------------------------

@pytest.mark.parametrize("call, named", [
    (lambda: purchased_cost(TURTON_EQUIPMENT["air cooler"], -1.0), r"air cooler area -1\.0 m2"),
    (lambda: purchased_cost(TURTON_EQUIPMENT["air cooler"], 0.0), r"air cooler area 0\.0 m2"),
    (lambda: purchased_cost(TURTON_EQUIPMENT["axial turbine"], math.nan), r"axial turbine power nan"),
    (lambda: bare_module_cost(TURTON_EQUIPMENT["kettle"], 50.0, material_factor=-2.0), r"material factor -2\.0"),
    (lambda: bare_module_cost(TURTON_EQUIPMENT["kettle"], 50.0, pressure_barg=math.inf), r"pressure.*inf"),
    (lambda: astolfi_turbine_cost(1.5, 0.1), r"stages 1\.5"),
    (lambda: astolfi_turbine_cost(0, 0.1), r"stages 0"),
    (lambda: astolfi_turbine_cost(2, -0.1), r"size parameter -0\.1"),
    (lambda: astolfi_generator_cost(-5e6), r"generator power -5000000\.0"),
    (lambda: astolfi_primary_exchanger_cost(0.0), r"UA 0\.0"),
    (lambda: astolfi_pump_cost("200 kW"), r"'200 kW'"),
])
def test_correlations_refuse_bad_inputs_naming_the_value(call, named):
    with pytest.raises(CostInputError, match=named):
        call()


# -- the plant-cost models --------------------------------------------------------------------------------

def _plant(**changes):
    """A plant of our own for the model checks (values chosen for hand arithmetic)."""
    base = dict(
        exchangers={
            "heater": ExchangerForCost("heater", ua_W_K=4e6, area_m2=100.0, max_pressure_barg=10.0),
            "condenser": ExchangerForCost("condenser", ua_W_K=8e6, area_m2=1000.0, max_pressure_barg=1.0),
            "recuperator": ExchangerForCost("recuperator", ua_W_K=6.5e5, area_m2=100.0, max_pressure_barg=3.0),
        },
        pump_shaft_W=2e5, turbine_power_W=1e6, turbine_size_parameter_m=0.18, turbine_stages=2,
        generator_power_W=5e6, fan_power_W=0.0)
    base.update(changes)
    return PlantForCost(**base)


def test_registry_of_cost_models():
    """Two models, one interface; currencies as ISO 4217 codes, Turton at CEPCI 397 of Sept. 2001
    [Turton], Astolfi in EUR of 2014 at that year's CEPCI annual average 576.1 [CEPCI]."""
    assert set(COST_MODELS) == {"turbine-by-size-2014", "bare-module-2001"}
    astolfi, turton = COST_MODELS["turbine-by-size-2014"], COST_MODELS["bare-module-2001"]
    assert (astolfi.currency, astolfi.cost_year, astolfi.base_index, astolfi.area_based) == ("EUR", 2014, 576.1, False)
    assert (turton.currency, turton.cost_year, turton.base_index, turton.area_based) == ("USD", 2001, 397.0, True)


def test_turbine_by_size_model_by_hand():
    """[Astolfi] heater UA 4000 kW/K -> 1.5 MEUR; condenser 8000 kW/K -> 1.5e6 * 2^0.9 = 2.79910 MEUR;
    recuperator 650 kW/K -> 0.26 MEUR; pump 200 kW -> 14 kEUR; turbine 2 stages, SP 0.18 m ->
    1.23 MEUR; generator 5 MW -> 0.2 MEUR; total 6.00310 MEUR of 2014."""
    parts = COST_MODELS["turbine-by-size-2014"].components(_plant())
    expected = {"heater": 1.5e6, "condenser": 2.79910e6, "recuperator": 0.26e6, "pump": 14e3, "turbine": 1.23e6,
                "generator": 0.2e6}
    assert set(parts) == set(expected)
    for key, value in expected.items():
        assert parts[key].value == pytest.approx(value, rel=1e-5), key
        assert parts[key].currency == "EUR"
    assert sum(c.value for c in parts.values()) == pytest.approx(6.00310e6, rel=1e-5)


def test_turbine_by_size_model_needs_the_size_parameter():
    with pytest.raises(CostInputError, match="size parameter"):
        COST_MODELS["turbine-by-size-2014"].components(_plant(turbine_size_parameter_m=math.nan))


def test_bare_module_model_by_hand():
    """[Turton] heater, floating head 100 m2 at 10 barg: log10 F_P = 0.03881 - 0.11272 + 0.08183 = 0.00792,
    F_P = 1.01840, C_BM = 25,328 (1.63 + 1.66*1.01840) = 84,103 USD; condenser 1000 m2 at 1 barg (below
    5 barg, F_P = 1): log10 Cp0 = 4.8306 - 0.8509*3 + 0.3187*9 = 4.8306 - 2.5527 + 2.8683 = 5.1462,
    C_BM = 3.29 * 140,023 = 460,676 USD; recuperator 100 m2 at 3 barg: 3.29 * 25,328 = 83,329 USD;
    pump 200 kW at the highest exchanger pressure 10 barg: log10 200 = 2.30103,
    log10 Cp0 = 3.3892 + 0.0536*2.30103 + 0.1538*5.29474 = 3.3892 + 0.12334 + 0.81433 = 4.32687,
    Cp0 = 21,226; log10 F_P = -0.3935 + 0.3957 - 0.00226 = -0.00006, F_P = 0.99986;
    C_BM = 21,226 (1.89 + 1.35*0.99986) = 68,768 USD; turbine 1000 kW: 3.5 * 266,747 = 933,615 USD;
    generator: [Astolfi] 0.2 MEUR of 2014, in EUR (the model lists both currencies)."""
    parts = COST_MODELS["bare-module-2001"].components(_plant())
    expected = {"heater": 84_103, "condenser": 460_676, "recuperator": 83_329, "pump": 68_768, "turbine": 933_615}
    assert set(parts) == set(expected) | {"generator"}
    for key, value in expected.items():
        assert parts[key].value == pytest.approx(value, rel=TURTON_REL), key
        assert (parts[key].currency, parts[key].base_index) == ("USD", 397.0)
    gen = parts["generator"]
    assert gen.value == pytest.approx(0.2e6, rel=1e-12)
    assert (gen.currency, gen.cost_year) == ("EUR", 2014)
    assert COST_MODELS["bare-module-2001"].currencies == ("USD", "EUR")


def test_bare_module_model_needs_areas_and_splits_large_units():
    """[Turton] the area-based model refuses an exchanger without area, naming it; an air cooler of
    30,000 m2 bare-tube area is costed as 3 parallel units, with the warning under its name."""
    no_area = {"heater": ExchangerForCost("heater", ua_W_K=4e6)}
    with pytest.raises(CostInputError, match="'heater'.*nan"):
        COST_MODELS["bare-module-2001"].components(_plant(exchangers=no_area))
    big = {"air_cooler": ExchangerForCost("air_cooler", ua_W_K=1e7, area_m2=30_000.0)}
    parts = COST_MODELS["bare-module-2001"].components(_plant(exchangers=big))
    assert parts["air_cooler"].warnings[0].startswith("air_cooler: ") and "3 equal parallel units" in parts["air_cooler"].warnings[0]


@pytest.mark.parametrize("model", list(COST_MODELS))
def test_every_model_prices_every_exchanger_kind(model):
    exchangers = {kind: ExchangerForCost(kind, ua_W_K=2e6, area_m2=200.0, max_pressure_barg=5.0) for kind in EXCHANGER_KINDS}
    parts = COST_MODELS[model].components(_plant(exchangers=exchangers, fan_power_W=3e4))
    assert set(parts) == set(EXCHANGER_KINDS) | {"pump", "turbine", "generator"}
    assert all(c.value > 0 for c in parts.values())


@pytest.mark.parametrize("model", list(COST_MODELS))
def test_model_cost_rises_with_size_and_power(model):
    """Each model's exchanger cost rises with UA (area alongside) and the turbine's with power or size."""
    m = COST_MODELS[model]
    scales = np.geomspace(1.0, 8.0, 12)
    ex = [m.components(_plant(exchangers={"heater": ExchangerForCost("heater", 4e6 * s, 100.0 * s, 10.0)}))["heater"].value
          for s in scales]
    tu = [m.components(_plant(turbine_power_W=1e6 * s, turbine_size_parameter_m=0.05 * s))["turbine"].value for s in scales]
    assert np.all(np.diff(ex) > 0) and np.all(np.diff(tu) > 0)


def test_plant_and_exchanger_refuse_bad_inputs():
    with pytest.raises(CostInputError, match=r"'evaporator'.*heater, condenser, recuperator, air_cooler"):
        ExchangerForCost("evaporator", ua_W_K=1e6)
    with pytest.raises(CostInputError, match=r"pump shaft power -1\.0"):
        _plant(pump_shaft_W=-1.0)
    with pytest.raises(CostInputError, match="'pump'"):
        _plant(exchangers={"pump": ExchangerForCost("heater", 1e6, 10.0)})
