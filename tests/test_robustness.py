"""Robustness of runs and of the output folder: retries, dead workers, damaged stores, links,
permissions, a full disk, the report's lock.

The reference for every run here is an undisturbed run of the same small study: after a fault
and a rerun, ranking.csv must equal it byte for byte, and no ok or infeasible case may be
computed twice (their ``finished_at`` and ``case_elapsed_s`` stay as stored). Mechanisms relied
on: SIGKILL cannot be caught (POSIX signal(7)); O_NOFOLLOW makes open(2) fail on a symbolic link;
rename(2) replaces a link at the target name instead of following it; SQLite reports a damaged
page as SQLITE_CORRUPT (sqlite.org/rescode.html); a read-only bind mount and a small tmpfs give
EROFS and ENOSPC (mount(8), tmpfs(5)), set up inside a private mount namespace (unshare(1)) so
nothing outside the test changes; those tests are skipped where the namespace cannot be made.
"""

from __future__ import annotations

import fcntl
import os
import shutil
import sqlite3
import subprocess
import sys
import textwrap
import threading

import pytest

from orcscreen import cli
from orcscreen.batch import _run_chunk, run_study
from orcscreen.outputs import RANKING_FILE
from orcscreen.store import LOCK_FILE, STORE_FILE, RunStore
from orcscreen.study import case_key, study_from_dict

FLUIDS = ["R245fa", "IsoButane"]


