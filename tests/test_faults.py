"""Fault injection: broken evolvers cannot fool the harness or stop the campaign.

Every kind of broken evolver in ``faulty_evolvers.py`` runs beside well-behaved ones, in
one campaign per worker count (1 and 2). For each kind the run ends as the contract says
(failed with its reason, or contained: bounded fitness, non-finite evaluations counted),
the well-behaved runs' records are identical to those of a campaign without the broken
evolvers, the store passes SQLite's integrity check, and the campaign resumes with nothing
left to do. The expected reasons are the harness's documented wording (harness/README.md,
"Broken evolvers").
"""

from __future__ import annotations

import json
import sqlite3
import sys
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.runner import run_one
from neuroyard.execution.supervisor import Limits, Supervisor
from neuroyard.records.store import ResultStore

HERE = Path(__file__).parent
TIME_LIMIT, MEMORY_LIMIT = 1.0, 300
LIMITS = Limits(time_limit=TIME_LIMIT, memory_limit_mb=MEMORY_LIMIT)
BUDGET, RUNS = 200, 2

# kind -> the failure reason of its runs; None: the run is contained and not failed
FAULTS = {
    "RaisesInStart": "start() raised RuntimeError: cannot start",
    "RaisesInAsk": "ask() in generation 2 raised RuntimeError: cannot ask",
    "RaisesInTell": "tell() in generation 2 raised RuntimeError: cannot tell",
    "EmptyBatch": "ask() returned an empty batch in generation 2",
    "NotANetwork": "candidate 1 of generation 2 is a dict, not a Network",
    "InvalidNetwork": "invalid network: candidate 0 of generation 2: connection 3 (0 -> 99): "
    "target node 99 does not exist",
    "NonFiniteWeights": "invalid network: candidate 0 of generation 2: connection 0 (0 -> 3): "
    "weight is nan, must be finite",
    "OverflowingOutputs": None,
    "UnboundedOutputs": None,
    "HangsInAsk": "ask() in generation 2 ran past 1 s (the time limit)",
    "HangsInTell": "tell() in generation 2 ran past 1 s (the time limit)",
    "LazyBatchHangs": "ask() in generation 2 ran past 1 s (the time limit)",
    "ExitsInAsk": "evolver process exited with status 1 during ask() in generation 2",
    "KilledInTell": "evolver process was killed by signal 9 (SIGKILL) during tell() in "
    "generation 2",
    "CrashesInAsk": "evolver process was killed by signal 11 (SIGSEGV) during ask() in "
    "generation 2",
    "MemoryBlowUp": f"ask() in generation 2 ran out of memory (memory limit {MEMORY_LIMIT} MB)",
    "HugeBatch": "ask() returned 100,000 networks in generation 2, more than the batch limit "
    "of 10,000",
    "BadStats": "stats() in generation 1: value 'mood' is 'odd', expected a number",
    "RaisesInStop": "stop() raised RuntimeError: cannot stop after unsolved",
}
HEALTHY = [EvolverSpec("rwg", {"batch_size": 20}), EvolverSpec("hill-climber", {})]


def faulty(kind: str) -> EvolverSpec:
    return EvolverSpec(f"faulty_evolvers:{kind}", {})


def plan(evolvers) -> CampaignPlan:
    return CampaignPlan(evolvers, [TaskChoice("xor-v2")], RUNS, 5, BUDGET)


def strict_json(line: str):
    """json.loads that refuses NaN and Infinity, as a strict parser does."""

    def refuse(token: str):
        raise ValueError(f"not strict JSON: {token}")

    return json.loads(line, parse_constant=refuse)


def comparable(record: dict) -> dict:
    """A record without what may differ between undisturbed runs: timing and host."""
    return {k: v for k, v in record.items() if k not in ("timing", "host")}


@pytest.fixture(scope="module", autouse=True)
def _plugins_importable():
    sys.path.insert(0, str(HERE))  # workers inherit sys.path when they start
    yield
    sys.path.remove(str(HERE))


def export(store: Path, capsys) -> list[dict]:
    capsys.readouterr()
    assert main(["export", "--store", str(store), "--format", "jsonl"]) == 0
    return [strict_json(line) for line in capsys.readouterr().out.splitlines()]


@pytest.fixture(scope="module")
def clean(tmp_path_factory) -> list[dict]:
    """Records of the well-behaved evolvers alone."""
    path = tmp_path_factory.mktemp("clean") / "clean.db"
    with ResultStore(path) as store:
        execute(plan(HEALTHY), store, Supervisor(1, LIMITS), progress=False)
        return [comparable(r.to_dict()) for r in store.records()]


@pytest.fixture(scope="module", params=[1, 2], ids=["workers1", "workers2"])
def campaign(request, tmp_path_factory):
    """(store path, result) of the campaign with every broken evolver and the healthy ones."""
    path = tmp_path_factory.mktemp(f"faults{request.param}") / "faults.db"
    evolvers = [faulty(kind) for kind in FAULTS] + HEALTHY
    with ResultStore(path) as store:
        result = execute(plan(evolvers), store, Supervisor(request.param, LIMITS), progress=False)
    return path, result


