"""The network interchange format: what an evolver hands the harness.

A network is a list of nodes and a list of connections, plus an evaluation mode.

Nodes have a ``kind``: ``input`` (takes the task's observation), ``bias`` (constant 1.0),
``hidden`` or ``output``. The k-th input node in the node list receives the k-th
observation value; the k-th output node in the list gives the k-th action value. Input
and bias nodes carry no computation (their activation is ``identity``, bias 0, gain 1).

**Node formula** (the one definition used everywhere): every hidden and output node i computes

    y_i = f_i( gain_i * ( bias_i + sum over enabled connections j->i of weight_ji * y_j ) )

where f_i is the node's activation (see :mod:`neuroyard.harness.activations`).

**Modes.** ``feedforward``: the enabled connections form no cycle; each step the inputs are
set and every node is computed once in topological order, so outputs respond to this
step's inputs. ``recurrent``: any topology, self-loops included; each step the inputs are
set, then every hidden and output node updates once, simultaneously, reading input and bias
nodes at this step's value and every other node at its value from the previous step (all
start at 0). Disabled connections are ignored by both modes.

**Size** of a network = number of hidden nodes and number of enabled connections.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from importlib import resources
from typing import Any, Literal

from .activations import CODES
from .errors import NetworkError

NodeKind = Literal["input", "bias", "hidden", "output"]
Mode = Literal["feedforward", "recurrent"]
NODE_KINDS: tuple[str, ...] = ("input", "bias", "hidden", "output")
MODES: tuple[str, ...] = ("feedforward", "recurrent")
FORMAT_NAME = "neuroyard-network"
FORMAT_VERSION = 1


@dataclass(frozen=True, slots=True)
class Node:
    """One node: integer id (unique in the network), kind, activation name, bias, gain."""

    id: int
    kind: NodeKind
    activation: str = "identity"
    bias: float = 0.0
    gain: float = 1.0


@dataclass(frozen=True, slots=True)
class Connection:
    """A weighted link from node ``source`` to node ``target``; ignored when not enabled."""

    source: int
    target: int
    weight: float
    enabled: bool = True


@dataclass(frozen=True, slots=True)
class Network:
    """Nodes, connections and evaluation mode. Construct freely; call :func:`validate`."""

    nodes: tuple[Node, ...]
    connections: tuple[Connection, ...]
    mode: Mode = "feedforward"
    meta: Mapping[str, Any] = field(default_factory=dict, compare=False)

    @property
    def n_inputs(self) -> int:
        return sum(1 for n in self.nodes if n.kind == "input")

    @property
    def n_outputs(self) -> int:
        return sum(1 for n in self.nodes if n.kind == "output")

    @property
    def hidden_nodes(self) -> int:
        """Number of hidden nodes (one of the two size measures)."""
        return sum(1 for n in self.nodes if n.kind == "hidden")

    @property
    def enabled_connections(self) -> int:
        """Number of enabled connections (the other size measure)."""
        return sum(1 for c in self.connections if c.enabled)


def _finite(value: Any, where: str, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise NetworkError(f"{where}: {what} must be a number, got {value!r}")
    if not math.isfinite(value):
        raise NetworkError(f"{where}: {what} is {value}, must be finite")
    return float(value)


def validate(
    network: Network, inputs: int | None = None, outputs: int | None = None, where: str = "network"
) -> None:
    """Check every rule of the format; raise :class:`NetworkError` naming the offender.

    ``inputs``/``outputs``, when given, are the counts the task needs. ``where`` prefixes
    the message (for example a file name or "candidate 12 of generation 3").
    """
    if not isinstance(network, Network):
        raise NetworkError(f"{where}: expected a Network, got {type(network).__name__}")
    if network.mode not in MODES:
        raise NetworkError(f"{where}: unknown mode {network.mode!r} (known: {', '.join(MODES)})")
    kinds: dict[int, str] = {}
    for node in network.nodes:
        if not isinstance(node, Node):
            raise NetworkError(f"{where}: node list holds {type(node).__name__}, not a Node")
        label = f"{where}: node {node.id!r}"
        if isinstance(node.id, bool) or not isinstance(node.id, int):
            raise NetworkError(f"{label}: id must be an integer")
        if node.id in kinds:
            raise NetworkError(f"{label}: duplicate node id")
        if node.kind not in NODE_KINDS:
            raise NetworkError(
                f"{label}: unknown kind {node.kind!r} (known: {', '.join(NODE_KINDS)})"
            )
        if not isinstance(node.activation, str) or node.activation not in CODES:
            raise NetworkError(
                f"{label}: unknown activation {node.activation!r} (known: {', '.join(CODES)})"
            )
        bias = _finite(node.bias, label, "bias")
        gain = _finite(node.gain, label, "gain")
        if node.kind in ("input", "bias") and (
            node.activation != "identity" or bias != 0.0 or gain != 1.0
        ):
            raise NetworkError(
                f"{label}: {node.kind} nodes carry no computation "
                "(activation must be identity, bias 0, gain 1)"
            )
        kinds[node.id] = node.kind
    for k, conn in enumerate(network.connections):
        if not isinstance(conn, Connection):
            raise NetworkError(f"{where}: connection list holds {type(conn).__name__}")
        label = f"{where}: connection {k} ({conn.source} -> {conn.target})"
        for end in ("source", "target"):
            value = getattr(conn, end)
            if isinstance(value, bool) or not isinstance(value, int):
                raise NetworkError(f"{label}: {end} must be an integer node id, got {value!r}")
            if value not in kinds:
                raise NetworkError(f"{label}: {end} node {value!r} does not exist")
        if kinds[conn.target] in ("input", "bias"):
            raise NetworkError(
                f"{label}: target is {kinds[conn.target]} node {conn.target}; "
                "nothing may connect into input or bias nodes"
            )
        _finite(conn.weight, label, "weight")
        if not isinstance(conn.enabled, bool):
            raise NetworkError(f"{label}: enabled must be true or false")
    n_in = sum(1 for kind in kinds.values() if kind == "input")
    n_out = sum(1 for kind in kinds.values() if kind == "output")
    if inputs is not None and n_in != inputs:
        raise NetworkError(f"{where}: has {n_in} input nodes, the task needs {inputs}")
    if outputs is not None and n_out != outputs:
        raise NetworkError(f"{where}: has {n_out} output nodes, the task needs {outputs}")
    if network.mode == "feedforward":
        topological_order(network, where)


def topological_order(network: Network, where: str = "network") -> list[int]:
    """Ids of hidden and output nodes in an order where every source comes first.

    Only enabled connections count. Raises :class:`NetworkError` naming a cycle.
    Ties keep the node list order, so the result is deterministic.
    """
    computed = [n.id for n in network.nodes if n.kind in ("hidden", "output")]
    incoming: dict[int, list[int]] = {i: [] for i in computed}
    for conn in network.connections:
        if conn.enabled and conn.target in incoming:
            incoming[conn.target].append(conn.source)
    order: list[int] = []
    state: dict[int, int] = {}  # 1 = on the current path, 2 = done
    for root in computed:
        if state.get(root):
            continue
        stack: list[tuple[int, int]] = [(root, 0)]
        state[root] = 1
        while stack:
            node, k = stack[-1]
            sources = incoming[node]
            if k < len(sources):
                stack[-1] = (node, k + 1)
                src = sources[k]
                if src not in incoming:
                    continue  # input or bias node
                mark = state.get(src)
                if mark == 1:
                    path = [n for n, _ in stack]
                    cycle = path[path.index(src) :] + [src]
                    raise NetworkError(
                        f"{where}: feedforward network has a cycle through nodes "
                        + " -> ".join(str(n) for n in reversed(cycle))
                    )
                if mark is None:
                    state[src] = 1
                    stack.append((src, 0))
            else:
                stack.pop()
                state[node] = 2
                order.append(node)
    return order


def to_dict(network: Network) -> dict[str, Any]:
    """The JSON form (see ``network.schema.json``)."""
    nodes = []
    for n in network.nodes:
        item: dict[str, Any] = {"id": n.id, "kind": n.kind}
        if n.kind in ("hidden", "output"):
            item.update(activation=n.activation, bias=n.bias, gain=n.gain)
        nodes.append(item)
    return {
        "format": FORMAT_NAME,
        "version": FORMAT_VERSION,
        "mode": network.mode,
        "nodes": nodes,
        "connections": [
            {"source": c.source, "target": c.target, "weight": c.weight, "enabled": c.enabled}
            for c in network.connections
        ],
    }


def from_dict(doc: Mapping[str, Any], where: str = "network") -> Network:
    """Parse and validate the JSON form; errors name the offending entry."""
    if not isinstance(doc, Mapping):
        raise NetworkError(f"{where}: expected a JSON object, got {type(doc).__name__}")
    unknown = set(doc) - {"format", "version", "mode", "nodes", "connections"}
    if unknown:
        raise NetworkError(f"{where}: unknown keys {sorted(unknown)}")
    if doc.get("format", FORMAT_NAME) != FORMAT_NAME:
        raise NetworkError(f"{where}: format is {doc.get('format')!r}, expected {FORMAT_NAME!r}")
    if doc.get("version", FORMAT_VERSION) != FORMAT_VERSION:
        raise NetworkError(f"{where}: format version {doc.get('version')!r} is not supported")
    nodes: list[Node] = []
    for k, item in enumerate(_list(doc, "nodes", where)):
        if not isinstance(item, Mapping) or "id" not in item or "kind" not in item:
            raise NetworkError(f"{where}: nodes[{k}] needs at least 'id' and 'kind'")
        unknown = set(item) - {"id", "kind", "activation", "bias", "gain"}
        if unknown:
            raise NetworkError(f"{where}: nodes[{k}] has unknown keys {sorted(unknown)}")
        nodes.append(
            Node(
                id=item["id"],
                kind=item["kind"],
                activation=item.get("activation", "identity"),
                bias=item.get("bias", 0.0),
                gain=item.get("gain", 1.0),
            )
        )
    connections: list[Connection] = []
    for k, item in enumerate(_list(doc, "connections", where)):
        if not isinstance(item, Mapping) or not {"source", "target", "weight"} <= set(item):
            raise NetworkError(f"{where}: connections[{k}] needs 'source', 'target' and 'weight'")
        unknown = set(item) - {"source", "target", "weight", "enabled"}
        if unknown:
            raise NetworkError(f"{where}: connections[{k}] has unknown keys {sorted(unknown)}")
        connections.append(
            Connection(item["source"], item["target"], item["weight"], item.get("enabled", True))
        )
    network = Network(tuple(nodes), tuple(connections), doc.get("mode", "feedforward"))
    validate(network, where=where)
    return network


def _list(doc: Mapping[str, Any], key: str, where: str) -> list[Any]:
    value = doc.get(key)
    if not isinstance(value, list):
        raise NetworkError(f"{where}: '{key}' must be a list")
    return value


def schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of the JSON form, as shipped in ``network.schema.json``."""
    text = resources.files(__package__).joinpath("network.schema.json").read_text("utf-8")
    return json.loads(text)


