"""The stance-case bounds (docs/optimizer.md, item 9) against the evaluator's cone programs.

The bundled quadruped (floating base, two stance cases with friction cones) on a random small
catalog and an actuator mass budget: for random partial designs, the linear program with interval
masses, hulls and mass envelopes of the torque ranges, the budget row and circumscribed friction
pyramids must bound, per option of the joint being decided, the stance payload (as carried
payload mass, problem.carried_payload) of every completion within the budget drawn with that
option, scored by the evaluator (metrics/contacts.py, CLARABEL); a complete design's bound must be
close to its own value (the pyramid is within cos(π/8) of the cone). The search with these bounds
must find the enumerated optimum of small stance instances.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from importlib import resources

import numpy as np
import pytest

from jointwright.catalog.model import Catalog
from jointwright.options import build_table
from jointwright.problem import carried_payload
from jointwright.project import Requirements, load_project
from jointwright.solve.model import SizingModel
from jointwright.solve.stance_bound import GROUPS, StanceBound, option_groups
from jointwright.solve.stance_program import upper_hull


def _quadruped(seed: int, budget: float = math.inf, shared=(), kinds=("stance",)):
    """The bundled quadruped cut to 3 of its motors and 2 stage types (one frame, two ratios
    each), its cases of ``kinds`` (None: all) with their limits removed."""
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
    cases = tuple(
        dataclasses.replace(c, limits={}) for c in q.cases if kinds is None or c.kind in kinds
    )
    return dataclasses.replace(
        q,
        catalog=Catalog(motors=motors, stages=tuple(stages), drives=q.catalog.drives),
        cases=cases,
        objective={"maximize": "payload", "shared": [list(g) for g in shared]},
        requirements=Requirements(total_mass_max=budget),
        max_stages=1,
        stage_kinds=None,
    )


def test_upper_hull_lies_on_or_over_every_point_and_touches_the_top_ones():
    """Concave upper envelope by lines: min over lines ≥ every point, equal at the points on
    the hull (the largest y at the smallest and largest x at least) [derived]."""
    rng = np.random.default_rng(5)
    for _ in range(20):
        x = np.round(rng.uniform(0.2, 3.0, 40), 1)
        y = rng.uniform(0.0, 10.0, 40) + 3 * x
        slope, icpt = upper_hull(x, y)
        env = np.min(slope[None, :] * x[:, None] + icpt[None, :], axis=1)
        assert np.all(env >= y - 1e-9)
        for end in (x.min(), x.max()):
            top = y[x == end].max()
            assert np.min(slope * end + icpt) == pytest.approx(top, abs=1e-9)
    assert upper_hull(np.ones(3), np.arange(3.0))[0].size == 0  # one mass: no line


def test_option_groups_partition_the_options():
    rng = np.random.default_rng(6)
    for count in (1, 5, GROUPS, 300):
        g = option_groups(rng.uniform(0, 1, count), rng.uniform(0, 1, count))
        assert g.shape == (count,) and g.min() == 0 and g.max() < max(GROUPS, count)
        assert np.unique(g).size == min(count, GROUPS)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [11, 12])
def test_stance_bound_holds_for_every_completion(seed):
    table0 = build_table(_quadruped(seed))
    n0 = len(_quadruped(seed).robot.actuated)
    # a budget that binds: the mean of random designs' actuator mass
    budget = float(
        table0.rows["mass"][np.random.default_rng(seed).integers(0, len(table0), (50, n0))]
        .sum(axis=1)
        .mean()
    )
    project = _quadruped(seed, budget)
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "payload")
    bound = StanceBound(model)
    rng = np.random.default_rng(seed)
    checked = 0
    for _ in range(4):
        idx = np.full(n, -1, dtype=np.int64)
        fixed = rng.choice(n, int(rng.integers(0, n)), replace=False)
        idx[fixed] = rng.integers(0, len(table), fixed.size)
        free = np.flatnonzero(idx < 0)
        unit = (int(free[0]),) if free.size else ()
        opts = rng.choice(len(table), min(len(table), 20), replace=False)
        b = bound.bound(idx, unit, opts if unit else np.empty(0, dtype=np.int64))
        designs = np.broadcast_to(idx, (48, n)).copy()
        for j in free:
            designs[:, j] = rng.integers(0, len(table), 48)
        pick = rng.integers(0, opts.size, 48)
        if unit:
            designs[:, unit[0]] = opts[pick]
        within = model.mass[designs].sum(axis=1) <= budget
        designs, pick = designs[within], pick[within]
        if not within.any():
            continue
        ev = model.evaluator.evaluate(table.arrays(designs), detail=False)
        value = np.min(
            [carried_payload(c, np.asarray(ev[c.name]["payload"])) for c in model.stance], axis=0
        )
        limit = b[pick] if unit else np.full(value.shape, b)
        assert np.all(value <= limit + 1e-6 * np.maximum(1.0, np.abs(limit)))
        checked += value.size
    assert checked > 0
    # a complete design: the program is the design's own up to the pyramid (cos(pi/8) ≈ 0.924)
    full = rng.integers(0, len(table), n)
    ev = model.evaluator.evaluate(table.arrays(full[None, :]), detail=False)
    value = min(float(carried_payload(c, ev[c.name]["payload"][0])) for c in model.stance)
    b = bound.bound(full, (), np.empty(0, dtype=np.int64))
    if model.mass[full].sum() <= budget:
        assert value <= b + 1e-6 * max(1.0, abs(b))
        if value > 0:
            assert b <= value / 0.92 + 1.0


@pytest.mark.parametrize(
    "seed", [45, pytest.param(42, marks=pytest.mark.slow), pytest.param(48, marks=pytest.mark.slow)]
)
def test_option_bounds_from_duals_hold_against_enumeration(seed):
    """Every option of the joint being decided in one group: each option's bound from the
    group program's duals (weak duality, the unit's envelope rows dropped; docs/optimizer.md,
    item 9) must lie between that option's own program and the group's bound, and above the
    carried payload of every completion of the partial design (two joints free, every
    combination within the budget scored by the evaluator's cone programs) [derived]."""
    n = len(_quadruped(seed).robot.actuated)
    probe = StanceBound(
        SizingModel(_quadruped(seed), build_table(_quadruped(seed)), [np.arange(15)] * n, "payload")
    )
    strong = np.argsort(-probe.hi[0], axis=1)[:, :4]  # the 4 strongest options of each joint
    model0 = probe.model
    budget = 1.02 * float(model0.mass[strong[:, 0]].sum())
    project = _quadruped(seed, budget)
    table = build_table(project)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "payload")
    bound = StanceBound(model)
    opts = np.arange(len(table))
    rng = np.random.default_rng(seed)
    checked, lowered, held = 0, 0, 0
    for _ in range(3):
        idx = strong[np.arange(n), rng.integers(0, 4, n)]
        free = rng.choice(n, 2, replace=False)
        idx[free] = -1
        unit = [int(free[0])]
        one = bound.group_bounds(idx, unit, opts, np.zeros(opts.size, dtype=np.int64))
        own = bound.group_bounds(idx, unit, opts, np.arange(opts.size))
        group = bound.group_bounds(idx, unit, opts[:1], np.zeros(1, dtype=np.int64))
        whole = bound.bound(idx, (), np.empty(0, dtype=np.int64))
        assert np.all(one >= own - 1e-6 * np.maximum(1.0, np.abs(own)))
        assert np.all(one <= whole + 1e-6 * max(1.0, abs(whole)))
        assert group[0] >= own[0] - 1e-6 * max(1.0, abs(own[0]))
        lowered += int(np.count_nonzero(one < one.max() - 1e-3))
        designs = np.broadcast_to(idx, (opts.size**2, n)).copy()
        designs[:, free[0]] = np.repeat(opts, opts.size)
        designs[:, free[1]] = np.tile(opts, opts.size)
        designs = designs[model.mass[designs].sum(axis=1) <= budget]
        if designs.shape[0] == 0:
            continue
        ev = model.evaluator.evaluate(table.arrays(designs), detail=False)
        value = np.min(
            [carried_payload(c, np.asarray(ev[c.name]["payload"])) for c in model.stance], axis=0
        )
        limit = one[designs[:, free[0]]]
        assert np.all(value <= limit + 1e-6 * np.maximum(1.0, np.abs(limit)))
        checked += value.size
        held += int(np.count_nonzero(value > 0))
    assert checked > 0 and held > 0  # some completions carry a payload: the check bites
    assert lowered > 0  # the duals tell the options apart


