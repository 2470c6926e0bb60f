"""NEAT genome operations on their own, against the rules of Stanley & Miikkulainen (2002).

Sources of the expected behaviour (paper = Stanley & Miikkulainen 2002, Evolutionary
Computation 10(2); rules as listed in reference/SOURCES.md: stanley2002; NEAT settings):
- historical markings: the same structural innovation within a generation gets the same
  innovation number (paper, section on historical markings);
- compatibility distance delta = c1*E/N + c2*D/N + c3*W (paper, eq. 1), N = 1 below 20 genes;
- crossover: matching genes at random, disjoint/excess from the fitter parent, 75% chance
  that a gene disabled in either parent stays disabled;
- add-node: split link disabled, new in-link weight 1, out-link the old weight.
"""

from __future__ import annotations

import random

import pytest

from neuroyard.core.network import validate
from neuroyard.reference.neat import make_config
from neuroyard.reference.neat.decode import Decoder
from neuroyard.reference.neat.genome import (
    ConnectionGene,
    Genome,
    Layout,
    crossover,
    distance,
    fitter_first,
)
from neuroyard.reference.neat.innovation import InnovationTracker
from neuroyard.reference.neat.mutation import add_link, add_node, mutate
from neuroyard.reference.neat.species import Speciator

LAYOUT = Layout.for_problem(inputs=2, outputs=1)  # inputs 0, 1; bias 2; output 3


def genome(genes: list[tuple[int, int, int, float, bool]], hidden=(), fitness=0.0) -> Genome:
    """A hand-made genome from (innovation, source, target, weight, enabled) tuples."""
    g = Genome(list(hidden), fitness=fitness)
    for innovation, source, target, weight, enabled in genes:
        g.add(ConnectionGene(innovation, source, target, weight, enabled))
    return g


# The two parents of the paper's crossover figure (Fig. 4, from memory): node ids 1-6 there
# are relabelled so that 1-3 are sensors and 4 is the output; 5 and 6 hidden.
PARENT_1 = [
    (1, 1, 4, 0.5, True),
    (2, 2, 4, 0.5, False),
    (3, 3, 4, 0.5, True),
    (4, 2, 5, 0.5, True),
    (5, 5, 4, 0.5, True),
    (8, 1, 5, 0.5, True),
]
PARENT_2 = [
    (1, 1, 4, -0.5, True),
    (2, 2, 4, -0.5, False),
    (3, 3, 4, -0.5, True),
    (4, 2, 5, -0.5, True),
    (5, 5, 4, -0.5, False),
    (6, 5, 6, -0.5, True),
    (7, 6, 4, -0.5, True),
    (9, 3, 5, -0.5, True),
    (10, 1, 6, -0.5, True),
]


def test_distance_counts_excess_disjoint_and_weight_difference():
    # Paper, crossover figure: genes 6, 7, 8 are disjoint and 9, 10 excess; five match.
    a, b = genome(PARENT_1, hidden=[5]), genome(PARENT_2, hidden=[5, 6])
    # Both genomes have fewer than 20 genes, so N = 1 (paper sec. 4.1).
    # delta = c1*E + c2*D + c3*W = 2*c1 + 3*c2 + c3*1.0 (every matching pair differs by 1.0)
    assert distance(a, b, 1.0, 1.0, 0.4, 20) == pytest.approx(2 + 3 + 0.4)
    assert distance(a, b, 2.0, 0.0, 0.0, 20) == pytest.approx(4.0)  # excess only
    assert distance(a, b, 0.0, 5.0, 0.0, 20) == pytest.approx(15.0)  # disjoint only
    assert distance(b, a, 1.0, 1.0, 0.4, 20) == distance(a, b, 1.0, 1.0, 0.4, 20)
    # Without the small-genome rule N is the larger genome's gene count (9).
    assert distance(a, b, 1.0, 1.0, 0.4, 0) == pytest.approx(5 / 9 + 0.4)


def test_distance_with_stop_at_agrees_on_compatibility():
    a, b = genome(PARENT_1, hidden=[5]), genome(PARENT_2, hidden=[5, 6])
    full = distance(a, b, 1.0, 1.0, 0.4, 20)
    for threshold in (1.0, 3.0, 5.0, 5.3, 6.0):
        early = distance(a, b, 1.0, 1.0, 0.4, 20, stop_at=threshold)
        assert (early < threshold) == (full < threshold)
        assert early == full or early >= threshold


