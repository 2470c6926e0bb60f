"""Random weight guessing (RWG): the simplest published baseline for neuroevolution tasks.

Every candidate is a network of fixed topology whose weights are drawn independently and
uniformly from [-weight_range, weight_range]; nothing is learned from results. It shows how
easy a task is: a task that RWG solves quickly does not test an evolver much. (The method:
Hochreiter & Schmidhuber 1997 used it as a baseline; Gomez, Schmidhuber & Miikkulainen 2008
report RWG figures on pole balancing, see reference/figures.)
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from neuroyard.harness.evolver import Evaluation, Problem
from neuroyard.harness.network import Network

from .fixed_topology import FixedTopology


class RandomWeightGuessing:
    """Config: ``hidden`` nodes (default 2), ``weight_range`` (default 10.0, common practice),
    ``batch_size`` candidates per generation (default 100), ``recurrent`` (default: True
    when the task needs memory), ``activation`` (default ``neat_sigmoid``)."""

    def __init__(
        self,
        hidden: int = 2,
        weight_range: float = 10.0,
        batch_size: int = 100,
        recurrent: bool | None = None,
        activation: str = "neat_sigmoid",
    ) -> None:
        if weight_range <= 0:
            raise ValueError(f"weight_range must be > 0, got {weight_range}")
        if batch_size < 1:
            raise ValueError(f"batch_size must be >= 1, got {batch_size}")
        if hidden < 0:
            raise ValueError(f"hidden must be >= 0, got {hidden}")
        self.hidden = hidden
        self.weight_range = weight_range
        self.batch_size = batch_size
        self.recurrent = recurrent
        self.activation = activation

    def start(self, problem: Problem, seed: int) -> None:
        recurrent = problem.needs_memory if self.recurrent is None else self.recurrent
        self.topology = FixedTopology(
            problem.inputs, problem.outputs, self.hidden, recurrent, self.activation
        )
        self.rng = np.random.default_rng(seed)

    def settings(self) -> dict[str, object]:
        """The effective configuration (recorded with every run)."""
        return {
            "hidden": self.hidden,
            "weight_range": self.weight_range,
            "batch_size": self.batch_size,
            "recurrent": self.topology.recurrent,
            "activation": self.activation,
        }

    def ask(self) -> list[Network]:
        w = self.rng.uniform(
            -self.weight_range, self.weight_range, (self.batch_size, self.topology.n_weights)
        )
        return [self.topology.network(row) for row in w]

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        """RWG learns nothing from results."""
