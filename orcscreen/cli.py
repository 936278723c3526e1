"""The ``orcscreen`` command line: parse, call the library, print, choose the exit status.

Exit status: 0 success, 2 bad input (the message names the file, the key, the value and what is
allowed; never a traceback), 1 internal error, 130 interrupted.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import math
import os
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from orcscreen._version import __version__

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2
EXIT_INTERRUPTED = 130

#: Measured cost of one case in a batch on one core of the 2-core benchmark machines, store
#: writes included (benchmarks/bench_scaling.py: 6-8 ms on 2026-12-01, 11-12 ms on the slower
#: machine of 2026-12-02); an optimised superheat costs about 6 times more in total over a study
#: (benchmarks/bench_superheat.py on the demo, 2026-12-03: median 2.8x, total 5.9-6.3x; a
#: search over the superheat, each point with its own evaporation optimum). Start-up: imports, validation and
#: the output files, about 1-2.5 s for 2,000 cases (bench_scaling: wall minus batch time).
SECONDS_PER_CASE_PER_CORE = 0.010
SUPERHEAT_SEARCH_FACTOR = 6
START_UP_S = 2.0
#: Charts and report of a run [s] (the demo study's, 4-6 s on this project's 2-core machine,
#: 2026-12-02: mostly fixed, a few charts of the top cases) and the tables per case [s]
#: (ranking.csv and ranking.xlsx: about 1.3 ms a row at 20,000 rows)
REPORT_S = 5.0
TABLES_S_PER_CASE = 0.0015
#: Zeotropic mixtures (benchmarks/bench_mixtures.py, 2026-12-02): a composition's saturation
#: table [s] (built once per worker process), and a case whose composition is optimised [s]
#: (about 15 tables and an optimisation at each composition).
MIXTURE_TABLE_S = 0.8
COMPOSITION_SEARCH_S = 12.0

CAUTION_LINE = "Preliminary screening, not a design: see README Cautions."


class UsageError(Exception):
    """Bad input found by the command line itself (a missing directory, a bad option value)."""


# ---------------------------------------------------------------------------------------------
# Commands
# ---------------------------------------------------------------------------------------------

def _cmd_run(args: argparse.Namespace) -> int:
    from orcscreen.study import load_study

    study = load_study(args.study, allow_huge=args.yes)
    if args.rank_by is not None:
        study = _with_rank_by(study, args.rank_by, args.study)
    _print_warnings(study)
    from orcscreen import batch, outputs  # after validation: batch loads the engine

    out_dir = Path(args.out) if args.out else Path("out") / Path(args.study).stem
    print(f"study {study.study.name!r}: {study.n_cases} cases -> {out_dir}", file=sys.stderr)
    summary = batch.run_study(study, out_dir=out_dir, jobs=args.jobs, cluster=args.cluster, progress=True,
                              retry_failed=not args.keep_failed)
    table = outputs.write_outputs(out_dir)
    print(outputs.top_table(table, n=args.top))
    print(f"run: {summary}")
    _print_left_out(study)
    print(f"ranking: {out_dir / outputs.RANKING_FILE}")
    if not args.no_report:
        _build_report_quietly(out_dir)
    print(CAUTION_LINE)
    return EXIT_OK


def _rank_by_names(text: str) -> list[str]:
    """``--rank-by a,b,c``: criterion names (orcscreen.objectives.CRITERIA), in order."""
    from orcscreen.objectives import CRITERIA

    names = [n.strip() for n in text.split(",") if n.strip()]
    unknown = [n for n in names if n not in CRITERIA]
    if unknown or not names:
        shown = ", ".join(repr(n) for n in unknown) or repr(text)
        raise argparse.ArgumentTypeError(
            f"{shown}: not a ranking criterion; allowed: criterion names separated by commas, from "
            + ", ".join(CRITERIA))
    return names


def _rank_by_problems(names: list[str], study: dict, origin: str) -> None:
    """Refuse (exit 2) criteria of ``--rank-by`` whose study keys are unset (a year, a price)."""
    from orcscreen.objectives import DEFAULT_OBJECTIVE
    from orcscreen.study import StudyError, criterion_problems

    objective = ((study.get("study") or {}).get("objective")) or DEFAULT_OBJECTIVE
    lines = criterion_problems({f"--rank-by[{i}]": n for i, n in enumerate(names) if n != objective},
                               study, origin)
    if lines:
        raise StudyError(lines)


def _with_rank_by(study: Any, names: list[str], origin: str) -> Any:
    """The study with ``study.rank_by`` replaced by ``--rank-by`` (outputs only: no case is
    computed again), after checking that the criteria have what they need."""
    _rank_by_problems(names, study.model_dump(mode="python", by_alias=True), origin)
    section = study.study.model_copy(update={"rank_by": list(names)})
    return study.model_copy(update={"study": section})


def _print_warnings(study: Any) -> None:
    """The study's warnings (a sweep that overrides a value written in its section...), one a
    line on stderr; they do not stop anything."""
    for line in getattr(study, "warnings", ()):
        print(line, file=sys.stderr)


def _print_left_out(study: Any, indent: str = "") -> None:
    """The fluids that the study's [fluids] filters left out, one a line with the reason."""
    from orcscreen import fluids

    section = getattr(study, "fluid_filter", None)
    left = fluids.left_out_of(section.model_dump()) if section is not None else ()
    if left:
        print(f"{indent}left out by the [fluids] filters: {len(left)}")
        for item in left:
            print(f"{indent}  {item.line}")


