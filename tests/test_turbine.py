"""Turbine figures and efficiency models.

Sources: Macchi and Perdichizzi, J. Eng. Power 103 (1981) 718 (definitions of the size
parameter SP = sqrt(V_out,is) / dh_is^(1/4) and the volume ratio VR = v_out,is / v_in); Astolfi
and Macchi, 3rd International Seminar on ORC Power Systems (2015), paper 83, and Macchi and
Astolfi (eds.), *Organic Rankine Cycle (ORC) Power Systems*, 2017, Table 9.1 (the axial-turbine
correlation, coefficients as transcribed in secondary copies: ../shared/REFERENCES.md section 1;
the published trends checked below are the paper's own statements).
"""

import json
import math
import re
import tomllib
from pathlib import Path

import numpy as np
import pytest

from orcscreen.turbine import (
    AxialAstolfiMacchi,
    ConstantEfficiency,
    axial_efficiency_astolfi_macchi,
    size_parameter_m,
    volume_ratio,
)

TESTS = Path(__file__).resolve().parent


# -- definitions --------------------------------------------------------------------------------

def test_size_parameter_and_volume_ratio_by_hand():
    """2.0 m3/s leaving an expansion of 50 kJ/kg: SP = sqrt(2.0) / 50000^(1/4) = 1.41421 / 14.9535
    = 0.094574 m (worked by hand from the definition); in kJ/kg the same numbers would give
    0.5318 m, 1000^(1/4) = 5.623 times too large (the unit trap). VR = 0.5 / 0.05 = 10."""
    assert size_parameter_m(2.0, 50e3) == pytest.approx(0.094574, rel=1e-5)
    assert size_parameter_m(2.0, 50.0) / size_parameter_m(2.0, 50e3) == pytest.approx(1000 ** 0.25, rel=1e-12)
    assert volume_ratio(0.5, 0.05) == pytest.approx(10.0)
    assert math.isnan(size_parameter_m(2.0, 0.0)) and math.isnan(size_parameter_m(0.0, 5e4))


# -- the correlation --------------------------------------------------------------------------------

#: Table 9.1, one stage, typed again here from ../shared/REFERENCES.md (an independent copy of
#: the implementation's table): A_0..A_15 on 1, x, x2, x3, x4, VR, y, y2, y3, y4, yx, y2x, yx2, y3x, y3x2, y2x3.
ONE_STAGE = [0.908315, -0.0524869, -0.0479908, -0.0171038, -0.00244002, 0.0, 0.0496178, -0.0489486,
             0.0117165, -0.00100473, 0.0564597, -0.0185944, 0.0128886, 0.00178187, -0.00021196, 0.00078667]


def test_correlation_reproduces_a_hand_computed_example():
    """One stage, SP = 0.1 m, VR = 10: x = ln 0.1 = -2.302585, y = ln 10 = 2.302585 (x = -y);
    the sixteen terms of Table 9.1 sum to 0.85474 (worked by hand from the table)."""
    x, y = math.log(0.1), math.log(10.0)
    terms = [1, x, x**2, x**3, x**4, 10.0, y, y**2, y**3, y**4, y * x, y**2 * x, y * x**2, y**3 * x, y**3 * x**2, y**2 * x**3]
    by_hand = sum(a * t for a, t in zip(ONE_STAGE, terms))
    assert by_hand == pytest.approx(0.85474, abs=5e-5)
    assert axial_efficiency_astolfi_macchi(1, 0.1, 10.0) == pytest.approx(by_hand, rel=1e-12)


def test_published_trends_hold_over_a_grid():
    """Astolfi and Macchi (2015): at a fixed VR the efficiency rises with SP (here over SP
    0.02-0.5 m: it flattens and turns slightly above), at a fixed SP it falls with VR (over VR
    2-200: below VR 2 it is flat), and more stages handle a higher VR better."""
    SP = np.geomspace(0.02, 0.5, 25)
    VR = np.geomspace(2.1, 200.0, 25)
    for n in (1, 2, 3):
        for vr in VR:
            assert np.all(np.diff([axial_efficiency_astolfi_macchi(n, sp, vr) for sp in SP]) > 0), (n, vr)
        for sp in SP:
            assert np.all(np.diff([axial_efficiency_astolfi_macchi(n, sp, vr) for vr in VR]) < 0), (n, sp)
    for sp in np.geomspace(0.02, 1.0, 25):
        for vr in (3.0, 10.0, 50.0, 200.0):
            e1, e2, e3 = (axial_efficiency_astolfi_macchi(n, sp, vr) for n in (1, 2, 3))
            assert e3 > e2 > e1, (sp, vr)


