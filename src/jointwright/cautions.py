"""The usual cautions that go with an assessment: what a concept-stage sizing leaves to the
supplier's data, tests, the applicable safety standards, local codes and licensed engineering
practice, and the hazards a design's own joints raise (self-locking, an efficiency band that
crosses 0, gear shock and gear life).
"""

from __future__ import annotations

import math

import numpy as np

CAUTION = (
    "Concept-stage sizing aid. Verify every selection against the supplier's data and by test. "
    "A self-locking or high-ratio joint can trap or crush; apply the applicable machinery and "
    "collaborative-robot safety standards, local codes and licensed engineering practice."
)


#: cautions for the gear life and landing-shock checks (docs/metrics.md)
SHOCK_CAUTION = (
    "Gear shock at impacts is a concept-stage estimate (rigid contact, the links take the impulse "
    "before the rotors move, an undamped gear spring; backlash, a softer or harder contact and "
    "repeated impacts are not in it) compared with the supplier's momentary rating. A gear that "
    "breaks at an impact can drop the robot or release its load: hurting someone nearby. Verify "
    "by the supplier's data and by test, and apply the applicable machinery safety standards and "
    "licensed engineering practice."
)
LIFE_CAUTION = (
    "Gear life uses the rated-life equation with the catalog's rated point and life exponent and "
    "Miner's rule over the duty cycles; lubrication, temperature, misalignment and shock loads "
    "change real lives. Confirm with the supplier and by test before relying on it."
)


#: a project without a duty case checks peaks only
NO_DUTY_CAUTION = (
    "No duty case: continuous (RMS) torque, winding temperature and gear life over a working "
    "cycle are not checked, only the peak, speed and impact cases. A design that meets them can "
    'still overheat when it holds or repeats a load; add a case of kind "duty" with the '
    "working cycle (docs/duty-cycle.md)."
)


def gear_cautions(project) -> list[str]:
    """The usual cautions for the gear-shock and gear-life checks a project makes."""
    out = []
    if any(getattr(c, "impact_speed", 0.0) > 0 for c in project.cases):
        out.append(SHOCK_CAUTION)
    if getattr(project.requirements, "life_min", 0.0) > 0:
        out.append(LIFE_CAUTION)
    return out


def design_cautions(project, design) -> list[str]:
    """Every caution for ``design`` on ``project``: the general one first, then contact, gear
    shock and life, then each joint's own (a backward efficiency band crossing 0, self-locking)."""
    out = [CAUTION]
    if any(getattr(c, "body_region", None) is not None for c in project.cases):
        out.append(
            "Contact speeds use the two-body transient-contact model of ISO/TS 15066 with the body-"
            "region values given in the project: they do not cover clamping, pressure limits, the "
            "robot's stopping time or the risk assessment, which stay with the applicable "
            "standards "
            "and licensed engineering practice."
        )
    out.extend(gear_cautions(project))
    if not any(c.kind == "duty" for c in project.cases):
        out.append(NO_DUTY_CAUTION)
    for j, a in zip(project.robot.actuated, design.actuators, strict=True):
        b_lo, b_hi = a.efficiency_band[2:]
        if b_lo <= 0 < b_hi:
            out.append(
                f"{j}: the backward efficiency band ({b_lo:.2f} to {b_hi:.2f}) crosses 0: the "
                "joint may or may not self-lock depending on temperature, load and wear. Do not "
                "rely on it to hold a load or to yield to a push; provide a brake or a tested "
                "holding means under the applicable safety standards."
            )
        if a.self_locking:
            out.append(
                f"{j}: self-locking transmission (backward efficiency {a.eta_backward:.2f} ≤ 0). "
                "It holds its load when unpowered and cannot be pushed back by a person or an "
                "obstacle: "
                "pinch and crush hazard. Apply the applicable safety standards."
            )
    return out


def _number(x) -> bool:
    """A real number (not a flag, not NaN): a metric's value as the cautions read it."""
    return isinstance(x, (int, float)) and not isinstance(x, bool) and not math.isnan(x)


def friction_cautions(cases) -> list[str]:
    """For each payload case that carries a payload only through gear friction (no payload with
    frictionless gears), and for each that cannot lower its load under control (no payload
    while lowering or yielding): what that means and the usual caution. (Stance cases give no
    frictionless figure; their self-locking joints get the joint's own caution.)
    ``cases``: the assessment's case results (name, kind, metrics with ``payload``,
    ``payload_frictionless``, ``payload_lower`` in N)."""
    out = []
    for case in cases:
        if case.kind != "payload":
            continue
        m = case.metrics
        carried = m.get("payload", math.nan)
        if not (_number(carried) and 0 < carried < math.inf):
            continue
        if _number(m.get("payload_frictionless")) and m["payload_frictionless"] <= 0:
            out.append(
                f"case {case.name!r}: with frictionless gears the joints carry no payload; the "
                f"{carried:.4g} N it reaches rest on gear friction (a self-locking or nearly "
                "self-locking transmission holds what the motor cannot). Friction changes with "
                "temperature, lubrication, load and wear, and so does what it holds: check the "
                "case at the worst end of the efficiency band (requirements.efficiency_band; "
                "for a load held by friction, the least-friction end), and do not rely on gear "
                "friction to hold a load near people; provide a brake or a tested holding means "
                "under the applicable safety standards."
            )
        if _number(m.get("payload_lower")) and m["payload_lower"] <= 0:
            out.append(
                f"case {case.name!r}: while lowering or yielding the joints carry no payload "
                "(0 N): the design raises or holds this load but cannot lower it under control. "
                "Resize the limiting joint or treat the case as hold-only, with the applicable "
                "safety standards for a load that may not be set down."
            )
    return out


