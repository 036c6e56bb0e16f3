"""Payload against total actuator mass and total cost: the same bi-objective branch and bound
(and the exhaustive and ε-constraint methods) give the brute-force non-dominated set.

Reference: the Pareto (non-dominated) set of a finite set of (payload, total) pairs (the
definition of Pareto optimality, e.g. Ehrgott, *Multicriteria Optimization*, 2nd ed., 2005,
def. 2.1), computed by brute force over every design of seeded random small instances
(tests/test_frontier.py's ``brute_front``: every design scored by the evaluator with no filter,
the totals summed over the joints in the test). Mass and cost are sums of per-joint values, so
the bound of a partial design is the exact sum of the assigned values and the free joints'
least ones [trade].
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from test_frontier import brute_front, check_front
from test_frontier_branch_and_bound import random_instance, same_front
from test_solve_search import example

from jointwright.errors import InputError
from jointwright.frontier import frontier, with_limit
from jointwright.options import build_table
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve.biobjective import BiObjectiveSearch
from jointwright.solve.model import unit_options


@pytest.fixture(scope="module")
def leg():
    return example("leg")


@pytest.mark.parametrize("seed", [3, 11, 29, 47, 71, 97])
@pytest.mark.parametrize("measure", ["mass", "cost"])
def test_mass_and_cost_fronts_equal_brute_force(leg, seed, measure):
    # seeded random small instances, a duty case kept on odd seeds (the costly check at the
    # leaves); the project's own mass/cost budget is removed, as for every measure
    p = random_instance(leg, seed, keep_duty=bool(seed % 2))
    ref = brute_front(p, measure, None)
    for method in ("branch-and-bound", "exhaustive"):
        f = frontier(p, measure, method=method)
        assert f.method == method and f.complete and f.case is None and f.sense == "max"
        check_front(p, f)
        same_front([(pt.payload, pt.measure) for pt in f.points], ref)
        for pt in f.points:  # the measure is the design's own total
            want = pt.design.mass if measure == "mass" else pt.design.cost
            assert pt.measure == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("seed", [3, 29])
def test_mass_front_by_the_sweep_equals_brute_force(leg, seed):
    # the ε-constraint sweep: the total-mass requirement as the constraint, the search's own
    # mass objective as the second stage
    p = random_instance(leg, seed, keep_duty=False)
    f = frontier(p, "mass", method="sweep", points=200)
    assert f.complete
    same_front([(pt.payload, pt.measure) for pt in f.points], brute_front(p, "mass", None))


def test_mass_bound_of_a_partial_design_is_the_sum_of_least_values(leg):
    # the measure bound of every child box is at most the total of every completion (it never
    # cuts a point) and equals the total once every joint is assigned
    p = random_instance(leg, 11, keep_duty=False)
    cfg = read_objective(p)
    free = with_limit(p, None, "total_mass_max", None)
    model, _ = build_model(
        free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"], table=build_table(p)
    )
    units = units_of(model.n, model.shared)
    search = BiObjectiveSearch(model, units, None, "mass", "max")
    idx = np.full(model.n, -1, dtype=np.int64)
    for level, unit in enumerate(search.units):
        opts = unit_options(model.candidates, unit)
        got, _pay, bound = search._boxes(idx, unit, opts, level + 1 == len(search.units))
        least = sum(model.mass[model.candidates[j]].min() for j in range(model.n) if idx[j] < 0)
        if not got.size:
            return
        for o, b in zip(got, bound, strict=True):  # internal sign: −mass
            j0 = list(unit)
            assigned = model.mass[idx[idx >= 0]].sum()
            rest = least - sum(model.mass[model.candidates[j]].min() for j in j0)
            assert -b == pytest.approx(assigned + rest + len(j0) * model.mass[o], rel=1e-12)
        idx[list(unit)] = got[0]
    assert np.all(idx >= 0)


def test_mass_and_cost_take_no_case(leg):
    with pytest.raises(InputError, match="takes no case"):
        frontier(leg, "mass", case="touchdown")


def test_cli_mass_front_json_table_and_report(tmp_path):
    from click.testing import CliRunner

    from jointwright.cli import main
    from jointwright.report.frontier_map import frontier_from_sweep

    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "leg")]).exit_code == 0
    project = str(tmp_path / "leg" / "project.toml")
    r = runner.invoke(main, ["frontier", project, "--measure", "cost", "--json"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["measure"] == "cost" and data["case"] is None and data["complete"] is True
    costs = [q["measure"] for q in data["points"]]
    pays = [q["payload"] for q in data["points"]]
    assert len(costs) >= 2
    assert all(a > b for a, b in zip(pays, pays[1:], strict=False))  # payload falls...
    assert all(a > b for a, b in zip(costs, costs[1:], strict=False))  # ...as cost falls
    r = runner.invoke(main, ["frontier", project, "--measure", "mass"])
    assert r.exit_code == 0, r.output
    assert "payload versus total actuator mass (lower is lighter)" in r.output
    assert "at case" not in r.output
    r = runner.invoke(main, ["frontier", project, "--measure", "mass", "--case", "touchdown"])
    assert r.exit_code == 2 and "takes no case" in r.output
    # the report's frontier section: x axis without a case, the reported design at its total
    carry = {"name": "carry", "kind": "payload", "metrics": {"payload_carried": 5.0}}
    drawn = frontier_from_sweep(data, {"cases": [carry], "total_cost": 1234.0})
    assert drawn["x"] == {"label": "total actuator cost", "unit": "currency units"}
    assert drawn["chosen"] == {"x": 1234.0, "y": 5.0}
    assert len(drawn["points"]) == len(costs)
