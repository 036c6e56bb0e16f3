"""The bad-input corpus: for each of the seven input kinds, at least 30 distinct broken inputs,
each an edit of a bundled example with the file, field and rule its one-line error must name.

Used by tests/test_bad_input_corpus.py. Rules are the ones in docs/project-format.md,
docs/catalog-format.md, docs/design-format.md, docs/robot-format.md, docs/duty-cycle.md and
docs/study-format.md.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Bad:
    """Edits (file, old, new) applied in order to a copy of the leg example, then a verb.

    ``old`` is replaced once; ``""`` prepends ``new``; None replaces the whole file.
    ``verb``: check, assess (with the example design) or study (with ``study.toml``).
    """

    kind: str
    id: str
    edits: tuple
    verb: str
    file: str
    field: str
    rule: str


def _one(kind, id, file, old, new, verb, field, rule, extra=()):
    return Bad(kind, id, ((file, old, new), *extra), verb, file, field, rule)


# ------------------------------------------------------------------------------ catalog TOML
MOTOR0 = {"peak_torque": ('"0.878 N*m"', "N*m"), "continuous_torque": ('"0.274 N*m"', "N*m"),
          "rotor_inertia": ('"0.329 kg*cm^2"', "kg*m**2"), "mass": ('"0.18 kg"', "kg"),
          "max_speed": ('"8631 rpm"', "rad/s"), "torque_constant": ('"0.0478 N*m/A"', "N*m/A"),
          "resistance": ('"0.28 ohm"', "ohm"), "thermal_time_constant": ('"78 s"', "s")}
CATALOG = []
for key, (value, si) in MOTOR0.items():
    line = f"{key} = {value}"
    neg = value.replace('"', '"-', 1)
    CATALOG += [
        _one("catalog", f"motor {key} negative", "catalog.toml", line, f"{key} = {neg}", "check",
             f"motor[0].{key}", f"must be > 0 {si}"),
        _one("catalog", f"motor {key} in metres", "catalog.toml", line, f'{key} = "3 m"', "check",
             f"motor[0].{key}", f"convertible to {si}"),
        _one("catalog", f"motor {key} as true", "catalog.toml", line, f"{key} = true", "check",
             f"motor[0].{key}", "must be a number or a quantity"),
    ]
CATALOG += [
    _one("catalog", "motor key misspelt", "catalog.toml", 'mass = "0.18 kg"', 'mas = "0.18 kg"',
         "check", "motor[0].mas", "unknown field"),
    _one("catalog", "motor peak below continuous", "catalog.toml", 'peak_torque = "0.878 N*m"',
         'peak_torque = "0.2 N*m"', "check", "motor[0].continuous_torque", "must not exceed peak_torque"),
    _one("catalog", "cogging above continuous", "catalog.toml", 'cogging_torque = "0.00702 N*m"',
         'cogging_torque = "0.3 N*m"', "check", "motor[0].cogging_torque", "must be below continuous_torque"),
    _one("catalog", "winding limit below 20 degC", "catalog.toml", 'winding_temperature_max = "140 degC"',
         'winding_temperature_max = "15 degC"', "check", "motor[0].winding_temperature_max", "must be above 20"),
    _one("catalog", "motor name twice", "catalog.toml", 'name = "Flatwind-2"', 'name = "Flatwind-1"',
         "check", "motor[1]", "duplicate motor name 'Flatwind-1'"),
    _one("catalog", "stage kind unknown", "catalog.toml", 'kind = "planetary"', 'kind = "harmonic"',
         "check", "stage[0].kind", "must be one of"),
    _one("catalog", "stage ratios empty", "catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]",
         "ratios = []", "check", "stage[0].ratios", "at least one ratio"),
    _one("catalog", "stage ratios descending", "catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]",
         "ratios = [3, 5, 4]", "check", "stage[0].ratios[2]", "strictly ascending"),
    _one("catalog", "stage ratio zero", "catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]",
         "ratios = [0, 4]", "check", "stage[0].ratios[0]", "must be > 0"),
    _one("catalog", "stage ratio range reversed", "catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]",
         "ratio_range = [10, 3]", "check", "stage[0].ratio_range", "low must be below high"),
    _one("catalog", "stage ratios and ratio range", "catalog.toml", "ratios = [3, 4, 5, 6, 7, 8, 9, 10]",
         "ratios = [3, 4]\nratio_range = [3, 10]", "check", "stage[0].ratios", "exactly one of"),
    _one("catalog", "frame torque negative", "catalog.toml", 'rated_peak_torque = "16 N*m"',
         'rated_peak_torque = "-16 N*m"', "check", "stage[0].frame[0].rated_peak_torque", "must be > 0"),
    _one("catalog", "frame backlash negative", "catalog.toml", 'backlash = "15 arcmin"',
         'backlash = "-15 arcmin"', "check", "stage[0].frame[0].backlash", "must be >= 0 rad"),
    _one("catalog", "frame stiffness zero", "catalog.toml", 'stiffness = "640 N*m/rad"',
         'stiffness = "0 N*m/rad"', "check", "stage[0].frame[0].stiffness", "must be > 0"),
    _one("catalog", "frame mass 400 digits", "catalog.toml", 'mass = "0.22 kg"', "mass = " + "9" * 400,
         "check", "stage[0].frame[0].mass", "must be finite"),
    _one("catalog", "top-level key misspelt", "catalog.toml", "", 'descripton = "x"\n', "check",
         "descripton", "unknown field"),
]

# ------------------------------------------------------------------------------- catalog CSV
HEADER = "name,peak_torque [N*m],continuous_torque [N*m],rotor_inertia [kg*cm^2],mass [kg],max_speed [rpm]\n"
ROW = ["CSV-1", "1.0", "0.3", "0.3", "0.2", "6000"]
UNITS = ["", "N*m", "N*m", "kg*m**2", "kg", "rad/s"]
NAMES = HEADER.strip().split(",")


def _csv(cells=ROW, header=HEADER, more=""):
    return header + ",".join(cells) + "\n" + more


USE_CSV = ("catalog.toml", "", 'motors_csv = "more.csv"\n')
CSV = []
for j in range(1, 6):
    col = NAMES[j].split(" [")[0]
    for label, cell, rule in [("negative", "-1", f"must be > 0 {UNITS[j]}"), ("text", "lots", "cannot read"),
                              ("NaN", "nan", "must be finite"), ("infinite", "inf", "must be finite"),
                              ("400 digits", "9" * 400, "must be finite")]:
        cells = list(ROW)
        cells[j] = cell
        CSV.append(Bad("catalog CSV", f"{col} {label}", (USE_CSV, ("more.csv", None, _csv(cells))),
                       "check", "more.csv", f"row 2, column {col}", rule))
CSV += [
    Bad("catalog CSV", "unknown column", (USE_CSV, ("more.csv", None, _csv(ROW + ["1"], HEADER.strip() + ",weight\n"))),
        "check", "more.csv", "row 1, column weight", "unknown column"),
    Bad("catalog CSV", "column twice", (USE_CSV, ("more.csv", None, _csv(ROW + ["1"], HEADER.strip() + ",mass\n"))),
        "check", "more.csv", "row 1, column mass", "appears twice"),
    Bad("catalog CSV", "header unit of the wrong dimension", (USE_CSV, ("more.csv", None, _csv(header=HEADER.replace("mass [kg]", "mass [m]")))),
        "check", "more.csv", "row 2, column mass", "convertible to kg"),
    Bad("catalog CSV", "row too long", (USE_CSV, ("more.csv", None, _csv(ROW + ["7"])),),
        "check", "more.csv", "row 2", "cells"),
    Bad("catalog CSV", "required column missing", (USE_CSV, ("more.csv", None, "name,mass [kg]\nCSV-1,0.2\n")),
        "check", "more.csv", "row 2, column peak_torque", "is required"),
    Bad("catalog CSV", "motor name twice", (USE_CSV, ("more.csv", None, _csv(more=",".join(ROW) + "\n"))),
        "check", "more.csv", "row 3", "duplicate motor name 'CSV-1'"),
]

# ------------------------------------------------------------------------------------ design
DESIGN = [
    _one("design", "unknown motor", "design.toml", 'motor = "Flatwind-6"', 'motor = "PX-1"', "assess",
         "joint.hip_ab.motor", "PX-1"),
    _one("design", "unknown stage", "design.toml", 'stage = "Orbit"', 'stage = "XX"', "assess",
         "joint.hip_ab.stages[0].stage", "XX"),
    _one("design", "unknown frame", "design.toml", 'frame = "Orbit-2"', 'frame = "Orbit-99"', "assess",
         "joint.hip_ab.stages[0].frame", "Orbit-99"),
    _one("design", "ratio not offered", "design.toml", "ratio = 6", "ratio = 6.5", "assess",
         "joint.hip_ab.stages[0].ratio", "6.5"),
    _one("design", "ratio negative", "design.toml", "ratio = 6", "ratio = -6", "assess",
         "joint.hip_ab.stages[0].ratio", "-6"),
    _one("design", "ratio text", "design.toml", "ratio = 6", 'ratio = "six"', "assess",
         "joint.hip_ab.stages[0].ratio", "six"),
    _one("design", "ratio 400 digits", "design.toml", "ratio = 6", "ratio = " + "9" * 400, "assess",
         "joint.hip_ab.stages[0].ratio", "finite"),
    _one("design", "motor missing", "design.toml", 'motor = "Flatwind-6"\n', "", "assess",
         "joint.hip_ab.motor", "is required"),
    _one("design", "unknown joint", "design.toml", "[joint.knee]", "[joint.ankle]", "assess",
         "joint.ankle", "ankle"),
    _one("design", "key misspelt", "design.toml", 'motor = "Flatwind-6"', 'motr = "Flatwind-6"', "assess",
         "joint.hip_ab.motr", "did you mean 'motor'"),
    _one("design", "stages not a list", "design.toml", 'stages = [{ stage = "Orbit", frame = "Orbit-2", ratio = 6 }]',
         'stages = "Orbit"', "assess", "joint.hip_ab.stages", "must be a list"),
    _one("design", "stage without ratio", "design.toml", ', ratio = 6 }', " }", "assess",
         "joint.hip_ab.stages[0].ratio", "is required"),
    _one("design", "stage key misspelt", "design.toml", "ratio = 6", "ration = 6", "assess",
         "joint.hip_ab.stages[0].ration", "did you mean 'ratio'"),
    _one("design", "motor as a number", "design.toml", 'motor = "Flatwind-6"', "motor = 96", "assess",
         "joint.hip_ab.motor", "must be a string"),
    _one("design", "name as a number", "design.toml", 'name = "QL-3 starting point"', "name = 3", "assess",
         "design.name", "must be a string"),
    _one("design", "top-level key misspelt", "design.toml", "[design]", "[desing]", "assess",
         "desing", "unknown field"),
    _one("design", "not TOML", "design.toml", None, "[joint.hip_ab\nmotor = 1\n", "assess",
         "(syntax)", "malformed TOML"),
    _one("design", "joint missing", "design.toml", '[joint.knee]\nmotor = "Flatwind-6"\nstages = [{ stage = "Orbit", frame = "Orbit-3", ratio = 9 }]\n',
         "", "assess", "joint.knee", "every actuated joint needs an actuator"),
    _one("design", "two stages where one is allowed", "design.toml", 'stages = [{ stage = "Orbit", frame = "Orbit-2", ratio = 6 }]',
         'stages = [{ stage = "Orbit", frame = "Orbit-2", ratio = 6 }, { stage = "Strap", frame = "Strap-1", ratio = 2 }]',
         "assess", "joint.hip_ab.stages", "at most 1 stages"),
    _one("design", "ratio zero", "design.toml", "ratio = 6", "ratio = 0", "assess",
         "joint.hip_ab.stages[0].ratio", "must be > 0"),
    _one("design", "ratio in metres", "design.toml", "ratio = 6", 'ratio = "6 m"', "assess",
         "joint.hip_ab.stages[0].ratio", "convertible to dimensionless"),
    _one("design", "ratio NaN", "design.toml", "ratio = 6", "ratio = nan", "assess",
         "joint.hip_ab.stages[0].ratio", "must be finite"),
    _one("design", "ratio infinite", "design.toml", "ratio = 6", "ratio = inf", "assess",
         "joint.hip_ab.stages[0].ratio", "must be finite"),
    _one("design", "ratio true", "design.toml", "ratio = 6", "ratio = true", "assess",
         "joint.hip_ab.stages[0].ratio", "must be a number"),
    _one("design", "stage name missing", "design.toml", 'stage = "Orbit", ', "", "assess",
         "joint.hip_ab.stages[0].stage", "is required"),
    _one("design", "frame missing", "design.toml", 'frame = "Orbit-2", ', "", "assess",
         "joint.hip_ab.stages[0].frame", "is required"),
    _one("design", "stage as a number", "design.toml", 'stage = "Orbit"', "stage = 1", "assess",
         "joint.hip_ab.stages[0].stage", "must be a string"),
    _one("design", "frame of another stage", "design.toml", 'frame = "Orbit-2"', 'frame = "Strap-1"', "assess",
         "joint.hip_ab.stages[0].frame", "unknown frame 'Strap-1' of Orbit"),
    _one("design", "stage entry not a table", "design.toml", '[{ stage = "Orbit", frame = "Orbit-2", ratio = 6 }]', '["Orbit"]',
         "assess", "joint.hip_ab.stages[0]", "must be a table"),
    _one("design", "motor empty", "design.toml", 'motor = "Flatwind-6"', 'motor = ""', "assess",
         "joint.hip_ab.motor", "unknown motor ''"),
    _one("design", "joint not a table", "design.toml", "[joint.knee]", 'extra = 1\n[joint.knee]', "assess",
         "joint.hip_fe.extra", "unknown field"),
    _one("design", "not UTF-8 free text", "design.toml", 'name = "QL-3 starting point"', "name = [1]", "assess",
         "design.name", "must be a string"),
]

# -------------------------------------------------------------------------------- trajectory
TRAJ_HEADER = "t [s],q:hip_ab [deg],q:hip_fe [deg],q:knee [deg],f:foot:x [N],f:foot:y [N],f:foot:z [N]"
TRAJ_ROWS = ["0,0,-40,80,0,0,0", "0.1,0,-42,84,-1,0,50", "0.2,0,-44,88,-2,0,100",
             "0.3,0,-42,84,-1,0,50", "0.4,0,-40,80,0,0,0"]


def _traj(header=TRAJ_HEADER, rows=TRAJ_ROWS):
    return header + "\n" + "\n".join(rows) + "\n"


TRAJ_COLS = TRAJ_HEADER.split(",")
TRAJECTORY = []
for j, col in enumerate(TRAJ_COLS):
    for label, cell, rule in [("text", "x", "must be a number"), ("NaN", "nan", "must be finite"),
                              ("infinite", "-inf", "must be finite"), ("empty", "", "must be a number")]:
        rows = list(TRAJ_ROWS)
        cells = rows[2].split(",")
        cells[j] = cell
        rows[2] = ",".join(cells)
        TRAJECTORY.append(Bad("trajectory", f"{col} {label}", (("gait.csv", None, _traj(rows=rows)),),
                              "assess", "gait.csv", f"row 3 (line 4), column {col!r}", rule))
TRAJECTORY += [
    _one("trajectory", "no time column", "gait.csv", None, _traj(TRAJ_HEADER.replace("t [s]", "time [s]")),
         "assess", "column 'time [s]'", "must be t, q:<joint>"),
    _one("trajectory", "a joint missing", "gait.csv", None,
         _traj(TRAJ_HEADER.replace(",q:knee [deg]", ""), [",".join(r.split(",")[:3] + r.split(",")[4:]) for r in TRAJ_ROWS]),
         "assess", "column 'q:knee'", "every joint needs its q"),
    _one("trajectory", "unknown joint", "gait.csv", None, _traj(TRAJ_HEADER.replace("q:knee", "q:ankle")),
         "assess", "column 'q:ankle [deg]'", "unknown joint 'ankle'"),
    _one("trajectory", "column twice", "gait.csv", None, _traj(TRAJ_HEADER.replace("q:knee", "q:hip_fe")),
         "assess", "column 'q:hip_fe [deg]'", "appears twice"),
    _one("trajectory", "angle in kilograms", "gait.csv", None, _traj(TRAJ_HEADER.replace("q:knee [deg]", "q:knee [kg]")),
         "assess", "column 'q:knee [kg]'", "unit [kg] is not one of angle or length"),
    _one("trajectory", "time going back", "gait.csv", None, _traj(rows=TRAJ_ROWS[:3] + ["0.15" + TRAJ_ROWS[3][3:]] + TRAJ_ROWS[4:]),
         "assess", "row 4 (line 5), column 't'", "strictly increasing"),
    _one("trajectory", "one sample", "gait.csv", None, _traj(rows=TRAJ_ROWS[:1]),
         "assess", "rows", "at least 2 samples"),
    _one("trajectory", "force triple incomplete", "gait.csv", None,
         _traj(TRAJ_HEADER.rsplit(",", 1)[0], [r.rsplit(",", 1)[0] for r in TRAJ_ROWS]),
         "assess", "column 'f:foot:x'", "give all of"),
    _one("trajectory", "ragged row", "gait.csv", None, _traj(rows=TRAJ_ROWS[:2] + [TRAJ_ROWS[2] + ",1"] + TRAJ_ROWS[3:]),
         "assess", "row 3 (line 4)", "has 8 cells, the header has 7"),
    _one("trajectory", "empty file", "gait.csv", None, "", "assess", "header", "the file is empty"),
    _one("trajectory", "force in newton-metres", "gait.csv", None, _traj(TRAJ_HEADER.replace("f:foot:x [N]", "f:foot:x [N*m]")),
         "assess", "column 'f:foot:x [N*m]'", "unit [N*m] is not one of force"),
]

# -------------------------------------------------------------------------------------- URDF
URDF = [
    _one("URDF", "mass negative", "leg.urdf", '<mass value="0.45"/>', '<mass value="-0.45"/>', "check",
         "urdf.link[hip].inertial.mass.value", "must be >= 0 kg"),
    _one("URDF", "mass text", "leg.urdf", '<mass value="0.45"/>', '<mass value="heavy"/>', "check",
         "urdf.link[hip].inertial.mass.value", "number"),
    _one("URDF", "mass NaN", "leg.urdf", '<mass value="0.45"/>', '<mass value="nan"/>', "check",
         "urdf.link[hip].inertial.mass.value", "finite"),
    _one("URDF", "inertia negative", "leg.urdf", 'ixx="0.0004"', 'ixx="-0.0004"', "check",
         "urdf.link[hip].inertial.inertia", "positive semidefinite"),
    _one("URDF", "inertia text", "leg.urdf", 'ixx="0.0004"', 'ixx="big"', "check",
         "urdf.link[hip].inertial.inertia.ixx", "must be 1 number(s), got 'big'"),
    _one("URDF", "axis zero", "leg.urdf", '<axis xyz="1 0 0"/>', '<axis xyz="0 0 0"/>', "check",
         "urdf.joint[hip_ab].axis.xyz", "zero vector"),
    _one("URDF", "axis two numbers", "leg.urdf", '<axis xyz="1 0 0"/>', '<axis xyz="1 0"/>', "check",
         "urdf.joint[hip_ab].axis.xyz", "3"),
    _one("URDF", "unknown parent link", "leg.urdf", '<parent link="trunk"/>', '<parent link="torso"/>', "check",
         "urdf.joint[hip_ab].parent", "no link named 'torso'"),
    _one("URDF", "unknown child link", "leg.urdf", '<child link="hip"/>', '<child link="hips"/>', "check",
         "urdf.joint[hip_ab].child", "no link named 'hips'"),
    _one("URDF", "limit missing", "leg.urdf", '<limit lower="-0.8" upper="0.8" effort="1000" velocity="100"/>', "",
         "check", "urdf.joint[hip_ab].limit", "required"),
    _one("URDF", "malformed XML", "leg.urdf", "</robot>", "</robt>", "check", "urdf line 66",
         "malformed XML (mismatched tag"),
    _one("URDF", "root not robot", "leg.urdf", '<robot name="ql3_leg">', '<robots name="ql3_leg">', "check",
         "urdf", "the root element must be <robot>", (("leg.urdf", "</robot>", "</robots>"),)),
    _one("URDF", "origin text", "leg.urdf", '<origin xyz="0.2 0.1 0" rpy="0 0 0"/>',
         '<origin xyz="0.2 x 0" rpy="0 0 0"/>', "check", "urdf.joint[hip_ab].origin.xyz", "3 number(s)"),
    _one("URDF", "mass infinite", "leg.urdf", '<mass value="0.45"/>', '<mass value="inf"/>', "check",
         "urdf.link[hip].inertial.mass.value", "finite"),
    _one("URDF", "mass 400 digits", "leg.urdf", '<mass value="0.45"/>', '<mass value="' + "9" * 400 + '"/>', "check",
         "urdf.link[hip].inertial.mass.value", "finite"),
    _one("URDF", "mass empty", "leg.urdf", '<mass value="0.45"/>', '<mass value=""/>', "check",
         "urdf.link[hip].inertial.mass.value", "number"),
    _one("URDF", "inertia NaN", "leg.urdf", 'ixx="0.0004"', 'ixx="nan"', "check",
         "urdf.link[hip].inertial.inertia.ixx", "must be 1 finite number(s), got 'nan'"),
    _one("URDF", "inertia off-diagonal too large", "leg.urdf", 'ixx="0.0004" ixy="0"', 'ixx="0.0004" ixy="0.01"', "check",
         "urdf.link[hip].inertial.inertia", "positive semidefinite"),
    _one("URDF", "axis NaN", "leg.urdf", '<axis xyz="1 0 0"/>', '<axis xyz="nan 0 0"/>', "check",
         "urdf.joint[hip_ab].axis.xyz", "finite"),
    _one("URDF", "axis text", "leg.urdf", '<axis xyz="1 0 0"/>', '<axis xyz="x y z"/>', "check",
         "urdf.joint[hip_ab].axis.xyz", "number"),
    _one("URDF", "parent missing", "leg.urdf", '<parent link="trunk"/>', "", "check",
         "urdf.joint[hip_ab].parent", "no link named None"),
    _one("URDF", "no link", "leg.urdf", None, '<?xml version="1.0"?>\n<robot name="x"></robot>\n', "check",
         "urdf.link", "at least one <link>"),
    _one("URDF", "actuated joint not in the URDF", "project.toml", 'actuated = ["hip_ab", "hip_fe", "knee"]',
         'actuated = ["hip_ab", "hip_fe", "ankle"]', "check", "robot.actuated[2]", "ankle"),
    _one("URDF", "mount link not in the URDF", "project.toml", 'mount_link = "thigh"', 'mount_link = "femur"',
         "check", "robot.mounts.knee.mount_link", "femur"),
    Bad("URDF", "URDF file missing", (("project.toml", 'urdf = "leg.urdf"', 'urdf = "legs.urdf"'),), "check",
        "legs.urdf", "urdf", "cannot read the file"),
    _one("URDF", "inertia 400 digits", "leg.urdf", 'ixx="0.0004"', 'ixx="' + "9" * 400 + '"', "check",
         "urdf.link[hip].inertial.inertia.ixx", "finite"),
    _one("URDF", "origin rpy text", "leg.urdf", '<origin xyz="0.2 0.1 0" rpy="0 0 0"/>',
         '<origin xyz="0.2 0.1 0" rpy="0 zero 0"/>', "check", "urdf.joint[hip_ab].origin.rpy", "3 number(s)"),
    _one("URDF", "joint type unknown", "leg.urdf", 'type="revolute"', 'type="spinning"', "check",
         "urdf.joint[hip_ab].type", "must be one of"),
    _one("URDF", "frame of a case not in the URDF", "project.toml", 'frame = "foot"', 'frame = "toe"', "check",
         "case[0].frame", "no frame, link or joint named 'toe'"),
    _one("URDF", "empty file", "leg.urdf", None, "", "check", "urdf line 1", "malformed XML (no element found"),
]

# ------------------------------------------------------------------------------------- study
STUDY = """[study]
format = 1
name = "leg corpus"
base = "project.toml"
task = "size"
[options]
time_limit = 30
[[vary]]
path = "requirements.total_mass_max"
values = ["3.5 kg", "4 kg"]
[[variant]]
name = "as is"
"""


def _study(id, old, new, field, rule):
    return Bad("study", id, (("study.toml", None, STUDY), ("study.toml", old, new)), "study",
               "study.toml", field, rule)


STUDIES = [
    _study("format 2", "format = 1", "format = 2", "study.format", "must be 1"),
    _study("no name", 'name = "leg corpus"\n', "", "study.name", "is required"),
    _study("base missing", 'base = "project.toml"', 'base = "nowhere.toml"', "study.base", "not found"),
    _study("task unknown", 'task = "size"', 'task = "optimize"', "study.task", "must be one of size, frontier"),
    _study("combine unknown", 'task = "size"', 'task = "size"\ncombine = "cross"', "study.combine", "must be one of product, zip"),
    _study("study key misspelt", 'task = "size"', 'tsk = "size"', "study.tsk", "unknown field"),
    _study("option misspelt", "time_limit = 30", "time_limt = 30", "options.time_limt", "did you mean 'time_limit'"),
    _study("time limit negative", "time_limit = 30", "time_limit = -5", "options.time_limit", "> 0"),
    _study("time limit zero", "time_limit = 30", "time_limit = 0", "options.time_limit", "> 0"),
    _study("time limit text", "time_limit = 30", 'time_limit = "long"', "options.time_limit", "number of seconds"),
    _study("time limit 400 digits", "time_limit = 30", "time_limit = " + "9" * 400, "options.time_limit", "number of seconds"),
    _study("objective unknown", "time_limit = 30", 'objective = "speed"', "options.objective", "must be one of payload, mass, imf"),
    _study("backend unknown", "time_limit = 30", 'backend = "gurobi"', "options.backend", "must be one of search, pyomo"),
    _study("measure unknown", "time_limit = 30", 'measure = "stiffness"', "options.measure", "must be one of imf"),
    _study("points zero", "time_limit = 30", "points = 0", "options.points", "whole number >= 1"),
    _study("variant option misspelt", 'name = "as is"', 'name = "as is"\noptions = { backnd = "search" }',
           "variant[0].options.backnd", "unknown option"),
    _study("vary path unknown", 'path = "requirements.total_mass_max"', 'path = "requirements.total_mas.max"',
           "vary[0].path", "the base project has no requirements.total_mas"),
    _study("vary path bad character", 'path = "requirements.total_mass_max"', 'path = "requirements/total"',
           "vary[0].path", "bad character"),
    _study("vary a table", 'path = "requirements.total_mass_max"', 'path = "requirements"', "vary[0].path",
           "table or list"),
    _study("vary project.name", 'path = "requirements.total_mass_max"\nvalues = ["3.5 kg", "4 kg"]',
           'path = "project.name"\nvalues = ["a1", "b2"]', "vary[0].path", "only numbers and quantities"),
    _study("values empty", 'values = ["3.5 kg", "4 kg"]', "values = []", "vary[0].values", "at least one value"),
    _study("values twice", 'values = ["3.5 kg", "4 kg"]', 'values = ["4 kg", "4 kg"]', "vary[0].values", "appears twice"),
    _study("values mixed", 'values = ["3.5 kg", "4 kg"]', 'values = ["3.5 kg", 4]', "vary[0].values", "mixes plain numbers"),
    _study("values of two dimensions", 'values = ["3.5 kg", "4 kg"]', 'values = ["3.5 kg", "4 m"]', "vary[0].values",
           "different dimensions"),
    _study("values in metres", 'values = ["3.5 kg", "4 kg"]', 'values = ["3.5 m", "4 m"]', "vary[0].values",
           "convertible to kg"),
    _study("value not a quantity", 'values = ["3.5 kg", "4 kg"]', 'values = ["heavy"]', "vary[0].values[0]",
           "quantity string"),
    _study("value 400 digits", 'values = ["3.5 kg", "4 kg"]', "values = [" + "9" * 400 + "]", "vary[0].values[0]",
           "must be finite"),
    _study("values and grid", 'values = ["3.5 kg", "4 kg"]', 'values = ["3.5 kg"]\ngrid = { start = 1, stop = 2, num = 2 }',
           "vary[0].path", "exactly one of values, grid or random"),
    _study("grid num zero", 'values = ["3.5 kg", "4 kg"]', 'grid = { start = "3 kg", stop = "4 kg", num = 0 }',
           "vary[0].grid.num", "whole number >= 1"),
    _study("grid num 400 digits", 'values = ["3.5 kg", "4 kg"]',
           'grid = { start = "3 kg", stop = "4 kg", num = ' + "9" * 400 + " }", "vary[0].grid.num", "at most"),
    _study("grid log through zero", 'values = ["3.5 kg", "4 kg"]',
           'grid = { start = "0 kg", stop = "4 kg", num = 3, scale = "log" }', "vary[0].grid.start", "log scale"),
    _study("random without seed", 'values = ["3.5 kg", "4 kg"]', 'random = { low = "3 kg", high = "4 kg", count = 3 }',
           "vary[0].random.seed", "is required"),
    _study("random low above high", 'values = ["3.5 kg", "4 kg"]',
           'random = { low = "5 kg", high = "4 kg", count = 3, seed = 1 }', "vary[0].random.high", "greater than low"),
    _study("variant name twice", 'name = "as is"\n', 'name = "as is"\n[[variant]]\nname = "as is"\n', "variant[1].name",
           "duplicate variant name"),
    _study("variant sets a varied path", 'name = "as is"\n',
           'name = "as is"\nset = { "requirements.total_mass_max" = "5 kg" }\n', "variant[0].set", "overlaps vary[0]"),
    _study("not TOML", "[study]", "[study", "(syntax)", "malformed TOML"),
]

CORPUS = CATALOG + CSV + DESIGN + TRAJECTORY + URDF + STUDIES
