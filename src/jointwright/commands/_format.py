"""Shared terminal output: rich tables, numbers with units, JSON."""

from __future__ import annotations

import json
import math
import sys

from rich.console import Console
from rich.table import Table

_console = None


def console() -> Console:
    global _console
    if _console is None:
        _console = Console(highlight=False, soft_wrap=False, width=max(Console().width, 150))
    return _console


def num(value, unit: str = "", digits: int = 4) -> str:
    """A number with its unit; infinities written out (a self-locking capacity is ∞)."""
    if value is None:
        return "—"
    if isinstance(value, str):
        return value
    v = float(value)
    if math.isnan(v):
        return "—"
    if math.isinf(v):
        text = "∞" if v > 0 else "-∞"
    else:
        text = f"{v:.{digits}g}"
    return f"{text} {unit}".strip()


def pct(margin: float) -> str:
    if math.isinf(margin):
        return "+∞" if margin > 0 else "-∞"
    return f"{100 * margin:+.1f} %"


def table(title: str, columns: list[str], rows: list[list[str]], *, caption: str | None = None) -> Table:
    t = Table(title=title, title_justify="left", caption=caption, caption_justify="left")
    for c in columns:
        t.add_column(c, overflow="fold")
    for r in rows:
        t.add_row(*r)
    return t


def emit_json(data) -> None:
    json.dump(data, sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")
