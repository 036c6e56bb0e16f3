"""`jointwright frontier --plot --frictionless`: the figure files exist and decode, and the
frictionless sweep is a frontier of its own: largest payload first, each later point trading
payload for a strictly better back-drivability measure (Pareto non-domination)."""

from __future__ import annotations

import json
import shutil
from importlib import resources

import pytest
from click.testing import CliRunner
from PIL import Image

from jointwright.cli import main


@pytest.mark.slow
def test_frontier_plot_and_frictionless_comparison(tmp_path):
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, tmp_path / "leg")
    out = tmp_path / "frontier.json"
    res = CliRunner().invoke(
        main,
        [
            "frontier",
            str(tmp_path / "leg" / "project.toml"),
            "--measure",
            "imf",
            "--points",
            "2",
            "--plot",
            str(tmp_path / "fig"),
            "--frictionless",
            "--out",
            str(out),
        ],
    )
    assert res.exit_code == 0, res.output
    with Image.open(tmp_path / "fig" / "frontier.png") as im:
        im.verify()
    assert (tmp_path / "fig" / "frontier.svg").read_text().lstrip().startswith("<?xml")
    data = json.loads(out.read_text())
    lossy, ideal = data["points"], data["frictionless"]["points"]
    assert lossy and ideal
    better = (lambda a, b: a > b) if data["sense"] == "min" else (lambda a, b: a < b)
    for pts in (lossy, ideal):
        for first, second in zip(pts, pts[1:]):
            assert second["payload"] <= first["payload"]
            assert better(second["measure"], first["measure"])


def test_report_reads_the_frontier_file_and_marks_the_design(tmp_path):
    from jointwright.report.frontier_map import frontier_from_sweep

    # frontier payloads are the payload mass every case carries (kg), and so is the chosen point
    sweep = {
        "measure": "imf",
        "case": "touchdown",
        "sense": "min",
        "knee": 1,
        "complete": False,
        "points": [
            {"payload": 24.0, "measure": 0.02, "actuators": {"knee": "A"}, "changes": []},
            {"payload": 20.0, "measure": 0.05, "actuators": {"knee": "B"}, "changes": ["knee"]},
        ],
    }
    assessment = {
        "cases": [
            {
                "name": "push",
                "kind": "payload",
                "metrics": {"payload": 180.0, "payload_carried": 18.0},
            },
            {"name": "touchdown", "kind": "impact", "metrics": {"imf": 0.07}},
        ]
    }
    data = frontier_from_sweep(sweep, assessment)
    assert [(p["x"], p["y"]) for p in data["points"]] == [(0.02, 24.0), (0.05, 20.0)]
    assert data["chosen"] == {"x": 0.07, "y": 18.0}
    assert data["y"]["unit"] == "kg" and data["knee"] == 1 and data["complete"] is False


def test_the_report_says_which_points_of_a_stopped_front_are_not_proven(tmp_path):
    """A stopped front's points whose search stopped (``proven: false`` in the frontier file)
    are marked in the report's table and caption; the caption claims every point proven only
    when none is marked."""
    from jointwright.report.frontier_map import frontier_from_sweep, frontier_section

    def front(proven):
        return {
            "measure": "imf",
            "case": "touchdown",
            "sense": "min",
            "knee": None,
            "complete": False,
            "unexplored": {"payload_max": 24.0, "measure_bound": 0.9},
            "points": [
                {"payload": 24.0, "measure": 0.02, "actuators": {"knee": "A"}, "proven": True},
                {"payload": 20.0, "measure": 0.05, "actuators": {"knee": "B"}, "proven": proven},
            ],
        }

    weak = frontier_section(frontier_from_sweep(front(False), {"cases": []}), tmp_path / "a")
    strong = frontier_section(frontier_from_sweep(front(True), {"cases": []}), tmp_path / "b")
    assert "1 of the 2 points is marked not proven" in weak.body
    assert "every point shown is proven" not in weak.body
    assert weak.body.count("not proven") >= 2  # the caption and the point's row
    assert "every point shown is proven" in strong.body and "not proven" not in strong.body
    assert "the others are proven non-dominated" in weak.body
    # every point unproven: no "others" to speak of
    none = front(False)
    none["points"][0]["proven"] = False
    both = frontier_section(frontier_from_sweep(none, {"cases": []}), tmp_path / "c")
    assert "All 2 points are marked not proven" in both.body and "others" not in both.body


