"""Load: a campaign of 1,000 short runs through the pool and through a two-worker Dask
LocalCluster. Every record is stored once, the store passes SQLite's own integrity check
(``PRAGMA integrity_check``, sqlite.org/pragma.html), and the coordinator streams records
to the store as they finish: the number of run records alive in the coordinator stays
bounded by the executor's capacity, whatever the campaign's length.
"""

from __future__ import annotations

import gc
import sqlite3

import distributed
import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.dask_executor import DaskExecutor, local_cluster
from neuroyard.execution.executors import make_executor
from neuroyard.execution.supervisor import Limits
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore

RUNS = 1000
PLAN = CampaignPlan([EvolverSpec("rwg", {"batch_size": 10})], [TaskChoice("xor-v2")], RUNS, 2, 10)
SAMPLE_EVERY = 100  # records between counts of the live records (a count walks the heap)


def _live_records() -> int:
    return sum(isinstance(o, RunRecord) for o in gc.get_objects())


@pytest.mark.parametrize("where", ["pool", "dask"])
def test_a_thousand_runs_are_each_stored_once_with_the_coordinator_holding_none(tmp_path, where):
    cluster = local_cluster(2) if where == "dask" else None
    executor = (
        DaskExecutor(distributed.Client(cluster), Limits(), cluster)
        if cluster is not None
        else make_executor("pool", 2, Limits())
    )
    counts: list[int] = []
    seen = 0

    def count(_record: RunRecord) -> None:
        nonlocal seen
        seen += 1
        if seen % SAMPLE_EVERY == 0:
            counts.append(_live_records())

    path = tmp_path / "load.sqlite"
    before = _live_records()  # records other tests keep alive
    with ResultStore(path) as store:
        outcome = execute(PLAN, store, executor, progress=False, on_record=count)
        assert store.integrity() == "ok"
    assert outcome.done == RUNS and outcome.internal_errors == 0
    with sqlite3.connect(path) as db:
        rows, keys, indices = db.execute(
            "SELECT COUNT(*), COUNT(DISTINCT run_key), COUNT(DISTINCT run_index) FROM runs"
        ).fetchone()
    assert rows == keys == indices == RUNS
    assert {spec.key for spec in PLAN.expand()} == {
        key for (key,) in sqlite3.connect(path).execute("SELECT run_key FROM runs")
    }
    assert len(counts) == RUNS // SAMPLE_EVERY
    # records in flight (at most the capacity of 2, or 4 runs handed to the cluster) and
    # the one being handed out, never the hundreds already stored
    assert max(counts) - before <= 5, (before, counts)
