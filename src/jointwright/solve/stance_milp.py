"""The stance cases as a mixed-integer linear program over the options left after root probing.

The stance program (solve/stance_program.py) relaxes every completion of a partial design with
interval masses and torque envelopes; deep in a whole robot's tree those relaxations stay loose
while many joints trade mass against strength, and the branch and bound then enumerates
(docs/benchmarks.md, instance (e)). Here the same rows get one binary per option of each unit
(a joint, or a shared group taking one option), x[u, o], and the mass and torque columns are
tied to them exactly:

    m_j = Σ_o m_o·x[u(j), o],   Σ_o lo_c[j, o]·x[u(j), o] ≤ τ_cj ≤ Σ_o hi_c[j, o]·x[u(j), o],
    Σ_o x[u, o] = 1.

The static payload cases of the objective add the hand-over MILP's rows (solve/milp_matrix.py,
``payload_rows``) with the objective column t in place of its payload. For a fixed choice of
options the program is then the design's own: the statics of every stance case with
circumscribed friction pyramids (the shared mass columns, the budget row), whose value is at least
the design's cone value, and each payload case's torque rows, which hold with t at its payload;
so the MILP's dual bound is an upper bound on the payload objective of every design drawn from
these options whose cases all hold. One whose stance case cannot hold itself has at most the
program's ``none``; one that cannot hold itself in a payload case carries no payload (≤ 0).
A stance case outside the objective with a payload minimum only keeps its force s_c at least
that minimum (a requirement of every feasible design; solve/stance_program.py). HiGHS
(highspy) branches on the binaries with its own cuts and heuristics. Proof and measurements:
docs/optimizer.md, item 12.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .milp_matrix import Rows, payload_rows
from .model import unit_options
from .stance_program import ABS_SLACK, REL_SLACK, highs_model

#: finite stand-in for an infinite torque bound (N·m) in a coefficient; no real joint nears it
BIG = 1e9
#: binaries at most (options summed over the units); larger models are left to the search
MAX_OPTIONS = 10_000


@dataclass(frozen=True)
class StanceMilpOutcome:
    """What the MILP proved: ``bound`` holds for the payload objective of every design drawn
    from the options it was given (solver slack added); ``index`` the best design it found (n,)
    or None, with its program value ``value``; ``options`` the binaries (options summed over
    the units)."""

    status: str  # "optimal", "time_limit" (or any other stop of HiGHS) or "infeasible"
    index: np.ndarray | None
    value: float
    bound: float
    nodes: int
    options: int


def stance_milp_models(model) -> bool:
    """Whether the MILP bounds ``model``'s objective: the payload objective with stance cases in
    the programs (``SizingModel.stance_bounded``, empty under any other objective). Other
    requirements (an IMF or speed limit, a duty cycle) are not rows: the MILP's design is scored
    in full, and its bound holds regardless."""
    return bool(model.stance_bounded)


def fits(bound, units) -> bool:
    """Whether the options left make a MILP of at most :data:`MAX_OPTIONS` binaries."""
    return sum(int(unit_options(bound.candidates, u).size) for u in units) <= MAX_OPTIONS


def solve_stance_milp(
    bound, units, time_limit: float, start=None, gap: float = 0.0
) -> StanceMilpOutcome:
    """Maximize the payload objective (the least carried payload of the objective's stance and
    static payload cases) over the options of ``bound.candidates`` (``bound``: a
    :class:`.stance_bound.StanceBound`), for ``time_limit`` seconds, from the design ``start``
    (n,) when given; ``gap``: HiGHS's relative MIP gap."""
    import highspy

    program, model = bound.program, bound.model
    n = model.n
    # a design the program cannot hold: a stance case holds nothing, or a static payload case
    # not even the robot itself (a payload ≤ 0, as for the hand-over's MILP)
    least = max(program.none, 0.0) if model.payload else program.none
    opts = [unit_options(bound.candidates, u) for u in units]
    if any(o.size == 0 for o in opts):
        return StanceMilpOutcome("infeasible", None, -math.inf, least, 0, 0)
    first = np.concatenate([[0], np.cumsum([o.size for o in opts])]).astype(np.int64)
    base = program.a.shape[1]
    nx = int(first[-1])
    col_lo = np.concatenate([program.col_lo, np.zeros(nx)])
    col_hi = np.concatenate([program.col_hi, np.ones(nx)])
    m_cols = program.m_col + np.arange(n)
    col_lo[m_cols], col_hi[m_cols] = bound.m_free[:, 0], bound.m_free[:, 1]
    for c, hull in enumerate(bound.t_free):
        col_lo[program.tau_cols[c] + np.arange(n)] = hull[:, 0]
        col_hi[program.tau_cols[c] + np.arange(n)] = hull[:, 1]
    rows = Rows()
    for r in range(program.a.shape[0]):  # the stance program's own rows
        nz = np.flatnonzero(program.a[r])
        rows.add(nz, program.a[r, nz], program.row_lo[r], program.row_hi[r])
    unit_at = np.empty(n, dtype=np.int64)
    for k, u in enumerate(units):
        o = opts[k]
        x = base + first[k] + np.arange(o.size)
        unit_at[list(u)] = k
        rows.add(x, np.ones(o.size), 1.0, 1.0)
        for j in u:
            rows.add(np.r_[program.m_col + j, x], np.r_[1.0, -model.mass[o]], 0.0, 0.0)
            for c, (t_lo, t_hi) in enumerate(zip(bound.lo, bound.hi, strict=True)):
                tau = program.tau_cols[c] + j
                if np.any(np.isfinite(t_hi[j, o])):
                    rows.add(np.r_[tau, x], np.r_[1.0, -np.minimum(t_hi[j, o], BIG)], -np.inf, 0.0)
                if np.any(np.isfinite(t_lo[j, o])):
                    rows.add(np.r_[tau, x], np.r_[1.0, -np.maximum(t_lo[j, o], -BIG)], 0.0, np.inf)

    def weighted(j: int, values: np.ndarray):
        k = unit_at[j]
        return base + first[k] + np.arange(opts[k].size), np.asarray(values, dtype=float)[opts[k]]

    # the static payload cases: the objective column t is at most each one's payload too
    width = payload_rows(model, rows, weighted, program.m_col, program.t_col, base + nx)
    grow = width - col_lo.size
    col_lo = np.concatenate([col_lo, np.full(grow, -np.inf)])
    col_hi = np.concatenate([col_hi, np.full(grow, np.inf)])
    con = rows.constraint(width)
    cost = np.zeros(width)
    cost[program.t_col] = 1.0  # maximize t (the program itself may only test feasibility)
    integer = np.zeros(width, dtype=bool)
    integer[base : base + nx] = True
    h = highs_model(highspy, cost, col_lo, col_hi, con.A, con.lb, con.ub, integer)
    h.setOptionValue("time_limit", max(float(time_limit), 1e-3))
    h.setOptionValue("mip_rel_gap", float(gap))
    if start is not None:
        where = []
        for k, u in enumerate(units):
            hit = np.flatnonzero(opts[k] == start[u[0]])
            if hit.size:
                where.append(base + first[k] + int(hit[0]))
        if len(where) == len(units):
            h.setSolution(
                len(where), np.array(where, dtype=np.int32), np.ones(len(where), dtype=float)
            )
    h.run()
    status = h.getModelStatus()
    info = h.getInfo()
    nodes = int(info.mip_node_count)
    if status == highspy.HighsModelStatus.kInfeasible:
        return StanceMilpOutcome("infeasible", None, -math.inf, least, nodes, nx)
    upper = float(info.mip_dual_bound)
    upper = upper + REL_SLACK * abs(upper) + ABS_SLACK if math.isfinite(upper) else math.inf
    index, value = None, -math.inf
    if info.primal_solution_status == 2:  # feasible
        x = np.asarray(h.getSolution().col_value)[base : base + nx]
        index = np.full(n, -1, dtype=np.int64)
        for k, u in enumerate(units):
            index[list(u)] = opts[k][int(np.argmax(x[first[k] : first[k + 1]]))]
        value = float(info.objective_function_value)
    done = status == highspy.HighsModelStatus.kOptimal
    return StanceMilpOutcome(
        "optimal" if done else "time_limit", index, value, max(upper, least), nodes, nx
    )