def _build_report_quietly(out_dir: Path) -> None:
    """Charts and report after a run; a failure here warns and keeps the results."""
    try:
        from orcscreen import report
    except ImportError as exc:  # the report module is not there yet: results stand alone
        if getattr(exc, "name", None) not in ("orcscreen.report",):
            print(f"warning: report skipped: {exc}", file=sys.stderr)
        return
    try:
        path = report.build_report(out_dir)
    except Exception as exc:  # noqa: BLE001 - a chart must never cost the results
        print(f"warning: report not built ({type(exc).__name__}: {exc}); the results in {out_dir} "
              f"are kept; try `orcscreen report {out_dir}`", file=sys.stderr)
        return
    print(f"report: {path if path else out_dir / 'report.html'}")


def _cmd_check(args: argparse.Namespace) -> int:
    from orcscreen.study import load_study

    study = load_study(args.study, allow_huge=args.yes)
    _print_warnings(study)
    print(f"{args.study}: valid study {study.study.name!r} (schema version 1)")
    sizes = study.sweep_sizes
    for path, spec in study.sweep_spec.items():
        if isinstance(spec, dict):
            shown = f"{_num(spec['start'])} to {_num(spec['stop'])} in steps of {_num(spec['step'])}"
        else:
            shown = ", ".join(_num(v) for v in spec[:8]) + (", ..." if len(spec) > 8 else "")
        print(f"  sweep {path}: {sizes[path]:,} values ({shown})")
    fluids = study.fluids
    shown = ", ".join(fluids[:8]) + (", ..." if len(fluids) > 8 else "")
    print(f"  fluids: {len(fluids)} ({shown})")
    _print_left_out(study, indent="  ")
    print(f"  layouts: {len(study.layouts)} ({', '.join(study.layouts)})")
    factors = [str(n) for n in sizes.values()] + [str(len(fluids)), str(len(study.layouts))]
    print(f"  cases: {' x '.join(factors)} = {study.n_cases:,}")
    cores = args.jobs or _cores()
    from orcscreen.cycles import LAYOUTS

    per_case = SECONDS_PER_CASE_PER_CORE * sum(LAYOUTS[n].cost_factor for n in study.layouts) / len(study.layouts)
    if study.cycle.superheat_K == "optimise":
        per_case *= SUPERHEAT_SEARCH_FACTOR
    outputs_s = REPORT_S + TABLES_S_PER_CASE * study.n_cases
    mixtures_s = _mixtures_s(study, cores)
    seconds = START_UP_S + study.n_cases * per_case / cores + outputs_s + mixtures_s
    mixed = f", about {_duration(mixtures_s)} for the mixtures' property tables and composition searches" if mixtures_s else ""
    print(f"  time: about {_duration(seconds)} on {cores} core{'s' if cores != 1 else ''} "
          f"(a rough estimate at {per_case * 1000:.3g} ms per case per core, the layouts' measured costs, plus {START_UP_S:g} s start-up"
          f"{mixed} and about {_duration(outputs_s)} for the tables, charts and report; real cases vary with fluid and layout)")
    print("nothing was run or written.")
    return EXIT_OK


