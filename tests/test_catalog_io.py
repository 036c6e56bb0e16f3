"""Catalog files (TOML and CSV): loading, unit conversion, merging and input validation.

Expected SI values are converted by hand in the comments (1 kg·cm² = 1e-4 kg·m²,
1 rpm = 2π/60 rad/s, 1 arcmin = π/10800 rad). Typical ranges are [trade] (REFERENCES.md).
"""

from __future__ import annotations

import math
import re
from dataclasses import fields
from pathlib import Path

import pytest

from jointwright.catalog.io import FRAME_FIELDS, MOTOR_FIELDS, TYPICAL, load_catalog, load_catalogs
from jointwright.catalog.model import STAGE_KINDS, Motor, StageFrame
from jointwright.errors import InputError

DATA = Path(__file__).parent / "data" / "catalog"
DOCS = Path(__file__).parents[1] / "docs" / "catalog-format.md"
RPM = 2 * math.pi / 60


# --- the fixture catalog -------------------------------------------------------------------


def test_fixture_catalog_loads_with_units_converted():
    cat = load_catalog(DATA / "catalog.toml")
    assert [m.name for m in cat.motors] == ["QM-50", "QM-80", "RX-30", "RX-45", "RX-70", "RX-90"]
    qm50 = cat.motor("QM-50")
    assert qm50.rotor_inertia == pytest.approx(0.62e-4)  # 0.62 kg*cm^2
    assert qm50.max_speed == pytest.approx(3500 * RPM)  # 366.52 rad/s
    assert qm50.diameter == pytest.approx(0.050) and qm50.winding_temperature_max == 130.0
    assert cat.motor("QM-80").rotor_inertia == 4.1e-4  # plain numbers are SI
    sw = cat.stage("SW1")
    assert sw.ratio_range == (50.0, 120.0) and [f.name for f in sw.frames] == [
        "SW1-14",
        "SW1-20",
        "SW1-25",
    ]
    assert sw.frame("SW1-20").input_inertia == pytest.approx(0.19e-4)
    assert sw.frame("SW1-20").backlash == pytest.approx(math.pi / 10800)  # 1 arcmin
    assert cat.stage("PL1").frame("PL1-60").backlash == pytest.approx(10 * math.pi / 10800)
    assert cat.stage("PL1").ratios == (3.0, 4.0, 5.0, 7.0, 10.0)
    assert str(DATA / "catalog.toml") in cat.source


def test_csv_header_units_and_cell_units():
    cat = load_catalog(DATA / "motors.csv")
    rx45, rx70, rx90 = cat.motor("RX-45"), cat.motor("RX-70"), cat.motor("RX-90")
    assert rx45.rotor_inertia == pytest.approx(0.45e-4)  # header [kg*cm^2]
    assert rx45.max_speed == pytest.approx(3600 * RPM)  # header [rpm]
    assert rx70.resistance is None  # empty cell: the optional field is not given
    assert rx90.rotor_inertia == pytest.approx(0.00055)  # the cell's own unit wins
    assert rx90.max_speed == pytest.approx(250.0)  # "250 rad/s"


def test_family_members_follow_the_scaling_laws():
    # Wensing et al. 2017, sec. III-C [pub]: torque ∝ s²·l, mass ∝ s·l, inertia ∝ s³·l
    cat = load_catalog(DATA / "catalog.toml")
    (fam,) = cat.families
    big = cat.motor("FX-1.25x1.5")
    assert big.peak_torque == pytest.approx(6.0 * 1.25**2 * 1.5)
    assert big.mass == pytest.approx(0.7 * 1.25 * 1.5)
    assert big.rotor_inertia == pytest.approx(2.5e-4 * 1.25**3 * 1.5)
    assert len(cat.all_motors()) == 6 + len(fam.sizes)


def test_loading_twice_gives_equal_catalogs():
    a, b = load_catalog(DATA / "catalog.toml"), load_catalog(DATA / "catalog.toml")
    assert a.motors == b.motors and a.families == b.families
    assert [s.name for s in a.stages] == [s.name for s in b.stages]


def test_tables_cover_every_model_field():
    # a field added to Motor or StageFrame must be added to the file format too
    assert set(MOTOR_FIELDS) == {f.name for f in fields(Motor)} - {"name", "family", "size"}
    assert set(FRAME_FIELDS) == {f.name for f in fields(StageFrame)} - {"name"}
    assert set(TYPICAL) == set(STAGE_KINDS)


