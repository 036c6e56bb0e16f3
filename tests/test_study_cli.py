"""`jointwright study` end to end: the default case function sizes each case, the store holds
each case once, and a case's stored objective equals a direct call of the sizing API."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from jointwright.cli import main
from jointwright.project import project_from_dict
from jointwright.sizing import size
from jointwright.study import case_project, expand, load_study, read_cases

STUDY = """
[study]
format = 1
name = "arm payload pair"
base = "project.toml"
task = "size"
[options]
time_limit = 60
[[vary]]
path = "case[0].payload_min"
values = ["3 kg", "6 kg"]
"""


@pytest.fixture()
def study_dir(tmp_path):
    src = Path(__file__).resolve().parents[1] / "studies" / "arm"
    for name in ("project.toml", "catalog.toml", "arm.urdf", "pick_place.csv"):
        shutil.copy(src / name, tmp_path / name)
    (tmp_path / "study.toml").write_text(STUDY)
    return tmp_path


@pytest.mark.slow
def test_study_verb_sizes_every_case_once_and_matches_the_api(study_dir):
    runner = CliRunner()
    res = runner.invoke(main, ["study", str(study_dir / "study.toml"), "--workers", "1", "--json"])
    assert res.exit_code == 0, res.output
    store = study_dir / "results.sqlite"
    rows = read_cases(store)
    assert len(rows) == 2 and all(r.status == "done" for r in rows)
    again = runner.invoke(main, ["study", str(study_dir / "study.toml"), "--resume", "--json"])
    assert again.exit_code == 0 and len(read_cases(store)) == 2
    spec = load_study(study_dir / "study.toml")
    for case, row in zip(expand(spec), rows):
        project = project_from_dict(case_project(spec, case), study_dir / "project.toml")
        direct = size(project, time_limit=60, explain=False)
        assert row.metrics["objective"] == pytest.approx(direct.objective, rel=1e-12)


@pytest.mark.slow
def test_refuses_to_overwrite_a_store_without_resume(study_dir):
    runner = CliRunner()
    bad = study_dir / "study.toml"
    bad.write_text(
        STUDY.replace('values = ["3 kg", "6 kg"]', 'values = ["3 kg"]')
        .replace('task = "size"', 'task = "size"\n')
        .replace("[options]\ntime_limit = 60", "[options]\ntime_limit = 30")
    )
    first = runner.invoke(main, ["study", str(bad), "--workers", "1", "--json"])
    assert first.exit_code == 0, first.output
    second = runner.invoke(main, ["study", str(bad), "--workers", "1"])
    assert second.exit_code == 2
    assert "resume" in second.output


# ---- exit codes and up-front checks (the default case function) ----------------------------

LEG_STUDY = """
[study]
format = 1
name = "leg check"
base = "project.toml"
[options]
{options}
[[vary]]
path = "{path}"
values = {values}
"""


def _leg_study(
    tmp_path, *, options="time_limit = 60", path="requirements.total_mass_max", values='["4.0 kg"]'
):
    from importlib import resources

    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, tmp_path / "leg")
    study = tmp_path / "leg" / "study.toml"
    study.write_text(LEG_STUDY.format(options=options, path=path, values=values), encoding="utf-8")
    return study


@pytest.mark.parametrize("options, values, path, field, rule", [
    ("time_limt = 5", '["4 kg"]', "requirements.total_mass_max", "options.time_limt", "did you mean 'time_limit'"),
    ("time_limit = -5", '["4 kg"]', "requirements.total_mass_max", "options.time_limit", "> 0"),
    ("gap = 1.5", '["4 kg"]', "requirements.total_mass_max", "options.gap", "0 ≤ gap < 1"),
    ("gap = nan", '["4 kg"]', "requirements.total_mass_max", "options.gap", "0 ≤ gap < 1"),
    ("objective = 'speed'", '["4 kg"]', "requirements.total_mass_max", "options.objective", "one of payload"),
    ("", '["3 m", "4 m"]', "requirements.total_mass_max", "vary[0].values", "convertible to kg"),
    ("", '["leg A", "leg B"]', "project.name", "vary[0].path", "only numbers and quantities"),
    ("", '["a", "b"]', "requirements.total_mass_max", "vary[0].values[0]", "quantity string"),
    ("", "[36000000, 72000000]", "requirements.life_min", "vary[0].values", "needs its unit"),
])  # fmt: skip
def test_study_file_mistakes_are_caught_before_any_case_runs(
    tmp_path, options, values, path, field, rule
):
    study = _leg_study(tmp_path, options=options, path=path, values=values)
    res = CliRunner().invoke(main, ["study", str(study), "--workers", "1"])
    assert res.exit_code == 2, res.output
    assert (
        f"{study}: {field}: " in res.output and rule in res.output and "Traceback" not in res.output
    )
    assert not (study.parent / "results.sqlite").exists()


def test_failed_cases_give_exit_3_with_the_count_and_first_errors(tmp_path):
    study = _leg_study(tmp_path, values='["-1 kg", "-2 kg"]')  # loads, then every case fails
    res = CliRunner().invoke(main, ["study", str(study), "--workers", "1"])
    assert res.exit_code == 3, res.output
    assert "2 of 2 stored cases failed" in res.output and "must be > 0 kg" in res.output
    res = CliRunner().invoke(main, ["study", str(study), "--resume", "--json"])
    assert res.exit_code == 3
    import json

    data = json.loads(res.output[res.output.index("{") : res.output.rindex("}") + 1])
    assert data["failed"] == 2 and len(data["failures"]) == 2
    assert all("total_mass_max" in f["error"] for f in data["failures"])


def test_a_mistake_in_a_variant_is_caught_before_any_case_runs(tmp_path):
    """A misspelt stage kind in a variant's settings: one line naming the study file, the
    variant and the field the project refuses, exit 2, no store; before, every case of the
    variant ran and failed, and the advised --resume was refused once the study was fixed."""
    setting = '"catalog.stage_kinds" = ["planetry"]'
    study, text = _refused_variant(tmp_path, "planetary-only", setting)
    assert f"{study}: variant[1].set: catalog.stage_kinds = ['planetry'] (planetary-only)" in text
    assert "unknown stage kind 'planetry' (did you mean 'planetary'?)" in text


def _refused_variant(tmp_path, name: str, setting: str):
    """A study whose second variant sets ``setting``: the study command refuses it before any
    case runs (exit 2, no traceback, no store); (study path, output as one line)."""
    study = _leg_study(tmp_path)
    study.write_text(
        study.read_text()
        + f'[[variant]]\nname = "free"\n[[variant]]\nname = "{name}"\nset = {{ {setting} }}\n',
        encoding="utf-8",
    )
    res = CliRunner().invoke(main, ["study", str(study), "--workers", "1"])
    assert res.exit_code == 2, res.output
    text = " ".join(res.output.split())
    assert "Traceback" not in text and not (study.parent / "results.sqlite").exists()
    return study, text


def test_the_terminal_table_keeps_to_what_varies(monkeypatch):
    """A variant's own setting (a list of stage kinds) is named by the variant, not repeated as
    a column in Python's list form; the gap column appears only when a case stopped at its time
    limit; the table fits 100 columns (nothing cut at the right edge)."""
    from types import SimpleNamespace

    from jointwright.commands import _format
    from jointwright.commands.study import _param_text, case_table

    def row(i, variant, mass, kinds, status="optimal"):
        params = {"requirements.total_mass_max": mass}
        if kinds is not None:
            params["catalog.stage_kinds"] = kinds
        metrics = {"sizing_status": status, "objective": 8.1, "gap": 2e-3, "total_mass": 2.9}
        return SimpleNamespace(
            index=i, variant=variant, params=params, status="done", metrics=metrics, wall_time=4.0
        )

    rows = [
        row(0, "free", "3.0 kg", None),
        row(1, "planetary-only", "3.0 kg", ["planetary"]),
        row(2, "planetary-only", "3.6 kg", ["planetary"]),
    ]
    assert _param_text(["planetary", "cycloidal"]) == "planetary, cycloidal"
    monkeypatch.setenv("COLUMNS", "100")
    monkeypatch.setattr(_format, "_console", None)
    t = case_table("s", rows, max_rows=10)
    names = [c.header for c in t.columns]
    assert "stage_kinds" not in names and "gap" not in names and "time" in names
    stopped = case_table("s", [*rows[:2], row(2, "free", "3.6 kg", None, "time_limit")], max_rows=9)
    assert "gap" in [c.header for c in stopped.columns]
    # a [[vary]] parameter of a single value is the same in every case of every variant: kept
    one = [row(i, v, "3.0 kg", None) for i, v in enumerate(("free", "other"))]
    assert "total_mass_max" in [c.header for c in case_table("s", one, max_rows=9).columns]
    # the columns follow the study file's [[vary]] order, not the store's (sorted) keys; a
    # value written "kg*m**2" reads kg·m²
    two = [
        SimpleNamespace(
            index=i,
            variant=None,
            params={"a.total_mass_max": f"{m} kg", "z.reflected_inertia_max": f"{j} kg*m**2"},
            status="done",
            metrics={"sizing_status": "optimal", "objective": 8.0, "total_mass": 2.9},
            wall_time=1.0,
        )
        for i, (m, j) in enumerate(((3, 0.02), (4, 0.04)))
    ]
    t = case_table("s", two, max_rows=9, order=["z.reflected_inertia_max", "a.total_mass_max"])
    names = [c.header for c in t.columns]
    assert names.index("reflected_inertia_max") < names.index("total_mass_max")
    assert "0.02 kg·m²" in list(t.columns[names.index("reflected_inertia_max")].cells)


def test_a_variant_setting_valid_with_the_varied_values_is_not_refused(tmp_path):
    """The variant's check loads its first real case (the varied values applied): a setting
    that conflicts only with the base value of a varied field (knee ratio_min 20 against a base
    ratio_max of 10, varied to 30 and 40) is valid and the study is not refused for it."""
    from jointwright.study import load_study
    from jointwright.study.tasks import check_variants

    study = _leg_study(
        tmp_path, path="requirements.joint.knee.ratio_max", values="[30, 40]"
    )
    project = study.parent / "project.toml"
    text = project.read_text()
    assert 'mass_max = "1.6 kg"' in text
    project.write_text(text.replace('mass_max = "1.6 kg"', 'mass_max = "1.6 kg"\nratio_max = 10'))
    study.write_text(
        study.read_text()
        + '[[variant]]\nname = "geared"\nset = { "requirements.joint.knee.ratio_min" = 20 }\n',
        encoding="utf-8",
    )
    check_variants(load_study(study))  # no error: every case of the variant loads


def test_a_variant_naming_a_missing_urdf_is_caught_before_any_case_runs(tmp_path):
    """A variant that points the robot at a URDF file that does not exist: refused before any
    case runs, naming the variant and robot.urdf (the error names the project's field, not the
    missing file as if it were the culprit)."""
    _study, text = _refused_variant(tmp_path, "other-leg", '"robot.urdf" = "nothere.urdf"')
    assert "variant[1].set" in text and "robot.urdf" in text and "no such file" in text


def test_the_study_table_says_why_a_case_is_infeasible(tmp_path):
    """A knee mass limit no knee option meets (0.1 kg) makes that case infeasible: the line
    under the table names the case and the reason the search gives (the knee's own filters),
    the feasible case gets none."""
    study = _leg_study(
        tmp_path, path="requirements.joint.knee.mass_max", values='["0.1 kg", "1.6 kg"]'
    )
    res = CliRunner().invoke(main, ["study", str(study), "--workers", "1"])
    assert res.exit_code == 0, res.output
    text = " ".join(res.output.split())
    assert "infeasible (#1): no option of knee meets the joint's own requirements" in text
    assert "(#2)" not in text
    # the report's study section gives the same reason
    from jointwright.report.study import study_data

    from jointwright.report.study_results import study_section

    data = study_data(study.parent / "results.sqlite")
    assert [c["why"] != "" for c in data["cases"]] == [True, False]
    body = " ".join(study_section(data, tmp_path / "figures").body.split())
    assert "Case 1: no option of knee meets the joint&#x27;s own requirements" in body
