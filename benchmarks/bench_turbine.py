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
import tomllib
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

    bl.print_header("bench_turbine (g): the axial turbine correlation against a constant efficiency")
    raw = tomllib.loads(Path(args.study).read_text(encoding="utf-8"))
    print(f"study     {args.study}")
    bl.paired_optimisations({m: _study_with(raw, m) for m in MODELS}, args.passes, ("constant", "axial"))
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
