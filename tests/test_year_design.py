"""The design chosen for the year (orcscreen/year_design.py, [year] design_for = "year").

Checked against: the optimiser's own model on a dense grid (the year's energy of 41 designs
across the evaporation window, each rated on every bin: the search is within 0.05 % of the best
of them, the project's bar for every optimiser), and conservation of the year's hours and
hour-weighted mean temperature by the merged bins.
"""

from __future__ import annotations

import numpy as np
import pytest

from orcscreen import fluids, offdesign as od, year_design as yd
from orcscreen.api import case_context, run_case
from orcscreen.cycles import LAYOUTS
from orcscreen.optimize import optimise
from orcscreen.study import study_from_dict
from orcscreen.year import Bin

YEAR = "sink_temperature_C,hours\n-2,800\n6,2000\n14,3000\n22,2160\n30,800\n"


def _study(tmp_path, design_for: str) -> dict:
    (tmp_path / "year.csv").write_text(YEAR, encoding="utf-8")
    return {"source": {"kind": "brine", "inlet_temperature_C": 130.0, "mass_flow_kg_s": 30.0},
            "sink": {"kind": "air", "temperature_rise_K": 12.0}, "fluids": {"include": ["IsoButane"]},
            "cycle": {"layouts": ["basic"]}, "exchangers": {"pinch_evaporator_K": 6.0, "pinch_condenser_K": 8.0},
            "year": {"file": "year.csv", "design_sink_temperature_C": 14.0, "design_for": design_for},
            "study": {"objective": "annual_energy"}}


def test_merged_bins_keep_the_hours_and_the_mean_temperature():
    bins = [Bin(float(t), float(h)) for t, h in zip(range(-5, 35), np.linspace(50, 400, 40))]
    few = yd.representative_bins(bins, 8)
    assert len(few) == 8
    assert sum(b.hours for b in few) == pytest.approx(sum(b.hours for b in bins), rel=1e-12)
    mean = sum(b.sink_temperature_C * b.hours for b in bins) / sum(b.hours for b in bins)
    assert sum(b.sink_temperature_C * b.hours for b in few) / sum(b.hours for b in few) == pytest.approx(mean, rel=1e-12)
    assert all(a.sink_temperature_C < b.sink_temperature_C for a, b in zip(few, few[1:]))
    assert yd.representative_bins(bins[:5], 8) == bins[:5]  # few bins: used as they are


def test_the_year_design_is_within_a_dense_grid_of_designs(tmp_path):
    """Five bins (so the search rates every bin): the energy of the design found is within
    0.05 % of the best of 41 designs spread over the evaporation window, and not below the
    design-point optimum's year."""
    study = study_from_dict(_study(tmp_path, "year"), origin=str(tmp_path / "study.toml"))
    case = next(iter(study.cases()))
    ctx = case_context(case, fluids.get_info(case.fluid))
    L = LAYOUTS["basic"]
    bins = [Bin(t, h) for t, h in ((-2, 800), (6, 2000), (14, 3000), (22, 2160), (30, 800))]
    point = optimise(L, ctx).cycle
    design, n, limit, note, year = yd.design_for_year(L, ctx, point, bins, "sliding-pressure")

    def energy(r):
        return od.annual_energy(L, ctx, od.hardware_of(r, ctx), bins, r.W_net_W).energy_MWh

    w = L.window(ctx, L.hot_side.variable, {})
    grid = []
    for x in np.linspace(w.lo, w.hi, 41):
        r = L.evaluate(ctx, {**point.variables, L.hot_side.variable: float(x)}, exact=True)
        if r.ok:
            grid.append(energy(r))
    assert len(grid) > 10
    assert energy(design) >= max(grid) * (1.0 - 5e-4)
    assert energy(design) >= energy(point) * (1.0 - 1e-12)
    assert year.energy_MWh == energy(design)  # the year it returns is the chosen design's, on every bin
    assert note.startswith("designed for the year") and n > 5


def test_the_study_option_designs_for_the_year(tmp_path):
    """Through the study: the option is reported on the case, and its year is not below the
    design-point design's (same bins, same control)."""
    rows = {}
    for design_for in ("design-point", "year"):
        raw = _study(tmp_path, design_for)
        rows[design_for] = run_case(next(iter(study_from_dict(raw, origin=str(tmp_path / "study.toml")).cases())))["row"]
    a, b = rows["design-point"], rows["year"]
    assert a["status"] == b["status"] == "ok"
    assert "designed for the year" in b["warnings"] and "designed for the year" not in a["warnings"]
    assert b["annual_energy_MWh"] >= a["annual_energy_MWh"] * (1.0 - 1e-9)
    assert b["net_power_kW"] <= a["net_power_kW"] * (1.0 + 1e-9)  # the design point's optimum is the design point's best
