"""Duty-cycle cases: inverse dynamics along a trajectory, linear in the actuator masses.

The joint torque a design needs along a trajectory is, by the linearity of inverse dynamics in
the inertial parameters, τ(t) = τ_links(t) + Σ_k m_k·τ_k(t) − Jᵀ(q(t))·F_ext(t), with τ_k the
inverse dynamics (Pinocchio RNEA) of one kilogram at actuator k's mount. These terms are computed
once per case; a batch of designs then costs one multiply-add, and the motor side (rotor inertia
N·I_r·q̈ and the power-flow law per sample) follows in :func:`metrics.duty.duty_summary`.

For a floating base the trajectory is taken relative to the trunk, held still in the case's
base pose (its velocity and acceleration zero): the joint rows of the inverse dynamics, with
the ground reaction forces given as external wrenches in the trajectory file.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pinocchio as pin

from .errors import InputError
from .metrics.duty import duty_summary
from .metrics.gear_life import stack_life
from .metrics.signals import weights
from .progress import report
from .trajectory import Trajectory, load_trajectory


@dataclass(frozen=True, eq=False)
class PreparedDuty:
    case: Any  # project.Case (kind duty)
    trajectory: Trajectory
    tau_links: np.ndarray  # (n, T) joint torques of the links and external wrenches
    tau_mass: np.ndarray  # (n_act, n, T) per kg of actuator k
    qd: np.ndarray  # (n, T)
    qdd: np.ndarray  # (n, T)


def prepare_duty(robot, case, file: str) -> PreparedDuty:
    """Read the case's trajectory and compute its inverse-dynamics terms."""
    revolute = [robot.revolute[robot.joint_names.index(j)] for j in robot.actuated]
    traj = load_trajectory(
        case.trajectory,
        robot.actuated,
        frames=None,
        revolute=revolute,
        limits=[robot.position_limits(j) for j in robot.actuated],
        source=robot.file,
    )
    for frame in traj.frames:
        robot.frame_id(frame, file=str(case.trajectory), field=f"wrench column for frame {frame!r}")
    n, T = robot.n_act, traj.t.size
    v = np.asarray(robot.v_index)
    base = robot.model
    masses = np.zeros(n)

    # one configuration per sample, shared by the n + 1 inverse-dynamics passes below
    configs = []
    for s in range(T):
        configs.append(
            robot.configuration(
                dict(zip(robot.actuated, traj.q[s], strict=True)), case.base_xyz, case.base_rpy
            )
        )
        if s % 5000 == 4999:
            report(f"configurations along {Path(case.trajectory).name}", s + 1, T)
    passes = n + 2 if traj.frames else n + 1
    done = [0]

    def inverse_dynamics(model):
        data = model.createData()
        out = np.empty((T, n))
        for s in range(T):
            q = configs[s]
            qd = np.zeros(model.nv)
            qdd = np.zeros(model.nv)
            qd[v], qdd[v] = traj.qd[s], traj.qdd[s]
            out[s] = pin.rnea(model, data, q, qd, qdd)[v]
            if s % 5000 == 4999:
                report(
                    f"inverse dynamics along {Path(case.trajectory).name}",
                    done[0] * T + s + 1,
                    passes * T,
                )
        done[0] += 1
        return out

    tau0 = inverse_dynamics(base)
    _check_free_joints(robot, case, traj)
    per_kg = np.empty((n, n, T))
    for k in range(n):
        masses[:] = 0.0
        masses[k] = 1.0
        per_kg[k] = (inverse_dynamics(robot.with_actuator_masses(masses)) - tau0).T
    ext = np.zeros((T, n))
    if traj.frames:
        data = base.createData()
        fids = [robot.frame_id(f) for f in traj.frames]
        for s in range(T):
            q = configs[s]
            pin.computeJointJacobians(base, data, q)
            pin.updateFramePlacements(base, data)
            for f, fid in enumerate(fids):
                J = pin.getFrameJacobian(base, data, fid, pin.LOCAL_WORLD_ALIGNED)
                ext[s] += (J.T @ traj.wrench[s, f])[v]
    return PreparedDuty(
        case=case,
        trajectory=traj,
        tau_links=(tau0 - ext).T,
        tau_mass=per_kg,
        qd=traj.qd.T.copy(),
        qdd=traj.qdd.T.copy(),
    )


#: torque a free joint may need along a duty cycle before the cycle is refused, N·m or N
FREE_TORQUE_TOLERANCE = 1e-6


def _check_free_joints(robot, case, traj) -> None:
    """A free joint carries no torque: a cycle whose link-only inverse dynamics needs torque there
    is not a motion the robot can make (the trajectory moves the actuated joints only)."""
    if not robot.free:
        return
    model, v = robot.model, np.asarray(robot.v_index)
    data = model.createData()
    idx = [robot.joint_v_index[robot.joint_names.index(j)] for j in robot.free]
    peak = np.zeros(len(idx))
    for s in range(traj.t.size):
        q = robot.configuration(
            dict(zip(robot.actuated, traj.q[s], strict=True)), case.base_xyz, case.base_rpy
        )
        qd, qdd = np.zeros(model.nv), np.zeros(model.nv)
        qd[v], qdd[v] = traj.qd[s], traj.qdd[s]
        peak = np.maximum(peak, np.abs(pin.rnea(model, data, q, qd, qdd)[idx]))
    worst = int(np.argmax(peak))
    if peak[worst] > FREE_TORQUE_TOLERANCE:
        raise InputError(
            str(case.trajectory),
            f"free joint {robot.free[worst]}",
            f"the cycle needs up to {peak[worst]:.4g} N·m (or N) there, but a free "
            "joint carries none: make it held or actuated, or give a motion it can follow",
        )


