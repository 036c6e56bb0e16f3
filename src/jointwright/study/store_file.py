"""A study store as a file, outside the writer's connection (:mod:`.store`): read-only
queries, the study row with its format check, the one-line error for a damaged file, and the
backup kept before a restart (docs/study-format.md).
"""

from __future__ import annotations

import datetime as _dt
import os
import sqlite3
from pathlib import Path

from ..errors import InputError
from ..tomlfile import is_file

#: version of the store layout the writer (:mod:`.store`) stamps; readers refuse newer versions
STORE_FORMAT = 1


def damaged(path: Path, exc: BaseException) -> InputError:
    """The one-line error for a store SQLite cannot read (a damaged page, a truncated file)."""
    return InputError(
        str(path), "(file)",
        f"the store is damaged or unreadable ({exc}); its finished cases may still be read with "
        "the sqlite3 tool's .recover command. Start a new store (restart keeps this one as a "
        "backup) or give another store file",
    )  # fmt: skip


def _backup_name(path: Path) -> Path:
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y%m%dT%H%M%SZ")
    target = path.with_name(f"{path.name}.{stamp}.bak")
    k = 1
    while target.exists():
        target, k = path.with_name(f"{path.name}.{stamp}-{k}.bak"), k + 1
    return target


def move_aside(path: Path) -> Path:
    """Rename a damaged store (and its -wal, -shm files) to ``<name>.<UTC time>.bak[-wal|-shm]``."""
    target = _backup_name(path)
    for suffix in ("-wal", "-shm", ""):
        extra = Path(f"{path}{suffix}")
        if extra.exists():
            os.replace(extra, Path(f"{target}{suffix}"))
    return target


def backup_store(path: str | Path) -> Path:
    """Copy the store (with its WAL content) to ``<name>.<UTC time>.bak`` and delete it."""
    path = Path(path)
    target = _backup_name(path)
    src = sqlite3.connect(path)
    dst = sqlite3.connect(target)
    try:
        src.backup(dst)
    finally:
        dst.close()
        src.close()
    for suffix in ("", "-wal", "-shm"):
        extra = Path(f"{path}{suffix}")
        if extra.exists():
            os.remove(extra)
    return target


def read_only(path: str | Path) -> sqlite3.Connection:
    path = Path(path)
    if not is_file(path):
        raise InputError(str(path), "(file)", "study store not found")
    return sqlite3.connect(path.resolve().as_uri() + "?mode=ro", uri=True)


def query(path: str | Path, sql: str) -> list[dict]:
    """Rows of a read-only query as dicts (column name -> value)."""
    conn = read_only(path)
    try:
        cur = conn.execute(sql)
        names = [d[0] for d in cur.description]
        return [dict(zip(names, r, strict=True)) for r in cur.fetchall()]
    except sqlite3.DatabaseError as exc:
        if any(w in str(exc) for w in ("malformed", "corrupt", "disk I/O error")):
            raise damaged(Path(path), exc) from None
        raise
    finally:
        conn.close()


def read_study_row(path: Path) -> dict:
    try:
        rows = query(path, "SELECT * FROM study")
    except sqlite3.OperationalError as exc:
        if "no such table" not in str(exc):
            raise damaged(path, exc) from None
        raise InputError(
            str(path), "(file)", "is not a jointwright study store (no readable study table)"
        ) from None
    except sqlite3.Error:
        raise InputError(
            str(path), "(file)", "is not a jointwright study store (no readable study table)"
        ) from None
    if len(rows) != 1:
        raise InputError(str(path), "study", f"must hold exactly one study row, found {len(rows)}")
    row = rows[0]
    if not isinstance(row.get("format_version"), int) or row["format_version"] > STORE_FORMAT:
        raise InputError(
            str(path), "study.format_version",
            f"store format {row.get('format_version')!r} is newer than this version reads "
            f"({STORE_FORMAT})",
        )  # fmt: skip
    return row
