"""Does ``size`` stop at its time limit on a large option table?

The instance: the bundled arm with 2-stage stacks (567,840 options per joint after stack
dominance; invented catalog). Each limit is run in a fresh process per version (``--baseline``:
the ``src`` folder of another checkout, e.g. a git worktree of an earlier commit, run side by
side in the same invocation), with the explanation off; printed: the limit, the wall seconds of
``size`` inside the process, its ratio to the limit, the status, and the peak resident memory.

    python benchmarks/time_limit.py [--limits 2,10] [--repeat 3] [--baseline /tmp/base/src]

Results: docs/benchmarks.md, "The time limit on large option tables".
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import json
import os
import statistics
import subprocess
import sys
from pathlib import Path

CHILD = """
import dataclasses, json, resource, sys, time
from jointwright.project import load_example
from jointwright.sizing import size
p = dataclasses.replace(load_example("arm"), max_stages=2)
t = time.perf_counter()
r = size(p, time_limit=float(sys.argv[1]), explain=False)
wall = time.perf_counter() - t
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({"wall": wall, "status": r.status, "objective": r.objective, "rss_mb": rss}))
"""


def run(src: str, limit: float) -> dict:
    env = dict(os.environ, PYTHONPATH=src)
    out = subprocess.run(
        [sys.executable, "-c", CHILD, str(limit)], env=env, capture_output=True, text=True
    )
    if out.returncode != 0:
        raise SystemExit(out.stderr)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--limits", default="2,10")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--baseline", default=None, help="src folder of the version to compare")
    args = ap.parse_args()
    here = str(Path(__file__).resolve().parents[1] / "src")
    versions = [("present", here)] + ([("baseline", args.baseline)] if args.baseline else [])
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    for limit in (float(x) for x in args.limits.split(",")):
        for name, src in versions:
            runs = [run(src, limit) for _ in range(args.repeat)]
            walls = [r["wall"] for r in runs]
            med = statistics.median(walls)
            print(
                f"limit {limit:5.1f} s  {name:8s}  wall median {med:6.2f} s "
                f"({med / limit:4.2f}× the limit; runs {', '.join(f'{w:.2f}' for w in walls)})  "
                f"status {runs[-1]['status']}  peak {max(r['rss_mb'] for r in runs):,.0f} MB",
                flush=True,
            )
    print(f"load average {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
