"""Novelty search on a maze through the whole harness: the task's behaviour (the robot's
final position) reaches the evolver, and the open arena is solved in 3 of 3 short runs
(issue 17's default check; the arena is the sanity maze, so this proves the plumbing, not
the method's strength: the deceptive mazes are the slow studies' job)."""

from __future__ import annotations

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import plan_run
from neuroyard.execution.runner import run_one


def test_novelty_search_solves_the_open_arena_in_three_short_runs() -> None:
    for run in range(3):
        spec = plan_run(EvolverSpec("neat-novelty", {}), "maze-open-v1", run, 1, 5_000)
        record = run_one(spec)
        assert record.solved, (run, record.status, record.failure)
        assert record.success_details["final_distance"] <= 5.0  # the published success radius
        # the archive and threshold are logged: the evolver scored by behaviour
        assert {"novelty_archive", "novelty_threshold"} <= set(record.log[-1].stats)
