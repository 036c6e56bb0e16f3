"""Batched design evaluation on the bundled leg: time and flops per case kind, old and new
impact kernels side by side, beside the machine's estimated peak.

Paths compared in one run:

* **generic**: the impact case through ``metrics.impact_mitigation.impact_mitigation`` (entry lists over
  ``(designs, nv, nv)`` arrays), one thread — the path before the fused kernel;
* **fused, 1 thread** and **fused, N threads**: the impact case through
  ``metrics.impact_fused`` (designs on the last axis, structural zeros skipped), its chunks of
  ``evaluate.IMPACT_CHUNK`` designs shared between ``evaluate.THREADS`` threads.

With ``--reference`` the speed case also runs its stroke figure on the grid it used before the
closed form (``tests/stroke_grid.py``: the largest acceleration at 65 speeds per joint), per
case, in the flop count and as a fourth path of the whole evaluation (fused, 1 thread).

The other case kinds run the same code on every path. Each figure is the median of
``--repeat`` runs; wall and process CPU seconds are both shown (CPU time does not count other
jobs on the machine, wall time does). Flops are counted, not estimated: the fused kernel runs
once more on arrays that count every elementwise add, subtract, multiply, divide and square
root, plus 2·k·n_act for the matrix product that assembles H (k entries vary with the masses).
The peak is 2 cores × 16 double-precision flops per cycle (two 256-bit FMA pipes, or one
512-bit) × the clock in /proc/cpuinfo.

Usage: ``python benchmarks/evaluate_batch.py [--designs 20000] [--chunk 10000] [--repeat 5]
[--reference]``.
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import dataclasses
import itertools
import os
import statistics
import sys
import time
import types
from collections.abc import Callable
from dataclasses import fields
from importlib import resources
from typing import Any

import numpy as np

import jointwright.evaluate as evaluate_module
import jointwright.speedcase as speedcase_module
from jointwright.design import DesignArrays, actuator_row, arrays_from_rows
from jointwright.drivetrain import Actuator, StageChoice
from jointwright.evaluate import Evaluator
from jointwright.project import Project, load_project

FLOPS_PER_CYCLE = 16  # per core, double precision


def option_rows(project: Project, joint_count: int) -> list[dict[str, float]]:
    """One row per (motor, single stage, frame, ratio) option — the same table for every joint."""
    rows = []
    for motor in project.catalog.all_motors():
        for stage in project.catalog.stages:
            for frame, ratio in itertools.product(stage.frames, stage.ratios):
                rows.append(
                    actuator_row(Actuator(motor, (StageChoice(stage, frame, float(ratio)),)))
                )
    return rows


def clock_hz() -> float:
    try:
        with open("/proc/cpuinfo", encoding="ascii") as f:
            for line in f:
                if line.startswith("cpu MHz"):
                    return float(line.split(":")[1]) * 1e6
    except OSError:
        pass
    return float("nan")


class Counted(np.ndarray):
    """An array that counts the elements its arithmetic ufuncs produce (flops)."""

    flops = 0
    ARITH = {np.add, np.subtract, np.multiply, np.divide, np.sqrt, np.negative, np.square}

    def __array_ufunc__(self, ufunc: np.ufunc, method: str, *inputs: Any, **kwargs: Any) -> Any:
        args = [x.view(np.ndarray) if isinstance(x, Counted) else x for x in inputs]
        if "out" in kwargs:
            kwargs["out"] = tuple(
                o.view(np.ndarray) if isinstance(o, Counted) else o for o in kwargs["out"]
            )
        out = getattr(ufunc, method)(*args, **kwargs)
        if method == "__call__" and ufunc in Counted.ARITH:
            Counted.flops += int(np.size(out))
        elif method == "__call__" and ufunc is np.matmul:
            Counted.flops += 2 * int(np.shape(args[0])[-1]) * int(np.size(out))
        if isinstance(out, np.ndarray) and out.dtype == float:
            return out.view(Counted)
        return out


class _CountingNumpy(types.ModuleType):
    """numpy as seen by the package's modules while flops are counted: conversions keep the
    counting subclass (``asarray`` → ``asanyarray``, broadcasts with ``subok``)."""

    def __getattr__(self, name: str) -> Any:
        return getattr(np, name)


def count_flops(ev: Evaluator, run: Callable[[DesignArrays], object], d: DesignArrays) -> float:
    """Flops per design of ``run(d)``: every float field of ``d`` counts its arithmetic, and so
    does every float array computed from one (numpy as the package sees it swapped meanwhile).
    Work on arrays that do not depend on the designs (pose terms) is not counted, nor are
    ``einsum`` and ``np.linalg`` calls: a lower bound where they are used."""
    proxy = _CountingNumpy("numpy")
    proxy.asarray = lambda a, dtype=None, **k: np.asanyarray(a, dtype=dtype, **k)
    proxy.broadcast_arrays = lambda *a, **k: np.broadcast_arrays(*a, subok=True)
    proxy.broadcast_to = lambda a, shape, **k: np.broadcast_to(a, shape, subok=True)

    def concatenate(arrays: Any, *a: Any, **k: Any) -> np.ndarray:
        out = np.concatenate(arrays, *a, **k)
        return out.view(Counted) if any(isinstance(x, Counted) for x in arrays) else out

    proxy.concatenate = concatenate
    modules = [
        m
        for name, m in list(sys.modules.items())
        if (name.startswith("jointwright.") or name == "stroke_grid")
        and getattr(m, "np", None) is np
    ]
    counted = dataclasses.replace(
        d,
        **{
            f.name: getattr(d, f.name).view(Counted)
            for f in dataclasses.fields(d)
            if getattr(d, f.name).dtype == float
        },
    )
    for m in modules:
        m.np = proxy
    try:
        Counted.flops = 0
        run(counted)
    finally:
        for m in modules:
            m.np = np
    return Counted.flops / d.mass.shape[0]


def timed(fn: Callable[[], object], repeat: int) -> tuple[float, float]:
    """Median wall and CPU seconds of ``fn`` over ``repeat`` runs (after one warm-up)."""
    fn()
    wall, cpu = [], []
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        fn()
        wall.append(time.perf_counter() - w0)
        cpu.append(time.process_time() - c0)
    return statistics.median(wall), statistics.median(cpu)


PATHS = (("generic", False, 1), ("fused, 1 thread", True, 1), ("fused, 2 threads", True, 2))
#: the whole evaluation with the stroke figure on its former grid (``--reference``)
GRID = "grid stroke"
CLOSED_FORM = speedcase_module.speed_within_stroke


def shown(kind: str, label: str) -> str:
    """Path label of a per-case row: only the impact case has several kernels."""
    if kind == "impact" or label == GRID:
        return label
    return "closed form" if kind == "speed" else "(one path)"


def grid_stroke() -> Callable[..., Any]:
    """The former grid computation of the stroke figure, kept in the tests as the reference."""
    sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
    from stroke_grid import grid_speed_within_stroke

    return grid_speed_within_stroke


def set_path(ev: Evaluator, fused: bool, threads: int, grid: Callable[..., Any] | None = None):
    ev.fused_impact = fused
    evaluate_module.THREADS = threads
    speedcase_module.speed_within_stroke = grid or CLOSED_FORM  # type: ignore[assignment]


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--designs", type=int, default=20_000)
    ap.add_argument("--chunk", type=int, default=10_000, help="designs per evaluate() call")
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--loop", type=int, default=200, help="designs timed in the per-design loop")
    ap.add_argument(
        "--reference", action="store_true", help="also time the stroke figure on its former grid"
    )
    args = ap.parse_args()
    grid = grid_stroke() if args.reference else None
    load0 = os.getloadavg()
    with resources.as_file(
        resources.files("jointwright.examples") / "leg" / "project.toml"
    ) as path:
        project = load_project(path)
    ev = Evaluator(project)
    duty = ev.duty
    ev.duty = ()
    rows = option_rows(project, 3)
    rng = np.random.default_rng(7)
    pick = rng.integers(0, len(rows), size=(args.designs, 3))
    table = arrays_from_rows([rows])  # (1, n_options) per field
    arrays = DesignArrays(**{f.name: getattr(table, f.name)[0][pick] for f in fields(DesignArrays)})
    chunks = [arrays.take(slice(s, s + args.chunk)) for s in range(0, args.designs, args.chunk)]
    D = args.designs
    n_cases = len(ev.cases)
    peak = 2 * FLOPS_PER_CYCLE * clock_hz()

    print(
        f"leg example: {D} designs x {n_cases} static cases, {len(rows)} options per joint, "
        f"evaluate() on chunks of {args.chunk}; medians of {args.repeat} runs"
    )
    print(
        f"machine: {os.cpu_count()} cores at {clock_hz() / 1e9:.2f} GHz, estimated peak "
        f"{peak / 1e9:.0f} GFLOP/s (fp64); load average at start {load0[0]:.2f}"
    )

    # ---- per case --------------------------------------------------------------------------
    kinds = {
        "payload": lambda pc, d: ev._payload(pc, d, False),
        "impact": lambda pc, d: ev._impact(pc, d, False),
        "speed": lambda pc, d: ev._speed(pc, d, False),
        "backdrive": lambda pc, d: ev._backdrive(pc, d),
    }
    print()
    print("per case (requirement metrics only, detail=False); M/s = million designs per second")
    head = f"{'case':<16}{'kind':<10}{'path':<18}{'wall s':>9}{'CPU s':>9}"
    print(head + f"{'M/s wall':>10}{'M/s CPU':>10}{'vs first':>12}")
    per_case: dict[str, dict[str, tuple[float, float]]] = {}
    for pc in ev.cases:
        fn = kinds[pc.case.kind]
        paths = PATHS if pc.case.kind == "impact" else PATHS[:1]
        per_case[pc.case.name] = {}
        with_grid = [(GRID, True, 1, grid)] if grid and pc.case.kind == "speed" else []
        for label, fused, threads, stroke in [(*p, None) for p in paths] + with_grid:
            set_path(ev, fused, threads, stroke)
            wall, cpu = timed(lambda: [fn(pc, c) for c in chunks], args.repeat)  # noqa: B023
            per_case[pc.case.name][label] = (wall, cpu)
            base = per_case[pc.case.name]["generic"][0]
            print(
                f"{pc.case.name:<16}{pc.case.kind:<10}{shown(pc.case.kind, label):<18}"
                f"{wall:>9.4f}{cpu:>9.4f}"
                f"{D / wall / 1e6:>10.2f}{D / cpu / 1e6:>10.2f}{base / wall:>11.1f}x"
            )

    # ---- flops per case and the peak they allow ----------------------------------------------
    set_path(ev, True, 1)
    sample = chunks[0].take(slice(0, 1000))
    print()
    print(
        "flops per design (counted, a lower bound; fused path); peak rate = estimated peak / "
        "flops; "
        "reached = fastest path above, wall"
    )
    print(f"{'case':<16}{'kind':<10}{'flops':>10}{'peak M/s':>10}{'reached M/s':>13}{'of peak':>9}")
    total_flops = 0.0
    for pc in ev.cases:
        fn = kinds[pc.case.kind]
        flops = count_flops(ev, lambda d: fn(pc, d), sample)  # noqa: B023
        total_flops += flops
        best = min(w for label, (w, _) in per_case[pc.case.name].items() if label != GRID)
        rate = D / best
        print(
            f"{pc.case.name:<16}{pc.case.kind:<10}{flops:>10,.0f}{peak / flops / 1e6:>10.1f}"
            f"{rate / 1e6:>13.2f}{100 * rate * flops / peak:>8.2f}%"
        )
        if grid and pc.case.kind == "speed":
            set_path(ev, True, 1, grid)
            flops_g = count_flops(ev, lambda d: fn(pc, d), sample)  # noqa: B023
            rate_g = D / per_case[pc.case.name][GRID][0]
            print(
                f"{'  (grid stroke)':<26}{flops_g:>10,.0f}{peak / flops_g / 1e6:>10.1f}"
                f"{rate_g / 1e6:>13.2f}{100 * rate_g * flops_g / peak:>8.2f}%"
            )
            set_path(ev, True, 1)
    print(
        f"all {n_cases} cases: {total_flops:,.0f} flops per design; at the peak "
        f"{n_cases * peak / total_flops / 1e6:.1f} M design·cases/s"
    )

    # ---- whole evaluation ------------------------------------------------------------------
    print()
    print("whole evaluation of the static cases (Evaluator.evaluate, detail=False)")
    print(f"{'path':<22}{'wall s':>9}{'CPU s':>9}{'M cases/s wall':>16}{'M cases/s CPU':>15}")
    # the paths take turns within each repetition, so a change of load hits all of them
    whole = [(*p, None) for p in PATHS] + ([(GRID, True, 1, grid)] if grid else [])
    runs: dict[str, list[tuple[float, float]]] = {label: [] for label, *_ in whole}
    for rep in range(args.repeat + 1):
        for label, fused, threads, stroke in whole:
            set_path(ev, fused, threads, stroke)
            w0, c0 = time.perf_counter(), time.process_time()
            for c in chunks:
                ev.evaluate(c, detail=False)
            if rep:  # the first round warms up
                runs[label].append((time.perf_counter() - w0, time.process_time() - c0))
    totals = {}
    for label, *_ in whole:
        wall = statistics.median(w for w, _ in runs[label])
        cpu = statistics.median(c for _, c in runs[label])
        totals[label] = wall
        print(
            f"{label:<22}{wall:>9.3f}{cpu:>9.3f}"
            f"{D * n_cases / wall / 1e6:>16.3f}{D * n_cases / cpu / 1e6:>15.3f}"
        )
    pairs = [a[0] / b[0] for a, b in zip(runs[PATHS[1][0]], runs[PATHS[2][0]], strict=True)]
    print(
        "two threads against one, fused, per repetition (wall ratio): "
        + ", ".join(f"{r:.2f}" for r in pairs)
    )
    without_speed = [pc for pc in ev.cases if pc.case.kind != "speed"]
    for label, _, _ in PATHS:
        t = sum(
            per_case[pc.case.name].get(label, per_case[pc.case.name]["generic"])[0]
            for pc in without_speed
        )
        print(
            f"  {label}: the {len(without_speed)} cases other than speed, "
            f"{D * len(without_speed) / t / 1e6:.2f} M design·cases/s wall"
        )
    print(
        f"ratio fused (2 threads) / generic, whole evaluation: "
        f"{totals['generic'] / totals['fused, 2 threads']:.2f}x   "
        f"target >= 10 M design·cases/s"
    )

    set_path(ev, True, 2)
    wall_d, _ = timed(lambda: [ev.evaluate(c, detail=True) for c in chunks], 1)
    print(f"every mode (detail=True), fused: {D * n_cases / wall_d / 1e6:.3f} M design·cases/s")
    if duty:
        ev.duty = duty
        wall_u, _ = timed(lambda: [ev.evaluate(c, detail=False) for c in chunks], 1)
        print(
            f"with the {duty[0].trajectory.t.size}-sample duty cycle as a 7th case, fused: "
            f"{D * (n_cases + len(duty)) / wall_u / 1e6:.3f} M design·cases/s"
        )
        ev.duty = ()
    t0 = time.perf_counter()
    for i in range(args.loop):
        ev.evaluate(arrays.take(slice(i, i + 1)), detail=False)
    loop = (time.perf_counter() - t0) * D / args.loop
    print(
        f"per-design loop (timed on {args.loop}, scaled): {loop:.2f} s; batched fused / loop "
        f"{loop / totals['fused, 2 threads']:,.0f}x (target >= 100x)"
    )
    print(f"load average at end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
