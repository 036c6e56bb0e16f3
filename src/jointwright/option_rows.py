"""Option rows: every unit (a motor with its drive) × stage stack as arrays, built by numpy.

Each stack's own parts of the option fields are computed once (:func:`stack_parts`), each
unit's once, and combined by broadcasting with the operations of the per-actuator formulas
(:func:`jointwright.design.actuator_row`), equal to them bit for bit
(tests/test_options_vectorized.py). :class:`ActuatorList` makes an option's
:class:`~jointwright.drivetrain.Actuator` when it is indexed.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence

import numpy as np

from .catalog.drives import fed_motor
from .catalog.model import Motor
from .design import COMBINED_FIELDS, MOTOR_FIELDS, STACK_FIELDS
from .drivetrain import Actuator


class OutOfTime(Exception):
    """The caller's time limit ran out while options were built or prepared."""


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


def stack_parts(stacks: Sequence, deadline=None, options=None) -> dict[str, np.ndarray]:
    """Each stack's own parts of the option fields (:func:`_stack_row`), as arrays (S,) or
    (S, slots) for the life slots. ``deadline``: a ``time.perf_counter()`` value past which
    :class:`OutOfTime` is raised (``options``: the table size it names)."""
    srow = []
    for k, st in enumerate(stacks):
        if deadline is not None and k % 512 == 0 and time.perf_counter() > deadline:
            count = options if options is not None else len(stacks)
            raise OutOfTime(f"the time limit ran out while building {count} options")
        srow.append(_stack_row(st))
    S = {key: np.array([r[key] for r in srow]) for key in srow[0]}
    S["self_locking"] = S["self_locking"].astype(bool)
    return S


def option_rows(units: list, S: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The :class:`DesignArrays` fields of every unit × stack (unit-major), as arrays (O,);
    a unit is ``(motor, drive)`` with drive None when the project has no drives, ``S`` the
    stacks' parts (:func:`stack_parts`).

    Unit parts are computed once per unit and combined with the stack parts by broadcasting with
    the operations of :func:`jointwright.design.actuator_row`. A further dimension (another part
    of an option) joins the same way: one more axis before the final ravel."""
    n_stacks = len(S["ratio"])

    def motor(attr: str, source: str = "motor") -> np.ndarray:
        return np.array([_unit_value(m, d, attr, source) for m, d in units], dtype=float)[:, None]

    shape = (len(units), n_stacks)

    def both(x) -> np.ndarray:
        return np.broadcast_to(x, shape).ravel().copy()

    def stack_only(name: str) -> np.ndarray:
        s = np.asarray(S[name], dtype=float)  # (S,) or (S, slots)
        full = np.broadcast_to(s[None], (len(units), *s.shape))
        return full.reshape(len(units) * n_stacks, *s.shape[1:]).copy()

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
