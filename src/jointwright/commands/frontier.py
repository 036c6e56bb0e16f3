"""``jointwright frontier PROJECT --measure ...``: payload versus back-drivability, total mass
or cost, exactly."""

from __future__ import annotations

import json
from pathlib import Path

import click

from ..project import load_project
from ._format import console, emit_json, num, table
from ._output import atomic_folder, check_target, project_inputs, write_text

UNITS = {"imf": "", "effective_mass": "kg", "backdrive_force": "N", "mass": "kg", "cost": ""}
#: axis and title names of each measure
LABELS = {
    "imf": "impact mitigation factor",
    "effective_mass": "back-driven effective mass",
    "backdrive_force": "back-drive force",
    "mass": "total actuator mass",
    "cost": "total actuator cost",
}
#: what a better value of each measure means, the sense "min" (larger better) or "max"
BETTER = {"min": "higher is more back-drivable", "max": "lower is more back-drivable"}
BETTER_TOTAL = {"mass": "lower is lighter", "cost": "lower is cheaper"}


def better_text(f) -> str:
    """What a better measure means, e.g. "lower is more back-drivable"."""
    return BETTER_TOTAL.get(f.measure) or BETTER[f.sense]


def measure_name(f) -> str:
    """The measure as the command line names it; the totals in words (not "mass" alone)."""
    return LABELS[f.measure] if f.case is None else f.measure


def at_case(f) -> str:
    """ " at case NAME", or nothing for the robot-level measures (total mass, cost)."""
    return "" if f.case is None else f" at case {f.case}"


def describe_run(f) -> str:
    """One sentence: how many points, whether complete, how they were found."""
    how = {
        "exhaustive": f"every one of {f.scored:,} candidate designs scored",
        "branch-and-bound": (
            f"bi-objective branch and bound, {f.scored:,} complete designs scored"
            if f.scored
            else "bi-objective branch and bound, stopped in its first single-objective search "
            "(the strongest design)"
        ),
        "sweep": f"{f.solves} exact solves",
    }.get(f.method, f.method)
    if f.complete:
        state = "complete (proven)"
    elif f.unexplored is not None and all(p.proven for p in f.points):
        state = "stopped: the points shown are proven"
    elif f.unexplored is not None and f.method == "sweep":
        weak = sum(not p.proven for p in f.points)
        state = (
            f"stopped: {len(f.points) - weak} point{'s' * (len(f.points) - weak != 1)} proven, "
            f"{weak} not (the best design of a stopped search: a better one may exist there)"
        )
    elif f.unexplored is not None:
        state = "stopped before the first proof: the best design found, not proven"
    else:
        state = "sampled (stopped early)"
    n = len(f.points)
    what = "non-dominated " if all(p.proven for p in f.points) else ""
    text = f"{n} {what}design{'' if n == 1 else 's'}, {state}; {how}, {f.seconds:.1f} s"
    if f.merge_tolerance > 0:
        text += (
            f"; {f.merged} near-duplicate point{'s' if f.merged != 1 else ''} merged (within "
            f"{100 * f.merge_tolerance:g} % of the front's span on both axes)"
        )
    return text


def unexplored_text(f) -> str | None:
    """The region a stopped branch and bound did not search, in words, or None."""
    if f.unexplored is None:
        return None
    pmax, bound = f.unexplored
    side = "≤" if f.sense == "min" else "≥"
    return (
        f"stopped by the time limit: designs with payload ≤ {num(pmax, 'kg')} and {f.measure} "
        f"{side} {num(bound, UNITS[f.measure])} were not all searched and may add points there"
        + ("; every point shown is proven non-dominated" if all(p.proven for p in f.points) else "")
    )


