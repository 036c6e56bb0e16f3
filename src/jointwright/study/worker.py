"""The worker side of a study run: resolve the case function, run one case, check its output.

Runs in the worker processes (local pool or Dask) and in-process for a serial run; the parent
(:mod:`.runner`) stores what it returns.
"""

from __future__ import annotations

import importlib
import multiprocessing
import multiprocessing.connection
import os
import signal
import socket
import threading
import time
import traceback
from functools import lru_cache
from pathlib import Path
from typing import Any, Callable

from ..errors import InputError
from .store import CaseRecord

#: import path of the case function used when none is given
DEFAULT_CASE_FN = "jointwright.study.tasks:run_case"
_TRACEBACK_FRAMES = 8
_TRACEBACK_CHARS = 8000


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
