"""The sizing objective: the project file's ``[objective]`` table (what to maximize, pinned
and excluded parts, joints that share one actuator, the cases an objective reads), read and
checked, and whether the project has the cases an objective needs (docs/optimizer.md).
"""

from __future__ import annotations

from .errors import InputError, check_keys
from .problem import MINIMIZED, OBJECTIVES, margin_cases, payload_objective_cases

_OBJECTIVE_KEYS = ("maximize", "minimize", "pin", "exclude", "shared", "ratio_grid", "cases")


def read_objective(project) -> dict:
    """The project file's ``[objective]`` table, checked (fields: docs/optimizer.md).

    ``minimize = "mass"`` (or ``"cost"``) is the plain spelling of ``maximize = "mass"``: both
    ask for the lightest (cheapest) design; the result's ``maximize`` holds the objective kind.
    """
    raw, file = dict(project.objective), str(project.file)
    joints = list(project.robot.actuated)
    check_keys(raw, _OBJECTIVE_KEYS, file, "objective")
    if "minimize" in raw:
        if "maximize" in raw:
            raise InputError(file, "objective.minimize", "give maximize or minimize, not both")
        if raw["minimize"] not in MINIMIZED:
            raise InputError(
                file,
                "objective.minimize",
                f"must be one of {', '.join(sorted(MINIMIZED))} (the others are maximized: "
                f"maximize = ...), got {raw['minimize']!r}",
            )
    out = {
        "maximize": raw.get("minimize", raw.get("maximize", "payload")),
        "pin": raw.get("pin", {}),
        "exclude": raw.get("exclude", []),
        "shared": raw.get("shared", []),
    }
    if out["maximize"] not in OBJECTIVES:
        raise InputError(
            file,
            "objective.maximize",
            f"must be one of {', '.join(OBJECTIVES)}, got {out['maximize']!r}",
        )
    if raw.get("ratio_grid", "R20") != "R20":
        raise InputError(
            file, "objective.ratio_grid", "only the R20 preferred-number grid is offered"
        )
    check_pins(out["pin"], project, file, "objective.pin")
    if not isinstance(out["exclude"], list) or not all(isinstance(x, str) for x in out["exclude"]):
        raise InputError(file, "objective.exclude", "must be a list of motor, stage or frame names")
    check_shared(out["shared"], joints, file, "objective.shared")
    if "cases" in raw:
        # under the mass, cost or IMF objective they are read by the payload objective only (a
        # frontier's payload axis, ``size --objective payload``): checked as for it
        reads = out["maximize"] if out["maximize"] in ("payload", "margin") else "payload"
        out["cases"] = check_objective_cases(raw["cases"], project, reads, file)
    return out


def check_objective_cases(names, project, kind: str, file: str) -> list[str]:
    """``[objective] cases``: the cases that set a payload or margin objective (a region case by
    its own name); the other cases stay constraints."""
    field = "objective.cases"
    if not isinstance(names, list) or not names or not all(isinstance(n, str) for n in names):
        raise InputError(file, field, "must be a non-empty list of case names")
    known = {c.region or c.name: c for c in project.cases}
    for i, n in enumerate(names):
        c = known.get(n)
        if c is None:
            raise InputError(file, f"{field}[{i}]", f"unknown case {n!r}")
        if kind == "payload" and not (c.kind in ("payload", "stance") and c.payload_share > 0):
            raise InputError(
                file,
                f"{field}[{i}]",
                f"case {n!r} carries no payload (the payload objective reads payload and stance "
                "cases with payload_share > 0)",
            )
        if kind == "margin" and not any(v > 0 for v in c.limits.values()):
            raise InputError(
                file, f"{field}[{i}]", f"case {n!r} has no requirement with a positive limit"
            )
    return list(names)


def check_pins(pins, project, file: str, field: str) -> None:
    if not isinstance(pins, dict):
        raise InputError(file, field, "must be a table joint = {motor = ..., stages = [...]}")
    names = {m.name for m in project.catalog.all_motors()}
    for j, pin in pins.items():
        if j not in project.robot.actuated:
            raise InputError(
                file,
                f"{field}.{j}",
                f"unknown joint; actuated joints are {', '.join(project.robot.actuated)}",
            )
        if not isinstance(pin, dict) or not set(pin) <= {"motor", "stages"} or not pin:
            raise InputError(file, f"{field}.{j}", "must be a table with motor and/or stages")
        if "motor" in pin and pin["motor"] not in names:
            raise InputError(file, f"{field}.{j}.motor", f"unknown motor {pin['motor']!r}")
        if "stages" in pin and (
            not isinstance(pin["stages"], list)
            or not all(isinstance(s, dict) for s in pin["stages"])
        ):
            raise InputError(
                file, f"{field}.{j}.stages", "must be a list of {stage, frame, ratio} tables"
            )


def check_shared(shared, joints, file: str, field: str) -> None:
    if not isinstance(shared, (list, tuple)):
        raise InputError(file, field, "must be a list of lists of joint names")
    seen = set()
    for i, group in enumerate(shared):
        if not isinstance(group, (list, tuple)) or len(group) < 2:
            raise InputError(file, f"{field}[{i}]", "must list at least two joints")
        for j in group:
            if j not in joints:
                raise InputError(file, f"{field}[{i}]", f"unknown joint {j!r}")
            if j in seen:
                raise InputError(file, f"{field}[{i}]", f"joint {j!r} is in two shared groups")
            seen.add(j)


def check_gap(gap, file: str, field: str) -> None:
    """A relative optimality gap: a number with 0 ≤ gap < 1 (NaN and booleans refused)."""
    number = isinstance(gap, (int, float)) and not isinstance(gap, bool)
    if not (number and 0 <= gap < 1):
        raise InputError(file, field, f"must be at least 0 and below 1 (0 ≤ gap < 1), got {gap!r}")


def check_objective_kind(project, kind: str) -> None:
    """The project has the cases objective ``kind`` reads (a payload, margin or impact case),
    and ``[objective] cases``, when given, suits ``kind`` (a run's objective may differ from the
    project's: ``size --objective``)."""
    names = project.objective.get("cases") if isinstance(project.objective, dict) else None
    if names is not None and kind in ("payload", "margin"):
        check_objective_cases(names, project, kind, str(project.file))
    if kind == "payload" and not any(c.kind in ("payload", "stance") for c in project.cases):
        raise InputError(
            str(project.file), "case", "objective payload needs at least one payload or stance case"
        )
    if kind == "payload" and not payload_objective_cases(project):
        raise InputError(
            str(project.file),
            "case",
            "objective payload (the payload mass every case carries) "
            "needs a payload or stance case with payload_share > 0",
        )
    if kind == "margin" and not margin_cases(project):
        raise InputError(
            str(project.file),
            "case",
            "objective margin needs a payload or stance case with payload_min > 0, or "
            "[objective] cases naming cases with requirements",
        )
    if kind == "imf" and not (
        project.robot.n_base == 6 and any(c.kind == "impact" for c in project.cases)
    ):
        raise InputError(
            str(project.file),
            "objective.maximize",
            "objective imf needs a floating base and at least one impact case",
        )
