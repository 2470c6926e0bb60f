"""Speciation: grouping genomes by compatibility distance.

The paper's rules (reference/SOURCES.md: stanley2002; NEAT settings).

Each species is represented by a member of the previous generation: a random one (the
paper) or its champion (``species_representative``). A genome joins
the first species (in order of creation) whose representative is closer than the
compatibility threshold; a genome that fits none founds a new species and represents it.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterable
from dataclasses import dataclass, field

from .config import NeatConfig
from .genome import Genome, distance


@dataclass(slots=True)
class Species:
    """A species: id, representative, this generation's members and its stagnation record.

    ``best_fitness`` is the best fitness any member ever had; ``last_improved`` the
    generation in which it last rose.
    """

    id: int
    representative: Genome
    created: int
    members: list[Genome] = field(default_factory=list)
    best_fitness: float = -math.inf
    last_improved: int = 0

    def record_fitness(self, generation: int) -> None:
        """Update the stagnation record from the members' (evaluated) fitness."""
        best = max(g.fitness for g in self.members)
        if best > self.best_fitness:
            self.best_fitness = best
            self.last_improved = generation

    def stagnant(self, generation: int, limit: int) -> bool:
        """True when the best fitness has not risen for ``limit`` generations."""
        return generation - self.last_improved >= limit


@dataclass
class Speciator:
    """Keeps the species list of a run and assigns each new generation to it."""

    config: NeatConfig
    species: list[Species] = field(default_factory=list)
    next_id: int = 0

    def pick_representatives(self, rng: random.Random) -> None:
        """Each species is represented by a member of the generation just evaluated: a
        random one, or with ``species_representative = "champion"`` the fittest (the first
        listed among equals)."""
        champion = self.config.species_representative == "champion"
        for s in self.species:
            s.representative = (
                max(s.members, key=lambda g: g.fitness) if champion else rng.choice(s.members)
            )

    def drop(self, keep: Iterable[int]) -> None:
        """Remove every species whose id is not in ``keep`` (extinct or stagnant)."""
        wanted = set(keep)
        self.species = [s for s in self.species if s.id in wanted]

    def assign(self, genomes: list[Genome], generation: int) -> None:
        """Put every genome into a species; species left without members disappear."""
        for s in self.species:
            s.members = []
        for genome in genomes:
            home = self._find(genome)
            if home is None:
                home = Species(self.next_id, genome, generation, last_improved=generation)
                self.next_id += 1
                self.species.append(home)
            home.members.append(genome)
        self.species = [s for s in self.species if s.members]

    def _find(self, genome: Genome) -> Species | None:
        cfg = self.config
        if not cfg.speciation:
            return self.species[0] if self.species else None
        for s in self.species:
            d = distance(
                genome,
                s.representative,
                cfg.c1,
                cfg.c2,
                cfg.c3,
                cfg.normalise_below,
                stop_at=cfg.compat_threshold,
            )
            if d < cfg.compat_threshold:
                return s
        return None