def _mixtures_s(study, cores: int) -> float:
    """Extra time [s] of a study's mixtures: each fixed composition's table in every worker, and
    the composition search of each pair to optimise in each layout that takes mixtures."""
    from orcscreen.cycles import LAYOUTS
    from orcscreen.mixtures import is_mixture, parse_mixture

    mixtures = [parse_mixture(f) for f in study.fluids if is_mixture(f)]
    fixed = sum(1 for *_, x in mixtures if x is not None)
    searched = sum(1 for *_, x in mixtures if x is None)
    layouts = sum(1 for n in study.layouts if LAYOUTS[n].takes_mixtures)
    return (fixed * MIXTURE_TABLE_S * min(cores, study.n_points)
            + study.n_points * searched * layouts * COMPOSITION_SEARCH_S) / cores


def _cmd_fluids(args: argparse.Namespace) -> int:
    from orcscreen import fluids

    include = list(args.family) if args.family else ["all"]
    infos = fluids.select(include=include, exclude=[], max_gwp=args.max_gwp,
                          safety_classes=args.safety_class or None, zero_odp=args.zero_odp)
    columns = fluids.CATALOGUE_COLUMNS
    rows = fluids.catalogue_rows(infos)
    if args.format == "csv":
        sys.stdout.write(_fluids_csv(rows, columns))
    elif args.format == "json":
        print(json.dumps(_fluids_records(rows, columns), indent=2, ensure_ascii=False))
    else:
        print(_fluids_table(rows, columns) if rows else "no fluid matches these filters")
        print(f"\n{len(rows)} fluids.")
        print(_cautions_text(fluids))
    return EXIT_OK


# The catalogue table without pandas (its import is most of the command's time): each column
# typed as a table library types it (a number column with a gap or a fraction holds floats;
# tests/test_packaging.py compares the three formats with pandas' own output).

def _column_kind(values: list) -> str:
    """"bool", "int", "float" or "text": the type a column of these values takes."""
    present = [v for v in values if v is not None]
    if present and all(isinstance(v, bool) for v in present):
        return "bool" if len(present) == len(values) else "text"
    if present and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in present):
        gaps = len(present) < len(values)
        return "float" if gaps or any(isinstance(v, float) for v in present) else "int"
    return "text"


def _typed_columns(rows: list[dict], columns: Sequence[str]) -> list[tuple[str, str, list]]:
    """(name, kind, values) per column; a float column's values are floats, gaps NaN."""
    out = []
    for c in columns:
        values = [r[c] for r in rows]
        kind = _column_kind(values)
        if kind == "float":
            values = [math.nan if v is None else float(v) for v in values]
        out.append((c, kind, values))
    return out


def _fluids_csv(rows: list[dict], columns: Sequence[str]) -> str:
    """CSV with a header line; numbers in full (repr), gaps empty."""
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    typed = _typed_columns(rows, columns)
    writer.writerow(columns)
    for i in range(len(rows)):
        writer.writerow(["" if v is None or (kind == "float" and math.isnan(v)) else repr(v) if kind == "float" else v
                         for _, kind, values in typed for v in (values[i],)])
    return buffer.getvalue()


def _fluids_records(rows: list[dict], columns: Sequence[str]) -> list[dict]:
    """One record a fluid; floats to 10 decimals, gaps null."""
    typed = _typed_columns(rows, columns)
    return [{name: (None if math.isnan(values[i]) else round(values[i], 10)) if kind == "float" else values[i]
             for name, kind, values in typed} for i in range(len(rows))]


