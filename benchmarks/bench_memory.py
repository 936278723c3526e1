"""(d) Peak resident memory of runs of 1,000, 10,000 and 20,000 cases through the CLI (--jobs 2).

Each size is a generated temporary study: few fluids (R245fa and IsoButane by default, basic and
recuperated: 4 cases per operating point) x many operating points (source inlet temperatures
spread over 100-150 °C x 10 cooling-water temperatures 10-30 °C). Each run is
``orcscreen run STUDY --out DIR --jobs 2 --no-report`` in a subprocess with a fresh DIR.

Memory, all from the kernel: every --poll seconds the script lists the run's process tree
(the CLI and its joblib workers, from /proc/*/stat) and reads VmRSS and VmHWM from
/proc/<pid>/status; it reports the largest sum of VmRSS over the tree seen at one sample, the
largest VmHWM of any one process (the driver and the workers separately), and ru_maxrss from
os.wait4 on the CLI process (the largest single process of the tree, workers included once
they have been waited for). The driver's VmRSS in the middle of the run (largest sample
between 40 and 60 % of the wall time) is printed too: it separates the streaming batch from
the tables written at the end (ranking.csv is built from every stored row). Then the ratio largest size / smallest size of each. Only prints
figures.

    python benchmarks/bench_memory.py                          # 1,000, 10,000, 20,000 cases
    python benchmarks/bench_memory.py --sizes 200 1000         # a quick try
"""

from __future__ import annotations

import argparse
import math
import os
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

import benchlib as bl

SINK_VALUES_C = [10.0, 12.0, 14.0, 16.0, 18.0, 20.0, 22.0, 24.0, 26.0, 30.0]


def memory_study(n_cases: int, fluids: list[str]) -> dict:
    """A study dict of at least n_cases cases: len(fluids) x 2 layouts per point."""
    raw = bl.read_study_dict(bl.STUDIES / "overnight-sweep.toml")
    raw.pop("sweep", None)
    per_point = 2 * len(fluids)
    points = math.ceil(n_cases / per_point)
    n_sink = min(len(SINK_VALUES_C), points)
    n_src = math.ceil(points / n_sink)
    raw["study"] = dict(raw.get("study", {}), name=f"bench_memory: {n_src * n_sink * per_point} cases")
    raw["fluids"] = {"include": list(fluids)}
    raw["cycle"] = dict(raw.get("cycle", {}), layouts=["basic", "recuperated"])
    raw["sweep"] = {
        "source.inlet_temperature_C": bl.spread(100.0, 150.0, n_src, digits=5),
        "sink.inlet_temperature_C": SINK_VALUES_C[:n_sink],
    }
    return raw


def measure(study_path: Path, out_dir: Path, jobs: int, poll_s: float) -> dict:
    cmd = bl.orcscreen_command("run", str(study_path), "--out", str(out_dir), "--jobs", str(jobs), "--no-report", "--yes")
    log = out_dir.parent / f"{out_dir.name}.log"
    peak_sum = 0
    peak_sum_at = 0.0
    hwm: dict[int, int] = {}
    samples: list[tuple[float, int]] = []  # (time [s], driver VmRSS [kB])
    t0 = time.perf_counter()
    with open(log, "w") as fh:
        proc = bl.start(cmd, stdout=fh, stderr=subprocess.STDOUT)
        try:
            while True:
                pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
                if pid == proc.pid:
                    proc.returncode = os.waitstatus_to_exitcode(status)
                    break
                total = 0
                for p in bl.process_tree(proc.pid):
                    rss, h = bl.memory_kB(p)
                    total += rss
                    hwm[p] = max(hwm.get(p, 0), h)
                    if p == proc.pid:
                        samples.append((time.perf_counter() - t0, rss))
                if total > peak_sum:
                    peak_sum, peak_sum_at = total, time.perf_counter() - t0
                time.sleep(poll_s)
        except KeyboardInterrupt:
            bl.stop_group(proc)
            raise
    wall = time.perf_counter() - t0
    driver = hwm.pop(proc.pid, 0)
    mid = [rss for t, rss in samples if 0.4 * wall <= t <= 0.6 * wall]
    return {
        "driver_mid_kB": max(mid, default=0),
        "rc": proc.returncode,
        "wall_s": wall,
        "peak_tree_sum_kB": peak_sum,
        "peak_tree_sum_at": peak_sum_at / wall if wall else math.nan,
        "driver_hwm_kB": driver,
        "worker_hwm_kB": max(hwm.values(), default=0),
        "processes": 1 + len(hwm),
        "ru_maxrss_kB": usage.ru_maxrss,  # Linux: kilobytes
        "store_MB": (out_dir / "run.sqlite").stat().st_size / 1e6 if (out_dir / "run.sqlite").exists() else math.nan,
        "log": log,
    }


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000, 20000], help="case counts (default 1000 10000 20000)")
    ap.add_argument("--fluids", nargs="+", default=["R245fa", "IsoButane"], help="fluids of the generated studies")
    ap.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    ap.add_argument("--poll", type=float, default=0.1, help="sampling interval [s] (default 0.1)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder")
    args = ap.parse_args(argv)

    bl.print_header("bench_memory (d): peak resident memory against the number of cases")
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-memory-"))
    print(f"folder    {tmp}{'' if args.keep else ' (removed at the end)'}")
    print(f"runs      orcscreen run STUDY --out DIR --jobs {args.jobs} --no-report; fluids {', '.join(args.fluids)}, basic and recuperated;"
          f" sampled every {args.poll} s\n")
    results = []
    try:
        for n in args.sizes:
            study = memory_study(n, args.fluids)
            path = bl.write_study(study, tmp / f"memory-{n}.toml")
            from orcscreen.study import load_study

            n_real = load_study(path, allow_huge=True).n_cases
            r = measure(path, tmp / f"out-{n}", args.jobs, args.poll)
            r["cases"] = n_real
            results.append(r)
            print(f"{n_real:>7} cases: wall {r['wall_s']:7.1f} s, exit {r['rc']}; peak RSS summed over the tree {r['peak_tree_sum_kB'] / 1024:7.1f} MiB"
                  f" (at {r['peak_tree_sum_at']:.0%} of the run); driver VmHWM {r['driver_hwm_kB'] / 1024:7.1f} MiB"
                  f" (VmRSS {r['driver_mid_kB'] / 1024:.1f} MiB mid-run, 40-60 %);"
                  f" largest worker VmHWM {r['worker_hwm_kB'] / 1024:7.1f} MiB; ru_maxrss {r['ru_maxrss_kB'] / 1024:7.1f} MiB;"
                  f" {r['processes']} processes seen; store {r['store_MB']:.1f} MB")
            if r["rc"] != 0:
                print("   the run failed; last lines of its log:\n   " + "\n   ".join(r["log"].read_text().splitlines()[-10:]))
            # the store is not needed any more: free the disk before the next size
            shutil.rmtree(tmp / f"out-{n}", ignore_errors=True)
        if len(results) >= 2:
            a, b = results[0], results[-1]
            print(f"\nratio {b['cases']} / {a['cases']} cases:")
            for key, label in (("peak_tree_sum_kB", "peak RSS summed over the process tree"),
                               ("driver_hwm_kB", "driver VmHWM"), ("driver_mid_kB", "driver VmRSS mid-run (40-60 % of the run)"), ("worker_hwm_kB", "largest worker VmHWM"),
                               ("ru_maxrss_kB", "ru_maxrss (largest single process)")):
                ratio = b[key] / a[key] if a[key] else math.nan
                print(f"  {label:<40} {ratio:6.2f}")
    finally:
        if not args.keep:
            shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
