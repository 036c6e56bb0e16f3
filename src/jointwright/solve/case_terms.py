"""Per-option terms of the cases the bounds read, built once per model: the payload cases'
joint-torque terms (:class:`PayloadTerms`, docs/optimizer.md item 2) and the torque cases'
per-joint masks."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..metrics.loads import MOTION_SIGN, torque_ratio
from ..metrics.payload import torque_bounds


@dataclass(frozen=True, eq=False)
class PayloadTerms:
    """One payload case: τ_j(s) = g0_j + Σ_k m_k·G[k, j] + s·a_j against [lo, hi] per option."""

    name: str
    a: np.ndarray  # (n,)
    g0: np.ndarray  # (n,)
    G: np.ndarray  # (n, n): G[k, j] torque at joint j per kg of actuator k
    lo: np.ndarray  # (n, O)
    hi: np.ndarray  # (n, O)
    minimum: float  # payload_min (0 when none)


def payload_terms(model, pc) -> PayloadTerms:
    """The terms of payload case ``pc`` (a prepared case) for every option of ``model``'s
    table at every joint: the evaluator's own capacity formulas (tip speed included)."""
    t = model.table
    n_options = len(t)
    # every joint with every option: the evaluator's own capacity formulas (tip speed included).
    # Without a tip speed an option's capacities do not depend on its joint: one column,
    # broadcast over the joints (a table of 500,000 options took 2.7 s and a gigabyte per case
    # when gathered for every joint)
    per_joint = getattr(pc.case, "tip_speed", 0.0) > 0
    columns = model.n if per_joint else 1
    arr = t.arrays(np.repeat(np.arange(n_options)[:, None], columns, axis=1))
    if model.project.requirements.efficiency_band:
        # a robust payload is the payload at (η_f low, η_b high) (robust.py): bounds from
        # that end's capacities bound it exactly as nominal ones bound the nominal payload
        arr = arr.at_band("low", "high")
    if per_joint:
        cap_m, cap_b = model.evaluator.capacity_at_speed(pc, arr)
    else:
        shape = (n_options, model.n)
        cap_m = np.broadcast_to(arr.capacity("motoring"), shape)
        cap_b = np.broadcast_to(arr.capacity("backdriven"), shape)
    along = pc.velocity_sign if pc.case.motion != "against" else -pc.velocity_sign
    sign = {"along": along, "against": -along, "hold": np.zeros_like(along)}[pc.case.motion]
    lo, hi = torque_bounds(np.broadcast_to(sign, (n_options, model.n)), cap_m, cap_b)
    vi = np.asarray(pc.basis.v_index)
    a = pc.Jj.T @ (pc.u / np.linalg.norm(pc.u))
    g0 = np.asarray(pc.basis.g0)[vi]
    if getattr(pc, "load_a", None) is not None:  # a wrench case (metrics.loads)
        a, g0 = pc.load_a[vi], g0 + pc.tau_fixed[vi]
    return PayloadTerms(
        name=pc.case.name,
        a=a,
        g0=g0,
        G=np.asarray(pc.basis.g_mass)[:, vi],
        lo=np.asarray(lo).T.copy(),
        hi=np.asarray(hi).T.copy(),
        minimum=float(pc.case.limits.get("payload_min", 0.0)),
    )


def torque_terms(model, project) -> tuple:
    """Per named joint of each torque case: (joint, options that carry its torque with the
    case's factor); a per-joint requirement."""
    cases = [c for c in project.cases if c.kind == "torque"]
    if not cases:
        return ()
    n_opt = len(model.table)
    arr = model.table.arrays(np.repeat(np.arange(n_opt)[:, None], model.n, axis=1))
    cap_m, cap_b = arr.capacity("motoring"), arr.capacity("backdriven")
    names = list(project.robot.actuated)
    out = []
    for c in cases:
        limit = c.limits.get("torque_ratio_min", 1.0)
        for (jn, tau), (_, motion) in zip(c.joint_torques, c.joint_motions, strict=True):
            j = names.index(jn)
            r = torque_ratio(
                np.array([tau]),
                np.array([MOTION_SIGN[motion]]),
                cap_m[:, j : j + 1],
                cap_b[:, j : j + 1],
            )[:, 0]
            out.append((j, r >= limit * (1 - 1e-12)))  # the check's own tolerance
    return tuple(out)
