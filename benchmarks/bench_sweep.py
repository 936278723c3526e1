"""Issue 15, item 5: whole process against the baseline: a 135-case sweep, orcscreen's CLI against the baseline's own process.

A generated study (``studies/demo.toml`` as the base: hot-water source, cooling water, fixed
superheat, the baseline's scope; the basic layout only; a constant turbine efficiency, the
baseline's model; 15 catalogue pure fluids x 9 source inlet temperatures 100-180 °C = 135
cases) is run, from launch to exit, as

* ``orcscreen run STUDY --out DIR --jobs 1 --no-report`` (the like-for-like single-core figure),
  and the same with ``--jobs 2``; a fresh DIR every time;
* a fresh Python process of the baseline (``benchmarks/baseline.py``: PropsSI everywhere, scan +
  bounded Brent): ``python benchmarks/bench_sweep.py --baseline-worker STUDY PLAN OUT``. It
  imports the baseline first (CoolProp loads the default way), expands the cases with
  orcscreen's study loader (the same loader for both sides), optimises every case with
  ``baseline.optimise`` and writes the net power per case to OUT (JSON).

The baseline's evaporation window (``orcscreen.cycles.subcritical.evaporation_window``, as in
``bench_baseline.py``), the fluid's CoolProp name and its stability limit are computed by this
script before any timing and handed to the worker in PLAN (JSON), so the baseline's time holds
none of orcscreen's engine.

The runs alternate: orcscreen --jobs 1, baseline, orcscreen --jobs 2 (and orcscreen --jobs 1
with the report when --with-report), --repeat times, after one untimed orcscreen launch (on-disk
constants cache, compiled modules). Printed: every wall time, the ratio baseline / orcscreen of
each neighbouring pair and their median, the batch time from the store's meta entry last_run_s,
the baseline worker's own phases; the accuracy: per case orcscreen's net power (from the store
of the first --jobs 1 run) against the baseline's, the largest relative shortfall, the cases
below the baseline by more than 0.05 % and the cases feasible on one side only. Only prints
figures.

    python benchmarks/bench_sweep.py                              # 135 cases, once (about 5 min)
    python benchmarks/bench_sweep.py --fluids 3 --temperatures 3  # 9 cases, a quick try
"""

from __future__ import annotations

import argparse
import json
import math
import os
import shutil
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

SHORTFALL_BAR = 5e-4  # 0.05 %: the accuracy bar
SOURCE_RANGE_C = (100.0, 180.0)
SOURCE_PRESSURE_BAR = 15.0  # the demo's 6 bar would boil the water above ~159 °C (saturation at 15 bar: ~198 °C)
# catalogue pure fluids of the demo's families, subcritical candidates over 100-180 °C, critical
# temperatures from 72 °C (R227ea) to 239 °C (cyclopentane)
FLUIDS = (
    "R134a", "R227EA", "R152A", "R1234ze(E)", "R236FA", "R236EA", "IsoButane", "n-Butane",
    "R245fa", "R1234ze(Z)", "R1336mzz(Z)", "R365MFC", "Isopentane", "n-Pentane", "Cyclopentane",
)
STORE_FILE = "run.sqlite"  # orcscreen.store.STORE_FILE


# -- the study ----------------------------------------------------------------------------------

def sweep_study(n_fluids: int, n_temperatures: int) -> tuple[dict, list[str], list[float]]:
    """The study dict (demo.toml with the changes of the module docstring), its fluids and its
    source inlet temperatures [°C]."""
    import benchlib as bl

    if not 1 <= n_fluids <= len(FLUIDS):
        raise SystemExit(f"--fluids must be 1 to {len(FLUIDS)}, not {n_fluids}")
    if n_temperatures < 1:
        raise SystemExit(f"--temperatures must be at least 1, not {n_temperatures}")
    raw = bl.read_study_dict(bl.STUDIES / "demo.toml")
    fluids = bl.evenly_spaced(list(FLUIDS), n_fluids)
    temps = bl.spread(*SOURCE_RANGE_C, n_temperatures, digits=3)
    raw["study"] = dict(raw.get("study", {}), name=f"bench_sweep: {len(fluids)} fluids x {len(temps)} source temperatures")
    raw["source"]["pressure_bar"] = SOURCE_PRESSURE_BAR
    raw["machines"]["turbine_model"] = "constant"
    raw["cycle"]["layouts"] = ["basic"]
    raw["fluids"] = {"include": fluids}
    raw["sweep"] = {"source.inlet_temperature_C": temps}
    return raw, fluids, temps


