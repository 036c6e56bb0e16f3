"""Drive (inverter) limits: current caps torque through Kt, bus voltage sets the envelope.

Outside source for every physics check: the DC motor equations V = R·i + Ke·ω and τ = Kt·i with
Ke = Kt in SI units (Hughes & Drury, *Electric Motors and Drives*, 5th ed., Newnes 2019,
ch. 3 [mem]); the no-load speed is ω0 = V/Ke and the torque at speed ω is Kt·(V − Ke·ω)/R.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from test_solve_search import agree, build_table, example, small_catalog

from jointwright.assessment import assess
from jointwright.catalog.drives import Drive, fed_motor
from jointwright.catalog.io import load_catalog
from jointwright.design import (
    Design,
    actuator_row,
    arrays_from_designs,
    design_to_toml,
    load_design,
)
from jointwright.drivetrain import Actuator
from jointwright.errors import InputError
from jointwright.evaluate import Evaluator
from jointwright.metrics.envelope import winding_resistance
from jointwright.project import load_project

SMALL = Drive("T-10", peak_current=10.0, continuous_current=4.0, bus_voltage=24.0, mass=0.05)
BIG = Drive("T-60", peak_current=60.0, continuous_current=25.0, bus_voltage=48.0, mass=0.1)


def with_drives(project, drives, per_joint):
    cat = dataclasses.replace(project.catalog, drives=tuple(drives))
    joints = project.robot.actuated
    return dataclasses.replace(project, catalog=cat, drives={j: tuple(per_joint) for j in joints})


def fed(design, drive):
    return Design(
        design.name,
        design.joints,
        tuple(dataclasses.replace(a, drive=drive) for a in design.actuators),
    )


@pytest.fixture(scope="module")
def arm():
    return example("arm")


@pytest.fixture(scope="module")
def arm_design(arm):
    from importlib import resources

    with resources.as_file(resources.files("jointwright.examples") / "arm") as folder:
        return load_design(folder / "design.toml", arm)


def test_current_caps_torque_and_voltage_caps_speed(arm):
    """τ_peak = min(motor, Kt·I_peak), τ_cont = min(motor, Kt·I_cont), ω_max = min(motor, V/Kt)
    (DC motor equations, Hughes & Drury ch. 3 [mem])."""
    m = arm.catalog.motor("Ringwind-05")
    f = fed_motor(m, SMALL)
    kt = m.torque_constant
    assert f.peak_torque == pytest.approx(min(m.peak_torque, kt * 10.0))
    assert f.continuous_torque == pytest.approx(min(m.continuous_torque, kt * 4.0))
    assert f.max_speed == pytest.approx(min(m.max_speed, 24.0 / kt))
    assert (f.peak_by, f.speed_by) == ("drive", "drive")  # 0.676 < 1.72 N·m; 355 < 639 rad/s
    big = fed_motor(m, BIG)
    assert big.peak_torque == m.peak_torque and big.peak_by == "motor"
    assert fed_motor(m, None).peak_torque == m.peak_torque


def test_no_drive_is_the_motor_own_ratings(arm_design):
    """Without a drive, every array entry is what it was before drives existed."""
    for a in arm_design.actuators:
        row = actuator_row(a)
        assert row["motor_peak_torque"] == a.motor.peak_torque
        assert row["motor_continuous_torque"] == a.motor.continuous_torque
        assert row["motor_max_speed"] == a.motor.max_speed
        assert row["bus_voltage"] == a.motor.bus_voltage
        assert row["mass"] == pytest.approx(a.motor.mass + sum(s.frame.mass for s in a.stages))


def test_joint_capacity_one_joint_closed_form(arm):
    """Motoring joint torque with a drive: η_f·N·Kt·I_peak when the current binds."""
    m = arm.catalog.motor("Ringwind-05")
    st = arm.catalog.stage("Orbit")
    from jointwright.drivetrain import StageChoice

    a = Actuator(m, (StageChoice(st, st.frames[-1], 6.0),), SMALL)
    expect = a.eta_forward * 6.0 * m.torque_constant * SMALL.peak_current
    assert a.capacity("motoring") == pytest.approx(min(expect, a.gear_peak_torque), rel=1e-12)
    assert a.max_joint_speed == pytest.approx(24.0 / m.torque_constant / 6.0)
    assert a.mass == pytest.approx(m.mass + st.frames[-1].mass + SMALL.mass)


def test_speed_case_sits_on_the_drive_voltage_line(arm, arm_design):
    """A low-voltage drive slows the arm's loaded transfer; the limiting joint's operating point
    lies on V_bus = R(T)·τ/Kt + Kt·ω with the drive's V_bus (DC motor equation [mem])."""
    low = Drive("T-low", peak_current=200.0, continuous_current=100.0, bus_voltage=18.0)
    p = with_drives(arm, [low], ["T-low"])
    d = fed(arm_design, low)
    ev0 = Evaluator(arm).evaluate(arrays_from_designs([arm_design]))["transfer"]
    ev = Evaluator(p).evaluate(arrays_from_designs([d]))["transfer"]
    assert ev["speed"][0] < ev0["speed"][0]
    a = assess(p, d)
    case = next(c for c in a.cases if c.name == "transfer")
    j, limit = case.metrics["envelope_limit"].split(": ", 1)
    act = d.actuator(j)
    tau, w = case.metrics[f"motor_torque:{j}"], case.metrics[f"motor_speed:{j}"]
    m = act.motor
    r = float(winding_resistance(m.resistance, m.winding_temperature_max))
    assert limit == "torque–speed line (drive bus voltage)"
    assert r * abs(tau) / m.torque_constant + m.torque_constant * abs(w) == pytest.approx(
        18.0, rel=1e-6
    )
    joint = next(s for s in a.joints if s.joint == j)
    assert joint.drive == "T-low"


