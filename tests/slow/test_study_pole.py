"""Reproduction studies of the reference NEAT on the pole balancing family (issue 4).

Each study runs a campaign into a resumable results store under ``results/pole/``
(an interrupted study continues where it stopped) and writes a summary JSON beside it.
Run one with, e.g.::

    pytest -m slow tests/slow/test_study_pole.py -k dpv -s

Gates read the published figures from ``reference/figures/pole.toml`` (never hard-coded):
the evolver settings of each study are the ``evolver.*`` protocol keys of its figure, and
the study first checks that its runs are comparable with the figure (same protocol).
The tolerance factors are the acceptance criteria of issue 4, not published numbers.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reference.published import ReferenceFigure, figures_for
from neuroyard.reports.report import summary_of
from neuroyard.reports.stats import GroupSummary
from neuroyard.tasks.pole.generalization import protocol

pytestmark = pytest.mark.slow

RESULTS = Path(__file__).resolve().parents[2] / "results" / "pole"
SEED = 1
WORKERS = 2
MEAN_TOLERANCE = 2.0  # issue 4 acceptance: mean evaluations <= 2 x the published mean

# NEAT parameters for the DPNV study on top of the paper's stated DPNV settings in the
# figure's protocol (results/pole/NOTES.md has the probes behind each choice).
# Weights (the paper gives no number): with the XOR-tuned magnitudes (initial range 2.5,
# perturbation 3.5) and the paper's c3 = 3.0 / threshold 4.0, nearly every genome formed its
# own species (about 800 species of 1,000 genomes, so fitness sharing selected almost
# nothing and speciation took ~1 s per generation). Initial range 1.0 is the authors' setup
# (from memory, MEMORY-medium); perturbation and replacement 1.0 were chosen so that species
# hold about five genomes (probes with campaign seed 1, runs 0-7: perturbation 0.5
# collapsed to one species, 2.0 gave ~550; 2.5 solved 3 of 8 within 100 generations).
# Representative (departs from the paper's random member, sec. 3.3, from memory): each
# species is represented by its previous champion, as the authors' setup is recalled to do
# (MEMORY-medium). Runs 0-13 with a random member: 9 of 14 solved within 1,000,000
# evaluations, 5 of them within 100,000; with the champion 7 of 14 within 100,000.
DPNV_FREE_PARAMETERS: dict[str, Any] = {
    "weight_init_range": 1.0,
    "weight_perturb_half_width": 1.0,
    "weight_replace_range": 1.0,
    "species_representative": "champion",
}


def gating_figure(task: str, metric: str) -> ReferenceFigure:
    """The published NEAT figure for ``task`` that carries ``metric`` and may gate."""
    figures = [f for f in figures_for(task, "NEAT") if metric in f.values and f.may_gate]
    assert len(figures) == 1, f"expected one gating NEAT figure with {metric} for {task}"
    return figures[0]


def evolver_settings(figure: ReferenceFigure) -> dict[str, Any]:
    """The NEAT settings of the figure's protocol (keys ``evolver.<name>``)."""
    return {
        key.partition(".")[2]: value
        for key, value in figure.protocol.items()
        if key.startswith("evolver.")
    }


def run_study(
    name: str, task: str, runs: int, budget: int, settings: dict[str, Any]
) -> tuple[list[RunRecord], GroupSummary]:
    """Run (or resume) the study's campaign into ``results/pole/<name>.sqlite``.

    ``results/pole/<name>.json`` is rewritten after every finished run, so a study stopped
    part-way leaves a summary of the runs it finished.
    """
    RESULTS.mkdir(parents=True, exist_ok=True)
    evolver = EvolverSpec("neat", settings)
    plan = CampaignPlan([evolver], [TaskChoice(task)], runs=runs, seed=SEED, budget=budget)
    with ResultStore(RESULTS / f"{name}.sqlite") as store:

        def study_records() -> list[RunRecord]:
            found = [
                r
                for r in store.records(with_log=False)
                if r.task == task and r.config_hash == evolver.config_hash and r.budget == budget
            ]
            return sorted(found, key=lambda r: r.run_index)

        def write_summary(_: RunRecord | None = None) -> None:
            done = study_records()
            (RESULTS / f"{name}.json").write_text(
                json.dumps(summary_document(name, task, runs, budget, settings, done), indent=1)
                + "\n"
            )

        execute(plan, store, Supervisor(WORKERS), progress=False, on_record=write_summary)
        write_summary()
        records = study_records()
    summary = summary_of(records)
    print(
        f"\n{name}: {summary.solved}/{summary.runs} solved, mean evals {summary.mean_evaluations}"
    )
    return records, summary


def summary_document(
    name: str, task: str, runs: int, budget: int, settings: dict[str, Any], done: list[RunRecord]
) -> dict[str, Any]:
    return {
        "study": name,
        "task": task,
        "evolver": "neat",
        "evolver_config": settings,
        "budget": budget,
        "campaign_seed": SEED,
        "runs_planned": runs,
        "runs_finished": len(done),
        "summary": summary_of(done).figures() if done else None,
        "runs": [
            {
                "run": r.run_index,
                "status": r.status,
                "evaluations": r.evaluations,
                "generations": r.generations,
                "success_evaluations": r.success_evaluations,
                "success_details": r.success_details,
                "hidden_nodes": r.hidden_nodes,
                "connections": r.connections,
                "wall_seconds": round(r.timing.get("wall", 0.0), 2),
            }
            for r in done
        ],
        "task_settings": done[0].task_settings if done else {},
        "evolver_settings": done[0].evolver_settings if done else {},
    }


def assert_comparable(figure: ReferenceFigure, records: list[RunRecord]) -> None:
    for r in records:
        assert figure.mismatches(r.task_settings, r.evolver_settings) == [], r.run_index


def test_study_single_pole_markov() -> None:
    """SPV, 20 runs: all solved (issue 4 acceptance; the single-pole figures are from
    memory, MEMORY-low, so there is no published gate)."""
    records, summary = run_study("spv", "pole1-markov-v1", 20, 100_000, {})
    assert summary.runs == 20
    assert summary.solved == 20, [r.status for r in records]


def test_study_double_pole_markov() -> None:
    """DPV, 50 runs at population 150 within 100,000 evaluations: >= 48/50 solved and
    mean evaluations <= 2 x the NEAT 2002 figure (sec. 4.4, DPV table)."""
    figure = gating_figure("pole2-markov-v1", "mean_evaluations")
    records, summary = run_study("dpv", "pole2-markov-v1", 50, 100_000, evolver_settings(figure))
    assert_comparable(figure, records)
    assert summary.runs == 50
    assert summary.solved >= 48
    assert summary.mean_evaluations <= MEAN_TOLERANCE * figure.values["mean_evaluations"]


def test_study_double_pole_nonmarkov() -> None:
    """DPNV, 20 runs at population 1,000 with damped fitness within 1,000,000 evaluations:
    >= 18/20 solved, mean evaluations <= 2 x the NEAT 2002 figure (sec. 4.4, DPNV table),
    mean generalization >= the test's pass count."""
    figure = gating_figure("pole2-nonmarkov-v1", "mean_evaluations")
    settings = {**evolver_settings(figure), **DPNV_FREE_PARAMETERS}
    records, summary = run_study("dpnv", "pole2-nonmarkov-v1", 20, 1_000_000, settings)
    assert_comparable(figure, records)
    assert summary.runs == 20
    assert summary.solved >= 18
    assert summary.mean_evaluations <= MEAN_TOLERANCE * figure.values["mean_evaluations"]
    assert summary.metrics["generalization"] >= protocol().pass_count
