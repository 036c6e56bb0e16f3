"""Why the chosen design won.

Binding requirements, per-joint runner-ups, infeasibility diagnosis.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Callable

import numpy as np

from ..margin_words import binding_labels
from ..problem import MINIMIZED, checks, feasible
from ..project import STANDARD_GRAVITY, JointLimits, Requirements
from .model import unit_options, units_in_joint_order
from .result import Alternative, Diagnosis, SolveOutcome

#: the exact value search a re-solve runs: (project, kind, *, table, time_limit) -> outcome
Resolve = Callable[..., SolveOutcome]

#: runner-up motors listed per joint
MOTORS_SHOWN = 3
#: seconds allowed to each re-solve of the diagnosis, and to the whole diagnosis
DIAGNOSIS_SECONDS = 20.0
DIAGNOSIS_BUDGET = 90.0


def binding(assessment, count: int = 3) -> tuple[str, ...]:
    """Labels of the requirements with the smallest margins (the ones that decide the design), a
    region of poses once by its worst pose: "trot: rating use max (margin +1.8 %)"."""
    return tuple(binding_labels(assessment.checks, assessment.regions or {}, count))


def _stack_kind(a) -> str:
    return " + ".join(s.stage.name for s in a.stages) or "direct drive"


#: designs per oracle call while screening runner-ups
SCREEN_CHUNK = 4096


def _units(model) -> list[tuple]:
    """Decision units in joint order: a shared group is changed as a whole."""
    return units_in_joint_order(model.n, model.shared)


def _evaluate(model, full_idx: np.ndarray, costly: bool):
    """(feasible, objective, margins (R, D), checks) of designs ``full_idx``; ``costly=False``
    leaves duty and stance cases out (a screen whose objective bounds the full one from above)."""
    project = model.project if costly else model.static_project
    ev_ = model.evaluator if costly else model.static_evaluator
    arrays = model.table.arrays(full_idx)
    ev = ev_.evaluate(arrays, detail=False)
    cl = checks(project, arrays, ev)
    D = full_idx.shape[0]
    ok = feasible(cl, D)
    s = model.score_arrays(arrays, full_idx, full=costly, evaluation=ev)
    margins = np.stack([c.margin for c in cl]) if cl else np.zeros((0, D))
    return ok & s.feasible, s.objective, margins, cl


def alternatives(
    project, model, index: np.ndarray, value: float, deadline=None
) -> tuple[Alternative, ...]:
    """Per joint, or per shared group changed as a whole, the best design with it given another
    motor or another stage type, the rest of the design kept.

    The runner-ups are drawn from the unit's candidates (every option that can belong to a
    feasible design: the others provably miss a requirement). Candidates are screened in batches
    without the costly duty and stance cases; the leading ones are then checked in full. A motor
    or stage type with no candidate is shown with the requirement that rules out its best
    option. Stops at ``deadline`` (a ``time.perf_counter()`` value), keeping the units done.
    """
    import time

    table = model.table
    out = []
    sense = -1.0 if model.kind in MINIMIZED else 1.0
    costly = bool(model.duty or model.stance)
    names = project.robot.actuated
    for unit in _units(model):
        if deadline is not None and time.perf_counter() > deadline:
            break
        label = ", ".join(names[j] for j in unit)
        ulist = list(unit)
        chosen = table.actuators[int(index[unit[0]])]
        cand = unit_options(model.candidates, unit)
        cand = cand[cand != index[unit[0]]]
        # screen every candidate (static cases), in chunks
        scr_ok, scr_f = np.zeros(cand.size, bool), np.full(cand.size, -np.inf)
        for a in range(0, cand.size, SCREEN_CHUNK):
            part = cand[a : a + SCREEN_CHUNK]
            full = np.broadcast_to(index, (part.size, model.n)).copy()
            full[:, ulist] = part[:, None]
            ok, f, _m, _cl = _evaluate(model, full, False)
            scr_ok[a : a + part.size], scr_f[a : a + part.size] = ok, f
            if deadline is not None and time.perf_counter() > deadline:
                break
        groups: dict[tuple[str, str], list[int]] = {}
        for pos, o in enumerate(cand):
            a_ = table.actuators[int(o)]
            if a_.motor.name != chosen.motor.name:
                groups.setdefault(("other motor", a_.motor.name), []).append(pos)
            if _stack_kind(a_) != _stack_kind(chosen):
                groups.setdefault(("other stage type", _stack_kind(a_)), []).append(pos)
        # groups whose options all left the candidates: represented by their options in the table
        missing: dict[tuple[str, str], list[int]] = {}
        for o, a_ in enumerate(table.actuators):
            keys = []
            if a_.motor.name != chosen.motor.name:
                keys.append(("other motor", a_.motor.name))
            if _stack_kind(a_) != _stack_kind(chosen):
                keys.append(("other stage type", _stack_kind(a_)))
            for key in keys:
                if key not in groups:
                    missing.setdefault(key, []).append(o)
        picks: dict[str, list[tuple[tuple[str, str], int, float | None, str | None]]] = {}
        for change in ("other motor", "other stage type"):
            rows = []
            for key, members in groups.items():
                if key[0] != change:
                    continue
                at = np.array(members)
                good = at[scr_ok[at]]
                if good.size:
                    good = good[np.lexsort((cand[good], -scr_f[good]))]
                    rows.append((key, good))
            rows.sort(key=lambda r: (-scr_f[r[1][0]], int(cand[r[1][0]])))
            want = MOTORS_SHOWN if change == "other motor" else len(rows)
            found: list[tuple[tuple[str, str], int, float | None, str | None]] = []
            for key, good in rows:
                if len(found) >= want or (deadline is not None and time.perf_counter() > deadline):
                    break
                for pos in good[:3]:
                    o = int(cand[pos])
                    if not costly:
                        found.append((key, o, float(scr_f[pos]), None))
                        break
                    full = np.array(index)[None, :].copy()
                    full[:, ulist] = o
                    ok, f, margins, cl = _evaluate(model, full, True)
                    if ok[0]:
                        found.append((key, o, float(f[0]), None))
                        break
                else:
                    o = int(cand[good[0]])
                    full = np.array(index)[None, :].copy()
                    full[:, ulist] = o
                    ok, f, margins, cl = _evaluate(model, full, True)
                    worst = int(margins[:, 0].argmin()) if cl else None
                    found.append((key, o, None, cl[worst].label() if worst is not None else None))
            picks[change] = found
        # ruled-out motors / stage types: the option with the best worst margin in each group
        shown_motor = len([p for p in picks["other motor"] if p[2] is not None])
        for key, opts in sorted(missing.items()):
            change = key[0]
            if (
                change == "other motor"
                and shown_motor + len([p for p in picks[change] if p[2] is None]) >= MOTORS_SHOWN
            ):
                continue
            if deadline is not None and time.perf_counter() > deadline:
                break
            first = np.array(opts[:64])
            full = np.broadcast_to(index, (first.size, model.n)).copy()
            full[:, ulist] = first[:, None]
            ok, f, margins, cl = _evaluate(model, full, False)
            if cl:
                o_pos = int(margins.min(axis=0).argmax())
                why = cl[int(margins[:, o_pos].argmin())].label()
                if margins[:, o_pos].min() >= -1e-12 and costly:  # it misses a duty or stance case
                    _ok, _f, m_full, cl_full = _evaluate(model, full[o_pos : o_pos + 1], True)
                    why = cl_full[int(m_full[:, 0].argmin())].label() if cl_full else None
            else:
                o_pos, why = 0, None
            picks[change].append((key, int(first[o_pos]), None, why))
        # an option that is the best of another motor and of another stage type at once is
        # shown once, as the stage type's (it changes the stack too)
        by_stage = {p[1] for p in picks["other stage type"]}
        picks["other motor"] = [p for p in picks["other motor"] if p[1] not in by_stage]
        for change in ("other motor", "other stage type"):
            picked = picks[change]
            picked.sort(key=lambda p: (p[2] is None, -(p[2] or 0.0), p[1]))
            for _key, o, fo, why in picked[
                : MOTORS_SHOWN if change == "other motor" else len(picked)
            ]:
                dmass = len(unit) * float(model.mass[o] - model.mass[int(index[unit[0]])])
                out.append(
                    Alternative(
                        label,
                        table.actuators[o].label(),
                        change,
                        None if fo is None else sense * fo,
                        None if fo is None else (value - fo),
                        why,
                        dmass,
                    )
                )
    return tuple(out)


def requirement_list(project) -> list[tuple[str, str, float]]:
    """(subject, key, limit) of every requirement the project sets."""
    out = []
    for c in project.cases:
        for key, limit in c.limits.items():
            out.append((c.name, key, limit))
    req = project.requirements
    if math.isfinite(req.total_mass_max):
        out.append(("robot", "total_mass_max", req.total_mass_max))
    if math.isfinite(req.total_cost_max):
        out.append(("robot", "total_cost_max", req.total_cost_max))
    if req.life_min > 0:
        out.append(("robot", "life_min", req.life_min))
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
        req = dataclasses.replace(
            project.requirements, **{key: 0.0 if key == "life_min" else math.inf}
        )
        return dataclasses.replace(project, requirements=req)
    if subject in project.requirements.joints:
        joints = dict(project.requirements.joints)
        joints[subject] = dataclasses.replace(joints[subject], **{key: getattr(JointLimits(), key)})
        if key in [f.name for f in dataclasses.fields(JointLimits)]:
            req = dataclasses.replace(project.requirements, joints=joints)
            return dataclasses.replace(project, requirements=req)
    cases = tuple(
        dataclasses.replace(c, limits={k: v for k, v in c.limits.items() if k != key})
        if c.name == subject
        else c
        for c in project.cases
    )
    return dataclasses.replace(project, cases=cases)


def _alone(project, model, subject, key, limit, seconds, solve_value: Resolve):
    """(best value of one requirement over all options, ignoring every other requirement;
    whether a design reaches it: False when it is only an upper bound)."""
    r = model.table.rows
    if subject == "robot" and key == "life_min":
        return math.nan, True  # coupled through every actuator's mass: see the relaxation column
    if subject == "robot":
        lightest = float(r["mass" if key == "total_mass_max" else "cost"].min())
        return sum(lightest for _ in range(model.n)), True
    if key in [f.name for f in dataclasses.fields(JointLimits)]:
        values = {
            "mass_max": r["mass"],
            "reflected_inertia_max": model.reflected,
            "diameter_max": r["diameter"],
            "length_max": r["length"],
            "ratio_min": r["ratio"],
            "ratio_max": r["ratio"],
        }[key]
        return float(values.max() if key == "ratio_min" else values.min()), True
    case = project.case(subject)
    if key == "payload_min":
        bare = dataclasses.replace(
            project,
            cases=(dataclasses.replace(case, limits={}),),
            requirements=Requirements(),
            objective={},
        )
        if seconds <= 0:
            return math.nan, True
        one = dataclasses.replace(
            bare, cases=(dataclasses.replace(case, limits={}, fixed_load=0.0, payload_share=1.0),)
        )
        res = solve_value(one, "payload", table=model.table, time_limit=seconds)
        # kg carried with share 1, no fixed load -> N; a stopped search's bound is no design's
        return res.bound * STANDARD_GRAVITY, res.status == "optimal"
    if key == "backdrive_force_max":
        absa = next(a for a, _f in model.backdrive)
        with np.errstate(divide="ignore"):
            return float(np.min(np.where(absa > 0, model.breakaway.min() / absa, np.inf))), True
    if key == "speed_min":
        pc = next(p for p in model.evaluator.cases if p.case.name == subject)
        a = np.abs(np.linalg.pinv(pc.Jj) @ (pc.u / np.linalg.norm(pc.u)))
        best = float((r["motor_max_speed"] / r["ratio"]).max())
        with np.errstate(divide="ignore"):
            bound = float(np.min(np.where(a > 0, best / a, np.inf)))
        # the no-load speed bounds the loaded one from above: shown only when even it falls
        # short (a proof that no design meets the limit), never as a speed a design reaches
        return (bound, False) if bound < limit else (math.nan, True)
    if key in ("imf_min", "effective_mass_max") and case.kind == "impact" and seconds > 0:
        # the measure itself as the objective over every option, with no other requirement: its
        # optimum, or the search's proven bound when the time runs out (never short of the best)
        metric = key.removesuffix("_min").removesuffix("_max")
        bare = dataclasses.replace(
            project,
            cases=(dataclasses.replace(case, limits={}),),
            requirements=Requirements(),
            objective={},
        )
        res = solve_value(bare, f"{metric}@{subject}", table=model.table, time_limit=seconds)
        reached = res.status == "optimal"
        value = res.objective if reached else res.bound
        if not math.isfinite(value):
            return math.nan, True
        # the search maximizes −m for the effective mass
        return (float(value) if metric == "imf" else -float(value)), reached
    return (
        math.nan,
        True,
    )  # no closed form (directional IMF, shock, life, duty rating use): see the relaxation column


def diagnose(
    project, model, kind: str, time_limit, *, resolve: Resolve, deadline=None
) -> tuple[Diagnosis, ...]:
    """Per requirement: best achievable alone, shortfall, and the optimum with it dropped.

    ``resolve(project, kind, table=..., time_limit=...)`` is the exact value search the
    re-solves use (the sizing layer passes its own; this module does not import it back).

    Re-solves share one option table and a total budget (ending at ``deadline`` when the run
    has a time limit); a re-solve that runs out of time
    reports its proven bound (``relaxed_proven`` False), one that gets no time reports nothing.
    """
    import time

    solve_value = resolve
    reqs = requirement_list(project)
    budget_end = time.perf_counter() + min(DIAGNOSIS_BUDGET, 4 * (time_limit or DIAGNOSIS_BUDGET))
    if deadline is not None and time_limit is not None:  # a time limit bounds the whole run
        budget_end = min(budget_end, deadline)
    sense_ = -1.0 if kind in MINIMIZED else 1.0
    sense = {
        "payload_min": "min",
        "imf_min": "min",
        "directional_imf_min": "min",
        "speed_min": "min",
        "ratio_min": "min",
        "life_min": "min",
    }
    out = []
    for i, (subject, key, limit) in enumerate(reqs):
        share = (budget_end - time.perf_counter()) / (2 * (len(reqs) - i))
        seconds = min(DIAGNOSIS_SECONDS, max(share, 0.0))
        best, reached = _alone(project, model, subject, key, limit, seconds, resolve)
        scale = abs(limit) if limit else 1.0
        if math.isnan(best):
            short = math.nan
        elif sense.get(key) == "min":
            short = (limit - best) / scale
        else:
            short = (best - limit) / scale
        seconds = min(
            DIAGNOSIS_SECONDS,
            max((budget_end - time.perf_counter()) / (2 * (len(reqs) - i) - 1), 0.0),
        )
        rel, proven = None, False
        if seconds > 0:
            res = solve_value(
                relax(project, subject, key), kind, table=model.table, time_limit=seconds
            )
            proven = res.status in ("optimal", "infeasible")
            if res.index is not None:
                rel = sense_ * (res.objective if proven else res.bound)
        out.append(
            Diagnosis(
                f"{subject}: {key.replace('_', ' ')}", limit, best, short, rel, proven, reached
            )
        )
    return tuple(out)
