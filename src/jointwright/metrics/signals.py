"""Signals over one duty cycle: the sample times, quadrature weights, RMS and peak.

Array layout: a *signal* has time on its last axis, ``(..., T)``; the leading axes are designs
and joints. *Parameters* (ratio, efficiencies, ratings, thermal data) broadcast against the
leading axes ``(...)`` only; the functions add the time axis themselves (:func:`lead_axis`).
Trajectory arrays shaped ``(T, n_joints)`` are passed transposed. ``t`` is one time vector
``(T,)`` (s), strictly increasing; a repeating cycle runs from ``t[0]`` to ``t[-1]`` and then
starts again.

Between samples a signal is either linear (``hold="linear"``, the default) or holds its value
until the next sample (``hold="previous"``).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

HOLDS = ("linear", "previous")


def lead_axis(x) -> np.ndarray:
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


def check_signal(name: str, x, t: np.ndarray) -> np.ndarray:
    """``x`` as a finite float array with the samples of ``t`` on its last axis."""
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


def rms(x, t, *, hold: str = "linear") -> np.ndarray:
    """Root mean square over the cycle, exact for the chosen hold.

    linear: √(Σ h_k·(x_k² + x_k·x_{k+1} + x_{k+1}²)/3 / (t_end − t_0));
    previous: √(Σ h_k·x_k² / (t_end − t_0)).
    """
    t = check_time(t, hold)
    x = check_signal("x", x, t)
    h = np.diff(t)
    a, b = x[..., :-1], x[..., 1:]
    sq = a * a if hold == "previous" else (a * a + a * b + b * b) / 3.0
    return np.sqrt(np.sum(sq * h, axis=-1) / (t[-1] - t[0]))


def peak(x) -> np.ndarray:
    """Largest magnitude over the last (time) axis."""
    return np.max(np.abs(np.asarray(x, dtype=float)), axis=-1)
