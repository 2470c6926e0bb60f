"""Reproduction: offspring per species by shared fitness, then breeding inside each species.

Explicit fitness sharing (paper; reference/SOURCES.md: stanley2002; NEAT settings): a
genome's adjusted fitness is its fitness divided by the size of its species, so a
species' summed adjusted fitness is its mean fitness, and offspring are allotted in
proportion to it. Species that stagnated get none. Within a species the lowest
performers are removed (``survival_fraction``), the champion of a species with more than
``champion_copy_above`` members is copied unchanged, and the rest of the offspring come
from mutation alone or from crossover plus mutation.
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass

from .config import NeatConfig
from .genome import Genome, Layout, crossover, fitter_first
from .innovation import InnovationTracker
from .mutation import mutate
from .species import Species


def allot_offspring(
    species: list[Species], total: int, generation: int, config: NeatConfig
) -> dict[int, int]:
    """Offspring count per species id (only ids with at least one; counts sum to ``total``).

    Shares are proportional to the mean member fitness; fitness is shifted up by the
    population minimum when that is negative (neuroyard's choice: the paper's fitness is
    never negative). Stagnant species get nothing, except the one holding the best genome
    (common practice, so that the population never dies out). Rounding: floors, then
    the largest remainders get one more. All shares zero: equal shares.
    """
    champion = max(species, key=lambda s: max(g.fitness for g in s.members))
    allowed = [
        s
        for s in species
        if s is champion or not s.stagnant(generation, config.stagnation_generations)
    ]
    floor = min(0.0, min(g.fitness for s in allowed for g in s.members))
    shares = [math.fsum(g.fitness - floor for g in s.members) / len(s.members) for s in allowed]
    share_sum = math.fsum(shares)
    if share_sum <= 0.0:
        shares = [1.0] * len(allowed)
        share_sum = float(len(allowed))
    exact = [total * x / share_sum for x in shares]
    counts = [int(x) for x in exact]
    by_remainder = sorted(range(len(allowed)), key=lambda i: exact[i] - counts[i], reverse=True)
    for i in by_remainder[: total - sum(counts)]:
        counts[i] += 1
    return {s.id: n for s, n in zip(allowed, counts, strict=True) if n > 0}


def survivors(members: list[Genome], fraction: float) -> list[Genome]:
    """The best ceil(fraction x size) members (at least one), fittest first."""
    ranked = sorted(members, key=lambda g: g.fitness, reverse=True)
    return ranked[: max(1, math.ceil(fraction * len(ranked)))]


@dataclass
class Breeder:
    """Makes the offspring of one species; holds the run's shared state."""

    layout: Layout
    tracker: InnovationTracker
    rng: random.Random
    config: NeatConfig

    def offspring(
        self,
        species: Species,
        parents: list[Genome],
        count: int,
        other_parents: list[list[Genome]],
    ) -> list[Genome]:
        """``count`` children of ``species`` from ``parents`` (fittest first).

        ``other_parents`` are the parent lists of the other species, for interspecies
        mating. A child's ``fitness`` is meaningless until it is evaluated.
        """
        cfg = self.config
        rng = self.rng
        children: list[Genome] = []
        if count and len(species.members) > cfg.champion_copy_above:
            children.append(parents[0].copy())
        while len(children) < count:
            mother = rng.choice(parents)
            if not cfg.crossover or rng.random() < cfg.mutate_only_fraction:
                child = mother.copy()
                self._mutate(child)
            else:
                pool = parents
                if other_parents and rng.random() < cfg.interspecies_mating_rate:
                    pool = rng.choice(other_parents)
                fitter, other = fitter_first(mother, rng.choice(pool), rng)
                child = crossover(
                    fitter,
                    other,
                    rng,
                    cfg.disable_inherited_prob,
                    keep_disabled=cfg.inherited_disabled_rule == "chosen_parent",
                )
                if cfg.mutate_crossover_offspring:
                    self._mutate(child)
            children.append(child)
        return children

    def _mutate(self, genome: Genome) -> None:
        mutate(genome, self.layout, self.tracker, self.rng, self.config)