def test_distance_of_identical_structure_is_mean_weight_difference():
    a = genome([(0, 0, 3, 1.0, True), (1, 1, 3, 2.0, True), (2, 2, 3, 0.0, False)])
    b = genome([(0, 0, 3, 0.0, True), (1, 1, 3, 2.0, True), (2, 2, 3, 2.0, True)])
    # Matching genes only: W = (1 + 0 + 2) / 3, disabled genes included
    # (reference/SOURCES.md: stanley2002; NEAT settings)
    assert distance(a, b, 1.0, 1.0, 0.4, 20) == pytest.approx(0.4 * 1.0)
    assert distance(a, a, 1.0, 1.0, 0.4, 20) == 0.0


def test_distance_divides_by_gene_count_from_twenty_genes():
    big = genome([(k, 0, 3, 0.0, True) for k in range(20)])
    smaller = genome([(k, 0, 3, 0.0, True) for k in range(18)])
    # 2 excess genes, N = 20 (the larger genome has 20 genes, not fewer)
    assert distance(big, smaller, 1.0, 1.0, 0.4, 20) == pytest.approx(2 / 20)


def test_crossover_aligns_by_innovation_and_takes_structure_from_fitter_parent():
    rng = random.Random(3)
    fit, weak = genome(PARENT_2, [5, 6], fitness=2.0), genome(PARENT_1, [5], fitness=1.0)
    for _ in range(50):
        child = crossover(*fitter_first(weak, fit, rng), rng, 0.75)
        assert sorted(child.genes) == [1, 2, 3, 4, 5, 6, 7, 9, 10]
        assert child.hidden == [5, 6]
        for k, gene in child.genes.items():
            assert (gene.source, gene.target) == (fit.genes[k].source, fit.genes[k].target)
            if k in weak.genes:  # matching gene: weight from either parent
                assert gene.weight in (0.5, -0.5)
            else:  # disjoint or excess: from the fitter parent
                assert gene.weight == -0.5
    child = crossover(*fitter_first(genome(PARENT_1, [5], 3.0), fit, rng), rng, 0.75)
    assert sorted(child.genes) == [1, 2, 3, 4, 5, 8]


def test_crossover_picks_matching_genes_from_both_parents_at_random():
    rng = random.Random(4)
    a, b = genome(PARENT_1, [5], 2.0), genome(PARENT_2, [5, 6], 1.0)
    from_a = sum(crossover(a, b, rng, 0.75).genes[1].weight == 0.5 for _ in range(2000))
    assert 900 < from_a < 1100  # a fair coin per matching gene (binomial sd ~22)


def test_gene_disabled_in_either_parent_stays_disabled_with_75_percent():
    rng = random.Random(5)
    a, b = genome(PARENT_1, [5], 2.0), genome(PARENT_2, [5, 6], 1.0)
    n = 4000
    # gene 5 is enabled in a, disabled in b; gene 2 disabled in both
    disabled_5 = sum(not crossover(a, b, rng, 0.75).genes[5].enabled for _ in range(n))
    disabled_2 = sum(not crossover(a, b, rng, 0.75).genes[2].enabled for _ in range(n))
    for count in (disabled_5, disabled_2):
        assert abs(count / n - 0.75) < 0.03  # 4.4 binomial sd
    assert all(crossover(a, b, rng, 0.75).genes[1].enabled for _ in range(100))


def test_keep_disabled_rule_never_reenables_a_gene_taken_disabled():
    rng = random.Random(6)
    a, b = genome(PARENT_1, [5], 2.0), genome(PARENT_2, [5, 6], 1.0)
    n = 4000
    children = [crossover(a, b, rng, 0.75, keep_disabled=True) for _ in range(n)]
    assert not any(c.genes[2].enabled for c in children)  # disabled in both parents
    # gene 5: taken enabled from a (half the time), then disabled with 75% -> 12.5% enabled
    enabled_5 = sum(c.genes[5].enabled for c in children)
    assert abs(enabled_5 / n - 0.125) < 0.02  # 3.8 binomial sd


