"""Large inputs: ``check`` of projects with many cases and ``assess`` of a long duty cycle.

Builds invented variants of the bundled leg example in a temporary folder — a project with N
payload cases, and a trot-like cycle of R samples — and times reading and checking the project
and assessing the example design (process CPU time, so other load on the machine does not count;
the median of ``--repeat`` runs). Prints the time per case or per sample at each size and the
ratio to the smallest size: about 1 means linear, 2 per doubling would mean quadratic.
Usage: ``python benchmarks/large_inputs.py [--cases 5000 10000 20000] [--rows 75000 150000 300000]``.
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import math
import re
import shutil
import statistics
import tempfile
import time
from importlib import resources
from pathlib import Path

from jointwright.assessment import assess
from jointwright.commands.check import project_summary
from jointwright.design import load_design
from jointwright.project import load_project


def _leg(folder: Path) -> str:
    with resources.as_file(resources.files("jointwright.examples") / "leg") as src:
        shutil.copytree(src, folder)
    return (folder / "project.toml").read_text(encoding="utf-8")


def many_cases(folder: Path, n: int) -> Path:
    text = _leg(folder)
    head = text[: text.index("[[case]]")]
    # only payload cases here: a gear-life requirement would need the example's duty cycle
    head = re.sub(r'(?m)^life_min = .*\n', "", head)
    cases = []
    for i in range(n):
        hip = -40 + 20 * math.sin(i)
        cases.append(
            f'[[case]]\nname = "push-{i}"\nkind = "payload"\nframe = "foot"\n'
            f'direction = [0, 0, -1]\nmotion = "along"\npayload_min = "10 N"\n'
            f'pose = {{ hip_ab = "0 deg", hip_fe = "{hip:.3f} deg", knee = "80 deg" }}\n'
        )
    (folder / "project.toml").write_text(head + "\n".join(cases), encoding="utf-8")
    return folder / "project.toml"


def long_cycle(folder: Path, rows: int) -> Path:
    _leg(folder)
    period = 0.5
    with open(folder / "gait.csv", "w", encoding="utf-8") as fh:
        fh.write(
            "t [s],q:hip_ab [deg],q:hip_fe [deg],q:knee [deg],f:foot:x [N],f:foot:y [N],f:foot:z [N]\n"
        )
        for i in range(rows):
            t = period * i / (rows - 1)
            w = 2 * math.pi * t / period
            fh.write(
                f"{t:.9f},{2 * math.sin(w):.6f},{-40 + 8 * math.sin(w):.6f},"
                f"{90 + 6 * math.cos(w):.6f},{-5 * math.sin(w):.4f},0,{max(0.0, 300 * math.sin(w)):.4f}\n"
            )
    return folder / "project.toml"


def cpu(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.process_time()
        fn()
        times.append(time.process_time() - t0)
    return statistics.median(times)


def table(title: str, unit: str, sizes, seconds) -> None:
    print(f"\n{title}")
    print(f"{'size':>10} {'CPU s':>8} {unit:>14} {'ratio':>6}")
    base = seconds[0] / sizes[0]
    for n, s in zip(sizes, seconds):
        print(f"{n:>10,} {s:>8.2f} {1e3 * s / n:>14.4f} {s / n / base:>6.2f}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cases", type=int, nargs="+", default=[5000, 10000, 20000])
    ap.add_argument("--rows", type=int, nargs="+", default=[75000, 150000, 300000])
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        load_project(many_cases(Path(tmp) / "warm", 10))  # imports and unit registry, not timed
        secs = []
        for n in args.cases:
            path = many_cases(Path(tmp) / f"cases-{n}", n)
            secs.append(cpu(lambda: project_summary(load_project(path)), args.repeat))
        table(
            "check: read, validate and summarize a project of N payload cases",
            "ms per case",
            args.cases,
            secs,
        )
        secs = []
        for r in args.rows:
            path = long_cycle(Path(tmp) / f"rows-{r}", r)

            def run():
                p = load_project(path)
                assess(p, load_design(path.parent / "design.toml", p))

            secs.append(cpu(run, args.repeat))
        table(
            "assess: the leg example with its trot cycle resampled to R samples",
            "ms per sample",
            args.rows,
            secs,
        )


if __name__ == "__main__":
    main()
