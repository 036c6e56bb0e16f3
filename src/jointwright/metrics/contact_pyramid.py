"""Independent bounds on the several-contact payload: linear programs with friction pyramids.

Inscribed and circumscribed p-sided pyramids bracket each friction cone, so the two linear
programs (scipy ``linprog``, HiGHS) bound the cone program's payload from below and above
(docs/contacts.md, "Independent bounds by linear programs").
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

_LINPROG_STATUS = {0: "optimal", 2: "infeasible", 3: "unbounded"}


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
        raise InputError(API_SOURCE, "sides", f"must be an integer >= 3, got {sides!r}")
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
    a_share = np.zeros((k if st.share_min > 0 else 0, nj + 3 * k + 1))
    if a_share.shape[0]:  # ρ·Σ_j f_n,j − f_n,k ≤ 0: each contact its share of the total
        a_share[:, nj : nj + k] = st.share_min
        a_share[np.arange(k), nj + np.arange(k)] -= 1.0
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
        A_ub=np.vstack([a_ub, a_share]) if k else None,
        b_ub=np.zeros(p * k + a_share.shape[0]) if k else None,
        A_eq=a_eq,
        b_eq=st.gravity,
        bounds=bounds,
        method="highs",
    )
    wall = time.perf_counter() - start
    status = _LINPROG_STATUS.get(res.status, "error")
    if status != "optimal":
        payload = math.inf if status == "unbounded" else math.nan
        return failed_result(status, str(res.message), nj, k, wall, "scipy-highs", payload)
    return _pyramid_result(st, res, a_ub, wall)


def _pyramid_result(
    st: ContactStatics, res: Any, a_ub: np.ndarray, wall: float
) -> ContactPayloadResult:
    _, nj, k, _ = st.shape
    z = res.x
    tau, fn, ft1, ft2 = z[:nj], z[nj : nj + k], z[nj + k : nj + 2 * k], z[nj + 2 * k : nj + 3 * k]
    forces = contact_forces(st, fn, ft1, ft2)
    at_low, at_high = torque_activity(st, tau)
    tol = ACTIVE_RTOL * max(1.0, float(np.max(fn, initial=0.0)))
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
