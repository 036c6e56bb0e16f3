"""Measure bounds over the completions that reach a payload floor (solve/floor_bound.py) and
the branch and bound that waits a partial design down to the payload where it may still hold a
front point.

References: the Loewner-order monotonicity of the effective mass 1/(uᵀJH⁻¹Jᵀu) and of the
impact mitigation factor in the mass matrix H (Wensing et al., "Proprioceptive actuator design
in the MIT Cheetah", IEEE T-RO 2017, for the IMF; Khatib, "Inertial properties in robotic
manipulation", IJRR 1995, for the operational-space inertia; both citations [mem]) — checked
here by enumeration: every completion of seeded small instances is scored by the evaluator, and
the bound must hold for every one whose payload reaches the floor. The front is compared with
brute force as in tests/test_frontier_branch_and_bound.py (the definition of Pareto optimality).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from test_frontier import brute_front
from test_frontier_branch_and_bound import random_instance, same_front
from test_solve_search import example

from jointwright.frontier import MEASURES, with_limit
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve.biobjective import BiObjectiveSearch
from jointwright.solve.floor_bound import floor_bounds
from jointwright.solve.pareto import measure_values


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def _model(p, measure):
    _kind, key, metric, sense = MEASURES[measure]
    case = (
        None if measure in ("mass", "cost") else next(c.name for c in p.cases if c.kind == "impact")
    )
    free = with_limit(p, case, key, None)
    cfg = read_objective(free)
    model, _ = build_model(free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"])
    return model, case, metric, 1.0 if sense == "min" else -1.0


@pytest.mark.parametrize("seed", [3, 47, 71, 97])
@pytest.mark.parametrize("measure", ["effective_mass", "imf", "mass", "cost"])
def test_floor_bound_holds_for_every_completion_that_reaches_the_floor(leg, seed, measure):
    p = random_instance(leg, seed, keep_duty=False)
    model, case, metric, sign = _model(p, measure)
    grid = np.array(list(itertools.product(*model.candidates)), dtype=np.int64)
    scored = model.score(grid, full=False)
    arrays = model.table.arrays(grid)
    ev = model.static_evaluator.evaluate(arrays, detail=False)
    good = sign * np.asarray(measure_values(arrays, ev, case, metric), dtype=float)
    feasible = scored.feasible & np.isfinite(scored.objective)
    st = model.stats(model.candidates)
    rng = np.random.default_rng(seed)
    compared = 0
    for _trial in range(10):
        idx = np.full(model.n, -1, dtype=np.int64)
        for j in rng.choice(model.n, int(rng.integers(0, model.n)), replace=False):
            idx[j] = rng.choice(model.candidates[j])
        free = np.flatnonzero(idx < 0)
        if free.size == 0:
            continue
        unit = (int(rng.choice(free)),)
        options = model.candidates[unit[0]]
        rows = feasible & np.all((idx < 0) | (grid == idx), axis=1)
        pay = scored.objective[rows]
        if pay.size == 0:
            continue
        floors = np.concatenate([[0.0], np.quantile(pay, [0.3, 0.7, 1.0])])
        floors = np.sort(np.concatenate([floors, [float(pay.max()) * 1.01 + 1.0]]))[::-1]
        b = floor_bounds(model, metric, case, idx, unit, options, floors, st)
        assert b is not None and b.shape == (options.size, floors.size)
        for k, option in enumerate(options):
            mine = rows & (grid[:, unit[0]] == option)
            for f, bound in zip(floors, b[k], strict=True):
                reach = good[mine][scored.objective[mine] >= f]
                if bound == -np.inf:  # no completion reaches the floor
                    assert reach.size == 0
                    continue
                compared += reach.size
                assert np.all(reach <= bound + 1e-7 * max(1.0, abs(bound)))
    assert compared > 0


@pytest.mark.parametrize("seed", [3, 11, 29, 47, 71, 97, 5, 12])
@pytest.mark.parametrize("measure", ["effective_mass", "imf", "mass"])
def test_front_with_payload_floors_equals_brute_force(leg, seed, measure):
    # the search with its floors on (the default) and off gives the brute-force front, and the
    # floors move some partial design down the queue on these instances
    p = random_instance(leg, seed, keep_duty=bool(seed % 2))
    model, case, metric, _sign = _model(p, measure)
    sense = MEASURES[measure][3]
    units = units_of(model.n, model.shared)
    ref = brute_front(p, measure, case)
    on = BiObjectiveSearch(model, units, case, metric, sense)
    assert on.floors
    got_on = on.run()
    off = BiObjectiveSearch(model, units, case, metric, sense)
    off.floors = False
    got_off = off.run()
    assert got_on.complete and got_off.complete
    same_front([(q[0], q[1]) for q in got_on.points], ref)
    same_front([(q[0], q[1]) for q in got_off.points], ref)
    assert got_on.nodes <= got_off.nodes


def test_floors_move_some_partial_design_down_the_queue(leg):
    # the floors are exercised on these instances (not only switched on): some partial design
    # waits at a lower payload, and the front still equals brute force
    waits = 0
    for seed in (3, 47, 71):
        p = random_instance(leg, seed, keep_duty=False)
        model, case, metric, _sign = _model(p, "effective_mass")
        search = BiObjectiveSearch(
            model, units_of(model.n, model.shared), case, metric, MEASURES["effective_mass"][3]
        )
        got = search.run()
        same_front([(q[0], q[1]) for q in got.points], brute_front(p, "effective_mass", case))
        waits += search.floor_waits
    assert waits > 0
