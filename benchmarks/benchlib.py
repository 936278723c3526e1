"""Helpers shared by the benchmark scripts: machine header, statistics, study files, processes.

Only figures are printed; nothing here judges a time. Run the scripts as
``python benchmarks/<name>.py`` from the repository root (this directory is then on sys.path).
"""

from __future__ import annotations

import math
import os
import platform
import signal
import statistics
import subprocess
import sys
import time
import tomllib
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
STUDIES = REPO / "studies"


# -- header -------------------------------------------------------------------------------------

def cpu_model() -> str:
    """The CPU model name from /proc/cpuinfo ("unknown" where the file has none)."""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.lower().startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def versions() -> dict[str, str]:
    """orcscreen, CoolProp, numpy, scipy and Python versions."""
    from orcscreen.properties import coolprop_version

    out = {}
    for name in ("orcscreen", "numpy", "scipy", "joblib"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    out["CoolProp"] = coolprop_version()
    out["Python"] = platform.python_version()
    return out


def print_header(title: str) -> None:
    """Machine, versions, date and load: the context every figure needs."""
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:
        usable = os.cpu_count() or 1
    load = ", ".join(f"{x:.2f}" for x in os.getloadavg())
    v = versions()
    print(f"== {title}")
    print(f"date      {datetime.now(timezone.utc).astimezone().isoformat(timespec='seconds')}")
    print(f"machine   {os.cpu_count()} cores ({usable} usable), {cpu_model()}, {platform.system()} {platform.release()}")
    print("versions  " + ", ".join(f"{k} {val}" for k, val in v.items()))
    print(f"load avg  {load} (1, 5, 15 min; above 0 means other work shares the cores: figures are noisy)")
    print()


def print_load_after() -> None:
    print(f"\nload avg at the end: {', '.join(f'{x:.2f}' for x in os.getloadavg())}")


# -- statistics ---------------------------------------------------------------------------------

def percentile(values, q: float) -> float:
    """q-th percentile (0..100) by linear interpolation between order statistics (NumPy's default)."""
    xs = sorted(values)
    if not xs:
        return math.nan
    pos = (len(xs) - 1) * q / 100.0
    lo = math.floor(pos)
    hi = min(lo + 1, len(xs) - 1)
    return xs[lo] + (xs[hi] - xs[lo]) * (pos - lo)


def median(values) -> float:
    xs = list(values)
    return statistics.median(xs) if xs else math.nan


def ms(seconds: float) -> str:
    return f"{seconds * 1e3:8.2f} ms"


def spread_line(label: str, seconds: list[float]) -> str:
    """One line: median, 90th percentile, min, max [ms] and total [s] of a list of times [s]."""
    if not seconds:
        return f"{label:<44} (no cases)"
    return (f"{label:<44} median {median(seconds) * 1e3:8.2f} ms   p90 {percentile(seconds, 90) * 1e3:8.2f} ms"
            f"   min {min(seconds) * 1e3:7.2f}   max {max(seconds) * 1e3:8.2f} ms   total {sum(seconds):8.2f} s")


def evenly_spaced(items: list, limit: int | None) -> list:
    """A deterministic subsample of at most limit items, evenly spread over the list (all if None)."""
    if limit is None or limit >= len(items):
        return list(items)
    if limit <= 0:
        return []
    step = len(items) / limit
    return [items[int(i * step)] for i in range(limit)]


# -- study files --------------------------------------------------------------------------------

def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"no TOML form for {v!r}")


def to_toml(study: dict) -> str:
    """TOML text of a study dict: top-level scalars, then one table per section.

    Sweep keys are dotted paths, written quoted ("source.inlet_temperature_C" = [...]).
    """
    lines = []
    for k, v in study.items():
        if not isinstance(v, dict):
            lines.append(f"{k} = {_toml_value(v)}")
    for section, body in study.items():
        if not isinstance(body, dict):
            continue
        lines.append(f"\n[{section}]")
        for k, v in body.items():
            if v is None:
                continue
            key = f'"{k}"' if "." in k else k
            lines.append(f"{key} = {_toml_value(v)}")
    return "\n".join(lines) + "\n"


def read_study_dict(path: Path) -> dict:
    """The raw table of a study file (TOML parsed, nothing validated)."""
    with open(path, "rb") as fh:
        return tomllib.load(fh)


def write_study(study: dict, path: Path) -> Path:
    """Write a study dict as TOML and check it with orcscreen's loader; returns the path."""
    from orcscreen.study import load_study

    path.write_text(to_toml(study), encoding="utf-8")
    load_study(path, allow_huge=True)  # a bad generated study should fail here, with the message
    return path


