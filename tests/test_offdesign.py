"""Off-design of a fixed design (orcscreen/offdesign.py).

Checked against: the published correlations worked by hand (Stodola's ellipse law; the
part-load efficiency of Pili et al., 5th ORC Seminar 2019, as transcribed in a secondary copy;
the Dittus-Boelter exponent 0.8, Incropera et al., eq. 8.60), conservation laws at every
off-design point (energy balance, a positive approach on an independent, finer
discretisation), and the design itself (the solver given the design condition returns it).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from orcscreen import fluids
from orcscreen import offdesign as od
from orcscreen.api import case_context
from orcscreen.cycles import LAYOUTS
from orcscreen.optimize import optimise
from orcscreen.paths import condensing_path, heating_path
from orcscreen.exchangers import heater_profile
from orcscreen.study import study_from_dict
from orcscreen.year import Bin

SOURCE = {"kind": "brine", "inlet_temperature_C": 130.0, "mass_flow_kg_s": 30.0}


def test_part_load_correlation_by_hand():
    """Pili et al. (2019): eta/eta_d = 0.248 + 1.632 a - 1.940 a^2 + 0.033 b - 1.085 b^2 + 2.112 a b.
    a = 1.1, b = 0.9: 0.248 + 1.7952 - 2.3474 + 0.0297 - 0.87885 + 2.09088 = 0.93753; x 0.85 =
    0.796901. At design (a = b = 1) the coefficients sum to 1."""
    assert sum(od.PART_LOAD_COEFFICIENTS) == pytest.approx(1.0, abs=1e-12)
    assert od.part_load_efficiency(0.85, 1.0, 1.0) == pytest.approx(0.85, rel=1e-12)
    assert od.part_load_efficiency(0.85, 1.1, 0.9) == pytest.approx(0.796901, rel=1e-6)


def test_stodola_ellipse_by_hand():
    """m = K sqrt(rho p_in (1 - (p_out/p_in)^2)). 10 kg/s, rho 50 kg/m3, 20 -> 2 bar: K =
    10 / sqrt(50 x 20e5 x 0.99) = 10 / 9949.87 = 1.005038e-3 m2; at 10 bar outlet the flow is
    K sqrt(50 x 20e5 x 0.75) = 1.005038e-3 x 8660.254 = 8.70390 kg/s."""
    K = od.stodola_constant(10.0, 50.0, 20e5, 2e5)
    assert K == pytest.approx(1.005038e-3, rel=1e-6)
    assert od.stodola_flow(K, 50.0, 20e5, 2e5) == pytest.approx(10.0, rel=1e-12)
    assert od.stodola_flow(K, 50.0, 20e5, 10e5) == pytest.approx(8.70390, rel=1e-5)
    assert od.stodola_flow(K, 50.0, 20e5, 20e5) == 0.0


def test_zone_coefficients_scale_with_the_flows():
    """Equal resistances at design, single-phase films ~ m^0.8 (Dittus-Boelter), a phase-change
    film held: half the source flow on an evaporation zone gives U_d 2 / (1 + 2^0.8) = 0.729627 U_d;
    both flows at design give U_d."""
    assert od.scaled_U(1000.0, "preheating", 1.0, 1.0) == pytest.approx(1000.0)
    assert od.scaled_U(1000.0, "evaporation", 1.0, 0.5) == pytest.approx(1000.0 * 2 / (1 + 2 ** 0.8), rel=1e-12)
    assert od.scaled_U(1000.0, "preheating", 2.0, 2.0) == pytest.approx(1000.0 * 2 ** 0.8, rel=1e-12)


def _design(sink, fluid="R245fa", layout="basic", source=None, **sections):
    raw = {"source": source or SOURCE, "sink": sink, "fluids": {"include": [fluid]}, "cycle": {"layouts": [layout]},
           **sections}
    case = next(iter(study_from_dict(raw).cases()))
    ctx = case_context(case, fluids.get_info(case.fluid))
    opt = optimise(LAYOUTS[layout], ctx)
    assert not isinstance(opt, tuple), opt
    return LAYOUTS[layout], ctx, opt.cycle, od.hardware_of(opt.cycle, ctx)


@pytest.mark.parametrize("layout", ["basic", "recuperated"])
def test_the_design_condition_returns_the_design(layout):
    L, ctx, r, hw = _design({"kind": "air", "inlet_temperature_C": 14.0}, layout=layout)
    p = od.operating_point(L, ctx, hw, ctx.sink.T_in_K)
    assert p.running, p.reason
    assert p.W_net_W == pytest.approx(r.W_net_W, rel=1e-9)
    assert (p.T_evap_K, p.T_cond_K) == pytest.approx((r.T_evap_K, r.T_cond_K), abs=1e-6)


def test_a_year_at_the_design_temperature_gives_design_power_times_hours():
    L, ctx, r, hw = _design({"kind": "water", "inlet_temperature_C": 20.0})
    year = od.annual_energy(L, ctx, hw, [Bin(20.0, 8760.0)], r.W_net_W)
    assert year.energy_MWh == pytest.approx(r.W_net_W * 8760.0 / 1e6, rel=1e-3)
    assert year.capacity_factor == pytest.approx(1.0, rel=1e-3) and year.hours_not_running == 0.0


@pytest.fixture(scope="module")
def air_points():
    L, ctx, r, hw = _design({"kind": "air", "inlet_temperature_C": 14.0})
    out, guess = [], None
    for T in np.arange(14.0, 36.0, 3.0):
        p = od.operating_point(L, ctx, hw, T + 273.15, guess=guess)
        assert p.running, (T, p.reason)
        guess = (p.T_evap_K, p.T_cond_K)
        out.append((T, p))
    return ctx, out


def test_an_air_cooled_plant_loses_power_as_the_air_warms_above_design(air_points):
    """Above the design temperature the condensing temperature rises with the air and the net
    power falls monotonically (NREL/TP-5500-58024, 2013: air-cooled plants lose up to half their
    output in hot weather); here about 1.3-3 % per K."""
    _, points = air_points
    W = [p.W_net_W for _, p in points]
    Tc = [p.T_cond_K for _, p in points]
    assert all(a > b for a, b in zip(W, W[1:]))
    assert all(a < b for a, b in zip(Tc, Tc[1:]))
    assert 0.3 < W[-1] / W[0] < 0.9


def test_energy_and_pinch_hold_at_every_off_design_point(air_points):
    """Energy balance Q_in + W_pump = Q_out + W_turbine to 1e-9; the evaporator's working fluid
    below the source and the condenser's above the sink on an independent 200-segment path."""
    ctx, points = air_points
    fluid = ctx.fluid
    for T, p in points:
        r = p.result
        assert r.Q_in_W + r.W_pump_W == pytest.approx(r.Q_out_W + r.W_turbine_W, rel=1e-9)
        st = r.states
        sat_e, sat_c = fluid.sat_T(p.T_evap_K), fluid.sat_T(p.T_cond_K)
        fine_e = heating_path(fluid, sat_e, st["2"], st["3"], 200, True, zones=False)
        source = ctx.source
        prof = heater_profile(fine_e, p.m_wf_kg_s, st["3"].h, source)
        assert prof.min_approach_K > 0.0, T
        fine_c = condensing_path(fluid, sat_c, st["1"], st["4"], 200, True)
        T_air = T + 273.15
        assert np.min(fine_c.T_K) > T_air, T
        assert p.profiles["condenser"].min_approach_K > 0.0