def test_same_innovation_in_one_generation_gets_same_numbers():
    tracker = InnovationTracker(next_node=4, next_innovation=3)
    assert tracker.link(0, 3) == tracker.link(0, 3) == 3
    assert tracker.link(1, 3) == 4
    first, again = tracker.split(3), tracker.split(3)
    assert first == again
    assert (first.node, first.in_innovation, first.out_innovation) == (4, 5, 6)
    tracker.new_generation()
    # the paper tracks innovations per generation: a repeat later gets new numbers
    assert tracker.link(0, 3) == 7
    assert tracker.split(3).node == 5


def test_add_node_splits_link_with_weight_one_in_and_old_weight_out():
    rng = random.Random(0)
    tracker = InnovationTracker(next_node=4, next_innovation=3)
    g = genome([(0, 0, 3, 0.7, False), (1, 1, 3, -1.3, True), (2, 2, 3, 0.2, False)])
    twin = g.copy()
    assert add_node(g, tracker, rng)  # the only enabled gene is 1 -> 3
    assert not g.genes[1].enabled
    assert g.hidden == [4]
    assert (g.genes[3].source, g.genes[3].target, g.genes[3].weight) == (1, 4, 1.0)
    assert (g.genes[4].source, g.genes[4].target, g.genes[4].weight) == (4, 3, -1.3)
    assert g.genes[3].enabled and g.genes[4].enabled
    # another genome making the same split in this generation gets the same markings
    add_node(twin, tracker, rng)
    assert twin.hidden == [4] and sorted(twin.genes) == sorted(g.genes)


def test_add_node_can_avoid_links_from_the_bias_node():
    rng = random.Random(0)
    tracker = InnovationTracker(next_node=4, next_innovation=3)
    for _ in range(50):
        g = genome([(0, 0, 3, 0.7, True), (1, 1, 3, -1.3, True), (2, 2, 3, 0.2, True)])
        assert add_node(g, tracker, rng, skip_bias=LAYOUT.bias)
        assert g.genes[2].enabled  # the bias link 2 -> 3 is never split
    only_bias = genome([(2, 2, 3, 0.2, True)])
    assert not add_node(only_bias, tracker, rng, skip_bias=LAYOUT.bias)
    assert add_node(only_bias, tracker, rng)


def test_exclusive_mutation_keeps_weights_of_a_structural_mutant():
    config = make_config({"structural_excludes_weights": True, "add_node_prob": 1.0})
    rng = random.Random(1)
    tracker = InnovationTracker(next_node=4, next_innovation=3)
    parent = genome([(0, 0, 3, 0.7, True), (1, 1, 3, -1.3, True), (2, 2, 3, 0.2, True)])
    child = parent.copy()
    mutate(child, LAYOUT, tracker, rng, config)
    assert len(child.hidden) == 1 and len(child.genes) == 5  # one add-node, no add-link
    assert [child.genes[k].weight for k in (0, 1, 2)] == [0.7, -1.3, 0.2]
    independent = make_config(
        {"structural_excludes_weights": False, "add_node_prob": 1.0, "weight_mutation_prob": 1.0}
    )
    child = parent.copy()
    mutate(child, LAYOUT, tracker, rng, independent)
    assert len(child.hidden) == 1
    assert [child.genes[k].weight for k in (0, 1, 2)] != [0.7, -1.3, 0.2]


def test_add_node_never_duplicates_a_node_the_genome_already_has():
    rng = random.Random(0)
    tracker = InnovationTracker(next_node=4, next_innovation=3)
    g = genome([(0, 0, 3, 0.7, True)])
    add_node(g, tracker, rng)
    g.genes[0].enabled = True  # as if crossover re-enabled the split gene
    g.genes[3].enabled = g.genes[4].enabled = False
    add_node(g, tracker, rng)
    assert len(set(g.hidden)) == 2 == len(g.hidden)


def test_add_link_joins_unconnected_nodes_without_cycles():
    config = make_config({})
    rng = random.Random(1)
    tracker = InnovationTracker(next_node=5, next_innovation=10)
    g = genome([(0, 0, 3, 0.5, True), (1, 0, 4, 1.0, True), (2, 4, 3, 0.5, True)], hidden=[4])
    seen = set()
    for _ in range(30):
        trial = g.copy()
        assert add_link(trial, LAYOUT, tracker, rng, config)
        (new,) = [trial.genes[k] for k in set(trial.genes) - set(g.genes)]
        seen.add((new.source, new.target))
        assert abs(new.weight) <= config.weight_init_range
    # every allowed new link; 3 -> 4 would close the cycle 4 -> 3 -> 4
    assert seen == {(1, 3), (2, 3), (1, 4), (2, 4)}


