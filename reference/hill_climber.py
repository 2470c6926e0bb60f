"""An example evolver to copy: a (1 + lambda) hill climber on the weights of a fixed network.

It shows the whole contract in a few lines. ``start`` receives the problem (input and
output counts, budget) and a seed; ``ask`` proposes a batch (one generation); ``tell``
receives one :class:`Evaluation` per proposed network, in the same order; ``stats`` is
optional. The harness evaluates and counts; the evolver never sees the task itself.

Register your own copy in your package's ``pyproject.toml``::

    [project.entry-points."neuroyard.evolvers"]
    my-climber = "my_package.climber:HillClimber"

or run it without packaging as ``neuroyard run --evolver my_module:HillClimber ...``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from neuroyard.harness.core.evolver import Evaluation, Problem
from neuroyard.harness.core.network import Network
from neuroyard.harness.core.options import Option, resolve_options

from .fixed_topology import FixedTopology

OPTIONS = {
    "hidden": Option(2, ">= 0", lambda v: v >= 0),
    "offspring": Option(20, ">= 1", lambda v: v >= 1),
    "sigma": Option(1.0, "a finite number > 0", lambda v: 0 < v < math.inf),
    "init_range": Option(2.0, "a finite number > 0", lambda v: 0 < v < math.inf),
}


class HillClimber:
    """Keep one parent; each generation try ``offspring`` Gaussian mutants (step ``sigma``);
    a mutant at least as fit as the parent replaces it. Options: ``hidden`` (2),
    ``offspring`` (20), ``sigma`` (1.0), ``init_range`` (2.0); a bad one raises
    ``ValueError`` naming it."""

    def __init__(self, **options: Any) -> None:
        values = resolve_options(OPTIONS, options)
        self.hidden: int = values["hidden"]
        self.offspring: int = values["offspring"]
        self.sigma: float = values["sigma"]
        self.init_range: float = values["init_range"]

    def start(self, problem: Problem, seed: int) -> None:
        self.rng = np.random.default_rng(seed)
        self.topology = FixedTopology(
            problem.inputs, problem.outputs, self.hidden, recurrent=problem.needs_memory
        )
        self.parent = self.rng.uniform(-self.init_range, self.init_range, self.topology.n_weights)
        self.parent_fitness = -np.inf
        self.generation = 0

    def settings(self) -> dict[str, object]:
        """The effective configuration (recorded with every run)."""
        return {
            "hidden": self.hidden,
            "offspring": self.offspring,
            "sigma": self.sigma,
            "init_range": self.init_range,
        }

    def ask(self) -> list[Network]:
        if self.generation == 0:  # first evaluate the parent itself, with mutants beside it
            noise = np.vstack([np.zeros(self.parent.size), self._noise(self.offspring - 1)])
        else:
            noise = self._noise(self.offspring)
        self.batch = self.parent + noise
        return [self.topology.network(w) for w in self.batch]

    def _noise(self, rows: int) -> np.ndarray:
        return self.rng.normal(0.0, self.sigma, (rows, self.parent.size))

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        fitness = [e.fitness for e in evaluations]
        best = int(np.argmax(fitness))
        if fitness[best] >= self.parent_fitness:
            self.parent, self.parent_fitness = self.batch[best], fitness[best]
        self.generation += 1

    def stats(self) -> dict[str, float]:
        return {"parent_fitness": float(self.parent_fitness)}
