"""The stance-case bound (docs/optimizer.md, item 9) against the evaluator's cone programs.

The bundled quadruped (floating base, two stance cases with friction cones) on a random small
catalog: for random partial designs, the linear program with interval masses, hulls of the
torque ranges and circumscribed friction pyramids must bound the stance payload (as carried
payload mass, problem.carried_payload) of every completion drawn, scored by the evaluator
(metrics/contacts.py, CLARABEL); a complete design's bound must be close to its own value
(the pyramid is within cos(π/8) of the cone).
"""

from __future__ import annotations

import dataclasses
from importlib import resources

import numpy as np
import pytest

from jointwright.catalog.model import Catalog
from jointwright.options import build_table
from jointwright.problem import carried_payload
from jointwright.project import Requirements, load_project
from jointwright.solve.model import SizingModel
from jointwright.solve.stance_bound import StanceBound


def _quadruped(seed: int):
    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        q = load_project(folder / "project.toml")
    rng = np.random.default_rng(seed)
    motors = tuple(
        q.catalog.motors[i] for i in sorted(rng.choice(len(q.catalog.motors), 3, replace=False))
    )
    stages = []
    for s in q.catalog.stages[:2]:
        fr = (s.frames[int(rng.integers(len(s.frames)))],)
        ratios = s.ratios
        if ratios is not None:
            ratios = tuple(sorted(float(r) for r in rng.choice(ratios, 2, replace=False)))
        stages.append(dataclasses.replace(s, frames=fr, ratios=ratios))
    cases = tuple(dataclasses.replace(c, limits={}) for c in q.cases if c.kind == "stance")
    return dataclasses.replace(
        q,
        catalog=Catalog(motors=motors, stages=tuple(stages), drives=q.catalog.drives),
        cases=cases,
        objective={},
        requirements=Requirements(),
        max_stages=1,
        stage_kinds=None,
    )


@pytest.mark.slow
@pytest.mark.parametrize("seed", [11, 12])
def test_stance_bound_holds_for_every_completion(seed):
    project = _quadruped(seed)
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "payload")
    bound = StanceBound(model)
    rng = np.random.default_rng(seed)
    for _ in range(4):
        idx = np.full(n, -1, dtype=np.int64)
        fixed = rng.choice(n, int(rng.integers(0, n)), replace=False)
        idx[fixed] = rng.integers(0, len(table), fixed.size)
        free = np.flatnonzero(idx < 0)
        unit = (int(free[0]),) if free.size else ()
        opts = rng.choice(len(table), 3, replace=False)
        b = bound.bound(idx if unit else idx, unit, opts)
        designs = np.broadcast_to(idx, (24, n)).copy()
        for j in free:
            designs[:, j] = rng.integers(0, len(table), 24)
        if unit:
            designs[:, unit[0]] = rng.choice(opts, 24)
        ev = model.evaluator.evaluate(table.arrays(designs), detail=False)
        value = np.min(
            [carried_payload(c, np.asarray(ev[c.name]["payload"])) for c in model.stance], axis=0
        )
        assert np.all(value <= b + 1e-6 * max(1.0, abs(b)))
    # a complete design: the program is the design's own up to the pyramid (cos(pi/8) ≈ 0.924)
    full = rng.integers(0, len(table), n)
    ev = model.evaluator.evaluate(table.arrays(full[None, :]), detail=False)
    value = min(float(carried_payload(c, ev[c.name]["payload"][0])) for c in model.stance)
    b = bound.bound(full, (), np.empty(0, dtype=np.int64))
    assert value <= b + 1e-6 * max(1.0, abs(b))
    if value > 0:
        assert b <= value / 0.92 + 1.0
