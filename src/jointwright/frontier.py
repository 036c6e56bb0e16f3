"""Payload versus back-drivability: the Pareto frontier, complete and proven.

Three exact methods (docs/frontier.md, "Choosing the method"):

* ``branch-and-bound`` (the default): a bi-objective branch and bound over joints
  (:mod:`jointwright.solve.biobjective`) that cuts a partial design when its bound box is
  dominated by the front found so far; complete and proven; a run stopped by the time limit
  returns the proven part of the front and the region still unexplored.
* ``exhaustive``: every candidate combination scored (:mod:`jointwright.solve.pareto`).
* ``sweep``: exact ε-constraint solves. Each point is an exact :func:`jointwright.sizing.size`
  (payload objective) with the chosen measure of one case turned into a constraint: ``imf`` ≥ ε,
  ``effective_mass`` ≤ ε or ``backdrive_force`` ≤ ε; every other requirement of the project
  stays. The sweep starts with the measure free (the largest payload), then asks each time for a
  measure strictly better than the last point's (by a relative step of 1e-7) until nothing is
  feasible. Each step has two exact solves: the largest payload P under ε, then the best measure
  among designs with payload ≥ P, so each point is non-dominated; over the discrete options this
  yields every non-dominated (payload, measure) pair. When the sweep stops early (``points`` or
  the time limit) the set is a sample, and ``complete`` says so.

Near-duplicate neighbours may be merged for display (``merge``, a fraction of each axis's span).
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass

from .errors import InputError
from .solve.model import tie_tol

#: measure -> (case kind, limit key, metric, sense: "min" = larger is better). The robot-level
#: measures (total actuator mass, total cost) have no case (kind None); their limit is the
#: project's requirement of that name
MEASURES = {
    "imf": ("impact", "imf_min", "imf", "min"),
    "effective_mass": ("impact", "effective_mass_max", "effective_mass", "max"),
    "backdrive_force": ("backdrive", "backdrive_force_max", "backdrive_force", "max"),
    "mass": (None, "total_mass_max", "mass", "max"),
    "cost": (None, "total_cost_max", "cost", "max"),
}
#: metric name in the evaluation -> measure name
MEASURES_NAME = {v[2]: k for k, v in MEASURES.items()}
#: relative step by which each new point must improve the measure
STEP = 1e-7


@dataclass(frozen=True)
class FrontierPoint:
    payload: float  # kg, the payload mass every payload and stance case carries
    measure: float  # the measure of the frontier's case
    design: object  # Design
    mass: float  # kg
    changes: tuple  # joints whose actuator differs from the previous point's
    #: (joint, previous point's actuator label, this point's) for each joint in ``changes``
    changed: tuple = ()
    #: False only for the one design a stopped branch and bound returns when it has no proven
    #: point yet (the single-objective search's best design so far)
    proven: bool = True
    #: the design's largest peak gear torque at an impact over the stage's momentary rating,
    #: over the impact cases with an impact speed (metrics/gear_shock.py); None without such a case
    shock_use: float | None = None


@dataclass(frozen=True)
class Frontier:
    measure: str
    case: str | None  # None for the robot-level measures (total mass, cost)
    sense: str  # "min": larger measure is better; "max": smaller is better
    points: tuple  # FrontierPoint, largest payload first
    complete: bool
    knee: int | None  # index into points
    seconds: float
    solves: int
    method: str = "sweep"  # "branch-and-bound", "exhaustive" or "sweep" (ε-constraint)
    scored: int = 0  # designs scored by the exhaustive method or the branch and bound
    #: a stopped branch and bound: every missing point has payload ≤ unexplored[0] (kg) and a
    #: measure no better than unexplored[1]; the points returned are proven. None otherwise
    unexplored: tuple | None = None
    merged: int = 0  # front points merged into a neighbour as near-duplicates
    merge_tolerance: float = 0.0  # fraction of each axis's span (docs/frontier.md)

    def to_dict(self) -> dict:
        from .assessment import _jsonable
        from .design import design_to_toml

        return _jsonable(
            {
                "measure": self.measure,
                "case": self.case,
                "sense": self.sense,
                "complete": self.complete,
                "knee": self.knee,
                "seconds": self.seconds,
                "solves": self.solves,
                "method": self.method,
                "designs_scored": self.scored,
                "unexplored": None
                if self.unexplored is None
                else {"payload_max": self.unexplored[0], "measure_bound": self.unexplored[1]},
                "merged": self.merged,
                "merge_tolerance": self.merge_tolerance,
                "points": [
                    {
                        "payload": p.payload,
                        "measure": p.measure,
                        "mass": p.mass,
                        "changes": list(p.changes),
                        "changed": {j: [old, new] for j, old, new in p.changed},
                        "proven": p.proven,
                        "shock_use": p.shock_use,
                        "actuators": {
                            j: a.label()
                            for j, a in zip(p.design.joints, p.design.actuators, strict=True)
                        },
                        "design_toml": design_to_toml(p.design),
                    }
                    for p in self.points
                ],
            }
        )


def _case(project, measure: str, case: str | None):
    """The case whose measure is traded (None for total mass and cost, which have no case)."""
    kind = MEASURES[measure][0]
    if kind is None:
        if case is not None:
            raise InputError(
                "<api>", "case", f"measure {measure} is the robot's total and takes no case"
            )
        return None
    if measure == "imf" and project.robot.n_base != 6:
        raise InputError(
            str(project.file),
            "robot.base",
            "measure imf (impact mitigation factor) needs a floating base; for a "
            "fixed-base arm use --measure effective_mass",
        )
    if case is None:
        for c in project.cases:
            if c.kind == kind:
                return c
        raise InputError(str(project.file), "case", f"measure {measure} needs a {kind} case")
    try:
        c = project.case(case)
    except KeyError:
        raise InputError("<api>", "case", f"no case named {case!r}") from None
    if c.kind != kind:
        raise InputError(
            "<api>", "case", f"measure {measure} needs a {kind} case; {case!r} is {c.kind}"
        )
    return c


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


#: most candidate combinations the exhaustive method scores (with stance or duty-cycle cases
#: every feasible one is kept until its costly check: memory grows with the count)
EXHAUSTIVE_MAX = 20_000_000


def frontier(
    project,
    measure: str = "imf",
    *,
    case: str | None = None,
    points: int = 50,
    time_limit: float | None = None,
    backend: str = "search",
    method: str = "auto",
    merge: float = 0.0,
) -> Frontier:
    """Payload versus ``measure`` at ``case``: the non-dominated designs, largest payload first.

    Parameters
    ----------
    project : Project
    measure : "imf" (floating base), "effective_mass" (kg), "backdrive_force" (N), "mass"
        (total actuator mass, kg) or "cost" (total actuator cost, the catalog's currency units)
    case : name of the impact / back-drive case; default the first of that kind; none for
        "mass" and "cost"
    points : most sizing solves (the frontier is marked incomplete when it is reached)
    time_limit : s for the whole sweep
    backend : passed to :func:`jointwright.sizing.size` (sweep)
    method : "branch-and-bound" (bi-objective branch and bound: complete and proven; past the
        time limit the proven part and the region still unexplored), "exhaustive" (score every
        candidate combination: complete and proven), "sweep" (exact ε-constraint solves) or
        "auto" (the branch and bound; docs/frontier.md, "Choosing the method")
    merge : neighbouring points closer than this fraction of the front's span on both axes are
        merged into one (the larger payload stays; both ends always stay); 0 keeps every point

    Returns
    -------
    Frontier
    """
    if measure not in MEASURES:
        raise InputError(
            "<api>", "measure", f"must be one of {', '.join(MEASURES)}, got {measure!r}"
        )
    if not isinstance(points, int) or points < 1:
        raise InputError("<api>", "points", f"must be a whole number >= 1, got {points!r}")
    c = _case(project, measure, case)
    name = None if c is None else c.name
    _kind, key, metric, sense = MEASURES[measure]
    start = time.perf_counter()
    deadline = math.inf if time_limit is None else start + time_limit
    if method not in METHODS:
        raise InputError("<api>", "method", f"must be one of {', '.join(METHODS)}, got {method!r}")
    if not isinstance(merge, (int, float)) or not 0.0 <= merge < 1.0:
        raise InputError("<api>", "merge", f"must be a fraction in [0, 1), got {merge!r}")
    from .options import build_table
    from .sizing import read_objective

    # one option table for every solve: it depends on the catalog and the exclusions only
    table = build_table(project, read_objective(project)["exclude"])
    if method in ("auto", "branch-and-bound"):
        return _finish(
            project, _bnb(project, name, key, metric, sense, deadline, start, table), merge
        )
    if method == "exhaustive":
        out = _exhaustive(project, name, key, metric, sense, deadline, start, EXHAUSTIVE_MAX, table)
        if out is None:
            raise InputError(
                str(project.file),
                "method",
                f"exhaustive scores every candidate combination and this project has more than "
                f"{EXHAUSTIVE_MAX:,} of them; use the branch and bound (method auto), which "
                "proves the same front",
            )
        return _finish(project, out, merge)
    found: list[tuple] = []
    eps: float | None = None
    solves, complete = 0, False
    while solves < points:
        left = deadline - time.perf_counter()
        if left <= 0:
            break
        current = with_limit(project, name, key, eps)
        upper = found[-1][0] if found else None  # the neighbour's payload bounds this one
        status, payload, design, _i = _solve(
            current, "payload", None, time_limit and left, upper, backend, table
        )
        solves += 1
        if status == "infeasible":
            complete = True
            break
        if status != "optimal":
            if design is not None and not found:
                # stopped before the first proof: the best design found is still a feasible
                # point the architect can start from (the frontier is marked sampled)
                found.append((payload, _measure(project, design, name, metric), design))
            break
        rest = None if time_limit is None else max(deadline - time.perf_counter(), 1e-3)
        status2, _value, best, _i = _solve(
            current, objective_kind(metric, name), payload, rest, None, "search", table
        )
        solves += 1
        if status2 == "optimal":
            design = best
        mu = _measure(project, design, name, metric)
        found.append((payload, mu, design))
        if not math.isfinite(mu):
            complete = sense == "max" and False
            break
        step = STEP * max(abs(mu), 1e-12)
        eps = mu + step if sense == "min" else mu - step
        if sense == "max" and eps < 0:
            complete = True
            break
    pts = _points(found)
    out = Frontier(
        measure, name, sense, pts, complete, knee(pts, sense), time.perf_counter() - start, solves
    )
    return _finish(project, out, merge)


#: the methods :func:`frontier` offers
METHODS = ("auto", "branch-and-bound", "exhaustive", "sweep")

#: the branch and bound seeds its front with the strongest point (two single-objective solves)
#: from this many candidate designs on (docs/frontier.md)
SEED_MIN = 10_000_000


def objective_kind(metric: str, case: str | None) -> str:
    """The single-objective search's objective for a measure: "mass" and "cost" are its own
    objectives; a case's measure is "metric@case"."""
    return metric if case is None else f"{metric}@{case}"


def _bnb(
    project,
    case: str | None,
    key: str,
    metric: str,
    sense: str,
    deadline: float,
    start: float,
    table,
) -> Frontier:
    """The complete front by bi-objective branch and bound (:mod:`.solve.biobjective`)."""
    from .sizing import build_model, design_of, read_objective, units_of
    from .solve.biobjective import BiObjectiveSearch
    from .solve.pareto import count

    free = with_limit(project, case, key, None)
    cfg = read_objective(project)
    model, _ = build_model(free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"], table=table)
    units = units_of(model.n, model.shared)
    search = BiObjectiveSearch(model, units, case, metric, sense, deadline=deadline)
    # on large option spaces the strongest end first, by the single-objective search and its
    # heuristics: the largest payload (proven: it caps every box) and a design that reaches it,
    # whose measure prunes every box it beats (BiObjectiveSearch.incumbent); then, within half
    # the time left, the best measure at that payload (a proven front point when it finishes).
    # On small ones the solves cost more than they save (measured: docs/benchmarks.md)
    top = first = None
    if count(model, units) < SEED_MIN:
        status = "skipped"
    else:
        left = deadline - time.perf_counter()
        status, payload, top, first = _solve(
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
        # the best measure at the largest payload, with at most half the time left: when it
        # is proven, (P*, μ*) is a front point; else the best design it found (payload P*, a
        # measure at least as good as the first design's) prunes as an incumbent
        left = deadline - time.perf_counter()
        status2, _v, _d, best = _solve(
            free,
            objective_kind(metric, case),
            payload,
            _left(left / 2),
            None,
            "search",
            table,
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


def _finish(project, f: Frontier, merge: float) -> Frontier:
    """The front as returned: near-duplicates merged, each point's gear shock use added."""
    return _with_shock(project, _merged(f, merge))


def _with_shock(project, f: Frontier) -> Frontier:
    """Each point with its gear shock use at the project's impacts (the worst over the impact
    cases that state an impact speed): how back-drivability trades against gear survival at
    touchdown or collision (docs/frontier.md). Unchanged when no case states an impact speed."""
    cases = [c.name for c in project.cases if c.kind == "impact" and c.impact_speed > 0]
    if not cases or not f.points:
        return f
    import numpy as np

    from .design import arrays_from_designs
    from .evaluate import Evaluator

    arrays = arrays_from_designs([p.design for p in f.points])
    ev = Evaluator(project).evaluate(arrays, detail=False)
    use = np.max([np.asarray(ev[c]["shock_use"], dtype=float) for c in cases], axis=0)
    points = tuple(
        dataclasses.replace(p, shock_use=float(u)) for p, u in zip(f.points, use, strict=True)
    )
    return dataclasses.replace(f, points=points)


def _merged(f: Frontier, tol: float) -> Frontier:
    """``f`` with near-duplicate neighbours merged: walking from the largest payload, a point
    within ``tol`` of the front's span on both axes of the last point kept is dropped; the last
    point (the most back-drivable) always stays, and replaces the last kept one when that is
    within the tolerance and is not the first. Knee and joints changed follow the points kept."""
    pts = f.points
    if tol <= 0 or len(pts) < 3:
        return dataclasses.replace(f, merge_tolerance=float(tol))
    p = [q.payload for q in pts]
    m = [q.measure for q in pts]
    span_p = (max(p) - min(p)) or 1.0
    span_m = (max(m) - min(m)) or 1.0

    def near(a, b) -> bool:
        return (
            abs(a.payload - b.payload) <= tol * span_p
            and abs(a.measure - b.measure) <= tol * span_m
        )

    keep = [pts[0]]
    for q in pts[1:-1]:
        if not near(q, keep[-1]):
            keep.append(q)
    if len(keep) > 1 and near(pts[-1], keep[-1]):
        keep[-1] = pts[-1]
    elif len(keep) == 1 or not near(pts[-1], keep[-1]):
        keep.append(pts[-1])
    kept = _points([(q.payload, q.measure, q.design) for q in keep], dedupe=False)
    return dataclasses.replace(
        f,
        points=kept,
        knee=knee(kept, f.sense),
        merged=len(pts) - len(kept),
        merge_tolerance=float(tol),
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
    from .sizing import build_model, design_of, read_objective, units_of
    from .solve.pareto import count, pareto_front

    free = with_limit(project, case, key, None)
    cfg = read_objective(project)
    model, _ = build_model(free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"], table=table)
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


def _solve(project, kind: str, payload_floor, time_limit, upper, backend, table=None, bound=None):
    """One exact solve of the sweep: (status, objective, design, option index per joint).

    ``payload_floor``: every payload and stance case must reach it (:func:`with_payload_floor`);
    ``bound``: a :class:`~.solve.biobjective.BiObjectiveSearch` whose payload cap takes the
    search's proven bound (payload objective only);
    ``upper``: a known bound from the neighbouring point, which ends the search when reached.
    Only the optimal value matters here, so ties are not searched.
    """
    from .options import OutOfTime
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
        return "time_limit", None, None, None
    units = units_of(model.n, model.shared)
    if end is not None:
        time_limit = max(end - time.perf_counter(), 1e-3)
    if backend == "search" or "@" in kind:
        out = BranchAndBound(model, units, time_limit=time_limit, ties=False, upper=upper).run()
    else:
        from .sizing import run_backend

        out = run_backend(model, units, backend, time_limit, None)
    if bound is not None and kind == "payload" and math.isfinite(out.bound):
        # a proven bound on every design's payload, even from a stopped search: the branch
        # and bound's boxes start below it
        bound.cap = min(bound.cap, float(out.bound) + tie_tol(float(out.bound)))
    if out.index is None:
        return out.status, None, None, None
    import numpy as np

    index = np.asarray(out.index, dtype=np.int64)
    return out.status, out.objective, design_of(project, model, index, "frontier point"), index


def _measure(project, design, case: str | None, metric: str) -> float:
    from .assessment import assess

    if case is None:  # total actuator mass or cost
        return float(design.mass if metric == "mass" else design.cost)
    a = assess(project, design)
    return float(next(c for c in a.cases if c.name == case).metrics[metric])


def _points(found, dedupe: bool = True) -> tuple:
    keep = [
        f
        for i, f in enumerate(found)
        if not dedupe or i + 1 == len(found) or found[i + 1][0] < f[0] - tie_tol(f[0])
    ]
    out, prev = [], None
    for payload, mu, d in keep:
        changes = (
            ()
            if prev is None
            else tuple(
                j for j, a, b in zip(d.joints, d.actuators, prev.actuators, strict=True) if a != b
            )
        )
        changed = (
            ()
            if prev is None
            else tuple(
                (j, b.label(), a.label())
                for j, a, b in zip(d.joints, d.actuators, prev.actuators, strict=True)
                if a != b
            )
        )
        out.append(FrontierPoint(payload, mu, d, d.mass, changes, changed))
        prev = d
    return tuple(out)


def knee(points, sense: str) -> int | None:
    """The point farthest from the chord between the two ends, both axes scaled to [0, 1]."""
    if len(points) < 3:
        return None
    p = [pt.payload for pt in points]
    m = [pt.measure for pt in points]
    if not all(math.isfinite(v) for v in p + m):
        return None
    span_p = (max(p) - min(p)) or 1.0
    span_m = (max(m) - min(m)) or 1.0
    xs = [(v - min(p)) / span_p for v in p]
    ys = [(v - min(m)) / span_m for v in m]
    (x0, y0), (x1, y1) = (xs[0], ys[0]), (xs[-1], ys[-1])
    norm = math.hypot(x1 - x0, y1 - y0) or 1.0
    dist = [
        abs((x1 - x0) * (y0 - y) - (x0 - x) * (y1 - y0)) / norm for x, y in zip(xs, ys, strict=True)
    ]
    return int(max(range(len(points)), key=lambda i: (dist[i], -i)))


def dominates(a, b, sense: str) -> bool:
    """Whether point a dominates point b (payload larger is better; measure by ``sense``)."""
    better_m = a.measure >= b.measure if sense == "min" else a.measure <= b.measure
    strict = a.payload > b.payload or (
        a.measure > b.measure if sense == "min" else a.measure < b.measure
    )
    return a.payload >= b.payload and better_m and strict
