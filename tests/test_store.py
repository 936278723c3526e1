"""Tests of the run store (orcscreen/store.py) and of the tables regenerated from it
(orcscreen/outputs.py).

The store's promises are checked against the behaviour of the tools it rests on, not against our
own numbers: SQLite's documented WAL journal and transaction durability (sqlite.org, "Write-Ahead
Logging"; "PRAGMA synchronous": with WAL and NORMAL a commit survives a crash of the process) and
the Linux flock(2) semantics (a lock belongs to the open file description and is released when
the last descriptor closes, which the kernel does for a process killed by SIGKILL). Rows here are
hand-made dicts shaped like contract section 2; their numbers are arbitrary labels, not physics.
"""

from __future__ import annotations

import json
import math
import signal
import sqlite3
import subprocess
import sys
import textwrap

import numpy as np
import pandas as pd
import pytest

from orcscreen.objectives import PARETO_COLUMN, criteria_for, rank_column
from orcscreen.outputs import (
    RANKING_FILE,
    ROW_COLUMNS,
    RUN_INFO_FILE,
    top_table,
    write_outputs,
)
from orcscreen.store import (
    LOCK_FILE,
    STORE_FILE,
    RunStore,
    StoreError,
    StoreLockedError,
    StoreNotFoundError,
)

T_IN = "source.inlet_temperature_C"


def make_result(fluid, layout="basic", status="ok", power=None, reason="", **extra):
    """A result shaped like run_case's: every contract row column, most of them None."""
    row = dict.fromkeys(ROW_COLUMNS)
    row.update(fluid=fluid, coolprop_name=fluid.upper(), layout=layout, status=status,
               reason=reason if status != "ok" else "", net_power_kW=power, evaluations=7,
               elapsed_s=0.01)
    row.update(extra)
    detail = {"optimum": {"net_power_kW": power}, "landscape": {"net_power_kW": [1.0, math.nan]}} \
        if status == "ok" else None
    return {"row": row, "detail": detail}


# -- store ------------------------------------------------------------------------------------

def test_put_and_rows_round_trip_in_case_order(tmp_path):
    with RunStore(tmp_path) as store:
        # inserted out of case order, with numpy scalar types and a NaN
        store.put("k2", 2, make_result("R245fa", power=np.float64(80.5)), sweep={T_IN: 130.0})
        store.put("k0", 0, make_result("isobutane", power=91.25, evaluations=np.int64(12)),
                  sweep={T_IN: 120.0})
        store.put("k1", 1, make_result("pentane", status="infeasible", power=math.nan,
                                       reason="no evaporation pressure below the limit"),
                  sweep={T_IN: 120.0})
        df = store.rows()
        assert list(df["case_key"]) == ["k0", "k1", "k2"]
        assert list(df["case_index"]) == [0, 1, 2]
        cols = list(df.columns)
        assert cols[:3] == ["case_key", "case_index", T_IN]
        # row columns keep the engine's order
        assert cols[3:3 + len(ROW_COLUMNS)] == list(ROW_COLUMNS)
        assert df.loc[0, "net_power_kW"] == 91.25 and df.loc[0, "evaluations"] == 12
        assert math.isnan(df.loc[1, "net_power_kW"])
        assert df.loc[1, "reason"] == "no evaporation pressure below the limit"
        assert store.counts() == {"infeasible": 1, "ok": 2}
        assert store.done_keys() == {"k0", "k1", "k2"}
        assert len(store) == 3


def test_detail_round_trip_and_unknown_key(tmp_path):
    with RunStore(tmp_path) as store:
        store.put("a", 0, make_result("R134a", power=10.0))
        store.put("b", 1, make_result("R134a", status="failed", reason="PropertyError: x"))
        detail = store.detail("a")
        assert detail["optimum"]["net_power_kW"] == 10.0
        assert math.isnan(detail["landscape"]["net_power_kW"][1])
        assert store.detail("b") is None
        assert [k for k, _ in store.iter_details(["b", "a"])] == ["b", "a"]
        with pytest.raises(KeyError, match="'zz' is not in the run store"):
            store.detail("zz")


