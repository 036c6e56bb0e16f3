"""Speed-case bound over partial designs: the acceleration a stroke or a minimum needs
(docs/optimizer.md, item 11).

A speed case with a stroke s and ``speed_min`` v requires the end point to reach v from rest
within s: the distance to reach v is x(v) = ∫₀ᵛ w/α(w) dw (metrics/stroke.py) and x grows with
v, so a design that meets the requirement has x(v) ≤ s; since α(w) ≤ ᾱ for every w in [0, v],
x(v) ≥ v²/(2ᾱ) (constant-acceleration kinematics, v² = 2·α·x), hence **ᾱ ≥ v²/(2s)**. A speed
case with ``acceleration_min`` requires α(0) ≥ that minimum. Both are necessary conditions on
an upper bound ᾱ of the acceleration over the speeds [0, v].

α(w) is the least over the joints of each joint's first exit from its limits
(:func:`..metrics.acceleration._acceleration_exits`). Joint j's torque is
τ_j = T_j + k_j·α with T_j = t0_j + c2_j·w² (rest load and Coriolis terms) and k_j = (M·a)_j +
m_p·(Jᵀu)_j; t0, c2 and k are affine in the actuator masses (:func:`..speedcase.load_terms`),
so over a partial design, whose open joints' masses lie in [m_min, m_max], each lies in an
interval. Its motor torque h(α) = φ(τ_j(α)) + N·I_r·a_j·α, with φ(τ) = f·τ/N piecewise linear
by power-flow mode (f = 1/η_f motoring, η_b back-driven, max(η_b, 0) holding), is
nondecreasing in T_j and in k_j (for α ≥ 0) whenever η_b ≥ 0. Hence the exit through the
joint's upper limit (σ·τ_m ≤ hi) is largest at the interval corner that makes σ·h least, the
exit through its lower limit at the opposite corner, and the gear rating's two sides likewise;
the least of those four corner exits bounds the joint's exit for every completion and every
speed in [0, v], with the motor envelope at its largest there (min(τ_peak, Kt·V/R) for the
driving side, min(τ_peak, Kt·V/R + B·v) for the braking side, B the back-EMF slope). A joint
with η_b < 0 (a self-locking gear back-driven) gives no bound. Only assigned joints are read;
an open joint may only lower α, never raise it.
"""

from __future__ import annotations

import numpy as np

from ..metrics.acceleration import _acceleration_exits, _first_rise_linear
from ..metrics.envelope import _line
from ..metrics.speed import _direction_rates
from ..options import FILTER_SLACK
from ..speedcase import load_terms, motor_of


