"""Requirements across the efficiency band: each metric at its worst end (robust sizing).

Every stack's forward and backward efficiencies lie in a band [η_f,lo, η_f,hi] × [η_b,lo, η_b,hi]
(catalog.bands; the band of a stack: every stage at the same end). Per case kind the evaluation
runs at the ends below and keeps, per design, the worst value of each metric; the proofs that
these ends are the worst over the whole band are in docs/metrics.md ("Efficiency bands") and are
checked numerically in tests/test_efficiency_bands.py:

* payload, stance: (η_f low, η_b high). The motoring capacity η_f·N·τ_m rises with η_f, the
  holding capacity N·τ_m/η_b falls with η_b; each joint's mode follows the link-side torque and
  motion, not the efficiencies; the largest force over a torque box can only fall as the box
  shrinks. Exact over the whole band.
* impact, backdrive: (η_f low, η_b low). The back-driven reflected inertia N²·I_r/η_b falls with
  η_b (locked at η_b ≤ 0, its limit), so the mass matrix only grows in the Loewner order as η_b
  falls: the effective mass rises, the IMF and the contact speed fall; the breakaway torque
  N·Σ/η_b falls with η_b, so the back-drive force is largest at the low end. Exact. The
  forward-driving effective mass (``effective_mass_motoring``, no requirement reads it) is shown
  as the largest over the four corners.
* speed without a stroke: (low, low) and (high, high). At any one speed each joint's motor
  torque depends on one efficiency (its mode's) and is affine in 1/η_f or in η_b, and the
  admissible torques form an interval, so the two uniform corners hold both ends of it for every
  joint: the steady loaded speed and the acceleration from rest are exact.
* speed with a stroke, duty: the four corners and the nominal point, the worst of each metric.
  Exact for the peak and RMS motor torque of a duty cycle (their squares are convex in
  (1/η_f, η_b), so the maximum sits at a corner); for the speed within a stroke and the envelope
  and thermal use of a duty cycle it is the worst over these five points, not a proven bound
  over the interior.
"""

from __future__ import annotations

import numpy as np

#: band ends (forward, backward) evaluated per case kind, with detail and without
CORNERS = ("low", "high")
FOUR = tuple((f, b) for f in CORNERS for b in CORNERS) + (("nominal", "nominal"),)
ENDS: dict[str, tuple[tuple[str, str], ...]] = {
    "payload": (("low", "high"),),
    "stance": (("low", "high"),),
    "impact": (("low", "low"),),
    "backdrive": (("low", "low"),),
    "speed": FOUR,
    "duty": FOUR,
}
#: impact cases with detail: the forward-driving effective mass needs every corner
IMPACT_DETAIL = (("low", "low"), ("low", "high"), ("high", "low"), ("high", "high"))

#: the metric that picks the corner the other outputs of a case come from, and its worse side
MAIN = {
    "payload": ("payload", "min"),
    "stance": ("payload", "min"),
    "impact": ("effective_mass", "max"),
    "backdrive": ("backdrive_force", "max"),
    "speed": ("speed", "min"),
    "duty": ("rating_use", "max"),
}

#: metrics taken at their own worst corner per design ("min": lower is worse)
WORSE = {
    "payload": "min",
    "payload_raise": "min",
    "payload_lower": "min",
    "payload_hold": "min",
    "imf": "min",
    "imf_restricted": "min",
    "imf_direction": "min",
    "effective_mass": "max",
    "effective_mass_motoring": "max",
    "contact_speed": "min",
    "backdrive_force": "max",
    "speed": "min",
    "speed_steady": "min",
    "acceleration": "min",
    "stroke_time": "max",
    "rating_use": "max",
    # duty cycles, per joint (D, n): each joint at its own worst end
    "rms_torque": "max",
    "peak_torque": "max",
    "peak_temperature": "max",
    "rms_ratio": "max",
    "peak_ratio": "max",
    "envelope_ratio": "max",
    "thermal_ratio": "max",
}


#: a speed case without a stroke: per joint one efficiency matters (its mode's), and the two
#: uniform corners hold both ends of it for every joint
STEADY = (("low", "low"), ("high", "high"))


def ends_for(kind: str, detail: bool, case=None) -> tuple[tuple[str, str], ...]:
    """The band ends a case of ``kind`` is evaluated at (``case``: the case, for its stroke)."""
    if kind == "impact" and detail:
        return IMPACT_DETAIL
    if kind == "speed" and case is not None and getattr(case, "stroke", 0.0) <= 0:
        return STEADY
    return ENDS[kind]


def worst_of(kind: str, results: list[dict[str, np.ndarray]]) -> dict[str, np.ndarray]:
    """Combine one case's outputs at several band ends: each metric of :data:`WORSE` at its own
    worst end per design, every other output from the end where the case's main metric is
    worst (so a limiting joint matches the value it limits)."""
    if len(results) == 1:
        return results[0]
    key, sense = MAIN[kind]
    main = np.stack([np.asarray(r[key], dtype=float) for r in results])
    main = np.where(np.isnan(main), np.inf if sense == "min" else -np.inf, main)
    pick = np.argmin(main, axis=0) if sense == "min" else np.argmax(main, axis=0)
    out = {}
    for k in results[0]:
        values = np.stack([np.asarray(r[k]) for r in results])
        if k in WORSE and values.dtype.kind == "f":
            out[k] = np.min(values, axis=0) if WORSE[k] == "min" else np.max(values, axis=0)
        else:
            index = pick.reshape(pick.shape + (1,) * (values.ndim - 1 - pick.ndim))
            index = np.broadcast_to(index, (1,) + values.shape[1:])
            out[k] = np.take_along_axis(values, index, axis=0)[0]
    return out
