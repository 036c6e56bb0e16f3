"""The store's writer lock: one writing run per store, held by an operating-system file lock."""

from __future__ import annotations

import datetime as _dt
import json
import os
import socket
import time
from pathlib import Path
from typing import Any

from ..errors import InputError

#: version of the store layout written by this module (readers refuse newer versions)


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")


class WriterLock:
    """An exclusive operating-system lock on ``<store>.lock``, held while a store is written.

    The lock file records ``pid``, ``host`` and ``since`` (UTC) of the holder as JSON, which a
    refused writer reports. The kernel drops the lock when the holder's process ends, so a killed
    run never leaves a stale lock; the file itself may stay and is harmless. (POSIX ``flock``;
    ``msvcrt.locking`` on Windows. Network file systems may not honour either.)
    """

    def __init__(self, store: Path):
        self.path = Path(f"{store}.lock")
        self._fh = None

    def acquire(self, store: Path) -> None:
        try:
            fh: Any = open(self.path, "a+", encoding="utf-8")
        except OSError as exc:
            raise InputError(
                str(store),
                "(lock)",
                f"cannot create the writer lock {self.path.name} ({exc.strerror or exc})",
            ) from None
        if not _try_lock(fh):
            # the holder writes its name just after it takes the lock: give it a moment
            for _ in range(HOLDER_WAITS):
                fh.seek(0)
                holder = _holder(fh.read())
                if holder != UNNAMED:
                    break
                time.sleep(0.01)
            fh.close()
            raise InputError(
                str(store), "(lock)",
                f"another run is writing to this store ({holder}); wait for it to end, or give "
                "another store file. Reading the store (summaries, reports) is fine meanwhile",
            )  # fmt: skip
        fh.seek(0)
        fh.truncate()
        fh.write(json.dumps({"pid": os.getpid(), "host": socket.gethostname(), "since": _now()}))
        fh.flush()
        self._fh = fh

    def release(self) -> None:
        if self._fh is not None:
            try:
                self._fh.seek(0)
                self._fh.truncate()
            except OSError:
                pass
            _unlock(self._fh)
            self._fh.close()
            self._fh = None


def _try_lock(fh: Any) -> bool:
    try:
        import fcntl
    except ImportError:  # Windows
        import msvcrt

        try:
            fh.seek(0)
            msvcrt.locking(fh.fileno(), msvcrt.LK_NBLCK, 1)  # type: ignore[attr-defined]
            return True
        except OSError:
            return False
    try:
        fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except BlockingIOError:
        return False
    except OSError as exc:  # a file system without locks: say so rather than run unguarded
        raise InputError(
            fh.name,
            "(lock)",
            f"the file system does not support locking "
            f"({exc.strerror or exc}); put the store on a local disk",
        ) from None


def _unlock(fh) -> None:
    try:
        import fcntl
    except ImportError:  # Windows
        import msvcrt

        try:
            fh.seek(0)
            msvcrt.locking(fh.fileno(), msvcrt.LK_UNLCK, 1)  # type: ignore[attr-defined]
        except OSError:
            pass
        return
    fcntl.flock(fh.fileno(), fcntl.LOCK_UN)


#: the holder named in the message when its lock file has no name (yet)
UNNAMED = "a process that has not yet written its name"
#: reads of the lock file (10 ms apart) for a holder that has just taken the lock
HOLDER_WAITS = 100


def _holder(text: str) -> str:
    try:
        info = json.loads(text)
        return f"process {int(info['pid'])} on host {info['host']}, since {info['since']}"
    except (ValueError, KeyError, TypeError):
        return UNNAMED
