"""(e) Cold start: time from launching ``orcscreen run`` to the first case stored in DIR/run.sqlite.

Launches ``orcscreen run STUDY --out DIR [--jobs N] --no-report`` in a subprocess with a fresh
DIR and polls the store with the standard library's sqlite3 (read-only connection, table
``cases`` of orcscreen/store.py) every --poll seconds; records when DIR/run.sqlite appears (the
CLI has imported, validated the study and computed the case keys) and when its first case row
is committed. The run is then stopped (SIGINT to its process group), unless --finish. Median of
--repeat launches (3 by default). Only prints figures.

By default the study is studies/demo.toml cut to two fluids (``--fluids R245fa,IsoButane``:
[fluids] include replaced, written to a temporary file; ``--fluids ""`` keeps the study's own).
With ``--base COMMIT`` the same launches are made with a clean export of that commit
(``git archive COMMIT | tar -x``, run with PYTHONPATH and the working directory set to the
export) and with this tree, in pairs whose order alternates (base first, then this tree first),
after one untimed launch of each (so that both find the on-disk constants cache filled and
their modules compiled: the launches keep .pyc files in a temporary PYTHONPYCACHEPREFIX, as an
installed package has them, unless --no-pyc-cache); it
prints both medians, the median of the per-pair ratios and the ratio of the medians (this tree
over base).

    python benchmarks/bench_cold_start.py                         # two-fluid demo, CLI default jobs
    python benchmarks/bench_cold_start.py --jobs 1
    python benchmarks/bench_cold_start.py --base cd96e62 --repeat 7
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
DEFAULT_FLUIDS = "R245fa,IsoButane"


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


def launch(study: str, out_dir: Path, jobs: int | None, poll_s: float, finish: bool, timeout_s: float,
           tree: Path = bl.REPO, pyc_dir: Path | None = None) -> dict:
    """One launch of the orcscreen of ``tree`` (its folder first on sys.path, and the working
    directory, which ``python -m`` puts first): times [s] of the store file and first case."""
    cmd = bl.orcscreen_command("run", study, "--out", str(out_dir), "--no-report")
    if jobs is not None:
        cmd += ["--jobs", str(jobs)]
    db = out_dir / STORE_FILE
    log = out_dir.parent / f"{out_dir.name}.log"
    env = bl.child_env(tree, pyc_dir)
    t_store = t_first = None
    with open(log, "w") as fh:
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, start_new_session=True, cwd=tree, env=env, stdout=fh,
                                stderr=subprocess.STDOUT)
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


def _fmt(x: float | None) -> str:
    return "   n/a" if x is None else f"{x:6.2f}"


def _log_tail(r: dict) -> str:
    return "   no case was stored; last lines of the log:\n   " + "\n   ".join(r["log"].read_text().splitlines()[-10:])


def study_file(study: str, fluids: str, tmp: Path) -> str:
    """The study to launch: the file itself, or a copy with [fluids] include = fluids."""
    path = Path(study) if Path(study).is_absolute() else (bl.REPO / study).resolve()
    if not fluids:
        return str(path)
    data = bl.read_study_dict(path)
    data["fluids"] = {"include": [f.strip() for f in fluids.split(",") if f.strip()]}
    out = tmp / f"{path.stem}-{len(data['fluids']['include'])}-fluids.toml"
    out.write_text(bl.to_toml(data), encoding="utf-8")
    return str(out)


def run_single(args, study: str, tmp: Path, pyc_dir: Path | None) -> None:
    firsts, stores = [], []
    if pyc_dir is not None:  # untimed: compiles the modules once
        launch(study, tmp / "warm", args.jobs, args.poll, False, args.timeout, pyc_dir=pyc_dir)
    for k in range(args.repeat):
        r = launch(study, tmp / f"out-{k}", args.jobs, args.poll, args.finish, args.timeout, pyc_dir=pyc_dir)
        print(f"launch {k + 1}: store file after {_fmt(r['store_s'])} s, first case stored after {_fmt(r['first_s'])} s"
              + (f", run finished after {r['end_s']:.2f} s (exit {r['rc']})" if args.finish else ""))
        if r["first_s"] is None:
            print(_log_tail(r))
        else:
            firsts.append(r["first_s"])
            stores.append(r["store_s"])
    if firsts:
        print(f"\nmedian of {len(firsts)}: first case stored after {bl.median(firsts):.2f} s"
              f" (store created after {bl.median(stores):.2f} s)")


def run_paired(args, study: str, tmp: Path, pyc_dir: Path | None) -> None:
    base = bl.export_commit(args.base, tmp / "base")
    trees = {"base": base, "this": bl.REPO}
    print(f"base      {args.base} exported to {base}; this tree {bl.REPO}")
    for name, tree in trees.items():  # untimed: fills the constants cache, compiles the modules
        r = launch(study, tmp / f"warm-{name}", args.jobs, args.poll, False, args.timeout, tree, pyc_dir)
        if r["first_s"] is None:
            print(f"{name}: {_log_tail(r)}")
            return
    times: dict[str, list[float]] = {"base": [], "this": []}
    ratios = []
    for k in range(args.repeat):
        order = ["base", "this"] if k % 2 == 0 else ["this", "base"]
        pair = {}
        for name in order:
            r = launch(study, tmp / f"out-{k}-{name}", args.jobs, args.poll, False, args.timeout, trees[name], pyc_dir)
            if r["first_s"] is None:
                print(f"pair {k + 1} {name}: {_log_tail(r)}")
            pair[name] = r["first_s"]
        if None in pair.values():
            continue
        for name in pair:
            times[name].append(pair[name])
        ratios.append(pair["this"] / pair["base"])
        print(f"pair {k + 1} ({' then '.join(order)}): first case stored after base {pair['base']:.3f} s,"
              f" this tree {pair['this']:.3f} s, ratio {ratios[-1]:.3f}")
    if ratios:
        mb, mt = bl.median(times["base"]), bl.median(times["this"])
        print(f"\nmedian of {len(ratios)} pairs: base {mb:.3f} s, this tree {mt:.3f} s;"
              f" ratio of the medians {mt / mb:.3f}, median of the per-pair ratios {bl.median(ratios):.3f}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default="studies/demo.toml", help="study file (default studies/demo.toml)")
    ap.add_argument("--fluids", default=DEFAULT_FLUIDS,
                    help=f"replace the study's [fluids] by these, comma-separated (default {DEFAULT_FLUIDS}; '' keeps them)")
    ap.add_argument("--jobs", type=int, default=None, help="--jobs of the run (default: the CLI's default, all cores)")
    ap.add_argument("--repeat", type=int, default=3, help="launches, or pairs with --base (default 3)")
    ap.add_argument("--base", metavar="COMMIT", help="also launch this commit's orcscreen, in alternating pairs")
    ap.add_argument("--no-pyc-cache", action="store_true",
                    help="leave bytecode to the environment (by default compiled modules are kept in a "
                    "temporary PYTHONPYCACHEPREFIX, as for an installed package, after one untimed launch)")
    ap.add_argument("--poll", type=float, default=0.005, help="polling interval [s] (default 0.005)")
    ap.add_argument("--finish", action="store_true", help="let each run finish (and report its total time; not with --base)")
    ap.add_argument("--timeout", type=float, default=120.0, help="give up on a launch after this many seconds")
    args = ap.parse_args(argv)

    bl.print_header("bench_cold_start (e): launch to first stored case")
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-cold-"))
    try:
        study = study_file(args.study, args.fluids, tmp)
        print(f"command   orcscreen run {args.study}{f' (fluids {args.fluids})' if args.fluids else ''} --out DIR --no-report"
              f"{'' if args.jobs is None else f' --jobs {args.jobs}'} (fresh DIR each time; "
              f"{'runs finish' if args.finish and not args.base else 'stopped after the first case'})\n")
        pyc_dir = None if args.no_pyc_cache else tmp / "pycache"
        print(f"bytecode  {'as the environment has it' if pyc_dir is None else 'kept in a temporary PYTHONPYCACHEPREFIX'}")
        if args.base:
            run_paired(args, study, tmp, pyc_dir)
        else:
            run_single(args, study, tmp, pyc_dir)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
