"""The per-component budget bound (docs/optimizer.md, item 4c) against exhaustive enumeration.

Instances: the bundled quadruped (floating base) with one payload case per foot (so the four legs
are four gravity-coupled components) and its three leg joints shared across the legs, so that
every design can be enumerated (options³); a random small catalog and a random mass or cost
budget. The bound ignores the sharing (a relaxation), so it must be at or above the enumerated
optimum at the root and along the optimal design's path through the search order; the search
using it must still find the enumerated optimum.
"""

from __future__ import annotations

import dataclasses
from importlib import resources

import numpy as np
import pytest
from test_solve_search import grouped_designs

from jointwright.catalog.model import Catalog
from jointwright.options import build_table
from jointwright.project import Case, Requirements, load_project
from jointwright.sizing import build_model, size
from jointwright.solve.component_bound import ComponentLevels, components, level_grid
from jointwright.solve.model import SizingModel

FEET = ("fl", "fr", "hl", "hr")


def _example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        return load_project(folder / "project.toml")


def _instance(seed: int, cost: bool):
    q = _example("quadruped")
    rng = np.random.default_rng(seed)
    motors = tuple(
        q.catalog.motors[i] for i in sorted(rng.choice(len(q.catalog.motors), 3, replace=False))
    )
    stages = []
    for s in q.catalog.stages[:2]:
        fr = (s.frames[int(rng.integers(len(s.frames)))],)
        ratios = s.ratios if s.ratios is not None else None
        if ratios is not None:
            ratios = tuple(sorted(float(r) for r in rng.choice(ratios, 2, replace=False)))
        stages.append(dataclasses.replace(s, frames=fr, ratios=ratios))
    pose = next(c.pose for c in q.cases if c.kind == "stance")
    cases = tuple(
        Case(f"{f}-push", "payload", f"{f}_foot", pose, direction=(-0.3, 0.0, -1.0), motion="along")
        for f in FEET
    )
    project = dataclasses.replace(
        q,
        catalog=Catalog(motors=motors, stages=tuple(stages), drives=q.catalog.drives),
        cases=cases,
        objective={"maximize": "payload", "shared": q.objective["shared"]},
        requirements=Requirements(),
        max_stages=1,
        stage_kinds=None,
    )
    table = build_table(project)
    per = table.rows["cost" if cost else "mass"]
    n = len(project.robot.actuated)
    budget = float(rng.uniform(n * per.min(), n * per.max()))
    req = Requirements(total_cost_max=budget) if cost else Requirements(total_mass_max=budget)
    return dataclasses.replace(project, requirements=req), table


def _enumerate(project, table):
    joints = list(project.robot.actuated)
    groups = [[joints.index(j) for j in g] for g in project.objective["shared"]]
    model = SizingModel(project, table, [np.arange(len(table))] * len(joints), "payload", groups)
    return model.best_key(grouped_designs(len(joints), groups, len(table)))


@pytest.mark.slow
@pytest.mark.parametrize("seed, cost", [(3, False), (4, False), (5, True), (6, False)])
def test_component_bound_is_never_below_the_enumerated_optimum(seed, cost):
    project, table = _instance(seed, cost)
    key = _enumerate(project, table)
    if key is None:
        pytest.skip("no feasible design under this budget")
    f_star = key[0]
    model, _ = build_model(project, "payload", {}, [], [])
    assert [c.size for c in components(model)] == [3, 3, 3, 3]
    st = model.stats(model.candidates)
    top = float(
        model.child_bounds(np.full(model.n, -1), (0,), model.candidates[0], st)["objective"].max()
    )
    grid = level_grid(min(0.0, f_star), max(top, f_star) * 1.01 + 1e-9, f_star)
    levels = ComponentLevels(model, model.candidates, grid)
    slack = 1e-9 * max(1.0, abs(f_star))
    assert levels.cap() >= f_star - slack
    # along the optimum's path (each joint on its own, in joint order) the child holding the
    # optimal option keeps a bound at or above the optimum
    best = np.array(key[3])
    idx = np.full(model.n, -1, dtype=np.int64)
    for j in range(model.n):
        b = levels.bound(idx, (j,), np.array([best[j]]), st)
        assert b[0] >= f_star - slack
        idx[j] = best[j]


@pytest.mark.slow
@pytest.mark.parametrize("seed, milp", [(7, False), (8, False), (7, True), (9, True)])
def test_search_with_component_bound_matches_enumeration(seed, milp, monkeypatch):
    """Without the MILP hand-over the branch and bound (with the per-limb bound) must find the
    enumerated optimum; with it (the instance suits it: payload objective, budget, 12 joints,
    payload cases only) the answer must be within the MILP's relative gap of 1e-4."""
    import jointwright.solve.handover as handover

    project, table = _instance(seed, False)
    model, _ = build_model(project, "payload", {}, [], project.objective["shared"])
    assert handover.milp_suits(model)
    if not milp:
        monkeypatch.setattr(handover, "milp_models", lambda model: False)
    key = _enumerate(project, table)
    res = size(project, explain=False, gap=0)
    if key is None:
        assert res.status == "infeasible"
        return
    assert res.status == "optimal" and res.assessment.feasible
    assert ("hand-over" in res.native_status) == milp
    tol = 1e-4 if milp else 1e-9
    assert res.objective == pytest.approx(key[0], rel=tol, abs=1e-9)
    assert res.objective <= key[0] + 1e-9 * max(1.0, abs(key[0]))
    assert res.gap <= tol


@pytest.mark.parametrize("seed", range(8))
def test_pareto_front_equals_the_pairwise_definition(seed):
    from jointwright.solve.component_bound import pareto_front

    rng = np.random.default_rng(seed)
    V = np.round(rng.normal(size=(int(rng.integers(1, 300)), int(rng.integers(1, 6)))), 1)
    if seed % 2:
        V[rng.random(V.shape[0]) < 0.2, 0] = -np.inf  # NaN bounds enter as −inf
    V = np.unique(V, axis=0)
    ge = np.all(V[None] >= V[:, None], axis=2)
    gt = np.any(V[None] > V[:, None], axis=2)
    assert np.array_equal(np.sort(pareto_front(V)), np.flatnonzero(~np.any(ge & gt, axis=1)))