@pytest.mark.parametrize("layout", ["bleed-regenerative", "reheat"])
def test_a_turbine_of_two_sections_follows_a_law_per_section(layout):
    """Bleed and reheat split the turbine at a middle pressure, which slides off design: the
    first section passes the whole flow from 3 to the middle pressure, the second what reaches
    it (the flow left by the open heater; the reheated flow) to the condenser, each by its own
    Stodola constant from the design (checked here from the states alone, by hand). The design
    condition returns the design; energy closes and both exchangers keep a positive approach."""
    L, ctx, r, hw = _design({"kind": "air", "inlet_temperature_C": 14.0}, layout=layout)
    p = od.operating_point(L, ctx, hw, ctx.sink.T_in_K)
    assert p.running and p.W_net_W == pytest.approx(r.W_net_W, rel=1e-9)
    mid = L.hot_side.lp_inlet
    st_d = r.states
    m_lp_d = r.Q_out_W / (st_d["4"].h - st_d["1"].h)
    K_hp = r.m_wf_kg_s / np.sqrt(st_d["3"].p_Pa / st_d["3"].v * (1 - (st_d[mid].p_Pa / st_d["3"].p_Pa) ** 2))
    K_lp = m_lp_d / np.sqrt(st_d[mid].p_Pa / st_d[mid].v * (1 - (r.p_cond_Pa / st_d[mid].p_Pa) ** 2))
    for T in (6.0, 22.0):
        p = od.operating_point(L, ctx, hw, T + 273.15)
        assert p.running, (T, p.reason)
        st = p.result.states
        m_lp = p.result.Q_out_W / (st["4"].h - st["1"].h)
        p_cond = ctx.fluid.sat_T(p.T_cond_K).p_Pa
        assert p.m_wf_kg_s == pytest.approx(
            K_hp * np.sqrt(st["3"].p_Pa / st["3"].v * (1 - (st[mid].p_Pa / st["3"].p_Pa) ** 2)), rel=1e-9)
        assert m_lp == pytest.approx(K_lp * np.sqrt(st[mid].p_Pa / st[mid].v * (1 - (p_cond / st[mid].p_Pa) ** 2)),
                                     rel=1e-5)
        assert st[mid].p_Pa != pytest.approx(st_d[mid].p_Pa, rel=1e-3)  # the middle pressure slid
        _closes(p)


