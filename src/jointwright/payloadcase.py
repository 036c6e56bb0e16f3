"""Payload, stance and joint-space torque cases of the evaluator (:mod:`jointwright.evaluate`).

Each function takes the :class:`~jointwright.evaluate.Evaluator` (robot, joint indices) and a
prepared case and returns the case's metrics for D designs.
"""

from __future__ import annotations

import numpy as np

from .design import DesignArrays
from .metrics.loads import MOTION_SIGN, torque_ratio
from .metrics.payload import payload_along, torque_bounds
from .metrics.speed import payload_at_speed
from .preparedcase import PreparedCase
from .robot.basis import gravity

#: joint velocity components below this fraction of the largest count as zero (holding)
VELOCITY_TOLERANCE = 1e-9
#: a free joint's gravity torque at or below this is rounding, taken as 0 (N·m or N)
FREE_JOINT_TOLERANCE = 1e-9


def payload_case(
    ev, pc: PreparedCase, d: DesignArrays, detail: bool = True
) -> dict[str, np.ndarray]:
    """Tip force along u for three intended motions and with a frictionless transmission.

    ``payload_raise``: the tip moves along its force (pushing, lifting); ``payload_lower``:
    the tip yields (lowering, absorbing); ``payload_hold``: static, holding capacity both
    ways. ``payload`` is the one the case's ``motion`` names.
    """
    g = gravity(pc.basis, d.mass)
    if pc.tau_fixed is not None:  # the case's fixed moment loads the joints like gravity
        g = g + pc.tau_fixed
    bias = g[..., ev.v_index]
    cap_m, cap_b = d.capacity("motoring"), d.capacity("backdriven")
    if pc.case.tip_speed > 0:
        cap_m, cap_b = capacity_at_speed(ev, pc, d)
    a = pc.Jj.T @ pc.u if pc.load_a is None else pc.load_a[ev.v_index]
    # velocity_sign already points the way the case moves; flip it for the opposite motion
    along = pc.velocity_sign if pc.case.motion != "against" else -pc.velocity_sign
    own = {"along": "raise", "against": "lower", "hold": "hold"}[pc.case.motion]
    Jx, bias_x = with_free(ev, pc, g, bias)
    ray = pc.u
    if pc.load_a is not None:  # a wrench: the ray is τ_bias + s·a, one row a per newton
        Jx = np.concatenate([a, pc.load_a[ev.free_index]])[None, :]
        ray = np.ones(1)
    results = {}
    for label, s in (("raise", along), ("lower", -along), ("hold", np.zeros_like(along))):
        if detail or label == own:
            lo, hi = torque_bounds(np.broadcast_to(s, bias.shape), cap_m, cap_b)
            lo, hi = free_bounds(ev, lo, hi)
            results[label] = payload_along(Jx, bias_x, lo, hi, ray)
    main = results[own]
    out = {
        "payload": main.force,
        "limiting_joint": main.limiting_joint,
        "self_supporting": main.feasible,
    }
    if detail:
        cap_0 = d.capacity("frictionless")
        lo0, hi0 = free_bounds(ev, -cap_0, cap_0)
        out["payload_frictionless"] = payload_along(Jx, bias_x, lo0, hi0, ray).force
        for label in ("raise", "lower", "hold"):
            out[f"payload_{label}"] = results[label].force
        force = np.where(np.isfinite(main.force), main.force, 0.0)
        out["joint_torque"] = bias + force[..., None] * a
    return out


def torque_case(ev, case, d: DesignArrays) -> dict[str, np.ndarray]:
    """A joint-space case: per named joint, its capacity in the case's power-flow mode over
    the required torque (metrics.loads.torque_ratio); the smallest ratio and its joint."""
    names = list(ev.robot.actuated)
    cols = np.array([names.index(j) for j, _ in case.joint_torques], dtype=int)
    tau = np.array([v for _, v in case.joint_torques])
    sigma = np.array([MOTION_SIGN[m] for _, m in case.joint_motions])
    r = torque_ratio(
        tau, sigma, d.capacity("motoring")[..., cols], d.capacity("backdriven")[..., cols]
    )
    worst = np.min(r, axis=-1)
    return {
        "torque_ratio": worst,
        "limiting_joint": np.where(np.isfinite(worst), cols[np.argmin(r, axis=-1)], -1),
        "joint_torque_ratio": r,
    }


