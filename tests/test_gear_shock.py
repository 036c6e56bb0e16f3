"""Peak gear torque at an impact (metrics/gear_shock.py) on a one-joint arm, in closed form.

Outside checks:
* Rigid impact with restitution e against an immovable environment: impulse
  p = (1 + e)·m_eff·v (Walker, IEEE Trans. Robot. Autom. 10(5), 1994 [pub]); for one revolute
  joint with link inertia I_L about its axis struck at radius r perpendicular to the link,
  m_eff = I_L/r² and the joint's velocity step is Δq̇ = (1 + e)·v/r.
* Velocity shock on an undamped single-degree-of-freedom system: a spring k whose base steps by
  Δv under a mass m peaks at F = Δv·√(k·m) (Harris & Piersol, Shock and Vibration Handbook,
  ch. 8 [mem]; from ½·m·Δv² = ½·F²/k).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from jointwright.assessment import assess
from jointwright.design import design_from_dict
from jointwright.errors import InputError
from jointwright.metrics.gear_shock import gear_shock_torque, link_velocity_step
from jointwright.project import load_project

M, LC, IC, R = 2.0, 0.2, 0.01, 0.5  # link mass kg, centre of mass m, own inertia kg·m², radius m
I_LINK = IC + M * LC**2  # 0.09 kg·m² about the joint
ROTOR, N, ETA_B, K = 5e-5, 20.0, 0.8, 4000.0  # kg·m², ratio, backward efficiency, N·m/rad

CATALOG = f"""
[[motor]]
name = "m1"
peak_torque = "3 N*m"
continuous_torque = "1 N*m"
rotor_inertia = {ROTOR}
mass = "0.5 kg"
max_speed = "3000 rpm"

[[stage]]
name = "g"
kind = "cycloidal"
ratios = [{N}]
efficiency = {{ model = "constant", forward = 0.9, backward = {ETA_B} }}
life_exponent = "roller_bearing"

