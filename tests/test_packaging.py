"""Packaging: a light package root, the fluid catalogue found where it is shipped, and the wheel.

Import weight is checked in fresh interpreters (``python -c``), since this test process has long
loaded everything. The wheel test (marker ``wheel``; deselect with ``-m "not wheel"``) builds the
wheel from a clean copy of the project, installs it without dependencies into a folder of its
own and runs the command line from outside the checkout; it is skipped when pip cannot fetch the
build backend (no network and no cached setuptools). ``.ci/check-wheel`` does the full new-user
check: a brand-new virtual environment with the dependencies.
"""

from __future__ import annotations

import csv
import json
import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

import orcscreen

REPO = Path(__file__).resolve().parent.parent
#: The folder that holds the orcscreen package this test process imports: the subprocesses
#: import the same one (the checkout for an editable install).
IMPORT_ROOT = Path(orcscreen.__file__).resolve().parent.parent

#: Libraries that a light import must not load: the engine's (CoolProp, numpy, SciPy) and the
#: table and chart libraries (pandas, Matplotlib).
HEAVY = ("CoolProp", "numpy", "scipy", "pandas", "matplotlib")


def _run_python(code: str, cwd: Path, extra_env: dict[str, str] | None = None) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(IMPORT_ROOT), **(extra_env or {})}
    return subprocess.run([sys.executable, "-c", code], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=120)


def _loaded_after(statement: str, tmp_path: Path) -> list[str]:
    """The HEAVY libraries loaded after ``statement`` in a fresh interpreter."""
    code = (f"import sys\n{statement}\n"
            f"print(__import__('json').dumps([m for m in {HEAVY!r} if m in sys.modules]))")
    done = _run_python(code, tmp_path)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("module", ["orcscreen", "orcscreen.store", "orcscreen.cli",
                                    "orcscreen.outputs", "orcscreen.constants_cache"])
def test_light_modules_load_neither_the_engine_nor_the_table_libraries(module, tmp_path):
    assert _loaded_after(f"import {module}", tmp_path) == []


@pytest.mark.parametrize("module", ["orcscreen.study", "orcscreen.cycles", "orcscreen.streams", "orcscreen.api"])
def test_registry_readers_load_numpy_but_not_coolprop(module, tmp_path):
    # the study schema reads the engine's registries (layouts, stream kinds, turbine models),
    # whose modules need numpy; CoolProp, SciPy, pandas and Matplotlib wait for the first use
    assert _loaded_after(f"import {module}", tmp_path) in ([], ["numpy"])


def test_the_engine_is_loaded_when_an_entry_point_is_used(tmp_path):
    # the other side of the check above: the subprocess does see CoolProp when it is needed
    loaded = _loaded_after("from orcscreen import evaluate_cycle\n"
                           "evaluate_cycle('R245fa', evaporation_pressure_bar=10, condensing_pressure_bar=2)", tmp_path)
    assert "CoolProp" in loaded


@pytest.mark.parametrize("argv", [["--help"], ["--version"], ["run", "missing.toml"],
                                  ["check", "missing.toml"], ["report", "."]])
def test_cli_answers_without_the_engine_until_a_command_needs_it(argv, tmp_path):
    code = ("import contextlib, io\nfrom orcscreen.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):\n"
            f"    status = main({argv!r})\n"
            "print('status', status)")
    loaded = _loaded_after(code, tmp_path)
    # a command that reads a study reads the engine's registries too (numpy, not CoolProp)
    assert loaded in ([], ["numpy"]), loaded


#: Commands that need neither tables nor charts: they must leave pandas and Matplotlib unloaded
#: (issue 15, start-up: "import only what a command uses").
_LIGHT_COMMANDS = [["check", str(REPO / "studies" / "demo.toml")], ["fluids"], ["fluids", "--format", "csv"],
                   ["fluids", "--format", "json"], ["fluids", "--family", "hydrocarbon"], ["schema"]]


@pytest.mark.parametrize("argv", _LIGHT_COMMANDS, ids=lambda a: " ".join(a[:3]).replace(str(REPO), "."))
def test_light_commands_leave_pandas_and_matplotlib_unloaded(argv, tmp_path):
    code = ("import contextlib, io, sys\nfrom orcscreen import cli\n"
            "out = io.StringIO()\n"
            "with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):\n"
            f"    status = cli.main({argv!r})\n"
            "print(status, len(out.getvalue()))\n"
            "print(sorted(m for m in sys.modules if m.split('.')[0] in {'pandas', 'matplotlib'}))")
    done = _run_python(code, tmp_path)
    assert done.returncode == 0, done.stderr
    status_line, loaded = done.stdout.strip().splitlines()[-2:]
    status, printed = map(int, status_line.split())
    assert status == 0 and printed > 0  # the command did its work...
    assert loaded == "[]"  # ...without the table and chart libraries


