"""Reading a study store (read-only): the study, its cases and its runs.

For summaries and reports; the writer is :class:`.store.StudyStore`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .store import METRIC_PREFIX, PARAM_PREFIX
from .store_file import query, read_study_row

# ----------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class StoredStudy:
    """The ``study`` row of a store."""

    path: Path
    format_version: int
    study_hash: str
    name: str
    definition: dict
    base_file: str
    base_project: dict
    parameters: tuple[str, ...]
    case_count: int
    package_version: str
    created: str


@dataclass(frozen=True)
class StoredCase:
    """One row of ``cases``; ``result`` is the parsed JSON (None unless requested or failed)."""

    case_id: str
    index: int
    variant: str | None
    task: str
    params: dict
    values: dict
    status: str
    metrics: dict
    result: Any
    error: str | None
    traceback: str | None
    wall_time: float
    worker: str
    finished: str
    run_id: int | None


def read_study(path: str | Path) -> StoredStudy:
    """The study description held in a store."""
    row = read_study_row(Path(path))
    return StoredStudy(
        Path(path), row["format_version"], row["study_hash"], row["name"],
        json.loads(row["definition"]), row["base_file"], json.loads(row["base_project"]),
        tuple(json.loads(row["parameters"])), row["case_count"], row["package_version"],
        row["created"],
    )  # fmt: skip


def read_cases(path: str | Path, *, results: bool = False) -> list[StoredCase]:
    """Every case in the store in expansion order; ``results=True`` also parses the results."""
    read_study_row(Path(path))
    rows = query(path, "SELECT * FROM cases ORDER BY case_index")
    return [_stored_case(row, results) for row in rows]


def _stored_case(row: dict, results: bool) -> StoredCase:
    values = {k[len(PARAM_PREFIX) :]: v for k, v in row.items() if k.startswith(PARAM_PREFIX)}
    metrics = {
        k[len(METRIC_PREFIX) :]: v
        for k, v in row.items()
        if k.startswith(METRIC_PREFIX) and v is not None
    }
    result = json.loads(row["result"]) if results and row["result"] is not None else None
    return StoredCase(
        row["case_id"], row["case_index"], row["variant"], row["task"], json.loads(row["params"]),
        values, row["status"], metrics, result, row["error"], row["traceback"], row["wall_time"],
        row["worker"], row["finished"], row["run_id"],
    )  # fmt: skip


def read_runs(path: str | Path) -> list[dict]:
    """Every run recorded in the store, oldest first."""
    read_study_row(Path(path))
    return query(path, "SELECT * FROM runs ORDER BY run_id")
