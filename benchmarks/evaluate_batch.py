"""Batched design evaluation against a plain per-design loop, on the bundled leg example.

Prints designs·cases per second for both paths and their ratio. Targets (issue 2): batched at
least 100× the loop, and at least 2 million designs·cases per second on the 2-core machine.
Usage: ``python benchmarks/evaluate_batch.py [--designs 100000] [--loop 1000]``.
"""

from __future__ import annotations

import argparse
import itertools
import time
from importlib import resources

import numpy as np

from jointwright.design import actuator_row, arrays_from_rows
from jointwright.drivetrain import Actuator, StageChoice
from jointwright.evaluate import Evaluator
from jointwright.project import load_project


def option_rows(project, joint_count):
    """One row per (motor, single stage, frame, ratio) option — the same table for every joint."""
    rows = []
    for motor in project.catalog.all_motors():
        for stage in project.catalog.stages:
            for frame, ratio in itertools.product(stage.frames, stage.ratios):
                rows.append(
                    actuator_row(Actuator(motor, (StageChoice(stage, frame, float(ratio)),)))
                )
    return rows


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--designs", type=int, default=100_000)
    ap.add_argument("--loop", type=int, default=1000, help="designs timed in the per-design loop")
    ap.add_argument("--chunk", type=int, default=10_000)
    args = ap.parse_args()
    with resources.as_file(
        resources.files("jointwright.examples") / "leg" / "project.toml"
    ) as path:
        project = load_project(path)
    ev = Evaluator(project)
    n_cases = len(ev.cases)
    rows = option_rows(project, 3)
    rng = np.random.default_rng(7)
    pick = rng.integers(0, len(rows), size=(args.designs, 3))
    table = arrays_from_rows([rows])  # (1, n_options) per field
    from dataclasses import fields

    from jointwright.design import DesignArrays

    arrays = DesignArrays(**{f.name: getattr(table, f.name)[0][pick] for f in fields(DesignArrays)})

    ev.evaluate(arrays.take(slice(0, 100)))  # warm up

    duty = ev.duty

    def batched_run(detail, with_duty=False):
        ev.duty = duty if with_duty else ()
        t0 = time.perf_counter()
        for start in range(0, args.designs, args.chunk):
            ev.evaluate(arrays.take(slice(start, start + args.chunk)), detail=detail)
        ev.duty = duty
        return time.perf_counter() - t0

    batched = min(batched_run(False) for _ in range(3))
    detailed = min(batched_run(True) for _ in range(2))
    with_duty = batched_run(False, with_duty=True)
    ev.duty = ()
    t0 = time.perf_counter()
    for i in range(args.loop):
        ev.evaluate(arrays.take(slice(i, i + 1)), detail=False)
    loop = (time.perf_counter() - t0) * args.designs / args.loop
    ev.duty = duty

    rate_b = args.designs * n_cases / batched
    rate_l = args.designs * n_cases / loop
    print(
        f"leg example: {args.designs} designs x {n_cases} static cases "
        f"(+{len(duty)} duty cycle of {duty[0].trajectory.t.size if duty else 0} samples), "
        f"{len(rows)} options per joint"
    )
    print(f"{'path':<22}{'seconds':>12}{'designs*cases/s':>20}")
    print(f"{'batched (numpy)':<22}{batched:>12.3f}{rate_b:>20,.0f}")
    print(f"{'batched, all modes':<22}{detailed:>12.3f}{args.designs * n_cases / detailed:>20,.0f}")
    print(
        f"{'batched + duty cycle':<22}{with_duty:>12.3f}{args.designs * (n_cases + len(duty)) / with_duty:>20,.0f}"
        "   (duty counted as one more case)"
    )
    print(f"{'per-design loop':<22}{loop:>12.3f}{rate_l:>20,.0f}   (timed on {args.loop}, scaled)")
    print(
        f"ratio batched/loop: {loop / batched:,.0f}x   target >= 100x; batched target >= 2,000,000/s"
    )


if __name__ == "__main__":
    main()
