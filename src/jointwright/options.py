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
import time
from collections.abc import Sequence
from dataclasses import dataclass, fields

import numpy as np

from .catalog.model import Motor
from .design import DesignArrays, actuator_row
from .drivetrain import Actuator, StageChoice
from .errors import InputError

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
#: with 645,280 options peaked at 0.7 GB resident, docs/benchmarks.md instance (f))
MAX_OPTIONS = 1_000_000

#: filters never remove an option whose margin is above this (looser than the checks' −1e-12)
FILTER_SLACK = 1e-9


class OutOfTime(Exception):
    """The caller's time limit ran out while options were built or prepared."""


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

    actuators: tuple
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


def build_table(project, exclude=(), deadline=None) -> OptionTable:
    """Every motor × stack of 0..max_stages stages (order: motor, then stack length, then stages).

    Parameters
    ----------
    project : Project
    exclude : iterable of str
        Motor, stage-type or frame names never to use.
    deadline : float, optional
        A ``time.perf_counter()`` value; :class:`OutOfTime` is raised once it has passed.
    """
    banned = set(exclude)
    motors = [m for m in project.catalog.all_motors() if m.name not in banned]
    singles = [
        s
        for s in stage_choices(project)
        if s.stage.name not in banned and s.frame.name not in banned
    ]
    count = len(motors) * sum(len(singles) ** k for k in range(project.max_stages + 1))
    if count > MAX_OPTIONS:
        raise InputError(
            str(project.file),
            "catalog.max_stages",
            f"{count} motor × stage-stack options exceed the limit of {MAX_OPTIONS}; "
            "lower max_stages, restrict stage_kinds or exclude stages",
        )
    stacks = [()]
    for k in range(1, project.max_stages + 1):
        stacks.extend(tuple(x) for x in itertools.product(singles, repeat=k))
    rows = option_rows(motors, stacks, deadline)
    motor_index = np.repeat(np.arange(len(motors), dtype=np.int64), len(stacks))
    return OptionTable(
        ActuatorList(tuple(motors), tuple(stacks)),
        motor_index,
        tuple(m.name for m in motors),
        rows,
    )


#: a motor for the stack-only parts of an option (ratio, efficiencies, gear ratings)
_NO_MOTOR = Motor(
    name="-", peak_torque=1.0, continuous_torque=1.0, rotor_inertia=0.0, mass=0.0, max_speed=1.0
)


class ActuatorList(Sequence):
    """The table's options as Actuators, made when asked for (motor-major, then stacks in order):
    a table of a million options keeps two short lists, not a million objects."""

    def __init__(self, motors: tuple, stacks: tuple) -> None:
        self.motors, self.stacks = motors, stacks

    def __len__(self) -> int:
        return len(self.motors) * len(self.stacks)

    def __getitem__(self, i):  # type: ignore[override]
        if isinstance(i, slice):
            return tuple(self[k] for k in range(*i.indices(len(self))))
        i = int(i)
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError("option index out of range")
        m, k = divmod(i, len(self.stacks))
        return Actuator(self.motors[m], self.stacks[k])


def _stack_row(stack: tuple) -> dict[str, float]:
    """A stack's own parts of the option fields, computed with the operations (and their order)
    of :class:`~jointwright.drivetrain.Actuator`, so a motor's fields combine with them to the
    same floating-point numbers."""
    a = Actuator(_NO_MOTOR, stack)
    before = [float(math.prod(s.ratio for s in stack[:k])) if k else 1.0 for k in range(len(stack))]
    return {
        "ratio": a.ratio,
        "eta_forward": a.eta_forward,
        "eta_backward": a.eta_backward,
        "self_locking": a.self_locking,
        "inertia": sum(s.frame.input_inertia / before[k] ** 2 for k, s in enumerate(stack)),
        "mass": sum(s.frame.mass for s in stack),
        "cost": sum(s.frame.cost for s in stack),
        "length": sum(s.frame.length for s in stack),
        "diameter": max([s.frame.diameter for s in stack], default=-math.inf),
        "gear_peak_torque": a.gear_peak_torque,
        "gear_continuous_torque": a.gear_continuous_torque,
        "breakaway": sum(s.frame.breakaway_torque / before[k] for k, s in enumerate(stack)),
    }


