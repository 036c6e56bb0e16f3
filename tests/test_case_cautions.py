"""The cautions a case's results raise: a payload held only through gear friction, one the design
cannot lower, and a speed reached only after longer than a robot's motions last.

A transmission whose backward efficiency is at or below 0 holds its load by friction alone
(self-locking; Shigley's Mechanical Engineering Design, ch. 13, worm gearing [mem]); what it
holds then depends on friction, which changes with temperature, lubrication and wear [common
practice]. These tests check the rule that names such cases, on the bundled arm and on case
results built to sit on each side of it.
"""

from __future__ import annotations

import dataclasses
from importlib import resources

from jointwright.assessment import CaseResult, assess
from jointwright.cautions import friction_cautions
from jointwright.design import load_design
from jointwright.project import load_project


def _case(name, **metrics):
    return CaseResult(name, "payload", metrics, None, None)


def test_a_payload_only_friction_holds_is_named():
    held = _case("lift", payload=128.8, payload_frictionless=0.0, payload_lower=40.0)
    text = friction_cautions([held])
    assert len(text) == 1
    assert "'lift'" in text[0] and "frictionless gears the joints carry no payload" in text[0]
    assert "128.8 N" in text[0] and "safety standards" in text[0]


def test_a_load_the_design_cannot_lower_is_named():
    stuck = _case("lift", payload=128.8, payload_frictionless=90.0, payload_lower=0.0)
    text = friction_cautions([stuck])
    assert len(text) == 1 and "cannot lower it under control" in text[0]


def test_no_caution_when_the_motors_alone_carry_the_load_or_nothing_is_carried():
    fine = _case("lift", payload=128.8, payload_frictionless=150.0, payload_lower=150.0)
    none = _case("lift", payload=0.0, payload_frictionless=0.0, payload_lower=0.0)
    endless = _case("lift", payload=float("inf"), payload_frictionless=0.0, payload_lower=0.0)
    other = CaseResult("hit", "impact", {"payload_frictionless": 0.0}, None, None)
    assert friction_cautions([fine, none, endless, other]) == []


def test_the_bundled_arm_gets_no_friction_caution():
    with resources.as_file(resources.files("jointwright.examples") / "arm") as folder:
        project = load_project(folder / "project.toml")
        design = load_design(folder / "design.toml", project)
    a = assess(project, design)
    assert not any(
        "gear friction" in c or "under control" in c or "to reach from rest" in c
        for c in a.cautions
    )
    weak = dataclasses.replace(
        a.cases[0], metrics={**a.cases[0].metrics, "payload_frictionless": 0.0}
    )
    assert a.cases[0].kind == "payload" and friction_cautions([weak])


def test_a_speed_reached_only_after_long_is_named():
    """v/a₀ bounds the time to reach v from rest from below, since the acceleration only falls
    as the speed rises (docs/metrics.md, speed within a stroke); over a second [rule of thumb]
    the case is named, with a stroke (speed_steady present) or a quick one it is not."""
    from jointwright.cautions import slow_speed_cautions

    def speed(name, **m):
        return CaseResult(name, "speed", m, None, None)

    slow = speed("move", speed=2.476, acceleration=0.01015)
    quick = speed("dash", speed=1.0, acceleration=5.0)
    stroke = speed("swing", speed=6.9, acceleration=0.01, speed_steady=15.2)
    endless = speed("free", speed=float("inf"), acceleration=1.0)
    whole = speed("whole", speed=3, acceleration=1)  # whole numbers read as numbers
    text = slow_speed_cautions([slow, quick, stroke, endless])
    assert len(slow_speed_cautions([whole])) == 1
    assert len(text) == 1 and "'move'" in text[0] and "at least 244 s" in text[0]
