"""The payload MILP of the hand-over in matrix form, solved by HiGHS (``highspy``).

The same relaxation as the Pyomo back-end (solve/pyomo_backend.py, module notes), built from the
option arrays with numpy and scipy.sparse instead of one algebraic expression per term, so a model
of a few hundred thousand binaries is built in about a second rather than a minute. Columns:

    x[u, o]  binary, option o for unit u (a joint, or a shared group taking one option)
    M_j      the actuator mass at joint j:                 M_j = Σ_o m_o·x[u(j), o]
    H_tj, L_tj  the torque bounds of case t at joint j:    H_tj = Σ_o hi[t, j, o]·x[u(j), o]
    s        the payload (kg)

Rows, per payload case t and joint j, with bias_tj = g0_tj + Σ_k G_t[k, j]·M_k:

    L_tj ≤ bias_tj ≤ H_tj                               (the robot holds itself)
    bias_tj + F_t(s)·a_tj ≤ H_tj  (a > 0),  ≥ L_tj  (a < 0)   for F_t the force the case needs
                                                        for payload s, and for its payload_min

plus Σ_u x[u, o] = 1 per unit and the mass and cost budgets. Maximize s. Every design that holds
itself satisfies these rows with s at its payload, so the MILP's bound holds for every design with
a positive payload (the hand-over's rule, solve/handover.py).
"""

from __future__ import annotations

import math
import time

import numpy as np
import scipy.sparse as sp
from scipy.optimize import Bounds, LinearConstraint

from ..problem import force_for_objective, objective_names
from .model import SizingModel, unit_options
from .pyomo_backend import quiet_stdout
from .result import OPTIMALITY_GAP, SolveOutcome

#: finite stand-in for an infinite torque bound (N·m); no real joint comes near it
BIG = 1e9


class Rows:
    """Sparse rows collected as triplets, with their lower and upper sides."""

    def __init__(self) -> None:
        self.r: list[np.ndarray] = []
        self.c: list[np.ndarray] = []
        self.v: list[np.ndarray] = []
        self.lo: list[float] = []
        self.hi: list[float] = []

    def add(self, cols, vals, lo: float, hi: float) -> None:
        cols = np.asarray(cols, dtype=np.int64)
        self.r.append(np.full(cols.size, len(self.lo), dtype=np.int64))
        self.c.append(cols)
        self.v.append(np.asarray(vals, dtype=float))
        self.lo.append(lo)
        self.hi.append(hi)

    def constraint(self, n_cols: int) -> LinearConstraint:
        a = sp.csr_array(
            (np.concatenate(self.v), (np.concatenate(self.r), np.concatenate(self.c))),
            shape=(len(self.lo), n_cols),
        )
        return LinearConstraint(a, np.array(self.lo), np.array(self.hi))


def _units(model: SizingModel):
    """Units (a shared group or a lone joint) with their options: (unit of each joint, options)."""
    unit_of = np.full(model.n, -1, dtype=np.int64)
    options: list[np.ndarray] = []
    for g in model.shared:
        unit_of[list(g)] = len(options)
        options.append(unit_options(model.candidates, g))
    for j in range(model.n):
        if unit_of[j] < 0:
            unit_of[j] = len(options)
            options.append(model.candidates[j])
    return unit_of, options


