"""Random weight guessing (RWG): the simplest published baseline for neuroevolution tasks.

Every candidate is a network of fixed topology whose weights are drawn independently and
uniformly from [-weight_range, weight_range]; nothing is learned from results. It shows how
easy a task is: a task that RWG solves quickly does not test an evolver much. (The method:
Hochreiter & Schmidhuber 1997 used it as a baseline; Gomez, Schmidhuber & Miikkulainen 2008
report RWG figures on pole balancing, see reference/figures.)
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from neuroyard.core.activations import NAMES
from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.network import Network
from neuroyard.core.options import Option, OptionTable

from .fixed_topology import FixedTopology


class RandomWeightGuessing:
    """Random weight guessing on a fixed topology: independent uniform weights, nothing learned.

    Options: see :attr:`options`; a bad one raises a ``ValueError`` naming it."""

    options = OptionTable(
        "evolver rwg",
        (
            Option("hidden", 2, "hidden nodes of the fixed topology", source="ours", low=0),
            Option(
                "weight_range",
                10.0,
                "weights are uniform in [-weight_range, +weight_range]",
                source="common practice",
                above=0.0,
            ),
            Option("batch_size", 100, "candidates per generation", source="ours", low=1),
            Option(
                "recurrent",
                None,
                "recurrent topology; none: recurrent exactly when the task needs memory",
                source="ours",
                kind=bool,
            ),
            Option(
                "activation",
                "neat_sigmoid",
                "activation of hidden and output nodes",
                source="ours: the sigmoid of the NEAT paper",
                choices=tuple(NAMES),
            ),
        ),
    )

    def __init__(self, **options: Any) -> None:
        values = self.options.resolve(options)
        self.values = values
        self.hidden: int = values["hidden"]
        self.weight_range: float = values["weight_range"]
        self.batch_size: int = values["batch_size"]
        self.recurrent: bool | None = values["recurrent"]
        self.activation: str = values["activation"]

    def start(self, problem: Problem, seed: int) -> None:
        recurrent = problem.needs_memory if self.recurrent is None else self.recurrent
        self.topology = FixedTopology(
            problem.inputs, problem.outputs, self.hidden, recurrent, self.activation
        )
        self.rng = np.random.default_rng(seed)

    def settings(self) -> dict[str, object]:
        """The effective configuration (recorded with every run); ``recurrent`` as decided
        for the task."""
        return {**self.values, "recurrent": self.topology.recurrent}

    def ask(self) -> list[Network]:
        w = self.rng.uniform(
            -self.weight_range, self.weight_range, (self.batch_size, self.topology.n_weights)
        )
        return [self.topology.network(row) for row in w]

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        """RWG learns nothing from results."""
