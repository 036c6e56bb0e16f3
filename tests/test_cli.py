"""Happy paths of the command line: new, check and assess on both bundled examples.

The JSON output must be the Python API's result (``assessment.assess``) number for number; the
table output must show numbers with their units. A few joint numbers are recomputed by hand from
the published transmission formulas (REFERENCES.md) so that CLI and API cannot agree on a wrong
value unnoticed.
"""

from __future__ import annotations

import json
import math
import re
import shutil
from importlib import resources
from pathlib import Path

import pytest
from click.testing import CliRunner

from jointwright.assessment import assess
from jointwright.cli import main
from jointwright.design import load_design
from jointwright.project import STANDARD_GRAVITY, load_project

EXAMPLES = ("leg", "arm", "quadruped")


def _run(args: list[str]):
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, (result.output, result.stderr)
    assert result.stderr == ""
    return result


@pytest.fixture(scope="module")
def folders(tmp_path_factory) -> dict[str, Path]:
    out = {}
    for name in EXAMPLES:
        folder = tmp_path_factory.mktemp("cli") / name
        _run(["new", str(folder), "--example", name])
        out[name] = folder
    return out


@pytest.fixture(scope="module")
def api(folders) -> dict:
    """The Python API's assessment of each example's bundled design."""
    out = {}
    for name, folder in folders.items():
        project = load_project(folder / "project.toml")
        out[name] = (project, assess(project, load_design(folder / "design.toml", project)))
    return out


# --- new ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", EXAMPLES)
def test_new_writes_every_bundled_file(name, folders):
    bundled = sorted(
        p.name
        for p in (resources.files("jointwright.examples") / name).iterdir()
        if p.is_file() and not p.name.startswith((".", "__"))
    )
    assert sorted(p.name for p in folders[name].iterdir()) == bundled
    assert {"project.toml", "design.toml", "catalog.toml"} <= set(bundled)


def test_new_into_an_empty_existing_folder(tmp_path):
    result = _run(["new", str(tmp_path)])  # default example: leg
    assert "wrote the 'leg' example" in result.stdout
    assert (tmp_path / "leg.urdf").is_file()


def test_help_lists_the_verbs_that_exist():
    result = _run(["--help"])
    for verb in ("new", "check", "assess"):
        assert verb in result.stdout


# --- check -------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", EXAMPLES)
def test_check_json_matches_the_loaded_project(name, folders):
    data = json.loads(_run(["check", str(folders[name] / "project.toml"), "--json"]).stdout)
    project = load_project(folders[name] / "project.toml")
    assert data["project"] == project.name
    assert data["robot"]["actuated"] == list(project.robot.actuated)
    assert data["robot"]["base"] == project.robot.base
    assert data["robot"]["link_mass"] == pytest.approx(project.robot.link_mass_total, rel=1e-12)
    assert data["catalog"]["motors"] == len(project.catalog.all_motors())
    assert data["catalog"]["max_stages"] == project.max_stages
    assert [c["name"] for c in data["cases"]] == [c.name for c in project.cases]
    if math.isfinite(project.requirements.total_mass_max):
        assert data["requirements"]["total_mass_max"] == project.requirements.total_mass_max


def test_check_shows_the_motion_of_every_case_that_has_one(folders):
    """payload, stance and torque cases take a motion (docs/project-format.md): shown as read;
    the quadruped's walk-carry stance case holds ("hold")."""
    path = folders["quadruped"] / "project.toml"
    data = json.loads(_run(["check", str(path), "--json"]).stdout)
    project = load_project(path)
    for c in data["cases"]:
        case = project.case(c["name"])
        want = case.motion if case.kind in ("payload", "stance", "torque") else None
        assert c["motion"] == want, c["name"]
    assert {c["name"]: c["motion"] for c in data["cases"]}["walk-carry"] == "hold"