# -- a year in the study -------------------------------------------------------------------------

def _year_study(tmp_path, csv_text: str, **extra) -> dict:
    (tmp_path / "year.csv").write_text(csv_text, encoding="utf-8")
    study = {"source": SOURCE, "sink": {"kind": "air", "temperature_rise_K": 12.0},
             "fluids": {"include": ["R245fa", "IsoButane"]}, "cycle": {"layouts": ["basic"]},
             "year": {"file": "year.csv"}, **extra}
    return study


def _load(tmp_path, study: dict):
    """The study as if read from tmp_path/study.toml (the year file resolves beside it)."""
    return study_from_dict(study, origin=str(tmp_path / "study.toml"))


def test_a_year_held_at_one_temperature_gives_design_power_times_hours_in_a_study(tmp_path):
    """Through the study: one bin of 8,760 h at 14 °C; the design sink temperature defaults to the
    year's mean (14 °C), so the year's energy is the design's net power x 8,760 h (to 0.1 %),
    the capacity factor 1 and no hour off."""
    from orcscreen.api import run_case

    study = _load(tmp_path, _year_study(tmp_path, "sink_temperature_C,hours\n14,8760\n"))
    assert study.sink.inlet_temperature_C == pytest.approx(14.0)
    for case in study.cases():
        row = run_case(case)["row"]
        assert row["status"] == "ok", row["reason"]
        assert row["annual_energy_MWh"] == pytest.approx(row["net_power_kW"] * 8760 / 1e3, rel=1e-3)
        assert row["capacity_factor"] == pytest.approx(1.0, rel=1e-3) and row["hours_not_running"] == 0


