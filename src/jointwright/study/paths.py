"""Dotted paths into a project's tables (``requirements.total_mass_max``, ``case[2].pose.knee``).

Parse, format, read and set them, as a study varies a base project.
"""

from __future__ import annotations

import copy
import re
from typing import Any

from ..errors import InputError

#: version of the study file format this module reads


# ---------------------------------------------------------------------------------- paths

_BARE = re.compile(r"[A-Za-z0-9_-]+")
_INDEX = re.compile(r"\[(\d+)\]")


def parse_path(text: Any, *, file: str = "<api>", field: str = "path") -> tuple[str | int, ...]:
    """Split a dotted path into keys (str) and list indices (int).

    Grammar: ``segment ("." segment)*``; a segment is a bare key ``[A-Za-z0-9_-]+`` or a
    double-quoted key, followed by any number of ``[index]``. Example:
    ``robot.links."upper.arm".inertia[2]`` -> ``("robot", "links", "upper.arm", "inertia", 2)``.
    """
    if not isinstance(text, str) or not text:
        raise InputError(
            file, field, f"must be a dotted path such as robot.links.thigh.length, got {text!r}"
        )
    steps: list[str | int] = []
    pos, expect_key = 0, True
    while pos < len(text):
        if expect_key:
            if text[pos] == '"':
                end = text.find('"', pos + 1)
                if end < 0:
                    raise InputError(file, field, f"unclosed quote in path {text!r}")
                steps.append(text[pos + 1 : end])
                pos = end + 1
            else:
                m = _BARE.match(text, pos)
                if not m:
                    raise InputError(
                        file, field, f"bad key at character {pos + 1} of path {text!r}"
                    )
                steps.append(m.group())
                pos = m.end()
            expect_key = False
        elif (m := _INDEX.match(text, pos)) is not None:
            steps.append(int(m.group(1)))
            pos = m.end()
        elif text[pos] == ".":
            pos, expect_key = pos + 1, True
        else:
            raise InputError(file, field, f"bad character {text[pos]!r} in path {text!r}")
    if expect_key:
        raise InputError(file, field, f"path {text!r} ends with a dot")
    return tuple(steps)


def format_path(steps: tuple[str | int, ...]) -> str:
    """Inverse of :func:`parse_path` (quotes keys that are not bare)."""
    out = ""
    for s in steps:
        if isinstance(s, int):
            out += f"[{s}]"
        else:
            key = s if _BARE.fullmatch(s) else f'"{s}"'
            out += f".{key}" if out else key
    return out


def _walk(project: dict, steps: tuple, file: str, field: str, text: str) -> tuple[Any, Any]:
    """Return (container, last step) for ``steps``; every container on the way must exist."""
    node: Any = project
    for depth, step in enumerate(steps):
        where = format_path(steps[:depth]) or "the top level"
        if isinstance(step, int):
            if not isinstance(node, list):
                raise InputError(
                    file, field, f"{text!r}: {where} is not a list in the base project"
                )
            if step >= len(node):
                raise InputError(
                    file, field, f"{text!r}: {where} has {len(node)} items, no [{step}]"
                )
        elif not isinstance(node, dict):
            raise InputError(file, field, f"{text!r}: {where} is not a table in the base project")
        elif step not in node and depth < len(steps) - 1:
            raise InputError(
                file, field, f"{text!r}: the base project has no {format_path(steps[: depth + 1])}"
            )
        if depth == len(steps) - 1:
            return node, step
        node = node[step]
    raise InputError(file, field, "empty path")


def set_path(project: dict, path: str, value: Any) -> None:
    """Set ``value`` at dotted ``path`` in ``project`` (in place; the parent must exist)."""
    steps = parse_path(path)
    container, last = _walk(project, steps, "<api>", "path", path)
    container[last] = copy.deepcopy(value)


def _overlap(a: tuple, b: tuple) -> bool:
    n = min(len(a), len(b))
    return a[:n] == b[:n]
