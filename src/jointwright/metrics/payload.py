"""Payload force at a tip: mode-dependent torque bounds, force along a ray, support function.

Sign convention (shared with :mod:`.polytope`): the robot exerts the force F on the environment at
the tip; the joint torques it needs are τ = τ_bias + Jᵀ·F, with τ_bias = g(q) + M(q)·q̈ + c(q, q̇)
the torque the robot needs for its own motion. To lift a payload the robot pushes up on it:
u points against gravity.

Two different numbers are offered and named apart:

* :func:`payload_along` — the largest s ≥ 0 with τ_bias + s·Jᵀ·u inside the bounds: the force
  the robot can exert *along the ray* u (closed form, vectorized);
* :func:`max_force_component` — max uᵀ·F over the whole force polytope (the support function,
  one LP per pose). It is ≥ the ray value; the maximizing F is generally not parallel to u.

Power-flow modes (DESIGN §2.3): a joint whose torque and velocity have the same sign is
*motoring* (capacity η_f·N·τ_m,max), opposite signs is *back-driven* (holding capacity
N·τ_m,max/η_b, +inf for a self-locking stack), and a joint at rest is *holding*.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .linalg_small import API, batch_shape, check_size, checked, unit_vectors

#: mode codes returned by :func:`joint_modes`
MOTORING = 1
HOLDING = 0
BACKDRIVEN = -1


def torque_bounds(velocity_sign, motoring_capacity, backdriven_capacity):
    """Joint torque interval [τ_low, τ_high] for the intended motion of each joint.

    For σ = +1 a positive torque is motoring and a negative one back-driven:
    τ_low = −C_b, τ_high = C_f. For σ = −1 mirrored: τ_low = −C_f, τ_high = C_b. For σ = 0
    (static hold) the holding capacity applies both ways: τ_low = −C_b, τ_high = C_b.

    Parameters
    ----------
    velocity_sign : array (..., n) of −1, 0 or +1
        Sign σ of each joint's intended velocity (from the end-point motion of the case).
    motoring_capacity : array (..., n), N·m (N for prismatic joints), ≥ 0
        C_f = η_f·N·τ_m,max, already capped by the gear rating.
    backdriven_capacity : array (..., n), N·m, ≥ 0, may be +inf (self-locking)
        C_b = N·τ_m,max/η_b, already capped by the gear rating.

    Returns
    -------
    tau_low, tau_high : arrays (..., n), N·m
    """
    sigma = checked(velocity_sign, "velocity_sign", 1)
    if not np.isin(sigma, (-1.0, 0.0, 1.0)).all():
        raise InputError(API, "velocity_sign", "every entry must be -1, 0 or +1")
    c_f = _capacity(motoring_capacity, "motoring_capacity")
    c_b = _capacity(backdriven_capacity, "backdriven_capacity")
    batch_shape(velocity_sign=(sigma, 1), motoring_capacity=(c_f, 1), backdriven_capacity=(c_b, 1))
    n = sigma.shape[-1]
    check_size(c_f, "motoring_capacity", -1, n, "entries (one per joint)")
    check_size(c_b, "backdriven_capacity", -1, n, "entries (one per joint)")
    tau_high = np.where(sigma > 0, c_f, c_b)
    tau_low = -np.where(sigma < 0, c_f, c_b)
    return tau_low, tau_high


def _capacity(value, name):
    c = checked(value, name, 1, allow_inf=True)
    if (c < 0).any():
        raise InputError(API, name, "must be >= 0 N·m")
    return c


def joint_modes(tau, velocity_sign) -> np.ndarray:
    """Power-flow mode code of each joint: MOTORING (+1), BACKDRIVEN (−1) or HOLDING (0).

    Mode = sign(τ·σ): motoring when the joint torque and velocity agree, back-driven when they
    oppose; HOLDING when σ = 0 (static hold, holding capacity applies) or τ = 0 (no power
    through the transmission).

    Parameters
    ----------
    tau : array (..., n), joint torques, N·m
    velocity_sign : array (..., n) of −1, 0, +1

    Returns
    -------
    int8 array (..., n)
    """
    tau = checked(tau, "tau", 1)
    sigma = checked(velocity_sign, "velocity_sign", 1)
    if not np.isin(sigma, (-1.0, 0.0, 1.0)).all():
        raise InputError(API, "velocity_sign", "every entry must be -1, 0 or +1")
    batch_shape(tau=(tau, 1), velocity_sign=(sigma, 1))
    return np.sign(tau * sigma).astype(np.int8)


def _limits(J, tau_bias, tau_low, tau_high):
    J = checked(J, "J", 2)
    n = J.shape[-1]
    bias = checked(tau_bias, "tau_bias", 1)
    low = checked(tau_low, "tau_low", 1, allow_inf=True)
    high = checked(tau_high, "tau_high", 1, allow_inf=True)
    for name, v in (("tau_bias", bias), ("tau_low", low), ("tau_high", high)):
        check_size(v, name, -1, n, "entries (one per column of J)")
    if np.any(low > high):
        raise InputError(API, "tau_low/tau_high", "tau_low must be <= tau_high for every joint")
    if np.any(low == np.inf) or np.any(high == -np.inf):
        raise InputError(API, "tau_low/tau_high", "tau_low must be < +inf and tau_high > -inf")
    return J, bias, low, high


@dataclass(frozen=True)
class PayloadAlong:
    """Largest force along a ray that the joints can exert.

    Attributes
    ----------
    force : array (...), N
        s* ≥ 0; ``+inf`` when no joint limits it; 0 where ``feasible`` is False (never NaN).
    limiting_joint : int array (...)
        Index of the joint whose bound stops the ray (the lowest index on ties), −1 when
        nothing limits it; where ``feasible`` is False, the joint with the largest violation
        at s = 0.
    feasible : bool array (...)
        False when τ_bias alone is outside the bounds: the robot cannot hold itself.
    """

    force: np.ndarray
    limiting_joint: np.ndarray
    feasible: np.ndarray


def payload_along(J, tau_bias, tau_low, tau_high, u) -> PayloadAlong:
    """Largest force along the ray u: s* = max{s ≥ 0 : τ_low ≤ τ_bias + s·Jᵀu ≤ τ_high}.

    Closed-form ratio test of the one-variable LP (Chiacchio et al. 1997 [mem]): with a = Jᵀ·û,
    each joint gives s ≤ (τ_high,i − τ_bias,i)/a_i for a_i > 0 and s ≤ (τ_low,i − τ_bias,i)/a_i
    for a_i < 0; s* is the smallest of these.

    Parameters
    ----------
    J : array (..., m, n)
        Tip Jacobian (m = 3 for a point, 6 with moments; 1 for prismatic, m/rad for revolute).
    tau_bias : array (..., n), N·m
        g(q) + M(q)·q̈ + c(q, q̇): the torques of the robot's own motion.
    tau_low, tau_high : arrays (..., n), N·m, ±inf allowed (see :func:`torque_bounds`)
    u : array (..., m), nonzero direction of the force the robot exerts (normalized here)

    Returns
    -------
    PayloadAlong
        ``force`` in N along û (N·m for a rotational direction).
    """
    J, bias, low, high = _limits(J, tau_bias, tau_low, tau_high)
    u = unit_vectors(u, "u", J.shape[-2])
    batch_shape(J=(J, 2), tau_bias=(bias, 1), tau_low=(low, 1), tau_high=(high, 1), u=(u, 1))
    a = np.einsum("...mn,...m->...n", J, u)
    slack_high = high - bias
    slack_low = low - bias
    violation = np.maximum(-slack_high, slack_low)
    feasible = ~np.any(violation > 0.0, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # a → 0: no limit
        ratio = np.where(a > 0, slack_high / a, np.where(a < 0, slack_low / a, np.inf))
    ratio = np.where(np.isnan(ratio), np.inf, np.maximum(ratio, 0.0))
    joint = np.argmin(ratio, axis=-1)
    s = np.take_along_axis(ratio, joint[..., None], axis=-1)[..., 0]
    joint = np.where(np.isinf(s), -1, joint)
    worst = np.argmax(violation, axis=-1)
    return PayloadAlong(
        force=np.where(feasible, s, 0.0),
        limiting_joint=np.where(feasible, joint, worst),
        feasible=feasible,
    )


@dataclass(frozen=True)
class MaxForceComponent:
    """Support function of the force polytope in direction u.

    Attributes
    ----------
    value : array (...), N
        max uᵀ·F over the polytope; ``+inf`` when unbounded; ``−inf`` when the polytope is empty.
    force : array (..., m), N
        A maximizing F (zeros where unbounded or empty).
    nonempty : bool array (...)
        Some F satisfies every bound. This can hold although τ_bias alone violates a bound
        (pushing on the environment can help the robot hold itself).
    bounded : bool array (...)
    """

    value: np.ndarray
    force: np.ndarray
    nonempty: np.ndarray
    bounded: np.ndarray


def max_force_component(J, tau_bias, tau_low, tau_high, u) -> MaxForceComponent:
    """Largest component uᵀ·F of any force F in the polytope τ_low ≤ τ_bias + Jᵀ·F ≤ τ_high.

    This is the support function h(u) = max{uᵀF : F in P}, solved as one LP per pose with
    ``scipy.optimize.linprog`` (HiGHS). Unlike :func:`payload_along` (force *along* u), the
    maximizing F may point elsewhere; h(û) ≥ payload_along whenever the latter is feasible.

    Parameters
    ----------
    J : array (..., m, n)
    tau_bias, tau_low, tau_high : arrays (..., n), N·m (bounds may be ±inf)
    u : array (..., m), nonzero (normalized here)

    Returns
    -------
    MaxForceComponent
    """
    from scipy.optimize import linprog

    J, bias, low, high = _limits(J, tau_bias, tau_low, tau_high)
    m = J.shape[-2]
    u = unit_vectors(u, "u", m)
    batch = batch_shape(
        J=(J, 2), tau_bias=(bias, 1), tau_low=(low, 1), tau_high=(high, 1), u=(u, 1)
    )
    n = J.shape[-1]
    Jb = np.broadcast_to(J, batch + J.shape[-2:])
    arrays = [np.broadcast_to(v, batch + (n,)) for v in (bias, low, high)]
    ub = np.broadcast_to(u, batch + (m,))
    value = np.empty(batch)
    force = np.zeros(batch + (m,))
    nonempty = np.ones(batch, dtype=bool)
    bounded = np.ones(batch, dtype=bool)
    for idx in np.ndindex(*batch):
        a_ub, b_ub = halfspaces(Jb[idx], arrays[0][idx], arrays[1][idx], arrays[2][idx])
        res = linprog(-ub[idx], A_ub=a_ub, b_ub=b_ub, bounds=[(None, None)] * m, method="highs")
        if res.status == 0:
            value[idx] = -res.fun
            force[idx] = res.x
        elif res.status == 2:
            value[idx], nonempty[idx] = -np.inf, False
        elif res.status == 3:
            value[idx], bounded[idx] = np.inf, False
        else:
            raise RuntimeError(f"linprog failed at batch index {idx}: {res.message}")
    return MaxForceComponent(value=value, force=force, nonempty=nonempty, bounded=bounded)


def halfspaces(J, tau_bias, tau_low, tau_high) -> tuple[np.ndarray, np.ndarray]:
    """The finite joint bounds of one pose as A·F ≤ b (rows Jᵢᵀ·F ≤ τ_high,i − τ_bias,i and
    −Jᵢᵀ·F ≤ τ_bias,i − τ_low,i); infinite bounds give no row.

    Parameters
    ----------
    J : array (m, n); tau_bias, tau_low, tau_high : arrays (n,), N·m

    Returns
    -------
    A : array (k, m), 1 or m/rad; b : array (k,), N·m
    """
    jt = np.asarray(J, dtype=float).T
    rows = [jt, -jt]
    rhs = [tau_high - tau_bias, tau_bias - tau_low]
    a = np.concatenate(rows)
    b = np.concatenate(rhs)
    keep = np.isfinite(b)
    return a[keep], b[keep]
