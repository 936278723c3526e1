"""Saturation from the superancillary curves evaluated by orcscreen (orcscreen.properties) and
the on-disk cache of catalogue constants (orcscreen.constants_cache).

References: CoolProp's own iterative phase-equilibrium solver (``Fluid.sat_T_solved`` /
``T_sat_solved_K`` call CoolProp's QT and PQ flashes, which solve the equal-pressure,
equal-Gibbs-energy conditions of the equation of state iteratively, an algorithm independent of
the Chebyshev curves), and CoolProp 8 itself imported the default way, with its superancillaries
built, in a separate process. Steam-table values are checked in test_cycle.py (IAPWS-IF97 via the
``iapws`` package) and critical points against published tables in test_fluids.py.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys

import pytest

from orcscreen import fluids as F
from orcscreen import properties as P
from orcscreen.constants_cache import CACHE_DIR_ENV, ConstantsCache

CATALOGUE_NAMES = sorted({i.coolprop_name for i in F.load_catalogue()})
REDUCED_T = (0.45, 0.6, 0.75, 0.9, 0.97)


def _with_curves(names):
    return [n for n in names if P.get_fluid(n)._saturation_curves() is not None]


def test_most_catalogue_fluids_have_curves():
    """CoolProp 8 ships superancillaries for its pure fluids (CoolProp documentation,
    "Superancillaries"); only pseudo-pure mixtures lack them."""
    missing = sorted(set(CATALOGUE_NAMES) - set(_with_curves(CATALOGUE_NAMES)))
    assert len(missing) <= 6, missing


@pytest.mark.parametrize("name", _with_curves(CATALOGUE_NAMES))
def test_saturation_from_curves_matches_coolprops_iterative_solver(name):
    """p, h', h'', s', s'', v', v'' from the curves agree with CoolProp's iterative VLE solution
    to 1e-8 relative (1e-3 J/kg, 1e-6 J/(kg K) absolute near zero) across the two-phase range;
    the pressure to 5e-7 below T_r = 0.5, where it is a few pascals and the two solutions differ
    by up to 1e-7 (both satisfy equal Gibbs energies to the same ~1e-11 relative: checked by
    hand for D5 and R22; the pressure at the liquid density is ill-conditioned there)."""
    fluid = P.get_fluid(name)
    T_lo = fluid.T_min_K + 1.0
    for Tr in REDUCED_T:
        T = max(Tr * fluid.T_crit_K, T_lo)
        fast, ref = fluid.sat_T(T), fluid.sat_T_solved(T)
        assert fast.p_Pa == pytest.approx(ref.p_Pa, rel=1e-8 if Tr >= 0.5 else 5e-7), (name, T)
        for key, floor in (("hL", 1e-3), ("hV", 1e-3), ("sL", 1e-6), ("sV", 1e-6), ("vL", 0.0), ("vV", 0.0)):
            a, b = getattr(fast, key), getattr(ref, key)
            assert a == pytest.approx(b, rel=1e-8, abs=floor), (name, T, key)


@pytest.mark.parametrize("name", ["n-Pentane", "R245fa", "Isobutane", "R1233zd(E)", "Toluene", "MDM", "Water"])
def test_saturation_temperature_inverts_the_pressure_curve(name):
    """T_sat(p_sat(T)) returns T (1e-9 K) and agrees with CoolProp's PQ flash (1e-7 K)."""
    fluid = P.get_fluid(name)
    for Tr in REDUCED_T:
        T = max(Tr * fluid.T_crit_K, fluid.T_min_K + 1.0)
        p = fluid.sat_T(T).p_Pa
        assert fluid.T_sat_K(p) == pytest.approx(T, abs=1e-9), (name, T)
        assert fluid.T_sat_K(p) == pytest.approx(fluid.T_sat_solved_K(p), abs=1e-7), (name, T)


def test_two_phase_state_is_the_lever_rule_between_saturated_states():
    """h, s, v at quality q are the mass-weighted mean of the saturated states (definition of
    quality) and agree with CoolProp's own QT flash (1e-8 relative)."""
    fluid = P.get_fluid("R245fa")
    T = 360.0
    for q in (0.0, 0.3, 1.0):
        st = fluid.state_Tq(T, q)
        AS = fluid._AS
        AS.update(P.CP.QT_INPUTS, q, T)
        assert st.h == pytest.approx(AS.hmass(), rel=1e-8)
        assert st.s == pytest.approx(AS.smass(), rel=1e-8)
        assert st.v == pytest.approx(1.0 / AS.rhomass(), rel=1e-8)
    with pytest.raises(P.PropertyError):
        fluid.state_Tq(T, 1.2)


