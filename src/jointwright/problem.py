"""Requirements -> checks with margins, and the objective, for batches of designs.

A check compares an achieved value with a limit: ``sense = "min"`` means achieved ≥ limit,
``"max"`` achieved ≤ limit. Its margin is relative, (achieved − limit)/|limit| for "min" and
(limit − achieved)/|limit| for "max", so a design meets a requirement exactly when the margin is
≥ 0. Margins are what the optimizer constrains and what reports show.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .metrics.gear_life import miner_life
from .project import CASE_LIMITS, STANDARD_GRAVITY, life_shares

#: achieved value per case-limit key: (metric name in the evaluation, unit shown)
_CASE_METRIC = {
    "payload_min": ("payload", "N"),
    "imf_min": ("imf", ""),
    "directional_imf_min": ("imf_direction", ""),
    "effective_mass_max": ("effective_mass", "kg"),
    "backdrive_force_max": ("backdrive_force", "N"),
    "speed_min": ("speed", "m/s"),
    "acceleration_min": ("acceleration", "m/s²"),
    "contact_speed_min": ("contact_speed", "m/s"),
    "rating_use_max": ("rating_use", ""),
    "shock_use_max": ("shock_use", ""),
    "torque_ratio_min": ("torque_ratio", ""),
}

OBJECTIVES = ("payload", "mass", "imf", "cost", "margin")
#: objectives that minimize a total: the value maximized is minus the total
MINIMIZED = ("mass", "cost")


@dataclass(frozen=True)
class Check:
    """One requirement evaluated over D designs."""

    name: str  # e.g. "payload_min", "joint mass_max"
    subject: str  # case or joint name, or "robot"
    achieved: np.ndarray  # (D,)
    limit: float
    sense: str  # "min" or "max"
    unit: str | None

    @property
    def margin(self) -> np.ndarray:
        a = np.asarray(self.achieved, dtype=float)
        scale = abs(self.limit) if self.limit != 0 else 1.0
        with np.errstate(invalid="ignore"):
            m = (a - self.limit) / scale if self.sense == "min" else (self.limit - a) / scale
        # inf − inf and the like: a self-locking holding capacity meets any "min" limit
        return np.where(np.isnan(m), -np.inf, m)

    @property
    def ok(self) -> np.ndarray:
        return self.margin >= -1e-12

    def label(self) -> str:
        return f"{self.subject}: {self.name.replace('_', ' ')}"


def checks(project, arrays, evaluation) -> list[Check]:
    """Every requirement of the project as a :class:`Check` over the designs in ``arrays``."""
    out = []
    for case in project.cases:
        ev = evaluation[case.name]
        for key, limit in case.limits.items():
            metric, unit = _CASE_METRIC.get(key, (None, None))
            if metric is None or metric not in ev:
                continue
            sense = CASE_LIMITS[case.kind][key][1]
            out.append(
                Check(key, case.name, np.asarray(ev[metric], dtype=float), limit, sense, unit)
            )
    req = project.requirements
    total = arrays.mass.sum(axis=1)
    if math.isfinite(req.total_mass_max):
        out.append(Check("total_mass_max", "robot", total, req.total_mass_max, "max", "kg"))
    if math.isfinite(req.total_cost_max):
        out.append(
            Check(
                "total_cost_max", "robot", arrays.cost.sum(axis=1), req.total_cost_max, "max", "-"
            )
        )
    refl = arrays.reflected_inertia("backdriven")
    if req.efficiency_band:  # largest at the low end of the backward band (robust.py)
        refl = arrays.at_band("low", "low").reflected_inertia("backdriven")
    for j, name in enumerate(project.robot.actuated):
        lim = req.joint(name)
        per = [
            ("mass_max", arrays.mass[:, j], lim.mass_max, "max", "kg"),
            ("reflected_inertia_max", refl[:, j], lim.reflected_inertia_max, "max", "kg·m²"),
            ("diameter_max", arrays.diameter[:, j], lim.diameter_max, "max", "m"),
            ("length_max", arrays.length[:, j], lim.length_max, "max", "m"),
            ("ratio_min", arrays.ratio[:, j], lim.ratio_min, "min", "-"),
            ("ratio_max", arrays.ratio[:, j], lim.ratio_max, "max", "-"),
        ]
        for key, achieved, limit, sense, unit in per:
            if (sense == "max" and math.isfinite(limit)) or (sense == "min" and limit > 0):
                out.append(Check(key, name, achieved, limit, sense, unit))
    out.extend(gear_life_checks(project, evaluation))
    return out


#: seconds per hour: gear lives are shown in hours
HOUR = 3600.0


def combined_gear_life(project, evaluation) -> np.ndarray | None:
    """Each joint's gear life (s) over the counted duty cycles by Miner's rule, (D, n); None
    when a counted cycle is not in ``evaluation`` (a screen without the duty cases)."""
    shares = life_shares(project)
    if not shares or any(name not in evaluation for name, _ in shares):
        return None
    lives = [np.asarray(evaluation[name]["gear_life"], dtype=float) for name, _ in shares]
    return miner_life(lives, [s for _, s in shares])


def gear_life_checks(project, evaluation) -> list[Check]:
    """``life_min``: per joint, the combined gear life (h) against the requirement, and every
    counted cycle's peak joint torque against the repeated-peak rating (use ≤ 1)."""
    limit = project.requirements.life_min
    life = combined_gear_life(project, evaluation) if limit > 0 else None
    if life is None:
        return []
    names = [n for n, _ in life_shares(project)]
    peak = np.max([np.asarray(evaluation[n]["gear_peak_use"], dtype=float) for n in names], axis=0)
    out = []
    for j, joint in enumerate(project.robot.actuated):
        out.append(Check("life_min", joint, life[:, j] / HOUR, limit / HOUR, "min", "h"))
        out.append(Check("gear_peak_use_max", joint, peak[:, j], 1.0, "max", ""))
    return out


