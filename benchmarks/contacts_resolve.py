"""The multi-contact payload program: the library's direct conic form against cvxpy models.

A quadruped-like case (floating body, 4 limbs of 3 joints, friction cones) is varied into many
designs (joint torque bounds and the joint rows of gravity scaled per joint, seeded) over a few
stance poses. Each design × pose is solved, side by side in one run, (a) by
``MultiContactPayload.resolve`` (the scaled program written straight into Clarabel's form, the
library's path), (b) on one cvxpy problem compiled once with every number a parameter (DPP; the
path before, ``tests/contact_cvxpy.CompiledReference``), (c) by a cvxpy model built per design
in the original force coordinates (``tests/contact_cvxpy.reference_payload``), and (d) as the
pyramid linear programs (scipy/HiGHS, 8 sides). Prints time per solve, ratios against (a) and
the largest payload difference. Wall and process CPU time are both shown.

Run: python benchmarks/contacts_resolve.py [--designs 100] [--poses 3] [--repeat 3]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import platform
import statistics
import sys
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


def timed(fn, items, repeat):
    """Results of the last run, median wall and CPU seconds per solve."""
    walls, cpus = [], []
    for _ in range(repeat):
        w, c = time.perf_counter(), time.process_time()
        results = [fn(item) for item in items]
        walls.append((time.perf_counter() - w) / len(items))
        cpus.append((time.process_time() - c) / len(items))
    return results, statistics.median(walls), statistics.median(cpus)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--designs", type=int, default=100)
    parser.add_argument("--poses", type=int, default=3)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
    from contact_cvxpy import CompiledReference, reference_payload

    items = cases(args.designs, args.poses)
    print(
        f"machine: {platform.processor() or platform.machine()}, python "
        f"{platform.python_version()}; {len(items)} solves ({args.designs} designs × "
        f"{args.poses} poses), nv = 18, 4 contacts, 12 joints; medians of {args.repeat} runs; "
        f"load average at start {os.getloadavg()[0]:.2f}"
    )
    direct = mc.MultiContactPayload.for_statics(items[0])
    direct.resolve(items[0])  # first call imports the solver
    start = time.perf_counter()
    compiled = CompiledReference(items[0])
    compiled.resolve(items[0])  # first solve compiles the parameter map
    first = time.perf_counter() - start
    rows = [
        ("(a) direct conic form (library)", lambda st: direct.resolve(st).payload),
        ("(b) cvxpy, compiled once (DPP)", compiled.resolve),
        ("(c) cvxpy, built per design", lambda st: reference_payload(st)[1]),
        ("(d) pyramid LPs inner+outer p=8", lambda st: mc.pyramid_bounds(st, sides=8)),
    ]
    base_pay, base_cpu = None, None
    print(f"{'path':34s} {'wall ms':>8s} {'CPU ms':>8s} {'CPU / (a)':>10s} {'max rel diff':>13s}")
    for name, fn in rows:
        out, wall, cpu = timed(fn, items, args.repeat)
        diff = ""
        if not name.startswith("(d)"):
            pay = np.array(out, dtype=float)
            if base_pay is None:
                base_pay = pay
            diff = f"{np.nanmax(abs(pay - base_pay) / base_pay):13.1e}"
        base_cpu = cpu if base_cpu is None else base_cpu
        print(f"{name:34s} {1e3 * wall:8.3f} {1e3 * cpu:8.3f} {cpu / base_cpu:10.2f} {diff}")
    print(f"(b) compile once + first solve: {1e3 * first:.1f} ms")
    print(f"payload range {np.nanmin(base_pay):.1f}..{np.nanmax(base_pay):.1f} N; "
          f"load average at end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
