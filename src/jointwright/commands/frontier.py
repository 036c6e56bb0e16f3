"""``jointwright frontier PROJECT --measure ...``: payload versus back-drivability, total mass
or cost, exactly."""

from __future__ import annotations

import json
import math
from pathlib import Path

import click

from ..frontier_result import self_locking_joints
from ..project import load_project
from ._format import console, emit_json, num, table
from ._output import (
    atomic_folder,
    check_folder_name,
    check_target,
    project_inputs,
    write_text,
)
from .frontier_text import (
    HEADINGS,
    LABELS,
    UNITS,
    at_case,
    better_text,
    describe_run,
    measure_name,
    narrow_text,
    plot_text,
    unexplored_text,
)


def _grouped(rows: list, shared) -> list:
    """``rows`` (joint first) with each shared group that appears whole with equal other
    fields cut to its first joint, named "joint (+N shared)"."""
    out, skip = [], set()
    by_joint = {r[0]: r for r in rows}
    for r in rows:
        if r[0] in skip:
            continue
        group = next((g for g in shared if r[0] in g), None)
        if group and all(j in by_joint and by_joint[j][1:] == r[1:] for j in group):
            skip.update(group)
            out.append((f"{r[0]} (+{len(group) - 1} shared)", *r[1:]))
        else:
            out.append(tuple(r))
    return out


def own_limit(project, f) -> float | None:
    """The project's own limit on the frontier's measure (the frontier drops it to show the
    whole trade-off), or None when the project sets none."""
    from ..frontier_result import MEASURES

    kind, key, _metric, _sense = MEASURES[f.measure]
    if kind is None:
        value = getattr(project.requirements, key, None)
    else:
        value = project.case(f.case).limits.get(key) if f.case is not None else None
    return float(value) if value is not None and math.isfinite(float(value)) else None


def beyond_limit(f, p, limit: float | None) -> bool:
    """Whether front point ``p`` misses the project's own ``limit`` on the measure."""
    if limit is None:
        return False
    if f.sense == "max":  # smaller is better: a limit from above
        return p.measure > limit * (1 + 1e-9) + 1e-12
    return p.measure < limit * (1 - 1e-9) - 1e-12


def _distinct_digits(values: list[float], least: int = 4, most: int = 7) -> int:
    """Significant digits (from ``least`` to ``most``) at which neighbouring points whose
    measures differ also read differently: a front whose points differ by 0.1 % of their
    value would otherwise show one figure for several points."""
    for digits in range(least, most + 1):
        if all(
            a == b or f"{a:.{digits}g}" != f"{b:.{digits}g}"
            for a, b in zip(values, values[1:], strict=False)
        ):
            return digits
    return most


