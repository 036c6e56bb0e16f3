"""End-point speed the joints can reach, joint torque capacity at speed, inertia-matching ratio.

Pure functions of arrays with leading batch dimensions ``...`` (designs, poses): a Jacobian is
``(..., m, n)``, a joint vector ``(..., n)``, a task direction ``(..., m)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .envelope import (
    REFERENCE_TEMPERATURE,
    _line,
    check_positive,
    speed_at_torque,
    torque_speed_envelope,
)

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
    u = np.asarray(u, dtype=float)
    norm = np.linalg.norm(u, axis=-1, keepdims=True)
    if np.any(~(norm > 0)) or not np.all(np.isfinite(u)):
        raise InputError("<api>", "u", "must be a finite non-zero direction")
    u = u / norm
    a = np.einsum("...ij,...j->...i", np.linalg.pinv(J), u)
    back = np.einsum("...ij,...j->...i", J, a)
    reachable = np.linalg.norm(back - u, axis=-1) <= REACH_TOLERANCE * (1.0 + np.abs(a).max(-1))
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


# --------------------------------------------------------------------------------------------
# speed and acceleration while carrying a load
# --------------------------------------------------------------------------------------------
#: joint power-flow modes reported by the loaded metrics
MOTORING, BACKDRIVEN, HOLDING = 1, -1, 0


@dataclass(frozen=True)
class LoadedSpeed:
    """Largest end-point speed along u with every joint carrying its load (arrays over ``...``).

    Attributes
    ----------
    speed : ndarray (...)
        Largest speed v ≥ 0 along u reachable from rest with the load carried all the way
        (m/s for a linear direction); 0 where u is unreachable or the load cannot be carried.
    limiting_joint : ndarray of int (...)
        The joint that reaches its loaded speed limit first, or the joint that cannot carry the
        load (largest shortfall); −1 where nothing limits or u is unreachable.
    carries_load : ndarray of bool (...)
        Every joint holds the load within its motor's standstill torque and its gear rating.
    reachable : ndarray of bool (...)
        u lies in the range of J.
    motor_torque : ndarray (..., n)
        Motor torque each joint needs at the reached speed (N·m), by its power-flow law.
    motor_speed : ndarray (..., n)
        Motor speed N·|q̇| at the reached end-point speed (rad/s).
    mode : ndarray of int (..., n)
        MOTORING (+1), BACKDRIVEN (−1) or HOLDING (0, the joint does not move).
    joint_speeds : ndarray (..., n)
        q̇ = J⁺·u·v at the reached speed.
    """

    speed: np.ndarray
    limiting_joint: np.ndarray
    carries_load: np.ndarray
    reachable: np.ndarray
    motor_torque: np.ndarray
    motor_speed: np.ndarray
    mode: np.ndarray
    joint_speeds: np.ndarray


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


def _motor_torque(tau_j, moving_sign, ratio, eta_f, eta_b, rotor_term):
    """Motor torque that gives joint torque τ_j by the power-flow law (DESIGN §2.3), and the mode.

    motoring (τ_j·σ > 0): τ_m = τ_j/(η_f·N) + N·I_r·q̈; back-driven (τ_j·σ < 0):
    τ_m = η_b·τ_j/N + N·I_r·q̈ (η_b ≤ 0, self-locking: the motor must drive the joint along);
    holding (σ = 0): τ_m = max(η_b, 0)·τ_j/N, the holding convention of the payload metrics.
    """
    power = tau_j * moving_sign
    mode = np.where(moving_sign == 0, HOLDING, np.where(power > 0, MOTORING, BACKDRIVEN))
    return _mode_factor(mode, eta_f, eta_b) * tau_j / ratio + rotor_term, mode


def _standstill_torque(motor):
    """Envelope torque at zero speed (both quadrants): min(τ_peak, Kt·V/R(T))."""
    return torque_speed_envelope(0.0, **motor)


def loaded_endpoint_speed(
    J,
    tau_load,
    u,
    ratio,
    *,
    tau_per_speed2=0.0,
    eta_f=1.0,
    eta_b=1.0,
    rotor_inertia=0.0,
    joint_acceleration=0.0,
    gear_rating=math.inf,
    **motor,
) -> LoadedSpeed:
    """End-point speed along u reachable from rest while the joints carry a load.

    Each joint moves at q̇_i = a_i·v with a = J⁺·û (minimum-norm rates, as
    :func:`endpoint_speed`) and must deliver the joint torque
    τ_j(v) = ``tau_load`` + v²·``tau_per_speed2`` (gravity, the payload's Jᵀ·F and M·q̈ for a
    commanded acceleration in ``tau_load``; the Coriolis and centrifugal torques c(q, a) per
    unit speed squared in ``tau_per_speed2``, all computed by the caller). Its power-flow mode
    is the sign of τ_j·q̇_j and its motor torque follows the transmission law
    (:func:`_motor_torque`; rotor term N·I_r·q̈ from ``joint_acceleration``). At motor speed
    ω_m = N·|a_i|·v the motor must give that torque inside its torque–speed envelope
    (:mod:`.envelope`): with σ the sign of the joint's motion,

        −min(τ_peak, Kt·(V + Kt·ω_m)/R(T)) ≤ σ·τ_m ≤ min(τ_peak, Kt·(V − Kt·ω_m)/R(T)),
        ω_m ≤ ω_max,  |τ_j| ≤ gear rating,

    (driving quadrant on the right, where the back-EMF takes torque away; braking on the left,
    where it helps). Every speed in [0, v] must satisfy them (the motion starts from rest); the
    answer is the first speed at which some joint leaves them, found exactly from the roots of
    these quadratics in v on each piece of constant power-flow mode.

    Parameters
    ----------
    J : array_like (..., m, n)
    tau_load : array_like (..., n)
        Joint-side torques independent of the speed (N·m).
    u : array_like (..., m)
    ratio, eta_f, eta_b, rotor_inertia, gear_rating : array_like (..., n)
        Per-joint transmission data (efficiencies as in :func:`check_efficiencies`).
    tau_per_speed2 : array_like (..., n)
        Joint torque per (end-point speed)², N·m/(m/s)²: c(q, J⁺·û).
    joint_acceleration : array_like (..., n)
        q̈ of the commanded motion (rad/s²), for the rotor term only.
    **motor
        Keywords of :func:`jointwright.metrics.envelope.torque_speed_envelope` (``peak_torque``,
        ``max_speed``, optionally ``torque_constant``, ``resistance``, ``bus_voltage``,
        ``winding_temperature``; pass the hot-winding temperature for a conservative figure).

    Returns
    -------
    LoadedSpeed
    """
    a, reachable = _direction_rates(J, u)
    n = check_positive("ratio", ratio)
    eta_f, eta_b = check_efficiencies(eta_f, eta_b)
    gear = check_positive("gear_rating", gear_rating, allow_inf=True)
    t0 = np.asarray(tau_load, dtype=float)
    c2 = np.asarray(tau_per_speed2, dtype=float)
    t0, c2, a = np.broadcast_arrays(t0, c2, a)
    sigma = np.sign(np.where(np.abs(a) > 1e-12 * np.abs(a).max(-1, keepdims=True), a, 0.0))
    rotor = n * np.asarray(rotor_inertia, float) * np.asarray(joint_acceleration, float)
    peak = np.broadcast_to(check_positive("peak_torque", motor["peak_torque"]), t0.shape)
    wmax = np.broadcast_to(
        check_positive("max_speed", motor["max_speed"], allow_inf=True), t0.shape
    )
    line = _line(
        motor.get("torque_constant"),
        motor.get("resistance"),
        motor.get("bus_voltage"),
        motor.get("winding_temperature", REFERENCE_TEMPERATURE),
    )
    rate = n * np.abs(a) * (sigma != 0)  # motor speed per unit end-point speed
    if line is None:
        A, B = np.full(t0.shape, np.inf), np.zeros(t0.shape)
    else:
        kt, v_bus, r_hot = line
        A = np.broadcast_to(kt * v_bus / r_hot, t0.shape)  # stall torque, N·m
        B = np.broadcast_to(kt * kt / r_hot, t0.shape) * rate  # torque lost per unit speed
        A = np.where(np.isfinite(A), A, np.inf)
        B = np.where(np.isfinite(A), B, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        brk = np.where(c2 != 0, -t0 / c2, -1.0)
    brk = np.where(brk > 0, np.sqrt(np.where(brk > 0, brk, 0.0)), np.inf)

    def piece(start, end):
        mid = np.where(np.isfinite(end), 0.5 * (start + end), start + 1.0)
        _, mode = _motor_torque(t0 + c2 * mid * mid, sigma, n, eta_f, eta_b, 0.0)
        f = _mode_factor(mode, eta_f, eta_b)
        s = np.where(sigma == 0, 1.0, sigma)
        p0, p2 = s * (f * t0 / n + rotor), s * f * c2 / n  # σ·τ_m = p0 + p2·v²
        zero = np.zeros_like(p0)
        exits = [
            _first_rise(start, end, p2, zero, p0 - peak),  # σ·τ_m ≤ τ_peak
            _first_rise(start, end, -p2, zero, -p0 - peak),  # −σ·τ_m ≤ τ_peak
            _first_rise(start, end, p2, B, p0 - A),  # σ·τ_m ≤ A − B·v (driving line)
            _first_rise(start, end, -p2, -B, -p0 - A),  # −σ·τ_m ≤ A + B·v (braking line)
        ]
        return np.minimum.reduce(exits)

    zero = np.zeros_like(t0)
    inf = np.full_like(t0, np.inf)
    first = piece(zero, brk)
    second = piece(np.where(np.isfinite(brk), brk, 0.0), inf)
    motor_exit = np.where(np.isfinite(first), first, np.where(np.isfinite(brk), second, np.inf))
    gear_b = np.broadcast_to(gear, t0.shape)
    gear_exit = np.minimum(
        _first_rise(zero, inf, c2, zero, t0 - gear_b),
        _first_rise(zero, inf, -c2, zero, -t0 - gear_b),
    )
    with np.errstate(divide="ignore"):
        speed_exit = np.where(rate > 0, wmax / np.where(rate > 0, rate, 1.0), np.inf)
    bound = np.minimum(np.minimum(motor_exit, gear_exit), speed_exit)
    joint = np.argmin(bound, axis=-1)
    speed = np.take_along_axis(bound, joint[..., None], axis=-1)[..., 0]
    tm0, mode0 = _motor_torque(t0, sigma, n, eta_f, eta_b, rotor)
    standstill = np.minimum(peak, A)
    shortfall = np.maximum(np.abs(tm0) / standstill - 1.0, np.abs(t0) / gear_b - 1.0)
    carries = np.all(shortfall <= 1e-12, axis=-1)
    speed = np.where(reachable & carries, speed, 0.0)
    joint = np.where(carries, joint, np.argmax(shortfall, axis=-1))
    joint = np.where(reachable & (np.isfinite(speed) | ~carries), joint, -1)
    v = np.where(np.isfinite(speed), speed, 0.0)[..., None]
    tm, mode = _motor_torque(t0 + c2 * v * v, sigma, n, eta_f, eta_b, rotor)
    wm = rate * v
    return LoadedSpeed(
        speed=speed,
        limiting_joint=joint,
        carries_load=carries,
        reachable=reachable,
        motor_torque=tm,
        motor_speed=wm,
        mode=mode,
        joint_speeds=a * v,
    )


def _mode_factor(mode, eta_f, eta_b):
    """τ_m·N/τ_j per mode: 1/η_f motoring, η_b back-driven, max(η_b, 0) holding."""
    return np.where(
        mode == MOTORING, 1.0 / eta_f, np.where(mode == BACKDRIVEN, eta_b, np.maximum(eta_b, 0.0))
    )


def _first_rise(start, end, c2, c1, c0):
    """First x in [start, end] where q(x) = c2·x² + c1·x + c0 becomes positive; ``start`` if
    q(start) > 0 already, inf if q stays ≤ 0 on the interval. Arrays broadcast; ``end`` may be
    inf. A small relative tolerance keeps a constraint met with equality from counting."""
    c2, c1, c0 = (np.asarray(x, dtype=float) for x in (c2, c1, c0))
    scale = np.abs(c0) + 1e-300
    with np.errstate(invalid="ignore", over="ignore"):
        q_start = c2 * start * start + c1 * start + c0
        c0_safe = np.where(np.isfinite(c0), c0, -np.inf)
        out_at_start = q_start > 1e-12 * scale
        disc = c1 * c1 - 4.0 * c2 * c0_safe
        sq = np.sqrt(np.where(disc >= 0, disc, 0.0))
        quad = c2 != 0
        c2s = np.where(quad, c2, 1.0)
        # the two roots without cancellation (Press et al., Numerical Recipes, 3rd ed., §5.6):
        # h = −(c1 + sgn(c1)·√disc)/2, roots h/c2 and c0/h; the textbook form loses the small
        # root when c2 is rounding noise (it came out as −0.0 and stopped a joint at rest)
        h = -0.5 * (c1 + np.where(c1 >= 0, 1.0, -1.0) * sq)
        hs = np.where(h != 0, h, 1.0)
        real = quad & (disc >= 0)
        r1 = np.where(real, h / c2s, np.inf)
        r2 = np.where(real & (h != 0), c0_safe / hs, np.where(real, 0.0, np.inf))
        c1s = np.where(c1 != 0, c1, 1.0)
        rl = np.where(~quad & (c1 > 0), -c0_safe / c1s, np.inf)  # linear: rises where c1 > 0
        cands = []
        for r in (r1, r2, rl):
            rising = (2.0 * c2 * r + c1) > 0
            ok = np.isfinite(r) & (r >= start) & (r <= end) & rising
            cands.append(np.where(ok, r, np.inf))
        first = np.minimum.reduce(cands)
        first = np.where(np.isnan(first), np.inf, first)
    return np.where(out_at_start, start, first)


def _first_rise_linear(start, end, c1, c0):
    """:func:`_first_rise` for q(x) = c1·x + c0 (c2 = 0), with the same arithmetic on the terms
    that remain, so the same numbers: the quadratic roots, which do not exist here, are never
    formed (the acceleration limits are linear in α, and this is most of the stroke figure's
    work)."""
    c1, c0 = np.asarray(c1, dtype=float), np.asarray(c0, dtype=float)
    scale = np.abs(c0) + 1e-300
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        out_at_start = c1 * start + c0 > 1e-12 * scale
        c0_safe = np.where(np.isfinite(c0), c0, -np.inf)
        rl = np.where(c1 > 0, -c0_safe / np.where(c1 != 0, c1, 1.0), np.inf)
        ok = np.isfinite(rl) & (rl >= start) & (rl <= end)
    return np.where(out_at_start, start, np.where(ok, rl, np.inf))


@dataclass(frozen=True)
class LoadedAcceleration:
    """Largest end-point acceleration along u from rest with the load carried (arrays over ``...``).

    Attributes
    ----------
    acceleration : ndarray (...)
        Largest α ≥ 0 such that every acceleration in [0, α] along u is available (m/s² for a
        linear direction); 0 where the load cannot be held or u is unreachable; inf where
        nothing limits.
    limiting_joint : ndarray of int (...)
        The joint whose motor torque or gear rating is reached first; −1 if none.
    carries_load : ndarray of bool (...)
        The load is held at rest (α = 0 is feasible).
    joint_accelerations : ndarray (..., n)
        q̈ = J⁺·û·α at the answer.
    """

    acceleration: np.ndarray
    limiting_joint: np.ndarray
    carries_load: np.ndarray
    joint_accelerations: np.ndarray


def _first_exit(start, end, f0, f1, limit):
    """First α in [start, end] where |f0 + f1·α| leaves [−limit, limit] (start if it is already
    out there), inf if it stays inside."""
    f_start = f0 + f1 * start
    with np.errstate(divide="ignore", invalid="ignore"):
        up = np.where(f1 > 0, (limit - f0) / f1, np.inf)
        down = np.where(f1 < 0, (-limit - f0) / f1, np.inf)
    e = np.minimum(up, down)
    e = np.where(np.abs(f_start) > limit * (1 + 1e-12) + 1e-300, start, np.maximum(e, start))
    return np.where(e <= end, e, np.inf)


def acceleration_from_rest(
    J,
    tau_load,
    tau_per_acceleration,
    u,
    ratio,
    *,
    eta_f=1.0,
    eta_b=1.0,
    rotor_inertia=0.0,
    gear_rating=math.inf,
    **motor,
) -> LoadedAcceleration:
    """Largest end-point acceleration along u from rest while the joints carry a load.

    At rest (q̇ = 0, so J̇·q̇ = 0 and no Coriolis terms) an end-point acceleration α along û
    needs q̈ = a·α with a = J⁺·û and joint torques τ_j(α) = ``tau_load`` + α·``tau_per_acceleration``
    (the caller's M·a plus the payload's inertia Jᵀ·m_p·û). Each joint is motoring while
    τ_j·a_j > 0 and back-driven otherwise (a joint with a_j = 0 holds); its motor torque
    τ_m(α) = c·τ_j(α)/N + N·I_r·a_j·α (c = 1/η_f motoring, η_b back-driven) is piecewise
    linear in α with one break where τ_j changes sign, and must stay within the motor's
    standstill torque min(τ_peak, Kt·V/R(T)); |τ_j| must stay within the gear rating. The answer
    is the first α where some joint leaves its bounds, so every smaller acceleration is
    available too.

    Parameters are those of :func:`loaded_endpoint_speed`, plus ``tau_per_acceleration``
    (..., n): joint torque per unit end-point acceleration (N·m per m/s²).

    Returns
    -------
    LoadedAcceleration
    """
    a, reachable = _direction_rates(J, u)
    n = check_positive("ratio", ratio)
    eta_f, eta_b = check_efficiencies(eta_f, eta_b)
    gear = check_positive("gear_rating", gear_rating, allow_inf=True)
    t0 = np.asarray(tau_load, dtype=float)
    k = np.asarray(tau_per_acceleration, dtype=float)
    t0, k, a = np.broadcast_arrays(t0, k, a)
    sigma = np.sign(np.where(np.abs(a) > 1e-12 * np.abs(a).max(-1, keepdims=True), a, 0.0))
    ir = np.asarray(rotor_inertia, dtype=float)
    limit = np.broadcast_to(_standstill_torque(motor), t0.shape)
    exit_ = _acceleration_exits(
        t0, k, a, sigma, n, eta_f, eta_b, ir, limit, limit, np.broadcast_to(gear, t0.shape)
    )
    joint = np.argmin(exit_, axis=-1)
    alpha = np.take_along_axis(exit_, joint[..., None], axis=-1)[..., 0]
    carries = alpha > 0
    # the load cannot be held at rest when some joint is out of bounds at α = 0
    alpha = np.where(reachable, alpha, 0.0)
    joint = np.where(reachable & np.isfinite(alpha), joint, -1)
    qdd = a * np.where(np.isfinite(alpha), alpha, 0.0)[..., None]
    return LoadedAcceleration(
        acceleration=alpha, limiting_joint=joint, carries_load=carries, joint_accelerations=qdd
    )


def _acceleration_exits(t0, k, a, sigma, n, eta_f, eta_b, ir, hi, lo, gear):
    """Per joint, the first end-point acceleration α ≥ 0 at which the joint leaves its limits.

    τ_j(α) = t0 + k·α; the motor torque by the joint's power-flow law (motoring while
    τ_j·σ > 0, back-driven otherwise, holding when σ = 0) plus the rotor term N·I_r·a·α;
    −lo ≤ σ·τ_m ≤ hi (σ = 1 for a joint that does not move) and |τ_j| ≤ gear. The mode can
    switch once, where τ_j changes sign; each piece is linear in α.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        brk = np.where(k != 0, -t0 / k, -1.0)
    brk = np.where(brk > 0, brk, np.inf)
    s = np.where(sigma == 0, 1.0, sigma)
    zero = np.zeros_like(t0)
    inf = np.full_like(t0, np.inf)

    def piece(start, end):
        mid = np.where(np.isfinite(end), 0.5 * (start + end), start + 1.0)
        _, mode = _motor_torque(t0 + k * mid, sigma, n, eta_f, eta_b, 0.0)
        f = _mode_factor(mode, eta_f, eta_b)
        p0 = s * f * t0 / n
        p1 = s * (f * k / n + n * ir * a)
        return np.minimum(
            _first_rise_linear(start, end, p1, p0 - hi),
            _first_rise_linear(start, end, -p1, -p0 - lo),
        )

    first = piece(zero, brk)
    second = piece(np.where(np.isfinite(brk), brk, 0.0), inf)
    motor_exit = np.where(np.isfinite(first), first, np.where(np.isfinite(brk), second, np.inf))
    gear_exit = np.minimum(
        _first_rise_linear(zero, inf, k, t0 - gear), _first_rise_linear(zero, inf, -k, -t0 - gear)
    )
    return np.minimum(motor_exit, gear_exit)