def test_the_year_sums_its_bins_and_the_design_temperature_is_settled(tmp_path):
    """Two bins, 10 and 20 °C, 4,000 h each; design temperature given as 15 °C: the energy is
    the sum of the two operating points' power x hours (checked against offdesign directly),
    and the hot bin gives less power than the cold one."""
    from orcscreen.api import run_case

    study = _load(tmp_path, _year_study(tmp_path, "sink_temperature_C,hours\n10,4000\n20,4000\n",
                                        year={"file": "year.csv", "design_sink_temperature_C": 15.0}))
    assert study.sink.inlet_temperature_C == 15.0
    case = next(iter(study.cases()))
    out = run_case(case)
    year = out["detail"]["year"]
    assert year["sink_temperature_C"] == [10.0, 20.0]
    W = year["net_power_kW"]
    assert W[0] > W[1] > 0
    assert out["row"]["annual_energy_MWh"] == pytest.approx((W[0] + W[1]) * 4000 / 1e3, rel=1e-9)
    ctx = case_context(case, fluids.get_info(case.fluid))
    opt = optimise(LAYOUTS["basic"], ctx)
    hw = od.hardware_of(opt.cycle, ctx)
    p = od.operating_point(LAYOUTS["basic"], ctx, hw, 283.15)
    assert p.W_net_W / 1e3 == pytest.approx(W[0], rel=1e-6)


def test_bins_beyond_the_turbine_correlation_stop_and_the_design_stands():
    """A heavy alkane whose outlet volume flow swings far in cold air: the part-load correlation
    leaves its range there, those bins do not run, with the reason, and the case keeps its design
    result and the rest of its year (nothing computed is lost)."""
    import tomllib
    from pathlib import Path

    from orcscreen.api import run_case

    path = Path(__file__).resolve().parent.parent / "studies" / "air-cooled-year.toml"
    raw = tomllib.loads(path.read_text(encoding="utf-8"))
    raw["fluids"] = {"include": ["n-Decane"]}
    raw["cycle"] = {"layouts": ["basic"]}
    row = run_case(next(iter(study_from_dict(raw, origin=str(path)).cases())))["row"]
    assert row["status"] == "ok" and row["net_power_kW"] > 0
    assert 0 < row["hours_not_running"] < 8760
    assert row["annual_energy_MWh"] > 0
    assert "not running" in row["warnings"] and "part-load efficiency" in row["warnings"]


def test_a_wet_expansion_is_answered_with_superheat():
    """R134a (a wet fluid) designed with a saturated turbine inlet just at its outlet-quality limit:
    in warmer air the sliding evaporation pressure rises and the expansion would end wetter
    than the limit; the plant answers with just enough superheat (the feed pump slows), so the point
    runs with the outlet quality at its limit (common practice of ORC control), the energy
    balance still closing."""
    q_min = 0.969  # a strict limit, so that this design sits on it (the default 0.9 binds nearer the critical point)
    L, ctx, r, hw = _design({"kind": "air", "inlet_temperature_C": 14.0}, fluid="R134a",
                            source={**SOURCE, "inlet_temperature_C": 120.0},
                            limits={"min_turbine_outlet_quality": q_min})
    assert hw.hot_design == 0.0 and q_min <= r.states["4"].q < q_min + 1e-3  # just dry enough at design
    p = od.operating_point(L, ctx, hw, 20.0 + 273.15)
    assert p.running, p.reason
    assert p.superheat_K > 0.0
    assert p.result.states["4"].q == pytest.approx(ctx.settings.min_turbine_outlet_quality, abs=1e-5)
    res = p.result
    assert res.Q_in_W + res.W_pump_W == pytest.approx(res.Q_out_W + res.W_turbine_W, rel=1e-9)


