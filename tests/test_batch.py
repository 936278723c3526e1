"""Tests of the batch runner (orcscreen/batch.py) on a tiny real study through the real engine.

The reference for every check is an uninterrupted, serial or differently parallel run of the
same study: a killed-and-resumed run, a second run, a run on a Dask cluster must give exactly
the same ranking (same bytes). Failure isolation and the time limit are checked with an engine
double that raises or hangs for chosen fluids and calls the real engine for the others.
Mechanisms relied on: SIGKILL cannot be caught (POSIX signal(7)); SQLite WAL keeps every
commit across a crash of the writer (sqlite.org, "Write-Ahead Logging"); a forked child keeps
the parent's memory, monkeypatched functions included (POSIX fork(2)); Linux prctl(2)
PR_SET_PDEATHSIG signals a child when its parent dies; /proc/PID/stat gives a process's state
and parent (proc(5)).
"""

from __future__ import annotations

import io
import math
import os
import signal
import sqlite3
import subprocess
import sys
import threading
import time

import pandas as pd
import pytest

from orcscreen import api
from orcscreen.batch import (
    ClusterError,
    RunSummary,
    _ChunkSizer,
    _Progress,
    _run_chunk,
    fork_workers_available,
    run_study,
)
from orcscreen.outputs import RANKING_FILE
from orcscreen.store import STORE_FILE, RunStore, StoreLockedError
from orcscreen.study import case_key, study_from_dict

FLUIDS = ["R245fa", "IsoButane", "n-Pentane", "R134a"]
T_IN = "source.inlet_temperature_C"


def study_dict(fluids=FLUIDS, temperatures=(110, 120, 130), layouts=("basic", "recuperated"),
               **study_section):
    """A small scenario of our own: hot water at 110-130 degC, 8 kg/s, cooling water at 20 degC."""
    return {
        "study": {"name": "batch test", **study_section},
        "source": {"kind": "water", "inlet_temperature_C": 120.0, "mass_flow_kg_s": 8.0},
        "sink": {"kind": "water", "inlet_temperature_C": 20.0},
        "cycle": {"layouts": list(layouts)},
        "fluids": {"include": list(fluids)},
        "sweep": {T_IN: [float(t) for t in temperatures]},
    }


