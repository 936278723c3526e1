"""Issue 15, item 1: A warm fluid-layout optimisation against the CoolProp floor of its own property calls.

For each case of the study (default ``studies/demo.toml``): one untimed cold pass of
``orcscreen.optimize.optimise`` over all cases (imports, CoolProp fluids, stream tables), then,
per case, one warm optimisation recorded: every method call the engine makes on CoolProp's
low-level ``AbstractState`` objects (the one of each :class:`orcscreen.properties.Fluid`, the
working fluid's and water's, ``Fluid._AS``) and on each fluid's superancillary
(``eval_sat`` of its saturation curves) goes through a recording proxy swapped in for that one
call and removed after it; orcscreen itself is not changed. Then ``--passes`` passes, each
timing per case with ``time.perf_counter``: the optimisation (objects built outside the timer,
as in bench_screen.py), a replay of the recorded state-setting calls alone (``update``,
``specify_phase``, ``unspecify_phase``: "updates only", the issue's floor) and a replay of every
recorded call (the getters such as ``hmass`` or ``first_partial_deriv`` and the superancillary
too: "all calls"), each in a tight loop on the same objects, same order, same arguments. Per
case the median of the passes is kept.

Printed per case: optimisation time, calls recorded, both floors and the ratio optimisation /
floor; then per layout (basic is the target, the others extra information) the median of the
per-case ratios and total over total. Checks printed too: that the replay returns the recorded
values (a faithful recording), and that two warm recordings of a case make the same calls.
``--breakdown`` adds counts of updates by input pair and imposed phase, per cycle evaluation,
and of getters by name. Only prints figures; never fails on a time.

    python benchmarks/bench_floor.py                         # studies/demo.toml, every case
    python benchmarks/bench_floor.py --limit 10 --passes 9 --breakdown
"""

from __future__ import annotations

import argparse
import gc
import math
import time
from collections import Counter
from dataclasses import dataclass, field

import benchlib as bl

#: The calls that set a state (what the floor replays); every other call reads one.
STATE_CALLS = ("update", "specify_phase", "unspecify_phase")


@dataclass
class Recording:
    """The calls of one recorded run: (target, method name, arguments, returned value or the
    exception raised, whether it raised), in order. target is the real AbstractState or the
    real superancillary ``eval_sat``; ``fluids`` maps each target to its fluid's name."""

    calls: list = field(default_factory=list)
    fluids: dict = field(default_factory=dict)

    def counts(self) -> Counter:
        """Calls by method name (``eval_sat`` for the superancillary)."""
        return Counter(c[1] for c in self.calls)

    @property
    def updates(self) -> int:
        return sum(1 for c in self.calls if c[1] == "update")

    def replayable(self, state_only: bool) -> list:
        """(bound method, arguments) of every call, or of the state-setting calls alone."""
        out = []
        for target, name, args, _, _ in self.calls:
            if state_only and name not in STATE_CALLS:
                continue
            out.append((target if name == "eval_sat" else getattr(target, name), args))
        return out


class _StateProxy:
    """Stands for one AbstractState: every method call goes to the real object and is logged."""

    def __init__(self, real, log: list):
        self._real, self._log = real, log

    def __getattr__(self, name: str):
        attr = getattr(self._real, name)
        if not callable(attr):
            return attr
        real, log = self._real, self._log

        def call(*args):
            try:
                out = attr(*args)
            except Exception as exc:
                log.append((real, name, args, exc, True))
                raise
            log.append((real, name, args, out, False))
            return out

        return call


def _recording_superancillary(real, log: list):
    def eval_sat(*args):
        try:
            out = real(*args)
        except Exception as exc:
            log.append((real, "eval_sat", args, exc, True))
            raise
        log.append((real, "eval_sat", args, out, False))
        return out

    return eval_sat


def live_fluids() -> list:
    """Every orcscreen Fluid (pure or mixture) alive in this process: the holders of the
    AbstractStates and superancillaries the engine calls."""
    from orcscreen.properties import Fluid

    return [o for o in gc.get_objects() if isinstance(o, Fluid)]


def states_held_elsewhere() -> int:
    """How many references to a CoolProp AbstractState a tracked Python object holds other than a
    Fluid's ``_AS``: 0 means the proxies of :func:`record` see every state the engine can reach."""
    from orcscreen import properties

    kind = properties.CP.AbstractState
    fluid_dicts = {id(vars(fl)) for fl in live_fluids()}
    n = 0
    for o in gc.get_objects():
        for r in gc.get_referents(o):
            if isinstance(r, kind) and not (id(o) in fluid_dicts and o.get("_AS") is r):
                n += 1
    return n


