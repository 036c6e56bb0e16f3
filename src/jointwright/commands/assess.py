"""``jointwright assess PROJECT --design FILE``: every metric of one design."""

from __future__ import annotations

import math
from pathlib import Path

import click

from ..assessment import assess
from ..design import load_design
from ..dutycase import DUTY_QUANTITIES
from ..project import load_project
from ..report.wording import pose_text, region_groups, torque_rows, wrench_text
from ._format import console, emit_json, num, pct, table
from ._progress import status_line

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
        ("speed_steady", "steady speed with no stroke limit", "m/s"),
        ("stroke_time", "time to cover the stroke from rest", "s"),
        ("acceleration", "acceleration along the direction from rest, with the load", "m/s²"),
        ("speed_no_load", "no-load speed (motor top speed / ratio; for reference only)", "m/s"),
    ],
    "torque": [("torque_ratio", "smallest achieved ÷ required joint torque", "")],
    "duty": [
        ("rating_use", "largest rating use over joints (100 % = a rating fully used)", "%"),
        ("cycle_energy_no_regen", "electrical energy per cycle, no regeneration", "J"),
        ("cycle_energy_regen", "electrical energy per cycle, with regeneration", "J"),
    ],
}

#: duty-cycle rating checks (metrics.duty.CHECKS) in words
LIMITING_QUANTITY = {
    "rms_torque": "continuous torque (RMS)",
    "peak_torque": "peak torque",
    "speed": "motor top speed",
    "envelope": "torque-speed line",
    "temperature": "winding temperature",
}

#: per-joint gear life rows of a duty case, shown when a stage states a rated life
DUTY_GEAR = [
    ("gear_life", "gear life on this cycle alone", "h", 1.0 / 3600.0),
    ("gear_equivalent_torque", "gear equivalent torque (life)", "N·m", 1.0),
    ("gear_average_speed", "gear average speed", "rad/s", 1.0),
    ("gear_peak_use", "gear repeated-peak rating used", "%", 100.0),
]


def _rated(c, joints) -> bool:
    """Whether a duty case has a gear life for any joint (some stage states a rated life)."""
    return any(isinstance(c.metrics.get(f"gear_life:{j}"), (int, float)) for j in joints)


def _scaled(value, scale: float):
    return (
        value * scale if isinstance(value, (int, float)) and not isinstance(value, bool) else value
    )


