"""The ε-constraint sweep: exact single-objective solves that find the front from both ends.

Each front point takes two exact solves: the largest payload P with the measure at least ε
(``imf`` ≥ ε, ``effective_mass`` ≤ ε, …), then the best measure among the designs that carry
P (the lexicographic second stage), so the point is non-dominated. The order (docs/frontier.md,
"The sweep"):

1. the strongest end: the largest payload with the measure free, then its best measure;
2. the most back-drivable end: the best measure with every other requirement kept (its proven
   bound closes the region beyond it), then the largest payload at that measure;
3. the gaps between neighbouring points, widest first. A wide gap is split at the middle of its
   measure range, so a stopped run still shows the shape of the trade-off; a narrow one is
   closed by a step of :data:`STEP` past its stronger point, as a plain sweep walks.

Measures are compared as a *goodness* g (the measure for "larger is better", its negative
otherwise). A gap between points A (stronger) and B holds the open measure range (g_A, h) with
h ≤ g_B: every front point still missing there has g_A < g < h and P_B < P < P_A. A solve at ε in
(g_A, h) returns the largest payload P* with g ≥ ε:

* P* = P_B (B, or a tie of it): no front point has its g in [ε, h), so h becomes ε; a step
  solve (ε = g_A + step) so closes the gap, which also proves A non-dominated;
* else a new point C (P_B < P* < P_A, g_C ≥ ε after the second stage): the gap splits into
  (g_A, ε) and (g_C, h).

Every point found is a non-dominated design unless marked not proven (its second stage was
stopped, or, at the most back-drivable end, its payload solve); a stopped run reports the open
gaps as the region not yet searched. tests/test_frontier_sweep_stops.py holds the bookkeeping to
the definition of Pareto optimality with solves that stop at random.
"""

from __future__ import annotations

import math
import sys
import time
from dataclasses import dataclass

from .frontier_methods import _measure, _solve, objective_kind, with_limit
from .frontier_result import MEASURES_NAME, Frontier, _points, knee
from .solve.model import tie_tol

#: relative step by which a step solve asks a better measure than the gap's stronger point
STEP = 1e-7

#: a gap is split at its middle while both its payload drop and its measure range exceed this
#: fraction of the front's span (else it is closed by step solves)
SPLIT_MIN = 0.1

#: the measure no missing point can beat before the most back-drivable end is solved (an IMF
#: is at most 1; an effective mass, a back-drive force, a mass or a cost at least 0)
TRIVIAL_BOUND = {"imf": 1.0}

#: shares of the time left given to the solves whose result is a point's measure (the second
#: stages and the most back-drivable end's measure): a stopped one still returns a design, so
#: the run goes on to the rest of the front
SECOND_STAGE_SHARE = 0.25
END_SHARE = 0.25
#: a second stage also gets no more than its first stage took (at least this many seconds):
#: where the measure's bounds are loose its proof is cheaper as the next step solve, a payload
#: solve that finds a better design of the same payload or proves there is none
SECOND_STAGE_MIN = 1.0


@dataclass
class _Point:
    payload: float
    g: float  # goodness: larger is more back-drivable
    design: object
    index: object  # option index per joint (a start for later solves)
    proven: bool  # non-dominated: no design carries as much with a better measure
    #: the payload is the largest among the designs whose measure reaches the solve's ε (False:
    #: that solve was stopped)
    payload_proven: bool = True


@dataclass
class _Gap:
    left: _Point
    right: _Point | None  # None: beyond the most back-drivable point found
    high: float  # the open measure range is (left.g, high), in goodness
    split: bool = True  # False once a split solve returned the right point


