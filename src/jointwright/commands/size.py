"""``jointwright size PROJECT``: the proven-optimal motor, stages and ratio for every joint."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from rich.status import Status

import math
import time
from pathlib import Path

import click

from ..design import design_to_toml
from ..errors import InputError
from ..objective import check_gap
from ..project import load_project
from ..report.markup import as_float
from ..report.wording import (
    bound_mark,
    carried_text,
    gap_text,
    objective_change,
    unknown_gap,
    wrench_text,
)
from ..solve.result import OPTIMALITY_GAP
from ._format import console, emit_json, num, pct, requirement_num, table
from ._output import check_target, project_inputs, write_text

UNITS = {"payload": "kg", "mass": "kg", "imf": "", "cost": "", "margin": ""}

#: how the signed objective change of a runner-up reads, per objective
CHANGE_HINT = {
    "payload": "negative = less payload carried",
    "mass": "positive = heavier",
    "cost": "positive = costlier",
    "imf": "negative = a lower worst IMF",
    "margin": "negative = a smaller margin",
}


class Progress:
    """A rich status line on stderr, shown once a run has taken a second: the phase (building
    options, filtering, tightening, first designs, searching, explaining) and the search's
    nodes and best objective."""

    def __init__(self, enabled: bool):
        self.enabled = enabled
        self.start = time.perf_counter()
        self.status: Status | None = None
        self.stage = "preparing"

    def _show(self, text: str) -> None:
        if not self.enabled or time.perf_counter() - self.start < 1.0:
            return
        text = f"{text} ({time.perf_counter() - self.start:.0f} s)"
        if self.status is None:
            from rich.console import Console

            self.status = Console(stderr=True).status(text)
            self.status.start()
        else:
            self.status.update(text)

    def phase(self, text: str) -> None:
        self.stage = text
        self._show(text)

    def __call__(self, nodes: int, best) -> None:
        self._show(f"{self.stage}: {nodes} nodes, best {'—' if best is None else f'{best:.6g}'}")

    def stop(self) -> None:
        if self.status is not None:
            self.status.stop()


def payload_rows(project, assessment) -> list[list[str]]:
    """Per payload/stance case: the force reached (N) and the payload mass it carries (kg)."""
    rows = []
    for c in assessment.cases:
        if c.kind not in ("payload", "stance"):
            continue
        case = project.case(c.name)
        share = case.payload_share
        carried = c.metrics.get("payload_carried")
        rows.append(
            [
                c.name,
                num(c.metrics.get("payload"), "N"),
                num(case.fixed_load, "N"),
                f"{share:g}",
                "not limiting (share 0)"
                if share == 0
                else carried_text(carried, lambda v: num(v, "kg")),
                wrench_text(case, minus="-") or "at the frame, no moment",
            ]
        )
    if not any(project.case(r[0]).has_wrench for r in rows):
        rows = [r[:-1] for r in rows]  # every force acts at its frame: no column for it
    return rows


def result_json(r, project) -> dict:
    """The sizing result as JSON (SizingResult.to_dict) with ``gap_unknown_reason``: why no
    finite bound exists when ``bound`` or ``gap`` is "inf" (a search stopped early), else null
    (docs/report.md, Runner-ups)."""
    d = r.to_dict()
    d["gap_unknown_reason"] = gap_reason(r, project)
    return d


def gap_reason(r, project) -> str | None:
    """Why the result has no finite bound and gap, in words; None when both are finite."""
    if (math.isfinite(r.bound) and math.isfinite(r.gap)) or r.status == "infeasible":
        return None  # an infeasible project has no gap: the diagnosis says why
    if r.objective is None or not math.isfinite(r.objective):  # no design found
        return (
            "gap not known: the search stopped before it found a design or a bound on the "
            "objective (a longer --time-limit, or none, lets it finish)"
        )
    return unknown_gap(project, r.objective_kind)


def _carried_caption(project) -> str:
    """The per-case payload table's caption: which cases the objective is the smallest over."""
    from ..problem import objective_case_names, payload_objective_cases

    if objective_case_names(project) is None:
        return "Payload mass carried per case (the objective is the smallest)"
    names = [c.name for c in payload_objective_cases(project)]
    over = names[0] if len(names) == 1 else "the smallest of " + ", ".join(names)
    return (
        f"Payload mass carried per case (the objective is {over}, as objective.cases names; "
        "the others are only checked)"
    )


