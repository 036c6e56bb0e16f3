"""The payload versus back-drivability front by exhaustive scoring: complete and proven.

Every combination of the candidates left after the per-joint filters and the root tightening
(both remove only options that miss a requirement in every completion, docs/optimizer.md) is
scored by the batched physics oracle. The static cases (payload, impact, back-drive, speed) give
each design its feasibility, its measure and an upper bound on its payload; the costly cases
(duty cycles, stance) are checked only for designs on the current front: a design that fails
them leaves, one whose stance payload is lower gets its true payload, and the front is computed
again until every design on it is fully checked. A design off the front is dominated by checked
designs even at its payload bound, so the front is exact over the discrete options.

Two designs with payloads within the tie tolerance and the same measure count as one point; the
lighter is kept (then the lower back-driven reflected inertia), as in sizing.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from ..problem import checks, feasible, objective
from .enumerate import combinations
from .model import SizingModel, tie_tol, unit_options

#: designs per oracle call
BATCH = 20_000


@dataclass(frozen=True)
class ParetoOutcome:
    """Front points (payload, measure, option index per joint), largest payload first."""

    points: tuple  # (payload N, measure, index (n,), mass kg)
    complete: bool  # every combination scored and every front design fully checked
    scored: int  # designs scored
    seconds: float


def units_options(model: SizingModel, units: list[tuple]) -> list[np.ndarray]:
    """Candidates of each decision unit: a shared group takes an option all its joints allow."""
    return [unit_options(model.candidates, unit) for unit in units]


def count(model: SizingModel, units: list[tuple]) -> int:
    """Number of designs the exhaustive front would score."""
    return math.prod(o.size for o in units_options(model, units))


def pareto_front(
    model: SizingModel,
    units: list[tuple],
    case: str | None,
    metric: str,
    sense: str,
    *,
    deadline: float = math.inf,
) -> ParetoOutcome:
    """Non-dominated (payload, measure) designs over every combination of the candidates.

    ``sense`` "min": a larger measure is better (IMF); "max": a smaller one is (effective mass,
    back-drive force, total mass or cost, ``case`` None for the last two). ``model`` must be
    built for the payload objective with the measure's own requirement removed. Past
    ``deadline`` (``time.perf_counter()`` value) the front of what was scored is returned with
    ``complete=False``.
    """
    start = time.perf_counter()
    opts = units_options(model, units)
    total = math.prod(o.size for o in opts)
    sign = 1.0 if sense == "min" else -1.0
    keep_p, keep_m, keep_i, keep_mass, keep_refl = [], [], [], [], []
    scored, complete = 0, True
    lazy = bool(model.duty or model.stance)
    for lo in range(0, total, BATCH):
        if time.perf_counter() > deadline:
            complete = False
            break
        unit_index = combinations(opts, lo, min(total, lo + BATCH))
        index = np.empty((unit_index.shape[0], model.n), dtype=np.int64)
        for k, unit in enumerate(units):
            index[:, list(unit)] = unit_index[:, [k]]
        arrays = model.table.arrays(index)
        ev = model.static_evaluator.evaluate(arrays, detail=False)
        ok = feasible(checks(model.static_project, arrays, ev), index.shape[0])
        payload = _payload(model, arrays, ev, index.shape[0])
        mu = sign * measure_values(arrays, ev, case, metric)
        ok &= np.isfinite(mu) & ~np.isnan(payload)
        scored += index.shape[0]
        if not ok.any():
            continue
        p, m, i = payload[ok], mu[ok], index[ok]
        mass = arrays.mass.sum(axis=1)[ok]
        refl = arrays.reflected_inertia("backdriven").sum(axis=1)[ok]
        # without costly cases every static value is final: a design dominated in its batch is
        # dominated for good; with them, a dominating design may still fail, so keep every row
        front = np.arange(p.size) if lazy else _front(p, m, mass, refl)
        keep_p.append(p[front])
        keep_m.append(m[front])
        keep_i.append(i[front])
        keep_mass.append(mass[front])
        keep_refl.append(refl[front])
    if not keep_p:
        return ParetoOutcome((), complete, scored, time.perf_counter() - start)
    p, m = np.concatenate(keep_p), np.concatenate(keep_m)
    idx, mass, refl = np.concatenate(keep_i), np.concatenate(keep_mass), np.concatenate(keep_refl)
    checked = np.zeros(p.size, dtype=bool)
    alive = np.ones(p.size, dtype=bool)
    while True:
        rows = np.flatnonzero(alive)
        front = rows[_front(p[rows], m[rows], mass[rows], refl[rows])]
        todo = front[~checked[front]]
        if not todo.size:
            break
        if time.perf_counter() > deadline:
            complete = False
            front = front[checked[front]]
            break
        full = model.score(idx[todo], full=True)
        checked[todo] = True
        alive[todo] = full.feasible
        # the full objective (stance payloads) can only be lower than the static bound
        p[todo] = np.where(full.feasible, np.minimum(p[todo], full.objective), p[todo])
    order = np.argsort(-p[front], kind="stable")
    pts = tuple(
        (float(p[k]), float(sign * m[k]), idx[k].copy(), float(mass[k])) for k in front[order]
    )
    return ParetoOutcome(pts, complete, scored, time.perf_counter() - start)


def measure_values(arrays, ev, case: str | None, metric: str) -> np.ndarray:
    """The frontier measure of each design: ``metric`` of ``case`` in the evaluation, or, for
    the robot-level measures (``case`` None), the total actuator mass (kg) or cost."""
    if metric == "mass":
        return np.asarray(arrays.mass.sum(axis=1), dtype=float)
    if metric == "cost":
        return np.asarray(arrays.cost.sum(axis=1), dtype=float)
    return np.asarray(ev[case][metric], dtype=float)


def _payload(model: SizingModel, arrays, ev, count: int) -> np.ndarray:
    """Payload objective of the static cases: exact without stance cases, else an upper bound."""
    if not any(c.kind == "payload" for c in model.static_project.cases):
        return np.full(count, np.inf)
    f = np.asarray(objective(model.static_project, arrays, ev, "payload"), dtype=float)
    return np.where(np.isnan(f), -np.inf, f)


def _front(p: np.ndarray, m: np.ndarray, mass: np.ndarray, refl: np.ndarray) -> np.ndarray:
    """Rows of the non-dominated set maximizing both p and m (ties: lighter, then lower inertia).

    Sorted by payload (largest first), then measure, mass and inertia, a row joins the front when
    its measure beats every row of larger or equal payload (running maximum). Neighbouring front
    rows whose payloads lie within the tie tolerance are then one point: the better measure stays.
    """
    if not p.size:
        return np.zeros(0, dtype=np.int64)
    order = np.lexsort((refl, mass, -m, -p))
    ms = m[order]
    before = np.maximum.accumulate(ms)[:-1]
    better = np.concatenate([[True], ms[1:] > before + 1e-12 * np.maximum(1.0, np.abs(before))])
    rows = order[better]
    out: list[int] = []
    for k in rows:  # the front is short: merge payload ties
        if out and abs(p[k] - p[out[-1]]) <= tie_tol(p[out[-1]]):
            out[-1] = int(k)  # same payload, better measure (rows come in rising measure)
        else:
            out.append(int(k))
    return np.asarray(out, dtype=np.int64)
