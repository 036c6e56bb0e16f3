"""Write the bundled example catalogs (invented motor and gear families with plausible numbers).

Motors follow the gap-radius/length scaling laws of Wensing et al. 2017 (torque ∝ s²·l,
mass ∝ s·l, rotor inertia ∝ s³·l, Km² ∝ s³·l) from an invented 80 mm × 20 mm reference, with a
little deterministic spread so that no two sizes are exact rescalings. Run from the repo root:
``python tools/make_example_catalogs.py``.
"""

from __future__ import annotations

import math
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1] / "src" / "jointwright" / "examples"


def motor(name, d_mm, l_mm, spread=1.0, volts=48.0):
    s, l = d_mm / 80.0, l_mm / 20.0
    peak = 2.6 * s**2 * l * spread
    kt = 0.095 * math.sqrt(s**3 * l)
    res = 0.28
    return {
        "name": name,
        "peak_torque": f"{peak:.3g} N*m",
        "continuous_torque": f"{peak / 3.2:.3g} N*m",
        "rotor_inertia": f"{1.3 * s**3 * l:.3g} kg*cm^2",
        "mass": f"{0.40 * s * l * (2 - spread) ** 0.5:.3g} kg",
        "max_speed": f"{0.9 * volts / kt * 60 / (2 * math.pi):.4g} rpm",
        "torque_constant": f"{kt:.4g} N*m/A",
        "resistance": f"{res:.3g} ohm",
        "bus_voltage": f"{volts:g} V",
        "thermal_resistance": f"{2.2 / (s * l):.3g} K/W",
        "thermal_time_constant": f"{60 + 40 * s * l:.3g} s",
        "winding_temperature_max": "140 degC",
        "cogging_torque": f"{0.008 * peak:.3g} N*m",
        "diameter": f"{d_mm + 6:g} mm",
        "length": f"{l_mm + 10:g} mm",
        "cost": round(60 + 90 * s * s * l),
    }


def toml_table(header, d):
    lines = [header]
    for k, v in d.items():
        lines.append(f'{k} = "{v}"' if isinstance(v, str) else f"{k} = {v!r}")
    return "\n".join(lines)


#: one frame per row: size index, gear torque limit (peak) N·m, mass kg, own inertia at the stage
#: input kg·cm², breakaway torque N·m, diameter mm, length mm. Frames are named
#: "<family>-<size index>", the index counting up from 1 within the family (our own scheme).
PLANETARY_FRAMES = [
    (1, 16, 0.22, 0.03, 0.015, 42, 30),
    (2, 32, 0.36, 0.06, 0.02, 52, 36),
    (3, 60, 0.58, 0.12, 0.03, 62, 42),
    (4, 95, 0.85, 0.22, 0.04, 72, 48),
]


def frames(family, rows, backlash, stiffness, life=None):
    """``life``: (rated-life torque / peak, speed key, speed, rated life, momentary / peak) or
    None for frames without life and shock ratings."""
    out = []
    for size, peak, mass, inertia, brk, dia, length in rows:
        ratings = {}
        if life is not None:
            share, speed_key, speed, hours, momentary = life
            ratings = {
                "rated_life_torque": f"{share * peak:g} N*m",
                speed_key: speed,
                "rated_life": hours,
                "rated_momentary_torque": f"{momentary * peak:g} N*m",
            }
        out.append(
            {
                "name": f"{family}-{size}",
                "rated_peak_torque": f"{peak:g} N*m",
                "rated_continuous_torque": f"{peak / 2:g} N*m",
                "mass": f"{mass:g} kg",
                "input_inertia": f"{inertia:g} kg*cm^2",
                "breakaway_torque": f"{brk:g} N*m",
                "backlash": f"{backlash:g} arcmin",
                "stiffness": f"{stiffness * peak:g} N*m/rad",
                "diameter": f"{dia:g} mm",
                "length": f"{length:g} mm",
                "cost": round(40 + 3 * peak),
                **ratings,
            }
        )
    return out