@pytest.mark.slow
@pytest.mark.parametrize("seed", [21, 22, 23])
def test_search_with_stance_bounds_matches_enumeration(seed):
    """Stance cases alone set the objective (legs shared: three groups), a budget that binds:
    the search, which orders and cuts the groups' options by their stance bounds, must find
    the best of every combination scored in full."""
    from jointwright.solve.search import BranchAndBound

    model, units, designs = shared_instance(seed)
    project = model.project
    key = model.best_key(designs)
    out = BranchAndBound(model, units).run()
    if key is None:
        assert out.status == "infeasible"
        return
    assert out.status == "optimal"
    assert out.objective == pytest.approx(key[0], rel=1e-9, abs=1e-9)
    # the whole run: heuristics reading designs off the stance program and screening by it,
    # then the search; the design reported is re-assessed
    from jointwright.sizing import size

    res = size(project, explain=False, gap=0)
    assert res.status == "optimal" and res.assessment.feasible
    assert res.objective == pytest.approx(key[0], rel=1e-9, abs=1e-9)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [21, 45])
def test_root_probing_keeps_every_design_that_reaches_the_floor(seed):
    """Root probing (docs/optimizer.md, item 9) drops the options whose own root program is
    below a floor, in rounds over ever smaller candidates: every design (legs shared, every
    combination enumerated and scored in full within a binding budget) whose payload reaches
    the floor must keep all its options, and some option must go [derived]."""
    model, units, designs = shared_instance(seed)
    n, table = model.n, model.table
    s = model.score(designs)
    value = np.where(s.feasible, s.objective, -np.inf)
    assert np.isfinite(value).any() and value.max() > 0
    for share in (0.9, 0.98):
        floor = share * float(value.max())
        cands, bound = StanceBound(model).probe(units, floor)
        for j in range(n):
            reach = designs[value >= floor, j]
            assert np.all(np.isin(reach, cands[j]))
        assert sum(c.size for c in cands) < n * len(table)
        root = bound.bound(np.full(n, -1, dtype=np.int64), (), np.empty(0, dtype=np.int64))
        assert root >= value.max() - 1e-6 * max(1.0, value.max())