def _sweep(
    project, name, key, metric, sense, points, deadline, start, time_limit, backend, table
) -> Frontier:
    """The sweep (module docstring): a :class:`Frontier`; when stopped, the points found (each
    proven unless its second stage was stopped) and the region left."""
    sign = 1.0 if sense == "min" else -1.0  # goodness = sign · measure

    def limit_at(g: float):
        return with_limit(project, name, key, sign * g)

    def share(fraction: float = 1.0):
        if time_limit is None:
            return None
        return max(fraction * (deadline - time.perf_counter()), 1e-3)

    def out_of_time() -> bool:
        return time.perf_counter() >= deadline

    run = _Run(points)
    found: list[_Point] = []
    top = math.inf  # the largest payload of any design, once proven
    project = with_limit(project, name, key, None)  # the measure is free at both ends

    def result(complete: bool, gaps: list[_Gap], payload_bound: float = math.inf) -> Frontier:
        pts = _points([(p.payload, sign * p.g, p.design, p.proven) for p in found])
        unexplored = None if complete else _region(gaps, sign, metric, payload_bound, top)
        return Frontier(
            MEASURES_NAME[metric],
            name,
            sense,
            pts,
            complete,
            knee(pts, sense),
            time.perf_counter() - start,
            run.solves,
            unexplored=unexplored,
        )

    # 1. the strongest end
    if out_of_time():
        return result(False, [])
    status, payload, design, first, bound = run.solve(
        project, "payload", None, share(), None, backend, table
    )
    if status == "infeasible":
        return result(True, [])
    if status != "optimal":
        if design is not None:
            # stopped before the first proof: the best design found is still a feasible point
            # the architect can start from (marked not proven); every point has P ≤ bound
            mu = _measure(project, design, name, metric)
            found.append(_Point(payload, sign * mu, design, first, False))
        return result(False, [], bound)
    top = payload  # proven: no design carries more
    strong = run.second_stage(project, name, metric, payload, first, design, share, sign, table)
    found.append(strong)
    gaps = [_Gap(strong, None, sign * TRIVIAL_BOUND.get(metric, 0.0))]

    # 2. the most back-drivable end: the best measure (started from the strongest design),
    # then the largest payload among the designs that reach it
    if run.left() and not out_of_time():
        gaps = _far_end(
            run, project, name, key, metric, sign, strong, gaps[0].high, share, backend, table
        )
        found[:] = _ends(gaps)
        gaps = _open(gaps)

    # 3. the gaps, widest first (the one beyond the last point only when no other is open)
    while gaps and run.left() and not out_of_time():
        gap = _widest(gaps, found)
        split = gap.split and gap.right is not None and _wide(gap, found)
        eps = 0.5 * (gap.left.g + gap.high) if split else _above(gap.left.g)
        start_index = None if gap.right is None else gap.right.index
        # the left point's payload bounds every design past its measure when it is proven;
        # else (a stopped payload solve at the far end) the strongest payload does
        upper = gap.left.payload if gap.left.payload_proven else top
        status, payload, design, first, _b = run.solve(
            limit_at(eps), "payload", None, share(), upper, backend, table, start_index
        )
        if status == "infeasible" or (
            status == "optimal"
            and gap.right is not None
            and payload <= gap.right.payload + tie_tol(gap.right.payload)
        ):
            # nothing in [ε, high) carries more than the right point: the range shrinks to
            # (left, ε); a step solve so closes the gap, which proves the left point
            gap.high = eps
            gap.split = False
            gaps = _open(gaps)
            continue
        if status != "optimal":
            break  # the time limit: the gap stays open
        point = run.second_stage(
            limit_at(eps), name, metric, payload, first, design, share, sign, table
        )
        gaps.remove(gap)
        if point.payload >= gap.left.payload - tie_tol(gap.left.payload):
            # the left point's second stage had stopped: this design carries as much with a
            # better measure, so it takes the left point's place
            found[found.index(gap.left)] = point
            for other in gaps:
                if other.right is gap.left:
                    other.right = point
        else:
            found.insert(found.index(gap.left) + 1, point)
            gaps.append(_Gap(gap.left, point, eps, gap.split))
        if gap.right is not None and point.g >= gap.right.g - _step(gap.right.g):
            # the right point's payload solve had stopped (a proven one carries the most of
            # any design this back-drivable): this design carries more with a measure at least
            # as good, so it takes the right point's place
            found.remove(gap.right)
            for other in gaps:
                if other.left is gap.right:
                    other.left = point
        else:
            gaps.append(_Gap(point, gap.right, gap.high, gap.split))
        gaps = _open(gaps)
    return result(not gaps, gaps)


def _far_end(run, project, name, key, metric, sign, strong, high, share, backend, table) -> list:
    """The gaps after the most back-drivable end is solved: its best measure (a proven bound
    on every design's, which closes the region beyond when the solve finishes), then the
    largest payload at that measure (a point, proven when both solves finished)."""
    status, _value, best, best_index, bound = run.solve(
        project,
        objective_kind(metric, name),
        None,
        share(END_SHARE),
        None,
        "search",
        table,
        start=strong.index,
    )
    proven = status == "optimal"
    if math.isfinite(bound):  # the search maximizes the goodness: its bound is one on g
        high = min(high, bound)
    if best is None:
        return [_Gap(strong, None, high)]
    g_end = sign * _measure(project, best, name, metric)
    if proven:
        high = g_end
    if g_end <= _above(strong.g) or not run.left():
        return [_Gap(strong, None, high)]
    status, payload, design, index, _b = run.solve(
        with_limit(project, name, key, sign * (g_end - _slack(g_end))),
        "payload",
        None,
        share(0.5),
        strong.payload,
        backend,
        table,
        best_index,
    )
    if design is None:  # stopped before its first design: the region stays open
        return [_Gap(strong, None, high)]
    g = max(g_end, sign * _measure(project, design, name, metric))
    done = status == "optimal"
    far = _Point(payload, g, design, index, proven and done, payload_proven=done)
    if payload >= strong.payload - tie_tol(strong.payload):
        # the strongest design is also the most back-drivable: one point; it carries the
        # strongest payload, proven by the first solve, even when this solve stopped
        far.payload_proven, far.proven = True, proven
        return [_Gap(far, None, high)]
    # a stopped payload solve leaves the far point's own measure open too (a design as
    # back-drivable may carry more); beyond the far point: closed when the best measure is
    # proven (high = its g)
    inner = far.g if done else _above(_above(far.g))
    return [_Gap(strong, far, inner), _Gap(far, None, high)]


