"""The several-contact payload as a second-order cone program (cvxpy, compiled once per shape).

In the scaled contact coordinates ``f_k = λ_k·n_k + μ_k·(ν_k1·t_k1 + ν_k2·t_k2)`` every cone is
the standard one ``‖ν_k‖ ≤ λ_k`` and every number of a case enters as a cvxpy ``Parameter``
(DPP), so one compiled problem re-solves for many designs and poses (docs/contacts.md). cvxpy
is imported on first use.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from .contact_result import (
    ACTIVE_RTOL,
    ContactPayloadResult,
    contact_forces,
    failed_result,
    torque_activity,
)
from .contact_statics import API_SOURCE, ContactStatics

_CVXPY_STATUS = {
    "optimal": "optimal",
    "optimal_inaccurate": "optimal",
    "infeasible": "infeasible",
    "infeasible_inaccurate": "infeasible",
    "unbounded": "unbounded",
    "unbounded_inaccurate": "unbounded",
}


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
                raise InputError(
                    API_SOURCE, name, f"must be an integer in [{low}, {high}], got {val!r}"
                )
        if payload_dim not in (3, 6):
            raise InputError(API_SOURCE, "payload_dim", f"must be 3 or 6, got {payload_dim!r}")
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
                API_SOURCE,
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
            return failed_result("error", f"solver_error: {exc}", nj, k, wall, self.solver)
        wall = time.perf_counter() - start
        native = str(self.problem.status)
        status = _CVXPY_STATUS.get(native, "error")
        if status != "optimal":
            payload = math.inf if status == "unbounded" else math.nan
            return failed_result(status, native, nj, k, wall, self.solver, payload)
        return self._result(statics, native, wall)

    def _result(self, st: ContactStatics, native: str, wall: float) -> ContactPayloadResult:
        _, nj, k, _ = self.shape
        tau = np.array(self._tau.value) if nj else np.zeros(0)
        at_low, at_high = torque_activity(st, tau)
        # a masked (infinite) bound is the void row 0 <= 0: its dual means nothing, report 0
        mult_lo = np.where(np.isfinite(st.tau_low), self._lo.dual_value, 0.0) if nj else tau
        mult_hi = np.where(np.isfinite(st.tau_high), self._hi.dual_value, 0.0) if nj else tau
        if k:
            lam, nu1, nu2 = (np.array(v.value) for v in (self._lam, self._nu1, self._nu2))
        else:
            lam = nu1 = nu2 = np.zeros(0)
        forces = contact_forces(st, lam, st.friction * nu1, st.friction * nu2)
        tol = ACTIVE_RTOL * max(1.0, float(np.max(lam, initial=0.0)))
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
            API_SOURCE,
            ", ".join(sorted(unknown or missing)),
            "unknown argument" if unknown else "required argument missing",
        )
    arr = {name: np.asarray(arrays[name], dtype=float) for name in _CORE_NDIM}
    if arr["friction"].ndim == 0 and arr["contact_jacobians"].ndim >= 3:  # one μ for all
        arr["friction"] = np.full(arr["contact_jacobians"].shape[-3], arr["friction"])
    lead = {}
    for name, a in arr.items():
        if a.ndim < _CORE_NDIM[name]:
            raise InputError(API_SOURCE, name, f"needs at least {_CORE_NDIM[name]} dimension(s)")
        lead[name] = a.shape[: a.ndim - _CORE_NDIM[name]]
    try:
        batch = np.broadcast_shapes(*lead.values())
    except ValueError:
        raise InputError(API_SOURCE, "batch dimensions", f"do not broadcast: {lead}") from None
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
