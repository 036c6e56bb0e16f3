"""Words and numbers the terminal and the report share: a runner-up's objective change, why a
gap is not known, where a case's force acts, a torque case's required and available torques.

Each takes ``minus``: "−" in the report, "-" in the terminal (as every number there).
"""

from __future__ import annotations

import math
from collections.abc import Callable

from ..solve.result import ROUNDING_GAP
from ..units import format_number
from .markup import as_float, unit_text

#: per objective: does it maximize, and the words for a runner-up worse or better than the choice
_CHANGE_WORDS = {
    "payload": (True, "payload", "payload"),
    "imf": (True, "IMF", "IMF"),
    "margin": (True, "margin", "margin"),
    "mass": (False, "heavier", "lighter"),
    "cost": (False, "costlier", "cheaper"),
}


def objective_change(kind: str, loss, unit: str = "", *, minus: str = "−") -> str:
    """A runner-up's objective against the chosen design's, signed as the objective reads:
    ``loss`` ≥ 0 is how much worse it is (in the maximized sense, solve.result.Alternative).
    Payload (maximized): "−0.12 kg payload"; mass (minimized): "+0.12 kg heavier"; equal to
    within 1e-9 (relative) or at the shown digits: "tie"; None: "—"."""
    if loss is None:
        return "—"
    loss = float({"inf": math.inf, "-inf": -math.inf}.get(loss, loss))
    if math.isnan(loss):
        return "—"
    maximized, worse, better = _CHANGE_WORDS.get(kind, (True, kind, kind))
    size = format_number(abs(loss), 3)
    if math.isfinite(loss) and (abs(loss) <= 1e-9 or float(f"{abs(loss):.3g}") == 0.0):
        return "tie"
    change = -loss if maximized else loss  # the runner-up's objective minus the choice's
    sign = "+" if change > 0 else minus
    word = worse if loss > 0 else better
    return " ".join(x for x in (f"{sign}{size}", unit_text(unit), word) if x)


def envelope_speed(metrics: dict) -> str:
    """Where a speed case's motor meets its torque-speed envelope, in words (a case without a
    stroke: at the steady speed it checks; with a stroke see :func:`beyond_stroke`)."""
    return "at steady speed"


def beyond_stroke(metrics: dict, *, minus: str = "-") -> str:
    """A speed case with a stroke: what lies beyond it, in one sentence ("" without a stroke).

    The motors' steady speed at the case's pose is the ceiling of the motion linearized there
    (the Jacobian held at the pose). A stroke long enough to reach it would carry the robot far
    out of the pose, so it is not a speed the robot reaches: a direct-drive wrist at a short
    lever gives tens of m/s. It is kept out of the metric table and the text, where it read as
    a result; the JSON output keeps it."""
    steady = metrics.get("speed_steady")
    if steady is None:
        return ""
    text = (
        "beyond the stroke the motors would keep accelerating, but the robot leaves this pose "
        "long before they would settle: the steady speed of the motion linearized here is no "
        "speed it reaches, and is given only in the JSON output (speed_steady)"
    )
    joint, _sep, part = str(metrics.get("envelope_limit") or "").partition(": ")
    if part:
        text += f"; at that speed {joint}'s motor would be at its envelope ({part})"
    return text


def without_stroke(kind: str, metrics: dict, *, minus: str = "-") -> str:
    """A speed case without a stroke: its speed is the one the motors sustain at the pose with
    the load, however long it takes to reach. The acceleration from rest a₀ is the largest
    along the way (the torque left for accelerating only falls as the speed rises), so
    reaching v takes at least v/a₀; one sentence says so ("" otherwise)."""
    if kind != "speed" or metrics.get("speed_steady") is not None:
        return ""
    raw_v, raw_a = metrics.get("speed"), metrics.get("acceleration")
    if not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in (raw_v, raw_a)):
        return ""
    v, a0 = float(raw_v), float(raw_a)  # type: ignore[arg-type]
    if not (math.isfinite(v) and v > 0):
        return ""
    text = (
        "no stroke: the speed the motors sustain at this pose under gravity and the case's load, "
        "however long it takes to reach"
    )
    if math.isfinite(a0) and a0 > 0:
        text += (
            f" (at least v/a₀ = {format_number(v / a0, 3, minus=minus)} s from rest at the "
            f"{format_number(a0, 4, minus=minus)} m/s² it starts with)"
        )
    return text + "; set stroke to check the speed reached within a distance"


