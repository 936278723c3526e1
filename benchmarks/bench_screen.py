"""(a) Whole-catalogue screen of one demo source, basic and recuperated layouts, warm, one core.

Runs every case of the study once (the cold pass: imports, CoolProp fluids, stream tables), then
times a second pass case by case: ``orcscreen.api.run_case`` (the whole case: streams,
optimisation, the discretised result, the row and the chart detail) and, in a separate pass,
``orcscreen.optimize.optimise`` alone (objects built outside the timer), each with
time.perf_counter (wall) and time.process_time (CPU). Prints the median and 90th percentile
per fluid-layout optimisation, the total wall time and the evaluations per case. Only prints
figures; never fails on a time.

    python benchmarks/bench_screen.py                      # studies/demo.toml
    python benchmarks/bench_screen.py --passes 3 --csv /tmp/screen.csv
"""

from __future__ import annotations

import argparse
import csv
from collections import Counter
from pathlib import Path

import benchlib as bl


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(bl.STUDIES / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--passes", type=int, default=1, help="timed passes; per case the median is kept (default 1)")
    ap.add_argument("--limit", type=int, default=None, help="time only N cases, evenly spread (default all)")
    ap.add_argument("--clear-memo", action="store_true",
                    help="empty each fluid's saturation memo before each timed call (no reuse of the first pass)")
    ap.add_argument("--csv", metavar="PATH", help="write the per-case figures to a CSV file")
    args = ap.parse_args(argv)

    from orcscreen.study import load_study

    bl.print_header("bench_screen (a): whole-catalogue screen, warm, one core")
    study = load_study(args.study)
    cases = bl.evenly_spaced(list(study.cases()), args.limit)
    n_fluids = len({c.fluid for c in cases})
    layouts = sorted({c.layout for c in cases})
    print(f"study     {args.study}: {len(cases)} cases ({n_fluids} fluids; layouts {', '.join(layouts)}"
          f"{'' if args.limit is None else f'; evenly spread subsample of {study.n_cases}'})")
    res = bl.time_orcscreen(cases, passes=args.passes, clear_memo=args.clear_memo)
    rows = res["rows"]
    print("status    " + ", ".join(f"{k} {v}" for k, v in sorted(Counter(r["status"] for r in rows).items())))
    print(f"timing    {args.passes} timed pass(es) after one untimed first pass; per case the median of the passes;"
          f" saturation memo {'cleared before each call' if args.clear_memo else 'kept (default)'}")
    print()
    print(f"first pass (cold), all cases, wall                 {res['cold_s']:8.2f} s")
    print(f"warm pass of run_case, all cases, wall             {res['pass_wall_s']:8.2f} s")
    print(f"warm pass of optimise alone, all cases, wall       {res['opt_pass_wall_s']:8.2f} s")
    print()
    by_layout: dict[str, list[int]] = {}
    for i, c in enumerate(cases):
        by_layout.setdefault(c.layout, []).append(i)
    for key, label in (("opt", "optimise()"), ("run", "run_case()")):
        print(bl.spread_line(f"{label} per case, wall", res[f"{key}_wall"]))
        print(bl.spread_line(f"{label} per case, CPU (process_time)", res[f"{key}_cpu"]))
        for layout, idx in by_layout.items():
            print(bl.spread_line(f"  {layout}, wall", [res[f"{key}_wall"][i] for i in idx]))
        print()
    ev = [r["evaluations"] for r in rows if r["status"] == "ok"]
    if ev:
        print(f"evaluations per feasible case   median {bl.median(ev):.0f}   p90 {bl.percentile(ev, 90):.0f}"
              f"   min {min(ev)}   max {max(ev)}   (cycle evaluations by the optimiser, incl. the discretised ones)")
        opt_total = sum(res["opt_wall"][i] for i, r in enumerate(rows) if r["status"] == "ok")
        print(f"mean time per evaluation        {opt_total / sum(ev) * 1e3:.3f} ms (optimise wall / evaluations, feasible cases)")
    slow = sorted(range(len(cases)), key=lambda i: res["opt_wall"][i], reverse=True)[:5]
    print("\nslowest optimisations:")
    for i in slow:
        r = rows[i]
        print(f"  {r['fluid']:<16} {r['layout']:<12} {res['opt_wall'][i] * 1e3:8.2f} ms  {r['status']:<10}"
              f" evaluations {r['evaluations']}  {r['binding_limit'] or r['reason'][:60]}")
    if args.csv:
        with open(args.csv, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["fluid", "layout", "status", "net_power_kW", "evaluations", "run_case_wall_s",
                        "run_case_cpu_s", "optimise_wall_s", "optimise_cpu_s"])
            for i, r in enumerate(rows):
                w.writerow([r["fluid"], r["layout"], r["status"], r["net_power_kW"], r["evaluations"],
                            res["run_wall"][i], res["run_cpu"][i], res["opt_wall"][i], res["opt_cpu"][i]])
        print(f"\nper-case figures: {Path(args.csv)}")
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