@pytest.fixture(scope="module")
def exported(campaign) -> dict[str, list[dict]]:
    """Exported records by evolver name (module scope: read once per campaign)."""
    path, _ = campaign
    with ResultStore(path, write=False) as store:
        lines = [r.to_dict() for r in store.records()]
    by_evolver: dict[str, list[dict]] = {}
    for record in lines:
        by_evolver.setdefault(record["evolver"], []).append(record)
    return by_evolver


def test_every_run_of_the_campaign_finished(campaign):
    _, result = campaign
    assert result.done == RUNS * (len(FAULTS) + len(HEALTHY))
    assert result.internal_errors == 0


@pytest.mark.parametrize("kind", sorted(FAULTS))
def test_each_broken_evolver_fails_its_own_runs_with_its_reason(kind, exported):
    records = exported[f"faulty_evolvers:{kind}"]
    assert len(records) == RUNS
    for record in records:
        if FAULTS[kind] is None:
            assert record["status"] == "unsolved"
            assert record["failure"] is None
        else:
            assert record["status"] == "failed"
            assert record["failure"] == FAULTS[kind]
        # whatever was evaluated before the fault is counted and bounded
        assert record["evaluations"] <= BUDGET
        assert all(0.0 <= g["best_fitness"] <= 16.0 for g in record["log"])


def test_non_finite_outputs_get_the_worst_fitness_and_are_counted(exported):
    (record, _) = exported["faulty_evolvers:OverflowingOutputs"]
    late = [g for g in record["log"] if g["generation"] >= 2]
    assert late and all(g["non_finite_fitness"] == 5 and g["best_fitness"] == 0.0 for g in late)
    assert all(g["non_finite_fitness"] == 0 for g in record["log"] if g["generation"] < 2)


def test_unbounded_outputs_cannot_score_above_the_maximum(exported):
    (record, _) = exported["faulty_evolvers:UnboundedOutputs"]
    # identity output with bias 100: clipped to 1, wrong on the two patterns whose target
    # is 0: fitness (4 - 2)^2 = 4 (version 1 of the task scored 155,236)
    late = [g for g in record["log"] if g["generation"] >= 2]
    assert all(g["best_fitness"] == pytest.approx(4.0) for g in late)


def test_export_names_every_reason_in_strict_json(campaign, capsys):
    path, _ = campaign
    lines = export(path, capsys)
    reasons = {line["evolver"].partition(":")[2]: line["failure"] for line in lines}
    for kind, reason in FAULTS.items():
        assert reasons[kind] == reason


def test_healthy_runs_are_identical_to_a_campaign_without_broken_evolvers(exported, clean):
    healthy = [comparable(r) for e in HEALTHY for r in exported[e.name]]
    assert sorted(healthy, key=json.dumps) == sorted(clean, key=json.dumps)


def test_the_store_is_sound_and_the_campaign_resumes(campaign):
    path, _ = campaign
    assert sqlite3.connect(path).execute("PRAGMA integrity_check").fetchone() == ("ok",)
    evolvers = [faulty(kind) for kind in FAULTS] + HEALTHY
    with ResultStore(path) as store:
        again = execute(plan(evolvers), store, Supervisor(2, LIMITS), progress=False)
        assert (again.done, again.skipped) == (0, RUNS * len(evolvers))
        assert store.db.execute("SELECT count(*) FROM claims").fetchone() == (0,)


def test_the_text_report_lists_failed_runs_apart(campaign, capsys):
    path, _ = campaign
    capsys.readouterr()
    assert main(["report", "--store", str(path)]) == 0
    out = capsys.readouterr().out
    section = out.split("Failed runs")[1].split("Settings the runs")[0]
    for kind, reason in FAULTS.items():
        if reason is None:  # contained, not failed: an unsolved run is not listed
            assert f"faulty_evolvers:{kind} " not in section
        else:
            assert reason in section


def test_a_worker_that_dies_in_harness_code_has_its_run_started_again(tmp_path):
    # the evolver ends its process while the harness evaluates generation 0 (outside any
    # evolver call), on the first attempt only: the run is run again from its spec and its
    # record equals an undisturbed one
    marker = tmp_path / "died-once"
    evolver = EvolverSpec("faulty_evolvers:DiesInHarness", {"marker": str(marker)})
    run = CampaignPlan([evolver], [TaskChoice("pole1-markov-v1")], 1, 3, 1000)
    with ResultStore(tmp_path / "retry.db") as store:
        result = execute(run, store, Supervisor(2, LIMITS), progress=False)
        (record,) = list(store.records())
    assert result.done == 1 and marker.exists()
    assert record.status == "solved"
    (spec,) = run.expand()
    undisturbed = run_one(spec, isolate=True)  # the marker exists now
    assert comparable(record.to_dict()) == comparable(undisturbed.to_dict())


def test_a_run_whose_worker_dies_twice_outside_evolver_calls_is_failed(tmp_path):
    evolver = EvolverSpec("faulty_evolvers:DiesInHarness", {"once": False})
    run = CampaignPlan([evolver], [TaskChoice("pole1-markov-v1")], 1, 3, 1000)
    with ResultStore(tmp_path / "twice.db") as store:
        execute(run, store, Supervisor(1, LIMITS), progress=False)
        (record,) = list(store.records())
    assert record.status == "failed"
    assert record.failure == (
        "worker process was killed by signal 9 (SIGKILL) outside any evolver call in "
        "generation 0, twice"
    )
