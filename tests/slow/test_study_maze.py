"""The deception study on our mazes (issue 17): novelty search against objective NEAT.

Lehman & Stanley (2011) found that on a deceptive maze NEAT driven by novelty alone solves
far more often than NEAT driven by the distance to the goal, and faster on an easier one
(reference/SOURCES.md: lehman2011; maze results). Their maps exist only as figures, so this
study reproduces the phenomenon on mazes of ours, not their numbers: the published figures
in ``reference/figures/maze.toml`` are shown beside ours and never gate.

Both sides are the same NEAT with the maze experiment's parameters (``neat-novelty``) and
the one free parameter of ``tests/slow/maze_study.py``: novelty search with its defaults, objective NEAT with ``selection = fitness``, and the
random-selection control with ``selection = random``. 20 runs each with a budget of
250,000 evaluations (the paper's budget) into ``results/maze/<maze>.sqlite`` (resumable);
``results/maze/<maze>.json`` holds the summary. Run with::

    pytest -m slow tests/slow/test_study_maze.py -s

Acceptance (issue 17): on the hard maze novelty solves >= 18/20 and objective NEAT <= 8/20;
on the medium maze novelty needs fewer evaluations (Mann-Whitney on the evaluations with
unsolved runs censored at the budget, p < 0.05).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from maze_study import side

from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports.report import summary_of
from neuroyard.reports.significance import (
    censored_evaluations,
    fisher_test,
    mann_whitney,
)

pytestmark = pytest.mark.slow

RESULTS = Path(__file__).resolve().parents[2] / "results" / "maze"
SEED = 1
REPLICATION_SEED = 2  # the hard maze's study again, to see how much of its margin is luck
WORKERS = 2
RUNS = 20
BUDGET = 250_000  # lehman2011, sec. 6 (maze protocol)
SELECTIONS = ("novelty", "fitness", "random")
TASKS = {"medium": "maze-medium-v1", "hard": "maze-hard-v3"}


def run_maze(
    maze: str, selections: tuple[str, ...], seed: int = SEED
) -> dict[str, list[RunRecord]]:
    """Run (or resume) ``selections`` on ``TASKS[maze]`` with campaign seed ``seed``; the
    records of each side. Seed 1 writes ``<maze>.*``, another seed ``<maze>_seed<N>.*``."""
    RESULTS.mkdir(parents=True, exist_ok=True)
    task = TASKS[maze]
    stem = maze if seed == SEED else f"{maze}_seed{seed}"
    evolvers = {s: side(s) for s in selections}
    with ResultStore(RESULTS / f"{stem}.sqlite") as store:

        def records() -> dict[str, list[RunRecord]]:
            found: dict[str, list[RunRecord]] = {s: [] for s in SELECTIONS}
            hashes = {side(s).config_hash: s for s in SELECTIONS}
            for r in store.records(with_log=False):
                if r.task == task and r.budget == BUDGET and r.config_hash in hashes:
                    found[hashes[r.config_hash]].append(r)
            return {s: sorted(rs, key=lambda r: r.run_index) for s, rs in found.items() if rs}

        def write_summary(_: RunRecord | None = None) -> None:
            (RESULTS / f"{stem}.json").write_text(
                json.dumps(summary_document(task, seed, records()), indent=1) + "\n"
            )

        for selection in selections:  # one side after the other: a cut study has whole sides
            plan = CampaignPlan([evolvers[selection]], [TaskChoice(task)], RUNS, seed, BUDGET)
            execute(plan, store, Supervisor(WORKERS), progress=False, on_record=write_summary)
        write_summary()
        return records()


def summary_document(task: str, seed: int, sides: dict[str, list[RunRecord]]) -> dict[str, Any]:
    doc: dict[str, Any] = {"task": task, "budget": BUDGET, "campaign_seed": seed, "sides": {}}
    for selection, done in sides.items():
        doc["sides"][selection] = {
            "evolver": "neat-novelty",
            "selection": selection,
            "config_hash": done[0].config_hash,
            "runs_finished": len(done),
            "summary": summary_of(done).figures(),
            "runs": [
                {
                    "run": r.run_index,
                    "status": r.status,
                    "evaluations": r.evaluations,
                    "generations": r.generations,
                    "final_distance": r.success_details.get("final_distance"),
                    "wall_seconds": round(r.timing.get("wall", 0.0), 2),
                }
                for r in done
            ],
        }
    novelty, objective = sides.get("novelty"), sides.get("fitness")
    if novelty and objective:
        test = mann_whitney(*(censored(rs) for rs in (novelty, objective)))
        n, o = (doc["sides"][name]["summary"] for name in ("novelty", "fitness"))
        rates = fisher_test(n["solved"], n["runs"], o["solved"], o["runs"])
        doc["novelty_vs_objective"] = {"test": test.test, "p": test.p_value, "A12": test.effect}
        doc["success_rates"] = {"test": rates.test, "p": rates.p_value}
    return doc


def censored(records: list[RunRecord]) -> list[float]:
    return censored_evaluations(
        [r.evaluations for r in records], [r.solved for r in records], BUDGET
    )


def test_study_hard_maze() -> None:
    """Hard maze: novelty search >= 18/20 solved, objective NEAT <= 8/20 (issue 17)."""
    sides = run_maze("hard", ("fitness", "novelty"))  # objective first: the uncertain side
    novelty, objective = summary_of(sides["novelty"]), summary_of(sides["fitness"])
    assert novelty.runs == objective.runs == RUNS
    assert novelty.solved >= 18
    assert objective.solved <= 8


def test_study_hard_maze_replication() -> None:
    """The hard maze's study again with campaign seed 2, reported beside the first
    (results/maze/README.md). It checks the phenomenon, not the issue's thresholds:
    novelty search solves more often than objective NEAT (Fisher's exact test, p < 0.05).
    Of the thresholds, this campaign met objective NEAT's (7/20) and missed novelty
    search's (16/20), and the README says so."""
    sides = run_maze("hard", ("fitness", "novelty"), seed=REPLICATION_SEED)
    novelty, objective = summary_of(sides["novelty"]), summary_of(sides["fitness"])
    assert novelty.runs == objective.runs == RUNS
    assert novelty.solved > objective.solved
    rates = fisher_test(novelty.solved, novelty.runs, objective.solved, objective.runs)
    assert rates.p_value is not None and rates.p_value < 0.05, rates


def test_study_medium_maze() -> None:
    """Medium maze: novelty search needs fewer evaluations than objective NEAT
    (Mann-Whitney, unsolved runs censored at the budget, p < 0.05; issue 17)."""
    sides = run_maze("medium", ("novelty", "fitness"))
    novelty, objective = censored(sides["novelty"]), censored(sides["fitness"])
    assert len(novelty) == len(objective) == RUNS
    test = mann_whitney(novelty, objective)
    assert test.p_value is not None and test.p_value < 0.05, test
    assert test.effect < 0.5  # A12 < 0.5: novelty's evaluations tend to be the smaller


def test_study_random_control() -> None:
    """The random-selection control on both mazes (the paper's third method): reported,
    with the one check the paper's phenomenon implies, that it solves the hard maze no
    more often than novelty search."""
    hard = run_maze("hard", ("random",))
    run_maze("medium", ("random",))
    assert summary_of(hard["random"]).solved <= summary_of(hard["novelty"]).solved
