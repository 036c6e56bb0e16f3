"""Robot-level payload on several feet (stance cases) in the evaluator.

References: static equilibrium of the whole robot — the ground forces carry the total weight
plus the load (Newton's second law at rest [pub, rigid-body mechanics]), with the total mass
from Pinocchio (`computeTotalMass` on the model carrying the actuator masses); friction can
only enlarge the set of admissible contact forces (a cone contains its axis).
"""

from __future__ import annotations

import dataclasses
import math
from importlib import resources

import pinocchio as pin
import pytest

from jointwright.design import arrays_from_designs, load_design
from jointwright.evaluate import Evaluator
from jointwright.project import STANDARD_GRAVITY, load_project


@pytest.fixture(scope="module")
def quadruped():
    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        project = load_project(folder / "project.toml")
        design = load_design(folder / "design.toml", project)
    return project, design


def test_ground_forces_carry_robot_weight_plus_load(quadruped):
    project, design = quadruped
    ev = Evaluator(project).evaluate(arrays_from_designs([design]))
    model = project.robot.with_actuator_masses([a.mass for a in design.actuators])
    weight = pin.computeTotalMass(model) * 9.81  # the robot's gravity is 9.81 m/s²
    for name in ("stand-carry", "walk-carry"):
        e = ev[name]
        assert e["self_supporting"][0]
        assert e["payload"][0] > 0
        total_up = e["contact_force_z"][0].sum()
        assert total_up == pytest.approx(weight + e["payload"][0], rel=1e-5)


def test_friction_never_lowers_the_payload_and_three_feet_carry_less_than_four(quadruped):
    project, design = quadruped
    stand = project.case("stand-carry")
    slick = dataclasses.replace(
        stand, name="slick", contacts=tuple((f, 0.0, n) for f, _, n in stand.contacts)
    )
    p = dataclasses.replace(project, cases=(stand, slick, project.case("walk-carry")))
    ev = Evaluator(p).evaluate(arrays_from_designs([design]))
    assert ev["slick"]["payload"][0] <= ev["stand-carry"]["payload"][0] * (1 + 1e-6)
    assert ev["walk-carry"]["payload"][0] < ev["stand-carry"]["payload"][0]


def test_stance_is_the_objective_of_payload_projects(quadruped):
    from jointwright.problem import objective, payload_cases

    project, design = quadruped
    arrays = arrays_from_designs([design])
    ev = Evaluator(project).evaluate(arrays)
    assert {"stand-carry", "walk-carry"} <= set(payload_cases(project))
    # the objective is the payload mass every case carries: (F − fixed_load)/(payload_share·g_n)
    # per case, the smallest; the stance cases carry the payload itself (share 1, no fixed part)
    carried = [
        (ev[n]["payload"][0] - project.case(n).fixed_load)
        / (project.case(n).payload_share * STANDARD_GRAVITY)
        for n in payload_cases(project)
    ]
    assert objective(project, arrays, ev, "payload")[0] == pytest.approx(min(carried))
    # the starting design carries the 10 kg walking load
    assert ev["walk-carry"]["payload"][0] / STANDARD_GRAVITY > 10.0


def _quadruped_copy(tmp_path, edit):
    import shutil

    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        shutil.copytree(folder, tmp_path / "q")
    path = tmp_path / "q" / "project.toml"
    path.write_text(edit(path.read_text()))
    return path


#: walk-carry standing on three feet with the trunk centred (the shipped example's walk pose
#: leans it over the support triangle): the centre of mass lies on the fl–hr diagonal
WALK = 'name = "walk-carry"\nkind = "stance"\npose = "walk"'
CENTRED = WALK.replace('"walk"', '"stand"')


def _centred(extra: str = ""):
    """An edit of the quadruped's project: walk-carry in the centred stand pose, with ``extra``
    lines added to the case."""
    return lambda s: s.replace(WALK, CENTRED + extra, 1)