def free_gravity(ev, g: np.ndarray) -> np.ndarray:
    """Gravity torques of the free joints from the full vector ``g``; rounding taken as 0."""
    g_free = g[..., ev.free_index]
    return np.where(np.abs(g_free) <= FREE_JOINT_TOLERANCE, 0.0, g_free)


def with_free(ev, pc: PreparedCase, g: np.ndarray, bias: np.ndarray):
    """Tip Jacobian columns and bias torques of the actuated joints, then the free ones
    (``g``: the full gravity vector, already computed)."""
    if not ev.free_index.size:
        return pc.Jj, bias
    return (
        np.concatenate([pc.Jj, pc.J[:, ev.free_index]], axis=1),
        np.concatenate([bias, free_gravity(ev, g)], axis=-1),
    )


def free_bounds(ev, lo: np.ndarray, hi: np.ndarray):
    """Torque bounds with the free joints appended: a free joint carries no torque."""
    if not ev.free_index.size:
        return lo, hi
    zeros = np.zeros(lo.shape[:-1] + (ev.free_index.size,))
    return np.concatenate([lo, zeros], axis=-1), np.concatenate([hi, zeros], axis=-1)


def stance_case(
    ev, pc: PreparedCase, d: DesignArrays, detail: bool = True
) -> dict[str, np.ndarray]:
    """Robot-level payload on several contacts (second-order cone program per design).

    The load at ``frame`` pushes on the robot with s·(−u); the contacts push with forces in
    their friction cones; each joint's torque stays in its mode-dependent capacity.
    """
    from .metrics.contacts import solve_batch

    g = gravity(pc.basis, d.mass)
    p_jac, p_wrench = pc.J, -pc.u
    if pc.load_a is not None:  # a wrench (metrics.loads): force at the offset, fixed moment
        g = g + pc.tau_fixed
        p_jac = pc.basis.J[0]
        p_wrench = -np.concatenate([pc.u, np.cross(np.asarray(pc.case.offset), pc.u)])
    lo, hi = torque_bounds(
        np.broadcast_to(pc.velocity_sign, d.mass.shape),
        d.capacity("motoring"),
        d.capacity("backdriven"),
    )
    n = lo.shape[-1]
    rows = ev.v_index
    if ev.held_index.size:  # held joints: rows with any torque (the structure takes it)
        rows = np.concatenate([rows, ev.held_index])
        inf = np.full(lo.shape[:-1] + (ev.held_index.size,), np.inf)
        lo, hi = np.concatenate([lo, -inf], axis=-1), np.concatenate([hi, inf], axis=-1)
    frames = pc.case.contacts
    share = pc.case.contact_share_min
    normals = np.array([c[2] for c in frames])
    statics = dict(  # the pose's contacts and load: the same for every solve below
        actuated=rows,
        gravity=g,
        contact_jacobians=pc.contact_J,
        normals=normals,
        friction=np.array([c[1] for c in frames]),
        payload_jacobian=p_jac,
        payload_wrench=p_wrench,
    )
    res = solve_batch(**statics, share_min=share, tau_low=lo, tau_high=hi)
    lo_all, hi_all = lo, hi  # with the held joints' rows
    lo, hi = lo[..., :n], hi[..., :n]
    ok = res.status == "optimal"
    payload = np.where(ok, np.nan_to_num(res.payload, nan=0.0), 0.0)
    payload = np.where(res.status == "unbounded", np.inf, payload)
    span = np.where(np.isfinite(hi - lo), hi - lo, 1.0)
    tight = np.where(res.torque_at_high[..., :n] | res.torque_at_low[..., :n], 1.0, 0.0)
    limiting = np.where(tight.any(axis=-1), np.argmax(tight / span, axis=-1), -1)
    out = {"payload": payload, "limiting_joint": limiting, "self_supporting": ok}
    if detail:
        if not np.all(ok):  # why not: is it the joints, or the contacts and balance?
            inf = np.full(lo.shape[:-1] + (rows.size,), np.inf)
            rigid = solve_batch(**statics, share_min=share, tau_low=-inf, tau_high=inf)
            out["holds_with_unlimited_torque"] = rigid.status != "infeasible"
            if share > 0:  # is it the share? the same joints, any distribution of the load
                loose = solve_batch(**statics, tau_low=lo_all, tau_high=hi_all)
                out["holds_without_share"] = loose.status == "optimal"
        out["contact_force_z"] = res.contact_forces[..., 2]  # the vertical (world z) part
        out["slipping_contacts"] = res.cone_binding.sum(axis=-1)
        # friction used: tangential force over μ·(normal force), 1 at the cone (about to slip)
        f_n = np.einsum("...kc,kc->...k", res.contact_forces, normals)
        out["contact_force_normal"] = f_n  # along each contact's own normal (a slope's too)
        f_t = np.linalg.norm(res.contact_forces - f_n[..., None] * normals, axis=-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            out["friction_use"] = np.where(
                f_t <= 1e-9 * np.maximum(1.0, f_n), 0.0, f_t / (statics["friction"] * f_n)
            )
        if share > 0:  # contacts held at their least share of the total normal force
            total = f_n.sum(axis=-1, keepdims=True)
            at = ok[..., None] & (f_n <= share * total + 1e-6 * np.maximum(1.0, total))
            out["contacts_at_share"] = at.sum(axis=-1)
        out["joint_torque"] = res.joint_torques[..., :n]
    return out


def capacity_at_speed(ev, pc: PreparedCase, d: DesignArrays):
    """Drive and holding capacity with each motor at the speed the tip motion needs.

    The envelope is taken at the winding temperature limit (hot winding: the conservative
    end); motors without electrical data use the corner-point envelope.
    """
    qd = np.linalg.pinv(pc.Jj) @ pc.u * pc.case.tip_speed
    known = ~(np.isnan(d.torque_constant) | np.isnan(d.resistance) | np.isnan(d.bus_voltage))
    cap = payload_at_speed(
        qd,
        d.ratio,
        eta_f=d.eta_forward,
        eta_b=d.eta_backward,
        gear_rating=d.gear_peak_torque,
        peak_torque=d.motor_peak_torque,
        max_speed=d.motor_max_speed,
        torque_constant=np.where(known, d.torque_constant, 1.0),
        resistance=np.where(known, d.resistance, 1.0),
        bus_voltage=np.where(known, d.bus_voltage, np.inf),
        winding_temperature=d.winding_temperature_max,
    )
    hold = np.where(d.self_locking, d.gear_peak_torque, cap.backdriven)
    return cap.forward, hold


def stance_velocity_sign(contact_J, J, u, motion, v_index) -> np.ndarray:
    """Joint velocity signs when the load point moves along u (``along``) or against it, with
    every contact point fixed: minimum-norm solution of [J_c; J_p]·q̇ = [0; ±u]."""
    A = np.concatenate([contact_J.reshape(-1, contact_J.shape[-1]), J], axis=0)
    b = np.concatenate([np.zeros(contact_J.shape[0] * 3), u if motion == "along" else -u])
    qd = np.linalg.lstsq(A, b, rcond=None)[0][v_index]
    big = np.abs(qd).max() if qd.size else 0.0
    return np.where(np.abs(qd) > VELOCITY_TOLERANCE * max(big, 1e-300), np.sign(qd), 0.0)