def test_put_same_key_replaces(tmp_path):
    with RunStore(tmp_path) as store:
        store.put("a", 0, make_result("R134a", status="failed", reason="boom"))
        store.put("a", 0, make_result("R134a", power=5.0))
        assert store.counts() == {"ok": 1}
        assert store.rows()["net_power_kW"].tolist() == [5.0]


def test_put_many_is_one_transaction(tmp_path):
    """A record that cannot be stored rolls back the whole batch (SQLite transaction)."""
    with RunStore(tmp_path) as store:
        good = ("a", 0, make_result("R134a", power=1.0))
        bad = ("b", 1, {"row": {"fluid": "R134a", "status": "ok", "x": object()}})
        with pytest.raises(TypeError, match="cannot store a value of type object"):
            store.put_many([good, bad])
        assert store.done_keys() == set()
        assert store.put_many([good]) == 1


def test_set_plan_reorders_and_hides_stale_cases(tmp_path):
    with RunStore(tmp_path) as store:
        for i, key in enumerate("abc"):
            store.put(key, i, make_result("R134a", power=float(i)))
        store.set_plan(["c", "x", "a"])  # b dropped from the study, x not computed yet
        df = store.rows()
        assert list(df["case_key"]) == ["c", "a"]
        assert list(df["case_index"]) == [0, 2]
        assert store.counts() == {"ok": 2}
        assert store.done_keys() == {"a", "b", "c"}  # b is kept: going back recomputes nothing
        stale = store.rows(include_stale=True)
        assert list(stale["case_key"]) == ["c", "a", "b"]


def test_meta_entries_and_created_at_kept(tmp_path):
    with RunStore(tmp_path) as store:
        created = store.meta()["created_at"]
        store.set_meta(study_hash="abc123", study={"source": {"kind": "water"}})
    with RunStore(tmp_path) as store:
        meta = store.meta()
        assert meta["created_at"] == created
        assert meta["study_hash"] == "abc123"
        assert meta["study"] == {"source": {"kind": "water"}}
        assert meta["schema_version"] == 1
        assert "updated_at" in meta


def test_database_is_in_wal_mode(tmp_path):
    """sqlite.org "Write-Ahead Logging": journal_mode=WAL is persistent in the file."""
    with RunStore(tmp_path):
        pass
    conn = sqlite3.connect(tmp_path / STORE_FILE)
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    conn.close()


def test_missing_store_is_a_clear_error(tmp_path):
    with pytest.raises(StoreNotFoundError, match="no run store at .*run.sqlite"):
        RunStore(tmp_path / "nothing", create=False)


def test_not_a_database_is_a_clear_error(tmp_path):
    (tmp_path / STORE_FILE).write_text("this is not sqlite\n" * 100)
    with pytest.raises(StoreError, match="not a usable orcscreen run store"):
        RunStore(tmp_path)


def test_second_lock_is_refused_and_released_on_close(tmp_path):
    first = RunStore(tmp_path, lock=True)
    with pytest.raises(StoreLockedError, match=r"another orcscreen run is using .*\(pid \d+"):
        RunStore(tmp_path, lock=True)
    with RunStore(tmp_path) as reader:  # readers need no lock
        assert reader.counts() == {}
    first.close()
    with RunStore(tmp_path, lock=True) as again:
        assert again.locked


_HOLDER = textwrap.dedent("""
    import sys, time
    from orcscreen.store import RunStore
    store = RunStore(sys.argv[1], lock=True)
    for i in range(int(sys.argv[2])):
        store.put(f"k{i}", i, {"row": {"fluid": "R134a", "layout": "basic", "status": "ok",
                                       "reason": "", "net_power_kW": float(i)}, "detail": None})
    print("ready", flush=True)
    time.sleep(600)
""")


