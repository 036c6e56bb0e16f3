"""One case of an assessment in the terminal: its metrics in words, per kind, and the per-joint
tables of a torque case and a duty cycle (the ``assess`` and ``size`` commands print these)."""

from __future__ import annotations

import math

from rich.console import Console

from ..dutycase import DUTY_QUANTITIES
from ..report.wording import (
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
from ._format import num, table

#: metric -> (label, unit) in the order shown
SHOWN = {
    "payload": [
        ("payload", "tip force, case motion", "N"),
        ("payload_raise", "raising / pushing", "N"),
        ("payload_lower", "lowering / yielding", "N"),
        ("payload_hold", "holding still", "N"),
        ("payload_frictionless", "frictionless gears", "N"),
    ],
    "stance": [
        ("payload", "load carried at the frame (robot-level)", "N"),
        ("slipping_contacts", "contacts at the friction limit", ""),
        ("contacts_at_share", "contacts at their least share (contact_share_min)", ""),
    ],
    "impact": [
        ("imf", "impact mitigation factor (back-driven)", ""),
        ("imf_direction", "directional IMF along direction", ""),
        ("imf_frictionless", "IMF, frictionless gears", ""),
        ("effective_mass", "effective mass (back-driven)", "kg"),
        ("effective_mass_motoring", "effective mass (motoring)", "kg"),
        ("effective_mass_frictionless", "effective mass (frictionless)", "kg"),
        (
            "contact_speed",
            "largest transient contact speed (two-body model, your body region)",
            "m/s",
        ),
        ("contact_energy", "energy the body region takes at that speed", "J"),
        ("impulse", "contact impulse (links only; the rotors not yet moving)", "N·s"),
        ("shock_use", "peak gear torque over the momentary rating, worst joint", "%"),
    ],
    "backdrive": [("backdrive_force", "force to back-drive, unpowered", "N")],
    "speed": [
        ("speed", "end-point speed carrying the case's load", "m/s"),
        ("stroke_time", "time to cover the stroke from rest", "s"),
        (
            "acceleration",
            "acceleration along the direction from rest, under gravity and the case's load",
            "m/s²",
        ),
    ],
    "torque": [("torque_ratio", "smallest achieved ÷ required joint torque", "")],
    "duty": [
        ("rating_use", "largest rating use over joints (100 % = a rating fully used)", "%"),
        ("cycle_energy_no_regen", "electrical energy per cycle, no regeneration", "J"),
        ("cycle_energy_regen", "electrical energy per cycle, with regeneration", "J"),
    ],
}

#: per-joint gear life rows of a duty case, shown when a stage states a rated life
DUTY_GEAR = [
    ("gear_life", "gear life on this cycle alone", "h", 1.0 / 3600.0),
    ("gear_equivalent_torque", "gear equivalent torque (life)", "N·m", 1.0),
    ("gear_average_speed", "gear average output speed", "rad/s", 1.0),
    ("gear_peak_use", "gear repeated-peak rating used", "%", 100.0),
]


def _gear_rows(c, joints) -> list:
    """The gear rows a duty case has a number for at some joint: the life only where a stage
    states a rated life (NaN otherwise), the repeated-peak use where it states a rating."""

    def known(v) -> bool:
        return isinstance(v, (int, float)) and not isinstance(v, bool) and not math.isnan(v)

    return [r for r in DUTY_GEAR if any(known(c.metrics.get(f"{r[0]}:{j}")) for j in joints)]


def _unrated_joints(c) -> list[str]:
    """The joints of an impact case whose stages state no momentary rating (shock use NaN)."""
    return [
        k.split(":", 1)[1]
        for k, v in c.metrics.items()
        if k.startswith("shock_use_joint:") and isinstance(v, float) and math.isnan(v)
    ]


def _scaled(value, scale: float):
    return (
        value * scale if isinstance(value, (int, float)) and not isinstance(value, bool) else value
    )


def print_case(con: Console, c, a, cases: dict, revolute: dict) -> None:
    """Case ``c`` of assessment ``a``: a metric table, then the per-joint table of a torque case
    or a duty cycle and the notes (what limits it, the joints' modes). ``cases``: the project's
    cases by name ({} without a project); ``revolute``: joint name -> revolute."""
    rows = []
    for key, label, unit in SHOWN.get(c.kind, []):
        if key == "speed" and "speed_steady" in c.metrics:  # a stroke: where the speed is read
            label = "end-point speed at the end of the stroke, with the load"
        if key in c.metrics and c.metrics[key] is not None:
            value = c.metrics[key]
            unrated = _unrated_joints(c) if key == "shock_use" else []
            if unrated:  # an unknown share is not an infinite one
                rows.append([label, f"unknown: no momentary rating at {', '.join(unrated)}"])
                continue
            if unit == "%":  # a fraction shown in per cent, as in the requirements table
                value = _scaled(value, 100.0)
            rows.append([label, num(value, unit)])
    extra = []
    wrench = wrench_text(cases.get(c.name), minus="-")
    if wrench:
        rows.insert(0, ["where the force acts, the moment with it", wrench])
    if c.kind in ("payload", "stance") and c.metrics.get("payload") not in (None, "inf"):
        carried = c.metrics.get("payload_carried")
        rows.append(
            [
                "payload mass it carries, (F − fixed load)/(share·g_n)",
                "— (share 0: the load does not grow with the payload)"
                if carried is None or carried == float("inf")
                else carried_text(carried, lambda v: num(v, "kg")),
            ]
        )
    torques = []
    if c.kind == "torque" and c.name in cases:
        torques = torque_rows(cases[c.name], c.metrics, revolute, minus="-")
    elif c.kind == "torque":
        rows += [
            [f"achieved ÷ required at {k.split(':', 1)[1]}", num(v, "")]
            for k, v in c.metrics.items()
            if k.startswith("torque_ratio:")
        ]
    if c.kind == "stance":
        rows += [
            [f"normal force on {k.split(':', 1)[1]} (along its contact normal)", num(v, "N")]
            for k, v in c.metrics.items()
            if k.startswith("normal_force:")
        ]
        rows += [
            [f"friction used at {k.split(':', 1)[1]} (tangential ÷ μ·normal)", num(v, "")]
            for k, v in c.metrics.items()
            if k.startswith("friction_use:")
        ]
    if c.kind == "duty":
        joints = [j.joint for j in a.joints]
        geared = {j.joint for j in a.joints if j.stages}
        drows = [
            [label] + [num(_scaled(c.metrics.get(f"{key}:{j}"), scale), unit) for j in joints]
            for key, label, unit, scale in DUTY_QUANTITIES
        ] + [
            [label]
            + [
                num(_scaled(c.metrics.get(f"{key}:{j}"), scale), unit) if j in geared else "no gear"
                for j in joints
            ]
            for key, label, unit, scale in _gear_rows(c, joints)
        ]
        quantity = str(c.metrics.get("limiting_quantity", "—"))
        rows += [["limiting quantity", limiting_quantity_text(quantity)]]
    if c.kind == "impact" and "shock_use" in c.metrics:
        for j in a.joints:
            torque = c.metrics.get(f"shock_torque:{j.joint}")
            use = c.metrics.get(f"shock_use_joint:{j.joint}")
            share = shock_share(
                bool(j.stages), use, torque, j.gear_peak_torque, lambda v: num(v, "%")
            )
            rows.append(
                [f"peak gear torque at the impact, {j.joint}", f"{num(torque, 'N·m')} ({share})"]
            )
    beyond = beyond_stroke(c.metrics)
    if c.metrics.get("envelope_limit") and not beyond:
        rows.append(
            [f"motor at its envelope {envelope_speed(c.metrics)}", c.metrics["envelope_limit"]]
        )
    if c.note:
        extra.append(f"[red]carries nothing:[/red] {c.note}")
    elif c.limiting_joint and c.kind == "speed":
        # the checked figure's joint; the envelope row above names the sustained speed's
        extra.append(f"the checked end-point speed is limited by {c.limiting_joint}")
    elif c.limiting_joint:
        extra.append(f"limited by {c.limiting_joint}")
    # a speed case's reading: what lies beyond its stroke, or how long its speed takes
    extra += [t for t in (beyond, without_stroke(c.kind, c.metrics)) if t]
    if c.joint_modes:
        extra.append("modes: " + modes_text(c.joint_modes))
    if c.kind == "impact" and c.metrics.get("contact_rank", 3) < 3:
        extra.append(
            "the joints cannot move the contact in every direction: determinant IMF is 0; "
            "see the directional IMF"
        )
    con.print(table(f"Case {c.name} ({c.kind})", ["metric", "value"], rows))
    if torques:
        con.print(
            table(
                f"Case {c.name}: required and available torque per joint",
                ["joint", "required", "available", "available ÷ required", "mode"],
                torques,
                caption="available: the joint's torque capacity on the side of the required "
                "torque in its power-flow mode (motoring η_f·N·τ_peak, back-driven "
                "N·τ_peak/η_b, holding N·τ_peak/η_b both ways, ∞ when self-locking), "
                "capped by the gear's peak rating",
            )
        )
    if c.kind == "duty":
        for part, cols in enumerate(_column_groups(drows, joints, con.width)):
            title = f"Case {c.name}: per joint (steady periodic cycle)" + (
                " (cont.)" if part else ""
            )
            con.print(
                table(
                    title,
                    ["quantity"] + [joints[k] for k in cols],
                    [[r[0]] + [r[1 + k] for k in cols] for r in drows],
                )
            )
    for line in extra:
        con.print(f"  {line}")


def _column_groups(rows: list[list[str]], joints: list[str], width: int) -> list[list[int]]:
    """Joint columns split into groups whose table fits ``width`` (the label column repeated)."""
    label = max(len(r[0]) for r in rows) + 3
    groups: list[list[int]] = []
    current: list[int] = []
    used = label + 1
    for k, j in enumerate(joints):
        w = max([len(j)] + [len(r[1 + k]) for r in rows]) + 3
        if current and used + w > width:
            groups.append(current)
            current, used = [], label + 1
        current.append(k)
        used += w
    return groups + [current] if current else groups