def test_check_json_converts_units(folders, tmp_path):
    # quantities with units in the project file arrive in SI: conversions by hand
    folder = tmp_path / "leg"
    shutil.copytree(folders["leg"], folder)
    text = (folder / "project.toml").read_text()
    text = re.sub(r'total_mass_max = "[^"]*"', 'total_mass_max = "3200 g"', text, count=1)  # 3.2 kg
    text = re.sub(
        r'speed_min = "[^"]*"', 'speed_min = "7.2 km/h"', text, count=1
    )  # 7.2/3.6 = 2 m/s
    text = re.sub(r'payload_min = "[^"]*"', 'payload_min = "0.15 kN"', text, count=1)  # 150 N
    text = re.sub(
        r'reflected_inertia_max = "[^"]*"', 'reflected_inertia_max = "500 kg*cm^2"', text, count=1
    )
    (folder / "project.toml").write_text(text)
    data = json.loads(_run(["check", str(folder / "project.toml"), "--json"]).stdout)
    assert data["requirements"]["total_mass_max"] == pytest.approx(3.2, rel=1e-12)
    limits = [c["limits"] for c in data["cases"]]
    assert {"speed_min": pytest.approx(2.0, rel=1e-12)} in limits
    assert limits[0] == {"payload_min": pytest.approx(150.0, rel=1e-12)}
    # 500 kg·cm² = 500e-4 kg·m² = 0.05 kg·m²
    assert data["requirements"]["joints"]["knee"]["reflected_inertia_max"] == pytest.approx(
        0.05, rel=1e-12
    )
    directions = [c["direction"] for c in data["cases"] if c["direction"] is not None]
    assert all(
        math.isclose(sum(x * x for x in d), 1.0, rel_tol=1e-12) for d in directions
    )  # unit vectors


def test_check_arm_payload_in_kg_is_the_payload_carried(folders):
    # payload_min = "3 kg" is the payload the case must carry, read as the payload objective
    # reads it: fixed_load + payload_share·m·g_n with g_n = 9.80665 m/s² (3rd CGPM 1901;
    # ISO 80000-3 [pub]); the arm's gripper, fixed_load = "0.4 kg", share 1:
    # (0.4 + 3) × 9.80665 = 33.34261 N, (0.4 + 5) × 9.80665 = 52.95591 N
    data = json.loads(_run(["check", str(folders["arm"] / "project.toml"), "--json"]).stdout)
    cases = {c["name"]: c for c in data["cases"]}
    assert STANDARD_GRAVITY == 9.80665
    assert cases["reach-lift"]["limits"]["payload_min"] == pytest.approx(33.34261, rel=1e-12)
    assert cases["close-lift"]["limits"]["payload_min"] == pytest.approx(52.95591, rel=1e-12)
    text = " ".join(_run(["check", str(folders["arm"] / "project.toml")]).stdout.split())
    assert "payload min 33.34 N (carries 3 kg)" in text


@pytest.mark.parametrize("name", EXAMPLES)
def test_check_table_says_valid_with_units(name, folders):
    out = _run(["check", str(folders[name] / "project.toml")]).stdout
    project = load_project(folders[name] / "project.toml")
    assert "inputs are valid" in out
    units = {
        "payload_min": "N",
        "effective_mass_max": "kg",
        "speed_min": "m/s",
        "backdrive_force_max": "N",
    }
    shown = 0
    for case in project.cases:
        for key, value in case.limits.items():
            if key in units:  # e.g. "payload min 150 N"
                assert f"{key.replace('_', ' ')} {value:.4g} {units[key]}" in out, (case.name, key)
                shown += 1
    assert shown >= 1
    if math.isfinite(project.requirements.total_mass_max):
        assert f"{project.requirements.total_mass_max:.4g} kg" in out


