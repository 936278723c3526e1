"""Run the cases of a study in parallel and write each finished case to the run store.

Orchestration only: the physics is ``orcscreen.api.run_case``. The cases go in *chunks* of
consecutive cases to worker processes, and the chunks come back as they finish; each returned
chunk is committed to the store at once, so memory does not grow with the number of cases and a
killed run loses only the chunks in flight.

Workers, by platform and option:

* ``jobs=1``: the cases run in this process, one chunk after the other.
* ``jobs>1`` on Linux (the usual case): worker processes *forked* from the driver by
  ``concurrent.futures.ProcessPoolExecutor`` with the "fork" start method, after the driver has
  imported the engine, loaded CoolProp's fluid library and the fluid catalogue (study
  validation does all three). A forked worker starts in milliseconds with all of that in memory;
  a freshly started interpreter (joblib's default loky backend) pays about 2 s of CPU to import
  CoolProp, whose package ``__init__`` loads the whole fluid library, in every worker and at the
  same time as the driver. joblib cannot do this cleanly: its "multiprocessing" backend forks but
  cannot stream results (``return_as="generator_unordered"`` is refused), and loky warns against
  its "fork" context. The workers are forked before the run store is opened (they never see its
  SQLite connection or the run lock), from a driver with no other thread (a forked child of a
  threaded process can deadlock on a lock held by another thread: POSIX fork(2)); they ignore
  SIGINT (the driver stops them on Ctrl-C) and get SIGKILL when the driver dies (Linux
  prctl(2) PR_SET_PDEATHSIG), so a killed run leaves no worker behind. Without fork (another
  OS, or other threads running), joblib's loky backend as before.
* ``cluster=ADDRESS``: a Dask distributed cluster through joblib's Dask backend.

Chunk size: a chunk takes about :data:`TARGET_CHUNK_S` of work (from the mean case time measured
so far), between 1 and :data:`MAX_CHUNK` cases, never more than a quarter of the pending cases per
worker; with several workers also never more than the cases not yet dispatched divided by
twice the number of workers (guided scheduling: the last chunks are small, the workers finish
together). The first chunks have :data:`FIRST_CHUNK` cases, so the first result is stored
quickly. At most :data:`CHUNKS_IN_FLIGHT_PER_WORKER` chunks per worker are in flight; the next
chunk is cut when one comes back. An empty task costs about 0.07 ms on the forked workers
(measured, 2 workers, 2,000 tasks), small against cases of a few ms and a store commit.

After the first stored chunk of a parallel run the driver imports pandas (needed for
ranking.csv at the end), while the workers compute; the workers never import it.

Resume: a case whose key is in the store is not computed again; a changed study computes only
its new keys. Failure isolation: any exception raised while a case runs, and a case that exceeds
its time limit (``study.case_time_limit_s``, default 60 s), become status "failed" with the
message; the batch goes on.
"""

from __future__ import annotations

import collections
import contextlib
import ctypes
import gc
import math
import os
import signal
import sys
import threading
import time
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from orcscreen.outputs import ROW_COLUMNS, write_outputs
from orcscreen.store import EncodedCase, RunStore, encode_case, orcscreen_version

__all__ = [
    "TARGET_CHUNK_S",
    "MAX_CHUNK",
    "FIRST_CHUNK",
    "DEFAULT_TIME_LIMIT_S",
    "BatchError",
    "ClusterError",
    "CaseTimeLimitExceeded",
    "RunSummary",
    "run_study",
    "run_cases",
    "failed_row",
    "fork_workers_available",
]

TARGET_CHUNK_S = 0.5
MAX_TIMER_S = 1e7
"""Longest case time limit [s] the timers are set for (about 116 days); a longer limit is no
limit (setitimer(2) and threading.Timer refuse values far beyond it)."""
WORKER_DEATHS_PER_CASE = 3
"""A case in flight when this many worker processes died without another case to blame is
recorded as failed."""
MAX_CHUNK = 50
FIRST_CHUNK = 4
DEFAULT_TIME_LIMIT_S = 60.0
PLAIN_PROGRESS_EVERY_S = 5.0
REPORT_WAIT_S = 120.0
"""How long [s] a run waits for an ``orcscreen report`` that holds the folder's lock."""
STATUSES = ("ok", "infeasible", "failed")
CHUNKS_IN_FLIGHT_PER_WORKER = 2


class BatchError(RuntimeError):
    """A batch cannot start or go on; the message says why."""


class ClusterError(BatchError):
    """The Dask cluster is not available (extra not installed, scheduler unreachable...)."""


class CaseTimeLimitExceeded(BaseException):
    """Raised inside a case that runs past its time limit.

    A BaseException, so that the engine's own ``except Exception`` handlers do not swallow it.
    """


