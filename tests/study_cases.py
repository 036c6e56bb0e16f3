"""Tiny case functions for the study runner tests (module level, so they pickle).

Each follows the case-function contract: ``fn(project, base_dir, task, options) -> {"metrics":
{...}, "result": ...}``. Options steer them: ``sleep`` (s per case), ``fail_above`` (raise when the
leg reach exceeds it, m), ``crash_at`` (end the worker process abruptly at this thigh length, m).
"""

from __future__ import annotations

import os
import time
from pathlib import Path

#: the few units the test projects use, to SI (kept here so workers start without pint)
_UNITS = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "kg": 1.0, "g": 1e-3, "N": 1.0}


def quantity(value, dimension: str = "") -> float:
    """A number, or a string "<number> <unit>" with a unit from ``_UNITS``, in SI."""
    if isinstance(value, (int, float)):
        return float(value)
    number, _, unit = value.strip().partition(" ")
    return float(number) * (_UNITS[unit.strip()] if unit.strip() else 1.0)


BASE_PROJECT = """\
name = "test leg"

[robot.links.thigh]
length = 0.30

[robot.links.shank]
length = "300 mm"

[requirements]
mass_budget = "3 kg"

[[cases]]
name = "lift"
payload = 10.0

[catalog]
stage_kinds = ["planetary", "cycloidal"]
"""


def leg_metrics(project: dict) -> dict:
    """The metrics :func:`leg_case` reports, computed from the project dict alone."""
    links = project["robot"]["links"]
    thigh = quantity(links["thigh"]["length"], "length")
    shank = quantity(links["shank"]["length"], "length")
    budget = quantity(project["requirements"]["mass_budget"], "mass")
    payload = quantity(project["cases"][0]["payload"], "force")
    kinds = project["catalog"]["stage_kinds"]
    # an invented smooth score: longer legs and larger budgets lift more, capped by the payload
    return {
        "reach": thigh + shank,
        "budget": budget,
        "score": min(payload, budget * 9.80665) / (thigh + shank),
        "kinds": ",".join(kinds),
        "n_kinds": len(kinds),
    }


def leg_case(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    """Deterministic tiny case: metrics from the project's numbers, result echoes the inputs."""
    metrics = leg_metrics(project)
    thigh = quantity(project["robot"]["links"]["thigh"]["length"], "length")
    if "crash_at" in options and abs(thigh - options["crash_at"]) < 1e-12:
        os._exit(3)
    time.sleep(options.get("sleep", 0.0))
    if "fail_above" in options and metrics["reach"] > options["fail_above"]:
        raise ValueError(f"reach {metrics['reach']:.3f} m is above {options['fail_above']} m")
    result = {"task": task, "base_dir_exists": Path(base_dir).is_dir(), "metrics": metrics,
              "series": [metrics["reach"] * k for k in range(3)]}  # fmt: skip
    return {"metrics": {**metrics, "task": task}, "result": result}


def bad_shape(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    """Breaks the contract: no 'result' key."""
    return {"metrics": {"x": 1.0}}


def odd_metric_names(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    """Metric names that need quoting in SQL."""
    return {"metrics": {'a"b': 1.0, "drop table cases; --": 2, "spaced name": "ok"}, "result": None}


def busy(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    """Spins the CPU for options['seconds'] of wall time (default 0.05 s)."""
    end = time.perf_counter() + options.get("seconds", 0.05)
    n = 0
    while time.perf_counter() < end:
        n += 1
    return {"metrics": {"loops": n}, "result": None}


def fixed_case(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    """:func:`leg_case` with its failure switch ignored (a case function after a bug fix)."""
    return leg_case(
        project, base_dir, task, {k: v for k, v in options.items() if k != "fail_above"}
    )
