"""A case over a region of poses: a list of poses, a grid over joint ranges, or trajectory samples.

The requirement holds at every pose of the region. The project expands such a case into one
internal case per pose (``NAME@k``, :attr:`Case.region` = ``NAME``, ``region_index`` = k), so
every proven bound of the optimizer stays valid unchanged: a region case is the conjunction of
its pose cases, and each of them is an ordinary case. :func:`worst_poses` groups the results back
per user case (docs/project-format.md, "Regions of poses").
"""

from __future__ import annotations

import math
from collections.abc import Callable
from pathlib import Path

import numpy as np

from .errors import InputError
from .tomlfile import Table, is_file

#: the fields that make a case a region, one at most per case
REGION_KEYS = ("poses", "grid", "trajectory_poses")
#: most poses one region may expand to (a grid's product of counts, a trajectory's samples)
MAX_REGION_POSES = 10000


def read_region(
    t: Table,
    robot,
    base_dir: Path,
    named: dict[str, dict[str, float]],
    read_pose: Callable[[Table, object], dict[str, float]],
) -> list[dict[str, float]] | None:
    """The poses of a region case, or None for a one-pose case (``pose`` read by the caller).

    ``poses``: a list of pose names (``[poses.NAME]``) or inline pose tables. ``grid``: per
    joint ``[low, high, count]`` (count ≥ 1 evenly spaced values, both ends included; one value
    when count = 1); the other joints take the case's ``pose``. ``trajectory_poses``: a
    trajectory CSV (docs/duty-cycle.md) whose samples give the actuated joints' positions,
    every ``every``-th sample (default 1); joints not actuated take the case's ``pose`` when
    given, else their rest position.
    """
    given = [k for k in REGION_KEYS if t.has(k)]
    if not given:
        t.allow("every", *REGION_KEYS)  # known fields, for the hint on a misspelt one
        if t.has("every"):
            raise InputError(t.file, t.field("every"), "only with trajectory_poses")
        return None
    if len(given) > 1:
        raise InputError(
            t.file, t.field(given[1]), f"give one of {', '.join(REGION_KEYS)}, not {given[0]} too"
        )
    key = given[0]
    if key != "trajectory_poses" and t.has("every"):
        raise InputError(t.file, t.field("every"), "only with trajectory_poses")
    if key == "poses":
        if t.has("pose"):
            raise InputError(
                t.file, t.field("pose"), "give either pose or poses (a list of poses), not both"
            )
        out = _pose_list(t, robot, named, read_pose)
    elif key == "grid":
        out = _grid(t, robot, named, read_pose)
    else:
        out = _trajectory(t, robot, base_dir, named, read_pose)
    if len(out) > MAX_REGION_POSES:
        raise InputError(
            t.file, t.field(key), f"gives {len(out)} poses; at most {MAX_REGION_POSES} per case"
        )
    return out


def _base_pose(t: Table, robot, named, read_pose, required: bool) -> dict[str, float] | None:
    if not t.has("pose"):
        if required:
            raise InputError(
                t.file,
                t.field("pose"),
                "is required: a full pose, whose gridded joints the grid replaces",
            )
        return None
    raw = t.raw("pose")
    if isinstance(raw, str):
        if raw not in named:
            raise InputError(t.file, t.field("pose"), f"unknown pose {raw!r}")
        return dict(named[raw])
    return read_pose(t.table("pose"), robot)


def _pose_list(t: Table, robot, named, read_pose) -> list[dict[str, float]]:
    raw = t.raw("poses")
    if not isinstance(raw, list) or not raw:
        raise InputError(
            t.file, t.field("poses"), "must be a non-empty list of pose names or pose tables"
        )
    out = []
    for i, p in enumerate(raw):
        if isinstance(p, str):
            if p not in named:
                raise InputError(
                    t.file,
                    f"{t.field('poses')}[{i}]",
                    f"unknown pose {p!r}; named poses are "
                    f"{', '.join(named) if named else 'none ([poses.NAME] tables)'}",
                )
            out.append(dict(named[p]))
        elif isinstance(p, dict):
            out.append(read_pose(Table(p, t.file, f"{t.field('poses')}[{i}]"), robot))
        else:
            raise InputError(
                t.file, f"{t.field('poses')}[{i}]", f"must be a pose name or table, got {p!r}"
            )
    return out


