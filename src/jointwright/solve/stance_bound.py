"""Upper bounds on the payload of stance (several-contact) cases over a partial design.

The stance payload of a complete design is the largest s ≥ 0 with

    Sᵀτ + Σ_k J_kᵀ f_k + s·J_pᵀw = g(m),   lo_j ≤ τ_j ≤ hi_j,   f_k in its friction cone,

g(m) = g0 + Σ_i m_i·g_i linear in the actuator masses (robot/basis.py; metrics/contacts.py,
Evaluator._stance). One linear program per stance case relaxes it for every completion of a
partial design (docs/optimizer.md, item 9):

* the masses are variables; an assigned joint's is fixed, a free joint's lies in
  [m_min, m_max] over its candidates;
* a free joint's torque lies in the hull [min lo, max hi] over its candidates and under the
  concave upper envelope of its candidates' (mass, hi) points (above the convex lower envelope of
  (mass, lo)): every candidate lies on or under (over) those lines, so they cut no completion;
* the masses sum to at most the actuator mass budget (``total_mass_max``);
* each cone becomes the circumscribed 8-sided pyramid (``pyramid_bounds``, ``outer``).

Every completion's statics are feasible for the program, so its optimum bounds the stance payload
of every completion from above; an infeasible program means no completion holds itself
(payload 0). The options of the joints being decided are bounded per group: options sorted by
mass and by torque range fall into at most ``GROUPS`` groups, and each group's program takes the
hull of its own options, so the children of a node are ordered and cut by their group's bound;
when the unit's joints are the last ones free, every distinct option gets its own program (the
design's own program: complete designs are cut before their cone programs are solved).
Each case's program is built once in HiGHS (highspy); a node only changes column bounds and
re-solves from the previous basis.
"""

from __future__ import annotations

import math

import numpy as np

from ..metrics.payload import torque_bounds

#: faces of the circumscribed friction pyramid
SIDES = 8
#: option groups bounded per node (mass bins × torque bins)
MASS_BINS, TORQUE_BINS = 4, 4
GROUPS = MASS_BINS * TORQUE_BINS
#: relative and absolute slack on an optimum (solver tolerances)
REL_SLACK, ABS_SLACK = 1e-6, 1e-6


