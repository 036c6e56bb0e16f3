"""The stroke figure on a grid of speeds: the reference for tests/test_stroke.py.

This was the package's computation before the closed-form one (metrics.stroke): on ``steps``
speeds from 0 to the steady loaded speed v*, each interval is crossed with the smaller of its
two end accelerations, so the distance is overestimated and the speed underestimated wherever
α falls with speed; it converges to x(v) = ∫₀ᵛ w/α(w) dw as the grid is refined.
"""

from __future__ import annotations

import math

import numpy as np

from jointwright.metrics.acceleration import _acceleration_exits
from jointwright.metrics.envelope import REFERENCE_TEMPERATURE, _line, check_positive
from jointwright.metrics.loaded import loaded_endpoint_speed
from jointwright.metrics.speed import _direction_rates
from jointwright.metrics.speed import check_efficiencies
from jointwright.metrics.stroke import StrokeSpeed


def grid_speed_within_stroke(
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
    steady=None,  # the evaluator passes its loaded speed; recomputed here as before
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