def print_frontier(f, shared=(), limit: float | None = None) -> None:
    """The frontier as text; ``shared``: the project's groups of joints that share one actuator
    (each shown once, as its first joint with the count of the others); ``limit``: the
    project's own limit on the measure (:func:`own_limit`), whose misses are marked."""
    con = console()
    con.print(
        f"[bold]frontier[/bold]: payload versus {measure_name(f)}{at_case(f)} "
        f"({better_text(f)}); "
        f"{describe_run(f)}"
    )
    region = unexplored_text(f)
    if region:
        con.print(f"[yellow]{region}[/yellow]")
    narrow = narrow_text(f) if f.measure not in ("mass", "cost") else None
    if narrow:
        con.print(f"note: {narrow}")
    rows: list[list[str]] = []
    designs: list[list[str]] = []
    # the mass and cost columns, unless they are the measure itself (cost: when the catalog
    # gives costs)
    masses = f.measure != "mass"
    costs = f.measure != "cost" and any(p.design.cost > 0 for p in f.points)
    shock = any(p.shock_use is not None for p in f.points)  # an impact case states a speed
    digits = _distinct_digits([p.measure for p in f.points])
    for i, p in enumerate(f.points):
        mark = (
            (" ◆" if i == f.knee else "")
            + (" †" if beyond_limit(f, p, limit) else "")
            + (" ⊘" if self_locking_joints(p.design) else "")
            + ("" if p.proven else " (not proven)")
        )
        changed = _grouped(list(p.changed or tuple((j, "?", "?") for j in p.changes)), shared)
        rows.append(
            [
                str(i + 1) + mark,
                num(p.payload, "kg"),
                num(p.measure, UNITS[f.measure], digits),
            ]
            + ([num(p.mass, "kg")] if masses else [])
            + ([num(p.design.cost)] if costs else [])
            + (
                ["unknown (unrated)" if math.isnan(p.shock_use) else num(100.0 * p.shock_use, "%")]
                if shock and p.shock_use is not None
                else []
            )
            + (["—"] if shock and p.shock_use is None else [])
            + [", ".join(j for j, _a, _b in changed) or ("—" if i else "first point")]
        )
        # the designs go into a second table, one joint a row, so the first fits 100 columns:
        # the first point in full, then each joint a point changes
        if i == 0:
            first = [
                (j, a.label()) for j, a in zip(p.design.joints, p.design.actuators, strict=True)
            ]
            designs += [["1", j, label, "—"] for j, label in _grouped(first, shared)]
        else:
            designs += [[str(i + 1), j, b, a] for j, a, b in changed]
    if rows:
        con.print(plot_text(f))
    caption = (
        "each point: the largest payload with the measure at least this good; every other "
        "requirement of the project is kept"
        + ("; cost in the catalog's currency units" if costs or f.measure == "cost" else "")
        + (
            "; gear shock: the largest peak gear torque at the project's impacts over the stage's "
            "momentary rating (over 100 % the gear is expected to break; unknown where a stage "
            "states no momentary rating; ∞ where a stage's stiffness is not given or the stack "
            "self-locks)"
            if shock
            else ""
        )
        + (
            "; ⊘ a joint of the design self-locks ("
            + "; ".join(
                f"point {k + 1}: {', '.join(self_locking_joints(q.design))}"
                for k, q in enumerate(f.points)
                if self_locking_joints(q.design)
            )
            + "): it cannot be back-driven there, whatever the point's figure; it holds "
            "unpowered and can trap or crush"
            if any(self_locking_joints(q.design) for q in f.points)
            else ""
        )
        + (
            f"; † beyond the project's own limit on {HEADINGS[f.measure]} "
            f"({num(limit, UNITS[f.measure])}): the frontier drops that limit to show the whole "
            "trade-off, so such a point does not meet the project"
            if any(beyond_limit(f, p, limit) for p in f.points)
            else ""
        )
        + (
            "; ◆ the turning point of the trade-off (farthest from the line joining the two ends); "
            "numbers as in the plot"
            if f.knee is not None
            else ""
        )
    )
    con.print(
        table(
            "Frontier (largest payload first)",
            ["#", "payload mass", HEADINGS[f.measure]]
            + (["mass"] if masses else [])
            + (["cost"] if costs else [])
            + (["gear shock"] if shock else [])
            + ["joints changed"],
            rows,
            caption=caption,
        )
    )
    if designs:
        con.print(
            table(
                "Frontier designs: the first point in full, then what each point changes",
                ["#", "joint", "actuator", "replaces"],
                designs,
                caption="actuator: motor | stage type/frame ratio; replaces: the joint's actuator "
                "at the point before",
            )
        )
    con.print(
        "[yellow]caution:[/yellow] back-drivability figures are concept-stage estimates; contact "
        "safety must be assessed under the applicable collaborative-robot and machinery safety "
        "standards."
    )


