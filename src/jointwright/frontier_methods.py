"""The frontier's exact methods behind :func:`jointwright.frontier.frontier`: the
bi-objective branch and bound (:mod:`jointwright.solve.biobjective`) started from the strongest
end, the exhaustive method (:mod:`jointwright.solve.pareto`), and the single exact solves the
ε-constraint sweep and the strongest end are made of (docs/frontier.md, "Choosing the method").
"""

from __future__ import annotations

import dataclasses
import math
import time

from .frontier_result import MEASURES_NAME, Frontier, FrontierPoint, _points, knee
from .solve.model import tie_tol


def with_limit(project, case_name: str | None, key: str, value: float | None):
    """The project with one limit of one case set (None: removed); with ``case_name`` None, the
    requirement ``key`` of the whole robot (total mass or cost; removed: no limit)."""
    if case_name is None:
        req = dataclasses.replace(
            project.requirements, **{key: math.inf if value is None else float(value)}
        )
        return dataclasses.replace(project, requirements=req)
    cases = []
    for c in project.cases:
        if c.name == case_name:
            limits = {k: v for k, v in c.limits.items() if k != key}
            if value is not None:
                limits[key] = value
            c = dataclasses.replace(c, limits=limits)
        cases.append(c)
    return dataclasses.replace(project, cases=tuple(cases))


#: the branch and bound seeds its front with the strongest point (two single-objective solves)
#: from this many candidate designs on (docs/frontier.md)
SEED_MIN = 10_000_000
#: the second seed solve (the best measure at the largest payload) takes at most this share of
#: the time left and at most :data:`SEED_SECONDS`: stopped, its best design still prunes as an
#: incumbent, and the branch and bound finds the point itself (on the bundled quadruped the
#: solve took 54 s to prove what the branch and bound settles within its own run;
#: docs/benchmarks.md)
SEED_SHARE = 0.125
SEED_SECONDS = 10.0


def objective_kind(metric: str, case: str | None) -> str:
    """The single-objective search's objective for a measure: "mass" and "cost" are its own
    objectives; a case's measure is "metric@case"."""
    return metric if case is None else f"{metric}@{case}"


def free_model(project, case: str | None, key: str, table, deadline: float | None = None):
    """The payload-objective model with the frontier's measure limit removed (the root of the
    branch and bound and of the exhaustive method; "auto" counts its candidates).
    ``deadline``: a ``time.perf_counter()`` value; the filters raise ``OutOfTime`` past it."""
    from .sizing import build_model, read_objective

    free = with_limit(project, case, key, None)
    cfg = read_objective(project)
    model, _ = build_model(
        free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"], table=table, deadline=deadline
    )
    return model


def _bnb(
    project,
    case: str | None,
    key: str,
    metric: str,
    sense: str,
    deadline: float,
    start: float,
    table,
    model=None,
) -> Frontier:
    """The complete front by bi-objective branch and bound (:mod:`.solve.biobjective`);
    ``model``: :func:`free_model`'s, when the caller has built it."""
    from .sizing import design_of, units_of
    from .solve.biobjective import BiObjectiveSearch
    from .solve.pareto import count

    free = with_limit(project, case, key, None)
    model = free_model(project, case, key, table) if model is None else model
    units = units_of(model.n, model.shared)
    search = BiObjectiveSearch(model, units, case, metric, sense, deadline=deadline)
    # on large option spaces the strongest end first, by the single-objective search and its
    # heuristics: the largest payload (proven: it caps every box) and a design that reaches it,
    # whose measure prunes every box it beats (BiObjectiveSearch.incumbent); then, within its
    # share of the time (SEED_SHARE, SEED_SECONDS), the best measure at that payload (a proven
    # front point when it finishes).
    # On small ones the solves cost more than they save (measured: docs/benchmarks.md)
    top = first = None
    if count(model, units) < SEED_MIN:
        status = "skipped"
    else:
        left = deadline - time.perf_counter()
        status, payload, top, first, _b = _solve(
            free, "payload", None, _left(left), None, "search", table, bound=search
        )
        top = None if top is None else (payload, top)
    if status == "infeasible":  # nothing is feasible: the empty front, proven
        return Frontier(
            MEASURES_NAME[metric],
            case,
            sense,
            (),
            True,
            None,
            time.perf_counter() - start,
            1,
            "branch-and-bound",
        )
    solves = 0 if status == "skipped" else 1
    if status == "optimal":
        # the best measure at the largest payload, within its share of the time: when it is
        # proven, (P*, μ*) is a front point; else the best design it found (payload P*, a
        # measure at least as good as the first design's) prunes as an incumbent
        left = deadline - time.perf_counter()
        status2, _v, _d, best, _b2 = _solve(
            free,
            objective_kind(metric, case),
            payload,
            min(_left(left * SEED_SHARE) or math.inf, SEED_SECONDS),
            None,
            "search",
            table,
            start=first,
        )
        solves += 1
        if status2 == "optimal" and best is not None:
            search.seed(best)
        elif best is not None:
            search.incumbent(best)
    if first is not None and not search.fp.size:
        search.incumbent(first)
    out = search.run()
    found = [
        (payload, mu, design_of(project, model, idx, "frontier point"))
        for payload, mu, idx, _mass in out.points
    ]
    pts = _points(found)
    unexplored = None if out.complete else (out.open_payload, out.open_measure)
    if not pts and not out.complete and top is not None:
        # stopped before the first proof: the single-objective search's best design is still a
        # feasible design to start from, returned marked as not proven
        d = top[1]
        mu = _measure(free, d, case, metric)
        pts = (FrontierPoint(top[0], mu, d, d.mass, (), (), False),)
    return Frontier(
        MEASURES_NAME[metric],
        case,
        sense,
        pts,
        out.complete,
        knee(pts, sense),
        time.perf_counter() - start,
        solves,
        "branch-and-bound",
        out.scored,
        unexplored,
    )


