"""Pyomo back-end: the payload/mass problem as a MILP solved by HiGHS.

Nonlinear checks are lazy cuts.

Binary x[j, o] picks option o for joint j (Σ_o x[j, o] = 1; shared joints take equal x). For each
payload case and joint, with a = Jᵀu and the option bounds lo/hi of metrics.payload.torque_bounds:

    bias_j = g0_j + Σ_k Σ_o G[k, j]·m_o·x[k, o]
    Σ_o lo[j, o]·x[j, o] ≤ bias_j ≤ Σ_o hi[j, o]·x[j, o]                 (holds itself, s = 0)
    bias_j + s·a_j ≤ Σ_o hi[j, o]·x[j, o]  (a_j > 0),   ≥ Σ_o lo·x  (a_j < 0)

with one payload variable s for all cases (s ≤ every case's payload: the epigraph of the min).
The mass budget and cost are linear. Everything else (impact mitigation, effective mass,
back-drive force as a minimum over joints, duty cycles) is checked on the MILP's answer by the
numpy physics; a design that misses a requirement is cut off by a no-good cut
Σ_j x[j, o_j] ≤ n − 1 and the MILP is solved again. The MILP is a relaxation of the true problem
for every design that can hold itself (for the payload objective: every design with a positive
payload; when no design has one the back-end reports infeasible), so the loop stops with a
proven optimum once the numpy value of the incumbent reaches the MILP bound.
Independent of the branch and bound: a cross-check.
"""

from __future__ import annotations

import contextlib
import math
import os
import sys
import time

import numpy as np

from ..errors import InputError
from ..problem import force_for_objective, objective_names
from .model import SizingModel, tie_tol
from .result import SolveOutcome

#: finite stand-in for an infinite torque bound (N·m); no real joint comes near it
BIG = 1e9

#: binaries per second the MILP is built at, at least (measured on our 2-core machine under a
#: load of 9-14: 30,720 in 6 s, 76,800 in 15 s; docs/benchmarks.md); a model whose estimated
#: building time times seven (building, then handing it to HiGHS: up to six times as long)
#: exceeds the time limit is not started
BUILD_RATE = 5_000.0


@contextlib.contextmanager
def quiet_stdout(discard: bool = False):
    """Send solver output written to file descriptor 1 to stderr (keeps --json clean), or to
    nowhere with ``discard`` (a solver's banner when its log is off)."""
    sys.stdout.flush()
    saved = os.dup(1)
    target = os.open(os.devnull, os.O_WRONLY) if discard else 2
    try:
        os.dup2(target, 1)
        yield
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)
        if discard:
            os.close(target)


class _OutOfTime(Exception):
    pass