def load_project_example():
    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        return load_project(folder / "project.toml")


def shared_instance(seed: int):
    """The quadruped with legs shared (three groups), a random small catalog and a budget
    between the lightest and the heaviest design (some combinations are over it): the model,
    its units and every design (one per combination of the groups' options)."""
    q = load_project_example()
    shared = [[list(q.robot.actuated).index(j) for j in g] for g in q.objective["shared"]]
    mass = build_table(_quadruped(seed, shared=q.objective["shared"])).rows["mass"]
    budget = float(4 * (mass.min() + mass.max()) + 4 * np.median(mass))
    project = _quadruped(seed, budget, shared=q.objective["shared"])
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "payload", shared)
    designs = []
    for combo in itertools.product(range(len(table)), repeat=len(shared)):
        idx = np.empty(n, dtype=np.int64)
        for g, o in zip(shared, combo, strict=True):
            idx[g] = o
        designs.append(idx)
    return model, [tuple(g) for g in shared], np.array(designs)


@pytest.mark.parametrize("name", ["quadruped", "leg"])
def test_sampler_draws_its_designs_whatever_the_cpu_budget(name):
    """The heuristics' phases are measured in CPU time of the process, and the seeded sampler
    draws its first designs whatever that budget (a loaded machine cannot starve it); the
    wall-clock deadline (the user's limit) still stops everything."""
    import time

    from jointwright.solve.heuristic import BATCH, Heuristic, blind_screen
    from jointwright.solve.unit_order import search_order

    if name == "quadruped":
        project = _quadruped(31, budget=12.0)
    else:
        with resources.as_file(resources.files("jointwright.examples") / "leg") as folder:
            project = load_project(folder / "project.toml")
    table = build_table(project)
    n = len(project.robot.actuated)
    model = SizingModel(project, table, [np.arange(len(table))] * n, "payload")
    units = [(j,) for j in range(n)]
    h = Heuristic(model, search_order(model, units), math.inf, extend=True, cpu=0.0)
    best = h.run()
    least = (4 * BATCH) // 4 if blind_screen(model) else 4 * BATCH
    assert blind_screen(model) == (name == "quadruped")
    assert h.sampled >= least
    if best is not None:  # a design offered is scored in full: its key is its own
        again = model.best_key(np.array(best[3])[None, :])
        assert again is not None and again[0] == pytest.approx(best[0], rel=1e-9)
    late = Heuristic(model, units, time.perf_counter() - 1.0, extend=True, cpu=100.0)
    assert late.run() is None and late.sampled == 0


@pytest.mark.parametrize("seed", [21, 22])
def test_stance_bound_with_a_least_contact_share_holds_and_binds(seed):
    # the stance case asks every foot to take at least 20 % of the ground force: the linear
    # program carries the same rows, so a complete design's bound still lies on or above its
    # cone value (scored by the evaluator), and no design's value rises with the share
    q = _quadruped(seed)
    # the four-foot case alone (on three feet these random designs carry nothing)
    plain = dataclasses.replace(q, cases=tuple(c for c in q.cases if c.name == "stand-carry"))
    share = dataclasses.replace(
        plain,
        cases=tuple(dataclasses.replace(c, contact_share_min=0.2) for c in plain.cases),
    )
    rng = np.random.default_rng(seed)
    values = {}
    for name, project in (("plain", plain), ("share", share)):
        table = build_table(project)
        n = len(project.robot.actuated)
        model = SizingModel(project, table, [np.arange(len(table))] * n, "payload")
        index = rng.integers(0, len(table), (24, n)) if name == "plain" else values["index"]
        values["index"] = index
        scored = model.score(index)
        own = StanceBound(model).complete(index)
        value = np.where(np.isfinite(scored.objective), scored.objective, -np.inf)
        assert np.all(own >= value - 1e-6 * np.maximum(1.0, np.abs(value)))
        values[name], values[name + " bound"] = value, own
    assert np.all(values["share"] <= values["plain"] + 1e-6 * np.maximum(1.0, values["plain"]))
    assert np.any(values["share"] < values["plain"] - 1e-3)  # the share binds somewhere
    # and the program sees it: its bounds drop too
    assert np.any(values["share bound"] < values["plain bound"] - 1e-3)
