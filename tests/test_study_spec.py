"""Study file parsing, validation and expansion (jointwright.study.spec)."""

from __future__ import annotations

import copy
import itertools
import math
import sys
import textwrap
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.errors import InputError  # noqa: E402
from jointwright.study.paths import format_path, parse_path  # noqa: E402
from jointwright.study.spec import case_project, expand, load_study, parse_study  # noqa: E402
from tests.study_cases import BASE_PROJECT  # noqa: E402

HEAD = '[study]\nname = "t"\nbase = "leg.toml"\n'


def write(tmp_path: Path, body: str, base: str = BASE_PROJECT) -> Path:
    (tmp_path / "leg.toml").write_text(base)
    path = tmp_path / "study.toml"
    path.write_text(textwrap.dedent(body))
    return path


def test_product_of_grid_values_and_variants(tmp_path):
    path = write(
        tmp_path,
        HEAD
        + """
        [[vary]]
        path = "robot.links.thigh.length"
        grid = { start = 0.2, stop = 0.4, num = 5 }
        [[vary]]
        path = "requirements.mass_budget"
        values = ["2 kg", "3 kg"]
        [[variant]]
        name = "planetary"
        set = { "catalog.stage_kinds" = ["planetary"] }
        [[variant]]
        name = "all"
        """,
    )
    spec = load_study(path)
    cases = expand(spec)
    assert len(cases) == 2 * 5 * 2
    # arithmetic progression start + k (stop - start) / (num - 1) [trade: linear grid]
    grid = [0.2 + k * (0.4 - 0.2) / 4 for k in range(5)]
    assert spec.parameters[0].values == pytest.approx(grid, rel=1e-12)
    # variants outermost, last parameter fastest
    assert [c.variant for c in cases[:10]] == ["planetary"] * 10
    assert [c.values["requirements.mass_budget"] for c in cases[:4]] == ["2 kg", "3 kg"] * 2
    assert cases[0].assignments[0] == ("catalog.stage_kinds", ["planetary"])
    assert len({c.id for c in cases}) == len(cases)
    assert [c.index for c in cases] == list(range(20))


def test_zip_pairs_values(tmp_path):
    path = write(
        tmp_path,
        HEAD
        + """
        combine = "zip"
        [[vary]]
        path = "robot.links.thigh.length"
        values = [0.2, 0.3, 0.4]
        [[vary]]
        path = "cases[0].payload"
        values = [10, 20, 30]
        """,
    )
    cases = expand(load_study(path))
    pairs = [(c.values["robot.links.thigh.length"], c.values["cases[0].payload"]) for c in cases]
    assert pairs == [(0.2, 10), (0.3, 20), (0.4, 30)]


def test_log_grid_and_units_kept(tmp_path):
    path = write(
        tmp_path,
        HEAD
        + """
        [[vary]]
        path = "requirements.mass_budget"
        grid = { start = "1 kg", stop = "100000 g", num = 3, scale = "log" }
        [[vary]]
        path = "robot.links.shank.length"
        grid = { start = "0.2 m", stop = "40 cm", num = 3 }
        """,
    )
    spec = load_study(path)
    # geometric progression 1, 10, 100 kg (100000 g = 100 kg by the SI prefix) [trade]
    assert spec.parameters[0].values == ("1.0 kg", "10.0 kg", "100.0 kg")
    assert spec.parameters[1].values == ("0.2 m", "0.3 m", "0.4 m")


def test_random_is_seeded_and_in_range(tmp_path):
    body = (
        HEAD
        + """
        [[vary]]
        path = "cases[0].payload"
        random = { low = 5, high = 50, count = 40, seed = SEED, scale = "log" }
        """
    )
    a = load_study(write(tmp_path, body.replace("SEED", "7"))).parameters[0].values
    b = load_study(write(tmp_path, body.replace("SEED", "7"))).parameters[0].values
    c = load_study(write(tmp_path, body.replace("SEED", "8"))).parameters[0].values
    assert a == b and a != c and len(a) == 40
    assert all(5 <= x <= 50 for x in a)
    # log-uniform: about half the samples fall below the geometric mean sqrt(5*50) [trade]
    below = sum(x < math.sqrt(250) for x in a)
    assert 8 <= below <= 32


