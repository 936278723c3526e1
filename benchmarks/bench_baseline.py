"""(b) orcscreen against a straightforward hand-written baseline of the same model, same cases, same run.

The baseline (``benchmarks/baseline.py``) uses CoolProp's high-level PropsSI for every
property, 50-segment exchanger profiles at every evaluation, Brent's root finder for the
condensing temperature, and a coarse scan plus scipy's bounded Brent search over the
evaporation temperature between the same bounds as orcscreen. Both are timed warm, case by
case, on one core in this process. Prints the speed-up (baseline median / orcscreen median, and
total / total; and, because the machine's speed can drift over the minutes the baseline takes,
the same with orcscreen timed again right before each baseline case), the largest relative difference in net power and the number of cases where
orcscreen's net power is below the baseline's by more than 0.05 %. Only prints figures.

Scope of the baseline: hot-water sources and cooling-water sinks, fixed superheat; other cases
of the study are skipped and counted.

    python benchmarks/bench_baseline.py                 # every case of studies/demo.toml
    python benchmarks/bench_baseline.py --limit 10      # 10 cases, evenly spread
"""

from __future__ import annotations

import argparse
import csv
import math
import sys
import time
from collections import Counter

import baseline as base  # first: CoolProp loads the default way (superancillaries built) for the baseline
import benchlib as bl

SHORTFALL_BAR = 5e-4  # 0.05 %: the accuracy bar


