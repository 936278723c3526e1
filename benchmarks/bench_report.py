"""Issue 15, item 4: the charts and report of a finished run, against another commit.

Runs the study once with this tree (``orcscreen run STUDY --out DIR --no-report``, untimed),
then times ``orcscreen report DIR`` (every chart drawn again, report.html written) as a whole
process, launch to exit, in a subprocess: wall time, and the CPU time of the process and its
chart-drawing children (``os.wait4``). With ``--base COMMIT`` that commit is exported
(``git archive COMMIT | tar -x``), makes its own run of the same study with its own code, and
its ``orcscreen report`` is timed on that run in pairs whose order alternates (base first,
then this tree first), after one untimed report of each (compiled modules kept in a temporary
PYTHONPYCACHEPREFIX, as an installed package has them). Prints every pair, both medians, the
median of the per-pair ratios and the ratio of the medians (this tree over base), and the
charts each report wrote (count, PNG bytes). Only prints figures.

    python benchmarks/bench_report.py                          # this tree, demo study, 5 reports
    python benchmarks/bench_report.py --base cd96e62 --repeat 7
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

import benchlib as bl


def run_study(study: str, out: Path, tree: Path, pyc_dir: Path, timeout_s: float) -> None:
    """The run the reports are made from (untimed)."""
    subprocess.run(bl.orcscreen_command("run", study, "--out", str(out), "--no-report"), cwd=tree,
                   env=bl.child_env(tree, pyc_dir), check=True, capture_output=True, timeout=timeout_s)


def time_report(run_dir: Path, tree: Path, pyc_dir: Path) -> dict:
    """One ``orcscreen report run_dir`` with ``tree``'s code: wall [s], CPU of the process
    tree [s] (user + system, children included), exit status."""
    with tempfile.TemporaryFile() as log:  # a file, not a pipe: a long log cannot stall the child
        t0 = time.perf_counter()
        proc = subprocess.Popen(bl.orcscreen_command("report", str(run_dir)), cwd=tree,
                                env=bl.child_env(tree, pyc_dir), stdout=subprocess.DEVNULL, stderr=log)
        _, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - t0
        proc.returncode = os.waitstatus_to_exitcode(status)
        log.seek(0)
        err = log.read().decode(errors="replace")
    return {"wall": wall, "cpu": usage.ru_utime + usage.ru_stime, "rc": proc.returncode, "err": err[-400:]}


def charts(run_dir: Path) -> str:
    pngs = list((run_dir / "figures").glob("*.png"))
    return f"{len(pngs)} charts, {sum(p.stat().st_size for p in pngs) / 1e6:.2f} MB of PNG"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default="studies/demo.toml", help="study file (default studies/demo.toml)")
    ap.add_argument("--base", metavar="COMMIT", help="also time this commit's report of its own run, in alternating pairs")
    ap.add_argument("--repeat", type=int, default=5, help="reports, or pairs with --base (default 5)")
    ap.add_argument("--timeout", type=float, default=600.0, help="give up on a run after this many seconds")
    args = ap.parse_args(argv)

    bl.print_header("bench_report (issue 15, item 4): orcscreen report of a finished run")
    tmp = Path(tempfile.mkdtemp(prefix="orcscreen-bench-report-"))
    try:
        study = str((bl.REPO / args.study).resolve())
        trees = {"this": bl.REPO}
        if args.base:
            trees = {"base": bl.export_commit(args.base, tmp / "base"), "this": bl.REPO}
            print(f"base      {args.base} exported to {trees['base']}; this tree {bl.REPO}")
        print(f"command   orcscreen report DIR, DIR a finished run of {args.study} made by the same code\n")
        runs, pyc = {}, {}
        for name, tree in trees.items():
            runs[name], pyc[name] = tmp / f"run-{name}", tmp / f"pycache-{name}"
            run_study(study, runs[name], tree, pyc[name], args.timeout)
            warm = time_report(runs[name], tree, pyc[name])  # untimed: compiles, fills caches
            if warm["rc"] != 0:
                print(f"{name}: report failed (exit {warm['rc']}): {warm['err']}")
                return 1
            print(f"{name:<5} {charts(runs[name])}")
        times = {name: [] for name in trees}
        cpus = {name: [] for name in trees}
        ratios = []
        for k in range(args.repeat):
            order = list(trees) if k % 2 == 0 else list(reversed(trees))
            pair = {}
            for name in order:
                pair[name] = time_report(runs[name], trees[name], pyc[name])
                times[name].append(pair[name]["wall"])
                cpus[name].append(pair[name]["cpu"])
            line = ", ".join(f"{n} {pair[n]['wall']:.2f} s (CPU {pair[n]['cpu']:.2f} s)" for n in trees)
            if args.base:
                ratios.append(pair["this"]["wall"] / pair["base"]["wall"])
                line += f", ratio {ratios[-1]:.3f}"
            print(f"{'pair' if args.base else 'report'} {k + 1} ({' then '.join(order)}): {line}")
        print()
        for name in trees:
            print(f"median of {args.repeat}, {name}: wall {bl.median(times[name]):.2f} s, CPU {bl.median(cpus[name]):.2f} s")
        if ratios:
            print(f"this tree / base: ratio of the median walls {bl.median(times['this']) / bl.median(times['base']):.3f}, "
                  f"median of the per-pair ratios {bl.median(ratios):.3f}; CPU {bl.median(cpus['this']) / bl.median(cpus['base']):.3f}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
