"""A design (one actuator per actuated joint), its file format, and its batched array form.

The design file (TOML)::

    [design]
    name = "baseline"

    [joint.knee]
    motor = "PK-80x20"
    stages = [{ stage = "PL-1", frame = "PL-1-60", ratio = 6 }]

Every evaluation of a design goes through :mod:`jointwright.evaluate`, which works on
:class:`DesignArrays` — the per-joint actuator properties stacked over many designs.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

import numpy as np

from .catalog.drives import drive_incompatibility
from .drivetrain import Actuator, StageChoice, reflected_inertia, torque_capacity
from .errors import InputError
from .tomlfile import Table, load_toml


@dataclass(frozen=True)
class Design:
    """One actuator per actuated joint, in the robot's actuated-joint order."""

    name: str
    joints: tuple[str, ...]
    actuators: tuple[Actuator, ...]

    def actuator(self, joint: str) -> Actuator:
        return self.actuators[self.joints.index(joint)]

    @property
    def mass(self) -> float:
        return sum(a.mass for a in self.actuators)

    @property
    def cost(self) -> float:
        return sum(a.cost for a in self.actuators)


def load_design(path: str | Path, project) -> Design:
    """Read a design file against a project's robot and catalog."""
    path = Path(path)
    return design_from_dict(load_toml(path), project, str(path))


def design_from_dict(data: dict, project, file: str = "<api>") -> Design:
    top = Table(data, file, "")
    head = top.table("design", {})
    name = head.text("name", Path(file).stem)
    head.done()
    jt = top.table("joint")
    robot, catalog = project.robot, project.catalog
    for j in jt.data:
        if j not in robot.actuated:
            raise InputError(
                file,
                jt.field(j),
                f"unknown joint {j!r}; actuated joints are {', '.join(robot.actuated)}",
            )
    acts = []
    for j in robot.actuated:
        if j not in jt.data:
            raise InputError(
                file, jt.field(j), "is required: every actuated joint needs an actuator"
            )
        acts.append(
            _actuator(jt.table(j), catalog, project.max_stages, _allowed_drives(project, j))
        )
    jt.done()
    top.done()
    return Design(name=name, joints=tuple(robot.actuated), actuators=tuple(acts))


def _allowed_drives(project, joint: str) -> tuple[str, ...] | None:
    drives = getattr(project, "drives", None)
    return None if drives is None else drives[joint]


def _actuator(
    t: Table, catalog, max_stages: int, drives: tuple[str, ...] | None = None
) -> Actuator:
    t.expect("motor", "stages", "drive")
    mname = t.text("motor")
    try:
        motor = catalog.motor(mname)
    except KeyError:
        raise InputError(
            t.file, t.field("motor"), f"unknown motor {mname!r}; not in the catalog"
        ) from None
    stages = []
    entries = t.array("stages", [])
    if len(entries) > max(max_stages, 0):
        raise InputError(
            t.file,
            t.field("stages"),
            f"at most {max_stages} stages (catalog.max_stages), got {len(entries)}",
        )
    for i, e in enumerate(entries):
        st = Table(e, t.file, f"{t.field('stages')}[{i}]")
        st.expect("stage", "frame", "ratio")
        sname = st.text("stage")
        try:
            stage = catalog.stage(sname)
        except KeyError:
            raise InputError(
                t.file, st.field("stage"), f"unknown stage type {sname!r}; not in the catalog"
            ) from None
        fname = st.text("frame")
        try:
            frame = stage.frame(fname)
        except KeyError:
            names = ", ".join(f.name for f in stage.frames)
            raise InputError(
                t.file, st.field("frame"), f"unknown frame {fname!r} of {sname}; it has {names}"
            ) from None
        ratio = st.quantity("ratio", "ratio", sign="positive")
        if not stage.allows(ratio):
            allowed = (
                f"one of {list(stage.ratios)}"
                if stage.ratios is not None
                else f"in [{stage.ratio_range[0]:g}, {stage.ratio_range[1]:g}]"
            )
            raise InputError(
                t.file,
                st.field("ratio"),
                f"ratio {ratio:g} not offered by {sname}: must be {allowed}",
            )
        st.done()
        stages.append(StageChoice(stage, frame, ratio))
    drive = _drive(t, catalog, motor, drives)
    t.done()
    return Actuator(motor, tuple(stages), drive)


def _drive(t: Table, catalog, motor, allowed: tuple[str, ...] | None):
    """The joint's drive: the design's ``drive``, else the project's one fixed drive, else None
    (no drives in the project: the motor's own ratings)."""
    if not t.has("drive"):
        if allowed is None:
            return None
        if len(allowed) > 1:
            raise InputError(
                t.file,
                t.field("drive"),
                f"is required: the project lets this joint use {', '.join(allowed)}",
            )
        name = allowed[0]
    else:
        name = t.text("drive")
        if allowed is not None and name not in allowed:
            raise InputError(
                t.file,
                t.field("drive"),
                f"drive {name!r} is not one the project allows here ({', '.join(allowed)})",
            )
    try:
        drive = catalog.drive(name)
    except KeyError:
        raise InputError(
            t.file, t.field("drive"), f"unknown drive {name!r}; not in the catalog"
        ) from None
    why = drive_incompatibility(motor, drive)
    if why is not None:
        raise InputError(t.file, t.field("drive"), why)
    return drive


