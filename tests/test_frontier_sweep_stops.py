"""The sweep's bookkeeping against the definition of Pareto optimality, with solves that stop.

The sweep (jointwright/frontier_sweep.py) is driven here by a stand-in for its exact solves over
a few invented designs, each only a (payload, measure) pair: a solve finds the true optimum of
its objective among the designs that meet its limit and payload floor, or, drawn at random, it
stops early and returns any design at least as good as its start with a bound no lower than the
optimum, as a search stopped by its time limit may; a payload solve may also end as soon as it
reaches the ``upper`` value it was given. Whatever stops, the result must hold to the
definition (a design is on the front when no other design is at least as good on both axes and
better on one; the brute-force set below):

* every point marked proven is on the front, points come largest payload first;
* a complete result holds exactly the front;
* a stopped one misses only points inside the region it reports (payload no larger, measure
  no better than ``unexplored``).

Measures where smaller is better include infinite values (a self-locking joint's back-drive
force or effective mass).
"""

from __future__ import annotations

import math
import random

import pytest

import jointwright.frontier_sweep as sweep
from jointwright.solve.model import tie_tol


class _Actuator:
    def __init__(self, i):
        self.i = i

    def label(self):
        return str(self.i)

    def __eq__(self, other):
        return self.i == other.i

    def __hash__(self):
        return self.i


class _Design:
    def __init__(self, i, payload, measure):
        self.i, self.payload, self.measure = i, payload, measure
        self.joints, self.actuators, self.mass = ("j",), (_Actuator(i),), 1.0


class _Solver:
    """Exact or stopped solves over ``designs`` (the sweep's ``_solve`` and friends)."""

    def __init__(self, designs, sense, rng, p_stop):
        self.designs, self.rng, self.p_stop = designs, rng, p_stop
        self.sign = 1.0 if sense == "min" else -1.0

    def with_limit(self, project, name, key, value):
        return {"limit": value}

    def objective_kind(self, metric, name):
        return "measure@case"

    def measure(self, project, design, name, metric):
        return design.measure

    def _meets(self, d, project, floor):
        v = project.get("limit")
        if v is not None and not (self.sign * d.measure >= self.sign * v):
            return False
        return floor is None or d.payload >= floor - 1e-9 * abs(floor) - 1e-12

    def solve(self, project, kind, floor, limit, upper, backend, table, start=None):
        ok = [d for d in self.designs if self._meets(d, project, floor)]
        first = None if start is None else self.designs[int(start)]
        first = first if first in ok else None
        value = (lambda d: d.payload) if kind == "payload" else (lambda d: self.sign * d.measure)
        stop = self.rng.random() < self.p_stop
        if not ok:
            return ("time_limit", None, None, None, math.inf) if stop else (
                "infeasible", None, None, None, -math.inf)  # fmt: skip
        best = max(value(d) for d in ok)
        if stop:  # any design at least as good as the start, a bound no lower than the optimum
            if first is None and self.rng.random() < 0.2:
                return "time_limit", None, None, None, best + self.rng.random()
            floor_value = value(first) if first is not None else -math.inf
            pick = self.rng.choice([d for d in ok if value(d) >= floor_value])
            return "time_limit", value(pick), pick, pick.i, best + self.rng.choice([0, 0.5, 3])
        if upper is not None and kind == "payload":  # may end once it reaches ``upper``
            reach = [d for d in ok if d.payload >= upper - tie_tol(upper)]
            if reach:
                d = self.rng.choice(reach)
                return "optimal", d.payload, d, d.i, d.payload
        d = self.rng.choice([d for d in ok if value(d) == best])
        return "optimal", value(d), d, d.i, best


def _front(designs, sign) -> set:
    """The non-dominated (payload, measure) pairs, by the definition."""
    pts = {(d.payload, d.measure) for d in designs}
    return {
        (p, m)
        for p, m in pts
        if not any(
            p2 >= p and sign * m2 >= sign * m and (p2 > p or sign * m2 > sign * m)
            for p2, m2 in pts
        )
    }


@pytest.mark.parametrize("p_stop", [0.0, 0.3, 0.7])
@pytest.mark.parametrize("sense", ["min", "max"])
def test_the_sweep_with_stopped_solves_keeps_to_the_pareto_definition(
    monkeypatch, sense, p_stop
):
    for seed in range(300):
        rng = random.Random(seed)
        n = rng.randint(1, 12)
        if sense == "min":  # an IMF: larger is better
            values = [0.1, 0.2, 0.3, 0.5, 0.7, 0.9, 1.0]
        else:  # an effective mass or back-drive force: smaller is better, may be infinite
            values = [float(k) for k in range(10)] + [math.inf]
        designs = [_Design(i, rng.randint(1, 10), rng.choice(values)) for i in range(n)]
        solver = _Solver(designs, sense, rng, p_stop)
        monkeypatch.setattr(sweep, "_solve", solver.solve)
        monkeypatch.setattr(sweep, "_measure", solver.measure)
        monkeypatch.setattr(sweep, "with_limit", solver.with_limit)
        monkeypatch.setattr(sweep, "objective_kind", solver.objective_kind)
        budget = rng.choice([10**6, rng.randint(1, 15)])
        metric = "imf" if sense == "min" else "effective_mass"
        f = sweep._sweep(
            {"limit": None}, "case", "key", metric, sense, budget, math.inf, 0.0, 1e9, "x", None
        )
        front, sign = _front(designs, solver.sign), solver.sign
        got = [(p.payload, p.measure) for p in f.points]
        where = f"seed {seed}: got {got}, front {sorted(front)}"
        assert all((p.payload, p.measure) in front for p in f.points if p.proven), where
        assert [p for p, _m in got] == sorted((p for p, _m in got), reverse=True), where
        if f.complete:
            assert set(got) == front, where
            continue
        for p, m in front - set(got):
            assert f.unexplored is not None, where
            pmax, bound = f.unexplored
            assert p <= pmax and sign * m <= sign * bound, where