def record(fn, *args) -> tuple[Recording, object]:
    """Run fn(*args) with every live fluid's AbstractState and superancillary behind a recording
    proxy; the originals are put back afterwards, whatever happens. Returns (recording, result)."""
    from orcscreen.properties import _SaturationCurves

    rec = Recording()
    swapped = []
    try:
        for fl in live_fluids():
            real = fl._AS
            rec.fluids[real] = fl.name
            fl._AS = _StateProxy(real, rec.calls)
            swapped.append((fl, "_AS", real))
            curves = getattr(fl, "_curves", None)
            if isinstance(curves, _SaturationCurves):
                rec.fluids[curves.eval_sat] = fl.name
                swapped.append((curves, "eval_sat", curves.eval_sat))
                curves.eval_sat = _recording_superancillary(curves.eval_sat, rec.calls)
        result = fn(*args)
    finally:
        for obj, attr, real in reversed(swapped):
            setattr(obj, attr, real)
    return rec, result


def replay(calls: list) -> float:
    """Wall time [s] of one pass over calls, (bound method, arguments) in order; a call that
    raises (as it did when recorded) is passed over."""
    t0 = time.perf_counter()
    for f, a in calls:
        try:
            f(*a)
        except ValueError:
            pass
    return time.perf_counter() - t0


def _same(a, b) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return a == b or (math.isnan(a) and math.isnan(b))
    if isinstance(a, BaseException) or isinstance(b, BaseException):
        return type(a) is type(b)
    return a == b


def replay_mismatches(rec: Recording) -> int:
    """Replay every recorded call once and count the results that differ from the recorded ones
    (bit for bit; an exception must be raised again): 0 for a faithful recording."""
    bad = 0
    for (f, a), (_, _, _, out, raised) in zip(rec.replayable(False), rec.calls):
        try:
            got = f(*a)
        except Exception as exc:
            got = exc
        if not _same(got, out):
            bad += 1
    return bad


def _signature(rec: Recording) -> list:
    return [(id(t), n, a) for t, n, a, _, _ in rec.calls]


# -- breakdown ------------------------------------------------------------------------------------

def _constant_names(prefix: str = "", suffix: str = "") -> dict[int, str]:
    from orcscreen import properties

    CP = properties.CP
    return {getattr(CP, k): k for k in dir(CP) if k.startswith(prefix) and k.endswith(suffix)
            and isinstance(getattr(CP, k), int)}


def update_kinds(rec: Recording) -> Counter:
    """Updates by ("Water" or "working fluid", input pair, imposed phase, raised), the phase followed through specify_phase and
    unspecify_phase of each AbstractState."""
    pairs = _constant_names(suffix="_INPUTS")
    phases = _constant_names(prefix="iphase_")
    imposed: dict = {}
    out: Counter = Counter()
    for target, name, args, _, raised in rec.calls:
        if name == "specify_phase":
            imposed[target] = phases.get(args[0], str(args[0])).removeprefix("iphase_")
        elif name == "unspecify_phase":
            imposed.pop(target, None)
        elif name == "update":
            kind = pairs.get(args[0], str(args[0])).removesuffix("_INPUTS")
            fluid = rec.fluids.get(target, "?")
            who = fluid if fluid == "Water" else "working fluid"
            out[(who, kind, imposed.get(target, "none"), raised)] += 1
    return out


def print_breakdown(rows: list) -> None:
    """rows: (case, layout, evaluations, recording) of the feasible cases."""
    for layout in sorted({r[1] for r in rows}):
        sel = [r for r in rows if r[1] == layout]
        kinds: Counter = Counter()
        names: Counter = Counter()
        for _, _, _, rec in sel:
            kinds.update(update_kinds(rec))
            names.update(rec.counts())
        n = len(sel)
        ups = [rec.updates for *_, rec in sel]
        per_eval = [rec.updates / ev for _, _, ev, rec in sel if ev]
        evs = [ev for _, _, ev, _ in sel]
        print(f"\nbreakdown, {layout}: {n} feasible cases; per case median {bl.median(ups):.0f} updates"
              f" (min {min(ups)}, max {max(ups)}), {bl.median(evs):.0f} evaluations,"
              f" {bl.median(per_eval):.1f} updates per evaluation (median of the per-case ratios)")
        print(f"  {'fluid':<14}{'input pair':<14}{'phase':<16}{'mean/case':>10}{'share':>8}")
        total = sum(kinds.values())
        for (who, pair, phase, raised), k in kinds.most_common():
            print(f"  {who:<14}{pair:<14}{phase + (' (raised)' if raised else ''):<16}{k / n:>10.1f}{k / total:>8.1%}")
        print(f"  {'calls by name':<44}{'mean/case':>10}")
        for name, k in names.most_common():
            print(f"  {name:<44}{k / n:>10.1f}")


# -- main -------------------------------------------------------------------------------------------

