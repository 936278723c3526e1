"""Issue 15, item 2: Cost of an optimised superheat: a fluid-layout optimisation with ``cycle.superheat_K =
"optimise"`` (the superheat an outer free variable, up to ``cycle.max_superheat_K``) against the
same case with the study's fixed superheat, on the same cases in the same run.

Builds each case twice, once per setting, runs both once (cold: imports, CoolProp fluids, stream
tables), then times ``orcscreen.optimize.optimise`` alone, the two settings of one case one
after the other in each pass so that a drift of the machine's speed hits them alike. Per case
the median of the passes is kept. Printed per layout (basic is the issue's target, the others
extra) and over all: median time per optimisation, median evaluations, and over the cases
feasible with both settings the median of the per-case time ratios (optimised / fixed) and
total over total. Only prints figures; never fails on a time.

    python benchmarks/bench_superheat.py                                # studies/demo.toml
    python benchmarks/bench_superheat.py --study studies/kiln-exhaust.toml --passes 5
"""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

import benchlib as bl

ROOT = Path(__file__).resolve().parent.parent
OPTIMISE = "optimise"


def _studies(raw: dict) -> tuple[dict, float]:
    """The two variants of a study, {"fixed": Study, "optimised": Study}, and the fixed superheat
    [K]: the study's own, or the default 0 K where the study leaves it out or already optimises."""
    from orcscreen.study import study_from_dict

    fixed = raw.get("cycle", {}).get("superheat_K", 0.0)
    if fixed == OPTIMISE:
        fixed = 0.0
    out = {}
    for name, value in (("fixed", fixed), ("optimised", OPTIMISE)):
        study = {k: (dict(v) if isinstance(v, dict) else v) for k, v in raw.items()}
        study["cycle"] = {**study.get("cycle", {}), "superheat_K": value}
        out[name] = study_from_dict(study)
    return out, float(fixed)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(ROOT / "studies" / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--passes", type=int, default=3, help="timed passes; per case the median is kept (default 3)")
    args = ap.parse_args(argv)

    bl.print_header("bench_superheat (issue 15 item 2): an optimised superheat against the study's fixed superheat")
    raw = tomllib.loads(Path(args.study).read_text(encoding="utf-8"))
    studies, fixed = _studies(raw)
    print(f"study     {args.study}; fixed superheat {fixed:g} K against superheat_K = \"optimise\""
          f" (up to {studies['optimised'].cycle.max_superheat_K:g} K)")
    bl.paired_optimisations(studies, args.passes, ("fixed", "opt"))
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