# --- assess ------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", EXAMPLES)
def test_assess_json_equals_the_python_api(name, folders, api):
    folder = folders[name]
    out = _run(
        ["assess", str(folder / "project.toml"), "--design", str(folder / "design.toml"), "--json"]
    ).stdout
    data = json.loads(out)
    _, result = api[name]
    assert data == result.to_dict()  # JSON floats round-trip exactly (shortest repr)
    assert data["feasible"] is result.feasible
    assert len(data["checks"]) == len(result.checks) > 0


@pytest.mark.parametrize("name", EXAMPLES)
def test_assess_json_has_no_nan(name, folders):
    folder = folders[name]
    out = _run(
        ["assess", str(folder / "project.toml"), "--design", str(folder / "design.toml"), "--json"]
    ).stdout
    assert "NaN" not in out and "Infinity" not in out  # infinities are written "inf"


@pytest.mark.parametrize("name", EXAMPLES)
def test_assess_table_shows_api_numbers_with_units(name, folders, api):
    folder = folders[name]
    out = _run(
        ["assess", str(folder / "project.toml"), "--design", str(folder / "design.toml")]
    ).stdout
    project, result = api[name]
    assert f"actuators {result.total_mass:.4g} kg" in out
    units = {"payload": "N", "speed": "m/s", "backdrive_force": "N", "effective_mass": "kg"}
    shown = 0
    for case in result.cases:
        for key, unit in units.items():
            value = case.metrics.get(key)
            if isinstance(value, float) and math.isfinite(value):
                assert f"{value:.4g} {unit}" in out, (case.name, key)
                shown += 1
    for check in result.checks:
        assert check.subject in out
        if check.unit in ("N", "kg", "m/s") and math.isfinite(check.achieved):
            assert f"{check.achieved:.4g} {check.unit}" in out, (check.subject, check.requirement)
            shown += 1
    assert shown >= 3
    assert "caution:" in out and "safety standards" in out


def test_leg_joint_numbers_follow_the_published_formulas(api):
    # Ring-fixed planetary by the basic-train (Willis) method (Müller 1982; del Castillo 2002
    # [mem], REFERENCES.md): N = 6, η0 = 0.965 (leg catalog, stage Orbit):
    #   η_f = (1 + η0·(N−1))/N = (1 + 0.965·5)/6 = 5.825/6 = 0.9708333
    #   η_b = N/(1 + (N−1)/η0) = 6/(1 + 5/0.965) = 6/6.1813472 = 0.9706622
    # Motor Flatwind-6: τ_peak 4.49 N·m, rotor 2.7 kg·cm²; frame Orbit-2 input 0.06 kg·cm², 32 N·m.
    #   drive capacity η_f·N·τ = 0.9708333·6·4.49 = 26.15425 N·m (design brief 2.3)
    #   holding N·τ/η_b = 26.94/0.9706622 = 27.75425 N·m (below the 32 N·m gear rating)
    #   reflected N²·I_r = 36·(2.7 + 0.06)e-4 = 9.936e-3 kg·m²
    _, result = api["leg"]
    hip = next(j for j in result.joints if j.joint == "hip_ab")
    assert hip.eta_forward == pytest.approx(5.825 / 6, rel=1e-12)
    assert hip.eta_backward == pytest.approx(6 / (1 + 5 / 0.965), rel=1e-12)
    assert hip.capacity_motoring == pytest.approx(26.15425, rel=1e-9)
    assert hip.capacity_backdriven == pytest.approx(26.94 / 0.9706621961, rel=1e-9)
    assert hip.reflected_frictionless == pytest.approx(9.936e-3, rel=1e-9)
    # Knee: Orbit-3 at 9:1: η_f = (1 + 0.965·8)/9 = 8.72/9, η_b = 9/(1 + 8/0.965); frame input
    # inertia 0.12 kg·cm², so I_r = 2.7 + 0.12 = 2.82 kg·cm² and N²·I_r = 81·2.82e-4 kg·m²;
    # drive η_f·N·τ = 8.72·4.49 = 39.1528 N·m, below the 60 N·m gear rating.
    knee = next(j for j in result.joints if j.joint == "knee")
    assert knee.ratio == pytest.approx(9.0, rel=1e-12)
    assert knee.eta_forward == pytest.approx(8.72 / 9, rel=1e-12)
    assert knee.eta_backward == pytest.approx(9 / (1 + 8 / 0.965), rel=1e-12)
    assert knee.reflected_frictionless == pytest.approx(81 * 2.82e-4, rel=1e-9)
    assert knee.capacity_motoring == pytest.approx(8.72 * 4.49, rel=1e-9)


