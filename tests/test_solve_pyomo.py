"""One contract for every back-end: on random small instances each must report the optimum that
exhaustive enumeration finds (solve/enumerate.py), and its design must pass re-evaluation by
the numpy physics. Instances as in test_solve_search.py (seeded catalog subsets of the bundled
leg example, requirement levels drawn from random designs)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from jointwright.errors import InputError
from jointwright.sizing import size
from test_solve_search import build_table, example, oracle, planar_arm, set_limits, small_catalog


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def instance(leg, seed):
    rng = np.random.default_rng(seed)
    project = dataclasses.replace(
        leg, catalog=small_catalog(leg.catalog, rng), max_stages=1, stage_kinds=None, objective={}
    )
    return set_limits(project, rng, build_table(project), keep_duty=bool(seed % 2))


@pytest.mark.parametrize("backend", ["search", "pyomo", "enumerate"])
@pytest.mark.parametrize("kind", ["payload", "mass"])
# seeds 0, 3 and 11 draw the largest instances (5 to 15 s each): they run with the slow tests
@pytest.mark.parametrize(
    "seed",
    [
        pytest.param(k, marks=pytest.mark.slow) if k in (0, 3, 11) else k
        for k in (0, 2, 3, 4, 11, 12)
    ],
)
def test_backends_match_enumeration(leg, backend, kind, seed):
    project = instance(leg, seed)
    ref, _ = oracle(project, kind)
    res = size(project, objective=kind, backend=backend, explain=False)
    if ref.status == "infeasible":
        assert res.status == "infeasible" and res.design is None
        return
    if backend == "pyomo" and kind == "payload" and ref.objective < 0:
        # documented (solve/pyomo_backend.py): the MILP's payload mass is ≥ 0, so an instance
        # whose best design carries a negative payload mass is reported infeasible
        assert res.status == "infeasible"
        return
    assert res.status == "optimal"
    sense = -1.0 if kind == "mass" else 1.0
    assert sense * res.objective == pytest.approx(ref.objective, rel=1e-9, abs=1e-9)
    assert res.assessment.feasible  # numpy re-evaluation of whatever the back-end returned
    assert res.gap == 0.0


def test_pyomo_rejects_the_imf_objective(leg):
    with pytest.raises(InputError, match="imf"):
        size(instance(leg, 0), objective="imf", backend="pyomo", explain=False)


def test_pyomo_on_a_planar_arm_with_effective_mass_cuts(leg):
    rng = np.random.default_rng(5)
    from jointwright.project import Case, Requirements

    robot = planar_arm(rng)
    pose = {"j0": 0.3, "j1": -0.6, "j2": 0.4}
    cases = (
        Case("lift", "payload", "tip", pose, direction=(0.0, 0.0, 1.0), limits={}),
        Case(
            "bump",
            "impact",
            "tip",
            pose,
            direction=(1.0, 0.0, 0.0),
            limits={"effective_mass_max": 1.0},
        ),
    )
    arm = example("arm")
    project = dataclasses.replace(
        arm,
        robot=robot,
        cases=cases,
        catalog=small_catalog(arm.catalog, rng),
        max_stages=1,
        stage_kinds=None,
        objective={},
        requirements=Requirements(),
    )
    project = set_limits(project, rng, build_table(project))
    ref, _ = oracle(project, "payload")
    res = size(project, backend="pyomo", explain=False)
    if ref.status == "infeasible":
        assert res.status == "infeasible"
    else:
        assert res.objective == pytest.approx(ref.objective, rel=1e-9)


@pytest.mark.parametrize("gap", [0.0, 0.02, 0.3])
@pytest.mark.parametrize("kind", ["payload", "mass"])
def test_pyomo_honours_the_optimality_gap(leg, gap, kind):
    """The Pyomo back-end ends within the relative gap asked for (docs/optimizer.md, "Ties and the
    optimality gap"): its design is within gap·|optimum| of the enumerated optimum, its bound
    holds for the optimum, and the gap it reports is at most the one asked for."""
    project = instance(leg, 10)
    ref, _ = oracle(project, kind)
    assert ref.status == "optimal"
    res = size(project, objective=kind, backend="pyomo", explain=False, gap=gap)
    assert res.status == "optimal"
    assert res.assessment.feasible
    sense = -1.0 if kind == "mass" else 1.0  # the oracle maximizes −mass
    value, bound = sense * res.objective, sense * res.bound
    slack = gap * abs(ref.objective) + 1e-9
    assert ref.objective - slack <= value <= ref.objective + 1e-9
    assert bound >= ref.objective - 1e-9
    assert res.gap <= gap + 1e-9
