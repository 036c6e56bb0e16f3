"""Write the bundled quadruped example: four QL-3 legs on one trunk (invented robot).

Leg geometry and link masses are those of the leg example (examples/leg/leg.urdf); the trunk
carries the whole body mass. Also writes the starting design (the leg example's actuators on
every leg). Run from the repo root: ``python tools/make_quadruped.py``.
"""

from __future__ import annotations

from pathlib import Path

OUT = Path(__file__).resolve().parents[1] / "src" / "jointwright" / "examples" / "quadruped"
LEGS = {"fl": (0.2, 0.1, 1), "fr": (0.2, -0.1, -1), "hl": (-0.2, 0.1, 1), "hr": (-0.2, -0.1, -1)}


def inertial(m, com, ixx, iyy, izz):
    return (
        f'    <inertial>\n      <origin xyz="{com}" rpy="0 0 0"/>\n      <mass value="{m}"/>\n'
        f'      <inertia ixx="{ixx}" ixy="0" ixz="0" iyy="{iyy}" iyz="0" izz="{izz}"/>\n    </inertial>'
    )


def link(name, m, com, i):
    return f'  <link name="{name}">\n{inertial(m, com, *i)}\n  </link>'


def joint(name, kind, parent, child, xyz, axis=None, lo=None, hi=None):
    lim = (
        f'\n    <limit lower="{lo}" upper="{hi}" effort="1000" velocity="100"/>'
        if lo is not None
        else ""
    )
    ax = f'\n    <axis xyz="{axis}"/>' if axis else ""
    return (
        f'  <joint name="{name}" type="{kind}">\n    <parent link="{parent}"/>\n    <child link="{child}"/>\n'
        f'    <origin xyz="{xyz}" rpy="0 0 0"/>{ax}{lim}\n  </joint>'
    )


def urdf() -> str:
    parts = [
        '<?xml version="1.0"?>',
        "<!-- Invented quadruped QX-4: four QL-3 legs on a 12 kg trunk. -->",
        '<robot name="qx4_quadruped">',
        link("trunk", 12.0, "0 0 0", (0.05, 0.15, 0.17)),
    ]
    for leg, (x, y, side) in LEGS.items():
        parts += [
            joint(
                f"{leg}_hip_ab", "revolute", "trunk", f"{leg}_hip", f"{x} {y} 0", "1 0 0", -0.8, 0.8
            ),
            link(f"{leg}_hip", 0.45, f"0 {0.04 * side} 0", (4e-4, 3e-4, 4e-4)),
            joint(
                f"{leg}_hip_fe",
                "revolute",
                f"{leg}_hip",
                f"{leg}_thigh",
                f"0 {0.08 * side} 0",
                "0 1 0",
                -2.5,
                2.5,
            ),
            link(f"{leg}_thigh", 0.8, "0 0 -0.07", (5e-3, 5e-3, 6e-4)),
            joint(
                f"{leg}_knee",
                "revolute",
                f"{leg}_thigh",
                f"{leg}_shank",
                "0 0 -0.25",
                "0 1 0",
                0.2,
                2.8,
            ),
            link(f"{leg}_shank", 0.18, "0 0 -0.11", (1.2e-3, 1.2e-3, 5e-5)),
            joint(f"{leg}_foot_fixed", "fixed", f"{leg}_shank", f"{leg}_foot", "0 0 -0.25"),
            link(f"{leg}_foot", 0.04, "0 0 0", (1e-5, 1e-5, 1e-5)),
        ]
    parts += ["</robot>", ""]
    return "\n".join(parts)


def design() -> str:
    lines = [
        "# Starting design for QX-4: the QL-3 leg's starting actuators on every leg.",
        "[design]",
        'name = "QX-4 starting point"',
        "",
    ]
    for leg in LEGS:
        for j in ("hip_ab", "hip_fe"):
            lines += [
                f"[joint.{leg}_{j}]",
                'motor = "Flatwind-6"',
                'stages = [{ stage = "Orbit", frame = "Orbit-2", ratio = 6 }]',
                "",
            ]
        lines += [
            f"[joint.{leg}_knee]",
            'motor = "Flatwind-6"',
            'stages = [{ stage = "Orbit", frame = "Orbit-3", ratio = 9 }]',
            "",
        ]
    return "\n".join(lines)


if __name__ == "__main__":
    OUT.mkdir(parents=True, exist_ok=True)
    (OUT / "quadruped.urdf").write_text(urdf())
    (OUT / "design.toml").write_text(design())
    src = OUT.parent / "leg" / "catalog.toml"
    (OUT / "catalog.toml").write_text(src.read_text())
