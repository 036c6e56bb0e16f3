"""Exact sizing: enumeration versus branch and bound versus the Pyomo/HiGHS back-end.

(1) a 3-joint instance small enough to enumerate: the bundled leg with its 8 motors, two stage
types (Orbit and Lobe, all frames and ratios), one stage per joint (264 options per joint, 18.4 M
designs); the duty case and the IMF limit left out (the Pyomo back-end handles the IMF only by
cuts, which is slow; the search handles it, see the tests);
(2) the bundled 6-joint arm example: time to the proven optimum.

Prints times, ratios and the objectives, which must be equal. Results: docs/benchmarks.md.
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import dataclasses
import time
from importlib import resources

import numpy as np

from jointwright.catalog.model import Catalog
from jointwright.project import load_project
from jointwright.sizing import build_model, size
from jointwright.solve.enumerate import enumerate_all
from jointwright.solve.model import SizingModel
from jointwright.options import build_table


def example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        return load_project(folder / "project.toml")


def small_leg():
    leg = example("leg")
    cat = leg.catalog
    motors = cat.motors
    stages = tuple(s for s in cat.stages if s.name in ("Orbit", "Lobe"))
    cases = tuple(
        dataclasses.replace(c, limits={}) if c.kind == "impact" else c
        for c in leg.cases
        if c.kind != "duty"
    )
    return dataclasses.replace(
        leg, catalog=Catalog(motors=motors, stages=stages), max_stages=1, cases=cases, objective={}
    )


def timed(fn):
    t = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - t


def main():
    p = small_leg()
    table = build_table(p)
    n = len(p.robot.actuated)
    opts = [np.arange(len(table))] * n
    model = SizingModel(p, table, opts)
    ref, t_enum = timed(lambda: enumerate_all(model, opts, limit=50_000_000))
    res, t_search = timed(lambda: size(p, explain=False))
    pyo, t_pyomo = timed(lambda: size(p, backend="pyomo", explain=False))
    print(f"(1) leg, {len(table)} options per joint, {len(table) ** n} designs")
    print(f"    enumeration {t_enum:8.2f} s  payload {ref.objective:.6f} N")
    print(
        f"    search      {t_search:8.2f} s  payload {res.objective:.6f} N  ({res.status}, {res.native_status})"
    )
    print(
        f"    pyomo       {t_pyomo:8.2f} s  payload {pyo.objective:.6f} N  ({pyo.status}, {pyo.native_status})"
    )
    print(
        f"    enumeration / search = {t_enum / t_search:.0f}x; enumeration / pyomo = {t_enum / t_pyomo:.0f}x"
    )
    same = (
        abs(res.objective - ref.objective) <= 1e-9 * ref.objective
        and abs(pyo.objective - ref.objective) <= 1e-9 * ref.objective
    )
    print(f"    objectives equal: {same}")
    arm = example("arm")
    (model, _c), t_build = timed(lambda: build_model(arm, "payload", {}, [], []))
    r, t_arm = timed(lambda: size(arm, explain=False))
    print(
        f"(2) arm, {len(build_table(arm))} options per joint, 6 joints: {r.status} payload {r.objective:.6f} N, "
        f"bound {r.bound:.6f} N, {t_arm:.2f} s end to end ({r.native_status}); "
        f"candidates after filters {[int(c.size) for c in model.candidates]}"
    )


if __name__ == "__main__":
    main()
