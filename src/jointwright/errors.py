"""Exception types. Every user-facing failure is an :class:`InputError` naming file, field, rule."""

from __future__ import annotations

import difflib
from typing import Iterable


class JointwrightError(Exception):
    """Base class of the package's own exceptions."""


class InputError(JointwrightError, ValueError):
    """Bad user input: one message naming the file, the field and the rule that was broken.

    Parameters
    ----------
    file : str
        The file (or "<api>" for values passed in Python) that holds the bad value.
    field : str
        Dotted path of the field inside the file, e.g. ``motors[3].mass`` or ``row 7, column q2``.
    rule : str
        What the value must satisfy, in plain words, e.g. ``must be > 0 kg, got -0.2 kg``.
    """

    def __init__(self, file: str, field: str, rule: str):
        self.file = str(file)
        self.field = str(field)
        self.rule = str(rule)
        super().__init__(f"{self.file}: {self.field}: {self.rule}")


class SingularPoseError(JointwrightError, ValueError):
    """The task-space inertia does not exist at this pose (J·M⁻¹·Jᵀ is singular)."""


def did_you_mean(word: object, known: Iterable[str]) -> str:
    """``" (did you mean 'x'?)"`` for the closest known name to ``word``, or ``""``."""
    near = difflib.get_close_matches(str(word), list(known), n=1)
    return f" (did you mean {near[0]!r}?)" if near else ""


def unknown_name(
    file: str, field: str, word: object, known: Iterable[str], what: str = "field"
) -> InputError:
    """The one message for a name the reader does not know: the closest known one and the list.

    Every reader (project, catalog, study, design, URDF mounts) reports unknown fields, columns,
    options and choices through this, so the same typo gets the same help everywhere.
    """
    known = list(known)
    listed = f"; known: {', '.join(known)}" if known and len(known) <= 30 else ""
    return InputError(file, field, f"unknown {what} {word!r}{did_you_mean(word, known)}{listed}")


def check_keys(keys: Iterable[str], allowed: Iterable[str], file: str, where: str) -> None:
    """Raise :func:`unknown_name` for the first key of ``keys`` not in ``allowed``.

    ``where`` is the dotted path of the table; the error names ``where.key``.
    """
    allowed = list(allowed)
    for key in keys:
        if key not in allowed:
            raise unknown_name(file, f"{where}.{key}" if where else key, key, allowed)
