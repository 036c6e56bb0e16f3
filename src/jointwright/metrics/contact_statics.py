"""The statics of a robot on several point contacts: validated matrices and contact frames.

Generalized velocities ``v`` of size nv (a floating base puts its 6 rows first); static
equilibrium ``g = Sᵀ·τ + Σ_k J_kᵀ·f_k + J_pᵀ·(s·w)`` (docs/contacts.md). :class:`ContactStatics`
holds and checks one case's numbers; :func:`tangent_basis` gives each contact's frame and
:func:`rigid_point_jacobian` the Jacobian of points on one rigid body.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError

#: the file name reported by input errors of the programming interface
API_SOURCE = "<api>"


def tangent_basis(normals: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Unit normals and two unit tangents completing a right-handed frame per contact.

    ``t1`` is the world axis least aligned with ``n`` (x first on ties) with its normal
    component removed; ``t2 = n × t1``. For ``n = e_z``: ``t1 = e_x``, ``t2 = e_y``.

    Parameters
    ----------
    normals : (..., 3) array, nonzero (normalized here)

    Returns
    -------
    t1, t2, n : (..., 3) arrays of unit vectors
    """
    n = np.asarray(normals, dtype=float)
    n = n / np.linalg.norm(n, axis=-1, keepdims=True)
    axis = np.eye(3)[np.argmin(np.abs(n), axis=-1)]
    t1 = axis - np.sum(axis * n, axis=-1, keepdims=True) * n
    t1 = t1 / np.linalg.norm(t1, axis=-1, keepdims=True)
    return t1, np.cross(n, t1), n


def rigid_point_jacobian(points: np.ndarray, *, angular: bool = False) -> np.ndarray:
    """World-aligned Jacobian of points fixed on a free rigid body, for base velocity (v_o, ω).

    ``v_p = v_o + ω × r = [I₃, −[r]×]·(v_o, ω)`` with r (m) from the body origin to the point,
    both world-aligned; with ``angular`` the rows ``[0, I₃]`` of ω are appended (6×6).

    Parameters
    ----------
    points : (..., 3) array, m
    angular : bool

    Returns
    -------
    (..., 3, 6) or (..., 6, 6) array
    """
    r = np.asarray(points, dtype=float)
    cross = np.zeros(r.shape[:-1] + (3, 3))
    cross[..., 0, 1], cross[..., 0, 2], cross[..., 1, 2] = -r[..., 2], r[..., 1], -r[..., 0]
    cross = cross - np.swapaxes(cross, -1, -2)
    top = np.concatenate([np.broadcast_to(np.eye(3), cross.shape), -cross], axis=-1)
    if not angular:
        return top
    bottom = np.concatenate(
        [np.zeros(cross.shape), np.broadcast_to(np.eye(3), cross.shape)], axis=-1
    )
    return np.concatenate([top, bottom], axis=-2)


