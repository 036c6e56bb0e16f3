"""Writing a verb's output files safely.

Three rules for every ``--out`` (and ``--csv``, ``--plot``) of the CLI:

- an output never lands on one of the inputs (project, URDF, catalog files and the CSV tables
  they name, trajectories, a design or result file given as input): refused with exit 2, even
  with ``--force``;
- an existing output is replaced only with ``--force``;
- an output is written to a temporary file in the same folder and then renamed over the target
  (:func:`os.replace` is atomic on one file system), so an interrupted or failed write never
  leaves a half-written file in place of a good one.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from pathlib import Path
from typing import Iterable, Iterator

from ..errors import InputError


def _key(path: Path) -> str:
    """A comparable form of a path (absolute, symlinks resolved, case as the OS compares)."""
    return os.path.normcase(str(Path(path).resolve()))


def project_inputs(project) -> set[Path]:
    """Every file a loaded project was read from: the project file, URDF, catalog files and the
    CSV tables they name, and each case's trajectory."""
    files: set[Path] = {Path(project.file)}
    robot_file = getattr(project.robot, "file", None)
    if robot_file:
        files.add(Path(robot_file))
    source = getattr(project.catalog, "source", "") or ""
    for name in source.split("; "):
        if name:
            files.add(Path(name))
            files.update(_catalog_tables(Path(name)))
    for case in project.cases:
        if getattr(case, "trajectory", None) is not None:
            files.add(Path(case.trajectory))
    out = set()
    for f in files:
        try:
            if f.is_file():
                out.add(f)
        except OSError:
            pass
    return out


def _catalog_tables(path: Path) -> list[Path]:
    """CSV tables named by a catalog TOML (``motors_csv``, ``frames_csv``)."""
    if path.suffix.lower() != ".toml":
        return []
    from ..tomlfile import load_toml

    try:
        data = load_toml(path)
    except InputError:
        return []
    out = []
    for key in ("motors_csv", "frames_csv"):
        value = data.get(key, [])
        for v in [value] if isinstance(value, str) else value if isinstance(value, list) else []:
            if isinstance(v, str) and v:
                out.append(path.parent / v)
    return out


def check_target(
    target: Path,
    option: str,
    *,
    inputs: Iterable[Path] = (),
    force: bool = False,
    exists_hint: str | None = None,
) -> None:
    """Refuse to write ``target`` when it is an input, or when it exists and ``force`` is off.

    ``exists_hint`` names what inside a folder target counts as existing output (e.g.
    ``report.html``); for a file target the file itself.
    """
    target = Path(target)
    keys = {_key(p) for p in inputs}
    if _key(target) in keys:
        raise InputError(
            str(target),
            option,
            "is one of this command's input files; "
            "write the output elsewhere (inputs are never overwritten)",
        )
    existing = target / exists_hint if exists_hint else target
    if exists_hint is None and target.is_dir():
        raise InputError(str(target), option, "is a folder; give a file name")
    if existing.exists() and not force:
        raise InputError(
            str(existing),
            option,
            "already exists; give --force to replace it, or choose another name",
        )
    if not target.parent.is_dir():
        raise InputError(str(target), option, f"folder {str(target.parent)!r} does not exist")


def check_folder_name(target: Path, option: str, writes: str, suffixes: tuple) -> None:
    """A folder option given a file name (``report.html``, ``front.png``) that is not an
    existing folder: one clear error instead of a folder of that name. ``writes``: what the
    folder receives, for the message."""
    from ..errors import InputError

    if not target.exists() and target.suffix.lower() in suffixes:
        raise InputError(
            str(target),
            option,
            f"is a folder ({writes} are written into it), not a file name: give e.g. "
            f"{str(target.with_suffix(''))!r}",
        )


def write_text(target: Path, text: str, option: str = "--out") -> None:
    """Write ``text`` (UTF-8) to ``target`` through a temporary file in the same folder."""
    write_bytes(target, text.encode("utf-8"), option)


def write_bytes(target: Path, data: bytes, option: str = "--out") -> None:
    """Write ``data`` to ``target`` atomically (temporary file, fsync, rename)."""
    with atomic_path(target, option) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())


@contextlib.contextmanager
def atomic_path(target: Path, option: str = "--out") -> Iterator[Path]:
    """A temporary path beside ``target``; renamed over it when the block ends without error,
    deleted otherwise. A failure to write (disk full, no permission) is one InputError line."""
    target = Path(target)
    folder = target.parent
    try:
        fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
        os.close(fd)
    except OSError as exc:
        raise InputError(str(target), option, f"cannot write here: {exc.strerror or exc}") from None
    tmp = Path(name)
    try:
        yield tmp
        _keep_mode(target, tmp)
        os.replace(tmp, target)
    except OSError as exc:
        raise InputError(
            str(target),
            option,
            f"cannot be written ({exc.strerror or exc}); any earlier file there is unchanged",
        ) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()


def _keep_mode(target: Path, tmp: Path) -> None:
    """The new file gets the old file's permissions, or the usual ones for a new file."""
    try:
        mode = target.stat().st_mode & 0o777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        mode = 0o666 & ~umask
    os.chmod(tmp, mode)


@contextlib.contextmanager
def atomic_folder(target: Path, option: str = "--out") -> Iterator[Path]:
    """A temporary folder inside ``target`` (created if missing) to build output files in.

    When the block ends without error every file built there is moved to the same relative
    place under ``target``, each by an atomic rename, sub-folders first and top-level files
    last (so a report's HTML appears only once its figures are in place). On error nothing in
    ``target`` is changed, and a ``target`` this call created is removed again (it is empty).
    The temporary folder is removed either way.
    """
    target = Path(target)
    if target.exists() and not target.is_dir():
        raise InputError(str(target), option, "must be a folder, not a file")
    created = not target.exists()  # a folder this call makes goes again if nothing lands in it
    try:
        target.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=".partial-", dir=target))
    except OSError as exc:
        raise InputError(str(target), option, f"cannot write here: {exc.strerror or exc}") from None
    done = False
    try:
        yield tmp
        files = sorted(
            (p for p in tmp.rglob("*") if p.is_file()),
            key=lambda p: (len(p.relative_to(tmp).parts) == 1, str(p)),
        )
        for f in files:
            dest = target / f.relative_to(tmp)
            dest.parent.mkdir(parents=True, exist_ok=True)
            os.replace(f, dest)
        done = True
    except OSError as exc:
        raise InputError(
            str(target), option, f"cannot be written ({exc.strerror or exc})"
        ) from None
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
        if created and not done:
            with contextlib.suppress(OSError):  # only when empty: never data
                target.rmdir()
