"""Winding temperature over a duty cycle: a first-order thermal model driven by the copper
loss, with the winding resistance rising with temperature, integrated exactly per sample
interval; the response from a start temperature and the steady periodic state of a cycle
repeated forever (inf on thermal runaway). Array layout as in :mod:`.signals`.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from .envelope import COPPER_TEMPCO, check_positive
from .signals import check_signal, check_time, lead_axis


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
    p = check_signal("copper_loss", loss, t)
    if np.any(p < 0):
        raise InputError("<api>", "copper_loss", "must be >= 0 W")
    r = lead_axis(check_positive("R_th", r_th))
    c_th = lead_axis(check_positive("tau_th", tau_th)) / r
    ta = lead_axis(ambient)
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