def test_small_drive_lowers_payload_like_a_weaker_motor(arm, arm_design):
    """A drive is, for payload, the motor with its peak torque lowered to Kt·I_peak."""
    p = with_drives(arm, [SMALL], ["T-10"])
    d = fed(arm_design, SMALL)
    weaker = Design(
        "w",
        arm_design.joints,
        tuple(
            Actuator(
                dataclasses.replace(
                    a.motor, peak_torque=min(a.motor.peak_torque, a.motor.torque_constant * 10.0)
                ),
                a.stages,
            )
            for a in arm_design.actuators
        ),
    )
    ev = Evaluator(p).evaluate(arrays_from_designs([d]))
    # the weaker motor carries no drive mass: compare with the drive's mass set to zero
    d0 = fed(arm_design, dataclasses.replace(SMALL, mass=0.0))
    ev0 = Evaluator(p).evaluate(arrays_from_designs([d0]))
    evw = Evaluator(arm).evaluate(arrays_from_designs([weaker]))
    for case in ("lift-reach",):
        if case in ev0:
            assert ev0[case]["payload"][0] == pytest.approx(evw[case]["payload"][0], rel=1e-12)
    lift = [c.name for c in arm.cases if c.kind == "payload"]
    for name in lift:
        assert ev0[name]["payload"][0] == pytest.approx(evw[name]["payload"][0], rel=1e-12)
        assert ev[name]["payload"][0] <= ev0[name]["payload"][0] + 1e-9  # drive mass costs


def test_design_file_round_trips_the_drive(arm, arm_design, tmp_path):
    p = with_drives(arm, [SMALL, BIG], ["T-10", "T-60"])
    d = fed(arm_design, BIG)
    f = tmp_path / "d.toml"
    f.write_text(design_to_toml(d))
    back = load_design(f, p)
    assert all(a.drive == BIG for a in back.actuators)
    # several allowed drives and none named: the design must name one
    f.write_text(design_to_toml(arm_design))
    with pytest.raises(InputError, match="drive"):
        load_design(f, p)
    # one fixed drive: the design may leave it out
    fixed = with_drives(arm, [SMALL, BIG], ["T-10"])
    assert all(a.drive == SMALL for a in load_design(f, fixed).actuators)
    # a drive the project does not allow at that joint
    f.write_text(design_to_toml(d))
    with pytest.raises(InputError, match="not one the project allows"):
        load_design(f, fixed)


@pytest.mark.parametrize(
    "text, field",
    [
        (
            '[[drive]]\nname = "x"\npeak_current = "5 A"\ncontinuous_current = "6 A"\n'
            'bus_voltage = "48 V"\n',
            "drive[0].continuous_current",
        ),
        (
            '[[drive]]\nname = "x"\npeak_current = "5 A"\ncontinuous_current = "2 A"\n',
            "drive[0].bus_voltage",
        ),
        (
            '[[drive]]\nname = "x"\npeak_current = "5 V"\ncontinuous_current = "2 A"\n'
            'bus_voltage = "48 V"\n',
            "drive[0].peak_current",
        ),
        (
            '[[drive]]\nname = "x"\npeak_current = "5 A"\ncontinuous_current = "2 A"\n'
            'bus_voltage = "48 V"\nvoltage = 3\n',
            "drive[0].voltage",
        ),
        (
            '[[drive]]\nname = "x"\npeak_current = "-5 A"\ncontinuous_current = "2 A"\n'
            'bus_voltage = "48 V"\n',
            "drive[0].peak_current",
        ),
    ],
)
def test_bad_drive_entries_name_the_field(tmp_path, text, field):
    f = tmp_path / "c.toml"
    f.write_text(text)
    with pytest.raises(InputError) as e:
        load_catalog(f)
    assert e.value.field == field


