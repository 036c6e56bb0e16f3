"""The study store under faults: one writer at a time, a run stopped by any fault (SIGKILL, a
full disk, an I/O error) is marked interrupted and resumes to the uninterrupted result with
nothing lost or repeated, and a damaged store is one clear line. SQLite's own guarantees relied
on: WAL journal atomic commit, and SQLITE_FULL when the page limit is reached
(sqlite.org/atomiccommit.html, sqlite.org/pragma.html#pragma_max_page_count) [trade]."""

from __future__ import annotations

import os
import random
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from jointwright.errors import InputError  # noqa: E402
from jointwright.study import StudyStore, expand, load_study, read_cases, read_runs, run_study  # noqa: E402
from jointwright.study import store as store_module  # noqa: E402
from tests.test_study_runner import LEG, make_study, outcomes  # noqa: E402

SCRIPT = """
import sys
from jointwright.study import run_study
run_study(sys.argv[1], sys.argv[2], workers=2, case_fn="tests.study_cases:leg_case", progress=False,
          resume=True)
"""


def _env() -> dict:
    return {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "src"), str(ROOT)])}


def _start(path: Path, store: Path) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-c", SCRIPT, str(path), str(store)],
        cwd=ROOT,
        env=_env(),
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


def _reference(tmp_path: Path, path: Path) -> dict:
    ref = tmp_path / "reference.sqlite"
    run_study(path, ref, workers=2, case_fn=LEG, progress=False)
    return outcomes(ref)


def test_second_writer_is_refused_with_the_first_ones_pid_and_host(tmp_path):
    path = make_study(tmp_path, n_thigh=1)
    spec = load_study(path)
    store = tmp_path / "s.sqlite"
    with StudyStore.open(store, spec, 4):
        with pytest.raises(InputError, match="another run is writing") as info:
            run_study(path, store, workers=1, case_fn=LEG, resume=True, progress=False)
        assert f"process {os.getpid()} on host" in str(info.value) and info.value.field == "(lock)"
        # readers are never blocked
        assert read_cases(store) == [] and read_runs(store) == []
    out = run_study(
        path, store, workers=1, case_fn=LEG, resume=True, progress=False
    )  # lock released
    assert out.done_total == 4


@pytest.mark.slow
def test_two_concurrent_writers_one_runs_one_is_refused_nothing_duplicated(tmp_path):
    path = make_study(tmp_path, "sleep = 0.05", n_thigh=4)  # 16 cases
    store = tmp_path / "s.sqlite"
    a, b = _start(path, store), _start(path, store)
    results = [p.communicate(timeout=120) for p in (a, b)]
    codes = sorted([a.returncode, b.returncode])
    errors = "".join(err for _, err in results)
    assert "duplicate column" not in errors
    if codes[1] != 0:  # the two overlapped: exactly one was refused, with a clear message
        assert codes == [0, 1] and "another run is writing to this store (process " in errors
    ids = [c.case_id for c in read_cases(store)]
    assert len(ids) == len(set(ids)) == 16
    assert outcomes(store) == _reference(tmp_path, path)


def _fail_on_write(monkeypatch, after: int, exc: BaseException) -> None:
    real = StudyStore.write
    calls = {"n": 0}

    def write(self, case, record, run_id=None):
        calls["n"] += 1
        if calls["n"] > after:
            raise exc
        return real(self, case, record, run_id)

    monkeypatch.setattr(StudyStore, "write", write)


@pytest.mark.parametrize(
    "exc",
    [OSError(28, "No space left on device"), sqlite3.OperationalError("disk I/O error")],
    ids=["enospc", "eio"],
)
def test_a_fault_while_storing_is_one_line_marks_the_run_and_resumes(tmp_path, monkeypatch, exc):
    path, store = make_study(tmp_path), tmp_path / "s.sqlite"
    _fail_on_write(monkeypatch, 5, exc)
    with pytest.raises(InputError) as info:
        run_study(path, store, workers=2, case_fn=LEG, progress=False)
    assert info.value.field == "(run)" and "resume" in info.value.rule
    assert ("No space left" if isinstance(exc, OSError) else "disk I/O error") in info.value.rule
    assert len(read_cases(store)) == 5 and read_runs(store)[0]["status"] == "interrupted"
    monkeypatch.undo()
    out = run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert (out.skipped, out.done, out.done_total) == (5, 11, 16)
    assert outcomes(store) == _reference(tmp_path, path)


def test_a_really_full_database_stops_cleanly_and_resumes(tmp_path, monkeypatch):
    """SQLITE_FULL for real: the page limit is hit part-way (as a full disk does)."""
    path, store = make_study(tmp_path, n_thigh=6), tmp_path / "s.sqlite"
    real = store_module._connect

    def small(p):
        conn = real(p)
        pages = conn.execute("PRAGMA page_count").fetchone()[0]
        conn.execute(f"PRAGMA max_page_count = {max(pages, 1) + 1}")
        return conn

    with StudyStore.open(store, load_study(path), 24):  # an empty store, then the disk fills
        pass
    monkeypatch.setattr(store_module, "_connect", small)
    with pytest.raises(InputError) as info:
        run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert "full" in info.value.rule and info.value.field == "(run)"
    partial = len(read_cases(store))
    assert 0 < partial < 24
    monkeypatch.undo()
    out = run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    assert out.done_total == 24 and out.skipped == partial
    assert all(r["status"] != "running" for r in read_runs(store))
    assert outcomes(store) == _reference(tmp_path, path)