def bound_mark(requirement: str, reached: bool) -> str:
    """The mark before a diagnosis's best-alone value (solve.result.Diagnosis.best_proven): ""
    for a value some design reaches; for a bound, "≤ " on a minimum requirement (an upper bound)
    and "≥ " on a maximum one ("… max": the least value found bounds it from below)."""
    if reached:
        return ""
    return "≥ " if requirement.endswith(" max") else "≤ "


def shock_share(has_gear: bool, use, torque, repeated_peak, percent: Callable[[float], str]):
    """A joint's share of its gear's rating at an impact, in words: of the momentary rating;
    with no momentary rating, how far the torque exceeds the repeated-peak rating when it does
    (a stage sized for cycles, struck past them with no stated emergency-stop limit); "no
    gear" for a direct drive. ``percent`` formats a percentage."""
    if not has_gear:
        return "direct drive: no gear"
    u, tau, peak = as_float(use), abs(as_float(torque)), as_float(repeated_peak)
    if math.isnan(u):
        text = "no momentary rating"
        if 0 < peak < tau < math.inf:
            text += f"; {percent(100.0 * tau / peak)} of the repeated-peak rating"
        return text
    return f"{percent(100.0 * u)} of momentary"


#: how a negative payload mass reads: the force does not reach the case's own fixed load
NO_PAYLOAD = "none (the force falls short of the case's fixed load)"


def carried_text(carried, number: Callable[[float], str]) -> str:
    """The payload mass a case carries as text: ``number(carried)``, or :data:`NO_PAYLOAD` when
    it is negative (a force below the fixed load is no payload, not a negative mass)."""
    if isinstance(carried, (int, float)) and not isinstance(carried, bool) and carried < 0:
        return NO_PAYLOAD
    return number(carried)


def carried_payloads(a: dict) -> dict[str, float]:
    """Per payload or stance case of assessment dict ``a``, the payload mass it carries (kg,
    finite values only): their least is the sizing's payload objective, negative when a case
    does not carry its own fixed load."""
    out = {}
    for c in a.get("cases", []):
        v = c["metrics"].get("payload_carried") if c.get("kind") in ("payload", "stance") else None
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            out[c["name"]] = float(v)
    return out


#: modes in the order a reader scans them: the joints doing work first
MODE_ORDER = ("motoring", "back-driven", "holding")
#: a last group of more joints than this reads "the other N joints"
MODE_LIST_MAX = 4


def modes_text(joint_modes: dict) -> str:
    """A payload case's power-flow mode per joint, grouped by mode: "motoring: knee;
    back-driven: hip_fe; holding: hip_ab". On a whole robot the long last group (the other legs,
    holding) reads "holding: the other 10 joints"."""
    groups: dict[str, list[str]] = {}
    for joint, mode in joint_modes.items():
        groups.setdefault(str(mode), []).append(joint)
    order = [m for m in MODE_ORDER if m in groups] + [m for m in groups if m not in MODE_ORDER]
    parts = []
    for k, mode in enumerate(order):
        joints = groups[mode]
        last = k == len(order) - 1 and k > 0
        if last and len(joints) > MODE_LIST_MAX:
            parts.append(f"{mode}: the other {len(joints)} joints")
        else:
            parts.append(f"{mode}: {', '.join(joints)}")
    return "; ".join(parts)


#: the duty-cycle rating checks (metrics.duty) in words
LIMITING_QUANTITY = {
    "rms_torque": "continuous torque (RMS)",
    "peak_torque": "peak torque",
    "speed": "motor top speed",
    "envelope": "torque-speed line",
    "temperature": "winding temperature",
}


def limiting_quantity_text(key) -> str:
    """The rating a duty cycle uses most, in words ("rms_torque" -> "continuous torque (RMS)");
    an unknown key with its underscores as spaces, none as "—"."""
    if key is None or key == "":
        return "—"
    return LIMITING_QUANTITY.get(str(key), str(key).replace("_", " "))


def vector_text(v, unit: str, *, minus: str = "−") -> str:
    """A 3-vector with its unit, e.g. "(0.12, 0, 0) m"."""
    return (
        "("
        + ", ".join(format_number(x, 4, minus=minus, group=False) for x in v)
        + f") {unit_text(unit)}"
    )


