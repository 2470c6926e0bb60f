"""The published maze figures (Lehman & Stanley 2011, sec. 6; reference/SOURCES.md:
lehman2011; maze results) are recorded, shown as the phenomenon only and never gate."""

from __future__ import annotations

from neuroyard.reference.published import figures_for

PHENOMENON_ONLY = "published map, not ours: phenomenon only"


def solved(task: str, method: str) -> list[float]:
    return sorted(f.values["runs"] - f.values["failures"] for f in figures_for(task, method))


def test_the_papers_success_counts_out_of_40():
    # Lehman & Stanley 2011, sec. 6 (and 6.4.3 for the second hard-map objective figure)
    assert solved("maze-medium-v1", "novelty search") == [40]
    assert solved("maze-medium-v1", "objective NEAT") == [40]
    assert solved("maze-medium-v1", "random selection") == [21]
    assert solved("maze-hard-v3", "novelty search") == [39]
    assert solved("maze-hard-v3", "objective NEAT") == [3, 4]  # both are in the paper
    assert solved("maze-hard-v3", "random selection") == [4]


def test_the_papers_mean_evaluations():
    # Lehman & Stanley 2011, sec. 6
    (medium_novelty,) = figures_for("maze-medium-v1", "novelty search")
    (medium_objective,) = figures_for("maze-medium-v1", "objective NEAT")
    (hard_novelty,) = figures_for("maze-hard-v3", "novelty search")
    assert medium_novelty.values["mean_evaluations"] == 18274
    assert medium_novelty.values["sd_evaluations"] == 20447
    assert medium_objective.values["mean_evaluations"] == 56334
    assert medium_objective.values["sd_evaluations"] == 48705
    assert hard_novelty.values["mean_evaluations"] == 35109
    assert hard_novelty.values["sd_evaluations"] == 30236


def test_every_maze_figure_is_the_phenomenon_only_and_never_gates():
    figures = figures_for("maze-medium-v1") + figures_for("maze-hard-v3")
    assert len(figures) == 7
    for f in figures:
        assert f.not_comparable == PHENOMENON_ONLY and not f.may_gate
        assert f.protocol["run.budget"] == 250_000
        # even a run of ours with the same selection and budget is not comparable
        same = {"selection": f.protocol["evolver.selection"]}
        assert f.mismatches({}, same, {"budget": 250_000}) == [PHENOMENON_ONLY]


def test_a_figure_is_shown_beside_its_own_method_only():
    """The report puts a novelty-search figure beside novelty-search runs and an objective
    NEAT figure beside objective runs, never crosswise (method_keys)."""
    novelty, objective = {"selection": "novelty"}, {"selection": "fitness"}
    for f in figures_for("maze-hard-v3"):
        own = f.protocol["evolver.selection"]
        assert f.other_method({}, novelty) is (own != "novelty")
        assert f.other_method({}, objective) is (own != "fitness")
