"""Tables and plot data across the cases of a study store.

Plain rows (for CSV and other tools), a rich table for the terminal, CSV export, and arrays of
chosen metrics against each varied parameter for the report layer to draw (this module draws
nothing).
"""

from __future__ import annotations

import csv
import math
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

import numpy as np

from ..errors import InputError, unknown_name
from .reading import StoredCase, read_cases, read_study

FIXED_BEFORE = ("case_id", "variant")
FIXED_AFTER = ("status", "wall_time", "worker", "error")


@dataclass(frozen=True)
class PlotSeries:
    """One metric against one varied parameter, over the cases that finished with a number.

    Attributes
    ----------
    metric, parameter : str
        Metric name and dotted parameter path.
    unit : str or None
        Unit of ``x``: the unit of the first value written with one (others are converted to
        it), or None when the values are plain numbers (SI by the project's convention).
    x, y : ndarray of float, shape (n,)
    variant : ndarray of str, shape (n,)
        Variant name per point ("" when the study has none), for grouping curves.
    case_id : ndarray of str, shape (n,)
    """

    metric: str
    parameter: str
    unit: str | None
    x: np.ndarray
    y: np.ndarray
    variant: np.ndarray
    case_id: np.ndarray


def metric_names(cases: Sequence[StoredCase]) -> list[str]:
    """Every metric name that appears, in order of first appearance."""
    names: dict[str, None] = {}
    for c in cases:
        names.update(dict.fromkeys(c.metrics))
    return list(names)


def summary_rows(
    store: str | Path, metrics: Sequence[str] | None = None
) -> tuple[list[str], list[list]]:
    """Header and one row per stored case: id, variant, each varied parameter (as written),
    the chosen metrics (default all), status, wall time (s), worker, error."""
    study = read_study(store)
    cases = read_cases(store)
    chosen = _chosen(metrics, cases, store)
    header = [*FIXED_BEFORE, *study.parameters, *chosen, *FIXED_AFTER]
    rows = [
        [c.case_id, c.variant, *(c.values.get(p) for p in study.parameters),
         *(c.metrics.get(m) for m in chosen), c.status, c.wall_time, c.worker, c.error]
        for c in cases
    ]  # fmt: skip
    return header, rows


def _chosen(metrics: Sequence[str] | None, cases: Sequence[StoredCase], store) -> list[str]:
    known = metric_names(cases)
    if metrics is None:
        return known
    for m in metrics:
        if m not in known:
            raise InputError(
                str(store),
                "metrics",
                f"no case reports metric {m!r}; known: {', '.join(known) or 'none'}",
            )
    return list(metrics)


