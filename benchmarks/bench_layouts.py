"""(f) Cost of each layout's optimisation as a ratio to the basic layout on the same fluids.

Runs the study's cases once (cold: imports, CoolProp fluids, stream tables), then times
``orcscreen.optimize.optimise`` alone case by case, alternating the layouts of one fluid within
each pass so that a drift of the machine's speed hits them alike. Per case the median of the
passes is kept; per layout the script prints the median time, the evaluations and, over the
fluids where both the layout and the basic layout are feasible, the median and the total of the
per-fluid time ratios to the basic layout. Only prints figures; never fails on a time.

    python benchmarks/bench_layouts.py                              # 150 °C brine, 9 fluids
    python benchmarks/bench_layouts.py --study tests/layout_studies/oil-300.toml --passes 5
"""

from __future__ import annotations

import argparse
import time
from collections import defaultdict

import benchlib as bl

#: The default scenario: a 150 °C geothermal brine (invented) with fluids that have both
#: subcritical and transcritical candidates there, every layout.
DEFAULT_STUDY = {
    "source": {"kind": "brine", "inlet_temperature_C": 150.0, "mass_flow_kg_s": 30.0, "pressure_bar": 10.0},
    "sink": {"kind": "water", "inlet_temperature_C": 20.0, "temperature_rise_K": 8.0},
    "exchangers": {"pinch_evaporator_K": 6.0, "pinch_condenser_K": 5.0},
    "machines": {"turbine_model": "constant", "turbine_efficiency": 0.82, "pump_efficiency": 0.7},
    "fluids": {"include": ["R134a", "R1234yf", "R227ea", "n-Propane", "IsoButane", "R1234ze(E)", "R152a",
                           "n-Butane", "Ammonia"]},
}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=None, help="study file (default: a 150 °C brine, every layout)")
    ap.add_argument("--passes", type=int, default=3, help="timed passes; per case the median is kept (default 3)")
    args = ap.parse_args(argv)

    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles import LAYOUTS
    from orcscreen.optimize import optimise
    from orcscreen.study import load_study, study_from_dict

    bl.print_header("bench_layouts (f): each layout's optimisation against the basic layout")
    if args.study:
        study = load_study(args.study)
    else:
        study = study_from_dict({**DEFAULT_STUDY, "cycle": {"layouts": list(LAYOUTS)}})
    cases = list(study.cases())
    objects = [(c, LAYOUTS[c.layout], case_context(c, fluids.get_info(c.fluid))) for c in cases]
    print(f"study     {args.study or 'built-in 150 °C brine'}: {len(cases)} cases, layouts {', '.join(study.layouts)}")
    results = {}
    for c, layout, ctx in objects:  # cold pass
        results[(c.fluid, c.layout)] = optimise(layout, ctx)
    times: dict[tuple, list[float]] = defaultdict(list)
    for _ in range(args.passes):
        for c, layout, ctx in objects:
            t0 = time.perf_counter()
            optimise(layout, ctx)
            times[(c.fluid, c.layout)].append(time.perf_counter() - t0)
    print(f"timing    {args.passes} timed passes after one untimed pass; per case the median\n")
    med = {k: bl.median(v) for k, v in times.items()}
    ok = {k for k, r in results.items() if not isinstance(r, tuple)}
    print(f"{'layout':<28}{'feasible':>9}{'median ms':>11}{'evaluations':>13}{'ratio to basic: median':>25}{'total':>8}")
    for name in study.layouts:
        keys = [k for k in med if k[1] == name]
        feas = [k for k in keys if k in ok]
        ev = [results[k].evaluations for k in feas]
        pairs = [(med[k], med[(k[0], "basic")]) for k in feas if (k[0], "basic") in ok]
        ratio_med = bl.median([a / b for a, b in pairs]) if pairs else float("nan")
        ratio_tot = sum(a for a, _ in pairs) / sum(b for _, b in pairs) if pairs else float("nan")
        print(f"{name:<28}{len(feas):>5}/{len(keys):<3}{bl.median([med[k] for k in feas]) * 1e3 if feas else float('nan'):>11.2f}"
              f"{bl.median(ev) if ev else float('nan'):>13.0f}{ratio_med:>25.2f}{ratio_tot:>8.2f}")
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