def _quadruped(tmp_path, drives_table: str):
    import shutil
    from importlib import resources

    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as folder:
        shutil.copytree(folder, tmp_path / "q")
    proj = tmp_path / "q" / "project.toml"
    text = proj.read_text()
    start = text.index("[drives]")
    end = text.index("\n\n", start)
    proj.write_text(text[:start] + drives_table + text[end:])
    return proj


@pytest.mark.parametrize(
    "table, field",
    [
        ('[drives]\nall = "Nope-1"', "drives.all"),
        ("[drives]\nall = []", "drives.all"),
        ('[drives]\njoint.fl_knee = "Relay-20"', "drives.all"),
        ('[drives]\nall = "Relay-20"\njoint.elbow = "Relay-20"', "drives.joint.elbow"),
        ('[drives]\nall = ["Relay-20", "Relay-20"]', "drives.all"),
    ],
)
def test_bad_drives_table_names_the_field(tmp_path, table, field):
    with pytest.raises(InputError) as e:
        load_project(_quadruped(tmp_path, table))
    assert e.value.field == field


def test_motor_without_torque_constant_takes_no_drive(arm, arm_design, tmp_path):
    m = dataclasses.replace(arm_design.actuators[0].motor, torque_constant=None, name="bare")
    cat = dataclasses.replace(arm.catalog, motors=arm.catalog.motors + (m,), drives=(SMALL,))
    p = dataclasses.replace(arm, catalog=cat, drives={j: ("T-10",) for j in arm.robot.actuated})
    text = design_to_toml(arm_design).replace(
        f'motor = "{arm_design.actuators[0].motor.name}"', 'motor = "bare"', 1
    )
    f = tmp_path / "d.toml"
    f.write_text(text)
    with pytest.raises(InputError, match="torque_constant"):
        load_design(f, p)
    table = build_table(p)
    assert all(a.motor.name != "bare" for a in table.actuators)


def test_bundled_quadruped_uses_its_drives():
    q = example("quadruped")
    assert q.drives is not None and set(q.drives) == set(q.robot.actuated)
    assert {d.name for d in q.catalog.drives} >= {n for v in q.drives.values() for n in v}


@pytest.mark.slow
@pytest.mark.parametrize("seed, kind", [(3, "payload"), (11, "mass")])
def test_drive_choice_matches_enumeration(seed, kind):
    """The search over motor × stage × drive agrees with exhaustive enumeration (the option
    table holds every compatible drive; the oracle scores every combination)."""
    from test_solve_search import set_limits

    leg = example("leg")
    rng = np.random.default_rng(seed)
    p = dataclasses.replace(
        leg, catalog=small_catalog(leg.catalog, rng), max_stages=1, stage_kinds=None, objective={}
    )
    kts = [m.torque_constant for m in p.catalog.motors]
    peaks = [m.peak_torque for m in p.catalog.motors]
    # a drive that binds on every motor, one that binds on none
    weak = Drive(
        "W",
        peak_current=0.5 * min(t / k for t, k in zip(peaks, kts, strict=True)),
        continuous_current=0.1,
        bus_voltage=30.0,
        mass=0.02,
    )
    strong = Drive(
        "S",
        peak_current=10 * max(t / k for t, k in zip(peaks, kts, strict=True)),
        continuous_current=50.0,
        bus_voltage=60.0,
        mass=0.2,
    )
    p = with_drives(p, [weak, strong], ["W", "S"])
    table = build_table(p)
    assert len(table) == 2 * len(build_table(dataclasses.replace(p, drives=None)))
    p = set_limits(p, rng, table, keep_duty=False)
    res = agree(p, kind)
    if res.design is not None:
        assert all(a.drive is not None for a in res.design.actuators)
    assert math.isfinite(res.objective) or res.status == "infeasible"


def test_documented_drive_and_band_example_loads(tmp_path):
    """docs/catalog-format.md, "Complete example: drives and efficiency bands": the file loads
    and the numbers its text quotes come out (Kt·I and V/Kt, DC motor equations [mem])."""
    import re
    from pathlib import Path

    text = (Path(__file__).parents[1] / "docs" / "catalog-format.md").read_text(encoding="utf-8")
    block = re.search(r"```toml\n# file: drives-and-bands.toml\n(.*?)```", text, flags=re.S)
    f = tmp_path / "drives-and-bands.toml"
    f.write_text(block.group(1), encoding="utf-8")
    cat = load_catalog(f)
    m = cat.motor("RX-45")
    small, big = fed_motor(m, cat.drive("VX-12")), fed_motor(m, cat.drive("VX-30"))
    assert (small.peak_torque, small.continuous_torque) == pytest.approx((0.84, 0.35))
    assert small.max_speed == pytest.approx(24 / 0.07)
    assert (big.peak_torque, big.continuous_torque) == pytest.approx((2.1, 0.8))
    assert big.max_speed == pytest.approx(3600 * 2 * math.pi / 60)
    assert cat.stage("WG1").efficiency_band is not None
    assert cat.stage("HD1").efficiency_band.forward_change == (-0.08, 0.03)