@click.command("frontier")
@click.argument("project", type=click.Path(path_type=Path))
@click.option(
    "--measure",
    type=click.Choice(["imf", "effective_mass", "backdrive_force", "mass", "cost"]),
    default=None,
    help="imf, effective_mass (impact case), backdrive_force (back-drive case), or the robot's "
    "total actuator mass or cost (default: imf on a floating base, effective_mass on a fixed "
    "one, where the IMF is always 1)",
)
@click.option(
    "--case",
    "case_name",
    default=None,
    help="impact or back-drive case (default: the first; none for mass and cost)",
)
@click.option(
    "--method",
    type=click.Choice(["auto", "branch-and-bound", "exhaustive", "sweep"]),
    default="auto",
    help="branch-and-bound: bi-objective branch and bound (complete, proven); exhaustive: score "
    "every candidate design; sweep: exact ε-constraint solves; auto: branch-and-bound below 10 M "
    "candidate designs, sweep from there on",
)
@click.option(
    "--merge",
    type=click.FloatRange(min=0.0, max=1.0, max_open=True),
    default=0.01,
    show_default=True,
    help="merge neighbouring points closer than this fraction of the front's span on both axes",
)
@click.option(
    "--points",
    type=click.IntRange(min=1),
    default=None,
    help="most exact solves (sweep); default: no cap with --time-limit, else 50",
)
@click.option(
    "--time-limit",
    type=float,
    default=None,
    help="seconds for the whole run; a stopped run shows the proven points and the region "
    "not yet searched",
)
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
@click.option(
    "--out", type=click.Path(path_type=Path), default=None, help="write the frontier as JSON here"
)
@click.option(
    "--plot",
    "plot_dir",
    type=click.Path(file_okay=False, path_type=Path),
    default=None,
    help="write frontier.png and frontier.svg into this folder",
)
@click.option(
    "--frictionless",
    is_flag=True,
    help="also sweep with every gear frictionless (η = 1 both ways), for comparison",
)
@click.option("--force", is_flag=True, help="replace an existing --out file or --plot figures")
def command(
    project: Path,
    measure,
    case_name,
    method,
    merge,
    points,
    time_limit,
    as_json,
    out,
    plot_dir,
    frictionless,
    force,
):
    """Payload versus MEASURE over the non-dominated designs of PROJECT (bi-objective branch
    and bound by default; exhaustive scoring or exact ε-constraint sweep on request)."""
    from ..errors import InputError
    from ..frontier import frontier
    from ..objective import read_objective

    if time_limit is not None and time_limit <= 0:
        raise InputError("<command line>", "--time-limit", f"must be > 0 s, got {time_limit}")
    p = load_project(project)
    if measure is None:
        measure = "imf" if p.robot.n_base == 6 else "effective_mass"
    inputs = project_inputs(p)
    if out is not None:
        check_target(out, "--out", inputs=inputs, force=force)
    if plot_dir is not None:
        check_folder_name(
            plot_dir, "--plot", "frontier.png and frontier.svg", (".png", ".svg", ".pdf", ".jpg")
        )
        check_target(plot_dir, "--plot", inputs=inputs, force=force, exists_hint="frontier.png")

    def run(proj):
        try:
            return frontier(
                proj,
                measure,
                case=case_name,
                points=points,
                time_limit=time_limit,
                method=method,
                merge=merge,
            )
        except InputError as e:  # the API's "case" argument is this command's --case option
            if e.file == "<api>" and e.field == "case":
                raise InputError("<command line>", "--case", e.rule) from None
            raise

    f = run(p)
    data = f.to_dict()
    ideal = None
    if frictionless:
        ideal = run(frictionless_project(p))
        data["frictionless"] = ideal.to_dict()
    if plot_dir is not None:
        with atomic_folder(plot_dir, "--plot") as tmp:
            write_plot(f, ideal, tmp)
    if out is not None:
        write_text(out, json.dumps(data, indent=2, allow_nan=False) + "\n")
    if as_json:
        emit_json(data)
    else:
        print_frontier(f, read_objective(p)["shared"], own_limit(p, f))
        if ideal is not None:
            con = console()
            con.print(
                f"frictionless gears: {len(ideal.points)} non-dominated designs; largest payload "
                f"{num(ideal.points[0].payload if ideal.points else None, 'kg')} against "
                f"{num(f.points[0].payload if f.points else None, 'kg')} with the catalog's "
                "efficiencies"
            )
        if out is not None:
            console().print(f"frontier written to {out}")
        if plot_dir is not None:
            console().print(f"plot written to {plot_dir}/frontier.png and .svg")


def frictionless_project(project):
    """The same project with every stage's efficiency model replaced by η_f = η_b = 1."""
    import dataclasses

    from ..catalog.efficiency import ConstantEfficiency

    ideal = ConstantEfficiency(forward=1.0, backward=1.0)
    stages = tuple(dataclasses.replace(s, efficiency=ideal) for s in project.catalog.stages)
    return dataclasses.replace(project, catalog=dataclasses.replace(project.catalog, stages=stages))


def write_plot(f, ideal, folder: Path) -> None:
    from ..report import figures

    unit = UNITS[f.measure]
    label = LABELS[f.measure]
    series = {
        "catalog efficiencies": ([p.measure for p in f.points], [p.payload for p in f.points])
    }
    if ideal is not None:
        series["frictionless gears (η = 1)"] = (
            [p.measure for p in ideal.points],
            [p.payload for p in ideal.points],
        )
    knee = None if f.knee is None else (f.points[f.knee].measure, f.points[f.knee].payload)
    fig = figures.frontier_figure(
        series,
        knee,
        x_label=f"{label}{f' ({unit})' if unit else ''}{at_case(f)}; {better_text(f)}",
        y_label="payload mass every payload case carries (kg)",
        title=f"Payload versus {label}: non-dominated designs "
        f"({'complete' if f.complete else 'not complete: stopped before the whole front'})",
        steps="pre" if f.sense == "min" else "post",
        numbered=True,
        self_locking=[k for k, q in enumerate(f.points) if self_locking_joints(q.design)],
    )
    figures.save(fig, folder, "frontier")
