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

from .catalog.drives import drive_incompatibility, fed_motor
from .catalog.model import Motor
from .design import COMBINED_FIELDS, MOTOR_FIELDS, STACK_FIELDS, DesignArrays
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
    feeds = motor_drives(project, motors)
    if not any(feeds):
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
    count = sum(len(f) for f in feeds) * sum(
        len(singles) ** k for k in range(project.max_stages + 1)
    )
    if count > MAX_OPTIONS:
        raise InputError(
            str(project.file),
            "catalog.max_stages",
            f"{count} motor × stage-stack options exceed the limit of {MAX_OPTIONS}; "
            "lower max_stages, restrict stage_kinds or exclude stages",
        )
    stacks: list[tuple[StageChoice, ...]] = [()]
    for k in range(1, project.max_stages + 1):
        stacks.extend(tuple(x) for x in itertools.product(singles, repeat=k))
    # a unit is a motor with one of the drives that may feed it (None: no drives in the project)
    units = [(m, drive) for i, m in enumerate(motors) for drive in feeds[i]]
    rows = option_rows(units, stacks, deadline)
    unit_motor = [i for i, _m in enumerate(motors) for _drive in feeds[i]]
    motor_index = np.repeat(np.asarray(unit_motor, dtype=np.int64), len(stacks))
    return OptionTable(
        ActuatorList(tuple(units), tuple(stacks)),
        motor_index,
        tuple(m.name for m in motors),
        rows,
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


#: a motor for the stack-only parts of an option (ratio, efficiencies, gear ratings)
_NO_MOTOR = Motor(
    name="-", peak_torque=1.0, continuous_torque=1.0, rotor_inertia=0.0, mass=0.0, max_speed=1.0
)


class ActuatorList(Sequence):
    """The table's options as Actuators, made when asked for (unit-major, then stacks in order;
    a unit is a motor with its drive, or with None): a table of a million options keeps two short
    lists, not a million objects."""

    def __init__(self, units: tuple, stacks: tuple) -> None:
        self.units, self.stacks = units, stacks

    def __len__(self) -> int:
        return len(self.units) * len(self.stacks)

    def __getitem__(self, i):  # type: ignore[override]
        if isinstance(i, slice):
            return tuple(self[k] for k in range(*i.indices(len(self))))
        i = int(i)
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError("option index out of range")
        u, k = divmod(i, len(self.stacks))
        motor, drive = self.units[u]
        return Actuator(motor, self.stacks[k], drive)


def _stack_row(stack: tuple) -> dict[str, float]:
    """A stack's own parts of the option fields, computed with the operations (and their order)
    of :class:`~jointwright.drivetrain.Actuator`, so a motor's fields combine with them to the
    same floating-point numbers."""
    a = Actuator(_NO_MOTOR, stack)
    before = [float(math.prod(s.ratio for s in stack[:k])) if k else 1.0 for k in range(len(stack))]
    return {
        **{name: value(a) for name, value in STACK_FIELDS.items()},
        "inertia": sum(s.frame.input_inertia / before[k] ** 2 for k, s in enumerate(stack)),
        "mass": sum(s.frame.mass for s in stack),
        "cost": sum(s.frame.cost for s in stack),
        "length": sum(s.frame.length for s in stack),
        "diameter": max([s.frame.diameter for s in stack], default=-math.inf),
        "breakaway": sum(s.frame.breakaway_torque / before[k] for k, s in enumerate(stack)),
    }


def _unit_value(motor, drive, attr: str, source: str = "motor") -> float:
    """A unit's (motor with its drive) part of an option field: from the motor's ratings as the
    drive feeds them (source "fed", catalog.drives.fed_motor), the drive's mass and cost
    ("drive_mass", "drive_cost"), else the motor's own attribute."""
    if source == "fed":
        value = getattr(fed_motor(motor, drive), attr)
    elif attr in ("drive_mass", "drive_cost"):
        value = 0.0 if drive is None else getattr(drive, attr.removeprefix("drive_"))
    else:
        value = getattr(motor, attr)
    return math.nan if value is None else value


def option_rows(units: list, stacks: list, deadline=None) -> dict[str, np.ndarray]:
    """The :class:`DesignArrays` fields of every unit × stack (unit-major), as arrays (O,);
    a unit is ``(motor, drive)`` with drive None when the project has no drives.

    Stack parts are computed once per stack (:func:`_stack_row`), motor parts once per motor, and
    combined by broadcasting with the operations of :func:`jointwright.design.actuator_row`
    (equal to it bit for bit; tests/test_options_vectorized.py). A further dimension (another
    part of an option) joins the same way: one more axis before the final ravel."""
    srow = []
    for k, st in enumerate(stacks):
        if deadline is not None and k % 512 == 0 and time.perf_counter() > deadline:
            raise OutOfTime(
                f"the time limit ran out while building {len(units) * len(stacks)} options"
            )
        srow.append(_stack_row(st))
    S = {key: np.array([r[key] for r in srow]) for key in srow[0]}
    S["self_locking"] = S["self_locking"].astype(bool)

    def motor(attr: str, source: str = "motor") -> np.ndarray:
        return np.array([_unit_value(m, d, attr, source) for m, d in units], dtype=float)[:, None]

    shape = (len(units), len(stacks))

    def both(x) -> np.ndarray:
        return np.broadcast_to(x, shape).ravel().copy()

    def stack_only(name: str) -> np.ndarray:
        s = np.asarray([r[name] for r in srow], dtype=float)  # (S,) or (S, slots)
        full = np.broadcast_to(s[None], (len(units), *s.shape))
        return full.reshape(len(units) * len(stacks), *s.shape[1:]).copy()

    locked = S["self_locking"][None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        breakaway = np.where(
            locked,
            np.inf,
            S["ratio"][None, :]
            * (motor("cogging_torque") + S["breakaway"][None, :])
            / S["eta_backward"][None, :],
        )
    # the Actuator adds the drive's mass and cost last: same order, same rounding
    mass = motor("mass") + S["mass"][None, :] + motor("drive_mass")
    cost = motor("cost") + S["cost"][None, :] + motor("drive_cost")
    # every field but the few that combine motor and stack comes from design's field tables
    rows = {
        **{name: both(motor(attr, source)) for name, (source, attr) in MOTOR_FIELDS.items()},
        **{name: stack_only(name) for name in STACK_FIELDS},
    }
    rows["self_locking"] = rows["self_locking"].astype(bool)
    combined = {
        "mass": mass,
        "rotor_inertia": motor("rotor_inertia") + S["inertia"][None, :],
        "breakaway_torque": breakaway,
        "breakaway_motor_side": motor("cogging_torque") + S["breakaway"][None, :],
        "diameter": np.maximum(motor("diameter"), S["diameter"][None, :]),
        "length": motor("length") + S["length"][None, :],
        "cost": cost,
    }
    if combined.keys() != COMBINED_FIELDS.keys():  # a new combined field needs its rule here
        raise KeyError(f"option_rows composes {sorted(combined)}, not {sorted(COMBINED_FIELDS)}")
    rows |= {name: both(value) for name, value in combined.items()}
    return rows


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
        masks += _joint_limit_masks(project, table, name)
        masks += [(label, m) for jj, label, m in speed if jj == j]
        for label, m in masks:
            counts[label] = counts.get(label, 0) + int(np.count_nonzero(keep & ~m))
            keep &= m
        index.append(np.flatnonzero(keep))
        removed.append(counts)
    return JointCandidates(tuple(index), tuple(removed))