@dataclass(frozen=True)
class RunSummary:
    """What one call of :func:`run_study` did.

    ok / infeasible / failed count the cases computed by this call, skipped the cases found in
    the store already, retried the failed cases of the store computed again (part of the
    computed ones); damage says how a damaged store was salvaged ("" if it was sound);
    ``store_counts`` is the status count of all current cases in the store;
    wall_time_s [s] the wall time of the call; ``workers`` where the cases ran: "this process",
    "forked", "loky", "dask" or "" (nothing to compute).
    """

    out_dir: Path
    total: int
    ok: int
    infeasible: int
    failed: int
    skipped: int
    wall_time_s: float
    jobs: int
    tasks: int
    max_chunk: int
    store_counts: dict[str, int] = field(default_factory=dict)
    workers: str = ""
    retried: int = 0
    damage: str = ""

    @property
    def computed(self) -> int:
        """Cases computed by this call."""
        return self.ok + self.infeasible + self.failed

    def __str__(self) -> str:
        done = ", ".join(f"{s} {self.store_counts.get(s, 0)}" for s in STATUSES)
        retried = f"{self.retried} failed before, retried; " if self.retried else ""
        damage = f"; {self.damage}" if self.damage else ""
        return (f"{self.total} cases ({done}); computed {self.computed} now "
                f"({retried}ok {self.ok}, infeasible {self.infeasible}, failed {self.failed}), "
                f"{self.skipped} already in the store{damage}; {self.wall_time_s:.1f} s")


# -- inside the worker ------------------------------------------------------------------------

_ENGINE_LOCK = threading.Lock()  # one case at a time per process when workers are threads


def _plain(case) -> Mapping[str, Any]:
    """A case's plain form (a typed study case, or a case dictionary as given)."""
    return case.as_dict() if hasattr(case, "as_dict") else case


def failed_row(case, reason: str, elapsed_s: float | None = None) -> dict:
    """A contract row (section 2) for a case that could not be computed."""
    row = dict.fromkeys(ROW_COLUMNS)
    case = _plain(case)
    row.update(fluid=case.get("fluid"), coolprop_name=case.get("fluid"), layout=case.get("layout"), status="failed",
               reason=reason, elapsed_s=elapsed_s)
    try:  # the catalogue facts of the fluid, so that a failed row still shows them
        from orcscreen.figures import fluid_names
        from orcscreen.fluids import caution_text, get_info, safety_class_text

        info = get_info(str(case.get("fluid")))
        row.update(fluid_names(str(case.get("fluid")), info))
        row.update(family=info.family, safety_class=safety_class_text(info.safety_class), gwp100=info.gwp100,
                   odp=info.odp, curve_type=info.curve_type, caution=caution_text(info))
    except Exception:  # noqa: BLE001 - an unknown fluid keeps the bare row
        pass
    return row


@contextlib.contextmanager
def _time_limit(seconds: float | None) -> Iterator[None]:
    """Raise :class:`CaseTimeLimitExceeded` in the running code after ``seconds`` [s].

    Main thread (joblib processes, serial runs): SIGALRM from ``setitimer``. Other threads (Dask
    workers run tasks in threads): an asynchronous exception set on the thread by a timer, which
    Python delivers between bytecodes (not inside one long call into compiled code).
    """
    if seconds is None or not math.isfinite(seconds) or seconds <= 0 or seconds > MAX_TIMER_S:
        yield
        return
    if threading.current_thread() is threading.main_thread() and hasattr(signal, "setitimer"):
        def on_alarm(signum, frame):
            raise CaseTimeLimitExceeded

        previous = signal.signal(signal.SIGALRM, on_alarm)
        signal.setitimer(signal.ITIMER_REAL, seconds)
        try:
            yield
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, previous)
        return
    thread_id = ctypes.c_ulong(threading.get_ident())
    guard = threading.Lock()
    state = {"active": True, "fired": False}

    def expire() -> None:
        with guard:
            if state["active"]:
                state["fired"] = True
                ctypes.pythonapi.PyThreadState_SetAsyncExc(
                    thread_id, ctypes.py_object(CaseTimeLimitExceeded))

    timer = threading.Timer(seconds, expire)
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        with guard:
            state["active"] = False
            timer.cancel()
            if state["fired"]:  # withdraw an exception not yet delivered
                ctypes.pythonapi.PyThreadState_SetAsyncExc(thread_id, None)


