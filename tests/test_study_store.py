"""The SQLite study store (jointwright.study.store)."""

from __future__ import annotations

import datetime as dt
import math
import sqlite3
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import jointwright  # noqa: E402
from jointwright.errors import InputError  # noqa: E402
from jointwright.study import CaseRecord, StudyStore, expand, parse_study, read_cases, read_study  # noqa: E402
from jointwright.study.store import STORE_FORMAT, quote_identifier  # noqa: E402
from tests.study_cases import BASE_PROJECT  # noqa: E402


def make_spec(tmp_path: Path, budgets=("2 kg", "3 kg")):
    (tmp_path / "leg.toml").write_text(BASE_PROJECT)
    definition = {
        "study": {"name": "store test", "base": "leg.toml"},
        "vary": [{"path": "requirements.mass_budget", "values": list(budgets)},
                 {"path": "robot.links.thigh.length", "values": [0.2, 0.3]}],
    }  # fmt: skip
    return parse_study(definition, study_dir=tmp_path)


def done(**metrics) -> CaseRecord:
    return CaseRecord("done", metrics, '{"ok": true}', wall_time=0.01, worker="w:1")


def test_new_store_describes_the_study(tmp_path):
    spec = make_spec(tmp_path)
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        assert store.statuses() == {}
    info = read_study(tmp_path / "s.sqlite")
    assert (info.format_version, info.study_hash, info.name) == (
        STORE_FORMAT,
        spec.hash,
        "store test",
    )
    assert info.package_version == jointwright.__version__
    assert info.parameters == ("requirements.mass_budget", "robot.links.thigh.length")
    assert info.definition == spec.definition and info.base_project == spec.base_project
    created = dt.datetime.fromisoformat(info.created)
    assert abs((dt.datetime.now(dt.timezone.utc) - created).total_seconds()) < 60
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        cols = [r[1] for r in conn.execute("PRAGMA table_info(cases)")]
    assert "param:requirements.mass_budget" in cols and "param:robot.links.thigh.length" in cols


def test_metrics_become_columns_and_values_round_trip(tmp_path):
    spec = make_spec(tmp_path)
    a, b, c, _ = expand(spec)
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(a, done(payload=12.5, joint="knee"))
        store.write(b, done(payload=math.inf, imf=0.4, count=3))  # a new metric mid-study
        store.write(c, CaseRecord("failed", error="ValueError: no", traceback="tb", worker="w:2"))
    rows = {r.case_id: r for r in read_cases(tmp_path / "s.sqlite", results=True)}
    assert rows[a.id].metrics == {"payload": 12.5, "joint": "knee"}
    assert rows[b.id].metrics == {"payload": math.inf, "imf": 0.4, "count": 3}
    assert rows[a.id].values == {
        "requirements.mass_budget": "2 kg",
        "robot.links.thigh.length": 0.2,
    }
    assert rows[a.id].result == {"ok": True}
    assert (rows[c.id].status, rows[c.id].error, rows[c.id].traceback) == (
        "failed",
        "ValueError: no",
        "tb",
    )
    # no pickled blobs anywhere: text, numbers or NULL only
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        cols = [r[1] for r in conn.execute("PRAGMA table_info(cases)")]
        kinds = {
            conn.execute(f"SELECT typeof({quote_identifier(n)}) FROM cases").fetchall()[0][0]
            for n in cols
        }
    assert "blob" not in kinds


def test_identifiers_are_quoted(tmp_path):
    spec = make_spec(tmp_path)
    a = expand(spec)[0]
    names = {'a"b': 1.0, "drop table cases; --": 2, "x'); DELETE FROM study; --": "s"}
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(a, done(**names))
    (row,) = read_cases(tmp_path / "s.sqlite")
    assert row.metrics == names
    assert read_study(tmp_path / "s.sqlite").name == "store test"


def test_done_is_never_overwritten_and_failed_is_replaced(tmp_path):
    spec = make_spec(tmp_path)
    a, b = expand(spec)[:2]
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(a, done(payload=1.0))
        store.write(a, done(payload=2.0))
        store.write(b, CaseRecord("failed", error="E"))
        store.write(b, done(payload=3.0))
        assert store.statuses() == {a.id: "done", b.id: "done"}
    rows = {r.case_id: r.metrics["payload"] for r in read_cases(tmp_path / "s.sqlite")}
    assert rows == {a.id: 1.0, b.id: 3.0}


def test_metric_names_differing_only_in_case_fail_the_case(tmp_path):
    spec = make_spec(tmp_path)
    a, b = expand(spec)[:2]
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(a, done(Payload=1.0))
        stored = store.write(b, done(payload=2.0))
    assert stored.status == "failed" and "letter case" in stored.error


def test_other_study_is_refused_and_restart_backs_up(tmp_path):
    spec = make_spec(tmp_path)
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(expand(spec)[0], done(payload=1.0))
    other = make_spec(tmp_path, budgets=("2 kg", "4 kg"))
    with pytest.raises(InputError) as info:
        StudyStore.open(tmp_path / "s.sqlite", other, 4)
    assert info.value.file == str(tmp_path / "s.sqlite") and info.value.field == "study.hash"
    assert spec.hash[:12] in info.value.rule and other.hash[:12] in info.value.rule
    with StudyStore.open(tmp_path / "s.sqlite", other, 4, restart=True) as store:
        assert store.statuses() == {}
    (backup,) = tmp_path.glob("s.sqlite.*.bak")
    assert read_study(backup).study_hash == spec.hash and len(read_cases(backup)) == 1
    assert read_study(tmp_path / "s.sqlite").study_hash == other.hash


def test_foreign_and_newer_files_are_refused(tmp_path):
    spec = make_spec(tmp_path)
    (tmp_path / "notes.sqlite").write_text("not a database")
    with pytest.raises(InputError, match="not a jointwright study store"):
        StudyStore.open(tmp_path / "notes.sqlite", spec, 4)
    with sqlite3.connect(tmp_path / "other.sqlite") as conn:
        conn.execute("CREATE TABLE t (x)")
    with pytest.raises(InputError, match="not a jointwright study store"):
        read_study(tmp_path / "other.sqlite")
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4):
        pass
    with sqlite3.connect(tmp_path / "s.sqlite") as conn:
        conn.execute("UPDATE study SET format_version = ?", (STORE_FORMAT + 1,))
    with pytest.raises(InputError, match="newer") as info:
        StudyStore.open(tmp_path / "s.sqlite", spec, 4)
    assert info.value.field == "study.format_version"
    with pytest.raises(InputError, match="not found"):
        read_cases(tmp_path / "missing.sqlite")


def test_a_failed_write_leaves_the_store_consistent(tmp_path):
    spec = make_spec(tmp_path)
    a, b = expand(spec)[:2]
    with StudyStore.open(tmp_path / "s.sqlite", spec, 4) as store:
        store.write(a, done(payload=1.0))
        with pytest.raises(ValueError, match="NUL"):  # no SQL identifier can hold a NUL
            store.write(b, done(**{"bad\x00name": 1.0}))
        store.write(b, done(payload=2.0))
    assert len(read_cases(tmp_path / "s.sqlite")) == 2