def test_the_source_may_change_bin_by_bin(tmp_path):
    """A year whose bins also give the source's temperature and flow: at one sink temperature, a
    hotter source and a larger flow give more power than the design's source (more heat through
    the same hardware), and a bin with the study's source reproduces the design."""
    from orcscreen.api import run_case

    csv_text = ("sink_temperature_C,hours,source_temperature_C,source_mass_flow_kg_s\n"
                "14,2000,,\n14,2000,140,\n14,2000,,36\n")
    study = _load(tmp_path, _year_study(tmp_path, csv_text, year={"file": "year.csv",
                                                                   "design_sink_temperature_C": 14.0}))
    out = run_case(next(iter(study.cases())))
    year = out["detail"]["year"]
    assert len(year["net_power_kW"]) == 3 and all(w > 0 for w in year["net_power_kW"])
    design = out["row"]["net_power_kW"]
    powers = sorted(year["net_power_kW"])
    assert powers[0] == pytest.approx(design, rel=1e-6)  # the study's source: the design point
    assert powers[1] > design and powers[2] > design  # hotter, or more flow: more power


# --------------------------------------------------------------------------- an operator's answers
AIR_YEAR = {"source": {**SOURCE, "pressure_bar": 10.0}, "exchangers": {"pinch_evaporator_K": 6.0, "pinch_condenser_K": 8.0},
            "machines": {"generator_efficiency": 0.96, "motor_efficiency": 0.93}}
AIR = {"kind": "air", "inlet_temperature_C": 14.0, "temperature_rise_K": 12.0}


def _air_design(fluid, source=None):
    return _design(AIR, fluid=fluid, source=source or AIR_YEAR["source"],
                   **{k: v for k, v in AIR_YEAR.items() if k != "source"})


def _closes(p):
    r = p.result
    assert r.Q_in_W + r.W_pump_W == pytest.approx(r.Q_out_W + r.W_turbine_W, rel=1e-9)
    assert p.profiles["evaporator"].min_approach_K > 0.0 and p.profiles["condenser"].min_approach_K > 0.0


def test_the_pressure_limit_is_held_with_less_flow():
    """R134a designed just below its pressure limit (0.9 p_crit by default): in 30 °C air the
    sliding pressure the turbine needs would pass the limit (shown by the same hardware with the
    limit lifted), so the plant holds the evaporation pressure at the limit with less flow and
    more superheat (the feed pump slows; orcscreen.controls). Energy closes, both exchangers keep
    a positive approach."""
    L, ctx, r, hw = _air_design("R134a")
    p_max = ctx.settings.max_evaporation_pressure_Pa(ctx.fluid)
    assert r.states["3"].p_Pa < p_max
    free = dataclasses.replace(ctx, settings=dataclasses.replace(ctx.settings, max_reduced_pressure=0.99))
    sliding = od.operating_point(L, free, hw, 30.0 + 273.15)
    assert sliding.running and sliding.result.states["3"].p_Pa > p_max * 1.001
    p = od.operating_point(L, ctx, hw, 30.0 + 273.15)
    assert p.running, p.reason
    assert "pressure held" in p.actions
    assert p.result.states["3"].p_Pa == pytest.approx(p_max, rel=1e-6)
    assert p.m_wf_kg_s < sliding.m_wf_kg_s and p.superheat_K > sliding.superheat_K
    assert p.result.states["4"].q >= ctx.settings.min_turbine_outlet_quality - 1e-9
    _closes(p)