def test_stage_count_is_the_fewest_within_the_volume_ratio_per_stage():
    model = AxialAstolfiMacchi(max_stages=3, max_vr_per_stage=10.0)
    assert model.design(0.1, 8.0).stages == 1
    d = model.design(0.1, 147.0)  # 147^(1/2) = 12.1 > 10, 147^(1/3) = 5.3
    assert d.stages == 3 and d.vr_per_stage == pytest.approx(147.0 ** (1 / 3))
    # the equivalent single-stage size parameter of n stages is n^(1/4) SP (docstring)
    assert d.efficiency == pytest.approx(axial_efficiency_astolfi_macchi(3, 0.1 * 3 ** 0.25, 147.0), rel=1e-12)
    # a hard limit: no turbine of 3 stages at most 10 per stage takes a volume ratio of 51,892
    refused = model.design(0.1, 51892.0)
    assert refused.reason == "turbine volume ratio 5.189e+04 needs more than 3 stages (at most 10 per stage)"
    assert AxialAstolfiMacchi(max_stages=1).design(0.1, 11.0).reason.startswith("turbine volume ratio 11 needs more than 1 stage ")


def test_outside_the_range_the_inputs_are_clamped_with_a_warning():
    model = AxialAstolfiMacchi()
    d = model.design(2.5, 4.0)  # SP beyond 1 m
    assert d.efficiency == pytest.approx(axial_efficiency_astolfi_macchi(1, 1.0, 4.0), rel=1e-12)
    assert len(d.warnings) == 1 and "outside the axial correlation's range 0.02-1 m" in d.warnings[0]
    d = model.design(0.1, 1.05)  # VR below 1.2
    assert d.efficiency == pytest.approx(axial_efficiency_astolfi_macchi(1, 0.1, 1.2), rel=1e-12)
    assert "range 1.2-200" in d.warnings[0]
    assert model.design(0.1, 5.0).warnings == ()


def test_constant_model_is_size_independent():
    m = ConstantEfficiency(0.8)
    assert not m.size_dependent and m.design(0.01, 1000.0).efficiency == 0.8 and m.efficiency() == 0.8
    with pytest.raises(ValueError):
        ConstantEfficiency(1.2)


# -- in the cycle -------------------------------------------------------------------------------------

def _study(model: str, **machines):
    from orcscreen.study import study_from_dict

    return study_from_dict({
        "source": {"kind": "water", "inlet_temperature_C": 130.0, "mass_flow_kg_s": 10.0, "pressure_bar": 5.0},
        "sink": {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 8.0},
        "machines": {"turbine_model": model, **machines},
        "cycle": {"layouts": ["basic", "recuperated", "transcritical"]},
        "fluids": {"include": ["R245fa", "IsoButane", "R134a", "n-Heptane"]},
    })


@pytest.fixture(scope="module")
def axial_rows():
    from orcscreen.api import run_case

    return [run_case(c)["row"] for c in _study("axial-sp-vr").cases()]


def test_the_efficiency_fits_the_turbine_of_the_result(axial_rows):
    """The fixed point: the efficiency reported is the model's at the reported SP and VR."""
    model = AxialAstolfiMacchi()
    ok = [r for r in axial_rows if r["status"] == "ok"]
    assert len(ok) >= 6
    for r in ok:
        d = model.design(r["size_parameter_m"], r["volume_ratio"])
        assert r["turbine_efficiency"] == pytest.approx(d.efficiency, abs=1e-7), (r["fluid"], r["layout"])
        assert r["turbine_stages"] == d.stages and r["turbine_model"] == "axial-sp-vr"
        assert r["volume_ratio_per_stage"] == pytest.approx(r["volume_ratio"] ** (1.0 / r["turbine_stages"]))