def stage_block(name, kind, ratios, efficiency, frame_rows, life_exponent=None, band=None):
    lines = [
        "[[stage]]",
        f'name = "{name}"',
        f'kind = "{kind}"',
        f"ratios = {ratios!r}",
        f"efficiency = {efficiency}",
    ]
    if life_exponent is not None:
        lines.append(f'life_exponent = "{life_exponent}"')
    if band is not None:  # the range the efficiencies move over (temperature, load, wear)
        lines.append(f"efficiency_band = {band}")
    lines.append("")
    for fr in frame_rows:
        lines.append(toml_table("[[stage.frame]]", fr))
        lines.append("")
    return "\n".join(lines)


def write(path, header, motors, stages):
    text = [header, ""]
    for m in motors:
        text.append(toml_table("[[motor]]", m))
        text.append("")
    text.extend(stages)
    path.write_text("\n".join(text))


LEG_HEADER = """# Invented catalog for the quadruped-leg example: the Flatwind short motors (size index 1 to 9,
# smallest first) and four gear families (Orbit planetary, Strap belt, Lobe cycloidal, Flexring
# strain-wave), each frame named <family>-<size index>. Every name and number here is made up
# for the example; none describes a real product.
# Life and shock ratings (rated_life_*, rated_momentary_torque) are invented too: rated torque,
# speed and hours of each frame's rated life, and its emergency-stop (momentary) torque."""

#: leg gear families' life and shock ratings (invented): (rated-life torque / peak, speed key,
#: speed, rated life, momentary / peak)
LEG_LIFE = {
    "Orbit": (0.3, "rated_life_input_speed", "3000 rpm", "5000 h", 2.0),
    "Strap": (0.5, "rated_life_speed", "1000 rpm", "10000 h", 1.5),
    "Lobe": (0.4, "rated_life_speed", "15 rpm", "6000 h", 2.0),
    "Flexring": (0.4, "rated_life_input_speed", "2000 rpm", "7000 h", 1.8),
}

ARM_HEADER = """# Invented catalog for the mobile-arm example: 20 Ringwind frameless motors (size index 01 to 20,
# by diameter then length) and six gear families (Orbit planetary, Mesh spur, Strap belt, Lobe
# cycloidal, Flexring strain-wave, Spiral worm) with twelve ratios each, each frame named
# <family>-<size index>. Every name and number here is made up; none describes a real product."""

#: leg motors: (outer gap diameter mm, active length mm, spread); named Flatwind-<k>, k from 1
LEG_MOTORS = [
    (60, 12, 1.0),
    (70, 14, 1.02),
    (80, 16, 0.98),
    (80, 20, 1.0),
    (90, 20, 1.03),
    (96, 24, 1.0),
    (105, 24, 0.97),
    (115, 28, 1.0),
    (125, 30, 1.01),
]
#: arm motors: (gap diameter mm, active length mm); named Ringwind-<kk>, kk from 01
ARM_MOTORS = [
    (50, 10),
    (50, 16),
    (60, 10),
    (60, 16),
    (60, 24),
    (70, 12),
    (70, 18),
    (70, 26),
    (80, 12),
    (80, 18),
    (80, 26),
    (90, 14),
    (90, 22),
    (90, 30),
    (100, 16),
    (100, 24),
    (110, 18),
    (110, 28),
    (120, 20),
    (120, 30),
]


def leg():
    motors = [motor(f"Flatwind-{k}", d, l, sp) for k, (d, l, sp) in enumerate(LEG_MOTORS, start=1)]
    stages = [
        stage_block(
            "Orbit",
            "planetary",
            [3, 4, 5, 6, 7, 8, 9, 10],
            '{ model = "planetary_basic_train", basic_efficiency = 0.965 }',
            frames("Orbit", PLANETARY_FRAMES[:3], 15, 40, LEG_LIFE["Orbit"]),
            "roller_bearing",
        ),
        stage_block(
            "Strap",
            "belt",
            [1.0, 1.5, 2.0, 2.5, 3.0],
            '{ model = "constant", forward = 0.96, backward = 0.95 }',
            frames(
                "Strap",
                [(1, 20, 0.08, 0.02, 0.01, 40, 20), (2, 45, 0.14, 0.05, 0.015, 50, 25)],
                5,
                15,
                LEG_LIFE["Strap"],
            ),
            "ball_bearing",
        ),
        stage_block(
            "Lobe",
            "cycloidal",
            [11, 15, 21, 29],
            '{ model = "coulomb", forward = 0.86 }',
            frames(
                "Lobe",
                [(1, 50, 0.55, 0.25, 0.05, 60, 35), (2, 90, 0.85, 0.45, 0.07, 75, 40)],
                1,
                120,
                LEG_LIFE["Lobe"],
            ),
            "roller_bearing",
        ),
        stage_block(
            "Flexring",
            "strain_wave",
            [30, 50, 80, 100],
            '{ model = "table", rows = [[30, 0.78, 0.70], [50, 0.74, 0.64], [80, 0.70, 0.58], [100, 0.66, 0.52]] }',
            frames(
                "Flexring",
                [(1, 28, 0.18, 0.03, 0.04, 50, 30), (2, 55, 0.30, 0.08, 0.06, 60, 32)],
                0.5,
                150,
                LEG_LIFE["Flexring"],
            ),
            "ball_bearing",
        ),
    ]
    write(ROOT / "leg" / "catalog.toml", LEG_HEADER, motors, stages)


