"""A fixed network shape whose weights an evolver searches (shared by RWG and the hill climber)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property

from neuroyard.core.network import Network, fully_connected, layered_links


@dataclass(frozen=True)
class FixedTopology:
    """Inputs + one bias node, ``hidden`` hidden nodes, the outputs.

    Feedforward: inputs and bias feed every hidden node; hidden nodes and bias feed every
    output (with no hidden nodes, inputs and bias feed the outputs directly).
    Recurrent: as feedforward plus every hidden node feeds every hidden node (self-loops
    included), for tasks that need memory.
    """

    inputs: int
    outputs: int
    hidden: int = 0
    recurrent: bool = False
    activation: str = "neat_sigmoid"

    def __post_init__(self) -> None:
        if self.hidden < 0:
            raise ValueError(f"hidden must be >= 0, got {self.hidden}")

    @cached_property
    def links(self) -> list[tuple[int, int]]:
        """(source, target) of every weight, in weight order."""
        return layered_links(self.inputs, self.outputs, self.hidden, self.recurrent)

    @property
    def n_weights(self) -> int:
        return len(self.links)

    def network(self, weights: Sequence[float]) -> Network:
        """The network with these weights (one per link, in :attr:`links` order)."""
        mode = "recurrent" if self.recurrent else "feedforward"
        return fully_connected(
            self.inputs, self.outputs, weights, self.activation, self.hidden, mode, self.links
        )
