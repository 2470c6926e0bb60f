"""The first generation: minimal topology (the paper's start) or random topologies (ablation).

Genomes of the first generation share innovation numbers for the same links (they are all
made in generation 0) and share hidden node ids, so they align in crossover and distance.
"""

from __future__ import annotations

import random

from .config import NeatConfig
from .genome import ConnectionGene, Genome, Layout
from .innovation import InnovationTracker


def initial_population(
    layout: Layout, tracker: InnovationTracker, rng: random.Random, config: NeatConfig
) -> list[Genome]:
    """``config.population_size`` genomes, weights uniform in +-``weight_init_range``.

    ``minimal``: every input and the bias linked to every output, plus (for the no-growth
    ablation) ``initial_hidden`` hidden nodes fed by inputs and bias and feeding the outputs.
    ``random``: each genome gets 0..``random_max_hidden`` hidden nodes (uniform) and each
    possible feedforward link with probability ``random_link_prob``.
    """
    if config.initial_topology == "minimal":
        hidden = [tracker.node() for _ in range(config.initial_hidden)]
        links = _layered_links(layout, hidden)
        return [_genome(hidden, links, tracker, rng, config) for _ in range(config.population_size)]
    pool = [tracker.node() for _ in range(config.random_max_hidden)]
    population = []
    for _ in range(config.population_size):
        hidden = pool[: rng.randint(0, len(pool))]
        links = [
            pair
            for pair in _feedforward_pairs(layout, hidden)
            if rng.random() < config.random_link_prob
        ]
        population.append(_genome(hidden, links, tracker, rng, config))
    return population


def _layered_links(layout: Layout, hidden: list[int]) -> list[tuple[int, int]]:
    links = [(s, o) for o in layout.outputs for s in layout.sources]
    links += [(s, h) for h in hidden for s in layout.sources]
    links += [(h, o) for o in layout.outputs for h in hidden]
    return links


def _feedforward_pairs(layout: Layout, hidden: list[int]) -> list[tuple[int, int]]:
    """Every link of a feedforward net over these nodes (hidden i may feed hidden j > i)."""
    pairs = [(s, t) for t in hidden + list(layout.outputs) for s in layout.sources]
    pairs += [(a, b) for i, a in enumerate(hidden) for b in hidden[i + 1 :]]
    pairs += [(h, o) for o in layout.outputs for h in hidden]
    return pairs


def _genome(
    hidden: list[int],
    links: list[tuple[int, int]],
    tracker: InnovationTracker,
    rng: random.Random,
    config: NeatConfig,
) -> Genome:
    spread = config.weight_init_range
    genome = Genome(list(hidden))
    for source, target in links:
        genome.add(
            ConnectionGene(
                tracker.link(source, target), source, target, rng.uniform(-spread, spread)
            )
        )
    return genome
