"""Text and tables of a design report, from the assessment's plain-dict (JSON) form.

Every function here takes ``a = Assessment.to_dict()`` (infinities as the strings "inf"), so a
report can be rebuilt from saved ``jointwright assess --json`` output as well.
"""

from __future__ import annotations

import math

from ..dutycase import DUTY_QUANTITIES
from .markup import (
    Cell,
    Group,
    Section,
    bullets,
    check_value,
    esc,
    fmt,
    number,
    paragraph,
    pct,
    table,
)
from .wording import region_groups, torque_rows, wrench_text

G0 = 9.80665  # m/s², standard gravity (ISO 80000-3), for weight-equivalent payloads

#: case metrics shown per kind: (key, label, unit)
CASE_METRICS = {
    "payload": (
        ("payload", "payload along the direction, case motion", "N"),
        ("payload_carried", "payload mass it carries, (F − fixed load)/(share·g_n)", "kg"),
        ("payload_raise", "… tip moving along the force", "N"),
        ("payload_lower", "… tip yielding to the force", "N"),
        ("payload_hold", "… holding still", "N"),
        ("payload_frictionless", "… frictionless gears (reference)", "N"),
    ),
    "stance": (
        ("payload", "payload carried by the body, case motion", "N"),
        ("payload_carried", "payload mass it carries, (F − fixed load)/(share·g_n)", "kg"),
        ("payload_frictionless", "… frictionless gears (reference)", "N"),
    ),
    "impact": (
        ("imf", "impact mitigation factor, back-driven (dimensionless)", ""),
        ("imf_restricted", "IMF over the directions the limb can move (dimensionless)", ""),
        ("imf_direction", "directional IMF along the direction (dimensionless)", ""),
        ("imf_frictionless", "IMF, frictionless gears (dimensionless)", ""),
        ("effective_mass", "effective mass, back-driven", "kg"),
        ("effective_mass_motoring", "effective mass, motoring", "kg"),
        ("effective_mass_frictionless", "effective mass, frictionless", "kg"),
        ("impulse", "contact impulse (links only, rotors not yet moving)", "N·s"),
    ),
    "backdrive": (("backdrive_force", "tip force that starts the unpowered robot moving", "N"),),
    "speed": (("speed", "end-point speed along the direction", "m/s"),),
    "torque": (("torque_ratio", "smallest achieved ÷ required joint torque", ""),),
}

#: the duty quantities of the report's per-joint table: the CLI's list without the
#: torque-speed-line use, so ten columns fit an A4 page (the case's limiting quantity row names
#: the envelope when it is the one that binds)
REPORT_DUTY = tuple(q for q in DUTY_QUANTITIES if q[0] != "envelope_ratio")


def _f(x) -> float:
    return float({"inf": math.inf, "-inf": -math.inf}.get(x, x)) if x is not None else math.nan


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


def _check_label(c: dict) -> str:
    return f"{c['subject']}: {c['requirement'].replace('_', ' ')}"


def _limiting_reason(a: dict, case: dict) -> str:
    """Why the limiting joint of a payload case stops: its motor or its gear rating."""
    j = next((x for x in a["joints"] if x["joint"] == case["limiting_joint"]), None)
    if j is None:
        return ""
    mode = (case.get("joint_modes") or {}).get(j["joint"])
    cap = _f(j["capacity_motoring"] if mode in (None, "motoring") else j["capacity_backdriven"])
    gear = _f(j["gear_peak_torque"])
    who = "it is" if mode is None else f"it is {mode} and"
    if math.isfinite(gear) and math.isclose(cap, gear, rel_tol=1e-9):
        return (
            f"{who} at its gear torque limit (peak) ({fmt(gear, 'N·m')}): a larger "
            "gear frame raises the payload, a larger motor or ratio does not"
        )
    what = "drive torque" if mode is None else "motor's peak torque through the gear"
    return (
        f"{who} at its {what} ({fmt(cap, 'N·m')}): a larger motor or a higher ratio raises "
        "the payload"
    )


