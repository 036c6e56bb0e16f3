"""Re-solving one compiled multi-contact payload problem against rebuilding it per design.

A quadruped-like case (floating body, 4 limbs of 3 joints, friction cones) is varied into many
designs (joint torque bounds and the joint rows of gravity scaled per joint, seeded) over a few
stance poses. Each design × pose is solved (a) on one `MultiContactPayload` compiled once
(cvxpy parameters, DPP) and (b) by building a fresh problem each time; the pyramid linear
programs (scipy/HiGHS, 8 sides) are timed alongside. Prints time per solve and the ratios.

Run: PYTHONPATH=src python benchmarks/contacts_resolve.py [--designs 100] [--poses 3]
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np

from jointwright.metrics import contacts as mc


def stance(rng: np.random.Generator, spread: float) -> dict:
    """One pose: feet at the corners of a 0.5 m × 0.3 m rectangle, 0.4 m below the body."""
    feet = np.array([[x, y, -0.4] for x in (0.25, -0.25) for y in (0.15, -0.15)])
    feet[:, :2] *= spread
    nv = 18
    jac = np.zeros((4, 3, nv))
    jac[:, :, :6] = mc.rigid_point_jacobian(feet)
    for leg in range(4):  # limb block: hip-knee lever arms of order 0.2-0.4 m
        jac[leg, :, 6 + 3 * leg : 9 + 3 * leg] = 0.3 * np.eye(3) + rng.normal(0, 0.05, (3, 3))
    weight = 20.0 * 9.81
    joint_g = rng.normal(0, 1.0, 12)
    return dict(
        gravity=np.concatenate([[0, 0, weight, 0, 0, 0], joint_g]),
        contact_jacobians=jac,
        normals=np.tile([0, 0, 1.0], (4, 1)),
        friction=0.6,
        payload_jacobian=mc.rigid_point_jacobian(np.zeros(3)) @ np.eye(6, nv),
        payload_wrench=np.array([0, 0, -1.0]),
    )


def cases(designs: int, poses: int, seed: int = 1) -> list[mc.ContactStatics]:
    rng = np.random.default_rng(seed)
    base = [stance(rng, s) for s in np.linspace(0.8, 1.2, poses)]
    out = []
    for _ in range(designs):
        torque = 30.0 * rng.uniform(0.7, 1.5, 12)
        mass_scale = rng.uniform(0.8, 1.2, 12)
        for pose in base:
            g = pose["gravity"].copy()
            g[6:] *= mass_scale
            out.append(
                mc.ContactStatics(
                    **{**pose, "gravity": g},
                    tau_low=-torque,
                    tau_high=torque,
                    actuated=range(6, 18),
                )
            )
    return out


def timed(fn, items):
    start = time.perf_counter()
    results = [fn(item) for item in items]
    return results, (time.perf_counter() - start) / len(items)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--designs", type=int, default=100)
    parser.add_argument("--poses", type=int, default=3)
    args = parser.parse_args()
    items = cases(args.designs, args.poses)
    start = time.perf_counter()
    import cvxpy  # noqa: F401  (the library imports it lazily; timed apart here)

    t_import = time.perf_counter() - start
    start = time.perf_counter()
    problem = mc.MultiContactPayload.for_statics(items[0])
    problem.resolve(items[0])  # first solve compiles the parameter map
    first = time.perf_counter() - start
    fast, t_resolve = timed(problem.resolve, items)
    slow, t_rebuild = timed(mc.solve, items)
    _, t_lp = timed(lambda st: mc.pyramid_bounds(st, sides=8), items)
    pay_fast = np.array([r.payload for r in fast])
    pay_slow = np.array([r.payload for r in slow])
    solver = np.nanmean([r.solver_time for r in fast])
    print(
        f"machine: {platform.processor() or platform.machine()}, python "
        f"{platform.python_version()}; {len(items)} solves ({args.designs} designs × "
        f"{args.poses} poses), nv = 18, 4 contacts, 12 joints"
    )
    print(
        f"statuses: {sorted(set(r.status for r in fast))}; payload range "
        f"{np.nanmin(pay_fast):.1f}..{np.nanmax(pay_fast):.1f} N; "
        f"max |resolve - rebuild| / payload = {np.nanmax(abs(pay_fast - pay_slow) / pay_slow):.1e}"
    )
    print(f"{'method':34s} {'ms / solve':>10s} {'ratio':>8s}")
    print(f"{'import cvxpy (once per process)':34s} {1e3 * t_import:10.2f}")
    print(f"{'compile once + first solve':34s} {1e3 * first:10.2f}")
    print(f"{'resolve (parameters)':34s} {1e3 * t_resolve:10.2f} {1.0:8.2f}")
    print(f"{'rebuild per design':34s} {1e3 * t_rebuild:10.2f} {t_rebuild / t_resolve:8.2f}")
    print(f"{'pyramid LPs, inner+outer (p = 8)':34s} {1e3 * t_lp:10.2f} {t_lp / t_resolve:8.2f}")
    print(f"{'  of which the cone solver itself':34s} {1e3 * solver:10.2f}")


if __name__ == "__main__":
    main()
