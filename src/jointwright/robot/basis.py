"""Per-pose terms of the mass matrix and gravity vector that are linear in the actuator masses.

At a pose q the joint-space mass matrix and gravity vector of the robot with its actuators are

    H(q; m) = M0(q) + Σ_k m_k·Jp_kᵀ·Jp_k,        g(q; m) = g0(q) − Σ_k m_k·Jp_kᵀ·g_vec,

with M0, g0 the link-only terms and Jp_k the 3×nv Jacobian of actuator k's mount point (world
axes). :func:`pose_basis` computes M0, g0 and one basis term per actuator per kilogram once per
pose with Pinocchio; :func:`mass_matrix` and :func:`gravity` then assemble any number of designs
in a few array operations, without further Pinocchio calls. Actuators are point masses: their
own rotational inertia enters only through the rotor terms below.

Rotor terms. The caller adds the diagonal reflected inertia of each actuated joint (e.g.
η_f·N²·I_r motoring or N²·I_r/η_b back-driven). With ``coupling=True`` the rotor's spin with its
stator body is added too: the rotor of joint k turns at ω_k = w_k·q̇ + s_k·N_k·q̇_k about the
joint axis, where w_k·q̇ is the stator (mount) body's angular velocity about that axis, N_k the
signed ratio and s_k = ±1 the mount side (the rotor axis is fixed in the stator body; see
:class:`~jointwright.robot.model.Mount`). Its kinetic energy ½·I_r·ω_k² gives, beyond N²·I_r on
the diagonal,

    ΔH = I_r·s_k·N_k·(e_k·w_k + w_kᵀ·e_kᵀ) + I_r·w_kᵀ·w_k,

frictionless (efficiencies do not scale it). It matters when N is small; for large N the
diagonal term dominates.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pinocchio as pin

from ..errors import InputError
from .model import Robot, joint_jacobian


@dataclass(frozen=True, eq=False)
class _Terms:
    q: np.ndarray
    M0: np.ndarray
    g0: np.ndarray
    M_mass: np.ndarray
    g_mass: np.ndarray
    axis_rate: np.ndarray
    J: np.ndarray
    frame_positions: np.ndarray
    frames: tuple[str, ...]
    v_index: np.ndarray
    spin_sign: np.ndarray


@dataclass(frozen=True, eq=False)
class PoseBasis(_Terms):
    """Link-only terms and per-kilogram actuator terms at one pose.

    Attributes
    ----------
    q : ndarray (nq,)
        The configuration.
    M0 : ndarray (nv, nv)
        Link-only mass matrix (kg·m², kg or kg·m by joint kinds), symmetric.
    g0 : ndarray (nv,)
        Link-only generalized gravity, N·m or N.
    M_mass : ndarray (n_act, nv, nv)
        Mass matrix per kg of actuator k at its mount: Jp_kᵀ·Jp_k.
    g_mass : ndarray (n_act, nv)
        Gravity per kg of actuator k: −Jp_kᵀ·g_vec.
    axis_rate : ndarray (n_act, nv)
        Row w_k: the angular velocity of actuator k's stator body about its rotor axis is w_k·q̇
        (the parent body about joint k's axis for the default mount).
    J : ndarray (n_frames, 6, nv)
        Jacobians of the requested frames' origins, world-aligned axes, linear rows first.
    frame_positions : ndarray (n_frames, 3)
        World positions of the requested frames, m.
    frames : tuple of str
        The requested frames, in order.
    v_index : ndarray (n_act,)
        Velocity index of each actuated joint.
    spin_sign : ndarray (n_act,)
        s_k: +1 when the stator is on the parent side, −1 when it moves with the child.
    """


@dataclass(frozen=True, eq=False)
class PoseBases(_Terms):
    """The fields of :class:`PoseBasis` stacked over P poses (leading dimension P).

    ``q (P, nq)``, ``M0 (P, nv, nv)``, ``g0 (P, nv)``, ``M_mass (P, n_act, nv, nv)``,
    ``g_mass (P, n_act, nv)``, ``axis_rate (P, n_act, nv)``, ``J (P, n_frames, 6, nv)``,
    ``frame_positions (P, n_frames, 3)``; ``frames``, ``v_index``, ``spin_sign`` shared.
    """

    @property
    def n_poses(self) -> int:
        """Number of poses P."""
        return int(self.M0.shape[0])


_STACKED = ("q", "M0", "g0", "M_mass", "g_mass", "axis_rate", "J", "frame_positions")


def _symmetric(m: np.ndarray) -> np.ndarray:
    """Upper triangle mirrored: Pinocchio releases differ on filling the lower one."""
    return np.triu(m) + np.triu(m, 1).T


def pose_basis(robot: Robot, q: np.ndarray, frames: Sequence[str] = ()) -> PoseBasis:
    """Compute the link-only terms and the per-kilogram actuator terms at pose ``q``.

    Parameters
    ----------
    robot : Robot
    q : ndarray (nq,)
        Configuration (see :meth:`Robot.configuration`).
    frames : list of str
        Named frames, links or joints whose Jacobians and positions to keep.

    Returns
    -------
    PoseBasis
    """
    model = robot.model
    q = np.asarray(q, dtype=float)
    if q.shape != (model.nq,) or not np.all(np.isfinite(q)):
        raise InputError("<api>", "q", f"needs {model.nq} finite values, got shape {q.shape}")
    if not pin.isNormalized(model, q, 1e-9):
        rule = "the base quaternion and continuous joints (cos, sin) must have unit norm"
        raise InputError("<api>", "q", rule)
    fids = [robot.frame_id(name) for name in frames]
    data = model.createData()
    M0 = _symmetric(pin.crba(model, data, q))
    g0 = np.array(pin.computeGeneralizedGravity(model, data, q))
    pin.computeJointJacobians(model, data, q)
    pin.updateFramePlacements(model, data)
    nv, n_act = model.nv, robot.n_act
    jp = np.empty((n_act, 3, nv))
    rate = np.empty((n_act, nv))
    for k, mount in enumerate(robot.mounts):
        jac = joint_jacobian(model, data, mount.body_joint)
        place = data.oMi[mount.body_joint]
        lever = place.rotation @ mount.point  # from the body's joint origin to the mount
        jp[k] = jac[:3] - pin.skew(lever) @ jac[3:]  # v_p = v_o + ω × (p − o)
        rate[k] = (place.rotation @ mount.axis) @ jac[3:]
    J = np.array(
        [
            np.reshape(pin.getFrameJacobian(model, data, f, pin.LOCAL_WORLD_ALIGNED), (6, nv))
            for f in fids
        ]
    )
    pos = np.array([data.oMf[f].translation for f in fids])
    return PoseBasis(
        q=q.copy(),
        M0=M0,
        g0=g0,
        M_mass=np.einsum("kai,kaj->kij", jp, jp),
        g_mass=-np.einsum("kai,a->ki", jp, robot.gravity),
        axis_rate=rate,
        J=J.reshape(len(fids), 6, nv),
        frame_positions=pos.reshape(len(fids), 3),
        frames=tuple(frames),
        v_index=robot.v_index,
        spin_sign=np.array([m.spin_sign for m in robot.mounts], dtype=float),
    )


def stack_bases(bases: Sequence[PoseBasis]) -> PoseBases:
    """Stack per-pose bases of one robot and one frame list into :class:`PoseBases`."""
    if not bases:
        raise InputError("<api>", "bases", "needs at least one pose")
    first = bases[0]
    for i, b in enumerate(bases):
        if b.frames != first.frames or b.M_mass.shape != first.M_mass.shape:
            raise InputError("<api>", f"bases[{i}]", "all poses must share robot and frames")
    stacked = {name: np.stack([getattr(b, name) for b in bases]) for name in _STACKED}
    return PoseBases(
        **stacked, frames=first.frames, v_index=first.v_index, spin_sign=first.spin_sign
    )


def _as_stack(bases: PoseBasis | PoseBases) -> tuple[PoseBases, bool]:
    if isinstance(bases, PoseBases):
        return bases, False
    if isinstance(bases, PoseBasis):
        return stack_bases([bases]), True
    raise InputError("<api>", "bases", "must be a PoseBasis or PoseBases")


def _design_array(value, name: str, n_act: int, n_poses: int, batch: tuple | None):
    """Check a per-design array: (*batch, n_act) or, per pose, (*batch, P, n_act)."""
    a = np.asarray(value, dtype=float)
    if a.ndim == 0 or a.shape[-1] != n_act:
        raise InputError("<api>", name, f"last dimension must be n_act = {n_act}, got {a.shape}")
    if not np.all(np.isfinite(a)):
        raise InputError("<api>", name, "must be finite")
    if batch is None:
        return a, False
    if a.shape[:-1] == batch:
        return a, False
    if a.shape[:-1] == batch + (n_poses,):
        return a, True
    rule = f"needs shape {batch + (n_act,)} or {batch + (n_poses, n_act)}, got {a.shape}"
    raise InputError("<api>", name, rule)


def _combine(terms, batch: tuple) -> np.ndarray:
    """Σ over terms of Σ_k coef[..., k]·basis[p, k, ...] -> (*batch, P, ...).

    ``terms`` holds (coef, per_pose, basis) with coef (*batch, k) or (*batch, P, k) and basis
    (P, k, ...). The terms shared by all poses go through one fused matrix product.
    """
    P = terms[0][2].shape[0]
    tail = terms[0][2].shape[2:]
    B = int(np.prod(batch, dtype=int))
    shared = [(c.reshape(B, -1), b.reshape(P, b.shape[1], -1)) for c, pp, b in terms if not pp]
    out = np.zeros((B, P, int(np.prod(tail, dtype=int))))
    if shared:
        coef = np.concatenate([c for c, _ in shared], axis=1)  # (B, K)
        basis = np.concatenate([b for _, b in shared], axis=1)  # (P, K, F)
        K = basis.shape[1]
        out += (coef @ basis.transpose(1, 0, 2).reshape(K, -1)).reshape(B, P, -1)
    for c, pp, b in terms:
        if pp:  # (P, B, k) @ (P, k, F) -> (P, B, F)
            cp = c.reshape(B, P, -1).transpose(1, 0, 2)
            out += np.matmul(cp, b.reshape(P, b.shape[1], -1)).transpose(1, 0, 2)
    return out.reshape(batch + (P,) + tail)


def mass_matrix(
    bases: PoseBasis | PoseBases,
    masses: np.ndarray,
    reflected: np.ndarray,
    *,
    rotor_inertia: np.ndarray | None = None,
    ratio: np.ndarray | None = None,
    coupling: bool = False,
) -> np.ndarray:
    """Joint-space mass matrices of many designs at many poses.

    H = M0 + Σ_k m_k·M_mass_k + diag(reflected at the actuated joints) [+ rotor coupling]

    Parameters
    ----------
    bases : PoseBasis or PoseBases (P poses)
    masses : ndarray (*D, n_act)
        Actuator masses, kg.
    reflected : ndarray (*D, n_act) or (*D, P, n_act)
        Diagonal reflected inertia per actuated joint (kg·m² revolute, kg prismatic), already
        mode-dependent, e.g. η_f·N²·I_r motoring or N²·I_r/η_b back-driven.
    rotor_inertia : ndarray (*D, n_act), optional
        Rotor-side inertia I_r, kg·m²; needed with ``coupling``.
    ratio : ndarray (*D, n_act), optional
        Signed ratio N (rotor speed relative to its stator per joint speed; rad/m for a screw);
        negative when the stack reverses the sense of rotation. Needed with ``coupling``.
    coupling : bool
        Add the rotor's spin with its stator body (module docstring).

    Returns
    -------
    ndarray (*D, P, nv, nv), or (*D, nv, nv) for a single PoseBasis.
    """
    stack, single = _as_stack(bases)
    P, n_act = stack.M_mass.shape[:2]
    m, _ = _design_array(masses, "masses", n_act, P, None)
    batch = m.shape[:-1]
    r, r_pose = _design_array(reflected, "reflected", n_act, P, batch)
    terms = [(m, False, stack.M_mass)]
    if coupling:
        if rotor_inertia is None or ratio is None:
            raise InputError("<api>", "coupling", "needs rotor_inertia and ratio")
        ir, ir_pose = _design_array(rotor_inertia, "rotor_inertia", n_act, P, batch)
        n, n_pose = _design_array(ratio, "ratio", n_act, P, batch)
        if ir_pose != n_pose:
            ir, n = _per_pose(ir, ir_pose, P), _per_pose(n, n_pose, P)
            ir_pose = True
        w = stack.axis_rate  # (P, k, nv)
        e = np.zeros_like(w)
        e[:, np.arange(n_act), stack.v_index] = 1.0
        cross = np.einsum("pki,pkj->pkij", e, w)
        terms.append((ir * n * stack.spin_sign, ir_pose, cross + cross.transpose(0, 1, 3, 2)))
        terms.append((ir, ir_pose, np.einsum("pki,pkj->pkij", w, w)))
    H = _combine(terms, batch)
    H += stack.M0
    idx = stack.v_index
    H[..., idx, idx] += r if r_pose else r[..., None, :]
    return H[..., 0, :, :] if single else H


def _per_pose(a: np.ndarray, per_pose: bool, P: int) -> np.ndarray:
    return a if per_pose else np.repeat(a[..., None, :], P, axis=-2)


def gravity(bases: PoseBasis | PoseBases, masses: np.ndarray) -> np.ndarray:
    """Generalized gravity of many designs at many poses, g = g0 + Σ_k m_k·g_mass_k.

    Parameters
    ----------
    bases : PoseBasis or PoseBases (P poses)
    masses : ndarray (*D, n_act), kg

    Returns
    -------
    ndarray (*D, P, nv) (N·m or N), or (*D, nv) for a single PoseBasis.
    """
    stack, single = _as_stack(bases)
    P, n_act = stack.M_mass.shape[:2]
    m, _ = _design_array(masses, "masses", n_act, P, None)
    g = _combine([(m, False, stack.g_mass)], m.shape[:-1])
    g += stack.g0
    return g[..., 0, :] if single else g
