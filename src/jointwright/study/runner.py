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

import os
import sqlite3
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from ..errors import InputError
from .backends import _run_dask, _run_pool
from .spec import Case, StudySpec, case_project, expand, load_study
from .store import CaseRecord, StudyStore
from .worker import DEFAULT_CASE_FN, resolve_case_fn


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
        from .tasks import check_study_options, check_study_values, check_variants

        check_study_options(spec)
        check_study_values(spec)
        check_variants(spec)
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
        from .store_file import damaged

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
    names = [__name__, "jointwright.study.worker"]
    module: str | None
    if isinstance(fn_ref, str):
        module = fn_ref.partition(":")[0]
    else:
        module = getattr(fn_ref, "__module__", None)
    if module and module != "__main__":
        names.append(module)
    return names