def test_ids_and_hash_are_stable_and_content_based(tmp_path):
    body = (
        HEAD
        + """
        [options]
        a = 1
        b = 2
        [[vary]]
        path = "requirements.mass_budget"
        values = ["2 kg", "3 kg"]
        """
    )
    first = load_study(write(tmp_path, body))
    # same content, other key order and comments: same hash and ids
    reordered = body.replace("a = 1\n        b = 2", "b = 2   # comment\n        a = 1")
    second = load_study(write(tmp_path, reordered))
    assert first.hash == second.hash
    assert [c.id for c in expand(first)] == [c.id for c in expand(second)]
    # the base project's content is part of the hash, but not its formatting
    third = load_study(
        write(tmp_path, body, BASE_PROJECT.replace("length = 0.30", "length = 0.31"))
    )
    assert third.hash != first.hash
    fourth = load_study(write(tmp_path, body, "# note\n" + BASE_PROJECT))
    assert fourth.hash == first.hash
    # a changed value changes that case's id only
    changed = load_study(write(tmp_path, body.replace('"3 kg"', '"4 kg"')))
    ids_a, ids_b = [c.id for c in expand(first)], [c.id for c in expand(changed)]
    assert ids_a[0] == ids_b[0] and ids_a[1] != ids_b[1]


def test_listed_input_files_enter_the_hash(tmp_path):
    body = HEAD + 'inputs = ["catalog.toml"]\n[[variant]]\nname = "a"\n'
    (tmp_path / "catalog.toml").write_text("[[motor]]\nname = 'm1'\n")
    first = load_study(write(tmp_path, body)).hash
    (tmp_path / "catalog.toml").write_text("[[motor]]\nname = 'm2'\n")
    assert load_study(write(tmp_path, body)).hash != first
    with pytest.raises(InputError) as info:
        load_study(write(tmp_path, body.replace("catalog.toml", "missing.toml")))
    assert info.value.field == "study.inputs[0]"


def test_case_project_applies_assignments_on_a_copy(tmp_path):
    path = write(
        tmp_path,
        HEAD
        + """
        [[vary]]
        path = "requirements.imf_min"
        values = [0.3]
        [[variant]]
        name = "nested"
        set = { robot = { links = { thigh = { length = 0.5 } } } }
        """,
    )
    spec = load_study(path)
    before = copy.deepcopy(spec.base_project)
    (case,) = expand(spec)
    project = case_project(spec, case)
    assert project["requirements"]["imf_min"] == 0.3  # new key in an existing table
    assert project["robot"]["links"]["thigh"]["length"] == 0.5  # nested spelling of a dotted path
    assert project["robot"]["links"]["shank"] == before["robot"]["links"]["shank"]
    assert spec.base_project == before


@pytest.mark.slow
@given(
    st.lists(
        st.one_of(
            st.integers(0, 5),
            st.from_regex(r"[a-z_][a-z0-9_-]{0,6}", fullmatch=True),
            st.text(alphabet="ab.c d", min_size=1, max_size=5),
        ),
        min_size=1,
        max_size=5,
    )
)
def test_path_round_trip(steps):
    steps = [f"k{s}" if i == 0 and isinstance(s, int) else s for i, s in enumerate(steps)]
    steps = tuple(steps)
    assert parse_path(format_path(steps)) == steps


@pytest.fixture(scope="module")
def base_dir(tmp_path_factory):
    path = tmp_path_factory.mktemp("base")
    (path / "leg.toml").write_text(BASE_PROJECT)
    return path