def test_add_link_in_recurrent_mode_allows_cycles_and_self_loops():
    config = make_config({"recurrent": True})
    rng = random.Random(2)
    tracker = InnovationTracker(next_node=5, next_innovation=10)
    g = genome([(0, 0, 3, 0.5, True), (1, 0, 4, 1.0, True), (2, 4, 3, 0.5, True)], hidden=[4])
    seen = set()
    for _ in range(200):
        trial = g.copy()
        add_link(trial, LAYOUT, tracker, rng, config)
        seen |= {(x.source, x.target) for x in trial.genes.values()}
    assert {(3, 4), (3, 3), (4, 4)} <= seen


@pytest.mark.parametrize("prob", [0.0, 0.3, 1.0])
def test_add_link_by_probability_closes_a_cycle_with_the_given_chance(prob):
    config = make_config(
        {"recurrent": True, "recurrent_link_choice": "by_probability", "recurrent_link_prob": prob}
    )
    rng = random.Random(3)
    tracker = InnovationTracker(next_node=5, next_innovation=10)
    g = genome([(0, 0, 3, 0.5, True), (1, 0, 4, 1.0, True), (2, 4, 3, 0.5, True)], hidden=[4])
    cyclic = {(3, 4), (3, 3), (4, 4)}  # the free pairs that close a cycle; 4 others do not
    closed = 0
    for _ in range(400):
        trial = g.copy()
        assert add_link(trial, LAYOUT, tracker, rng, config)
        (new,) = [trial.genes[k] for k in set(trial.genes) - set(g.genes)]
        closed += (new.source, new.target) in cyclic
    assert closed / 400 == pytest.approx(prob, abs=0.07)


@pytest.mark.parametrize("recurrent", [False, True])
def test_mutated_and_crossed_genomes_decode_to_valid_networks(recurrent):
    # The harness's validator is the outside check: no cycle in feedforward mode,
    # every connection between existing nodes, no duplicate node.
    config = make_config({"recurrent": recurrent, "add_node_prob": 0.3, "add_link_prob": 0.5})
    rng = random.Random(7)
    tracker = InnovationTracker(next_node=LAYOUT.first_free_id)
    base = genome([(tracker.link(s, 3), s, 3, 0.0, True) for s in (0, 1, 2)])
    population = [base.copy() for _ in range(30)]
    decoder = Decoder(LAYOUT, "recurrent" if recurrent else "feedforward")
    for _ in range(40):
        tracker.new_generation()
        nxt = []
        for _ in range(len(population)):
            a, b = rng.choice(population), rng.choice(population)
            a.fitness, b.fitness = rng.random(), rng.random()
            child = crossover(*fitter_first(a, b, rng), rng, 0.75)
            mutate(child, LAYOUT, tracker, rng, config)
            nxt.append(child)
        population = nxt
    for g in population:
        net = decoder.network(g)
        validate(net, inputs=2, outputs=1)
        assert [n.id for n in net.nodes if n.kind == "hidden"] == g.hidden
        assert net.meta["innovations"] == tuple(g.genes)
    assert max(len(g.hidden) for g in population) > 2  # the test did grow structure


@pytest.mark.parametrize("rule", ["random_member", "champion"])
def test_species_representative_is_a_member_or_the_champion(rule):
    config = make_config({"species_representative": rule})
    members = [
        genome([(0, 0, 3, w, True)], fitness=f) for w, f in [(0.1, 2.0), (0.2, 9.0), (0.3, 5.0)]
    ]
    speciator = Speciator(config)
    speciator.assign(members, generation=0)
    chosen = set()
    for seed in range(20):
        speciator.pick_representatives(random.Random(seed))
        chosen.add(speciator.species[0].representative.genes[0].weight)
    # paper sec. 3.3 (from memory): a random member; the authors' setup: the champion
    assert chosen == ({0.1, 0.2, 0.3} if rule == "random_member" else {0.2})