def test_payload_margin_is_achieved_over_limit(api):
    # margin of a "min" requirement = achieved/limit − 1 [trade]; of a "max" one = 1 − achieved/limit
    for name in EXAMPLES:
        _, result = api[name]
        for c in result.checks:
            if not (math.isfinite(c.achieved) and c.limit > 0):
                continue
            expected = c.achieved / c.limit - 1 if c.sense == "min" else 1 - c.achieved / c.limit
            assert c.margin == pytest.approx(expected, rel=1e-9, abs=1e-12), (
                name,
                c.subject,
                c.requirement,
            )
            assert c.ok == (c.margin >= 0)


# --- the worked studies in studies/: every case is a valid project ------------------------------

STUDIES = Path(__file__).parents[1] / "studies"


def _study_projects(name: str):
    from jointwright.project import project_from_dict
    from jointwright.study.spec import case_project, expand, load_study

    spec = load_study(STUDIES / name / "study.toml")
    cases = expand(spec)
    assert len({c.id for c in cases}) == len(cases)  # no case twice
    return [(c, project_from_dict(case_project(spec, c), spec.base_file)) for c in cases]


def test_leg_study_covers_every_budget_and_threshold():
    pairs = set()
    for _, p in _study_projects("leg"):
        touchdown = p.case("touchdown")
        pairs.add((round(p.requirements.total_mass_max, 9), touchdown.limits["imf_min"]))
    # grid 3.4 to 4.6 kg in 4 steps: 3.4 + 0.4·k kg; IMF thresholds as listed
    assert pairs == {
        (round(3.4 + 0.4 * k, 9), imf) for k in range(4) for imf in (0.05, 0.1, 0.15, 0.2, 0.25)
    }


def test_arm_study_crosses_payloads_with_architectures():
    seen = set()
    for case, p in _study_projects("arm"):
        lift = p.case("reach-lift")  # payload_min in kg: the payload mass carried
        kg = (lift.limits["payload_min"] - lift.fixed_load) / (
            lift.payload_share * STANDARD_GRAVITY
        )
        seen.add((case.variant, p.stage_kinds, round(kg, 9)))
        assert p.objective == {"maximize": "mass"}
    kinds = {
        "any-kind": None,
        "strain-wave": ("strain_wave",),
        "cycloidal": ("cycloidal",),
        "planetary-belt": ("planetary", "belt"),
    }
    assert seen == {(v, k, float(m)) for v, k in kinds.items() for m in (3, 5, 7, 9)}


@pytest.mark.parametrize("name", ["leg", "arm"])
def test_study_base_project_checks(name):
    data = json.loads(_run(["check", str(STUDIES / name / "project.toml"), "--json"]).stdout)
    assert data["cases"]


# --- the complete examples in the format docs are valid files ----------------------------------

DOCS = Path(__file__).parents[1] / "docs"


def _first_toml_block(doc: str) -> str:
    text = (DOCS / doc).read_text(encoding="utf-8")
    return re.search(r"```toml\n(.*?)```", text, re.S).group(1)


