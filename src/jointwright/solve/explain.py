"""Why the chosen design won: binding requirements, per-joint runner-ups, infeasibility diagnosis."""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..problem import checks, feasible, objective
from ..project import STANDARD_GRAVITY, JointLimits, Requirements
from .result import Alternative, Diagnosis

#: runner-up motors listed per joint
MOTORS_SHOWN = 3
#: seconds allowed to each re-solve of the diagnosis, and to the whole diagnosis
DIAGNOSIS_SECONDS = 20.0
DIAGNOSIS_BUDGET = 90.0


def binding(assessment, count: int = 3) -> tuple[str, ...]:
    """Labels of the requirements with the smallest margins (the ones that decide the design)."""
    rows = sorted((c for c in assessment.checks if math.isfinite(c.margin)), key=lambda c: c.margin)
    return tuple(f"{c.subject}: {c.requirement.replace('_', ' ')} (margin {100 * c.margin:+.1f} %)"
                 for c in rows[:count])


def _stack_kind(a) -> str:
    return " + ".join(s.stage.name for s in a.stages) or "direct drive"


def alternatives(project, model, index: np.ndarray, value: float) -> tuple[Alternative, ...]:
    """Per joint, the best design with that joint changed to another motor or another stage type.

    Every option of the table is tried at the joint with the rest of the design kept; feasible
    ones are ranked by objective, the others report the requirement with the worst margin.
    """
    table = model.table
    out = []
    sense = -1.0 if model.kind == "mass" else 1.0
    for j, name in enumerate(project.robot.actuated):
        full = np.broadcast_to(index, (len(table), model.n)).copy()
        full[:, j] = np.arange(len(table))
        arrays = table.arrays(full)
        ev = model.evaluator.evaluate(arrays)
        cl = checks(project, arrays, ev)
        ok = feasible(cl, len(table))
        f = np.asarray(objective(project, arrays, ev, model.kind), dtype=float)
        margins = np.stack([c.margin for c in cl]) if cl else np.zeros((0, len(table)))
        worst = margins.argmin(axis=0) if cl else np.zeros(len(table), dtype=int)
        score = np.where(ok, f, -np.inf)
        dmass = arrays.mass.sum(axis=1) - arrays.mass.sum(axis=1)[int(index[j])]
        chosen = table.actuators[int(index[j])]
        groups = {}
        for o, a in enumerate(table.actuators):
            if a.motor.name != chosen.motor.name:
                groups.setdefault(("other motor", a.motor.name), []).append(o)
            if _stack_kind(a) != _stack_kind(chosen):
                groups.setdefault(("other stage type", _stack_kind(a)), []).append(o)
        picks = []
        for (change, _label), opts in groups.items():
            opts = np.array(opts)
            if np.isfinite(score[opts]).any():
                o = int(opts[np.argmax(score[opts])])
                picks.append((change, o, float(f[o]), None))
            else:
                best_margin = margins[:, opts].min(axis=0) if cl else np.zeros(opts.size)
                o = int(opts[np.argmax(best_margin)])
                picks.append((change, o, None, cl[worst[o]].label() if cl else None))
        for change in ("other motor", "other stage type"):
            rows = [p for p in picks if p[0] == change]
            rows.sort(key=lambda p: (p[2] is None, -(p[2] or 0.0), p[1]))
            for _c, o, fo, why in rows[: MOTORS_SHOWN if change == "other motor" else len(rows)]:
                out.append(Alternative(name, table.actuators[o].label(), change,
                                       None if fo is None else sense * fo,
                                       None if fo is None else (value - fo), why, float(dmass[o])))
    return tuple(out)


def requirement_list(project) -> list[tuple[str, str, float]]:
    """(subject, key, limit) of every requirement the project sets."""
    out = []
    for c in project.cases:
        for key, limit in c.limits.items():
            if c.kind != "duty":
                out.append((c.name, key, limit))
    req = project.requirements
    if math.isfinite(req.total_mass_max):
        out.append(("robot", "total_mass_max", req.total_mass_max))
    if math.isfinite(req.total_cost_max):
        out.append(("robot", "total_cost_max", req.total_cost_max))
    for j, lim in req.joints.items():
        for f in dataclasses.fields(JointLimits):
            v = getattr(lim, f.name)
            default = getattr(JointLimits(), f.name)
            if v != default:
                out.append((j, f.name, v))
    return out


