"""``jointwright frontier PROJECT --measure ...``: payload versus back-drivability, exactly."""

from __future__ import annotations

import json
from pathlib import Path

import click

from ..project import load_project
from ._format import console, emit_json, num, table

UNITS = {"imf": "", "effective_mass": "kg", "backdrive_force": "N"}


def print_frontier(f) -> None:
    con = console()
    better = "higher" if f.sense == "min" else "lower"
    con.print(f"[bold]frontier[/bold]: payload versus {f.measure} at case {f.case} ({better} is more "
              f"back-drivable); {len(f.points)} non-dominated designs, "
              f"{'complete' if f.complete else 'sampled (stopped early)'}; {f.solves} exact solves, {f.seconds:.1f} s")
    rows = []
    for i, p in enumerate(f.points):
        mark = " [bold]knee[/bold]" if i == f.knee else ""
        rows.append([str(i) + mark, num(p.payload, "N"), num(p.measure, UNITS[f.measure]), num(p.mass, "kg"),
                     ", ".join(p.changes) or ("—" if i else "first point"),
                     "; ".join(f"{j}: {a.label()}" for j, a in zip(p.design.joints, p.design.actuators))])
    con.print(table("Frontier (largest payload first)", ["#", "payload", f.measure, "mass", "joints changed", "design"],
                    rows, caption="each point: the largest payload with the measure at least this good; "
                                  "every other requirement of the project is kept"))
    con.print("[yellow]caution:[/yellow] back-drivability figures are concept-stage estimates; contact safety "
              "must be assessed under the applicable collaborative-robot and machinery safety standards.")


@click.command("frontier")
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--measure", type=click.Choice(["imf", "effective_mass", "backdrive_force"]), default="imf")
@click.option("--case", "case_name", default=None, help="impact or back-drive case (default: the first)")
@click.option("--points", type=int, default=50, help="most exact solves")
@click.option("--time-limit", type=float, default=None, help="seconds for the whole sweep")
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
@click.option("--out", type=click.Path(path_type=Path), default=None, help="write the frontier as JSON here")
def command(project: Path, measure, case_name, points, time_limit, as_json, out):
    """Payload versus MEASURE over the non-dominated designs of PROJECT (exact ε-constraint sweep)."""
    from ..errors import InputError
    from ..frontier import frontier

    if time_limit is not None and time_limit <= 0:
        raise InputError("<command line>", "--time-limit", f"must be > 0 s, got {time_limit}")
    f = frontier(load_project(project), measure, case=case_name, points=points, time_limit=time_limit)
    data = f.to_dict()
    if out is not None:
        out.write_text(json.dumps(data, indent=2, allow_nan=False) + "\n", encoding="utf-8")
    if as_json:
        emit_json(data)
    else:
        print_frontier(f)
        if out is not None:
            console().print(f"frontier written to {out}")
