"""Motor families with a mechanical speed limit: scaled-down members stay under it.

A member rewound to keep the reference resistance has Kt ∝ √(s³·l) (Wensing et al., IEEE T-RO
33(3), 2017, sec. III-C [pub]), so its no-load speed at the same bus voltage grows as 1/Kt: a
family scaled to s = 0.25 would turn 8× faster than its reference. Bearings and rotor retention
set a mechanical limit instead; holding the rotor's surface speed (speed × radius) constant gives
a limit ∝ 1/s [trade].
"""

from __future__ import annotations

import math

import pytest

from jointwright.catalog.io import load_catalog
from jointwright.errors import InputError
from jointwright.metrics.envelope import torque_speed_envelope

RPM = 2 * math.pi / 60

FAMILY = """
[[motor_family]]
name = "F"
sizes = [[0.25, 1], [0.5, 1], [1, 1], [2, 1]]
{extra}
[motor_family.reference]
peak_torque = "2 N*m"
continuous_torque = "0.8 N*m"
rotor_inertia = "1 kg*cm^2"
mass = "0.5 kg"
max_speed = "3000 rpm"
torque_constant = "0.1 N*m/A"
resistance = "0.3 ohm"
bus_voltage = "48 V"
"""


def _family(tmp_path, extra: str):
    path = tmp_path / "c.toml"
    path.write_text(FAMILY.format(extra=extra))
    return load_catalog(path)


def test_scaled_down_members_are_capped_by_the_mechanical_limit(tmp_path):
    free = _family(tmp_path, "")
    capped = _family(tmp_path, 'speed_limit = "4000 rpm"\nspeed_limit_scaling = -1')
    # electrical figure: 3000 rpm · Kt_ref/Kt = 3000/√(s³) -> s = 0.25: 24000 rpm, s = 0.5: 8485
    assert free.motor("F-0.25x1").max_speed == pytest.approx(24000 * RPM)
    assert free.motor("F-0.5x1").max_speed == pytest.approx(3000 / math.sqrt(0.125) * RPM)
    # mechanical limit 4000 rpm/s: 16000 rpm at s = 0.25, 8000 rpm at s = 0.5 (below 8485)
    assert capped.motor("F-0.25x1").max_speed == pytest.approx(16000 * RPM)
    assert capped.motor("F-0.5x1").max_speed == pytest.approx(8000 * RPM)
    # at and above the reference size the electrical figure is the lower one and stays
    assert capped.motor("F-1x1").max_speed == pytest.approx(3000 * RPM)
    assert capped.motor("F-2x1").max_speed == pytest.approx(3000 / math.sqrt(8) * RPM)


def test_a_member_limit_is_monotone_in_size_and_never_above_the_electrical_speed(tmp_path):
    free = _family(tmp_path, "")
    capped = _family(tmp_path, 'speed_limit = "5000 rpm"\nspeed_limit_scaling = -0.5')
    speeds = []
    for name in ("F-0.25x1", "F-0.5x1", "F-1x1", "F-2x1"):
        assert capped.motor(name).max_speed <= free.motor(name).max_speed
        speeds.append(capped.motor(name).max_speed)
    assert speeds == sorted(speeds, reverse=True)  # smaller members may be faster, but capped


def test_the_envelope_gives_no_torque_beyond_the_cap(tmp_path):
    m = _family(tmp_path, 'speed_limit = "4000 rpm"\nspeed_limit_scaling = -1').motor("F-0.25x1")
    kw = dict(
        peak_torque=m.peak_torque,
        max_speed=m.max_speed,
        torque_constant=m.torque_constant,
        resistance=m.resistance,
        bus_voltage=m.bus_voltage,
    )
    # the voltage line alone would still give torque at 17000 rpm (no-load 48 V/Kt ≈ 36 krpm)
    assert torque_speed_envelope(15000 * RPM, **kw) > 0
    assert torque_speed_envelope(17000 * RPM, **kw) == 0.0


@pytest.mark.parametrize(
    ("extra", "field", "words"),
    [
        ('speed_limit = "4000 rpm"', "motor_family[0].speed_limit_scaling", "is required"),
        ("speed_limit_scaling = -1", "motor_family[0].speed_limit", "is required"),
        ('speed_limit = "4000 rpm"\nspeed_limit_scaling = 1', "speed_limit_scaling", "from -3"),
        ('speed_limit = "-4000 rpm"\nspeed_limit_scaling = -1', "speed_limit", "> 0"),
        ('speed_limit = "4 N*m"\nspeed_limit_scaling = -1', "speed_limit", ""),
    ],
)
def test_bad_speed_limits_name_the_field(tmp_path, extra, field, words):
    with pytest.raises(InputError) as err:
        _family(tmp_path, extra)
    assert field in str(err.value) and words in str(err.value)
