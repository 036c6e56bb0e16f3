"""A proven lower bound on a duty case's rating use, for pruning (metrics/duty.py, dutycase.py).

Along a trajectory the joint torque is linear in the actuator masses,
τ_j(t) = τ_links,j(t) + Σ_k m_k·τ_k,j(t), so masses known only within [m_min, m_max] give an
interval [τ_lo(t), τ_hi(t)] per sample. At one sample the motor torque is linear in τ_j on each
side of τ_j = 0 (the power-flow mode is the sign of τ_j·q̇), so the least |τ_m| over the
interval is 0 when τ_m changes sign over it and otherwise the least |τ_m| at τ_lo, 0 (when
inside) or τ_hi. From those per-sample lower bounds ℓ_k:

* RMS (linear hold): on a step with both ends of one sign a²+ab+b² ≥ ℓ_a²+ℓ_a·ℓ_b+ℓ_b²,
  otherwise a²+ab+b² ≥ (a²+b²)/2 ≥ (ℓ_a²+ℓ_b²)/2;
* peak |τ_m| ≥ max ℓ_k; the speed use peak(N·q̇)/ω_max is exact.

The rating use is the largest of these uses (and others that the bound leaves out), so the
bound never exceeds it.
"""

from __future__ import annotations

import numpy as np

from ..metrics.duty import STANDSTILL


def motor_torque_linear(tau, qd, qdd, n, ef, eb, ir) -> np.ndarray:
    """metrics.duty.motor_torque without its input checks (the bound calls it many times):
    τ/(η_f·N) motoring, η_b·τ/N back-driven, max(η_b, 0)·τ/N holding, plus N·I_r·q̈."""
    still = STANDSTILL * np.max(np.abs(qd))
    mode = np.where(np.abs(qd) <= still, 0.0, np.sign(tau * qd))
    gear = np.where(mode > 0, tau / (ef * n), np.where(mode < 0, eb, np.maximum(eb, 0.0)) * tau / n)
    return gear + n * ir * qdd


class DutyBound:
    """Lower bounds on ``rating_use`` of the limited duty cases, per joint and option."""

    def __init__(self, evaluator, table):
        self.table = table
        self.cases = [
            (pd, pd.case.limits["rating_use_max"])
            for pd in evaluator.duty
            if "rating_use_max" in pd.case.limits
        ]

    def __bool__(self) -> bool:
        return bool(self.cases)

    def lower_bound(self, pd, j: int, options: np.ndarray, tau_lo: np.ndarray, tau_hi: np.ndarray):
        """Lower bound (K,) on joint j's rating use.

        For options (K,) and τ_j within [τ_lo, τ_hi] (K, T).
        """
        r = self.table.rows
        n, ef, eb, ir = (
            r[k][options][:, None]
            for k in ("ratio", "eta_forward", "eta_backward", "rotor_inertia")
        )
        qd, qdd, t = pd.qd[j], pd.qdd[j], pd.trajectory.t
        vals = [
            motor_torque_linear(x, qd, qdd, n, ef, eb, ir)
            for x in (tau_lo, np.clip(0.0, tau_lo, tau_hi), tau_hi)
        ]
        lo_v = np.minimum(np.minimum(vals[0], vals[1]), vals[2])
        hi_v = np.maximum(np.maximum(vals[0], vals[1]), vals[2])
        least = np.where((lo_v <= 0) & (hi_v >= 0), 0.0, np.minimum(np.abs(lo_v), np.abs(hi_v)))
        sign = np.where(lo_v > 0, 1, np.where(hi_v < 0, -1, 0))
        a, b = least[:, :-1], least[:, 1:]
        same = (sign[:, :-1] == sign[:, 1:]) & (sign[:, :-1] != 0)
        sq = np.where(same, (a * a + a * b + b * b) / 3.0, (a * a + b * b) / 6.0)
        h = np.diff(t)
        rms = np.sqrt(np.sum(sq * h, axis=-1) / (t[-1] - t[0]))
        use = np.maximum(
            rms / r["motor_continuous_torque"][options],
            least.max(axis=-1) / r["motor_peak_torque"][options],
        )
        speed = np.max(np.abs(n * qd), axis=-1) / r["motor_max_speed"][options]
        return np.maximum(use, speed)

    def ok(self, idx, unit, options, st, mass) -> np.ndarray:
        """False where a limited duty case's rating use provably exceeds its limit.

        That is, for every completion of the partial design.
        """
        K = options.size
        keep = np.ones(K, dtype=bool)
        unit = list(unit)
        A = [k for k in np.flatnonzero(idx >= 0) if k not in unit]
        F = [k for k in range(idx.size) if idx[k] < 0 and k not in unit]
        for pd, limit in self.cases:
            tm = pd.tau_mass  # (n_act, n, T)
            base = (
                pd.tau_links + np.einsum("k,knt->nt", mass[idx[A]], tm[A])
                if A
                else pd.tau_links.copy()
            )
            lo_f = np.minimum(
                st["mmin"][F, None, None] * tm[F], st["mmax"][F, None, None] * tm[F]
            ).sum(axis=0)
            hi_f = np.maximum(
                st["mmin"][F, None, None] * tm[F], st["mmax"][F, None, None] * tm[F]
            ).sum(axis=0)
            add = mass[options][:, None, None] * tm[unit].sum(axis=0)  # (K, n, T)
            touched = set(unit) | {k for k in A if np.any(tm[unit][:, k] != 0)}
            for j in sorted(touched):
                opts = options if j in unit else np.full(K, idx[j])
                lb = self.lower_bound(
                    pd, int(j), opts, base[j] + lo_f[j] + add[:, j], base[j] + hi_f[j] + add[:, j]
                )
                keep &= lb <= limit * (1 + 1e-9) + 1e-12
        return keep
