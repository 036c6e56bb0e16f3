"""Poses of a project: joint positions from a ``pose`` table, checked against the robot's
joints and limits, and the named ``[poses.NAME]`` tables that cases refer to (format in
docs/project-format.md).
"""

from __future__ import annotations

import math

from .errors import InputError
from .tomlfile import Table


def read_pose(pt: Table, robot) -> dict[str, float]:
    """Joint positions of a pose: every actuated joint, optionally the others.

    See docs/project-format.md.

    A plain number is radians (metres for a prismatic joint); a revolute joint's plain number
    beyond ±2π is refused as a likely angle in degrees. Positions must lie within the joint's
    limits. Joints not given take :meth:`Robot.rest_position`.
    """
    pose = {}
    for jn in list(pt.data):
        if jn not in robot.joint_names:
            mimic = {f: lead for f, lead, *_ in robot.mimic}
            if jn in mimic:
                raise InputError(
                    pt.file,
                    pt.field(jn),
                    f"{jn!r} is a mimic joint: it follows "
                    f"{mimic[jn]!r}; give the leader's position",
                )
            raise InputError(
                pt.file,
                pt.field(jn),
                f"unknown joint {jn!r}; the robot's joints are {', '.join(robot.joint_names)}",
            )
        revolute = robot.revolute[robot.joint_names.index(jn)]
        raw = pt.raw(jn)
        value = pt.quantity(jn, "angle" if revolute else "length")
        if revolute and not isinstance(raw, str) and abs(value) > 2 * math.pi:
            raise InputError(
                pt.file,
                pt.field(jn),
                f"a plain number is radians and {raw!r} rad is "
                'more than a full turn; write the unit, e.g. "90 deg"',
            )
        lo, hi = robot.position_limits(jn)
        if not lo - 1e-9 <= value <= hi + 1e-9:
            if revolute:
                got = f"{value:.6g} rad ({math.degrees(value):.4g} deg)"
                lim = (
                    f"[{lo:.6g}, {hi:.6g}] rad ([{math.degrees(lo):.4g}, "
                    f"{math.degrees(hi):.4g}] deg)"
                )
            else:
                got, lim = f"{value:.6g} m", f"[{lo:.6g}, {hi:.6g}] m"
            raise InputError(
                pt.file,
                pt.field(jn),
                f"{got} is outside the joint's limits {lim} (from {robot.file})",
            )
        pose[jn] = value
    missing = [j for j in robot.actuated if j not in pose]
    if missing:
        raise InputError(
            pt.file, pt.field(missing[0]), "is required (every actuated joint needs a position)"
        )
    pt.done()
    return pose


def load_poses(t: Table, robot) -> dict[str, dict[str, float]]:
    """Named poses (``[poses.NAME]`` tables) that cases refer to with ``pose = "NAME"``."""
    out = {name: read_pose(t.table(name), robot) for name in list(t.data)}
    t.done()
    return out
