"""A campaign split over batch jobs (``run --share K/N``) and ``neuroyard merge``.

The reference for a merge is the same campaign run whole into one store: the merged store
must give the same report and the same records (but for timing, host and versions, the
fields a machine decides). The soundness of a merged file is SQLite's own
``PRAGMA integrity_check`` (https://sqlite.org/pragma.html#pragma_integrity_check).
"""

from __future__ import annotations

import hashlib
import shutil
import sqlite3

import pytest

from neuroyard.cli.main import main
from neuroyard.core import jsonsafe
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice
from neuroyard.records import store as store_module
from neuroyard.records.runs import MACHINE_FIELDS, content_digest
from neuroyard.records.shares import WHOLE, Share
from neuroyard.records.store import ResultStore

# 2 evolvers x 2 tasks x 3 runs, small budgets, in this process: a second or two in all
CAMPAIGN = [
    "run",
    "--evolver",
    "rwg",
    "--evolver",
    "hill-climber",
    "--param",
    "rwg:batch_size=50",
    "--task",
    "xor-v2",
    "--task",
    "parity-v2",
    "--runs",
    "3",
    "--budget",
    "2000",
    "--seed",
    "5",
    "--in-process",
    "--quiet",
]
RUNS = 2 * 2 * 3


def run_cli(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def refused(capsys, *argv) -> str:
    """The one error line of a command that must fail with exit status 2."""
    code, out, err = run_cli(capsys, *argv)
    assert code == 2, (out, err)
    assert err.count("\n") == 1 and err.startswith("neuroyard: error: "), err
    return err


def report_text(capsys, path) -> str:
    code, out, err = run_cli(capsys, "report", "--store", path)
    assert code == 0, err
    return out


def digest_of_file(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def contents(path) -> dict[str, str]:
    """Every run of a store by key: the digest of its record, log included."""
    with ResultStore(path, write=False) as store:
        return {run.key: content_digest(run.record) for run in store.stored_runs()}


@pytest.fixture(scope="module")
def campaign(tmp_path_factory):
    """The campaign whole in one store and in three shares in three stores."""
    folder = tmp_path_factory.mktemp("campaign")
    whole = folder / "whole.sqlite"
    assert main([*CAMPAIGN, "--store", str(whole)]) == 0
    jobs = []
    for k in (1, 2, 3):
        jobs.append(folder / f"job-{k}.sqlite")
        assert main([*CAMPAIGN, "--share", f"{k}/3", "--store", str(jobs[-1])]) == 0
    return whole, jobs


@pytest.fixture
def stores(campaign, tmp_path):
    """Copies of the campaign's stores that a test may change."""
    whole, jobs = campaign
    copies = [tmp_path / p.name for p in (whole, *jobs)]
    for source, copy in zip((whole, *jobs), copies, strict=True):
        shutil.copyfile(source, copy)
    return copies[0], copies[1:]


def test_shares_split_the_plan_evenly_and_completely():
    plan = CampaignPlan(
        [EvolverSpec("rwg"), EvolverSpec("hill-climber")],
        [TaskChoice("xor-v2"), TaskChoice("parity-v2")],
        3,
        5,
        2000,
    )
    specs = plan.expand()
    shares = [Share(k, 3).select(specs) for k in (1, 2, 3)]
    keys = [spec.key for share in shares for spec in share]
    assert sorted(keys) == sorted(spec.key for spec in specs)  # every run once
    for share in shares:  # each share has every evolver on every task once
        assert sorted((s.evolver.name, s.task) for s in share) == sorted(
            (e, t) for e in ("rwg", "hill-climber") for t in ("xor-v2", "parity-v2")
        )
    assert WHOLE.select(specs) == specs


@pytest.mark.parametrize("text", ["0/3", "4/3", "x", "1/0", "-1/3", "2"])
def test_a_bad_share_is_one_line_naming_the_option(capsys, tmp_path, text):
    err = refused(capsys, "run", "--share", text, "--store", tmp_path / "s.sqlite")
    assert "argument --share:" in err
    assert not (tmp_path / "s.sqlite").exists()


def test_each_store_records_the_whole_plan_and_its_share(campaign):
    whole, jobs = campaign
    with ResultStore(whole, write=False) as store:
        (planned,) = store.campaigns()
        assert store.integrity() == "ok"
    assert planned.shares == {WHOLE}
    held = set()
    for k, path in enumerate(jobs, 1):
        with ResultStore(path, write=False) as store:
            (campaign_entry,) = store.campaigns()
            keys = store.finished_keys()
        assert campaign_entry.plan_hash == planned.plan_hash
        assert campaign_entry.plan == planned.plan
        assert campaign_entry.shares == {Share(k, 3)}
        assert len(keys) == RUNS // 3 and not keys & held
        held |= keys
    assert held == set(contents(whole))


def test_merged_shares_give_the_report_and_records_of_the_whole_campaign(capsys, stores, tmp_path):
    whole, jobs = stores
    out = tmp_path / "merged.sqlite"
    code, printed, err = run_cli(capsys, "merge", out, *jobs)
    assert code == 0, err
    assert f"{RUNS} runs added" in printed and f"{RUNS} of the plan's {RUNS} runs" in printed
    assert report_text(capsys, out) == report_text(capsys, whole)
    with ResultStore(out, write=False) as merged, ResultStore(whole, write=False) as reference:
        assert merged.integrity() == "ok"  # SQLite's PRAGMA integrity_check
        (campaign_entry,) = merged.campaigns()
        assert campaign_entry.plan_hash == reference.campaigns()[0].plan_hash
        assert campaign_entry.shares == {Share(1, 3), Share(2, 3), Share(3, 3)}
        got = {r.key: r.record.to_dict() for r in merged.stored_runs()}
        want = {r.key: r.record.to_dict() for r in reference.stored_runs()}
    assert got.keys() == want.keys() and len(got) == RUNS
    for key, record in got.items():  # generation logs came along with their records
        assert record["log"] and len(record["log"]) == record["generations"]
        same = {k: v for k, v in record.items() if k not in MACHINE_FIELDS}
        assert same == {k: v for k, v in want[key].items() if k not in MACHINE_FIELDS}


def test_merging_again_or_in_steps_is_idempotent(capsys, stores, tmp_path):
    whole, jobs = stores
    out = tmp_path / "merged.sqlite"
    assert run_cli(capsys, "merge", out, jobs[0])[0] == 0
    assert len(contents(out)) == RUNS // 3
    code, printed, _ = run_cli(capsys, "merge", out, jobs[1], jobs[2], jobs[0])
    assert code == 0 and f"{2 * RUNS // 3} runs added, {RUNS // 3} already there" in printed
    once = contents(out)
    code, printed, _ = run_cli(capsys, "merge", out, *jobs, whole)  # the whole store overlaps
    assert code == 0 and f"0 runs added, {RUNS} already there" in printed
    assert contents(out) == once == contents(whole)
    with sqlite3.connect(out) as db:
        assert db.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == RUNS  # none doubled


def test_a_store_of_another_plan_is_refused_and_nothing_is_written(capsys, stores, tmp_path):
    _, jobs = stores
    other = tmp_path / "other.sqlite"
    argv = [a if a != "5" else "6" for a in CAMPAIGN]  # another campaign seed
    assert main([*argv, "--share", "1/3", "--store", str(other)]) == 0
    out = tmp_path / "merged.sqlite"
    err = refused(capsys, "merge", out, jobs[0], other)
    assert f"results store {other}: holds plan" in err
    assert not out.exists()
    assert run_cli(capsys, "merge", out, jobs[0])[0] == 0
    before = digest_of_file(out)
    err = refused(capsys, "merge", out, other)  # nor into an output of another plan
    assert f"results store {out}: holds plan" in err
    assert digest_of_file(out) == before


def _edit(path, sql: str, *params) -> None:
    with sqlite3.connect(path) as db:
        db.execute(sql, params)
    db.close()


def _first_key(path) -> str:
    with sqlite3.connect(path) as db:
        key = db.execute("SELECT run_key FROM runs ORDER BY id LIMIT 1").fetchone()[0]
    db.close()
    return key


def _change_record(path, key: str, **changes) -> None:
    with sqlite3.connect(path) as db:
        text = db.execute("SELECT record FROM runs WHERE run_key=?", (key,)).fetchone()[0]
    db.close()
    doc = {**jsonsafe.loads(text), **changes}
    _edit(path, "UPDATE runs SET record=? WHERE run_key=?", jsonsafe.dumps(doc), key)


def test_a_conflicting_record_is_refused_naming_the_run_and_the_stores(capsys, stores, tmp_path):
    _, jobs = stores
    key = _first_key(jobs[0])
    copy = tmp_path / "copy.sqlite"
    shutil.copyfile(jobs[0], copy)
    with sqlite3.connect(copy) as db:
        evaluations = db.execute("SELECT record FROM runs WHERE run_key=?", (key,)).fetchone()[0]
    db.close()
    _change_record(copy, key, evaluations=jsonsafe.loads(evaluations)["evaluations"] + 1)
    out = tmp_path / "merged.sqlite"
    err = refused(capsys, "merge", out, jobs[0], jobs[1], copy)
    assert f"run {key}: {jobs[0]} and {copy} hold different records" in err
    assert not out.exists()
    # into an output that holds the run: refused inside the transaction, the file unchanged
    assert run_cli(capsys, "merge", out, jobs[0])[0] == 0
    before = digest_of_file(out)
    err = refused(capsys, "merge", out, jobs[1], copy)
    assert f"run {key}: {copy} and {out} hold different records" in err
    assert digest_of_file(out) == before


def test_the_generation_log_counts_but_timing_and_host_do_not(capsys, stores, tmp_path):
    _, jobs = stores
    key = _first_key(jobs[0])
    log_edited, machine_edited = tmp_path / "log.sqlite", tmp_path / "machine.sqlite"
    shutil.copyfile(jobs[0], log_edited)
    shutil.copyfile(jobs[0], machine_edited)
    _edit(
        log_edited,
        "UPDATE generations SET mean_fitness = mean_fitness + 0.5"
        " WHERE run_id = (SELECT id FROM runs WHERE run_key=?) AND generation = 0",
        key,
    )
    err = refused(capsys, "merge", tmp_path / "a.sqlite", jobs[0], log_edited)
    assert f"run {key}:" in err
    _change_record(machine_edited, key, host="elsewhere", timing={"wall": 99.0}, versions={})
    code, printed, err = run_cli(capsys, "merge", tmp_path / "b.sqlite", jobs[0], machine_edited)
    assert code == 0, err
    assert f"{RUNS // 3} runs added, 0 already there" in printed  # taken once, from the first


def test_broken_stores_are_refused_with_one_line(capsys, stores, tmp_path):
    _, jobs = stores
    text_file = tmp_path / "notes.sqlite"
    text_file.write_text("this is not a database\n" * 100)
    foreign = tmp_path / "foreign.sqlite"
    _edit(foreign, "CREATE TABLE t (x)")
    truncated = tmp_path / "truncated.sqlite"
    data = jobs[1].read_bytes()
    truncated.write_bytes(data[: len(data) // 2])
    older = tmp_path / "older.sqlite"
    shutil.copyfile(jobs[1], older)
    _edit(older, "UPDATE meta SET value='5' WHERE key='schema_version'")
    two_plans = tmp_path / "two.sqlite"
    shutil.copyfile(jobs[1], two_plans)
    _edit(two_plans, "INSERT INTO campaigns(plan_hash, seed, plan) VALUES ('x', 1, '{}')")
    rekeyed = tmp_path / "rekeyed.sqlite"
    shutil.copyfile(jobs[1], rekeyed)
    key = _first_key(rekeyed)
    _change_record(rekeyed, key, run_index=7)  # a record under another run's key
    cases = {
        text_file: "not a neuroyard store",
        foreign: "not a neuroyard store",
        truncated: "corrupt",
        older: "schema version 5, older than this neuroyard's 6",
        two_plans: "holds 2 campaigns",
        rekeyed: f"corrupt (the record of run {key} is not the record of that run)",
        tmp_path / "missing.sqlite": "no such file",
    }
    out = tmp_path / "merged.sqlite"
    for path, reason in cases.items():
        before = digest_of_file(path) if path.exists() else None
        err = refused(capsys, "merge", out, jobs[0], path)
        assert f"results store {path}: " in err and reason in err, err
        assert not out.exists()
        assert (digest_of_file(path) if path.exists() else None) == before
    assert run_cli(capsys, "merge", out, jobs[0])[0] == 0
    before = digest_of_file(out)
    for path in (text_file, truncated, older):  # as the output, too: left as it was
        shutil.copyfile(path, tmp_path / "out-copy.sqlite")
        err = refused(capsys, "merge", tmp_path / "out-copy.sqlite", jobs[0])
        assert cases[path] in err
        assert digest_of_file(tmp_path / "out-copy.sqlite") == digest_of_file(path)
    assert digest_of_file(out) == before


def test_a_write_that_fails_midway_leaves_no_half_merged_store(
    capsys, stores, tmp_path, monkeypatch
):
    _, jobs = stores
    out = tmp_path / "merged.sqlite"
    assert run_cli(capsys, "merge", out, jobs[0])[0] == 0
    before = digest_of_file(out)
    insert, calls = store_module._insert_run, []

    def disk_full_at_the_second_run(*args, **kwargs):
        calls.append(1)
        if len(calls) == 2:
            raise sqlite3.OperationalError("database or disk is full")
        return insert(*args, **kwargs)

    monkeypatch.setattr(store_module, "_insert_run", disk_full_at_the_second_run)
    err = refused(capsys, "merge", out, jobs[1], jobs[2])
    assert f"results store {out}: cannot write it: the disk is full" in err
    assert digest_of_file(out) == before
    calls.clear()
    fresh = tmp_path / "fresh.sqlite"
    refused(capsys, "merge", fresh, jobs[1], jobs[2])
    assert not fresh.exists()


def test_the_upgrade_to_version_6_records_each_campaign_as_run_whole(stores):
    whole, _ = stores
    _edit(whole, "DROP TABLE campaign_shares")
    _edit(whole, "UPDATE meta SET value='5' WHERE key='schema_version'")
    with ResultStore(whole) as store:
        assert store.campaigns()[0].shares == {WHOLE}  # read as it is
        store.campaign(0, {"purpose": "trigger the upgrade"}, "upgrade-test")
        assert store.version == 6
        assert [c.shares for c in store.campaigns()] == [{WHOLE}, {WHOLE}]
