"""Progress of long steps (reading a large project, a long trajectory), told to a listener.

Library code calls :func:`report` as it goes; it costs one global lookup when nobody listens.
The command line listens with a status line on stderr (see ``commands._progress``), shown only
once a step has taken more than a second.
"""

from __future__ import annotations

import contextlib
from typing import Callable, Iterator

Listener = Callable[[str, int, int], None]
_listener: Listener | None = None


def report(what: str, done: int, total: int) -> None:
    """``done`` of ``total`` items of the step ``what`` (e.g. "reading cases") are finished."""
    if _listener is not None:
        _listener(what, done, total)


@contextlib.contextmanager
def listening(listener: Listener) -> Iterator[None]:
    """Send every :func:`report` inside the block to ``listener(what, done, total)``."""
    global _listener
    previous, _listener = _listener, listener
    try:
        yield
    finally:
        _listener = previous
