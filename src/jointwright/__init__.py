"""jointwright: concept-stage co-design of a robot's actuators.

Every actuated joint gets a motor, a gear stage stack and a ratio, chosen together so that the
robot's payload is as large as possible while back-drivability, reflected inertia, speed,
thermal and mass limits hold. Gear losses are modelled as two efficiencies, forward and backward,
chosen per joint by the direction of power flow.

The operations of the command line, as Python functions (docs/api.md)::

    import jointwright as jw

    project = jw.load_example("leg")            # or jw.load_project("my/project.toml")
    result = jw.size(project, time_limit=60)     # proven optimum (gap ≤ 1e-4) or best design
    report = jw.assess(project, result.design)   # every metric, every requirement with margin
    front = jw.sweep_frontier(project, "imf")    # payload against impact mitigation
    jw.build_report(project, result.design, "out/")

Names are loaded on first use, so ``import jointwright`` stays cheap.
"""

from __future__ import annotations

import importlib
import os
from typing import Any

# The physics works on batches of small matrices (3 to 30 joints), where the BLAS library's own
# threads only spin: on the bundled quadruped's frontier they took 71 CPU-s for 44 s wall against
# 44 CPU-s with one thread (docs/benchmarks.md). One thread, unless the user chose a number; read
# when numpy loads, so it holds wherever jointwright is imported first (the command line).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

__version__ = "0.1.0"

#: public name -> module that defines it
_EXPORTS = {
    "load_project": "jointwright.project",
    "load_example": "jointwright.project",
    "EXAMPLES": "jointwright.project",
    "Project": "jointwright.project",
    "load_design": "jointwright.design",
    "Design": "jointwright.design",
    "assess": "jointwright.assessment",
    "Assessment": "jointwright.assessment",
    "unloaded_joints": "jointwright.assessment",
    "size": "jointwright.sizing",
    "SizingResult": "jointwright.solve.result",
    "sweep_frontier": "jointwright.frontier",
    "Frontier": "jointwright.frontier",
    "run_study": "jointwright.study.runner",
    "StudyOutcome": "jointwright.study.runner",
    "build_report": "jointwright.report.build",
    "InputError": "jointwright.errors",
}

#: public names that differ from the defining module's (``jointwright.frontier`` is a module)
_SOURCE_NAME = {"sweep_frontier": "frontier"}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'jointwright' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), _SOURCE_NAME.get(name, name))
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
