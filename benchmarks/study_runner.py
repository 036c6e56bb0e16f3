"""Study runner throughput and overhead: process pool with 1 and 2 workers, 2-worker Dask cluster.

A 200-case study whose case function does a fixed amount of pure-Python arithmetic, calibrated
in this process to take about 50 ms. For each back-end it prints cases per second, the summed
case time, the runner's overhead ``(workers·wall − summed case time) / summed case time``, and
the CPU time the runner's own process spent per case (pickling, SQLite writes, bookkeeping;
independent of other load on the machine).
Wall time runs from the call of ``run_study`` to its return (pool start-up included; the Dask
cluster is started before, as it would be for an overnight run).

Each back-end runs ``--repeat`` times and the fastest run is shown (other work on the machine
only ever slows a run down); the load average before the first run is printed beside it.

Usage: ``python benchmarks/study_runner.py [--cases 200] [--ms 50] [--repeat 3]``
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import os
import tempfile
import time
from pathlib import Path

from jointwright.study import run_study

BASE = """\
name = "benchmark"
[requirements]
mass_budget = 3.0
"""

STUDY = """\
[study]
name = "runner benchmark"
base = "base.toml"
[options]
loops = {loops}
[[vary]]
path = "requirements.mass_budget"
random = {{ low = 1.0, high = 10.0, count = {cases}, seed = 2024 }}
"""


def work(loops: int, x: float) -> float:
    """Fixed CPU work: ``loops`` iterations of scalar arithmetic."""
    acc = 0.0
    for i in range(loops):
        acc += (i % 7) * x - acc * 1e-9
    return acc


def cpu_case(project: dict, base_dir: Path, task: str, options: dict) -> dict:
    x = float(project["requirements"]["mass_budget"])
    return {"metrics": {"acc": work(options["loops"], x)}, "result": None}


def calibrate(target_s: float) -> int:
    """Loop count that takes ``target_s`` seconds here (median of five timings)."""
    n = 20_000
    t = []
    for _ in range(5):
        t0 = time.perf_counter()
        work(n, 1.5)
        t.append(time.perf_counter() - t0)
    return max(1, round(n * target_s / sorted(t)[2]))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=200)
    ap.add_argument("--ms", type=float, default=50.0)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    load = os.getloadavg()[0]
    loops = calibrate(args.ms / 1000)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        (tmp / "base.toml").write_text(BASE)
        (tmp / "study.toml").write_text(STUDY.format(loops=loops, cases=args.cases))
        study, rows = tmp / "study.toml", []

        def best(name: str, **kwargs):
            runs = []
            for k in range(args.repeat):
                store = tmp / f"{name}-{k}.sqlite"
                cpu0 = time.process_time()
                out = run_study(study, store, case_fn=cpu_case, progress=False, **kwargs)
                runs.append((out, time.process_time() - cpu0))
            rows.append((name, *min(runs, key=lambda r: r[0].wall_time)))

        best("process pool, 1 worker", workers=1)
        best("process pool, 2 workers", workers=2)
        from distributed import LocalCluster

        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                          host="127.0.0.1") as cluster:  # fmt: skip
            best("Dask LocalCluster, 2 workers", scheduler=cluster.scheduler_address)
    base_wall = rows[0][1].wall_time
    head = (
        "back-end",
        "wall s",
        "cases/s",
        "case s",
        "mean ms",
        "overhead",
        "speed-up",
        "parent ms",
    )
    print(f"{args.cases} cases, {loops} loops per case (calibrated to {args.ms:.0f} ms), best of "
          f"{args.repeat}, load average {load:.2f} on {os.cpu_count()} cores before the first run")  # fmt: skip
    print(f"{head[0]:30}" + "".join(f"{h:>10}" for h in head[1:]))
    for name, o, cpu in rows:
        n = o.done + o.failed
        cells = (o.wall_time, n / o.wall_time, o.case_time, 1000 * o.case_time / n)
        print(
            f"{name:30}"
            + "".join(f"{c:10.2f}" for c in cells)
            + f"{100 * o.overhead_fraction:9.1f}%{base_wall / o.wall_time:9.2f}x{1000 * cpu / n:10.2f}"
        )


if __name__ == "__main__":
    main()
