"""The benchmark's hand-written baseline computes the same cycles as orcscreen's engine.

bench_baseline.py reports a speed-up and a net-power difference against
``benchmarks/baseline.py``; that comparison is honest only if the baseline is the same model.
Here both evaluate the same fixed cycles (same fluid, layout, evaporation temperature, settings)
and must agree on the net power within 0.1 % (the baseline's 50-segment profiles and orcscreen's
discretised profiles place their points differently), on the condensing temperature within
0.01 K and on the feasibility verdict.

Reference: the baseline takes every property from CoolProp's high-level PropsSI interface
(Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498; a general-purpose library from PyPI), not
from orcscreen's property layer (low-level states, phase-imposed flashes, tabulated water), and
checks the pinches on its own 51-point profiles. The operating points are invented.
"""

import importlib.util
import sys
from pathlib import Path

import pytest

from orcscreen import fluids
from orcscreen.api import case_context
from orcscreen.cycles import LAYOUTS
from orcscreen.study import study_from_dict

BENCH = Path(__file__).resolve().parent.parent / "benchmarks"


def _load_baseline():
    spec = importlib.util.spec_from_file_location("orcscreen_bench_baseline", BENCH / "baseline.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


baseline = _load_baseline()

SCENARIO = {
    "source": {"kind": "water", "inlet_temperature_C": 125.0, "mass_flow_kg_s": 10.0, "pressure_bar": 6.0},
    "sink": {"kind": "water", "inlet_temperature_C": 18.0, "temperature_rise_K": 8.0},
    "exchangers": {"pinch_evaporator_K": 8.0, "pinch_condenser_K": 5.0},
    "machines": {"turbine_model": "constant", "turbine_efficiency": 0.8, "pump_efficiency": 0.65, "generator_efficiency": 0.95},
}


def _case(fluid, layout, superheat_K=0.0, min_outlet_C=None):
    d = {k: dict(v) for k, v in SCENARIO.items()}
    d["fluids"] = {"include": [fluid]}
    d["cycle"] = {"layouts": [layout], "superheat_K": superheat_K}
    if min_outlet_C is not None:
        d["source"]["min_outlet_temperature_C"] = min_outlet_C
    (case,) = list(study_from_dict(d).cases())
    return case


def _both(case, T_evap_C):
    info = fluids.get_info(case.fluid)
    T = T_evap_C + 273.15
    r = LAYOUTS[case.layout].evaluate(case_context(case, info), {"evaporation_temperature_K": T}, exact=True)
    b = baseline.evaluate(baseline.inputs_from_case(case.as_dict(), info.coolprop_name, info.max_temperature_C), T)
    return r, b


@pytest.mark.parametrize(
    "fluid, layout, T_evap_C, superheat_K, min_outlet_C",
    [
        ("R245fa", "basic", 85.0, 0.0, None),  # bubble-point pinch, dry fluid
        ("n-Pentane", "recuperated", 80.0, 0.0, None),  # recuperator active
        ("IsoButane", "basic", 78.0, 6.0, None),  # superheater zone
        ("R1233zd(E)", "recuperated", 90.0, 0.0, 90.0),  # source outlet limit sets the flow
        ("R134a", "basic", 60.0, 0.0, None),  # wet-ish fluid, feasible expansion
    ],
)
def test_baseline_agrees_with_engine_on_fixed_cycles(fluid, layout, T_evap_C, superheat_K, min_outlet_C):
    r, b = _both(_case(fluid, layout, superheat_K, min_outlet_C), T_evap_C)
    assert r.ok and b.ok, (r.reason, b.reason)
    assert b.W_net_W == pytest.approx(r.W_net_W, rel=1e-3)
    assert b.T_cond_K == pytest.approx(r.T_cond_K, abs=0.01)
    assert b.m_wf_kg_s == pytest.approx(r.m_wf_kg_s, rel=1e-3)
    if layout == "recuperated":
        assert b.Q_rec_W == pytest.approx(r.Q_rec_W, rel=1e-3)
    if min_outlet_C is not None:
        assert r.pinch_location == "source outlet limit" and b.limit == "source outlet limit"


def test_baseline_and_engine_agree_on_a_wet_expansion():
    # Propylene from saturated vapour at 83 °C expands into the two-phase region below x = 0.9
    # (a wet fluid: its saturated-vapour line has a negative slope, common practice).
    r, b = _both(_case("Propylene", "basic"), 83.0)
    assert not r.ok and not b.ok
    assert r.limit == b.limit == "turbine outlet quality"


def test_zone_points_put_the_saturation_corners_on_the_grid():
    h = baseline.zone_points([0.0, 30.0, 230.0, 250.0])
    assert len(h) == baseline.N_SEGMENTS + 1
    assert 30.0 in h and 230.0 in h
    assert h[0] == 0.0 and h[-1] == 250.0
    assert all(b > a for a, b in zip(h[:-1], h[1:]))