def test_contact_share_is_read_checked_and_warned_about(quadruped, tmp_path):
    from jointwright.assessment import assess
    from jointwright.errors import InputError

    project, design = quadruped
    # the shipped example leans its trunk over the three feet down: no foot goes unloaded
    assert not [c for c in assess(project, design).cautions if "walk-carry" in c]
    # with the trunk centred the design leans on two diagonal feet (the centre of mass lies on
    # the line between them): the assessment says so and names the unloaded foot
    path = _quadruped_copy(tmp_path / "a", _centred())
    p = load_project(path)
    warned = [
        c
        for c in assess(p, load_design(path.parent / "design.toml", p)).cautions
        if "walk-carry" in c
    ]
    assert len(warned) == 1 and "fr_foot" in warned[0] and "contact_share_min" in warned[0]
    path = _quadruped_copy(tmp_path, _centred("\ncontact_share_min = 0.01"))
    p = load_project(path)
    assert p.case("walk-carry").contact_share_min == 0.01
    # a share under the caution's 5 % still leaves the foot nearly unloaded: still cautioned
    assert [c for c in assess(p, load_design(path.parent / "design.toml", p)).cautions
            if "walk-carry" in c]
    five = _quadruped_copy(tmp_path / "d", _centred("\ncontact_share_min = 0.05"))
    p = load_project(five)
    assert not [c for c in assess(p, load_design(five.parent / "design.toml", p)).cautions
                if "walk-carry" in c]
    too_much = _quadruped_copy(tmp_path / "b", _centred("\ncontact_share_min = 0.4"))
    with pytest.raises(InputError) as err:
        load_project(too_much)
    assert err.value.field.endswith("contact_share_min") and "at most 1/3" in str(err.value)
    push = '[[case]]\nname = "leg-push"'
    on_payload = _quadruped_copy(
        tmp_path / "c", lambda s: s.replace(push, push + "\ncontact_share_min = 0.1", 1)
    )
    with pytest.raises(InputError) as err:
        load_project(on_payload)
    assert "contact_share_min" in err.value.field and "only for stance cases" in str(err.value)


def test_a_share_the_support_cannot_give_is_named_as_the_reason(quadruped, tmp_path):
    from jointwright.assessment import assess

    # three feet, the trunk's centre on the fl–hr diagonal: fr_foot cannot take 15 % of the
    # ground force (rigid statics: the centre of pressure must stay under the centre of mass)
    path = _quadruped_copy(tmp_path, _centred("\ncontact_share_min = 0.15"))
    p = load_project(path)
    a = assess(p, load_design(path.parent / "design.toml", p))
    walk_case = next(c for c in a.cases if c.name == "walk-carry")
    assert walk_case.metrics["payload"] == 0.0
    assert "at least 0.15 of the ground" in walk_case.note
    # a share it can give binds at fr_foot and lowers the load it carries
    light = _quadruped_copy(tmp_path / "b", _centred("\ncontact_share_min = 0.02"))
    p = load_project(light)
    a = assess(p, load_design(light.parent / "design.toml", p))
    shared = next(c for c in a.cases if c.name == "walk-carry").metrics
    plain_path = _quadruped_copy(tmp_path / "c", _centred())
    plain_project = load_project(plain_path)
    plain_design = load_design(plain_path.parent / "design.toml", plain_project)
    plain = next(
        c for c in assess(plain_project, plain_design).cases if c.name == "walk-carry"
    ).metrics
    assert shared["contacts_at_share"] == 1
    assert 0 < shared["payload"] < plain["payload"]
    total = sum(shared[f"normal_force:{f}"] for f in ("fl_foot", "fr_foot", "hr_foot"))
    assert shared["normal_force:fr_foot"] == pytest.approx(0.02 * total, rel=1e-4)