def _impact_words(case: dict) -> str:
    """One sentence on what an impact at the case's contact feels (back-driven transmissions)."""
    m = case["metrics"]
    text = f"An impact in case {case['name']} meets"
    if m.get("imf") is not None:
        text += (
            f" an impact mitigation factor of {number(m['imf'])} (back-driven; 0 is no "
            "better than locked joints)"
        )
        if m.get("contact_rank", 3) < 3 and m.get("imf_restricted") is not None:
            text += f", {number(m['imf_restricted'])} over the directions the limb can move"
        text += " and"
    text += f" an effective mass of {fmt(m.get('effective_mass'), 'kg')} along its direction."
    return text + _shock_words(m)


def _shock_words(m: dict) -> str:
    """The landing or collision shock on the gears, when the case states an impact speed."""
    use = m.get("shock_use")
    if use is None and "shock_limiting_joint" not in m:
        return ""
    who = m.get("shock_limiting_joint") or "—"
    torque = m.get(f"shock_torque:{who}")
    use = 100.0 * use if isinstance(use, (int, float)) and not isinstance(use, bool) else use
    return (
        f" At its impact speed the gear teeth of {who} take the largest share of their momentary "
        f"(emergency-stop) rating: {fmt(torque, 'N·m')}, {fmt(use, '%')} (docs/metrics.md, gear "
        "shock; a rigid contact and an undamped gear spring, an estimate to verify by test)."
    )


def _payload_words(a: dict, project) -> list[str]:
    payload = [
        c
        for c in a["cases"]
        if c["kind"] in ("payload", "stance") and c["metrics"].get("payload") is not None
    ]
    if not payload:
        return []
    margins = {
        c["subject"]: _f(c["margin"]) for c in a["checks"] if c["requirement"] == "payload_min"
    }
    if any(c["name"] in margins for c in payload):
        # the tightest against its own requirement, which need not be the smallest force
        worst = min((c for c in payload if c["name"] in margins), key=lambda c: margins[c["name"]])
        lead = f"Payload is tightest against its requirement in case {worst['name']}"
    else:
        worst = min(payload, key=lambda c: _f(c["metrics"]["payload"]))
        lead = f"The smallest payload is in case {worst['name']}"
    value = _f(worst["metrics"]["payload"])
    kg = ""
    if project.case(worst["name"]).weight_equivalent and math.isfinite(value):
        kg = f" (the weight of {fmt(value / G0, 'kg')} at standard gravity)"
    text = f"{lead}: {fmt(value, 'N')}{kg}"
    if worst["limiting_joint"]:
        text += f", limited by joint {worst['limiting_joint']}: {_limiting_reason(a, worst)}"
    return [text + "."]


def outcome_section(a: dict, project) -> Section:
    """The outcome in plain words: missed requirements, what limits payload, self-locking joints."""
    checks = a["checks"]
    missed = [c for c in checks if not c["ok"]]
    name = a["design"]
    if not missed:
        words = [f"The design “{name}” meets all {len(checks)} requirements."]
    else:
        items = "; ".join(
            f"{_check_label(c)} {check_value(c, 'achieved')} against "
            f"{check_value(c, 'limit')} ({pct(c['margin'])})"
            for c in missed
        )
        words = [
            f"The design “{name}” misses {len(missed)} of {len(checks)} requirements: {items}."
        ]
    words += _payload_words(a, project)
    words += [_impact_words(c) for c in a["cases"] if c["kind"] == "impact"]
    locking = [j for j in a["joints"] if j["self_locking"]]
    if locking:
        names = ", ".join(
            f"{j['joint']} (backward efficiency {number(j['eta_backward'], 3)})" for j in locking
        )
        words.append(
            f"Self-locking joints: {names}. They hold their load unpowered and cannot be "
            "pushed back by a person or an obstacle."
        )
    else:
        words.append("No joint is self-locking: every transmission can be back-driven by its load.")
    cost = (
        f" and cost {fmt(a['total_cost'])} (catalog currency units)"
        if _f(a.get("total_cost", 0.0)) > 0
        else ""
    )
    words.append(f"Actuator mass {fmt(a['total_mass'], 'kg')}{cost} in total.")
    cls = "verdict" if not missed else "verdict bad"
    body = f'<div class="{cls}">' + "".join(paragraph(w) for w in words) + "</div>"
    return Section("outcome", "Outcome", body)


