"""Actuated joints and where their actuators sit: the actuated list, joint roles (held or free),
actuator masses already in the model, and each actuator's mount (body, point, rotor axis).

Shared by both robot routes (URDF and the project's link/joint tables); see
:class:`jointwright.robot.model.Robot`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pinocchio as pin

from ..errors import InputError
from ..units import nonnegative
from .table import _MOUNT_KEYS, _check_keys, _required, _vec3


@dataclass(frozen=True)
class Mount:
    """Where one actuated joint's actuator mass sits.

    Attributes
    ----------
    joint : str
        The actuated joint.
    link : str
        The link (body) that carries the actuator.
    xyz : ndarray (3,)
        The point in ``link``'s frame, m.
    body_joint : int
        Pinocchio joint index whose body holds ``link`` (0 = the fixed world).
    point : ndarray (3,)
        The same point in the frame of ``body_joint``, m.
    spin_sign : int
        +1 when the carrying body is on the parent side of the joint, -1 when it moves with the
        child (the stator then turns with the child and the rotor's spin relative to it reverses).
    axis : ndarray (3,)
        Rotor axis in the frame of ``body_joint`` (unit): the joint axis, which is fixed in the
        parent and the child body; for a mount on another link, the joint axis at the neutral
        configuration (q = 0), carried by that link.
    """

    joint: str
    link: str
    xyz: np.ndarray
    body_joint: int
    point: np.ndarray
    spin_sign: int
    axis: np.ndarray


# ---------------------------------------------------------------------- actuated joints, mounts
def joint_jacobian(model, data, jid: int, frame=pin.LOCAL_WORLD_ALIGNED) -> np.ndarray:
    """6×nv Jacobian of joint ``jid``'s frame origin (linear rows first); zeros for the world.

    Needs ``pinocchio.computeJointJacobians`` on ``data`` first. Always 2-D (Pinocchio returns
    a flat vector when nv = 1).
    """
    if jid == 0:
        return np.zeros((6, model.nv))
    return np.array(pin.getJointJacobian(model, data, jid, frame)).reshape(6, model.nv)


def _is_revolute(model, jid: int) -> bool:
    """Whether 1-dof joint ``jid`` rotates (its motion subspace has an angular part)."""
    data = model.createData()
    pin.computeJointJacobians(model, data, pin.neutral(model))
    col = joint_jacobian(model, data, jid, pin.LOCAL)[:, model.joints[jid].idx_v]
    return bool(np.linalg.norm(col[3:]) > 0.5)


def _actuated_list(actuated, joint_names, model, file, field) -> tuple[str, ...]:
    if actuated is None:
        if not joint_names:
            raise InputError(file, field, "the robot has no 1-dof joint to actuate")
        return joint_names
    if isinstance(actuated, str) or not isinstance(actuated, Sequence) or not actuated:
        raise InputError(file, field, "must be a non-empty list of joint names")
    for i, name in enumerate(actuated):
        where = f"{field}[{i}]"
        if not isinstance(name, str):
            raise InputError(file, where, f"must be a joint name, got {name!r}")
        if name in actuated[:i]:
            raise InputError(file, where, f"joint {name!r} is listed twice")
        if name not in joint_names:
            known = model.existJointName(name) or model.existFrame(name, pin.FrameType.FIXED_JOINT)
            kind = "is not a 1-dof joint" if known else "is not a joint"
            raise InputError(file, where, f"{name!r} {kind} of the robot")
    return tuple(actuated)


def _check_not_followers(actuated, mimic, file, field) -> None:
    if not mimic or actuated is None or isinstance(actuated, str):
        return
    for i, name in enumerate(actuated):
        if name in mimic:
            raise InputError(
                file,
                f"{field}[{i}]",
                f"{name!r} is a mimic joint: it follows "
                f"{mimic[name][0]!r} and has no actuator of its own; size the leader",
            )


#: roles of a 1-dof joint that is not actuated (docs/robot-format.md)
UNACTUATED_ROLES = ("held", "free")


def _roles(unactuated, joint_names, actuated, mimic, file, field) -> dict[str, str]:
    """Role of every 1-dof joint not actuated: ``held`` unless the table says ``free``."""
    roles = {j: "held" for j in joint_names if j not in actuated}
    if unactuated is None:
        return roles
    if not isinstance(unactuated, Mapping):
        raise InputError(file, field, "must be a table joint -> 'held' or 'free'")
    for name, role in unactuated.items():
        where = f"{field}.{name}"
        if name in actuated:
            raise InputError(
                file,
                where,
                f"joint {name!r} is actuated; only joints left out of actuated take a role",
            )
        if name in mimic:
            raise InputError(
                file, where, f"{name!r} is a mimic joint: it follows {mimic[name][0]!r}"
            )
        if name not in joint_names:
            raise InputError(file, where, f"no 1-dof joint named {name!r} in the robot")
        if role not in UNACTUATED_ROLES:
            raise InputError(
                file, where, f"must be one of {', '.join(UNACTUATED_ROLES)}; got {role!r}"
            )
        roles[name] = role
    return roles


def _included_masses(included, actuated, file, field) -> tuple[float, ...]:
    """Per actuated joint, the actuator mass already inside the link masses (kg; 0 for none)."""
    out = dict.fromkeys(actuated, 0.0)
    if included is None:
        return tuple(out.values())
    if not isinstance(included, Mapping):
        raise InputError(file, field, 'must be a table joint -> mass (e.g. "0.6 kg") or "none"')
    for name, value in included.items():
        where = f"{field}.{name}"
        if name not in out:
            raise InputError(
                file, where, f"{name!r} is not an actuated joint; actuated: {', '.join(actuated)}"
            )
        if isinstance(value, Mapping):
            _check_keys(value, ("mass",), file, where)
            value = _required(value, "mass", file, where)
            where = f"{where}.mass"
        out[name] = 0.0 if value == "none" else nonnegative(value, "mass", file=file, field=where)
    return tuple(out.values())


def _remove_included(model, mounts, masses, file, field) -> None:
    """Take each included actuator out of its carrying body as a point mass at the mount."""
    for mount, mass in zip(mounts, masses, strict=True):
        if mass <= 0:
            continue
        body = model.inertias[mount.body_joint]
        if mount.body_joint == 0:
            raise InputError(
                file,
                f"{field}.{mount.joint}",
                f"the actuator is mounted on {mount.link}, which is part of the fixed base (the "
                "world): its mass is not in any moving link, so there is nothing to take out; "
                "leave this joint out of included (or mount the actuator on the moving side, "
                "robot.mounts)",
            )
        if mass > body.mass * (1 + 1e-12):
            have = body.mass
            raise InputError(
                file,
                f"{field}.{mount.joint}",
                f"{mass:g} kg is more than the "
                f"{have:g} kg of the body that carries the actuator ({mount.link})",
            )
        point = pin.Inertia(float(mass), mount.point.copy(), np.zeros((3, 3)))
        rest = body - point
        if rest.mass <= 1e-12 * max(body.mass, 1.0):
            rest = pin.Inertia.Zero()
        model.inertias[mount.body_joint] = rest


def _mount_specs(mounts, file, field) -> dict[str, tuple[dict, str]]:
    """URDF mount overrides: joint -> ("parent" | "child" | table), checked for unknown keys."""
    if not isinstance(mounts, Mapping):
        raise InputError(file, field, "must be a table joint -> mount")
    out = {}
    for name, spec in mounts.items():
        where = f"{field}.{name}"
        if isinstance(spec, str):
            spec = {"mount": spec}
        if not isinstance(spec, Mapping):
            raise InputError(file, where, "must be 'parent', 'child' or a table")
        _check_keys(spec, _MOUNT_KEYS, file, where)
        out[str(name)] = (dict(spec), where)
    return out


def _resolve_mount(model, joint: str, *where_spec: Any) -> Mount:
    spec, where, file = where_spec
    """Turn a mount spec (keys ``mount``, ``mount_link``, ``mount_xyz``) into a :class:`Mount`.

    Default: on the parent link at the joint origin. ``mount = "child"``: on the child link at
    the joint origin. ``mount_link``: on that link, at ``mount_xyz`` (m, link frame), which may
    be left out only when the link is rigidly attached to the joint's parent or child body.
    """
    jid = model.getJointId(joint)
    jframe = next(
        i for i, f in enumerate(model.frames) if f.type == pin.FrameType.JOINT and f.name == joint
    )
    bodies = {f.name: f for f in model.frames if f.type == pin.FrameType.BODY}
    parent_link = model.frames[model.frames[jframe].parentFrame].name
    child_link = next(n for n, f in bodies.items() if f.parentFrame == jframe)
    side = spec.get("mount", "parent")
    if not isinstance(side, str) or side not in ("parent", "child"):
        raise InputError(file, f"{where}.mount", f"must be 'parent' or 'child', got {side!r}")
    if "mount" in spec and "mount_link" in spec:
        raise InputError(file, f"{where}.mount_link", "give mount or mount_link, not both")
    link = spec.get("mount_link", parent_link if side == "parent" else child_link)
    if not isinstance(link, str):
        raise InputError(file, f"{where}.mount_link", f"must be a link name, got {link!r}")
    if link not in bodies:
        raise InputError(file, f"{where}.mount_link", f"no link named {link!r}")
    frame = bodies[link]
    body_joint = int(frame.parentJoint)
    if "mount_xyz" in spec:
        xyz = _vec3(spec["mount_xyz"], "length", file, f"{where}.mount_xyz")
        point = frame.placement.act(xyz)
    elif body_joint == jid:
        point = np.zeros(3)
        xyz = frame.placement.actInv(point)
    elif body_joint == int(model.parents[jid]):
        point = np.array(model.jointPlacements[jid].translation)
        xyz = frame.placement.actInv(point)
    else:
        rule = f"required: link {link!r} is not rigidly attached next to joint {joint!r}"
        raise InputError(file, f"{where}.mount_xyz", rule)
    with_child = body_joint != 0 and body_joint in list(model.subtrees[jid])
    return Mount(
        joint,
        link,
        np.array(xyz, float),
        body_joint,
        np.array(point, float),
        -1 if with_child else 1,
        _rotor_axis(model, jid, body_joint),
    )


def _rotor_axis(model, jid: int, body_joint: int) -> np.ndarray:
    """Joint ``jid``'s axis at q = 0 in the frame of ``body_joint`` (world frame for 0)."""
    data = model.createData()
    q0 = pin.neutral(model)
    pin.computeJointJacobians(model, data, q0)  # also places the joints at q0
    col = joint_jacobian(model, data, jid)[:, model.joints[jid].idx_v]
    axis = col[3:] if _is_revolute(model, jid) else col[:3]
    return np.array(data.oMi[body_joint].rotation).T @ axis


def resolve_actuation(
    model,
    file: str,
    actuated,
    specs: dict,
    act_field: str,
    *,
    unactuated=None,
    included=None,
    prefix: str = "robot",
    mimic=None,
) -> dict[str, Any]:
    """The robot's joints and actuation on a built model, as keyword fields of
    :class:`~jointwright.robot.model.Robot`: ``actuated``, ``mounts``, ``joint_names``,
    ``revolute``, ``link_names``, ``frame_names``, ``held``, ``free``, ``included_mass``,
    ``mimic``. Actuator masses already in the links are taken out of ``model`` at their mounts.
    """
    one_dof = [j for j in range(1, model.njoints) if model.joints[j].nv == 1]
    joint_names = tuple(model.names[j] for j in one_dof)
    mimic = dict(mimic or {})
    _check_not_followers(actuated, mimic, file, act_field)
    act = _actuated_list(actuated, joint_names, model, file, act_field)
    for name, (_, where) in specs.items():
        if name not in joint_names:
            raise InputError(file, where, f"no 1-dof joint named {name!r} in the robot")
        if name not in act:
            raise InputError(file, where, f"joint {name!r} is not actuated: no mount needed")
    at = f"{prefix}." if prefix else ""
    roles = _roles(unactuated, joint_names, act, mimic, file, f"{at}unactuated")
    mounts = tuple(_resolve_mount(model, j, *specs.get(j, ({}, j)), file) for j in act)
    inc = _included_masses(included, act, file, f"{at}included")
    _remove_included(model, mounts, inc, file, f"{at}included")
    links = tuple(f.name for f in model.frames if f.type == pin.FrameType.BODY)
    named = tuple(f.name for f in model.frames if f.type == pin.FrameType.OP_FRAME)
    return {
        "actuated": act,
        "mounts": mounts,
        "joint_names": joint_names,
        "revolute": tuple(_is_revolute(model, j) for j in one_dof),
        "link_names": links,
        "frame_names": named + links,
        "held": tuple(j for j in joint_names if roles.get(j) == "held"),
        "free": tuple(j for j in joint_names if roles.get(j) == "free"),
        "included_mass": inc,
        "mimic": tuple((f, *v) for f, v in mimic.items()),
    }