@settings(max_examples=40, deadline=None)
@given(sizes=st.lists(st.integers(1, 4), min_size=1, max_size=3), n_variants=st.integers(0, 3))
def test_product_expansion_covers_each_combination_once(base_dir, sizes, n_variants):
    keys = [f"p{i}" for i in range(len(sizes))]
    definition = {
        "study": {"name": "h", "base": "leg.toml"},
        "vary": [
            {"path": f"requirements.{k}", "values": list(range(n))} for k, n in zip(keys, sizes)
        ],
        "variant": [{"name": f"v{j}"} for j in range(n_variants)],
    }
    spec = parse_study(definition, study_dir=base_dir)
    cases = expand(spec)
    assert len(cases) == math.prod(sizes) * max(1, n_variants)
    assert len({c.id for c in cases}) == len(cases)
    combos = {(c.variant, tuple(c.values[f"requirements.{k}"] for k in keys)) for c in cases}
    expected = {(v, t) for v in ([f"v{j}" for j in range(n_variants)] or [None])
                for t in itertools.product(*(range(n) for n in sizes))}  # fmt: skip
    assert combos == expected


BAD = [
    # (body after HEAD, expected field in the message, words of the rule)
    (
        '[[vary]]\npath = "robot.links.knee.length"\nvalues = [1]\n',
        "vary[0].path",
        "no robot.links.knee",
    ),
    ('[[vary]]\npath = "robot.arms.x"\nvalues = [1]\n', "vary[0].path", "no robot.arms"),
    ('[[vary]]\npath = "cases[3].payload"\nvalues = [1]\n', "vary[0].path", "has 1 items"),
    ('[[vary]]\npath = "robot.links"\nvalues = [1]\n', "vary[0].path", "table or list"),
    (
        '[[vary]]\npath = "cases[0].payload"\ngrid = {start = 1, stop = 2, num = 0}\n',
        "vary[0].grid.num",
        ">= 1",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\ngrid = {start = 0, stop = 2, num = 3, scale = "log"}\n',
        "vary[0].grid.start",
        "log scale",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\ngrid = {start = 2, stop = 2, num = 3}\n',
        "vary[0].grid.stop",
        "differ",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\ngrid = {start = "1 kg", stop = "2 m", num = 3}\n',
        "vary[0].grid.stop",
        "dimensions",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\ngrid = {start = 1, stop = 2, num = 3, step = 1}\n',
        "vary[0].grid.step",
        "unknown field",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\nrandom = {low = 1, high = 2, count = 3}\n',
        "vary[0].random.seed",
        "required",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\nrandom = {low = 3, high = 2, count = 3, seed = 1}\n',
        "vary[0].random.high",
        "greater than low",
    ),
    ("", "vary", "empty study"),
    (
        '[[variant]]\nname = "a"\n[[variant]]\nname = "a"\n',
        "variant[1].name",
        "duplicate variant name",
    ),
    ('task = "optimize"\n[[variant]]\nname = "a"\n', "study.task", "must be one of size, frontier"),
    (
        'combine = "zip"\n[[vary]]\npath = "cases[0].payload"\nvalues = [1, 2]\n'
        '[[vary]]\npath = "requirements.mass_budget"\nvalues = [1]\n',
        "study.combine",
        "same number",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\nvlaues = [1]\n',
        "vary[0].path",
        "exactly one of values",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\nvalues = [1]\ngrid = {start = 1, stop = 2, num = 2}\n',
        "vary[0].path",
        "exactly one of",
    ),
    ('[[vary]]\npath = "cases[0].payload"\nvalues = []\n', "vary[0].values", "at least one"),
    (
        '[[vary]]\npath = "cases[0].payload"\nvalues = [1, 1.0e0, 1]\n',
        "vary[0].values",
        "appears twice",
    ),
    (
        '[[vary]]\npath = "requirements.mass_budget"\nvalues = ["2 kg", "3 m"]\n',
        "vary[0].values",
        "dimensions",
    ),
    (
        '[[vary]]\npath = "requirements.mass_budget"\nvalues = ["2 kg", 3]\n',
        "vary[0].values",
        "mixes",
    ),
    (
        '[[vary]]\npath = "requirements.mass_budget"\nvalues = ["2 kgg"]\n',
        "vary[0].values[0]",
        "cannot read",
    ),
    ('[[vary]]\npath = "robot..links"\nvalues = [1]\n', "vary[0].path", "bad key"),
    (
        '[[vary]]\npath = "robot.links.thigh.length"\nvalues = [1]\n[[vary]]\n'
        "path = 'robot.links.\"thigh\".length'\nvalues = [2]\n",
        "vary[1].path",
        "overlaps",
    ),
    (
        '[[vary]]\npath = "cases[0].payload"\nvalues = [1]\n[[variant]]\nname = "x"\n'
        'set = {"cases[0]" = 1}\n',
        "variant[0].set",
        "overlaps",
    ),
    (
        '[[variant]]\nname = "x"\nset = {"catalog.motors.small" = 1}\n',
        "variant[0].set",
        "no catalog.motors",
    ),
    ('[[variant]]\nname = "x"\ncolour = "red"\n', "variant[0].colour", "unknown field"),
    ("[options]\n[[vary]]\n", "vary[0].path", "required"),
    ('[extra]\nx = 1\n[[variant]]\nname = "a"\n', "extra", "unknown field"),
    ('format = 2\n[[variant]]\nname = "a"\n', "study.format", "must be 1"),
]


