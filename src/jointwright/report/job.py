"""The job and its terms in the report: the robot, its cases and requirements, the budgets,
and the assumptions, limits and cautions the results rest on."""

from __future__ import annotations

import math

from ..cases import STANDARD_GRAVITY as G0
from .markup import (
    Section,
    bullets,
    fmt,
    number,
    paragraph,
    table,
)
from .wording import wrench_text


def job_section(project) -> Section:
    """Who the robot is for and what it must do: summary, cases and budgets."""
    rows = []
    sizes: dict[str, int] = {}
    shown: set[str] = set()
    for c in project.cases:
        if c.region:
            sizes[c.region] = sizes.get(c.region, 0) + 1
    for c in project.cases:
        if c.region in shown:
            continue  # a region case is one row: its poses share kind, frame, load and limits
        if c.region:
            shown.add(c.region)
        limits = ", ".join(
            f"{k.replace('_', ' ')} {_limit_text(k, v)}{_as_payload_mass(c, k, v)}"
            for k, v in c.limits.items()
        )
        direction = (
            "—" if c.direction is None else "(" + ", ".join(number(x, 3) for x in c.direction) + ")"
        )
        if c.has_wrench:  # where the force acts and the moment with it
            direction += "; " + wrench_text(c)
        motion = c.motion if c.kind in ("payload", "stance") else "—"
        name = f"{c.region} ({sizes[c.region]} poses)" if c.region else c.name
        rows.append([name, c.kind, c.frame or "—", direction, motion, limits or "none"])
    base = "floating base (free-flying trunk)" if project.robot.base == "floating" else "fixed base"
    joints = ", ".join(project.robot.actuated)
    summary = project.summary.replace("\n", " ").strip() or "(no summary in the project file)"
    body = (
        paragraph(summary)
        + paragraph(
            f"Robot: {len(project.robot.actuated)} actuated joints ({joints}), "
            f"{base}. Project file: {project.file.name}."
        )
        + "<h3>Operating cases and their requirements</h3>"
        + table(
            ["case", "kind", "tip frame", "direction (world)", "motion", "requirements"],
            rows,
            caption="Directions are unit vectors in world axes; a payload is the "
            "force the tip exerts on its surroundings along the direction, at the tip frame's "
            "origin unless an offset says where it acts (with the moment it adds), together with "
            "any moment the case states.",
        )
        + "<h3>Budgets</h3>"
        + bullets(_budgets(project.requirements) or ["no mass or size budgets set"])
    )
    return Section("job", "The job and its requirements", body)


#: per-joint budgets shown: (field of JointLimits, unit)
_JOINT_BUDGETS = (
    ("mass_max", "kg"),
    ("reflected_inertia_max", "kg·m²"),
    ("diameter_max", "m"),
    ("length_max", "m"),
    ("ratio_max", ""),
)


def _budgets(req) -> list[str]:
    out = []
    if math.isfinite(req.total_mass_max):
        out.append(f"total actuator mass at most {fmt(req.total_mass_max, 'kg')}")
    if getattr(req, "life_min", 0.0) > 0:
        out.append(
            f"every joint's gear life at least {fmt(req.life_min / 3600.0, 'h')} over the duty "
            "cycles (Miner's rule), peaks within the repeated-peak rating"
        )
    for j, lim in req.joints.items():
        for key, unit in _JOINT_BUDGETS:
            v = getattr(lim, key)
            if math.isfinite(v):
                out.append(f"{j}: {key.replace('_', ' ')} {fmt(v, unit)}")
        if lim.ratio_min > 0:
            out.append(f"{j}: ratio min {fmt(lim.ratio_min)}")
    return out


def _as_payload_mass(case, key: str, value) -> str:
    """A payload or stance case's payload_min read as the payload mass it means, in words."""
    if key != "payload_min" or case.kind not in ("payload", "stance") or case.payload_share <= 0:
        return ""
    mass = (value - case.fixed_load) / (case.payload_share * G0)
    return f" (payload mass {fmt(mass, 'kg')})"


def _limit_text(key: str, value) -> str:
    """A case limit with its unit; a rating use (a fraction) in %."""
    if key in ("rating_use_max", "shock_use_max"):
        return fmt(100.0 * value, "%")
    return fmt(value, _limit_unit(key))


def _limit_unit(key: str) -> str:
    return {
        "payload_min": "N",
        "effective_mass_max": "kg",
        "backdrive_force_max": "N",
        "speed_min": "m/s",
        "acceleration_min": "m/s²",
        "temperature_margin_min": "°C",
        "rating_use_max": "",
    }.get(key, "")


ASSUMPTIONS = (
    "Rigid links and rigid transmissions; joint friction only as the gear's forward/backward "
    "efficiency (and breakaway torque for back-driving); no backlash or compliance in the "
    "metrics, except the gear shock of an impact case with an impact speed, which springs "
    "each gear with its catalog stiffness (an estimate).",
    "Power-flow law per joint: motoring τ_j = η_f·N·τ_m, back-driven τ_j = N·τ_m/η_b, "
    "self-locking when η_b ≤ 0; the mode follows the sign of τ_j·q̇_j of the case's intended "
    "motion.",
    "Payload cases hold the base still; impact cases free a floating base (Wensing et al. 2017 "
    "impact mitigation factor); a fixed base reports back-driven effective mass instead.",
    "Motor torques are the catalog's peak ratings, along each motor's torque–speed envelope "
    "at its hot winding (bus voltage and back-EMF) where a case moves at speed (speed cases, "
    "payload cases with a tip speed, duty cycles), at standstill otherwise. Thermal limits "
    "are only checked by duty-cycle cases.",
    "Efficiencies are the catalog's constants or models at the chosen ratio; real gears lose "
    "efficiency at low load, low temperature and high speed (see the sensitivity section).",
)


LIMITS = (
    "Concept-stage model: it ranks and sizes options, it does not certify a design.",
    "Polytope and ellipse figures are sections through the origin by a plane of two world axes, "
    "not projections.",
    "The ratio sweep holds stage masses, inertias, ratings and efficiencies at the design's "
    "values, including ratios the catalog does not offer.",
)


CAUTIONS = (
    "Effective masses and back-drive forces here are inputs to a contact-safety assessment, not "
    "its verdict: collaborative operation needs a risk assessment and the body-region force and "
    "pressure limits of the applicable collaborative-robot standard.",
    "Holding capacity, self-locking and breakaway torques come from catalog efficiencies and "
    "friction that vary with load, temperature and wear: do not rely on them to hold a load "
    "safely without a brake designed for it.",
)


def cautions_section(a: dict, project) -> Section:
    """Assumptions, the model's limits and the safety cautions."""
    body = (
        "<h3>Assumptions</h3>"
        + bullets(list(ASSUMPTIONS))
        + "<h3>Limits of the model</h3>"
        + bullets(list(LIMITS))
        + '<h3>Cautions</h3><div class="caution">'
        + bullets(list(a["cautions"]) + list(CAUTIONS))
        + "</div>"
    )
    return Section("cautions", "Assumptions, limits and cautions", body)
