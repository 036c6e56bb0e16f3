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

from .project import CASE_LIMITS, STANDARD_GRAVITY

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
    "torque_ratio_min": ("torque_ratio", ""),
}

OBJECTIVES = ("payload", "mass", "imf")


@dataclass(frozen=True)
class Check:
    """One requirement evaluated over D designs."""

    name: str  # e.g. "payload_min", "joint mass_max"
    subject: str  # case or joint name, or "robot"
    achieved: np.ndarray  # (D,)
    limit: float
    sense: str  # "min" or "max"
    unit: str

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


def payload_objective_cases(project) -> list:
    """Payload and stance cases whose load grows with the payload (payload_share > 0)."""
    return [c for c in project.cases if c.kind in ("payload", "stance") and c.payload_share > 0]


def payload_mass(project, evaluation) -> np.ndarray:
    """The payload mass every case carries (kg), (D,): min over the payload and stance cases of
    :func:`carried_payload` of each case's achieved force. Cases not in ``evaluation`` (a screen
    without the stance cases) are left out, which can only raise the value."""
    values = [
        carried_payload(c, evaluation[c.name]["payload"])
        for c in payload_objective_cases(project)
        if c.name in evaluation
    ]
    return np.min(values, axis=0)


def objective(project, arrays, evaluation, kind: str = "payload") -> np.ndarray:
    """Objective values to maximize, (D,).

    payload: the payload mass every payload and stance case carries (kg, :func:`payload_mass`);
    mass: minus total actuator mass (kg); imf: the worst impact mitigation factor over the
    impact cases.
    """
    if kind == "payload":
        return payload_mass(project, evaluation)
    if kind == "mass":
        return -arrays.mass.sum(axis=1)
    if kind == "imf":
        names = [
            c.name for c in project.cases if c.kind == "impact" and "imf" in evaluation[c.name]
        ]
        return np.min([np.asarray(evaluation[n]["imf"], dtype=float) for n in names], axis=0)
    raise ValueError(f"unknown objective {kind!r}; expected one of {OBJECTIVES}")
