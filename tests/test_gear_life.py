"""Gear life over duty cycles (metrics/gear_life.py), its catalog fields and the life_min
requirement.

Outside checks:
* ISO 281:2007, basic rating life [pub]: L10 = (C/P)^p million revolutions, p = 3 for ball and
  10/3 for roller bearings; in hours at a constant speed n (rpm) L10h = 10⁶/(60·n)·(C/P)^p.
* The mean equivalent load of a load spectrum, P_m = (Σ P_i^p·n_i·t_i / Σ n_i·t_i)^(1/p)
  (ISO 281 and rolling-bearing texts, e.g. Harris & Kotzalas, Rolling Bearing Analysis [mem]).
* Palmgren–Miner cumulative damage (Miner, J. Appl. Mech. 12, 1945 [pub]).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from jointwright.assessment import assess
from jointwright.catalog.io import load_catalog
from jointwright.design import load_design
from jointwright.errors import InputError
from jointwright.metrics.gear_life import equivalent_torque, miner_life, rated_life, stack_life
from jointwright.project import Requirements, load_example, load_project

RPM = 2 * math.pi / 60
HOUR = 3600.0


@pytest.mark.parametrize(("p", "expected_h"), [(3.0, 266.6667), (10.0 / 3.0, 335.9789)])
def test_life_equation_reduces_to_iso_281_basic_rating_life(p, expected_h):
    # A rated point of 10⁶ revolutions at n_r = 100 rpm: L_r = 10⁶/(60·100) h = 166.667 h, with
    # T_r the dynamic load rating C. At a constant load P = C/2 and n = 500 rpm ISO 281 gives
    # L10h = 10⁶/(60·500)·2^p: ball 33.333·8 = 266.667 h; roller 33.333·2^(10/3) = 33.333·10.0794
    # = 335.979 h.
    n_r, n = 100 * RPM, 500 * RPM
    life_r = 1e6 / (60 * 100) * HOUR
    t_eq, n_avg = equivalent_torque(np.full(10, 50.0), np.full(10, n), np.full(10, 0.1), p)
    assert float(t_eq) == pytest.approx(50.0, rel=1e-12)
    assert float(n_avg) == pytest.approx(n, rel=1e-12)
    life = rated_life(life_r, 100.0, n_r, p, t_eq, n_avg)
    assert float(life) / HOUR == pytest.approx(expected_h, rel=1e-6)
    assert float(life) / HOUR == pytest.approx(1e6 / (60 * 500) * 2.0**p, rel=1e-12)


def test_spectrum_mean_load_by_hand():
    # Two load levels: 100 N·m at 20 rad/s for 1 s, 50 N·m at 10 rad/s for 3 s, p = 3.
    # Revolution weights 20 and 30 rad: P_m³ = (20·10⁶ + 30·1.25·10⁵)/50 = 4.75·10⁵,
    # P_m = 78.0245 N·m (78³ = 474,552, + 448/(3·78²)); the average speed is
    # 50 rad / 4 s = 12.5 rad/s.
    t_eq, n_avg = equivalent_torque([100.0, -50.0], [20.0, -10.0], [1.0, 3.0], 3.0)
    assert float(t_eq) == pytest.approx(4.75e5 ** (1 / 3), rel=1e-12)
    assert float(t_eq) == pytest.approx(78.0245, rel=1e-6)
    assert float(n_avg) == pytest.approx(12.5, rel=1e-12)


def test_miner_rule_closed_form():
    # 30 % of the time in a cycle of 1000 h life, 70 % in one of 5000 h:
    # L = 1/(0.3/1000 + 0.7/5000) = 1/0.00044 = 2272.73 h
    assert float(miner_life([1000.0, 5000.0], [0.3, 0.7])) == pytest.approx(1 / 0.00044)
    assert float(miner_life([1000.0, np.inf], [0.5, 0.5])) == pytest.approx(2000.0)
    assert float(miner_life([np.inf, np.inf], [0.5, 0.5])) == np.inf
    assert np.isnan(miner_life([np.nan, 10.0], [0.5, 0.5]))


def test_miner_combination_equals_the_life_of_the_joined_spectrum():
    # The life law makes damage per unit time ∝ Σ n_i·t_i·T_i^p / Σ t_i, so running cycle A for a
    # share s and cycle B for 1 − s damages exactly like one spectrum holding both in that
    # proportion: Miner's rule and the joined spectrum must agree.
    rng = np.random.default_rng(7)
    tau_a, tau_b = rng.uniform(-40, 40, 50), rng.uniform(-20, 60, 80)
    n_a, n_b = rng.uniform(-6, 6, 50), rng.uniform(-3, 3, 80)
    dt_a, dt_b = np.full(50, 0.01), np.full(80, 0.02)  # cycles of 0.5 s and 1.6 s
    p, rated = 10.0 / 3.0, (2e7, 30.0, 20.0)

    def life(tau, n, dt):
        t_eq, n_avg = equivalent_torque(tau, n, dt, p)
        return float(rated_life(rated[0], rated[1], rated[2], p, t_eq, n_avg))

    # joined: A's samples stretched so that A takes 25 % of the time: 1.6 s/3 = 0.5333 s of A
    # beside the 1.6 s of B, a factor (1.6/3)/0.5 on A's time steps
    joined = life(
        np.concatenate([tau_a, tau_b]),
        np.concatenate([n_a, n_b]),
        np.concatenate([dt_a * (1.6 / 3) / 0.5, dt_b]),
    )
    combined = float(miner_life([life(tau_a, n_a, dt_a), life(tau_b, n_b, dt_b)], [0.25, 0.75]))
    assert combined == pytest.approx(joined, rel=1e-12)


@settings(max_examples=40, deadline=None)
@given(scale=st.floats(1.01, 10.0), p=st.sampled_from([3.0, 10.0 / 3.0, 5.0]))
def test_life_falls_with_torque_and_speed(scale, p):
    rng = np.random.default_rng(11)
    tau, n, dt = rng.uniform(-30, 30, 40), rng.uniform(-5, 5, 40), np.full(40, 0.01)

    def life(tau, n):
        t_eq, n_avg = equivalent_torque(tau, n, dt, p)
        return float(rated_life(1e7, 25.0, 10.0, p, t_eq, n_avg))

    base = life(tau, n)
    # torque × c -> life / c^p exactly; speed × c -> life / c exactly
    assert life(tau * scale, n) == pytest.approx(base / scale**p, rel=1e-9)
    assert life(tau, n * scale) == pytest.approx(base / scale, rel=1e-9)
    # raising the torque of one sample never lengthens the life
    more = tau.copy()
    more[3] += math.copysign(scale, more[3])
    assert life(more, n) <= base * (1 + 1e-12)


def test_stack_life_takes_the_weakest_stage_and_marks_unrated_ones():
    tau, n, dt = np.array([[10.0, 20.0]]), np.array([2.0, 2.0]), np.array([1.0, 1.0])
    inf, nan = np.inf, np.nan
    # slot 0 rated (T_r 20, n_r 4, L_r 1000 s, p 3), slot 1 weaker (L_r 100 s), slot 2 empty
    life, slot, t_eq, _ = stack_life(
        tau,
        n,
        dt,
        [[20.0, 20.0, inf]],
        [[4.0, 4.0, 1.0]],
        [[1000.0, 100.0, inf]],
        [[3.0, 3.0, 3.0]],
    )
    # T_eq³ = (10³ + 20³)/2 = 4500; L = 100·(8000/4500)·(4/2) = 355.56 s
    assert float(life[0]) == pytest.approx(100 * 8000 / 4500 * 2, rel=1e-12)
    assert int(slot[0]) == 1 and float(t_eq[0]) == pytest.approx(4500 ** (1 / 3))
    unrated, *_ = stack_life(
        tau, n, dt, [[20.0, nan, inf]], [[4.0, nan, 1.0]], [[1000.0, nan, inf]], [[3.0, nan, 3.0]]
    )
    assert np.isnan(unrated[0])
    none, *_ = stack_life(
        tau, n, dt, [[inf, inf, inf]], [[1.0, 1.0, 1.0]], [[inf, inf, inf]], [[3.0, 3.0, 3.0]]
    )
    assert none[0] == np.inf  # direct drive: no gear to wear


# --- catalog and project -------------------------------------------------------------------

STAGE = """
[[stage]]
name = "G"
kind = "cycloidal"
ratios = [21]
efficiency = {{ model = "constant", forward = 0.85, backward = 0.7 }}
{stage_extra}
[[stage.frame]]
name = "G-1"
rated_peak_torque = "100 N*m"
rated_continuous_torque = "50 N*m"
mass = "1 kg"
{frame_extra}
"""


def _catalog(tmp_path, stage_extra="", frame_extra=""):
    path = tmp_path / "c.toml"
    path.write_text(STAGE.format(stage_extra=stage_extra, frame_extra=frame_extra))
    return load_catalog(path)


def test_catalog_ratings_load_in_si(tmp_path):
    cat = _catalog(
        tmp_path,
        'life_exponent = "roller_bearing"',
        'rated_life_torque = "40 N*m"\nrated_life_input_speed = "315 rpm"\n'
        'rated_life = "6000 h"\nrated_momentary_torque = "250 N*m"',
    )
    stage = cat.stage("G")
    frame = stage.frame("G-1")
    assert stage.life_exponent == pytest.approx(10 / 3)
    assert frame.rated_life == pytest.approx(6000 * 3600.0)
    assert frame.rated_momentary_torque == 250.0
    # 315 rpm at the input of a 21:1 stage is 15 rpm at its output
    assert frame.life_output_speed(21.0) == pytest.approx(15 * RPM)


@pytest.mark.parametrize(
    ("stage_extra", "frame_extra", "field"),
    [
        (
            "",
            'rated_life_torque = "40 N*m"\nrated_life_speed = "15 rpm"\nrated_life = "6000 h"',
            "stage[0].life_exponent",
        ),
        ('life_exponent = "gear"', "", "stage[0].life_exponent"),
        ("life_exponent = -3", "", "stage[0].life_exponent"),
        (
            "life_exponent = 3",
            'rated_life_torque = "40 N*m"\nrated_life = "6000 h"',
            "rated_life_speed",
        ),
        (
            "life_exponent = 3",
            'rated_life = "6000 h"\nrated_life_speed = "15 rpm"',
            "rated_life_torque",
        ),
        (
            "life_exponent = 3",
            'rated_life_torque = "40 N*m"\nrated_life = "6 h"\nrated_life_speed = "1 rpm"\n'
            'rated_life_input_speed = "21 rpm"',
            "rated_life_input_speed",
        ),
        (
            "life_exponent = 3",
            'rated_life_torque = "140 N*m"\nrated_life = "6 h"\nrated_life_speed = "1 rpm"',
            "rated_life_torque",
        ),
        ("", 'rated_momentary_torque = "90 N*m"', "rated_momentary_torque"),
        ("", 'rated_life = "-5 h"', "rated_life"),
    ],
)
def test_bad_ratings_name_the_field(tmp_path, stage_extra, frame_extra, field):
    with pytest.raises(InputError) as err:
        _catalog(tmp_path, stage_extra, frame_extra)
    assert field in err.value.field


def _leg_with(tmp_path, old: str, new: str) -> str:
    p = load_example("leg")
    text = p.file.read_text(encoding="utf-8")
    assert old in text
    for f in p.file.parent.iterdir():
        if f.is_file() and f.name != "project.toml":
            (tmp_path / f.name).write_bytes(f.read_bytes())
    (tmp_path / "project.toml").write_text(text.replace(old, new), encoding="utf-8")
    return str(tmp_path / "project.toml")


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [
        ('ambient = "30 degC"', 'ambient = "30 degC"\nlife_share = 1.5', "life_share"),
        ('ambient = "30 degC"', 'ambient = "30 degC"\nlife_share = 0.5', "life_share"),
        ('life_min = "10000 h"', 'life_min = "-3 h"', "life_min"),
        ("imf_min = 0.1", "imf_min = 0.1\nlife_share = 0.5", "life_share"),
    ],
)
def test_bad_life_requirements_name_the_field(tmp_path, old, new, field):
    with pytest.raises(InputError) as err:
        load_project(_leg_with(tmp_path, old, new))
    assert err.value.field.endswith(field)


def test_leg_assessment_reports_life_per_joint_with_margin():
    p = load_example("leg")
    d = load_design(p.file.with_name("design.toml"), p)
    a = assess(p, d)
    trot = next(c for c in a.cases if c.name == "trot")
    checks = {c.subject: c for c in a.checks if c.requirement == "life_min"}
    assert set(checks) == set(p.robot.actuated)
    for joint, check in checks.items():
        # one duty cycle: the combined life is that cycle's life, shown in hours
        assert check.achieved == pytest.approx(trot.metrics[f"gear_life:{joint}"] / HOUR)
        assert check.margin == pytest.approx(check.achieved / 10000.0 - 1.0)
        # the knee's life by hand from its equivalent torque and average speed:
        # L = L_r·(T_r/T_eq)^p·(n_r/n_avg), Orbit-3 at 9:1: T_r = 18 N·m, n_r = 3000 rpm / 9
    a_knee = d.actuator("knee")
    ((t_r, n_r, l_r, p_exp),) = a_knee.life_ratings
    assert (t_r, p_exp) == (pytest.approx(18.0), pytest.approx(10 / 3))
    assert n_r == pytest.approx(3000 * RPM / 9)
    hand = (
        l_r
        * (t_r / trot.metrics["gear_equivalent_torque:knee"]) ** p_exp
        * (n_r / trot.metrics["gear_average_speed:knee"])
    )
    assert checks["knee"].achieved == pytest.approx(hand / HOUR, rel=1e-12)


@pytest.mark.slow
def test_life_min_is_a_sizing_constraint_the_search_honours():
    # the search against exhaustive enumeration on a small seeded leg instance, with a life
    # requirement just above the life of the unconstrained optimum, so that it binds
    from test_solve_search import agree, small_catalog

    from jointwright.design import arrays_from_designs
    from jointwright.evaluate import Evaluator
    from jointwright.problem import combined_gear_life
    from jointwright.sizing import size

    leg = load_example("leg")
    rng = np.random.default_rng(3)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=2, kinds=2, ratios=2),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=tuple(
            dataclasses.replace(c, limits={"rating_use_max": 1e9}) if c.kind == "duty" else c
            for c in leg.cases
            if c.kind in ("payload", "duty")
        ),
        requirements=Requirements(),
    )
    free = size(project, objective="payload", explain=False)
    assert free.status == "optimal"
    ev = Evaluator(project).evaluate(arrays_from_designs([free.design]))
    limit = 1.05 * float(np.min(combined_gear_life(project, ev)))
    bound = dataclasses.replace(project, requirements=Requirements(life_min=limit))
    res = agree(bound, "payload")
    # the unconstrained optimum fails the limit by construction; the answer meets it
    assert res.status == "optimal" and res.objective <= free.objective * (1 + 1e-12)
    assert res.design != free.design
    lives = [c.achieved for c in res.assessment.checks if c.requirement == "life_min"]
    assert len(lives) == 3 and min(lives) >= limit / HOUR * (1 - 1e-9)


def test_a_study_varies_the_life_requirement():
    # a study path into the project: requirements.life_min, as written ("5000 h", "20000 h")
    from jointwright.project import project_from_dict
    from jointwright.study.spec import case_project, expand, parse_study

    leg = load_example("leg")
    spec = parse_study(
        {
            "study": {"format": 1, "name": "life", "base": "project.toml"},
            "vary": [{"path": "requirements.life_min", "values": ["5000 h", "20000 h"]}],
        },
        study_dir=leg.file.parent,
    )
    lives = [
        project_from_dict(case_project(spec, c), leg.file).requirements.life_min / HOUR
        for c in expand(spec)
    ]
    assert lives == [pytest.approx(5000.0), pytest.approx(20000.0)]


def test_the_per_joint_life_filter_never_removes_an_option_of_a_design_that_meets_it():
    # solve/life_bound.py: the bound holds for every completion, checked on random designs of a
    # small leg instance with the life limit at the median of their lives
    from test_solve_search import build_table, small_catalog

    from jointwright.evaluate import Evaluator
    from jointwright.problem import checks, combined_gear_life
    from jointwright.solve.life_bound import life_masks

    leg = load_example("leg")
    rng = np.random.default_rng(8)
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, kinds=3, ratios=3),
        max_stages=1,
        stage_kinds=None,
        cases=tuple(c for c in leg.cases if c.kind == "duty"),
        requirements=Requirements(),
    )
    table = build_table(project)
    ev_ = Evaluator(project)
    sample = rng.integers(0, len(table), (300, 3))
    limit = float(
        np.nanmedian(
            np.nanmin(combined_gear_life(project, ev_.evaluate(table.arrays(sample))), axis=1)
        )
    )
    project = dataclasses.replace(project, requirements=Requirements(life_min=limit))
    masks = life_masks(project, table, ev_)
    ev = ev_.evaluate(table.arrays(sample))
    by_joint = {}
    for c in checks(project, table.arrays(sample), ev):
        if c.name in ("life_min", "gear_peak_use_max"):
            j = project.robot.actuated.index(c.subject)
            by_joint[(j, c.name)] = c.ok
    removed = 0
    for j, label, keep in masks:
        ok = by_joint[(j, label)]
        # a design meeting the joint's check keeps its option at that joint
        assert np.all(keep[sample[ok, j]]), label
        removed += int((~keep).sum())
    assert removed > 0  # the filter does remove options here (so the test can fail)


def test_two_duty_cycles_combine_by_miner_rule_in_assess(tmp_path):
    # the trot and the same gait at half speed (times doubled), 30 % / 70 % of the operating
    # time: each joint's life check equals 1/(0.3/L_trot + 0.7/L_slow) from the cases' own lives
    import csv

    leg = load_example("leg")
    rows = list(csv.reader(leg.file.with_name("gait.csv").read_text().splitlines()))
    slow = [
        r if not r or r[0].startswith(("#", "t")) else [f"{2 * float(r[0]):.6f}", *r[1:]]
        for r in rows
    ]
    path = _leg_with(
        tmp_path,
        'ambient = "30 degC"',
        'ambient = "30 degC"\nlife_share = 0.3\n\n[[case]]\nname = "walk"\nkind = "duty"\n'
        'trajectory = "slow.csv"\nlife_share = 0.7',
    )
    with open(tmp_path / "slow.csv", "w", newline="") as fh:
        csv.writer(fh).writerows(slow)
    p = load_project(path)
    a = assess(p, load_design(p.file.with_name("design.toml"), p))
    trot = next(c for c in a.cases if c.name == "trot").metrics
    walk = next(c for c in a.cases if c.name == "walk").metrics
    for check in (c for c in a.checks if c.requirement == "life_min"):
        j = check.subject
        assert walk[f"gear_life:{j}"] != pytest.approx(trot[f"gear_life:{j}"], rel=1e-3)
        combined = 1.0 / (0.3 / trot[f"gear_life:{j}"] + 0.7 / walk[f"gear_life:{j}"])
        assert check.achieved == pytest.approx(combined / HOUR, rel=1e-12)
