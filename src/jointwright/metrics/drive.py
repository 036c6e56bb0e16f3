"""Which limit of the motor–drive pair sets an operating point on the torque–speed envelope.

The envelope (metrics.envelope, DC motor equation V = R·i + Ke·ω with τ = Kt·i, Ke = Kt in SI)
has three parts in the driving quadrant:

* the torque cap   τ ≤ τ_peak = min(τ_peak,motor, Kt·I_peak,drive)           (current)
* the voltage line ω ≤ (V_bus − R(T)·τ/Kt)/Ke                                 (bus voltage)
* the speed cap    ω ≤ ω_max  = min(ω_max,motor, V_bus,drive/Ke)              (speed)

At an operating point (τ, ω) on the envelope, the part with the highest use (τ/τ_peak,
ω/ω_line(τ), ω/ω_max) is the one that binds; the side (motor or drive) comes from
:class:`jointwright.catalog.drives.FedMotor`.
"""

from __future__ import annotations

import math

from .envelope import winding_resistance


def envelope_uses(
    torque: float,
    speed: float,
    *,
    peak_torque: float,
    max_speed: float,
    torque_constant: float | None = None,
    resistance: float | None = None,
    bus_voltage: float | None = None,
    winding_temperature: float = 20.0,
) -> dict[str, float]:
    """Use of each envelope part at motor torque ``torque`` (N·m) and speed ``speed`` (rad/s).

    Returns ``{"torque": τ/τ_peak, "speed": ω/ω_max, "voltage": ω/ω_line(τ)}`` (the voltage
    entry only with Kt, R and V_bus; inf where the line gives no speed at that torque).
    """
    tau, w = abs(float(torque)), abs(float(speed))
    out = {"torque": tau / peak_torque, "speed": w / max_speed if max_speed > 0 else math.inf}
    if (
        torque_constant is not None
        and resistance is not None
        and bus_voltage is not None
        and math.isfinite(bus_voltage)
    ):
        r = float(winding_resistance(resistance, winding_temperature))
        line = (bus_voltage - r * tau / torque_constant) / torque_constant
        out["voltage"] = w / line if line > 0 else math.inf
    return out


def binding_limit(uses: dict[str, float], fed, has_drive: bool) -> str:
    """The envelope part with the highest use, in words with the side that sets it.

    ``fed`` is the :class:`~jointwright.catalog.drives.FedMotor` of the joint (its ``*_by``
    fields say whether the motor or the drive sets the torque cap and the speed cap); the
    voltage line belongs to the drive when there is one (its bus voltage), else to the motor's
    own bus voltage.
    """
    part = max(uses, key=lambda k: (uses[k], k == "voltage"))
    if part == "torque":
        return f"peak torque ({'drive current' if fed.peak_by == 'drive' else 'motor rating'})"
    if part == "speed":
        return f"top speed ({'drive bus voltage / Ke' if fed.speed_by == 'drive' else 'motor'})"
    return f"torque–speed line ({'drive' if has_drive else 'motor'} bus voltage)"
