"""End-point speed the joints can reach, joint torque capacity at speed, inertia-matching ratio.

Under load: :mod:`.loaded` (steady speed), :mod:`.acceleration` (from rest), :mod:`.stroke`
(speed reached within a stroke).

Pure functions of arrays with leading batch dimensions ``...`` (designs, poses): a Jacobian is
``(..., m, n)``, a joint vector ``(..., n)``, a task direction ``(..., m)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .envelope import check_positive, speed_at_torque, torque_speed_envelope

#: relative residual ‖J·J⁺·u − u‖ above which a direction counts as unreachable at a pose
REACH_TOLERANCE = 1e-9


@dataclass(frozen=True)
class EndpointSpeed:
    """Largest end-point speed along u and what limits it.

    Attributes
    ----------
    speed : ndarray (...)
        Largest speed v ≥ 0 along u (m/s for a linear direction); 0 where u is not reachable,
        inf where no moving joint has a finite limit.
    limiting_joint : ndarray of int (...)
        Index of the joint that reaches its limit first; −1 where u is not reachable or
        nothing limits.
    joint_speeds : ndarray (..., n)
        q̇ = J⁺·u·v at that speed (rad/s or m/s per joint).
    reachable : ndarray of bool (...)
        Whether u lies in the range of J (the end point can move along u at all).
    """

    speed: np.ndarray
    limiting_joint: np.ndarray
    joint_speeds: np.ndarray
    reachable: np.ndarray


def _direction_rates(J, u):
    """a = J⁺·û (joint rates per unit end-point speed) and whether û is in the range of J."""
    J = np.asarray(J, dtype=float)
    if J.ndim < 2:
        raise InputError("<api>", "J", f"must have shape (..., m, n), got {J.shape}")
    u = np.asarray(u, dtype=float)
    norm = np.linalg.norm(u, axis=-1, keepdims=True)
    if np.any(~(norm > 0)) or not np.all(np.isfinite(u)):
        raise InputError("<api>", "u", "must be a finite non-zero direction")
    u = u / norm
    a = np.einsum("...ij,...j->...i", np.linalg.pinv(J), u)
    back = np.einsum("...ij,...j->...i", J, a)
    reachable = np.linalg.norm(back - u, axis=-1) <= REACH_TOLERANCE * (1.0 + np.abs(a).max(-1))
    return a, reachable


def endpoint_speed(J, joint_speed_limit, u) -> EndpointSpeed:
    """Largest end-point speed along a unit direction u with |q̇_i| ≤ limit_i.

    The joint speeds are the minimum-norm solution q̇ = J⁺·u·v (Moore–Penrose pseudo-inverse), so
    v* = min_i limit_i/|a_i| with a = J⁺·u. For a square non-singular J this is the exact
    maximum; for a redundant limb it is a lower bound (another null-space motion can be faster).

    Parameters
    ----------
    J : array_like (..., m, n)
        End-point Jacobian (rows: task directions, columns: joints).
    joint_speed_limit : array_like (..., n)
        Joint speed limits (rad/s or m/s), > 0 (inf allowed), e.g. motor max speed / ratio
        or :func:`joint_speed_limit`.
    u : array_like (..., m)
        Task direction; normalised here (must be non-zero).

    Returns
    -------
    EndpointSpeed
    """
    J = np.asarray(J, dtype=float)
    if J.ndim < 2:
        raise InputError("<api>", "J", f"must have shape (..., m, n), got {J.shape}")
    lim = check_positive("joint_speed_limit", joint_speed_limit, allow_inf=True)
    a, reachable = _direction_rates(J, u)
    absa = np.abs(a)
    with np.errstate(divide="ignore"):
        bound = np.where(absa > 0, lim / absa, np.inf)
    joint = np.argmin(bound, axis=-1)
    speed = np.take_along_axis(bound, joint[..., None], axis=-1)[..., 0]
    speed = np.where(reachable, speed, 0.0)
    joint = np.where(reachable & np.isfinite(speed), joint, -1)
    qd = a * np.where(np.isfinite(speed), speed, 0.0)[..., None]
    return EndpointSpeed(speed=speed, limiting_joint=joint, joint_speeds=qd, reachable=reachable)


def joint_speed_limit(ratio, motor_torque=0.0, **motor) -> np.ndarray:
    """Joint speed limit (rad/s): the highest motor speed giving ``motor_torque``, divided by N.

    ``motor`` holds the keywords of :func:`jointwright.metrics.envelope.speed_at_torque`
    (peak_torque, max_speed and optionally torque_constant, resistance, bus_voltage,
    winding_temperature). With the default ``motor_torque = 0`` and no electrical data this is
    max_speed/N; with electrical data it is the envelope's speed at the needed torque (N·m).
    """
    return speed_at_torque(motor_torque, **motor) / check_positive("ratio", ratio)


@dataclass(frozen=True)
class SpeedCapacity:
    """Joint torque capacity while the joint moves at a given speed (all arrays (..., n)).

    Attributes
    ----------
    motor_speed : motor speed ω_m = N·|q̇| (rad/s)
    drive_torque : motor torque available in the driving quadrant at ω_m (N·m)
    brake_torque : motor torque available in the braking quadrant at ω_m (N·m)
    forward : joint capacity when motoring, η_f·N·drive_torque, capped by the gear (N·m)
    backdriven : joint capacity when the load drives the joint, N·brake_torque/η_b, capped by
        the gear; the gear rating (inf when not given) for a self-locking joint (η_b ≤ 0)
    """

    motor_speed: np.ndarray
    drive_torque: np.ndarray
    brake_torque: np.ndarray
    forward: np.ndarray
    backdriven: np.ndarray


def payload_at_speed(
    qd, ratio, *, eta_f=1.0, eta_b=1.0, gear_rating=math.inf, **motor
) -> SpeedCapacity:
    """Joint torque capacities at the joint speeds an end-point motion needs.

    The motor runs at ω_m = N·|q̇_i|; its envelope torque there (driving quadrant for a motoring
    joint, braking quadrant for a back-driven one) goes through the transmission law:
    forward η_f·N·τ(ω_m), back-driven N·τ(ω_m)/η_b. The payload ray test takes these capacities
    per joint and mode in place of the static ones.

    Parameters
    ----------
    qd : array_like (..., n)
        Joint speeds the motion needs (rad/s), e.g. ``endpoint_speed(...).joint_speeds`` scaled
        to the commanded speed.
    ratio : array_like (..., n)
        Ratio N (motor speed / joint speed), > 0.
    eta_f : array_like
        Forward efficiency, 0 < η_f ≤ 1.
    eta_b : array_like
        Backward efficiency, −1 < η_b ≤ 1 (≤ 0: self-locking).
    gear_rating : array_like
        Gear peak output torque (N·m), inf when not limiting.
    **motor
        Motor data: the keywords of
        :func:`jointwright.metrics.envelope.torque_speed_envelope` except ``braking``.

    Returns
    -------
    SpeedCapacity
    """
    n = check_positive("ratio", ratio)
    eta_f, eta_b = check_efficiencies(eta_f, eta_b)
    wm = n * np.abs(np.asarray(qd, dtype=float))
    drive = torque_speed_envelope(wm, **motor)
    brake = torque_speed_envelope(wm, braking=True, **motor)
    gear = check_positive("gear_rating", gear_rating, allow_inf=True)
    forward = np.minimum(eta_f * n * drive, gear)
    with np.errstate(divide="ignore"):
        back = np.where(eta_b > 0, n * brake / np.where(eta_b > 0, eta_b, 1.0), np.inf)
    return SpeedCapacity(wm, drive, brake, forward, np.minimum(back, gear))


def check_efficiencies(eta_f, eta_b) -> tuple[np.ndarray, np.ndarray]:
    """Forward and backward efficiencies as arrays: 0 < η_f ≤ 1 and η_b ≤ 1, else InputError."""
    f = np.asarray(eta_f, dtype=float)
    b = np.asarray(eta_b, dtype=float)
    if np.any(~((f > 0) & (f <= 1))):
        raise InputError(
            "<api>", "eta_f", f"must be in (0, 1], got {f[~((f > 0) & (f <= 1))].flat[0]!r}"
        )
    # a strongly self-locking stage (worm, lead screw) can have η_b ≤ −1: only the upper bound
    # and finiteness are rules here
    if np.any(~(np.isfinite(b) & (b <= 1))):
        raise InputError(
            "<api>",
            "eta_b",
            f"must be finite and <= 1, got {b[~(np.isfinite(b) & (b <= 1))].flat[0]!r}",
        )
    return f, b


def inertia_matching_ratio(J_load, J_motor, efficiency=1.0, load_torque=0.0, motor_torque=1.0):
    """Ratio that maximises the load's acceleration (Pasch & Seering 1984 [mem]).

    With the motoring law the load accelerates at q̈ = (η·N·τ_m − T_L)/(J_L + η·N²·J_m); setting
    dq̈/dN = 0 gives N* = b + √(b² + J_L/(η·J_m)) with b = T_L/(η·τ_m), which is √(J_L/J_m)
    without loss or load torque.

    Parameters
    ----------
    J_load : array_like
        Load inertia at the joint (kg·m²), > 0.
    J_motor : array_like
        Rotor-side inertia at the motor shaft (kg·m²), > 0.
    efficiency : array_like
        Forward efficiency η, 0 < η ≤ 1.
    load_torque : array_like
        Constant load torque opposing the motion (N·m), ≥ 0.
    motor_torque : array_like
        Motor torque (N·m), > 0.

    Returns
    -------
    ndarray
        N* (dimensionless).
    """
    jl = check_positive("J_load", J_load)
    jm = check_positive("J_motor", J_motor)
    eta, _ = check_efficiencies(efficiency, 1.0)
    tl = np.asarray(load_torque, dtype=float)
    if np.any(~(tl >= 0)):
        raise InputError("<api>", "load_torque", "must be >= 0 N*m")
    b = tl / (eta * check_positive("motor_torque", motor_torque))
    return b + np.sqrt(b * b + jl / (eta * jm))