def plan_cases(study) -> list[dict]:
    """Per case (in the study's order) what the baseline takes from orcscreen: the fluid's CoolProp
    name and stability limit [°C] and the evaporation window [K] (as bench_baseline.py)."""
    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles.subcritical import evaporation_window

    out = []
    for i, c in enumerate(study.cases()):
        info = fluids.get_info(c.fluid)
        ctx = case_context(c, info)
        w = evaporation_window(ctx, float(ctx.settings.superheat_K))
        out.append({"index": i, "fluid": c.fluid, "layout": c.layout, "sweep": c.sweep,
                    "coolprop_name": info.coolprop_name, "max_temperature_C": info.max_temperature_C,
                    "T_lo_K": w.lo, "T_hi_K": w.hi})
    return out


# -- the baseline's process ---------------------------------------------------------------------

def baseline_worker(study_path: str, plan_path: str, out_path: str) -> int:
    """The baseline's whole process: every case of the study optimised by baseline.optimise;
    writes per case the net power [W] (None when infeasible) and the process's phases [s]."""
    t0 = time.perf_counter()
    import baseline as base  # first: CoolProp loads the default way

    t_import = time.perf_counter()
    from orcscreen.study import load_study  # the case expansion only, the same for both sides

    study = load_study(study_path)
    cases = list(study.cases())
    plan = json.loads(Path(plan_path).read_text(encoding="utf-8"))
    if len(plan) != len(cases):
        print(f"{plan_path}: {len(plan)} cases planned, the study has {len(cases)}", file=sys.stderr)
        return 2
    t_load = time.perf_counter()
    results, evaluations = [], 0
    calls0 = base.CALLS[0]
    for k, (c, p) in enumerate(zip(cases, plan)):
        if (c.fluid, c.layout) != (p["fluid"], p["layout"]):
            print(f"{plan_path}: case {k} is {c.fluid}/{c.layout} in the study, {p['fluid']}/{p['layout']} in the plan",
                  file=sys.stderr)
            return 2
        inp = base.inputs_from_case(c.as_dict(), p["coolprop_name"], p["max_temperature_C"])
        try:
            opt = base.optimise(inp, p["T_lo_K"], p["T_hi_K"])
        except ValueError as exc:  # a PropsSI failure: recorded on the case
            opt = base.Optimum(base.Cycle(False, "failed", f"PropsSI: {exc}"), 0, 0)
        evaluations += opt.evaluations
        cy = opt.cycle
        results.append({"index": k, "fluid": c.fluid, "layout": c.layout, "ok": cy.ok,
                        "net_power_W": cy.W_net_W if cy.ok else None,
                        "T_evap_K": cy.T_evap_K if cy.ok else None, "reason": cy.reason})
        if (k + 1) % 15 == 0 or k + 1 == len(cases):
            el = time.perf_counter() - t_load
            print(f"  baseline {k + 1}/{len(cases)} cases, {el:.0f} s, about {el / (k + 1) * (len(cases) - k - 1):.0f} s to go",
                  file=sys.stderr, flush=True)
    t_end = time.perf_counter()
    Path(out_path).write_text(json.dumps({
        "cases": results,
        "phases_s": {"import_baseline": t_import - t0, "load_study": t_load - t_import, "optimise": t_end - t_load},
        "evaluations": evaluations,
        "propssi_calls": base.CALLS[0] - calls0,
    }), encoding="utf-8")
    return 0


# -- launches -----------------------------------------------------------------------------------

CHILD_ENV: dict[str, str] | None = None  # the children's environment (main sets it; None: this one's)


def child_env(pyc_dir: Path | None) -> dict[str, str] | None:
    """The children's environment: compiled modules kept in pyc_dir (PYTHONPYCACHEPREFIX, as an
    installed package keeps its .pyc files, even under PYTHONDONTWRITEBYTECODE=1), or this
    process's environment when pyc_dir is None."""
    if pyc_dir is None:
        return None
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = str(pyc_dir)
    return env


def timed(cmd: list[str], log: Path, stderr_through: bool = False) -> tuple[float, int]:
    """Wall time [s] of a child from launch to exit, and its exit status; its output to log."""
    import benchlib as bl

    with open(log, "w") as fh:
        t0 = time.perf_counter()
        proc = bl.start(cmd, stdout=fh, stderr=None if stderr_through else subprocess.STDOUT, env=CHILD_ENV)
        try:
            rc = proc.wait()
        except KeyboardInterrupt:
            bl.stop_group(proc)
            raise
        return time.perf_counter() - t0, rc


