"""(c) Scaling: the same sweep through the CLI with --jobs 1 and --jobs 2; ratio of the wall times.

studies/overnight-sweep.toml has more than 2,000 cases (13 source x 5 sink temperatures x its
fluids x 2 layouts), so this script writes a temporary study with the same settings and fluids
and a smaller sweep: the sink temperatures of the file (as many as needed, up to all 5) x
source temperatures spread over 100-160 °C, enough points for at least --cases cases (2,000 by
default: 5 x 5 points x 40 fluids x 2 layouts = 2,000 exactly with today's catalogue). Below
one operating point's worth of cases the fluid list is cut instead.

Each run is ``orcscreen run STUDY --out DIR --jobs N --no-report`` in a subprocess with a fresh
DIR in a temporary folder; the wall time is measured around the subprocess (start-up included),
and the batch's own time is read from the store's meta entry last_run_s. Only prints figures.

    python benchmarks/bench_scaling.py                 # 2,000 cases, one run each
    python benchmarks/bench_scaling.py --cases 200     # a quick try
    python benchmarks/bench_scaling.py --repeat 3      # 1, 2, 1, 2, 1, 2: medians
"""

from __future__ import annotations

import argparse
import json
import math
import shutil
import sqlite3
import subprocess
import tempfile
import time
from pathlib import Path

import benchlib as bl

SOURCE_RANGE_C = (100.0, 160.0)


def scaled_study(n_cases: int) -> tuple[dict, str]:
    """A study dict of at least n_cases cases derived from overnight-sweep.toml, and a description."""
    from orcscreen.study import study_from_dict

    raw = bl.read_study_dict(bl.STUDIES / "overnight-sweep.toml")
    sweep = raw.pop("sweep", {})
    sink_values = list(sweep.get("sink", {}).get("inlet_temperature_C", [20.0]))
    base = study_from_dict(raw)
    fluids = list(base.fluids)
    per_point = len(fluids) * len(base.layouts)
    if n_cases < per_point:
        keep = max(1, math.ceil(n_cases / len(base.layouts)))
        raw["fluids"] = {"include": fluids[:keep]}
        per_point = keep * len(base.layouts)
        fluid_note = f"the first {keep} of its {len(fluids)} fluids"
    else:
        fluid_note = f"its {len(fluids)} fluids"
    points = math.ceil(n_cases / per_point)
    n_sink = min(len(sink_values), points)
    n_src = math.ceil(points / n_sink)
    sinks = sink_values[:n_sink]
    sources = bl.spread(*SOURCE_RANGE_C, n_src, digits=3)
    raw["sweep"] = {"source.inlet_temperature_C": sources, "sink.inlet_temperature_C": sinks}
    raw["study"] = dict(raw.get("study", {}), name=f"bench_scaling: {n_src * n_sink * per_point} cases")
    total = n_src * n_sink * per_point
    note = (f"generated from studies/overnight-sweep.toml (which has {_file_cases():,} cases): "
            f"{n_src} source temperature(s) {sources[0]:g}-{sources[-1]:g} °C x {n_sink} sink temperature(s) "
            f"{', '.join(f'{s:g}' for s in sinks)} °C x {fluid_note} x {len(base.layouts)} layouts = {total} cases")
    return raw, note


def _file_cases() -> int:
    from orcscreen.study import load_study

    return load_study(bl.STUDIES / "overnight-sweep.toml", allow_huge=True).n_cases


def run_once(study_path: Path, out_dir: Path, jobs: int) -> dict:
    cmd = bl.orcscreen_command("run", str(study_path), "--out", str(out_dir), "--jobs", str(jobs), "--no-report", "--yes")
    log = out_dir.parent / f"{out_dir.name}.log"
    t0 = time.perf_counter()
    with open(log, "w") as fh:
        proc = bl.start(cmd, stdout=fh, stderr=subprocess.STDOUT)
        try:
            rc = proc.wait()
        except KeyboardInterrupt:
            bl.stop_group(proc)
            raise
    wall = time.perf_counter() - t0
    out = {"wall_s": wall, "rc": rc, "log": log}
    db = out_dir / "run.sqlite"
    if db.exists():
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
        try:
            meta = {k: json.loads(v) for k, v in con.execute("SELECT key, value FROM meta")}
            out["batch_s"] = meta.get("last_run_s")
            out["statuses"] = dict(con.execute("SELECT status, count(*) FROM cases GROUP BY status"))
        finally:
            con.close()
    summary = [line for line in log.read_text().splitlines() if line.startswith("run:")]
    out["summary"] = summary[-1] if summary else ""
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--cases", type=int, default=2000, help="at least this many cases (default 2000)")
    ap.add_argument("--repeat", type=int, default=1, help="runs per jobs setting, alternating (default 1)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder (study, stores, logs)")
    args = ap.parse_args(argv)

    bl.print_header("bench_scaling (c): --jobs 1 against --jobs 2 through the CLI")
    study, note = scaled_study(args.cases)
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-scaling-"))
    try:
        path = bl.write_study(study, tmp / "scaling.toml")
        print(f"study     {note}")
        print(f"folder    {tmp}{'' if args.keep else ' (removed at the end)'}")
        print()
        results: dict[int, list[dict]] = {1: [], 2: []}
        for k in range(args.repeat):
            for jobs in (1, 2):
                r = run_once(path, tmp / f"out-j{jobs}-{k}", jobs)
                results[jobs].append(r)
                batch = r.get("batch_s")
                print(f"--jobs {jobs} run {k + 1}: wall {r['wall_s']:8.2f} s (batch {batch if batch is not None else 'n/a'} s)"
                      f"  exit {r['rc']}  statuses {r.get('statuses', {})}")
                if r["summary"]:
                    print(f"          {r['summary']}")
                if r["rc"] != 0:
                    print(f"          the run failed; its log: {r['log']}")
                    print("          " + "\n          ".join(r["log"].read_text().splitlines()[-10:]))
        print()
        w1 = bl.median(r["wall_s"] for r in results[1])
        w2 = bl.median(r["wall_s"] for r in results[2])
        print(f"wall time (median of {args.repeat}): --jobs 1 {w1:.2f} s, --jobs 2 {w2:.2f} s, ratio jobs1/jobs2 = {w1 / w2:.2f}")
        b1 = [r["batch_s"] for r in results[1] if r.get("batch_s")]
        b2 = [r["batch_s"] for r in results[2] if r.get("batch_s")]
        if b1 and b2:
            print(f"batch only (store meta last_run_s, no start-up): {bl.median(b1):.2f} s against {bl.median(b2):.2f} s,"
                  f" ratio {bl.median(b1) / bl.median(b2):.2f}")
        n = sum(results[1][0].get("statuses", {}).values()) or math.nan
        print(f"per case, --jobs 1: {w1 / n * 1e3:.2f} ms wall (start-up included)")
    finally:
        if not args.keep:
            shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
