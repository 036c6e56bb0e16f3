"""Write the bundled example duty cycles (our own invented motions).

leg/gait.csv: a 0.5 s trot cycle of the QL-3 leg relative to its trunk; stance in the first
60 % with a half-sine ground reaction force at the foot whose cycle mean is the leg's quarter
share of the 24 kg robot's weight. Positions only: the tool differentiates them (periodic spline).
arm/pick_place.csv: a 4 s pick-and-place of the MA-6 arm with minimum-jerk moves, carrying 3 kg
during the transfer; positions, speeds and accelerations given in closed form.
Run from the repo root: ``python tools/make_example_trajectories.py``.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1] / "src" / "jointwright" / "examples"
G = 9.80665


def gait(path: Path):
    period, n, duty = 0.5, 101, 0.6
    t = np.linspace(0.0, period, n)
    w = 2 * math.pi / period
    hip_ab = np.deg2rad(3.0) * np.sin(w * t)
    hip_fe = np.deg2rad(-40.0) + np.deg2rad(18.0) * np.sin(w * t)
    knee = np.deg2rad(80.0) + np.deg2rad(25.0) * np.sin(w * t + 0.6)
    stance = t < duty * period
    mean_load = 24.0 * G / 4  # N, the leg's share of the robot weight
    # half-sine of peak P over the stance has cycle mean P·(2/π)·duty
    peak = mean_load * math.pi / (2 * duty)
    fz = np.where(stance, peak * np.sin(math.pi * t / (duty * period)), 0.0)
    fx = np.where(stance, -0.1 * fz * np.cos(math.pi * t / (duty * period)), 0.0)
    rows = [
        "# QL-3 trot cycle (invented), 0.5 s, stance 60 %. Ground reaction force on the foot in world axes.",
        "t [s],q:hip_ab [deg],q:hip_fe [deg],q:knee [deg],f:foot:x [N],f:foot:y [N],f:foot:z [N]",
    ]
    for i in range(n):
        rows.append(
            f"{t[i]:.4f},{math.degrees(hip_ab[i]):.5f},{math.degrees(hip_fe[i]):.5f},"
            f"{math.degrees(knee[i]):.5f},{fx[i]:.4f},0,{fz[i]:.4f}"
        )
    path.write_text("\n".join(rows) + "\n")


def min_jerk(t, t0, t1, a, b):
    """Position, speed, acceleration of a minimum-jerk move from a to b over [t0, t1]."""
    d = t1 - t0
    s = np.clip((t - t0) / d, 0.0, 1.0)
    inside = (t > t0) & (t < t1)
    p = a + (b - a) * (10 * s**3 - 15 * s**4 + 6 * s**5)
    v = np.where(inside, (b - a) * (30 * s**2 - 60 * s**3 + 30 * s**4) / d, 0.0)
    acc = np.where(inside, (b - a) * (60 * s - 180 * s**2 + 120 * s**3) / d**2, 0.0)
    return p, v, acc


def pick_place(path: Path):
    period, n = 4.0, 201
    t = np.linspace(0.0, period, n)
    moves = {  # joint: (start deg, end deg) out over 0.2-1.7 s, back over 2.2-3.7 s
        "shoulder_yaw": (0.0, 90.0),
        "shoulder_pitch": (40.0, 25.0),
        "elbow": (70.0, 95.0),
        "wrist_pitch": (-20.0, -30.0),
        "wrist_yaw": (0.0, -45.0),
        "wrist_flex": (0.0, 20.0),
    }
    cols = {}
    for j, (a, b) in moves.items():
        a, b = math.radians(a), math.radians(b)
        p1, v1, a1 = min_jerk(t, 0.2, 1.7, a, b)
        p2, v2, a2 = min_jerk(t, 2.2, 3.7, 0.0, a - b)
        cols[j] = (p1 + p2, v1 + v2, a1 + a2)
    carrying = (t >= 0.1) & (t <= 1.9)
    fz = np.where(carrying, -3.0 * G, 0.0)
    header = ["t [s]"]
    for j in moves:
        header += [f"q:{j} [rad]", f"qd:{j} [rad/s]", f"qdd:{j} [rad/s^2]"]
    header += ["f:tool:x [N]", "f:tool:y [N]", "f:tool:z [N]"]
    rows = [
        "# MA-6 pick-and-place cycle (invented): 3 kg carried from 0.1 s to 1.9 s.",
        ",".join(header),
    ]
    for i in range(n):
        vals = [f"{t[i]:.4f}"]
        for j in moves:
            vals += [f"{cols[j][0][i]:.7f}", f"{cols[j][1][i]:.7f}", f"{cols[j][2][i]:.7f}"]
        vals += ["0", "0", f"{fz[i]:.4f}"]
        rows.append(",".join(vals))
    path.write_text("\n".join(rows) + "\n")


if __name__ == "__main__":
    gait(ROOT / "leg" / "gait.csv")
    pick_place(ROOT / "arm" / "pick_place.csv")