def _run_one(case: Mapping[str, Any], time_limit_s: float | None) -> tuple[dict, float]:
    """Run one case, never raising for the case's own failure; returns (result, wall time [s])."""
    from orcscreen import api  # imported here: the worker process imports it once

    start = time.perf_counter()
    try:
        try:
            with _time_limit(time_limit_s):
                result = api.run_case(case)
        except CaseTimeLimitExceeded:
            elapsed = time.perf_counter() - start
            return {"row": failed_row(case, f"time limit of {time_limit_s:g} s exceeded",
                                      elapsed), "detail": None}, elapsed
    except CaseTimeLimitExceeded:  # the alarm went off while the first handler ran
        elapsed = time.perf_counter() - start
        return {"row": failed_row(case, f"time limit of {time_limit_s:g} s exceeded", elapsed),
                "detail": None}, elapsed
    except Exception as exc:  # noqa: BLE001 - failure isolation: record and go on
        elapsed = time.perf_counter() - start
        return {"row": failed_row(case, f"{type(exc).__name__}: {exc}", elapsed),
                "detail": None}, elapsed
    elapsed = time.perf_counter() - start
    if not isinstance(result, Mapping) or not isinstance(result.get("row"), Mapping):
        return {"row": failed_row(case, f"engine returned {type(result).__name__}, not a "
                                  "result with a row", elapsed), "detail": None}, elapsed
    return {"row": dict(result["row"]), "detail": result.get("detail")}, elapsed


#: In a forked worker: (shared array of (pid, case index) pairs, this worker's slot); the
#: driver reads which case a dead worker was running from it (see _ForkPool).
_SLOT: tuple[Any, int] | None = None


def _mark_running(index: int) -> None:
    """Tell the driver which case this forked worker runs now (-1: none)."""
    if _SLOT is not None:
        slots, slot = _SLOT
        slots[2 * slot + 1] = index


def _run_chunk(tasks: list[tuple[int, str, dict]], time_limit_s: float | None) -> list[EncodedCase]:
    """Worker task: run the cases of one chunk; returns them encoded for the store (the JSON
    work is done here, in parallel, not in the driver)."""
    try:
        return _run_chunk_cases(tasks, time_limit_s)
    finally:
        _mark_running(-1)


def _run_chunk_cases(tasks: list[tuple[int, str, dict]],
                     time_limit_s: float | None) -> list[EncodedCase]:
    threaded = threading.current_thread() is not threading.main_thread()
    records = []
    for index, key, case in tasks:
        _mark_running(index)
        limit = time_limit_s
        if limit is None:
            limit = float(case.study.case_time_limit_s)
        # The property layer caches one CoolProp state per process: not for concurrent threads.
        with _ENGINE_LOCK if threaded else contextlib.nullcontext():
            result, elapsed = _run_one(case, limit)
        try:
            records.append(encode_case(key, index, result, case.sweep, elapsed))
        except TypeError as exc:  # a value without a JSON form: record it, do not lose the chunk
            result = {"row": failed_row(case, f"result cannot be stored: {exc}", elapsed),
                      "detail": None}
            records.append(encode_case(key, index, result, case.sweep, elapsed))
    return records


def _worker_versions() -> tuple[str, str]:
    from orcscreen.properties import coolprop_version

    return orcscreen_version(), coolprop_version()


_PR_SET_PDEATHSIG = 1  # linux/prctl.h


