"""A reference model of the several-contact payload in cvxpy (a general-purpose convex modelling
library), written in the original contact coordinates: forces ``f_k`` with the friction cone
``‖f_k − (n_k·f_k)·n_k‖ ≤ μ_k·n_k·f_k``, torques within their bounds, static equilibrium
``g = Sᵀ·τ + Σ J_kᵀ·f_k + J_pᵀ·(s·w)``, maximize ``s ≥ 0``. The library's own program
(jointwright.metrics.contact_cone) writes the scaled coordinates straight into the conic
solver's form; the tests compare the two.
"""

from __future__ import annotations

import cvxpy as cp
import numpy as np

from jointwright.metrics.contacts import ContactStatics


def reference_payload(st: ContactStatics) -> tuple[str, float, np.ndarray]:
    """(cvxpy status, s*, joint torques) of the payload program of ``st``."""
    nv, nj, k, _ = st.shape
    s = cp.Variable(nonneg=True)
    tau = cp.Variable(nj)
    forces = cp.Variable((k, 3)) if k else None
    lhs = (st.payload_jacobian.T @ st.payload_wrench) * s
    cons = []
    if nj:
        sel = np.zeros((nv, nj))
        sel[st.actuated, np.arange(nj)] = 1.0
        lhs = lhs + sel @ tau
        low, high = np.isfinite(st.tau_low), np.isfinite(st.tau_high)
        if low.any():
            cons.append(tau[np.flatnonzero(low)] >= st.tau_low[low])
        if high.any():
            cons.append(tau[np.flatnonzero(high)] <= st.tau_high[high])
    for c in range(k):
        n = st.normals[c]
        f = forces[c]
        lhs = lhs + st.contact_jacobians[c].T @ f
        normal = n @ f
        cons.append(normal >= 0)  # a contact pushes, never pulls (also when μ = 0)
        cons.append(cp.norm(f - normal * n) <= st.friction[c] * normal)
    if k and st.share_min > 0:  # every contact takes its share of the total normal force
        normals = cp.hstack([st.normals[c] @ forces[c] for c in range(k)])
        cons.append(normals >= st.share_min * cp.sum(normals))
    cons.append(lhs == st.gravity)
    problem = cp.Problem(cp.Maximize(s), cons)
    problem.solve(solver="CLARABEL")
    value = np.nan if s.value is None else float(s.value)
    torques = np.full(nj, np.nan) if tau.value is None else np.array(tau.value)
    return str(problem.status), value, torques


class CompiledReference:
    """The former path: the scaled program as a cvxpy problem compiled once per shape, every
    number of a case a ``Parameter`` (DPP), re-solved by changing the parameters (kept for
    benchmarks/contacts_resolve.py)."""

    def __init__(self, st: ContactStatics):
        nv, nj, k, _ = st.shape
        self.shape = st.shape
        self.s = cp.Variable(nonneg=True)
        p = self.par = {
            "g": cp.Parameter(nv),
            "b": cp.Parameter(nv),
            "St": cp.Parameter((nv, nj)),
            "lo": cp.Parameter(nj),
            "hi": cp.Parameter(nj),
            "An": cp.Parameter((nv, k)),
            "At1": cp.Parameter((nv, k)),
            "At2": cp.Parameter((nv, k)),
        }
        tau, lam, nu1, nu2 = cp.Variable(nj), cp.Variable(k), cp.Variable(k), cp.Variable(k)
        lhs = p["b"] * self.s + p["St"] @ tau + p["An"] @ lam + p["At1"] @ nu1 + p["At2"] @ nu2
        cons = [tau >= p["lo"], tau <= p["hi"], lhs == p["g"]]
        cons.append(cp.SOC(lam, cp.vstack([nu1, nu2]), axis=0))
        self.problem = cp.Problem(cp.Maximize(self.s), cons)

    def resolve(self, st: ContactStatics) -> float:
        """s* of ``st`` (finite torque bounds only), NaN unless optimal."""
        p = self.par
        p["g"].value = np.array(st.gravity)
        p["b"].value = st.payload_jacobian.T @ st.payload_wrench
        p["St"].value = st.selection_transpose()
        p["lo"].value, p["hi"].value = np.array(st.tau_low), np.array(st.tau_high)
        p["An"].value, p["At1"].value, p["At2"].value = st.contact_columns()
        self.problem.solve(solver="CLARABEL")
        return float(self.s.value) if self.problem.status == "optimal" else float("nan")