@dataclass(frozen=True)
class StrokeSpeed:
    """End-point speed reached from rest within a stroke (arrays over ``...``).

    Attributes
    ----------
    speed : ndarray (...)
        Speed reached after accelerating along u over the stroke with the load carried, at
        each speed as fast as the motors allow (m/s); at most ``steady_speed``.
    steady_speed : ndarray (...)
        The loaded speed of :func:`loaded_endpoint_speed` (the motors' limit along the motion).
    limiting_joint : ndarray of int (...)
        The joint that limits the acceleration at the reached speed (−1 if none).
    time : ndarray (...)
        Time to reach ``speed`` over the stroke, s (conservative like ``speed``).
    """

    speed: np.ndarray
    steady_speed: np.ndarray
    limiting_joint: np.ndarray
    time: np.ndarray


def speed_within_stroke(
    J,
    tau_load,
    tau_per_acceleration,
    u,
    ratio,
    stroke,
    *,
    tau_per_speed2=0.0,
    eta_f=1.0,
    eta_b=1.0,
    rotor_inertia=0.0,
    gear_rating=math.inf,
    steps=64,
    **motor,
) -> StrokeSpeed:
    """Speed the end point reaches from rest along u within a stroke, carrying the load.

    At end-point speed v the largest acceleration along u is α(v): joint torques
    τ_j = τ_load + v²·c(q, a) + α·(M·a + m_p·Jᵀ·û), each motor inside its envelope at its speed
    (the limits of :func:`loaded_endpoint_speed`, the rotor term N·I_r·a·α included), |τ_j|
    within the gear rating. The distance to reach v is x(v) = ∫₀ᵛ w/α(w) dw. On a grid of
    ``steps`` speeds from 0 to the steady loaded speed v*, each interval is crossed with the
    smaller of its two end accelerations, so the distance is overestimated and the speed
    reached within ``stroke`` underestimated wherever α falls with speed (back-EMF and
    centrifugal torques grow with it); the answer is exact in the limit of a fine grid and
    never above v* (the last interval, where α → 0, is not crossed). Quasi-static in the joint
    path: q̇ = a·v, q̈ = a·α with a = J⁺·û at the case's pose (the pose is not advanced along
    the stroke).

    Parameters are those of :func:`loaded_endpoint_speed` and :func:`acceleration_from_rest`,
    plus ``stroke`` (m along u, > 0) and ``steps`` (grid size).

    Returns
    -------
    StrokeSpeed
    """
    stroke = check_positive("stroke", stroke)
    steady = loaded_endpoint_speed(
        J,
        tau_load,
        u,
        ratio,
        tau_per_speed2=tau_per_speed2,
        eta_f=eta_f,
        eta_b=eta_b,
        rotor_inertia=rotor_inertia,
        gear_rating=gear_rating,
        **motor,
    )
    a, reachable = _direction_rates(J, u)
    n = check_positive("ratio", ratio)
    eta_f, eta_b = check_efficiencies(eta_f, eta_b)
    gear = check_positive("gear_rating", gear_rating, allow_inf=True)
    t0 = np.asarray(tau_load, dtype=float)
    c2 = np.asarray(tau_per_speed2, dtype=float)
    k = np.asarray(tau_per_acceleration, dtype=float)
    t0, c2, k, a = np.broadcast_arrays(t0, c2, k, a)
    sigma = np.sign(np.where(np.abs(a) > 1e-12 * np.abs(a).max(-1, keepdims=True), a, 0.0))
    ir = np.asarray(rotor_inertia, dtype=float)
    peak = np.broadcast_to(check_positive("peak_torque", motor["peak_torque"]), t0.shape)
    line = _line(
        motor.get("torque_constant"),
        motor.get("resistance"),
        motor.get("bus_voltage"),
        motor.get("winding_temperature", REFERENCE_TEMPERATURE),
    )
    rate = n * np.abs(a) * (sigma != 0)
    if line is None:
        A, B = np.full(t0.shape, np.inf), np.zeros(t0.shape)
    else:
        kt, v_bus, r_hot = line
        A = np.broadcast_to(kt * v_bus / r_hot, t0.shape)
        B = np.where(np.isfinite(A), np.broadcast_to(kt * kt / r_hot, t0.shape) * rate, 0.0)
    gear_b = np.broadcast_to(gear, t0.shape)
    top = np.where(np.isfinite(steady.speed), steady.speed, 0.0)
    stroke_b = np.broadcast_to(stroke, top.shape)

    def alpha_at(v):
        vv = v[..., None]
        hi = np.minimum(peak, A - B * vv)
        lo = np.minimum(peak, A + B * vv)
        ex = _acceleration_exits(
            t0 + c2 * vv * vv, k, a, sigma, n, eta_f, eta_b, ir, hi, lo, gear_b
        )
        return ex.min(axis=-1), np.argmin(ex, axis=-1)

    x = np.zeros(top.shape)
    t = np.zeros(top.shape)
    reached = np.zeros(top.shape)
    done = ~(reachable & steady.carries_load) | (top <= 0)
    joint = np.full(top.shape, -1)
    prev_alpha, prev_joint = alpha_at(np.zeros(top.shape))
    for i in range(1, steps + 1):
        v0, v1 = top * (i - 1) / steps, top * i / steps
        alpha, jnt = alpha_at(v1)
        low = np.minimum(prev_alpha, alpha)
        lim_joint = np.where(prev_alpha <= alpha, prev_joint, jnt)
        with np.errstate(divide="ignore", invalid="ignore"):
            dx = np.where(low > 0, (v1 * v1 - v0 * v0) / (2.0 * low), np.inf)
            dt = np.where(low > 0, (v1 - v0) / low, np.inf)
        ends = ~done & (x + dx >= stroke_b)
        with np.errstate(invalid="ignore"):
            v_end = np.sqrt(
                np.maximum(v0 * v0 + 2.0 * np.where(low > 0, low, 0.0) * (stroke_b - x), 0.0)
            )
            t_end = np.where(low > 0, (v_end - v0) / np.where(low > 0, low, 1.0), 0.0)
        reached = np.where(ends, np.minimum(v_end, v1), reached)
        t = np.where(ends, t + t_end, t)
        joint = np.where(ends, lim_joint, joint)
        go = ~done & ~ends
        reached = np.where(go, v1, reached)
        x = np.where(go, x + dx, x)
        t = np.where(go, t + dt, t)
        joint = np.where(go, lim_joint, joint)
        done = done | ends
        prev_alpha, prev_joint = alpha, jnt
    reached = np.where(reachable & steady.carries_load, reached, 0.0)
    joint = np.where(reachable & steady.carries_load, joint, steady.limiting_joint)
    return StrokeSpeed(speed=reached, steady_speed=steady.speed, limiting_joint=joint, time=t)