class StrokeBound:
    """The acceleration the speed cases need, checked on partial designs; see the module
    docstring. ``ok`` is the only method the search calls."""

    def __init__(self, model, cases: list[tuple]):
        self.model = model
        #: per requirement: (a, sigma, speed range w, needed acceleration, t0 (base, per kg),
        #: k (base, per kg), c2 (base, per kg)); base (n,), per kg (n, n): row i per kg at i
        self.cases = cases
        r = model.table.rows
        m = motor_of(
            r["motor_peak_torque"],
            r["motor_max_speed"],
            r["torque_constant"],
            r["resistance"],
            r["bus_voltage"],
            r["winding_temperature_max"],
        )
        line = _line(
            m["torque_constant"], m["resistance"], m["bus_voltage"], m["winding_temperature"]
        )
        assert line is not None
        kt, v_bus, r_hot = line
        with np.errstate(invalid="ignore"):
            #: per option: the line's torque at standstill Kt·V/R (inf without electrical data)
            self.line_torque = np.where(np.isfinite(v_bus), kt * v_bus / r_hot, np.inf)
            #: per option: the back-EMF slope per unit motor speed, Kt²/R (0 without a line)
            self.emf = np.where(np.isfinite(self.line_torque), kt * kt / r_hot, 0.0)

    @classmethod
    def of(cls, model) -> StrokeBound | None:
        """The bound of ``model``'s speed cases with a stroke and ``speed_min``, or with
        ``acceleration_min``; None when there is none."""
        ev = model.evaluator
        n = model.n
        out = []
        for pc in ev.cases:
            c = pc.case
            if c.kind != "speed":
                continue
            needs = []
            v = c.limits.get("speed_min", 0.0)
            if c.stroke > 0 and v > 0:
                w = v * (1 - FILTER_SLACK)
                needs.append((w, w * w / (2.0 * c.stroke)))
            acc = c.limits.get("acceleration_min", 0.0)
            if acc > 0:
                needs.append((0.0, acc))
            if not needs:
                continue
            a, _reachable = _direction_rates(pc.Jj, pc.u)
            sigma = np.sign(np.where(np.abs(a) > 1e-12 * np.abs(a).max(), a, 0.0))
            masses = np.vstack([np.zeros(n), np.eye(n)])
            t0, k, c2 = load_terms(ev, pc, masses)
            terms = [(x[0], x[1:] - x[0]) for x in (t0, k, c2)]
            for w, need in needs:
                out.append((a, sigma, w, need * (1 - 1e-6), *terms))
        return cls(model, out) if out else None

    def ok(self, idx: np.ndarray, unit, options: np.ndarray, st: dict) -> np.ndarray:
        """(K,) False where no completion of giving ``unit`` each option can meet a speed
        case's stroke or acceleration minimum; ``st``: the node's statistics (``mmin`` and
        ``mmax`` of the open joints). The joints assigned above the node are judged once for
        all children, the unit's mass anywhere in its options' range (a looser bound, the same
        for every child); then each child's own joints, the assigned masses fixed."""
        K = options.size
        ok = np.ones(K, dtype=bool)
        if K == 0:
            return ok
        unit = list(unit)
        above = idx.copy()
        above[unit] = -1
        A = np.flatnonzero(above >= 0)
        mass = self.model.mass
        lo, hi = st["mmin"].copy(), st["mmax"].copy()
        lo[A] = hi[A] = mass[idx[A]]
        if A.size:
            node_lo, node_hi = lo.copy(), hi.copy()
            node_lo[unit], node_hi[unit] = mass[options].min(), mass[options].max()
            for a, sigma, w, need, *terms in self.cases:
                top = self._bound(
                    A, idx[A][None, :], node_lo[None], node_hi[None], a, sigma, w, terms
                )
                if not top[0] >= need:
                    return np.zeros(K, dtype=bool)
        lo = np.broadcast_to(lo, (K, lo.size)).copy()
        hi = np.broadcast_to(hi, (K, hi.size)).copy()
        lo[:, unit] = hi[:, unit] = mass[options][:, None]
        J = np.asarray(unit, dtype=np.int64)
        opt = np.repeat(options[:, None], J.size, axis=1)
        for a, sigma, w, need, *terms in self.cases:
            ok &= self._bound(J, opt, lo, hi, a, sigma, w, terms) >= need
        return ok

    def acceleration(self, idx, unit, options, st, a, sigma, w, terms) -> np.ndarray:
        """(K,) an upper bound on the end-point acceleration at every speed in [0, w] of every
        completion of giving ``unit`` each option, for a speed case with direction rates ``a``
        (J⁺·u), their signs ``sigma`` and the affine load terms ``terms`` (t0, k, c2; each
        (base (n,), per kg (n, n))): every assigned joint's limits read, per child."""
        K = options.size
        unit = list(unit)
        above = idx.copy()
        above[unit] = -1
        A = np.flatnonzero(above >= 0)
        J = np.r_[A, unit].astype(np.int64)
        opt = np.empty((K, J.size), dtype=np.int64)
        opt[:, : A.size] = idx[A]
        opt[:, A.size :] = options[:, None]
        lo = np.broadcast_to(st["mmin"], (K, idx.size)).copy()
        hi = np.broadcast_to(st["mmax"], (K, idx.size)).copy()
        lo[:, A] = hi[:, A] = self.model.mass[idx[A]]
        lo[:, unit] = hi[:, unit] = self.model.mass[options][:, None]
        return self._bound(J, opt, lo, hi, a, sigma, w, terms)

    def _bound(self, J, opt, m_lo, m_hi, a, sigma, w, terms) -> np.ndarray:
        """(K,) the bound reading the limits of joints ``J`` with options ``opt`` (K, |J|),
        every actuator's mass within [m_lo, m_hi] (K, n) (docs: module docstring)."""
        rows = self.model.table.rows
        n_ = rows["ratio"][opt]
        eta_f, eta_b = rows["eta_forward"][opt], rows["eta_backward"][opt]
        ir, peak = rows["rotor_inertia"][opt], rows["motor_peak_torque"][opt]
        gear = rows["gear_peak_torque"][opt]
        line, emf = self.line_torque[opt], self.emf[opt]
        lo_b, hi_b = [], []
        for base, per_kg in terms:
            g = per_kg[:, J]
            pos, neg = np.maximum(g, 0.0), np.minimum(g, 0.0)
            lo_b.append(base[J] + m_lo @ pos + m_hi @ neg)
            hi_b.append(base[J] + m_hi @ pos + m_lo @ neg)
        (t_lo, k_lo, c_lo), (t_hi, k_hi, c_hi) = lo_b, hi_b
        T_lo = t_lo + np.minimum(c_lo, 0.0) * w * w  # least rest-and-speed torque on [0, w]
        T_hi = t_hi + np.maximum(c_hi, 0.0) * w * w
        aj, sj = np.broadcast_to(a[J], T_lo.shape), np.broadcast_to(sigma[J], T_lo.shape)
        up = sj >= 0  # σ·h is least at the low corner when σ ≥ 0
        drive = np.minimum(peak, line)
        brake = np.minimum(peak, line + emf * n_ * np.abs(aj) * (sj != 0) * w)
        inf = np.full_like(T_lo, np.inf)

        # both sides in one call: the upper limit at its corner (lower limit off), then the
        # lower limit at the opposite corner (upper off)
        def both(x, y):
            return np.concatenate([x, y], axis=1)

        exits = _acceleration_exits(
            both(np.where(up, T_lo, T_hi), np.where(up, T_hi, T_lo)),
            both(np.where(up, k_lo, k_hi), np.where(up, k_hi, k_lo)),
            both(aj, aj),
            both(sj, sj),
            both(n_, n_),
            both(eta_f, eta_f),
            both(eta_b, eta_b),
            both(ir, ir),
            both(drive, inf),
            both(inf, brake),
            both(inf, inf),
        )
        gears = _first_rise_linear(
            0.0, np.inf, both(k_lo, -k_hi), both(T_lo - gear, -T_hi - gear)
        )  # |τ| ≤ rating: τ rises with t0 and k, so each side at its own corner
        bound = np.minimum(exits, gears)
        bound = np.where(both(eta_b, eta_b) >= 0, bound, np.inf)  # φ monotone when η_b ≥ 0
        return bound.min(axis=1, initial=np.inf)
