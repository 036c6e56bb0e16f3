"""Drives (motor inverters): the current and voltage that feed a motor, and their catalog entry.

A drive caps what its motor can give (docs/metrics.md, "Drive limits"):

* peak torque        τ_peak = min(τ_peak,motor, Kt·I_peak)
* continuous torque  τ_cont = min(τ_cont,motor, Kt·I_cont)
* maximum speed      ω_max  = min(ω_max,motor, V_bus/Ke), Ke = Kt (SI)
* voltage line       the motor's torque–speed line uses the drive's bus voltage V_bus

The currents are in the convention of the motor's torque constant: the tool cannot tell a peak
phase current from an RMS one, so a catalog must give Kt (N·m/A) and the drive's currents in the
same one (both RMS phase current for a sinusoidal drive, or both the DC-equivalent current).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import InputError
from ..tomlfile import Table

#: Drive field -> (dimension for units.quantity, sign rule); name is read separately
DRIVE_FIELDS: dict[str, tuple[str, str]] = {
    "peak_current": ("current", "positive"),
    "continuous_current": ("current", "positive"),
    "bus_voltage": ("voltage", "positive"),
    "mass": ("mass", "nonnegative"),
    "cost": ("dimensionless", "nonnegative"),
}


@dataclass(frozen=True)
class Drive:
    """A motor drive (inverter).

    Attributes
    ----------
    peak_current, continuous_current : A, in the convention of the motor's torque constant
    bus_voltage : V, the DC bus that feeds the motor
    mass : kg, carried with the actuator at the joint (0 when the drive sits in the body)
    cost : currency units of the catalog (0 when unknown)
    """

    name: str
    peak_current: float
    continuous_current: float
    bus_voltage: float
    mass: float = 0.0
    cost: float = 0.0


def drive_from_table(t: Table) -> Drive:
    """A ``[[drive]]`` table of a catalog file -> :class:`Drive` (InputError on bad fields)."""
    allowed = ("name", *DRIVE_FIELDS)
    for key in t.data:
        if key not in allowed:
            raise InputError(t.file, t.field(key), f"unknown field; known: {', '.join(allowed)}")
    name = t.text("name").strip()
    if not name:
        raise InputError(t.file, t.field("name"), "must not be empty")
    kw = {}
    for key, (dim, sign) in DRIVE_FIELDS.items():
        if key in ("mass", "cost"):
            kw[key] = t.quantity(key, dim, 0.0, sign=sign)
        else:
            kw[key] = t.quantity(key, dim, sign=sign)
        if not math.isfinite(kw[key]):
            raise InputError(t.file, t.field(key), f"must be finite, got {kw[key]!r}")
    if kw["continuous_current"] > kw["peak_current"]:
        raise InputError(
            t.file,
            t.field("continuous_current"),
            f"must not exceed peak_current ({kw['peak_current']:g} A), "
            f"got {kw['continuous_current']:g} A",
        )
    return Drive(name=name, **kw)


def drive_incompatibility(motor, drive: Drive) -> str | None:
    """Why ``drive`` cannot feed ``motor``, or None when it can.

    The drive's current limits become torque limits only through the motor's torque constant,
    so a motor without ``torque_constant`` takes no drive.
    """
    if motor.torque_constant is None:
        return f"motor {motor.name!r} gives no torque_constant, needed to apply a drive's currents"
    return None


@dataclass(frozen=True)
class FedMotor:
    """A motor's ratings as its drive lets it use them (SI), and which side sets each.

    Attributes
    ----------
    peak_torque, continuous_torque : N·m, min(motor rating, Kt·drive current)
    max_speed : rad/s, min(motor maximum speed, V_bus/Kt)
    bus_voltage : V, the drive's bus voltage, else the motor's own (None when neither)
    peak_by, continuous_by, speed_by : "motor" or "drive", the side whose limit is lower
        (the motor's on a tie)
    """

    peak_torque: float
    continuous_torque: float
    max_speed: float
    bus_voltage: float | None
    peak_by: str = "motor"
    continuous_by: str = "motor"
    speed_by: str = "motor"


def fed_motor(motor, drive: Drive | None) -> FedMotor:
    """Motor ratings under a drive's limits; ``drive=None`` gives the motor's own ratings.

    τ_peak = min(τ_peak,motor, Kt·I_peak), τ_cont = min(τ_cont,motor, Kt·I_cont),
    ω_max = min(ω_max,motor, V_bus/Kt) (no-load speed of the DC motor equation, Ke = Kt in SI).
    Raises ValueError when the motor has no torque constant (callers check compatibility first
    with :func:`drive_incompatibility` and report it as an input error).
    """
    if drive is None:
        return FedMotor(
            motor.peak_torque, motor.continuous_torque, motor.max_speed, motor.bus_voltage
        )
    why = drive_incompatibility(motor, drive)
    if why is not None:
        raise ValueError(why)
    kt = motor.torque_constant
    peak_d, cont_d = kt * drive.peak_current, kt * drive.continuous_current
    speed_d = drive.bus_voltage / kt
    return FedMotor(
        peak_torque=min(motor.peak_torque, peak_d),
        continuous_torque=min(motor.continuous_torque, cont_d),
        max_speed=min(motor.max_speed, speed_d),
        bus_voltage=drive.bus_voltage,
        peak_by="drive" if peak_d < motor.peak_torque else "motor",
        continuous_by="drive" if cont_d < motor.continuous_torque else "motor",
        speed_by="drive" if speed_d < motor.max_speed else "motor",
    )


def drives_from_table(t: Table, joints, catalog) -> dict[str, tuple[str, ...]] | None:
    """The project's ``[drives]`` table -> per actuated joint the drive names it may use.

    ``all`` names the drive (a string) or the drives the optimizer chooses from (a list) for
    every actuated joint; ``joint.<name>`` does the same for one joint and wins over ``all``.
    Every actuated joint must be covered; an empty table (no ``[drives]``) gives None: every
    motor runs on its own ratings, as without drives.
    """
    if not t.data:
        return None
    names = {d.name for d in catalog.drives}

    def read(value, field: str) -> tuple[str, ...]:
        items = [value] if isinstance(value, str) else value
        if not isinstance(items, list) or not items or not all(isinstance(v, str) for v in items):
            raise InputError(
                t.file, field, f"must be a drive name or a non-empty list of them, got {value!r}"
            )
        for i, v in enumerate(items):
            if v not in names:
                known = ", ".join(sorted(names)) or "none (the catalog has no [[drive]])"
                raise InputError(t.file, field, f"unknown drive {v!r}; the catalog has {known}")
            if v in items[:i]:
                raise InputError(t.file, field, f"drive {v!r} is listed twice")
        return tuple(items)

    every = read(t.raw("all"), t.field("all")) if t.has("all") else None
    jt = t.table("joint", {})
    out: dict[str, tuple[str, ...]] = {}
    for j in jt.data:
        if j not in joints:
            raise InputError(
                t.file, jt.field(j), f"unknown actuated joint {j!r}; they are {', '.join(joints)}"
            )
        out[j] = read(jt.raw(j), jt.field(j))
    jt.done()
    t.done()
    for j in joints:
        if j not in out:
            if every is None:
                raise InputError(
                    t.file,
                    t.field("all"),
                    f"joint {j!r} has no drive: give drives.all or drives.joint.{j}",
                )
            out[j] = every
    return {j: out[j] for j in joints}
