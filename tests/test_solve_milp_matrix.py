"""The hand-over's matrix-form MILP (solve/milp_matrix.py) against exhaustive enumeration and
against the Pyomo model of the same relaxation (solve/pyomo_backend.py).

Instances: the bundled quadruped with one payload case per foot, its leg joints shared across
the legs, a random small catalog and a random mass or cost budget (tests/
test_solve_component_bound.py builds them). With payload cases and a budget only, the MILP models
every requirement exactly, so its optimum is the enumerated one within HiGHS's relative gap of
1e-4, and its bound is never below the enumerated optimum.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from test_solve_component_bound import _enumerate, _instance

from jointwright.sizing import build_model
from jointwright.solve.result import OPTIMALITY_GAP as MILP_GAP
from jointwright.solve.milp_matrix import solve_matrix_milp
from jointwright.solve.pyomo_backend import solve_pyomo


def _model(seed, cost):
    project, table = _instance(seed, cost)
    model, _ = build_model(project, "payload", {}, [], project.objective["shared"])
    return project, table, model


@pytest.mark.parametrize(
    "seed, cost", [(3, False), (4, False), (5, True), (6, False), (7, False), (8, True), (9, True)]
)
def test_matrix_milp_finds_the_enumerated_optimum(seed, cost, capfd):
    project, table, model = _model(seed, cost)
    key = _enumerate(project, table)
    out = solve_matrix_milp(model)
    assert capfd.readouterr().out == ""  # HiGHS's banner and log stay off stdout (--json)
    if key is None or key[0] <= 0:  # no design carries a positive payload: the MILP says so
        assert out.status == "infeasible" and out.index is None
        return
    f_star = key[0]
    assert out.status == "optimal"
    assert out.bound >= f_star - 1e-9 * max(1.0, abs(f_star))  # a valid bound
    assert out.objective == pytest.approx(f_star, rel=MILP_GAP, abs=1e-9)
    assert out.objective <= f_star + 1e-9 * max(1.0, abs(f_star))
    # the shared joints take one option
    for g in model.shared:
        assert len(set(out.index[list(g)].tolist())) == 1


@pytest.mark.parametrize("seed, cost", [(3, False), (8, True)])
def test_matrix_milp_agrees_with_the_pyomo_model(seed, cost):
    """The two builds of one relaxation reach one optimum (within the MIP gap) and bound."""
    _, _, model = _model(seed, cost)
    a = solve_matrix_milp(model)
    b = solve_pyomo(model, None)
    assert a.status == b.status
    if a.index is not None:
        assert a.objective == pytest.approx(b.objective, rel=MILP_GAP)


def test_matrix_milp_starts_from_a_given_design():
    """A start design is taken as HiGHS's first incumbent: the answer is never worse than it."""
    project, table, model = _model(4, False)
    key = _enumerate(project, table)
    assert key is not None
    out = solve_matrix_milp(model, start=np.asarray(key[3]))
    assert out.objective >= key[0] * (1 - MILP_GAP)
    assert math.isfinite(out.bound)


@pytest.mark.parametrize("seed, cost", [(4, False), (7, False), (9, True)])
def test_root_candidates_keep_every_design_at_least_the_incumbent(seed, cost):
    """The options the hand-over passes to HiGHS (the search's root cuts with an incumbent)
    hold every design that beats the incumbent (a greater payload, or a tie with less mass:
    the tie-break): checked over every enumerated design, with the optimum and with a weaker
    feasible design as the incumbent."""
    from jointwright.sizing import units_of
    from jointwright.solve.enumerate import combinations
    from jointwright.solve.search import BranchAndBound

    project, table, model = _model(seed, cost)
    groups = [list(g) for g in model.shared]
    per_group = [functools.reduce(np.intersect1d, [model.candidates[j] for j in g]) for g in groups]
    combos = combinations(per_group, 0, int(np.prod([o.size for o in per_group])))
    rows = np.empty((combos.shape[0], model.n), dtype=np.int64)
    for k, g in enumerate(groups):
        rows[:, g] = combos[:, [k]]
    s = model.score(rows)
    value = np.where(s.feasible, s.objective, -np.inf)
    order = np.argsort(-value)
    good = [int(r) for r in order if np.isfinite(value[r]) and value[r] > 0]
    assert len(good) >= 2
    units = units_of(model.n, model.shared)
    for r in (good[0], good[len(good) // 2]):
        incumbent = model.key(s, r)
        # a gap must not cut the root: the MILP bound has to cover the designs within it
        kept = BranchAndBound(model, units, incumbent=incumbent, gap=0.05).root_candidates()
        reach = value >= incumbent[0] - 1e-9 * max(1.0, abs(incumbent[0]))
        beats = [d for d in np.flatnonzero(reach) if model.better(model.key(s, d), incumbent)]
        assert r == good[0] or beats  # a weaker incumbent leaves designs that beat it
        for d in [*beats, r]:
            assert all(rows[d, j] in kept[j] for j in range(model.n))


@pytest.mark.parametrize(
    "seed, cost, squeeze", [(5, True, False), (7, False, False), (7, False, True)]
)
def test_size_through_the_hand_over_matches_enumeration(seed, cost, squeeze):
    """`size` with the hand-over (root cuts, MILP, then the search) reaches the enumerated
    optimum, also when no design carries a positive payload and when the budget fits no design
    at all (no incumbent for the root cuts)."""
    import dataclasses

    from jointwright.project import Requirements
    from jointwright.sizing import size

    project, table, model = _model(seed, cost)
    if squeeze:  # below the lightest design: nothing fits
        light = float(model.n * table.rows["mass"].min())
        project = dataclasses.replace(
            project, requirements=Requirements(total_mass_max=0.5 * light)
        )
    key = _enumerate(project, table)
    res = size(project, explain=False)
    if key is None:
        assert res.status == "infeasible" and res.design is None
        return
    assert res.status == "optimal" and res.assessment.feasible
    assert res.objective == pytest.approx(key[0], rel=MILP_GAP, abs=1e-9)
    assert res.bound >= key[0] - 1e-9 * max(1.0, abs(key[0]))  # the bound holds


@pytest.mark.parametrize("seed, cost", [(4, False), (9, True)])
def test_a_proven_upper_bound_keeps_the_optimum_and_caps_the_bound(seed, cost):
    """The payload column's upper bound (the search's root bound in the hand-over) cuts off no
    design: with the enumerated optimum itself as the bound, HiGHS still reaches it, and its
    bound is then the optimum."""
    project, table, model = _model(seed, cost)
    key = _enumerate(project, table)
    f_star = key[0]
    out = solve_matrix_milp(model, upper=f_star)
    assert out.status == "optimal"
    assert out.objective == pytest.approx(f_star, rel=MILP_GAP)
    assert f_star - 1e-9 <= out.bound <= f_star * (1 + 1e-9)
