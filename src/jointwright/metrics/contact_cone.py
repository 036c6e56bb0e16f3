"""The several-contact payload as a second-order cone program, solved by Clarabel directly.

In the scaled contact coordinates ``f_k = λ_k·n_k + μ_k·(ν_k1·t_k1 + ν_k2·t_k2)`` every cone is
the standard one ``‖ν_k‖ ≤ λ_k`` (docs/contacts.md). The program is small (1 + n_joints + 3k
variables), so it is written straight into the conic solver's form ``A·x + s = b``,
``s ∈ K`` for every design: no modelling layer, no compile step, and the same numbers as the
modelled program (tests/test_contacts.py checks it against a cvxpy model of the original
coordinates). Clarabel is imported on first use.
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
from .contact_statics import API_SOURCE, ContactStatics, tangent_basis

#: the solver's statuses in the shared vocabulary (anything else is "error")
_STATUS = {
    "Solved": "optimal",
    "AlmostSolved": "optimal",
    "PrimalInfeasible": "infeasible",
    "AlmostPrimalInfeasible": "infeasible",
    "DualInfeasible": "unbounded",
    "AlmostDualInfeasible": "unbounded",
}
SOLVER = "Clarabel"
#: conic matrices kept per problem (one per pose and pattern of finite torque bounds)
MATRICES_KEPT = 16


class MultiContactPayload:
    """The cone program of one problem shape; :meth:`resolve` solves one case of that shape.

    Parameters
    ----------
    nv : number of generalized velocities (6 + n_joints for a floating base)
    n_joints : number of actuated rows
    n_contacts : number of point contacts k (0 allowed)
    payload_dim : 3 (force) or 6 (force and moment)
    settings : Clarabel settings to change from its defaults, e.g. ``{"tol_gap_rel": 1e-9}``
    """

    def __init__(
        self,
        nv: int,
        n_joints: int,
        n_contacts: int,
        *,
        payload_dim: int = 3,
        settings: dict[str, Any] | None = None,
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
        import clarabel

        self._clarabel = clarabel
        self.settings = clarabel.DefaultSettings()
        self.settings.verbose = False
        for key, value in (settings or {}).items():
            if not hasattr(self.settings, key):
                raise InputError(API_SOURCE, "settings", f"Clarabel has no setting {key!r}")
            try:
                setattr(self.settings, key, value)
            except (TypeError, ValueError, OverflowError):
                raise InputError(
                    API_SOURCE, f"settings.{key}", f"Clarabel refuses the value {value!r}"
                ) from None
        nj, k = self.shape[1], self.shape[2]
        self._n = 1 + nj + 3 * k  # x = (s, τ, then (λ_k, ν_k1, ν_k2) per contact)
        self._soc_rows = np.zeros((3 * k, self._n))
        self._soc_rows[np.arange(3 * k), 1 + nj + np.arange(3 * k)] = -1.0  # s = x_cone ∈ SOC
        self._q = np.zeros(self._n)
        self._q[0] = -1.0  # maximize s
        from scipy import sparse

        self._p = sparse.csc_matrix((self._n, self._n))  # no quadratic term
        self._matrices: dict[bytes, tuple] = {}  # by geometry (:meth:`_matrix`)
        if settings:  # a value Clarabel accepts field by field may still be refused as a whole
            probe = np.zeros(self._n)
            zero = sparse.csc_matrix((1, self._n))
            try:
                clarabel.DefaultSolver(
                    self._p, probe, zero, np.zeros(1), [clarabel.ZeroConeT(1)], self.settings
                )
            except Exception as exc:  # noqa: BLE001 - the solver's own words, as one message
                raise InputError(API_SOURCE, "settings", f"refused by Clarabel: {exc}") from None

    @classmethod
    def for_statics(cls, statics: ContactStatics, **kwargs: Any) -> MultiContactPayload:
        """A problem for the shape of ``statics``."""
        nv, nj, k, m = statics.shape
        return cls(nv, nj, k, payload_dim=m, **kwargs)

    def _matrix(self, st: ContactStatics) -> tuple:
        """The conic form's matrix ``A`` (sparse) and cones of ``A·x + s = b``: equilibrium
        (zero cone); s ≥ 0 and the finite torque bounds (nonnegative cone); one 3-dimensional
        second-order cone per contact. With the index arrays of the finite lower and upper
        bounds and the contact frames. Designs in one pose share all of it (only ``b``
        changes), so it is kept per geometry and pattern of finite bounds (the latest
        :data:`MATRICES_KEPT`)."""
        key = b"".join(
            np.ascontiguousarray(a).tobytes()
            for a in (
                st.contact_jacobians,
                st.normals,
                st.friction,
                st.payload_jacobian,
                st.payload_wrench,
                st.actuated,
                np.isfinite(st.tau_low),
                np.isfinite(st.tau_high),
                np.array([st.share_min]),
            )
        )
        known = self._matrices.get(key)
        if known is not None:
            return known
        from scipy import sparse

        nv, nj, k, _ = self.shape
        eq = np.zeros((nv, self._n))
        eq[:, 0] = st.payload_jacobian.T @ st.payload_wrench
        eq[st.actuated, 1 + np.arange(nj)] = 1.0
        if k:
            cols = 1 + nj + 3 * np.arange(k)
            eq[:, cols], eq[:, cols + 1], eq[:, cols + 2] = st.contact_columns()
        low = np.flatnonzero(np.isfinite(st.tau_low))
        high = np.flatnonzero(np.isfinite(st.tau_high))
        rows = 1 + low.size + high.size
        ineq = np.zeros((rows, self._n))
        ineq[0, 0] = -1.0  # s ≥ 0
        ineq[1 + np.arange(low.size), 1 + low] = -1.0  # −τ ≤ −τ_low
        ineq[1 + low.size + np.arange(high.size), 1 + high] = 1.0  # τ ≤ τ_high
        if st.share_min > 0 and k:  # ρ·Σ_j λ_j − λ_k ≤ 0: each contact its share of the total
            share = np.zeros((k, self._n))
            lam = 1 + nj + 3 * np.arange(k)
            share[:, lam] = st.share_min
            share[np.arange(k), lam] -= 1.0
            ineq = np.vstack([ineq, share])
            rows += k
        a = sparse.csc_matrix(np.vstack([eq, ineq, self._soc_rows]))
        cl = self._clarabel
        cones = [cl.ZeroConeT(nv), cl.NonnegativeConeT(rows)] + [cl.SecondOrderConeT(3)] * k
        basis = tangent_basis(st.normals) if k else None
        if len(self._matrices) >= MATRICES_KEPT:
            self._matrices.pop(next(iter(self._matrices)))  # the oldest
        self._matrices[key] = out = (a, cones, low, high, basis)
        return out

    def resolve(self, statics: ContactStatics) -> ContactPayloadResult:
        """Solve the case ``statics`` (of this problem's shape).

        Returns
        -------
        ContactPayloadResult
            In batch use a failed solve is a status, not an exception.
        """
        if statics.shape != self.shape:
            raise InputError(
                API_SOURCE,
                "statics",
                f"has shape {statics.shape}, problem built for "
                f"{self.shape} (nv, n_joints, k, payload_dim)",
            )
        _, nj, k, _ = self.shape
        start = time.perf_counter()
        a, cones, low, high, basis = self._matrix(statics)
        b = np.concatenate(
            [
                statics.gravity,
                [0.0],
                -statics.tau_low[low],
                statics.tau_high[high],
                np.zeros((k if statics.share_min > 0 else 0) + 3 * k),  # shares, cones
            ]
        )
        try:
            solver = self._clarabel.DefaultSolver(self._p, self._q, a, b, cones, self.settings)
            sol = solver.solve()
        except Exception as exc:  # noqa: BLE001 - a failed solve is a status in batch use
            wall = time.perf_counter() - start
            return failed_result("error", f"solver_error: {exc}", nj, k, wall, SOLVER)
        wall = time.perf_counter() - start
        native = str(sol.status)
        status = _STATUS.get(native, "error")
        if status != "optimal":
            payload = math.inf if status == "unbounded" else math.nan
            return failed_result(status, native, nj, k, wall, SOLVER, payload)
        return self._result(statics, sol, native, wall, low, high, basis)

    def _result(self, st, sol, native, wall, low, high, basis) -> ContactPayloadResult:
        _, nj, k, _ = self.shape
        nv = self.shape[0]
        x, z = np.asarray(sol.x), np.asarray(sol.z)
        tau = x[1 : 1 + nj]
        at_low, at_high = torque_activity(st, tau)
        # multipliers of the finite bounds: payload gained per unit the bound is relaxed
        mult_lo, mult_hi = np.zeros(nj), np.zeros(nj)
        mult_lo[low] = z[nv + 1 : nv + 1 + low.size]
        mult_hi[high] = z[nv + 1 + low.size : nv + 1 + low.size + high.size]
        cone = x[1 + nj :].reshape(k, 3)
        lam, nu1, nu2 = cone[:, 0], cone[:, 1], cone[:, 2]
        forces = contact_forces(st, lam, st.friction * nu1, st.friction * nu2, basis)
        tol = ACTIVE_RTOL * max(1.0, float(np.max(lam, initial=0.0)))
        unloaded = lam <= tol
        slip = (st.friction > 0) & ~unloaded & (lam - np.hypot(nu1, nu2) <= tol)
        return ContactPayloadResult(
            "optimal",
            native,
            float(x[0]),
            forces,
            tau.copy(),
            at_low,
            at_high,
            np.maximum(mult_lo, 0.0),
            np.maximum(mult_hi, 0.0),
            slip,
            unloaded,
            wall,
            float(sol.solve_time),
            SOLVER,
        )


def solve(statics: ContactStatics, **kwargs: Any) -> ContactPayloadResult:
    """One-off solve of ``statics``; keyword arguments go to :class:`MultiContactPayload`
    (``settings``). For many cases of one shape use :func:`solve_batch`."""
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


def solve_batch(
    *,
    actuated: Any,
    share_min: float = 0.0,
    settings: dict[str, Any] | None = None,
    **arrays: Any,
) -> ContactPayloadBatch:
    """Solve the cone program for every case of broadcast batch dimensions.

    Parameters
    ----------
    actuated : (n_joints,) actuated row indices, shared by all cases
    share_min : each contact's least share of the total normal force, shared by all cases
    settings : Clarabel settings, as for :class:`MultiContactPayload`
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
    # the contacts and payload point are validated once per distinct geometry (a batch of
    # designs in one pose has one); each design's gravity and torque bounds on their own
    varying = [n for n in _CORE_NDIM if n not in _DESIGN_FIELDS and lead[n]]
    statics: list[ContactStatics] = []
    seen: dict[bytes, ContactStatics] = {}
    for idx in np.ndindex(*batch):
        key = b"".join(np.ascontiguousarray(cases[n][idx]).tobytes() for n in varying)
        if key in seen:
            st = seen[key].with_design(**{n: cases[n][idx] for n in _DESIGN_FIELDS})
        else:
            st = ContactStatics(
                **{n: cases[n][idx] for n in _CORE_NDIM}, actuated=actuated, share_min=share_min
            )
            seen[key] = st
        statics.append(st)
    problem = MultiContactPayload.for_statics(statics[0], settings=settings)
    return _stack([problem.resolve(st) for st in statics], batch)


#: the fields of :func:`solve_batch` that differ from design to design in one pose
_DESIGN_FIELDS = ("gravity", "tau_low", "tau_high")


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