def _grouped_rows(rows: list, subjects: list[str], a: dict, project) -> list:
    """``rows`` (one per subject, in order) with the poses of each region case together under a
    :class:`Group` row naming the region, its poses and its worst pose; other rows unchanged."""
    regions = a.get("regions") or {}
    if not regions or project is None:
        return rows
    index: dict[str, list[int]] = {}
    for k, s in enumerate(subjects):
        index.setdefault(s, []).append(k)
    out: list = []
    for region, names in region_groups(list(dict.fromkeys(subjects)), project):
        picked = [rows[k] for n in names for k in index[n]]
        if not region:
            out += picked
            continue
        info = regions.get(region, {})
        out.append(
            Group(
                f"{region}: a region of {info.get('poses', len(names))} poses; the worst pose "
                f"decides ({info.get('case', '—')}, margin {pct(info.get('margin'))})"
            )
        )
        for row in picked:
            first = row[0]
            text = first.text if isinstance(first, Cell) else str(first)
            out.append([Cell(text, "grouped", first.data if isinstance(first, Cell) else ())])
            out[-1] += row[1:]
    return out


def requirements_section(a: dict, project=None) -> Section:
    """Every requirement, achieved value, limit and relative margin; with ``project``, the poses
    of a region case grouped under their region."""
    rows = []
    for c in a["checks"]:
        key = (("check", f"{c['subject']}:{c['requirement']}"),)
        rows.append(
            [
                c["subject"],
                c["requirement"].replace("_", " "),
                Cell(check_value(c, "achieved"), "num", key + (("field", "achieved"),)),
                Cell(check_value(c, "limit"), "num", key + (("field", "limit"),)),
                Cell(pct(c["margin"]), "num", key + (("field", "margin"),)),
                Cell("met" if c["ok"] else "MISSED", "ok" if c["ok"] else "bad"),
            ]
        )
    head = ["subject", "requirement", "achieved", "limit", "margin", "status"]
    caption = (
        "Margin = (achieved − limit)/|limit| for a minimum, "
        "(limit − achieved)/|limit| for a maximum; a requirement is met when its "
        "margin is ≥ 0. IMF values are dimensionless."
    )
    if any(c.get("margin_worst") is not None for c in a["checks"]):
        # efficiency bands (docs/metrics.md): each margin at nominal and at the worst end
        for r, c in zip(rows, a["checks"], strict=True):
            r[5:5] = [
                Cell(check_value(c, "achieved_nominal"), "num"),
                Cell(pct(c["margin_nominal"]), "num"),
                Cell(check_value(c, "achieved_worst"), "num"),
                Cell(pct(c["margin_worst"]), "num"),
            ]
        head[5:5] = ["nominal η", "margin", "worst end of the band", "margin"]
        judged = (
            "the worst end (the project requires the whole band)"
            if str(a.get("efficiency", "")).startswith("worst")
            else "the nominal efficiencies (the project does not require the band)"
        )
        caption += (
            " The stages' efficiencies have bands: each requirement is shown at the nominal "
            "efficiencies and at the end of the band that is worst for it (docs/metrics.md, "
            f"Efficiency bands); achieved, margin and status are at {judged}."
        )
    rows = _grouped_rows(rows, [c["subject"] for c in a["checks"]], a, project)
    body = table(head, rows, caption=caption)
    return Section("requirements", "Requirements versus achieved", body)


