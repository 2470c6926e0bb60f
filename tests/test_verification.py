"""Every solved claim is re-verified by the coordinator before it is stored, and
``neuroyard verify`` re-checks the solved runs of a store.

Cheating evolvers (tests/cheating_evolvers.py) forge their run's record or the task's
success test from inside the run; a forging executor stands for a worker process that
lies. Each forged claim must be stored as failed with the reason, and honest records must
come out unchanged.

Outside references: XOR's truth table, which a network whose output ignores its inputs
cannot compute, and the threshold-unit XOR network of two hidden units (OR and AND) with
six connections (reference/SOURCES.md: minsky1969); Python's own sqlite3 and json, to
forge a stored record as someone holding the file could.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
from dataclasses import replace
from pathlib import Path

import pytest

import neuroyard
from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import campaign as campaign_module
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.executors import make_executor
from neuroyard.execution.runner import run_one
from neuroyard.execution.verification import CLAIM_FAILED, NOT_CHECKED, verified
from neuroyard.records.runs import MACHINE_FIELDS, RunRecord
from neuroyard.records.store import ResultStore

HERE = Path(__file__).parent
RESULTS = HERE.parent / "results"
BUDGET, RUNS, SEED = 40, 2, 3
HONEST_SIZE = (2, 6)  # hidden nodes and connections of cheating_evolvers.xor_network


@pytest.fixture(autouse=True)
def _importable(monkeypatch):
    monkeypatch.syspath_prepend(str(HERE))


def plan(evolver: str, runs: int = RUNS) -> CampaignPlan:
    spec = EvolverSpec(evolver if ":" in evolver else f"cheating_evolvers:{evolver}", {})
    return CampaignPlan([spec], [TaskChoice("xor-v2")], runs, SEED, BUDGET)


def campaign(store: Path, evolver: str, executor) -> list[RunRecord]:
    """The records a campaign of ``evolver`` stored, and checks that what the coordinator
    handed to ``on_record`` is what it stored."""
    handed: list[RunRecord] = []
    with ResultStore(store) as opened:
        execute(plan(evolver), opened, executor, progress=False, on_record=handed.append)
        stored = list(opened.records())
    by_index = sorted(handed, key=lambda r: r.run_index)
    assert [content(r) for r in by_index] == [content(r) for r in stored]
    return stored


def content(record: RunRecord) -> dict:
    return {k: v for k, v in record.to_dict().items() if k not in MACHINE_FIELDS}


# --- cheats from inside the run (the evolver shares the runner's process) --------------


@pytest.mark.parametrize(
    ("cheat", "reason"),
    [
        # a constant output cannot give XOR's truth table (reference/SOURCES.md: minsky1969)
        ("ClaimsSolved", "the stored best network does not pass the success test of xor-v2"),
        ("PassesEveryTest", "the stored best network does not pass the success test of xor-v2"),
        (
            "ShrinksItsSolution",
            "the record gives the stored best network 0 hidden nodes and 1 enabled "
            "connections; it has 2 and 6",
        ),
    ],
)
def test_a_forged_claim_is_stored_as_failed(cheat, reason, tmp_path):
    records = campaign(tmp_path / "runs.db", cheat, make_executor("in-process"))
    assert len(records) == RUNS
    for record in records:
        assert record.status == "failed", record.failure
        assert record.failure.startswith(f"{CLAIM_FAILED}: {reason}"), record.failure
    # and the store holds no claim that does not hold
    assert neuroyard.verify(tmp_path / "runs.db").solved == 0


def test_a_claim_the_runner_was_fooled_into_names_the_test_outcome(tmp_path):
    (record, _) = campaign(tmp_path / "runs.db", "PassesEveryTest", make_executor("in-process"))
    # the runner recorded it solved in its second generation (the first tell() patched)
    assert record.generations == 2 and record.evaluations == 8
    assert "(fitness " in record.failure  # the re-run evaluation is named


@pytest.mark.parametrize("cheat", ["ClaimsSolved", "PassesEveryTest", "ShrinksItsSolution"])
def test_in_worker_processes_no_false_claim_is_stored(cheat, tmp_path):
    # Under the pool the evolver runs apart from the run's record and task (or, without
    # isolation, beside them): either its cheat finds nothing to forge and the run ends as
    # it honestly would, or the forged claim is failed by the coordinator.
    records = campaign(tmp_path / "runs.db", cheat, make_executor("pool", 1))
    honest = "solved" if cheat == "ShrinksItsSolution" else "unsolved"
    for record in records:
        caught = record.status == "failed" and record.failure.startswith(CLAIM_FAILED)
        assert record.status == honest or caught, (record.status, record.failure)
        if record.status == "solved":
            assert (record.hidden_nodes, record.connections) == HONEST_SIZE
    assert neuroyard.verify(tmp_path / "runs.db").holds


# --- a lying worker: the record is forged after the run, before the coordinator -------


class ForgingExecutor:
    """An executor whose runs come back forged by ``forge`` (a worker that lies)."""

    def __init__(self, inner, forge) -> None:
        self.inner, self.forge = inner, forge

    @property
    def capacity(self) -> int:
        return self.inner.capacity

    def submit(self, spec) -> None:
        self.inner.submit(spec)

    def collect(self, timeout: float):
        done = self.inner.collect(timeout)
        for item in done:
            self.forge(item.record)
        return done

    def close(self) -> None:
        self.inner.close()


def _set(**values):
    def forge(record: RunRecord) -> None:
        for name, value in values.items():
            setattr(record, name, value)

    return forge


def _weights(value: float):
    def forge(record: RunRecord) -> None:
        for connection in record.best_network["connections"]:
            connection["weight"] = value

    return forge


def _dangling(record: RunRecord) -> None:
    record.best_network["connections"].append({"source": 0, "target": 99, "weight": 1.0})


def _other_seed(record: RunRecord) -> None:
    record.task_seed += 1


FORGERIES = {
    # XOR needs the hidden units' weights (reference/SOURCES.md: minsky1969)
    "weights zeroed": (
        _weights(0.0),
        "the stored best network does not pass the success test of xor-v2 (fitness ",
    ),
    "a dangling connection": (
        _dangling,
        "the stored best network: connection 6 (0 -> 99): target node 99 does not exist",
    ),
    "no network": (_set(best_network=None), "the record holds no best network"),
    "other settings": (
        _set(task_settings={"recurrent_steps": 1}),
        "the record does not belong to run ",
    ),
    "another task seed": (_other_seed, "its task seed "),
    "a smaller size": (
        _set(hidden_nodes=0),
        "the record gives the stored best network 0 hidden nodes and 6 enabled connections",
    ),
}


@pytest.mark.parametrize("forgery", FORGERIES)
def test_a_record_forged_by_its_worker_is_stored_as_failed(forgery, tmp_path):
    forge, reason = FORGERIES[forgery]
    executor = ForgingExecutor(make_executor("in-process"), forge)
    records = campaign(tmp_path / "runs.db", "SolvesAtOnce", executor)
    for record in records:
        assert record.status == "failed"
        assert record.failure.startswith(f"{CLAIM_FAILED}: {reason}"), record.failure


def test_a_status_forged_by_its_worker_is_stored_as_failed(tmp_path):
    executor = ForgingExecutor(make_executor("in-process"), _set(status="solved"))
    for record in campaign(tmp_path / "runs.db", "Constant", executor):
        assert record.status == "failed"
        assert "does not pass the success test of xor-v2" in record.failure


# --- honest records -----------------------------------------------------------------------


def test_an_honest_record_is_unchanged_and_an_unsolved_one_untouched():
    solved_spec, unsolved_spec = (plan(e, runs=1).expand()[0] for e in ("SolvesAtOnce", "Constant"))
    solved = run_one(solved_spec)
    assert solved.status == "solved"
    assert (solved.hidden_nodes, solved.connections) == HONEST_SIZE
    again = verified(solved, solved_spec.key)
    assert again.to_dict() == solved.to_dict()
    unsolved = run_one(unsolved_spec)
    assert unsolved.status == "unsolved"
    assert verified(unsolved, unsolved_spec.key) is unsolved
    # a solved record handed in under another run's key does not belong there
    assert verified(solved, unsolved_spec.key).status == "failed"


def test_verification_changes_no_honest_record(tmp_path, monkeypatch):
    """NEAT on XOR, 4 runs on 2 workers: the same records (machine fields aside) as the
    same campaign whose coordinator stores what the workers send unchecked."""
    neat = CampaignPlan([EvolverSpec("neat", {})], [TaskChoice("xor-v2")], 4, SEED, 20_000)

    def stored(path: Path) -> list[dict]:
        with ResultStore(path) as store:
            execute(neat, store, make_executor("pool", 2), progress=False)
            return [content(r) for r in store.records()]

    checked = stored(tmp_path / "checked.db")
    monkeypatch.setattr(campaign_module, "verified", lambda record, key: record)
    unchecked = stored(tmp_path / "unchecked.db")
    assert sum(r["status"] == "solved" for r in checked) >= 3
    assert checked == unchecked


# --- neuroyard verify -------------------------------------------------------------------


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def run_cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture(scope="module")
def solved_store(tmp_path_factory) -> Path:
    """A store of three honest runs that solve XOR at once."""
    path = tmp_path_factory.mktemp("verify") / "runs.db"
    with pytest.MonkeyPatch.context() as mp:
        mp.syspath_prepend(str(HERE))
        campaign_plan = plan("SolvesAtOnce", runs=3)
        with ResultStore(path) as store:
            execute(campaign_plan, store, make_executor("in-process"), progress=False)
    return path


def test_verify_passes_an_honest_store_and_leaves_it_as_it_was(solved_store, capsys):
    before = _digest(solved_store)
    code, out, err = run_cli(capsys, "verify", "--store", str(solved_store))
    assert (code, err) == (0, "")
    assert out.splitlines() == [f"3 of 3 solved run(s) in {solved_store} hold on re-verification"]
    assert _digest(solved_store) == before


def test_verify_names_a_run_forged_in_the_store(solved_store, capsys, tmp_path):
    forged = tmp_path / "forged.db"
    shutil.copy(solved_store, forged)
    with sqlite3.connect(forged) as db:  # as someone holding the file could
        run_key, text = db.execute(
            "SELECT run_key, record FROM runs WHERE run_index = 1"
        ).fetchone()
        doc = json.loads(text)
        for connection in doc["best_network"]["connections"]:
            connection["weight"] = 0.0
        db.execute("UPDATE runs SET record = ? WHERE run_key = ?", (json.dumps(doc), run_key))
    db.close()
    code, out, _ = run_cli(capsys, "verify", "--store", str(forged))
    assert code == 1
    (line, summary) = out.splitlines()
    assert line.startswith(f"{run_key}: cheating_evolvers:SolvesAtOnce on xor-v2, run 1: ")
    assert f"{CLAIM_FAILED}: the stored best network does not pass the success test" in line
    assert summary == f"2 of 3 solved run(s) in {forged} hold on re-verification"
    result = neuroyard.verify(forged)
    assert not result.holds and [u.run_index for u in result.unverified] == [1]


def test_verify_of_a_missing_store_is_one_line_and_exit_2(capsys, tmp_path):
    code, out, err = run_cli(capsys, "verify", "--store", str(tmp_path / "none.db"))
    assert (code, out) == (2, "")
    assert err.splitlines() == [
        f"neuroyard: error: results store {tmp_path / 'none.db'}: no such file"
    ]


@pytest.mark.parametrize(
    ("store", "solved"),
    [("neat_xor/xor.db", 100), ("pole/spv.sqlite", 20)],  # schema 5, and 2 read as it is
)
def test_the_committed_studies_solved_claims_hold(store, solved, capsys):
    path = RESULTS / store
    code, out, _ = run_cli(capsys, "verify", "--store", str(path))
    assert code == 0, out
    assert out.splitlines() == [
        f"{solved} of {solved} solved run(s) in {path} hold on re-verification"
    ]


def test_a_retired_task_cannot_be_re_verified_and_says_so(capsys):
    path = RESULTS / "maze" / "family_v2.sqlite"  # maze-gen-v2, retired for maze-gen-v3
    code, out, _ = run_cli(capsys, "verify", "--store", str(path))
    assert code == 1
    *lines, summary = out.splitlines()
    assert len(lines) == 88 and summary.startswith("0 of 88 solved run(s)")
    assert all(
        f"{NOT_CHECKED}: task 'maze-gen-v2' is retired, use 'maze-gen-v3'" in x for x in lines
    )


def test_the_failed_record_keeps_everything_but_status_and_reason():
    spec = plan("SolvesAtOnce", runs=1).expand()[0]
    honest = run_one(spec)
    forged = replace(honest, hidden_nodes=0)
    failed = verified(forged, spec.key)
    assert failed.status == "failed"
    changed = {k for k, v in failed.to_dict().items() if forged.to_dict()[k] != v}
    assert changed == {"status", "failure", "solved"}
