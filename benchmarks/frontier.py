"""Frontier: exact ε-constraint sweep versus the non-dominated set by brute force.

Instance: the bundled leg with 2 motors, Orbit and Lobe stage types (all frames and ratios), one stage
per joint, duty case left out, payload versus IMF at the touchdown case (IMF limit replaced by the
sweep). The brute force scores every design and filters the non-dominated (payload, IMF) pairs.
Prints both times, the number of points and whether the two sets agree. Results: docs/benchmarks.md.
"""

from __future__ import annotations

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
    return dataclasses.replace(leg, catalog=Catalog(motors=leg.catalog.motors[2:4], stages=stages),
                               max_stages=1, cases=cases, objective={})


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


def main():
    p = instance()
    t = time.perf_counter()
    f = frontier(p, "imf", points=1000)
    t_front = time.perf_counter() - t
    t = time.perf_counter()
    ref, total = brute(p, f.case)
    t_brute = time.perf_counter() - t
    same = len(ref) == len(f.points) and all(
        abs(a.payload - b[0]) <= 1e-9 * b[0] and abs(a.measure - b[1]) <= 1e-6 for a, b in zip(f.points, ref))
    print(f"leg, {total} designs: frontier {t_front:.2f} s ({f.solves} exact solves, {len(f.points)} points, "
          f"complete {f.complete}, knee {f.knee}); brute force {t_brute:.2f} s ({len(ref)} points); "
          f"ratio {t_brute / t_front:.1f}x; same set: {same}")


if __name__ == "__main__":
    main()
