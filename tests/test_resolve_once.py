"""Each task choice is resolved once: a campaign plan builds each of its tasks once however
often it is described, hashed and expanded, and reading the metrics of many stored runs
(reports, exports) builds each task once per process and settings, not once per record.

Outside reference: the count of task constructions, taken by wrapping the base class's
constructor (every task calls it once when built)."""

from __future__ import annotations

import pytest

import neuroyard
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice
from neuroyard.reports import tables
from neuroyard.tasks import registry
from neuroyard.tasks.base import Task


@pytest.fixture
def builds(monkeypatch) -> list[str]:
    """The id of every task built while the test runs, in order."""
    built: list[str] = []
    original = Task.__init__

    def counted(self, seed=0, /, **settings):
        built.append(self.id)
        original(self, seed, **settings)

    monkeypatch.setattr(Task, "__init__", counted)
    monkeypatch.setattr(registry, "_SPECS", {})  # no spec kept from other tests
    return built


def test_a_plan_builds_each_task_once(builds) -> None:
    plan = CampaignPlan(
        [EvolverSpec("rwg", {}), EvolverSpec("hill-climber", {})],
        [TaskChoice("xor-v2"), TaskChoice("parity-v2", {"bits": 4}), TaskChoice("maze-open-v1")],
        runs=5,
        seed=1,
    )
    plan.check()
    plan.describe()
    assert plan.plan_hash == plan.plan_hash
    specs = plan.expand()
    assert len(specs) == 2 * 3 * 5
    assert sorted(builds) == ["maze-open-v1", "parity-v2", "xor-v2"]


def test_reading_the_metrics_of_many_runs_builds_each_task_once(tmp_path, builds) -> None:
    store = tmp_path / "runs.db"
    neuroyard.run(
        "rwg", ["xor-v2", "maze-open-v1"], runs=4, budget=60, store=store,
        executor="in-process", progress=False,
    )  # fmt: skip
    registry._SPECS.clear()  # as a new process that reads the store (neuroyard export)
    builds.clear()
    records = neuroyard.open_store(store).records()
    rows = tables.runs_rows(records)
    neuroyard.open_store(store).summary()
    assert len(rows) == 8
    assert sorted(builds) == ["maze-open-v1", "xor-v2"]


def test_a_campaign_and_its_report_build_each_task_once_in_the_coordinator(
    tmp_path, builds
) -> None:
    # the runs build their own task in the (forked) workers; this process only plans,
    # stores and reports
    results = neuroyard.run(
        "rwg", ["xor-v2", "parity-v2"], runs=3, budget=60, store=tmp_path / "runs.db",
        progress=False,
    )  # fmt: skip
    results.report("text")
    results.runs_table()
    assert sorted(builds) == ["parity-v2", "xor-v2"]
