"""Duty-cycle trajectories from CSV: time, joint positions, optional speeds, accelerations and
external wrenches at named frames.

Columns (see docs/duty-cycle.md): ``t``; per joint ``q:<joint>`` and optionally ``qd:<joint>``,
``qdd:<joint>``; per frame ``f:<frame>:x|y|z`` (N) and ``m:<frame>:x|y|z`` (N·m). A header may
carry a unit in brackets, ``q:knee [deg]``; without one the value is SI (s, rad or m, ...).
Missing speeds and accelerations are found by differentiating a cubic spline (scipy
``CubicSpline``): periodic end conditions when the first and last samples match, not-a-knot
otherwise. Every problem raises :class:`~jointwright.errors.InputError` naming file, field, rule.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError
from .progress import report
from .tomlfile import is_file
from .units import quantity

#: column kind -> dimensions its unit may have, in the order they are tried
DIMENSIONS = {
    "t": ("time",),
    "q": ("angle", "length"),
    "qd": ("angular_velocity", "velocity"),
    "qdd": ("angular_acceleration", "acceleration"),
    "f": ("force",),
    "m": ("torque",),
}
#: samples a cubic spline needs before it can give derivatives
MIN_SPLINE_SAMPLES = 4
#: relative gap between first and last sample below which a signal counts as periodic
PERIODIC_TOLERANCE = 1e-9
_HEADER = re.compile(r"^(?P<name>[^\[\]]*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?$")
_RULE = "must be t, q:<joint>, qd:<joint>, qdd:<joint>, f:<frame>:x|y|z or m:<frame>:x|y|z"


@dataclass(frozen=True)
class Trajectory:
    """One duty cycle, SI units, samples along the first axis (read-only arrays).

    Attributes
    ----------
    t : ndarray (T,)
        Time (s), strictly increasing.
    q, qd, qdd : ndarray (T, n)
        Joint position (rad or m), speed, acceleration, columns in ``joint_names`` order.
    joint_names : tuple of str
    frames : tuple of str
        Frames with an external wrench in the file, in order of first appearance.
    wrench : ndarray (T, len(frames), 6)
        External wrench on the robot at each frame's origin, components along the world axes:
        force x, y, z (N) then moment x, y, z (N·m); a triple absent from the file is zero.
    method : str
        How speeds and accelerations were obtained, per joint.
    source : str
        The file read.
    """

    t: np.ndarray
    q: np.ndarray
    qd: np.ndarray
    qdd: np.ndarray
    joint_names: tuple[str, ...]
    frames: tuple[str, ...]
    wrench: np.ndarray
    method: str
    source: str

    @property
    def period(self) -> float:
        """t[-1] − t[0] (s)."""
        return float(self.t[-1] - self.t[0])

    def wrench_of(self, frame: str) -> np.ndarray:
        """The (T, 6) wrench at ``frame``; zeros when the file gives none for it."""
        if frame in self.frames:
            return self.wrench[:, self.frames.index(frame)]
        return np.zeros((self.t.size, 6))


def _column(raw: str, file: str, joints, frames) -> tuple[tuple, float, int]:
    """Parse one header cell into a key, its SI factor and which dimension the unit matched."""
    m = _HEADER.match(raw.strip())
    name = m.group("name").strip() if m else raw
    parts = name.split(":")
    field = f"column {raw.strip()!r}"
    kind = parts[0]
    key: tuple[str, ...]
    if kind == "t" and len(parts) == 1:
        key = ("t",)
    elif kind in ("q", "qd", "qdd") and len(parts) == 2 and parts[1]:
        if parts[1] not in joints:
            raise InputError(file, field, f"unknown joint {parts[1]!r}; joints are {list(joints)}")
        key = (kind, parts[1])
    elif kind in ("f", "m") and len(parts) == 3 and parts[1] and parts[2] in ("x", "y", "z"):
        if frames is not None and parts[1] not in frames:
            raise InputError(file, field, f"unknown frame {parts[1]!r}; frames are {list(frames)}")
        key = (kind, parts[1], parts[2])
    else:
        raise InputError(file, field, _RULE)
    unit = m.group("unit") if m else None
    if unit is None or not unit.strip():
        return key, 1.0, -1
    for i, dim in enumerate(DIMENSIONS[kind]):
        try:
            return key, quantity(f"1 {unit.strip()}", dim, file=file, field=field), i
        except InputError:
            continue
    raise InputError(file, field, f"unit [{unit}] is not one of {' or '.join(DIMENSIONS[kind])}")


def _read_rows(path: Path, file: str) -> list[tuple[int, list[str]]]:
    if not is_file(path, file, "file"):
        raise InputError(file, "file", "does not exist or is not a file")
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            reader = csv.reader(fh)
            rows = [(reader.line_num, row) for row in reader]
    except UnicodeDecodeError:
        raise InputError(file, "(encoding)", "must be UTF-8 text") from None
    except OSError as exc:
        raise InputError(file, "file", f"cannot be read ({exc.strerror or exc})") from None
    except csv.Error as exc:
        raise InputError(file, "file", f"cannot be read as CSV text ({exc})") from None
    return [
        (n, r) for n, r in rows if any(c.strip() for c in r) and not r[0].lstrip().startswith("#")
    ]


#: largest magnitude a cell may hold, in its column's unit
MAX_MAGNITUDE = 1e9


def _numbers(rows, header, file) -> np.ndarray:
    data = np.empty((len(rows), len(header)))
    for i, (line, row) in enumerate(rows, start=1):
        if i % 5000 == 0:
            report(f"reading {Path(file).name}", i, len(rows))
        where = f"row {i} (line {line})"
        if len(row) != len(header):
            raise InputError(file, where, f"has {len(row)} cells, the header has {len(header)}")
        for j, cell in enumerate(row):
            field = f"{where}, column {header[j].strip()!r}"
            try:
                value = float(cell)
            except ValueError:
                raise InputError(file, field, f"must be a number, got {cell!r}") from None
            if not math.isfinite(value):
                raise InputError(file, field, f"must be finite, got {cell!r}")
            if abs(value) > MAX_MAGNITUDE:
                raise InputError(
                    file,
                    field,
                    f"must be within ±{MAX_MAGNITUDE:g} in the column's "
                    f"unit, got {cell!r} (no robot quantity; the cycle's sums would overflow)",
                )
            data[i - 1, j] = value
    return data


def _check_time(t: np.ndarray, rows, file: str) -> None:
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size:
        i = int(bad[0]) + 1
        raise InputError(
            file,
            f"row {i + 1} (line {rows[i][0]}), column 't'",
            f"time must be strictly increasing, got {t[i]:g} s after {t[i - 1]:g} s",
        )


def _spline(t: np.ndarray, y: np.ndarray):
    """Cubic spline through the samples, periodic when the first and last samples match."""
    from scipy.interpolate import CubicSpline

    periodic = abs(y[-1] - y[0]) <= PERIODIC_TOLERANCE * max(1.0, float(np.max(np.abs(y))))
    if periodic:
        y = y.copy()
        y[-1] = y[0]
    spline = CubicSpline(t, y, bc_type="periodic" if periodic else "not-a-knot")
    how = "periodic end conditions" if periodic else "not-a-knot end conditions"
    return spline, f"by cubic spline ({how})"


def _joint_signals(t, columns, joint, file, n_samples):
    """q, qd, qdd of one joint and a phrase saying how the last two were found."""
    q = columns[("q", joint)]
    need = ("qd", joint) not in columns or ("qdd", joint) not in columns
    if need and n_samples < MIN_SPLINE_SAMPLES:
        raise InputError(
            file,
            f"column 'q:{joint}'",
            f"differentiating needs at least {MIN_SPLINE_SAMPLES} samples, got {n_samples}",
        )
    if ("qd", joint) in columns:
        qd, said = columns[("qd", joint)], ["qd given"]
        if ("qdd", joint) in columns:
            qdd = columns[("qdd", joint)]
            said.append("qdd given")
        else:
            spline, how = _spline(t, qd)
            qdd = spline(t, 1)
            said.append("qdd from qd " + how)
    else:
        spline, how = _spline(t, q)
        qd = spline(t, 1)
        if ("qdd", joint) in columns:
            qdd = columns[("qdd", joint)]
            said = ["qd from q " + how, "qdd given"]
        else:
            qdd = spline(t, 2)
            said = ["qd, qdd from q " + how]
    return q, qd, qdd, f"{joint}: " + ", ".join(said)


def _check_limits(columns, joints, limits, revolute, rows, header, keys, file, source) -> None:
    """Every sample of each joint's q inside its position limits (as case poses are)."""
    revolute = [None] * len(joints) if revolute is None else list(revolute)
    for joint, (lo, hi), rev in zip(joints, limits, revolute, strict=True):
        q = columns[("q", joint)]
        out = np.flatnonzero((q < lo - 1e-9) | (q > hi + 1e-9))
        if not out.size:
            continue
        i = int(out[0])
        raw = header[keys.index(("q", joint))].strip()
        if rev:
            got = f"{q[i]:.6g} rad ({math.degrees(q[i]):.4g} deg)"
            lim = f"[{lo:.6g}, {hi:.6g}] rad ([{math.degrees(lo):.4g}, {math.degrees(hi):.4g}] deg)"
        else:
            unit = "" if rev is None else " m"
            got, lim = f"{q[i]:.6g}{unit}", f"[{lo:.6g}, {hi:.6g}]{unit}"
        hint = ""
        if "[" not in raw:
            example = "mm" if rev is False else "deg"
            hint = (
                "; a column without a unit is in SI (rad or m): write it, e.g. "
                f"'q:{joint} [{example}]'"
            )
        raise InputError(
            file,
            f"row {i + 1} (line {rows[i][0]}), column {raw!r}",
            f"{got} is outside the joint's limits {lim}"
            + (f" (from {source})" if source else "")
            + f"; {out.size} of {q.size} samples are outside{hint}",
        )