def print_result(r, project=None) -> None:
    from .assess import print_assessment

    con = console()
    unit = UNITS[r.objective_kind]
    con.print(f"[bold]size[/bold] ({r.backend}, objective {r.objective_kind}): {r.message}")
    # an infinite bound (no bound known when the search stopped) leaves the gap unknown: say why
    reason = gap_reason(r, project)
    known = reason is None and r.status != "infeasible"
    bound = f"bound {num(r.bound, unit)}; gap {gap_text(r.gap)}" if known else "bound —; gap —"
    con.print(
        f"status {r.status}; objective {num(r.objective, unit)}; {bound}; "
        f"{r.seconds:.2f} s; {r.native_status}"
    )
    if reason is not None:
        con.print(reason)
    if r.options:
        con.print(
            "options per joint after its own filters: "
            + ", ".join(f"{j} {k}" for j, k in r.options.items())
        )
    if r.objective_kind == "payload" and r.assessment is not None and project is not None:
        rows = payload_rows(project, r.assessment)
        con.print(
            table(
                _carried_caption(project),
                [
                    "case",
                    "force reached",
                    "fixed load",
                    "share of payload weight",
                    "payload carried",
                    "force acts",
                ][: len(rows[0]) if rows else 5],
                rows,
            )
        )
    if r.assessment is not None:
        print_assessment(r.assessment, project)
    binding = list(r.binding)
    if binding:
        con.print(
            "[bold]tightest margins[/bold] (the requirements closest to deciding the design): "
            + "; ".join(binding)
        )
    if r.alternatives:
        rows = [
            [
                a.joint,
                a.change.replace("other ", ""),
                a.actuator,
                a.ruled_out_by
                or (
                    "—"
                    if a.loss is None
                    else f"{num(a.objective, unit)} "
                    f"({objective_change(r.objective_kind, a.loss, unit, minus='-')})"
                ),
                "same" if abs(a.mass_change) < 5e-4 else f"{a.mass_change:+.3f} kg",
            ]
            for a in r.alternatives
        ]
        caption = (
            "vs chosen: the runner-up's objective minus the chosen design's (for "
            f"{r.objective_kind}: {CHANGE_HINT.get(r.objective_kind, 'signed')}). "
        )
        if any(row[3].endswith("(tie)") for row in rows):
            caption += (
                "tie: the joint does not limit the objective and the choice was made by the "
                "tie-break (least mass, then least back-driven reflected inertia; a tie with a "
                "negative Δ mass: the MILP hand-over's design, whose ties are broken only with "
                "--gap 0). "
            )
        if any(_better(a.loss) for a in r.alternatives):
            caption += (
                "A runner-up better than the chosen design is one within the optimality gap: "
                "--gap 0 searches for it. "
            )
        caption += "Δ mass: the runner-up's total actuator mass minus the chosen one's."
        con.print(
            table(
                "Runner-ups per joint (rest of the design kept)",
                ["joint", "other", "actuator", "objective (vs chosen) or ruled out by", "Δ mass"],
                rows,
                caption=caption,
            )
        )
        if r.objective_kind == "payload" and any(row[3].endswith("(tie)") for row in rows):
            con.print(
                "note: designs that tie on payload differ in mass and back-drivability; "
                "`jointwright frontier` maps how much payload each step of back-drivability "
                "costs, and which designs keep the payload with a better impact mitigation "
                "factor or effective mass"
            )
    if r.diagnosis:
        rows = [
            [
                d.requirement,
                requirement_num(d.requirement, d.limit),
                bound_mark(d.requirement, d.best_proven)
                + requirement_num(d.requirement, d.best_achievable),
                "—"
                if d.shortfall != d.shortfall
                else ("" if d.best_proven else "≤ ") + pct(-d.shortfall),
                ("still infeasible" if d.relaxed_proven else "not solved in its time")
                if d.relaxed_objective is None
                else num(d.relaxed_objective, unit)
                + ("" if d.relaxed_proven else " (bound, time out)"),
            ]
            for d in r.diagnosis
        ]
        con.print(
            table(
                "Diagnosis: each requirement alone, and the optimum without it",
                ["requirement", "limit", "best alone", "margin alone", "optimum without it"],
                rows,
                caption=(
                    "margin alone < 0: no design meets it even ignoring every other requirement; "
                    "≤ or ≥: a bound, not a value some design reaches (the search for it alone "
                    "ran out of its time share), so the margin alone is at most the one shown "
                    "and the requirement may be out of reach even alone; "
                    "— : its best alone is not computed (no closed form: gear shock use, duty "
                    "rating use, directional IMF, gear life, a speed the no-load bound cannot "
                    "rule out, or no time left): the last column still says whether dropping it "
                    "makes the project feasible; a speed shown is that no-load bound, an upper "
                    "bound that falls short of the limit, not a speed a design reaches"
                ),
            )
        )


