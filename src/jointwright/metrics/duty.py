"""Duty cycles: motor torque per sample with its power-flow mode, RMS and peak, winding
temperature, energy per cycle, and a per-joint summary against the motor's ratings.

Array layout: a *signal* has time on its last axis, ``(..., T)``; the leading axes are designs
and joints. *Parameters* (ratio, efficiencies, ratings, thermal data) broadcast against the
leading axes ``(...)`` only; the functions add the time axis themselves. Trajectory arrays
shaped ``(T, n_joints)`` are passed transposed. ``t`` is one time vector ``(T,)`` (s), strictly
increasing; a repeating cycle runs from ``t[0]`` to ``t[-1]`` and then starts again.

Between samples a signal is either linear (``hold="linear"``, the default) or holds its value
until the next sample (``hold="previous"``).

Transmission law (ratio N, forward/backward efficiency η_f/η_b, rotor-side inertia I_r), inverted
for the motor torque τ_m given the joint-side torque τ_j:

* motoring, τ_j·q̇ > 0:     τ_m = τ_j/(η_f·N) + N·I_r·q̈
* back-driven, τ_j·q̇ < 0:  τ_m = η_b·τ_j/N + N·I_r·q̈
* holding, τ_j·q̇ = 0:      τ_m = max(η_b, 0)·τ_j/N + N·I_r·q̈  (standstill, or no torque
  through the gear; either way no power flows through it)

With a self-locking stack (η_b ≤ 0) the back-driven line stays valid and its sign matters:
η_b·τ_j/N is *opposite* to τ_j, i.e. along the motion. The load alone cannot turn the gear, so
the motor must drive it down and supplies power (τ_m·N·q̇ > 0) while the load also gives up its
power; both are lost in the gear. At standstill a self-locking stack holds the load by friction
and the motor needs no torque for it (hence max(η_b, 0)). With η = 1 every line is the classical
τ_m = τ_j/N + N·I_r·q̈.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .envelope import (
    COPPER_TEMPCO,
    check_positive,
    copper_loss,
    motor_constant,
    torque_speed_envelope,
)
from .speed import check_efficiencies

#: power-flow mode codes returned per sample (sign of τ_j·q̇)
MOTORING, HOLDING, BACKDRIVEN = 1, 0, -1
HOLDS = ("linear", "previous")
#: in a duty summary, speeds below this share of a joint's peak speed count as standstill
STANDSTILL = 1e-9


def _lead(x) -> np.ndarray:
    """A parameter broadcast against the leading axes, given a trailing time axis."""
    return np.asarray(x, dtype=float)[..., None]


def check_time(t, hold: str = "linear") -> np.ndarray:
    """``t`` as a 1-D float array of at least two strictly increasing finite times (s)."""
    if hold not in HOLDS:
        raise InputError("<api>", "hold", f"must be one of {HOLDS}, got {hold!r}")
    t = np.asarray(t, dtype=float)
    if t.ndim != 1 or t.size < 2:
        raise InputError("<api>", "t", f"must be a 1-D array of >= 2 times, got shape {t.shape}")
    if not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
        raise InputError("<api>", "t", "must be finite and strictly increasing")
    return t


def _signal(name: str, x, t: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    if x.ndim == 0 or x.shape[-1] != t.size:
        raise InputError("<api>", name, f"must have time ({t.size} samples) on its last axis")
    if not np.all(np.isfinite(x)):
        raise InputError("<api>", name, "must be finite")
    return x


def weights(t, hold: str = "linear") -> np.ndarray:
    """Quadrature weights (s) per sample: trapezoid for linear, left rectangle for previous."""
    t = check_time(t, hold)
    h = np.diff(t)
    if hold == "previous":
        return np.append(h, 0.0)
    return np.concatenate(([h[0] / 2], (h[:-1] + h[1:]) / 2, [h[-1] / 2]))


def motor_torque(tau_joint, qd, qdd, ratio, eta_f, eta_b, rotor_inertia, *, standstill=0.0):
    """Motor torque per sample and the power-flow mode that sets it.

    Parameters
    ----------
    tau_joint : array_like (..., T)
        Joint-side transmission torque τ_j (N·m), the torque the actuator applies to the link.
    qd, qdd : array_like (..., T)
        Joint speed (rad/s) and acceleration (rad/s²).
    ratio : array_like (...)
        N, motor speed / joint speed, > 0.
    eta_f, eta_b : array_like (...)
        Forward (0, 1] and backward (−1, 1] efficiency; η_b ≤ 0 is self-locking.
    rotor_inertia : array_like (...)
        Rotor-side inertia I_r at the motor shaft (kg·m²), ≥ 0.
    standstill : array_like (...)
        Joint speeds with |q̇| ≤ standstill (rad/s) count as holding, so that the round-off
        of a differentiated trajectory at its turning points does not pick the mode.

    Returns
    -------
    tau_motor : ndarray (..., T)
        Motor torque τ_m (N·m), by the law in the module notes.
    mode : ndarray of int8 (..., T)
        MOTORING (1), HOLDING (0) or BACKDRIVEN (−1), from the sign of τ_j·q̇.
    """
    try:
        tj, qd, qdd = np.broadcast_arrays(*(np.asarray(x, float) for x in (tau_joint, qd, qdd)))
    except ValueError:
        raise InputError("<api>", "tau_joint, qd, qdd", "must have the same shape") from None
    n = _lead(check_positive("ratio", ratio))
    ef, eb = (_lead(x) for x in check_efficiencies(eta_f, eta_b))
    ir = _lead(rotor_inertia)
    if np.any(~(ir >= 0)):
        raise InputError("<api>", "rotor_inertia", "must be >= 0 kg*m^2")
    mode = np.where(np.abs(qd) <= _lead(standstill), 0, np.sign(tj * qd)).astype(np.int8)
    gear = np.where(
        mode == MOTORING,
        tj / (ef * n),
        np.where(mode == BACKDRIVEN, eb, np.maximum(eb, 0.0)) * tj / n,
    )
    return gear + n * ir * qdd, mode


def rms(x, t, *, hold: str = "linear") -> np.ndarray:
    """Root mean square over the cycle, exact for the chosen hold.

    linear: √(Σ h_k·(x_k² + x_k·x_{k+1} + x_{k+1}²)/3 / (t_end − t_0));
    previous: √(Σ h_k·x_k² / (t_end − t_0)).
    """
    t = check_time(t, hold)
    x = _signal("x", x, t)
    h = np.diff(t)
    a, b = x[..., :-1], x[..., 1:]
    sq = a * a if hold == "previous" else (a * a + a * b + b * b) / 3.0
    return np.sqrt(np.sum(sq * h, axis=-1) / (t[-1] - t[0]))


def peak(x) -> np.ndarray:
    """Largest magnitude over the last (time) axis."""
    return np.max(np.abs(np.asarray(x, dtype=float)), axis=-1)


def _horner(z: np.ndarray, coefficients) -> np.ndarray:
    out = np.full_like(z, coefficients[-1])
    for c in coefficients[-2::-1]:
        out = out * z + c
    return out


#: Taylor coefficients of φ1 and φ2 (1/(k+1)! and 1/(k+2)!), used for |z| < 0.1
_PHI1 = tuple(1.0 / math.factorial(k + 1) for k in range(10))
_PHI2 = tuple(1.0 / math.factorial(k + 2) for k in range(10))


def _phi(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """φ1 = (eᶻ − 1)/z and φ2 = (eᶻ − 1 − z)/z², by their series near 0."""
    small = np.abs(z) < 0.1
    zs = np.where(small, 1.0, z)
    em1 = np.expm1(zs)
    p1 = np.where(small, _horner(z, _PHI1), em1 / zs)
    p2 = np.where(small, _horner(z, _PHI2), (em1 - zs) / (zs * zs))
    return p1, p2


def _thermal_maps(loss, t, r_th, tau_th, ambient, tempco, hold):
    """Per interval k the exact affine map of the winding rise θ = T − T_a: θ' = φ_k·θ + c_k.

    C·θ' = P(s)·(1 + α·(T_a + θ − 20)) − θ/R_th with C = τ_th/R_th, P linear or constant in the
    interval: θ' = a·θ + b(s), a = (α·P − 1/R_th)/C, b = P·(1 + α·(T_a − 20))/C. With a linear
    P and α > 0, a uses the interval's mean loss (the rest is exact).
    """
    t = check_time(t, hold)
    p = _signal("copper_loss", loss, t)
    if np.any(p < 0):
        raise InputError("<api>", "copper_loss", "must be >= 0 W")
    r = _lead(check_positive("R_th", r_th))
    c_th = _lead(check_positive("tau_th", tau_th)) / r
    ta = _lead(ambient)
    alpha = COPPER_TEMPCO if tempco else 0.0
    p0 = p[..., :-1]
    p1 = p0 if hold == "previous" else p[..., 1:]
    h = np.diff(t)
    z = (alpha * (p0 + p1) / 2 - 1.0 / r) / c_th * h
    scale = (1.0 + alpha * (ta - 20.0)) / c_th
    f1, f2 = _phi(np.minimum(z, 700.0))
    b0, b1 = p0 * scale, p1 * scale
    c = b0 * h * f1 + (b1 - b0) * h * f2
    return np.exp(np.minimum(z, 700.0)), c, z, ta


def _run(phi, c, theta0):
    """Apply the interval maps in turn from θ_0; a run-away (inf) rise stays inf."""
    out = [np.asarray(theta0, dtype=float)]
    with np.errstate(invalid="ignore", over="ignore"):
        for k in range(phi.shape[-1]):
            prev = out[-1]
            out.append(np.where(np.isinf(prev), prev, phi[..., k] * prev + c[..., k]))
    return np.stack(np.broadcast_arrays(*out), axis=-1)


def thermal_response(
    copper_loss, t, R_th, tau_th, ambient, *, resistance_tempco=True, initial=None, hold="linear"
) -> np.ndarray:
    """Winding temperature (°C) of a first-order thermal model driven by the copper loss.

    C·dT/dt = P(t)·(1 + α·(T − 20)) − (T − T_a)/R_th, C = τ_th/R_th, α = 0.00393/K with
    ``resistance_tempco`` (the winding resistance, hence the loss at a given torque, rises with
    temperature) and α = 0 without. For a step P from ambient and α = 0 this is
    ΔT(t) = P·R_th·(1 − e^(−t/τ_th)) [trade]. Integrated exactly per sample interval.

    Parameters
    ----------
    copper_loss : array_like (..., T)
        Copper loss (W) at the 20 °C resistance, e.g. τ_m²/Km,20², ≥ 0.
    t : array_like (T,)
        Sample times (s).
    R_th : array_like (...)
        Winding-to-ambient thermal resistance (K/W), > 0.
    tau_th : array_like (...)
        Winding thermal time constant R_th·C_th (s), > 0.
    ambient : array_like (...)
        Ambient temperature (°C).
    initial : array_like (...), optional
        Winding temperature at t[0] (°C); ambient when None.

    Returns
    -------
    ndarray (..., T)
        Winding temperature (°C); inf once a thermal runaway overflows.
    """
    phi, c, _, ta = _thermal_maps(copper_loss, t, R_th, tau_th, ambient, resistance_tempco, hold)
    theta0 = 0.0 if initial is None else np.asarray(initial, dtype=float) - ta[..., 0]
    return ta + _run(phi, c, theta0)


def periodic_temperature(
    copper_loss, t, R_th, tau_th, ambient, *, resistance_tempco=True, hold="linear"
) -> np.ndarray:
    """Winding temperature (°C) in the steady periodic state of a cycle repeated forever.

    The cycle's map θ_end = Φ·θ_0 + c (composed from the exact interval maps) is solved for
    θ_end = θ_0: θ_0 = c/(1 − Φ). When Φ ≥ 1 (the loss's rise with temperature outruns the
    cooling over a cycle) there is no steady state: the result is inf (thermal runaway).
    Parameters as in :func:`thermal_response`.
    """
    phi, c, z, ta = _thermal_maps(copper_loss, t, R_th, tau_th, ambient, resistance_tempco, hold)
    end = _run(phi, c, 0.0)[..., -1]
    log_cycle = np.sum(z, axis=-1)
    runaway = log_cycle >= 0
    theta0 = np.where(runaway, 0.0, end / -np.expm1(np.where(runaway, -1.0, log_cycle)))
    theta = _run(phi, c, theta0)
    return np.where(runaway[..., None], np.inf, ta + theta)


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
    tau = _signal("tau_motor", tau_motor, t)
    omega = _signal("omega_motor", omega_motor, t)
    km = _lead(check_positive("Km", Km))
    scale = 1.0
    if winding_temperature is not None:
        scale = 1.0 + COPPER_TEMPCO * (_signal("winding_temperature", winding_temperature, t) - 20)
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
    tj = _signal("tau_joint", tau_joint, t)
    qd = _signal("qd", qd, t)
    n = _lead(check_positive("ratio", ratio))
    ef, eb = (_lead(x) for x in check_efficiencies(eta_f, eta_b))
    ir = _lead(rotor_inertia)
    power = tj * qd
    w = weights(t, hold)
    joint = np.sum(power * w, axis=-1)
    lm = np.sum(np.where(power > 0, (1.0 / ef - 1.0) * power, 0.0) * w, axis=-1)
    lb = np.sum(np.where(power < 0, (eb - 1.0) * power, 0.0) * w, axis=-1)
    wm = n * qd
    kin = (0.5 * ir * (wm[..., -1:] ** 2 - wm[..., :1] ** 2))[..., 0]
    joint, lm, lb, kin = np.broadcast_arrays(joint, lm, lb, kin)
    return TransmissionEnergy(joint, lm, lb, kin, joint + lm + lb + kin)


#: the quantities a duty summary compares with a rating, in the order ``limiting`` names them
CHECKS = ("rms_torque", "peak_torque", "speed", "envelope", "temperature")


@dataclass(frozen=True)
class DutySummary:
    """A duty cycle against one motor per joint; arrays shaped like the leading axes.

    Each ``*_ratio`` is needed/available: ≤ 1 passes, the margin is 1 − ratio. NaN means "not
    assessed" (the motor lacks the data: Kt and R for energy, also R_th and τ_th for
    temperature); inf means "cannot be met" (thermal runaway, torque beyond the maximum speed).

    Attributes
    ----------
    rms_torque, peak_torque : motor torque over the cycle (N·m)
    peak_speed : largest motor speed |ω_m| (rad/s)
    peak_temperature : peak winding temperature in the steady periodic state (°C)
    rms_ratio : rms_torque / continuous torque rating
    peak_ratio : peak_torque / peak torque rating
    speed_ratio : peak_speed / maximum speed
    envelope_ratio : worst over samples of |τ_m| / envelope torque at ω_m (driving or braking
        quadrant by the sign of τ_m·ω_m; at the peak winding temperature, at most the limit)
    thermal_ratio : (peak_temperature − ambient) / (temperature limit − ambient)
    energy_regen, energy_no_regen : electrical energy per cycle with and without regeneration (J)
    joint_work : work on the links per cycle (J)
    transmission_loss : energy lost in the gear per cycle, both modes (J)
    backdriven_share, holding_share : share of the cycle's time in those modes
    """

    rms_torque: np.ndarray
    peak_torque: np.ndarray
    peak_speed: np.ndarray
    peak_temperature: np.ndarray
    rms_ratio: np.ndarray
    peak_ratio: np.ndarray
    speed_ratio: np.ndarray
    envelope_ratio: np.ndarray
    thermal_ratio: np.ndarray
    energy_regen: np.ndarray
    energy_no_regen: np.ndarray
    joint_work: np.ndarray
    transmission_loss: np.ndarray
    backdriven_share: np.ndarray
    holding_share: np.ndarray

    def ratios(self) -> np.ndarray:
        """The five ratios stacked on a last axis, in the order of :data:`CHECKS`."""
        return np.stack(
            [
                self.rms_ratio,
                self.peak_ratio,
                self.speed_ratio,
                self.envelope_ratio,
                self.thermal_ratio,
            ],
            axis=-1,
        )

    def _assessed(self) -> np.ndarray:
        r = self.ratios()
        return np.where(np.isnan(r), -np.inf, r)

    @property
    def worst_ratio(self) -> np.ndarray:
        """Largest assessed ratio (NaN entries skipped)."""
        return np.max(self._assessed(), axis=-1)

    @property
    def limiting(self) -> np.ndarray:
        """Name (from :data:`CHECKS`) of the largest assessed ratio."""
        return np.asarray(CHECKS)[np.argmax(self._assessed(), axis=-1)]

    @property
    def feasible(self) -> np.ndarray:
        """Whether every assessed ratio is ≤ 1."""
        return self.worst_ratio <= 1.0


def _over(need, avail):
    """need/avail with 0/0 → 0 and x/0 → inf for x > 0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = need / np.where(avail > 0, avail, 1.0)
    return np.where(avail > 0, ratio, np.where(need > 0, np.inf, 0.0))