def arm():
    motors = [
        motor(f"Ringwind-{i + 1:02d}", d, l, 1.0 + 0.03 * math.sin(i))
        for i, (d, l) in enumerate(ARM_MOTORS)
    ]
    stages = [
        stage_block(
            "Orbit",
            "planetary",
            [3, 3.5, 4, 4.5, 5, 5.5, 6, 6.5, 7, 8, 9, 10],
            '{ model = "planetary_basic_train", basic_efficiency = 0.965 }',
            frames("Orbit", PLANETARY_FRAMES, 12, 40),
        ),
        stage_block(
            "Mesh",
            "spur",
            [1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5, 5.5, 6, 7, 8],
            '{ model = "coulomb", forward = 0.98 }',
            frames(
                "Mesh",
                [(1, 25, 0.15, 0.04, 0.01, 45, 20), (2, 70, 0.35, 0.15, 0.02, 65, 26)],
                10,
                30,
            ),
        ),
        stage_block(
            "Strap",
            "belt",
            [1, 1.25, 1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5, 5.5, 6],
            '{ model = "constant", forward = 0.96, backward = 0.95 }',
            frames(
                "Strap",
                [(1, 20, 0.08, 0.02, 0.01, 40, 20), (2, 45, 0.14, 0.05, 0.015, 50, 25)],
                5,
                15,
            ),
        ),
        stage_block(
            "Lobe",
            "cycloidal",
            [11, 15, 17, 21, 25, 29, 35, 41, 47, 59, 71, 87],
            '{ model = "coulomb", forward = 0.85 }',
            frames(
                "Lobe", [(1, 60, 0.6, 0.25, 0.05, 60, 35), (2, 140, 1.1, 0.6, 0.08, 80, 42)], 1, 120
            ),
        ),
        stage_block(
            "Flexring",
            "strain_wave",
            [30, 40, 50, 60, 70, 80, 90, 100, 110, 120, 140, 160],
            '{ model = "table", rows = [[30, 0.80, 0.72], [50, 0.76, 0.66], [80, 0.72, 0.60], [120, 0.66, 0.52], [160, 0.60, 0.44]] }',
            frames(
                "Flexring",
                [(1, 28, 0.18, 0.03, 0.04, 50, 30), (2, 80, 0.45, 0.15, 0.07, 70, 34)],
                0.5,
                150,
            ),
            band="{ forward_change = [-0.08, 0.03], backward_change = [-0.10, 0.03] }",
        ),
        stage_block(
            "Spiral",
            "worm",
            [10, 15, 20, 25, 30, 40, 50, 60, 70, 80, 90, 100],
            '{ model = "worm", lead_angle = "3.5 deg", friction = 0.07, normal_pressure_angle = "20 deg" }',
            frames(
                "Spiral",
                [(1, 40, 0.5, 0.08, 0.05, 60, 55), (2, 90, 0.9, 0.2, 0.08, 75, 65)],
                15,
                60,
            ),
            band="{ friction = [0.05, 0.1] }",
        ),
    ]
    write(ROOT / "arm" / "catalog.toml", ARM_HEADER, motors, stages)


if __name__ == "__main__":
    leg()
    arm()
