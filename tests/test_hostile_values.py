"""Property tests: replace any one value of a study file, a trajectory or a motors CSV table by
a hostile one; reading it either succeeds or raises InputError naming the file. Nothing else
may escape (no OverflowError, TypeError, ValueError from deep inside). Derandomized draws."""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.errors import InputError  # noqa: E402
from tests.bad_inputs import HEADER, ROW, STUDY, TRAJ_HEADER, TRAJ_ROWS  # noqa: E402

TOML_HOSTILE = [
    "0",
    "-1",
    "1e308",
    "-1e-320",
    "nan",
    "inf",
    "-inf",
    "true",
    "[]",
    "{}",
    '""',
    '"x"',
    '"3 m"',
    '"-5 kg"',
    '"1e999 kg"',
    '"nan kg"',
    "9" * 400,
    "-" + "9" * 400,
    '"' + "9" * 400 + ' kg"',
    "[1, [2]]",
    "{ a = 1 }",
    '"requirements"',
    '"project.name"',
    "1979-05-27",
    '"\\u0000"',
]
CELL_HOSTILE = [
    "",
    " ",
    "x",
    "nan",
    "-inf",
    "1e999",
    "9" * 400,
    "-" + "9" * 400,
    "0x10",
    "1,5",
    '"',
    "1e-400",
    "١٢",
    "+-1",
    "--1",
    "1e",
    ".",
    "∞",
    "NULL",
]
TOML_VALUE = re.compile(r"(?m)(=\s*)([^\n\[{]+?|\[[^\]\n]*\])\s*$")
SETTINGS = settings(
    max_examples=60, deadline=None, derandomize=True, suppress_health_check=list(HealthCheck)
)


@pytest.fixture(scope="module")
def leg(tmp_path_factory) -> Path:
    import shutil
    from importlib import resources

    folder = tmp_path_factory.mktemp("hostile") / "leg"
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, folder)
    return folder


def test_any_study_value_replaced(leg):
    from jointwright.study import load_study
    from jointwright.study.tasks import check_study_options, check_study_values

    spots = list(TOML_VALUE.finditer(STUDY))
    path = leg / "hostile-study.toml"

    @SETTINGS
    @given(k=st.integers(0, len(spots) - 1), value=st.sampled_from(TOML_HOSTILE))
    def check(k, value):
        m = spots[k]
        path.write_text(STUDY[: m.start(2)] + value + STUDY[m.end(2) :], encoding="utf-8")
        try:  # what `jointwright study` does before any case runs
            spec = load_study(path)
            check_study_options(spec)
            check_study_values(spec)
        except InputError as exc:
            assert exc.file == str(path) or Path(exc.file).parent == leg, exc

    check()


def test_any_trajectory_cell_replaced(leg):
    from jointwright.trajectory import load_trajectory

    rows = [r.split(",") for r in TRAJ_ROWS]
    path = leg / "hostile.csv"

    @SETTINGS
    @given(
        i=st.integers(0, len(rows) - 1),
        j=st.integers(0, len(rows[0]) - 1),
        cell=st.sampled_from(CELL_HOSTILE),
    )
    def check(i, j, cell):
        table = [list(r) for r in rows]
        table[i][j] = cell
        path.write_text(
            TRAJ_HEADER + "\n" + "\n".join(",".join(r) for r in table) + "\n", encoding="utf-8"
        )
        try:
            load_trajectory(path, ["hip_ab", "hip_fe", "knee"], revolute=[True] * 3)
        except InputError as exc:
            assert exc.file == str(path)

    check()


def test_any_motor_csv_cell_replaced(leg):
    from jointwright.catalog.io import load_catalog

    path = leg / "hostile-motors.csv"

    @SETTINGS
    @given(j=st.integers(0, len(ROW) - 1), cell=st.sampled_from(CELL_HOSTILE))
    def check(j, cell):
        cells = list(ROW)
        cells[j] = cell
        path.write_text(HEADER + ",".join(cells) + "\n", encoding="utf-8")
        try:
            load_catalog(path)
        except InputError as exc:
            assert exc.file == str(path)

    check()
