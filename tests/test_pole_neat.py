"""The reference NEAT solves the single pole with velocities (a fast end-to-end check).

Issue 4 acceptance: 3 of 3 short runs. The full 20-run study is in
tests/slow/test_study_pole.py; there NEAT needed 435 evaluations on average.
"""

from __future__ import annotations

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import plan_run
from neuroyard.execution.runner import run_one

SHORT_BUDGET = 10_000  # evaluations per run


def test_neat_solves_single_pole_with_velocities_in_three_short_runs() -> None:
    for run in range(3):
        record = run_one(plan_run(EvolverSpec("neat", {}), "pole1-markov-v1", run, 7, SHORT_BUDGET))
        assert record.solved, (run, record.status, record.failure, record.best_fitness)
        assert record.success_details["balanced_steps"] == 100_000
        assert record.task_settings["substeps"] == 2  # the settings are recorded
        # each generation logs how its champion did in the success test
        assert all("balanced_steps" in g.champion_test for g in record.log)
        assert record.log[-1].champion_test == record.success_details
