"""Every reader reports an unknown name the same way: the field, the closest known name, the list.

Common practice [trade]: a strict reader with a spelling hint (the closest known name by the
standard library's difflib ratio) turns a silently ignored typo into a one-line fix.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

import jointwright.examples

from jointwright.errors import InputError, check_keys, did_you_mean, unknown_name
from jointwright.project import load_project
from jointwright.tomlfile import Table


def test_hint_names_the_closest_known_name():
    assert did_you_mean("time_limt", ["time_limit", "points"]) == " (did you mean 'time_limit'?)"
    assert did_you_mean("zzz", ["time_limit", "points"]) == ""


def test_unknown_name_message_has_field_hint_and_list():
    err = unknown_name("p.toml", "case[0].paylod_min", "paylod_min", ["payload_min", "pose"])
    assert (err.file, err.field) == ("p.toml", "case[0].paylod_min")
    assert "did you mean 'payload_min'" in err.rule and "known: payload_min, pose" in err.rule


def test_check_keys_names_the_dotted_field():
    with pytest.raises(InputError) as exc:
        check_keys({"mass": 1, "inertai": 2}, ["mass", "inertia"], "robot.toml", "links[0]")
    assert exc.value.field == "links[0].inertai" and "did you mean 'inertia'" in exc.value.rule


def test_table_reader_and_choices_hint():
    t = Table({"kind": "paylaod"}, "p.toml", "case[0]")
    with pytest.raises(InputError) as exc:
        t.text("kind", choices=("payload", "impact"))
    assert "did you mean 'payload'" in exc.value.rule
    t = Table({"kind": "payload", "frme": "foot"}, "p.toml", "case[0]")
    t.text("kind")
    t.text("frame", "foot")
    with pytest.raises(InputError) as exc:
        t.done()
    assert exc.value.field == "case[0].frme" and "did you mean 'frame'" in exc.value.rule


@pytest.mark.parametrize(
    ("file", "old", "new", "field", "hint"),
    [
        ("project.toml", "total_mass_max =", "total_mass_mx =", "total_mass_mx", "total_mass_max"),
        ("catalog.toml", "mass =", "mas =", "mas", "mass"),
    ],
)
def test_the_same_typo_gets_the_same_help_in_project_and_catalog(
    tmp_path: Path, file, old, new, field, hint
):
    shutil.copytree(Path(jointwright.examples.__file__).parent / "leg", tmp_path / "leg")
    path = tmp_path / "leg" / file
    path.write_text(path.read_text(encoding="utf-8").replace(old, new, 1), encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_project(tmp_path / "leg" / "project.toml")
    assert exc.value.file.endswith(file)
    assert exc.value.field.endswith(field)
    assert f"did you mean '{hint}'" in exc.value.rule
