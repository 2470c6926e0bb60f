"""Novelty search and the random-selection control as options of the reference NEAT.

The method is Lehman & Stanley (2011): sparseness is the mean distance to the k nearest
behaviours of the population and the archive; a behaviour above the archive threshold is
archived; the threshold adapts (our rule is from memory); the control is NEAT with random
fitness (reference/SOURCES.md: lehman2011).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from neuroyard.core.batch import compile_network
from neuroyard.core.compiled import run_sequence
from neuroyard.core.errors import SettingError
from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.core.network import Network
from neuroyard.reference.neat import NeatEvolver, NoveltyNeat
from neuroyard.reference.neat.novelty import NoveltyArchive, sparseness
from neuroyard.tasks import make

# A 3-4-5 right triangle and one archived point, worked by hand:
# (0,0)-(3,0) = 3, (0,0)-(0,4) = 4, (3,0)-(0,4) = 5; archive (6,8): 10, sqrt(73), sqrt(52).
TRIANGLE = np.array([[0.0, 0.0], [3.0, 0.0], [0.0, 4.0]])
ARCHIVED = np.array([[6.0, 8.0]])


def test_sparseness_matches_a_hand_calculation():
    # k = 2: the two sides meeting at each corner, (3+4)/2, (3+5)/2, (4+5)/2
    assert sparseness(TRIANGLE, ARCHIVED, 2, squared=False).tolist() == [3.5, 4.0, 4.5]
    # squared distances: (9+16)/2, (9+25)/2, (16+25)/2
    assert sparseness(TRIANGLE, ARCHIVED, 2, squared=True).tolist() == [12.5, 17.0, 20.5]
    # k above the 3 neighbours there are: the mean over all of them
    expected = [(3 + 4 + 10) / 3, (3 + 5 + math.sqrt(73)) / 3, (4 + 5 + math.sqrt(52)) / 3]
    assert sparseness(TRIANGLE, ARCHIVED, 15, squared=False) == pytest.approx(expected, rel=1e-12)
    # without an archive the archived point no longer counts: (3+4)/2 at the origin, k = 2
    assert sparseness(TRIANGLE, np.empty((0, 2)), 2, squared=False)[0] == 3.5


def test_a_behaviour_is_not_its_own_neighbour_but_an_equal_one_is():
    twins = np.array([[1.0, 1.0], [1.0, 1.0]])
    assert sparseness(twins, np.empty((0, 2)), 1, squared=False).tolist() == [0.0, 0.0]
    alone = np.array([[1.0, 1.0]])
    assert sparseness(alone, np.empty((0, 2)), 15, squared=False).tolist() == [0.0]


def test_sparseness_equals_a_brute_force_search_over_all_pairs():
    # every distance by numpy broadcasting, sorted in full: independent of the k-d tree
    rng = np.random.default_rng(5)
    points = rng.normal(size=(250, 2)).round(1)  # rounded, so equal behaviours occur
    archive = rng.normal(size=(3000, 2)).round(1)
    within = np.linalg.norm(points[:, None] - points[None], axis=2)
    np.fill_diagonal(within, np.inf)
    outside = np.linalg.norm(points[:, None] - archive[None], axis=2)
    nearest = np.sort(np.hstack([within, outside]), axis=1)[:, :15]
    got = sparseness(points, archive, 15, squared=False)
    assert got == pytest.approx(nearest.mean(axis=1), rel=1e-12, abs=1e-12)
    got = sparseness(points, archive, 15, squared=True)
    assert got == pytest.approx((nearest**2).mean(axis=1), rel=1e-12, abs=1e-12)


def test_archive_growth_and_threshold_adaptation_follow_a_hand_worked_sequence():
    # window of 4 evaluations (2 generations of 2); nothing added halves the threshold,
    # more than 1 added doubles it; k = 1, so the score is the distance to the nearest
    archive = NoveltyArchive(1, threshold=1.5, window=4, lower_factor=0.5, raise_factor=2.0,
                             raise_above=1)  # fmt: skip
    steps = [
        # generation, expected scores, archive size and threshold after it
        ([0.0, 10.0], [10.0, 10.0], 2, 1.5),  # both novel; window not full yet
        ([0.0, 10.0], [0.0, 0.0], 2, 3.0),  # both archived already; 2 added in window > 1
        ([20.0, 20.0], [0.0, 0.0], 2, 3.0),  # twins: score 0, nothing added
        ([20.0, 20.0], [0.0, 0.0], 2, 1.5),  # window without additions: halved
        ([5.0, 30.0], [5.0, 20.0], 4, 1.5),  # 5: nearest 0 and 10; 30: nearest 10
        ([5.5, 100.0], [0.5, 70.0], 5, 3.0),  # 100 added; 3 added in window > 1
        ([1000.0, 100.5], [899.5, 0.5], 6, 3.0),  # only 1000 added
        ([1000.0, 1000.0], [0.0, 0.0], 6, 3.0),  # 1 added in window: not > 1, unchanged
    ]
    for behaviours, scores, size, threshold in steps:
        got = archive.score(np.array(behaviours)[:, None], 1, squared=False)
        assert got.tolist() == scores
        assert (len(archive), archive.threshold) == (size, threshold)
    assert sorted(archive.points[:, 0].tolist()) == [0.0, 5.0, 10.0, 30.0, 100.0, 1000.0]


def xor_run(selection: str, seed: int, generations: int, constant_fitness: bool = False):
    """Networks of every generation of a short NEAT run on XOR (connections and weights)."""
    task = make("xor-v2")
    evolver = NeatEvolver(selection=selection, population_size=30)
    evolver.start(task.problem(100_000), seed)
    history = []
    for _ in range(generations):
        batch = evolver.ask()
        history.append([[(c.source, c.target, c.weight) for c in n.connections] for n in batch])
        results = [task.evaluate(compile_network(net)) for net in batch]
        if constant_fitness:
            results = [Evaluation(0.0) for _ in results]
        evolver.tell(results)
    return history


def test_random_selection_is_reproducible_and_ignores_fitness():
    first = xor_run("random", seed=3, generations=6)
    assert xor_run("random", seed=3, generations=6) == first
    # the score is drawn from the run's generator, so the fitness told changes nothing
    assert xor_run("random", seed=3, generations=6, constant_fitness=True) == first
    assert xor_run("random", seed=4, generations=6) != first
    # under fitness selection the fitness told does matter
    assert xor_run("fitness", seed=3, generations=6) != xor_run(
        "fitness", seed=3, generations=6, constant_fitness=True
    )


def test_novelty_without_behaviours_is_a_one_line_error():
    evolver = NeatEvolver(selection="novelty", population_size=10)
    with pytest.raises(SettingError, match=r"selection = 'novelty' needs behaviours") as info:
        evolver.start(make("xor-v2").problem(1000), seed=1)
    assert "\n" not in str(info.value) and "xor-v2" in str(info.value)

    evolver.start(Problem("toy", 1, 2, 1000, behaviour_size=2), seed=1)
    batch = evolver.ask()
    told = [Evaluation(1.0, (0.0, 0.0)) for _ in batch]
    told[3] = Evaluation(1.0)
    with pytest.raises(SettingError, match=r"selection = 'novelty'.*evaluation 3 has none"):
        evolver.tell(told)
    told[3] = Evaluation(1.0, (0.0,))
    with pytest.raises(SettingError, match=r"of 2 values.*evaluation 3 has 1 values"):
        evolver.tell(told)


def test_stats_give_archive_size_and_threshold_under_novelty_only():
    problem = Problem("toy", 1, 2, 1000, behaviour_size=2)
    evolver = NeatEvolver(selection="novelty", population_size=10, novelty_threshold=2.0)
    evolver.start(problem, seed=1)
    spread = [Evaluation(0.0, (10.0 * k, 0.0)) for k in range(10)]  # neighbours 10 apart
    evolver.tell(spread)
    stats = evolver.stats()
    assert stats["novelty_archive"] == 10.0 and stats["novelty_threshold"] == 2.0
    plain = NeatEvolver(population_size=10)
    plain.start(problem, seed=1)
    assert "novelty_archive" not in plain.stats()


def test_neat_novelty_changes_only_the_defaults_of_the_maze_experiment():
    effective = EvolverSpec("neat-novelty").effective_config
    plain = EvolverSpec("neat").effective_config
    changed = {k: v for k, v in effective.items() if plain[k] != v}
    # Lehman & Stanley 2011, App. A, Table 1 and sec. 5
    assert changed == {
        "population_size": 250,
        "c3": 3.0,
        "add_link_prob": 0.1,
        "add_node_prob": 0.005,
        "selection": "novelty",
        "novelty_distance": "squared_euclidean",
    }
    assert effective["novelty_k"] == 15 and effective["novelty_threshold"] == 6.0
    assert "App. A, Table 1" in NoveltyNeat.options["add_node_prob"].source
    assert NoveltyNeat(population_size=20).config.selection == "novelty"


# A deceptive task of ours, for this test only: a network with one constant input places a
# point at 10 x its two outputs, in [0, 10]^2. Fitness rewards nearness to a trap in the
# corner (10, 10), which saturated outputs reach easily; the goal is a disc of radius 1
# around (2, 8), which needs both outputs off saturation, one low and one high.
TRAP = np.array([10.0, 10.0])
GOAL = np.array([2.0, 8.0])
GOAL_RADIUS = 1.0
ONE = np.ones((1, 1))
TOY = Problem("toy-deceptive", 1, 2, 10**6, max_fitness=20.0, behaviour_size=2)


def place(net: Network) -> tuple[Evaluation, bool]:
    """The toy task's evaluation (fitness 20 - distance to the trap) and whether it is solved."""
    point = 10.0 * run_sequence(compile_network(net), ONE, True)[0]
    fitness = 20.0 - float(np.linalg.norm(point - TRAP))
    return Evaluation(fitness, tuple(point)), bool(np.linalg.norm(point - GOAL) < GOAL_RADIUS)


def generations_to_goal(selection: str, seed: int, generations: int) -> int | None:
    """First generation with a point in the goal disc, or None within ``generations``."""
    evolver = NeatEvolver(
        selection=selection, population_size=50, novelty_threshold=1.0, novelty_window=100
    )
    evolver.start(TOY, seed)
    for generation in range(generations):
        results = [place(net) for net in evolver.ask()]
        if any(solved for _, solved in results):
            return generation
        evolver.tell([evaluation for evaluation, _ in results])
    return None


def test_novelty_finds_the_goal_that_fitness_is_deceived_away_from():
    # seeds 0-2, 60 generations of 50: novelty reached the goal in all three (at
    # generations 16, 2 and 33 when this test was written); fitness in none
    for seed in range(3):
        assert generations_to_goal("novelty", seed, 60) is not None, seed
        assert generations_to_goal("fitness", seed, 60) is None, seed
