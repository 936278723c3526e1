"""(g) Cost of the size-dependent turbine model: a fluid-layout optimisation with the axial
correlation (turbine_model "axial-sp-vr", a fixed point per cycle evaluation) against the same
optimisation with a constant efficiency, on the same cases in the same run.

Builds each case twice, once per model, runs both once (cold: imports, CoolProp fluids, stream
tables), then times ``orcscreen.optimize.optimise`` alone, the two models of one case one after
the other in each pass so that a drift of the machine's speed hits them alike. Per case the
median of the passes is kept. Printed per layout and over all: median time per optimisation,
median evaluations, and over the cases feasible with both models the median of the per-case
time ratios (correlation / constant) and total over total. Only prints figures; never fails on
a time.

    python benchmarks/bench_turbine.py                                  # studies/demo.toml
    python benchmarks/bench_turbine.py --study studies/kiln-exhaust.toml --passes 5
"""

from __future__ import annotations

import argparse
import time
import tomllib
from collections import defaultdict
from pathlib import Path

import benchlib as bl

ROOT = Path(__file__).resolve().parent.parent
MODELS = ("constant", "axial-sp-vr")


def _study_with(raw: dict, model: str):
    """The study of raw with machines.turbine_model = model (and only that model's keys)."""
    from orcscreen.study import study_from_dict
    from orcscreen.turbine import TURBINE_MODELS

    raw = {k: (dict(v) if isinstance(v, dict) else v) for k, v in raw.items()}
    raw["machines"] = {**raw.get("machines", {}), "turbine_model": model}
    for other, cls in TURBINE_MODELS.items():
        if other != model:
            for path in cls.own_keys:
                section, _, key = path.partition(".")
                raw.get(section, {}).pop(key, None)
    return study_from_dict(raw)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(ROOT / "studies" / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--passes", type=int, default=3, help="timed passes; per case the median is kept (default 3)")
    args = ap.parse_args(argv)

    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles import LAYOUTS
    from orcscreen.optimize import optimise

    bl.print_header("bench_turbine (g): the axial turbine correlation against a constant efficiency")
    raw = tomllib.loads(Path(args.study).read_text(encoding="utf-8"))
    studies = {m: _study_with(raw, m) for m in MODELS}
    objects = {m: [(c, LAYOUTS[c.layout], case_context(c, fluids.get_info(c.fluid))) for c in s.cases()]
               for m, s in studies.items()}
    n = len(objects[MODELS[0]])
    print(f"study     {args.study}: {n} cases per model, layouts {', '.join(studies[MODELS[0]].layouts)}")
    results = {}
    for m in MODELS:  # cold pass
        for c, layout, ctx in objects[m]:
            results[(m, c.fluid, c.layout)] = optimise(layout, ctx)
    times: dict[tuple, list[float]] = defaultdict(list)
    for _ in range(args.passes):
        for i in range(n):
            for m in MODELS:
                c, layout, ctx = objects[m][i]
                t0 = time.perf_counter()
                optimise(layout, ctx)
                times[(m, c.fluid, c.layout)].append(time.perf_counter() - t0)
    print(f"timing    {args.passes} timed passes after one untimed pass; per case the median\n")
    med = {k: bl.median(v) for k, v in times.items()}
    ok = {k for k, r in results.items() if not isinstance(r, tuple)}

    def evaluations(k):
        r = results[k]
        return r[2] if isinstance(r, tuple) else r.evaluations

    print(f"{'layout':<16}{'both ok':>8}{'constant ms':>13}{'axial ms':>10}{'evals c/a':>11}"
          f"{'ratio axial/constant: median':>31}{'total':>8}")
    for name in [*studies[MODELS[0]].layouts, "all"]:
        keys = [(f, l) for (m, f, l) in med if m == MODELS[0] and (name == "all" or l == name)]
        both = [k for k in keys if (MODELS[0], *k) in ok and (MODELS[1], *k) in ok]
        if not both:
            continue
        tc = [med[(MODELS[0], *k)] for k in both]
        ta = [med[(MODELS[1], *k)] for k in both]
        ec = bl.median([evaluations((MODELS[0], *k)) for k in both])
        ea = bl.median([evaluations((MODELS[1], *k)) for k in both])
        print(f"{name:<16}{len(both):>8}{bl.median(tc) * 1e3:>13.2f}{bl.median(ta) * 1e3:>10.2f}{f'{ec:.0f}/{ea:.0f}':>11}"
              f"{bl.median([a / c for a, c in zip(ta, tc)]):>31.2f}{sum(ta) / sum(tc):>8.2f}")
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
