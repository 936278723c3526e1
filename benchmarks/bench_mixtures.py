"""(j) Cost of zeotropic mixtures: the saturation table each composition needs (built once per
process), a mixture case at a fixed composition against a pure-fluid case of the same study in
the same run, and a case whose composition is optimised.

    python benchmarks/bench_mixtures.py            # studies/mixtures-hot-spring.toml's source and sink

Figures: (1) table build per composition [s] for three pairs at three compositions (a fresh
orcscreen.mixture_properties.Mixture, CoolProp already loaded); (2) a fluid-layout
optimisation (orcscreen.optimize.optimise alone, the table built: warm) of each fixed
composition, as a ratio to the median of the pure components' cases, and the same with the
table's build counted once per case (cold); (3) the composition search of one pair and layout
(orcscreen.composition.optimise_composition, tables built on the way) as a multiple of a
pure-fluid case. Only prints figures; never fails on a time.
"""

from __future__ import annotations

import argparse
import dataclasses
import time
from pathlib import Path

import benchlib as bl

ROOT = Path(__file__).resolve().parent.parent
STUDY = ROOT / "studies" / "mixtures-hot-spring.toml"
PAIRS = (("IsoButane", "Isopentane"), ("Propane", "IsoButane"), ("R245fa", "Isopentane"))
FRACTIONS = (0.3, 0.5, 0.7)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(STUDY), help="a study whose source and sink are used")
    ap.add_argument("--passes", type=int, default=3, help="timed passes of each warm case; the median (default 3)")
    ap.add_argument("--search", action=argparse.BooleanOptionalAction, default=True,
                    help="(3) time one composition search (about 10 s)")
    args = ap.parse_args(argv)

    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.composition import optimise_composition
    from orcscreen.cycles import LAYOUTS
    from orcscreen.mixture_properties import Mixture
    from orcscreen.mixtures import mixture_name
    from orcscreen.optimize import optimise
    from orcscreen.properties import get_fluid
    from orcscreen.study import load_study

    bl.print_header("bench_mixtures (j): the cost of zeotropic mixtures")
    study = load_study(args.study)
    case = next(iter(study.cases()))
    base = case_context(case, fluids.get_info(case.fluid))
    get_fluid("Isopentane")  # CoolProp loaded before any timing

    print("(1) saturation table per composition (target: at most 2 s)")
    builds = []
    for a, b in PAIRS:
        for x in FRACTIONS:
            t0 = time.perf_counter()
            m = Mixture(mixture_name(a, b, x))
            dt = time.perf_counter() - t0
            builds.append(dt)
            print(f"  {a}/{b} x = {x:.1f}: {dt:.3f} s ({len(m._table.lnp)} pressures up to "
                  f"{m.p_sat_max_Pa / m.p_crit_Pa:.2f} p_crit)")
    print(f"  median {bl.median(builds):.3f} s, max {max(builds):.3f} s")

    def warm(layout, fluid) -> float:
        ctx = dataclasses.replace(base, fluid=fluid)
        optimise(LAYOUTS[layout], ctx)  # first pass: memos filled
        times = []
        for _ in range(args.passes):
            t0 = time.perf_counter()
            optimise(LAYOUTS[layout], ctx)
            times.append(time.perf_counter() - t0)
        return bl.median(times)

    print("\n(2) one fluid-layout optimisation: mixture at a fixed composition / pure fluid (target: at most 20x)")
    for layout in ("basic", "recuperated"):
        pure = [warm(layout, get_fluid(f)) for pair in PAIRS for f in pair]
        t_pure = bl.median(pure)
        print(f"  {layout}: pure fluids median {bl.ms(t_pure)}")
        ratios, cold = [], []
        for a, b in PAIRS:
            for x in FRACTIONS:
                name = mixture_name(a, b, x)
                t0 = time.perf_counter()
                fluid = Mixture(name)
                t_table = time.perf_counter() - t0
                t_mix = warm(layout, fluid)
                ratios.append(t_mix / t_pure)
                cold.append((t_mix + t_table) / t_pure)
                print(f"    {a}/{b} x = {x:.1f}: {bl.ms(t_mix)}, {t_mix / t_pure:.2f}x warm; "
                      f"{(t_mix + t_table) / t_pure:.1f}x with its table")
        print(f"  {layout}: warm median {bl.median(ratios):.2f}x (max {max(ratios):.2f}x); with the table built "
              f"for one case {bl.median(cold):.1f}x")

    if args.search:
        print("\n(3) composition search of one pair (scan of 9 and Brent, a table per composition)")
        a, b = PAIRS[0]
        t_pure = warm("basic", get_fluid(a))
        t0 = time.perf_counter()
        opt, x, n, scan = optimise_composition(LAYOUTS["basic"], base, a, b)
        dt = time.perf_counter() - t0
        print(f"  {a}/{b} basic: {dt:.1f} s, {len(scan)} compositions, {n} cycle evaluations, optimum x = {x:.4f}; "
              f"{dt / t_pure:.0f}x a pure case")
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
