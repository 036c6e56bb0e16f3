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

Most options pass the bound at every node, and judging them costs a (options × samples) pass per
node. So each option is first judged once against the widest interval any node can give (every
actuator mass within the range of the candidates): with u(t) the largest |τ_m| over that interval
(at its ends or at τ = 0, the pieces being linear), every per-sample ℓ at a node is ≤ u(t), so
the bound there is ≤ the same formulas with ℓ replaced by u (each RMS term grows with a and b).
When that is within the limit the option passes at every node inside the range (**safe**), and
only the other options are judged per node: the same decisions, fewer passes.
"""

from __future__ import annotations

import time

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
        #: per case: the mass range (lo, hi) per joint the safe options were judged over, and
        #: per joint the options judged so far (``known``) and those proven safe (``safe``)
        self._ranges: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self._known: dict[tuple[int, int], np.ndarray] = {}
        self._safe: dict[tuple[int, int], np.ndarray] = {}

    def __bool__(self) -> bool:
        return bool(self.cases)

    def _uses(self, pd, j: int, options: np.ndarray, least, same) -> np.ndarray:
        """The rating-use formulas from per-sample |τ_m| values ``least`` (K, T) and ``same``
        (K, T-1): True where a step keeps one sign (the tighter RMS term applies)."""
        r = self.table.rows
        n = r["ratio"][options][:, None]
        qd, t = pd.qd[j], pd.trajectory.t
        a, b = least[:, :-1], least[:, 1:]
        sq = np.where(same, (a * a + a * b + b * b) / 3.0, (a * a + b * b) / 6.0)
        h = np.diff(t)
        rms = np.sqrt(np.sum(sq * h, axis=-1) / (t[-1] - t[0]))
        use = np.maximum(
            rms / r["motor_continuous_torque"][options],
            least.max(axis=-1) / r["motor_peak_torque"][options],
        )
        speed = np.max(np.abs(n * qd), axis=-1) / r["motor_max_speed"][options]
        return np.maximum(use, speed)

    def _ends(self, pd, j: int, options: np.ndarray, tau_lo, tau_hi) -> list[np.ndarray]:
        r = self.table.rows
        n, ef, eb, ir = (
            r[k][options][:, None]
            for k in ("ratio", "eta_forward", "eta_backward", "rotor_inertia")
        )
        qd, qdd = pd.qd[j], pd.qdd[j]
        return [
            motor_torque_linear(x, qd, qdd, n, ef, eb, ir)
            for x in (tau_lo, np.clip(0.0, tau_lo, tau_hi), tau_hi)
        ]

    def lower_bound(self, pd, j: int, options: np.ndarray, tau_lo: np.ndarray, tau_hi: np.ndarray):
        """Lower bound (K,) on joint j's rating use.

        For options (K,) and τ_j within [τ_lo, τ_hi] (K, T).
        """
        vals = self._ends(pd, j, options, tau_lo, tau_hi)
        lo_v = np.minimum(np.minimum(vals[0], vals[1]), vals[2])
        hi_v = np.maximum(np.maximum(vals[0], vals[1]), vals[2])
        least = np.where((lo_v <= 0) & (hi_v >= 0), 0.0, np.minimum(np.abs(lo_v), np.abs(hi_v)))
        sign = np.where(lo_v > 0, 1, np.where(hi_v < 0, -1, 0))
        same = (sign[:, :-1] == sign[:, 1:]) & (sign[:, :-1] != 0)
        return self._uses(pd, j, options, least, same)

    def upper_bound(self, pd, j: int, options: np.ndarray, tau_lo: np.ndarray, tau_hi: np.ndarray):
        """An upper bound (K,) on :meth:`lower_bound` over every interval inside [τ_lo, τ_hi]
        (K, T): the formulas at the largest |τ_m| over it (module docstring)."""
        vals = self._ends(pd, j, options, tau_lo, tau_hi)
        most = np.maximum(np.maximum(np.abs(vals[0]), np.abs(vals[1])), np.abs(vals[2]))
        same = np.ones((options.size, most.shape[1] - 1), dtype=bool)
        return self._uses(pd, j, options, most, same)

    def _range(self, c: int, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The mass range per joint the safe options of case ``c`` hold over: widened (and the
        options judged again) when a node's masses leave it."""
        old = self._ranges.get(c)
        if old is not None and np.all(old[0] <= lo) and np.all(hi <= old[1]):
            return old
        if old is not None:
            lo, hi = np.minimum(old[0], lo), np.maximum(old[1], hi)
            for key in [k for k in self._known if k[0] == c]:
                self._known[key][:] = False
        self._ranges[c] = (lo, hi)
        return lo, hi

    def safe(
        self, c: int, j: int, options: np.ndarray, lo: np.ndarray, hi: np.ndarray, deadline=None
    ):
        """(K,) True where joint ``j``'s option passes case ``c``'s bound at every node whose
        actuator masses lie within [lo, hi] per joint. Past ``deadline`` (a
        ``time.perf_counter()`` value) the options not yet judged read False (not shown safe)."""
        pd, limit = self.cases[c]
        lo, hi = self._range(c, lo, hi)
        key = (c, j)
        if key not in self._known:
            self._known[key] = np.zeros(len(self.table), dtype=bool)
            self._safe[key] = np.zeros(len(self.table), dtype=bool)
        known, safe = self._known[key], self._safe[key]
        todo = np.unique(options[~known[options]])
        if todo.size:
            tm = pd.tau_mass[:, j]  # (n, T)
            tau_lo = pd.tau_links[j] + np.minimum(lo[:, None] * tm, hi[:, None] * tm).sum(0)
            tau_hi = pd.tau_links[j] + np.maximum(lo[:, None] * tm, hi[:, None] * tm).sum(0)
            for s in range(0, todo.size, SAFE_CHUNK):
                if _late(deadline):
                    break
                part = todo[s : s + SAFE_CHUNK]
                up = self.upper_bound(pd, j, part, tau_lo[None, :], tau_hi[None, :])
                safe[part] = up <= limit * (1 + 1e-9) + 1e-12
                known[part] = True
        return safe[options]

    def ok(self, idx, unit, options, st, mass, deadline=None) -> np.ndarray:
        """False where a limited duty case's rating use provably exceeds its limit.

        That is, for every completion of the partial design. Past ``deadline`` (a
        ``time.perf_counter()`` value) the options not yet judged are kept (skipping a cut is
        safe): the bounds are computed :data:`SAFE_CHUNK` options at a time.
        """
        K = options.size
        keep = np.ones(K, dtype=bool)
        if K == 0:
            return keep
        unit = list(unit)
        A = [k for k in np.flatnonzero(idx >= 0) if k not in unit]
        F = [k for k in range(idx.size) if idx[k] < 0 and k not in unit]
        # every actuator mass of the node's completions, per joint
        lo, hi = st["mmin"].astype(float), st["mmax"].astype(float)
        if A:
            lo[A] = np.minimum(lo[A], mass[idx[A]])
            hi[A] = np.maximum(hi[A], mass[idx[A]])
        lo[unit] = np.minimum(lo[unit], mass[options].min())
        hi[unit] = np.maximum(hi[unit], mass[options].max())
        finite = bool(np.all(np.isfinite(lo)) and np.all(np.isfinite(hi)))
        for c, (pd, limit) in enumerate(self.cases):
            tm = pd.tau_mass  # (n_act, n, T)
            touched = set(unit) | {k for k in A if np.any(tm[unit][:, k] != 0)}
            judge = {}  # joint -> rows of ``options`` its bound must judge
            for j in sorted(touched):
                opts = options if j in unit else idx[j : j + 1]
                if _late(deadline):
                    return keep
                passed = (
                    self.safe(c, int(j), opts, lo, hi, deadline) if finite else np.zeros(1, bool)
                )
                if j in unit:
                    rows = np.flatnonzero(~passed & keep)
                elif passed.all():
                    rows = np.empty(0, dtype=np.int64)
                else:
                    rows = np.flatnonzero(keep)
                if rows.size:
                    judge[j] = rows
            if not judge:
                continue
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
            own = tm[unit].sum(axis=0)  # (n, T): per unit of the unit's actuator mass
            for j, all_rows in judge.items():
                for s in range(0, all_rows.size, SAFE_CHUNK):
                    if _late(deadline):
                        return keep
                    rows = all_rows[s : s + SAFE_CHUNK]
                    opts = options[rows] if j in unit else np.full(rows.size, idx[j])
                    add = mass[options[rows]][:, None] * own[j]  # (R, T)
                    lb = self.lower_bound(
                        pd, int(j), opts, base[j] + lo_f[j] + add, base[j] + hi_f[j] + add
                    )
                    keep[rows] &= lb <= limit * (1 + 1e-9) + 1e-12
        return keep


def _late(deadline) -> bool:
    return deadline is not None and time.perf_counter() > deadline


#: options judged at once when the safe options are found
SAFE_CHUNK = 2048
