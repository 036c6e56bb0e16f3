"""The robot: a rigid multibody tree (Pinocchio model) plus where each actuator's mass sits.

A :class:`Robot` is built from URDF text (:meth:`Robot.from_urdf`) or from the inline table of
links and joints of a project file (:meth:`Robot.from_links`, format in docs/robot-format.md).
Both routes end in the same object: a ``pinocchio.Model`` holding the link masses only, the
ordered list of actuated joints, and one :class:`Mount` per actuated joint saying on which body,
and at which point of it, that joint's actuator mass is carried.

Conventions: SI units; a joint's origin (``xyz``, ``rpy``) places the joint frame in the parent
link's frame and the child link's frame coincides with the joint frame (as in URDF); ``rpy`` is
roll-pitch-yaw about fixed x, y, z, i.e. R = Rz(yaw)·Ry(pitch)·Rx(roll). A floating base is
Pinocchio's free-flyer joint: q = [x, y, z, qx, qy, qz, qw, joints...] and the first six
velocities are the base's linear and angular velocity expressed in the base frame.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pinocchio as pin

from ..errors import InputError, check_keys
from ..units import nonnegative, positive, quantity
from .urdf import read_urdf

#: gravity used when a file gives none (m/s², world frame)
DEFAULT_GRAVITY = (0.0, 0.0, -9.81)
#: name Pinocchio gives the free-flyer joint of a floating base
BASE_JOINT = "root_joint"

_ROBOT_KEYS = (
    "name",
    "base",
    "gravity",
    "links",
    "joints",
    "frames",
    "actuated",
    "unactuated",
    "included",
)
_LINK_KEYS = ("name", "mass", "com", "inertia", "shape", "length", "along", "size")
_JOINT_KEYS = ("name", "type", "parent", "child", "xyz", "rpy", "axis", "lower", "upper")
_MOUNT_KEYS = ("mount", "mount_link", "mount_xyz")
_FRAME_KEYS = ("name", "link", "xyz")
_BIG = float(np.finfo(float).max)


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


@dataclass(frozen=True, eq=False)
class Robot:
    """A robot model: link-only Pinocchio model, actuated joints and actuator mounts.

    Build it with :meth:`from_urdf` or :meth:`from_links`; treat ``model`` as read-only.

    Attributes
    ----------
    model : pinocchio.Model
        Links only (no actuator masses); gravity set.
    file : str
        The file the robot came from (used in messages).
    base : str
        ``"fixed"`` or ``"floating"``.
    actuated : tuple of str
        Actuated joint names, in design order.
    mounts : tuple of Mount
        One per actuated joint, same order.
    joint_names : tuple of str
        Every one-degree-of-freedom joint, in model order.
    revolute : tuple of bool
        Per entry of ``joint_names``: True for revolute (rad), False for prismatic (m).
    link_names : tuple of str
        Links (body frames), in model order.
    frame_names : tuple of str
        Points a case may name: the named frames (tool and foot points) first, then every link
        (its frame origin).
    held : tuple of str
        1-dof joints that are not actuated and do not move: locked by structure or a brake, their
        torque taken by the structure (the default role of a joint left out of ``actuated``).
    free : tuple of str
        1-dof joints that are not actuated and move without torque (sliders, passive hinges).
    included_mass : tuple of float
        Per actuated joint, the actuator mass (kg) that the link masses already held and that was
        taken out of ``model`` at the mount (0 for none).
    mimic : tuple of (follower, leader, multiplier, offset)
        URDF ``<mimic>`` joints: they follow their leader (q_f = multiplier·q_l + offset) and have
        no degree of freedom of their own.
    """

    model: Any = field(repr=False)
    file: str
    base: str
    actuated: tuple[str, ...]
    mounts: tuple[Mount, ...] = field(repr=False)
    joint_names: tuple[str, ...]
    revolute: tuple[bool, ...] = field(repr=False)
    link_names: tuple[str, ...]
    frame_names: tuple[str, ...]
    held: tuple[str, ...] = ()
    free: tuple[str, ...] = ()
    included_mass: tuple[float, ...] = ()
    mimic: tuple[tuple[str, str, float, float], ...] = ()

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_urdf(
        cls,
        path: str,
        *,
        floating: bool | None = None,
        actuated: Sequence[str] | None = None,
        mounts: Mapping[str, Any] | None = None,
        unactuated: Mapping[str, Any] | None = None,
        included: Mapping[str, Any] | None = None,
        frames: Sequence[Mapping[str, Any]] | None = None,
        gravity: Sequence[Any] | None = None,
        file_for_messages: str | None = None,
        file: str | None = None,
        prefix: str = "",
    ) -> Robot:
        """Read a URDF file.

        Parameters
        ----------
        path : str
            URDF file.
        floating : bool, optional
            Give the root link a free-flyer joint (legged robots, mobile bases). Default: floating
            when the URDF declares its own floating joint (which is then replaced by ours), else
            fixed.
        actuated : list of str, optional
            Actuated joints in design order; default every 1-dof joint in model order.
        unactuated : dict, optional
            Joint name -> ``"held"`` (locked by structure or a brake) or ``"free"`` (moves without
            torque) for 1-dof joints not in ``actuated``; default ``"held"``.
        included : dict, optional
            Actuated joint -> actuator mass already inside the link masses (a quantity, or
            ``"none"``); it is taken out at the joint's mount so the sized actuator replaces it.
        mounts : dict, optional
            Joint name -> ``"parent"``, ``"child"`` or a table with keys ``mount``,
            ``mount_link``, ``mount_xyz`` (docs/robot-format.md). Default: on the parent link at
            the joint origin.
        frames : list of dict, optional
            Extra named points ``{name, link, xyz}`` (xyz in m, in the link's frame).
        gravity : 3 quantities, optional
            World gravity, m/s²; default ``[0, 0, -9.81]``.
        file_for_messages, file : str, optional
            The file that holds ``actuated``, ``mounts``, ``frames`` and ``gravity`` (usually the
            project file), named in their error messages; default ``path``. ``file`` is a short
            alias. Errors in the URDF itself always name ``path``.
        prefix : str
            Dotted path of those keys inside ``file`` (e.g. ``"robot"``), for messages.
        """
        urdf = str(path)
        file = str(file_for_messages or file or urdf)
        at = f"{prefix}." if prefix else ""
        prepared = read_urdf(urdf)
        if prepared.floating_joint is not None:
            if floating is False:
                raise InputError(
                    file,
                    f"{at}base",
                    f"is 'fixed', but {urdf} declares the floating "
                    f'joint {prepared.floating_joint!r}: write base = "floating" or '
                    "leave base out",
                )
            floating = True
        try:
            if floating:
                model = pin.buildModelFromXML(prepared.text, pin.JointModelFreeFlyer(), mimic=True)
            else:
                model = pin.buildModelFromXML(prepared.text, mimic=True)
        except (ValueError, RuntimeError) as exc:
            raise InputError(urdf, "urdf", f"not a valid URDF model ({exc})") from None
        g = DEFAULT_GRAVITY if gravity is None else gravity
        model.gravity.linear = _vec3(g, "acceleration", file, f"{at}gravity")
        _add_frames(model, frames or (), file, f"{at}frames")
        specs = {} if mounts is None else _mount_specs(mounts, file, f"{at}mounts")
        base = "floating" if floating else "fixed"
        robot = cls._finish(
            model,
            file,
            base,
            actuated,
            specs,
            f"{at}actuated",
            unactuated=unactuated,
            included=included,
            prefix=prefix,
            mimic=prepared.mimic,
        )
        return dataclasses.replace(robot, file=urdf)

    @classmethod
    def from_links(cls, table: Mapping[str, Any], *, file: str, prefix: str = "robot") -> Robot:
        """Build a robot from the inline table of a project file (format: docs/robot-format.md).

        Parameters
        ----------
        table : dict
            The robot table: ``base``, ``gravity``, ``links``, ``joints``, ``frames``,
            ``actuated``, ``name``.
        file : str
            File name for messages.
        prefix : str
            Dotted path of ``table`` inside the file, for messages.
        """
        model, base, specs = _build_from_table(table, file, prefix)
        return cls._finish(
            model,
            file,
            base,
            table.get("actuated"),
            specs,
            f"{prefix}.actuated",
            unactuated=table.get("unactuated"),
            included=table.get("included"),
            prefix=prefix,
        )

    @classmethod
    def _finish(
        cls,
        model,
        file,
        base,
        actuated,
        specs,
        act_field,
        *,
        unactuated=None,
        included=None,
        prefix="robot",
        mimic=None,
    ) -> Robot:
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
        revolute = tuple(_is_revolute(model, j) for j in one_dof)
        held = tuple(j for j in joint_names if roles.get(j) == "held")
        free = tuple(j for j in joint_names if roles.get(j) == "free")
        return cls(
            model,
            file,
            base,
            act,
            mounts,
            joint_names,
            revolute,
            links,
            named + links,
            held=held,
            free=free,
            included_mass=inc,
            mimic=tuple((f, *v) for f, v in mimic.items()),
        )

    # ------------------------------------------------------------------ sizes and names
    @property
    def nq(self) -> int:
        """Configuration size."""
        return int(self.model.nq)

    @property
    def nv(self) -> int:
        """Velocity (degrees of freedom) size, base included."""
        return int(self.model.nv)

    @property
    def n_base(self) -> int:
        """6 for a floating base, 0 for a fixed one."""
        return 6 if self.base == "floating" else 0

    @property
    def n_act(self) -> int:
        """Number of actuated joints."""
        return len(self.actuated)

    @property
    def v_index(self) -> np.ndarray:
        """Velocity index of each actuated joint, shape (n_act,)."""
        return np.array([self._joint(n).idx_v for n in self.actuated], dtype=int)

    @property
    def link_mass_total(self) -> float:
        """Sum of the link masses (actuators excluded), kg."""
        return float(sum(inertia.mass for inertia in self.model.inertias))

    @property
    def gravity(self) -> np.ndarray:
        """World gravity vector, m/s², shape (3,)."""
        return np.array(self.model.gravity.linear, dtype=float)

    def position_limits(self, joint: str) -> tuple[float, float]:
        """(lower, upper) position limit of a 1-dof joint, rad or m; ±inf when not given."""
        jm = self._joint(joint)
        if jm.nq != 1:
            return (-math.inf, math.inf)
        lo = float(self.model.lowerPositionLimit[jm.idx_q])
        hi = float(self.model.upperPositionLimit[jm.idx_q])
        return (-math.inf if lo <= -_BIG else lo, math.inf if hi >= _BIG else hi)

    def rest_position(self, joint: str) -> float:
        """Position a pose gives a joint it does not list: 0 when inside the joint's limits, else
        the middle of its limits (rad or m)."""
        lo, hi = self.position_limits(joint)
        if lo <= 0.0 <= hi:
            return 0.0
        return (
            0.5 * (lo + hi) if math.isfinite(lo) and math.isfinite(hi) else (lo if lo > 0 else hi)
        )

    def joint_limits(self, joint: str) -> dict[str, float]:
        """Limits a URDF gives a 1-dof joint: ``lower``, ``upper`` (rad or m), ``effort``
        (N·m or N), ``velocity`` (rad/s or m/s); ±inf (or inf) where none is given."""
        lo, hi = self.position_limits(joint)
        jm = self._joint(joint)
        eff = float(self.model.effortLimit[jm.idx_v])
        vel = float(self.model.velocityLimit[jm.idx_v])
        return {
            "lower": lo,
            "upper": hi,
            "effort": eff if 0 < eff < _BIG else math.inf,
            "velocity": vel if 0 < vel < _BIG else math.inf,
        }

    def role(self, joint: str) -> str:
        """``"actuated"``, ``"held"`` or ``"free"`` for a 1-dof joint."""
        if joint in self.actuated:
            return "actuated"
        return "free" if joint in self.free else "held"

    @property
    def joint_v_index(self) -> np.ndarray:
        """Velocity index of every 1-dof joint (``joint_names`` order), shape (n_joints,)."""
        return np.array([self._joint(n).idx_v for n in self.joint_names], dtype=int)

    def frame_id(self, name: str, *, file: str = "<api>", field: str = "frames") -> int:
        """Pinocchio frame index of a named frame, link or joint (in that order of preference)."""
        for kind in (pin.FrameType.OP_FRAME, pin.FrameType.BODY, pin.FrameType.JOINT):
            for i, f in enumerate(self.model.frames):
                if f.name == name and f.type == kind:
                    return i
        raise InputError(file, field, f"no frame, link or joint named {name!r} in {self.file}")

    def _joint(self, name: str, file: str = "<api>", field: str = "joint"):
        if name not in self.joint_names:
            raise InputError(file, field, f"no 1-dof joint named {name!r} in {self.file}")
        return self.model.joints[self.model.getJointId(name)]

    # ------------------------------------------------------------------ configurations
    def configuration(
        self,
        joint_values: Mapping[str, Any] | Sequence[Any] = (),
        base_xyz: Sequence[Any] = (0.0, 0.0, 0.0),
        base_rpy: Sequence[Any] = (0.0, 0.0, 0.0),
        *,
        file: str = "<api>",
        field: str = "pose",
    ) -> np.ndarray:
        """Configuration vector q (nq,) from joint values and, for a floating base, its pose.

        Parameters
        ----------
        joint_values : dict name -> value, or sequence
            rad (revolute) or m (prismatic), numbers or quantities ("30 deg"). A dict may leave
            joints out (they stay at 0); a sequence lists every joint of ``joint_names``.
        base_xyz : 3 quantities, m
            Floating base position in the world (ignored for a fixed base).
        base_rpy : 3 quantities, rad
            Floating base orientation, R = Rz(yaw)·Ry(pitch)·Rx(roll).
        """
        q = pin.neutral(self.model)
        for name in self.joint_names:
            rest = self.rest_position(name)
            if rest != 0.0:
                q[self._joint(name).idx_q] = rest
        if isinstance(joint_values, Mapping):
            values = dict(joint_values)
        else:
            seq = list(joint_values)
            if seq and len(seq) != len(self.joint_names):
                rule = f"needs {len(self.joint_names)} joint values, got {len(seq)}"
                raise InputError(file, field, rule)
            values = dict(zip(self.joint_names, seq, strict=True))
        for name, value in values.items():
            jm = self._joint(name, file, f"{field}.{name}")
            dim = "angle" if self.revolute[self.joint_names.index(name)] else "length"
            x = quantity(value, dim, file=file, field=f"{field}.{name}")
            if jm.nq == 2:  # continuous joint stored as (cos, sin)
                q[jm.idx_q : jm.idx_q + 2] = (math.cos(x), math.sin(x))
            else:
                q[jm.idx_q] = x
        if self.n_base:
            q[:3] = _vec3(base_xyz, "length", file, f"{field}.base_xyz")
            rpy = _vec3(base_rpy, "angle", file, f"{field}.base_rpy")
            q[3:7] = pin.Quaternion(pin.rpy.rpyToMatrix(*rpy)).coeffs()
        return q

    def joint_axis_world(self, q: np.ndarray) -> np.ndarray:
        """Unit axis of each actuated joint in the world frame at ``q``, shape (n_act, 3)."""
        data = self.model.createData()
        pin.computeJointJacobians(self.model, data, np.asarray(q, dtype=float))
        out = np.empty((self.n_act, 3))
        for k, name in enumerate(self.actuated):
            jm = self._joint(name)
            col = joint_jacobian(self.model, data, jm.id)[:, jm.idx_v]
            out[k] = col[3:] if self.revolute[self.joint_names.index(name)] else col[:3]
        return out

    # ------------------------------------------------------------------ actuator masses
    def with_actuator_masses(self, masses: Sequence[float]) -> Any:
        """A copy of the model with each actuator as a point mass at its mount.

        Parameters
        ----------
        masses : sequence of float, kg, shape (n_act,), each >= 0

        Returns
        -------
        pinocchio.Model
            For inverse dynamics (``pinocchio.rnea``) on trajectories.
        """
        m = np.asarray(masses, dtype=float)
        if m.shape != (self.n_act,):
            raise InputError("<api>", "masses", f"needs shape ({self.n_act},), got {m.shape}")
        if not np.all(np.isfinite(m)) or np.any(m < 0):
            raise InputError("<api>", "masses", "must be finite and >= 0 kg")
        model = pin.Model(self.model)
        for mount, mass in zip(self.mounts, m, strict=True):
            if mass > 0:
                body = pin.Inertia(float(mass), mount.point.copy(), np.zeros((3, 3)))
                model.appendBodyToJoint(mount.body_joint, body, pin.SE3.Identity())
        return model


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
        if mount.body_joint == 0 or mass > body.mass * (1 + 1e-12):
            have = 0.0 if mount.body_joint == 0 else body.mass
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


# ---------------------------------------------------------------------- value parsing
def _check_keys(entry: Mapping, allowed: Sequence[str], file: str, where: str) -> None:
    check_keys(entry, allowed, file, where)


def _table(entry: Any, file: str, where: str) -> Mapping:
    if not isinstance(entry, Mapping):
        raise InputError(file, where, f"must be a table, got {type(entry).__name__}")
    return entry


def _required(entry: Mapping, key: str, file: str, where: str) -> Any:
    if key not in entry:
        raise InputError(file, f"{where}.{key}", "required")
    return entry[key]


def _name(entry: Mapping, file: str, where: str) -> str:
    name = _required(entry, "name", file, where)
    if not isinstance(name, str) or not name.strip():
        raise InputError(file, f"{where}.name", f"must be a non-empty string, got {name!r}")
    return name


def _vec3(value: Any, dim: str, file: str, where: str) -> np.ndarray:
    """Three quantities of dimension ``dim`` -> float array (3,) in SI."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, (str, Mapping)) or not isinstance(value, Sequence) or len(value) != 3:
        raise InputError(file, where, f"must be a list of 3 numbers or quantities, got {value!r}")
    return np.array(
        [quantity(v, dim, file=file, field=f"{where}[{i}]") for i, v in enumerate(value)]
    )


def _list_of_tables(table: Mapping, key: str, file: str, where: str, *, required: bool) -> list:
    value = table.get(key, [])
    if required and not value:
        raise InputError(file, f"{where}.{key}", "required: at least one entry")
    if not isinstance(value, list):
        raise InputError(file, f"{where}.{key}", "must be a list of tables ([[...]] in TOML)")
    return [_table(v, file, f"{where}.{key}[{i}]") for i, v in enumerate(value)]


# ---------------------------------------------------------------------- links and inertia
def _link_inertia(entry: Mapping, file: str, where: str) -> pin.Inertia:
    """Spatial inertia of one link table: mass (> 0), centre of mass, rotational inertia."""
    _check_keys(entry, _LINK_KEYS, file, where)
    mass = positive(_required(entry, "mass", file, where), "mass", file=file, field=f"{where}.mass")
    com = _vec3(entry.get("com", (0, 0, 0)), "length", file, f"{where}.com")
    if ("inertia" in entry) == ("shape" in entry):
        raise InputError(file, f"{where}.inertia", "give exactly one of inertia or shape")
    if "inertia" in entry:
        for key in ("length", "along", "size"):
            if key in entry:
                raise InputError(file, f"{where}.{key}", "only with shape, not with inertia")
        rot = _inertia_matrix(entry["inertia"], file, f"{where}.inertia")
    else:
        rot = _shape_inertia(entry, mass, file, where)
    return pin.Inertia(mass, com, rot)


def _inertia_matrix(value: Any, file: str, where: str) -> np.ndarray:
    """A diagonal [Ixx, Iyy, Izz] or a full 3×3 list, kg·m² about the centre of mass."""
    if isinstance(value, list) and len(value) == 3 and all(isinstance(r, list) for r in value):
        rows = [_vec3(r, "inertia", file, f"{where}[{i}]") for i, r in enumerate(value)]
        rot = np.array(rows)
    elif isinstance(value, list) and len(value) == 3:
        rot = np.diag(_vec3(value, "inertia", file, where))
    else:
        raise InputError(file, where, "must be [Ixx, Iyy, Izz] or a 3×3 list of rows")
    scale = max(float(np.abs(rot).max()), 1e-300)
    tol = 1e-9 * scale
    if not np.allclose(rot, rot.T, rtol=0.0, atol=tol):
        raise InputError(file, where, "must be symmetric")
    moments = np.linalg.eigvalsh(0.5 * (rot + rot.T))
    if moments[0] < -tol:
        raise InputError(file, where, "must be positive semidefinite (a principal moment < 0)")
    if moments[2] > moments[0] + moments[1] + tol:
        rule = "principal moments break the triangle inequality (I1 + I2 >= I3)"
        raise InputError(file, where, rule)
    return 0.5 * (rot + rot.T)


def _shape_inertia(entry: Mapping, mass: float, file: str, where: str) -> np.ndarray:
    """Rotational inertia about the centre of mass of a point, thin rod or solid box."""
    shape = entry["shape"]
    allowed = {"point": (), "rod": ("length", "along"), "box": ("size",)}
    if shape not in allowed:
        raise InputError(file, f"{where}.shape", f"must be point, rod or box, got {shape!r}")
    for key in ("length", "along", "size"):
        if key in entry and key not in allowed[shape]:
            raise InputError(file, f"{where}.{key}", f"not a field of shape {shape!r}")
    if shape == "point":
        return np.zeros((3, 3))
    if shape == "rod":  # thin rod: m·L²/12 about both transverse axes, 0 about its own
        length = positive(
            _required(entry, "length", file, where), "length", file=file, field=f"{where}.length"
        )
        along = entry.get("along", "x")
        if along not in ("x", "y", "z"):
            raise InputError(file, f"{where}.along", f"must be x, y or z, got {along!r}")
        diag = np.full(3, mass * length**2 / 12.0)
        diag["xyz".index(along)] = 0.0
        return np.diag(diag)
    size = _vec3(_required(entry, "size", file, where), "length", file, f"{where}.size")
    if np.any(size <= 0):
        raise InputError(file, f"{where}.size", "every side must be > 0 m")
    a2 = size**2  # solid box: Ixx = m(b² + c²)/12, ...
    return np.diag(mass / 12.0 * (a2.sum() - a2))


# ---------------------------------------------------------------------- joints and the tree
def _joint_entry(entry: Mapping, file: str, where: str) -> dict:
    """Parse one joint table to plain SI values (tree checks come later)."""
    _check_keys(entry, _JOINT_KEYS + _MOUNT_KEYS, file, where)
    name = _name(entry, file, where)
    kind = _required(entry, "type", file, where)
    if kind not in ("revolute", "prismatic", "fixed"):
        rule = f"must be revolute, prismatic or fixed, got {kind!r}"
        raise InputError(file, f"{where}.type", rule)
    out = {"name": name, "type": kind, "where": where}
    for key in ("parent", "child"):
        value = _required(entry, key, file, where)
        if not isinstance(value, str):
            raise InputError(file, f"{where}.{key}", f"must be a link name, got {value!r}")
        out[key] = value
    out["xyz"] = _vec3(entry.get("xyz", (0, 0, 0)), "length", file, f"{where}.xyz")
    out["rpy"] = _vec3(entry.get("rpy", (0, 0, 0)), "angle", file, f"{where}.rpy")
    if kind == "fixed":
        for key in ("axis", "lower", "upper") + _MOUNT_KEYS:
            if key in entry:
                raise InputError(file, f"{where}.{key}", "not a field of a fixed joint")
        return out
    axis = _vec3(_required(entry, "axis", file, where), "dimensionless", file, f"{where}.axis")
    norm = float(np.linalg.norm(axis))
    if norm < 1e-9:
        raise InputError(file, f"{where}.axis", "must not be the zero vector")
    out["axis"] = axis / norm
    dim = "angle" if kind == "revolute" else "length"
    lim = [
        quantity(entry[k], dim, file=file, field=f"{where}.{k}") if k in entry else None
        for k in ("lower", "upper")
    ]
    if lim[0] is not None and lim[1] is not None and not lim[0] < lim[1]:
        raise InputError(file, f"{where}.upper", f"must be > lower ({lim[0]:g})")
    out["lower"] = -_BIG if lim[0] is None else lim[0]
    out["upper"] = _BIG if lim[1] is None else lim[1]
    out["mount_spec"] = {k: entry[k] for k in _MOUNT_KEYS if k in entry}
    return out


def _joint_model(kind: str, axis: np.ndarray):
    """Pinocchio joint model; axis-aligned joints get the specialised (faster) models."""
    for i, letter in enumerate("XYZ"):
        if np.allclose(axis, np.eye(3)[i], atol=1e-12):
            return getattr(pin, f"JointModel{'R' if kind == 'revolute' else 'P'}{letter}")()
    if kind == "revolute":
        return pin.JointModelRevoluteUnaligned(axis)
    return pin.JointModelPrismaticUnaligned(axis)


def _tree_order(links: dict, joints: list[dict], file: str, where: str) -> tuple[str, list[dict]]:
    """Root link and the joints in depth-first order; reject loops, cycles and strays."""
    parent_of: dict[str, dict] = {}
    for j in joints:
        for key in ("parent", "child"):
            if j[key] not in links:
                raise InputError(file, f"{j['where']}.{key}", f"no link named {j[key]!r}")
        if j["parent"] == j["child"]:
            raise InputError(file, f"{j['where']}.child", "a joint cannot join a link to itself")
        if j["child"] in parent_of:
            rule = f"link {j['child']!r} is already the child of {parent_of[j['child']]['name']!r}"
            raise InputError(file, f"{j['where']}.child", rule + " (closed loops are not trees)")
        parent_of[j["child"]] = j
    roots = [name for name in links if name not in parent_of]
    if len(roots) != 1:
        rule = "the links form a cycle" if not roots else f"several root links {roots}"
        raise InputError(file, f"{where}.joints", f"must form one tree: {rule}")
    # depth-first preorder of the joints: Pinocchio needs every subtree's joints contiguous
    # (its algorithms walk a joint's subtree as a range of indices)
    children: dict[str, list[dict]] = {}
    for j in joints:
        children.setdefault(j["parent"], []).append(j)
    order, stack = [], list(reversed(children.get(roots[0], [])))
    while stack:
        j = stack.pop()
        order.append(j)
        stack.extend(reversed(children.get(j["child"], [])))
    if len(order) != len(joints):
        stray = next(j for j in joints if j not in order)
        raise InputError(file, f"{stray['where']}.parent", "the links form a cycle")
    return roots[0], order


def _build_from_table(table: Any, file: str, prefix: str):
    """Robot table -> (pinocchio.Model, base, mount specs). See docs/robot-format.md."""
    table = _table(table, file, prefix)
    _check_keys(table, _ROBOT_KEYS, file, prefix)
    base = _required(table, "base", file, prefix)
    if base not in ("fixed", "floating"):
        raise InputError(file, f"{prefix}.base", f"must be 'fixed' or 'floating', got {base!r}")
    links: dict[str, pin.Inertia] = {}
    used: dict[str, str] = {"universe": "reserved", BASE_JOINT: "reserved"}
    for i, entry in enumerate(_list_of_tables(table, "links", file, prefix, required=True)):
        where = f"{prefix}.links[{i}]"
        name = _unique(_name(entry, file, where), used, file, where)
        links[name] = _link_inertia(entry, file, where)
    joints = []
    for i, entry in enumerate(_list_of_tables(table, "joints", file, prefix, required=False)):
        where = f"{prefix}.joints[{i}]"
        joints.append(_joint_entry(entry, file, where))
        _unique(joints[-1]["name"], used, file, where)
    root, order = _tree_order(links, joints, file, prefix)
    model = pin.Model()
    model.name = str(table.get("name", "robot"))
    model.gravity.linear = _vec3(
        table.get("gravity", DEFAULT_GRAVITY), "acceleration", file, f"{prefix}.gravity"
    )
    place = {root: _attach_root(model, root, links[root], base == "floating")}
    for j in order:
        place[j["child"]] = _attach_joint(model, j, place[j["parent"]], links[j["child"]])
    _add_frames(
        model,
        _list_of_tables(table, "frames", file, prefix, required=False),
        file,
        f"{prefix}.frames",
    )
    specs = {j["name"]: (j["mount_spec"], j["where"]) for j in joints if j.get("mount_spec")}
    return model, base, specs


def _unique(name: str, used: dict[str, str], file: str, where: str) -> str:
    if name in used:
        raise InputError(file, f"{where}.name", f"name {name!r} is already used ({used[name]})")
    used[name] = where
    return name


def _attach_root(model, name: str, inertia, floating: bool):
    """Root link on the world (fixed base) or on a free-flyer joint; returns its placement."""
    jid, frame = 0, 0
    if floating:
        jid = model.addJoint(0, pin.JointModelFreeFlyer(), pin.SE3.Identity(), BASE_JOINT)
        frame = model.addJointFrame(jid, 0)
    model.appendBodyToJoint(jid, inertia, pin.SE3.Identity())
    return jid, pin.SE3.Identity(), model.addBodyFrame(name, jid, pin.SE3.Identity(), frame)


def _attach_joint(model, j: dict, parent_place, inertia):
    """Add joint ``j`` below its parent link and its child link; returns the child's placement."""
    pjid, p_in_joint, pframe = parent_place
    origin = p_in_joint * pin.SE3(pin.rpy.rpyToMatrix(*j["rpy"]), j["xyz"])
    if j["type"] == "fixed":
        fixed = pin.Frame(j["name"], pjid, pframe, origin, pin.FrameType.FIXED_JOINT)
        frame = model.addFrame(fixed)
        model.appendBodyToJoint(pjid, inertia, origin)
        return pjid, origin, model.addBodyFrame(j["child"], pjid, origin, frame)
    one = np.ones(1)
    jid = model.addJoint(
        pjid,
        _joint_model(j["type"], j["axis"]),
        origin,
        j["name"],
        _BIG * one,
        _BIG * one,
        j["lower"] * one,
        j["upper"] * one,
    )
    frame = model.addJointFrame(jid, pframe)
    model.appendBodyToJoint(jid, inertia, pin.SE3.Identity())
    return jid, pin.SE3.Identity(), model.addBodyFrame(j["child"], jid, pin.SE3.Identity(), frame)


def _add_frames(model, frames: Sequence[Mapping], file: str, where: str) -> None:
    """Named points ``{name, link, xyz}`` as operational frames on their link's body."""
    if isinstance(frames, Mapping) or not isinstance(frames, Sequence):
        raise InputError(file, where, "must be a list of tables {name, link, xyz}")
    bodies = {f.name: (i, f) for i, f in enumerate(model.frames) if f.type == pin.FrameType.BODY}
    for i, entry in enumerate(frames):
        at = f"{where}[{i}]"
        entry = _table(entry, file, at)
        _check_keys(entry, _FRAME_KEYS, file, at)
        name = _name(entry, file, at)
        if model.existFrame(name) or model.existJointName(name):
            raise InputError(file, f"{at}.name", f"name {name!r} is already used in the robot")
        link = _required(entry, "link", file, at)
        if link not in bodies:
            raise InputError(file, f"{at}.link", f"no link named {link!r}")
        xyz = _vec3(_required(entry, "xyz", file, at), "length", file, f"{at}.xyz")
        fid, body = bodies[link]
        placement = body.placement * pin.SE3(np.eye(3), xyz)
        model.addFrame(pin.Frame(name, body.parentJoint, fid, placement, pin.FrameType.OP_FRAME))