def build_milp(model: SizingModel, units, deadline=math.inf):
    """The Pyomo model; returns (m, options per joint). Raises _OutOfTime past ``deadline``."""
    import pyomo.environ as pe

    n = model.n
    opts = [model.candidates[j] for j in range(n)]
    m = pe.ConcreteModel()
    m.x = pe.Var([(j, int(o)) for j in range(n) for o in opts[j]], within=pe.Binary)
    m.one = pe.Constraint(range(n), rule=lambda m, j: sum(m.x[j, int(o)] for o in opts[j]) == 1)
    m.shared = pe.ConstraintList()
    for g in model.shared:
        common = set(map(int, opts[g[0]]))
        for j in g[1:]:
            common &= set(map(int, opts[j]))
        for j in g:
            for o in opts[j]:
                if int(o) not in common:
                    m.x[j, int(o)].fix(0)
            for o in common:
                if j != g[0]:
                    m.shared.add(m.x[j, o] == m.x[g[0], o])

    def total(values):
        return sum(float(values[o]) * m.x[j, int(o)] for j in range(n) for o in opts[j])

    m.budget = pe.ConstraintList()
    if math.isfinite(model.total_mass_max):
        m.budget.add(total(model.mass) <= model.total_mass_max)
    if math.isfinite(model.total_cost_max):
        m.budget.add(total(model.cost) <= model.total_cost_max)
    m.s = pe.Var(bounds=(0, None))
    m.torque = pe.ConstraintList()
    names = objective_names(model.project, model.objective_kind)
    by_name = {c.name: c for c in model.project.cases}
    for t in model.payload:
        case = by_name[t.name]  # m.s is the payload mass (kg): the force it needs
        need = (
            force_for_objective(model.project, model.objective_kind, case, m.s, names)
            if model.kind == "payload"
            else None
        )
        levels = [] if need is None else [need]
        if t.minimum > 0:
            levels.append(t.minimum)  # the case's own requirement payload_c ≥ payload_min
        for j in range(n):
            if time.perf_counter() > deadline:
                raise _OutOfTime
            bias = float(t.g0[j]) + sum(
                float(t.G[k, j] * model.mass[o]) * m.x[k, int(o)]
                for k in range(n)
                if t.G[k, j] != 0
                for o in opts[k]
            )
            hi = sum(float(min(t.hi[j, o], BIG)) * m.x[j, int(o)] for o in opts[j])
            lo = sum(float(max(t.lo[j, o], -BIG)) * m.x[j, int(o)] for o in opts[j])
            if levels:  # only a case with a payload to carry needs the robot to hold itself
                m.torque.add(bias <= hi)
                m.torque.add(bias >= lo)
            for s_case in levels:
                if t.a[j] > 0:
                    m.torque.add(bias + s_case * float(t.a[j]) <= hi)
                elif t.a[j] < 0:
                    m.torque.add(bias + s_case * float(t.a[j]) >= lo)
    if model.kind == "payload":
        m.obj = pe.Objective(expr=m.s, sense=pe.maximize)
        m.s.setub(BIG)
    elif model.kind == "cost":
        m.obj = pe.Objective(expr=total(model.cost), sense=pe.minimize)
    else:
        m.obj = pe.Objective(expr=total(model.mass), sense=pe.minimize)
    m.cuts = pe.ConstraintList()
    return m, opts


def cut_sets(model: SizingModel, index: np.ndarray, opts) -> list[list[np.ndarray]]:
    """Per failed requirement, the options per joint that fail it too (a valid cut each).

    Effective mass grows with every mass and back-driven reflected inertia (docs/optimizer.md,
    item 6): a design at least as heavy and as inert at every joint misses it too. The IMF falls
    with reflected inertia at fixed masses. The back-drive force min_i b_i/|a_i| only grows with
    the breakaway torques. Anything else cuts the one combination.
    """
    from ..problem import checks

    arrays = model.table.arrays(index[None, :])
    failed = {
        c.name
        for c in checks(model.project, arrays, model.evaluator.evaluate(arrays, detail=False))
        if not c.ok[0]
    }
    mono = not model.project.rotor_coupling
    out = []
    for name in sorted(failed) or ["shared"]:
        group = []
        for j in range(model.n):
            o, cand = int(index[j]), opts[j]
            if name == "effective_mass_max" and mono:
                keep = (model.mass[cand] >= model.mass[o]) & (
                    model.reflected[cand] >= model.reflected[o]
                )
            elif name in ("imf_min", "directional_imf_min") and mono:
                keep = (model.mass[cand] == model.mass[o]) & (
                    model.reflected[cand] >= model.reflected[o]
                )
            elif name == "backdrive_force_max":
                keep = model.breakaway[cand] >= model.breakaway[o]
            else:
                keep = cand == o
            group.append(cand[keep])
        out.append(group)
    return out


def _slack(value: float, bound: float, gap: float) -> float:
    """How far below the bound a design may stay and count as proven: the tie tolerance, or the
    relative gap asked for, whichever is larger."""
    return max(tie_tol(bound), gap * abs(value))


