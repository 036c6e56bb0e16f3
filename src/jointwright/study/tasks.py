"""The default study case function: one sizing or frontier run of a project variant.

Called by the runner in a worker process as ``run_case(project, base_dir, task, options)``;
``project`` is the base project's TOML as a dict with the case's values set. The project is
validated like any project file (a bad value fails the case with its one-line message).

options (all optional): ``objective`` (payload / margin / mass / cost / imf), ``backend``
(search / pyomo), ``time_limit`` (s per case), ``gap`` (the relative optimality gap of size
tasks, default 1e-4), ``measure`` and ``points`` for frontier tasks.
"""

from __future__ import annotations

import re
from pathlib import Path

from ..errors import InputError, unknown_name
from ..units import plain_number

TASKS = ("size", "frontier")
_OPTIONS = {"objective", "backend", "time_limit", "gap", "measure", "points", "case"}


_CHOICES = {
    "objective": ("payload", "margin", "mass", "cost", "imf"),
    "backend": ("search", "pyomo"),
    "measure": ("imf", "effective_mass", "backdrive_force"),
}


def check_options(options: dict, file: str, field: str) -> None:
    """Raise InputError for an option this case function does not know or a value it cannot use,
    naming the study file and ``<field>.<option>``; called before any case runs."""
    import math

    for key, value in options.items():
        where = f"{field}.{key}"
        if key not in _OPTIONS:
            raise unknown_name(file, where, key, sorted(_OPTIONS), "option")
        if key in _CHOICES:
            if value not in _CHOICES[key]:
                choices = ", ".join(_CHOICES[key])
                raise InputError(file, where, f"must be one of {choices}, got {value!r}")
        elif key == "time_limit":
            ok = isinstance(value, (int, float)) and not isinstance(value, bool)
            if not ok or abs(value) > 1e300 or not math.isfinite(value) or value <= 0:
                raise InputError(file, where, f"must be a number of seconds > 0, got {value!r}")
        elif key == "gap":
            from ..objective import check_gap

            check_gap(value, file, where)
        elif key == "points":
            if not isinstance(value, int) or isinstance(value, bool) or value < 1:
                raise InputError(file, where, f"must be a whole number >= 1, got {value!r}")
        elif key == "case" and not (isinstance(value, str) and value):
            raise InputError(file, where, f"must be a case name of the base project, got {value!r}")


def check_study_options(spec) -> None:
    """Check the options of a study (``[options]`` and each variant's) for :func:`run_case`."""
    check_options(spec.options, spec.file, "options")
    for i, v in enumerate(spec.variants):
        if v.options:
            check_options(v.options, spec.file, f"variant[{i}].options")


def check_study_values(spec) -> None:
    """Load the base project once per varied parameter, with that parameter's first value set:
    a unit the project cannot take there (``"3 m"`` for a mass), or a plain number where it
    needs the unit written (a life), is rejected before any case runs, naming the study file and
    the ``[[vary]]`` entry. (The values of one parameter share one dimension, so the first
    stands for all.) Other problems of that project are left to the cases, which record them."""
    for i, p in enumerate(spec.parameters):
        value = p.values[0]
        if plain_number(value):
            # a plain number where the project needs the unit written (a life: hours by habit)
            error = _load_error(spec, p.path, value)
            if error is not None and error.field == p.path and "needs its unit" in error.rule:
                raise InputError(
                    spec.file, f"vary[{i}].{p.source}", f"{value!r} for {p.path}: {error.rule}"
                )
            continue
        if not isinstance(value, str):
            continue
        error = _load_error(spec, p.path, value)
        if error is None or error.field != p.path:
            continue
        m = re.match(r"\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", value)
        # the number alone fits, so the unit is what the project cannot take there
        if m and _load_error(spec, p.path, _number(m.group().strip())) is None:
            raise InputError(
                spec.file, f"vary[{i}].{p.source}", f"{value!r} for {p.path}: {error.rule}"
            ) from None


