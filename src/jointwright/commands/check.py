"""``jointwright check PROJECT``: validate a project and summarize it."""

from __future__ import annotations

import math
from pathlib import Path

import click
from rich.markup import escape

from ..cases import STANDARD_GRAVITY
from ..project import load_project
from ..report.wording import wrench_text
from ._format import console, emit_json, num, table
from ._progress import status_line

#: cases listed in the terminal table (all of them are in --json)
SHOWN_CASES = 200


def _by_region(entries: list, project, rows: bool = True) -> list:
    """``entries`` [(case name, [fields])] with the poses of a region that read alike shown
    once, as "region (N poses)" (a 10,000-pose grid would otherwise print 10,000 equal rows);
    a region whose poses differ keeps one entry per pose. ``rows``: table rows (name first)
    rather than (name, fields) pairs."""
    from ..report.wording import region_groups

    fields = dict(entries)
    out = []
    for region, names in region_groups([n for n, _f in entries], project):
        if region and len(names) > 1 and all(fields[n] == fields[names[0]] for n in names):
            out.append((f"{region} ({len(names)} poses)", fields[names[0]]))
        else:
            out += [(n, fields[n]) for n in names]
    return [[name, *f] for name, f in out] if rows else out


def project_summary(p, evaluator=None) -> dict:
    from ..assessment import unloaded_joints

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
            "included_actuator_mass": float(sum(robot.included_mass)),
            "mounts": {
                m.joint: {
                    "link": m.link,
                    "xyz": [float(x) for x in m.xyz],
                    "included_mass": float(inc),
                }
                for m, inc in zip(robot.mounts, robot.included_mass, strict=True)
            },
            "joints": {
                j: {
                    "role": robot.role(j),
                    "kind": "revolute" if rev else "prismatic",
                    **robot.joint_limits(j),
                }
                for j, rev in zip(robot.joint_names, robot.revolute, strict=True)
            },
            "mimic": {
                f: {"leader": lead, "multiplier": k, "offset": o} for f, lead, k, o in robot.mimic
            },
            "unloaded": list(unloaded_joints(p, evaluator)),
        },
        "catalog": {
            "motors": len(motors),
            "stage_types": [
                {
                    "name": s.name,
                    "kind": s.kind,
                    "frames": len(s.frames),
                    "ratios": list(s.ratios) if s.ratios is not None else None,
                    "ratio_range": list(s.ratio_range) if s.ratio_range is not None else None,
                    "efficiency": s.efficiency.describe(),
                    "efficiency_band": None
                    if s.efficiency_band is None
                    else s.efficiency_band.describe(),
                }
                for s in stages
            ],
            "max_stages": p.max_stages,
            "notes": list(cat.notes),
            # per joint the drives it may use; None: no drives, every motor on its own ratings
            "drives": None if p.drives is None else {j: list(v) for j, v in p.drives.items()},
        },
        "cases": [
            {
                "name": c.name,
                "kind": c.kind,
                "frame": c.frame,
                "direction": c.direction,
                "motion": c.motion if c.kind in ("payload", "stance", "torque") else None,
                "limits": c.limits,
                "payload_growth": (
                    {"fixed_load": c.fixed_load, "payload_share": c.payload_share}
                    if c.kind in ("payload", "stance")
                    else None
                ),
                # where the force acts (from the frame's origin, m) and the moment with it (N·m),
                # world-aligned axes
                "offset": list(c.offset) if c.kind in ("payload", "stance") else None,
                "moment": list(c.moment) if c.kind in ("payload", "stance") else None,
                # each contact's least share of the total normal force (stance cases)
                "contact_share_min": c.contact_share_min if c.kind == "stance" else None,
            }
            for c in p.cases
        ],
        "requirements": {
            "total_mass_max": p.requirements.total_mass_max,
            "life_min": p.requirements.life_min,
            "efficiency_band": p.requirements.efficiency_band,
            "joints": {
                j: {k: v for k, v in vars(lim).items() if math.isfinite(v) and v != 0}
                for j, lim in p.requirements.joints.items()
            },
        },
    }


