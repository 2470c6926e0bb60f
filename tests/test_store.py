"""Results store: one transaction per run, resume, survival of a killed process, bad files."""

from __future__ import annotations

import multiprocessing
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from neuroyard.core.errors import StoreError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.store import SCHEMA_VERSION, ResultStore


def plan(runs=4, seed=3):
    return CampaignPlan(
        [EvolverSpec("rwg", {"batch_size": 50})], [TaskChoice("xor-v2")], runs, seed, 5000
    )


def test_round_trip_and_resume_skips_finished_runs(tmp_path):
    path = tmp_path / "r.db"
    with ResultStore(path) as store:
        assert execute(plan(runs=3), store, progress=False)[:2] == (3, 0)
        first = [r.to_dict() for r in store.records()]
    with ResultStore(path) as store:
        # the same campaign with more runs: only the new ones run
        assert execute(plan(runs=5), store, progress=False)[:2] == (2, 3)
        again = [r.to_dict() for r in store.records()]
    assert again[:3] == first
    assert len(again) == 5
    assert all(r["log"] for r in again)


def test_parallel_workers_give_the_same_records(tmp_path):
    with ResultStore(tmp_path / "a.db") as a, ResultStore(tmp_path / "b.db") as b:
        execute(plan(), a, Supervisor(1), progress=False)
        execute(plan(), b, Supervisor(2), progress=False)
        strip = lambda r: {k: v for k, v in r.to_dict().items() if k not in ("timing", "host")}  # noqa: E731
        assert [strip(r) for r in a.records()] == [strip(r) for r in b.records()]


def test_store_left_by_a_killed_process_keeps_every_finished_run(tmp_path):
    path = tmp_path / "killed.db"
    cmd = [
        sys.executable,
        "-m",
        "neuroyard.cli.main",
        "run",
        "--evolver",
        "rwg",
        "--task",
        "xor-v2",
        "--runs",
        "100",
        "--seed",
        "9",
        "--budget",
        "300",
        "--param",
        "batch_size=5",
        "--store",
        str(path),
        "--quiet",
    ]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    deadline = time.time() + 60
    stored = 0
    while time.time() < deadline and stored < 5:
        time.sleep(0.2)
        if path.exists():
            try:
                stored = sqlite3.connect(path).execute("SELECT count(*) FROM runs").fetchone()[0]
            except sqlite3.Error:
                stored = 0  # schema not written yet
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    assert stored >= 5, proc.stderr.read().decode()
    assert proc.returncode == -signal.SIGKILL  # killed mid-campaign, not finished
    with ResultStore(path) as store:
        kept = list(store.records())
        assert len(kept) >= stored
        assert all(len(r.log) == r.generations for r in kept)  # no half-written run
        resumed = CampaignPlan(
            [EvolverSpec("rwg", {"batch_size": 5})], [TaskChoice("xor-v2")], 100, 9, 300
        )
        done, skipped, *_ = execute(resumed, store, progress=False)
        assert skipped == len(kept) and done + skipped == 100
        assert sorted(r.run_index for r in store.records()) == list(range(100))


def test_bad_store_files_give_clear_errors(tmp_path):
    junk = tmp_path / "junk.db"
    junk.write_text("this is not a database" * 100)
    with pytest.raises(StoreError, match="junk.db: not a neuroyard store"):
        ResultStore(junk)
    other = tmp_path / "other.db"
    sqlite3.connect(other).execute("CREATE TABLE t (x)").connection.commit()
    with pytest.raises(StoreError, match="not a neuroyard store"):
        ResultStore(other)
    with pytest.raises(StoreError, match="no such file"):
        ResultStore(tmp_path / "missing.db", write=False)
    with pytest.raises(StoreError, match="is a folder"):
        ResultStore(tmp_path)
    # the failed opens changed nothing
    assert junk.read_text().startswith("this is not a database")


def make_version(path, version):
    """Turn a current store into the layout of schema ``version`` (1 or 2): version 2 had no
    ``non_finite_fitness`` column and no claims table, version 1 also no ``champion_test`` column."""
    db = sqlite3.connect(path)
    db.execute("ALTER TABLE generations DROP COLUMN non_finite_fitness")
    db.execute("DROP TABLE claims")
    if version == 1:
        db.execute("ALTER TABLE generations DROP COLUMN champion_test")
    db.execute("UPDATE meta SET value=? WHERE key='schema_version'", (str(version),))
    db.commit()
    db.close()


