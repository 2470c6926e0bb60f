"""The behaviour sample a run record keeps (RunRecord.behaviours) and the task facts."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import plan_run
from neuroyard.execution.runner import run_one
from neuroyard.records.runs import BehaviourSample


@given(st.integers(1, 64), st.integers(0, 3000))
def test_sample_is_every_stride_th_evaluation_and_within_the_cap(cap: int, n: int) -> None:
    sample = BehaviourSample(cap)
    for i in range(n):
        sample.add((float(i), -float(i)))
    assert len(sample.points) <= cap
    kept = [int(x) for x, _ in sample.points]
    assert kept == list(range(0, n, sample.stride))  # evenly spread over the whole run
    if n > cap:
        assert len(sample.points) > cap // 2  # thinned no further than needed


def test_evaluations_without_behaviour_keep_nothing_but_count() -> None:
    sample = BehaviourSample(8)
    for i in range(10):
        sample.add(None if i % 2 else (float(i),))
    assert sample.points == [[0.0], [2.0], [4.0], [6.0], [8.0]]


def test_a_maze_run_records_its_final_positions() -> None:
    spec = plan_run(EvolverSpec("rwg", {}), "maze-open-v1", 0, 3, budget=300)
    record = run_one(spec)
    assert len(record.behaviours) == record.evaluations  # under the cap: every one kept
    for x, y in record.behaviours:
        assert 0.0 <= x <= 200.0 and 0.0 <= y <= 200.0  # inside the open arena's bounds


def test_a_task_without_behaviour_records_none() -> None:
    record = run_one(plan_run(EvolverSpec("rwg", {}), "xor-v2", 0, 3, budget=200))
    assert record.behaviours == []