def _fluids_table(rows: list[dict], columns: Sequence[str]) -> str:
    """Right-aligned columns with unit headers; floats to 5 significant digits, gaps "-"."""
    cells = []
    for name, kind, values in _typed_columns(rows, columns):
        shown = ["-" if v is None or (kind == "float" and math.isnan(v)) else f"{v:.5g}" if kind == "float" else str(v)
                 for v in values]
        header = (" " if kind != "text" else "") + _TABLE_HEADERS.get(name, name)  # room for a sign
        width = max(len(header), *(len(v) for v in shown))
        cells.append([header.rjust(width)] + [v.rjust(width) for v in shown])
    return "\n".join(" ".join(line) for line in zip(*cells))


_TABLE_HEADERS = {"coolprop_name": "fluid", "display_name": "name", "safety_class": "class",
                  "gwp100": "GWP100", "odp": "ODP", "T_crit_C": "T_crit °C", "p_crit_bar": "p_crit bar",
                  "T_nbp_C": "T_nbp °C", "M_g_mol": "M g/mol", "curve_type": "vapour curve",
                  "max_temperature_C": "T_max °C"}


def _cautions_text(fluids_module: Any) -> str:
    cautions = getattr(fluids_module, "CAUTIONS", "")
    if isinstance(cautions, str):
        return "Cautions:\n" + cautions.strip()
    return "Cautions:\n" + "\n".join(f"- {c}" for c in cautions)


def _cmd_schema(args: argparse.Namespace) -> int:
    from orcscreen.study import json_schema

    print(json.dumps(json_schema(), indent=2, ensure_ascii=False))
    return EXIT_OK


def _cmd_report(args: argparse.Namespace) -> int:
    out_dir = Path(args.dir)
    store = out_dir / "run.sqlite"
    if not store.is_file():
        raise UsageError(f"{out_dir}: no run store {store.name} here; allowed: the --out directory of an "
                         f"`orcscreen run`")
    try:
        from orcscreen import report
    except ImportError as exc:
        if getattr(exc, "name", None) == "orcscreen.report":
            raise UsageError("this orcscreen has no report module yet; ranking.csv in the run "
                             "directory holds the results") from None
        raise
    options: dict[str, Any] = {"svg": True} if args.svg else {}
    if args.rank_by is not None:
        from orcscreen.store import RunStore

        with RunStore(out_dir, create=False) as run_store:
            stored = run_store.meta().get("study") or {}
        _rank_by_problems(args.rank_by, stored, str(store))
        options["rank_by"] = args.rank_by
    path = report.build_report(out_dir, **options)
    print(f"report: {path if path else out_dir / 'report.html'} "
          f"(store read {getattr(report, 'READ_MODE', 'as found')})")
    print(CAUTION_LINE)
    return EXIT_OK


def _cmd_compare(args: argparse.Namespace) -> int:
    from orcscreen import compare

    runs = [compare.read_run(d) for d in (args.dir_a, args.dir_b)]
    result = compare.compare_runs(*runs)
    chart = Path(args.out) if args.out else compare.default_chart_path(args.dir_a, args.dir_b)
    chart, table = compare.write_comparison(result, chart)
    print(compare.format_comparison(result, n=args.top))
    print(f"chart: {chart}")
    print(f"table: {table}")
    print(CAUTION_LINE)
    return EXIT_OK


# ---------------------------------------------------------------------------------------------
# Parser
# ---------------------------------------------------------------------------------------------

def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number; allowed: a whole number >= 1") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"{value} is below 1; allowed: a whole number >= 1")
    return value


def _non_negative_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; allowed: a number >= 0") from None
    if not (value >= 0 and math.isfinite(value)):
        raise argparse.ArgumentTypeError(f"{text} is out of range; allowed: a number >= 0")
    return value


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as one line and exit status 2, without exiting."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(f"{self.prog}: {message} (see {self.prog} --help)")

    def exit(self, status: int = 0, message: str | None = None) -> None:  # type: ignore[override]
        if message:
            sys.stderr.write(message)
        raise _Exit(status)


