"""Outputs never overwrite inputs, replace an existing file only with --force, and are written
through a temporary file and a rename, so a failed write leaves the old file as it was.
(Atomic replacement by rename within one file system: POSIX rename(2) [trade].)"""

from __future__ import annotations

import json
import os
import shutil
from importlib import resources
from pathlib import Path

import pytest
from click.testing import CliRunner

from jointwright.cli import main
from jointwright.commands import _output
from jointwright.errors import InputError


def _leg(tmp_path: Path) -> Path:
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, tmp_path / "leg")
    return tmp_path / "leg"


def _run(args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.mark.parametrize("name", ["project.toml", "catalog.toml", "leg.urdf", "gait.csv"])
def test_size_refuses_every_input_as_out_even_with_force(tmp_path, name):
    d = _leg(tmp_path)
    before = (d / name).read_bytes()
    r = _run(["size", d / "project.toml", "--out", d / name, "--force"])
    assert r.exit_code == 2, r.output
    assert "input files" in r.output and name in r.output and "Traceback" not in r.output
    assert (d / name).read_bytes() == before


def test_size_refuses_the_project_file_and_leaves_it_byte_for_byte(tmp_path):
    d = _leg(tmp_path)
    before = (d / "project.toml").read_bytes()
    r = _run(["size", d / "project.toml", "--out", d / "project.toml"])
    assert r.exit_code == 2 and "input files" in r.output
    assert (d / "project.toml").read_bytes() == before


@pytest.mark.slow
def test_existing_out_needs_force(tmp_path):
    d = _leg(tmp_path)
    out = tmp_path / "best.toml"
    out.write_text("keep me\n", encoding="utf-8")
    r = _run(["size", d / "project.toml", "--out", out, "--time-limit", "30"])
    assert r.exit_code == 2 and "already exists" in r.output and "--force" in r.output
    assert out.read_text(encoding="utf-8") == "keep me\n"
    r = _run(["size", d / "project.toml", "--out", out, "--force", "--json"])
    assert r.exit_code == 0, r.output
    assert (
        out.read_text(encoding="utf-8").startswith(("#", "[")) and "keep me" not in out.read_text()
    )
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".best.toml.")]


def test_frontier_out_and_plot_need_force(tmp_path):
    d = _leg(tmp_path)
    out = tmp_path / "f.json"
    out.write_text("{}", encoding="utf-8")
    r = _run(["frontier", d / "project.toml", "--points", "2", "--out", out])
    assert r.exit_code == 2 and "already exists" in r.output and out.read_text() == "{}"
    r = _run(
        ["frontier", d / "project.toml", "--points", "2", "--out", d / "catalog.toml", "--force"]
    )
    assert r.exit_code == 2 and "input files" in r.output


@pytest.mark.slow
def test_report_needs_force_over_an_existing_report_and_never_takes_an_input(tmp_path):
    d = _leg(tmp_path)
    args = ["report", d / "project.toml", "--design", d / "design.toml", "--out", tmp_path / "r"]
    assert _run(args).exit_code == 0
    html = tmp_path / "r" / "report.html"
    first = html.read_bytes()
    r = _run(args)
    assert r.exit_code == 2 and "already exists" in r.output and html.read_bytes() == first
    assert _run(args + ["--force"]).exit_code == 0
    assert not [p for p in (tmp_path / "r").iterdir() if p.name.startswith(".partial-")]
    r = _run(
        ["report", d / "project.toml", "--design", d / "design.toml", "--out", d / "design.toml"]
    )
    assert r.exit_code == 2 and "input files" in r.output


