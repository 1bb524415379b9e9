"""History store reliability on SQLite: concurrent writers, a killed writer, old schemas.

External references: SQLite's own ``PRAGMA integrity_check`` judges the file after a
writer is killed; data digests are recomputed with ``hashlib.sha256`` (FIPS 180-4) over
the canonical encoding documented in qcnorm/store/__init__.py; the frozen version-1 DDL below is
the schema qcnorm 0.1 wrote (SQLite dialect), kept as text so later code cannot change it.
"""

from __future__ import annotations

import hashlib
import json
import multiprocessing as mp
import os
import signal
import sqlite3
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from qcnorm.errors import StoreError
from qcnorm.store import SCHEMA_VERSION, HistoryStore

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="SIGKILL and fork-free spawn checks are POSIX")

WRITERS = 4
PER_WRITER = 250
CHAR = "seal height"


def _values(worker: int, i: int) -> list[float]:
    rng = np.random.default_rng([worker, i])
    return rng.lognormal(mean=1.0, sigma=0.2, size=5 + (i % 7)).tolist()


def _expected_sha(values: list[float]) -> str:
    return hashlib.sha256("\n".join(repr(v) for v in values).encode("utf-8")).hexdigest()


# --------------------------------------------------------------------------- worker processes
def _concurrent_writer(path: str, worker: int, start: mp.synchronize.Event, ready: mp.Queue) -> None:
    ready.put(worker)
    start.wait(60)
    # all four open the same new file at once: schema creation and the characteristic
    # save must each happen exactly once
    with HistoryStore(path) as store:
        store.save_characteristic(CHAR, units="mm", lsl=1.5, usl=4.5, created_by=f"writer {worker}")
        for i in range(PER_WRITER):
            vals = _values(worker, i)
            store.save_analysis(
                CHAR, analysis={"n": len(vals), "transform": {"name": "log"}, "control": {"violations": []}},
                values=vals, lot=f"w{worker}-{i}", operator=f"writer {worker}", qcnorm_version="0.1.0",
            )


def _killed_writer(path: str, committed: int, queue: mp.Queue) -> None:
    with HistoryStore(path) as store:
        ids = [
            store.save_analysis(CHAR, analysis={"n": 3}, values=[1.0, 2.0, float(i)], lot=f"ok-{i}",
                                qcnorm_version="0.1.0")
            for i in range(committed)
        ]
        queue.put(ids)
        prepared = store._prepare_analysis(
            analysis={"n": 3}, values=[9.0, 9.0, 9.5], subgroups=None, shift="", lot="never-committed",
            operator="", note="", qcnorm_version="0.1.0", func="test",
        )
        # the same insert save_analysis runs, inside an open write transaction
        with store._transaction("save the analysis") as conn:
            store._insert_analysis(conn, CHAR, prepared, None, None, "test")
            queue.put("inside")
            time.sleep(120)  # killed here, before the commit


