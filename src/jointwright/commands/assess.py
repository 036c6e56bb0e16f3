"""``jointwright assess PROJECT --design FILE``: every metric of one design."""

from __future__ import annotations

from pathlib import Path

import click

from ..assessment import assess
from ..design import load_design
from ..project import load_project
from ._format import console, emit_json, num, pct, table

#: metric -> (label, unit) in the order shown
SHOWN = {
    "payload": [("payload", "tip force, case motion", "N"), ("payload_raise", "raising / pushing", "N"),
                ("payload_lower", "lowering / yielding", "N"), ("payload_hold", "holding still", "N"),
                ("payload_frictionless", "frictionless gears", "N")],
    "impact": [("imf", "impact mitigation factor (back-driven)", ""),
               ("imf_direction", "directional IMF along direction", ""),
               ("imf_frictionless", "IMF, frictionless gears", ""),
               ("effective_mass", "effective mass (back-driven)", "kg"),
               ("effective_mass_motoring", "effective mass (motoring)", "kg"),
               ("effective_mass_frictionless", "effective mass (frictionless)", "kg")],
    "backdrive": [("backdrive_force", "force to back-drive, unpowered", "N")],
    "speed": [("speed", "end-point speed", "m/s")],
}


def print_assessment(a) -> None:
    con = console()
    verdict = "[green]meets every requirement[/green]" if a.feasible else "[red]misses requirements[/red]"
    con.print(f"[bold]{a.project}[/bold] — design [bold]{a.design}[/bold]: {verdict}; "
              f"actuators {num(a.total_mass, 'kg')}")
    rows = []
    for j in a.joints:
        rows.append([j.joint, j.motor, " + ".join(j.stages) or "direct", num(j.ratio, ":1"),
                     f"{j.eta_forward:.3f} / {j.eta_backward:.3f}" + (" [red]self-locking[/red]" if j.self_locking else ""),
                     num(j.capacity_motoring, "N·m"), num(j.capacity_backdriven, "N·m"),
                     num(j.reflected_frictionless, "kg·m²"), num(j.reflected_backdriven, "kg·m²"),
                     num(j.mass, "kg")])
    con.print(table("Joints", ["joint", "motor", "stages", "ratio", "η fwd / bwd", "drive torque",
                               "holding torque", "refl. inertia N²I", "refl. back-driven", "mass"], rows,
                    caption="drive torque = η_f·N·τ_peak; holding = N·τ_peak/η_b while the load back-drives; both capped by the gear rating"))
    for c in a.cases:
        rows = []
        for key, label, unit in SHOWN.get(c.kind, []):
            if key in c.metrics and c.metrics[key] is not None:
                rows.append([label, num(c.metrics[key], unit)])
        extra = []
        if c.limiting_joint:
            extra.append(f"limited by {c.limiting_joint}")
        if c.joint_modes:
            extra.append("modes: " + ", ".join(f"{j} {m}" for j, m in c.joint_modes.items()))
        if c.kind == "impact" and c.metrics.get("contact_rank", 3) < 3:
            extra.append("the joints cannot move the contact in every direction: determinant IMF is 0; "
                         "see the directional IMF")
        con.print(table(f"Case {c.name} ({c.kind})", ["metric", "value"], rows,
                        caption="; ".join(extra) or None))
    rows = [[c.subject, c.requirement.replace("_", " "), num(c.achieved, c.unit), num(c.limit, c.unit),
             pct(c.margin), "[green]ok[/green]" if c.ok else "[red]MISSED[/red]"] for c in a.checks]
    con.print(table("Requirements", ["subject", "requirement", "achieved", "limit", "margin", ""], rows))
    for text in a.cautions:
        con.print(f"[yellow]caution:[/yellow] {text}")


@click.command("assess")
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--design", "design_file", required=True, type=click.Path(path_type=Path),
              help="design file (TOML) naming motor and stages per joint")
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
def command(project: Path, design_file: Path, as_json: bool):
    """Every metric of the design in DESIGN for the cases of PROJECT, with margins."""
    p = load_project(project)
    d = load_design(design_file, p)
    a = assess(p, d)
    if as_json:
        emit_json(a.to_dict())
    else:
        print_assessment(a)
