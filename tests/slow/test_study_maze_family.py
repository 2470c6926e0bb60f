"""Success against deception on the generated maze family (issue 17).

Ten mazes of ``maze-gen-v3`` (size 200, seeds 0-9, the deception score asked for rising from
0 to 0.27 in steps of 0.03, which spans the family's scores), ten runs of objective NEAT
and ten of novelty search on each, 100,000 evaluations per run (two fifths of the paper's
budget, ours: the family is a yardstick of deception, not a reproduction). Both sides are the NEAT of the maze study
(``tests/slow/maze_study.py``: ``neat-novelty`` with its free parameter). The runs go
to ``results/maze/family.sqlite`` (resumable); ``results/maze/family.json`` holds the
success rate of each side on each maze beside the maze's recorded deception score, the
Spearman correlation of success rate with the score (scipy.stats.spearmanr) and the
least-squares slope of each side (scipy.stats.linregress); ``results/maze/family.png``
plots both sides' success rates against the score. Run with::

    pytest -m slow tests/slow/test_study_maze_family.py -s

Acceptance (issue 17): objective NEAT's success rate falls as the deception score rises
(Spearman correlation negative, p < 0.05) and novelty search's falls less (a slope less
steep than objective NEAT's).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from maze_study import side
from scipy import stats

from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore

pytestmark = pytest.mark.slow

RESULTS = Path(__file__).resolve().parents[2] / "results" / "maze"
SEED = 1
WORKERS = 2
RUNS = 10
BUDGET = 100_000
MAZES = [{"size": 200.0, "seed": n, "deception": round(0.03 * n, 3)} for n in range(10)]
TASK = "maze-gen-v3"
SIDES = ("fitness", "novelty")


def run_family() -> dict[str, Any]:
    """Run (or resume) the family's campaign; the per-maze figures of both sides."""
    RESULTS.mkdir(parents=True, exist_ok=True)
    evolvers = [side(s) for s in SIDES]
    plan = CampaignPlan(evolvers, [TaskChoice(TASK, m) for m in MAZES], RUNS, SEED, BUDGET)
    with ResultStore(RESULTS / "family.sqlite") as store:

        def write_summary(_: RunRecord | None = None) -> None:
            doc = summary_document(list(store.records(with_log=False)))
            (RESULTS / "family.json").write_text(json.dumps(doc, indent=1) + "\n")

        execute(plan, store, Supervisor(WORKERS), progress=False, on_record=write_summary)
        write_summary()
        doc = summary_document(list(store.records(with_log=False)))
        plot_success(doc, RESULTS / "family.png")
        return doc


def plot_success(doc: dict[str, Any], out: Path) -> None:
    """Each side's success rate on each maze against the maze's deception score."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.4, 4.0), dpi=100)
    for s, label, marker in (
        ("fitness", "objective NEAT", "o"),
        ("novelty", "novelty search", "s"),
    ):
        done = [m for m in doc["mazes"] if m[s]["runs"]]
        score = [m["deception"] for m in done]
        rate = [m[s]["solved"] / m[s]["runs"] for m in done]
        ax.plot(score, rate, marker=marker, linestyle="none", label=label)
    ax.set_xlabel("deception score of the maze")
    ax.set_ylabel(f"share solved ({RUNS} runs of {BUDGET:,} evaluations)")
    ax.set_ylim(-0.05, 1.05)
    ax.set_title(f"{TASK}: success against deception (campaign seed {SEED})")
    ax.legend(loc="lower left")
    fig.tight_layout()
    fig.savefig(out)
    plt.close(fig)


def summary_document(records: list[RunRecord]) -> dict[str, Any]:
    hashes = {side(s).config_hash: s for s in SIDES}
    mazes = []
    for maze in MAZES:
        runs = [
            r
            for r in records
            if r.task == TASK
            and r.budget == BUDGET
            and r.config_hash in hashes
            and all(r.task_settings.get(k) == v for k, v in maze.items())
        ]
        if not runs:
            continue
        row: dict[str, Any] = {"settings": maze, **runs[0].task_facts}
        for s in SIDES:
            mine = [r for r in runs if hashes[r.config_hash] == s]
            row[s] = {
                "runs": len(mine),
                "solved": sum(r.solved for r in mine),
                "mean_evaluations_solved": (
                    sum(r.evaluations for r in mine if r.solved)
                    / max(1, sum(r.solved for r in mine))
                ),
            }
        mazes.append(row)
    doc: dict[str, Any] = {
        "budget": BUDGET,
        "runs_per_maze": RUNS,
        "campaign_seed": SEED,
        "mazes": mazes,
    }
    complete = [m for m in mazes if all(m[s]["runs"] == RUNS for s in SIDES)]
    if len(complete) >= 3:
        score = [m["deception"] for m in complete]
        for s in SIDES:
            rate = [m[s]["solved"] / RUNS for m in complete]
            fit = stats.linregress(score, rate)
            doc[s] = {"slope": float(fit.slope), "spearman_rho": None, "spearman_p": None}
            if len(set(rate)) > 1:  # a correlation needs rates that differ
                rho, p = stats.spearmanr(score, rate)
                doc[s].update(spearman_rho=float(rho), spearman_p=float(p))
    return doc


def test_study_maze_family() -> None:
    doc = run_family()
    assert len(doc["mazes"]) == len(MAZES)
    assert all(m[s]["runs"] == RUNS for m in doc["mazes"] for s in SIDES)
    objective, novelty = doc["fitness"], doc["novelty"]
    assert objective["spearman_rho"] < 0 and objective["spearman_p"] < 0.05, objective
    assert novelty["slope"] > objective["slope"], (novelty, objective)
