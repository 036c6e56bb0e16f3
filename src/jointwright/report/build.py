"""Assemble the design report: one self-contained HTML file plus its figures as PNG and SVG."""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from ..assessment import assess
from ..design import arrays_from_designs
from ..errors import InputError
from ..evaluate import Evaluator
from . import (
    case_tables,
    duty_view,
    frontier_map,
    job,
    joints,
    outcome,
    plots,
    sizing_result,
    study_results,
    summary,
)
from .markup import PERCENT_REQUIREMENTS, page
from .sweeps import efficiency_sensitivity
from .wording import unknown_gap

REPORT_FILE = "report.html"
FIGURE_DIR = "figures"


def _version() -> str:
    try:
        return version("jointwright")
    except PackageNotFoundError:  # running from a source tree
        return "source tree"


def build_report(
    project,
    design,
    out_dir,
    *,
    sizing: dict | None = None,
    frontier: dict | None = None,
    duty: list[dict] | None = None,
    study: dict | None = None,
) -> Path:
    """Write the HTML report of one design and its figures; return the HTML file's path.

    Parameters
    ----------
    project : Project
    design : Design
    out_dir : str or Path
        Folder for ``report.html`` and ``figures/*.png|svg`` (created if missing).
    sizing, frontier, duty, study : plain dicts, optional
        JSON forms of a sizing result (runner-ups), a frontier, duty-cycle series and a study
        summary; each adds its section (formats in docs/report.md).

    Returns
    -------
    Path of the HTML file.
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(str(out), "--out", "must be a folder, not a file")
    fig_dir = out / FIGURE_DIR
    fig_dir.mkdir(parents=True, exist_ok=True)
    evaluator = Evaluator(project)
    arrays = arrays_from_designs([design])
    a = assess(project, design, evaluator).to_dict()
    parts = [
        job.job_section(project),
        outcome.outcome_section(a, project),
        outcome.requirements_section(a, project),
        outcome.binding_section(a),
        joints.joints_section(a),
    ]
    if sizing is not None:
        units = {
            f"{c['subject']}: {c['requirement'].replace('_', ' ')}": "%"
            if c["requirement"] in PERCENT_REQUIREMENTS
            else c["unit"]
            for c in a["checks"]
        }
        note = unknown_gap(project, str(sizing.get("objective_kind", "")))
        parts.append(sizing_result.runner_ups_section(sizing, units=units, gap_note=note))
    if frontier is not None:
        if "measure" in frontier:  # written by `jointwright frontier --out`
            frontier = frontier_map.frontier_from_sweep(frontier, a)
        parts.append(frontier_map.frontier_section(frontier, fig_dir))
    sens = efficiency_sensitivity(project, evaluator, arrays)
    parts += [
        plots.polytope_section(evaluator, arrays, a, fig_dir),
        plots.ellipse_section(evaluator, arrays, fig_dir),
        plots.ratio_section(project, evaluator, arrays, fig_dir),
        plots.sensitivity_section(project, evaluator, arrays, fig_dir, sens=sens),
    ]
    region = plots.region_section(project, a, fig_dir)
    if region is not None:
        parts.append(region)
    duties = plots.duty_data(evaluator, arrays, a) + list(duty or [])
    parts += [duty_view.duty_section(d, fig_dir) for d in duties]
    if study is not None:
        parts.append(study_results.study_section(study, fig_dir))
    parts += [case_tables.cases_section(a, project), job.cautions_section(a, project)]
    top = summary.summary_section(
        a,
        fig_dir,
        frontier=frontier,
        sensitivity=summary.payload_sensitivity(sens),
        sizing=sizing,
    )
    text = page(
        title=f"{project.name}: design report",
        subtitle=f"Design “{design.name}” — concept-stage actuator sizing, not a certified design.",
        sections=parts,
        summary=top,
        footer=f"jointwright {_version()}; project {project.file.name}. SI units throughout "
        "(temperatures in °C, costs in the catalog's currency units). Figures are also in "
        "the figures folder as PNG and SVG.",
    )
    path = out / REPORT_FILE
    path.write_text(text, encoding="utf-8")
    return path
