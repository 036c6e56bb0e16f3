"""The frontier over stance (several-contact) cases: the second stage of a frontier point (the
best measure at the point's payload) must keep the payload on stance cases too, and the
exhaustive method must refuse what it cannot hold.

Reference: the payload-to-force law of a case, F = fixed_load + share·g_n·m (docs/metrics.md;
standard gravity g_n = 9.80665 m/s², CGPM 1901 [pub]).
"""

from __future__ import annotations

import pytest
from test_solve_stance_bound import _quadruped

from jointwright.cases import STANDARD_GRAVITY
from jointwright.errors import InputError
from jointwright.frontier import frontier, with_payload_floor


def test_payload_floor_binds_stance_cases_as_well_as_payload_cases():
    project = _quadruped(11)
    stance = [c for c in project.cases if c.kind == "stance"]
    assert stance, "the invented quadruped instance has stance cases"
    floored = with_payload_floor(project, 20.0)
    for before, after in zip(project.cases, floored.cases, strict=True):
        if before in stance and before.payload_share > 0:
            want = before.fixed_load + before.payload_share * STANDARD_GRAVITY * 20.0
            assert after.limits["payload_min"] == pytest.approx(want, rel=1e-8)


def test_exhaustive_refuses_a_front_too_large_to_score():
    # 12 joints with several options each: far more combinations than the exhaustive method
    # may hold; one clear message instead of exhausting the memory
    project = _quadruped(11)
    with pytest.raises(InputError, match="branch and bound") as err:
        frontier(project, "mass", method="exhaustive")
    assert err.value.field == "method"


def _small_quadruped(seed: int, budget_share: float):
    """The bundled quadruped (legs shared; stance, payload and impact cases) cut as in
    test_solve_stance_bound, every case limit removed, and a total-mass budget: 15 options per
    leg joint, 3,375 designs, small enough to score them all."""
    import dataclasses

    import numpy as np

    from jointwright.options import build_table
    from jointwright.project import Requirements, load_example

    shared = load_example("quadruped").objective["shared"]
    p = _quadruped(seed, shared=shared, kinds=None)
    mass = build_table(p).rows["mass"]
    budget = float(4 * (mass.min() + mass.max()) + 4 * np.median(mass)) * budget_share
    return dataclasses.replace(p, requirements=Requirements(total_mass_max=budget))


def _brute_front(p, measure: str, case):
    """The non-dominated (payload, measure) set by scoring every design with the full physics
    (stance cone programs included): the definition of the front, computed directly."""
    import numpy as np
    from test_solve_search import grouped_designs

    from jointwright.frontier import MEASURES, with_limit
    from jointwright.options import build_table
    from jointwright.problem import checks, feasible, objective
    from jointwright.solve.model import SizingModel

    _kind, key, metric, sense = MEASURES[measure]
    p = with_limit(p, case, key, None)
    table = build_table(p)
    joints = list(p.robot.actuated)
    groups = [[joints.index(j) for j in g] for g in p.objective["shared"]]
    idx = grouped_designs(len(joints), groups, len(table))
    model = SizingModel(p, table, [np.arange(len(table))] * len(joints))
    arrays = table.arrays(idx)
    ev = model.evaluator.evaluate(arrays, detail=False)
    ok = feasible(checks(p, arrays, ev), idx.shape[0])
    pay = np.asarray(objective(p, arrays, ev, "payload"))[ok]
    if case is None:
        mu = np.asarray(getattr(arrays, metric).sum(axis=1), dtype=float)[ok]
    else:
        mu = np.asarray(ev[case][metric], dtype=float)[ok]
    good = mu if sense == "min" else -mu
    front: list = []
    for i in np.lexsort((-good, -pay)):
        if not front or good[i] > front[-1][2] + 1e-7 * max(abs(good[i]), 1e-12):
            front.append((pay[i], mu[i], good[i]))
    return [
        (p_, m_)
        for k, (p_, m_, _g) in enumerate(front)
        if not (k + 1 < len(front) and abs(front[k + 1][0] - p_) <= 1e-9 * max(1.0, abs(p_)))
    ]


@pytest.mark.parametrize(
    ("seed", "share", "measure"),
    [(1, 0.9, "imf"), (2, 1.2, "imf"), (3, 1.0, "effective_mass"), (4, 1.0, "mass")],
)
def test_branch_and_bound_equals_brute_force_with_stance_cases(seed, share, measure):
    """With stance cases the branch and bound prunes with the stance programs (skipping the
    boxes below the front's floor) and keys designs awaiting their cone programs by their leaf
    box: its front must still equal the one found by scoring every design."""
    p = _small_quadruped(seed, share)
    case = None if measure in ("mass", "cost") else "fl-touchdown"
    ref = _brute_front(p, measure, case)
    f = frontier(p, measure, case=case, method="branch-and-bound")
    got = [(q.payload, q.measure) for q in f.points]
    assert f.complete and len(got) == len(ref) > 1
    for (pa, ma), (pb, mb) in zip(got, ref, strict=True):
        assert pa == pytest.approx(pb, rel=1e-9, abs=1e-9)
        assert ma == pytest.approx(mb, rel=1e-6)
