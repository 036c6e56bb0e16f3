"""Per-joint option generation: every motor × stage stack the optimizer may give a joint.

An *option* is one motor driving one stage stack (0 to ``project.max_stages`` stages, each a
stage type of an allowed kind, one of its frames and one of its ratios). Stage types with a
continuous ratio range are offered on the R20 preferred-number grid (ISO 3 [pub]) inside the
range; the winner is refined continuously afterwards (:mod:`jointwright.sizing`).

All options live in one :class:`OptionTable` (the same list for every joint); each joint then
keeps the indices that survive its own filters (:func:`joint_candidates`). Every filter here
depends on the joint's own option only, or is a bound that holds for every completion of the
design, so it never removes an option that belongs to a feasible design (proofs in
docs/optimizer.md).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, fields

import numpy as np

from .catalog.drives import drive_incompatibility
from .design import DesignArrays
from .drivetrain import Actuator, StageChoice
from .errors import InputError
from .option_rows import ActuatorList, option_rows, stack_parts
from .stack_dominance import stack_rules, undominated

#: ISO 3 Renard R20 basic series over one decade [pub]
R20 = (
    1.00,
    1.12,
    1.25,
    1.40,
    1.60,
    1.80,
    2.00,
    2.24,
    2.50,
    2.80,
    3.15,
    3.55,
    4.00,
    4.50,
    5.00,
    5.60,
    6.30,
    7.10,
    8.00,
    9.00,
)

#: largest number of options the table may hold (memory: a whole sizing run of the 3-joint leg
#: with 3-stage stacks, 1,147,959 options, peaked at 2.3 GB resident, docs/benchmarks.md)
MAX_OPTIONS = 2_000_000

#: largest number of stage stacks examined for dominance before the options are built (each
#: costs one Python row, about 20 µs, and a few hundred bytes)
MAX_STACKS = 200_000

#: filters never remove an option whose margin is above this (looser than the checks' −1e-12)
FILTER_SLACK = 1e-9


def preferred_ratios(low: float, high: float) -> tuple[float, ...]:
    """R20 preferred numbers in [low, high] (any decade); ``(low,)`` when none falls inside.

    Parameters
    ----------
    low, high : float, 0 < low ≤ high, dimensionless ratios
    """
    out = []
    decade = 10.0 ** math.floor(math.log10(low))
    while decade <= high:
        for r in R20:
            v = round(r * decade, 10)
            if low * (1 - 1e-12) <= v <= high * (1 + 1e-12):
                out.append(v)
        decade *= 10.0
    return tuple(out) or (low,)


@dataclass(frozen=True, eq=False)
class OptionTable:
    """All options, with their actuator properties as arrays of length O.

    Attributes
    ----------
    actuators : sequence of Actuator, length O (an :class:`ActuatorList`: made when indexed)
    motor : int array (O,), index into ``motors``
    motors : tuple of str, motor names in catalog order
    rows : dict of field name -> array (O,), the :class:`DesignArrays` fields (SI)
    """

    actuators: Sequence  # ActuatorList (made when indexed) or a tuple of Actuator
    motor: np.ndarray
    motors: tuple
    rows: dict

    def __len__(self) -> int:
        return len(self.actuators)

    def arrays(self, index: np.ndarray) -> DesignArrays:
        """DesignArrays for option indices ``index`` (D, n_joints)."""
        index = np.asarray(index, dtype=np.int64)
        return DesignArrays(**{f.name: self.rows[f.name][index] for f in fields(DesignArrays)})

    @property
    def reflected_backdriven(self) -> np.ndarray:
        r = self.rows
        refl = r["ratio"] ** 2 * r["rotor_inertia"]
        with np.errstate(divide="ignore"):
            return np.where(
                r["self_locking"],
                np.inf,
                refl / np.where(r["self_locking"], 1.0, r["eta_backward"]),
            )


def stage_choices(project) -> list[StageChoice]:
    """Every single stage (type of an allowed kind × frame × ratio), in catalog order."""
    kinds = project.stage_kinds
    out = []
    for st in project.catalog.stages:
        if kinds is not None and st.kind not in kinds:
            continue
        ratios = st.ratios if st.ratios is not None else preferred_ratios(*st.ratio_range)
        for fr in st.frames:
            for r in ratios:
                out.append(StageChoice(st, fr, float(r)))
    return out


def build_table(project, exclude=(), deadline=None, dominance=False) -> OptionTable:
    """Every motor × stack of 0..max_stages stages (order: motor, then stack length, then stages).

    Parameters
    ----------
    project : Project
    exclude : iterable of str
        Motor, stage-type or frame names never to use.
    deadline : float, optional
        A ``time.perf_counter()`` value; :class:`OutOfTime` is raised once it has passed.
    dominance : bool
        Drop the stacks another stack dominates for every requirement of the project
        (:mod:`jointwright.stack_dominance`). Off for callers that pin stage lists or need every
        option (the enumeration oracle).
    """
    banned = set(exclude)
    motors = [m for m in project.catalog.all_motors() if m.name not in banned]
    singles = [
        s
        for s in stage_choices(project)
        if s.stage.name not in banned and s.frame.name not in banned
    ]
    feeds = motor_drives(project, motors)
    if not any(feeds):
        _no_unit(project, motors)
    n_units = sum(len(f) for f in feeds)
    n_stacks = sum(len(singles) ** k for k in range(project.max_stages + 1))
    if n_units * n_stacks > MAX_OPTIONS and not dominance:
        _too_many(project, n_units * n_stacks)
    if n_stacks > MAX_STACKS:
        _too_many(project, n_units * n_stacks, f"{n_stacks} stage stacks exceed {MAX_STACKS}; ")
    stacks: list[tuple[StageChoice, ...]] = [()]
    for k in range(1, project.max_stages + 1):
        stacks.extend(tuple(x) for x in itertools.product(singles, repeat=k))
    parts = stack_parts(stacks, deadline, n_units * n_stacks)
    if dominance:
        kept = undominated(parts, stack_rules(project))
        stacks = [stacks[i] for i in kept]
        parts = {k: v[kept] for k, v in parts.items()}
        if n_units * len(stacks) > MAX_OPTIONS:
            _too_many(project, n_units * len(stacks), "after dominance: ")
    # a unit is a motor with one of the drives that may feed it (None: no drives in the project)
    units = [(m, drive) for i, m in enumerate(motors) for drive in feeds[i]]
    rows = option_rows(units, parts)
    unit_motor = [i for i, _m in enumerate(motors) for _drive in feeds[i]]
    motor_index = np.repeat(np.asarray(unit_motor, dtype=np.int64), len(stacks))
    return OptionTable(
        ActuatorList(tuple(units), tuple(stacks)),
        motor_index,
        tuple(m.name for m in motors),
        rows,
    )


def _no_unit(project, motors) -> None:
    if not motors:
        raise InputError(
            str(project.file),
            "objective.exclude",
            "no motor is left to size with: every motor of the catalog is excluded",
        )
    reasons = sorted(
        {
            str(drive_incompatibility(m, d))
            for m in motors
            for d in project.catalog.drives
            if drive_incompatibility(m, d) is not None
        }
    )
    raise InputError(
        str(project.file),
        "drives",
        "no drive the joints may use can feed any motor of the catalog"
        + (f" ({reasons[0]})" if reasons else ""),
    )


def _too_many(project, count: int, why: str = "") -> None:
    raise InputError(
        str(project.file),
        "catalog.max_stages",
        f"{why}{count} motor × stage-stack options exceed the limit of {MAX_OPTIONS}; "
        "lower max_stages, restrict stage_kinds or exclude stages",
    )


def motor_drives(project, motors) -> list[tuple]:
    """Per motor, the drives an option may pair it with: ``(None,)`` for a project without
    drives, else every drive some joint may use that can feed the motor (catalog.drives); a
    motor no such drive can feed gets none, so it drops out of the table."""
    if getattr(project, "drives", None) is None:
        return [(None,)] * len(motors)
    used = {name for names in project.drives.values() for name in names}
    drives = [d for d in project.catalog.drives if d.name in used]
    return [tuple(d for d in drives if drive_incompatibility(m, d) is None) for m in motors]


def option_key(a: Actuator) -> tuple:
    """Identity of an option: motor name and (stage, frame, ratio) per stage (and the drive's
    name last when it has one)."""
    key = (a.motor.name,) + tuple((s.stage.name, s.frame.name, s.ratio) for s in a.stages)
    return key if a.drive is None else key + (("drive", a.drive.name),)


def matches_pin(a: Actuator, pin: dict) -> bool:
    """Whether actuator ``a`` satisfies a pin (motor name and/or full stage list)."""
    if "motor" in pin and a.motor.name != pin["motor"]:
        return False
    if "stages" in pin:
        want = pin["stages"]
        if len(want) != len(a.stages):
            return False
        for s, w in zip(a.stages, want, strict=True):
            if s.stage.name != w.get("stage", s.stage.name) or s.frame.name != w.get(
                "frame", s.frame.name
            ):
                return False
            if "ratio" in w and abs(s.ratio - float(w["ratio"])) > 1e-9 * s.ratio:
                return False
    return True


@dataclass(frozen=True)
class JointCandidates:
    """Options each joint may take after its own filters.

    Attributes
    ----------
    index : tuple of int arrays, one per actuated joint (ascending option indices)
    removed : tuple of dicts, per joint: filter label -> number of options it removed
    """

    index: tuple
    removed: tuple


def _joint_limit_masks(project, table: OptionTable, joint: str) -> list[tuple[str, np.ndarray]]:
    """(label, keep mask) for the joint's own limits: mass, reflected inertia, envelope, ratio."""
    lim = project.requirements.joint(joint)
    r = table.rows
    s = FILTER_SLACK
    out = []
    for label, value, limit, sense in (
        ("mass_max", r["mass"], lim.mass_max, "max"),
        ("reflected_inertia_max", table.reflected_backdriven, lim.reflected_inertia_max, "max"),
        ("diameter_max", r["diameter"], lim.diameter_max, "max"),
        ("length_max", r["length"], lim.length_max, "max"),
        ("ratio_min", r["ratio"], lim.ratio_min, "min"),
        ("ratio_max", r["ratio"], lim.ratio_max, "max"),
    ):
        if sense == "max" and math.isfinite(limit):
            out.append((label, value <= limit * (1 + s) + s))
        elif sense == "min" and limit > 0:
            out.append((label, value >= limit * (1 - s)))
    return out