def feasible(check_list: list[Check], count: int) -> np.ndarray:
    ok = np.ones(count, dtype=bool)
    for c in check_list:
        ok &= c.ok
    return ok


def payload_cases(project) -> list[str]:
    return [c.name for c in project.cases if c.kind in ("payload", "stance")]


def carried_payload(case, force) -> np.ndarray:
    """The robot payload mass (kg) a case's achieved force carries.

    The case states required(m_p) = fixed_load + payload_share·m_p·g_n, so the force F carries
    m_p = (F − fixed_load)/(payload_share·g_n): increasing in F (the transform the optimizer
    applies to each case's payload bound). Negative when F does not even reach the fixed load;
    +inf for a case with payload_share = 0 (its load does not grow with the payload, so it does
    not limit the payload mass; its payload_min still constrains).
    """
    f = np.asarray(force, dtype=float)
    if case.payload_share <= 0:
        return np.full(f.shape, np.inf)
    with np.errstate(invalid="ignore"):
        return (f - case.fixed_load) / (case.payload_share * STANDARD_GRAVITY)


def load_for_payload(case, mass) -> np.ndarray:
    """Force (N) the case must reach to carry a payload mass (kg): the inverse of
    :func:`carried_payload` (0 payload share: the fixed load)."""
    return case.fixed_load + case.payload_share * STANDARD_GRAVITY * np.asarray(mass, dtype=float)


def objective_case_names(project) -> set[str] | None:
    """The cases the objective reads (``[objective] cases``), region cases expanded to their
    poses; None when the field is absent (every case of the objective's kind)."""
    names = project.objective.get("cases") if isinstance(project.objective, dict) else None
    if names is None:
        return None
    chosen = set(names)
    return {c.name for c in project.cases if c.name in chosen or c.region in chosen}


def payload_objective_cases(project) -> list:
    """Payload and stance cases whose load grows with the payload (payload_share > 0), only the
    named ones when ``[objective] cases`` is given (the others stay constraints)."""
    names = objective_case_names(project)
    return [
        c
        for c in project.cases
        if c.kind in ("payload", "stance")
        and c.payload_share > 0
        and (names is None or c.name in names)
    ]


def margin_cases(project) -> list:
    """Cases of the normalized-margin objective: the named ones (``[objective] cases``), else
    every payload and stance case with a payload_min > 0."""
    names = objective_case_names(project)
    if names is None:
        return [
            c
            for c in project.cases
            if c.kind in ("payload", "stance") and c.limits.get("payload_min", 0.0) > 0
        ]
    return [c for c in project.cases if c.name in names]