def _exhaustive(
    project,
    case: str | None,
    key: str,
    metric: str,
    sense: str,
    deadline: float,
    start: float,
    limit: float,
    table,
) -> Frontier | None:
    """The complete front by scoring every candidate combination, or None when there are too
    many (the ε-constraint sweep takes over)."""
    from .sizing import design_of, units_of
    from .solve.pareto import count, pareto_front

    model = free_model(project, case, key, table)
    units = units_of(model.n, model.shared)
    total = count(model, units)
    if total > limit:
        return None
    out = pareto_front(model, units, case, metric, sense, deadline=deadline)
    found = [
        (payload, mu, design_of(project, model, idx, "frontier point"))
        for payload, mu, idx, _mass in out.points
    ]
    pts = _points(found)
    return Frontier(
        MEASURES_NAME[metric],
        case,
        sense,
        pts,
        out.complete,
        knee(pts, sense),
        time.perf_counter() - start,
        0,
        "exhaustive",
        out.scored,
    )


def _left(seconds: float) -> float | None:
    """A time limit from what is left of the run (None: no limit)."""
    return None if not math.isfinite(seconds) else max(seconds, 1e-3)


def with_payload_floor(project, payload_floor: float):
    """``project`` with every case that sets the payload objective (payload and stance cases,
    only the ``[objective] cases`` when given) required to carry ``payload_floor`` kg: the
    lexicographic second stage of a frontier point."""
    from .problem import load_for_payload, payload_objective_cases

    # the floor is a payload mass (kg); each case must reach the force that carries it
    floor = payload_floor - 1e-9 * abs(payload_floor) - 1e-12
    chosen = {c.name for c in payload_objective_cases(project)}
    return dataclasses.replace(
        project,
        cases=tuple(
            dataclasses.replace(
                c,
                limits={
                    **c.limits,
                    "payload_min": max(
                        float(load_for_payload(c, floor)), c.limits.get("payload_min", 0.0)
                    ),
                },
            )
            if c.name in chosen
            else c
            for c in project.cases
        ),
    )


def _solve(
    project,
    kind: str,
    payload_floor,
    time_limit,
    upper,
    backend,
    table=None,
    bound=None,
    start=None,
):
    """One exact solve of the sweep: (status, objective, design, option index per joint,
    proven upper bound on the objective (inf when none)).

    ``payload_floor``: every payload and stance case must reach it (:func:`with_payload_floor`);
    ``bound``: a :class:`~.solve.biobjective.BiObjectiveSearch` whose payload cap takes the
    search's proven bound (payload objective only);
    ``upper``: a known bound from the neighbouring point, which ends the search when reached;
    ``start``: the option index of a design to start from (the search's first incumbent when it
    meets every requirement of this solve; a stopped search returns it or a better one).
    Only the optimal value matters here, so ties are not searched.
    """
    from .option_rows import OutOfTime
    from .sizing import build_model, design_of, read_objective, units_of
    from .solve.search import BranchAndBound

    # the limit covers the model's preparation too (filters and tightening take seconds on
    # large catalogs): the search gets what is left of it
    end = None if time_limit is None else time.perf_counter() + time_limit
    p = project if payload_floor is None else with_payload_floor(project, payload_floor)
    cfg = read_objective(project)
    try:
        model, _ = build_model(
            p, kind, cfg["pin"], cfg["exclude"], cfg["shared"], table=table, deadline=end
        )
    except OutOfTime:
        return "time_limit", None, None, None, math.inf
    units = units_of(model.n, model.shared)
    if end is not None:
        time_limit = max(end - time.perf_counter(), 1e-3)
    if backend == "search" or "@" in kind:
        import numpy as np

        key = None if start is None else model.best_key(np.asarray(start, dtype=np.int64)[None, :])
        if key is None:
            # no design to start from: the primal heuristics' first design, as ``size`` runs
            # them (a share of the limit), so that a stopped solve still has a design
            from .solve.engines import first_design

            t0 = time.perf_counter()
            key = first_design(model, units, time_limit)
            if time_limit is not None:
                time_limit = max(time_limit - (time.perf_counter() - t0), 1e-3)
        out = BranchAndBound(
            model, units, time_limit=time_limit, ties=False, upper=upper, incumbent=key
        ).run()
    else:
        from .sizing import run_backend

        out = run_backend(model, units, backend, time_limit, None)
    if bound is not None and kind == "payload" and math.isfinite(out.bound):
        # a proven bound on every design's payload, even from a stopped search: the branch
        # and bound's boxes start below it
        bound.cap = min(bound.cap, float(out.bound) + tie_tol(float(out.bound)))
    bound = float(out.bound) if math.isfinite(out.bound) else math.inf
    if out.index is None:
        return out.status, None, None, None, bound
    import numpy as np

    index = np.asarray(out.index, dtype=np.int64)
    design = design_of(project, model, index, "frontier point")
    return out.status, out.objective, design, index, bound


def _measure(project, design, case: str | None, metric: str) -> float:
    from .assessment import assess

    if case is None:  # total actuator mass or cost
        return float(design.mass if metric == "mass" else design.cost)
    a = assess(project, design)
    return float(next(c for c in a.cases if c.name == case).metrics[metric])
