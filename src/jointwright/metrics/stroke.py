"""Speed the end point reaches from rest within a stroke, carrying the load.

At end-point speed v the largest acceleration along û is α(v) = min over joints of the first
acceleration at which the joint leaves its limits (:func:`.acceleration._acceleration_exits`
with the speed's Coriolis torques and the motor line's back-EMF). Every exit is a fraction
whose numerator is a quadratic in v and whose denominator does not depend on v, so α is a
piecewise quadratic P(v) = e0 + e1·v + e2·v². The distance to reach v is
x(v) = ∫₀ᵛ w/α(w) dw and the time t(v) = ∫₀ᵛ dw/α(w); on each piece both have closed forms
(logarithms, or an arctangent when P has no real root), and the speed reached within the
stroke solves x(v) = stroke on the piece where the stroke ends.

The pieces are found at ``nodes`` + 1 evenly spaced speeds from 0 to the steady loaded speed:
α is evaluated there, the quadratic each value comes from is identified among the joint's
candidate exits, and where two neighbouring nodes come from different quadratics the switch is
where they cross. A design whose switch is not such a crossing (a jump of α, or a node whose
value matches no candidate) is evaluated again on a grid ``REFINE`` times finer, up to
``MAX_NODES``; there a remaining switch is placed mid-interval. A quadratic that is the least
only strictly between two nodes is not seen.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .acceleration import _acceleration_exits
from .envelope import REFERENCE_TEMPERATURE, _line, check_positive
from .loaded import LoadedSpeed, loaded_endpoint_speed
from .speed import _direction_rates, check_efficiencies
from .stroke_integrals import invert_distance, piece_integrals

#: speeds (intervals) of the first pass; a design whose pieces are not resolved there is
#: evaluated again on a grid REFINE times finer, up to MAX_NODES intervals
NODES = 8
REFINE = 8
MAX_NODES = 512
#: relative agreement between α at a node and the candidate quadratic it is identified with
MATCH_TOLERANCE = 1e-7
#: relative distance below v* at which α is taken as its value at v* (its limit from below)
LEFT_LIMIT = 1e-9

_PARAMS = ("t0", "c2", "k", "a", "sigma", "n", "eta_f", "eta_b", "ir", "peak", "A", "B", "gear")


@dataclass(frozen=True)
class StrokeSpeed:
    """End-point speed reached from rest within a stroke (arrays over ``...``).

    Attributes
    ----------
    speed : ndarray (...)
        Speed reached after accelerating along u over the stroke with the load carried, at
        each speed as fast as the motors allow (m/s); at most ``steady_speed``.
    steady_speed : ndarray (...)
        The loaded speed of :func:`.loaded.loaded_endpoint_speed` (the motors' limit along the
        motion).
    limiting_joint : ndarray of int (...)
        The joint that limits the acceleration at the reached speed (−1 if none).
    time : ndarray (...)
        Time to reach ``speed`` over the stroke, s.
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
    nodes=NODES,
    steady: LoadedSpeed | None = None,
    **motor,
) -> StrokeSpeed:
    """Speed the end point reaches from rest along u within a stroke, carrying the load.

    At end-point speed v the largest acceleration along u is α(v): joint torques
    τ_j = τ_load + v²·c(q, a) + α·(M·a + m_p·Jᵀ·û), each motor inside its envelope at its speed
    (the limits of :func:`.loaded.loaded_endpoint_speed`, the rotor term N·I_r·a·α included),
    |τ_j| within the gear rating. The distance to reach v is x(v) = ∫₀ᵛ w/α(w) dw, integrated
    in closed form piece by piece (module docstring); the answer is the v with x(v) = stroke,
    or the steady loaded speed v* when the stroke is long enough to reach it (where α(v*) = 0
    the distance to v* is infinite and v* is approached, never reached). Quasi-static in the
    joint path: q̇ = a·v, q̈ = a·α with a = J⁺·û at the case's pose (the pose is not advanced
    along the stroke).

    Parameters are those of :func:`.loaded.loaded_endpoint_speed` and
    :func:`.acceleration.acceleration_from_rest`, plus ``stroke`` (m along u, > 0) and
    ``nodes`` (intervals of the first pass that finds the pieces of α, ≥ 1) and ``steady``:
    the caller's :func:`.loaded.loaded_endpoint_speed` for the same arguments (no joint
    acceleration), when it has it, so that it is not computed twice.

    Returns
    -------
    StrokeSpeed
    """
    stroke = check_positive("stroke", stroke)
    if not int(nodes) >= 1:
        raise InputError("<api>", "nodes", f"must be an integer >= 1, got {nodes!r}")
    steady = steady or loaded_endpoint_speed(
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
    peak = check_positive("peak_torque", motor["peak_torque"])
    line = _line(
        motor.get("torque_constant"),
        motor.get("resistance"),
        motor.get("bus_voltage"),
        motor.get("winding_temperature", REFERENCE_TEMPERATURE),
    )
    rate = n * np.abs(a) * (sigma != 0)
    if line is None:
        A, B = np.full(np.shape(rate), np.inf), np.zeros(np.shape(rate))
    else:
        kt, v_bus, r_hot = line
        A = np.broadcast_to(kt * v_bus / r_hot, np.shape(rate))
        B = np.where(np.isfinite(A), kt * kt / r_hot * rate, 0.0)
    top = np.where(np.isfinite(steady.speed), steady.speed, 0.0)
    shape = top.shape
    values = (t0, c2, k, a, sigma, n, eta_f, eta_b, rotor_inertia, peak, A, B, gear)
    joints = np.broadcast_shapes(*(np.shape(x) for x in values), shape + (1,))
    joints = shape + joints[-1:]
    p = {
        name: np.broadcast_to(np.asarray(x, dtype=float), joints).reshape(-1, joints[-1])
        for name, x in zip(_PARAMS, values, strict=True)
    }
    top_f = top.reshape(-1)
    stroke_f = np.broadcast_to(stroke, shape).reshape(-1)
    speed, time, joint = _resolve(p, top_f, stroke_f, int(nodes))
    speed, time, joint = speed.reshape(shape), time.reshape(shape), joint.reshape(shape)
    ok = reachable & steady.carries_load
    speed = np.where(ok, speed, 0.0)
    time = np.where(ok, time, 0.0)
    joint = np.where(ok, joint, steady.limiting_joint)
    return StrokeSpeed(speed=speed, steady_speed=steady.speed, limiting_joint=joint, time=time)


def _resolve(p, top, stroke, nodes):
    """Speed, time and limiting joint per design (flat arrays), refining unresolved designs."""
    speed, time, joint, bad = _stroke(p, top, stroke, nodes, nodes >= MAX_NODES)
    while np.any(bad) and nodes < MAX_NODES:
        nodes = min(nodes * REFINE, MAX_NODES)
        idx = np.flatnonzero(bad)
        sub = {name: x[idx] for name, x in p.items()}
        s, t, j, b = _stroke(sub, top[idx], stroke[idx], nodes, nodes >= MAX_NODES)
        speed[idx], time[idx], joint[idx] = s, t, j
        bad = np.zeros_like(bad)
        bad[idx] = b
    return speed, time, joint


def _alpha_at(p, v):
    """α(v) per design and node (D, K+1), and the joint that sets it: one node at a time
    (arrays of D × joints stay in cache; a batch over the nodes was twice as slow), or, for few
    designs on many nodes, every (design, node) pair as one batch."""
    D, m = v.shape
    if m > 1 and D < 1024:
        flat = {name: np.repeat(x, m, axis=0) for name, x in p.items()}
        alpha, joint = _alpha_at(flat, v.reshape(-1, 1))
        return alpha.reshape(D, m), joint.reshape(D, m)
    alpha, joint = np.empty(v.shape), np.empty(v.shape, dtype=int)
    for i in range(v.shape[1]):
        vv = v[:, i : i + 1]
        hi = np.minimum(p["peak"], p["A"] - p["B"] * vv)
        lo = np.minimum(p["peak"], p["A"] + p["B"] * vv)
        ex = _acceleration_exits(
            p["t0"] + p["c2"] * vv * vv,
            p["k"],
            p["a"],
            p["sigma"],
            p["n"],
            p["eta_f"],
            p["eta_b"],
            p["ir"],
            hi,
            lo,
            p["gear"],
        )
        joint[:, i] = np.argmin(ex, axis=-1)
        alpha[:, i] = np.take_along_axis(ex, joint[:, i : i + 1], axis=-1)[:, 0]
    return alpha, joint


def _exit_quadratic(p, v, alpha):
    """Coefficients (e0, e1, e2) of the exit α = e0 + e1·v + e2·v² that gives the joint's value
    ``alpha`` at speed ``v`` (all arrays (..., ) of that joint's parameters): read from the
    joint torque τ = τ(v) + k·α and the motor torque at the exit — the gear rating when |τ| is
    at it, the mode break when τ = 0, else the motor's driving (σ·τ_m ≥ 0) or braking limit in
    the joint's power-flow mode, at its peak or on its line, whichever is lower at v."""
    t0, c2, k, A, B, peak, n = p["t0"], p["c2"], p["k"], p["A"], p["B"], p["peak"], p["n"]
    sigma = p["sigma"]
    s = np.where(sigma == 0, 1.0, sigma)
    with np.errstate(divide="ignore", invalid="ignore"):
        tv = t0 + c2 * v * v
        tau = tv + k * alpha
        f = np.where(
            sigma == 0,
            np.maximum(p["eta_b"], 0.0),
            np.where(tau * sigma > 0, 1.0 / p["eta_f"], p["eta_b"]),
        )
        p1 = s * (f * k / n + n * p["ir"] * p["a"])
        b0 = s * f * t0 / n
        up = s * f * tau / n + s * n * p["ir"] * p["a"] * alpha >= 0
        on_line = np.where(up, A - B * v, A + B * v) < peak
        limit = np.where(on_line, A, peak)
        e0 = np.where(up, limit - b0, -(b0 + limit)) / p1
        e1 = np.where(on_line, -B / p1, 0.0)
        e2 = -s * f * c2 / (n * p1)
        gear = np.abs(tau) >= p["gear"] * (1.0 - 1e-9)
        brk = np.abs(tau) <= 1e-9 * (np.abs(tv) + np.abs(k * alpha))
        g0 = np.where(brk, -t0, np.where(tau > 0, p["gear"], -p["gear"]) - t0) / k
        joint_side = gear | brk
        e0 = np.where(joint_side, g0, e0)
        e1 = np.where(joint_side, 0.0, e1)
        e2 = np.where(joint_side, -c2 / k, e2)
    return np.stack([e0, e1, e2], axis=-1)


def _poly(c, v):
    return c[..., 0] + v * (c[..., 1] + v * c[..., 2])


def _stroke(p, top, stroke, nodes, force):
    """One pass on ``nodes`` intervals: speed, time, joint and whether the pieces were
    resolved (with ``force`` an unresolved switch is placed mid-interval and counts as
    resolved)."""
    D = top.shape[0]
    v = top[:, None] * (np.arange(nodes + 1) / nodes)
    # the last node just below v*: at v* itself a joint leaves its limits at α = 0, which can
    # be a jump (a holding joint's Coriolis torque reaching its motor's peak) rather than the
    # end of α's last piece, and a single speed does not change the integral
    v_eval = np.concatenate([v[:, :-1], v[:, -1:] * (1.0 - LEFT_LIMIT)], axis=1)
    alpha, joint = _alpha_at(p, v_eval)
    flat = np.arange(D)[:, None] * p["t0"].shape[1] + joint  # the limiting joint per node
    at_joint = {name: x.reshape(-1)[flat] for name, x in p.items()}
    coef = _exit_quadratic(at_joint, v_eval, alpha)
    with np.errstate(invalid="ignore"):
        miss = np.abs(_poly(coef, v_eval) - alpha)
    free = np.isinf(alpha)  # nothing limits the acceleration: a piece crossed in no time
    stop = alpha <= 0  # the load cannot be carried faster: a piece never crossed
    coef = np.where(free[..., None], np.array([np.inf, 0.0, 0.0]), coef)
    coef = np.where(stop[..., None], 0.0, coef)
    scale = MATCH_TOLERANCE * (np.abs(alpha) + np.abs(alpha[:, :1]))
    matched = free | stop | (miss <= scale)
    coef = np.where(np.isfinite(coef), coef, np.nan)
    # pieces: each interval [v_i, v_i+1] is [v_i, w_i] on node i's quadratic and [w_i, v_i+1]
    # on node i+1's, w_i their crossing (v_i+1 when they are the same)
    cL, cR = coef[:, :-1], coef[:, 1:]
    vL, vR = v[:, :-1], v[:, 1:]
    same = np.all(cL == cR, axis=-1)
    w, crossed = _crossing(cL - cR, vL, vR, scale[:, :-1])
    # α at each crossing must be the two quadratics' common value; where it is lower, a third
    # piece lies in the interval (a joint's peak giving way to its motor line, say)
    di, ki = np.nonzero(crossed & ~same)
    if di.size:
        aw, _ = _alpha_at({name: x[di] for name, x in p.items()}, w[di, ki][:, None])
        pw = _poly(cL[di, ki], w[di, ki])
        wrong = ~(np.abs(aw[:, 0] - pw) <= scale[di, ki] + MATCH_TOLERANCE * np.abs(pw))
        crossed[di[wrong], ki[wrong]] = False
    resolved = same | crossed
    if force:
        w = np.where(resolved, w, 0.5 * (vL + vR))
    w = np.where(same, vR, w)
    # distance and time over each interval: node i's quadratic up to w_i, then (where the
    # interval holds a switch, a few per design) node i+1's
    x1, t1 = piece_integrals(vL, w - vL, *_local(cL, vL))
    x2, t2 = np.zeros_like(x1), np.zeros_like(t1)
    si, sk = np.nonzero(w < vR)
    if si.size:
        ws = w[si, sk]
        x2[si, sk], t2[si, sk] = piece_integrals(ws, vR[si, sk] - ws, *_local(cR[si, sk], ws))
    x, t = x1 + x2, t1 + t2
    # sums before each interval (x ≥ 0: no inf − inf)
    before = np.concatenate([np.zeros((D, 1)), np.cumsum(x, axis=-1)[:, :-1]], axis=-1)
    t_before = np.concatenate([np.zeros((D, 1)), np.cumsum(t, axis=-1)[:, :-1]], axis=-1)
    ends_here = before + x >= stroke[:, None]
    finishes = np.any(ends_here, axis=-1)
    m = np.where(finishes, np.argmax(ends_here, axis=-1), nodes - 1)
    rows = np.arange(D)
    first = before[rows, m] + x1[rows, m] >= stroke  # ends on node m's quadratic
    w0 = np.where(first, vL[rows, m], w[rows, m])
    h_max = np.where(first, w[rows, m] - w0, vR[rows, m] - w0)
    c = np.where(first[:, None], cL[rows, m], cR[rows, m])
    target = stroke - before[rows, m] - np.where(first, 0.0, x1[rows, m])
    q0, q1, q2 = _local(c, w0)
    h = invert_distance(w0, h_max, q0, q1, q2, np.where(finishes, target, 0.0))
    _, t_part = piece_integrals(w0, h, q0, q1, q2)
    speed = np.where(finishes, w0 + h, top)
    time = t_before[rows, m] + np.where(
        finishes, np.where(first, 0.0, t1[rows, m]) + t_part, t[rows, m]
    )
    limiting = np.where(finishes, joint[rows, m + (~first).astype(int)], joint[:, -1])
    bad = ~(np.all(matched, axis=-1) & np.all(resolved, axis=-1))
    return speed, time, limiting, bad & ~force


def _crossing(d, vL, vR, scale):
    """Speed in [vL, vR] where the difference of two quadratics d (node i's minus node i+1's)
    changes sign from ≤ 0 to ≥ 0, and whether it does (α is the lesser of the two there)."""
    dL, dR = _poly(d, vL), _poly(d, vR)
    H = vR - vL
    c0, c1, c2 = dL, d[..., 1] + 2.0 * d[..., 2] * vL, d[..., 2]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        ok = (dL <= scale) & (dR >= -scale) & np.isfinite(dL) & np.isfinite(dR)
        disc = np.maximum(c1 * c1 - 4.0 * c2 * c0, 0.0)
        q = -0.5 * (c1 + np.copysign(np.sqrt(disc), c1))
        r1 = np.where(c2 != 0, q / np.where(c2 != 0, c2, 1.0), np.inf)
        r2 = np.where(q != 0, c0 / np.where(q != 0, q, 1.0), np.inf)
        inside1 = (r1 >= -1e-12 * H) & (r1 <= H * (1 + 1e-12))
        inside2 = (r2 >= -1e-12 * H) & (r2 <= H * (1 + 1e-12))
        h = np.where(inside2, r2, np.where(inside1, r1, np.nan))
    ok = ok & np.isfinite(h)
    h = np.clip(np.where(ok, h, 0.0), 0.0, H)
    return vL + h, ok


def _local(c, w0):
    """P(w0 + h) = p0 + p1·h + p2·h² for the quadratic with coefficients c."""
    return _poly(c, w0), c[..., 1] + 2.0 * c[..., 2] * w0, c[..., 2]
