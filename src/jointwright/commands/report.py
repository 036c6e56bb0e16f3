"""``jointwright report PROJECT --design FILE [--out DIR]``: the HTML report of one design."""

from __future__ import annotations

import json
from pathlib import Path

import click

from ..design import load_design
from ..errors import InputError
from ..project import load_project


def _json(path: Path | None, option: str):
    if path is None:
        return None
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputError(str(path), option, f"cannot be read: {exc.strerror}") from None
    except json.JSONDecodeError as exc:
        rule = f"is not valid JSON (line {exc.lineno}: {exc.msg})"
        raise InputError(str(path), option, rule) from None


@click.command("report")
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--design", "design_file", required=True, type=click.Path(path_type=Path),
              help="design file (TOML) naming motor and stages per joint")
@click.option("--out", "out_dir", type=click.Path(path_type=Path), default=None,
              help="folder for report.html and figures/ (default: report/ beside the project file)")
@click.option("--sizing", "sizing_file", type=click.Path(path_type=Path), default=None,
              help="sizing result JSON: adds runner-ups and why they lost")
@click.option("--frontier", "frontier_file", type=click.Path(path_type=Path), default=None,
              help="frontier JSON: adds the frontier with the chosen design marked")
@click.option("--json", "as_json", is_flag=True, help="print the written paths as JSON")
def command(project: Path, design_file: Path, out_dir: Path | None, sizing_file: Path | None,
            frontier_file: Path | None, as_json: bool):
    """Write the HTML report of the design in DESIGN for PROJECT (figures embedded)."""
    from ..report import build_report

    p = load_project(project)
    d = load_design(design_file, p)
    out = out_dir if out_dir is not None else p.base_dir / "report"
    path = build_report(p, d, out, sizing=_json(sizing_file, "--sizing"),
                        frontier=_json(frontier_file, "--frontier"))
    figures = sorted(str(f) for f in (path.parent / "figures").iterdir())
    if as_json:
        click.echo(json.dumps({"report": str(path), "figures": figures}, indent=2))
    else:
        click.echo(f"wrote {path}")
        click.echo(f"      {len(figures)} figure files in {path.parent / 'figures'}")
