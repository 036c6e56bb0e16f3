"""Speed cases of the evaluator (:mod:`jointwright.evaluate`): end-point speed under load,
acceleration from rest, the speed reached within a stroke, and the pose's Coriolis terms.
"""

from __future__ import annotations

import numpy as np

from .design import DesignArrays
from .metrics.acceleration import acceleration_from_rest
from .metrics.loaded import loaded_endpoint_speed
from .metrics.speed import endpoint_speed
from .metrics.stroke import speed_within_stroke
from .payloadcase import FREE_JOINT_TOLERANCE, free_gravity
from .preparedcase import PreparedCase
from .robot.basis import gravity, mass_matrix


def speed_case(ev, pc: PreparedCase, d: DesignArrays, detail: bool = True) -> dict[str, np.ndarray]:
    """End-point speed along u under the case's load, acceleration from rest, no-load speed.

    Load: gravity of links and actuators, the payload mass at the frame (its weight and, with
    ``acceleration``, its inertia), the force the tip exerts (``tip_force``), M·q̈ for the
    commanded end-point acceleration and the Coriolis and centrifugal torques of links and
    actuators (base held, as for payload cases; the joints move along q̇ = J⁺·u·v,
    q̈ = J⁺·u·acceleration). Motors: torque–speed envelope at the hot winding (corner-point
    envelope without electrical data), each joint in its power-flow mode. With ``stroke``,
    ``speed`` is the speed reached from rest within it (metrics.stroke.speed_within_stroke).
    """
    case = pc.case
    n_act = len(ev.v_index)
    a = np.linalg.pinv(pc.Jj) @ pc.u
    weight = case.payload_mass * (-ev.robot.gravity)  # force the tip exerts to carry the payload
    g = gravity(pc.basis, d.mass)
    tau_rest, tau_per_acc, c2 = load_terms(ev, pc, d.mass, g)
    acc = case.acceleration
    motor = motor_of(
        d.motor_peak_torque,
        d.motor_max_speed,
        d.torque_constant,
        d.resistance,
        d.bus_voltage,
        d.winding_temperature_max,
    )
    trans = dict(
        eta_f=d.eta_forward,
        eta_b=d.eta_backward,
        rotor_inertia=d.rotor_inertia,
        gear_rating=d.gear_peak_torque,
    )
    loaded = loaded_endpoint_speed(
        pc.Jj,
        tau_rest + acc * tau_per_acc,
        pc.u,
        d.ratio,
        tau_per_speed2=c2,
        joint_acceleration=np.broadcast_to(a * acc, (n_act,)),
        **trans,
        **motor,
    )
    accel = acceleration_from_rest(pc.Jj, tau_rest, tau_per_acc, pc.u, d.ratio, **trans, **motor)
    speed, limiting = loaded.speed, loaded.limiting_joint
    extra = {}
    if case.stroke > 0:
        within = speed_within_stroke(
            pc.Jj,
            tau_rest,
            tau_per_acc,
            pc.u,
            d.ratio,
            case.stroke,
            tau_per_speed2=c2,
            # the loaded speed above is the same figure when no acceleration is commanded
            steady=loaded if acc == 0 else None,
            **trans,
            **motor,
        )
        speed, limiting = within.speed, within.limiting_joint
        extra = {"speed_steady": loaded.speed, "stroke_time": within.time}
    carries = loaded.carries_load
    if ev.free_index.size:
        # a free joint carries no torque: a load that needs torque there cannot be carried
        # (the motion is held still at the free joints; their weight and the load's share)
        Jf = pc.J[:, ev.free_index]
        tau_free = free_gravity(ev, g) + Jf.T @ (weight + np.asarray(case.tip_force, dtype=float))
        stuck = np.any(np.abs(tau_free) > FREE_JOINT_TOLERANCE, axis=-1)
        carries = carries & ~stuck
        speed = np.where(stuck, 0.0, speed)
        accel_value = np.where(stuck, 0.0, accel.acceleration)
        limiting = np.where(stuck, len(ev.v_index) + np.argmax(np.abs(tau_free), axis=-1), limiting)
    else:
        accel_value = accel.acceleration
    out = {
        "speed": speed,
        "limiting_joint": limiting,
        **extra,
        "carries_load": carries,
        "acceleration": accel_value,
        "acceleration_limiting_joint": accel.limiting_joint,
    }
    if detail:
        out["speed_no_load"] = endpoint_speed(pc.Jj, d.motor_max_speed / d.ratio, pc.u).speed
        out["motor_torque"] = loaded.motor_torque
        out["motor_speed"] = loaded.motor_speed
    return out


def motor_of(peak, max_speed, torque_constant, resistance, bus_voltage, winding_temperature):
    """The motor arguments of the speed metrics (metrics/loaded.py, metrics/stroke.py): a motor
    without electrical data (any of Kt, R, V missing) gets an infinite bus voltage, so its
    envelope is the corner-point one."""
    known = ~(np.isnan(torque_constant) | np.isnan(resistance) | np.isnan(bus_voltage))
    return dict(
        peak_torque=peak,
        max_speed=max_speed,
        torque_constant=np.where(known, torque_constant, 1.0),
        resistance=np.where(known, resistance, 1.0),
        bus_voltage=np.where(known, bus_voltage, np.inf),
        winding_temperature=winding_temperature,
    )


def load_terms(ev, pc: PreparedCase, mass: np.ndarray, g: np.ndarray | None = None):
    """The joint torques of a speed case at the actuated joints, for actuator masses ``mass``
    (..., n_act): at rest (gravity of links and actuators, the payload's weight, the tip
    force), per unit end-point acceleration along u (M·a + m_p·Jᵀ·u, a = J⁺·u) and per
    (end-point speed)² (Coriolis and centrifugal terms). Each is affine in the masses.
    ``g``: the generalized gravity for ``mass`` when the caller has it."""
    case = pc.case
    zeros = np.zeros_like(mass)
    M = mass_matrix(pc.basis, mass, zeros)[..., ev.v_index[:, None], ev.v_index]
    a = np.linalg.pinv(pc.Jj) @ pc.u
    weight = case.payload_mass * (-ev.robot.gravity)
    g = gravity(pc.basis, mass) if g is None else g
    tau_rest = g[..., ev.v_index] + pc.Jj.T @ (weight + np.asarray(case.tip_force, dtype=float))
    tau_per_acc = M @ a + case.payload_mass * (pc.Jj.T @ pc.u)
    c2 = pc.speed_terms[0] + mass @ pc.speed_terms[1:]
    return tau_rest, tau_per_acc, c2


def speed_terms(robot, q, Jj, u) -> np.ndarray:
    """Coriolis and centrifugal torques c(q, a) at the actuated joints for joint rates a = J⁺·u
    (one unit of end-point speed along u, base at rest), links only and per kg of each
    actuator: c is linear in the inertial parameters, so c(m) = c_0 + Σ_k m_k·(c(e_k) − c_0)."""
    import pinocchio as pin

    a = np.linalg.pinv(Jj) @ u
    v = np.zeros(robot.nv)
    v[np.asarray(robot.v_index)] = a

    def coriolis(masses):
        model = robot.with_actuator_masses(masses)
        data = model.createData()
        c = pin.nonLinearEffects(model, data, q, v) - pin.computeGeneralizedGravity(model, data, q)
        return np.asarray(c)[np.asarray(robot.v_index)]

    n = robot.n_act
    base = coriolis(np.zeros(n))
    rows = [base] + [coriolis(np.eye(n)[k]) - base for k in range(n)]
    return np.array(rows)
