"""A network of fixed structure whose connection weights form a search vector.

An evolver that searches weights only (CMA-ES) keeps one :class:`WeightTemplate` per run:
the structure (nodes, connections, mode) never changes, and a vector of numbers, one per
searched connection, becomes a network. Two ways to make one:

* :func:`layered`: inputs, an optional bias node, hidden layers of given widths and the
  outputs, each layer fully connected to the next;
* :func:`from_network`: any valid network (a network file), whose enabled connections are
  searched and whose weights are the start point.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from neuroyard.core.network import Connection, Mode, Network, Node, validate


@dataclass(frozen=True)
class WeightTemplate:
    """``base`` with the weights of the connections at ``searched`` (indices into its
    connection list, in order) taken from a vector; every other part of ``base`` (nodes
    with their activations, biases and gains, disabled connections, mode) is kept."""

    base: Network
    searched: tuple[int, ...]

    @property
    def n_weights(self) -> int:
        """Length of the search vector."""
        return len(self.searched)

    @property
    def start(self) -> np.ndarray:
        """The weights of ``base`` at the searched connections (the start point)."""
        return np.array([self.base.connections[k].weight for k in self.searched], dtype=float)

    def network(self, weights: Sequence[float]) -> Network:
        """``base`` with these weights (one per searched connection, in order)."""
        if len(weights) != len(self.searched):
            raise ValueError(f"{len(self.searched)} searched connections need as many weights")
        connections = list(self.base.connections)
        for k, w in zip(self.searched, weights, strict=True):
            c = connections[k]
            connections[k] = Connection(c.source, c.target, float(w), c.enabled)
        return Network(self.base.nodes, tuple(connections), self.base.mode)


def from_network(network: Network) -> WeightTemplate:
    """The template of a given network: its enabled connections are searched."""
    searched = tuple(k for k, c in enumerate(network.connections) if c.enabled)
    return WeightTemplate(network, searched)


def layered(
    inputs: int,
    outputs: int,
    hidden_layers: Sequence[int] = (),
    recurrent: bool = False,
    activation: str = "neat_sigmoid",
    bias: bool = True,
) -> WeightTemplate:
    """A layered network with every weight searched and all weights 0.

    Node ids: inputs ``0..inputs-1``, then the bias node (when ``bias``), then the hidden
    layers in order, then the outputs. Every node of a layer (the inputs are the first
    layer) feeds every node of the next, and the bias node feeds every hidden and output
    node. ``recurrent``: the network is evaluated in recurrent mode, and every hidden layer
    (the output layer when there is none) is also fully connected to itself, self-loops
    included, which gives the network its memory. In recurrent mode every computed node
    reads the others' values of the previous step (harness/core/network.py), so each
    hidden layer delays the outputs by one step.
    """
    layers: list[list[int]] = [list(range(inputs))]
    next_id = inputs
    bias_id = None
    if bias:
        bias_id, next_id = next_id, next_id + 1
    for width in [*hidden_layers, outputs]:
        layers.append(list(range(next_id, next_id + width)))
        next_id += width
    links: list[tuple[int, int]] = []
    for below, layer in zip(layers, layers[1:], strict=False):
        sources = below + ([bias_id] if bias_id is not None else [])
        links += [(s, t) for t in layer for s in sources]
    if recurrent:
        looped = layers[1:-1] or layers[-1:]
        links += [(s, t) for layer in looped for t in layer for s in layer]
    nodes = [Node(i, "input") for i in layers[0]]
    if bias_id is not None:
        nodes.append(Node(bias_id, "bias"))
    nodes += [Node(i, "hidden", activation) for layer in layers[1:-1] for i in layer]
    nodes += [Node(i, "output", activation) for i in layers[-1]]
    mode: Mode = "recurrent" if recurrent else "feedforward"
    base = Network(tuple(nodes), tuple(Connection(s, t, 0.0) for s, t in links), mode)
    validate(base, inputs, outputs, where="layered topology")
    return WeightTemplate(base, tuple(range(len(links))))