def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--study", default=str(bl.STUDIES / "demo.toml"), help="study file (default studies/demo.toml)")
    ap.add_argument("--limit", type=int, default=None, help="only N cases, evenly spread (default all)")
    ap.add_argument("--passes", type=int, default=7, help="timed passes; per case the median is kept (default 7)")
    ap.add_argument("--breakdown", action="store_true", help="also print updates by input pair and phase, and calls by name")
    ap.add_argument("--quiet", action="store_true", help="no per-case lines")
    args = ap.parse_args(argv)

    from orcscreen.optimize import optimise
    from orcscreen.study import load_study

    bl.print_header("bench_floor (issue 15 item 1): a warm optimisation against the CoolProp floor of its own calls")
    study = load_study(args.study)
    cases = bl.evenly_spaced(list(study.cases()), args.limit)
    print(f"study     {args.study}: {len(cases)} cases, layouts {', '.join(sorted({c.layout for c in cases}))}"
          f"{'' if args.limit is None else f' (evenly spread subsample of {study.n_cases})'}")
    objs = [bl.case_objects(c) for c in cases]
    results = [optimise(layout, ctx) for _, layout, ctx in objs]  # cold pass
    elsewhere = states_held_elsewhere()  # before the recordings, which hold the states too
    recs, unstable, mismatched = [], 0, 0
    for _, layout, ctx in objs:
        rec, _ = record(optimise, layout, ctx)
        again, _ = record(optimise, layout, ctx)
        unstable += _signature(rec) != _signature(again)
        mismatched += replay_mismatches(rec) > 0
        recs.append(rec)
    upd = [r.replayable(True) for r in recs]
    allc = [r.replayable(False) for r in recs]
    t_opt = [[] for _ in cases]
    t_upd = [[] for _ in cases]
    t_all = [[] for _ in cases]
    for _ in range(args.passes):
        for i, (_, layout, ctx) in enumerate(objs):
            t0 = time.perf_counter()
            optimise(layout, ctx)
            t_opt[i].append(time.perf_counter() - t0)
            t_upd[i].append(replay(upd[i]))
            t_all[i].append(replay(allc[i]))
    opt = [bl.median(x) for x in t_opt]
    fu = [bl.median(x) for x in t_upd]
    fa = [bl.median(x) for x in t_all]
    print(f"timing    {args.passes} passes after one untimed pass; each pass per case: optimise, replay of the"
          f" updates, replay of all calls; per case the median")
    print(f"checks    replay returns the recorded values: {len(cases) - mismatched}/{len(cases)} cases;"
          f" two warm recordings make the same calls: {len(cases) - unstable}/{len(cases)} cases;"
          f" AbstractStates held elsewhere than a Fluid's _AS: {elsewhere}\n")

    def evaluations(r):
        return r[2] if isinstance(r, tuple) else r.evaluations

    if not args.quiet:
        print(f"{'fluid':<16}{'layout':<13}{'status':<8}{'evals':>6}{'optimise':>10}{'updates':>9}{'other':>7}"
              f"{'floor upd':>11}{'floor all':>11}{'ratio upd':>11}{'ratio all':>11}")
        for i, c in enumerate(cases):
            n_up = recs[i].updates
            print(f"{c.fluid:<16}{c.layout:<13}{'ok' if not isinstance(results[i], tuple) else 'infeas':<8}"
                  f"{evaluations(results[i]):>6}{opt[i] * 1e3:>7.2f} ms{n_up:>9}{len(recs[i].calls) - n_up:>7}"
                  f"{fu[i] * 1e3:>8.3f} ms{fa[i] * 1e3:>8.3f} ms{opt[i] / fu[i]:>11.2f}{opt[i] / fa[i]:>11.2f}")
        print()
    print("per layout, feasible cases (ratio = optimise / floor; median of the per-case ratios, and total / total)")
    print(f"{'layout':<14}{'cases':>6}{'optimise':>12}{'updates':>9}{'calls':>7}{'floor upd':>12}{'floor all':>12}"
          f"{'ratio upd':>11}{'total':>8}{'ratio all':>11}{'total':>8}")
    ok = [i for i, r in enumerate(results) if not isinstance(r, tuple)]
    layouts = sorted({cases[i].layout for i in ok}, key=lambda n: (n != "basic", n))
    for name in [*layouts, "all"]:
        idx = [i for i in ok if name == "all" or cases[i].layout == name]
        if not idx:
            continue
        med = bl.median
        print(f"{name:<14}{len(idx):>6}{med([opt[i] for i in idx]) * 1e3:>9.2f} ms"
              f"{med([recs[i].updates for i in idx]):>9.0f}{med([len(recs[i].calls) for i in idx]):>7.0f}"
              f"{med([fu[i] for i in idx]) * 1e3:>9.3f} ms{med([fa[i] for i in idx]) * 1e3:>9.3f} ms"
              f"{med([opt[i] / fu[i] for i in idx]):>11.2f}{sum(opt[i] for i in idx) / sum(fu[i] for i in idx):>8.2f}"
              f"{med([opt[i] / fa[i] for i in idx]):>11.2f}{sum(opt[i] for i in idx) / sum(fa[i] for i in idx):>8.2f}")
    print("(optimise, updates, calls, floors: medians over the cases; 'calls' counts every recorded call)")
    if args.breakdown:
        print_breakdown([(cases[i], cases[i].layout, evaluations(results[i]), recs[i]) for i in ok])
    bl.print_load_after()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