def study_dict(**study_section):
    """A small scenario of our own: hot water at 110 and 120 degC, cooling water at 20 degC."""
    return {
        "study": {"name": "robustness test", **study_section},
        "source": {"kind": "water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 8.0},
        "cycle": {"layouts": ["basic", "recuperated"]},
        "fluids": {"include": FLUIDS},
        "sweep": {"source.inlet_temperature_C": [110.0, 120.0]},
    }


STUDY_TOML = """\
[study]
name = "robustness test"

[source]
kind = "water"
inlet_temperature_C = 120.0
mass_flow_kg_s = 8.0

[cycle]
layouts = ["basic", "recuperated"]

[fluids]
include = ["R245fa", "IsoButane"]

[sweep]
"source.inlet_temperature_C" = [110.0, 120.0]
"""


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    out = tmp_path_factory.mktemp("reference")
    summary = run_study(study_from_dict(study_dict()), out, jobs=1, progress=False)
    assert summary.computed == 8 and summary.failed == 0
    return out


def stored(out):
    """case key -> (status, finished_at) of every stored case."""
    conn = sqlite3.connect(f"file:{out / STORE_FILE}?mode=ro", uri=True)
    try:
        return {k: (s, f) for k, s, f in conn.execute("SELECT case_key, status, finished_at FROM cases")}
    finally:
        conn.close()


def run_cli(capsys, *argv):
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, out, err


# -- failure is not final ---------------------------------------------------------------------

def test_failed_cases_are_retried_by_default_and_others_are_not_recomputed(reference, tmp_path):
    study = study_from_dict(study_dict())
    first = run_study(study, tmp_path, jobs=1, progress=False, time_limit_s=1e-6)
    assert first.failed == 8  # a time limit of 1 us stops every case
    again = run_study(study, tmp_path, jobs=1, progress=False)
    assert (again.computed, again.retried, again.failed, again.skipped) == (8, 8, 0, 0)
    assert "8 failed before, retried" in str(again)
    before = stored(tmp_path)
    third = run_study(study, tmp_path, jobs=1, progress=False)
    assert (third.computed, third.retried, third.skipped) == (0, 0, 8)
    assert stored(tmp_path) == before  # ok cases are not computed again
    assert (tmp_path / RANKING_FILE).read_bytes() == (reference / RANKING_FILE).read_bytes()


def test_issue_scenario_tiny_study_time_limit_then_a_normal_one(tmp_path, capsys):
    """The case key leaves out the time limit: the same keys, now retried by default."""
    tiny, normal = tmp_path / "tiny.toml", tmp_path / "normal.toml"
    tiny.write_text(STUDY_TOML.replace('name = "robustness test"',
                                       'name = "robustness test"\ncase_time_limit_s = 1e-6'))
    normal.write_text(STUDY_TOML.replace('name = "robustness test"',
                                         'name = "robustness test"\ncase_time_limit_s = 60'))
    out = tmp_path / "out"
    code, text, _ = run_cli(capsys, "run", tiny, "--out", out, "--no-report", "--jobs", "1")
    assert code == 0 and "failed 8)" in text
    code, text, _ = run_cli(capsys, "run", tiny, "--out", out, "--no-report", "--keep-failed")
    assert code == 0 and "computed 0 now" in text
    code, text, _ = run_cli(capsys, "run", normal, "--out", out, "--no-report")
    assert code == 0 and "computed 8 now (8 failed before, retried; ok 8" in text


_KILLER = textwrap.dedent("""
    import os, signal, sys
    from orcscreen import api
    from orcscreen.batch import run_study
    from orcscreen.study import study_from_dict
    real = api.run_case

    def killing_engine(case):  # the case kills the process that runs it, as a fault in C would
        plain = case.as_dict() if hasattr(case, "as_dict") else case  # a typed or a plain case
        if plain["fluid"] == "IsoButane" and plain["layout"] == "basic":
            os.kill(os.getpid(), signal.SIGKILL)
        return real(case)

    api.run_case = killing_engine
    study = study_from_dict({d!r})
    for jobs in (2, 1, 2):
        s = run_study(study, sys.argv[1] + str(jobs), jobs=jobs, progress=False)
        print(jobs, s.computed, s.failed, s.retried, s.workers, flush=True)
""")


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="forked workers are used on Linux")
def test_a_worker_killed_inside_a_case_fails_that_case_and_the_batch_completes(reference, tmp_path):
    """Run in a fresh process, whose driver has no other thread, so that workers are forked."""
    script = _KILLER.format(d=study_dict())
    done = subprocess.run([sys.executable, "-c", script, str(tmp_path / "out")], capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    lines = [line.split() for line in done.stdout.splitlines()]
    # jobs 2: 8 cases, the 2 IsoButane/basic ones failed; jobs 1 (one forked worker) the same;
    # the rerun with jobs 2 retries exactly the 2 failed ones, which fail again
    assert lines == [["2", "8", "2", "0", "forked"], ["1", "8", "2", "0", "forked"],
                     ["2", "2", "2", "2", "forked"]]
    for jobs in ("1", "2"):
        with RunStore(tmp_path / f"out{jobs}") as store:
            rows = store.rows()
        failed = rows[rows["status"] == "failed"]
        assert set(zip(failed["coolprop_name"], failed["layout"])) == {("IsoButane", "basic")}
        assert failed["reason"].str.contains("worker process died").all()
        assert failed["reason"].str.contains("SIGKILL").all()
        assert set(rows.loc[rows["status"] != "failed", "status"]) <= {"ok", "infeasible"}
        with RunStore(reference, create=False) as store:
            ref = store.rows()
        good = rows[rows["status"] != "failed"]
        same = ref.set_index("case_key").loc[good["case_key"], "net_power_kW"].to_numpy()
        assert good["net_power_kW"].to_numpy().tolist() == same.tolist()


def test_a_time_limit_beyond_the_timers_is_no_limit():
    case = next(study_from_dict(study_dict()).cases())
    (record,) = _run_chunk([(0, case_key(case), case)], 1e10)
    assert record.status in ("ok", "infeasible"), record.reason


# -- a damaged store --------------------------------------------------------------------------

def test_undecodable_row_report_refuses_then_a_rerun_recomputes_only_it(reference, tmp_path, capsys):
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    before = stored(out)
    conn = sqlite3.connect(out / STORE_FILE)
    (bad,) = conn.execute("SELECT case_key FROM cases ORDER BY case_key LIMIT 1").fetchone()
    conn.execute("UPDATE cases SET row = substr(row, 1, 40) WHERE case_key = ?", (bad,))
    conn.commit()
    conn.close()
    code, _, err = run_cli(capsys, "report", out)
    assert code == 2
    assert str(out / STORE_FILE) in err and bad in err and "run the study again" in err
    summary = run_study(study_from_dict(study_dict()), out, jobs=1, progress=False)
    assert summary.computed == 1 and summary.skipped == 7
    assert "1 stored cases could not be read and are computed again" in str(summary)
    after = stored(out)
    assert {k: v for k, v in after.items() if k != bad} == {k: v for k, v in before.items() if k != bad}
    assert (out / RANKING_FILE).read_bytes() == (reference / RANKING_FILE).read_bytes()


def test_damaged_page_the_store_is_salvaged_and_the_rest_recomputed(reference, tmp_path, capsys):
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    path = out / STORE_FILE
    conn = sqlite3.connect(path)
    page_size = conn.execute("PRAGMA page_size").fetchone()[0]
    (root,) = conn.execute("SELECT rootpage FROM sqlite_master WHERE name = 'cases'").fetchone()
    conn.close()
    with open(path, "r+b") as f:  # garble the table's root page (pages count from 1)
        f.seek((root - 1) * page_size + 8)
        f.write(b"\xff" * (page_size - 8))
    code, _, err = run_cli(capsys, "report", out)
    assert code == 2 and str(path) in err and "damaged" in err and "run the study again" in err
    code, text, err = run_cli(capsys, "run", _toml(tmp_path), "--out", out, "--no-report", "--jobs", "1")
    assert code == 0, err
    assert "the run store was damaged" in text and "damaged file is kept as run.sqlite.damaged-" in text
    assert list(out.glob(f"{STORE_FILE}.damaged-*"))
    assert (out / RANKING_FILE).read_bytes() == (reference / RANKING_FILE).read_bytes()


def _toml(tmp_path):
    path = tmp_path / "study.toml"
    path.write_text(STUDY_TOML)
    return path


# -- links, permissions, space ----------------------------------------------------------------

@pytest.mark.parametrize("name", [LOCK_FILE, f".{RANKING_FILE}.tmp", ".run-info.json.tmp",
                                  RANKING_FILE, ".report.html.tmp"])
def test_a_link_in_the_output_folder_is_never_written_through(reference, tmp_path, capsys, name):
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    (out / RANKING_FILE).unlink()
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me\n")
    (out / name).unlink(missing_ok=True)
    (out / name).symlink_to(victim)
    code, _, err = run_cli(capsys, "run", _toml(tmp_path), "--out", out, "--jobs", "1")
    assert victim.read_text() == "keep me\n"
    if name == LOCK_FILE:
        assert code == 2 and str(out / LOCK_FILE) in err and "symbolic link" in err
    else:
        assert code == 0, err
        assert (out / RANKING_FILE).read_bytes() == (reference / RANKING_FILE).read_bytes()
        assert not (out / RANKING_FILE).is_symlink()


def test_a_link_as_the_store_file_is_refused(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    victim = tmp_path / "victim.sqlite"
    victim.write_bytes(b"")
    (out / STORE_FILE).symlink_to(victim)
    code, _, err = run_cli(capsys, "run", _toml(tmp_path), "--out", out, "--jobs", "1")
    assert code == 2 and str(out / STORE_FILE) in err and "symbolic link" in err
    assert victim.read_bytes() == b""


def test_permission_denied_on_the_lock_exits_2_naming_the_path(tmp_path, capsys, monkeypatch):
    """Simulated: the tests run as root, whom file modes do not stop (see the mount tests)."""
    from orcscreen import safe_files

    real_open = os.open

    def refusing_open(path, flags, *args):
        if str(path).endswith(LOCK_FILE):
            raise PermissionError(13, "Permission denied", str(path))
        return real_open(path, flags, *args)

    monkeypatch.setattr(safe_files.os, "open", refusing_open)
    code, _, err = run_cli(capsys, "run", _toml(tmp_path), "--out", tmp_path / "out", "--jobs", "1")
    assert code == 2 and str(tmp_path / "out" / LOCK_FILE) in err and "permission denied" in err
    assert "--out" in err


def _in_mount_namespace(tmp_path, setup: str, *commands: str) -> subprocess.CompletedProcess:
    """Run shell ``commands`` after ``setup`` in a private mount namespace; skip the test
    when one cannot be made here (not root, no unshare)."""
    if shutil.which("unshare") is None or os.geteuid() != 0:
        pytest.skip("needs unshare(1) and root to make a private mount namespace")
    probe = subprocess.run(["unshare", "-m", "true"], capture_output=True)
    if probe.returncode != 0:
        pytest.skip(f"no private mount namespace here: {probe.stderr.decode().strip()}")
    orcscreen = [sys.executable, "-m", "orcscreen"]
    body = " ; ".join(f"{' '.join(orcscreen)} {c} ; echo \"rc=$?\" 1>&2" for c in commands)
    return subprocess.run(["unshare", "-m", "sh", "-c", f"{setup} && {{ {body} ; }}"],
                          capture_output=True, text=True, timeout=300, cwd=tmp_path)


def test_read_only_output_folder_exits_2_for_run_and_report(reference, tmp_path):
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    done = _in_mount_namespace(tmp_path, "mount --bind out out && mount -o remount,bind,ro out",
                               f"run {_toml(tmp_path)} --out out --no-report", "report out")
    runs = done.stderr.split("rc=")
    assert [r[:1] for r in runs[1:]] == ["2", "2"], done.stderr
    assert "out/run.lock: the file system is read-only" in runs[0]
    assert "out: the folder is not writable" in runs[1] and "the run store itself is fine" in runs[1]
    assert "Traceback" not in done.stderr and "internal error" not in done.stderr


def test_full_disk_exits_2_and_keeps_what_was_stored(tmp_path):
    (tmp_path / "disk").mkdir()
    done = _in_mount_namespace(tmp_path, "mount -t tmpfs -o size=96k tmpfs disk",
                               f"run {_toml(tmp_path)} --out disk/out --no-report --jobs 1")
    assert done.stderr.rstrip().endswith("rc=2"), done.stderr
    assert "no space left on the device" in done.stderr and "disk/out" in done.stderr
    assert "Traceback" not in done.stderr and "internal error" not in done.stderr


# -- the report's lock ------------------------------------------------------------------------

def test_report_is_refused_while_a_run_holds_the_folder(reference, tmp_path, capsys):
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    with RunStore(out, lock=True):  # what a run holds while it computes
        code, _, err = run_cli(capsys, "report", out)
    assert code == 2 and "another orcscreen run is using" in err and str(out) in err
    assert not (out / "report.html").exists()
    code, text, _ = run_cli(capsys, "report", out)
    assert code == 0 and "under the run lock, from one consistent snapshot" in text


def _held_by_another_report(reference, tmp_path):
    """(a copy of the reference run folder, a descriptor holding its run lock as another report
    process would: flock and the holder's line)."""
    out = tmp_path / "out"
    shutil.copytree(reference, out)
    fd = os.open(out / LOCK_FILE, os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    os.ftruncate(fd, 0)
    os.write(fd, b"pid 1, started 2026-01-01T00:00:00+00:00, report\n")
    return out, fd


def test_a_second_report_waits_for_the_first(reference, tmp_path, capsys):
    out, fd = _held_by_another_report(reference, tmp_path)
    release = threading.Timer(0.5, os.close, (fd,))
    release.start()
    try:
        code, _, err = run_cli(capsys, "report", out)
    finally:
        release.join()
    assert code == 0, err
    assert (out / "report.html").is_file()


def test_a_waiting_report_follows_a_lock_file_removed_by_its_holder(reference, tmp_path, capsys):
    """The holder removes run.lock as it finishes (as every orcscreen run and report does): the
    waiting report, which opened the removed file, finds its lock on a file no longer at the
    path, takes the lock of the path's new file instead (flock(2) locks files, not names: two
    holders must never meet), builds the report and removes that file in turn."""
    out, fd = _held_by_another_report(reference, tmp_path)

    def finish():
        os.unlink(out / LOCK_FILE)
        os.close(fd)

    release = threading.Timer(0.5, finish)
    release.start()
    try:
        code, _, err = run_cli(capsys, "report", out)
    finally:
        release.join()
    assert code == 0, err
    assert (out / "report.html").is_file() and not (out / LOCK_FILE).exists()


def test_the_run_lock_file_is_gone_after_a_run(reference):
    """README, Reliability: run.lock exists only while a run or a report holds the folder."""
    assert (reference / "ranking.csv").is_file() and not (reference / LOCK_FILE).exists()


# -- study messages ---------------------------------------------------------------------------

def test_a_sweep_overriding_a_written_value_warns_in_check_and_run(tmp_path, capsys):
    path = tmp_path / "override.toml"
    path.write_text(STUDY_TOML.replace('[fluids]', '[sink]\ninlet_temperature_C = 20\n\n[fluids]')
                    .replace('[110.0, 120.0]', '[110.0, 120.0]\n"sink.inlet_temperature_C" = [15, 25]'))
    for argv in (["check", path], ["run", path, "--out", tmp_path / "out", "--no-report", "--jobs", "1"]):
        code, _, err = run_cli(capsys, *argv)
        assert code == 0
        assert (f'{path}: warning: sweep."sink.inlet_temperature_C" overrides '
                "sink.inlet_temperature_C = 20 written in [sink]") in err
        # a required key must be written even when swept: no warning that could not be silenced
        assert "source.inlet_temperature_C" not in err


def test_a_byte_order_mark_is_accepted(tmp_path):
    from orcscreen.study import load_study

    plain, marked = tmp_path / "plain.toml", tmp_path / "marked.toml"
    plain.write_text(STUDY_TOML, encoding="utf-8")
    marked.write_bytes(b"\xef\xbb\xbf" + STUDY_TOML.encode("utf-8"))
    assert [case_key(c) for c in load_study(marked).cases()] == \
           [case_key(c) for c in load_study(plain).cases()]
