"""The study runner: process pool and Dask, failures, crashes, interruption and resume."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.errors import InputError  # noqa: E402
from jointwright.study import (  # noqa: E402
    CaseRecord, StudyStore, case_project, expand, load_study, read_cases, read_runs, run_study,
)  # fmt: skip
from tests import study_cases  # noqa: E402

LEG = "tests.study_cases:leg_case"


def make_study(tmp_path: Path, options: str = "", n_thigh: int = 4) -> Path:
    """2 budgets x n_thigh thigh lengths x 2 variants."""
    (tmp_path / "leg.toml").write_text(study_cases.BASE_PROJECT)
    path = tmp_path / "study.toml"
    path.write_text(
        textwrap.dedent(f"""\
        [study]
        name = "runner test"
        base = "leg.toml"
        [options]
        {options}
        [[vary]]
        path = "robot.links.thigh.length"
        grid = {{ start = 0.2, stop = 0.5, num = {n_thigh} }}
        [[vary]]
        path = "requirements.mass_budget"
        values = ["2 kg", "3 kg"]
        [[variant]]
        name = "planetary"
        set = {{ "catalog.stage_kinds" = ["planetary"] }}
        [[variant]]
        name = "all"
        """)
    )
    return path


def outcomes(store: Path) -> dict:
    """case id -> (status, metrics, result): what must agree between equivalent runs."""
    return {c.case_id: (c.status, c.metrics, c.result) for c in read_cases(store, results=True)}


def test_pool_runs_every_case_with_correct_metrics(tmp_path):
    path = make_study(tmp_path)
    out = run_study(path, tmp_path / "s.sqlite", workers=2, case_fn=LEG, progress=False)
    spec = load_study(path)
    cases = expand(spec)
    assert (out.total, out.done, out.failed, out.skipped) == (16, 16, 0, 0)
    assert out.case_time > 0 and out.wall_time > 0 and out.backend == "processes"
    stored = {c.case_id: c for c in read_cases(tmp_path / "s.sqlite", results=True)}
    assert set(stored) == {c.id for c in cases}
    for case in cases:
        # expected metrics recomputed here from the case's project, independent of the worker
        expected = study_cases.leg_metrics(case_project(spec, case))
        row = stored[case.id]
        assert row.metrics == pytest.approx({**expected, "task": "size"})
        assert row.values == case.values and row.variant == case.variant
        assert row.result["series"] == pytest.approx([expected["reach"] * k for k in range(3)])
        assert row.result["base_dir_exists"] is True


def test_failing_case_is_recorded_and_the_rest_go_on(tmp_path):
    # reach = thigh + 0.3 m; thigh in {0.2, 0.3, 0.4, 0.5} -> reach > 0.75 only for 0.5
    path = make_study(tmp_path, "fail_above = 0.75")
    out = run_study(path, tmp_path / "s.sqlite", workers=2, case_fn=LEG, progress=False)
    assert (out.done, out.failed) == (12, 4)
    for c in read_cases(tmp_path / "s.sqlite"):
        if c.values["robot.links.thigh.length"] == 0.5:
            assert c.status == "failed" and c.error.startswith("ValueError: reach 0.800 m is above")
            assert "leg_case" in c.traceback and c.metrics == {}
        else:
            assert c.status == "done" and c.error is None


def test_case_that_kills_its_worker_is_isolated(tmp_path):
    path = make_study(tmp_path, "crash_at = 0.3")
    out = run_study(path, tmp_path / "s.sqlite", workers=2, case_fn=LEG, progress=False)
    assert (out.done, out.failed) == (12, 4)
    for c in read_cases(tmp_path / "s.sqlite"):
        crashed = c.values["robot.links.thigh.length"] == 0.3
        assert c.status == ("failed" if crashed else "done")
        if crashed:
            assert "worker process died" in c.error


def test_contract_breach_is_a_failure(tmp_path):
    path = make_study(tmp_path, n_thigh=1)
    out = run_study(
        path, tmp_path / "s.sqlite", workers=1, case_fn=study_cases.bad_shape, progress=False
    )
    assert out.failed == 4
    assert all("must return" in c.error for c in read_cases(tmp_path / "s.sqlite"))


def test_resume_skips_stored_cases_and_retries_failed_only_when_asked(tmp_path):
    path, store = make_study(tmp_path, "fail_above = 0.75"), tmp_path / "s.sqlite"
    run_study(path, store, workers=2, case_fn=LEG, progress=False)
    with pytest.raises(InputError, match="already holds 16 case"):
        run_study(path, store, workers=2, case_fn=LEG, progress=False)
    again = run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert (again.skipped, again.done, again.failed) == (16, 0, 0)
    # the case function was fixed: only the failed cases run again
    retry = run_study(path, store, workers=2, case_fn="tests.study_cases:fixed_case", resume=True,
                      retry_failed=True, progress=False)  # fmt: skip
    assert (retry.skipped, retry.done, retry.failed, retry.done_total) == (12, 4, 0, 16)
    assert len(read_cases(store)) == 16
    assert [r["status"] for r in read_runs(store)] == ["complete"] * 3


@settings(max_examples=8, deadline=None)
@given(marks=st.lists(st.sampled_from(["missing", "done", "failed"]), min_size=8, max_size=8),
       retry=st.booleans())  # fmt: skip
def test_resume_runs_exactly_the_missing_cases(tmp_path_factory, marks, retry):
    tmp_path = tmp_path_factory.mktemp("resume")
    path, store = make_study(tmp_path, n_thigh=2), tmp_path / "s.sqlite"
    spec = load_study(path)
    cases = expand(spec)
    with StudyStore.open(store, spec, len(cases)) as st_:
        for case, mark in zip(cases, marks):
            if mark != "missing":
                st_.write(
                    case, CaseRecord(mark, {"earlier": 1.0} if mark == "done" else {}, "null")
                )
    out = run_study(path, store, workers=1, case_fn=LEG, resume=True, retry_failed=retry,
                    progress=False)  # fmt: skip
    rerun = {"missing", "failed"} if retry else {"missing"}
    assert out.done == sum(m in rerun for m in marks) and out.skipped == 8 - out.done
    rows = {c.case_id: c for c in read_cases(store)}
    assert len(rows) == 8  # every case exactly once
    for case, mark in zip(cases, marks):
        row = rows[case.id]
        if mark in rerun:
            assert row.status == "done" and "reach" in row.metrics
        else:  # kept as it was
            assert row.status == mark and ("earlier" in row.metrics) == (mark == "done")


def test_changed_study_is_refused_and_restart_keeps_a_backup(tmp_path):
    path, store = make_study(tmp_path), tmp_path / "s.sqlite"
    run_study(path, store, workers=2, case_fn=LEG, progress=False)
    path.write_text(path.read_text().replace('"3 kg"', '"3.5 kg"'))
    with pytest.raises(InputError) as info:
        run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert info.value.file == str(store) and "changed" in info.value.rule
    out = run_study(path, store, workers=2, case_fn=LEG, restart=True, progress=False)
    assert (out.skipped, out.done) == (0, 16)
    (backup,) = tmp_path.glob("s.sqlite.*.bak")
    old = {c.values["requirements.mass_budget"] for c in read_cases(backup)}
    new = {c.values["requirements.mass_budget"] for c in read_cases(store)}
    assert old == {"2 kg", "3 kg"} and new == {"2 kg", "3.5 kg"}


@pytest.mark.parametrize("kwargs, field", [
    ({"resume": True, "restart": True}, "restart"),
    ({"workers": 0}, "workers"),
    ({"workers": 2, "scheduler": "tcp://127.0.0.1:1"}, "workers"),
    ({"case_fn": "tests.study_cases"}, "case_fn"),
    ({"case_fn": "tests.study_cases:nothing_here"}, "case_fn"),
    ({"case_fn": "no_such_module_xyz:fn"}, "case_fn"),
])  # fmt: skip
def test_bad_arguments(tmp_path, kwargs, field):
    path = make_study(tmp_path, n_thigh=1)
    kwargs = {"case_fn": LEG, **kwargs}
    with pytest.raises(InputError) as info:
        run_study(path, tmp_path / "s.sqlite", progress=False, **kwargs)
    assert info.value.field == field


def test_progress_and_summary_go_to_stderr(tmp_path, capfd):
    path = make_study(tmp_path, n_thigh=1)
    run_study(path, tmp_path / "s.sqlite", workers=1, case_fn=LEG, progress=True)
    captured = capfd.readouterr()
    assert captured.out == ""
    assert "study finished: 4 done, 0 failed" in captured.err


# ------------------------------------------------------------------ interruption

SCRIPT = """
import sys
from jointwright.study import run_study
run_study(sys.argv[1], sys.argv[2], workers=2, case_fn="tests.study_cases:leg_case", progress=False)
"""


def _start(path: Path, store: Path) -> subprocess.Popen:
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "src"), str(ROOT)])}
    return subprocess.Popen([sys.executable, "-c", SCRIPT, str(path), str(store)], cwd=ROOT, env=env,
                            start_new_session=True, stderr=subprocess.PIPE)  # fmt: skip


def _stored(store: Path) -> int:
    try:
        with sqlite3.connect(f"file:{store}?mode=ro", uri=True) as conn:
            return conn.execute("SELECT count(*) FROM cases").fetchone()[0]
    except sqlite3.Error:
        return 0


def _live_group_members(pgid: int) -> list[int]:
    """Processes of group ``pgid`` that still run (zombies waiting for init to reap them do not)."""
    alive = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if int(fields[2]) == pgid and fields[0] != "Z":
            alive.append(int(stat.parent.name))
    return alive


def _interrupt_part_way(proc: subprocess.Popen, store: Path, sig: int, *, group: bool) -> int:
    """Wait until a few cases are stored, send ``sig``, check that no worker outlives the runner."""
    deadline = time.monotonic() + 60
    while _stored(store) < 4:
        assert proc.poll() is None and time.monotonic() < deadline, "the study ended too early"
        time.sleep(0.02)
    (os.killpg if group else os.kill)(proc.pid, sig)
    code = proc.wait(30)
    deadline = time.monotonic() + 10
    while (left := _live_group_members(proc.pid)) and time.monotonic() < deadline:
        time.sleep(0.05)
    if left:
        os.killpg(proc.pid, signal.SIGKILL)
        pytest.fail(f"worker processes {left} outlived the runner")
    return code


@pytest.mark.slow
@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads process states from /proc")
@pytest.mark.parametrize(
    "sig, group", [(signal.SIGKILL, False), (signal.SIGINT, True)], ids=["kill", "ctrl-c"]
)
def test_interrupted_study_resumes_to_the_uninterrupted_result(tmp_path, sig, group):
    path = make_study(tmp_path, "sleep = 0.1", n_thigh=6)  # 24 cases of 0.1 s on 2 workers
    store = tmp_path / "s.sqlite"
    code = _interrupt_part_way(_start(path, store), store, sig, group=group)
    assert code != 0
    partial = _stored(store)
    assert 4 <= partial < 24
    runs = read_runs(store)
    assert runs[0]["status"] == ("running" if sig == signal.SIGKILL else "interrupted")
    out = run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert out.skipped == partial and out.done == 24 - partial and out.done_total == 24
    ids = [c.case_id for c in read_cases(store)]
    assert len(ids) == len(set(ids)) == 24
    reference = tmp_path / "ref.sqlite"
    run_study(path, reference, workers=2, case_fn=LEG, progress=False)
    assert outcomes(store) == outcomes(reference)


# --------------------------------------------------------------------------- Dask


@pytest.fixture(scope="module")
def cluster():
    from distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                      host="127.0.0.1") as c:  # fmt: skip
        yield c


def test_dask_cluster_gives_the_pool_results(tmp_path, cluster):
    path = make_study(tmp_path, "fail_above = 0.75")
    run_study(path, tmp_path / "pool.sqlite", workers=2, case_fn=LEG, progress=False)
    out = run_study(path, tmp_path / "dask.sqlite", scheduler=cluster.scheduler_address, case_fn=LEG,
                    progress=False)  # fmt: skip
    assert (out.backend, out.workers, out.done, out.failed) == ("dask", 2, 12, 4)
    assert outcomes(tmp_path / "dask.sqlite") == outcomes(tmp_path / "pool.sqlite")


def test_dask_client_and_callable(tmp_path, cluster):
    from distributed import Client

    path = make_study(tmp_path, n_thigh=2)
    with Client(cluster, set_as_default=False) as client:
        out = run_study(path, tmp_path / "d.sqlite", scheduler=client, case_fn=study_cases.leg_case,
                        progress=False)  # fmt: skip
        assert client.status == "running"  # a client passed in is left open
    assert (out.done, out.failed) == (8, 0)
    workers = {c.worker for c in read_cases(tmp_path / "d.sqlite")}
    assert all(w.count(":") == 1 for w in workers)


def test_dask_retries_lost_tasks_smaller_then_alone():
    from jointwright.study.backends import _retry_queue

    assert _retry_queue("batch", 5, lost_worker=True) == "single"
    assert _retry_queue("batch", 5, lost_worker=False) == "single"
    assert _retry_queue("single", 1, lost_worker=True) == "solo"
    assert _retry_queue("batch", 1, lost_worker=True) == "solo"
    assert _retry_queue("solo", 1, lost_worker=True) is None
    assert (
        _retry_queue("single", 1, lost_worker=False) is None
    )  # e.g. arguments that do not unpickle