_PLAIN_COOLPROP = r"""
import json, sys
import CoolProp.CoolProp as CP
out = {}
for name in sys.argv[1:]:
    AS = CP.AbstractState("HEOS", name)
    AS.update(CP.QT_INPUTS, 1.0, 0.8 * AS.T_critical())
    out[name] = [AS.T_critical(), AS.p_critical(), AS.p(), AS.hmass()]
print(json.dumps(out))
"""


def test_critical_point_and_saturation_equal_coolprop_loaded_the_default_way():
    """Critical point and a saturated state equal what CoolProp 8 gives with its own
    superancillaries (imported the default way in a fresh process): the critical point bit for
    bit, the saturated vapour at 0.8 T_c to 1e-12 relative."""
    names = ["n-Pentane", "R245fa", "MDM", "R1234ze(E)", "CycloPropane", "Methanol", "R152A"]
    env = {k: v for k, v in os.environ.items() if k != P._NO_EAGER_SUPERANC_ENV}
    done = subprocess.run([sys.executable, "-c", _PLAIN_COOLPROP, *names], capture_output=True, text=True,
                          env=env, check=True, timeout=120)
    ref = json.loads(done.stdout.strip().splitlines()[-1])
    for name in names:
        fluid = P.get_fluid(name)
        Tc, pc, p_sat, hV = ref[name]
        assert (fluid.T_crit_K, fluid.p_crit_Pa) == (Tc, pc), name
        sat = fluid.sat_T(0.8 * Tc)
        assert sat.p_Pa == pytest.approx(p_sat, rel=1e-12), name
        assert sat.hV == pytest.approx(hV, rel=1e-12), name


def test_import_prints_nothing_and_leaves_the_environment_alone():
    """CoolProp prints a notice on stdout when its eager build is switched off; orcscreen keeps
    stdout clean (``orcscreen schema`` writes JSON there) and removes the variable again."""
    env = {k: v for k, v in os.environ.items() if k != P._NO_EAGER_SUPERANC_ENV}
    code = f"import os, orcscreen.api; print(repr(os.environ.get({P._NO_EAGER_SUPERANC_ENV!r})))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True, timeout=120)
    assert done.stdout == "None\n"


# -- the on-disk cache --------------------------------------------------------------------
def test_cache_round_trips_floats_exactly_and_survives_a_corrupt_file(tmp_path, monkeypatch):
    """A cached value reads back bit for bit (JSON floats use the shortest round-tripping repr:
    Python documentation, float.__repr__); a corrupt or foreign file is ignored, not fatal."""
    monkeypatch.setenv(CACHE_DIR_ENV, str(tmp_path))
    value = {"T_crit_K": 469.69999987111663, "x": 0.1 + 0.2, "none": None, "text": "dry"}
    calls = []

    def compute():
        calls.append(1)
        return dict(value)

    first = ConstantsCache("probe", "8.0.0-abc")
    assert first.get("Pentane", compute) == value
    first.save()
    second = ConstantsCache("probe", "8.0.0-abc")
    assert second.get("Pentane", compute) == value and len(calls) == 1
    assert ConstantsCache("probe", "8.0.1-def").get("Pentane", compute) == value and len(calls) == 2
    second.path.write_text("{not json", encoding="utf-8")
    assert ConstantsCache("probe", "8.0.0-abc").get("Pentane", compute) == value and len(calls) == 3


def test_cache_in_an_unwritable_place_is_no_error(tmp_path, monkeypatch):
    blocker = tmp_path / "a-file"
    blocker.write_text("x")
    monkeypatch.setenv(CACHE_DIR_ENV, str(blocker / "sub"))  # a folder under a file cannot exist
    cache = ConstantsCache("probe", "b")
    assert cache.get("n", lambda: {"a": 1.5}) == {"a": 1.5}
    cache.save()
    assert not (blocker / "sub").exists()


def test_catalogue_values_from_the_cache_equal_the_computed_ones():
    """The catalogue's equation-of-state columns read from the cache are the computed values."""
    for name in ("R245fa", "n-Pentane", "MDM"):
        cached = F._computed(name)
        fresh = F._compute(name)
        assert set(cached) == set(fresh)
        for key, a in cached.items():
            b = fresh[key]
            assert a == b or (isinstance(a, float) and math.isnan(a) and math.isnan(b)), (name, key)


