"""Plain-Python network activation, written from the node formula in :mod:`.network`.

Used only by tests and speed benchmarks as the independent specification the compiled
kernels must agree with. It works on the :class:`Network` objects, not the compiled arrays.
"""

from __future__ import annotations

from collections.abc import Sequence

from neuroyard.core.activations import CODES, reference
from neuroyard.core.network import Network, topological_order


class ReferenceNet:
    """Steps a network in pure Python; same contract as :func:`compiled.step`."""

    def __init__(self, network: Network) -> None:
        self.network = network
        self.kind = {n.id: n.kind for n in network.nodes}
        self.node = {n.id: n for n in network.nodes}
        self.inputs = [n.id for n in network.nodes if n.kind == "input"]
        self.outputs = [n.id for n in network.nodes if n.kind == "output"]
        self.incoming: dict[int, list[tuple[int, float]]] = {
            n.id: [] for n in network.nodes if n.kind in ("hidden", "output")
        }
        for c in network.connections:
            if c.enabled:
                self.incoming[c.target].append((c.source, c.weight))
        if network.mode == "feedforward":
            self.order = topological_order(network)
        else:
            self.order = list(self.incoming)
        self.reset()

    def reset(self) -> None:
        self.values = {nid: (1.0 if kind == "bias" else 0.0) for nid, kind in self.kind.items()}

    def step(self, inputs: Sequence[float]) -> list[float]:
        for nid, x in zip(self.inputs, inputs, strict=True):
            self.values[nid] = float(x)
        read = dict(self.values) if self.network.mode == "recurrent" else self.values
        for nid in self.order:
            node = self.node[nid]
            total = 0.0
            for src, w in self.incoming[nid]:
                total += w * read[src]
            self.values[nid] = reference(CODES[node.activation], node.gain * (node.bias + total))
        return [self.values[nid] for nid in self.outputs]
