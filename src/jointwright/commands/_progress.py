"""A status line on stderr for long loads: shown once a command has run for a second, updated
at most ten times a second, gone when the command ends (stdout stays clean for --json)."""

from __future__ import annotations

import contextlib
import time
from typing import TYPE_CHECKING, Iterator

if TYPE_CHECKING:
    from rich.status import Status

from ..progress import listening


class _StatusLine:
    def __init__(self, delay: float = 1.0, interval: float = 0.1):
        self.start = time.perf_counter()
        self.delay, self.interval = delay, interval
        self.last = 0.0
        self.status: Status | None = None

    def __call__(self, what: str, done: int, total: int) -> None:
        now = time.perf_counter()
        if now - self.start < self.delay or (now - self.last < self.interval and done < total):
            return
        self.last = now
        text = f"{what}: {done:,} of {total:,} ({100 * done / max(total, 1):.0f} %)"
        if self.status is None:
            from rich.console import Console

            self.status = Console(stderr=True).status(text)
            self.status.start()
        else:
            self.status.update(text)

    def stop(self) -> None:
        if self.status is not None:
            self.status.stop()


@contextlib.contextmanager
def status_line(enabled: bool = True) -> Iterator[None]:
    """Show the progress of long steps inside the block on stderr (nothing when disabled)."""
    if not enabled:
        yield
        return
    line = _StatusLine()
    try:
        with listening(line):
            yield
    finally:
        line.stop()
