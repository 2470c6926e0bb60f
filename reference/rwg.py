"""Random weight guessing (RWG): the simplest published baseline for neuroevolution tasks.

Every candidate is a network of fixed topology whose weights are drawn independently and
uniformly from [-weight_range, weight_range]; nothing is learned from results. It shows how
easy a task is: a task that RWG solves quickly does not test an evolver much. (The method:
Hochreiter & Schmidhuber 1997 used it as a baseline; Gomez, Schmidhuber & Miikkulainen 2008
report RWG figures on pole balancing, see reference/figures.)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from neuroyard.harness.core.activations import NAMES
from neuroyard.harness.core.evolver import Evaluation, Problem
from neuroyard.harness.core.network import Network
from neuroyard.harness.core.options import Option, resolve_options

from .fixed_topology import FixedTopology

OPTIONS = {
    "hidden": Option(2, ">= 0", lambda v: v >= 0),
    "weight_range": Option(10.0, "a finite number > 0", lambda v: 0 < v < math.inf),
    "batch_size": Option(100, ">= 1", lambda v: v >= 1),
    "recurrent": Option(None, kind=bool, nullable=True),
    "activation": Option("neat_sigmoid", f"one of {', '.join(NAMES)}", lambda v: v in NAMES),
}


class RandomWeightGuessing:
    """Options: ``hidden`` nodes (default 2), ``weight_range`` (default 10.0, common
    practice), ``batch_size`` candidates per generation (default 100), ``recurrent``
    (default: True when the task needs memory), ``activation`` (default ``neat_sigmoid``).
    A bad option raises ``ValueError`` naming it."""

    def __init__(self, **options: Any) -> None:
        values = resolve_options(OPTIONS, options)
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