def _header(header, file, joints, frames):
    keys, factors, dims = [], [], {}
    for raw in header:
        key, factor, dim = _column(raw, file, joints, frames)
        if key in keys:
            raise InputError(file, f"column {raw.strip()!r}", "appears twice in the header")
        if key[0] in ("q", "qd", "qdd") and dim >= 0:
            first = dims.setdefault(key[1], (raw.strip(), dim))
            if first[1] != dim:
                raise InputError(
                    file,
                    f"column {raw.strip()!r}",
                    f"unit must be {'angular' if first[1] == 0 else 'linear'} like "
                    f"{first[0]!r}: one joint is either revolute or prismatic",
                )
        keys.append(key)
        factors.append(factor)
    if ("t",) not in keys:
        raise InputError(file, "column 't'", "is missing: the file needs a time column t (s)")
    for joint in joints:
        if ("q", joint) not in keys:
            raise InputError(file, f"column 'q:{joint}'", "is missing: every joint needs its q")
    return keys, np.asarray(factors), dims


def _wrenches(columns, file):
    frames = list(dict.fromkeys(k[1] for k in columns if k[0] in ("f", "m")))
    for frame in frames:
        for kind in ("f", "m"):
            have = [c for c in "xyz" if (kind, frame, c) in columns]
            if have and len(have) < 3:
                names = ", ".join(f"{kind}:{frame}:{c}" for c in "xyz")
                raise InputError(file, f"column '{kind}:{frame}:{have[0]}'", f"give all of {names}")
    n = len(next(iter(columns.values())))
    wrench = np.zeros((n, len(frames), 6))
    for (kind, frame, comp), values in ((k, v) for k, v in columns.items() if k[0] in ("f", "m")):
        wrench[:, frames.index(frame), "xyz".index(comp) + (3 if kind == "m" else 0)] = values
    return tuple(frames), wrench