def test_a_failed_write_keeps_the_old_file(tmp_path, monkeypatch):
    target = tmp_path / "out.toml"
    target.write_text("good\n", encoding="utf-8")

    def broken(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(_output.os, "replace", broken)
    with pytest.raises(InputError, match="No space left on device"):
        _output.write_text(target, "new\n")
    assert target.read_text(encoding="utf-8") == "good\n"
    assert [p.name for p in tmp_path.iterdir()] == ["out.toml"]  # no temporary file left


def test_an_error_while_writing_keeps_the_old_file(tmp_path):
    target = tmp_path / "out.json"
    target.write_text("good\n", encoding="utf-8")
    with pytest.raises(RuntimeError):
        with _output.atomic_path(target) as tmp:
            tmp.write_text("half", encoding="utf-8")
            raise RuntimeError("interrupted")
    assert target.read_text(encoding="utf-8") == "good\n"
    assert [p.name for p in tmp_path.iterdir()] == ["out.json"]


def test_replacement_keeps_the_file_mode(tmp_path):
    target = tmp_path / "out.toml"
    target.write_text("old\n", encoding="utf-8")
    os.chmod(target, 0o640)
    _output.write_text(target, "new\n")
    assert target.read_text() == "new\n" and (target.stat().st_mode & 0o777) == 0o640


LEG_STUDY = """
[study]
format = 1
name = "leg budget"
base = "project.toml"
[[vary]]
path = "requirements.total_mass_max"
values = ["4.0 kg"]
"""


@pytest.mark.slow
def test_study_csv_needs_force_and_never_takes_an_input(tmp_path):
    d = _leg(tmp_path)
    study = d / "study.toml"
    study.write_text(LEG_STUDY, encoding="utf-8")
    csv_out = tmp_path / "summary.csv"
    csv_out.write_text("old\n", encoding="utf-8")
    r = _run(["study", study, "--workers", "1", "--csv", csv_out])
    assert r.exit_code == 2 and "already exists" in r.output
    assert (
        csv_out.read_text() == "old\n" and not (d / "results.sqlite").exists()
    )  # refused before running
    for name in ("study.toml", "project.toml"):
        r = _run(["study", study, "--workers", "1", "--csv", d / name, "--force"])
        assert r.exit_code == 2 and "input files" in r.output, r.output
    r = _run(["study", study, "--workers", "1", "--store", d / "project.toml"])
    assert r.exit_code == 2 and "input files" in r.output
    r = _run(["study", study, "--workers", "1", "--csv", csv_out, "--force", "--json"])
    assert r.exit_code == 0, r.output
    assert csv_out.read_text(encoding="utf-8").startswith(
        "case_id,variant,requirements.total_mass_max"
    )


@pytest.mark.slow
def test_a_report_that_fails_half_way_leaves_the_old_one(tmp_path, monkeypatch):
    d = _leg(tmp_path)
    args = ["report", d / "project.toml", "--design", d / "design.toml", "--out", tmp_path / "r"]
    assert _run(args).exit_code == 0
    before = {
        p.relative_to(tmp_path / "r"): p.read_bytes()
        for p in (tmp_path / "r").rglob("*")
        if p.is_file()
    }
    import jointwright.report as report_pkg

    real = report_pkg.build_report

    def half(project, design, out_dir, **kw):
        path = real(project, design, out_dir, **kw)
        (Path(out_dir) / "figures").mkdir(exist_ok=True)
        raise OSError(
            28, "No space left on device"
        )  # after writing everything into the temp folder

    monkeypatch.setattr(report_pkg, "build_report", half)
    r = _run(args + ["--force"])
    assert r.exit_code != 0 and "Traceback" not in r.output
    after = {
        p.relative_to(tmp_path / "r"): p.read_bytes()
        for p in (tmp_path / "r").rglob("*")
        if p.is_file()
    }
    assert after == before


@pytest.mark.parametrize("option", ["--sizing", "--frontier"])
def test_a_bad_result_file_is_named_and_leaves_no_new_folder(tmp_path, monkeypatch, option):
    """A mistyped field of a --sizing or --frontier file: one line naming that file (not the
    report's "<sizing>") and the field, exit 2; the --out folder the run made is gone again."""
    d = _leg(tmp_path)
    bad = tmp_path / "result.json"
    bad.write_text(json.dumps({"status": 3, "x": 1}), encoding="utf-8")
    out = tmp_path / "r"
    import jointwright.report as report_pkg

    def reader_fails(project, design, out_dir, **kw):  # as the section readers fail
        (Path(out_dir) / "figures").mkdir()
        raise InputError(f"<{option[2:]}>", "status", "must be a str, got int")

    monkeypatch.setattr(report_pkg, "build_report", reader_fails)
    args = ["report", d / "project.toml", "--design", d / "design.toml", "--out", out, option, bad]
    r = _run(args)
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert f"{bad}: status: must be a str" in r.output and "<" not in r.output
    assert not out.exists()
    # an existing folder stays, with what it held
    out.mkdir(parents=True)
    (out / "notes.txt").write_text("keep", encoding="utf-8")
    assert _run(args).exit_code == 2
    assert [p.name for p in out.iterdir()] == ["notes.txt"]


def test_results_of_another_project_are_refused_by_the_report(tmp_path):
    """A sizing result, a frontier or a binary file given to the leg's report that belongs to
    the arm (or is no JSON at all): one line naming that file, the field and what differs,
    exit 2, no traceback and no report folder."""
    d = _leg(tmp_path)
    with resources.as_file(resources.files("jointwright.examples") / "arm") as src:
        shutil.copytree(src, tmp_path / "arm")
    arm = tmp_path / "arm"
    sizing = tmp_path / "arm-sizing.json"
    front = tmp_path / "arm-front.json"
    binary = tmp_path / "store.bin"
    binary.write_bytes(bytes(range(256)))
    r = _run(["size", arm / "project.toml", "--time-limit", "30", "--no-explain", "--json"])
    sizing.write_text(r.output[r.output.index("{") :], encoding="utf-8")
    front.write_text(
        json.dumps(
            {
                "measure": "effective_mass",
                "case": "side-collision",
                "points": [{"actuators": {"shoulder_yaw": "x"}, "payload": 1.0}],
            }
        ),
        encoding="utf-8",
    )
    base = ["report", d / "project.toml", "--design", d / "design.toml"]
    for option, path, field, words in (
        ("--sizing", sizing, "assessment.project", "names project 'MA-6"),
        ("--frontier", front, "case", "trades a measure of case 'side-collision'"),
        ("--frontier", binary, "--frontier", "is not a text (JSON) file"),
        # a result given to the other option: which option takes it
        ("--sizing", front, "--sizing", "is a frontier result (jointwright frontier --out)"),
        ("--frontier", sizing, "--frontier", "is a sizing result (jointwright size --json)"),
    ):
        out = tmp_path / f"r{option}{path.stem}"
        r = _run([*base, option, path, "--out", out])
        assert r.exit_code == 2 and "Traceback" not in r.output, r.output
        assert f"{path}: {field}: {words}" in " ".join(r.output.split())
        assert not out.exists()


def test_a_renamed_copy_of_an_unnamed_project_takes_its_own_sizing(tmp_path):
    """A project without [project] name is named after its file: the sizing result of
    project.toml is that of final.toml too (same joints), so the report takes it."""
    d = _leg(tmp_path)
    text = (d / "project.toml").read_text()
    start = text.index("[project]")
    end = text.index("\n[", start + 1)
    (d / "project.toml").write_text(text[:start] + text[end + 1 :])
    sizing = tmp_path / "size.json"
    r = _run(["size", d / "project.toml", "--time-limit", "30", "--no-explain", "--json",
              "--out", d / "best.toml"])  # fmt: skip
    assert r.exit_code == 0, r.output
    sizing.write_text(r.output[r.output.index("{") :], encoding="utf-8")
    shutil.copy(d / "project.toml", d / "final.toml")
    r = _run(["report", d / "final.toml", "--design", d / "best.toml", "--sizing", sizing,
              "--out", tmp_path / "rep"])  # fmt: skip
    assert r.exit_code == 0, r.output
    # the sizing's runner-ups and proof are about the design it chose: another design is
    # refused, naming the first joint that differs, and no report is written
    r = _run(["report", d / "final.toml", "--design", d / "design.toml", "--sizing", sizing,
              "--out", tmp_path / "other"])  # fmt: skip
    assert r.exit_code == 2 and "Traceback" not in r.output, r.output
    words = " ".join(r.output.split())
    assert f"{sizing}: assessment.joints[0].actuator: the sizing chose" in words
    assert "at hip_ab, the design" in words and not (tmp_path / "other").exists()
