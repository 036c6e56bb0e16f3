"""Loads that reach every joint: a full wrench at the tip, and required torques per joint.

Sign convention (shared with :mod:`.payload`): the robot exerts the wrench w = (F, M) on the
environment at the tip point; the joint torques it needs are τ = τ_bias + J(q)ᵀ·w, with J the
6-row frame Jacobian whose rows are the linear velocity of the frame origin and the angular
velocity, both along the world axes (LOCAL_WORLD_ALIGNED in Pinocchio's terms), so that the
power wᵀ·J·q̇ = F·v + M·ω.

A payload case's force s·u acts at ``offset`` r from the frame origin (e.g. the payload's centre
of mass); moved to the origin it is the wrench s·(u, r × u). A fixed ``moment`` M rides on top:
its torques J_ωᵀ·M join the bias. So τ(s) = τ_bias + J_ωᵀ·M + s·a with a = Jᵀ·(u, r × u), the
same ray form :func:`.payload.payload_along` solves.
"""

from __future__ import annotations

import numpy as np

from .payload import torque_bounds


def wrench_per_force(u, offset) -> np.ndarray:
    """The wrench (6,) at the frame origin per newton of force along the unit direction u acting
    at ``offset`` r: (u, r × u)."""
    u = np.asarray(u, dtype=float)
    r = np.asarray(offset, dtype=float)
    return np.concatenate([u, np.cross(r, u)])


def torque_per_force(J6, u, offset) -> np.ndarray:
    """Joint torques per newton of the force s·u at ``offset``: a = J6ᵀ·(u, r × u), (..., nv).

    J6 : (..., 6, nv) frame Jacobian, linear rows then angular rows, world-aligned axes.
    """
    return np.einsum("...ij,i->...j", np.asarray(J6, dtype=float), wrench_per_force(u, offset))


def torque_of_moment(J6, moment) -> np.ndarray:
    """Joint torques J_ωᵀ·M that exert the moment M (world axes) at the frame, (..., nv)."""
    J6 = np.asarray(J6, dtype=float)
    return np.einsum("...ij,i->...j", J6[..., 3:, :], np.asarray(moment, dtype=float))


#: joint motion while it carries a torque case's load -> sign of velocity relative to torque
MOTION_SIGN = {"along": 1.0, "against": -1.0, "hold": 0.0}


def torque_ratio(required, motion_sign, motoring_capacity, backdriven_capacity):
    """Achieved ÷ required torque per joint, with each joint in its power-flow mode.

    The joint moves with velocity sign σ·sign(τ) (σ = +1 ``along``: the torque drives the motion,
    motoring, capacity C_f = η_f·N·τ_m; σ = −1 ``against``: back-driven, C_b = N·τ_m/η_b, +inf when
    self-locking; σ = 0 ``hold``: holding capacity, as :func:`.payload.torque_bounds`). The ratio
    is the capacity on the side of τ over |τ|; +inf for τ = 0.

    Parameters
    ----------
    required : (n,) required joint torques τ (N·m, or N)
    motion_sign : (n,) σ per joint, −1, 0 or +1
    motoring_capacity, backdriven_capacity : (..., n)

    Returns
    -------
    (..., n) ratios, ≥ 0
    """
    tau = np.asarray(required, dtype=float)
    sigma = np.asarray(motion_sign, dtype=float) * np.sign(tau)
    c_f = np.asarray(motoring_capacity, dtype=float)
    lo, hi = torque_bounds(
        np.broadcast_to(sigma, c_f.shape), c_f, np.asarray(backdriven_capacity, dtype=float)
    )
    side = np.where(tau >= 0, hi, -lo)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(tau == 0, np.inf, side / np.abs(tau))
