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

from ..errors import InputError
from ..units import quantity
from .actuation import Mount, joint_jacobian, resolve_actuation
from .table import _BIG, BASE_JOINT, DEFAULT_GRAVITY, _build_from_table, _vec3
from .urdf import build_from_urdf

__all__ = ["BASE_JOINT", "DEFAULT_GRAVITY", "Mount", "Robot", "joint_jacobian"]


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
        model, base, specs, mimic = build_from_urdf(
            urdf,
            floating=floating,
            gravity=gravity,
            frames=frames,
            mounts=mounts,
            file=file,
            prefix=prefix,
        )
        robot = cls._finish(
            model,
            file,
            base,
            actuated,
            specs,
            f"{prefix}.actuated" if prefix else "actuated",
            unactuated=unactuated,
            included=included,
            prefix=prefix,
            mimic=mimic,
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
        fields = resolve_actuation(
            model,
            file,
            actuated,
            specs,
            act_field,
            unactuated=unactuated,
            included=included,
            prefix=prefix,
            mimic=mimic,
        )
        return cls(model, file, base, **fields)

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
            values = dict(zip(self.joint_names, seq, strict=True)) if seq else {}
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