class _Exit(Exception):
    def __init__(self, status: int):
        self.status = status


def build_parser() -> argparse.ArgumentParser:
    fmt = argparse.RawDescriptionHelpFormatter
    parser = _Parser(
        prog="orcscreen",
        description="Screen working fluids and layouts of organic Rankine cycles for a heat source "
        "and sink described in a TOML study file.",
        epilog="example:\n  orcscreen check studies/demo.toml\n  orcscreen run studies/demo.toml --out out/demo\n\n"
        "Exit status: 0 ok, 2 bad input, 1 internal error.\n" + CAUTION_LINE,
        formatter_class=fmt,
    )
    parser.add_argument("--version", action="version", version=f"orcscreen {__version__}")
    parser.add_argument("--debug", action="store_true", help="show the traceback of an internal error")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser(
        "run", help="run a study and write ranking.csv, the run store, charts and report",
        description="Run every case of a study (resuming from DIR/run.sqlite), write the outputs and "
        "print the top of the ranking.",
        epilog="example:\n  orcscreen run studies/geothermal-brine.toml --out out/brine --jobs 2\n"
        "  orcscreen run studies/demo.toml --rank-by exergy_efficiency,size_parameter\n\n"
        "Running the same command again resumes: ok and infeasible cases are not computed again,\n"
        "failed ones are retried (--keep-failed keeps them as they are).",
        formatter_class=fmt,
    )
    p.add_argument("study", metavar="STUDY.toml", help="the study file")
    p.add_argument("--out", metavar="DIR", help="output directory (default out/<study file name>)")
    p.add_argument("--jobs", type=_positive_int, metavar="N", help="worker processes (default: all cores)")
    p.add_argument("--cluster", metavar="ADDRESS", help="Dask scheduler address, e.g. tcp://10.0.0.5:8786 "
                   "(needs orcscreen[cluster])")
    p.add_argument("--yes", action="store_true", help="allow a study of more than 1,000,000 cases")
    p.add_argument("--no-report", action="store_true", help="skip the charts and report.html")
    p.add_argument("--top", type=_positive_int, default=10, metavar="N", help="rows of the ranking to print (default 10)")
    p.add_argument("--rank-by", type=_rank_by_names, metavar="A,B,C",
                   help="criteria the outputs rank by after the study's objective, instead of "
                   "study.rank_by (e.g. net_power,exergy_efficiency,size_parameter); computes no "
                   "case again")
    p.add_argument("--keep-failed", action="store_true",
                   help="do not compute again the cases stored as failed by an earlier run into DIR "
                   "(by default they are retried; ok and infeasible cases are never recomputed)")
    p.set_defaults(func=_cmd_run)

    p = sub.add_parser(
        "check", help="validate a study and count its cases; runs nothing",
        description="Validate a study file, print the number of cases (by sweep axis, fluids and "
        "layouts) and a rough time estimate. Changes nothing.",
        epilog="example:\n  orcscreen check studies/overnight-sweep.toml",
        formatter_class=fmt,
    )
    p.add_argument("study", metavar="STUDY.toml", help="the study file")
    p.add_argument("--jobs", type=_positive_int, metavar="N", help="cores to base the time estimate on (default: all)")
    p.add_argument("--yes", action="store_true", help="accept a study of more than 1,000,000 cases")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser(
        "fluids", help="list the fluid catalogue with safety class, GWP, ODP and cautions",
        description="Print the working-fluid catalogue: ASHRAE 34 safety class, GWP100, ODP, family, "
        "critical point and vapour-curve type, filtered as asked, with the cautions.",
        epilog="example:\n  orcscreen fluids --safety-class A1 A2L --max-gwp 150\n"
        "  orcscreen fluids --family hydrocarbon --format csv > hydrocarbons.csv",
        formatter_class=fmt,
    )
    p.add_argument("--family", action="append", metavar="F", help="keep this family (repeatable)")
    p.add_argument("--safety-class", nargs="+", metavar="C",
                   choices=["A1", "A2L", "A2", "A3", "B1", "B2L", "B2", "B3"],
                   help="keep these ASHRAE 34 safety classes (A1 A2L A2 A3 B1 B2L B2 B3)")
    p.add_argument("--max-gwp", type=_non_negative_float, metavar="X", help="keep fluids with GWP100 <= X")
    p.add_argument("--zero-odp", action="store_true", help="keep fluids with zero ODP")
    p.add_argument("--format", choices=["table", "csv", "json"], default="table", help="output format (default table)")
    p.set_defaults(func=_cmd_fluids)

    p = sub.add_parser(
        "schema", help="print the JSON Schema of the study file",
        description="Print the JSON Schema (draft 2020-12) of the study file, schema version 1, for "
        "editors that complete and check TOML against a schema.",
        epilog="example:\n  orcscreen schema > orcscreen-study.schema.json",
        formatter_class=fmt,
    )
    p.set_defaults(func=_cmd_schema)

    p = sub.add_parser(
        "report", help="rebuild the charts and report.html of a finished run",
        description="Rebuild DIR/figures/*.png and DIR/report.html from the run store DIR/run.sqlite.",
        epilog="example:\n  orcscreen report out/demo\n  orcscreen report out/demo --svg    # SVG files too\n"
        "  orcscreen report out/demo --rank-by lcoe,size_parameter",
        formatter_class=fmt,
    )
    p.add_argument("dir", metavar="DIR", help="output directory of an `orcscreen run`")
    p.add_argument("--svg", action="store_true",
                   help="also write every chart as SVG (vector files for print or editing); PNG only by default")
    p.add_argument("--rank-by", type=_rank_by_names, metavar="A,B,C",
                   help="criteria the report and charts rank by after the study's objective, instead "
                   "of the run's (ranking.csv keeps the run's; `orcscreen run STUDY --rank-by` rewrites "
                   "it without computing again)")
    p.set_defaults(func=_cmd_report)

    p = sub.add_parser(
        "compare", help="what changed between two finished runs, case by case",
        description="Compare two run output folders (ranking.csv and run-info.json of each), matching "
        "cases on fluid, layout and swept values: the objective in A and B with its change (B - A, "
        "absolute and %), the rank change, cases that became feasible or infeasible (with the reason) "
        "and cases in one run only, largest changes first. Writes a chart (B against A) and the table "
        "as CSV beside it.",
        epilog="example:\n  orcscreen compare out/brine out/brine-reinjection-70\n"
        "  orcscreen compare out/before out/after --out charts/catalogue-update.png\n\n"
        "Without --out the chart is DIR_B/compare-<name of DIR_A>.png; the CSV has the same stem.",
        formatter_class=fmt,
    )
    p.add_argument("dir_a", metavar="DIR_A", help="output folder of the first (reference) run")
    p.add_argument("dir_b", metavar="DIR_B", help="output folder of the second run")
    p.add_argument("--out", metavar="FILE", help="chart file, ending in .png (the CSV goes beside it)")
    p.add_argument("--top", type=_positive_int, default=20, metavar="N",
                   help="changed cases to print (default 20; the CSV holds all)")
    p.set_defaults(func=_cmd_compare)
    return parser


