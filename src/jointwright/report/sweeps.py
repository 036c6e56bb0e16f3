"""Re-evaluations of one design with one assumption moved: gear ratio per joint, efficiencies.

Both go through :class:`jointwright.evaluate.Evaluator` on :class:`DesignArrays` with one field
changed, so they use exactly the physics of the assessment. Everything else of the actuator
(motor, stage masses and their own inertias, gear torque limits, efficiencies) is held at the
design's values, including where the catalog would not offer the varied ratio: the sweep shows
the trend, not an available product.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace

import numpy as np

from ..design import DesignArrays
from ..problem import payload_cases, payload_mass

#: ratio multipliers of the sweep (log-spaced, includes 1)
RATIO_FACTORS = np.geomspace(0.25, 4.0, 25)

#: efficiency change of the sensitivity study, absolute (5 percentage points)
EFFICIENCY_STEP = 0.05


def repeat(arrays: DesignArrays, count: int) -> DesignArrays:
    """``count`` copies of the first design of ``arrays``."""
    return DesignArrays(
        **{f.name: np.repeat(getattr(arrays, f.name)[:1], count, axis=0) for f in fields(arrays)}
    )


def impact_metric(project, evaluator) -> dict[str, tuple[str, str, str]]:
    """Per impact case: (metric key, short name, unit).

    Back-driven IMF for a floating base, back-driven effective mass for a fixed one (where the
    floating-base IMF is identically 1).
    """
    out = {}
    for c in project.cases:
        if c.kind != "impact":
            continue
        if evaluator.floating:
            out[c.name] = ("imf", "IMF", "")
        else:
            out[c.name] = ("effective_mass", "effective mass", "kg")
    return out


def _summaries(project, evaluator, arrays) -> dict[str, np.ndarray]:
    """The payload mass every case carries (kg, the sizing's payload objective:
    :func:`~jointwright.problem.payload_mass`), each case's payload force ("payload:<case>",
    N) and each impact metric, per design."""
    ev = evaluator.evaluate(arrays, detail=False)
    out = {}
    names = payload_cases(project)
    if names:
        each = [np.asarray(ev[n]["payload"], dtype=float) for n in names]
        out["payload"] = np.asarray(payload_mass(project, ev), dtype=float)
        out.update({f"payload:{n}": v for n, v in zip(names, each, strict=True)})
    for case, (key, _label, _unit) in impact_metric(project, evaluator).items():
        out[case] = np.asarray(ev[case][key], dtype=float)
    return out


@dataclass(frozen=True)
class RatioSweep:
    """Metrics against each joint's ratio, the other joints held.

    ``values[metric]`` is (units, len(factors)); metric "payload" is the payload mass every
    case carries (kg), the others are impact case names (their metric from
    :func:`impact_metric`). A unit is a joint, or a group of joints that share one actuator
    (``[objective] shared``), varied together and labelled by its first joint and the count of
    the others ("fl_knee (+3 shared)").
    """

    joints: tuple[str, ...]  # unit labels
    design_ratio: np.ndarray  # (units,), the unit's first joint's
    factors: np.ndarray
    values: dict


def sweep_units(project) -> list[tuple[int, ...]]:
    """The joints varied together: each shared group (``[objective] shared``) once, at its first
    joint's place, every other joint alone; in the robot's joint order."""
    from ..objective import read_objective
    from ..solve.model import units_in_joint_order

    joints = list(project.robot.actuated)
    groups = [tuple(joints.index(j) for j in g) for g in read_objective(project)["shared"]]
    return units_in_joint_order(len(joints), groups)


def ratio_sweep(project, evaluator, arrays, factors=RATIO_FACTORS) -> RatioSweep:
    """Vary one unit's total ratio N → k·N at a time (k in ``factors``: every joint of a shared
    group together) and re-evaluate.

    Parameters
    ----------
    arrays : DesignArrays of one design
    factors : 1-D array of positive multipliers
    """
    factors = np.asarray(factors, dtype=float)
    units = sweep_units(project)
    n, K = len(units), factors.size
    many = repeat(arrays, n * K)
    ratio = many.ratio.copy()
    for k, unit in enumerate(units):
        ratio[k * K : (k + 1) * K, list(unit)] *= factors[:, None]
    values = _summaries(project, evaluator, replace(many, ratio=ratio))
    names = list(project.robot.actuated)
    return RatioSweep(
        joints=tuple(
            names[u[0]] + (f" (+{len(u) - 1} shared)" if len(u) > 1 else "") for u in units
        ),
        design_ratio=arrays.ratio[0, [u[0] for u in units]].copy(),
        factors=factors,
        values={k: v.reshape(n, K) for k, v in values.items()},
    )


@dataclass(frozen=True)
class Sensitivity:
    """Metrics with one joint's forward or backward efficiency moved by ±step.

    ``base[metric]`` is the design's value; ``values[metric]`` is (n_joints, 2 fields, 2 signs)
    with fields (η_f, η_b) and signs (−step, +step); ``clipped`` (same shape) marks a change
    limited by the bounds η_f ∈ [0.01, 1], η_b ≤ 1; ``locking_changed`` marks a joint whose
    self-locking flag the change flips.
    """

    joints: tuple[str, ...]
    step: float
    base: dict
    values: dict
    clipped: np.ndarray
    locking_changed: np.ndarray


def efficiency_sensitivity(
    project, evaluator, arrays, step: float = EFFICIENCY_STEP
) -> Sensitivity:
    """Re-evaluate with η_f,j or η_b,j changed by ±``step`` (absolute), one at a time.

    η_f stays in [0.01, 1]; η_b at most 1 and the self-locking flag follows η_b ≤ 0. A joint
    without a gear (a direct drive) keeps its efficiencies of 1: there is nothing to move.
    """
    n = arrays.ratio.shape[1]
    many = repeat(arrays, 4 * n + 1)
    ef, eb = many.eta_forward.copy(), many.eta_backward.copy()
    clipped = np.zeros((n, 2, 2), dtype=bool)
    gearless = ~np.isfinite(np.asarray(arrays.gear_peak_torque)[0])
    for j in range(n):
        if gearless[j]:  # a direct drive: no gear, no efficiency to move (its rows = the design)
            continue
        for f, target in enumerate((ef, eb)):
            for s, sign in enumerate((-1.0, 1.0)):
                row = 1 + 4 * j + 2 * f + s
                want = target[row, j] + sign * step
                low = 0.01 if f == 0 else -np.inf
                target[row, j] = float(np.clip(want, low, 1.0))
                clipped[j, f, s] = not np.isclose(target[row, j], want)
    locking = eb <= 0.0
    # an efficiency band moves with its nominal value (a robust project reads the band's ends)
    df, db = ef - many.eta_forward, eb - many.eta_backward
    moved = replace(
        many,
        eta_forward=ef,
        eta_backward=eb,
        self_locking=locking,
        eta_forward_low=np.clip(many.eta_forward_low + df, 0.01, 1.0),
        eta_forward_high=np.clip(many.eta_forward_high + df, 0.01, 1.0),
        eta_backward_low=np.minimum(many.eta_backward_low + db, 1.0),
        eta_backward_high=np.minimum(many.eta_backward_high + db, 1.0),
    )
    values = _summaries(project, evaluator, moved)
    changed = (locking != arrays.self_locking[:1])[1:].any(axis=1).reshape(n, 2, 2)
    return Sensitivity(
        joints=tuple(project.robot.actuated),
        step=step,
        base={k: float(v[0]) for k, v in values.items()},
        values={k: v[1:].reshape(n, 2, 2) for k, v in values.items()},
        clipped=clipped,
        locking_changed=changed,
    )