def payload_rows(model: SizingModel, rows: Rows, weighted, col_m: int, col_s: int, n_cols: int):
    """Each static payload case's rows (module notes) added to ``rows``: per joint j its torque
    bound columns H_tj, L_tj (numbered from ``n_cols`` on) tied to the options by
    ``weighted(j, values)`` (the x columns of j's unit and their coefficients), the robot holding
    itself, and the force the case needs for the objective value in column ``col_s`` and for its
    payload minimum, with the actuator masses in columns ``col_m + j``. Returns the next free
    column. A design that holds itself meets them with the objective column at its payload."""
    n = model.n
    names = objective_names(model.project, model.objective_kind)
    by_name = {c.name: c for c in model.project.cases}
    for t in model.payload:
        case = by_name[t.name]
        levels: list[tuple[float, float]] = []  # the force a row needs: const + slope·s
        fixed = force_for_objective(model.project, model.objective_kind, case, 0.0, names)
        if fixed is not None:
            one = force_for_objective(model.project, model.objective_kind, case, 1.0, names)
            levels.append((float(fixed), float(one) - float(fixed)))
        if t.minimum > 0:
            levels.append((float(t.minimum), 0.0))
        if not levels:
            continue  # only a case with a payload to carry needs the robot to hold itself
        for j in range(n):
            col_h, col_l = n_cols, n_cols + 1
            n_cols += 2
            for col, side in (
                (col_h, np.minimum(t.hi[j], BIG)),
                (col_l, np.maximum(t.lo[j], -BIG)),
            ):
                cols, vals = weighted(j, side)  # H − Σ hi·x = 0, L − Σ lo·x = 0
                rows.add(np.append(cols, col), np.append(-vals, 1.0), 0.0, 0.0)
            g = np.asarray(t.G[:, j], dtype=float)
            gm_cols, gm_vals = col_m + np.flatnonzero(g), g[g != 0]
            g0 = float(t.g0[j])
            # L ≤ bias ≤ H:  Σ G·M − H ≤ −g0  and  Σ G·M − L ≥ −g0
            rows.add(np.append(gm_cols, col_h), np.append(gm_vals, -1.0), -np.inf, -g0)
            rows.add(np.append(gm_cols, col_l), np.append(gm_vals, -1.0), -g0, np.inf)
            a = float(t.a[j])
            if a == 0:
                continue
            for const, slope in levels:  # bias + (const + slope·s)·a ≤ H (a > 0), ≥ L (a < 0)
                cols = np.append(gm_cols, [col_h if a > 0 else col_l, col_s])
                vals = np.append(gm_vals, [-1.0, slope * a])
                rhs = -g0 - const * a
                rows.add(cols, vals, -np.inf if a > 0 else rhs, rhs if a > 0 else np.inf)
    return n_cols


def build(model: SizingModel, upper: float = math.inf):
    """The MILP's arrays: (objective vector, integrality, bounds, constraint, the x columns'
    offset per unit, the options per unit, the unit of each joint). ``upper``: a proven bound
    on every design's payload, the payload column's upper bound (every design keeps its own
    payload in the MILP, so none is cut off; HiGHS's bound and gap then start from it)."""
    n = model.n
    unit_of, options = _units(model)
    offset = np.concatenate([[0], np.cumsum([o.size for o in options])]).astype(np.int64)
    n_x = int(offset[-1])
    col_m = n_x  # M_j at col_m + j
    col_s = n_x + n  # the payload s
    n_cols = col_s + 1  # then the torque-bound columns H_tj, L_tj, numbered as they are made
    rows = Rows()
    for u, opts in enumerate(options):
        rows.add(offset[u] + np.arange(opts.size), np.ones(opts.size), 1.0, 1.0)

    def weighted(j: int, values: np.ndarray):
        u = unit_of[j]
        return offset[u] + np.arange(options[u].size), np.asarray(values, dtype=float)[options[u]]

    for j in range(n):  # M_j − Σ m_o x = 0
        cols, vals = weighted(j, model.mass)
        rows.add(np.append(cols, col_m + j), np.append(-vals, 1.0), 0.0, 0.0)
    if math.isfinite(model.total_mass_max):
        rows.add(np.arange(col_m, col_m + n), np.ones(n), -np.inf, float(model.total_mass_max))
    if math.isfinite(model.total_cost_max):
        parts = [weighted(j, model.cost) for j in range(n)]
        rows.add(
            np.concatenate([p[0] for p in parts]),
            np.concatenate([p[1] for p in parts]),
            -np.inf,
            float(model.total_cost_max),
        )
    n_cols = payload_rows(model, rows, weighted, col_m, col_s, n_cols)
    n_all = n_cols
    c = np.zeros(n_all)
    c[col_s] = -1.0  # maximize s
    integrality = np.zeros(n_all)
    integrality[:n_x] = 1
    lb = np.full(n_all, -np.inf)
    ub = np.full(n_all, np.inf)
    lb[:n_x], ub[:n_x] = 0.0, 1.0
    lb[col_s], ub[col_s] = 0.0, min(BIG, upper)
    return c, integrality, Bounds(lb, ub), rows.constraint(n_all), offset, options, unit_of


