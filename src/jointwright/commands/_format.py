"""Shared terminal output: rich tables, numbers with units, JSON."""

from __future__ import annotations

import json
import math
import os
import sys

from rich.console import Console
from rich.table import Table

from ..units import format_hours, format_number

_console = None


#: table width when the output is not a terminal and COLUMNS is not set
DEFAULT_WIDTH = 100


def terminal_width() -> int:
    """Columns to fit: ``COLUMNS`` when set, the terminal's width, else :data:`DEFAULT_WIDTH`."""
    env = os.environ.get("COLUMNS", "")
    if env.strip().isdigit() and int(env) >= 40:
        return int(env)
    if sys.stdout.isatty():
        return Console().width
    return DEFAULT_WIDTH


def console() -> Console:
    global _console
    if _console is None:
        _console = Console(highlight=False, soft_wrap=False, width=terminal_width())
    return _console


def num(value, unit: str = "", digits: int = 4) -> str:
    """A number with its unit; infinities written out (a self-locking capacity is ∞); hours
    (gear lives) readable, "32,400 h" (units.format_hours)."""
    if unit == "h":
        return format_hours(value)
    text = format_number(value, digits)
    return text if text == "—" else f"{text} {unit}".strip()


#: unit of each requirement key as shown; rating uses are fractions, shown in % (scale 100)
REQUIREMENT_UNITS = {
    "payload_min": ("N", 1.0),
    "imf_min": ("", 1.0),
    "directional_imf_min": ("", 1.0),
    "effective_mass_max": ("kg", 1.0),
    "backdrive_force_max": ("N", 1.0),
    "speed_min": ("m/s", 1.0),
    "temperature_margin_min": ("K", 1.0),
    "rating_use_max": ("%", 100.0),
    "mass_max": ("kg", 1.0),
    "total_mass_max": ("kg", 1.0),
    "reflected_inertia_max": ("kg·m²", 1.0),
    "diameter_max": ("m", 1.0),
    "length_max": ("m", 1.0),
    "ratio_min": ("", 1.0),
    "ratio_max": ("", 1.0),
    "total_cost_max": ("", 1.0),
    "life_min": ("h", 1.0 / 3600.0),
    "shock_use_max": ("%", 100.0),
    "gear_peak_use_max": ("%", 100.0),
}


def requirement_num(label: str, value) -> str:
    """A requirement's value with its unit, from a label "subject: key words" (e.g.
    "trot: rating use max" -> "%", "jump-push: payload min" -> "N")."""
    key = label.rsplit(": ", 1)[-1].strip().replace(" ", "_")
    unit, scale = REQUIREMENT_UNITS.get(key, ("", 1.0))
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        value = scale * value
    return num(value, unit)


def pct(margin: float) -> str:
    if math.isinf(margin):
        return "+∞" if margin > 0 else "-∞"
    return f"{100 * margin:+.1f} %"


#: cells up to this long (numbers with units, short names) are never broken across lines
UNBROKEN = 12
#: one-word cells up to this long (case and joint names: "unpowered-push", "reach@12") are
#: never folded mid-word either
NAME_MAX = 24


def table(
    title: str, columns: list[str], rows: list[list[str]], *, caption: str | None = None
) -> Table:
    """A rich table that fits the console: short cells (numbers with units) stay whole, long
    text (design strings, notes) wraps inside its own cell at spaces, folding only long words;
    a column of one-word names (case, joint) stays whole too while the table still fits."""
    from rich.text import Text

    plain = [[Text.from_markup(str(x)).plain for x in r] for r in rows]
    spec = []  # per column: (short, a name column, width it needs when whole, when wrapped)
    for k, c in enumerate(columns):
        cells = [r[k] for r in plain if k < len(r)]
        head = min(UNBROKEN, max([len(w) for w in c.split()] + [1]))
        short = all(len(x) <= UNBROKEN for x in cells)
        name = not short and all(len(x.strip()) <= NAME_MAX and " " not in x.strip() for x in cells)
        whole = max([len(x) for x in cells] + [len(c) if short or name else head])
        words = max([len(w) for x in cells for w in x.split()] + [head])
        spec.append((short, name, whole, min(words, UNBROKEN) if not short else whole))
    # names stay whole only when every column that does not wrap still fits the console
    needed = sum((w if s or n else least) + 3 for s, n, w, least in spec) + 1
    keep_names = needed <= console().width
    # short cells stay whole unless even those alone overflow the console: then they fold too,
    # rather than the table being cut off at its right edge
    keep_short = sum((w if s else least) + 3 for s, _n, w, least in spec) + 1 <= console().width
    t = Table(title=title, title_justify="left", caption=caption, caption_justify="left")
    for c, (short, name, _whole, _least) in zip(columns, spec, strict=True):
        t.add_column(
            c,
            overflow="fold",
            no_wrap=(short and keep_short) or (name and keep_names),
            min_width=min(UNBROKEN, max([len(w) for w in c.split()] + [1])),
        )
    for r in rows:
        t.add_row(*r)
    return t


def emit_json(data) -> None:
    json.dump(data, sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")