def _ends(gaps: list[_Gap]) -> list[_Point]:
    """The points the gaps join, from the strongest."""
    pts = {id(q): q for gp in gaps for q in (gp.left, gp.right) if q is not None}
    return sorted(pts.values(), key=lambda q: q.g)


class _Run:
    """The solves of one sweep, counted against its budget of ``points`` solves."""

    def __init__(self, points: int):
        self.points = points
        self.solves = 0
        self.last_seconds = 0.0  # wall time of the last solve

    def left(self) -> bool:
        return self.solves < self.points

    def solve(self, project, kind, floor, limit, upper, backend, table, start=None):
        self.solves += 1
        t0 = time.perf_counter()
        out = _solve(project, kind, floor, limit, upper, backend, table, start=start)
        self.last_seconds = time.perf_counter() - t0
        return out

    def second_stage(self, project, name, metric, payload, first, design, share, sign, table):
        """The best measure among the designs of ``project`` that carry ``payload``, started
        from ``first`` (the design that carries it): a point, proven when the solve finished
        (a stopped one keeps the best design it found, never worse than ``first``)."""
        proven = False
        if self.left():
            limit = share(SECOND_STAGE_SHARE)
            if limit is not None:
                limit = min(limit, max(SECOND_STAGE_MIN, self.last_seconds))
            status, _v, best, index, _b = self.solve(
                project,
                objective_kind(metric, name),
                payload,
                limit,
                None,
                "search",
                table,
                start=first,
            )
            proven = status == "optimal"
            if best is not None:
                design, first = best, index
        g = sign * _measure(project, design, name, metric)
        return _Point(payload, g, design, first, proven)


def _step(g: float) -> float:
    return STEP * max(abs(g), 1e-12) if math.isfinite(g) else 0.0


def _above(g: float) -> float:
    """The least goodness a step past ``g`` asks for: ``g`` improved by :data:`STEP`; past an
    infinite measure (a self-locking or immovable joint: g = −inf), any finite one."""
    return g + _step(g) if math.isfinite(g) else -sys.float_info.max


def _slack(g: float) -> float:
    """A design's own measure as a limit, eased by rounding: it must stay feasible."""
    return 1e-12 * max(abs(g), 1.0)


def _closed(gap: _Gap) -> bool:
    return gap.high <= _above(gap.left.g)


def _open(gaps: list[_Gap]) -> list[_Gap]:
    """The gaps still open. A closed gap proves its left point non-dominated when that point's
    payload is proven: no design with a better measure carries as much (module docstring)."""
    for gp in gaps:
        if _closed(gp):
            gp.left.proven = gp.left.proven or gp.left.payload_proven
    return [gp for gp in gaps if not _closed(gp)]


def _spans(found: list[_Point]) -> tuple[float, float]:
    """The front's spans in payload and goodness, over its finite values (1 when none)."""
    p = [q.payload for q in found if math.isfinite(q.payload)]
    g = [q.g for q in found if math.isfinite(q.g)]
    span_p = (max(p) - min(p)) if len(p) > 1 else 0.0
    span_g = (max(g) - min(g)) if len(g) > 1 else 0.0
    return span_p or 1.0, span_g or 1.0


def _wide(gap: _Gap, found: list[_Point]) -> bool:
    assert gap.right is not None
    if not (math.isfinite(gap.left.g) and math.isfinite(gap.high)):
        return False  # no middle to split at: a step asks for any finite measure first
    span_p, span_g = _spans(found)
    return (gap.left.payload - gap.right.payload) > SPLIT_MIN * span_p and (
        gap.high - gap.left.g
    ) > SPLIT_MIN * span_g


def _widest(gaps: list[_Gap], found: list[_Point]) -> _Gap:
    """The gap to search next: the widest between two points (the larger of its payload drop
    and its measure range, each over the front's span), the one beyond the last point when no
    other is open."""
    inner = [gp for gp in gaps if gp.right is not None]
    if not inner:
        return gaps[0]
    span_p, span_g = _spans(found)

    def width(gp: _Gap) -> float:
        assert gp.right is not None
        wide_g = (gp.high - gp.left.g) / span_g
        return max((gp.left.payload - gp.right.payload) / span_p, wide_g if wide_g == wide_g else 0)

    return max(inner, key=width)


def _region(gaps, sign: float, metric: str, payload_bound: float, top: float) -> tuple | None:
    """(payload bound, measure bound) of the region a stopped sweep left: every missing point
    has a payload no larger and a measure no better (the corner of the open gaps' boxes; a gap
    whose stronger point's payload is not proven takes the strongest payload ``top``); None
    when nothing bounds it (stopped before its first solve ended)."""
    if not gaps:  # stopped in the first solve: its proven payload bound, any measure
        if not math.isfinite(payload_bound):
            return None
        return (float(payload_bound), TRIVIAL_BOUND.get(metric, 0.0))
    payload = max(gp.left.payload if gp.left.payload_proven else top for gp in gaps)
    high = max(gp.high for gp in gaps)
    return (payload, sign * high)
