"""Payload versus back-drivability: the Pareto frontier, complete and proven.

Three exact methods (docs/frontier.md, "Choosing the method"):

* ``branch-and-bound`` (the default below 10 M candidate designs): a bi-objective branch and
  bound over joints (:mod:`jointwright.solve.biobjective`) that cuts a partial design when its
  bound box is dominated by the front found so far; complete and proven; a run stopped by the
  time limit returns the proven part of the front and the region still unexplored.
* ``exhaustive``: every candidate combination scored (:mod:`jointwright.solve.pareto`).
* ``sweep`` (the default from 10 M candidate designs on): exact ε-constraint solves
  (:mod:`jointwright.frontier_sweep`): each point is the largest payload with the chosen
  measure of one case turned into a constraint (``imf`` ≥ ε, ``effective_mass`` ≤ ε or
  ``backdrive_force`` ≤ ε; every other requirement of the project stays), then the best measure
  among the designs that carry it. Both ends of the front first, then the gaps between points,
  widest first; over the discrete options it yields every non-dominated (payload, measure)
  pair. When stopped early (``points`` or the time limit) ``complete`` says so, the points
  found are proven (a point whose second solve was stopped is marked not proven) and
  ``unexplored`` names the region left.

Near-duplicate neighbours may be merged for display (``merge``, a fraction of each axis's span).
"""

from __future__ import annotations

import math
import sys
import time

from .errors import InputError, unknown_name
from .frontier_methods import (  # noqa: F401  (the public names of jointwright.frontier)
    SEED_MIN,
    _bnb,
    _exhaustive,
    _measure,
    _solve,
    free_model,
    objective_kind,
    with_limit,
    with_payload_floor,
)
from .frontier_result import (  # noqa: F401
    MEASURES,
    MEASURES_NAME,
    Frontier,
    FrontierPoint,
    _finish,
    _points,
    dominates,
    knee,
)
from .frontier_sweep import STEP, _sweep  # noqa: F401


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
        raise InputError(str(project.file), "case", f"measure {measure} needs {_a(kind)} case")
    try:
        c = project.case(case)
    except KeyError:
        raise unknown_name("<api>", "case", case, [c.name for c in project.cases], "case") from None
    if c.kind != kind:
        raise InputError(
            "<api>", "case", f"measure {measure} needs {_a(kind)} case; {case!r} is {c.kind}"
        )
    return c


def _a(word: str) -> str:
    """The indefinite article with ``word`` ("an impact", "a backdrive")."""
    return f"{'an' if word[:1] in 'aeiou' else 'a'} {word}"


#: most candidate combinations the exhaustive method scores (with stance or duty-cycle cases
#: every feasible one is kept until its costly check: memory grows with the count)
EXHAUSTIVE_MAX = 20_000_000


#: the sweep's most solves when neither ``points`` nor a time limit bounds it
DEFAULT_SOLVES = 50


def frontier(
    project,
    measure: str = "imf",
    *,
    case: str | None = None,
    points: int | None = None,
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
    points : most sizing solves of the sweep (the frontier is marked incomplete when it is
        reached); None: no cap when ``time_limit`` bounds the run, else :data:`DEFAULT_SOLVES`
    time_limit : s for the whole sweep
    backend : passed to :func:`jointwright.sizing.size` (sweep)
    method : "branch-and-bound" (bi-objective branch and bound: complete and proven; past the
        time limit the proven part and the region still unexplored), "exhaustive" (score every
        candidate combination: complete and proven), "sweep" (exact ε-constraint solves) or
        "auto" (the branch and bound below 10 M candidate designs, the sweep from there on;
        docs/frontier.md, "Choosing the method")
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
    if points is None:
        points = DEFAULT_SOLVES if time_limit is None else sys.maxsize
    if isinstance(points, bool) or not isinstance(points, int) or points < 1:
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
    model = None  # the branch and bound's root model, when "auto" has built it
    if method == "auto":
        method, model = auto_method(project, name, key, table, deadline)
    if method == "branch-and-bound":
        front = _bnb(project, name, key, metric, sense, deadline, start, table, model)
        return _finish(project, front, merge)
    if method == "exhaustive":
        out = _exhaustive(project, name, key, metric, sense, deadline, start, EXHAUSTIVE_MAX, table)
        if out is None:
            raise InputError(
                str(project.file),
                "method",
                f"exhaustive scores every candidate combination and this project has more than "
                f"{EXHAUSTIVE_MAX:,} of them; use method auto (the branch and bound or the "
                "sweep), which proves the same front",
            )
        return _finish(project, out, merge)
    return _finish(
        project,
        _sweep(
            project, name, key, metric, sense, points, deadline, start, time_limit, backend, table
        ),
        merge,
    )


def auto_method(project, case: str | None, key: str, table, deadline: float):
    """The method "auto" runs, and the root model when it is the branch and bound: the
    bi-objective branch and bound below :data:`~.frontier_methods.SEED_MIN` candidate designs
    (after the proven filters) or when stance cases bound the payload (their programs bound its
    boxes closely), the ε-constraint sweep otherwise, where each of its exact solves prunes with
    a single objective's bounds and the branch and bound's boxes stay open (measured:
    docs/benchmarks.md, "Frontier at scale"). The branch and bound when the filters do not
    finish in the time limit."""
    from .option_rows import OutOfTime
    from .sizing import units_of
    from .solve.pareto import count

    try:
        model = free_model(
            project, case, key, table, deadline=None if math.isinf(deadline) else deadline
        )
    except OutOfTime:  # the branch and bound states the region left from its root bound
        return "branch-and-bound", None
    if model.stance_bounded or count(model, units_of(model.n, model.shared)) < SEED_MIN:
        return "branch-and-bound", model
    return "sweep", None


#: the methods :func:`frontier` offers
METHODS = ("auto", "branch-and-bound", "exhaustive", "sweep")
