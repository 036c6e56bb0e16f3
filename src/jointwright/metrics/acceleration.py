"""Largest end-point acceleration from rest with every joint carrying its load.

Each joint's motor torque is piecewise linear in the end-point acceleration α (one break where
the joint torque changes sign), so the first α where a joint leaves its limits is exact.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .envelope import check_positive
from .loaded import _mode_factor, _motor_torque, _standstill_torque
from .speed import _direction_rates, check_efficiencies


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