def relax(project, subject: str, key: str):
    """The project with one requirement removed."""
    if subject == "robot":
        req = dataclasses.replace(project.requirements, **{key: math.inf})
        return dataclasses.replace(project, requirements=req)
    if subject in project.requirements.joints:
        joints = dict(project.requirements.joints)
        joints[subject] = dataclasses.replace(joints[subject], **{key: getattr(JointLimits(), key)})
        if key in [f.name for f in dataclasses.fields(JointLimits)]:
            req = dataclasses.replace(project.requirements, joints=joints)
            return dataclasses.replace(project, requirements=req)
    cases = tuple(dataclasses.replace(c, limits={k: v for k, v in c.limits.items() if k != key})
                  if c.name == subject else c for c in project.cases)
    return dataclasses.replace(project, cases=cases)


def _alone(project, model, subject, key, limit, seconds) -> float:
    """Best value of one requirement over all options, ignoring every other requirement."""
    from ..sizing import solve_value

    r = model.table.rows
    if subject == "robot":
        return sum(float(r["mass" if key == "total_mass_max" else "cost"].min()) for _ in range(model.n))
    if key in [f.name for f in dataclasses.fields(JointLimits)]:
        values = {"mass_max": r["mass"], "reflected_inertia_max": model.reflected,
                  "diameter_max": r["diameter"], "length_max": r["length"], "ratio_min": r["ratio"],
                  "ratio_max": r["ratio"]}[key]
        return float(values.max() if key == "ratio_min" else values.min())
    case = project.case(subject)
    if key == "payload_min":
        bare = dataclasses.replace(project, cases=(dataclasses.replace(case, limits={}),),
                                   requirements=Requirements(), objective={})
        if seconds <= 0:
            return math.nan
        one = dataclasses.replace(bare, cases=(dataclasses.replace(case, limits={}, fixed_load=0.0,
                                                                  payload_share=1.0),))
        res = solve_value(one, "payload", table=model.table, time_limit=seconds)
        return res.bound * STANDARD_GRAVITY  # kg carried with share 1, no fixed load -> N
    if key == "backdrive_force_max":
        absa = next(a for a, _f in model.backdrive)
        with np.errstate(divide="ignore"):
            return float(np.min(np.where(absa > 0, model.breakaway.min() / absa, np.inf)))
    if key == "speed_min":
        pc = next(p for p in model.evaluator.cases if p.case.name == subject)
        a = np.abs(np.linalg.pinv(pc.Jj) @ (pc.u / np.linalg.norm(pc.u)))
        best = float((r["motor_max_speed"] / r["ratio"]).max())
        with np.errstate(divide="ignore"):
            return float(np.min(np.where(a > 0, best / a, np.inf)))
    return math.nan  # impact measures: no closed form; see the relaxation column


def diagnose(project, model, kind: str, time_limit) -> tuple[Diagnosis, ...]:
    """Per requirement: best achievable alone, shortfall, and the optimum with it dropped.

    Re-solves share one option table and a total budget; a re-solve that runs out of time
    reports its proven bound (``relaxed_proven`` False), one that gets no time reports nothing.
    """
    import time

    from ..sizing import solve_value

    reqs = requirement_list(project)
    budget_end = time.perf_counter() + min(DIAGNOSIS_BUDGET, 4 * (time_limit or DIAGNOSIS_BUDGET))
    sense_ = -1.0 if kind == "mass" else 1.0
    sense = {"payload_min": "min", "imf_min": "min", "directional_imf_min": "min", "speed_min": "min",
             "ratio_min": "min"}
    out = []
    for i, (subject, key, limit) in enumerate(reqs):
        share = (budget_end - time.perf_counter()) / (2 * (len(reqs) - i))
        seconds = min(DIAGNOSIS_SECONDS, max(share, 0.0))
        best = _alone(project, model, subject, key, limit, seconds)
        scale = abs(limit) if limit else 1.0
        if math.isnan(best):
            short = math.nan
        elif sense.get(key) == "min":
            short = (limit - best) / scale
        else:
            short = (best - limit) / scale
        seconds = min(DIAGNOSIS_SECONDS, max((budget_end - time.perf_counter()) / (2 * (len(reqs) - i) - 1), 0.0))
        rel, proven = None, False
        if seconds > 0:
            res = solve_value(relax(project, subject, key), kind, table=model.table, time_limit=seconds)
            proven = res.status in ("optimal", "infeasible")
            if res.index is not None:
                rel = sense_ * (res.objective if proven else res.bound)
        out.append(Diagnosis(f"{subject}: {key.replace('_', ' ')}", limit, best, short, rel, proven))
    return tuple(out)
