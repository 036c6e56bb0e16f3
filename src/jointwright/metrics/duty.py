"""Duty cycles: motor torque per sample with its power-flow mode, and a per-joint summary
against the motor's ratings (RMS and peak torque, speed, torque-speed envelope, winding
temperature, energy per cycle).

The parts live beside this module: sample times, RMS and peak in :mod:`.signals` (which also
states the array layout: time on the last axis), the winding thermal model in :mod:`.thermal`,
energy per cycle in :mod:`.energy`.

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

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .energy import cycle_energy, transmission_energy
from .envelope import check_positive, copper_loss, motor_constant, torque_speed_envelope
from .signals import check_signal, check_time, lead_axis, peak, rms, weights
from .speed import check_efficiencies
from .thermal import periodic_temperature

# the winding's response from a start temperature is public API here too
from .thermal import thermal_response as thermal_response

#: power-flow mode codes returned per sample (sign of τ_j·q̇)
MOTORING, HOLDING, BACKDRIVEN = 1, 0, -1
#: in a duty summary, speeds below this share of a joint's peak speed count as standstill
STANDSTILL = 1e-9


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
    n = lead_axis(check_positive("ratio", ratio))
    ef, eb = (lead_axis(x) for x in check_efficiencies(eta_f, eta_b))
    ir = lead_axis(rotor_inertia)
    if np.any(~(ir >= 0)):
        raise InputError("<api>", "rotor_inertia", "must be >= 0 kg*m^2")
    mode = np.where(np.abs(qd) <= lead_axis(standstill), 0, np.sign(tj * qd)).astype(np.int8)
    gear = np.where(
        mode == MOTORING,
        tj / (ef * n),
        np.where(mode == BACKDRIVEN, eb, np.maximum(eb, 0.0)) * tj / n,
    )
    return gear + n * ir * qdd, mode


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
    return None if x is None else lead_axis(x)


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
            copper_loss(tau_m, lead_axis(km)),
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
        peak_torque=lead_axis(m["peak_torque"]),
        max_speed=lead_axis(m["max_speed"]),
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
        check_signal(k, x, t)
        for k, x in zip(("tau_joint", "qd", "qdd"), (tau_joint, qd, qdd), strict=True)
    )
    tmax, ambient = np.asarray(winding_temperature_max, float), np.asarray(ambient, float)
    if np.any(~(tmax > ambient)):
        raise InputError("<api>", "winding_temperature_max", "must be above the ambient")
    still = STANDSTILL * peak(qd)
    tau_m, mode = motor_torque(
        tau_joint, qd, qdd, ratio, eta_f, eta_b, rotor_inertia, standstill=still
    )
    tau_m, omega = np.broadcast_arrays(tau_m, lead_axis(ratio) * qd)
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