def _grid(t: Table, robot, named, read_pose) -> list[dict[str, float]]:
    g = t.table("grid")
    base = _base_pose(t, robot, named, read_pose, required=True) or {}
    if not g.data:
        raise InputError(t.file, t.field("grid"), "must name at least one joint")
    axes: list[tuple[str, np.ndarray]] = []
    for jn in list(g.data):
        if jn not in robot.joint_names:
            raise InputError(
                t.file,
                g.field(jn),
                f"unknown joint {jn!r}; the robot's joints are {', '.join(robot.joint_names)}",
            )
        spec = g.raw(jn)
        if not isinstance(spec, list) or len(spec) != 3:
            raise InputError(t.file, g.field(jn), f"must be [low, high, count], got {spec!r}")
        count = spec[2]
        if not isinstance(count, int) or isinstance(count, bool) or count < 1:
            raise InputError(
                t.file, f"{g.field(jn)}[2]", f"count must be a whole number >= 1, got {count!r}"
            )
        revolute = robot.revolute[robot.joint_names.index(jn)]
        from .units import quantity

        ends = [
            quantity(
                spec[i],
                "angle" if revolute else "length",
                file=t.file,
                field=f"{g.field(jn)}[{i}]",
            )
            for i in (0, 1)
        ]
        lo, hi = robot.position_limits(jn)
        for i, v in enumerate(ends):
            if not lo - 1e-9 <= v <= hi + 1e-9:
                raise InputError(
                    t.file,
                    f"{g.field(jn)}[{i}]",
                    f"{v:.6g} is outside the joint's limits [{lo:.6g}, {hi:.6g}]",
                )
        if ends[0] > ends[1]:
            raise InputError(t.file, g.field(jn), "low must not exceed high")
        axes.append((jn, np.linspace(ends[0], ends[1], count)))
    g.done()
    total = math.prod(len(v) for _, v in axes)
    if total > MAX_REGION_POSES:
        raise InputError(
            t.file, t.field("grid"), f"gives {total} poses; at most {MAX_REGION_POSES} per case"
        )
    out = []
    for combo in (
        np.array(np.meshgrid(*[v for _, v in axes], indexing="ij")).reshape(len(axes), -1).T
    ):
        p = dict(base)
        for (jn, _), value in zip(axes, combo, strict=True):
            p[jn] = float(value)
        out.append(p)
    return out


def _trajectory(t: Table, robot, base_dir: Path, named, read_pose) -> list[dict[str, float]]:
    from .trajectory import load_trajectory

    path = base_dir / t.text("trajectory_poses")
    if not is_file(path, t.file, t.field("trajectory_poses")):
        raise InputError(t.file, t.field("trajectory_poses"), f"file not found: {path}")
    every = t.raw("every", 1)
    if not isinstance(every, int) or isinstance(every, bool) or every < 1:
        raise InputError(t.file, t.field("every"), f"must be a whole number >= 1, got {every!r}")
    base = _base_pose(t, robot, named, read_pose, required=False) or {}
    revolute = [robot.revolute[robot.joint_names.index(j)] for j in robot.actuated]
    traj = load_trajectory(
        path,
        robot.actuated,
        frames=None,
        revolute=revolute,
        limits=[robot.position_limits(j) for j in robot.actuated],
        source=robot.file,
    )
    out = []
    for s in range(0, traj.t.size, every):
        p = dict(base)
        for jn, value in zip(robot.actuated, traj.q[s], strict=True):
            p[jn] = float(value)  # inside the joint's limits: load_trajectory checked them
        out.append(p)
    return out


def region_members(cases) -> dict[str, list]:
    """User case name -> its cases in region order (a one-pose case is its own one member)."""
    out: dict[str, list] = {}
    for c in cases:
        out.setdefault(c.region or c.name, []).append(c)
    return out


def worst_poses(cases, margins: dict[str, float]) -> dict[str, dict]:
    """Per region case, the pose whose smallest requirement margin is lowest.

    ``margins``: internal case name -> its smallest margin (+inf without requirements). Returns
    user case name -> {"index", "case", "margin", "poses"} for the cases with a region only.
    """
    out = {}
    for name, members in region_members(cases).items():
        if not members[0].region:
            continue
        values = [margins.get(c.name, math.inf) for c in members]
        k = int(np.argmin(values))
        out[name] = {
            "index": members[k].region_index,
            "case": members[k].name,
            "margin": float(values[k]),
            "poses": len(members),
        }
    return out
