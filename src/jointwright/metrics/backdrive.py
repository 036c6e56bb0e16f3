"""Back-drive force: the push at the tip that starts the unpowered robot moving.

Model (static, stated so that its limits are plain):

* the motors are unpowered; each joint resists with friction only, up to its breakaway torque
  b_i (gear no-load starting torque plus motor cogging, reflected to the joint by the caller);
  a self-locking joint has b_i = +inf;
* a push of magnitude s along the unit direction u is *applied to* the tip (by a person, an
  obstacle, the ground). The joint torques that keep the robot still are then
  τ(s) = τ_bias − s·Jᵀ·u, with τ_bias = g(q) (gravity) or zero when gravity is held elsewhere;
* the robot starts moving at the smallest s for which some |τ_i(s)| exceeds b_i. In a serial
  chain the first joint to slip moves the tip, so that s is the answer; dynamics after the
  slip, compliance and friction that depends on load are not modelled.

A high back-drive force means a joint that does not yield to a push: with self-locking or
high-ratio joints that can trap or crush. This is a concept-stage indicator; collaborative
operation must be assessed under the applicable robot safety standards and licensed practice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .linalg_small import API, batch_shape, check_size, checked, unit_vectors


@dataclass(frozen=True)
class BackdriveForce:
    """Push at the tip that starts the unpowered robot moving.

    Attributes
    ----------
    force : array (...), N
        Smallest push magnitude along u that makes a joint slip; ``+inf`` when none can slip;
        0 where ``holds`` is False.
    limiting_joint : int array (...)
        The joint that slips first (the lowest index on ties); −1 when none can. Where
        ``holds`` is False, the joint whose breakaway τ_bias exceeds the most.
    holds : bool array (...)
        False when τ_bias alone exceeds a breakaway torque (the robot sags unpowered).
    self_locked : bool array (...)
        True when ``force`` is infinite because every joint the push loads (Jᵀu ≠ 0) has an
        infinite breakaway torque.
    """

    force: np.ndarray
    limiting_joint: np.ndarray
    holds: np.ndarray
    self_locked: np.ndarray


def backdrive_force(J, breakaway, u, tau_bias=None) -> BackdriveForce:
    """Smallest push s along u with |τ_bias,i − s·(Jᵀu)_i| > b_i for some joint i.

    With a = Jᵀ·û and c = τ_bias, joint i slips at s_i = (b_i + c_i)/a_i for a_i > 0 and
    s_i = (b_i − c_i)/(−a_i) for a_i < 0 (never for a_i = 0 or b_i = inf); s* = min_i s_i.

    Parameters
    ----------
    J : array (..., m, n), tip Jacobian
    breakaway : array (..., n), joint-side breakaway torques, N·m, ≥ 0, +inf for self-locking
    u : array (..., m), nonzero direction of the push applied to the tip (normalized here)
    tau_bias : array (..., n), N·m, optional
        Joint torques of gravity (and any other steady load) at the pose; zero when omitted,
        i.e. gravity is taken as held (supported or compensated).

    Returns
    -------
    BackdriveForce
    """
    J = checked(J, "J", 2)
    n = J.shape[-1]
    b = checked(breakaway, "breakaway", 1, allow_inf=True)
    check_size(b, "breakaway", -1, n, "entries (one per column of J)")
    if (b < 0).any():
        raise InputError(API, "breakaway", "must be >= 0 N·m (+inf for self-locking joints)")
    c = np.zeros(n) if tau_bias is None else checked(tau_bias, "tau_bias", 1)
    check_size(c, "tau_bias", -1, n, "entries (one per column of J)")
    u = unit_vectors(u, "u", J.shape[-2])
    batch_shape(J=(J, 2), breakaway=(b, 1), u=(u, 1), tau_bias=(c, 1))
    a = np.einsum("...mn,...m->...n", J, u)
    excess = np.abs(c) - b
    holds = ~np.any(excess > 0.0, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        slip = np.where(a > 0, (b + c) / a, np.where(a < 0, (b - c) / -a, np.inf))
    slip = np.where(np.isnan(slip), np.inf, np.maximum(slip, 0.0))
    joint = np.argmin(slip, axis=-1)
    s = np.take_along_axis(slip, joint[..., None], axis=-1)[..., 0]
    free = np.isinf(s)
    loaded = a != 0.0
    self_locked = free & np.any(loaded & np.isinf(b), axis=-1) & holds
    return BackdriveForce(
        force=np.where(holds, s, 0.0),
        limiting_joint=np.where(holds, np.where(free, -1, joint), np.argmax(excess, axis=-1)),
        holds=holds,
        self_locked=self_locked,
    )