def design_to_toml(design: Design) -> str:
    """The design file text for a design (round-trips through :func:`load_design`)."""
    lines = ["[design]", f'name = "{design.name}"', ""]
    for j, a in zip(design.joints, design.actuators, strict=True):
        lines.append(f"[joint.{j}]")
        lines.append(f'motor = "{a.motor.name}"')
        st = ", ".join(
            f'{{ stage = "{s.stage.name}", frame = "{s.frame.name}", ratio = {s.ratio!r} }}'
            for s in a.stages
        )
        lines.append(f"stages = [{st}]")
        if a.drive is not None:
            lines.append(f'drive = "{a.drive.name}"')
        lines.append("")
    return "\n".join(lines)


@dataclass(frozen=True)
class DesignArrays:
    """Per-joint actuator properties stacked over D designs: every field is (D, n_joints).

    Units: kg, N·m, kg·m², rad/s, V, Ω, K/W, s, °C; efficiencies dimensionless.
    """

    mass: np.ndarray
    ratio: np.ndarray
    eta_forward: np.ndarray
    eta_backward: np.ndarray
    self_locking: np.ndarray
    rotor_inertia: np.ndarray  # I_r on the motor shaft (rotor + stage input inertias)
    motor_peak_torque: np.ndarray
    motor_continuous_torque: np.ndarray
    gear_peak_torque: np.ndarray  # joint side
    gear_continuous_torque: np.ndarray
    breakaway_torque: np.ndarray  # joint side, inf when self-locking
    motor_max_speed: np.ndarray
    torque_constant: np.ndarray  # nan when the catalog gives none
    resistance: np.ndarray
    bus_voltage: np.ndarray
    thermal_resistance: np.ndarray
    thermal_time_constant: np.ndarray
    winding_temperature_max: np.ndarray
    diameter: np.ndarray
    length: np.ndarray
    cost: np.ndarray
    # --- gear life and shock (metrics/gear_life.py, metrics/gear_shock.py) ---
    #: per stage slot (D, n, LIFE_SLOTS), joint side: rated life torque (N·m), speed (rad/s),
    #: life (s) and exponent; an empty slot has life inf, an unrated stage NaN
    life_torque: np.ndarray
    life_speed: np.ndarray
    life_rated: np.ndarray
    life_exponent: np.ndarray
    gear_momentary_torque: np.ndarray  # joint side; inf direct drive, NaN when unrated
    stiffness: np.ndarray  # joint side, N·m/rad; inf when unknown
    # efficiency band of each stack (catalog.bands; the nominal values where no stage has one)
    eta_forward_low: np.ndarray
    eta_forward_high: np.ndarray
    eta_backward_low: np.ndarray
    eta_backward_high: np.ndarray
    breakaway_motor_side: np.ndarray  # N·m at the motor shaft (cogging + stage breakaways)

    @property
    def count(self) -> int:
        return self.mass.shape[0]

    def take(self, index) -> "DesignArrays":
        return DesignArrays(**{f.name: getattr(self, f.name)[index] for f in fields(self)})

    @property
    def has_band(self) -> bool:
        """Whether any stack's efficiency band has a width (else every end is the nominal)."""
        return not (
            np.array_equal(self.eta_forward_low, self.eta_forward)
            and np.array_equal(self.eta_forward_high, self.eta_forward)
            and np.array_equal(self.eta_backward_low, self.eta_backward)
            and np.array_equal(self.eta_backward_high, self.eta_backward)
        )

    def at_band(self, forward: str, backward: str) -> "DesignArrays":
        """The designs with every stack's efficiencies at an end of its band: ``forward`` and
        ``backward`` each "low", "high" or "nominal". Self-locking and the joint-side breakaway
        torque N·Σ/η_b follow the backward value (docs/metrics.md, "Efficiency bands")."""
        ef = {"low": self.eta_forward_low, "high": self.eta_forward_high}.get(
            forward, self.eta_forward
        )
        eb = {"low": self.eta_backward_low, "high": self.eta_backward_high}.get(
            backward, self.eta_backward
        )
        if ef is self.eta_forward and eb is self.eta_backward:
            return self
        locked = eb <= 0
        with np.errstate(divide="ignore", invalid="ignore"):
            breakaway = np.where(
                locked,
                np.inf,
                self.ratio * self.breakaway_motor_side / np.where(locked, 1.0, eb),
            )
        return dataclasses.replace(
            self,
            eta_forward=ef,
            eta_backward=eb,
            self_locking=locked,
            breakaway_torque=breakaway,
        )

    # -- joint-side capacities per mode (N·m) ---------------------------------------------------
    def capacity(self, mode: str, *, continuous: bool = False) -> np.ndarray:
        """Joint-side torque capacity per mode (N·m), (D, n); see drivetrain.torque_capacity."""
        tau = self.motor_continuous_torque if continuous else self.motor_peak_torque
        gear = self.gear_continuous_torque if continuous else self.gear_peak_torque
        return torque_capacity(
            mode, self.ratio, self.eta_forward, self.eta_backward, self.self_locking, tau, gear
        )

    def reflected_inertia(self, mode: str) -> np.ndarray:
        """Link-side reflected inertia per mode (kg·m²), (D, n).

        See drivetrain.reflected_inertia.
        """
        return reflected_inertia(
            mode,
            self.ratio,
            self.eta_forward,
            self.eta_backward,
            self.self_locking,
            self.rotor_inertia,
        )


