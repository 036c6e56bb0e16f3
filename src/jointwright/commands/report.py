"""``jointwright report PROJECT --design FILE [--out DIR]``: the HTML report of one design."""

from __future__ import annotations

import json
import re
from pathlib import Path

import click

from ..design import load_design
from ..errors import InputError
from ..project import load_project
from ..tomlfile import is_file
from ._format import console, emit_json, table
from ._output import _key, atomic_folder, check_folder_name, check_target, project_inputs


def _json(path: Path | None, option: str):
    if path is None:
        return None
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputError(str(path), option, f"cannot be read: {exc.strerror}") from None
    except UnicodeDecodeError:
        raise InputError(str(path), option, "is not a text (JSON) file") from None
    except json.JSONDecodeError as exc:
        rule = f"is not valid JSON (line {exc.lineno}: {exc.msg})"
        raise InputError(str(path), option, rule) from None


def _right_option(sizing, sizing_file, frontier, frontier_file) -> None:
    """A frontier result given as --sizing, or a sizing result as --frontier: one line saying
    which option takes it, instead of the first missing field."""

    def looks_like_frontier(data) -> bool:
        return isinstance(data, dict) and "measure" in data and "points" in data

    def looks_like_sizing(data) -> bool:
        return isinstance(data, dict) and "status" in data and "objective_kind" in data

    if looks_like_frontier(sizing) and not looks_like_sizing(sizing):
        raise InputError(
            str(sizing_file),
            "--sizing",
            "is a frontier result (jointwright frontier --out): give it with --frontier",
        )
    if looks_like_sizing(frontier) and not looks_like_frontier(frontier):
        raise InputError(
            str(frontier_file),
            "--frontier",
            "is a sizing result (jointwright size --json): give it with --sizing",
        )


def _same_design(design, design_file, assessment: dict, sizing_file) -> None:
    """The sizing result's runner-ups and proof are about the design it chose: refuse a report
    of another design with it, naming the first joint that differs."""
    for k, j in enumerate(assessment.get("joints") or []):
        if not isinstance(j, dict) or not isinstance(j.get("actuator"), str):
            continue
        name = str(j.get("joint"))
        if name in design.joints and design.actuator(name).label() != j["actuator"]:
            raise InputError(
                str(sizing_file),
                f"assessment.joints[{k}].actuator",
                f"the sizing chose {j['actuator']} at {name}, the design "
                f"{design_file} has {design.actuator(name).label()}: give --sizing the result "
                "that chose this design (or --design the design it chose)",
            )


def _same_project(
    p, design, design_file, sizing, sizing_file, frontier, frontier_file, study_store
) -> None:
    """The results given with ``--sizing``, ``--frontier`` and ``--study`` belong to project
    ``p``: its name (sizing result, study) and its actuated joints and cases (frontier), and the
    sizing result chose ``design``; or one message naming the file, the field and what
    differs."""
    joints = list(p.robot.actuated)

    def other(file, field, what: str) -> InputError:
        return InputError(
            str(file),
            field,
            f"{what}; it belongs to another project (report of {p.name!r}, {p.file.name})",
        )

    if isinstance(sizing, dict) and isinstance(sizing.get("assessment"), dict):
        a = sizing["assessment"]
        # a project without [project] name is named after its file: a copy under another
        # name is the same project, so only an explicit name is compared (the joints always)
        if p.name != p.file.stem and a.get("project") not in (None, p.name):
            raise other(sizing_file, "assessment.project", f"names project {a['project']!r}")
        sized = [str(j.get("joint")) for j in a.get("joints", []) if isinstance(j, dict)]
        if sized and sized != joints:
            raise other(sizing_file, "assessment.joints", f"sizes joints {', '.join(sized)}")
        _same_design(design, design_file, a, sizing_file)
    if isinstance(frontier, dict):
        case = frontier.get("case")
        if case is not None and case not in {c.name for c in p.cases}:
            raise other(frontier_file, "case", f"trades a measure of case {case!r}")
        for k, point in enumerate(frontier.get("points") or []):
            named = list((point or {}).get("actuators") or {}) if isinstance(point, dict) else []
            if named and named != joints:
                raise other(frontier_file, f"points[{k}].actuators", f"has joints {named}")
    if study_store is not None:
        from ..study.reading import read_study

        base = read_study(study_store).base_project
        name = (base.get("project") or {}).get("name") if isinstance(base, dict) else None
        if name is not None and name != p.name:
            raise other(study_store, "base project", f"studies project {name!r}")


