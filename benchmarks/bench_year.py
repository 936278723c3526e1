"""(i) Cost of a year of operation: per fluid and layout, the annual evaluation (the design's
hardware rated at every bin of the year, orcscreen.annual.year_figures) as a multiple of one
design optimisation (orcscreen.optimize.optimise) of the same case, in the same run; and the
wall time of a whole screen of the catalogue's fluids over the year through the command line.
(ii) The options, on the same cases and the same footing: the year rated with the best sink
flow in each bin (control "sliding-pressure-best-sink-flow"), and the design searched for the
year (design_for = "year", orcscreen.annual.optimum_for_year, without the year's rating).

    python benchmarks/bench_year.py                       # studies/air-cooled-year.toml
    python benchmarks/bench_year.py --fluids 40 --jobs 2  # the whole-screen figure as well

Only prints figures; never fails on a time.
"""

from __future__ import annotations

import argparse
import subprocess
import tempfile
import time
from pathlib import Path

import benchlib as bl

ROOT = Path(__file__).resolve().parent.parent
STUDY = ROOT / "studies" / "air-cooled-year.toml"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(STUDY), help="a study with a [year] (default studies/air-cooled-year.toml)")
    ap.add_argument("--passes", type=int, default=3, help="timed passes; per case the median (default 3)")
    ap.add_argument("--fluids", type=int, default=0, help="also time a CLI screen of this many catalogue fluids "
                                                          "over the year (0: skip; 40 in the issue)")
    ap.add_argument("--jobs", type=int, default=2, help="worker processes of that screen (default 2)")
    ap.add_argument("--options-every", type=int, default=2, help="(ii) on every n-th case (default 2; 0: skip)")
    args = ap.parse_args(argv)

    from orcscreen import fluids
    from orcscreen.annual import optimum_for_year, year_figures
    from orcscreen.api import case_context
    from orcscreen.figures import result_row
    from orcscreen.cycles import LAYOUTS
    from orcscreen.optimize import optimise
    from orcscreen.study import load_study

    bl.print_header("bench_year (i): a year of operation against one design optimisation")
    study = load_study(args.study)
    print(f"study     {args.study}: {study.n_cases} cases, year {study.year.file}")
    ratios, t_opt_all, t_year_all, options = [], [], [], []
    for case in study.cases():
        info = fluids.get_info(case.fluid)
        layout, ctx = LAYOUTS[case.layout], case_context(case, info)
        opt = optimise(layout, ctx)  # cold pass
        if isinstance(opt, tuple):
            continue
        row = result_row(case.fluid, layout, info, ctx.fluid, ctx.source, ctx.sink, opt.cycle, opt.binding_limit,
                         opt.evaluations, 0.0, ctx.settings)
        year_figures(layout, ctx, opt.cycle, study.year, row)
        t_opt, t_year = [], []
        for _ in range(args.passes):
            t0 = time.perf_counter()
            optimise(layout, ctx)
            t1 = time.perf_counter()
            year_figures(layout, ctx, opt.cycle, study.year, row)
            t2 = time.perf_counter()
            t_opt.append(t1 - t0)
            t_year.append(t2 - t1)
        a, b = bl.median(t_opt), bl.median(t_year)
        t_opt_all.append(a)
        t_year_all.append(b)
        ratios.append(b / a)
        if args.options_every and len(ratios) % args.options_every == 1:
            best = study.year.model_copy(update={"control": "sliding-pressure-best-sink-flow"})
            for_year = study.year.model_copy(update={"design_for": "year"})
            t0 = time.perf_counter()
            year_figures(layout, ctx, opt.cycle, best, row)
            t1 = time.perf_counter()
            optimum_for_year(layout, ctx, opt, for_year)
            t2 = time.perf_counter()
            options.append((case.fluid, case.layout, a, t1 - t0, t2 - t1))
    print(f"\nper case: design optimisation median {bl.median(t_opt_all) * 1e3:.1f} ms, year median "
          f"{bl.median(t_year_all) * 1e3:.1f} ms; year / optimisation: median {bl.median(ratios):.1f}x, "
          f"max {max(ratios):.1f}x, total {sum(t_year_all) / sum(t_opt_all):.1f}x (target <= 50x)")
    if options:
        print(f"\n(ii) options on {len(options)} cases, one pass each, as multiples of the case's design optimisation:")
        for fluid, layout_name, a, t_best, t_design in options:
            print(f"  {fluid:<12} {layout_name:<12} best sink flow year {t_best / a:6.1f}x   design for the year {t_design / a:6.1f}x")
        best_r = [o[3] / o[2] for o in options]
        design_r = [o[4] / o[2] for o in options]
        year_med = bl.median(t_year_all)
        print(f"  median: best-sink-flow year {bl.median(best_r):.1f}x an optimisation "
              f"({bl.median([o[3] for o in options]) / year_med:.1f}x the default year); "
              f"design for the year {bl.median(design_r):.1f}x an optimisation "
              f"(plus the year's rating)")
    if args.fluids:
        raw = bl.read_study_dict(Path(args.study))
        raw["fluids"] = {"include": [f.coolprop_name for f in fluids.select()][: args.fluids]}
        with tempfile.TemporaryDirectory() as tmp:
            study_path = Path(tmp) / "study.toml"
            (Path(tmp) / Path(study.year.file).name).write_bytes(Path(study.year.resolved_path).read_bytes())
            raw["year"] = {**raw.get("year", {}), "file": Path(study.year.file).name}
            bl.write_study(raw, study_path)
            t0 = time.perf_counter()
            done = subprocess.run(bl.orcscreen_command("run", str(study_path), "--out", str(Path(tmp) / "out"),
                                                       "--jobs", str(args.jobs), "--no-report", "--yes"),
                                  capture_output=True, text=True)
            wall = time.perf_counter() - t0
            last = done.stdout.strip().splitlines()[-4:] if done.stdout else [done.stderr[-300:]]
            print(f"\nwhole screen over the year, {args.jobs} jobs: {wall:.1f} s wall (exit {done.returncode})")
            print("  " + "\n  ".join(last))
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
