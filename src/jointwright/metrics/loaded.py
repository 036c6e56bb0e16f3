"""Largest end-point speed with every joint carrying its load (steady, from rest).

Pure functions of arrays with leading batch dimensions ``...`` (designs, poses), as
:mod:`.speed`. The power-flow law of each joint and the exact first-exit finder shared with
:mod:`.acceleration` and :mod:`.stroke` live here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .envelope import REFERENCE_TEMPERATURE, _line, check_positive, torque_speed_envelope
from .speed import _direction_rates, check_efficiencies

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
