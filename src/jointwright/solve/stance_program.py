"""The stance cases' linear program: every case's statics with shared actuator masses.

Columns [case 1 (τ, λ, ν1, ν2, s), case 2 …, m (n), t]; maximize t with t ≤ T_c(s_c) for every
case (problem.carried_payload, affine and increasing), the statics of each case with the
circumscribed friction pyramid (and each contact's least share of the normal force, when the
case sets one), each joint's mass–torque envelopes over its candidates, equal masses within each
shared group and the actuator mass budget; a case outside the objective bounds no t, and a case
with a payload minimum keeps s_c at least that force (a requirement; without any case bounding t
the program only tells feasible from infeasible). Built once in HiGHS (highspy); a solve changes
only the torque and mass column bounds and starts from the previous basis. Proofs:
docs/optimizer.md, item 9.
"""

from __future__ import annotations

import math

import numpy as np

#: faces of the circumscribed friction pyramid
SIDES = 32
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


def case_rows(pc, ev, model, lo: np.ndarray, hi: np.ndarray, candidates):
    """One stance case's rows over its own columns [τ (rows), λ, ν1, ν2, s] and the shared mass
    columns: (A own, A mass, row low, row high, column low, column high, index of s, joint of
    each row: j for the mass–torque envelope rows of joint j, −1 for the others)."""
    from ..metrics.contacts import ContactStatics

    n = model.n
    rows = np.asarray(ev.v_index)
    held = np.asarray(ev.held_index)
    rows_all = np.concatenate([rows, held]) if held.size else rows
    g0 = np.asarray(pc.basis.g0, dtype=float)
    if pc.load_a is not None:  # a wrench (metrics.loads), as the evaluator states it
        g0 = g0 + np.asarray(pc.tau_fixed, dtype=float)
        p_jac = pc.basis.J[0]
        p_wrench = -np.concatenate([pc.u, np.cross(np.asarray(pc.case.offset), pc.u)])
    else:
        p_jac, p_wrench = pc.J, -np.asarray(pc.u, dtype=float)
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
    k, nr = normal.shape[1], rows_all.size
    ncol = nr + 3 * k + 1
    own = [
        np.hstack(
            [
                st.selection_transpose(),
                normal,
                t1,
                t2,
                (st.payload_jacobian.T @ st.payload_wrench)[:, None],
            ]
        )
    ]
    mass_part = [-np.asarray(pc.basis.g_mass, dtype=float).T]  # (nv, n)
    row_lo, row_hi = [g0], [g0]
    joint_of = [np.full(g0.size, -1)]
    phi = 2 * np.arange(SIDES) * math.pi / SIDES
    for c in range(k):  # outer pyramid: cos φ·ν1 + sin φ·ν2 − μ·λ ≤ 0
        a = np.zeros((SIDES, ncol))
        a[:, nr + c] = -st.friction[c]
        a[:, nr + k + c], a[:, nr + 2 * k + c] = np.cos(phi), np.sin(phi)
        own.append(a)
        mass_part.append(np.zeros((SIDES, n)))
        row_lo.append(np.full(SIDES, -np.inf))
        row_hi.append(np.zeros(SIDES))
        joint_of.append(np.full(SIDES, -1))
    share = pc.case.contact_share_min
    if share > 0 and k:  # each contact its share of the total normal force: ρ·Σλ − λ_c ≤ 0
        a = np.zeros((k, ncol))
        a[:, nr : nr + k] = share
        a[np.arange(k), nr + np.arange(k)] -= 1.0
        own.append(a)
        mass_part.append(np.zeros((k, n)))
        row_lo.append(np.full(k, -np.inf))
        row_hi.append(np.zeros(k))
        joint_of.append(np.full(k, -1))
    for j in range(n):  # torque envelopes over each joint's candidates
        c = candidates[j]
        for side, values in ((1.0, hi[j, c]), (-1.0, -lo[j, c])):
            if c.size == 0 or not np.all(np.isfinite(values)):
                continue
            slope, icpt = upper_hull(model.mass[c], values)
            a = np.zeros((slope.size, ncol))
            a[:, j] = side
            b = np.zeros((slope.size, n))
            b[:, j] = -slope
            own.append(a)
            mass_part.append(b)
            row_lo.append(np.full(slope.size, -np.inf))
            row_hi.append(icpt)
            joint_of.append(np.full(slope.size, j))
    col_lo = np.concatenate([np.full(nr, -np.inf), np.zeros(k), np.full(2 * k, -np.inf), [0.0]])
    return (
        np.vstack(own),
        np.vstack(mass_part),
        np.concatenate(row_lo),
        np.concatenate(row_hi),
        col_lo,
        np.full(ncol, np.inf),
        nr + 3 * k,
        np.concatenate(joint_of),
    )


