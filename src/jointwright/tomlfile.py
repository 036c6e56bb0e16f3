"""Reading TOML tables strictly.

Unknown keys, wrong types and bad quantities name file and field.
"""

from __future__ import annotations

import difflib
import tomllib
from pathlib import Path
from typing import Any

from .errors import InputError, did_you_mean, unknown_name
from .units import nonnegative, positive, quantity


def is_file(path: str | Path, file: str | None = None, field: str = "(file)") -> bool:
    """``Path.is_file`` that turns an operating-system refusal (a name too long, a folder that
    cannot be searched) into InputError naming ``file`` (default: the path) and ``field``."""
    try:
        return Path(path).is_file()
    except OSError as exc:
        rule = f"cannot be read ({exc.strerror or exc})"
        raise InputError(file or str(path), field, rule) from None


def load_toml(path: str | Path) -> dict:
    """Parse a TOML file; a missing or malformed file raises InputError naming it."""
    path = Path(path)
    if not is_file(path):
        if path.is_dir():
            inside = sorted(p.name for p in path.glob("*.toml"))
            hint = f"; it holds {', '.join(inside)}" if inside else ""
            raise InputError(str(path), "(file)", f"is a folder: name the TOML file in it{hint}")
        raise InputError(str(path), "(file)", "file not found")
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(path), "(syntax)", f"malformed TOML: {exc}") from None
    except UnicodeDecodeError as exc:
        raise InputError(
            str(path), "(encoding)", f"must be UTF-8 text (byte {exc.start + 1} is not)"
        ) from None
    except OSError as exc:
        raise InputError(str(path), "(file)", f"cannot be read ({exc.strerror or exc})") from None


class Table:
    """A view of one TOML table that remembers where it came from and which keys were read."""

    def __init__(self, data: Any, file: str, path: str):
        if not isinstance(data, dict):
            raise InputError(
                file, path or "(top level)", f"must be a table, got {type(data).__name__}"
            )
        self.data, self.file, self.path = data, file, path
        self._seen: set[str] = set()

    def field(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def has(self, key: str) -> bool:
        return key in self.data

    def raw(self, key: str, default: Any = ...) -> Any:
        self._seen.add(key)
        if key not in self.data:
            if default is ...:
                # a misspelt key is the usual cause: name the key the table has instead
                near = difflib.get_close_matches(key, [str(k) for k in self.data], n=1)
                hint = f" (the table has {near[0]!r}: a misspelling?)" if near else ""
                raise InputError(self.file, self.field(key), "is required" + hint)
            return default
        return self.data[key]

    def text(self, key: str, default: Any = ..., choices: tuple[str, ...] | None = None) -> str:
        v = self.raw(key, default)
        if v is default and default is not ...:
            return v
        if not isinstance(v, str):
            raise InputError(self.file, self.field(key), f"must be a string, got {v!r}")
        if "\x00" in v:  # no name, path or label has one; the file system refuses it
            raise InputError(self.file, self.field(key), "must not contain a NUL character")
        if choices is not None and v not in choices:
            raise InputError(
                self.file,
                self.field(key),
                f"must be one of {', '.join(choices)}; got {v!r}{did_you_mean(v, choices)}",
            )
        return v

    def flag(self, key: str, default: Any = ...) -> bool:
        v = self.raw(key, default)
        if not isinstance(v, bool):
            raise InputError(self.file, self.field(key), f"must be true or false, got {v!r}")
        return v

    def quantity(self, key: str, dimension: str, default: Any = ..., *, sign: str = "any") -> float:
        v = self.raw(key, default)
        if v is default and default is not ...:
            return v
        fn = {"any": quantity, "positive": positive, "nonnegative": nonnegative}[sign]
        return fn(v, dimension, file=self.file, field=self.field(key))

    def array(self, key: str, default: Any = ...) -> list:
        v = self.raw(key, default)
        if v is default and default is not ...:
            return v
        if not isinstance(v, list):
            raise InputError(self.file, self.field(key), f"must be a list, got {v!r}")
        return v

    def vector(self, key: str, length: int, default: Any = ..., dimension: str = "dimensionless"):
        v = self.raw(key, default)
        if v is default and default is not ...:
            return v
        if not isinstance(v, list) or len(v) != length:
            raise InputError(
                self.file, self.field(key), f"must be a list of {length} numbers, got {v!r}"
            )
        return tuple(
            quantity(x, dimension, file=self.file, field=f"{self.field(key)}[{i}]")
            for i, x in enumerate(v)
        )

    def table(self, key: str, default: Any = ...) -> "Table":
        v = self.raw(key, default)
        if v is default and default is not ...:
            return Table({}, self.file, self.field(key))
        return Table(v, self.file, self.field(key))

    def tables(self, key: str) -> list["Table"]:
        v = self.raw(key, [])
        if not isinstance(v, list):
            raise InputError(self.file, self.field(key), "must be an array of tables ([[...]])")
        return [Table(x, self.file, f"{self.field(key)}[{i}]") for i, x in enumerate(v)]

    def expect(self, *keys: str) -> None:
        """The table's fields are ``keys``: an unknown one fails now, before a required field
        it was probably meant to be is reported missing."""
        self._seen.update(keys)
        self.done()

    def allow(self, *keys: str) -> None:
        """Count ``keys`` as known fields of this table without reading them.

        For :meth:`done`'s hints.
        """
        self._seen.update(keys)

    def done(self) -> None:
        """Raise on keys nobody read (typo protection)."""
        extra = sorted(set(self.data) - self._seen)
        if extra:  # every key the reader asked for, given or not, is a known one
            raise unknown_name(self.file, self.field(extra[0]), extra[0], sorted(self._seen))