def _forked_worker_init(driver_pid: int, inherited_fds: tuple[int, ...] = (),
                        slots: Any = None, counter: Any = None) -> None:
    """First thing in a forked worker: leave Ctrl-C to the driver, die with the driver, close
    ``inherited_fds`` (the run lock, when the store was opened before the fork: flock(2) locks
    belong to the open file, which a worker must not keep open after the driver dies).

    SIGINT is ignored (a terminal sends it to the whole process group; the driver then stops
    the workers itself). PR_SET_PDEATHSIG (Linux prctl(2)) has the kernel send SIGKILL to this
    process when the driver dies, however it dies, so no orphan keeps computing; a driver that
    died before the call is caught by the parent check.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for fd in inherited_fds:
        with contextlib.suppress(OSError):
            os.close(fd)
    with contextlib.suppress(OSError, AttributeError):
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
    if os.getppid() != driver_pid:
        os._exit(1)
    if slots is not None and counter is not None:
        global _SLOT
        with counter.get_lock():
            slot = counter.value
            counter.value += 1
        if 2 * slot + 1 < len(slots):
            slots[2 * slot], slots[2 * slot + 1] = os.getpid(), -1
            _SLOT = (slots, slot)


def _ready() -> int:
    return os.getpid()


# -- in the driver ----------------------------------------------------------------------------

def fork_workers_available() -> bool:
    """True when worker processes can be forked from this process (see module docstring):
    Linux, the "fork" start method, called from the main thread with no other thread running."""
    import multiprocessing

    return (sys.platform.startswith("linux")
            and "fork" in multiprocessing.get_all_start_methods()
            and threading.current_thread() is threading.main_thread()
            and threading.active_count() == 1)


class _ForkPool:
    """``workers`` processes forked from this driver now, each ready to run chunks.

    The engine and CoolProp (its fluid library loads with the package) are imported first, so
    every worker starts with them. The garbage collector's objects are frozen across the fork
    (``gc.freeze``, Python documentation of the gc module: a collection in the child would
    otherwise touch, and so copy, every inherited page).
    """

    def __init__(self, workers: int, inherited_fds: tuple[int, ...] = ()) -> None:
        from orcscreen import api  # noqa: F401 - loaded before the fork, inherited by the workers
        from orcscreen.properties import coolprop_version

        coolprop_version()
        self.workers = workers
        self.restarts = 0
        self._start(tuple(inherited_fds))

    def _start(self, inherited_fds: tuple[int, ...]) -> None:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        context = multiprocessing.get_context("fork")
        # (pid, index of the case it runs) per worker, shared with the workers (see _SLOT)
        self.slots = context.RawArray(ctypes.c_long, 2 * self.workers)
        counter = context.Value(ctypes.c_int, 0)
        before = set(multiprocessing.active_children())
        gc.collect()
        gc.freeze()
        try:
            self.executor = ProcessPoolExecutor(
                max_workers=self.workers, mp_context=context, initializer=_forked_worker_init,
                initargs=(os.getpid(), inherited_fds, self.slots, counter))
            # the first submission forks every worker now (CPython forks them all at once,
            # before the executor's own thread starts: bpo-90622)
            self.executor.submit(_ready)
        finally:
            gc.unfreeze()
        self.processes = [p for p in multiprocessing.active_children() if p not in before]

    def restart(self, inherited_fds: tuple[int, ...] = ()) -> None:
        """Stop every worker and fork a new set (after a worker died: the executor is broken)."""
        self.close(abort=True)
        self.restarts += 1
        self._start(tuple(inherited_fds))

    def dead_workers(self) -> list[tuple[int, int]]:
        """(index of the case it was running, or -1, and exit code) of each worker that died by
        itself, once the executor is broken. The executor stops the other workers with SIGTERM
        and reaps them all (CPython's concurrent.futures, ``terminate_broken``); those are left
        out, so a worker that was itself ended by SIGTERM is not told apart (the callers count
        such deaths per case instead)."""
        with contextlib.suppress(Exception):
            self.executor.shutdown(wait=True, cancel_futures=True)
        found = []
        for proc in self.processes:
            with contextlib.suppress(ValueError, AssertionError, OSError):
                proc.join(timeout=5)
            code = proc.exitcode
            if code is None or code in (0, -signal.SIGTERM):
                continue
            index = -1
            for slot in range(self.workers):
                if self.slots[2 * slot] == proc.pid:
                    index = int(self.slots[2 * slot + 1])
            found.append((index, code))
        return found

    def submit(self, fn: Callable, *args: Any):
        return self.executor.submit(fn, *args)

    def close(self, abort: bool = False) -> None:
        """Wait for the workers to exit; with ``abort``, drop queued chunks and stop them now."""
        if not abort:
            self.executor.shutdown(wait=True)
            return
        self.executor.shutdown(wait=False, cancel_futures=True)
        for proc in self.processes:
            with contextlib.suppress(OSError, ValueError):
                if proc.is_alive():
                    proc.kill()
        for proc in self.processes:
            with contextlib.suppress(OSError, ValueError, AssertionError):
                proc.join(timeout=5)
        # the executor's own thread ends once it sees its workers gone; wait for it a bounded
        # time only (shutdown(wait=True) can wait for ever when its call queue's feeder thread
        # is blocked on a full pipe whose readers were just killed; seen once on Ctrl-C)
        manager = getattr(self.executor, "_executor_manager_thread", None)
        if manager is not None:
            manager.join(timeout=5)

    def __enter__(self) -> _ForkPool:
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        self.close(abort=exc_type is not None)


class _ChunkSizer:
    """Chunk size from the mean case time measured so far and the cases not yet dispatched
    (see module docstring)."""

    def __init__(self, pending: int, workers: int) -> None:
        self.pending = pending
        self.workers = workers
        self.cap = max(1, min(MAX_CHUNK, math.ceil(pending / (4 * workers))))
        self.case_s = 0.0
        self.cases = 0
        self.dispatched = 0
        self.largest = 0

    def observe(self, elapsed: Iterable[float]) -> None:
        for e in elapsed:
            self.case_s += e
            self.cases += 1

    def size(self) -> int:
        if self.cases == 0:
            n = min(self.cap, FIRST_CHUNK)
        else:
            mean = max(self.case_s / self.cases, 1e-6)
            n = max(1, min(self.cap, round(TARGET_CHUNK_S / mean)))
        if self.workers > 1:  # guided: the last chunks shrink so that the workers end together
            left = self.pending - self.dispatched
            n = max(1, min(n, math.ceil(left / (CHUNKS_IN_FLIGHT_PER_WORKER * self.workers))))
        self.largest = max(self.largest, n)
        return n

    def chunks(self, tasks: Iterable[tuple[int, str, dict]]) -> Iterator[list]:
        """Cut ``tasks`` into chunks, each sized when it is cut (that is, when it is needed)."""
        chunk: list = []
        want = self.size()
        for task in tasks:
            chunk.append(task)
            if len(chunk) >= want:
                self.dispatched += len(chunk)
                yield chunk
                chunk, want = [], self.size()
        if chunk:
            self.dispatched += len(chunk)
            yield chunk


class _Progress:
    """tqdm bar on a terminal, else a plain line at most every PLAIN_PROGRESS_EVERY_S."""

    def __init__(self, total: int, skipped: int, enabled: bool, stream=None) -> None:
        self.stream = stream or sys.stderr
        self.total, self.skipped = total, skipped
        self.counts = dict.fromkeys(STATUSES, 0)
        self.done = 0
        self.first: tuple[float, int] | None = None
        self.last_line = -math.inf
        self.bar = None
        self.enabled = enabled and total > 0
        if self.enabled and getattr(self.stream, "isatty", lambda: False)():
            from tqdm import tqdm

            self.bar = tqdm(total=total, unit="case", desc="cases", file=self.stream,
                            dynamic_ncols=True, smoothing=0.1)

    def update(self, statuses: list[str]) -> None:
        for s in statuses:
            self.counts[s] = self.counts.get(s, 0) + 1
        if self.first is None:  # rates count from the first result: worker start-up left out
            self.first = (time.monotonic(), self.done + len(statuses))
        self.done += len(statuses)
        if not self.enabled:
            return
        if self.bar is not None:
            self.bar.set_postfix({s: self.counts[s] for s in STATUSES}, refresh=False)
            self.bar.update(len(statuses))
        elif time.monotonic() - self.last_line >= PLAIN_PROGRESS_EVERY_S:
            self._line()

    def _line(self) -> None:
        self.last_line = now = time.monotonic()
        t_first, n_first = self.first if self.first is not None else (now, 0)
        rate = (self.done - n_first) / (now - t_first) if now > t_first else 0.0
        speed = eta = ""
        if rate > 0:
            speed = f", {rate:.1f} cases/s"
            if self.done < self.total:
                eta = f", about {_duration((self.total - self.done) / rate)} left"
        tally = ", ".join(f"{s} {self.counts[s]}" for s in STATUSES)
        print(f"[orcscreen] {self.done}/{self.total} cases computed ({tally}){speed}{eta}",
              file=self.stream, flush=True)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
        elif self.enabled and self.done:
            self._line()


def _duration(seconds: float) -> str:
    seconds = int(round(seconds))
    if seconds < 60:
        return f"{seconds} s"
    minutes, seconds = divmod(seconds, 60)
    if minutes < 60:
        return f"{minutes} min {seconds:02d} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes:02d} min"


@contextlib.contextmanager
def _backend(cluster: str | None) -> Iterator[None]:
    """joblib's default backend, or the Dask backend on a client of ``cluster``."""
    if cluster is None:
        yield
        return
    try:
        import joblib
        from distributed import Client
    except ImportError:
        raise ClusterError("--cluster needs the optional Dask extra, which is not installed: "
                           "pip install 'orcscreen[cluster]'") from None
    try:
        client = Client(cluster, timeout="20s")
    except (OSError, TimeoutError, ValueError) as exc:
        raise ClusterError(f"cannot connect to the Dask scheduler at {cluster!r}: {exc}") from None
    with client:
        mine = _worker_versions()
        theirs = client.run(_worker_versions)
        if not theirs:
            raise ClusterError(f"the Dask cluster at {cluster!r} has no workers")
        wrong = {w: v for w, v in theirs.items() if tuple(v) != mine}
        if wrong:
            listed = "; ".join(f"{w}: orcscreen {v[0]}, CoolProp {v[1]}" for w, v in wrong.items())
            raise ClusterError(f"Dask workers run other versions than this machine (orcscreen "
                               f"{mine[0]}, CoolProp {mine[1]}): {listed}")
        with joblib.parallel_config(backend="dask"):
            yield


def _serial_results(chunks: Iterable[list], sizer: _ChunkSizer,
                    time_limit_s: float | None) -> Iterator[list[EncodedCase]]:
    """Run the chunks in this process, one after the other."""
    for chunk in chunks:
        records = _run_chunk(chunk, time_limit_s)
        sizer.observe(rec.elapsed_s or 0.0 for rec in records)
        yield records


class _TaskFeed:
    """The tasks of a run, with tasks put back in front (after a worker died) served first."""

    def __init__(self, tasks: Iterable[tuple[int, str, dict]]) -> None:
        self.source = iter(tasks)
        self.front: collections.deque = collections.deque()

    def __iter__(self) -> _TaskFeed:
        return self

    def __next__(self) -> tuple[int, str, dict]:
        if self.front:
            return self.front.popleft()
        return next(self.source)


def describe_exit(code: int) -> str:
    """A worker's exit code in words: "killed by signal SIGKILL (9)" or "exit status 3"."""
    if code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = "an unknown signal"
        return f"killed by signal {name} ({-code})"
    return f"exit status {code}"


def worker_died_row(case: Mapping[str, Any], how: str) -> dict:
    """The failed row of a case whose worker process died while running it."""
    return failed_row(case, f"{WORKER_DIED} ({how}) while running this case: a fault in compiled "
                      "code, or the system's memory killer; it is tried again on the next run")


WORKER_DIED = "worker process died"


def _pool_results(pool: _ForkPool, tasks: Iterable[tuple[int, str, dict]], sizer: _ChunkSizer,
                  time_limit_s: float | None,
                  inherited_fds: tuple[int, ...] = ()) -> Iterator[list[EncodedCase]]:
    """Run the tasks in chunks on forked workers; yield each chunk's records as soon as it is
    back.

    At most CHUNKS_IN_FLIGHT_PER_WORKER chunks per worker are submitted; each returned chunk
    is measured before the next one is cut, and the next one is submitted before the returned
    one is handed on (stored), so no worker waits for the store.

    A worker that dies (a fault in compiled code, the memory killer) breaks the executor and
    every chunk in flight with it. The case it was running (from the shared slots, see
    :data:`_SLOT`) is yielded as failed with the signal; the other cases of the lost chunks go
    back in front of the queue, the workers are forked anew (closing ``inherited_fds`` in
    them) and the batch goes on. A case in flight during :data:`WORKER_DEATHS_PER_CASE`
    deaths that no case could be blamed for is recorded as failed as well.
    """
    from concurrent.futures import FIRST_COMPLETED, wait
    from concurrent.futures.process import BrokenProcessPool

    feed = _TaskFeed(tasks)
    chunks = sizer.chunks(feed)
    window = CHUNKS_IN_FLIGHT_PER_WORKER * pool.workers
    in_flight: dict = {}
    deaths: dict[int, int] = {}  # case index -> unattributed deaths while it was in flight

    def top_up() -> bool:
        """Submit chunks up to the window; True when the executor turned out to be broken."""
        nonlocal chunks
        while len(in_flight) < window:
            chunk = next(chunks, None)
            if chunk is None and feed.front:  # tasks put back after the chunks ran out
                chunks = sizer.chunks(feed)
                chunk = next(chunks, None)
            if chunk is None:
                return False
            try:
                future = pool.submit(_run_chunk, chunk, time_limit_s)
            except BrokenProcessPool:  # a worker died since the last look: back in the queue
                feed.front.extendleft(reversed(chunk))
                sizer.dispatched -= len(chunk)
                return True
            in_flight[future] = chunk
        return False

    def recover(finished: list) -> None:
        """After a worker died: keep the chunks that finished, fail the case the dead worker
        ran, put the other cases back in front of the queue and fork new workers."""
        lost: list[tuple[int, str, dict]] = []
        for future, chunk in list(in_flight.items()):
            try:
                records = future.result()  # finished before the break: kept
            except BrokenProcessPool:
                lost.extend(chunk)
            else:
                sizer.observe(rec.elapsed_s or 0.0 for rec in records)
                finished.append(records)
        in_flight.clear()
        blamed = {index: code for index, code in pool.dead_workers() if index >= 0}
        failed, again = [], []
        for task in lost:
            index, key, case = task
            if index in blamed:
                how = describe_exit(blamed[index])
            elif not blamed:
                deaths[index] = deaths.get(index, 0) + 1
                if deaths[index] < WORKER_DEATHS_PER_CASE:
                    again.append(task)
                    continue
                how = f"{deaths[index]} worker deaths while it was running or queued"
            else:
                again.append(task)
                continue
            failed.append(encode_case(key, index, {"row": worker_died_row(case, how), "detail": None},
                                      _sweep_of(case), None))
        if failed:
            finished.append(failed)
        feed.front.extendleft(reversed(again))
        sizer.dispatched -= len(again)
        pool.restart(inherited_fds)

    broken = top_up()
    while in_flight or broken:
        finished: list = []
        if not broken:
            done, _ = wait(in_flight, return_when=FIRST_COMPLETED)
            for future in done:
                try:
                    records = future.result()
                except BrokenProcessPool:
                    broken = True
                    continue
                in_flight.pop(future)
                sizer.observe(rec.elapsed_s or 0.0 for rec in records)
                finished.append(records)
        if broken:
            recover(finished)
        broken = top_up()
        yield from finished


def _sweep_of(case: Any) -> Mapping[str, Any]:
    """The swept values of a case (a case dictionary or a typed case)."""
    sweep = case.get("sweep") if isinstance(case, Mapping) else getattr(case, "sweep", None)
    return sweep or {}


def _joblib_results(cluster: str | None, n_jobs: int, chunks: Iterable[list],
                    sizer: _ChunkSizer, time_limit_s: float | None) -> Iterator[list[EncodedCase]]:
    """Run the chunks through joblib: its Dask backend on a cluster, else its loky backend."""
    from joblib import Parallel, delayed

    with _backend(cluster):
        parallel = Parallel(n_jobs=n_jobs, return_as="generator_unordered", batch_size=1,
                            pre_dispatch="2*n_jobs")
        for records in parallel(delayed(_run_chunk)(c, time_limit_s) for c in chunks):
            sizer.observe(rec.elapsed_s or 0.0 for rec in records)
            yield records


def run_cases(tasks: Iterable[tuple[int, str, dict]], store: RunStore, *, pending: int,
              jobs: int, cluster: str | None = None, time_limit_s: float | None = None,
              progress: _Progress | None = None,
              pool: _ForkPool | None = None) -> tuple[dict[str, int], int, int]:
    """Run ``(index, key, case)`` tasks (``pending`` of them) and store every finished case.

    Where the cases run: on ``cluster`` (Dask, through joblib) if given; else on ``pool`` (forked
    workers) if given; else on workers forked now when possible (:func:`fork_workers_available`,
    also for one job: a case that kills its process then fails alone); else in this process
    when ``jobs`` is 1 or one case is pending; else on joblib's loky workers.

    Returns (status counts of the computed cases, number of worker tasks, largest chunk).
    """
    counts = dict.fromkeys(STATUSES, 0)
    if pending == 0:
        return counts, 0, 0
    lock_fd = getattr(store, "_lock_fd", None)
    inherited = () if lock_fd is None else (lock_fd,)
    with contextlib.ExitStack() as stack:
        if cluster is not None:
            sizer = _ChunkSizer(pending, max(jobs, 1))
            results = _joblib_results(cluster, -1, sizer.chunks(tasks), sizer, time_limit_s)
        elif pool is not None:
            sizer = _ChunkSizer(pending, pool.workers)
            results = _pool_results(pool, tasks, sizer, time_limit_s, inherited)
        elif fork_workers_available():
            # also for one job or one case: a case that kills its process must not kill the run
            own = stack.enter_context(_ForkPool(min(jobs, pending), inherited))
            sizer = _ChunkSizer(pending, own.workers)
            results = _pool_results(own, tasks, sizer, time_limit_s, inherited)
        elif jobs == 1 or pending == 1:
            sizer = _ChunkSizer(pending, 1)
            results = _serial_results(sizer.chunks(tasks), sizer, time_limit_s)
        else:
            sizer = _ChunkSizer(pending, min(jobs, pending))
            results = _joblib_results(None, min(jobs, pending), sizer.chunks(tasks), sizer,
                                      time_limit_s)
        n_tasks = 0
        for records in results:
            store.put_encoded(records)
            n_tasks += 1
            statuses = [rec.status for rec in records]
            for s in statuses:
                counts[s] = counts.get(s, 0) + 1
            if progress is not None:
                progress.update(statuses)
            if n_tasks == 1 and sizer.workers > 1:
                _import_table_modules()
    return counts, n_tasks, sizer.largest


def _import_table_modules() -> None:
    """Import pandas (for ranking.csv at the end) while the workers compute: after the first
    chunk is stored, so that the first stored case does not wait for it, and in the driver
    only, so that no worker carries it."""
    import pandas  # noqa: F401


def _study_dict(study: Any) -> Any:
    """The study as a JSON-able dict for the store's meta (sections, sweep, resolved fluids)."""
    if not hasattr(study, "model_dump"):
        return None
    body = study.model_dump(mode="json", by_alias=True)
    body["sweep"] = dict(getattr(study, "sweep_spec", {}) or {})
    body["resolved_fluids"] = list(getattr(study, "fluids", ()) or ())
    return body


def _salvage(store: RunStore) -> str:
    """Make a store that SQLite reports damaged, or that holds undecodable rows, usable again:
    the readable cases are kept, the others left out (and so computed again). Returns what
    was done, in words, or ""."""
    notes = []
    report = store.salvage_report
    if report is None:
        problem = store.integrity_problem()
        if problem is not None:
            report = store.salvage()
    if report is not None:
        notes.append(f"the run store was damaged: {report.kept} readable cases kept, "
                     f"{report.lost} unreadable cases to compute again (the damaged file is "
                     f"kept as {report.damaged_file.name})")
    unreadable = store.unreadable_keys()
    if unreadable:
        store.drop_cases(unreadable)
        notes.append(f"{len(unreadable)} stored cases could not be read and are computed again")
    return "; ".join(notes)


def run_study(study: Any, out_dir: str | os.PathLike[str], jobs: int | None = None,
              cluster: str | None = None, progress: bool = True,
              time_limit_s: float | None = None, *, retry_failed: bool = True,
              write_tables: bool = True) -> RunSummary:
    """Compute every case of ``study`` not yet in ``out_dir/run.sqlite``, then (by default)
    regenerate ``ranking.csv`` and ``run-info.json``.

    jobs: worker processes (default all cores, ``os.cpu_count()``; ignored with a cluster).
    cluster: address of a Dask scheduler (``tcp://host:8786``), needs ``orcscreen[cluster]``.
    progress: show a progress bar (terminal) or plain progress lines on stderr.
    time_limit_s [s]: per-case limit overriding the study's ``case_time_limit_s``.
    retry_failed: compute stored cases with status "failed" again (the default: a failure may
    come from a time limit or a dead worker, and is not final); ok and infeasible cases are
    never recomputed.

    A damaged store is salvaged first (:meth:`RunStore.salvage`, :meth:`RunStore.unreadable_keys`):
    the readable cases are kept, the others are computed again; the summary says how many.

    Raises StoreLockedError when another run holds ``out_dir``, ClusterError for an unusable
    cluster, ValueError for jobs < 1.
    """
    from orcscreen.properties import coolprop_version
    from orcscreen.study import case_key, study_hash

    start = time.perf_counter()
    if jobs is None:
        jobs = os.cpu_count() or 1
    if int(jobs) < 1:
        raise ValueError(f"jobs must be a whole number >= 1, got {jobs!r}")
    jobs = int(jobs)
    out_dir = Path(out_dir)
    with contextlib.ExitStack() as stack:
        # Workers are forked first: before the store's connection and lock exist, and before
        # any progress-bar thread, so that a worker inherits neither (module docstring).
        n_cases = int(getattr(study, "n_cases", 0) or 0)
        pool = None
        if cluster is None and n_cases >= 1 and fork_workers_available():
            pool = stack.enter_context(_ForkPool(min(jobs, n_cases)))
        store = stack.enter_context(RunStore(out_dir, lock=True, salvage=True,
                                             wait_s=REPORT_WAIT_S))
        damage = _salvage(store)
        keys: list[str] = []
        layouts: list[tuple[str, str]] = []  # (fluid, layout) per case: a cheap order check
        name = None
        for case in study.cases():
            if name is None:
                name = case.study.name
            keys.append(case_key(case))
            layouts.append((case.fluid, case.layout))
        store.set_plan(keys)
        store.set_meta(orcscreen_version=orcscreen_version(), coolprop_version=coolprop_version(),
                       study_hash=study_hash(study), study_name=name or getattr(study, "name", None),
                       study=_study_dict(study), cases=len(set(keys)))
        done = store.done_keys()
        retry = store.failed_keys() & set(keys) if retry_failed else set()
        done -= retry
        todo = {k for k in keys if k not in done}
        del done
        skipped = len(set(keys)) - len(todo)

        def tasks() -> Iterator[tuple[int, str, dict]]:
            # Second pass over the (deterministic) expansion; the keys of the first pass are
            # reused, as computing a key costs far more than expanding a case.
            seen: set[str] = set()
            n = -1
            for n, case in enumerate(study.cases()):
                key = keys[n] if n < len(keys) else None
                if key is None or (case.fluid, case.layout) != layouts[n]:
                    raise BatchError("the study yielded other cases the second time; case "
                                     "expansion must be deterministic")
                if key in todo and key not in seen:
                    seen.add(key)
                    yield n, key, case
            if n + 1 != len(keys):
                raise BatchError("the study yielded fewer cases the second time; case "
                                 "expansion must be deterministic")

        if not todo:
            kind = ""
        elif cluster is not None:
            kind = "dask"
        elif pool is not None:
            kind = "forked"
        elif jobs == 1 or len(todo) == 1:
            kind = "this process"
        else:
            kind = "forked" if fork_workers_available() else "loky"
        bar = _Progress(len(todo), skipped, progress)
        try:
            counts, n_tasks, largest = run_cases(
                tasks(), store, pending=len(todo), jobs=jobs, cluster=cluster,
                time_limit_s=time_limit_s, progress=bar, pool=pool)
        finally:
            bar.close()
        if pool is not None:  # the workers are not needed for the tables: free them first
            pool.close()
        store.set_meta(last_run_s=round(time.perf_counter() - start, 3))
        if write_tables:
            write_outputs(out_dir, store)
        return RunSummary(out_dir=out_dir, total=len(set(keys)), ok=counts.get("ok", 0),
                          infeasible=counts.get("infeasible", 0), failed=counts.get("failed", 0),
                          skipped=skipped, wall_time_s=time.perf_counter() - start, jobs=jobs,
                          tasks=n_tasks, max_chunk=largest, store_counts=store.counts(),
                          workers=kind, retried=len(retry), damage=damage)