def _optional(x):
    return None if x is None else _lead(x)


def _electrics(tau_m, omega, t, m, tempco, hold):
    """Steady periodic winding temperature (..., T) and the cycle's electrical energies.

    ``None`` for the temperature and NaN for the energies when the motor lacks the data.
    """
    nan = np.full(tau_m.shape[:-1], np.nan)
    if m["torque_constant"] is None or m["resistance"] is None:
        return None, nan, nan
    km = motor_constant(m["torque_constant"], m["resistance"])
    temps = None
    if m["thermal_resistance"] is not None and m["thermal_time_constant"] is not None:
        temps = periodic_temperature(
            copper_loss(tau_m, _lead(km)),
            t,
            m["thermal_resistance"],
            m["thermal_time_constant"],
            m["ambient"],
            resistance_tempco=tempco,
            hold=hold,
        )
    if temps is None or not tempco:
        energy = cycle_energy(tau_m, omega, t, km, hold=hold)
        return temps, energy.electrical_regen, energy.electrical_no_regen
    runaway = np.isinf(temps[..., 0])
    energy = cycle_energy(
        tau_m,
        omega,
        t,
        km,
        hold=hold,
        winding_temperature=np.where(runaway[..., None], 20.0, temps),
    )
    inf = np.where(runaway, np.inf, 0.0)  # a run-away winding needs unbounded energy
    return temps, energy.electrical_regen + inf, energy.electrical_no_regen + inf