# ---------------------------------------------------------------------------------------------
# Entry point
# ---------------------------------------------------------------------------------------------

def _bad_input_types() -> tuple[type[BaseException], ...]:
    """Our exceptions that mean bad input (exit 2). Those of other modules are looked up only in
    modules already loaded: an exception of a module that was never imported cannot have been
    raised, and importing orcscreen.fluids or orcscreen.batch here would load the engine."""
    from orcscreen.study import StudyError

    found: list[type[BaseException]] = [StudyError, UsageError]
    for module, names in (("orcscreen.fluids", ("UnknownFluidError",)),
                          ("orcscreen.store", ("StoreError",)),
                          ("orcscreen.batch", ("ClusterError",)),
                          ("orcscreen.compare", ("CompareError",))):
        mod = sys.modules.get(module)
        if mod is None:
            continue
        found.extend(getattr(mod, n) for n in names if isinstance(getattr(mod, n, None), type))
    return tuple(found)


#: errno values of OSErrors the user can fix (permissions, space, links, paths): exit status 2
_FIXABLE_ERRNOS = ("EACCES", "EPERM", "EROFS", "ENOSPC", "EDQUOT", "ELOOP", "ENOTDIR", "EISDIR",
                   "ENAMETOOLONG", "ENOENT", "EEXIST", "EMLINK", "EFBIG")


