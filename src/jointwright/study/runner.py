"""Run every case of a study on a local process pool or a Dask cluster, storing each as it ends.

The case function is pluggable: ``case_fn(project, base_dir, task, options) -> {"metrics":
{name: float | int | str | None}, "result": <JSON-able>}``; raising means the case failed. It is
given as a callable (module level, so it pickles) or as an import path ``"package.module:name"``;
the default is ``"jointwright.study.tasks:run_case"``, imported only when a study runs.

Only the parent process writes to the store, one transaction per finished case, so an
interrupted run (Ctrl-C, or the process killed) keeps every finished case and ``resume=True``
runs only the missing ones.
"""

from __future__ import annotations

import importlib
import multiprocessing
import multiprocessing.connection
import os
import signal
import socket
import sqlite3
import threading
import time
import traceback
from collections import deque
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator

from ..errors import InputError
from .spec import Case, StudySpec, case_project, expand, load_study
from .store import CaseRecord, StudyStore

#: import path of the case function used when none is given
DEFAULT_CASE_FN = "jointwright.study.tasks:run_case"
_TRACEBACK_FRAMES = 8
_TRACEBACK_CHARS = 8000
_DASK_SLOT_REFRESH = 2.0  # s between looks at the cluster's thread count
_DASK_BATCH_S = 0.25  # s of case work per Dask task, aimed at


@dataclass(frozen=True)
class StudyOutcome:
    """How a run went.

    Attributes
    ----------
    store : Path
    study_hash : str
    total : int
        Cases in the study.
    skipped : int
        Cases already in the store before this run and not run again.
    done, failed : int
        Cases finished by this run, by status.
    done_total, failed_total : int
        Cases in the store after this run, by status.
    wall_time : float
        s, from the call to the return.
    case_time : float
        s, summed wall time of the cases this run finished (as measured in the workers).
    workers : int
        Parallel slots: processes of the local pool, or threads of the Dask cluster.
    backend : str
        ``processes`` or ``dask``.
    """

    store: Path
    study_hash: str
    total: int
    skipped: int
    done: int
    failed: int
    done_total: int
    failed_total: int
    wall_time: float
    case_time: float
    workers: int
    backend: str

    @property
    def overhead(self) -> float:
        """Worker-seconds not spent inside cases: ``workers·wall_time − case_time`` (s)."""
        return self.workers * self.wall_time - self.case_time

    @property
    def overhead_fraction(self) -> float:
        """:attr:`overhead` relative to :attr:`case_time` (0 when nothing ran)."""
        return self.overhead / self.case_time if self.case_time > 0 else 0.0


# ------------------------------------------------------------------ worker-side code


def resolve_case_fn(ref: str | Callable | None) -> Callable:
    """The case function for ``ref``: a callable, ``"module:name"``, or None for the default."""
    if ref is None:
        ref = DEFAULT_CASE_FN
    if callable(ref):
        return ref
    if not isinstance(ref, str) or ref.count(":") != 1:
        raise InputError(
            "<api>", "case_fn", f"must be a callable or 'package.module:function', got {ref!r}"
        )
    return _import_case_fn(ref)


@lru_cache(maxsize=16)
def _import_case_fn(ref: str) -> Callable:
    module_name, _, attr = ref.partition(":")
    try:
        obj: Any = importlib.import_module(module_name)
    except ImportError as exc:
        raise InputError(
            "<api>", "case_fn", f"cannot import module {module_name!r}: {exc}"
        ) from None
    for part in attr.split("."):
        if not hasattr(obj, part):
            raise InputError("<api>", "case_fn", f"module {module_name!r} has no {attr!r}")
        obj = getattr(obj, part)
    if not callable(obj):
        raise InputError("<api>", "case_fn", f"{ref!r} is not callable")
    return obj


