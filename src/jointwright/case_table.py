"""Reading ``[[case]]`` tables into :class:`~jointwright.cases.Case` records: pose or region,
frame, direction, contacts, trajectory, loads, the impact's body region and gear shock, joint
torques, and the requirement keys of each kind (docs/project-format.md). A case over a region
of poses becomes one case per pose (:mod:`jointwright.regions`).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .cases import (
    AMBIENT_RANGE,
    BODY_REGION,
    CASE_KINDS,
    CASE_LIMITS,
    MOTIONS,
    STANDARD_GRAVITY,
    Case,
)
from .errors import InputError
from .poses import read_pose
from .tomlfile import Table, is_file


def _load_contacts(t: Table, robot) -> tuple:
    entries = t.tables("contacts")
    if not entries:
        raise InputError(t.file, t.field("contacts"), "a stance case needs at least one contact")
    out = []
    for c in entries:
        frame = c.text("frame")
        robot.frame_id(frame, file=c.file, field=c.field("frame"))
        mu = c.quantity("friction", "dimensionless", sign="nonnegative")
        n = np.asarray(c.vector("normal", 3, (0.0, 0.0, 1.0)))
        if not np.linalg.norm(n) > 0:
            raise InputError(c.file, c.field("normal"), "must not be the zero vector")
        c.done()
        out.append((frame, mu, tuple(float(x) for x in n / np.linalg.norm(n))))
    names = [f for f, _, _ in out]
    for i, f in enumerate(names):
        if f in names[:i]:
            raise InputError(
                t.file, f"{t.field('contacts')}[{i}].frame", f"duplicate contact {f!r}"
            )
    return tuple(out)


def load_cases(t: Table, robot, base_dir: Path, poses: dict | None = None) -> list[Case]:
    """One [[case]] table: one case, or one per pose of a region (jointwright.regions)."""
    from .regions import REGION_KEYS, read_region

    kind = t.raw("kind", None)
    if kind in ("duty", "torque"):
        for key in REGION_KEYS:
            if t.has(key):
                raise InputError(t.file, t.field(key), f"a {kind} case has no pose region")
        return [_load_case(t, robot, base_dir, poses)]
    region = read_region(t, robot, base_dir, poses or {}, read_pose)
    case = _load_case(t, robot, base_dir, poses, region_pose=None if region is None else region[0])
    if region is None:
        return [case]
    from dataclasses import replace

    return [
        replace(case, name=f"{case.name}@{k}", pose=p, region=case.name, region_index=k)
        for k, p in enumerate(region)
    ]


def _load_case(
    t: Table, robot, base_dir: Path, poses: dict | None = None, region_pose: dict | None = None
) -> Case:
    name = t.text("name")
    if "@" in name:
        raise InputError(t.file, t.field("name"), f"must not contain '@' (got {name!r})")
    kind = t.text("kind", choices=CASE_KINDS)
    if kind == "torque":
        return _torque_case(t, robot, name)
    frame = None
    if kind != "duty":
        frame = t.text("frame")
        robot.frame_id(frame, file=t.file, field=t.field("frame"))
    pose = {}
    if region_pose is not None:
        pose = dict(region_pose)
    elif kind != "duty":
        raw = t.raw("pose")
        if isinstance(raw, str):
            poses = poses or {}
            if raw not in poses:
                raise InputError(
                    t.file,
                    t.field("pose"),
                    f"unknown pose {raw!r}; named poses are "
                    f"{', '.join(poses) if poses else 'none ([poses.NAME] tables)'}",
                )
            pose = dict(poses[raw])
        else:
            pose = read_pose(t.table("pose"), robot)
    base_xyz = t.vector("base_xyz", 3, (0.0, 0.0, 0.0), "length")
    base_rpy = t.vector("base_rpy", 3, (0.0, 0.0, 0.0), "angle")
    for key in ("base_xyz", "base_rpy"):
        if t.has(key) and robot.base != "floating":
            raise InputError(
                t.file, t.field(key), "only for a floating base; a fixed base is the world frame"
            )
    direction = None
    if kind in ("payload", "stance", "impact", "backdrive", "speed"):
        d = np.asarray(t.vector("direction", 3))
        scale = float(np.abs(d).max())
        if scale == 0:
            raise InputError(t.file, t.field("direction"), "must not be the zero vector")
        d = d / scale  # scaled first: huge components must not overflow the norm
        direction = tuple(float(x) for x in d / np.linalg.norm(d))
    motion = (
        t.text("motion", "along", choices=MOTIONS) if kind in ("payload", "stance") else "along"
    )
    contacts = _load_contacts(t, robot) if kind == "stance" else ()
    trajectory = None
    if kind == "duty":
        trajectory = base_dir / t.text("trajectory")
        if not is_file(trajectory, t.file, t.field("trajectory")):
            raise InputError(t.file, t.field("trajectory"), f"file not found: {trajectory}")
    ambient = t.quantity("ambient", "temperature", 25.0)
    if not AMBIENT_RANGE[0] <= ambient <= AMBIENT_RANGE[1]:
        raise InputError(
            t.file,
            t.field("ambient"),
            f"must be from {AMBIENT_RANGE[0]:g} to "
            f"{AMBIENT_RANGE[1]:g} degC (the range of the winding resistance and "
            f"thermal models), got {ambient:g} degC",
        )
    tip_speed = (
        t.quantity("tip_speed", "velocity", 0.0, sign="nonnegative") if kind == "payload" else 0.0
    )
    if tip_speed > 0 and motion == "hold":
        raise InputError(
            t.file,
            t.field("tip_speed"),
            "a payload held still has no tip speed; use motion = along or against",
        )
    fixed_load, payload_share = 0.0, 1.0
    if kind in ("payload", "stance"):
        fixed_load = _force_or_weight(t, "fixed_load") if t.has("fixed_load") else 0.0
        payload_share = t.quantity("payload_share", "dimensionless", 1.0, sign="nonnegative")
    payload_mass = (
        t.quantity("payload_mass", "mass", 0.0, sign="nonnegative") if kind == "speed" else 0.0
    )
    acceleration = (
        t.quantity("acceleration", "acceleration", 0.0, sign="nonnegative")
        if kind == "speed"
        else 0.0
    )
    stroke = (
        t.quantity("stroke", "length", 0.0, sign="positive")
        if kind == "speed" and t.has("stroke")
        else 0.0
    )
    tip_force = (
        t.vector("tip_force", 3, (0.0, 0.0, 0.0), "force") if kind == "speed" else (0.0, 0.0, 0.0)
    )
    if stroke > 0 and acceleration > 0:
        raise InputError(
            t.file,
            t.field("stroke"),
            "give either stroke (reach the speed from rest within "
            "it) or acceleration (keep accelerating at speed), not both",
        )
    limits = {}
    t.allow(*CASE_LIMITS[kind])
    for key, (dim, _sense) in CASE_LIMITS[kind].items():
        if t.has(key):
            if kind in ("payload", "stance") and key == "payload_min":
                limits[key] = _payload_requirement(t, fixed_load, payload_share)
            else:
                limits[key] = t.quantity(key, dim, sign="nonnegative")
            if key.endswith("imf_min") and limits[key] > 1:
                # ξ = det(I − Λ·Λ_L⁻¹) lies in [0, 1] (Wensing et al. 2017)
                raise InputError(
                    t.file,
                    t.field(key),
                    f"must be from 0 to 1 (the impact mitigation factor is a fraction), "
                    f"got {limits[key]:g}",
                )
            if key.endswith("imf_min") and robot.base != "floating":
                raise InputError(
                    t.file,
                    t.field(key),
                    "needs a floating base: with a fixed base the "
                    "locked-joint inertia is unbounded and the IMF is 1; use effective_mass_max",
                )
    if kind == "duty" and "rating_use_max" not in limits:
        limits["rating_use_max"] = 1.0
    life_share = None
    if kind == "duty" and t.has("life_share"):
        life_share = t.quantity("life_share", "dimensionless", sign="positive")
        if life_share > 1:
            raise InputError(
                t.file, t.field("life_share"), f"must be from 0 to 1, got {life_share:g}"
            )
    body_region = _body_region(t) if kind == "impact" else None
    impact_speed, restitution = _impact_shock(t, limits) if kind == "impact" else (0.0, 0.0)
    if "contact_speed_min" in limits and body_region is None:
        raise InputError(
            t.file,
            t.field("contact_speed_min"),
            "needs the body region's "
            "body_force_max, body_stiffness and body_mass (from the safety standard "
            "that applies; jointwright ships no values)",
        )
    weight = bool(direction is not None and abs(abs(direction[2]) - 1.0) < 1e-9)
    moment, offset = (0.0, 0.0, 0.0), (0.0, 0.0, 0.0)
    if kind in ("payload", "stance"):
        moment = t.vector("moment", 3, (0.0, 0.0, 0.0), "torque")
        offset = t.vector("offset", 3, (0.0, 0.0, 0.0), "length")
    share_min = 0.0
    if kind != "stance" and t.has("contact_share_min"):
        raise InputError(
            t.file,
            t.field("contact_share_min"),
            f"only for stance cases (a load held on several contacts); this case is a {kind} case",
        )
    if kind == "stance":
        share_min = t.quantity("contact_share_min", "dimensionless", 0.0, sign="nonnegative")
        if share_min * len(contacts) > 1.0 + 1e-12:
            raise InputError(
                t.file,
                t.field("contact_share_min"),
                f"must be at most 1/{len(contacts)} (every one of the {len(contacts)} contacts "
                f"takes at least this share of the total), got {share_min:g}",
            )
    t.done()
    return Case(
        name=name,
        kind=kind,
        frame=frame,
        pose=pose,
        base_xyz=base_xyz,
        base_rpy=base_rpy,
        direction=direction,
        motion=motion,
        trajectory=trajectory,
        ambient=ambient,
        tip_speed=tip_speed,
        limits=limits,
        weight_equivalent=weight,
        contacts=contacts,
        contact_share_min=float(share_min),
        payload_mass=payload_mass,
        acceleration=acceleration,
        stroke=stroke,
        tip_force=tip_force,
        fixed_load=fixed_load,
        payload_share=payload_share,
        body_region=body_region,
        life_share=life_share,
        impact_speed=impact_speed,
        restitution=restitution,
        moment=(float(moment[0]), float(moment[1]), float(moment[2])),
        offset=(float(offset[0]), float(offset[1]), float(offset[2])),
    )


def _torque_case(t: Table, robot, name: str) -> Case:
    """A joint-space case: required torque per joint by name, each joint in its power-flow mode
    (docs/project-format.md, "Torque cases")."""
    tt = t.table("torques")
    if not tt.data:
        raise InputError(t.file, t.field("torques"), "must name at least one actuated joint")
    torques = []
    for jn in list(tt.data):
        if jn not in robot.actuated:
            raise InputError(
                t.file,
                tt.field(jn),
                f"unknown actuated joint {jn!r}; the robot has {', '.join(robot.actuated)}",
            )
        revolute = robot.revolute[robot.joint_names.index(jn)]
        value = tt.quantity(jn, "torque" if revolute else "force")
        torques.append((jn, float(value)))
    tt.done()
    motion = t.text("motion", "hold", choices=MOTIONS)
    mt = t.table("motions", {})
    motions = []
    for jn, _ in torques:
        motions.append((jn, mt.text(jn, motion, choices=MOTIONS) if mt.has(jn) else motion))
    for jn in list(mt.data):
        if jn not in dict(torques):
            raise InputError(t.file, mt.field(jn), f"joint {jn!r} has no entry in torques")
    mt.done()
    limits = {"torque_ratio_min": 1.0}
    if t.has("torque_ratio_min"):
        limits["torque_ratio_min"] = t.quantity(
            "torque_ratio_min", "dimensionless", sign="positive"
        )
    t.done()
    return Case(
        name=name,
        kind="torque",
        frame=None,
        pose={},
        motion=motion,
        limits=limits,
        joint_torques=tuple(torques),
        joint_motions=tuple(motions),
    )


def _impact_shock(t: Table, limits: dict) -> tuple[float, float]:
    """An impact case's ``impact_speed`` and ``restitution`` (both or neither); ``shock_use_max``
    needs them."""
    given = [k for k in ("impact_speed", "restitution") if t.has(k)]
    if not given:
        t.allow("impact_speed", "restitution")
        if "shock_use_max" in limits:
            raise InputError(
                t.file,
                t.field("impact_speed"),
                "is required with shock_use_max (with restitution): the approach speed of the "
                "impact along direction",
            )
        return 0.0, 0.0
    if len(given) == 1:
        missing = "restitution" if given[0] == "impact_speed" else "impact_speed"
        raise InputError(
            t.file,
            t.field(missing),
            f"is required with {given[0]}: a gear-shock impact needs its approach speed and its "
            "restitution (0 = plastic, the foot stays down; 1 = elastic)",
        )
    speed = t.quantity("impact_speed", "velocity", sign="positive")
    e = t.quantity("restitution", "dimensionless", sign="nonnegative")
    if e > 1:
        raise InputError(t.file, t.field("restitution"), f"must be from 0 to 1, got {e:g}")
    return speed, e


def _body_region(t: Table) -> tuple[float, float, float] | None:
    """The user's body-region values of an impact case, all three or none.

    See docs/project-format.md.
    """
    given = [key for key, _ in BODY_REGION if t.has(key)]
    if not given:
        t.allow(*(key for key, _ in BODY_REGION))
        return None
    missing = [key for key, _ in BODY_REGION if key not in given]
    if missing:
        raise InputError(
            t.file,
            t.field(missing[0]),
            f"is required with {', '.join(given)}: a body region needs force, stiffness and mass",
        )
    force, stiffness, mass = (t.quantity(key, dim, sign="positive") for key, dim in BODY_REGION)
    return force, stiffness, mass


def _payload_requirement(t: Table, fixed_load: float, payload_share: float) -> float:
    """``payload_min`` as the force the case must reach (N): a force ("150 N") as written; a
    mass ("3 kg") is the payload the case must carry, the same reading as the payload
    objective's: fixed_load + payload_share·m·g_n (with no fixed load and share 1, the mass's
    weight). A mass needs payload_share > 0 (with 0 the load does not grow with the payload)."""
    from .units import quantity

    v = t.raw("payload_min")
    field = t.field("payload_min")
    try:
        force = quantity(v, "force", file=t.file, field=field)
    except InputError:  # not a force: a payload mass, or an error
        force = None
    if force is not None:
        if force < 0:
            raise InputError(t.file, field, f"must be >= 0 N (or kg), got {v!r}")
        return force
    try:
        mass = quantity(v, "mass", file=t.file, field=field)
    except InputError:
        raise InputError(
            t.file,
            field,
            f"must be a force (N) or a payload mass (kg, carried on top of fixed_load), got {v!r}",
        ) from None
    if mass < 0:
        raise InputError(t.file, field, f"must be >= 0 kg, got {v!r}")
    if payload_share == 0:
        raise InputError(
            t.file,
            field,
            f"a payload mass ({v!r}) needs payload_share > 0: with payload_share = 0 the load "
            "does not grow with the payload; give the force the case must reach in N",
        )
    return fixed_load + payload_share * mass * STANDARD_GRAVITY


def _force_or_weight(t: Table, key: str) -> float:
    """A load as a force ("150 N") or as a mass ("0.4 kg", its weight at standard gravity)."""
    from .units import quantity

    v = t.raw(key)
    try:
        force = quantity(v, "force", file=t.file, field=t.field(key))
    except InputError:
        try:
            force = quantity(v, "mass", file=t.file, field=t.field(key)) * STANDARD_GRAVITY
        except InputError:
            raise InputError(
                t.file,
                t.field(key),
                "must be a force (N) or a mass (kg, taken as its "
                f"weight at standard gravity), got {v!r}",
            ) from None
    if force < 0:
        raise InputError(t.file, t.field(key), f"must be >= 0 N (or kg), got {v!r}")
    return force
