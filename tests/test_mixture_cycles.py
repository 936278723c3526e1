"""Cycles of zeotropic mixtures: published qualitative results, conservation laws, the pure
limits, the composition optimum against a dense grid of the engine's own model, and the layouts
that do not take mixtures.

The scenario (a 120 °C water source, 15 °C cooling water rising 10 K) is our own; the
qualitative result it checks is Heberle, Preißinger, Brüggemann, Renewable Energy 37 (2012) 364
(from memory): for geothermal water up to about 120 °C with a cooling-water condenser, a
mixture of isobutane and isopentane gives more power (a higher second-law efficiency) than
either pure fluid, because both glides follow the sensible streams more closely.
"""

import math

import numpy as np
import pytest
import CoolProp.CoolProp as CP

from orcscreen import api, streams
from orcscreen.composition import X_MAX, X_MIN, optimise_composition
from orcscreen.cycles import LAYOUTS, CycleContext
from orcscreen.mixture_properties import TABLE_TOLERANCE_K
from orcscreen.objectives import score
from orcscreen.optimize import optimise
from orcscreen.properties import get_fluid
from orcscreen.study import study_from_dict

def mixture_with(a, b, x):
    """The engine's name of a mixture of a and b at a's mole fraction x (0 and 1 allowed)."""
    return f"{a}[{x:.6f}]&{b}[{1.0 - x:.6f}]"