[[stage.frame]]
name = "g-1"
rated_peak_torque = "60 N*m"
rated_continuous_torque = "30 N*m"
mass = "0.6 kg"
stiffness = "{K} N*m/rad"
rated_momentary_torque = "{{momentary}} N*m"
"""

PROJECT = f"""
[robot]
base = "fixed"
gravity = [0, 0, -9.81]
actuated = ["q"]
frames = [{{ name = "tip", link = "arm", xyz = [{R}, 0, 0] }}]
[[robot.links]]
name = "ground"
mass = 1.0
shape = "point"
[[robot.links]]
name = "arm"
mass = {M}
com = [{LC}, 0, 0]
inertia = [{IC / 2}, {IC / 2}, {IC}]
[[robot.joints]]
name = "q"
type = "revolute"
parent = "ground"
child = "arm"
axis = [0, 0, 1]
lower = "-170 deg"
upper = "170 deg"
[catalog]
files = ["catalog.toml"]
max_stages = 1
[[case]]
name = "bump"
kind = "impact"
frame = "tip"
direction = [0, 1, 0]
pose = {{ q = 0 }}
{{extra}}
"""

SHOCK = 'impact_speed = "2 m/s"\nrestitution = 0.3\nshock_use_max = 1.0'


def _project(tmp_path, extra=SHOCK, momentary=100.0):
    catalog = CATALOG.replace("{momentary}", f"{momentary:g}")
    (tmp_path / "catalog.toml").write_text(catalog, encoding="utf-8")
    path = tmp_path / "project.toml"
    path.write_text(PROJECT.replace("{extra}", extra), encoding="utf-8")
    return load_project(path)


def _design(project, stages=True):
    joint = {"motor": "m1"}
    joint["stages"] = [{"stage": "g", "frame": "g-1", "ratio": N}] if stages else []
    return design_from_dict({"joint": {"q": joint}}, project)


def test_one_joint_impulse_and_gear_torque_in_closed_form(tmp_path):
    p = _project(tmp_path)
    a = assess(p, _design(p))
    bump = next(c for c in a.cases if c.name == "bump")
    # p = (1 + e)·(I_L/r²)·v = 1.3·(0.09/0.25)·2 = 0.936 N·s; Δq̇ = 1.3·2/0.5 = 5.2 rad/s
    assert bump.metrics["impulse"] == pytest.approx(1.3 * I_LINK / R**2 * 2.0, rel=1e-9)
    assert bump.metrics["impulse"] == pytest.approx(0.936, rel=1e-9)
    assert abs(bump.metrics["shock_joint_speed:q"]) == pytest.approx(5.2, rel=1e-9)
    # rotor at the joint, back-driven: N²·I_r/η_b = 400·5e-5/0.8 = 0.025 kg·m²;
    # T = 5.2·√(4000·0.025) = 5.2·10 = 52 N·m; use of the 100 N·m momentary rating 0.52
    assert bump.metrics["shock_torque:q"] == pytest.approx(52.0, rel=1e-9)
    assert bump.metrics["shock_use"] == pytest.approx(0.52, rel=1e-9)
    assert bump.limiting_joint is None or bump.metrics["shock_limiting_joint"] == "q"
    check = next(c for c in a.checks if c.requirement == "shock_use_max")
    assert check.ok and check.margin == pytest.approx(0.48, rel=1e-9)
    assert any("momentary" in text for text in a.cautions)


def test_energy_reading_of_the_peak_torque():
    # the rotor's kinetic energy at the step equals the spring energy at the peak: ½·I·Δq̇² = T²/(2k)
    dq, k, inertia = 3.0, 2500.0, 0.04
    t = float(gear_shock_torque(dq, k, inertia, False, True))
    assert 0.5 * inertia * dq**2 == pytest.approx(t**2 / (2 * k), rel=1e-12)


def test_a_momentary_rating_below_the_peak_fails_the_requirement(tmp_path):
    p = _project(tmp_path, momentary=60.0)  # 52 N·m against 60 N·m: use 0.867, still inside
    assert next(c for c in assess(p, _design(p)).checks if c.requirement == "shock_use_max").ok
    (tmp_path / "catalog.toml").write_text(CATALOG.replace("{momentary}", "60"), encoding="utf-8")
    p = _project(tmp_path, extra=SHOCK.replace('"2 m/s"', '"3 m/s"'), momentary=60.0)
    # 3 m/s: Δq̇ = 7.8 rad/s, T = 78 N·m > 60 N·m
    check = next(c for c in assess(p, _design(p)).checks if c.requirement == "shock_use_max")
    assert check.achieved == pytest.approx(78.0 / 60.0, rel=1e-9) and not check.ok


def test_direct_drive_has_no_gear_and_self_locking_takes_the_impact_on_its_teeth():
    dq = np.array([2.0, 2.0, 2.0, 0.0])
    t = gear_shock_torque(
        dq,
        np.array([1000.0, 1000.0, np.inf, 1000.0]),
        np.array([0.01, 0.01, 0.01, 0.01]),
        np.array([False, True, False, True]),
        np.array([True, True, True, True]),
    )
    # 2·√(1000·0.01) = 6.3246; self-locking: inf; unknown stiffness: inf; no step: 0
    assert t[0] == pytest.approx(2 * math.sqrt(10.0)) and t[1] == np.inf and t[2] == np.inf
    assert t[3] == 0.0
    assert float(gear_shock_torque(2.0, np.inf, 0.01, False, False)) == 0.0


def test_direct_drive_design_uses_no_rating(tmp_path):
    p = _project(tmp_path)
    bump = next(c for c in assess(p, _design(p, stages=False)).cases if c.name == "bump")
    assert bump.metrics["shock_use"] == 0.0


def test_velocity_step_reaches_the_contact_speed_change():
    # any mass matrix: J·Δq̇ along u equals (1 + e)·v, and p = (1 + e)·v/(uᵀ·J·M⁻¹·Jᵀ·u)
    rng = np.random.default_rng(2)
    A = rng.normal(size=(4, 4))
    Mm = A @ A.T + 4 * np.eye(4)
    J = rng.normal(size=(3, 4))
    u = np.array([0.0, 0.6, 0.8])
    p, dq = link_velocity_step(J, Mm, u, 1.5, 0.2)
    assert float(u @ J @ dq) == pytest.approx(1.2 * 1.5, rel=1e-12)
    assert float(p) == pytest.approx(1.8 / float(u @ J @ np.linalg.solve(Mm, J.T @ u)))
    # a locked coordinate does not move
    _, dq_l = link_velocity_step(J, Mm, u, 1.5, 0.2, np.array([False, True, False, False]))
    assert dq_l[1] == 0.0 and float(u @ J @ dq_l) == pytest.approx(1.8, rel=1e-12)


@pytest.mark.parametrize(
    ("extra", "field"),
    [
        ("shock_use_max = 1.0", "impact_speed"),
        ('impact_speed = "2 m/s"', "restitution"),
        ("restitution = 0.5", "impact_speed"),
        ('impact_speed = "2 m/s"\nrestitution = 1.5', "restitution"),
        ('impact_speed = "-2 m/s"\nrestitution = 0.5', "impact_speed"),
    ],
)
def test_bad_shock_inputs_name_the_field(tmp_path, extra, field):
    with pytest.raises(InputError) as err:
        _project(tmp_path, extra=extra)
    assert err.value.field.endswith(field)


@pytest.mark.slow
def test_shock_use_max_is_a_sizing_constraint_the_search_honours():
    # the search against exhaustive enumeration on a small seeded leg instance, with a shock
    # limit just below the shock use of the unconstrained optimum, so that it binds
    import dataclasses

    from test_solve_search import agree, small_catalog

    from jointwright.project import Requirements, load_example
    from jointwright.sizing import size

    leg = load_example("leg")
    rng = np.random.default_rng(3)
    touchdown = dataclasses.replace(leg.case("touchdown"), limits={})
    project = dataclasses.replace(
        leg,
        catalog=small_catalog(leg.catalog, rng, motors=3, kinds=2, ratios=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
        cases=tuple(dataclasses.replace(c, limits={}) for c in leg.cases if c.kind == "payload")
        + (touchdown,),
        requirements=Requirements(),
    )
    free = size(project, objective="payload", explain=False)
    assert free.status == "optimal"
    use = next(c for c in free.assessment.cases if c.name == "touchdown").metrics["shock_use"]
    limit = 0.95 * use
    bound = dataclasses.replace(
        project,
        cases=tuple(
            dataclasses.replace(c, limits={"shock_use_max": limit}) if c.name == "touchdown" else c
            for c in project.cases
        ),
    )
    res = agree(bound, "payload")
    assert res.status == "optimal"  # a design meets the tighter limit (payload may fall)
    check = next(c for c in res.assessment.checks if c.requirement == "shock_use_max")
    assert check.achieved <= limit * (1 + 1e-9) and res.design != free.design


@pytest.mark.slow
def test_frontier_points_carry_their_gear_shock_use():
    """Each point of the payload–IMF front states its gear shock use at the leg's touchdown,
    equal to what assess computes for that design (the same physics oracle)."""
    from jointwright.frontier import frontier
    from jointwright.project import load_example

    project = load_example("leg")
    f = frontier(project, "imf", time_limit=120)
    assert f.points
    for p in f.points:
        a = assess(project, p.design)
        worst = max(c.metrics["shock_use"] for c in a.cases if "shock_use" in c.metrics)
        assert p.shock_use == pytest.approx(worst, rel=1e-12)
    assert f.to_dict()["points"][0]["shock_use"] == pytest.approx(f.points[0].shock_use)


def test_an_unrated_stage_is_filtered_out_under_a_shock_limit(tmp_path):
    """A stage stating no momentary rating has an unknown shock use, which the check counts as
    missed whatever the rest of the design: the per-joint filter drops exactly those options
    (a direct drive has no gear and stays), so a catalog with no rated stage ends at once in
    "no option can meet every requirement" instead of a search to the time limit."""
    from jointwright.design import arrays_from_designs
    from jointwright.evaluate import Evaluator
    from jointwright.options import build_table, joint_candidates

    (tmp_path / "catalog.toml").write_text(
        CATALOG.replace('rated_momentary_torque = "{momentary} N*m"\n', ""), encoding="utf-8"
    )
    path = tmp_path / "project.toml"
    path.write_text(PROJECT.replace("{extra}", SHOCK), encoding="utf-8")
    p = load_project(path)
    table = build_table(p)
    cands = joint_candidates(p, table, Evaluator(p))
    kept = set(cands.index[0].tolist())
    label = "shock_use_max (bump): no momentary rating"
    geared = [k for k, a in enumerate(table.actuators) if a.stages]
    assert geared and cands.removed[0][label] == len(geared)
    assert not kept & set(geared)
    assert all(not table.actuators[k].stages for k in kept)
    # the evaluator agrees: a geared option's shock use is unknown (counted as infinite)
    ev = Evaluator(p).evaluate(arrays_from_designs([_design(p)]))
    assert np.isinf(ev["bump"]["shock_use"][0])


def test_the_outcome_names_an_unrated_stage_as_unrated(tmp_path):
    """The report's outcome sentence: with no momentary rating the joint's share is unknown and
    it is named as unrated, with the largest gear torque (52 N·m, the closed form above), never
    as "the largest share" of a rating that does not exist."""
    from jointwright.report.outcome import _shock_words

    (tmp_path / "catalog.toml").write_text(
        CATALOG.replace('rated_momentary_torque = "{momentary} N*m"\n', ""), encoding="utf-8"
    )
    path = tmp_path / "project.toml"
    path.write_text(PROJECT.replace("{extra}", SHOCK), encoding="utf-8")
    p = load_project(path)
    bump = next(c for c in assess(p, _design(p)).to_dict()["cases"] if c["name"] == "bump")
    text = _shock_words(bump["metrics"])
    assert "largest gear torque is 52 N·m, at q" in text
    assert "the stages of q state no momentary" in text and "largest share" not in text
    (tmp_path / "r").mkdir()
    rated = _project(tmp_path / "r")
    bump = next(c for c in assess(rated, _design(rated)).to_dict()["cases"] if c["name"] == "bump")
    assert "gear teeth of q take the largest share" in _shock_words(bump["metrics"])