#: a speed case without a stroke whose speed takes longer than this to reach from rest, s
#: (rule of thumb: a pick, place, swing or step lasts well under a second or two)
SLOW_REACH = 1.0


def slow_speed_cautions(cases) -> list[str]:
    """For each speed case without a stroke whose checked speed v takes at least v/a₀ >
    :data:`SLOW_REACH` to reach from rest (a₀: the acceleration it starts with, the largest
    along the way): its requirement may pass on a speed the robot never reaches in use."""
    out = []
    for case in cases:
        m = case.metrics
        if case.kind != "speed" or m.get("speed_steady") is not None:
            continue
        v, a0 = m.get("speed"), m.get("acceleration")
        if not (_number(v) and _number(a0) and 0 < v < math.inf and 0 < a0 < math.inf):
            continue
        if v / a0 > SLOW_REACH:
            out.append(
                f"case {case.name!r}: the speed it checks, {v:.4g} m/s, takes at least "
                f"{v / a0:.3g} s to reach from rest (v/a₀ at the {a0:.4g} m/s² it starts "
                f"with), longer than most robot motions (over {SLOW_REACH:g} s, a rule of "
                "thumb): its speed requirement may pass on a speed the robot never reaches in "
                "use. Set the case's stroke (the distance the motion has) to check the speed "
                "reached within it."
            )
    return out


#: a stance contact taking less than this share of the ground force is "nearly unloaded"
LEANING_SHARE = 0.05


#: contacts further apart than this along their common normal are not on one ground plane, m
GROUND_TOLERANCE = 0.01


def contact_heights(evaluator) -> dict[str, dict[str, float]]:
    """Per stance case whose contacts share one normal: each contact's height along it (m)
    above the lowest, at the case's pose (a foot off the ground is still taken as touching)."""
    out = {}
    for pc in evaluator.cases:
        case = pc.case
        if case.kind != "stance" or pc.basis is None:
            continue
        normals = np.array([n for _, _, n in case.contacts])
        if not np.allclose(normals, normals[0], rtol=0.0, atol=1e-9):
            continue
        h = pc.basis.frame_positions[1 : 1 + len(normals)] @ normals[0]  # contacts follow frame
        h = h - h.min()
        out[case.name] = {f: float(v) for (f, _, _), v in zip(case.contacts, h, strict=True)}
    return out


def ground_cautions(heights: dict[str, dict[str, float]]) -> list[str]:
    """Stance contacts that are not on one ground plane at their case's pose."""
    out = []
    for name, h in heights.items():
        high = {f: v for f, v in h.items() if v > GROUND_TOLERANCE}
        if high:
            listed = ", ".join(f"{f} {v * 1000:.0f} mm" for f, v in high.items())
            out.append(
                f"stance case {name!r}: not every contact is on the ground at this pose "
                f"({listed} above the lowest, along the contact normal); each is still taken "
                "as touching and pushing. Check the pose or the contact list."
            )
    return out


def stance_cautions(project, cases) -> list[str]:
    """For each stance case with no ``contact_share_min`` (or one under :data:`LEANING_SHARE`)
    whose solution leaves some contacts
    nearly unloaded (under :data:`LEANING_SHARE` of the vertical ground force) while others
    carry the load: the robot balances with no margin, e.g. on two diagonal feet with the
    centre of mass on the line between them. ``cases``: the assessment's case results (name,
    metrics with ``normal_force:<frame>``)."""
    by_name = {c.name: c for c in cases}
    out = []
    for case in project.cases:
        if case.kind != "stance" or case.contact_share_min >= LEANING_SHARE:
            continue
        if case.name not in by_name:
            continue
        metrics = by_name[case.name].metrics
        force = {f: metrics.get(f"normal_force:{f}", float("nan")) for f, _, _ in case.contacts}
        total = sum(max(v, 0.0) for v in force.values())
        if not total > 0:
            continue
        light = [f for f, v in force.items() if v < LEANING_SHARE * total]
        if light and len(light) < len(force):
            out.append(
                f"stance case {case.name!r}: {', '.join(light)} "
                f"{'carries' if len(light) == 1 else 'carry'} under "
                f"{LEANING_SHARE:.0%} of the ground force ({total:.4g} N); the robot balances "
                "on the other contacts with little or no margin against tipping, a misplaced "
                "foot or a shifting load. To size for a spread load, set contact_share_min on "
                "the case (each contact's least share of the total, e.g. 0.1 to 0.2 [common "
                "practice]); where the centre of mass lies on the edge of the support (three "
                "feet of a quadruped with its trunk centred) no share is possible: shift the "
                "pose over the support. A robot that loses balance with a load can fall on "
                "someone."
            )
    return out
