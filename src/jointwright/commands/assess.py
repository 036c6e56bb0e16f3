"""``jointwright assess PROJECT --design FILE``: every metric of one design."""

from __future__ import annotations

import math
from pathlib import Path

import click
from rich.markup import escape

from ..assessment import assess
from ..design import load_design
from ..margin_words import margin_text
from ..project import load_project
from ..report.wording import pose_text, region_groups
from ._case_view import print_case
from ._format import console, emit_json, num, pct, table
from ._progress import status_line


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
                " + ".join(j.stages) or "direct drive (no gear)",
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
        print_case(con, c, a, cases, revolute)

    def shown(c, v):  # a rating use is a fraction, shown in %
        uses = ("rating_use_max", "shock_use_max", "gear_peak_use_max")
        return num(100 * v, "%") if c.requirement in uses else num(v, c.unit)

    rows = [
        [
            c.subject,
            c.requirement.replace("_", " "),
            shown(c, c.achieved),
            shown(c, c.limit),
            margin_text(c.margin, c.limit, c.sense, minus="-"),
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
                margin_text(c.margin_nominal, c.limit, c.sense, minus="-"),
                margin_text(c.margin_worst, c.limit, c.sense, minus="-"),
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
    for text in a.cautions:  # plain text: a "[trade]" tag is not console markup
        con.print(f"[yellow]caution:[/yellow] {escape(text)}")


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
            worst = str(info.get("case", "—")).removeprefix(region)  # "@k": its worst pose
            head = f"region of {info.get('poses', len(names))} poses, worst {worst}"
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
            f"{num(j.motor_max_speed, 'rad/s')} = "
            + by(j.motor_max_speed * 60 / (2 * math.pi), "rpm", j.max_speed_by),
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