def _speed_masks(evaluator, table: OptionTable) -> list[tuple[int, str, np.ndarray]]:
    """(joint, label, keep mask) per speed case: ω_max/N / |a_j| ≥ v_min with a = J⁺·u.

    The end-point speed is min over joints of that ratio (metrics.speed), so the requirement
    holds exactly when it holds for every joint on its own.
    """
    out = []
    speed = table.rows["motor_max_speed"] / table.rows["ratio"]
    for pc in evaluator.cases:
        v = pc.case.limits.get("speed_min")
        if pc.case.kind != "speed" or v is None or v <= 0:
            continue
        a = np.linalg.pinv(pc.Jj) @ (pc.u / np.linalg.norm(pc.u))
        for j, aj in enumerate(np.abs(a)):
            if aj > 0:
                out.append((j, f"speed_min ({pc.case.name})", speed / aj >= v * (1 - FILTER_SLACK)))
    return out


def _shock_masks(project, table: OptionTable) -> list[tuple[str, np.ndarray]]:
    """(label, keep mask) per impact case with ``shock_use_max``: an option whose stages state
    no momentary rating (NaN) has an unknown shock use, which the evaluator counts as missing
    the limit at every joint whatever the rest of the design (impactcase.gear_shock); direct
    drive (no gear, rating +inf) passes."""
    rated = ~np.isnan(table.rows["gear_momentary_torque"])
    return [
        (f"shock_use_max ({c.name}): no momentary rating", rated)
        for c in project.cases
        if c.kind == "impact" and "shock_use_max" in c.limits
    ]


