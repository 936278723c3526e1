"""(d) Peak resident memory of runs of 1,000, 10,000 and 20,000 cases through the CLI (--jobs 2).

Each size is a generated temporary study: the 40 catalogue fluids of the overnight-sweep study
(its families: hydrocarbons, HFCs, HFOs, HCFOs) in the basic and recuperated layouts, 80 cases per
operating point, x as many operating points as the size needs (source inlet temperatures spread
over 100-150 °C x up to 10 cooling-water temperatures 10-30 °C, the grid that overshoots the
size least: 1,040 / 10,000 / 20,000 cases). Each fluid's saturation memo is bounded
(orcscreen.properties.SAT_MEMO_ENTRIES); with 2 fluids the memos stayed small and could not show
their growth. Each run is ``orcscreen run STUDY --out DIR --jobs 2 --no-report`` in a subprocess
with a fresh DIR.

Memory, all from the kernel: every --poll seconds the script lists the run's process tree
(the CLI and its joblib workers, from /proc/*/stat) and reads VmRSS and VmHWM from
/proc/<pid>/status; it reports the largest sum of VmRSS over the tree seen at one sample, the
largest VmHWM of any one process (the driver and the workers separately), and ru_maxrss from
os.wait4 on the CLI process (the largest single process of the tree, workers included once
they have been waited for). The driver's VmRSS in the middle of the run (largest sample
between 40 and 60 % of the wall time) is printed too: it separates the streaming batch from
the tables written at the end (ranking.csv is built from every stored row). Then the ratio
largest size / smallest size of each.

Last, the saturation memo per fluid: this process runs the cases of the smallest size one by one
(``orcscreen.api.run_case``, as one worker would) and prints each fluid's memo entries and bytes
(sys.getsizeof of the memo, its keys, its SatPoints and their floats; this agrees with a
tracemalloc measurement of the same memo). Only prints figures.

    python benchmarks/bench_memory.py                          # 1,040, 10,000, 20,000 cases
    python benchmarks/bench_memory.py --sizes 200 1000         # a quick try
    python benchmarks/bench_memory.py --sizes 1000 --fluids R245fa IsoButane --memo-cases 0
"""

from __future__ import annotations

import argparse
import math
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import benchlib as bl

SINK_VALUES_C = [10.0, 12.0, 14.0, 16.0, 18.0, 20.0, 22.0, 24.0, 26.0, 30.0]


def default_fluids() -> list[str]:
    """The [fluids] include list of the overnight-sweep study (families: 40 catalogue fluids)."""
    return list(bl.read_study_dict(bl.STUDIES / "overnight-sweep.toml")["fluids"]["include"])


def grid(points: int) -> tuple[int, int]:
    """(source temperatures, sink temperatures) with at least `points` operating points and the
    fewest beyond that (more sink temperatures on a tie)."""
    best = None
    for n_sink in range(1, min(len(SINK_VALUES_C), points) + 1):
        n_src = math.ceil(points / n_sink)
        key = (n_src * n_sink, -n_sink)
        if best is None or key < best[0]:
            best = (key, (n_src, n_sink))
    return best[1]


def memory_study(n_cases: int, fluids: list[str], n_fluids: int) -> dict:
    """A study dict of at least n_cases cases: n_fluids (what `fluids` selects) x 2 layouts per point."""
    raw = bl.read_study_dict(bl.STUDIES / "overnight-sweep.toml")
    raw.pop("sweep", None)
    per_point = 2 * n_fluids
    n_src, n_sink = grid(math.ceil(n_cases / per_point))
    raw["study"] = dict(raw.get("study", {}), name=f"bench_memory: {n_src * n_sink * per_point} cases")
    raw["fluids"] = {"include": list(fluids)}
    raw["cycle"] = dict(raw.get("cycle", {}), layouts=["basic", "recuperated"])
    raw["sweep"] = {
        "source.inlet_temperature_C": bl.spread(100.0, 150.0, n_src, digits=5),
        "sink.inlet_temperature_C": SINK_VALUES_C[:n_sink],
    }
    return raw


def memo_bytes(memo) -> int:
    """Bytes held by a saturation memo: the mapping, its keys, its SatPoints and their floats
    (each object once)."""
    seen: set[int] = set()
    total = sys.getsizeof(memo)
    for key, sat in memo.items():
        for obj in (key, sat, *(getattr(sat, name) for name in sat.__slots__)):
            if id(obj) not in seen:
                seen.add(id(obj))
                total += sys.getsizeof(obj)
    return total


def memo_per_fluid(study_path: Path, limit: int) -> None:
    """Run the first `limit` cases of a study in this process and print the memo of each fluid."""
    from orcscreen import api, properties
    from orcscreen.study import load_study

    study = load_study(study_path, allow_huge=True)
    cases = list(study.cases())[:limit]
    t0 = time.perf_counter()
    for case in cases:
        api.run_case(case)
    wall = time.perf_counter() - t0
    names = {properties.get_fluid(n) for n in study.fluids}
    sizes = sorted(((len(f._sat_cache), memo_bytes(f._sat_cache), f.name) for f in names), reverse=True)
    entries = [e for e, _, _ in sizes]
    nbytes = [b for _, b, _ in sizes]
    print(f"\nsaturation memo per fluid after {len(cases)} cases in this process ({wall:.0f} s; {len(sizes)} fluids,"
          f" about {len(cases) / max(len(sizes), 1):.0f} cases each; bound {properties.SAT_MEMO_ENTRIES} entries):")
    print(f"  entries   median {bl.median(entries):.0f}, largest {entries[0]} ({sizes[0][2]}),"
          f" at the bound {sum(e >= properties.SAT_MEMO_ENTRIES for e in entries)} fluids")
    print(f"  bytes     median {bl.median(nbytes) / 1024:.0f} KiB, largest {max(nbytes) / 2**20:.3f} MiB,"
          f" all fluids {sum(nbytes) / 2**20:.1f} MiB; per entry {sum(nbytes) / max(sum(entries), 1):.0f} B")


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
    ap.add_argument("--fluids", nargs="+", default=None,
                    help="fluids or families of the generated studies (default: overnight-sweep's, 40 fluids)")
    ap.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    ap.add_argument("--poll", type=float, default=0.1, help="sampling interval [s] (default 0.1)")
    ap.add_argument("--memo-cases", type=int, default=None,
                    help="cases of the smallest size run in this process to measure the memos (default all; 0: skip)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder")
    args = ap.parse_args(argv)

    from orcscreen.study import load_study

    bl.print_header("bench_memory (d): peak resident memory against the number of cases")
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-memory-"))
    fluids = args.fluids or default_fluids()
    probe = load_study(bl.write_study(memory_study(1, fluids, 1), tmp / "fluids.toml"), allow_huge=True)
    n_fluids = len(probe.fluids)
    print(f"folder    {tmp}{'' if args.keep else ' (removed at the end)'}")
    print(f"runs      orcscreen run STUDY --out DIR --jobs {args.jobs} --no-report; {n_fluids} fluids ({', '.join(fluids)}),"
          f" basic and recuperated; sampled every {args.poll} s\n")
    results = []
    paths = []
    try:
        for n in args.sizes:
            study = memory_study(n, fluids, n_fluids)
            path = bl.write_study(study, tmp / f"memory-{n}.toml")
            paths.append(path)
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
        if paths and args.memo_cases != 0:
            memo_per_fluid(paths[0], args.memo_cases or 10**9)
    finally:
        if not args.keep:
            shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
