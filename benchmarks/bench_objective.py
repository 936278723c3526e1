"""(h) Cost of a cost objective: a fluid-layout optimisation for the levelised cost of
electricity (or another objective of orcscreen.objectives) against the same optimisation for
net power, on the same cases in the same run.

Builds each case once per objective, runs all once (cold: imports, CoolProp fluids, stream
tables), then times ``orcscreen.optimize.optimise`` alone, the objectives of one case one after
the other in each pass so that a drift of the machine's speed hits them alike. Per case the
median of the passes is kept. Printed per layout and over all: median time per optimisation,
median evaluations, and over the cases feasible with both the median of the per-case time ratios
(cost objective / net power) and total over total. Only prints figures; never fails on a time.

    python benchmarks/bench_objective.py                                # studies/demo.toml, lcoe
    python benchmarks/bench_objective.py --objective specific_investment --passes 5
"""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

import benchlib as bl

ROOT = Path(__file__).resolve().parent.parent
BASE = "net_power"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(ROOT / "studies" / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--objective", default="lcoe", help="the cost objective to time against net power (default lcoe)")
    ap.add_argument("--passes", type=int, default=3, help="timed passes; per case the median is kept (default 3)")
    args = ap.parse_args(argv)

    from orcscreen.study import study_from_dict

    bl.print_header(f"bench_objective (h): objective {args.objective!r} against net power")
    raw = tomllib.loads(Path(args.study).read_text(encoding="utf-8"))
    studies = {}
    for name in (BASE, args.objective):
        study = {k: (dict(v) if isinstance(v, dict) else v) for k, v in raw.items()}
        study["study"] = {**study.get("study", {}), "objective": name}
        if name == "net_present_value":
            study["economics"] = {"electricity_price_per_MWh": 80.0, **study.get("economics", {})}
        studies[name] = study_from_dict(study)
    print(f"study     {args.study}")
    bl.paired_optimisations(studies, args.passes, ("power", "cost"))
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
