"""The least-mass tie-break among payload-optimal designs (docs/optimizer.md, item 4d) against
exhaustive enumeration (solve/enumerate.py, SizingModel.best_key over every combination).

The node mass bounds of item 4d (the free joints the unit loads, judged with each child's mass;
the per-limb least masses at the tie floor) cut children on the mass alone, so a wrong bound
shows up as a heavier design than the enumerated preferred one, with the same payload.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from test_solve_component_bound import _enumerate, _instance
from test_solve_search import example, oracle, set_limits, small_catalog

from jointwright.objective import read_objective
from jointwright.options import build_table
from jointwright.sizing import build_model, size, units_of
from jointwright.solve.search import BranchAndBound


def _check(res, objective, mass):
    assert res.status == "optimal" and res.assessment.feasible
    assert res.objective == pytest.approx(objective, rel=1e-9, abs=1e-9)
    # the preferred design among the ties: least total actuator mass (1e-9 relative)
    assert res.design.mass == pytest.approx(mass, rel=1e-9, abs=1e-12)


def _search_alone(project, objective, mass):
    """The branch and bound without a first design from the heuristics: the designs it meets
    first are often heavier ties, so the mass cuts decide whether it reaches the lightest."""
    cfg = read_objective(project)
    model, _ = build_model(project, "payload", {}, [], cfg["shared"])
    out = BranchAndBound(model, units_of(model.n, model.shared)).run()
    assert out.status == "optimal"
    assert out.objective == pytest.approx(objective, rel=1e-9, abs=1e-9)
    assert float(model.mass[np.asarray(out.index)].sum()) == pytest.approx(mass, rel=1e-9)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [7, 8, 10, 12])
def test_quadruped_tie_break_matches_enumeration(seed, monkeypatch):
    import jointwright.solve.handover as handover

    monkeypatch.setattr(handover, "milp_models", lambda model: False)
    project, table = _instance(seed, False)
    key = _enumerate(project, table)
    if key is None:
        pytest.skip("no feasible design under this budget")
    _check(size(project, explain=False, gap=0), key[0], key[1])
    _search_alone(project, key[0], key[1])


@pytest.mark.parametrize("seed", [2, 3, 5, 7, 9, 14])
def test_leg_tie_break_matches_enumeration(seed):
    leg = example("leg")
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, kinds=2, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    ref, model = oracle(project, "payload")
    assert ref.status == "optimal"  # seeds chosen with a feasible design: nothing is skipped
    mass = float(model.mass[np.asarray(ref.index)].sum())
    _check(size(project, objective="payload", explain=False, gap=0), ref.objective, mass)
    _search_alone(dataclasses.replace(project, objective={}), ref.objective, mass)


@pytest.mark.parametrize("seed", [2, 5, 9, 14])
def test_node_mass_bounds_hold_for_every_completion_reaching_the_floor(seed):
    """Every child's mass bound (BranchAndBound._mass_floor) is at most the mass of every
    completion whose payload objective reaches the floor, checked over all completions."""
    leg = example("leg")
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, kinds=2, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    project = set_limits(project, rng, build_table(project), keep_duty=False)
    model, _ = build_model(project, "payload", {}, [], [])
    bb = BranchAndBound(model, units_of(model.n, model.shared))
    order = [u[0] for u in bb.units]
    cands = model.candidates
    grid = np.stack(np.meshgrid(*cands, indexing="ij"), axis=-1).reshape(-1, model.n)
    scored = model.score(grid, full=False)
    f, m = scored.objective, model.mass[grid].sum(axis=1)
    checked = 0
    for floor in np.quantile(f[np.isfinite(f)], [0.5, 0.9, 1.0]):
        for depth in range(model.n):
            for row in grid[rng.choice(grid.shape[0], 3, replace=False)]:
                idx = np.full(model.n, -1, dtype=np.int64)
                idx[order[:depth]] = row[order[:depth]]
                unit = (order[depth],)
                opts = cands[unit[0]]
                bound = bb._mass_floor(idx, unit, opts, bb.st, float(floor), per_child=True)
                for k, o in enumerate(opts):
                    sel = np.all(grid[:, order[:depth]] == row[order[:depth]], axis=1)
                    sel &= (grid[:, unit[0]] == o) & (f >= floor)
                    if sel.any():
                        checked += 1
                        assert bound[k] <= m[sel].min() * (1 + 1e-12) + 1e-12
    assert checked > 0
