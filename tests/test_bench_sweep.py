"""The whole-process benchmark's generated study is the sweep the requirement names.

``benchmarks/bench_sweep.py`` times orcscreen against the hand-written baseline on "a 135-case
sweep of 15 fluids x 9 source temperatures"; its figures mean that only if the generated study
has those cases, every one inside the baseline's scope (hot water, cooling water, fixed
superheat, constant turbine efficiency) and the hot water liquid at the highest source
temperature. Reference for the last: CoolProp called directly (IAPWS-95 water, Bell et al.,
Ind. Eng. Chem. Res. 53 (2014) 2498), saturation temperature at the study's source pressure.
"""

import importlib.util
import sys
from pathlib import Path

import pytest
from CoolProp.CoolProp import PropsSI

from orcscreen import fluids
from orcscreen.study import load_study

BENCH = Path(__file__).resolve().parent.parent / "benchmarks"


def _load(name: str, alias: str):
    spec = importlib.util.spec_from_file_location(alias, BENCH / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def bench(tmp_path_factory):
    sys.path.insert(0, str(BENCH))  # bench_sweep imports benchlib by name, as when run as a script
    try:
        module = _load("bench_sweep", "orcscreen_bench_sweep")
        baseline = _load("baseline", "orcscreen_bench_sweep_baseline")
        raw, names, temps = module.sweep_study(len(module.FLUIDS), 9)
        path = tmp_path_factory.mktemp("sweep") / "sweep.toml"
        import benchlib

        benchlib.write_study(raw, path)
    finally:
        sys.path.remove(str(BENCH))
    return module, baseline, load_study(path), names, temps


def test_sweep_has_15_fluids_by_9_source_temperatures(bench):
    module, _, study, names, temps = bench
    cases = list(study.cases())
    assert study.n_cases == len(cases) == 135
    assert sorted({c.fluid for c in cases}) == sorted(module.FLUIDS) == sorted(names)
    assert len(set(module.FLUIDS)) == 15
    assert sorted({c.sweep["source.inlet_temperature_C"] for c in cases}) == pytest.approx(
        [100, 110, 120, 130, 140, 150, 160, 170, 180])
    assert {c.layout for c in cases} == {"basic"}
    for name in module.FLUIDS:  # catalogue pure fluids
        info = fluids.get_info(name)
        assert info.coolprop_name and "&" not in info.coolprop_name


def test_every_case_is_in_the_baselines_scope(bench):
    _, baseline, study, _, _ = bench
    for c in study.cases():
        info = fluids.get_info(c.fluid)
        inp = baseline.inputs_from_case(c.as_dict(), info.coolprop_name, info.max_temperature_C)  # raises Unsupported if not
        assert inp.recuperated is False
        assert inp.superheat_K == 0.0


def test_source_water_stays_liquid_at_the_hottest_point(bench):
    _, _, study, _, temps = bench
    T_sat_C = PropsSI("T", "P", study.source.pressure_bar * 1e5, "Q", 0, "Water") - 273.15
    assert max(temps) < T_sat_C - 10.0