def _start_holder(tmp_path, n_cases):
    proc = subprocess.Popen([sys.executable, "-c", _HOLDER, str(tmp_path), str(n_cases)],
                            stdout=subprocess.PIPE, text=True)
    assert proc.stdout.readline().strip() == "ready"
    return proc


def test_lock_of_a_killed_process_is_released_and_its_commits_kept(tmp_path):
    """flock(2): the kernel drops the lock with the last descriptor, also after SIGKILL;
    SQLite WAL: every committed transaction survives the crash of the writer."""
    proc = _start_holder(tmp_path, 25)
    try:
        with pytest.raises(StoreLockedError, match=f"pid {proc.pid}"):
            RunStore(tmp_path, lock=True)
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
        proc.stdout.close()
    assert proc.returncode == -signal.SIGKILL
    assert (tmp_path / LOCK_FILE).exists()  # the file stays, the lock does not
    with RunStore(tmp_path, lock=True) as store:
        assert store.done_keys() == {f"k{i}" for i in range(25)}
        assert store.rows()["net_power_kW"].tolist() == [float(i) for i in range(25)]


# -- outputs regenerated from the store -------------------------------------------------------

def _filled_store(path):
    """Two operating points x three fluids x two layouts, with ties, failures, infeasibles."""
    results = [
        # point 1 (120 degC): R245fa/basic and isobutane/basic tie at 50 kW
        ("isobutane", "basic", "ok", 50.0), ("isobutane", "recuperated", "ok", 52.0),
        ("R245fa", "basic", "ok", 50.0), ("R245fa", "recuperated", "failed", None),
        ("pentane", "basic", "infeasible", None), ("pentane", "recuperated", "ok", 49.0),
        # point 2 (140 degC)
        ("isobutane", "basic", "ok", 70.0), ("isobutane", "recuperated", "ok", 69.0),
        ("R245fa", "basic", "ok", 71.0), ("R245fa", "recuperated", "ok", 71.5),
        ("pentane", "basic", "ok", 1 / 3), ("pentane", "recuperated", "ok", math.inf),
    ]
    with RunStore(path) as store:
        store.set_meta(orcscreen_version="9.9", coolprop_version="7.7", study_hash="h4sh",
                       study_name="demo")
        for i, (fluid, layout, status, power) in reversed(list(enumerate(results))):
            store.put(f"key{i:02d}", i, make_result(fluid, layout, status, power,
                                                    reason=f"{status} because", elapsed_s=i * 0.1),
                      sweep={T_IN: 120.0 if i < 6 else 140.0, "sink.inlet_temperature_C": 20})
    return results


def test_ranking_ranks_within_operating_point_with_tie_break(tmp_path):
    _filled_store(tmp_path)
    summary = write_outputs(tmp_path)
    table = summary.table()
    cols = list(table.columns)
    assert summary.columns == cols and len(summary) == len(table) == 12
    assert cols[:4] == ["case_key", T_IN, "sink.inlet_temperature_C", "rank"]
    assert cols[-3:] == ["orcscreen_version", "coolprop_version", "study_hash"]
    assert "elapsed_s" not in cols  # run timing is not part of a reproducible ranking
    # one rank per ranking criterion (the default ones: the store's meta holds no study), the
    # Pareto mark, then the row columns
    criteria = [rank_column(c) for c in criteria_for(None)]
    assert cols[4:4 + len(criteria) + 1] == [*criteria, PARETO_COLUMN]
    assert cols[5 + len(criteria):-3] == [c for c in ROW_COLUMNS if c != "elapsed_s"]
    first = table[table[T_IN] == 120.0]
    # 52 first; the 50 kW tie is broken by fluid name: R245fa < isobutane (ASCII order)
    ranks = [None if pd.isna(r) else int(r) for r in first["rank"]]
    assert list(zip(first["fluid"], first["layout"], ranks)) == [
        ("isobutane", "recuperated", 1), ("R245fa", "basic", 2),
        ("isobutane", "basic", 3), ("pentane", "recuperated", 4),
        ("R245fa", "recuperated", None), ("pentane", "basic", None)]
    second = table[table[T_IN] == 140.0]
    # an infinite net power is not a ranked result
    assert second["rank"].isna().tolist() == [False] * 5 + [True]
    assert second["net_power_kW"].tolist()[:2] == [71.5, 71.0]
    assert list(table.index) == list(range(12))
    assert (table["study_hash"] == "h4sh").all()


