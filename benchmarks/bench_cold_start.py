"""(e) Cold start: time from launching ``orcscreen run`` to the first case stored in DIR/run.sqlite.

Launches ``orcscreen run STUDY --out DIR [--jobs N] --no-report`` in a subprocess with a fresh
DIR and polls the store with the standard library's sqlite3 (read-only connection, table
``cases`` of orcscreen/store.py) every --poll seconds; records when DIR/run.sqlite appears (the
CLI has imported, validated the study and computed the case keys) and when its first case row
is committed. The run is then stopped (SIGINT to its process group), unless --finish. Median of
--repeat launches (3 by default). Only prints figures.

    python benchmarks/bench_cold_start.py                  # studies/demo.toml, CLI default jobs
    python benchmarks/bench_cold_start.py --jobs 1
"""

from __future__ import annotations

import argparse
import shutil
import sqlite3
import subprocess
import tempfile
import time
from pathlib import Path

import benchlib as bl

STORE_FILE = "run.sqlite"  # orcscreen.store.STORE_FILE (not imported: keep this process light)


def first_case_count(db: Path) -> int:
    """Rows in table cases of a store being written; 0 while the table is not readable yet."""
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=0.05)
    except sqlite3.Error:
        return 0
    try:
        return con.execute("SELECT count(*) FROM cases").fetchone()[0]
    except sqlite3.Error:
        return 0
    finally:
        con.close()


def launch(study: str, out_dir: Path, jobs: int | None, poll_s: float, finish: bool, timeout_s: float) -> dict:
    cmd = bl.orcscreen_command("run", study, "--out", str(out_dir), "--no-report")
    if jobs is not None:
        cmd += ["--jobs", str(jobs)]
    db = out_dir / STORE_FILE
    log = out_dir.parent / f"{out_dir.name}.log"
    t_store = t_first = None
    with open(log, "w") as fh:
        t0 = time.perf_counter()
        proc = bl.start(cmd, stdout=fh, stderr=subprocess.STDOUT)
        try:
            while time.perf_counter() - t0 < timeout_s:
                if t_store is None and db.exists():
                    t_store = time.perf_counter() - t0
                if t_store is not None and first_case_count(db) > 0:
                    t_first = time.perf_counter() - t0
                    break
                if proc.poll() is not None:
                    break
                time.sleep(poll_s)
            if finish:
                proc.wait()
            t_end = time.perf_counter() - t0
        finally:
            bl.stop_group(proc)
    return {"store_s": t_store, "first_s": t_first, "end_s": t_end, "rc": proc.returncode, "log": log}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default="studies/demo.toml", help="study file (default studies/demo.toml)")
    ap.add_argument("--jobs", type=int, default=None, help="--jobs of the run (default: the CLI's default, all cores)")
    ap.add_argument("--repeat", type=int, default=3, help="launches (default 3)")
    ap.add_argument("--poll", type=float, default=0.005, help="polling interval [s] (default 0.005)")
    ap.add_argument("--finish", action="store_true", help="let each run finish (and report its total time)")
    ap.add_argument("--timeout", type=float, default=120.0, help="give up on a launch after this many seconds")
    args = ap.parse_args(argv)

    bl.print_header("bench_cold_start (e): launch to first stored case")
    study = str((bl.REPO / args.study).resolve()) if not Path(args.study).is_absolute() else args.study
    print(f"command   orcscreen run {args.study} --out DIR --no-report{'' if args.jobs is None else f' --jobs {args.jobs}'}"
          f" (fresh DIR each time; {'runs finish' if args.finish else 'stopped after the first case'})\n")
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-cold-"))
    firsts, stores = [], []
    try:
        for k in range(args.repeat):
            r = launch(study, tmp / f"out-{k}", args.jobs, args.poll, args.finish, args.timeout)
            fmt = lambda x: "   n/a" if x is None else f"{x:6.2f}"  # noqa: E731
            print(f"launch {k + 1}: store file after {fmt(r['store_s'])} s, first case stored after {fmt(r['first_s'])} s"
                  + (f", run finished after {r['end_s']:.2f} s (exit {r['rc']})" if args.finish else ""))
            if r["first_s"] is None:
                print("   no case was stored; last lines of the log:\n   " + "\n   ".join(r["log"].read_text().splitlines()[-10:]))
            else:
                firsts.append(r["first_s"])
                stores.append(r["store_s"])
        if firsts:
            print(f"\nmedian of {len(firsts)}: first case stored after {bl.median(firsts):.2f} s"
                  f" (store created after {bl.median(stores):.2f} s)")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