def _frozen(x: np.ndarray) -> np.ndarray:
    x = np.ascontiguousarray(x, dtype=float)
    x.flags.writeable = False
    return x


def load_trajectory(
    path, joint_names, *, frames=None, revolute=None, limits=None, source=None
) -> Trajectory:
    """Read a duty-cycle CSV into a :class:`Trajectory` (SI units).

    Parameters
    ----------
    path : str or Path
        The CSV file: one header row, then one row per sample; blank lines and lines starting
        with ``#`` are skipped.
    joint_names : sequence of str
        The robot's actuated joints; each needs a ``q:<joint>`` column, no other joint may appear.
    frames : sequence of str, optional
        Frames allowed in wrench columns; any frame name when None.
    revolute : sequence of bool, optional
        Per joint, True for a revolute joint (its columns must carry angular units) and False
        for a prismatic one (linear units); not checked when None.
    limits : sequence of (lower, upper), optional
        Per joint, its position limits (rad or m; ±inf where none): every sample of ``q`` must
        lie within them; not checked when None.
    source : str, optional
        Where the limits come from (the robot's file), for the message.

    Returns
    -------
    Trajectory

    Raises
    ------
    InputError
        Missing file; missing, unknown, duplicated or malformed column; a unit of the wrong
        dimension; a ragged row; a non-numeric, NaN or infinite cell; time not strictly
        increasing; too few samples (2, or 4 when derivatives must be computed); a position
        outside the joint's limits.
    """
    file = str(path)
    joints = tuple(joint_names)
    if not joints or len(set(joints)) != len(joints):
        raise InputError(
            "<api>", "joint_names", f"must be one or more distinct names, got {list(joints)}"
        )
    rows = _read_rows(Path(path), file)
    if not rows:
        raise InputError(file, "header", "the file is empty")
    header = rows[0][1]
    keys, factors, dims = _header(header, file, joints, None if frames is None else tuple(frames))
    if revolute is not None:
        for joint, rev in zip(joints, revolute, strict=True):
            if joint in dims and dims[joint][1] != (0 if rev else 1):
                raise InputError(
                    file,
                    f"column {dims[joint][0]!r}",
                    f"joint {joint} is {'revolute' if rev else 'prismatic'}: its units "
                    f"must be {'angular (rad, deg)' if rev else 'linear (m, mm)'}",
                )
    data = _numbers(rows[1:], header, file) * factors
    if data.shape[0] < 2:
        raise InputError(file, "rows", f"needs at least 2 samples, got {data.shape[0]}")
    columns = {k: data[:, j] for j, k in enumerate(keys)}
    t = columns[("t",)]
    _check_time(t, rows[1:], file)
    if limits is not None:
        _check_limits(columns, joints, limits, revolute, rows[1:], header, keys, file, source)
    found_frames, wrench = _wrenches(columns, file)
    signals = [_joint_signals(t, columns, j, file, t.size) for j in joints]
    q, qd, qdd = (np.stack([s[i] for s in signals], axis=1) for i in range(3))
    return Trajectory(
        t=_frozen(t),
        q=_frozen(q),
        qd=_frozen(qd),
        qdd=_frozen(qdd),
        joint_names=joints,
        frames=found_frames,
        wrench=_frozen(wrench),
        method="; ".join(s[3] for s in signals),
        source=file,
    )