def binding_section(a: dict, count: int = 3) -> Section:
    """The requirements with the smallest margins and the joint that sets each."""
    order = sorted(a["checks"], key=lambda c: _f(c["margin"]))[:count]
    cases = {c["name"]: c for c in a["cases"]}
    joints = [j["joint"] for j in a["joints"]]
    rows = []
    for c in order:
        case = cases.get(c["subject"])
        if case and case.get("limiting_joint"):
            by = case["limiting_joint"]
        else:
            by = c["subject"] if c["subject"] in joints else "—"
        rows.append([_check_label(c), Cell(pct(c["margin"]), "num"), by])
    body = paragraph(
        "These requirements are closest to their limits (or furthest past them): "
        "any change of the design or the assumptions moves them first."
    ) + table(["requirement", "margin", "set by joint"], rows)
    return Section("binding", "Binding constraints", body)


def _tagged(value, unit: str, joint: str, field: str) -> Cell:
    return Cell(fmt(value, unit), "num", (("joint", joint), ("field", field)))


_INERTIAS = (
    "rotor_inertia",
    "reflected_frictionless",
    "reflected_motoring",
    "reflected_backdriven",
)


def joints_section(a: dict) -> Section:
    """Per joint: drivetrain, efficiencies, capacities, reflected inertia, mass, cost, speed."""
    costs = _f(a.get("total_cost", 0.0)) > 0
    drive, inertia = [], []
    for j in a["joints"]:
        name = j["joint"]
        lock = " (self-locking)" if j["self_locking"] else ""
        drive.append(
            [
                name,
                j["motor"],
                " + ".join(j["stages"]) or "direct drive",
                Cell(f"{number(j['ratio'])} : 1", "num"),
                Cell(number(j["eta_forward"], 3), "num"),
                Cell(number(j["eta_backward"], 3) + lock, "num"),
                _tagged(j["capacity_motoring"], "N·m", name, "drive"),
                _tagged(j["capacity_backdriven"], "N·m", name, "holding"),
                Cell(fmt(j["gear_peak_torque"], "N·m"), "num"),
            ]
        )
        row = (
            [name]
            + [Cell(fmt(j[k], "kg·m²"), "num") for k in _INERTIAS]
            + [_tagged(j["mass"], "kg", name, "mass")]
        )
        if costs:
            row.append(Cell(fmt(j.get("cost")), "num", (("joint", name), ("field", "cost"))))
        inertia.append(
            row
            + [
                Cell(fmt(j["max_joint_speed"], "rad/s"), "num"),
                Cell(fmt(j["breakaway_torque"], "N·m"), "num"),
            ]
        )
    total = [
        Cell("total", "num"),
        "",
        "",
        "",
        "",
        Cell(fmt(a["total_mass"], "kg"), "num", (("field", "total_mass"),)),
    ]
    if costs:
        total.append(Cell(fmt(a["total_cost"]), "num", (("field", "total_cost"),)))
    inertia.append(total + ["", ""])
    head = (
        [
            "joint",
            "rotor-side inertia I_r",
            "reflected N²·I_r",
            "motoring η_f·N²·I_r",
            "back-driven N²·I_r/η_b",
            "mass",
        ]
        + (["cost"] if costs else [])
        + ["max joint speed", "breakaway torque"]
    )
    caption = _INERTIA_CAPTION + (" Cost in the catalog's currency units." if costs else "")
    body = table(
        [
            "joint",
            "motor",
            "stages",
            "ratio",
            "η forward",
            "η backward",
            "drive torque",
            "holding torque",
            "gear torque limit (peak)",
        ],
        drive,
        caption=_DRIVE_CAPTION,
        cls="wide",
    ) + table(head, inertia, caption=caption, cls="wide")
    body += _drives_table(a)
    return Section("joints", "Per-joint choices", body)