def print_assessment(a, project=None) -> None:
    """The assessment's tables; with ``project``, each payload and stance case also says where
    its force acts and the moment with it."""
    con = console()
    verdict = (
        "[green]meets every requirement[/green]" if a.feasible else "[red]misses requirements[/red]"
    )
    costs = a.total_cost > 0  # the catalog gives costs
    cost = f", cost {num(a.total_cost)} (catalog currency units)" if costs else ""
    con.print(
        f"[bold]{a.project}[/bold] — design [bold]{a.design}[/bold]: {verdict}; "
        f"actuators {num(a.total_mass, 'kg')}{cost}"
    )
    rows, caps = [], []
    for j in a.joints:
        lock = " [red]self-locking[/red]" if j.self_locking else ""
        rows.append(
            [
                j.joint,
                j.motor,
                " + ".join(j.stages) or "direct",
                f"{j.ratio:g}:1",
                f"{j.eta_forward:.3f} / {j.eta_backward:.3f}{lock}{_band_text(j)}",
                num(j.mass, "kg"),
            ]
            + ([num(j.cost)] if costs else [])
        )
        caps.append(
            [
                j.joint,
                num(j.capacity_motoring, "N·m"),
                num(j.capacity_backdriven, "N·m"),
                num(j.reflected_frictionless, "kg·m²"),
                num(j.reflected_backdriven, "kg·m²"),
            ]
        )
    con.print(
        table(
            "Joints",
            ["joint", "motor", "stages", "ratio", "η fwd / bwd", "mass"]
            + (["cost"] if costs else []),
            rows,
        )
    )
    con.print(
        table(
            "Joint torque and reflected inertia",
            ["joint", "driving", "holding", "refl. inertia", "back-driven"],
            caps,
            caption="driving = η_f·N·τ_peak (motoring); holding = N·τ_peak/η_b while the load "
            "back-drives; both capped by the gear torque limit (peak). refl. inertia = "
            "N²·I_r (frictionless); back-driven = N²·I_r/η_b, what an impact meets.",
        )
    )
    if any(j.drive is not None for j in a.joints):
        con.print(_drives_table(a))
    cases = {} if project is None else {c.name: c for c in project.cases}
    revolute = (
        {}
        if project is None
        else dict(zip(project.robot.joint_names, project.robot.revolute, strict=True))
    )
    for c in a.cases:
        rows = []
        for key, label, unit in SHOWN.get(c.kind, []):
            if key in c.metrics and c.metrics[key] is not None:
                value = c.metrics[key]
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
                    else num(carried, "kg"),
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
                [f"ground force on {k.split(':', 1)[1]} (vertical)", num(v, "N")]
                for k, v in c.metrics.items()
                if k.startswith("normal_force:")
            ]
        if c.kind == "duty":
            joints = [j.joint for j in a.joints]
            drows = [
                [label] + [num(_scaled(c.metrics.get(f"{key}:{j}"), scale), unit) for j in joints]
                for key, label, unit, scale in list(DUTY_QUANTITIES)
                + (DUTY_GEAR if _rated(c, joints) else [])
            ]
            quantity = str(c.metrics.get("limiting_quantity", "—"))
            rows += [["limiting quantity", LIMITING_QUANTITY.get(quantity, quantity)]]
        if c.kind == "impact" and "shock_use" in c.metrics:
            for j in a.joints:
                torque = c.metrics.get(f"shock_torque:{j.joint}")
                use = c.metrics.get(f"shock_use_joint:{j.joint}")
                rows.append(
                    [
                        f"peak gear torque at the impact, {j.joint}",
                        f"{num(torque, 'N·m')} ({num(_scaled(use, 100.0), '%')} of momentary)",
                    ]
                )
        if c.metrics.get("envelope_limit"):
            rows.append(["motor at its envelope at steady speed", c.metrics["envelope_limit"]])
        if c.note:
            extra.append(f"[red]carries nothing:[/red] {c.note}")
        elif c.limiting_joint:
            extra.append(f"limited by {c.limiting_joint}")
        if c.joint_modes:
            extra.append("modes: " + ", ".join(f"{j} {m}" for j, m in c.joint_modes.items()))
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

    def shown(c, v):  # a rating use is a fraction, shown in %
        uses = ("rating_use_max", "shock_use_max", "gear_peak_use_max")
        return num(100 * v, "%") if c.requirement in uses else num(v, c.unit)

    rows = [
        [
            c.subject,
            c.requirement.replace("_", " "),
            shown(c, c.achieved),
            shown(c, c.limit),
            pct(c.margin),
            "[green]ok[/green]" if c.ok else "[red]MISSED[/red]",
        ]
        for c in a.checks
    ]
    banded = any(c.margin_worst is not None for c in a.checks)
    if banded:  # each value and margin at the nominal efficiencies and at the band's worst end
        rows = [
            [
                c.subject,
                c.requirement.replace("_", " "),
                shown(c, c.achieved_nominal),
                shown(c, c.achieved_worst),
                shown(c, c.limit),
                pct(c.margin_nominal),
                pct(c.margin_worst),
                "[green]ok[/green]" if c.ok else "[red]MISSED[/red]",
            ]
            for c in a.checks
        ]
    rows = _grouped(rows, [c.subject for c in a.checks], a.regions, project)
    con.print(
        table(
            "Requirements",
            ["subject", "requirement", "nominal", "worst end", "limit", "margin", "at worst", ""]
            if banded
            else ["subject", "requirement", "achieved", "limit", "margin", ""],
            rows,
            caption=(
                "nominal: the stages' nominal efficiencies; worst end: each requirement at the "
                "worst end of the stages' efficiency bands (docs/metrics.md, Efficiency bands); "
                + (
                    "ok / MISSED at the worst end (requirements.efficiency_band = true)"
                    if a.efficiency.startswith("worst")
                    else "ok / MISSED at the nominal efficiencies (requirements.efficiency_band "
                    "= true requires the worst end)"
                )
            )
            if banded
            else None,
        )
    )
    if a.regions:
        con.print(
            table(
                "Regions of poses: the worst pose decides",
                ["region case", "poses", "worst pose", "its margin", "joint positions (° or m)"],
                [
                    [
                        name,
                        str(r["poses"]),
                        r["case"],
                        pct(r["margin"]),
                        pose_text(r["pose"], revolute, minus="-"),
                    ]
                    for name, r in a.regions.items()
                ],
            )
        )
    for text in a.cautions:
        con.print(f"[yellow]caution:[/yellow] {text}")


