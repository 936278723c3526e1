"""The kink search of the optimiser (orcscreen.optimize._outlet_kink) against a dense grid.

Where the source has a lowest outlet temperature, the heater's flow is the smaller of the flow
that cools the source to that limit and the flow the pinch allows, so the net power has a kink
where the two are equal (orcscreen.exchangers.heater_flow). The test scenario is the invented
tests/layout_studies/brine-170.toml (brine at 170 °C, reinjection at no less than 70 °C); the
reference is a dense grid of the same (closed-form) model: no published value is involved.
"""

from pathlib import Path

import tomllib

import numpy as np
import pytest

from orcscreen import fluids
from orcscreen import optimize as opt
from orcscreen.api import case_context
from orcscreen.cycles import LAYOUTS
from orcscreen.exchangers import SOURCE_OUTLET_LIMIT
from orcscreen.study import study_from_dict

STUDY = Path(__file__).resolve().parent / "layout_studies" / "brine-170.toml"
#: The closed-form model's own noise in net power [relative] (see the first test).
NOISE = 5e-5


def _objective(fluid: str, layout_name: str, fixed: dict, outlet_limit: bool = True):
    raw = tomllib.loads(STUDY.read_text(encoding="utf-8"))
    if not outlet_limit:
        del raw["source"]["min_outlet_temperature_C"]
    case = next(c for c in study_from_dict(raw).cases() if c.fluid == fluid and c.layout == layout_name)
    ctx, layout = case_context(case, fluids.get_info(case.fluid)), LAYOUTS[layout_name]
    inner = layout.variables(ctx)[0]
    return ctx, layout, inner, (lambda: opt._Objective(layout, ctx, inner, fixed, exact=False))


@pytest.mark.parametrize("fluid, p_r", [("IsoButane", 1.0825), ("R152A", 1.2), ("n-Butane", 1.1)])
def test_kink_is_where_the_source_leaves_at_its_limit_and_beats_a_dense_grid(fluid, p_r):
    """Transcritical layout at a fixed heater pressure, turbine inlet temperature free: the
    point found sits where the source leaves at its lowest outlet temperature (to 1e-4 K), its
    net power is at least the best of 2,001 points over the 3 K bracket and Brent's bounded
    search's to within the model's own noise (NOISE: the condensing temperature is settled
    to optimize.COND_TOL_SEARCH_K during a search, which moves the net power by up to a few
    1e-5 with the starting guess), and it took fewer evaluations than Brent's search."""
    ctx, layout, inner, make = _objective(fluid, "transcritical", {"heater_reduced_pressure": p_r})
    probe = make()
    w = layout.window(ctx, inner.name, probe.fixed)
    grid = np.linspace(w.lo, w.hi, 41)
    x0 = float(grid[int(np.argmax([probe.power(float(x)) for x in grid]))])
    a, b = max(w.lo, x0 - 1.5), min(w.hi, x0 + 1.5)
    obj = make()
    x = opt._outlet_kink(obj, a, x0, b, 0.02)
    assert x is not None, "a kink between the source outlet limit and the heater pinch was expected"
    r = obj(x)
    assert abs(r.T_source_out_K - ctx.source.T_out_min_K) < 1e-4, r.T_source_out_K - ctx.source.T_out_min_K
    dense = make()
    best = max(dense.power(float(t)) for t in np.linspace(a, b, 2001))
    assert obj.power(x) >= best * (1.0 - NOISE), (obj.power(x), best)
    brent = make()
    x_brent = opt._refine(brent.power, a, b, 0.02)
    assert obj.power(x) >= brent.power(x_brent) * (1.0 - NOISE), (obj.power(x), brent.power(x_brent))
    assert obj.n < brent.n, (obj.n, brent.n)


def test_kink_search_declines_without_a_kink_and_without_an_outlet_limit():
    """No answer (the caller's Brent search goes on) when both ends of the bracket are held by
    the same limit, and when the source has no lowest outlet temperature."""
    ctx, layout, inner, make = _objective("IsoButane", "transcritical", {"heater_reduced_pressure": 1.0825})
    obj = make()
    # well below the kink the source outlet limit holds everywhere
    assert all(obj(x).pinch_location == SOURCE_OUTLET_LIMIT for x in (411.5, 413.0, 414.5))
    assert opt._outlet_kink(obj, 411.5, 413.0, 414.5, 0.02) is None
    _, _, _, make_free = _objective("IsoButane", "transcritical", {"heater_reduced_pressure": 1.0825}, outlet_limit=False)
    free = make_free()
    assert free.ctx.source.T_out_min_K is None
    assert opt._outlet_kink(free, 415.0, 418.0, 421.0, 0.02) is None
    assert free.n == 0  # declined before any evaluation