def constant_turbine(study):
    """The study with machines.turbine_model = "constant" (the baseline's model)."""
    from orcscreen.study import study_from_dict

    raw = study.model_dump(mode="python", by_alias=True)
    raw["machines"]["turbine_model"] = "constant"
    raw["sweep"] = study.sweep_spec
    return study_from_dict(raw, origin=study.origin)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(bl.STUDIES / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--limit", type=int, default=None, help="run N cases, evenly spread over the study (default all)")
    ap.add_argument("--n-scan", type=int, default=base.N_SCAN, help=f"baseline coarse scan points (default {base.N_SCAN})")
    ap.add_argument("--xatol", type=float, default=base.XATOL_K, help=f"baseline Brent tolerance [K] (default {base.XATOL_K})")
    ap.add_argument("--csv", metavar="PATH", help="write the per-case figures to a CSV file")
    args = ap.parse_args(argv)

    from orcscreen.cycles.subcritical import evaporation_window
    from orcscreen.optimize import optimise
    from orcscreen.study import load_study

    bl.print_header("bench_baseline (b): orcscreen against a hand-written PropsSI baseline")
    # the baseline's turbine has a constant efficiency: both sides run that model
    study = constant_turbine(load_study(args.study))
    supported, skipped = [], Counter()
    for c in study.cases():
        try:
            base.inputs_from_case(c.as_dict(), c.fluid)
            supported.append(c)
        except base.Unsupported as exc:
            skipped[str(exc).split(":")[0]] += 1
    cases = bl.evenly_spaced(supported, args.limit)
    print(f"study     {args.study}: {study.n_cases} cases, {len(supported)} in the baseline's scope"
          f"{'' if not skipped else ' (skipped: ' + ', '.join(f'{k} x{v}' for k, v in skipped.items()) + ')'}")
    print(f"cases     {len(cases)}{'' if args.limit is None else ' (evenly spread subsample)'}")
    print(f"baseline  PropsSI everywhere, {base.N_SEGMENTS} segments per exchanger, brentq on T_cond, "
          f"scan of {args.n_scan} + bounded Brent (xatol {args.xatol} K)")
    print()

    # orcscreen, warm
    res = bl.time_orcscreen(cases)
    rows = res["rows"]

    # baseline: inputs and window outside the timer; one untimed evaluation per fluid to warm PropsSI
    prepared = []
    for c in cases:
        info, layout, ctx = bl.case_objects(c)
        inp = base.inputs_from_case(c.as_dict(), info.coolprop_name, info.max_temperature_C)
        w = evaporation_window(ctx, float(ctx.settings.superheat_K))
        prepared.append((inp, w.lo, w.hi))
    warmed = set()
    for inp, T_lo, T_hi in prepared:
        if inp.fluid not in warmed and T_hi > T_lo:
            base.evaluate(inp, 0.5 * (T_lo + T_hi))
            warmed.add(inp.fluid)
    b_wall, b_cpu, b_opt, o_wall_here = [], [], [], []
    objects = [bl.case_objects(c) for c in cases]
    t_start = time.perf_counter()
    for k, (inp, T_lo, T_hi) in enumerate(prepared):
        # orcscreen again on this case right before the baseline: the machine's speed drifts over
        # the minutes the baseline takes, and a ratio of neighbours in time is immune to that
        _, layout, ctx = objects[k]
        w0 = time.perf_counter()
        try:
            optimise(layout, ctx)
        except Exception:  # noqa: BLE001 - an infeasible or failed case is timed as it is
            pass
        o_wall_here.append(time.perf_counter() - w0)
        w0, c0 = time.perf_counter(), time.process_time()
        try:
            opt = base.optimise(inp, T_lo, T_hi, n_scan=args.n_scan, xatol_K=args.xatol)
        except ValueError as exc:  # a PropsSI failure: recorded on the case
            opt = base.Optimum(base.Cycle(False, "failed", f"PropsSI: {exc}"), 0, 0)
        b_cpu.append(time.process_time() - c0)
        b_wall.append(time.perf_counter() - w0)
        b_opt.append(opt)
        if (k + 1) % 10 == 0 or k + 1 == len(prepared):
            el = time.perf_counter() - t_start
            print(f"  baseline {k + 1}/{len(prepared)} cases, {el:.0f} s, about {el / (k + 1) * (len(prepared) - k - 1):.0f} s to go",
                  file=sys.stderr, flush=True)

    # accuracy
    both, only_o, only_b = [], [], []
    for i, (r, o) in enumerate(zip(rows, b_opt)):
        ok_o, ok_b = r["status"] == "ok", o.cycle.ok
        if ok_o and ok_b:
            W_o, W_b = r["net_power_kW"] * 1e3, o.cycle.W_net_W
            both.append((i, (W_o - W_b) / W_b))
        elif ok_o:
            only_o.append(i)
        elif ok_b:
            only_b.append(i)
    feas = [i for i, _ in both]

    print(bl.spread_line("orcscreen optimise() per case, wall", [res["opt_wall"][i] for i in feas]))
    print(bl.spread_line("orcscreen run_case() per case, wall", [res["run_wall"][i] for i in feas]))
    print(bl.spread_line("baseline optimise per case, wall", [b_wall[i] for i in feas]))
    print(bl.spread_line("baseline optimise per case, CPU", [b_cpu[i] for i in feas]))
    print(bl.spread_line("orcscreen optimise() per case, CPU", [res["opt_cpu"][i] for i in feas]))
    print("(feasible cases of both only)")
    if feas:
        med_b = bl.median(b_wall[i] for i in feas)
        tot_b = sum(b_wall[i] for i in feas)
        for key, label in (("opt", "optimise()"), ("run", "run_case() (whole case, incl. chart detail)")):
            med_o = bl.median(res[f"{key}_wall"][i] for i in feas)
            tot_o = sum(res[f"{key}_wall"][i] for i in feas)
            print(f"speed-up against orcscreen {label}: median/median {med_b / med_o:8.1f} x   total/total {tot_b / tot_o:8.1f} x")
        ratios = [b_wall[i] / o_wall_here[i] for i in feas]
        print(f"speed-up, interleaved (orcscreen optimise() timed again right before each baseline case): "
              f"median of the per-case ratios {bl.median(ratios):8.1f} x   total/total "
              f"{tot_b / sum(o_wall_here[i] for i in feas):8.1f} x")
        ev = [b_opt[i].evaluations for i in feas]
        calls = sum(b_opt[i].propssi_calls for i in feas)
        print(f"baseline evaluations per case: median {bl.median(ev):.0f}, max {max(ev)}; "
              f"PropsSI calls per evaluation {calls / sum(ev):.0f}; "
              f"{tot_b / calls * 1e6:.0f} us per PropsSI call incl. the arithmetic around it")
        ev_o = [rows[i]["evaluations"] for i in feas]
        print(f"orcscreen evaluations per case: median {bl.median(ev_o):.0f}, max {max(ev_o)}")
    print()
    print(f"status    feasible in both {len(both)}, only orcscreen {len(only_o)}, only the baseline {len(only_b)}, "
          f"neither {len(cases) - len(both) - len(only_o) - len(only_b)}")
    if both:
        i_max, d_max = max(both, key=lambda t: abs(t[1]))
        low = [(i, d) for i, d in both if d < -SHORTFALL_BAR]
        print(f"net power: largest relative difference |orcscreen - baseline| / baseline = {abs(d_max):.2e}"
              f" ({rows[i_max]['fluid']}, {rows[i_max]['layout']}; orcscreen {'higher' if d_max > 0 else 'lower'})")
        print(f"net power: cases with orcscreen lower than the baseline by more than {SHORTFALL_BAR:.2%}: {len(low)}")
        print(f"net power: orcscreen higher in {sum(d > 0 for _, d in both)} cases, lower in {sum(d < 0 for _, d in both)}")
        print("largest differences:")
        for i, d in sorted(both, key=lambda t: abs(t[1]), reverse=True)[:5]:
            r, o = rows[i], b_opt[i].cycle
            print(f"  {r['fluid']:<16} {r['layout']:<12} orcscreen {r['net_power_kW']:10.4f} kW at {r['evaporation_temperature_C']:7.3f} °C"
                  f" ({r['binding_limit']}); baseline {o.W_net_W / 1e3:10.4f} kW at {o.T_evap_K - 273.15:7.3f} °C;"
                  f" diff {d:+.2e}")
    for label, idx in (("feasible in orcscreen only", only_o), ("feasible in the baseline only", only_b)):
        for i in idx:
            r, o = rows[i], b_opt[i].cycle
            print(f"{label}: {r['fluid']} {r['layout']}: orcscreen {r['status']} {r['reason'][:80]}; "
                  f"baseline {'ok ' + format(o.W_net_W / 1e3, '.4f') + ' kW' if o.ok else o.reason[:80]}")
    if args.csv:
        with open(args.csv, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["fluid", "layout", "orcscreen_status", "orcscreen_net_power_kW", "orcscreen_T_evap_C",
                        "orcscreen_optimise_wall_s", "orcscreen_run_case_wall_s", "baseline_ok", "baseline_net_power_kW",
                        "baseline_T_evap_C", "baseline_wall_s", "baseline_evaluations"])
            for i, (r, o) in enumerate(zip(rows, b_opt)):
                w.writerow([r["fluid"], r["layout"], r["status"], r["net_power_kW"], r["evaporation_temperature_C"],
                            res["opt_wall"][i], res["run_wall"][i], o.cycle.ok,
                            o.cycle.W_net_W / 1e3 if o.cycle.ok else math.nan,
                            o.cycle.T_evap_K - 273.15, b_wall[i], o.evaluations])
        print(f"\nper-case figures: {args.csv}")
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
