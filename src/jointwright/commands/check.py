"""``jointwright check PROJECT``: validate a project and summarize it."""

from __future__ import annotations

import math
from pathlib import Path

import click

from ..project import load_project
from ._format import console, emit_json, num, table


def project_summary(p) -> dict:
    robot, cat = p.robot, p.catalog
    motors = cat.all_motors()
    stages = [s for s in cat.stages if p.stage_kinds is None or s.kind in p.stage_kinds]
    return {
        "project": p.name,
        "file": str(p.file),
        "robot": {
            "base": robot.base,
            "actuated": list(robot.actuated),
            "link_mass": robot.link_mass_total,
            "mounts": {m.joint: {"link": m.link, "xyz": [float(x) for x in m.xyz]} for m in robot.mounts},
        },
        "catalog": {
            "motors": len(motors),
            "stage_types": [
                {"name": s.name, "kind": s.kind, "frames": len(s.frames),
                 "ratios": list(s.ratios) if s.ratios is not None else None,
                 "ratio_range": list(s.ratio_range) if s.ratio_range is not None else None,
                 "efficiency": s.efficiency.describe()}
                for s in stages
            ],
            "max_stages": p.max_stages,
            "notes": list(cat.notes),
        },
        "cases": [
            {"name": c.name, "kind": c.kind, "frame": c.frame, "direction": c.direction,
             "motion": c.motion if c.kind == "payload" else None, "limits": c.limits,
             "payload_growth": ({"fixed_load": c.fixed_load, "payload_share": c.payload_share}
                                if c.kind in ("payload", "stance") else None)}
            for c in p.cases
        ],
        "requirements": {
            "total_mass_max": p.requirements.total_mass_max,
            "joints": {j: {k: v for k, v in vars(l).items() if math.isfinite(v) and v != 0}
                       for j, l in p.requirements.joints.items()},
        },
    }


@click.command("check")
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
def command(project: Path, as_json: bool):
    """Validate PROJECT (robot, catalogs, cases, requirements) and summarize it."""
    p = load_project(project)
    s = project_summary(p)
    if as_json:
        emit_json(_finite(s))
        return
    con = console()
    con.print(f"[bold]{p.name}[/bold]  ({p.file})  — inputs are valid")
    if p.summary:
        con.print(p.summary)
    r = s["robot"]
    con.print(f"robot: {r['base']} base, {len(r['actuated'])} actuated joints, links {num(r['link_mass'], 'kg')}")
    con.print(table("Actuator mounts", ["joint", "mass sits on", "at (m, link frame)"],
                    [[j, m["link"], ", ".join(f"{x:g}" for x in m["xyz"])] for j, m in r["mounts"].items()]))
    c = s["catalog"]
    con.print(table(f"Catalog: {c['motors']} motors, up to {c['max_stages']} stages per joint",
                    ["stage type", "kind", "frames", "ratios", "efficiency model"],
                    [[t["name"], t["kind"], str(t["frames"]),
                      ", ".join(f"{x:g}" for x in t["ratios"]) if t["ratios"] else
                      f"{t['ratio_range'][0]:g} to {t['ratio_range'][1]:g} (continuous)",
                      t["efficiency"]] for t in c["stage_types"]]))
    units = {"payload_min": "N", "imf_min": "", "directional_imf_min": "", "effective_mass_max": "kg",
             "backdrive_force_max": "N", "speed_min": "m/s", "acceleration_min": "m/s²",
             "temperature_margin_min": "K"}
    con.print(table("Cases", ["case", "kind", "frame", "direction", "motion", "requirements"],
                    [[x["name"], x["kind"], x["frame"] or "—",
                      "—" if x["direction"] is None else "(" + ", ".join(f"{v:.3g}" for v in x["direction"]) + ")",
                      x["motion"] or "—",
                      "; ".join(f"{k.replace('_', ' ')} {num(v, units.get(k, ''))}" for k, v in x["limits"].items()) or "—"]
                     for x in s["cases"]]))
    grows = [x for x in s["cases"] if x.get("payload_growth")]
    if grows:
        con.print("load per payload mass m_p (the payload objective reads each case's force as kg carried): "
                  + "; ".join(f"{x['name']} {num(x['payload_growth']['fixed_load'], 'N')} + "
                              f"{x['payload_growth']['payload_share']:g}·m_p·g" for x in grows))
    req = s["requirements"]
    line = f"total actuator mass ≤ {num(req['total_mass_max'], 'kg')}" if math.isfinite(req["total_mass_max"]) else "no total mass budget"
    con.print("requirements: " + line)
    joint_units = {"mass_max": "kg", "reflected_inertia_max": "kg·m²", "diameter_max": "m",
                   "length_max": "m", "ratio_min": "", "ratio_max": ""}
    for j, lim in req["joints"].items():
        con.print(f"  {j}: " + ", ".join(f"{k.replace('_', ' ')} {num(v, joint_units.get(k, ''))}"
                                         for k, v in lim.items()))
    for n in c["notes"]:
        con.print(f"[yellow]note:[/yellow] {n}")


def _finite(x):
    from ..assessment import _jsonable
    return _jsonable(x)
