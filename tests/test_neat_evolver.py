"""The NEAT evolver through ask/tell: the contract, statistics and the paper's ablation switches.

Behaviour expected from Stanley & Miikkulainen (2002): sec. 4.1 (population, speciation,
champion copies), sec. 5 (ablations: no growth, no speciation, no crossover, initial random
topology), as listed in our bibliography
(reference/SOURCES.md: stanley2002; NEAT settings; ablations).
"""

from __future__ import annotations

import pytest

from neuroyard.core.batch import compile_network
from neuroyard.core.evolver import Evaluation
from neuroyard.core.network import validate
from neuroyard.reference.neat import NeatEvolver
from neuroyard.tasks import make


def evolve(generations: int, seed: int = 0, **config) -> tuple[NeatEvolver, list[dict]]:
    """Run NEAT on XOR for a few generations; return the evolver and its stats per generation."""
    task = make("xor-v2")
    evolver = NeatEvolver(**config)
    evolver.start(task.problem(100_000), seed)
    history = []
    for _ in range(generations):
        batch = evolver.ask()
        for k, net in enumerate(batch):
            validate(net, inputs=2, outputs=1, where=f"candidate {k}")
        history.append(evolver.stats())
        evolver.tell([task.evaluate(compile_network(net)) for net in batch])
    return evolver, history


def test_first_generation_is_the_minimal_topology():
    evolver = NeatEvolver(population_size=20)
    evolver.start(make("xor-v2").problem(1000), seed=1)
    batch = evolver.ask()
    assert len(batch) == 20
    for net in batch:
        # paper: inputs and bias fully connected to the output, no hidden nodes
        assert net.hidden_nodes == 0
        assert sorted((c.source, c.target) for c in net.connections) == [(0, 3), (1, 3), (2, 3)]
        assert net.meta["innovations"] == (0, 1, 2)
        assert net.mode == "feedforward"
    assert evolver.ask() is batch  # same batch until tell


def test_population_size_is_kept_and_stats_are_reported():
    evolver, history = evolve(12, population_size=60)
    assert len(evolver.ask()) == 60
    last = history[-1]
    assert last["species"] >= 1 and last["compat_threshold"] == 3.0
    assert last["mean_genes"] >= 3 and last["innovations"] > 3
    assert max(h["mean_hidden_nodes"] for h in history) > 0  # structure grew


def test_tell_checks_its_input():
    evolver = NeatEvolver(population_size=10)
    evolver.start(make("xor-v2").problem(1000), seed=1)
    evolver.ask()
    with pytest.raises(ValueError, match="11 evaluations"):
        evolver.tell([Evaluation(1.0)] * 11)
    with pytest.raises(ValueError, match="not finite"):
        evolver.tell([Evaluation(float("nan"))] * 10)


def test_a_batch_cut_by_the_budget_is_told_and_no_generation_is_bred():
    # the harness's contract: the last batch of a run may be cut to an evaluated prefix
    evolver = NeatEvolver(population_size=10)
    evolver.start(make("xor-v2").problem(1000), seed=1)
    batch = evolver.ask()
    evolver.tell([Evaluation(2.0)] * 4)
    assert [g.fitness for g in evolver.population[:4]] == [2.0] * 4
    assert evolver.generation == 0 and evolver.ask() is batch


def test_champion_of_a_large_species_is_copied_unchanged():
    # paper sec. 4.1: the champion of each species with more than five networks is copied
    task = make("xor-v2")
    evolver = NeatEvolver(population_size=30, speciation=False)
    evolver.start(task.problem(10_000), seed=3)
    batch = evolver.ask()
    results = [task.evaluate(compile_network(net)) for net in batch]
    best = max(range(len(batch)), key=lambda k: results[k].fitness)
    evolver.tell(results)
    assert any(net == batch[best] for net in evolver.ask())


def test_no_speciation_keeps_one_species():
    _, history = evolve(8, population_size=50, speciation=False)
    assert {h["species"] for h in history} == {1.0}


def test_no_growth_keeps_the_initial_topology():
    evolver, history = evolve(8, population_size=50, growth=False, initial_hidden=2)
    assert {h["mean_hidden_nodes"] for h in history} == {2.0}
    assert {h["mean_genes"] for h in history} == {3 + 3 * 2 + 2}  # in->out, in->hidden, hidden->out


def test_no_crossover_still_evolves():
    evolver, history = evolve(8, population_size=50, crossover=False)
    assert len(evolver.ask()) == 50 and history[-1]["innovations"] >= 3


def test_random_initial_topology_varies_between_genomes():
    evolver = NeatEvolver(population_size=40, initial_topology="random")
    evolver.start(make("xor-v2").problem(1000), seed=5)
    batch = evolver.ask()
    assert len({(n.hidden_nodes, n.enabled_connections) for n in batch}) > 5
    for net in batch:
        validate(net, inputs=2, outputs=1)


def test_recurrent_switch_gives_recurrent_networks():
    evolver, _ = evolve(10, population_size=50, recurrent=True, add_link_prob=0.3)
    batch = evolver.ask()
    assert {net.mode for net in batch} == {"recurrent"}
    hidden = {n.id for net in batch for n in net.nodes if n.kind in ("hidden", "output")}
    loops = [c for net in batch for c in net.connections if c.source == c.target]
    assert loops and all(c.source in hidden for c in loops)