def solve_matrix_milp(
    model: SizingModel,
    *,
    time_limit: float | None = None,
    start: np.ndarray | None = None,
    upper: float = math.inf,
    gap: float = OPTIMALITY_GAP,
) -> SolveOutcome:
    """Build and solve the payload MILP, from the design ``start`` (option per joint) when given,
    with the payload at most ``upper`` (a proven bound, :func:`build`), to the relative ``gap``;
    the MILP's design is scored by the numpy physics like any."""
    with quiet_stdout(discard=True):  # HiGHS prints its banner on stdout (keeps --json clean)
        import highspy

    t0 = time.perf_counter()
    if any(c.size == 0 for c in model.candidates):
        return SolveOutcome(
            "infeasible", None, -math.inf, -math.inf, 0.0, "a joint has no option", 0
        )
    c, integrality, bounds, rows, offset, options, unit_of = build(model, upper)
    left = math.inf if time_limit is None else time_limit - (time.perf_counter() - t0)
    if left <= 0:
        return SolveOutcome(
            "time_limit",
            None,
            -math.inf,
            math.inf,
            time.perf_counter() - t0,
            "time limit reached while building the MILP",
            0,
        )
    a = sp.csc_array(rows.A)
    with quiet_stdout(discard=True):
        h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    h.setOptionValue("mip_rel_gap", float(gap))
    if math.isfinite(left):
        h.setOptionValue("time_limit", float(left))
    h.passModel(
        c.size,
        rows.lb.size,
        a.nnz,
        1,  # column-wise
        1,  # minimize −s
        0.0,
        c,
        bounds.lb,
        bounds.ub,
        np.asarray(rows.lb, dtype=float),
        np.asarray(rows.ub, dtype=float),
        a.indptr.astype(np.int32),
        a.indices.astype(np.int32),
        a.data.astype(float),
        integrality.astype(np.int32),
    )
    if start is not None:  # the x columns of the design; HiGHS completes the rest by an LP
        cols = [
            offset[unit_of[j]] + int(np.flatnonzero(options[unit_of[j]] == start[j])[0])
            for j in range(model.n)
            if np.any(options[unit_of[j]] == start[j])
        ]
        if len(cols) == model.n:
            value = np.zeros(int(offset[-1]))
            value[cols] = 1.0
            h.setSolution(value.size, np.arange(value.size, dtype=np.int32), value)
    with quiet_stdout(discard=True):
        h.run()
    seconds = time.perf_counter() - t0
    info = h.getInfo()
    native = f"HiGHS {h.modelStatusToString(h.getModelStatus())}"
    bound = -float(info.mip_dual_bound)
    bound = bound if math.isfinite(bound) else math.inf
    nodes = int(info.mip_node_count)
    if h.getModelStatus() == highspy.HighsModelStatus.kInfeasible:
        return SolveOutcome("infeasible", None, -math.inf, -math.inf, seconds, native, nodes)
    if info.primal_solution_status < 2:  # no feasible solution
        return SolveOutcome("time_limit", None, -math.inf, bound, seconds, native, nodes)
    x = np.asarray(h.getSolution().col_value)
    index = np.array(
        [options[u][int(np.argmax(x[offset[u] : offset[u + 1]]))] for u in unit_of],
        dtype=np.int64,
    )
    key = model.best_key(index[None, :])
    if key is None:
        return SolveOutcome("time_limit", None, -math.inf, bound, seconds, native, nodes)
    status = "optimal" if h.getModelStatus() == highspy.HighsModelStatus.kOptimal else "time_limit"
    return SolveOutcome(
        status, index, float(key[0]), max(bound, float(key[0])), seconds, native, nodes
    )