@pytest.mark.parametrize("version", [1, 2])
def test_an_older_store_is_read_and_upgraded_by_the_first_write(tmp_path, version):
    path = tmp_path / f"v{version}.db"
    with ResultStore(path) as store:
        execute(plan(runs=2), store, progress=False)
        before = [r.to_dict() for r in store.records()]
    make_version(path, version)
    with ResultStore(path, write=False) as store:
        old = [r.to_dict() for r in store.records()]
    assert store.version == version
    # the missing columns read as their defaults; everything else reads back unchanged
    missing = {"non_finite_fitness": 0, **({"champion_test": {}} if version == 1 else {})}
    assert old == [{**r, "log": [{**g, **missing} for g in r["log"]]} for r in before]
    with ResultStore(path) as store:
        assert execute(plan(runs=3), store, progress=False)[:2] == (1, 2)
        assert store.version == SCHEMA_VERSION
        after = [r.to_dict() for r in store.records()]
    assert after[:2] == old  # the upgrade kept the old runs as they were
    assert len(after) == 3 and len(after[2]["log"]) == after[2]["generations"]
    stored = sqlite3.connect(path).execute("SELECT value FROM meta").fetchone()[0]
    assert stored == str(SCHEMA_VERSION)


def test_a_failed_upgrade_leaves_the_older_store_as_it_was(tmp_path, monkeypatch):
    path = tmp_path / "v1.db"
    with ResultStore(path) as store:
        execute(plan(runs=1), store, progress=False)
    make_version(path, 1)
    with ResultStore(path) as store:
        record = next(store.records())
        # the log write fails after the upgrade statements ran in the same transaction
        record.log[0].stats = {"x": object()}
        with pytest.raises(TypeError):
            store.save("another-key", 1, record)
        assert store.version == 1
    with ResultStore(path) as store:
        assert store.version == 1 and len(list(store.records())) == 1
    columns = [c[1] for c in sqlite3.connect(path).execute("PRAGMA table_info(generations)")]
    assert "champion_test" not in columns and "non_finite_fitness" not in columns


def test_claims_are_exclusive_expire_and_die_with_their_owner(tmp_path, monkeypatch):
    from neuroyard.records import store as store_module

    with ResultStore(tmp_path / "c.db") as store:
        keys = ["k1", "k2", "k3"]
        here = store_module.owner_id()
        assert store.claim(keys, "elsewhere:1:a", 2) == ["k1", "k2"]
        # a live claim of another coordinator is respected
        assert store.claim(keys, here, 3) == ["k3"]
        assert store.claim(keys, here, 3) == []  # nothing is claimed twice
        assert store.claimed_elsewhere(keys, here) == 2
        # silent for longer than the expiry: the claims are void and may be taken over
        later = time.time() + store_module.CLAIM_EXPIRY + 1
        monkeypatch.setattr(store_module.time, "time", lambda: later)
        assert store.claimed_elsewhere(keys, here) == 0
        assert store.claim(keys, here, 3) == keys
    with ResultStore(tmp_path / "d.db") as store:
        # a claim of a process of this machine that no longer exists is void at once
        dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                              capture_output=True, text=True).stdout.strip()  # fmt: skip
        host = store_module.owner_id().split(":")[0]
        assert store.claim(["k1"], f"{host}:{dead}:x", 1) == ["k1"]
        assert store.claim(["k1"], "me", 1) == ["k1"]


def test_a_run_stored_by_two_coordinators_is_kept_once(tmp_path):
    with ResultStore(tmp_path / "twice.db") as store:
        execute(plan(runs=1), store, progress=False)
        (record,) = list(store.records())
        (key,) = store.finished_keys()
        assert store.save(key, 1, record) is False
        assert store.db.execute("SELECT count(*) FROM runs").fetchone() == (1,)
        assert store.db.execute("SELECT count(*) FROM generations").fetchone() == (len(record.log),)


def _open_when_told(path: str, go, results) -> None:
    go.wait()
    try:
        with ResultStore(path) as store:
            results.put(store.version)
    except StoreError as exc:
        results.put(str(exc))


def test_processes_creating_one_new_store_at_once_all_open_it(tmp_path):
    """Two coordinators started together on a new store: each opens it, none fails on the
    other's half-made schema (once seen as 'not a neuroyard store (UNIQUE constraint ...)')."""
    context = multiprocessing.get_context("fork")
    for attempt in range(10):
        path = str(tmp_path / f"new{attempt}.db")
        go, results = context.Event(), context.Queue()
        procs = [context.Process(target=_open_when_told, args=(path, go, results))
                 for _ in range(4)]  # fmt: skip
        for p in procs:
            p.start()
        go.set()
        for p in procs:
            p.join(60)
        assert [results.get(timeout=5) for _ in procs] == [SCHEMA_VERSION] * 4