def joint_candidates(
    project, table: OptionTable, evaluator, pins: dict | None = None
) -> JointCandidates:
    """Per joint, the options that pass its pin and every requirement that depends on it alone.

    Parameters
    ----------
    project : Project
    table : OptionTable
    evaluator : jointwright.evaluate.Evaluator of the project (prepared cases)
    pins : dict joint -> pin dict (``motor`` and/or ``stages``), optional

    Returns
    -------
    JointCandidates
    """
    from .solve.life_bound import life_masks

    pins = pins or {}
    speed = _speed_masks(evaluator, table) + life_masks(project, table, evaluator)
    shock = _shock_masks(project, table)
    index, removed = [], []
    for j, name in enumerate(project.robot.actuated):
        keep = np.ones(len(table), dtype=bool)
        counts: dict[str, int] = {}
        masks = []
        if name in pins:
            masks.append(("pin", np.array([matches_pin(a, pins[name]) for a in table.actuators])))
        if getattr(project, "drives", None) is not None:
            allowed = set(project.drives[name])
            masks.append(
                (
                    "drive",
                    np.array(
                        [a.drive is not None and a.drive.name in allowed for a in table.actuators]
                    ),
                )
            )
        masks += _joint_limit_masks(project, table, name) + shock
        masks += [(label, m) for jj, label, m in speed if jj == j]
        for label, m in masks:
            counts[label] = counts.get(label, 0) + int(np.count_nonzero(keep & ~m))
            keep &= m
        index.append(np.flatnonzero(keep))
        removed.append(counts)
    return JointCandidates(tuple(index), tuple(removed))
