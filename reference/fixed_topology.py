"""A fixed network shape whose weights an evolver searches (shared by RWG and the hill climber)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from neuroyard.harness.network import Connection, Network, Node


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

    @property
    def links(self) -> list[tuple[int, int]]:
        ins = list(range(self.inputs))
        bias = self.inputs
        hid = list(range(bias + 1, bias + 1 + self.hidden))
        outs = list(range(bias + 1 + self.hidden, bias + 1 + self.hidden + self.outputs))
        if not hid:
            return [(s, t) for t in outs for s in [*ins, bias]]
        pairs = [(s, t) for t in hid for s in [*ins, bias]]
        if self.recurrent:
            pairs += [(s, t) for t in hid for s in hid]
        return pairs + [(s, t) for t in outs for s in [*hid, bias]]

    @property
    def n_weights(self) -> int:
        return len(self.links)

    def network(self, weights: Sequence[float]) -> Network:
        """The network with these weights (one per link, in :attr:`links` order)."""
        bias = self.inputs
        nodes = [Node(i, "input") for i in range(self.inputs)] + [Node(bias, "bias")]
        nodes += [Node(bias + 1 + k, "hidden", self.activation) for k in range(self.hidden)]
        first_out = bias + 1 + self.hidden
        nodes += [Node(first_out + k, "output", self.activation) for k in range(self.outputs)]
        conns = tuple(
            Connection(s, t, float(w)) for (s, t), w in zip(self.links, weights, strict=True)
        )
        return Network(tuple(nodes), conns, "recurrent" if self.recurrent else "feedforward")