#: option fields of the motor alone, as its drive feeds it: field -> (source, attribute), source
#: "fed" for the ratings a drive can lower (catalog.drives.fed_motor), "motor" for the motor's own
MOTOR_FIELDS: dict[str, tuple[str, str]] = {
    "motor_peak_torque": ("fed", "peak_torque"),
    "motor_continuous_torque": ("fed", "continuous_torque"),
    "motor_max_speed": ("fed", "max_speed"),
    "torque_constant": ("motor", "torque_constant"),
    "resistance": ("motor", "resistance"),
    "bus_voltage": ("fed", "bus_voltage"),
    "thermal_resistance": ("motor", "thermal_resistance"),
    "thermal_time_constant": ("motor", "thermal_time_constant"),
    "winding_temperature_max": ("motor", "winding_temperature_max"),
}

#: option fields of the stage stack alone (any motor gives the same value)
STACK_FIELDS: dict[str, Callable[[Actuator], Any]] = {
    "ratio": lambda a: a.ratio,
    "eta_forward": lambda a: a.eta_forward,
    "eta_backward": lambda a: a.eta_backward,
    "self_locking": lambda a: a.self_locking,
    "gear_peak_torque": lambda a: a.gear_peak_torque,
    "gear_continuous_torque": lambda a: a.gear_continuous_torque,
    "life_torque": lambda a: _slots(a, 0, math.inf),
    "life_speed": lambda a: _slots(a, 1, 1.0),
    "life_rated": lambda a: _slots(a, 2, math.inf),
    "life_exponent": lambda a: _slots(a, 3, 3.0),
    "gear_momentary_torque": lambda a: a.gear_momentary_torque,
    "stiffness": lambda a: a.stiffness,
    "eta_forward_low": lambda a: a.efficiency_band[0],
    "eta_forward_high": lambda a: a.efficiency_band[1],
    "eta_backward_low": lambda a: a.efficiency_band[2],
    "eta_backward_high": lambda a: a.efficiency_band[3],
}

#: option fields that combine motor, drive and stack; options.option_rows composes each of
#: these from its motor and stack parts (the only fields it spells out)
COMBINED_FIELDS: dict[str, Callable[[Actuator], Any]] = {
    "mass": lambda a: a.mass,
    "rotor_inertia": lambda a: a.rotor_inertia,
    "breakaway_torque": lambda a: a.breakaway_torque,
    "breakaway_motor_side": lambda a: a.breakaway_motor_side,
    "diameter": lambda a: a.diameter,
    "length": lambda a: a.length,
    "cost": lambda a: a.cost,
}


def _motor_field(source: str, attr: str) -> Callable[[Actuator], float]:
    def value(a: Actuator) -> float:
        return _nan(getattr(a.fed if source == "fed" else a.motor, attr))

    return value


#: every option field (the :class:`DesignArrays` fields) -> its value for one actuator
_ACTUATOR_FIELDS: dict[str, Callable[[Actuator], Any]] = {
    **{k: _motor_field(*v) for k, v in MOTOR_FIELDS.items()},
    **STACK_FIELDS,
    **COMBINED_FIELDS,
}

#: stage slots of the life arrays: the most stages a stack may have (project max_stages ≤ 3)
LIFE_SLOTS = 3


def _slots(a: Actuator, k: int, empty: float) -> tuple[float, ...]:
    """Entry ``k`` of each stage's joint-side life rating, padded to LIFE_SLOTS with ``empty``."""
    values = [r[k] for r in a.life_ratings]
    return tuple(values + [empty] * (LIFE_SLOTS - len(values)))


def _nan(x):
    return math.nan if x is None else x


def actuator_row(a: Actuator) -> dict[str, float]:
    """One actuator's entries of :class:`DesignArrays`."""
    return {k: fn(a) for k, fn in _ACTUATOR_FIELDS.items()}


def arrays_from_rows(rows: list[list[dict]]) -> DesignArrays:
    """Stack ``rows[d][j]`` (design d, joint j, as from :func:`actuator_row`) into arrays."""
    out = {}
    for k in _ACTUATOR_FIELDS:
        dtype = bool if k == "self_locking" else float
        out[k] = np.array([[r[k] for r in row] for row in rows], dtype=dtype)
    return DesignArrays(**out)


def arrays_from_designs(designs: list[Design]) -> DesignArrays:
    return arrays_from_rows([[actuator_row(a) for a in d.actuators] for d in designs])