_PLAIN_FLASH = r"""
import json, sys
import CoolProp.CoolProp as CP
points = json.loads(sys.stdin.read())
out = []
for name, p, y, kind in points:
    try:
        out.append(CP.PropsSI("T", "P", p, kind, y, name))
    except ValueError:
        out.append(None)
print(json.dumps(out))
"""


def test_general_ph_and_ps_flashes_agree_with_coolprop_loaded_the_default_way():
    """state_ph / state_ps without a phase (saturated states from the curves, then the lever
    rule or a phase-imposed solve) give the temperature of CoolProp's own general flash
    (PropsSI, CoolProp imported the default way in a fresh process) to 1e-6 K, from subcooled
    liquid through the two-phase region to superheated vapour; includes R134a at 30 bar, where
    a phase-imposed Newton iteration from the saturated liquid once landed on a spurious root."""
    points, ours = [], []
    for name in ("R134a", "n-Pentane", "R245fa", "n-Hexane"):
        fluid = P.get_fluid(name)
        for p in (0.2 * fluid.p_crit_Pa, 30e5 if name == "R134a" else 0.5 * fluid.p_crit_Pa, 0.8 * fluid.p_crit_Pa):
            sat = fluid.sat_p(p)
            for k in range(13):
                h = sat.hL - 150e3 + k * (sat.hV - sat.hL + 350e3) / 12
                points.append((name, p, h, "H"))
                ours.append(fluid.state_ph(p, h).T_K)
            for k in range(7):
                s = sat.sL - 300.0 + k * (sat.sV - sat.sL + 700.0) / 6
                points.append((name, p, s, "S"))
                ours.append(fluid.state_ps(p, s).T_K)
    env = {k: v for k, v in os.environ.items() if k != P._NO_EAGER_SUPERANC_ENV}
    done = subprocess.run([sys.executable, "-c", _PLAIN_FLASH], input=json.dumps(points), capture_output=True,
                          text=True, env=env, check=True, timeout=300)
    ref = json.loads(done.stdout.strip().splitlines()[-1])
    compared = 0
    for point, T, T_ref in zip(points, ours, ref):
        if T_ref is None:
            continue
        compared += 1
        assert T == pytest.approx(T_ref, abs=1e-6), point
    assert compared >= 0.9 * len(points)


@pytest.mark.parametrize("name", ["CycloHexane", "Neopentane", "CycloPropane"])
def test_a_pressure_floor_below_the_lowest_saturation_pressure_does_not_bind(name):
    """Below the saturation pressure at the equation's lowest temperature (the triple point for
    cyclohexane and neopentane) there is no liquid, so a minimum condensing pressure there is
    no floor: T_sat_floor_K gives T_min_K, while T_sat_K itself refuses the pressure
    (phase-diagram fact, common practice). 0.05 bar is the floor of studies/thermal-oil-loop.toml,
    whose cases with these fluids failed on it once."""
    fluid = P.get_fluid(name)
    p_lowest = fluid.sat_T(fluid.T_min_K).p_Pa
    assert p_lowest > 5000.0
    assert fluid.T_sat_floor_K(5000.0) == fluid.T_min_K
    with pytest.raises(P.PropertyError):
        fluid.T_sat_K(5000.0)
    p = 2.0 * p_lowest
    assert fluid.T_sat_floor_K(p) == fluid.T_sat_K(p) > fluid.T_min_K


def test_a_pressure_limit_below_the_lowest_saturation_pressure_is_infeasible_not_failed():
    """A maximum pressure of 0.5 bar is below the lowest pressure of cyclopropane's equation
    (3.4 bar at 273 K): no evaporation is possible, which is an infeasible case with its reason,
    not a property failure (common practice: a limit that cannot be met is infeasibility)."""
    from orcscreen.api import run_case
    from orcscreen.study import study_from_dict

    raw = {"source": {"kind": "water", "inlet_temperature_C": 160.0, "mass_flow_kg_s": 10.0, "pressure_bar": 10.0},
           "sink": {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 8.0},
           "cycle": {"layouts": ["basic"]}, "limits": {"max_pressure_bar": 0.5},
           "fluids": {"include": ["CycloPropane"]}}
    (case,) = list(study_from_dict(raw).cases())
    row = run_case(case)["row"]
    assert row["status"] == "infeasible", row.get("reason")
    assert "max pressure" in row["reason"]
