"""Energy over one duty cycle: the motor's electrical and mechanical energy (with and without
regeneration), and the joint-side balance of work, gear losses per power-flow mode and the
rotor's kinetic energy. Array layout as in :mod:`.signals`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .envelope import COPPER_TEMPCO, check_positive
from .signals import check_signal, check_time, lead_axis, weights
from .speed import check_efficiencies


@dataclass(frozen=True)
class CycleEnergy:
    """Motor-side energy over one cycle (J), arrays shaped like the leading axes.

    Attributes
    ----------
    motor_work : ∫ τ_m·ω_m dt, mechanical work of the motor shaft
    copper_loss : ∫ τ_m²/Km² dt
    electrical_regen : ∫ P_e dt with P_e = τ_m·ω_m + τ_m²/Km², regenerated energy counted back
    electrical_no_regen : ∫ max(P_e, 0) dt, the bus takes nothing back
    """

    motor_work: np.ndarray
    copper_loss: np.ndarray
    electrical_regen: np.ndarray
    electrical_no_regen: np.ndarray


def cycle_energy(tau_motor, omega_motor, t, Km, *, winding_temperature=None, hold="linear"):
    """Electrical and mechanical energy of the motor over one cycle.

    Parameters
    ----------
    tau_motor, omega_motor : array_like (..., T)
        Motor torque (N·m) and speed (rad/s).
    t : array_like (T,)
        Sample times (s).
    Km : array_like (...)
        Motor constant at 20 °C (N·m/√W), > 0.
    winding_temperature : array_like (..., T), optional
        Winding temperature (°C); the copper loss is scaled by R(T)/R20. 20 °C when None.

    Returns
    -------
    CycleEnergy
        Energies (J), integrated with the quadrature of ``hold`` (trapezoid for linear).
    """
    t = check_time(t, hold)
    tau = check_signal("tau_motor", tau_motor, t)
    omega = check_signal("omega_motor", omega_motor, t)
    km = lead_axis(check_positive("Km", Km))
    scale = 1.0
    if winding_temperature is not None:
        scale = 1.0 + COPPER_TEMPCO * (
            check_signal("winding_temperature", winding_temperature, t) - 20
        )
    mech = tau * omega
    loss = tau * tau / (km * km) * scale
    w = weights(t, hold)
    elec = mech + loss
    return CycleEnergy(
        motor_work=np.sum(mech * w, axis=-1),
        copper_loss=np.sum(loss * w, axis=-1),
        electrical_regen=np.sum(elec * w, axis=-1),
        electrical_no_regen=np.sum(np.maximum(elec, 0.0) * w, axis=-1),
    )


@dataclass(frozen=True)
class TransmissionEnergy:
    """Joint-side energy flow over one cycle (J), arrays shaped like the leading axes.

    The balance ``joint_work = motor_work − loss_motoring − loss_backdriven −
    rotor_kinetic_change`` holds by construction of ``motor_work`` here; compare it with
    :func:`cycle_energy`'s ``motor_work`` from the motor torque to check a torque model.

    Attributes
    ----------
    joint_work : ∫ τ_j·q̇ dt, work done on the links
    loss_motoring : ∫ (1/η_f − 1)·τ_j·q̇ dt over motoring samples, ≥ 0
    loss_backdriven : ∫ (1 − η_b)·(−τ_j·q̇) dt over back-driven samples, ≥ 0
    rotor_kinetic_change : ½·I_r·N²·(q̇_end² − q̇_0²)
    motor_work : the motor shaft work the balance implies
    """

    joint_work: np.ndarray
    loss_motoring: np.ndarray
    loss_backdriven: np.ndarray
    rotor_kinetic_change: np.ndarray
    motor_work: np.ndarray


def transmission_energy(tau_joint, qd, t, ratio, eta_f, eta_b, rotor_inertia, *, hold="linear"):
    """Work at the joints, gear losses per mode and the rotor's kinetic energy change.

    The transmission dissipates (1 − η) of the power entering it, from either side: motoring,
    the input is τ_j·q̇/η_f; back-driven, it is −τ_j·q̇ (for η_b ≤ 0 the motor's power adds to
    it and the loss exceeds what the load gives). Shapes as in :func:`motor_torque`.
    """
    t = check_time(t, hold)
    tj = check_signal("tau_joint", tau_joint, t)
    qd = check_signal("qd", qd, t)
    n = lead_axis(check_positive("ratio", ratio))
    ef, eb = (lead_axis(x) for x in check_efficiencies(eta_f, eta_b))
    ir = lead_axis(rotor_inertia)
    power = tj * qd
    w = weights(t, hold)
    joint = np.sum(power * w, axis=-1)
    lm = np.sum(np.where(power > 0, (1.0 / ef - 1.0) * power, 0.0) * w, axis=-1)
    lb = np.sum(np.where(power < 0, (eb - 1.0) * power, 0.0) * w, axis=-1)
    wm = n * qd
    kin = (0.5 * ir * (wm[..., -1:] ** 2 - wm[..., :1] ** 2))[..., 0]
    joint, lm, lb, kin = np.broadcast_arrays(joint, lm, lb, kin)
    return TransmissionEnergy(joint, lm, lb, kin, joint + lm + lb + kin)
