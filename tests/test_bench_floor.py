"""bench_floor.py's recording of CoolProp calls is faithful, so that its floor replays what the
engine really asks of CoolProp.

The floor of ``benchmarks/bench_floor.py`` is a replay of the calls recorded during one warm
optimisation. Checked here: the recording changes nothing in the optimisation (same net power,
bit for bit); every recorded update, repeated on a fresh CoolProp ``AbstractState`` of the same
fluid with the phase that was imposed at the time, gives the enthalpy the engine read after it
(reference: CoolProp's low-level interface called directly, Bell et al., Ind. Eng. Chem. Res. 53
(2014) 2498; a general-purpose library from PyPI); the replay returns the recorded values; no
AbstractState is reachable except through a fluid's ``_AS`` (so none escapes the proxies); the
originals are back after a recording, also when the recorded call raises. The operating point
is invented.
"""

import importlib.util
import math
import sys
from pathlib import Path

import pytest

from orcscreen import properties
from orcscreen.optimize import optimise
from orcscreen.study import study_from_dict

BENCH = Path(__file__).resolve().parent.parent / "benchmarks"


def _load(name):
    if str(BENCH) not in sys.path:
        sys.path.insert(0, str(BENCH))  # bench_floor imports benchlib as a sibling
    spec = importlib.util.spec_from_file_location(f"orcscreen_{name}", BENCH / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


bf = _load("bench_floor")
bl = _load("benchlib")

SCENARIO = {
    "source": {"kind": "water", "inlet_temperature_C": 118.0, "mass_flow_kg_s": 10.0, "pressure_bar": 6.0},
    "sink": {"kind": "water", "inlet_temperature_C": 19.0, "temperature_rise_K": 8.0},
    "exchangers": {"pinch_evaporator_K": 8.0, "pinch_condenser_K": 5.0},
    "machines": {"turbine_model": "axial-sp-vr", "pump_efficiency": 0.65, "generator_efficiency": 0.95},
}


def _objects(fluid, layout):
    d = {k: dict(v) for k, v in SCENARIO.items()}
    d["fluids"] = {"include": [fluid]}
    d["cycle"] = {"layouts": [layout]}
    (case,) = list(study_from_dict(d).cases())
    _, lay, ctx = bl.case_objects(case)
    return lay, ctx


@pytest.mark.parametrize("fluid, layout", [("R245fa", "basic"), ("IsoButane", "recuperated")])
def test_recording_is_faithful(fluid, layout):
    lay, ctx = _objects(fluid, layout)
    plain = optimise(lay, ctx)  # cold
    rec, recorded = bf.record(optimise, lay, ctx)
    assert recorded.cycle.W_net_W == plain.cycle.W_net_W
    assert isinstance(ctx.fluid._AS, properties.CP.AbstractState)  # the original is back
    assert rec.updates > 0
    assert bf.replay_mismatches(rec) == 0

    # each update followed by an enthalpy read, redone on a fresh AbstractState
    fresh = {}
    phases = {}
    checked = 0
    for i, (target, name, args, out, raised) in enumerate(rec.calls):
        if name == "specify_phase":
            phases[target] = args[0]
        elif name == "unspecify_phase":
            phases.pop(target, None)
        elif name == "update" and not raised:
            nxt = rec.calls[i + 1] if i + 1 < len(rec.calls) else None
            if nxt is None or nxt[0] is not target or nxt[1] != "hmass":
                continue
            AS = fresh.setdefault(target, properties.CP.AbstractState("HEOS", rec.fluids[target]))
            AS.unspecify_phase()
            if target in phases:
                AS.specify_phase(phases[target])
            AS.update(*args)
            assert math.isclose(AS.hmass(), nxt[3], rel_tol=1e-12, abs_tol=1e-9), (i, args)
            checked += 1
    assert checked > 0


def test_no_state_escapes_the_proxies():
    lay, ctx = _objects("R245fa", "basic")
    optimise(lay, ctx)
    assert bf.states_held_elsewhere() == 0


def test_originals_back_after_a_raise():
    lay, ctx = _objects("R245fa", "basic")
    optimise(lay, ctx)
    real_as = ctx.fluid._AS
    real_sat = ctx.fluid._curves.eval_sat

    def boom():
        ctx.fluid.sat_T(ctx.fluid.T_min_K + 50.123456)  # not memoised yet: goes to CoolProp
        raise RuntimeError("stop")

    with pytest.raises(RuntimeError):
        bf.record(boom)
    assert ctx.fluid._AS is real_as
    assert ctx.fluid._curves.eval_sat is real_sat
