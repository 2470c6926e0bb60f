"""NEAT mutations: weight change, add-node, add-link (paper sec. 4.1 rates).

The paper's rates and rules (reference/SOURCES.md: stanley2002; NEAT settings).

All operate in place on a :class:`~.genome.Genome` and draw from the run's ``random.Random``.
"""

from __future__ import annotations

import random

from .config import NeatConfig
from .genome import ConnectionGene, Genome, Layout
from .innovation import InnovationTracker


def mutate(
    genome: Genome,
    layout: Layout,
    tracker: InnovationTracker,
    rng: random.Random,
    config: NeatConfig,
) -> None:
    """Apply the mutations, each with its own probability.

    With ``config.structural_excludes_weights`` an offspring gets at most one kind of
    mutation: add-node, else add-link, else (maybe) weights; otherwise each of the three
    is drawn independently.
    """
    grow = config.growth
    skip_bias = None if config.split_bias_links else layout.bias
    if config.structural_excludes_weights:
        if (
            grow
            and rng.random() < config.add_node_prob
            and add_node(genome, tracker, rng, skip_bias)
        ):
            return
        linked = grow and rng.random() < config.add_link_prob
        if linked and add_link(genome, layout, tracker, rng, config):
            return
        if rng.random() < config.weight_mutation_prob:
            mutate_weights(genome, rng, config)
        return
    if rng.random() < config.weight_mutation_prob:
        mutate_weights(genome, rng, config)
    if grow and rng.random() < config.add_node_prob:
        add_node(genome, tracker, rng, skip_bias)
    if grow and rng.random() < config.add_link_prob:
        add_link(genome, layout, tracker, rng, config)


def mutate_weights(genome: Genome, rng: random.Random, config: NeatConfig) -> None:
    """Each weight: uniform perturbation in [-half_width, +half_width] with ``weight_perturb_prob``,
    otherwise a new value uniform in [-weight_replace_range, +weight_replace_range]; then
    clipped to [-weight_limit, +weight_limit]."""
    half_width = config.weight_perturb_half_width
    spread = config.weight_replace_range
    limit = config.weight_limit
    perturb = config.weight_perturb_prob
    uniform = rng.uniform
    for gene in genome.genes.values():
        if rng.random() < perturb:
            weight = gene.weight + uniform(-half_width, half_width)
        else:
            weight = uniform(-spread, spread)
        gene.weight = -limit if weight < -limit else limit if weight > limit else weight


def add_node(
    genome: Genome, tracker: InnovationTracker, rng: random.Random, skip_bias: int | None = None
) -> bool:
    """Split a random enabled gene a->b into a->new (weight 1) and new->b (the old weight).

    The split gene is disabled (paper; row 'Add-node mechanics' of
    reference/SOURCES.md: stanley2002; NEAT settings). Genes leaving node ``skip_bias``
    (the bias node, when given) are not split. The gene is drawn uniformly among the
    candidates. Returns False when there is none.
    """
    candidates = [g for g in genome.genes.values() if g.enabled and g.source != skip_bias]
    if not candidates:
        return False
    old = rng.choice(candidates)
    old.enabled = False
    split = tracker.split(old.innovation, set(genome.hidden))
    genome.hidden.append(split.node)
    genome.add(ConnectionGene(split.in_innovation, old.source, split.node, 1.0))
    genome.add(ConnectionGene(split.out_innovation, split.node, old.target, old.weight))
    return True


def add_link(
    genome: Genome,
    layout: Layout,
    tracker: InnovationTracker,
    rng: random.Random,
    config: NeatConfig,
) -> bool:
    """Connect a random pair of unconnected nodes, new weight uniform in +-weight_init_range.

    Targets are hidden and output nodes. Without ``config.recurrent`` a link that would
    close a cycle (through any gene, enabled or not) is never chosen; with it, any pair
    is allowed, self-loops included, and with ``recurrent_link_choice = "by_probability"``
    the new link closes a cycle with ``recurrent_link_prob`` and is feedforward otherwise.
    The pair is drawn uniformly among the allowed ones. Returns False when there is none.
    """
    targets = genome.hidden + list(layout.outputs)
    sources = list(layout.sources) + targets
    existing = {(g.source, g.target) for g in genome.genes.values()}
    candidates = [(s, t) for s in sources for t in targets if (s, t) not in existing]
    want_cycle = False  # the only allowed kind without recurrence
    if config.recurrent:
        want_cycle = None  # any pair
        if config.recurrent_link_choice == "by_probability":
            want_cycle = rng.random() < config.recurrent_link_prob
    successors: dict[int, list[int]] | None = None
    if want_cycle is not None:
        successors = {}
        for g in genome.genes.values():
            successors.setdefault(g.source, []).append(g.target)
    while candidates:
        k = rng.randrange(len(candidates))
        source, target = candidates[k]
        candidates[k] = candidates[-1]
        candidates.pop()
        if successors is not None and _reaches(target, source, successors) != want_cycle:
            continue
        spread = config.weight_init_range
        innovation = tracker.link(source, target)
        genome.add(ConnectionGene(innovation, source, target, rng.uniform(-spread, spread)))
        return True
    return False


def _reaches(start: int, goal: int, successors: dict[int, list[int]]) -> bool:
    """True when ``goal`` is ``start`` or can be reached from it along the genes."""
    stack = [start]
    seen = {start}
    while stack:
        node = stack.pop()
        if node == goal:
            return True
        for nxt in successors.get(node, ()):
            if nxt not in seen:
                seen.add(nxt)
                stack.append(nxt)
    return False