@pytest.mark.parametrize("family", [None, "hydrocarbon", "hfo"])
def test_fluids_command_prints_what_pandas_prints(family, capsys):
    # The catalogue table is formatted without pandas; pandas (PyPI) is the reference for the
    # three formats of the DataFrame the command printed before: to_csv, to_json (records, its
    # default 10 decimals) and to_string with the command's float format and "-" for gaps.
    from orcscreen import cli, fluids

    argv = ["fluids"] + (["--family", family] if family else [])
    infos = fluids.select(include=[family] if family else ["all"], exclude=[], max_gwp=None,
                          safety_classes=None, zero_odp=False)
    frame = fluids.catalogue_frame(infos)
    assert cli.main([*argv, "--format", "csv"]) == 0
    assert capsys.readouterr().out == frame.to_csv(index=False, lineterminator="\n")
    assert cli.main([*argv, "--format", "json"]) == 0
    assert json.loads(capsys.readouterr().out) == json.loads(frame.to_json(orient="records"))
    assert cli.main(argv) == 0
    table = frame.rename(columns=cli._TABLE_HEADERS).to_string(
        index=False, na_rep="-", float_format=lambda x: f"{x:.5g}")
    assert capsys.readouterr().out.startswith(table + f"\n\n{len(frame)} fluids.\n")

def test_cli_unknown_fluid_error_is_still_bad_input(capsys):
    # UnknownFluidError reaches the boundary from orcscreen.fluids, which is then loaded: the
    # boundary finds the type among the loaded modules and answers exit status 2, one line
    from orcscreen import cli

    assert cli.main(["fluids", "--family", "hydrocarbn"]) == cli.EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "unknown fluid or family 'hydrocarbn'" in err and "hydrocarbon" in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_root_entry_points_are_the_api_functions():
    from orcscreen import api, evaluate_cycle, run_case, screen

    assert (screen, run_case, evaluate_cycle) == (api.screen, api.run_case, api.evaluate_cycle)
    assert set(orcscreen.__all__) == {"screen", "run_case", "evaluate_cycle", "__version__"}
    assert all(hasattr(orcscreen, name) for name in orcscreen.__all__)
    assert set(orcscreen.__all__) <= set(dir(orcscreen))
    with pytest.raises(AttributeError, match="no attribute 'not_a_name'"):
        orcscreen.not_a_name  # noqa: B018
    with pytest.raises(ImportError):
        from orcscreen import not_a_name  # noqa: F401


def test_outputs_still_exports_the_engine_row_columns():
    from orcscreen import api, outputs
    from orcscreen.outputs import ROW_COLUMNS

    assert ROW_COLUMNS is api.ROW_COLUMNS and outputs.ROW_COLUMNS is api.ROW_COLUMNS
    assert "ROW_COLUMNS" in outputs.__all__
    with pytest.raises(AttributeError):
        outputs.not_a_name  # noqa: B018


def test_shipped_catalogue_is_the_repository_file():
    from orcscreen import fluids

    shipped = fluids.DEFAULT_CATALOGUE
    # a checkout or an editable install reads fluids/ itself; an install from the wheel its copy
    assert shipped.resolve() in ((REPO / "fluids" / "catalogue.csv").resolve(),
                                 (IMPORT_ROOT / "orcscreen" / "catalogue" / "catalogue.csv").resolve())
    assert shipped.read_bytes() == (REPO / "fluids" / "catalogue.csv").read_bytes()


def test_catalogue_override_still_wins(tmp_path, monkeypatch):
    from orcscreen import fluids

    other = tmp_path / "other.csv"
    monkeypatch.setenv(fluids.CATALOGUE_ENV, str(other))
    assert fluids.catalogue_path() == other.resolve()
    monkeypatch.delenv(fluids.CATALOGUE_ENV)
    assert fluids.catalogue_path() == fluids.DEFAULT_CATALOGUE


# -- the wheel -----------------------------------------------------------------------------------

#: pip's words when it cannot reach an index for the build backend (no network, nothing cached).
_OFFLINE_SIGNS = ("Could not find a version that satisfies the requirement setuptools",
                  "No matching distribution found for setuptools", "NewConnectionError",
                  "Temporary failure in name resolution", "Network is unreachable")


