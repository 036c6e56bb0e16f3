"""``jointwright new DIR``: write a bundled example project."""

from __future__ import annotations

import shutil
from importlib import resources
from pathlib import Path

import click

from ..errors import InputError
from ..project import EXAMPLES


@click.command("new")
@click.argument("directory", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--example",
    type=click.Choice(EXAMPLES),
    default="leg",
    show_default=True,
    help=(
        "leg: three-joint quadruped leg on a floating trunk; arm: six-joint arm on a mobile base; "
        "quadruped: four legs, robot-level payload on several feet."
    ),
)
def command(directory: Path, example: str):
    """Write the bundled example project EXAMPLE into DIRECTORY (which must be new or empty)."""
    if directory.exists() and any(directory.iterdir()):
        raise InputError(str(directory), "(folder)", "must be new or empty; nothing was written")
    source = resources.files("jointwright.examples") / example
    directory.mkdir(parents=True, exist_ok=True)
    written = []
    for item in sorted(source.iterdir(), key=lambda p: p.name):
        if item.is_file() and not item.name.startswith((".", "__")):
            with resources.as_file(item) as path:
                shutil.copy(path, directory / item.name)
            written.append(item.name)
    click.echo(f"wrote the '{example}' example to {directory}/: {', '.join(written)}")
    click.echo(f"next: jointwright check {directory}/project.toml")
    click.echo(f"      jointwright size {directory}/project.toml")
