"""Genome -> :class:`~neuroyard.network.Network` (the harness's interchange format).

Node ids are the genome's node ids. Hidden and output nodes use the steepened sigmoid
``neat_sigmoid`` (paper sec. 4.1) with node bias 0: NEAT's bias is the bias input node.
Disabled genes become disabled connections. ``meta["innovations"]`` lists the innovation
number of each connection, in connection order.
"""

from __future__ import annotations

from neuroyard.core.network import Connection, Mode, Network, Node

from .genome import Genome, Layout

ACTIVATION = "neat_sigmoid"


class Decoder:
    """Builds networks for one run; node objects are made once and shared between networks."""

    def __init__(self, layout: Layout, mode: Mode) -> None:
        self.mode: Mode = mode
        self._fixed = (
            *(Node(i, "input") for i in layout.inputs),
            Node(layout.bias, "bias"),
            *(Node(o, "output", ACTIVATION) for o in layout.outputs),
        )
        self._hidden: dict[int, Node] = {}

    def network(self, genome: Genome) -> Network:
        nodes = self._fixed + tuple(self._hidden_node(h) for h in genome.hidden)
        connections = tuple(
            Connection(g.source, g.target, g.weight, g.enabled) for g in genome.genes.values()
        )
        return Network(nodes, connections, self.mode, meta={"innovations": tuple(genome.genes)})

    def _hidden_node(self, node_id: int) -> Node:
        node = self._hidden.get(node_id)
        if node is None:
            node = self._hidden[node_id] = Node(node_id, "hidden", ACTIVATION)
        return node