def option_rows(motors: list, stacks: list, deadline=None) -> dict[str, np.ndarray]:
    """The :class:`DesignArrays` fields of every motor × stack (motor-major), as arrays (O,).

    Stack parts are computed once per stack (:func:`_stack_row`), motor parts once per motor, and
    combined by broadcasting with the operations of :func:`jointwright.design.actuator_row`
    (equal to it bit for bit; tests/test_options_vectorized.py). A further dimension (another
    part of an option) joins the same way: one more axis before the final ravel."""
    srow = []
    for k, st in enumerate(stacks):
        if deadline is not None and k % 512 == 0 and time.perf_counter() > deadline:
            raise OutOfTime(
                f"the time limit ran out while building {len(motors) * len(stacks)} options"
            )
        srow.append(_stack_row(st))
    S = {key: np.array([r[key] for r in srow]) for key in srow[0]}
    S["self_locking"] = S["self_locking"].astype(bool)

    def motor(attr: str) -> np.ndarray:
        return np.array(
            [math.nan if getattr(m, attr) is None else getattr(m, attr) for m in motors],
            dtype=float,
        )[:, None]

    shape = (len(motors), len(stacks))

    def both(x) -> np.ndarray:
        return np.broadcast_to(x, shape).ravel().copy()

    locked = S["self_locking"][None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        breakaway = np.where(
            locked,
            np.inf,
            S["ratio"][None, :]
            * (motor("cogging_torque") + S["breakaway"][None, :])
            / S["eta_backward"][None, :],
        )
    rows = {
        "mass": both(motor("mass") + S["mass"][None, :]),
        "ratio": both(S["ratio"][None, :]),
        "eta_forward": both(S["eta_forward"][None, :]),
        "eta_backward": both(S["eta_backward"][None, :]),
        "self_locking": both(locked),
        "rotor_inertia": both(motor("rotor_inertia") + S["inertia"][None, :]),
        "motor_peak_torque": both(motor("peak_torque")),
        "motor_continuous_torque": both(motor("continuous_torque")),
        "gear_peak_torque": both(S["gear_peak_torque"][None, :]),
        "gear_continuous_torque": both(S["gear_continuous_torque"][None, :]),
        "breakaway_torque": both(breakaway),
        "motor_max_speed": both(motor("max_speed")),
        "torque_constant": both(motor("torque_constant")),
        "resistance": both(motor("resistance")),
        "bus_voltage": both(motor("bus_voltage")),
        "thermal_resistance": both(motor("thermal_resistance")),
        "thermal_time_constant": both(motor("thermal_time_constant")),
        "winding_temperature_max": both(motor("winding_temperature_max")),
        "diameter": both(np.maximum(motor("diameter"), S["diameter"][None, :])),
        "length": both(motor("length") + S["length"][None, :]),
        "cost": both(motor("cost") + S["cost"][None, :]),
    }
    missing = {f.name for f in fields(DesignArrays)} - set(rows)
    if missing:  # a field added to DesignArrays: built per option until it is added here
        acts = [Actuator(m, st) for m in motors for st in stacks]
        for name in sorted(missing):
            rows[name] = np.array([actuator_row(a)[name] for a in acts])
    return rows


def option_key(a: Actuator) -> tuple:
    """Identity of an option: motor name and (stage, frame, ratio) per stage."""
    return (a.motor.name,) + tuple((s.stage.name, s.frame.name, s.ratio) for s in a.stages)


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
    pins = pins or {}
    speed = _speed_masks(evaluator, table)
    index, removed = [], []
    for j, name in enumerate(project.robot.actuated):
        keep = np.ones(len(table), dtype=bool)
        counts = {}
        masks = []
        if name in pins:
            masks.append(("pin", np.array([matches_pin(a, pins[name]) for a in table.actuators])))
        masks += _joint_limit_masks(project, table, name)
        masks += [(label, m) for jj, label, m in speed if jj == j]
        for label, m in masks:
            counts[label] = counts.get(label, 0) + int(np.count_nonzero(keep & ~m))
            keep &= m
        index.append(np.flatnonzero(keep))
        removed.append(counts)
    return JointCandidates(tuple(index), tuple(removed))