def upper_hull(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lines (slope, intercept) whose minimum is the concave upper envelope of the points (x, y)
    on [min x, max x]: every point lies on or under every line. Empty when x takes one value."""
    xs = np.unique(x)
    if xs.size < 2:
        return np.empty(0), np.empty(0)
    top = np.full(xs.size, -np.inf)
    np.maximum.at(top, np.searchsorted(xs, x), y)
    hull: list[int] = []
    for i in range(xs.size):  # monotone chain, upper part
        while len(hull) >= 2:
            a, b = hull[-2], hull[-1]
            cross = (xs[b] - xs[a]) * (top[i] - top[a]) - (top[b] - top[a]) * (xs[i] - xs[a])
            if cross >= 0:
                hull.pop()
            else:
                break
        hull.append(i)
    h = np.array(hull)
    slope = np.diff(top[h]) / np.diff(xs[h])
    return slope, top[h[:-1]] - slope * xs[h[:-1]]


def option_groups(mass: np.ndarray, torque: np.ndarray) -> np.ndarray:
    """Group number of each option: mass quantile bin, then torque quantile bin within it."""
    count = mass.size
    group = np.zeros(count, dtype=np.int64)
    if count <= GROUPS:
        return np.arange(count)
    by_mass = np.argsort(mass, kind="stable")
    for b, rows in enumerate(np.array_split(by_mass, MASS_BINS)):
        by_t = rows[np.argsort(torque[rows], kind="stable")]
        for t, sub in enumerate(np.array_split(by_t, TORQUE_BINS)):
            group[sub] = b * TORQUE_BINS + t
    return group


class _CaseProgram:
    """One stance case's linear program in HiGHS: columns [τ (rows), λ, ν1, ν2, s, m (n)]."""

    def __init__(self, pc, ev, model, lo: np.ndarray, hi: np.ndarray) -> None:
        import highspy

        from ..metrics.contacts import ContactStatics

        n = model.n
        rows = np.asarray(ev.v_index)
        held = np.asarray(ev.held_index)
        rows_all = np.concatenate([rows, held]) if held.size else rows
        g0 = np.asarray(pc.basis.g0, dtype=float)
        if pc.load_a is not None:
            g0 = g0 + np.asarray(pc.tau_fixed, dtype=float)
            p_jac = pc.basis.J[0]
            p_wrench = -np.concatenate([pc.u, np.cross(np.asarray(pc.case.offset), pc.u)])
        else:
            p_jac, p_wrench = pc.J, -np.asarray(pc.u, dtype=float)
        g_mass = np.asarray(pc.basis.g_mass, dtype=float)  # (n, nv)
        frames = pc.case.contacts
        inf = np.full(rows_all.size, np.inf)
        st = ContactStatics(
            gravity=g0,
            contact_jacobians=pc.contact_J,
            normals=np.array([c[2] for c in frames]),
            friction=np.array([c[1] for c in frames]),
            payload_jacobian=p_jac,
            payload_wrench=p_wrench,
            tau_low=-inf,
            tau_high=inf,
            actuated=rows_all,
        )
        normal, t1, t2 = st.contact_columns(scaled=False)
        k = normal.shape[1]
        nr = rows_all.size
        self.case, self.n, self.nr, self.k = pc.case, n, nr, k
        self.s_col = nr + 3 * k
        self.m_col = self.s_col + 1
        ncol = self.m_col + n
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
        blocks, row_lo, row_hi = [a_eq], [g0], [g0]
        phi = 2 * np.arange(SIDES) * math.pi / SIDES
        for c in range(k):  # outer pyramid: cos φ·ν1 + sin φ·ν2 − μ·λ ≤ 0
            a = np.zeros((SIDES, ncol))
            a[:, nr + c] = -st.friction[c]
            a[:, nr + k + c], a[:, nr + 2 * k + c] = np.cos(phi), np.sin(phi)
            blocks.append(a)
            row_lo.append(np.full(SIDES, -np.inf))
            row_hi.append(np.zeros(SIDES))
        mass = model.mass
        for j in range(n):  # torque envelopes over each joint's candidates
            c = model.candidates[j]
            for side, values in ((1.0, hi[j, c]), (-1.0, -lo[j, c])):
                if c.size == 0 or not np.all(np.isfinite(values)):
                    continue
                slope, icpt = upper_hull(mass[c], values)
                a = np.zeros((slope.size, ncol))
                a[:, j] = side
                a[:, self.m_col + j] = -slope
                blocks.append(a)
                row_lo.append(np.full(slope.size, -np.inf))
                row_hi.append(icpt)
        if math.isfinite(model.total_mass_max):  # Σ m ≤ budget
            a = np.zeros((1, ncol))
            a[0, self.m_col :] = 1.0
            blocks.append(a)
            row_lo.append(np.array([-np.inf]))
            row_hi.append(np.array([model.total_mass_max * (1 + 1e-9)]))
        a_all = np.vstack(blocks)
        col_lo = np.concatenate(
            [np.full(nr, -np.inf), np.zeros(k), np.full(2 * k, -np.inf), [0.0], np.zeros(n)]
        )
        col_hi = np.full(ncol, np.inf)
        cost = np.zeros(ncol)
        cost[self.s_col] = 1.0
        self.h = _highs(
            highspy, cost, col_lo, col_hi, a_all, np.concatenate(row_lo), np.concatenate(row_hi)
        )

    def solve(self, t_lo, t_hi, m_lo, m_hi) -> float:
        """The program's optimum s with these torque and mass column bounds (n each): +inf when
        unbounded or failed (no bound), 0 when infeasible."""
        import highspy

        n = self.n
        cols = np.concatenate([np.arange(n), self.m_col + np.arange(n)]).astype(np.int32)
        lo = np.concatenate([t_lo, m_lo]).astype(float)
        hi = np.concatenate([t_hi, m_hi]).astype(float)
        self.h.changeColsBounds(cols.size, cols, lo, hi)
        self.h.run()
        status = self.h.getModelStatus()
        if status == highspy.HighsModelStatus.kOptimal:
            s = float(self.h.getInfo().objective_function_value)
            return max(s, 0.0) * (1 + REL_SLACK) + ABS_SLACK
        if status == highspy.HighsModelStatus.kInfeasible:
            return 0.0
        return math.inf


def _highs(highspy, cost, col_lo, col_hi, a, row_lo, row_hi):
    """A HiGHS object holding max cost·x over the rows and column bounds (quiet, dense → CSC);
    its start-up banner goes to stderr, as the MILP back-end's output does."""
    from .pyomo_backend import _quiet_stdout

    with _quiet_stdout():
        h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    lp = highspy.HighsLp()
    lp.num_col_, lp.num_row_ = a.shape[1], a.shape[0]
    lp.col_cost_ = cost
    lp.col_lower_, lp.col_upper_ = col_lo, col_hi
    lp.row_lower_, lp.row_upper_ = row_lo, row_hi
    lp.sense_ = highspy.ObjSense.kMaximize
    start, index, value = [0], [], []
    for j in range(a.shape[1]):
        nz = np.flatnonzero(a[:, j])
        index.extend(nz.tolist())
        value.extend(a[nz, j].tolist())
        start.append(len(index))
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = np.array(start, dtype=np.int32)
    lp.a_matrix_.index_ = np.array(index, dtype=np.int32)
    lp.a_matrix_.value_ = np.array(value, dtype=float)
    h.passModel(lp)
    return h


class StanceBound:
    """Per stance case of ``model``: its program and every option's torque range."""

    def __init__(self, model) -> None:
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
            lo, hi = np.asarray(lo).T.copy(), np.asarray(hi).T.copy()  # (n, O)
            self.cases.append((_CaseProgram(pc, ev, model, lo, hi), lo, hi))
        # each free joint's hulls over its candidates
        cands = model.candidates
        self.m_free = np.array(
            [[model.mass[c].min(), model.mass[c].max()] if c.size else [0, 0] for c in cands]
        )
        self.t_free = [
            np.array(
                [
                    [lo[j, c].min(), hi[j, c].max()] if c.size else [0, 0]
                    for j, c in enumerate(cands)
                ]
            )
            for _, lo, hi in self.cases
        ]

    def bound(self, idx: np.ndarray, unit, options: np.ndarray, floor: float | None = None):
        """An upper bound on the payload objective's stance part (the least over stance cases of
        the carried payload): a number for every completion of ``idx`` when ``unit`` is empty,
        else one per option in ``options`` for every completion with the unit at that option.
        With ``floor``, a group whose bound is already below it is not solved further (for the
        remaining cases, or option by option): its looser bound stays valid."""
        model = self.model
        unit = list(unit)
        options = np.asarray(options, dtype=np.int64)
        if not unit or options.size == 0:
            return float(self._solve(idx, [], options, np.zeros(0, dtype=np.int64), floor)[0])
        lo0, hi0 = self.cases[0][1], self.cases[0][2]
        width = (hi0[unit][:, options] - lo0[unit][:, options]).sum(axis=0)
        coarse = option_groups(model.mass[options], width)
        out = self._solve(idx, unit, options, coarse, floor)
        fixed = idx >= 0
        fixed[unit] = False
        if np.count_nonzero(fixed) + len(unit) < model.n:
            return out
        # the last joints: every distinct option gets its own (the design's own) program
        live = np.flatnonzero(out >= floor) if floor is not None else np.arange(options.size)
        if live.size:
            key = np.column_stack(
                [model.mass[options[live]]]
                + [v[unit][:, options[live]].T for _, lo, hi in self.cases for v in (lo, hi)]
            )
            _, fine = np.unique(key, axis=0, return_inverse=True)
            out[live] = np.minimum(
                out[live], self._solve(idx, unit, options[live], fine.reshape(-1), floor)
            )
        return out

    def complete(self, index: np.ndarray) -> np.ndarray:
        """The bound of each complete design of ``index`` (D, n): its own program (the design's
        statics with circumscribed pyramids, so within the pyramid's gap of its cone value);
        the least over stance cases of the carried payload. A cheap screen: two small linear
        programs per design instead of two cone programs."""
        from ..problem import carried_payload

        index = np.asarray(index, dtype=np.int64)
        out = np.full(index.shape[0], math.inf)
        cols = np.arange(self.model.n)
        for prog, lo, hi in self.cases:
            for r, row in enumerate(index):
                m = self.model.mass[row]
                s = prog.solve(lo[cols, row], hi[cols, row], m, m)
                if math.isfinite(s):
                    out[r] = min(out[r], float(carried_payload(prog.case, s)))
        return out

    def _solve(self, idx, unit: list, options, group_of, floor) -> np.ndarray:
        """Per option (one value when ``unit`` is empty): the least over stance cases of the
        carried payload bound of its group's program (``group_of``: group of each option)."""
        from ..problem import carried_payload

        model = self.model
        fixed = idx >= 0
        fixed[unit] = False
        a = np.flatnonzero(fixed)
        m_lo, m_hi = self.m_free[:, 0].copy(), self.m_free[:, 1].copy()
        m_lo[a] = m_hi[a] = model.mass[idx[a]]
        if unit:
            order = np.argsort(group_of, kind="stable")
            groups = np.split(order, np.cumsum(np.bincount(group_of))[:-1])
        else:
            groups = [np.arange(0)]
        out = np.full(len(groups), math.inf)
        for (prog, lo, hi), t_free in zip(self.cases, self.t_free, strict=True):
            t_lo, t_hi = t_free[:, 0].copy(), t_free[:, 1].copy()
            t_lo[a], t_hi[a] = lo[a, idx[a]], hi[a, idx[a]]
            for g, rows in enumerate(groups):
                if (unit and rows.size == 0) or (floor is not None and out[g] < floor):
                    continue
                if unit:
                    o = options[rows]
                    m_lo[unit], m_hi[unit] = model.mass[o].min(), model.mass[o].max()
                    t_lo[unit] = lo[unit][:, o].min(axis=1)
                    t_hi[unit] = hi[unit][:, o].max(axis=1)
                s = prog.solve(t_lo, t_hi, m_lo, m_hi)
                if math.isfinite(s):
                    out[g] = min(out[g], float(carried_payload(prog.case, s)))
        return out[group_of] if unit else out