class StanceProgram:
    """Every stance case's statics in one HiGHS program with shared mass columns:
    columns [case 1 (τ, λ, ν1, ν2, s), case 2 …, m (n), t]; maximize t with
    t ≤ carried payload of s_c for every case c (affine and increasing, problem.carried_payload)."""

    def __init__(self, pcs, ev, model, bounds, candidates, objective=None) -> None:
        """``objective``: the names of the cases whose carried payload bounds t (every case
        when None); the others, and these too, keep s_c at least their ``payload_min``."""
        import highspy

        from ..problem import STANDARD_GRAVITY

        n = model.n
        parts = [
            case_rows(pc, ev, model, lo, hi, candidates)
            for pc, (lo, hi) in zip(pcs, bounds, strict=True)
        ]
        self.cases = [pc.case for pc in pcs]
        widths = [p[0].shape[1] for p in parts]
        offsets = np.concatenate([[0], np.cumsum(widths)]).astype(int)
        self.tau_cols = [int(o) for o in offsets[:-1]]  # τ_j of case c: tau_cols[c] + j
        self.m_col = int(offsets[-1])
        self.t_col = self.m_col + n
        ncol = self.t_col + 1
        blocks, row_lo, row_hi, joint_of = [], [], [], []
        #: whether a case bounds t (else the program only tells feasible from infeasible)
        self.bounds_t = False
        for c, (own, mass_part, rlo, rhi, _, _, s_at, env) in enumerate(parts):
            a = np.zeros((own.shape[0], ncol))
            a[:, offsets[c] : offsets[c + 1]] = own
            a[:, self.m_col : self.t_col] = mass_part
            blocks.append(a)
            row_lo.append(rlo)
            row_hi.append(rhi)
            joint_of.append(env)
            case = pcs[c].case
            minimum = float(case.limits.get("payload_min", 0.0))
            if minimum > 0:  # a requirement: s_c ≥ payload_min (N)
                parts[c][4][parts[c][6]] = minimum
            if case.payload_share > 0 and (objective is None or case.name in objective):
                # t ≤ (s − fixed_load)/(payload_share·g_n)
                self.bounds_t = True
                scale = case.payload_share * STANDARD_GRAVITY
                a = np.zeros((1, ncol))
                a[0, self.t_col] = 1.0
                a[0, offsets[c] + s_at] = -1.0 / scale
                blocks.append(a)
                row_lo.append(np.array([-np.inf]))
                row_hi.append(np.array([-case.fixed_load / scale]))
                joint_of.append(np.array([-1]))
        for group in model.shared:  # a shared group's joints carry one option: equal masses
            for j in group[1:]:
                a = np.zeros((1, ncol))
                a[0, self.m_col + j], a[0, self.m_col + group[0]] = 1.0, -1.0
                blocks.append(a)
                row_lo.append(np.zeros(1))
                row_hi.append(np.zeros(1))
                joint_of.append(np.array([-1]))
        if math.isfinite(model.total_mass_max):  # Σ m ≤ budget
            a = np.zeros((1, ncol))
            a[0, self.m_col : self.t_col] = 1.0
            blocks.append(a)
            row_lo.append(np.array([-np.inf]))
            row_hi.append(np.array([model.total_mass_max * (1 + 1e-9)]))
            joint_of.append(np.array([-1]))
        col_lo = np.concatenate([p[4] for p in parts] + [np.zeros(n), [-np.inf]])
        col_hi = np.full(ncol, np.inf)
        cost = np.zeros(ncol)
        cost[self.t_col] = 1.0 if self.bounds_t else 0.0  # else a feasibility program
        self.n = n
        self.col_lo, self.col_hi = col_lo.copy(), col_hi.copy()  # as of the last solve
        self.row_lo, self.row_hi = np.concatenate(row_lo), np.concatenate(row_hi)
        self.a = np.vstack(blocks)
        self.cost = cost
        #: the joint of each mass–torque envelope row, −1 for every other row
        self.envelope_of = np.concatenate(joint_of).astype(np.int64)
        #: the bound when the program is infeasible: in every completion some case either
        #: misses its payload minimum (no feasible design) or, without one, holds nothing
        #: (objective ≤ its carried payload at zero force); −inf when every objective case has
        #: a minimum
        self.none = max(
            (
                float(carried_payload_of(c, 0.0))
                for c in self.cases
                if (objective is None or c.name in objective)
                and not c.limits.get("payload_min", 0.0) > 0
            ),
            default=-math.inf,
        )
        self.h = highs_model(
            highspy,
            cost,
            col_lo,
            col_hi,
            self.a,
            self.row_lo,
            self.row_hi,
        )

    def solved(self) -> bool:
        """Whether the last solve ended at an optimum (its solution can be read)."""
        import highspy

        return bool(self.h.getModelStatus() == highspy.HighsModelStatus.kOptimal)

    def solve(self, t_lo, t_hi, m_lo, m_hi) -> float:
        """The bound on the least carried payload with these column bounds: ``t_lo``/``t_hi``
        one (n,) array per case, ``m_lo``/``m_hi`` (n,). +inf when unbounded or failed."""
        import highspy

        n = self.n
        cols = np.concatenate(
            [c + np.arange(n) for c in self.tau_cols] + [self.m_col + np.arange(n)]
        ).astype(np.int32)
        lo = np.concatenate([*t_lo, m_lo]).astype(float)
        hi = np.concatenate([*t_hi, m_hi]).astype(float)
        self.h.changeColsBounds(cols.size, cols, lo, hi)
        self.col_lo[cols], self.col_hi[cols] = lo, hi
        self.h.run()
        status = self.h.getModelStatus()
        if status == highspy.HighsModelStatus.kOptimal:
            if not self.bounds_t:  # feasible: nothing is bounded
                return math.inf
            t = float(self.h.getInfo().objective_function_value)
            t = t + REL_SLACK * abs(t) + ABS_SLACK
            return max(t, self.none)
        if status == highspy.HighsModelStatus.kInfeasible:
            return self.none
        return math.inf

    def columns(self, joints) -> np.ndarray:
        """The columns of ``joints``: τ_j of case 1 for j in ``joints``, of case 2 …, then m_j."""
        joints = np.asarray(joints, dtype=np.int64)
        return np.concatenate([c + joints for c in self.tau_cols] + [self.m_col + joints])

    def option_bounds(self, value: float, joints, box_lo: np.ndarray, box_hi: np.ndarray):
        """Bounds from the last optimum's duals (``value``: its bound, :meth:`solve`) for the
        programs that restrict the columns of ``joints`` (:meth:`columns`) to the boxes
        ``box_lo``/``box_hi`` (O, K), one per option, inside their current bounds.

        Weak duality with the row duals y' of the last optimum, the envelope rows of ``joints``
        set to 0: every x of a restricted program has c·x ≤ Σ_i y'_i·(row bound) + Σ_k max over
        the box of d'_k·x_k, d' = c − Aᵀy'. Against the optimum's own dual bound (y, current
        bounds, ≈ the optimum) only the envelope rows and the columns of ``joints`` differ, so
        bound = value − P_now + P_box. Valid for any y; the envelope rows are dropped because
        every option's box lies under its joints' envelopes (docs/optimizer.md, item 9)."""
        if not self.solved():
            return np.full(box_lo.shape[0], value)
        cols = self.columns(joints)
        y = np.asarray(self.h.getSolution().row_dual, dtype=float)
        d = self.cost[cols] - self.a[:, cols].T @ y
        env = np.isin(self.envelope_of, np.asarray(joints))
        y_env = np.where(env, y, 0.0)
        d_box = d + self.a[:, cols].T @ y_env  # the reduced costs with those rows dropped
        with np.errstate(invalid="ignore", over="ignore"):
            now = float(np.maximum(y_env, 0.0) @ np.where(env, self.row_hi, 0.0))
            now += float(_support(d, self.col_lo[cols], self.col_hi[cols]).sum())
            box = _support(d_box, box_lo, box_hi).sum(axis=1)
            out = value - now + box
        out = np.where(np.isfinite(out), out, value)
        return np.maximum(np.minimum(out + ABS_SLACK, value), self.none)