@click.command("check")
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
def command(project: Path, as_json: bool):
    """Validate PROJECT (robot, catalogs, cases, requirements) and summarize it."""
    from ..evaluate import Evaluator
    from ..objective import read_objective

    with status_line():
        p = load_project(project)
        # the same preparation assess and size make (poses, trajectories, the objective
        # table): check rejects what they would
        evaluator = Evaluator(p)
        read_objective(p)
    s = project_summary(p, evaluator)
    if as_json:
        emit_json(_finite(s))
        return
    con = console()
    con.print(f"[bold]{p.name}[/bold] — inputs are valid")
    con.print(f"file: {p.file}")
    if p.summary:
        con.print(p.summary)
    r = s["robot"]
    included = r["included_actuator_mass"]
    con.print(
        f"robot: {r['base']} base, {len(r['actuated'])} actuated joints, links "
        f"{num(r['link_mass'], 'kg')}"
        + (
            f" (after taking out {num(included, 'kg')} of actuators already in the link masses)"
            if included > 0
            else ""
        )
    )
    con.print(
        table(
            "Joints",
            ["joint", "role", "lower", "upper", "effort", "velocity"],
            [_joint_row(j, x) for j, x in r["joints"].items()]
            + [
                [
                    f,
                    f"follows {m['leader']} (×{m['multiplier']:g}, {m['offset']:+g})",
                    "—",
                    "—",
                    "—",
                    "—",
                ]
                for f, m in r["mimic"].items()
            ],
            caption="held: not actuated, locked by structure or brake; free: not actuated, "
            "moves without torque; limits from the robot file (— where none); the sizing reads "
            "the position limits only: effort and velocity are shown for comparison, and the "
            "actuators it picks are not held to them",
        )
    )
    con.print(
        table(
            "Actuator mounts",
            ["joint", "mass sits on", "at (m, link frame)", "already in link masses"],
            [
                [
                    j,
                    m["link"],
                    ", ".join(f"{x:g}" for x in m["xyz"]),
                    num(m["included_mass"], "kg") if m["included_mass"] > 0 else "none",
                ]
                for j, m in r["mounts"].items()
            ],
        )
    )
    c = s["catalog"]
    stages = "stage" if c["max_stages"] == 1 else "stages"
    con.print(
        table(
            f"Catalog: {c['motors']} motors, up to {c['max_stages']} {stages} per joint",
            ["stage type", "kind", "frames", "ratios", "efficiency model"],
            [
                [
                    t["name"],
                    t["kind"],
                    str(t["frames"]),
                    ", ".join(f"{x:g}" for x in t["ratios"])
                    if t["ratios"]
                    else f"{t['ratio_range'][0]:g} to {t['ratio_range'][1]:g} (continuous)",
                    t["efficiency"] + (f"; {t['efficiency_band']}" if t["efficiency_band"] else ""),
                ]
                for t in c["stage_types"]
            ],
        )
    )
    if c["drives"] is not None:
        con.print(
            "Drives: "
            + "; ".join(f"{j} {' or '.join(v)}" for j, v in c["drives"].items())
            + " (the motor's torque capped at Kt × the drive's current, its line at the drive's "
            "bus voltage)"
        )
    if s["requirements"]["efficiency_band"]:
        if any(t["efficiency_band"] for t in c["stage_types"]):
            con.print(
                "Requirements hold across the stages' efficiency bands (worst end per metric)."
            )
        else:
            con.print(
                "[yellow]warning:[/yellow] requirements.efficiency_band is true but no stage of "
                "the catalog states an efficiency_band: every metric is at the nominal "
                'efficiencies (docs/catalog-format.md, "Efficiency bands")'
            )
    units = {
        "payload_min": "N",
        "imf_min": "",
        "directional_imf_min": "",
        "effective_mass_max": "kg",
        "backdrive_force_max": "N",
        "speed_min": "m/s",
        "acceleration_min": "m/s²",
        "temperature_margin_min": "K",
    }
    more = len(s["cases"]) - SHOWN_CASES
    con.print(
        table(
            "Cases",
            ["case", "kind", "frame", "direction", "motion", "requirements"],
            _by_region(
                [
                    (
                        x["name"],
                        [
                            x["kind"],
                            x["frame"] or "—",
                            "—"
                            if x["direction"] is None
                            else "(" + ", ".join(f"{v:.3g}" for v in x["direction"]) + ")",
                            x["motion"] or "—",
                            "; ".join(
                                f"{k.replace('_', ' ')} {num(v, units.get(k, ''))}"
                                f"{_carries(x, k, v)}"
                                for k, v in x["limits"].items()
                            )
                            or "—",
                        ],
                    )
                    for x in s["cases"][:SHOWN_CASES]
                ],
                p,
            ),
            caption=f"the first {SHOWN_CASES} of {len(s['cases']):,} cases; --json lists all"
            if more > 0
            else None,
        )
    )
    grows = [x for x in s["cases"][:SHOWN_CASES] if x.get("payload_growth")]
    if grows:
        con.print(
            "load per payload mass m_p "
            "(the payload objective reads each case's force as kg carried): "
            + "; ".join(
                f"{name} {text[0]}"
                for name, text in _by_region(
                    [
                        (
                            x["name"],
                            [
                                f"{num(x['payload_growth']['fixed_load'], 'N')} + "
                                f"{x['payload_growth']['payload_share']:g}·m_p·g"
                            ],
                        )
                        for x in grows
                    ],
                    p,
                    rows=False,
                )
            )
        )
    wrenches = [
        (c.name, text) for c in p.cases[:SHOWN_CASES] if (text := wrench_text(c, minus="-"))
    ]
    if wrenches:
        con.print(
            "where the force acts and the moment with it: "
            + "; ".join(
                f"{name} {text[0]}"
                for name, text in _by_region([(n, [t]) for n, t in wrenches], p, rows=False)
            )
        )
    req = s["requirements"]
    line = (
        f"total actuator mass ≤ {num(req['total_mass_max'], 'kg')}"
        if math.isfinite(req["total_mass_max"])
        else "no total mass budget"
    )
    if req.get("life_min", 0.0) > 0:
        line += f"; gear life ≥ {num(req['life_min'] / 3600.0, 'h')} per joint (Miner's rule)"
    con.print("requirements: " + line)
    joint_units = {
        "mass_max": "kg",
        "reflected_inertia_max": "kg·m²",
        "diameter_max": "m",
        "length_max": "m",
        "ratio_min": "",
        "ratio_max": "",
    }
    for j, lim in req["joints"].items():
        con.print(
            f"  {j}: "
            + ", ".join(
                f"{k.replace('_', ' ')} {num(v, joint_units.get(k, ''))}" for k, v in lim.items()
            )
        )
    for n in c["notes"]:  # plain text: the "[trade]" tags are not console markup
        con.print(f"[yellow]note:[/yellow] {escape(n)}")
    for j in r["unloaded"]:
        con.print(
            f"[yellow]warning:[/yellow] no case loads joint {j} (no payload or stance force, "
            "link weight, required joint torque or duty cycle reaches it): only its own limits "
            "and the speed, impact and back-drive cases shape its choice, and sizing gives it "
            "the smallest actuator that passes them; add a case that loads it (a payload, "
            "stance, torque or duty case) or a joint requirement"
        )


def _carries(case: dict, key: str, force: float) -> str:
    """ " (carries 3 kg)" after a payload requirement: the payload mass the required force
    stands for, (F − fixed_load)/(payload_share·g_n), as the payload objective reads it."""
    growth = case.get("payload_growth")
    if key != "payload_min" or not growth or growth["payload_share"] <= 0:
        return ""
    mass = (force - growth["fixed_load"]) / (growth["payload_share"] * STANDARD_GRAVITY)
    return f" (carries {num(mass, 'kg')})" if mass >= 0 else ""


def _joint_row(name: str, x: dict) -> list[str]:
    ang = x["kind"] == "revolute"
    pos, eff, vel = ("rad", "N·m", "rad/s") if ang else ("m", "N", "m/s")

    def limit(v, unit):  # a limit the robot file does not give is shown as —
        return num(v, unit) if math.isfinite(v) else "—"

    return [
        name,
        x["role"],
        limit(x["lower"], pos),
        limit(x["upper"], pos),
        limit(x["effort"], eff),
        limit(x["velocity"], vel),
    ]


def _finite(x):
    from ..assessment import _jsonable

    return _jsonable(x)