def spread(lo: float, hi: float, n: int, digits: int = 4) -> list[float]:
    """n distinct values from lo to hi inclusive, rounded to digits decimals."""
    if n == 1:
        return [round(lo, digits)]
    vals = [round(lo + (hi - lo) * i / (n - 1), digits) for i in range(n)]
    if len(set(vals)) != n:
        raise ValueError(f"{n} values between {lo} and {hi} collide at {digits} decimals")
    return vals


# -- processes ----------------------------------------------------------------------------------

def orcscreen_command(*args: str) -> list[str]:
    """The `orcscreen` command with this interpreter (no dependence on PATH)."""
    return [sys.executable, "-m", "orcscreen", *args]


def start(cmd: list[str], **kw) -> subprocess.Popen:
    """Start a child in its own process group (so that it and its workers can be stopped together)."""
    return subprocess.Popen(cmd, start_new_session=True, cwd=REPO, **kw)


def stop_group(proc: subprocess.Popen, grace_s: float = 10.0) -> None:
    """Stop a child started by :func:`start` and its workers: SIGINT, then SIGKILL after grace_s."""
    if proc.poll() is not None:
        return
    try:
        os.killpg(proc.pid, signal.SIGINT)
    except ProcessLookupError:
        return
    try:
        proc.wait(timeout=grace_s)
    except subprocess.TimeoutExpired:
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        proc.wait()


def process_tree(root: int) -> list[int]:
    """root and all its descendants (from /proc/*/stat parent ids)."""
    children: dict[int, list[int]] = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            stat = Path(f"/proc/{entry}/stat").read_text()
        except OSError:
            continue
        ppid = int(stat.rsplit(")", 1)[1].split()[1])
        children.setdefault(ppid, []).append(int(entry))
    out, todo = [], [root]
    while todo:
        pid = todo.pop()
        out.append(pid)
        todo.extend(children.get(pid, []))
    return out


def memory_kB(pid: int) -> tuple[int, int]:
    """(VmRSS, VmHWM) [kB] of a process; (0, 0) when it is gone."""
    rss = hwm = 0
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                rss = int(line.split()[1])
            elif line.startswith("VmHWM:"):
                hwm = int(line.split()[1])
    except (OSError, ValueError):
        pass
    return rss, hwm


# -- orcscreen in this process ------------------------------------------------------------------

def case_objects(case):
    """The engine objects of a typed case, built as run_case builds them: (info, layout, context)."""
    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles import LAYOUTS

    info = fluids.get_info(case.fluid)
    return info, LAYOUTS[case.layout], case_context(case, info)


def _clear_saturation_memo(fluid) -> None:
    memo = getattr(fluid, "_sat_cache", None)  # private memo of orcscreen.properties.Fluid
    if memo is not None:
        memo.clear()


def time_orcscreen(cases: list[dict], passes: int = 1, clear_memo: bool = False) -> dict:
    """Warm timings of orcscreen on cases, one core, this process.

    A first pass runs every case once (imports, CoolProp fluids, stream tables: the cold
    costs). Then ``passes`` timed passes of ``run_case`` (the whole case) and, separately,
    ``passes`` timed passes of ``optimise`` alone (objects built outside the timer), case by
    case with time.perf_counter (wall) and time.process_time (CPU). Per case, the median over
    the passes is kept. clear_memo empties each fluid's saturation memo before each timed call
    (the second pass over identical cases would otherwise reuse the saturation states of the
    first).

    Returns {"cold_s", "rows", "run_wall", "run_cpu", "opt_wall", "opt_cpu", "pass_wall_s",
    "opt_pass_wall_s"} (lists per case, seconds).
    """
    from orcscreen.api import run_case
    from orcscreen.optimize import optimise

    t0 = time.perf_counter()
    rows = [run_case(c)["row"] for c in cases]
    cold = time.perf_counter() - t0
    objs = [case_objects(c) for c in cases]
    run_w = [[] for _ in cases]
    run_c = [[] for _ in cases]
    opt_w = [[] for _ in cases]
    opt_c = [[] for _ in cases]
    pass_wall, opt_pass_wall = [], []
    for _ in range(passes):
        t_pass = time.perf_counter()
        for i, c in enumerate(cases):
            if clear_memo:
                _clear_saturation_memo(objs[i][2].fluid)
            w0, c0 = time.perf_counter(), time.process_time()
            run_case(c)
            run_c[i].append(time.process_time() - c0)
            run_w[i].append(time.perf_counter() - w0)
        pass_wall.append(time.perf_counter() - t_pass)
    for _ in range(passes):
        t_pass = time.perf_counter()
        for i, o in enumerate(objs):
            info, layout, ctx = o
            if clear_memo:
                _clear_saturation_memo(ctx.fluid)
            w0, c0 = time.perf_counter(), time.process_time()
            optimise(layout, ctx)
            opt_c[i].append(time.process_time() - c0)
            opt_w[i].append(time.perf_counter() - w0)
        opt_pass_wall.append(time.perf_counter() - t_pass)
    return {
        "cold_s": cold,
        "rows": rows,
        "run_wall": [median(x) for x in run_w],
        "run_cpu": [median(x) for x in run_c],
        "opt_wall": [median(x) for x in opt_w],
        "opt_cpu": [median(x) for x in opt_c],
        "pass_wall_s": median(pass_wall),
        "opt_pass_wall_s": median(opt_pass_wall),
    }