def run_orcscreen(study: Path, out_dir: Path, jobs: int, report: bool) -> dict:
    import benchlib as bl

    args = ["run", str(study), "--out", str(out_dir), "--jobs", str(jobs)]
    if not report:
        args.append("--no-report")
    log = out_dir.parent / f"{out_dir.name}.log"
    wall, rc = timed(bl.orcscreen_command(*args), log)
    out = {"wall_s": wall, "rc": rc, "log": log, "dir": out_dir}
    db = out_dir / STORE_FILE
    if db.exists():
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
        try:
            meta = {k: json.loads(v) for k, v in con.execute("SELECT key, value FROM meta")}
            out["batch_s"] = meta.get("last_run_s")
        finally:
            con.close()
    return out


def run_baseline(study: Path, plan: Path, out_json: Path) -> dict:
    cmd = [sys.executable, str(Path(__file__).resolve()), "--baseline-worker", str(study), str(plan), str(out_json)]
    log = out_json.with_suffix(".log")
    wall, rc = timed(cmd, log, stderr_through=True)
    out = {"wall_s": wall, "rc": rc, "log": log}
    if rc == 0 and out_json.exists():
        out.update(json.loads(out_json.read_text(encoding="utf-8")))
    return out


def store_rows(out_dir: Path) -> dict[int, dict]:
    """case_index -> {fluid, layout, status, net_power_kW, reason} from a run's store."""
    con = sqlite3.connect(f"file:{out_dir / STORE_FILE}?mode=ro", uri=True)
    try:
        rows = {}
        for idx, fluid, layout, status, reason, row in con.execute(
                "SELECT case_index, fluid, layout, status, reason, row FROM cases WHERE case_index IS NOT NULL"):
            r = json.loads(row)
            rows[idx] = {"fluid": fluid, "layout": layout, "status": status, "reason": reason,
                         "net_power_kW": r.get("net_power_kW"),
                         "T_evap_C": r.get("evaporation_temperature_C")}
        return rows
    finally:
        con.close()


# -- report -------------------------------------------------------------------------------------

def print_accuracy(plan: list[dict], rows: dict[int, dict], base_cases: list[dict]) -> None:
    both, only_o, only_b, neither = [], [], [], 0
    for p, b in zip(plan, base_cases):
        r = rows.get(p["index"])
        ok_o = r is not None and r["status"] == "ok"
        ok_b = b["ok"]
        if ok_o and ok_b:
            W_o, W_b = r["net_power_kW"] * 1e3, b["net_power_W"]
            both.append((p, r, b, (W_o - W_b) / W_b))
        elif ok_o:
            only_o.append((p, r, b))
        elif ok_b:
            only_b.append((p, r, b))
        else:
            neither += 1
    print(f"status    feasible in both {len(both)}, only orcscreen {len(only_o)}, only the baseline {len(only_b)}, "
          f"neither {neither}")
    if both:
        worst = min(both, key=lambda t: t[3])
        low = [t for t in both if t[3] < -SHORTFALL_BAR]
        p, r, b, d = worst
        where = f"{p['fluid']} at {_source_T(p):g} °C"
        if d < 0:
            print(f"net power: largest shortfall (baseline - orcscreen) / baseline = {-d:.2e} ({where})")
        else:
            print(f"net power: orcscreen never below the baseline; smallest excess {d:.2e} ({where})")
        print(f"net power: cases with orcscreen below the baseline by more than {SHORTFALL_BAR:.2%}: {len(low)}")
        print(f"net power: orcscreen higher in {sum(t[3] > 0 for t in both)} cases, lower in {sum(t[3] < 0 for t in both)}, "
              f"largest |difference| {max(abs(t[3]) for t in both):.2e}")
        print("largest shortfalls:" if d < 0 else "smallest differences:")
        for p, r, b, d in sorted(both, key=lambda t: t[3])[:5]:
            print(f"  {p['fluid']:<14} {_source_T(p):6g} °C  orcscreen {r['net_power_kW']:10.4f} kW at {r['T_evap_C']:7.3f} °C;"
                  f" baseline {b['net_power_W'] / 1e3:10.4f} kW at {b['T_evap_K'] - 273.15:7.3f} °C; diff {d:+.2e}")
    for label, items in (("feasible in orcscreen only", only_o), ("feasible in the baseline only", only_b)):
        for p, r, b in items:
            o_text = "no row" if r is None else f"{r['status']} {r['reason'][:70]}"
            b_text = f"ok {b['net_power_W'] / 1e3:.4f} kW" if b["ok"] else b["reason"][:70]
            print(f"{label}: {p['fluid']} at {_source_T(p):g} °C: orcscreen {o_text}; baseline {b_text}")


