"""Payload of a whole robot held on several point contacts: a second-order cone program.

A legged robot carries a load on its body while standing on its feet; an arm on a mobile base
braces against a table. The payload of such a robot is not the payload of one limb: the contact
forces share the load and friction lets limbs push sideways. Static equilibrium (generalized
coordinates ``v`` of size nv; a floating base puts its 6 rows first)::

    g = Sᵀ·τ + Σ_k J_kᵀ·f_k + J_pᵀ·(s·w)

* ``g`` (nv): generalized gravity and bias forces, the left side of M·q̈ + g = Sᵀτ + Σ Jᵀf.
* ``S`` selects the actuated rows (``actuated`` indices); ``τ`` (n_joints) within [τ_low, τ_high].
* ``f_k`` (3): force the environment exerts ON the robot at point contact k, world-aligned,
  ``J_k`` its 3×nv linear (world-aligned) point Jacobian. Friction cone with unit normal ``n_k``
  pointing from the environment into the robot: ``‖f_k − (n_kᵀf_k)·n_k‖ ≤ μ_k·n_kᵀf_k``.
  μ_k = 0 is a frictionless contact (normal force only).
* ``s·w``: the wrench the payload exerts ON the robot at the payload point, ``w`` its direction
  per unit ``s`` (3: force; 6: force then moment, matching a 6×nv ``J_p`` with linear rows first).
  A mass m carried on the body under gravity −z is ``w = (0, 0, −1)`` and ``s = m·g₀`` in N.

The program maximizes ``s ≥ 0``. In the scaled contact coordinates
``f_k = λ_k·n_k + μ_k·(ν_k1·t_k1 + ν_k2·t_k2)`` every cone is the standard one ``‖ν_k‖ ≤ λ_k``
and every number of a case enters as a cvxpy ``Parameter`` (DPP), so one compiled problem
re-solves for many designs and poses. :func:`pyramid_bounds` solves the same statics as two
linear programs (scipy/HiGHS) with inscribed and circumscribed p-sided friction pyramids: an
inner and an outer bound on the cone result.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

from ..errors import InputError

#: the shared status vocabulary of every solve (the solver's own word is kept beside it)
STATUSES = ("optimal", "infeasible", "unbounded", "error")

_CVXPY_STATUS = {
    "optimal": "optimal",
    "optimal_inaccurate": "optimal",
    "infeasible": "infeasible",
    "infeasible_inaccurate": "infeasible",
    "unbounded": "unbounded",
    "unbounded_inaccurate": "unbounded",
}
_LINPROG_STATUS = {0: "optimal", 2: "infeasible", 3: "unbounded"}
_ACTIVE_RTOL = 1e-6  # relative slack under which a bound or cone counts as active
_API = "<api>"


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
        raise InputError(_API, name, f"must be an array of numbers, got {value!r}") from None
    if ndim is not None and out.ndim != ndim:
        raise InputError(_API, name, f"must have {ndim} dimension(s), got shape {out.shape}")
    if np.isnan(out).any():
        raise InputError(_API, name, "must not contain NaN")
    return out


def _shape(arr: np.ndarray, name: str, shape: tuple[int, ...]) -> None:
    if arr.shape != shape:
        raise InputError(_API, name, f"must have shape {shape}, got {arr.shape}")


def _finite(arr: np.ndarray, name: str) -> None:
    if not np.isfinite(arr).all():
        raise InputError(_API, name, "must be finite")


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
            raise InputError(_API, "normals", "every contact normal must be nonzero")
        mu = _array(self.friction, "friction", None)
        mu = np.full(k, float(mu)) if mu.ndim == 0 else mu
        _shape(mu, "friction", (k,))
        if not (np.isfinite(mu) & (mu >= 0)).all():
            raise InputError(_API, "friction", f"must be finite and >= 0, got {mu.tolist()}")
        jp = _array(self.payload_jacobian, "payload_jacobian", 2)
        if jp.shape not in ((3, nv), (6, nv)):
            raise InputError(_API, "payload_jacobian", f"must be 3×{nv} or 6×{nv}, got {jp.shape}")
        _finite(jp, "payload_jacobian")
        w = _array(self.payload_wrench, "payload_wrench", 1)
        _shape(w, "payload_wrench", (jp.shape[0],))
        _finite(w, "payload_wrench")
        if not np.any(w != 0):
            raise InputError(_API, "payload_wrench", "must be a nonzero direction")
        act = self._actuated(nv)
        lo, hi = self._bounds(act.size)
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
            raise InputError(_API, "actuated", "must list the actuated row indices (may be empty)")
        raw = np.array(self.actuated).reshape(-1)
        if raw.size and not np.issubdtype(raw.dtype, np.integer):
            raise InputError(_API, "actuated", f"must be integer row indices, got {raw.tolist()}")
        act = raw.astype(int)
        if act.size and (act.min() < 0 or act.max() >= nv or np.unique(act).size != act.size):
            raise InputError(_API, "actuated", f"must be distinct indices in 0..{nv - 1}")
        return act

    def _bounds(self, nj: int) -> tuple[np.ndarray, np.ndarray]:
        lo = _array(self.tau_low, "tau_low", 1)
        hi = _array(self.tau_high, "tau_high", 1)
        _shape(lo, "tau_low", (nj,))
        _shape(hi, "tau_high", (nj,))
        if np.isposinf(lo).any() or np.isneginf(hi).any():
            raise InputError(_API, "tau_low/tau_high", "tau_low must be < +inf, tau_high > -inf")
        if (lo > hi).any():
            bad = int(np.argmax(lo > hi))
            raise InputError(_API, f"tau_low[{bad}]", f"must be <= tau_high[{bad}] (low, high)")
        return lo, hi

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


@dataclass(frozen=True)
class ContactPayloadResult:
    """The answer of one multi-contact payload solve (arrays read-only).

    Attributes
    ----------
    status : one of :data:`STATUSES`; native_status : the solver's own word
    payload : s*, the largest payload along ``w`` (N for a unit force direction); ``inf`` when
        unbounded, NaN when infeasible or failed (no value exists)
    contact_forces : (k, 3) forces ON the robot, world-aligned, N (NaN unless optimal)
    joint_torques : (n_joints,) N·m (NaN unless optimal)
    torque_at_low, torque_at_high : (n_joints,) bool, bound active at the optimum (binding)
    torque_multiplier_low, torque_multiplier_high : (n_joints,) ≥ 0, payload gained per unit the
        bound is relaxed (dual value, N per N·m)
    cone_binding : (k,) bool, on the cone (or pyramid) surface with a positive normal force:
        the contact is about to slip
    contact_unloaded : (k,) bool, normal force ≈ 0: the contact is about to lift off
    solve_time : s, wall time of the solve call; solver_time : s, the solver's own report
    solver : the solver's name
    """

    status: str
    native_status: str
    payload: float
    contact_forces: np.ndarray
    joint_torques: np.ndarray
    torque_at_low: np.ndarray
    torque_at_high: np.ndarray
    torque_multiplier_low: np.ndarray
    torque_multiplier_high: np.ndarray
    cone_binding: np.ndarray
    contact_unloaded: np.ndarray
    solve_time: float
    solver_time: float
    solver: str

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, np.ndarray):
                value.setflags(write=False)

    def binding(self) -> tuple[str, ...]:
        """Plain-words list of what limits the payload (joints and contacts by index)."""
        out = [f"joint {j} lower torque bound" for j in np.flatnonzero(self.torque_at_low)]
        out += [f"joint {j} upper torque bound" for j in np.flatnonzero(self.torque_at_high)]
        out += [f"contact {c} friction cone" for c in np.flatnonzero(self.cone_binding)]
        out += [f"contact {c} unloaded" for c in np.flatnonzero(self.contact_unloaded)]
        return tuple(out)


def _failed(
    status: str, native: str, nj: int, k: int, wall: float, solver: str, payload: float = math.nan
) -> ContactPayloadResult:
    nan_j, no_j, no_k = np.full(nj, np.nan), np.zeros(nj, bool), np.zeros(k, bool)
    return ContactPayloadResult(
        status,
        native,
        payload,
        np.full((k, 3), np.nan),
        nan_j,
        no_j,
        no_j.copy(),
        nan_j.copy(),
        nan_j.copy(),
        no_k,
        no_k.copy(),
        wall,
        math.nan,
        solver,
    )


def _torque_activity(st: ContactStatics, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    scale = np.maximum(1.0, np.abs(tau))
    with np.errstate(invalid="ignore"):
        at_low = np.isfinite(st.tau_low) & (tau - st.tau_low <= _ACTIVE_RTOL * scale)
        at_high = np.isfinite(st.tau_high) & (st.tau_high - tau <= _ACTIVE_RTOL * scale)
    return at_low, at_high


def _contact_forces(
    st: ContactStatics, normal: np.ndarray, tan1: np.ndarray, tan2: np.ndarray
) -> np.ndarray:
    """World-aligned contact forces (k, 3) from components along n, t1, t2 (N)."""
    if not normal.size:
        return np.zeros((0, 3))
    t1, t2, n = tangent_basis(st.normals)
    return normal[:, None] * n + tan1[:, None] * t1 + tan2[:, None] * t2


class MultiContactPayload:
    """A compiled cone program for one problem shape; :meth:`resolve` solves a case quickly.

    Parameters
    ----------
    nv : number of generalized velocities (6 + n_joints for a floating base)
    n_joints : number of actuated rows
    n_contacts : number of point contacts k (0 allowed)
    payload_dim : 3 (force) or 6 (force and moment)
    solver : a cvxpy solver name, CLARABEL by default
    solver_options : extra keyword arguments for ``Problem.solve``
    """

    def __init__(
        self,
        nv: int,
        n_joints: int,
        n_contacts: int,
        *,
        payload_dim: int = 3,
        solver: str = "CLARABEL",
        solver_options: dict[str, Any] | None = None,
    ):
        for name, val, low, high in (
            ("nv", nv, 1, math.inf),
            ("n_joints", n_joints, 0, nv),
            ("n_contacts", n_contacts, 0, math.inf),
        ):
            if (
                isinstance(val, bool)
                or not isinstance(val, (int, np.integer))
                or not (low <= val <= high)
            ):
                raise InputError(_API, name, f"must be an integer in [{low}, {high}], got {val!r}")
        if payload_dim not in (3, 6):
            raise InputError(_API, "payload_dim", f"must be 3 or 6, got {payload_dim!r}")
        self.shape = (int(nv), int(n_joints), int(n_contacts), int(payload_dim))
        self.solver = str(solver)
        self.solver_options = dict(solver_options or {})
        self._build()

    @classmethod
    def for_statics(cls, statics: ContactStatics, **kwargs: Any) -> MultiContactPayload:
        """A problem compiled for the shape of ``statics``."""
        nv, nj, k, m = statics.shape
        return cls(nv, nj, k, payload_dim=m, **kwargs)

    def _build(self) -> None:
        import cvxpy as cp

        nv, nj, k, _ = self.shape
        self._cp = cp
        self._s = cp.Variable(nonneg=True, name="s")
        p = self._par = {"g": cp.Parameter(nv, name="g"), "b": cp.Parameter(nv, name="b")}
        lhs = p["b"] * self._s
        cons = []
        if nj:
            self._tau = cp.Variable(nj, name="tau")
            p["St"] = cp.Parameter((nv, nj), name="St")
            for key in ("lo_mask", "lo_val", "hi_mask", "hi_val"):
                p[key] = cp.Parameter(nj, name=key)
            lhs = lhs + p["St"] @ self._tau
            self._lo = cp.multiply(p["lo_mask"], self._tau) >= p["lo_val"]
            self._hi = cp.multiply(p["hi_mask"], self._tau) <= p["hi_val"]
            cons += [self._lo, self._hi]
        if k:
            names = ("lam", "nu1", "nu2")
            self._lam, self._nu1, self._nu2 = (cp.Variable(k, name=v) for v in names)
            for key in ("An", "At1", "At2"):
                p[key] = cp.Parameter((nv, k), name=key)
            lhs = lhs + p["An"] @ self._lam + p["At1"] @ self._nu1 + p["At2"] @ self._nu2
            cons.append(cp.SOC(self._lam, cp.vstack([self._nu1, self._nu2]), axis=0))
        cons.append(lhs == p["g"])
        self.problem = cp.Problem(cp.Maximize(self._s), cons)

    def _load(self, st: ContactStatics) -> None:
        if st.shape != self.shape:
            raise InputError(
                _API,
                "statics",
                f"has shape {st.shape}, problem built for "
                f"{self.shape} (nv, n_joints, k, payload_dim)",
            )
        p = self._par
        p["g"].value = np.array(st.gravity)
        p["b"].value = st.payload_jacobian.T @ st.payload_wrench
        if self.shape[1]:
            p["St"].value = st.selection_transpose()
            for side, vals in (("lo", st.tau_low), ("hi", st.tau_high)):
                finite = np.isfinite(vals)
                p[f"{side}_mask"].value = finite.astype(float)
                p[f"{side}_val"].value = np.where(finite, vals, 0.0)
        if self.shape[2]:
            p["An"].value, p["At1"].value, p["At2"].value = st.contact_columns()

    def resolve(self, statics: ContactStatics) -> ContactPayloadResult:
        """Solve the case ``statics`` on the compiled problem (parameters only change).

        Returns
        -------
        ContactPayloadResult
            In batch use a failed solve is a status, not an exception.
        """
        self._load(statics)
        _, nj, k, _ = self.shape
        start = time.perf_counter()
        try:
            self.problem.solve(solver=self.solver, **self.solver_options)
        except self._cp.error.SolverError as exc:
            wall = time.perf_counter() - start
            return _failed("error", f"solver_error: {exc}", nj, k, wall, self.solver)
        wall = time.perf_counter() - start
        native = str(self.problem.status)
        status = _CVXPY_STATUS.get(native, "error")
        if status != "optimal":
            payload = math.inf if status == "unbounded" else math.nan
            return _failed(status, native, nj, k, wall, self.solver, payload)
        return self._result(statics, native, wall)

    def _result(self, st: ContactStatics, native: str, wall: float) -> ContactPayloadResult:
        _, nj, k, _ = self.shape
        tau = np.array(self._tau.value) if nj else np.zeros(0)
        at_low, at_high = _torque_activity(st, tau)
        # a masked (infinite) bound is the void row 0 <= 0: its dual means nothing, report 0
        mult_lo = np.where(np.isfinite(st.tau_low), self._lo.dual_value, 0.0) if nj else tau
        mult_hi = np.where(np.isfinite(st.tau_high), self._hi.dual_value, 0.0) if nj else tau
        if k:
            lam, nu1, nu2 = (np.array(v.value) for v in (self._lam, self._nu1, self._nu2))
        else:
            lam = nu1 = nu2 = np.zeros(0)
        forces = _contact_forces(st, lam, st.friction * nu1, st.friction * nu2)
        tol = _ACTIVE_RTOL * max(1.0, float(np.max(lam, initial=0.0)))
        unloaded = lam <= tol
        slip = (st.friction > 0) & ~unloaded & (lam - np.hypot(nu1, nu2) <= tol)
        stats = self.problem.solver_stats
        solver_time = float(stats.solve_time) if stats.solve_time is not None else math.nan
        return ContactPayloadResult(
            "optimal",
            native,
            float(np.asarray(self._s.value)),
            forces,
            tau,
            at_low,
            at_high,
            np.maximum(mult_lo, 0.0),
            np.maximum(mult_hi, 0.0),
            slip,
            unloaded,
            wall,
            solver_time,
            self.solver,
        )


def solve(statics: ContactStatics, **kwargs: Any) -> ContactPayloadResult:
    """One-off solve: compile a problem for the shape of ``statics`` and solve it.

    Keyword arguments go to :class:`MultiContactPayload` (``solver``, ``solver_options``).
    For many cases of one shape build the problem once and call :meth:`~MultiContactPayload.
    resolve`, or use :func:`solve_batch`.
    """
    return MultiContactPayload.for_statics(statics, **kwargs).resolve(statics)


#: core (non-batch) number of dimensions of each batched input of :func:`solve_batch`
_CORE_NDIM = {
    "gravity": 1,
    "contact_jacobians": 3,
    "normals": 2,
    "friction": 1,
    "payload_jacobian": 2,
    "payload_wrench": 1,
    "tau_low": 1,
    "tau_high": 1,
}


@dataclass(frozen=True)
class ContactPayloadBatch:
    """Results of :func:`solve_batch` over leading batch dimensions ``B`` (e.g. designs, poses).

    Attributes
    ----------
    payload : B array, s* (``inf`` unbounded, NaN infeasible/failed); status : B array of str
    contact_forces : B + (k, 3), N; joint_torques : B + (n_joints,), N·m
    torque_at_low, torque_at_high : B + (n_joints,) bool; cone_binding : B + (k,) bool
    solve_time : s, total wall time of all solves
    """

    payload: np.ndarray
    status: np.ndarray
    contact_forces: np.ndarray
    joint_torques: np.ndarray
    torque_at_low: np.ndarray
    torque_at_high: np.ndarray
    cone_binding: np.ndarray
    solve_time: float


def solve_batch(*, actuated: Any, solver: str = "CLARABEL", **arrays: Any) -> ContactPayloadBatch:
    """Re-solve one compiled problem over every case of broadcast batch dimensions.

    Parameters
    ----------
    actuated : (n_joints,) actuated row indices, shared by all cases
    solver : cvxpy solver name
    **arrays : the array fields of :class:`ContactStatics` (gravity, contact_jacobians,
        normals, friction, payload_jacobian, payload_wrench, tau_low, tau_high), each with
        optional leading batch dimensions that broadcast together, e.g. gravity (D, P, nv)
        for D designs × P poses and contact_jacobians (P, k, 3, nv).

    Returns
    -------
    ContactPayloadBatch
    """
    unknown = set(arrays) - set(_CORE_NDIM)
    missing = set(_CORE_NDIM) - set(arrays)
    if unknown or missing:
        raise InputError(
            _API,
            ", ".join(sorted(unknown or missing)),
            "unknown argument" if unknown else "required argument missing",
        )
    arr = {name: np.asarray(arrays[name], dtype=float) for name in _CORE_NDIM}
    if arr["friction"].ndim == 0 and arr["contact_jacobians"].ndim >= 3:  # one μ for all
        arr["friction"] = np.full(arr["contact_jacobians"].shape[-3], arr["friction"])
    lead = {}
    for name, a in arr.items():
        if a.ndim < _CORE_NDIM[name]:
            raise InputError(_API, name, f"needs at least {_CORE_NDIM[name]} dimension(s)")
        lead[name] = a.shape[: a.ndim - _CORE_NDIM[name]]
    try:
        batch = np.broadcast_shapes(*lead.values())
    except ValueError:
        raise InputError(_API, "batch dimensions", f"do not broadcast: {lead}") from None
    cases = {n: np.broadcast_to(a, batch + a.shape[len(lead[n]) :]) for n, a in arr.items()}
    statics = [
        ContactStatics(**{n: a[idx] for n, a in cases.items()}, actuated=actuated)
        for idx in np.ndindex(*batch)
    ]
    problem = MultiContactPayload.for_statics(statics[0], solver=solver)
    return _stack([problem.resolve(st) for st in statics], batch)


def _stack(results: list[ContactPayloadResult], batch: tuple[int, ...]) -> ContactPayloadBatch:
    def stacked(name: str) -> np.ndarray:
        out = np.array([getattr(r, name) for r in results])
        return out.reshape(batch + out.shape[1:])

    return ContactPayloadBatch(
        stacked("payload"),
        stacked("status"),
        stacked("contact_forces"),
        stacked("joint_torques"),
        stacked("torque_at_low"),
        stacked("torque_at_high"),
        stacked("cone_binding"),
        float(sum(r.solve_time for r in results)),
    )


@dataclass(frozen=True)
class PyramidBounds:
    """Inner and outer linear-program bounds on the cone payload (p-sided friction pyramids).

    ``inner`` uses the pyramid inscribed in each cone (its forces are feasible for the cone:
    ``inner.payload ≤`` cone payload); ``outer`` the circumscribed one (cone payload ``≤
    outer.payload``). Both tighten as ``sides`` grows; doubling ``sides`` nests the pyramids.
    """

    inner: ContactPayloadResult
    outer: ContactPayloadResult
    sides: int

    @property
    def gap(self) -> float:
        """outer − inner payload (N for a unit force direction)."""
        return self.outer.payload - self.inner.payload


def pyramid_bounds(statics: ContactStatics, *, sides: int = 8) -> PyramidBounds:
    """Bracket the cone payload with two linear programs (scipy ``linprog``, HiGHS).

    The tangential force ``(f_t1, f_t2)`` of contact k (in :func:`tangent_basis` axes) is kept in
    a regular p-gon of the (t1, t2) plane: circumscribed, ``cos φ_j·f_t1 + sin φ_j·f_t2 ≤
    μ_k·f_n`` with ``φ_j = 2πj/p``; inscribed (vertices at ``2πj/p``), the same with
    ``φ_j = (2j+1)π/p`` and right side ``μ_k·cos(π/p)·f_n``.

    Parameters
    ----------
    statics : ContactStatics
    sides : int ≥ 3, number of pyramid faces p

    Returns
    -------
    PyramidBounds
    """
    if isinstance(sides, bool) or not isinstance(sides, (int, np.integer)) or sides < 3:
        raise InputError(_API, "sides", f"must be an integer >= 3, got {sides!r}")
    return PyramidBounds(
        _pyramid_lp(statics, int(sides), inner=True),
        _pyramid_lp(statics, int(sides), inner=False),
        int(sides),
    )


def _pyramid_lp(st: ContactStatics, p: int, *, inner: bool) -> ContactPayloadResult:
    from scipy.optimize import linprog

    _, nj, k, _ = st.shape
    normal, t1, t2 = st.contact_columns(scaled=False)
    # unknowns z = [tau (nj), f_n (k), f_t1 (k), f_t2 (k), s]
    a_eq = np.hstack(
        [
            st.selection_transpose(),
            normal,
            t1,
            t2,
            (st.payload_jacobian.T @ st.payload_wrench)[:, None],
        ]
    )
    phi = (2 * np.arange(p) + (1 if inner else 0)) * math.pi / p
    reach = math.cos(math.pi / p) if inner else 1.0
    a_ub = np.zeros((p * k, nj + 3 * k + 1))
    for c in range(k):
        rows = slice(c * p, (c + 1) * p)
        a_ub[rows, nj + c] = -st.friction[c] * reach
        a_ub[rows, nj + k + c], a_ub[rows, nj + 2 * k + c] = np.cos(phi), np.sin(phi)
    bounds = [
        (None if math.isinf(lo) else lo, None if math.isinf(hi) else hi)
        for lo, hi in zip(st.tau_low, st.tau_high, strict=True)
    ]
    bounds += [(0, None)] * k + [(None, None)] * (2 * k) + [(0, None)]
    cost = np.zeros(nj + 3 * k + 1)
    cost[-1] = -1.0
    start = time.perf_counter()
    res = linprog(
        cost,
        A_ub=a_ub if k else None,
        b_ub=np.zeros(p * k) if k else None,
        A_eq=a_eq,
        b_eq=st.gravity,
        bounds=bounds,
        method="highs",
    )
    wall = time.perf_counter() - start
    status = _LINPROG_STATUS.get(res.status, "error")
    if status != "optimal":
        payload = math.inf if status == "unbounded" else math.nan
        return _failed(status, str(res.message), nj, k, wall, "scipy-highs", payload)
    return _pyramid_result(st, res, a_ub, wall)


def _pyramid_result(
    st: ContactStatics, res: Any, a_ub: np.ndarray, wall: float
) -> ContactPayloadResult:
    _, nj, k, _ = st.shape
    z = res.x
    tau, fn, ft1, ft2 = z[:nj], z[nj : nj + k], z[nj + k : nj + 2 * k], z[nj + 2 * k : nj + 3 * k]
    forces = _contact_forces(st, fn, ft1, ft2)
    at_low, at_high = _torque_activity(st, tau)
    tol = _ACTIVE_RTOL * max(1.0, float(np.max(fn, initial=0.0)))
    unloaded = fn <= tol
    if k:
        slack = -(a_ub @ z).reshape(k, -1)
        slip = (st.friction > 0) & ~unloaded & (slack.min(axis=1) <= tol)
    else:
        slip = np.zeros(0, bool)
    mult_lo = np.maximum(np.asarray(res.lower.marginals[:nj]), 0.0)
    mult_hi = np.maximum(-np.asarray(res.upper.marginals[:nj]), 0.0)
    return ContactPayloadResult(
        "optimal",
        str(res.message),
        float(z[-1]),
        forces,
        tau,
        at_low,
        at_high,
        mult_lo,
        mult_hi,
        slip,
        unloaded,
        wall,
        wall,
        "scipy-highs",
    )
