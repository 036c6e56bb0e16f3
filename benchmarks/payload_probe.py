"""The search's payload probe (docs/optimizer.md, item 10), off and on, side by side in one run.

Instances (payload objective, the default back-end as ``size`` runs it: primal heuristics, then
the branch and bound, gap 10⁻⁴, no explanation, a wall-clock limit ``--limit``, default 120 s):

- the bundled arm with the effective-mass limit of its side collision set to 1.80, 1.75 and
  1.73 kg (the frontier's ε-constraint solves below the arm's strongest design, whose
  effective mass is 1.817 kg);
- benchmarks/size_scale.py's instance (c): the leg over 40 motors, ``imf_min`` 0.2 and a 2.5 kg
  budget.

"off" builds the search as before the probe (its ``probe`` attribute cleared after
construction); "on" is the default. Prints per run: status, objective, bound, nodes, wall and
CPU seconds, and the load average. Results: docs/benchmarks.md.

    python benchmarks/payload_probe.py [--limit 120] [--only arm-1.80,c] [--repeat 1]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import time
from importlib import resources

from jointwright.frontier_methods import with_limit
from jointwright.project import load_project
from jointwright.sizing import build_model, read_objective, units_of
from jointwright.solve import search
from jointwright.solve.engines import run_backend


def arm(limit: float):
    with resources.as_file(resources.files("jointwright.examples") / "arm") as folder:
        project = load_project(folder / "project.toml")
    return with_limit(project, "side-collision", "effective_mass_max", limit)


def leg_c():
    import size_scale

    return size_scale.leg(40, imf_min=0.2, budget=2.5)


INSTANCES = {
    "arm-1.80": lambda: arm(1.80),
    "arm-1.75": lambda: arm(1.75),
    "arm-1.73": lambda: arm(1.73),
    "c": leg_c,
}


def run(name: str, probe: bool, limit: float) -> None:
    init = search.BranchAndBound.__init__

    def without_probe(self, *args, **kwargs):
        init(self, *args, **kwargs)
        self.probe = False

    if not probe:
        search.BranchAndBound.__init__ = without_probe
    try:
        p = INSTANCES[name]()
        cfg = read_objective(p)
        wall, cpu = time.perf_counter(), time.process_time()
        model, _ = build_model(p, "payload", cfg["pin"], cfg["exclude"], cfg["shared"])
        left = limit - (time.perf_counter() - wall)
        out = run_backend(model, units_of(model.n, model.shared), "search", left, None, None, 1e-4)
        wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    finally:
        search.BranchAndBound.__init__ = init
    print(
        f"  {name:9s} probe {'on ' if probe else 'off'}: {out.status:10s} payload "
        f"{out.objective:.4f} kg, bound {out.bound:.4f} kg; {out.native}; "
        f"{wall:6.1f} wall-s {cpu:6.1f} CPU-s; load {os.getloadavg()[0]:.2f}",
        flush=True,
    )


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--limit", type=float, default=120.0)
    ap.add_argument("--only", default=",".join(INSTANCES))
    ap.add_argument("--repeat", type=int, default=1)
    a = ap.parse_args()
    print(f"load average at the start {os.getloadavg()[0]:.2f}")
    for name in a.only.split(","):
        for _ in range(a.repeat):
            for probe in (False, True):
                run(name, probe, a.limit)


if __name__ == "__main__":
    main()
