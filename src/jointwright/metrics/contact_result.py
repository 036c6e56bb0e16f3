"""The result of a several-contact payload solve and the helpers that fill it."""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from .contact_statics import ContactStatics, tangent_basis

#: the shared status vocabulary of every solve (the solver's own word is kept beside it)
STATUSES = ("optimal", "infeasible", "unbounded", "error")
#: relative slack under which a bound or cone counts as active
ACTIVE_RTOL = 1e-6


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


def failed_result(
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


def torque_activity(st: ContactStatics, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    scale = np.maximum(1.0, np.abs(tau))
    with np.errstate(invalid="ignore"):
        at_low = np.isfinite(st.tau_low) & (tau - st.tau_low <= ACTIVE_RTOL * scale)
        at_high = np.isfinite(st.tau_high) & (st.tau_high - tau <= ACTIVE_RTOL * scale)
    return at_low, at_high


def contact_forces(
    st: ContactStatics, normal: np.ndarray, tan1: np.ndarray, tan2: np.ndarray, basis=None
) -> np.ndarray:
    """World-aligned contact forces (k, 3) from components along n, t1, t2 (N); ``basis``:
    :func:`tangent_basis` of ``st.normals`` when the caller has it already."""
    if not normal.size:
        return np.zeros((0, 3))
    t1, t2, n = tangent_basis(st.normals) if basis is None else basis
    return normal[:, None] * n + tan1[:, None] * t1 + tan2[:, None] * t2