def check_variants(spec) -> None:
    """Load each variant's first case (its settings and the first values of every ``[[vary]]``
    parameter): an error in one of the variant's own settings (a misspelt stage kind, a value
    the project refuses there) is reported before any case runs, naming the study file and the
    variant, not after every case of the variant has failed. Errors elsewhere, and errors the
    varied values cause, are left to the cases, which record them."""
    from ..project import project_from_dict
    from .spec import case_project, expand

    if not spec.variants:
        return
    first: dict = {}
    for case in expand(spec):
        first.setdefault(case.variant, case)
    for k, v in enumerate(spec.variants):
        found = first.get(v.name)
        if found is None or not v.assignments:
            continue
        try:
            project_from_dict(
                case_project(spec, found), spec.base_dir / "project (study case).toml"
            )
        except InputError as exc:
            for path, value in v.assignments:
                if exc.field == path or exc.field.startswith((path + ".", path + "[")):
                    raise InputError(
                        spec.file,
                        f"variant[{k}].set",
                        f"{path} = {value!r} ({v.name}): {exc.field}: {exc.rule}",
                    ) from None


def _number(text: str):
    try:
        return int(text)
    except ValueError:
        try:
            return float(text)
        except ValueError:
            return text


def _load_error(spec, path: str, value) -> InputError | None:
    """The error the project loader raises for the base project with ``path`` set to ``value``."""
    import copy

    from ..project import project_from_dict
    from .paths import set_path

    project = copy.deepcopy(spec.base_project)
    set_path(project, path, value)
    try:
        project_from_dict(project, spec.base_dir / "project (study case).toml")
    except InputError as exc:
        return exc
    return None


def run_case(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    from ..project import project_from_dict

    unknown = sorted(set(options) - _OPTIONS)
    if unknown:
        raise unknown_name("study", f"options.{unknown[0]}", unknown[0], sorted(_OPTIONS), "option")
    if task not in TASKS:
        raise InputError("study", "task", f"must be one of {', '.join(TASKS)}, got {task!r}")
    p = project_from_dict(project, Path(base_dir) / "project (study case).toml")
    if task == "size":
        return _size(p, options)
    return _frontier(p, options)


def _size(p, options: dict) -> dict:
    from ..sizing import size
    from ..solve.result import OPTIMALITY_GAP

    r = size(
        p,
        objective=options.get("objective"),
        backend=options.get("backend", "search"),
        time_limit=options.get("time_limit"),
        explain=False,
        gap=options.get("gap", OPTIMALITY_GAP),
    )
    metrics = {
        "sizing_status": r.status,
        "objective": r.objective,
        "bound": r.bound,
        "gap": r.gap,
        "seconds": r.seconds,
    }
    if r.status == "infeasible":  # why, as far as the search knows it without the diagnosis
        metrics["why"] = r.native_status
    if r.assessment is not None:
        a = r.assessment
        metrics["total_mass"] = a.total_mass
        for c in a.cases:
            for key in (
                "payload",
                "payload_carried",
                "torque_ratio",
                "imf",
                "effective_mass",
                "speed",
                "backdrive_force",
                "rating_use",
            ):
                if key in c.metrics:
                    metrics[f"{c.name}:{key}"] = c.metrics[key]
        for j in a.joints:
            metrics[f"{j.joint}:actuator"] = j.actuator
            metrics[f"{j.joint}:ratio"] = j.ratio
        metrics["binding"] = ", ".join(r.binding)
    return {"metrics": metrics, "result": r.to_dict()}


def _frontier(p, options: dict) -> dict:
    from ..frontier import frontier

    f = frontier(
        p,
        options.get("measure", "imf"),
        case=options.get("case"),
        points=int(options.get("points", 50)),
        time_limit=options.get("time_limit"),
        backend=options.get("backend", "search"),
    )
    metrics = {"points": len(f.points), "complete": int(f.complete), "seconds": f.seconds}
    if f.points:
        metrics["payload_max"] = f.points[0].payload
        metrics["measure_at_max_payload"] = f.points[0].measure
        if f.knee is not None:
            metrics["knee_payload"] = f.points[f.knee].payload
            metrics["knee_measure"] = f.points[f.knee].measure
    return {"metrics": metrics, "result": f.to_dict()}
