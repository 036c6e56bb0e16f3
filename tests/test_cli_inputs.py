"""Bad input through the real command line: one line on stderr naming file, field and rule.

Each case starts from a fresh copy of a bundled example (written by ``jointwright new``), breaks
one thing, runs a verb and checks the contract of the design brief (section 5, "Interfaces"):
exit code 2, exactly one line on stderr of the form ``jointwright: error: FILE: FIELD: RULE``,
no traceback, nothing half-written on stdout. The rules asserted are the ones stated in
docs/project-format.md, docs/design-format.md, docs/catalog-format.md and docs/robot-format.md.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner

from jointwright.cli import main

PREFIX = "jointwright: error: "


@dataclass(frozen=True)
class Bad:
    """One broken input: text edits (file, old, new) applied once each, then a verb.

    ``old`` is the text to replace (first occurrence), ``""`` to prepend ``new``, or None to
    replace the whole file by ``new``.
    """

    id: str
    edits: tuple[tuple[str, str | None, str], ...]
    verb: str  # "check", "assess" (with the example's design file) or "size"
    file: str  # the file the message must name (its base name)
    field: str  # the field the message must name, exactly
    rule: str  # a fragment of the rule the message must state
    example: str = "leg"


def _example(tmp_path_factory, name: str) -> Path:
    folder = tmp_path_factory.mktemp(f"example-{name}") / name
    result = CliRunner().invoke(main, ["new", str(folder), "--example", name])
    assert result.exit_code == 0, result.output
    return folder


@pytest.fixture(scope="module")
def examples(tmp_path_factory) -> dict[str, Path]:
    return {name: _example(tmp_path_factory, name) for name in ("leg", "arm", "quadruped")}


def _edit(folder: Path, file: str, old: str, new: str) -> None:
    path = folder / file
    text = path.read_text(encoding="utf-8") if path.exists() else ""
    if old is None:  # replace the whole file
        path.write_text(new, encoding="utf-8")
        return
    if old == "":  # prepend (or create)
        path.write_text(new + text, encoding="utf-8")
        return
    assert old in text, f"test setup: {old!r} not in {file}"
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


def _run(args: list[str]):
    return CliRunner().invoke(main, args)


def _one_error_line(result) -> str:
    """The single stderr line of a failed run, with the contract of the brief checked."""
    assert result.exit_code == 2, (result.exit_code, result.output, result.stderr)
    assert "Traceback" not in result.stdout + result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, lines
    assert lines[0].startswith(PREFIX), lines[0]
    assert result.stdout == ""
    return lines[0][len(PREFIX) :]


def _assert_names(message: str, file: str, field: str, rule: str) -> None:
    head, sep, tail = message.partition(f": {field}: ")
    assert sep, f"field {field!r} not named as ': {field}: ' in {message!r}"
    assert Path(head).name == file, f"file {file!r} not named in {message!r}"
    assert rule in tail, f"rule {rule!r} not stated in {message!r}"


POSE = 'pose = { hip_ab = "0 deg", hip_fe = "-40 deg", knee = "80 deg" }'
BELT = 'efficiency = { model = "constant", forward = 0.96, backward = 0.95 }'
KNEE_STAGES = 'stages = [{ stage = "Orbit", frame = "Orbit-3", ratio = 9 }]'

# a small valid trot-like cycle for the leg (t in s, joint angles in degrees)
CYCLE = (
    "t [s],q:hip_ab [deg],q:hip_fe [deg],q:knee [deg]\n"
    "0,0,-40,80\n0.1,0,-42,84\n0.2,0,-44,88\n0.3,0,-42,84\n"
)

BAD = [
    # --- project file: types, signs, dimensions, names -------------------------------------
    Bad(
        "robot section misspelt",
        (("project.toml", "[robot]", "[robt]"),),
        "check",
        "project.toml",
        "robt",
        "did you mean 'robot'",
    ),
    Bad(
        "IMF limit above 1",
        (("project.toml", "imf_min = 0.1", "imf_min = 1.5"),),
        "check",
        "project.toml",
        "case[3].imf_min",
        "must be from 0 to 1",
    ),
    Bad(
        "mass budget not a quantity",
        (("project.toml", 'total_mass_max = "4.0 kg"', "total_mass_max = true"),),
        "check",
        "project.toml",
        "requirements.total_mass_max",
        "must be a number or a quantity in kg",
    ),
    Bad(
        "negative mass budget",
        (("project.toml", 'total_mass_max = "4.0 kg"', 'total_mass_max = "-3.2 kg"'),),
        "check",
        "project.toml",
        "requirements.total_mass_max",
        "must be > 0 kg",
    ),
    Bad(
        "zero joint mass limit",
        (("project.toml", 'mass_max = "1.6 kg"', "mass_max = 0"),),
        "check",
        "project.toml",
        "requirements.joint.knee.mass_max",
        "must be > 0 kg",
    ),
    Bad(
        "mass budget in newtons",
        (("project.toml", 'total_mass_max = "4.0 kg"', 'total_mass_max = "3.2 N"'),),
        "check",
        "project.toml",
        "requirements.total_mass_max",
        "convertible to kg",
    ),
    Bad(
        "payload as a torque",
        (("project.toml", 'payload_min = "150 N"', 'payload_min = "150 N*m"'),),
        "check",
        "project.toml",
        "case[0].payload_min",
        "force",
    ),
    Bad(
        "max_stages as text",
        (("project.toml", "max_stages = 1", 'max_stages = "two"'),),
        "check",
        "project.toml",
        "catalog.max_stages",
        "whole number from 0 to 3",
    ),
    Bad(
        "a region key misspelt",
        (("project.toml", 'payload_min = "150 N"', 'payload_min = "150 N"\nposes_x = 1'),),
        "check",
        "project.toml",
        "case[0].poses_x",
        "(did you mean 'poses'?)",
    ),
    Bad(
        "life_min without its unit",
        (("project.toml", 'life_min = "10000 h"', 'life_min = "10000"'),),
        "check",
        "project.toml",
        "requirements.life_min",
        'needs its unit, got \'10000\': a life is commonly stated in hours',
    ),
    Bad(
        "too many stages allowed",
        (("project.toml", "max_stages = 1", "max_stages = 4"),),
        "check",
        "project.toml",
        "catalog.max_stages",
        "whole number from 0 to 3",
    ),
    Bad(
        "unknown stage kind",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\nstage_kinds = ["planetary", "harmonic"]',
            ),
        ),
        "check",
        "project.toml",
        "catalog.stage_kinds[1]",
        "unknown stage kind 'harmonic'",
    ),
    Bad(
        "unknown case kind",
        (("project.toml", 'kind = "payload"', 'kind = "lift"'),),
        "check",
        "project.toml",
        "case[0].kind",
        "must be one of payload, stance, impact",
    ),
    Bad(
        "unknown motion",
        (("project.toml", 'motion = "along"', 'motion = "up"'),),
        "check",
        "project.toml",
        "case[0].motion",
        "must be one of along, against, hold",
    ),
    Bad(
        "unknown joint in pose",
        (("project.toml", POSE, "pose = { hip_ab = 0, hip_fe = 0, knee = 1, ankle = 0 }"),),
        "check",
        "project.toml",
        "case[0].pose.ankle",
        "unknown joint 'ankle'",
    ),
    Bad(
        "missing pose joint",
        (("project.toml", POSE, 'pose = { hip_ab = "0 deg", hip_fe = "-40 deg" }'),),
        "check",
        "project.toml",
        "case[0].pose.knee",
        "every actuated joint needs a position",
    ),
    Bad(
        "pose angle in metres",
        (("project.toml", POSE, 'pose = { hip_ab = "0 deg", hip_fe = "-40 deg", knee = "8 cm" }'),),
        "check",
        "project.toml",
        "case[0].pose.knee",
        "convertible to rad",
    ),
    Bad(
        "unknown joint in requirements",
        (("project.toml", "[requirements.joint.knee]", "[requirements.joint.ankle]"),),
        "check",
        "project.toml",
        "requirements.joint.ankle",
        "unknown actuated joint 'ankle'",
    ),
    Bad(
        "unknown frame",
        (("project.toml", 'frame = "foot"', 'frame = "toe"'),),
        "check",
        "project.toml",
        "case[0].frame",
        "no frame, link or joint named 'toe'",
    ),
    Bad(
        "zero direction",
        (("project.toml", "direction = [0, 0, -1]", "direction = [0, 0, 0]"),),
        "check",
        "project.toml",
        "case[0].direction",
        "must not be the zero vector",
    ),
    Bad(
        "direction with two numbers",
        (("project.toml", "direction = [0, 0, -1]", "direction = [0, -1]"),),
        "check",
        "project.toml",
        "case[0].direction",
        "must be a list of 3 numbers",
    ),
    Bad(
        "duplicate case name",
        (("project.toml", 'name = "landing-absorb"', 'name = "jump-push"'),),
        "check",
        "project.toml",
        "case[1].name",
        "duplicate case name 'jump-push'",
    ),
    Bad(
        "unknown field (typo)",
        (("project.toml", 'payload_min = "150 N"', 'payload_mn = "150 N"'),),
        "check",
        "project.toml",
        "case[0].payload_mn",
        "unknown field",
    ),
    Bad(
        "unknown base",
        (("project.toml", 'base = "floating"', 'base = "floatin"'),),
        "check",
        "project.toml",
        "robot.base",
        "must be one of fixed, floating",
    ),
    Bad(
        "unknown actuated joint",
        (
            (
                "project.toml",
                'actuated = ["hip_ab", "hip_fe", "knee"]',
                'actuated = ["hip_ab", "hip_fe", "ankle"]',
            ),
        ),
        "check",
        "project.toml",
        "robot.actuated[2]",
        "'ankle'",
    ),
    Bad(
        "no cases",
        (("project.toml", "[[case]]", "[[cases]]"),),
        "check",
        "project.toml",
        "cases",
        "unknown field",
    ),
    Bad(
        "malformed project TOML",
        (("project.toml", "[catalog]", "[catalog"),),
        "check",
        "project.toml",
        "(syntax)",
        "malformed TOML",
    ),
    Bad(
        "missing URDF",
        (("project.toml", 'urdf = "leg.urdf"', 'urdf = "legs.urdf"'),),
        "check",
        "project.toml",
        "robot.urdf",
        "no such file",
    ),
    Bad(
        "missing catalog",
        (("project.toml", 'files = ["catalog.toml"]', 'files = ["catalogue.toml"]'),),
        "check",
        "project.toml",
        "catalog.files[0]",
        "no catalog file",
    ),
    Bad(
        "catalog list empty",
        (("project.toml", 'files = ["catalog.toml"]', "files = []"),),
        "check",
        "project.toml",
        "catalog.files",
        "non-empty list of file paths",
    ),
    Bad(
        "mount on a missing link",
        (("project.toml", 'mount_link = "thigh"', 'mount_link = "thig"'),),
        "check",
        "project.toml",
        "robot.mounts.knee.mount_link",
        "no link named 'thig'",
    ),
    Bad(
        "ambient temperature in kg",
        (("project.toml", "imf_min = 0.1", 'imf_min = 0.1\nambient = "25 kg"'),),
        "check",
        "project.toml",
        "case[3].ambient",
        "convertible to degC",
    ),
    Bad(
        "negative payload requirement",
        (("project.toml", 'payload_min = "150 N"', 'payload_min = "-150 N"'),),
        "check",
        "project.toml",
        "case[0].payload_min",
        "must be >= 0 N",
    ),
    Bad(
        "unknown named pose",
        (("project.toml", POSE, 'pose = "crouch"'),),
        "check",
        "project.toml",
        "case[0].pose",
        "unknown pose 'crouch'",
    ),
    Bad(
        "named pose missing a joint",
        (("project.toml", "[[case]]", "[poses.crouch]\nhip_ab = 0\nknee = 1\n\n[[case]]"),),
        "check",
        "project.toml",
        "poses.crouch.hip_fe",
        "every actuated joint needs a position",
    ),
    Bad(
        "tip speed while holding",
        (("project.toml", 'motion = "along"', 'motion = "hold"\ntip_speed = "1 m/s"'),),
        "check",
        "project.toml",
        "case[0].tip_speed",
        "held still",
    ),
    Bad(
        "negative tip speed",
        (("project.toml", 'motion = "along"', 'motion = "along"\ntip_speed = "-1 m/s"'),),
        "check",
        "project.toml",
        "case[0].tip_speed",
        "must be >= 0 m/s",
    ),
    Bad(
        "negative payload mass on a speed case",
        (
            (
                "project.toml",
                'speed_min = "6.0 m/s"',
                'speed_min = "6.0 m/s"\npayload_mass = "-2 kg"',
            ),
        ),
        "check",
        "project.toml",
        "case[4].payload_mass",
        "must be >= 0 kg",
    ),
    Bad(
        "speed-case acceleration in m/s",
        (
            (
                "project.toml",
                'speed_min = "6.0 m/s"',
                'speed_min = "6.0 m/s"\nacceleration = "3 m/s"',
            ),
        ),
        "check",
        "project.toml",
        "case[4].acceleration",
        "convertible to m/s**2",
    ),
    Bad(
        "payload mass on a payload case",
        (
            (
                "project.toml",
                'payload_min = "150 N"',
                'payload_min = "150 N"\npayload_mass = "2 kg"',
            ),
        ),
        "check",
        "project.toml",
        "case[0].payload_mass",
        "unknown field",
    ),
    Bad(
        "negative fixed load",
        (("project.toml", 'fixed_load = "117.7 N"', 'fixed_load = "-5 N"'),),
        "check",
        "project.toml",
        "case[0].fixed_load",
        "must be >= 0 N",
    ),
    Bad(
        "fixed load as a torque",
        (("project.toml", 'fixed_load = "117.7 N"', 'fixed_load = "5 N*m"'),),
        "check",
        "project.toml",
        "case[0].fixed_load",
        "must be a force (N) or a mass",
    ),
    Bad(
        "negative payload share",
        (("project.toml", "payload_share = 0.5", "payload_share = -1"),),
        "check",
        "project.toml",
        "case[0].payload_share",
        "must be >= 0",
    ),
    Bad(
        "payload share on an impact case",
        (("project.toml", "imf_min = 0.1", "imf_min = 0.1\npayload_share = 1"),),
        "check",
        "project.toml",
        "case[3].payload_share",
        "unknown field",
    ),
    Bad(
        "stroke and acceleration together",
        (("project.toml", 'stroke = "0.1 m"', 'stroke = "0.1 m"\nacceleration = "5 m/s^2"'),),
        "check",
        "project.toml",
        "case[4].stroke",
        "not both",
    ),
    Bad(
        "tip force in kg",
        (("project.toml", 'stroke = "0.1 m"', 'stroke = "0.1 m"\ntip_force = [0, 0, "2 kg"]'),),
        "check",
        "project.toml",
        "case[4].tip_force[2]",
        "convertible to N",
    ),
    Bad(
        "zero stroke",
        (("project.toml", 'stroke = "0.1 m"', 'stroke = "0 m"'),),
        "check",
        "project.toml",
        "case[4].stroke",
        "must be > 0",
    ),
    # --- URDF ------------------------------------------------------------------------------
    Bad(
        "malformed URDF",
        (
            (
                "leg.urdf",
                '<joint name="knee" type="revolute">',
                '<joint name="knee" type="revolute"',
            ),
        ),
        "check",
        "leg.urdf",
        "urdf line 41",
        "malformed XML",
    ),  # where the parser notices
    Bad(
        "URDF joint to a missing link",
        (("leg.urdf", '<child link="shank"/>', '<child link="shin"/>'),),
        "check",
        "leg.urdf",
        "urdf.joint[knee].child",
        "no link named 'shin'",
    ),
    # --- catalog file ----------------------------------------------------------------------
    Bad(
        "negative motor mass",
        (("catalog.toml", 'mass = "0.18 kg"', 'mass = "-0.18 kg"'),),
        "check",
        "catalog.toml",
        "motor[0].mass",
        "must be > 0 kg",
    ),
    Bad(
        "zero frame mass",
        (("catalog.toml", 'mass = "0.22 kg"', "mass = 0"),),
        "check",
        "catalog.toml",
        "stage[0].frame[0].mass",
        "must be > 0 kg",
    ),
    Bad(
        "torque written in kg",
        (("catalog.toml", 'peak_torque = "0.878 N*m"', 'peak_torque = "3 kg"'),),
        "check",
        "catalog.toml",
        "motor[0].peak_torque",
        "convertible to N*m",
    ),
    Bad(
        "rotor inertia as a bool",
        (("catalog.toml", 'rotor_inertia = "0.329 kg*cm^2"', "rotor_inertia = true"),),
        "check",
        "catalog.toml",
        "motor[0].rotor_inertia",
        "must be a number or a quantity",
    ),
    Bad(
        "forward efficiency above 1",
        (("catalog.toml", BELT, BELT.replace("forward = 0.96", "forward = 1.2")),),
        "check",
        "catalog.toml",
        "stage[1].efficiency.forward",
        "(0, 1]",
    ),
    Bad(
        "backward efficiency at -1",
        (("catalog.toml", BELT, BELT.replace("backward = 0.95", "backward = -1.0")),),
        "check",
        "catalog.toml",
        "stage[1].efficiency.backward",
        "(-1, 1]",
    ),
    Bad(
        "backward above forward (constant pair)",
        (("catalog.toml", BELT, BELT.replace("backward = 0.95", "backward = 0.97")),),
        "check",
        "catalog.toml",
        "stage[1].efficiency.backward",
        "forward",
    ),
    Bad(
        "unknown efficiency model",
        (("catalog.toml", BELT, BELT.replace('"constant"', '"lossless"')),),
        "check",
        "catalog.toml",
        "stage[1].efficiency.model",
        "lossless",
    ),
    Bad(
        "unknown stage kind in catalog",
        (("catalog.toml", 'kind = "belt"', 'kind = "chain"'),),
        "check",
        "catalog.toml",
        "stage[1].kind",
        "'chain'",
    ),
    Bad(
        "duplicate motor name",
        (("catalog.toml", 'name = "Flatwind-2"', 'name = "Flatwind-1"'),),
        "check",
        "catalog.toml",
        "motor[1]",
        "duplicate motor name 'Flatwind-1'",
    ),
    Bad(
        "unknown motor field (typo)",
        (("catalog.toml", 'continuous_torque = "0.274 N*m"', 'continous_torque = "0.274 N*m"'),),
        "check",
        "catalog.toml",
        "motor[0].continous_torque",
        "unknown field",
    ),
    Bad(
        "continuous above peak",
        (("catalog.toml", 'continuous_torque = "0.274 N*m"', 'continuous_torque = "0.9 N*m"'),),
        "check",
        "catalog.toml",
        "motor[0].continuous_torque",
        "must not exceed peak_torque",
    ),
    Bad(
        "ratios not ascending",
        (("catalog.toml", "ratios = [11, 15, 21, 29]", "ratios = [11, 21, 15, 29]"),),
        "check",
        "catalog.toml",
        "stage[2].ratios[2]",
        "strictly",
    ),
    Bad(
        "malformed catalog TOML",
        (("catalog.toml", "[[stage]]", "[[stage]"),),
        "check",
        "catalog.toml",
        "(syntax)",
        "malformed TOML",
    ),
    Bad(
        "motors CSV row too short",
        (
            ("catalog.toml", "", 'motors_csv = "more.csv"\n'),
            (
                "more.csv",
                "",
                "name,peak_torque,continuous_torque,rotor_inertia,mass,max_speed\n"
                "QX-1,1.0,0.5,1e-5\n",
            ),
        ),
        "check",
        "more.csv",
        "row 2",
        "cells",
    ),
    Bad(
        "motors CSV negative mass",
        (
            ("catalog.toml", "", 'motors_csv = "more.csv"\n'),
            (
                "more.csv",
                "",
                "name,peak_torque,continuous_torque,rotor_inertia,mass,max_speed\n"
                "QX-1,1.0,0.5,1e-5,-0.2,300\n",
            ),
        ),
        "check",
        "more.csv",
        "row 2, column mass",
        "must be > 0 kg",
    ),
    Bad(
        "motors CSV missing",
        (("catalog.toml", "", 'motors_csv = "more.csv"\n'),),
        "check",
        "more.csv",
        "(file)",
        "file not found",
    ),
    # --- design file -----------------------------------------------------------------------
    Bad(
        "ratio not offered",
        (("design.toml", "ratio = 6 }]", "ratio = 11 }]"),),
        "assess",
        "design.toml",
        "joint.hip_ab.stages[0].ratio",
        "ratio 11 not offered by Orbit",
    ),
    Bad(
        "ratio outside a continuous range",
        (("catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]", "ratio_range = [3.0, 8.0]"),),
        "assess",
        "design.toml",
        "joint.knee.stages[0].ratio",
        "ratio 9 not offered by Orbit: must be in [3, 8]",
    ),
    Bad(
        "ratio as text",
        (("design.toml", "ratio = 6 }]", 'ratio = "six" }]'),),
        "assess",
        "design.toml",
        "joint.hip_ab.stages[0].ratio",
        "cannot read 'six'",
    ),
    Bad(
        "negative ratio",
        (("design.toml", "ratio = 6 }]", "ratio = -6 }]"),),
        "assess",
        "design.toml",
        "joint.hip_ab.stages[0].ratio",
        "must be > 0",
    ),
    Bad(
        "unknown stage type",
        (("design.toml", 'stage = "Orbit"', 'stage = "PQ"'),),
        "assess",
        "design.toml",
        "joint.hip_ab.stages[0].stage",
        "unknown stage type 'PQ'",
    ),
    Bad(
        "unknown frame size",
        (("design.toml", 'frame = "Orbit-2"', 'frame = "Orbit-9"'),),
        "assess",
        "design.toml",
        "joint.hip_ab.stages[0].frame",
        "unknown frame 'Orbit-9' of Orbit",
    ),
    Bad(
        "unknown motor",
        (("design.toml", 'motor = "Flatwind-6"', 'motor = "Flatwind-99"'),),
        "assess",
        "design.toml",
        "joint.hip_ab.motor",
        "unknown motor 'Flatwind-99'",
    ),
    Bad(
        "unknown joint in design",
        (("design.toml", "[joint.knee]", "[joint.ankle]"),),
        "assess",
        "design.toml",
        "joint.ankle",
        "unknown joint 'ankle'",
    ),
    Bad(
        "too many stages",
        (
            (
                "design.toml",
                KNEE_STAGES,
                KNEE_STAGES[:-1] + ', { stage = "Strap", frame = "Strap-2", ratio = 1 }]',
            ),
        ),
        "assess",
        "design.toml",
        "joint.knee.stages",
        "at most 1 stages",
    ),
    Bad(
        "unknown design field (typo)",
        (("design.toml", 'motor = "Flatwind-6"', 'motr = "Flatwind-6"'),),
        "assess",
        "design.toml",
        "joint.hip_ab.motr",
        "did you mean 'motor'",
    ),
    Bad(
        "malformed design TOML",
        (("design.toml", "[design]", "[design"),),
        "assess",
        "design.toml",
        "(syntax)",
        "malformed TOML",
    ),
    # --- duty-cycle trajectory (CSV) -------------------------------------------------------
    Bad(
        "trajectory missing",
        (("project.toml", 'trajectory = "gait.csv"', 'trajectory = "gaits.csv"'),),
        "check",
        "project.toml",
        "case[6].trajectory",
        "file not found",
    ),
    Bad(
        "ambient in kg",
        (("project.toml", 'ambient = "30 degC"', 'ambient = "30 kg"'),),
        "check",
        "project.toml",
        "case[6].ambient",
        "convertible to degC",
    ),
    Bad(
        "pose on a duty case",
        (("project.toml", 'ambient = "30 degC"', 'ambient = "30 degC"\npose = { knee = 1 }'),),
        "check",
        "project.toml",
        "case[6].pose",
        "unknown field",
    ),
    Bad(
        "trajectory: unknown joint column",
        (("gait.csv", None, CYCLE.replace("q:knee [deg]", "q:ankle [deg]")),),
        "assess",
        "gait.csv",
        "column 'q:ankle [deg]'",
        "unknown joint 'ankle'",
    ),
    Bad(
        "trajectory: joint column missing",
        (
            (
                "gait.csv",
                None,
                "\n".join(",".join(row.split(",")[:3]) for row in CYCLE.splitlines()) + "\n",
            ),
        ),
        "assess",
        "gait.csv",
        "column 'q:knee'",
        "every joint needs its q",
    ),
    Bad(
        "trajectory: row too short",
        (("gait.csv", None, CYCLE.replace("0.1,0,-42,84", "0.1,0,-42")),),
        "assess",
        "gait.csv",
        "row 2 (line 3)",
        "has 3 cells, the header has 4",
    ),
    Bad(
        "trajectory: not a number",
        (("gait.csv", None, CYCLE.replace("0.1,0,-42,84", "0.1,0,-42,abc")),),
        "assess",
        "gait.csv",
        "row 2 (line 3), column 'q:knee [deg]'",
        "must be a number",
    ),
    Bad(
        "trajectory: time goes back",
        (("gait.csv", None, CYCLE.replace("0.2,0,-44,88", "0.05,0,-44,88")),),
        "assess",
        "gait.csv",
        "row 3 (line 4), column 't'",
        "strictly increasing",
    ),
    Bad(
        "trajectory: half a force",
        (
            (
                "gait.csv",
                None,
                CYCLE.replace("q:knee [deg]\n", "q:knee [deg],f:foot:x [N]\n")
                .replace("80\n", "80,0\n")
                .replace("84\n", "84,0\n")
                .replace("88\n", "88,0\n"),
            ),
        ),
        "assess",
        "gait.csv",
        "column 'f:foot:x'",
        "give all of f:foot:x, f:foot:y, f:foot:z",
    ),
    Bad(
        "trajectory: empty file", (("gait.csv", None, ""),), "assess", "gait.csv", "header", "empty"
    ),
    # --- the arm example -------------------------------------------------------------------
    Bad(
        "arm: payload as a length",
        (("project.toml", 'payload_min = "3 kg"', 'payload_min = "3 m"'),),
        "check",
        "project.toml",
        "case[0].payload_min",
        "force",
        example="arm",
    ),
    Bad(
        "arm: payload mass with nothing that grows with the payload",
        (("project.toml", "payload_share = 1.0\npayload_min", "payload_share = 0\npayload_min"),),
        "check",
        "project.toml",
        "case[0].payload_min",
        "needs payload_share > 0",
        example="arm",
    ),
    Bad(
        "arm: IMF on a fixed base",
        (("project.toml", 'effective_mass_max = "4 kg"', "imf_min = 0.3"),),
        "check",
        "project.toml",
        "case[2].imf_min",
        "needs a floating base",
        example="arm",
    ),
    Bad(
        "quadruped: stance without contacts",
        (("project.toml", "contacts = [{", "contact = [{"),),
        "check",
        "project.toml",
        "case[1].contacts",
        "at least one contact",
        example="quadruped",
    ),
    Bad(
        "quadruped: contact on a missing frame",
        (
            (
                "project.toml",
                '{ frame = "fl_foot", friction = 0.6 },\n',
                '{ frame = "fl_toe", friction = 0.6 },\n',
            ),
        ),
        "check",
        "project.toml",
        "case[0].contacts[0].frame",
        "no frame, link or joint named 'fl_toe'",
        example="quadruped",
    ),
    Bad(
        "quadruped: contact key misspelt",
        (
            (
                "project.toml",
                '{ frame = "fl_foot", friction = 0.6 },\n',
                '{ frame = "fl_foot", fricton = 0.6 },\n',
            ),
        ),
        "check",
        "project.toml",
        "case[0].contacts[0].friction",
        "the table has 'fricton': a misspelling?",
        example="quadruped",
    ),
    Bad(
        "quadruped: negative friction",
        (
            (
                "project.toml",
                '{ frame = "fl_foot", friction = 0.6 },\n',
                '{ frame = "fl_foot", friction = -0.6 },\n',
            ),
        ),
        "check",
        "project.toml",
        "case[0].contacts[0].friction",
        "must be >= 0",
        example="quadruped",
    ),
    Bad(
        "quadruped: duplicate contact",
        (
            (
                "project.toml",
                '{ frame = "fr_foot", friction = 0.6 },\n',
                '{ frame = "fl_foot", friction = 0.6 },\n',
            ),
        ),
        "check",
        "project.toml",
        "case[0].contacts[1].frame",
        "duplicate contact 'fl_foot'",
        example="quadruped",
    ),
    Bad(
        "quadruped: zero contact normal",
        (
            (
                "project.toml",
                '{ frame = "fl_foot", friction = 0.6 },\n',
                '{ frame = "fl_foot", friction = 0.6, normal = [0, 0, 0] },\n',
            ),
        ),
        "check",
        "project.toml",
        "case[0].contacts[0].normal",
        "zero vector",
        example="quadruped",
    ),
    Bad(
        "arm: base pose on a fixed base",
        (("project.toml", 'motion = "along"', 'motion = "along"\nbase_rpy = [0, "90 deg", 0]'),),
        "check",
        "project.toml",
        "case[0].base_rpy",
        "only for a floating base",
        example="arm",
    ),
    # --- the [objective] table, read when sizing starts (before any search) ----------------
    Bad(
        "objective: unknown key",
        (("project.toml", "max_stages = 1", 'max_stages = 1\n\n[objective]\nmaximise = "mass"\n'),),
        "size",
        "project.toml",
        "objective.maximise",
        "unknown field",
        example="arm",
    ),
    Bad(
        "objective: minimize an objective that is maximized",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\nminimize = "payload"\n',
            ),
        ),
        "check",
        "project.toml",
        "objective.minimize",
        "must be one of cost, mass",
        example="arm",
    ),
    Bad(
        "objective: maximize and minimize both given",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\nmaximize = "mass"\nminimize = "mass"\n',
            ),
        ),
        "check",
        "project.toml",
        "objective.minimize",
        "not both",
        example="arm",
    ),
    Bad(
        "objective: unknown objective",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\nmaximize = "weight"\n',
            ),
        ),
        "size",
        "project.toml",
        "objective.maximize",
        "must be one of payload, mass, imf",
        example="arm",
    ),
    Bad(
        "payload objective with no case growing with the payload",
        (
            ("project.toml", "payload_share = 1.0", "payload_share = 0"),
            ("project.toml", "payload_share = 1.0", "payload_share = 0"),
            # a payload mass needs a share > 0 (its own error): the requirements in N
            ("project.toml", 'payload_min = "3 kg"', 'payload_min = "30 N"'),
            ("project.toml", 'payload_min = "5 kg"', 'payload_min = "50 N"'),
        ),
        "size",
        "project.toml",
        "case",
        "payload_share > 0",
        example="arm",
    ),
    Bad(
        "objective: pin on an unknown joint",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\npin = { ankle = { motor = "Ringwind-01" } }\n',
            ),
        ),
        "size",
        "project.toml",
        "objective.pin.ankle",
        "unknown joint",
        example="arm",
    ),
    Bad(
        "objective: pin an unknown motor",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\npin = { elbow = { motor = "Ringwind-00" } }\n',
            ),
        ),
        "size",
        "project.toml",
        "objective.pin.elbow.motor",
        "unknown motor 'Ringwind-00'",
        example="arm",
    ),
    Bad(
        "objective: shared group of one",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\nshared = [["elbow"]]\n',
            ),
        ),
        "size",
        "project.toml",
        "objective.shared[0]",
        "at least two joints",
        example="arm",
    ),
    Bad(
        "objective: exclude not a list",
        (
            (
                "project.toml",
                "max_stages = 1",
                'max_stages = 1\n\n[objective]\nexclude = "Flexring"\n',
            ),
        ),
        "size",
        "project.toml",
        "objective.exclude",
        "must be a list",
        example="arm",
    ),
    Bad(
        "arm: stage kind restriction unknown",
        (("project.toml", "max_stages = 1", 'max_stages = 1\nstage_kinds = ["strainwave"]'),),
        "check",
        "project.toml",
        "catalog.stage_kinds[0]",
        "unknown stage kind",
        example="arm",
    ),
    Bad(
        "URDF negative link mass",
        (("leg.urdf", '<mass value="0.45"/>', '<mass value="-0.45"/>'),),
        "check",
        "leg.urdf",
        "urdf.link[hip].inertial.mass.value",
        "must be >= 0 kg",
    ),
    Bad(
        "URDF mass not a number",
        (("leg.urdf", '<mass value="0.45"/>', '<mass value="abc"/>'),),
        "check",
        "leg.urdf",
        "urdf.link[hip].inertial.mass.value",
        "number",
    ),
    Bad(
        "URDF negative inertia",
        (("leg.urdf", 'ixx="0.0004"', 'ixx="-0.0004"'),),
        "check",
        "leg.urdf",
        "urdf.link[hip].inertial.inertia",
        "positive semidefinite",
    ),
    Bad(
        "URDF zero joint axis",
        (("leg.urdf", '<axis xyz="0 1 0"/>', '<axis xyz="0 0 0"/>'),),
        "check",
        "leg.urdf",
        "urdf.joint[hip_fe].axis.xyz",
        "zero vector",
    ),
    Bad(
        "trajectory: angle column in metres",
        (("gait.csv", None, CYCLE.replace("q:knee [deg]", "q:knee [m]")),),
        "assess",
        "gait.csv",
        "column 'q:knee [m]'",
        "revolute",
    ),
    # --- gear life and landing shock -------------------------------------------------------
    Bad(
        "life requirement negative",
        (("project.toml", 'life_min = "10000 h"', 'life_min = "-10000 h"'),),
        "check",
        "project.toml",
        "requirements.life_min",
        "must be > 0 s",
    ),
    Bad(
        "life share above one",
        (("project.toml", 'ambient = "30 degC"', 'ambient = "30 degC"\nlife_share = 2'),),
        "check",
        "project.toml",
        "case[6].life_share",
        "must be from 0 to 1",
    ),
    Bad(
        "impact speed without restitution",
        (("project.toml", "restitution = 0.0\n", ""),),
        "check",
        "project.toml",
        "case[3].restitution",
        "is required with impact_speed",
    ),
    Bad(
        "restitution above one",
        (("project.toml", "restitution = 0.0", "restitution = 1.2"),),
        "check",
        "project.toml",
        "case[3].restitution",
        "must be from 0 to 1",
    ),
    Bad(
        "shock limit without an impact speed",
        (
            ("project.toml", 'impact_speed = "1.0 m/s"\n', ""),
            ("project.toml", "restitution = 0.0\n", ""),
        ),
        "check",
        "project.toml",
        "case[3].impact_speed",
        "is required with shock_use_max",
    ),
]


# --- loads that reach every joint, regions of poses, objective cases (docs/project-format.md)
JUMP_MIN = 'payload_min = "150 N"'
TORQUE_CASE = 'ambient = "30 degC"\n\n[[case]]\nname = "supplier"\nkind = "torque"\n'


def _jump(id, extra, field, rule, verb="check"):
    return Bad(
        id,
        (("project.toml", JUMP_MIN, JUMP_MIN + "\n" + extra),),
        verb,
        "project.toml",
        field,
        rule,
    )


BAD += [
    _jump("moment of two components", "moment = [1, 2]", "case[0].moment", "list of 3 numbers"),
    _jump("moment in newtons", 'moment = ["1 N", 0, 0]', "case[0].moment[0]", "N*m"),
    _jump("offset in kilograms", 'offset = ["1 kg", 0, 0]', "case[0].offset[0]", "m"),
    _jump("grid count zero", "grid = { knee = [1.0, 2.0, 0] }", "case[0].grid.knee[2]", ">= 1"),
    _jump(
        "grid beyond the joint limits",
        "grid = { knee = [1.0, 3.5, 3] }",
        "case[0].grid.knee[1]",
        "outside the joint's limits",
    ),
    _jump("grid of two numbers", "grid = { knee = [1.0, 2.0] }", "case[0].grid.knee", "[low"),
    _jump(
        "grid of an unknown joint", "grid = { ankle = [0, 1, 2] }", "case[0].grid.ankle", "ankle"
    ),
    _jump("poses next to pose", 'poses = ["stand"]', "case[0].pose", "not both"),
    _jump("every without a trajectory", "every = 2", "case[0].every", "trajectory_poses"),
    _jump(
        "region trajectory missing",
        'trajectory_poses = "sweep.csv"',
        "case[0].trajectory_poses",
        "file not found",
    ),
    _jump(
        "two region fields",
        'grid = { knee = [1.0, 2.0, 2] }\ntrajectory_poses = "gait.csv"',
        "case[0].trajectory_poses",
        "give one of",
    ),
    Bad(
        "case name with @",
        (("project.toml", 'name = "jump-push"', 'name = "jump@push"'),),
        "check",
        "project.toml",
        "case[0].name",
        "must not contain '@'",
    ),
    Bad(
        "torque case of an unknown joint",
        (("project.toml", 'ambient = "30 degC"', TORQUE_CASE + "torques = { ankle = 3.0 }"),),
        "check",
        "project.toml",
        "case[7].torques.ankle",
        "unknown actuated joint",
    ),
    Bad(
        "torque case in kilograms",
        (("project.toml", 'ambient = "30 degC"', TORQUE_CASE + 'torques = { knee = "3 kg" }'),),
        "check",
        "project.toml",
        "case[7].torques.knee",
        "N*m",
    ),
    Bad(
        "torque case without torques",
        (("project.toml", 'ambient = "30 degC"', TORQUE_CASE + 'motion = "hold"'),),
        "check",
        "project.toml",
        "case[7].torques",
        "is required",
    ),
    Bad(
        "torque case with a pose region",
        (
            (
                "project.toml",
                'ambient = "30 degC"',
                TORQUE_CASE + 'torques = { knee = 3.0 }\nposes = ["x"]',
            ),
        ),
        "check",
        "project.toml",
        "case[7].poses",
        "no pose region",
    ),
    Bad(
        "objective case unknown",
        (("project.toml", "", '[objective]\ncases = ["nope"]\n'),),
        "size",
        "project.toml",
        "objective.cases[0]",
        "unknown case",
    ),
]


@pytest.mark.parametrize("bad", BAD, ids=[b.id for b in BAD])
def test_bad_input_gives_one_clear_line(bad: Bad, examples, tmp_path):
    message = _one_error_line(_run_broken(bad, examples, tmp_path))
    _assert_names(message, bad.file, bad.field, bad.rule)


def _run_broken(bad: Bad, examples, tmp_path):
    """Copy the example, apply the edits, run the verb."""
    folder = tmp_path / bad.example
    shutil.copytree(examples[bad.example], folder)
    for file, old, new in bad.edits:
        _edit(folder, file, old, new)
    args = [bad.verb, str(folder / "project.toml")]
    if bad.verb == "assess":
        args += ["--design", str(folder / "design.toml")]
    return _run(args)


def test_at_least_25_distinct_bad_inputs():
    # the task: at least 25 different broken inputs, each with its own field or rule
    assert len({(b.file, b.field, b.rule) for b in BAD}) >= 25


# --- missing files ---------------------------------------------------------------------------


def test_missing_project_file(tmp_path):
    message = _one_error_line(_run(["check", str(tmp_path / "nowhere.toml")]))
    _assert_names(message, "nowhere.toml", "(file)", "file not found")


def test_missing_design_file(examples, tmp_path):
    project = examples["leg"] / "project.toml"
    message = _one_error_line(
        _run(["assess", str(project), "--design", str(tmp_path / "none.toml")])
    )
    _assert_names(message, "none.toml", "(file)", "file not found")


def test_size_time_limit_must_be_positive(examples):
    project = examples["arm"] / "project.toml"
    message = _one_error_line(_run(["size", str(project), "--time-limit", "-1"]))
    _assert_names(message, "<command line>", "--time-limit", "must be > 0 s")


@pytest.mark.parametrize("gap", ["-0.5", "1", "3", "nan"])
def test_size_gap_must_be_a_fraction(examples, gap):
    project = examples["arm"] / "project.toml"
    message = _one_error_line(_run(["size", str(project), "--gap", gap]))
    _assert_names(message, "<command line>", "--gap", "must be at least 0 and below 1")


def test_new_into_a_folder_that_is_not_empty(tmp_path):
    (tmp_path / "notes.txt").write_text("keep me")
    message = _one_error_line(_run(["new", str(tmp_path)]))
    _assert_names(message, tmp_path.name, "(folder)", "must be new or empty")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]  # nothing was written


def test_project_that_is_not_utf8(examples, tmp_path):
    folder = tmp_path / "leg"
    shutil.copytree(examples["leg"], folder)
    (folder / "project.toml").write_bytes(b'[project]\nname = "\xff\xfe"\n')
    message = _one_error_line(_run(["check", str(folder / "project.toml")]))
    _assert_names(message, "project.toml", "(encoding)", "UTF-8")


# --- files that cannot be read, or are not UTF-8; numbers beyond float range ------------------


@pytest.mark.parametrize(
    "file, verb",
    [
        ("project.toml", "check"),
        ("catalog.toml", "check"),
        ("gait.csv", "assess"),
        ("design.toml", "assess"),
    ],
)
def test_a_file_that_is_not_utf8(examples, tmp_path, file, verb):
    # 0xFF never occurs in UTF-8 (RFC 3629, section 1) [pub]
    folder = tmp_path / "leg"
    shutil.copytree(examples["leg"], folder)
    (folder / file).write_bytes((folder / file).read_bytes() + b"\n# caf\xe9\xff\n")
    args = [verb, str(folder / "project.toml")] + (
        ["--design", str(folder / "design.toml")] if verb == "assess" else []
    )
    message = _one_error_line(_run(args))
    assert Path(message[len(PREFIX) :].split(":")[0]).name == file and "UTF-8" in message


@pytest.mark.parametrize(
    "file, verb",
    [
        ("project.toml", "check"),
        ("catalog.toml", "check"),
        ("gait.csv", "assess"),
        ("design.toml", "assess"),
    ],
)
def test_a_file_that_cannot_be_read(examples, tmp_path, monkeypatch, file, verb):
    # the tests may run as root, for whom chmod 000 still reads: the refusal is injected as the
    # operating system reports it (PermissionError, errno EACCES)
    import builtins
    import errno
    import io
    import pathlib

    folder = tmp_path / "leg"
    shutil.copytree(examples["leg"], folder)
    target = str(folder / file)
    real_open, real_io_open, real_path_open = builtins.open, io.open, pathlib.Path.open

    def refuse(path):
        if str(path) == target:
            raise PermissionError(errno.EACCES, "Permission denied", str(path))

    def fake_open(path, *a, **k):
        refuse(path)
        return real_open(path, *a, **k)

    def fake_path_open(self, *a, **k):
        refuse(self)
        return real_path_open(self, *a, **k)

    monkeypatch.setattr(builtins, "open", fake_open)
    monkeypatch.setattr(pathlib.Path, "open", fake_path_open)
    args = [verb, str(folder / "project.toml")] + (
        ["--design", str(folder / "design.toml")] if verb == "assess" else []
    )
    message = _one_error_line(_run(args))
    assert (
        Path(message[len(PREFIX) :].split(":")[0]).name == file and "Permission denied" in message
    )


@pytest.mark.parametrize("old, new, field, rule", [
    ('total_mass_max = "4.0 kg"', "total_mass_max = " + "9" * 400, "requirements.total_mass_max",
     "must be finite, got a 400-digit number"),
    ('mass_max = "1.6 kg"', "mass_max = -" + "1" * 400, "requirements.joint.knee.mass_max", "must be finite"),
    ('mass_max = "1.6 kg"', 'mass_max = "1.6 kg"\nratio_min = 40\nratio_max = 20',
     "requirements.joint.knee.ratio_min", "must not exceed ratio_max (20), got 40"),
])  # fmt: skip
def test_out_of_range_numbers_and_crossed_limits(examples, tmp_path, old, new, field, rule):
    folder = tmp_path / "leg"
    shutil.copytree(examples["leg"], folder)
    _edit(folder, "project.toml", old, new)
    _assert_names(
        _one_error_line(_run(["check", str(folder / "project.toml")])), "project.toml", field, rule
    )


# --- a singular pose where a metric needs the task-space inertia ------------------------------

# The arm stretched straight up (every pitch joint at 0) with every case's direction along the
# arm (z): the joints cannot move the tool along z, so J·M⁻¹·Jᵀ is singular there and the
# task-space inertia Λ = (J·M⁻¹·Jᵀ)⁻¹ does not exist (Khatib 1987 [pub]). Along z:
# - effective mass 1/(uᵀ·J·M⁻¹·Jᵀ·u) with uᵀJ = 0 is unbounded: ∞, and it misses any maximum;
# - payload: a = Jᵀu = 0, so the tip force loads no joint and the ratio bound of the
#   one-variable LP is unbounded (Chiacchio et al. 1997 [mem]): ∞, the structure carries it;
# - speed along u with minimum-norm joint rates: no joint rate moves the tip along u: 0 [trade];
# - back-drive force: the force puts no torque on any joint, so nothing starts moving: ∞.
# Infinite values are written "inf" in JSON, never NaN (design brief section 5).
POSE_RE = r"pose = \{[^}]*\}"
STRAIGHT = "pose = { shoulder_yaw = 0, shoulder_pitch = 0, elbow = 0, wrist_pitch = 0, wrist_yaw = 0, wrist_flex = 0 }"


def test_singular_pose_gives_infinities_not_nan(examples, tmp_path):
    import json
    import re

    folder = tmp_path / "arm"
    shutil.copytree(examples["arm"], folder)
    text = (folder / "project.toml").read_text()
    text = re.sub(POSE_RE, STRAIGHT, text)
    text = re.sub(r"direction = \[[^\]]*\]", "direction = [0, 0, 1]", text)
    (folder / "project.toml").write_text(text)
    result = _run(
        ["assess", str(folder / "project.toml"), "--design", str(folder / "design.toml"), "--json"]
    )
    assert result.exit_code == 0, result.output
    assert "NaN" not in result.stdout
    data = json.loads(result.stdout)
    metrics = {c["name"]: c["metrics"] for c in data["cases"]}
    for key in ("effective_mass", "effective_mass_motoring", "effective_mass_frictionless"):
        assert metrics["side-collision"][key] == "inf", key
    assert metrics["reach-lift"]["payload"] == "inf"
    assert metrics["transfer"]["speed"] == 0.0
    assert metrics["unpowered-push"]["backdrive_force"] == "inf"
    checks = {(c["subject"], c["requirement"]): c for c in data["checks"]}
    assert checks[("side-collision", "effective_mass_max")]["ok"] is False
    assert checks[("side-collision", "effective_mass_max")]["margin"] == "-inf"
    assert checks[("transfer", "speed_min")]["margin"] == -1.0  # (0 − limit)/limit


# --- a couple through a real process: exit code and stderr as a shell sees them --------------


@pytest.mark.parametrize("verb", ["check", "assess"])
def test_subprocess_exit_code_and_single_line(verb, examples, tmp_path):
    folder = tmp_path / "leg"
    shutil.copytree(examples["leg"], folder)
    _edit(folder, "catalog.toml", 'mass = "0.18 kg"', 'mass = "-0.18 kg"')
    args = [sys.executable, "-m", "jointwright.cli", verb, str(folder / "project.toml")]
    if verb == "assess":
        args += ["--design", str(folder / "design.toml")]
    proc = subprocess.run(args, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in proc.stderr
    _assert_names(lines[0][len(PREFIX) :], "catalog.toml", "motor[0].mass", "must be > 0 kg")


# --- usage errors (the command line itself, not a file) ----------------------------------------


@pytest.mark.parametrize(
    "args, says",
    [
        (["new", "somewhere", "--example", "hexapod"], "Invalid value for '--example'"),
        (["assess", "project.toml"], "Missing option '--design'"),
        (["chek", "project.toml"], "No such command 'chek' (did you mean 'check'?)"),
        (["size", "project.toml", "--objectiv", "mass"], "No such option '--objectiv'"),
    ],
)
def test_usage_errors_exit_2_without_traceback(args, says):
    # a command-line mistake is bad input too: exit code 2 and one line naming the option and
    # the rule, with where the options are listed; no traceback
    result = _run(args)
    assert result.exit_code == 2
    assert "Traceback" not in result.stderr and result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("jointwright: error: <command line>: ")
    assert says in lines[0] and "--help)" in lines[0]


# --- property: any one value replaced by a hostile one ends cleanly --------------------------

HOSTILE = [
    "0",
    "-1",
    "1e9",
    "1e-12",
    "-0.0",
    '"0 kg"',
    '"-3 N*m"',
    '"3 kg"',
    '"abc"',
    "true",
    "[]",
    "[0, 0, 0]",
    "{}",
    '"1e400"',
    '"nan"',
    '"inf"',
    '"-inf"',
    '"5 deg"',
    '"-1 m/s"',
    '""',
    "[1, 2]",
    '"foot"',
    '"hip_ab"',
    "9" * 400,
    "-" + "9" * 400,
]
VALUE_RE = r"(?m)(=\s*)([^\n#{\[]+?|\[[^\]\n]*\])(\s*(#.*)?$|\s*[,}])"


@pytest.mark.slow
@pytest.mark.parametrize(
    "example",
    [
        "leg",
        # these draws hit the first known gap below (an efficiency model given as a list)
        "arm",
        "quadruped",
    ],
)
def test_any_value_replaced_by_a_hostile_one_ends_cleanly(example, examples):
    # The contract of the design brief §5 as a property: whatever one value of a project,
    # catalog or design file is replaced by, the run either succeeds without NaN in its JSON or
    # ends with exit code 2 and one line; never a traceback. Derandomized: the same draws each run.
    import re
    import tempfile

    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    source = examples[example]
    files = sorted(p.name for p in source.iterdir() if p.suffix == ".toml")

    @settings(
        max_examples=40, deadline=None, derandomize=True, suppress_health_check=list(HealthCheck)
    )
    @given(which=st.sampled_from(files), k=st.integers(0, 10**6), value=st.sampled_from(HOSTILE))
    def check(which, k, value):
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp) / example
            shutil.copytree(source, folder)
            text = (folder / which).read_text(encoding="utf-8")
            spots = list(re.finditer(VALUE_RE, text))
            m = spots[k % len(spots)]
            (folder / which).write_text(
                text[: m.start(2)] + value + text[m.end(2) :], encoding="utf-8"
            )
            args = ["check", str(folder / "project.toml"), "--json"]
            if which == "design.toml":  # only assess reads the design
                args = [
                    "assess",
                    str(folder / "project.toml"),
                    "--design",
                    str(folder / "design.toml"),
                    "--json",
                ]
            result = _run(args)
            if result.exit_code == 0:
                assert "NaN" not in result.stdout
            else:
                _one_error_line(result)

    check()


# --- values of the wrong type where a name is expected (found by the property test above) ---

WRONG_TYPES = [
    Bad(
        "efficiency model given as a list",
        (("catalog.toml", BELT, BELT.replace('"constant"', "[]")),),
        "check",
        "catalog.toml",
        "stage[1].efficiency.model",
        "must be",
    ),
    Bad(
        "mount link given as a list",
        (("project.toml", 'mount_link = "thigh"', "mount_link = []"),),
        "check",
        "project.toml",
        "robot.mounts.knee.mount_link",
        "must be",
    ),
]


@pytest.mark.parametrize("bad", WRONG_TYPES, ids=[b.id for b in WRONG_TYPES])
def test_a_list_where_a_name_belongs_gives_one_clear_line(bad: Bad, examples, tmp_path):
    message = _one_error_line(_run_broken(bad, examples, tmp_path))
    _assert_names(message, bad.file, bad.field, bad.rule)


def test_frontier_imf_on_a_fixed_base_gives_one_clear_line(examples):
    # a fixed-base arm has no impact mitigation factor (its locked-joint inertia is unbounded,
    # REFERENCES.md); asking for the IMF frontier must say so in one line, not search and crash
    message = _one_error_line(
        _run(["frontier", str(examples["arm"] / "project.toml"), "--measure", "imf"])
    )
    assert "imf" in message


def test_a_project_folder_instead_of_its_file_is_named_as_such(examples):
    line = _one_error_line(_run(["check", str(examples["leg"])]))
    assert "is a folder" in line and "project.toml" in line
