"""An upper bound on the payload of stance (several-contact) cases over a partial design.

The stance payload of a complete design is the largest s ≥ 0 with

    Sᵀτ + Σ_k J_kᵀ f_k + s·J_pᵀw = g(m),   lo_j ≤ τ_j ≤ hi_j,   f_k in its friction cone,

g(m) = g0 + Σ_i m_i·g_i linear in the actuator masses (robot/basis.py; metrics/contacts.py,
Evaluator._stance). For a partial design every unassigned joint's mass lies in
[m_min, m_max] over its candidates and its torque bounds in [min lo, max hi]; making the masses
variables of the program inside that box, widening each torque range to that hull and replacing
each cone by the circumscribed 8-sided pyramid (metrics.contacts.pyramid_bounds, ``outer``) only
enlarges the feasible set, so the linear program's optimum bounds the stance payload of every
completion from above (docs/optimizer.md, item 9). An infeasible program means no completion can
hold itself: payload 0. One program per stance case and node (scipy ``linprog``, HiGHS).
"""

from __future__ import annotations

import math

import numpy as np

from ..metrics.payload import torque_bounds

#: faces of the circumscribed friction pyramid
SIDES = 8


class StanceBound:
    """Per stance case of ``model``: the program's fixed parts and every option's torque range."""

    def __init__(self, model) -> None:
        from ..metrics.contacts import ContactStatics

        self.model = model
        ev = model.evaluator
        table = model.table
        count, n = len(table), model.n
        arr = table.arrays(np.repeat(np.arange(count)[:, None], n, axis=1))
        cap_m, cap_b = arr.capacity("motoring"), arr.capacity("backdriven")
        self.cases = []
        for pc in ev.cases:
            if pc.case.kind != "stance":
                continue
            lo, hi = torque_bounds(np.broadcast_to(pc.velocity_sign, (count, n)), cap_m, cap_b)
            rows = np.asarray(ev.v_index)
            held = np.asarray(ev.held_index)
            rows_all = np.concatenate([rows, held]) if held.size else rows
            g0 = np.asarray(pc.basis.g0, dtype=float)
            g_mass = np.asarray(pc.basis.g_mass, dtype=float)  # (n, nv)
            frames = pc.case.contacts
            inf = np.full(rows_all.size, np.inf)
            st = ContactStatics(
                gravity=g0,
                contact_jacobians=pc.contact_J,
                normals=np.array([c[2] for c in frames]),
                friction=np.array([c[1] for c in frames]),
                payload_jacobian=pc.J,
                payload_wrench=-np.asarray(pc.u, dtype=float),
                tau_low=-inf,
                tau_high=inf,
                actuated=rows_all,
            )
            normal, t1, t2 = st.contact_columns(scaled=False)
            k = normal.shape[1]
            nr = rows_all.size
            a_eq = np.hstack(
                [
                    st.selection_transpose(),
                    normal,
                    t1,
                    t2,
                    (st.payload_jacobian.T @ st.payload_wrench)[:, None],
                    -g_mass.T,
                ]
            )
            phi = 2 * np.arange(SIDES) * math.pi / SIDES
            a_ub = np.zeros((SIDES * k, a_eq.shape[1]))
            for c in range(k):
                r = slice(c * SIDES, (c + 1) * SIDES)
                a_ub[r, nr + c] = -st.friction[c]
                a_ub[r, nr + k + c], a_ub[r, nr + 2 * k + c] = np.cos(phi), np.sin(phi)
            self.cases.append(
                {
                    "case": pc.case,
                    "lo": np.asarray(lo).T.copy(),  # (n, O)
                    "hi": np.asarray(hi).T.copy(),
                    "n_held": held.size,
                    "k": k,
                    "a_eq": a_eq,
                    "b_eq": g0,
                    "a_ub": a_ub,
                }
            )

    def bound(self, idx: np.ndarray, unit, options: np.ndarray) -> float:
        """An upper bound on the payload objective's stance part (the least over stance cases of
        the carried payload) for every completion of ``idx`` with the unit in ``options``."""
        from scipy.optimize import linprog

        from ..problem import carried_payload

        model = self.model
        n = model.n
        unit = list(unit)
        cand = []
        for j in range(n):
            if j in unit:
                cand.append(options)
            elif idx[j] >= 0:
                cand.append(np.array([idx[j]]))
            else:
                cand.append(model.candidates[j])
        m_lo = np.array([model.mass[c].min() for c in cand])
        m_hi = np.array([model.mass[c].max() for c in cand])
        out = math.inf
        for d in self.cases:
            t_lo = np.array([d["lo"][j, c].min() for j, c in enumerate(cand)])
            t_hi = np.array([d["hi"][j, c].max() for j, c in enumerate(cand)])
            k = d["k"]
            bounds = [
                (None if math.isinf(a) else a, None if math.isinf(b) else b)
                for a, b in zip(t_lo, t_hi, strict=True)
            ]
            bounds += [(None, None)] * d["n_held"]
            bounds += [(0, None)] * k + [(None, None)] * (2 * k) + [(0, None)]
            bounds += list(zip(m_lo.tolist(), m_hi.tolist(), strict=True))
            cost = np.zeros(d["a_eq"].shape[1])
            cost[d["a_eq"].shape[1] - n - 1] = -1.0
            res = linprog(
                cost,
                A_ub=d["a_ub"] if k else None,
                b_ub=np.zeros(d["a_ub"].shape[0]) if k else None,
                A_eq=d["a_eq"],
                b_eq=d["b_eq"],
                bounds=bounds,
                method="highs",
            )
            if res.status == 2:  # infeasible: no completion holds itself
                s = 0.0
            elif res.status == 0:
                s = float(-res.fun) * (1 + 1e-7) + 1e-9  # round-off slack
            else:  # unbounded or a solver failure: no bound from this case
                continue
            out = min(out, float(carried_payload(d["case"], s)))
        return out
