"""Large inputs stay linear and say how far they are: many cases, long duty cycles.
(Timing is measured by benchmarks/large_inputs.py, not asserted here.)"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from benchmarks.large_inputs import long_cycle, many_cases  # noqa: E402
from jointwright.cli import main  # noqa: E402
from jointwright.errors import InputError  # noqa: E402
from jointwright.progress import listening  # noqa: E402
from jointwright.project import load_project  # noqa: E402


def test_many_cases_are_read_with_progress_reports(tmp_path):
    path = many_cases(tmp_path / "leg", 1200)
    seen = []
    with listening(lambda what, done, total: seen.append((what, done, total))):
        p = load_project(path)
    assert len(p.cases) == 1200
    assert [s for s in seen if s[0] == "reading cases"] == [
        ("reading cases", 500, 1200),
        ("reading cases", 1000, 1200),
    ]


def test_a_duplicate_case_name_far_down_is_still_found(tmp_path):
    path = many_cases(tmp_path / "leg", 3000)
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace('name = "push-2999"', 'name = "push-7"'), encoding="utf-8")
    with pytest.raises(InputError, match="duplicate case name 'push-7'") as info:
        load_project(path)
    assert info.value.field == "case[2999].name"


def test_check_lists_the_first_cases_and_says_how_many_there_are(tmp_path):
    path = many_cases(tmp_path / "leg", 250)
    r = CliRunner().invoke(main, ["check", str(path)])
    assert r.exit_code == 0, r.output
    assert "the first 200 of 250 cases; --json lists all" in r.output
    assert "push-199" in r.output and "push-200 " not in r.output


def test_a_long_cycle_reports_its_inverse_dynamics(tmp_path):
    from jointwright.assessment import assess
    from jointwright.design import load_design

    path = long_cycle(tmp_path / "leg", 10_000)
    seen = []
    p = load_project(path)
    with listening(lambda what, done, total: seen.append((what, done, total))):
        a = assess(p, load_design(path.parent / "design.toml", p))
    assert a.cases
    steps = {what for what, _, _ in seen}
    assert {
        "reading gait.csv",
        "configurations along gait.csv",
        "inverse dynamics along gait.csv",
    } <= steps
    last = [s for s in seen if s[0] == "inverse dynamics along gait.csv"][-1]
    assert last[1] <= last[2] == 5 * 10_000  # 3 joints: links, one pass per joint, wrenches