# --- notes: typical ranges and self-locking are warnings, not errors ----------------------


def _write(tmp_path: Path, files: dict[str, str]) -> Path:
    for name, text in files.items():
        (tmp_path / name).write_text(text, encoding="utf-8")
    return tmp_path / next(iter(files))


MOTOR = """
[[motor]]
name = "A"
peak_torque = 2.0
continuous_torque = 1.0
rotor_inertia = 1e-4
mass = 0.5
max_speed = 300.0
"""

STAGE = """
[[stage]]
name = "S"
kind = "spur"
ratios = [2, 3]
efficiency = { model = "constant", forward = 0.98, backward = 0.97 }

[[stage.frame]]
name = "S-1"
rated_peak_torque = 20.0
rated_continuous_torque = 10.0
mass = 0.2
"""


def sub(text: str, old: str, new: str) -> str:
    assert old in text, old
    return text.replace(old, new)


def test_atypical_values_become_notes(tmp_path):
    # [trade] ring-fixed planetary 3-10 per stage and 95-98 % forward; a worm model on a spur
    text = sub(STAGE, "ratios = [2, 3]", "ratios = [4, 20]")
    text = sub(text, 'kind = "spur"', 'kind = "planetary"')
    text = sub(
        text,
        '{ model = "constant", forward = 0.98, backward = 0.97 }',
        '{ model = "planetary_basic_train", basic_efficiency = 0.7 }',
    )
    cat = load_catalog(_write(tmp_path, {"c.toml": text}))
    assert len(cat.notes) == 2
    assert "typical single-stage 3-10" in cat.notes[0]
    assert "forward efficiency" in cat.notes[1] and "95-98 %" in cat.notes[1]
    assert cat.stage("S").ratios == (4.0, 20.0)


def test_self_locking_stage_gets_a_caution_note(tmp_path):
    # Shigley ch. 8 [mem]: f = 0.15 > tan(3°) = 0.0524, so the screw self-locks
    text = sub(STAGE, 'kind = "spur"', 'kind = "lead_screw"')
    text = sub(
        text,
        '{ model = "constant", forward = 0.98, backward = 0.97 }',
        '{ model = "screw", lead_angle = "3 deg", friction = 0.15, thread_half_angle = "15 deg" }',
    )
    cat = load_catalog(_write(tmp_path, {"c.toml": text}))
    assert any("self-locking" in n and "safety standards" in n for n in cat.notes)


# --- one InputError per bad input, naming file and field ---------------------------------

FRAMES_CSV = "stage,name,rated_peak_torque,rated_continuous_torque,mass\n"
NO_FRAME = STAGE.split("[[stage.frame]]")[0]