def _drives_table(a: dict) -> str:
    """The motor drives and the ratings they allow, with the side that sets each ("" when the
    design has no drives: every motor then runs on its own ratings)."""
    if not any(j.get("drive") for j in a["joints"]):
        return ""
    rows = [
        [
            j["joint"],
            j.get("drive") or "none (motor's own ratings)",
            Cell(f"{fmt(j['motor_peak_torque'], 'N·m')} ({j['peak_torque_by']})", "num"),
            Cell(
                f"{fmt(j['motor_continuous_torque'], 'N·m')} ({j['continuous_torque_by']})", "num"
            ),
            Cell(f"{fmt(j['motor_max_speed'], 'rad/s')} ({j['max_speed_by']})", "num"),
        ]
        for j in a["joints"]
    ]
    return table(
        ["joint", "drive", "motor peak torque", "motor continuous torque", "motor top speed"],
        rows,
        caption="Motor ratings as the drive feeds them (docs/metrics.md, Drive limits): peak "
        "min(motor, Kt·I_peak), continuous min(motor, Kt·I_cont), top speed min(motor, "
        "V_bus/Kt); in brackets the side whose limit is lower. The torque–speed line runs from "
        "the drive's bus voltage.",
        cls="wide",
    )


_DRIVE_CAPTION = (
    "Drive torque = η_f·N·τ_peak (motoring); holding torque = N·τ_peak/η_b while the load "
    "back-drives the joint; both capped by the gear torque limit (peak) (a self-locking joint "
    "holds up to that limit whatever the motor). Efficiencies are dimensionless."
)
_INERTIA_CAPTION = (
    "Reflected inertia as seen from the link side; the back-driven value is what an impact "
    "feels. Breakaway torque: joint-side torque that starts the unpowered actuator moving."
)


def _duty_table(c: dict, joints: list[str]) -> str:
    m = c["metrics"]
    rows = []
    for j in joints:
        row: list = [j]
        for key, _col, unit, scale in REPORT_DUTY:
            v = m.get(f"{key}:{j}")
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                v = scale * v
            row.append(Cell(fmt(v, unit), "num", (("case", c["name"]), ("metric", f"{key}:{j}"))))
        rows.append(row)
    quantity = str(m.get("limiting_quantity", "—")).replace("_", " ")
    use = m.get("rating_use")
    use = 100.0 * use if isinstance(use, (int, float)) and not isinstance(use, bool) else use
    cap = (
        f"Largest rating use {fmt(use, '%')} (up to 100 % passes), set by "
        f"{c.get('limiting_joint') or '—'} through {quantity}. Energy per cycle is electrical, "
        "with regeneration."
    )
    lives = [(j, m.get(f"gear_life:{j}")) for j in joints]
    if any(v is not None for _j, v in lives):
        shown = ", ".join(f"{j} {fmt(_f(v) / 3600.0, 'h')}" for j, v in lives)
        cap += f" Gear life on this cycle alone (rated-life equation, docs/metrics.md): {shown}."
    return table(
        ["joint"] + [col for _k, col, _u, _s in REPORT_DUTY], rows, caption=cap, cls="wide"
    )


def _case_notes(c: dict) -> list[str]:
    notes = []
    if c.get("limiting_joint"):
        notes.append(f"limited by {c['limiting_joint']}")
    if c.get("joint_modes"):
        notes.append("modes: " + ", ".join(f"{j} {m}" for j, m in c["joint_modes"].items()))
    if c["metrics"].get("envelope_limit"):
        notes.append(f"motor at its envelope at steady speed: {c['metrics']['envelope_limit']}")
    if c["kind"] == "impact" and c["metrics"].get("contact_rank", 3) < 3:
        notes.append(
            "the joints cannot move the contact in every direction, so the determinant "
            "IMF is 0; read the restricted or directional IMF"
        )
    return notes