@pytest.mark.slow
def test_frontier_without_a_measure_takes_the_one_the_base_allows(tmp_path):
    """A fixed-base arm's IMF is always 1, so without --measure the frontier of the bundled arm
    trades the back-driven effective mass (the leg, on a floating base, the IMF)."""
    import json

    from click.testing import CliRunner

    from jointwright.cli import main

    runner = CliRunner()
    assert runner.invoke(main, ["new", str(tmp_path / "arm"), "--example", "arm"]).exit_code == 0
    out = tmp_path / "front.json"
    args = ["--method", "sweep", "--points", "2", "--out", str(out)]
    r = runner.invoke(main, ["frontier", str(tmp_path / "arm" / "project.toml"), *args])
    assert r.exit_code == 0, r.output
    assert json.loads(out.read_text())["measure"] == "effective_mass"


def test_points_beyond_the_projects_own_limit_are_marked(capsys):
    """The frontier drops the project's limit on its measure to show the whole trade-off; a
    point that misses that limit is marked † with the limit in the caption, so the strongest
    end is not read as a design that meets the project (a larger payload than `size` proves
    under the limit). Limits from the bundled arm: effective mass at most 4 kg in
    side-collision, total actuator mass at most 6.5 kg."""
    from types import SimpleNamespace

    from jointwright.commands import _format
    from jointwright.commands.frontier import beyond_limit, own_limit, print_frontier
    from jointwright.frontier_result import Frontier, FrontierPoint
    from jointwright.project import load_example

    arm = load_example("arm")
    em = SimpleNamespace(measure="effective_mass", case="side-collision", sense="max")
    assert own_limit(arm, em) == pytest.approx(4.0)
    assert own_limit(arm, SimpleNamespace(measure="mass", case=None, sense="max")) == 6.5
    assert own_limit(arm, SimpleNamespace(measure="cost", case=None, sense="max")) is None
    assert beyond_limit(em, SimpleNamespace(measure=4.5), 4.0)
    assert not beyond_limit(em, SimpleNamespace(measure=4.0), 4.0)
    imf = SimpleNamespace(measure="imf", sense="min")
    assert beyond_limit(imf, SimpleNamespace(measure=0.2), 0.3)
    assert not beyond_limit(imf, SimpleNamespace(measure=0.2), None)
    design = SimpleNamespace(joints=(), actuators=(), cost=0.0)
    points = tuple(
        FrontierPoint(payload=p, measure=m, design=design, mass=1.0, changes=())
        for p, m in ((12.0, 5.0), (11.0, 3.0))
    )
    f = Frontier("effective_mass", "side-collision", "max", points, True, None, 1.0, 2)
    _format._console = None
    print_frontier(f, (), 4.0)
    out = capsys.readouterr().out
    assert "1 †" in out and "2 †" not in out
    assert "† beyond the project's own limit on effective mass (4 kg)" in " ".join(out.split())