# --------------------------------------------------------------------------- tests
def test_four_processes_write_concurrently(tmp_path: Path):
    path = str(tmp_path / "shared.sqlite3")
    ctx = mp.get_context("spawn")
    start = ctx.Event()
    ready = ctx.Queue()
    procs = [ctx.Process(target=_concurrent_writer, args=(path, w, start, ready)) for w in range(WRITERS)]
    for p in procs:
        p.start()
    # wait until every interpreter has started and imported qcnorm (slow on a busy machine),
    # then release them together
    for _ in range(WRITERS):
        ready.get(timeout=120)
    start.set()
    for p in procs:
        p.join(120)
    assert [p.exitcode for p in procs] == [0] * WRITERS

    with HistoryStore(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        assert [c.revision for c in store.list_characteristics()] == [1]
        records = store.list_analyses(CHAR)
        assert len(records) == WRITERS * PER_WRITER
        by_lot = {r.lot: r for r in records}
        assert len(by_lot) == WRITERS * PER_WRITER  # nothing lost, nothing doubled
        for w in range(WRITERS):
            for i in range(PER_WRITER):
                rec = by_lot[f"w{w}-{i}"]
                vals = _values(w, i)
                assert rec.values.tolist() == vals
                assert rec.data_sha256 == _expected_sha(vals)
        assert all(store.verify(r.id) for r in records)
        # one unbroken record chain: every save sealed in commit order, no gaps, no reuse
        check = store.verify_chain()
        assert check.ok, check.detail
        assert check.checked == check.head_seq >= 2 * WRITERS * PER_WRITER  # each save: record + audit event
        # writers really interleaved (the ids of some writer are not one solid block)
        spans = []
        for w in range(WRITERS):
            ids_w = sorted(r.id for r in records if r.operator == f"writer {w}")
            spans.append(ids_w[-1] - ids_w[0] + 1)
        assert max(spans) > PER_WRITER, spans
    con = sqlite3.connect(path)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        con.close()


def test_writer_killed_mid_transaction(tmp_path: Path):
    path = str(tmp_path / "killed.sqlite3")
    with HistoryStore(path) as store:
        store.save_characteristic(CHAR, usl=10.0)
    ctx = mp.get_context("spawn")
    queue = ctx.Queue()
    proc = ctx.Process(target=_killed_writer, args=(path, 12, queue))
    proc.start()
    try:
        committed = queue.get(timeout=60)
        assert queue.get(timeout=60) == "inside"
        os.kill(proc.pid, signal.SIGKILL)
        proc.join(30)
    finally:
        if proc.is_alive():
            proc.kill()
    assert proc.exitcode == -signal.SIGKILL

    con = sqlite3.connect(path)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        con.close()
    with HistoryStore(path) as store:
        records = store.list_analyses(CHAR)
        assert sorted(r.id for r in records) == sorted(committed)
        assert "never-committed" not in {r.lot for r in records}
        assert all(store.verify(r.id) for r in records)
        assert [float(store.get_analysis(i).values[2]) for i in committed] == [float(k) for k in range(12)]
        # the dead writer's lock is gone: a new write goes through at once
        new = store.save_analysis(CHAR, analysis={}, values=[1.0], qcnorm_version="0.1.0")
        assert store.verify(new)
        check = store.verify_chain()  # the killed writer left no half-sealed record
        assert check.ok, check.detail


# Schema version 1 exactly as qcnorm 0.1 created it on SQLite (do not edit).
V1_DDL = """
CREATE TABLE schema_version (
    version INTEGER NOT NULL, applied_at VARCHAR(40) NOT NULL, qcnorm_version VARCHAR(40) NOT NULL,
    PRIMARY KEY (version));
CREATE TABLE characteristic (
    id INTEGER NOT NULL, name VARCHAR(200) NOT NULL, revision INTEGER NOT NULL, units VARCHAR(60),
    lsl DOUBLE, usl DOUBLE, target DOUBLE, required_index DOUBLE NOT NULL,
    created_at VARCHAR(40) NOT NULL, created_by VARCHAR(200) NOT NULL,
    PRIMARY KEY (id), CONSTRAINT uq_characteristic_name_revision UNIQUE (name, revision));
CREATE TABLE baseline (
    id INTEGER NOT NULL, characteristic_id INTEGER NOT NULL, created_at VARCHAR(40) NOT NULL,
    created_by VARCHAR(200) NOT NULL, reason TEXT NOT NULL, transform_name VARCHAR(60),
    chart_type VARCHAR(60), center DOUBLE, sigma DOUBLE, baseline_json TEXT NOT NULL,
    n INTEGER NOT NULL, values_json TEXT NOT NULL, subgroups_json TEXT, data_sha256 VARCHAR(64) NOT NULL,
    PRIMARY KEY (id), FOREIGN KEY(characteristic_id) REFERENCES characteristic (id));
CREATE TABLE analysis (
    id INTEGER NOT NULL, characteristic_id INTEGER NOT NULL, created_at VARCHAR(40) NOT NULL,
    operator VARCHAR(200) NOT NULL, shift VARCHAR(200) NOT NULL, lot VARCHAR(200) NOT NULL,
    note TEXT NOT NULL, n INTEGER NOT NULL, n_values INTEGER NOT NULL, values_json TEXT NOT NULL,
    subgroups_json TEXT, data_sha256 VARCHAR(64) NOT NULL, analysis_json TEXT NOT NULL,
    qcnorm_version VARCHAR(40) NOT NULL, baseline_id INTEGER, supersedes INTEGER,
    transform_name VARCHAR(60), cpk DOUBLE, ppk DOUBLE, verdict VARCHAR(200), in_control BOOLEAN,
    PRIMARY KEY (id), FOREIGN KEY(characteristic_id) REFERENCES characteristic (id),
    FOREIGN KEY(baseline_id) REFERENCES baseline (id), FOREIGN KEY(supersedes) REFERENCES analysis (id));
CREATE TABLE review (
    id INTEGER NOT NULL, analysis_id INTEGER NOT NULL, decision VARCHAR(20) NOT NULL,
    reviewer VARCHAR(200) NOT NULL, comment TEXT NOT NULL, created_at VARCHAR(40) NOT NULL,
    supersedes INTEGER, PRIMARY KEY (id), FOREIGN KEY(analysis_id) REFERENCES analysis (id),
    FOREIGN KEY(supersedes) REFERENCES review (id));
"""


def _write_v1_file(path: Path) -> dict[str, object]:
    vals = [2.31, 2.29, 2.4, 2.35]
    labels = ["1", "1", "2", "2"]
    sha = hashlib.sha256("\n".join(f"{v!r}\t{json.dumps(g)}" for v, g in zip(vals, labels)).encode()).hexdigest()
    analysis = {"n": 4, "transform": {"name": "boxcox"}, "capability": {"cpk": 1.52, "verdict": "capable"},
                "control": {"violations": [{"rule": "two_of_three", "index": 2}, {"rule": "beyond", "index": 3}]}}
    con = sqlite3.connect(path)
    try:
        con.executescript(V1_DDL)
        t = "2026-03-02T22:15:00.000000+00:00"
        con.execute("INSERT INTO schema_version VALUES (1, ?, '0.1.0')", (t,))
        con.execute("INSERT INTO characteristic VALUES (1, ?, 1, 'mm', 2.0, 2.6, NULL, 1.33, ?, 'ana')", (CHAR, t))
        con.execute(
            "INSERT INTO baseline VALUES (1, 1, ?, 'qe', 'Phase I', 'boxcox', 'xbar_r', 0.84, 0.02, ?, 4, ?, ?, ?)",
            (t, json.dumps({"center": 0.84}), json.dumps(vals), json.dumps(labels), sha),
        )
        con.execute(
            "INSERT INTO analysis VALUES (1, 1, ?, 'kim', 'night', 'L-88', '', 4, 4, ?, ?, ?, ?, '0.1.0', 1, NULL,"
            " 'boxcox', 1.52, NULL, 'capable', 0)",
            (t, json.dumps(vals), json.dumps(labels), sha, json.dumps(analysis)),
        )
        con.execute("INSERT INTO review VALUES (1, 1, 'approve', 'sup', 'fine', ?, NULL)", (t,))
        con.commit()
    finally:
        con.close()
    return {"values": vals, "labels": tuple(labels), "sha": sha}


def test_previous_schema_version_opens_and_is_migrated(tmp_path: Path):
    path = tmp_path / "v1.sqlite3"
    expected = _write_v1_file(path)
    with HistoryStore(path) as store:
        assert store.schema_version == SCHEMA_VERSION == 3
        rec = store.get_analysis(1)
        assert rec.values.tolist() == expected["values"] and rec.subgroups == expected["labels"]
        assert rec.data_sha256 == expected["sha"] and store.verify(1)
        assert rec.violations == 2  # column added by migration 2, filled from the stored JSON
        assert rec.latest_review is not None and rec.latest_review.decision == "approve"
        assert store.latest_baseline(CHAR).id == 1
        assert store.history(CHAR)["decision"].tolist() == ["approve"]
        new = store.save_analysis(CHAR, analysis={"control": {"violations": []}}, values=[2.3],
                                  qcnorm_version="0.1.0", baseline_id=1)
        assert store.get_analysis(new).violations == 0
    con = sqlite3.connect(path)
    try:
        rows = con.execute("SELECT version FROM schema_version ORDER BY version").fetchall()
        indexes = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'index'")}
    finally:
        con.close()
    assert rows == [(1,), (2,), (3,)]
    assert {"ix_analysis_characteristic", "ix_review_analysis"} <= indexes


def test_failed_migration_leaves_previous_version(tmp_path: Path, monkeypatch):
    """Each schema step is one transaction: a failure part-way leaves version 1 intact."""
    import qcnorm.store.migrate as migrate_mod

    path = tmp_path / "v1.sqlite3"
    _write_v1_file(path)
    real = migrate_mod._run_step

    def broken(conn, current, version):
        real(conn, current, version)
        if version == 2:
            raise migrate_mod.sa.exc.OperationalError("simulated", {}, Exception("disk I/O error"))

    monkeypatch.setattr(migrate_mod, "_run_step", broken)
    with pytest.raises(StoreError, match="upgrade the schema to version 2"):
        HistoryStore(path)
    con = sqlite3.connect(path)
    try:
        assert con.execute("SELECT max(version) FROM schema_version").fetchone()[0] == 1
        cols = {r[1] for r in con.execute("PRAGMA table_info(analysis)")}
        tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    finally:
        con.close()
    assert "n_violations" not in cols  # the ALTER TABLE was rolled back with the rest
    assert "alembic_version" not in tables  # so was the adoption stamp
    monkeypatch.setattr(migrate_mod, "_run_step", real)
    with HistoryStore(path) as store:
        assert store.schema_version == SCHEMA_VERSION and store.get_analysis(1).violations == 2
        assert store.verify_chain().ok


@pytest.mark.parametrize(
    "content",
    [b"measurement,value\n1,2.5\n2,2.6\n" * 50, bytes(range(256)) * 64, b"SQLite format 3\x00" + b"\xff" * 4000],
    ids=["csv text", "binary noise", "truncated header"],
)
def test_file_that_is_not_a_database(tmp_path: Path, content: bytes):
    path = tmp_path / "history.sqlite3"
    path.write_bytes(content)
    with pytest.raises(StoreError, match=r"(?s)not a qcnorm history database or is damaged.*Next step") as info:
        HistoryStore(path)
    assert str(path.as_posix()) in str(info.value)
    assert path.read_bytes() == content  # nothing was written into the user's file