def test_leaning_over_the_support_spreads_the_ground_force(quadruped):
    # the shipped walk pose puts the centre of mass inside the triangle of the three feet down,
    # so every foot takes a real share: a third of the ground force each would be the centroid;
    # the design's own share is well above the 5 % the caution asks for [common practice]
    from jointwright.assessment import assess

    project, design = quadruped
    walk = next(c for c in assess(project, design).cases if c.name == "walk-carry").metrics
    forces = [walk[f"normal_force:{f}"] for f in ("fl_foot", "fr_foot", "hr_foot")]
    assert min(forces) / sum(forces) > 0.15


def test_a_contact_off_the_ground_is_cautioned(quadruped, tmp_path):
    from jointwright.assessment import assess

    project, design = quadruped
    assert not [c for c in assess(project, design).cautions if "not every contact" in c]

    def lift(text):  # walk-carry's fr leg folded up: its foot leaves the ground plane
        pose = text[text.index("[poses.stand]") : text.index("[[case]]")]
        lifted = "[poses.lifted]" + pose[pose.index("\n") : pose.index("[poses.walk]")]
        lifted = lifted.replace('fr_hip_fe = "-40 deg"', 'fr_hip_fe = "-70 deg"')
        lifted = lifted.replace('fr_knee = "80 deg"', 'fr_knee = "140 deg"')
        text = text.replace(pose, pose + lifted)
        return text.replace(WALK, WALK.replace('"walk"', '"lifted"'))

    path = _quadruped_copy(tmp_path, lift)
    p = load_project(path)
    warned = [
        c
        for c in assess(p, load_design(path.parent / "design.toml", p)).cautions
        if "not every contact" in c
    ]
    assert len(warned) == 1 and "walk-carry" in warned[0] and "fr_foot" in warned[0]


def test_friction_use_per_foot_agrees_with_the_slipping_count(quadruped):
    # tangential ÷ μ·normal at each foot: inside the cone (≤ 1), and 1 exactly at the feet the
    # cone program marks as about to slip (friction cone, Coulomb's law [pub])
    from jointwright.assessment import assess

    project, design = quadruped
    for case in assess(project, design).cases:
        if case.kind != "stance":
            continue
        use = [v for k, v in case.metrics.items() if k.startswith("friction_use:")]
        assert len(use) == len(project.case(case.name).contacts)
        assert all(0.0 <= u <= 1.0 + 1e-6 for u in use)
        at_limit = sum(u > 1.0 - 1e-4 for u in use)
        assert at_limit == case.metrics["slipping_contacts"]


def test_normal_force_is_along_the_contact_normal_on_a_slope(quadruped):
    """Every foot on a 15° slope (each contact normal tilted by θ about the x axis) and the
    load vertical: the contact forces sum to a vertical force W (translational statics of the
    whole robot), so the forces along the common normal n sum to n·W = cos θ·W. The assessment's
    ``normal_force`` must be that component, not the vertical one [rigid-body statics]."""
    from jointwright.assessment import assess

    project, design = quadruped
    theta = math.radians(15.0)
    n = (0.0, math.sin(theta), math.cos(theta))
    stand = project.case("stand-carry")
    slope = dataclasses.replace(
        stand, name="slope", contacts=tuple((f, mu, n) for f, mu, _ in stand.contacts)
    )
    p = dataclasses.replace(project, cases=(slope,))
    ev = Evaluator(p).evaluate(arrays_from_designs([design]))["slope"]
    assert ev["self_supporting"][0] and ev["payload"][0] > 0
    vertical = float(ev["contact_force_z"][0].sum())
    metrics = next(c for c in assess(p, design).cases if c.name == "slope").metrics
    normal = sum(metrics[f"normal_force:{f}"] for f, _, _ in slope.contacts)
    assert normal == pytest.approx(math.cos(theta) * vertical, rel=1e-5)
    assert normal < vertical * 0.97  # the vertical sum would be wrong by 1 − cos 15° ≈ 3.4 %
