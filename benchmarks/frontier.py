"""Frontier: the exhaustive method and the exact ε-constraint sweep versus brute force.

Instance: the bundled leg with 2 motors, Orbit and Lobe stage types (all frames and ratios), one stage
per joint, duty case left out, payload versus IMF at the touchdown case (IMF limit replaced by the
sweep). The brute force scores every design and filters the non-dominated (payload, IMF) pairs.
Prints wall and CPU time of each method, the number of points and whether each set agrees with
brute force, side by side in one run; then both methods on the whole bundled leg (payload vs
IMF, duty cycle included), where brute force does not fit. Results: docs/benchmarks.md.
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import dataclasses
import time

import numpy as np

from jointwright.catalog.model import Catalog
from jointwright.frontier import MEASURES, frontier, with_limit
from jointwright.options import build_table
from jointwright.problem import checks, feasible, objective
from jointwright.solve.enumerate import combinations
from jointwright.solve.model import SizingModel
from size_exact import example


def instance():
    leg = example("leg")
    stages = tuple(s for s in leg.catalog.stages if s.name in ("Orbit", "Lobe"))
    cases = tuple(c for c in leg.cases if c.kind != "duty")
    return dataclasses.replace(
        leg,
        catalog=Catalog(motors=leg.catalog.motors[2:4], stages=stages),
        max_stages=1,
        cases=cases,
        objective={},
    )


def brute(project, case):
    p = with_limit(project, case, MEASURES["imf"][1], None)
    table = build_table(p)
    opts = [np.arange(len(table))] * 3
    model = SizingModel(p, table, opts)
    pay, imf = [], []
    total = len(table) ** 3
    for start in range(0, total, 20_000):
        idx = combinations(opts, start, min(total, start + 20_000))
        arrays = table.arrays(idx)
        ev = model.evaluator.evaluate(arrays, detail=False)
        ok = feasible(checks(p, arrays, ev), idx.shape[0])
        pay.append(objective(p, arrays, ev, "payload")[ok])
        imf.append(np.asarray(ev[case]["imf"])[ok])
    pay, imf = np.concatenate(pay), np.concatenate(imf)
    front = []
    for i in np.lexsort((-imf, -pay)):
        if not front or imf[i] > front[-1][1] * (1 + 1e-7):
            if front and abs(front[-1][0] - pay[i]) <= 1e-9 * pay[i]:
                front.pop()
            front.append((pay[i], imf[i]))
    return front, total


def timed(fn):
    wall, cpu = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - wall, time.process_time() - cpu


def same(points, ref) -> bool:
    return len(ref) == len(points) and all(
        abs(a.payload - b[0]) <= 1e-9 * b[0] and abs(a.measure - b[1]) <= 1e-6
        for a, b in zip(points, ref)
    )


def main():
    p = instance()
    (ref, total), w_b, c_b = timed(lambda: brute(p, "touchdown"))
    print(
        f"small leg, {total} designs: brute force {w_b:.2f} s wall, {c_b:.2f} s CPU, {len(ref)} points"
    )
    for method in ("exhaustive", "sweep"):
        f, w, c = timed(lambda m=method: frontier(p, "imf", points=1000, method=m))
        print(
            f"  {method:10s} {w:7.2f} s wall {c:7.2f} s CPU  {len(f.points)} points, complete "
            f"{f.complete}, same set as brute force: {same(f.points, ref)}; brute force / this "
            f"{c_b / c:.1f}x CPU"
        )
    leg = example("leg")
    print("bundled leg (duty cycle included), payload vs IMF at touchdown:")
    got = {}
    for method, points in (("exhaustive", 50), ("sweep", 50)):
        f, w, c = timed(lambda m=method, k=points: frontier(leg, "imf", points=k, method=m))
        got[method] = f
        extra = (
            f"{f.scored} designs scored" if method == "exhaustive" else f"{f.solves} exact solves"
        )
        print(
            f"  {method:10s} {w:7.2f} s wall {c:7.2f} s CPU  {len(f.points)} points, complete "
            f"{f.complete}, {extra}"
        )
    ex = {(round(pt.payload, 6), round(pt.measure, 6)) for pt in got["exhaustive"].points}
    missing = [
        pt for pt in got["sweep"].points if (round(pt.payload, 6), round(pt.measure, 6)) not in ex
    ]
    print(f"  sweep points not on the exhaustive front: {len(missing)}")


if __name__ == "__main__":
    main()