def test_a_turbine_beyond_the_stage_limit_is_infeasible_with_the_reason():
    """n-heptane evaporating at 117 °C and condensing near 33 °C expands through a volume ratio
    near 19: with one stage of at most 10 no turbine fits, and the cycle is infeasible with that
    reason; the optimum found keeps within what a single stage can take."""
    from orcscreen import fluids
    from orcscreen.api import case_context, run_case
    from orcscreen.cycles import LAYOUTS

    case = next(c for c in _study("axial-sp-vr", max_turbine_stages=1).cases()
                if c.fluid == "n-Heptane" and c.layout == "basic")
    ctx = case_context(case, fluids.get_info(case.fluid))
    hot = LAYOUTS["basic"].evaluate(ctx, {"evaporation_temperature_K": 390.0})
    assert not hot.ok and hot.limit == "turbine"
    assert re.fullmatch(r"turbine volume ratio 1\d\.\d+ needs more than 1 stage \(at most 10 per stage\)", hot.reason), hot.reason
    cool = LAYOUTS["basic"].evaluate(ctx, {"evaporation_temperature_K": 330.0})
    assert cool.ok and cool.volume_ratio < 10.0 and cool.turbine_design.stages == 1
    row = run_case(case)["row"]
    assert row["status"] == "ok" and row["volume_ratio"] <= 10.0 * (1 + 1e-6)


def test_constant_model_reproduces_the_pinned_results():
    """Regression pins, not validation: the net power of every case of every shipped study
    (every 97th case of the large sweep), recorded at commit 3791a64, before the size-dependent
    models, when each study gave a constant turbine efficiency (kept in the pins file). With
    turbine_model = "constant" and that efficiency, and the sink's auxiliary power as it was
    then (the study's fixed fraction per kW rejected, in the pins file), every case must come
    out the same: status, and net power to 1e-9 relative. A study whose superheat is optimised
    holds to 2e-5 since 6891a76 (the superheat is scanned from 0 K with warm-started evaporation
    searches that stop at 0.02 K: the optimum moves along a flat ridge; regress_studies measured
    at most 1e-5 on thermal-oil-loop, here 1.1e-6 for n-hexane). So does a study whose source
    has a lowest outlet temperature, since the kink between that limit and the pinch is found as
    the zero of the outlet margin (optimize._outlet_kink) instead of by Brent's search: the
    point taken on the kink moves within the closed-form model's own noise (the condensing
    temperature settled to COND_TOL_SEARCH_K); here at most 1.6e-5 (engine-jacket-water)."""
    from orcscreen.api import run_case
    from orcscreen.study import study_from_dict

    pins = json.loads((TESTS / "regression_pins.json").read_text())
    checked = 0
    for study_name, cases in pins["cases"].items():
        raw = tomllib.loads((TESTS.parent / "studies" / study_name).read_text(encoding="utf-8"))
        raw["machines"] = {**raw.get("machines", {}), "turbine_model": "constant",
                           "turbine_efficiency": pins["turbine_efficiency"][study_name]}
        # the sink's fans and pumps as they were then: the study's fixed fraction (kept in the pins file)
        sink = {k: v for k, v in raw.get("sink", {}).items() if k not in ("fan_pressure_drop_Pa", "pump_head_m",
                                                                            "aux_efficiency")}
        raw["sink"] = {**sink, "aux_power_per_kW_rejected": pins["sink_aux_power_per_kW_rejected"][study_name]}
        raw["machines"].pop("max_turbine_stages", None)
        raw.get("limits", {}).pop("max_volume_ratio_per_stage", None)
        wanted = {(json.dumps(c["sweep"], sort_keys=True), c["fluid"], c["layout"]): c for c in cases}
        moved = (raw.get("cycle", {}).get("superheat_K") == "optimise"
                 or raw["source"].get("min_outlet_temperature_C") is not None)
        rel = 2e-5 if moved else 1e-9
        for case in study_from_dict(raw).cases():
            pin = wanted.get((json.dumps(dict(case.sweep), sort_keys=True), case.fluid, case.layout))
            if pin is None:
                continue
            row = run_case(case)["row"]
            assert row["status"] == pin["status"], (study_name, case.fluid, case.layout, row["reason"])
            if pin["status"] == "ok":
                assert row["net_power_kW"] == pytest.approx(pin["net_power_kW"], rel=rel), (study_name, case.fluid)
            checked += 1
    assert checked == sum(len(c) for c in pins["cases"].values())
