"""The frontier's result: the measures it trades, its points and their display.

:class:`Frontier` and :class:`FrontierPoint` (docs/frontier.md, "Python API"), the points built
from (payload, measure, design) triples with the joints each changes, the turning point
(:func:`knee`), near-duplicate merging and each point's gear shock use.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

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


@dataclass(frozen=True)
class FrontierPoint:
    payload: float  # kg, the payload mass every payload and stance case carries
    measure: float  # the measure of the frontier's case
    design: object  # Design
    mass: float  # kg
    changes: tuple  # joints whose actuator differs from the previous point's
    #: (joint, previous point's actuator label, this point's) for each joint in ``changes``
    changed: tuple = ()
    #: False for the one design a stopped branch and bound returns when it has no proven point
    #: yet (the single-objective search's best design so far), and for a sweep's point whose
    #: least-measure solve was stopped (its payload is proven, a better measure at that
    #: payload may exist)
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
    #: a stopped branch and bound or sweep: every missing point has payload ≤ unexplored[0]
    #: (kg) and a measure no better than unexplored[1]; the points returned are proven unless
    #: marked otherwise. None otherwise
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
                        # "unknown": a stage with no momentary rating (NaN, not a use)
                        "shock_use": "unknown"
                        if p.shock_use is not None and math.isnan(p.shock_use)
                        else p.shock_use,
                        "actuators": {
                            j: a.label()
                            for j, a in zip(p.design.joints, p.design.actuators, strict=True)
                        },
                        "design_toml": design_to_toml(p.design),
                        # joints whose transmission self-locks: not back-drivable there
                        "self_locking": self_locking_joints(p.design),
                    }
                    for p in self.points
                ],
            }
        )


def self_locking_joints(design) -> list[str]:
    """The joints of ``design`` whose transmission self-locks (η_b ≤ 0): a push there does not
    back-drive the joint, whatever the point's back-drivability figure."""
    return [
        j
        for j, a in zip(design.joints, design.actuators, strict=True)
        if getattr(a, "self_locking", False)
    ]


def _finish(project, f: Frontier, merge: float) -> Frontier:
    """The front as returned: near-duplicates merged, each point's gear shock use added."""
    return _with_shock(project, _merged(f, merge))


def _with_shock(project, f: Frontier) -> Frontier:
    """Each point with its gear shock use at the project's impacts (the worst over the impact
    cases that state an impact speed and their joints): how back-drivability trades against gear
    survival at touchdown or collision (docs/frontier.md); NaN (unknown) when a stage states no
    momentary rating and no rated one is already unbounded. Unchanged when no case states an
    impact speed."""
    cases = [c.name for c in project.cases if c.kind == "impact" and c.impact_speed > 0]
    if not cases or not f.points:
        return f
    import numpy as np

    from .design import arrays_from_designs
    from .evaluate import Evaluator

    arrays = arrays_from_designs([p.design for p in f.points])
    ev = Evaluator(project).evaluate(arrays, detail=False)
    # per joint: NaN where a stage states no momentary rating (unknown), ∞ where the torque is
    # unbounded in the model (a stiffness not given, a self-locking stack)
    joint = np.concatenate([np.asarray(ev[c]["shock_use_joint"], dtype=float) for c in cases], 1)
    rated = np.where(np.isnan(joint), -np.inf, joint).max(axis=1)
    unknown = np.isnan(joint).any(axis=1)
    use = np.where(unknown & (rated < np.inf), np.nan, np.maximum(rated, 0.0))
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
    kept = _points([(q.payload, q.measure, q.design, q.proven) for q in keep], dedupe=False)
    return dataclasses.replace(
        f,
        points=kept,
        knee=knee(kept, f.sense),
        merged=len(pts) - len(kept),
        merge_tolerance=float(tol),
    )


def _points(found, dedupe: bool = True) -> tuple:
    """Frontier points from (payload, measure, design[, proven]) tuples, largest payload
    first; with ``dedupe`` a point whose successor ties its payload is dropped."""
    keep = [
        f
        for i, f in enumerate(found)
        if not dedupe or i + 1 == len(found) or found[i + 1][0] < f[0] - tie_tol(f[0])
    ]
    out, prev = [], None
    for payload, mu, d, *rest in keep:
        proven = bool(rest[0]) if rest else True
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
        out.append(FrontierPoint(payload, mu, d, d.mass, changes, changed, proven))
        prev = d
    return tuple(out)


def knee(points, sense: str) -> int | None:
    """The turning point of the trade-off: with both axes scaled to [0, 1], the point farthest
    from the chord between the two ends on the side of the ideal corner (most payload, best
    measure); None for fewer than three points or when no point lies on that side (a front
    that sags: no step trades better than the straight line between its ends)."""
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

    def side(x: float, y: float) -> float:
        return ((x1 - x0) * (y - y0) - (y1 - y0) * (x - x0)) / norm

    # the ideal corner: the largest payload, and the largest measure when larger is better
    # (sense "min": a lower limit, e.g. the IMF), else the smallest
    toward = math.copysign(1.0, side(1.0, 1.0 if sense == "min" else 0.0))
    dist = [toward * side(x, y) for x, y in zip(xs, ys, strict=True)]
    best = max(range(len(points)), key=lambda i: (dist[i], -i))
    return int(best) if dist[best] > 1e-12 else None


def dominates(a, b, sense: str) -> bool:
    """Whether point a dominates point b (payload larger is better; measure by ``sense``)."""
    better_m = a.measure >= b.measure if sense == "min" else a.measure <= b.measure
    strict = a.payload > b.payload or (
        a.measure > b.measure if sense == "min" else a.measure < b.measure
    )
    return a.payload >= b.payload and better_m and strict