@pytest.mark.parametrize("body, field, rule", BAD, ids=[f"{i}:{b[1]}" for i, b in enumerate(BAD)])
def test_bad_study_gives_one_input_error(tmp_path, body, field, rule):
    path = write(tmp_path, HEAD + body)
    with pytest.raises(InputError) as info:
        load_study(path)
    err = info.value
    assert err.file == str(path)
    assert err.field == field
    assert rule in err.rule
    assert str(err).count(str(path)) == 1


def test_bad_files_name_the_file(tmp_path):
    path = write(tmp_path, HEAD.replace("leg.toml", "missing.toml") + '[[variant]]\nname = "a"\n')
    with pytest.raises(InputError, match="not found") as info:
        load_study(path)
    assert info.value.field == "study.base"
    (tmp_path / "broken.toml").write_text("[study\nname=")
    with pytest.raises(InputError, match="malformed TOML"):
        load_study(tmp_path / "broken.toml")
    (tmp_path / "leg.toml").write_text("x = [")
    path.write_text(HEAD + '[[variant]]\nname = "a"\n')
    with pytest.raises(InputError) as info:
        load_study(path)
    assert info.value.file.endswith("leg.toml")


def test_a_variant_that_adds_keys_is_read_with_all_its_settings(tmp_path):
    """A variant's settings are checked together: on the bundled (fixed-base) arm, a variant
    that floats the base and adds an IMF limit loads, while a misspelt added key is named
    against the study file."""
    import shutil
    from importlib import resources

    with resources.as_file(resources.files("jointwright.examples") / "arm") as src:
        shutil.copytree(src, tmp_path / "arm")
    body = (
        '[study]\nname = "t"\nbase = "arm/project.toml"\n[[variant]]\nname = "floating"\n'
        'set = {{ "robot.base" = "floating", "case[2].{key}" = 0.3 }}\n'
    )
    path = tmp_path / "study.toml"
    path.write_text(body.format(key="imf_min"))
    assert [v.name for v in load_study(path).variants] == ["floating"]
    path.write_text(body.format(key="imf_mni"))
    with pytest.raises(InputError) as e:
        load_study(path)
    assert e.value.field == "variant[0].set" and "did you mean 'imf_min'" in e.value.rule