BAD = [
    # (id, files (the first is loaded), file named by the error, field named by the error)
    ("wrong type", {"c.toml": sub(MOTOR, "mass = 0.5", "mass = true")}, "c.toml", "motor[0].mass"),
    (
        "wrong dimension",
        {"c.toml": sub(MOTOR, "mass = 0.5", 'mass = "0.5 m"')},
        "c.toml",
        "motor[0].mass",
    ),
    (
        "missing field",
        {"c.toml": sub(MOTOR, "rotor_inertia = 1e-4\n", "")},
        "c.toml",
        "motor[0].rotor_inertia",
    ),
    (
        "unknown field",
        {"c.toml": sub(MOTOR, "peak_torque", "peak_torqe")},
        "c.toml",
        "motor[0].peak_torqe",
    ),
    ("zero mass", {"c.toml": sub(MOTOR, "mass = 0.5", "mass = 0")}, "c.toml", "motor[0].mass"),
    (
        "negative inertia",
        {"c.toml": sub(MOTOR, "1e-4", "-1e-4")},
        "c.toml",
        "motor[0].rotor_inertia",
    ),
    (
        "negative torque",
        {"c.toml": sub(MOTOR, "peak_torque = 2.0", "peak_torque = -2.0")},
        "c.toml",
        "motor[0].peak_torque",
    ),
    (
        "continuous above peak",
        {"c.toml": sub(MOTOR, "continuous_torque = 1.0", "continuous_torque = 2.5")},
        "c.toml",
        "motor[0].continuous_torque",
    ),
    ("family field on a motor", {"c.toml": MOTOR + 'family = "X"\n'}, "c.toml", "motor[0].family"),
    ("duplicate motor", {"c.toml": MOTOR + MOTOR}, "c.toml", "motor[1]"),
    (
        "unknown stage kind",
        {"c.toml": sub(STAGE, '"spur"', '"helical"')},
        "c.toml",
        "stage[0].kind",
    ),
    (
        "unknown efficiency model",
        {"c.toml": sub(STAGE, '"constant"', '"lossy"')},
        "c.toml",
        "stage[0].efficiency.model",
    ),
    (
        "efficiency above one",
        {"c.toml": sub(STAGE, "forward = 0.98", "forward = 1.02")},
        "c.toml",
        "stage[0].efficiency.forward",
    ),
    (
        "backward above forward",
        {"c.toml": sub(STAGE, "backward = 0.97", "backward = 0.99")},
        "c.toml",
        "stage[0].efficiency.backward",
    ),
    (
        "efficiency not a table",
        {"c.toml": sub(STAGE, '{ model = "constant", forward = 0.98, backward = 0.97 }', "0.98")},
        "c.toml",
        "stage[0].efficiency",
    ),
    (
        "ratios not ascending",
        {"c.toml": sub(STAGE, "[2, 3]", "[3, 2]")},
        "c.toml",
        "stage[0].ratios[1]",
    ),
    (
        "ratio not positive",
        {"c.toml": sub(STAGE, "[2, 3]", "[0, 3]")},
        "c.toml",
        "stage[0].ratios[0]",
    ),
    (
        "ratio range reversed",
        {"c.toml": sub(STAGE, "ratios = [2, 3]", "ratio_range = [5, 3]")},
        "c.toml",
        "stage[0].ratio_range",
    ),
    (
        "both ratios and range",
        {"c.toml": sub(STAGE, "ratios = [2, 3]", "ratios = [2, 3]\nratio_range = [2, 3]")},
        "c.toml",
        "stage[0].ratios",
    ),
    (
        "neither ratios nor range",
        {"c.toml": sub(STAGE, "ratios = [2, 3]\n", "")},
        "c.toml",
        "stage[0].ratios",
    ),
    (
        "ratio outside efficiency table",
        {
            "c.toml": sub(
                sub(STAGE, "ratios = [2, 3]", "ratio_range = [40, 200]"),
                '{ model = "constant", forward = 0.98, backward = 0.97 }',
                '{ model = "table", rows = [[30, 0.8, 0.7], [160, 0.7, 0.6]] }',
            )
        },
        "c.toml",
        "stage[0].ratio_range",
    ),
    ("stage without frames", {"c.toml": NO_FRAME}, "c.toml", "stage[0].frame"),
    (
        "frame continuous above peak",
        {"c.toml": sub(STAGE, "rated_continuous_torque = 10.0", "rated_continuous_torque = 30.0")},
        "c.toml",
        "stage[0].frame[0].rated_continuous_torque",
    ),
    ("duplicate stage", {"c.toml": STAGE + STAGE}, "c.toml", "stage[1]"),
    (
        "family size not positive",
        {
            "c.toml": '[[motor_family]]\nname = "F"\n'
            "sizes = [[0, 1]]\n"
            + MOTOR.replace("[[motor]]", "[motor_family.reference]").replace('name = "A"\n', "")
        },
        "c.toml",
        "motor_family[0].sizes[0][0]",
    ),
    (
        "family member named like a motor",
        {
            "c.toml": MOTOR.replace('"A"', '"F-1x1"')
            + '[[motor_family]]\nname = "F"\nsizes = [[1, 1]]\n'
            + MOTOR.replace("[[motor]]", "[motor_family.reference]").replace('name = "A"\n', "")
        },
        "c.toml",
        "motor_family[0].sizes",
    ),
    ("malformed TOML", {"c.toml": "[[motor]\nname = 1\n"}, "c.toml", "(syntax)"),
    ("missing file", {}, "none.toml", "(file)"),
    ("unknown file type", {"c.txt": MOTOR}, "c.txt", "(file)"),
    ("missing motors CSV", {"c.toml": 'motors_csv = "m.csv"\n' + STAGE}, "m.csv", "(file)"),
    (
        "CSV wrong cell count",
        {
            "m.csv": "name,peak_torque,continuous_torque,rotor_inertia,mass,"
            "max_speed\nA,2,1,1e-4,0.5,300\nB,2,1,1e-4,0.5\n"
        },
        "m.csv",
        "row 3",
    ),
    (
        "CSV bad value",
        {
            "m.csv": "name,peak_torque,continuous_torque,rotor_inertia,mass,max_speed"
            "\n# comment line\nA,2,1,1e-4,heavy,300\n"
        },
        "m.csv",
        "row 3, column mass",
    ),
    (
        "CSV unknown column",
        {"m.csv": "name,peak_torqe [N*m]\nA,2\n"},
        "m.csv",
        "row 1, column peak_torqe",
    ),
    (
        "CSV unknown unit",
        {"m.csv": "name,peak_torque [Nm/s/x]\nA,2\n"},
        "m.csv",
        "row 1, column peak_torque",
    ),
    (
        "frames CSV alone",
        {"f.csv": FRAMES_CSV + "S,S-2,20,10,0.2\n"},
        "f.csv",
        "row 1, column stage",
    ),
    (
        "frames CSV names unknown stage",
        {"c.toml": 'frames_csv = "f.csv"\n' + STAGE, "f.csv": FRAMES_CSV + "T,T-2,20,10,0.2\n"},
        "f.csv",
        "row 2, column stage",
    ),
    (
        "frames CSV duplicates a frame",
        {"c.toml": 'frames_csv = "f.csv"\n' + STAGE, "f.csv": FRAMES_CSV + "S,S-1,20,10,0.2\n"},
        "f.csv",
        "row 2, column name",
    ),
    ("empty catalog", {"c.toml": 'description = "nothing yet"\n'}, "c.toml", "(top level)"),
    ("unknown top-level key", {"c.toml": "motors = 3\n" + MOTOR}, "c.toml", "motors"),
]