def joint_torques(pd: PreparedDuty, masses: np.ndarray) -> np.ndarray:
    """τ_j(t) for designs with actuator masses (D, n): (D, n, T), N·m."""
    return pd.tau_links + np.einsum("dk,knt->dnt", masses, pd.tau_mass)


_OPTIONAL = (
    "torque_constant",
    "resistance",
    "bus_voltage",
    "thermal_resistance",
    "thermal_time_constant",
)
#: per-joint duty quantities as the CLI and the report show them: (key, label, unit, scale).
#: Rating uses first (how hard each joint works, in % of what its motor allows), then the
#: quantities behind them; rating uses and the back-driven share are fractions shown in %.
DUTY_QUANTITIES = (
    ("rms_ratio", "continuous torque used (RMS)", "%", 100.0),
    ("peak_ratio", "peak torque used", "%", 100.0),
    ("envelope_ratio", "torque-speed line used", "%", 100.0),
    ("thermal_ratio", "temperature rise used", "%", 100.0),
    ("rms_torque", "RMS motor torque", "N·m", 1.0),
    ("peak_torque", "highest motor torque", "N·m", 1.0),
    ("peak_speed", "highest motor speed", "rad/s", 1.0),
    ("peak_temperature", "hottest winding", "°C", 1.0),
    ("energy_regen", "energy per cycle", "J", 1.0),
    ("backdriven_share", "time back-driven", "%", 100.0),
)
_PER_JOINT = (
    "rms_torque",
    "peak_torque",
    "peak_speed",
    "peak_temperature",
    "rms_ratio",
    "peak_ratio",
    "speed_ratio",
    "envelope_ratio",
    "thermal_ratio",
    "energy_regen",
    "energy_no_regen",
    "backdriven_share",
    "transmission_loss",
    "joint_work",
    "worst_ratio",
)


def evaluate_duty(pd: PreparedDuty, d, *, detail: bool = True) -> dict[str, np.ndarray]:
    """Duty metrics of D designs; per-joint arrays are (D, n).

    Joints are independent along a given trajectory, so each joint is summarized on its own;
    designs whose motor lacks electrical or thermal data are summarized without the envelope,
    energy or temperature (NaN there), never with made-up values.
    """
    tau = joint_torques(pd, d.mass)  # (D, n, T)
    D, n = d.mass.shape
    per = {k: np.full((D, n), np.nan) for k in _PER_JOINT}
    limiting = np.full((D, n), "", dtype=object)
    for j in range(n):
        present = np.stack([~np.isnan(getattr(d, k)[:, j]) for k in _OPTIONAL], axis=1)
        patterns = [present[0]] if present.all() or (~present).all() else np.unique(present, axis=0)
        for pattern in patterns:
            rows = np.all(present == pattern, axis=1)
            opt = {
                k: (getattr(d, k)[rows, j] if has else None)
                for k, has in zip(_OPTIONAL, pattern, strict=True)
            }
            s = duty_summary(
                tau[rows, j],
                pd.qd[j],
                pd.qdd[j],
                pd.trajectory.t,
                ratio=d.ratio[rows, j],
                eta_f=d.eta_forward[rows, j],
                eta_b=d.eta_backward[rows, j],
                rotor_inertia=d.rotor_inertia[rows, j],
                peak_torque=d.motor_peak_torque[rows, j],
                continuous_torque=d.motor_continuous_torque[rows, j],
                max_speed=d.motor_max_speed[rows, j],
                winding_temperature_max=d.winding_temperature_max[rows, j],
                ambient=pd.case.ambient,
                **opt,
            )
            for k in _PER_JOINT:
                per[k][rows, j] = getattr(s, k)
            limiting[rows, j] = np.asarray(s.limiting)
    j = np.argmax(np.where(np.isnan(per["worst_ratio"]), -np.inf, per["worst_ratio"]), axis=-1)
    pick = lambda x: np.take_along_axis(x, j[:, None], axis=-1)[:, 0]  # noqa: E731
    out = {
        "rating_use": pick(per["worst_ratio"]),
        "limiting_joint": j,
        "limiting_quantity": pick(limiting).astype(str),
    }
    if detail:
        out.update({k: per[k] for k in _PER_JOINT if k != "worst_ratio"})
        out["cycle_energy_regen"] = np.nansum(per["energy_regen"], axis=-1)
        out["cycle_energy_no_regen"] = np.nansum(per["energy_no_regen"], axis=-1)
    out.update(gear_life_of_cycle(pd, d, tau, detail=detail))
    return out


def gear_life_of_cycle(pd: PreparedDuty, d, tau: np.ndarray, *, detail: bool = True) -> dict:
    """Gear life (s) of each joint's stack if it ran this cycle only, and the repeated-peak use.

    The gear's output carries the joint torque τ_j(t) at the joint speed q̇_j(t) in every
    power-flow mode (the rotor's inertia torque acts on the motor side); metrics.gear_life.
    ``gear_peak_use`` is max_t |τ_j| over the joint-side repeated-peak rating.
    """
    life, _slot, t_eq, n_avg = stack_life(
        tau,
        pd.qd,
        weights(pd.trajectory.t),
        d.life_torque,
        d.life_speed,
        d.life_rated,
        d.life_exponent,
    )
    with np.errstate(divide="ignore"):
        peak = np.abs(tau).max(axis=-1) / d.gear_peak_torque
    out = {"gear_life": life, "gear_peak_use": peak}
    if detail:
        out["gear_equivalent_torque"] = t_eq
        out["gear_average_speed"] = np.broadcast_to(n_avg, life.shape).copy()
    return out