def _torque_table(c: dict, case, revolute: dict) -> str:
    """A torque case: per joint the required and the available torque, their ratio, the mode."""
    rows = [
        [
            j,
            Cell(req, "num"),
            Cell(avail, "num"),
            Cell(ratio, "num", (("case", c["name"]), ("metric", f"torque_ratio:{j}"))),
            mode,
        ]
        for j, req, avail, ratio, mode in torque_rows(case, c["metrics"], revolute)
    ]
    worst = c["metrics"].get("torque_ratio")
    cap = (
        f"Smallest available ÷ required {number(worst)}, at {c.get('limiting_joint') or '—'} "
        "(torque_ratio_min passes at or above its limit, 1 by default). Available: the joint's "
        "torque capacity on the side of the required torque in its power-flow mode (motoring "
        "η_f·N·τ_peak, back-driven N·τ_peak/η_b, holding N·τ_peak/η_b both ways, ∞ when "
        "self-locking), capped by the gear's peak rating."
    )
    return table(
        ["joint", "required", "available", "available ÷ required", "mode"], rows, caption=cap
    )


def cases_section(a: dict, project=None) -> Section:
    """Every metric of every case, with the limiting joint and the power-flow mode per joint;
    with ``project``, where each payload and stance case's force acts and the moment with it."""
    cases = {} if project is None else {c.name: c for c in project.cases}
    revolute = (
        {}
        if project is None
        else dict(zip(project.robot.joint_names, project.robot.revolute, strict=True))
    )
    parts = []
    regions = a.get("regions") or {}
    headed: set[str] = set()
    for c in a["cases"]:
        head = f"<h3>{esc(c['name'])} ({esc(c['kind'])})</h3>"
        region = getattr(cases.get(c["name"]), "region", "")
        if region:  # the poses of a region case under one heading, each pose a subheading
            head = f"<h4>{esc(c['name'])}</h4>"
            if region not in headed:
                headed.add(region)
                info = regions.get(region, {})
                head = (
                    f"<h3>{esc(region)} ({esc(c['kind'])}, a region of "
                    f"{esc(info.get('poses', '—'))} poses; the worst is "
                    f"{esc(info.get('case', '—'))})</h3>" + head
                )
        if c["kind"] == "duty":
            parts.append(head + _duty_table(c, [j["joint"] for j in a["joints"]]))
            continue
        shown = list(CASE_METRICS.get(c["kind"], ()))
        if c["kind"] == "stance":
            shown += [
                (k, f"normal force at {k.split(':', 1)[1]}", "N")
                for k in c["metrics"]
                if k.startswith("normal_force:")
            ]
        if c["kind"] == "torque" and c["name"] not in cases:
            shown += [
                (k, f"achieved ÷ required at {k.split(':', 1)[1]}", "")
                for k in c["metrics"]
                if k.startswith("torque_ratio:")
            ]
        rows = [
            [label, Cell(fmt(c["metrics"][k], unit), "num", (("case", c["name"]), ("metric", k)))]
            for k, label, unit in shown
            # a share-0 case carries no payload mass: its +inf is not shown as a mass
            if c["metrics"].get(k) is not None
            and not (k == "payload_carried" and c["metrics"][k] == "inf")
        ]
        wrench = wrench_text(cases.get(c["name"]))
        if wrench:
            rows.insert(0, ["where the force acts, the moment with it", wrench])
        parts.append(head + table(["metric", "value"], rows, caption="; ".join(_case_notes(c))))
        if c["kind"] == "torque" and c["name"] in cases:
            parts.append(_torque_table(c, cases[c["name"]], revolute))
    return Section("cases", "Every case", "".join(parts))


ASSUMPTIONS = (
    "Rigid links and rigid transmissions; joint friction only as the gear's forward/backward "
    "efficiency (and breakaway torque for back-driving); no backlash or compliance in the "
    "metrics.",
    "Power-flow law per joint: motoring τ_j = η_f·N·τ_m, back-driven τ_j = N·τ_m/η_b, "
    "self-locking when η_b ≤ 0; the mode follows the sign of τ_j·q̇_j of the case's intended "
    "motion.",
    "Payload cases hold the base still; impact cases free a floating base (Wensing et al. 2017 "
    "impact mitigation factor); a fixed base reports back-driven effective mass instead.",
    "Peak torques are the catalog's peak ratings at any speed; thermal limits are only checked "
    "by duty-cycle cases.",
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
