"""The public Python API (docs/api.md): every exported name resolves, import stays cheap, the
operations run on a bundled example, and wrong calls fail loudly."""

from __future__ import annotations

import inspect
import subprocess
import sys

import pytest

import jointwright as jw


def test_every_exported_name_resolves():
    for name in jw.__all__:
        assert getattr(jw, name) is not None, name
    with pytest.raises(AttributeError):
        jw.no_such_thing  # noqa: B018


def test_import_loads_no_numerics():
    # a fresh interpreter: importing the package must not pull numpy, Pinocchio or the solvers
    code = "import sys, jointwright; print(sorted(m for m in ('numpy', 'pinocchio', 'clarabel', 'pyomo') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


@pytest.mark.parametrize(
    "name",
    [
        "load_project",
        "load_example",
        "load_design",
        "assess",
        "size",
        "sweep_frontier",
        "run_study",
        "build_report",
    ],
)
def test_operations_reject_unknown_keywords(name):
    fn = getattr(jw, name)
    params = inspect.signature(fn).parameters
    assert not any(p.kind is inspect.Parameter.VAR_KEYWORD for p in params.values()), name
    with pytest.raises(TypeError):
        fn(no_such_option=1)


def test_example_assessed_through_the_api():
    project = jw.load_example("leg")
    design = jw.load_design(project.file.with_name("design.toml"), project)
    a = jw.assess(project, design)
    assert isinstance(a, jw.Assessment) and a.joints and a.checks
    with pytest.raises(jw.InputError):
        jw.load_example("hexapod")


def test_import_sets_one_blas_thread_unless_the_user_chose():
    """``import jointwright`` sets OPENBLAS_NUM_THREADS=1 when it is unset (the physics' small
    matrices gain nothing from the BLAS library's threads: docs/benchmarks.md, "One BLAS
    thread") and keeps a value the user set."""
    import os
    import subprocess
    import sys

    code = "import os, jointwright; print(os.environ['OPENBLAS_NUM_THREADS'])"
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True)
    assert out.stdout.strip() == "1", out.stderr
    env["OPENBLAS_NUM_THREADS"] = "3"
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True)
    assert out.stdout.strip() == "3", out.stderr