def _user_fixable_environment_error(exc: BaseException) -> str | None:
    """A one-line message (path, what went wrong, what to do) for an error of the machine the
    user can fix (a read-only or full output folder, a link in the way...), else None."""
    import errno as errno_module
    import sqlite3

    from orcscreen.safe_files import OutputFolderError, describe_os_error

    if isinstance(exc, OutputFolderError):
        return str(exc)
    if isinstance(exc, OSError) and exc.errno in {getattr(errno_module, n, None) for n in _FIXABLE_ERRNOS}:
        return describe_os_error(exc, exc.filename)
    from orcscreen.store import is_damage

    if is_damage(exc):
        return (f"the run store is damaged ({exc}); run the study again into the same output "
                "folder: orcscreen sets the damaged file aside, keeps the readable cases and "
                "recomputes the rest")
    if isinstance(exc, sqlite3.OperationalError):
        from orcscreen.store import _environment_error

        found = _environment_error(exc, Path(getattr(exc, "filename", "") or "the run store"))
        return str(found) if found is not None else None
    return None


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line with ``argv`` (default sys.argv[1:]); return the exit status."""
    parser = build_parser()
    debug = False
    try:
        args = parser.parse_args(argv)
        debug = args.debug
        if not getattr(args, "func", None):
            parser.print_help(sys.stderr)
            return EXIT_BAD_INPUT
        return args.func(args)
    except _Exit as exc:
        return exc.status
    except KeyboardInterrupt:
        print("orcscreen: interrupted; finished cases are kept in the run store, run again to resume",
              file=sys.stderr)
        if argv is None:  # the process's own command line: leave now, without joining the
            # threads of a stopped worker pool (the store is closed and every finished case is
            # in it; a thread blocked on a dead worker's pipe must not hold the exit)
            for stream in (sys.stdout, sys.stderr):
                with contextlib.suppress(Exception):
                    stream.flush()
            os._exit(EXIT_INTERRUPTED)
        return EXIT_INTERRUPTED
    except BrokenPipeError:
        # the reader went away (orcscreen fluids | head); not an error of ours
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return EXIT_OK
    except Exception as exc:  # noqa: BLE001 - the boundary: every error becomes an exit status
        try:
            bad_input = _bad_input_types()
        except Exception:  # noqa: BLE001
            bad_input = (UsageError,)
        fixable = _user_fixable_environment_error(exc)
        if fixable:
            print(f"orcscreen: {fixable}", file=sys.stderr)
            return EXIT_BAD_INPUT
        if isinstance(exc, bad_input):
            from orcscreen.study import StudyError

            message = str(exc) or type(exc).__name__
            if not isinstance(exc, StudyError) and not message.startswith("orcscreen"):
                message = f"orcscreen: {message}"
            print(message, file=sys.stderr)
            return EXIT_BAD_INPUT
        if debug:
            traceback.print_exc()
        else:
            print(f"orcscreen: internal error: {type(exc).__name__}: {exc} "
                  f"(run with --debug for the traceback)", file=sys.stderr)
        return EXIT_INTERNAL


def _num(value: Any) -> str:
    return f"{value:.12g}" if isinstance(value, float) else str(value)


def _cores() -> int:
    try:
        return len(os.sched_getaffinity(0)) or 1
    except AttributeError:
        return os.cpu_count() or 1


def _duration(seconds: float) -> str:
    if seconds < 60:
        return f"{max(seconds, 0.1):.1f} s" if seconds < 10 else f"{seconds:.0f} s"
    if seconds < 3600:
        return f"{seconds / 60:.1f} min"
    return f"{seconds / 3600:.1f} h"
