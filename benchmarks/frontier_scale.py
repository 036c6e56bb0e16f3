"""Frontier at scale: the bi-objective branch and bound against brute force and the sweep.

Side by side in one run, each method with the same wall-clock limit (``--limit``, default 60 s):

1. the 287,496-design leg instance of benchmarks/frontier.py (2 motors, Orbit and Lobe stage
   types, one stage per joint, duty case left out), payload versus IMF: brute force (every
   design scored with no filter), the exhaustive method, the sweep, the branch and bound;
2. the bundled leg, payload versus IMF and versus effective mass (exhaustive as the reference:
   it scores every candidate left by the proven filters);
3. the bundled arm, payload versus effective mass;
4. the bundled quadruped (legs shared), payload versus IMF;
5. the leg with 40 motors (benchmarks/size_scale.py's generated catalog), payload versus IMF;
6. payload versus total actuator mass and cost: the bundled leg (exhaustive as the reference)
   and the bundled arm.

Prints, per method: CPU and wall seconds (medians of ``--repeat`` runs, each run's CPU seconds
listed), points, complete or not (and the region left
unexplored), and whether the point set equals the reference. The load average (``uptime``) is
printed before and after: the machine is shared, so CPU seconds are the figures to compare.
Results: docs/benchmarks.md.

    cd benchmarks && python frontier_scale.py [--limit 60] [--only 1,2,...] [--repeat 3]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import math
import os
import statistics
import time

from frontier import brute, instance, same
from size_exact import example
from size_scale import leg as generated_leg

from jointwright.frontier import frontier


def load() -> str:
    one, five, fifteen = os.getloadavg()
    cores = os.cpu_count()
    return f"load average {one:.2f}, {five:.2f}, {fifteen:.2f} (1, 5, 15 min) on {cores} cores"


#: runs per measurement (``--repeat``); the medians are printed
REPEAT = 1
#: each run's CPU seconds of the last measurement, for the printed line
RUNS: list[float] = []


def timed(fn):
    """The result of the last of :data:`REPEAT` runs, median wall and CPU seconds."""
    walls, cpus = [], []
    for _ in range(REPEAT):
        wall, cpu = time.perf_counter(), time.process_time()
        out = fn()
        walls.append(time.perf_counter() - wall)
        cpus.append(time.process_time() - cpu)
    RUNS[:] = cpus
    return out, statistics.median(walls), statistics.median(cpus)


def key(points) -> list[tuple[float, float]]:
    return [(round(p.payload, 6), round(p.measure, 6)) for p in points]


def same_points(a, b) -> bool:
    return len(a) == len(b) and all(
        math.isclose(x.payload, y.payload, rel_tol=1e-9, abs_tol=1e-9)
        and math.isclose(x.measure, y.measure, rel_tol=1e-6, abs_tol=1e-9)
        for x, y in zip(a, b, strict=True)
    )


def line(name: str, f, wall: float, cpu: float, note: str = "") -> None:
    state = "complete" if f.complete else "stopped"
    if f.unexplored is not None:
        pmax, bound = f.unexplored
        state += f" (unexplored: payload ≤ {pmax:.4g} kg, measure bound {bound:.4g})"
    extra = f", {f.scored:,} designs scored" if f.method != "sweep" else f", {f.solves} solves"
    if len(RUNS) > 1:
        extra += " (CPU-s per run: " + ", ".join(f"{c:.2f}" for c in RUNS) + ")"
    print(
        f"  {name:17s} {cpu:8.2f} CPU-s {wall:8.2f} wall-s  {len(f.points):3d} points"
        + ("" if all(p.proven for p in f.points) else " (not proven)")
        + f", {state}"
        f"{extra}{note}",
        flush=True,
    )


def compare(project, measure: str, limit: float, methods, reference: str | None) -> dict:
    got, runs = {}, {}
    for method in methods:
        f, wall, cpu = timed(
            lambda m=method: frontier(project, measure, method=m, points=10_000, time_limit=limit)
        )
        got[method] = (f, wall, cpu)
        runs[method] = list(RUNS)
    # the reference: the named method when it completed, else any other complete method
    order = ([reference] if reference else []) + [m for m in got if m != reference]
    ref_name = next((m for m in order if got[m][0].complete), None)
    for method, (f, wall, cpu) in got.items():
        note = ""
        if ref_name is not None and method != ref_name and f.complete:
            note = f"; same set as {ref_name}: {same_points(f.points, got[ref_name][0].points)}"
        RUNS[:] = runs[method]
        line(method, f, wall, cpu, note)
    return got


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--limit", type=float, default=60.0, help="seconds per method and instance")
    ap.add_argument("--only", default="1,2,3,4,5,6", help="instances to run, e.g. 1,2")
    ap.add_argument("--repeat", type=int, default=1, help="runs per measurement (medians)")
    args = ap.parse_args()
    global REPEAT
    REPEAT = max(1, args.repeat)
    only = {int(x) for x in args.only.split(",")}
    print(f"start: {load()}", flush=True)
    bnb = "branch-and-bound"
    if 1 in only:
        p = instance()
        (ref, total), w_b, c_b = timed(lambda: brute(p, "touchdown"))
        print(
            f"1. small leg, {total:,} designs, payload vs IMF: brute force {c_b:.2f} CPU-s "
            f"{w_b:.2f} wall-s, {len(ref)} points"
            + (f" (CPU-s per run: {', '.join(f'{c:.2f}' for c in RUNS)})" if REPEAT > 1 else ""),
            flush=True,
        )
        for method in (bnb, "exhaustive", "sweep"):
            f, wall, cpu = timed(
                lambda m=method: frontier(p, "imf", method=m, points=10_000, time_limit=args.limit)
            )
            line(
                method,
                f,
                wall,
                cpu,
                f"; same set as brute force: {same(f.points, ref)}; brute force / this "
                f"{c_b / cpu:.1f}x CPU",
            )
    if 2 in only:
        leg = example("leg")
        for measure in ("imf", "effective_mass"):
            print(f"2. bundled leg, payload vs {measure}:", flush=True)
            compare(leg, measure, args.limit, (bnb, "exhaustive", "sweep"), "exhaustive")
    if 3 in only:
        print("3. bundled arm, payload vs effective_mass:", flush=True)
        compare(example("arm"), "effective_mass", args.limit, (bnb, "sweep"), None)
    if 4 in only:
        print("4. bundled quadruped (legs shared), payload vs IMF:", flush=True)
        compare(example("quadruped"), "imf", args.limit, (bnb, "sweep"), None)
    if 5 in only:
        print("5. leg with 40 motors, payload vs IMF:", flush=True)
        compare(generated_leg(40), "imf", args.limit, (bnb, "sweep"), None)
    if 6 in only:
        leg = example("leg")
        for measure in ("mass", "cost"):
            print(f"6. bundled leg, payload vs total {measure}:", flush=True)
            compare(leg, measure, args.limit, (bnb, "exhaustive"), "exhaustive")
        print("6. bundled arm, payload vs total mass:", flush=True)
        compare(example("arm"), "mass", args.limit, (bnb,), None)
    print(f"end: {load()}", flush=True)


if __name__ == "__main__":
    main()