def _envelope_ratio(tau_m, omega, t_peak, m):
    """Worst |τ_m|/available over the samples, the envelope at the peak winding temperature
    (at most the limit; 20 °C when the temperature is not assessed)."""
    t_env = np.where(np.isnan(t_peak), 20.0, np.minimum(t_peak, m["winding_temperature_max"]))
    avail = torque_speed_envelope(
        omega,
        peak_torque=_lead(m["peak_torque"]),
        max_speed=_lead(m["max_speed"]),
        torque_constant=_optional(m["torque_constant"] if m["bus_voltage"] is not None else None),
        resistance=_optional(m["resistance"] if m["bus_voltage"] is not None else None),
        bus_voltage=_optional(m["bus_voltage"]),
        winding_temperature=t_env[..., None],
        braking=tau_m * omega < 0,
    )
    return np.max(_over(np.abs(tau_m), avail), axis=-1)


def duty_summary(
    tau_joint,
    qd,
    qdd,
    t,
    *,
    ratio,
    eta_f,
    eta_b,
    rotor_inertia,
    peak_torque,
    continuous_torque,
    max_speed,
    torque_constant=None,
    resistance=None,
    bus_voltage=None,
    thermal_resistance=None,
    thermal_time_constant=None,
    winding_temperature_max=155.0,
    ambient=25.0,
    resistance_tempco=True,
    hold="linear",
) -> DutySummary:
    """Everything a duty cycle asks of each joint's motor, against its ratings.

    Parameters
    ----------
    tau_joint, qd, qdd : array_like (..., T)
        Joint-side torque (N·m) from inverse dynamics, joint speed (rad/s), acceleration (rad/s²).
    t : array_like (T,)
        Sample times of one cycle (s).
    ratio, eta_f, eta_b, rotor_inertia : array_like (...)
        Transmission, as in :func:`motor_torque`.
    peak_torque, continuous_torque, max_speed : array_like (...)
        Motor ratings (N·m, N·m, rad/s), > 0.
    torque_constant, resistance, bus_voltage : array_like (...), optional
        Kt (N·m/A), line-to-line R at 20 °C (Ω), bus voltage (V), for the envelope and energy.
    thermal_resistance, thermal_time_constant : array_like (...), optional
        Winding-to-ambient R_th (K/W) and τ_th (s), for the temperature.
    winding_temperature_max, ambient : array_like (...)
        Winding temperature limit and ambient temperature (°C), limit > ambient.
    resistance_tempco : bool
        Let the copper loss rise with winding temperature.
    hold : {"linear", "previous"}
        Signal between samples.

    Returns
    -------
    DutySummary
    """
    m = dict(
        peak_torque=peak_torque,
        max_speed=max_speed,
        torque_constant=torque_constant,
        resistance=resistance,
        bus_voltage=bus_voltage,
        ambient=ambient,
        thermal_resistance=thermal_resistance,
        thermal_time_constant=thermal_time_constant,
        winding_temperature_max=winding_temperature_max,
    )
    t = check_time(t, hold)
    tau_joint, qd, qdd = (
        _signal(k, x, t)
        for k, x in zip(("tau_joint", "qd", "qdd"), (tau_joint, qd, qdd), strict=True)
    )
    tmax, ambient = np.asarray(winding_temperature_max, float), np.asarray(ambient, float)
    if np.any(~(tmax > ambient)):
        raise InputError("<api>", "winding_temperature_max", "must be above the ambient")
    still = STANDSTILL * peak(qd)
    tau_m, mode = motor_torque(
        tau_joint, qd, qdd, ratio, eta_f, eta_b, rotor_inertia, standstill=still
    )
    tau_m, omega = np.broadcast_arrays(tau_m, _lead(ratio) * qd)
    temps, e_regen, e_plain = _electrics(tau_m, omega, t, m, resistance_tempco, hold)
    t_peak = np.full(tau_m.shape[:-1], np.nan) if temps is None else temps.max(axis=-1)
    gear = transmission_energy(tau_joint, qd, t, ratio, eta_f, eta_b, rotor_inertia, hold=hold)
    w = weights(t, hold) / (t[-1] - t[0])
    rms_t, pk, pk_w = rms(tau_m, t, hold=hold), peak(tau_m), peak(omega)
    fields = [
        rms_t,
        pk,
        pk_w,
        t_peak,
        rms_t / check_positive("continuous_torque", continuous_torque),
        pk / check_positive("peak_torque", peak_torque),
        pk_w / check_positive("max_speed", max_speed, allow_inf=True),
        _envelope_ratio(tau_m, omega, t_peak, m),
        (t_peak - ambient) / (tmax - ambient),
        e_regen,
        e_plain,
        gear.joint_work,
        gear.loss_motoring + gear.loss_backdriven,
        np.sum((mode == BACKDRIVEN) * w, axis=-1),
        np.sum((mode == HOLDING) * w, axis=-1),
    ]
    return DutySummary(*np.broadcast_arrays(*fields))