def wrench_text(case, *, minus: str = "−") -> str:
    """Where a payload or stance case's force acts and the moment with it, in words ("" when
    the force acts at the frame's origin with no moment): "at (0.12, 0, 0) m from tool;
    moment (0, 0, 4) N·m (world axes)"."""
    if not getattr(case, "has_wrench", False):
        return ""
    parts = []
    if any(x != 0.0 for x in case.offset):
        parts.append(f"at {vector_text(case.offset, 'm', minus=minus)} from {case.frame}")
    if any(x != 0.0 for x in case.moment):
        parts.append(f"moment {vector_text(case.moment, 'N·m', minus=minus)}")
    return "; ".join(parts) + " (world axes)"


def gap_text(gap) -> str:
    """A search's relative gap to the proven bound, unsigned (it is never negative): "0 %" when
    proven optimal or when the bound differs from the value by rounding only (below
    :data:`ROUNDING_GAP`), "13.6 %", "0.002 %"."""
    g = float(gap)
    return "0 %" if abs(g) < ROUNDING_GAP else f"{100 * g:.3g} %"


def unknown_gap(project, kind: str) -> str:
    """Why a search that stopped early has no finite bound (bound ∞), in words: the relative
    gap of its best design to the optimum is then not known, never shown as "∞"."""
    if kind == "margin" and project is not None:
        from ..problem import margin_cases

        others = [c for c in margin_cases(project) if c.kind not in ("payload", "stance")]
        if others:
            named = ", ".join(f"{c.name} ({c.kind})" for c in others)
            return (
                "gap not known: the search bounds the margins of payload and stance cases only, "
                f"and the margin objective also takes {named}, whose margin has no bound before "
                "a design is scored; the best design found is not proven optimal (a run without "
                "a time limit searches every option and proves the optimum within its gap)"
            )
    return (
        "gap not known: the search had no finite bound on the objective when it stopped; the "
        "best design found is not proven optimal"
    )


#: a torque case's joint motion -> the joint's power-flow mode while it carries the torque
TORQUE_MODES = {"along": "motoring", "against": "back-driven", "hold": "holding"}


def torque_rows(case, metrics: dict, revolute: dict, *, minus: str = "−") -> list[list[str]]:
    """Per joint of a torque case: [joint, required, available, achieved ÷ required, mode].

    Required: the case's joint torque (N·m; N for a prismatic joint), signed; available: the
    joint's capacity on the side of that torque in its power-flow mode, |τ| × the ratio the
    assessment reports (metrics.loads.torque_ratio); ∞ for a self-locking joint that holds."""
    out = []
    motions = dict(case.joint_motions)
    for joint, tau in case.joint_torques:
        unit = "N·m" if revolute.get(joint, True) else "N"
        ratio = metrics.get(f"torque_ratio:{joint}")
        if isinstance(ratio, str):  # JSON's infinities
            ratio = {"inf": math.inf, "-inf": -math.inf}.get(ratio, ratio)
        available = None
        if isinstance(ratio, (int, float)) and tau != 0:
            available = abs(tau) * float(ratio)

        def text(v, u=unit):
            shown = format_number(v, 4, minus=minus)
            return shown if shown == "—" or not u else f"{shown} {u}"

        out.append(
            [
                joint,
                text(tau),
                text(available),
                text(ratio, ""),
                TORQUE_MODES.get(motions.get(joint, "along"), "motoring"),
            ]
        )
    return out


def pose_text(pose: dict, revolute: dict, *, minus: str = "−") -> str:
    """Joint positions as people read them: a revolute joint in degrees, a prismatic one in m
    ("shoulder_pitch 51.57°, slide 0.12 m"); ``revolute``: joint -> True for a revolute joint."""
    out = []
    for joint, q in pose.items():
        if revolute.get(joint, True):
            out.append(f"{joint} {format_number(math.degrees(float(q)), 4, minus=minus)}°")
        else:
            out.append(f"{joint} {format_number(float(q), 4, minus=minus)} m")
    return ", ".join(out)


def region_groups(names: list[str], project) -> list:
    """``names`` (case names, in order) grouped by region: [(region or "", [names])], a region's
    poses together at the place of its first pose, other cases each on their own."""
    region = {c.name: c.region for c in project.cases} if project is not None else {}
    groups: list = []
    where: dict[str, list] = {}
    for n in names:
        r = region.get(n, "")
        if not r:
            groups.append(("", [n]))
        elif r in where:
            where[r].append(n)
        else:
            where[r] = [n]
            groups.append((r, where[r]))
    return groups