def test_ranking_csv_is_plain_and_byte_stable(tmp_path):
    _filled_store(tmp_path / "a")
    write_outputs(tmp_path / "a")
    # the same results stored in another order give the same bytes
    results = _filled_store(tmp_path / "b")
    with RunStore(tmp_path / "b") as store:
        store.put("key00", 0, make_result("isobutane", "basic", "ok", 50.0, reason="x",
                                          elapsed_s=99.0),
                  sweep={T_IN: 120.0, "sink.inlet_temperature_C": 20})
    write_outputs(tmp_path / "b")
    a = (tmp_path / "a" / RANKING_FILE).read_bytes()
    assert a == (tmp_path / "b" / RANKING_FILE).read_bytes()
    lines = a.decode().splitlines()
    assert lines[0].startswith("case_key,source.inlet_temperature_C,")
    assert len(lines) == 1 + len(results)
    back = pd.read_csv(tmp_path / "a" / RANKING_FILE)
    assert back.loc[back["fluid"].eq("pentane") & back["layout"].eq("basic")
                    & back[T_IN].eq(140.0), "net_power_kW"].item() == pytest.approx(1 / 3, rel=1e-6)
    assert "0.333333," in a.decode()  # %.6g
    assert back["evaluations"].dtype.kind == "i"  # integers stay integers
    info = json.loads((tmp_path / "a" / RUN_INFO_FILE).read_text())
    assert info["counts"] == {"ok": 10, "infeasible": 1, "failed": 1}
    assert info["study_hash"] == "h4sh" and info["coolprop_version"] == "7.7"
    assert info["sweep_columns"] == [T_IN, "sink.inlet_temperature_C"]


def test_ranking_without_sweep_and_empty_store(tmp_path):
    with RunStore(tmp_path / "one") as store:
        store.put("a", 0, make_result("R134a", power=3.0))
        store.put("b", 1, make_result("R1234yf", power=4.0))
    table = write_outputs(tmp_path / "one").table()
    assert list(table.columns[:2]) == ["case_key", "rank"]
    assert table["fluid"].tolist() == ["R1234yf", "R134a"]
    with RunStore(tmp_path / "empty"):
        pass
    empty = write_outputs(tmp_path / "empty")
    assert empty.empty and "rank" in empty.columns
    assert top_table(empty).startswith("no feasible case among 0")


def test_top_table_lists_best_cases(tmp_path):
    _filled_store(tmp_path)
    summary = write_outputs(tmp_path)
    text = top_table(summary, n=3)
    assert text == top_table(summary.table(), n=3)  # the summary prints what the table does
    table = summary.table()
    lines = text.splitlines()
    assert lines[0] == "best 3 of 12 cases by net power over 2 operating points"
    # overall best first, by the name a person reads (fluid), not the CoolProp name (coolprop_name)
    assert "R245fa" in lines[2] and "R245FA" not in lines[2] and "71.5" in lines[2]
    assert lines[-1] == "ok 10, infeasible 1, failed 1"
    one = top_table(table[table[T_IN] == 120.0].reset_index(drop=True), n=10)
    assert one.splitlines()[0] == "best 4 of 6 cases by net power"