SOURCE = {"kind": "water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 10.0, "min_outlet_temperature_C": 50.0}
SINK = {"kind": "water", "inlet_temperature_C": 15.0, "temperature_rise_K": 10.0}


@pytest.fixture(scope="module")
def base_ctx():
    study = study_from_dict({"source": SOURCE, "sink": SINK, "fluids": {"include": ["isobutane"]},
                             "cycle": {"layouts": ["basic"]}})
    case = next(iter(study.cases()))
    return api.case_context(case, api.fluid_catalogue.get_info("Isobutane"))


def _ctx(base, name):
    return CycleContext(get_fluid(name), base.source, base.sink, base.settings)


def _best(layout, ctx):
    opt = optimise(LAYOUTS[layout], ctx)
    assert not isinstance(opt, tuple), opt
    return opt.cycle


def test_a_mixture_beats_both_pure_components(base_ctx):
    """Heberle et al. 2012 (module docstring): some isobutane/isopentane mixture gives more net
    power than both pure fluids from the same source (hence a higher second-law efficiency)."""
    pure = max(_best("basic", _ctx(base_ctx, f)).W_net_W for f in ("Isobutane", "Isopentane"))
    mixed = {x: _best("basic", _ctx(base_ctx, mixture_with("Isobutane", "Isopentane", x))).W_net_W
             for x in (0.2, 0.4, 0.6, 0.8)}
    assert max(mixed.values()) > 1.03 * pure, (pure, mixed)


@pytest.mark.parametrize("x", [0.0, 1.0])
def test_the_pure_ends_give_the_pure_fluids_cycle(base_ctx, x):
    """A mole fraction of 1 (0) is pure isobutane (isopentane): the same optimum within the
    table's tolerance (a 0.01 K error in a saturation temperature moves the power by ~1e-4)."""
    pure = "Isobutane" if x == 1.0 else "Isopentane"
    for layout in ("basic", "recuperated"):
        a = _best(layout, _ctx(base_ctx, mixture_with("Isobutane", "Isopentane", x)))
        b = _best(layout, _ctx(base_ctx, pure))
        assert a.W_net_W == pytest.approx(b.W_net_W, rel=1e-4), layout
        assert a.T_cond_K == pytest.approx(b.T_cond_K, abs=TABLE_TOLERANCE_K)


def _direct(name):
    a, b = name.split("&")
    return f"HEOS::{a}&{b}"


def _isobar_points(name, p, T_from, T_to, h_from, h_to):
    """(h, T) along the isobar p from (T_from, h_from) to (T_to, h_to), by CoolProp's own flashes
    from scratch: (p, T) in the liquid and the vapour, (p, Q) in the glide (independent of the
    engine's table)."""
    fluid = _direct(name)
    T_bub = CP.PropsSI("T", "P", p, "Q", 0, fluid)
    T_dew = CP.PropsSI("T", "P", p, "Q", 1, fluid)
    pts = []
    for T in np.linspace(T_from, T_bub, 12)[:-1] if T_from < T_bub - 1e-6 else []:
        pts.append((CP.PropsSI("H", "P", p, "T", T, fluid), T))
    for q in np.linspace(0.0, 1.0, 41):
        h, T = CP.PropsSI(["H", "T"], "P", p, "Q", q, fluid)
        pts.append((h, T))
    for T in np.linspace(T_dew, T_to, 12)[1:] if T_to > T_dew + 1e-6 else []:
        pts.append((CP.PropsSI("H", "P", p, "T", T, fluid), T))
    return [(h, T) for h, T in pts if h_from - 1e-6 <= h <= h_to + 1e-6]


@pytest.mark.parametrize("layout", ["basic", "recuperated"])
@pytest.mark.parametrize("x", [0.25, 0.6])
def test_conservation_laws_on_mixture_cases(base_ctx, layout, x):
    name = mixture_with("Isobutane", "Isopentane", x)
    ctx = _ctx(base_ctx, name)
    r = _best(layout, ctx)
    st, m = r.states, r.m_wf_kg_s
    src, snk = ctx.source, ctx.sink
    s2r, s4r = st.get("2r", st["2"]), st.get("4r", st["4"])
    # first law: cycle, source and sink
    assert r.Q_in_W - r.Q_out_W == pytest.approx(r.W_turbine_W - r.W_pump_W, rel=1e-9)
    assert r.Q_in_W == pytest.approx(m * (st["3"].h - s2r.h), rel=1e-9)
    assert r.Q_out_W == pytest.approx(m * (s4r.h - st["1"].h), rel=1e-9)
    h_src_out = float(src.h_J_kg(r.T_source_out_K))
    assert src.m_kg_s * (src.h_in_J_kg - h_src_out) == pytest.approx(r.Q_in_W, rel=1e-6)
    assert r.m_sink_kg_s * (float(snk.h_J_kg(snk.T_out_K)) - snk.h_in_J_kg) == pytest.approx(r.Q_out_W, rel=1e-6)
    # second law: every component generates entropy
    assert st["2"].s - st["1"].s >= -1e-6 and st["4"].s - st["3"].s >= -1e-6
    assert m * (st["3"].s - s2r.s) + src.m_kg_s * (float(src.s_J_kgK(r.T_source_out_K)) - src.s_in_J_kgK) >= 0.0
    assert (m * (st["1"].s - s4r.s)
            + r.m_sink_kg_s * (float(snk.s_J_kgK(snk.T_out_K)) - float(snk.s_J_kgK(snk.T_in_K)))) >= 0.0
    if "2r" in st:
        assert (s2r.s - st["2"].s) + (s4r.s - st["4"].s) >= -1e-9
    T = [v.T_K for v in st.values()]
    assert 0.0 < r.W_net_W / r.Q_in_W < 1.0 - min(T) / max(T)
    assert r.W_net_W < streams.source_exergy_W(src, snk.T_in_K)
    # pinch on an independent discretisation (CoolProp's flashes from scratch, not the table)
    s = ctx.settings
    p_e = st["3"].p_Pa
    for h, T_wf in _isobar_points(name, p_e, s2r.T_K, st["3"].T_K, s2r.h, st["3"].h):
        T_hot = float(src.T_K(src.h_in_J_kg - m * (st["3"].h - h) / src.m_kg_s))
        assert T_hot - T_wf >= s.pinch_evaporator_K - TABLE_TOLERANCE_K, ("evaporator", h, T_hot - T_wf)
    p_c = st["1"].p_Pa
    for h, T_wf in _isobar_points(name, p_c, st["1"].T_K, s4r.T_K, st["1"].h, s4r.h):
        frac = (h - st["1"].h) / (s4r.h - st["1"].h)
        T_cold = float(snk.T_K(snk.h_in_J_kg + frac * (float(snk.h_J_kg(snk.T_out_K)) - snk.h_in_J_kg)))
        assert T_wf - T_cold >= s.pinch_condenser_K - TABLE_TOLERANCE_K, ("condenser", h, T_wf - T_cold)
    # a glide in both exchangers
    assert r.T_evap_K - st["2"].T_K > 0.0
    sat_c = ctx.fluid.sat_p(p_c)
    assert sat_c.glide_K > 1.0 and st["1"].T_K == pytest.approx(sat_c.T_K, abs=1e-9)


def test_composition_optimum_within_a_dense_grid(base_ctx):
    """The composition search (scan and bounded Brent around each composition's optimum) is
    within 0.05 % of the best of a dense grid of its own model: 25 compositions x 60
    evaporation temperatures, each cycle evaluated as reported (exact)."""
    layout = LAYOUTS["basic"]
    opt, x, n, scan = optimise_composition(layout, base_ctx, "Isobutane", "Isopentane")
    assert opt is not None and X_MIN <= x <= X_MAX
    best = -math.inf
    for xg in np.linspace(X_MIN, X_MAX, 25):
        ctx = _ctx(base_ctx, mixture_with("Isobutane", "Isopentane", float(xg)))
        win = layout.window(ctx, "evaporation_temperature_K", {})
        for T in np.linspace(win.lo, win.hi, 60):
            r = layout.evaluate(ctx, {"evaporation_temperature_K": float(T)}, exact=True)
            if r.ok:
                best = max(best, score(r, ctx))
    assert score(opt.cycle, _ctx(base_ctx, mixture_with("Isobutane", "Isopentane", x))) >= best * (1.0 - 5e-4)
    assert len(scan) >= 9 and n > 0


@pytest.mark.parametrize("layout", ["transcritical", "bleed-regenerative", "reheat"])
def test_layouts_not_built_for_mixtures_say_so(base_ctx, layout):
    opt = optimise(LAYOUTS[layout], _ctx(base_ctx, mixture_with("Isobutane", "Isopentane", 0.5)))
    assert isinstance(opt, tuple) and "not built for zeotropic mixtures" in opt[1]
    assert '"basic"' in opt[1] and '"recuperated"' in opt[1]


def test_the_end_of_the_mixture_table_is_a_named_limit(base_ctx):
    """A hot source: the evaporation of R245fa/isopentane stops where CoolProp's flash stops
    converging below the critical point; the optimum names that limit instead of failing."""
    hot = streams.source_from_settings({"kind": "water", "inlet_temperature_C": 190.0, "mass_flow_kg_s": 10.0,
                                        "pressure_bar": 20.0})
    fluid = get_fluid(mixture_with("R245fa", "Isopentane", 0.7))
    ctx = CycleContext(fluid, hot, base_ctx.sink, base_ctx.settings)
    win = LAYOUTS["basic"].window(ctx, "evaporation_temperature_K", {})
    assert win.hi_name == "end of the mixture's saturation table" and win.hi == pytest.approx(fluid.T_sat_max_K)
    opt = optimise(LAYOUTS["basic"], ctx)
    assert not isinstance(opt, tuple)
    assert opt.cycle.p_evap_Pa <= fluid.p_sat_max_Pa * (1 + 1e-9)


@pytest.fixture(scope="module")
def hot_spring_rows():
    """Every case of the shipped mixture study (an invented scenario), through run_case."""
    from pathlib import Path

    from orcscreen.api import run_case
    from orcscreen.study import load_study

    study = load_study(Path(__file__).resolve().parent.parent / "studies" / "mixtures-hot-spring.toml")
    out = []
    for case in study.cases():
        res = run_case(case)
        out.append((case.as_dict(), res["row"], res["detail"]))
    return out


def test_every_feasible_mixture_case_of_the_shipped_study_obeys_the_laws(hot_spring_rows):
    """First and second law, Carnot and exergy bounds, and both pinches on an independent
    discretisation (CoolProp's own flashes) for every feasible mixture case; the glide columns
    against CoolProp's bubble and dew points at the row's pressures."""
    mixtures = [(c, r, d) for c, r, d in hot_spring_rows if r["status"] == "ok" and "&" in r["coolprop_name"]]
    assert len(mixtures) >= 10
    for case, row, detail in mixtures:
        tag = (row["fluid"], row["layout"])
        st = {s["name"]: s for s in detail["states"]}
        m = row["wf_mass_flow_kg_s"]
        q_in, q_out = row["heat_input_kW"] * 1e3, row["heat_rejected_kW"] * 1e3
        assert q_in - q_out == pytest.approx((row["turbine_power_kW"] - row["pump_power_kW"]) * 1e3, rel=1e-6), tag
        src = streams.source_from_settings(case["source"])
        snk = streams.sink_from_settings(case["sink"])
        T_src_out = row["source_outlet_temperature_C"] + 273.15
        assert src.m_kg_s * (src.h_in_J_kg - float(src.h_J_kg(T_src_out))) == pytest.approx(q_in, rel=1e-6), tag
        s = {k: v["s_kJ_kgK"] * 1e3 for k, v in st.items()}
        h = {k: v["h_kJ_kg"] * 1e3 for k, v in st.items()}
        s2r, s4r = s.get("2r", s["2"]), s.get("4r", s["4"])
        h2r, h4r = h.get("2r", h["2"]), h.get("4r", h["4"])
        assert s["2"] >= s["1"] - 1e-6 and s["4"] >= s["3"] - 1e-6, tag
        assert m * (s["3"] - s2r) + src.m_kg_s * (float(src.s_J_kgK(T_src_out)) - src.s_in_J_kgK) >= 0.0, tag
        assert (m * (s["1"] - s4r) + row["sink_mass_flow_kg_s"]
                * (float(snk.s_J_kgK(snk.T_out_K)) - float(snk.s_J_kgK(snk.T_in_K)))) >= 0.0, tag
        assert row["thermal_efficiency"] <= row["carnot_efficiency"] and row["net_power_kW"] < row["source_exergy_kW"], tag
        name = row["coolprop_name"]
        p_e, p_c = st["3"]["p_bar"] * 1e5, st["1"]["p_bar"] * 1e5
        T2r = st.get("2r", st["2"])["T_C"] + 273.15
        for hw, T_wf in _isobar_points(name, p_e, T2r, st["3"]["T_C"] + 273.15, h2r, h["3"]):
            T_hot = float(src.T_K(src.h_in_J_kg - m * (h["3"] - hw) / src.m_kg_s))
            assert T_hot - T_wf >= case["exchangers"]["pinch_evaporator_K"] - TABLE_TOLERANCE_K, tag
        T4r = st.get("4r", st["4"])["T_C"] + 273.15
        for hw, T_wf in _isobar_points(name, p_c, st["1"]["T_C"] + 273.15, T4r, h["1"], h4r):
            frac = (hw - h["1"]) / (h4r - h["1"])
            T_cold = float(snk.T_K(snk.h_in_J_kg + frac * (float(snk.h_J_kg(snk.T_out_K)) - snk.h_in_J_kg)))
            assert T_wf - T_cold >= case["exchangers"]["pinch_condenser_K"] - TABLE_TOLERANCE_K, tag
        fluid = _direct(name)
        for p, col in ((p_e, "evaporator_glide_K"), (p_c, "condenser_glide_K")):
            glide = CP.PropsSI("T", "P", p, "Q", 1, fluid) - CP.PropsSI("T", "P", p, "Q", 0, fluid)
            assert row[col] == pytest.approx(glide, abs=2 * TABLE_TOLERANCE_K), (tag, col)
        assert row["area_evaporator_m2"] > 0.0 and row["area_condenser_m2"] > 0.0, tag


def test_the_shipped_study_finds_a_blend_above_its_components(hot_spring_rows):
    """In the shipped scenario too (105 °C water, cooling water rising 8 K), the best
    isobutane/isopentane blend beats pure isobutane and isopentane (Heberle et al. 2012,
    qualitative), and the optimised composition is at least as good as the listed ones."""
    ok = [r for _, r, _ in hot_spring_rows if r["status"] == "ok" and r["layout"] == "basic"]
    pure = max(r["net_power_kW"] for r in ok if r["coolprop_name"] in ("IsoButane", "Isopentane"))
    blends = [r for r in ok if r["coolprop_name"].startswith("IsoButane[")]
    assert max(r["net_power_kW"] for r in blends) > pure
    searched = [r for r in blends if r["first_component_mole_fraction"] not in (0.3, 0.5, 0.7)]
    assert len(searched) == 1
    assert searched[0]["net_power_kW"] >= max(r["net_power_kW"] for r in blends) * (1 - 5e-4)
    for r in blends:
        assert 0.0 < r["first_component_mass_fraction"] < r["first_component_mole_fraction"]  # isobutane is lighter


@pytest.mark.parametrize("layout", ["basic", "recuperated"])
def test_a_mixture_design_off_design(layout):
    """A year for a mixture: the solver given the design condition returns the design (1e-9);
    in warmer air the power falls, energy closes, and both approaches stay positive on the
    engine's checked off-design profiles, whose glide zones are named for the areas."""
    from orcscreen import offdesign as od
    from orcscreen.areas import segment_zones

    study = study_from_dict({"source": {"kind": "brine", "inlet_temperature_C": 130.0, "mass_flow_kg_s": 30.0},
                             "sink": {"kind": "air", "inlet_temperature_C": 14.0},
                             "fluids": {"include": ["isobutane"],
                                        "mixtures": [{"components": ["isobutane", "isopentane"], "mole_fractions": [0.6]}]},
                             "cycle": {"layouts": [layout]}})
    case = [c for c in study.cases() if "&" in c.fluid][0]
    ctx = api.case_context(case, api.fluid_catalogue.get_info(case.fluid))
    L = LAYOUTS[layout]
    opt = optimise(L, ctx)
    assert not isinstance(opt, tuple), opt
    r, hw = opt.cycle, od.hardware_of(opt.cycle, ctx)
    p = od.operating_point(L, ctx, hw, ctx.sink.T_in_K)
    assert p.running, p.reason
    assert p.W_net_W == pytest.approx(r.W_net_W, rel=1e-9)
    W = [p.W_net_W]
    for T in (20.0, 26.0):
        q = od.operating_point(L, ctx, hw, T + 273.15, guess=(p.T_evap_K, p.T_cond_K))
        assert q.running, (T, q.reason)
        res = q.result
        assert res.Q_in_W + res.W_pump_W == pytest.approx(res.Q_out_W + res.W_turbine_W, rel=1e-9)
        assert q.profiles["condenser"].min_approach_K > 0.0 and q.profiles["evaporator"].min_approach_K > 0.0
        assert "condensation" in segment_zones(q.profiles["condenser"], "condenser")
        W.append(q.W_net_W)
    assert W[0] > W[1] > W[2]


def test_the_report_says_a_mixture_has_no_blend_class():
    """A mixture without an ASHRAE 34 blend class: the report's cautions say its class is taken
    from its components, not an assigned class (its row's caution says so too)."""
    from orcscreen.report import fluid_cautions

    info = api.fluid_catalogue.get_info("IsoButane[0.600000]&Isopentane[0.400000]")
    caution = api.fluid_catalogue.caution_text(info)
    lines = fluid_cautions({"safety_class": info.safety_class, "caution": caution, "gwp100": float("nan")})
    assert lines[0].startswith("Not classified by ASHRAE 34 as a blend") and "A3" in lines[0]
    assert not any(line.startswith("ASHRAE 34 class") for line in lines)
