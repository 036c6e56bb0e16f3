"""The speed-case bound (docs/optimizer.md, item 11), off and on, side by side in one run.

Instances: the bundled arm (its `transfer` case asks 1 m/s within a 0.2 m stroke), the
frontier's two exact solves per point (jointwright.frontier_methods._solve, as the sweep runs
them) at three effective-mass limits of the side collision (none, 1.80 and 1.75 kg):

- ``payload``: the largest payload under the limit (branch and bound, no ties);
- ``least em``: the least effective mass among designs that carry that payload, started from the
  first solve's design (the lexicographic second stage).

"off" builds every model without the bound (neither the root tightening nor the search
uses it); "on" is the default. Each solve gets
``--limit`` seconds of wall time (default 60). Prints status, objective, wall and CPU seconds,
and the load average. Results: docs/benchmarks.md.

    python benchmarks/stroke_bound.py [--limit 60] [--limits none,1.80,1.75]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import time
from importlib import resources

from jointwright import frontier_methods
from jointwright.frontier_methods import _solve, with_limit
from jointwright.options import build_table
from jointwright.project import load_project
from jointwright.sizing import read_objective


def arm():
    with resources.as_file(resources.files("jointwright.examples") / "arm") as folder:
        return load_project(folder / "project.toml")


def switch(on: bool):
    """Build every model without the bound while ``on`` is False."""
    from jointwright.solve import stroke_bound

    of = stroke_bound.StrokeBound.of
    if not on:
        stroke_bound.StrokeBound.of = classmethod(lambda cls, model: None)
    return lambda: setattr(stroke_bound.StrokeBound, "of", of)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--limit", type=float, default=60.0)
    ap.add_argument("--limits", default="none,1.80,1.75")
    args = ap.parse_args()
    print("start: load average %.2f %.2f %.2f" % os.getloadavg())
    project = arm()
    table = build_table(project, read_objective(project)["exclude"])
    case = "side-collision"
    for text in args.limits.split(","):
        eps = None if text == "none" else float(text)
        current = with_limit(project, case, "effective_mass_max", eps)
        for on in (False, True):
            restore = switch(on)
            try:
                t, c = time.perf_counter(), time.process_time()
                status, payload, _d, first, _b = _solve(
                    current, "payload", None, args.limit, None, "search", table
                )
                w1, c1 = time.perf_counter() - t, time.process_time() - c
                print(
                    f"em ≤ {text:>5} {'on ' if on else 'off'} payload   {status:>10} "
                    f"{payload:9.4f} kg  {w1:6.1f} wall-s {c1:6.1f} CPU-s",
                    flush=True,
                )
                if first is None:
                    continue
                t, c = time.perf_counter(), time.process_time()
                status2, value, _d2, _i, _b2 = _solve(
                    current,
                    frontier_methods.objective_kind("effective_mass", case),
                    payload,
                    args.limit,
                    None,
                    "search",
                    table,
                    start=first,
                )
                w2, c2 = time.perf_counter() - t, time.process_time() - c
                print(
                    f"em ≤ {text:>5} {'on ' if on else 'off'} least em  {status2:>10} "
                    f"{-value:9.5f} kg  {w2:6.1f} wall-s {c2:6.1f} CPU-s",
                    flush=True,
                )
            finally:
                restore()
    print("end: load average %.2f %.2f %.2f" % os.getloadavg())


if __name__ == "__main__":
    main()