def test_top_table_shows_the_warnings_of_the_listed_cases_next_to_them(tmp_path):
    with RunStore(tmp_path) as store:
        store.put("a", 0, make_result("R134a", power=3.0, warnings="first note; second note"))
        store.put("b", 1, make_result("R1234yf", power=4.0, warnings=""))
        store.put("c", 2, make_result("R245fa", power=1.0, warnings="not listed"))
    text = top_table(write_outputs(tmp_path), n=2)
    lines = text.splitlines()
    at = lines.index("warnings (soft limits passed; the results stand):")
    assert lines[at + 1:at + 3] == ["  #2 R134a · basic: first note", "  #2 R134a · basic: second note"]
    assert "not listed" not in text and "R1234yf · basic:" not in text


def test_write_outputs_needs_a_store(tmp_path):
    with pytest.raises(StoreNotFoundError):
        write_outputs(tmp_path)
    assert not (tmp_path / RANKING_FILE).exists()


# -- reading in chunks: the same tables and bytes as one table of all rows ---------------------

def _mixed_store(path, n=60):
    """Rows whose columns mix kinds of values across rows (numbers, gaps, text, flags, lists),
    as failed, infeasible and ok rows do, over 5 operating points; arbitrary labels, no physics."""
    rnd = np.random.default_rng(5)
    with RunStore(path) as store:
        store.set_meta(orcscreen_version="9.9", coolprop_version="7.7", study_hash="h4sh")
        records = []
        for i in range(n):
            status = ["ok", "ok", "ok", "infeasible", "failed"][i % 5]
            result = make_result(["R245fa", "isobutane", "pentane"][i % 3],
                                 ["basic", "recuperated"][(i // 3) % 2], status,
                                 power=[float(rnd.uniform(0, 99)), 50.0, math.inf][i % 3]
                                 if status == "ok" else math.nan, reason=f"no, \"{i}\"\nreally")
            row = result["row"]
            row["turbine_power_kW"] = [1.5, None, math.nan, 7, 1234567][i % 5]  # ints and floats
            row["gwp100"] = [1030, None][i % 2]                                  # ints and gaps
            row["sub_atmospheric_condenser"] = [True, False, None][i % 3]         # flags and gaps
            row["pinch_location"] = "bubble point" if i < 40 else [2.5, None][i % 2]  # late text+number
            row["warnings"] = [["a", "b"], "", None][i % 3] if i >= 30 else ""
            row["evaluations"] = None if status == "failed" else 7 + i
            if i >= 45:
                row["late_column"] = i                                           # a late extra key
            sweep = {T_IN: 100.0 + i // 12, "sink.inlet_temperature_C": [20, 25.0][(i // 12) % 2]}
            records.append((f"key{i:03d}", i, result, sweep, 0.1))
        store.put_many(records[::-1])
        store.put("old", None, make_result("R134a", power=999.0), sweep={T_IN: 1.0})  # stale


def _one_table(path):
    """Reference: one table of all current rows built at once by pandas (DataFrame.from_records
    infers each column's dtype from all its values), in the column order of RunStore.rows."""
    conn = sqlite3.connect(path / STORE_FILE)
    found = conn.execute("SELECT case_key, case_index, sweep, row, elapsed_s, finished_at FROM "
                         "cases WHERE case_index IS NOT NULL ORDER BY case_index").fetchall()
    conn.close()
    records, sweep_cols, row_cols = [], {}, {}
    for key, index, sweep_text, row_text, elapsed_s, finished_at in found:
        sweep, row = json.loads(sweep_text), json.loads(row_text)
        sweep_cols.update(dict.fromkeys(sweep))
        row_cols.update(dict.fromkeys(row))
        records.append({"case_key": key, "case_index": index, **sweep, **row,
                        "case_elapsed_s": elapsed_s, "finished_at": finished_at})
    columns = ["case_key", "case_index", *sweep_cols, *row_cols, "case_elapsed_s", "finished_at"]
    return pd.DataFrame.from_records(records, columns=columns)


@pytest.fixture
def small_chunks(monkeypatch):
    """Chunks of 7 rows, so that every table below is built from several chunks."""
    from orcscreen import store as store_module

    monkeypatch.setattr(store_module, "ROWS_CHUNK", 7)


def test_rows_read_in_chunks_equal_one_table_of_all_rows(tmp_path, small_chunks):
    _mixed_store(tmp_path)
    reference = _one_table(tmp_path)
    with RunStore(tmp_path) as store:
        pd.testing.assert_frame_equal(store.rows(), reference)
        assert reference["pinch_location"].dtype == object  # text and numbers: object column
        some = store.rows(columns=["net_power_kW", "gwp100", "no_such_column"])
    assert list(some.columns) == ["case_key", "case_index", T_IN, "sink.inlet_temperature_C",
                                  "net_power_kW", "gwp100"]
    pd.testing.assert_frame_equal(some, reference[list(some.columns)])


@pytest.mark.parametrize("decode_once", [True, False])
def test_streamed_ranking_csv_equals_the_whole_table(tmp_path, small_chunks, monkeypatch,
                                                      decode_once):
    from orcscreen import outputs
    from orcscreen.outputs import FLOAT_FORMAT, ranking_table

    if not decode_once:
        monkeypatch.setattr(outputs, "DECODE_ONCE_ROWS", 0)
    _mixed_store(tmp_path)
    with RunStore(tmp_path) as store:
        meta = store.meta()
    summary = write_outputs(tmp_path)
    whole = ranking_table(_one_table(tmp_path), meta)
    expected = whole.to_csv(index=False, float_format=FLOAT_FORMAT, lineterminator="\n")
    assert (tmp_path / RANKING_FILE).read_text(encoding="utf-8") == expected
    assert summary.columns == list(whole.columns) and summary.cases == len(whole) == 60
    assert "late_column" in whole.columns
    for n in (1, 3, 50):
        assert top_table(summary, n=n) == top_table(whole, n=n)


def test_top_table_beyond_the_kept_rows_reads_the_store_again(tmp_path, monkeypatch):
    from orcscreen import outputs

    monkeypatch.setattr(outputs, "TOP_KEPT", 2)
    _filled_store(tmp_path)
    summary = write_outputs(tmp_path)
    assert summary.kept == 2 and len(summary.best) == 2 and summary.ranked == 9
    assert top_table(summary, n=6) == top_table(summary.table(), n=6)
    assert top_table(summary, n=6).splitlines()[0] == "best 6 of 12 cases by net power over 2 operating points"


def test_revision_counts_write_transactions(tmp_path):
    with RunStore(tmp_path) as store:
        first = store.revision()
        store.put("a", 0, make_result("R134a", power=1.0))
        store.set_meta(study_hash="x")
        store.set_plan(["a"])
        assert store.revision() == first + 3
        store.rows()
        store.meta()
        assert store.revision() == first + 3  # reading changes nothing
    with RunStore(tmp_path) as again:  # opening does not count
        assert again.revision() == first + 3


def test_write_outputs_rewrites_only_after_a_change(tmp_path):
    _filled_store(tmp_path)
    first = write_outputs(tmp_path)
    stamp = (tmp_path / RANKING_FILE).stat().st_mtime_ns
    assert write_outputs(tmp_path) is first  # same store revision, files untouched
    assert (tmp_path / RANKING_FILE).stat().st_mtime_ns == stamp
    with RunStore(tmp_path) as store:
        store.put("key00", 0, make_result("isobutane", "basic", "ok", 80.0),
                  sweep={T_IN: 120.0, "sink.inlet_temperature_C": 20})
    again = write_outputs(tmp_path)
    assert again is not first
    assert "80," in (tmp_path / RANKING_FILE).read_text()
    (tmp_path / RANKING_FILE).write_text("edited\n")  # a file changed by hand is rewritten
    assert write_outputs(tmp_path) is not again
    assert (tmp_path / RANKING_FILE).read_text().startswith("case_key,")