def test_the_source_outlet_minimum_is_kept_by_slowing_the_fans():
    """R245fa designed with the brine leaving at its 75 °C minimum: in cold air the condensing
    temperature would fall and the brine leave colder (at full fan speed: below 75 °C), so the
    fans slow until it leaves at 75 °C. The outlet is checked on the source's own energy balance,
    the fans' power by the affinity laws (power ~ speed^3 at a fixed density ratio: common
    practice, e.g. any fan handbook), and the approach on a 200-segment path."""
    L, ctx, r, hw = _air_design("R245fa", source={**AIR_YEAR["source"], "min_outlet_temperature_C": 75.0})
    assert r.T_source_out_K == pytest.approx(75.0 + 273.15, abs=0.01)  # the design sits on the limit
    T_air = 0.0 + 273.15
    unlimited = dataclasses.replace(ctx, source=dataclasses.replace(ctx.source, T_out_min_K=None))
    full = od.operating_point(L, unlimited, hw, T_air)  # fans at full speed, the limit not enforced
    assert full.running and full.sink_flow_fraction == 1.0 and full.T_source_out_K < 75.0 + 273.15 - 1.0
    p = od.operating_point(L, ctx, hw, T_air)
    assert p.running, p.reason
    assert "sink flow reduced" in p.actions and od.MIN_SINK_FLOW_FRACTION < p.sink_flow_fraction < 1.0
    src = ctx.source
    T_out = float(src.T_K(src.h_in_J_kg - p.result.Q_in_W / src.m_kg_s))
    assert T_out == pytest.approx(75.0 + 273.15, abs=1e-3)
    W_aux = p.result.W_net_W - p.W_net_W
    rho = od._density(ctx.sink, T_air) / hw.sink_density_design
    assert W_aux == pytest.approx(hw.W_aux_design_W * rho * p.sink_flow_fraction ** 3, rel=1e-9)
    fluid, st = ctx.fluid, p.result.states
    fine = heating_path(fluid, fluid.sat_T(p.T_evap_K), st["2"], st["3"], 200, True, zones=False)
    assert heater_profile(fine, p.m_wf_kg_s, st["3"].h, src).min_approach_K > 0.0
    _closes(p)


def test_the_best_sink_flow_is_within_a_dense_grid_of_fan_speeds():
    """With the best-sink-flow control the fans' speed in a cold bin is chosen for the largest
    net power: within 0.05 % of a dense grid (76 speeds, 25 % to 100 %) of the same operating
    points; slower fans beat full speed in cold air (less fan power, a condensing temperature
    nearer the turbine's design volume flow)."""
    L, ctx, r, hw = _air_design("R245fa")
    T_air = 0.0 + 273.15
    best = od.best_sink_flow_point(L, ctx, hw, T_air)
    assert best.running, best.reason
    grid = [od.operating_point(L, ctx, hw, T_air, sink_flow_fraction=g).W_net_W
            for g in np.linspace(od.MIN_SINK_FLOW_FRACTION, 1.0, 76)]
    assert best.W_net_W >= max(grid) * (1.0 - 5e-4)
    assert best.W_net_W > grid[-1] * 1.01 and best.sink_flow_fraction < 0.95
    _closes(best)


def test_the_study_chooses_the_control(tmp_path):
    """[year] control reaches the solver: a year of cold bins rated with the best sink flow gives
    more energy than at design fan speed (slower fans in cold air), the same design point."""
    from orcscreen.api import run_case

    rows = {}
    for control in ("sliding-pressure", "sliding-pressure-best-sink-flow"):
        raw = _year_study(tmp_path, "sink_temperature_C,hours\n0,3000\n5,3000\n14,2760\n",
                          year={"file": "year.csv", "design_sink_temperature_C": 14.0, "control": control})
        raw["fluids"] = {"include": ["R245fa"]}
        rows[control] = run_case(next(iter(_load(tmp_path, raw).cases())))["row"]
    a, b = rows["sliding-pressure"], rows["sliding-pressure-best-sink-flow"]
    assert a["net_power_kW"] == pytest.approx(b["net_power_kW"], rel=1e-12)
    assert b["annual_energy_MWh"] > a["annual_energy_MWh"] * 1.005


