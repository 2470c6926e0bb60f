"""The NEAT evolver behind neuroyard's ask/tell contract (one batch = one generation)."""

from __future__ import annotations

import math
import random
from collections.abc import Sequence
from typing import Any

import numpy as np

from neuroyard.core.errors import SettingError
from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.network import Network

from .config import NeatConfig, make_config, option_table
from .decode import Decoder
from .genome import Genome, Layout
from .initial import initial_population
from .innovation import InnovationTracker
from .novelty import NoveltyArchive
from .reproduction import Breeder, allot_offspring, survivors
from .species import Speciator


class NeatEvolver:
    """NeuroEvolution of Augmenting Topologies (Stanley & Miikkulainen 2002).

    ``NeatEvolver(**settings)``: keys and defaults of ``defaults.toml`` (the paper's values
    where it gives one; every other default says where it comes from, see :mod:`.config`);
    an unknown key or a bad value raises ``ValueError`` naming it.
    ``config`` holds the full configuration in effect. Randomness comes only from the seed
    given to :meth:`start`, so a run is reproducible.

    ``selection`` chooses the score that speciation, sharing and reproduction use: the
    task's fitness, novelty (sparseness of the behaviour, :mod:`.novelty`; the task must
    give a behaviour with every evaluation, else :meth:`start` or :meth:`tell` raises a
    ``SettingError`` naming the option) or a random number from the run's generator.
    """

    options = option_table()

    def __init__(self, **settings: Any) -> None:
        self.config: NeatConfig = make_config(settings)
        self.generation = 0
        self.population: list[Genome] = []
        self._batch: list[Network] | None = None
        self.archive: NoveltyArchive | None = None

    def start(self, problem: Problem, seed: int) -> None:
        cfg = self.config
        self.rng = random.Random(seed)
        self.archive = self._archive(problem)
        self.layout = Layout.for_problem(problem.inputs, problem.outputs)
        self.tracker = InnovationTracker(next_node=self.layout.first_free_id)
        self.decoder = Decoder(self.layout, "recurrent" if cfg.recurrent else "feedforward")
        self.breeder = Breeder(self.layout, self.tracker, self.rng, cfg)
        self.speciator = Speciator(cfg)
        self.generation = 0
        self.population = initial_population(self.layout, self.tracker, self.rng, cfg)
        self.speciator.assign(self.population, self.generation)
        self._batch = None

    def ask(self) -> list[Network]:
        """The current generation as networks (the same list until :meth:`tell`)."""
        if not self.population:
            raise RuntimeError("NeatEvolver: call start() before ask()")
        if self._batch is None:
            self._batch = [self.decoder.network(g) for g in self.population]
        return self._batch

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        """Results of the last batch, in order; breeds and speciates the next generation.

        Fewer evaluations than genomes come only with the batch the harness cut at the end
        of the budget: their score is recorded and no further generation is bred (none
        would be evaluated)."""
        if len(evaluations) > len(self.population):
            raise ValueError(
                f"NeatEvolver: tell() got {len(evaluations)} evaluations "
                f"for a generation of {len(self.population)}"
            )
        for result in evaluations:
            if not math.isfinite(result.fitness):
                raise ValueError(f"NeatEvolver: fitness {result.fitness!r} is not finite")
        for genome, score in zip(self.population, self._scores(evaluations), strict=False):
            genome.fitness = score
        if len(evaluations) == len(self.population):
            self._next_generation()

    def settings(self) -> dict[str, Any]:
        """The effective configuration, defaults included (recorded with every run)."""
        return self.config.as_dict()

    def stats(self) -> dict[str, float]:
        """Figures of the current generation: species, genome sizes, threshold, innovations;
        under novelty selection also the archive's size and threshold."""
        pop = self.population
        n = len(pop)
        novelty = {}
        if self.archive is not None:
            novelty = {
                "novelty_archive": float(len(self.archive)),
                "novelty_threshold": self.archive.threshold,
            }
        return {
            "generation": float(self.generation),
            "species": float(len(self.speciator.species)),
            "compat_threshold": self.config.compat_threshold,
            "mean_genes": sum(len(g.genes) for g in pop) / n,
            "mean_enabled_connections": sum(g.enabled_connections for g in pop) / n,
            "mean_hidden_nodes": sum(len(g.hidden) for g in pop) / n,
            "innovations": float(self.tracker.next_innovation),
            **novelty,
        }

    def _archive(self, problem: Problem) -> NoveltyArchive | None:
        """The novelty archive under novelty selection (the task must define behaviours)."""
        cfg = self.config
        if cfg.selection != "novelty":
            return None
        if problem.behaviour_size is None:
            raise SettingError(
                f"{self.options.owner}: option selection = 'novelty' needs behaviours, "
                f"and task {problem.task!r} defines none"
            )
        return NoveltyArchive(
            problem.behaviour_size,
            cfg.novelty_threshold,
            cfg.novelty_window,
            cfg.novelty_lower_factor,
            cfg.novelty_raise_factor,
            cfg.novelty_raise_above,
        )

    def _scores(self, evaluations: Sequence[Evaluation]) -> list[float]:
        """The score of each evaluation under the ``selection`` option."""
        cfg = self.config
        if cfg.selection == "random":
            return [self.rng.random() for _ in evaluations]
        if self.archive is None or not evaluations:
            return [float(e.fitness) for e in evaluations]
        size = self.archive.points.shape[1]
        for k, e in enumerate(evaluations):
            if e.behaviour is None or len(e.behaviour) != size:
                given = "none" if e.behaviour is None else f"{len(e.behaviour)} values"
                raise SettingError(
                    f"{self.options.owner}: option selection = 'novelty' needs a behaviour "
                    f"of {size} values with every evaluation; evaluation {k} has {given}"
                )
        behaviours = np.array([e.behaviour for e in evaluations], dtype=np.float64)
        squared = cfg.novelty_distance == "squared_euclidean"
        return self.archive.score(behaviours, cfg.novelty_k, squared).tolist()

    def _next_generation(self) -> None:
        cfg = self.config
        species = self.speciator.species
        for s in species:
            s.record_fitness(self.generation)
        counts = allot_offspring(species, cfg.population_size, self.generation, cfg)
        self.speciator.pick_representatives(self.rng)
        parents = {s.id: survivors(s.members, cfg.survival_fraction) for s in species}
        self.tracker.new_generation()
        children: list[Genome] = []
        for s in species:
            count = counts.get(s.id, 0)
            if count:
                others = [p for sid, p in parents.items() if sid != s.id and sid in counts]
                children += self.breeder.offspring(s, parents[s.id], count, others)
        self.speciator.drop(counts)
        self.generation += 1
        self.population = children
        self.speciator.assign(children, self.generation)
        self._batch = None