def _better(loss) -> bool:
    """A runner-up's ``loss`` (≥ 0: worse, solve.result.Alternative) says it is better, beyond
    a tie (wording.objective_change)."""
    value = as_float(loss)
    return value < 0 and objective_change("payload", value) != "tie"


@click.command("size")
@click.argument("project", type=click.Path(path_type=Path))
@click.option(
    "--objective",
    type=click.Choice(["payload", "margin", "mass", "cost", "imf"]),
    default=None,
    help="default: the project's [objective] maximize, else payload",
)
@click.option("--backend", type=click.Choice(["search", "pyomo"]), default="search")
@click.option(
    "--time-limit",
    type=float,
    default=None,
    help="seconds for the whole run (explanation included); then best design with bound and gap",
)
@click.option(
    "--gap",
    type=float,
    default=OPTIMALITY_GAP,
    show_default=True,
    help="relative optimality gap at which the run ends (either back-end), 0 ≤ gap < 1 "
    "(0: the exact optimum)",
)
@click.option(
    "--no-explain", is_flag=True, help="skip the runner-ups and the infeasibility diagnosis"
)
@click.option(
    "--out", type=click.Path(path_type=Path), default=None, help="write the design file here"
)
@click.option(
    "--force", is_flag=True, help="replace an existing --out file (inputs are never replaced)"
)
@click.option("--json", "as_json", is_flag=True, help="machine-readable output")
def command(project: Path, objective, backend, time_limit, gap, no_explain, out, force, as_json):
    """Choose motor, stage stack and ratio for every joint of PROJECT (proven optimum)."""
    from ..sizing import size

    if time_limit is not None and time_limit <= 0:
        raise InputError("<command line>", "--time-limit", f"must be > 0 s, got {time_limit}")
    check_gap(gap, "<command line>", "--gap")
    p = load_project(project)
    if out is not None:
        check_target(out, "--out", inputs=project_inputs(p), force=force)
    progress = Progress(not as_json)
    try:
        r = size(
            p,
            objective=objective,
            backend=backend,
            time_limit=time_limit,
            progress=progress,
            explain=not no_explain,
            gap=gap,
        )
    finally:
        progress.stop()
    if out is not None and r.design is not None:
        write_text(out, design_to_toml(r.design) + "\n")
    unloaded = r.unloaded_joints
    if as_json:
        emit_json(result_json(r, p))
    else:
        print_result(r, p)
        for j in unloaded:
            console().print(
                f"[yellow]note:[/yellow] no case loads joint {j}: its choice is the smallest "
                "actuator that meets its own limits and the speed, impact and back-drive "
                "cases, not one sized for a load"
            )
        if out is not None:
            console().print(
                f"design written to {out}" if r.design is not None else "no design to write"
            )
    if r.status in ("infeasible", "error") or r.design is None:
        # no design that meets every requirement: the diagnosis above says why; never exit 0
        raise SystemExit(1)
