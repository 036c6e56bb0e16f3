"""Every broken input of the corpus (tests/bad_inputs.py: seven input kinds, at least 30 each
with tests/test_cli_inputs.py for project files) ends with exit code 2 and exactly one line
``jointwright: error: FILE: FIELD: RULE`` naming the file, the field and the rule; never a
traceback, never accepted. In-process here; the same corpus runs through a real subprocess
under ``-m slow``."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from collections import Counter
from importlib import resources
from pathlib import Path

import pytest
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.cli import main  # noqa: E402
from tests.bad_inputs import CORPUS, Bad  # noqa: E402
from tests.test_cli_inputs import BAD as PROJECT_BAD  # noqa: E402
from tests.test_cli_inputs import PREFIX, _assert_names, _edit, _one_error_line  # noqa: E402


@pytest.fixture(scope="module")
def leg(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("corpus") / "leg"
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, folder)
    return folder


def _broken(bad: Bad, leg: Path, tmp_path: Path) -> list[str]:
    folder = tmp_path / "leg"
    shutil.copytree(leg, folder)
    for file, old, new in bad.edits:
        _edit(folder, file, old, new)
    if bad.verb == "study":
        return ["study", str(folder / "study.toml"), "--workers", "1"]
    args = [bad.verb, str(folder / "project.toml")]
    return args + (["--design", str(folder / "design.toml")] if bad.verb == "assess" else [])


def test_thirty_per_input_kind():
    kinds = Counter(b.kind for b in CORPUS)
    kinds["project"] = sum(1 for b in PROJECT_BAD if b.file == "project.toml")
    assert len({(b.kind, b.id) for b in CORPUS}) == len(CORPUS)
    assert {k: n for k, n in kinds.items() if n < 30} == {}, kinds


@pytest.mark.parametrize("bad", CORPUS, ids=[f"{b.kind}: {b.id}" for b in CORPUS])
def test_bad_input_is_one_clear_line(bad: Bad, leg, tmp_path):
    message = _one_error_line(CliRunner().invoke(main, _broken(bad, leg, tmp_path)))
    _assert_names(message, bad.file, bad.field, bad.rule)
    assert not (tmp_path / "leg" / "results.sqlite").exists()  # nothing ran, nothing written


#: inputs that urdfdom (the C++ URDF parser under Pinocchio) rejects itself: it writes its own
#: diagnostics to the process's stderr before jointwright's one line, which an in-process run does
#: not see. A known gap of the URDF reader (robot/), kept here so that its fix shows up.
URDFDOM_SPEAKS: set[str] = set()  # none left: the URDF pre-check catches them first
SUBPROCESS = [
    pytest.param(
        b,
        id=f"{b.kind}: {b.id}",
        marks=pytest.mark.xfail(strict=True, reason="urdfdom prints its own diagnostics on stderr"),
    )
    if b.kind == "URDF" and b.id in URDFDOM_SPEAKS
    else pytest.param(b, id=f"{b.kind}: {b.id}")
    for b in CORPUS
]


@pytest.mark.slow
@pytest.mark.parametrize("bad", SUBPROCESS)
def test_bad_input_through_a_subprocess(bad: Bad, leg, tmp_path):
    env = {**os.environ, "PYTHONPATH": str(ROOT / "src")}
    res = subprocess.run(
        [
            sys.executable,
            "-c",
            "from jointwright.cli import main; main()",
            *_broken(bad, leg, tmp_path),
        ],
        capture_output=True,
        text=True,
        env=env,
    )
    assert res.returncode == 2 and "Traceback" not in res.stderr, res.stderr
    assert res.stdout == ""
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith(PREFIX), lines
    _assert_names(lines[0], bad.file, bad.field, bad.rule)
