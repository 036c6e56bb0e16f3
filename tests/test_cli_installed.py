"""The installed ``jointwright`` console script, run as a user runs it: a fresh process per call,
nothing imported beforehand (a module a test process has already imported cannot hide a missing
import here). Every verb's help, and new → check → assess → size → frontier → report on each
bundled example, checking exit codes and the key lines of the output.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

EXAMPLES = ("leg", "arm", "quadruped")
VERBS = ("new", "check", "assess", "size", "frontier", "study", "report")


def _script() -> str | None:
    beside = Path(sys.executable).with_name("jointwright")
    return str(beside) if beside.is_file() else shutil.which("jointwright")


SCRIPT = _script()
pytestmark = pytest.mark.skipif(
    SCRIPT is None,
    reason="the jointwright console script is not installed in this environment (pip install .)",
)


def run(
    *args: str, cwd: Path, ok: bool = True, timeout: float = 600
) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k not in ("COLUMNS",)}
    env["COLUMNS"] = "100"
    proc = subprocess.run(
        [SCRIPT, *args],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=timeout,
        stdin=subprocess.DEVNULL,
    )
    if ok:
        assert proc.returncode == 0, f"{args}: exit {proc.returncode}\n{proc.stdout}\n{proc.stderr}"
    assert "Traceback" not in proc.stderr, proc.stderr
    return proc


def test_top_level_help_lists_every_verb(tmp_path):
    out = run("--help", cwd=tmp_path).stdout
    for verb in VERBS:
        assert verb in out


@pytest.mark.parametrize("verb", VERBS)
def test_every_verb_has_help(verb, tmp_path):
    out = run(verb, "--help", cwd=tmp_path).stdout
    assert f"jointwright {verb}" in out and "--help" in out


def test_version(tmp_path):
    assert "version" in run("--version", cwd=tmp_path).stdout


def test_bad_input_is_one_line_and_exit_2(tmp_path):
    proc = run("check", "missing.toml", cwd=tmp_path, ok=False)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("jointwright: error: missing.toml")


def _measure(example: str) -> list[str]:
    # fixed-base arm: payload against back-driven effective mass; legged: against the IMF
    return ["--measure", "effective_mass"] if example == "arm" else ["--measure", "imf"]


@pytest.mark.slow
@pytest.mark.parametrize("example", EXAMPLES)
def test_main_job_end_to_end(example, tmp_path):
    run("new", "proj", "--example", example, cwd=tmp_path)
    proj = tmp_path / "proj"
    assert (proj / "project.toml").is_file() and (proj / "design.toml").is_file()

    out = run("check", "proj/project.toml", cwd=tmp_path).stdout
    assert "inputs are valid" in out and "Joints" in out
    assert max(len(line) for line in out.splitlines()) <= 100  # fits COLUMNS

    out = run("assess", "proj/project.toml", "--design", "proj/design.toml", cwd=tmp_path).stdout
    assert "Requirements" in out and "caution" in out

    proc = run("size", "proj/project.toml", "--out", "proj/best.toml", "--json", cwd=tmp_path)
    sized = json.loads(proc.stdout)
    assert sized["status"] == "optimal" and sized["gap"] == 0
    assert sized["assessment"]["feasible"] is True
    assert (proj / "best.toml").read_text(encoding="utf-8").strip()
    (proj / "size.json").write_text(proc.stdout, encoding="utf-8")

    proc = run(
        "frontier",
        "proj/project.toml",
        *_measure(example),
        "--points",
        "3",
        "--time-limit",
        "60",
        "--out",
        "proj/frontier.json",
        cwd=tmp_path,
    )
    front = json.loads((proj / "frontier.json").read_text(encoding="utf-8"))
    assert front["points"], proc.stdout

    out = run(
        "report",
        "proj/project.toml",
        "--design",
        "proj/best.toml",
        "--sizing",
        "proj/size.json",
        "--frontier",
        "proj/frontier.json",
        "--out",
        "proj/report",
        cwd=tmp_path,
    ).stdout
    html = list((proj / "report").glob("*.html"))
    assert html, out
    assert "<img" in html[0].read_text(encoding="utf-8")