@pytest.mark.parametrize(
    "files, file, field", [case[1:] for case in BAD], ids=[case[0] for case in BAD]
)
def test_bad_input_raises_one_input_error(tmp_path, files, file, field):
    path = _write(tmp_path, files) if files else tmp_path / file
    with pytest.raises(InputError) as info:
        load_catalog(path)
    err = info.value
    assert Path(err.file).name == file, str(err)
    assert err.field == field, str(err)
    assert err.rule and "\n" not in str(err)


def test_enough_distinct_bad_inputs():
    assert len({case[0] for case in BAD}) == len(BAD) >= 15


def test_rule_texts_help(tmp_path):
    with pytest.raises(InputError, match="did you mean 'peak_torque'"):
        load_catalog(_write(tmp_path, {"c.toml": sub(MOTOR, "peak_torque", "peak_torqe")}))
    with pytest.raises(InputError, match="line 2"):
        load_catalog(_write(tmp_path, {"c.toml": "[[motor]]\nname = \n"}))
    with pytest.raises(InputError, match="must not exceed peak_torque"):
        load_catalog(
            _write(
                tmp_path,
                {"c.toml": sub(MOTOR, "continuous_torque = 1.0", "continuous_torque = 2.5")},
            )
        )


def test_duplicate_names_across_files(tmp_path):
    first = _write(tmp_path, {"a.toml": MOTOR + STAGE})
    second = _write(tmp_path, {"b.toml": sub(MOTOR, "mass = 0.5", "mass = 0.6")})
    with pytest.raises(InputError) as info:
        load_catalogs([first, second])
    assert Path(info.value.file).name == "b.toml" and info.value.field == "motor[0]"
    assert "a.toml" in info.value.rule
    # distinct names merge, in file order
    third = _write(tmp_path, {"c.toml": sub(MOTOR, '"A"', '"B"')})
    merged = load_catalogs([first, third])
    assert [m.name for m in merged.motors] == ["A", "B"] and len(merged.stages) == 1


# --- the documentation's examples are valid catalogs ----------------------------------------


def _doc_files() -> dict[str, str]:
    """Code blocks of docs/catalog-format.md whose first line is ``# file: <name>``."""
    text = DOCS.read_text(encoding="utf-8")
    blocks = re.findall(r"```[a-z]*\n(.*?)```", text, flags=re.S)
    out = {}
    for block in blocks:
        first, _, rest = block.partition("\n")
        m = re.match(r"#\s*file:\s*(\S+)", first)
        if m:
            out[m.group(1)] = rest
    return out


def test_documented_examples_load(tmp_path):
    files = _doc_files()
    assert {"catalog.toml", "motors.csv", "frames.csv"} <= set(files)
    for name, text in files.items():
        (tmp_path / name).write_text(text, encoding="utf-8")
    cat = load_catalog(tmp_path / "catalog.toml")
    assert cat.motors and cat.stages and cat.families
    models = {s.efficiency.kind for s in cat.stages}
    assert {
        "constant",
        "coulomb",
        "proportional",
        "screw",
        "worm",
        "planetary_basic_train",
        "table",
    } <= models
