"""Regenerate the README's example figures in figures/ from the invented demo studies.

    python scripts/make_figures.py            # demo study + the sweep study (a few minutes)
    python scripts/make_figures.py --no-sweep # demo and year studies only (under a minute)

Runs studies/demo.toml, studies/air-cooled-year.toml (the year's charts) and
studies/overnight-sweep.toml (the sweep charts) into a temporary directory with the ordinary
batch, builds the report there (which draws every chart), copies a few PNGs to figures/ under
fixed names (FIGURES, YEAR_FIGURES, SWEEP_FIGURES) and draws figures/ranking.png
with the best README_BARS cases. Nothing else in the repository changes.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent

#: README file name -> how to find the chart in DIR/figures/ (first match of the glob).
FIGURES = {
    "tq-diagram.png": "tq_01_*.png",
    "ts-diagram.png": "ts_01_*.png",
    "tradeoff-size-parameter.png": "tradeoff_size_parameter.png",
    "tradeoff-investment.png": "tradeoff_investment.png",
    "landscape.png": "landscape.png",
    "turbine-map.png": "turbine_map.png",
}
YEAR_FIGURES = {
    "year-power.png": "year_power.png",
    "rank-change.png": "rank_change.png",
}
SWEEP_FIGURES = {
    "sweep-source-temperature.png": "sweep_source.inlet_temperature_C.png",
    "best-fluid-map.png": "map_source.inlet_temperature_C_sink.inlet_temperature_C.png",
}


def _run(study_path: Path, out_dir: Path, jobs: int | None) -> Path:
    from orcscreen import report
    from orcscreen.batch import run_study
    from orcscreen.study import load_study

    print(f"running {study_path.relative_to(REPO)} ...", flush=True)
    summary = run_study(load_study(study_path), out_dir, jobs=jobs, progress=False)
    print(f"  {summary}", flush=True)
    if not summary.ok:
        raise SystemExit(f"make_figures: no feasible case in {study_path.name}; nothing to draw")
    report.build_report(out_dir)
    return out_dir / "figures"


#: bars in the README's ranking chart (the report's own chart shows up to 40)
README_BARS = 20


def _ranking(run_dir: Path, dest: Path) -> Path:
    """The README's ranking chart: the best README_BARS cases of the demo run."""
    from orcscreen import plots
    from orcscreen.outputs import ranking_table
    from orcscreen.store import RunStore

    with RunStore(run_dir, create=False) as store:
        table = ranking_table(store.rows(), store.meta())
    ax = plots.ranking_chart(table, max_bars=README_BARS)
    return plots.save_figure(ax.figure, dest, "ranking", formats=("png",))[0]


def _copy(figures: Path, wanted: dict[str, str], dest: Path) -> list[Path]:
    written = []
    for name, pattern in wanted.items():
        found = sorted(figures.glob(pattern))
        if not found:
            raise SystemExit(f"make_figures: no chart matching {pattern} in {figures}")
        target = dest / name
        shutil.copyfile(found[0], target)
        written.append(target)
    return written


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--study", type=Path, default=REPO / "studies" / "demo.toml")
    parser.add_argument("--sweep-study", type=Path,
                        default=REPO / "studies" / "overnight-sweep.toml")
    parser.add_argument("--year-study", type=Path, default=REPO / "studies" / "air-cooled-year.toml")
    parser.add_argument("--no-sweep", action="store_true", help="skip the sweep charts")
    parser.add_argument("--dest", type=Path, default=REPO / "figures")
    parser.add_argument("--jobs", type=int, default=None, help="worker processes (default: all)")
    args = parser.parse_args(argv)

    args.dest.mkdir(parents=True, exist_ok=True)
    written = []
    with tempfile.TemporaryDirectory(prefix="orcscreen-figures-") as tmp:
        demo = Path(tmp) / "demo"
        written += _copy(_run(args.study.resolve(), demo, args.jobs), FIGURES, args.dest)
        written.append(_ranking(demo, args.dest))
        written += _copy(_run(args.year_study.resolve(), Path(tmp) / "year", args.jobs), YEAR_FIGURES, args.dest)
        if not args.no_sweep:
            written += _copy(_run(args.sweep_study.resolve(), Path(tmp) / "sweep", args.jobs),
                             SWEEP_FIGURES, args.dest)
    for path in written:
        print(f"wrote {path.relative_to(REPO) if path.is_relative_to(REPO) else path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
