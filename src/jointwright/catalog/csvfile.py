"""Catalog CSV tables (motors, stage frames): a header of ``name [unit]`` cells, a record a row.

Each row is read like a TOML table; errors name the file, the row and the column.
"""

from __future__ import annotations

import csv
from pathlib import Path

from ..errors import InputError, unknown_name
from ..tomlfile import Table, is_file
from ..units import registry

#: Motor field -> (dimension for units.quantity, sign rule)


# --- CSV -----------------------------------------------------------------------------------


class CsvRow(Table):
    """One CSV row as a table; fields read ``row 7, column mass``."""

    def field(self, key: str) -> str:
        return f"{self.path}, column {key}"


def read_csv(path: Path, *, allowed: tuple[str, ...]) -> list[CsvRow]:
    """Rows of a CSV table as :class:`CsvRow` tables (empty cells out, header units applied)."""
    return csv_rows(str(path), *csv_lines(path), allowed)


def csv_lines(path: Path) -> tuple[int, list[str], list[tuple[int, list[str]]]]:
    """(header line number, header cells, [(line number, cells)]) of a CSV file.

    Blank lines and lines whose first cell starts with ``#`` (comments) are skipped.
    """
    file = str(path)
    if not is_file(path):
        raise InputError(file, "(file)", "file not found")
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            reader = csv.reader(fh)
            lines = [
                (reader.line_num, cells)
                for cells in reader
                if any(c.strip() for c in cells) and not cells[0].lstrip().startswith("#")
            ]
    except UnicodeDecodeError:
        raise InputError(file, "(encoding)", "must be UTF-8 text") from None
    except OSError as exc:
        raise InputError(file, "(file)", f"cannot be read ({exc.strerror or exc})") from None
    except csv.Error as exc:
        raise InputError(file, "(syntax)", f"malformed CSV: {exc}") from None
    if not lines:
        raise InputError(file, "row 1", "the file has no header row")
    return lines[0][0], lines[0][1], lines[1:]


def csv_rows(file: str, header_line: int, header: list[str], lines, allowed) -> list[CsvRow]:
    columns = [_column(cell, i, header_line, file, allowed) for i, cell in enumerate(header)]
    names = [name for name, _ in columns]
    for i, name in enumerate(names):
        if name in names[:i]:
            raise InputError(
                file, f"row {header_line}, column {name}", "appears twice in the header"
            )
    rows = []
    for line, cells in lines:
        if len(cells) != len(columns):
            raise InputError(
                file,
                f"row {line}",
                f"has {len(cells)} cells, the header has "
                f"{len(columns)} (check for a stray comma or a missing cell)",
            )
        data = {}
        for (name, unit), cell in zip(columns, cells, strict=True):
            cell = cell.strip()
            if cell:
                data[name] = f"{cell} {unit}" if unit and _is_number(cell) else cell
        rows.append(CsvRow(data, file, f"row {line}"))
    return rows


def split_header(cell: str) -> tuple[str, str]:
    """``"peak_torque [N*m]"`` -> ``("peak_torque", "N*m")``; no brackets -> empty unit."""
    text = cell.strip()
    if text.endswith("]") and "[" in text:
        name, unit = text[:-1].split("[", 1)
        return name.strip(), unit.strip()
    return text, ""


def _column(cell: str, i: int, line: int, file: str, allowed) -> tuple[str, str]:
    """Split a header cell ``name [unit]`` and check both parts."""
    name, unit = split_header(cell)
    where = f"row {line}, column {name or i + 1}"
    if name not in allowed:
        raise unknown_name(file, where, name, allowed, "column")
    if unit:
        if name in ("name", "stage"):
            raise InputError(file, where, "a name column takes no unit")
        try:
            registry().parse_units(unit)
        except Exception:
            raise InputError(file, where, f"unknown unit {unit!r}") from None
    return name, unit


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