def _project_files() -> list[str]:
    """The project's files as git sees them: tracked, or new and not ignored."""
    if shutil.which("git") is None or not (REPO / ".git").exists():
        pytest.skip("not a git checkout: cannot list the project's files")
    listed = subprocess.run(["git", "-C", str(REPO), "ls-files", "-z", "--cached", "--others",
                             "--exclude-standard"], check=True, capture_output=True).stdout.decode()
    return [name for name in listed.split("\0") if name and (REPO / name).is_file()]


@pytest.fixture(scope="module")
def built_wheel(tmp_path_factory) -> Path:
    """The wheel built from a clean copy of the project (nothing of an earlier build can leak in)."""
    work = tmp_path_factory.mktemp("wheel")
    for name in _project_files():
        (work / "src" / name).parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(REPO / name, work / "src" / name)
    done = subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(work / "dist"),
                           str(work / "src")], capture_output=True, text=True, timeout=600)
    if done.returncode != 0:
        output = done.stdout + done.stderr
        if any(sign in output for sign in _OFFLINE_SIGNS):
            pytest.skip("pip cannot fetch the build backend (offline?)")
        pytest.fail(f"building the wheel failed:\n{output}")
    (wheel,) = (work / "dist").glob("orcscreen-*.whl")
    return wheel


@pytest.mark.wheel
def test_wheel_carries_the_catalogue_and_no_top_level_fluids_package(built_wheel):
    names = zipfile.ZipFile(built_wheel).namelist()
    for name in ("catalogue.csv", "README.md"):
        assert zipfile.ZipFile(built_wheel).read(f"orcscreen/catalogue/{name}") == (REPO / "fluids" / name).read_bytes()
    top_level = {n.split("/")[0] for n in names if not n.split("/")[0].endswith(".dist-info")}
    assert top_level == {"orcscreen"}  # no "fluids": a PyPI library has that name
    # every module of the source tree is in the wheel (a subpackage left out of pyproject's
    # package list would be missing, as orcscreen/cycles once was)
    modules = {str(p.relative_to(REPO)).replace("\\", "/") for p in (REPO / "orcscreen").rglob("*.py")}
    assert modules <= set(names), sorted(modules - set(names))
    entry_points = zipfile.ZipFile(built_wheel).read(
        next(n for n in names if n.endswith(".dist-info/entry_points.txt"))).decode()
    assert "orcscreen = orcscreen.cli:main" in entry_points


@pytest.mark.wheel
def test_installed_wheel_lists_fluids_and_runs_a_study_outside_the_checkout(built_wheel, tmp_path):
    site = tmp_path / "site"
    subprocess.run([sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--target", str(site),
                    str(built_wheel)], check=True, capture_output=True, timeout=300)
    run_dir = tmp_path / "run"
    run_dir.mkdir()
    tiny = (REPO / "studies" / "demo.toml").read_text(encoding="utf-8").replace(
        '\ninclude = ["hydrocarbon", "hfc", "hfo", "hcfo"]', '\ninclude = ["n-Pentane", "R245fa"]')
    assert 'include = ["n-Pentane", "R245fa"]' in tiny
    (run_dir / "tiny.toml").write_text(tiny, encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": str(site)}  # the wheel's files only, not the checkout

    where = subprocess.run([sys.executable, "-c", "import orcscreen.fluids as f, orcscreen.cycles as c; "
                            "print(f.__file__); print(f.DEFAULT_CATALOGUE); print(c.__file__)"],
                           cwd=run_dir, env=env, capture_output=True, text=True, check=True).stdout.split()
    # (the checkout's editable install would serve a subpackage missing from the wheel: every
    # file must come from the wheel's copy)
    assert [Path(p).resolve().is_relative_to(site.resolve()) for p in where] == [True, True, True], where

    fluids_cmd = subprocess.run([sys.executable, "-m", "orcscreen", "fluids", "--format", "csv"],
                                cwd=run_dir, env=env, capture_output=True, text=True, timeout=300)
    assert fluids_cmd.returncode == 0, fluids_cmd.stderr
    listed = {row["coolprop_name"] for row in csv.DictReader(fluids_cmd.stdout.splitlines())}
    assert {"n-Pentane", "R245fa"} <= listed and len(listed) > 50

    run_cmd = subprocess.run([sys.executable, "-m", "orcscreen", "run", "tiny.toml", "--out", "out",
                              "--jobs", "1", "--no-report"], cwd=run_dir, env=env, capture_output=True,
                             text=True, timeout=300)
    assert run_cmd.returncode == 0, run_cmd.stderr
    with open(run_dir / "out" / "ranking.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    assert sorted((r["coolprop_name"], r["layout"], r["status"]) for r in rows) == sorted(
        (fluid, layout, "ok") for fluid in ("R245fa", "n-Pentane") for layout in ("basic", "recuperated"))
