"""Duty-cycle CSV reading: units, differentiation, and one clear error per bad input."""

from pathlib import Path

import numpy as np
import pytest

from jointwright.errors import InputError
from jointwright.trajectory import load_trajectory

DATA = Path(__file__).parent / "data" / "trajectory"


def write(tmp_path, text, name="cycle.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def sampled(tmp_path, t, columns, name="cycle.csv"):
    """A CSV with a t column and the given columns (name -> values), full precision."""
    header = ["t"] + list(columns)
    rows = [",".join(header)]
    for i, ti in enumerate(t):
        rows.append(",".join([repr(float(ti))] + [repr(float(v[i])) for v in columns.values()]))
    return write(tmp_path, "\n".join(rows) + "\n", name)


def test_bundled_squat_cycle():
    traj = load_trajectory(DATA / "squat.csv", ["hip", "knee"], frames=["foot"])
    assert traj.t.shape == (13,) and traj.q.shape == (13, 2)
    # 20° = 20·π/180 = 0.349066 rad; −90° = −1.570796 rad (unit conversion, SI brochure)
    assert traj.q[0, 0] == pytest.approx(0.3490659, rel=1e-6)
    assert traj.q[6, 1] == pytest.approx(-np.pi / 2, rel=1e-9)
    assert traj.frames == ("foot",)
    np.testing.assert_allclose(traj.wrench_of("foot")[3], [15.0, 0, 400.0, 0, 0, 0])
    assert "periodic end conditions" in traj.method and "not-a-knot" not in traj.method
    assert traj.period == pytest.approx(1.2)
    # the derived speeds of a periodic cycle match at both ends
    assert traj.qd[0] == pytest.approx(traj.qd[-1], abs=1e-9)
    with pytest.raises(ValueError):
        traj.q[0, 0] = 1.0  # read-only


def test_periodic_spline_derivatives_are_accurate(tmp_path):
    # q = A·sin(2πt/T): q̇ = A·ω·cos, q̈ = −A·ω²·sin (calculus); periodic cubic spline of
    # 201 samples: error O(h³) in q̇, O(h²) in q̈
    t = np.linspace(0.0, 2.0, 201)
    w = np.pi
    q = 0.7 * np.sin(w * t)
    q[-1] = q[0]  # sin(2π) rounds to −2.4e-16; the cycle closes exactly
    traj = load_trajectory(sampled(tmp_path, t, {"q:j1": q}), ["j1"])
    assert "periodic" in traj.method
    np.testing.assert_allclose(traj.qd[:, 0], 0.7 * w * np.cos(w * t), atol=1e-5)
    np.testing.assert_allclose(traj.qdd[:, 0], -0.7 * w * w * np.sin(w * t), atol=2e-3)


def test_open_segment_uses_not_a_knot(tmp_path):
    # a ramp-up that does not return: q = t³, q̇ = 3t², q̈ = 6t — a cubic, so the not-a-knot
    # spline reproduces it exactly
    t = np.linspace(0.0, 1.0, 11)
    traj = load_trajectory(sampled(tmp_path, t, {"q:j1": t**3}), ["j1"])
    assert "not-a-knot" in traj.method
    np.testing.assert_allclose(traj.qd[:, 0], 3 * t**2, atol=1e-12)
    np.testing.assert_allclose(traj.qdd[:, 0], 6 * t, atol=1e-10)


def test_given_speed_is_kept_and_acceleration_comes_from_it(tmp_path):
    t = np.linspace(0.0, 1.0, 11)
    cols = {"q:a [deg]": np.degrees(t**3), "qd:a [deg/s]": np.degrees(3 * t**2)}
    traj = load_trajectory(sampled(tmp_path, t, cols), ["a"])
    np.testing.assert_allclose(traj.qd[:, 0], 3 * t**2, rtol=1e-12)
    np.testing.assert_allclose(traj.qdd[:, 0], 6 * t, atol=1e-10)
    assert "qd given" in traj.method and "qdd from qd" in traj.method


def test_prismatic_joint_in_millimetres_and_time_in_ms(tmp_path):
    text = "t [ms],q:slide [mm],qd:slide [mm/s],qdd:slide [m/s^2]\n0,0,0,0\n500,250,1000,2\n"
    traj = load_trajectory(write(tmp_path, text), ["slide"])
    np.testing.assert_allclose(traj.t, [0.0, 0.5])
    np.testing.assert_allclose(traj.q[:, 0], [0.0, 0.25])
    np.testing.assert_allclose(traj.qd[:, 0], [0.0, 1.0])
    assert traj.method == "slide: qd given, qdd given"


GOOD = "t,q:hip,q:knee\n0,0,0\n0.1,0.1,0.2\n0.2,0.2,0.3\n0.3,0.1,0.2\n0.4,0,0\n"


@pytest.mark.parametrize(
    "text, field, rule",
    [
        ("t,q:hip\n0,0\n0.1,0.1\n0.2,0.2\n0.3,0.1\n", "column 'q:knee'", "is missing"),
        (GOOD.replace("q:knee", "q:ankle"), "column 'q:ankle'", "unknown joint"),
        (GOOD.replace("0.2,0.3", "0.2,abc"), "row 3 (line 4), column 'q:knee'", "must be a number"),
        (
            GOOD.replace("0.3,0.1,0.2", "0.2,0.1,0.2"),
            "row 4 (line 5), column 't'",
            "strictly increasing",
        ),
        ("t,q:hip,q:knee\n0,0,0\n0.1,0.1,0.1\n0.2,0,0\n", "column 'q:hip'", "at least 4 samples"),
        ("t,q:hip,q:knee\n0,0,0\n", "rows", "at least 2 samples"),
        (GOOD.replace("0.2,0.3", "0.2,nan"), "row 3 (line 4), column 'q:knee'", "finite"),
        (GOOD.replace("0.1,0.1,0.2", "0.1,0.1"), "row 2 (line 3)", "has 2 cells"),
        (GOOD.replace("t,", "time,"), "column 'time'", "must be t, q:<joint>"),
        ("t,q:hip,q:knee,q:hip\n0,0,0,0\n0.1,0,0,0\n", "column 'q:hip'", "appears twice"),
        ("q:hip,q:knee\n0,0\n0.1,0.2\n", "column 't'", "is missing"),
        (GOOD.replace("q:hip", "q:hip [N]"), "column 'q:hip [N]'", "not one of angle or length"),
        (GOOD.replace("t,", "t [kg],"), "column 't [kg]'", "not one of time"),
        ("", "header", "empty"),
    ],
)
def test_bad_files_raise_one_clear_error(tmp_path, text, field, rule):
    path = write(tmp_path, text)
    with pytest.raises(InputError) as err:
        load_trajectory(path, ["hip", "knee"])
    assert err.value.file == str(path)
    assert err.value.field == field
    assert rule in err.value.rule


def test_missing_file(tmp_path):
    with pytest.raises(InputError) as err:
        load_trajectory(tmp_path / "nope.csv", ["hip"])
    assert err.value.field == "file" and "does not exist" in err.value.rule


def test_wrench_columns(tmp_path):
    base = "t,q:hip,f:foot:x,f:foot:y,f:foot:z,m:foot:z\n0,0,1,2,3,4\n0.1,0,1,2,3,4\n"
    with pytest.raises(InputError) as err:
        load_trajectory(write(tmp_path, base), ["hip"], frames=["foot"])
    assert err.value.field == "column 'm:foot:z'"
    assert "m:foot:x, m:foot:y, m:foot:z" in err.value.rule
    with pytest.raises(InputError) as err:
        load_trajectory(write(tmp_path, base), ["hip"], frames=["hand"])
    assert "unknown frame 'foot'" in err.value.rule
    ok = "t,q:hip,qd:hip,qdd:hip,f:foot:x,f:foot:y,f:foot:z [kN]\n0,0,0,0,1,2,3\n0.1,0,0,0,1,2,3\n"
    traj = load_trajectory(write(tmp_path, ok), ["hip"])
    np.testing.assert_allclose(traj.wrench_of("foot")[0], [1, 2, 3000, 0, 0, 0])
    np.testing.assert_array_equal(traj.wrench_of("hand"), np.zeros((2, 6)))


def test_mixed_angular_and_linear_units_for_one_joint(tmp_path):
    text = "t,q:hip [deg],qd:hip [m/s],qdd:hip\n0,0,0,0\n0.1,1,1,0\n"
    with pytest.raises(InputError) as err:
        load_trajectory(write(tmp_path, text), ["hip"])
    assert err.value.field == "column 'qd:hip [m/s]'" and "revolute or prismatic" in err.value.rule


def test_comments_and_blank_lines_are_skipped(tmp_path):
    text = "# a comment\n\n" + GOOD.replace("\n0.2,", "\n\n0.2,")
    traj = load_trajectory(write(tmp_path, text), ["hip", "knee"])
    assert traj.t.size == 5 and traj.joint_names == ("hip", "knee")


def test_given_acceleration_with_derived_speed(tmp_path):
    t = np.linspace(0.0, 1.0, 11)
    traj = load_trajectory(sampled(tmp_path, t, {"q:j": t**3, "qdd:j": 6 * t}), ["j"])
    np.testing.assert_allclose(traj.qd[:, 0], 3 * t**2, atol=1e-12)
    assert traj.method == "j: qd from q by cubic spline (not-a-knot end conditions), qdd given"


@pytest.mark.parametrize("names", [[], ["hip", "hip"]])
def test_joint_names_must_be_distinct_and_present(tmp_path, names):
    with pytest.raises(InputError) as err:
        load_trajectory(write(tmp_path, GOOD), names)
    assert err.value.field == "joint_names"
