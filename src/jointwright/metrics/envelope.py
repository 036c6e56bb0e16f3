"""Motor torque–speed envelope, winding resistance and the motor constants.

The electrical model is the DC-equivalent one: the winding is a resistance R in series with a
back-EMF Ke·ω, fed from a bus of voltage V; the torque is Kt·i with Ke = Kt (SI units,
V·s/rad = N·m/A). R is the *line-to-line* resistance and Kt the line-to-line torque constant, so
a three-phase brushless motor is treated as the equivalent DC motor; field weakening, the
inverter's voltage drop and magnet heating are left out. In the driving quadrant (torque along
the motion) the available torque at motor speed ω is

    τ(ω) = min(τ_peak, Kt·(V − Kt·|ω|)/R(T)),  0 beyond the maximum speed,

and in the braking quadrant (torque against the motion) the back-EMF helps the current,
τ(ω) = min(τ_peak, Kt·(V + Kt·|ω|)/R(T)). The copper resistance rises with temperature,
R(T) = R20·(1 + 0.00393·(T − 20 °C)) (annealed copper, [mem]). Without electrical data the
envelope is the corner-point one: the peak torque up to the maximum speed.

All functions broadcast over their array arguments (designs, joints, samples).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError

#: temperature coefficient of copper resistance at 20 °C (1/K)
COPPER_TEMPCO = 0.00393
#: reference temperature of catalog resistances (°C)
REFERENCE_TEMPERATURE = 20.0


def check_positive(name: str, value, *, allow_inf: bool = False) -> np.ndarray:
    """``value`` as a float array, raising :class:`InputError` unless every entry is > 0.

    Shared by the metric modules for arguments passed in Python (file ``<api>``).
    """
    arr = np.asarray(value, dtype=float)
    bad = ~(arr > 0) | (np.isinf(arr) & (not allow_inf))
    if np.any(bad):
        first = arr[bad].flat[0]
        kind = "> 0" if allow_inf else "finite and > 0"
        raise InputError("<api>", name, f"must be {kind}, got {first!r}")
    return arr


def winding_resistance(resistance, winding_temperature=REFERENCE_TEMPERATURE) -> np.ndarray:
    """Winding resistance at temperature ``T``: R(T) = R20·(1 + 0.00393·(T − 20)).

    Parameters
    ----------
    resistance : array_like
        Line-to-line resistance at 20 °C (Ω), > 0.
    winding_temperature : array_like
        Winding temperature (°C); must keep R(T) > 0 (above about −234 °C).

    Returns
    -------
    ndarray
        R(T) in Ω.
    """
    r20 = check_positive("resistance", resistance)
    out = r20 * (1.0 + COPPER_TEMPCO * (np.asarray(winding_temperature, float) - 20.0))
    return check_positive("winding_temperature (resistance factor)", out)


def torque_constant_from_kv(kv) -> np.ndarray:
    """Torque constant Kt = 60/(2π·Kv) (N·m/A) from the speed constant Kv (rpm/V), DC-equivalent."""
    return 60.0 / (2.0 * math.pi * check_positive("kv", kv))


def motor_constant(torque_constant, resistance, winding_temperature=REFERENCE_TEMPERATURE):
    """Motor constant Km = Kt/√R(T) (N·m/√W); the copper loss at torque τ is τ²/Km².

    With line-to-line Kt and R the value does not depend on the winding convention.
    """
    kt = check_positive("torque_constant", torque_constant)
    return kt / np.sqrt(winding_resistance(resistance, winding_temperature))


def copper_loss(torque, km) -> np.ndarray:
    """Copper loss P = τ²/Km² (W) at motor torque τ (N·m) and motor constant Km (N·m/√W)."""
    km = check_positive("km", km)
    return np.square(np.asarray(torque, dtype=float)) / np.square(km)


def no_load_speed(torque_constant, bus_voltage) -> np.ndarray:
    """No-load speed ω0 = V/Ke (rad/s), Ke = Kt."""
    kt = check_positive("torque_constant", torque_constant)
    return check_positive("bus_voltage", bus_voltage) / kt


def stall_torque(torque_constant, resistance, bus_voltage, winding_temperature=20.0):
    """Stall torque Kt·V/R(T) (N·m): the torque line at zero speed (before the peak-torque cap)."""
    kt = check_positive("torque_constant", torque_constant)
    v = check_positive("bus_voltage", bus_voltage)
    return kt * v / winding_resistance(resistance, winding_temperature)


def _line(torque_constant, resistance, bus_voltage, winding_temperature):
    """(Kt, V, R(T)) as checked arrays, or None for the corner-point envelope."""
    given = [x is not None for x in (torque_constant, resistance, bus_voltage)]
    if not any(given):
        return None
    if not all(given):
        raise InputError(
            "<api>",
            "torque_constant, resistance, bus_voltage",
            "give all three for the voltage-limited envelope or none for the corner-point one",
        )
    kt = check_positive("torque_constant", torque_constant)
    v = check_positive("bus_voltage", bus_voltage, allow_inf=True)
    return kt, v, winding_resistance(resistance, winding_temperature)


def torque_speed_envelope(
    omega,
    *,
    peak_torque,
    max_speed,
    torque_constant=None,
    resistance=None,
    bus_voltage=None,
    winding_temperature=REFERENCE_TEMPERATURE,
    braking=False,
) -> np.ndarray:
    """Available motor torque magnitude at motor speed ω.

    τ(ω) = min(τ_peak, Kt·(V ∓ Kt·|ω|)/R(T)) clipped at 0, and 0 where |ω| > max_speed; the
    minus sign is the driving quadrant, the plus sign (``braking=True``) the braking one.
    Without ``torque_constant``, ``resistance`` and ``bus_voltage`` (all three None) the
    corner-point envelope τ_peak up to max_speed is returned. In a batch that mixes both kinds,
    pass ``bus_voltage = inf`` for members without electrical data.

    Parameters
    ----------
    omega : array_like
        Motor shaft speed (rad/s); its sign is ignored.
    peak_torque : array_like
        Peak (current-limited) torque (N·m), > 0.
    max_speed : array_like
        Maximum mechanical speed (rad/s), > 0.
    torque_constant : array_like, optional
        Kt = Ke (N·m/A), line-to-line, > 0.
    resistance : array_like, optional
        Line-to-line resistance at 20 °C (Ω), > 0.
    bus_voltage : array_like, optional
        Bus voltage (V), > 0 (inf allowed).
    winding_temperature : array_like
        Winding temperature (°C) for R(T).
    braking : array_like of bool
        True where the torque opposes the motion (regenerating quadrant).

    Returns
    -------
    ndarray
        Available torque (N·m), ≥ 0, broadcast over all arguments.
    """
    w = np.abs(np.asarray(omega, dtype=float))
    peak = check_positive("peak_torque", peak_torque)
    wmax = check_positive("max_speed", max_speed, allow_inf=True)
    tau = np.broadcast_to(peak, np.broadcast_shapes(w.shape, peak.shape)).astype(float)
    line = _line(torque_constant, resistance, bus_voltage, winding_temperature)
    if line is not None:
        kt, v, r = line
        emf = np.where(braking, 1.0, -1.0) * kt * w
        tau = np.clip(np.minimum(tau, kt * (v + emf) / r), 0.0, None)
    return np.where(w > wmax, 0.0, tau)


def speed_at_torque(
    torque,
    *,
    peak_torque,
    max_speed,
    torque_constant=None,
    resistance=None,
    bus_voltage=None,
    winding_temperature=REFERENCE_TEMPERATURE,
) -> np.ndarray:
    """Highest motor speed (rad/s) at which the driving-quadrant envelope still gives |torque|.

    ω = min(max_speed, (V − |τ|·R(T)/Kt)/Kt), or max_speed for the corner-point envelope;
    0 where |τ| exceeds what the motor gives even at standstill (peak or stall torque).

    Parameters are those of :func:`torque_speed_envelope`; ``torque`` in N·m.
    """
    t = np.abs(np.asarray(torque, dtype=float))
    peak = check_positive("peak_torque", peak_torque)
    wmax = check_positive("max_speed", max_speed, allow_inf=True)
    speed = np.broadcast_to(wmax, np.broadcast_shapes(t.shape, wmax.shape, peak.shape))
    line = _line(torque_constant, resistance, bus_voltage, winding_temperature)
    if line is not None:
        kt, v, r = line
        speed = np.minimum(speed, (v - t * r / kt) / kt)
    return np.where(t > peak, 0.0, np.clip(speed, 0.0, None))