def execute_case(case_fn, project: dict, base_dir: Path, task: str, options: dict) -> CaseRecord:
    """Run one case and capture its outcome; never raises for a failing case.

    The case function's wall time is measured around the call only (s).
    """
    worker = f"{socket.gethostname()}:{os.getpid()}"
    t0 = time.perf_counter()
    try:
        out = resolve_case_fn(case_fn)(project, Path(base_dir), task, options)
        wall = time.perf_counter() - t0
        metrics, result = _checked_output(out)
    except Exception as exc:
        wall = time.perf_counter() - t0
        tb = traceback.TracebackException.from_exception(exc, limit=-_TRACEBACK_FRAMES)
        text = "".join(tb.format())[-_TRACEBACK_CHARS:]
        return CaseRecord("failed", error=f"{type(exc).__name__}: {exc}", traceback=text,
                          wall_time=wall, worker=worker)  # fmt: skip
    return CaseRecord("done", metrics, result, wall_time=wall, worker=worker)


def _checked_output(out: Any) -> tuple[dict, str]:
    import json
    import numbers

    if not isinstance(out, dict) or set(out) != {"metrics", "result"}:
        raise TypeError("the case function must return {'metrics': {...}, 'result': ...}")
    if not isinstance(out["metrics"], dict):
        raise TypeError("'metrics' must be a dict of name -> number, string or None")
    metrics: dict = {}
    for name, value in out["metrics"].items():
        if not isinstance(name, str) or not name or len(name) > 200 or not name.isprintable():
            raise TypeError(f"metric name {name!r} must be printable text of 1 to 200 characters")
        if value is None or isinstance(value, str):
            metrics[name] = value
        elif isinstance(value, numbers.Integral):
            metrics[name] = int(value)
        elif isinstance(value, numbers.Real):
            metrics[name] = float(value)
        else:
            raise TypeError(
                f"metric {name!r} must be a number, a string or None, got {type(value).__name__}"
            )
    return metrics, json.dumps(out["result"], default=_jsonable, sort_keys=True)


def _jsonable(obj: Any) -> Any:
    if hasattr(obj, "tolist"):  # numpy arrays and scalars
        return obj.tolist()
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"result holds a {type(obj).__name__}, which is not JSON-serializable")