def export_csv(
    store: str | Path, csv_path: str | Path, metrics: Sequence[str] | None = None
) -> Path:
    """Write :func:`summary_rows` as CSV (UTF-8, header row; empty cell for missing values)."""
    header, rows = summary_rows(store, metrics)
    csv_path = Path(csv_path)
    # a temporary file beside the target, renamed over it: a failed write keeps the old file
    try:
        fd, name = tempfile.mkstemp(prefix=f".{csv_path.name}.", suffix=".tmp", dir=csv_path.parent)
    except OSError as exc:
        raise InputError(
            str(csv_path), "csv", f"cannot be written ({exc.strerror or exc})"
        ) from None
    try:
        with os.fdopen(fd, "w", newline="", encoding="utf-8") as fh:
            writer = csv.writer(fh)
            writer.writerow(header)
            writer.writerows([["" if v is None else v for v in row] for row in rows])
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(name, 0o666 & ~_umask())
        os.replace(name, csv_path)
    except OSError as exc:
        raise InputError(
            str(csv_path),
            "csv",
            f"cannot be written ({exc.strerror or exc}); any earlier file there is unchanged",
        ) from None
    finally:
        if os.path.exists(name):
            os.unlink(name)
    return csv_path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _cell(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return ("inf" if v > 0 else "-inf") if math.isinf(v) else f"{v:.6g}"
    return str(v)


def summary_table(
    store: str | Path,
    metrics: Sequence[str] | None = None,
    *,
    max_rows: int | None = None,
    sort_by: str | None = None,
    descending: bool = True,
):
    """A ``rich.table.Table`` of the cases; optionally sorted by a metric (missing values last)
    and cut to ``max_rows``. The caption counts done and failed cases."""
    from rich.table import Table

    header, rows = summary_rows(store, metrics)
    if sort_by is not None:
        if sort_by not in header:
            raise unknown_name(str(store), "sort_by", sort_by, header, "column")
        k = header.index(sort_by)
        numeric = [r for r in rows if isinstance(r[k], (int, float))]
        rest = [r for r in rows if not isinstance(r[k], (int, float))]
        rows = sorted(numeric, key=lambda r: r[k], reverse=descending) + rest
    status = [r[header.index("status")] for r in rows]
    study = read_study(store)
    counts = f"{status.count('done')} done, {status.count('failed')} failed"
    table = Table(title=f"study {study.name}", caption=f"{counts} of {study.case_count} cases")
    for name in header:
        table.add_column(
            name,
            justify="right" if name not in ("case_id", "variant", "error", "worker") else "left",
        )
    for row in rows[:max_rows]:
        table.add_row(*(_cell(v) for v in row))
    return table


def _numbers(values: Sequence[Any], store, parameter: str) -> tuple[np.ndarray, str | None]:
    """Parameter values as floats in one unit (see :class:`PlotSeries`)."""
    from ..units import registry

    unit, out = None, []
    for v in values:
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            out.append(float(v))
            continue
        try:
            out.append(float(v))
            continue
        except (TypeError, ValueError):
            pass
        try:
            q = registry().Quantity(str(v))
            unit = unit or format(q.units, "~C")
            out.append(float(q.to(unit).magnitude))
        except Exception:
            raise InputError(
                str(store), f"param:{parameter}", f"cannot read {v!r} as a number for plotting"
            ) from None
    return np.asarray(out, dtype=float), unit


def plot_series(
    store: str | Path, metrics: Sequence[str], parameters: Sequence[str] | None = None
) -> list[PlotSeries]:
    """Each chosen numeric metric against each varied parameter (default all), done cases only.

    Points are in expansion order; cases whose metric is missing or text are left out.
    """
    study = read_study(store)
    cases = [c for c in read_cases(store) if c.status == "done"]
    chosen = _chosen(metrics, cases, store)
    params = list(study.parameters if parameters is None else parameters)
    for p in params:
        if p not in study.parameters:
            raise InputError(
                str(store),
                "parameters",
                f"{p!r} is not varied; varied: {', '.join(study.parameters)}",
            )
    out = []
    for m in chosen:
        keep = [c for c in cases if isinstance(c.metrics.get(m), (int, float))]
        y = np.asarray([c.metrics[m] for c in keep], dtype=float)
        variant = np.asarray([c.variant or "" for c in keep], dtype=str)
        ids = np.asarray([c.case_id for c in keep], dtype=str)
        for p in params:
            x, unit = _numbers([c.values.get(p) for c in keep], store, p)
            out.append(PlotSeries(m, p, unit, x, y, variant, ids))
    return out


def variant_values(store: str | Path, metric: str) -> dict[str, np.ndarray]:
    """Numeric values of ``metric`` per variant (done cases, expansion order), for comparing
    architectures side by side."""
    cases = [c for c in read_cases(store) if c.status == "done"]
    _chosen([metric], cases, store)
    groups: dict[str, list[float]] = {}
    for c in cases:
        v = c.metrics.get(metric)
        if isinstance(v, (int, float)):
            groups.setdefault(c.variant or "", []).append(float(v))
    return {k: np.asarray(v, dtype=float) for k, v in groups.items()}