def normalized_margin(case, evaluation) -> np.ndarray | None:
    """Achieved ÷ required over the case's requirements, the smallest, (D,): a "min" limit
    gives achieved/limit, a "max" limit limit/achieved (≥ 1 exactly when the requirement is
    met). None when the case has no requirement with a positive limit in ``evaluation``."""
    ev = evaluation.get(case.name)
    if ev is None:
        return None
    out = None
    for key, limit in case.limits.items():
        metric = _CASE_METRIC.get(key, (None, None))[0]
        if metric is None or metric not in ev or not limit > 0:
            continue
        a = np.asarray(ev[metric], dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            r = a / limit if CASE_LIMITS[case.kind][key][1] == "min" else limit / a
        r = np.where(np.isnan(r), -np.inf, r)
        out = r if out is None else np.minimum(out, r)
    return out


def smallest_margin(project, evaluation, count: int | None = None) -> np.ndarray:
    """The smallest normalized margin over :func:`margin_cases` (cases not evaluated, e.g. a
    screen without stance cases, are left out, which can only raise it), (D,); ``count``: D,
    needed when the evaluation holds no case (a screen of stance cases only)."""
    values = [
        v for c in margin_cases(project) if (v := normalized_margin(c, evaluation)) is not None
    ]
    if not values:
        return np.full(_count(evaluation, count), np.inf)
    return np.min(values, axis=0)


def _count(evaluation, count: int | None) -> int:
    """The number of designs: ``count`` when given, else read off the evaluation (1 when empty)."""
    if count is not None:
        return count
    d: dict = next(iter(evaluation.values()), {})
    return np.asarray(next(iter(d.values()))).shape[0] if d else 1


def objective_names(project, kind: str) -> set[str]:
    """Names of the payload and stance cases that set a payload or margin objective."""
    if kind == "margin":
        return {c.name for c in margin_cases(project) if c.limits.get("payload_min", 0.0) > 0}
    return {c.name for c in payload_objective_cases(project)}


def objective_transform(project, kind: str, case, names: set[str] | None = None):
    """The increasing map from a payload case's force (N) to its value in the objective, which
    is the minimum of these values over the cases (+inf: the case does not set it).

    payload: the payload mass it carries (:func:`carried_payload`); margin: force/payload_min.
    Any nondecreasing map keeps every bound of the optimizer valid (docs/optimizer.md).
    ``names``: :func:`objective_names`, when the caller has it (one set for many cases)."""
    names = objective_names(project, kind) if names is None else names
    if case.name in names:
        if kind == "margin":
            limit = case.limits["payload_min"]
            return lambda f: np.asarray(f, dtype=float) / limit
        return lambda f: carried_payload(case, f)
    return lambda f: np.full(np.shape(f), np.inf)


def force_for_objective(project, kind: str, case, value, names: set[str] | None = None):
    """The force (N) a payload case must reach for the objective value ``value`` (the inverse of
    :func:`objective_transform`), or None when the case does not set the objective."""
    names = objective_names(project, kind) if names is None else names
    if case.name not in names:
        return None
    if kind == "margin":
        return case.limits["payload_min"] * value
    return case.fixed_load + case.payload_share * STANDARD_GRAVITY * value


def payload_mass(project, evaluation, count: int | None = None) -> np.ndarray:
    """The payload mass every case carries (kg), (D,): min over the payload and stance cases of
    :func:`carried_payload` of each case's achieved force. Cases not in ``evaluation`` (a screen
    without the stance cases) are left out, which can only raise the value."""
    values = [
        carried_payload(c, evaluation[c.name]["payload"])
        for c in payload_objective_cases(project)
        if c.name in evaluation
    ]
    if not values:  # only stance cases set it and this is a screen without them: no bound yet
        return np.full(_count(evaluation, count), np.inf)
    return np.min(values, axis=0)


def objective(project, arrays, evaluation, kind: str = "payload") -> np.ndarray:
    """Objective values to maximize, (D,).

    payload: the payload mass every payload and stance case carries (kg, :func:`payload_mass`;
    the named cases only with ``[objective] cases``); mass: minus total actuator mass (kg);
    cost: minus total actuator cost (catalog currency); margin: the smallest normalized margin
    (achieved ÷ required) over :func:`margin_cases`; imf: the worst impact mitigation factor
    over the impact cases.
    """
    count = arrays.mass.shape[0]
    if kind == "payload":
        return payload_mass(project, evaluation, count)
    if kind == "mass":
        return -arrays.mass.sum(axis=1)
    if kind == "cost":
        return -arrays.cost.sum(axis=1)
    if kind == "margin":
        return smallest_margin(project, evaluation, count)
    if kind == "imf":
        names = [
            c.name for c in project.cases if c.kind == "impact" and "imf" in evaluation[c.name]
        ]
        return np.min([np.asarray(evaluation[n]["imf"], dtype=float) for n in names], axis=0)
    raise ValueError(f"unknown objective {kind!r}; expected one of {OBJECTIVES}")