def _array(value: Any, name: str, ndim: int | None) -> np.ndarray:
    try:
        out = np.array(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(API_SOURCE, name, f"must be an array of numbers, got {value!r}") from None
    if ndim is not None and out.ndim != ndim:
        raise InputError(API_SOURCE, name, f"must have {ndim} dimension(s), got shape {out.shape}")
    if np.isnan(out).any():
        raise InputError(API_SOURCE, name, "must not contain NaN")
    return out


def _shape(arr: np.ndarray, name: str, shape: tuple[int, ...]) -> None:
    if arr.shape != shape:
        raise InputError(API_SOURCE, name, f"must have shape {shape}, got {arr.shape}")


def _finite(arr: np.ndarray, name: str) -> None:
    if not np.isfinite(arr).all():
        raise InputError(API_SOURCE, name, "must be finite")


@dataclass(frozen=True)
class ContactStatics:
    """The matrices of one static multi-contact payload case (validated, SI, read-only).

    Parameters
    ----------
    gravity : (nv,) generalized gravity and bias forces g, N and N·m
    contact_jacobians : (k, 3, nv) world-aligned linear point Jacobians, one per contact
    normals : (k, 3) contact normals, from the environment into the robot (normalized here)
    friction : (k,) or scalar, friction coefficients μ ≥ 0 (0: frictionless contact)
    payload_jacobian : (m, nv), m = 3 (force) or 6 (force then moment), at the payload point
    payload_wrench : (m,) nonzero direction w of the wrench the payload exerts ON the robot
    tau_low, tau_high : (n_joints,) joint torque bounds, N·m (or N); ±inf for no bound
    actuated : (n_joints,) distinct row indices of the actuated coordinates in ``range(nv)``
    share_min : every contact's normal force is at least this fraction of the contacts' total
        (0 ≤ share_min ≤ 1/k; 0: any distribution)
    """

    gravity: np.ndarray
    contact_jacobians: np.ndarray
    normals: np.ndarray
    friction: np.ndarray
    payload_jacobian: np.ndarray
    payload_wrench: np.ndarray
    tau_low: np.ndarray
    tau_high: np.ndarray
    actuated: np.ndarray = field(default=None)  # type: ignore[arg-type]
    share_min: float = 0.0

    def __post_init__(self) -> None:
        g = _array(self.gravity, "gravity", 1)
        _finite(g, "gravity")
        nv = g.size
        jc = _array(self.contact_jacobians, "contact_jacobians", 3)
        k = jc.shape[0]
        _shape(jc, "contact_jacobians", (k, 3, nv))
        _finite(jc, "contact_jacobians")
        n = _array(self.normals, "normals", 2)
        _shape(n, "normals", (k, 3))
        _finite(n, "normals")
        if k and not (np.linalg.norm(n, axis=1) > 1e-12).all():
            raise InputError(API_SOURCE, "normals", "every contact normal must be nonzero")
        mu = _array(self.friction, "friction", None)
        mu = np.full(k, float(mu)) if mu.ndim == 0 else mu
        _shape(mu, "friction", (k,))
        if not (np.isfinite(mu) & (mu >= 0)).all():
            raise InputError(API_SOURCE, "friction", f"must be finite and >= 0, got {mu.tolist()}")
        jp = _array(self.payload_jacobian, "payload_jacobian", 2)
        if jp.shape not in ((3, nv), (6, nv)):
            raise InputError(
                API_SOURCE, "payload_jacobian", f"must be 3×{nv} or 6×{nv}, got {jp.shape}"
            )
        _finite(jp, "payload_jacobian")
        w = _array(self.payload_wrench, "payload_wrench", 1)
        _shape(w, "payload_wrench", (jp.shape[0],))
        _finite(w, "payload_wrench")
        if not np.any(w != 0):
            raise InputError(API_SOURCE, "payload_wrench", "must be a nonzero direction")
        act = self._actuated(nv)
        lo, hi = self._bounds(act.size)
        share = self.share_min
        if not (isinstance(share, (int, float)) and 0.0 <= share and share * k <= 1.0 + 1e-12):
            raise InputError(
                API_SOURCE, "share_min", f"must be a number in [0, 1/k] (k = {k}), got {share!r}"
            )
        object.__setattr__(self, "share_min", float(share))
        values = dict(
            gravity=g,
            contact_jacobians=jc,
            normals=tangent_basis(n)[2] if k else n,
            friction=mu,
            payload_jacobian=jp,
            payload_wrench=w,
            tau_low=lo,
            tau_high=hi,
            actuated=act,
        )
        for name, arr in values.items():
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    def _actuated(self, nv: int) -> np.ndarray:
        if self.actuated is None:
            raise InputError(
                API_SOURCE, "actuated", "must list the actuated row indices (may be empty)"
            )
        raw = np.array(self.actuated).reshape(-1)
        if raw.size and not np.issubdtype(raw.dtype, np.integer):
            raise InputError(
                API_SOURCE, "actuated", f"must be integer row indices, got {raw.tolist()}"
            )
        act = raw.astype(int)
        if act.size and (act.min() < 0 or act.max() >= nv or np.unique(act).size != act.size):
            raise InputError(API_SOURCE, "actuated", f"must be distinct indices in 0..{nv - 1}")
        return act

    def _bounds(self, nj: int) -> tuple[np.ndarray, np.ndarray]:
        lo = _array(self.tau_low, "tau_low", 1)
        hi = _array(self.tau_high, "tau_high", 1)
        _shape(lo, "tau_low", (nj,))
        _shape(hi, "tau_high", (nj,))
        if np.isposinf(lo).any() or np.isneginf(hi).any():
            raise InputError(
                API_SOURCE, "tau_low/tau_high", "tau_low must be < +inf, tau_high > -inf"
            )
        if (lo > hi).any():
            bad = int(np.argmax(lo > hi))
            raise InputError(
                API_SOURCE, f"tau_low[{bad}]", f"must be <= tau_high[{bad}] (low, high)"
            )
        return lo, hi

    def with_design(self, gravity: Any, tau_low: Any, tau_high: Any) -> ContactStatics:
        """The same contacts and payload point with another design's gravity and torque bounds
        (validated as in the constructor; the geometry is not checked again)."""
        g = _array(gravity, "gravity", 1)
        _shape(g, "gravity", self.gravity.shape)
        _finite(g, "gravity")
        out = copy.copy(self)
        object.__setattr__(out, "tau_low", tau_low)
        object.__setattr__(out, "tau_high", tau_high)
        lo, hi = out._bounds(self.actuated.size)
        for name, arr in (("gravity", g), ("tau_low", lo), ("tau_high", hi)):
            arr.setflags(write=False)
            object.__setattr__(out, name, arr)
        return out

    @property
    def shape(self) -> tuple[int, int, int, int]:
        """(nv, n_joints, n_contacts, payload_dim), the shape a compiled problem is built for."""
        return (
            self.gravity.size,
            self.actuated.size,
            self.normals.shape[0],
            self.payload_wrench.size,
        )

    def contact_columns(self, *, scaled: bool = True) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Generalized-force columns of each contact's normal and tangential force components.

        ``J_kᵀ·n_k``, ``J_kᵀ·t_k1``, ``J_kᵀ·t_k2`` (axes of :func:`tangent_basis`); with
        ``scaled`` the tangential columns are multiplied by μ_k (the ν coordinates of the cone).

        Returns
        -------
        normal, tangent1, tangent2 : (nv, k) arrays
        """
        if not self.normals.size:
            empty = np.zeros((self.gravity.size, 0))
            return empty, empty, empty
        t1, t2, n = tangent_basis(self.normals)
        jt = np.swapaxes(self.contact_jacobians, 1, 2)  # (k, nv, 3)
        mu = self.friction if scaled else np.ones_like(self.friction)
        normal, tan1, tan2 = (np.einsum("kvi,ki->vk", jt, d) for d in (n, t1, t2))
        return normal, tan1 * mu, tan2 * mu

    def selection_transpose(self) -> np.ndarray:
        """Sᵀ (nv, n_joints): column j is the unit vector of actuated row ``actuated[j]``."""
        st = np.zeros((self.gravity.size, self.actuated.size))
        st[self.actuated, np.arange(self.actuated.size)] = 1.0
        return st
