"""Payload floors on and off: the bi-objective branch and bound on the bundled arm stopped after
the same number of queue entries (a stop that does not depend on the clock or the load).

Starts as the default method does on large option spaces, from the largest payload (an exact
single-objective solve) and its design as the incumbent (the second start solve, which the
time limit stops, is left out so that every run starts from the same state). Prints, with the
floors on and off: CPU seconds, nodes expanded, complete designs scored, partial designs moved
down the queue by the floors, points found and the region left (docs/frontier.md, "Payload
floors"; results: docs/benchmarks.md).

    cd benchmarks && python frontier_floors.py [--pops 5000] [--measure effective_mass|mass]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import time

from size_exact import example

from jointwright.frontier import MEASURES, _case, _solve, with_limit
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve.biobjective import BiObjectiveSearch


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--pops", type=int, default=5000, help="queue entries taken per run")
    ap.add_argument("--measure", default="effective_mass", choices=("effective_mass", "mass"))
    args = ap.parse_args()
    print("start: load average {:.2f}, {:.2f}, {:.2f}".format(*os.getloadavg()), flush=True)
    project = example("arm")
    _kind, key, metric, sense = MEASURES[args.measure]
    case = None if args.measure == "mass" else _case(project, args.measure, None).name
    free = with_limit(project, case, key, None)
    cfg = read_objective(free)
    model, _ = build_model(free, "payload", cfg["pin"], cfg["exclude"], cfg["shared"])
    units = units_of(model.n, model.shared)
    status, payload, _design, index, _bound = _solve(
        free, "payload", None, None, None, "search"
    )
    print(f"largest payload: {payload:.4f} kg ({status})", flush=True)
    for floors in (True, False):
        search = BiObjectiveSearch(model, units, case, metric, sense)
        search.cap = min(search.cap, payload * (1 + 1e-9))
        search.incumbent(index)
        search.floors = search.floors and floors
        search.max_pops = args.pops
        cpu = time.process_time()
        out = search.run()
        cpu = time.process_time() - cpu
        region = (
            "complete"
            if out.complete
            else f"unexplored: payload ≤ {out.open_payload:.4g} kg, "
            f"measure bound {out.open_measure:.4g}"
        )
        print(
            f"floors {'on ' if floors else 'off'}  {cpu:7.2f} CPU-s  {out.nodes:6,} nodes  "
            f"{out.scored:8,} scored  {search.floor_waits:6,} waits  {len(out.points)} points  "
            f"{region}",
            flush=True,
        )
    print("end: load average {:.2f}, {:.2f}, {:.2f}".format(*os.getloadavg()), flush=True)


if __name__ == "__main__":
    main()
