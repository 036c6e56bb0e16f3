"""Where a study's cases run: a local process pool (a case that kills its worker is isolated and
recorded as failed) or a Dask cluster (cases fed in batches sized to the cluster's slots)."""

from __future__ import annotations

import multiprocessing
import multiprocessing.connection
import time
from collections import deque
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any, Callable, Iterable, Iterator

from ..errors import InputError
from .spec import Case
from .store import CaseRecord
from .worker import _worker_init, execute_case

_DASK_SLOT_REFRESH = 2.0  # s between looks at the cluster's thread count
_DASK_BATCH_S = 0.25  # s of case work per Dask task, aimed at


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