def _source_T(p: dict) -> float:
    return p["sweep"].get("source.inlet_temperature_C", math.nan)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    if argv[:1] == ["--baseline-worker"]:
        if len(argv) != 4:
            print("usage: bench_sweep.py --baseline-worker STUDY PLAN.json OUT.json", file=sys.stderr)
            return 2
        return baseline_worker(*argv[1:])

    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0],
                                 epilog="internal: --baseline-worker STUDY PLAN.json OUT.json (first argument) runs the baseline's process")
    ap.add_argument("--fluids", type=int, default=len(FLUIDS), help=f"fluids, evenly spread over the list of {len(FLUIDS)} (default all)")
    ap.add_argument("--temperatures", type=int, default=9, help="source inlet temperatures over 100-180 °C (default 9)")
    ap.add_argument("--repeat", type=int, default=1, help="rounds of orcscreen --jobs 1, baseline, orcscreen --jobs 2 (default 1)")
    ap.add_argument("--with-report", action="store_true",
                    help="add to each round an orcscreen --jobs 1 run that writes the report (charts, report.html)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder (study, plan, stores, logs)")
    ap.add_argument("--no-pyc-cache", action="store_true",
                    help="leave compiled modules to the environment (default: kept in a temporary PYTHONPYCACHEPREFIX)")
    args = ap.parse_args(argv)

    import benchlib as bl
    from orcscreen.study import load_study

    bl.print_header("bench_sweep (issue 15, item 5): whole process, orcscreen CLI against the hand-written baseline")
    raw, fluids, temps = sweep_study(args.fluids, args.temperatures)
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-sweep-"))
    global CHILD_ENV
    CHILD_ENV = child_env(None if args.no_pyc_cache else tmp / "pycache")
    try:
        path = bl.write_study(raw, tmp / "sweep.toml")
        study = load_study(path)
        check = subprocess.run(bl.orcscreen_command("check", str(path)), cwd=bl.REPO, capture_output=True, text=True)
        print(f"study     studies/demo.toml with the basic layout only, machines.turbine_model = \"constant\" "
              f"(turbine_efficiency {study.machines.turbine_efficiency}), source.pressure_bar = {SOURCE_PRESSURE_BAR:g}; "
              f"{len(fluids)} fluids x {len(temps)} source inlet temperatures = {study.n_cases} cases")
        print(f"fluids    {', '.join(fluids)}")
        print(f"source    inlet {', '.join(f'{t:g}' for t in temps)} °C, {study.source.mass_flow_kg_s:g} kg/s; "
              f"sink: cooling water {study.sink.inlet_temperature_C:g} °C + {study.sink.temperature_rise_K:g} K; "
              f"superheat {study.cycle.superheat_K:g} K")
        print(f"check     `orcscreen check` exit {check.returncode}"
              + ("" if check.returncode == 0 else ":\n" + (check.stdout + check.stderr)[-1500:]))
        if check.returncode != 0:
            return 1
        plan = plan_cases(study)
        plan_path = tmp / "plan.json"
        plan_path.write_text(json.dumps(plan), encoding="utf-8")
        print("baseline  a fresh process: baseline.py imported first, the cases expanded by orcscreen's study loader"
              " (as orcscreen's own run), windows from orcscreen's evaporation_window computed beforehand (PLAN)")
        print(f"orcscreen `orcscreen run STUDY --out DIR --jobs N --no-report`, a fresh DIR each time"
              f"{'; with --with-report also --jobs 1 with the report' if args.with_report else ''}")
        print(f"folder    {tmp}{'' if args.keep else ' (removed at the end)'}")
        print("modules   " + ("compiled as the environment says (--no-pyc-cache)" if args.no_pyc_cache else
                             "compiled once into a temporary PYTHONPYCACHEPREFIX (as an installed package has them)"))
        print()

        warm = run_orcscreen(path, tmp / "out-warm", 1, report=args.with_report)
        print(f"untimed   orcscreen warm-up launch (constants cache, compiled modules{', report' if args.with_report else ''}): "
              f"{warm['wall_s']:.2f} s, exit {warm['rc']}")
        runs: dict[str, list[dict]] = {"j1": [], "base": [], "j2": [], "j1r": []}
        for k in range(args.repeat):
            order = [("j1", 1, False), ("base", None, None), ("j2", 2, False)]
            if args.with_report:
                order.append(("j1r", 1, True))
            for name, jobs, report in order:
                if name == "base":
                    print(f"round {k + 1}: baseline running (progress on stderr) ...", file=sys.stderr, flush=True)
                    r = run_baseline(path, plan_path, tmp / f"baseline-{k}.json")
                    extra = ""
                    if "phases_s" in r:
                        ph = r["phases_s"]
                        extra = (f"  (in the process: import baseline {ph['import_baseline']:.2f} s, load study {ph['load_study']:.2f} s, "
                                 f"optimise {ph['optimise']:.2f} s; {r['evaluations']} evaluations, {r['propssi_calls']} PropsSI calls)")
                    print(f"round {k + 1}  {'baseline':<26} wall {r['wall_s']:9.2f} s  exit {r['rc']}{extra}")
                else:
                    r = run_orcscreen(path, tmp / f"out-{name}-{k}", jobs, report)
                    label = f"orcscreen --jobs {jobs}" + (" +report" if report else "")
                    batch = r.get("batch_s")
                    print(f"round {k + 1}  {label:<26} wall {r['wall_s']:9.2f} s  exit {r['rc']}  "
                          f"(batch {'n/a' if batch is None else format(batch, '.3f')} s)")
                if r["rc"] != 0:
                    print(f"          the run failed; last lines of {r['log']}:\n          "
                          + "\n          ".join(r["log"].read_text().splitlines()[-10:]))
                runs[name].append(r)
        print()

        pairs = [(b, o1, o2) for b, o1, o2 in zip(runs["base"], runs["j1"], runs["j2"])
                 if b["rc"] == 0 and o1["rc"] == 0 and o2["rc"] == 0]
        if not pairs:
            print("no complete round: no ratio")
            return 1
        r1 = [b["wall_s"] / o1["wall_s"] for b, o1, _ in pairs]
        r2 = [b["wall_s"] / o2["wall_s"] for b, _, o2 in pairs]
        print("whole process, launch to exit (medians over the rounds):")
        print(f"  baseline              {bl.median(b['wall_s'] for b, _, _ in pairs):9.2f} s")
        print(f"  orcscreen --jobs 1    {bl.median(o['wall_s'] for _, o, _ in pairs):9.2f} s")
        print(f"  orcscreen --jobs 2    {bl.median(o['wall_s'] for _, _, o in pairs):9.2f} s")
        if runs["j1r"]:
            print(f"  orcscreen --jobs 1 with the report {bl.median(r['wall_s'] for r in runs['j1r']):9.2f} s"
                  f" (ratio baseline / it: {bl.median(b['wall_s'] for b, _, _ in pairs) / bl.median(r['wall_s'] for r in runs['j1r']):.1f} x)")
        print(f"speed-up baseline / orcscreen --jobs 1: per round {', '.join(f'{x:.1f}' for x in r1)}; median {bl.median(r1):.1f} x")
        print(f"speed-up baseline / orcscreen --jobs 2: per round {', '.join(f'{x:.1f}' for x in r2)}; median {bl.median(r2):.1f} x")
        eng = [(b["phases_s"]["optimise"], o1.get("batch_s")) for b, o1, _ in pairs if o1.get("batch_s")]
        if eng:
            print(f"engines alone (baseline's optimise loop / orcscreen --jobs 1 batch, no start-up): "
                  f"median {bl.median(b / o for b, o in eng):.1f} x")
        print(f"per case, --jobs 1: {bl.median(o['wall_s'] for _, o, _ in pairs) / study.n_cases * 1e3:.2f} ms wall (start-up included); "
              f"baseline {bl.median(b['wall_s'] for b, _, _ in pairs) / study.n_cases:.3f} s")
        print()

        b0, o0 = pairs[0][0], pairs[0][1]
        rows = store_rows(o0["dir"])
        print(f"accuracy  orcscreen: store of the first --jobs 1 run; baseline: its first run ({study.n_cases} cases)")
        print_accuracy(plan, rows, b0["cases"])
        rows2 = store_rows(pairs[0][2]["dir"])
        diff = [abs(rows[i]["net_power_kW"] - rows2[i]["net_power_kW"]) for i in rows
                if i in rows2 and rows[i]["status"] == rows2[i]["status"] == "ok"]
        same_status = sum(rows[i]["status"] == rows2.get(i, {}).get("status") for i in rows)
        print(f"--jobs 2 against --jobs 1: same status in {same_status} of {len(rows)} cases, "
              f"largest net-power difference {max(diff, default=0.0):.3g} kW")
    finally:
        if not args.keep:
            shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