# --------------------------------------------------------------------------- a supercritical heater
@pytest.fixture(scope="module")
def transcritical_points():
    """R134a on a 150 °C brine, air-cooled, designed at 14 °C on a supercritical pressure limit of
    1.12 p_crit (its unlimited optimum lies near 1.16), rated from -3 to 33 °C."""
    L, ctx, r, hw = _design(AIR, fluid="R134a", layout="transcritical",
                            source={**AIR_YEAR["source"], "inlet_temperature_C": 150.0},
                            limits={"max_supercritical_reduced_pressure": 1.12},
                            **{k: v for k, v in AIR_YEAR.items() if k != "source"})
    assert r.states["3"].p_Pa == pytest.approx(1.12 * ctx.fluid.p_crit_Pa, rel=1e-6)
    out, guess = [], None
    for T in np.arange(-3.0, 34.0, 4.0):
        p = od.operating_point(L, ctx, hw, T + 273.15, guess=guess)
        assert p.running, (T, p.reason)
        guess = (p.u, p.T_cond_K)
        out.append((T, p))
    return L, ctx, r, hw, out


def test_a_supercritical_heater_returns_its_design(transcritical_points):
    L, ctx, r, hw, _ = transcritical_points
    p = od.operating_point(L, ctx, hw, ctx.sink.T_in_K)
    assert p.running and p.W_net_W == pytest.approx(r.W_net_W, rel=1e-9)
    assert p.result.states["3"].p_Pa == pytest.approx(r.states["3"].p_Pa, rel=1e-9)


def test_a_supercritical_heater_slides_and_holds_its_pressure_limit(transcritical_points):
    """Below the design air temperature the heater pressure slides down with the turbine's
    swallowing capacity at the design's turbine inlet temperature; above it the sliding pressure
    would pass the limit, so it is held there with less flow and a hotter turbine inlet. Power
    falls monotonically above the design temperature; energy closes and the heater keeps a
    positive approach on an independent 400-segment supercritical path."""
    from orcscreen.paths import supercritical_heating_path

    L, ctx, r, hw, points = transcritical_points
    p_lim = ctx.settings.max_heater_pressure_Pa(ctx.fluid)[0]
    T3_d = r.states["3"].T_K
    for T, p in points:
        st = p.result.states
        assert st["3"].p_Pa <= p_lim * (1 + 1e-6)
        if T < 14.0:
            assert st["3"].p_Pa < r.states["3"].p_Pa and st["3"].T_K == pytest.approx(T3_d, abs=1e-9)
        else:
            assert st["3"].p_Pa == pytest.approx(p_lim, rel=1e-6) and st["3"].T_K > T3_d
            assert "pressure held" in p.actions
        _closes(p)
        fine = supercritical_heating_path(ctx.fluid, st["3"].p_Pa, st["2"], st["3"], 400)
        assert heater_profile(fine, p.m_wf_kg_s, st["3"].h, ctx.source).min_approach_K > 0.0
    W = [p.W_net_W for T, p in points if T > 14.0]
    assert all(a > b for a, b in zip(W, W[1:]))


def test_the_report_explains_the_year_strategy(tmp_path):
    """The report of a study with a year says how the year was rated: the method names the
    control and its answers, and the year chart's caption what each design was chosen for."""
    import html

    from orcscreen import cli
    from orcscreen.controls import CONTROLS

    (tmp_path / "year.csv").write_text("sink_temperature_C,hours\n4,3000\n14,3000\n24,2760\n", encoding="utf-8")
    (tmp_path / "study.toml").write_text(
        'schema_version = 1\n[source]\nkind = "brine"\ninlet_temperature_C = 130\nmass_flow_kg_s = 30\n'
        '[sink]\nkind = "air"\ntemperature_rise_K = 12\n[fluids]\ninclude = ["R245fa"]\n'
        '[cycle]\nlayouts = ["basic"]\n[year]\nfile = "year.csv"\ndesign_for = "year"\n', encoding="utf-8")
    out = tmp_path / "out"
    assert cli.main(["run", str(tmp_path / "study.toml"), "--out", str(out), "--jobs", "1"]) == 0
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "A year of operation (year.csv" in page
    assert html.escape(CONTROLS["sliding-pressure"].description) in page  # the page escapes its text
    assert "each design chosen for the most energy over the year" in page