def paired_optimisations(studies: dict, passes: int, labels: tuple[str, str]) -> None:
    """Time ``orcscreen.optimize.optimise`` alone on the same cases under two variants of a study
    (``studies``: variant name -> Study, the baseline first), the variants of one case one after
    the other in each pass so that a drift of the machine's speed hits them alike, after one
    untimed pass; print per layout and over all the median time, the median evaluations, and
    over the cases feasible in both the median of the per-case ratios (second / first) and total
    over total. labels: the two variants' short names for the table."""
    from orcscreen import fluids
    from orcscreen.api import case_context
    from orcscreen.cycles import LAYOUTS
    from orcscreen.optimize import optimise

    names = list(studies)
    base, other = names
    objects = {m: [(c, LAYOUTS[c.layout], case_context(c, fluids.get_info(c.fluid))) for c in s.cases()]
               for m, s in studies.items()}
    n = len(objects[base])
    print(f"cases     {n} per variant, layouts {', '.join(studies[base].layouts)}")
    results = {}
    for m in names:  # cold pass
        for c, layout, ctx in objects[m]:
            results[(m, c.fluid, c.layout)] = optimise(layout, ctx)
    times: dict[tuple, list[float]] = {}
    for _ in range(passes):
        for i in range(n):
            for m in names:
                c, layout, ctx = objects[m][i]
                t0 = time.perf_counter()
                optimise(layout, ctx)
                times.setdefault((m, c.fluid, c.layout), []).append(time.perf_counter() - t0)
    print(f"timing    {passes} timed passes after one untimed pass; per case the median\n")
    med = {k: median(v) for k, v in times.items()}
    ok = {k for k, r in results.items() if not isinstance(r, tuple)}

    def evaluations(k):
        r = results[k]
        return r[2] if isinstance(r, tuple) else r.evaluations

    a, b = labels
    print(f"{'layout':<16}{'both ok':>8}{f'{a} ms':>14}{f'{b} ms':>12}{f'evals {a[0]}/{b[0]}':>11}"
          f"{f'ratio {b}/{a}: median':>31}{'total':>8}")
    for name in [*studies[base].layouts, "all"]:
        keys = [(f, l) for (m, f, l) in med if m == base and (name == "all" or l == name)]
        both = [k for k in keys if (base, *k) in ok and (other, *k) in ok]
        if not both:
            continue
        ta = [med[(base, *k)] for k in both]
        tb = [med[(other, *k)] for k in both]
        ea = median([evaluations((base, *k)) for k in both])
        eb = median([evaluations((other, *k)) for k in both])
        print(f"{name:<16}{len(both):>8}{median(ta) * 1e3:>14.2f}{median(tb) * 1e3:>12.2f}{f'{ea:.0f}/{eb:.0f}':>11}"
              f"{median([y / x for x, y in zip(ta, tb)]):>31.2f}{sum(tb) / sum(ta):>8.2f}")


# -- other commits ---------------------------------------------------------------------------------

def export_commit(commit: str, dest: Path) -> Path:
    """A clean copy of the repository at ``commit`` (``git archive | tar -x``) in dest."""
    dest.mkdir(parents=True)
    archive = subprocess.run(["git", "-C", str(REPO), "archive", commit], check=True, capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(dest)], input=archive, check=True)
    return dest


def child_env(tree: Path, pyc_dir: Path | None) -> dict[str, str]:
    """The launch's environment: ``tree`` first on sys.path; compiled modules kept in pyc_dir
    (PYTHONPYCACHEPREFIX, as an installed package keeps its .pyc files) unless it is None
    (then the environment decides, e.g. PYTHONDONTWRITEBYTECODE=1: every module compiled at
    every launch)."""
    env = {**os.environ, "PYTHONPATH": str(tree)}
    if pyc_dir is not None:
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        env["PYTHONPYCACHEPREFIX"] = str(pyc_dir)
    return env