def test_points_with_a_self_locking_joint_are_marked(capsys):
    """A frontier point whose design has a self-locking transmission (η_b ≤ 0, a worm of the
    arm's catalog: cos 20°·tan 3.5° = 0.0575 ≤ f = 0.07, Shigley ch. 13 [mem]) is marked ⊘ in
    the terminal, named per joint in the JSON, and noted in the report's table: its
    back-drivability figure says nothing about a push at that joint."""
    from jointwright.commands import _format
    from jointwright.commands.frontier import print_frontier
    from jointwright.design import design_from_dict
    from jointwright.frontier_result import Frontier, FrontierPoint
    from jointwright.project import load_example
    from jointwright.report.frontier_map import frontier_from_sweep

    arm = load_example("arm")
    worm = [{"stage": "Spiral", "frame": "Spiral-2", "ratio": 90}]
    joint = {"motor": "Ringwind-12", "stages": worm}
    free = {"motor": "Ringwind-01", "stages": []}
    names = list(arm.robot.actuated)
    locked = design_from_dict({"joint": {j: joint if j == "elbow" else free for j in names}}, arm)
    plain = design_from_dict({"joint": dict.fromkeys(names, free)}, arm)
    points = (
        FrontierPoint(payload=12.0, measure=2.0, design=locked, mass=1.0, changes=()),
        FrontierPoint(payload=11.0, measure=1.5, design=plain, mass=1.0, changes=()),
    )
    f = Frontier("effective_mass", "side-collision", "max", points, True, None, 1.0, 2)
    data = f.to_dict()
    assert data["points"][0]["self_locking"] == ["elbow"]
    assert data["points"][1]["self_locking"] == []
    _format._console = None
    print_frontier(f)
    out = " ".join(capsys.readouterr().out.split())
    assert "1 ⊘" in out and "2 ⊘" not in out and "point 1: elbow" in out
    form = frontier_from_sweep(data, {"cases": [], "total_mass": 1.0}, "f.json")
    assert form["points"][0]["self_locking"] == ["elbow"]


@pytest.mark.parametrize(
    "case, rule",
    [
        ("swing", "measure imf needs an impact case; 'swing' is speed"),
        ("swng", "unknown case 'swng' (did you mean 'swing'?)"),
    ],
)
def test_a_wrong_case_names_the_option(tmp_path, case, rule):
    folder = tmp_path / "leg"
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, folder)
    res = CliRunner().invoke(main, ["frontier", str(folder / "project.toml"), "--case", case])
    assert res.exit_code == 2
    assert f"<command line>: --case: {rule}" in res.stderr and "Traceback" not in res.output


def test_neighbouring_measures_read_differently():
    """Points whose measures differ only past the 4th digit get the digits that tell them apart
    (up to 7); equal measures and well separated ones keep 4."""
    from jointwright.commands.frontier import _distinct_digits

    assert _distinct_digits([2.243, 2.23884, 2.23862, 2.23851, 2.2307]) == 5
    assert _distinct_digits([0.5, 0.4, 0.3]) == 4
    assert _distinct_digits([1.0, 1.0]) == 4
    assert _distinct_digits([1.0, 1.0 + 1e-12]) == 7


def test_an_unrated_gear_shock_reads_unknown_not_infinite(tmp_path, capsys, monkeypatch):
    """The bundled leg's design with every momentary rating removed from its catalog: the
    evaluator's use per joint is unknown (NaN) there, so the frontier table and JSON say
    "unknown", never ∞ % (which the caption reads as a gear expected to break); the catalog as
    bundled gives a finite use."""
    import re

    from jointwright.commands import _format
    from jointwright.commands.frontier import print_frontier
    from jointwright.design import load_design
    from jointwright.frontier_result import Frontier, FrontierPoint, _with_shock
    from jointwright.project import load_project

    folder = tmp_path / "leg"
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, folder)

    def point_of(project):
        design = load_design(folder / "design.toml", project)
        one = FrontierPoint(20.0, 0.2, design, design.mass, ())
        return _with_shock(project, Frontier("imf", "touchdown", "min", (one,), True, None, 0, 0))

    rated = point_of(load_project(folder / "project.toml"))
    assert 0 < rated.points[0].shock_use < 10
    catalog = folder / "catalog.toml"
    catalog.write_text(re.sub(r"(?m)^rated_momentary_torque = .*\n", "", catalog.read_text()))
    f = point_of(load_project(folder / "project.toml"))
    assert f.to_dict()["points"][0]["shock_use"] == "unknown"
    monkeypatch.setenv("COLUMNS", "200")
    monkeypatch.setattr(_format, "_console", None)
    print_frontier(f)
    out = capsys.readouterr().out
    assert "unknown (unrated)" in out and "∞ %" not in out