def test_documented_project_and_design_examples_load(folders, tmp_path):
    # docs/project-format.md and docs/design-format.md: the complete examples, next to the
    # bundled leg files they name, pass `check` and `assess`
    folder = tmp_path / "leg"
    shutil.copytree(folders["leg"], folder)
    (folder / "project.toml").write_text(_first_toml_block("project-format.md"), encoding="utf-8")
    (folder / "design.toml").write_text(_first_toml_block("design-format.md"), encoding="utf-8")
    _run(["check", str(folder / "project.toml")])
    data = json.loads(
        _run(
            [
                "assess",
                str(folder / "project.toml"),
                "--design",
                str(folder / "design.toml"),
                "--json",
            ]
        ).stdout
    )
    assert data["design"] == "QL-3 starting point"
    assert [j["ratio"] for j in data["joints"]] == pytest.approx([6.0, 6.0, 9.0], rel=1e-12)


def test_self_locking_joint_is_infinite_not_nan_in_table_and_json(folders, tmp_path):
    # worm Spiral of the arm catalog: λ = 3.5°, f = 0.07, φ_n = 20°. Self-locking when
    # f ≥ cos φ_n·tan λ (Shigley ch. 13 [mem]): cos 20°·tan 3.5° = 0.93969·0.061163 = 0.05747 ≤ 0.07.
    # Back-driven reflected inertia N²·I_r/η_b and holding capacity are then ∞ (design brief §2.3).
    folder = tmp_path / "arm"
    shutil.copytree(folders["arm"], folder)
    text = (folder / "design.toml").read_text()
    head, sep, tail = text.partition("[joint.elbow]")
    tail = re.sub(
        r"stages = \[.*\]",
        'stages = [{ stage = "Spiral", frame = "Spiral-1", ratio = 50 }]',
        tail,
        count=1,
    )
    (folder / "design.toml").write_text(head + sep + tail)
    args = ["assess", str(folder / "project.toml"), "--design", str(folder / "design.toml")]
    data = json.loads(_run(args + ["--json"]).stdout)
    elbow = next(j for j in data["joints"] if j["joint"] == "elbow")
    assert elbow["self_locking"] is True and elbow["eta_backward"] < 0
    assert elbow["reflected_backdriven"] == "inf" and elbow["breakaway_torque"] == "inf"
    out = _run(args).stdout
    assert "self-locking" in out and "∞" in out and "nan" not in out.lower()
    assert "pinch and crush hazard" in out


def test_output_folders_given_a_file_name_are_refused_before_any_work(folders, tmp_path):
    """report --out and frontier --plot take folders; a name ending in .html or .png (not an
    existing folder) is one clear error naming the option, and nothing is written."""
    leg = folders["leg"]
    cases = [
        ["report", str(leg / "project.toml"), "--design", str(leg / "design.toml")],
        ["frontier", str(leg / "project.toml")],
    ]
    for args, option, name in zip(cases, ["--out", "--plot"], ["r.html", "f.png"], strict=True):
        target = tmp_path / name
        result = CliRunner().invoke(main, [*args, option, str(target)])
        assert result.exit_code == 2
        assert f"{option}: is " in result.output + result.stderr and "folder" in result.stderr
        assert not target.exists()


def test_motor_top_speed_reads_the_same_in_terminal_and_report(folders, api, tmp_path):
    """The drive table's motor top speed in rad/s and in rpm, in the terminal and the report
    alike (1 rpm = 2π/60 rad/s, the definition of the revolution per minute)."""
    from jointwright.units import format_number

    folder = folders["quadruped"]
    project, result = api["quadruped"]
    args = ["--design", str(folder / "design.toml")]
    out = _run(["assess", str(folder / "project.toml"), *args]).stdout
    _run(["report", str(folder / "project.toml"), *args, "--out", str(tmp_path / "r")])
    html = (tmp_path / "r" / "report.html").read_text()
    speeds = {j.motor_max_speed for j in result.joints}
    assert speeds
    for w in speeds:
        cell = f"{format_number(w, 4)} rad/s = {format_number(w * 60 / (2 * math.pi), 4)} rpm"
        assert cell in out
        assert cell in html