def _support(d: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """max of d·x over lo ≤ x ≤ hi, elementwise (a zero price costs nothing at any bound)."""
    return np.where(d > 0, d * hi, np.where(d < 0, d * lo, 0.0))


def carried_payload_of(case, force: float) -> float:
    from ..problem import carried_payload

    return float(carried_payload(case, force))


def highs_model(highspy, cost, col_lo, col_hi, a, row_lo, row_hi, integer=None):
    """A HiGHS object holding max cost·x over the rows and column bounds (quiet; ``a`` dense or
    scipy.sparse, passed column-wise; ``integer``: a mask of the integer columns, for a MILP);
    its start-up banner is discarded, as the hand-over's is (its log is off)."""
    import scipy.sparse as sp

    from .pyomo_backend import quiet_stdout

    with quiet_stdout(discard=True):
        h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    a = sp.csc_array(a)
    a.sort_indices()
    lp = highspy.HighsLp()
    lp.num_col_, lp.num_row_ = a.shape[1], a.shape[0]
    lp.col_cost_ = cost
    lp.col_lower_, lp.col_upper_ = col_lo, col_hi
    lp.row_lower_, lp.row_upper_ = row_lo, row_hi
    lp.sense_ = highspy.ObjSense.kMaximize
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = a.indptr.astype(np.int32)
    lp.a_matrix_.index_ = a.indices.astype(np.int32)
    lp.a_matrix_.value_ = a.data.astype(float)
    if integer is not None:
        kinds = (highspy.HighsVarType.kContinuous, highspy.HighsVarType.kInteger)
        lp.integrality_ = [kinds[int(i)] for i in integer]
    h.passModel(lp)
    return h