def plot_text(f, width: int = 64, height: int = 16) -> str:
    """The frontier as a text staircase (measure across, payload up), the same steps, numbers
    and turning-point symbol as the figure (:func:`write_plot`)."""
    xs = [p.measure for p in f.points]
    ys = [p.payload for p in f.points]
    x0, x1 = min(xs), max(xs)
    y0, y1 = min(ys), max(ys)
    # one value on an axis (a single point, or equal measures): a span of ±5 % around it, so
    # the point sits mid-axis and the ticks read its value
    if x1 == x0:
        pad = 0.05 * max(abs(x0), 1e-9)
        x0, x1 = x0 - pad, x1 + pad
    if y1 == y0:
        pad = 0.05 * max(abs(y0), 1e-9)
        y0, y1 = y0 - pad, y1 + pad
    sx, sy = x1 - x0, y1 - y0
    grid = [[" "] * width for _ in range(height)]

    def col(x: float) -> int:
        return round((x - x0) / sx * (width - 1))

    def row(y: float) -> int:
        return height - 1 - round((y - y0) / sy * (height - 1))

    order = sorted(range(len(xs)), key=lambda i: xs[i])
    for a, b in zip(order, order[1:], strict=False):
        ca, cb = col(xs[a]), col(xs[b])
        # "post" (smaller measure better): the payload holds from a point to the right, then
        # rises at the next; "pre" (larger better): it falls at a point, then holds
        level = ys[a] if f.sense == "max" else ys[b]
        at = cb if f.sense == "max" else ca
        r = row(level)
        for c in range(ca, cb + 1):
            grid[r][c] = "─"
        ra, rb = sorted((row(ys[a]), row(ys[b])))
        for r2 in range(ra, rb + 1):
            grid[r2][at] = "┼" if grid[r2][at] == "─" else "│"
        if ra != rb:  # the corner where the step turns
            grid[r][at] = "└" if f.sense == "min" else "┘"
    for i in range(len(xs)):
        label = "◆" if i == f.knee else str(i + 1)
        r, c = row(ys[i]), col(xs[i])
        c = min(c, width - len(label))
        for k, ch in enumerate(label):
            grid[r][c + k] = ch
    unit = UNITS[f.measure]
    lines = []
    for r in range(height):
        y = y1 - r / (height - 1) * sy
        tick = f"{y:8.3g} ┤" if r in (0, height // 2, height - 1) else "         │"
        lines.append(tick + "".join(grid[r]))
    lines.append("         └" + "─" * width)
    left, right = f"{x0:.4g}", f"{x1:.4g}"
    lines.append("          " + left + " " * max(1, width - len(left) - len(right)) + right)
    lines.append(
        f"          payload (kg) against {measure_name(f)}{f' ({unit})' if unit else ''}"
        f"{at_case(f)}; "
        "numbers: the points of the table"
        + (
            "; ◆ the turning point of the trade-off" + (f" (point {f.knee + 1})")
            if f.knee is not None
            else ""
        )
    )
    return "\n".join(lines)


def print_frontier(f) -> None:
    con = console()
    con.print(
        f"[bold]frontier[/bold]: payload versus {measure_name(f)}{at_case(f)} "
        f"({better_text(f)}); "
        f"{describe_run(f)}"
    )
    region = unexplored_text(f)
    if region:
        con.print(f"[yellow]{region}[/yellow]")
    rows: list[list[str]] = []
    designs: list[list[str]] = []
    # the mass and cost columns, unless they are the measure itself (cost: when the catalog
    # gives costs)
    masses = f.measure != "mass"
    costs = f.measure != "cost" and any(p.design.cost > 0 for p in f.points)
    shock = any(p.shock_use is not None for p in f.points)  # an impact case states a speed
    for i, p in enumerate(f.points):
        mark = (" ◆" if i == f.knee else "") + ("" if p.proven else " (not proven)")
        changed = p.changed or tuple((j, "?", "?") for j in p.changes)
        rows.append(
            [
                str(i + 1) + mark,
                num(p.payload, "kg"),
                num(p.measure, UNITS[f.measure]),
            ]
            + ([num(p.mass, "kg")] if masses else [])
            + ([num(p.design.cost)] if costs else [])
            + ([num(100.0 * p.shock_use, "%")] if shock and p.shock_use is not None else [])
            + (["—"] if shock and p.shock_use is None else [])
            + [", ".join(j for j, _a, _b in changed) or ("—" if i else "first point")]
        )
        # the designs go into a second table, one joint a row, so the first fits 100 columns:
        # the first point in full, then each joint a point changes
        if i == 0:
            designs += [
                ["1", j, a.label(), "—"]
                for j, a in zip(p.design.joints, p.design.actuators, strict=True)
            ]
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
            "momentary rating (over 100 % the gear is expected to break)"
            if shock
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
            ["#", "payload mass", f.measure]
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
    default="imf",
    help="imf, effective_mass (impact case), backdrive_force (back-drive case), or the robot's "
    "total actuator mass or cost",
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
    default=50,
    show_default=True,
    help="most exact solves (sweep)",
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

    if time_limit is not None and time_limit <= 0:
        raise InputError("<command line>", "--time-limit", f"must be > 0 s, got {time_limit}")
    p = load_project(project)
    inputs = project_inputs(p)
    if out is not None:
        check_target(out, "--out", inputs=inputs, force=force)
    if plot_dir is not None:
        check_target(plot_dir, "--plot", inputs=inputs, force=force, exists_hint="frontier.png")
    f = frontier(
        p,
        measure,
        case=case_name,
        points=points,
        time_limit=time_limit,
        method=method,
        merge=merge,
    )
    data = f.to_dict()
    ideal = None
    if frictionless:
        ideal = frontier(
            frictionless_project(p),
            measure,
            case=case_name,
            points=points,
            time_limit=time_limit,
            method=method,
            merge=merge,
        )
        data["frictionless"] = ideal.to_dict()
    if plot_dir is not None:
        with atomic_folder(plot_dir, "--plot") as tmp:
            write_plot(f, ideal, tmp)
    if out is not None:
        write_text(out, json.dumps(data, indent=2, allow_nan=False) + "\n")
    if as_json:
        emit_json(data)
    else:
        print_frontier(f)
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
        f"({'complete' if f.complete else 'sampled'})",
        steps="pre" if f.sense == "min" else "post",
        numbered=True,
    )
    figures.save(fig, folder, "frontier")