@click.command("assess")
@click.argument("project", type=click.Path(path_type=Path))
@click.option(
    "--design",
    "design_file",
    required=True,
    type=click.Path(path_type=Path),
    help="design file (TOML) naming motor and stages per joint",
)
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
def command(project: Path, design_file: Path, as_json: bool):
    """Every metric of the design in DESIGN for the cases of PROJECT, with margins."""
    with status_line():
        p = load_project(project)
        d = load_design(design_file, p)
        a = assess(p, d)
    if as_json:
        emit_json(a.to_dict())
    else:
        print_assessment(a, p)


def _grouped(rows: list[list[str]], subjects: list[str], regions: dict, project) -> list:
    """Requirement rows with the poses of each region case together, under a row naming the
    region, its poses and its worst pose (report.wording.region_groups)."""
    if not regions or project is None:
        return rows
    index: dict[str, list[int]] = {}
    for k, s in enumerate(subjects):
        index.setdefault(s, []).append(k)
    out = []
    for region, names in region_groups(list(dict.fromkeys(subjects)), project):
        picked = [rows[k] for n in names for k in index[n]]
        if region:
            info = regions.get(region, {})
            head = f"region of {info.get('poses', len(names))} poses, worst {info.get('case')}"
            out.append([f"[bold]{region}[/bold]", head] + [""] * (len(rows[0]) - 2))
            picked = [["  " + r[0]] + r[1:] for r in picked]
        out += picked
    return out


def _band_text(j) -> str:
    """ " (band 0.70–0.83 / 0.56–0.69)" when the stack's efficiencies have a band, else ""."""
    (f_lo, f_hi), (b_lo, b_hi) = j.eta_forward_band, j.eta_backward_band
    if f_lo == f_hi == j.eta_forward and b_lo == b_hi == j.eta_backward:
        return ""
    return f" (band {f_lo:.2f}–{f_hi:.2f} / {b_lo:.2f}–{b_hi:.2f})"


def _drives_table(a):
    """Per joint: its drive and the motor ratings as the drive feeds them, with the side that
    sets each (catalog.drives.fed_motor)."""

    def by(value, unit, side):
        return f"{num(value, unit)} ({side})"

    rows = [
        [
            j.joint,
            j.drive or "— (motor's own ratings)",
            by(j.motor_peak_torque, "N·m", j.peak_torque_by),
            by(j.motor_continuous_torque, "N·m", j.continuous_torque_by),
            by(j.motor_max_speed * 60 / (2 * math.pi), "rpm", j.max_speed_by),
        ]
        for j in a.joints
    ]
    return table(
        "Drives and the motor ratings they allow",
        ["joint", "drive", "peak torque", "continuous torque", "top speed"],
        rows,
        caption="motor side: τ_peak = min(motor, Kt·I_peak), τ_cont = min(motor, Kt·I_cont), "
        "top speed = min(motor, V_bus/Kt); (drive) marks where the drive's limit is the lower.",
    )


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
