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

from collections.abc import Sequence
from typing import Any

import numpy as np

from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.network import Network
from neuroyard.core.options import Option, OptionTable

from .fixed_topology import FixedTopology


class HillClimber:
    """A hill climber on a fixed topology: one parent and Gaussian mutants of it each generation.

    Each generation tries ``offspring`` mutants (step ``sigma``); a mutant at least as fit as
    the parent replaces it. Options: see :attr:`options`; a bad one raises a ``ValueError``
    naming it."""

    options = OptionTable(
        "evolver hill-climber",
        (
            Option("hidden", 2, "hidden nodes of the fixed topology", source="ours", low=0),
            Option("offspring", 20, "mutants tried per generation", source="ours", low=1),
            Option(
                "sigma", 1.0, "standard deviation of the Gaussian mutation of each weight",
                source="ours", above=0.0,
            ),
            Option(
                "init_range", 2.0, "the first parent's weights are uniform in [-range, +range]",
                source="ours", above=0.0,
            ),
        ),
    )  # fmt: skip

    def __init__(self, **options: Any) -> None:
        values = self.options.resolve(options)
        self.values = values
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
        return dict(self.values)

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
