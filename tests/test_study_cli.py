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


def test_refuses_to_overwrite_a_store_without_resume(study_dir):
    runner = CliRunner()
    bad = study_dir / "study.toml"
    bad.write_text(STUDY.replace('values = ["3 kg", "6 kg"]', 'values = ["3 kg"]').replace(
        'task = "size"', 'task = "size"\n').replace("[options]\ntime_limit = 60", "[options]\ntime_limit = 30"))
    first = runner.invoke(main, ["study", str(bad), "--workers", "1", "--json"])
    assert first.exit_code == 0, first.output
    second = runner.invoke(main, ["study", str(bad), "--workers", "1"])
    assert second.exit_code == 2
    assert "resume" in second.output
