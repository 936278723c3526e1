"""Tests of orcscreen.study: schema v1 defaults, sweep expansion, case keys, every error class.

The expected defaults and allowed ranges are those of the lead's contract (contract.md section 1,
the specification of the study file); the sweep rule "stop included when it falls on the grid,
{start = 110, stop = 150, step = 5} is 9 values" is DESIGN section 4.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from orcscreen import fluids as fluid_catalogue
from orcscreen import study as st
from orcscreen.study import StudyError, case_key, json_schema, load_study, study_from_dict, study_hash

ROOT = Path(__file__).resolve().parent.parent
STUDIES = sorted((ROOT / "studies").glob("*.toml"))

SOURCE = {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kg_s": 10}
TWO = {"include": ["R245fa", "n-Pentane"]}


def make(**sections):
    """A study dict with a hot-water source, two fluids and the two subcritical layouts unless the
    caller says otherwise."""
    d = {"source": dict(SOURCE), "fluids": dict(TWO), "cycle": {"layouts": ["basic", "recuperated"]}}
    d.update(sections)
    return study_from_dict(d, origin="t.toml")


def errors_of(d, **kw) -> list[str]:
    with pytest.raises(StudyError) as info:
        study_from_dict(d, origin="t.toml", **kw)
    assert all(line.startswith("t.toml: ") for line in info.value.errors), info.value.errors
    return info.value.errors


def one_error(d, **kw) -> str:
    errs = errors_of(d, **kw)
    assert len(errs) == 1, errs
    return errs[0]


# -- defaults (contract section 1 table) ------------------------------------------------------

CONTRACT_DEFAULTS = {
    "study": {"name": "unnamed study", "objective": "net_power", "case_time_limit_s": 60.0},
    "source": {"pressure_bar": 10.0, "min_outlet_temperature_C": None, "cp_kJ_kgK": None,
               "cp_slope_kJ_kgK2": 0.0, "composition": None, "composition_basis": "mole",
               "fluid": None, "inlet_quality": None},
    "sink": {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 10.0,
             "pressure_bar": 2.0, "pump_head_m": 15.0, "aux_efficiency": 0.75, "fan_pressure_drop_Pa": None,
             "aux_power_per_kW_rejected": None},
    "exchangers": {"pinch_evaporator_K": 10.0, "pinch_condenser_K": 5.0, "pinch_recuperator_K": 10.0,
                   "recuperator_effectiveness": 0.8},
    "machines": {"turbine_model": "axial-sp-vr", "turbine_efficiency": 0.80, "max_turbine_stages": 3,
                 "pump_efficiency": 0.70, "generator_efficiency": 1.0, "motor_efficiency": 1.0},
    "limits": {"max_pressure_bar": None, "max_reduced_pressure": 0.9, "max_supercritical_reduced_pressure": 1.3,
               "min_turbine_outlet_quality": 0.9, "max_volume_ratio_per_stage": 10.0,
               "min_condensing_pressure_bar": None},
    "cycle": {"superheat_K": 0.0, "max_superheat_K": 50.0, "subcooling_K": 0.0, "reheat_temperature_C": None},
    "economics": {"cost_model": "turbine-by-size-2014", "currency": "EUR", "cost_year": 2023, "cost_index": {},
                  "exchange_rates": {}, "discount_rate": 0.07, "lifetime_years": 25, "om_fraction": 0.02,
                  "full_load_hours": 7500.0, "electricity_price_per_MWh": None},
    "year": {"file": None, "design_sink_temperature_C": None, "control": "sliding-pressure", "bin_width_K": 1.0,
             "design_for": "design-point",
             "resolved_path": None, "sha256": None},
}


def test_every_default_of_the_contract_is_filled_in_the_case():
    s = study_from_dict({"source": SOURCE, "fluids": {"include": ["R245fa"]}})
    cases = [c.as_dict() for c in s.cases()]
    assert [c["layout"] for c in cases] == ["basic", "recuperated", "transcritical"]  # default layouts
    case = cases[0]
    assert set(case) == {"study", "source", "sink", "exchangers", "machines", "limits", "cycle", "economics", "year",
                         "fluid", "layout", "sweep"}
    for section, expected in CONTRACT_DEFAULTS.items():
        for key, value in expected.items():
            assert case[section][key] == value, f"{section}.{key}"
    assert case["cycle"]["layout"] == "basic" and "layouts" not in case["cycle"]
    assert case["sweep"] == {}
    assert case["fluid"] == "R245fa"
    json.dumps(case, allow_nan=False)  # plain JSON


def test_fluids_default_is_the_whole_catalogue():
    s = study_from_dict({"source": SOURCE})
    assert list(s.fluids) == [i.coolprop_name for i in fluid_catalogue.select()]


@pytest.mark.parametrize("kind, pressure, cp", [
    ("water", 10.0, None), ("brine", 10.0, 3.8), ("thermal-oil", 5.0, 2.3), ("flue-gas", 1.01325, None),
])
def test_kind_dependent_source_defaults(kind, pressure, cp):
    src = dict(SOURCE, kind=kind, inlet_temperature_C=150, pressure_bar=None)
    src.pop("pressure_bar")
    s = make(source=src)
    assert s.source.pressure_bar == pressure
    assert s.source.cp_kJ_kgK == cp


def test_flue_gas_default_composition_is_the_stream_models_natural_gas_exhaust():
    from orcscreen.streams import methane_flue_gas_mole_fractions

    s = make(source={"kind": "flue-gas", "inlet_temperature_C": 300, "mass_flow_kg_s": 5})
    assert s.source.composition == pytest.approx(methane_flue_gas_mole_fractions())
    assert sum(s.source.composition.values()) == pytest.approx(1.0)


def test_given_flue_gas_composition_is_normalised():
    comp = {"N2": 0.70, "O2": 0.10, "CO2": 0.10, "H2O": 0.095}  # sums to 0.995
    s = make(source={"kind": "flue-gas", "inlet_temperature_C": 300, "mass_flow_kg_s": 5, "composition": comp})
    assert sum(s.source.composition.values()) == pytest.approx(1.0, abs=1e-12)
    assert s.source.composition["N2"] == pytest.approx(0.70 / 0.995)


def test_air_sink_default_pressure_is_atmospheric():
    assert make(sink={"kind": "air"}).sink.pressure_bar == 1.01325


def test_single_strings_stand_for_lists_and_optimize_spelling():
    s = make(cycle={"layouts": "recuperated", "superheat_K": "optimize"}, fluids={"include": "R245fa"})
    assert s.layouts == ("recuperated",)
    assert s.cycle.superheat_K == "optimise"
    assert s.fluids == ("R245fa",)


def test_layouts_of_the_schema_are_the_engines_layouts():
    """The study's allowed layouts must be the engine's registry (one registry, no drift)."""
    from orcscreen.cycles import LAYOUTS

    assert set(st.LAYOUTS) == set(LAYOUTS)


def test_safety_classes_of_the_schema_are_the_catalogues():
    assert st.SAFETY_CLASSES == fluid_catalogue.SAFETY_CLASSES


# -- sweeps -----------------------------------------------------------------------------------

def axis(spec):
    s = make(sweep={"exchangers.pinch_evaporator_K": spec})
    return s.sweep_axes["exchangers.pinch_evaporator_K"]


def test_range_includes_stop_on_the_grid_design_example():
    s = make(sweep={"source.inlet_temperature_C": {"start": 110, "stop": 150, "step": 5}})
    assert s.sweep_axes["source.inlet_temperature_C"] == [110.0 + 5 * i for i in range(9)]


def test_range_stop_off_the_grid_is_not_included():
    assert axis({"start": 5, "stop": 12, "step": 2}) == [5.0, 7.0, 9.0, 11.0]


def test_range_stop_within_tolerance_counts_as_on_the_grid():
    assert axis({"start": 5, "stop": 15 - 1e-12, "step": 5}) == [5.0, 10.0, 15.0]
    assert axis({"start": 5, "stop": 15 - 1e-6, "step": 5}) == [5.0, 10.0]


def test_range_values_are_exact_decimals():
    # 0.1 + 2 * 0.1 is 0.30000000000000004 in binary floating point; the sweep gives 0.3.
    assert axis({"start": 0.1, "stop": 0.7, "step": 0.1}) == [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7]


def test_range_of_one_value_when_stop_equals_start():
    assert axis({"start": 8, "stop": 8, "step": 1}) == [8.0]


def test_list_sweep_is_kept_as_given_and_coerced_to_float():
    assert axis([12, 4, 8.5]) == [12.0, 4.0, 8.5]


QUOTED = """
[source]
kind = "water"
inlet_temperature_C = 130
mass_flow_kg_s = 10
[fluids]
include = ["R245fa", "n-Pentane"]
[cycle]
layouts = ["recuperated", "basic"]
[sweep]
"source.inlet_temperature_C" = { start = 120, stop = 140, step = 10 }
"sink.inlet_temperature_C" = [15, 25]
"""

NESTED = """
[source]
kind = "water"
inlet_temperature_C = 130
mass_flow_kg_s = 10
[fluids]
include = ["R245fa", "n-Pentane"]
[cycle]
layouts = ["recuperated", "basic"]
[sweep.source]
inlet_temperature_C = { start = 120, stop = 140, step = 10 }
[sweep.sink]
inlet_temperature_C = [15, 25]
"""

DOTTED = NESTED.replace("[sweep.source]\ninlet_temperature_C", "[sweep]\nsource.inlet_temperature_C").replace(
    "[sweep.sink]\ninlet_temperature_C", "sink.inlet_temperature_C")


def test_quoted_nested_and_dotted_forms_give_the_same_cases(tmp_path):
    cases = []
    for name, text in (("quoted", QUOTED), ("nested", NESTED), ("dotted", DOTTED)):
        path = tmp_path / f"{name}.toml"
        path.write_text(text)
        cases.append(list(load_study(path).cases()))
    assert cases[0] == cases[1] == cases[2]
    assert len(cases[0]) == 3 * 2 * 2 * 2


def test_case_order_is_sweeps_in_file_order_then_fluids_then_layouts():
    s = study_from_dict(tomllib.loads(QUOTED))
    got = [(c.sweep["source.inlet_temperature_C"], c.sweep["sink.inlet_temperature_C"],
            c.fluid, c.layout) for c in s.cases()]
    fluids = [i.coolprop_name for i in fluid_catalogue.select(include=["R245fa", "n-Pentane"])]
    expected = [(t, k, f, lay) for t in (120.0, 130.0, 140.0) for k in (15.0, 25.0)
                for f in fluids for lay in ("recuperated", "basic")]
    assert got == expected
    assert s.n_cases == len(got) == 24
    assert s.n_points == 6
    assert list(s.sweep_axes) == ["source.inlet_temperature_C", "sink.inlet_temperature_C"]


def test_sweep_values_are_applied_to_the_sections():
    s = study_from_dict(tomllib.loads(QUOTED))
    for c in s.cases():
        # both the typed sections and the plain form carry the swept values
        assert c.source.inlet_temperature_C == c.sweep["source.inlet_temperature_C"]
        assert c.sink.inlet_temperature_C == c.sweep["sink.inlet_temperature_C"]
        d = c.as_dict()
        assert d["source"]["inlet_temperature_C"] == d["sweep"]["source.inlet_temperature_C"]
        assert d["sink"]["inlet_temperature_C"] == d["sweep"]["sink.inlet_temperature_C"]


def test_case_expansion_is_deterministic():
    a = study_from_dict(tomllib.loads(QUOTED))
    b = study_from_dict(tomllib.loads(QUOTED))
    assert list(a.cases()) == list(b.cases()) == list(a.cases())
    assert [case_key(c) for c in a.cases()] == [case_key(c) for c in b.cases()]


def test_cases_do_not_share_mutable_sections():
    s = make(source={"kind": "flue-gas", "inlet_temperature_C": 300, "mass_flow_kg_s": 5})
    first, second = [c.as_dict() for c in list(s.cases())[:2]]
    first["source"]["composition"]["N2"] = 0.0
    first["cycle"]["subcooling_K"] = 99.0
    assert second["source"]["composition"]["N2"] > 0.5
    assert second["cycle"]["subcooling_K"] == 0.0


def test_superheat_sweep_may_mix_numbers_and_optimise():
    s = make(sweep={"cycle.superheat_K": [0, 10, "optimise"]})
    assert s.sweep_axes["cycle.superheat_K"] == [0.0, 10.0, "optimise"]


def test_numeric_paths_are_every_float_setting_outside_fluids():
    assert "source.inlet_temperature_C" in st.NUMERIC_PATHS
    assert "cycle.superheat_K" in st.NUMERIC_PATHS
    assert "limits.max_pressure_bar" in st.NUMERIC_PATHS
    assert not any(p.startswith("fluids.") for p in st.NUMERIC_PATHS)
    assert "source.kind" not in st.NUMERIC_PATHS and "cycle.layouts" not in st.NUMERIC_PATHS


# -- case keys and study hash -----------------------------------------------------------------

def test_case_key_is_16_hex_and_stable_across_loads_and_int_float_spelling():
    a = list(make().cases())[0]
    b = list(make(source=dict(SOURCE, inlet_temperature_C=130.0, mass_flow_kg_s=10.0)).cases())[0]
    assert case_key(a) == case_key(b)
    assert len(case_key(a)) == 16 and int(case_key(a), 16) >= 0


@pytest.mark.parametrize("section, key, value", [
    ("exchangers", "pinch_evaporator_K", 10.5),
    ("source", "inlet_temperature_C", 130.000001),
    ("machines", "turbine_efficiency", 0.81),
    ("cycle", "superheat_K", "optimise"),
    ("limits", "max_pressure_bar", 25.0),
    ("cycle", "subcooling_K", 2.0),
])
def test_case_key_changes_with_any_input(section, key, value):
    base = list(make().cases())[0].as_dict()
    changed = json.loads(json.dumps(base))
    changed[section][key] = value
    assert case_key(changed) != case_key(base)


def test_case_key_differs_between_fluids_and_layouts_of_a_study():
    keys = [case_key(c) for c in make().cases()]
    assert len(set(keys)) == len(keys) == 4


def test_case_key_ignores_the_study_name():
    a = list(make().cases())[0]
    b = list(make(study={"name": "renamed"}).cases())[0]
    assert case_key(a) == case_key(b)


def test_case_key_ignores_the_case_time_limit():
    """More time per case changes no physics: finished cases are not recomputed."""
    a = list(make().cases())[0]
    b = list(make(study={"case_time_limit_s": 600.0}).cases())[0]
    assert case_key(a) == case_key(b)


def test_extending_a_sweep_keeps_the_keys_of_computed_points():
    short = make(sweep={"source.inlet_temperature_C": [120, 130]})
    longer = make(sweep={"source.inlet_temperature_C": [120, 130, 140]})
    old = {case_key(c) for c in short.cases()}
    new = [case_key(c) for c in longer.cases()]
    assert old <= set(new) and len(set(new) - old) == 4


def test_a_case_under_another_sweep_shape_gets_its_own_key():
    # the same physics as a single point and as a point of a sweep: the stored sweep columns
    # differ, so the keys must differ too
    single = list(make().cases())[0].as_dict()
    swept = list(make(sweep={"source.inlet_temperature_C": [130]}).cases())[0].as_dict()
    assert swept["sweep"] == {"source.inlet_temperature_C": 130.0}
    assert {k: v for k, v in swept.items() if k != "sweep"} == {k: v for k, v in single.items() if k != "sweep"}
    assert case_key(swept) != case_key(single)


def test_case_key_and_study_hash_change_with_the_coolprop_version(monkeypatch):
    s = make()
    case = list(s.cases())[0]
    key, digest = case_key(case), study_hash(s)
    monkeypatch.setattr("orcscreen.properties.coolprop_version", lambda: "0.0.0-other")
    assert case_key(case) != key
    assert study_hash(s) != digest


def test_study_hash_covers_settings_sweep_and_fluids():
    base = study_hash(make())
    assert study_hash(make()) == base
    assert study_hash(make(study={"name": "other"})) != base
    assert study_hash(make(sweep={"source.inlet_temperature_C": [130, 140]})) != base
    assert study_hash(make(fluids={"include": ["R245fa"]})) != base


# -- JSON Schema ------------------------------------------------------------------------------

def test_json_schema_has_sections_units_and_allowed_values():
    schema = json_schema()
    props = schema["properties"]
    for section in ("study", "source", "sink", "exchangers", "machines", "limits", "cycle", "fluids",
                    "sweep", "schema_version"):
        assert section in props
    source = schema["$defs"]["SourceSection"]["properties"]
    assert "[kg/s]" in source["mass_flow_kg_s"]["description"]
    assert source["mass_flow_kg_s"]["exclusiveMinimum"] == 0
    assert "Allowed:" in source["kind"]["description"]
    assert set(schema["$defs"]["SourceSection"]["required"]) == {"kind", "inlet_temperature_C", "mass_flow_kg_s"}
    sweep = props["sweep"]["properties"]
    assert "source.inlet_temperature_C" in sweep and "inlet_temperature_C" in sweep["source"]["properties"]


@pytest.mark.parametrize("path", STUDIES, ids=lambda p: p.name)
def test_json_schema_accepts_every_shipped_study(path):
    """Checked with the jsonschema package (an independent Draft 2020-12 validator)."""
    jsonschema = pytest.importorskip("jsonschema")
    schema = json_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    jsonschema.Draft202012Validator(schema).validate(tomllib.loads(path.read_text()))


def test_json_schema_rejects_what_the_loader_rejects():
    jsonschema = pytest.importorskip("jsonschema")
    validator = jsonschema.Draft202012Validator(json_schema())
    for bad in ({"source": dict(SOURCE, mass_flow_kg_s=-1)},
                {"source": dict(SOURCE, mass_flow_kgs=1)},
                {"source": SOURCE, "sweep": {"source.kind": [1]}},
                {"source": SOURCE, "sweep": {"source": {"inlet_temperature_C": {"start": 1, "stop": 2}}}},
                {"sink": {}}):
        assert not validator.is_valid(bad), bad


# -- errors -----------------------------------------------------------------------------------

def test_unknown_key_names_the_nearest_valid_key():
    msg = one_error({"source": {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kgs": 10}})
    assert "source.mass_flow_kgs" in msg and "did you mean source.mass_flow_kg_s" in msg


def test_unknown_section_names_the_nearest_section():
    msg = one_error({"source": SOURCE, "exchanger": {"pinch_evaporator_K": 5}})
    assert "[exchanger]" in msg and "[exchangers]" in msg


@pytest.mark.parametrize("section, key, value, allowed", [
    ("source", "mass_flow_kg_s", -1, "> 0"),
    ("source", "inlet_temperature_C", 1500, "-50 to 1000"),
    ("machines", "turbine_efficiency", 0, "(0, 1]"),
    ("machines", "pump_efficiency", 1.01, "(0, 1]"),
    ("machines", "generator_efficiency", -0.5, "(0, 1]"),
    ("exchangers", "pinch_evaporator_K", 0, "> 0"),
    ("exchangers", "pinch_recuperator_K", -1, "> 0"),
    ("exchangers", "recuperator_effectiveness", 0, "(0, 1]"),
    ("limits", "max_reduced_pressure", 1, "(0, 1)"),
    ("limits", "max_reduced_pressure", 0, "(0, 1)"),
    ("limits", "min_turbine_outlet_quality", 1.2, "[0, 1]"),
    ("sink", "temperature_rise_K", 0, "> 0"),
    ("cycle", "subcooling_K", -1, ">= 0"),
    ("cycle", "superheat_K", -5, '"optimise"'),
    ("fluids", "max_gwp", -1, ">= 0"),
])
def test_out_of_range_values_name_path_value_and_what_is_allowed(section, key, value, allowed):
    d = {"source": dict(SOURCE), "fluids": dict(TWO)}
    d.setdefault(section, {})[key] = value
    msg = one_error(d)
    assert f"{section}.{key} = {value}" in msg and allowed in msg


@pytest.mark.parametrize("value, shown", [("10", '"10"'), (True, "true"), ([1, 2], "[1, 2]")])
def test_wrong_types_are_refused_not_coerced(value, shown):
    msg = one_error({"source": dict(SOURCE, mass_flow_kg_s=value)})
    assert f"source.mass_flow_kg_s = {shown}: wrong type" in msg


def test_source_colder_than_sink_plus_pinches():
    msg = one_error({"source": dict(SOURCE, inlet_temperature_C=44.9), "fluids": TWO})
    assert "source.inlet_temperature_C = 44.9" in msg and "45 °C" in msg
    make(source=dict(SOURCE, inlet_temperature_C=45.1))  # just above: accepted


def test_source_colder_than_sink_is_checked_at_every_sweep_point():
    d = {"source": dict(SOURCE, inlet_temperature_C=75), "fluids": TWO,
         "sweep": {"sink.inlet_temperature_C": [10, 40, 50, 60], "exchangers.pinch_condenser_K": [3, 6]}}
    msg = one_error(d)
    # need T_sink + 10 + 10 + pinch_cond < 75: fails at (50, 6), (60, 3) and (60, 6); (50, 6) comes first
    assert "sink.inlet_temperature_C = 50.0" in msg and "exchangers.pinch_condenser_K = 6.0" in msg
    assert "3 of 8 points" in msg


def test_sweep_of_source_temperature_below_the_sink_is_refused():
    msg = one_error({"source": SOURCE, "fluids": TWO,
                     "sweep": {"source.inlet_temperature_C": {"start": 40, "stop": 100, "step": 10}}})
    assert "source.inlet_temperature_C = 40.0" in msg and "1 of 7 points" in msg


def test_hot_water_above_its_boiling_point_is_refused_with_the_saturation_pressure():
    # IAPWS-95 saturation pressure of water at 180 °C: 10.026 bar (IAPWS R6-95 / steam tables,
    # e.g. 1.0026 MPa; from memory) -> 10 bar is too low, 10.1 bar is enough.
    msg = one_error({"source": dict(SOURCE, inlet_temperature_C=180, pressure_bar=10), "fluids": TWO})
    assert "source.pressure_bar = 10.0" in msg and "10.03 bar" in msg
    make(source=dict(SOURCE, inlet_temperature_C=180, pressure_bar=10.1))


def test_cooling_water_below_freezing_is_refused_but_air_is_fine():
    msg = one_error({"source": SOURCE, "fluids": TWO, "sink": {"inlet_temperature_C": -5}})
    assert "sink.inlet_temperature_C = -5" in msg and "freeze" in msg
    make(sink={"kind": "air", "inlet_temperature_C": -5})


def test_min_outlet_must_be_below_inlet():
    msg = one_error({"source": dict(SOURCE, min_outlet_temperature_C=130), "fluids": TWO})
    assert "source.min_outlet_temperature_C = 130" in msg


def test_keys_that_do_not_apply_to_the_kind():
    assert "only for kind brine or thermal-oil" in one_error({"source": dict(SOURCE, cp_kJ_kgK=4.2), "fluids": TWO})
    assert "only for kind flue-gas" in one_error({"source": dict(SOURCE, composition={"N2": 1.0}), "fluids": TWO})
    assert 'only for kind fluid' in one_error({"source": dict(SOURCE, inlet_quality=1.0), "fluids": TWO})


def test_fluid_source_name_checked_against_coolprop_with_close_matches():
    src = {"kind": "fluid", "inlet_temperature_C": 150, "mass_flow_kg_s": 2, "inlet_quality": 1.0}
    msg = one_error({"source": dict(src, fluid="Watr"), "fluids": TWO})
    assert 'source.fluid = "Watr"' in msg and "Water" in msg
    s = make(source=dict(src, fluid="water"))
    assert s.source.fluid == "Water"  # CoolProp's spelling
    assert s.source.pressure_bar is None  # saturated: pressure follows from the temperature


def test_unknown_fluid_names_get_close_matches():
    msg = one_error({"source": SOURCE, "fluids": {"include": ["R245fb"]}})
    assert "R245fb" in msg and "R245fa" in msg


def test_fluid_filter_that_leaves_no_fluid():
    msg = one_error({"source": SOURCE, "fluids": {"include": ["hfc"], "max_gwp": 0}})
    assert "leaves no fluid" in msg and '"max_gwp": 0.0' in msg


def test_unknown_layout_and_safety_class():
    assert 'cycle.layouts[0] = "trilateral"' in one_error({"source": SOURCE, "cycle": {"layouts": ["trilateral"]}})
    assert 'cycle.layouts = []' in one_error({"source": SOURCE, "cycle": {"layouts": []}})
    assert "listed twice" in one_error({"source": SOURCE, "cycle": {"layouts": ["basic", "basic"]}})
    msg = one_error({"source": SOURCE, "fluids": {"safety_classes": ["A4"]}})
    assert 'fluids.safety_classes[0] = "A4"' in msg and '"A2L"' in msg


@pytest.mark.parametrize("sweep, fragments", [
    ({"source.inlet_temp_C": [1]}, ['sweep."source.inlet_temp_C"', "did you mean source.inlet_temperature_C"]),
    ({"source.kind": ["water"]}, ["source.kind is not a numeric setting", "source.mass_flow_kg_s"]),
    ({"fluids.max_gwp": [1, 10]}, ["fluids.max_gwp is not a numeric setting"]),
    ({"source": {"inlet_temp_C": [1]}}, ["sweep.source.inlet_temp_C", "did you mean source.inlet_temperature_C"]),
    ({"source.inlet_temperature_C": {"start": 110, "stop": 150, "step": 0}}, [".step = 0", "> 0"]),
    ({"source.inlet_temperature_C": {"start": 110, "stop": 150, "step": -5}}, [".step = -5", "> 0"]),
    ({"source.inlet_temperature_C": {"start": 150, "stop": 110, "step": 5}}, [".stop = 110", "stop >= start"]),
    ({"source.inlet_temperature_C": {"start": 110, "stop": 150}}, [".step: required"]),
    ({"source.inlet_temperature_C": {"start": 110, "stop": 150, "stepp": 5}}, [".stepp", "did you mean step"]),
    ({"source.inlet_temperature_C": {"start": "110", "stop": 150, "step": 5}}, ['.start = "110"', "wrong type"]),
    ({"source.inlet_temperature_C": {"start": 900, "stop": 1100, "step": 100}}, [".stop = 1100", "-50 to 1000"]),
    ({"source.inlet_temperature_C": 120}, ["= 120", "a list of values or a {start, stop, step} range"]),
    ({"source.inlet_temperature_C": []}, ["= []", "at least one value"]),
    ({"machines.turbine_efficiency": [0.8, 1.1]}, ['"machines.turbine_efficiency"[1] = 1.1', "(0, 1]"]),
    ({"sink.inlet_temperature_C": [10, 20, 10]}, ["listed twice"]),
    ({"sink.inlet_temperature_C": [10], "sink": {"inlet_temperature_C": [20]}}, ["swept twice"]),
])
def test_sweep_errors(sweep, fragments):
    msg = one_error({"source": SOURCE, "fluids": TWO, "sweep": sweep})
    for fragment in fragments:
        assert fragment in msg


def test_more_than_a_million_cases_needs_allow_huge_and_is_not_expanded_to_count():
    d = {"source": SOURCE, "fluids": {"include": ["R245fa"]}, "cycle": {"layouts": ["basic"]},
         "sweep": {"source.mass_flow_kg_s": {"start": 1, "stop": 1_000_000, "step": 1},
                   "sink.temperature_rise_K": [8, 10]}}
    msg = one_error(d)
    assert "2,000,000 cases" in msg and "--yes" in msg
    s = study_from_dict(d, allow_huge=True)
    assert s.n_cases == 2_000_000
    assert s.sweep_sizes == {"source.mass_flow_kg_s": 1_000_000, "sink.temperature_rise_K": 2}
    # exactly one million is allowed without asking
    d["sweep"]["sink.temperature_rise_K"] = [8]
    assert study_from_dict(d).n_cases == 1_000_000


def test_several_faults_are_all_reported_one_line_each():
    errs = errors_of({"source": {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kg_s": -1},
                      "machines": {"turbine_efficiency": 2}, "exchangers": {"pinch_condenser_K": 0},
                      "sweep": {"source.inlet_temp_C": [1]}})
    assert len(errs) == 4
    assert all("\n" not in e for e in errs)
    assert "source.mass_flow_kg_s = -1" in errs[0]


def test_schema_version_other_than_1():
    assert "schema_version = 2" in one_error({"schema_version": 2, "source": SOURCE})


def test_missing_source():
    assert "[source] section is required" in one_error({"sink": {}})


def test_toml_syntax_error_has_line_and_column(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text('[source]\nkind = "water"\ninlet_temperature_C = = 3\n')
    with pytest.raises(StudyError) as info:
        load_study(path)
    msg = str(info.value)
    assert str(path) in msg and "line 3" in msg and "column" in msg


def test_missing_file(tmp_path):
    with pytest.raises(StudyError, match="study file not found"):
        load_study(tmp_path / "absent.toml")


@pytest.mark.parametrize("path", STUDIES, ids=lambda p: p.name)
def test_shipped_studies_load(path):
    s = load_study(path)
    assert s.n_cases == sum(1 for _ in s.cases())
    assert s.origin == str(path)


def test_swept_source_keys_must_apply_to_the_kind():
    msg = one_error({"source": SOURCE, "fluids": TWO, "sweep": {"source.cp_kJ_kgK": [3.5, 4.0]}})
    assert 'sweep."source.cp_kJ_kgK"' in msg and "only for kind brine or thermal-oil" in msg
    s = make(source={"kind": "brine", "inlet_temperature_C": 130, "mass_flow_kg_s": 10},
             sweep={"source.cp_kJ_kgK": [3.5, 4.0]})
    assert [c.source.cp_kJ_kgK for c in s.cases()][::4] == [3.5, 4.0]
