"""The bi-objective branch and bound gives the same front as brute force; a stopped run keeps
only proven points and names the region it did not search; merging and the text plot.

Reference: the Pareto (non-dominated) set of a finite set of (payload, measure) pairs (the
definition of Pareto optimality, e.g. Ehrgott, *Multicriteria Optimization*, 2nd ed., 2005,
def. 2.1), computed by brute force over every design of seeded small instances
(tests/test_frontier.py's ``brute_front``: every design scored by the evaluator with no filter).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from test_frontier import brute_front, check_front
from test_solve_search import build_table, example, set_limits, small_catalog

from jointwright.frontier import MEASURES, frontier, with_limit
from jointwright.options import build_table as build_options
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve.biobjective import BiObjectiveSearch


@pytest.fixture(scope="module")
def leg():
    return example("leg")


def random_instance(leg, seed: int, keep_duty: bool):
    rng = np.random.default_rng(seed)
    p = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=2, kinds=2, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
    )
    return set_limits(p, rng, build_table(p), keep_duty=keep_duty)


def same_front(got, ref) -> None:
    assert len(got) == len(ref)
    for (pa, ma), (pb, mb) in zip(got, ref, strict=True):
        assert pa == pytest.approx(pb, rel=1e-9, abs=1e-9)
        assert ma == pytest.approx(mb, rel=1e-6, abs=1e-9)


@pytest.mark.parametrize("seed", [3, 11, 29, 47, 71, 97])
@pytest.mark.parametrize("measure", ["imf", "effective_mass", "backdrive_force"])
def test_branch_and_bound_front_equals_brute_force(leg, seed, measure):
    # seeded random small instances (duty case kept on odd seeds: the costly check at the
    # leaves); the front's (payload, measure) pairs equal the brute-force non-dominated set
    p = random_instance(leg, seed, keep_duty=bool(seed % 2))
    f = frontier(p, measure, method="branch-and-bound")
    assert f.method == "branch-and-bound" and f.complete and f.unexplored is None
    check_front(p, f)
    ref = brute_front(p, measure, f.case)
    same_front([(pt.payload, pt.measure) for pt in f.points], ref)


def test_stopped_search_keeps_proven_points_and_names_the_unexplored_region(leg):
    # stopped after a few queue entries: every point returned is on the complete front, and
    # every point of the complete front that is missing lies in the unexplored region
    _kind, key, metric, sense = MEASURES["imf"]
    for seed in (5, 3, 11, 29, 47, 71):  # the first seeded instance with a front of 3 or more
        p = random_instance(leg, seed, keep_duty=False)
        case = next(c.name for c in p.cases if c.kind == "impact")
        cfg = read_objective(p)
        table = build_options(p, cfg["exclude"])
        free = with_limit(p, case, key, None)
        model, _ = build_model(
            free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"], table=table
        )
        units = units_of(model.n, model.shared)
        whole = BiObjectiveSearch(model, units, case, metric, sense).run()
        if len(whole.points) >= 3:
            break
    assert whole.complete and len(whole.points) >= 3
    full = [(q[0], q[1]) for q in whole.points]
    stopped_any = False
    for steps in (1, 3, 6, 12):
        search = BiObjectiveSearch(model, units, case, metric, sense)
        search.max_pops = steps
        part = search.run()
        if part.complete:
            continue
        stopped_any = True
        for q in part.points:
            assert any(
                q[0] == pytest.approx(a, rel=1e-9) and q[1] == pytest.approx(b) for a, b in full
            )
        for a, b in full:
            found = any(a == pytest.approx(q[0], rel=1e-9) for q in part.points)
            if not found:  # a missing point lies inside the region still unexplored
                assert a <= part.open_payload + 1e-9 * abs(part.open_payload) + 1e-12
                assert b <= part.open_measure * (1 + 1e-7) + 1e-9  # IMF: larger is better
    assert stopped_any


def test_merge_keeps_both_ends_and_counts_what_it_merged(leg):
    p = random_instance(leg, 29, keep_duty=False)
    whole = frontier(p, "effective_mass", method="branch-and-bound")
    merged = frontier(p, "effective_mass", method="branch-and-bound", merge=0.2)
    assert merged.merged == len(whole.points) - len(merged.points)
    assert merged.merge_tolerance == 0.2
    if whole.points:
        assert merged.points[0].payload == whole.points[0].payload
        assert merged.points[-1].measure == whole.points[-1].measure
    keep = {(q.payload, q.measure) for q in whole.points}
    assert all((q.payload, q.measure) in keep for q in merged.points)


def test_text_plot_numbers_every_point_and_marks_the_turning_point(leg):
    from jointwright.commands.frontier_text import plot_text

    for seed in (3, 11, 29, 47):
        f = frontier(random_instance(leg, seed, False), "effective_mass")
        if len(f.points) >= 3:
            break
    text = plot_text(f)
    shown = [str(i + 1) for i in range(len(f.points)) if i != f.knee]
    for label in shown[:9]:
        assert label in text
    if f.knee is not None:
        assert "◆" in text and f"turning point of the trade-off (point {f.knee + 1})" in text
    assert "─" in text  # steps, not straight lines


def test_cli_time_limit_states_the_region_not_searched(tmp_path):
    # a limit far below the preparation time: the search stops before its first entry, returns
    # no unproven point, and says which region is left
    import json

    from click.testing import CliRunner

    from jointwright.cli import main

    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "leg")]).exit_code == 0
    project = str(tmp_path / "leg" / "project.toml")
    r = runner.invoke(main, ["frontier", project, "--time-limit", "0.001"])
    assert r.exit_code == 0, r.output
    assert "stopped by the time limit" in r.output and "every point shown is proven" in r.output
    r = runner.invoke(main, ["frontier", project, "--time-limit", "0.001", "--json"])
    data = json.loads(r.output)
    assert data["complete"] is False and data["method"] == "branch-and-bound"
    assert data["unexplored"]["payload_max"] > 0 and data["points"] == []


@pytest.mark.parametrize("seed", [3, 29, 71])
@pytest.mark.parametrize("measure", ["imf", "effective_mass", "mass"])
def test_front_seeded_with_its_strongest_point_equals_brute_force(leg, seed, measure, monkeypatch):
    # large option spaces start from the two single-objective solves (the payload optimum caps
    # the boxes; the best measure at it is a front point, or its design an incumbent); forced
    # here on small instances, the front is still the brute-force non-dominated set
    import jointwright.frontier_methods as fr

    monkeypatch.setattr(fr, "SEED_MIN", 0)
    p = random_instance(leg, seed, keep_duty=bool(seed % 2))
    f = frontier(p, measure, method="branch-and-bound")
    assert f.complete and (f.solves == 2 or not f.points)
    check_front(p, f)
    same_front([(pt.payload, pt.measure) for pt in f.points], brute_front(p, measure, f.case))


@pytest.mark.parametrize("seed", [5, 12, 14, 17, 24, 28])  # instances with fronts of 2-7 points
@pytest.mark.parametrize("measure", ["effective_mass", "backdrive_force"])
def test_incumbent_of_largest_payload_and_worst_measure_keeps_the_front(leg, seed, measure):
    # the incumbent prunes what it beats strictly; given the design of largest payload with
    # the WORST measure, the search must still find the best measure at that payload and the
    # rest of the front (brute force as the reference)
    from jointwright.solve.enumerate import combinations
    from jointwright.solve.pareto import units_options

    p = random_instance(leg, seed, keep_duty=bool(seed % 2))
    _kind, key, metric, sense = MEASURES[measure]
    case = next(c.name for c in p.cases if c.kind == MEASURES[measure][0])
    cfg = read_objective(p)
    free = with_limit(p, case, key, None)
    model, _ = build_model(
        free,
        "payload",
        cfg["pin"],
        cfg["exclude"],
        cfg["shared"],
        table=build_options(p, cfg["exclude"]),
    )
    units = units_of(model.n, model.shared)
    opts = units_options(model, units)
    rows = combinations(opts, 0, int(np.prod([o.size for o in opts])))
    index = np.empty((rows.shape[0], model.n), dtype=np.int64)
    for k, unit in enumerate(units):
        index[:, list(unit)] = rows[:, [k]]
    if not index.shape[0]:  # the proven filters leave no design: nothing to start from
        pytest.skip("no candidate design in this instance")
    s = model.score(index, full=True)
    if not s.feasible.any():
        pytest.skip("no feasible design in this instance")
    pay = np.where(s.feasible, s.objective, -np.inf)
    top = np.flatnonzero(pay >= pay.max() - 1e-9 * max(1.0, abs(pay.max())))
    ev = model.evaluator.evaluate(model.table.arrays(index[top]), detail=False)
    mu = np.asarray(ev[case][metric], dtype=float)
    worst = top[int(np.argmax(mu))]  # larger effective mass / force: the worst
    search = BiObjectiveSearch(model, units, case, metric, sense)
    assert search.incumbent(index[worst])
    out = search.run()
    assert out.complete
    same_front([(q[0], q[1]) for q in out.points], brute_front(p, measure, case))


def test_text_plot_never_writes_a_number_over_another():
    """71 points on a 64-column plot (the size of the bundled quadruped's front): every label
    written is one of the points' numbers with a blank cell on each side, the rest are drawn as
    • and counted in the caption."""
    import re
    from types import SimpleNamespace

    from jointwright.commands.frontier_text import plot_text

    n = 71
    points = [
        SimpleNamespace(payload=119.0 - 1.5 * k, measure=0.28 + 0.0075 * k) for k in range(n)
    ]
    f = SimpleNamespace(points=points, sense="min", knee=17, measure="imf", case="touchdown")
    text = plot_text(f)
    body = [line[10:] for line in text.splitlines()[:16]]  # the grid, right of the axis
    labels = [m.group(0) for line in body for m in re.finditer(r"\d+", line)]
    assert labels and all(1 <= int(x) <= n for x in labels)
    assert len(set(labels)) == len(labels)  # no two numbers run together into a third
    assert "1" in labels and str(n) in labels and "◆" in text
    dots = sum(line.count("•") for line in body)
    assert dots > 0 and f"{n - 1 - len(labels)} of them" in text


def _front_figure(xs, ys, steps: str, self_locking=(), more=None, chosen=None):
    import matplotlib

    matplotlib.use("Agg")
    from jointwright.report import figures

    return figures.frontier_figure(
        {"catalog efficiencies": (xs, ys), **(more or {})},
        None,
        chosen=chosen,
        x_label="measure",
        y_label="payload (kg)",
        title="front",
        steps=steps,
        numbered=True,
        self_locking=self_locking,
    )


@pytest.mark.parametrize("extra", ["none", "chosen", "second series"])
def test_figure_numbers_do_not_overlap(extra):
    """The figure of a dense front (71 points): the numbers written have disjoint boxes on the
    page, both ends are numbered, and the ones left out are counted in the axes; also when a
    chosen design or a second front (the frictionless one) rescales the axes."""
    k = np.arange(71)
    xs, ys = 0.28 + 0.0075 * k, 119.0 - 1.5 * k
    fig = _front_figure(
        xs,
        ys,
        "pre",
        more={"frictionless": (4 * xs, 4 * ys)} if extra == "second series" else None,
        chosen=(-2.0, 10.0) if extra == "chosen" else None,
    )
    ax = fig.axes[0]
    fig.canvas.draw()
    notes = [t for t in ax.texts if t.get_text().isdigit()]
    boxes = [t.get_window_extent() for t in notes]
    assert {"1", "71"} <= {t.get_text() for t in notes}
    assert all(not a.overlaps(b) for i, a in enumerate(boxes) for b in boxes[i + 1 :])
    left = [t.get_text() for t in ax.texts if "left out" in t.get_text()]
    assert left == [f"{71 - len(notes)} point numbers left out where they would overlap"]


@pytest.mark.parametrize("sense", ["min", "max"])
def test_turning_point_bulges_toward_the_ideal_corner(sense):
    """The turning point lies on the ideal corner's side of the chord between the ends (most
    payload, best measure), never on a sunken corner; a front with no point on that side has
    none (definition: docs/frontier.md, "Turning point")."""
    from types import SimpleNamespace

    from jointwright.frontier_result import knee

    # largest payload first, as the fronts are listed; the measure worsens with payload
    better = 1.0 if sense == "min" else -1.0  # the measure's "better" direction
    pay = [30.0, 29.0, 10.0, 9.0]

    def front(measures):
        return [SimpleNamespace(payload=a, measure=better * b) for a, b in zip(pay, measures)]

    # a sharp bulge: one step of measure costs 1 kg, the next 19 kg; the turning point is the
    # second point, not the sunken third
    assert knee(front([0.0, 0.5, 0.6, 1.0]), sense) == 1
    # the second point sunken (1 kg lost for no gain in measure) deeper than
    # the third bulges: the third is the turning point (farthest by distance alone: the second)
    assert knee(front([0.0, 0.0, 0.99, 1.0]), sense) == 2
    # every inner point sunken: none
    assert knee(front([0.0, 0.02, 0.9, 1.0]), sense) is None
    # every point on the chord: no turning point
    line = [SimpleNamespace(payload=30.0 - 10 * k, measure=better * k) for k in range(4)]
    assert knee(line, sense) is None


def test_figure_marks_self_locking_points():
    """A point whose design self-locks a joint is marked in the figure as in the table (⊘),
    with its own legend entry: a safety-relevant fact the picture must not drop."""
    fig = _front_figure(np.array([1.6, 1.7, 1.8]), np.array([6.0, 11.0, 12.9]), "post", [2])
    marks = [ln for ln in fig.axes[0].lines if "self-locks" in str(ln.get_label())]
    assert len(marks) == 1
    assert marks[0].get_xdata().tolist() == [1.8] and marks[0].get_ydata().tolist() == [12.9]


def test_a_narrow_front_is_said_to_be_narrow():
    """A front whose measure moves by less than 5 % of its size gets a note with the span; a
    wide one gets none (the bundled leg's effective-mass front spans 2.216–2.243 kg, 1.2 %)."""
    from types import SimpleNamespace

    from jointwright.commands.frontier_text import narrow_text

    def front(measures):
        return SimpleNamespace(
            measure="effective_mass",
            points=[SimpleNamespace(payload=30.0 - k, measure=m) for k, m in enumerate(measures)],
        )

    note = narrow_text(front([2.243, 2.239, 2.216]))
    assert note is not None and "only 1.2 %" in note and "2.216 kg to 2.243 kg" in note
    assert narrow_text(front([2.4, 2.0, 1.6])) is None
    assert narrow_text(front([2.2])) is None
