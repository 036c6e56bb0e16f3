"""Every case of the report: its metrics with units, the limiting joint and the power-flow
modes; a duty case per joint, a torque case's required and available torques."""

from __future__ import annotations

from ..dutycase import DUTY_QUANTITIES
from .markup import (
    Cell,
    Section,
    as_float,
    esc,
    fmt,
    number,
    table,
)
from .wording import (
    beyond_stroke,
    carried_text,
    envelope_speed,
    limiting_quantity_text,
    modes_text,
    shock_share,
    torque_rows,
    without_stroke,
    wrench_text,
)

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
    ),
    "impact": (
        ("imf", "impact mitigation factor, back-driven (dimensionless)", ""),
        ("imf_restricted", "IMF over the directions the limb can move (dimensionless)", ""),
        ("imf_direction", "directional IMF along the direction (dimensionless)", ""),
        ("imf_frictionless", "IMF, frictionless gears (dimensionless)", ""),
        ("effective_mass", "effective mass, back-driven", "kg"),
        ("effective_mass_motoring", "effective mass, motoring", "kg"),
        ("effective_mass_frictionless", "effective mass, frictionless", "kg"),
        ("contact_speed", "largest transient contact speed (two-body model)", "m/s"),
        ("contact_energy", "energy the body region takes at that speed", "J"),
        ("impulse", "contact impulse (links only, rotors not yet moving)", "N·s"),
    ),
    "backdrive": (("backdrive_force", "tip force that starts the unpowered robot moving", "N"),),
    "speed": (
        ("speed", "end-point speed along the direction", "m/s"),
        # with a stroke (the row is absent without one): the time it takes; what lies beyond
        # it is a note (wording.beyond_stroke), not a result
        ("stroke_time", "… time to cover the stroke from rest", "s"),
        (
            "acceleration",
            "acceleration along the direction from rest, under gravity and the case's load",
            "m/s²",
        ),
    ),
    "torque": (("torque_ratio", "smallest achieved ÷ required joint torque", ""),),
}


#: the duty quantities of the report's per-joint table: the CLI's list without the
#: torque-speed-line use, so ten columns fit an A4 page (the case's limiting quantity row names
#: the envelope when it is the one that binds)
REPORT_DUTY = tuple(q for q in DUTY_QUANTITIES if q[0] != "envelope_ratio")


def _duty_table(c: dict, joints: list[str], geared: set[str] | None = None) -> str:
    """A duty case's per-joint table; ``geared``: the joints with a gear (a direct drive's gear
    life reads "no gear"; None: every joint)."""
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
    quantity = limiting_quantity_text(m.get("limiting_quantity"))
    use = m.get("rating_use")
    use = 100.0 * use if isinstance(use, (int, float)) and not isinstance(use, bool) else use
    cap = (
        f"Largest rating use {fmt(use, '%')} (up to 100 % passes), set by "
        f"{c.get('limiting_joint') or '—'} through {quantity}. Energy per cycle is electrical, "
        "with regeneration."
    )
    lives = [(j, m.get(f"gear_life:{j}")) for j in joints]
    if any(v is not None for _j, v in lives):
        shown = ", ".join(
            f"{j} {fmt(as_float(v) / 3600.0, 'h')}"
            if geared is None or j in geared
            else f"{j} no gear"
            for j, v in lives
        )
        cap += f" Gear life on this cycle alone (rated-life equation, docs/metrics.md): {shown}."
    return table(
        ["joint"] + [col for _k, col, _u, _s in REPORT_DUTY], rows, caption=cap, cls="wide"
    )


def _shock_rows(c: dict, joints: list[dict]) -> list[list]:
    """An impact case with an impact speed: the peak gear torque at each joint and its share of
    the stages' momentary rating (as ``assess`` prints them; [] otherwise)."""
    m = c["metrics"]
    if c["kind"] != "impact" or "shock_use" not in m:
        return []
    rows: list[list] = []
    for j in joints:
        name = j["joint"]
        share = shock_share(
            bool(j["stages"]),
            m.get(f"shock_use_joint:{name}"),
            m.get(f"shock_torque:{name}"),
            j.get("gear_peak_torque"),
            lambda v: fmt(v, "%"),
        )
        rows.append(
            [
                f"peak gear torque at the impact, {name}",
                Cell(
                    f"{fmt(m.get(f'shock_torque:{name}'), 'N·m')} ({share})",
                    "num",
                    (("case", c["name"]), ("metric", f"shock_torque:{name}")),
                ),
            ]
        )
    return rows


def _case_notes(c: dict) -> list[str]:
    notes = []
    if c.get("limiting_joint"):
        notes.append(f"limited by {c['limiting_joint']}")
    if c.get("joint_modes"):
        notes.append("modes: " + modes_text(c["joint_modes"]))
    beyond = beyond_stroke(c["metrics"])
    if c["metrics"].get("envelope_limit") and not beyond:  # with a stroke: in ``beyond``
        notes.append(
            f"motor at its envelope {envelope_speed(c['metrics'])}: "
            f"{c['metrics']['envelope_limit']}"
        )
    # a speed case's reading: what lies beyond its stroke, or how long its speed takes
    notes += [t for t in (beyond, without_stroke(c["kind"], c["metrics"])) if t]
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
            parts.append(
                head
                + _duty_table(
                    c,
                    [j["joint"] for j in a["joints"]],
                    {j["joint"] for j in a["joints"] if j["stages"]},
                )
            )
            continue
        shown = list(CASE_METRICS.get(c["kind"], ()))
        if c["kind"] == "stance":
            shown += [
                (k, f"normal force at {k.split(':', 1)[1]}", "N")
                for k in c["metrics"]
                if k.startswith("normal_force:")
            ]
            shown += [
                (k, f"friction used at {k.split(':', 1)[1]} (tangential ÷ μ·normal)", "")
                for k in c["metrics"]
                if k.startswith("friction_use:")
            ]
        if c["kind"] == "torque" and c["name"] not in cases:
            shown += [
                (k, f"achieved ÷ required at {k.split(':', 1)[1]}", "")
                for k in c["metrics"]
                if k.startswith("torque_ratio:")
            ]
        rows = [
            [
                label,
                Cell(
                    carried_text(c["metrics"][k], lambda v: fmt(v, "kg"))
                    if k == "payload_carried"
                    else fmt(c["metrics"][k], unit),
                    "num",
                    (("case", c["name"]), ("metric", k)),
                ),
            ]
            for k, label, unit in shown
            # a share-0 case carries no payload mass: its +inf is not shown as a mass
            if c["metrics"].get(k) is not None
            and not (k == "payload_carried" and c["metrics"][k] == "inf")
        ]
        rows += _shock_rows(c, a["joints"])
        wrench = wrench_text(cases.get(c["name"]))
        if wrench:
            rows.insert(0, ["where the force acts, the moment with it", wrench])
        parts.append(head + table(["metric", "value"], rows, caption="; ".join(_case_notes(c))))
        if c["kind"] == "torque" and c["name"] in cases:
            parts.append(_torque_table(c, cases[c["name"]], revolute))
    return Section("cases", "Every case", "".join(parts))
