"""The study section's plain dict from a study store (SQLite), for :func:`.hooks.study_section`.

Reads the store through :mod:`jointwright.study.summary`: one row per case (varied parameters,
metrics, status) and each numeric metric against each varied parameter over the finished cases.
Metric values are stored in SI, as the project computes them.
"""

from __future__ import annotations

from pathlib import Path

from ..study.store import read_cases, read_study
from ..study.summary import metric_names, plot_series, summary_rows

#: columns of the store's rows that the report leaves out (kept in the CSV export)
_HIDDEN = ("worker",)


def study_data(store: str | Path, metrics=None, parameters=None) -> dict:
    """The hook dict ``{"name", "columns", "rows", "series"}`` of a study store.

    Parameters
    ----------
    store : path of the study's SQLite file
    metrics : metric names to show (default: all); unknown names raise ``InputError``
    parameters : varied parameters to plot against (default: all)
    """
    study = read_study(store)
    header, rows = summary_rows(store, metrics)
    keep = [k for k, h in enumerate(header) if h not in _HIDDEN]
    done = [c for c in read_cases(store) if c.status == "done"]
    numeric = [m for m in (metrics or metric_names(done))
               if any(isinstance(c.metrics.get(m), (int, float)) for c in done)]
    series = []
    if numeric and study.parameters:
        for s in plot_series(store, numeric, parameters):
            if s.x.size:
                series.append({"metric": s.metric, "parameter": s.parameter, "unit": s.unit,
                               "x": s.x.tolist(), "y": s.y.tolist(),
                               "variant": s.variant.tolist()})
    return {"name": study.name, "columns": [header[k] for k in keep],
            "rows": [["—" if r[k] is None else r[k] for k in keep] for r in rows],
            "series": series}