@click.command("report")
@click.argument("project", type=click.Path(path_type=Path))
@click.option(
    "--design",
    "design_file",
    required=True,
    type=click.Path(path_type=Path),
    help="design file (TOML) naming motor and stages per joint",
)
@click.option(
    "--out",
    "out_dir",
    type=click.Path(path_type=Path),
    default=None,
    help="folder for report.html and figures/ (default: report/ beside the project file)",
)
@click.option(
    "--sizing",
    "sizing_file",
    type=click.Path(path_type=Path),
    default=None,
    help="sizing result JSON: adds runner-ups and why they lost",
)
@click.option(
    "--frontier",
    "frontier_file",
    type=click.Path(path_type=Path),
    default=None,
    help="frontier JSON: adds the frontier with the chosen design marked",
)
@click.option(
    "--study",
    "study_store",
    type=click.Path(path_type=Path),
    default=None,
    help="study store (SQLite): adds what the study found: tables with units and plots",
)
@click.option("--json", "as_json", is_flag=True, help="print the written paths as JSON")
@click.option("--force", is_flag=True, help="replace an existing report.html in the --out folder")
def command(
    project: Path,
    design_file: Path,
    out_dir: Path | None,
    sizing_file: Path | None,
    frontier_file: Path | None,
    study_store: Path | None,
    as_json: bool,
    force: bool,
):
    """Write the HTML report of the design in DESIGN for PROJECT (figures embedded)."""
    from ..report import build_report

    p = load_project(project)
    d = load_design(design_file, p)
    out = out_dir if out_dir is not None else p.base_dir / "report"
    given = (design_file, sizing_file, frontier_file, study_store)
    inputs = project_inputs(p) | {Path(f) for f in given if f}
    if out.exists() and not out.is_dir() and _key(out) not in {_key(f) for f in inputs}:
        raise InputError(str(out), "--out", "must be a folder, not a file")
    check_folder_name(out, "--out", "report.html and figures/", (".html", ".htm", ".pdf"))
    option = "--out" if out_dir is not None else "--out (default: report/ beside the project)"
    check_target(out, option, inputs=inputs, force=force, exists_hint="report.html")
    study = None
    if study_store is not None:
        from ..report.study import study_data

        if not is_file(study_store, field="--study"):
            raise InputError(str(study_store), "--study", "no such study store (SQLite file)")
        study = study_data(study_store)
    sizing, frontier = _json(sizing_file, "--sizing"), _json(frontier_file, "--frontier")
    _right_option(sizing, sizing_file, frontier, frontier_file)
    _same_project(p, d, design_file, sizing, sizing_file, frontier, frontier_file, study_store)
    # the report's readers name a plain dict "<sizing>" / "<frontier>": name the file given
    given_files = {"<sizing>": sizing_file, "<frontier>": frontier_file}
    try:
        with atomic_folder(out, "--out") as tmp:
            built = build_report(p, d, tmp, sizing=sizing, frontier=frontier, study=study)
    except InputError as exc:
        source = given_files.get(exc.file)
        if source is None:
            raise
        raise InputError(str(source), exc.field, exc.rule) from None
    path = out / built.relative_to(tmp)
    # the figures this report links (a reused folder may hold older ones)
    names = sorted(set(re.findall(r"figures/([^/\s)]+)\.png", path.read_text(encoding="utf-8"))))
    folder = path.parent / "figures"
    figures = [str(folder / f"{n}{ext}") for n in names for ext in (".png", ".svg")]
    if as_json:
        emit_json({"report": str(path), "figures": figures})
        return
    rows = [["report", str(path)], ["figures", f"{len(names)} (PNG and SVG) in {folder}"]]
    rows += [["", n] for n in names]
    console().print(
        table(
            "Report written",
            ["written", "where"],
            rows,
            caption="open report.html in any browser; it needs no network",
        )
    )