def dumps(network: Network) -> str:
    return json.dumps(to_dict(network), separators=(",", ":"))


def loads(text: str, where: str = "network") -> Network:
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise NetworkError(f"{where}: not valid JSON ({exc.msg} at line {exc.lineno})") from None
    return from_dict(doc, where)


def fully_connected(
    inputs: int,
    outputs: int,
    weights: Iterable[float] | None = None,
    activation: str = "neat_sigmoid",
    hidden: int = 0,
    mode: Mode = "feedforward",
) -> Network:
    """Helper: inputs + one bias node, optional hidden layer, outputs; ids 0.. in that order.

    Without hidden nodes every input and the bias connect to every output; with hidden
    nodes, inputs and bias connect to every hidden node and hidden nodes and bias to every
    output. ``weights`` (in connection order) default to 0.
    """
    ins = list(range(inputs))
    bias = inputs
    hid = list(range(inputs + 1, inputs + 1 + hidden))
    outs = list(range(inputs + 1 + hidden, inputs + 1 + hidden + outputs))
    nodes = [Node(i, "input") for i in ins] + [Node(bias, "bias")]
    nodes += [Node(i, "hidden", activation) for i in hid]
    nodes += [Node(i, "output", activation) for i in outs]
    pairs = (
        [(s, t) for t in hid for s in ins + [bias]] + [(s, t) for t in outs for s in hid + [bias]]
        if hidden
        else [(s, t) for t in outs for s in ins + [bias]]
    )
    w = list(weights) if weights is not None else [0.0] * len(pairs)
    if len(w) != len(pairs):
        raise NetworkError(f"fully_connected: {len(pairs)} connections need {len(pairs)} weights")
    conns = tuple(Connection(s, t, float(x)) for (s, t), x in zip(pairs, w, strict=True))
    return Network(tuple(nodes), conns, mode)