def study_toml(d) -> str:
    """The same study as TOML text (for the subprocess run)."""
    lines = [f'[study]\nname = "{d["study"]["name"]}"']
    src = d["source"]
    lines.append(f'[source]\nkind = "{src["kind"]}"\ninlet_temperature_C = {src["inlet_temperature_C"]}'
                 f'\nmass_flow_kg_s = {src["mass_flow_kg_s"]}')
    lines.append(f'[sink]\nkind = "water"\ninlet_temperature_C = {d["sink"]["inlet_temperature_C"]}')
    lines.append("[cycle]\nlayouts = [" + ", ".join(f'"{x}"' for x in d["cycle"]["layouts"]) + "]")
    lines.append("[fluids]\ninclude = [" + ", ".join(f'"{x}"' for x in d["fluids"]["include"]) + "]")
    lines.append(f'[sweep]\n"{T_IN}" = [' + ", ".join(str(t) for t in d["sweep"][T_IN]) + "]")
    return "\n\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """An uninterrupted run of the tiny study with 2 worker processes."""
    out = tmp_path_factory.mktemp("reference")
    study = study_from_dict(study_dict())
    summary = run_study(study, out, jobs=2, progress=False)
    return study, out, summary


def ranking_bytes(out_dir) -> bytes:
    return (out_dir / RANKING_FILE).read_bytes()


def assert_same_ranking(out_dir, ref_dir) -> None:
    """ranking.csv byte-identical to the reference; on a mismatch, name the differing cells."""
    mine, ref = ranking_bytes(out_dir), ranking_bytes(ref_dir)
    if mine == ref:
        return
    a = pd.read_csv(io.BytesIO(mine), dtype=str, keep_default_na=False)
    b = pd.read_csv(io.BytesIO(ref), dtype=str, keep_default_na=False)
    if list(a.columns) != list(b.columns) or len(a) != len(b):
        pytest.fail(f"ranking.csv differs in shape: {a.shape} {list(a.columns)} vs reference "
                    f"{b.shape} {list(b.columns)}")
    cells = [f"{a.at[i, 'fluid']}/{a.at[i, 'layout']} {a.columns[j]}: {a.iat[i, j]!r} vs "
             f"reference {b.iat[i, j]!r}" for i, j in zip(*(a != b).values.nonzero())]
    pytest.fail("ranking.csv differs from the reference run:\n" + "\n".join(cells[:20]))


def stored_count(out_dir) -> int:
    path = out_dir / STORE_FILE
    if not path.exists():
        return 0
    try:
        conn = sqlite3.connect(f"file:{path}?mode=ro", uri=True, timeout=5)
        try:
            return conn.execute("SELECT COUNT(*) FROM cases").fetchone()[0]
        finally:
            conn.close()
    except sqlite3.OperationalError:  # schema not created yet
        return 0


def test_reference_run_computes_every_case(reference):
    study, out, summary = reference
    assert isinstance(summary, RunSummary)
    assert summary.total == study.n_cases == len(FLUIDS) * 2 * 3
    assert summary.skipped == 0 and summary.computed == summary.total
    assert summary.store_counts.get("ok", 0) == summary.ok > 0
    keys = [case_key(c) for c in study.cases()]
    with RunStore(out) as store:
        rows = store.rows()
        assert list(rows["case_key"]) == keys  # case order, every case once
        assert store.meta()["study_name"] == "batch test"


def test_kill_and_resume_equals_uninterrupted_run(reference, tmp_path):
    study, ref_out, ref_summary = reference
    study_file = tmp_path / "study.toml"
    study_file.write_text(study_toml(study_dict()))
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "orcscreen", "run", str(study_file), "--out",
                             str(out), "--jobs", "1", "--no-report"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120
        while stored_count(out) == 0 and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.005)
        proc.send_signal(signal.SIGKILL)  # cannot be caught: no chance to clean up
    finally:
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL, "the run ended before it could be killed"
    before = stored_count(out)
    assert 0 < before < ref_summary.total, f"{before} of {ref_summary.total} stored at the kill"

    summary = run_study(study, out, jobs=1, progress=False)
    assert summary.skipped == before  # nothing that finished is computed again
    assert summary.computed == ref_summary.total - before
    with RunStore(out) as store:
        keys = store.rows()["case_key"]
        assert keys.is_unique and len(keys) == ref_summary.total
        assert store.counts() == ref_summary.store_counts
    assert_same_ranking(out, ref_out)


def test_two_runs_give_byte_identical_ranking(reference, tmp_path):
    """Serial run vs the 2-process reference: other chunks, other completion order."""
    study, ref_out, _ = reference
    run_study(study, tmp_path, jobs=1, progress=False)
    assert_same_ranking(tmp_path, ref_out)


def test_cluster_without_dask_is_a_clear_error(reference, tmp_path, monkeypatch):
    study = reference[0]
    monkeypatch.setitem(sys.modules, "distributed", None)  # import fails as if not installed
    with pytest.raises(ClusterError, match=r"pip install 'orcscreen\[cluster\]'"):
        run_study(study, tmp_path, cluster="tcp://127.0.0.1:8786", progress=False)


def _engine_double(real, raise_for="IsoButane", hang_for="n-Pentane"):
    def run_case(case):
        if case.fluid == raise_for:
            raise RuntimeError("deliberate failure for the test")
        if case.fluid == hang_for:
            while True:  # never returns: only the time limit ends it
                time.sleep(0.01)
        return real(case)
    return run_case


def test_raising_and_hanging_cases_are_recorded_and_the_batch_goes_on(reference, tmp_path,
                                                                       monkeypatch):
    _, ref_out, _ = reference
    study = study_from_dict(study_dict(temperatures=(120,), case_time_limit_s=0.3))
    monkeypatch.setattr(api, "run_case", _engine_double(api.run_case))
    summary = run_study(study, tmp_path, jobs=1, progress=False)  # serial: the double is used
    assert summary.failed == 4 and summary.computed == 8
    with RunStore(tmp_path) as store:
        rows = store.rows().set_index("coolprop_name")
    iso, pentane = rows.loc["IsoButane"], rows.loc["n-Pentane"]
    assert (iso["status"] == "failed").all()
    assert (iso["safety_class"] == "A3").all()  # catalogue facts kept (ASHRAE 34: R600a is A3)
    assert (iso["reason"] == "RuntimeError: deliberate failure for the test").all()
    assert (pentane["status"] == "failed").all()
    assert (pentane["reason"] == "time limit of 0.3 s exceeded").all()
    assert (pentane["case_elapsed_s"] >= 0.3).all()
    # the other fluids finished exactly as in the reference run (same operating point)
    with RunStore(ref_out) as store:
        ref = store.rows()
    ref = ref[(ref[T_IN] == 120.0) & ref["fluid"].isin(["R245fa", "R134a"])]
    mine = store_rows(tmp_path)
    mine = mine[mine["fluid"].isin(["R245fa", "R134a"])]
    # (the keys differ: the time limit is an input of the case)
    columns = ["fluid", "layout", "status", "net_power_kW", "evaporation_temperature_C"]
    assert mine[columns].values.tolist() == ref[columns].values.tolist()

    # a later run may retry the failed cases (the real engine is back)
    monkeypatch.undo()
    again = run_study(study, tmp_path, jobs=1, progress=False, retry_failed=True)
    assert again.skipped == 4 and again.computed == 4
    assert store_rows(tmp_path)["reason"].str.startswith("time limit").sum() == 0


def store_rows(out_dir):
    with RunStore(out_dir) as store:
        return store.rows()


def test_real_cases_past_a_tiny_time_limit_are_failed(tmp_path):
    study = study_from_dict(study_dict(fluids=["R245fa"], temperatures=(120,), layouts=("basic",)))
    summary = run_study(study, tmp_path, jobs=1, progress=False, time_limit_s=1e-5)
    assert summary.failed == 1
    assert store_rows(tmp_path)["reason"].tolist() == ["time limit of 1e-05 s exceeded"]


def test_time_limit_in_a_worker_thread(monkeypatch):
    """Dask workers run tasks in threads, where SIGALRM cannot be used."""
    monkeypatch.setattr(api, "run_case", _engine_double(api.run_case))
    cases = list(study_from_dict(study_dict(temperatures=(120,), layouts=("basic",),
                                            case_time_limit_s=0.2)).cases())
    tasks = [(i, case_key(c), c) for i, c in enumerate(cases)]
    found = {}
    worker = threading.Thread(target=lambda: found.setdefault("records", _run_chunk(tasks, None)))
    worker.start()
    worker.join(timeout=60)
    assert not worker.is_alive()
    reasons = {rec.fluid: rec.reason for rec in found["records"]}
    assert reasons["n-Pentane"] == "time limit of 0.2 s exceeded"
    assert reasons["IsoButane"] == "RuntimeError: deliberate failure for the test"
    statuses = {rec.fluid: rec.status for rec in found["records"]}
    assert statuses["R245fa"] in ("ok", "infeasible")
    time.sleep(0.3)  # a withdrawn timer must not fire into the test thread afterwards


def test_second_run_on_a_locked_directory_is_refused(reference, tmp_path):
    study = reference[0]
    with RunStore(tmp_path, lock=True):
        with pytest.raises(StoreLockedError, match="another orcscreen run is using"):
            run_study(study, tmp_path, jobs=1, progress=False)
    assert stored_count(tmp_path) == 0


def test_changed_study_computes_only_new_keys(reference, tmp_path):
    _, ref_out, _ = reference
    small = study_from_dict(study_dict(fluids=FLUIDS[:2], temperatures=(110, 120)))
    first = run_study(small, tmp_path, jobs=1, progress=False)
    assert first.computed == 8
    rows = store_rows(tmp_path)
    finished = dict(zip(rows["case_key"], rows["case_elapsed_s"]))  # a recomputed case would differ

    bigger = study_from_dict(study_dict())  # adds 2 fluids and the 130 degC point
    second = run_study(bigger, tmp_path, jobs=2, progress=False)
    assert (second.skipped, second.computed) == (8, 16)
    rows = store_rows(tmp_path)
    kept = rows[rows["case_key"].isin(list(finished))]
    assert dict(zip(kept["case_key"], kept["case_elapsed_s"])) == finished  # not recomputed
    assert_same_ranking(tmp_path, ref_out)

    back = run_study(small, tmp_path, jobs=1, progress=False)  # nothing new to compute
    assert (back.skipped, back.computed) == (8, 0)
    assert set(store_rows(tmp_path)["case_key"]) == set(finished)
    assert len((tmp_path / RANKING_FILE).read_text().splitlines()) == 1 + 8


def test_plain_progress_lines_when_not_a_terminal(tmp_path, capsys):
    study = study_from_dict(study_dict(fluids=["R245fa"], temperatures=(120,)))
    run_study(study, tmp_path, jobs=1, progress=True)
    err = capsys.readouterr().err
    assert "[orcscreen] 2/2 cases computed (ok " in err
    assert "\r" not in err  # no bar redrawing in a log file


def test_jobs_must_be_positive(reference, tmp_path):
    with pytest.raises(ValueError, match="jobs must be a whole number >= 1, got 0"):
        run_study(reference[0], tmp_path, jobs=0, progress=False)




# -- forked workers ---------------------------------------------------------------------------

def _proc_stat(pid: int) -> tuple[str, int] | None:
    """(state, parent pid) of a process from /proc/PID/stat (proc(5)); None if it is gone."""
    try:
        text = open(f"/proc/{pid}/stat").read()
    except OSError:
        return None
    fields = text[text.rindex(")") + 2:].split()
    return fields[0], int(fields[1])


def _children(pid: int) -> list[int]:
    found = []
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            stat = _proc_stat(int(entry))
            if stat is not None and stat[1] == pid:
                found.append(int(entry))
    return found


def _all_gone(pids, timeout_s=20.0) -> bool:
    """True when every pid has exited (gone or a zombie waiting for its reaper)."""
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        states = [_proc_stat(p) for p in pids]
        if all(st is None or st[0] in "ZX" for st in states):
            return True
        time.sleep(0.05)
    return False


def _start_cli(tmp_path, *args, temperatures=(110, 120, 130)):
    study_file = tmp_path / "study.toml"
    study_file.write_text(study_toml(study_dict(temperatures=temperatures)))
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "orcscreen", "run", str(study_file), "--out",
                             str(out), "--no-report", *args], start_new_session=True,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    while stored_count(out) == 0 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.005)
    return proc, out


needs_fork = pytest.mark.skipif(not sys.platform.startswith("linux"),
                                reason="forked workers are used on Linux")


@needs_fork
def test_two_jobs_run_on_forked_workers(reference):
    study, out, summary = reference
    if fork_workers_available():  # the fixture ran in this single-threaded process
        assert summary.workers == "forked"
    assert summary.tasks >= 2 and summary.max_chunk >= 1


@needs_fork
def test_kill_with_forked_workers_leaves_none_and_resumes(reference, tmp_path):
    """SIGKILL of the driver: the workers die with it (PR_SET_PDEATHSIG), the run lock is free
    (flock(2): no worker keeps the lock file open) and a resumed run equals the reference."""
    study, ref_out, ref_summary = reference
    proc, out = _start_cli(tmp_path, "--jobs", "2")
    try:
        workers = _children(proc.pid)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL, "the run ended before it could be killed"
    assert len(workers) == 2
    assert _all_gone(workers), "a forked worker outlived the killed driver"
    before = stored_count(out)
    assert 0 < before < ref_summary.total
    summary = run_study(study, out, jobs=2, progress=False)  # the lock was released
    assert summary.skipped == before and summary.computed == ref_summary.total - before
    assert_same_ranking(out, ref_out)


@needs_fork
def test_ctrl_c_stops_the_forked_workers_and_keeps_the_finished_cases(reference, tmp_path):
    # 15 source temperatures (120 cases, a few seconds): the reference's 24 cases take about
    # 1 s, and the interrupt, sent once the first case is stored, could come after the last one
    proc, out = _start_cli(tmp_path, "--jobs", "2", temperatures=tuple(range(100, 160, 4)))
    workers = _children(proc.pid)
    try:
        os.killpg(proc.pid, signal.SIGINT)  # what a terminal sends to the whole group
        assert proc.wait(timeout=60) == 130
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert _all_gone(workers)
    assert stored_count(out) > 0
    with RunStore(out, lock=True) as store:  # not held by anyone any more
        assert store.locked


@needs_fork
def test_forked_workers_isolate_failures_and_time_limits(tmp_path, monkeypatch):
    """The engine double, patched in this process, is inherited by forked workers (fork(2))."""
    if not fork_workers_available():
        pytest.skip("other threads run in this process: the batch uses loky workers")
    study = study_from_dict(study_dict(temperatures=(120,), case_time_limit_s=0.3))
    monkeypatch.setattr(api, "run_case", _engine_double(api.run_case))
    summary = run_study(study, tmp_path, jobs=2, progress=False)
    assert summary.workers == "forked"
    assert (summary.failed, summary.computed) == (4, 8)
    rows = store_rows(tmp_path).set_index("coolprop_name")
    assert (rows.loc["IsoButane", "reason"] == "RuntimeError: deliberate failure for the test").all()
    assert (rows.loc["n-Pentane", "reason"] == "time limit of 0.3 s exceeded").all()
    assert set(rows.loc[["R245fa", "R134a"], "status"]) <= {"ok", "infeasible"}


def test_chunks_shrink_toward_the_end_and_cover_every_case():
    sizer = _ChunkSizer(pending=400, workers=2)
    sizes = []
    for chunk in sizer.chunks((i, f"k{i}", {}) for i in range(400)):
        sizes.append(len(chunk))
        sizer.observe([0.01] * len(chunk))  # 10 ms a case: 50 cases make TARGET_CHUNK_S
    assert sum(sizes) == 400 and min(sizes) >= 1
    assert sizes[:1] == [4] and max(sizes) == sizer.largest <= 50
    left = 400
    for n in sizes:  # guided: never more than a quarter of what is left (2 workers x 2)
        assert n <= max(1, math.ceil(left / 4))
        left -= n
    assert sizes[-1] <= 2


# -- last: these leave threads behind (Dask's offload thread, tqdm's monitor), after which
# -- the batch no longer forks workers in this process (module docstring of orcscreen.batch)

def test_dask_local_cluster_gives_the_local_result(reference, tmp_path):
    distributed = pytest.importorskip(
        "distributed", reason="Dask is an optional extra: pip install 'orcscreen[cluster]'")
    study, ref_out, ref_summary = reference
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        summary = run_study(study, tmp_path, cluster=cluster.scheduler_address, progress=False)
        ran = {name: sum(prefix.state_counts.values())
               for name, prefix in cluster.scheduler.task_prefixes.items()}
    assert summary.computed == ref_summary.total and summary.tasks > 0
    assert sum(n for name, n in ran.items() if "run_chunk" in name) >= summary.tasks, ran
    assert_same_ranking(tmp_path, ref_out)


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_bar_on_a_terminal_shows_counts():
    stream = _Terminal()
    bar = _Progress(total=3, skipped=0, enabled=True, stream=stream)
    bar.update(["ok", "failed"])
    bar.update(["infeasible"])
    bar.close()
    text = stream.getvalue()
    assert "3/3" in text and "ok=1" in text and "infeasible=1" in text and "failed=1" in text