def test_a_damaged_store_is_one_line_everywhere(tmp_path):
    path, store = make_study(tmp_path), tmp_path / "s.sqlite"
    run_study(path, store, workers=2, case_fn=LEG, progress=False)
    conn = sqlite3.connect(store)
    conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    page = conn.execute("PRAGMA page_size").fetchone()[0]
    pages = conn.execute("PRAGMA page_count").fetchone()[0]
    conn.close()
    data = bytearray(store.read_bytes())
    rng = random.Random(7)
    for p in range(1, pages):  # every page but the header page: scribble over its b-tree header
        data[p * page : p * page + 16] = bytes(rng.randrange(256) for _ in range(16))
    store.write_bytes(bytes(data))
    with pytest.raises(InputError, match="damaged") as info:
        read_cases(store)
    assert info.value.file == str(store)
    with pytest.raises(InputError, match="damaged|not a jointwright study store"):
        run_study(path, store, workers=2, case_fn=LEG, resume=True, progress=False)
    damaged_bytes = store.read_bytes()
    out = run_study(path, store, workers=2, case_fn=LEG, restart=True, progress=False)
    assert out.done_total == 16
    kept = [
        p for p in tmp_path.iterdir() if p.name.startswith("s.sqlite.") and p.name.endswith(".bak")
    ]
    assert len(kept) == 1 and kept[0].read_bytes() == damaged_bytes  # kept byte for byte
    store.unlink()
    for extra in ("-wal", "-shm"):
        Path(f"{store}{extra}").unlink(missing_ok=True)
    store.write_bytes(damaged_bytes)
    res = subprocess.run(
        [
            sys.executable,
            "-c",
            "from jointwright.cli import main; main()",
            "study",
            str(path),
            "--store",
            str(store),
            "--resume",
            "--workers",
            "1",
        ],
        capture_output=True,
        text=True,
        env=_env(),
        cwd=ROOT,
    )
    assert res.returncode == 2 and "Traceback" not in res.stderr, res.stderr
    assert len(res.stderr.strip().splitlines()) == 1 and str(store) in res.stderr


@pytest.mark.slow
@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="POSIX signals")
def test_twenty_random_kills_then_resume_equal_an_uninterrupted_run(tmp_path):
    path = make_study(tmp_path, "sleep = 0.03", n_thigh=8)  # 32 cases
    store = tmp_path / "s.sqlite"
    rng = random.Random(16)
    for _ in range(20):
        proc = _start(path, store)
        time.sleep(rng.uniform(0.0, 2.5))  # from start-up (before the store exists) to mid-run
        proc.send_signal(signal.SIGKILL)
        proc.communicate(timeout=30)
    final = _start(path, store)
    out, err = final.communicate(timeout=180)
    assert final.returncode == 0, err
    ids = [c.case_id for c in read_cases(store)]
    assert len(ids) == len(set(ids)) == 32
    assert all(r["status"] in ("interrupted", "complete") for r in read_runs(store))
    assert outcomes(store) == _reference(tmp_path, path)


def test_a_tls_scheduler_without_a_client_certificate_is_one_line(tmp_path, monkeypatch):
    for name in (
        "DASK_DISTRIBUTED__COMM__TLS__CA_FILE",
        "DASK_DISTRIBUTED__COMM__TLS__CLIENT__CERT",
    ):
        monkeypatch.delenv(name, raising=False)
    path = make_study(tmp_path, n_thigh=1)
    with pytest.raises(InputError, match="certificate, key and CA") as info:
        run_study(
            path, tmp_path / "s.sqlite", scheduler="tls://127.0.0.1:9", case_fn=LEG, progress=False
        )
    assert info.value.field == "--scheduler"


@pytest.mark.parametrize("content", [b"", None], ids=["empty file", "sqlite without tables"])
def test_a_store_killed_before_its_first_commit_starts_afresh(tmp_path, content):
    path, store = make_study(tmp_path, n_thigh=1), tmp_path / "s.sqlite"
    if content is None:
        sqlite3.connect(store).close()  # a database file with no table yet
        sqlite3.connect(store).execute("PRAGMA user_version = 0").connection.close()
    else:
        store.write_bytes(content)
    out = run_study(path, store, workers=1, case_fn=LEG, progress=False)
    assert out.done_total == 4


def test_a_refused_writer_names_a_holder_that_writes_its_name_just_after_locking(tmp_path):
    """A writer takes the lock, then writes its name: a second writer refused in between waits
    for the name instead of reporting an unnamed holder (the race two runs started together
    hit)."""
    import json
    import threading
    import time

    from jointwright.study.lock import WriterLock, _try_lock

    store = tmp_path / "s.sqlite"
    holder = WriterLock(store)
    fh = open(holder.path, "a+", encoding="utf-8")
    assert _try_lock(fh)  # locked, no name yet

    def name_later():
        time.sleep(0.05)
        fh.seek(0)
        fh.truncate()
        fh.write(json.dumps({"pid": 4321, "host": "bench", "since": "now"}))
        fh.flush()

    writer = threading.Thread(target=name_later)
    writer.start()
    try:
        with pytest.raises(InputError, match=r"another run is writing to this store \(process 4321"):
            WriterLock(store).acquire(store)
    finally:
        writer.join()
        fh.close()
