"""The single-objective search on a measure objective: the unit order and the duty bound's safe
options, each on and off, side by side in one run.

Instance: the bundled arm, least effective mass at its side collision with the payload floor at
the arm's largest payload (12.884 kg; the frontier's strongest end), the effective-mass limit
removed; the default back-end's engine (primal heuristics, then the branch and bound) with a
wall-clock limit (``--limit``, default 60 s). Configurations:

1. payload order (:func:`search.search_order`), every option judged by the duty bound at every
   node (the versions before both changes);
2. payload order, safe options skipped (solve/duty_bound.py);
3. spread order (:func:`search.spread_order`), every option judged;
4. spread order, safe options skipped (the present default).

Prints per configuration: status, objective and bound, nodes, designs scored, wall and CPU
seconds, and the load average before and after. Results: docs/benchmarks.md.

    python benchmarks/measure_search.py [--limit 60] [--only 1,4]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import time
from importlib import resources

import numpy as np

from jointwright.frontier_methods import with_limit, with_payload_floor
from jointwright.project import load_project
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve import duty_bound, search
from jointwright.solve.engines import run_backend

FLOOR = 12.884022966285938  # the arm's largest payload, kg (jointwright size on the example)


def arm():
    with resources.as_file(resources.files("jointwright.examples") / "arm") as folder:
        return load_project(folder / "project.toml")


def run(order: str, safe: bool, limit: float) -> None:
    spread, judge = search.spread_order, duty_bound.DutyBound.safe
    if order == "payload":
        search.spread_order = lambda model, order, *rest: order
    if not safe:
        duty_bound.DutyBound.safe = lambda self, c, j, options, lo, hi: np.zeros(
            options.size, dtype=bool
        )
    try:
        p = with_limit(arm(), "side-collision", "effective_mass_max", None)
        p = with_payload_floor(p, FLOOR)
        cfg = read_objective(p)
        wall, cpu = time.perf_counter(), time.process_time()
        model, _ = build_model(
            p, "effective_mass@side-collision", cfg["pin"], cfg["exclude"], cfg["shared"]
        )
        left = limit - (time.perf_counter() - wall)
        out = run_backend(model, units_of(model.n, model.shared), "search", left, None, None, 1e-4)
        wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    finally:
        search.spread_order, duty_bound.DutyBound.safe = spread, judge
    print(
        f"  {order:8s} order, safe options {'skipped' if safe else 'judged '}: {out.status:10s}"
        f" effective mass {-out.objective:.5f} kg, bound {-out.bound:.5f} kg; {out.native};"
        f" {wall:6.1f} wall-s {cpu:6.1f} CPU-s",
        flush=True,
    )


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--limit", type=float, default=60.0)
    ap.add_argument("--only", default="1,2,3,4")
    a = ap.parse_args()
    configs = {
        1: ("payload", False),
        2: ("payload", True),
        3: ("spread", False),
        4: ("spread", True),
    }
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores; limit {a.limit} s")
    for k in (int(x) for x in a.only.split(",")):
        run(*configs[k], a.limit)
    print(f"load average {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
