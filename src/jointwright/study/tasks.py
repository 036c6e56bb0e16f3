"""The default study case function: one sizing or frontier run of a project variant.

Called by the runner in a worker process as ``run_case(project, base_dir, task, options)``;
``project`` is the base project's TOML as a dict with the case's values set. The project is
validated like any project file (a bad value fails the case with its one-line message).

options (all optional): ``objective`` (payload / mass / imf), ``backend`` (search / pyomo),
``time_limit`` (s per case), ``measure`` and ``points`` for frontier tasks.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError

TASKS = ("size", "frontier")
_OPTIONS = {"objective", "backend", "time_limit", "measure", "points", "case"}


def run_case(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    from ..project import project_from_dict

    unknown = sorted(set(options) - _OPTIONS)
    if unknown:
        raise InputError("study", f"options.{unknown[0]}", f"unknown option; known: {', '.join(sorted(_OPTIONS))}")
    if task not in TASKS:
        raise InputError("study", "task", f"must be one of {', '.join(TASKS)}, got {task!r}")
    p = project_from_dict(project, Path(base_dir) / "project (study case).toml")
    if task == "size":
        return _size(p, options)
    return _frontier(p, options)


def _size(p, options: dict) -> dict:
    from ..sizing import size

    r = size(p, objective=options.get("objective"), backend=options.get("backend", "search"),
             time_limit=options.get("time_limit"), explain=False)
    metrics = {"sizing_status": r.status, "objective": r.objective, "bound": r.bound, "gap": r.gap,
               "seconds": r.seconds}
    if r.assessment is not None:
        a = r.assessment
        metrics["total_mass"] = a.total_mass
        for c in a.cases:
            for key in ("payload", "imf", "effective_mass", "speed", "backdrive_force", "rating_use"):
                if key in c.metrics:
                    metrics[f"{c.name}:{key}"] = c.metrics[key]
        for j in a.joints:
            metrics[f"{j.joint}:actuator"] = j.actuator
            metrics[f"{j.joint}:ratio"] = j.ratio
        metrics["binding"] = ", ".join(r.binding)
    return {"metrics": metrics, "result": r.to_dict()}


def _frontier(p, options: dict) -> dict:
    from ..frontier import frontier

    f = frontier(p, options.get("measure", "imf"), case=options.get("case"),
                 points=int(options.get("points", 50)), time_limit=options.get("time_limit"),
                 backend=options.get("backend", "search"))
    metrics = {"points": len(f.points), "complete": int(f.complete), "seconds": f.seconds}
    if f.points:
        metrics["payload_max"] = f.points[0].payload
        metrics["measure_at_max_payload"] = f.points[0].measure
        if f.knee is not None:
            metrics["knee_payload"] = f.points[f.knee].payload
            metrics["knee_measure"] = f.points[f.knee].measure
    return {"metrics": metrics, "result": f.to_dict()}
