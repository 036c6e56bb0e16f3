"""Transient contact with a person by the two-body model of ISO/TS 15066:2016, annex A [mem;
the body-region values below are test inputs, not values from the standard]:
μ = (1/m_H + 1/m_R)⁻¹, v_max = F_max/√(μ·k), E_max = F_max²/(2·k)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from jointwright.assessment import assess
from jointwright.design import load_design
from jointwright.errors import InputError
from jointwright.metrics.contact_safety import transient_contact
from jointwright.project import load_example, load_project


def test_closed_form():
    # m_H = 40 kg, m_R = 4 kg: μ = 1/(1/40 + 1/4) = 40/11 = 3.6364 kg; k = 75,000 N/m,
    # F = 140 N: v = 140/√(3.6364·75,000) = 140/522.23 = 0.26808 m/s; E = 140²/150,000 = 0.13067 J
    r = transient_contact(4.0, 40.0, 75_000.0, 140.0)
    assert float(r.reduced_mass) == pytest.approx(40.0 / 11.0, rel=1e-12)
    assert float(r.speed) == pytest.approx(140.0 / math.sqrt(40.0 / 11.0 * 75_000.0), rel=1e-12)
    assert float(r.speed) == pytest.approx(0.268080, rel=1e-5)
    assert float(r.energy) == pytest.approx(140.0**2 / 150_000.0, rel=1e-12)
    # energy check: ½·μ·v² at the limit speed equals the spring energy F²/(2k)
    assert 0.5 * float(r.reduced_mass) * float(r.speed) ** 2 == pytest.approx(
        float(r.energy), rel=1e-12
    )


def test_immovable_robot_leaves_the_body_mass():
    r = transient_contact(np.inf, 40.0, 75_000.0, 140.0)
    assert float(r.reduced_mass) == 40.0


@given(m1=st.floats(0.1, 100.0), m2=st.floats(0.1, 100.0))
def test_a_heavier_robot_never_allows_a_faster_contact(m1, m2):
    lo, hi = sorted((m1, m2))
    a = transient_contact(lo, 20.0, 50_000.0, 100.0).speed
    b = transient_contact(hi, 20.0, 50_000.0, 100.0).speed
    assert b <= a * (1 + 1e-12)


def _arm_with_region(tmp_path, extra: str) -> str:
    p = load_example("arm")
    text = p.file.read_text(encoding="utf-8")
    text = text.replace('effective_mass_max = "4 kg"', 'effective_mass_max = "4 kg"\n' + extra)
    folder = p.file.parent
    for f in folder.iterdir():
        if f.is_file() and f.name != "project.toml":
            (tmp_path / f.name).write_bytes(f.read_bytes())
    (tmp_path / "project.toml").write_text(text, encoding="utf-8")
    return str(tmp_path / "project.toml")


def test_arm_side_collision_contact_speed_from_its_effective_mass(tmp_path):
    path = _arm_with_region(
        tmp_path,
        'body_force_max = "140 N"\nbody_stiffness = "75 N/mm"\n'
        'body_mass = "40 kg"\ncontact_speed_min = "0.1 m/s"',
    )
    p = load_project(path)
    d = load_design(p.file.with_name("design.toml"), p)
    a = assess(p, d)
    case = next(c for c in a.cases if c.name == "side-collision")
    m_r = case.metrics["effective_mass"]
    mu = 1.0 / (1.0 / 40.0 + 1.0 / m_r)
    assert case.metrics["contact_speed"] == pytest.approx(
        140.0 / math.sqrt(mu * 75_000.0), rel=1e-12
    )
    check = next(c for c in a.checks if c.requirement == "contact_speed_min")
    assert check.achieved == pytest.approx(case.metrics["contact_speed"], rel=1e-12)
    assert any("ISO/TS 15066" in text for text in a.cautions)


@pytest.mark.parametrize(
    "extra, field",
    [
        ('contact_speed_min = "0.1 m/s"', "contact_speed_min"),
        ('body_force_max = "140 N"', "body_stiffness"),
        (
            'body_force_max = "140 N"\nbody_stiffness = "-3 N/mm"\nbody_mass = "40 kg"',
            "body_stiffness",
        ),
    ],
)
def test_body_region_is_complete_or_absent(tmp_path, extra, field):
    with pytest.raises(InputError) as exc:
        load_project(_arm_with_region(tmp_path, extra))
    assert exc.value.field.endswith(field)


def test_sizing_honours_a_contact_speed_limit_exactly():
    # the search against exhaustive enumeration on a small seeded instance: a planar arm with a
    # payload case and a side impact whose contact-speed limit binds (set from random designs)
    import dataclasses

    from jointwright.project import Case, Requirements
    from test_solve_search import agree, build_table, example, planar_arm, small_catalog

    arm = example("arm")
    rng = np.random.default_rng(5)
    robot = planar_arm(rng)
    pose = {"j0": 0.4, "j1": -0.7, "j2": 0.5}
    region = (140.0, 75_000.0, 40.0)
    cases = (
        Case("lift", "payload", "tip", pose, direction=(0.0, 0.0, 1.0), limits={}),
        Case(
            "bump", "impact", "tip", pose, direction=(1.0, 0.0, 0.0), limits={}, body_region=region
        ),
    )
    p = dataclasses.replace(
        arm,
        robot=robot,
        cases=cases,
        catalog=small_catalog(arm.catalog, rng, motors=3),
        max_stages=1,
        stage_kinds=None,
        objective={},
        requirements=Requirements(),
    )
    from jointwright.evaluate import Evaluator

    table = build_table(p)
    sample = rng.integers(0, len(table), (12, 3))
    speeds = Evaluator(p).evaluate(table.arrays(sample), detail=False)["bump"]["contact_speed"]
    limit = float(np.median(speeds))
    p = dataclasses.replace(
        p, cases=(cases[0], dataclasses.replace(cases[1], limits={"contact_speed_min": limit}))
    )
    res = agree(p, "payload")
    if res.status == "optimal":
        bump = next(c for c in res.assessment.cases if c.name == "bump")
        assert bump.metrics["contact_speed"] >= limit * (1 - 1e-9)