def solve_pyomo(
    model: SizingModel, units, *, time_limit=None, gap: float = 0.0, max_rounds=10_000
) -> SolveOutcome:
    """Solve by MILP plus lazy no-good cuts (see the module notes).

    ``gap``: the relative optimality gap, passed to HiGHS (``mip_rel_gap``) and used to end the
    cut loop: the run stops, status ``optimal``, once the best design is within
    ``gap``·|objective| of the bound (0: the exact optimum, as far as HiGHS proves it)."""
    import pyomo.environ  # noqa: F401  (registers the solvers)
    from pyomo.contrib.solver.common.factory import SolverFactory

    if model.kind == "imf" or model.objective_kind == "margin":
        raise InputError(
            "<api>",
            "backend",
            "the pyomo back-end handles the payload, mass and cost objectives; "
            "use backend search for imf and margin",
        )
    start = time.perf_counter()
    deadline = math.inf if time_limit is None else start + time_limit
    if any(c.size == 0 for c in model.candidates):
        return SolveOutcome(
            "infeasible", None, -math.inf, -math.inf, 0.0, "a joint has no option", 0
        )
    binaries = sum(int(c.size) for c in model.candidates)
    guess = binaries / BUILD_RATE
    if time_limit is not None and 7.0 * guess > time_limit:
        # building (checked only between blocks of rows) and handing over would overrun
        return SolveOutcome(
            "time_limit",
            None,
            -math.inf,
            math.inf,
            time.perf_counter() - start,
            f"the MILP's {binaries} binaries would take about {guess:.0f} s to build; "
            "no time to build and solve it",
            0,
        )
    try:
        m, opts = build_milp(model, units, deadline)
    except _OutOfTime:
        return SolveOutcome(
            "time_limit",
            None,
            -math.inf,
            math.inf,
            time.perf_counter() - start,
            "time limit reached while building the MILP",
            0,
        )
    built = time.perf_counter() - start
    if deadline - time.perf_counter() < 6.0 * built:
        # handing the model to HiGHS took up to six times as long as building it (measured)
        # and cannot be interrupted: starting it now would overrun the limit
        return SolveOutcome(
            "time_limit",
            None,
            -math.inf,
            math.inf,
            time.perf_counter() - start,
            f"the MILP took {built:.0f} s to build; no time left to solve it",
            0,
        )
    solver = SolverFactory("highs")
    sense = 1.0 if model.kind == "payload" else -1.0
    best, bound, rounds, native = None, math.inf, 0, ""
    while rounds < max_rounds:
        rounds += 1
        left = deadline - time.perf_counter()
        if left <= 0:
            break
        with quiet_stdout():
            res = solver.solve(
                m,
                time_limit=min(left, 1e7),
                solver_options={"mip_rel_gap": float(gap)},
                load_solutions=False,
                raise_exception_on_nonoptimal_result=False,
            )
        native = str(res.termination_condition).split(".")[-1]
        if res.incumbent_objective is None:
            bound = -math.inf if "infeasible" in native.lower() else bound
            break
        bound = (
            min(bound, sense * float(res.objective_bound))
            if res.objective_bound is not None
            else bound
        )
        res.solution_loader.load_vars()
        index = np.array(
            [next(int(o) for o in opts[j] if m.x[j, int(o)].value > 0.5) for j in range(model.n)]
        )
        key = model.best_key(index[None, :])
        if key is not None and model.better(key, best):
            best = key
        if best is not None and best[0] >= bound - _slack(best[0], bound, gap):
            break
        for group in cut_sets(model, index, opts):
            m.cuts.add(sum(m.x[j, int(o)] for j in range(model.n) for o in group[j]) <= model.n - 1)
    seconds = time.perf_counter() - start
    proven = best is not None and best[0] >= bound - _slack(best[0], bound, gap)
    if best is None:
        status = "infeasible" if bound == -math.inf else "time_limit"
        return SolveOutcome(
            status, None, -math.inf, bound, seconds, f"{native}, {rounds} MILP solves", rounds
        )
    status = "optimal" if proven else "time_limit"
    return SolveOutcome(
        status,
        np.array(best[3]),
        best[0],
        max(bound, best[0]) if not proven else best[0],
        seconds,
        f"HiGHS {native}, {rounds} MILP solves",
        rounds,
    )