def _worker_init() -> None:
    """Pool workers leave Ctrl-C to the parent and exit as soon as the runner's process is gone
    (its sentinel pipe closes), so a killed run leaves no orphans."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    parent = multiprocessing.parent_process()
    if parent is None:
        return

    def watch() -> None:
        multiprocessing.connection.wait([parent.sentinel])
        os._exit(1)

    threading.Thread(target=watch, name="jointwright-parent-watch", daemon=True).start()


# ------------------------------------------------------------------------ back-ends

Sink = Callable[[Case, CaseRecord], None]
Build = Callable[[Case], tuple]


def _pool_context():
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


def _new_pool(workers: int, preload: list[str]) -> ProcessPoolExecutor:
    ctx = _pool_context()
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(preload)
    return ProcessPoolExecutor(workers, mp_context=ctx, initializer=_worker_init)


def _stop_pool(pool: ProcessPoolExecutor) -> None:
    """Cancel queued cases and end running workers now (used on interruption)."""
    stop = getattr(pool, "terminate_workers", None)  # Python >= 3.14
    if stop is not None:
        stop()
        return
    procs = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        p.terminate()
    for p in procs:
        p.join(5.0)


def _run_pool(
    cases: Iterable[Case], build: Build, sink: Sink, workers: int, fn_ref, preload: list[str]
) -> None:
    """Local process pool. A case that kills its worker is found by re-running the cases that were
    in flight one at a time, and recorded as failed; the others run normally."""
    pending, suspects = deque(cases), deque[Any]()
    in_flight: dict = {}
    pool = None
    try:
        while pending or suspects or in_flight:
            if pool is None:
                pool = _new_pool(workers, preload)
            source, limit = (suspects, 1) if suspects else (pending, 2 * workers)
            while source and len(in_flight) < limit:
                try:
                    fut = pool.submit(execute_case, fn_ref, *build(source[0]))
                except BrokenProcessPool:  # a worker died since the last wait
                    break
                in_flight[fut] = source.popleft()
            if not in_flight:  # broken while idle: nothing was lost, start a new pool
                pool.shutdown(wait=True)
                pool = None
                continue
            done, _ = wait(in_flight, return_when=FIRST_COMPLETED)
            if any(isinstance(f.exception(), BrokenProcessPool) for f in done):
                done, _ = wait(in_flight)  # the others end at once, broken or finished
            victims = []
            for fut in sorted(done, key=lambda f: in_flight[f].index):
                case, exc = in_flight.pop(fut), fut.exception()
                if isinstance(exc, BrokenProcessPool):
                    victims.append((case, exc))
                elif exc is not None:
                    sink(case, CaseRecord("failed", error=f"{type(exc).__name__}: {exc}"))
                else:
                    sink(case, fut.result())
            if victims:
                pool.shutdown(wait=True)
                pool = None
                if len(victims) == 1:
                    case, exc = victims[0]
                    why = f"worker process died while running this case ({exc})"
                    sink(case, CaseRecord("failed", error=why))
                else:
                    suspects.extend(case for case, _ in victims)
    except BaseException:
        if pool is not None:
            _stop_pool(pool)
            pool = None
        raise
    finally:
        if pool is not None:
            pool.shutdown(wait=True)


def execute_cases(case_fn, jobs: list[tuple]) -> list[CaseRecord]:
    """Run several cases in one task (see :func:`execute_case`)."""
    return [execute_case(case_fn, *job) for job in jobs]


def _retry_queue(queue: str, n_cases: int, lost_worker: bool) -> str | None:
    """Where the cases of a task that did not finish go next (None: record them as failed)."""
    if n_cases > 1:
        return "single"
    if lost_worker and queue != "solo":
        return "solo"
    return None


class _DaskFeed:
    """Keeps a Dask cluster busy with batches of cases.

    Dask costs a few ms per task, so cases are shipped in batches of about ``_DASK_BATCH_S`` of
    work (from the mean case time so far), small enough that every thread keeps two batches.
    A task lost with its worker is retried smaller: a batch as single cases, then a single case
    alone on the cluster (Dask blames every task that was on a dying worker; alone, only the
    culprit can be). A case lost even alone is recorded as failed.
    """

    def __init__(self, client, cases: Iterable[Case], build: Build, fn_ref):
        import uuid

        from distributed import as_completed

        self.client, self.build, self.fn_ref = client, build, fn_ref
        self.queues: dict[str, deque] = {"solo": deque(), "single": deque(), "batch": deque(cases)}
        self.in_flight: dict = {}  # key -> (future, [cases], queue name)
        self.tag, self.serial = uuid.uuid4().hex[:8], 0
        self.ac = as_completed(loop=client.loop)
        self.threads, self.looked = 1, -_DASK_SLOT_REFRESH
        self.case_time, self.cases_done = 0.0, 0

    def _batch_size(self) -> int:
        if self.cases_done == 0:
            return 1
        per_case = max(self.case_time / self.cases_done, 1e-6)
        spread = max(1, len(self.queues["batch"]) // (2 * self.threads))
        return int(min(max(1, round(_DASK_BATCH_S / per_case)), spread))

    def _next(self) -> tuple[str, list[Case]] | None:
        q = self.queues
        if q["solo"] or any(name == "solo" for _, _, name in self.in_flight.values()):
            return ("solo", [q["solo"].popleft()]) if q["solo"] and not self.in_flight else None
        if q["single"]:
            return "single", [q["single"].popleft()]
        n = min(self._batch_size(), len(q["batch"]))
        return ("batch", [q["batch"].popleft() for _ in range(n)]) if n else None

    def refill(self) -> None:
        if time.monotonic() - self.looked > _DASK_SLOT_REFRESH:
            self.threads = max(1, sum(self.client.nthreads().values()))
            self.looked = time.monotonic()
        while len(self.in_flight) < 2 * self.threads and (item := self._next()) is not None:
            name, cases = item
            self.serial += 1
            key = f"jointwright-{self.tag}-{self.serial}"
            jobs = [self.build(c) for c in cases]
            fut = self.client.submit(execute_cases, self.fn_ref, jobs, key=key)
            self.in_flight[key] = (fut, cases, name)
            self.ac.add(fut)

    def _lost(self, exc, status: str, cases: list[Case], name: str) -> list[CaseRecord]:
        """Records for a task that did not finish, or [] when its cases are retried smaller."""
        retry = _retry_queue(name, len(cases), exc is None or type(exc).__name__ == "KilledWorker")
        if retry is not None:
            self.queues[retry].extend(cases)
            return []
        why = f"{type(exc).__name__}: {exc}" if exc else f"Dask task ended with status {status!r}"
        return [CaseRecord("failed", error=why)]

    def _records(self, fut, cases: list[Case], name: str) -> list[CaseRecord]:
        if fut.status not in ("finished", "error"):
            return self._lost(None, fut.status, cases, name)
        try:  # a finished result can still be lost with its worker before it is fetched
            return fut.result()
        except Exception as exc:
            return self._lost(exc, fut.status, cases, name)

    def results(self) -> Iterator[tuple[Case, CaseRecord]]:
        """Finished cases as they arrive, refilling the cluster as it goes."""
        self.refill()
        for fut in self.ac:
            _, cases, name = self.in_flight.pop(fut.key)
            records = self._records(fut, cases, name)
            fut.release()
            for case, record in zip(cases, records, strict=True):
                self.case_time += record.wall_time
                self.cases_done += 1
                yield case, record
            self.refill()

    def cancel(self) -> None:
        if self.in_flight:
            self.client.cancel([f for f, _, _ in self.in_flight.values()])


def _run_dask(cases: Iterable[Case], build: Build, sink: Sink, scheduler, fn_ref) -> int:
    """Run on a Dask cluster (address or ``distributed.Client``); returns its thread count."""
    from distributed import Client

    own = not isinstance(scheduler, Client)
    if own and str(scheduler).startswith("tls://"):
        from distributed.security import Security

        sec: Any = (
            Security()
        )  # dask's configuration: files or DASK_DISTRIBUTED__COMM__TLS__* variables
        if not (sec.tls_ca_file and sec.tls_client_cert):
            raise InputError(
                str(scheduler),
                "--scheduler",
                "a tls:// scheduler needs the client's "
                "certificate, key and CA in dask's configuration "
                "(distributed.comm.tls.ca-file, .client.cert, .client.key); see "
                "docs/study-format.md, 'A cluster only you can reach'",
            )
    try:
        client = Client(scheduler, set_as_default=False, timeout=30) if own else scheduler
    except (OSError, TypeError, ValueError) as exc:  # unreachable, refused, TLS not configured
        text = " ".join(str(exc).split())
        hint = (
            "a tls:// scheduler needs the client's certificate, key and CA "
            "(docs/study-format.md, 'A cluster only you can reach')"
            if str(scheduler).startswith("tls://")
            else "is the scheduler running, and is the address right?"
        )
        raise InputError(
            str(scheduler), "--scheduler", f"cannot connect ({type(exc).__name__}: {text}); {hint}"
        ) from None
    feed = _DaskFeed(client, cases, build, fn_ref)
    try:
        for case, record in feed.results():
            sink(case, record)
    except BaseException:
        feed.cancel()
        raise
    finally:
        if own:
            client.close()
    return feed.threads


# ------------------------------------------------------------------------- progress


class _Progress:
    """rich progress bar on stderr with done/failed counts and ETA (no-op when disabled)."""

    def __init__(self, enabled: bool, name: str, total: int, skipped: int):
        self.enabled = enabled
        if not enabled:
            return
        from rich.console import Console
        from rich.progress import (
            BarColumn,
            MofNCompleteColumn,
            Progress,
            TextColumn,
            TimeElapsedColumn,  # fmt: skip
            TimeRemainingColumn,
        )

        self.console = Console(stderr=True)
        self.bar = Progress(
            TextColumn("[bold]{task.description}"), BarColumn(), MofNCompleteColumn(),
            TextColumn("[green]{task.fields[done]} done[/] [red]{task.fields[failed]} failed[/]"),
            TimeElapsedColumn(), TextColumn("ETA"), TimeRemainingColumn(), console=self.console,
        )  # fmt: skip
        label = f"{name} ({skipped} already stored)" if skipped else name
        self.task = self.bar.add_task(label, total=total, done=0, failed=0)
        self.bar.start()

    def advance(self, done: int, failed: int) -> None:
        if self.enabled:
            self.bar.update(self.task, advance=1, done=done, failed=failed)

    def close(self, outcome: StudyOutcome | None, interrupted: bool) -> None:
        if not self.enabled:
            return
        self.bar.stop()
        if outcome is None:
            return
        state = "interrupted" if interrupted else "finished"
        self.console.print(
            f"study {state}: {outcome.done} done, {outcome.failed} failed this run; store holds "
            f"{outcome.done_total} done, {outcome.failed_total} failed of {outcome.total}. "
            f"Wall {outcome.wall_time:.2f} s, case time {outcome.case_time:.2f} s on "
            f"{outcome.workers} "
            f"{'local process' if outcome.backend == 'processes' else 'Dask slot'}"
            f"{'' if outcome.workers == 1 else ('es' if outcome.backend == 'processes' else 's')}, "
            f"overhead {100 * outcome.overhead_fraction:.1f} %"
        )


# --------------------------------------------------------------------------- runner


def _check_arguments(workers, scheduler, resume: bool, restart: bool) -> None:
    if resume and restart:
        raise InputError("<api>", "restart", "cannot be combined with resume (restart starts anew)")
    if workers is not None:
        if not isinstance(workers, int) or isinstance(workers, bool) or workers < 1:
            raise InputError("<api>", "workers", f"must be a whole number >= 1, got {workers!r}")
        if scheduler is not None:
            raise InputError(
                "<api>",
                "workers",
                "applies to the local process pool only; a Dask cluster has its own workers",
            )


def _select(
    cases: list[Case], stored: dict[str, str], store: Path, resume: bool, retry_failed: bool
) -> list[Case]:
    if stored and not resume:
        raise InputError(
            str(store), "(file)",
            f"already holds {len(stored)} case(s) of this study; resume to run only the missing "
            "ones, or restart to start anew",
        )  # fmt: skip
    rerun = ("failed",) if retry_failed else ()
    return [c for c in cases if c.id not in stored or stored[c.id] in rerun]


def run_study(
    study: str | Path | StudySpec,
    store_path: str | Path,
    *,
    workers: int | None = None,
    scheduler: Any = None,
    resume: bool = False,
    restart: bool = False,
    retry_failed: bool = False,
    case_fn: str | Callable | None = None,
    progress: bool = True,
) -> StudyOutcome:
    """Run every case of a study and store each result as it finishes.

    Parameters
    ----------
    study : path or StudySpec
        The study file, or a spec from :func:`~jointwright.study.spec.load_study`.
    store_path : path
        SQLite store; created when missing.
    workers : int, optional
        Local pool size (default ``os.cpu_count()``). Not allowed with ``scheduler``.
    scheduler : str or distributed.Client, optional
        Dask scheduler address (``"tcp://host:8786"``) or a client: run there instead.
    resume : bool
        Continue a store of the same study: run only the cases it lacks. Without it a store that
        already holds cases is refused.
    restart : bool
        Start a fresh store even if the study changed (the old file is kept as a backup).
    retry_failed : bool
        With ``resume``, also run again the cases stored as failed.
    case_fn : callable or str, optional
        The case function (see the module docstring); default ``DEFAULT_CASE_FN``.
    progress : bool
        Show a progress bar and a closing summary on stderr.

    Returns
    -------
    StudyOutcome

    Raises
    ------
    InputError
        Bad study file, store of another study, bad arguments. ``KeyboardInterrupt`` is re-raised
        after the workers are stopped; every case finished before it is in the store.
    """
    t0 = time.perf_counter()
    _check_arguments(workers, scheduler, resume, restart)
    spec = study if isinstance(study, StudySpec) else load_study(study)
    fn = resolve_case_fn(case_fn)
    fn_ref = DEFAULT_CASE_FN if case_fn is None else (case_fn if isinstance(case_fn, str) else fn)
    cases = expand(spec)
    if fn_ref == DEFAULT_CASE_FN:
        from .tasks import check_study_options, check_study_values

        check_study_options(spec)
        check_study_values(spec)
    store = StudyStore.open(store_path, spec, len(cases), restart=restart)
    try:
        todo = _select(cases, store.statuses(), Path(store_path), resume, retry_failed)
        return _run(spec, store, cases, todo, fn_ref, workers, scheduler, progress, t0)
    except sqlite3.DatabaseError as exc:
        raise _fault(store.path, exc) from None
    except OSError as exc:
        raise _fault(store.path, exc) from None
    finally:
        store.close()


def _fault(path: Path, exc: BaseException) -> InputError:
    """One line for a run stopped by a fault outside the cases (full disk, I/O error, damage)."""
    text = str(exc) if not isinstance(exc, OSError) or not exc.strerror else exc.strerror
    if isinstance(exc, sqlite3.DatabaseError) and any(
        w in text for w in ("malformed", "corrupt", "not a database")
    ):
        from .store import damaged

        return damaged(path, exc)
    return InputError(
        str(path), "(run)",
        f"the run stopped on a fault ({type(exc).__name__}: {text}); every case finished before "
        "it is in the store and the run is marked interrupted. Fix the cause (free disk space, "
        "permissions), then resume to run only the missing cases",
    )  # fmt: skip


def _run(spec, store, cases, todo, fn_ref, workers, scheduler, show, t0) -> StudyOutcome:
    backend = "processes" if scheduler is None else "dask"
    slots = min(workers or os.cpu_count() or 1, max(1, len(todo)))
    run_id = store.start_run(backend, slots if scheduler is None else None)
    counts = {"done": 0, "failed": 0}
    case_time = 0.0
    bar = _Progress(show, spec.name, len(todo), len(cases) - len(todo))

    def build(case: Case) -> tuple:
        return case_project(spec, case), spec.base_dir, case.task, case.options

    def sink(case: Case, record: CaseRecord) -> None:
        nonlocal case_time
        stored = store.write(case, record, run_id)
        counts[stored.status] += 1
        case_time += stored.wall_time
        bar.advance(counts["done"], counts["failed"])

    def outcome() -> StudyOutcome:
        final = list(store.statuses().values())
        return StudyOutcome(
            store.path, spec.hash, len(cases), len(cases) - len(todo), counts["done"],
            counts["failed"], final.count("done"), final.count("failed"),
            time.perf_counter() - t0, case_time, slots, backend,
        )  # fmt: skip

    try:
        if todo and scheduler is None:
            _run_pool(todo, build, sink, slots, fn_ref, _preload(fn_ref))
        elif todo:
            slots = _run_dask(todo, build, sink, scheduler, fn_ref)
    except BaseException:
        try:  # may fail too (a full disk); the next run then marks this one interrupted
            store.finish_run(run_id, "interrupted", counts["done"], counts["failed"])
            summary = outcome()
        except (sqlite3.Error, OSError):
            summary = None
        bar.close(summary, interrupted=True)
        raise
    store.finish_run(run_id, "complete", counts["done"], counts["failed"])
    result = outcome()
    bar.close(result, interrupted=False)
    return result


def _preload(fn_ref) -> list[str]:
    """Modules the fork server imports once, so each worker starts with them loaded."""
    names = [__name__]
    module: str | None
    if isinstance(fn_ref, str):
        module = fn_ref.partition(":")[0]
    else:
        module = getattr(fn_ref, "__module__", None)
    if module and module != "__main__":
        names.append(module)
    return names
