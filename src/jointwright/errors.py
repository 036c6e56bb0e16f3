"""Exception types. Every user-facing failure is an :class:`InputError` naming file, field, rule."""

from __future__ import annotations


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
